"""Stress invariants, principal stresses and rotations.

Every function takes ``values`` shaped ``(..., ncomp)`` (any leading shape:
points, cells x points, load cases ...) and ``components``, the names of the
last axis.  Three component sets are understood, in any order:

* ``("sxx", "syy", "sxy")`` — plane stress: ``szz = syz = sxz = 0``.
* ``("sxx", "syy", "sxy", "szz")`` — plane strain or axisymmetric: the
  out-of-plane (or hoop) normal stress ``szz`` is a principal stress,
  ``syz = sxz = 0``.  (Axisymmetric: x radial, y axial, z hoop.)
* ``("sxx", "syy", "szz", "sxy", "syz", "sxz")`` — general 3D.
* ``("srr", "szz", "srz", "shoop")`` — axisymmetric in (r, z): handled as the
  plane set with r as x, z as y and the hoop stress as the out-of-plane one.

Shear components are tensor (not engineering) shears.  Formulas are the
textbook ones (e.g. Timoshenko & Goodier, *Theory of Elasticity*, ch. 1 and 9;
Mohr's circle for the in-plane principal stresses).
"""
from __future__ import annotations

from typing import NamedTuple

import numpy as np

from toolkit.errors import InputError

__all__ = [
    "PLANE", "PLANE_ZZ", "SOLID", "AXISYMMETRIC", "COMPONENT_SETS", "stress_kind", "component_set", "to_tensor", "from_tensor",
    "von_mises", "principal", "Principal", "tresca", "hydrostatic", "max_abs_principal",
    "rotate_2d", "FrameStress", "rotate", "unit_tangent",
]

PLANE = ("sxx", "syy", "sxy")
PLANE_ZZ = ("sxx", "syy", "sxy", "szz")
SOLID = ("sxx", "syy", "szz", "sxy", "syz", "sxz")
AXISYMMETRIC = ("srr", "szz", "srz", "shoop")
COMPONENT_SETS = {"plane": PLANE, "plane+szz": PLANE_ZZ, "3d": SOLID}
# other names for a canonical set: name tuple -> (kind, canonical name of each)
ALIASES = {AXISYMMETRIC: ("plane+szz", PLANE_ZZ)}

# (row, column) of each name in the symmetric 3x3 tensor
_IJ = {"sxx": (0, 0), "syy": (1, 1), "szz": (2, 2), "sxy": (0, 1), "syz": (1, 2), "sxz": (0, 2)}
_IJ_AXI = {"srr": (0, 0), "szz": (1, 1), "srz": (0, 1), "shoop": (2, 2)}


def stress_kind(components):
    """``"plane"``, ``"plane+szz"`` or ``"3d"`` for a known component set, else None."""
    try:
        return component_set(components)[0]
    except ValueError:
        return None


def _ij(components):
    return _IJ_AXI if set(components) == set(AXISYMMETRIC) else _IJ


def component_set(components) -> tuple[str, tuple[int, ...]]:
    """Identify a component tuple.

    Returns ``(kind, order)``: kind is ``"plane"``, ``"plane+szz"`` or ``"3d"``
    and ``order`` gives, for each name of the canonical tuple of that kind, its
    position in ``components``.  Raises ValueError for anything else.
    """
    comps = tuple(str(c) for c in components)
    if len(set(comps)) != len(comps):
        raise InputError(f"stress components {comps} contain a repeated name")
    for kind, canon in COMPONENT_SETS.items():
        if set(comps) == set(canon):
            return kind, tuple(comps.index(c) for c in canon)
    for names, (kind, _) in ALIASES.items():
        if set(comps) == set(names):
            return kind, tuple(comps.index(c) for c in names)
    raise InputError(
        f"unknown stress component set {comps}: expected (in any order) {PLANE} for plane stress, "
        f"{PLANE_ZZ} for plane strain, {AXISYMMETRIC} for axisymmetric, or {SOLID} for 3D")


def _values(values, components, name):
    kind, order = component_set(components)
    v = np.asarray(values, dtype=float)
    if v.ndim == 0 or v.shape[-1] != len(order):
        raise InputError(f"{name}: values shaped {v.shape} must end with {len(order)} components {tuple(components)}")
    if not np.all(np.isfinite(v)):
        bad = np.argwhere(~np.isfinite(v))[0]
        raise InputError(f"{name}: non-finite stress at index {tuple(int(i) for i in bad)}")
    return kind, v[..., list(order)]


def to_tensor(values, components) -> np.ndarray:
    """Symmetric stress tensors ``(..., 3, 3)``; absent components are zero."""
    kind, v = _values(values, components, "to_tensor")
    T = np.zeros(v.shape[:-1] + (3, 3))
    for a, c in enumerate(COMPONENT_SETS[kind]):
        i, j = _IJ[c]
        T[..., i, j] = v[..., a]
        T[..., j, i] = v[..., a]
    return T


def from_tensor(T, components=SOLID) -> np.ndarray:
    """Components ``(..., ncomp)`` of symmetric tensors ``(..., 3, 3)`` in the order of ``components``."""
    component_set(components)
    T = np.asarray(T, dtype=float)
    if T.shape[-2:] != (3, 3):
        raise InputError(f"from_tensor: tensors must be shaped (..., 3, 3), got {T.shape}")
    ij = _ij(components)
    return np.stack([T[(...,) + ij[c]] for c in components], axis=-1)


def von_mises(values, components) -> np.ndarray:
    """von Mises equivalent stress.

    ``sqrt(((sxx-syy)^2 + (syy-szz)^2 + (szz-sxx)^2)/2 + 3 (sxy^2 + syz^2 + sxz^2))``
    (distortion-energy criterion; pure shear gives ``sqrt(3) tau``).
    """
    kind, v = _values(values, components, "von_mises")
    if kind == "3d":
        sxx, syy, szz, sxy, syz, sxz = np.moveaxis(v, -1, 0)
    else:
        sxx, syy, sxy = v[..., 0], v[..., 1], v[..., 2]
        szz = v[..., 3] if kind == "plane+szz" else 0.0
        syz = sxz = 0.0
    s2 = 0.5 * ((sxx - syy) ** 2 + (syy - szz) ** 2 + (szz - sxx) ** 2) + 3.0 * (sxy**2 + syz**2 + sxz**2)
    return np.sqrt(s2)


def hydrostatic(values, components) -> np.ndarray:
    """Hydrostatic (mean normal) stress ``(sxx + syy + szz) / 3``."""
    kind, v = _values(values, components, "hydrostatic")
    if kind == "3d":
        return (v[..., 0] + v[..., 1] + v[..., 2]) / 3.0
    szz = v[..., 3] if kind == "plane+szz" else 0.0
    return (v[..., 0] + v[..., 1] + szz) / 3.0


class Principal(NamedTuple):
    """Principal stresses, largest first, and their unit directions.

    ``values`` (..., k); ``directions`` (..., d, k): column ``a`` is the
    direction of ``values[..., a]`` (as ``numpy.linalg.eigh``).  For the plane
    set k = d = 2 (in-plane only); otherwise k = d = 3.
    """

    values: np.ndarray
    directions: np.ndarray


def _inplane(sxx, syy, sxy):
    """Mohr's circle: centre c, radius R, angle of the major axis."""
    c = 0.5 * (sxx + syy)
    R = np.hypot(0.5 * (sxx - syy), sxy)
    theta = 0.5 * np.arctan2(2.0 * sxy, sxx - syy)
    return c, R, theta


def principal(values, components) -> Principal:
    """Principal stresses (largest first) with directions.

    Plane set: the two in-plane values ``c ± R`` from Mohr's circle,
    ``c = (sxx+syy)/2``, ``R = sqrt(((sxx-syy)/2)^2 + sxy^2)``, major axis at
    ``theta = atan2(2 sxy, sxx - syy)/2`` from x.  With ``szz`` (plane strain,
    axisymmetric) ``szz`` joins them and the three are sorted; its direction is
    z.  3D: eigen-decomposition of the tensor (direction signs arbitrary).
    """
    kind, v = _values(values, components, "principal")
    if kind == "3d":
        w, V = np.linalg.eigh(to_tensor(v, SOLID))
        return Principal(w[..., ::-1], V[..., :, ::-1])
    c, R, th = _inplane(v[..., 0], v[..., 1], v[..., 2])
    ct, st = np.cos(th), np.sin(th)
    d1 = np.stack([ct, st], axis=-1)
    d2 = np.stack([-st, ct], axis=-1)
    if kind == "plane":
        return Principal(np.stack([c + R, c - R], axis=-1), np.stack([d1, d2], axis=-1))
    szz = v[..., 3]
    vals = np.stack([c + R, c - R, szz], axis=-1)
    zero = np.zeros_like(ct)
    dirs = np.stack([np.stack([ct, st, zero], -1), np.stack([-st, ct, zero], -1),
                     np.stack([zero, zero, np.ones_like(ct)], -1)], axis=-1)  # (..., 3, 3)
    order = np.argsort(-vals, axis=-1, kind="stable")
    vals = np.take_along_axis(vals, order, axis=-1)
    dirs = np.take_along_axis(dirs, order[..., None, :], axis=-1)
    return Principal(vals, dirs)


def _three_principal(values, components, name):
    """All three principal values (largest first), the plane set with 0 for szz."""
    kind, v = _values(values, components, name)
    if kind == "3d":
        return np.linalg.eigvalsh(to_tensor(v, SOLID))[..., ::-1]
    c, R, _ = _inplane(v[..., 0], v[..., 1], v[..., 2])
    szz = v[..., 3] if kind == "plane+szz" else np.zeros_like(c)
    return -np.sort(-np.stack([c + R, c - R, szz], axis=-1), axis=-1)


def tresca(values, components) -> np.ndarray:
    """Tresca stress intensity ``s1 - s3`` (twice the maximum shear stress).

    The out-of-plane principal stress counts: 0 for plane stress, ``szz`` for
    plane strain and axisymmetric states.
    """
    s = _three_principal(values, components, "tresca")
    return s[..., 0] - s[..., 2]


def max_abs_principal(values, components) -> np.ndarray:
    """The principal stress of largest magnitude, with its sign (plane stress: szz = 0 counts)."""
    s = _three_principal(values, components, "max_abs_principal")
    return np.where(np.abs(s[..., 0]) >= np.abs(s[..., 2]), s[..., 0], s[..., 2])


def unit_tangent(tangent, name="tangent", tol=1e-6) -> np.ndarray:
    """Check that ``tangent`` (..., 2) holds unit vectors (within ``tol``) and return it as floats."""
    t = np.asarray(tangent, dtype=float)
    if t.ndim == 0 or t.shape[-1] != 2:
        raise InputError(f"{name} must be shaped (..., 2), got {t.shape}")
    norm = np.linalg.norm(t, axis=-1)
    bad = ~(np.abs(norm - 1.0) <= tol)
    if bad.any():
        i = np.argwhere(np.atleast_1d(bad))[0]
        raise InputError(f"{name} at index {tuple(int(k) for k in i)} has length "
                         f"{np.atleast_1d(norm)[tuple(i)]:.6g}, expected a unit vector")
    return t


class FrameStress(NamedTuple):
    """A 2D stress state in a (normal, tangential) frame."""

    normal: np.ndarray
    tangential: np.ndarray
    shear: np.ndarray


def rotate_2d(values, components, tangent) -> FrameStress:
    """In-plane stress in the frame of a unit tangent.

    With tangent ``t = (tx, ty)`` and normal ``n = (-ty, tx)`` (``t`` turned
    90 degrees counter-clockwise): ``normal = n.S.n``, ``tangential = t.S.t``,
    ``shear = n.S.t``.  ``tangent`` (..., 2) broadcasts against the leading
    shape of ``values``; it must be of unit length.  ``szz`` (if present) is
    unchanged by an in-plane rotation and not repeated here.
    """
    kind, v = _values(values, components, "rotate_2d")
    if kind == "3d":
        raise InputError("rotate_2d needs a 2D stress state; for 3D use rotate(values, components, R)")
    t = unit_tangent(tangent)
    tx, ty = t[..., 0], t[..., 1]
    sxx, syy, sxy = v[..., 0], v[..., 1], v[..., 2]
    stt = tx * tx * sxx + ty * ty * syy + 2.0 * tx * ty * sxy
    snn = ty * ty * sxx + tx * tx * syy - 2.0 * tx * ty * sxy
    snt = tx * ty * (syy - sxx) + (tx * tx - ty * ty) * sxy
    return FrameStress(snn, stt, snt)


def rotate(values, components, R) -> np.ndarray:
    """Stress components in a rotated frame, ``S' = R S R^T``.

    ``R`` (..., 3, 3) holds the new unit base vectors as rows (orthonormal,
    checked to 1e-6); the result has the same components as the input.  The
    plane sets may only be rotated about z (otherwise out-of-plane shear would
    appear and could not be returned).
    """
    kind, _ = component_set(components)
    R = np.asarray(R, dtype=float)
    if R.shape[-2:] != (3, 3):
        raise InputError(f"rotate: R must be shaped (..., 3, 3), got {R.shape}")
    err = np.abs(R @ np.swapaxes(R, -1, -2) - np.eye(3)).max()
    if not err <= 1e-6:
        raise InputError(f"rotate: R is not orthonormal (|R R^T - I| = {err:.3g})")
    if kind != "3d" and (np.abs(R[..., 2, :2]).max() > 1e-9 or np.abs(R[..., :2, 2]).max() > 1e-9):
        raise InputError(f"rotate: a {kind} stress state can only be rotated about the z axis")
    Tp = R @ to_tensor(values, components) @ np.swapaxes(R, -1, -2)
    return from_tensor(Tp, tuple(components))
