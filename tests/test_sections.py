"""Section resultants from nodal forces (structural stress by nodal forces,
P. Dong, Int. J. Fatigue 23 (2001) 865-876): membrane F/t and bending
6M/t^2 across a section along element edges, exact by equilibrium.

Sources beside each check: statics and beam theory (closed form), the
linearisation integrals of ASME BPVC VIII-2 Annex 5-A for the sign and the
first-surface convention, and the issue's independent scikit-fem model for
the cruciform (membrane 80 and bending 20 at the toe, fixed by statics)."""
import time

import numpy as np
import pytest

from toolkit import GaussField, Material, Mesh, linearize, project_l2
from toolkit.assess import SectionResultants, section_resultants
from toolkit.core.grid import box_mesh, rectangle_mesh
from toolkit.errors import InputError
from toolkit.fem import Fixed, Traction
from toolkit.fem.models import weld_toe
from toolkit.fem.models.common import edges_on
from toolkit.fem.solver import solve
from toolkit.io import read_results, write_results

MAT = Material(200_000.0, 0.3)
L, H = 8.0, 2.0          # strip length and depth, mid-plane y = 0
NX, NY = 8, 4


def strip(etype, loads):
    """A strip [0, L] x [-H/2, H/2] clamped at x = 0, loaded on x = L; the
    solver's Gauss-point stresses."""
    m = rectangle_mesh(etype, NX, NY, size=(L, H), origin=(0.0, -H / 2))
    e = {"left": edges_on(m, lambda x: np.isclose(x[:, 0], 0.0)),
         "right": edges_on(m, lambda x: np.isclose(x[:, 0], L))}
    return solve(m, MAT, "plane_stress", loads=loads(), supports=[Fixed("left")], edges=e).stress


def at(x):
    """The vertical section at x from the upper surface down (first surface y = H/2)."""
    return (x, H / 2), (x, -H / 2)


# ---------------------------------------------------------------------------
# (a) closed form: membrane plus bending on a strip, every section along element edges
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("etype", ["quad4", "quad8", "tri6"])
def test_strip_membrane_and_bending_exact_at_every_section(etype):
    """End traction sxx = sm + sb y/(H/2): statics of the free body from any
    section to the loaded end gives F = sm H, M = sb H^2/6 about the
    mid-plane, so membrane sm and bending sb at the upper face (closed form,
    beam theory); the clamp at x = 0 disturbs the stresses near it (Poisson),
    quad4 locks in bending, and the resultants are still exact.  Seen from
    the other side the same section carries the same resultants; read from
    the lower face the bending changes sign (first-surface convention of
    ASME VIII-2 Annex 5-A, as in linearize)."""
    sm, sb = 80.0, 20.0
    field = strip(etype, lambda: [Traction("right", (sm, 0.0), gradient=(sb / (H / 2), 0.0), along="y")])
    for x in np.arange(1, NX) * (L / NX):
        top, bottom = at(x)
        r = section_resultants(field, top, bottom, side=(L, 0.0))
        assert r.membrane == pytest.approx(sm, rel=1e-9) and r.bending == pytest.approx(sb, rel=1e-9)
        assert r.normal_force == pytest.approx(sm * H, rel=1e-9)
        assert r.moment == pytest.approx(sb * H ** 2 / 6, rel=1e-9)
        assert abs(r.shear_force) <= 1e-9 * sm * H
        np.testing.assert_allclose(r.structural, [sm + sb, sm - sb], rtol=1e-9)
        other = section_resultants(field, top, bottom, side=(0.0, 0.0))
        assert (other.membrane, other.bending) == pytest.approx((sm, sb), rel=1e-9)
        flipped = section_resultants(field, bottom, top, side=(L, 0.0))
        assert (flipped.membrane, flipped.bending) == pytest.approx((sm, -sb), rel=1e-9)


@pytest.mark.parametrize("etype", ["quad4", "quad8", "tri6"])
def test_cantilever_tip_shear_gives_the_beam_theory_moment(etype):
    """Cantilever with a shear P = tau H on its free end: at section x the
    moment is P (L - x), the upper face in compression, so bending
    -6 P (L - x) / H^2 at the upper face, membrane 0, shear force P
    (statics, beam theory)."""
    tau = 5.0
    P = tau * H
    field = strip(etype, lambda: [Traction("right", (0.0, tau))])
    for x in (1.0, 3.0, 6.0):
        r = section_resultants(field, *at(x), side=(L, 0.0))
        assert abs(r.membrane) <= 1e-9 * tau
        assert r.bending == pytest.approx(-6 * P * (L - x) / H ** 2, rel=1e-9)
        assert r.shear_force == pytest.approx(P, rel=1e-9)


def test_width_scales_forces_not_stresses_and_agrees_with_linearize_on_a_linear_field():
    """A field sxx = 50 + 30 (1 - 2 s/t) through the section (s from the
    first surface) is membrane 50 and bending 30 for both the nodal forces
    and linearize (ASME VIII-2 Annex 5-A integrals, closed form); an
    out-of-plane width b multiplies force and moment by b only."""
    mesh = rectangle_mesh("quad8", 5, 3, size=(10.0, 6.0))
    y = mesh.geometry("quad8", "full").x_cqi[..., 1]
    s = 6.0 - y
    field = GaussField(mesh, {"quad8": np.stack([50 + 30 * (1 - 2 * s / 6.0), 0 * y, 0 * y], -1)},
                       ("sxx", "syy", "sxy"))
    r1 = section_resultants(field, (4.0, 6.0), (4.0, 0.0), side=(9.0, 3.0))
    r3 = section_resultants(field, (4.0, 6.0), (4.0, 0.0), side=(9.0, 3.0), width=3.0)
    d = np.linspace(0.0, 6.0, 31)
    lin = linearize(d, 50 + 30 * (1 - 2 * d / 6.0))
    assert (r1.membrane, r1.bending) == pytest.approx((lin.membrane, lin.bending), rel=1e-12)
    assert (r3.membrane, r3.bending) == pytest.approx((50.0, 30.0), rel=1e-12)
    assert r3.normal_force == pytest.approx(3 * r1.normal_force) and r3.moment == pytest.approx(3 * r1.moment)
    np.testing.assert_allclose(r1.linear_at([0.0, 6.0]), [80.0, 20.0])
    assert r1.positions[0] == 0.0 and r1.positions[-1] == pytest.approx(6.0) and len(r1.nodes) == 7


# ---------------------------------------------------------------------------
# (b) the cruciform of issue 16: 80 / 20 at the sharp toe at every element size
# ---------------------------------------------------------------------------
def toe_resultants(h, sides=2):
    m = weld_toe(12.0, 10.0, 8.0, sides=sides, element_size=h, membrane_stress=80.0, bending_stress=20.0)
    sol = solve(m)
    g = m.geometry
    toe = np.array([g["toe_x"], g["surface_y"]])
    return m, sol, section_resultants(sol.stress, toe, toe - (0.0, 12.0), side=toe + (12.0, 0.0), label="toe")


def test_cruciform_toe_section_is_80_20_at_every_size():
    """Cruciform, t 12, attachment 10, leg 8, plane strain, membrane 80 and
    bending 20 on the plate end: the toe section cuts only the plate, so
    statics fixes membrane 80 and bending 20 (the issue's independent
    scikit-fem model converges onto them).  The sampled linearisation
    drifts (79.28 .. 81.48 in the issue's table); the nodal forces must hold
    within 0.2 % at t/5, t/10, t/20, t/50, t/100 and t/200.  Measured: all six
    sizes mesh and solve in about 3 s together (2-core machine); the error is round-off
    (about 1e-10)."""
    t0 = time.perf_counter()
    for h in (2.4, 1.2, 0.6, 0.24, 0.12, 0.06):
        _, _, r = toe_resultants(h)
        assert r.membrane == pytest.approx(80.0, rel=2e-3) and r.bending == pytest.approx(20.0, rel=2e-3)
        assert r.membrane == pytest.approx(80.0, rel=1e-8) and r.bending == pytest.approx(20.0, rel=1e-8)
    assert time.perf_counter() - t0 < 60.0


def test_t_joint_toe_section_balances_the_end_load():
    """One-sided T joint: the free body from the toe section to the loaded
    end carries only the end traction, so membrane 80 and bending 20 about
    the mid-plane as well (statics), although the stress across the section
    is not symmetric."""
    _, _, r = toe_resultants(0.5, sides=1)
    assert (r.membrane, r.bending) == pytest.approx((80.0, 20.0), rel=1e-8)
    assert "toe" in repr(r) and "membrane" in repr(r)
    d = r.to_dict()
    assert d["name"] == "section resultants by nodal forces" and "Dong" in d["source"]
    assert d["membrane"] == pytest.approx(80.0) and d["section"] == "toe"
    assert isinstance(r, SectionResultants)


# ---------------------------------------------------------------------------
# (d) the same from a neutral result folder
# ---------------------------------------------------------------------------
def test_same_resultants_from_a_neutral_result_folder(tmp_path):
    """Gauss-point stresses written to the neutral folder and read back (the
    points matched by coordinates to the Gauss rule) give the same
    resultants: the method needs no displacements (common practice for
    imported results)."""
    m, sol, r = toe_resultants(1.2)
    write_results(tmp_path / "res", m.mesh, sol.stress)
    mesh2, field2 = read_results(tmp_path / "res")
    g = m.geometry
    toe = np.array([g["toe_x"], g["surface_y"]])
    r2 = section_resultants(field2, toe, toe - (0.0, 12.0), side=toe + (12.0, 0.0))
    assert (r2.membrane, r2.bending) == pytest.approx((r.membrane, r.bending), rel=1e-9)


# ---------------------------------------------------------------------------
# (c) error paths
# ---------------------------------------------------------------------------
@pytest.fixture(scope="module")
def plate():
    return strip("quad4", lambda: [Traction("right", (10.0, 0.0))])


def test_section_off_the_element_edges_is_refused(plate):
    with pytest.raises(InputError, match=r"cut.*straddles the section line.*follow element edges"):
        section_resultants(plate, (1.5, H / 2), (1.5, -H / 2), side=(L, 0.0), label="cut")
    with pytest.raises(InputError, match=r"no node at the section's start"):
        section_resultants(plate, (1.0, H), (1.0, -H / 2), side=(L, 0.0))
    with pytest.raises(InputError, match=r"no node at the section's end"):
        section_resultants(plate, (1.0, H / 2), (1.0, -0.9), side=(L, 0.0))


def test_bad_side_width_and_points_are_refused(plate):
    top, bottom = at(2.0)
    with pytest.raises(InputError, match="side point .* lies on the section line"):
        section_resultants(plate, top, bottom, side=(2.0, 5.0))
    with pytest.raises(InputError, match="no cell on the side"):
        section_resultants(plate, (0.0, -H / 2), (L, -H / 2), side=(4.0, -5.0))
    with pytest.raises(InputError, match="width .* must be a positive number"):
        section_resultants(plate, top, bottom, side=(L, 0.0), width=0.0)
    with pytest.raises(InputError, match="start must be a finite 2D point"):
        section_resultants(plate, (1.0, np.nan), bottom, side=(L, 0.0))
    with pytest.raises(InputError, match="start and end coincide"):
        section_resultants(plate, top, top, side=(L, 0.0))
    with pytest.raises(InputError, match="tol must lie"):
        section_resultants(plate, top, bottom, side=(L, 0.0), tol=0.5)


def test_wrong_fields_are_refused(plate):
    top, bottom = at(2.0)
    with pytest.raises(InputError, match="must be a GaussField"):
        section_resultants(project_l2(plate), top, bottom, side=(L, 0.0))
    axi = GaussField(plate.mesh, {"quad4": plate.values["quad4"]}, ("srr", "szz", "srz", "shoop"))
    with pytest.raises(InputError, match="lacks component.*sxx"):
        section_resultants(axi, top, bottom, side=(L, 0.0))
    off_rule = GaussField(plate.mesh, {"quad4": plate.values["quad4"][:, :1]}, plate.components,
                          points=[[0.1, 0.2]])
    with pytest.raises(InputError, match="form no Gauss rule"):
        section_resultants(off_rule, top, bottom, side=(L, 0.0))
    box = box_mesh("hex8", 1, 1, 1)
    f3 = GaussField(box, {"hex8": np.zeros((1, 8, 6))}, ("sxx", "syy", "szz", "sxy", "syz", "sxz"))
    with pytest.raises(InputError, match="2D plane models"):
        section_resultants(f3, (0, 0), (0, 1), side=(1, 0))


def test_section_leaving_the_body_is_refused():
    """An L-shaped body (3 of 4 unit squares): the line x = 1 from y = 0 to
    y = 2 leaves the material on the right above y = 1."""
    nodes = [[x, y] for y in range(3) for x in range(3)]
    cells = [[0, 1, 4, 3], [1, 2, 5, 4], [3, 4, 7, 6]]
    mesh = Mesh(nodes, {"quad4": cells})
    field = GaussField(mesh, {"quad4": np.ones((3, 4, 3))}, ("sxx", "syy", "sxy"))
    with pytest.raises(InputError, match="lies on the section but no cell on the chosen side holds it"):
        section_resultants(field, (1.0, 0.0), (1.0, 2.0), side=(2.0, 0.5))
