"""Layer 3: the toolkit's own linear-elastic solver (2D: plane stress, plane
strain, axisymmetric) and the parametric models of the standard stress
raisers (:mod:`toolkit.fem.models`).  Imports only :mod:`toolkit.core`.

Modules: :mod:`~toolkit.fem.material` (material, analyses, component
tables), :mod:`~toolkit.fem.edges` (edges of cells, quadrature and integrals
along them), :mod:`~toolkit.fem.locations` (named edges and points to node
rows), :mod:`~toolkit.fem.loads`, :mod:`~toolkit.fem.supports` (supports and
constraints), :mod:`~toolkit.fem.elasticity` (element matrices, stress
recovery) and :mod:`~toolkit.fem.solver` (the solve and its Solution)."""
from toolkit.fem.material import ANALYSES, Material
from toolkit.fem.loads import PointLoad, Pressure, Traction
from toolkit.fem.supports import Displacement, Fixed, Roller
from toolkit.fem.edges import edge_integral, edge_quadrature, locate_edges
from toolkit.fem.solver import Solution, solve

__all__ = ["Material", "Traction", "Pressure", "PointLoad", "Fixed", "Roller", "Displacement", "Solution",
           "solve", "edge_integral", "edge_quadrature", "locate_edges", "ANALYSES"]
