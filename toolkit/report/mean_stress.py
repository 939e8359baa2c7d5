"""The mean-stress diagram of a non-welded fatigue check: stress amplitude
against mean stress with the criterion's line, Langer's first-cycle yield
line, the load line through the origin and the working point.  matplotlib is
imported inside the function."""
from __future__ import annotations

import numpy as np

from toolkit.assess.endurance import criterion_amplitude, fatigue_safety_factor
from toolkit.report.plots import legend_outside

__all__ = ["plot_mean_stress_diagram"]


def plot_mean_stress_diagram(amplitude, mean_stress, endurance, tensile_strength, yield_strength=None,
                             criterion="goodman", safety_factor=1.0, ax=None, unit="MPa",
                             label="working point"):
    """Draw σa against σm: the criterion (n = 1, :func:`toolkit.assess.endurance.criterion_amplitude`;
    flat at Se for a compressive mean), Langer's yield line ``σa + |σm| = Sy`` when Sy is given, the
    load line from the origin through the working point out to the criterion, and the working point
    (local stresses, Kf applied).  With ``safety_factor`` n > 1 the criterion scaled by 1/n about the
    origin (the line of n_f = n; every criterion is homogeneous in the stresses) is drawn too.
    Returns the axes."""
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(7, 4.5), constrained_layout=True)
    se, sut, sa, sm = float(endurance), float(tensile_strength), float(amplitude), float(mean_stress)
    sy = None if yield_strength is None else float(yield_strength)
    left = min(0.0, 1.2 * sm, -(sy if sy is not None else 0.5 * sut) * 0.5)
    m = np.linspace(left, sut, 401)
    ax.plot(m, criterion_amplitude(m, se, sut, sy, criterion), "-", color="tab:blue", label=f"{criterion} (n = 1)")
    n_req = float(safety_factor)
    if n_req > 1.0:
        ax.plot(m / n_req, criterion_amplitude(m, se, sut, sy, criterion) / n_req, "-.", color="tab:cyan",
                label=f"{criterion} / {n_req:g} (required n_f)")
    if sy is not None:
        ml = np.linspace(-sy, sy, 3)
        ax.plot(ml, sy - np.abs(ml), "--", color="tab:red", label="first-cycle yield (Langer)")
    nf = fatigue_safety_factor(sa, sm, se, sut, sy, criterion)
    ax.plot([0.0, nf * sm], [0.0, nf * sa], ":", color="0.3", label="load line")
    ax.plot([sm], [sa], "o", color="k", label=f"{label} (n_f = {nf:.3g})")
    ax.set_xlabel(f"mean stress σm ({unit})")
    ax.set_ylabel(f"stress amplitude σa ({unit})")
    ax.set_xlim(left, sut * 1.02)
    ax.set_ylim(0.0, 1.1 * max(se, sy or 0.0, sa))
    ax.axvline(0.0, color="0.7", linewidth=0.6)
    ax.set_title("mean-stress diagram")
    legend_outside(ax)
    return ax
