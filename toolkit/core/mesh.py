"""Mesh: node coordinates, cell blocks of one element type each, regions.

Arrays are row-major: ``nodes`` (n, dim); each block's ``cells`` (m, k) hold
0-based row numbers into ``nodes``.  Optional ``node_ids`` and per-block
``ids`` keep the numbers a model came with (arbitrary integers), so error
messages and written files can name them.

Construction validates everything: shapes, finite coordinates, node indices in
range and not repeated within a cell, and ``det J > 0`` at every point of the
element's full and mass rules (an inverted or collapsed element raises a
``ValueError`` naming the block and cell).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from toolkit.errors import InputError
from toolkit.core.arrays import readonly
from toolkit.core.elements import ElementType, QuadratureRule, get_element

__all__ = ["CellBlock", "Mesh", "Geometry", "inverse_map"]


@dataclass(frozen=True, eq=False)
class CellBlock:
    """Cells of one element type: ``cells`` (m, k), ``regions`` (m,), ``ids`` (m,)."""

    element: ElementType
    cells: np.ndarray
    regions: np.ndarray
    ids: np.ndarray

    @property
    def name(self) -> str:
        return self.element.name

    def __len__(self):
        return len(self.cells)

    def label(self, c: int) -> str:
        """``"block quad8, cell 12 (element 1013)"`` for messages."""
        return f"block {self.name}, cell {c} (element {int(self.ids[c])})"


@dataclass(frozen=True, eq=False)
class Geometry:
    """Isoparametric geometry of one block at one point set.

    Axis letters: c cells, q points, k element nodes, i physical and j natural
    coordinates.

    ``N_qk`` shape functions, ``x_cqi`` physical point coordinates,
    ``J_cqij`` Jacobian dx_i/dxi_j, ``detJ_cq``, ``dNdx_cqki`` physical
    gradients (only when asked for), ``dV_cq = w_q * detJ_cq``.
    """

    N_qk: np.ndarray
    x_cqi: np.ndarray
    J_cqij: np.ndarray
    detJ_cq: np.ndarray
    dV_cq: np.ndarray | None
    dNdx_cqki: np.ndarray | None


def _det(J):
    d = J.shape[-1]
    if d == 2:
        return J[..., 0, 0] * J[..., 1, 1] - J[..., 0, 1] * J[..., 1, 0]
    if d == 3:
        return (J[..., 0, 0] * (J[..., 1, 1] * J[..., 2, 2] - J[..., 1, 2] * J[..., 2, 1])
                - J[..., 0, 1] * (J[..., 1, 0] * J[..., 2, 2] - J[..., 1, 2] * J[..., 2, 0])
                + J[..., 0, 2] * (J[..., 1, 0] * J[..., 2, 1] - J[..., 1, 1] * J[..., 2, 0]))
    return np.linalg.det(J)


class Mesh:
    """A finite-element mesh.

    Parameters
    ----------
    nodes : array (n, 2) or (n, 3)
    blocks : dict ``{type name: cells (m, k)}``, 0-based node rows
    regions : dict ``{type name: (m,) ints}``, optional (default region 0)
    node_ids : (n,) ints, optional (default 0..n-1)
    cell_ids : dict ``{type name: (m,) ints}``, optional (default: running
        numbers over the blocks in the given order)

    Examples
    --------
    Two 2 x 1 quad4 cells side by side (corners counter-clockwise):

    >>> mesh = Mesh([[0, 0], [2, 0], [2, 1], [0, 1], [4, 0], [4, 1]],
    ...             {"quad4": [[0, 1, 2, 3], [1, 4, 5, 2]]})
    >>> mesh
    Mesh(6 nodes, 2 quad4, 1 region(s), 2D)
    >>> mesh.volumes().tolist()
    [2.0, 2.0]

    A cell whose corners run clockwise is refused before any work is done:

    >>> Mesh([[0, 0], [0, 1], [1, 1], [1, 0]], {"quad4": [[0, 1, 2, 3]]})
    Traceback (most recent call last):
    ...
    toolkit.errors.InputError: block quad4, cell 0 (element 0): inverted element, det J = -0.25 at a full-rule point ...
    """

    def __init__(self, nodes, blocks, regions=None, node_ids=None, cell_ids=None):
        nodes = np.asarray(nodes, dtype=float)
        if nodes.ndim != 2 or nodes.shape[1] not in (2, 3):
            raise InputError(f"nodes must be shaped (n, 2) or (n, 3), got {nodes.shape}")
        bad = ~np.isfinite(nodes).all(axis=1)
        if bad.any():
            raise InputError(f"node row {int(np.flatnonzero(bad)[0])} has a non-finite coordinate "
                             f"({bad.sum()} such nodes)")
        n, dim = nodes.shape
        self.nodes = readonly(nodes)
        if node_ids is None:
            node_ids = np.arange(n)
        node_ids = np.asarray(node_ids)
        if node_ids.shape != (n,) or not np.issubdtype(node_ids.dtype, np.integer):
            raise InputError(f"node_ids must be {n} integers, got shape {node_ids.shape} of {node_ids.dtype}")
        if len(np.unique(node_ids)) != n:
            raise InputError("node_ids are not unique")
        self.node_ids = readonly(node_ids.astype(np.int64))
        if not isinstance(blocks, dict) or not blocks:
            raise InputError("blocks must be a non-empty dict {element type: cells}")
        regions = regions or {}
        cell_ids = cell_ids or {}
        for key in list(regions) + list(cell_ids):
            if key not in blocks:
                raise InputError(f"regions/cell_ids given for block {key!r}, which is not in blocks")
        self._blocks: dict[str, CellBlock] = {}
        start = 0
        for name, conn in blocks.items():
            et = get_element(name)
            if et.name in self._blocks:
                raise InputError(f"block {et.name} given twice")
            if et.dim != dim:
                raise InputError(f"block {et.name}: a {et.dim}D element in a mesh with {dim}D nodes")
            conn = np.asarray(conn)
            if conn.ndim != 2 or conn.shape[1] != et.nnodes:
                raise InputError(f"block {et.name}: cells must be shaped (m, {et.nnodes}), got {conn.shape}")
            if conn.size and not np.issubdtype(conn.dtype, np.integer):
                if not np.all(conn == np.round(conn)):
                    raise InputError(f"block {et.name}: cell node indices must be integers")
            conn = conn.astype(np.int64, copy=False)      # range-checked at 64 bits, narrowed after the check
            m = len(conn)
            if m == 0:
                raise InputError(f"block {et.name} has no cells")
            lo, hi = conn.min(axis=1), conn.max(axis=1)
            out = np.flatnonzero((lo < 0) | (hi >= n))
            if out.size:
                c = int(out[0])
                eid = f" (element {int(cell_ids[name][c])})" if name in cell_ids else ""
                raise InputError(f"block {et.name}, cell {c}{eid}: node index out of range 0..{n - 1} "
                                 f"({conn[c].tolist()}); {out.size} such cells")
            if n <= 2**31 - 1:
                conn = conn.astype(np.int32)
            srt = np.sort(conn, axis=1)
            rep = np.flatnonzero((srt[:, 1:] == srt[:, :-1]).any(axis=1))
            if rep.size:
                c = int(rep[0])
                eid = f" (element {int(cell_ids[name][c])})" if name in cell_ids else ""
                raise InputError(f"block {et.name}, cell {c}{eid}: repeated node index ({conn[c].tolist()}); "
                                 f"{rep.size} such cells")
            reg = np.asarray(regions.get(name, np.zeros(m, dtype=np.int64)))
            if reg.shape != (m,) or (reg.size and not np.issubdtype(reg.dtype, np.integer)):
                raise InputError(f"block {et.name}: regions must be {m} integers, got shape {reg.shape}")
            ids = np.asarray(cell_ids.get(name, np.arange(start, start + m)))
            if ids.shape != (m,) or not np.issubdtype(ids.dtype, np.integer):
                raise InputError(f"block {et.name}: cell_ids must be {m} integers, got shape {ids.shape}")
            start += m
            self._blocks[et.name] = CellBlock(et, readonly(conn), readonly(reg.astype(np.int64)),
                                              readonly(ids.astype(np.int64)))
        all_ids = np.concatenate([b.ids for b in self._blocks.values()])
        if len(np.unique(all_ids)) != len(all_ids):
            raise InputError("cell ids are not unique across blocks")
        self._geometry_cache: dict = {}
        self._regions = self._used = None          # computed on first use (the arrays are read-only)
        for b in self._blocks.values():
            self._check_orientation(b)

    # ------------------------------------------------------------------
    @property
    def dim(self) -> int:
        return self.nodes.shape[1]

    @property
    def nnodes(self) -> int:
        return self.nodes.shape[0]

    @property
    def ncells(self) -> int:
        return sum(len(b) for b in self._blocks.values())

    @property
    def blocks(self) -> tuple[CellBlock, ...]:
        return tuple(self._blocks.values())

    def block(self, name) -> CellBlock:
        key = get_element(name).name
        try:
            return self._blocks[key]
        except KeyError:
            raise InputError(f"the mesh has no {key} block; it has {', '.join(self._blocks)}") from None

    @property
    def regions(self) -> np.ndarray:
        """Sorted distinct region ids over all blocks (read-only)."""
        if self._regions is None:
            self._regions = readonly(np.unique(np.concatenate([b.regions for b in self._blocks.values()])))
        return self._regions

    def used_nodes(self) -> np.ndarray:
        """Boolean (n,): the node belongs to at least one cell (read-only)."""
        if self._used is None:
            used = np.zeros(self.nnodes, dtype=bool)
            for b in self._blocks.values():
                used[b.cells.ravel()] = True
            self._used = readonly(used)
        return self._used

    def __repr__(self):
        blocks = ", ".join(f"{len(b)} {b.name}" for b in self._blocks.values())
        return f"Mesh({self.nnodes} nodes, {blocks}, {len(self.regions)} region(s), {self.dim}D)"

    # ------------------------------------------------------------------
    def geometry(self, name, rule, gradients: bool = False) -> Geometry:
        """Geometry of block ``name`` at a rule (a :class:`QuadratureRule`, a
        rule name understood by :meth:`ElementType.rule`, or natural
        coordinates (q, dim), in which case ``dV_cq`` is ``None``)."""
        b = self.block(name)
        et = b.element
        if isinstance(rule, np.ndarray):
            pts, w = et.check_points(rule), None
        else:
            r = et.rule(rule)
            pts, w = r.points, r.weights
        key = (b.name, pts.tobytes(), gradients)
        hit = self._geometry_cache.get(key)
        if hit is not None:
            return hit
        N, dN = et.evaluate(pts)                                 # (q, k), (q, k, j)
        xe = self.nodes[b.cells]                                 # (c, k, i)
        x = np.tensordot(xe, N, axes=([1], [1])).transpose(0, 2, 1)     # (c, q, i)
        J = np.tensordot(xe, dN, axes=([1], [1]))                # (c, i, q, j)
        J = np.ascontiguousarray(J.transpose(0, 2, 1, 3))        # (c, q, i, j)
        det = _det(J)
        dV = det * w[None, :] if w is not None else None
        dNdx = None
        if gradients:
            Jinv = np.linalg.inv(J)                              # (c, q, j, i)
            dNdx = np.einsum("qkj,cqji->cqki", dN, Jinv, optimize=True)
        g = Geometry(N, np.ascontiguousarray(x), J, det, dV, dNdx)
        if len(self._geometry_cache) < 16:
            self._geometry_cache[key] = g
        return g

    def _check_orientation(self, b: CellBlock):
        et = b.element
        for which in dict.fromkeys(("full", "mass")):
            g = self.geometry(b.name, which)
            scale = np.abs(g.J_cqij).max(axis=(2, 3)) ** et.dim
            bad = g.detJ_cq <= 1e-12 * scale
            if bad.any():
                cells = np.flatnonzero(bad.any(axis=1))
                c = int(cells[0])
                kind = "inverted" if (g.detJ_cq[c] < 0).any() else "degenerate"
                raise InputError(f"{b.label(c)}: {kind} element, det J = {g.detJ_cq[c].min():.3g} "
                                 f"at a {which}-rule point (check node order and coordinates); "
                                 f"{cells.size} such cells")

    def volumes(self, name=None) -> np.ndarray:
        """Cell areas (2D) or volumes (3D), per block or all blocks concatenated."""
        names = [name] if name is not None else list(self._blocks)
        return np.concatenate([self.geometry(nm, "mass").dV_cq.sum(axis=1) for nm in names])


def inverse_map(element, xe, x, tol=1e-12, maxiter=30):
    """Natural coordinates of physical points inside given cells (the inverse
    isoparametric map), by Newton's method vectorised over all points.

    Parameters
    ----------
    element : ElementType or name
    xe : (p, k, dim) node coordinates of the cell each point belongs to
    x : (p, dim) physical points

    Returns
    -------
    xi : (p, dim) natural coordinates
    converged : (p,) bool — False where Newton did not settle (the point is
        then far outside its cell, or the cell is badly distorted).  Whether
        a converged point lies inside the reference element is for the caller
        to test with ``element.contains(xi)``.
    """
    et = get_element(element)
    xe = np.asarray(xe, dtype=float)
    x = np.asarray(x, dtype=float)
    p = len(x)
    xi = np.tile(et.centroid, (p, 1))
    size = np.ptp(xe, axis=1).max(axis=1) + 1e-300
    active = np.ones(p, dtype=bool)
    for _ in range(maxiter):
        idx = np.flatnonzero(active)
        if idx.size == 0:
            break
        N, dN = et.evaluate(xi[idx])                          # (p, k), (p, k, j)
        xs = xe[idx]
        xcur = np.matmul(N[:, None, :], xs)[:, 0, :]          # x_pi = N_pk x_pki
        J = np.matmul(xs.transpose(0, 2, 1), dN)              # J_pij = x_pki dN_pkj
        r = xcur - x[idx]
        with np.errstate(all="ignore"):
            step = np.linalg.solve(J, r[..., None])[..., 0]
        step = np.where(np.isfinite(step), step, 0.0)
        xi[idx] -= step
        # keep iterates bounded so far-away points do not overflow
        np.clip(xi, -10.0, 10.0, out=xi)
        # settled: the residual is at round-off of the coordinates, or the step is
        scale = size[idx] + np.abs(x[idx]).max(axis=1)
        small = (np.linalg.norm(r, axis=1) <= tol * scale) | (np.abs(step).max(axis=1) <= 1e-14)
        active[idx[small]] = False
    N, _ = et.evaluate(xi)
    err = np.linalg.norm(np.matmul(N[:, None, :], xe)[:, 0, :] - x, axis=1)
    return xi, err <= 1e-8 * size + 1e-12 * np.abs(x).max(axis=1)

