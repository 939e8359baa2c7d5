"""The ``.npz`` form of a result set: the mesh, the integration-point field
and the about record in one compressed NumPy archive, read and written
without pickles (the same content as the neutral result folder)."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from toolkit.errors import InputError
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


def read_npz_about(path: Path) -> dict:
    """The checked about record stored in the ``.npz`` file ``path``."""
    with _open_npz(path) as z:
        return _npz_about(z, path)


def read_npz(path: Path):
    """``(mesh, field)`` of the ``.npz`` results file ``path``."""
    with _open_npz(path) as zz:
        fmt = str(zz.get("format")[()]) if "format" in zz.z.files else None
        if fmt != FORMAT:
            raise InputError(f"{path}: format {fmt!r} is not {FORMAT!r}")
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
            rule = candidate_rule(et, len(p)) if p.ndim == 2 and p.shape[1] == et.dim else None
            same = rule is not None and np.array_equal(rule.points, p)
            spec[b.name] = rule_spec(et, rule) if same else p
        field = GaussField(mesh, vals, comps, points=spec, name=about.get("name", "field"))
    except ValueError as e:
        raise InputError(f"{path}: {e}") from None
    return mesh, field


def write_npz(path: Path, mesh, field, about):
    """Write ``mesh``, ``field`` and the about record ``about`` as one
    compressed ``.npz`` file, atomically."""
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
    atomic_write(path, write, binary=True)
