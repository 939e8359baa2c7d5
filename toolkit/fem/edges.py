"""Edges of cells given as node tuples: checking them, finding the cell and
local edge each belongs to, Gauss points along them with the cells' own
shape functions (points, length weights, outward normals), and integrals of
nodal values along them (section resultants)."""
from __future__ import annotations

import numpy as np

from toolkit.errors import InputError
from toolkit.core.mesh import Mesh

__all__ = ["as_edges", "locate_edges", "edge_quadrature", "edge_integral"]


def as_edges(edges, label="edges") -> np.ndarray:
    """Check and return edge node tuples as an int64 array (m, 2) or (m, 3)."""
    e = np.asarray(edges)
    if e.ndim != 2 or e.shape[1] not in (2, 3) or len(e) == 0:
        raise InputError(f"{label}: expected a non-empty array of edge node tuples (m, 2) or (m, 3), got shape {e.shape}")
    if not np.issubdtype(e.dtype, np.integer):
        raise InputError(f"{label}: edge node numbers must be integers")
    return e.astype(np.int64)


def locate_edges(mesh: Mesh, edges, label="edges") -> list[tuple[str, int, np.ndarray, np.ndarray]]:
    """Find the cell and local edge of every edge node tuple.

    Each tuple is matched by its two corner nodes, first in the given
    direction (as the mesher stores them, counter-clockwise for their cell),
    then reversed; a middle node, when given, must be the cell's middle node
    of that edge.  Returns ``[(block, local edge j, edge rows, cells)]``.
    """
    e = as_edges(edges, label)
    n = mesh.nnodes
    if e.min() < 0 or e.max() >= n:
        raise InputError(f"{label}: node number out of range 0..{n - 1}")
    found = np.zeros(len(e), dtype=bool)
    out = []
    for sense in (0, 1):
        want = e[:, 0] * n + e[:, 1] if sense == 0 else e[:, 1] * n + e[:, 0]
        for b in mesh.blocks:
            for j, loc in enumerate(b.element.edges):
                if len(loc) != e.shape[1]:
                    continue
                keys = b.cells[:, loc[0]].astype(np.int64) * n + b.cells[:, loc[1]]
                order = np.argsort(keys)
                pos = np.searchsorted(keys, want, sorter=order)
                pos = np.minimum(pos, len(keys) - 1)
                hit = (keys[order[pos]] == want) & ~found
                if not hit.any():
                    continue
                rows = np.flatnonzero(hit)
                cells = order[pos[rows]]
                if e.shape[1] == 3:
                    bad = b.cells[cells, loc[2]] != e[rows, 2]
                    if bad.any():
                        r = int(rows[np.flatnonzero(bad)[0]])
                        raise InputError(f"{label}: edge {r} {e[r].tolist()} has a middle node that is not the "
                                         f"middle node of that edge in its cell")
                found[rows] = True
                out.append((b.name, j, rows, cells))
    if not found.all():
        r = int(np.flatnonzero(~found)[0])
        raise InputError(f"{label}: edge {r} {e[r].tolist()} is not an edge of any cell "
                         f"({int((~found).sum())} such edges; give (corner, corner[, middle]) node tuples "
                         "with as many nodes as the element edges have)")
    return out


def edge_quadrature(mesh: Mesh, edges, npoints: int | None = None, label="edges"):
    """Gauss–Legendre points along edges, using each cell's own shape
    functions on its edge (the 1D point ``s`` maps to natural coordinates
    ``ξ = ξ_a (1 - s)/2 + ξ_b (1 + s)/2`` between the edge's corner nodes).

    Yields per (block, local edge) group a dict with ``cells`` (m,),
    ``conn`` (m, k) node rows, ``N`` (g, k) shape functions (zero for nodes
    off the edge), ``x`` (m, g, 2) points, ``ds`` (m, g) length weights
    (``w_g |dx/ds|``), ``normal`` (m, g, 2) outward unit normals of the cell.
    """
    groups = []
    for name, j, rows, cells in locate_edges(mesh, edges, label):
        b = mesh.block(name)
        et = b.element
        ng = npoints or et.degree + 2
        s, w = np.polynomial.legendre.leggauss(ng)
        loc = et.edges[j]
        xa, xb = et.nodes[loc[0]], et.nodes[loc[1]]
        xi = xa[None, :] * (1 - s[:, None]) / 2 + xb[None, :] * (1 + s[:, None]) / 2
        N, dN = et.evaluate(xi)                                      # (g, k), (g, k, 2)
        off = np.setdiff1d(np.arange(et.nnodes), loc)
        N[:, off] = 0.0
        dNds = dN @ ((xb - xa) / 2)                                  # (g, k)
        conn = b.cells[cells]
        xe = mesh.nodes[conn]                                        # (m, k, 2)
        x = np.einsum("gk,mki->mgi", N, xe)
        tang = np.einsum("gk,mki->mgi", dNds, xe)
        L = np.linalg.norm(tang, axis=-1)
        if (L <= 0).any():
            raise InputError(f"{label}: an edge of zero length in block {name}")
        normal = np.stack([tang[..., 1], -tang[..., 0]], axis=-1) / L[..., None]
        groups.append(dict(block=name, cells=cells, rows=rows, conn=conn, N=N, x=x, ds=w[None, :] * L,
                           normal=normal))
    return groups


def edge_integral(mesh: Mesh, edges, values, weight=None, npoints=None) -> np.ndarray:
    """``∫ v w ds`` along edges, ``v`` interpolated from nodal ``values``
    ((n,) or (n, c) in node order) with the cells' shape functions, ``w`` an
    optional callable of the points ``x`` (m, g, 2).  Plain length integral
    (no thickness, no ``2 π r``).  Used for section resultants, e.g. the
    membrane force ``∫ σ_xx dy`` and moment ``∫ σ_xx (y - y0) dy``."""
    v = np.asarray(values, dtype=float)
    scalar = v.ndim == 1
    v = v.reshape(len(v), -1)
    if len(v) != mesh.nnodes:
        raise InputError(f"edge_integral: values have {len(v)} rows, the mesh has {mesh.nnodes} nodes")
    total = np.zeros(v.shape[1])
    for g in edge_quadrature(mesh, edges, npoints):
        vq = np.einsum("gk,mkc->mgc", g["N"], v[g["conn"]])
        if not np.isfinite(vq).all():
            raise InputError("edge_integral: values along the edges are not finite")
        wq = g["ds"] if weight is None else g["ds"] * np.asarray(weight(g["x"]), dtype=float)
        total += np.einsum("mgc,mg->c", vq, wq)
    return total[0] if scalar else total
