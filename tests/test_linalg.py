"""Sparse assembly plan, block conjugate gradients and the element
preconditioner of the L2 projection."""
import numpy as np
import pytest
import scipy.linalg as sl
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from hypothesis import given, settings, strategies as st

from toolkit import L2Projector, Mesh, project_l2
from toolkit.core.elements import ELEMENTS
from toolkit.core.assembly import QuadratureSum, Scaled, assemble_csr, assemble_many
from toolkit.core.cg import CGLayout, block_cg, row_slice
from toolkit.fem.models import box_mesh, rectangle_mesh
from toolkit.recovery.preconditioner import unit_mass_inverse
from helpers import gauss_field_of, smooth_scalar


def _coo_reference(cell_dofs, mats, n):
    """Plain COO assembly (scipy sums duplicates): the textbook definition."""
    rows = np.concatenate([np.repeat(d, d.shape[1], axis=1).ravel() for d in cell_dofs])
    cols = np.concatenate([np.tile(d, (1, d.shape[1])).ravel() for d in cell_dofs])
    vals = np.concatenate([k.ravel() for k in mats])
    return sp.coo_matrix((vals, (rows, cols)), shape=(n, n)).tocsr()


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2**31 - 1), st.lists(st.tuples(st.integers(1, 40), st.integers(1, 6)), min_size=1, max_size=3),
       st.integers(1, 60), st.sampled_from([1, 3, 7, 1000]), st.sampled_from([1, 2, 3]), st.integers(1, 9))
def test_assemble_many_matches_coo_assembly(seed, blocks, n, chunk, threads, npoints):
    """Any blocks of cells (repeated cells, unknowns in no cell, several
    widths), any chunk size, any number of threads: the same matrices as
    COO summation, for plain and factored (Scaled, QuadratureSum) element
    values assembled together; QuadratureSum with fewer and with more
    points than nodes (its row-by-row and whole-cell routes)."""
    rng = np.random.default_rng(seed)
    n = max(n, max(k for _, k in blocks))
    dofs = [np.array([rng.permutation(n)[:k] for _ in range(m)]) for m, k in blocks]
    mats = [rng.normal(size=(m, k * k)) for m, k in blocks]
    ws = [rng.uniform(0.5, 2.0, size=m) for m, k in blocks]
    Ks = [rng.normal(size=(k, k)) for _, k in blocks]
    sv = rng.uniform(0.5, 2.0, size=n)
    scaled = [Scaled(w, K, sv) for w, K in zip(ws, Ks)]
    explicit = [(sv[d][:, :, None] * w[:, None, None] * K[None] * sv[d][:, None, :]).reshape(len(w), -1)
                for d, w, K in zip(dofs, ws, Ks)]
    ws_q = [rng.uniform(0.1, 1.0, size=(m, npoints)) for m, k in blocks]
    Ns = [rng.normal(size=(npoints, k)) for _, k in blocks]
    quad = [QuadratureSum(w, N_) for w, N_ in zip(ws_q, Ns)]
    quad_explicit = [np.einsum("cq,qa,qb->cab", w, N_, N_).reshape(len(w), -1) for w, N_ in zip(ws_q, Ns)]
    A, B, C = assemble_many(dofs, [mats, scaled, quad], n, chunk_rows=chunk, threads=threads)
    for got, vals in ((A, mats), (B, explicit), (C, quad_explicit)):
        ref = _coo_reference(dofs, vals, n)
        assert got.has_canonical_format
        assert got.nnz == ref.nnz
        np.testing.assert_array_equal(got.indptr, ref.indptr)
        np.testing.assert_array_equal(got.indices, ref.indices)
        np.testing.assert_allclose(got.data, ref.data, rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("scatter", [False, True])
def test_quadrature_sum_whole_cell_route_matches_row_by_row(scatter):
    """QuadratureSum.cell_rows (whole matrices of the cells involved, used
    when the rule has more points than the element has nodes) returns the
    rows of Σ_q w N_qa N_qb, the definition, whether the cells come as a
    short run (cells numbered with locality) or scattered over the mesh."""
    rng = np.random.default_rng(11)
    m, q, k = 500, 27, 8
    w, N = rng.uniform(0.1, 1.0, size=(m, q)), rng.normal(size=(q, k))
    Q = QuadratureSum(w, N)
    cells = rng.permutation(m)[:300] if scatter else np.repeat(np.arange(100, 140), k)
    local = rng.integers(0, k, size=len(cells))
    ref = np.einsum("sq,qb->sb", w[cells] * N.T[local], N)
    np.testing.assert_allclose(Q.cell_rows(cells, local), ref, rtol=1e-13, atol=1e-13)
    np.testing.assert_allclose(Q.rows(cells, local), ref, rtol=1e-13, atol=1e-13)


def test_assemble_many_rejects_wrong_sizes():
    d = [np.array([[0, 1, 2]])]
    with pytest.raises(ValueError, match=r"\(1, 3, 3\)"):
        assemble_many(d, [[np.ones((1, 4))]], 3)
    with pytest.raises(ValueError, match="1 blocks"):
        assemble_many(d, [[np.ones((1, 9)), np.ones((1, 9))]], 3)
    with pytest.raises(ValueError, match="reference matrix"):
        assemble_many(d, [[Scaled(np.ones(1), np.ones((2, 2)))]], 3)
    with pytest.raises(ValueError, match="square"):
        Scaled(np.ones(1), np.ones((2, 3)))


def test_assemble_csr_stiffness_like():
    m = rectangle_mesh("tri6", 3, 2, distort=0.2)
    d = m.blocks[0].cells
    rng = np.random.default_rng(1)
    K = rng.normal(size=(len(d), 36))
    np.testing.assert_allclose(assemble_csr([d], [K], m.nnodes).toarray(),
                               _coo_reference([d], [K], m.nnodes).toarray(), atol=1e-12)


@pytest.mark.parametrize("threads,chunk", [(1, 16384), (2, 7), (3, 50)])
@pytest.mark.parametrize("kind", ["diagonal", "matrix"])
def test_block_cg_agrees_with_direct_solve(threads, chunk, kind):
    """Every column against scipy's sparse LU, for both preconditioner forms,
    any thread count and chunk size (the chunking must not change the
    answer)."""
    m = rectangle_mesh("quad4", 17, 13, distort=0.3, seed=2)
    p = L2Projector(m, preconditioner="element" if kind == "matrix" else "jacobi", threads=1)
    A = p.matrix
    rng = np.random.default_rng(3)
    B = rng.normal(size=(A.shape[0], 4))
    B[:, 2] = 0.0                                   # a zero column converges at once
    pre = p._precond
    lay = CGLayout(A, pre, threads, chunk)
    X, it, res = block_cg(A, B, pre, rtol=1e-13, layout=lay)
    ref = spla.splu(A.tocsc()).solve(B)
    np.testing.assert_allclose(X, ref, rtol=0, atol=1e-11 * np.abs(ref).max())
    assert it[2] == 0 and np.all(X[:, 2] == 0)
    assert np.all(res <= 1e-13)
    # iterating in the caller's arrays gives the same answer
    Bc, X0 = B.copy(), np.zeros_like(B)
    X2, _, _ = block_cg(A, Bc, pre, X0, rtol=1e-13, layout=lay, overwrite_x0=True, overwrite_b=True)
    assert np.shares_memory(X2, X0)
    np.testing.assert_allclose(X2, ref, rtol=0, atol=1e-11 * np.abs(ref).max())
    # a single vector in, a single vector out
    x1, _, _ = block_cg(A, B[:, 0], pre, rtol=1e-13, threads=threads)
    assert x1.shape == (A.shape[0],)
    np.testing.assert_allclose(x1, ref[:, 0], atol=1e-11 * np.abs(ref).max())


@pytest.mark.parametrize("name", ["quad4", "quad8", "quad9", "tri3", "tri6", "tet4", "tet10", "hex8", "hex20"])
def test_unit_mass_inverse_inverts_affine_cells(name):
    """On an affine cell (straight edges, constant Jacobian) the cell's mass
    matrix is |e| times the unit one, so the preconditioner's block is its
    exact inverse."""
    et = ELEMENTS[name]
    A = np.array([[1.7, 0.4, 0.1], [0.2, 0.9, -0.3], [0.1, 0.2, 1.3]])[:et.dim, :et.dim]
    nodes = et.nodes @ A.T + 0.5
    m = Mesh(nodes, {name: np.arange(et.nnodes)[None, :]})
    p = L2Projector(m, preconditioner="element")
    Me = p.matrix.toarray()
    vol = m.geometry(name, "mass").dV_cq.sum()
    np.testing.assert_allclose(Me @ (unit_mass_inverse(et) / vol), np.eye(et.nnodes), atol=1e-10)


def _pencil_condition(A, P):
    if sp.issparse(P):
        ev = np.linalg.eigvals(P.toarray() @ A.toarray()).real
    else:
        ev = sl.eigh(A.toarray(), np.diag(1.0 / P), eigvals_only=True)
    return ev.max() / ev.min()


def test_jacobi_condition_number_matches_wathen_and_element_preconditioner_beats_it():
    """Wathen (1987), Realistic eigenvalue bounds for the Galerkin mass
    matrix, IMA J. Numer. Anal. 7: the diagonally scaled bilinear (Q1) mass
    matrix has eigenvalues in [1/4, 9/4], so condition number 9 on a
    uniform mesh, and linear triangles [1/2, 2], condition number 4.  The
    rescaled element preconditioner must do far better (design figure,
    measured when it was built: 1.78 and 1.56)."""
    for name, wathen, bound in (("quad4", 9.0, 2.0), ("tri3", 4.0, 1.8), ("quad9", None, 1.8), ("tri6", None, 2.0),
                                ("quad8", None, 4.6), ("tet10", None, 3.2), ("hex20", None, 13.0)):
        m = box_mesh(name, 4, 4, 4) if ELEMENTS[name].dim == 3 else rectangle_mesh(name, 12, 12)
        kj = _pencil_condition(L2Projector(m, preconditioner="jacobi").matrix,
                               L2Projector(m, preconditioner="jacobi")._precond)
        p = L2Projector(m, preconditioner="element")
        ke = _pencil_condition(p.matrix, p._precond)
        if wathen is not None:
            assert kj == pytest.approx(wathen, rel=0.02), name
        assert ke < bound, (name, ke)
        assert ke < kj / 2, (name, ke, kj)


@pytest.mark.parametrize("name, grading, distort", [("tri6", (100.0, 100.0), 0.0), ("tri6", None, 0.3),
                                                   ("quad8", (100.0, 1.0), 0.0), ("tet10", None, 0.3),
                                                   ("hex20", None, 0.0)])
def test_element_preconditioner_reproduces_a_repeated_cell_pattern(name, grading, distort):
    """Closed form of the measure-share weighting: on a mesh of affine
    cells (triangles and tetrahedra however distorted or graded,
    rectangles and boxes), a function with value a at every corner node and
    b at every mid-side node has the same element vector ``Mu p`` in every
    cell, so ``P C v = v`` exactly: the cells' shares of C v add back to
    whole cells, and the exact element inverse returns the pattern."""
    m = (box_mesh(name, 3, 3, 3, distort=distort, seed=2) if ELEMENTS[name].dim == 3
         else rectangle_mesh(name, 9, 7, distort=distort, seed=2, grading=grading))
    p = L2Projector(m, preconditioner="element", renumber=False)
    et = m.blocks[0].element
    corner = np.zeros(p.dofs.ndof, bool)
    corner[np.unique(p.dofs.cell_dofs[et.name][:, :et.ncorners])] = True
    v = np.where(corner, 1.0, -0.37)
    np.testing.assert_allclose(p._precond @ (p.matrix @ v), v, rtol=0, atol=1e-12)


@pytest.mark.parametrize("name", ["quad4", "tri6", "quad9", "hex8", "quad8", "tet10", "hex20"])
def test_element_preconditioner_saves_iterations_and_agrees(name):
    m = (box_mesh(name, 6, 5, 4, distort=0.2, seed=4) if ELEMENTS[name].dim == 3
         else rectangle_mesh(name, 30, 24, distort=0.3, seed=4))
    f = gauss_field_of(m, smooth_scalar)
    a = project_l2(f, preconditioner="element", rtol=1e-12)
    b = project_l2(f, preconditioner="jacobi", rtol=1e-12)
    np.testing.assert_allclose(a.values, b.values, atol=1e-9 * np.abs(b.values).max())
    assert max(a.info["iterations"]) < 0.75 * max(b.info["iterations"])
    assert a.info["preconditioner"] == "element" and b.info["preconditioner"] == "jacobi"


@pytest.mark.parametrize("preconditioner", ["element", "jacobi", "auto"])
@pytest.mark.parametrize("name", ["quad4", "quad8", "quad9", "tri3", "tri6", "tet4", "tet10", "hex8", "hex20"])
def test_cg_projection_equals_the_direct_solve_for_every_type_and_preconditioner(name, preconditioner):
    """The preconditioner changes the path, never the answer: projected
    values within 1e-8 of the sparse LU solve of the same system, on
    distorted meshes of every element type (closed form: C a = b has one
    solution), with a small bound on the iterations."""
    m = (box_mesh(name, 4, 3, 3, distort=0.2, seed=5) if ELEMENTS[name].dim == 3
         else rectangle_mesh(name, 14, 11, distort=0.3, seed=5))
    f = gauss_field_of(m, smooth_scalar)
    cg = project_l2(f, preconditioner=preconditioner)
    direct = project_l2(f, solver="direct")
    np.testing.assert_allclose(cg.values, direct.values, rtol=0, atol=1e-8 * np.abs(direct.values).max())
    assert max(cg.info["iterations"]) <= 120


def test_auto_preconditioner_choice_and_errors():
    assert L2Projector(rectangle_mesh("quad8", 2, 2)).preconditioner == "element"
    assert L2Projector(rectangle_mesh("quad4", 2, 2)).preconditioner == "element"
    with pytest.raises(ValueError, match="preconditioner must be"):
        L2Projector(rectangle_mesh("quad4", 2, 2), preconditioner="ilu")


def test_row_slice_is_a_view_and_multiplies_like_a_copy():
    m = rectangle_mesh("quad4", 9, 7, distort=0.2)
    A = L2Projector(m).matrix
    X = np.random.default_rng(0).normal(size=(A.shape[0], 3))
    for lo, hi in ((0, 5), (13, 41), (40, A.shape[0])):
        V = row_slice(A, lo, hi)
        assert np.shares_memory(V.data, A.data) and np.shares_memory(V.indices, A.indices)
        np.testing.assert_array_equal(V @ X, A[lo:hi] @ X)
        np.testing.assert_array_equal(V.toarray(), A[lo:hi].toarray())


def test_per_cell_in_chunks_matches_einsum(monkeypatch):
    """per_cell (one BLAS product per block, weighted cells in chunks)
    against the plain definition, with chunks far smaller than the block."""
    import toolkit.core.assembly as la
    monkeypatch.setattr(la, "PER_CELL_CHUNK", 7)
    rng = np.random.default_rng(5)
    T, V, w = rng.normal(size=(5, 4)), rng.normal(size=(30, 4, 3)), rng.uniform(size=(30, 4))
    np.testing.assert_allclose(la.per_cell(T, V, w), np.einsum("rq,cq,cqa->cra", T, w, V), atol=1e-13)
    np.testing.assert_allclose(la.per_cell(T, V), np.einsum("rq,cqa->cra", T, V), atol=1e-13)


def test_jacobi_cg_ends_in_as_many_steps_as_the_preconditioned_matrix_has_eigenvalues():
    """Conjugate gradients end, in exact arithmetic, after as many steps as the
    (preconditioned) matrix has distinct eigenvalues (closed form: the finite
    termination of CG, Hestenes & Stiefel 1952; the Krylov space of a matrix
    with k distinct eigenvalues has dimension at most k).
    A = D^1/2 B D^1/2 with B = (1 - beta) I + beta 11^T (unit diagonal, two
    eigenvalues 1 - beta and 1 + (n - 1) beta) and D spread over four decades:
    diag(A)^-1 A = D^-1/2 B D^1/2 is similar to B, so Jacobi-preconditioned CG
    ends in 2 steps (3 allowed for rounding), while A itself has n distinct
    eigenvalues and a condition number near 1e4.  A preconditioner applied at
    the first step only would need tens of steps."""
    n, beta = 60, 0.4
    d = np.logspace(0, 4, n)
    B = (1 - beta) * np.eye(n) + beta * np.ones((n, n))
    A = sp.csr_matrix(np.sqrt(d)[:, None] * B * np.sqrt(d)[None, :])
    rhs = np.random.default_rng(11).normal(size=(n, 2))
    X, it, res = block_cg(A, rhs, 1.0 / A.diagonal(), rtol=1e-10)
    np.testing.assert_allclose(A @ X, rhs, rtol=0, atol=1e-8 * np.abs(rhs).max())
    assert np.all(it <= 3), it
    # unpreconditioned (identity) CG on the same system needs far more steps: the test can tell them apart
    _, it_plain, _ = block_cg(A, rhs, np.ones(n), rtol=1e-6, maxiter=2000)
    assert np.all(it_plain >= 20), it_plain
