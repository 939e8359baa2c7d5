"""Global L2 projection (Hinton & Campbell 1974), HRZ lumping (Hinton, Rock &
Zienkiewicz 1976) and nodal averaging.

Patch tests: a field contained both in the element space and in the data's
local-field space must be reproduced exactly by the projection (the
projection is the identity on the discrete space; Hinton & Campbell 1974,
Int. J. Numer. Meth. Eng. 8, 461-480).
"""
import numpy as np
import pytest

from helpers import gauss_field_of, smooth_scalar
from toolkit import GaussField, L2Projector, Mesh, average_nodal, project_l2
from toolkit.core.elements import ELEMENTS
from toolkit.fem.models import box_mesh, rectangle_mesh


def _mesh(name, n=3, distort=0.3, seed=0):
    if ELEMENTS[name].dim == 2:
        return rectangle_mesh(name, n, n, size=(2.0, 1.5), origin=(0.5, -0.2), distort=distort, seed=seed)
    return box_mesh(name, 2, 2, 2, size=(1.0, 1.5, 1.2), distort=distort, seed=seed)


def _linear(x):
    X, Y = x[..., 0], x[..., 1]
    Z = x[..., 2] if x.shape[-1] == 3 else 0.0
    return np.stack([1.0 + 0 * X, 2 + 3 * X - 1.5 * Y + 0.5 * Z, -4 * X + Y + 2 * Z], axis=-1)


def _quadratic(x):
    X, Y = x[..., 0], x[..., 1]
    Z = x[..., 2] if x.shape[-1] == 3 else 0.0
    return np.stack([1 + X - Y + X * X - 2 * X * Y + 0.5 * Y * Y + Z * Z + X * Z], axis=-1)


CONSTANT_CASES = [(n, p) for n in ELEMENTS for p in ("full", "reduced")]


@pytest.mark.parametrize("name,points", CONSTANT_CASES)
def test_patch_constant(name, points):
    m = _mesh(name)
    fld = gauss_field_of(m, lambda x: np.stack([np.full(x.shape[:-1], 7.5), np.full(x.shape[:-1], -2.0)], -1), points)
    nf = project_l2(fld, rtol=1e-14)
    np.testing.assert_allclose(nf.values, np.broadcast_to([7.5, -2.0], nf.values.shape), atol=1e-10)


# every point set that contains the linear terms
LINEAR_CASES = [("quad4", 4), ("quad8", 9), ("quad8", 4), ("quad9", 9), ("quad9", 4), ("tri3", 3), ("tri6", 3),
                ("tri6", 6), ("tet4", 4), ("tet10", 4), ("hex8", 8), ("hex8", 27), ("hex20", 27), ("hex20", 8)]


@pytest.mark.parametrize("name,npts", LINEAR_CASES)
def test_patch_linear_on_distorted_mesh(name, npts):
    m = _mesh(name, distort=0.35)
    fld = gauss_field_of(m, _linear, npts)
    exact = _linear(m.nodes)
    nf = project_l2(fld, rtol=1e-14)
    np.testing.assert_allclose(nf.values, exact, atol=1e-10)
    # direct solve agrees
    nd = project_l2(fld, solver="direct")
    np.testing.assert_allclose(nd.values, exact, atol=1e-10)


# full quadratics: elements must be parallelograms (affine map) so the
# quadratic lies in the isoparametric space
QUAD_CASES = [("quad8", 9), ("quad9", 9), ("tri6", 6), ("hex20", 27)]


@pytest.mark.parametrize("name,npts", QUAD_CASES)
def test_patch_quadratic_on_parallelograms(name, npts):
    m0 = _mesh(name, distort=0.0)
    A = np.array([[1.0, 0.4], [0.1, 0.9]]) if m0.dim == 2 else np.array([[1, 0.3, 0.1], [0.0, 1.1, 0.2], [0.1, 0, 0.9]])
    m = Mesh(m0.nodes @ A.T, {b.name: b.cells for b in m0.blocks})
    fld = gauss_field_of(m, _quadratic, npts)
    nf = project_l2(fld, rtol=1e-14)
    np.testing.assert_allclose(nf.values, _quadratic(m.nodes), atol=1e-10)


def test_patch_mixed_tri_quad_mesh():
    nodes = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [2, 0.2], [2.1, 1.3]], float)
    m = Mesh(nodes, {"quad4": [[0, 1, 2, 3]], "tri3": [[1, 4, 2], [4, 5, 2]]})
    fld = gauss_field_of(m, _linear, {"quad4": "full", "tri3": 3})
    nf = project_l2(fld, rtol=1e-14)
    np.testing.assert_allclose(nf.values, _linear(nodes), atol=1e-10)
    na = average_nodal(fld)
    np.testing.assert_allclose(na.values, _linear(nodes), atol=1e-12)


def _nodal_l2_error(mesh, nf, f):
    err2 = 0.0
    for b in mesh.blocks:
        g = mesh.geometry(b.name, 16 if b.element.shape == "quad" else 7)
        uh = np.einsum("qk,ck->cq", g.N_qk, nf.values[:, 0][b.cells])
        err2 += np.sum(g.dV_cq * (uh - f(g.x_cqi)[..., 0]) ** 2)
    return np.sqrt(err2)


@pytest.mark.parametrize("name,rate", [("quad4", 2.0), ("tri3", 2.0), ("quad8", 3.0), ("quad9", 3.0),
                                       ("tri6", 3.0)])
def test_convergence_rate(name, rate, capsys):
    """L2 projection is optimal in L2: error O(h^(p+1)) for degree-p elements
    (e.g. Brenner & Scott, The Mathematical Theory of FE Methods, ch. 4);
    observed slope within 0.1 of theory."""
    # data must carry the accuracy: tri3 at its 3-point and tri6 at its 6-point rule
    # (with 3 points on tri6 the local field is linear and the rate drops to 2)
    pts = {"tri3": 3, "tri6": 6}.get(name, "full")
    hs, errs = [], []
    for n in (8, 16, 32):
        m = rectangle_mesh(name, n, n, size=(1.0, 1.0))
        nf = project_l2(gauss_field_of(m, smooth_scalar, pts), rtol=1e-13)
        hs.append(1.0 / n)
        errs.append(_nodal_l2_error(m, nf, smooth_scalar))
    slopes = np.diff(np.log(errs)) / np.diff(np.log(hs))
    with capsys.disabled():
        print(f"\n  {name}: L2 errors {['%.3e' % e for e in errs]}, observed rates {np.round(slopes, 3).tolist()}")
    assert abs(slopes[-1] - rate) < 0.1


def _two_squares(values, regions=(1, 2)):
    nodes = np.array([[0, 0], [1, 0], [2, 0], [0, 1], [1, 1], [2, 1]], float)
    m = Mesh(nodes, {"quad4": [[0, 1, 4, 3], [1, 2, 5, 4]]}, regions={"quad4": list(regions)})
    v = np.array(values, float)[:, None, None] * np.ones((2, 4, 1))
    return m, GaussField(m, {"quad4": v}, ("s",))


def test_two_element_hand_case_across_regions():
    """Piecewise constant 1 | 3 on two unit squares.  By symmetry in y the
    projection is the 1D linear projection: (1/6)[[2,1,0],[1,4,1],[0,1,2]] a =
    [1/2, 2, 3/2] -> a = [0.5, 2, 3.5] (hand computation)."""
    m, fld = _two_squares([1.0, 3.0])
    nf = project_l2(fld, across_regions=True, rtol=1e-14)
    np.testing.assert_allclose(nf.to_array()[:, 0], [0.5, 2, 3.5, 0.5, 2, 3.5], atol=1e-12)
    # HRZ lumped: every nodal mass is area/4 per element -> plain mean of the constants
    nl = project_l2(fld, across_regions=True, lumped=True)
    np.testing.assert_allclose(nl.to_array()[:, 0], [1, 2, 3, 1, 2, 3], atol=1e-14)
    na = average_nodal(fld, across_regions=True)
    np.testing.assert_allclose(na.to_array()[:, 0], [1, 2, 3, 1, 2, 3], atol=1e-14)


def test_two_element_regions_not_smoothed():
    """Default: the shared edge nodes carry one value per region, and each
    region's constant is reproduced exactly."""
    m, fld = _two_squares([1.0, 3.0])
    for nf in (project_l2(fld, rtol=1e-14), project_l2(fld, lumped=True), average_nodal(fld)):
        assert sorted(nf.split_nodes.tolist()) == [1, 4]
        np.testing.assert_allclose(nf.to_array(region=1)[[0, 1, 3, 4], 0], 1.0, atol=1e-12)
        np.testing.assert_allclose(nf.to_array(region=2)[[1, 2, 4, 5], 0], 3.0, atol=1e-12)
        assert "not smoothed across regions" in repr(nf)
    # a single region behaves like across_regions
    m1, f1 = _two_squares([1.0, 3.0], regions=(5, 5))
    nf = project_l2(f1, rtol=1e-14)
    np.testing.assert_allclose(nf.values[:, 0], [0.5, 2, 3.5, 0.5, 2, 3.5], atol=1e-12)
    assert list(np.unique(nf.region)) == [5]


def test_hrz_lumping_positive_on_quad8():
    """HRZ keeps every nodal mass positive; plain row sums of the consistent
    quad8 mass matrix are negative at the corners (-A/12 corners, A/3
    mid-sides on a rectangle: Zienkiewicz & Taylor, The FEM vol. 1, from
    memory)."""
    m = rectangle_mesh("quad8", 1, 1, size=(2.0, 3.0))
    p = L2Projector(m)
    rowsum = np.asarray(p.matrix.sum(axis=1)).ravel()
    np.testing.assert_allclose(np.sort(rowsum)[:4], -6.0 / 12, atol=1e-12)
    np.testing.assert_allclose(np.sort(rowsum)[4:], 6.0 / 3, atol=1e-12)
    assert np.all(p.lumped_diagonal > 0)
    np.testing.assert_allclose(p.lumped_diagonal.sum(), 6.0)


HRZ_SHARES = {
    # type: (one cell's nodes, cell, corner share, mid-side share)
    "quad8": ([[0, 0], [2, 0], [2, 3], [0, 3], [1, 0], [2, 1.5], [1, 3], [0, 1.5]], 4, 3 / 76, 16 / 76),
    "tri6": ([[0, 0], [4, 0], [0, 3], [2, 0], [2, 1.5], [0, 1.5]], 3, 3 / 57, 16 / 57),
}


@pytest.mark.parametrize("name", sorted(HRZ_SHARES))
def test_hrz_masses_are_the_published_shares(name):
    """HRZ lumping (Hinton, Rock & Zienkiewicz 1976; also Cook, Malkus,
    Plesha & Witt, Concepts and Applications of FEA, on diagonal scaling):
    each nodal mass is the consistent mass matrix's diagonal term scaled so
    that the masses sum to the element's area A.  Hand derivation on
    straight-edged elements:

    * quad8 on a rectangle: int N_corner^2 dA = 6A/180 = A/30 and
      int N_midside^2 dA = 32A/180 = 8A/45; the trace is 4 A/30 + 4 8A/45 =
      76A/90, so the shares are (A/30)/(76A/90) = 3/76 per corner and
      (8A/45)/(76A/90) = 16/76 per mid-side node (4 x 3 + 4 x 16 = 76).
    * tri6, with int L^n dA = 2A n!/(n+2)!: corner N = L(2L - 1),
      int (4L^4 - 4L^3 + L^2) dA = (4/15 - 4/10 + 1/6) A = A/30; mid-side
      N = 4 L1 L2, int 16 L1^2 L2^2 dA = 16 2A 2! 2!/6! = 8A/45; the trace
      is 3 A/30 + 3 8A/45 = 57A/90, so 3/57 per corner and 16/57 per
      mid-side node.

    Separates HRZ from equal shares (A/8 resp. A/6 at every node).  Measured: quad8 (A = 6) corner
    0.236842 = 6 x 3/76, mid-side 1.263158 = 6 x 16/76; with equal shares
    0.75 at every node.  tri6 (A = 6) corner 0.315789 = 6 x 3/57, mid-side
    1.684211 = 6 x 16/57; with equal shares 1.0 at every node."""
    nodes, ncorner, corner, midside = HRZ_SHARES[name]
    m = Mesh(np.array(nodes, float), {name: [list(range(len(nodes)))]})
    area = 6.0
    expected = area * np.array([corner] * ncorner + [midside] * (len(nodes) - ncorner))
    p = L2Projector(m, lumped=True)
    np.testing.assert_allclose(p.hrz_masses(name)[0], expected, rtol=1e-12)
    np.testing.assert_allclose(p.lumped_diagonal, expected, rtol=1e-12)


def test_lumped_projection_weights_cells_by_their_hrz_shares():
    """Through the public call: a quad8 cell [0, 2] x [0, 1] carrying the
    constant 1 beside a quad9 cell [2, 4] x [0, 1] carrying 3, one region.
    The HRZ-lumped projection gives each node the mean of the cells'
    values weighted by their HRZ masses there (module notes of
    toolkit/recovery/projection.py).  Hand values: quad8 shares 3/76
    (corner) and 16/76 (mid-side), see the test above; quad9 shares are
    products of the 1D quadratic shares 1/6, 4/6, 1/6 (int l^2 over [-1, 1]
    = 4/15, 16/15, 4/15): 1/36 corner, 4/36 mid-side, 16/36 centre (Hinton,
    Rock & Zienkiewicz 1976 diagonal scaling, evaluated by hand).  Equal
    areas, so the shared corner gets (3/76 + 3 x 1/36)/(3/76 + 1/36) =
    42/23 = 1.826087 and the shared mid-side (16/76 + 3 x 4/36)/(16/76 +
    4/36) = 93/55 = 1.690909.  Equal shares (1/8, 1/9) would give 33/17 =
    1.941176 at both (measured with that planted: 1.941176 at both)."""
    nodes = [[0, 0], [2, 0], [2, 1], [0, 1], [1, 0], [2, 0.5], [1, 1], [0, 0.5],
             [4, 0], [4, 1], [3, 0], [4, 0.5], [3, 1], [3, 0.5]]
    m = Mesh(np.array(nodes, float), {"quad8": [[0, 1, 2, 3, 4, 5, 6, 7]],
                                      "quad9": [[1, 8, 9, 2, 10, 11, 12, 5, 13]]})
    fld = GaussField(m, {"quad8": np.ones((1, 9, 1)), "quad9": 3 * np.ones((1, 9, 1))}, ("s",))
    v = project_l2(fld, lumped=True).to_array()[:, 0]
    np.testing.assert_allclose(v[[1, 2]], 42 / 23, rtol=1e-12)
    np.testing.assert_allclose(v[5], 93 / 55, rtol=1e-12)
    np.testing.assert_allclose(v[[0, 3, 4, 6, 7]], 1.0, rtol=1e-12)
    np.testing.assert_allclose(v[8:], 3.0, rtol=1e-12)


def test_reduced_rule_rhs_reproduces_linear_on_curved_jacobian():
    """Values at 2x2 on quad8 (and 3 points on tri6) with non-parallelogram
    elements still reproduce a linear field (local field integrated with a
    rule exact for N^T G det J)."""
    for name, npts in (("quad8", 4), ("tri6", 3)):
        m = rectangle_mesh(name, 3, 3, distort=0.4, seed=5)
        nf = project_l2(gauss_field_of(m, _linear, npts), rtol=1e-14)
        np.testing.assert_allclose(nf.values, _linear(m.nodes), atol=1e-10)


def test_projector_reuse_and_renumbering():
    m = rectangle_mesh("quad8", 6, 5, distort=0.3)
    rng = np.random.default_rng(0)
    perm = rng.permutation(m.nnodes)
    inv = np.empty_like(perm)
    inv[perm] = np.arange(m.nnodes)
    ms = Mesh(m.nodes[perm], {"quad8": inv[m.block("quad8").cells]})
    f1 = gauss_field_of(ms, smooth_scalar)
    f2 = gauss_field_of(ms, _linear)
    pr = L2Projector(ms, renumber=True, rtol=1e-13)
    pn = L2Projector(ms, renumber=False, rtol=1e-13)
    assert pr.renumbered and not pn.renumbered
    for f in (f1, f2):
        np.testing.assert_allclose(pr.project(f).values, pn.project(f).values, atol=1e-11)
    np.testing.assert_allclose(pr.project(f2).values, _linear(ms.nodes), atol=1e-10)
    # the same answers as on the original numbering
    ref = project_l2(gauss_field_of(m, smooth_scalar), rtol=1e-13).values
    np.testing.assert_allclose(pr.project(f1).values, ref[perm], atol=1e-11)
    # auto renumbers a shuffled mesh of some size but not a well-ordered one
    big = rectangle_mesh("quad4", 40, 40)
    assert not L2Projector(big).renumbered
    p = rng.permutation(big.nnodes)
    ip = np.empty_like(p)
    ip[p] = np.arange(big.nnodes)
    assert L2Projector(Mesh(big.nodes[p], {"quad4": ip[big.block("quad4").cells]})).renumbered


def test_morton_codes_follow_the_z_order():
    """Z-order (Morton 1966): interleave the coordinates' bits, x in the
    lowest; on a 4x4 grid the curve visits the 2x2 quadrants in Z pattern
    and each quadrant's points in the same pattern."""
    from toolkit.recovery.renumber import morton_codes
    xy = np.array([(x, y) for y in range(4) for x in range(4)], dtype=float)
    order = np.argsort(morton_codes(xy))
    expected = [(0, 0), (1, 0), (0, 1), (1, 1), (2, 0), (3, 0), (2, 1), (3, 1),
                (0, 2), (1, 2), (0, 3), (1, 3), (2, 2), (3, 2), (2, 3), (3, 3)]
    assert [tuple(int(v) for v in xy[i]) for i in order] == expected
    # 3D: the eight corners of a cube in x, then y, then z bit order
    xyz = np.array([(x, y, z) for z in range(2) for y in range(2) for x in range(2)], dtype=float)
    np.testing.assert_array_equal(np.argsort(morton_codes(xyz[::-1])), np.arange(8)[::-1])
    # a flat box (zero extent in one direction) is fine
    assert len(np.unique(morton_codes(np.c_[np.arange(5.0), np.zeros(5)]))) == 5


@pytest.mark.parametrize("kind", ["hex8", "regions"])
def test_renumbering_changes_nothing_but_the_speed(kind):
    """Renumbered or not, the same projection: on a shuffled 3D mesh, and on
    a two-region mesh whose boundary nodes carry one unknown per region."""
    rng = np.random.default_rng(3)
    if kind == "hex8":
        m = box_mesh("hex8", 4, 3, 3, distort=0.2)
        name = "hex8"
    else:
        m0 = rectangle_mesh("quad4", 8, 6, distort=0.2)
        name = "quad4"
        c = m0.block(name).cells
        m = Mesh(m0.nodes, {name: c}, regions={name: np.where(m0.nodes[c].mean(axis=1)[:, 0] < 0.5, 1, 2)})
    perm = rng.permutation(m.nnodes)
    inv = np.empty_like(perm)
    inv[perm] = np.arange(m.nnodes)
    regions = {name: m.block(name).regions}
    ms = Mesh(m.nodes[perm], {name: inv[m.block(name).cells]}, regions=regions)
    f = gauss_field_of(ms, smooth_scalar)
    a = L2Projector(ms, renumber=True, rtol=1e-13).project(f)
    b = L2Projector(ms, renumber=False, rtol=1e-13).project(f)
    assert a.info["renumbered"] and not b.info["renumbered"]
    np.testing.assert_array_equal(a.node, b.node)
    np.testing.assert_array_equal(a.region, b.region)
    np.testing.assert_allclose(a.values, b.values, atol=1e-11)
    if kind == "regions":
        assert len(a.node) > ms.nnodes          # the boundary nodes have two unknowns


def test_projector_errors_and_info():
    m = rectangle_mesh("quad4", 3, 3)
    f = gauss_field_of(m, _linear)
    with pytest.raises(ValueError, match="another mesh"):
        L2Projector(rectangle_mesh("quad4", 3, 3)).project(f)
    with pytest.raises(ValueError, match="solver must be"):
        L2Projector(m, solver="gmres")
    with pytest.raises(RuntimeError, match="did not reach rtol"):
        project_l2(gauss_field_of(m, smooth_scalar), maxiter=1, rtol=1e-14)
    nf = project_l2(f)
    assert nf.info["solver"] == "cg" and len(nf.info["iterations"]) == 3
    assert max(nf.info["relative_residual"]) <= 1e-10
    # an all-zero component converges at once and stays zero
    z = GaussField(m, {"quad4": np.zeros((9, 4, 2))}, ("a", "b"))
    np.testing.assert_array_equal(project_l2(z).values, 0.0)


def test_average_nodal_extrapolates_with_local_field():
    """Averaging of a linear field sampled at 2x2 Gauss points: the bilinear
    local field extrapolates exactly to the nodes (common practice)."""
    m = rectangle_mesh("quad4", 4, 3, distort=0.0)
    na = average_nodal(gauss_field_of(m, _linear))
    np.testing.assert_allclose(na.values, _linear(m.nodes), atol=1e-12)
    # a discontinuous field: interior node value is the plain mean of the cells' extrapolations
    m2, fld = _two_squares([1.0, 3.0], regions=(0, 0))
    np.testing.assert_allclose(average_nodal(fld).values[:, 0], [1, 2, 3, 1, 2, 3])


def test_orphan_node_gets_no_value():
    nodes = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [5, 5]], float)
    m = Mesh(nodes, {"quad4": [[0, 1, 2, 3]]})
    nf = project_l2(GaussField(m, {"quad4": np.ones((1, 4, 1))}, ("s",)), rtol=1e-14)
    assert list(nf.unused_nodes) == [4] and len(nf.values) == 4
    arr = nf.to_array()
    assert np.isnan(arr[4, 0]) and np.allclose(arr[:4, 0], 1.0)
    assert "1 nodes in no cell" in repr(nf)


@pytest.mark.parametrize("name,npts", [("quad8", 4), ("quad8", 9), ("tri6", 3), ("quad4", 4), ("hex20", 8)])
def test_lumped_reproduces_linear_fields(name, npts):
    """HRZ nodal quadrature with the matching right-hand side: each nodal value
    is the HRZ-weighted mean of the cells' local fields, so a linear field is
    reproduced on distorted meshes (Hinton, Rock & Zienkiewicz 1976, the HRZ
    masses; the pairing with the nodal-quadrature RHS is our design, see
    toolkit/recovery.py)."""
    m = _mesh(name, distort=0.35)
    nf = project_l2(gauss_field_of(m, _linear, npts), lumped=True)
    np.testing.assert_allclose(nf.values, _linear(m.nodes), atol=1e-11)
    assert nf.info["method"] == "lumped"


def test_method_registry_runs_each_method_by_name():
    """One registry (toolkit.recovery.METHODS): each name runs its function
    with the same result as the direct call; the command line and the
    workbook steps read their methods from it."""
    import toolkit.cli
    from toolkit.recovery import METHODS, recover, recover_spr
    from toolkit.report.steps import recover_all
    m = _mesh("quad4", n=4)
    fld = gauss_field_of(m, smooth_scalar)
    direct = {"l2": project_l2(fld, across_regions=True), "lumped": project_l2(fld, lumped=True, across_regions=True),
              "average": average_nodal(fld, across_regions=True), "spr": recover_spr(fld, across_regions=True)}
    assert list(METHODS) == list(direct) == list(toolkit.cli.METHODS)
    for name, ref in direct.items():
        got = recover(fld, name, across_regions=True)
        np.testing.assert_array_equal(got.values, ref.values)
        assert got.method == ref.method and toolkit.cli.METHODS[name] == METHODS[name].description
    assert list(recover_all(fld)) == ["L2 projection", "nodal averaging", "patch recovery (SPR)"]
    assert recover(fld, "l2", rtol=1e-6).info["rtol"] == 1e-6
    with pytest.raises(ValueError, match="unknown recovery method 'xx'; use one of l2, lumped, average, spr"):
        recover(fld, "xx")
    with pytest.raises(ValueError, match="fixes lumped"):
        recover(fld, "lumped", lumped=False)


@pytest.mark.parametrize("etype", ["quad4", "quad8", "quad9", "tri6", "hex20", "tet10"])
def test_auto_preconditioner_is_the_element_one(etype):
    """preconditioner="auto" is the element preconditioner for every type
    (measured fastest in wall time, the serendipity types included, once
    it is weighted by measure share), and a constant is reproduced."""
    mesh = box_mesh(etype, 2, 2, 2) if ELEMENTS[etype].dim == 3 else rectangle_mesh(etype, 3, 3)
    q = ELEMENTS[etype].rule("full").points.shape[0]
    field = GaussField(mesh, {etype: np.ones((mesh.ncells, q, 1))}, components=("s",))
    nodal = project_l2(field)
    assert nodal.info["preconditioner"] == "element"
    np.testing.assert_allclose(nodal.values, 1.0, atol=1e-9)
