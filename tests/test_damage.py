"""Damage of counted cycles, equivalent range, multiaxial comparison value.

Sources: IIW recommendations (A. Hobbacher (ed.), Recommendations for Fatigue
Design of Welded Joints and Components, IIW document XIII-2460-13, 2nd edition
2016): N = 2e6 (FAT/Δσ)^3 down to the knee at 1e7 cycles, beyond it no damage
(constant amplitude) or slope m2 (variable amplitude, m2 from the data file,
listed there as from memory); Palmgren-Miner D = Σ n/N; the equivalent range
of a single slope (Σ n Δσ^m / 2e6)^(1/m).  The interaction rule (Δσ/Δσ_R)² +
(Δτ/Δτ_R)² <= CV with CV 1.0 / 0.5 is from memory (IIW 2016 §5.3.2, not
confirmed here): tested as the formula it states.  Expected numbers are worked
out by hand from these formulas.  Cycle counts by ASTM E1049-85 §5.4.4.
"""
import json
import math

import numpy as np
import pytest

import toolkit
from toolkit.assess.checks import CAUTION, SNCurve, load_sn_data, sn_curve
from toolkit.assess.damage import CycleDamage, cycle_damage, equivalent_range
from toolkit.assess.multiaxial import COMPARISON_VALUES, multiaxial_check
from toolkit.assess.counting import RangeHistogram, rainflow
from toolkit.errors import InputError

FAT90_KNEE = 90.0 * (2e6 / 1e7) ** (1 / 3)          # 52.63 MPa


def blocks(*pairs):
    """A history of blocks (range from 0, cycles): [0, r] repeated, ending at 0."""
    x = []
    for r, n in pairs:
        x += [0.0, r] * n
    return rainflow(x + [0.0])


def test_single_block_is_the_constant_amplitude_life():
    c = blocks((100.0, 500))                        # 500 cycles of 100 MPa (all half cycles in pairs)
    assert c.total == 500.0
    d = cycle_damage(c, sn_curve(90, amplitude="variable"))
    life = 2e6 * (90.0 / 100.0) ** 3                # 1.458e6 cycles
    assert d.damage == pytest.approx(500.0 / life, rel=1e-12)
    assert d.repeats == pytest.approx(life / 500.0, rel=1e-12)
    assert d.cycles == 500.0 and isinstance(d, CycleDamage)
    # with partial factors and thickness correction: N = 2e6 (FAT f(t) / γM / (γF Δσ))^3
    d2 = cycle_damage(c, sn_curve(90, amplitude="variable"), gamma_F=1.1, gamma_M=1.25, thickness_factor=0.9)
    life2 = 2e6 * (90.0 * 0.9 / 1.25 / (1.1 * 100.0)) ** 3
    assert d2.damage == pytest.approx(500.0 / life2, rel=1e-12) and d2.design_fat == pytest.approx(64.8)


def test_two_blocks_by_hand():
    c = blocks((120.0, 10), (60.0, 20))
    per_range = {}
    for r, n in zip(c.ranges.tolist(), c.counts.tolist()):
        per_range[r] = per_range.get(r, 0.0) + n
    assert per_range == {120.0: 10.0, 60.0: 20.0}
    # FAT 90: N(120) = 2e6 (0.75)^3 = 843 750; N(60) = 2e6 (1.5)^3 = 6.75e6 (60 > knee 52.6)
    expected = 10 / 843750.0 + 20 / 6.75e6
    d = cycle_damage(c, sn_curve(90, amplitude="variable"), bins=[0, 50, 100, 150])
    assert d.damage == pytest.approx(expected, rel=1e-12)
    np.testing.assert_allclose(d.bin_counts, [0.0, 20.0, 10.0])
    np.testing.assert_allclose(d.bin_damage, [0.0, 20 / 6.75e6, 10 / 843750.0], rtol=1e-12)
    assert d.largest == 2 and sum(r[4] for r in d.rows()) == pytest.approx(1.0)
    # the same from a histogram at its bins' upper edges
    h = RangeHistogram(edges=np.array([0.0, 60.0, 120.0]), counts=np.array([20.0, 10.0]))
    assert cycle_damage(h, sn_curve(90, amplitude="variable")).damage == pytest.approx(expected, rel=1e-12)
    # a histogram is counted at the upper edge: conservative against the exact ranges
    coarse = cycle_damage(c.histogram([0, 70, 140]), sn_curve(90, amplitude="variable"))
    assert coarse.damage > d.damage and "upper edge" in " ".join(coarse.notes)


def test_below_the_knee_second_slope_and_fatigue_limit():
    c = blocks((45.0, 1000))                        # 45 MPa < knee 52.63 MPa of FAT 90
    m2 = load_sn_data()["families"]["normal"]["m2"]["variable"]
    va = cycle_damage(c, sn_curve(90, amplitude="variable"))
    assert va.damage == pytest.approx(1000.0 / (1e7 * (FAT90_KNEE / 45.0) ** m2), rel=1e-10)
    # constant amplitude curve: no damage below the knee-point stress (the fatigue limit), life unlimited
    ca = cycle_damage(c, sn_curve(90, amplitude="constant"))
    assert ca.damage == 0.0 and ca.repeats == math.inf and ca.largest is None
    assert ca.equivalent_range is None and "zero damage" in " ".join(ca.notes)
    old = cycle_damage(c, sn_curve(90, amplitude="variable-haibach"))   # slope 5 beyond the knee
    assert old.damage == pytest.approx(1000.0 / (1e7 * (FAT90_KNEE / 45.0) ** 5), rel=1e-10)


def test_equivalent_range_single_slope_and_on_the_curve():
    # single slope closed form: (Σ n Δσ^m / 2e6)^(1/m)
    c = blocks((120.0, 10), (60.0, 20))
    assert equivalent_range(c, m=3.0) == pytest.approx(((10 * 120.0**3 + 20 * 60.0**3) / 2e6) ** (1 / 3))
    assert equivalent_range(c, m=5.0, n_ref=1e6) == pytest.approx(((10 * 120.0**5 + 20 * 60.0**5) / 1e6) ** 0.2)
    # on the two-slope curve, where 2e6/D stays above the knee it is the same closed form
    h = RangeHistogram(edges=np.array([0.0, 100.0]), counts=np.array([1e6]))
    d = cycle_damage(h, sn_curve(90, amplitude="variable"))
    assert d.damage == pytest.approx(1e6 / 1.458e6)
    assert d.equivalent_range == pytest.approx(equivalent_range(h, m=3.0)) == pytest.approx(100 * 0.5 ** (1 / 3))
    # with factors the equivalent range stays on the actions' side: γF Δσ_eq = FAT_d D^(1/3)
    f = cycle_damage(h, sn_curve(90, amplitude="variable"), gamma_F=1.2, gamma_M=1.1, thickness_factor=0.9)
    assert 1.2 * f.equivalent_range == pytest.approx(90 * 0.9 / 1.1 * f.damage ** (1 / 3))
    # small damage: 2e6 cycles of Δσ_eq below the knee, second slope: 1e7 (Δσ_k/Δσ_eq)^m2 = 2e6 / D
    m2 = load_sn_data()["families"]["normal"]["m2"]["variable"]
    small = cycle_damage(blocks((100.0, 500)), sn_curve(90, amplitude="variable"))
    assert small.equivalent_range == pytest.approx(FAT90_KNEE * (1e7 * small.damage / 2e6) ** (1 / m2))
    # the constant-amplitude curve has no slope beyond the knee: no equivalent range for D < 0.2
    none = cycle_damage(blocks((100.0, 500)), sn_curve(90, amplitude="constant"))
    assert none.damage > 0 and none.equivalent_range is None and "no equivalent range" in " ".join(none.notes)


def test_table_records_and_check():
    d = cycle_damage(blocks((120.0, 10), (60.0, 20)), sn_curve(90, amplitude="variable"), bins=4)
    assert d.edges.tolist() == [0.0, 30.0, 60.0, 90.0, 120.0] and d.bin_damage.sum() == pytest.approx(d.damage)
    assert d.largest == 3 and "largest contributor: bin 3" in repr(d) and "<table>" in d._repr_html_()
    rec = d.to_dict()
    json.dumps(rec)
    assert rec["largest_bin"] == 3 and len(rec["bins"]) == 4 and rec["repeats"] == pytest.approx(1 / d.damage)
    chk = d.check(repeats=2000, damage_limit=0.5)
    assert chk.value == pytest.approx(2000 * d.damage) and chk.limit == 0.5 and chk.cautions == CAUTION
    assert chk.status == ("PASS" if 2000 * d.damage <= 0.5 else "FAIL")
    assert any("Palmgren" in w for w in chk.working_lines()) and "caution" in repr(chk)
    json.dumps(chk.to_dict())
    assert json.loads(json.dumps(cycle_damage(blocks((40.0, 2)), sn_curve(90)).to_dict()))["repeats"] == "inf"


def test_damage_bad_input():
    c = blocks((100.0, 5))
    curve = sn_curve(90, amplitude="variable")
    with pytest.raises(InputError, match="Cycles"):
        cycle_damage([100.0, 50.0], curve)
    with pytest.raises(InputError, match="gamma_M"):
        cycle_damage(c, curve, gamma_M=0)
    with pytest.raises(InputError, match="bins applies to Cycles only"):
        cycle_damage(c.histogram(4), curve, bins=4)
    with pytest.raises(InputError, match="m must"):
        equivalent_range(c, m=-3)
    with pytest.raises(InputError, match="repeats"):
        cycle_damage(c, curve).check(repeats=float("nan"))
    # a user-defined curve as a dict, and a constant history (no cycles, no damage)
    assert cycle_damage(c, {"fat": 90, "m2": 22}).damage == pytest.approx(cycle_damage(c, curve).damage)
    empty = cycle_damage(rainflow([3.0, 3.0]), curve)
    assert empty.damage == 0.0 and empty.equivalent_range == 0.0 and empty.bin_damage.size == 0


def test_multiaxial_comparison_value():
    # (60/100)^2 + (30/80)^2 = 0.36 + 0.140625 = 0.500625
    r = multiaxial_check(60.0, 30.0, 100.0, 80.0)
    assert r.value == pytest.approx(0.500625) and r.limit == 1.0 and r.status == "PASS"
    assert r.cautions == CAUTION and "from memory" in " ".join(r.working_lines())
    n = multiaxial_check(60.0, 30.0, 100.0, 80.0, loading="non-proportional")
    assert n.limit == 0.5 and n.status == "FAIL" and n.utilization == pytest.approx(1.00125)
    assert COMPARISON_VALUES == {"proportional": 1.0, "non-proportional": 0.5}
    # partial factors: (γF Δσ γM / Δσ_R)^2 + ...
    g = multiaxial_check(60.0, 30.0, 100.0, 80.0, gamma_F=1.1, gamma_M=1.2)
    assert g.value == pytest.approx((1.32 * 0.6) ** 2 + (1.32 * 0.375) ** 2)
    # resistances read from the curves: FAT 90 normal and FAT 80 shear at 2e6 cycles are 90 and 80 MPa;
    # at 1e6 cycles 90 * 2^(1/3) and 80 * 2^(1/5)
    c = multiaxial_check(45.0, 40.0, sn_curve(90), sn_curve(80, stress="shear"), cycles=2e6)
    assert c.value == pytest.approx(0.25 + 0.25)
    c1 = multiaxial_check(45.0, 40.0, sn_curve(90), sn_curve(80, stress="shear"), cycles=1e6)
    assert c1.value == pytest.approx((45 / (90 * 2 ** (1 / 3))) ** 2 + (40 / (80 * 2 ** 0.2)) ** 2)
    own = multiaxial_check(60.0, 30.0, 100.0, 80.0, comparison_value=0.8)
    assert own.limit == 0.8 and toolkit.multiaxial_check is multiaxial_check
    json.dumps(own.to_dict())


@pytest.mark.parametrize("kw, what", [
    ({"normal_range": -10.0}, "magnitude"), ({"shear_resistance": 0.0}, "shear_resistance"),
    ({"loading": "random"}, "loading"), ({"normal_resistance": sn_curve(80, stress="shear"), "cycles": 1e6},
                                         "normal-stress curve"),
    ({"normal_resistance": sn_curve(90)}, "cycles="), ({"cycles": 1e6}, "only to read S-N curves"),
    ({"gamma_F": float("inf")}, "gamma_F")])
def test_multiaxial_bad_input(kw, what):
    args = {"normal_range": 60.0, "shear_range": 30.0, "normal_resistance": 100.0, "shear_resistance": 80.0}
    args.update(kw)
    with pytest.raises(InputError, match=what):
        multiaxial_check(**args)


def test_sn_curve_objects_are_reused_not_copied():
    """The damage module reads the curves of toolkit.assess.checks (one S-N implementation)."""
    d = cycle_damage(blocks((100.0, 5)), sn_curve(90, amplitude="variable"))
    assert isinstance(d.curve, SNCurve) and d.curve == sn_curve(90, amplitude="variable")
