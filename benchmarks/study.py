"""Parameter-study speed-up: 8 plate_with_hole variants (width 80/100 mm x
hole diameter 20/25/30/35 mm, element_size 2.5 mm) rendered with 1 and with 2
workers, on the default local process pool and on a Dask LocalCluster, all in
one run; prints wall times and speed-ups against 1 worker of the same kind.

    PYTHONPATH=$PWD python benchmarks/study.py [--out DIR]

Each run starts from an empty folder (nothing skipped).  A script, not a test.
"""
import argparse
import shutil
import tempfile
import time
from pathlib import Path

from toolkit.workbook import cluster_executor, grid, render_many

SETS = grid({"width": [80.0, 100.0], "hole_diameter": [20.0, 25.0, 30.0, 35.0], "element_size": [2.5]})


def _timed(out, executor=None, workers=None):
    if out.exists():
        shutil.rmtree(out)
    t0 = time.perf_counter()
    r = render_many("plate_with_hole", SETS, out, executor, workers=workers)
    dt = time.perf_counter() - t0
    if not r.ok:
        raise SystemExit(f"benchmark study failed: {[(v.folder, v.reason) for v in r.failed]}")
    return dt


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", help="work folder (default: a temporary folder, removed after)")
    args = ap.parse_args()
    base = Path(args.out) if args.out else Path(tempfile.mkdtemp(prefix="stresspath-study-bench-"))
    rows = []
    try:
        for n in (1, 2):
            rows.append(("local process pool", n, _timed(base / f"pool{n}", workers=n)))
        for n in (1, 2):
            with cluster_executor(f"local:{n}") as ex:
                rows.append(("Dask LocalCluster", n, _timed(base / f"dask{n}", ex)))
    finally:
        if not args.out:
            shutil.rmtree(base, ignore_errors=True)
    one = {kind: t for kind, n, t in rows if n == 1}
    print(f"{len(SETS)} variants of plate_with_hole")
    print("| executor | workers | wall time (s) | s per variant | speed-up vs 1 worker |")
    print("|---|---|---|---|---|")
    for kind, n, t in rows:
        print(f"| {kind} | {n} | {t:.1f} | {t / len(SETS):.1f} | {one[kind] / t:.2f} |")


if __name__ == "__main__":
    main()
