"""Reading and writing results: the neutral result folder, the ``.npz`` form,
VTU export and nodal tables.

The neutral result folder holds three CSV files and an optional JSON file::

    nodes.csv      node,x,y[,z]
    elements.csv   element,type,region,n1,...,nK
    gauss.csv      element,point[,x,y[,z]],<components...>
    about.json     {"points": ..., "units": ..., "description": ..., "name": ...}

(the full description is in ``docs/neutral-format.md``).  Ids are arbitrary
integers, never positions.  Node order within an element is the one of
:mod:`toolkit.elements` (the VTK order).  When ``gauss.csv`` carries
coordinates, every point is mapped back to natural coordinates with
:func:`toolkit.mesh.inverse_map` and matched to a reference point set *by its
position*, so the order of the rows and of the point numbers does not matter.

Reading is vectorised: each CSV file is parsed by :func:`numpy.loadtxt` in
one C pass; only when that fails is the file re-read line by line to say
exactly which row and column is wrong.  Every problem with the input raises
a :class:`ValueError` naming the file, the 1-based data row (blank lines are
not counted; the line number is given too) or the element id, and what is
wrong.

Writing is lossless: floats are written as the shortest decimal string that
reads back to the same double (Python ``repr``, at most 17 significant
digits), so CSV -> model -> CSV reproduces the same numbers and ids.
"""
from __future__ import annotations

import json
import os
import re
import tempfile
import warnings
from pathlib import Path

import numpy as np

from toolkit.core.arrays import chunk_slices
from toolkit.core.elements import QuadratureRule, get_element
from toolkit.core.fields import GaussField, NodalField
from toolkit.core.mesh import Mesh, inverse_map

__all__ = [
    "FORMAT", "POINT_TOL", "VTK_CELL_TYPES",
    "read_results", "write_results", "read_mesh", "read_about",
    "write_nodal_csv", "write_vtu",
]

#: Format label written into ``about.json`` and ``.npz`` files.
FORMAT = "stresspath-results/1"

#: Tolerance in natural coordinates for matching imported integration points
#: to a reference point set and for deciding that a point lies inside its element.
POINT_TOL = 1e-2

#: Most integration points one element may carry in an imported file.
MAX_POINTS = 512

#: Our element type names -> meshio (VTK) cell type names.  Our node order is
#: the VTK order for every type, so no permutation is needed.
VTK_CELL_TYPES = {
    "tri3": "triangle", "tri6": "triangle6",
    "quad4": "quad", "quad8": "quad8", "quad9": "quad9",
    "tet4": "tetra", "tet10": "tetra10",
    "hex8": "hexahedron", "hex20": "hexahedron20",
}

NODES_FILE = "nodes.csv"
ELEMENTS_FILE = "elements.csv"
GAUSS_FILE = "gauss.csv"
ABOUT_FILE = "about.json"

_ABOUT_KEYS = ("format", "points", "units", "description", "name")
_RESERVED = ("element", "point", "x", "y", "z")
_EMPTY = np.iinfo(np.int64).min      # marks an empty optional cell (never a valid id)
_TYPE_WIDTH = 32                     # longest element type token we read
_CHUNK = 20000                       # lines per chunk on the careful path
_INT_RE = re.compile(r"[+-]?[0-9]+\Z")
_DTYPES = {"i": "i8", "n": "i8", "f": "f8", "t": f"U{_TYPE_WIDTH}"}


# ===========================================================================
# CSV tables
# ===========================================================================
class _Table:
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
    text = _read_text(path)
    return [n for n, s in enumerate(text.split("\n")[1:], start=2) if s.strip()]


def _read_text(path: Path) -> str:
    try:
        return path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError as e:
        raise ValueError(f"{path}: not UTF-8 text (byte {e.start}: {e.reason})") from None
    except OSError as e:
        raise ValueError(f"{path}: cannot be read ({e.strerror or e})") from None


def _conv_optional(s: str) -> int:
    s = s.strip()
    return int(s) if s else _EMPTY


def _loadtxt(src, dtype, kinds, skiprows):
    conv = {j: _conv_optional for j, k in enumerate(kinds) if k == "n"}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        data = np.loadtxt(src, delimiter=",", dtype=dtype, skiprows=skiprows, comments=None,
                          encoding="utf-8-sig", converters=conv or None, ndmin=1, quotechar=None)
    for j, k in enumerate(kinds):
        if k == "t" and data.size and (np.strings.str_len(data[f"c{j}"]) >= _TYPE_WIDTH).any():
            raise ValueError("type token too long")      # re-read carefully
    return data


def _read_csv(path: Path, schema) -> _Table:
    """Read one CSV file.  ``schema(path, names) -> kinds``, one of ``"i"``
    (integer), ``"n"`` (integer or empty), ``"f"`` (float), ``"t"`` (element
    type) per column."""
    if not path.is_file():
        raise ValueError(f"{path}: file not found")
    try:
        with open(path, encoding="utf-8-sig") as f:
            header = f.readline()
    except UnicodeDecodeError as e:
        raise ValueError(f"{path}: not UTF-8 text (byte {e.start}: {e.reason})") from None
    except OSError as e:
        raise ValueError(f"{path}: cannot be read ({e.strerror or e})") from None
    header = header.rstrip("\n")
    if not header.strip():
        raise ValueError(f"{path}: line 1 must be the header row, found an empty line")
    names = [c.strip() for c in header.split(",")]
    bad = [j for j, n in enumerate(names) if not n]
    if bad:
        raise ValueError(f"{path}: header column {bad[0] + 1} has no name (header: {header.strip()!r})")
    low = [n.lower() for n in names]
    for j, n in enumerate(low):
        if n in low[:j]:
            raise ValueError(f"{path}: header names column {names[j]!r} twice")
    kinds = schema(path, names)
    dtype = np.dtype([(f"c{j}", _DTYPES[k]) for j, k in enumerate(kinds)])
    try:
        data, lines = _loadtxt(path, dtype, kinds, 1), None
    except Exception:
        data, lines = _read_csv_careful(path, names, kinds, dtype)
    if len(data) == 0:
        raise ValueError(f"{path}: no data rows after the header")
    return _Table(path, names, data, lines)


def _read_csv_careful(path, names, kinds, dtype):
    """Line-by-line reading that names the first bad row and column.  Chunks
    that numpy can parse are still parsed by numpy."""
    text = _read_text(path)
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
                raise ValueError("row count")
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
            raise ValueError(f"{where}: {len(cells)} cells, but the header has {ncol} columns")
        if len(cells) < ncol:
            if all(kinds[j] == "n" for j in range(len(cells), ncol)):
                cells += [""] * (ncol - len(cells))
            else:
                raise ValueError(f"{where}: {len(cells)} cells, but the header has {ncol} columns "
                                 f"(no value for {names[len(cells)]!r})")
        vals = []
        for j, (c, k) in enumerate(zip(cells, kinds)):
            try:
                vals.append(_parse_cell(c, k))
            except _CellError as e:
                raise ValueError(f"{where}, column {names[j]!r}: {e}") from None
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
                return _EMPTY
            raise _CellError("empty cell, expected an integer")
        if not _INT_RE.match(c):
            raise _CellError(f"malformed integer {c!r}")
        v = int(c)
        if not (-2**63 < v < 2**63):
            raise _CellError(f"integer {c} is out of the 64-bit range")
        return v
    # element type
    if not c:
        raise _CellError("empty cell, expected an element type")
    if len(c) >= _TYPE_WIDTH:
        raise _CellError(f"unknown element type {c[:40]!r}")
    return c


def _first_duplicate(keys: np.ndarray):
    """Rows ``(i, j)``, ``i < j``, of the earliest repeated key, or None."""
    order = np.argsort(keys, kind="stable")
    s = keys[order]
    d = np.flatnonzero(s[1:] == s[:-1])
    if d.size == 0:
        return None
    later = order[d + 1]
    k = int(np.argmin(later))
    return int(order[d[k]]), int(later[k])


def _first_true(mask: np.ndarray):
    idx = np.flatnonzero(mask)
    return int(idx[0]) if idx.size else None


# ===========================================================================
# Schemas
# ===========================================================================
def _nodes_schema(path, names):
    low = [n.lower() for n in names]
    for n, l in zip(names, low):
        if l not in ("node", "x", "y", "z"):
            raise ValueError(f"{path}: unexpected column {n!r}; the header must be node,x,y or node,x,y,z")
    for need in ("node", "x", "y"):
        if need not in low:
            raise ValueError(f"{path}: missing column {need!r}; the header must be node,x,y or node,x,y,z")
    return ["i" if l == "node" else "f" for l in low]


def _node_column_number(name):
    m = re.fullmatch(r"n([0-9]+)", name.lower())
    return int(m.group(1)) if m else None


def _elements_schema(path, names):
    low = [n.lower() for n in names]
    kinds, numbers = [], []
    for n, l in zip(names, low):
        if l == "element":
            kinds.append("i")
        elif l == "type":
            kinds.append("t")
        elif l == "region":
            kinds.append("i")
        elif _node_column_number(l) is not None:
            kinds.append("n")
            numbers.append(_node_column_number(l))
        else:
            raise ValueError(f"{path}: unexpected column {n!r}; the header must be "
                             "element,type,region,n1,...,nK")
    for need in ("element", "type"):
        if need not in low:
            raise ValueError(f"{path}: missing column {need!r}; the header must be element,type,region,n1,...,nK")
    if not numbers:
        raise ValueError(f"{path}: missing node columns n1,...,nK")
    if sorted(numbers) != list(range(1, len(numbers) + 1)):
        raise ValueError(f"{path}: node columns must be n1..n{len(numbers)} without gaps, got "
                         f"{', '.join('n' + str(k) for k in sorted(numbers))}")
    return kinds


def _gauss_schema(path, names):
    low = [n.lower() for n in names]
    for need in ("element", "point"):
        if need not in low:
            raise ValueError(f"{path}: missing column {need!r}; the header must be "
                             "element,point[,x,y[,z]],<components>")
    comps = [n for n, l in zip(names, low) if l not in _RESERVED]
    if not comps:
        raise ValueError(f"{path}: no component columns (e.g. sxx,syy,sxy) after element,point[,x,y[,z]]")
    return ["i" if l in ("element", "point") else "f" for l in low]


# ===========================================================================
# about.json
# ===========================================================================
def _check_about(about: dict, where: str) -> dict:
    if not isinstance(about, dict):
        raise ValueError(f"{where}: must be a JSON object {{...}}, got {type(about).__name__}")
    for k in about:
        if k not in _ABOUT_KEYS:
            raise ValueError(f"{where}: unknown key {k!r}; known keys: {', '.join(_ABOUT_KEYS)}")
    if "format" in about and about["format"] != FORMAT:
        raise ValueError(f"{where}: format {about['format']!r} is not {FORMAT!r}")
    pts = about.get("points", "full")
    specs = pts.values() if isinstance(pts, dict) else [pts]
    if isinstance(pts, dict):
        for t in pts:
            try:
                get_element(t)
            except ValueError as e:
                raise ValueError(f"{where}: 'points': {e}") from None
    for s in specs:
        ok = s in ("full", "reduced") or (isinstance(s, int) and not isinstance(s, bool) and s > 0)
        if not ok:
            raise ValueError(f"{where}: 'points' must be 'full', 'reduced', a point count, or an object "
                             f"{{element type: one of those}}; got {s!r}")
    units = about.get("units", {})
    if not (isinstance(units, str) or (isinstance(units, dict) and all(
            isinstance(k, str) and isinstance(v, str) for k, v in units.items()))):
        raise ValueError(f"{where}: 'units' must be a string or an object of strings, e.g. "
                         '{"length": "mm", "stress": "MPa"}')
    for k in ("description", "name"):
        if k in about and not isinstance(about[k], str):
            raise ValueError(f"{where}: {k!r} must be a string")
    return about


def read_about(path) -> dict:
    """The ``about.json`` of a result folder (``{}`` if there is none), or the
    about record stored in an ``.npz`` file, checked: only the keys
    ``format``, ``points``, ``units``, ``description`` and ``name``."""
    path = Path(path)
    if path.suffix.lower() == ".npz":
        with _open_npz(path) as z:
            return _npz_about(z, path)
    f = path / ABOUT_FILE
    if not f.is_file():
        return {}
    try:
        about = json.loads(_read_text(f))
    except json.JSONDecodeError as e:
        raise ValueError(f"{f}: not valid JSON (line {e.lineno}, column {e.colno}: {e.msg})") from None
    return _check_about(about, str(f))


def _declared_points(about, et):
    pts = about.get("points", "full")
    if isinstance(pts, dict):
        return pts.get(et.name, "full"), et.name in pts
    return pts, "points" in about


# ===========================================================================
# Reading the neutral folder
# ===========================================================================
def _results_path(path) -> Path:
    path = Path(path)
    if path.suffix.lower() == ".npz":
        if not path.is_file():
            raise ValueError(f"{path}: no such .npz file")
    elif not path.is_dir():
        if path.exists():
            raise ValueError(f"{path}: not a result folder or an .npz file")
        raise ValueError(f"{path}: no such result folder")
    return path


def read_mesh(path) -> Mesh:
    """The mesh of a result folder (``nodes.csv`` and ``elements.csv``) or of
    an ``.npz`` results file."""
    path = _results_path(path)
    if path.suffix.lower() == ".npz":
        return _read_npz(path)[0]
    return _read_mesh_folder(path)[0]


def read_results(path, point_tol: float = POINT_TOL):
    """Read a neutral result folder or an ``.npz`` results file.

    Parameters
    ----------
    path : folder with ``nodes.csv``, ``elements.csv``, ``gauss.csv`` (and
        optionally ``about.json``), or a ``.npz`` file from :func:`write_results`.
    point_tol : tolerance in natural coordinates for matching imported
        integration points (given by coordinates) to a reference point set,
        and for accepting them as inside their element.

    Returns
    -------
    mesh : Mesh
    field : GaussField

    When ``gauss.csv`` gives coordinates, each point is mapped to natural
    coordinates (inverse isoparametric map) and matched by position: to a
    Gauss rule of the element type if the points form one (the field then
    uses that rule exactly), otherwise to the point set of the first element
    of the type.  Values are reordered by that match, never by row order.
    """
    if not (0 < point_tol < 0.5):
        raise ValueError(f"point_tol must lie in (0, 0.5), got {point_tol}")
    path = _results_path(path)
    if path.suffix.lower() == ".npz":
        return _read_npz(path)
    mesh, info = _read_mesh_folder(path)
    about = read_about(path)
    field = _read_gauss(path / GAUSS_FILE, mesh, info, about, point_tol, path / ABOUT_FILE)
    return mesh, field


def _read_mesh_folder(path: Path):
    nfile, efile = path / NODES_FILE, path / ELEMENTS_FILE
    nt = _read_csv(nfile, _nodes_schema)
    dim = 3 if "z" in nt else 2
    node_ids = nt.col("node")
    xyz = np.stack([nt.col(c) for c in ("x", "y", "z")[:dim]], axis=1)
    dup = _first_duplicate(node_ids)
    if dup:
        raise ValueError(f"{nt.where(dup[1])}: duplicate node id {int(node_ids[dup[1]])} "
                         f"(also on row {dup[0] + 1})")
    bad = _first_true(~np.isfinite(xyz).all(axis=1))
    if bad is not None:
        a = int(np.flatnonzero(~np.isfinite(xyz[bad]))[0])
        raise ValueError(f"{nt.where(bad)}: coordinate {'xyz'[a]} of node {int(node_ids[bad])} is {xyz[bad, a]}")

    et_ = _read_csv(efile, _elements_schema)
    eids = et_.col("element")
    dup = _first_duplicate(eids)
    if dup:
        raise ValueError(f"{et_.where(dup[1])}: duplicate element id {int(eids[dup[1]])} "
                         f"(also on row {dup[0] + 1})")
    regions = et_.col("region") if "region" in et_ else np.zeros(et_.nrows, dtype=np.int64)
    K = sum(1 for n in et_.names if _node_column_number(n) is not None)
    nodecols = np.stack([et_.col(f"n{j}") for j in range(1, K + 1)], axis=1)   # (m, K)
    given = nodecols != _EMPTY
    tokens, first, inv = np.unique(et_.col("type"), return_index=True, return_inverse=True)
    types = []
    for tok, r in zip(tokens, first):
        if not str(tok).strip():
            raise ValueError(f"{et_.where(r)}, column 'type': empty cell, expected an element type")
        try:
            types.append(get_element(str(tok).strip()))
        except ValueError:
            raise ValueError(f"{et_.where(r)}: unknown element type {str(tok).strip()!r}; known: "
                             f"{', '.join(sorted(_known_types()))}") from None
    sorted_ids = np.sort(node_ids)
    id_order = np.argsort(node_ids, kind="stable")
    by_type: dict[str, list] = {}
    for g in np.argsort(first):           # types in order of first appearance
        et = types[g]
        rows = np.flatnonzero(inv == g)
        k = et.nnodes
        if et.dim != dim:
            r = int(rows[0])
            raise ValueError(f"{et_.where(r)}: element {int(eids[r])} is a {et.name} ({et.dim}D) but "
                             f"{nfile} gives {dim}D coordinates ({', '.join(nt.names)})")
        if K < k:
            r = int(rows[0])
            raise ValueError(f"{et_.where(r)}: a {et.name} needs {k} node columns, the header has n1..n{K}")
        gv = given[rows]
        badrow = _first_true(~gv[:, :k].all(axis=1) | gv[:, k:].any(axis=1))
        if badrow is not None:
            r = int(rows[badrow])
            cnt = int(gv[badrow].sum())
            raise ValueError(f"{et_.where(r)}: element {int(eids[r])} is a {et.name} with {k} nodes, but the row "
                             f"gives {cnt} node ids" + ("" if cnt != k else " (not in n1..n%d)" % k))
        ids = nodecols[rows, :k]
        pos = np.searchsorted(sorted_ids, ids)
        pos = np.minimum(pos, len(sorted_ids) - 1)
        missing = sorted_ids[pos] != ids
        if missing.any():
            i, j = (int(a[0]) for a in np.nonzero(missing))
            r = int(rows[i])
            raise ValueError(f"{et_.where(r)}: node id {int(ids[i, j])} (column n{j + 1}) of element "
                             f"{int(eids[r])} is not in {nfile}")
        srt = np.sort(ids, axis=1)
        rep = _first_true((srt[:, 1:] == srt[:, :-1]).any(axis=1))
        if rep is not None:
            r = int(rows[rep])
            twice = int(srt[rep, 1:][srt[rep, 1:] == srt[rep, :-1]][0])
            raise ValueError(f"{et_.where(r)}: element {int(eids[r])} lists node {twice} twice")
        same = by_type.setdefault(et.name, [et, []])
        same[1].append((rows, id_order[pos]))
    blocks, regs, cids, erows = {}, {}, {}, {}
    for name, (et, parts) in by_type.items():
        rows = np.concatenate([p[0] for p in parts])
        cells = np.concatenate([p[1] for p in parts])
        o = np.argsort(rows, kind="stable")           # keep file order within a block
        rows, cells = rows[o], cells[o]
        blocks[name], regs[name], cids[name], erows[name] = cells, regions[rows], eids[rows], rows
    try:
        mesh = Mesh(xyz, blocks, regions=regs, node_ids=node_ids, cell_ids=cids)
    except ValueError as e:
        raise ValueError(f"{efile}: {e}") from None
    return mesh, {"elements": et_, "element_rows": erows}


def _known_types():
    from toolkit.core.elements import ELEMENTS
    return ELEMENTS.keys()


def _rule_spec(et, rule):
    """``"full"``/``"reduced"`` when ``rule`` is that rule of ``et``, else the rule."""
    for which in ("full", "reduced"):
        r = et.rule(which)
        if r.npoints == rule.npoints and np.allclose(r.points, rule.points, rtol=0, atol=1e-13):
            return which
    return rule


def _candidate_rule(et, q):
    """The stored Gauss rule of ``et``'s shape with ``q`` points, or None."""
    try:
        return et.rule(int(q))
    except ValueError:
        return None


def _read_gauss(gfile: Path, mesh: Mesh, info, about, tol, afile):
    gt = _read_csv(gfile, _gauss_schema)
    dim = mesh.dim
    coord_names = [c for c in ("x", "y", "z") if c in gt]
    if coord_names and coord_names != ["x", "y", "z"][:dim]:
        raise ValueError(f"{gfile}: coordinate columns {','.join(coord_names)} do not fit a {dim}D model; "
                         f"give {','.join('xyz'[:dim])} or no coordinates")
    comps = [n for n in gt.names if n.lower() not in _RESERVED]
    elem = gt.col("element")
    point = gt.col("point")
    vals = np.stack([gt.col(c) for c in comps], axis=1)
    bad = _first_true(~np.isfinite(vals).all(axis=1))
    if bad is not None:
        a = int(np.flatnonzero(~np.isfinite(vals[bad]))[0])
        raise ValueError(f"{gt.where(bad)}: {comps[a]} is {vals[bad, a]} at point {int(point[bad])} of "
                         f"element {int(elem[bad])}")
    X = None
    if coord_names:
        X = np.stack([gt.col(c) for c in coord_names], axis=1)
        bad = _first_true(~np.isfinite(X).all(axis=1))
        if bad is not None:
            raise ValueError(f"{gt.where(bad)}: coordinates {X[bad].tolist()} of point {int(point[bad])} of "
                             f"element {int(elem[bad])} are not finite")
    bad = _first_true(point < 1)
    if bad is not None:
        raise ValueError(f"{gt.where(bad)}: point number {int(point[bad])} of element {int(elem[bad])}; "
                         "point numbers start at 1")
    # element ids -> (block, cell)
    blocks = mesh.blocks
    all_ids = np.concatenate([b.ids for b in blocks])
    all_blk = np.concatenate([np.full(len(b), i) for i, b in enumerate(blocks)])
    all_cell = np.concatenate([np.arange(len(b)) for b in blocks])
    o = np.argsort(all_ids)
    sids = all_ids[o]
    pos = np.minimum(np.searchsorted(sids, elem), len(sids) - 1)
    bad = _first_true(sids[pos] != elem)
    if bad is not None:
        raise ValueError(f"{gt.where(bad)}: element {int(elem[bad])} is not in {info['elements'].path}")
    row_blk = all_blk[o][pos]
    row_cell = all_cell[o][pos]
    values, points = {}, {}
    for bi, b in enumerate(blocks):
        et = b.element
        rows = np.flatnonzero(row_blk == bi)
        cell = row_cell[rows]
        pt = point[rows]
        C = len(b)
        counts = np.bincount(cell, minlength=C)
        empty = _first_true(counts == 0)
        if empty is not None:
            r = int(info["element_rows"][b.name][empty])
            raise ValueError(f"{gfile}: element {int(b.ids[empty])} ({info['elements'].path}, row {r + 1}) "
                             f"has no rows in {gfile.name}")
        declared, said = _declared_points(about, et)
        try:
            declared_rule = et.rule(declared)
        except ValueError as e:
            raise ValueError(f"{afile}: {e}") from None
        if X is None:
            rule = declared_rule
            q = rule.npoints
            bad = _first_true(pt > q)
            if bad is not None:
                r = int(rows[bad])
                raise ValueError(f"{gt.where(r)}: point {int(pt[bad])} of element {int(elem[r])}, but a {et.name} "
                                 f"at the {declared} rule ({rule.name}) has points 1..{q}"
                                 + ("" if said else f"; if the values sit at another rule, say so in {ABOUT_FILE} "
                                    "or give coordinates"))
        order = np.lexsort((pt, cell))
        cs, ps = cell[order], pt[order]
        d = np.flatnonzero((cs[1:] == cs[:-1]) & (ps[1:] == ps[:-1]))
        if d.size:
            later = rows[order[d + 1]]
            k = int(np.argmin(later))
            r1, r0 = int(later[k]), int(rows[order[d[k]]])
            raise ValueError(f"{gt.where(r1)}: point {int(point[r1])} of element {int(elem[r1])} is given twice "
                             f"(also on row {r0 + 1})")
        if X is None:
            badc = _first_true(counts != q)
            if badc is not None:
                have = set(pt[cell == badc].tolist())
                miss = [p for p in range(1, q + 1) if p not in have]
                r = int(info["element_rows"][b.name][badc])
                raise ValueError(f"{gfile}: element {int(b.ids[badc])} ({info['elements'].path}, row {r + 1}) has "
                                 f"{counts[badc]} of its {q} points ({rule.name}); missing point(s) "
                                 f"{', '.join(map(str, miss[:10]))}")
            srt = rows[order]
            values[b.name] = vals[srt].reshape(C, q, len(comps))
            points[b.name] = _rule_spec(et, rule)
            continue
        q = int(counts[0])
        if q > MAX_POINTS:
            raise ValueError(f"{gfile}: element {int(b.ids[0])} has {q} rows; more than {MAX_POINTS} integration "
                             "points per element are not supported")
        badc = _first_true(counts != q)
        if badc is not None:
            raise ValueError(f"{gfile}: element {int(b.ids[badc])} has {counts[badc]} points, but element "
                             f"{int(b.ids[0])} (the first {et.name}) has {q}: every element of a type must carry "
                             "the same set of points")
        bad = _first_true(pt > q)
        if bad is not None:
            r = int(rows[bad])
            raise ValueError(f"{gt.where(r)}: point {int(pt[bad])} of element {int(elem[r])}; the {q} points of "
                             f"each {et.name} are numbered 1..{q}")
        srt = rows[order].reshape(C, q)
        spec, assign = _match_points(gt, mesh, b, X[srt], srt, tol)
        v = vals[srt]
        out = np.empty_like(v)
        np.put_along_axis(out, assign[:, :, None], v, axis=1)
        values[b.name] = out
        points[b.name] = spec
        if said:
            want = declared_rule
            got = spec if isinstance(spec, QuadratureRule) else (et.rule(spec) if isinstance(spec, str) else None)
            if got is None or got.npoints != want.npoints or not np.allclose(got.points, want.points, atol=1e-12):
                label = got.name if got is not None else f"{q} points that form no stored rule"
                raise ValueError(f"{afile}: says the {et.name} values sit at the {declared!r} rule ({want.name}), "
                                 f"but the coordinates in {gfile.name} put them at {label}")
    try:
        return GaussField(mesh, values, comps, points=points, name=about.get("name", "field"))
    except ValueError as e:
        raise ValueError(f"{gfile}: {e}") from None


# ---------------------------------------------------------------------------
# Matching points by position
# ---------------------------------------------------------------------------
def _assign(match_fn, C, q, tol):
    """Nearest reference point for every given point, cell by cell.

    ``match_fn(s, e) -> (nearest (c, q), distance (c, q))`` gives, for the
    given points of cells ``s:e``, the index of the nearest reference point
    and the distance to it in natural coordinates.  Returns ``assign (C, q)``,
    ``nomatch (C, q)`` (nearest farther than ``tol``) and ``notperm (C,)``
    (two points matched the same one).
    """
    assign = np.empty((C, q), dtype=np.intp)
    nomatch = np.zeros((C, q), dtype=bool)
    for sl in chunk_slices(C, q * q, budget=2_000_000):
        s, e = sl.start, sl.stop
        a, dist = match_fn(s, e)
        assign[s:e] = a
        nomatch[s:e] = dist > tol
    notperm = ~(np.sort(assign, axis=1) == np.arange(q)).all(axis=1)
    return assign, nomatch, notperm


def _match_points(gt, mesh, b, X, rows, tol):
    """Natural point set of block ``b`` and, per cell, which reference point
    each given point is.  ``X`` (C, q, dim) physical coordinates sorted by
    (cell, point number); ``rows`` (C, q) their data rows."""
    et = b.element
    C, q, dim = X.shape
    rule = _candidate_rule(et, q)
    Jinv = None
    if rule is not None:
        # Fast path: one Newton step from each rule point,
        # d_xi = J^-1 (x - x_p), tells how far (in natural coordinates) a given
        # point is from the rule point p that is nearest in space.
        g = mesh.geometry(b.name, rule)
        try:
            with np.errstate(all="ignore"):
                Jinv = np.linalg.inv(g.J_cqij)
        except np.linalg.LinAlgError:      # a collapsed cell: leave it to the general path
            Jinv = None
    if Jinv is not None:

        def fast(s, e):
            XR = g.x_cqi[s:e]
            D2 = ((X[s:e, :, None, :] - XR[:, None, :, :]) ** 2).sum(-1)
            a = D2.argmin(-1)
            ci = np.arange(e - s)[:, None]
            dxi = np.einsum("cqij,cqj->cqi", Jinv[s:e][ci, a], X[s:e] - XR[ci, a])
            return a, np.sqrt((dxi ** 2).sum(-1))

        assign, nomatch, notperm = _assign(fast, C, q, tol)
        if not nomatch.any() and not notperm.any():
            return _rule_spec(et, rule), assign
    # General path: inverse map every point, then match to the first cell's set.
    xe = mesh.nodes[b.cells]
    xflat = X.reshape(-1, dim)
    try:
        xi, conv = inverse_map(et, np.repeat(xe, q, axis=0), xflat)
    except ValueError as e:
        raise ValueError(f"{gt.path}: could not map the {b.name} points to natural coordinates ({e})") from None
    inside = conv & et.contains(xi, tol=tol)
    if not inside.all():
        bad = np.flatnonzero(~inside)
        i = int(bad[np.argmin(rows.ravel()[bad])])
        r = int(rows.ravel()[i])
        c = i // q
        how = (f"natural coordinates ({', '.join(f'{v:.4g}' for v in xi[i])})" if conv[i]
               else "the inverse map found no natural coordinates")
        raise ValueError(f"{gt.where(r)}: point {int(gt.col('point')[r])} of element {int(b.ids[c])} at "
                         f"({', '.join(f'{v:.6g}' for v in xflat[i])}) lies outside the element ({how})")
    XI = xi.reshape(C, q, dim)
    ref = XI[0]                       # the first cell's points, by point number

    def natural(s, e):
        D2 = ((XI[s:e, :, None, :] - ref[None, None, :, :]) ** 2).sum(-1)
        a = D2.argmin(-1)
        return a, np.sqrt(np.take_along_axis(D2, a[..., None], -1)[..., 0])

    assign, nomatch, notperm = _assign(natural, C, q, 2 * tol)
    if nomatch.any() or notperm.any():
        bad_rows = np.where(nomatch, rows, np.iinfo(np.int64).max).min(axis=1)
        bad_rows = np.where(notperm, np.minimum(bad_rows, rows.min(axis=1)), bad_rows)
        c = int(np.argmin(bad_rows))
        if nomatch[c].any():
            j = int(np.flatnonzero(nomatch[c])[0])
            r = int(rows[c, j])
            raise ValueError(f"{gt.where(r)}: point {int(gt.col('point')[r])} of element {int(b.ids[c])} sits at "
                             f"natural coordinates ({', '.join(f'{v:.4g}' for v in XI[c, j])}), which is none of the "
                             f"points element {int(b.ids[0])} (the first {et.name}) carries; every element of a type "
                             "must carry the same set of points")
        r = int(rows[c, 0])
        raise ValueError(f"{gt.where(r)}: the points of element {int(b.ids[c])} do not match those of element "
                         f"{int(b.ids[0])} (the first {et.name}) one to one (two points at the same place?); every "
                         "element of a type must carry the same set of points")
    # reference set averaged over all cells (reduces rounding noise of imported coordinates)
    XS = np.empty_like(XI)
    np.put_along_axis(XS, assign[:, :, None], XI, axis=1)
    ref = XS.mean(axis=0)
    if rule is not None:
        D2 = ((ref[:, None, :] - rule.points[None, :, :]) ** 2).sum(-1)
        m = D2.argmin(1)
        if np.sqrt(D2.min(1)).max() <= tol and len(set(m.tolist())) == q:
            return _rule_spec(et, rule), m[assign]
    return ref, assign


# ===========================================================================
# .npz
# ===========================================================================
class _open_npz:
    def __init__(self, path):
        self.path = path

    def __enter__(self):
        try:
            self.z = np.load(self.path, allow_pickle=False)
            if not hasattr(self.z, "files"):
                raise ValueError("not an .npz archive")
        except Exception as e:
            raise ValueError(f"{self.path}: not a readable .npz results file ({e})") from None
        return self

    def __exit__(self, *exc):
        self.z.close()

    def get(self, key):
        if key not in self.z.files:
            raise ValueError(f"{self.path}: missing array {key!r}")
        try:
            return self.z[key]
        except Exception as e:
            raise ValueError(f"{self.path}: array {key!r} cannot be read ({e})") from None


def _npz_about(zz, path):
    raw = zz.get("about")
    try:
        about = json.loads(str(raw[()]))
    except (json.JSONDecodeError, TypeError, IndexError, ValueError) as e:
        raise ValueError(f"{path}: array 'about' is not a JSON text ({e})") from None
    return _check_about(about, f"{path} (about)")


def _read_npz(path: Path):
    with _open_npz(path) as zz:
        fmt = str(zz.get("format")[()]) if "format" in zz.z.files else None
        if fmt != FORMAT:
            raise ValueError(f"{path}: format {fmt!r} is not {FORMAT!r}")
        about = _npz_about(zz, path)
        names = [str(n) for n in zz.get("blocks").ravel()]
        comps = [str(c) for c in zz.get("components").ravel()]
        blocks, regs, ids, vals, pts = {}, {}, {}, {}, {}
        for n in names:
            blocks[n] = zz.get(f"{n}.cells")
            regs[n] = zz.get(f"{n}.regions")
            ids[n] = zz.get(f"{n}.ids")
            vals[n] = zz.get(f"{n}.values")
            pts[n] = zz.get(f"{n}.points")
        nodes, node_ids = zz.get("nodes"), zz.get("node_ids")
    try:
        mesh = Mesh(nodes, blocks, regions=regs, node_ids=node_ids, cell_ids=ids)
        spec = {}
        for b in mesh.blocks:
            p = np.asarray(pts[b.name], dtype=float)
            et = b.element
            rule = _candidate_rule(et, len(p)) if p.ndim == 2 and p.shape[1] == et.dim else None
            same = rule is not None and np.array_equal(rule.points, p)
            spec[b.name] = _rule_spec(et, rule) if same else p
        field = GaussField(mesh, vals, comps, points=spec, name=about.get("name", "field"))
    except ValueError as e:
        raise ValueError(f"{path}: {e}") from None
    return mesh, field


def _write_npz(path: Path, mesh, field, about):
    arrays = {
        "format": np.array(FORMAT),
        "about": np.array(json.dumps(about, sort_keys=True)),
        "nodes": mesh.nodes, "node_ids": mesh.node_ids,
        "blocks": np.array([b.name for b in mesh.blocks]),
        "components": np.array(field.components),
    }
    for b in mesh.blocks:
        arrays[f"{b.name}.cells"] = b.cells.astype(np.int64)
        arrays[f"{b.name}.regions"] = b.regions
        arrays[f"{b.name}.ids"] = b.ids
        arrays[f"{b.name}.values"] = field.values[b.name]
        arrays[f"{b.name}.points"] = field.points[b.name]

    def write(f):
        np.savez_compressed(f, **arrays)
    _atomic_write(path, write, binary=True)


# ===========================================================================
# Writing
# ===========================================================================
def _temp_beside(path: Path, suffix: str):
    """A temporary file in the folder of ``path`` with the permissions a
    normal new file gets (mkstemp alone makes it owner-only)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=suffix, dir=path.parent)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    return fd, tmp


def _atomic_write(path: Path, writer, binary=False):
    """Write through a temporary file in the same folder, then rename, so
    that a failure never leaves a half-written file."""
    path = Path(path)
    fd, tmp = _temp_beside(path, ".tmp")
    try:
        with os.fdopen(fd, "wb" if binary else "w", **({} if binary else {"encoding": "utf-8", "newline": "\n"})) as f:
            writer(f)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def _ints(a):
    return list(map(str, np.asarray(a).tolist()))


def _floats(a):
    # repr: the shortest string that reads back to the same double
    return list(map(repr, np.asarray(a, dtype=float).tolist()))


def _write_csv(path: Path, header, columns):
    def write(f):
        f.write(",".join(header) + "\n")
        if columns and len(columns[0]):
            f.write("\n".join(map(",".join, zip(*columns))))
            f.write("\n")
    _atomic_write(path, write)


def _check_component_names(components):
    for c in components:
        if (not c or c != c.strip() or any(ch in c for ch in ',"\n\r') or c.lower() in _RESERVED):
            raise ValueError(f"component name {c!r} cannot be written to a CSV header: names must be non-empty, "
                             f"without commas, quotes, line breaks or surrounding spaces, and not one of "
                             f"{', '.join(_RESERVED)}")


def _points_about(mesh, field):
    """``points`` entry of about.json for the field, or None when some block
    sits at points that form no stored rule."""
    specs = {}
    for b in mesh.blocks:
        et = b.element
        p = field.points[b.name]
        rule = _candidate_rule(et, len(p))
        if rule is None or not np.allclose(rule.points, p, rtol=0, atol=1e-13):
            return None
        s = _rule_spec(et, rule)
        specs[b.name] = s if isinstance(s, str) else rule.npoints
    uniq = set(specs.values())
    if len(uniq) == 1 and isinstance(next(iter(uniq)), str):
        return next(iter(uniq))
    return specs


def write_results(path, mesh: Mesh, field: GaussField, coordinates: bool = True, about: dict | None = None):
    """Write a result folder (``nodes.csv``, ``elements.csv``, ``gauss.csv``,
    ``about.json``) or, when ``path`` ends in ``.npz``, one compressed
    ``.npz`` file.

    Parameters
    ----------
    path : folder (created if needed; the four files are replaced) or ``*.npz``.
    mesh, field : the model; ``field.mesh`` must be ``mesh``.
    coordinates : write the physical coordinates of every integration point
        into ``gauss.csv`` (so a reader can match points by position).
        Without coordinates the points are numbered in the order of the rule
        named in ``about.json``; fields at points that form no stored rule
        need coordinates.
    about : optional ``units`` / ``description`` entries for ``about.json``.

    Floats are written with the shortest decimal string that reads back to
    the same double, so reading the folder back reproduces every number and id.
    """
    path = Path(path)
    if not isinstance(mesh, Mesh) or not isinstance(field, GaussField):
        raise ValueError("write_results needs a Mesh and a GaussField")
    if field.mesh is not mesh:
        raise ValueError("the field belongs to another mesh than the one given")
    meta = dict(about or {})
    for k in ("format", "points", "name"):
        if k in meta:
            raise ValueError(f"about: {k!r} is written from the model; give only 'units' and 'description'")
    _check_about(meta, "about")
    meta["format"] = FORMAT
    if field.name != "field":
        meta["name"] = field.name
    pts = _points_about(mesh, field)
    if pts is not None:
        meta["points"] = pts
    elif not coordinates:
        raise ValueError("the field sits at points that form no stored Gauss rule; write it with coordinates=True")
    if path.suffix.lower() == ".npz":
        _write_npz(path, mesh, field, meta)
        return path
    if path.exists() and not path.is_dir():
        raise ValueError(f"{path}: exists and is not a folder")
    _check_component_names(field.components)
    dim = mesh.dim
    _write_csv(path / NODES_FILE, ["node"] + list("xyz"[:dim]),
               [_ints(mesh.node_ids)] + [_floats(mesh.nodes[:, i]) for i in range(dim)])
    K = max(b.element.nnodes for b in mesh.blocks)
    cols = [[] for _ in range(3 + K)]
    for b in mesh.blocks:
        m, k = b.cells.shape
        cols[0] += _ints(b.ids)
        cols[1] += [b.name] * m
        cols[2] += _ints(b.regions)
        nid = mesh.node_ids[b.cells]
        for j in range(K):
            cols[3 + j] += _ints(nid[:, j]) if j < k else [""] * m
    _write_csv(path / ELEMENTS_FILE, ["element", "type", "region"] + [f"n{j}" for j in range(1, K + 1)], cols)
    header = ["element", "point"] + (list("xyz"[:dim]) if coordinates else []) + list(field.components)
    cols = [[] for _ in header]
    xq = field.physical_points() if coordinates else None
    for b in mesh.blocks:
        v = field.values[b.name]
        C, q, a = v.shape
        cols[0] += _ints(np.repeat(b.ids, q))
        cols[1] += _ints(np.tile(np.arange(1, q + 1), C))
        off = 2
        if coordinates:
            x = xq[b.name].reshape(C * q, dim)
            for i in range(dim):
                cols[off + i] += _floats(x[:, i])
            off += dim
        vv = v.reshape(C * q, a)
        for j in range(a):
            cols[off + j] += _floats(vv[:, j])
    _write_csv(path / GAUSS_FILE, header, cols)
    _atomic_write(path / ABOUT_FILE, lambda f: f.write(json.dumps(meta, indent=2, sort_keys=True) + "\n"))
    return path


def write_nodal_csv(path, nodal: NodalField):
    """Write a nodal field as CSV: ``node,region,<components>``, one row per
    (node, region) value; ``node`` is the node id of the mesh, ``region`` the
    region id (``-1``: smoothed across regions).  Lossless float format."""
    if not isinstance(nodal, NodalField):
        raise ValueError("write_nodal_csv needs a NodalField")
    _check_component_names(nodal.components)
    cols = [_ints(nodal.mesh.node_ids[nodal.node]), _ints(nodal.region)]
    cols += [_floats(nodal.values[:, j]) for j in range(len(nodal.components))]
    _write_csv(Path(path), ["node", "region"] + list(nodal.components), cols)
    return Path(path)


# ===========================================================================
# VTU
# ===========================================================================
def write_vtu(path, mesh: Mesh, nodal: NodalField | None = None, field: GaussField | None = None):
    """Write the mesh, a nodal field (point data) and raw integration-point
    values (cell data) as a VTK XML unstructured grid (``.vtu``) with meshio.

    Point data: one array per nodal component, plus ``node_id``.  Where the
    nodal field carries one value per region at some nodes (not smoothed
    across region boundaries, ``nodal.split_nodes``), every (node, region) row
    becomes its own point, and each cell uses the copies of its own region,
    so no value is lost (the grid then shows the jumps between regions);
    ``region`` is added as point data, and nodes in no cell are appended with
    NaN values.

    Cell data: ``element_id``, ``region``, and for every component of
    ``field`` the cell mean of its integration-point values
    (``<comp>_mean``, a plain average over the points) and the raw values
    ``<comp>_gp1``, ``<comp>_gp2``, ... in the field's point order (NaN in
    blocks with fewer points).

    Cells use the VTK node order, which is ours for every type (see
    :data:`VTK_CELL_TYPES`).
    """
    import meshio

    if not isinstance(mesh, Mesh):
        raise ValueError("write_vtu needs a Mesh")
    for f, kind in ((nodal, NodalField), (field, GaussField)):
        if f is not None:
            if not isinstance(f, kind):
                raise ValueError(f"write_vtu: expected a {kind.__name__}, got {type(f).__name__}")
            if f.mesh is not mesh:
                raise ValueError(f"write_vtu: the {kind.__name__} belongs to another mesh")
    n = mesh.nnodes
    cells = {b.name: b.cells for b in mesh.blocks}
    point_ids = mesh.node_ids
    pts = mesh.nodes
    point_data = {}
    if nodal is not None and nodal.split_nodes.size:
        R = mesh.regions
        key = nodal.node * len(R) + np.searchsorted(R, nodal.region)
        if (nodal.region < 0).any():
            raise ValueError("write_vtu: the nodal field mixes smoothed (region -1) and per-region rows")
        o = np.argsort(key)
        skey = key[o]
        cells = {}
        for b in mesh.blocks:
            k = b.cells.astype(np.int64) * len(R) + np.searchsorted(R, b.regions)[:, None]
            p = np.minimum(np.searchsorted(skey, k), len(skey) - 1)
            if (skey[p] != k).any():
                c = int(np.flatnonzero((skey[p] != k).any(axis=1))[0])
                raise ValueError(f"write_vtu: the nodal field has no value for a node of {b.label(c)} in its region")
            cells[b.name] = o[p]
        unused = np.flatnonzero(np.bincount(nodal.node, minlength=n) == 0)
        pts = np.concatenate([mesh.nodes[nodal.node], mesh.nodes[unused]])
        point_ids = np.concatenate([mesh.node_ids[nodal.node], mesh.node_ids[unused]])
        vals = np.concatenate([nodal.values, np.full((len(unused), len(nodal.components)), np.nan)])
        point_data["region"] = np.concatenate([nodal.region, np.full(len(unused), -1)])
        for j, c in enumerate(nodal.components):
            point_data[c] = vals[:, j]
    elif nodal is not None:
        arr = nodal.to_array()
        for j, c in enumerate(nodal.components):
            point_data[c] = arr[:, j]
    point_data["node_id"] = point_ids
    if pts.shape[1] == 2:
        pts = np.c_[pts, np.zeros(len(pts))]
    cell_data = {"element_id": [b.ids for b in mesh.blocks], "region": [b.regions for b in mesh.blocks]}
    if field is not None:
        qmax = max(v.shape[1] for v in field.values.values())
        for j, c in enumerate(field.components):
            cell_data[f"{c}_mean"] = [field.values[b.name][:, :, j].mean(axis=1) for b in mesh.blocks]
            for p in range(qmax):
                cell_data[f"{c}_gp{p + 1}"] = [
                    field.values[b.name][:, p, j] if p < field.values[b.name].shape[1]
                    else np.full(len(b), np.nan) for b in mesh.blocks]
    m = meshio.Mesh(pts, [(VTK_CELL_TYPES[b.name], cells[b.name]) for b in mesh.blocks],
                    point_data=point_data, cell_data=cell_data)
    path = Path(path)
    fd, tmp = _temp_beside(path, ".vtu")
    os.close(fd)
    try:
        meshio.write(tmp, m, file_format="vtu")
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path
