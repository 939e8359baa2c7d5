"""Stress ranges from tensors: the range tensor, the principal range and its
direction, the IIW choice at weld toes and the ranges of counted cycles.

Sources: Mohr's circle and the stress transformation equations (Timoshenko &
Goodier, *Theory of Elasticity*, 3rd ed., ch. 1); numpy.linalg.eigvalsh as an
independent eigen-solver for 3D; the IIW rule at weld toes, principal stress
range within ±60° of the normal to the toe line, otherwise the normal
component (IIW recommendations, Hobbacher 2016, XIII-2460-13, section 3.2
from memory; Niemi, Fricke & Maddox, structural hot-spot designer's guide).
"""
import json

import numpy as np
import pytest

import toolkit
from toolkit.assess.ranges import (IIW_ANGLE_LIMIT, IIWRange, PrincipalRange, cycle_tensor_ranges, iiw_range,
                                   principal_range, tensor_range)
from toolkit.core.stress import PLANE, PLANE_ZZ, SOLID, rotate, to_tensor
from toolkit.errors import InputError


@pytest.fixture
def rng():
    return np.random.default_rng(2016)


def _rot_z(beta_deg):
    b = np.radians(beta_deg)
    return np.array([[np.cos(b), np.sin(b), 0.0], [-np.sin(b), np.cos(b), 0.0], [0.0, 0.0, 1.0]])


def _random_rotation(rng):
    q, r = np.linalg.qr(rng.normal(size=(3, 3)))
    q = q * np.sign(np.diag(r))
    return q if np.linalg.det(q) > 0 else -q


def _uniaxial(sigma, theta_deg):
    """Uniaxial range sigma along the direction at theta from x (transformation equations)."""
    c, s = np.cos(np.radians(theta_deg)), np.sin(np.radians(theta_deg))
    return np.array([sigma * c * c, sigma * s * s, sigma * c * s])


# ---------------------------------------------------------------------------
# the range tensor
# ---------------------------------------------------------------------------
def test_tensor_range_keeps_every_component_and_broadcasts():
    a = np.array([[10.0, 0.0, 5.0], [0.0, 0.0, 0.0]])
    b = np.array([40.0, -20.0, 5.0])
    d = tensor_range(a, b, PLANE)
    np.testing.assert_array_equal(d, [[30.0, -20.0, 0.0], [40.0, -20.0, 5.0]])
    np.testing.assert_array_equal(tensor_range(b, a), -d)        # signed tensor: the order flips it
    assert toolkit.tensor_range is tensor_range and toolkit.assess.tensor_range is tensor_range


# ---------------------------------------------------------------------------
# principal range and direction: Mohr's circle closed forms
# ---------------------------------------------------------------------------
def test_uniaxial_and_biaxial_ranges():
    # uniaxial: the range itself along x (Mohr's circle through 0 and 100)
    r = principal_range([100.0, 0.0, 0.0], PLANE)
    assert float(r.range) == pytest.approx(100.0) and float(r.angle) == pytest.approx(0.0)
    # compression governs: |-100| > 40, along y; the range is a magnitude, the value keeps the sign
    r = principal_range([40.0, -100.0, 0.0], PLANE)
    assert float(r.range) == pytest.approx(100.0) and float(r.value) == pytest.approx(-100.0)
    assert float(r.angle) == pytest.approx(90.0)
    np.testing.assert_allclose(r.direction, [0.0, 1.0], atol=1e-12)


def test_general_plane_range_against_mohrs_circle():
    # (60, 20, 15): c = 40, R = sqrt(20^2 + 15^2) = 25, s1 = 65, s2 = 15, 2 theta = atan2(30, 40) (Mohr's circle)
    r = principal_range([60.0, 20.0, 15.0], PLANE)
    assert float(r.range) == pytest.approx(65.0)
    assert float(r.angle) == pytest.approx(0.5 * np.degrees(np.arctan2(30.0, 40.0)))
    assert not bool(r.tie)


def test_pure_shear_range_is_tau_at_45_degrees():
    # pure shear tau: principal values +-tau at +-45 degrees (Mohr's circle centred at 0)
    tau = 37.0
    r = principal_range([0.0, 0.0, tau], PLANE)
    assert float(r.range) == pytest.approx(tau)
    assert abs(float(r.angle)) == pytest.approx(45.0)
    assert bool(r.tie)                                            # both values have magnitude tau
    r3 = principal_range([0.0, 0.0, 0.0, 0.0, 0.0, tau], SOLID)   # sxz shear in 3D: +-tau in the xz-plane
    assert float(r3.range) == pytest.approx(tau) and r3.angle is None
    assert abs(r3.direction[0]) == pytest.approx(np.sqrt(0.5)) and abs(r3.direction[2]) == pytest.approx(np.sqrt(0.5))


def test_swapping_the_states_gives_the_same_range_and_axis(rng):
    a, b = rng.normal(0, 80, (50, 3)), rng.normal(0, 80, (50, 3))
    ab, ba = principal_range(tensor_range(a, b), PLANE), principal_range(tensor_range(b, a), PLANE)
    np.testing.assert_allclose(ab.range, ba.range, rtol=1e-12)
    assert np.all(ab.range >= 0)
    np.testing.assert_allclose(ab.value, -ba.value, rtol=1e-12)
    np.testing.assert_allclose(ab.angle, ba.angle, atol=1e-9)
    np.testing.assert_allclose(ab.direction, ba.direction, atol=1e-12)
    a3, b3 = rng.normal(0, 80, (50, 6)), rng.normal(0, 80, (50, 6))
    p, q = principal_range(tensor_range(a3, b3), SOLID), principal_range(tensor_range(b3, a3), SOLID)
    np.testing.assert_allclose(p.range, q.range, rtol=1e-12)
    np.testing.assert_allclose(np.abs(np.sum(p.direction * q.direction, -1)), 1.0, atol=1e-9)


def test_plane_range_is_rotation_invariant_and_its_direction_rotates(rng):
    d = rng.normal(0, 50, (40, 3))
    beta = 33.0
    R = _rot_z(beta)
    r0, r1 = principal_range(d, PLANE), principal_range(rotate(d, PLANE, R), PLANE)
    np.testing.assert_allclose(r1.range, r0.range, rtol=1e-12)
    # new components in a frame turned by beta: the axis sits beta less from the new x (mod 180)
    diff = (r1.angle - (r0.angle - beta) + 90.0) % 180.0 - 90.0
    np.testing.assert_allclose(diff, 0.0, atol=1e-9)


def test_3d_range_against_numpy_eigvalsh_and_rotation(rng):
    d = rng.normal(0, 60, (30, 6))
    r = principal_range(d, SOLID)
    T = to_tensor(d, SOLID)
    w = np.linalg.eigvalsh(T)                                     # independent eigen-solver
    np.testing.assert_allclose(r.range, np.abs(w).max(-1), rtol=1e-12)
    np.testing.assert_allclose(np.einsum("...ij,...j->...i", T, r.direction), r.value[:, None] * r.direction,
                               atol=1e-9)                         # T d = s d
    np.testing.assert_allclose(np.linalg.norm(r.direction, axis=-1), 1.0, rtol=1e-12)
    Q = _random_rotation(rng)
    rr = principal_range(rotate(d, SOLID, Q), SOLID)
    np.testing.assert_allclose(rr.range, r.range, rtol=1e-10)
    rotated = r.direction @ Q.T                                   # S' = Q S Q^T: axes go to Q d
    np.testing.assert_allclose(np.abs(np.sum(rr.direction * rotated, -1)), 1.0, atol=1e-9)


def test_plane_set_embedded_in_3d_gives_the_same_range(rng):
    d = rng.normal(0, 60, (20, 3))
    d3 = np.zeros((20, 6))
    d3[:, [0, 1, 3]] = d
    np.testing.assert_allclose(principal_range(d, PLANE).range, principal_range(d3, SOLID).range, rtol=1e-12)


def test_out_of_plane_szz_can_govern():
    r = principal_range([10.0, 5.0, 0.0, -90.0], PLANE_ZZ)
    assert float(r.range) == pytest.approx(90.0) and float(r.value) == pytest.approx(-90.0)
    assert np.isnan(float(r.angle))
    np.testing.assert_allclose(r.direction, [0.0, 0.0, 1.0], atol=1e-12)


def test_principal_range_result_object():
    r = principal_range([[0.0, 0.0, 10.0], [60.0, 20.0, 15.0]], PLANE)
    assert isinstance(r, PrincipalRange)
    text = repr(r)
    assert "PrincipalRange (2 points" in text and "max 65" in text and "tie" in text
    d = r.to_dict()
    json.dumps(d)
    assert d["range"] == pytest.approx([10.0, 65.0])


# ---------------------------------------------------------------------------
# the IIW rule at weld toes
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("toe_angle", [0.0, 30.0, -75.0])
def test_sixty_degree_boundary_on_both_sides(toe_angle):
    """A uniaxial range at phi from the toe normal: 59 deg takes the principal range,
    61 deg the normal component sigma cos^2(61) (transformation equations), 60 is still within."""
    sigma = 100.0
    a = np.radians(toe_angle)
    tangent = (np.cos(a), np.sin(a))
    normal_angle = toe_angle + 90.0                               # toe tangent turned 90 degrees
    for phi, principal_used in ((59.0, True), (-59.0, True), (60.0, True), (61.0, False), (-61.0, False),
                                (119.0, False), (121.0, True)):
        r = iiw_range(_uniaxial(sigma, normal_angle + phi), PLANE, tangent)
        folded = min(abs(phi) % 180.0, 180.0 - abs(phi) % 180.0)
        assert float(r.angle) == pytest.approx(folded, abs=1e-9)
        assert bool(r.principal_used) is principal_used, phi
        expected = sigma if principal_used else sigma * np.cos(np.radians(phi)) ** 2
        assert float(r.range) == pytest.approx(expected, rel=1e-12)
        assert float(r.principal_range) == pytest.approx(sigma)
        assert str(r.rule) == ("principal" if principal_used else "normal")


def test_stress_parallel_to_the_toe_gives_a_zero_normal_range():
    # uniaxial along the toe line: 90 deg from the normal, normal component 0 (transformation equations)
    r = iiw_range([0.0, 80.0, 0.0], PLANE, toe_direction=(0.0, 5.0))    # any non-zero length
    assert float(r.angle) == pytest.approx(90.0) and float(r.range) == pytest.approx(0.0, abs=1e-12)


def test_iiw_pure_shear_tie_takes_the_axis_nearer_the_normal():
    # pure shear in the toe frame: +-tau at 45 deg to the normal, either way; the range is tau
    r = iiw_range([0.0, 0.0, 25.0], PLANE, toe_direction=(1.0, 0.0))
    assert float(r.angle) == pytest.approx(45.0) and float(r.range) == pytest.approx(25.0)
    assert bool(r.principal_used)


def test_iiw_swapping_states_and_per_point_toe_directions(rng):
    a, b = rng.normal(0, 80, (60, 3)), rng.normal(0, 80, (60, 3))
    ang = rng.uniform(-np.pi, np.pi, 60)
    t = np.stack([np.cos(ang), np.sin(ang)], -1)
    p, q = iiw_range(tensor_range(a, b), PLANE, t), iiw_range(tensor_range(b, a), PLANE, t)
    for name in ("range", "principal_range", "normal_range", "angle"):
        np.testing.assert_allclose(getattr(p, name), getattr(q, name), rtol=1e-12, atol=1e-9)
    np.testing.assert_array_equal(p.principal_used, q.principal_used)
    assert np.all(p.range >= 0) and np.all(p.range <= p.principal_range + 1e-9)
    # each point alone gives the same as the vectorised call
    one = iiw_range(tensor_range(a[7], b[7]), PLANE, t[7])
    assert float(one.range) == pytest.approx(p.range[7])
    # the toe tangent's sign does not matter
    np.testing.assert_allclose(iiw_range(tensor_range(a, b), PLANE, -t).range, p.range, rtol=1e-12)


def test_iiw_3d_matches_2d_and_is_rotation_invariant(rng):
    d = rng.normal(0, 60, (25, 3))
    d3 = np.zeros((25, 6))
    d3[:, [0, 1, 3]] = d                                          # a plate in the xy-plane, free surface
    t2 = np.array([np.cos(0.4), np.sin(0.4)])
    r2 = iiw_range(d, PLANE, t2)
    r3 = iiw_range(d3, SOLID, np.append(t2, 0.0), plate_normal=(0.0, 0.0, 2.0))
    for name in ("range", "principal_range", "normal_range", "angle"):
        np.testing.assert_allclose(getattr(r3, name), getattr(r2, name), rtol=1e-10, atol=1e-9)
    Q = _random_rotation(rng)
    rq = iiw_range(rotate(d3, SOLID, Q), SOLID, Q @ np.append(t2, 0.0), plate_normal=Q @ [0.0, 0.0, 1.0])
    np.testing.assert_allclose(rq.range, r2.range, rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(rq.angle, r2.angle, atol=1e-7)


def test_iiw_result_object_carries_source_and_caution():
    r = iiw_range([[100.0, 0.0, 0.0], _uniaxial(100.0, 70.0)], PLANE, (0.0, 1.0))
    assert isinstance(r, IIWRange) and r.limit == IIW_ANGLE_LIMIT == 60.0
    assert list(r.rule) == ["principal", "normal"]
    d = r.to_dict()
    json.dumps(d)
    assert d["rule"] == ["principal", "normal"] and "Hobbacher" in d["source"] and "qualified engineer" in d["caution"]
    text = repr(r)
    assert "principal at 1 of 2 points" in text and "qualified engineer" in text
    assert "principal rule" in repr(iiw_range([100.0, 0.0, 0.0], PLANE, (0.0, 1.0)))


# ---------------------------------------------------------------------------
# cycles of a history
# ---------------------------------------------------------------------------
def test_cycle_tensor_ranges_from_hand_made_turning_points():
    # 5 time steps at 2 points; cycles (1 -> 3) and (2 -> 4), indices as a counter would give them
    states = np.zeros((5, 2, 3))
    states[1] = [[100.0, 0.0, 10.0], [50.0, 0.0, 0.0]]
    states[2] = [[-20.0, 5.0, 0.0], [0.0, 0.0, 0.0]]
    states[3] = [[-60.0, 0.0, -10.0], [-50.0, 0.0, 0.0]]
    states[4] = [[40.0, 5.0, 0.0], [10.0, 0.0, 0.0]]
    d = cycle_tensor_ranges(states, np.array([1, 2]), np.array([3, 4]), PLANE)
    assert d.shape == (2, 2, 3)
    np.testing.assert_array_equal(d[0], states[3] - states[1])
    np.testing.assert_array_equal(d[1], states[4] - states[2])
    r = principal_range(d, PLANE)
    # cycle 0 at point 1: uniaxial 100 MPa range; point 0: (-160, 0, -20): c = -80, R = sqrt(80^2 + 20^2)
    assert r.range[0, 1] == pytest.approx(100.0)
    assert r.range[0, 0] == pytest.approx(80.0 + np.hypot(80.0, 20.0))
    # the order of a cycle's two ends does not change any range (float indices that are whole are accepted)
    back = principal_range(cycle_tensor_ranges(states, [3.0, 4.0], [1, 2]), PLANE)
    np.testing.assert_allclose(back.range, r.range, rtol=1e-12)
    assert cycle_tensor_ranges(states, [], []).shape == (0, 2, 3)


# ---------------------------------------------------------------------------
# error paths
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("call, match", [
    (lambda: tensor_range([1.0, 2.0], [1.0, 2.0, 3.0]), "components"),
    (lambda: tensor_range(np.zeros((3, 3)), np.zeros((4, 3))), "broadcast"),
    (lambda: tensor_range([1.0, np.nan, 0.0], [0.0, 0.0, 0.0]), "non-finite"),
    (lambda: tensor_range([1.0, 2.0], [1.0, 2.0], PLANE), "must end with 3 components"),
    (lambda: principal_range([1.0, 2.0, 3.0], ("sxx", "syy", "sxz")), "unknown stress component set"),
    (lambda: principal_range([1.0, np.inf, 3.0], PLANE), "non-finite"),
    (lambda: principal_range(5.0, PLANE), "scalar"),
    (lambda: iiw_range([1.0, 2.0, 3.0], PLANE, (0.0, 0.0)), "zero length"),
    (lambda: iiw_range([1.0, 2.0, 3.0], PLANE, (0.0, 1.0, 0.0)), r"\(\.\.\., 2\)"),
    (lambda: iiw_range([1.0, 2.0, 3.0], PLANE, (np.nan, 1.0)), "non-finite"),
    (lambda: iiw_range([1.0, 2.0, 3.0], PLANE, (0.0, 1.0), plate_normal=(0, 0, 1)), "only used for 3D"),
    (lambda: iiw_range(np.ones(6), SOLID, (0.0, 1.0, 0.0)), "needs plate_normal"),
    (lambda: iiw_range(np.ones(6), SOLID, (0.0, 1.0, 0.1), plate_normal=(0, 0, 1)), "perpendicular"),
    (lambda: iiw_range(np.ones(6), SOLID, (0.0, 1.0, 0.0), plate_normal=(0, 0, 0)), "plate_normal.*zero length"),
    (lambda: iiw_range([1.0, 2.0, 3.0], PLANE, (0.0, 1.0), limit=95.0), "limit"),
    (lambda: cycle_tensor_ranges(np.zeros((4, 3)), [0, 5], [1, 2]), r"starts\[1\] = 5 is outside"),
    (lambda: cycle_tensor_ranges(np.zeros((4, 3)), [0, -1], [1, 2]), "outside"),
    (lambda: cycle_tensor_ranges(np.zeros((4, 3)), [0.5], [1]), "whole"),
    (lambda: cycle_tensor_ranges(np.zeros((4, 3)), [0, 1], [2]), "same length"),
    (lambda: cycle_tensor_ranges(np.zeros((4, 3)), [[0, 1]], [[2, 3]]), "1-D"),
    (lambda: cycle_tensor_ranges(np.zeros(3), [0], [1]), r"\(steps, \.\.\., components\)"),
    (lambda: cycle_tensor_ranges(np.full((4, 3), np.nan), [0], [1]), "non-finite"),
    (lambda: cycle_tensor_ranges(np.zeros((4, 3)), ["a"], [1]), "integer"),
])
def test_bad_input_raises_input_error_naming_the_problem(call, match):
    with pytest.raises(InputError, match=match):
        call()


def test_readme_ranges_snippet_runs_and_gets_the_closed_forms(capsys):
    """The README's "Stress ranges from tensors" snippet as printed: delta (60, 40, 30)
    gives c = 50, R = sqrt(10^2 + 30^2), range c + R at atan2(60, 20)/2 from x (Mohr's
    circle); the cycle (-120, -10, -20) gives |c - R| with c = -65, R = sqrt(55^2 + 20^2)."""
    import re
    from pathlib import Path

    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    section = text.split("### Stress ranges from tensors", 1)[1]
    code = re.search(r"```python\n(.*?)```", section, re.DOTALL).group(1)
    ns: dict = {}
    exec(compile(code, "README.md", "exec"), ns)
    assert float(ns["pr"].range) == pytest.approx(50.0 + np.hypot(10.0, 30.0))
    assert float(ns["pr"].angle) == pytest.approx(0.5 * np.degrees(np.arctan2(60.0, 20.0)))
    assert bool(ns["toe"].principal_used) and float(ns["toe"].normal_range) == pytest.approx(60.0)
    assert float(principal_range(ns["cycles"], PLANE).range[0]) == pytest.approx(65.0 + np.hypot(55.0, 20.0))
    assert "principal rule" in capsys.readouterr().out
