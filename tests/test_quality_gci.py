"""Grid convergence: Richardson extrapolation and Roache's GCI.

Source: Celik, Ghia, Roache, Freitas, Coleman & Raad (2008), "Procedure for
estimation and reporting of uncertainty due to discretization in CFD applications",
J. Fluids Eng. 130, 078001, eqs. 1-10 and Table 1.
"""
import numpy as np
import pytest

from toolkit.assess.convergence import grid_convergence, representative_size


def test_celik_table1_first_column():
    # Celik et al. (2008) Table 1, first column (from memory): N = 18000, 8000, 4500 cells (2D),
    # phi = 6.063, 5.972, 5.863 -> r21 = 1.5, r32 = 1.333, p = 1.53, phi_ext = 6.1685,
    # e_a21 = 1.5 %, e_ext21 = 1.7 %, GCI_fine21 = 2.2 %
    h = [representative_size(n, 1.0, 2) for n in (18000, 8000, 4500)]
    r = grid_convergence([6.063, 5.972, 5.863], h)
    assert np.allclose(r.ratios, [1.5, 4 / 3])
    assert round(r.order, 2) == 1.53
    assert round(r.extrapolated, 4) == 6.1685
    assert round(100 * r.relative_error, 1) == 1.5
    assert round(100 * r.extrapolated_error, 1) == 1.7
    assert round(100 * r.gci_fine, 1) == 2.2  # a fraction, reported as 2.2 %
    assert r.warnings == []


@pytest.mark.parametrize("p,C", [(2.0, 0.7), (1.3, -2.5), (3.0, 40.0)])
def test_synthetic_power_law_is_recovered_exactly(p, C):
    f0 = 3.2
    h = np.array([0.1, 0.17, 0.23, 0.41])  # non-constant refinement ratios
    f = f0 + C * h**p
    r = grid_convergence(f, h)
    assert np.isclose(r.order, p, rtol=0, atol=1e-9)
    assert np.isclose(r.extrapolated, f0, rtol=0, atol=1e-9)
    assert np.allclose(r.orders, p, atol=1e-9) and len(r.orders) == 2
    # GCI by its definition with the exact order: Fs |f1-f2|/|f1| / (r21^p - 1)
    r21 = h[1] / h[0]
    assert np.isclose(r.gci_fine, 1.25 * abs((f[0] - f[1]) / f[0]) / (r21**p - 1))
    # in the asymptotic range GCI_32 = r21^p GCI_21 up to the normalisation phi1/phi2
    assert np.isclose(r.asymptotic_ratio, abs(f[0] / f[1]))
    assert not any("oscillatory" in w for w in r.warnings)


def test_oscillatory_convergence_is_flagged():
    r = grid_convergence([1.00, 1.05, 0.93], [1.0, 2.0, 4.0])
    assert any("oscillatory" in w for w in r.warnings)


def test_diverging_sequence_is_flagged():
    # differences grow towards the fine grid: 0.4 then 0.1
    r = grid_convergence([2.0, 1.6, 1.5], [1.0, 2.0, 4.0])
    assert any("not converging" in w for w in r.warnings)


def test_small_ratio_and_order_warnings():
    h = np.array([1.0, 1.1, 1.21])
    r = grid_convergence(5.0 + 0.3 * h**2, h, formal_order=0.9)  # 2 outside (0.45, 1.8)
    assert any("below 1.3" in w for w in r.warnings)
    assert any("formal order" in w for w in r.warnings)


def test_bad_input():
    with pytest.raises(ValueError, match="three or more"):
        grid_convergence([1.0, 2.0], [1.0, 2.0])
    with pytest.raises(ValueError, match="finest first"):
        grid_convergence([1.0, 2.0, 3.0], [2.0, 1.0, 4.0])
    with pytest.raises(ValueError, match="equal values"):
        grid_convergence([1.0, 1.0, 2.0], [1.0, 2.0, 4.0])
    with pytest.raises(ValueError, match="equal length"):
        grid_convergence([1.0, 2.0, 3.0], [1.0, 2.0])


def test_result_repr_and_dict():
    import json
    r = grid_convergence([6.063, 5.972, 5.863], [1.0, 1.5, 2.0])
    assert "GCI fine" in repr(r) and "2.175%" in repr(r)
    d = json.loads(json.dumps(r.to_dict()))
    assert np.isclose(d["gci_fine"], r.gci_fine)


# Roache (1998), Verification and Validation in Computational Science and Engineering, ch. 5
# (restated by Celik et al. 2008 and by Roache's GCI papers): when the observed order is
# unreasonable, compute the GCI with the formal order and the safety factor Fs = 3.
def test_roache_fallback_order_outside_range():
    h = np.array([1.0, 2.0, 4.0])
    f = 5.0 + 0.3 * h**4  # observed order 4, formal 1: outside (0.5, 2) x formal
    r = grid_convergence(f, h, formal_order=1.0)
    assert np.isclose(r.order, 4.0) and r.order_used == 1.0 and r.safety_factor == 3.0
    assert "Roache" in r.fallback and "outside (0.5, 2)" in r.fallback
    # GCI_fine = 3 |e_a21| / (r21^1 - 1), extrapolation with p = 1 (Roache 1998)
    assert np.isclose(r.gci_fine, 3.0 * abs((f[0] - f[1]) / f[0]) / (2.0 - 1.0))
    assert np.isclose(r.extrapolated, (2.0 * f[0] - f[1]) / (2.0 - 1.0))
    assert "fallback" in repr(r) and r.to_dict()["order_used"] == 1.0


def test_roache_fallback_oscillatory():
    r = grid_convergence([1.00, 1.05, 0.93], [1.0, 2.0, 4.0], formal_order=2.0)
    assert r.order_used == 2.0 and r.safety_factor == 3.0 and "monotonically" in r.fallback
    assert np.isclose(r.gci_fine, 3.0 * 0.05 / (2.0**2 - 1.0))


def test_no_fallback_inside_range_or_without_formal_order():
    h = np.array([1.0, 2.0, 4.0])
    f = 5.0 + 0.3 * h**1.5
    r = grid_convergence(f, h, formal_order=1.0)  # 1.5 lies inside (0.5, 2)
    assert r.fallback == "" and r.safety_factor == 1.25 and np.isclose(r.order_used, 1.5)
    r = grid_convergence(5.0 + 0.3 * h**4, h)  # no formal order: no fallback
    assert r.fallback == "" and r.safety_factor == 1.25 and np.isclose(r.order_used, 4.0)
    with pytest.raises(ValueError, match="formal_order"):
        grid_convergence(f, h, formal_order=0.0)
