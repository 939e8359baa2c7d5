"""Load cases on one mesh (toolkit.core.cases) and their projection with one
projector (L2Projector.project_cases, recover_cases).

Sources: superposition of a linear elastic model (Timoshenko & Goodier,
Theory of Elasticity, 3rd ed., §1.9); Kirsch (1898) closed form for the
circular hole (Timoshenko & Goodier §35): remote uniaxial S gives the hoop
stress S (1 - 2 cos 2θ) at the hole edge, so equibiaxial S gives 2 S
(Kt = 2) and S along x with -S along y gives -4 S cos 2θ (Kt = 4);
linearity of the L2 projection, averaging and SPR (closed form: each is a
linear map of the integration-point values).
"""
import numpy as np
import pytest

from toolkit import GaussField, L2Projector, LoadCases, combine_nodal, recover, recover_cases
from toolkit.core.grid import rectangle_mesh
from toolkit.errors import InputError
from toolkit.workbook.recovery_demo import kirsch_stress, quarter_annulus_mesh

COMPS = ("sxx", "syy", "sxy")


def kirsch_y(x):
    """Kirsch field for remote tension along y: the x field turned by 90°
    (σ'(p) = Q σ(Qᵀ p) Qᵀ with Q the quarter turn: sxx' = syy, syy' = sxx, sxy' = -sxy)."""
    s = kirsch_stress(np.stack([x[..., 1], -x[..., 0]], axis=-1))
    return np.stack([s[..., 1], s[..., 0], -s[..., 2]], axis=-1)


@pytest.fixture(scope="module")
def kirsch_cases():
    mesh = quarter_annulus_mesh("quad8", n_radial=24, n_angular=48, outer=5.0, grading=8.0)
    xg = mesh.geometry("quad8", "reduced").x_cqi
    cases = LoadCases({
        "x": GaussField(mesh, {"quad8": kirsch_stress(xg)}, COMPS, points="reduced", name="x"),
        "y": GaussField(mesh, {"quad8": kirsch_y(xg)}, COMPS, points="reduced", name="y"),
    }, name="unit loads")
    return mesh, cases


def hoop_at_hole(nodal, mesh):
    """Hoop stress σθθ = sxx sin²θ - 2 sxy sinθ cosθ + syy cos²θ at the nodes on r = 1, and θ."""
    r = np.hypot(*mesh.nodes.T)
    on = np.flatnonzero(np.abs(r - 1.0) < 1e-9)
    th = np.arctan2(mesh.nodes[on, 1], mesh.nodes[on, 0])
    v = nodal.to_array()[on]
    s, c = np.sin(th), np.cos(th)
    return v[:, 0] * s * s - 2 * v[:, 2] * s * c + v[:, 1] * c * c, th


def test_kirsch_y_case_is_the_turned_x_case():
    # Kirsch (1898): remote tension along y gives sxx = 3 S at (a, 0) on the hole edge
    s = kirsch_y(np.array([[1.0, 0.0], [0.0, 1.0]]))
    assert s[0, 1] == pytest.approx(3.0) and s[1, 0] == pytest.approx(-1.0)


# Measured tolerance: on this 24 x 48 quad8 ring (reduced points, graded 8:1 toward the hole) the projected
# hoop stress at the hole edge deviates from the closed form by at most 0.0013 (equibiaxial, 0.07 % of 2),
# 0.0066 (uniaxial, 0.22 % of 3) and 0.012 (σ1 = -σ2, 0.30 % of 4); halving the elements (12 x 24) gives
# 0.016 / 0.078 / 0.14, so the error is the projection's at the boundary.  We allow 0.5 % of the peak.
KT_TOL = 0.005


def test_kirsch_superposition_equibiaxial_gives_kt_2(kirsch_cases):
    # Kirsch (1898) closed form: equibiaxial S -> σθθ = 2 S all round the hole
    mesh, cases = kirsch_cases
    nodal = combine_nodal(L2Projector(mesh).project_cases(cases), {"x": 1.0, "y": 1.0})
    hoop, _ = hoop_at_hole(nodal, mesh)
    assert np.abs(hoop - 2.0).max() <= KT_TOL * 2.0
    assert hoop.max() == pytest.approx(2.0, rel=KT_TOL)


def test_kirsch_superposition_shear_gives_kt_4(kirsch_cases):
    # Kirsch (1898) closed form: σ1 = S along x, σ2 = -S along y -> σθθ = -4 S cos 2θ, |peak| = 4 S
    mesh, cases = kirsch_cases
    nodal = combine_nodal(L2Projector(mesh).project_cases(cases), [1.0, -1.0])
    hoop, th = hoop_at_hole(nodal, mesh)
    assert np.abs(hoop - (-4.0 * np.cos(2 * th))).max() <= KT_TOL * 4.0
    assert np.abs(hoop).max() == pytest.approx(4.0, rel=KT_TOL)


def test_each_unit_case_gives_kt_3_within_the_measured_tolerance(kirsch_cases):
    # Kirsch (1898): uniaxial S -> σθθ = S (1 - 2 cos 2θ), peak 3 S at θ = 90°
    mesh, cases = kirsch_cases
    out = L2Projector(mesh).project_cases(cases)
    for name, field in out.items():
        hoop, th = hoop_at_hole(field, mesh)
        sign = 1.0 if name == "x" else -1.0
        assert np.abs(hoop - (1 - sign * 2 * np.cos(2 * th))).max() <= KT_TOL * 3.0


@pytest.fixture(scope="module")
def random_cases():
    mesh = rectangle_mesh("quad4", 7, 5, distort=0.25)
    rng = np.random.default_rng(12)
    fields = [GaussField(mesh, {"quad4": rng.normal(size=(35, 4, 3)) * 50}, COMPS, name=f"LC{i}")
              for i in range(1, 6)]
    return mesh, LoadCases(fields)


@pytest.mark.parametrize("method, options", [("l2", {}), ("l2", {"solver": "direct"}), ("lumped", {}),
                                             ("average", {}), ("spr", {})])
def test_projection_and_combination_commute(random_cases, method, options):
    # closed form: every recovery method is linear, R(Σ w_i σ_i) = Σ w_i R(σ_i)
    mesh, cases = random_cases
    w = {"LC1": 1.35, "LC3": -0.7, "LC5": 2.0}
    one_by_one = recover(cases.combine(w), method, **options)
    together = combine_nodal(recover_cases(cases, method, **options), w)
    assert np.allclose(together.values, one_by_one.values, rtol=0, atol=1e-7 * np.abs(one_by_one.values).max())


def test_project_cases_equals_projecting_one_by_one_and_chunks_change_nothing(random_cases):
    # common practice: a block solve gives each column what the single solve gives, up to the tolerance
    mesh, cases = random_cases
    projector = L2Projector(mesh)
    together = projector.project_cases(cases)
    chunked = projector.project_cases(cases, budget=1)          # one case per solve
    assert list(together) == list(cases.names)
    for k in cases:
        single = projector.project(cases[k])
        scale = np.abs(single.values).max()
        assert np.allclose(together[k].values, single.values, rtol=0, atol=1e-8 * scale)
        assert np.allclose(chunked[k].values, single.values, rtol=0, atol=1e-8 * scale)
        assert together[k].components == COMPS
        assert len(together[k].info["iterations"]) == 3
        assert together[k].info["cases_in_solve"] == 5 and chunked[k].info["cases_in_solve"] == 1


def test_container_access_and_arithmetic(random_cases):
    # closed form: linear combination, scaling and difference, value by value
    mesh, cases = random_cases
    assert len(cases) == 5 and cases.names == ("LC1", "LC2", "LC3", "LC4", "LC5") and "LC2" in cases
    assert list(cases) == list(cases.names) and cases.components == COMPS
    v = {k: cases[k].values["quad4"] for k in cases}
    comb = cases.combine([1, 2, 0, 0, -1], name="ULS")
    assert comb.name == "ULS" and np.allclose(comb.values["quad4"], v["LC1"] + 2 * v["LC2"] - v["LC5"])
    assert np.allclose(cases.difference("LC1", "LC4").values["quad4"], v["LC4"] - v["LC1"])
    big = cases.scaled(2.5)
    assert big.names == cases.names and np.allclose(big["LC3"].values["quad4"], 2.5 * v["LC3"])
    assert np.shares_memory(cases["LC1"].values["quad4"], v["LC1"])        # no copies kept
    assert repr(cases).startswith("LoadCases('cases', 5 cases ('LC1', 'LC2', 'LC3', 'LC4', 'LC5'), "
                                  "components ('sxx', 'syy', 'sxy'), quad4: 35x4 at gauss 2x2")
    many = LoadCases({f"t{i}": cases["LC1"] for i in range(10)})
    assert "('t0', 't1', 't2', ..., 't8', 't9')" in repr(many)


def test_container_errors_name_the_case(random_cases):
    mesh, cases = random_cases
    f = cases["LC1"]
    other = rectangle_mesh("quad4", 7, 5, distort=0.25)
    with pytest.raises(InputError, match="at least one"):
        LoadCases({})
    with pytest.raises(InputError, match="'b': expected a GaussField"):
        LoadCases({"a": f, "b": f.values})
    with pytest.raises(InputError, match="'LC1' is given twice"):
        LoadCases([f, f])
    with pytest.raises(InputError, match="surrounding spaces"):
        LoadCases({" a": f})
    with pytest.raises(InputError, match="'b' lies on another mesh"):
        LoadCases({"a": f, "b": GaussField(other, {"quad4": f.values["quad4"]}, COMPS)})
    with pytest.raises(InputError, match="'b' has components"):
        LoadCases({"a": f, "b": GaussField(mesh, {"quad4": f.values["quad4"]}, ("syy", "sxx", "sxy"))})
    with pytest.raises(InputError, match="'b': block quad4 sits at gauss 1x1"):
        LoadCases({"a": f, "b": GaussField(mesh, {"quad4": f.values["quad4"][:, :1]}, COMPS, points="reduced")})
    with pytest.raises(InputError, match="no load case 'LC9'"):
        cases["LC9"]
    with pytest.raises(InputError, match="unknown load case 'LC9'"):
        cases.combine({"LC9": 1.0})
    with pytest.raises(InputError, match="one factor per load case"):
        cases.combine([1.0, 2.0])
    with pytest.raises(InputError, match="factor of load case 'LC2' is nan"):
        cases.combine([1.0, np.nan, 0, 0, 0])
    with pytest.raises(InputError, match="mapping"):
        cases.combine("abc")
    with pytest.raises(InputError, match="finite"):
        cases.scaled(np.inf)
    with pytest.raises(InputError, match="no load case 'x'"):
        cases.difference("x", "LC1")


def test_projection_errors(random_cases):
    mesh, cases = random_cases
    with pytest.raises(InputError, match="expects LoadCases"):
        L2Projector(mesh).project_cases(cases["LC1"])
    with pytest.raises(InputError, match="another mesh"):
        L2Projector(rectangle_mesh("quad4", 7, 5)).project_cases(cases)
    with pytest.raises(InputError, match="budget"):
        L2Projector(mesh).project_cases(cases, budget=0)
    with pytest.raises(InputError, match="expects LoadCases"):
        recover_cases(cases["LC1"], "l2")
    with pytest.raises(InputError, match="unknown recovery method"):
        recover_cases(cases, "best")
    with pytest.raises(InputError, match="fixes lumped"):
        recover_cases(cases, "lumped", lumped=False)
    nodal = recover_cases(cases, "average")
    with pytest.raises(InputError, match="non-empty mapping"):
        combine_nodal({}, [])
    with pytest.raises(InputError, match="'b': expected a NodalField"):
        combine_nodal({"a": nodal["LC1"], "b": cases["LC2"]}, [1, 1])
    two = GaussField(mesh, {"quad4": cases["LC2"].values["quad4"][..., :2]}, COMPS[:2])
    with pytest.raises(InputError, match="'b': another mesh, components or row layout"):
        combine_nodal({"a": nodal["LC1"], "b": recover(two, "average")}, [1, 1])
