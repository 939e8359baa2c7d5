"""Recovery of a continuous nodal field from integration-point values.

Three methods share one call shape ``method(field, across_regions=False) ->
NodalField``:

* :func:`project_l2` — global L2 projection (Hinton & Campbell 1974): find
  nodal values ``a`` minimising ``∫ (N a - G)^2 dΩ`` over the whole structure,
  i.e. solve ``C a = b`` with ``C = Σ_e ∫ N^T N dΩ`` and ``b = Σ_e ∫ N^T G dΩ``,
  one column per component, all columns at once.  ``G`` is each element's
  local field, the polynomial through its integration-point values.
* ``project_l2(field, lumped=True)`` — the projection with the inner product
  evaluated by the HRZ nodal quadrature (Hinton, Rock & Zienkiewicz 1976):
  the mass matrix becomes the diagonal of HRZ masses m_a^e (every one
  positive) and the right-hand side the same quadrature of the local field,
  b_a = Σ_e m_a^e G_e(x_a).  So each nodal value is the HRZ-weighted mean of
  the cells' local fields at that node; constants (and linear fields, where
  the local field is linear) are reproduced.  Pairing the lumped matrix with
  the consistent right-hand side instead fails even for constants on quad8
  and tri6, whose corner shape functions integrate to a negative value or
  zero.
* :func:`average_nodal` — extrapolate each element's values to its nodes with
  its local field, then average at shared nodes (the common baseline).

By default nothing is smoothed across region boundaries: a node shared by two
regions gets one value per region.  ``across_regions=True`` smooths across
everything.

:class:`L2Projector` is built once per mesh (dof numbering, optional
renumbering for locality, mass matrix, preconditioner or factor) and projects
any number of fields.
"""
from __future__ import annotations

import os
import time
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import scipy.sparse as sp
from scipy.linalg.blas import daxpy as _axpy, ddot as _dot, dscal as _scal

from .elements import local_field_exponents, local_field_matrix, rule_of_degree
from .fields import GaussField, NodalField
from .mesh import Mesh

__all__ = ["L2Projector", "project_l2", "average_nodal", "DofMap", "rhs_rule", "block_cg", "assemble_csr",
           "detj_degree"]


# ---------------------------------------------------------------------------
# Degrees of freedom: one per (node, region) pair, or one per node
# ---------------------------------------------------------------------------
class DofMap:
    """Numbering of the unknowns of a nodal field.

    ``cell_dofs[block]`` (m, k) are the unknowns of each cell; ``node`` and
    ``region`` (ndof,) say which node and region each unknown belongs to
    (region ``-1`` when smoothed across regions).  Unknowns are numbered in
    (node, region) order; nodes in no cell get none.
    """

    def __init__(self, mesh: Mesh, across_regions: bool = False):
        self.mesh = mesh
        regions = mesh.regions
        self.across_regions = bool(across_regions) or len(regions) == 1
        n = mesh.nnodes
        if self.across_regions:
            used = mesh.used_nodes()
            if used.all():
                self.cell_dofs = {b.name: b.cells for b in mesh.blocks}
                self.node = np.arange(n)
            else:
                number = np.cumsum(used) - 1
                self.cell_dofs = {b.name: number[b.cells].astype(b.cells.dtype) for b in mesh.blocks}
                self.node = np.flatnonzero(used)
            self.region = np.full(len(self.node), -1 if len(regions) > 1 else int(regions[0]))
        else:
            R = len(regions)
            table = np.zeros(n * R, dtype=bool)
            keys = {}
            for b in mesh.blocks:
                ridx = np.searchsorted(regions, b.regions)
                keys[b.name] = b.cells.astype(np.int64) * R + ridx[:, None]
                table[keys[b.name].ravel()] = True
            number = np.cumsum(table) - 1
            self.cell_dofs = {k: number[v].astype(np.int32 if table.sum() < 2**31 else np.int64)
                              for k, v in keys.items()}
            flat = np.flatnonzero(table)
            self.node = flat // R
            self.region = regions[flat % R]
        self.ndof = len(self.node)

    def renumbered(self, perm_new_of_old: np.ndarray) -> "DofMap":
        """A copy whose cell dofs use new numbers ``perm_new_of_old[old]``."""
        other = object.__new__(DofMap)
        other.__dict__.update(self.__dict__)
        other.cell_dofs = {k: perm_new_of_old[v].astype(v.dtype) for k, v in self.cell_dofs.items()}
        return other

    def scatter(self, name: str) -> sp.csc_matrix:
        """Sparse (ndof, m*k) matrix that adds per-cell-node rows into unknowns.
        Built in CSC form, which costs nothing: column j has its one entry at
        row ``cell_dofs.ravel()[j]``."""
        d = self.cell_dofs[name].ravel()
        return sp.csc_matrix((np.ones(d.size), d, np.arange(d.size + 1)), shape=(self.ndof, d.size))

    def locality(self) -> float:
        """Mean spread (max - min unknown number) per cell, relative to the
        spread a well-ordered mesh of this size has (about ndof^((d-1)/d))."""
        spans = [np.mean(v.max(axis=1) - v.min(axis=1)) for v in self.cell_dofs.values()]
        d = self.mesh.dim
        return float(np.mean(spans)) / max(1.0, self.ndof ** ((d - 1) / d))


def _rcm_permutation(dofmap: DofMap) -> np.ndarray:
    """Reverse Cuthill–McKee order of the unknowns (scipy.sparse.csgraph),
    from a light graph that chains the nodes of every cell."""
    from scipy.sparse.csgraph import reverse_cuthill_mckee

    rows, cols = [], []
    for v in dofmap.cell_dofs.values():
        rows.append(v.ravel())
        cols.append(np.roll(v, -1, axis=1).ravel())
    r = np.concatenate(rows)
    c = np.concatenate(cols)
    g = sp.csr_matrix((np.ones(2 * r.size, dtype=np.int8), (np.r_[r, c], np.r_[c, r])),
                      shape=(dofmap.ndof, dofmap.ndof))
    order = reverse_cuthill_mckee(g, symmetric_mode=True)   # order[new] = old
    new_of_old = np.empty_like(order)
    new_of_old[order] = np.arange(len(order), dtype=order.dtype)
    return new_of_old


# ---------------------------------------------------------------------------
# Rules
# ---------------------------------------------------------------------------
def detj_degree(element) -> int:
    """Degree of det J for straight-edged, flat-faced elements: per coordinate
    for quad (1) and hex (2), total for simplices (0)."""
    return {"quad": 1, "hex": 2}.get(element.shape, 0)


def rhs_rule(element, npoints: int):
    """Rule exact for ``∫ N^T G dΩ`` on straight-edged elements, with G the
    local field through ``npoints`` values."""
    _, gdeg = local_field_exponents(element.shape, npoints)
    ndeg = element.total_degree if element.is_simplex else element.degree
    return rule_of_degree(element.shape, ndeg + gdeg + detj_degree(element))


# ---------------------------------------------------------------------------
# Block conjugate gradients
# ---------------------------------------------------------------------------
def row_parts(A, parts: int):
    """Split a CSR matrix into ``parts`` contiguous row blocks of about equal
    non-zeros: ``[(row slice, block), ...]``."""
    n = A.shape[0]
    if parts <= 1 or n < 2 * parts:
        return [(slice(0, n), A)]
    cuts = np.searchsorted(A.indptr, np.linspace(0, A.nnz, parts + 1)[1:-1])
    edges = np.r_[0, cuts, n]
    return [(slice(int(lo), int(hi)), A[int(lo):int(hi)]) for lo, hi in zip(edges[:-1], edges[1:]) if hi > lo]


def default_threads(n: int) -> int:
    """Threads for the conjugate-gradient loop: one for small systems, else
    the machine's cores (scipy's sparse products and numpy's element-wise
    operations release the GIL), at most 4."""
    return 1 if n < 50_000 else max(1, min(4, os.cpu_count() or 1))


def block_cg(A, B, dinv, x0=None, rtol=1e-10, maxiter=None, threads=1, parts=None):
    """Jacobi-preconditioned conjugate gradients for every column of ``B`` at
    once (each column keeps its own step lengths; the matrix is shared).
    Stops each column when ``||b - A x|| <= rtol ||b||``.

    Internally the columns are stored as rows (components, n), so every
    vector operation runs over long contiguous arrays.  With ``threads > 1``
    the rows are split into blocks of equal non-zeros (``parts``, from
    :func:`row_parts`) and each thread runs the matrix product and the vector
    updates of its block; the step lengths come from the summed partial dot
    products, so the iterates equal the single-thread ones up to rounding.

    Returns ``X (n, columns), iterations (per column), relative residuals``.
    Raises ``RuntimeError`` if a column has not converged after ``maxiter``.
    """
    B = np.ascontiguousarray(np.asarray(B, dtype=float).T)          # (c, n)
    ncol, n = B.shape
    maxiter = maxiter or max(200, 10 * int(np.sqrt(n)))
    parts = parts if parts is not None else row_parts(A, threads)
    dinv = np.asarray(dinv, dtype=float)

    X = np.zeros_like(B) if x0 is None else np.ascontiguousarray(np.asarray(x0, dtype=float).T)
    R = np.empty_like(B)
    Z = np.empty_like(B)
    P = np.empty_like(B)
    Q = np.empty_like(B)

    def dots(U, V):
        return np.einsum("ij,ij->i", U, V)

    def start(part):
        sl, Ap = part
        for i in range(ncol):
            R[i, sl] = B[i, sl] - Ap @ X[i] if x0 is not None else B[i, sl]
        np.multiply(R[:, sl], dinv[sl], out=Z[:, sl])
        P[:, sl] = Z[:, sl]
        return np.stack([dots(R[:, sl], Z[:, sl]), dots(R[:, sl], R[:, sl]), dots(B[:, sl], B[:, sl])])

    def product(part):
        sl, Ap = part
        for i in range(ncol):
            Q[i, sl] = Ap @ P[i]
        return dots(P[:, sl], Q[:, sl])

    def update(part, alpha):
        sl, _ = part
        rr, rz = np.empty(ncol), np.empty(ncol)
        for i in range(ncol):                     # in-place BLAS on contiguous rows
            _axpy(P[i, sl], X[i, sl], a=alpha[i])
            _axpy(Q[i, sl], R[i, sl], a=-alpha[i])
            np.multiply(R[i, sl], dinv[sl], out=Z[i, sl])
            rr[i] = _dot(R[i, sl], R[i, sl])
            rz[i] = _dot(R[i, sl], Z[i, sl])
        return np.stack([rr, rz])

    def direction(part, beta):
        sl, _ = part
        for i in range(ncol):
            _scal(beta[i], P[i, sl])
            _axpy(Z[i, sl], P[i, sl], a=1.0)

    pool = ThreadPoolExecutor(len(parts)) if len(parts) > 1 else None

    def run(fn, *args):
        if pool is None:
            return [fn(parts[0], *args)]
        return list(pool.map(lambda pt: fn(pt, *args), parts))

    try:
        rz, rr, bb = np.sum(run(start), axis=0)
        bnorm = np.sqrt(bb)
        target = rtol * bnorm
        rnorm = np.sqrt(rr)
        done = rnorm <= target
        iters = np.zeros(ncol, dtype=int)
        for _ in range(maxiter):
            if done.all():
                break
            pq = np.sum(run(product), axis=0)
            alpha = np.where(done, 0.0, rz / np.where(done, 1.0, pq))
            rr, rz_new = np.sum(run(update, alpha), axis=0)
            rnorm = np.sqrt(rr)
            iters[~done] += 1
            done = done | (rnorm <= target)
            beta = np.where(done, 0.0, rz_new / np.where(rz == 0, 1.0, rz))
            rz = rz_new
            run(direction, beta)
    finally:
        if pool is not None:
            pool.shutdown()
    if not done.all():
        bad = np.flatnonzero(~done)
        raise RuntimeError(f"conjugate gradients did not reach rtol={rtol:g} in {maxiter} iterations for "
                           f"column(s) {bad.tolist()} (relative residual "
                           f"{(rnorm[bad] / np.where(bnorm[bad] == 0, 1, bnorm[bad])).max():.3g})")
    rel = rnorm / np.where(bnorm == 0, 1.0, bnorm)
    return X.T, iters, rel


def assemble_csr(scatters, cell_dofs, element_matrices, ndof):
    """Assemble element matrices (m, k*k) into one CSR matrix.

    The scatter matrices (ndof, m*k) in CSC form turn into CSR with a
    counting sort (linear time, in C), which lists for every unknown the
    (cell, local node) slots that touch it; each slot contributes one row of
    its element matrix.  Duplicate columns are then summed by scipy.  This
    avoids building and sorting full COO triplets.
    """
    indptr_parts, ind_parts, dat_parts = [], [], []
    for S, dofs, Me in zip(scatters, cell_dofs, element_matrices):
        m, k = dofs.shape
        Sr = S.tocsr()                                   # rows: unknowns; columns: slots c*k + a
        slots = Sr.indices                               # slot s = c*k + a: local node a of cell c
        ind_parts.append(np.take(dofs, slots // k, axis=0))          # (m*k, k) columns of each slot's row
        dat_parts.append(np.take(Me.reshape(m * k, k), slots, axis=0))  # row a of cell c's matrix
        indptr_parts.append(np.diff(Sr.indptr) * k)
    if len(ind_parts) == 1:
        counts = indptr_parts[0]
        ind = ind_parts[0].ravel()
        dat = dat_parts[0].ravel()
    else:
        # several blocks: concatenate and let COO sort them out
        rows = np.concatenate([np.repeat(np.arange(ndof), cnt) for cnt in indptr_parts])
        ind = np.concatenate([i.ravel() for i in ind_parts])
        dat = np.concatenate([d.ravel() for d in dat_parts])
        return sp.coo_matrix((dat, (rows, ind)), shape=(ndof, ndof)).tocsr()   # sums duplicates
    idx_t = np.int32 if ind.size < 2**31 and ndof < 2**31 else np.int64
    indptr = np.zeros(ndof + 1, dtype=idx_t)
    np.cumsum(counts, out=indptr[1:])
    M = sp.csr_matrix((dat, ind.astype(idx_t, copy=False), indptr), shape=(ndof, ndof))
    M.sum_duplicates()
    return M


# ---------------------------------------------------------------------------
# The projector
# ---------------------------------------------------------------------------
class L2Projector:
    """Global L2 projection onto the mesh's nodal space, built once per mesh.

    Parameters
    ----------
    mesh : Mesh
    lumped : bool
        Use HRZ nodal quadrature (diagonal, every nodal mass positive; see
        the module notes) instead of the consistent mass matrix.
    across_regions : bool
        Smooth across region boundaries (default: one value per region at
        shared nodes).
    solver : ``"cg"`` (default; Jacobi block CG) or ``"direct"`` (sparse LU,
        factorised once).
    rtol : relative residual for ``"cg"`` (default 1e-10).
    renumber : ``"auto"`` (renumber with reverse Cuthill–McKee when the
        numbering is scattered), ``True`` or ``False``.
    threads : threads for the conjugate-gradient loop (default: 1 below
        50 000 unknowns, else the number of cores, at most 4).

    The mass matrix uses each type's mass rule, exact for N^T N det J on
    straight-edged elements (quad4 2x2, quad8/9 3x3, tri3 3, tri6 6, tet4 4,
    tet10 14, hex8 3x3x3, hex20 4x4x4 points).
    """

    def __init__(self, mesh: Mesh, lumped=False, across_regions=False, solver="cg", rtol=1e-10,
                 maxiter=None, renumber="auto", threads=None):
        if not isinstance(mesh, Mesh):
            raise ValueError("L2Projector needs a Mesh")
        if solver not in ("cg", "direct"):
            raise ValueError(f"solver must be 'cg' or 'direct', got {solver!r}")
        if renumber not in ("auto", True, False):
            raise ValueError(f"renumber must be 'auto', True or False, got {renumber!r}")
        if not (0 < rtol < 1):
            raise ValueError(f"rtol must lie in (0, 1), got {rtol}")
        t0 = time.perf_counter()
        self.mesh = mesh
        self.lumped = bool(lumped)
        self.solver = solver
        self.rtol = float(rtol)
        self.maxiter = maxiter
        self._parts = None
        base = DofMap(mesh, across_regions)
        self.locality = base.locality()
        self.renumbered = bool(renumber is True or (renumber == "auto" and not lumped and self.locality > 8.0))
        if self.renumbered:
            self._new_of_old = _rcm_permutation(base)
            self.dofs = base.renumbered(self._new_of_old)
        else:
            self._new_of_old = None
            self.dofs = base
        self._scatter = {b.name: self.dofs.scatter(b.name) for b in mesh.blocks}
        self._rhs_cache: dict = {}
        self._hrz: dict = {}
        self._assemble()
        self.threads = int(threads) if threads else default_threads(self.dofs.ndof)
        self.setup_time = time.perf_counter() - t0

    # -- assembly ------------------------------------------------------------
    def _assemble(self):
        """Mass matrix C = Σ_e ∫ N^T N dΩ (consistent) and its HRZ-lumped
        diagonal (each cell's diagonal scaled to the cell's measure)."""
        ndof = self.dofs.ndof
        diag_hrz = np.zeros(ndof)
        scatters, cell_dofs, matrices = [], [], []
        for b in self.mesh.blocks:
            g = self.mesh.geometry(b.name, "mass")
            N = g.N_qk
            k = N.shape[1]
            NN = (N[:, :, None] * N[:, None, :]).reshape(len(N), k * k)
            Me = g.dV_cq @ NN                                         # (c, k*k)
            dpos = np.arange(k) * (k + 1)
            d = Me[:, dpos]
            hrz = d * (g.dV_cq.sum(axis=1) / d.sum(axis=1))[:, None]  # HRZ: diagonal scaled to the cell's measure
            diag_hrz += self._scatter[b.name] @ hrz.ravel()
            self._hrz[b.name] = hrz
            if not self.lumped:
                scatters.append(self._scatter[b.name])
                cell_dofs.append(self.dofs.cell_dofs[b.name])
                matrices.append(Me)
        self.lumped_diagonal = diag_hrz
        if self.lumped:
            self.matrix = None
            self.diagonal = diag_hrz
            return
        M = assemble_csr(scatters, cell_dofs, matrices, ndof)
        self.matrix = M
        self.diagonal = M.diagonal()
        self._factor = None
        if self.solver == "direct":
            from scipy.sparse.linalg import splu
            self._factor = splu(M.tocsc())

    # -- right-hand side -----------------------------------------------------
    def _rhs_operator(self, name, points):
        key = (name, points.tobytes())
        op = self._rhs_cache.get(key)
        if op is None:
            et = self.mesh.block(name).element
            rule = rhs_rule(et, len(points))
            same = rule.npoints == len(points) and np.allclose(rule.points, points, atol=1e-13)
            if same:
                E, geo_pts = None, rule
            else:
                E, geo_pts = local_field_matrix(et, points, rule.points), rule
            g = self.mesh.geometry(name, geo_pts)
            op = (E, g.N_qk, g.dV_cq)
            self._rhs_cache[key] = op
        return op

    def rhs(self, field: GaussField) -> np.ndarray:
        """``b = Σ_e ∫ N^T G dΩ`` for every component (ndof, components);
        with ``lumped`` the HRZ nodal quadrature ``Σ_e m_a^e G_e(x_a)``."""
        self._check_field(field)
        b = np.zeros((self.dofs.ndof, field.ncomponents))
        if self.lumped:
            for name, V in field.values.items():
                et = self.mesh.block(name).element
                E = local_field_matrix(et, field.points[name], et.nodes)     # (k, q)
                ve = np.matmul(E, V) * self._hrz[name][:, :, None]            # (c, k, a)
                b += self._scatter[name] @ ve.reshape(-1, field.ncomponents)
            return b
        for name, V in field.values.items():
            E, N, dV = self._rhs_operator(name, field.points[name])
            G = V if E is None else np.matmul(E, V)                   # (c, r, a)
            W = G * dV[:, :, None]
            be = np.matmul(N.T, W)                                    # (c, k, a)
            b += self._scatter[name] @ be.reshape(-1, field.ncomponents)
        return b

    def _check_field(self, field):
        if not isinstance(field, GaussField):
            raise ValueError("expected a GaussField")
        if field.mesh is not self.mesh:
            raise ValueError("the field belongs to another mesh than this projector was built for")

    # -- solve -----------------------------------------------------------------
    def project(self, field: GaussField) -> NodalField:
        """Project ``field`` (all components at once) to a :class:`NodalField`."""
        t0 = time.perf_counter()
        b = self.rhs(field)
        if not np.isfinite(b).all():
            a = int(np.flatnonzero(~np.isfinite(b).all(axis=0))[0])
            raise ValueError(f"the right-hand side of component {field.components[a]} overflows: values of "
                             f"about {np.abs(next(iter(field.values.values()))).max():.3g} times cell sizes "
                             "exceed the floating-point range; rescale the values (units)")
        x0 = b / self.lumped_diagonal[:, None]
        info = {"method": "lumped" if self.lumped else "l2", "ndof": self.dofs.ndof,
                "renumbered": self.renumbered, "across_regions": self.dofs.across_regions}
        if self.lumped:
            x = x0
        elif self.solver == "direct":
            x = self._factor.solve(b)
            info["solver"] = "direct"
        else:
            if self._parts is None:
                self._parts = row_parts(self.matrix, self.threads)
            x, it, res = block_cg(self.matrix, b, 1.0 / self.diagonal, x0, self.rtol, self.maxiter,
                                  parts=self._parts)
            info.update(solver="cg", iterations=it.tolist(), relative_residual=res.tolist(), rtol=self.rtol,
                        threads=len(self._parts))
        if self._new_of_old is not None:
            x = x[self._new_of_old]
        info["time"] = time.perf_counter() - t0
        info["setup_time"] = self.setup_time
        return NodalField(self.mesh, x, field.components, self.dofs.node, self.dofs.region,
                          method=info["method"], info=info)

    __call__ = project

    def __repr__(self):
        kind = "lumped (HRZ)" if self.lumped else f"consistent, {self.solver}"
        return (f"L2Projector({self.dofs.ndof} unknowns, {kind}, "
                f"{'renumbered' if self.renumbered else 'original numbering'})")


def project_l2(field: GaussField, lumped=False, across_regions=False, solver="cg", rtol=1e-10,
               maxiter=None, renumber="auto", threads=None) -> NodalField:
    """Global L2 projection of ``field`` to the nodes (Hinton & Campbell 1974).

    Builds an :class:`L2Projector` and projects once; keep a projector to
    project several fields on one mesh.  See :class:`L2Projector` for the
    options.
    """
    proj = L2Projector(field.mesh, lumped=lumped, across_regions=across_regions, solver=solver,
                       rtol=rtol, maxiter=maxiter, renumber=renumber, threads=threads)
    return proj.project(field)


def average_nodal(field: GaussField, across_regions=False) -> NodalField:
    """Extrapolate each cell's integration-point values to its nodes with the
    cell's own local field (the shape functions of the point set), then take
    the plain mean at every shared node (within a region unless
    ``across_regions``)."""
    if not isinstance(field, GaussField):
        raise ValueError("expected a GaussField")
    t0 = time.perf_counter()
    mesh = field.mesh
    dofs = DofMap(mesh, across_regions)
    total = np.zeros((dofs.ndof, field.ncomponents))
    count = np.zeros(dofs.ndof)
    for name, V in field.values.items():
        et = mesh.block(name).element
        E = local_field_matrix(et, field.points[name], et.nodes)     # (k, q)
        ve = np.matmul(E, V)                                          # (c, k, a)
        d = dofs.cell_dofs[name].ravel()
        S = dofs.scatter(name)
        total += S @ ve.reshape(-1, field.ncomponents)
        count += np.bincount(d, minlength=dofs.ndof)
    x = total / count[:, None]
    info = {"method": "average", "across_regions": dofs.across_regions, "time": time.perf_counter() - t0}
    return NodalField(mesh, x, field.components, dofs.node, dofs.region, method="average", info=info)
