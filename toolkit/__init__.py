"""Stresspath: from integration-point stresses to continuous fields, paths,
design quantities, checks and a checkable report."""
from .elements import ELEMENTS, ElementType, QuadratureRule, get_element
from .mesh import Mesh
from .fields import GaussField, NodalField
from .recovery import L2Projector, project_l2, average_nodal

__version__ = "0.1.0"

__all__ = ["ELEMENTS", "ElementType", "QuadratureRule", "get_element", "Mesh", "GaussField", "NodalField",
           "L2Projector", "project_l2", "average_nodal", "__version__"]
