"""Rainflow counting cost: the count of a long random history (seeded), split
into turning-point extraction (vectorised) and the three-point pass (one
sequential loop in plain Python over the turning points).  A script, not a
test: it prints a table and never fails a build."""
from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from toolkit.assess.counting import rainflow, turning_points  # noqa: E402


def best_of(f, repeats=3):
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        out = f()
        times.append(time.perf_counter() - t)
    return min(times), out


def main(sizes=(10_000, 100_000, 1_000_000)):
    rng = np.random.default_rng(12)
    print(f"{'points':>10} {'turning pts':>12} {'cycles':>10} {'turning s':>10} {'rainflow s':>11} {'us/point':>9}")
    for n in sizes:
        x = rng.standard_normal(n)
        t_tp, tp = best_of(lambda: turning_points(x))
        t_rf, c = best_of(lambda: rainflow(x))
        print(f"{n:>10} {tp.size:>12} {c.total:>10.0f} {t_tp:>10.3f} {t_rf:>11.3f} {1e6 * t_rf / n:>9.2f}")


if __name__ == "__main__":
    main()
