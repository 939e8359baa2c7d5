"""Building blocks of the parametric meshers.

A model is assembled from mapped blocks: each block is the unit square meshed
by :func:`toolkit.core.grid.rectangle_mesh` (which owns the connectivity of
every element type), its lattice coordinates re-spaced along each direction by
given element-boundary distributions (mid-side nodes at the parametric middle
of their element), then mapped to the plane by the transfinite (Coons)
interpolation of its four side curves (Gordon & Hall 1973):

    x(s, t) = (1-t) B(s) + t T(s) + (1-s) L(t) + s R(t)
              - [(1-s)(1-t) B(0) + s(1-t) B(1) + (1-s) t T(0) + s t T(1)]

Blocks that share a side are given the same curve and distribution, so their
nodes coincide; coincident nodes are merged and the result is checked for
conformity (every boundary edge must carry a name).  Everything is vectorised
over nodes and cells.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from toolkit.errors import InputError
from toolkit.core.elements import get_element
from toolkit.core.mesh import Mesh
from toolkit.core.grid import rectangle_mesh

__all__ = ["Curve", "line", "arc", "join", "uniform", "graded", "Block", "assemble", "boundary_edges",
           "scaled_element_size",
           "edges_on", "cell_edges_on", "reflect_permutation", "Model", "QUAD_TYPES"]

QUAD_TYPES = ("quad4", "quad8", "quad9")


# ---------------------------------------------------------------------------
# Curves: maps [0, 1] -> plane, parametrised proportionally to arc length
# ---------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Curve:
    """A plane curve ``x(u)``, ``u`` in [0, 1] proportional to arc length."""

    fn: object
    length: float

    def __call__(self, u):
        return self.fn(np.asarray(u, dtype=float))

    @property
    def start(self):
        return self(np.array([0.0]))[0]

    @property
    def end(self):
        return self(np.array([1.0]))[0]

    def reversed(self) -> "Curve":
        return Curve(lambda u: self.fn(1.0 - u), self.length)


def line(p, q) -> Curve:
    p, q = np.asarray(p, float), np.asarray(q, float)
    return Curve(lambda u: p[None, :] + u[:, None] * (q - p)[None, :], float(np.linalg.norm(q - p)))


def arc(centre, radius, a0, a1) -> Curve:
    """Circular arc from angle ``a0`` to ``a1`` (radians, counter-clockwise if a1 > a0)."""
    c = np.asarray(centre, float)

    def fn(u):
        a = a0 + u * (a1 - a0)
        return c[None, :] + radius * np.stack([np.cos(a), np.sin(a)], axis=-1)
    return Curve(fn, float(abs(a1 - a0) * radius))


def join(*curves) -> Curve:
    """Curves end to end (each must start where the previous ends); zero-length
    pieces are dropped.  The parameter stays proportional to arc length."""
    cs = [c for c in curves if c.length > 0]
    if not cs:
        raise InputError("join: all pieces have zero length")
    L = np.array([c.length for c in cs])
    bounds = np.concatenate([[0.0], np.cumsum(L) / L.sum()])

    def fn(u):
        out = np.empty((len(u), 2))
        piece = np.clip(np.searchsorted(bounds, u, side="right") - 1, 0, len(cs) - 1)
        for i, c in enumerate(cs):
            sel = piece == i
            if sel.any():
                out[sel] = c((u[sel] - bounds[i]) / (bounds[i + 1] - bounds[i]))
        return out
    return Curve(fn, float(L.sum()))


# ---------------------------------------------------------------------------
# Element-boundary distributions on [0, 1]
# ---------------------------------------------------------------------------
def uniform(n: int) -> np.ndarray:
    return np.linspace(0.0, 1.0, int(n) + 1)


def graded(length: float, first: float, last: float | None = None, growth: float = 1.2,
           at: str = "start") -> np.ndarray:
    """Element boundaries (fractions of ``length``) with sizes starting at
    about ``first`` and growing by ``growth`` per element up to ``last``
    (then constant), scaled to fit ``length`` exactly.  ``at="end"`` puts the
    fine end at 1 instead of 0."""
    if length <= 0 or first <= 0:
        raise InputError(f"graded: length and first size must be positive (got {length}, {first})")
    last = max(first, last if last is not None else length)
    if first >= length:
        sizes = np.array([length])
    else:
        ng = int(np.floor(np.log(last / first) / np.log(growth))) + 1 if last > first else 1
        grow = first * growth ** np.arange(ng)
        grow = np.minimum(grow, last)
        csum = np.cumsum(grow)
        if csum[-1] >= length:
            k = int(np.searchsorted(csum, length))
            sizes = grow[:k + 1]
        else:
            nrest = int(np.ceil((length - csum[-1]) / last))
            sizes = np.concatenate([grow, np.full(nrest, last)])
    b = np.concatenate([[0.0], np.cumsum(sizes)])
    b = b / b[-1]
    if at == "end":
        b = 1.0 - b[::-1]
    elif at != "start":
        raise InputError(f"graded: at must be 'start' or 'end', got {at!r}")
    b[0], b[-1] = 0.0, 1.0
    return b


def _respace(u, bounds):
    """Map uniform lattice coordinates (multiples of 1/(n*order)) to the
    distribution ``bounds`` (n+1 element boundaries), linearly inside each
    element so mid-side nodes stay at the parametric middle."""
    n = len(bounds) - 1
    return np.interp(u * n, np.arange(n + 1), bounds)


# ---------------------------------------------------------------------------
# Blocks
# ---------------------------------------------------------------------------
def scaled_element_size(who: str, element_size, default: float) -> float:
    """The element size a model uses at its feature: ``element_size`` when it
    is positive (mm), ``default`` (the size scaled to the feature) when it is
    0.  Anything else (negative, not finite, not a number, a bool) raises an
    :class:`InputError` naming ``who``."""
    bad = InputError(f"{who}: element_size must be 0 (the scaled default) or a positive size in mm, "
                     f"got {element_size!r}")
    if isinstance(element_size, bool):
        raise bad
    try:
        h = float(element_size)
    except (TypeError, ValueError):
        raise bad from None
    if not (np.isfinite(h) and h >= 0):
        raise bad
    return h if h > 0 else float(default)


@dataclass(eq=False)
class Block:
    """A four-sided mapped block.

    ``bottom`` and ``top`` run in ``s`` (left to right), ``left`` and
    ``right`` in ``t`` (bottom to top); corners must meet.  ``s`` and ``t``
    are element-boundary distributions (see :func:`graded`).  ``names`` maps
    a side ("bottom", "right", "top", "left") to the name of the model edge
    it belongs to (free or loaded surfaces, symmetry planes), or ``None`` for
    sides shared with another block.  The block must be oriented so that
    (s, t) is right-handed.
    """

    bottom: Curve
    right: Curve
    top: Curve
    left: Curve
    s: np.ndarray
    t: np.ndarray
    names: dict = field(default_factory=dict)
    region: int = 0

    def mesh_arrays(self, etype):
        unit = rectangle_mesh(etype, len(self.s) - 1, len(self.t) - 1)
        cells = unit.block(etype).cells.astype(np.int64)
        uv = unit.nodes
        s = _respace(uv[:, 0], self.s)
        t = _respace(uv[:, 1], self.t)
        B, T, L, R = self.bottom(s), self.top(s), self.left(t), self.right(t)
        P00, P10, P01, P11 = self.bottom.start, self.bottom.end, self.top.start, self.top.end
        for a, b, what in ((P00, self.left.start, "bottom-left"), (P10, self.right.start, "bottom-right"),
                           (P01, self.left.end, "top-left"), (P11, self.right.end, "top-right")):
            if np.linalg.norm(a - b) > 1e-9 * max(1.0, np.abs(a).max()):
                raise InputError(f"Block: the {what} corner does not close ({a} vs {b})")
        S, Tt = s[:, None], t[:, None]
        x = ((1 - Tt) * B + Tt * T + (1 - S) * L + S * R
             - ((1 - S) * (1 - Tt) * P00 + S * (1 - Tt) * P10 + (1 - S) * Tt * P01 + S * Tt * P11))
        sides = {"bottom": uv[:, 1] == 0.0, "top": uv[:, 1] == 1.0,
                 "left": uv[:, 0] == 0.0, "right": uv[:, 0] == 1.0}
        return x, cells, sides


def assemble(blocks, etype="quad8", tol=1e-9, mirror=None, swap_xy=False, internal=()):
    """Mesh a list of blocks into one conforming mesh.

    Returns ``(mesh, edges, node_sets)``: ``edges`` maps each side name to
    its boundary edges (node tuples in the cell's local counter-clockwise
    order, corner, corner[, mid]); ``node_sets`` maps names to node rows.
    ``mirror=("y", 0.0[, renames])`` also adds the mirror image about the
    line y = 0 (or ``("x", c)``), merged along the line; the mirrored sides
    keep their names unless ``renames`` {name: mirrored name} says otherwise;
    a name renamed to ``None`` is dropped (it lies on the mirror line).
    ``swap_xy=True`` exchanges the coordinates at the end (an (axial,
    radial) layout becomes (r, z) for axisymmetry), keeping cells
    counter-clockwise.  Names in ``internal`` mark lines inside the body
    (e.g. a section cut); they get node sets but no boundary edges (use
    :func:`cell_edges_on`).
    Raises ``ValueError`` if the merged mesh is not conforming (a boundary
    edge no side name covers).
    """
    from scipy.spatial import cKDTree

    et = get_element(etype)
    if et.name not in QUAD_TYPES:
        raise InputError(f"element type must be one of {QUAD_TYPES}, got {etype!r}")
    xs, cs, sets, regs = [], [], {}, []
    off = 0
    for blk in blocks:
        x, c, sides = blk.mesh_arrays(et.name)
        xs.append(x); cs.append(c + off); regs.append(np.full(len(c), blk.region))
        for side, name in blk.names.items():
            if name is None:
                continue
            for nm in (name if isinstance(name, (tuple, list)) else (name,)):
                sets.setdefault(nm, []).append(np.flatnonzero(sides[side]) + off)
        off += len(x)
    X = np.concatenate(xs)
    C = np.concatenate(cs)
    R = np.concatenate(regs)
    sets = {k: np.concatenate(v) for k, v in sets.items()}
    if mirror is not None:
        ax = {"x": 0, "y": 1}[mirror[0]]
        Xm = X.copy()
        Xm[:, ax] = 2 * mirror[1] - Xm[:, ax]
        perm = reflect_permutation(et)
        C = np.concatenate([C, C[:, perm] + len(X)])
        R = np.concatenate([R, R])
        X = np.concatenate([X, Xm])
        rename = mirror[2] if len(mirror) > 2 else {}
        msets = {}
        for k, v in sets.items():
            if k in rename and rename[k] is None:
                continue
            msets.setdefault(k, []).append(v)
            msets.setdefault(rename.get(k, k), []).append(v + len(Xm))
        sets = {k: np.concatenate(v) for k, v in msets.items()}
    size = float(np.ptp(X, axis=0).max())
    tree = cKDTree(X)
    pairs = tree.query_pairs(tol * size, output_type="ndarray")
    rep = np.arange(len(X))
    if len(pairs):
        # union of coincident points: map each to the smallest index in its group
        from scipy.sparse import coo_matrix
        from scipy.sparse.csgraph import connected_components
        g = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(len(X), len(X)))
        _, lab = connected_components(g, directed=False)
        first = np.full(lab.max() + 1, len(X))
        np.minimum.at(first, lab, np.arange(len(X)))
        rep = first[lab]
    used, new = np.unique(rep, return_inverse=True)
    nodes = X[used]
    C = new[C]
    sets = {k: np.unique(new[v]) for k, v in sets.items()}
    if swap_xy:
        nodes = nodes[:, ::-1].copy()
        C = C[:, reflect_permutation(et)]
    mesh = Mesh(nodes, {et.name: C}, regions={et.name: R})
    bnd = boundary_edges(mesh)
    edges = {k: edges_on(mesh, v, bnd) for k, v in sets.items() if k not in internal}
    named = np.zeros(len(bnd), dtype=bool)
    for k, v in sets.items():
        if k not in internal:
            named |= np.isin(bnd, v).all(axis=1)
    if not named.all():
        e = bnd[np.flatnonzero(~named)[0]]
        raise InputError(f"mesher: the blocks do not conform: boundary edge {e.tolist()} at "
                         f"{mesh.nodes[e[0]].round(6).tolist()} lies on no named side "
                         f"({int((~named).sum())} such edges)")
    for k, v in edges.items():
        if len(v) == 0:
            raise InputError(f"mesher: named side {k!r} has no boundary edges")
    return mesh, edges, sets


def reflect_permutation(et):
    """Local node permutation that keeps a cell counter-clockwise after its
    nodes are mirrored: new node i takes old node perm[i], where the
    reference node of perm[i] is the mirror image (η -> -η) of node i's."""
    ref = et.nodes
    img = ref * np.array([1.0, -1.0])
    d = np.linalg.norm(ref[:, None, :] - img[None, :, :], axis=-1)
    return np.argmin(d, axis=1)


def boundary_edges(mesh: Mesh) -> np.ndarray:
    """Every edge used by exactly one cell, as node tuples in the cell's own
    (counter-clockwise) order: (m, 2) for linear, (m, 3) for quadratic types."""
    out = []
    n = mesh.nnodes
    allkeys = []
    for b in mesh.blocks:
        for loc in b.element.edges:
            a, c = b.cells[:, loc[0]].astype(np.int64), b.cells[:, loc[1]].astype(np.int64)
            allkeys.append(np.minimum(a, c) * n + np.maximum(a, c))
    keys, counts = np.unique(np.concatenate(allkeys), return_counts=True)
    once = keys[counts == 1]
    for b in mesh.blocks:
        for loc in b.element.edges:
            a, c = b.cells[:, loc[0]].astype(np.int64), b.cells[:, loc[1]].astype(np.int64)
            k = np.minimum(a, c) * n + np.maximum(a, c)
            sel = np.isin(k, once)
            out.append(b.cells[sel][:, list(loc)].astype(np.int64))
    widths = {o.shape[1] for o in out if len(o)}
    if len(widths) > 1:
        raise InputError("boundary_edges: the mesh mixes linear and quadratic element edges")
    return np.concatenate([o for o in out if o.shape[1] == max(widths)]) if widths else np.zeros((0, 2), np.int64)


def cell_edges_on(mesh: Mesh, nodes, cell_mask) -> np.ndarray:
    """Edges of the cells selected by ``cell_mask`` (a callable of cell
    centroids (m, 2) returning a mask) whose nodes all belong to ``nodes``:
    a line inside the body seen from one side (e.g. a section cut), in
    those cells' counter-clockwise order."""
    sel_nodes = np.zeros(mesh.nnodes, dtype=bool)
    sel_nodes[np.asarray(nodes)] = True
    out = []
    for b in mesh.blocks:
        cm = np.asarray(cell_mask(mesh.nodes[b.cells].mean(axis=1)), dtype=bool)
        for loc in b.element.edges:
            e = b.cells[:, list(loc)].astype(np.int64)
            out.append(e[cm & sel_nodes[e].all(axis=1)])
    return np.concatenate(out)


def edges_on(mesh: Mesh, nodes, boundary=None) -> np.ndarray:
    """Boundary edges whose nodes all belong to ``nodes`` (node rows, a
    boolean mask, or a callable of coordinates (n, 2) returning a mask)."""
    if callable(nodes):
        mask = np.asarray(nodes(mesh.nodes), dtype=bool)
    else:
        a = np.asarray(nodes)
        if a.dtype == bool:
            mask = a
        else:
            mask = np.zeros(mesh.nnodes, dtype=bool)
            mask[a] = True
    bnd = boundary_edges(mesh) if boundary is None else boundary
    return bnd[mask[bnd].all(axis=1)]


# ---------------------------------------------------------------------------
# Model record
# ---------------------------------------------------------------------------
@dataclass(eq=False)
class Model:
    """A meshed model ready for :func:`toolkit.fem.solver.solve`.

    Attributes
    ----------
    kind : str          e.g. ``"plate_with_hole"``
    mesh : Mesh
    edges : dict name -> (m, 2|3) boundary edge node tuples
    points : dict name -> node row
    analysis : str      ``"plane_stress"``, ``"plane_strain"`` or ``"axisymmetric"``
    thickness : float or None
    loads, supports : the suggested load and support set
    material : the default Material
    geometry : dict of the input and derived dimensions
    nominal : dict of nominal stresses (e.g. ``{"gross": ..., "net": ...}``)
    notes : str
    """

    kind: str
    mesh: Mesh
    edges: dict
    points: dict
    analysis: str
    thickness: float | None
    loads: list
    supports: list
    material: object
    geometry: dict
    nominal: dict
    notes: str = ""

    def __repr__(self):
        g = ", ".join(f"{k}={v:.4g}" if isinstance(v, float) else f"{k}={v}" for k, v in self.geometry.items())
        return (f"Model({self.kind}, {self.analysis}, {self.mesh.nnodes} nodes, {self.mesh.ncells} cells; {g}; "
                f"edges {sorted(self.edges)}; points {sorted(self.points)})")

    def plot(self, ax=None, show_loads=True, show_supports=True, legend=True):
        """Mesh (element edges drawn through mid-side nodes), named edges in
        colour, load arrows and support markers.  Returns the axes
        (drawn by :func:`toolkit.report.model_plot.plot_model`)."""
        from toolkit.report.model_plot import plot_model
        return plot_model(self, ax, show_loads=show_loads, show_supports=show_supports, legend=legend)
