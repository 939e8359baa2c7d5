"""Stress ranges taken from stress tensors: the range tensor between two
states, the principal stress range with its direction, the IIW choice between
the principal range and the component normal to a weld toe, and the range
tensor of each counted cycle of a load history."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from toolkit.assess.checks import CAUTION
from toolkit.core.stress import PLANE, SOLID, component_set, principal, rotate_2d, to_tensor
from toolkit.errors import InputError

__all__ = ["tensor_range", "principal_range", "PrincipalRange", "iiw_range", "IIWRange", "cycle_tensor_ranges",
           "IIW_ANGLE_LIMIT"]

#: Largest angle (degrees) between the principal direction and the normal to the toe line for which the IIW
#: recommendations take the principal stress range (Hobbacher 2016, IIW document XIII-2460-13; section number 3.2
#: from memory; also Niemi, Fricke & Maddox, *Structural Hot-Spot Stress Approach to Fatigue Analysis of Welded
#: Components*, IIW designer's guide).
IIW_ANGLE_LIMIT = 60.0

_IIW_SOURCE = ("IIW recommendations (Hobbacher 2016, XIII-2460-13; section 3.2 from memory); Niemi, Fricke & Maddox, "
               "structural hot-spot stress designer's guide")
_TIE_RTOL = 1e-9
_ANGLE_TOL = 1e-9                                   # degrees: rounding at the 60 degree limit


def _finite(a, name):
    a = np.asarray(a, dtype=float)
    if not np.all(np.isfinite(a)):
        bad = np.argwhere(~np.isfinite(a))[0]
        raise InputError(f"{name}: non-finite value at index {tuple(int(i) for i in bad)}")
    return a


def _states(values, name, components=None):
    """Float array (..., ncomp), finite, with the component count checked when names are given."""
    v = np.asarray(values, dtype=float)
    if v.ndim == 0:
        raise InputError(f"{name} must be shaped (..., components), got a scalar")
    if components is not None:
        component_set(components)
        if v.shape[-1] != len(tuple(components)):
            raise InputError(f"{name}: values shaped {v.shape} must end with {len(tuple(components))} components "
                             f"{tuple(components)}")
    return _finite(v, name)


def tensor_range(state_a, state_b, components=None) -> np.ndarray:
    """The range tensor between two stress states, component by component.

    ``delta = state_b - state_a``, with every component kept (normal and
    shear), so that principal values and directions are taken of the change
    of the tensor, not of either state (the tensor range of a proportional or
    non-proportional cycle between two load states; e.g. Socie & Marquis,
    *Multiaxial Fatigue*, 2000, ch. 2).

    Parameters
    ----------
    state_a, state_b : array_like (..., ncomp)
        The two states; their leading shapes broadcast (points, nodes, path
        stations, load cases ...).  Components in the toolkit's names and
        order (see :mod:`toolkit.core.stress`), the same for both.
    components : sequence of str, optional
        The component names; when given, the last axis is checked against
        them.

    Returns
    -------
    ndarray (..., ncomp)
        ``state_b - state_a``.  Its sign depends on the order of the states;
        every range derived from it (:func:`principal_range`,
        :func:`iiw_range`) is a magnitude and does not.

    >>> tensor_range([10.0, 0.0, 5.0], [40.0, -20.0, 5.0], ("sxx", "syy", "sxy"))
    array([ 30., -20.,   0.])
    """
    a = _states(state_a, "state_a", components)
    b = _states(state_b, "state_b", components)
    if a.shape[-1] != b.shape[-1]:
        raise InputError(f"state_a has {a.shape[-1]} components and state_b {b.shape[-1]}: they must match")
    try:
        shape = np.broadcast_shapes(a.shape, b.shape)
    except ValueError:
        raise InputError(f"state_a shaped {a.shape} and state_b shaped {b.shape} do not broadcast") from None
    return np.broadcast_to(b, shape) - np.broadcast_to(a, shape)


@dataclass(frozen=True)
class PrincipalRange:
    """The principal stress range of a range tensor, with its direction.

    Attributes
    ----------
    range : ndarray (...)
        ``|s|`` of the principal value ``s`` of largest magnitude; a magnitude,
        never signed.
    value : ndarray (...)
        That principal value with its sign (tension or compression in
        ``state_b - state_a``; it flips when the states are swapped).
    direction : ndarray (..., d)
        Unit vector of its axis (d = 2 for the plane set, else 3).  An axis has
        no sign: it is fixed so that the component of largest magnitude is
        positive (for the plane set: angle in (-90, 90] degrees).
    angle : ndarray (...) or None
        2D sets: the angle of the axis from x in the xy-plane, degrees in
        (-90, 90] (NaN where the out-of-plane ``szz`` governs); None for 3D.
    tie : ndarray of bool (...)
        Where two principal values have the same magnitude (to a relative
        1e-9), e.g. pure shear: the range is well defined, the direction is
        not (the tensile value of ``state_b - state_a`` is reported).
    components : tuple of str
    """

    range: np.ndarray
    value: np.ndarray
    direction: np.ndarray
    angle: np.ndarray | None
    tie: np.ndarray
    components: tuple

    def to_dict(self) -> dict:
        conv = lambda a: None if a is None else (float(a) if np.ndim(a) == 0 else np.asarray(a).tolist())  # noqa: E731
        return {"name": "principal stress range", "range": conv(self.range), "value": conv(self.value),
                "direction": conv(self.direction), "angle_deg": conv(self.angle),
                "tie": np.asarray(self.tie).tolist(), "components": list(self.components),
                "source": "principal values of the range tensor (Mohr's circle / symmetric eigenproblem)"}

    def __repr__(self):
        r = np.asarray(self.range)
        head = f"PrincipalRange ({r.size} point{'s' if r.size != 1 else ''}, components {self.components})"
        if r.size == 1:
            lines = [f"  range      {float(r.ravel()[0]):.6g}",
                     f"  value      {float(np.ravel(self.value)[0]):.6g}",
                     "  direction  " + ", ".join(f"{x:.4g}" for x in np.reshape(self.direction, -1))]
            if self.angle is not None:
                lines.append(f"  angle      {float(np.ravel(self.angle)[0]):.4g} deg from x")
        else:
            k = int(np.argmax(r.ravel()))
            lines = [f"  range      min {r.min():.6g}  max {r.max():.6g} (at flat index {k})"]
        if np.any(self.tie):
            lines.append(f"  tie        {int(np.count_nonzero(self.tie))} point(s) with two principal values of "
                         "equal magnitude: direction not unique")
        return "\n".join([head] + lines)


def _canonical_axis(d):
    """Flip each axis (..., d) so that its component of largest magnitude is positive."""
    k = np.argmax(np.abs(d), axis=-1)[..., None]
    s = np.sign(np.take_along_axis(d, k, axis=-1))
    return d * np.where(s == 0, 1.0, s)


def principal_range(delta, components) -> PrincipalRange:
    """Principal stress range of a range tensor and its direction.

    The principal values ``s_i`` of ``delta`` (Mohr's circle for the plane
    sets, ``c ± R`` with ``c = (dsxx + dsyy)/2`` and
    ``R = sqrt(((dsxx - dsyy)/2)^2 + dsxy^2)``; the symmetric eigenproblem in
    3D; Timoshenko & Goodier, *Theory of Elasticity*, ch. 1), then the one of
    largest magnitude::

        range = max_i |s_i|

    The range is a magnitude, never signed: ``delta`` and ``-delta`` (the two
    states swapped) give the same range and the same axis (except where two
    values tie in magnitude, see :class:`PrincipalRange`).  The plane set
    counts its in-plane values only (``szz = 0`` never exceeds them); with
    ``szz`` (plane strain, axisymmetric) the out-of-plane value counts too.

    Parameters
    ----------
    delta : array_like (..., ncomp)
        Range tensors (:func:`tensor_range`), any leading shape.
    components : sequence of str
        Their names (``("sxx", "syy", "sxy")``, ``(..., "szz")`` or the six 3D
        names; see :mod:`toolkit.core.stress`).

    Returns
    -------
    PrincipalRange

    >>> r = principal_range([0.0, 0.0, 50.0], ("sxx", "syy", "sxy"))   # pure shear range
    >>> float(r.range), float(r.angle)
    (50.0, 45.0)
    """
    d = _states(delta, "delta", components)
    comps = tuple(str(c) for c in components)
    kind, _ = component_set(comps)
    p = principal(d, comps)                          # values largest first, directions as columns
    vals = p.values
    mags = np.abs(vals)
    k = np.argmax(mags, axis=-1)                     # first of equal magnitudes: the larger (tensile) value
    value = np.take_along_axis(vals, k[..., None], axis=-1)[..., 0]
    rng = np.abs(value)
    srt = np.sort(mags, axis=-1)
    tie = (srt[..., -1] - srt[..., -2]) <= _TIE_RTOL * srt[..., -1]
    direction = np.take_along_axis(p.directions, k[..., None, None], axis=-1)[..., 0]
    direction = _canonical_axis(direction)
    angle = None
    if kind != "3d":
        inplane = np.hypot(direction[..., 0], direction[..., 1]) > 0.5
        a = np.degrees(np.arctan2(direction[..., 1], direction[..., 0]))
        a = np.where(a <= -90.0, a + 180.0, np.where(a > 90.0, a - 180.0, a))
        angle = np.where(inplane, a, np.nan)
        if kind == "plane":
            rad = np.radians(a)
            direction = np.stack([np.cos(rad), np.sin(rad)], axis=-1)
    return PrincipalRange(rng, value, direction, angle, tie, comps)


# ---------------------------------------------------------------------------
# the IIW rule at weld toes
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class IIWRange:
    """The stress range the IIW rule takes at weld toes, with how it chose.

    Attributes
    ----------
    range : ndarray (...)
        The chosen range (a magnitude): ``principal_range`` where
        ``principal_used``, else ``normal_range``.
    principal_range : ndarray (...)
        Magnitude of the surface principal value of largest magnitude.
    normal_range : ndarray (...)
        ``|n . delta . n|``, the range of the component normal to the toe line.
    angle : ndarray (...)
        Angle in degrees, in [0, 90], between the axis of that principal value
        and the normal to the toe line (in the plate surface).
    principal_used : ndarray of bool (...)
        True where ``angle <= limit`` (the limit itself is within, to 1e-9
        degrees of rounding).
    limit : float
        The angle limit, 60 degrees by default.
    """

    range: np.ndarray
    principal_range: np.ndarray
    normal_range: np.ndarray
    angle: np.ndarray
    principal_used: np.ndarray
    limit: float = IIW_ANGLE_LIMIT

    @property
    def rule(self) -> np.ndarray:
        """``"principal"`` or ``"normal"`` at each point: which range was taken."""
        return np.where(self.principal_used, "principal", "normal")

    def to_dict(self) -> dict:
        conv = lambda a: float(a) if np.ndim(a) == 0 else np.asarray(a).tolist()  # noqa: E731
        rule = self.rule
        return {"name": "IIW stress range at the weld toe", "range": conv(self.range),
                "principal_range": conv(self.principal_range), "normal_range": conv(self.normal_range),
                "angle_deg": conv(self.angle), "rule": str(rule) if rule.ndim == 0 else rule.tolist(),
                "limit_deg": self.limit,
                "rule_text": (f"principal stress range where its direction lies within +-{self.limit:g} deg of the "
                              "normal to the toe line, otherwise the range of the stress component normal to it"),
                "source": _IIW_SOURCE, "caution": CAUTION}

    def __repr__(self):
        r = np.asarray(self.range)
        n = r.size
        head = (f"IIWRange ({n} point{'s' if n != 1 else ''}, principal range within +-{self.limit:g} deg "
                "of the toe normal)")
        if n == 1:
            lines = [f"  range            {float(r.ravel()[0]):.6g}  ({str(np.ravel(self.rule)[0])} rule)",
                     f"  principal range  {float(np.ravel(self.principal_range)[0]):.6g}",
                     f"  normal range     {float(np.ravel(self.normal_range)[0]):.6g}",
                     f"  angle            {float(np.ravel(self.angle)[0]):.4g} deg to the toe normal"]
        else:
            k = int(np.argmax(r.ravel()))
            used = int(np.count_nonzero(self.principal_used))
            lines = [f"  range            min {r.min():.6g}  max {r.max():.6g} (at flat index {k}, "
                     f"{str(np.ravel(self.rule)[k])} rule)",
                     f"  rule             principal at {used} of {n} points, normal component at {n - used}"]
        lines += [f"  source           {_IIW_SOURCE}", f"  caution          {CAUTION}"]
        return "\n".join([head] + lines)


def _direction(v, name, size):
    """Unit vectors (..., size) from non-zero, finite vectors of any length."""
    v = np.asarray(v, dtype=float)
    if v.ndim == 0 or v.shape[-1] != size:
        raise InputError(f"{name} must be shaped (..., {size}) (one vector, or one per point), got {v.shape}")
    v = _finite(v, name)
    norm = np.linalg.norm(v, axis=-1)
    zero = np.atleast_1d(norm == 0.0)
    if zero.any():
        bad = np.argwhere(zero)[0]
        raise InputError(f"{name} at index {tuple(int(i) for i in bad)} has zero length: give the direction "
                         "as a non-zero vector")
    return v / norm[..., None]


def _surface_state(d, kind, comps, toe_direction, plate_normal):
    """Range tensor in the plate surface, in the (toe normal, toe tangent) frame: (dnn, dtt, dnt)."""
    if kind != "3d":
        if plate_normal is not None:
            raise InputError("plate_normal is only used for 3D states; a 2D state lies in the xy-plane (normal z)")
        t = _direction(toe_direction, "toe_direction", 2)
        f = rotate_2d(d, comps, t)                   # normal n = t turned 90 degrees counter-clockwise
        return f.normal, f.tangential, f.shear
    if plate_normal is None:
        raise InputError("a 3D state needs plate_normal (the normal to the plate surface at the toe) to place the "
                         "toe normal in the surface")
    t = _direction(toe_direction, "toe_direction", 3)
    m = _direction(plate_normal, "plate_normal", 3)
    cos = np.abs(np.sum(t * m, axis=-1))
    if np.any(cos > 1e-6):
        raise InputError(f"toe_direction must lie in the plate surface (perpendicular to plate_normal): "
                         f"|cos| up to {float(cos.max()):.3g} (tolerance 1e-6)")
    n = np.cross(m, t)                               # in the surface, normal to the toe line
    T = to_tensor(d, comps)
    dnn = np.einsum("...i,...ij,...j->...", n, T, n)
    dtt = np.einsum("...i,...ij,...j->...", t, T, t)
    dnt = np.einsum("...i,...ij,...j->...", n, T, t)
    return dnn, dtt, dnt


def iiw_range(delta, components, toe_direction, plate_normal=None, limit=IIW_ANGLE_LIMIT) -> IIWRange:
    """The stress range the IIW recommendations take at a weld toe.

    In the plate surface, with ``n`` the normal to the toe line (in the
    surface) and ``t`` its tangent, the range tensor gives
    ``(dnn, dtt, dnt)``; its principal value of largest magnitude ``s`` (Mohr's
    circle) makes the angle ``phi`` (0 to 90 degrees) with ``n``.  Then::

        range = |s|       if phi <= limit (60 degrees)
        range = |dnn|     otherwise (the component normal to the toe line)

    (IIW recommendations, Hobbacher 2016, XIII-2460-13, the principal stress
    acting within ±60° of the normal to the weld toe; section 3.2 from memory;
    also Niemi, Fricke & Maddox, the structural hot-spot stress designer's
    guide.)  Every range is a magnitude: swapping the two states gives the same
    result.  Where the two surface principal values have equal magnitude (the
    direction is not unique) the axis nearer to ``n`` is taken.

    Parameters
    ----------
    delta : array_like (..., ncomp)
        Range tensors (:func:`tensor_range`), any leading shape.  2D sets lie
        in the xy-plane, which is taken as the plate surface (``szz``, when
        present, plays no part); 3D states are projected onto the surface
        given by ``plate_normal``.
    components : sequence of str
        Their names (see :mod:`toolkit.core.stress`).
    toe_direction : array_like (..., 2) or (..., 3)
        Tangent of the toe line (2-vectors for 2D sets, 3-vectors for 3D),
        one per point or a single one; any non-zero length.  For 2D the normal
        is the tangent turned 90 degrees counter-clockwise (its sign does not
        matter).
    plate_normal : array_like (..., 3), optional
        3D only (required there): the normal to the plate surface at the toe;
        ``toe_direction`` must be perpendicular to it (to 1e-6).
    limit : float
        The angle limit in degrees, 60 by default (:data:`IIW_ANGLE_LIMIT`).

    Returns
    -------
    IIWRange
        ``range``, ``principal_range``, ``normal_range``, ``angle`` (degrees),
        ``principal_used`` (and ``rule``) as arrays, with ``__repr__`` and
        ``to_dict()``.

    >>> r = iiw_range([100.0, 0.0, 0.0], ("sxx", "syy", "sxy"), toe_direction=(0.0, 1.0))
    >>> float(r.range), str(r.rule), float(r.angle)
    (100.0, 'principal', 0.0)
    """
    d = _states(delta, "delta", components)
    comps = tuple(str(c) for c in components)
    kind, _ = component_set(comps)
    limit = float(limit)
    if not (0.0 <= limit <= 90.0):
        raise InputError(f"limit must be an angle in degrees between 0 and 90, got {limit}")
    dnn, dtt, dnt = _surface_state(d, kind, comps, toe_direction, plate_normal)
    surface = np.stack(np.broadcast_arrays(dnn, dtt, dnt), axis=-1)
    p = principal(surface, PLANE)                    # (n, t) frame: values largest first, axes as columns
    mags = np.abs(p.values)
    # the principal value of largest magnitude; on a tie the axis nearer to n (|cos| larger)
    cosn = np.abs(p.directions[..., 0, :])           # |n-component| of each axis
    tie = np.abs(mags[..., 0] - mags[..., 1]) <= _TIE_RTOL * np.max(mags, axis=-1)
    k = np.where(tie, np.argmax(cosn, axis=-1), np.argmax(mags, axis=-1))
    prange = np.take_along_axis(mags, k[..., None], axis=-1)[..., 0]
    c = np.clip(np.take_along_axis(cosn, k[..., None], axis=-1)[..., 0], 0.0, 1.0)
    angle = np.degrees(np.arccos(c))
    nrange = np.abs(dnn) + np.zeros_like(prange)
    used = angle <= limit + _ANGLE_TOL              # "within" includes the limit, whatever the rounding
    return IIWRange(np.where(used, prange, nrange), prange, nrange, angle, used, limit)


# ---------------------------------------------------------------------------
# load histories
# ---------------------------------------------------------------------------
def _indices(a, name, steps):
    a = np.asarray(a)
    if a.ndim != 1:
        raise InputError(f"{name} must be a 1-D array of time-step indices, got shape {a.shape}")
    if a.dtype.kind == "f":
        if not (np.all(np.isfinite(a)) and np.all(a == np.round(a))):
            raise InputError(f"{name} must hold whole time-step indices, got non-integer values")
        a = a.astype(np.int64)
    elif a.dtype.kind == "b" or a.dtype.kind not in "iu":
        if a.size:
            raise InputError(f"{name} must hold integer time-step indices, got dtype {a.dtype}")
        a = a.astype(np.int64)
    if a.size and (a.min() < 0 or a.max() >= steps):
        bad = int(np.argmax((a < 0) | (a >= steps)))
        raise InputError(f"{name}[{bad}] = {int(a[bad])} is outside the history's {steps} time steps "
                         f"(0 to {steps - 1})")
    return a


def cycle_tensor_ranges(states, starts, ends, components=None) -> np.ndarray:
    """The range tensor of each counted cycle of a load history.

    A cycle counted on a scalar history (the hot-spot stress, a signed normal
    component ...) runs between two turning points, time steps ``starts[j]``
    and ``ends[j]``; its range tensor is the change of the whole tensor
    between them::

        delta[j] = states[ends[j]] - states[starts[j]]

    (the tensor at the cycle's two reversals; rainflow counting on the scalar
    history, ASTM E1049-85 section 5.4.4, gives the indices).  Pass the
    result to :func:`principal_range` or :func:`iiw_range` for the range of
    each cycle; those are magnitudes, so the order of a cycle's two ends does
    not matter.

    Parameters
    ----------
    states : array_like (steps, ..., ncomp)
        The stress states at each time step (any shape of points between).
    starts, ends : array_like of int (cycles,)
        Time-step indices of each cycle's two turning points (0-based into
        ``states``; negative indices are refused).
    components : sequence of str, optional
        Component names; when given, the last axis is checked against them.

    Returns
    -------
    ndarray (cycles, ..., ncomp)

    >>> states = [[0.0, 0.0, 0.0], [80.0, 10.0, 0.0], [-20.0, 0.0, 5.0]]
    >>> cycle_tensor_ranges(states, [1], [2])
    array([[-100.,  -10.,    5.]])
    """
    s = _states(states, "states", components)
    if s.ndim < 2:
        raise InputError(f"states must be shaped (steps, ..., components), got {s.shape}")
    steps = s.shape[0]
    a = _indices(starts, "starts", steps)
    b = _indices(ends, "ends", steps)
    if a.shape != b.shape:
        raise InputError(f"starts ({a.size} cycles) and ends ({b.size} cycles) must have the same length")
    return s[b] - s[a]
