"""Parametric meshers."""
from .grid import rectangle_mesh, box_mesh
from .common import Model, boundary_edges, edges_on
from .plate_hole import plate_with_hole
from .fillet import shoulder_fillet
from .weld_toe import weld_toe

__all__ = ["rectangle_mesh", "box_mesh", "Model", "boundary_edges", "edges_on", "plate_with_hole",
           "shoulder_fillet", "weld_toe"]
