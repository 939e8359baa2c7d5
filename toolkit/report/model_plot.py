"""Drawing of a parametric model before it is solved: the mesh (element
edges drawn through mid-side nodes), its named edges in colour, load arrows
and support markers.  :meth:`toolkit.fem.models.Model.plot` delegates here.

matplotlib is imported inside the functions, so importing the toolkit does
not need a display or a backend.
"""
from __future__ import annotations

import numpy as np

from toolkit.fem.edges import edge_quadrature
from toolkit.fem.loads import PointLoad, Pressure, Traction
from toolkit.fem.supports import Displacement, Fixed, Roller

__all__ = ["plot_model"]


def plot_model(model, ax=None, show_loads=True, show_supports=True, legend=True):
    """Mesh (element edges drawn through mid-side nodes), named edges in
    colour, load arrows and support markers of ``model`` (a
    :class:`toolkit.fem.models.Model`).  Returns the axes."""
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(7, 5))
    _draw_mesh_and_edges(ax, model)
    size = float(np.ptp(model.mesh.nodes, axis=0).max())
    if show_loads:
        _draw_loads(ax, model, size)
    if show_supports:
        _draw_supports(ax, model)
    ax.set_aspect("equal")
    ax.autoscale_view()
    ax.set_title(f"{model.kind} ({model.mesh.ncells} {model.mesh.blocks[0].name} cells, {model.analysis})")
    if legend:   # outside the axes, to the right: it covers no part of the model
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0.0, fontsize="small")
    return ax


def _draw_mesh_and_edges(ax, model):
    """Element edges in grey, each named edge in its own colour (labelled)."""
    import matplotlib.pyplot as plt
    from matplotlib.collections import LineCollection

    segs = []
    for b in model.mesh.blocks:
        for loc in b.element.edges:
            pts = model.mesh.nodes[b.cells[:, [loc[0], loc[2], loc[1]] if len(loc) == 3 else list(loc)]]
            segs.append(pts)
    ax.add_collection(LineCollection(np.concatenate(segs), colors="0.6", linewidths=0.4))
    cmap = plt.get_cmap("tab10")
    for i, (name, e) in enumerate(sorted(model.edges.items())):
        idx = [0, 2, 1] if e.shape[1] == 3 else [0, 1]
        ax.add_collection(LineCollection(model.mesh.nodes[e[:, idx]], colors=[cmap(i % 10)], linewidths=2.0,
                                         label=name))


def _draw_loads(ax, model, size):
    """Traction and pressure arrows at the middle of each loaded edge (scaled
    to 8 % of the model size at the largest), point loads as one arrow."""
    for ld in model.loads:
        if isinstance(ld, (Traction, Pressure)):
            e = model.edges[ld.edge] if isinstance(ld.edge, str) else np.asarray(ld.edge)
            xs, ts = [], []
            for g in edge_quadrature(model.mesh, e, npoints=1):
                x = g["x"][:, 0]
                c = x[:, 0 if ld.along in (0, "x", "r") else 1] - ld.origin
                if isinstance(ld, Traction):
                    t = np.asarray(ld.value, float)[None, :] + (
                        0 if ld.gradient is None else c[:, None] * np.asarray(ld.gradient, float))
                else:
                    t = -(ld.value + ld.gradient * c)[:, None] * g["normal"][:, 0]
                xs.append(x); ts.append(t)
            x, t = np.concatenate(xs), np.concatenate(ts)
            sc = 0.08 * size / max(np.abs(t).max(), 1e-300)
            ax.quiver(x[:, 0], x[:, 1], t[:, 0] * sc, t[:, 1] * sc, angles="xy", scale_units="xy", scale=1,
                      color="tab:red", width=0.003)
        elif isinstance(ld, PointLoad):
            node = model.points[ld.where] if isinstance(ld.where, str) else ld.where
            p = model.mesh.nodes[node]
            F = np.asarray(ld.force, float)
            F = 0.1 * size * F / max(np.linalg.norm(F), 1e-300)
            ax.annotate("", p + F, p, arrowprops=dict(arrowstyle="<-", color="tab:red"))


def _draw_supports(ax, model):
    """A marker at every supported node: square fixed, circle roller,
    triangle prescribed displacement."""
    for s in model.supports:
        w = s.where
        if isinstance(w, str):
            nodes = np.unique(model.edges[w]) if w in model.edges else np.atleast_1d(model.points[w])
        else:
            nodes = np.atleast_1d(w)
        p = model.mesh.nodes[nodes]
        marker = {Fixed: "s", Roller: "o", Displacement: "^"}.get(type(s), "x")
        ax.plot(p[:, 0], p[:, 1], linestyle="none", marker=marker, markersize=3, color="tab:blue")
