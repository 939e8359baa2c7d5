"""Stresspath: from integration-point stresses to continuous fields, paths,
design quantities, checks and a checkable report."""
from toolkit.core.elements import ELEMENTS, ElementType, QuadratureRule, get_element
from toolkit.core.mesh import Mesh
from toolkit.core.fields import GaussField, NodalField
from toolkit.core.cases import LoadCases, combine_nodal
from toolkit.recovery import L2Projector, project_l2, average_nodal, recover, recover_cases, METHODS as RECOVERY_METHODS
from toolkit.core.stress import von_mises, principal, tresca, hydrostatic, max_abs_principal, rotate_2d, rotate
from toolkit.assess.hotspot import hot_spot_stress, linearize, hot_spot_concentration
from toolkit.assess.checks import SNCurve, sn_curve, thickness_factor, miner_damage, fatigue_check, static_check, CheckResult
from toolkit.assess.convergence import grid_convergence

__version__ = "0.1.0"

__all__ = ["ELEMENTS", "ElementType", "QuadratureRule", "get_element", "Mesh", "GaussField", "NodalField",
           "LoadCases", "combine_nodal",
           "L2Projector", "project_l2", "average_nodal", "recover", "recover_cases", "RECOVERY_METHODS", "__version__",
           "von_mises", "principal", "tresca", "hydrostatic", "max_abs_principal", "rotate_2d", "rotate",
           "hot_spot_stress", "linearize", "hot_spot_concentration", "SNCurve", "sn_curve", "thickness_factor",
           "miner_damage", "fatigue_check", "static_check", "CheckResult", "grid_convergence"]

from toolkit.core.locate import PointLocator
from toolkit.assess.sampling import sample, raw_along
from toolkit.assess.paths import line, polyline, arc, edge_path
from toolkit.recovery.spr import recover_spr
from toolkit.assess.indicator import error_indicator
from toolkit.assess.sections import section_resultants

__all__ += ["PointLocator", "sample", "raw_along", "line", "polyline", "arc", "edge_path", "recover_spr",
            "error_indicator", "section_resultants"]

from toolkit.assess.counting import rainflow, Cycles  # noqa: E402
from toolkit.assess.damage import cycle_damage, equivalent_range  # noqa: E402
from toolkit.assess.multiaxial import multiaxial_check  # noqa: E402

__all__ += ["rainflow", "Cycles", "cycle_damage", "equivalent_range", "multiaxial_check"]

from toolkit.io import read_results, read_cases, write_results, write_vtu

__all__ += ["read_results", "read_cases", "write_results", "write_vtu"]

from toolkit.assess.ranges import tensor_range, principal_range, iiw_range, cycle_tensor_ranges  # noqa: E402

__all__ += ["tensor_range", "principal_range", "iiw_range", "cycle_tensor_ranges"]

from toolkit.fem import Material, Traction, Pressure, PointLoad, Fixed, Roller, Displacement  # noqa: E402

__all__ += ["Material", "Traction", "Pressure", "PointLoad", "Fixed", "Roller", "Displacement"]

from toolkit import compat as _compat  # noqa: E402  (version 0.1 module names, with a FutureWarning)

_compat.install()
