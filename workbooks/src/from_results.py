# %% tags=["title", "remove-input"]
from toolkit.report.title import title_block
title_block("Stress assessment from imported results")

# %% tags=["verdict", "remove-input"]
from toolkit.report.verdict import verdict_placeholder
verdict_placeholder()

# %% [markdown]
# **Units: mm, N and MPa throughout.**
#
# Stresses computed by another finite-element code arrive at the elements' integration points, in the
# neutral result folder documented in the README (`nodes.csv`, `elements.csv`, `gauss.csv`). This workbook
# smooths them into a continuous nodal field by global L2 projection, compares nodal averaging and patch
# recovery, reads the field along the paths given below, extracts the structural hot-spot stress at the
# toe location given by coordinates (surface extrapolation and through-thickness linearisation), judges
# the mesh with the Zienkiewicz–Zhu indicator, and runs the static and fatigue checks.
#
# The shipped demo folder is an invented component: a flat bracket with a semicircular notch in its upper
# edge and a lug of another part (region 2) at its right end. Its raw stresses are taken as the stress
# range of one load cycle for the fatigue check.

# %% tags=["remove-input"]
%matplotlib inline

# %% tags=["remove-input"]
import numpy as np
import matplotlib.pyplot as plt

import toolkit as tk
from toolkit import report
from toolkit.report import plots
from toolkit.assess.checks import fatigue_check, sn_curve, static_check, thickness_factor
from toolkit.assess.paths import path_from_spec
from toolkit.core.locate import PointLocator
from toolkit.core.stress import rotate_2d, von_mises
from toolkit.report.widgets import path_panel, plot_path_comparison
from toolkit.workbook import Summary, input_path

# %% tags=["parameters"]
results = "demo_bracket"          # neutral result folder or .npz file: a path (relative ones from the workbook's folder), or a shipped demo's name
paths = [{"name": "notch ligament", "start": [60.0, 31.9], "end": [60.0, 0.0]},
         {"name": "lower edge", "start": [0.0, 0.0], "end": [120.0, 0.0]}]   # lines, polylines or arcs (mm)
toe_point = [100.0, 40.0]          # mm, on the plate surface at the toe; length: 2
toe_direction = [-1.0, 0.0]        # along the surface, away from the toe (normalised here); length: 2
plate_thickness = 10.0             # mm; range: 0 < x <= 200
fat_class = 90.0                   # MPa, FAT class of the hot-spot detail; range: 0 < x <= 250
cycles = 2000000.0                 # load cycles of the stress range; range: 0 < x <= 1e12
yield_strength = 355.0             # MPa; range: 0 < x <= 2000
safety_factor = 1.5                # on yield; range: 1 <= x <= 10
gamma_M = 1.15                     # partial factor on fatigue resistance; range: 1 <= x <= 2
refined_results = []               # optional: folders of the same component on finer meshes, coarse to fine

# %% [markdown]
# ## Inputs

# %%
params = dict(results=results, paths=paths, toe_point=toe_point, toe_direction=toe_direction,
              plate_thickness=plate_thickness, fat_class=fat_class, cycles=cycles,
              yield_strength=yield_strength, safety_factor=safety_factor, gamma_M=gamma_M,
              refined_results=refined_results)
units = dict(toe_point="mm", plate_thickness="mm", fat_class="MPa", yield_strength="MPa")
report.inputs_table(params, units)

# %%
source = input_path(results)
mesh, field = tk.read_results(source)
about = tk.io.read_about(source) if source.is_dir() else {}
print(f"results: {source.name} ({about.get('description', 'no description')[:60]}...)")
print(mesh)
print(field)

# %% [markdown]
# ## The model
# Mesh as imported, with the regions, the paths and the toe location (a filled dot marks each path's
# start, distance 0 in the path plots; the arrow its end). Loads and supports are those of the analysis
# that produced the results; they are not part of the neutral folder.

# %%
path_objs = {p.get("name", f"path {i + 1}"): path_from_spec(p) for i, p in enumerate(paths)}
d = np.asarray(toe_direction, float) / np.linalg.norm(toe_direction)
toe = np.asarray(toe_point, float)
locator = PointLocator.for_mesh(mesh)
# the through-thickness line runs into the material from the toe: find the side that lies inside
n_in = np.array([-d[1], d[0]])
probe = np.array([toe + 0.05 * plate_thickness * n_in, toe - 0.05 * plate_thickness * n_in])
inside = locator.locate(probe).found
if inside[1] and not inside[0]:
    n_in = -n_in
elif not inside[0]:
    raise ValueError("toe_point: neither side of the surface direction lies in the mesh; check toe_point")
surface_path = tk.line(toe, toe + 1.5 * plate_thickness * d)
thickness_path = tk.line(toe, toe + plate_thickness * n_in)

fig, ax = plt.subplots(figsize=(11, 3.6), constrained_layout=True)
plots.plot_mesh(mesh, ax, label_regions=True)
colours = iter(["tab:blue", "tab:orange", "tab:green", "tab:purple", "tab:brown", "tab:pink"])
for name, p in path_objs.items():
    plots.mark_path(ax, p, label=name, color=next(colours))
for p, lab in ((surface_path, "hot-spot read-out line"), (thickness_path, "through-thickness line")):
    plots.mark_path(ax, p, label=lab, color=next(colours), ls="--")
ax.plot(*toe, "k^", ms=8, label="toe")
plots.legend_outside(ax)
ax.set(title="imported mesh, paths and toe", xlabel="x (mm)", ylabel="y (mm)")
plt.show()

# %% [markdown]
# ## Raw and smoothed stresses
# Left: every element drawn from its own integration-point values (the jumps between elements are the
# raw result). Right: the global L2 projection (Hinton & Campbell 1974), not smoothed across the region
# boundary.

# %%
recovered = {"L2 projection": tk.project_l2(field), "nodal averaging": tk.average_nodal(field),
             "patch recovery (SPR)": tk.recover_spr(field)}
nodal = recovered["L2 projection"]
print(nodal)
fig = plots.raw_vs_smoothed(field, nodal, "sxx")
plt.show()

# %% [markdown]
# ## Paths
# Stress along each path from every recovery method, with the raw integration-point curve (element by
# element). `snn` is the stress normal to the path, `stt` the stress along it.

# %%
rows = []
for name, p in path_objs.items():
    fig, axes = plt.subplots(1, 2, figsize=(14, 3.6), constrained_layout=True)
    for ax, q in zip(axes, ("snn", "von_mises")):
        plot_path_comparison(p, recovered, field, q, ax, title=f"{name}: {q}")
    plt.show()
    for m, nf in recovered.items():
        r = tk.sample(nf, p, n=201, outside="nan")
        i = int(np.nanargmax(np.abs(r["von_mises"])))
        rows.append([name, m, r["von_mises"][i], r.distances[i], r["snn"][i]])
report.Table(rows, ["path", "method", "peak von Mises (MPa)", "at (mm)", "snn there (MPa)"],
             title="Peaks along the paths")

# %% [markdown]
# Live in Jupyter, the panel below lets you pick a path and a quantity and shift the path along its
# normal; executed headless it shows the static figure.

# %%
# NBVAL_IGNORE_OUTPUT
path_panel(path_objs, recovered, field, quantities=("snn", "von_mises", "stt"), shift_range=5.0)

# %% [markdown]
# ## Hot-spot stress at the toe
# Surface extrapolation per the IIW recommendations (Hobbacher 2016): type "a", read-out points at 0.4t
# and 1.0t (linear) and at 0.4t, 0.9t, 1.4t (quadratic), on the smoothed field, using the stress along
# the surface perpendicular to the toe line. Through-thickness linearisation (ASME BPVC VIII-2,
# Annex 5-A) of the same stress component gives the membrane and bending parts. The first figure shows
# both lines on the smoothed field with a zoom on the toe; a read-out window that crosses a region
# boundary is warned (the toe itself may lie on one: here the lug, region 2, starts at the toe).

# %%
ds = np.linspace(0.0, 1.5 * plate_thickness, 151)
surf = tk.sample(nodal, surface_path, distances=ds)
s_surface = rotate_2d(np.column_stack([surf[c] for c in field.components]), field.components, d).tangential
hs_lin = tk.hot_spot_stress((ds, s_surface), thickness=plate_thickness, rule="a-linear", regions=surf.cell_region)
hs_quad = tk.hot_spot_stress((ds, s_surface), thickness=plate_thickness, rule="a-quadratic",
                             regions=surf.cell_region)

dt = np.linspace(0.0, plate_thickness, 101)
thick = tk.sample(nodal, thickness_path, distances=dt)
s_through = rotate_2d(np.column_stack([thick[c] for c in field.components]), field.components, d).tangential
lin = tk.linearize(dt, s_through)

fig = plots.contour_with_zoom(nodal, "sxx", toe, 1.5 * plate_thickness,
                              paths={"hot-spot read-out line": surface_path, "through-thickness line": thickness_path})
plt.show()
fig, axes = plt.subplots(1, 2, figsize=(14, 3.6), constrained_layout=True)
axes[0].plot(ds, s_surface, label="smoothed (L2)")
for hs, mk in ((hs_lin, "o"), (hs_quad, "s")):
    axes[0].plot(hs.readouts["distances"], hs.readouts["stresses"], mk, label=f"read-outs {hs.rule}")
    axes[0].plot(0.0, hs.value, mk, mfc="none", ms=10, label=f"hot spot {hs.rule}")
axes[0].set(xlabel="distance from toe (mm)", ylabel="stress along surface (MPa)", title="surface extrapolation")
plots.legend_outside(axes[0])
axes[1].plot(dt, s_through, label="smoothed (L2)")
axes[1].plot(dt, lin.linear_at(dt), "--", label="structural (membrane + bending)")
axes[1].set(xlabel="depth below the toe (mm)", ylabel="stress (MPa)", title="through-thickness linearisation")
plots.legend_outside(axes[1])
plt.show()
report.Table([["surface extrapolation, type a linear", hs_lin.value],
              ["surface extrapolation, type a quadratic", hs_quad.value],
              ["membrane (linearisation)", lin.membrane],
              ["bending at the surface (linearisation)", lin.bending],
              ["structural (membrane + bending) at the surface", lin.membrane + lin.bending]],
             ["quantity", "stress (MPa)"], title="Structural hot-spot stress at the toe")

# %%
for w in hs_lin.warnings + hs_quad.warnings:
    print("warning:", w)
print(f"{len(hs_lin.warnings) + len(hs_quad.warnings)} warning(s) from the extrapolation rules "
      "(element size, read-out window across a region boundary)")

# %% [markdown]
# ## Mesh adequacy
# Zienkiewicz–Zhu indicator: the L2 norm of the difference between the recovered (SPR) and the raw
# stresses, per element, and the global relative error η.

# %%
ind = tk.error_indicator(field, recovered["patch recovery (SPR)"])
fig, ax = plt.subplots(figsize=(9, 3.6))
ind.plot(ax)
plt.show()
print(f"global relative error eta = {ind.eta:.2%} (Zienkiewicz-Zhu, L2 norm)")

# %%
if len(refined_results) >= 2:
    peaks, sizes = [], []
    for folder in [results] + list(refined_results):
        m_i, f_i = tk.read_results(input_path(folder))
        n_i = tk.project_l2(f_i)
        peaks.append(float(np.nanmax(von_mises(n_i.values, n_i.components))))
        sizes.append(tk.quality.representative_size(m_i.ncells, m_i.volumes().sum(), 2))
    conv = tk.grid_convergence(peaks[::-1], sizes[::-1])
    display(report.Table([[s, p] for s, p in zip(sizes, peaks)], ["element size h (mm)", "peak von Mises (MPa)"]))
    print(f"observed order {conv.order:.3g}; extrapolated {conv.extrapolated:.4g} MPa; GCI fine {conv.gci_fine:.2%}")
else:
    print("convergence study: give refined_results (two or more finer meshes of the same component) "
          "for a Richardson extrapolation and Roache's GCI; with one mesh only the indicator above applies")

# %% [markdown]
# ## Checks
# Static strength: the largest von Mises stress of the smoothed field at the nodes against yield over the
# safety factor. Imported results carry no edge sets, so which edges are free is not known here: at a free
# edge this stress includes the small spurious normal stress the smoothing leaves, a slight overestimate
# (the parametric workbooks remove it by equilibrium, `toolkit.assess.checks.surface_states`). Fatigue:
# the hot-spot stress range (type a linear) against the FAT class with γM and the thickness correction.
#
# With the shipped demo folder and the default parameters both checks FAIL, and that is intended: the demo
# shows what a failing calculation looks like. The invented field peaks at about 3 × 80 = 240 MPa at the
# notch root (Kirsch), above 355 / 1.5 = 236.7 MPa; and the hot-spot stress range at the toe, about 87 MPa
# at 2 × 10⁶ cycles, exceeds the design resistance FAT 90 / 1.15 = 78 MPa.

# %%
peak_vm = float(np.nanmax(von_mises(nodal.values, nodal.components)))
f_t = thickness_factor(plate_thickness, joint="cruciform-as-welded")
static = static_check(peak_vm, yield_strength, safety_factor)
fatigue = fatigue_check([hs_lin.value], [cycles], sn_curve(fat_class), gamma_M=gamma_M, thickness_factor=f_t,
                        damage_limit=1.0, name="fatigue, hot-spot stress (type a linear)")
report.Table([[c.name, c.value, c.limit, c.utilization, c.status] for c in (static, fatigue)],
             ["check", "value", "limit", "utilization", "status"], title="Check table")

# %%
static

# %%
fatigue

# %% [markdown]
# ## Cautions and method references
# - This calculation supports, and does not replace, the judgment of a qualified engineer and the
#   governing local codes. Imported results are only as good as the model that produced them: check its
#   loads, supports, materials and units.
# - The demo result folder is an invented component; its numbers illustrate the method only.
# - Global L2 projection: E. Hinton and J. S. Campbell, Int. J. Numer. Meth. Eng. 8 (1974) 461–480.
# - Superconvergent patch recovery and error indicator: O. C. Zienkiewicz and J. Z. Zhu, Int. J. Numer.
#   Meth. Eng. 33 (1992) 1331–1364 and 1365–1382.
# - Hot-spot stress, S-N curves, thickness correction: A. Hobbacher (ed.), IIW Recommendations for Fatigue
#   Design of Welded Joints and Components, 2nd ed., Springer 2016.
# - Linearisation: ASME Boiler and Pressure Vessel Code, Section VIII Division 2, Annex 5-A.
# - Grid Convergence Index: P. J. Roache (1994); procedure of I. B. Celik et al., J. Fluids Eng. 130 (2008).

# %% tags=["remove-input"]
summary = Summary(parameters=params)
summary.value("peak_stress", peak_vm, "MPa", note="largest nodal von Mises stress, L2 projection",
              digits=4, key=True)
summary.value("hot_spot_stress", hs_lin.value, "MPa", note="IIW type a, linear surface extrapolation",
              digits=4, key=True)
summary.value("hot_spot_stress_quadratic", hs_quad.value, "MPa", note="IIW type a, quadratic", digits=4)
summary.value("membrane_stress", lin.membrane, "MPa", note="through-thickness linearisation at the toe",
              digits=4)
summary.value("bending_stress", lin.bending, "MPa", note="through-thickness linearisation at the toe",
              digits=4)
summary.value("error_eta", ind.eta, "1", note="Zienkiewicz-Zhu global relative error")
summary.value("utilization", max(static.utilization, fatigue.utilization), "1", note="largest of the checks",
              digits=4)
summary.check(static, digits=4)
summary.check(fatigue, digits=4)
summary.save()

# %% tags=["remove-input"]
print(report.footer(params))
