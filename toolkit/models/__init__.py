"""Parametric meshers."""
from .grid import rectangle_mesh, box_mesh

__all__ = ["rectangle_mesh", "box_mesh"]
