"""Reference elements and Gauss rules.

Checks are the defining properties of Lagrange/serendipity shape functions
and Gauss rules (e.g. Zienkiewicz, Taylor & Zhu, The Finite Element Method,
7th ed., ch. 6 and 9; Hughes, The Finite Element Method, 2000, ch. 3):
Kronecker property, partition of unity, derivatives by finite differences,
and exact integration of monomials up to each rule's stated degree.
"""
import itertools
from math import factorial

import numpy as np
import pytest

from toolkit.core.elements import (ELEMENTS, SIMPLEX_RULES, ElementType, gauss_legendre_rule, get_element,
                                   local_field_matrix, simplex_rule)

NAMES = list(ELEMENTS)


def _random_points(et, n=20, seed=0):
    rng = np.random.default_rng(seed)
    if et.is_simplex:
        p = rng.dirichlet(np.ones(et.dim + 1), size=n)[:, :et.dim]
    else:
        p = rng.uniform(-1, 1, size=(n, et.dim))
    return p


@pytest.mark.parametrize("name", NAMES)
def test_kronecker_and_partition_of_unity(name):
    et = ELEMENTS[name]
    N = et.shape_functions(et.nodes)
    np.testing.assert_allclose(N, np.eye(et.nnodes), atol=1e-13)
    Np = et.shape_functions(_random_points(et))
    np.testing.assert_allclose(Np.sum(axis=1), 1.0, atol=1e-13)
    # derivatives of a partition of unity sum to zero
    np.testing.assert_allclose(et.shape_gradients(_random_points(et)).sum(axis=1), 0.0, atol=1e-12)


@pytest.mark.parametrize("name", NAMES)
def test_gradients_match_finite_differences(name):
    et = ELEMENTS[name]
    p = _random_points(et, 10, seed=1)
    dN = et.shape_gradients(p)
    h = 1e-6
    for j in range(et.dim):
        e = np.zeros(et.dim)
        e[j] = h
        fd = (et.shape_functions(p + e) - et.shape_functions(p - e)) / (2 * h)
        np.testing.assert_allclose(dN[:, :, j], fd, atol=1e-8)


@pytest.mark.parametrize("name", NAMES)
def test_nodes_reproduce_coordinates(name):
    """Isoparametric completeness: sum_a N_a x_a = x (common practice)."""
    et = ELEMENTS[name]
    p = _random_points(et, 15, seed=2)
    np.testing.assert_allclose(et.shape_functions(p) @ et.nodes, p, atol=1e-13)


def test_node_order_convention():
    """Corners first, counter-clockwise; mid-side nodes at the middle of their edge."""
    for name, et in ELEMENTS.items():
        for e in et.edges:
            if len(e) == 3:
                np.testing.assert_allclose(et.nodes[e[2]], (et.nodes[e[0]] + et.nodes[e[1]]) / 2)
        if et.dim == 2:
            c = et.nodes[:et.ncorners]
            area2 = np.sum(c[:, 0] * np.roll(c[:, 1], -1) - np.roll(c[:, 0], -1) * c[:, 1])
            assert area2 > 0, name   # counter-clockwise
        else:
            c = et.nodes
            # positive orientation: (1-0) x (2-0) . (apex - 0) > 0 for tets; bottom face ccw seen from +z for hexes
            top = 3 if et.shape == "tet" else 4
            v = np.linalg.det(np.array([c[1] - c[0], c[2 if et.shape == "tet" else 3] - c[0], c[top] - c[0]]))
            assert v > 0, name


def _exact_tensor(exps, dim):
    # ∫_{-1}^{1} x^a dx = 2/(a+1) for even a, 0 for odd a
    return np.prod([2.0 / (a + 1) if a % 2 == 0 else 0.0 for a in exps])


def _exact_simplex(exps):
    # ∫ over the unit simplex of prod x_i^{a_i} = prod a_i! / (d + sum a_i)!  (Dirichlet integral)
    d = len(exps)
    return np.prod([factorial(a) for a in exps]) / factorial(d + sum(exps))


@pytest.mark.parametrize("n", [1, 2, 3, 4])
@pytest.mark.parametrize("dim", [2, 3])
def test_gauss_legendre_exactness(n, dim):
    r = gauss_legendre_rule(n, dim)
    assert r.degree == 2 * n - 1
    for exps in itertools.product(range(r.degree + 1), repeat=dim):
        val = np.sum(r.weights * np.prod(r.points ** np.array(exps), axis=1))
        assert abs(val - _exact_tensor(exps, dim)) < 1e-13, exps
    # and one degree higher is not exact (the stated degree is sharp)
    exps = (r.degree + 1,) + (0,) * (dim - 1)
    val = np.sum(r.weights * np.prod(r.points ** np.array(exps), axis=1))
    assert abs(val - _exact_tensor(exps, dim)) > 1e-6


@pytest.mark.parametrize("key", list(SIMPLEX_RULES))
def test_simplex_rule_exactness(key):
    shape, npts = key
    r = simplex_rule(shape, npts)
    dim = 2 if shape == "tri" else 3
    assert r.npoints == npts
    assert np.all(r.weights > 0)
    assert np.all(r.points > 0) and np.all(r.points.sum(axis=1) < 1)    # interior points
    for exps in itertools.product(range(r.degree + 1), repeat=dim):
        if sum(exps) > r.degree:
            continue
        val = np.sum(r.weights * np.prod(r.points ** np.array(exps), axis=1))
        assert abs(val - _exact_simplex(exps)) < 1e-12 * max(1.0, _exact_simplex(exps)) + 1e-14, exps


@pytest.mark.parametrize("name", NAMES)
def test_mass_rule_exact_for_NN(name):
    """The mass rule integrates N_a N_b exactly on the reference element: compare
    with a rule of much higher degree."""
    et = ELEMENTS[name]
    rm = et.mass_rule
    ref = gauss_legendre_rule(6, et.dim) if not et.is_simplex else simplex_rule(et.shape, 7 if et.dim == 2 else 14)
    if et.is_simplex and et.dim == 3 and et.total_degree * 2 > ref.degree:
        pytest.skip("no higher tet rule stored")
    def mass(r):
        N = et.shape_functions(r.points)
        return np.einsum("q,qa,qb->ab", r.weights, N, N)
    np.testing.assert_allclose(mass(rm), mass(ref), atol=1e-13)


def test_rule_lookup_and_errors():
    et = get_element("quad8")
    assert et.full_rule.npoints == 9 and et.reduced_rule.npoints == 4
    assert get_element("QUAD4").rule(1).npoints == 1
    with pytest.raises(ValueError, match="unknown element type"):
        get_element("quad7")
    with pytest.raises(ValueError, match="n\\^2 points"):
        et.rule(5)
    with pytest.raises(ValueError, match="unknown rule"):
        et.rule("fine")
    with pytest.raises(ValueError, match="no tri rule with 5 points"):
        get_element("tri3").rule(5)


@pytest.mark.parametrize("name,npts", [("quad4", 4), ("quad8", 4), ("quad8", 9), ("tri6", 3), ("tri6", 6),
                                       ("hex8", 8), ("hex20", 27), ("tet10", 4), ("tri3", 1)])
def test_local_field_reproduces_its_space(name, npts):
    """Hinton & Campbell's local field: the polynomial through the point values.
    A polynomial of the space through the points is reproduced everywhere."""
    et = ELEMENTS[name]
    pts = et.rule(npts).points
    rng = np.random.default_rng(3)
    tgt = _random_points(et, 12, seed=4)
    E = local_field_matrix(et, pts, tgt)
    # degree-1 polynomial in each coordinate (or the constant for 1 point)
    c = rng.normal(size=et.dim + 1)
    f = (lambda x: c[0] + x @ c[1:]) if npts > 1 else (lambda x: c[0] + 0 * x[:, 0])
    np.testing.assert_allclose(E @ f(pts), f(tgt), atol=1e-12)
    np.testing.assert_allclose(E.sum(axis=1), 1.0, atol=1e-12)


# ---------------------------------------------------------------------------
# The declaration's per-type facts (ElementType keyword fields)
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("name", [n for n, e in ELEMENTS.items() if e.dim == 2])
def test_plot_triangles_tile_the_reference_element(name):
    """The sub-triangles that draw a 2D cell cover the reference element once
    (areas sum to its area: 4 for [-1, 1]^2, 1/2 for the unit triangle), each
    counter-clockwise, and every node is a vertex of one (common practice for
    drawing higher-order cells with linear triangles)."""
    et = ELEMENTS[name]
    x = et.nodes[np.array(et.plot_triangles)]                        # (t, 3, 2)
    area = 0.5 * ((x[:, 1, 0] - x[:, 0, 0]) * (x[:, 2, 1] - x[:, 0, 1])
                  - (x[:, 2, 0] - x[:, 0, 0]) * (x[:, 1, 1] - x[:, 0, 1]))
    assert (area > 0).all()
    assert area.sum() == pytest.approx(0.5 if et.is_simplex else 4.0)
    assert set(np.ravel(et.plot_triangles)) == set(range(et.nnodes))


@pytest.mark.parametrize("name", list(ELEMENTS))
def test_vtk_cell_type_has_the_node_count(name):
    """meshio's table of VTK cell types (an independent source) has our node count."""
    meshio = pytest.importorskip("meshio")
    et = ELEMENTS[name]
    assert meshio._mesh.topological_dimension[et.vtk_cell_type] == et.dim
    assert meshio._common.num_nodes_per_cell[et.vtk_cell_type] == et.nnodes


def test_a_wrong_declaration_is_refused():
    quad = ELEMENTS["quad4"]
    kw = dict(name="q", shape="quad", nodes=quad.nodes, exponents=quad.exponents, ncorners=4, full_rule_points=4,
              reduced_rule_points=1, mass_rule_points=4, edges=quad.edges, vtk_cell_type="quad")
    with pytest.raises(ValueError, match="plot_triangles"):
        ElementType(**kw, plot_triangles=((0, 1, 7),))
    with pytest.raises(TypeError):
        ElementType("q", "quad", quad.nodes, quad.exponents, 4, 4, 1, 4, quad.edges)    # keywords only
