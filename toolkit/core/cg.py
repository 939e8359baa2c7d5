"""Block conjugate gradients: :func:`block_cg` solves a symmetric positive
definite sparse system for many right-hand sides at once, preconditioned by
a diagonal or a sparse matrix, threaded over row blocks and cache-sized
chunks (:class:`CGLayout`), with the row views of a CSR matrix it needs
(:func:`row_slice`, :func:`row_parts`).
"""
from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numpy as np
import scipy.sparse as sp

from toolkit.core.assembly import csr_sharing

__all__ = ["block_cg", "CGLayout", "row_parts", "row_slice"]

CHUNK_ROWS = 65536          # rows per chunk (measured: 65536 beat 4096 and 16384 by 5-20 % at 100k-1M rows)


# ---------------------------------------------------------------------------
# Row blocks of a CSR matrix
# ---------------------------------------------------------------------------
def row_slice(A, lo: int, hi: int) -> sp.csr_matrix:
    """Rows ``lo:hi`` of CSR matrix ``A`` as a CSR matrix that shares A's
    index and value arrays (``A[lo:hi]`` copies them)."""
    s, e = int(A.indptr[lo]), int(A.indptr[hi])
    return csr_sharing(A.data[s:e], A.indices[s:e], A.indptr[lo:hi + 1] - A.indptr[lo], (hi - lo, A.shape[1]),
                       A.has_sorted_indices)


def row_parts(A, parts: int, *others):
    """Split CSR matrix ``A`` (and CSR matrices or vectors ``others`` with the
    same rows) into ``parts`` contiguous row blocks of about equal
    non-zeros: ``[(row slice, A block, other blocks...), ...]``.  The
    blocks are views (:func:`row_slice`), not copies."""
    n = A.shape[0]
    if parts <= 1 or n < 2 * parts:
        edges = np.array([0, n])
    else:
        cuts = np.searchsorted(A.indptr, np.linspace(0, A.nnz, parts + 1)[1:-1])
        edges = np.unique(np.r_[0, cuts, n])
    out = []
    for lo, hi in zip(edges[:-1].tolist(), edges[1:].tolist()):
        blocks = [row_slice(o, lo, hi) if sp.issparse(o) else o[lo:hi] for o in (A,) + others]
        out.append((slice(lo, hi), *blocks))
    return out


class CGLayout:
    """How :func:`block_cg` splits the rows: one contiguous block of about
    equal non-zeros per thread, each cut into chunks of at most
    ``chunk_rows`` rows.  Every phase of an iteration walks a thread's
    chunks and does all of that phase's work on a chunk while it is in
    cache (a product row block, then the dot products on it; both vector
    updates and the residual norm), so each vector crosses the memory bus
    about once per phase instead of once per operation.  Built once per
    matrix (the row slices of the matrix and preconditioner are kept)."""

    def __init__(self, A, precond, threads=1, chunk_rows=CHUNK_ROWS):
        self.n = A.shape[0]
        self.diagonal = not sp.issparse(precond)
        self.threads = []
        for sl, _, _ in row_parts(A, threads, precond):
            chunks = []
            for lo in range(sl.start, sl.stop, chunk_rows):
                hi = min(lo + chunk_rows, sl.stop)
                chunks.append((lo, hi, row_slice(A, lo, hi),
                               row_slice(precond, lo, hi) if sp.issparse(precond) else precond[lo:hi]))
            self.threads.append(chunks)
        self.chunk_rows = chunk_rows


# ---------------------------------------------------------------------------
# Block conjugate gradients
# ---------------------------------------------------------------------------
def block_cg(A, B, precond, x0=None, rtol=1e-10, maxiter=None, threads=1, layout=None, overwrite_x0=False,
             overwrite_b=False):
    """Preconditioned conjugate gradients for every column of ``B`` at once
    (each column keeps its own step lengths; the matrices are shared).
    Stops each column when ``||b - A x|| <= rtol ||b||``.

    ``precond`` is either a vector ``d`` (Jacobi-type: ``z = d * r``) or a
    symmetric positive definite sparse matrix ``P`` with A's shape
    (``z = P r``).  The columns stay together in (n, columns) arrays, so each
    sparse product reads the matrix once for all of them; the work is split
    over ``threads`` row blocks and cache-sized chunks (see
    :class:`CGLayout`; pass ``layout`` to reuse one).  Step lengths come
    from the summed partial dot products, so the iterates equal the
    single-thread ones up to rounding.

    ``overwrite_x0`` lets the iteration run in ``x0`` itself and
    ``overwrite_b`` keeps the residual in ``B`` (each saves an (n, columns)
    array of fresh memory).

    Returns ``X (n, columns), iterations (per column), relative residuals``.
    Raises ``RuntimeError`` if a column has not converged after ``maxiter``.
    """
    B = np.asarray(B, dtype=float)
    single = B.ndim == 1
    B = np.ascontiguousarray(B.reshape(len(B), -1))
    n = B.shape[0]
    maxiter = maxiter or max(200, 10 * int(np.sqrt(n)))
    if layout is None:
        layout = CGLayout(A, precond if sp.issparse(precond) else np.asarray(precond, dtype=float), threads)
    phases = _CGPhases(layout, B, x0, overwrite_x0, overwrite_b)
    with _PerThread(layout.threads) as run:
        done, iters, rnorm, bnorm = _iterate(phases, run, rtol, maxiter)
    if not done.all():
        bad = np.flatnonzero(~done)
        raise RuntimeError(f"conjugate gradients did not reach rtol={rtol:g} in {maxiter} iterations for "
                           f"column(s) {bad.tolist()} (relative residual "
                           f"{(rnorm[bad] / np.where(bnorm[bad] == 0, 1, bnorm[bad])).max():.3g})")
    rel = rnorm / np.where(bnorm == 0, 1.0, bnorm)
    X = phases.X
    return (X[:, 0] if single else X), iters, rel


def _iterate(ph, run, rtol, maxiter):
    """The iteration: the starting residual, then per step the product
    phase (q = A p), the update phase (x, r and, with a diagonal
    preconditioner, z), the convergence test, the preconditioning phase
    (z = P r, sparse preconditioner) and the new directions.  Returns
    ``done, iterations, ||r||, ||b||`` per column."""
    rr, bb = np.sum(run(ph.start), axis=0)
    bnorm = np.sqrt(bb)
    target = rtol * bnorm
    rnorm = np.sqrt(rr)
    done = rnorm <= target
    iters = np.zeros(ph.c, dtype=int)
    if not done.all():
        rz = np.sum(run(ph.precondition), axis=0)
        run(ph.first_direction)
    for _ in range(maxiter):
        if done.all():
            break
        pq = np.sum(run(ph.product), axis=0)
        alpha = np.where(done, 0.0, rz / np.where(pq == 0, 1.0, pq))
        rr, rz_new = np.sum(run(ph.update, ph.tiled(alpha)), axis=0)
        # convergence test, column by column
        rnorm = np.sqrt(rr)
        iters[~done] += 1
        done = done | (rnorm <= target)
        if done.all():
            break
        if not ph.diagonal:
            rz_new = np.sum(run(ph.precondition), axis=0)
        beta = np.where(done, 0.0, rz_new / np.where(rz == 0, 1.0, rz))
        rz = rz_new
        run(ph.direction, ph.tiled(beta))
    return done, iters, rnorm, bnorm


class _PerThread:
    """Runs a phase on every thread's chunks, on a pool when there are
    several threads; ``with`` shuts the pool down."""

    def __init__(self, parts):
        self.parts = parts
        self.pool = ThreadPoolExecutor(len(parts)) if len(parts) > 1 else None

    def __call__(self, fn, *args):
        if self.pool is None:
            return [fn(self.parts[0], *args)]
        return list(self.pool.map(lambda ch: fn(ch, *args), self.parts))

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        if self.pool is not None:
            self.pool.shutdown()


def _colsum(t, rows, c):
    """Column sums of a flat (rows*c,) chunk, with long inner loops."""
    main = rows - rows % 64
    s = t[:main * c].reshape(-1, 64 * c).sum(axis=0).reshape(64, c).sum(axis=0) if main else np.zeros(c)
    if main < rows:
        s = s + t[main * c:].reshape(-1, c).sum(axis=0)
    return s


class _CGPhases:
    """The arrays of one block-CG run and the phases of an iteration, each
    over one thread's chunks (see :class:`CGLayout`) and returning that
    thread's partial column dot products.

    ``X`` the iterate (``x0``'s own array with ``overwrite_x0``), ``R`` the
    residual (``B``'s array with ``overwrite_b``), ``P`` the directions;
    ``z = P r`` lives in ``Q`` from the preconditioning to the next
    direction, ``q = A p`` after it.  The ``...f`` names are flat views."""

    def __init__(self, layout, B, x0, overwrite_x0, overwrite_b):
        n, c = B.shape
        self.layout, self.c, self.L, self.diagonal = layout, c, layout.chunk_rows, layout.diagonal
        self.zero_start = x0 is None
        if x0 is None:
            X = np.zeros_like(B)
        elif overwrite_x0 and isinstance(x0, np.ndarray) and x0.dtype == float and x0.flags.c_contiguous:
            X = x0.reshape(n, c)                             # iterate in the caller's array
        else:
            X = np.array(np.asarray(x0, dtype=float).reshape(n, c), order="C")
        own_b = overwrite_b and isinstance(B, np.ndarray) and B.dtype == float and B.flags.c_contiguous
        R = B if own_b else np.empty_like(B)
        P, Q = np.empty_like(B), np.empty_like(B)
        Z = Q            # z = P r lives from the preconditioning to the next direction; q = A p after it
        self.B, self.X, self.R, self.Z, self.P, self.Q = B, X, R, Z, P, Q
        self.Bf, self.Xf, self.Rf, self.Zf, self.Pf, self.Qf = (a.reshape(-1) for a in (B, X, R, Z, P, Q))

    def tiled(self, v):
        """Per-column factors repeated over a chunk's rows (flat)."""
        return np.tile(np.asarray(v, dtype=float), self.L)

    def start(self, chunks):
        """r = b - A x0 (or b), and the column sums r.r and b.b."""
        c, Bf, Rf, X = self.c, self.Bf, self.Rf, self.X
        s = np.zeros((2, c))
        t = np.empty(self.L * c)
        for lo, hi, Ac, _ in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            r, tt = Rf[f], t[:rows * c]
            s[1] += _colsum(np.multiply(Bf[f], Bf[f], out=tt), rows, c)      # before r may overwrite b
            if self.zero_start:
                r[:] = Bf[f]
            else:
                np.subtract(Bf[f], (Ac @ X).reshape(-1), out=r)
            s[0] += _colsum(np.multiply(r, r, out=tt), rows, c)
        return s

    def _apply_and_dot(self, chunks, with_precond, V, Of, Df):
        """Of = (P or A) @ V chunk by chunk, and the column dots of Df with it."""
        c, diagonal = self.c, self.diagonal
        s = np.zeros(c)
        t = np.empty(self.L * c)
        for lo, hi, Ac, Pc in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            o = Of[f]
            if with_precond and diagonal:
                np.multiply(V[lo:hi], Pc[:, None], out=o.reshape(rows, c))
            else:
                o[:] = ((Pc if with_precond else Ac) @ V).reshape(-1)
            s += _colsum(np.multiply(Df[f], o, out=t[:rows * c]), rows, c)
        return s

    def precondition(self, chunks):
        """The preconditioning phase: z = P r, and r.z."""
        return self._apply_and_dot(chunks, True, self.R, self.Zf, self.Rf)

    def first_direction(self, chunks):
        """p = z."""
        c, Pf, Zf = self.c, self.Pf, self.Zf
        for lo, hi, _, _ in chunks:
            Pf[lo * c:hi * c] = Zf[lo * c:hi * c]

    def product(self, chunks):
        """The product phase: q = A p, and p.q."""
        return self._apply_and_dot(chunks, False, self.P, self.Qf, self.Pf)

    def update(self, chunks, at):
        """The update phase: x += a p, r -= a q, and r.r; with a diagonal
        preconditioner also z = d r and r.z on the same chunk while it is in
        cache (z takes q's place, which this chunk no longer needs)."""
        c, diagonal = self.c, self.diagonal
        Xf, Rf, Pf, Qf, R, Z = self.Xf, self.Rf, self.Pf, self.Qf, self.R, self.Z
        s = np.zeros((2, c))
        t = np.empty(self.L * c)
        for lo, hi, _, Pc in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            tt, a = t[:rows * c], at[:rows * c]
            x, r = Xf[f], Rf[f]
            x += np.multiply(Pf[f], a, out=tt)
            r -= np.multiply(Qf[f], a, out=tt)
            s[0] += _colsum(np.multiply(r, r, out=tt), rows, c)
            if diagonal:
                z = np.multiply(R[lo:hi], Pc[:, None], out=Z[lo:hi])
                s[1] += _colsum(np.multiply(r, z.reshape(-1), out=tt), rows, c)
        return s

    def direction(self, chunks, bt):
        """The new directions: p = z + b p."""
        c, Pf, Zf = self.c, self.Pf, self.Zf
        for lo, hi, _, _ in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            p = Pf[f]
            np.multiply(p, bt[:rows * c], out=p)
            p += Zf[f]
