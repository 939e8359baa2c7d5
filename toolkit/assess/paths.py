"""Point location, paths and sampling of fields along them.

* :class:`PointLocator` — built once per mesh: finds the cell and the natural
  coordinates of any set of points and turns them into a sparse operator
  ``A`` (points x rows of a :class:`~toolkit.fields.NodalField`) with
  ``A @ nodal.values`` = the field at the points, ``u(x) = sum_a N_a(xi) u_a``
  with the element's own shape functions.  Moving a path costs one sparse
  product.
* Paths: :func:`line`, :func:`polyline`, :func:`arc` and :func:`edge_path`
  (a chain of mesh edges, following curved quadratic edges exactly as the
  elements do).  Every sample carries its distance along the path, its unit
  tangent and (in 2D) its unit normal, the tangent turned +90 degrees
  (counter-clockwise): ``n = (-t_y, t_x)``.
* :func:`sample` — a nodal field along a path, with the path-frame stresses
  ``snn = n.S.n``, ``stt = t.S.t``, ``snt = n.S.t`` and the invariants from
  :mod:`toolkit.stress`, in a :class:`PathResult`.
* :func:`raw_along` — the raw (unsmoothed) integration-point field of every
  cell the path crosses, each cell's own local field (Hinton & Campbell 1974)
  evaluated at the path points inside it: a jagged curve that jumps at every
  element boundary, the evidence beside a smoothed curve.
"""
from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass
import itertools
import weakref

import numpy as np
import scipy.sparse as sp

from toolkit.core import stress as _stress
from toolkit.core.elements import ELEMENTS, local_field_matrix
from toolkit.core.fields import GaussField, NodalField, RowLayout
from toolkit.core.mesh import Mesh, inverse_map
from toolkit.core.numbering import DofMap

__all__ = [
    "Location", "PointLocator", "path_from_spec",
    "Path", "Polyline", "Arc", "EdgePath", "PathSamples", "line", "polyline", "arc", "edge_path",
    "PathResult", "sample", "raw_along", "STRESS_QUANTITIES",
]

#: Names of the quantities :class:`PathResult` derives from a stress field.
STRESS_QUANTITIES = ("snn", "stt", "snt", "von_mises", "s1", "s2", "s3", "tresca", "hydrostatic")


# ---------------------------------------------------------------------------
# Rows of a nodal field
# ---------------------------------------------------------------------------
# ---------------------------------------------------------------------------
# Point location
# ---------------------------------------------------------------------------
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
        raise ValueError(f"{name} must be shaped (p, {dim}) for this {dim}D mesh, got {np.shape(points)}")
    bad = ~np.isfinite(x).all(axis=1)
    if bad.any():
        raise ValueError(f"{name}: row {int(np.flatnonzero(bad)[0])} is not finite ({int(bad.sum())} such rows)")
    return x


def _check_outside(outside):
    if outside not in ("raise", "nan"):
        raise ValueError(f"outside must be 'raise' or 'nan', got {outside!r}")


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
    isoparametric map (:func:`toolkit.mesh.inverse_map`) over all (point,
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
            raise ValueError("PointLocator needs a Mesh")
        if not (tol >= 0 and np.isfinite(tol)):
            raise ValueError(f"tol must be a finite number >= 0, got {tol}")
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
            raise ValueError(f"region {region} is not in the mesh; regions: {mesh.regions.tolist()}")
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
        _check_outside(outside)
        return self.operator_at(self.locate(points, region), rows, outside)

    def operator_at(self, location: Location, rows=None, outside="raise", distances=None) -> sp.csr_matrix:
        """:meth:`operator` for points already located."""
        _check_outside(outside)
        mesh = self.mesh
        if location.mesh is not mesh:
            raise ValueError("the location belongs to another mesh")
        layout = RowLayout(mesh, rows if rows is not None else DofMap(mesh, across_regions=False))
        return _operator(location, layout, outside, distances)

    def evaluate(self, nodal: NodalField, points, region=None, outside="raise") -> np.ndarray:
        """``nodal`` at ``points``: (p, components)."""
        if not isinstance(nodal, NodalField):
            raise ValueError("evaluate needs a NodalField")
        if nodal.mesh is not self.mesh:
            raise ValueError("the nodal field belongs to another mesh than this locator")
        return self.operator(points, region, nodal, outside) @ nodal.values


def _operator(loc: Location, layout: RowLayout, outside, distances=None):
    mesh = loc.mesh
    found = loc.found
    if not found.all() and outside == "raise":
        raise ValueError(loc.outside_message("points", distances))
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


# ---------------------------------------------------------------------------
# Paths
# ---------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class PathSamples:
    """Samples of a path: ``distances`` (n,), ``points`` (n, dim), unit
    ``tangents`` (n, dim), unit ``normals`` (n, dim) or ``None`` (3D paths
    without a reference normal)."""

    distances: np.ndarray
    points: np.ndarray
    tangents: np.ndarray
    normals: np.ndarray | None


class Path(ABC):
    """A curve parametrised by arc length ``0 <= s <= length``.

    Subclasses give ``dim``, ``length``, ``label`` and ``_at(s) -> (points,
    tangents)``.  In 2D the normal is the tangent turned +90 degrees
    (counter-clockwise), ``n = (-t_y, t_x)``; in 3D it is the given
    ``normal`` reference vector made orthogonal to the tangent (or absent).
    """

    dim: int
    length: float
    label: str
    normal_ref: np.ndarray | None = None

    def distances(self, n=None, distances=None) -> np.ndarray:
        """``n`` equally spaced distances from 0 to ``length`` (default 101),
        or the given ``distances`` checked (finite, non-decreasing, within
        the path)."""
        if n is not None and distances is not None:
            raise ValueError("give either n or distances, not both")
        L = self.length
        if distances is None:
            n = 101 if n is None else n
            if int(n) != n or n < 2:
                raise ValueError(f"n must be an integer >= 2, got {n}")
            return np.linspace(0.0, L, int(n))
        d = np.atleast_1d(np.asarray(distances, dtype=float))
        if d.ndim != 1 or d.size == 0:
            raise ValueError(f"distances must be a non-empty 1D array, got shape {np.shape(distances)}")
        if not np.all(np.isfinite(d)):
            raise ValueError(f"distance {int(np.flatnonzero(~np.isfinite(d))[0])} is not finite")
        eps = 1e-12 * L
        bad = (d < -eps) | (d > L + eps)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise ValueError(f"distance {i} = {d[i]:.6g} lies off the path (0 .. {L:.6g}); {int(bad.sum())} such")
        if np.any(np.diff(d) < 0):
            i = int(np.flatnonzero(np.diff(d) < 0)[0])
            raise ValueError(f"distances must not decrease: distance {i + 1} = {d[i + 1]:.6g} < {d[i]:.6g}")
        return np.clip(d, 0.0, L)

    def sample(self, n=None, distances=None) -> PathSamples:
        d = self.distances(n, distances)
        x, t = self._at(d)
        return PathSamples(d, x, t, self._normals(t))

    def _normals(self, t):
        if self.dim == 2:
            return np.stack([-t[:, 1], t[:, 0]], axis=1)
        if self.normal_ref is None:
            return None
        n = self.normal_ref[None, :] - (t @ self.normal_ref)[:, None] * t
        norm = np.linalg.norm(n, axis=1)
        bad = norm < 1e-8 * np.linalg.norm(self.normal_ref)
        if bad.any():
            raise ValueError(f"{self.label}: the reference normal is parallel to the tangent at sample "
                             f"{int(np.flatnonzero(bad)[0])}")
        return n / norm[:, None]

    def _locate(self, samples: PathSamples, region=None) -> Location | None:
        """Cells of the samples when the path knows them (edge paths)."""
        return None

    @abstractmethod
    def _at(self, d):
        """Points and unit tangents at arc lengths ``d``."""

    def shifted(self, offset: float) -> "Path":
        """The path moved by ``offset`` along its normal (see subclasses)."""
        raise ValueError(f"a {type(self).__name__} cannot be shifted; build a new path instead")

    def __repr__(self):
        return f"{type(self).__name__}({self.label!r}, length {self.length:.6g}, {self.dim}D)"


def _normal_ref(normal, dim, label):
    if normal is None:
        return None
    if dim == 2:
        raise ValueError(f"{label}: normal= is for 3D paths; a 2D path's normal is its tangent turned +90 degrees")
    v = np.asarray(normal, dtype=float)
    if v.shape != (3,) or not np.all(np.isfinite(v)) or np.linalg.norm(v) == 0:
        raise ValueError(f"{label}: normal must be a non-zero 3-vector, got {normal!r}")
    return v / np.linalg.norm(v)


class Polyline(Path):
    """Straight segments through ``vertices`` (m >= 2, 2D or 3D).  At a
    vertex the tangent is that of the following segment (the last vertex:
    the last segment)."""

    def __init__(self, vertices, normal=None, label="polyline"):
        v = np.asarray(vertices, dtype=float)
        if v.ndim != 2 or v.shape[0] < 2 or v.shape[1] not in (2, 3):
            raise ValueError(f"{label}: vertices must be shaped (m >= 2, 2 or 3), got {v.shape}")
        if not np.all(np.isfinite(v)):
            raise ValueError(f"{label}: vertex {int(np.flatnonzero(~np.isfinite(v).all(1))[0])} is not finite")
        seg = np.diff(v, axis=0)
        ln = np.linalg.norm(seg, axis=1)
        scale = np.abs(v).max() + ln.max()
        zero = ln <= 1e-14 * scale
        if zero.any():
            i = int(np.flatnonzero(zero)[0])
            raise ValueError(f"{label}: vertices {i} and {i + 1} coincide (zero-length segment)")
        self.vertices = v
        self.dim = v.shape[1]
        self.label = label
        self._cum = np.r_[0.0, np.cumsum(ln)]
        self._t = seg / ln[:, None]
        self.length = float(self._cum[-1])
        self.normal_ref = _normal_ref(normal, self.dim, label)

    def shifted(self, offset: float) -> "Polyline":
        """A copy translated by ``offset`` along the first segment's normal (2D)."""
        if self.dim != 2:
            raise ValueError(f"{self.label}: only 2D paths can be shifted along their normal")
        n0 = self._normals(self._t[:1])[0]
        return Polyline(self.vertices + float(offset) * n0, label=self.label)

    def _at(self, d):
        seg = np.clip(np.searchsorted(self._cum, d, side="right") - 1, 0, len(self._t) - 1)
        x = self.vertices[seg] + (d - self._cum[seg])[:, None] * self._t[seg]
        return x, self._t[seg].copy()


def line(p0, p1, normal=None) -> Polyline:
    """Straight path from ``p0`` to ``p1`` (2D or 3D).  In 2D its normal is
    the direction turned +90 degrees; in 3D give ``normal`` (a reference
    vector, made orthogonal to the line) to get path-frame stresses."""
    return Polyline(np.array([p0, p1], dtype=float), normal=normal, label="line")


def polyline(points, normal=None) -> Polyline:
    """Path through ``points`` (m, 2|3) by straight segments."""
    return Polyline(points, normal=normal, label="polyline")


class Arc(Path):
    """Circular arc ``x = c + r (cos a, sin a)`` from ``angle0`` to
    ``angle1`` (degrees, measured anticlockwise from +x); 2D only.  The path
    runs from angle0 to angle1, so the tangent is ``±(-sin a, cos a)`` and
    the normal (+90 degrees) points to the centre when angle1 > angle0 and
    away from it otherwise."""

    def __init__(self, centre, radius, angle0, angle1):
        c = np.asarray(centre, dtype=float)
        if c.shape != (2,) or not np.all(np.isfinite(c)):
            raise ValueError(f"arc: centre must be a finite 2D point, got {centre!r} (arcs are 2D only)")
        if not (np.isfinite(radius) and radius > 0):
            raise ValueError(f"arc: radius must be > 0, got {radius}")
        if not (np.isfinite(angle0) and np.isfinite(angle1)) or angle0 == angle1:
            raise ValueError(f"arc: angles must be finite and differ, got {angle0}, {angle1}")
        self.centre, self.radius = c, float(radius)
        self.angle0, self.angle1 = float(angle0), float(angle1)
        self._a0 = np.radians(self.angle0)
        self._sign = 1.0 if angle1 > angle0 else -1.0
        self.dim = 2
        self.label = "arc"
        self.length = self.radius * abs(np.radians(self.angle1 - self.angle0))

    def shifted(self, offset: float) -> "Arc":
        """The concentric arc moved by ``offset`` along the normal."""
        r = self.radius - self._sign * float(offset)
        if r <= 0:
            raise ValueError(f"arc: a shift of {offset} leaves no arc (radius {r:.6g})")
        return Arc(self.centre, r, self.angle0, self.angle1)

    def _at(self, d):
        a = self._a0 + self._sign * d / self.radius
        ca, sa = np.cos(a), np.sin(a)
        x = self.centre + self.radius * np.stack([ca, sa], axis=1)
        return x, self._sign * np.stack([-sa, ca], axis=1)


def arc(centre, radius, angle0, angle1) -> Arc:
    """Circular arc about ``centre`` from ``angle0`` to ``angle1`` in degrees
    (anticlockwise from +x); see :class:`Arc` for the normal's sense."""
    return Arc(centre, radius, angle0, angle1)


_GL_S, _GL_W = np.polynomial.legendre.leggauss(8)
_GL_S, _GL_W = 0.5 * (_GL_S + 1.0), 0.5 * _GL_W      # on [0, 1]


class EdgePath(Path):
    """A chain of mesh edges, traced with each edge's own element geometry.

    ``edges`` (m, 2) corner pairs or (m, 3) corner, corner, mid-side node
    rows (0-based node rows, as a mesher lists a named edge set).  The edges
    are ordered into one open or closed chain running in the direction of the
    first edge as listed (corner 0 -> corner 1).  Each edge is matched to a
    cell that has it (the first in block/cell order, or the first in
    ``region`` when sampling one region); its points are
    ``x(s) = sum_a N_a(xi(s)) x_a`` with ``xi(s)`` running straight along
    the cell's reference edge, so a curved quadratic edge is followed exactly
    as the element has it.  Distances are arc lengths (8-point Gauss–Legendre
    per edge; Newton for the inverse).  For boundary edges listed in the
    element's own counter-clockwise sense, the normal (+90 degrees) points
    into the material.
    """

    def __init__(self, mesh: Mesh, edges, label="edges"):
        if not isinstance(mesh, Mesh):
            raise ValueError("edge_path needs a Mesh")
        e = np.asarray(edges)
        if e.ndim != 2 or e.shape[1] not in (2, 3) or len(e) == 0:
            raise ValueError(f"{label}: edges must be shaped (m, 2) or (m, 3), got {e.shape}")
        if e.size and not np.issubdtype(e.dtype, np.integer):
            if not np.all(np.isfinite(e.astype(float))) or not np.all(e == np.round(e)):
                raise ValueError(f"{label}: edge node indices must be integers")
        e = e.astype(np.int64)
        n = mesh.nnodes
        bad = np.flatnonzero(((e < 0) | (e >= n)).any(axis=1))
        if bad.size:
            raise ValueError(f"{label}: edge row {int(bad[0])} has a node index outside 0..{n - 1} ({e[bad[0]].tolist()})")
        self.mesh, self.label, self.dim = mesh, label, mesh.dim
        self.normal_ref = None
        self.edges_in = e
        a, b = e[:, 0], e[:, 1]
        same = np.flatnonzero(a == b)
        if same.size:
            raise ValueError(f"{label}: edge row {int(same[0])} starts and ends at node {int(a[same[0]])}")
        key = np.minimum(a, b) * n + np.maximum(a, b)
        ks = np.sort(key)
        dup = np.flatnonzero(ks[1:] == ks[:-1])
        if dup.size:
            r = np.flatnonzero(key == ks[dup[0]])
            raise ValueError(f"{label}: edge rows {int(r[0])} and {int(r[1])} join the same two corner nodes")
        self._chain(a, b, key)
        self._match_cells(e)
        self._owner = {None: self._owners(None)}
        own = self._owner[None]
        if not own[0].all():
            i = int(np.flatnonzero(~own[0])[0])
            raise ValueError(f"{label}: edge row {self.order[i]} (nodes {self.start[i]}-{self.end[i]}) is not an edge "
                             "of any cell, or its mid-side node differs from the cell's")
        # lengths
        s = np.broadcast_to(_GL_S, (len(self.order), len(_GL_S)))
        ei = np.broadcast_to(np.arange(len(self.order))[:, None], s.shape)
        _, dx, _ = self._geom(ei.ravel(), s.ravel(), own)
        speed = np.linalg.norm(dx, axis=1).reshape(s.shape)
        self._len = speed @ _GL_W
        self._cum = np.r_[0.0, np.cumsum(self._len)]
        self.length = float(self._cum[-1])

    # -- chain ordering (scipy.sparse.csgraph, no loop over edges) ------------
    def _chain(self, a, b, key):
        from scipy.sparse.csgraph import connected_components, depth_first_order

        n = self.mesh.nnodes
        deg = np.bincount(np.r_[a, b], minlength=n)
        if deg.max() > 2:
            node = int(np.flatnonzero(deg > 2)[0])
            raise ValueError(f"{self.label}: node {int(self.mesh.node_ids[node])} joins {deg[node]} edges; "
                             "a path must be one chain without branches")
        used = np.flatnonzero(deg > 0)
        local = np.full(n, -1)
        local[used] = np.arange(used.size)
        g = sp.csr_matrix((np.ones(len(a)), (local[a], local[b])), shape=(used.size, used.size))
        ncomp, _ = connected_components(g, directed=False)
        if ncomp != 1:
            raise ValueError(f"{self.label}: the edges form {ncomp} separate chains; give one connected chain")
        ends = np.flatnonzero(deg[used] == 1)
        self.closed = ends.size == 0
        start = local[a[0]] if self.closed else ends[0]
        order = depth_first_order(g, start, directed=False, return_predecessors=False)
        nodes = used[order]
        if self.closed:
            nodes = np.r_[nodes, nodes[0]]
        pk = np.minimum(nodes[:-1], nodes[1:]) * n + np.maximum(nodes[:-1], nodes[1:])
        srt = np.argsort(key)
        edge = srt[np.searchsorted(key[srt], pk)]
        pos0 = int(np.flatnonzero(edge == 0)[0])
        if nodes[pos0] != a[0]:          # run in the sense of the first listed edge
            nodes, edge = nodes[::-1], edge[::-1]
        self.nodes_chain = nodes
        self.order = edge                # input row of each chain edge
        self.start, self.end = nodes[:-1], nodes[1:]

    # -- cells having each edge ----------------------------------------------
    def _match_cells(self, e):
        n = self.mesh.nnodes
        keys, blk, cel, loc, reg = [], [], [], [], []
        for bi, b in enumerate(self.mesh.blocks):
            for j, ed in enumerate(b.element.edges):
                ca, cb = b.cells[:, ed[0]].astype(np.int64), b.cells[:, ed[1]].astype(np.int64)
                keys.append(np.minimum(ca, cb) * n + np.maximum(ca, cb))
                blk.append(np.full(len(b), bi))
                cel.append(np.arange(len(b)))
                loc.append(np.full(len(b), j))
                reg.append(b.regions)
        keys, blk, cel, loc, reg = map(np.concatenate, (keys, blk, cel, loc, reg))
        order = np.lexsort((cel, blk, keys))
        self._tab = tuple(v[order] for v in (keys, blk, cel, loc, reg))
        self._mid_in = e[self.order, 2] if e.shape[1] == 3 else None

    def _owners(self, region):
        keys, blk, cel, loc, reg = self._tab
        if region is not None:
            m = reg == region
            keys, blk, cel, loc = keys[m], blk[m], cel[m], loc[m]
        n = self.mesh.nnodes
        want = np.minimum(self.start, self.end) * n + np.maximum(self.start, self.end)
        pos = np.minimum(np.searchsorted(keys, want), max(len(keys) - 1, 0))
        ok = (keys[pos] == want) if len(keys) else np.zeros(len(want), bool)
        xi0 = np.full((len(want), self.dim), np.nan)
        xi1 = np.full((len(want), self.dim), np.nan)
        bb, cc = np.where(ok, blk[pos], -1), np.where(ok, cel[pos], -1)
        for bi, b in enumerate(self.mesh.blocks):
            sel = np.flatnonzero(bb == bi)
            if not sel.size:
                continue
            et = b.element
            ed = np.array([list(x) + [-1] * (3 - len(x)) for x in et.edges])[loc[pos[sel]]]
            cells = b.cells[cc[sel]]
            na = np.take_along_axis(cells, ed[:, :1], 1)[:, 0]
            fwd = na == self.start[sel]
            ia = np.where(fwd, ed[:, 0], ed[:, 1])
            ib = np.where(fwd, ed[:, 1], ed[:, 0])
            xi0[sel], xi1[sel] = et.nodes[ia], et.nodes[ib]
            if self._mid_in is not None:
                has_mid = ed[:, 2] >= 0
                mid = np.where(has_mid, np.take_along_axis(cells, np.maximum(ed[:, 2:3], 0), 1)[:, 0], -1)
                wrong = mid != self._mid_in[sel]
                ok[sel[wrong]] = False
        bb[~ok], cc[~ok] = -1, -1
        return ok, bb, cc, xi0, xi1

    def _geom(self, ei, s, own):
        """Points, d x / d s and natural coordinates at parameters ``s`` (0..1)
        of chain edges ``ei``."""
        ok, bb, cc, xi0, xi1 = own
        x = np.full((len(ei), self.dim), np.nan)
        dx = np.full((len(ei), self.dim), np.nan)
        xi = xi0[ei] + s[:, None] * (xi1[ei] - xi0[ei])
        for bi, b in enumerate(self.mesh.blocks):
            sel = np.flatnonzero(bb[ei] == bi)
            if not sel.size:
                continue
            N, dN = b.element.evaluate(xi[sel])
            xe = self.mesh.nodes[b.cells[cc[ei[sel]]]]
            x[sel] = np.einsum("pk,pki->pi", N, xe)
            dxi = xi1[ei[sel]] - xi0[ei[sel]]
            dx[sel] = np.einsum("pkj,pj,pki->pi", dN, dxi, xe)
        return x, dx, xi

    def _param(self, d):
        """Chain edge and its parameter s (0..1) at arc lengths ``d``."""
        own = self._owner[None]
        ei = np.clip(np.searchsorted(self._cum, d, side="right") - 1, 0, len(self._len) - 1)
        ell = d - self._cum[ei]
        s = np.clip(ell / self._len[ei], 0.0, 1.0)
        for _ in range(12):
            # F(s) = int_0^s |x'| - ell, with 8-point Gauss on [0, s]
            q = (s[:, None] * _GL_S[None, :]).ravel()
            _, dq, _ = self._geom(np.repeat(ei, len(_GL_S)), q, own)
            integral = s * (np.linalg.norm(dq, axis=1).reshape(len(s), -1) @ _GL_W)
            _, d1, _ = self._geom(ei, s, own)
            step = (integral - ell) / np.linalg.norm(d1, axis=1)
            s = np.clip(s - step, 0.0, 1.0)
            if np.all(np.abs(step) < 1e-13):
                break
        return ei, s

    def _at(self, d):
        ei, s = self._param(d)
        x, dx, _ = self._geom(ei, s, self._owner[None])
        return x, dx / np.linalg.norm(dx, axis=1)[:, None]

    def _locate(self, samples, region=None):
        key = None if region is None else int(region)
        if key not in self._owner:
            if key not in set(self.mesh.regions.tolist()):
                raise ValueError(f"region {region} is not in the mesh; regions: {self.mesh.regions.tolist()}")
            self._owner[key] = self._owners(key)
        own = self._owner[key]
        ei, s = self._param(samples.distances)
        _, _, xi = self._geom(ei, s, own)
        bb, cc = own[1][ei], own[2][ei]
        xi[bb < 0] = np.nan
        return Location(self.mesh, samples.points, bb, cc, xi)

    def __repr__(self):
        return (f"EdgePath({self.label!r}, {len(self.order)} edges, {'closed' if self.closed else 'open'}, "
                f"length {self.length:.6g})")


def edge_path(mesh: Mesh, edges, label="edges") -> EdgePath:
    """Path along a set of mesh edges (m, 2|3 node rows), ordered into one
    chain; see :class:`EdgePath`."""
    return EdgePath(mesh, edges, label)


# ---------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------
def _stress_kind(components):
    return _stress.stress_kind(components)


def _derived(values, components, tangents, normals, dim):
    """Path-frame stresses and invariants from :mod:`toolkit.stress`
    (NaN rows, from points outside the mesh, stay NaN)."""
    kind = _stress_kind(components)
    if kind is None:
        return {}
    p = len(values)
    ok = np.all(np.isfinite(values), axis=1)
    out = {k: np.full(p, np.nan) for k in STRESS_QUANTITIES}
    v = values[ok]
    if not ok.any():
        return out
    if kind != "3d" and dim == 2:
        fs = _stress.rotate_2d(v, components, tangents[ok])
        out["snn"][ok], out["stt"][ok], out["snt"][ok] = fs.normal, fs.tangential, fs.shear
    elif kind == "3d" and normals is not None:
        t, n = tangents[ok], normals[ok]
        R = np.stack([n, t, np.cross(n, t)], axis=1)     # rows: new base vectors
        r = _stress.rotate(v, components, R)
        comps = list(components)
        out["snn"][ok] = r[:, comps.index("sxx")]
        out["stt"][ok] = r[:, comps.index("syy")]
        out["snt"][ok] = r[:, comps.index("sxy")]
    else:
        for k in ("snn", "stt", "snt"):
            del out[k]
    out["von_mises"][ok] = _stress.von_mises(v, components)
    if kind == "plane":               # szz = 0 counts as the third principal stress
        vv = np.c_[v, np.zeros(len(v))]
        cc = tuple(components) + ("szz",)
    else:
        vv, cc = v, components
    s = _stress.principal(vv, cc).values
    out["s1"][ok], out["s2"][ok], out["s3"][ok] = s[:, 0], s[:, 1], s[:, 2]
    out["tresca"][ok] = _stress.tresca(v, components)
    out["hydrostatic"][ok] = _stress.hydrostatic(v, components)
    return out


class PathResult:
    """A field read along a path.

    Attributes
    ----------
    distances (n,), points (n, dim), tangents (n, dim), normals (n, dim) or None
    values : dict component -> (n,) the field's own components
    derived : dict, for stress fields (components of :mod:`toolkit.stress`):
        ``snn``, ``stt``, ``snt`` (normal, tangential and shear stress in the
        path frame, ``n.S.n``, ``t.S.t``, ``n.S.t``), ``von_mises``, ``s1``
        >= ``s2`` >= ``s3`` (principal, the out-of-plane ``szz`` (or hoop)
        stress included, 0 for plane stress), ``tresca``, ``hydrostatic``.
    element : (n,) the mesh's element number at each point (-1 outside)
    pieces : list of index arrays (raw curves: one per element crossed) or None
    method : how the field was made (``"l2"``, ``"spr"``, ``"raw"`` ...)

    ``result["stt"]`` reads any quantity.
    """

    def __init__(self, label, samples: PathSamples, values, components, location, method="", pieces=None,
                 region=None):
        self.label = label
        self.distances = samples.distances
        self.points = samples.points
        self.tangents = samples.tangents
        self.normals = samples.normals
        self.components = tuple(components)
        self.values = {c: values[:, i] for i, c in enumerate(self.components)}
        self.derived = _derived(values, self.components, self.tangents, self.normals, self.points.shape[1])
        self.element = location.cell_ids
        self.inside = location.found
        self.pieces = pieces
        self.method = method
        self.region = region

    @property
    def quantities(self) -> tuple:
        return self.components + tuple(self.derived)

    def __getitem__(self, name):
        if name in self.values:
            return self.values[name]
        if name in self.derived:
            return self.derived[name]
        raise KeyError(f"no quantity {name!r} on this path; have {', '.join(self.quantities)}")

    def __len__(self):
        return len(self.distances)

    def peak(self, quantity, absolute=False):
        """``(distance, value)`` where ``quantity`` is largest (by magnitude
        with ``absolute=True``)."""
        v = self[quantity]
        i = int(np.nanargmax(np.abs(v) if absolute else v))
        return float(self.distances[i]), float(v[i])

    def to_array(self, quantities=None):
        """Columns ``distance, x, y[, z], then the quantities`` and their names."""
        q = list(self.quantities if quantities is None else quantities)
        d = self.points.shape[1]
        names = ["distance"] + ["x", "y", "z"][:d] + q
        cols = [self.distances] + [self.points[:, i] for i in range(d)] + [self[k] for k in q]
        return np.column_stack(cols), names

    def to_csv(self, path, quantities=None):
        """Write a CSV file: distance, coordinates, tangent, normal, element,
        then the quantities (all, by default)."""
        arr, names = self.to_array(quantities)
        d = self.points.shape[1]
        extra = [self.tangents[:, i] for i in range(d)]
        enames = ["tx", "ty", "tz"][:d]
        if self.normals is not None:
            extra += [self.normals[:, i] for i in range(d)]
            enames += ["nx", "ny", "nz"][:d]
        extra.append(self.element.astype(float))
        enames.append("element")
        arr = np.column_stack([arr[:, :1 + d]] + extra + [arr[:, 1 + d:]])
        names = names[:1 + d] + enames + names[1 + d:]
        fmt = ["%.10g"] * arr.shape[1]
        fmt[names.index("element")] = "%d"
        np.savetxt(path, arr, delimiter=",", header=",".join(names), comments="", fmt=fmt)
        return path

    def to_table(self, quantities=None, rows=11) -> str:
        """A plain-text table of about ``rows`` evenly spread samples."""
        arr, names = self.to_array(quantities)
        idx = np.unique(np.linspace(0, len(arr) - 1, min(rows, len(arr))).round().astype(int))
        w = max(10, max(len(s) for s in names) + 1)
        lines = ["".join(f"{s:>{w}}" for s in names)]
        lines += ["".join(f"{v:>{w}.4g}" for v in arr[i]) for i in idx]
        return "\n".join(lines)

    def __repr__(self):
        head = (f"PathResult({self.label}, {self.method or 'field'}: {len(self)} points over "
                f"{self.distances[-1] - self.distances[0]:.6g}")
        if not self.inside.all():
            head += f", {int((~self.inside).sum())} outside the mesh (NaN)"
        q = [k for k in ("von_mises", "stt", "s1") if k in self.derived] or list(self.components[:2])
        parts = []
        for k in q:
            dd, v = self.peak(k) if np.isfinite(self[k]).any() else (np.nan, np.nan)
            parts.append(f"max {k} {v:.4g} at {dd:.4g}")
        return head + ("; " + ", ".join(parts) if parts else "") + ")"

    def _repr_html_(self):
        arr, names = self.to_array()
        idx = np.unique(np.linspace(0, len(arr) - 1, min(11, len(arr))).round().astype(int))
        th = "".join(f"<th>{s}</th>" for s in names)
        trs = "".join("<tr>" + "".join(f"<td>{v:.4g}</td>" for v in arr[i]) + "</tr>" for i in idx)
        cap = repr(self).replace("&", "&amp;").replace("<", "&lt;")
        return f"<table><caption>{cap}</caption><tr>{th}</tr>{trs}</table>"

    def plot(self, ax=None, quantity="von_mises", label=None, **kwargs):
        """Plot ``quantity`` (a name or a list of names) against distance;
        raw curves are drawn element by element so their jumps show.
        Returns the axes (matplotlib is imported here, not at module load)."""
        import matplotlib.pyplot as plt

        if ax is None:
            _, ax = plt.subplots()
        names = [quantity] if isinstance(quantity, str) else list(quantity)
        for q in names:
            y = self[q]
            lab = label if (label is not None and len(names) == 1) else (f"{q} ({self.method})" if self.method else q)
            if self.pieces:
                line = None
                for pc in self.pieces:
                    kw = dict(kwargs)
                    if line is not None:
                        kw.setdefault("color", line.get_color())
                    (ln,) = ax.plot(self.distances[pc], y[pc], label=lab if line is None else "_nolegend_", **kw)
                    line = line or ln
            else:
                ax.plot(self.distances, y, label=lab, **kwargs)
        ax.set_xlabel(f"distance along {self.label}")
        ax.set_ylabel(names[0] if len(names) == 1 else "value")
        ax.legend()
        return ax


# ---------------------------------------------------------------------------
# Sampling
# ---------------------------------------------------------------------------
def _locate_samples(mesh, path, samples, region, locator):
    if not isinstance(path, Path):
        raise ValueError(f"path must be a Path (line, polyline, arc, edge_path), got {type(path).__name__}")
    if path.dim != mesh.dim:
        raise ValueError(f"a {path.dim}D path on a {mesh.dim}D mesh")
    if isinstance(path, EdgePath) and path.mesh is not mesh:
        raise ValueError("the edge path was built on another mesh than the field's")
    loc = path._locate(samples, region)
    if loc is None:
        if locator is None:
            locator = PointLocator.for_mesh(mesh)
        elif locator.mesh is not mesh:
            raise ValueError("the locator was built for another mesh than the field's")
        loc = locator.locate(samples.points, region)
    return loc


def sample(nodal: NodalField, path: Path, n=None, distances=None, region=None, outside="raise",
           locator: PointLocator | None = None) -> PathResult:
    """Read a nodal field (all components) along a path.

    ``u(x_p) = sum_a N_a(xi_p) u_a`` in the cell holding each point, one
    sparse product (:meth:`PointLocator.operator_at`).  Samples: ``n``
    equally spaced points (default 101) or the given ``distances``.
    ``region``: read from cells of that region only (one side of a region
    boundary where the field carries one value per region).  Points outside
    the mesh raise ValueError, or give NaN with ``outside="nan"``.  The
    locator is built once per mesh and reused (pass one to choose its
    tolerance).
    """
    if isinstance(nodal, GaussField):
        raise ValueError("sample needs a NodalField: recover one first (project_l2, recover_spr, average_nodal), "
                         "or use raw_along for the raw integration-point field")
    if not isinstance(nodal, NodalField):
        raise ValueError("sample needs a NodalField")
    _check_outside(outside)
    mesh = nodal.mesh
    samples = path.sample(n, distances)
    loc = _locate_samples(mesh, path, samples, region, locator)
    A = _operator(loc, RowLayout(mesh, nodal), outside, samples.distances)
    return PathResult(path.label, samples, A @ nodal.values, nodal.components, loc, nodal.method, region=region)


def _raw_values(field: GaussField, loc: Location):
    mesh = field.mesh
    out = np.full((len(loc), field.ncomponents), np.nan)
    for bi, b in enumerate(mesh.blocks):
        sel = np.flatnonzero(loc.block == bi)
        if not sel.size:
            continue
        E = local_field_matrix(b.element, field.points[b.name], loc.xi[sel])      # (t, q)
        out[sel] = np.einsum("tq,tqa->ta", E, field.values[b.name][loc.cell[sel]])
    return out


def raw_along(field: GaussField, path: Path, n=None, distances=None, region=None, outside="raise",
              locator: PointLocator | None = None, max_crossings=10000) -> PathResult:
    """The raw integration-point field along a path: in every cell the path
    crosses, that cell's own local field (the polynomial through its
    integration-point values, Hinton & Campbell 1974) at the path points in
    it.  Where consecutive samples lie in different cells the crossing is
    found by bisection (to 1e-10 of the path length) and sampled from both
    sides, so the curve shows the jump at every element boundary.

    Returns a :class:`PathResult` with ``method="raw"`` and ``pieces`` (the
    sample indices of each cell crossed, in order).
    """
    if not isinstance(field, GaussField):
        raise ValueError("raw_along needs a GaussField (the integration-point values)")
    _check_outside(outside)
    mesh = field.mesh
    s0 = path.sample(n, distances)
    if locator is None and not isinstance(path, EdgePath):
        locator = PointLocator.for_mesh(mesh)

    def locate(d):
        smp = path.sample(distances=d) if len(d) else None
        if smp is None:
            return np.zeros(0, np.int64), None
        loc = _locate_samples(mesh, path, smp, region, locator)
        return loc.key(), loc

    loc0 = _locate_samples(mesh, path, s0, region, locator)
    if not loc0.found.all() and outside == "raise":
        raise ValueError(loc0.outside_message("points", s0.distances))
    d = s0.distances.copy()
    key = loc0.key()
    pair = np.zeros(len(d), dtype=bool)        # True: sample i and i+1 are the two sides of one crossing
    tol = 1e-10 * max(path.length, 1e-300)
    for _ in range(max_crossings):
        todo = np.flatnonzero((key[:-1] != key[1:]) & ~pair[:-1])
        if not todo.size:
            break
        lo, hi = d[todo].copy(), d[todo + 1].copy()
        ka = key[todo]
        khi = key[todo + 1].copy()
        for _ in range(200):
            act = hi - lo > tol
            if not act.any():
                break
            mid = 0.5 * (lo + hi)
            km, _ = locate(mid[act])
            same = km == ka[act]
            ia = np.flatnonzero(act)
            lo[ia[same]] = mid[act][same]
            hi[ia[~same]] = mid[act][~same]
            khi[ia[~same]] = km[~same]
        # insert (lo, A) and (hi, C) after each sample todo
        ins_at = np.repeat(todo + 1, 2)
        new_d = np.column_stack([lo, hi]).ravel()
        new_k = np.column_stack([ka, khi]).ravel()
        new_pair = np.column_stack([np.ones(len(lo), bool), np.zeros(len(lo), bool)]).ravel()
        d = np.insert(d, ins_at, new_d)
        key = np.insert(key, ins_at, new_k)
        pair = np.insert(pair, ins_at, new_pair)
    else:
        raise ValueError(f"raw_along: more than {max_crossings} rounds of element crossings; sample more densely")
    samples = path.sample(distances=d)
    loc = _locate_samples(mesh, path, samples, region, locator)
    key = loc.key()
    vals = _raw_values(field, loc)
    breaks = np.flatnonzero(key[1:] != key[:-1]) + 1
    pieces = [p for p in np.split(np.arange(len(d)), breaks) if key[p[0]] >= 0]
    return PathResult(path.label, samples, vals, field.components, loc, "raw", pieces=pieces, region=region)


def path_from_spec(spec: dict) -> Path:
    """A path from a plain dictionary, as workbook parameters give them:

    * ``{"start": [x, y], "end": [x, y]}`` — a straight line;
    * ``{"points": [[x, y], ...]}`` — a polyline;
    * ``{"centre": [x, y], "radius": r, "from": a0, "to": a1}`` — an arc
      (degrees, anticlockwise from +x).

    An optional ``"name"`` is kept as the path's label.  Unknown keys raise.
    """
    if not isinstance(spec, dict):
        raise ValueError(f"a path is given as a dict, got {type(spec).__name__}")
    name = str(spec.get("name", "path"))
    keys = set(spec) - {"name"}
    if keys == {"start", "end"}:
        p = line(spec["start"], spec["end"])
    elif keys == {"points"}:
        p = polyline(spec["points"])
    elif keys == {"centre", "radius", "from", "to"}:
        p = arc(spec["centre"], spec["radius"], spec["from"], spec["to"])
    else:
        raise ValueError(f"path {name!r}: give start+end, points, or centre+radius+from+to; got keys "
                         f"{sorted(keys)}")
    p.label = name
    return p
