"""Stresspath: from integration-point stresses to continuous fields, paths,
design quantities, checks and a checkable report."""
from .elements import ELEMENTS, ElementType, QuadratureRule, get_element
from .mesh import Mesh
from .fields import GaussField, NodalField
from .recovery import L2Projector, project_l2, average_nodal
from .stress import von_mises, principal, tresca, hydrostatic, max_abs_principal, rotate_2d, rotate
from .hotspot import hot_spot_stress, linearize, hot_spot_concentration
from .checks import SNCurve, sn_curve, thickness_factor, miner_damage, fatigue_check, static_check, CheckResult
from .quality import grid_convergence

__version__ = "0.1.0"

__all__ = ["ELEMENTS", "ElementType", "QuadratureRule", "get_element", "Mesh", "GaussField", "NodalField",
           "L2Projector", "project_l2", "average_nodal", "__version__",
           "von_mises", "principal", "tresca", "hydrostatic", "max_abs_principal", "rotate_2d", "rotate",
           "hot_spot_stress", "linearize", "hot_spot_concentration", "SNCurve", "sn_curve", "thickness_factor",
           "miner_damage", "fatigue_check", "static_check", "CheckResult", "grid_convergence"]
