"""Point location, paths and sampling (toolkit.core.locate, toolkit.assess.paths, toolkit.assess.sampling).

References used below:
* Kirsch (1898), the stress around a circular hole in a plate under uniaxial
  tension S, as given in Timoshenko & Goodier, Theory of Elasticity, §35:
  srr = S/2 (1 - a²/r²) + S/2 (1 - 4a²/r² + 3a⁴/r⁴) cos 2θ
  stt = S/2 (1 + a²/r²) - S/2 (1 + 3a⁴/r⁴) cos 2θ
  srt = -S/2 (1 + 2a²/r² - 3a⁴/r⁴) sin 2θ
* scikit-fem (independent FE library): ``Basis.probes`` evaluates the
  interpolant of a nodal vector at points.
* Interpolation theory: nodal interpolation of a smooth field by degree-p
  elements has error O(h^(p+1)) (e.g. Brenner & Scott, ch. 4).
"""
import numpy as np
import pytest

from toolkit import GaussField, Mesh, NodalField
from toolkit.core.elements import ELEMENTS
from toolkit.fem.models import box_mesh, rectangle_mesh
from toolkit.core.fields import RowLayout
from toolkit.assess.paths import arc, edge_path, line, polyline
from toolkit.assess.sampling import raw_along, sample
from toolkit.core.locate import PointLocator
from toolkit.core.numbering import DofMap

S, A = 1.0, 1.0        # remote stress, hole radius


def annulus(et, nr, nt, a=A, b=4.0 * A):
    """Quarter annulus a <= r <= b, 0 <= θ <= 90°: a rectangle mesh in (r, θ)
    mapped to x = r cos θ, y = r sin θ (every node, mid-side nodes included,
    lies on the true geometry; quadratic edges are then curved)."""
    m = rectangle_mesh(et, nr, nt, size=(b - a, np.pi / 2), origin=(a, 0.0))
    r, t = m.nodes[:, 0], m.nodes[:, 1]
    return Mesh(np.c_[r * np.cos(t), r * np.sin(t)], {bl.name: bl.cells for bl in m.blocks})


def kirsch(x):
    """Kirsch field (cartesian sxx, syy, sxy) and its polar components."""
    r = np.hypot(x[..., 0], x[..., 1])
    t = np.arctan2(x[..., 1], x[..., 0])
    q = A * A / r**2
    c2, s2 = np.cos(2 * t), np.sin(2 * t)
    srr = S / 2 * (1 - q) + S / 2 * (1 - 4 * q + 3 * q * q) * c2
    stt = S / 2 * (1 + q) - S / 2 * (1 + 3 * q * q) * c2
    srt = -S / 2 * (1 + 2 * q - 3 * q * q) * s2
    c, s = np.cos(t), np.sin(t)
    sxx = srr * c * c + stt * s * s - 2 * srt * s * c
    syy = srr * s * s + stt * c * c + 2 * srt * s * c
    sxy = (srr - stt) * s * c + srt * (c * c - s * s)
    return np.stack([sxx, syy, sxy], -1), (srr, stt, srt)


def nodal(mesh, values, comps=("sxx", "syy", "sxy")):
    return NodalField(mesh, values, comps, np.arange(mesh.nnodes), np.zeros(mesh.nnodes, int))


def kirsch_nodal(et, k):
    m = annulus(et, 8 * k, 12 * k)
    return m, nodal(m, kirsch(m.nodes)[0])


def hole_edges(m):
    """Edges on r = a, listed as the cells have them (left edge 3 -> 0[, 7])."""
    b = m.blocks[0]
    r = np.hypot(*m.nodes.T)
    if b.name.startswith("tri"):
        raise ValueError
    on = np.isclose(r[b.cells[:, 0]], A) & np.isclose(r[b.cells[:, 3]], A)
    cols = [3, 0, 7] if b.element.nnodes > 4 else [3, 0]
    return b.cells[on][:, cols]


# ---------------------------------------------------------------------------
# Kirsch: sampling along a line and an arc
# ---------------------------------------------------------------------------
PATHS = {
    "ligament": lambda: line((0.0, A), (0.0, 4 * A)),           # θ = 90°, the classic ligament
    "chord": lambda: line((0.5, 1.5), (2.5, 2.5)),
    "arc": lambda: arc((0.0, 0.0), 1.5 * A, 0.0, 90.0),
}


@pytest.mark.parametrize("et,rate", [("quad8", 2.3), ("quad9", 2.3), ("tri6", 2.3), ("quad4", 1.4), ("tri3", 1.4)])
@pytest.mark.parametrize("which", list(PATHS))
def test_sample_matches_kirsch_within_interpolation_error(et, rate, which):
    """The sampled nodal interpolant of the Kirsch field converges to the
    closed form at the path points at the interpolation rate (Kirsch 1898,
    Timoshenko & Goodier §35; rate O(h^(p+1)), Brenner & Scott ch. 4 — the
    observed slope over one halving is required to exceed 2.3 for quadratic
    and 1.4 for linear elements, below theory to allow for the steep r^-4
    terms at the hole on coarse meshes)."""
    errs = []
    for k in (1, 2):
        m, nf = kirsch_nodal(et, k)
        res = sample(nf, PATHS[which](), n=120)
        exact, _ = kirsch(res.points)
        got = np.column_stack([res["sxx"], res["syy"], res["sxy"]])
        errs.append(np.abs(got - exact).max())
    slope = np.log2(errs[0] / errs[1])
    assert slope > rate, (errs, slope)
    # and the fine-mesh error is small against the peak 3S (absolute, common practice)
    assert errs[1] < (0.01 if et in ("quad8", "quad9", "tri6") else 0.1) * 3 * S


def test_ligament_peak_and_path_frame():
    """On θ = 90° the Kirsch hoop stress is sxx = S (1 + a²/2r² + 3a⁴/2r⁴)
    (Timoshenko & Goodier §35), 3S at the hole.  The line runs along +y, so
    its normal (tangent turned +90°) is -x: snn = sxx, stt = syy = srr."""
    m, nf = kirsch_nodal("quad8", 2)
    res = sample(nf, PATHS["ligament"](), n=61)
    r = res.points[:, 1]
    hoop = S * (1 + 0.5 * A**2 / r**2 + 1.5 * A**4 / r**4)
    np.testing.assert_allclose(res.tangents, np.broadcast_to([0.0, 1.0], res.tangents.shape), atol=1e-15)
    np.testing.assert_allclose(res.normals, np.broadcast_to([-1.0, 0.0], res.normals.shape), atol=1e-15)
    np.testing.assert_allclose(res["snn"], hoop, atol=6e-3)
    np.testing.assert_allclose(res["snn"], res["sxx"], atol=1e-14)
    np.testing.assert_allclose(res["stt"], res["syy"], atol=1e-14)
    d, peak = res.peak("sxx")
    assert d == 0.0 and abs(peak - 3 * S) < 6e-3
    # uniaxial hoop stress at the hole (plane stress): von Mises = Tresca = s1 = 3S, s3 = 0
    assert abs(res["von_mises"][0] - 3 * S) < 6e-3 and abs(res["tresca"][0] - 3 * S) < 6e-3
    assert abs(res["s1"][0] - 3 * S) < 6e-3 and abs(res["s3"][0]) < 6e-3
    np.testing.assert_allclose(res["hydrostatic"], (res["sxx"] + res["syy"]) / 3, atol=1e-12)


def test_arc_path_frame_is_polar():
    """Anticlockwise arc: tangent θ-hat, normal (+90°) = -r-hat, so
    stt = σθθ, snn = σrr and snt = n.S.t = -σrθ (Kirsch, Timoshenko & Goodier §35)."""
    m, nf = kirsch_nodal("quad8", 2)
    res = sample(nf, PATHS["arc"](), n=91)
    _, (srr, stt, srt) = kirsch(res.points)
    th = np.arctan2(res.points[:, 1], res.points[:, 0])
    np.testing.assert_allclose(th, np.linspace(0, np.pi / 2, 91), atol=1e-14)
    np.testing.assert_allclose(res.distances[-1], 1.5 * A * np.pi / 2, rtol=1e-14)
    np.testing.assert_allclose(res.normals, -res.points / 1.5, atol=1e-14)
    np.testing.assert_allclose(res["stt"], stt, atol=1e-3)
    np.testing.assert_allclose(res["snn"], srr, atol=1e-3)
    np.testing.assert_allclose(res["snt"], -srt, atol=1e-3)
    # clockwise: the tangent reverses and the normal points away from the centre
    back = sample(nf, arc((0, 0), 1.5 * A, 90.0, 0.0), n=91)
    np.testing.assert_allclose(back.points, res.points[::-1], atol=1e-14)
    np.testing.assert_allclose(back.normals, back.points / 1.5, atol=1e-14)
    # both t and n flip, so n.S.t keeps its sign
    np.testing.assert_allclose(back["snt"], -srt[::-1], atol=1e-3)


def test_out_of_plane_stress_enters_invariants():
    """Plane strain szz = ν (sxx + syy) (Hooke's law, Timoshenko & Goodier
    ch. 1) joins the invariants: hydrostatic = (1 + ν)(sxx + syy)/3."""
    m, nf = kirsch_nodal("quad8", 1)
    nu = 0.3
    v = nf.values
    nf4 = nodal(m, np.c_[v, nu * (v[:, 0] + v[:, 1])], ("sxx", "syy", "sxy", "szz"))
    res = sample(nf4, PATHS["chord"](), n=25)
    np.testing.assert_allclose(res["hydrostatic"], (1 + nu) * (res["sxx"] + res["syy"]) / 3, rtol=1e-12)
    s = np.sort(np.c_[res["s1"], res["s2"], res["s3"]], axis=1)[:, ::-1]
    np.testing.assert_allclose(np.c_[res["s1"], res["s2"], res["s3"]], s)
    assert np.any(np.isclose(np.c_[res["s1"], res["s2"], res["s3"]], res["szz"][:, None]).any(axis=1))


# ---------------------------------------------------------------------------
# outside points
# ---------------------------------------------------------------------------
def test_outside_points_raise_or_nan():
    m, nf = kirsch_nodal("quad8", 1)
    p = line((0.0, 0.0), (0.0, 4 * A))          # starts at the hole centre, inside the hole
    with pytest.raises(ValueError, match=r"lie outside the mesh; the first is number 0 at distance 0"):
        sample(nf, p, n=41)
    res = sample(nf, p, n=41, outside="nan")
    inside = res.points[:, 1] >= A - 1e-12      # geometry: the hole is r < a
    assert np.array_equal(res.inside, inside)
    assert np.isnan(res["sxx"][~inside]).all() and np.isfinite(res["sxx"][inside]).all()
    assert np.isnan(res["von_mises"][~inside]).all()
    assert (res.element[~inside] == -1).all()
    with pytest.raises(ValueError, match="10 of 10 points lie outside"):
        PointLocator(m).operator(np.c_[np.linspace(5, 6, 10), np.zeros(10)])
    with pytest.raises(ValueError, match="outside must be"):
        sample(nf, p, outside="zero")


# ---------------------------------------------------------------------------
# the locator on distorted meshes
# ---------------------------------------------------------------------------
def _in_polygon(poly, x):
    from matplotlib.path import Path as MPath
    return MPath(poly).contains_point(x, radius=-1e-9) or MPath(poly[::-1]).contains_point(x, radius=-1e-9)


@pytest.mark.parametrize("et", ["tri3", "tri6", "quad4", "quad8", "quad9", "hex8"])
def test_locator_finds_the_right_cell_on_distorted_meshes(et):
    """Every random point is found in a cell whose isoparametric map sends
    the returned xi back to the point, with xi inside the reference element;
    for 2D straight-edged cells the point also lies in the cell's corner
    polygon (matplotlib point-in-polygon, an independent test); no point
    inside the domain is missed (brute force over every cell for 3D)."""
    rng = np.random.default_rng(3)
    if ELEMENTS[et].dim == 2:
        m = rectangle_mesh(et, 7, 5, size=(2.0, 1.5), distort=0.4, seed=2)
        x = rng.uniform([0, 0], [2.0, 1.5], size=(400, 2))
    else:
        m = box_mesh(et, 4, 3, 3, size=(1.0, 1.5, 1.2), distort=0.4, seed=2)
        x = rng.uniform([0, 0, 0], [1.0, 1.5, 1.2], size=(300, 3))
    loc = PointLocator(m).locate(x)
    assert loc.found.all()
    b = m.blocks[0]
    et_ = b.element
    N = et_.shape_functions(loc.xi)
    back = np.einsum("pk,pki->pi", N, m.nodes[b.cells[loc.cell]])
    np.testing.assert_allclose(back, x, atol=1e-10)
    assert et_.contains(loc.xi, 1e-8).all()
    assert (loc.names == et).all()
    if m.dim == 2:
        poly = m.nodes[b.cells[:, :et_.ncorners]]
        assert all(_in_polygon(poly[c], p) for c, p in zip(loc.cell[:60], x[:60]))
    else:
        from toolkit.core.mesh import inverse_map
        for i in range(0, 300, 30):                 # a few points against every cell
            xi, ok = inverse_map(et_, m.nodes[b.cells], np.broadcast_to(x[i], (len(b), 3)))
            holders = np.flatnonzero(ok & et_.contains(xi, 1e-8))
            assert loc.cell[i] in holders


@pytest.mark.parametrize("et,elem", [("tri3", "ElementTriP1"), ("tri6", "ElementTriP2"), ("quad4", "ElementQuad1"),
                                     ("quad8", "ElementQuadS2"), ("quad9", "ElementQuad2")])
def test_operator_matches_scikit_fem_probes(et, elem):
    """The interpolant at random points equals scikit-fem's Basis.probes of
    the same nodal values (independent library; straight-edged cells, so the
    isoparametric map is the bilinear/affine one scikit-fem uses)."""
    skfem = pytest.importorskip("skfem")
    f = lambda x: np.sin(3 * x[..., 0]) * np.cos(2 * x[..., 1]) + x[..., 0] ** 2
    m = rectangle_mesh(et, 5, 4, size=(2.0, 1.5), distort=0.35, seed=5)
    b = m.blocks[0]
    Me = skfem.MeshTri if et.startswith("tri") else skfem.MeshQuad
    basis = skfem.Basis(Me(m.nodes.T.copy(), b.cells[:, :b.element.ncorners].T.copy()), getattr(skfem, elem)())
    x = np.random.default_rng(1).uniform([0, 0], [2.0, 1.5], size=(300, 2))
    ref = basis.probes(x.T) @ f(basis.doflocs.T)
    ours = PointLocator(m).evaluate(nodal(m, f(m.nodes)[:, None], ("u",)), x)[:, 0]
    np.testing.assert_allclose(ours, ref, atol=1e-12)


@pytest.mark.parametrize("et", ["quad8", "quad9", "tri6"])
def test_locator_on_curved_quadratic_cells(et):
    """Coarse annulus (22.5° per cell, strongly curved edges): points made by
    the isoparametric map of random natural coordinates of random cells, and
    points on the curved hole edges, are all found and map back (the box of a
    curved cell must hold its bulge)."""
    m = annulus(et, 2, 4)
    b = m.blocks[0]
    rng = np.random.default_rng(4)
    c = rng.integers(0, len(b), 400)
    if et.startswith("tri"):
        xi = rng.dirichlet([1, 1, 1], 400)[:, :2]
    else:
        xi = rng.uniform(-1, 1, (400, 2))
        xi[:100, 0] = -1.0                          # on the edge 3-0, the hole side for the first column
    x = np.einsum("pk,pki->pi", b.element.shape_functions(xi), m.nodes[b.cells[c]])
    loc = PointLocator(m).locate(x)
    assert loc.found.all()
    back = np.einsum("pk,pki->pi", b.element.shape_functions(loc.xi), m.nodes[b.cells[loc.cell]])
    np.testing.assert_allclose(back, x, atol=1e-12)


def test_graded_mesh_locator():
    """A strongly graded mesh (size ratio 50) puts cells into several size
    classes; every point is still found (map back to the point)."""
    m = rectangle_mesh("quad8", 20, 6, size=(10.0, 1.0), grading=(50.0, 1.0))
    loc = PointLocator(m)
    assert len(loc._trees) > 2
    x = np.random.default_rng(0).uniform([0, 0], [10.0, 1.0], size=(500, 2))
    L = loc.locate(x)
    b = m.blocks[0]
    back = np.einsum("pk,pki->pi", b.element.shape_functions(L.xi), m.nodes[b.cells[L.cell]])
    np.testing.assert_allclose(back, x, atol=1e-10)


# ---------------------------------------------------------------------------
# rows: split regions
# ---------------------------------------------------------------------------
def test_operator_uses_the_region_of_the_cell():
    """With one row per (node, region) the operator reads the rows of the
    region of the cell holding the point; region= picks a side on the
    interface.  Linear fields are reproduced exactly by isoparametric
    elements (common practice)."""
    m = rectangle_mesh("quad4", 4, 2, size=(2.0, 1.0), regions=lambda c: (c[:, 0] > 1.0).astype(int))
    dofs = DofMap(m, across_regions=False)
    f = 1 + 2 * m.nodes[dofs.node, 0] - m.nodes[dofs.node, 1]
    nf = NodalField(m, (f + 10 * dofs.region)[:, None], ("u",), dofs.node, dofs.region)
    assert nf.split_nodes.size == 3
    x = np.array([[0.3, 0.4], [1.7, 0.9], [1.0, 0.5]])
    lin = 1 + 2 * x[:, 0] - x[:, 1]
    loc = PointLocator(m)
    np.testing.assert_allclose(loc.evaluate(nf, x[:2])[:, 0], lin[:2] + [0, 10], atol=1e-13)
    assert loc.evaluate(nf, x[2:], region=0)[0, 0] == pytest.approx(lin[2])
    assert loc.evaluate(nf, x[2:], region=1)[0, 0] == pytest.approx(lin[2] + 10)
    with pytest.raises(ValueError, match="region 7 is not in the mesh"):
        loc.locate(x, region=7)
    # cell rows agree with the dof map of project_l2
    np.testing.assert_array_equal(nf.cell_rows("quad4"), dofs.cell_dofs["quad4"])
    # a layout that cannot serve a region fails clearly
    one = NodalField(m, np.zeros((1, 1)), ("u",), [0], [1])
    with pytest.raises(ValueError):
        RowLayout(m, one).lookup(np.array([5]), np.array([0]))


# ---------------------------------------------------------------------------
# edge paths
# ---------------------------------------------------------------------------
def test_edge_path_follows_the_curved_quadratic_hole_edge():
    """Along the hole r = a of the quad8 annulus the path follows the curved
    quadratic edges: its points sit on r = a to the interpolation error of
    the quadratic edge (far below the chord sagitta a(1 - cos(Δθ/2)) a
    straight chord would show), its length is πa/2 to 1e-6 (straight chords
    are short by the factor sin(Δθ/2)/(Δθ/2), about 7e-4 here), its normal is
    the outward radius (into the material), and the hoop stress read along it
    is Kirsch's stt = S (1 - 2 cos 2θ) at r = a (Timoshenko & Goodier §35)."""
    m, nf = kirsch_nodal("quad8", 1)
    edges = hole_edges(m)
    rng = np.random.default_rng(0)
    shuffled = edges[rng.permutation(len(edges))]
    ep = edge_path(m, np.r_[edges[:1], shuffled[shuffled[:, 0] != edges[0, 0]]])  # any order, first kept
    assert not ep.closed and len(ep.order) == 12
    dth = (np.pi / 2) / 12
    chords = 12 * 2 * A * np.sin(dth / 2)
    assert abs(ep.length - np.pi / 2 * A) < 1e-6 * A
    assert abs(chords - np.pi / 2 * A) > 5e-4 * A
    res = sample(nf, ep, n=97)
    r = np.hypot(*res.points.T)
    sagitta = A * (1 - np.cos(dth / 2))
    assert np.abs(r - A).max() < 0.01 * sagitta
    np.testing.assert_allclose(res.normals, res.points / r[:, None], atol=2e-4)
    # the first listed edge runs 3 -> 0 (θ decreasing), so the path runs from θ = 90° to 0
    np.testing.assert_allclose(res.points[0], [0.0, A], atol=1e-12)
    np.testing.assert_allclose(res.points[-1], [A, 0.0], atol=1e-12)
    th = np.arctan2(res.points[:, 1], res.points[:, 0])
    np.testing.assert_allclose(res["stt"], S * (1 - 2 * np.cos(2 * th)), atol=2e-2)
    np.testing.assert_allclose(res["snn"], 0.0, atol=2e-2)
    # distances are arc lengths: equal steps map to equal angle steps on a circle
    np.testing.assert_allclose(np.diff(th), -np.pi / 2 / 96, rtol=2e-3)
    # the points agree with the element geometry at the edge's natural coordinates
    loc = ep.locate(ep.sample(n=97))
    b = m.blocks[0]
    back = np.einsum("pk,pki->pi", b.element.shape_functions(loc.xi), m.nodes[b.cells[loc.cell]])
    np.testing.assert_allclose(back, res.points, atol=1e-14)
    assert np.allclose(np.abs(loc.xi[:, 0]), 1.0)


def test_edge_path_straight_closed_and_errors():
    m = rectangle_mesh("quad8", 3, 2, size=(3.0, 2.0))
    b = m.blocks[0]
    x = m.nodes
    bottom = b.cells[np.isclose(x[b.cells[:, 0], 1], 0)][:, [0, 1, 4]]
    ep = edge_path(m, bottom)
    res = sample(nodal(m, x[:, :1] * 2.0, ("u",)), ep, distances=[0.0, 0.5, 2.25, 3.0])
    np.testing.assert_allclose(res.points, [[0, 0], [0.5, 0], [2.25, 0], [3, 0]], atol=1e-14)
    np.testing.assert_allclose(res["u"], [0, 1, 4.5, 6], atol=1e-13)
    np.testing.assert_allclose(res.normals, np.broadcast_to([0, 1], (4, 2)), atol=1e-15)   # into the material
    # the whole boundary, listed cell by cell, is one closed chain of length 10
    rows = []
    for j, ed in enumerate(b.element.edges):
        e = b.cells[:, list(ed)]
        mid = x[e[:, 2]]
        on = np.isclose(mid[:, 0], 0) | np.isclose(mid[:, 0], 3) | np.isclose(mid[:, 1], 0) | np.isclose(mid[:, 1], 2)
        rows.append(e[on])
    loop = edge_path(m, np.concatenate(rows))
    assert loop.closed and abs(loop.length - 10.0) < 1e-12
    with pytest.raises(ValueError, match="separate chains"):
        edge_path(m, bottom[[0, 2]])
    with pytest.raises(ValueError, match="without branches"):
        edge_path(m, np.r_[bottom, [[b.cells[0, 1], b.cells[0, 2], b.cells[0, 5]]]])
    with pytest.raises(ValueError, match="is not an edge of any cell"):
        edge_path(m, [[b.cells[0, 0], b.cells[0, 2]]])
    with pytest.raises(ValueError, match="mid-side node differs"):
        edge_path(m, [[b.cells[0, 0], b.cells[0, 1], b.cells[0, 6]]])


# ---------------------------------------------------------------------------
# raw field along a path
# ---------------------------------------------------------------------------
def test_raw_along_jumps_at_element_boundaries():
    """Piecewise-constant raw values (the cell number): the raw curve is one
    piece per crossed cell, constant on each, with the crossings found at the
    grid lines x = 0.25 k (structured mesh geometry, common practice)."""
    m = rectangle_mesh("quad4", 8, 4, size=(2.0, 1.0))
    ncell = len(m.blocks[0])
    vals = np.broadcast_to(np.arange(ncell, dtype=float)[:, None, None], (ncell, 4, 1))
    fld = GaussField(m, {"quad4": vals}, ("s",))
    raw = raw_along(fld, line((0.1, 0.3), (1.9, 0.3)), n=5)       # fewer samples than cells
    assert len(raw.pieces) == 8
    xs = raw.points[:, 0]
    for k, pc in enumerate(raw.pieces):
        cell = int(round(raw["s"][pc][0]))
        np.testing.assert_allclose(raw["s"][pc], cell, atol=1e-12)
        assert raw.element[pc[0]] == m.blocks[0].ids[cell]
        if k > 0:
            assert abs(xs[pc[0]] - 0.25 * k) < 1e-8 and abs(xs[raw.pieces[k - 1][-1]] - 0.25 * k) < 1e-8


def test_raw_along_reproduces_local_fields():
    """Where the integration-point data come from a field in the local-field
    space, the raw curve is that field (Hinton & Campbell 1974) and agrees
    with the smoothed one."""
    f = lambda x: np.stack([1 + x[..., 0] ** 2 - 2 * x[..., 0] * x[..., 1], 3 * x[..., 1], 0 * x[..., 0]], -1)
    m = rectangle_mesh("quad9", 4, 4, size=(2.0, 2.0), distort=0.3)
    fld = GaussField(m, {"quad9": f(m.geometry("quad9", "full").x_cqi)}, ("sxx", "syy", "sxy"))
    raw = raw_along(fld, polyline([(0.1, 0.1), (1.9, 0.5), (1.0, 1.9)]), n=30)
    np.testing.assert_allclose(np.c_[raw["sxx"], raw["syy"]], f(raw.points)[:, :2], atol=1e-12)
    assert len(raw.pieces) >= 6 and raw.method == "raw"


# ---------------------------------------------------------------------------
# results: csv, table, plot; 3D paths
# ---------------------------------------------------------------------------
def test_result_csv_table_plot(tmp_path):
    m, nf = kirsch_nodal("quad8", 1)
    res = sample(nf, PATHS["chord"](), n=17)
    out = res.to_csv(tmp_path / "chord.csv")
    header = open(out).readline().strip().split(",")
    assert header[:8] == ["distance", "x", "y", "tx", "ty", "nx", "ny", "element"]
    data = np.loadtxt(out, delimiter=",", skiprows=1)
    np.testing.assert_allclose(data[:, 0], res.distances, rtol=1e-9)
    np.testing.assert_allclose(data[:, header.index("stt")], res["stt"], rtol=1e-8, atol=1e-12)
    assert "von_mises" in res.to_table() and "max von_mises" in repr(res)
    assert "<table>" in res._repr_html_()
    import matplotlib
    matplotlib.use("Agg")
    ax = res.plot(quantity=["stt", "snn"])
    assert len(ax.lines) == 2
    fld = GaussField(m, {"quad8": kirsch(m.geometry("quad8", "full").x_cqi)[0]}, ("sxx", "syy", "sxy"))
    raw = raw_along(fld, PATHS["chord"](), n=17)
    ax = raw.plot(quantity="stt")
    assert len(ax.lines) == len(raw.pieces) and len(set(l.get_color() for l in ax.lines)) == 1
    with pytest.raises(KeyError, match="no quantity"):
        res["nope"]


def test_3d_line_with_reference_normal():
    """A 3D line through a hex8 box: a linear field is reproduced, and with a
    reference normal the path-frame stresses are n.S.n, t.S.t, n.S.t (tensor
    rotation, common practice)."""
    m = box_mesh("hex8", 3, 3, 3, distort=0.3)
    x = m.nodes
    comps = ("sxx", "syy", "szz", "sxy", "syz", "sxz")
    vals = np.c_[1 + x[:, 0], 2 + 0 * x[:, 0], 3 * x[:, 2], 0.5 + 0 * x[:, 0], x[:, 1], 0 * x[:, 0]]
    nf = nodal(m, vals, comps)
    p = line((0.1, 0.2, 0.3), (0.9, 0.7, 0.6), normal=(0, 0, 1))
    res = sample(nf, p, n=11)
    P = res.points
    want = np.c_[1 + P[:, 0], 2 + 0 * P[:, 0], 3 * P[:, 2], 0.5 + 0 * P[:, 0], P[:, 1], 0 * P[:, 0]]
    np.testing.assert_allclose(np.column_stack([res[c] for c in comps]), want, atol=1e-12)
    t, n = res.tangents[0], res.normals[0]
    assert abs(t @ n) < 1e-14
    Sm = np.array([[want[0, 0], want[0, 3], want[0, 5]], [want[0, 3], want[0, 1], want[0, 4]],
                   [want[0, 5], want[0, 4], want[0, 2]]])
    assert res["snn"][0] == pytest.approx(n @ Sm @ n)
    assert res["stt"][0] == pytest.approx(t @ Sm @ t)
    assert res["snt"][0] == pytest.approx(n @ Sm @ t)
    no_ref = sample(nf, line((0.1, 0.2, 0.3), (0.9, 0.7, 0.6)), n=5)
    assert no_ref.normals is None and "snn" not in no_ref.derived and "von_mises" in no_ref.derived


def test_path_input_errors():
    with pytest.raises(ValueError, match="coincide"):
        polyline([(0, 0), (1, 0), (1, 0)])
    with pytest.raises(ValueError, match="radius must be > 0"):
        arc((0, 0), -1.0, 0, 90)
    with pytest.raises(ValueError, match="2D only"):
        arc((0, 0, 0), 1.0, 0, 90)
    p = line((0, 0), (1, 0))
    with pytest.raises(ValueError, match="lies off the path"):
        p.sample(distances=[0.0, 1.5])
    with pytest.raises(ValueError, match="must not decrease"):
        p.sample(distances=[0.5, 0.2])
    with pytest.raises(ValueError, match="either n or distances"):
        p.sample(n=5, distances=[0.1])
    m, nf = kirsch_nodal("quad4", 1)
    with pytest.raises(ValueError, match="a 3D path on a 2D mesh"):
        sample(nf, line((0, 0, 0), (1, 1, 1)))
    fld = GaussField(m, {"quad4": np.zeros((len(m.blocks[0]), 4, 1))}, ("s",))
    with pytest.raises(ValueError, match="needs a NodalField"):
        sample(fld, p)
