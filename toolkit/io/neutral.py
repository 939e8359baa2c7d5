"""The neutral result folder: its file names and the schema of each CSV
file, reading a folder (or an ``.npz`` file, see :mod:`toolkit.io.npz`) into
a mesh and an integration-point field, and writing one.

The folder holds three CSV files and an optional JSON file::

    nodes.csv      node,x,y[,z]
    elements.csv   element,type,region,n1,...,nK
    gauss.csv      [case,]element,point[,x,y[,z]],<components...>
    about.json     {"points": ..., "units": ..., "description": ..., "name": ..., "cases": [...]}

(the full description is in the README).  Ids are arbitrary integers, never
positions.  Node order within an element is the one of
:mod:`toolkit.core.elements` (the VTK order).  When ``gauss.csv`` carries
coordinates, every point is matched to a reference point set *by its
position* (:mod:`toolkit.io.points`), so the order of the rows and of the
point numbers does not matter.  Every problem with the input raises a
:class:`ValueError` naming the file, the 1-based data row or the element
id, and what is wrong; floats are written losslessly
(:mod:`toolkit.io.table`).

Several load cases (unit loads or time steps) share the folder: ``gauss.csv``
then starts with a ``case`` column naming each row's case, and
``about.json`` may list the names in order (``"cases"``).  Each case is
checked on its own (every element, every point) and all must sit at the same
points.  :func:`read_results` returns one field, as for a folder without the
column; :func:`read_cases` returns the cases as :class:`LoadCases`.
"""
from __future__ import annotations

import json
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from toolkit.errors import InputError
from toolkit.core.cases import LoadCases
from toolkit.core.elements import ELEMENTS, QuadratureRule, get_element
from toolkit.core.fields import GaussField
from toolkit.core.mesh import Mesh
from toolkit.io.about import FORMAT, check_about, declared_points
from toolkit.io.files import atomic_write, read_text
from toolkit.io.npz import read_npz, read_npz_about, write_npz
from toolkit.io.points import POINT_TOL, candidate_rule, match_points, rule_spec
from toolkit.io.table import EMPTY, Table, first_duplicate, first_true, float_cells, int_cells, read_csv, write_csv

__all__ = ["NODES_FILE", "ELEMENTS_FILE", "GAUSS_FILE", "ABOUT_FILE", "RESERVED", "MAX_POINTS",
           "read_results", "read_cases", "write_results", "read_mesh", "read_about", "check_component_names",
           "check_case_names", "result_files"]

#: Most integration points one element may carry in an imported file.
MAX_POINTS = 512

NODES_FILE = "nodes.csv"
ELEMENTS_FILE = "elements.csv"
GAUSS_FILE = "gauss.csv"
ABOUT_FILE = "about.json"

#: Fixed column names of ``gauss.csv``; no component may take one of them.
RESERVED = ("case", "element", "point", "x", "y", "z")


# ===========================================================================
# Schemas
# ===========================================================================
def _nodes_schema(path, names):
    low = [n.lower() for n in names]
    for n, l in zip(names, low):
        if l not in ("node", "x", "y", "z"):
            raise InputError(f"{path}: unexpected column {n!r}; the header must be node,x,y or node,x,y,z")
    for need in ("node", "x", "y"):
        if need not in low:
            raise InputError(f"{path}: missing column {need!r}; the header must be node,x,y or node,x,y,z")
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
            raise InputError(f"{path}: unexpected column {n!r}; the header must be "
                             "element,type,region,n1,...,nK")
    for need in ("element", "type"):
        if need not in low:
            raise InputError(f"{path}: missing column {need!r}; the header must be element,type,region,n1,...,nK")
    if not numbers:
        raise InputError(f"{path}: missing node columns n1,...,nK")
    if sorted(numbers) != list(range(1, len(numbers) + 1)):
        raise InputError(f"{path}: node columns must be n1..n{len(numbers)} without gaps, got "
                         f"{', '.join('n' + str(k) for k in sorted(numbers))}")
    return kinds


def _gauss_schema(path, names):
    low = [n.lower() for n in names]
    for need in ("element", "point"):
        if need not in low:
            raise InputError(f"{path}: missing column {need!r}; the header must be "
                             "[case,]element,point[,x,y[,z]],<components>")
    comps = [n for n, l in zip(names, low) if l not in RESERVED]
    if not comps:
        raise InputError(f"{path}: no component columns (e.g. sxx,syy,sxy) after element,point[,x,y[,z]]")
    return ["i" if l in ("element", "point") else "c" if l == "case" else "f" for l in low]



# ===========================================================================
# about.json
# ===========================================================================
def read_about(path) -> dict:
    """The ``about.json`` of a result folder (``{}`` if there is none), or the
    about record stored in an ``.npz`` file, checked: only the keys
    ``format``, ``points``, ``units``, ``description``, ``name`` and ``cases``."""
    path = Path(path)
    if path.suffix.lower() == ".npz":
        return read_npz_about(path)
    f = path / ABOUT_FILE
    if not f.is_file():
        return {}
    try:
        about = json.loads(read_text(f))
    except json.JSONDecodeError as e:
        raise InputError(f"{f}: not valid JSON (line {e.lineno}, column {e.colno}: {e.msg})") from None
    return check_about(about, str(f))


# ===========================================================================
# Reading
# ===========================================================================
def _results_path(path) -> Path:
    path = Path(path)
    if path.suffix.lower() == ".npz":
        if not path.is_file():
            raise InputError(f"{path}: no such .npz file")
    elif not path.is_dir():
        if path.exists():
            raise InputError(f"{path}: not a result folder or an .npz file")
        raise InputError(f"{path}: no such result folder")
    return path


def read_mesh(path) -> Mesh:
    """The mesh of a result folder (``nodes.csv`` and ``elements.csv``) or of
    an ``.npz`` results file."""
    path = _results_path(path)
    if path.suffix.lower() == ".npz":
        return read_npz(path)[0]
    return _read_mesh_folder(path)[0]


def result_files(path):
    """The paths :func:`read_results` reads for ``path``: the ``.npz`` file,
    or the folder and its four files (so a writer can refuse to overwrite
    any of them)."""
    path = Path(path)
    if path.suffix.lower() == ".npz":
        return [path]
    return [path] + [path / f for f in (NODES_FILE, ELEMENTS_FILE, GAUSS_FILE, ABOUT_FILE)]


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

    A folder (or file) with several load cases is refused with a message
    pointing to :func:`read_cases`; one with a ``case`` column naming a
    single case gives that case's field (named after it).

    When ``gauss.csv`` gives coordinates, each point is mapped to natural
    coordinates (inverse isoparametric map) and matched by position: to a
    Gauss rule of the element type if the points form one (the field then
    uses that rule exactly), otherwise to the point set of the first element
    of the type.  Values are reordered by that match, never by row order.
    """
    mesh, cases = _read_any(path, point_tol)
    if not isinstance(cases, LoadCases):
        return mesh, cases
    if len(cases) > 1:
        raise InputError(f"{path}: holds {len(cases)} load cases ({', '.join(map(repr, cases.names))}); "
                         "read it with read_cases, which returns them all")
    return mesh, cases[cases.names[0]]


def read_cases(path, point_tol: float = POINT_TOL):
    """Read a neutral result folder or ``.npz`` file with one or more load cases.

    Returns ``(mesh, LoadCases)``: the cases in the order ``about.json``
    lists them (``"cases"``), else in the order of their first row in
    ``gauss.csv``.  A folder without a ``case`` column holds one case, named
    after the field (``about.json`` ``"name"``, default ``"field"``).  See
    :func:`read_results` for ``point_tol`` and the point matching, which is
    done for every case on its own.
    """
    mesh, cases = _read_any(path, point_tol)
    if not isinstance(cases, LoadCases):
        cases = LoadCases({cases.name: cases}, name=cases.name)
    return mesh, cases


def _read_any(path, point_tol):
    """``(mesh, GaussField)`` of a single-case source, ``(mesh, LoadCases)``
    of one with a case column (or ``cases`` array)."""
    if not (0 < point_tol < 0.5):
        raise InputError(f"point_tol must lie in (0, 0.5), got {point_tol}")
    path = _results_path(path)
    if path.suffix.lower() == ".npz":
        return read_npz(path)
    mesh, info = _read_mesh_folder(path)
    about = read_about(path)
    return mesh, _read_gauss(path / GAUSS_FILE, mesh, info, about, point_tol, path / ABOUT_FILE)


# ---------------------------------------------------------------------------
# nodes.csv and elements.csv
# ---------------------------------------------------------------------------
def _read_mesh_folder(path: Path):
    """The mesh of the folder and, for messages about ``gauss.csv``, the
    elements table and each block's data rows in it."""
    nt, node_ids, xyz = _read_nodes(path / NODES_FILE)
    efile = path / ELEMENTS_FILE
    et_ = read_csv(efile, _elements_schema)
    eids = et_.col("element")
    dup = first_duplicate(eids)
    if dup:
        raise InputError(f"{et_.where(dup[1])}: duplicate element id {int(eids[dup[1]])} "
                         f"(also on row {dup[0] + 1})")
    regions = et_.col("region") if "region" in et_ else np.zeros(et_.nrows, dtype=np.int64)
    K = sum(1 for n in et_.names if _node_column_number(n) is not None)
    nodecols = np.stack([et_.col(f"n{j}") for j in range(1, K + 1)], axis=1)   # (m, K)
    types, first, inv = _element_types(et_)
    sorted_ids = np.sort(node_ids)
    id_order = np.argsort(node_ids, kind="stable")
    by_type: dict[str, list] = {}
    for g in np.argsort(first):           # types in order of first appearance
        et = types[g]
        rows = np.flatnonzero(inv == g)
        pos = _element_nodes(et_, et, rows, nodecols, sorted_ids, nt, xyz.shape[1])
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
        raise InputError(f"{efile}: {e}") from None
    return mesh, {"elements": et_, "element_rows": erows}


def _read_nodes(nfile: Path):
    """``nodes.csv``: the table, the node ids and the coordinates (n, dim),
    checked for repeated ids and coordinates that are not finite."""
    nt = read_csv(nfile, _nodes_schema)
    dim = 3 if "z" in nt else 2
    node_ids = nt.col("node")
    xyz = np.stack([nt.col(c) for c in ("x", "y", "z")[:dim]], axis=1)
    dup = first_duplicate(node_ids)
    if dup:
        raise InputError(f"{nt.where(dup[1])}: duplicate node id {int(node_ids[dup[1]])} "
                         f"(also on row {dup[0] + 1})")
    bad = first_true(~np.isfinite(xyz).all(axis=1))
    if bad is not None:
        a = int(np.flatnonzero(~np.isfinite(xyz[bad]))[0])
        raise InputError(f"{nt.where(bad)}: coordinate {'xyz'[a]} of node {int(node_ids[bad])} is {xyz[bad, a]}")
    return nt, node_ids, xyz


def _element_types(et_: Table):
    """The element types named in the ``type`` column: the types (one per
    distinct token), the first row of each and each row's token index."""
    tokens, first, inv = np.unique(et_.col("type"), return_index=True, return_inverse=True)
    types = []
    for tok, r in zip(tokens, first):
        if not str(tok).strip():
            raise InputError(f"{et_.where(r)}, column 'type': empty cell, expected an element type")
        try:
            types.append(get_element(str(tok).strip()))
        except ValueError:
            raise InputError(f"{et_.where(r)}: unknown element type {str(tok).strip()!r}; known: "
                             f"{', '.join(sorted(ELEMENTS.keys()))}") from None
    return types, first, inv


def _element_nodes(et_: Table, et, rows, nodecols, sorted_ids, nt: Table, dim: int):
    """Positions in ``sorted_ids`` of the nodes of the elements of type
    ``et`` on data ``rows``, once the rows are checked: the dimension, the
    node columns given, node ids known and none listed twice."""
    nfile = nt.path
    eids = et_.col("element")
    K = nodecols.shape[1]
    k = et.nnodes
    if et.dim != dim:
        r = int(rows[0])
        raise InputError(f"{et_.where(r)}: element {int(eids[r])} is a {et.name} ({et.dim}D) but "
                         f"{nfile} gives {dim}D coordinates ({', '.join(nt.names)})")
    if K < k:
        r = int(rows[0])
        raise InputError(f"{et_.where(r)}: a {et.name} needs {k} node columns, the header has n1..n{K}")
    gv = nodecols[rows] != EMPTY
    badrow = first_true(~gv[:, :k].all(axis=1) | gv[:, k:].any(axis=1))
    if badrow is not None:
        r = int(rows[badrow])
        cnt = int(gv[badrow].sum())
        raise InputError(f"{et_.where(r)}: element {int(eids[r])} is a {et.name} with {k} nodes, but the row "
                         f"gives {cnt} node ids" + ("" if cnt != k else " (not in n1..n%d)" % k))
    ids = nodecols[rows, :k]
    pos = np.searchsorted(sorted_ids, ids)
    pos = np.minimum(pos, len(sorted_ids) - 1)
    missing = sorted_ids[pos] != ids
    if missing.any():
        i, j = (int(a[0]) for a in np.nonzero(missing))
        r = int(rows[i])
        raise InputError(f"{et_.where(r)}: node id {int(ids[i, j])} (column n{j + 1}) of element "
                         f"{int(eids[r])} is not in {nfile}")
    srt = np.sort(ids, axis=1)
    rep = first_true((srt[:, 1:] == srt[:, :-1]).any(axis=1))
    if rep is not None:
        r = int(rows[rep])
        twice = int(srt[rep, 1:][srt[rep, 1:] == srt[rep, :-1]][0])
        raise InputError(f"{et_.where(r)}: element {int(eids[r])} lists node {twice} twice")
    return pos


# ---------------------------------------------------------------------------
# gauss.csv
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class _GaussRows:
    """The checked columns of ``gauss.csv``, one entry per data row: element
    ids, point numbers, values (rows, components) and, when the file gives
    them, coordinates (rows, dim)."""
    table: Table
    comps: list
    elem: np.ndarray
    point: np.ndarray
    vals: np.ndarray
    X: np.ndarray | None
    case: np.ndarray | None = None


def _read_gauss(gfile: Path, mesh: Mesh, info, about, tol, afile):
    """The field of ``gauss.csv`` (or its load cases, when it has a ``case``
    column): read and check the table, find the element of every row, then
    per case and block group the rows by element, find the block's point set
    and order the values by it, and build the field."""
    g = _read_gauss_table(gfile, mesh.dim)
    row_blk, row_cell = _element_of_rows(g, mesh, info)
    if g.case is None:
        if "cases" in about:
            raise InputError(f"{afile}: lists load cases {about['cases']}, but {gfile.name} has no 'case' column")
        return _case_field(g, mesh, info, about, tol, afile, row_blk, row_cell, None, about.get("name", "field"))
    names, index = _case_index(g, about, afile)
    by_case = np.argsort(index, kind="stable")              # each case's rows, in file order
    bounds = np.searchsorted(index[by_case], np.arange(len(names) + 1))
    fields = {}
    for k, name in enumerate(names):
        rows = by_case[bounds[k]:bounds[k + 1]]
        try:
            fields[name] = _case_field(g, mesh, info, about, tol, afile, row_blk, row_cell, rows, name)
        except InputError as e:
            raise InputError(f"{e} (load case {name!r})") from None
    try:
        return LoadCases(fields, name=about.get("name", "cases"))
    except ValueError as e:
        raise InputError(f"{gfile}: {e}") from None


def _case_field(g: _GaussRows, mesh, info, about, tol, afile, row_blk, row_cell, select, name):
    """The field of the data rows ``select`` (increasing row numbers; all rows
    when None) of ``gauss.csv``."""
    values, points = {}, {}
    for bi, b in enumerate(mesh.blocks):
        rows = np.flatnonzero(row_blk == bi) if select is None else select[row_blk[select] == bi]
        values[b.name], points[b.name] = _block_values(g, mesh, b, rows, row_cell[rows], info, about, tol, afile)
    try:
        return GaussField(mesh, values, g.comps, points=points, name=name)
    except ValueError as e:
        raise InputError(f"{g.table.path}: {e}") from None


def _case_index(g: _GaussRows, about, afile):
    """The load case names (``about.json``'s order, else first appearance)
    and each row's index into them; every row names a case, no two names
    differ only in letter case, and every listed case has rows."""
    gt = g.table
    empty = first_true(g.case == "")
    if empty is not None:
        raise InputError(f"{gt.where(empty)}, column 'case': empty cell; every row must name its load case")
    found, first, inv = np.unique(g.case, return_index=True, return_inverse=True)
    folded = {}
    for name, r in sorted(zip(found.tolist(), first.tolist()), key=lambda p: p[1]):
        other = folded.setdefault(name.casefold(), (name, r))
        if other[0] != name:
            raise InputError(f"{gt.where(r)}: load case {name!r} and {other[0]!r} (row {other[1] + 1}) differ only "
                             "in letter case; give each case one spelling")
    listed = about.get("cases")
    if listed is None:
        order = np.argsort(first, kind="stable")
        names = [str(found[i]) for i in order]
        rank = np.empty(len(found), dtype=np.int64)
        rank[order] = np.arange(len(found))
        return names, rank[inv]
    pos = {n: i for i, n in enumerate(listed)}
    for name, r in zip(found.tolist(), first.tolist()):
        if name not in pos:
            raise InputError(f"{gt.where(r)}: load case {name!r} is not among the cases {afile} lists "
                             f"({', '.join(map(repr, listed))})")
    have = set(found.tolist())
    missing = [n for n in listed if n not in have]
    if missing:
        raise InputError(f"{afile}: lists load case {missing[0]!r}, but {gt.path.name} has no rows for it")
    return list(listed), np.array([pos[n] for n in found.tolist()], dtype=np.int64)[inv]


def _read_gauss_table(gfile: Path, dim: int) -> _GaussRows:
    """Read ``gauss.csv`` and check what needs no mesh: the coordinate
    columns fit the model, values and coordinates are finite, point numbers
    start at 1."""
    gt = read_csv(gfile, _gauss_schema)
    coord_names = [c for c in ("x", "y", "z") if c in gt]
    if coord_names and coord_names != ["x", "y", "z"][:dim]:
        raise InputError(f"{gfile}: coordinate columns {','.join(coord_names)} do not fit a {dim}D model; "
                         f"give {','.join('xyz'[:dim])} or no coordinates")
    comps = [n for n in gt.names if n.lower() not in RESERVED]
    elem = gt.col("element")
    point = gt.col("point")
    vals = np.stack([gt.col(c) for c in comps], axis=1)
    bad = first_true(~np.isfinite(vals).all(axis=1))
    if bad is not None:
        a = int(np.flatnonzero(~np.isfinite(vals[bad]))[0])
        raise InputError(f"{gt.where(bad)}: {comps[a]} is {vals[bad, a]} at point {int(point[bad])} of "
                         f"element {int(elem[bad])}")
    X = None
    if coord_names:
        X = np.stack([gt.col(c) for c in coord_names], axis=1)
        bad = first_true(~np.isfinite(X).all(axis=1))
        if bad is not None:
            raise InputError(f"{gt.where(bad)}: coordinates {X[bad].tolist()} of point {int(point[bad])} of "
                             f"element {int(elem[bad])} are not finite")
    bad = first_true(point < 1)
    if bad is not None:
        raise InputError(f"{gt.where(bad)}: point number {int(point[bad])} of element {int(elem[bad])}; "
                         "point numbers start at 1")
    case = np.char.strip(gt.col("case")) if "case" in gt else None
    return _GaussRows(gt, comps, elem, point, vals, X, case)


def _element_of_rows(g: _GaussRows, mesh: Mesh, info):
    """Block index and cell index (within the block) of every row's element."""
    blocks = mesh.blocks
    all_ids = np.concatenate([b.ids for b in blocks])
    all_blk = np.concatenate([np.full(len(b), i) for i, b in enumerate(blocks)])
    all_cell = np.concatenate([np.arange(len(b)) for b in blocks])
    o = np.argsort(all_ids)
    sids = all_ids[o]
    pos = np.minimum(np.searchsorted(sids, g.elem), len(sids) - 1)
    bad = first_true(sids[pos] != g.elem)
    if bad is not None:
        raise InputError(f"{g.table.where(bad)}: element {int(g.elem[bad])} is not in {info['elements'].path}")
    return all_blk[o][pos], all_cell[o][pos]


def _block_values(g: _GaussRows, mesh, b, rows, cell, info, about, tol, afile):
    """Values (C, q, comps) and point set of block ``b`` from its data
    ``rows`` (``cell``: their cells): by point number at the rule
    ``about.json`` declares, or by coordinates."""
    et = b.element
    pt = g.point[rows]
    counts = _points_per_cell(g, info, b, cell)
    declared, said = declared_points(about, et)
    try:
        declared_rule = et.rule(declared)
    except ValueError as e:
        raise InputError(f"{afile}: {e}") from None
    if g.X is None:
        bad = first_true(pt > declared_rule.npoints)
        if bad is not None:
            r = int(rows[bad])
            raise InputError(f"{g.table.where(r)}: point {int(pt[bad])} of element {int(g.elem[r])}, but a "
                             f"{et.name} at the {declared} rule ({declared_rule.name}) has points "
                             f"1..{declared_rule.npoints}"
                             + ("" if said else f"; if the values sit at another rule, say so in {ABOUT_FILE} "
                                "or give coordinates"))
    order = _point_order(g, rows, cell, pt)
    if g.X is None:
        return _numbered_values(g, info, b, rows, cell, pt, counts, order, declared_rule)
    values, spec = _located_values(g, mesh, b, rows, pt, counts, order, tol)
    if said:
        _check_declared(afile, g.table.path, et, spec, declared, declared_rule, values.shape[1])
    return values, spec


def _points_per_cell(g: _GaussRows, info, b, cell):
    """Number of rows of every cell of block ``b``; each cell needs some."""
    counts = np.bincount(cell, minlength=len(b))
    empty = first_true(counts == 0)
    if empty is not None:
        gfile = g.table.path
        r = int(info["element_rows"][b.name][empty])
        raise InputError(f"{gfile}: element {int(b.ids[empty])} ({info['elements'].path}, row {r + 1}) "
                         f"has no rows in {gfile.name}")
    return counts


def _point_order(g: _GaussRows, rows, cell, pt):
    """Order of the block's rows by (cell, point number); no point twice."""
    order = np.lexsort((pt, cell))
    cs, ps = cell[order], pt[order]
    d = np.flatnonzero((cs[1:] == cs[:-1]) & (ps[1:] == ps[:-1]))
    if d.size:
        later = rows[order[d + 1]]
        k = int(np.argmin(later))
        r1, r0 = int(later[k]), int(rows[order[d[k]]])
        raise InputError(f"{g.table.where(r1)}: point {int(g.point[r1])} of element {int(g.elem[r1])} is given "
                         f"twice (also on row {r0 + 1})")
    return order


def _numbered_values(g: _GaussRows, info, b, rows, cell, pt, counts, order, rule):
    """Values of a block given without coordinates: every cell carries the
    points 1..q of ``rule``, in the rule's order."""
    q = rule.npoints
    badc = first_true(counts != q)
    if badc is not None:
        have = set(pt[cell == badc].tolist())
        miss = [p for p in range(1, q + 1) if p not in have]
        r = int(info["element_rows"][b.name][badc])
        raise InputError(f"{g.table.path}: element {int(b.ids[badc])} ({info['elements'].path}, row {r + 1}) has "
                         f"{counts[badc]} of its {q} points ({rule.name}); missing point(s) "
                         f"{', '.join(map(str, miss[:10]))}")
    srt = rows[order]
    return g.vals[srt].reshape(len(b), q, len(g.comps)), rule_spec(b.element, rule)


def _located_values(g: _GaussRows, mesh, b, rows, pt, counts, order, tol):
    """Values of a block given with coordinates: every cell carries the same
    number of points, matched by position to one point set and reordered by
    that match."""
    et = b.element
    gfile = g.table.path
    q = int(counts[0])
    if q > MAX_POINTS:
        raise InputError(f"{gfile}: element {int(b.ids[0])} has {q} rows; more than {MAX_POINTS} integration "
                         "points per element are not supported")
    badc = first_true(counts != q)
    if badc is not None:
        raise InputError(f"{gfile}: element {int(b.ids[badc])} has {counts[badc]} points, but element "
                         f"{int(b.ids[0])} (the first {et.name}) has {q}: every element of a type must carry "
                         "the same set of points")
    bad = first_true(pt > q)
    if bad is not None:
        r = int(rows[bad])
        raise InputError(f"{g.table.where(r)}: point {int(pt[bad])} of element {int(g.elem[r])}; the {q} points "
                         f"of each {et.name} are numbered 1..{q}")
    srt = rows[order].reshape(len(b), q)
    spec, assign = match_points(g.table, mesh, b, g.X[srt], srt, tol)
    v = g.vals[srt]
    out = np.empty_like(v)
    np.put_along_axis(out, assign[:, :, None], v, axis=1)
    return out, spec


def _check_declared(afile, gfile, et, spec, declared, want, q):
    """The point set found by coordinates must be the rule ``about.json``
    declares for the type."""
    got = spec if isinstance(spec, QuadratureRule) else (et.rule(spec) if isinstance(spec, str) else None)
    if got is None or got.npoints != want.npoints or not np.allclose(got.points, want.points, atol=1e-12):
        label = got.name if got is not None else f"{q} points that form no stored rule"
        raise InputError(f"{afile}: says the {et.name} values sit at the {declared!r} rule ({want.name}), "
                         f"but the coordinates in {gfile.name} put them at {label}")


# ===========================================================================
# Writing
# ===========================================================================
def check_component_names(components):
    """Every component name must fit a CSV header: non-empty, no commas,
    quotes, line breaks or surrounding spaces, and none of :data:`RESERVED`."""
    for c in components:
        if (not c or c != c.strip() or any(ch in c for ch in ',"\n\r') or c.lower() in RESERVED):
            raise InputError(f"component name {c!r} cannot be written to a CSV header: names must be non-empty, "
                             f"without commas, quotes, line breaks or surrounding spaces, and not one of "
                             f"{', '.join(RESERVED)}")


def check_case_names(names):
    """Every load case name must fit a CSV cell: non-empty, shorter than 64
    characters, without commas, quotes, line breaks or surrounding spaces,
    and no two may differ only in letter case."""
    seen = {}
    for c in names:
        if not c or c != c.strip() or len(c) >= 64 or any(ch in c for ch in ',"\n\r'):
            raise InputError(f"load case name {c!r} cannot be written to a CSV cell: names must be non-empty, "
                             "shorter than 64 characters, without commas, quotes, line breaks or surrounding spaces")
        if c.casefold() in seen:
            raise InputError(f"load case names {seen[c.casefold()]!r} and {c!r} differ only in letter case")
        seen[c.casefold()] = c


def _points_about(mesh, field):
    """``points`` entry of about.json for the field, or None when some block
    sits at points that form no stored rule."""
    specs = {}
    for b in mesh.blocks:
        et = b.element
        p = field.points[b.name]
        rule = candidate_rule(et, len(p))
        if rule is None or not np.allclose(rule.points, p, rtol=0, atol=1e-13):
            return None
        s = rule_spec(et, rule)
        specs[b.name] = s if isinstance(s, str) else rule.npoints
    uniq = set(specs.values())
    if len(uniq) == 1 and isinstance(next(iter(uniq)), str):
        return next(iter(uniq))
    return specs


def write_results(path, mesh: Mesh, field: GaussField | LoadCases, coordinates: bool = True,
                  about: dict | None = None):
    """Write a result folder (``nodes.csv``, ``elements.csv``, ``gauss.csv``,
    ``about.json``) or, when ``path`` ends in ``.npz``, one compressed
    ``.npz`` file.

    Parameters
    ----------
    path : folder (created if needed; the four files are replaced) or ``*.npz``.
    mesh, field : the model; ``field.mesh`` must be ``mesh``.  ``field`` may
        be :class:`LoadCases`: ``gauss.csv`` then starts with a ``case``
        column (the cases one after the other, each in the row order of a
        single field) and ``about.json`` lists the case names in order; the
        ``.npz`` form stores each block's values as (cases, cells, points,
        components).
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
    if not isinstance(mesh, Mesh) or not isinstance(field, (GaussField, LoadCases)):
        raise InputError("write_results needs a Mesh and a GaussField (or LoadCases)")
    if field.mesh is not mesh:
        raise InputError("the field belongs to another mesh than the one given")
    cases = field if isinstance(field, LoadCases) else None
    if cases is not None:
        check_case_names(cases.names)
        field = cases[cases.names[0]]
    meta = _about_record(mesh, field, about, coordinates)
    if cases is not None:
        meta.pop("name", None)
        if cases.name != "cases":
            meta["name"] = cases.name
        meta["cases"] = list(cases.names)
    if path.suffix.lower() == ".npz":
        write_npz(path, mesh, cases if cases is not None else field, meta)
        return path
    if path.exists() and not path.is_dir():
        raise InputError(f"{path}: exists and is not a folder")
    check_component_names(field.components)
    _write_nodes(path / NODES_FILE, mesh)
    _write_elements(path / ELEMENTS_FILE, mesh)
    _write_gauss(path / GAUSS_FILE, mesh, cases if cases is not None else field, coordinates)
    atomic_write(path / ABOUT_FILE, lambda f: f.write(json.dumps(meta, indent=2, sort_keys=True) + "\n"))
    return path


def _about_record(mesh, field, about, coordinates):
    """The about record to write: the user's ``units`` / ``description``,
    the format label, the field's name and the points it sits at."""
    meta = dict(about or {})
    for k in ("format", "points", "name", "cases"):
        if k in meta:
            raise InputError(f"about: {k!r} is written from the model; give only 'units' and 'description'")
    check_about(meta, "about")
    meta["format"] = FORMAT
    if field.name != "field":
        meta["name"] = field.name
    pts = _points_about(mesh, field)
    if pts is not None:
        meta["points"] = pts
    elif not coordinates:
        raise InputError("the field sits at points that form no stored Gauss rule; write it with coordinates=True")
    return meta


def _write_nodes(nfile: Path, mesh):
    dim = mesh.dim
    write_csv(nfile, ["node"] + list("xyz"[:dim]),
              [int_cells(mesh.node_ids)] + [float_cells(mesh.nodes[:, i]) for i in range(dim)])


def _write_elements(efile: Path, mesh):
    K = max(b.element.nnodes for b in mesh.blocks)
    cols = [[] for _ in range(3 + K)]
    for b in mesh.blocks:
        m, k = b.cells.shape
        cols[0] += int_cells(b.ids)
        cols[1] += [b.name] * m
        cols[2] += int_cells(b.regions)
        nid = mesh.node_ids[b.cells]
        for j in range(K):
            cols[3 + j] += int_cells(nid[:, j]) if j < k else [""] * m
    write_csv(efile, ["element", "type", "region"] + [f"n{j}" for j in range(1, K + 1)], cols)


def _write_gauss(gfile: Path, mesh, field, coordinates):
    """``gauss.csv`` of a field, or of load cases (a leading ``case`` column,
    the cases one after the other)."""
    dim = mesh.dim
    cases = field if isinstance(field, LoadCases) else None
    fields = list(cases.items()) if cases is not None else [(None, field)]
    lead = ["case"] if cases is not None else []
    header = lead + ["element", "point"] + (list("xyz"[:dim]) if coordinates else []) + list(fields[0][1].components)
    cols = [[] for _ in header]
    xq = fields[0][1].physical_points() if coordinates else None
    for name, f in fields:
        for b in mesh.blocks:
            v = f.values[b.name]
            C, q, a = v.shape
            if lead:
                cols[0] += [name] * (C * q)
            off = len(lead)
            cols[off] += int_cells(np.repeat(b.ids, q))
            cols[off + 1] += int_cells(np.tile(np.arange(1, q + 1), C))
            off += 2
            if coordinates:
                x = xq[b.name].reshape(C * q, dim)
                for i in range(dim):
                    cols[off + i] += float_cells(x[:, i])
                off += dim
            vv = v.reshape(C * q, a)
            for j in range(a):
                cols[off + j] += float_cells(vv[:, j])
    write_csv(gfile, header, cols)
