"""Fatigue damage of counted cycles: the Palmgren-Miner sum of a rainflow count
or a range histogram on an IIW S-N curve (with γF, γM and the thickness
correction of :mod:`toolkit.assess.checks`), the life in repeats of the
history, the equivalent constant-amplitude range at 2·10⁶ cycles and the
per-bin damage table with its largest contributor."""
from __future__ import annotations

import html
import math
from dataclasses import dataclass, field

import numpy as np

from toolkit.assess.checks import IIW_2016, CheckResult, SNCurve, Working, miner_damage
from toolkit.assess.counting import Cycles, RangeHistogram
from toolkit.core.arrays import readonly
from toolkit.core.numbers import positive_number as _positive
from toolkit.errors import InputError

__all__ = ["CycleDamage", "cycle_damage", "equivalent_range"]


def _counted(counted, who):
    """(ranges, counts) of a :class:`Cycles` (each cycle's own range) or a
    :class:`RangeHistogram` (each bin at its upper edge)."""
    if isinstance(counted, Cycles):
        return np.asarray(counted.ranges), np.asarray(counted.counts)
    if isinstance(counted, RangeHistogram):
        return np.asarray(counted.upper), np.asarray(counted.counts)
    raise InputError(f"{who}: counted must be Cycles (from toolkit.rainflow) or a RangeHistogram "
                     f"(Cycles.histogram), got {type(counted).__name__}")




def equivalent_range(counted, m=3.0, n_ref=2e6) -> float:
    """Equivalent constant-amplitude range for one S-N slope ``m``.

    ``Δσ_eq = (Σ n_i Δσ_i^m / n_ref)^(1/m)``: the range that, applied
    ``n_ref`` times (2·10⁶, the cycles at which the FAT class is defined),
    gives the same Palmgren–Miner damage as the counted cycles on any curve
    ``N = C Δσ^-m`` (IIW recommendations, Hobbacher 2016; the equivalent
    range of a spectrum on a single-slope curve).  A :class:`Cycles` counts
    each cycle at its own range, a :class:`RangeHistogram` each bin at its
    upper edge.  For the two-slope curve use :func:`cycle_damage`, whose
    ``equivalent_range`` is defined by equal damage on that curve.

    >>> from toolkit.assess.counting import rainflow
    >>> round(equivalent_range(rainflow([0, 100, 0, 100, 0]), m=3.0, n_ref=2.0), 6)
    100.0
    """
    s, n = _counted(counted, "equivalent_range")
    m = _positive("m", m)
    n_ref = _positive("n_ref", n_ref)
    return float((np.sum(n * s ** m) / n_ref) ** (1.0 / m))


@dataclass(frozen=True, repr=False)
class CycleDamage:
    """Palmgren–Miner damage of one pass of a counted history on a design curve.

    Attributes
    ----------
    damage : D for one repeat of the history.
    repeats : life in repeats of the history, ``1/D`` (inf if D = 0).
    equivalent_range : the range at ``n_ref`` cycles that gives the same
        damage (see :func:`cycle_damage`), or None where the curve has no
        slope beyond the knee and none exists.
    cycles : number of counted cycles in one repeat.
    edges, bin_counts, bin_damage : the per-bin table (ranges in bins of
        ``edges``; cycles and damage per bin).
    curve : the characteristic curve; ``design_fat = FAT f(t) / γM``.
    gamma_F, gamma_M, thickness_factor, n_ref, counted_as ("cycles": each at
    its own range; "histogram": each bin at its upper edge), notes.
    """

    damage: float
    repeats: float
    equivalent_range: float | None
    cycles: float
    edges: np.ndarray
    bin_counts: np.ndarray
    bin_damage: np.ndarray
    curve: SNCurve
    design_fat: float
    gamma_F: float
    gamma_M: float
    thickness_factor: float
    n_ref: float
    counted_as: str
    notes: list = field(default_factory=list)

    @property
    def largest(self) -> int | None:
        """Index of the bin with the largest damage (None if no damage)."""
        return int(np.argmax(self.bin_damage)) if self.damage > 0 else None

    def rows(self) -> list:
        """``(range from, range to, cycles, damage, share of D)`` per bin, for a report table."""
        share = self.bin_damage / self.damage if self.damage > 0 else np.zeros_like(self.bin_damage)
        return [(float(a), float(b), float(n), float(d), float(s)) for a, b, n, d, s in
                zip(self.edges[:-1], self.edges[1:], self.bin_counts, self.bin_damage, share)]

    def to_dict(self) -> dict:
        """JSON-ready record (inf repeats as the text "inf")."""
        from toolkit.report.format import plain  # display delegates to the report layer

        return plain({"damage": self.damage, "repeats": self.repeats, "equivalent_range": self.equivalent_range,
                      "cycles": self.cycles, "unit": self.curve.unit, "curve": self.curve.to_dict(),
                      "design_fat": self.design_fat, "gamma_F": self.gamma_F, "gamma_M": self.gamma_M,
                      "thickness_factor": self.thickness_factor, "n_ref": self.n_ref, "counted_as": self.counted_as,
                      "largest_bin": self.largest, "bins": [dict(zip(("from", "to", "cycles", "damage", "share"), r))
                                                            for r in self.rows()], "notes": list(self.notes)},
                     "cycle damage")

    def _summary(self) -> list:
        u = self.curve.unit
        eq = "none (see notes)" if self.equivalent_range is None else f"{self.equivalent_range:.4g} {u}"
        lines = [f"damage per repeat D = {self.damage:.4g}, life {self.repeats:.4g} repeats of the history",
                 f"equivalent range at {self.n_ref:.3g} cycles: {eq}",
                 f"{self.cycles:g} cycles on {self.curve.name}, design FAT {self.design_fat:.4g} {u} "
                 f"(f(t) {self.thickness_factor:.4g}, γM {self.gamma_M:g}, γF {self.gamma_F:g})"]
        if self.largest is not None:
            a, b, n, d, s = self.rows()[self.largest]
            lines.append(f"largest contributor: bin {self.largest} ({a:.4g} to {b:.4g} {u}), {s:.1%} of D")
        return lines + list(self.notes)

    def __repr__(self):
        lines = ["CycleDamage:"] + [f"  {s}" for s in self._summary()]
        lines.append(f"  {'range from':>11} {'range to':>11} {'cycles':>10} {'damage':>10} {'share':>7}")
        lines += [f"  {a:>11.4g} {b:>11.4g} {n:>10.4g} {d:>10.4g} {s:>7.1%}" for a, b, n, d, s in self.rows()]
        return "\n".join(lines)

    def _repr_html_(self):
        head = "".join(f"<p>{html.escape(s)}</p>" for s in self._summary())
        body = "".join(f"<tr><td>{a:.4g}</td><td>{b:.4g}</td><td>{n:.4g}</td><td>{d:.4g}</td><td>{s:.1%}</td></tr>"
                       for a, b, n, d, s in self.rows())
        return (f"{head}<table><tr><th>range from</th><th>range to</th><th>cycles</th><th>damage</th>"
                f"<th>share</th></tr>{body}</table>")

    def check(self, repeats=1.0, damage_limit=0.5, name="fatigue of the counted history (Palmgren-Miner)"):
        """Fatigue check ``D_total = repeats × D <= D_limit`` as a :class:`CheckResult`.

        ``repeats``: how often the history occurs in the design life.  The
        default ``damage_limit = 0.5`` is the IIW 2016 value for welded joints
        under variable amplitude (from memory, as in
        :func:`toolkit.assess.checks.fatigue_check`).
        """
        r = _positive("repeats", repeats)
        dl = _positive("damage_limit", damage_limit)
        c, u = self.curve, self.curve.unit
        total = self.damage * r
        beyond = "no damage below the knee" if c.m2 is None else f"m2 = {c.m2:g} beyond it"
        working = [
            Working("S-N curve", "N = N_ref (FAT / Δσ)^m1", "{0} × ({1} / Δσ)^{2}",
                    ((c.n_ref, "-"), (c.fat, u), (c.m1, "-")), None,
                    f"{c.name}: knee at {c.knee_cycles:.3g} cycles, {beyond}; {c.source}"),
            Working("design FAT", "FAT_d = FAT × f(t) / γM", "{0} × {1} / {2}",
                    ((c.fat, u), (self.thickness_factor, "-"), (self.gamma_M, "-")), (self.design_fat, u),
                    f"{IIW_2016}: thickness correction and partial factor γM on resistance"),
            Working("damage per repeat", "D = Σ n_i / N_d(γF Δσ_i)", f"{self.cycles:g} counted cycles", (),
                    (self.damage, "-"), f"Palmgren–Miner sum, {IIW_2016}; cycles by rainflow counting, "
                                        "ASTM E1049-85 §5.4.4"),
            Working("design damage", "D_total = repeats × D", "{0} × {1}", ((r, "-"), (self.damage, "-")),
                    (total, "-"), "repeats of the history in the design life"),
            Working("utilization", "u = D_total / D_lim", "{0} / {1}", ((total, "-"), (dl, "-")), (total / dl, "-"),
                    ("damage limit 0.5, IIW recommendation for welded joints under variable amplitude (from memory)"
                     if dl == 0.5 else "damage limit as given") + "; PASS if u ≤ 1"),
        ]
        notes = self._summary()
        inputs = {"curve": c, "gamma_F": self.gamma_F, "gamma_M": self.gamma_M,
                  "thickness_factor": self.thickness_factor, "repeats": r, "cycles_per_repeat": self.cycles,
                  "bin_edges": self.edges, "bin_cycles": self.bin_counts, "bin_damage": self.bin_damage,
                  "source": IIW_2016}
        return CheckResult(name=name, value=total, limit=dl, unit="-", inputs=inputs, notes=notes, working=working)


def _table(counted, s, d, bins):
    """Bin edges, cycles and damage per bin; a Cycles' exact per-cycle damage summed into its bins."""
    if isinstance(counted, RangeHistogram):
        if bins is not None:
            raise InputError("cycle_damage: bins applies to Cycles only; a RangeHistogram has its own bins")
        return np.asarray(counted.edges), np.asarray(counted.counts), d
    if len(counted) == 0:
        if bins is None or isinstance(bins, (int, np.integer)):
            return np.zeros(1), np.zeros(0), np.zeros(0)
    hist = counted.histogram(10 if bins is None else bins)
    edges = np.asarray(hist.edges)
    k = np.clip(np.searchsorted(edges, s, side="right") - 1, 0, edges.size - 2)   # as numpy.histogram bins
    return edges, np.asarray(hist.counts), np.bincount(k, weights=d, minlength=edges.size - 1)


def cycle_damage(counted, curve, gamma_F=1.0, gamma_M=1.0, thickness_factor=1.0, bins=None) -> CycleDamage:
    """Palmgren–Miner damage of counted cycles on an S-N curve, with life and equivalent range.

    ``D = Σ n_i / N_d(γF Δσ_i)``, ``N_d`` the life on the design curve
    (FAT × f(t) / γM), as :func:`toolkit.assess.checks.miner_damage` (IIW
    recommendations, Hobbacher 2016: partial factors on actions and
    resistance, thickness correction, the two-slope curve for variable
    amplitude).  A :class:`Cycles` counts each cycle at its own range (half
    cycles with n = 0.5); a :class:`RangeHistogram` each bin at its upper
    edge (conservative: no counted range in the bin exceeds it).

    The life is ``1/D`` repeats of the history.  The equivalent range is
    defined here by equal damage on the given curve: the range ``Δσ_eq``
    that, applied ``n_ref = 2·10⁶`` times, gives D, ``γF Δσ_eq =
    Δσ_d(n_ref / D)`` with ``Δσ_d(N)`` the design curve's strength at N
    cycles.  On a single-slope curve this is the closed form of
    :func:`equivalent_range`; where ``n_ref / D`` lies beyond the knee the
    second slope is used, and a curve without one (constant amplitude) has
    no such range (None, with a note).

    Parameters
    ----------
    counted : :class:`Cycles` (from :func:`toolkit.rainflow`) or :class:`RangeHistogram`.
    curve : :class:`SNCurve` or a dict for :meth:`SNCurve.from_dict`.
    gamma_F, gamma_M, thickness_factor : positive factors, as in :func:`miner_damage`.
    bins : for Cycles, the bins of the damage table (a count from 0 to the
        largest range, default 10, or edges); not for a histogram.

    Examples
    --------
    >>> from toolkit import rainflow, sn_curve
    >>> history = rainflow([0, 90] * 1000 + [0])       # 1000 cycles of 90 MPa
    >>> dmg = cycle_damage(history, sn_curve(90, amplitude="variable"))
    >>> round(dmg.repeats, 6)                          # FAT 90: 2e6 cycles at 90 MPa
    2000.0
    >>> round(dmg.equivalent_range, 2)                 # 2e6 cycles below the knee, slope m2, same D
    40.08
    >>> round(equivalent_range(history, m=3.0), 3)     # slope 3 continued: 90 (1000 / 2e6)^(1/3)
    7.143
    """
    s, n = _counted(counted, "cycle_damage")
    c = SNCurve.from_dict(curve)
    gF, gM, ft = (_positive(k, v) for k, v in (("gamma_F", gamma_F), ("gamma_M", gamma_M),
                                               ("thickness_factor", thickness_factor)))
    if s.size:
        D, per = miner_damage(s, n, c, gF, gM, ft)
        d = per["damage"]
    else:
        D, d = 0.0, np.zeros(0)
    edges, bin_counts, bin_damage = _table(counted, s, d, bins)
    design = c.scaled(ft / gM) if (ft != 1.0 or gM != 1.0) else c
    notes = []
    if D > 0:
        target = c.n_ref / D
        if c.m2 is None and target > c.knee_cycles:
            eq = None
            notes.append(f"no equivalent range at {c.n_ref:.3g} cycles: the damage is below {c.n_ref / c.knee_cycles:g}"
                         " and the curve has no slope beyond the knee (use the variable-amplitude curve)")
        else:
            eq = float(design.strength(target)) / gF
    else:
        eq = None if (c.m2 is None and s.size) else 0.0
        if s.size:
            notes.append("every design range lies below the knee-point stress of a curve without a slope beyond "
                         "it: zero damage")
    if isinstance(counted, RangeHistogram):
        notes.append("each bin counted at its upper edge (conservative)")
    return CycleDamage(damage=float(D), repeats=(1.0 / D if D > 0 else math.inf), equivalent_range=eq,
                       cycles=float(n.sum()), edges=readonly(np.array(edges, dtype=float)),
                       bin_counts=readonly(np.array(bin_counts, dtype=float)),
                       bin_damage=readonly(np.array(bin_damage, dtype=float)), curve=c,
                       design_fat=design.fat, gamma_F=gF, gamma_M=gM, thickness_factor=ft, n_ref=c.n_ref,
                       counted_as="histogram" if isinstance(counted, RangeHistogram) else "cycles", notes=notes)
