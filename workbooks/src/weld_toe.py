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
# joint) or both sides (cruciform), not load-carrying. Membrane and bending stress ranges act on the
# main plate. The workbook models the joint in plane strain with the toolkit's solver, smooths the
# stresses by global L2 projection, and obtains the structural hot-spot stress at the weld toe two
# ways side by side: surface extrapolation per the IIW recommendations (type "a", linear and quadratic)
# and through-thickness linearisation. It then checks fatigue with the hot-spot FAT class, the thickness
# correction and a stress-range histogram; optionally it adds an effective-notch model (toe rounded to
# the 1 mm reference radius).

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
from toolkit.report.steps import check_table, convergence_lines, convergence_study, recover_all, study_sizes
from toolkit.report.widgets import path_panel, plot_path_comparison
from toolkit.workbook import Summary

# %% tags=["parameters"]
plate_thickness = 12.0          # mm, main plate t; range: 2 <= x <= 200
attachment_thickness = 10.0     # mm; range: 0 < x <= 200
weld_leg = 8.0                  # mm, fillet weld leg; range: 0 < x <= 100
sides = 2                       # welded sides; one of: 1, 2
membrane_stress_range = 80.0    # MPa, nominal membrane stress range in the main plate; range: -1000 <= x <= 1000
bending_stress_range = 20.0     # MPa, nominal bending stress range at the toe-side surface; range: -1000 <= x <= 1000
cycles = 2000000.0              # total cycles of the histogram; range: 0 < x <= 1e12
spectrum = [[1.0, 0.05], [0.75, 0.25], [0.5, 0.7]]   # rows (fraction of the range, fraction of the cycles); length: >= 1
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
              bending_stress_range=bending_stress_range, cycles=cycles, spectrum=spectrum, fat_class=fat_class,
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
             title="Stress-range histogram (applied to the hot-spot stress range)")

# %% [markdown]
# ## The model
# Half of the joint (symmetry about the attachment's centre line), plane strain, quad8 elements graded
# toward the toe. The element size at the toe is `element_size`, or min(t, 2 × weld leg)/48 when it is 0
# (the default, scaled to the joint: 0.25 mm for t = 12 mm). The load ranges act as a traction on the plate end, linear through the thickness.

# %%
def make(h, toe_radius=None):
    return weld_toe(plate_thickness, attachment_thickness, weld_leg, sides=sides, toe_radius=toe_radius,
                    element_size=h, membrane_stress=membrane_stress_range, bending_stress=bending_stress_range)

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
# ## Hot-spot stress at the toe
# The stress perpendicular to the weld toe line is σxx on the plate surface. Surface extrapolation uses
# read-out points at 0.4t and 1.0t (linear) and 0.4t, 0.9t, 1.4t (quadratic) from the toe (IIW type "a",
# fine mesh), on each smoothed field. The membrane and bending parts at the toe come from the nodal forces
# of the elements on the loaded side of the section through the plate at the toe (structural stress by
# nodal forces, Dong 2001): they follow from equilibrium, so they are exact at any element size; their sum
# at the surface is the structural stress. The through-thickness linearisation of the smoothed σxx sampled
# along the same section (ASME BPVC VIII-2, Annex 5-A) is the tool for smooth fields (stress classification
# lines); at a sharp toe the sampled stress is singular at the toe node and that linearisation drifts as the
# mesh is refined, so it is shown beside for comparison only and not used. The contour figure shows both
# lines (a filled dot marks each one's start, distance 0 in the plots below) and a zoom on the toe with the
# mesh. A read-out window that crosses a region boundary is warned.

# %%
g = model.geometry
t = plate_thickness
toe = np.array([g["toe_x"], g["surface_y"]])
surface = tk.line(toe, toe + (1.5 * t, 0.0))
surface.label = "plate surface from the toe"
section = tk.line(toe, toe - (0.0, t))
section.label = "section at the toe"
ds = np.linspace(0.0, 1.5 * t, 151)
rows, hs = [], {}
for name, nf in recovered.items():
    on_surface = tk.sample(nf, surface, distances=ds)
    s, reg = on_surface["sxx"], on_surface.cell_region
    lin_r = tk.hot_spot_stress((ds, s), thickness=t, rule="a-linear", element_size=h_toe, regions=reg)
    quad_r = tk.hot_spot_stress((ds, s), thickness=t, rule="a-quadratic", element_size=h_toe, regions=reg)
    hs[name] = (lin_r, quad_r)
    rows.append([name, lin_r.value, quad_r.value])
sec = tk.section_resultants(field, toe, toe - (0.0, t), side=toe + (t, 0.0), label="section at the toe")
dt = np.linspace(0.0, t, 121)
through = tk.sample(nodal, section, distances=dt)["sxx"]
lin = tk.linearize(dt, through)
hs_lin, hs_quad = hs["L2 projection"]
nominal = membrane_stress_range + bending_stress_range
off = round(sec.membrane / membrane_stress_range - 1, 6) + 0.0 if membrane_stress_range else 0.0   # no "-0.00 %"
print(f"equilibrium check: membrane by nodal forces {sec.membrane:.4g} MPa against the applied "
      f"{membrane_stress_range:.4g} MPa ({off:+.2%})" if membrane_stress_range else "no membrane load")
print(f"sampled linearisation of the smoothed field (not used at the sharp toe): membrane {lin.membrane:.4g} MPa, "
      f"bending {lin.bending:.4g} MPa ({lin.membrane - sec.membrane:+.3g} and {lin.bending - sec.bending:+.3g} MPa "
      "from the nodal-force values; the sampled stress is singular at the toe node)")
report.Table(rows, ["recovery", "type a linear (MPa)", "type a quadratic (MPa)"],
             title="Hot-spot stress range by surface extrapolation")

# %%
report.Table([["surface extrapolation, type a linear (L2)", hs_lin.value, hs_lin.value / nominal],
              ["surface extrapolation, type a quadratic (L2)", hs_quad.value, hs_quad.value / nominal],
              ["nodal forces (used at the toe): membrane", sec.membrane, sec.membrane / nominal],
              ["nodal forces (used at the toe): bending at the surface", sec.bending, sec.bending / nominal],
              ["nodal forces (used at the toe): structural (membrane + bending)", sec.structural[0],
               sec.structural[0] / nominal],
              ["sampled linearisation (comparison only): membrane", lin.membrane, lin.membrane / nominal],
              ["sampled linearisation (comparison only): bending at the surface", lin.bending,
               lin.bending / nominal],
              ["sampled linearisation (comparison only): peak part at the surface", lin.peak[0],
               lin.peak[0] / nominal]],
             ["quantity", "stress range (MPa)", "per nominal (membrane + bending)"],
             title="Structural hot-spot stress, both methods")

# %%
fig = plots.contour_with_zoom(nodal, "sxx", toe, 1.6 * t, paths={"plate surface": surface, "section": section})
plt.show()
fig, axes = plt.subplots(1, 2, figsize=(14, 4), constrained_layout=True)
plot_path_comparison(surface, recovered, field, "sxx", axes[0], marks=list(hs_quad.readouts["distances"]),
                     title="plate surface ahead of the toe")
for r, mk in ((hs_lin, "o"), (hs_quad, "s")):
    axes[0].plot(r.readouts["distances"], r.readouts["stresses"], "k" + mk, mfc="none")
    axes[0].plot(0.0, r.value, "k" + mk, ms=9, label=f"hot spot, {r.rule}")
plots.legend_outside(axes[0])
axes[1].plot(through, dt, label="sxx, L2 projection")
axes[1].plot(sec.linear_at(dt), dt, "-", label="membrane + bending by nodal forces (used)")
axes[1].plot(lin.linear_at(dt), dt, "--", label="sampled linearisation (comparison only)")
axes[1].invert_yaxis()
axes[1].set(xlabel="sxx (MPa)", ylabel="depth below the toe (mm)", title="membrane and bending at the toe section")
plots.legend_outside(axes[1])
axes[1].grid(True, alpha=0.3)
plt.show()
for w in hs_lin.warnings + hs_quad.warnings:
    print("warning:", w)
print(f"{len(hs_lin.warnings) + len(hs_quad.warnings)} warning(s) from the extrapolation rules")

# %% [markdown]
# Live in Jupyter, pick the path and quantity, or shift the path.

# %%
# NBVAL_IGNORE_OUTPUT
path_panel({"plate surface": surface, "section at the toe": section}, recovered, field,
           quantities=("sxx", "von_mises", "s1"), shift_range=0.0)

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
    toe_h = np.array([m.geometry["toe_x"], m.geometry["surface_y"]])
    s = tk.sample(nf, tk.line(toe_h, toe_h + (1.5 * t, 0.0)), distances=ds)["sxx"]
    return tk.hot_spot_stress((ds, s), thickness=t, rule="a-linear").value

sizes = study_sizes(h_toe, coarsest=h_coarsest)
values, conv, conv_table = convergence_study(hot_spot_at, sizes, quantity="hot-spot stress range")

# %%
display(conv_table)
print("\n".join(convergence_lines(conv)))
if sizes[0] < h_toe:
    print(f"the study uses sizes finer than the model's {h_toe:.4g} mm: 4h would exceed the coarsest size "
          f"allowed, {h_coarsest:.4g} mm (min(t, 2 leg)/12)")

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
    notch = float(np.max(max_abs_principal(nn.values, nn.components)))
    print(f"effective notch stress range (largest principal, r = 1 mm): {notch:.4g} MPa "
          f"(K = {notch / nominal:.3g} on the nominal range)")
else:
    print("effective-notch model not requested (set effective_notch = True)")

# %% [markdown]
# ## Checks
# Hot-spot stress range (type a linear, L2 projection) times the histogram against the FAT class
# reduced by the thickness correction f(t) = (25/t_eff)^0.3 for t_eff > 25 mm (cruciform and T joints,
# as welded; t_eff from the toe distance L = attachment thickness + 2 × weld leg when L/t ≤ 2) and
# divided by γM; Palmgren–Miner sum against the damage limit. Constant amplitude beyond the knee is not
# assumed: the variable-amplitude curve (slope 22 beyond the knee, IIW 2016) is used.

# %%
L_toe = attachment_thickness + 2 * weld_leg
f_t = thickness_factor(t, joint="cruciform-as-welded", toe_distance=L_toe)
ranges = spec[:, 0] * hs_lin.value
n_i = spec[:, 1] * cycles
checks = [fatigue_check(ranges, n_i, sn_curve(fat_class, amplitude="variable"), gamma_M=gamma_M,
                        thickness_factor=f_t, damage_limit=damage_limit,
                        name="fatigue, hot-spot stress (type a linear)")]
if notch is not None:
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
summary.value("hot_spot_stress", hs_lin.value, "MPa", note="IIW type a, linear surface extrapolation, L2",
              digits=4, key=True)
summary.value("hot_spot_stress_quadratic", hs_quad.value, "MPa", note="IIW type a, quadratic, L2", digits=4)
summary.value("membrane_stress", sec.membrane, "MPa", note="nodal forces at the toe section (Dong 2001)",
              digits=4)
summary.value("bending_stress", sec.bending, "MPa", note="nodal forces at the toe section (Dong 2001), toe surface",
              digits=4)
summary.value("structural_stress_nodal_forces", sec.structural[0], "MPa",
              note="membrane + bending by nodal forces at the toe surface", digits=4)
summary.value("membrane_stress_sampled", lin.membrane, "MPa",
              note="sampled linearisation of the smoothed field (comparison only)", digits=4)
summary.value("bending_stress_sampled", lin.bending, "MPa",
              note="sampled linearisation of the smoothed field (comparison only)", digits=4)
summary.value("hot_spot_scf", hs_lin.value / nominal, "1", note="hot-spot / nominal (membrane + bending)",
              digits=4)
summary.value("thickness_factor", f_t, "1")
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
