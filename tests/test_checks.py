"""S-N curves, thickness correction, Palmgren-Miner and check objects.

Source: IIW recommendations (A. Hobbacher (ed.), Recommendations for Fatigue Design of
Welded Joints and Components, IIW document XIII-2460-13, 2nd edition 2016):
N = 2e6 (FAT/ds)^m, m = 3 and knee at 1e7 cycles for normal stress, m = 5 and knee at
1e8 for shear, m2 = 22 beyond the knee for variable amplitude; f(t) = (25/t_eff)^n.
Expected numbers below are worked out by hand from these formulas.  The values
data/SOURCES.md lists as from memory (m2 = 22, the thickness exponents, D = 0.5) are
checked by behaviour and against the data file, not restated.
"""
import json
import math

import numpy as np
import pytest

from toolkit.assess.checks import (CAUTION, CheckResult, SNCurve, fatigue_check, load_sn_data, miner_damage, sn_curve,
                            static_check, thickness_factor)


def test_data_file_names_source_and_classes():
    d = load_sn_data()
    assert "Hobbacher" in d["source"] and d["edition"] == "2016"
    normal = d["families"]["normal"]
    # the steel FAT classes 36 ... 160 of the IIW detail tables (IIW 2016)
    assert normal["fat"] == [160, 140, 125, 112, 100, 90, 80, 71, 63, 56, 50, 45, 40, 36]
    assert normal["m1"] == 3 and normal["knee_cycles"] == 1e7 and normal["m2"]["variable"] == 22
    assert d["families"]["shear"]["m1"] == 5 and d["families"]["shear"]["knee_cycles"] == 1e8


@pytest.mark.parametrize("fat", [90.0, 36.0])
def test_life_at_and_around_the_knee(fat):
    ca = sn_curve(fat, amplitude="constant")
    va = sn_curve(fat, amplitude="variable")
    old = sn_curve(fat, amplitude="variable-haibach")
    sk = fat * (2e6 / 1e7) ** (1 / 3)  # knee stress (IIW: N = 2e6 (FAT/ds)^3 = 1e7)
    assert np.isclose(ca.knee_stress, sk)
    assert np.isclose(ca.life(fat), 2e6)
    assert np.isclose(ca.life(sk), 1e7)
    assert np.isclose(ca.life(1.1 * sk), 1e7 / 1.1**3)
    assert ca.life(0.99 * sk) == math.inf  # constant amplitude: no damage below the knee stress
    # beyond the knee (m2 = 22 for IIW 2016, from memory: see data/SOURCES.md), checked by behaviour and
    # against the data file rather than by restating the number: the variable-amplitude branch is
    # continuous at the knee, finite below it, and flatter than the older m2 = 2 m1 - 1 = 5 branch
    m2 = load_sn_data()["families"]["normal"]["m2"]["variable"]
    assert np.isclose(va.life(0.9 * sk), 1e7 * (1 / 0.9) ** m2)
    assert np.isclose(va.life(sk * (1 - 1e-9)), 1e7, rtol=1e-6) and math.isfinite(va.life(0.5 * sk))
    assert va.life(0.9 * sk) > old.life(0.9 * sk) > 1e7 / 0.9**3
    assert np.isclose(old.life(0.9 * sk), 1e7 * (1 / 0.9) ** 5)  # Haibach's m2 = 2 m1 - 1 = 5
    assert np.isclose(va.life(1.1 * sk), ca.life(1.1 * sk))  # identical above the knee
    assert np.isclose(va.strength(va.life(0.8 * sk)), 0.8 * sk)
    assert np.isclose(ca.strength(1e9), sk)


def test_hand_values():
    # FAT 90 at 100 MPa: 2e6 * 0.9^3 = 1.458e6; FAT 36 at 50 MPa: 2e6 * 0.72^3 = 746 496
    assert np.isclose(sn_curve(90).life(100.0), 1.458e6)
    assert np.isclose(sn_curve(36).life(50.0), 746496.0)
    # FAT 90 knee stress 52.63 MPa (90 * 0.2^(1/3))
    assert np.isclose(sn_curve(90).knee_stress, 52.632, atol=1e-3)


def test_shear_curve():
    c = sn_curve(100, stress="shear", amplitude="variable")
    assert np.isclose(c.life(100.0), 2e6)
    assert np.isclose(c.life(80.0), 2e6 * 1.25**5)  # m = 5
    sk = 100 * (2e6 / 1e8) ** 0.2  # knee at 1e8 cycles
    assert np.isclose(c.knee_stress, sk) and np.isclose(c.life(sk), 1e8)
    # the shear m2 (22 in the data file) is from memory (data/SOURCES.md): behaviour only --
    # continuous at the knee, finite below it, flatter than the m1 = 5 line, and the file's value used
    m2 = load_sn_data()["families"]["shear"]["m2"]["variable"]
    assert np.isclose(c.life(sk * (1 - 1e-9)), 1e8, rtol=1e-6)
    assert math.isfinite(c.life(0.5 * sk)) and c.life(0.5 * sk) > 1e8 * 2.0**5
    assert np.isclose(c.life(0.5 * sk), 1e8 * 2.0**m2)


def test_user_curve_and_bad_curves():
    c = SNCurve.from_dict({"name": "detail A", "fat": 71, "m1": 3, "knee_cycles": 1e7, "m2": 22})
    assert np.isclose(c.life(71.0), 2e6)
    with pytest.raises(ValueError, match="unknown key"):
        SNCurve.from_dict({"fat": 71, "slope": 3})
    with pytest.raises(ValueError, match="needs 'fat'"):
        SNCurve.from_dict({"m1": 3})
    with pytest.raises(ValueError, match="not a normal-stress class"):
        sn_curve(85)
    with pytest.raises(ValueError, match="amplitude must be"):
        sn_curve(90, amplitude="random")
    with pytest.raises(ValueError, match="m1 must be"):
        SNCurve("bad", fat=90, m1=-3)
    with pytest.raises(ValueError, match="stress ranges must be"):
        sn_curve(90).life(-5.0)


def test_thickness_correction():
    # IIW: f(t) = (25/t)^n for t > 25 mm.  The exponents per joint category are from memory (see
    # data/SOURCES.md), so the categories are checked by behaviour: each uses the law with its own
    # table exponent, the factor falls with t and is 1 up to 25 mm, and the categories are ordered by
    # severity (as-welded cruciform/T-joints the strongest reduction, ground-flush butt welds the least;
    # grinding the toe never increases the reduction).
    from toolkit.assess.checks import THICKNESS_EXPONENTS
    for joint, (n, _) in THICKNESS_EXPONENTS.items():
        assert 0 < n < 1
        assert np.isclose(thickness_factor(50, joint=joint), 0.5**n)
        f = [thickness_factor(t, joint=joint) for t in (10, 25, 30, 50, 100)]
        assert f[:2] == [1.0, 1.0] and np.all(np.diff(f[1:]) < 0)
    f = {j: thickness_factor(50, joint=j) for j in THICKNESS_EXPONENTS}
    assert f["cruciform-as-welded"] < f["cruciform-toe-ground"] < f["butt-ground-flush"]
    assert f["cruciform-as-welded"] <= f["butt-as-welded"] < f["butt-ground-flush"]
    assert thickness_factor(25, n=0.3) == 1.0
    # toe distance L with L/t <= 2: t_eff = 0.5 L
    assert np.isclose(thickness_factor(60, n=0.3, toe_distance=80), (25 / 40) ** 0.3)
    assert thickness_factor(60, n=0.3, toe_distance=40) == 1.0  # t_eff = 20 <= 25
    assert np.isclose(thickness_factor(60, n=0.3, toe_distance=150), (25 / 60) ** 0.3)  # L/t > 2
    with pytest.raises(ValueError, match="exactly one"):
        thickness_factor(50)
    with pytest.raises(ValueError, match="unknown joint"):
        thickness_factor(50, joint="lap")


def test_miner_sum_by_hand():
    # FAT 80, variable amplitude (m2 = 22), gammaM = gammaF = 1.
    ranges = [120.0, 80.0, 40.0]
    cycles = [2e5, 1e6, 5e7]
    sk = 80 * 0.2 ** (1 / 3)
    N = [2e6 * (80 / 120) ** 3, 2e6, 1e7 * (sk / 40) ** 22]  # IIW formulas
    D_hand = sum(n / Ni for n, Ni in zip(cycles, N))
    assert np.isclose(D_hand, 0.3375 + 0.5 + 5e7 / (1e7 * (sk / 40) ** 22))
    D, per = miner_damage(ranges, cycles, sn_curve(80, amplitude="variable"))
    assert np.isclose(D, D_hand) and np.allclose(per["life"], N)
    # constant-amplitude curve: the row below the knee does no damage
    D_ca, _ = miner_damage(ranges, cycles, sn_curve(80, amplitude="constant"))
    assert np.isclose(D_ca, 0.8375)


def test_partial_factors_and_thickness_in_miner():
    c = sn_curve(71, amplitude="variable")
    ranges, cycles = np.array([90.0, 50.0, 30.0]), np.array([1e5, 2e6, 4e7])
    D1, _ = miner_damage(ranges, cycles, c, gamma_F=1.2, gamma_M=1.1, thickness_factor=0.9)
    D2, _ = miner_damage(ranges * 1.2 * 1.1 / 0.9, cycles, c)  # Δσ_d = γF Δσ vs FAT f(t)/γM
    assert np.isclose(D1, D2)
    r = fatigue_check(ranges, cycles, c, gamma_F=1.2, gamma_M=1.1, thickness_factor=0.9, damage_limit=0.5)
    assert np.isclose(r.value, D1) and np.isclose(r.utilization, D1 / 0.5)
    assert r.status == ("PASS" if D1 <= 0.5 else "FAIL")


def test_fatigue_check_pass_fail_and_errors():
    c = sn_curve(90, amplitude="constant")
    ok = fatigue_check([100.0], [5e5], c, damage_limit=1.0)  # D = 5e5/1.458e6
    assert ok.status == "PASS" and np.isclose(ok.value, 5e5 / 1.458e6)
    bad = fatigue_check([100.0], [2e6], c, damage_limit=1.0)
    assert bad.status == "FAIL" and bad.utilization > 1
    low = fatigue_check([40.0], [1e9], c)
    assert low.value == 0.0 and any("zero damage" in n for n in low.notes)
    with pytest.raises(ValueError, match="SNCurve"):
        fatigue_check([100.0], [1e5], 90)
    with pytest.raises(ValueError, match="histogram row 1"):
        fatigue_check([100.0, -1.0], [1e5, 1e5], c)
    with pytest.raises(ValueError, match="equal length"):
        fatigue_check([100.0, 50.0], [1e5], c)


def test_static_check():
    # pure shear 100 MPa: von Mises 173.2 vs 355/1.5
    r = static_check([0.0, 0.0, 100.0], 355.0, 1.5, components=("sxx", "syy", "sxy"))
    assert np.isclose(r.value, np.sqrt(3) * 100.0) and np.isclose(r.limit, 355.0 / 1.5)
    assert r.status == "PASS"
    p = static_check([0.0, 0.0, 100.0], 355.0, 1.5, criterion="max principal", components=("sxx", "syy", "sxy"))
    assert np.isclose(p.value, 100.0)
    f = static_check(np.array([120.0, 260.0, 90.0]), 355.0, 1.5)
    assert f.status == "FAIL" and np.isclose(f.value, 260.0) and f.inputs["points_checked"] == 3
    with pytest.raises(ValueError, match="criterion"):
        static_check(100.0, 355.0, 1.5, criterion="Rankine")
    with pytest.raises(ValueError, match="safety_factor"):
        static_check(100.0, 355.0, 0.0)


def test_check_result_renders_and_serialises():
    r = fatigue_check([100.0, 60.0], [1e5, 1e6], sn_curve(90, amplitude="variable"), gamma_M=1.15)
    text = repr(r)
    assert "utilization" in text and r.status in text and CAUTION in text
    h = r._repr_html_()
    assert h.startswith("<table>") and "<th" in h and r.status in h
    d = json.loads(json.dumps(r.to_dict()))
    assert {"name", "value", "limit", "utilization", "status", "inputs", "unit", "cautions"} <= set(d)
    assert d["cautions"] == CAUTION and d["inputs"]["curve"]["fat"] == 90.0
    s = static_check(100.0, 355.0, 1.5)
    assert json.loads(json.dumps(s.to_dict()))["status"] == "PASS" and s.units == "MPa"
    with pytest.raises(ValueError, match="limit must be positive"):
        CheckResult("x", 1.0, 0.0, "MPa")


# -- static check at a free edge: equilibrium S n = 0 at a traction-free surface (closed form)
def test_surface_states_satisfy_equilibrium_at_a_free_edge():
    from toolkit.assess.checks import surface_states
    from toolkit.core.stress import von_mises
    rng = np.random.default_rng(3)
    S = rng.normal(size=(20, 3)) * 50.0                       # (sxx, syy, sxy) with spurious snn, snt
    a = rng.uniform(0, 2 * np.pi, 20)
    t = np.c_[np.cos(a), np.sin(a)]
    n = np.c_[-t[:, 1], t[:, 0]]
    out = surface_states(S, ("sxx", "syy", "sxy"), t)
    T = np.stack([np.c_[out[:, 0], out[:, 2]], np.c_[out[:, 2], out[:, 1]]], axis=1)
    T0 = np.stack([np.c_[S[:, 0], S[:, 2]], np.c_[S[:, 2], S[:, 1]]], axis=1)
    assert np.allclose(np.einsum("pij,pj->pi", T, n), 0.0, atol=1e-12)         # traction on the edge is zero
    stt = np.einsum("pi,pij,pj->p", t, T0, t)
    assert np.allclose(np.einsum("pi,pij,pj->p", t, T, t), stt)               # tangential stress kept
    assert np.allclose(von_mises(out, ("sxx", "syy", "sxy")), np.abs(stt))    # plane stress: vm = |stt|
    # rows without a tangent are left alone; the hoop stress of an axisymmetric state is kept
    t2 = t.copy()
    t2[0] = np.nan
    assert np.array_equal(surface_states(S, ("sxx", "syy", "sxy"), t2)[0], S[0])
    A = np.c_[S, np.full(20, 30.0)]
    out = surface_states(A, ("srr", "szz", "srz", "shoop"), t)
    assert np.allclose(out[:, 3], 30.0)
    s = np.einsum("pi,pij,pj->p", t, T0, t)
    assert np.allclose(von_mises(out, ("srr", "szz", "srz", "shoop")), np.sqrt(s**2 - 30.0 * s + 900.0))


def test_static_check_uses_the_surface_state_at_free_edges():
    """A state on a free edge whose smoothed field carries a spurious normal stress: the check
    takes the tangential stress alone (equilibrium), interior points keep their full state."""
    from toolkit.assess.checks import free_edge_tangents
    nodes = np.array([[0.0, 0.0], [2.0, 0.0], [1.0, 0.0], [0.0, 1.0]])
    t = free_edge_tangents(nodes, [[0, 1, 2]])
    assert np.allclose(t[:3], [[1.0, 0.0]] * 3) and np.all(np.isnan(t[3]))
    S = np.array([[200.0, 20.0, 0.0], [0.0, 0.0, 0.0], [0.0, 0.0, 0.0], [150.0, 0.0, 0.0]])
    comps = ("sxx", "syy", "sxy")
    r = static_check(S, 355.0, 1.0, components=comps, tangents=t)
    assert r.value == pytest.approx(200.0) and r.inputs["free_edge_points"] == 3
    assert any("equilibrium" in n for n in r.notes)
    plain = static_check(S, 355.0, 1.0, components=comps)
    assert plain.value == pytest.approx(np.sqrt(200.0**2 - 200.0 * 20.0 + 20.0**2))  # spurious syy counted
