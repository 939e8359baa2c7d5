"""Reference elements and Gauss rules.

Every element type is a small, immutable data object: its reference node
coordinates, the monomials that span its shape-function space, and its Gauss
rules.  Shape functions are built once per type as the Lagrange basis of that
space on the reference nodes, ``N(xi) = P(xi) @ inv(P(nodes))``, so a single
mechanism (and a single definition per type) serves the solver, the recovery
methods, the point locator and the plots.

Reference domains (one per shape, never mixed):

* quad, hex: ``[-1, 1]^d``
* tri, tet: the unit simplex ``{xi_i >= 0, sum(xi) <= 1}``

Node order follows the usual (VTK) convention: corners counter-clockwise (for
3D: bottom face counter-clockwise seen from above, then the top face), then
mid-side nodes edge by edge, then face and centre nodes.

Integration-point order of the tensor-product rules: ``xi`` varies fastest,
then ``eta``, then ``zeta``.  Simplex rules list their points in the order
given in :data:`SIMPLEX_RULES`.  Use :attr:`QuadratureRule.points` rather than
any assumed order when mapping data to points.
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from toolkit.core.arrays import readonly
from toolkit.errors import InputError

__all__ = [
    "QuadratureRule", "ElementType", "ELEMENTS", "get_element",
    "gauss_legendre_rule", "simplex_rule", "rule_of_degree", "local_field_exponents", "local_field_matrix",
]


# --------------------------------------------------------------------------
# Quadrature
# --------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class QuadratureRule:
    """Points and weights on a reference domain.

    Attributes
    ----------
    name : str
        Human-readable label, e.g. ``"gauss 2x2"`` or ``"tri 6-point"``.
    shape : str
        Reference domain: ``"quad"``, ``"hex"``, ``"tri"`` or ``"tet"``.
    points : ndarray (q, dim)
        Natural coordinates of the points.
    weights : ndarray (q,)
        Weights; they sum to the reference measure (4, 8, 1/2, 1/6).
    degree : int
        Degree of exactness.  Tensor rules: every monomial with each exponent
        ``<= degree`` is integrated exactly.  Simplex rules: every monomial of
        total degree ``<= degree``.
    """

    name: str
    shape: str
    points: np.ndarray
    weights: np.ndarray
    degree: int

    def __post_init__(self):
        object.__setattr__(self, "points", readonly(np.asarray(self.points, dtype=float)))
        object.__setattr__(self, "weights", readonly(np.asarray(self.weights, dtype=float)))

    @property
    def npoints(self) -> int:
        return len(self.weights)

    def __repr__(self):
        return f"QuadratureRule({self.name!r}, {self.npoints} points, degree {self.degree})"


def gauss_legendre_rule(n: int, dim: int) -> QuadratureRule:
    """Tensor-product Gauss–Legendre rule with ``n`` points per direction on
    ``[-1, 1]^dim`` (exact to degree ``2n - 1`` in each coordinate).
    Point order: first coordinate fastest."""
    x, w = np.polynomial.legendre.leggauss(n)
    grids = np.meshgrid(*([x] * dim), indexing="ij")
    wgrids = np.meshgrid(*([w] * dim), indexing="ij")
    # indexing="ij" makes the first axis slowest; reverse so xi is fastest
    pts = np.stack([g.transpose(tuple(range(dim))[::-1]).ravel() for g in grids], axis=-1)
    wts = np.prod([g.transpose(tuple(range(dim))[::-1]).ravel() for g in wgrids], axis=0)
    shape = "quad" if dim == 2 else "hex"
    label = "x".join([str(n)] * dim)
    return QuadratureRule(f"gauss {label}", shape, pts, wts, 2 * n - 1)


def _sym_tri(groups):
    """Expand symmetric orbits of barycentric points on the unit triangle.
    groups: list of (kind, a, weight) with kind 'c' (centroid), 'a' (a, a, 1-2a)."""
    pts, wts = [], []
    for kind, a, w in groups:
        if kind == "c":
            pts.append((1 / 3, 1 / 3)); wts.append(w)
        else:
            b = 1 - 2 * a
            for p in ((a, a), (b, a), (a, b)):
                pts.append(p); wts.append(w)
    return np.array(pts), 0.5 * np.array(wts)


def _sym_tet(groups):
    """Expand symmetric orbits on the unit tetrahedron (weights for volume 1)."""
    pts, wts = [], []
    for kind, a, w in groups:
        if kind == "c":
            pts.append((0.25, 0.25, 0.25)); wts.append(w)
        elif kind == "a":  # (a, a, a, 1-3a): 4 points
            b = 1 - 3 * a
            for p in ((a, a, a), (b, a, a), (a, b, a), (a, a, b)):
                pts.append(p); wts.append(w)
        else:  # "ab": (a, a, b, b) with b = 1/2 - a: 6 points
            b = 0.5 - a
            for p in ((a, a, b), (a, b, a), (b, a, a), (b, b, a), (b, a, b), (a, b, b)):
                pts.append(p); wts.append(w)
    return np.array(pts), np.array(wts) / 6.0


# Symmetric simplex rules with positive weights and interior points.
# Triangle degree 2 and the degree 4/5 rules: Strang & Fix (1973), Dunavant
# (1985, IJNME 21, 1129-1148).  Tetrahedron degree 2: Keast (1986); degree 5
# (14 points): Walkington (2000) / Keast.  Exactness is verified in the tests.
SIMPLEX_RULES = {
    ("tri", 1): ("tri 1-point", 1, [("c", None, 1.0)]),
    ("tri", 3): ("tri 3-point", 2, [("a", 1 / 6, 1 / 3)]),
    ("tri", 6): ("tri 6-point", 4, [("a", 0.445948490915965, 0.223381589678011),
                                    ("a", 0.091576213509771, 0.109951743655322)]),
    ("tri", 7): ("tri 7-point", 5, [("c", None, 0.225),
                                    ("a", 0.470142064105115, 0.132394152788506),
                                    ("a", 0.101286507323456, 0.125939180544827)]),
    ("tet", 1): ("tet 1-point", 1, [("c", None, 1.0)]),
    ("tet", 4): ("tet 4-point", 2, [("a", 0.1381966011250105, 0.25)]),
    ("tet", 14): ("tet 14-point", 5, [("a", 0.0927352503108912, 0.01224884051939366 * 6),
                                      ("a", 0.3108859192633006, 0.01878132095300264 * 6),
                                      ("ab", 0.0455037041256496, 0.007091003462846911 * 6)]),
}


def simplex_rule(shape: str, npoints: int) -> QuadratureRule:
    """One of the symmetric simplex rules in :data:`SIMPLEX_RULES`."""
    try:
        name, degree, groups = SIMPLEX_RULES[(shape, npoints)]
    except KeyError:
        have = sorted(n for s, n in SIMPLEX_RULES if s == shape)
        raise InputError(f"no {shape} rule with {npoints} points; available: {have}") from None
    pts, w = (_sym_tri if shape == "tri" else _sym_tet)(groups)
    return QuadratureRule(name, shape, pts, w, degree)


def rule_of_degree(shape: str, degree: int) -> QuadratureRule:
    """The smallest stored rule on ``shape`` exact to ``degree`` (tensor rules:
    in each coordinate; simplex rules: total degree)."""
    if shape in ("quad", "hex"):
        n = max(1, -(-(degree + 1) // 2))
        return gauss_legendre_rule(n, 2 if shape == "quad" else 3)
    cands = sorted((d, n) for (s, n), (_, d, _) in SIMPLEX_RULES.items() if s == shape and d >= degree)
    if not cands:
        raise InputError(f"no stored {shape} rule is exact to degree {degree}")
    return simplex_rule(shape, cands[0][1])


# --------------------------------------------------------------------------
# Polynomial spaces
# --------------------------------------------------------------------------
def _tensor_exponents(p: int, dim: int):
    return [e[::-1] for e in itertools.product(range(p + 1), repeat=dim)]


def _total_exponents(p: int, dim: int):
    return [e for e in itertools.product(range(p + 1), repeat=dim) if sum(e) <= p]


def _monomials(xi: np.ndarray, exps: np.ndarray):
    """P[p, j] = prod_d xi[p, d]**exps[j, d] and its gradient dP[p, j, d].

    Powers come from a table built by repeated multiplication
    (pow_[e, p, d] = xi[p, d]**e), so no floating-point ``**`` is evaluated."""
    xi = np.asarray(xi, dtype=float)
    npts, dim = xi.shape
    top = int(exps.max()) if exps.size else 0
    pow_ = np.ones((top + 2, npts, dim))
    for e in range(1, top + 1):
        pow_[e] = pow_[e - 1] * xi
    cols = np.arange(dim)
    # factors[p, j, d] = xi[p, d]**exps[j, d]
    factors = pow_[exps, :, cols].transpose(2, 0, 1)            # (j, d, p) -> (p, j, d)
    P = np.prod(factors, axis=-1)
    dP = np.empty((npts, len(exps), dim))
    for d in range(dim):
        lower = exps[:, d] - 1
        dfac = np.where(lower >= 0, exps[:, d], 0)[None, :] * pow_[np.maximum(lower, 0), :, d].T
        others = np.prod(np.delete(factors, d, axis=-1), axis=-1) if dim > 1 else 1.0
        dP[..., d] = dfac * others
    return P, dP


def local_field_exponents(shape: str, npoints: int) -> tuple[np.ndarray, int]:
    """Exponents of the polynomial space that interpolates ``npoints`` values on
    a ``shape`` element (Hinton & Campbell's local field), and its degree
    (per coordinate for quad/hex, total for tri/tet).

    quad/hex: ``n**dim`` points -> tensor space Q_{n-1} (constant through 1,
    bilinear through 2x2, biquadratic through 3x3, ...).  tri: 1, 3, 6 points
    -> P0, P1, P2.  tet: 1, 4, 10 points
    -> P0, P1, P2.
    """
    dim = 2 if shape in ("quad", "tri") else 3
    if shape in ("quad", "hex"):
        n = round(npoints ** (1 / dim))
        if n ** dim == npoints:
            return np.array(_tensor_exponents(n - 1, dim)), n - 1
    else:
        table = {1: 0, 3: 1, 6: 2} if shape == "tri" else {1: 0, 4: 1, 10: 2}
        if npoints in table:
            p = table[npoints]
            return np.array(_total_exponents(p, dim)), p
    raise InputError(
        f"no local field is defined for {npoints} points on a {shape} element; "
        "give values at a complete rule (quad/hex: n^d points; tri: 1, 3 or 6; tet: 1, 4 or 10)")


# --------------------------------------------------------------------------
# Element types
# --------------------------------------------------------------------------
@dataclass(frozen=True, eq=False, kw_only=True)
class ElementType:
    """A reference element: every per-type fact in one declaration (keyword
    fields; see ``_build`` for the nine types and DEVELOPERS.md for how to add one).

    Attributes
    ----------
    name : str           ``"quad8"`` etc.
    shape : str          reference domain (``"quad"``, ``"tri"``, ``"hex"``, ``"tet"``)
    nodes : ndarray (k, dim)   reference node coordinates in node order (VTK's order)
    exponents : ndarray (k, dim)   monomials spanning the shape-function space;
                         ``degree`` (highest exponent of one coordinate) and
                         ``total_degree`` are derived from them
    ncorners : int       corner nodes come first
    full_rule_points, reduced_rule_points : int   Gauss rules (see ``full_rule``)
    mass_rule_points : int   rule exact for N^T N det J on straight-edged,
                         flat-faced elements (used by the L2 projection)
    edges : tuple of tuples   local nodes of each edge (corner, corner[, mid])
    faces : tuple of tuples   local nodes of each face (3D only)
    vtk_cell_type : str  the VTK cell type's name as meshio spells it (the node
                         order is VTK's, so no permutation is needed)
    plot_triangles : tuple of triples   local nodes of the sub-triangles that
                         draw a 2D cell (contours, mesh plots); empty in 3D
    """

    name: str
    shape: str
    nodes: np.ndarray
    exponents: np.ndarray
    ncorners: int
    full_rule_points: int
    reduced_rule_points: int
    mass_rule_points: int
    edges: tuple
    faces: tuple = ()
    vtk_cell_type: str
    plot_triangles: tuple = ()
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    def __post_init__(self):
        nodes = readonly(np.asarray(self.nodes, dtype=float))
        exps = readonly(np.asarray(self.exponents, dtype=int))
        object.__setattr__(self, "nodes", nodes)
        object.__setattr__(self, "exponents", exps)
        if exps.shape != nodes.shape:
            raise InputError(f"{self.name}: {len(exps)} monomials for {len(nodes)} nodes")
        tris = tuple(tuple(int(a) for a in t) for t in self.plot_triangles)
        if any(len(t) != 3 or not all(0 <= a < len(nodes) for a in t) for t in tris):
            raise InputError(f"{self.name}: plot_triangles must be triples of local node numbers")
        object.__setattr__(self, "plot_triangles", tris)

    # -- basic facts
    @property
    def dim(self) -> int:
        return self.nodes.shape[1]

    @property
    def nnodes(self) -> int:
        return self.nodes.shape[0]

    @property
    def degree(self) -> int:
        return int(self.exponents.max())

    @property
    def total_degree(self) -> int:
        return int(self.exponents.sum(axis=1).max())

    @property
    def is_simplex(self) -> bool:
        return self.shape in ("tri", "tet")

    @property
    def detj_degree(self) -> int:
        """Degree of det J on straight-edged, flat-faced cells: per coordinate
        for quads (1) and hexes (2), total for simplices (0, constant)."""
        return {"quad": 1, "hex": 2}.get(self.shape, 0)

    @cached_property
    def _coeffs(self) -> np.ndarray:
        P, _ = _monomials(self.nodes, self.exponents)
        return np.linalg.inv(P)

    # -- shape functions
    def shape_functions(self, xi) -> np.ndarray:
        """N[p, a]: every shape function at every point ``xi`` (p, dim)."""
        xi = self.check_points(xi)
        P, _ = _monomials(xi, self.exponents)
        return P @ self._coeffs

    def shape_gradients(self, xi) -> np.ndarray:
        """dN[p, a, i] = dN_a / dxi_i at every point ``xi`` (p, dim)."""
        xi = self.check_points(xi)
        _, dP = _monomials(xi, self.exponents)
        return np.matmul(dP.transpose(0, 2, 1), self._coeffs).transpose(0, 2, 1)

    def evaluate(self, xi):
        """Both ``N`` (p, k) and ``dN`` (p, k, dim) in one call."""
        xi = self.check_points(xi)
        P, dP = _monomials(xi, self.exponents)
        return P @ self._coeffs, np.matmul(dP.transpose(0, 2, 1), self._coeffs).transpose(0, 2, 1)

    def check_points(self, xi):
        """Natural coordinates as a float array (points, dim); one point may be given as (dim,)."""
        xi = np.asarray(xi, dtype=float)
        if xi.ndim == 1:
            xi = xi[None, :]
        if xi.ndim != 2 or xi.shape[1] != self.dim:
            raise InputError(f"{self.name}: natural coordinates must be shaped (points, {self.dim}), got {xi.shape}")
        return xi

    def contains(self, xi, tol: float = 1e-8) -> np.ndarray:
        """True where natural coordinates lie inside the reference element."""
        xi = self.check_points(xi)
        if self.is_simplex:
            return np.all(xi >= -tol, axis=1) & (xi.sum(axis=1) <= 1 + tol)
        return np.all(np.abs(xi) <= 1 + tol, axis=1)

    @property
    def centroid(self) -> np.ndarray:
        return np.full(self.dim, 0.25 if self.shape == "tet" else (1 / 3 if self.shape == "tri" else 0.0))

    # -- rules
    def rule(self, which="full") -> QuadratureRule:
        """A Gauss rule: ``"full"``, ``"reduced"``, ``"mass"``, or a number of
        points (``4`` on a quad means 2x2)."""
        if isinstance(which, QuadratureRule):
            if which.shape != self.shape:
                raise InputError(f"{self.name}: a {which.shape} rule does not fit a {self.shape} element")
            return which
        if isinstance(which, str):
            try:
                n = {"full": self.full_rule_points, "reduced": self.reduced_rule_points,
                     "mass": self.mass_rule_points}[which]
            except KeyError:
                raise InputError(f"{self.name}: unknown rule {which!r}; use 'full', 'reduced', 'mass' or a point count") from None
        else:
            n = int(which)
        key = ("rule", n)
        if key not in self._cache:
            if self.is_simplex:
                self._cache[key] = simplex_rule(self.shape, n)
            else:
                per = round(n ** (1 / self.dim))
                if per ** self.dim != n:
                    raise InputError(f"{self.name}: a tensor Gauss rule has n^{self.dim} points, not {n}")
                self._cache[key] = gauss_legendre_rule(per, self.dim)
        return self._cache[key]

    @property
    def full_rule(self) -> QuadratureRule:
        return self.rule("full")

    @property
    def reduced_rule(self) -> QuadratureRule:
        return self.rule("reduced")

    @property
    def mass_rule(self) -> QuadratureRule:
        return self.rule("mass")

    def __repr__(self):
        return f"ElementType({self.name}: {self.nnodes} nodes, {self.shape}, full rule {self.full_rule_points} points)"


def _quad_nodes():
    c = [(-1, -1), (1, -1), (1, 1), (-1, 1)]
    m = [(0, -1), (1, 0), (0, 1), (-1, 0)]
    return c, m


def _hex_nodes():
    c = [(-1, -1, -1), (1, -1, -1), (1, 1, -1), (-1, 1, -1),
         (-1, -1, 1), (1, -1, 1), (1, 1, 1), (-1, 1, 1)]
    edges = [(0, 1), (1, 2), (2, 3), (3, 0), (4, 5), (5, 6), (6, 7), (7, 4),
             (0, 4), (1, 5), (2, 6), (3, 7)]
    mids = [tuple((np.array(c[a]) + np.array(c[b])) / 2) for a, b in edges]
    return c, edges, mids


def _build():
    """The nine element types, one declaration each.  Rules are point counts
    (``4`` on a quad is 2x2); the mass rule is exact for N^T N det J on
    straight-edged, flat-faced cells."""
    qc, qm = _quad_nodes()
    qedges4 = ((0, 1), (1, 2), (2, 3), (3, 0))
    qedges8 = ((0, 1, 4), (1, 2, 5), (2, 3, 6), (3, 0, 7))
    tc = [(0, 0), (1, 0), (0, 1)]
    tm = [(0.5, 0), (0.5, 0.5), (0, 0.5)]
    ec = [(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1)]
    tedges = ((0, 1), (1, 2), (2, 0), (0, 3), (1, 3), (2, 3))
    em = [tuple((np.array(ec[a]) + np.array(ec[b])) / 2) for a, b in tedges]
    tfaces = ((0, 2, 1), (0, 1, 3), (1, 2, 3), (0, 3, 2))
    hc, hedges, hm = _hex_nodes()
    hfaces = ((0, 3, 2, 1), (4, 5, 6, 7), (0, 1, 5, 4), (1, 2, 6, 5), (2, 3, 7, 6), (3, 0, 4, 7))
    types = [
        ElementType(name="tri3", shape="tri", nodes=tc, exponents=_total_exponents(1, 2), ncorners=3,
                    full_rule_points=1, reduced_rule_points=1, mass_rule_points=3,
                    edges=((0, 1), (1, 2), (2, 0)), vtk_cell_type="triangle", plot_triangles=((0, 1, 2),)),
        ElementType(name="tri6", shape="tri", nodes=tc + tm, exponents=_total_exponents(2, 2), ncorners=3,
                    full_rule_points=3, reduced_rule_points=3, mass_rule_points=6,
                    edges=((0, 1, 3), (1, 2, 4), (2, 0, 5)), vtk_cell_type="triangle6",
                    plot_triangles=((0, 3, 5), (3, 1, 4), (5, 4, 2), (3, 4, 5))),
        ElementType(name="quad4", shape="quad", nodes=qc, exponents=_tensor_exponents(1, 2), ncorners=4,
                    full_rule_points=4, reduced_rule_points=1, mass_rule_points=4,
                    edges=qedges4, vtk_cell_type="quad", plot_triangles=((0, 1, 2), (0, 2, 3))),
        ElementType(name="quad8", shape="quad", nodes=qc + qm,
                    exponents=_total_exponents(2, 2) + [(2, 1), (1, 2)], ncorners=4,
                    full_rule_points=9, reduced_rule_points=4, mass_rule_points=9,
                    edges=qedges8, vtk_cell_type="quad8",
                    plot_triangles=((0, 4, 7), (4, 1, 5), (5, 2, 6), (6, 3, 7), (4, 5, 7), (5, 6, 7))),
        ElementType(name="quad9", shape="quad", nodes=qc + qm + [(0, 0)], exponents=_tensor_exponents(2, 2),
                    ncorners=4, full_rule_points=9, reduced_rule_points=4, mass_rule_points=9,
                    edges=qedges8, vtk_cell_type="quad9",
                    plot_triangles=((0, 4, 8), (4, 1, 8), (1, 5, 8), (5, 2, 8), (2, 6, 8), (6, 3, 8), (3, 7, 8),
                                    (7, 0, 8))),
        ElementType(name="tet4", shape="tet", nodes=ec, exponents=_total_exponents(1, 3), ncorners=4,
                    full_rule_points=1, reduced_rule_points=1, mass_rule_points=4,
                    edges=tedges, faces=tfaces, vtk_cell_type="tetra"),
        ElementType(name="tet10", shape="tet", nodes=ec + em, exponents=_total_exponents(2, 3), ncorners=4,
                    full_rule_points=4, reduced_rule_points=4, mass_rule_points=14,
                    edges=tuple(e + (4 + i,) for i, e in enumerate(tedges)), faces=tfaces,
                    vtk_cell_type="tetra10"),
        ElementType(name="hex8", shape="hex", nodes=hc, exponents=_tensor_exponents(1, 3), ncorners=8,
                    full_rule_points=8, reduced_rule_points=1, mass_rule_points=27,
                    edges=tuple(hedges), faces=hfaces, vtk_cell_type="hexahedron"),
        # straight-edged hex20: N^T N det J has degree 6 per coordinate -> 4x4x4
        ElementType(name="hex20", shape="hex", nodes=hc + hm,
                    exponents=[e for e in _tensor_exponents(2, 3) if _serendipity3(e)], ncorners=8,
                    full_rule_points=27, reduced_rule_points=8, mass_rule_points=64,
                    edges=tuple(e + (8 + i,) for i, e in enumerate(hedges)), faces=hfaces,
                    vtk_cell_type="hexahedron20"),
    ]
    return {et.name: et for et in types}


def _serendipity3(e) -> bool:
    """Monomials of the 20-node serendipity space: no exponent above 2 and
    total degree <= 3, plus x^2yz, xy^2z, xyz^2 (Arnold & Awanou 2011)."""
    return max(e) <= 2 and (sum(e) <= 3 or sorted(e) == [1, 1, 2])


ELEMENTS: dict[str, ElementType] = _build()


def get_element(name) -> ElementType:
    """Look up an element type by name (``"quad8"``) or pass one through."""
    if isinstance(name, ElementType):
        return name
    try:
        return ELEMENTS[str(name).lower()]
    except KeyError:
        raise InputError(f"unknown element type {name!r}; known: {', '.join(ELEMENTS)}") from None


def local_field_matrix(element, data_points, targets) -> np.ndarray:
    """Matrix ``E`` (t, q) with ``G(targets) = E @ values``: the local field of
    Hinton & Campbell (1974), the polynomial through the ``q`` values at
    ``data_points`` (see :func:`local_field_exponents`), evaluated at
    ``targets`` (t, dim).  Used to move integration-point values to a finer
    rule (projection right-hand side) or to the nodes (extrapolation)."""
    et = get_element(element)
    data_points = et.check_points(data_points)
    targets = et.check_points(targets)
    exps, _ = local_field_exponents(et.shape, len(data_points))
    Pd, _ = _monomials(data_points, exps)
    cond = np.linalg.cond(Pd)
    if not np.isfinite(cond) or cond > 1e10:
        raise InputError(f"{et.name}: the {len(data_points)} integration points do not determine a unique "
                         f"local field (condition number {cond:.3g}); are two points at the same place?")
    Pt, _ = _monomials(targets, exps)
    return Pt @ np.linalg.inv(Pd)
