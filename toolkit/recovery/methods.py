"""The one registry of recovery methods: each method's command-line name,
its label for tables, a one-line description and the function that runs it
(:data:`METHODS`), and :func:`recover`, which runs a method by name.  The
command line and the workbooks' shared steps read their methods from here."""
from __future__ import annotations

from dataclasses import dataclass, field as dataclass_field
from types import MappingProxyType
from typing import Callable, Mapping

from toolkit.core.cases import LoadCases
from toolkit.core.fields import GaussField, NodalField
from toolkit.errors import InputError
from toolkit.recovery.averaging import average_nodal
from toolkit.recovery.projection import L2Projector, project_l2
from toolkit.recovery.spr import recover_spr

__all__ = ["RecoveryMethod", "METHODS", "recover", "recover_cases"]


@dataclass(frozen=True)
class RecoveryMethod:
    """One recovery method: ``name`` (the command-line word), ``label`` (for
    tables and figures), ``description`` (one line, for help texts),
    ``function(field, across_regions=..., **options) -> NodalField`` and the
    ``options`` the method fixes (``lumped=True`` for the lumped projection)."""

    name: str
    label: str
    description: str
    function: Callable[..., NodalField]
    options: Mapping = dataclass_field(default_factory=dict)

    def __post_init__(self):
        object.__setattr__(self, "options", MappingProxyType(dict(self.options)))

    def __call__(self, field: GaussField, across_regions: bool = False, **options) -> NodalField:
        """Recover ``field`` with this method; ``options`` go to its function
        (those the method fixes cannot be given)."""
        fixed = sorted(set(options) & set(self.options))
        if fixed:
            raise InputError(f"recovery method {self.name!r} fixes {', '.join(fixed)}; "
                             f"leave {'it' if len(fixed) == 1 else 'them'} out or choose another method")
        return self.function(field, across_regions=across_regions, **self.options, **options)


#: Recovery methods by their command-line name.
METHODS: Mapping[str, RecoveryMethod] = MappingProxyType({m.name: m for m in (
    RecoveryMethod("l2", "L2 projection",
                   "global L2 projection, consistent mass matrix (Hinton & Campbell 1974)", project_l2),
    RecoveryMethod("lumped", "L2 projection, HRZ-lumped",
                   "L2 projection with the HRZ-lumped mass matrix (Hinton, Rock & Zienkiewicz 1976)", project_l2,
                   {"lumped": True}),
    RecoveryMethod("average", "nodal averaging",
                   "extrapolate each element to its nodes, then average", average_nodal),
    RecoveryMethod("spr", "patch recovery (SPR)",
                   "superconvergent patch recovery (Zienkiewicz & Zhu 1992)", recover_spr),
)})


def recover(field: GaussField, method: str, across_regions: bool = False, **options) -> NodalField:
    """Recover ``field`` to the nodes with the method named ``method`` (a key
    of :data:`METHODS`: ``l2``, ``lumped``, ``average`` or ``spr``); ``options``
    go to the method's function (e.g. ``rtol`` for ``l2``, ``rcond`` for
    ``spr``)."""
    entry = METHODS.get(method)
    if entry is None:
        raise InputError(f"unknown recovery method {method!r}; use one of {', '.join(METHODS)}")
    return entry(field, across_regions=across_regions, **options)


def recover_cases(cases: LoadCases, method: str, across_regions: bool = False, **options) -> dict[str, NodalField]:
    """Recover every load case of ``cases`` with the method named ``method``
    (as :func:`recover`); returns ``{case name: NodalField}`` in the cases'
    order.  ``l2`` and ``lumped`` build one :class:`L2Projector` and solve
    all cases as columns of one block solve
    (:meth:`L2Projector.project_cases`); ``average`` and ``spr`` run case by
    case.  Every method is linear, so the results combine as the cases do
    (:func:`~toolkit.core.cases.combine_nodal`)."""
    if not isinstance(cases, LoadCases):
        raise InputError(f"recover_cases expects LoadCases, got {type(cases).__name__}")
    entry = METHODS.get(method)
    if entry is None:
        raise InputError(f"unknown recovery method {method!r}; use one of {', '.join(METHODS)}")
    if entry.function is project_l2:
        fixed = sorted(set(options) & set(entry.options))
        if fixed:
            raise InputError(f"recovery method {entry.name!r} fixes {', '.join(fixed)}; leave it out")
        projector = L2Projector(cases.mesh, across_regions=across_regions, **entry.options, **options)
        return projector.project_cases(cases)
    return {k: entry(f, across_regions=across_regions, **options) for k, f in cases.items()}
