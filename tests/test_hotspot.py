"""Hot-spot stress extrapolation and through-thickness linearisation.

Sources: IIW recommendations (Hobbacher, IIW document XIII-2460-13, 2016 edition),
structural hot-spot stress read-out points and printed coefficients; ASME BPVC
VIII-2 Annex 5-A (5-A.4.1.2) membrane and bending integrals, evaluated in closed
form for polynomial distributions below.
"""
import numpy as np
import pytest

from toolkit.assess.hotspot import (HOT_SPOT_RULES, hot_spot_concentration, hot_spot_stress,
                             lagrange_extrapolation_coefficients, linearize)

# Printed IIW 2016 formulas (Hobbacher, XIII-2460-13), written out independently of the module's table
PRINTED = {
    "a-linear": ([0.4, 1.0], [1.67, -0.67]),
    "a-quadratic": ([0.4, 0.9, 1.4], [2.52, -2.24, 0.72]),
    "a-coarse": ([0.5, 1.5], [1.50, -0.50]),
    "b-fine": ([4.0, 8.0, 12.0], [3.0, -3.0, 1.0]),
    "b-coarse": ([5.0, 15.0], [1.5, -0.5]),
}


@pytest.mark.parametrize("rule", sorted(PRINTED))
def test_generic_coefficients_equal_printed_ones(rule):
    pts, printed = PRINTED[rule]
    c = lagrange_extrapolation_coefficients(pts)
    # to the printed precision (two decimals for type a, exact integers/halves for type b)
    assert np.allclose(np.round(c, 2), printed, atol=1e-12)
    assert np.isclose(c.sum(), 1.0)  # reproduces a constant
    r = HOT_SPOT_RULES[rule]
    assert list(r.points) == pts and list(r.published) == printed
    res = hot_spot_stress(lambda x: np.ones_like(x), thickness=12.0, rule=rule)
    assert np.allclose(res.coefficients, c) and list(res.published) == printed


def test_exact_coefficients_are_used_not_the_rounded_ones():
    t = 10.0
    f = lambda x: 200.0 - 15.0 * x  # noqa: E731
    res = hot_spot_stress(f, thickness=t, rule="a-linear")
    assert np.isclose(res.value, 200.0, rtol=0, atol=1e-12)  # exact for a linear field
    rounded = 1.67 * f(0.4 * t) - 0.67 * f(1.0 * t)
    assert not np.isclose(rounded, 200.0, rtol=0, atol=1e-6)  # the rounded formula is off by ~0.1 %


@pytest.mark.parametrize("rule", ["a-linear", "a-coarse", "b-coarse", "a-quadratic", "b-fine"])
def test_linear_rules_reproduce_linear_fields(rule):
    t = 16.0
    f = lambda x: 180.0 - 4.5 * x  # noqa: E731
    assert np.isclose(hot_spot_stress(f, thickness=t, rule=rule).value, 180.0, atol=1e-10)


@pytest.mark.parametrize("rule", ["a-quadratic", "b-fine"])
def test_quadratic_rules_reproduce_quadratic_fields(rule):
    t = 20.0
    f = lambda x: 150.0 - 6.0 * x + 0.35 * x**2  # noqa: E731
    assert np.isclose(hot_spot_stress(f, thickness=t, rule=rule).value, 150.0, atol=1e-10)


@pytest.mark.parametrize("rule", ["a-linear", "a-coarse", "b-coarse"])
def test_linear_rules_miss_a_quadratic_by_the_closed_form_amount(rule):
    # linear Lagrange extrapolation of x^2 through x1, x2 to 0 gives -x1 x2 (closed form)
    t = 20.0
    res = hot_spot_stress(lambda x: x**2, thickness=t, rule=rule)
    x1, x2 = res.readouts["distances"]
    assert np.isclose(res.value, -x1 * x2)


def test_sampled_path_interpolates_linearly_and_checks_range():
    t = 10.0
    d = np.array([0.0, 1.0, 2.5, 3.0, 7.0, 9.5, 12.0, 16.0])  # non-uniform samples
    s = 300.0 - 8.0 * d
    res = hot_spot_stress((d, s), thickness=t, rule="a-quadratic")
    assert np.isclose(res.value, 300.0)
    assert np.allclose(res.readouts["distances"], [4.0, 9.0, 14.0])
    assert np.allclose(res.readouts["stresses"], 300.0 - 8.0 * np.array([4.0, 9.0, 14.0]))
    with pytest.raises(ValueError, match="outside the sampled range"):
        hot_spot_stress((d[:5], s[:5]), thickness=t, rule="a-linear")  # 1.0 t = 10 > 7
    with pytest.raises(ValueError, match="increase strictly"):
        hot_spot_stress((d[::-1], s[::-1]), thickness=t, rule="a-linear")


def test_several_components_at_once():
    t = 8.0
    d = np.linspace(0.0, 15.0, 31)
    s = np.stack([100.0 + 2.0 * d, -50.0 + 0.5 * d], axis=-1)
    res = hot_spot_stress((d, s), thickness=t, rule="a-coarse")
    assert np.allclose(res.value, [100.0, -50.0])


def test_type_b_in_metres():
    f = lambda x: 90.0 + 1000.0 * x  # x in metres  # noqa: E731
    res = hot_spot_stress(f, rule="b-fine", unit="m")
    assert np.allclose(res.readouts["distances"], [0.004, 0.008, 0.012])
    assert np.isclose(res.value, 90.0)


def test_type_b_in_inches():
    """Type "b" read-outs are fixed lengths, 4, 8, 12 mm (fine) and 5, 15 mm
    (coarse) from the toe (IIW recommendations, Hobbacher 2016, type "b"
    hot spot), so a model in inches reads out at 4/25.4 in etc. (1 in =
    25.4 mm exactly, international inch of 1959).  A linear field cannot show
    a wrong conversion (every rule reproduces it wherever it reads out), so
    the field here is curved: σ(x) = 200 - 1000 x^2 MPa with x in inches.
    Linear extrapolation from x1, x2 gives σ(0) - c x1 x2 for σ = σ(0) + c x^2
    (closed form), i.e. 200 + 1000 (5/25.4)(15/25.4) = 316.2502 MPa; the
    quadratic fine rule reproduces a quadratic, and for σ = 90 + 50 x^3 gives
    90 + 50 x1 x2 x3 = 90 + 50 (4 8 12)/25.4^3 = 91.17166 MPa.  The same
    physical field in a millimetre model gives the same hot-spot stress.
    Separates 25.4 from 25.0 mm per inch (measured with 25.0 planted: 320.0
    against 316.2502 MPa coarse, 91.2288 against 91.17166 MPa fine; the
    distances differ by 1.6 %)."""
    inch = 25.4
    fine = hot_spot_stress(lambda x: 90.0 + 50.0 * x**3, rule="b-fine", unit="in")
    np.testing.assert_allclose(fine.readouts["distances"], np.array([4.0, 8.0, 12.0]) / inch, rtol=1e-12)
    assert fine.value == pytest.approx(90.0 + 50.0 * 384.0 / inch**3, rel=1e-12)
    coarse = hot_spot_stress(lambda x: 200.0 - 1000.0 * x**2, rule="b-coarse", unit="in")
    np.testing.assert_allclose(coarse.readouts["distances"], np.array([5.0, 15.0]) / inch, rtol=1e-12)
    assert coarse.value == pytest.approx(200.0 + 1000.0 * 75.0 / inch**2, rel=1e-12)
    in_mm = hot_spot_stress(lambda y: 200.0 - 1000.0 * (y / inch) ** 2, rule="b-coarse", unit="mm")
    assert coarse.value == pytest.approx(in_mm.value, rel=1e-12)


def test_element_size_warnings(capsys):
    t = 10.0
    f = lambda x: 100.0 + x  # noqa: E731
    assert hot_spot_stress(f, thickness=t, rule="a-linear", element_size=4.0).warnings == []
    w = hot_spot_stress(f, thickness=t, rule="a-linear", element_size=5.0).warnings
    assert len(w) == 1 and "coarser" in w[0] and "0.4 t" in w[0]
    assert hot_spot_stress(f, thickness=t, rule="a-coarse", element_size=10.0).warnings == []
    assert len(hot_spot_stress(f, thickness=t, rule="a-coarse", element_size=12.0).warnings) == 1
    assert len(hot_spot_stress(f, rule="b-fine", element_size=5.0).warnings) == 1
    assert hot_spot_stress(f, rule="b-coarse", element_size=10.0).warnings == []
    assert capsys.readouterr().out == ""  # warnings are returned, not printed


def test_result_renders_and_serialises():
    import json
    res = hot_spot_stress(lambda x: 100.0 + x, thickness=10.0, rule="a-linear", element_size=6.0)
    text = repr(res)
    assert "a-linear" in text and "printed +1.67" in text and "warning" in text
    d = json.loads(json.dumps(res.to_dict()))
    assert np.isclose(d["value"], 100.0) and d["published_coefficients"] == [1.67, -0.67]


def test_hot_spot_bad_input():
    f = lambda x: x  # noqa: E731
    with pytest.raises(ValueError, match="give thickness"):
        hot_spot_stress(f, rule="a-linear")
    with pytest.raises(ValueError, match="unknown hot-spot rule"):
        hot_spot_stress(f, thickness=1.0, rule="a-cubic")
    with pytest.raises(ValueError, match="non-finite"):
        hot_spot_stress(lambda x: x * np.nan, thickness=1.0)
    with pytest.raises(ValueError, match="unknown length unit"):
        hot_spot_stress(f, rule="b-fine", unit="ft")


def test_hot_spot_concentration():
    res = hot_spot_stress(lambda x: 150.0 - x, thickness=10.0, rule="a-linear")
    assert np.isclose(hot_spot_concentration(res, 100.0), 1.5)
    assert np.isclose(hot_spot_concentration(150.0, 100.0), 1.5)
    with pytest.raises(ValueError):
        hot_spot_concentration(res, 0.0)


# --- linearisation ----------------------------------------------------------
def closed_form(A, B, C, t):
    """sigma = A + B x + C x^2 on [0, t]: Annex 5-A integrals done by hand.

    m = A + B t/2 + C t^2/3;  b = -(B t/2 + C t^2/2);  peak = C t^2/6 at both faces.
    """
    m = A + B * t / 2 + C * t**2 / 3
    b = -(B * t / 2 + C * t**2 / 2)
    return m, b, C * t**2 / 6


def test_linear_plus_quadratic_splits_exactly_quadratic_integration():
    A, B, C, t = 120.0, -9.0, 1.7, 14.0
    x = np.sort(np.r_[0.0, t, np.random.default_rng(3).uniform(0, t, 9)])  # 11 non-uniform points
    lin = linearize(x + 3.0, A + B * x + C * x**2, integration="quadratic")  # offset positions
    m, b, pk = closed_form(A, B, C, t)
    assert np.isclose(lin.thickness, t)
    assert np.isclose(lin.membrane, m, rtol=0, atol=1e-10)
    assert np.isclose(lin.bending, b, rtol=0, atol=1e-10)
    assert np.allclose(lin.peak, [pk, pk], rtol=0, atol=1e-10)
    assert np.allclose(lin.structural, [m + b, m - b])
    assert np.allclose(lin.linear_at([0.0, t]), [m + b, m - b])


def test_linear_integration_exact_for_linear_and_known_error_for_quadratic():
    A, B, t = 80.0, 6.0, 10.0
    x = np.array([0.0, 0.3, 1.1, 4.0, 4.2, 8.0, 10.0])
    lin = linearize(x, A + B * x)
    m, b, _ = closed_form(A, B, 0.0, t)
    assert np.isclose(lin.membrane, m) and np.isclose(lin.bending, b)
    assert np.allclose(lin.peak, 0.0, atol=1e-12)
    # piecewise-linear interpolant of C x^2, uniform step h: int(interp) - int(x^2) = C t h^2 / 6
    # (trapezoid error, closed form), so membrane is high by C h^2/6
    C, n = 2.0, 201
    x = np.linspace(0.0, t, n)
    h = t / (n - 1)
    lin = linearize(x, C * x**2)
    m, b, pk = closed_form(0.0, 0.0, C, t)
    assert np.isclose(lin.membrane, m + C * h**2 / 6, rtol=1e-12)
    assert abs(lin.bending - b) < 1e-3 * abs(b) and abs(lin.peak[0] - pk) < 1e-3 * abs(pk)


def test_pure_bending_and_components():
    t = 20.0
    x = np.linspace(0.0, t, 9)
    sig = np.stack([50.0 * (1 - 2 * x / t), 30.0 + 0 * x, 10.0 + 2.0 * x + 0.1 * x**2], -1)
    lin = linearize(x, sig, components=("sxx", "syy", "sxy"), integration="quadratic")
    assert np.allclose(lin.membrane[:2], [0.0, 30.0]) and np.allclose(lin.bending[:2], [50.0, 0.0])
    m, b, pk = closed_form(10.0, 2.0, 0.1, t)
    assert np.allclose([lin.membrane[2], lin.bending[2]], [m, b]) and np.allclose(lin.peak[:, 2], pk)
    assert lin.structural.shape == (2, 3) and lin.components == ("sxx", "syy", "sxy")
    assert "structural (membrane + bending)" in repr(lin) and "membrane+bending" not in repr(lin)
    assert lin.to_dict()["components"] == ["sxx", "syy", "sxy"]


def test_linearize_bad_input():
    with pytest.raises(ValueError, match="increase strictly"):
        linearize([0.0, 2.0, 1.0], [1.0, 2.0, 3.0])
    with pytest.raises(ValueError, match="odd number"):
        linearize([0.0, 1.0, 2.0, 3.0], [1.0, 2.0, 3.0, 4.0], integration="quadratic")
    with pytest.raises(ValueError, match="do not match"):
        linearize([0.0, 1.0, 2.0], [1.0, 2.0])
    with pytest.raises(ValueError, match="integration must be"):
        linearize([0.0, 1.0], [1.0, 2.0], integration="simpson")


# -- a read-out window that crosses a region boundary (common practice: the read-outs of one
# surface extrapolation must lie in one part; a two-region mesh built here, boundary at x = 6 mm)
def _two_region_surface(toe_x, direction=-1.0):
    import toolkit as tk
    from toolkit.core.grid import rectangle_mesh
    from helpers import gauss_field_of
    mesh = rectangle_mesh("quad4", 24, 2, size=(24.0, 10.0), regions=lambda c: np.where(c[:, 0] > 6.0, 2, 1))
    nodal = tk.project_l2(gauss_field_of(mesh, lambda x: 200.0 - 5.0 * x[..., :1], comps=["sxx"]))
    ds = np.linspace(0.0, 15.0, 151)
    surf = tk.sample(nodal, tk.line((toe_x, 10.0), (toe_x + 15.0 * direction, 10.0)), distances=ds)
    return ds, surf


def test_path_samples_carry_their_cells_region():
    ds, surf = _two_region_surface(16.0)
    assert set(np.unique(surf.cell_region)) == {1, 2}
    x = 16.0 - ds
    assert np.all(surf.cell_region[x < 5.99] == 1) and np.all(surf.cell_region[x > 6.01] == 2)


def test_hot_spot_read_out_crossing_a_region_boundary_is_warned():
    # toe at x = 16.55, boundary at x = 6 (10.55 mm from the toe; samples every 0.1 mm), t = 8 mm:
    # the a-linear window 0..8 mm stays in region 2, the a-quadratic window 0..11.2 mm crosses it
    ds, surf = _two_region_surface(16.55)
    lin = hot_spot_stress((ds, surf["sxx"]), thickness=8.0, rule="a-linear", regions=surf.cell_region)
    quad = hot_spot_stress((ds, surf["sxx"]), thickness=8.0, rule="a-quadratic", regions=surf.cell_region)
    assert len(quad.warnings) == 1 and "region boundary at 10.6 mm" in quad.warnings[0]
    assert "region 2 to 1" in quad.warnings[0]
    assert lin.warnings == []
    # without the regions the same read-out is silent (the warning comes from the regions alone)
    assert hot_spot_stress((ds, surf["sxx"]), thickness=8.0, rule="a-quadratic").warnings == []
    # the toe itself on the boundary (x = 6) with the window inside region 2: no warning
    ds, surf = _two_region_surface(6.0, direction=1.0)
    q = hot_spot_stress((ds, surf["sxx"]), thickness=10.0, rule="a-quadratic", regions=surf.cell_region)
    assert q.warnings == []
    with pytest.raises(ValueError, match="regions"):
        hot_spot_stress(lambda x: 100.0 + 0 * x, thickness=10.0, regions=[1, 1])


def test_demo_bracket_region_2_starts_at_the_toe():
    """data/demo_bracket documents region 2 (the lug) as x > 100 mm, where the from_results workbook
    puts the toe: every cell of region 2 lies at x >= 100 and every cell of region 1 at x <= 100, so the
    hot-spot read-out from the toe towards -x stays in region 1 (no crossing warning)."""
    from pathlib import Path
    import toolkit as tk
    from helpers import demo_bracket
    mesh, field = demo_bracket("pull")
    b = mesh.blocks[0]
    x = mesh.nodes[b.cells][..., 0]
    assert x[b.regions == 2].min() == pytest.approx(100.0, abs=1e-9)
    assert x[b.regions == 1].max() == pytest.approx(100.0, abs=1e-9)
    ds = np.linspace(0.0, 15.0, 151)
    surf = tk.sample(tk.project_l2(field), tk.line((100.0, 40.0), (85.0, 40.0)), distances=ds)
    assert np.all(surf.cell_region[1:] == 1)
    r = hot_spot_stress((ds, surf["sxx"]), thickness=10.0, rule="a-quadratic", regions=surf.cell_region)
    assert r.warnings == []
