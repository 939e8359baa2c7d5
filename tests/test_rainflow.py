"""Rainflow counting (toolkit.assess.counting).

Source: ASTM E1049-85 (reapproved 2017), Standard Practices for Cycle Counting
in Fatigue Analysis, §5.4.4 (rainflow counting) and its worked example; the
relations between reversals and cycles follow from the definitions there.  The
brute-force counter below is written independently of the toolkit: it removes
inner ranges by the four-point condition (a range no larger than its
successor and smaller than its predecessor closes a cycle), scanning the whole
list again after every removal, and counts the remaining ranges as half cycles.
"""
import re
from collections import Counter
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import toolkit
from toolkit.assess.counting import Cycles, RangeHistogram, rainflow, turning_points
from toolkit.errors import InputError

README = Path(__file__).resolve().parents[1] / "README.md"


def brute_force(x):
    """(range, mean, count) rows by repeated full scans; turning points found by hand."""
    pts = []
    for v in x:                                          # drop repeats, then non-reversals
        if pts and v == pts[-1]:
            continue
        if len(pts) >= 2 and (pts[-1] - pts[-2]) * (v - pts[-1]) > 0:
            pts[-1] = v
        else:
            pts.append(v)
    rows = []
    found = True
    while found:
        found = False
        for i in range(1, len(pts) - 2):
            y = abs(pts[i + 1] - pts[i])
            if abs(pts[i] - pts[i - 1]) > y and abs(pts[i + 2] - pts[i + 1]) >= y:
                rows.append((y, (pts[i] + pts[i + 1]) / 2, 1.0))
                del pts[i:i + 2]
                found = True
                break
    rows += [(abs(b - a), (a + b) / 2, 0.5) for a, b in zip(pts[:-1], pts[1:])]
    return rows


def by_range(c: Cycles) -> dict:
    out = Counter()
    for r, n in zip(c.ranges.tolist(), c.counts.tolist()):
        out[r] += n
    return dict(out)


def test_astm_worked_example():
    """ASTM E1049-85 §5.4.4 example: ranges 3 (0.5 cycle), 4 (1.5), 6 (0.5), 8 (1.0), 9 (0.5)."""
    x = [-2, 1, -3, 5, -1, 3, -4, 4, -2]
    c = rainflow(x)
    assert by_range(c) == {3.0: 0.5, 4.0: 1.5, 6.0: 0.5, 8.0: 1.0, 9.0: 0.5}
    assert c.total == 4.0 and len(c) == 7 and c.full == 1 and c.half == 6
    # the one full cycle is -1 .. 3 (points 4 and 5), mean 1 (§5.4.4: the range 4 counted once, Y discarded)
    full = np.flatnonzero(c.counts == 1.0)
    assert c.starts[full].tolist() == [4] and c.ends[full].tolist() == [5] and c.means[full].tolist() == [1.0]


def test_ends_index_the_series_and_give_ranges_and_means():
    x = np.array([0.0, 2.0, 2.0, 1.0, 1.5, -3.0, -3.0, 4.0, 0.5, 1.0])
    c = rainflow(x)
    assert np.all(c.starts < c.ends)
    np.testing.assert_array_equal(c.ranges, np.abs(x[c.ends] - x[c.starts]))
    np.testing.assert_array_equal(c.means, 0.5 * (x[c.ends] + x[c.starts]))
    tp = set(turning_points(x).tolist())
    assert set(c.starts.tolist()) <= tp and set(c.ends.tolist()) <= tp
    assert not c.ranges.flags.writeable and not c.counts.flags.writeable


def test_turning_points_plateaus_and_non_reversals():
    # a plateau counts once, at its first sample; points on a rising or falling run are dropped
    assert turning_points([0, 1, 2, 2, 1, 3, 3, 3, 0]).tolist() == [0, 2, 4, 5, 8]
    assert turning_points([0, 1, 2, 3]).tolist() == [0, 3]
    assert turning_points([5, 5, 5]).tolist() == [0]
    assert turning_points([1, 1, 2, 2]).tolist() == [0, 2]
    c = rainflow([5.0, 5.0, 5.0])
    assert len(c) == 0 and c.total == 0.0 and "none" in repr(c)
    # sampling a history more finely between its turning points changes nothing
    coarse = rainflow([0, 4, -2, 3, -1])
    fine = rainflow([0, 1, 2, 3, 4, 4, 1, -2, 0, 3, 2, 2, -1])
    assert by_range(coarse) == by_range(fine)


@settings(max_examples=150, deadline=None)
@given(st.lists(st.integers(-6, 6), min_size=2, max_size=40))
def test_against_brute_force_counter(xs):
    c = rainflow(xs)
    ours = sorted(zip(c.ranges.tolist(), c.means.tolist(), c.counts.tolist()))
    assert ours == sorted(brute_force([float(v) for v in xs]))


@settings(max_examples=100, deadline=None)
@given(st.lists(st.floats(-1e3, 1e3, allow_nan=False), min_size=2, max_size=60))
def test_total_is_half_the_number_of_ranges_between_reversals(xs):
    """Each range between consecutive turning points is counted once, in a
    full cycle (two ranges) or a half cycle (one): total = (turning points - 1) / 2."""
    c = rainflow(xs)
    assert c.total == pytest.approx((turning_points(xs).size - 1) / 2)
    assert np.all(c.ranges > 0)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.integers(-9, 9), min_size=3, max_size=30), st.integers(0, 29), st.floats(-50, 50))
def test_closed_history_is_invariant_under_a_cyclic_shift(xs, shift, offset):
    """A repeating history counted from its largest peak to the same peak
    (ASTM E1049-85 §5.4.5 for repeating histories starts there) closes every
    cycle: all counts add up to whole cycles per (range, mean), and the
    content does not depend on where the record was cut."""
    period = np.array(xs, dtype=float)
    if np.ptp(period) == 0:
        return
    rotated = np.roll(period, shift % period.size)

    def closed(p):
        k = int(np.argmax(p))
        q = np.roll(p, -k)
        return np.append(q, q[0])

    def content(c):
        out = Counter()
        for r, m, n in zip(c.ranges.tolist(), c.means.tolist(), c.counts.tolist()):
            out[(r, m)] += n
        return dict(out)

    a, b = content(rainflow(closed(period))), content(rainflow(closed(rotated)))
    assert a == b
    assert all(float(n).is_integer() for n in a.values())
    # and the content shifts with the mean (a constant added to the history)
    shifted = content(rainflow(closed(period) + offset))
    # (ranges of shifted values carry the rounding of the addition: compare to 1e-9)
    assert sorted((round(r, 9), n) for (r, _), n in shifted.items()) == sorted((round(r, 9), n) for (r, _), n in a.items())


def test_means_and_sign():
    x = np.array([-2, 1, -3, 5, -1, 3, -4, 4, -2], dtype=float)
    c, neg = rainflow(x), rainflow(-x)
    np.testing.assert_array_equal(c.ranges, neg.ranges)            # a range is a magnitude
    np.testing.assert_array_equal(c.means, -neg.means)
    up = rainflow(x + 10.0)
    np.testing.assert_allclose(up.means, c.means + 10.0)
    # worked example: the half cycle -3 .. 5 has mean 1, the half cycle 5 .. -4 (range 9) mean 0.5
    rows = set(zip(c.ranges.tolist(), c.means.tolist(), c.counts.tolist()))
    assert (8.0, 1.0, 0.5) in rows and (9.0, 0.5, 0.5) in rows


def test_histogram_by_count_and_by_edges():
    c = rainflow([-2, 1, -3, 5, -1, 3, -4, 4, -2])
    h = c.histogram(3)                                             # 0-3, 3-6, 6-9 (9 closes the last bin)
    assert isinstance(h, RangeHistogram)
    np.testing.assert_allclose(h.edges, [0, 3, 6, 9])
    np.testing.assert_allclose(h.counts, [0.0, 2.0, 2.0])          # 3 goes up: 3, 4, 4 | 6, 8, 8, 9
    assert h.total == c.total
    h2 = c.histogram([0, 5, 10])
    assert h2.rows() == [(0.0, 5.0, 2.0), (5.0, 10.0, 2.0)]
    assert h2.to_dict() == {"edges": [0.0, 5.0, 10.0], "counts": [2.0, 2.0], "total": 4.0}
    np.testing.assert_allclose(h2.upper, [5, 10]) and np.testing.assert_allclose(h2.mids, [2.5, 7.5])
    assert "4 cycles in 2 bins" in repr(h2) and "<table>" in h2._repr_html_()
    with pytest.raises(InputError, match="outside the bin edges"):
        c.histogram([0, 5, 8])
    for bad in (0, [1.0], [0, 2, 2], [-1, 2], "x"):
        with pytest.raises(InputError):
            c.histogram(bad)
    with pytest.raises(InputError, match="no cycles"):
        rainflow([1, 1]).histogram(4)
    assert rainflow([1, 1]).histogram([0, 1]).total == 0.0


@pytest.mark.parametrize("bad, what", [([1.0, np.nan, 2.0], "point 1"), ([1.0], "at least 2"),
                                       ([[1.0, 2.0], [3.0, 4.0]], "1D"), (["a", "b"], "numbers"),
                                       ([0.0, np.inf], "finite")])
def test_bad_input(bad, what):
    with pytest.raises(InputError, match=what):
        rainflow(bad)


def test_public_names():
    assert toolkit.rainflow is rainflow and toolkit.assess.rainflow is rainflow and toolkit.Cycles is Cycles
    assert "Cycles: 4 cycles (1 full, 6 half)" in repr(rainflow([-2, 1, -3, 5, -1, 3, -4, 4, -2]))


def test_readme_rainflow_snippet_runs():
    """The README's "Load histories and rainflow" snippet as printed; its
    history is 0, 80, 20, 60, 0 repeated, so each repeat holds one cycle of 40
    and one of 80 MPa (by hand, ASTM E1049-85 §5.4.4)."""
    text = README.read_text(encoding="utf-8").split("### Load histories and rainflow", 1)[1]
    code = re.search(r"```python\n(.*?)```", text, re.DOTALL).group(1)
    ns: dict = {}
    exec(compile(code, str(README), "exec"), ns)
    assert by_range(ns["cycles"]) == {40.0: 100.0, 80.0: 100.0}
    assert ns["damage"].damage > 0 and ns["check"].status in ("PASS", "FAIL")
