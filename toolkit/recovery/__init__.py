"""Layer 2: from integration-point values to a continuous nodal field.

Global L2 projection (consistent and HRZ-lumped), nodal averaging and
superconvergent patch recovery behind one call shape, ``method(field) ->
NodalField``, and one registry of them (:data:`METHODS`, :func:`recover`)."""
from toolkit.recovery.averaging import average_nodal
from toolkit.recovery.methods import METHODS, RecoveryMethod, recover, recover_cases
from toolkit.recovery.preconditioner import PRECONDITIONERS, unit_mass_inverse
from toolkit.recovery.projection import L2Projector, project_l2, rhs_rule
from toolkit.recovery.renumber import morton_codes
from toolkit.recovery.spr import recover_spr

__all__ = ["L2Projector", "project_l2", "average_nodal", "recover_spr", "rhs_rule", "morton_codes",
           "unit_mass_inverse", "PRECONDITIONERS", "METHODS", "RecoveryMethod", "recover",
           "recover_cases"]
