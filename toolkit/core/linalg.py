"""Sparse assembly and block conjugate gradients, shared by the projection
(:mod:`toolkit.recovery`) and the solver (:mod:`toolkit.solve`).

* :func:`assemble_many` — ``Σ_e R_e^T K_e R_e`` for several matrices on the
  same pattern in one pass (a counting sort of the cells' slots by row, then
  chunks of rows sorted and summed, on several threads), no global sort and
  no entry-sized temporaries: the projector assembles the mass matrix and its
  preconditioner together; the solver assembles its stiffness matrix.
* :func:`block_cg` — preconditioned conjugate gradients for many right-hand
  sides at once, threaded over row blocks.
"""
from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import scipy.sparse as sp

__all__ = ["assemble_many", "Scaled", "QuadratureSum", "assemble_csr", "sum_to_unknowns", "per_cell", "row_parts", "row_slice", "default_threads", "block_cg", "CGLayout"]


def _index_type(*sizes):
    return np.int32 if max(sizes) < 2**31 - 1 else np.int64


ASSEMBLY_ROWS = 65536       # rows per assembly chunk: its temporaries stay small and are reused


class Scaled:
    """Element matrices in factored form ``K_e[a, b] = s[d_a] w[e] K[a, b] s[d_b]``:
    one reference matrix K (k, k), a factor w (m,) per cell and, optionally,
    a factor s (ndof,) per unknown (``d_a`` the cell's unknowns), so that
    :func:`assemble_many` never stores the m*k*k values."""

    def __init__(self, w, K, s=None):
        self.w = np.ascontiguousarray(w, dtype=float).reshape(-1)
        self.K = np.ascontiguousarray(K, dtype=float)
        self.s = None if s is None else np.ascontiguousarray(s, dtype=float)
        k = self.K.shape[0]
        if self.K.shape != (k, k):
            raise ValueError(f"Scaled: reference matrix must be square, got {self.K.shape}")
        self.k = k
        self.size = len(self.w) * k * k

    def gather(self, ent, cell_dofs):
        """Values of entries ``ent`` (numbered c*k*k + a*k + b) of cells
        ``cell_dofs`` (m, k)."""
        k = self.K.shape[0]
        c, ab = np.divmod(ent, k * k)
        v = self.w[c] * self.K.reshape(-1)[ab]
        if self.s is not None:
            a, b = np.divmod(ab, k)
            v *= self.s[cell_dofs[c, a]] * self.s[cell_dofs[c, b]]
        return v

    def diagonal(self) -> np.ndarray:
        """(m, k) diagonal entries of every cell's matrix, without the
        per-unknown factor s."""
        return np.outer(self.w, np.diag(self.K))


class QuadratureSum:
    """Element matrices as sums over integration points,
    ``K_e[a, b] = Σ_q w[e, q] N[q, a] N[q, b]`` (a mass matrix: w = det J
    times the rule's weights), evaluated inside :func:`assemble_many` one
    row of a cell at a time (a small matrix product), so that the m*k*k
    values are never stored."""

    def __init__(self, w, N):
        self.w = np.ascontiguousarray(w, dtype=float)              # (m, q)
        self.N = np.ascontiguousarray(N, dtype=float)              # (q, k)
        if self.w.shape[1] != self.N.shape[0]:
            raise ValueError(f"QuadratureSum: {self.w.shape[1]} weights per cell but {self.N.shape[0]} points")
        self.k = self.N.shape[1]
        self.size = len(self.w) * self.k ** 2

    def rows(self, cells, local, blas=True):
        """Rows ``local`` of cells ``cells``' matrices: (len(cells), k).
        ``blas=False`` keeps the small product out of BLAS (einsum's own
        loop): about 3x slower alone, but BLAS's threads fight with the
        caller's own threads, which costs more (measured at 1M cells)."""
        wn = self.w[cells] * self.N.T[local]
        return wn @ self.N if blas else np.einsum("sq,qb->sb", wn, self.N)

    def diagonal(self) -> np.ndarray:
        """(m, k) diagonal entries of every cell's matrix."""
        return self.w @ (self.N * self.N)

    def measures(self) -> np.ndarray:
        """(m,) the sum of each cell's weights (its measure, for a mass matrix)."""
        return self.w @ np.ones(self.w.shape[1])

    def gather(self, ent, cell_dofs=None):
        k = self.N.shape[1]
        c, ab = np.divmod(ent, k * k)
        a, b = np.divmod(ab, k)
        return np.einsum("eq,eq,eq->e", self.w[c], self.N.T[a], self.N.T[b])


def assemble_many(cell_dofs, element_values, ndof: int, chunk_rows: int = ASSEMBLY_ROWS, threads: int = 1):
    """Assemble several matrices that share their pattern, ``Σ_e R_e^T K_e R_e``.

    Parameters
    ----------
    cell_dofs : list over blocks of (m_j, k_j) integer arrays, the unknowns
        of each cell (rows of its element matrices, in order).
    element_values : list over matrices of lists over blocks of element
        matrices, each (m_j, k_j*k_j) or (m_j, k_j, k_j), or a factored form
        (:class:`Scaled`, :class:`QuadratureSum`).
    ndof : number of unknowns (rows and columns).
    chunk_rows : rows per chunk.
    threads : chunks computed in parallel (numpy and scipy release the GIL
        in the heavy steps), then copied into place in order.

    Returns one CSR matrix per entry of ``element_values`` (sorted indices,
    no duplicates; the matrices share one ``indices`` and ``indptr``).

    How: a counting sort groups the (cell, local node) slots by their row
    (scipy's CSC to CSR conversion, linear time).  Then, chunk by chunk of
    rows, each slot is expanded to its k entries, whose values are formed
    in that order, and scipy's ``sum_duplicates`` sorts them by column
    within their rows and sums equal columns, in C, one matrix after the
    other (every matrix gets the same pattern).  With ``threads`` the chunks
    are formed in parallel and copied into place in order.  Only the chunks'
    temporaries are ever allocated, so the memory touched is little more
    than the results (fresh memory is slow to come by on some machines: it
    was the largest cost at 1M cells).  Carrying the entry numbers through
    one sort and summing with ``np.add.reduceat`` instead was 1.6x slower.
    """
    cell_dofs = [np.asarray(d) for d in cell_dofs]
    ndof = int(ndof)
    nmat = len(element_values)
    widths = np.array([d.shape[1] for d in cell_dofs], dtype=np.int64)
    nslots = np.array([d.size for d in cell_dofs], dtype=np.int64)
    nentries = nslots * widths
    total = int(nentries.sum())
    it = _index_type(total, ndof)
    ent_off = np.r_[0, np.cumsum(nentries)]
    values = []                                          # per matrix: entry numbers -> values
    for j, blocks in enumerate(element_values):
        if len(blocks) != len(cell_dofs):
            raise ValueError(f"matrix {j}: {len(cell_dofs)} blocks of element matrices expected, got {len(blocks)}")
        v = [K if isinstance(K, (Scaled, QuadratureSum)) else np.asarray(K, dtype=float).reshape(-1)
             for K in blocks]
        for vb, d in zip(v, cell_dofs):
            if isinstance(vb, (Scaled, QuadratureSum)) and vb.k != d.shape[1]:
                raise ValueError(f"matrix {j}: reference matrix of shape ({d.shape[1]}, {d.shape[1]}) expected, "
                                 f"got ({vb.k}, {vb.k})")
            if vb.size != d.size * d.shape[1]:
                m, k = d.shape
                raise ValueError(f"matrix {j}: element matrices of shape ({m}, {k}, {k}) expected, "
                                 f"got {vb.size} values")
        values.append(v[0] if len(v) == 1 else _gatherer(v, ent_off, cell_dofs))
    flat_dofs = cell_dofs[0].ravel() if len(cell_dofs) == 1 else np.concatenate([d.ravel() for d in cell_dofs])
    flat_dofs = flat_dofs.astype(it, copy=False)
    S = sp.csc_matrix((np.ones(flat_dofs.size, dtype=np.int8), flat_dofs,
                       np.arange(flat_dofs.size + 1, dtype=it)), shape=(ndof, flat_dofs.size))
    by_row = S.tocsr()                                   # counting sort: slots grouped by row
    del S
    order, slot_ptr = by_row.indices.astype(it, copy=False), by_row.indptr
    del by_row
    single = len(cell_dofs) == 1
    if not single:
        # per slot: its entry numbers start, its cell's first slot, its width
        slot_block = np.repeat(np.arange(len(cell_dofs)), nslots)
        slot_off = np.r_[0, np.cumsum(nslots)]
        local = np.arange(flat_dofs.size, dtype=np.int64) - slot_off[slot_block]
        w_s = widths[slot_block]
        start_s = (ent_off[slot_block] + local * w_s).astype(np.int64)
        cell_s = (slot_off[slot_block] + (local // w_s) * w_s).astype(np.int64)
        del slot_block, local
    k0 = int(widths[0])

    def chunk(r0, r1):
        """The non-zeros of rows r0:r1: their columns, their count per row
        and their values in every matrix."""
        sl = order[slot_ptr[r0]:slot_ptr[r1]]
        if single:
            within = np.arange(k0, dtype=it)
            cell = sl // it(k0)
            cell_first = cell * it(k0)                     # the cell's first slot
            src = (cell_first[:, None] + within).ravel()
            row_counts = np.diff(slot_ptr[r0:r1 + 1]) * k0
        else:
            sl = sl.astype(np.int64)
            w = w_s[sl]
            first = np.cumsum(w) - w
            within = np.arange(int(w.sum()), dtype=np.int64) - np.repeat(first, w)
            ids = np.repeat(start_s[sl], w) + within
            src = np.repeat(cell_s[sl], w) + within
            slot_rows = np.repeat(np.arange(r1 - r0), np.diff(slot_ptr[r0:r1 + 1]))
            row_counts = np.bincount(slot_rows, weights=w, minlength=r1 - r0).astype(np.int64)
        ptr = np.zeros(r1 - r0 + 1, dtype=it)
        np.cumsum(row_counts, out=ptr[1:])
        if ptr[-1] == 0:
            return np.empty(0, dtype=it), np.zeros(r1 - r0, dtype=np.int64), [np.empty(0)] * nmat
        cols = flat_dofs[src]
        ucols = per_row = None
        out = []
        for j, v in enumerate(values):
            # the entries in slot order, then sorted by column and summed per row in C (scipy's sum_duplicates)
            if not single:
                vals = v(ids)
            elif isinstance(v, Scaled):          # w[cell] K[a, :] per slot
                vals = (v.w[cell][:, None] * np.take(v.K, sl - cell_first, axis=0)).reshape(-1)
            elif isinstance(v, QuadratureSum):   # row a of the cell's matrix per slot
                vals = v.rows(cell, sl - cell_first, blas=threads == 1).reshape(-1)
            else:
                vals = v[((sl * it(k0))[:, None] + within).ravel()]
            last = j == nmat - 1
            T = _csr_sharing(vals, cols if last else cols.copy(), ptr if last else ptr.copy(), (r1 - r0, ndof),
                             sorted_indices=False)
            T.sum_duplicates()
            if ucols is None:
                ucols, per_row = T.indices, np.diff(T.indptr)
            elif len(T.indices) != len(ucols):           # cannot happen: the same columns in every row
                raise AssertionError("assemble_many: matrices on one pattern came out with different patterns")
            o = T.data
            if single and isinstance(v, Scaled) and v.s is not None:    # s[row] s[column], per non-zero
                o *= v.s[ucols]
                o *= np.repeat(v.s[r0:r1], per_row)
            out.append(o)
        return ucols, per_row, out

    indices = np.empty(total, dtype=it)                   # upper bounds; the unused tails are never touched
    datas = [np.empty(total) for _ in range(nmat)]
    indptr = np.zeros(ndof + 1, dtype=it)
    nnz = 0
    ranges = [(r0, min(r0 + chunk_rows, ndof)) for r0 in range(0, ndof, chunk_rows)]
    threads = max(1, min(int(threads or 1), len(ranges)))
    pool = ThreadPoolExecutor(threads) if threads > 1 else None
    try:
        # the chunks are computed in parallel (numpy and scipy release the GIL) and copied into place in order;
        # at most 2 per thread are in flight, so their temporaries stay small
        pending = []
        for i, (r0, r1) in enumerate(ranges):
            if pool is None:
                ucols, per_row, vals = chunk(r0, r1)
            else:
                while len(pending) < 2 * threads and i + len(pending) < len(ranges):
                    pending.append(pool.submit(chunk, *ranges[i + len(pending)]))
                ucols, per_row, vals = pending.pop(0).result()
            m = len(ucols)
            indices[nnz:nnz + m] = ucols
            for o, out in zip(vals, datas):
                out[nnz:nnz + m] = o
            indptr[r0 + 1:r1 + 1] = nnz + np.cumsum(per_row)
            nnz += m
    finally:
        if pool is not None:
            pool.shutdown()
    return [_csr_sharing(data[:nnz], indices[:nnz], indptr, (ndof, ndof)) for data in datas]


def _csr_sharing(data, indices, indptr, shape, sorted_indices=True) -> sp.csr_matrix:
    """A CSR matrix on the given arrays, not copies of them (scipy's
    constructor prunes, and prune() copies arrays that view a larger one)."""
    A = sp.csr_matrix(shape, dtype=data.dtype)
    A.data, A.indices, A.indptr = data, indices, indptr
    A.has_sorted_indices = sorted_indices
    return A


def sum_to_unknowns(cell_dofs, cell_values, ndof) -> np.ndarray:
    """Sum per-cell-node values (one (m_j, k_j) array per block) into the
    unknowns: a diagonal assembled, for instance."""
    out = np.zeros(ndof)
    for d, v in zip(cell_dofs, cell_values):
        out += np.bincount(np.asarray(d).ravel(), weights=np.asarray(v, dtype=float).ravel(), minlength=ndof)
    return out


def _gatherer(blocks, ent_off, cell_dofs):
    """Function: global entry numbers -> values, for one matrix's blocks."""
    if not any(isinstance(b, (Scaled, QuadratureSum)) for b in blocks):
        flat = np.concatenate(blocks)
        return flat.__getitem__

    def gather(ent):
        out = np.empty(len(ent))
        which = np.searchsorted(ent_off, ent, side="right") - 1
        for j, (b, d) in enumerate(zip(blocks, cell_dofs)):
            sel = np.flatnonzero(which == j)
            if len(sel):
                local = ent[sel] - ent_off[j]
                out[sel] = b.gather(local, d) if isinstance(b, (Scaled, QuadratureSum)) else b[local]
        return out
    return gather


def assemble_csr(cell_dofs, element_matrices, ndof, threads=1) -> sp.csr_matrix:
    """Assemble element matrices (one (m, k*k) array per block) into CSR."""
    return assemble_many(cell_dofs, [element_matrices], ndof, threads=threads)[0]


PER_CELL_CHUNK = 65536      # cells per chunk of per_cell's weighted products


def per_cell(T, V, weights=None) -> np.ndarray:
    """``T @ (w[c, :, None] * V[c])`` for every cell: T (r, q), V (c, q, a),
    optional weights w (c, q) -> (c, r, a), as BLAS products
    ``V (c, q*a) @ kron(T^T, I_a)`` (faster than numpy's batched matmul on
    many tiny matrices).  With weights the cells go in chunks, so the
    weighted copy of V is never whole."""
    c, q, a = V.shape
    K = np.kron(np.asarray(T, dtype=float).T, np.eye(a))
    if weights is None:
        return (np.ascontiguousarray(V).reshape(c, q * a) @ K).reshape(c, T.shape[0], a)
    out = np.empty((c, T.shape[0] * a))
    buf = np.empty((min(c, PER_CELL_CHUNK), q, a))
    for lo in range(0, c, PER_CELL_CHUNK):
        hi = min(lo + PER_CELL_CHUNK, c)
        wv = np.multiply(V[lo:hi], weights[lo:hi, :, None], out=buf[:hi - lo])
        np.matmul(wv.reshape(hi - lo, q * a), K, out=out[lo:hi])
    return out.reshape(c, T.shape[0], a)


# ---------------------------------------------------------------------------
# Block conjugate gradients
# ---------------------------------------------------------------------------
CHUNK_ROWS = 65536          # rows per chunk (measured: 65536 beat 4096 and 16384 by 5-20 % at 100k-1M rows)


def row_slice(A, lo: int, hi: int) -> sp.csr_matrix:
    """Rows ``lo:hi`` of CSR matrix ``A`` as a CSR matrix that shares A's
    index and value arrays (``A[lo:hi]`` copies them)."""
    s, e = int(A.indptr[lo]), int(A.indptr[hi])
    return _csr_sharing(A.data[s:e], A.indices[s:e], A.indptr[lo:hi + 1] - A.indptr[lo], (hi - lo, A.shape[1]),
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
    n, c = B.shape
    maxiter = maxiter or max(200, 10 * int(np.sqrt(n)))
    if layout is None:
        layout = CGLayout(A, precond if sp.issparse(precond) else np.asarray(precond, dtype=float), threads)
    L = layout.chunk_rows

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
    Bf, Xf, Rf, Zf, Pf, Qf = (a.reshape(-1) for a in (B, X, R, Z, P, Q))

    def tiled(v):
        return np.tile(np.asarray(v, dtype=float), L)

    def start(chunks):
        s = np.zeros((2, c))
        t = np.empty(L * c)
        for lo, hi, Ac, _ in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            r, tt = Rf[f], t[:rows * c]
            s[1] += _colsum(np.multiply(Bf[f], Bf[f], out=tt), rows, c)      # before r may overwrite b
            if x0 is None:
                r[:] = Bf[f]
            else:
                np.subtract(Bf[f], (Ac @ X).reshape(-1), out=r)
            s[0] += _colsum(np.multiply(r, r, out=tt), rows, c)
        return s

    def apply_and_dot(chunks, with_precond, V, Of, Df):
        """Of = (P or A) @ V chunk by chunk, and the column dots of Df with it."""
        s = np.zeros(c)
        t = np.empty(L * c)
        for lo, hi, Ac, Pc in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            o = Of[f]
            if with_precond and layout.diagonal:
                np.multiply(V[lo:hi], Pc[:, None], out=o.reshape(rows, c))
            else:
                o[:] = ((Pc if with_precond else Ac) @ V).reshape(-1)
            s += _colsum(np.multiply(Df[f], o, out=t[:rows * c]), rows, c)
        return s

    def precondition(chunks):                    # z = P r, and r.z
        return apply_and_dot(chunks, True, R, Zf, Rf)

    def first_direction(chunks):
        for lo, hi, _, _ in chunks:
            Pf[lo * c:hi * c] = Zf[lo * c:hi * c]

    def product(chunks):                         # q = A p, and p.q
        return apply_and_dot(chunks, False, P, Qf, Pf)

    def update(chunks, at):
        """x += a p, r -= a q, and r.r; with a diagonal preconditioner also
        z = d r and r.z on the same chunk while it is in cache (z takes q's
        place, which this chunk no longer needs)."""
        s = np.zeros((2, c))
        t = np.empty(L * c)
        for lo, hi, _, Pc in chunks:
            f, rows = slice(lo * c, hi * c), hi - lo
            tt, a = t[:rows * c], at[:rows * c]
            x, r = Xf[f], Rf[f]
            x += np.multiply(Pf[f], a, out=tt)
            r -= np.multiply(Qf[f], a, out=tt)
            s[0] += _colsum(np.multiply(r, r, out=tt), rows, c)
            if layout.diagonal:
                z = np.multiply(R[lo:hi], Pc[:, None], out=Z[lo:hi])
                s[1] += _colsum(np.multiply(r, z.reshape(-1), out=tt), rows, c)
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
            rr, rz_new = np.sum(run(update, tiled(alpha)), axis=0)
            rnorm = np.sqrt(rr)
            iters[~done] += 1
            done = done | (rnorm <= target)
            if done.all():
                break
            if not layout.diagonal:
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
