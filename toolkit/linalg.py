"""Sparse assembly and block conjugate gradients, shared by the projection
(:mod:`toolkit.recovery`) and the solver (:mod:`toolkit.solve`).

* :class:`Pattern` — the CSR sparsity of ``Σ_e R_e^T K_e R_e`` for the cells'
  unknowns, and the plan that sums every element entry into it.  Built once
  (two counting sorts in scipy's C code, no global sort), it assembles any
  number of matrices on that pattern with one ``np.bincount`` each: the
  projector assembles the mass matrix and its preconditioner from one plan.
* :func:`block_cg` — preconditioned conjugate gradients for many right-hand
  sides at once, threaded over row blocks.
"""
from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import scipy.sparse as sp

__all__ = ["Pattern", "assemble_csr", "row_parts", "row_slice", "default_threads", "block_cg", "CGLayout"]


def _index_type(*sizes):
    return np.int32 if max(sizes) < 2**31 - 1 else np.int64


class Pattern:
    """Sparsity of an assembled matrix and the plan that fills it.

    Parameters
    ----------
    cell_dofs : list of (m_j, k_j) integer arrays, the unknowns of each cell
        of each block (rows of the element matrices, in order).
    ndof : number of unknowns (rows and columns).

    Element entry ``(c, a, b)`` of block ``j`` (row ``cell_dofs[j][c, a]``,
    column ``cell_dofs[j][c, b]``) is summed into non-zero ``plan[j][c, a*k+b]``
    of the CSR arrays ``indptr``, ``indices`` (sorted within rows).

    How: a counting sort of the (cell, local node) slots by their row (a CSC
    to CSR conversion, linear time), each slot expanded to its k entries,
    then a per-row sort by column (scipy's ``sort_indices``) carrying the
    entry numbers along; equal neighbours are one non-zero.
    """

    def __init__(self, cell_dofs, ndof: int):
        cell_dofs = [np.asarray(d) for d in cell_dofs]
        self.ndof = int(ndof)
        self.shapes = [d.shape for d in cell_dofs]
        widths = np.array([d.shape[1] for d in cell_dofs])
        nslots = np.array([d.size for d in cell_dofs])
        nentries = nslots * widths
        total = int(nentries.sum())
        it = _index_type(total, self.ndof)
        slot_row = np.concatenate([d.ravel() for d in cell_dofs]).astype(it, copy=False)
        S = sp.csc_matrix((np.ones(slot_row.size, dtype=np.int8), slot_row,
                           np.arange(slot_row.size + 1, dtype=it)), shape=(self.ndof, slot_row.size))
        by_row = S.tocsr()                                 # counting sort: slots grouped by row
        del S
        order = by_row.indices.astype(it, copy=False)      # slot numbers, row by row
        slot_counts = np.diff(by_row.indptr)
        del by_row, slot_row
        if len(cell_dofs) == 1:
            d = cell_dofs[0]
            k = d.shape[1]
            ids = np.empty((len(order), k), dtype=it)
            np.add((order * it(k))[:, None], np.arange(k, dtype=it), out=ids)
            ids = ids.reshape(-1)
            cols = np.take(d, order // k, axis=0).ravel().astype(it, copy=False)
            counts = slot_counts * k
        else:
            # slot s of block j starts at entry offset_j + (s - slot_offset_j) * k_j
            slot_off = np.r_[0, np.cumsum(nslots)]
            ent_off = np.r_[0, np.cumsum(nentries)]
            width = np.repeat(widths, nslots).astype(it)
            start = np.concatenate([ent_off[j] + np.arange(nslots[j], dtype=np.int64) * widths[j]
                                    for j in range(len(cell_dofs))]).astype(it)
            w = width[order]
            first = np.cumsum(w) - w
            ids = np.repeat(start[order], w) + (np.arange(total, dtype=it) - np.repeat(first.astype(it), w))
            cols_all = np.concatenate([np.tile(d, (1, d.shape[1])).ravel() for d in cell_dofs]).astype(it)
            cols = cols_all[ids]
            del cols_all, width, start, first
            counts = np.bincount(np.repeat(np.arange(self.ndof), slot_counts), weights=w,
                                 minlength=self.ndof).astype(it)
        del order
        indptr = np.zeros(self.ndof + 1, dtype=it)
        np.cumsum(counts, out=indptr[1:])
        T = sp.csr_matrix((ids, cols, indptr), shape=(self.ndof, self.ndof))
        T.has_sorted_indices = False
        T.sort_indices()                                   # per row, by column, ids carried along
        cols, ids = T.indices, T.data
        new = np.empty(total, dtype=bool)
        new[0] = True
        np.not_equal(cols[1:], cols[:-1], out=new[1:])
        new[indptr[:-1][counts > 0]] = True                # every row starts a new non-zero
        self.indices = cols[new]
        cum = np.zeros(total + 1, dtype=it)
        np.cumsum(new, dtype=it, out=cum[1:])
        del new
        self.indptr = cum[indptr]
        pos = cum[1:]
        pos -= 1
        plan = np.empty(total, dtype=it)
        plan[ids] = pos
        self.plan = plan
        self.offsets = np.r_[0, np.cumsum(nentries)]
        self.nnz = len(self.indices)

    def data(self, element_matrices) -> np.ndarray:
        """Non-zero values of ``Σ_e R_e^T K_e R_e`` for element matrices
        (one (m_j, k_j*k_j) or (m_j, k_j, k_j) array per block)."""
        vals = [np.asarray(K, dtype=float).reshape(-1) for K in element_matrices]
        for v, (m, k), lo, hi in zip(vals, self.shapes, self.offsets[:-1], self.offsets[1:]):
            if v.size != hi - lo:
                raise ValueError(f"element matrices of shape ({m}, {k}, {k}) expected, got {v.size} values")
        w = vals[0] if len(vals) == 1 else np.concatenate(vals)
        return np.bincount(self.plan, weights=w, minlength=self.nnz)

    def matrix(self, element_matrices) -> sp.csr_matrix:
        """The assembled CSR matrix (sorted indices, no duplicates)."""
        A = sp.csr_matrix((self.data(element_matrices), self.indices, self.indptr), shape=(self.ndof, self.ndof))
        A.has_sorted_indices = True
        return A

    def rows(self) -> np.ndarray:
        """Row number of every non-zero."""
        return np.repeat(np.arange(self.ndof, dtype=self.indices.dtype), np.diff(self.indptr))


def assemble_csr(cell_dofs, element_matrices, ndof) -> sp.csr_matrix:
    """Assemble element matrices (one (m, k*k) array per block) into CSR."""
    return Pattern(cell_dofs, ndof).matrix(element_matrices)


# ---------------------------------------------------------------------------
# Block conjugate gradients
# ---------------------------------------------------------------------------
CHUNK_ROWS = 65536          # rows per chunk (measured: 65536 beat 4096 and 16384 by 5-20 % at 100k-1M rows)


def row_slice(A, lo: int, hi: int) -> sp.csr_matrix:
    """Rows ``lo:hi`` of CSR matrix ``A`` as a CSR matrix that shares A's
    index and value arrays (``A[lo:hi]`` copies them)."""
    s, e = int(A.indptr[lo]), int(A.indptr[hi])
    B = sp.csr_matrix((hi - lo, A.shape[1]), dtype=A.dtype)
    # assigned, not passed to the constructor: its prune() copies arrays that view a larger one
    B.data, B.indices, B.indptr = A.data[s:e], A.indices[s:e], A.indptr[lo:hi + 1] - A.indptr[lo]
    B.has_sorted_indices = A.has_sorted_indices
    return B


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


def default_threads(n: int) -> int:
    """Threads for the conjugate-gradient loop: one for small systems, else
    the machine's cores (scipy's sparse products and numpy's element-wise
    operations release the GIL), at most 4."""
    return 1 if n < 50_000 else max(1, min(4, os.cpu_count() or 1))


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


def _colsum(t, rows, c):
    """Column sums of a flat (rows*c,) chunk, with long inner loops."""
    main = rows - rows % 64
    s = t[:main * c].reshape(-1, 64 * c).sum(axis=0).reshape(64, c).sum(axis=0) if main else np.zeros(c)
    if main < rows:
        s = s + t[main * c:].reshape(-1, c).sum(axis=0)
    return s


def block_cg(A, B, precond, x0=None, rtol=1e-10, maxiter=None, threads=1, layout=None):
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

    Returns ``X (n, columns), iterations (per column), relative residuals``.
    Raises ``RuntimeError`` if a column has not converged after ``maxiter``.
    """
    B = np.asarray(B, dtype=float)
    single = B.ndim == 1
    B = np.ascontiguousarray(B.reshape(len(B), -1))
    n, c = B.shape
    maxiter = maxiter or max(200, 10 * int(np.sqrt(n)))
    if layout is None:
        layout = CGLayout(A, precond if sp.issparse(precond) else np.asarray(precond, dtype=float), threads)
    L = layout.chunk_rows

    X = np.zeros_like(B) if x0 is None else np.array(np.asarray(x0, dtype=float).reshape(n, c), order="C")
    R, Z, P, Q = (np.empty_like(B) for _ in range(4))
    Bf, Xf, Rf, Zf, Pf, Qf = (a.reshape(-1) for a in (B, X, R, Z, P, Q))

    def tiled(v):
        return np.tile(np.asarray(v, dtype=float), L)

    def start(chunks):
        s = np.zeros((2, c))
        t = np.empty(L * c)
        for lo, hi, Ac, _ in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            r, tt = Rf[f], t[:rows * c]
            if x0 is None:
                r[:] = Bf[f]
            else:
                np.subtract(Bf[f], (Ac @ X).reshape(-1), out=r)
            s[0] += _colsum(np.multiply(r, r, out=tt), rows, c)
            s[1] += _colsum(np.multiply(Bf[f], Bf[f], out=tt), rows, c)
        return s

    def precondition(chunks):
        s = np.zeros(c)
        t = np.empty(L * c)
        for lo, hi, _, Pc in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            z = Zf[f]
            if layout.diagonal:
                np.multiply(R[lo:hi], Pc[:, None], out=Z[lo:hi])
            else:
                z[:] = (Pc @ R).reshape(-1)
            s += _colsum(np.multiply(Rf[f], z, out=t[:rows * c]), rows, c)
        return s

    def first_direction(chunks):
        for lo, hi, _, _ in chunks:
            Pf[lo * c:hi * c] = Zf[lo * c:hi * c]

    def product(chunks):
        s = np.zeros(c)
        t = np.empty(L * c)
        for lo, hi, Ac, _ in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            q = Qf[f]
            q[:] = (Ac @ P).reshape(-1)
            s += _colsum(np.multiply(Pf[f], q, out=t[:rows * c]), rows, c)
        return s

    def update(chunks, at):
        s = np.zeros(c)
        t = np.empty(L * c)
        for lo, hi, _, _ in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            tt, a = t[:rows * c], at[:rows * c]
            x, r = Xf[f], Rf[f]
            x += np.multiply(Pf[f], a, out=tt)
            r -= np.multiply(Qf[f], a, out=tt)
            s += _colsum(np.multiply(r, r, out=tt), rows, c)
        return s

    def direction(chunks, bt):
        for lo, hi, _, _ in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            p = Pf[f]
            np.multiply(p, bt[:rows * c], out=p)
            p += Zf[f]

    parts = layout.threads
    pool = ThreadPoolExecutor(len(parts)) if len(parts) > 1 else None

    def run(fn, *args):
        if pool is None:
            return [fn(parts[0], *args)]
        return list(pool.map(lambda ch: fn(ch, *args), parts))

    try:
        rr, bb = np.sum(run(start), axis=0)
        bnorm = np.sqrt(bb)
        target = rtol * bnorm
        rnorm = np.sqrt(rr)
        done = rnorm <= target
        iters = np.zeros(c, dtype=int)
        if not done.all():
            rz = np.sum(run(precondition), axis=0)
            run(first_direction)
        for _ in range(maxiter):
            if done.all():
                break
            pq = np.sum(run(product), axis=0)
            alpha = np.where(done, 0.0, rz / np.where(pq == 0, 1.0, pq))
            rr = np.sum(run(update, tiled(alpha)), axis=0)
            rnorm = np.sqrt(rr)
            iters[~done] += 1
            done = done | (rnorm <= target)
            if done.all():
                break
            rz_new = np.sum(run(precondition), axis=0)
            beta = np.where(done, 0.0, rz_new / np.where(rz == 0, 1.0, rz))
            rz = rz_new
            run(direction, tiled(beta))
    finally:
        if pool is not None:
            pool.shutdown()
    if not done.all():
        bad = np.flatnonzero(~done)
        raise RuntimeError(f"conjugate gradients did not reach rtol={rtol:g} in {maxiter} iterations for "
                           f"column(s) {bad.tolist()} (relative residual "
                           f"{(rnorm[bad] / np.where(bnorm[bad] == 0, 1, bnorm[bad])).max():.3g})")
    rel = rnorm / np.where(bnorm == 0, 1.0, bnorm)
    return (X[:, 0] if single else X), iters, rel
