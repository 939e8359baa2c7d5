"""Mesh quality: convergence studies and error indicators.

Sections
--------
* Grid convergence (this section): Richardson extrapolation and Roache's
  Grid Convergence Index by the procedure of Celik, Ghia, Roache, Freitas,
  Coleman & Raad (2008), "Procedure for estimation and reporting of
  uncertainty due to discretization in CFD applications", J. Fluids Eng. 130,
  078001, with Roache's fallback for an unreasonable observed order (Roache
  1998, Verification and Validation in Computational Science and
  Engineering, Hermosa: use the formal order with a safety factor of 3).
* Error indicator (Zienkiewicz–Zhu): reserved for a later section of this
  module.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from toolkit.errors import InputError

__all__ = ["ConvergenceResult", "grid_convergence", "representative_size"]


# ===========================================================================
# Grid convergence: Richardson extrapolation and Roache's GCI (Celik et al. 2008)
# ===========================================================================
def representative_size(n_cells, volume, dim) -> float:
    """Representative cell size ``h = (volume / n_cells)^(1/dim)`` (Celik et al. 2008, eq. 1)."""
    n, v, d = float(n_cells), float(volume), int(dim)
    if not (n > 0 and v > 0 and d in (1, 2, 3)):
        raise InputError(f"representative_size: need n_cells > 0, volume > 0, dim in 1..3; got {n_cells}, {volume}, {dim}")
    return (v / n) ** (1.0 / d)


@dataclass
class ConvergenceResult:
    """Result of a grid convergence study (finest grids first).

    Attributes
    ----------
    order : observed order p from the three finest grids.
    extrapolated : Richardson-extrapolated value ``phi_ext^21``.
    gci_fine : GCI of the finest grid, a fraction (0.022 = 2.2 %).
    gci_coarse : GCI of the second grid (pair 3-2), a fraction.
    asymptotic_ratio : ``gci_coarse / (r21^p gci_fine)``; near 1 in the asymptotic range.
    relative_error : ``e_a^21 = |(phi1 - phi2)/phi1|``.
    extrapolated_error : ``e_ext^21 = |(phi_ext - phi1)/phi_ext|``.
    ratios : refinement ratios ``(r21, r32, ...)``.
    orders : observed order of each consecutive triple (finest first; one entry for three grids).
    iterations : fixed-point iterations used for ``order``.
    warnings : list of str (oscillatory convergence, growing differences, small ratios, ...).
    order_used : order behind ``extrapolated`` and the GCIs: ``order``, or the
        formal order when Roache's fallback applies.
    fallback : ``""``, or the sentence saying why the fallback (formal order,
        ``Fs = 3``; Roache 1998) replaced the observed order.
    """

    values: np.ndarray
    sizes: np.ndarray
    order: float
    extrapolated: float
    gci_fine: float
    gci_coarse: float
    asymptotic_ratio: float
    relative_error: float
    extrapolated_error: float
    ratios: np.ndarray
    orders: np.ndarray
    iterations: int
    safety_factor: float
    warnings: list = field(default_factory=list)
    order_used: float = float("nan")
    fallback: str = ""

    def __post_init__(self):
        if math.isnan(self.order_used):
            self.order_used = self.order

    def to_dict(self) -> dict:
        return {"name": "grid convergence (Celik et al. 2008)", "values": self.values.tolist(),
                "sizes": self.sizes.tolist(), "order": self.order, "extrapolated": self.extrapolated,
                "gci_fine": self.gci_fine, "gci_coarse": self.gci_coarse,
                "asymptotic_ratio": self.asymptotic_ratio, "relative_error": self.relative_error,
                "extrapolated_error": self.extrapolated_error, "ratios": self.ratios.tolist(),
                "orders": self.orders.tolist(), "safety_factor": self.safety_factor,
                "order_used": self.order_used, "fallback": self.fallback,
                "warnings": list(self.warnings)}

    def __repr__(self):
        rows = [("grids (finest first)", ", ".join(f"h={h:.4g}: {v:.6g}" for h, v in zip(self.sizes, self.values))),
                ("refinement ratios", ", ".join(f"{r:.4g}" for r in self.ratios)),
                ("observed order p", f"{self.order:.4g}"),
                *([("order used (fallback)", f"{self.order_used:.4g}, Fs = {self.safety_factor:g}")]
                  if self.fallback else []),
                ("extrapolated value", f"{self.extrapolated:.6g}"),
                ("relative error e_a21", f"{self.relative_error:.3%}"),
                ("extrapolated error e_ext21", f"{self.extrapolated_error:.3%}"),
                ("GCI fine", f"{self.gci_fine:.3%}"),
                ("GCI coarse", f"{self.gci_coarse:.3%}"),
                ("asymptotic ratio", f"{self.asymptotic_ratio:.4g}")]
        if len(self.orders) > 1:
            rows.append(("orders of each triple", ", ".join(f"{p:.4g}" for p in self.orders)))
        w = max(len(k) for k, _ in rows)
        lines = ["ConvergenceResult (Richardson extrapolation, Roache's GCI; Celik et al. 2008)"]
        lines += [f"  {k:<{w}}  {v}" for k, v in rows]
        lines += [f"  warning: {x}" for x in self.warnings]
        if self.fallback:
            lines.append(f"  fallback: {self.fallback}")
        return "\n".join(lines)


def _observed_order(e21, e32, r21, r32, tol, maxiter):
    """Celik et al. (2008) eqs. 3a-3c: fixed-point iteration for p.

    ``p = |ln|e32/e21| + q(p)| / ln r21``, ``q(p) = ln((r21^p - s)/(r32^p - s))``,
    ``s = sign(e32/e21)``.  Returns ``(p, iterations, signed)``; ``signed`` is
    the value inside the outer absolute value (negative: differences grow
    under refinement).
    """
    s = 1.0 if e32 / e21 > 0 else -1.0
    lnR = math.log(abs(e32 / e21))
    lr21 = math.log(r21)
    p = abs(lnR) / lr21  # the constant-ratio value (q = 0) as the starting point
    for it in range(1, maxiter + 1):
        a, b = r21**p - s, r32**p - s
        if not (a > 0 and b > 0):
            raise InputError(f"grid_convergence: the order iteration left its domain at p = {p:.4g} "
                             "(r^p - s <= 0); the data do not define an observed order")
        q = math.log(a / b)
        signed = lnR + q
        p_new = abs(signed) / lr21
        if abs(p_new - p) <= tol * max(1.0, abs(p_new)):
            return p_new, it, signed
        p = p_new
        if p == 0.0:
            break
    raise InputError(f"grid_convergence: the fixed-point iteration for the observed order did not converge in "
                     f"{maxiter} iterations (last p = {p:.6g})")


def grid_convergence(values, sizes, safety_factor=1.25, tol=1e-12, maxiter=500, formal_order=None
                     ) -> ConvergenceResult:
    """Richardson extrapolation and Roache's GCI (Celik et al. 2008).

    With ``h1 < h2 < h3``, ``r21 = h2/h1``, ``r32 = h3/h2``,
    ``e21 = phi2 - phi1``, ``e32 = phi3 - phi2``:

    * observed order ``p`` by fixed-point iteration (see above; works for
      non-constant refinement ratios),
    * ``phi_ext^21 = (r21^p phi1 - phi2) / (r21^p - 1)``,
    * ``e_a^21 = |(phi1 - phi2)/phi1|``, ``e_ext^21 = |(phi_ext - phi1)/phi_ext|``,
    * ``GCI_fine^21 = Fs e_a^21 / (r21^p - 1)`` with ``Fs = 1.25`` for three grids;
      ``GCI^32 = Fs e_a^32 / (r32^p - 1)`` likewise for the coarser pair.

    Parameters
    ----------
    values : (n,) the quantity on each grid, finest first, ``n >= 3``.
    sizes : (n,) representative cell sizes, finest first, strictly increasing.
    safety_factor : ``Fs`` (1.25 for three or more grids, Celik et al.).
    formal_order : optional theoretical order ``p_f``.  When it is given and
        the observed order is unreasonable -- outside ``(0.5 p_f, 2 p_f)``, or
        the sequence is not monotonically converging (oscillatory, or the
        differences grow under refinement) -- Roache's fallback applies
        (Roache 1998, Verification and Validation in Computational Science
        and Engineering, ch. 5): the extrapolated value and both GCIs use
        ``p = p_f`` with the safety factor ``Fs = 3``; ``result.order`` keeps
        the observed order, ``result.order_used`` and ``result.fallback`` say
        what was used and why.  Without it the same criteria only warn.

    ``result.orders`` repeats the calculation for every consecutive triple
    when more than three grids are given.
    """
    phi = np.asarray(values, dtype=float)
    h = np.asarray(sizes, dtype=float)
    if phi.ndim != 1 or h.shape != phi.shape:
        raise InputError(f"grid_convergence: values {phi.shape} and sizes {h.shape} must be 1D of equal length")
    if len(phi) < 3:
        raise InputError(f"grid_convergence needs three or more grids, got {len(phi)}")
    if not (np.all(np.isfinite(phi)) and np.all(np.isfinite(h)) and np.all(h > 0)):
        raise InputError("grid_convergence: values must be finite and sizes positive and finite")
    if not np.all(np.diff(h) > 0):
        raise InputError(f"grid_convergence: sizes must increase strictly, finest first; got {h.tolist()}")
    fs = float(safety_factor)
    if not fs > 0:
        raise InputError(f"safety_factor must be positive, got {safety_factor}")
    ratios = h[1:] / h[:-1]
    warns = []

    def triple(k):
        f1, f2, f3 = phi[k:k + 3]
        r21, r32 = ratios[k], ratios[k + 1]
        e21, e32 = f2 - f1, f3 - f2
        if e21 == 0 or e32 == 0:
            raise InputError(f"grid_convergence: grids {k + 1}-{k + 3} give equal values ({f1}, {f2}, {f3}); "
                             "the observed order is undefined")
        return (f1, f2, f3, r21, r32, e21, e32) + _observed_order(e21, e32, r21, r32, tol, maxiter)

    f1, f2, f3, r21, r32, e21, e32, p, its, signed = triple(0)
    orders = [p] + [triple(k)[7] for k in range(1, len(phi) - 2)]
    if e32 / e21 < 0:
        warns.append("oscillatory convergence: the differences between successive grids change sign "
                     "(Celik et al. 2008); the extrapolated value and GCI are less reliable")
    if signed < 0:
        warns.append("the differences between grids grow as the mesh is refined: the sequence is not "
                     "converging, the order and GCI are not meaningful")
    if np.any(ratios < 1.3):
        warns.append(f"refinement ratio(s) {', '.join(f'{r:.3g}' for r in ratios[ratios < 1.3])} below 1.3, "
                     "the minimum Celik et al. (2008) recommend")
    fallback, p_obs = "", p
    if formal_order is not None:
        pf = float(formal_order)
        if not pf > 0:
            raise InputError(f"formal_order must be positive, got {formal_order}")
        if not 0.5 * pf < p < 2.0 * pf:
            why = f"observed order {p:.3g} lies outside (0.5, 2) x the formal order {pf:g}"
            warns.append(f"{why}: the grids may not be in the asymptotic range")
        elif e32 / e21 < 0 or signed < 0:
            why = "the grid sequence does not converge monotonically"
        else:
            why = ""
        if why:
            fallback = (f"{why}; Roache's fallback (Roache 1998): the formal order p = {pf:g} with the "
                        f"safety factor Fs = 3 replaces the observed order in the extrapolation and the GCI")
            p, fs = pf, 3.0
    rp21, rp32 = r21**p, r32**p
    ext = (rp21 * f1 - f2) / (rp21 - 1.0)
    if f1 == 0 or f2 == 0 or ext == 0:
        raise InputError("grid_convergence: a relative error is undefined because a value is zero; "
                         "shift or rescale the quantity")
    ea21 = abs((f1 - f2) / f1)
    ea32 = abs((f2 - f3) / f2)
    eext = abs((ext - f1) / ext)
    gci21 = fs * ea21 / (rp21 - 1.0)
    gci32 = fs * ea32 / (rp32 - 1.0)
    ratio = gci32 / (rp21 * gci21)
    return ConvergenceResult(values=phi, sizes=h, order=p_obs, extrapolated=ext, gci_fine=gci21, gci_coarse=gci32,
                             asymptotic_ratio=ratio, relative_error=ea21, extrapolated_error=eext, ratios=ratios,
                             orders=np.array(orders), iterations=its, safety_factor=fs, warnings=warns,
                             order_used=p, fallback=fallback)
