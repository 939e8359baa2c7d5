"""The ``.npz`` form of a result set: the mesh, the integration-point field
(or several load cases: an array ``cases`` of names and each block's values
shaped (cases, cells, points, components)) and the about record in one
compressed NumPy archive, read and written without pickles (the same content
as the neutral result folder)."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from toolkit.errors import InputError
from toolkit.core.cases import LoadCases
from toolkit.core.fields import GaussField
from toolkit.core.mesh import Mesh
from toolkit.io.about import FORMAT, check_about
from toolkit.io.files import atomic_write
from toolkit.io.points import candidate_rule, rule_spec

__all__ = ["read_npz", "read_npz_about", "write_npz"]


class _open_npz:
    """An ``.npz`` archive opened for reading; every failure names the file."""

    def __init__(self, path):
        self.path = path

    def __enter__(self):
        try:
            self.z = np.load(self.path, allow_pickle=False)
            if not hasattr(self.z, "files"):
                raise InputError("not an .npz archive")
        except Exception as e:
            raise InputError(f"{self.path}: not a readable .npz results file ({e})") from None
        return self

    def __exit__(self, *exc):
        self.z.close()

    def get(self, key):
        if key not in self.z.files:
            raise InputError(f"{self.path}: missing array {key!r}")
        try:
            return self.z[key]
        except Exception as e:
            raise InputError(f"{self.path}: array {key!r} cannot be read ({e})") from None


def _npz_about(zz, path):
    raw = zz.get("about")
    try:
        about = json.loads(str(raw[()]))
    except (json.JSONDecodeError, TypeError, IndexError, ValueError) as e:
        raise InputError(f"{path}: array 'about' is not a JSON text ({e})") from None
    return check_about(about, f"{path} (about)")


def _integers(a, what, path):
    """``a`` as int64, checked before any narrowing: integers (or integral
    finite floats) within the 64-bit range, else a one-line InputError."""
    a = np.asarray(a)
    if a.dtype.kind in "iu":
        if a.dtype.kind == "u" and a.size and int(a.max()) > np.iinfo(np.int64).max:
            raise InputError(f"{path}: array {what!r} holds a value beyond the 64-bit integer range")
        return a.astype(np.int64)
    if a.dtype.kind == "f" and (not a.size or (np.isfinite(a).all() and (a == np.round(a)).all()
                                               and np.abs(a).max() < 2.0 ** 63)):
        return a.astype(np.int64)
    kind = {"U": "text", "S": "bytes", "O": "objects", "b": "booleans", "f": "non-integer numbers",
            "c": "complex numbers"}.get(a.dtype.kind, str(a.dtype))
    raise InputError(f"{path}: array {what!r} must hold integers, got {kind} ({a.dtype})")


def _check_cells(cells, n, name, path):
    """Node indices of block ``name``: int64 within ``0..n-1``, checked before the mesh narrows them."""
    if cells.size:
        bad = np.flatnonzero(((cells < 0) | (cells >= n)).any(axis=-1) if cells.ndim > 1 else (cells < 0) | (cells >= n))
        if bad.size:
            c = int(bad[0])
            raise InputError(f"{path}: array {name + '.cells'!r}, cell {c}: node index out of range 0..{n - 1} "
                             f"({np.atleast_1d(cells[c]).tolist()}); {bad.size} such cells")
    return cells


def read_npz_about(path: Path) -> dict:
    """The checked about record stored in the ``.npz`` file ``path``."""
    with _open_npz(path) as z:
        return _npz_about(z, path)


def read_npz(path: Path):
    """``(mesh, field)`` of the ``.npz`` results file ``path``; ``(mesh,
    LoadCases)`` when it holds an array ``cases``."""
    with _open_npz(path) as zz:
        fmt = str(zz.get("format")[()]) if "format" in zz.z.files else None
        if fmt != FORMAT:
            raise InputError(f"{path}: format {fmt!r} is not {FORMAT!r}")
        about = _npz_about(zz, path)
        names = [str(n) for n in zz.get("blocks").ravel()]
        comps = [str(c) for c in zz.get("components").ravel()]
        cases = [str(c) for c in zz.get("cases").ravel()] if "cases" in zz.z.files else None
        blocks, regs, ids, vals, pts = {}, {}, {}, {}, {}
        nodes, node_ids = zz.get("nodes"), _integers(zz.get("node_ids"), "node_ids", path)
        if nodes.dtype.kind not in "iuf":
            raise InputError(f"{path}: array 'nodes' must hold numbers, got {nodes.dtype}")
        for n in names:
            blocks[n] = _check_cells(_integers(zz.get(f"{n}.cells"), f"{n}.cells", path), len(nodes), n, path)
            regs[n] = _integers(zz.get(f"{n}.regions"), f"{n}.regions", path)
            ids[n] = _integers(zz.get(f"{n}.ids"), f"{n}.ids", path)
            vals[n] = zz.get(f"{n}.values")
            if vals[n].dtype.kind not in "iuf":
                raise InputError(f"{path}: array {n + '.values'!r} must hold numbers, got {vals[n].dtype}")
            pts[n] = zz.get(f"{n}.points")
            if pts[n].dtype.kind not in "iuf":
                raise InputError(f"{path}: array {n + '.points'!r} must hold numbers, got {pts[n].dtype}")
    try:
        mesh = Mesh(nodes, blocks, regions=regs, node_ids=node_ids, cell_ids=ids)
        spec = {}
        for b in mesh.blocks:
            p = np.asarray(pts[b.name], dtype=float)
            et = b.element
            rule = candidate_rule(et, len(p)) if p.ndim == 2 and p.shape[1] == et.dim else None
            same = rule is not None and np.array_equal(rule.points, p)
            spec[b.name] = rule_spec(et, rule) if same else p
        if cases is None:
            return mesh, GaussField(mesh, vals, comps, points=spec, name=about.get("name", "field"))
        for n, v in vals.items():
            if v.ndim != 4 or v.shape[0] != len(cases):
                raise InputError(f"array {n + '.values'!r} is shaped {v.shape}, expected (cases, cells, points, "
                                 f"components) with {len(cases)} cases ({', '.join(map(repr, cases))})")
        if about.get("cases", cases) != cases:
            raise InputError(f"array 'cases' {cases} differs from the about record's {about['cases']}")
        fields = {}
        for i, k in enumerate(cases):
            if k in fields:
                raise InputError(f"array 'cases' names load case {k!r} twice")
            try:
                fields[k] = GaussField(mesh, {n: v[i] for n, v in vals.items()}, comps, points=spec, name=k)
            except ValueError as e:
                raise InputError(f"load case {k!r}: {e}") from None
        return mesh, LoadCases(fields, name=about.get("name", "cases"))
    except ValueError as e:
        raise InputError(f"{path}: {e}") from None


def write_npz(path: Path, mesh, field, about):
    """Write ``mesh``, ``field`` (a GaussField or LoadCases) and the about
    record ``about`` as one compressed ``.npz`` file, atomically."""
    cases = field if isinstance(field, LoadCases) else None
    if cases is not None:
        field = cases[cases.names[0]]
    arrays = {
        "format": np.array(FORMAT),
        "about": np.array(json.dumps(about, sort_keys=True)),
        "nodes": mesh.nodes, "node_ids": mesh.node_ids,
        "blocks": np.array([b.name for b in mesh.blocks]),
        "components": np.array(field.components),
    }
    if cases is not None:
        arrays["cases"] = np.array(cases.names)
    for b in mesh.blocks:
        arrays[f"{b.name}.cells"] = b.cells.astype(np.int64)
        arrays[f"{b.name}.regions"] = b.regions
        arrays[f"{b.name}.ids"] = b.ids
        arrays[f"{b.name}.values"] = (field.values[b.name] if cases is None else
                                      np.stack([f.values[b.name] for _, f in cases.items()]))
        arrays[f"{b.name}.points"] = field.points[b.name]

    def write(f):
        np.savez_compressed(f, **arrays)
    atomic_write(path, write, binary=True)
