"""Small-strain linear elasticity in 2D: plane stress, plane strain, axisymmetric.

The displacement method (Zienkiewicz & Taylor, *The Finite Element Method*,
vol. 1, ch. 2-6): ``K u = f`` with ``K = Σ_e ∫ B^T D B dΩ`` assembled over
all cells at once (no per-element Python loop), supports applied by
eliminating constrained directions, one sparse direct factorisation
(SuperLU via ``scipy.sparse.linalg.splu``), and stresses ``σ = D B u_e`` at
the integration points of the rule used for the stiffness.

Coordinates and components
--------------------------
* plane stress / plane strain: coordinates ``(x, y)``; strain vector
  ``(exx, eyy, gxy)`` with engineering shear ``gxy = du/dy + dv/dx``;
  stress output ``(sxx, syy, sxy, szz)`` (``szz = 0`` in plane stress,
  ``ν (sxx + syy)`` in plane strain); strain output ``(exx, eyy, gxy, ezz)``.
* axisymmetric: coordinate 0 is the radius ``r >= 0``, coordinate 1 the
  axial position ``z``; strain ``(err, ezz, grz, ehoop)`` with the hoop strain
  ``ehoop = u_r / r``; stress output ``(srr, szz, srz, shoop)`` (``shoop`` hoop).
  Every integral is over the full ring (factor ``2 π r``): point loads are
  total ring forces, reactions are totals over the circumference.
* plane problems carry a ``thickness`` (default 1): tractions are forces per
  area, point loads and reactions are forces on that thickness.

:data:`TENSOR_INDEX` maps each output component to its place ``(i, j)`` in
the 3x3 stress tensor (frame ``x, y, z`` or ``r, z, θ``), for invariants.

Loads: :class:`Traction` (uniform or linearly varying along a coordinate, so
pure bending of a bar end is one load), :class:`Pressure` (normal, also
linearly varying), :class:`PointLoad`.  Supports: :class:`Fixed`,
:class:`Roller` (normal component zero; symmetry planes), :class:`Displacement`
(prescribed components, constants or functions of the coordinates).  Named
edges and points come from the mesher's model object (``model.edges``,
``model.points``) or are passed as ``edges=`` / ``points=``.
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Callable

import numpy as np
import scipy.sparse as sp

from toolkit.core.arrays import chunk_slices
from toolkit.core.fields import GaussField
from toolkit.core.mesh import Mesh
from toolkit.core.assembly import assemble_csr, default_threads

__all__ = [
    "Material", "Traction", "Pressure", "PointLoad", "Fixed", "Roller", "Displacement",
    "Solution", "solve", "edge_integral", "edge_quadrature", "locate_edges",
    "ANALYSES", "STRESS_COMPONENTS", "STRAIN_COMPONENTS", "TENSOR_INDEX",
]

ANALYSES = ("plane_stress", "plane_strain", "axisymmetric")
STRESS_COMPONENTS = {"plane_stress": ("sxx", "syy", "sxy", "szz"),
                     "plane_strain": ("sxx", "syy", "sxy", "szz"),
                     "axisymmetric": ("srr", "szz", "srz", "shoop")}
STRAIN_COMPONENTS = {"plane_stress": ("exx", "eyy", "gxy", "ezz"),
                     "plane_strain": ("exx", "eyy", "gxy", "ezz"),
                     "axisymmetric": ("err", "ezz", "grz", "ehoop")}
TENSOR_INDEX = {"plane_stress": {"sxx": (0, 0), "syy": (1, 1), "sxy": (0, 1), "szz": (2, 2)},
                "plane_strain": {"sxx": (0, 0), "syy": (1, 1), "sxy": (0, 1), "szz": (2, 2)},
                "axisymmetric": {"srr": (0, 0), "szz": (1, 1), "srz": (0, 1), "shoop": (2, 2)}}


# ---------------------------------------------------------------------------
# Material
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Material:
    """Isotropic linear-elastic material: Young's modulus ``E`` > 0 and
    Poisson's ratio ``-1 < nu < 0.5``."""

    E: float
    nu: float
    name: str = ""

    def __post_init__(self):
        if not (np.isfinite(self.E) and self.E > 0):
            raise ValueError(f"Material {self.name!r}: E must be a positive number, got {self.E}")
        if not (np.isfinite(self.nu) and -1.0 < self.nu < 0.5):
            raise ValueError(f"Material {self.name!r}: nu must lie in (-1, 0.5), got {self.nu}")

    @property
    def lame(self) -> tuple[float, float]:
        """Lamé constants ``λ = E ν / ((1 + ν)(1 - 2ν))``, ``μ = E / (2 (1 + ν))``."""
        E, nu = float(self.E), float(self.nu)
        return E * nu / ((1 + nu) * (1 - 2 * nu)), E / (2 * (1 + nu))

    def matrix(self, analysis: str) -> np.ndarray:
        """Elasticity matrix ``D`` for the strain vector of ``analysis``
        (3x3 for plane problems, 4x4 axisymmetric); plane stress uses
        ``λ* = 2 λ μ / (λ + 2 μ)`` in place of ``λ`` (Timoshenko & Goodier §16)."""
        lam, mu = self.lame
        if analysis == "plane_stress":
            lam = 2 * lam * mu / (lam + 2 * mu)
        if analysis in ("plane_stress", "plane_strain"):
            return np.array([[lam + 2 * mu, lam, 0.0], [lam, lam + 2 * mu, 0.0], [0.0, 0.0, mu]])
        if analysis == "axisymmetric":
            a = lam + 2 * mu
            return np.array([[a, lam, 0.0, lam], [lam, a, 0.0, lam], [0.0, 0.0, mu, 0.0], [lam, lam, 0.0, a]])
        raise ValueError(f"analysis must be one of {ANALYSES}, got {analysis!r}")


# ---------------------------------------------------------------------------
# Loads and supports (plain records; resolved against a mesh by solve())
# ---------------------------------------------------------------------------
def _axis(along) -> int:
    if along in (0, "x", "r"):
        return 0
    if along in (1, "y", "z"):
        return 1
    raise ValueError(f"'along' must be 0/'x'/'r' or 1/'y'/'z', got {along!r}")


@dataclass(frozen=True)
class Traction:
    """Surface traction on a named edge (force per area):
    ``t(x) = value + gradient * (x[along] - origin)``.

    ``value`` and ``gradient`` are 2-vectors; ``gradient=None`` gives a
    uniform traction.  Pure bending of a bar end at ``x = L`` with depth
    ``h`` centred on ``y = 0`` and surface stress ``σ_b`` is
    ``Traction("end", (0, 0), gradient=(2 σ_b / h, 0), along="y")``.
    """

    edge: object
    value: tuple = (0.0, 0.0)
    gradient: tuple | None = None
    along: object = 1
    origin: float = 0.0


@dataclass(frozen=True)
class Pressure:
    """Normal pressure on a named edge, positive pushing into the body
    (traction ``-p n`` with ``n`` the outward normal):
    ``p(x) = value + gradient * (x[along] - origin)``."""

    edge: object
    value: float = 0.0
    gradient: float = 0.0
    along: object = 1
    origin: float = 0.0


@dataclass(frozen=True)
class PointLoad:
    """Concentrated force ``(fx, fy)`` at one node: a node row number, a
    named point, or coordinates ``(x, y)`` of a node (matched within 1e-9 of
    the model size)."""

    where: object
    force: tuple = (0.0, 0.0)


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


# ---------------------------------------------------------------------------
# Edges: locating them in cells and integrating along them
# ---------------------------------------------------------------------------
def _as_edges(edges, label="edges") -> np.ndarray:
    e = np.asarray(edges)
    if e.ndim != 2 or e.shape[1] not in (2, 3) or len(e) == 0:
        raise ValueError(f"{label}: expected a non-empty array of edge node tuples (m, 2) or (m, 3), got shape {e.shape}")
    if not np.issubdtype(e.dtype, np.integer):
        raise ValueError(f"{label}: edge node numbers must be integers")
    return e.astype(np.int64)


def locate_edges(mesh: Mesh, edges, label="edges") -> list[tuple[str, int, np.ndarray, np.ndarray]]:
    """Find the cell and local edge of every edge node tuple.

    Each tuple is matched by its two corner nodes, first in the given
    direction (as the mesher stores them, counter-clockwise for their cell),
    then reversed; a middle node, when given, must be the cell's middle node
    of that edge.  Returns ``[(block, local edge j, edge rows, cells)]``.
    """
    e = _as_edges(edges, label)
    n = mesh.nnodes
    if e.min() < 0 or e.max() >= n:
        raise ValueError(f"{label}: node number out of range 0..{n - 1}")
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
                        raise ValueError(f"{label}: edge {r} {e[r].tolist()} has a middle node that is not the "
                                         f"middle node of that edge in its cell")
                found[rows] = True
                out.append((b.name, j, rows, cells))
    if not found.all():
        r = int(np.flatnonzero(~found)[0])
        raise ValueError(f"{label}: edge {r} {e[r].tolist()} is not an edge of any cell "
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
            raise ValueError(f"{label}: an edge of zero length in block {name}")
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
        raise ValueError(f"edge_integral: values have {len(v)} rows, the mesh has {mesh.nnodes} nodes")
    total = np.zeros(v.shape[1])
    for g in edge_quadrature(mesh, edges, npoints):
        vq = np.einsum("gk,mkc->mgc", g["N"], v[g["conn"]])
        if not np.isfinite(vq).all():
            raise ValueError("edge_integral: values along the edges are not finite")
        wq = g["ds"] if weight is None else g["ds"] * np.asarray(weight(g["x"]), dtype=float)
        total += np.einsum("mgc,mg->c", vq, wq)
    return total[0] if scalar else total


# ---------------------------------------------------------------------------
# Solution
# ---------------------------------------------------------------------------
@dataclass(eq=False)
class Solution:
    """Result of :func:`solve`.

    Attributes
    ----------
    mesh : Mesh
    analysis : str
    u : (n, 2) nodal displacements (NaN at nodes in no cell)
    stress, strain : GaussField at the integration points of ``rule``
        (components in :data:`STRESS_COMPONENTS` / :data:`STRAIN_COMPONENTS`)
    reactions : (n, 2) support forces ``K u - f`` at supported nodes, zero elsewhere
    forces : (n, 2) applied nodal forces
    strain_energy : ``½ uᵀ K u``
    info : sizes and times in seconds (``time_assembly``: element matrices,
        sparse assembly and support reduction; ``time_factorisation``;
        ``time_pivot_check``: reading the factor's pivots for the mechanism
        check; ``time_solve``: triangular solves; ``time_recovery``: stresses)
    """

    mesh: Mesh
    analysis: str
    u: np.ndarray
    stress: GaussField
    strain: GaussField
    reactions: np.ndarray
    forces: np.ndarray
    strain_energy: float
    thickness: float | None
    info: dict = field(default_factory=dict)
    edges: dict = field(default_factory=dict, repr=False)
    points: dict = field(default_factory=dict, repr=False)

    def reaction(self, where) -> np.ndarray:
        """Total support force (2,) over the nodes of a named edge or point
        (or an array of node rows)."""
        nodes = _nodes_of(where, self.mesh, self.edges, self.points, "reaction")
        return self.reactions[nodes].sum(axis=0)

    def __repr__(self):
        i = self.info
        return (f"Solution({self.analysis}, {i.get('ndof')} dof ({i.get('nfree')} free), "
                f"max |u| {np.nanmax(np.abs(self.u)):.4g}, strain energy {self.strain_energy:.6g}, "
                f"stress at {self.info.get('rule')} rule)")


# ---------------------------------------------------------------------------
# Resolving names
# ---------------------------------------------------------------------------
def _nodes_of(where, mesh, edges, points, label) -> np.ndarray:
    if isinstance(where, str):
        if where in edges:
            return np.unique(_as_edges(edges[where], f"edge {where!r}"))
        if where in points:
            return np.atleast_1d(np.asarray(points[where], dtype=np.int64))
        raise ValueError(f"{label}: no edge or point named {where!r}; edges: {sorted(edges)}, points: {sorted(points)}")
    if isinstance(where, (int, np.integer)):
        nodes = np.array([int(where)])
    else:
        a = np.asarray(where)
        if a.dtype == bool:
            if a.shape != (mesh.nnodes,):
                raise ValueError(f"{label}: a boolean node mask must have {mesh.nnodes} entries")
            nodes = np.flatnonzero(a)
        elif np.issubdtype(a.dtype, np.integer):
            nodes = np.unique(a.ravel())
        elif a.shape == (2,):
            return np.array([_node_at(mesh, a, label)])
        else:
            raise ValueError(f"{label}: give a name, node rows, a boolean mask or (x, y) coordinates, got {where!r}")
    if nodes.size == 0:
        raise ValueError(f"{label}: empty node set")
    if nodes.min() < 0 or nodes.max() >= mesh.nnodes:
        raise ValueError(f"{label}: node row out of range 0..{mesh.nnodes - 1}")
    return nodes


def _node_at(mesh, xy, label):
    d = np.linalg.norm(mesh.nodes - np.asarray(xy, dtype=float), axis=1)
    i = int(np.argmin(d))
    size = float(np.ptp(mesh.nodes, axis=0).max())
    if d[i] > 1e-9 * size:
        raise ValueError(f"{label}: no node at {tuple(np.asarray(xy).tolist())} (nearest node {i} at distance {d[i]:.3g})")
    return i


def _edge_of(where, edges, label):
    if isinstance(where, str):
        if where not in edges:
            raise ValueError(f"{label}: no edge named {where!r}; edges: {sorted(edges)}")
        return _as_edges(edges[where], f"edge {where!r}")
    return _as_edges(where, label)


def _normal_dir(normal, label):
    if isinstance(normal, str):
        return np.array({"x": (1.0, 0.0), "r": (1.0, 0.0), "y": (0.0, 1.0), "z": (0.0, 1.0)}[normal]) \
            if normal in ("x", "y", "r", "z") else _bad(f"{label}: normal must be 'x', 'y' or a 2-vector, got {normal!r}")
    n = np.asarray(normal, dtype=float)
    if n.shape != (2,) or not np.isfinite(n).all() or np.linalg.norm(n) == 0:
        raise ValueError(f"{label}: normal must be a non-zero 2-vector, got {normal!r}")
    return n / np.linalg.norm(n)


def _bad(msg):
    raise ValueError(msg)


# ---------------------------------------------------------------------------
# Loads -> nodal force vector
# ---------------------------------------------------------------------------
def _load_vector(mesh, loads, edges, points, analysis, thickness):
    f = np.zeros((mesh.nnodes, 2))
    for i, ld in enumerate(loads):
        label = f"load {i} ({type(ld).__name__})"
        if isinstance(ld, (Traction, Pressure)):
            e = _edge_of(ld.edge, edges, label)
            ax = _axis(ld.along)
            for g in edge_quadrature(mesh, e, label=label):
                x = g["x"]
                c = x[..., ax] - float(ld.origin)
                if isinstance(ld, Traction):
                    t0 = np.asarray(ld.value, dtype=float)
                    if t0.shape != (2,):
                        raise ValueError(f"{label}: value must be a 2-vector (tx, ty), got {ld.value!r}")
                    t = np.broadcast_to(t0, x.shape).copy()
                    if ld.gradient is not None:
                        gr = np.asarray(ld.gradient, dtype=float)
                        if gr.shape != (2,):
                            raise ValueError(f"{label}: gradient must be a 2-vector, got {ld.gradient!r}")
                        t = t + c[..., None] * gr
                else:
                    p = float(ld.value) + float(ld.gradient) * c
                    t = -p[..., None] * g["normal"]
                if not np.isfinite(t).all():
                    raise ValueError(f"{label}: non-finite traction")
                w = g["ds"] * (2 * np.pi * x[..., 0] if analysis == "axisymmetric" else thickness)
                fe = np.einsum("gk,mgi,mg->mki", g["N"], t, w)
                np.add.at(f, g["conn"].ravel(), fe.reshape(-1, 2))
        elif isinstance(ld, PointLoad):
            node = _nodes_of(ld.where, mesh, {}, points, label)
            if node.size != 1:
                raise ValueError(f"{label}: a point load acts on one node, {ld.where!r} names {node.size}")
            F = np.asarray(ld.force, dtype=float)
            if F.shape != (2,) or not np.isfinite(F).all():
                raise ValueError(f"{label}: force must be a finite 2-vector, got {ld.force!r}")
            f[node[0]] += F
        else:
            raise ValueError(f"{label}: unknown load type; use Traction, Pressure or PointLoad")
    return f


# ---------------------------------------------------------------------------
# Supports -> constraint transformation u = T v + u_p
# ---------------------------------------------------------------------------
def _constraint_rows(mesh, supports, edges, points):
    """Every constraint as (node, unit direction n, value g): n·u = g."""
    nodes_l, dirs_l, vals_l = [], [], []
    X = mesh.nodes
    for i, s in enumerate(supports):
        label = f"support {i} ({type(s).__name__})"
        if isinstance(s, Fixed):
            nodes = _nodes_of(s.where, mesh, edges, points, label)
            for d in ((1.0, 0.0), (0.0, 1.0)):
                nodes_l.append(nodes); dirs_l.append(np.tile(d, (len(nodes), 1))); vals_l.append(np.zeros(len(nodes)))
        elif isinstance(s, Roller):
            if s.normal is not None:
                nodes = _nodes_of(s.where, mesh, edges, points, label)
                nrm = np.tile(_normal_dir(s.normal, label), (len(nodes), 1))
            else:
                if isinstance(s.where, str) and s.where in points and s.where not in edges:
                    raise ValueError(f"{label}: a roller at point {s.where!r} needs normal='x', 'y' or a vector")
                e = _edge_of(s.where, edges, label)
                acc = np.zeros((mesh.nnodes, 2))
                for g in edge_quadrature(mesh, e, npoints=2, label=label):
                    nm = g["normal"].mean(axis=1)                       # (m, 2) per edge
                    np.add.at(acc, e[g["rows"]].ravel(), np.repeat(nm, e.shape[1], axis=0))
                nodes = np.unique(e)
                nrm = acc[nodes]
                ln = np.linalg.norm(nrm, axis=1)
                if (ln < 1e-8).any():
                    raise ValueError(f"{label}: the edge normal is undefined at node {int(nodes[np.argmin(ln)])} "
                                     "(edges folding back); give normal=...")
                nrm = nrm / ln[:, None]
            nrm = np.where(np.abs(nrm) < 1e-12, 0.0, nrm)
            nrm /= np.linalg.norm(nrm, axis=1)[:, None]
            nodes_l.append(nodes); dirs_l.append(nrm); vals_l.append(np.zeros(len(nodes)))
        elif isinstance(s, Displacement):
            nodes = _nodes_of(s.where, mesh, edges, points, label)
            if s.ux is None and s.uy is None:
                raise ValueError(f"{label}: give ux and/or uy")
            for comp, val in ((0, s.ux), (1, s.uy)):
                if val is None:
                    continue
                v = np.asarray(val(X[nodes]) if callable(val) else np.full(len(nodes), float(val)), dtype=float)
                if v.shape != (len(nodes),) or not np.isfinite(v).all():
                    raise ValueError(f"{label}: u{'xy'[comp]} must give {len(nodes)} finite values")
                d = np.zeros((len(nodes), 2)); d[:, comp] = 1.0
                nodes_l.append(nodes); dirs_l.append(d); vals_l.append(v)
        else:
            raise ValueError(f"{label}: unknown support type; use Fixed, Roller or Displacement")
    if not nodes_l:
        raise ValueError("the model has no supports: it is free to move as a rigid body; add Fixed, Roller "
                         "or Displacement supports")
    return np.concatenate(nodes_l), np.concatenate(dirs_l), np.concatenate(vals_l)


def _reduce(mesh, nodes, dirs, vals):
    """Per node: P = Σ n nᵀ, r = Σ n g.  Rank 0: free; rank 1: free only
    along the tangent; rank 2: fixed.  Returns T (2n, nfree) sparse, u_p (2n,)."""
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
        raise ValueError(f"conflicting supports at node {int(nodes[k])}: the prescribed displacements cannot all hold "
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


def _check_rigid_modes(mesh, kind_nodes, nodes, dirs, analysis, used):
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
            raise ValueError(f"{where} is not supported against rigid-body motion: free mode(s) "
                             f"{'; '.join(desc)}. Add supports (Fixed, Roller, Displacement) that stop it.")


# ---------------------------------------------------------------------------
# Element matrices, vectorised over cells and points
# ---------------------------------------------------------------------------
def _b_matrix(dNdx, N, r, analysis):
    """B (c, q, nε, 2k) for dof order (node, component)."""
    c, q, k, _ = dNdx.shape
    ne = 4 if analysis == "axisymmetric" else 3
    B = np.zeros((c, q, ne, k, 2))
    B[:, :, 0, :, 0] = dNdx[..., 0]
    B[:, :, 1, :, 1] = dNdx[..., 1]
    B[:, :, 2, :, 0] = dNdx[..., 1]
    B[:, :, 2, :, 1] = dNdx[..., 0]
    if ne == 4:
        B[:, :, 3, :, 0] = N[None, :, :] / r[:, :, None]
    return B.reshape(c, q, ne, 2 * k)


def _block_setup(mesh, b, rule, analysis, thickness, materials):
    g = mesh.geometry(b.name, rule, gradients=True)
    x = g.x_cqi
    if analysis == "axisymmetric":
        dV = g.dV_cq * 2 * np.pi * x[..., 0]
    else:
        dV = g.dV_cq * thickness
    regs = np.unique(b.regions)
    Dtab = np.stack([materials[int(rg)].matrix(analysis) for rg in regs])
    Didx = np.searchsorted(regs, b.regions)
    return g, dV, Dtab, Didx


def element_stiffness(mesh, b, rule, analysis, thickness, materials):
    """Element stiffness matrices (c, 2k, 2k) ``Σ_q B^T D B dV`` of one block."""
    g, dV, Dtab, Didx = _block_setup(mesh, b, rule, analysis, thickness, materials)
    m, q, k, _ = g.dNdx_cqki.shape
    ne = Dtab.shape[1]
    Ke = np.empty((m, 2 * k, 2 * k))
    for sl in chunk_slices(m, q * ne * 2 * k * 3):
        B = _b_matrix(g.dNdx_cqki[sl], g.N_qk, g.x_cqi[sl, :, 0], analysis)      # (c, q, I, a)
        DB = np.matmul(Dtab[Didx[sl]][:, None], B)                                 # D_IJ B_Ja
        DB *= dV[sl, :, None, None]
        mc = B.shape[0]
        np.matmul(B.reshape(mc, q * ne, 2 * k).transpose(0, 2, 1), DB.reshape(mc, q * ne, 2 * k), out=Ke[sl])
    return Ke


def _recover(mesh, b, rule, analysis, thickness, materials, u):
    g, dV, Dtab, Didx = _block_setup(mesh, b, rule, analysis, thickness, materials)
    m, q, k, _ = g.dNdx_cqki.shape
    ne = Dtab.shape[1]
    ue = u[b.cells].reshape(m, 2 * k)
    eps = np.empty((m, q, ne))
    for sl in chunk_slices(m, q * ne * 2 * k * 2):
        B = _b_matrix(g.dNdx_cqki[sl], g.N_qk, g.x_cqi[sl, :, 0], analysis)
        eps[sl] = np.einsum("cqIa,ca->cqI", B, ue[sl], optimize=True)
    sig = np.einsum("cIJ,cqJ->cqI", Dtab[Didx], eps, optimize=True)
    if analysis == "axisymmetric":
        return sig, eps
    regs = np.unique(b.regions)
    nu = np.array([materials[int(rg)].nu for rg in regs])[Didx][:, None]
    E = np.array([materials[int(rg)].E for rg in regs])[Didx][:, None]
    if analysis == "plane_strain":
        szz = nu * (sig[..., 0] + sig[..., 1])
        ezz = np.zeros_like(szz)
    else:
        szz = np.zeros_like(sig[..., 0])
        ezz = -nu / E * (sig[..., 0] + sig[..., 1])
    return np.concatenate([sig, szz[..., None]], -1), np.concatenate([eps, ezz[..., None]], -1)


def _materials_by_region(mesh, materials):
    regions = [int(r) for r in mesh.regions]
    if isinstance(materials, Material):
        return {r: materials for r in regions}
    if not isinstance(materials, dict) or not materials:
        raise ValueError("materials must be a Material or a dict {region id: Material}")
    out = {}
    for k, v in materials.items():
        if not isinstance(v, Material):
            raise ValueError(f"materials[{k!r}] is not a Material")
        out[int(k)] = v
    missing = [r for r in regions if r not in out]
    if missing:
        raise ValueError(f"no material for region(s) {missing}; the mesh has regions {regions}")
    extra = [r for r in out if r not in regions]
    if extra:
        raise ValueError(f"materials given for region(s) {extra}, which the mesh does not have (regions {regions})")
    return out


# ---------------------------------------------------------------------------
# solve
# ---------------------------------------------------------------------------
def solve(model, materials=None, analysis=None, thickness=None, loads=None, supports=None, rule="full",
          edges=None, points=None) -> Solution:
    """Solve a 2D linear-elastic problem.

    Parameters
    ----------
    model : Mesh, or a model object from :mod:`toolkit.models` (with
        ``mesh``, ``edges``, ``points``, ``analysis``, ``thickness``,
        ``loads``, ``supports``, ``material``); arguments given here override
        the model's.
    materials : Material or {region id: Material}
    analysis : ``"plane_stress"``, ``"plane_strain"`` or ``"axisymmetric"``
    thickness : plane problems only (default 1.0)
    loads : list of Traction, Pressure, PointLoad
    supports : list of Fixed, Roller, Displacement
    rule : ``"full"`` or ``"reduced"`` (or a point count), for the stiffness
        and the stress points
    edges, points : named edges {name: (m, 2|3) node tuples} and points
        {name: node row}, added to the model's

    Returns
    -------
    Solution

    Raises
    ------
    ValueError for bad input, supports that leave a rigid-body mode free, or
    a singular stiffness (a mechanism, e.g. hourglass modes of reduced
    integration, or a part held by nothing).
    """
    t_start = time.perf_counter()
    if isinstance(model, Mesh):
        mesh, m_edges, m_points = model, {}, {}
        m_analysis = m_thick = m_loads = m_supports = m_mat = None
    elif hasattr(model, "mesh") and isinstance(model.mesh, Mesh):
        mesh = model.mesh
        m_edges = dict(getattr(model, "edges", {}) or {})
        m_points = dict(getattr(model, "points", {}) or {})
        m_analysis = getattr(model, "analysis", None)
        m_thick = getattr(model, "thickness", None)
        m_loads = getattr(model, "loads", None)
        m_supports = getattr(model, "supports", None)
        m_mat = getattr(model, "material", None)
    else:
        raise ValueError("solve needs a Mesh or a model object with a .mesh")
    if mesh.dim != 2:
        raise ValueError(f"solve handles 2D meshes; this mesh is {mesh.dim}D")
    for b in mesh.blocks:
        if b.element.shape not in ("tri", "quad"):
            raise ValueError(f"block {b.name}: not a 2D element type")
    edges_all = {**m_edges, **(edges or {})}
    points_all = {**m_points, **(points or {})}
    analysis = analysis if analysis is not None else m_analysis
    if analysis not in ANALYSES:
        raise ValueError(f"analysis must be one of {ANALYSES}, got {analysis!r}")
    if analysis == "axisymmetric":
        if thickness is not None:
            raise ValueError("thickness does not apply to an axisymmetric analysis (integrals are over the full "
                             "ring, 2πr); leave it out")
        thick = None
        if (mesh.nodes[mesh.used_nodes(), 0] < -1e-12 * np.ptp(mesh.nodes[:, 0])).any():
            raise ValueError("axisymmetric analysis: coordinate 0 is the radius and must be >= 0; "
                             f"node {int(np.argmin(mesh.nodes[:, 0]))} has r = {mesh.nodes[:, 0].min():.4g}")
    else:
        thick = float(thickness if thickness is not None else (m_thick if m_thick is not None else 1.0))
        if not (np.isfinite(thick) and thick > 0):
            raise ValueError(f"thickness must be positive, got {thick}")
    materials = materials if materials is not None else m_mat
    if materials is None:
        raise ValueError("no material: pass materials=Material(E, nu) or {region: Material}")
    mats = _materials_by_region(mesh, materials)
    loads = list(loads if loads is not None else (m_loads or []))
    supports = list(supports if supports is not None else (m_supports or []))
    if isinstance(rule, str) and rule not in ("full", "reduced"):
        raise ValueError(f"rule must be 'full', 'reduced' or a point count, got {rule!r}")

    n = mesh.nnodes
    used = mesh.used_nodes()
    info = {"analysis": analysis, "rule": rule, "nnodes": n, "ncells": mesh.ncells, "ndof": 2 * n}

    # loads and supports
    f = _load_vector(mesh, loads, edges_all, points_all, analysis, thick)
    cn, cd, cv = _constraint_rows(mesh, supports, edges_all, points_all)
    if (~used[cn]).any():
        raise ValueError(f"a support acts on node {int(cn[~used[cn]][0])}, which belongs to no cell")
    if (np.abs(f[~used]) > 0).any():
        raise ValueError(f"a load acts on node {int(np.flatnonzero((np.abs(f) > 0).any(1) & ~used)[0])}, "
                         "which belongs to no cell")
    _check_rigid_modes(mesh, None, cn, cd, analysis, used)
    T, up, kind, selection = _reduce(mesh, cn, cd, cv)
    # nodes in no cell: no stiffness, no unknowns (their displacement is NaN)
    if not used.all():
        keep_cols = np.ones(T.shape[1], dtype=bool)
        unused_dofs = np.flatnonzero(np.repeat(~used, 2))
        Tc = T.tocsr()
        drop = np.unique(Tc[unused_dofs].indices)
        keep_cols[drop] = False
        T = T[:, keep_cols]
        info["unused_nodes"] = int((~used).sum())

    # stiffness
    t0 = time.perf_counter()
    cdofs, mats_e = [], []
    for b in mesh.blocks:
        Ke = element_stiffness(mesh, b, rule, analysis, thick, mats)
        m, k = b.cells.shape
        d = np.empty((m, 2 * k), dtype=np.int64 if 2 * n > 2**31 - 1 else np.int32)
        d[:, 0::2] = 2 * b.cells
        d[:, 1::2] = 2 * b.cells + 1
        cdofs.append(d); mats_e.append(Ke.reshape(m, -1))
        del Ke
    K = assemble_csr(cdofs, mats_e, 2 * n, threads=default_threads(2 * n))
    del cdofs, mats_e
    fv = f.ravel()
    rhs_full = fv - (K @ up if np.any(up) else 0.0)
    if selection:
        free = T.tocsc().indices
        Kr = K[free][:, free]
        br = rhs_full[free]
    else:
        Kr = (T.T @ K @ T).tocsr()
        br = T.T @ rhs_full
    t1 = time.perf_counter()
    info["time_assembly"] = t1 - t0
    info["nfree"] = int(Kr.shape[0])
    info["nnz"] = int(K.nnz)

    # factorise and solve
    from scipy.sparse.linalg import splu
    if Kr.shape[0] == 0:
        v = np.zeros(0)
        t2 = t2c = t3 = time.perf_counter()
    else:
        Kc = Kr.tocsc()
        try:
            lu = splu(Kc, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0, options={"SymmetricMode": True})
        except RuntimeError as exc:
            raise ValueError(f"the stiffness matrix is singular ({exc}): the model is a mechanism (parts held by "
                             "nothing, or zero-energy modes of reduced integration); check supports and rule") from None
        t2 = time.perf_counter()
        piv = np.abs(lu.U.diagonal())
        t2b = time.perf_counter()
        if not np.isfinite(piv).all() or piv.min() <= 1e-11 * piv.max():
            raise ValueError(f"the stiffness matrix is singular (smallest pivot {piv.min():.3g} against largest "
                             f"{piv.max():.3g}): the model is a mechanism (zero-energy modes of reduced integration, "
                             "or parts held by nothing); check supports and rule")
        t2c = time.perf_counter()
        v = lu.solve(br)
        t3 = time.perf_counter()
        info["time_pivot_check"] = t2b - t2
        res = np.linalg.norm(Kr @ v - br)
        bn = np.linalg.norm(br)
        info["relative_residual"] = float(res / bn) if bn > 0 else float(res)
        if bn > 0 and res > 1e-6 * bn:
            raise ValueError(f"the solve did not settle (relative residual {res / bn:.3g}): the stiffness is "
                             "ill-conditioned or singular; check supports, materials and the mesh")
    info["time_factorisation"] = t2 - t1
    info["time_solve"] = t3 - t2c
    u = (T @ v + up)
    fint = K @ u
    strain_energy = 0.5 * float(u @ fint)
    U = u.reshape(n, 2).copy()
    R = (fint - fv).reshape(n, 2)
    R[kind == 0] = 0.0
    U[~used] = np.nan

    # stresses and strains at the integration points
    sig, eps = {}, {}
    for b in mesh.blocks:
        s_, e_ = _recover(mesh, b, rule, analysis, thick, mats, np.nan_to_num(U))
        sig[b.name], eps[b.name] = s_, e_
    stress = GaussField(mesh, sig, STRESS_COMPONENTS[analysis], points=rule, name="stress")
    strain = GaussField(mesh, eps, STRAIN_COMPONENTS[analysis], points=rule, name="strain")
    t4 = time.perf_counter()
    info["time_recovery"] = t4 - t3
    info["time_total"] = t4 - t_start
    return Solution(mesh, analysis, U, stress, strain, R, f, strain_energy, thick, info, edges_all, points_all)
