"""Load cases on one mesh: :class:`LoadCases`, an ordered set of named
integration-point fields (unit load cases or time steps) that share the mesh,
the components and the point rules, with linear combination, scaling and the
difference of two states; :func:`combine_nodal` combines their recovered
nodal fields the same way."""
from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from toolkit.errors import InputError
from toolkit.core.fields import GaussField, NodalField

__all__ = ["LoadCases", "combine_nodal", "case_weights"]


def case_weights(names, weights) -> np.ndarray:
    """Weights of the cases ``names`` (one per case, in that order) from
    ``weights``: a mapping ``{case name: factor}`` (cases left out weigh 0)
    or a sequence of one factor per case.  Every factor must be finite."""
    names = tuple(names)
    if isinstance(weights, Mapping):
        unknown = [k for k in weights if k not in names]
        if unknown:
            raise InputError(f"weights: unknown load case {unknown[0]!r}; the cases are {', '.join(map(repr, names))}")
        w = np.array([float(weights.get(n, 0.0)) for n in names])
    else:
        try:
            w = np.asarray(weights, dtype=float)
        except (TypeError, ValueError):
            raise InputError("weights must be a mapping {case name: factor} or a sequence of numbers") from None
        if w.ndim != 1 or len(w) != len(names):
            raise InputError(f"weights: expected one factor per load case ({len(names)}: "
                             f"{', '.join(map(repr, names))}), got shape {w.shape}")
    bad = np.flatnonzero(~np.isfinite(w))
    if bad.size:
        raise InputError(f"weights: the factor of load case {names[bad[0]]!r} is {w[bad[0]]}; factors must be finite")
    return w


def _weighted_sum(arrays, w):
    """``Σ_i w_i A_i`` over arrays of one shape, one output array, no copies of the inputs."""
    out = np.zeros_like(arrays[0])
    for wi, a in zip(w, arrays):
        if wi != 0.0:
            out += wi * a
    return out


class LoadCases:
    """Ordered, named integration-point fields on one mesh.

    Each case is a :class:`GaussField` (a unit load case or a time step); all
    share the mesh (the same object), the components (same names, same order)
    and the points of every block.  Since the stresses of a linear model
    superpose, any state is a linear combination of unit cases:
    ``σ = Σ_i w_i σ_i`` at every integration point (superposition principle,
    e.g. Timoshenko & Goodier, *Theory of Elasticity*, 3rd ed., §1.9).

    The cases are kept as the given fields, not stacked into one array: the
    fields' values are read-only already, so the container shares them with
    the solver or reader that made them and copies nothing; each case is
    returned as the very field, and a combination reads each case once into
    one output array.

    Parameters
    ----------
    cases : mapping ``{name: GaussField}`` (its order is kept) or a sequence
        of fields, named by their ``name``.
    name : a label, e.g. ``"load cases"``.

    Examples
    --------
    Two unit load cases and their combination ``1.5 a + 0.5 b``:

    >>> import numpy as np
    >>> from toolkit import GaussField
    >>> from toolkit.core.grid import rectangle_mesh
    >>> mesh = rectangle_mesh("quad4", 2, 1)
    >>> ones = np.ones((2, 4, 3))
    >>> cases = LoadCases({"a": GaussField(mesh, {"quad4": ones * [1, 0, 0]}, ("sxx", "syy", "sxy")),
    ...                    "b": GaussField(mesh, {"quad4": ones * [0, 2, 0]}, ("sxx", "syy", "sxy"))})
    >>> cases
    LoadCases('cases', 2 cases ('a', 'b'), components ('sxx', 'syy', 'sxy'), quad4: 2x4 at gauss 2x2)
    >>> cases.combine({"a": 1.5, "b": 0.5}).values["quad4"][0, 0].tolist()
    [1.5, 1.0, 0.0]
    >>> cases.difference("a", "b").values["quad4"][0, 0].tolist()
    [-1.0, 2.0, 0.0]
    """

    def __init__(self, cases, name="cases"):
        if isinstance(cases, Mapping):
            items = [(str(k), v) for k, v in cases.items()]
        else:
            try:
                items = [(getattr(f, "name", None), f) for f in cases]
            except TypeError:
                raise InputError("LoadCases needs a mapping {name: GaussField} or a sequence of GaussFields") from None
        if not items:
            raise InputError("LoadCases needs at least one load case")
        seen = {}
        for k, f in items:
            if not isinstance(f, GaussField):
                raise InputError(f"load case {k!r}: expected a GaussField, got {type(f).__name__}")
            if not k or k != k.strip():
                raise InputError(f"load case name {k!r}: names must be non-empty without surrounding spaces")
            if k in seen:
                raise InputError(f"load case name {k!r} is given twice (cases {seen[k] + 1} and {len(seen) + 1})")
            seen[k] = len(seen)
        self.name = str(name)
        self._cases = dict(items)
        first_name, first = items[0]
        self.mesh = first.mesh
        self.components = first.components
        for k, f in items[1:]:
            self._check_like(k, f, first_name, first)

    def _check_like(self, k, f, first_name, first):
        if f.mesh is not first.mesh:
            raise InputError(f"load case {k!r} lies on another mesh than load case {first_name!r}; "
                             "all cases must share one Mesh object")
        if f.components != first.components:
            raise InputError(f"load case {k!r} has components {f.components}, load case {first_name!r} has "
                             f"{first.components}; all cases need the same components in the same order")
        for b, p in first.points.items():
            q = f.points[b]
            if q.shape != p.shape or not np.array_equal(q, p):
                raise InputError(f"load case {k!r}: block {b} sits at {f.rule_labels[b]}, load case "
                                 f"{first_name!r} at {first.rule_labels[b]}; all cases need the same points")

    # -- access -------------------------------------------------------------
    @property
    def names(self) -> tuple:
        """The case names, in order."""
        return tuple(self._cases)

    @property
    def points(self) -> dict:
        """The points of every block (shared by all cases)."""
        return self[self.names[0]].points

    @property
    def ncomponents(self) -> int:
        return len(self.components)

    def __len__(self):
        return len(self._cases)

    def __iter__(self):
        return iter(self._cases)

    def __contains__(self, name):
        return name in self._cases

    def __getitem__(self, name) -> GaussField:
        try:
            return self._cases[name]
        except (KeyError, TypeError):
            raise InputError(f"no load case {name!r}; the cases are {', '.join(map(repr, self.names))}") from None

    def items(self):
        """``(name, GaussField)`` pairs in order."""
        return self._cases.items()

    # -- arithmetic -----------------------------------------------------------
    def combine(self, weights, name="combination") -> GaussField:
        """The linear combination ``σ = Σ_i w_i σ_i`` of the cases (superposition
        of a linear model).

        ``weights``: ``{case name: factor}`` (cases left out weigh 0) or one
        factor per case, in order."""
        w = case_weights(self.names, weights)
        fields = list(self._cases.values())
        values = {b: _weighted_sum([f.values[b] for f in fields], w) for b in fields[0].values}
        return self._field(values, name)

    def scaled(self, factor, name=None) -> "LoadCases":
        """Every case multiplied by ``factor`` (e.g. a unit load case to the design load)."""
        factor = float(factor)
        if not np.isfinite(factor):
            raise InputError(f"factor must be finite, got {factor}")
        return LoadCases({k: self._field({b: factor * v for b, v in f.values.items()}, k)
                          for k, f in self._cases.items()}, name=name or self.name)

    def difference(self, a, b, name=None) -> GaussField:
        """The change from state ``a`` to state ``b``: ``σ_b − σ_a`` (the
        tensor range of a cycle between two states)."""
        fa, fb = self[a], self[b]
        return self._field({k: fb.values[k] - fa.values[k] for k in fa.values}, name or f"{b} - {a}")

    def _field(self, values, name) -> GaussField:
        return GaussField(self.mesh, values, self.components, points=self.points, name=name)

    def __repr__(self):
        first = self[self.names[0]]
        shown = self.names if len(self) <= 6 else self.names[:3] + ("...",) + self.names[-2:]
        parts = ", ".join(f"{k}: {v.shape[0]}x{v.shape[1]} at {first.rule_labels[k]}" for k, v in first.values.items())
        return (f"LoadCases({self.name!r}, {len(self)} case{'s' if len(self) != 1 else ''} "
                f"({', '.join(s if s == '...' else repr(s) for s in shown)}), "
                f"components {self.components}, {parts})")


def combine_nodal(fields: Mapping, weights, name="combination") -> NodalField:
    """The linear combination ``Σ_i w_i f_i`` of nodal fields recovered from
    load cases (e.g. the result of
    :meth:`~toolkit.recovery.L2Projector.project_cases`).  Projection,
    averaging and SPR are linear, so this equals the recovery of the combined
    integration-point field (up to the solver tolerance).

    ``fields``: ``{case name: NodalField}`` on one mesh with one row layout
    and the same components; ``weights`` as in :meth:`LoadCases.combine`."""
    if not isinstance(fields, Mapping) or not fields:
        raise InputError("fields must be a non-empty mapping {case name: NodalField}")
    names = tuple(fields)
    first = fields[names[0]]
    for k in names:
        f = fields[k]
        if not isinstance(f, NodalField):
            raise InputError(f"case {k!r}: expected a NodalField, got {type(f).__name__}")
        if f.mesh is not first.mesh or f.components != first.components or not (
                np.array_equal(f.node, first.node) and np.array_equal(f.region, first.region)):
            raise InputError(f"case {k!r}: another mesh, components or row layout than case {names[0]!r}")
    w = case_weights(names, weights)
    values = _weighted_sum([fields[k].values for k in names], w)
    return NodalField(first.mesh, values, first.components, first.node, first.region, method=first.method,
                      info={"combination": dict(zip(names, w.tolist()))})
