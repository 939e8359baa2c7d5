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
# The results may hold several load cases (unit loads or time steps). Without a load history the
# workbook assesses one state, the combination `case_factors` of the cases, and takes it as the stress
# range of `cycles` constant-amplitude cycles. With a load history (`load_history`: time and one column
# of load factors per case) it combines the cases' hot-spot stresses over time at the toe, counts the
# cycles by rainflow, takes each cycle's range from the stress tensors at its two turning points (IIW
# ±60° rule) and sums the damage over `history_repeats` repeats of the history.
#
# The shipped demo folder is an invented component: a flat bracket with a semicircular notch in its upper
# edge and a lug of another part (region 2) at its right end, with two load cases, `pull` and `shear`;
# `load_history = "demo"` takes the shipped invented history of 30 lifts (`data/demo_histories/bracket.csv`).

# %% tags=["remove-input"]
%matplotlib inline

# %% tags=["remove-input"]
from dataclasses import replace
from pathlib import Path

import numpy as np
import matplotlib.pyplot as plt

import toolkit as tk
from toolkit import report
from toolkit.report import plots
from toolkit.assess.checks import fatigue_check, sn_curve, static_check, thickness_factor
from toolkit.assess.paths import path_from_spec
from toolkit.assess.ranges import cycle_tensor_ranges, iiw_range
from toolkit.core.arrays import chunk_slices
from toolkit.core.cases import case_weights, combine_nodal
from toolkit.core.locate import PointLocator
from toolkit.core.stress import rotate_2d, von_mises
from toolkit.errors import InputError
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
case_factors = {"pull": 1.0}       # the state assessed without a load history: a factor per load case of the results (cases left out weigh 0)
load_history = ""                  # "" none; a CSV file (time, then one column of load factors per load case); "demo" the shipped one
history_repeats = 20000.0          # repeats of the load history in the design life; range: 0 < x <= 1e12

# %% [markdown]
# ## Inputs

# %%
params = dict(results=results, paths=paths, toe_point=toe_point, toe_direction=toe_direction,
              plate_thickness=plate_thickness, fat_class=fat_class, cycles=cycles,
              yield_strength=yield_strength, safety_factor=safety_factor, gamma_M=gamma_M,
              refined_results=refined_results, case_factors=case_factors, load_history=load_history,
              history_repeats=history_repeats)
units = dict(toe_point="mm", plate_thickness="mm", fat_class="MPa", yield_strength="MPa")
report.inputs_table(params, units)

# %%
source = input_path(results)
mesh, cases = tk.read_cases(source)
about = tk.io.read_about(source) if source.is_dir() else {}
print(f"results: {source.name} ({about.get('description', 'no description')[:60]}...)")
print(mesh)
print(cases)
# every name is checked against the results before any work starts
unknown = [k for k in case_factors if k not in cases]
if unknown:
    raise InputError(f"case_factors: no load case {unknown[0]!r} in {source.name}; its cases are "
                     f"{', '.join(map(repr, cases.names))}")
weights = case_weights(cases.names, case_factors)
history = None
if load_history:
    history = tk.io.read_load_history(input_path("demo_histories/bracket.csv" if load_history == "demo"
                                                 else load_history))
    unknown = [k for k in history.cases if k not in cases]
    if unknown:
        raise InputError(f"load_history: column {unknown[0]!r} of {Path(history.source).name} names no load case "
                         f"of {source.name}; its cases are {', '.join(map(repr, cases.names))}")
field = cases.combine(weights, name="combined state")
print("state assessed without a history: " + " + ".join(f"{w:g} x {k}" for k, w in zip(cases.names, weights)
                                                         if w != 0.0))
if history is not None:
    left = [k for k in cases.names if k not in history.cases]
    print(f"load history: {Path(history.source).name}, {len(history)} steps over {history.time[-1] - history.time[0]:g} s, "
          f"cases {', '.join(history.cases)}" + (f" (not in it, weight 0: {', '.join(left)})" if left else ""))

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
# Shown, and read along the paths and at the toe below, is the state `case_factors`; the L2 projection
# solves every load case at once (one projector, the cases' components as columns of one block solve)
# and combines the nodal fields, which equals projecting the combined state (projection is linear).

# %%
projected = tk.recover_cases(cases, "l2")      # one projector, every case's components as columns of one solve
recovered = {"L2 projection": combine_nodal(projected, weights), "nodal averaging": tk.average_nodal(field),
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
# ## Load history at the toe
# With a load history, each load case's hot-spot stress *tensor* is extrapolated at the toe (IIW type a,
# linear, every component on its own, as above for the normal component) and combined over time by
# superposition, `σ_hs(t) = Σ_k f_k(t) σ_hs,k`. The cycles are counted by rainflow (ASTM E1049-85
# §5.4.4) on the hot-spot stress normal to the toe line; each cycle's range tensor is the change between
# the states at its two turning points, and its range is taken by the IIW rule: the principal stress
# range where its direction lies within ±60° of the normal to the toe line, else the range of the
# component normal to it (Hobbacher 2016). Palmgren–Miner's sum on the variable-amplitude curve of the
# FAT class (γM and the thickness correction as for the single range) gives the damage of one repeat,
# the life in repeats and the equivalent range at 2·10⁶ cycles.

# %%
if history is None:
    print('no load history (load_history = ""): the fatigue check below takes the hot-spot stress of the '
          "state case_factors as the range of `cycles` constant-amplitude cycles")
else:
    comps = cases.components
    hs_case = {}                              # per case: hot-spot stress tensor at the toe (type a, linear)
    for k in history.cases:
        sk = tk.sample(projected[k], surface_path, distances=ds)
        hs_case[k] = np.array([tk.hot_spot_stress((ds, sk[c]), thickness=plate_thickness, rule="a-linear",
                                                  regions=sk.cell_region).value for c in comps])
    hs_t = history.combine(hs_case)                                 # (steps, components)
    s_normal = rotate_2d(hs_t, comps, d).tangential                 # normal to the toe line
    counted = tk.rainflow(s_normal)
    deltas = cycle_tensor_ranges(hs_t, counted.starts, counted.ends, comps)
    iiw = iiw_range(deltas, comps, toe_direction=[-d[1], d[0]])    # the toe line runs across d
    cycles_iiw = replace(counted, ranges=iiw.range)
    f_t = thickness_factor(plate_thickness, joint="cruciform-as-welded")
    damage = tk.cycle_damage(cycles_iiw, sn_curve(fat_class, amplitude="variable"), gamma_M=gamma_M,
                             thickness_factor=f_t, bins=10)
    display(report.Table([[k] + list(v) for k, v in hs_case.items()], ["load case"] + [f"{c} (MPa)" for c in comps],
                         title="Hot-spot stress tensor of each load case at the toe (IIW type a, linear)"))
    fig, ax = plt.subplots(figsize=(11, 3.4), constrained_layout=True)
    ax.plot(history.time, s_normal, lw=0.8, label="hot-spot stress normal to the toe line")
    tp = np.unique(np.r_[counted.starts, counted.ends])
    ax.plot(history.time[tp], s_normal[tp], ".", ms=3, label="turning points of counted cycles")
    ax.set(xlabel="time (s)", ylabel="hot-spot stress (MPa)", title=f"hot-spot stress history at the toe {toe.tolist()} mm")
    plots.legend_outside(ax)
    plt.show()
    hist = cycles_iiw.histogram(damage.edges)
    fig, ax = plt.subplots(figsize=(8, 3.4), constrained_layout=True)
    ax.bar(hist.mids, hist.counts, width=0.9 * np.diff(hist.edges), color="tab:blue")
    ax.set(xlabel="stress range, IIW rule (MPa)", ylabel="counts (cycles per repeat)",
           title="rainflow histogram at the toe")
    plt.show()
    used = int(np.count_nonzero(iiw.principal_used))
    print(f"{counted.total:g} cycles per repeat ({counted.full} full, {counted.half} half); IIW rule: principal "
          f"range for {used} of {len(counted)} counted rows, normal component for {len(counted) - used}; "
          f"largest angle to the toe normal {float(iiw.angle.max()):.3g} deg")
    display(report.Table([list(r) for r in damage.rows()],
                         ["range from (MPa)", "range to (MPa)", "cycles", "damage", "share of D"],
                         title="Damage per range bin, one repeat of the history"))
    k = damage.largest
    print(f"governing point: the toe at {toe.tolist()} mm (hot-spot read-out towards {d.tolist()})")
    print(f"damage per repeat D = {damage.damage:.4g}; life {damage.repeats:.4g} repeats of the history")
    print("equivalent range at 2e6 cycles: " + ("none" if damage.equivalent_range is None
                                                 else f"{damage.equivalent_range:.4g} MPa"))
    if k is not None:
        a, b, n_k, d_k, share = damage.rows()[k]
        print(f"largest contributor: ranges {a:.4g} to {b:.4g} MPa, {n_k:g} cycles, {share:.1%} of D")

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
        m_i, c_i = tk.read_cases(input_path(folder))
        f_i = c_i.combine(case_factors)
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
# With a load history, the static check takes the largest nodal von Mises stress over every state of the
# history, and the fatigue check is the Palmgren–Miner sum of the counted cycles over `history_repeats`
# repeats against the damage limit 0.5 that the IIW recommendations give for welded joints under
# variable amplitude loading (from memory).
#
# With the shipped demo folder and the default parameters both checks FAIL, and that is intended: the demo
# shows what a failing calculation looks like. The invented field peaks at about 3 × 80 = 240 MPa at the
# notch root (Kirsch), above 355 / 1.5 = 236.7 MPa; and the hot-spot stress range at the toe, about 87 MPa
# at 2 × 10⁶ cycles, exceeds the design resistance FAT 90 / 1.15 = 78 MPa.

# %%
f_t = thickness_factor(plate_thickness, joint="cruciform-as-welded")
if history is None:
    peak_vm = float(np.nanmax(von_mises(nodal.values, nodal.components)))
    fatigue = fatigue_check([hs_lin.value], [cycles], sn_curve(fat_class), gamma_M=gamma_M, thickness_factor=f_t,
                            damage_limit=1.0, name="fatigue, hot-spot stress (type a linear)")
else:
    # every state of the history at the nodes, by superposition, a chunk of steps at a time
    stack = np.stack([projected[k].values for k in history.cases])             # (cases, rows, components)
    peak_vm = 0.0
    for sl in chunk_slices(len(history), stack[0].size, 2**24):
        states = np.tensordot(history.factors[sl], stack, axes=(1, 0))          # (steps, rows, components)
        peak_vm = max(peak_vm, float(np.nanmax(von_mises(states, cases.components))))
    fatigue = damage.check(repeats=history_repeats, damage_limit=0.5,
                           name="fatigue, hot-spot stress history (rainflow, IIW rule)")
static = static_check(peak_vm, yield_strength, safety_factor)
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
if history is not None:
    summary.value("history_damage", damage.damage, "1", note="Palmgren-Miner damage of one repeat of the load history",
                  digits=4, key=True)
    summary.value("history_life", damage.repeats, "repeats", note="life in repeats of the load history", digits=4)
    if damage.equivalent_range is not None:
        summary.value("equivalent_range", damage.equivalent_range, "MPa",
                      note="equivalent constant-amplitude range at 2e6 cycles, same damage", digits=4)
    summary.value("history_cycles", counted.total, "1", note="rainflow-counted cycles per repeat", digits=4)
summary.value("utilization", max(static.utilization, fatigue.utilization), "1", note="largest of the checks",
              digits=4)
summary.check(static, digits=4)
summary.check(fatigue, digits=4)
summary.save()

# %% tags=["remove-input"]
print(report.footer(params))
