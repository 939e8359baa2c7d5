"""Closed forms and handbook fits the workbooks compare against.

Each function names its source.  Values flagged "from memory" were written
from the engineer's recollection of the published fit and should be checked
against the printed source before a project relies on them; the tests
compare the finite-element results of this toolkit with them.
"""
from __future__ import annotations

import json
import math
from functools import lru_cache
from importlib.resources import files

import numpy as np

from toolkit.errors import InputError

__all__ = ["kirsch_kt", "kirsch_ligament", "heywood_kt_net", "plate_hole_kt_table", "plate_hole_kt_reference",
           "PLATE_HOLE_KT_RANGE", "fillet_kt", "peterson_q", "peterson_q_warnings",
           "PETERSON_SU_MIN", "fatigue_notch_factor"]


def kirsch_kt() -> float:
    """Peak hoop stress / remote stress at a circular hole in an infinite
    plate under uniaxial tension: 3 (Kirsch 1898)."""
    return 3.0


def kirsch_ligament(y, radius):
    """σxx/σ along the ligament (x = 0, |y| >= a) of a circular hole in an
    infinite plate under remote σ along x (Kirsch 1898; e.g. Timoshenko &
    Goodier, Theory of Elasticity, §35): 1 + a²/(2y²) + 3a⁴/(2y⁴)."""
    q = (radius / np.asarray(y, dtype=float)) ** 2
    return 1 + 0.5 * q + 1.5 * q * q


def heywood_kt_net(d_over_w: float) -> float:
    """Net-section Kt of a central circular hole in a finite-width plate in
    tension, Heywood (1952): Kt,net = 2 + (1 − d/W)³ (quoted in Pilkey &
    Pilkey, Peterson's Stress Concentration Factors, 3rd ed., §4.3; from
    memory).  Agrees within 0.3 % with the fit of Roark's Formulas for
    Stress and Strain, Table 17.1, for d/W <= 0.3 (tests/test_references.py).
    Valid for 0 <= d/W < 1."""
    if not 0 <= d_over_w < 1:
        raise InputError(f"d/W must lie in [0, 1), got {d_over_w}")
    return 2.0 + (1.0 - d_over_w) ** 3


#: The d/W range of the finite-width plate reference (``data/plate_hole_kt.json``).
PLATE_HOLE_KT_RANGE = (0.1, 0.5)


@lru_cache(maxsize=None)
def _plate_hole_kt_data() -> tuple:
    data = json.loads(files("toolkit.data").joinpath("plate_hole_kt.json").read_text(encoding="utf-8"))
    return tuple(data.items())


def plate_hole_kt_table() -> dict:
    """The reference Kt,net table of a central circular hole in a long
    finite-width plate in tension, as stored in ``data/plate_hole_kt.json``:
    keys ``d_over_W`` and ``kt_net`` (lists) and the record of its source
    and conditions (``source``, ``analysis``, ``geometry``, ``uncertainty``).

    Source: an independent finite-element computation with scikit-fem (curved
    quadratic triangles, refined until the last steps changed by under
    0.05 %), issue 16.  Not Howland (1930), whose tabulated values could not
    be confirmed here.  Two-dimensional elasticity with the hole free of load:
    the stresses do not depend on the elastic constants, so the values hold
    for plane stress and plane strain alike.
    """
    return {k: (list(v) if isinstance(v, list) else v) for k, v in _plate_hole_kt_data()}


def plate_hole_kt_reference(d_over_w: float) -> float:
    """Kt,net of a central circular hole in a long finite-width plate in
    tension, interpolated in :func:`plate_hole_kt_table` (Kt,net = peak hoop
    stress / (P / ((W − d) t))).

    The table holds d/W = 0.1, 0.2, ..., 0.5; between them the value is the
    monotone piecewise-cubic Hermite interpolant (PCHIP; F. N. Fritsch and
    R. E. Carlson, SIAM J. Numer. Anal. 17 (1980) 238–246) of Kt,net over d/W,
    which passes through every tabulated value and keeps the table's monotone
    fall.  Inside the table it differs from the quartic through all five
    points by under 0.02 % (tests/test_references.py), well below the table's
    own 0.05 %.  Outside 0.1 <= d/W <= 0.5 there is no reference: an
    InputError, never an extrapolation.
    """
    from scipy.interpolate import PchipInterpolator

    x = float(d_over_w)
    lo, hi = PLATE_HOLE_KT_RANGE
    if not (np.isfinite(x) and lo - 1e-12 <= x <= hi + 1e-12):
        raise InputError(f"d_over_w must lie in [{lo:g}, {hi:g}], the range of the reference table "
                         f"(data/plate_hole_kt.json), got {d_over_w!r}")
    t = plate_hole_kt_table()
    return float(PchipInterpolator(t["d_over_W"], t["kt_net"])(min(max(x, lo), hi)))


# Kt = C1 + C2 (2h/D) + C3 (2h/D)^2 + C4 (2h/D)^3 with h = (D - d)/2 and
# Ci = a + b sqrt(h/r) + c h/r, two ranges of h/r (0.1..2, 2..20).
# Pilkey & Pilkey, Peterson's Stress Concentration Factors, 3rd ed., charts
# 3.1 (flat bar, tension), 3.2 (flat bar, bending), 3.4 (shaft, tension);
# close variants are tabulated in Roark's Formulas for Stress and Strain,
# Table 17.1.  Written from memory, then checked coefficient by coefficient
# against reproductions of the charts' formulas: all agree except the h/r term
# of C4 for flat-bar bending (h/r <= 2), given there as -0.200.
# +0.188 is kept: with it the two ranges meet at h/r = 2 (within 1 %, see
# tests/test_models.py) and it is close to Roark's +0.186, while -0.200 gives
# Kt < 1 at 2h/D = 0.8.
_FILLET_FITS = {
    ("flat", "tension"): (
        [(1.006, 1.008, -0.044), (-0.115, -0.584, 0.315), (0.245, -1.006, -0.257), (-0.135, 0.582, -0.017)],
        [(1.020, 1.009, -0.048), (-0.065, -0.165, -0.007), (-3.459, 1.266, -0.016), (3.505, -2.109, 0.069)]),
    ("flat", "bending"): (
        [(1.006, 0.967, 0.013), (-0.270, -2.372, 0.708), (0.662, 1.157, -0.908), (-0.405, 0.249, 0.188)],
        [(1.058, 1.002, -0.038), (-3.652, 1.639, -0.436), (6.170, -5.687, 1.175), (-2.558, 3.046, -0.701)]),
    ("shaft", "tension"): (
        [(0.926, 1.157, -0.099), (0.012, -3.036, 0.961), (-0.302, 3.977, -1.744), (0.365, -2.098, 0.878)],
        [(1.200, 0.860, -0.022), (-1.805, -0.346, -0.038), (2.198, -0.486, 0.165), (-0.593, -0.028, -0.106)]),
}


def fillet_kt(shape: str, load: str, large_width: float, small_width: float, fillet_radius: float) -> float:
    """Kt of a shoulder fillet from the handbook fit (see ``_FILLET_FITS``),
    referred to the nominal stress in the small section.  Stated range:
    0.1 <= h/r <= 20 (h = (D - d)/2); outside it a ValueError."""
    key = (shape, load)
    if key not in _FILLET_FITS:
        raise InputError(f"no handbook fit for a {shape} part in {load}; have {sorted(_FILLET_FITS)}")
    D, d, r = float(large_width), float(small_width), float(fillet_radius)
    if not (D > d > 0 and r > 0):
        raise InputError(f"need D > d > 0 and r > 0, got D={D}, d={d}, r={r}")
    h = (D - d) / 2
    q = h / r
    if not 0.1 <= q <= 20:
        raise InputError(f"h/r = {q:.3g} lies outside the fit's range 0.1..20")
    rows = _FILLET_FITS[key][0 if q <= 2 else 1]
    x = 2 * h / D
    C = [a + b * math.sqrt(q) + c * q for a, b, c in rows]
    return C[0] + C[1] * x + C[2] * x ** 2 + C[3] * x ** 3


def peterson_q(fillet_radius: float, tensile_strength: float) -> float:
    """Notch sensitivity q = 1 / (1 + a/r) (Peterson 1959), with the
    characteristic length for steels a = 0.0254 (2070/Su)^1.8 mm, Su in MPa
    (0.001 (300/Su)^1.8 in with Su in kpsi; the fit as reproduced from
    Peterson's Stress Concentration Factors; from memory, the printed page
    was not reachable).  Shigley's Mechanical Engineering Design fits the
    same chart in Neuber's form instead; the two agree within 0.12 in q for
    Su 0.4..1.4 GPa, r 0.5..4 mm (tests/test_references.py).  The fit is
    stated for steels with Su >= 550 MPa (80 kpsi; from memory, with the fit);
    below that it extrapolates: :func:`peterson_q_warnings` says so."""
    if fillet_radius <= 0 or tensile_strength <= 0:
        raise InputError("fillet radius and tensile strength must be positive")
    a = 0.0254 * (2070.0 / tensile_strength) ** 1.8
    return 1.0 / (1.0 + a / fillet_radius)


#: Lowest tensile strength (MPa) for which Peterson's steel fit of ``a`` is stated (80 kpsi).
PETERSON_SU_MIN = 550.0


def peterson_q_warnings(tensile_strength: float) -> list[str]:
    """Warnings for :func:`peterson_q` at this tensile strength (MPa): one
    sentence when Su lies below :data:`PETERSON_SU_MIN`, where the fit
    ``a = 0.0254 (2070/Su)^1.8 mm`` is an extrapolation; else ``[]``."""
    if tensile_strength < PETERSON_SU_MIN:
        return [f"Su = {tensile_strength:g} MPa lies below {PETERSON_SU_MIN:g} MPa, the lowest tensile strength "
                "for which Peterson's steel fit a = 0.0254 (2070/Su)^1.8 mm is stated: q is extrapolated "
                "(a larger a, so a lower q and Kf, which is not conservative)"]
    return []


def fatigue_notch_factor(kt: float, q: float) -> float:
    """Kf = 1 + q (Kt − 1) (Peterson; common practice)."""
    return 1.0 + q * (kt - 1.0)
