"""Stress invariants and rotations against closed forms.

Sources: transformation equations and Mohr's circle (Timoshenko & Goodier,
Theory of Elasticity, 3rd ed., ch. 1 and 9); von Mises of pure shear = sqrt(3) tau
and Tresca = s1 - s3 are textbook results (e.g. Dowling, Mechanical Behavior of
Materials, ch. 7).
"""
import numpy as np
import pytest

from toolkit.core import stress as S

PLANE, PLANE_ZZ, SOLID = S.PLANE, S.PLANE_ZZ, S.SOLID


@pytest.fixture
def rng():
    return np.random.default_rng(1234)


def test_pure_shear_von_mises_sqrt3_tau():
    tau = 73.0
    # von Mises of pure shear = sqrt(3) tau (distortion-energy criterion, textbook)
    assert np.isclose(S.von_mises([0, 0, tau], PLANE), np.sqrt(3) * tau)
    assert np.isclose(S.von_mises([0, 0, tau, 0], PLANE_ZZ), np.sqrt(3) * tau)
    for k in (3, 4, 5):  # each 3D shear component
        v = np.zeros(6)
        v[k] = tau
        assert np.isclose(S.von_mises(v, SOLID), np.sqrt(3) * tau)
    # Tresca of pure shear = 2 tau; principal stresses +-tau at 45 degrees (Mohr's circle)
    assert np.isclose(S.tresca([0, 0, tau], PLANE), 2 * tau)
    p = S.principal([0, 0, tau], PLANE)
    assert np.allclose(p.values, [tau, -tau])
    assert np.allclose(p.directions[:, 0], [np.sqrt(0.5), np.sqrt(0.5)])


def test_uniaxial_and_hydrostatic():
    s = 250.0
    assert np.isclose(S.von_mises([s, 0, 0], PLANE), s)  # uniaxial: sigma_vm = sigma
    assert np.isclose(S.tresca([s, 0, 0], PLANE), s)
    assert np.isclose(S.hydrostatic([s, 0, 0], PLANE), s / 3)
    # equal triaxial tension: von Mises 0, hydrostatic = s (closed form)
    assert np.isclose(S.von_mises([s, s, s, 0, 0, 0], SOLID), 0.0, atol=1e-12)
    assert np.isclose(S.hydrostatic([s, s, s, 0, 0, 0], SOLID), s)
    assert np.isclose(S.hydrostatic([s, s, 0, s], PLANE_ZZ), s)


def test_mohr_circle_principal_values_and_angle():
    sxx, syy, sxy = 50.0, -30.0, 40.0
    # Mohr's circle: centre 10, radius sqrt(40^2 + 40^2), major axis at 0.5 atan(2 sxy/(sxx-syy)) = 22.5 deg
    c, R = 10.0, np.hypot(40.0, 40.0)
    p = S.principal([sxx, syy, sxy], PLANE)
    assert np.allclose(p.values, [c + R, c - R])
    th = np.deg2rad(22.5)
    assert np.allclose(p.directions[:, 0], [np.cos(th), np.sin(th)])
    T = np.array([[sxx, sxy], [sxy, syy]])
    for a in range(2):  # S d = lambda d
        assert np.allclose(T @ p.directions[:, a], p.values[a] * p.directions[:, a])


def test_plane_stress_tresca_counts_zero_out_of_plane():
    # s1 = 100, s2 = 50, s3 = 0 (plane stress): Tresca = s1 - s3 = 100, not s1 - s2
    assert np.isclose(S.tresca([100.0, 50.0, 0.0], PLANE), 100.0)
    # with szz = 80 (plane strain): principal 100, 80, 50 -> Tresca 50
    assert np.isclose(S.tresca([100.0, 50.0, 0.0, 80.0], PLANE_ZZ), 50.0)
    p = S.principal([100.0, 50.0, 0.0, 80.0], PLANE_ZZ)
    assert np.allclose(p.values, [100.0, 80.0, 50.0])
    assert np.allclose(p.directions[:, 1], [0, 0, 1])  # szz is the middle principal stress, along z
    assert np.isclose(S.max_abs_principal([-120.0, 50.0, 0.0], PLANE), -120.0)


def test_3d_principal_invariants_and_vectors(rng):
    v = rng.normal(scale=100.0, size=(7, 6))
    T = S.to_tensor(v, SOLID)
    p = S.principal(v, SOLID)
    assert np.all(np.diff(p.values, axis=-1) <= 0)  # largest first
    # first and third invariants: trace and determinant (closed form)
    assert np.allclose(p.values.sum(-1), np.trace(T, axis1=-2, axis2=-1))
    assert np.allclose(p.values.prod(-1), np.linalg.det(T))
    assert np.allclose(T @ p.directions, p.directions * p.values[..., None, :])
    # von Mises from principal stresses equals the component formula
    s1, s2, s3 = np.moveaxis(p.values, -1, 0)
    vm = np.sqrt(0.5 * ((s1 - s2) ** 2 + (s2 - s3) ** 2 + (s3 - s1) ** 2))
    assert np.allclose(S.von_mises(v, SOLID), vm)
    assert np.allclose(S.tresca(v, SOLID), s1 - s3)


def test_plane_sets_agree_with_3d_embedding(rng):
    v = rng.normal(scale=50.0, size=(20, 4))
    full = np.zeros((20, 6))
    full[:, 0], full[:, 1], full[:, 3], full[:, 2] = v[:, 0], v[:, 1], v[:, 2], v[:, 3]
    assert np.allclose(S.von_mises(v, PLANE_ZZ), S.von_mises(full, SOLID))
    assert np.allclose(S.principal(v, PLANE_ZZ).values, S.principal(full, SOLID).values)
    assert np.allclose(S.tresca(v, PLANE_ZZ), S.tresca(full, SOLID))
    full[:, 2] = 0.0
    assert np.allclose(S.von_mises(v[:, :3], PLANE), S.von_mises(full, SOLID))
    assert np.allclose(S.tresca(v[:, :3], PLANE), S.tresca(full, SOLID))


def test_any_leading_shape_and_component_order(rng):
    v = rng.normal(size=(4, 5, 3))
    vm = S.von_mises(v, PLANE)
    assert vm.shape == (4, 5)
    assert np.allclose(vm.ravel(), S.von_mises(v.reshape(-1, 3), PLANE))
    perm = v[..., [2, 0, 1]]
    assert np.allclose(S.von_mises(perm, ("sxy", "sxx", "syy")), vm)
    assert S.principal(v, PLANE).directions.shape == (4, 5, 2, 2)


def test_rotate_2d_transformation_equations():
    s = 120.0
    th = np.deg2rad(np.array([0.0, 30.0, 45.0, 110.0]))
    t = np.stack([np.cos(th), np.sin(th)], -1)
    # uniaxial sxx: stt = s cos^2, snn = s sin^2, snt = -s sin cos with n = (-sin, cos) (transformation equations)
    f = S.rotate_2d(np.array([s, 0.0, 0.0]), PLANE, t)
    assert np.allclose(f.tangential, s * np.cos(th) ** 2)
    assert np.allclose(f.normal, s * np.sin(th) ** 2)
    assert np.allclose(f.shear, -s * np.sin(th) * np.cos(th))
    # pure shear tau at 45 degrees: normal stresses -+tau, no shear (Mohr's circle)
    f = S.rotate_2d([0.0, 0.0, 40.0], PLANE, [np.sqrt(0.5), np.sqrt(0.5)])
    assert np.allclose([f.tangential, f.normal, f.shear], [40.0, -40.0, 0.0])


def test_rotate_3d_matches_rotate_2d_and_preserves_invariants(rng):
    v = rng.normal(size=(6, 4))
    th = 0.7
    R = np.array([[np.cos(th), np.sin(th), 0], [-np.sin(th), np.cos(th), 0], [0, 0, 1]])
    r = S.rotate(v, PLANE_ZZ, R)
    f = S.rotate_2d(v, PLANE_ZZ, [np.cos(th), np.sin(th)])
    # R's first row is the tangent, second row the normal (-sin, cos)
    assert np.allclose(r[:, 0], f.tangential) and np.allclose(r[:, 1], f.normal)
    assert np.allclose(r[:, 2], f.shear) and np.allclose(r[:, 3], v[:, 3])
    w = rng.normal(size=(5, 6))
    Q, _ = np.linalg.qr(rng.normal(size=(3, 3)))
    w2 = S.rotate(w, SOLID, Q)
    assert np.allclose(S.von_mises(w2, SOLID), S.von_mises(w, SOLID))
    assert np.allclose(S.principal(w2, SOLID).values, S.principal(w, SOLID).values)
    assert np.allclose(S.rotate(w2, SOLID, Q.T), w)


def test_bad_input_raises():
    with pytest.raises(ValueError, match="unknown stress component set"):
        S.von_mises([1, 2, 3], ("s11", "s22", "s12"))
    with pytest.raises(ValueError, match="must end with 3 components"):
        S.von_mises([1, 2, 3, 4], PLANE)
    with pytest.raises(ValueError, match="non-finite"):
        S.tresca([1, np.nan, 3], PLANE)
    with pytest.raises(ValueError, match="unit vector"):
        S.rotate_2d([1, 2, 3], PLANE, [1.0, 1.0])
    with pytest.raises(ValueError, match="2D stress state"):
        S.rotate_2d(np.zeros(6), SOLID, [1.0, 0.0])
    with pytest.raises(ValueError, match="about the z axis"):
        S.rotate([1, 2, 3], PLANE, np.array([[1, 0, 0], [0, 0, 1], [0, -1, 0.0]]))
    with pytest.raises(ValueError, match="repeated"):
        S.von_mises([1, 2, 3], ("sxx", "sxx", "sxy"))


def test_axisymmetric_names_map_to_the_plane_set():
    """(srr, szz, srz, shoop) is the plane set with r as x, z as y and the hoop
    stress out of plane (common practice)."""
    v = np.array([30.0, 100.0, 20.0, 45.0])
    p = np.array([30.0, 100.0, 20.0, 45.0])            # sxx, syy, sxy, szz
    assert np.isclose(S.von_mises(v, S.AXISYMMETRIC), S.von_mises(p, PLANE_ZZ))
    assert np.allclose(S.principal(v, S.AXISYMMETRIC).values, S.principal(p, PLANE_ZZ).values)
    R = np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 1.0]])
    r = S.rotate(v, S.AXISYMMETRIC, R)                    # 90 degrees: srr and szz swap, hoop stays
    assert np.allclose(r, [100.0, 30.0, -20.0, 45.0])
