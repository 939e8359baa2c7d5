"""Tests of the parametric meshers (toolkit.fem.models) solved with toolkit.fem.solver."""
import numpy as np

from toolkit.assess.references import fillet_kt, heywood_kt_net
import pytest

from toolkit.core.elements import ELEMENTS
from toolkit.core.mesh import Mesh
from toolkit.fem.models import plate_with_hole, shoulder_fillet, weld_toe
from toolkit.fem.models.common import edges_on, reflect_permutation
from toolkit.recovery.projection import project_l2
from toolkit.fem import Material, Roller, Traction, edge_integral, solve


def solved(model):
    s = solve(model)
    return s, project_l2(s.stress, solver="direct")


def gauss_max(s, comp):
    a = s.stress.components.index(comp)
    return max(float(v[..., a].max()) for v in s.stress.values.values())


def nodal_max_on(model, nf, comp, edge):
    return float(nf.component(comp)[np.unique(model.edges[edge])].max())


# ---------------------------------------------------------------------------
# Plate with a hole
# ---------------------------------------------------------------------------
def test_kirsch_infinite_plate():
    """Plate with W/d = 10: the peak against the finite-width value, and the
    ligament stress against Kirsch (1898), Timoshenko & Goodier §35,
    σxx(0, y)/σ = 1 + (a/y)²/2 + 3 (a/y)⁴/2.

    The peak over the gross stress is Kt,gross = Kt,net W/(W - d) with
    Heywood's Kt,net (source in test_heywood_finite_width): 3.032 at
    d/W = 0.1, not Kirsch's 3.  Measured Kt,gross/3.032 - 1: L2 projection
    +0.31 % (h = d/20; +0.14 % converged at d/80), nodal averaging +0.32 %,
    SPR +0.58 %; wrong: raw Gauss-point maximum -2.18 %, the infinite-plate
    value 3 (FE/3 - 1 = +1.39 %).  Tolerance 0.7 %."""
    d, a = 10.0, 5.0
    m = plate_with_hole(width=10 * d, length=20 * d, hole_diameter=d, element_size=d / 20)
    s, nf = solved(m)
    sxx = nf.component("sxx")
    kt_gross = heywood_kt_net(0.1) / (1 - 0.1)
    assert sxx[m.points["peak"]] / m.nominal["gross"] == pytest.approx(kt_gross, rel=0.007)
    lig = np.unique(m.edges["ligament"])
    y = m.mesh.nodes[lig, 1]
    kirsch = 1 + 0.5 * (a / y) ** 2 + 1.5 * (a / y) ** 4
    assert np.abs(sxx[lig] / kirsch - 1).max() <= 0.03


# FE/Heywood - 1 per d/W, measured (L2 projection, h = d/20): +0.28, +0.55,
# +0.98, +1.65, +2.49 %.  The FE's own error is about +0.15 % (at d/80 the
# ratio is +0.14, +0.83, +2.32 % at d/W = 0.1, 0.3, 0.5): the growth is the
# deviation of Heywood's formula itself.  A wrong exponent 2.5,
# 2 + (1 - d/W)^2.5, gives FE/fit - 1 = -1.15, -1.81, -1.82, -1.15, +0.05 %,
# i.e. 1.4 to 2.8 % away from the measured ratio at every d/W, so the band is
# the measured ratio +-0.5 %.
HEYWOOD_FE_RATIO = {0.1: 0.0028, 0.2: 0.0055, 0.3: 0.0098, 0.4: 0.0165, 0.5: 0.0249}


@pytest.mark.parametrize("d_over_w", [0.1, 0.2, 0.3, 0.4, 0.5])
def test_heywood_finite_width(d_over_w):
    """Heywood (1952), quoted in Pilkey & Pilkey, Peterson's SCF 3rd ed.
    §4.3 (from memory): Kt_net = 2 + (1 - d/W)³; measured offsets above."""
    d = 10.0
    W = d / d_over_w
    m = plate_with_hole(width=W, length=max(4 * W, 20 * d), hole_diameter=d, element_size=d / 20)
    _, nf = solved(m)
    kt_net = nf.component("sxx")[m.points["peak"]] / m.nominal["net"]
    assert kt_net / heywood_kt_net(d_over_w) - 1 == pytest.approx(HEYWOOD_FE_RATIO[d_over_w], abs=0.005)
    assert m.nominal["net"] == pytest.approx(m.nominal["gross"] * W / (W - d), rel=1e-12)


def test_spherical_cavity_axisymmetric():
    """Independent axisymmetric check: a spherical cavity in a large bar under
    axial tension, Goodier (1933): Kt = (27 - 15ν) / (2 (7 - 5ν)).  The
    quarter plate mesh is revolved about its y = 0 edge (r = y, z = x)."""
    d, nu = 2.0, 0.3
    m = plate_with_hole(width=20 * d, length=40 * d, hole_diameter=d, element_size=d / 20)
    cells = m.mesh.block("quad8").cells[:, reflect_permutation(ELEMENTS["quad8"])]
    mesh = Mesh(m.mesh.nodes[:, ::-1].copy(), {"quad8": cells})
    X = mesh.nodes
    e = {"axis": edges_on(mesh, np.isclose(X[:, 0], 0.0)), "mid": edges_on(mesh, np.isclose(X[:, 1], 0.0)),
         "end": edges_on(mesh, np.isclose(X[:, 1], X[:, 1].max()))}
    s = solve(mesh, Material(1.0, nu), "axisymmetric", loads=[Traction("end", (0.0, 1.0))],
              supports=[Roller("axis"), Roller("mid")], edges=e)
    nf = project_l2(s.stress, solver="direct")
    assert nf.component("szz")[m.points["peak"]] == pytest.approx((27 - 15 * nu) / (2 * (7 - 5 * nu)), rel=0.01)


# ---------------------------------------------------------------------------
# Shoulder fillet: stepped flat bar and shaft
# Fits (Pilkey & Pilkey, Peterson's SCF 3rd ed., charts 3.1, 3.2 and 3.4; close
# variants in Roark's Table 17.1), coefficients checked against reproductions
# of the charts' formulas (see toolkit/references.py):
#   Kt = C1 + C2 (2h/D) + C3 (2h/D)² + C4 (2h/D)³, h = (D - d)/2.
# Tabulated values: Carvill, Mechanical Engineer's Data Handbook
# (Butterworth-Heinemann 1993), "Strengths of materials", p. 21, tables
# "Tension of stepped bar with fillets" and "Bending of stepped flat bar with
# fillets" (K on the small section's nominal stress).
# FE results of this project agree with Carvill's tables within 4 % at every
# point checked below, tension and bending, D/d up to 3.  Against the fits
# they agree within 5 % for the flat bar with D/d <= 1.5 and for D/d = 2 with
# r/d >= 0.2; at D/d = 2 the fit lies 3-7 % above both the FE and Carvill's
# table.  For shafts only the fit is at hand: the FE agrees within 5 % for
# r/d >= 0.2 (D/d = 2, 3) and lies up to 16 % above it for sharp fillets (the
# axisymmetric solver itself is confirmed by Goodier's cavity above; later FE
# studies, Tipton, Sorem & Rolovic 1996, from memory, report that Peterson's
# shaft values underestimate Kt).  An independent check with a separate FE
# code (meshes refined to r/256, validated on Lame and Goodier's cavity)
# agrees with this project's shaft values within 0.4 %: the fit is low there.
# ---------------------------------------------------------------------------
CARVILL_TENSION = [(1.2, 0.10, 1.89), (1.3, 0.15, 1.86), (1.5, 0.10, 2.24), (1.5, 0.20, 1.84),
                   (2.0, 0.06, 2.90), (2.0, 0.10, 2.44), (2.0, 0.20, 1.95), (2.0, 0.30, 1.76)]
CARVILL_BENDING = [(1.2, 0.10, 1.70), (1.5, 0.06, 2.08), (1.5, 0.20, 1.48), (2.0, 0.10, 1.86),
                   (2.0, 0.20, 1.51), (3.0, 0.10, 1.93), (3.0, 0.20, 1.53)]


@pytest.mark.parametrize("load,D_d,r_d,K", [("tension",) + p for p in CARVILL_TENSION]
                         + [("bending",) + p for p in CARVILL_BENDING])
def test_flat_shoulder_fillet_kt_against_carvill_table(load, D_d, r_d, K):
    """FE peak on the fillet over the small section's nominal stress against
    Carvill's tabulated K (source above), within 4 %.  Measured FE/K - 1
    (L2 projection, default mesh): -3.9 % (tension D/d = 2, r/d = 0.1) to
    +3.1 % (bending D/d = 1.5, r/d = 0.2); wrong: the raw Gauss-point maximum
    lies more than 4 % (up to 7.2 %) below K on eight of the fifteen rows (e.g. -7.2 % tension D/d = 2,
    r/d = 0.06; -7.1 % bending D/d = 3, r/d = 0.1), so 4 % rejects it."""
    d = 10.0
    m = shoulder_fillet("flat", D_d * d, d, r_d * d, load=load)
    _, nf = solved(m)
    kt = nodal_max_on(m, nf, "sxx", "fillet") / m.nominal["nominal"]
    assert kt == pytest.approx(K, rel=0.04)


@pytest.mark.parametrize("shape,load", [("flat", "tension"), ("flat", "bending"), ("shaft", "tension")])
def test_fillet_fit_ranges_meet_at_h_over_r_2(shape, load):
    """The fits' two ranges (h/r <= 2 and >= 2) describe one smooth chart, so
    they must meet at h/r = 2 (a check on the coefficients as written)."""
    from toolkit.assess.references import _FILLET_FITS
    lo, hi = _FILLET_FITS[(shape, load)]
    for x in (0.1, 0.3, 0.5, 0.7, 0.8):
        a, b = ([sum(c * t for c, t in zip(row, (1.0, np.sqrt(2.0), 2.0))) for row in rows] for rows in (lo, hi))
        ka = a[0] + a[1] * x + a[2] * x ** 2 + a[3] * x ** 3
        kb = b[0] + b[1] * x + b[2] * x ** 2 + b[3] * x ** 3
        assert ka == pytest.approx(kb, rel=0.01), x


def peterson_fit(shape, D, d, r):
    return fillet_kt(shape, "tension", D, d, r)


@pytest.mark.parametrize("shape,D_d,r_d", [
    ("flat", 1.2, 0.05), ("flat", 1.2, 0.1), ("flat", 1.5, 0.05), ("flat", 1.5, 0.1), ("flat", 1.5, 0.2),
    ("flat", 2.0, 0.2), ("flat", 2.0, 0.3),
    ("shaft", 2.0, 0.2), ("shaft", 2.0, 0.3), ("shaft", 3.0, 0.2), ("shaft", 3.0, 0.3)])
def test_shoulder_fillet_tension_kt(shape, D_d, r_d):
    d = 10.0
    D, r = D_d * d, r_d * d
    m = shoulder_fillet(shape, D, d, r)
    _, nf = solved(m)
    comp = "sxx" if shape == "flat" else "szz"
    kt = nodal_max_on(m, nf, comp, "fillet") / m.nominal["nominal"]
    assert 0.1 <= m.geometry["h_over_r"] <= 20           # the fits' stated range
    # 5 %, not 4 %: at D/d = 2 the handbook fit itself departs from tabulated values (flat r/d = 0.2: fit 1.992,
    # Carvill's table 1.95, our FE 1.898 and 1.885 at r/40; flat r/d = 0.3: Carvill 1.76 also below the fit;
    # measured FE/fit - 1: -4.75 %, -4.0 %, shaft +4.1 %). The sharp check of the FE is the Carvill-table test
    # (4 %); this one checks that the fit and the model agree within the fit's own scatter.
    assert kt == pytest.approx(peterson_fit(shape, D, d, r), rel=0.05)


def test_shoulder_fillet_bending_balanced():
    """Flat bar in pure bending: the self-balanced end moments leave no
    reaction (statics) and the small-part surface far from the step carries
    σ = 6M/(t d²) (beam theory).  The fillet peak of this geometry (D/d = 2,
    r/d = 0.2) is checked against Carvill's table in
    test_flat_shoulder_fillet_kt_against_carvill_table (FE +1.75 %)."""
    m = shoulder_fillet("flat", 20.0, 10.0, 2.0, load="bending")
    s, nf = solved(m)
    np.testing.assert_allclose(s.reactions.sum(axis=0), 0.0, atol=1e-8)
    sxx = nf.component("sxx")
    surf = np.unique(m.edges["small_surface"])
    X = m.mesh.nodes[surf]
    far = surf[(X[:, 1] > 0) & (np.abs(X[:, 0] - 0.6 * m.geometry["small_length"]) < 2.0)]
    np.testing.assert_allclose(sxx[far], m.nominal["nominal"], rtol=0.01)


# ---------------------------------------------------------------------------
# Weld toe
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("sides,toe_radius,h,loads", [
    (1, None, 0.25, ((1.0, 0.0),)), (2, None, 0.25, ((1.0, 0.0),)),
    (1, 1.0, None, ((1.0, 0.0), (0.0, 1.0))), (2, 1.0, None, ((1.0, 0.0), (0.0, 1.0)))])
def test_weld_toe_section_balance(sides, toe_radius, h, loads):
    """The L2-projected stresses integrated over the plate section at the toe
    balance the applied membrane force σm t and bending moment σb t²/6
    (statics).  At a sharp toe the corner singularity makes the recovered
    moment converge slowly (1.4 % off at h = t/20, 0.7 % at t/80), so bending
    is checked on the rounded (effective notch) toe."""
    t = 10.0
    for sm, sb in loads:
        m = weld_toe(t, 10.0, 8.0, sides=sides, toe_radius=toe_radius, element_size=h,
                     membrane_stress=sm, bending_stress=sb)
        _, nf = solved(m)
        sxx = nf.component("sxx")
        sec = m.edges["toe_section"]
        F = edge_integral(m.mesh, sec, sxx)
        M = edge_integral(m.mesh, sec, sxx, weight=lambda x: x[..., 1])
        if sm:
            assert F == pytest.approx(sm * t, rel=0.01)
        else:
            assert abs(F) <= 0.01 * sb * t
        if sb:
            assert M == pytest.approx(sb * t ** 2 / 6, rel=0.01)


def test_cruciform_no_net_bending_under_membrane():
    """Symmetric two-sided attachment, membrane load: the section at the toe
    carries no net bending (symmetry about the mid-plane)."""
    t = 10.0
    m = weld_toe(t, 10.0, 8.0, sides=2, element_size=0.5)
    _, nf = solved(m)
    M = edge_integral(m.mesh, m.edges["toe_section"], nf.component("sxx"), weight=lambda x: x[..., 1])
    assert abs(M) <= 1e-6 * (1.0 * t ** 2 / 6)
    # the one-sided T joint: the free body from the toe section to the loaded
    # end carries only the uniform end traction, so the section moment about
    # the mid-plane is zero as well (statics), although the stress across it
    # is not symmetric.  Measured |M1| (L2 projection) / (σ t²/6): 1.34 % at
    # h = 0.5, then 1.01, 0.60, 0.37 % at h = 0.25, 0.125, 0.0625 (the sharp
    # toe's slow convergence, see above); nodal averaging 1.43 %.  Wrong: a
    # moment taken about the loaded face instead of the mid-plane is
    # F t/2 = 300 % of σ t²/6.  Tolerance 2 %.
    m1 = weld_toe(t, 10.0, 8.0, sides=1, element_size=0.5)
    _, nf1 = solved(m1)
    M1 = edge_integral(m1.mesh, m1.edges["toe_section"], nf1.component("sxx"), weight=lambda x: x[..., 1])
    assert abs(M1) <= 0.02 * (1.0 * t ** 2 / 6)


def test_notch_peak_rises_as_toe_radius_shrinks():
    """Smaller toe radius, sharper notch, higher peak (Neuber; common practice).
    The peak at ρ = 0.5 (default mesh h = ρ/4) against a converged value of
    our own solver (no published one at hand): 2.8585, the Richardson limit
    of the L2 peaks 2.8762, 2.8629, 2.8596 at h = ρ/8, ρ/16, ρ/32 (nodal
    averaging and SPR agree to 0.1 % at ρ/32).  Measured at the default mesh:
    L2 projection +1.4 %, nodal averaging +0.9 %; wrong: raw Gauss-point
    maximum -5.3 %, SPR (not yet converged there) -4.6 %.  Tolerance 2.5 %."""
    peaks = []
    for rho in (4.0, 2.0, 1.0, 0.5):
        m = weld_toe(10.0, 10.0, 8.0, sides=2, toe_radius=rho)
        _, nf = solved(m)
        peaks.append(nodal_max_on(m, nf, "sxx", "plate_surface"))
    assert np.all(np.diff(peaks) > 0), peaks
    assert peaks[-1] == pytest.approx(2.8585, rel=0.025)


# ---------------------------------------------------------------------------
# Mesh convergence: the Gauss-point peak rises monotonically toward the
# surface value with contracting steps; the L2-projected nodal peak settles
# with contracting steps (common practice, Roache's GCI presumes this).
# ---------------------------------------------------------------------------
CONVERGENCE = [
    ("plate", lambda h: plate_with_hole(100.0, 200.0, 10.0, element_size=h * 5.0), "sxx", "hole"),
    ("flat", lambda h: shoulder_fillet("flat", 20.0, 10.0, 1.0, element_size=h), "sxx", "fillet"),
    ("flat_bending", lambda h: shoulder_fillet("flat", 20.0, 10.0, 1.0, element_size=h, load="bending"), "sxx",
     "fillet"),
    ("shaft", lambda h: shoulder_fillet("shaft", 20.0, 10.0, 1.0, element_size=h), "szz", "fillet"),
    ("weld_toe", lambda h: weld_toe(10.0, 10.0, 8.0, toe_radius=1.0, element_size=h), "sxx", "plate_surface"),
]


@pytest.mark.parametrize("name,make,comp,edge", CONVERGENCE, ids=[c[0] for c in CONVERGENCE])
def test_mesh_convergence(name, make, comp, edge):
    g, n = [], []
    for h in (1 / 2.5, 1 / 5, 1 / 10):
        m = make(h)
        s, nf = solved(m)
        g.append(gauss_max(s, comp))
        n.append(nodal_max_on(m, nf, comp, edge))
    dg, dn = np.diff(g), np.diff(n)
    assert np.all(dg > 0), g
    assert abs(dg[1]) < abs(dg[0]), g
    assert abs(dn[1]) < abs(dn[0]), n
    assert abs(n[2] - g[2]) < 0.05 * n[2]


# ---------------------------------------------------------------------------
# Meshes: geometry, names, element types, plotting, errors
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("etype", ["quad4", "quad8", "quad9"])
def test_mesh_areas_and_names(etype):
    W, L, d = 40.0, 100.0, 10.0
    m = plate_with_hole(W, L, d, element_size=1.0, etype=etype)
    exact = W / 2 * L / 2 - np.pi * d ** 2 / 16
    tol = 1e-3 if etype == "quad4" else 1e-6      # straight chords vs curved quadratic edges
    assert m.mesh.volumes().sum() == pytest.approx(exact, rel=tol)
    assert set(m.edges) >= {"hole", "symmetry_x", "symmetry_y", "end", "side", "ligament"}
    assert np.allclose(m.mesh.nodes[m.points["peak"]], [0.0, d / 2])
    # hole edge nodes lie on the circle
    hn = np.unique(m.edges["hole"])
    np.testing.assert_allclose(np.linalg.norm(m.mesh.nodes[hn], axis=1), d / 2, rtol=1e-12)

    D, dd, r = 30.0, 20.0, 3.0
    f = shoulder_fillet("flat", D, dd, r, etype=etype)
    Ll, Ls = f.geometry["large_length"], f.geometry["small_length"]
    exact = Ll * D / 2 + Ls * dd / 2 + (r * r - np.pi * r * r / 4)
    assert f.mesh.volumes().sum() == pytest.approx(exact, rel=10 * tol)
    wt = weld_toe(10.0, 12.0, 6.0, sides=2, etype=etype)
    g = wt.geometry
    exact = 2 * (g["plate_length"] / 2 * 5.0 + 6.0 * 6.0 / 2 + 6.0 * g["attachment_height"])
    assert wt.mesh.volumes().sum() == pytest.approx(exact, rel=1e-9)


def test_shaft_is_axisymmetric_rz():
    m = shoulder_fillet("shaft", 30.0, 20.0, 2.0)
    assert m.analysis == "axisymmetric"
    assert m.mesh.nodes[:, 0].min() == pytest.approx(0.0, abs=1e-12)
    assert m.mesh.nodes[:, 0].max() == pytest.approx(15.0)
    axis = np.unique(m.edges["axis"])
    np.testing.assert_allclose(m.mesh.nodes[axis, 0], 0.0, atol=1e-12)


def test_plot_runs():
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    for m in (plate_with_hole(40.0, 80.0, 10.0), shoulder_fillet("flat", 20.0, 10.0, 2.0, load="bending"),
              weld_toe(10.0, 10.0, 8.0, toe_radius=1.0)):
        ax = m.plot()
        labels = {t.get_text() for t in ax.get_legend().get_texts()}
        assert set(m.edges) <= labels
        plt.close(ax.figure)


@pytest.mark.parametrize("call,match", [
    (lambda: plate_with_hole(10.0, 50.0, 10.0), "hole_diameter must be smaller than width = 10"),
    (lambda: plate_with_hole(20.0, 8.0, 10.0), "hole_diameter must be smaller than length = 8"),
    (lambda: plate_with_hole(20.0, 50.0, -1.0), "hole_diameter must be positive"),
    (lambda: plate_with_hole(20.0, 50.0, 4.0, element_size=3.0), "element_size must lie in"),
    (lambda: shoulder_fillet("flat", 20.0, 10.0, 0.0), "fillet_radius must be positive"),
    (lambda: shoulder_fillet("flat", 20.0, 10.0, 6.0), r"fillet_radius must be <= \(large_width - small_width\)/2 = 5"),
    (lambda: shoulder_fillet("flat", 10.0, 12.0, 1.0), "small_width must be smaller than large_width = 10"),
    (lambda: shoulder_fillet("flat", 20.0, 10.0, 2.0, small_length=1.0), "small_length must exceed fillet_radius"),
    (lambda: shoulder_fillet("shaft", 20.0, 10.0, 2.0, load="bending"), "not axisymmetric"),
    (lambda: weld_toe(10.0, 10.0, 60.0, plate_length=100.0), "plate_length must be at least"),
    (lambda: weld_toe(10.0, 10.0, 8.0, attachment_height=5.0), "attachment_height must exceed"),
    (lambda: weld_toe(10.0, 10.0, 8.0, flank_angle=85.0), "flank_angle must lie in"),
    (lambda: weld_toe(10.0, 10.0, 8.0, toe_radius=20.0), "toe_radius too large"),
    (lambda: weld_toe(10.0, 10.0, 8.0, sides=3), "sides must be 1"),
    (lambda: weld_toe(-1.0, 10.0, 8.0), "plate_thickness must be positive"),
])
def test_impossible_geometry_rejected(call, match):
    with pytest.raises(ValueError, match=match):
        call()
