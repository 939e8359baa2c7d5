"""Structural (hot-spot) stress at weld toes and through-thickness linearisation.

* :func:`hot_spot_stress` — surface stress extrapolation to the weld toe by
  the rules of the IIW recommendations (Hobbacher, *Recommendations for
  Fatigue Design of Welded Joints and Components*, IIW document
  XIII-2460-13, 2nd edition 2016, section 2.2.3 on the structural hot-spot
  stress).
* :func:`linearize` — membrane, bending and peak parts of a through-thickness
  stress distribution (ASME BPVC Section VIII Division 2, Annex 5-A,
  5-A.4.1.2).
* :func:`hot_spot_concentration` — ``hs / nominal``.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from toolkit.errors import InputError

__all__ = [
    "HOT_SPOT_RULES", "HotSpotRule", "lagrange_extrapolation_coefficients", "hot_spot_stress", "HotSpotResult",
    "linearize", "Linearization", "hot_spot_concentration", "region_crossings",
]

# millimetres per model length unit; 1 in = 25.4 mm exactly (international inch, 1959)
_MM = {"mm": 1.0, "cm": 10.0, "m": 1000.0, "in": 25.4}


@dataclass(frozen=True)
class HotSpotRule:
    """One read-out rule.

    ``points`` are read-out distances from the toe, in plate thicknesses
    (``basis="thickness"``, type "a" hot spots on the plate surface) or in
    millimetres (``basis="mm"``, type "b" hot spots along a plate edge).
    ``published`` are the coefficients as printed in the IIW recommendations
    (rounded); ``max_element`` is the element length at the toe the rule
    assumes, in the same basis.
    """

    name: str
    points: tuple[float, ...]
    basis: str
    published: tuple[float, ...]
    max_element: float
    element_note: str
    description: str


# IIW recommendations (Hobbacher 2016, XIII-2460-13), section 2.2.3 on the structural hot-spot stress
# (subsection numbers from memory): read-out points and printed coefficients.  The element lengths are those of the
# meshing recommendations in the same section (fine: <= 0.4 t, resp. <= 4 mm; coarse: about t x t,
# resp. 10 mm x 10 mm).
HOT_SPOT_RULES: dict[str, HotSpotRule] = {
    "a-linear": HotSpotRule(
        "a-linear", (0.4, 1.0), "thickness", (1.67, -0.67), 0.4,
        "fine mesh: element length at the toe <= 0.4 t (IIW 2016 meshing recommendation)",
        "type a, fine mesh, linear extrapolation from 0.4t and 1.0t"),
    "a-quadratic": HotSpotRule(
        "a-quadratic", (0.4, 0.9, 1.4), "thickness", (2.52, -2.24, 0.72), 0.4,
        "fine mesh: element length at the toe <= 0.4 t (IIW 2016 meshing recommendation)",
        "type a, fine mesh, quadratic extrapolation from 0.4t, 0.9t and 1.4t "
        "(for pronounced non-linear stress increase towards the toe)"),
    "a-coarse": HotSpotRule(
        "a-coarse", (0.5, 1.5), "thickness", (1.50, -0.50), 1.0,
        "coarse mesh: higher-order elements about t long at the toe (IIW 2016 meshing recommendation)",
        "type a, coarse mesh, linear extrapolation from 0.5t and 1.5t"),
    "b-fine": HotSpotRule(
        "b-fine", (4.0, 8.0, 12.0), "mm", (3.0, -3.0, 1.0), 4.0,
        "fine mesh: element length at the toe <= 4 mm (IIW 2016 meshing recommendation)",
        "type b, fine mesh, quadratic extrapolation from 4, 8 and 12 mm"),
    "b-coarse": HotSpotRule(
        "b-coarse", (5.0, 15.0), "mm", (1.5, -0.5), 10.0,
        "coarse mesh: higher-order elements about 10 mm long at the toe (IIW 2016 meshing recommendation)",
        "type b, coarse mesh, linear extrapolation from 5 and 15 mm"),
}


def lagrange_extrapolation_coefficients(points, target=0.0) -> np.ndarray:
    """Weights ``c_i`` with ``p(target) = sum c_i p(x_i)`` for every polynomial of degree < len(points).

    ``c_i = prod_{j != i} (target - x_j) / (x_i - x_j)`` (Lagrange interpolation
    evaluated at ``target``; with ``target = 0`` it extrapolates to the toe).
    """
    x = np.asarray(points, dtype=float)
    if x.ndim != 1 or len(x) < 1 or not np.all(np.isfinite(x)):
        raise InputError(f"read-out points must be a 1D list of finite numbers, got {points!r}")
    if len(np.unique(x)) != len(x):
        raise InputError(f"read-out points {x.tolist()} are not distinct")
    c = np.ones(len(x))
    for i in range(len(x)):
        for j in range(len(x)):
            if j != i:
                c[i] *= (target - x[j]) / (x[i] - x[j])
    return c


@dataclass
class HotSpotResult:
    """Hot-spot stress and how it was obtained.

    ``value`` is the extrapolated stress (a float, or an array for several
    components); ``readouts`` holds ``{"distances": (k,), "stresses": (k, ...)}``
    in model length units; ``coefficients`` the exact Lagrange weights used,
    ``published`` the rounded ones printed in the IIW recommendations.
    """

    value: float | np.ndarray
    readouts: dict
    rule: str
    coefficients: np.ndarray
    published: tuple
    thickness: float | None
    unit: str
    element_size: float | None = None
    warnings: list = field(default_factory=list)
    source: str = "IIW recommendations (Hobbacher 2016, XIII-2460-13), structural hot-spot stress"

    def to_dict(self) -> dict:
        v = np.asarray(self.value)
        return {"name": "hot-spot stress", "rule": self.rule,
                "value": float(v) if v.ndim == 0 else v.tolist(),
                "readout_distances": np.asarray(self.readouts["distances"]).tolist(),
                "readout_stresses": np.asarray(self.readouts["stresses"]).tolist(),
                "coefficients": self.coefficients.tolist(), "published_coefficients": list(self.published),
                "thickness": self.thickness, "length_unit": self.unit, "element_size": self.element_size,
                "warnings": list(self.warnings), "source": self.source}

    def __repr__(self):
        lines = [f"HotSpotResult (rule {self.rule}; {HOT_SPOT_RULES[self.rule].description})"]
        d = np.asarray(self.readouts["distances"])
        s = np.asarray(self.readouts["stresses"])
        for di, si, ci, pi in zip(d, s, self.coefficients, self.published):
            lines.append(f"  read-out at {di:10.4g} {self.unit}: stress {np.array2string(np.asarray(si), precision=5)}"
                         f"  x {ci:+.6f} (printed {pi:+.2f})")
        lines.append(f"  hot-spot stress: {np.array2string(np.asarray(self.value), precision=6)}")
        for w in self.warnings:
            lines.append(f"  warning: {w}")
        return "\n".join(lines)


def _sampled(distances, stresses):
    d = np.asarray(distances, dtype=float)
    s = np.asarray(stresses, dtype=float)
    if d.ndim != 1 or len(d) < 2:
        raise InputError(f"sampled path: distances must be 1D with at least 2 samples, got shape {d.shape}")
    if s.shape[:1] != d.shape or s.ndim > 2:
        raise InputError(f"sampled path: stresses shaped {s.shape} do not match distances {d.shape} "
                         "(expected (p,) or (p, ncomp))")
    if not (np.all(np.isfinite(d)) and np.all(np.isfinite(s))):
        raise InputError("sampled path: distances and stresses must be finite")
    if not np.all(np.diff(d) > 0):
        i = int(np.flatnonzero(~(np.diff(d) > 0))[0])
        raise InputError(f"sampled path: distances must increase strictly (samples {i} and {i + 1}: "
                         f"{d[i]} then {d[i + 1]})")

    def at(x):
        x = np.asarray(x, dtype=float)
        out = [(x < d[0] - 1e-12 * max(1.0, abs(d[0]))), (x > d[-1] + 1e-12 * max(1.0, abs(d[-1])))]
        if out[0].any() or out[1].any():
            bad = x[out[0] | out[1]]
            raise InputError(f"read-out point(s) {bad.tolist()} lie outside the sampled range "
                             f"[{d[0]}, {d[-1]}]: sample the path further from the toe")
        if s.ndim == 1:
            return np.interp(x, d, s)
        return np.stack([np.interp(x, d, s[:, a]) for a in range(s.shape[1])], axis=-1)

    return at


def hot_spot_stress(stress_at, thickness=None, rule="a-linear", element_size=None, unit="mm",
                    regions=None) -> HotSpotResult:
    """Structural hot-spot stress by surface extrapolation to the weld toe.

    ``sigma_hs = sum_i c_i sigma(x_i)`` with read-out points ``x_i`` and exact
    Lagrange extrapolation weights ``c_i`` to ``x = 0``; the IIW
    recommendations (Hobbacher 2016, XIII-2460-13, section 2.2.3) print them rounded:

    ========== ======================= =============================================
    rule       read-out points         printed formula
    ========== ======================= =============================================
    a-linear   0.4t, 1.0t              1.67 s(0.4t) - 0.67 s(1.0t)
    a-quadratic 0.4t, 0.9t, 1.4t       2.52 s(0.4t) - 2.24 s(0.9t) + 0.72 s(1.4t)
    a-coarse   0.5t, 1.5t              1.50 s(0.5t) - 0.50 s(1.5t)
    b-fine     4, 8, 12 mm             3 s(4) - 3 s(8) + s(12)
    b-coarse   5, 15 mm                1.5 s(5) - 0.5 s(15)
    ========== ======================= =============================================

    Parameters
    ----------
    stress_at : callable or (distances, stresses)
        Either a vectorised function of the distance from the toe returning
        ``(k,)`` or ``(k, ncomp)`` stresses, or a sampled path: increasing
        distances ``(p,)`` and stresses ``(p,)`` or ``(p, ncomp)``, linearly
        interpolated; a read-out point outside the samples raises ValueError.
    thickness : float
        Plate thickness t (model length units); required for type "a" rules
        (for type "b" rules, whose read-outs do not depend on t, it is only
        recorded in the result).
    rule : str
        One of :data:`HOT_SPOT_RULES`.
    element_size : float, optional
        Element length at the toe (model units).  If coarser than the rule
        assumes (fine rules: 0.4t resp. 4 mm; coarse rules: about t resp.
        10 mm), a warning is added to ``result.warnings``.
    unit : {"mm", "cm", "m", "in"}
        Model length unit, used to place the type "b" read-outs (given in mm).
    regions : (p,) int, optional
        With a sampled path: the region of the cell holding each sample
        (``PathResult.cell_region``; -1 outside).  When the region changes
        inside the read-out window ``(0, x_last]`` (the toe itself may lie on
        a region boundary) a warning names the distance of the change: the
        read-outs then mix two parts, or two materials, whose stresses the
        region-wise recovery keeps apart.

    Examples
    --------
    A stress falling linearly from the toe, 200 - 10 x MPa, on a 10 mm plate:
    linear extrapolation from 0.4t and 1.0t returns the toe value 200 MPa
    exactly (closed form):

    >>> r = hot_spot_stress(lambda x: 200.0 - 10.0 * x, thickness=10.0, rule="a-linear")
    >>> round(r.value, 9)
    200.0
    >>> r.readouts["stresses"].round(9).tolist()
    [160.0, 100.0]
    """
    if rule not in HOT_SPOT_RULES:
        raise InputError(f"unknown hot-spot rule {rule!r}; choose one of {', '.join(HOT_SPOT_RULES)}")
    r = HOT_SPOT_RULES[rule]
    if unit not in _MM:
        raise InputError(f"unknown length unit {unit!r}; choose one of {', '.join(_MM)}")
    if thickness is not None:
        thickness = float(thickness)
        if not (np.isfinite(thickness) and thickness > 0):
            raise InputError(f"thickness must be a positive number, got {thickness}")
    if r.basis == "thickness":
        if thickness is None:
            raise InputError(f"rule {rule} reads out at multiples of the plate thickness: give thickness=t")
        scale = thickness
    else:
        scale = 1.0 / _MM[unit]  # model units per mm
    x = np.asarray(r.points) * scale
    c = lagrange_extrapolation_coefficients(x)

    if callable(stress_at):
        sig = np.asarray(stress_at(x), dtype=float)
        if sig.shape[:1] != x.shape or sig.ndim > 2:
            raise InputError(f"stress_at returned shape {sig.shape} for {len(x)} read-out distances; "
                             "expected (k,) or (k, ncomp)")
        if not np.all(np.isfinite(sig)):
            raise InputError(f"stress_at returned non-finite stresses {sig.tolist()} at distances {x.tolist()}")
    else:
        try:
            distances, stresses = stress_at
        except (TypeError, ValueError):
            raise InputError("stress_at must be a callable of distance or a pair (distances, stresses)") from None
        sig = _sampled(distances, stresses)(x)
    if regions is not None and callable(stress_at):
        raise InputError("regions go with a sampled path (distances, stresses), not with a callable")

    value = np.tensordot(c, sig, axes=(0, 0))
    value = float(value) if np.ndim(value) == 0 else value

    warns = []
    if element_size is not None:
        h = float(element_size)
        if not (np.isfinite(h) and h > 0):
            raise InputError(f"element_size must be a positive number, got {element_size}")
        limit = r.max_element * scale
        if h > limit * (1 + 1e-9):
            warns.append(f"element length at the toe {h:.4g} {unit} is coarser than rule {rule} assumes "
                         f"({limit:.4g} {unit}; {r.element_note})")
    if regions is not None:
        warns += region_crossings(distances, regions, float(x.max()), unit)
    return HotSpotResult(value=value, readouts={"distances": x, "stresses": sig}, rule=rule, coefficients=c,
                         published=r.published, thickness=thickness, unit=unit, element_size=element_size,
                         warnings=warns)


def region_crossings(distances, regions, window, unit="mm") -> list[str]:
    """Warnings for region changes among the samples in ``(0, window]``.

    ``distances`` (p,) increasing; ``regions`` (p,) the region of the cell
    holding each sample.  The sample at distance 0 (the toe, often on the
    boundary to the weld or attachment) is not counted.  One sentence per
    change, naming the distance of the first sample in the new region.
    """
    d = np.asarray(distances, dtype=float)
    g = np.asarray(regions)
    if g.shape != d.shape:
        raise InputError(f"regions {g.shape} must match the sample distances {d.shape}")
    inside = (d > 0) & (d <= window * (1 + 1e-12))
    dd, gg = d[inside], g[inside]
    change = np.flatnonzero(gg[1:] != gg[:-1]) + 1
    return [f"the read-out window 0..{window:.4g} {unit} crosses a region boundary at {dd[k]:.4g} {unit} from "
            f"the toe (region {gg[k - 1]} to {gg[k]}): the read-outs mix two regions" for k in change]


def hot_spot_concentration(hs, nominal):
    """Structural stress concentration factor ``K_s = sigma_hs / sigma_nominal``.

    ``hs`` may be a :class:`HotSpotResult` or a number/array.
    """
    v = hs.value if isinstance(hs, HotSpotResult) else hs
    v = np.asarray(v, dtype=float)
    n = np.asarray(nominal, dtype=float)
    if np.any(n == 0) or not np.all(np.isfinite(n)):
        raise InputError(f"nominal stress must be finite and non-zero, got {nominal}")
    out = v / n
    return float(out) if out.ndim == 0 else out


# ---------------------------------------------------------------------------
# Through-thickness linearisation (ASME BPVC VIII-2, Annex 5-A)
# ---------------------------------------------------------------------------
@dataclass
class Linearization:
    """Membrane, bending and peak parts of a through-thickness distribution.

    ``membrane`` (ncomp,) or scalar; ``bending`` at the first surface
    (``positions[0]``; the second surface carries ``-bending``);
    ``structural`` and ``peak`` shaped (2, ...) for (first, last) surface:
    ``structural = membrane ± bending``, ``peak = total - structural``.
    """

    membrane: np.ndarray
    bending: np.ndarray
    structural: np.ndarray
    peak: np.ndarray
    total: np.ndarray
    thickness: float
    integration: str
    components: tuple | None = None

    def linear_at(self, x):
        """Linearised stress at distances ``x`` from the first surface: ``m + b (1 - 2x/t)``."""
        x = np.asarray(x, dtype=float)
        f = 1.0 - 2.0 * x / self.thickness
        return np.asarray(self.membrane) + np.multiply.outer(f, np.asarray(self.bending))

    def to_dict(self) -> dict:
        conv = lambda a: float(a) if np.ndim(a) == 0 else np.asarray(a).tolist()  # noqa: E731
        return {"name": "stress linearisation", "membrane": conv(self.membrane), "bending": conv(self.bending),
                "structural": conv(self.structural), "peak": conv(self.peak), "total": conv(self.total),
                "thickness": self.thickness, "integration": self.integration,
                "components": list(self.components) if self.components else None,
                "source": "ASME BPVC VIII-2 Annex 5-A, 5-A.4.1.2"}

    def __repr__(self):
        f = lambda a: np.array2string(np.asarray(a), precision=5)  # noqa: E731
        return (f"Linearization (t = {self.thickness:.6g}, {self.integration}"
                + (f", components {self.components}" if self.components else "") + ")\n"
                f"  membrane                         {f(self.membrane)}\n"
                f"  bending (first face)             {f(self.bending)}\n"
                f"  structural (membrane + bending)  first {f(self.structural[0])}  last {f(self.structural[1])}\n"
                f"  peak                             first {f(self.peak[0])}  last {f(self.peak[1])}")


def linearize(positions, stresses, components=None, integration="linear") -> Linearization:
    """Split a through-thickness stress distribution into membrane, bending and peak.

    ASME BPVC VIII-2, Annex 5-A (5-A.4.1.2), with ``x`` from the first surface
    and ``t`` the wall thickness::

        sigma_m = (1/t) int_0^t sigma dx
        sigma_b = (6/t^2) int_0^t sigma (t/2 - x) dx      (at x = 0)
        peak    = sigma - (sigma_m + sigma_b (1 - 2x/t))   at x = 0 and x = t

    The integrals are evaluated exactly for an interpolant of the samples:
    ``integration="linear"`` (default) integrates the piecewise-linear
    interpolant exactly (trapezoid rule for ``sigma_m``, the exact
    linear-times-linear formula for ``sigma_b``), valid for any non-uniform
    spacing and exact for piecewise-linear distributions;
    ``integration="quadratic"`` integrates the piecewise-quadratic
    interpolant through consecutive triples (0,1,2), (2,3,4), ... exactly
    (needs an odd number of samples; exact for distributions that are
    quadratic between those triples, e.g. the nodes of a column of quadratic
    elements).  Annex 5-A computes bending only for the in-plane (hoop and
    meridional) components; that choice of components is the caller's.

    Parameters
    ----------
    positions : (p,) strictly increasing positions through the wall.
    stresses : (p,) or (p, ncomp)
    components : optional names for the columns of ``stresses`` (kept in the result).

    Examples
    --------
    A linear distribution through a 10 mm wall, 150 MPa on the first face and
    90 MPa on the last, is membrane 120 MPa plus bending 30 MPa, no peak
    (closed form):

    >>> import numpy as np
    >>> x = np.linspace(0.0, 10.0, 11)
    >>> lin = linearize(x, 120.0 + 30.0 * (1 - 2 * x / 10.0))
    >>> float(lin.membrane), float(lin.bending), lin.peak.tolist()
    (120.0, 30.0, [0.0, 0.0])
    """
    x = np.asarray(positions, dtype=float)
    s = np.asarray(stresses, dtype=float)
    if x.ndim != 1 or len(x) < 2:
        raise InputError(f"linearize: positions must be 1D with at least 2 points, got shape {x.shape}")
    if s.shape[:1] != x.shape or s.ndim > 2:
        raise InputError(f"linearize: stresses shaped {s.shape} do not match positions {x.shape}")
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(s))):
        raise InputError("linearize: positions and stresses must be finite")
    dx = np.diff(x)
    if not np.all(dx > 0):
        i = int(np.flatnonzero(~(dx > 0))[0])
        raise InputError(f"linearize: positions must increase strictly (points {i} and {i + 1}: {x[i]}, {x[i + 1]})")
    if components is not None:
        components = tuple(components)
        if s.ndim != 2 or s.shape[1] != len(components):
            raise InputError(f"linearize: {len(components)} component names for stresses shaped {s.shape}")
    x = x - x[0]
    t = float(x[-1])
    w = 0.5 * t - x  # bending weight
    sx = s if s.ndim == 2 else s[:, None]

    if integration == "linear":
        a, b = sx[:-1], sx[1:]
        h = dx[:, None]
        I0 = np.sum(0.5 * h * (a + b), axis=0)
        wa, wb = w[:-1, None], w[1:, None]
        I1 = np.sum(h / 6.0 * (2 * a * wa + a * wb + b * wa + 2 * b * wb), axis=0)
    elif integration == "quadratic":
        if len(x) % 2 != 1 or len(x) < 3:
            raise InputError(f"linearize: integration='quadratic' needs an odd number (>= 3) of points, got {len(x)}")
        x0, x1, x2 = x[0:-2:2], x[1:-1:2], x[2::2]
        f0, f1, f2 = sx[0:-2:2], sx[1:-1:2], sx[2::2]
        # exact integrals of x^k, k = 0..3, over each segment [x0, x2]
        mom = [(x2 ** (k + 1) - x0 ** (k + 1)) / (k + 1) for k in range(4)]
        # Lagrange basis of each segment as polynomials c0 + c1 x + c2 x^2
        I0 = 0.0
        I1 = 0.0
        for (fa, xa, xb, xc) in ((f0, x0, x1, x2), (f1, x1, x0, x2), (f2, x2, x0, x1)):
            den = (xa - xb) * (xa - xc)
            c0, c1, c2 = xb * xc / den, -(xb + xc) / den, 1.0 / den
            m0 = c0 * mom[0] + c1 * mom[1] + c2 * mom[2]                # int L
            m1 = c0 * mom[1] + c1 * mom[2] + c2 * mom[3]                # int L x
            I0 = I0 + np.sum(fa * m0[:, None], axis=0)
            I1 = I1 + np.sum(fa * (0.5 * t * m0 - m1)[:, None], axis=0)
    else:
        raise InputError(f"linearize: integration must be 'linear' or 'quadratic', got {integration!r}")

    m = I0 / t
    bnd = 6.0 * I1 / t**2
    total = np.stack([sx[0], sx[-1]])
    structural = np.stack([m + bnd, m - bnd])
    peak = total - structural
    if s.ndim == 1:
        m, bnd, structural, peak, total = float(m[0]), float(bnd[0]), structural[:, 0], peak[:, 0], total[:, 0]
    return Linearization(membrane=m, bending=bnd, structural=structural, peak=peak, total=total, thickness=t,
                         integration=f"exact integration of the piecewise-{integration} interpolant",
                         components=components)
