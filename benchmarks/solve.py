"""Solve time against model size for each parametric model.

Prints, per model and size, the degrees of freedom and the time spent in
assembly (element matrices + sparse assembly + support reduction),
factorisation (SuperLU), the triangular solves and stress recovery, then
compares the vectorised stiffness assembly with a per-element Python loop at
a small size (the loop lives only here).

    python benchmarks/solve.py                 # modest sizes (up to ~1e5 dof)
    python benchmarks/solve.py --sizes 1e4 1e5 1e6
    python benchmarks/solve.py --large         # up to ~1e6 dof (needs a few GB, minutes)
"""
from __future__ import annotations

import argparse
import time

import numpy as np
import scipy.sparse as sp

from toolkit.fem.models import plate_with_hole, shoulder_fillet, weld_toe
from toolkit.fem.elasticity import element_stiffness
from toolkit.fem.solver import solve

GROWTH = 1.05      # gentle grading so that the size follows the element size


def makers():
    return {
        "plate_with_hole": lambda h: plate_with_hole(100.0, 200.0, 10.0, element_size=h * 5.0, growth=GROWTH),
        "fillet_flat": lambda h: shoulder_fillet("flat", 20.0, 10.0, 1.0, element_size=h, growth=GROWTH, aspect=3.0),
        "fillet_shaft": lambda h: shoulder_fillet("shaft", 20.0, 10.0, 1.0, element_size=h, growth=GROWTH, aspect=3.0),
        "weld_toe": lambda h: weld_toe(10.0, 10.0, 8.0, toe_radius=1.0, element_size=h, growth=GROWTH),
    }


def size_for(make, target):
    """Element size giving about ``target`` dof, from ndof ~ C h^-p fitted on two small meshes."""
    h1, h2 = 0.5, 0.25
    n1, n2 = (2 * make(h).mesh.nnodes for h in (h1, h2))
    p = np.log(n2 / n1) / np.log(h1 / h2)
    return h2 * (n2 / target) ** (1 / p), p


def loop_stiffness(mesh, block, rule, analysis, thickness, material):
    """Reference per-element Python loop (plane problems): Ke = Σ_q Bᵀ D B w det J t."""
    et = block.element
    r = et.rule(rule)
    N, dN = et.evaluate(r.points)
    D = material.matrix(analysis)
    rows, cols, vals = [], [], []
    for c in range(len(block.cells)):
        conn = block.cells[c]
        xe = mesh.nodes[conn]
        k = len(conn)
        Ke = np.zeros((2 * k, 2 * k))
        for q in range(len(r.weights)):
            J = xe.T @ dN[q]
            dNdx = dN[q] @ np.linalg.inv(J)
            B = np.zeros((3, 2 * k))
            B[0, 0::2] = dNdx[:, 0]
            B[1, 1::2] = dNdx[:, 1]
            B[2, 0::2] = dNdx[:, 1]
            B[2, 1::2] = dNdx[:, 0]
            Ke += B.T @ D @ B * (r.weights[q] * np.linalg.det(J) * thickness)
        dofs = np.empty(2 * k, dtype=np.int64)
        dofs[0::2], dofs[1::2] = 2 * conn, 2 * conn + 1
        rows.append(np.repeat(dofs, 2 * k)); cols.append(np.tile(dofs, 2 * k)); vals.append(Ke.ravel())
    n = 2 * mesh.nnodes
    return sp.coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(n, n)).tocsr()


def vector_stiffness(mesh, block, rule, analysis, thickness, material):
    from toolkit.core.assembly import assemble_csr, default_threads
    Ke = element_stiffness(mesh, block, rule, analysis, thickness, {0: material})
    m, k = block.cells.shape
    d = np.empty((m, 2 * k), dtype=np.int32)
    d[:, 0::2], d[:, 1::2] = 2 * block.cells, 2 * block.cells + 1
    return assemble_csr([d], [Ke.reshape(m, -1)], 2 * mesh.nnodes, threads=default_threads(2 * mesh.nnodes))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--sizes", type=float, nargs="+", help="target degrees of freedom")
    ap.add_argument("--large", action="store_true", help="sizes up to about 1e6 dof")
    ap.add_argument("--models", nargs="+", help="subset of models")
    args = ap.parse_args(argv)
    sizes = args.sizes or ([1e4, 3e4, 1e5, 3e5, 1e6] if args.large else [1e4, 3e4, 1e5])
    mk = makers()
    names = args.models or list(mk)
    print(f"{'model':16s} {'dof':>9s} {'cells':>8s} {'mesh s':>7s} {'assembly':>9s} {'factor':>8s} {'pivots':>7s} "
          f"{'solve':>7s} {'stress':>7s} {'total s':>8s}  shares asm/fact/stress")
    for name in names:
        make = mk[name]
        for target in sizes:
            h, p = size_for(make, target)
            t0 = time.perf_counter()
            m = make(h)
            if abs(2 * m.mesh.nnodes / target - 1) > 0.2:          # one correction step
                h *= (2 * m.mesh.nnodes / target) ** (1 / p)
                t0 = time.perf_counter()
                m = make(h)
            tm = time.perf_counter() - t0
            s = solve(m)
            i = s.info
            tot = i["time_total"]
            print(f"{name:16s} {i['ndof']:9d} {i['ncells']:8d} {tm:7.2f} {i['time_assembly']:9.2f} "
                  f"{i['time_factorisation']:8.2f} {i['time_pivot_check']:7.2f} {i['time_solve']:7.2f} {i['time_recovery']:7.2f} {tot:8.2f}  "
                  f"{i['time_assembly'] / tot:4.0%} / {i['time_factorisation'] / tot:4.0%} / "
                  f"{i['time_recovery'] / tot:4.0%}", flush=True)

    # vectorised against a per-element loop at a small size (best of 3, each
    # on a freshly built model so that no geometry is cached)
    tv, tl = np.inf, np.inf
    for _ in range(3):
        m = mk["plate_with_hole"](0.05)
        b = m.mesh.blocks[0]
        t0 = time.perf_counter()
        Kv = vector_stiffness(m.mesh, b, "full", "plane_stress", 1.0, m.material)
        tv = min(tv, time.perf_counter() - t0)
        t0 = time.perf_counter()
        Kl = loop_stiffness(m.mesh, b, "full", "plane_stress", 1.0, m.material)
        tl = min(tl, time.perf_counter() - t0)
    diff = abs(Kv - Kl).max() / abs(Kl).max()
    print(f"\nstiffness assembly, {len(b)} {b.name} cells ({2 * m.mesh.nnodes} dof): vectorised {tv * 1e3:.1f} ms, "
          f"per-element loop {tl * 1e3:.1f} ms, ratio {tl / tv:.0f}x (max relative difference {diff:.1e})")


if __name__ == "__main__":
    main()
