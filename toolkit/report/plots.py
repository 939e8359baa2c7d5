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
           "ContourData", "nodal_contour_data", "raw_contour_data", "contour_levels", "raw_nodal_values"]


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


def _draw(ax, data: ContourData, levels, cmap, label, vmin=None, vmax=None):
    import matplotlib.pyplot as plt
    import matplotlib.tri as mtri

    tri = mtri.Triangulation(data.xy[:, 0], data.xy[:, 1], data.triangles)
    lv = contour_levels(data.z, levels, vmin, vmax)
    cs = ax.tricontourf(tri, data.z, levels=lv, cmap=cmap, extend="neither")
    ax.set_aspect("equal")
    plt.colorbar(cs, ax=ax, label=label, shrink=0.85)
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
                  vmin=None, vmax=None, title=None):
    """Filled contours of a smoothed nodal field (region splits respected:
    each region is drawn from its own values)."""
    data = nodal_contour_data(nodal, component)
    ax = _axes(ax)
    _draw(ax, data, levels, cmap, component, vmin, vmax)
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
                title=None):
    """Filled contours of the raw field: every cell drawn from its own
    integration-point values, so the jumps between cells stay visible."""
    data = raw_contour_data(field, component)
    ax = _axes(ax)
    _draw(ax, data, levels, cmap, component, vmin, vmax)
    ax.set_title(title or f"{component}, raw (cell by cell)")
    return ax


def raw_vs_smoothed(field: GaussField, nodal: NodalField, component, figsize=(11, 4.2), levels=21):
    """The raw integration-point field beside the smoothed one, on one colour
    scale.  Returns the figure."""
    import matplotlib.pyplot as plt

    raw = raw_nodal_values(field, component)
    z = nodal.values[:, nodal.components.index(component)]
    lo = min(min(v.min() for v in raw.values()), z.min())
    hi = max(max(v.max() for v in raw.values()), z.max())
    fig, axes = plt.subplots(1, 2, figsize=figsize, constrained_layout=True)
    contour_raw(field, component, axes[0], levels, vmin=lo, vmax=hi)
    contour_nodal(nodal, component, axes[1], levels, vmin=lo, vmax=hi,
                  title=f"{component}, smoothed ({nodal.method})")
    return fig


def plot_path(result, ax=None, quantity="von_mises", label=None, **kwargs):
    """Plot ``quantity`` (a name or a list of names) of a
    :class:`~toolkit.assess.sampling.PathResult` against distance; raw curves
    (``result.pieces``) are drawn element by element so their jumps show.
    Returns the axes."""
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
    ax.set_xlabel(f"distance along {result.label}")
    ax.set_ylabel(names[0] if len(names) == 1 else "value")
    ax.legend()
    return ax


def plot_indicator(ind, ax=None, quantity="error", cmap="viridis", edgecolor="none", colorbar=True):
    """Map of the per-element error of an
    :class:`~toolkit.assess.indicator.ErrorIndicator` over a 2D mesh (cells
    drawn as their corner polygons).  ``quantity``: ``"error"``
    (``||e||_K``) or ``"density"`` (``||e||_K / sqrt(area_K)``, independent
    of element size).  Returns the axes."""
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
        ax.figure.colorbar(pc, ax=ax, label="||e||_K" if quantity == "error" else "||e||_K / sqrt(A_K)")
    return ax
