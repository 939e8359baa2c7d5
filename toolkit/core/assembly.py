"""Sparse assembly of element matrices, shared by the projection
(:mod:`toolkit.recovery`) and the solver (:mod:`toolkit.fem`): element
matrices in factored form (:class:`Scaled`, :class:`QuadratureSum`),
:func:`assemble_many` — ``Σ_e R_e^T K_e R_e`` for several matrices on the
same pattern in one pass (a counting sort of the cells' slots by row, then
chunks of rows sorted and summed, on several threads), no global sort and no
entry-sized temporaries — and the per-cell products and sums around it.
"""
from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import scipy.sparse as sp

from toolkit.errors import InputError

__all__ = ["assemble_many", "Scaled", "QuadratureSum", "assemble_csr", "sum_to_unknowns", "per_cell", "csr_sharing",
           "default_threads"]


def _index_type(*sizes):
    return np.int32 if max(sizes) < 2**31 - 1 else np.int64


ASSEMBLY_ROWS = 65536       # rows per assembly chunk: its temporaries stay small and are reused


def default_threads(n: int) -> int:
    """Threads for the assembly and the conjugate-gradient loop: one for
    small systems, else the machine's cores (scipy's sparse products and
    numpy's element-wise operations release the GIL), at most 4."""
    return 1 if n < 50_000 else max(1, min(4, os.cpu_count() or 1))


# ---------------------------------------------------------------------------
# Element matrices in factored form
# ---------------------------------------------------------------------------
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
            raise InputError(f"Scaled: reference matrix must be square, got {self.K.shape}")
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
            raise InputError(f"QuadratureSum: {self.w.shape[1]} weights per cell but {self.N.shape[0]} points")
        self.k = self.N.shape[1]
        self.size = len(self.w) * self.k ** 2
        q, k = self.N.shape                                        # (q, k*k) products N_qa N_qb (cell_rows)
        self._NN = np.ascontiguousarray((self.N[:, :, None] * self.N[:, None, :]).reshape(q, k * k))

    def rows(self, cells, local, blas=True):
        """Rows ``local`` of cells ``cells``' matrices: (len(cells), k).

        With more points than nodes (hex8 27 > 8, hex20 64 > 20, tet10 14 >
        10, quad8 9 > 8) the whole matrices of the cells involved are formed
        first, one product ``w (cells, q) @ [N_qa N_qb] (q, k*k)``, and the
        rows picked from them (:meth:`cell_rows`): the per-row route
        gathers q weights for every row, k times per cell, which made 3D
        assembly cost 2-3x more per entry than quad4.  Otherwise (quad4,
        quad9, tri6) row by row: ``blas=False`` keeps the small product out
        of BLAS (einsum's own loop): about 3x slower alone, but BLAS's
        threads fight with the caller's own threads, which costs more
        (measured at 1M cells)."""
        if self.w.shape[1] > self.k:
            return self.cell_rows(cells, local)
        wn = self.w[cells] * self.N.T[local]
        return wn @ self.N if blas else np.einsum("sq,qb->sb", wn, self.N)

    def cell_rows(self, cells, local):
        """:meth:`rows` through the whole matrices of the cells involved: of
        the run ``min(cells)..max(cells)`` when it is short (cells numbered
        with locality), else of the distinct cells."""
        k = self.k
        lo, hi = int(cells.min()), int(cells.max()) + 1
        if hi - lo <= 2 * len(cells) // k + 64:
            Me = self.w[lo:hi] @ self._NN                                   # (run, k*k)
            at = cells - lo
        else:
            which, at = np.unique(cells, return_inverse=True)
            Me = self.w[which] @ self._NN
        return Me.reshape(-1, k, k)[at, local]

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


_FACTORED = (Scaled, QuadratureSum)


# ---------------------------------------------------------------------------
# Assembly
# ---------------------------------------------------------------------------
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
    slots = _SlotsByRow(cell_dofs, ndof)
    values = [_entry_values(j, blocks, cell_dofs, slots.ent_off) for j, blocks in enumerate(element_values)]
    slots.group_by_row()
    ranges = [(r0, min(r0 + chunk_rows, ndof)) for r0 in range(0, ndof, chunk_rows)]
    threads = max(1, min(int(threads or 1), len(ranges)))
    blas = threads == 1

    def chunk(r0, r1):
        return _sum_rows(slots, values, r0, r1, blas)

    return _fill_in_order(chunk, ranges, threads, slots.total, len(values), ndof, slots.it)


def _entry_values(j, blocks, cell_dofs, ent_off):
    """Matrix ``j``'s element values, checked against the blocks' cells: the
    one block's array or factored form, else a function from global entry
    numbers to values."""
    if len(blocks) != len(cell_dofs):
        raise InputError(f"matrix {j}: {len(cell_dofs)} blocks of element matrices expected, got {len(blocks)}")
    v = [K if isinstance(K, _FACTORED) else np.asarray(K, dtype=float).reshape(-1) for K in blocks]
    for vb, d in zip(v, cell_dofs):
        if isinstance(vb, _FACTORED) and vb.k != d.shape[1]:
            raise InputError(f"matrix {j}: reference matrix of shape ({d.shape[1]}, {d.shape[1]}) expected, "
                             f"got ({vb.k}, {vb.k})")
        if vb.size != d.size * d.shape[1]:
            m, k = d.shape
            raise InputError(f"matrix {j}: element matrices of shape ({m}, {k}, {k}) expected, "
                             f"got {vb.size} values")
    return v[0] if len(v) == 1 else _gatherer(v, ent_off, cell_dofs)


def _gatherer(blocks, ent_off, cell_dofs):
    """Function: global entry numbers -> values, for one matrix's blocks."""
    if not any(isinstance(b, _FACTORED) for b in blocks):
        flat = np.concatenate(blocks)
        return flat.__getitem__

    def gather(ent):
        out = np.empty(len(ent))
        which = np.searchsorted(ent_off, ent, side="right") - 1
        for j, (b, d) in enumerate(zip(blocks, cell_dofs)):
            sel = np.flatnonzero(which == j)
            if len(sel):
                local = ent[sel] - ent_off[j]
                out[sel] = b.gather(local, d) if isinstance(b, _FACTORED) else b[local]
        return out
    return gather


class _SlotsByRow:
    """The (cell, local node) slots of every block, numbered block after
    block, and the entries they expand to (slot -> its k entries of the
    cell's matrix row).  :meth:`group_by_row` sorts the slots by the row
    they assemble into; :meth:`entries` lists the entries of a run of rows."""

    def __init__(self, cell_dofs, ndof):
        self.ndof = ndof
        self.widths = np.array([d.shape[1] for d in cell_dofs], dtype=np.int64)
        self.nslots = np.array([d.size for d in cell_dofs], dtype=np.int64)
        nentries = self.nslots * self.widths
        self.total = int(nentries.sum())
        self.it = _index_type(self.total, ndof)
        self.ent_off = np.r_[0, np.cumsum(nentries)]
        self.single = len(cell_dofs) == 1
        flat = cell_dofs[0].ravel() if self.single else np.concatenate([d.ravel() for d in cell_dofs])
        self.flat_dofs = flat.astype(self.it, copy=False)
        self.k0 = int(self.widths[0])

    def group_by_row(self):
        """Counting sort of the slots by row (``order``, ``slot_ptr``), and
        with several blocks each slot's first entry number, its cell's first
        slot and its width."""
        it, flat_dofs = self.it, self.flat_dofs
        S = sp.csc_matrix((np.ones(flat_dofs.size, dtype=np.int8), flat_dofs,
                           np.arange(flat_dofs.size + 1, dtype=it)), shape=(self.ndof, flat_dofs.size))
        by_row = S.tocsr()                                   # counting sort: slots grouped by row
        del S
        self.order, self.slot_ptr = by_row.indices.astype(it, copy=False), by_row.indptr
        del by_row
        if not self.single:
            # per slot: its entry numbers start, its cell's first slot, its width
            slot_block = np.repeat(np.arange(len(self.widths)), self.nslots)
            slot_off = np.r_[0, np.cumsum(self.nslots)]
            local = np.arange(flat_dofs.size, dtype=np.int64) - slot_off[slot_block]
            self.w_s = w_s = self.widths[slot_block]
            self.start_s = (self.ent_off[slot_block] + local * w_s).astype(np.int64)
            self.cell_s = (slot_off[slot_block] + (local // w_s) * w_s).astype(np.int64)

    def entries(self, r0, r1):
        """The entries of rows r0:r1 in slot order: ``(sl, cell, cell_first,
        within, ids, src, ptr)`` -- the slots, (one block) their cells and
        the cells' first slots, the entries' position in their slot's row,
        (several blocks) their global entry numbers, the slots they take
        their column from, and the rows' start in the chunk."""
        it, k0, slot_ptr = self.it, self.k0, self.slot_ptr
        sl = self.order[slot_ptr[r0]:slot_ptr[r1]]
        cell = cell_first = ids = None
        if self.single:
            within = np.arange(k0, dtype=it)
            cell = sl // it(k0)
            cell_first = cell * it(k0)                     # the cell's first slot
            src = (cell_first[:, None] + within).ravel()
            row_counts = np.diff(slot_ptr[r0:r1 + 1]) * k0
        else:
            sl = sl.astype(np.int64)
            w = self.w_s[sl]
            first = np.cumsum(w) - w
            within = np.arange(int(w.sum()), dtype=np.int64) - np.repeat(first, w)
            ids = np.repeat(self.start_s[sl], w) + within
            src = np.repeat(self.cell_s[sl], w) + within
            slot_rows = np.repeat(np.arange(r1 - r0), np.diff(slot_ptr[r0:r1 + 1]))
            row_counts = np.bincount(slot_rows, weights=w, minlength=r1 - r0).astype(np.int64)
        ptr = np.zeros(r1 - r0 + 1, dtype=it)
        np.cumsum(row_counts, out=ptr[1:])
        return sl, cell, cell_first, within, ids, src, ptr


def _sum_rows(slots, values, r0, r1, blas):
    """The non-zeros of rows r0:r1: their columns, their count per row and
    their values in every matrix."""
    nmat = len(values)
    sl, cell, cell_first, within, ids, src, ptr = slots.entries(r0, r1)
    if ptr[-1] == 0:
        return np.empty(0, dtype=slots.it), np.zeros(r1 - r0, dtype=np.int64), [np.empty(0)] * nmat
    single, it, k0 = slots.single, slots.it, slots.k0
    cols = slots.flat_dofs[src]
    ucols = per_row = None
    out = []
    for j, v in enumerate(values):
        # the entries in slot order, then sorted by column and summed per row in C (scipy's sum_duplicates)
        if not single:
            vals = v(ids)
        elif isinstance(v, Scaled):          # w[cell] K[a, :] per slot
            vals = (v.w[cell][:, None] * np.take(v.K, sl - cell_first, axis=0)).reshape(-1)
        elif isinstance(v, QuadratureSum):   # row a of the cell's matrix per slot
            vals = v.rows(cell, sl - cell_first, blas=blas).reshape(-1)
        else:
            vals = v[((sl * it(k0))[:, None] + within).ravel()]
        last = j == nmat - 1
        T = csr_sharing(vals, cols if last else cols.copy(), ptr if last else ptr.copy(), (r1 - r0, slots.ndof),
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


def _fill_in_order(chunk, ranges, threads, total, nmat, ndof, it):
    """Compute ``chunk(r0, r1)`` for every row range (on ``threads``
    threads) and copy the results into place in order: one CSR matrix per
    matrix, sharing ``indices`` and ``indptr``."""
    indices = np.empty(total, dtype=it)                   # upper bounds; the unused tails are never touched
    datas = [np.empty(total) for _ in range(nmat)]
    indptr = np.zeros(ndof + 1, dtype=it)
    nnz = 0
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
    return [csr_sharing(data[:nnz], indices[:nnz], indptr, (ndof, ndof)) for data in datas]


def csr_sharing(data, indices, indptr, shape, sorted_indices=True) -> sp.csr_matrix:
    """A CSR matrix on the given arrays, not copies of them (scipy's
    constructor prunes, and prune() copies arrays that view a larger one)."""
    A = sp.csr_matrix(shape, dtype=data.dtype)
    A.data, A.indices, A.indptr = data, indices, indptr
    A.has_sorted_indices = sorted_indices
    return A


def assemble_csr(cell_dofs, element_matrices, ndof, threads=1) -> sp.csr_matrix:
    """Assemble element matrices (one (m, k*k) array per block) into CSR."""
    return assemble_many(cell_dofs, [element_matrices], ndof, threads=threads)[0]


# ---------------------------------------------------------------------------
# Per-cell products and sums
# ---------------------------------------------------------------------------
def sum_to_unknowns(cell_dofs, cell_values, ndof) -> np.ndarray:
    """Sum per-cell-node values (one (m_j, k_j) array per block) into the
    unknowns: a diagonal assembled, for instance."""
    out = np.zeros(ndof)
    for d, v in zip(cell_dofs, cell_values):
        out += np.bincount(np.asarray(d).ravel(), weights=np.asarray(v, dtype=float).ravel(), minlength=ndof)
    return out


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
