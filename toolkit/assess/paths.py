"""Path geometry: :func:`line`, :func:`polyline`, :func:`arc` and
:func:`edge_path` (a chain of mesh edges, following curved quadratic edges
exactly as the elements do), and :func:`path_from_spec` for workbook
parameters.  Every sample carries its distance along the path, its unit
tangent and (in 2D) its unit normal, the tangent turned +90 degrees
(counter-clockwise): ``n = (-t_y, t_x)``.
"""
from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from toolkit.errors import InputError
from toolkit.core.locate import Location
from toolkit.core.mesh import Mesh

__all__ = ["Path", "Polyline", "Arc", "EdgePath", "PathSamples", "line", "polyline", "arc", "edge_path",
           "path_from_spec"]


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
            raise InputError("give either n or distances, not both")
        L = self.length
        if distances is None:
            n = 101 if n is None else n
            if int(n) != n or n < 2:
                raise InputError(f"n must be an integer >= 2, got {n}")
            return np.linspace(0.0, L, int(n))
        d = np.atleast_1d(np.asarray(distances, dtype=float))
        if d.ndim != 1 or d.size == 0:
            raise InputError(f"distances must be a non-empty 1D array, got shape {np.shape(distances)}")
        if not np.all(np.isfinite(d)):
            raise InputError(f"distance {int(np.flatnonzero(~np.isfinite(d))[0])} is not finite")
        eps = 1e-12 * L
        bad = (d < -eps) | (d > L + eps)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"distance {i} = {d[i]:.6g} lies off the path (0 .. {L:.6g}); {int(bad.sum())} such")
        if np.any(np.diff(d) < 0):
            i = int(np.flatnonzero(np.diff(d) < 0)[0])
            raise InputError(f"distances must not decrease: distance {i + 1} = {d[i + 1]:.6g} < {d[i]:.6g}")
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
            raise InputError(f"{self.label}: the reference normal is parallel to the tangent at sample "
                             f"{int(np.flatnonzero(bad)[0])}")
        return n / norm[:, None]

    def locate(self, samples: PathSamples, region=None) -> Location | None:
        """Cells of the samples when the path knows them (edge paths)."""
        return None

    @abstractmethod
    def _at(self, d):
        """Points and unit tangents at arc lengths ``d``."""

    def shifted(self, offset: float) -> "Path":
        """The path moved by ``offset`` along its normal (see subclasses)."""
        raise InputError(f"a {type(self).__name__} cannot be shifted; build a new path instead")

    def __repr__(self):
        return f"{type(self).__name__}({self.label!r}, length {self.length:.6g}, {self.dim}D)"


def _normal_ref(normal, dim, label):
    if normal is None:
        return None
    if dim == 2:
        raise InputError(f"{label}: normal= is for 3D paths; a 2D path's normal is its tangent turned +90 degrees")
    v = np.asarray(normal, dtype=float)
    if v.shape != (3,) or not np.all(np.isfinite(v)) or np.linalg.norm(v) == 0:
        raise InputError(f"{label}: normal must be a non-zero 3-vector, got {normal!r}")
    return v / np.linalg.norm(v)


class Polyline(Path):
    """Straight segments through ``vertices`` (m >= 2, 2D or 3D).  At a
    vertex the tangent is that of the following segment (the last vertex:
    the last segment)."""

    def __init__(self, vertices, normal=None, label="polyline"):
        v = np.asarray(vertices, dtype=float)
        if v.ndim != 2 or v.shape[0] < 2 or v.shape[1] not in (2, 3):
            raise InputError(f"{label}: vertices must be shaped (m >= 2, 2 or 3), got {v.shape}")
        if not np.all(np.isfinite(v)):
            raise InputError(f"{label}: vertex {int(np.flatnonzero(~np.isfinite(v).all(1))[0])} is not finite")
        seg = np.diff(v, axis=0)
        ln = np.linalg.norm(seg, axis=1)
        scale = np.abs(v).max() + ln.max()
        zero = ln <= 1e-14 * scale
        if zero.any():
            i = int(np.flatnonzero(zero)[0])
            raise InputError(f"{label}: vertices {i} and {i + 1} coincide (zero-length segment)")
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
            raise InputError(f"{self.label}: only 2D paths can be shifted along their normal")
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
            raise InputError(f"arc: centre must be a finite 2D point, got {centre!r} (arcs are 2D only)")
        if not (np.isfinite(radius) and radius > 0):
            raise InputError(f"arc: radius must be > 0, got {radius}")
        if not (np.isfinite(angle0) and np.isfinite(angle1)) or angle0 == angle1:
            raise InputError(f"arc: angles must be finite and differ, got {angle0}, {angle1}")
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
            raise InputError(f"arc: a shift of {offset} leaves no arc (radius {r:.6g})")
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
            raise InputError("edge_path needs a Mesh")
        e = np.asarray(edges)
        if e.ndim != 2 or e.shape[1] not in (2, 3) or len(e) == 0:
            raise InputError(f"{label}: edges must be shaped (m, 2) or (m, 3), got {e.shape}")
        if e.size and not np.issubdtype(e.dtype, np.integer):
            if not np.all(np.isfinite(e.astype(float))) or not np.all(e == np.round(e)):
                raise InputError(f"{label}: edge node indices must be integers")
        e = e.astype(np.int64)
        n = mesh.nnodes
        bad = np.flatnonzero(((e < 0) | (e >= n)).any(axis=1))
        if bad.size:
            raise InputError(f"{label}: edge row {int(bad[0])} has a node index outside 0..{n - 1} ({e[bad[0]].tolist()})")
        self.mesh, self.label, self.dim = mesh, label, mesh.dim
        self.normal_ref = None
        self.edges_in = e
        a, b = e[:, 0], e[:, 1]
        same = np.flatnonzero(a == b)
        if same.size:
            raise InputError(f"{label}: edge row {int(same[0])} starts and ends at node {int(a[same[0]])}")
        key = np.minimum(a, b) * n + np.maximum(a, b)
        ks = np.sort(key)
        dup = np.flatnonzero(ks[1:] == ks[:-1])
        if dup.size:
            r = np.flatnonzero(key == ks[dup[0]])
            raise InputError(f"{label}: edge rows {int(r[0])} and {int(r[1])} join the same two corner nodes")
        self._chain(a, b, key)
        self._match_cells(e)
        self._owner = {None: self._owners(None)}
        own = self._owner[None]
        if not own[0].all():
            i = int(np.flatnonzero(~own[0])[0])
            raise InputError(f"{label}: edge row {self.order[i]} (nodes {self.start[i]}-{self.end[i]}) is not an edge "
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
            raise InputError(f"{self.label}: node {int(self.mesh.node_ids[node])} joins {deg[node]} edges; "
                             "a path must be one chain without branches")
        used = np.flatnonzero(deg > 0)
        local = np.full(n, -1)
        local[used] = np.arange(used.size)
        g = sp.csr_matrix((np.ones(len(a)), (local[a], local[b])), shape=(used.size, used.size))
        ncomp, _ = connected_components(g, directed=False)
        if ncomp != 1:
            raise InputError(f"{self.label}: the edges form {ncomp} separate chains; give one connected chain")
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

    def locate(self, samples, region=None):
        key = None if region is None else int(region)
        if key not in self._owner:
            if key not in set(self.mesh.regions.tolist()):
                raise InputError(f"region {region} is not in the mesh; regions: {self.mesh.regions.tolist()}")
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



def path_from_spec(spec: dict) -> Path:
    """A path from a plain dictionary, as workbook parameters give them:

    * ``{"start": [x, y], "end": [x, y]}`` — a straight line;
    * ``{"points": [[x, y], ...]}`` — a polyline;
    * ``{"centre": [x, y], "radius": r, "from": a0, "to": a1}`` — an arc
      (degrees, anticlockwise from +x).

    An optional ``"name"`` is kept as the path's label.  Unknown keys raise.
    """
    if not isinstance(spec, dict):
        raise InputError(f"a path is given as a dict, got {type(spec).__name__}")
    name = str(spec.get("name", "path"))
    keys = set(spec) - {"name"}
    if keys == {"start", "end"}:
        p = line(spec["start"], spec["end"])
    elif keys == {"points"}:
        p = polyline(spec["points"])
    elif keys == {"centre", "radius", "from", "to"}:
        p = arc(spec["centre"], spec["radius"], spec["from"], spec["to"])
    else:
        raise InputError(f"path {name!r}: give start+end, points, or centre+radius+from+to; got keys "
                         f"{sorted(keys)}")
    p.label = name
    return p
