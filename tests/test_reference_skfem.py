"""Global L2 projection checked against an independent FE library.

Reference: scikit-fem 12 (``skfem``; the version found is checked below).
For every element type scikit-fem also has, both codes solve the same
problem on the same (distorted) mesh,

    find u_h in V_h:  ∫ u_h v dΩ = ∫ G v dΩ  for all v in V_h,

scikit-fem with its own basis, mapping, quadrature, ``BilinearForm``/
``LinearForm`` assembly and a direct ``scipy.sparse.linalg.spsolve``;
Stresspath with ``toolkit.project_l2``.  The projection is unique, so the
nodal values must agree to round-off (we ask 1e-8 relative: max abs
difference / max abs value).

How the data is shared, with nothing matched by assumed order:

* skfem's mesh is built from our corner nodes; skfem's vertex order is taken
  from its reference element's vertex coordinates (``refdom.p``) matched to
  ours (``(xi + 1) / 2`` on quads/hexes), and skfem's dofs are matched to our
  nodes by physical coordinates (``basis.doflocs``).
* skfem's quadrature points in every cell are mapped back to our natural
  coordinates with our inverse isoparametric map; that they form one common
  point set in every cell of a distorted mesh, and that skfem's |det DF|
  equals our det J at them (scaled by the reference measures), checks that
  the two isoparametric mappings are the same map.
* Full rule: our GaussField is built at those natural points (so its local
  field is the polynomial through skfem's point values), and skfem receives
  the very same numbers, permuted per cell by matching physical coordinates.
* Reduced rule: the values sit at our 2x2 (quad), 3-point (tri6), 4-point
  (tet10) or 2x2x2 (hex20) rule; the reference local field is built here
  independently by fitting the (bi/tri)linear polynomial in natural
  coordinates with numpy and evaluating it at skfem's points.

The quadrature orders are chosen so skfem's rule integrates N^T N det J and
N^T G det J exactly (straight-edged elements), which the agreement needs.
"""
from __future__ import annotations

import numpy as np
import pytest

skfem = pytest.importorskip("skfem")

from helpers import skfem_corner_mesh, skfem_l2_solve, skfem_node_of_dof  # noqa: E402
from toolkit import GaussField, project_l2  # noqa: E402
from toolkit.core.mesh import inverse_map  # noqa: E402
from toolkit.fem.models import box_mesh, rectangle_mesh  # noqa: E402

SKFEM_VERSION = tuple(int(p) for p in skfem.__version__.split(".")[:2])

def test_reference_library_version():
    # the comparisons below were written against scikit-fem 12
    assert SKFEM_VERSION >= (12, 0)


def _mesh(etype, distort):
    if etype in ("tet4", "tet10", "hex8", "hex20"):
        return box_mesh(etype, 3, 2, 2, size=(1.5, 1.0, 0.8), origin=(0.2, -0.1, 0.3), distort=distort, seed=3)
    return rectangle_mesh(etype, 5, 4, size=(2.0, 1.3), origin=(0.5, -0.4), distort=distort, seed=7)


class SkfemCase:
    """scikit-fem's view of one of our single-block meshes (every other cell
    rotated, so point matching by coordinates is really exercised)."""

    def __init__(self, mesh, intorder):
        blk = mesh.blocks[0]
        self.mesh, self.blk, self.et = mesh, blk, blk.element
        et = self.et
        self.skmesh, elem = skfem_corner_mesh(mesh, rotate_alternate=True)
        self.basis = skfem.Basis(self.skmesh, elem, intorder=intorder)
        # skfem's element e must be our cell e (same corner centroids)
        cent_sk = self.skmesh.p[:, self.skmesh.t].mean(axis=1).T
        assert np.allclose(cent_sk, mesh.nodes[blk.cells[:, :et.ncorners]].mean(axis=1), atol=1e-12)
        self.node_of_dof = skfem_node_of_dof(mesh, self.basis)
        # skfem quadrature points in every cell -> our natural coordinates
        xq = np.asarray(self.basis.global_coordinates())              # (dim, c, q)
        self.x_cqi = np.moveaxis(xq, 0, -1)
        m, q, dim = self.x_cqi.shape
        xe = np.repeat(mesh.nodes[blk.cells], q, axis=0)
        xi, ok = inverse_map(et, xe, self.x_cqi.reshape(-1, dim))
        assert ok.all()
        self.xi_cqj = xi.reshape(m, q, dim)

    def common_points(self):
        """One natural point set shared by all cells and, per cell, which of
        them each skfem point is: ``perm[c, j]`` (matched by coordinates)."""
        pts = self.xi_cqj[0]
        d = np.linalg.norm(self.xi_cqj[:, :, None, :] - pts[None, None, :, :], axis=-1)   # (c, j, q)
        perm = d.argmin(axis=2)
        assert np.take_along_axis(d, perm[..., None], axis=2).max() < 1e-10, \
            "skfem's quadrature points do not sit at the same natural coordinates in every cell"
        assert all(len(set(p)) == len(pts) for p in perm)
        return pts, perm

    def project(self, F_cqa):
        """skfem's L2 projection of values at its quadrature points (c, q, a),
        returned in our node order (n, a)."""
        X = skfem_l2_solve(self.basis, F_cqa)
        out = np.empty_like(X)
        out[self.node_of_dof] = X
        return out


def _stress(x, rng, m, q):
    """A smooth stress-like field plus element-wise noise, 3 components."""
    X, Y, Z = x[..., 0], x[..., 1], x[..., 2] if x.shape[-1] == 3 else 0.0
    f = np.stack([100 + 40 * np.sin(2.1 * X) * np.cos(1.3 * Y) + 5 * Z,
                  -30 + 25 * X * Y - 10 * Y ** 2 + 3 * Z ** 2,
                  12 * np.exp(-0.5 * X) * (1 + Y)], axis=-1)
    return f + rng.normal(scale=4.0, size=(m, q, 3))


def _rel(a, b):
    return float(np.abs(a - b).max() / np.abs(b).max())


# (type, skfem intorder): skfem's rule is exact for N^T N det J and N^T G det J
FULL = [("quad4", 3), ("quad8", 5), ("quad9", 5), ("tri3", 2), ("tri6", 4), ("tet4", 2), ("hex8", 5), ("hex20", 7)]


@pytest.mark.parametrize("etype,intorder", FULL, ids=[f[0] for f in FULL])
def test_full_rule_matches_skfem(etype, intorder):
    mesh = _mesh(etype, distort=0.35)
    case = SkfemCase(mesh, intorder)
    et = case.et
    pts, perm = case.common_points()
    m, q = perm.shape
    # isoparametric maps agree: skfem |det DF| = our det J * (our/skfem reference measure)
    # (skfem's reference quad/hex is [0, 1]^d, ours [-1, 1]^d)
    g = mesh.geometry(et.name, pts)
    ratio = {"quad": 4.0, "hex": 8.0}.get(et.shape, 1.0)
    det_sk = np.abs(case.basis.mapping.detDF(case.basis.X))
    assert np.allclose(det_sk, np.take_along_axis(g.detJ_cq, perm, axis=1) * ratio, rtol=1e-12)
    # the mesh really is distorted (otherwise the mapping check is weak)
    assert np.ptp(g.detJ_cq) > 0.05 * g.detJ_cq.mean()
    rng = np.random.default_rng(11)
    V = _stress(g.x_cqi, rng, m, q)                                       # at our points
    F = np.take_along_axis(V, perm[..., None], axis=1)                    # the same numbers, skfem's order
    assert np.allclose(np.take_along_axis(g.x_cqi, perm[..., None], axis=1), case.x_cqi, atol=1e-12)
    ref = case.project(F)
    field = GaussField(mesh, {et.name: V}, ("sxx", "syy", "sxy"), points=pts)
    ours = project_l2(field, solver="direct").to_array()
    # scikit-fem 12 reference, same problem: agreement to round-off
    assert _rel(ours, ref) < 1e-8
    # the data is noisy enough that the projection is not trivially the field itself
    assert np.abs(ref).max() > 10


@pytest.mark.parametrize("etype", ["quad4", "hex8"])
def test_cg_solver_matches_skfem(etype):
    mesh = _mesh(etype, distort=0.35)
    case = SkfemCase(mesh, {"quad4": 3, "hex8": 5}[etype])
    pts, perm = case.common_points()
    g = mesh.geometry(etype, pts)
    V = _stress(g.x_cqi, np.random.default_rng(5), *perm.shape)
    ref = case.project(np.take_along_axis(V, perm[..., None], axis=1))
    nodal = project_l2(GaussField(mesh, {etype: V}, ("a", "b", "c"), points=pts), solver="cg", rtol=1e-13)
    # scikit-fem 12 reference; CG to rtol 1e-13 must reach the direct answer
    assert _rel(nodal.to_array(), ref) < 1e-8


def _linear_fit(et, xi_data, values, xi_targets):
    """Independent local field for a reduced rule: least-squares (here:
    interpolating) fit of the (bi/tri)linear polynomial in natural
    coordinates, per cell, with numpy; evaluated at per-cell targets."""
    def basis(xi):
        cols = [np.ones(xi.shape[:-1])] + [xi[..., d] for d in range(xi.shape[-1])]
        if et.shape == "quad":
            cols.append(xi[..., 0] * xi[..., 1])
        if et.shape == "hex":
            x, y, z = xi[..., 0], xi[..., 1], xi[..., 2]
            cols += [x * y, y * z, x * z, x * y * z]
        return np.stack(cols, axis=-1)
    P = basis(xi_data)                                                    # (q, p), square here
    assert P.shape[0] == P.shape[1]
    coef = np.linalg.solve(P, values)                                     # (c, p, a) by broadcasting
    return np.einsum("cjp,cpa->cja", basis(xi_targets), coef)


REDUCED = [("quad8", 5), ("quad9", 5), ("tri6", 4), ("tet10", 4), ("hex20", 7)]


@pytest.mark.parametrize("etype,intorder", REDUCED, ids=[r[0] for r in REDUCED])
def test_reduced_rule_local_field_matches_skfem(etype, intorder):
    mesh = _mesh(etype, distort=0.3)
    case = SkfemCase(mesh, intorder)
    et = case.et
    rule = et.rule("reduced")
    assert rule.npoints == {"quad": 4, "tri": 3, "tet": 4, "hex": 8}[et.shape]
    g = mesh.geometry(et.name, rule.points)
    m = len(mesh.blocks[0])
    V = _stress(g.x_cqi, np.random.default_rng(2), m, rule.npoints)
    # reference local field at skfem's own points (per cell, in skfem's order)
    F = _linear_fit(et, rule.points, V, case.xi_cqj)
    ref = case.project(F)
    ours = project_l2(GaussField(mesh, {et.name: V}, ("sxx", "syy", "sxy"), points="reduced"),
                      solver="direct").to_array()
    # scikit-fem 12 reference with the local field built independently
    assert _rel(ours, ref) < 1e-8


def test_mismatch_is_detected():
    """The comparison can fail: data at skfem's points given to us in the
    wrong per-cell order gives a different projection."""
    mesh = _mesh("quad4", distort=0.35)
    case = SkfemCase(mesh, 3)
    pts, perm = case.common_points()
    g = mesh.geometry("quad4", pts)
    V = _stress(g.x_cqi, np.random.default_rng(1), *perm.shape)
    ref = case.project(np.take_along_axis(V, perm[..., None], axis=1))
    wrong = GaussField(mesh, {"quad4": V[:, ::-1]}, ("a", "b", "c"), points=pts)
    assert _rel(project_l2(wrong, solver="direct").to_array(), ref) > 1e-3
