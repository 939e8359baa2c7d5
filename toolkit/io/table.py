"""One CSV table: reading it by header name and writing it losslessly.

Reading is vectorised: a file is parsed by :func:`numpy.loadtxt` in one C
pass; only when that fails is it re-read line by line (chunks numpy can parse
still go through numpy) to say exactly which row and column is wrong.  Every
problem raises a :class:`ValueError` naming the file, the 1-based data row
(blank lines are not counted; the line number is given too) and what is
wrong.  Writing is lossless: floats are written as the shortest decimal
string that reads back to the same double (Python ``repr``, at most 17
significant digits), so CSV -> model -> CSV reproduces the same numbers and ids.
"""
from __future__ import annotations

import re
import warnings
from pathlib import Path

import numpy as np

from toolkit.errors import InputError
from toolkit.io.files import atomic_write, read_text

__all__ = ["EMPTY", "Table", "read_csv", "first_duplicate", "first_true", "write_csv", "int_cells",
           "float_cells"]

EMPTY = np.iinfo(np.int64).min       # marks an empty optional cell (never a valid id)
_TYPE_WIDTH = 32                     # longest element type token we read
_CASE_WIDTH = 64                     # longest load case name we read
_CHUNK = 20000                       # lines per chunk on the careful path
_INT_RE = re.compile(r"[+-]?[0-9]+\Z")
_DTYPES = {"i": "i8", "n": "i8", "f": "f8", "t": f"U{_TYPE_WIDTH}", "c": f"U{_CASE_WIDTH}"}


class Table:
    """Columns of one CSV file, by header name, with row locations for messages."""

    def __init__(self, path: Path, names, data, lines=None):
        self.path = path
        self.names = list(names)
        self._lower = {n.lower(): n for n in names}
        self._data = data
        self._lines = lines
        self.nrows = len(data)

    def __contains__(self, name):
        return name.lower() in self._lower

    def col(self, name) -> np.ndarray:
        """Column by header name (the fixed names match case-insensitively)."""
        real = self._lower[name.lower()] if name.lower() in self._lower else name
        return self._data[f"c{self.names.index(real)}"]

    def line(self, i: int):
        if self._lines is None:
            self._lines = _data_line_numbers(self.path)
        return self._lines[i] if 0 <= i < len(self._lines) else "?"

    def where(self, i: int) -> str:
        """``"nodes.csv, row 5 (line 6)"`` for the 0-based data row ``i``."""
        return f"{self.path}, row {int(i) + 1} (line {self.line(int(i))})"


def _data_line_numbers(path: Path) -> list[int]:
    """1-based line numbers of the non-blank lines after the header."""
    text = read_text(path)
    return [n for n, s in enumerate(text.split("\n")[1:], start=2) if s.strip()]


# ---------------------------------------------------------------------------
# Fast path
# ---------------------------------------------------------------------------
def _conv_optional(s: str) -> int:
    s = s.strip()
    return int(s) if s else EMPTY


def _loadtxt(src, dtype, kinds, skiprows):
    conv = {j: _conv_optional for j, k in enumerate(kinds) if k == "n"}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        data = np.loadtxt(src, delimiter=",", dtype=dtype, skiprows=skiprows, comments=None,
                          encoding="utf-8-sig", converters=conv or None, ndmin=1, quotechar=None)
    for j, k in enumerate(kinds):
        if k == "t" and data.size and (np.strings.str_len(data[f"c{j}"]) >= _TYPE_WIDTH).any():
            raise InputError("type token too long")      # re-read carefully
        if k == "c" and data.size and (np.strings.str_len(data[f"c{j}"]) >= _CASE_WIDTH).any():
            raise InputError("case name too long")       # re-read carefully
    return data


def read_csv(path: Path, schema) -> Table:
    """Read one CSV file.  ``schema(path, names) -> kinds``, one of ``"i"``
    (integer), ``"n"`` (integer or empty), ``"f"`` (float), ``"t"`` (element
    type), ``"c"`` (load case name) per column."""
    if not path.is_file():
        raise InputError(f"{path}: file not found")
    try:
        with open(path, encoding="utf-8-sig") as f:
            header = f.readline()
    except UnicodeDecodeError as e:
        raise InputError(f"{path}: not UTF-8 text (byte {e.start}: {e.reason})") from None
    except OSError as e:
        raise InputError(f"{path}: cannot be read ({e.strerror or e})") from None
    header = header.rstrip("\n")
    if not header.strip():
        raise InputError(f"{path}: line 1 must be the header row, found an empty line")
    names = [c.strip() for c in header.split(",")]
    bad = [j for j, n in enumerate(names) if not n]
    if bad:
        raise InputError(f"{path}: header column {bad[0] + 1} has no name (header: {header.strip()!r})")
    low = [n.lower() for n in names]
    for j, n in enumerate(low):
        if n in low[:j]:
            raise InputError(f"{path}: header names column {names[j]!r} twice")
    kinds = schema(path, names)
    dtype = np.dtype([(f"c{j}", _DTYPES[k]) for j, k in enumerate(kinds)])
    try:
        data, lines = _loadtxt(path, dtype, kinds, 1), None
    except Exception:
        data, lines = _read_csv_careful(path, names, kinds, dtype)
    if len(data) == 0:
        raise InputError(f"{path}: no data rows after the header")
    return Table(path, names, data, lines)


# ---------------------------------------------------------------------------
# Careful path
# ---------------------------------------------------------------------------
def _read_csv_careful(path, names, kinds, dtype):
    """Line-by-line reading that names the first bad row and column.  Chunks
    that numpy can parse are still parsed by numpy."""
    text = read_text(path)
    rows, lines = [], []
    for ln, s in enumerate(text.split("\n")[1:], start=2):
        s = s.strip()
        if s:
            rows.append(s)
            lines.append(ln)
    parts = []
    for start in range(0, len(rows), _CHUNK):
        chunk = rows[start:start + _CHUNK]
        try:
            a = _loadtxt(chunk, dtype, kinds, 0)
            if len(a) != len(chunk):
                raise InputError("row count")
        except Exception:
            a = _parse_lines(path, names, kinds, dtype, chunk, start, lines)
        parts.append(a)
    data = np.concatenate(parts) if parts else np.empty(0, dtype)
    return data, lines


def _parse_lines(path, names, kinds, dtype, chunk, start, lines):
    out = np.empty(len(chunk), dtype)
    ncol = len(names)
    for i, s in enumerate(chunk):
        r = start + i
        cells = [c.strip() for c in s.split(",")]
        where = f"{path}, row {r + 1} (line {lines[r]})"
        if len(cells) > ncol:
            raise InputError(f"{where}: {len(cells)} cells, but the header has {ncol} columns")
        if len(cells) < ncol:
            if all(kinds[j] == "n" for j in range(len(cells), ncol)):
                cells += [""] * (ncol - len(cells))
            else:
                raise InputError(f"{where}: {len(cells)} cells, but the header has {ncol} columns "
                                 f"(no value for {names[len(cells)]!r})")
        vals = []
        for j, (c, k) in enumerate(zip(cells, kinds)):
            try:
                vals.append(_parse_cell(c, k))
            except _CellError as e:
                raise InputError(f"{where}, column {names[j]!r}: {e}") from None
        out[i] = tuple(vals)
    return out


class _CellError(Exception):
    pass


def _parse_cell(c: str, kind: str):
    if kind == "f":
        if not c:
            raise _CellError("empty cell, expected a number")
        if not c.isascii() or "_" in c:
            raise _CellError(f"malformed number {c!r}")
        try:
            return float(c)
        except ValueError:
            raise _CellError(f"malformed number {c!r}") from None
    if kind in ("i", "n"):
        if not c:
            if kind == "n":
                return EMPTY
            raise _CellError("empty cell, expected an integer")
        if not _INT_RE.match(c):
            raise _CellError(f"malformed integer {c!r}")
        v = int(c)
        if not (-2**63 < v < 2**63):
            raise _CellError(f"integer {c} is out of the 64-bit range")
        return v
    if kind == "c":
        if not c:
            raise _CellError("empty cell, expected a load case name")
        if len(c) >= _CASE_WIDTH:
            raise _CellError(f"load case name {c[:40]!r}... is longer than {_CASE_WIDTH - 1} characters")
        return c
    # element type
    if not c:
        raise _CellError("empty cell, expected an element type")
    if len(c) >= _TYPE_WIDTH:
        raise _CellError(f"unknown element type {c[:40]!r}")
    return c


# ---------------------------------------------------------------------------
# Finding the first bad row
# ---------------------------------------------------------------------------
def first_duplicate(keys: np.ndarray):
    """Rows ``(i, j)``, ``i < j``, of the earliest repeated key, or None."""
    order = np.argsort(keys, kind="stable")
    s = keys[order]
    d = np.flatnonzero(s[1:] == s[:-1])
    if d.size == 0:
        return None
    later = order[d + 1]
    k = int(np.argmin(later))
    return int(order[d[k]]), int(later[k])


def first_true(mask: np.ndarray):
    """Index of the first True in ``mask``, or None."""
    idx = np.flatnonzero(mask)
    return int(idx[0]) if idx.size else None


# ---------------------------------------------------------------------------
# Writing
# ---------------------------------------------------------------------------
def int_cells(a):
    """The integers of ``a`` as CSV cells."""
    return list(map(str, np.asarray(a).tolist()))


def float_cells(a):
    """The floats of ``a`` as CSV cells, each the shortest string that reads
    back to the same double (``repr``)."""
    return list(map(repr, np.asarray(a, dtype=float).tolist()))


def write_csv(path: Path, header, columns):
    """Write ``header`` and the columns of cell strings as one CSV file,
    atomically (see :func:`toolkit.io.files.atomic_write`)."""
    def write(f):
        f.write(",".join(header) + "\n")
        if columns and len(columns[0]):
            f.write("\n".join(map(",".join, zip(*columns))))
            f.write("\n")
    atomic_write(path, write)
