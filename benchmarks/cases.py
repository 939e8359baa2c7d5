#!/usr/bin/env python
"""Benchmark of projecting many load cases with one projector: all cases as
columns of one block CG solve (``L2Projector.project_cases``) against
projecting them one by one (``L2Projector.project`` per case), on one quad4
mesh, for 1, 3, 24 and 96 load cases of three components (sxx, syy, sxy).

Run (see benchmarks/README.md)::

    /work/venv/bin/python benchmarks/cases.py            # 1M quad4 cells; several minutes
    /work/venv/bin/python benchmarks/cases.py --quick    # 10k cells; seconds

Every measurement runs in its own fresh subprocess (this file with
``--worker``), which builds the mesh, the projector and the cases first (not
timed), then times the projection with ``time.perf_counter`` and measures its
peak memory as the rise of the resident set (the ``PeakMemory`` of
``recovery.py``).  The one-by-one run projects at most ``--sample`` cases
(default 4) and scales the time to all cases (every case costs the same:
same mesh, same data size); its memory is that of one projection.

The cases: eight distinct fields (a smooth plane-stress field times a
per-case factor plus seeded element-wise noise, as in ``recovery.py``)
reused in turn, since :class:`~toolkit.LoadCases` keeps its fields without
copying them: 96 distinct cases on 1M cells would need 9 GB of input alone.
Each case still gets its own right-hand side and its own CG columns.
"""
from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from recovery import PeakMemory, build_mesh, make_field, parse_size, rss_reset_works, side_for  # noqa: E402

CASE_COUNTS = (1, 3, 24, 96)
DISTINCT = 8


def worker(spec):
    from toolkit import L2Projector, LoadCases

    mesh, _ = build_mesh("quad4", spec["side"], 0.25, spec["seed"])
    base = [make_field(mesh, v % 2, spec["seed"] + v) for v in range(min(DISTINCT, spec["cases"]))]
    cases = LoadCases({f"LC{i + 1}": base[i % len(base)] for i in range(spec["cases"])})
    projector = L2Projector(mesh)
    mem = PeakMemory(spec["memory"])
    if spec["mode"] == "together":
        mem.start()
        t0 = time.perf_counter()
        out = projector.project_cases(cases)
        seconds = time.perf_counter() - t0
        peak = mem.stop()
        first = out[cases.names[0]].info
        result = {"seconds": seconds, "projected": len(cases), "peak_mib": peak,
                  "iterations": max(max(f.info.get("iterations", [0])) for f in out.values()),
                  "cases_in_solve": first["cases_in_solve"]}
    else:
        n = min(spec["sample"], len(cases))
        mem.start()
        t0 = time.perf_counter()
        for k in cases.names[:n]:
            nodal = projector.project(cases[k])
            del nodal
        seconds = (time.perf_counter() - t0) * len(cases) / n
        result = {"seconds": seconds, "projected": n, "peak_mib": mem.stop(),
                  "iterations": max(projector.project(cases[cases.names[0]]).info.get("iterations", [0])),
                  "cases_in_solve": 1}
    result.update(ndof=projector.dofs.ndof, setup=projector.setup_time)
    print("RESULT " + json.dumps(result))


def run_worker(spec, timeout):
    cmd = [sys.executable, os.path.abspath(__file__), "--worker", json.dumps(spec)]
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
    except subprocess.TimeoutExpired:
        return {"error": f"timed out after {timeout:.0f} s"}
    for line in proc.stdout.splitlines()[::-1]:
        if line.startswith("RESULT "):
            return json.loads(line[7:])
    tail = (proc.stderr.strip().splitlines() or ["(no output)"])[-1]
    return {"error": f"exit {proc.returncode}: {tail[:120]}"}


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--size", default="1M", help="quad4 cells (suffix k or M); default 1M")
    ap.add_argument("--quick", action="store_true", help="10k cells")
    ap.add_argument("--cases", default=",".join(map(str, CASE_COUNTS)), help="case counts, e.g. 1,3,24,96")
    ap.add_argument("--sample", type=int, default=4, help="cases projected in the one-by-one run (scaled up)")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--memory", default="rss" if rss_reset_works() else "tracemalloc",
                    choices=("rss", "tracemalloc"))
    ap.add_argument("--timeout", type=float, default=3600.0)
    ap.add_argument("--worker", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.worker:
        return worker(json.loads(args.worker))
    size = parse_size("10k" if args.quick else args.size)
    side = side_for(size)
    counts = [int(c) for c in args.cases.split(",")]
    print(f"# {side * side} quad4 cells ({side} x {side}), 3 components per case, "
          f"peak memory by {args.memory}", flush=True)
    head = (f"| cases | together s/case | one by one s/case | time ratio | together peak MiB | "
            f"one by one peak MiB | memory ratio | cases per solve | CG iterations |")
    print(head)
    print("|" + "---|" * 9, flush=True)
    rows = []
    for n in counts:                        # each row printed as soon as it is measured
        res = {}
        for mode in ("together", "one_by_one"):
            print(f"  {n} cases, {mode} ...", file=sys.stderr, flush=True)
            res[mode] = run_worker({"side": side, "cases": n, "mode": mode, "seed": args.seed,
                                    "sample": args.sample, "memory": args.memory}, args.timeout)
        rows.append((n, res))
        a, b = res["together"], res["one_by_one"]
        if "error" in a or "error" in b:
            print(f"| {n} | {a.get('error', '')} | {b.get('error', '')} |", flush=True)
            continue
        sampled = "" if b["projected"] == n else f" (sampled {b['projected']})"
        print(f"| {n} | {a['seconds'] / n:.3f} | {b['seconds'] / n:.3f}{sampled} | "
              f"{b['seconds'] / a['seconds']:.2f} | {a['peak_mib']:.0f} | {b['peak_mib']:.0f} | "
              f"{a['peak_mib'] / max(b['peak_mib'], 1e-9):.2f} | {a['cases_in_solve']} | {a['iterations']} |",
              flush=True)
    first = rows[0][1]["together"]
    if "ndof" in first:
        print(f"\n{first['ndof']} unknowns; projector setup {first['setup']:.2f} s (not timed above). "
              "time ratio = one by one / together (above 1: together is faster); "
              "memory ratio = together / one by one.")


if __name__ == "__main__":
    main()
