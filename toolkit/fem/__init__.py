"""Layer 3: the toolkit's own linear-elastic solver (2D: plane stress, plane
strain, axisymmetric) and the parametric models of the standard stress
raisers (:mod:`toolkit.fem.models`).  Imports only :mod:`toolkit.core`."""
from toolkit.fem.solver import (ANALYSES, Displacement, Fixed, Material, PointLoad, Pressure, Roller, Solution,
                                Traction, edge_integral, edge_quadrature, locate_edges, solve)

__all__ = ["Material", "Traction", "Pressure", "PointLoad", "Fixed", "Roller", "Displacement", "Solution",
           "solve", "edge_integral", "edge_quadrature", "locate_edges", "ANALYSES"]
