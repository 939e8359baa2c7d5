"""The summary record a workbook keeps of its results, the inputs hash, and
reading the record back from an executed notebook.

A workbook records its results in its own cells::

    from toolkit.workbook import Summary
    report = Summary(parameters=dict(width=width, holes=holes, detail=detail))
    report.value("peak stress", s_max, "MPa")
    report.check(fatigue_check(...))          # CheckResult or a plain dict
    report.save()

``save()`` displays the summary as a table (``text/plain`` and ``text/html``,
formatted to 6 significant digits, or the ``digits`` a value was recorded
with) and embeds the exact data in that output's
*metadata* under the key ``"stresspath"``; ``toolkit.workbook.render``
extracts it from the executed notebook (:func:`read_summary`) and writes
``<name>.summary.json``.  This needs no file and no agreed working directory, it
survives in the stored ``.ipynb``, and strict ``pytest --nbval`` never
compares output metadata, so full-precision floats cannot break it while the
formatted table is still compared.  A workbook calls ``save()`` exactly once.
The record holds finite numbers only: a NaN or an infinity is refused when
recorded.  :class:`Summary` needs only IPython, present in every kernel.
"""
from __future__ import annotations

import copy
import hashlib
import html
import json
import math
import numbers
import os
from importlib.resources import files
from pathlib import Path

from toolkit.errors import InputError, WorkbookError
from toolkit.io.files import atomic_write
from toolkit.report.format import DIMENSIONLESS, first_non_finite, fmt, json_text, plain

__all__ = ["Summary", "inputs_hash", "inputs_record", "input_dirs", "find_input", "input_path", "file_digest",
           "read_summary", "SHIPPED_DATA_DIR",
           "SUMMARY_METADATA_KEY", "SUMMARY_FORMAT", "WORKBOOK_DIR_ENV", "CALLER_DIR_ENV"]

#: Environment variables render sets for the kernel: the workbook's folder and the folder render was called from.
WORKBOOK_DIR_ENV = "STRESSPATH_WORKBOOK_DIR"
CALLER_DIR_ENV = "STRESSPATH_CALLER_DIR"
#: The shipped demo data (``data/`` in the repository, ``toolkit.data`` installed): the last place a
#: relative input path is looked for, so a workbook copied elsewhere still finds the demo.
SHIPPED_DATA_DIR = Path(str(files("toolkit.data")))

SUMMARY_METADATA_KEY = "stresspath"
SUMMARY_FORMAT = 1
_CHECK_KEYS = ("name", "value", "limit", "utilization", "status")


def _finite_plain(v, where):
    """:func:`plain` of ``v``, refusing NaN and infinity (the summary holds finite numbers)."""
    bad = first_non_finite(v)
    if bad is not None:
        raise InputError(f"{where}: value {bad} is not finite")
    return plain(v, where)


def _canonical_hash(obj) -> str:
    text = json.dumps(obj, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:12]


def inputs_hash(params, inputs=None) -> str:
    """First 12 hex digits of the SHA-256 of the canonical JSON of the inputs.

    Canonical JSON: keys sorted, separators ``(",", ":")``, UTF-8, no NaN.
    With ``params`` only, the JSON of the parameter values (kept for callers
    that hash parameters alone).  With ``inputs``, the record of
    :func:`inputs_record` (imported files, S-N data, toolkit version), the
    JSON of ``{"parameters": params, "inputs": inputs}``: this full hash is the
    one a report carries (summary.json and the footer), so the same inputs
    give the same hash on any machine and a changed data file changes it.
    """
    p = _finite_plain(dict(params), "inputs_hash")
    if inputs is None:
        return _canonical_hash(p)
    return _canonical_hash({"parameters": p, "inputs": plain(inputs, "inputs_hash")})


def file_digest(path) -> str:
    """SHA-256 (hex) of a file's bytes, or of a folder: every file below it in
    sorted relative-name order, each as its relative name and its bytes' digest."""
    path = Path(path)
    if path.is_file():
        h = hashlib.sha256()
        with open(path, "rb") as f:
            for block in iter(lambda: f.read(1 << 20), b""):
                h.update(block)
        return h.hexdigest()
    entries = sorted((q.relative_to(path).as_posix(), q) for q in path.rglob("*") if q.is_file())
    h = hashlib.sha256()
    for rel, q in entries:
        h.update(f"{rel}\0{file_digest(q)}\n".encode("utf-8"))
    return h.hexdigest()


def input_dirs():
    """Folders relative paths in parameters are read from, in order: the
    workbook's folder and the caller's folder when render set them, else the
    current folder."""
    dirs = [os.environ.get(WORKBOOK_DIR_ENV), os.environ.get(CALLER_DIR_ENV)]
    dirs = [Path(d) for d in dirs if d]
    return dirs or [Path.cwd()]


def find_input(text, dirs=None):
    """The existing file or folder a parameter string names, or None.

    An absolute path as it is; a relative one in each of ``dirs`` (default
    :func:`input_dirs`) in order, then in the shipped data folder
    (:data:`SHIPPED_DATA_DIR`, e.g. ``"demo_bracket"``).  Empty strings name nothing.
    """
    if not isinstance(text, str) or not text.strip() or "\0" in text or len(text) > 4096:
        return None
    cand = Path(text)
    dirs = input_dirs() if dirs is None else [Path(d) for d in dirs]
    for where in ([cand] if cand.is_absolute() else [d / cand for d in [*dirs, SHIPPED_DATA_DIR]]):
        try:
            if where.exists():
                return where.resolve()
        except OSError:
            continue
    return None


def input_path(text) -> Path:
    """:func:`find_input` for a workbook cell: the path, or a one-line InputError."""
    found = find_input(text)
    if found is None:
        raise InputError(f"input {text!r} not found in {', '.join(str(d) for d in input_dirs())} "
                         f"or the shipped data ({SHIPPED_DATA_DIR})")
    return found


def _file_values(name, value):
    """(key, string) for every string in a parameter value that could name a file."""
    if isinstance(value, str):
        yield name, value
    elif isinstance(value, (list, tuple)):
        for i, v in enumerate(value):
            yield from _file_values(f"{name}[{i}]", v)
    elif isinstance(value, dict):
        for k, v in value.items():
            yield from _file_values(f"{name}[{k!r}]", v)


def inputs_record(params, dirs=None, sn_path=None) -> dict:
    """What the full inputs hash covers besides the parameters.

    ``{"files": {key: sha256}, "sn_data": sha256, "toolkit_version": ...}``:
    every string in a parameter value (``key`` is the parameter name, with
    ``[i]`` for a list item) that names an existing file or folder, absolute
    or relative to one of ``dirs`` (default :func:`input_dirs`) or the shipped
    data (see :func:`find_input`, first match wins), hashed with :func:`file_digest`; the S-N data file (default
    ``toolkit.assess.checks.SN_DATA_PATH``); the toolkit version.
    """
    from toolkit import __version__
    from toolkit.assess.checks import SN_DATA_PATH

    found = {}
    for name, value in dict(params).items():
        for key, text in _file_values(name, value):
            where = find_input(text, dirs)
            if where is not None:
                found[key] = file_digest(where)
    sn = Path(sn_path) if sn_path is not None else SN_DATA_PATH
    return {"files": found, "sn_data": file_digest(sn) if sn.is_file() else None, "toolkit_version": __version__}


class Summary:
    """The results a workbook hands to ``toolkit.workbook.render`` for ``<name>.summary.json``.

    Parameters
    ----------
    parameters : dict, optional
        The workbook's parameter values as the cells see them.  Render checks
        they equal the run's parameters (a typo or a parameter overwritten in a
        later cell would otherwise go unseen).
    """

    def __init__(self, parameters=None):
        self.parameters = None if parameters is None else _finite_plain(dict(parameters), "Summary parameters")
        # the files, S-N data and version the cells see, for render to compare with its own record
        self.inputs = None if parameters is None else inputs_record(self.parameters)
        self.values = {}
        self.checks = []
        self._digits = {}

    def value(self, name, value, unit, note=None, digits=6, key=False):
        """Record one result: a finite number, a bool or a string, with its unit ("-" if none).

        ``key=True`` marks a key design value (Kt, hot-spot stress, damage):
        the report's verdict block at the top lists it beside the checks.

        ``digits``: significant figures of the displayed table only (the
        record keeps the full value); give 4 for a number whose later digits
        depend on solver round-off, such as a GCI.
        """
        name = str(name)
        if name in self.values:
            raise InputError(f"summary value {name!r} recorded twice (re-run from the Summary() cell)")
        if not isinstance(unit, str):
            raise InputError(f"summary value {name!r}: unit must be a string such as 'MPa' or '-'")
        v = _finite_plain(value, f"summary value {name!r}")
        if isinstance(v, (list, dict)) or v is None:
            raise InputError(f"summary value {name!r}: record a number, bool or string, not {type(value).__name__}")
        entry = {"value": v, "unit": unit}
        if note is not None:
            entry["note"] = str(note)
        if key:
            entry["key"] = True
        self.values[name] = entry
        self._digits[name] = int(digits)

    def check(self, result, digits=6):
        """Record one check: an object with ``to_dict()`` (e.g. a CheckResult) or a dict
        with at least name, value, limit, utilization and status ("PASS"/"FAIL").
        ``digits``: significant figures of the displayed value and limit only."""
        d = result.to_dict() if hasattr(result, "to_dict") else result
        if not isinstance(d, dict):
            raise InputError(f"summary check: expected a dict or an object with to_dict(), got {type(result).__name__}")
        missing = [k for k in _CHECK_KEYS if k not in d]
        name = d.get("name", "?")
        if missing:
            raise InputError(f"summary check {name!r}: missing {', '.join(missing)}")
        entry = {"name": str(d["name"])}
        for k in ("value", "limit", "utilization"):
            x = d[k]
            if isinstance(x, bool) or not isinstance(x, numbers.Real) or not math.isfinite(float(x)):
                raise InputError(f"summary check {name!r}: {k} must be a finite number, got {x!r}")
            entry[k] = float(x)
        if d["status"] not in ("PASS", "FAIL"):
            raise InputError(f"summary check {name!r}: status must be 'PASS' or 'FAIL', got {d['status']!r}")
        entry["status"] = d["status"]
        if d.get("unit") is not None:
            entry["unit"] = str(d["unit"])
        if any(c["name"] == entry["name"] for c in self.checks):
            raise InputError(f"summary check {entry['name']!r} recorded twice (re-run from the Summary() cell)")
        self.checks.append(entry)
        self._digits[("check", entry["name"])] = int(digits)

    def to_dict(self) -> dict:
        d = {"values": copy.deepcopy(self.values), "checks": copy.deepcopy(self.checks)}
        if self.parameters is not None:
            d["parameters"] = copy.deepcopy(self.parameters)
            d["inputs"] = copy.deepcopy(self.inputs)
        return d

    def _rows(self):
        rows = []
        for name, e in self.values.items():
            unit = "" if e["unit"] in DIMENSIONLESS else f" {e['unit']}"
            d = self._digits.get(name, 6)
            rows.append(("value", name, f"{fmt(e['value'], d)}{unit}", e.get("note", "")))
        for c in self.checks:
            unit = "" if c.get("unit", "-") in DIMENSIONLESS else f" {c['unit']}"
            d = self._digits.get(("check", c["name"]), 6)
            rows.append(("check", c["name"], f"{fmt(c['value'], d)}{unit} / {fmt(c['limit'], d)}{unit}",
                         f"utilization {c['utilization']:.3f}  {c['status']}"))
        return rows

    def __repr__(self):
        rows = self._rows()
        if not rows:
            return "Summary: (empty)"
        w = max(len(r[1]) for r in rows)
        v = max(len(r[2]) for r in rows)
        return "\n".join(["Summary"] + [f"  {k:<5}  {n:<{w}}  {x:<{v}}  {t}".rstrip() for k, n, x, t in rows])

    def _repr_html_(self):
        body = "".join(f"<tr><td>{html.escape(k)}</td><td>{html.escape(n)}</td><td>{html.escape(x)}</td>"
                       f"<td>{html.escape(t)}</td></tr>" for k, n, x, t in self._rows())
        return ("<table><caption style='text-align:left'><b>Summary</b></caption>"
                "<tr><th>kind</th><th>name</th><th>value / limit</th><th>note</th></tr>" + body + "</table>")

    def save(self, path=None):
        """Display the summary and embed its data for ``render`` (call once per workbook).

        With ``path``, also write the data as JSON there.  Returns None (so a
        trailing ``report.save()`` adds no extra output).
        """
        data = self.to_dict()
        if path is not None:
            atomic_write(Path(path), lambda f: f.write(json_text(data)))
        try:
            from IPython import get_ipython
        except ImportError:  # plain Python, no IPython installed
            get_ipython = lambda: None  # noqa: E731
        if get_ipython() is None:
            print(repr(self))
            return None
        from IPython.display import display

        display({"text/plain": repr(self), "text/html": self._repr_html_()}, raw=True,
                metadata={SUMMARY_METADATA_KEY: {"format": SUMMARY_FORMAT, "summary": data}})
        return None


def read_summary(nb):
    """The data a workbook saved with :meth:`Summary.save` (a notebook node or path).

    Raises :class:`WorkbookError` if there is none or more than one.
    """
    if isinstance(nb, (str, Path)):
        import nbformat

        try:
            nb = nbformat.read(str(nb), as_version=4)
        except Exception as e:  # nbformat raises several kinds (JSON, validation)
            raise WorkbookError(f"cannot read notebook {nb}: {e}") from None
    found = []
    for i, cell in enumerate(nb.cells):
        for out in cell.get("outputs", []) if cell.cell_type == "code" else []:
            md = out.get("metadata", {}).get(SUMMARY_METADATA_KEY)
            if isinstance(md, dict) and "summary" in md:
                found.append((i, md))
    if not found:
        raise WorkbookError("the workbook saved no summary: record results with Summary() and call "
                            "report.save() in a cell")
    if len(found) > 1:
        raise WorkbookError(f"the workbook saved {len(found)} summaries (cells "
                            f"{', '.join(str(i + 1) for i, _ in found)}); call report.save() once")
    md = found[0][1]
    if md.get("format") != SUMMARY_FORMAT:
        raise WorkbookError(f"summary format {md.get('format')!r} is not {SUMMARY_FORMAT}")
    data = md["summary"]
    if not isinstance(data.get("values"), dict) or not isinstance(data.get("checks"), list):
        raise WorkbookError("saved summary lacks 'values' (dict) or 'checks' (list)")
    return data
