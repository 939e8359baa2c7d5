"""Structured meshes of rectangles and boxes for every element type.

Used by the demo, the tests and the benchmarks.  Nodes come from a lattice
with spacing ``h / order`` (order 2 for quadratic elements); the cells pick
their nodes from it, and lattice points no cell uses are dropped.
``distort`` moves interior lattice points by a seeded random amount (a
fraction of the spacing) so that patch tests run on genuinely distorted
elements while edges stay straight.
"""
from __future__ import annotations

import numpy as np

from toolkit.errors import InputError
from toolkit.core.elements import ELEMENTS, get_element
from toolkit.core.mesh import Mesh

__all__ = ["rectangle_mesh", "box_mesh"]



def _lattice(counts, lengths, origin, distort, seed, order, grading=None):
    axes, local = [], []
    for d, (n, L, o) in enumerate(zip(counts, lengths, origin)):
        t = np.linspace(0.0, 1.0, n * order + 1)
        local.append(None)
        if grading is not None and grading[d] != 1.0:
            # geometric spacing between element boundaries, ratio last/first = grading
            g = grading[d]
            r = g ** (1.0 / max(n - 1, 1))
            edges = np.cumsum(np.r_[0.0, r ** np.arange(n)])
            edges /= edges[-1]
            fine = np.linspace(0.0, 1.0, order + 1)[:-1]
            t = np.r_[(edges[:-1, None] + np.diff(edges)[:, None] * fine).ravel(), 1.0]
            size = L * np.diff(edges)
            near = np.minimum(np.r_[size[:1], size], np.r_[size, size[-1:]])   # smaller cell at each boundary
            local[-1] = np.repeat(near, order)[:n * order + 1]                   # per lattice index
        axes.append(o + L * t)
    grids = np.meshgrid(*axes, indexing="ij")
    pts = np.stack([g.transpose(tuple(range(len(counts)))[::-1]).ravel() for g in grids], axis=-1)
    shape = tuple(n * order + 1 for n in counts)
    if distort:
        rng = np.random.default_rng(seed)
        idx = np.stack(np.meshgrid(*[np.arange(s) for s in shape], indexing="ij"), -1)
        idx = idx.transpose(tuple(range(len(counts)))[::-1] + (len(counts),)).reshape(-1, len(counts))
        # move only lattice points that are element corners in the interior, and
        # keep mid-side nodes at the middle of straight edges afterwards
        corner = np.all(idx % order == 0, axis=1)
        interior = np.all((idx > 0) & (idx < np.array(shape) - 1), axis=1)
        h = np.array(lengths) / np.array(counts)
        move = corner & interior
        shift = distort * h * rng.uniform(-0.5, 0.5, size=(move.sum(), len(counts)))
        for d, near in enumerate(local):        # graded axes: a share of the smaller neighbouring cell's size
            if near is not None:
                shift[:, d] *= near[idx[move, d]] / h[d]
        pts[move] += shift
    return pts, shape


def _number(shape):
    def idx(*ijk):
        out = 0
        stride = 1
        for i, s in zip(ijk, shape):
            out = out + i * stride
            stride *= s
        return out
    return idx


def _recentre_midnodes(nodes, cells, etype):
    """Put every mid-side node at the middle of its (straight) edge, and
    centre nodes at the mean of their corners, after corners moved."""

    et = ELEMENTS[etype]
    for e in et.edges:
        if len(e) == 3:
            a, b, m = e
            nodes[cells[:, m]] = 0.5 * (nodes[cells[:, a]] + nodes[cells[:, b]])
    if etype == "quad9":
        nodes[cells[:, 8]] = nodes[cells[:, :4]].mean(axis=1)


def _compact(nodes, cells):
    used = np.unique(cells)
    new = np.full(len(nodes), -1, dtype=np.int64)
    new[used] = np.arange(len(used))
    return nodes[used], new[cells]


def rectangle_mesh(etype="quad4", nx=4, ny=4, size=(1.0, 1.0), origin=(0.0, 0.0), distort=0.0, seed=0,
                   grading=None, regions=None):
    """Structured mesh of the rectangle ``origin + [0, Lx] x [0, Ly]``.

    ``etype`` one of tri3, tri6, quad4, quad8, quad9 (triangles: two per
    square, split along the rising diagonal).  ``grading=(gx, gy)``: ratio of
    the last to the first element size along each axis (``distort`` then
    moves each interior corner by a share of its smaller neighbouring cell's
    size, so graded cells stay valid).  ``regions``: a
    callable of cell-centre coordinates (m, 2) returning region ids.
    """
    if etype not in ("tri3", "tri6", "quad4", "quad8", "quad9"):
        raise InputError(f"rectangle_mesh: etype must be a 2D type, got {etype!r}")
    if nx < 1 or ny < 1:
        raise InputError(f"rectangle_mesh: nx and ny must be >= 1, got {nx}, {ny}")
    o = get_element(etype).degree    # node intervals per cell edge on the lattice
    pts, shape = _lattice((nx, ny), size, origin, distort, seed, o, grading)
    idx = _number(shape)
    I, J = (a.ravel() * o for a in np.meshgrid(np.arange(nx), np.arange(ny), indexing="xy"))
    if etype == "quad4":
        cells = np.c_[idx(I, J), idx(I + 1, J), idx(I + 1, J + 1), idx(I, J + 1)]
    elif etype in ("quad8", "quad9"):
        c = [idx(I, J), idx(I + 2, J), idx(I + 2, J + 2), idx(I, J + 2),
             idx(I + 1, J), idx(I + 2, J + 1), idx(I + 1, J + 2), idx(I, J + 1)]
        if etype == "quad9":
            c.append(idx(I + 1, J + 1))
        cells = np.stack(c, 1)
    elif etype == "tri3":
        a, b, c_, d = idx(I, J), idx(I + 1, J), idx(I + 1, J + 1), idx(I, J + 1)
        cells = np.r_[np.c_[a, b, c_], np.c_[a, c_, d]]
    else:
        a, b, c_, d = idx(I, J), idx(I + 2, J), idx(I + 2, J + 2), idx(I, J + 2)
        cells = np.r_[np.c_[a, b, c_, idx(I + 1, J), idx(I + 2, J + 1), idx(I + 1, J + 1)],
                      np.c_[a, c_, d, idx(I + 1, J + 1), idx(I + 1, J + 2), idx(I, J + 1)]]
    if distort and o == 2:
        _recentre_midnodes(pts, cells, etype)
    nodes, cells = _compact(pts, cells)
    reg = None
    if regions is not None:
        reg = {etype: np.asarray(regions(nodes[cells].mean(axis=1)), dtype=np.int64)}
    return Mesh(nodes, {etype: cells}, regions=reg)


def box_mesh(etype="hex8", nx=2, ny=2, nz=2, size=(1.0, 1.0, 1.0), origin=(0.0, 0.0, 0.0), distort=0.0,
             seed=0, grading=None):
    """Structured mesh of a box; ``etype`` one of tet4, tet10, hex8, hex20
    (tetrahedra: six per cube, Kuhn subdivision, all positively oriented).
    ``grading=(gx, gy, gz)``: ratio of the last to the first element size
    along each axis; ``distort`` then moves each interior corner by a share
    of its smaller neighbouring cell's size, so graded cells stay valid."""
    if etype not in ("tet4", "tet10", "hex8", "hex20"):
        raise InputError(f"box_mesh: etype must be a 3D type, got {etype!r}")
    o = get_element(etype).degree    # node intervals per cell edge on the lattice
    pts, shape = _lattice((nx, ny, nz), size, origin, distort, seed, o, grading)
    idx = _number(shape)
    I, J, K = (a.ravel() * o for a in np.meshgrid(np.arange(nx), np.arange(ny), np.arange(nz), indexing="ij"))
    s = o  # lattice steps per element

    def v(di, dj, dk):
        return idx(I + di * s, J + dj * s, K + dk * s)

    corners = [v(0, 0, 0), v(1, 0, 0), v(1, 1, 0), v(0, 1, 0), v(0, 0, 1), v(1, 0, 1), v(1, 1, 1), v(0, 1, 1)]
    if etype.startswith("hex"):
        cells = np.stack(corners, 1)
        if etype == "hex20":
            lat = lambda a: idx(*a)
            mids = []
            cc = np.array([(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (0, 0, 1), (1, 0, 1), (1, 1, 1), (0, 1, 1)])
            for a, b, _ in ELEMENTS["hex20"].edges:
                h = (cc[a] + cc[b])  # in half-steps
                mids.append(idx(I + h[0], J + h[1], K + h[2]))
            cells = np.c_[cells, np.stack(mids, 1)]
    else:
        # Kuhn: 6 tets along the main diagonal 0 -> 6
        paths = [(1, 2), (2, 3), (3, 7), (7, 4), (4, 5), (5, 1)]
        cc = np.array([(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (0, 0, 1), (1, 0, 1), (1, 1, 1), (0, 1, 1)])
        tets = []
        for a, b in paths:
            t = [0, a, b, 6]
            x = cc[t].astype(float)
            vol = np.linalg.det(np.c_[x[1] - x[0], x[2] - x[0], x[3] - x[0]].T)
            if vol < 0:
                t = [0, b, a, 6]
            tets.append(t)
        cells_list = []
        for t in tets:
            c = [corners[i] for i in t]
            if etype == "tet10":
                for a, b, _ in ELEMENTS["tet10"].edges:
                    h = cc[t[a]] + cc[t[b]]
                    c.append(idx(I + h[0], J + h[1], K + h[2]))
            cells_list.append(np.stack(c, 1))
        cells = np.concatenate(cells_list)
    if distort and o == 2:
        _recentre_midnodes(pts, cells, etype)
    nodes, cells = _compact(pts, cells)
    return Mesh(nodes, {etype: cells})
