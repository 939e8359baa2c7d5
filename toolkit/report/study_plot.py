"""The figure of a parameter study: chosen results against one varied
parameter, one line per combination of the other varied parameters, saved
as PNG bytes for the offline study page.

matplotlib is imported inside the function (its object interface, no pyplot),
so it runs in any thread and needs no display.
"""
from __future__ import annotations

import io

from toolkit.errors import InputError

__all__ = ["study_plot_png"]

_STYLES = [dict(linestyle="-", marker="o"), dict(linestyle="--", marker="s"), dict(linestyle="-.", marker="^"),
           dict(linestyle=":", marker="D"), dict(linestyle="-", marker="v"), dict(linestyle="--", marker="x")]


def study_plot_png(lines, x_label, y_label, title=None, figsize=(6.4, 4.0), dpi=100) -> bytes:
    """PNG bytes of one study plot.

    Parameters
    ----------
    lines : list of (label, xs, ys)
        One curve each, points sorted by x (a label of ``""`` leaves it out of the legend).
    x_label, y_label : str
        Axis labels with their units, e.g. ``"hole_diameter [mm]"``.
    title : str, optional
    """
    if not lines:
        raise InputError("study plot: no lines to draw")
    for label, xs, ys in lines:
        if len(xs) != len(ys):
            raise InputError(f"study plot: line {label!r} has {len(xs)} x values for {len(ys)} y values")
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize, dpi=dpi)
    ax = fig.add_subplot()
    for i, (label, xs, ys) in enumerate(lines):
        ax.plot(xs, ys, label=label or None, **_STYLES[i % len(_STYLES)])
    ax.set_xlabel(x_label)
    ax.set_ylabel(y_label)
    if title:
        ax.set_title(title)
    ax.grid(True, alpha=0.3)
    if any(label for label, _, _ in lines):
        ax.legend(fontsize="small")
    fig.tight_layout()
    buf = io.BytesIO()
    fig.savefig(buf, format="png", metadata={"Software": None})
    return buf.getvalue()
