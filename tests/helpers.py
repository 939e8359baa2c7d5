"""Helpers the test modules share (no test module imports another)."""
from __future__ import annotations

import numpy as np

from toolkit import GaussField


def gauss_field_of(mesh, f, points="full", comps=None) -> GaussField:
    """The field ``f(x)`` (x (c, q, dim) -> (c, q, ncomp)) sampled at the
    integration points ``points`` of every block (one spec, or a dict per
    block); components ``s0, s1, ...`` unless named."""
    vals = {}
    for b in mesh.blocks:
        x = mesh.geometry(b.name, points if not isinstance(points, dict) else points[b.name]).x_cqi
        vals[b.name] = f(x)
    ncomp = next(iter(vals.values())).shape[-1]
    return GaussField(mesh, vals, comps or [f"s{i}" for i in range(ncomp)], points=points)


def smooth_scalar(x):
    """A smooth, non-polynomial scalar field for convergence tests."""
    return np.stack([np.sin(2 * x[..., 0]) * np.cos(1.5 * x[..., 1]) + x[..., 0] ** 3], -1)


# ---------------------------------------------------------------------------
# scikit-fem bridge: the independent reference of tests/test_reference_skfem.py
# and of benchmarks/recovery.py (which puts this folder on its path)
# ---------------------------------------------------------------------------
#: our type -> (scikit-fem mesh class, element class); quadratic types use
#: scikit-fem's corner-node mesh (straight edges: the same affine/bi/trilinear map)
SKFEM_TYPES = {
    "quad4": ("MeshQuad1", "ElementQuad1"),
    "quad8": ("MeshQuad1", "ElementQuadS2"),
    "quad9": ("MeshQuad1", "ElementQuad2"),
    "tri3": ("MeshTri1", "ElementTriP1"),
    "tri6": ("MeshTri1", "ElementTriP2"),
    "tet4": ("MeshTet1", "ElementTetP1"),
    "tet10": ("MeshTet1", "ElementTetP2"),
    "hex8": ("MeshHex1", "ElementHex1"),
    "hex20": ("MeshHex1", "ElementHexS2"),
}

#: a rotation of the reference element's corners (our local corner numbers)
ROTATE = {"quad": [1, 2, 3, 0], "hex": [1, 2, 3, 0, 5, 6, 7, 4], "tri": [1, 2, 0], "tet": [1, 2, 0, 3]}


def skfem_reference(et, xi):
    """Our natural coordinates -> scikit-fem's reference coordinates
    (its quads and hexes live on [0, 1]^d, ours on [-1, 1]^d)."""
    return (xi + 1.0) / 2.0 if et.shape in ("quad", "hex") else xi


def skfem_corner_mesh(mesh, rotate_alternate=False):
    """scikit-fem's mesh of the corner nodes of our one-block ``mesh`` and
    its element: ``(skfem mesh, skfem element)``.  Each cell's vertex order
    is matched to scikit-fem's reference vertices by coordinates; with
    ``rotate_alternate`` every other cell starts at another corner (a
    symmetry of the reference element), so its quadrature points sit at
    other natural coordinates of ours than its neighbours' do."""
    import skfem

    blk = mesh.blocks[0]
    et = blk.element
    mesh_cls, elem_cls = (getattr(skfem, n) for n in SKFEM_TYPES[et.name])
    ref_sk = mesh_cls.elem.refdom.p.T                                       # (ncorners, dim)
    d = np.linalg.norm(ref_sk[:, None, :] - skfem_reference(et, et.nodes[:et.ncorners])[None], axis=-1)
    order = d.argmin(axis=1)
    assert np.allclose(d[np.arange(len(order)), order], 0.0) and len(set(order)) == len(order)
    corners = np.array(blk.cells[:, :et.ncorners])
    if rotate_alternate:
        corners[1::2] = corners[1::2][:, ROTATE[et.shape]]
    corners = corners[:, order]
    used = np.unique(corners)
    renum = np.full(mesh.nnodes, -1, dtype=np.int64)
    renum[used] = np.arange(len(used))
    skmesh = mesh_cls(np.ascontiguousarray(mesh.nodes[used].T), np.ascontiguousarray(renum[corners].T.astype(np.int32)))
    return skmesh, elem_cls()


def skfem_node_of_dof(mesh, basis) -> np.ndarray:
    """Our node of each scikit-fem degree of freedom, matched by coordinates
    (one to one, to 1e-9 of the model size)."""
    from scipy.spatial import cKDTree

    tol = 1e-9 * float(np.ptp(mesh.nodes, axis=0).max())
    dist, node_of_dof = cKDTree(mesh.nodes).query(basis.doflocs.T)
    if dist.max() > tol or len(np.unique(node_of_dof)) != basis.N or basis.N != mesh.nnodes:
        raise AssertionError("scikit-fem's dofs do not match the mesh nodes one to one")
    return node_of_dof


def skfem_l2_solve(basis, F_cqa) -> np.ndarray:
    """scikit-fem's global L2 projection of values at its quadrature points
    (c, q, a): assemble the mass matrix and one right-hand side per column,
    solve directly (SuperLU); result in scikit-fem's dof order (N, a)."""
    import skfem
    from scipy.sparse.linalg import spsolve

    M = skfem.asm(skfem.BilinearForm(lambda u, v, w: u * v), basis)
    rhs = skfem.LinearForm(lambda v, w: w["f"] * v)
    B = np.column_stack([skfem.asm(rhs, basis, f=F_cqa[..., a]) for a in range(F_cqa.shape[-1])])
    return spsolve(M, B)


DEMO_BRACKET = __import__("pathlib").Path(__file__).resolve().parents[1] / "data" / "demo_bracket"


def demo_bracket(case="pull"):
    """(mesh, GaussField) of one load case of the shipped demo folder
    ``data/demo_bracket`` (cases ``pull`` and ``shear``)."""
    from toolkit.io import read_cases

    mesh, cases = read_cases(DEMO_BRACKET)
    return mesh, cases[case]


def render_refused_by_rule(tmp_path, capsys, workbook, given, rule):
    """``render workbook --set given...`` exits 2 before running, with the one
    line that names the broken ``rule`` (a workbook's cross-parameter check)."""
    from toolkit.cli import main
    argv = ["render", workbook, "--out", str(tmp_path / "out")]
    for g in given:
        argv += ["--set", g]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert f"rule {rule!r} of {workbook}.ipynb does not hold" in err and err.count("\n") == 1
