"""Non-welded fatigue (toolkit.assess.endurance) against its sources.

Sources: R. G. Budynas and J. K. Nisbett, Shigley's Mechanical Engineering
Design, 9th ed., chapter 6.  The worked-example numbers below (Examples 6-3,
6-4 and 6-12 and Table 6-5) are quoted from memory: the printed pages were
not reachable here; each is also re-derived by hand in the test, so a wrong
recollection would show as a disagreement between the two.  The closed forms
of the criteria are tested exactly (a point on each criterion line has n = 1;
Gerber's quadratic solved by hand), and their limits and order by common
practice.
"""
import math

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402

from toolkit.assess import (EnduranceLimit, criterion_amplitude, endurance_check, endurance_limit,  # noqa: E402
                            endurance_limit_estimate, equivalent_diameter, fatigue_safety_factor,
                            first_cycle_yield_check, langer_safety_factor, load_factor, reliability_factor,
                            size_factor, surface_factor)
from toolkit.assess.checks import CAUTION  # noqa: E402
from toolkit.errors import InputError  # noqa: E402
from toolkit.report.mean_stress import plot_mean_stress_diagram  # noqa: E402

KPSI = 6.894757  # MPa per kpsi (exact to the digits shown: 1 lbf/in² = 6894.757 Pa)
CRITERIA = ("goodman", "gerber", "asme-elliptic", "soderberg")


# ---------------------------------------------------------------------------
# Endurance limit and Marin factors
# ---------------------------------------------------------------------------
def test_endurance_limit_estimate_half_sut_up_to_1400():
    """Shigley 9th ed., Eq. (6-8) (from memory): S'e = 0.5 Sut up to 1400 MPa, 700 MPa above."""
    assert endurance_limit_estimate(510.0) == 255.0
    assert endurance_limit_estimate(1400.0) == 700.0
    assert endurance_limit_estimate(2000.0) == 700.0


def test_surface_factor_shigley_example_6_3():
    """Shigley 9th ed., Example 6-3 (from memory): machined, Sut = 520 MPa, ka = 4.51 (520)^-0.265 = 0.860."""
    assert surface_factor(520.0, "machined") == pytest.approx(4.51 * 520.0 ** -0.265, rel=1e-12)
    assert surface_factor(520.0, "machined") == pytest.approx(0.860, abs=0.0005)
    # cold-drawn shares the machined row; the rougher the finish, the lower ka (common practice)
    assert surface_factor(520.0, "cold-drawn") == surface_factor(520.0, "machined")
    k = [surface_factor(600.0, f) for f in ("ground", "machined", "hot-rolled", "as-forged")]
    assert k == sorted(k, reverse=True)


def test_surface_factor_si_and_us_tables_agree():
    """Shigley 9th ed., Table 6-2 gives a in kpsi and in MPa (from memory: 1.34, 2.70, 14.4, 39.9 kpsi):
    the two forms of ka = a Sut^b must agree, to the rounding of the printed a, at any Sut."""
    us = {"ground": 1.34, "machined": 2.70, "hot-rolled": 14.4, "as-forged": 39.9}
    for finish, a_kpsi in us.items():
        for sut_kpsi in (60.0, 100.0, 180.0):
            b = {"ground": -0.085, "machined": -0.265, "hot-rolled": -0.718, "as-forged": -0.995}[finish]
            assert surface_factor(sut_kpsi * KPSI, finish) == pytest.approx(a_kpsi * sut_kpsi ** b, rel=0.01)


def test_size_factor_shigley_example_6_4():
    """Shigley 9th ed., Example 6-4 (from memory): d = 32 mm in bending, rotating kb = 0.858; nonrotating
    de = 0.370 d = 11.84 mm and kb = 0.954.  Hand: (32/7.62)^-0.107 = 0.8578, (11.84/7.62)^-0.107 = 0.9540."""
    assert size_factor(32.0, "bending") == pytest.approx(0.858, abs=0.0005)
    de = equivalent_diameter("round-nonrotating", diameter=32.0)
    assert de == pytest.approx(11.84, abs=0.01)
    assert size_factor(de, "bending") == pytest.approx(0.954, abs=0.0005)
    assert size_factor(32.0, "torsion") == size_factor(32.0, "bending")
    assert size_factor(32.0, "axial") == 1.0 and size_factor(None, "axial") == 1.0


def test_size_factor_two_ranges_meet_and_decrease():
    """The two fits of Eq. (6-20) meet at 51 mm within 0.5 % (closed form: 1.24 x 51^-0.107 = 0.8724,
    1.51 x 51^-0.157 = 0.8714), and kb falls with size (common practice)."""
    lo, hi = (51.0 / 7.62) ** -0.107, 1.51 * 51.0 ** -0.157
    assert size_factor(51.0) == pytest.approx(lo, rel=1e-12)
    assert size_factor(51.0 + 1e-9) == pytest.approx(hi, rel=1e-9)
    assert lo == pytest.approx(hi, rel=0.005)
    d = np.linspace(3.0, 250.0, 60)
    kb = [size_factor(x) for x in d]
    assert np.all(np.diff(kb) < 0)


def test_equivalent_diameter_from_the_95_percent_area():
    """Shigley 9th ed., §6-9 (from memory): A95 = 0.0766 d² (rotating round), 0.01046 d² (nonrotating
    round), 0.05 h b (rectangle in bending); equal areas give de = 0.370 d and de = 0.808 √(h b)."""
    assert equivalent_diameter("round-rotating", diameter=20.0) == 20.0
    # the published coefficients are these area ratios rounded to three digits
    assert math.sqrt(0.01046 / 0.0766) == pytest.approx(0.370, abs=0.0006)
    assert math.sqrt(0.05 / 0.0766) == pytest.approx(0.808, abs=0.0005)
    assert equivalent_diameter("round-nonrotating", diameter=1.0) == pytest.approx(0.370, rel=1e-14)
    assert equivalent_diameter("rectangle", height=40.0, width=10.0) == pytest.approx(0.808 * 20.0, rel=1e-14)


def test_load_and_reliability_factors():
    """kc: Shigley 9th ed., Eq. (6-26) (from memory).  ke: Table 6-5 (from memory): 0.5 -> 1.000,
    0.9 -> 0.897, 0.99 -> 0.814, 0.999 -> 0.753, 0.9999 -> 0.702 (ke = 1 - 0.08 z_a)."""
    assert (load_factor("bending"), load_factor("axial"), load_factor("torsion")) == (1.0, 0.85, 0.59)
    assert reliability_factor(0.5) == 1.0
    for r, ke in ((0.9, 0.897), (0.99, 0.814), (0.999, 0.753), (0.9999, 0.702)):
        assert reliability_factor(r) == pytest.approx(ke, abs=0.0006)


def test_marin_equation_is_the_product():
    """Se = ka kb kc kd ke kf S'e (Marin equation, Shigley 9th ed., Eq. (6-18), from memory)."""
    e = endurance_limit(690.0, "ground", "bending", diameter=32.0, reliability=0.99, temperature_factor=0.9,
                        misc_factor=0.95)
    expect = surface_factor(690.0, "ground") * size_factor(32.0) * 1.0 * 0.9 * reliability_factor(0.99) * 0.95 * 345
    assert isinstance(e, EnduranceLimit) and e.value == pytest.approx(expect, rel=1e-12)
    rows = e.rows()
    assert [r[0] for r in rows] == ["S'e (MPa)", "ka", "kb", "kc", "kd", "ke", "kf", "Se (MPa)"]
    assert all(r[2] for r in rows)                      # every factor names its source
    assert endurance_limit(690.0, "machined", "axial").kb == 1.0


# ---------------------------------------------------------------------------
# Mean-stress criteria
# ---------------------------------------------------------------------------
def test_shigley_example_6_12_gerber_and_asme_elliptic():
    """Shigley 9th ed., Example 6-12 (from memory): 1.5 in bar machined from cold-drawn AISI 1050,
    Sut = 100 kpsi, Sy = 84 kpsi, axial load 0 to 16 kip, Kf = 1.85.  ka = 0.797, kb = 1, kc = 0.85,
    Se = 33.9 kpsi; σa = σm = 8.38 kpsi; Gerber n_f = 3.66, ASME elliptic n_f = 3.75; Langer n_y = 5.01.
    The criteria are unit-free, so they are evaluated in kpsi; ka is checked in MPa."""
    sut, sy = 100.0, 84.0
    ka = surface_factor(sut * KPSI, "machined")
    assert ka == pytest.approx(0.797, abs=0.005)          # the MPa and kpsi tables agree to rounding
    se = 0.797 * 1.0 * 0.85 * 0.5 * sut
    assert se == pytest.approx(33.9, abs=0.05)
    area = math.pi * 1.5 ** 2 / 4
    s = 1.85 * 8.0 / area
    assert s == pytest.approx(8.38, abs=0.005)
    assert fatigue_safety_factor(s, s, se, sut, criterion="gerber") == pytest.approx(3.66, abs=0.01)
    assert fatigue_safety_factor(s, s, se, sut, sy, criterion="asme-elliptic") == pytest.approx(3.75, abs=0.01)
    assert langer_safety_factor(s, s, sy) == pytest.approx(5.01, abs=0.01)


@pytest.mark.parametrize("criterion", CRITERIA)
def test_point_on_the_criterion_line_has_n_one(criterion):
    """Closed form: at (σm, Sa(σm)) of the criterion's own line, n = 1; scaling the stresses by 1/c
    gives n = c for the linear criteria and the elliptic one (homogeneous of degree -1)."""
    se, sut, sy = 200.0, 600.0, 450.0
    for sm in (10.0, 100.0, 300.0):
        sa = criterion_amplitude(sm, se, sut, sy, criterion)
        assert fatigue_safety_factor(sa, sm, se, sut, sy, criterion) == pytest.approx(1.0, rel=1e-12)
        assert fatigue_safety_factor(sa / 2.5, sm / 2.5, se, sut, sy, criterion) == pytest.approx(2.5, rel=1e-12)


def test_gerber_quadratic_by_hand():
    """Gerber n σa/Se + (n σm/Sut)² = 1 with σa = 100, σm = 200, Se = 250, Sut = 500:
    0.4 n + 0.16 n² = 1, n = (-0.4 + √(0.16 + 0.64)) / 0.32 = (√0.8 - 0.4) / 0.32 = 1.54508."""
    n = fatigue_safety_factor(100.0, 200.0, 250.0, 500.0, criterion="gerber")
    assert n == pytest.approx((math.sqrt(0.8) - 0.4) / 0.32, rel=1e-12)
    assert n == pytest.approx(1.54508, abs=1e-5)


def test_goodman_and_soderberg_by_hand():
    """1/n = 100/250 + 200/500 = 0.8 (Goodman); 1/n = 100/250 + 200/400 = 0.9 (Soderberg)."""
    assert fatigue_safety_factor(100.0, 200.0, 250.0, 500.0, criterion="goodman") == pytest.approx(1.25, rel=1e-14)
    assert fatigue_safety_factor(100.0, 200.0, 250.0, 500.0, 400.0, "soderberg") == pytest.approx(1 / 0.9, rel=1e-14)
    # ASME elliptic: 1/n² = 0.16 + 0.25 = 0.41
    assert fatigue_safety_factor(100.0, 200.0, 250.0, 500.0, 400.0, "asme-elliptic") == pytest.approx(
        1 / math.sqrt(0.41), rel=1e-14)


@pytest.mark.parametrize("criterion", CRITERIA)
def test_zero_and_compressive_mean_give_se_over_sa(criterion):
    """σm = 0: n = Se/σa for every criterion (closed form).  σm < 0: no benefit (common practice)."""
    for sm in (0.0, -50.0, -400.0):
        assert fatigue_safety_factor(80.0, sm, 240.0, 600.0, 400.0, criterion) == pytest.approx(3.0, rel=1e-14)
    # Gerber's root is continuous as σm -> 0 (written without cancellation)
    assert fatigue_safety_factor(80.0, 1e-9, 240.0, 600.0, criterion="gerber") == pytest.approx(3.0, rel=1e-9)


def test_ordering_of_the_criteria():
    """For σm > 0, Gerber and ASME elliptic are less conservative than Goodman, Soderberg more
    (common practice; Shigley 9th ed., Fig. 6-27, from memory).  ASME elliptic with Sy vs Gerber with
    Sut has no fixed order, so only the Goodman comparisons are asserted."""
    se, sut, sy = 200.0, 600.0, 450.0
    for r in (0.1, 0.5, 1.0, 3.0):
        sa, sm = 60.0, 60.0 * r
        n = {c: fatigue_safety_factor(sa, sm, se, sut, sy, c) for c in CRITERIA}
        assert n["soderberg"] < n["goodman"] < n["gerber"]
        assert n["goodman"] < n["asme-elliptic"]


def test_criterion_amplitude_lines():
    """Intercepts (closed form): Se at σm = 0; zero at Sut (Goodman, Gerber) or Sy (elliptic, Soderberg);
    flat at Se for a compressive mean; array in, array out."""
    se, sut, sy = 200.0, 600.0, 450.0
    m = np.array([-100.0, 0.0, 300.0, sy, sut])
    g = criterion_amplitude(m, se, sut, sy, "goodman")
    np.testing.assert_allclose(g, [se, se, 100.0, 50.0, 0.0], rtol=1e-14)
    np.testing.assert_allclose(criterion_amplitude(m, se, sut, sy, "gerber"), [se, se, 150.0, se * (1 - 0.5625), 0.0])
    np.testing.assert_allclose(criterion_amplitude(m, se, sut, sy, "asme-elliptic"),
                               [se, se, se * math.sqrt(1 - (300 / 450) ** 2), 0.0, 0.0], atol=1e-12)
    np.testing.assert_allclose(criterion_amplitude(m, se, sut, sy, "soderberg"), [se, se, se / 3, 0.0, 0.0],
                               atol=1e-12)


# ---------------------------------------------------------------------------
# Checks
# ---------------------------------------------------------------------------
def test_endurance_check_result_and_working():
    """utilization = n_req / n_f; Kf on amplitude and mean; the working shows the steps; caution kept."""
    e = endurance_limit(510.0, "machined", "axial", reliability=0.99)
    r = endurance_check(50.0, 50.0, e, 510.0, 355.0, "goodman", notch_factor=1.8, safety_factor=1.5)
    nf = 1.0 / (90.0 / e.value + 90.0 / 510.0)
    assert r.value == pytest.approx(90.0) and r.utilization == pytest.approx(1.5 / nf, rel=1e-12)
    assert r.inputs["fatigue_safety_factor"] == pytest.approx(nf, rel=1e-12)
    assert r.cautions == CAUTION
    lines = r.working_lines()
    assert any(line.startswith("local amplitude") for line in lines)
    assert any(line.startswith("endurance limit: Se = ka kb kc kd ke kf S'e") for line in lines)
    assert any("Langer" in n for n in r.notes) and any("f(R) = 1" in n for n in r.notes)
    assert r.to_dict()["status"] in ("PASS", "FAIL")
    # a plain number for Se works too, and the status follows n_f
    assert endurance_check(10.0, 0.0, 100.0, 500.0).status == "PASS"
    assert endurance_check(110.0, 0.0, 100.0, 500.0).status == "FAIL"
    neg = endurance_check(50.0, -80.0, 100.0, 500.0, 300.0, "asme-elliptic")
    assert neg.utilization == pytest.approx(0.5) and any("compressive" in n for n in neg.notes)


def test_first_cycle_yield_check():
    """Langer: σa + |σm| against Sy (closed form)."""
    r = first_cycle_yield_check(50.0, 50.0, 355.0, notch_factor=1.8)
    assert r.value == pytest.approx(180.0) and r.limit == 355.0
    assert first_cycle_yield_check(50.0, -100.0, 300.0).value == pytest.approx(150.0)


@pytest.mark.parametrize("call, match", [
    (lambda: endurance_limit_estimate(-1.0), "tensile_strength"),
    (lambda: surface_factor(500.0, "polished"), "finish must be one of"),
    (lambda: size_factor(1.0, "bending"), "2.79..254"),
    (lambda: size_factor(None, "bending"), "diameter"),
    (lambda: load_factor("shear"), "load must be one of"),
    (lambda: reliability_factor(1.0), r"reliability must lie in \[0.5, 1\)"),
    (lambda: endurance_limit(500.0, "machined", "axial", temperature_factor=0.0), "temperature_factor"),
    (lambda: equivalent_diameter("rectangle", height=10.0), "width"),
    (lambda: fatigue_safety_factor(10.0, 5.0, 100.0, 500.0, criterion="morrow"), "criterion must be one of"),
    (lambda: fatigue_safety_factor(10.0, 5.0, 100.0, 500.0, criterion="asme-elliptic"), "yield_strength is needed"),
    (lambda: fatigue_safety_factor(10.0, 5.0, 100.0, 500.0, 600.0, "soderberg"), "exceeds tensile_strength"),
    (lambda: fatigue_safety_factor(0.0, 5.0, 100.0, 500.0), "amplitude"),
    (lambda: fatigue_safety_factor(10.0, float("nan"), 100.0, 500.0), "mean_stress"),
    (lambda: endurance_check(10.0, 5.0, 100.0, 500.0, notch_factor=0.8), "notch_factor must be >= 1"),
    (lambda: endurance_check(0.0, 5.0, 100.0, 500.0), "amplitude must be > 0"),
    (lambda: endurance_check(10.0, 5.0, 100.0, 500.0, safety_factor=0.5), "safety_factor must be >= 1"),
])
def test_input_errors_name_the_parameter(call, match):
    with pytest.raises(InputError, match=match):
        call()


def test_mean_stress_diagram_draws_the_criterion_and_the_point():
    """The figure's data: the criterion line is criterion_amplitude, the load line ends on it at
    n_f (σm, σa), the working point is (σm, σa), axes carry units."""
    se, sut, sy, sa, sm = 150.0, 510.0, 355.0, 90.0, 90.0
    ax = plot_mean_stress_diagram(sa, sm, se, sut, sy, "gerber", safety_factor=1.5)
    lines = {ln.get_label(): ln for ln in ax.get_lines()}
    x, y = lines["gerber / 1.5 (required n_f)"].get_data()
    for xi, yi in zip(x[::40], y[::40]):                # on the line of n_f = 1.5 where the amplitude is > 0
        if yi > 0 and xi > 0:
            assert fatigue_safety_factor(yi, xi, se, sut, sy, "gerber") == pytest.approx(1.5, rel=1e-9)
    crit = lines["gerber (n = 1)"]
    x, y = crit.get_data()
    np.testing.assert_allclose(y, criterion_amplitude(x, se, sut, sy, "gerber"))
    load = lines["load line"].get_data()
    end = (load[0][-1], load[1][-1])
    assert end[1] == pytest.approx(criterion_amplitude(end[0], se, sut, sy, "gerber"), rel=1e-12)
    point = [ln for k, ln in lines.items() if k.startswith("working point")][0]
    assert (point.get_xdata()[0], point.get_ydata()[0]) == (sm, sa)
    assert "(MPa)" in ax.get_xlabel() and "(MPa)" in ax.get_ylabel()
    plt.close("all")
