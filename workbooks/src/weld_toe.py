# %% tags=["title", "remove-input"]
from toolkit.report.title import title_block
title_block("Weld toe: structural hot-spot stress and fatigue check")

# %% tags=["verdict", "remove-input"]
from toolkit.report.verdict import verdict_placeholder
verdict_placeholder()

# %% [markdown]
# **Units: mm, N and MPa throughout.**
#
# A main plate of thickness t carries a transverse attachment joined by fillet welds on one side (T
# joint: one weld toe, on the upper face) or both sides (cruciform: a toe on each face of the main plate),
# not load-carrying. Membrane and bending stress ranges act on the main plate. The workbook models the
# joint in plane strain with the toolkit's solver, smooths the stresses by global L2 projection, and at
# every weld toe obtains the structural hot-spot stress two ways side by side: surface extrapolation per
# the IIW recommendations (type "a", linear and quadratic) and membrane plus bending through the plate. It
# names the governing toe and checks fatigue there with the hot-spot FAT class, the thickness correction
# and either a stress-range histogram or, with `load_history`, a load history counted by rainflow at each
# toe; optionally it adds an effective-notch model (toe rounded to the 1 mm reference radius).

# %% tags=["remove-input"]
%matplotlib inline

# %% tags=["remove-input"]
import numpy as np
import matplotlib.pyplot as plt

import toolkit as tk
from toolkit import report
from toolkit.report import plots
from toolkit.assess.checks import SNCurve, fatigue_check, sn_curve, thickness_factor
from toolkit.fem.models import weld_toe, weld_toe_sizes
from toolkit.fem.solver import solve
from toolkit.core.stress import max_abs_principal
from toolkit.report.steps import (check_table, convergence_lines, convergence_study, finer_study_note, recover_all,
                                  study_sizes)
from toolkit.report.widgets import path_panel, plot_path_comparison
from toolkit.io import read_load_history
from toolkit.workbook import Summary, input_path

# %% tags=["parameters"]
plate_thickness = 12.0          # mm, main plate t; range: 2 <= x <= 200
attachment_thickness = 10.0     # mm; range: 0 < x <= 200
weld_leg = 8.0                  # mm, fillet weld leg; range: 0 < x <= 100
sides = 2                       # welded sides; one of: 1, 2
membrane_stress_range = 80.0    # MPa, signed change of the nominal membrane stress over the cycle; range: -1000 <= x <= 1000
bending_stress_range = 20.0     # MPa, signed change of the nominal bending stress over the cycle, + = tension at the upper surface; range: -1000 <= x <= 1000
cycles = 2000000.0              # total cycles of the histogram (not used with a load history); range: 0 < x <= 1e12
spectrum = [[1.0, 0.05], [0.75, 0.25], [0.5, 0.7]]   # rows (fraction of the range, fraction of the cycles), not used with a load history; length: >= 1
load_history = ""               # CSV "time, membrane, bending" (nominal stresses in MPa over time), "demo" for the shipped one, "" for the range and spectrum above
history_repeats = 10000.0       # how often the load history occurs in the design life; range: 0 < x <= 1e12
fat_class = 100.0               # MPa, hot-spot FAT class (non-load-carrying attachment); range: 36 <= x <= 160
gamma_M = 1.15                  # partial factor on fatigue resistance; range: 1 <= x <= 2
damage_limit = 0.5              # allowed Palmgren-Miner sum; range: 0 < x <= 1
element_size = 0.0              # mm, element size at the toe; 0: scaled to the joint, min(t, 2 leg)/48; range: 0 <= x <= 20; rule: element_size <= min(plate_thickness, weld_leg) / 2; rule: element_size == 0 or element_size >= min(plate_thickness, weld_leg) / 200
effective_notch = False         # also run the effective-notch model (toe radius 1 mm); rule: effective_notch == False or plate_thickness >= 5; rule: effective_notch == False or weld_leg >= 0.59

# %% [markdown]
# ## Inputs

# %%
params = dict(plate_thickness=plate_thickness, attachment_thickness=attachment_thickness, weld_leg=weld_leg,
              sides=sides, membrane_stress_range=membrane_stress_range,
              bending_stress_range=bending_stress_range, cycles=cycles, spectrum=spectrum,
              load_history=load_history, history_repeats=history_repeats, fat_class=fat_class,
              gamma_M=gamma_M, damage_limit=damage_limit, element_size=element_size,
              effective_notch=effective_notch)
h_toe, h_coarsest = weld_toe_sizes(plate_thickness, weld_leg, element_size)
report.inputs_table(params, dict(plate_thickness="mm", attachment_thickness="mm", weld_leg="mm",
                                 membrane_stress_range="MPa", bending_stress_range="MPa", fat_class="MPa",
                                 element_size="mm"),
                    notes=dict(element_size=f"{'scaled default' if element_size == 0 else 'given'}: {h_toe:.4g} mm "
                                            f"used = t/{plate_thickness / h_toe:.3g}"))

# %%
spec = np.asarray(spectrum, float)
if spec.ndim != 2 or spec.shape[1] != 2 or np.any(spec <= 0):
    raise ValueError("spectrum: rows of two positive numbers (fraction of the range, fraction of the cycles)")
if abs(spec[:, 1].sum() - 1.0) > 1e-9:
    raise ValueError(f"spectrum: the cycle fractions add up to {spec[:, 1].sum():.6g}, not 1")
report.Table([[f, c, c * cycles] for f, c in spec], ["fraction of the range", "fraction of cycles", "cycles"],
             title="Stress-range histogram (applied to the hot-spot stress range)" if not load_history else
             "Stress-range histogram: not used (a load history is given; spectrum and cycles are ignored)")

# %% [markdown]
# ## The model
# Half of the joint (symmetry about the attachment's centre line), plane strain, quad8 elements graded
# toward the toe. The element size at the toe is `element_size`, or min(t, 2 × weld leg)/48 when it is 0
# (the default, scaled to the joint: 0.25 mm for t = 12 mm). The load ranges act as a traction on the plate end,
# linear through the thickness:
# σxx = σm + σb y / (t/2), so the upper face (y = +t/2) sees σm + σb and the lower face σm − σb. The two
# inputs are signed changes over the cycle; their relative sign says which face sees the larger range.

# %%
def make(h, toe_radius=None, membrane=membrane_stress_range, bending=bending_stress_range):
    return weld_toe(plate_thickness, attachment_thickness, weld_leg, sides=sides, toe_radius=toe_radius,
                    element_size=h, membrane_stress=membrane, bending_stress=bending)

model = make(h_toe)
sol = solve(model)
print(model)
print(sol)
fig, ax = plt.subplots(figsize=(10, 4.5))
model.plot(ax)
plt.show()

# %% [markdown]
# ## Raw and smoothed stresses

# %%
field = sol.stress
recovered = recover_all(field)
nodal = recovered["L2 projection"]
fig = plots.raw_vs_smoothed(field, nodal, "sxx")
plt.show()

# %% [markdown]
# ## Hot-spot stress at every toe
# The T joint (`sides = 1`) has one weld toe, on the upper face of the main plate (y = +t/2); the cruciform
# (`sides = 2`) has one on each face, at the same x (upper y = +t/2, lower y = −t/2). Each toe is read on its
# own: the plate surface from that toe away from the weld, and the section through the plate from that toe
# to the other face.
#
# The stress perpendicular to the weld toe line is σxx on the plate surface. The toe line runs along z in
# this plane-strain model; on the free surface σxy = 0 and σxz = 0, so σxx (normal to the toe line) is a
# principal stress, the larger one in magnitude (σzz = ν σxx there), and the IIW rule (principal stress
# within ±60° of the normal to the toe line) picks σxx. Surface extrapolation uses read-out points at 0.4t
# and 1.0t (linear) and 0.4t, 0.9t, 1.4t (quadratic) from the toe (IIW type "a", fine mesh), on each smoothed
# field. The hot-spot stress range at a toe is the magnitude of the extrapolated change (a range is never
# signed). The membrane and bending parts at a toe come from the nodal forces of the elements on the loaded
# side of the section through the plate at the toe (structural stress by nodal forces, Dong 2001): they
# follow from equilibrium, so they are exact at any element size; their sum at that toe's surface is the
# structural stress. The through-thickness linearisation of the smoothed σxx sampled along the same section
# (ASME BPVC VIII-2, Annex 5-A) is the tool for smooth fields (stress classification lines); at a sharp toe
# the sampled stress is singular at the toe node and that linearisation drifts as the mesh is refined, so
# it is shown beside for comparison only and not used. The governing toe is the one with the larger
# hot-spot stress range (type a linear, L2 projection); with a load history, the one with the larger
# damage (below). The contour figure shows the lines (a filled dot marks each one's start, distance 0 in
# the plots below) and a zoom on the toes with the mesh. A read-out window that crosses a region boundary
# is warned.

# %%
g = model.geometry
t = plate_thickness
ds = np.linspace(0.0, 1.5 * t, 151)
dt = np.linspace(0.0, t, 121)
toe_sign = {"upper": 1.0} if sides == 1 else {"upper": 1.0, "lower": -1.0}   # face of each toe: y = sign t/2


def toe_point(geometry, name):
    return np.array([geometry["toe_x"], toe_sign[name] * geometry["surface_y"]])


def surface_hot_spot(nf, start, rule):
    """IIW type a hot-spot value (signed change of σxx) on the surface line from ``start``."""
    on = tk.sample(nf, tk.line(start, start + (1.5 * t, 0.0)), distances=ds)
    return tk.hot_spot_stress((ds, on["sxx"]), thickness=t, rule=rule, element_size=h_toe,
                              regions=on.cell_region)


toes = {}
for name in toe_sign:
    p = toe_point(g, name)
    surface = tk.line(p, p + (1.5 * t, 0.0))
    surface.label = f"plate surface from the {name} toe"
    section = tk.line(p, p * (1.0, -1.0))
    section.label = f"section at the {name} toe"
    hs = {m: (surface_hot_spot(nf, p, "a-linear"), surface_hot_spot(nf, p, "a-quadratic"))
          for m, nf in recovered.items()}
    sec = tk.section_resultants(field, p, p * (1.0, -1.0), side=p + (t, 0.0), label=f"section at the {name} toe")
    through = tk.sample(nodal, section, distances=dt)["sxx"]
    toes[name] = dict(point=p, surface=surface, section=section, hs=hs, sec=sec, through=through,
                      lin=tk.linearize(dt, through), range=abs(hs["L2 projection"][0].value),
                      nominal=abs(membrane_stress_range + toe_sign[name] * bending_stress_range))

ranked = sorted(toes, key=lambda k: -toes[k]["range"])
tie = len(toes) == 2 and abs(toes["upper"]["range"] - toes["lower"]["range"]) <= 1e-9 * max(toes["upper"]["range"], 1e-300)
governing = "upper" if tie else ranked[0]
for name, d in toes.items():
    sec, lin = d["sec"], d["lin"]
    off = round(sec.membrane / membrane_stress_range - 1, 6) + 0.0 if membrane_stress_range else 0.0   # no "-0.00 %"
    print(f"{name} toe: equilibrium check: membrane by nodal forces {sec.membrane:.4g} MPa against the applied "
          f"{membrane_stress_range:.4g} MPa ({off:+.2%})" if membrane_stress_range else f"{name} toe: no membrane load")
    print(f"{name} toe: sampled linearisation of the smoothed field (not used at the sharp toe): membrane "
          f"{lin.membrane:.4g} MPa, bending {lin.bending:.4g} MPa ({lin.membrane - sec.membrane:+.3g} and "
          f"{lin.bending - sec.bending:+.3g} MPa from the nodal-force values; the sampled stress is singular at "
          "the toe node)")
if len(toes) == 1:
    print("T joint: one weld toe (upper face); it governs")
elif tie:
    print("the two toes carry the same hot-spot stress range (within round-off): the upper toe is taken")
else:
    print(f"governing toe (larger hot-spot stress range, type a linear, L2): {governing}, "
          f"{toes[governing]['range']:.4g} MPa against {toes[ranked[1]]['range']:.4g} MPa")
report.Table([[m] + [abs(r.value) for d in toes.values() for r in d["hs"][m]] for m in recovered],
             ["recovery"] + [f"{name}: type a {kind} (MPa)" for name in toes for kind in ("linear", "quadratic")],
             title="Hot-spot stress range by surface extrapolation, each toe")

# %%
def per_toe(get):
    return [get(d) for d in toes.values()]


report.Table([["surface extrapolation, type a linear (L2): range"] + per_toe(lambda d: abs(d["hs"]["L2 projection"][0].value)),
              ["surface extrapolation, type a quadratic (L2): range"] + per_toe(lambda d: abs(d["hs"]["L2 projection"][1].value)),
              ["nodal forces (used at the toe): membrane, signed"] + per_toe(lambda d: d["sec"].membrane),
              ["nodal forces (used at the toe): bending at the toe's surface, signed"] + per_toe(lambda d: d["sec"].bending),
              ["nodal forces (used at the toe): structural range |membrane + bending|"] + per_toe(lambda d: abs(d["sec"].structural[0])),
              ["sampled linearisation (comparison only): membrane"] + per_toe(lambda d: d["lin"].membrane),
              ["sampled linearisation (comparison only): bending at the toe's surface"] + per_toe(lambda d: d["lin"].bending),
              ["sampled linearisation (comparison only): peak part at the surface"] + per_toe(lambda d: d["lin"].peak[0]),
              ["nominal range at the toe's face |σm ± σb|"] + per_toe(lambda d: d["nominal"])],
             ["quantity"] + [f"{name} toe (MPa)" for name in toes],
             title=f"Structural hot-spot stress at each toe, both methods (governing: {governing} toe)")

# %%
gov = toes[governing]
hs_lin, hs_quad = gov["hs"]["L2 projection"]
sec, lin, through = gov["sec"], gov["lin"], gov["through"]
toe_paths = {d["surface"].label: d["surface"] for d in toes.values()}
toe_paths["section through the plate at the toe"] = gov["section"]
centre = np.array([g["toe_x"], 0.0]) if len(toes) == 2 else gov["point"]
fig = plots.contour_with_zoom(nodal, "sxx", centre, 1.6 * t, paths=toe_paths)
plt.show()
fig, axes = plt.subplots(1, len(toes), figsize=(7 * len(toes), 4), constrained_layout=True, squeeze=False)
for ax, (name, d) in zip(axes[0], toes.items()):
    r_lin, r_quad = d["hs"]["L2 projection"]
    plot_path_comparison(d["surface"], recovered, field, "sxx", ax, marks=list(r_quad.readouts["distances"]),
                         title=f"plate surface ahead of the {name} toe (signed change)")
    for r, mk in ((r_lin, "o"), (r_quad, "s")):
        ax.plot(r.readouts["distances"], r.readouts["stresses"], "k" + mk, mfc="none")
        ax.plot(0.0, r.value, "k" + mk, ms=9, label=f"hot spot, {r.rule}")
    plots.legend_outside(ax)
plt.show()
fig, ax = plt.subplots(figsize=(7, 4), constrained_layout=True)
ax.plot(through, dt, label="sxx, L2 projection")
ax.plot(sec.linear_at(dt), dt, "-", label="membrane + bending by nodal forces (used)")
ax.plot(lin.linear_at(dt), dt, "--", label="sampled linearisation (comparison only)")
ax.invert_yaxis()
ax.set(xlabel="sxx (MPa)", ylabel=f"depth below the {governing} toe (mm)",
       title=f"membrane and bending at the {governing} toe section")
plots.legend_outside(ax)
ax.grid(True, alpha=0.3)
plt.show()
warns = [(name, w) for name, d in toes.items() for r in d["hs"]["L2 projection"] for w in r.warnings]
for name, w in warns:
    print(f"warning ({name} toe):", w)
print(f"{len(warns)} warning(s) from the extrapolation rules")

# %% [markdown]
# Live in Jupyter, pick the path and quantity, or shift the path.

# %%
# NBVAL_IGNORE_OUTPUT
path_panel(toe_paths, recovered, field, quantities=("sxx", "von_mises", "s1"), shift_range=0.0)

# %% [markdown]
# ## Load history (optional)
# With `load_history` set (a CSV file with the columns `time, membrane, bending`, or `"demo"` for the shipped
# demo history), the columns are load factors on two unit load cases, 1 MPa nominal membrane stress and
# 1 MPa nominal bending stress (upper surface), so they are the nominal stresses in MPa over time. The model
# is linear elastic, so the hot-spot stress at each toe is σhs(τ) = m(τ) σhs,m + b(τ) σhs,b, with σhs,m and
# σhs,b the hot-spot values (type a linear, L2 projection) of the two unit cases, solved on the same mesh; the
# superposition is checked against the solve with the input ranges. Each toe's hot-spot history is counted by
# rainflow (ASTM E1049-85, §5.4.4), and its damage is summed by Palmgren–Miner on the same S-N curve, γM and
# thickness correction as the range check. The toe with the larger damage governs and is checked below
# (`history_repeats` times the damage of one pass against the damage limit). In this mode the `spectrum` and
# `cycles` parameters are not used.

# %%
L_toe = attachment_thickness + 2 * weld_leg
f_t = thickness_factor(t, joint="cruciform-as-welded", toe_distance=L_toe)
curve = sn_curve(fat_class, amplitude="variable")
history, counted, damage = None, {}, {}
if load_history:
    source = input_path("demo_histories/weld_toe.csv" if load_history == "demo" else load_history)
    history = read_load_history(source, cases=("membrane", "bending"))
    print(f"{history} from {source.name}")
    unit = {}
    for case, (m_u, b_u) in {"membrane": (1.0, 0.0), "bending": (0.0, 1.0)}.items():
        nf_u = tk.project_l2(solve(make(h_toe, membrane=m_u, bending=b_u)).stress)
        unit[case] = {name: surface_hot_spot(nf_u, toe_point(g, name), "a-linear").value for name in toes}
    for name, d in toes.items():
        combined = membrane_stress_range * unit["membrane"][name] + bending_stress_range * unit["bending"][name]
        direct = d["hs"]["L2 projection"][0].value
        agree = abs(combined - direct) <= 1e-6 * max(abs(direct), 1.0)
        print(f"{name} toe: hot spot per unit case {unit['membrane'][name]:.4g} (membrane) and "
              f"{unit['bending'][name]:.4g} (bending) MPa per MPa; superposition of the input ranges "
              f"{combined:.4g} MPa, direct solve {direct:.4g} MPa: " + ("agree" if agree else "DO NOT AGREE"))
        d["history"] = history.combine({c: unit[c][name] for c in history.cases})
        counted[name] = tk.rainflow(d["history"])
        damage[name] = tk.cycle_damage(counted[name], curve, gamma_M=gamma_M, thickness_factor=f_t)
    by_damage = sorted(toes, key=lambda k: -damage[k].damage)
    tie = len(toes) == 2 and abs(damage["upper"].damage - damage["lower"].damage) <= 1e-9 * damage["upper"].damage
    governing = "upper" if tie else by_damage[0]
    print(("the two toes take the same damage (within round-off): the upper toe is taken" if tie else
           f"governing toe (larger damage of the history): {governing}") if len(toes) == 2 else
          "T joint: one weld toe (upper face); it governs")
    gov = toes[governing]
    hs_lin, hs_quad = gov["hs"]["L2 projection"]
    sec, lin, through = gov["sec"], gov["lin"], gov["through"]
    fig, ax = plt.subplots(figsize=(10, 3.5), constrained_layout=True)
    for name, d in toes.items():
        ax.plot(history.time, d["history"], lw=0.8, label=f"{name} toe")
    ax.set(xlabel="time (s)", ylabel="hot-spot stress (MPa)", title="hot-spot stress history at each toe")
    ax.grid(True, alpha=0.3)
    plots.legend_outside(ax)
    plt.show()
else:
    print('no load history given (load_history = ""): the ranges, spectrum and cycles parameters are used')

# %%
if history is not None and not any(len(c) for c in counted.values()):
    print("the hot-spot history has no cycles at any toe (constant): no damage")
elif history is not None:
    top = max(float(c.ranges.max()) for c in counted.values() if len(c))
    edges = np.linspace(0.0, top, 11)
    fig, ax = plt.subplots(figsize=(10, 3.5), constrained_layout=True)
    width = np.diff(edges) / (len(toes) + 1)
    for i, (name, c) in enumerate(counted.items()):
        hist = c.histogram(edges)
        ax.bar(edges[:-1] + (i + 0.5) * width, hist.counts, width=width, align="edge", label=f"{name} toe")
    ax.set_yscale("log")
    ax.set(xlabel="hot-spot stress range (MPa)", ylabel="cycles per pass of the history (log scale)",
           title="rainflow histogram at each toe (ASTM E1049-85)")
    ax.grid(True, alpha=0.3)
    plots.legend_outside(ax)
    plt.show()
    display(report.Table(
        [[name, damage[name].cycles, float(c.ranges.max()) if len(c) else 0.0, damage[name].damage,
          damage[name].repeats, damage[name].equivalent_range if damage[name].equivalent_range is not None else "none"]
         for name, c in counted.items()],
        ["toe", "counted cycles", "largest range (MPa)", "damage per pass", "life (passes)",
         f"equivalent range at {curve.n_ref:.3g} cycles (MPa)"],
        title="Damage of one pass of the load history at each toe"))
    print(f"damage table of the governing ({governing}) toe:")
    display(damage[governing])
else:
    print("no load history: no rainflow counting")

# %% [markdown]
# ## Mesh adequacy
# Zienkiewicz–Zhu indicator, and the hot-spot stress (type a linear, L2) at three toe element sizes in the
# ratio 2, with Richardson extrapolation and Roache's GCI (Celik et al. 2008): h, 2h and 4h, with the
# coarsest capped at min(t, 2 leg)/12; when 4h would exceed it the sizes are min(t, 2 leg)/48, /24 and /12,
# finer than h, so the coarsest mesh stays valid for the mesher and in the asymptotic range.

# %%
ind = tk.error_indicator(field, recovered["patch recovery (SPR)"])
fig, ax = plt.subplots(figsize=(10, 4.5))
ind.plot(ax)
plt.show()
print(f"global relative error eta = {ind.eta:.2%} (Zienkiewicz-Zhu, L2 norm)")

# %%
# NBVAL_IGNORE_OUTPUT
def hot_spot_at(h):
    m = make(h)
    nf = tk.project_l2(solve(m).stress)
    toe_h = toe_point(m.geometry, governing)
    s = tk.sample(nf, tk.line(toe_h, toe_h + (1.5 * t, 0.0)), distances=ds)["sxx"]
    return abs(tk.hot_spot_stress((ds, s), thickness=t, rule="a-linear").value)

sizes = study_sizes(h_toe, coarsest=h_coarsest)
values, conv, conv_table = convergence_study(hot_spot_at, sizes, quantity="hot-spot stress range")

# %%
display(conv_table)
print("\n".join(convergence_lines(conv)))
note = finer_study_note(sizes, h_toe, h_coarsest, "min(t, 2 leg)/12")
if note:
    print(note)

# %% [markdown]
# ## Effective notch (optional)
# With `effective_notch = True` the toe is rounded to the reference radius of 1 mm and the largest
# principal stress range at the notch is checked against FAT 225 (IIW recommendations, effective notch
# stress, steel; plate thickness of 5 mm and more).

# %%
notch = None
if effective_notch:
    nm = make(min(h_toe, 0.25), toe_radius=1.0)
    nn = tk.project_l2(solve(nm).stress)
    notch = float(np.max(np.abs(max_abs_principal(nn.values, nn.components))))
    nominal = max(d["nominal"] for d in toes.values())
    print(f"effective notch stress range (largest principal in magnitude, r = 1 mm): {notch:.4g} MPa"
          + (f" (K = {notch / nominal:.3g} on the larger nominal range at a toe's face, {nominal:.4g} MPa)"
             if nominal > 0 else ""))
else:
    print("effective-notch model not requested (set effective_notch = True)")

# %% [markdown]
# ## Checks
# At the governing toe: the hot-spot stress range (type a linear, L2 projection) times the histogram, or
# with a load history the cycles counted by rainflow from that toe's hot-spot history, against the FAT
# class reduced by the thickness correction f(t) = (25/t_eff)^0.3 for t_eff > 25 mm (cruciform and T
# joints, as welded; t_eff from the toe distance L = attachment thickness + 2 × weld leg when L/t ≤ 2) and
# divided by γM; Palmgren–Miner sum against the damage limit. Constant amplitude beyond the knee is not
# assumed: the variable-amplitude curve (slope 22 beyond the knee, IIW 2016) is used. Only stress ranges
# enter: the IIW route for as-welded joints applies no mean-stress correction (f(R) = 1, IIW
# recommendations, Hobbacher 2016), because the welding residual stresses are taken as high; the
# non-welded route with a mean-stress criterion is in the shoulder_fillet workbook.

# %%
hot_spot_range = abs(hs_lin.value)
if history is None:
    ranges = spec[:, 0] * hot_spot_range
    n_i = spec[:, 1] * cycles
    checks = [fatigue_check(ranges, n_i, curve, gamma_M=gamma_M, thickness_factor=f_t, damage_limit=damage_limit,
                            name=f"fatigue, hot-spot stress (type a linear, {governing} toe)")]
else:
    checks = [damage[governing].check(history_repeats, damage_limit,
                                      name=f"fatigue, hot-spot stress history ({governing} toe)")]
if notch is not None and history is not None:
    print("effective-notch check not run with a load history (its stress above is for the input ranges)")
elif notch is not None:
    notch_curve = SNCurve("effective notch, steel", fat=225.0, m1=3.0, knee_cycles=1e7, m2=22.0)
    checks.append(fatigue_check(spec[:, 0] * notch, n_i, notch_curve, gamma_M=gamma_M,
                                damage_limit=damage_limit, name="fatigue, effective notch stress"))
print(f"thickness correction f(t) = {f_t:.4g} (t = {t:g} mm, L = {L_toe:g} mm)")
check_table(checks)

# %%
checks[0]

# %% [markdown]
# ## Cautions and method references
# - This calculation supports, and does not replace, the judgment of a qualified engineer and the
#   governing local codes. The FAT class must fit the detail and the stress type (hot-spot classes differ
#   from nominal-stress classes); weld quality, misalignment (not modelled here), residual stresses,
#   environment and the load history are the engineer's to confirm.
# - Hot-spot stress, FAT classes, thickness correction, effective notch stress, Palmgren–Miner: A.
#   Hobbacher (ed.), IIW Recommendations for Fatigue Design of Welded Joints and Components, 2nd ed.,
#   Springer 2016.
# - Linearisation: ASME Boiler and Pressure Vessel Code, Section VIII Division 2, Annex 5-A.
# - Membrane and bending by nodal forces: P. Dong, A structural stress definition and numerical
#   implementation for fatigue analysis of welded joints, Int. J. Fatigue 23 (2001) 865–876.
# - Global L2 projection: E. Hinton and J. S. Campbell, Int. J. Numer. Meth. Eng. 8 (1974) 461–480.
# - Patch recovery and error indicator: O. C. Zienkiewicz and J. Z. Zhu, Int. J. Numer. Meth. Eng. 33
#   (1992).
# - Grid Convergence Index: P. J. Roache (1994); procedure of I. B. Celik et al., J. Fluids Eng. 130 (2008).

# %% tags=["remove-input"]
summary = Summary(parameters=params)
why = "larger damage of the load history" if history is not None else "larger hot-spot stress range"
summary.value("governing_toe", governing, "-", note=f"toe checked ({why}; upper face y = +t/2, lower y = -t/2)")
summary.value("hot_spot_stress", hot_spot_range, "MPa",
              note=f"governing ({governing}) toe, range for the input ranges: IIW type a, linear surface "
                   "extrapolation, L2", digits=4, key=True)
for name, d in toes.items():
    summary.value(f"hot_spot_stress_{name}", d["range"], "MPa",
                  note=f"{name} toe, range: IIW type a, linear, L2", digits=4)
summary.value("hot_spot_stress_quadratic", abs(hs_quad.value), "MPa",
              note=f"governing ({governing}) toe, range: IIW type a, quadratic, L2", digits=4)
summary.value("membrane_stress", sec.membrane, "MPa",
              note=f"nodal forces at the {governing} toe section (Dong 2001), signed change", digits=4)
summary.value("bending_stress", sec.bending, "MPa",
              note=f"nodal forces at the {governing} toe section (Dong 2001), at that toe's surface, signed change",
              digits=4)
summary.value("structural_stress_nodal_forces", abs(sec.structural[0]), "MPa",
              note=f"|membrane + bending| by nodal forces at the {governing} toe surface", digits=4)
summary.value("membrane_stress_sampled", lin.membrane, "MPa",
              note="sampled linearisation of the smoothed field (comparison only)", digits=4)
summary.value("bending_stress_sampled", lin.bending, "MPa",
              note="sampled linearisation of the smoothed field (comparison only)", digits=4)
if gov["nominal"] > 0:
    summary.value("hot_spot_scf", hot_spot_range / gov["nominal"], "1",
                  note=f"hot-spot / nominal range |membrane ± bending| at the {governing} toe's face", digits=4)
summary.value("thickness_factor", f_t, "1")
if history is not None:
    dmg = damage[governing]
    summary.value("history_damage", dmg.damage, "1", note=f"Palmgren-Miner damage of one pass, {governing} toe",
                  digits=4, key=True)
    for name in toes:
        summary.value(f"history_damage_{name}", damage[name].damage, "1", note=f"one pass, {name} toe", digits=4)
    if np.isfinite(dmg.repeats):
        summary.value("history_life_repeats", dmg.repeats, "1", note="life in passes of the history (1/D)", digits=4)
    if dmg.equivalent_range is not None:
        summary.value("equivalent_range", dmg.equivalent_range, "MPa",
                      note=f"equal-damage range at {dmg.n_ref:.3g} cycles, {governing} toe", digits=4)
summary.value("gci_fine", conv.gci_fine, "1", note="hot-spot stress, Roache's GCI", digits=4)
summary.value("error_eta", ind.eta, "1", note="Zienkiewicz-Zhu global relative error")
if notch is not None:
    summary.value("effective_notch_stress", notch, "MPa", digits=4, key=True)
summary.value("utilization", max(c.utilization for c in checks), "1", note="largest of the checks",
              digits=4)
for c in checks:
    summary.check(c, digits=4)
summary.save()

# %% tags=["remove-input"]
print(report.footer(params))
