"""Figures: mesh, raw (discontinuous) and smoothed contour plots, fields
along paths and the error indicator map.

matplotlib is imported inside each function, so importing the toolkit does
not need a display or a backend.  Colour maps are matplotlib's perceptually
uniform defaults (viridis for magnitudes, a diverging map for signed
differences).
"""
from __future__ import annotations

from typing import NamedTuple

import numpy as np

from toolkit.errors import InputError
from toolkit.core.elements import get_element, local_field_matrix
from toolkit.core.fields import GaussField, NodalField
from toolkit.core.mesh import Mesh

__all__ = ["plot_mesh", "contour_nodal", "contour_raw", "raw_vs_smoothed", "plot_path", "plot_indicator",
           "ContourData", "nodal_contour_data", "raw_contour_data", "contour_levels", "raw_nodal_values",
           "METHOD_STYLES", "method_style", "legend_outside", "mark_path", "zoom_to", "contour_with_zoom"]

#: Line style, marker and colour of each recovery method, the same in every figure, so
#: curves that lie on top of each other stay distinguishable (and print in grey scale).
METHOD_STYLES = {
    "L2 projection": dict(linestyle="-", marker="o", color="tab:blue"),
    "L2 projection (lumped)": dict(linestyle=(0, (5, 2)), marker="D", color="tab:purple"),
    "nodal averaging": dict(linestyle="--", marker="s", color="tab:orange"),
    "patch recovery (SPR)": dict(linestyle="-.", marker="^", color="tab:green"),
}
_SPARE_STYLES = [dict(linestyle=":", marker="v", color="tab:red"), dict(linestyle="-", marker="x", color="tab:brown"),
                 dict(linestyle="--", marker="+", color="tab:pink")]


def method_style(name, index=0) -> dict:
    """Keyword arguments (linestyle, marker, colour) for the curve of recovery
    method ``name``: :data:`METHOD_STYLES`, else a spare style by ``index``."""
    return dict(METHOD_STYLES.get(name) or _SPARE_STYLES[index % len(_SPARE_STYLES)])


def legend_outside(ax, **kwargs):
    """A legend to the right of the axes, outside them, so it covers no part
    of the model or the curves.  Returns the legend."""
    kw = dict(loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0.0, fontsize="small")
    kw.update(kwargs)
    return ax.legend(**kw)


def mark_path(ax, path, label=None, n=101, color="k", length_unit="mm", **kwargs):
    """Draw ``path`` on a model or contour plot with its start (distance 0)
    marked by a filled circle and the text "0", and its end by an arrow head,
    so the direction of the distance axis of the path plots can be read.
    Returns the (start point, end point)."""
    s = path.sample(n)
    pts = s.points
    ax.plot(pts[:, 0], pts[:, 1], color=color, lw=kwargs.pop("lw", 1.8), label=label, **kwargs)
    ax.plot(*pts[0], "o", color=color, ms=6, mfc=color, label="_start")
    ax.annotate(f"0 {length_unit}", pts[0], xytext=(4, 4), textcoords="offset points", fontsize=8, color=color)
    ax.annotate("", pts[-1], pts[-2], arrowprops=dict(arrowstyle="-|>", color=color, lw=1.2))
    return pts[0], pts[-1]


def zoom_to(ax, centre, half_width, aspect=None):
    """Limit ``ax`` to the square of half-width ``half_width`` about
    ``centre`` (a zoom on the critical region: fillet, toe, hole edge)."""
    cx, cy = float(centre[0]), float(centre[1])
    h = float(half_width)
    if not h > 0:
        raise InputError(f"zoom_to: half_width must be positive, got {half_width}")
    ax.set_xlim(cx - h, cx + h)
    ax.set_ylim(cy - h, cy + h)
    return ax


def _axes(ax):
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(6, 4.5))
    return ax


def _need_2d(mesh):
    if mesh.dim != 2:
        raise InputError("contour plots are for 2D meshes; export a VTU file to view 3D models")


def plot_mesh(mesh: Mesh, ax=None, color="0.35", linewidth=0.4, label_regions=False):
    """Element outlines (quadratic edges drawn through their mid-side node)."""
    from matplotlib.collections import LineCollection

    _need_2d(mesh)
    ax = _axes(ax)
    segs = []
    for b in mesh.blocks:
        for e in b.element.edges:
            path = (e[0], e[2], e[1]) if len(e) == 3 else e
            pts = mesh.nodes[b.cells[:, list(path)]]                 # (m, 2|3, 2)
            segs.append(pts)
    lines = np.concatenate([np.concatenate([s[:, i:i + 2] for i in range(s.shape[1] - 1)]) for s in segs])
    ax.add_collection(LineCollection(lines, colors=color, linewidths=linewidth))
    ax.set_aspect("equal")
    ax.autoscale_view()
    if label_regions and len(mesh.regions) > 1:
        for b in mesh.blocks:
            c = mesh.nodes[b.cells].mean(axis=1)
            for r in np.unique(b.regions):
                p = c[b.regions == r].mean(axis=0)
                ax.annotate(f"region {r}", p, ha="center", fontsize=8)
    return ax


class ContourData(NamedTuple):
    """The triangulated data a contour plot draws: point coordinates ``xy``
    (p, 2), sub-triangles ``triangles`` (t, 3) indexing ``xy``, and the value
    ``z`` (p,) at each point."""

    xy: np.ndarray
    triangles: np.ndarray
    z: np.ndarray


def _triangles(cell_rows_by_block):
    """Each cell's declared drawing sub-triangles, as rows of point indices."""
    tris = []
    for name, rows in cell_rows_by_block.items():
        for t in get_element(name).plot_triangles:     # the type's declared drawing sub-triangles
            tris.append(rows[:, list(t)])
    return np.concatenate(tris)


def contour_levels(z, levels, vmin=None, vmax=None) -> np.ndarray:
    """The ``levels`` equally spaced contour levels from ``vmin`` to ``vmax``
    (default: the smallest and largest finite ``z``) that :func:`contour_nodal`
    and :func:`contour_raw` fill between."""
    vmin = np.nanmin(z) if vmin is None else vmin
    vmax = np.nanmax(z) if vmax is None else vmax
    if vmax <= vmin:
        vmax = vmin + max(abs(vmin), 1.0) * 1e-9
    return np.linspace(vmin, vmax, levels)


def _draw(ax, data: ContourData, levels, cmap, label, vmin=None, vmax=None, unit="MPa"):
    import matplotlib.pyplot as plt
    import matplotlib.tri as mtri

    tri = mtri.Triangulation(data.xy[:, 0], data.xy[:, 1], data.triangles)
    lv = contour_levels(data.z, levels, vmin, vmax)
    cs = ax.tricontourf(tri, data.z, levels=lv, cmap=cmap, extend="neither")
    ax.set_aspect("equal")
    plt.colorbar(cs, ax=ax, label=f"{label} ({unit})" if unit else label, shrink=0.85)
    return cs


def nodal_contour_data(nodal: NodalField, component) -> ContourData:
    """What :func:`contour_nodal` draws: the nodal values of ``component`` at
    the nodes' coordinates, triangulated cell by cell (a node carrying one
    value per region appears once per region)."""
    mesh = nodal.mesh
    _need_2d(mesh)
    z = nodal.values[:, nodal.components.index(component)]
    rows = {b.name: nodal.cell_rows(b.name) for b in mesh.blocks}
    return ContourData(mesh.nodes[nodal.node], _triangles(rows), z)


def contour_nodal(nodal: NodalField, component, ax=None, levels=21, cmap="viridis", mesh_lines=False,
                  vmin=None, vmax=None, title=None, unit="MPa"):
    """Filled contours of a smoothed nodal field (region splits respected:
    each region is drawn from its own values).  The colour bar reads
    ``component (unit)``."""
    data = nodal_contour_data(nodal, component)
    ax = _axes(ax)
    _draw(ax, data, levels, cmap, component, vmin, vmax, unit)
    if mesh_lines:
        plot_mesh(nodal.mesh, ax, linewidth=0.2)
    ax.set_title(title or f"{component}, {nodal.method or 'nodal'}")
    return ax


def raw_nodal_values(field: GaussField, component):
    """Each cell's own local field at its own nodes, cell by cell (no
    averaging): ``{block: (m, k)}``.  This is the discontinuous field."""
    a = field.components.index(component)
    out = {}
    for b in field.mesh.blocks:
        E = local_field_matrix(b.element, field.points[b.name], b.element.nodes)
        out[b.name] = field.values[b.name][..., a] @ E.T
    return out


def raw_contour_data(field: GaussField, component) -> ContourData:
    """What :func:`contour_raw` draws: every cell's own local field at its own
    nodes (:func:`raw_nodal_values`), each cell with its own copy of its node
    coordinates, so the values jump between cells."""
    mesh = field.mesh
    _need_2d(mesh)
    vals = raw_nodal_values(field, component)
    xy, z, rows, start = [], [], {}, 0
    for b in mesh.blocks:
        m, k = b.cells.shape
        xy.append(mesh.nodes[b.cells].reshape(-1, 2))
        z.append(vals[b.name].ravel())
        rows[b.name] = start + np.arange(m * k).reshape(m, k)
        start += m * k
    return ContourData(np.concatenate(xy), _triangles(rows), np.concatenate(z))


def contour_raw(field: GaussField, component, ax=None, levels=21, cmap="viridis", vmin=None, vmax=None,
                title=None, unit="MPa"):
    """Filled contours of the raw field: every cell drawn from its own
    integration-point values, so the jumps between cells stay visible.  The
    colour bar reads ``component (unit)``."""
    data = raw_contour_data(field, component)
    ax = _axes(ax)
    _draw(ax, data, levels, cmap, component, vmin, vmax, unit)
    ax.set_title(title or f"{component}, raw (cell by cell)")
    return ax


def raw_vs_smoothed(field: GaussField, nodal: NodalField, component, figsize=(11, 4.2), levels=21, unit="MPa"):
    """The raw integration-point field beside the smoothed one, on one colour
    scale (colour bars in ``unit``).  Returns the figure."""
    import matplotlib.pyplot as plt

    raw = raw_nodal_values(field, component)
    z = nodal.values[:, nodal.components.index(component)]
    lo = min(min(v.min() for v in raw.values()), z.min())
    hi = max(max(v.max() for v in raw.values()), z.max())
    fig, axes = plt.subplots(1, 2, figsize=figsize, constrained_layout=True)
    contour_raw(field, component, axes[0], levels, vmin=lo, vmax=hi, unit=unit)
    contour_nodal(nodal, component, axes[1], levels, vmin=lo, vmax=hi,
                  title=f"{component}, smoothed ({nodal.method})", unit=unit)
    return fig


def contour_with_zoom(nodal: NodalField, component, centre, half_width, paths=None, figsize=(12, 4.2),
                      levels=21, unit="MPa", length_unit="mm", title=None):
    """Two panels on one colour scale: the smoothed field over the whole
    model, and a zoom on the critical region (the square of half-width
    ``half_width`` about ``centre``: fillet, toe, hole edge) with the mesh
    drawn.  ``paths`` (label -> path) are drawn on both panels with their
    start (distance 0) marked (:func:`mark_path`); legends sit outside the
    axes.  Returns the figure."""
    import matplotlib.pyplot as plt

    z = nodal.values[:, nodal.components.index(component)]
    lo, hi = float(np.nanmin(z)), float(np.nanmax(z))
    fig, axes = plt.subplots(1, 2, figsize=figsize, constrained_layout=True)
    contour_nodal(nodal, component, axes[0], levels, vmin=lo, vmax=hi, unit=unit,
                  title=title or f"{component}, smoothed ({nodal.method})")
    contour_nodal(nodal, component, axes[1], levels, vmin=lo, vmax=hi, unit=unit, mesh_lines=True,
                  title=f"zoom: {2 * float(half_width):.3g} {length_unit} square")
    colours = ["k", "tab:red", "tab:blue", "tab:orange"]
    for ax in axes:
        for i, (label, p) in enumerate((paths or {}).items()):
            mark_path(ax, p, label=label, color=colours[i % len(colours)], length_unit=length_unit)
        ax.set(xlabel=f"x ({length_unit})", ylabel=f"y ({length_unit})")
    zoom_to(axes[1], centre, half_width)
    cx, cy, h = float(centre[0]), float(centre[1]), float(half_width)
    axes[0].plot([cx - h, cx + h, cx + h, cx - h, cx - h], [cy - h, cy - h, cy + h, cy + h, cy - h], color="w",
                 lw=1.0, ls="--", label="zoomed region")
    legend_outside(axes[1])
    return fig


def plot_path(result, ax=None, quantity="von_mises", label=None, unit="MPa", length_unit="mm", legend=True,
              **kwargs):
    """Plot ``quantity`` (a name or a list of names) of a
    :class:`~toolkit.assess.sampling.PathResult` against distance; raw curves
    (``result.pieces``) are drawn element by element so their jumps show.
    Axis labels carry ``unit`` (stress) and ``length_unit`` (distance from
    the path's start).  Returns the axes."""
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots()
    names = [quantity] if isinstance(quantity, str) else list(quantity)
    for q in names:
        y = result[q]
        lab = label if (label is not None and len(names) == 1) else (f"{q} ({result.method})" if result.method else q)
        if result.pieces:
            line = None
            for pc in result.pieces:
                kw = dict(kwargs)
                if line is not None:
                    kw.setdefault("color", line.get_color())
                (ln,) = ax.plot(result.distances[pc], y[pc], label=lab if line is None else "_nolegend_", **kw)
                line = line or ln
        else:
            ax.plot(result.distances, y, label=lab, **kwargs)
    ax.set_xlabel(f"distance along {result.label} from its start ({length_unit})")
    ax.set_ylabel(f"{names[0] if len(names) == 1 else 'stress'} ({unit})")
    if legend:
        ax.legend()
    return ax


def plot_indicator(ind, ax=None, quantity="error", cmap="viridis", edgecolor="none", colorbar=True, unit="MPa",
                   length_unit="mm"):
    """Map of the per-element error of an
    :class:`~toolkit.assess.indicator.ErrorIndicator` over a 2D mesh (cells
    drawn as their corner polygons).  ``quantity``: ``"error"``
    (``||e||_K``) or ``"density"`` (``||e||_K / sqrt(area_K)``, independent
    of element size).  The colour bar carries the unit of a plane model: the
    L2 norm over the cell area is in ``unit length_unit`` (the energy norm in
    ``unit^0.5 length_unit``); the density drops the length.  (An
    axisymmetric model integrates over 2 pi r dA: one more ``length_unit^0.5``.)
    Returns the axes."""
    import matplotlib.pyplot as plt
    from matplotlib.collections import PolyCollection

    if ind.mesh.dim != 2:
        raise InputError("ErrorIndicator.plot maps 2D meshes only")
    if quantity not in ("error", "density"):
        raise InputError(f"quantity must be 'error' or 'density', got {quantity!r}")
    if ax is None:
        _, ax = plt.subplots()
    polys, vals = [], []
    for b in ind.mesh.blocks:
        xy = ind.mesh.nodes[b.cells[:, :b.element.ncorners]]
        v = ind.per_block[b.name]
        if quantity == "density":
            v = v / np.sqrt(ind.mesh.volumes(b.name))
        polys.extend(xy)
        vals.append(v)
    pc = PolyCollection(polys, array=np.concatenate(vals), cmap=cmap, edgecolors=edgecolor)
    ax.add_collection(pc)
    ax.autoscale_view()
    ax.set_aspect("equal")
    ax.set_title(f"ZZ error estimate ({ind.measure}), eta = {100 * ind.eta:.3g} %")
    if colorbar:
        su = unit if ind.measure == "L2" else f"{unit}^0.5"      # energy norm: sqrt(stress^2 / modulus)
        ax.figure.colorbar(pc, ax=ax, label=f"||e||_K ({su} {length_unit})" if quantity == "error"
                           else f"||e||_K / sqrt(A_K) ({su})")
    return ax
