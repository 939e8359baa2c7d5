"""Nodal averaging, the common baseline beside the L2 projection:
:func:`average_nodal` extrapolates each element's integration-point values
to its nodes with its local field, then averages at shared nodes (within a
region unless ``across_regions``)."""
from __future__ import annotations

import time

import numpy as np

from toolkit.errors import InputError
from toolkit.core.assembly import per_cell
from toolkit.core.elements import local_field_matrix
from toolkit.core.fields import GaussField, NodalField
from toolkit.core.numbering import DofMap

__all__ = ["average_nodal"]


def average_nodal(field: GaussField, across_regions=False) -> NodalField:
    """Extrapolate each cell's integration-point values to its nodes with the
    cell's own local field (the shape functions of the point set), then take
    the plain mean at every shared node (within a region unless
    ``across_regions``)."""
    if not isinstance(field, GaussField):
        raise InputError("expected a GaussField")
    t0 = time.perf_counter()
    mesh = field.mesh
    dofs = DofMap(mesh, across_regions)
    total = np.zeros((dofs.ndof, field.ncomponents))
    count = np.zeros(dofs.ndof)
    for name, V in field.values.items():
        et = mesh.block(name).element
        E = local_field_matrix(et, field.points[name], et.nodes)     # (k, q)
        ve = per_cell(E, V)                                           # (c, k, a)
        d = dofs.cell_dofs[name].ravel()
        S = dofs.scatter(name)
        total += S @ ve.reshape(-1, field.ncomponents)
        count += np.bincount(d, minlength=dofs.ndof)
    x = total / count[:, None]
    info = {"method": "average", "across_regions": dofs.across_regions, "time": time.perf_counter() - t0}
    return NodalField(mesh, x, field.components, dofs.node, dofs.region, method="average", info=info)
