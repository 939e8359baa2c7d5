"""Export of results to other tools: a nodal field as a CSV table
(``node,region,<components>``) and the mesh with nodal and raw
integration-point values as a VTK XML unstructured grid (``.vtu``, through
meshio, imported when called)."""
from __future__ import annotations

from pathlib import Path

import numpy as np

from toolkit.errors import InputError
from toolkit.core.elements import ELEMENTS
from toolkit.core.fields import GaussField, NodalField
from toolkit.core.mesh import Mesh
from toolkit.io.files import replacing
from toolkit.io.neutral import check_component_names
from toolkit.io.table import float_cells, int_cells, write_csv

__all__ = ["VTK_CELL_TYPES", "write_nodal_csv", "write_vtu"]

#: Our element type names -> meshio (VTK) cell type names, read off each
#: type's declaration (``ElementType.vtk_cell_type``).  Our node order is the
#: VTK order for every type, so no permutation is needed.
VTK_CELL_TYPES = {name: et.vtk_cell_type for name, et in ELEMENTS.items()}


def write_nodal_csv(path, nodal: NodalField):
    """Write a nodal field as CSV: ``node,region,<components>``, one row per
    (node, region) value; ``node`` is the node id of the mesh, ``region`` the
    region id (``-1``: smoothed across regions).  Lossless float format."""
    if not isinstance(nodal, NodalField):
        raise InputError("write_nodal_csv needs a NodalField")
    check_component_names(nodal.components)
    cols = [int_cells(nodal.mesh.node_ids[nodal.node]), int_cells(nodal.region)]
    cols += [float_cells(nodal.values[:, j]) for j in range(len(nodal.components))]
    write_csv(Path(path), ["node", "region"] + list(nodal.components), cols)
    return Path(path)


def write_vtu(path, mesh: Mesh, nodal: NodalField | None = None, field: GaussField | None = None):
    """Write the mesh, a nodal field (point data) and raw integration-point
    values (cell data) as a VTK XML unstructured grid (``.vtu``) with meshio.

    Point data: one array per nodal component, plus ``node_id``.  Where the
    nodal field carries one value per region at some nodes (not smoothed
    across region boundaries, ``nodal.split_nodes``), every (node, region) row
    becomes its own point, and each cell uses the copies of its own region,
    so no value is lost (the grid then shows the jumps between regions);
    ``region`` is added as point data, and nodes in no cell are appended with
    NaN values.

    Cell data: ``element_id``, ``region``, and for every component of
    ``field`` the cell mean of its integration-point values
    (``<comp>_mean``, a plain average over the points) and the raw values
    ``<comp>_gp1``, ``<comp>_gp2``, ... in the field's point order (NaN in
    blocks with fewer points).

    Cells use the VTK node order, which is ours for every type (see
    :attr:`ElementType.vtk_cell_type`).
    """
    import meshio

    if not isinstance(mesh, Mesh):
        raise InputError("write_vtu needs a Mesh")
    for f, kind in ((nodal, NodalField), (field, GaussField)):
        if f is not None:
            if not isinstance(f, kind):
                raise InputError(f"write_vtu: expected a {kind.__name__}, got {type(f).__name__}")
            if f.mesh is not mesh:
                raise InputError(f"write_vtu: the {kind.__name__} belongs to another mesh")
    cells = {b.name: b.cells for b in mesh.blocks}
    point_ids = mesh.node_ids
    pts = mesh.nodes
    point_data = {}
    if nodal is not None and nodal.split_nodes.size:
        pts, point_ids, cells, point_data = _region_points(mesh, nodal)
    elif nodal is not None:
        arr = nodal.to_array()
        for j, c in enumerate(nodal.components):
            point_data[c] = arr[:, j]
    point_data["node_id"] = point_ids
    if pts.shape[1] == 2:
        pts = np.c_[pts, np.zeros(len(pts))]
    cell_data = {"element_id": [b.ids for b in mesh.blocks], "region": [b.regions for b in mesh.blocks]}
    if field is not None:
        cell_data.update(_point_cell_data(mesh, field))
    m = meshio.Mesh(pts, [(b.element.vtk_cell_type, cells[b.name]) for b in mesh.blocks],
                    point_data=point_data, cell_data=cell_data)
    path = Path(path)
    with replacing(path, ".vtu") as tmp:
        meshio.write(tmp, m, file_format="vtu")
    return path


def _region_points(mesh, nodal):
    """One grid point per (node, region) row of ``nodal``, plus the nodes in
    no cell: their coordinates, node ids, the cells of each block renumbered
    to the copies of their own region, and the point data (``region`` and
    the components, NaN at the appended nodes)."""
    n = mesh.nnodes
    R = mesh.regions
    key = nodal.node * len(R) + np.searchsorted(R, nodal.region)
    if (nodal.region < 0).any():
        raise InputError("write_vtu: the nodal field mixes smoothed (region -1) and per-region rows")
    o = np.argsort(key)
    skey = key[o]
    cells = {}
    for b in mesh.blocks:
        k = b.cells.astype(np.int64) * len(R) + np.searchsorted(R, b.regions)[:, None]
        p = np.minimum(np.searchsorted(skey, k), len(skey) - 1)
        if (skey[p] != k).any():
            c = int(np.flatnonzero((skey[p] != k).any(axis=1))[0])
            raise InputError(f"write_vtu: the nodal field has no value for a node of {b.label(c)} in its region")
        cells[b.name] = o[p]
    unused = np.flatnonzero(np.bincount(nodal.node, minlength=n) == 0)
    pts = np.concatenate([mesh.nodes[nodal.node], mesh.nodes[unused]])
    point_ids = np.concatenate([mesh.node_ids[nodal.node], mesh.node_ids[unused]])
    vals = np.concatenate([nodal.values, np.full((len(unused), len(nodal.components)), np.nan)])
    point_data = {"region": np.concatenate([nodal.region, np.full(len(unused), -1)])}
    for j, c in enumerate(nodal.components):
        point_data[c] = vals[:, j]
    return pts, point_ids, cells, point_data


def _point_cell_data(mesh, field):
    """Cell data of the integration-point field: ``<comp>_mean`` and
    ``<comp>_gp1``, ``<comp>_gp2``, ... per component, NaN in blocks with
    fewer points."""
    cell_data = {}
    qmax = max(v.shape[1] for v in field.values.values())
    for j, c in enumerate(field.components):
        cell_data[f"{c}_mean"] = [field.values[b.name][:, :, j].mean(axis=1) for b in mesh.blocks]
        for p in range(qmax):
            cell_data[f"{c}_gp{p + 1}"] = [
                field.values[b.name][:, p, j] if p < field.values[b.name].shape[1]
                else np.full(len(b), np.nan) for b in mesh.blocks]
    return cell_data
