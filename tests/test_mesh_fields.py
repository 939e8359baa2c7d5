"""Mesh and field validation: every bad input raises a ValueError that names
the block, cell and problem (nothing is silently dropped)."""
import numpy as np
import pytest

from toolkit import GaussField, Mesh, NodalField
from toolkit.errors import InputError
from toolkit.fem.models import rectangle_mesh

SQ = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [2, 0], [2, 1]], float)
CELLS = np.array([[0, 1, 2, 3], [1, 4, 5, 2]])


def test_valid_mesh_and_area():
    m = Mesh(SQ, {"quad4": CELLS}, regions={"quad4": [1, 2]})
    assert m.nnodes == 6 and m.ncells == 2 and list(m.regions) == [1, 2]
    np.testing.assert_allclose(m.volumes(), [1.0, 1.0])
    assert "2 quad4" in repr(m)


@pytest.mark.parametrize("cells,msg", [
    (np.array([[0, 1, 2, 3], [1, 4, 5, 9]]), "block quad4, cell 1: node index out of range"),
    (np.array([[0, 1, 2, 3], [1, 4, 4, 2]]), "block quad4, cell 1: repeated node index"),
    (np.array([[0, 1, 2, 3], [1, 2, 5, 4]]), "cell 1 \\(element 1\\): inverted element"),
    (np.array([[0, 1, 2]]), "cells must be shaped \\(m, 4\\)"),
])
def test_bad_cells(cells, msg):
    with pytest.raises(ValueError, match=msg):
        Mesh(SQ, {"quad4": cells})


def test_degenerate_element():
    nodes = np.array([[0, 0], [1, 0], [2, 0], [0, 1]], float)
    with pytest.raises(ValueError, match="degenerate element"):
        Mesh(nodes, {"tri3": [[0, 1, 2]]})


def test_bad_nodes_and_names():
    with pytest.raises(ValueError, match="node row 1 has a non-finite coordinate"):
        Mesh(np.array([[0, 0], [np.nan, 0], [0, 1]]), {"tri3": [[0, 1, 2]]})
    with pytest.raises(ValueError, match="unknown element type"):
        Mesh(SQ, {"quad5": CELLS})
    with pytest.raises(ValueError, match="3D element in a mesh with 2D nodes"):
        Mesh(SQ, {"tet4": [[0, 1, 2, 3]]})
    with pytest.raises(ValueError, match="node_ids are not unique"):
        Mesh(SQ, {"quad4": CELLS}, node_ids=[1, 1, 2, 3, 4, 5])
    with pytest.raises(ValueError, match="regions must be 2 integers"):
        Mesh(SQ, {"quad4": CELLS}, regions={"quad4": [1]})


def test_gauss_field_validation():
    m = Mesh(SQ, {"quad4": CELLS}, cell_ids={"quad4": [101, 102]})
    ok = np.ones((2, 4, 3))
    f = GaussField(m, {"quad4": ok}, ("sxx", "syy", "sxy"))
    assert f.ncomponents == 3 and "gauss 2x2" in repr(f)
    with pytest.raises(ValueError, match="expected \\(cells, points, components\\) = \\(2, 4, 3\\)"):
        GaussField(m, {"quad4": np.ones((2, 9, 3))}, ("sxx", "syy", "sxy"))
    bad = ok.copy()
    bad[1, 2, 0] = np.nan
    with pytest.raises(ValueError, match="cell 1 \\(element 102\\): value of sxx at point 2 is nan"):
        GaussField(m, {"quad4": bad}, ("sxx", "syy", "sxy"))
    with pytest.raises(ValueError, match="components must be distinct"):
        GaussField(m, {"quad4": ok}, ("sxx", "sxx", "sxy"))
    with pytest.raises(ValueError, match="values missing for block"):
        GaussField(Mesh(np.r_[SQ, [[3, 0]]], {"quad4": CELLS, "tri3": [[4, 6, 5]]}), {"quad4": ok}, "abc")
    with pytest.raises(ValueError, match="outside the reference quad"):
        GaussField(m, {"quad4": ok[:, :1]}, ("a", "b", "c"), points=np.array([[1.5, 0.0]]))
    # reduced rule by name
    g = GaussField(m, {"quad4": ok[:, :1]}, ("a", "b", "c"), points="reduced")
    assert g.points["quad4"].shape == (1, 2)


def test_nodal_field_to_array_and_regions():
    m = Mesh(SQ, {"quad4": CELLS}, regions={"quad4": [1, 2]})
    nf = NodalField(m, np.arange(8.0)[:, None], ("s",), node=[0, 1, 1, 2, 2, 3, 4, 5],
                    region=[1, 1, 2, 1, 2, 1, 2, 2])
    assert list(nf.split_nodes) == [1, 2]
    with pytest.raises(ValueError, match="pass region"):
        nf.to_array()
    a = nf.to_array(region=2)
    assert np.isnan(a[0, 0]) and a[1, 0] == 2.0 and a[5, 0] == 7.0
    assert "2 nodes on region boundaries" in repr(nf)


def test_geometry_shapes_and_physical_points():
    m = rectangle_mesh("quad8", 2, 2, size=(2.0, 1.0))
    g = m.geometry("quad8", "full", gradients=True)
    assert g.x_cqi.shape == (4, 9, 2) and g.dNdx_cqki.shape == (4, 9, 8, 2)
    np.testing.assert_allclose(g.dV_cq.sum(), 2.0)
    # gradients of x itself are the identity
    xe = m.nodes[m.block("quad8").cells]
    np.testing.assert_allclose(np.einsum("cki,cqkj->cqij", xe, g.dNdx_cqki), np.broadcast_to(np.eye(2), (4, 9, 2, 2)),
                               atol=1e-13)


def test_regions_and_used_nodes_are_computed_once_and_read_only():
    """The mesh is immutable, so its region list and used-node mask are
    cached; the cached arrays cannot be changed by a caller."""
    nodes = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [2, 0], [5, 5]], dtype=float)
    m = Mesh(nodes, {"quad4": [[0, 1, 2, 3]], "tri3": [[1, 4, 2]]}, regions={"quad4": [7], "tri3": [3]})
    assert m.regions is m.regions and m.used_nodes() is m.used_nodes()
    np.testing.assert_array_equal(m.regions, [3, 7])
    np.testing.assert_array_equal(m.used_nodes(), [True, True, True, True, True, False])
    for a in (m.regions, m.used_nodes()):
        with pytest.raises(ValueError):
            a[0] = a[1]


def test_node_index_beyond_32_bits_is_out_of_range_not_wrapped():
    """A cell index of 2**32 + 3 must be refused as out of range, not narrowed
    to 32 bits first and read as node 3."""
    nodes = [[0, 0], [1, 0], [1, 1], [0, 1]]
    with pytest.raises(InputError, match="out of range"):
        Mesh(nodes, {"quad4": np.array([[0, 1, 2, 2**32 + 3]], dtype=np.int64)})
    m = Mesh(nodes, {"quad4": np.array([[0, 1, 2, 3]], dtype=np.int64)})
    assert m.block("quad4").cells.dtype == np.int32            # narrowed after the check
