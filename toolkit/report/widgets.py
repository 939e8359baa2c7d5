"""ipywidgets panels for live notebooks.

Every panel first draws an ordinary static figure for its default settings,
so a notebook executed headless (nbclient, nbval, the HTML report) shows a
real plot and never depends on a widget frontend; in a live Jupyter session
the controls below it redraw the plot.  Mark panel cells
``# NBVAL_IGNORE_OUTPUT``: under nbval the callbacks print to plain stdout.
"""
from __future__ import annotations

from toolkit.assess.sampling import raw_along, sample
from toolkit.report.plots import legend_outside, method_style
from toolkit.report.tables import headless

__all__ = ["path_panel", "plot_path_comparison"]


def plot_path_comparison(path, nodal_fields: dict, field=None, quantity="snn", ax=None, n=101, shift=0.0,
                         marks=None, title=None, unit="MPa", length_unit="mm"):
    """Plot ``quantity`` along ``path`` for every recovery method in
    ``nodal_fields`` (name -> NodalField), with the raw integration-point
    curve of ``field`` (jagged, element by element) when given, and vertical
    marks at ``marks`` (distances: read-out points).  ``shift`` moves a
    straight path along its normal.  Points outside the mesh are left out of
    the plot (NaN), never invented.  Each method keeps its own line style,
    marker and colour (:data:`toolkit.report.plots.METHOD_STYLES`), so curves
    lying on top of each other stay distinguishable; markers are staggered
    between methods.  The legend sits outside the axes; the axes carry
    ``unit`` and ``length_unit``."""
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(7, 4))
    p = path.shifted(shift) if shift else path
    every = max(n // 10, 1)
    for i, (name, nf) in enumerate(nodal_fields.items()):
        res = sample(nf, p, n=n, outside="nan")
        st = method_style(name, i)
        res.plot(ax, quantity=quantity, label=name, unit=unit, length_unit=length_unit, legend=False,
                 markevery=(i * every // max(len(nodal_fields), 1), every), markersize=5, mfc="none", **st)
    if field is not None:
        raw = raw_along(field, p, n=n, outside="nan")
        raw.plot(ax, quantity=quantity, label="raw (per element)", color="0.55", linewidth=0.9, unit=unit,
                 length_unit=length_unit, legend=False)
    for d in marks or ():
        ax.axvline(d, color="0.3", linestyle=":", linewidth=0.8)
    ax.set_ylabel(f"{quantity} ({unit})")
    legend_outside(ax)
    if title:
        ax.set_title(title)
    ax.grid(True, alpha=0.3)
    return ax


def path_panel(paths: dict, nodal_fields: dict, field=None, quantities=("snn", "von_mises"), n=101,
               shift_range=0.0):
    """A static figure of the first path, method set and quantity, then (if
    ipywidgets is available) a panel to pick the path, the quantity, the
    recovery method (or all of them) and a shift along the path normal (``shift_range``: the largest shift, 0 for
    none) and see the plot update."""
    import matplotlib.pyplot as plt
    from IPython.display import display

    first = next(iter(paths))
    fig, ax = plt.subplots(figsize=(7, 4))
    plot_path_comparison(paths[first], nodal_fields, field, quantities[0], ax, n=n, title=first)
    display(fig)
    plt.close(fig)
    if headless():
        return None
    try:
        import ipywidgets as w
    except ImportError:
        return None

    def update(path, quantity, method="all methods", shift=0.0):
        chosen = nodal_fields if method == "all methods" else {method: nodal_fields[method]}
        f, a = plt.subplots(figsize=(7, 4))
        plot_path_comparison(paths[path], chosen, field, quantity, a, n=n, shift=shift, title=path)
        plt.show()

    kwargs = dict(path=list(paths), quantity=list(quantities), method=["all methods"] + list(nodal_fields))
    if shift_range:
        kwargs["shift"] = w.FloatSlider(value=0.0, min=-float(shift_range), max=float(shift_range),
                                        step=float(shift_range) / 20, description="shift")
    return w.interactive(update, **kwargs)
