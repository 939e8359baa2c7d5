"""Point location: which cell holds a point and where in it (natural
coordinates), found once per mesh by :class:`PointLocator`, and the sparse
operator ``A`` (points x rows of a :class:`~toolkit.core.fields.NodalField`)
with ``A @ nodal.values`` = the field at the points, ``u(x) = sum_a N_a(xi)
u_a`` with the element's own shape functions.  Moving a path costs one sparse
product.
"""
from __future__ import annotations

from dataclasses import dataclass
import itertools
import weakref

import numpy as np
import scipy.sparse as sp

from toolkit.errors import InputError
from toolkit.core.elements import ELEMENTS
from toolkit.core.fields import NodalField, RowLayout
from toolkit.core.mesh import Mesh, inverse_map
from toolkit.core.numbering import DofMap

__all__ = ["Location", "PointLocator", "evaluation_operator", "check_outside"]


@dataclass(frozen=True, eq=False)
class Location:
    """Where points lie in a mesh.

    ``block`` (p,) index into ``mesh.blocks`` (-1: outside every cell),
    ``cell`` (p,) row in that block (-1 outside), ``xi`` (p, dim) natural
    coordinates (NaN outside), ``points`` (p, dim) the physical points.
    """

    mesh: Mesh
    points: np.ndarray
    block: np.ndarray
    cell: np.ndarray
    xi: np.ndarray

    def __len__(self):
        return len(self.block)

    @property
    def found(self) -> np.ndarray:
        return self.block >= 0

    @property
    def names(self) -> np.ndarray:
        """Block name of every point (``""`` outside)."""
        names = np.array([b.name for b in self.mesh.blocks] + [""], dtype=object)
        return names[self.block]

    @property
    def cell_ids(self) -> np.ndarray:
        """The mesh's element number of the cell holding each point (-1 outside)."""
        out = np.full(len(self), -1, dtype=np.int64)
        for bi, b in enumerate(self.mesh.blocks):
            sel = self.block == bi
            out[sel] = b.ids[self.cell[sel]]
        return out

    @property
    def regions(self) -> np.ndarray:
        """Region of the cell holding each point (meaningless where not found)."""
        out = np.zeros(len(self), dtype=np.int64)
        for bi, b in enumerate(self.mesh.blocks):
            sel = self.block == bi
            out[sel] = b.regions[self.cell[sel]]
        return out

    def key(self) -> np.ndarray:
        """One integer per point naming its cell across blocks (-1 outside)."""
        off = np.cumsum([0] + [len(b) for b in self.mesh.blocks])
        return np.where(self.found, off[np.maximum(self.block, 0)] + self.cell, -1)

    def subset(self, idx) -> "Location":
        return Location(self.mesh, self.points[idx], self.block[idx], self.cell[idx], self.xi[idx])

    @staticmethod
    def concat(parts) -> "Location":
        parts = list(parts)
        return Location(parts[0].mesh, *(np.concatenate([getattr(p, a) for p in parts])
                                         for a in ("points", "block", "cell", "xi")))

    def outside_message(self, what="points", distances=None) -> str:
        out = np.flatnonzero(~self.found)
        i = int(out[0])
        at = f" at distance {distances[i]:.6g}" if distances is not None else ""
        xs = ", ".join(f"{v:.6g}" for v in self.points[i])
        return (f"{out.size} of {len(self)} {what} lie outside the mesh; the first is number {i}{at}, "
                f"x = ({xs}). Move it inside the mesh, or pass outside='nan' to get NaN there")


def _check_points(points, dim, name="points"):
    x = np.asarray(points, dtype=float)
    if x.ndim == 1:
        x = x[None, :]
    if x.ndim != 2 or x.shape[1] != dim:
        raise InputError(f"{name} must be shaped (p, {dim}) for this {dim}D mesh, got {np.shape(points)}")
    bad = ~np.isfinite(x).all(axis=1)
    if bad.any():
        raise InputError(f"{name}: row {int(np.flatnonzero(bad)[0])} is not finite ({int(bad.sum())} such rows)")
    return x


def check_outside(outside):
    """Check the ``outside=`` option: ``"raise"`` or ``"nan"``."""
    if outside not in ("raise", "nan"):
        raise InputError(f"outside must be 'raise' or 'nan', got {outside!r}")


_LOCATORS: "weakref.WeakKeyDictionary[Mesh, PointLocator]" = weakref.WeakKeyDictionary()
_LINEAR = {"quad": "quad4", "tri": "tri3", "hex": "hex8", "tet": "tet4"}
_LEBESGUE: dict = {}


def _higher_node_bound(et) -> float:
    """``max_xi sum_{a not a corner} |N_a(xi)|`` over the reference element
    (on a 21-point-per-direction lattice, plus 10 %)."""
    if et.name not in _LEBESGUE:
        t = np.linspace(0.0, 1.0, 21) if et.is_simplex else np.linspace(-1.0, 1.0, 21)
        g = np.stack(np.meshgrid(*([t] * et.dim), indexing="ij"), -1).reshape(-1, et.dim)
        if et.is_simplex:
            g = g[g.sum(axis=1) <= 1 + 1e-12]
        N = et.shape_functions(g)
        _LEBESGUE[et.name] = 1.1 * float(np.abs(N[:, et.ncorners:]).sum(axis=1).max())
    return _LEBESGUE[et.name]


def _cell_boxes(mesh, b):
    """Axis-aligned boxes that hold every cell of block ``b``.

    Linear cells lie in the convex hull of their nodes.  A higher-order cell
    is ``x(xi) = x_lin(xi) + sum_a N_a(xi) d_a``, with ``x_lin`` the map
    through its corners alone (inside the corners' box) and ``d_a`` the
    offset of each other node from ``x_lin`` at that node, so it lies within
    the corners' box enlarged by ``max_xi sum |N_a| * max |d_a|``.
    """
    et = b.element
    xe = mesh.nodes[b.cells]
    corners = xe[:, :et.ncorners]
    l, h = corners.min(axis=1), corners.max(axis=1)
    pad = 1e-9 * (h - l).max(axis=1, keepdims=True) + 1e-13 * (np.abs(xe).max() + 1.0)
    if et.nnodes > et.ncorners:
        lin = ELEMENTS[_LINEAR[et.shape]]
        Nl = lin.shape_functions(et.nodes[et.ncorners:])                 # (higher nodes, corners)
        dev = xe[:, et.ncorners:] - np.einsum("hc,mci->mhi", Nl, corners)
        pad = pad + _higher_node_bound(et) * np.abs(dev).max(axis=(1, 2))[:, None]
    return l - pad, h + pad


class PointLocator:
    """Finds the cell and natural coordinates of points; built once per mesh.

    Method: every cell's axis-aligned bounding box (of its corners, enlarged
    by a bound on how far curved quadratic edges and faces can bulge, see
    :func:`_cell_boxes`) is indexed by a :class:`scipy.spatial.cKDTree` over
    the box centres, one tree per octave of box size so that graded meshes keep few
    candidates per point.  For each point the candidate cells whose boxes hold
    it are tried in (block, cell) order with the vectorised Newton inverse
    isoparametric map (:func:`toolkit.core.mesh.inverse_map`) over all (point,
    candidate) pairs at once; the first candidate with ``xi`` inside the
    reference element (``element.contains(xi, tol)``) holds the point.

    Parameters
    ----------
    mesh : Mesh
    tol : float
        Tolerance on the natural coordinates (reference element ``[-1, 1]``
        or the unit simplex); points this close outside a cell still count
        as inside it (default 1e-8).
    """

    def __init__(self, mesh: Mesh, tol: float = 1e-8):
        from scipy.spatial import cKDTree

        if not isinstance(mesh, Mesh):
            raise InputError("PointLocator needs a Mesh")
        if not (tol >= 0 and np.isfinite(tol)):
            raise InputError(f"tol must be a finite number >= 0, got {tol}")
        self.mesh = mesh
        self.tol = float(tol)
        lo, hi, blk, cel, reg = [], [], [], [], []
        for bi, b in enumerate(mesh.blocks):
            l, h = _cell_boxes(mesh, b)
            lo.append(l)
            hi.append(h)
            blk.append(np.full(len(b), bi, dtype=np.int64))
            cel.append(np.arange(len(b), dtype=np.int64))
            reg.append(b.regions)
        self._lo, self._hi = np.concatenate(lo), np.concatenate(hi)
        self._block, self._cell, self._region = np.concatenate(blk), np.concatenate(cel), np.concatenate(reg)
        centre = 0.5 * (self._lo + self._hi)
        radius = 0.5 * np.linalg.norm(self._hi - self._lo, axis=1)
        octave = np.floor(np.log2(radius / radius.min())).astype(np.int64)
        self._trees = []
        for o in np.unique(octave):
            idx = np.flatnonzero(octave == o)
            self._trees.append((cKDTree(centre[idx]), float(radius[idx].max()) * (1 + 1e-9), idx))

    @classmethod
    def for_mesh(cls, mesh: Mesh) -> "PointLocator":
        """The locator of ``mesh`` with the default tolerance, built on first
        use and kept (weakly, for the mesh's lifetime) for later calls."""
        loc = _LOCATORS.get(mesh)
        if loc is None:
            loc = cls(mesh)
            _LOCATORS[mesh] = loc
        return loc

    def __repr__(self):
        return (f"PointLocator({len(self._cell)} cells in {len(self._trees)} size class(es), "
                f"tol {self.tol:g})")

    # -- candidates ----------------------------------------------------------
    def _candidates(self, x, region=None):
        pts, cands = [], []
        for tree, r, idx in self._trees:
            lists = tree.query_ball_point(x, r)
            counts = np.fromiter(map(len, lists), dtype=np.int64, count=len(lists))
            flat = np.fromiter(itertools.chain.from_iterable(lists), dtype=np.int64, count=int(counts.sum()))
            pts.append(np.repeat(np.arange(len(x)), counts))
            cands.append(idx[flat])
        p, g = np.concatenate(pts), np.concatenate(cands)
        inbox = np.all((x[p] >= self._lo[g]) & (x[p] <= self._hi[g]), axis=1)
        if region is not None:
            inbox &= self._region[g] == region
        p, g = p[inbox], g[inbox]
        order = np.lexsort((g, p))
        return p[order], g[order]

    # -- location ------------------------------------------------------------
    def locate(self, points, region=None) -> Location:
        """Cell and natural coordinates of every point (see :class:`Location`).

        ``region``: only cells of that region count (to read one side of a
        region boundary).  Points in no cell are marked, never dropped.
        """
        mesh = self.mesh
        x = _check_points(points, mesh.dim)
        if region is not None and int(region) not in set(mesh.regions.tolist()):
            raise InputError(f"region {region} is not in the mesh; regions: {mesh.regions.tolist()}")
        p, g = self._candidates(x, None if region is None else int(region))
        xi_pair = np.full((len(p), mesh.dim), np.nan)
        inside = np.zeros(len(p), dtype=bool)
        for bi, b in enumerate(mesh.blocks):
            sel = np.flatnonzero(self._block[g] == bi)
            if not sel.size:
                continue
            et = b.element
            xe = mesh.nodes[b.cells[self._cell[g[sel]]]]
            xi, conv = inverse_map(et, xe, x[p[sel]])
            xi_pair[sel] = xi
            inside[sel] = conv & et.contains(xi, self.tol)
        hit = np.flatnonzero(inside)
        first_pts, first = np.unique(p[hit], return_index=True)
        pick = hit[first]
        block = np.full(len(x), -1, dtype=np.int64)
        cell = np.full(len(x), -1, dtype=np.int64)
        xi = np.full((len(x), mesh.dim), np.nan)
        block[first_pts] = self._block[g[pick]]
        cell[first_pts] = self._cell[g[pick]]
        xi[first_pts] = xi_pair[pick]
        return Location(mesh, x, block, cell, xi)

    # -- evaluation operator ------------------------------------------------
    def operator(self, points, region=None, rows=None, outside="raise") -> sp.csr_matrix:
        """Sparse matrix ``A`` (points x rows) with ``A @ nodal.values`` the
        nodal field at ``points``: row ``p`` holds ``N_a(xi_p)`` of the cell
        holding point ``p`` in the columns of that cell's nodes.

        ``rows``: the :class:`NodalField` (or DofMap) whose rows the columns
        address; default the rows of ``project_l2(..., across_regions=False)``.
        Where a node carries one value per region, the row of the region of
        the cell holding the point is used; ``region`` restricts the search to
        cells of one region.  ``outside="raise"`` (default): ValueError naming
        the first outside point; ``"nan"``: that row is NaN (one NaN entry in
        column 0, so products give NaN there).
        """
        check_outside(outside)
        return self.operator_at(self.locate(points, region), rows, outside)

    def operator_at(self, location: Location, rows=None, outside="raise", distances=None) -> sp.csr_matrix:
        """:meth:`operator` for points already located."""
        check_outside(outside)
        mesh = self.mesh
        if location.mesh is not mesh:
            raise InputError("the location belongs to another mesh")
        layout = RowLayout(mesh, rows if rows is not None else DofMap(mesh, across_regions=False))
        return evaluation_operator(location, layout, outside, distances)

    def evaluate(self, nodal: NodalField, points, region=None, outside="raise") -> np.ndarray:
        """``nodal`` at ``points``: (p, components)."""
        if not isinstance(nodal, NodalField):
            raise InputError("evaluate needs a NodalField")
        if nodal.mesh is not self.mesh:
            raise InputError("the nodal field belongs to another mesh than this locator")
        return self.operator(points, region, nodal, outside) @ nodal.values


def evaluation_operator(loc: Location, layout: RowLayout, outside="raise", distances=None) -> sp.csr_matrix:
    """Sparse matrix ``A`` (points x ``layout.nrows``) with ``A @ values`` the
    nodal field at the located points: row ``p`` holds ``N_a(xi_p)`` of the
    cell holding point ``p`` in the columns ``layout`` gives that cell's nodes
    (in the cell's region).  Points outside the mesh raise InputError with
    ``outside="raise"`` (``distances``, if given, name where along a path),
    or get one NaN entry in column 0 with ``outside="nan"``."""
    mesh = loc.mesh
    found = loc.found
    if not found.all() and outside == "raise":
        raise InputError(loc.outside_message("points", distances))
    r, c, v = [], [], []
    for bi, b in enumerate(mesh.blocks):
        sel = np.flatnonzero(loc.block == bi)
        if not sel.size:
            continue
        et = b.element
        N = et.shape_functions(loc.xi[sel])
        cells = loc.cell[sel]
        cols = layout.lookup(b.cells[cells], b.regions[cells][:, None])
        r.append(np.repeat(sel, et.nnodes))
        c.append(cols.ravel())
        v.append(N.ravel())
    out = np.flatnonzero(~found)
    r.append(out)
    c.append(np.zeros(out.size, dtype=np.int64))
    v.append(np.full(out.size, np.nan))
    return sp.csr_matrix((np.concatenate(v), (np.concatenate(r), np.concatenate(c))),
                         shape=(len(loc), layout.nrows))

