"""Rainflow counting of a load or stress history (ASTM E1049-85, reapproved
2017, §5.4.4): turning points, the three-point rule with full and half cycles,
the counted cycles as a :class:`Cycles` record and their binned
:class:`RangeHistogram`."""
from __future__ import annotations

import html
from dataclasses import dataclass

import numpy as np

from toolkit.core.arrays import readonly
from toolkit.errors import InputError

__all__ = ["ASTM_E1049", "Cycles", "RangeHistogram", "rainflow", "turning_points"]

ASTM_E1049 = ("ASTM E1049-85 (reapproved 2017), Standard Practices for Cycle Counting in Fatigue Analysis, "
              "§5.4.4 rainflow counting")


def _series(series) -> np.ndarray:
    try:
        x = np.asarray(series, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputError(f"series must be a 1D sequence of numbers: {exc}") from None
    if x.ndim != 1:
        raise InputError(f"series must be 1D (one value per time step), got shape {x.shape}")
    if x.size < 2:
        raise InputError(f"series needs at least 2 points, got {x.size}")
    bad = ~np.isfinite(x)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(f"series point {i} is {x[i]}: every value must be finite")
    return x


def turning_points(series) -> np.ndarray:
    """Indices of the peaks and valleys of a history, the first and last point included.

    Repeated values are dropped first: a plateau (equal consecutive values)
    counts as one point, at its first sample.  Then every point that is not a
    reversal (the history goes on rising or falling through it) is dropped, as
    ASTM E1049-85 §3.2 and §5.4.4 ask: only peaks and valleys are counted.
    The first and last points are kept as the history's ends.  A constant
    history has one turning point.

    >>> turning_points([0, 1, 2, 2, 1, 3, 3, 3, 0]).tolist()
    [0, 2, 4, 5, 8]
    """
    x = _series(series)
    keep = np.flatnonzero(np.concatenate(([True], np.diff(x) != 0)))   # first sample of each plateau
    if keep.size <= 2:
        return keep
    d = np.sign(np.diff(x[keep]))
    reversal = d[:-1] != d[1:]                                        # signs are +-1 only after the drop
    return keep[np.concatenate(([True], reversal, [True]))]


@dataclass(frozen=True, repr=False)
class Cycles:
    """Counted cycles of a history: one row per full cycle (count 1.0) or half cycle (0.5).

    Attributes
    ----------
    ranges : (k,) float, ``|x[end] - x[start]|`` (> 0).
    means : (k,) float, ``(x[start] + x[end]) / 2``.
    counts : (k,) float, 1.0 or 0.5.
    starts, ends : (k,) int, indices into the original series of the
        cycle's two turning points, ``starts < ends`` (the states at the two
        ends give a cycle's tensor range).
    n_points : length of the counted series.

    Rows are in the order the three-point rule closes them, the residue's
    half cycles last.  Arrays are read-only.
    """

    ranges: np.ndarray
    means: np.ndarray
    counts: np.ndarray
    starts: np.ndarray
    ends: np.ndarray
    n_points: int

    @property
    def total(self) -> float:
        """Number of cycles, ``sum(counts)`` (a half cycle counts 0.5)."""
        return float(self.counts.sum())

    @property
    def amplitudes(self) -> np.ndarray:
        """Half the ranges."""
        return 0.5 * self.ranges

    @property
    def full(self) -> int:
        """Number of full-cycle rows."""
        return int(np.count_nonzero(self.counts == 1.0))

    @property
    def half(self) -> int:
        """Number of half-cycle rows."""
        return int(np.count_nonzero(self.counts == 0.5))

    def __len__(self):
        return int(self.ranges.size)

    def histogram(self, bins=10) -> "RangeHistogram":
        """Cycles binned by range.

        ``bins`` is a count of equal bins from 0 to the largest range, or the
        bin edges (increasing, >= 0, covering every range).  A range on an
        inner edge goes to the upper bin, the largest edge closes the last
        bin (as :func:`numpy.histogram`).
        """
        if isinstance(bins, (int, np.integer)) and not isinstance(bins, bool):
            if bins < 1:
                raise InputError(f"bins must be a positive count or bin edges, got {bins}")
            if len(self) == 0:
                raise InputError("no cycles to bin: a constant history has none; give bin edges to get empty bins")
            edges = np.linspace(0.0, float(self.ranges.max()), int(bins) + 1)
        else:
            try:
                edges = np.asarray(bins, dtype=float)
            except (TypeError, ValueError):
                raise InputError(f"bins must be a positive count or a 1D sequence of edges, got {bins!r}") from None
            if edges.ndim != 1 or edges.size < 2:
                raise InputError(f"bin edges must be 1D with at least 2 values, got shape {edges.shape}")
            if not np.all(np.isfinite(edges)) or edges[0] < 0 or np.any(np.diff(edges) <= 0):
                raise InputError(f"bin edges must be finite, >= 0 and strictly increasing, got {edges.tolist()}")
            outside = (self.ranges < edges[0]) | (self.ranges > edges[-1])
            if outside.any():
                raise InputError(f"{int(outside.sum())} counted range(s) lie outside the bin edges "
                                 f"[{edges[0]:g}, {edges[-1]:g}] (ranges from {self.ranges.min():g} to "
                                 f"{self.ranges.max():g}): widen the edges")
        counts, _ = np.histogram(self.ranges, bins=edges, weights=self.counts)
        return RangeHistogram(edges=readonly(edges.copy()), counts=readonly(counts))

    def __repr__(self):
        if len(self) == 0:
            return f"Cycles: none ({self.n_points} points, no reversal)"
        return (f"Cycles: {self.total:g} cycles ({self.full} full, {self.half} half) from {self.n_points} points; "
                f"ranges {self.ranges.min():.4g} to {self.ranges.max():.4g}")


@dataclass(frozen=True, repr=False)
class RangeHistogram:
    """Counted cycles per stress-range bin.

    Attributes
    ----------
    edges : (b+1,) bin edges; counts : (b,) cycles per bin (half cycles add 0.5).
    ``lower``, ``upper`` and ``mids`` are the bins' edges and centres;
    ``total`` the number of cycles.
    """

    edges: np.ndarray
    counts: np.ndarray

    @property
    def lower(self) -> np.ndarray:
        return self.edges[:-1]

    @property
    def upper(self) -> np.ndarray:
        return self.edges[1:]

    @property
    def mids(self) -> np.ndarray:
        return 0.5 * (self.edges[:-1] + self.edges[1:])

    @property
    def total(self) -> float:
        return float(self.counts.sum())

    def rows(self) -> list:
        """``(range from, range to, cycles)`` per bin, for a report table."""
        return [(float(a), float(b), float(n)) for a, b, n in zip(self.lower, self.upper, self.counts)]

    def to_dict(self) -> dict:
        """JSON-ready record: edges, counts, total."""
        return {"edges": self.edges.tolist(), "counts": self.counts.tolist(), "total": self.total}

    def __repr__(self):
        lines = [f"RangeHistogram: {self.total:g} cycles in {self.counts.size} bins",
                 f"  {'range from':>12}  {'range to':>12}  {'cycles':>10}"]
        lines += [f"  {a:>12.4g}  {b:>12.4g}  {n:>10.4g}" for a, b, n in self.rows()]
        return "\n".join(lines)

    def _repr_html_(self):
        body = "".join(f"<tr><td>{a:.4g}</td><td>{b:.4g}</td><td>{n:.4g}</td></tr>" for a, b, n in self.rows())
        return (f"<table><caption style='text-align:left'>{html.escape(f'{self.total:g} cycles')}</caption>"
                f"<tr><th>range from</th><th>range to</th><th>cycles</th></tr>{body}</table>")


def _count(v: list) -> tuple[list, list, list]:
    """The three-point rule of ASTM E1049-85 §5.4.4 over turning-point values ``v``.

    One pass with a stack of positions into ``v``; ``S`` (the starting point)
    is always the bottom of the stack.  Returns (first, second, count) lists
    of positions into ``v`` and counts (1.0 or 0.5).
    """
    first, second, count = [], [], []
    stack = []
    for k in range(len(v)):                              # step 1: read the next peak or valley
        stack.append(k)
        while len(stack) >= 3:                           # step 2: ranges X and Y of the three latest points
            a, b, c = stack[-3], stack[-2], stack[-1]
            y = abs(v[b] - v[a])
            if abs(v[c] - v[b]) < y:                     # step 3: X < Y, read on
                break
            first.append(a)
            second.append(b)
            if len(stack) == 3:                          # step 5: Y holds S, half cycle, S moves on
                count.append(0.5)
                del stack[0]
            else:                                        # step 4: one cycle, discard Y's two points
                count.append(1.0)
                del stack[-3:-1]
    for a, b in zip(stack[:-1], stack[1:]):              # step 6: the residue as half cycles
        first.append(a)
        second.append(b)
        count.append(0.5)
    return first, second, count


def rainflow(series) -> Cycles:
    """Rainflow count of a history, ASTM E1049-85 (reapproved 2017) §5.4.4.

    The history is reduced to its turning points (:func:`turning_points`:
    plateaus count once, points that are not reversals are dropped).  Over
    them, with X the latest range and Y the one before it: while ``|X| >=
    |Y|``, Y is counted, as one cycle if it does not contain the starting
    point S (its two points are discarded), else as half a cycle (S is
    discarded and the start moves on).  The ranges left at the end (the
    residue) count as half cycles each, as §5.4.4 step 6 says.  Each row's
    range is ``|x_j - x_i|``, its mean ``(x_i + x_j)/2``.

    The count is one O(n) pass in plain Python over the turning points
    (sequential by nature); the rest is vectorised.  A random history of
    1e6 points counts in about 1 s (``benchmarks/rainflow.py``).

    Parameters
    ----------
    series : 1D sequence of at least 2 finite numbers (a load, a stress, a load factor).

    Returns
    -------
    :class:`Cycles` with ``ranges``, ``means``, ``counts``, ``starts``, ``ends``.

    Examples
    --------
    The worked example of ASTM E1049-85 §5.4.4:

    >>> c = rainflow([-2, 1, -3, 5, -1, 3, -4, 4, -2])
    >>> c.ranges.tolist()
    [3.0, 4.0, 4.0, 8.0, 9.0, 8.0, 6.0]
    >>> c.counts.tolist()
    [0.5, 0.5, 1.0, 0.5, 0.5, 0.5, 0.5]
    >>> c.total
    4.0

    By range: 3 (0.5 cycle), 4 (1.5), 6 (0.5), 8 (1.0), 9 (0.5), as the
    standard's table gives.
    """
    x = _series(series)
    tp = turning_points(x)
    first, second, count = _count(x[tp].tolist())
    i = tp[np.asarray(first, dtype=np.intp)]
    j = tp[np.asarray(second, dtype=np.intp)]
    a, b = x[i], x[j]
    return Cycles(ranges=readonly(np.abs(b - a)), means=readonly(0.5 * (a + b)),
                  counts=readonly(np.asarray(count, dtype=float)), starts=readonly(i), ends=readonly(j),
                  n_points=int(x.size))
