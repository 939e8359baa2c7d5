"""Superconvergent patch recovery (Zienkiewicz & Zhu 1992, Int. J. Numer.
Meth. Eng. 33, 1331-1364).

* Consistency: a least-squares fit reproduces any field in its own
  polynomial space, so SPR recovers exactly (at interior and boundary nodes)
  a field that is linear (linear patches) or quadratic (quadratic patches)
  in physical coordinates, when the sampled values are exact (ZZ 1992, §3).
* Rates: with exact data at the sampling points the patch fit of degree p
  converges as O(h^(p+1)) in L2; the global L2 projection onto degree-p
  elements cannot do better than O(h^(p+1)) (Brenner & Scott, ch. 4).
"""
import numpy as np
import pytest

from helpers import gauss_field_of
from toolkit import GaussField, Mesh, project_l2
from toolkit.fem.models import box_mesh, rectangle_mesh
from toolkit.core.numbering import DofMap
from toolkit.recovery.spr import recover_spr


def _linear(x):
    X, Y = x[..., 0], x[..., 1]
    Z = x[..., 2] if x.shape[-1] == 3 else 0.0
    return np.stack([2 + 3 * X - 1.5 * Y + 0.5 * Z, -4 * X + Y + 2 * Z + 0 * X], axis=-1)


def _quadratic(x):
    X, Y = x[..., 0], x[..., 1]
    Z = x[..., 2] if x.shape[-1] == 3 else 0.0
    return np.stack([1 + X - Y + X * X - 2 * X * Y + 0.5 * Y * Y + Z * Z + X * Z, 3 - X * Y + 0 * X], -1)


def _boundary_nodes(m):
    lo, hi = m.nodes.min(axis=0), m.nodes.max(axis=0)
    return np.flatnonzero((np.isclose(m.nodes, lo) | np.isclose(m.nodes, hi)).any(axis=1))


CASES = [("quad4", _linear, "full"), ("quad4", _linear, "reduced"), ("tri3", _linear, 1), ("tri3", _linear, 3),
         ("quad8", _quadratic, "full"), ("quad8", _quadratic, "reduced"), ("quad9", _quadratic, "full"),
         ("tri6", _quadratic, 3), ("tri6", _quadratic, 6)]


@pytest.mark.parametrize("et,f,pts", CASES)
@pytest.mark.parametrize("n", [2, 4])
def test_exact_in_patch_space_2d(et, f, pts, n):
    """Linear fields on quad4/tri3 and quadratic fields on quad8/quad9/tri6
    are recovered exactly at every node (ZZ 1992 consistency), interior and
    boundary, on distorted straight-edged meshes (the data's local field
    holds these fields there, so the sampled values are exact)."""
    m = rectangle_mesh(et, n, n + 1, size=(2.0, 1.5), origin=(0.3, -0.4), distort=0.35, seed=1)
    nf = recover_spr(gauss_field_of(m, f, pts))
    exact = f(m.nodes)
    np.testing.assert_allclose(nf.values, exact[nf.node], atol=1e-11)
    bnd = _boundary_nodes(m)
    assert np.isin(bnd, nf.node).all() and bnd.size > 4
    assert nf.method == "spr" and nf.info["interior_patches"] == (n - 1) * n


@pytest.mark.parametrize("et,f", [("hex8", _linear), ("tet4", _linear), ("hex20", _quadratic), ("tet10", _quadratic)])
def test_exact_in_patch_space_3d(et, f):
    m = box_mesh(et, 3, 3, 3, size=(1.0, 1.5, 1.2), distort=0.3)
    nf = recover_spr(gauss_field_of(m, f))
    np.testing.assert_allclose(nf.values, f(m.nodes)[nf.node], atol=1e-11)


def test_not_exact_beyond_patch_space():
    """A quadratic field is not in the linear patch space of quad4: the
    recovery must show an error (so the exactness tests can fail)."""
    m = rectangle_mesh("quad4", 4, 4, distort=0.2)
    nf = recover_spr(gauss_field_of(m, _quadratic))
    assert np.abs(nf.values - _quadratic(m.nodes)).max() > 1e-3


def _l2_error(m, nf, f):
    e2 = 0.0
    for b in m.blocks:
        g = m.geometry(b.name, 16 if b.element.shape == "quad" else 7)
        s = np.einsum("qk,cka->cqa", g.N_qk, nf.values[nf.cell_rows(b.name)])
        e2 += np.einsum("cq,cqa->", g.dV_cq, (s - f(g.x_cqi)) ** 2)
    return np.sqrt(e2)


def _smooth(x):
    X, Y = x[..., 0], x[..., 1]
    return np.stack([np.sin(2 * X) * np.cos(1.5 * Y) + X**3, np.exp(0.5 * X) * Y], -1)


@pytest.mark.parametrize("et,pts,p", [("quad4", "full", 1), ("quad4", "reduced", 1), ("quad8", "full", 2),
                                      ("quad8", "reduced", 2), ("tri3", 1, 1), ("tri6", 3, 2)])
def test_converges_at_least_as_fast_as_l2_projection(et, pts, p, capsys):
    """L2 error of the recovered field against the exact one on 3 distorted
    refinements: SPR's observed rate is at least that of project_l2 (within
    0.1) and at least p + 1 - 0.1 (ZZ 1992; Brenner & Scott ch. 4)."""
    errs = {"spr": [], "l2": []}
    for n in (8, 16, 32):
        m = rectangle_mesh(et, n, n, size=(1.0, 1.0), distort=0.2)
        fld = gauss_field_of(m, _smooth, pts)
        errs["spr"].append(_l2_error(m, recover_spr(fld), _smooth))
        errs["l2"].append(_l2_error(m, project_l2(fld, rtol=1e-13), _smooth))
    rates = {k: np.diff(np.log(v)) / np.log(0.5) for k, v in errs.items()}
    with capsys.disabled():
        print(f"\n  {et} at {pts}: SPR errors {['%.3e' % e for e in errs['spr']]} rates "
              f"{np.round(rates['spr'], 2).tolist()}; L2 projection {['%.3e' % e for e in errs['l2']]} rates "
              f"{np.round(rates['l2'], 2).tolist()}")
    assert rates["spr"][-1] >= rates["l2"][-1] - 0.1
    assert rates["spr"][-1] >= p + 1 - 0.1


def test_regions_not_smoothed_unless_asked():
    """Two regions carrying different linear fields: per region each is
    recovered exactly, with one row per (node, region) in project_l2's order;
    across_regions=True mixes them at the interface."""
    m = rectangle_mesh("quad8", 6, 4, size=(3.0, 2.0), regions=lambda c: (c[:, 0] > 1.5).astype(int))
    f0 = lambda x: _quadratic(x)
    f1 = lambda x: _quadratic(x) + np.stack([5 + x[..., 0], 0 * x[..., 0]], -1)
    vals = {}
    b = m.blocks[0]
    x = m.geometry("quad8", "full").x_cqi
    vals["quad8"] = np.where((b.regions == 1)[:, None, None], f1(x), f0(x))
    fld = GaussField(m, vals, ("s0", "s1"))
    nf = recover_spr(fld)
    l2 = project_l2(fld)
    np.testing.assert_array_equal(nf.node, l2.node)
    np.testing.assert_array_equal(nf.region, l2.region)
    want = np.where((nf.region == 1)[:, None], f1(m.nodes[nf.node]), f0(m.nodes[nf.node]))
    np.testing.assert_allclose(nf.values, want, atol=1e-10)
    assert nf.split_nodes.size == 9
    mixed = recover_spr(fld, across_regions=True)
    assert mixed.split_nodes.size == 0
    iface = np.flatnonzero(np.isclose(m.nodes[:, 0], 1.5))
    assert np.abs(mixed.values[iface] - f0(m.nodes[iface])).max() > 1.0


def test_mixed_tri_quad_mesh_linear():
    """A quad4 + tri3 mesh: patches mix element types; a linear field is exact."""
    nodes = np.array([[x, y] for y in (0, 1, 2) for x in (0, 1, 2, 3)], float)
    quads = [[0, 1, 5, 4], [1, 2, 6, 5], [4, 5, 9, 8], [5, 6, 10, 9]]
    tris = [[2, 3, 7], [2, 7, 6], [6, 7, 11], [6, 11, 10]]
    m = Mesh(nodes, {"quad4": quads, "tri3": tris})
    fld = GaussField(m, {"quad4": _linear(m.geometry("quad4", "full").x_cqi),
                         "tri3": _linear(m.geometry("tri3", 1).x_cqi)}, ("a", "b"),
                     points={"quad4": "full", "tri3": 1})
    nf = recover_spr(fld)
    np.testing.assert_allclose(nf.values, _linear(nodes), atol=1e-12)


def test_errors():
    m = rectangle_mesh("quad4", 1, 1)
    with pytest.raises(ValueError, match="lies in no patch with enough sampling points"):
        recover_spr(gauss_field_of(m, _linear))
    with pytest.raises(ValueError, match="needs a GaussField"):
        recover_spr(np.zeros(3))
    with pytest.raises(ValueError, match="rcond"):
        recover_spr(gauss_field_of(rectangle_mesh("quad4", 3, 3), _linear), rcond=2.0)


def test_rows_match_dofmap():
    m = rectangle_mesh("tri6", 3, 3, regions=lambda c: (c[:, 1] > 0.5).astype(int))
    nf = recover_spr(gauss_field_of(m, _linear, 3))
    d = DofMap(m, across_regions=False)
    np.testing.assert_array_equal(nf.node, d.node)
    np.testing.assert_array_equal(nf.region, d.region)
