"""The data behind every figure the four workbooks draw.

Strict nbval compares a notebook's text outputs but never its pictures, so
each figure of workbooks/src/*.py is rebuilt here from the workbook's own
inputs (its default parameters) and the arrays the drawing holds are read
back from the matplotlib objects (Line2D data, contour levels and filled
bands, collection segments and colour arrays, quiver arrows) and compared
with an expectation reached another way: a closed form (Kirsch, statics,
the IIW extrapolation formulas, the linearisation integrals), the field's
own values located by coordinates, or another recovery method's definition.

Figures covered (workbook: figure -> test):
  plate, shoulder, weld: the model plot -> test_model_plot_*
  all four: raw beside smoothed contours -> test_contours_*
  plate: ligament and hole-edge paths, Kirsch line -> test_plate_*, test_kirsch_*
  shoulder: path along the fillet -> test_fillet_path_*
  weld, from_results: surface path with read-outs, through-thickness
      linearisation -> test_hot_spot_*, test_linearisation_*
  from_results: mesh with paths and toe, paths per recovery method -> test_from_results_*
  all four: raw integration-point curve -> test_raw_curve_*
  all four: error indicator map -> test_indicator_map_*
  all: units on colour bars and path axes, legends outside, path start marked, distinct method
      styles, zoom on the critical region -> test_colour_bars_*, test_model_legend_*, test_path_start_*,
      test_overlaid_methods_*, test_zoom_panel_*
The workbooks draw no convergence plot and no S-N plot (the convergence
study and the checks are shown as tables, compared by nbval).
"""
from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from matplotlib.collections import LineCollection, PolyCollection  # noqa: E402
from matplotlib.quiver import Quiver  # noqa: E402
from matplotlib.tri import TriContourSet  # noqa: E402
from scipy.spatial import cKDTree  # noqa: E402

import toolkit as tk  # noqa: E402
from toolkit.assess.paths import path_from_spec  # noqa: E402
from toolkit.assess.references import fillet_kt, heywood_kt_net, kirsch_ligament  # noqa: E402
from toolkit.fem.models import plate_with_hole, shoulder_fillet, weld_toe  # noqa: E402
from toolkit.fem.solver import solve  # noqa: E402
from toolkit.report import plots  # noqa: E402
from toolkit.report.steps import recover_all  # noqa: E402
from toolkit.report.widgets import plot_path_comparison  # noqa: E402

from helpers import demo_bracket, gauss_field_of  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
RAW_GREY = "0.55"          # colour of the raw curve in plot_path_comparison


@pytest.fixture(autouse=True)
def _close_figures():
    yield
    plt.close("all")


# ---------------------------------------------------------------------------
# The workbooks' inputs (default parameters of workbooks/src/*.py)
# ---------------------------------------------------------------------------
PLATE = dict(width=100.0, length=300.0, hole_diameter=25.0, thickness=10.0, remote_stress=60.0, element_size=1.25)
FILLET = dict(shape="flat", large_width=60.0, small_width=40.0, fillet_radius=4.0, load="tension",
              nominal_stress=100.0, element_size=0.25)
WELD = dict(plate_thickness=12.0, attachment_thickness=10.0, weld_leg=8.0, sides=2, membrane=80.0, bending=20.0,
            element_size=0.25)
BRACKET = dict(paths=[{"name": "notch ligament", "start": [60.0, 31.9], "end": [60.0, 0.0]},
                      {"name": "lower edge", "start": [0.0, 0.0], "end": [120.0, 0.0]}],
               toe_point=[100.0, 40.0], toe_direction=[-1.0, 0.0], plate_thickness=10.0)


def plate_model():
    p = PLATE
    return plate_with_hole(p["width"], p["length"], p["hole_diameter"], thickness=p["thickness"],
                           element_size=p["element_size"], remote_stress=p["remote_stress"])


def fillet_model():
    p = FILLET
    return shoulder_fillet(p["shape"], p["large_width"], p["small_width"], p["fillet_radius"],
                           element_size=p["element_size"], load=p["load"], nominal_stress=p["nominal_stress"])


def weld_model():
    p = WELD
    return weld_toe(p["plate_thickness"], p["attachment_thickness"], p["weld_leg"], sides=p["sides"],
                    element_size=p["element_size"], membrane_stress=p["membrane"], bending_stress=p["bending"])


_CACHE = {}


def solved(name):
    """(model or None, GaussField, {method label: NodalField}) as the workbook builds them, once per session."""
    if name not in _CACHE:
        if name == "from_results":
            mesh, field = demo_bracket("pull")
            recovered = {"L2 projection": tk.project_l2(field), "nodal averaging": tk.average_nodal(field),
                         "patch recovery (SPR)": tk.recover_spr(field)}
            _CACHE[name] = (None, field, recovered)
        else:
            model = {"plate_with_hole": plate_model, "shoulder_fillet": fillet_model, "weld_toe": weld_model}[name]()
            field = solve(model).stress
            _CACHE[name] = (model, field, recover_all(field))
    return _CACHE[name]


WORKBOOKS = ["plate_with_hole", "shoulder_fillet", "weld_toe", "from_results"]
CONTOURED = {"plate_with_hole": "sxx", "shoulder_fillet": "sxx", "weld_toe": "sxx", "from_results": "sxx"}


# ---------------------------------------------------------------------------
# Reading figures back
# ---------------------------------------------------------------------------
def node_at(mesh, xy, tol=1e-7):
    """Index of the mesh node at coordinates ``xy`` (each row), found by coordinates."""
    d, i = cKDTree(mesh.nodes).query(np.atleast_2d(xy))
    assert np.all(d < tol * max(1.0, np.ptp(mesh.nodes))), f"no node at {xy}"
    return i


def method_lines(ax):
    """{legend label: Line2D} of the smoothed curves (not the raw pieces, not the marks)."""
    return {ln.get_label(): ln for ln in ax.get_lines()
            if ln.get_color() not in (RAW_GREY, "0.3") and not ln.get_label().startswith("_")}


def raw_lines(ax):
    return [ln for ln in ax.get_lines() if ln.get_color() == RAW_GREY]


def band_vertices_agree(cs, data, levels, rel=1e-6):
    """Every vertex of a filled band that sits on a data point has (at one of
    the values there) a value inside that band: the drawn colours follow z."""
    tree = cKDTree(data.xy)
    scale = np.ptp(data.xy)
    tol = rel * (levels[-1] - levels[0])
    checked = 0
    for i, path in enumerate(cs.get_paths()):
        v = path.vertices
        if not len(v):
            continue
        d, _ = tree.query(v)
        on = v[d < 1e-9 * scale]
        for p in on:
            z = data.z[tree.query_ball_point(p, 1e-9 * scale)]
            assert np.any((z >= levels[i] - tol) & (z <= levels[i + 1] + tol)), (i, p, z, levels[i:i + 2])
            checked += 1
    return checked


# ---------------------------------------------------------------------------
# Model plot (plate, shoulder, weld)
# ---------------------------------------------------------------------------
def _segments(coll):
    """Set of drawn segments as sorted coordinate pairs (rounded)."""
    out = set()
    for s in coll.get_segments():
        for a, b in zip(s[:-1], s[1:]):
            out.add(tuple(sorted((tuple(np.round(a, 9)), tuple(np.round(b, 9))))))
    return out


@pytest.mark.parametrize("make", [plate_model, fillet_model, weld_model], ids=["plate", "fillet", "weld"])
def test_model_plot_draws_every_element_edge_through_its_mid_node_and_each_named_edge(make):
    model = make()
    ax = model.plot()
    colls = [c for c in ax.collections if isinstance(c, LineCollection)]
    mesh = model.mesh
    # quad8 numbering (common practice): corners 0-3 anticlockwise, mid-side node 4+i between corners i and i+1
    expected = set()
    for b in mesh.blocks:
        assert b.name == "quad8"
        X = mesh.nodes[b.cells]
        for i in range(4):
            for a, c in ((X[:, i], X[:, 4 + i]), (X[:, 4 + i], X[:, (i + 1) % 4])):
                for p, q in zip(a, c):
                    expected.add(tuple(sorted((tuple(np.round(p, 9)), tuple(np.round(q, 9))))))
    assert _segments(colls[0]) == expected
    named = {c.get_label(): c for c in colls[1:]}
    assert set(named) == set(model.edges)
    for name, e in model.edges.items():
        drawn = {p for s in _segments(named[name]) for p in s}
        assert drawn == {tuple(np.round(p, 9)) for p in mesh.nodes[np.unique(e)]}, name


def test_model_plot_of_the_plate_puts_rollers_on_the_symmetry_planes_and_the_remote_stress_on_the_end():
    model = plate_model()
    ax = model.plot()
    mesh = model.mesh
    rollers = np.concatenate([ln.get_xydata() for ln in ax.get_lines() if ln.get_marker() == "o"])
    on_planes = mesh.nodes[(np.abs(mesh.nodes[:, 0]) < 1e-9) | (np.abs(mesh.nodes[:, 1]) < 1e-9)]
    assert {tuple(p) for p in np.round(rollers, 9)} == {tuple(p) for p in np.round(on_planes, 9)}
    (q,) = [c for c in ax.collections if isinstance(c, Quiver)]
    # uniform traction (remote_stress, 0) on the end x = L/2: equal arrows along +x, the longest 8 % of the model size
    assert np.allclose(q.X, PLATE["length"] / 2)
    assert np.all((q.Y > 0) & (q.Y < PLATE["width"] / 2))
    assert np.allclose(q.V, 0.0) and np.allclose(q.U, q.U[0]) and q.U[0] > 0
    assert q.U[0] == pytest.approx(0.08 * PLATE["length"] / 2)


def test_model_plot_of_the_weld_shows_membrane_plus_bending_linear_through_the_thickness():
    model = weld_model()
    ax = model.plot()
    (q,) = [c for c in ax.collections if isinstance(c, Quiver)]
    t, g = WELD["plate_thickness"], model.geometry
    assert np.allclose(q.X, g["plate_length"] / 2) and np.allclose(q.V, 0.0)
    # arrows at the edge mid-points: a straight line in y whose ends at the two plate surfaces
    # stand as membrane + bending to membrane - bending (statics of the applied end stress)
    c = np.polyfit(q.Y, q.U, 1)
    assert np.allclose(np.polyval(c, q.Y), q.U, atol=1e-12 * np.abs(q.U).max())
    top, bottom = np.polyval(c, g["surface_y"]), np.polyval(c, g["surface_y"] - t)
    assert top / bottom == pytest.approx((WELD["membrane"] + WELD["bending"]) / (WELD["membrane"] - WELD["bending"]))
    # supports: rollers on the symmetry line x = 0, the prescribed displacement at the centre node
    rollers = np.concatenate([ln.get_xydata() for ln in ax.get_lines() if ln.get_marker() == "o"])
    assert np.allclose(rollers[:, 0], 0.0)
    (tri,) = [ln.get_xydata() for ln in ax.get_lines() if ln.get_marker() == "^"]
    assert np.allclose(tri, model.mesh.nodes[[model.points["centre"]]])


# ---------------------------------------------------------------------------
# Raw beside smoothed contours (all four workbooks)
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("name", WORKBOOKS)
def test_contours_draw_the_nodal_field_and_each_cells_own_field_on_one_scale(name):
    model, field, recovered = solved(name)
    comp = CONTOURED[name]
    nodal = recovered["L2 projection"]
    fig = plots.raw_vs_smoothed(field, nodal, comp)
    raw = plots.raw_contour_data(field, comp)
    smooth = plots.nodal_contour_data(nodal, comp)
    mesh = field.mesh

    # smoothed data: the L2 nodal value of the node at each point (located by coordinates, per region)
    nodes = node_at(mesh, smooth.xy)
    for r in np.unique(nodal.region):
        sel = nodal.region == r
        assert np.array_equal(smooth.z[sel], nodal.component(comp, region=r)[nodes[sel]])
    # raw data: the mean of every cell's copy at a node is the nodal average (its definition:
    # extrapolate cell by cell, then the plain mean, within a region); the copies differ (jumps)
    ids = node_at(mesh, raw.xy)
    regions = np.concatenate([np.repeat(b.regions, b.cells.shape[1]) for b in mesh.blocks])
    key = ids * (regions.max() + 1) + regions
    uniq, inv = np.unique(key, return_inverse=True)
    mean = np.bincount(inv, raw.z) / np.bincount(inv)
    avg = recovered["nodal averaging"]
    for r in np.unique(regions):
        sel = uniq % (regions.max() + 1) == r
        assert np.allclose(mean[sel], avg.component(comp, region=r)[uniq[sel] // (regions.max() + 1)],
                           rtol=1e-12, atol=1e-9 * np.abs(raw.z).max())
    spread = np.bincount(inv, raw.z ** 2) / np.bincount(inv) - mean ** 2
    assert spread.max() > 0

    # both panels: filled contours on one scale from the smallest to the largest value of either
    lo, hi = min(raw.z.min(), smooth.z.min()), max(raw.z.max(), smooth.z.max())
    levels = np.linspace(lo, hi, 21)
    sets = [c for ax in fig.axes for c in ax.collections if isinstance(c, TriContourSet)]
    assert len(sets) == 2
    for cs, data in zip(sets, (raw, smooth)):
        assert np.allclose(cs.levels, levels, rtol=1e-12)
        assert cs.zmin == pytest.approx(data.z.min()) and cs.zmax == pytest.approx(data.z.max())
        assert band_vertices_agree(cs, data, levels) > 0


def test_contours_of_a_linear_field_carry_the_field_itself():
    """A linear stress lies in each quad8 cell's local field (also on the curved cells), so every
    cell's own values at its nodes are the field there, and so is the smoothed one (closed form)."""
    model, field, _ = solved("plate_with_hole")
    mesh = field.mesh
    f = lambda x: np.stack([3.0 + 0.5 * x[..., 0] - 0.25 * x[..., 1]], -1)  # noqa: E731
    lin = gauss_field_of(mesh, f, points=field.points, comps=["sxx"])
    raw = plots.raw_contour_data(lin, "sxx")
    assert np.allclose(raw.z, f(raw.xy)[:, 0], rtol=1e-10, atol=1e-10)
    smooth = plots.nodal_contour_data(tk.project_l2(lin), "sxx")
    assert np.allclose(smooth.z, f(smooth.xy)[:, 0], rtol=1e-6)   # CG stops at a 1e-10 residual


# ---------------------------------------------------------------------------
# Plate with a hole: ligament and hole-edge paths
# ---------------------------------------------------------------------------
def plate_paths():
    a = PLATE["hole_diameter"] / 2
    ligament = tk.line((0.0, a), (0.0, PLATE["width"] / 2))
    ligament.label = "ligament"
    hole_edge = tk.arc((0.0, 0.0), a, 0.0, 90.0)
    hole_edge.label = "hole edge"
    return a, ligament, hole_edge


def test_kirsch_reference_line_is_the_hoop_stress_of_the_infinite_plate():
    """sigma_theta(r) on the ligament = S/2 (2 + a^2/r^2 + 3 a^4/r^4) (Kirsch 1898; Timoshenko & Goodier §35)."""
    a, S = PLATE["hole_diameter"] / 2, PLATE["remote_stress"]
    r = np.linspace(a, PLATE["width"] / 2, 200)
    assert np.allclose(S * kirsch_ligament(r, a), S / 2 * (2 + a**2 / r**2 + 3 * a**4 / r**4), rtol=1e-14)
    assert S * kirsch_ligament(a, a) == pytest.approx(3 * S)


def test_plate_ligament_path_carries_the_applied_load_and_the_peak_node_value():
    model, field, recovered = solved("plate_with_hole")
    a, ligament, _ = plate_paths()
    W, S = PLATE["width"], PLATE["remote_stress"]
    ax = plot_path_comparison(ligament, recovered, field, "sxx", title="ligament: sxx")
    lines = method_lines(ax)
    assert set(lines) == set(recovered)
    L2 = recovered["L2 projection"]
    peak, side = node_at(model.mesh, [[0.0, a], [0.0, W / 2]])
    for name, ln in lines.items():
        x, y = ln.get_xydata().T
        assert np.allclose(x, np.linspace(0.0, W / 2 - a, 101))
        # statics: the quarter model's section x = 0 carries the end load S W/2 (per unit thickness)
        assert np.trapezoid(y, x) == pytest.approx(S * W / 2, rel=5e-3), name
        # Heywood (1952) net-section Kt, from memory (Pilkey & Pilkey §4.3): 2 + (1 - d/W)^3
        assert y[0] / model.nominal["net"] == pytest.approx(heywood_kt_net(2 * a / W), rel=0.02), name
    x, y = lines["L2 projection"].get_xydata().T
    assert y[0] == pytest.approx(L2.component("sxx")[peak], rel=1e-12)
    assert y[-1] == pytest.approx(L2.component("sxx")[side], rel=1e-12)
    # the raw curve: one piece per element along the ligament (cells with two corners on x = 0)
    corners = np.concatenate([b.cells[:, :4] for b in model.mesh.blocks])
    on_axis = (np.abs(model.mesh.nodes[corners, 0]) < 1e-9).sum(axis=1) == 2
    pieces = raw_lines(ax)
    assert len(pieces) == on_axis.sum()
    xr, yr = np.concatenate([p.get_xydata() for p in pieces]).T
    assert np.trapezoid(yr, xr) == pytest.approx(S * W / 2, rel=0.02)


def test_plate_hole_edge_path_runs_from_the_load_axis_to_the_peak():
    model, field, recovered = solved("plate_with_hole")
    a, _, hole_edge = plate_paths()
    ax = plot_path_comparison(hole_edge, recovered, field, "stt")
    x, y = method_lines(ax)["L2 projection"].get_xydata().T
    assert np.allclose(x, np.linspace(0.0, np.pi * a / 2, 101), rtol=1e-6)
    L2 = recovered["L2 projection"]
    start, end = node_at(model.mesh, [[a, 0.0], [0.0, a]])
    # stress along the edge: syy where the edge crosses the load axis, sxx at the ligament (path frame, closed form)
    assert y[0] == pytest.approx(L2.component("syy")[start], rel=1e-9)
    assert y[-1] == pytest.approx(L2.component("sxx")[end], rel=1e-9)
    assert y[0] < 0 < y[-1]


def test_plate_wide_enough_follows_kirsch_on_the_ligament_and_around_the_hole():
    """d/W = 1/16: Heywood puts the gross Kt 0.4 % above Kirsch's 3, so the infinite-plate
    distributions apply (Kirsch 1898; Timoshenko & Goodier §35): sigma_xx(0, r) = S/2 (2 + a^2/r^2 +
    3 a^4/r^4) and sigma_theta(a, theta) = S (1 - 2 cos 2 theta), theta from the load axis."""
    W, d, S = 400.0, 25.0, 60.0
    a = d / 2
    model = plate_with_hole(W, 2 * W, d, thickness=10.0, element_size=2.0, remote_stress=S)
    field = solve(model).stress
    nodal = tk.project_l2(field)
    ligament = tk.line((0.0, a), (0.0, 4 * a))
    ax = plot_path_comparison(ligament, {"L2 projection": nodal}, None, "sxx")
    x, y = method_lines(ax)["L2 projection"].get_xydata().T
    r = a + x
    assert np.allclose(y, S / 2 * (2 + a**2 / r**2 + 3 * a**4 / r**4), rtol=0.02)
    ax = plot_path_comparison(tk.arc((0.0, 0.0), a, 0.0, 90.0), {"L2 projection": nodal}, None, "stt")
    x, y = method_lines(ax)["L2 projection"].get_xydata().T
    theta = x / a
    assert np.allclose(y, S * (1 - 2 * np.cos(2 * theta)), atol=0.03 * 3 * S)


# ---------------------------------------------------------------------------
# Raw integration-point curves (all four workbooks)
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("name", WORKBOOKS)
def test_raw_curve_shows_the_gauss_point_values_it_passes_through(name):
    """A straight path between two integration points of the cell holding the largest raw sxx
    (the workbooks' 'largest raw Gauss-point value'): the raw curve there is those stored values."""
    _, field, _ = solved(name)
    mesh = field.mesh
    b = mesh.blocks[0]
    k = field.components.index("sxx")
    V = field.values[b.name]
    cell = int(np.argmax(V[..., k].max(axis=1)))
    x = mesh.geometry(b.name, field.points[b.name]).x_cqi[cell]           # (q, 2) Gauss points of that cell
    q0, q1 = 0, len(x) - 1
    path = tk.line(x[q0], x[q1])
    for qty in ("sxx", "von_mises"):
        ax = plot_path_comparison(path, {}, field, qty, n=2)
        (piece,) = raw_lines(ax)
        got = piece.get_xydata()
        s = V[cell, [q0, q1]]
        if qty == "sxx":
            want = s[:, k]
        else:   # von Mises, closed form (szz = 0 in plane stress; plane strain stores it)
            sx, sy, txy = (s[:, field.components.index(c)] for c in ("sxx", "syy", "sxy"))
            sz = s[:, field.components.index("szz")] if "szz" in field.components else 0.0
            want = np.sqrt(0.5 * ((sx - sy)**2 + (sy - sz)**2 + (sz - sx)**2) + 3 * txy**2)
        assert np.allclose(got[:, 0], [0.0, np.linalg.norm(x[q1] - x[q0])])
        assert np.allclose(got[:, 1], want, rtol=1e-9), qty


@pytest.mark.parametrize("name", ["plate_with_hole", "weld_toe"])
def test_raw_curve_of_a_linear_field_is_the_field_piece_by_piece(name):
    model, field, _ = solved(name)
    mesh = field.mesh
    f = lambda x: np.stack([3.0 + 0.5 * x[..., 0] - 0.25 * x[..., 1]], -1)  # noqa: E731
    lin = gauss_field_of(mesh, f, points=field.points, comps=["sxx"])
    if name == "plate_with_hole":
        a = PLATE["hole_diameter"] / 2
        start, end = np.array([0.0, a]), np.array([0.0, PLATE["width"] / 2])
    else:
        start = np.array([model.geometry["toe_x"], model.geometry["surface_y"]])
        end = start + (1.5 * WELD["plate_thickness"], 0.0)
    ax = plot_path_comparison(tk.line(start, end), {}, lin, "sxx")
    pieces = raw_lines(ax)
    assert len(pieces) > 3
    unit = (end - start) / np.linalg.norm(end - start)
    for p in pieces:
        d, y = p.get_xydata().T
        assert np.allclose(y, f(start + d[:, None] * unit)[:, 0], rtol=1e-10)


# ---------------------------------------------------------------------------
# Shoulder fillet: path along the fillet surface
# ---------------------------------------------------------------------------
def test_fillet_path_spans_the_quarter_arc_and_marks_its_peak():
    model, field, recovered = solved("shoulder_fillet")
    r = FILLET["fillet_radius"]
    p = tk.edge_path(model.mesh, model.edges["fillet"])
    along = tk.sample(recovered["L2 projection"], p, n=201)
    i_peak = int(np.argmax(along["stt"]))
    ax = plot_path_comparison(p, recovered, field, "stt", marks=[along.distances[i_peak]])
    x, y = method_lines(ax)["L2 projection"].get_xydata().T
    # (D - d)/2 = 10 mm > r: the fillet is a quarter circle, length pi r / 2 (closed form)
    assert x[-1] == pytest.approx(np.pi * r / 2, rel=1e-4)
    (mark,) = [ln for ln in ax.get_lines() if ln.get_color() == "0.3"]
    assert np.allclose(mark.get_xdata(), along.distances[i_peak])
    assert y.max() <= along["stt"][i_peak] * (1 + 1e-12)
    assert y.max() == pytest.approx(along["stt"][i_peak], rel=2e-3)
    assert abs(x[np.argmax(y)] - along.distances[i_peak]) <= x[1] - x[0] + 1e-12
    kt = y.max() / model.nominal["nominal"]
    # handbook fit (Pilkey & Pilkey charts 3.1/3.2, coefficients in toolkit.assess.references): within 4 %,
    # as the workbook's notes state for the flat bar
    assert kt == pytest.approx(fillet_kt("flat", "tension", 60.0, 40.0, r), rel=0.04)
    # stress along a free surface: stt is the largest principal stress there
    s1 = tk.sample(recovered["L2 projection"], p, n=101)["s1"]
    assert np.allclose(y, s1, rtol=1e-3, atol=1e-3 * np.abs(y).max())


# ---------------------------------------------------------------------------
# Hot spot: surface path with read-outs, through-thickness linearisation
# ---------------------------------------------------------------------------
def check_iiw_readouts(ds, s, t, hs_lin, hs_quad):
    """IIW type a read-outs at 0.4t, 1.0t (linear) and 0.4t, 0.9t, 1.4t (quadratic) and the
    extrapolation to the toe: 1.67/-0.67 (exactly 5/3, -2/3) and 2.52/-2.24/0.72 (Hobbacher 2016)."""
    assert np.allclose(hs_lin.readouts["distances"], [0.4 * t, 1.0 * t])
    assert np.allclose(hs_quad.readouts["distances"], [0.4 * t, 0.9 * t, 1.4 * t])
    at = lambda dist: np.interp(dist, ds, s)  # noqa: E731  (read-outs fall on the 151-point grid)
    assert np.allclose(hs_lin.readouts["stresses"], at(hs_lin.readouts["distances"]), rtol=1e-9)
    assert np.allclose(hs_quad.readouts["stresses"], at(hs_quad.readouts["distances"]), rtol=1e-9)
    assert hs_lin.value == pytest.approx(5 / 3 * at(0.4 * t) - 2 / 3 * at(1.0 * t), rel=1e-9)
    assert hs_quad.value == pytest.approx(2.52 * at(0.4 * t) - 2.24 * at(0.9 * t) + 0.72 * at(1.4 * t), rel=1e-9)


def check_linearisation(dt, s, lin, t):
    """Membrane (1/t) int s dx and bending (6/t^2) int s (t/2 - x) dx (ASME BPVC VIII-2 Annex 5-A),
    by Simpson's rule here; the dashed line is m + b (1 - 2x/t)."""
    from scipy.integrate import simpson

    m = simpson(s, x=dt) / t
    b = 6.0 / t**2 * simpson(s * (t / 2 - dt), x=dt)
    scale = np.abs(s).max()
    assert float(lin.membrane) == pytest.approx(m, abs=2e-3 * scale)
    assert float(lin.bending) == pytest.approx(b, abs=2e-3 * scale)
    assert np.allclose(lin.linear_at(dt), m + b * (1 - 2 * dt / t), atol=4e-3 * scale)


def test_hot_spot_surface_path_of_the_weld_marks_the_read_outs_on_the_plotted_curve():
    model, field, recovered = solved("weld_toe")
    t = WELD["plate_thickness"]
    toe = np.array([model.geometry["toe_x"], model.geometry["surface_y"]])
    surface = tk.line(toe, toe + (1.5 * t, 0.0))
    ds = np.linspace(0.0, 1.5 * t, 151)
    s = tk.sample(recovered["L2 projection"], surface, distances=ds)["sxx"]
    hs_lin = tk.hot_spot_stress((ds, s), thickness=t, rule="a-linear", element_size=WELD["element_size"])
    hs_quad = tk.hot_spot_stress((ds, s), thickness=t, rule="a-quadratic", element_size=WELD["element_size"])
    check_iiw_readouts(ds, s, t, hs_lin, hs_quad)
    ax = plot_path_comparison(surface, recovered, field, "sxx", marks=list(hs_quad.readouts["distances"]))
    marks = [ln.get_xdata()[0] for ln in ax.get_lines() if ln.get_color() == "0.3"]
    assert np.allclose(marks, [0.4 * t, 0.9 * t, 1.4 * t])
    x, y = method_lines(ax)["L2 projection"].get_xydata().T
    toe_node = node_at(model.mesh, [toe])[0]
    assert y[0] == pytest.approx(recovered["L2 projection"].component("sxx")[toe_node], rel=1e-9)
    # the read-out markers sit on the drawn curve (101 points: linear interpolation between them)
    assert np.allclose(np.interp(hs_quad.readouts["distances"], x, y), hs_quad.readouts["stresses"], rtol=2e-3)


def test_linearisation_through_the_weld_toe_section_balances_the_applied_stresses():
    model, field, recovered = solved("weld_toe")
    t = WELD["plate_thickness"]
    toe = np.array([model.geometry["toe_x"], model.geometry["surface_y"]])
    dt = np.linspace(0.0, t, 121)
    through = tk.sample(recovered["L2 projection"], tk.line(toe, toe - (0.0, t)), distances=dt)["sxx"]
    lin = tk.linearize(dt, through)
    check_linearisation(dt, through, lin, t)
    # statics: the non-load-carrying attachment leaves the plate section with the applied
    # membrane stress and end moment (the workbook prints the difference as the smoothing error)
    assert float(lin.membrane) == pytest.approx(WELD["membrane"], rel=0.02)
    assert float(lin.bending) == pytest.approx(WELD["bending"], rel=0.03)


def bracket_toe_lines(mesh):
    """The workbook's hot-spot read-out line and through-thickness line (the inside side found by coordinates)."""
    d = np.asarray(BRACKET["toe_direction"], float) / np.linalg.norm(BRACKET["toe_direction"])
    toe = np.asarray(BRACKET["toe_point"], float)
    t = BRACKET["plate_thickness"]
    n_in = np.array([-d[1], d[0]])
    found = tk.core.locate.PointLocator.for_mesh(mesh).locate(np.array([toe + 0.05 * t * n_in])).found
    if not found[0]:
        n_in = -n_in
    return d, toe, tk.line(toe, toe + 1.5 * t * d), tk.line(toe, toe + t * n_in)


def test_hot_spot_and_linearisation_figure_of_the_imported_results():
    _, field, recovered = solved("from_results")
    nodal = recovered["L2 projection"]
    t = BRACKET["plate_thickness"]
    d, toe, surface_path, thickness_path = bracket_toe_lines(field.mesh)
    assert np.allclose(d, [-1.0, 0.0])
    ds = np.linspace(0.0, 1.5 * t, 151)
    surf = tk.sample(nodal, surface_path, distances=ds)
    # the stress along the surface for a direction (-1, 0) is sxx (rotation, closed form)
    s_surface = tk.core.stress.rotate_2d(np.column_stack([surf[c] for c in field.components]),
                                         field.components, d).tangential
    assert np.allclose(s_surface, surf["sxx"], rtol=1e-12)
    hs_lin = tk.hot_spot_stress((ds, s_surface), thickness=t, rule="a-linear")
    hs_quad = tk.hot_spot_stress((ds, s_surface), thickness=t, rule="a-quadratic")
    check_iiw_readouts(ds, s_surface, t, hs_lin, hs_quad)
    dt = np.linspace(0.0, t, 101)
    thick = tk.sample(nodal, thickness_path, distances=dt)
    s_through = tk.core.stress.rotate_2d(np.column_stack([thick[c] for c in field.components]),
                                         field.components, d).tangential
    assert np.allclose(s_through, thick["sxx"], rtol=1e-12)
    check_linearisation(dt, s_through, tk.linearize(dt, s_through), t)


# ---------------------------------------------------------------------------
# Imported results: the mesh with paths and toe, paths per recovery method
# ---------------------------------------------------------------------------
def test_from_results_mesh_plot_draws_the_paths_and_the_toe_where_the_parameters_put_them():
    _, field, _ = solved("from_results")
    mesh = field.mesh
    fig, ax = plt.subplots()
    plots.plot_mesh(mesh, ax, label_regions=True)
    (grid,) = [c for c in ax.collections if isinstance(c, LineCollection)]
    drawn = {p for s in _segments(grid) for p in s}
    assert drawn == {tuple(np.round(p, 9)) for p in mesh.nodes[np.unique(np.concatenate(
        [b.cells for b in mesh.blocks]))]}
    # region labels at the mean of their cells' centroids
    labels = {a.get_text(): np.asarray(a.xy) for a in ax.texts}
    for b in mesh.blocks:
        c = mesh.nodes[b.cells].mean(axis=1)
        for r in np.unique(b.regions):
            assert np.allclose(labels[f"region {r}"], c[b.regions == r].mean(axis=0))
    for spec in BRACKET["paths"]:
        s = path_from_spec(spec).sample(n=50)
        assert np.allclose(s.points[0], spec["start"]) and np.allclose(s.points[-1], spec["end"])


def test_from_results_paths_plot_the_path_frame_stresses_of_each_method():
    _, field, recovered = solved("from_results")
    for spec in BRACKET["paths"]:
        p = path_from_spec(spec)
        along = (np.asarray(spec["end"], float) - spec["start"]) / np.linalg.norm(np.subtract(spec["end"],
                                                                                           spec["start"]))
        normal_comp = "sxx" if abs(along[0]) < 1e-12 else "syy"       # vertical path: n = x; horizontal: n = y
        for q in ("snn", "von_mises"):
            ax = plot_path_comparison(p, recovered, field, q)
            lines = method_lines(ax)
            assert set(lines) == set(recovered)
            for name, nf in recovered.items():
                r = tk.sample(nf, p, n=101, outside="nan")
                x, y = lines[name].get_xydata().T
                assert np.allclose(x, r.distances)
                if q == "snn":
                    want = r[normal_comp]
                else:    # plane stress von Mises (closed form)
                    sx, sy, txy = r["sxx"], r["syy"], r["sxy"]
                    want = np.sqrt(sx**2 - sx * sy + sy**2 + 3 * txy**2)
                assert np.allclose(y, want, rtol=1e-9, atol=1e-9, equal_nan=True), (spec["name"], q, name)
            assert raw_lines(ax)


# ---------------------------------------------------------------------------
# Error indicator map (all four workbooks)
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("name", WORKBOOKS)
def test_indicator_map_colours_each_cell_by_its_zz_error(name):
    _, field, recovered = solved(name)
    mesh = field.mesh
    spr = recovered["patch recovery (SPR)"]
    ind = tk.error_indicator(field, spr)
    ax = ind.plot()
    (pc,) = [c for c in ax.collections if isinstance(c, PolyCollection)]
    err = np.asarray(pc.get_array())
    # one polygon per cell, through its corner nodes
    corners = np.concatenate([mesh.nodes[b.cells[:, :b.element.ncorners]] for b in mesh.blocks])
    polys = [p.vertices[:len(c)] for p, c in zip(pc.get_paths(), corners)]
    assert len(pc.get_paths()) == mesh.ncells
    assert np.allclose(np.array(polys), corners)
    # ||e||_K^2 = int_K |sigma* - sigma_h|^2 dV (Zienkiewicz & Zhu 1987, L2 form), recomputed here from the
    # SPR values at each cell's nodes found by coordinates and the stored integration-point stresses
    want = []
    tree = cKDTree(mesh.nodes)
    for b in mesh.blocks:
        g = mesh.geometry(b.name, field.points[b.name])
        ids = tree.query(mesh.nodes[b.cells])[1]
        cols = []
        for c in field.components:
            vals = np.empty(b.cells.shape)
            for r in np.unique(b.regions):
                sel = b.regions == r
                vals[sel] = spr.component(c, region=r)[ids[sel]]
            cols.append(g.N_qk @ vals.T)
        star = np.stack(cols, -1).transpose(1, 0, 2)                        # (c, q, comps)
        diff = star - field.values[b.name]
        want.append(np.sqrt(np.einsum("cq,cqa,cqa->c", g.dV_cq, diff, diff)))
    want = np.concatenate(want)
    assert np.allclose(err, want, rtol=1e-9, atol=1e-12 * want.max())
    assert np.sqrt((err**2).sum()) == pytest.approx(ind.error, rel=1e-12)
    assert f"eta = {100 * ind.eta:.3g} %" in ax.get_title()
    # density: ||e||_K / sqrt(A_K), the area by the shoelace formula of the corners (curved cells: near)
    ax2 = ind.plot(quantity="density")
    (pc2,) = [c for c in ax2.collections if isinstance(c, PolyCollection)]
    xs, ys = corners[..., 0], corners[..., 1]
    area = 0.5 * np.abs((xs * np.roll(ys, -1, 1) - np.roll(xs, -1, 1) * ys).sum(axis=1))
    assert np.allclose(np.asarray(pc2.get_array()), err / np.sqrt(area), rtol=0.02)


# ---------------------------------------------------------------------------
# Units, legends outside the model, the path's start, distinguishable methods, the zoom
# (what a checker reads off a figure; common practice)
# ---------------------------------------------------------------------------
def test_colour_bars_and_path_axes_carry_units():
    model, field, recovered = solved("plate_with_hole")
    nodal = recovered["L2 projection"]
    fig = plots.raw_vs_smoothed(field, nodal, "sxx")
    bars = [a for a in fig.axes if a.get_ylabel().startswith("sxx")]
    assert len(bars) == 2 and all(a.get_ylabel() == "sxx (MPa)" for a in bars)
    fig = plots.raw_vs_smoothed(field, nodal, "sxx", unit="N/mm2")
    assert sum(a.get_ylabel() == "sxx (N/mm2)" for a in fig.axes) == 2
    ax = plot_path_comparison(tk.line((0.0, 12.5), (0.0, 50.0)), recovered, field, "sxx")
    assert ax.get_xlabel().endswith("(mm)") and ax.get_ylabel() == "sxx (MPa)"
    ind = tk.error_indicator(field, recovered["patch recovery (SPR)"])
    ax = ind.plot()
    assert ax.figure.axes[-1].get_ylabel() == "||e||_K (MPa mm)"


def test_model_legend_lies_outside_the_model_axes():
    model = fillet_model()
    ax = model.plot()
    fig = ax.figure
    fig.canvas.draw()
    leg = ax.get_legend().get_window_extent()
    box = ax.get_window_extent()
    assert leg.x0 >= box.x1  # to the right of the axes: it covers no part of the model


def test_path_start_is_marked_at_distance_zero():
    _, ax = plt.subplots()
    p = path_from_spec(BRACKET["paths"][0])
    start, end = plots.mark_path(ax, p, label="notch ligament")
    assert np.allclose(start, BRACKET["paths"][0]["start"]) and np.allclose(end, BRACKET["paths"][0]["end"])
    (dot,) = [ln for ln in ax.get_lines() if ln.get_label() == "_start"]
    assert np.allclose(dot.get_xydata(), [BRACKET["paths"][0]["start"]]) and dot.get_marker() == "o"
    assert any(t.get_text() == "0 mm" and np.allclose(t.xy, start) for t in ax.texts)
    # an arc starts at its first angle: the hole edge of the plate from the load axis (0 degrees)
    start, _ = plots.mark_path(ax, tk.arc((0.0, 0.0), 12.5, 0.0, 90.0))
    assert np.allclose(start, [12.5, 0.0])


def test_overlaid_methods_have_distinct_consistent_styles():
    model, field, recovered = solved("shoulder_fillet")
    p = tk.edge_path(model.mesh, model.edges["fillet"])
    ax = plot_path_comparison(p, recovered, field, "stt")
    lines = method_lines(ax)
    assert set(lines) == set(recovered)
    styles = {(ln.get_linestyle(), ln.get_marker()) for ln in lines.values()}
    assert len(styles) == len(lines)  # no two methods drawn alike
    for name, ln in lines.items():
        assert ln.get_marker() == plots.METHOD_STYLES[name]["marker"]
    # the same method keeps its style in another figure
    ax2 = plot_path_comparison(p, {"patch recovery (SPR)": recovered["patch recovery (SPR)"]}, None, "stt")
    ln2 = method_lines(ax2)["patch recovery (SPR)"]
    assert (ln2.get_linestyle(), ln2.get_marker(), ln2.get_color()) == \
        (lines["patch recovery (SPR)"].get_linestyle(), "^", lines["patch recovery (SPR)"].get_color())
    ax.figure.canvas.draw()
    assert ax.get_legend().get_window_extent().x0 >= ax.get_window_extent().x1


def test_zoom_panel_frames_the_critical_region_and_marks_the_path():
    model, field, recovered = solved("plate_with_hole")
    a = PLATE["hole_diameter"] / 2
    hole = tk.arc((0.0, 0.0), a, 0.0, 90.0)
    fig = plots.contour_with_zoom(recovered["L2 projection"], "sxx", (0.0, a), 1.6 * a, paths={"hole edge": hole})
    main, zoom = [ax for ax in fig.axes if ax.get_title()][:2]
    assert np.allclose(zoom.get_xlim(), [-1.6 * a, 1.6 * a]) and np.allclose(zoom.get_ylim(), [-0.6 * a, 2.6 * a])
    assert main.get_xlim()[1] - main.get_xlim()[0] > 3 * (zoom.get_xlim()[1] - zoom.get_xlim()[0])
    for ax in (main, zoom):
        (dot,) = [ln for ln in ax.get_lines() if ln.get_label() == "_start"]
        assert np.allclose(dot.get_xydata(), [[a, 0.0]])
    assert sum(a.get_ylabel() == "sxx (MPa)" for a in fig.axes) == 2
