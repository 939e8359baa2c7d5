"""Layer 4: what the design rules ask for.  Paths and sampling along them,
hot-spot stress and through-thickness linearisation, stress ranges from
tensors (principal range, the IIW rule at weld toes, cycles of a history), membrane and
bending at a section from nodal forces, the
Zienkiewicz-Zhu error indicator, grid convergence (Richardson, Roache's GCI),
static and fatigue checks with S-N curves, the endurance limit and
mean-stress criteria of non-welded parts, rainflow counting and the damage of counted cycles, the
multiaxial comparison value, and the closed forms and handbook
fits the workbooks compare against."""
from toolkit.core.locate import Location, PointLocator      # in core; beside the paths that use it
from toolkit.assess.checks import (CAUTION, CheckResult, SNCurve, Working, fatigue_check, load_sn_data,
                                   miner_damage, sn_curve, static_check, thickness_factor)
from toolkit.assess.endurance import (EnduranceLimit, criterion_amplitude, endurance_check, endurance_limit,
                                      endurance_limit_estimate, equivalent_diameter, fatigue_safety_factor,
                                      first_cycle_yield_check, langer_safety_factor, load_factor,
                                      reliability_factor, size_factor, surface_factor)
from toolkit.assess.convergence import ConvergenceResult, grid_convergence, representative_size
from toolkit.assess.hotspot import HOT_SPOT_RULES, hot_spot_concentration, hot_spot_stress, linearize
from toolkit.assess.indicator import error_indicator
from toolkit.assess.counting import Cycles, RangeHistogram, rainflow, turning_points
from toolkit.assess.damage import CycleDamage, cycle_damage, equivalent_range
from toolkit.assess.multiaxial import multiaxial_check
from toolkit.assess.paths import arc, edge_path, line, path_from_spec, polyline
from toolkit.assess.ranges import (IIW_ANGLE_LIMIT, IIWRange, PrincipalRange, cycle_tensor_ranges, iiw_range,
                                   principal_range, tensor_range)
from toolkit.assess.sampling import PathResult, raw_along, sample
from toolkit.assess.sections import SectionResultants, section_resultants

__all__ = ["CAUTION", "CheckResult", "SNCurve", "Working", "fatigue_check", "load_sn_data", "miner_damage", "sn_curve",
           "static_check", "thickness_factor", "ConvergenceResult", "grid_convergence", "representative_size",
           "HOT_SPOT_RULES", "hot_spot_concentration", "hot_spot_stress", "linearize", "error_indicator",
           "PathResult", "arc", "edge_path", "line", "path_from_spec", "polyline", "raw_along", "sample",
           "PointLocator", "Location", "EnduranceLimit", "criterion_amplitude", "endurance_check", "endurance_limit",
           "endurance_limit_estimate", "equivalent_diameter", "fatigue_safety_factor", "first_cycle_yield_check",
           "langer_safety_factor", "load_factor", "reliability_factor", "size_factor", "surface_factor"]

__all__ += ["tensor_range", "principal_range", "PrincipalRange", "iiw_range", "IIWRange", "cycle_tensor_ranges",
            "IIW_ANGLE_LIMIT"]
__all__ += ["SectionResultants", "section_resultants"]
__all__ += ["Cycles", "RangeHistogram", "rainflow", "turning_points", "CycleDamage", "cycle_damage",
            "equivalent_range", "multiaxial_check"]
