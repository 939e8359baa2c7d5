"""Supports and the constraints they impose: :class:`Fixed`,
:class:`Roller` (normal component zero; symmetry planes) and
:class:`Displacement` (prescribed components, constants or functions of the
coordinates) are plain records.  Resolved against a mesh they become
constraint rows ``n·u = g`` per node (:func:`constraint_rows`), then the
transformation ``u = T v + u_p`` onto the free directions
(:func:`constraint_transformation`); :func:`check_rigid_modes` makes sure
every connected part is held against its rigid-body motion."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
import scipy.sparse as sp

from toolkit.errors import InputError
from toolkit.fem.edges import edge_quadrature
from toolkit.fem.locations import edge_of, nodes_of

__all__ = ["Fixed", "Roller", "Displacement", "constraint_rows", "constraint_transformation", "check_rigid_modes"]


@dataclass(frozen=True)
class Fixed:
    """Both displacement components zero on a named edge, a named point, or
    an array of node rows."""

    where: object


@dataclass(frozen=True)
class Roller:
    """Normal displacement component zero (a roller or a symmetry plane).

    ``normal=None`` takes each node's normal from the edge geometry (the mean
    of the outward normals of the edges meeting there; needs an edge); give
    ``normal="x"``, ``"y"`` or a 2-vector to fix the direction (needed for
    points and node arrays)."""

    where: object
    normal: object = None


@dataclass(frozen=True)
class Displacement:
    """Prescribed displacement components on a set of nodes.  ``ux`` and
    ``uy`` (``u_r``, ``u_z`` in axisymmetry) are ``None`` (free), a number,
    or a callable ``f(x) -> (m,)`` of the node coordinates ``x`` (m, 2)."""

    where: object
    ux: float | Callable | None = None
    uy: float | Callable | None = None


def _normal_dir(normal, label):
    if isinstance(normal, str):
        return np.array({"x": (1.0, 0.0), "r": (1.0, 0.0), "y": (0.0, 1.0), "z": (0.0, 1.0)}[normal]) \
            if normal in ("x", "y", "r", "z") else _bad(f"{label}: normal must be 'x', 'y' or a 2-vector, got {normal!r}")
    n = np.asarray(normal, dtype=float)
    if n.shape != (2,) or not np.isfinite(n).all() or np.linalg.norm(n) == 0:
        raise InputError(f"{label}: normal must be a non-zero 2-vector, got {normal!r}")
    return n / np.linalg.norm(n)


def _bad(msg):
    raise InputError(msg)


def constraint_rows(mesh, supports, edges, points):
    """Every constraint as (node, unit direction n, value g): n·u = g."""
    nodes_l, dirs_l, vals_l = [], [], []
    X = mesh.nodes
    for i, s in enumerate(supports):
        label = f"support {i} ({type(s).__name__})"
        if isinstance(s, Fixed):
            nodes = nodes_of(s.where, mesh, edges, points, label)
            for d in ((1.0, 0.0), (0.0, 1.0)):
                nodes_l.append(nodes); dirs_l.append(np.tile(d, (len(nodes), 1))); vals_l.append(np.zeros(len(nodes)))
        elif isinstance(s, Roller):
            if s.normal is not None:
                nodes = nodes_of(s.where, mesh, edges, points, label)
                nrm = np.tile(_normal_dir(s.normal, label), (len(nodes), 1))
            else:
                if isinstance(s.where, str) and s.where in points and s.where not in edges:
                    raise InputError(f"{label}: a roller at point {s.where!r} needs normal='x', 'y' or a vector")
                e = edge_of(s.where, edges, label)
                acc = np.zeros((mesh.nnodes, 2))
                for g in edge_quadrature(mesh, e, npoints=2, label=label):
                    nm = g["normal"].mean(axis=1)                       # (m, 2) per edge
                    np.add.at(acc, e[g["rows"]].ravel(), np.repeat(nm, e.shape[1], axis=0))
                nodes = np.unique(e)
                nrm = acc[nodes]
                ln = np.linalg.norm(nrm, axis=1)
                if (ln < 1e-8).any():
                    raise InputError(f"{label}: the edge normal is undefined at node {int(nodes[np.argmin(ln)])} "
                                     "(edges folding back); give normal=...")
                nrm = nrm / ln[:, None]
            nrm = np.where(np.abs(nrm) < 1e-12, 0.0, nrm)
            nrm /= np.linalg.norm(nrm, axis=1)[:, None]
            nodes_l.append(nodes); dirs_l.append(nrm); vals_l.append(np.zeros(len(nodes)))
        elif isinstance(s, Displacement):
            nodes = nodes_of(s.where, mesh, edges, points, label)
            if s.ux is None and s.uy is None:
                raise InputError(f"{label}: give ux and/or uy")
            for comp, val in ((0, s.ux), (1, s.uy)):
                if val is None:
                    continue
                v = np.asarray(val(X[nodes]) if callable(val) else np.full(len(nodes), float(val)), dtype=float)
                if v.shape != (len(nodes),) or not np.isfinite(v).all():
                    raise InputError(f"{label}: u{'xy'[comp]} must give {len(nodes)} finite values")
                d = np.zeros((len(nodes), 2)); d[:, comp] = 1.0
                nodes_l.append(nodes); dirs_l.append(d); vals_l.append(v)
        else:
            raise InputError(f"{label}: unknown support type; use Fixed, Roller or Displacement")
    if not nodes_l:
        raise InputError("the model has no supports: it is free to move as a rigid body; add Fixed, Roller "
                         "or Displacement supports")
    return np.concatenate(nodes_l), np.concatenate(dirs_l), np.concatenate(vals_l)


def constraint_transformation(mesh, nodes, dirs, vals):
    """Per node: P = Σ n nᵀ, r = Σ n g.  Rank 0: free; rank 1: free only
    along the tangent; rank 2: fixed.  Returns T (2n, nfree) sparse, u_p (2n,),
    the rank per node (n,) and whether T only selects degrees of freedom
    (every free direction along x or y)."""
    n = mesh.nnodes
    P = np.zeros((n, 2, 2))
    r = np.zeros((n, 2))
    np.add.at(P, nodes, dirs[:, :, None] * dirs[:, None, :])
    np.add.at(r, nodes, dirs * vals[:, None])
    con = np.unique(nodes)
    lam, vec = np.linalg.eigh(P[con])                                  # ascending
    rank = (lam > 1e-8 * lam[:, 1:2]).sum(axis=1)
    up = np.zeros((n, 2))
    r1 = rank == 1
    e = vec[r1, :, 1]
    up[con[r1]] = e * (np.einsum("ij,ij->i", e, r[con[r1]]) / lam[r1, 1])[:, None]
    r2 = rank == 2
    up[con[r2]] = np.linalg.solve(P[con[r2]], r[con[r2]][..., None])[..., 0]
    # consistency of the prescribed values
    resid = np.einsum("ij,ij->i", dirs, up[nodes]) - vals
    scale = max(1.0, float(np.abs(vals).max(initial=0.0))) * 1e-9 + 1e-300
    bad = np.abs(resid) > max(scale, 1e-9 * float(np.abs(vals).max(initial=0.0)))
    if bad.any():
        k = int(np.flatnonzero(bad)[0])
        raise InputError(f"conflicting supports at node {int(nodes[k])}: the prescribed displacements cannot all hold "
                         f"(mismatch {resid[k]:.3g})")
    kind = np.zeros(n, dtype=np.int64)
    kind[con] = rank
    tang = np.zeros((n, 2))
    t = vec[r1, :, 0]
    t = np.where(np.abs(t) < 1e-12, 0.0, t)
    t /= np.linalg.norm(t, axis=1)[:, None]
    tang[con[r1]] = t
    nfree_node = 2 - kind
    start = np.concatenate([[0], np.cumsum(nfree_node)[:-1]])
    f0 = np.flatnonzero(kind == 0)
    f1 = np.flatnonzero(kind == 1)
    rows = np.concatenate([2 * f0, 2 * f0 + 1, 2 * f1, 2 * f1 + 1])
    cols = np.concatenate([start[f0], start[f0] + 1, start[f1], start[f1]])
    data = np.concatenate([np.ones(2 * len(f0)), tang[f1, 0], tang[f1, 1]])
    keep = data != 0.0
    nfree = int(nfree_node.sum())
    T = sp.csc_matrix((data[keep], (rows[keep], cols[keep])), shape=(2 * n, nfree))
    T.sort_indices()
    selection = bool(np.all(data[keep] == 1.0) and T.nnz == nfree)
    return T, up.ravel(), kind, selection


def check_rigid_modes(mesh, nodes, dirs, analysis, used):
    """Each connected part must be held against its rigid-body modes:
    plane: translations x, y and the in-plane rotation; axisymmetric: the
    axial translation (radial motion strains the hoop direction)."""
    from scipy.sparse.csgraph import connected_components

    n = mesh.nnodes
    r_, c_ = [], []
    for b in mesh.blocks:
        r_.append(b.cells.ravel()); c_.append(np.roll(b.cells, 1, axis=1).ravel())
    r_ = np.concatenate(r_); c_ = np.concatenate(c_)
    G = sp.coo_matrix((np.ones(len(r_)), (r_, c_)), shape=(n, n))
    ncomp, label = connected_components(G, directed=False)
    names = ["translation in x", "translation in y", "rotation in the plane"] if analysis != "axisymmetric" \
        else ["translation along the axis (z)"]
    for part in range(ncomp):
        members = np.flatnonzero((label == part) & used)
        if members.size == 0:
            continue
        X = mesh.nodes[members]
        ctr = X.mean(axis=0)
        size = max(float(np.ptp(X, axis=0).max()), 1e-300)
        sel = np.isin(nodes, members)
        xn = (mesh.nodes[nodes[sel]] - ctr) / size
        dn = dirs[sel]
        if analysis == "axisymmetric":
            C = dn[:, 1:2]
        else:
            C = np.stack([dn[:, 0], dn[:, 1], -xn[:, 1] * dn[:, 0] + xn[:, 0] * dn[:, 1]], axis=1)
        if C.shape[0] == 0:
            free = np.eye(len(names))
        else:
            _, sv, vt = np.linalg.svd(C, full_matrices=True)
            rank = int((sv > 1e-10 * max(sv.max(), 1e-300)).sum()) if sv.size else 0
            free = vt[rank:]
        if len(free):
            desc = []
            for v in free:
                v = v / np.abs(v).max()
                desc.append(" + ".join(f"{c:.2g}×{nm}" if abs(c - 1) > 1e-9 else nm
                                       for c, nm in zip(v, names) if abs(c) > 1e-9))
            where = f"part {part + 1} of {ncomp} (nodes {int(members[0])}..., {members.size} nodes)" if ncomp > 1 \
                else "the model"
            raise InputError(f"{where} is not supported against rigid-body motion: free mode(s) "
                             f"{'; '.join(desc)}. Add supports (Fixed, Roller, Displacement) that stop it.")
