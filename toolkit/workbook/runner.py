"""Workbooks: parameter injection, execution, offline HTML report, summary.json.

A workbook is a Jupyter notebook in ``workbooks/`` that runs end to end.  Its
inputs live in ONE code cell tagged ``parameters``; :func:`render` reads them,
checks the values given for a run against them before anything executes,
inserts the run's values in a cell tagged ``injected-parameters`` right after
it, executes the notebook in a fresh ``python3`` kernel of the current
interpreter and writes, into the output folder::

    <name>.ipynb    the executed notebook (deterministic: two runs with the same
                    inputs give byte-identical files)
    <name>.html     a self-contained report that opens with no network
    summary.json    the results the workbook recorded with :class:`Summary`

Parameters cell grammar
-----------------------
The cell holds only assignments ``name = literal`` (or ``name: type =
literal``), comments and blank lines.  The literal's type is the parameter's
type: ``bool``, ``int``, ``float``, ``str``, ``list``, ``tuple`` or ``dict``
(``None`` is refused: give a typed default).  A value given for a run must
have that type; an ``int`` is accepted for a ``float`` (and stored as float);
``bool`` is never taken for a number; list/tuple/dict entries must match the
type the default's entries share.  A comment at the end of an assignment may
carry constraints, as clauses separated by ``;``::

    width = 120.0     # mm; range: 0 < x <= 500
    holes = 2         # >= 1
    detail = "flat"   # one of: "flat", "shaft"

* ``range: CHAIN`` -- a comparison chain over ``x`` (or the parameter's own
  name) and numeric literals: ``0 < x <= 500``, ``x >= 1``, ``-1 <= x < 1``,
  ``500 >= x > 0``.  A clause that starts with ``<``, ``<=``, ``>`` or ``>=``
  is short for ``range: x ...`` (``> 0``); a clause that starts with ``x`` (or
  the name) followed by one of them is a range as well.  For ``int`` and
  ``float`` parameters only.
* ``one of: LIT, LIT, ...`` -- the allowed values, Python literals of the
  parameter's type.
* any other clause is free text (unit, description).  A free-text clause that
  contains ``range:``, ``one of:``, ``<`` or ``>`` is refused as a malformed
  constraint, so a mistyped constraint is never silently ignored.

The defaults themselves must satisfy their constraints.

Summary contract
----------------
A workbook records its results in its own cells::

    from toolkit.workbook.runner import Summary, inputs_hash
    report = Summary(parameters=dict(width=width, holes=holes, detail=detail))
    report.value("peak stress", s_max, "MPa")
    report.check(fatigue_check(...))          # CheckResult or a plain dict
    report.save()

``save()`` displays the summary as a table (``text/plain`` and ``text/html``,
formatted to 6 significant digits) and embeds the exact data in that output's
*metadata* under the key ``"stresspath"``.  :func:`render` extracts it from the
executed notebook.  This is the robust way: it needs no file and no agreed
working directory, it survives in the stored ``.ipynb`` (so the summary can be
re-extracted later with :func:`read_summary`), and strict ``pytest --nbval``
never compares output metadata, so full-precision floats cannot break it while
the formatted table is still compared.  A workbook calls ``save()`` exactly
once.  The final ``summary.json``::

    {"workbook": name, "toolkit_version": ..., "inputs_hash": ...,
     "parameters": {...}, "values": {"name": {"value": ..., "unit": ...}},
     "checks": [{"name", "value", "limit", "utilization", "status"[, "unit"]}]}

``parameters`` are the values the run used (defaults plus given values, in the
parameters-cell order); ``inputs_hash`` is :func:`inputs_hash` of them.  If the
workbook passed ``parameters=`` to :class:`Summary`, render checks they equal
the run's parameters, so a hash printed in the workbook's footer is the one in
summary.json.

Kernel working directory
------------------------
:func:`render` runs the kernel in the output folder, so any file a workbook
writes lands beside its report, never in ``workbooks/``.  The workbook's own
folder is passed to the kernel in ``STRESSPATH_WORKBOOK_DIR``;
:func:`workbook_dir` returns it (under ``pytest --nbval`` the kernel already
runs in the workbook's folder, and :func:`workbook_dir` returns that).

Title block
-----------
The first markdown cell with a component field is the title block: a line
``Component: <text>`` (the label may be bold, ``**Component:**``, or a list
item) or a table row ``| Component | <text> |``.  :func:`new_workbook` sets it.

The notebook libraries (nbformat, nbclient, nbconvert, tqdm) are imported when
needed, so ``import toolkit`` does not need them; :class:`Summary` needs only
IPython, present in every kernel.
"""
from __future__ import annotations

import ast
import copy
import difflib
import hashlib
import html
import io
import json
import math
import numbers
import os
import re
import sys
import time
import tokenize
from dataclasses import dataclass
from importlib.resources import files
from pathlib import Path

from toolkit.errors import ParameterError, WorkbookError, WorkbookExecutionError

__all__ = [
    "Summary", "inputs_hash", "workbook_dir", "render", "RenderResult", "new_workbook", "demo",
    "add_commands", "parse_parameters", "parse_assignment", "workbook_parameters", "Parameter", "ParameterError", "WorkbookError",
    "WorkbookExecutionError", "read_summary", "known_workbooks", "WORKBOOKS_DIR",
    "SUMMARY_METADATA_KEY", "PARAMETERS_TAG", "INJECTED_TAG",
]

#: The shipped workbooks (``workbooks/`` in the repository, ``toolkit.workbooks`` installed).
WORKBOOKS_DIR = Path(str(files("toolkit.workbooks")))
TEMPLATE_NAME = "offline_report"
PARAMETERS_TAG = "parameters"
INJECTED_TAG = "injected-parameters"
INJECTED_CELL_ID = "injected-parameters"
SUMMARY_METADATA_KEY = "stresspath"
SUMMARY_FORMAT = 1
WIDGET_VIEW_MIME = "application/vnd.jupyter.widget-view+json"
WORKBOOK_DIR_ENV = "STRESSPATH_WORKBOOK_DIR"
HEADLESS_ENV = "STRESSPATH_HEADLESS"   # same name as toolkit.report.HEADLESS_ENV (kept import-free)
KERNELSPEC = {"display_name": "Python 3 (ipykernel)", "language": "python", "name": "python3"}


# ---------------------------------------------------------------------------
# Plain values and hashing
# ---------------------------------------------------------------------------
def _plain(v, where):
    """JSON-ready copy of ``v`` (numpy scalars to Python); refuses non-finite floats."""
    if isinstance(v, bool) or v is None or isinstance(v, str):
        return v
    if isinstance(v, numbers.Integral):
        return int(v)
    if isinstance(v, numbers.Real):
        f = float(v)
        if not math.isfinite(f):
            raise ValueError(f"{where}: value {f} is not finite")
        return f
    if isinstance(v, dict):
        return {str(k): _plain(x, where) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_plain(x, where) for x in v]
    if hasattr(v, "tolist") and hasattr(v, "dtype"):  # numpy array or scalar
        return _plain(v.tolist(), where)
    raise ValueError(f"{where}: cannot store a {type(v).__name__} in summary.json")


def inputs_hash(params) -> str:
    """First 12 hex digits of the SHA-256 of the canonical JSON of ``params``.

    Canonical JSON: keys sorted, separators ``(",", ":")``, UTF-8, no NaN.
    The same parameter values give the same hash on any machine, so a
    report's footer identifies the inputs it was made from.
    """
    text = json.dumps(_plain(dict(params), "inputs_hash"), sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False, allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:12]


def workbook_dir() -> Path:
    """Folder of the workbook being run (see the module notes on the working directory)."""
    return Path(os.environ.get(WORKBOOK_DIR_ENV) or os.getcwd())


def _fmt(v):
    if isinstance(v, bool) or isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return f"{v:.6g}"
    return str(v)


# ---------------------------------------------------------------------------
# Summary (used inside workbook cells)
# ---------------------------------------------------------------------------
_CHECK_KEYS = ("name", "value", "limit", "utilization", "status")


class Summary:
    """The results a workbook hands to :func:`render` for ``summary.json``.

    Parameters
    ----------
    parameters : dict, optional
        The workbook's parameter values as the cells see them.  Render checks
        they equal the run's parameters (a typo or a parameter overwritten in a
        later cell would otherwise go unseen).
    """

    def __init__(self, parameters=None):
        self.parameters = None if parameters is None else _plain(dict(parameters), "Summary parameters")
        self.values = {}
        self.checks = []

    def value(self, name, value, unit, note=None):
        """Record one result: a finite number, a bool or a string, with its unit ("-" if none)."""
        name = str(name)
        if name in self.values:
            raise ValueError(f"summary value {name!r} recorded twice (re-run from the Summary() cell)")
        if not isinstance(unit, str):
            raise ValueError(f"summary value {name!r}: unit must be a string such as 'MPa' or '-'")
        v = _plain(value, f"summary value {name!r}")
        if isinstance(v, (list, dict)) or v is None:
            raise ValueError(f"summary value {name!r}: record a number, bool or string, not {type(value).__name__}")
        entry = {"value": v, "unit": unit}
        if note is not None:
            entry["note"] = str(note)
        self.values[name] = entry

    def check(self, result):
        """Record one check: an object with ``to_dict()`` (e.g. a CheckResult) or a dict
        with at least name, value, limit, utilization and status ("PASS"/"FAIL")."""
        d = result.to_dict() if hasattr(result, "to_dict") else result
        if not isinstance(d, dict):
            raise ValueError(f"summary check: expected a dict or an object with to_dict(), got {type(result).__name__}")
        missing = [k for k in _CHECK_KEYS if k not in d]
        name = d.get("name", "?")
        if missing:
            raise ValueError(f"summary check {name!r}: missing {', '.join(missing)}")
        entry = {"name": str(d["name"])}
        for k in ("value", "limit", "utilization"):
            x = d[k]
            if isinstance(x, bool) or not isinstance(x, numbers.Real) or not math.isfinite(float(x)):
                raise ValueError(f"summary check {name!r}: {k} must be a finite number, got {x!r}")
            entry[k] = float(x)
        if d["status"] not in ("PASS", "FAIL"):
            raise ValueError(f"summary check {name!r}: status must be 'PASS' or 'FAIL', got {d['status']!r}")
        entry["status"] = d["status"]
        if d.get("unit") is not None:
            entry["unit"] = str(d["unit"])
        if any(c["name"] == entry["name"] for c in self.checks):
            raise ValueError(f"summary check {entry['name']!r} recorded twice (re-run from the Summary() cell)")
        self.checks.append(entry)

    def to_dict(self) -> dict:
        d = {"values": copy.deepcopy(self.values), "checks": copy.deepcopy(self.checks)}
        if self.parameters is not None:
            d["parameters"] = copy.deepcopy(self.parameters)
        return d

    def _rows(self):
        rows = []
        for name, e in self.values.items():
            unit = "" if e["unit"] in ("", "-") else f" {e['unit']}"
            rows.append(("value", name, f"{_fmt(e['value'])}{unit}", e.get("note", "")))
        for c in self.checks:
            unit = "" if c.get("unit", "-") in ("", "-") else f" {c['unit']}"
            rows.append(("check", c["name"], f"{_fmt(c['value'])}{unit} / {_fmt(c['limit'])}{unit}",
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
        """Display the summary and embed its data for :func:`render` (call once per workbook).

        With ``path``, also write the data as JSON there.  Returns None (so a
        trailing ``report.save()`` adds no extra output).
        """
        data = self.to_dict()
        if path is not None:
            Path(path).write_text(json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False) + "\n",
                                  encoding="utf-8")
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


# ---------------------------------------------------------------------------
# Parameters cell
# ---------------------------------------------------------------------------
_TYPES = {bool: "bool", int: "int", float: "float", str: "str", list: "list", tuple: "tuple", dict: "dict"}
_OPS = {ast.Lt: "<", ast.LtE: "<=", ast.Gt: ">", ast.GtE: ">="}
_FLIP = {"<": ">", "<=": ">=", ">": "<", ">=": "<="}


@dataclass(frozen=True)
class Parameter:
    """One parameter of a workbook: name, default, type and constraints.

    ``bounds`` is a tuple of ``(op, number)`` meaning ``x op number``;
    ``choices`` a tuple of allowed values or None; ``text`` the comment's free text.
    """

    name: str
    default: object
    type: type
    line: int
    bounds: tuple = ()
    choices: tuple | None = None
    text: str = ""

    @property
    def range_text(self):
        return " and ".join(f"x {op} {_fmt(c)}" for op, c in self.bounds)


def _split_clauses(comment):
    """Split a comment on ``;`` outside quotes."""
    out, cur, quote = [], [], None
    for ch in comment:
        if quote:
            cur.append(ch)
            if ch == quote:
                quote = None
        elif ch in "\"'":
            quote = ch
            cur.append(ch)
        elif ch == ";":
            out.append("".join(cur))
            cur = []
        else:
            cur.append(ch)
    out.append("".join(cur))
    return [c.strip() for c in out if c.strip()]


def _number_literal(node, where):
    try:
        v = ast.literal_eval(node)
    except ValueError:
        v = None
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise ParameterError(f"{where}: range bounds must be numbers, got {ast.unparse(node)!r}")
    return v


def _parse_range(text, name, where):
    src = text.strip()
    if src[:1] in "<>":
        src = "x " + src
    try:
        tree = ast.parse(src, mode="eval").body
    except SyntaxError:
        raise ParameterError(f"{where}: cannot read range {text!r}; write e.g. 'range: 0 < x <= 100' or '> 0'") from None
    if not isinstance(tree, ast.Compare):
        raise ParameterError(f"{where}: range {text!r} is not a comparison such as '0 < x <= 100'")
    operands = [tree.left] + list(tree.comparators)
    is_var = [isinstance(o, ast.Name) and o.id in ("x", name) for o in operands]
    if sum(is_var) != 1:
        raise ParameterError(f"{where}: range {text!r} must name the parameter exactly once, as 'x' or {name!r}")
    bounds = []
    for (left, right), op, (lv, rv) in zip(zip(operands, operands[1:]), tree.ops,
                                           zip(is_var, is_var[1:])):
        if type(op) not in _OPS:
            raise ParameterError(f"{where}: range {text!r} may only use <, <=, >, >=")
        sym = _OPS[type(op)]
        if lv:
            bounds.append((sym, _number_literal(right, where)))
        elif rv:
            bounds.append((_FLIP[sym], _number_literal(left, where)))
        else:
            raise ParameterError(f"{where}: range {text!r} compares two numbers; chain them through x")
    return tuple(bounds)


def _parse_choices(text, where):
    try:
        vals = ast.literal_eval("(" + text + ",)")
    except (ValueError, SyntaxError):
        raise ParameterError(f"{where}: cannot read choices {text!r}; write e.g. 'one of: \"flat\", \"shaft\"'") from None
    if not vals:
        raise ParameterError(f"{where}: 'one of:' lists no values")
    return tuple(vals)


def _looks_like_range(clause, name):
    return bool(re.match(rf"^\s*(x|{re.escape(name)})\s*[<>]", clause))


def _parse_comment(comment, name, ptype, where):
    bounds, choices, text = (), None, []
    for clause in _split_clauses(comment):
        low = clause.lower()
        if low.startswith("range:"):
            new = _parse_range(clause[6:], name, where)
        elif clause[:1] in "<>" or _looks_like_range(clause, name) or re.match(r"^\s*-?[\d.]+\s*[<>]", clause):
            new = _parse_range(clause, name, where)
        elif low.startswith("one of:"):
            if choices is not None:
                raise ParameterError(f"{where}: 'one of:' given twice")
            choices = _parse_choices(clause[7:], where)
            continue
        else:
            if re.search(r"range\s*:|one\s+of\s*:|[<>]", low):
                raise ParameterError(f"{where}: malformed constraint in comment clause {clause!r}: "
                                     "start the clause with 'range:' or 'one of:' and separate clauses with ';'")
            text.append(clause)
            continue
        if bounds:
            raise ParameterError(f"{where}: more than one range given")
        bounds = new
    if bounds and ptype not in (int, float):
        raise ParameterError(f"{where}: a range applies to int or float parameters, not {_TYPES[ptype]}")
    return bounds, choices, "; ".join(text)


def _comments_by_line(source):
    out = {}
    try:
        for tok in tokenize.generate_tokens(io.StringIO(source).readline):
            if tok.type == tokenize.COMMENT:
                out[tok.start[0]] = tok.string[1:].strip()
    except (tokenize.TokenError, IndentationError):
        pass
    return out


def parse_parameters(source, workbook="workbook"):
    """Read a parameters cell: ``{name: Parameter}`` in cell order.

    Raises :class:`ParameterError` if the cell holds anything but literal
    assignments, a default has an unsupported type, a constraint is malformed
    or a default breaks its own constraint (grammar in the module notes).
    """
    try:
        tree = ast.parse(source)
    except SyntaxError as e:
        raise ParameterError(f"parameters cell of {workbook}: not plain Python (line {e.lineno}: {e.msg}); "
                             "keep magics and imports out of it") from None
    comments = _comments_by_line(source)
    params = {}
    for node in tree.body:
        if isinstance(node, ast.Expr) and isinstance(node.value, ast.Constant) and isinstance(node.value.value, str):
            continue  # a docstring-like note
        if isinstance(node, ast.Assign) and len(node.targets) == 1 and isinstance(node.targets[0], ast.Name):
            name, value_node = node.targets[0].id, node.value
        elif isinstance(node, ast.AnnAssign) and isinstance(node.target, ast.Name) and node.value is not None:
            name, value_node = node.target.id, node.value
        else:
            raise ParameterError(f"parameters cell of {workbook}, line {node.lineno}: only 'name = literal' "
                                 f"assignments are allowed, got {ast.unparse(node)!r}")
        where = f"parameter {name!r} of {workbook} (line {node.lineno})"
        if name in params:
            raise ParameterError(f"{where}: assigned twice in the parameters cell")
        try:
            default = ast.literal_eval(value_node)
        except ValueError:
            raise ParameterError(f"{where}: default must be a literal, got {ast.unparse(value_node)!r}") from None
        ptype = type(default)
        if ptype not in _TYPES:
            raise ParameterError(f"{where}: default {default!r} has unsupported type {ptype.__name__}; "
                                 "use bool, int, float, str, list, tuple or dict")
        if ptype is float and not math.isfinite(default):
            raise ParameterError(f"{where}: default must be finite")
        comment = " ; ".join(comments[i] for i in range(node.lineno, node.end_lineno + 1) if i in comments)
        bounds, choices, text = _parse_comment(comment, name, ptype, where)
        p = Parameter(name, default, ptype, node.lineno, bounds, None, text)
        if choices is not None:
            choices = tuple(_conform(p, c, f"{where}, choice {c!r}") for c in choices)
            p = Parameter(name, default, ptype, node.lineno, bounds, choices, text)
        problem = _violation(p, default)
        if problem:
            raise ParameterError(f"{where}: default {problem}")
        params[name] = p
    return params


def _type_name(v):
    return "bool" if isinstance(v, bool) else type(v).__name__


def _conform_scalar(kind, value, where):
    if kind is bool:
        if isinstance(value, bool):
            return value
    elif kind is int:
        if isinstance(value, numbers.Integral) and not isinstance(value, bool):
            return int(value)
    elif kind is float:
        if isinstance(value, numbers.Real) and not isinstance(value, bool):
            f = float(value)
            if not math.isfinite(f):
                raise ParameterError(f"{where}: must be finite, got {f}")
            return f
    elif kind is str:
        if isinstance(value, str):
            return value
    raise ParameterError(f"{where} expects {_TYPES[kind]}, got {_type_name(value)} {value!r}")


def _common_type(items):
    kinds = {type(v) for v in items}
    if kinds == {int, float}:
        return float
    if len(kinds) == 1:
        k = kinds.pop()
        if k in (bool, int, float, str):
            return k
    return None


def _conform(p, value, where):
    """``value`` converted to parameter ``p``'s type, or ParameterError."""
    kind = p.type
    if kind in (bool, int, float, str):
        return _conform_scalar(kind, value, where)
    if kind in (list, tuple):
        if not isinstance(value, (list, tuple)):
            raise ParameterError(f"{where} expects {_TYPES[kind]}, got {_type_name(value)} {value!r}")
        inner = _common_type(p.default)
        items = [_conform_scalar(inner, v, f"{where}, item {i}") if inner else v for i, v in enumerate(value)]
        return kind(items)
    if kind is dict:
        if not isinstance(value, dict):
            raise ParameterError(f"{where} expects dict, got {_type_name(value)} {value!r}")
        inner = _common_type(p.default.values())
        return {str(k): (_conform_scalar(inner, v, f"{where}, key {k!r}") if inner else v) for k, v in value.items()}
    raise ParameterError(f"{where}: unsupported type")  # pragma: no cover - parse_parameters refuses others


def _violation(p, value):
    """Why ``value`` breaks ``p``'s constraints, or ''."""
    for op, c in p.bounds:
        ok = {"<": value < c, "<=": value <= c, ">": value > c, ">=": value >= c}[op]
        if not ok:
            return f"= {_fmt(value)} is out of range: {p.range_text}"
    if p.choices is not None and value not in p.choices:
        return f"= {value!r} is not one of: {', '.join(repr(c) for c in p.choices)}"
    return ""


# ---------------------------------------------------------------------------
# Notebook helpers
# ---------------------------------------------------------------------------
def known_workbooks(folder=None):
    """Names (file stems) of the workbooks in ``folder`` (default ``workbooks/``)."""
    folder = Path(folder) if folder is not None else WORKBOOKS_DIR
    return sorted(p.stem for p in folder.glob("*.ipynb")) if folder.is_dir() else []


def _resolve(workbook, folder=None):
    p = Path(workbook)
    if p.suffix == ".ipynb" or p.is_file():
        if not p.is_file():
            raise WorkbookError(f"workbook file {p} not found")
        return p.resolve()
    folder = Path(folder) if folder is not None else WORKBOOKS_DIR
    cand = folder / f"{workbook}.ipynb"
    if cand.is_file():
        return cand.resolve()
    known = known_workbooks(folder)
    hint = difflib.get_close_matches(str(workbook), known, n=1)
    raise WorkbookError(f"unknown workbook {str(workbook)!r} in {folder}"
                        + (f" (did you mean {hint[0]!r}?)" if hint else "")
                        + f"; known: {', '.join(known) if known else '(none)'}")


def _tags(cell):
    return cell.get("metadata", {}).get("tags", [])


def _read(path):
    import nbformat

    try:
        nb = nbformat.read(str(path), as_version=4)
    except Exception as e:  # nbformat raises several kinds (JSON, validation)
        raise WorkbookError(f"cannot read notebook {path}: {e}") from None
    return nb


def _parameters_cell(nb, label):
    idx = [i for i, c in enumerate(nb.cells) if PARAMETERS_TAG in _tags(c)]
    if not idx:
        raise WorkbookError(f"{label} has no cell tagged {PARAMETERS_TAG!r}")
    if len(idx) > 1:
        raise WorkbookError(f"{label} has {len(idx)} cells tagged {PARAMETERS_TAG!r} "
                            f"(cells {', '.join(str(i + 1) for i in idx)}); keep one")
    if nb.cells[idx[0]].cell_type != "code":
        raise WorkbookError(f"{label}: the cell tagged {PARAMETERS_TAG!r} is not a code cell")
    return idx[0]


def workbook_parameters(workbook):
    """``{name: Parameter}`` of a workbook (name in ``workbooks/`` or path)."""
    path = _resolve(workbook)
    nb = _read(path)
    return parse_parameters(nb.cells[_parameters_cell(nb, path.name)].source, path.name)


def _resolve_values(params, given, label):
    """Full parameter set (defaults updated by ``given``), or one-line ParameterError."""
    unknown = [k for k in given if k not in params]
    if unknown:
        parts = []
        for k in unknown:
            hint = difflib.get_close_matches(k, list(params), n=1) if isinstance(k, str) else []
            parts.append(repr(k) + (f" (did you mean {hint[0]!r}?)" if hint else ""))
        raise ParameterError(f"unknown parameter{'s' if len(unknown) > 1 else ''} {', '.join(parts)} for {label}; "
                             f"known: {', '.join(params) if params else '(none)'}")
    problems, values, overrides = [], {}, {}
    for name, p in params.items():
        if name not in given:
            values[name] = p.default
            continue
        where = f"parameter {name!r} of {label}"
        try:
            v = _conform(p, given[name], where)
        except ParameterError as e:
            problems.append(str(e))
            continue
        why = _violation(p, v)
        if why:
            problems.append(f"{where} {why}")
            continue
        values[name] = overrides[name] = v
    if problems:
        raise ParameterError("; ".join(problems))
    return values, overrides


def _clean(nb):
    """Strip what changes between identical runs or carries widget state (in place)."""
    nb.metadata.pop("widgets", None)
    li = nb.metadata.get("language_info")
    if isinstance(li, dict):
        li.pop("version", None)
    for cell in nb.cells:
        cell.metadata.pop("execution", None)
        cell.metadata.pop("ExecuteTime", None)
        if cell.cell_type == "code":
            cell.outputs = [o for o in cell.get("outputs", []) if WIDGET_VIEW_MIME not in o.get("data", {})]
    return nb


def _ensure_ids(nb):
    """Cell ids for nbformat 4.5: keep existing ones, give missing ones a stable id."""
    nb.nbformat, nb.nbformat_minor = 4, max(nb.get("nbformat_minor", 5), 5)
    seen = {c.get("id") for c in nb.cells if c.get("id")}
    for i, cell in enumerate(nb.cells):
        if not cell.get("id"):
            cid = f"cell-{i}"
            while cid in seen:
                cid += "-x"
            cell["id"] = cid
            seen.add(cid)


def _write(nb, path):
    import nbformat

    nbformat.validate(nb)
    with open(path, "w", encoding="utf-8", newline="\n") as f:
        nbformat.write(nb, f)


def read_summary(nb):
    """The data a workbook saved with :meth:`Summary.save` (a notebook node or path).

    Raises :class:`WorkbookError` if there is none or more than one.
    """
    if isinstance(nb, (str, Path)):
        nb = _read(nb)
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


# ---------------------------------------------------------------------------
# Execution and HTML
# ---------------------------------------------------------------------------
def _kernel_manager_class():
    """An async kernel manager whose ``python3`` kernel is ipykernel on this interpreter."""
    import ipykernel.kernelspec
    from jupyter_client import AsyncKernelManager
    from jupyter_client.kernelspec import KernelSpecManager, NoSuchKernel
    from traitlets import default

    class _HereSpecs(KernelSpecManager):
        def get_kernel_spec(self, kernel_name):
            if kernel_name != "python3":
                raise NoSuchKernel(kernel_name)
            return self.kernel_spec_class(resource_dir=ipykernel.kernelspec.RESOURCES,
                                          **ipykernel.kernelspec.get_kernel_dict())

    class _HereKernelManager(AsyncKernelManager):
        @default("kernel_spec_manager")
        def _here_specs(self):
            return _HereSpecs(parent=self)

    return _HereKernelManager


_REMOTE_LOAD = re.compile(
    # any element whose src/href/data/srcset points off the page (plain links included)
    r"""<[a-z][a-z0-9]*\b[^>]*?\b(?:src|href|data|srcset)\s*=\s*["']?\s*(?:https?:)?//"""
    r"""|url\(\s*["']?\s*(?:https?:)?//|@import""", re.IGNORECASE)
_STYLE = re.compile(r"(<style[^>]*>)(.*?)(</style>)", re.DOTALL | re.IGNORECASE)
_CSS_COMMENT = re.compile(r"/\*.*?\*/", re.DOTALL)


def _offline_css(css):
    """Drop the URL scheme of references inside CSS comments (attributions kept, no URL)."""
    return _CSS_COMMENT.sub(lambda m: re.sub(r"https?://", "", m.group(0)), css)


def _html(nb, title):
    from importlib.resources import as_file

    from nbconvert import HTMLExporter

    with as_file(files("toolkit.workbook") / "templates") as tdir:
        exporter = HTMLExporter(template_name=TEMPLATE_NAME, extra_template_basedirs=[str(tdir)],
                                embed_images=True)
        body, _ = exporter.from_notebook_node(nb, resources={"metadata": {"name": title}})
    body = _STYLE.sub(lambda m: m.group(1) + _offline_css(m.group(2)) + m.group(3), body)
    bad = _REMOTE_LOAD.search(body)
    if bad:
        raise WorkbookError(f"the HTML report would load remote content ({body[bad.start():bad.start() + 80]!r}); "
                            "embed the file or drop the reference")
    return body


@dataclass
class RenderResult:
    """What :func:`render` wrote: paths, the run's parameters, the summary and the time taken."""

    name: str
    notebook: Path
    html: Path
    summary_path: Path
    parameters: dict
    summary: dict
    seconds: float
    cells: int = 0

    def __repr__(self):
        checks = self.summary.get("checks", [])
        fails = sum(c["status"] == "FAIL" for c in checks)
        return (f"RenderResult({self.name}: {self.cells} code cells in {self.seconds:.1f} s, "
                f"{len(self.summary.get('values', {}))} values, {len(checks)} checks ({fails} FAIL); "
                f"{self.notebook.parent})")


def _load_params_file(params_file):
    p = Path(params_file)
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ParameterError(f"parameters file {p} not found") from None
    except json.JSONDecodeError as e:
        raise ParameterError(f"parameters file {p}: not valid JSON (line {e.lineno}: {e.msg})") from None
    if not isinstance(data, dict):
        raise ParameterError(f"parameters file {p}: expected a JSON object of name: value, got {type(data).__name__}")
    return data


def render(workbook, out_dir, params=None, params_file=None, timeout=600, progress=True) -> RenderResult:
    """Run a workbook with parameters and write ``<name>.ipynb``, ``<name>.html`` and ``summary.json``.

    Parameters
    ----------
    workbook : str or Path
        A name in ``workbooks/`` (``"plate_with_hole"``) or a path to an ``.ipynb``.
    out_dir : str or Path
        Output folder (created if needed; must not be the workbook's own folder).
        It is also the kernel's working directory.
    params : dict, optional
        Parameter values for this run; they override ``params_file``.
    params_file : str or Path, optional
        A JSON object of parameter values.
    timeout : float
        Seconds allowed per cell.
    progress : bool
        Show a progress bar over the code cells (stderr).

    Every given value is checked against the parameters cell before anything
    runs (:class:`ParameterError`, nothing written).  If a cell fails, the
    executed notebook with the traceback is still written, any report and
    summary.json from an earlier run in ``out_dir`` are removed, and
    :class:`WorkbookExecutionError` is raised.
    """
    t0 = time.perf_counter()
    path = _resolve(workbook)
    name, label = path.stem, path.name
    nb = _read(path)
    spec = nb.metadata.get("kernelspec", {}).get("name")
    if spec not in (None, "python3"):
        raise WorkbookError(f"{label} names kernel {spec!r}; workbooks run on 'python3'")
    # Drop an earlier injected cell, then find the parameters cell.
    nb.cells = [c for c in nb.cells if INJECTED_TAG not in _tags(c)]
    pidx = _parameters_cell(nb, label)
    params_def = parse_parameters(nb.cells[pidx].source, label)
    given = {}
    if params_file is not None:
        given.update(_load_params_file(params_file))
    if params:
        given.update(params)
    values, overrides = _resolve_values(params_def, given, label)
    out = Path(out_dir).resolve()
    if out == path.parent:
        raise WorkbookError(f"output folder {out} is the workbook's own folder; choose another (e.g. reports/)")

    import nbformat
    from nbclient import NotebookClient
    from nbclient.exceptions import CellExecutionError, CellTimeoutError, DeadKernelError

    if overrides:
        src = "# Parameters of this run (stresspath render)\n" + "".join(
            f"{k} = {v!r}\n" for k, v in overrides.items())
        cell = nbformat.v4.new_code_cell(src.rstrip("\n"), metadata={"tags": [INJECTED_TAG]})
        cell["id"] = INJECTED_CELL_ID
        nb.cells.insert(pidx + 1, cell)
    for c in nb.cells:
        if c.cell_type == "code":
            c.outputs, c.execution_count = [], None
    _ensure_ids(nb)
    nb.metadata["kernelspec"] = dict(KERNELSPEC)

    out.mkdir(parents=True, exist_ok=True)
    nb_path, html_path, sum_path = out / f"{name}.ipynb", out / f"{name}.html", out / "summary.json"
    for stale in (html_path, sum_path):
        stale.unlink(missing_ok=True)

    from tqdm import tqdm

    n_code = sum(1 for c in nb.cells if c.cell_type == "code" and c.source.strip())
    bar = tqdm(total=n_code, desc=name, unit="cell", disable=not progress, file=sys.stderr, leave=True)
    current = {"index": None}

    def on_start(cell, cell_index):
        current["index"] = cell_index

    def on_executed(cell, cell_index, execute_reply):  # after the reply, unlike on_cell_complete
        bar.update(1)

    client = NotebookClient(nb, kernel_name="python3", timeout=timeout, record_timing=False,
                            kernel_manager_class=_kernel_manager_class(),
                            # the kernel app's own start-up warnings (not cell output) stay quiet
                            extra_arguments=["--IPKernelApp.log_level=ERROR"],
                            resources={"metadata": {"path": str(out)}},
                            on_cell_start=on_start, on_cell_executed=on_executed)
    env = dict(os.environ)
    env[WORKBOOK_DIR_ENV] = str(path.parent)
    env[HEADLESS_ENV] = "1"          # no live widgets: see toolkit.report.headless
    try:
        client.execute(env=env)
    except (CellExecutionError, CellTimeoutError, DeadKernelError) as e:
        bar.close()
        _clean(nb)
        _write(nb, nb_path)
        i = current["index"]
        where = f"cell {i + 1} (id {nb.cells[i].get('id')})" if i is not None else "start-up"
        if isinstance(e, CellExecutionError):
            reason = f"{e.ename}: {e.evalue}"
        elif isinstance(e, CellTimeoutError):
            reason = f"no result within {timeout:g} s"
        else:
            reason = "the kernel died"
        raise WorkbookExecutionError(f"{label} failed in {where}: {reason}; the executed notebook with the "
                                     f"traceback is {nb_path}", notebook=nb_path) from None
    bar.close()
    _clean(nb)
    _write(nb, nb_path)

    try:
        data = read_summary(nb)
    except WorkbookError as e:
        raise WorkbookError(f"{label}: {e}") from None
    if "parameters" in data and data["parameters"] != _plain(values, "parameters"):
        rec, run = data["parameters"], _plain(values, "parameters")
        diff = sorted(set(rec) ^ set(run)) + sorted(k for k in set(rec) & set(run) if rec[k] != run[k])
        raise WorkbookError(f"{label}: Summary(parameters=...) differs from the run's parameters in "
                            f"{', '.join(diff)}; pass every parameter unchanged")
    from toolkit import __version__

    summary = {"workbook": name, "toolkit_version": __version__, "inputs_hash": inputs_hash(values),
               "parameters": _plain(values, "parameters"), "values": data["values"], "checks": data["checks"]}
    html_path.write_text(_html(nb, name), encoding="utf-8", newline="\n")
    sum_path.write_text(json.dumps(summary, indent=2, ensure_ascii=False, allow_nan=False) + "\n",
                        encoding="utf-8", newline="\n")
    return RenderResult(name, nb_path, html_path, sum_path, values, summary, time.perf_counter() - t0, n_code)


# ---------------------------------------------------------------------------
# New workbook from a template, demo
# ---------------------------------------------------------------------------
_COMPONENT_LINE = re.compile(r"^(?P<head>[ \t]*(?:[-*+][ \t]+)?(?:\*\*|__)?Component(?:\*\*|__)?[ \t]*:[ \t]*"
                             r"(?:\*\*|__)?[ \t]*)(?P<val>[^\n]*?)[ \t]*$", re.IGNORECASE | re.MULTILINE)
_COMPONENT_ROW = re.compile(r"^(?P<head>[ \t]*\|[ \t]*(?:\*\*|__)?Component(?:\*\*|__)?[ \t]*\|[ \t]*)"
                            r"(?P<val>[^|\n]*?)(?P<tail>[ \t]*\|[^\n]*)$", re.IGNORECASE | re.MULTILINE)


def _set_component(source, name):
    for rx in (_COMPONENT_ROW, _COMPONENT_LINE):
        m = rx.search(source)
        if m:
            head, tail = m.group("head"), m.groupdict().get("tail") or ""
            if rx is _COMPONENT_LINE and not head.endswith((" ", "\t")):
                head += " "
            return source[:m.start()] + head + name + tail + source[m.end():]
    return None


def new_workbook(template, name, out_dir, source_dir=None, overwrite=False) -> Path:
    """Start a calculation from a template workbook: ``out_dir/<name>.ipynb``.

    The copy has every output cleared, no injected cell, and the title block's
    component field set to ``name`` (see the module notes); the parameters
    cell keeps the template's defaults, ready to fill.

    Parameters
    ----------
    template : str
        A workbook name in ``source_dir`` (default ``workbooks/``), e.g. ``"plate_with_hole"``.
    name : str
        The component; also the file name.
    overwrite : bool
        Replace an existing file (default: refuse).
    """
    folder = Path(source_dir) if source_dir is not None else WORKBOOKS_DIR
    known = known_workbooks(folder)
    if template not in known:
        hint = difflib.get_close_matches(str(template), known, n=1)
        raise WorkbookError(f"unknown template {template!r}" + (f" (did you mean {hint[0]!r}?)" if hint else "")
                            + f"; known: {', '.join(known) if known else '(none)'} in {folder}")
    name = str(name).strip()
    if not name or name.startswith(".") or any(ch in name for ch in '/\\:*?"<>|\n'):
        raise WorkbookError(f"component name {name!r} cannot be a file name; use letters, digits, spaces, '-', '_', '.'")
    src = folder / f"{template}.ipynb"
    nb = _read(src)
    nb.cells = [c for c in nb.cells if INJECTED_TAG not in _tags(c)]
    parse_parameters(nb.cells[_parameters_cell(nb, src.name)].source, src.name)
    for cell in nb.cells:
        if cell.cell_type == "markdown":
            new = _set_component(cell.source, name)
            if new is not None:
                cell.source = new
                break
    else:
        raise WorkbookError(f"template {src.name} has no component field in a markdown cell "
                            "(a line 'Component: ...' or a row '| Component | ... |')")
    for cell in nb.cells:
        if cell.cell_type == "code":
            cell.outputs, cell.execution_count = [], None
    _clean(nb)
    _ensure_ids(nb)
    out = Path(out_dir)
    target = out / f"{name}.ipynb"
    if target.exists() and not overwrite:
        raise WorkbookError(f"{target} exists; choose another name or remove it first")
    out.mkdir(parents=True, exist_ok=True)
    _write(nb, target)
    return target


def demo(out_dir="reports", workbooks=None, progress=False):
    """Render workbooks with their defaults into ``out_dir/<name>/``, printing the time of each.

    ``workbooks``: names or paths (default: every workbook in ``workbooks/``).
    Returns the list of :class:`RenderResult`; if any fail, the others still
    run and a :class:`WorkbookError` listing the failures is raised at the end.
    """
    items = list(workbooks) if workbooks is not None else known_workbooks()
    if not items:
        raise WorkbookError(f"no workbooks to render in {WORKBOOKS_DIR}")
    results, failures = [], []
    for wb in items:
        stem = Path(wb).stem
        t0 = time.perf_counter()
        try:
            r = render(wb, Path(out_dir) / stem, progress=progress)
        except (WorkbookError, WorkbookExecutionError) as e:
            print(f"{stem:<28} FAILED after {time.perf_counter() - t0:6.1f} s: {e}")
            failures.append(f"{stem} ({e})")
            continue
        checks = r.summary["checks"]
        fails = sum(c["status"] == "FAIL" for c in checks)
        print(f"{stem:<28} {r.seconds:6.1f} s  {len(checks)} checks, {fails} FAIL  -> {r.html}")
        results.append(r)
    if failures:
        raise WorkbookError(f"{len(failures)} of {len(items)} workbooks failed: " + "; ".join(failures))
    return results


# ---------------------------------------------------------------------------
# Command line
# ---------------------------------------------------------------------------
def _reject_constant(s):
    raise ValueError(s)


def parse_assignment(text):
    """``"name=value"`` -> (name, value); value read as JSON where possible, else kept as a string."""
    name, sep, raw = text.partition("=")
    name = name.strip()
    if not sep or not name.isidentifier():
        raise ParameterError(f"--set {text!r}: write NAME=VALUE, e.g. --set width=120")
    try:
        value = json.loads(raw, parse_constant=_reject_constant)
    except ValueError:
        value = raw
    return name, value


def _cmd_render(args):
    try:
        given = {}
        for a in args.assignments:
            k, v = parse_assignment(a)
            if k in given:
                raise ParameterError(f"--set {k} given twice")
            given[k] = v
        r = render(args.workbook, args.out, params=given, params_file=args.params, timeout=args.timeout,
                   progress=not args.quiet)
    except WorkbookExecutionError as e:
        print(f"error: {e}", file=sys.stderr)
        return 1
    except WorkbookError as e:
        print(f"error: {e}", file=sys.stderr)
        return 2
    checks = r.summary["checks"]
    fails = sum(c["status"] == "FAIL" for c in checks)
    print(f"wrote {r.notebook}, {r.html}, {r.summary_path} in {r.seconds:.1f} s "
          f"(inputs {r.summary['inputs_hash']}; {len(checks)} checks, {fails} FAIL)")
    return 0


def _cmd_new(args):
    try:
        p = new_workbook(args.template, args.name, args.out)
    except WorkbookError as e:
        print(f"error: {e}", file=sys.stderr)
        return 2
    print(f"wrote {p}")
    return 0


def add_commands(subparsers):
    """Register ``render`` and ``new`` on an argparse subparsers object.

    Each sets ``func``; ``func(args)`` returns the exit code (0 done, 1 a cell
    failed, 2 bad input).
    """
    p = subparsers.add_parser("render", help="run a workbook and write notebook, HTML report and summary.json",
                              description="Run a workbook with parameters; write <name>.ipynb, <name>.html "
                                          "and summary.json into --out.")
    p.add_argument("workbook", help="workbook name in workbooks/ or path to an .ipynb")
    p.add_argument("--set", dest="assignments", action="append", default=[], metavar="NAME=VALUE",
                   help="set a parameter (value read as JSON where possible, else as text); repeatable")
    p.add_argument("--params", metavar="FILE.json", help="JSON object of parameter values (--set wins)")
    p.add_argument("--out", required=True, metavar="DIR", help="output folder")
    p.add_argument("--timeout", type=float, default=600, metavar="S", help="seconds allowed per cell (600)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=_cmd_render)

    q = subparsers.add_parser("new", help="start a calculation from a template workbook",
                              description="Copy a template workbook to DIR/NAME.ipynb with outputs cleared "
                                          "and the component set to NAME.")
    q.add_argument("template", help="template name in workbooks/")
    q.add_argument("name", help="component name (also the file name)")
    q.add_argument("--out", required=True, metavar="DIR", help="output folder")
    q.set_defaults(func=_cmd_new)
    return subparsers
