"""Generate ``data/demo_histories/``: invented load histories for the demos.

Each file is a CSV load history (see :func:`toolkit.io.read_load_history`):
``time`` in seconds, then one column of load factors per load case.

``weld_toe.csv`` -- an invented scenario: a stiffener welded across the floor
plate of a hopper; 24 fill-and-discharge cycles, each filling to a level drawn
at random, with a feeder vibrating while it discharges.  The load cases are the
workbook's unit cases: ``membrane`` (1 MPa nominal membrane stress in the
plate) and ``bending`` (1 MPa nominal bending stress at the upper surface), so
the factors are nominal stresses in MPa.  The bending changes sign when the
discharge runs from the other side (every third cycle), so the lower toe sees
the larger range in those cycles.

``bracket.csv`` -- the same kind of scenario for the demo bracket: load cases
``pull`` and ``shear`` of ``data/demo_bracket`` (factors 1 = the case as
stored), 30 lifts with a swinging side load.

Run from the repository root: ``python data/make_demo_histories.py``.  The
output is byte-identical on every run (seeded).  Demo data only: no measured
history lies behind these numbers.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

SEED = 20261202
HERE = Path(__file__).resolve().parent / "demo_histories"


def _write(path, header, columns):
    rows = [",".join(header)] + [",".join(f"{v:.6g}" for v in row) for row in zip(*columns)]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")


def weld_toe_history(rng, cycles=24, dt=0.5):
    t, m, b = [0.0], [0.0], [0.0]
    for k in range(cycles):
        level = rng.uniform(45.0, 80.0)                 # filled: MPa nominal membrane
        side = -1.0 if k % 3 == 2 else 1.0              # discharge from the other side
        fill = np.linspace(0.0, 1.0, 21)[1:]
        hold = np.ones(10)
        n_vib = 40
        drain = np.linspace(1.0, 0.0, n_vib + 1)[1:]
        vib = 0.08 * np.sin(2 * np.pi * np.arange(1, n_vib + 1) / 5.0) * np.sin(np.pi * drain)
        mem = level * np.r_[fill, hold, drain + vib]
        ben = side * 0.25 * level * np.r_[fill, hold, drain] + level * np.r_[0 * fill, 0 * hold, 0.5 * vib]
        ben += rng.normal(0.0, 0.3, len(ben))
        for mm, bb in zip(mem, ben):
            t.append(t[-1] + dt)
            m.append(mm)
            b.append(bb)
    return np.array(t), np.array(m), np.array(b)


def bracket_history(rng, lifts=30, dt=0.2):
    t, p, s = [0.0], [0.0], [0.0]
    for _ in range(lifts):
        level = rng.uniform(0.4, 1.0)
        swing = rng.uniform(0.2, 0.6)
        n = 60
        u = np.arange(1, n + 1) / n
        pull = level * np.sin(np.pi * u) ** 2
        shear = swing * np.sin(2 * np.pi * 3 * u) * np.sin(np.pi * u)
        for a, c in zip(pull, shear):
            t.append(t[-1] + dt)
            p.append(a)
            s.append(c)
    return np.array(t), np.array(p), np.array(s)


def main():
    HERE.mkdir(exist_ok=True)
    rng = np.random.default_rng(SEED)
    t, m, b = weld_toe_history(rng)
    _write(HERE / "weld_toe.csv", ["time", "membrane", "bending"], [t, m, b])
    t, p, s = bracket_history(rng)
    _write(HERE / "bracket.csv", ["time", "pull", "shear"], [t, p, s])


if __name__ == "__main__":
    main()
