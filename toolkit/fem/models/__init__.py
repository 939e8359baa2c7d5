"""Parametric meshers."""
from toolkit.core.grid import rectangle_mesh, box_mesh
from toolkit.fem.models.common import Model, boundary_edges, edges_on
from toolkit.fem.models.plate_hole import plate_with_hole, plate_with_hole_sizes
from toolkit.fem.models.fillet import shoulder_fillet, shoulder_fillet_sizes
from toolkit.fem.models.weld_toe import weld_toe, weld_toe_sizes

__all__ = ["rectangle_mesh", "box_mesh", "Model", "boundary_edges", "edges_on", "plate_with_hole",
           "plate_with_hole_sizes", "shoulder_fillet", "shoulder_fillet_sizes", "weld_toe", "weld_toe_sizes"]
