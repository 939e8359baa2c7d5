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

from .paths import PointLocator, sample, raw_along, line, polyline, arc, edge_path
from .spr import recover_spr
from .indicator import error_indicator

__all__ += ["PointLocator", "sample", "raw_along", "line", "polyline", "arc", "edge_path", "recover_spr",
            "error_indicator"]

from .io import read_results, write_results, write_vtu

__all__ += ["read_results", "write_results", "write_vtu"]

from .solve import Material, Traction, Pressure, PointLoad, Fixed, Roller, Displacement  # noqa: E402 (module toolkit.solve stays reachable)

__all__ += ["Material", "Traction", "Pressure", "PointLoad", "Fixed", "Roller", "Displacement"]
