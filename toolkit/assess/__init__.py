"""Layer 4: what the design rules ask for.  Paths and sampling along them,
hot-spot stress and through-thickness linearisation, the Zienkiewicz-Zhu error
indicator, grid convergence (Richardson, Roache's GCI), static and fatigue
checks with S-N curves, rainflow counting and the damage of counted cycles,
the multiaxial comparison value, and the closed forms and handbook fits the workbooks
compare against."""
from toolkit.core.locate import Location, PointLocator      # in core; beside the paths that use it
from toolkit.assess.checks import (CAUTION, CheckResult, SNCurve, Working, fatigue_check, load_sn_data,
                                   miner_damage, sn_curve, static_check, thickness_factor)
from toolkit.assess.convergence import ConvergenceResult, grid_convergence, representative_size
from toolkit.assess.hotspot import HOT_SPOT_RULES, hot_spot_concentration, hot_spot_stress, linearize
from toolkit.assess.indicator import error_indicator
from toolkit.assess.rainflow import Cycles, RangeHistogram, rainflow, turning_points
from toolkit.assess.damage import CycleDamage, cycle_damage, equivalent_range
from toolkit.assess.multiaxial import multiaxial_check
from toolkit.assess.paths import arc, edge_path, line, path_from_spec, polyline
from toolkit.assess.sampling import PathResult, raw_along, sample

__all__ = ["CAUTION", "CheckResult", "SNCurve", "Working", "fatigue_check", "load_sn_data", "miner_damage", "sn_curve",
           "static_check", "thickness_factor", "ConvergenceResult", "grid_convergence", "representative_size",
           "HOT_SPOT_RULES", "hot_spot_concentration", "hot_spot_stress", "linearize", "error_indicator",
           "PathResult", "arc", "edge_path", "line", "path_from_spec", "polyline", "raw_along", "sample",
           "PointLocator", "Location", "Cycles", "RangeHistogram", "rainflow", "turning_points", "CycleDamage",
           "cycle_damage", "equivalent_range", "multiaxial_check"]
