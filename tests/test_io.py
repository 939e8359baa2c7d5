"""Neutral result folder, .npz form and VTU export (toolkit.io)."""
from __future__ import annotations

import json
import shutil
import string
import tempfile
from pathlib import Path

import meshio
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from toolkit import GaussField, project_l2
from toolkit.core.elements import ELEMENTS
from helpers import demo_bracket
from toolkit.io import (FORMAT, VTK_CELL_TYPES, read_about, read_mesh, read_results, write_nodal_csv,
                        write_results, write_vtu)
from toolkit.core.mesh import Mesh
from toolkit.fem.models import box_mesh, rectangle_mesh

FILES = ("nodes.csv", "elements.csv", "gauss.csv", "about.json")
DEMO = Path(__file__).resolve().parents[1] / "data" / "demo_bracket"


# ---------------------------------------------------------------------------
# models
# ---------------------------------------------------------------------------
def _merge(meshes, seed=0, regions=None):
    """One mesh from several (nodes at the same place are merged), with
    scattered, gapped, partly negative ids."""
    nodes = np.concatenate([m.nodes for m in meshes])
    key = np.round(nodes, 10)
    uniq, first, inv = np.unique(key, axis=0, return_index=True, return_inverse=True)
    inv = inv.ravel()
    off = np.cumsum([0] + [m.nnodes for m in meshes])
    rng = np.random.default_rng(seed)
    order = rng.permutation(len(uniq))            # shuffled node rows
    new = np.empty(len(uniq), dtype=np.int64)
    new[order] = np.arange(len(uniq))
    blocks, regs, ids = {}, {}, {}
    start = 0
    for i, m in enumerate(meshes):
        for b in m.blocks:
            blocks[b.name] = new[inv[b.cells + off[i]]]
            regs[b.name] = b.regions + i + (0 if regions is None else regions)
            ids[b.name] = 7 * (rng.permutation(len(b)) + start) - 50
            start += len(b)
    node_ids = 3 * rng.permutation(len(uniq)) - 1000
    return Mesh(nodes[first][order], blocks, regions=regs, node_ids=node_ids, cell_ids=ids)


def model_2d(seed=0, points="full"):
    a = rectangle_mesh("quad8", 3, 2, distort=0.3, seed=1)
    b = rectangle_mesh("tri6", 2, 2, origin=(1.0, 0.0), distort=0.2, seed=2)
    mesh = _merge([a, b], seed)
    return mesh, _random_field(mesh, seed, points)


def model_3d(seed=0, points="full"):
    a = box_mesh("hex20", 2, 1, 1, distort=0.2, seed=3)
    b = box_mesh("tet10", 1, 1, 1, origin=(1.0, 0.0, 0.0), distort=0.0)
    mesh = _merge([a, b], seed)
    return mesh, _random_field(mesh, seed, points, comps=("sxx", "syy", "szz", "sxy", "syz", "sxz"))


def _random_field(mesh, seed, points, comps=("sxx", "syy", "sxy")):
    """Values over the whole double range, with the awkward ones included:
    -0.0, the smallest subnormal, the largest double, 0.1."""
    rng = np.random.default_rng(seed + 100)
    vals = {}
    for b in mesh.blocks:
        q = b.element.rule(points).npoints
        v = rng.standard_normal((len(b), q, len(comps))) * 10.0 ** rng.uniform(-300, 300, (len(b), q, len(comps)))
        v.flat[:4] = [-0.0, 5e-324, 1.7976931348623157e308, 0.1]
        vals[b.name] = v
    return GaussField(mesh, vals, comps, points=points)


def assert_same_model(m1, f1, m2, f2):
    assert np.array_equal(m1.nodes, m2.nodes)
    assert np.array_equal(m1.node_ids, m2.node_ids)
    assert [b.name for b in m1.blocks] == [b.name for b in m2.blocks]
    for b1, b2 in zip(m1.blocks, m2.blocks):
        assert np.array_equal(b1.cells, b2.cells)
        assert np.array_equal(b1.regions, b2.regions)
        assert np.array_equal(b1.ids, b2.ids)
        assert np.array_equal(f1.values[b1.name], f2.values[b2.name])
        # the bit pattern too (keeps -0.0 apart from 0.0)
        assert f1.values[b1.name].tobytes() == f2.values[b2.name].tobytes()
        assert np.array_equal(f1.points[b1.name], f2.points[b2.name])
    assert f1.components == f2.components


def _copy(src: Path, dst: Path) -> Path:
    shutil.copytree(src, dst)
    return dst


# ---------------------------------------------------------------------------
# lossless round trips
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("coordinates", [True, False])
@pytest.mark.parametrize("make", [model_2d, model_3d])
def test_csv_round_trip_is_exact(tmp_path, make, coordinates):
    # A double written with 17 significant digits reads back to the same
    # double (IEEE 754-2008, 5.12.2); Python's repr uses the shortest such string.
    mesh, field = make()
    write_results(tmp_path / "a", mesh, field, coordinates=coordinates)
    m2, f2 = read_results(tmp_path / "a")
    assert_same_model(mesh, field, m2, f2)
    write_results(tmp_path / "b", m2, f2, coordinates=coordinates)
    for name in FILES:
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()


def test_csv_layout(tmp_path):
    mesh, field = model_2d()
    write_results(tmp_path, mesh, field)
    lines = (tmp_path / "elements.csv").read_text().splitlines()
    assert lines[0] == "element,type,region,n1,n2,n3,n4,n5,n6,n7,n8"      # K = 8, the largest node count
    tri = [l for l in lines if ",tri6," in l][0].split(",")
    assert tri[-2:] == ["", ""] and len(tri) == 11                         # shorter types leave cells empty
    assert (tmp_path / "nodes.csv").read_text().splitlines()[0] == "node,x,y"
    assert (tmp_path / "gauss.csv").read_text().splitlines()[0] == "element,point,x,y,sxx,syy,sxy"
    about = json.loads((tmp_path / "about.json").read_text())
    assert about["format"] == FORMAT and about["points"] == "full"


@pytest.mark.parametrize("make", [model_2d, model_3d])
def test_npz_round_trip_is_exact(tmp_path, make):
    mesh, field = make()
    write_results(tmp_path / "x.npz", mesh, field)
    m2, f2 = read_results(tmp_path / "x.npz")
    assert_same_model(mesh, field, m2, f2)
    assert f2.rule_labels == field.rule_labels
    assert read_mesh(tmp_path / "x.npz").nnodes == mesh.nnodes


def test_npz_keeps_custom_points_and_metadata(tmp_path):
    mesh = rectangle_mesh("quad4", 2, 2)
    pts = np.array([[-0.5, -0.5], [0.5, -0.5], [0.5, 0.5], [-0.5, 0.5]])      # not a Gauss rule
    f = GaussField(mesh, {"quad4": np.arange(48.0).reshape(4, 4, 3)}, ("a", "b", "c"), points=pts, name="strain")
    write_results(tmp_path / "s.npz", mesh, f, about={"units": "1", "description": "test"})
    m2, f2 = read_results(tmp_path / "s.npz")
    assert np.array_equal(f2.points["quad4"], pts) and f2.name == "strain"
    assert read_about(tmp_path / "s.npz")["description"] == "test"
    with pytest.raises(ValueError, match="coordinates=True"):
        write_results(tmp_path / "s", mesh, f, coordinates=False)


# ---------------------------------------------------------------------------
# points matched by coordinates
# ---------------------------------------------------------------------------
def _rows(path):
    lines = path.read_text().splitlines()
    return lines[0], lines[1:]


def test_point_order_does_not_matter_when_coordinates_are_given(tmp_path):
    mesh, field = model_2d(seed=4)
    field = GaussField(mesh, {k: np.tanh(v) for k, v in field.values.items()}, field.components)
    write_results(tmp_path, mesh, field)
    header, rows = _rows(tmp_path / "gauss.csv")
    rng = np.random.default_rng(5)
    # renumber the points of every element at random, then shuffle all rows
    cells = [r.split(",") for r in rows]
    by_elem = {}
    for c in cells:
        by_elem.setdefault(c[0], []).append(c)
    for group in by_elem.values():
        for c, p in zip(group, rng.permutation(len(group)) + 1):
            c[1] = str(p)
    rows = [",".join(c) for c in cells]
    rows = [rows[i] for i in rng.permutation(len(rows))]
    (tmp_path / "gauss.csv").write_text(header + "\n" + "\n".join(rows) + "\n")
    (tmp_path / "about.json").unlink()
    m2, f2 = read_results(tmp_path)
    for b in mesh.blocks:
        assert np.array_equal(f2.values[b.name], field.values[b.name])
        assert f2.rule_labels[b.name] == field.rule_labels[b.name]
    assert np.array_equal(project_l2(f2).values, project_l2(field).values)


def test_reduced_rule_is_detected_from_coordinates(tmp_path):
    mesh, field = model_2d(seed=6, points="reduced")
    write_results(tmp_path, mesh, field)
    (tmp_path / "about.json").unlink()              # nothing says which rule: the coordinates must
    m2, f2 = read_results(tmp_path)
    g = 1 / np.sqrt(3)                               # 2-point Gauss-Legendre abscissae ±1/√3 (Abramowitz & Stegun, Table 25.4)
    assert f2.rule_labels["quad8"] == "gauss 2x2"
    assert np.allclose(np.sort(np.unique(np.abs(f2.points["quad8"]))), [g])
    assert np.array_equal(f2.values["quad8"], field.values["quad8"])
    assert f2.rule_labels["tri6"] == "tri 3-point"


def test_reduced_rule_is_detected_in_3d(tmp_path):
    mesh, field = model_3d(seed=13, points="reduced")
    field = GaussField(mesh, {k: np.tanh(v) for k, v in field.values.items()}, field.components, points="reduced")
    write_results(tmp_path, mesh, field)
    (tmp_path / "about.json").unlink()
    _, f2 = read_results(tmp_path)
    assert f2.rule_labels == {"hex20": "gauss 2x2x2", "tet10": "tet 4-point"}
    # 4-point tetrahedron rule: a = (5 - sqrt 5)/20 = 0.1381966 (Keast 1986)
    assert np.allclose(np.sort(np.unique(np.round(f2.points["tet10"], 12)))[0], (5 - np.sqrt(5)) / 20)
    for b in mesh.blocks:
        assert np.array_equal(f2.values[b.name], field.values[b.name])


def test_unused_nodes_survive(tmp_path):
    base = rectangle_mesh("quad4", 2, 1)
    nodes = np.r_[base.nodes, [[5.0, 5.0]]]                   # a node in no element
    mesh = Mesh(nodes, {"quad4": base.block("quad4").cells}, node_ids=np.arange(len(nodes)) + 10)
    f = GaussField(mesh, {"quad4": np.ones((2, 4, 1))}, ("s",))
    write_results(tmp_path / "u", mesh, f)
    m2, _ = read_results(tmp_path / "u")
    assert np.array_equal(m2.nodes, nodes) and m2.used_nodes().sum() == len(nodes) - 1
    write_vtu(tmp_path / "u.vtu", mesh, nodal=project_l2(f), field=f)
    assert np.isnan(meshio.read(tmp_path / "u.vtu").point_data["s"][-1])


def test_other_rules_are_detected_from_coordinates(tmp_path):
    mesh = rectangle_mesh("tri6", 2, 2, distort=0.2)
    rule = ELEMENTS["tri6"].rule(6)                  # degree-4 six-point rule
    f = GaussField(mesh, {"tri6": np.random.default_rng(0).standard_normal((8, 6, 1))}, ("s",), points=6)
    write_results(tmp_path, mesh, f)
    (tmp_path / "about.json").unlink()
    _, f2 = read_results(tmp_path)
    assert f2.rule_labels["tri6"] == rule.name and np.array_equal(f2.points["tri6"], rule.points)
    assert np.array_equal(f2.values["tri6"], f.values["tri6"])


def test_points_of_no_rule_are_matched_to_the_first_element(tmp_path):
    mesh = rectangle_mesh("quad8", 3, 3, distort=0.3, seed=2)
    pts = np.array([[-0.5, -0.5], [0.5, -0.5], [0.5, 0.5], [-0.5, 0.5]])
    v = np.random.default_rng(1).standard_normal((9, 4, 2))
    f = GaussField(mesh, {"quad8": v}, ("a", "b"), points=pts)
    write_results(tmp_path, mesh, f)
    header, rows = _rows(tmp_path / "gauss.csv")
    rows = [rows[i] for i in np.random.default_rng(2).permutation(len(rows))]
    (tmp_path / "gauss.csv").write_text(header + "\n" + "\n".join(rows) + "\n")
    _, f2 = read_results(tmp_path)
    assert np.allclose(f2.points["quad8"], pts, atol=1e-12)
    assert np.array_equal(f2.values["quad8"], v)


def test_point_outside_its_element_is_reported(tmp_path):
    mesh, field = model_2d(seed=7)
    write_results(tmp_path, mesh, field)
    header, rows = _rows(tmp_path / "gauss.csv")
    c = rows[20].split(",")
    c[2] = repr(float(c[2]) + 0.6)                   # into a neighbouring element
    rows[20] = ",".join(c)
    (tmp_path / "gauss.csv").write_text(header + "\n" + "\n".join(rows) + "\n")
    with pytest.raises(ValueError) as e:
        read_results(tmp_path)
    msg = str(e.value)
    assert "gauss.csv, row 21 (line 22)" in msg and f"element {c[0]}" in msg and "outside" in msg


def _move_element_1_points(folder, mesh, natural):
    """Rewrite the coordinates of element 1's four points in ``folder/gauss.csv``
    to the physical places of ``natural`` (4, 2), and drop about.json so the
    reader must match the points by their coordinates."""
    header, rows = _rows(folder / "gauss.csv")
    x = mesh.geometry("quad4", natural).x_cqi[1]
    for p in range(4):
        c = rows[4 + p].split(",")
        c[2], c[3] = repr(float(x[p, 0])), repr(float(x[p, 1]))
        rows[4 + p] = ",".join(c)
    (folder / "gauss.csv").write_text(header + "\n" + "\n".join(rows) + "\n")
    (folder / "about.json").unlink()


def test_mismatched_point_sets_are_reported(tmp_path):
    mesh = rectangle_mesh("quad4", 3, 1)
    f = GaussField(mesh, {"quad4": np.ones((3, 4, 1))}, ("s",))
    write_results(tmp_path, mesh, f)
    # element 1 gets its four points at ±0.3 instead of ±1/√3
    _move_element_1_points(tmp_path, mesh, np.array([[-.3, -.3], [.3, -.3], [-.3, .3], [.3, .3]]))
    with pytest.raises(ValueError, match=r"gauss\.csv, row 5 \(line 6\): point 1 of element 1 .*same set of points"):
        read_results(tmp_path)


def test_about_points_reduced_without_coordinates(tmp_path):
    mesh, field = model_2d(seed=8, points="reduced")
    write_results(tmp_path, mesh, field, coordinates=False)
    # a tri6's reduced rule is its full rule (3 points), so it is written as "full"
    assert json.loads((tmp_path / "about.json").read_text())["points"] == {"quad8": "reduced", "tri6": "full"}
    _, f2 = read_results(tmp_path)
    assert np.array_equal(f2.values["quad8"], field.values["quad8"])
    (tmp_path / "about.json").unlink()               # default: the full rule (9 points on a quad8)
    with pytest.raises(ValueError, match=r"gauss\.csv: element -?\d+ .* has 4 of its 9 points .*missing point\(s\) 5"):
        read_results(tmp_path)


def test_about_rule_contradicting_coordinates(tmp_path):
    mesh, field = model_2d(seed=9)
    write_results(tmp_path, mesh, field)
    (tmp_path / "about.json").write_text('{"points": {"quad8": "reduced"}}')
    with pytest.raises(ValueError, match=r"about\.json: says the quad8 values sit at the 'reduced' rule"):
        read_results(tmp_path)


def test_lenient_layout_reads_the_same(tmp_path):
    """CRLF, a byte-order mark, blank and blank-looking lines, spaces around
    cells, shuffled column order and omitted trailing node cells."""
    mesh, field = model_2d(seed=10)
    write_results(tmp_path / "a", mesh, field)
    b = _copy(tmp_path / "a", tmp_path / "b")
    for name in ("nodes.csv", "gauss.csv"):
        header, rows = _rows(b / name)
        rows = [" , ".join(r.split(",")) for r in rows]
        rows.insert(3, "   ")
        rows.insert(5, "")
        (b / name).write_bytes(("\ufeff" + header + "\r\n" + "\r\n".join(rows) + "\r\n").encode("utf-8"))
    header, rows = _rows(b / "elements.csv")
    perm = [2, 0, 1] + list(range(3, len(header.split(","))))          # region,element,type,n1..
    fix = lambda r: ",".join(np.array(r.split(","), dtype=object)[perm]).rstrip(",")
    (b / "elements.csv").write_text(fix(header) + "\n" + "\n".join(fix(r) for r in rows) + "\n")
    m2, f2 = read_results(b)
    assert_same_model(mesh, field, m2, f2)


# ---------------------------------------------------------------------------
# every error path names the file and the row or element
# ---------------------------------------------------------------------------
def _cell(r, c, v):
    def f(lines):
        cells = lines[r].split(",")
        cells[c] = v
        lines[r] = ",".join(cells)
        return lines
    return f


def _drop_col(c):
    return lambda lines: [",".join(x.split(",")[:c] + x.split(",")[c + 1:]) for x in lines if x]


ERRORS = [
    ("nodes.csv", _cell(5, 1, "1.2.3"), r"nodes\.csv, row 5 \(line 6\), column 'x': malformed number '1\.2\.3'"),
    ("nodes.csv", _cell(5, 2, ""), r"nodes\.csv, row 5 \(line 6\), column 'y': empty cell"),
    ("nodes.csv", _cell(5, 0, "12a"), r"nodes\.csv, row 5 \(line 6\), column 'node': malformed integer '12a'"),
    ("nodes.csv", _cell(5, 0, "1.0"), r"nodes\.csv, row 5 \(line 6\), column 'node': malformed integer"),
    ("nodes.csv", _cell(5, 1, "nan"), r"nodes\.csv, row 5 \(line 6\): coordinate x of node -?\d+ is nan"),
    ("nodes.csv", _cell(5, 2, "-inf"), r"nodes\.csv, row 5 \(line 6\): coordinate y of node -?\d+ is -inf"),
    ("nodes.csv", _cell(5, 1, "1e999"), r"nodes\.csv, row 5 \(line 6\): coordinate x of node -?\d+ is inf"),
    ("nodes.csv", _drop_col(2), r"nodes\.csv: missing column 'y'"),
    ("nodes.csv", lambda l: [l[0] + ",w"] + [x + ",1" for x in l[1:] if x], r"nodes\.csv: unexpected column 'w'"),
    ("nodes.csv", lambda l: l[:6] + [l[1]] + l[6:], r"nodes\.csv, row 6 \(line 7\): duplicate node id -?\d+ \(also on row 1\)"),
    ("nodes.csv", lambda l: l[:4] + [l[4] + ",7"] + l[5:], r"nodes\.csv, row 4 \(line 5\): 4 cells, but the header has 3"),
    ("nodes.csv", lambda l: l[:4] + ["5,1"] + l[5:], r"nodes\.csv, row 4 \(line 5\): 2 cells, but the header has 3 columns \(no value for 'y'\)"),
    ("nodes.csv", lambda l: [""], r"nodes\.csv: line 1 must be the header"),
    ("nodes.csv", lambda l: [l[0]], r"nodes\.csv: no data rows"),
    ("elements.csv", _cell(3, 1, "quad7"), r"elements\.csv, row 3 \(line 4\): unknown element type 'quad7'"),
    ("elements.csv", _cell(3, 1, ""), r"elements\.csv, row 3 \(line 4\), column 'type': empty cell"),
    ("elements.csv", _cell(3, 10, ""), r"elements\.csv, row 3 \(line 4\): element -?\d+ is a quad8 with 8 nodes, but the row gives 7"),
    ("elements.csv", _cell(9, 9, "5"), r"elements\.csv, row 9 \(line 10\): element -?\d+ is a tri6 with 6 nodes, but the row gives 7"),
    ("elements.csv", _cell(3, 5, "999999"), r"elements\.csv, row 3 \(line 4\): node id 999999 \(column n3\) of element -?\d+ is not in .*nodes\.csv"),
    ("elements.csv", _cell(3, 5, "x"), r"elements\.csv, row 3 \(line 4\), column 'n3': malformed integer 'x'"),
    ("elements.csv", lambda l: l[:5] + [l[1]] + l[5:], r"elements\.csv, row 5 \(line 6\): duplicate element id -?\d+ \(also on row 1\)"),
    ("elements.csv", _cell(4, 2, "x"), r"elements\.csv, row 4 \(line 5\), column 'region': malformed integer 'x'"),
    ("elements.csv", _drop_col(1), r"elements\.csv: missing column 'type'"),
    ("elements.csv", _drop_col(10), r"elements\.csv, row \d+ \(line \d+\): a quad8 needs 8 node columns, the header has n1\.\.n7"),
    ("elements.csv", lambda l: [l[0].replace("n3", "n9")] + l[1:], r"elements\.csv: node columns must be n1\.\.n8 without gaps"),
    ("elements.csv", _cell(1, 1, "hex8"), r"elements\.csv, row 1 \(line 2\): element -?\d+ is a hex8 \(3D\) but .*nodes\.csv gives 2D"),
    ("elements.csv", lambda l: _cell(1, 4, l[1].split(",")[3])(l), r"elements\.csv, row 1 \(line 2\): element -?\d+ lists node -?\d+ twice"),
    ("gauss.csv", _cell(10, 4, "abc"), r"gauss\.csv, row 10 \(line 11\), column 'sxx': malformed number 'abc'"),
    ("gauss.csv", _cell(10, 5, "inf"), r"gauss\.csv, row 10 \(line 11\): syy is inf at point \d+ of element -?\d+"),
    ("gauss.csv", _cell(10, 6, "NaN"), r"gauss\.csv, row 10 \(line 11\): sxy is nan"),
    ("gauss.csv", _cell(10, 2, "nan"), r"gauss\.csv, row 10 \(line 11\): coordinates .* are not finite"),
    ("gauss.csv", _cell(10, 1, "0"), r"gauss\.csv, row 10 \(line 11\): point number 0 .*start at 1"),
    ("gauss.csv", _cell(10, 0, "123456"), r"gauss\.csv, row 10 \(line 11\): element 123456 is not in .*elements\.csv"),
    ("gauss.csv", lambda l: l[:11] + [l[10]] + l[11:], r"gauss\.csv, row 11 \(line 12\): point \d+ of element -?\d+ is given twice \(also on row 10\)"),
    ("gauss.csv", lambda l: l[:10] + l[11:], r"gauss\.csv: element -?\d+ has 8 points, but element -?\d+ \(the first quad8\) has 9"),
    ("gauss.csv", _cell(10, 1, "12"), r"gauss\.csv, row 10 \(line 11\): point 12 of element -?\d+; the 9 points of each quad8 are numbered 1\.\.9"),
    ("gauss.csv", lambda l: [x for x in l if not x.startswith(l[1].split(",")[0] + ",")],
     r"gauss\.csv: element -?\d+ \(.*elements\.csv, row 1\) has no rows in gauss\.csv"),
    ("gauss.csv", _drop_col(0), r"gauss\.csv: missing column 'element'"),
    ("gauss.csv", _drop_col(1), r"gauss\.csv: missing column 'point'"),
    ("gauss.csv", _drop_col(3), r"gauss\.csv: coordinate columns x do not fit a 2D model"),
    ("gauss.csv", lambda l: [",".join(x.split(",")[:4]) for x in l if x], r"gauss\.csv: no component columns"),
    ("gauss.csv", lambda l: [l[0].replace("syy", "SXX")] + l[1:], r"gauss\.csv: header names column 'SXX' twice"),
    ("gauss.csv", lambda l: [l[0].replace("syy", "")] + l[1:], r"gauss\.csv: header column 6 has no name"),
    ("about.json", lambda l: ['{"point": "full"}'], r"about\.json: unknown key 'point'"),
    ("about.json", lambda l: ['{"points": "full",}'], r"about\.json: not valid JSON \(line 1, column 19"),
    ("about.json", lambda l: ['{"points": "half"}'], r"about\.json: 'points' must be"),
    ("about.json", lambda l: ['{"points": 5}'], r"about\.json: quad8: a tensor Gauss rule has n\^2 points, not 5"),
    ("about.json", lambda l: ['{"points": {"quad-8": "full"}}'], r"about\.json: 'points': unknown element type 'quad-8'"),
    ("about.json", lambda l: ['{"format": "other/2"}'], r"about\.json: format 'other/2'"),
    ("about.json", lambda l: ['{"units": 5}'], r"about\.json: 'units' must be"),
    ("about.json", lambda l: ['[1, 2]'], r"about\.json: must be a JSON object"),
]


@pytest.fixture(scope="module")
def good_folder(tmp_path_factory):
    d = tmp_path_factory.mktemp("good")
    mesh, field = model_2d(seed=11)
    write_results(d, mesh, field)
    return d


@pytest.mark.parametrize("fname, mutate, pattern", ERRORS, ids=[f"{e[0]}-{i}" for i, e in enumerate(ERRORS)])
def test_bad_input_raises_a_value_error_naming_file_and_row(tmp_path, good_folder, fname, mutate, pattern):
    d = _copy(good_folder, tmp_path / "r")
    p = d / fname
    p.write_text("\n".join(mutate(p.read_text().split("\n"))))
    with pytest.raises(ValueError, match=pattern):
        read_results(d)


def test_error_rows_count_data_rows_and_name_lines(tmp_path, good_folder):
    # blank lines are not data rows; the message gives both numbers
    d = _copy(good_folder, tmp_path / "r")
    lines = (d / "nodes.csv").read_text().split("\n")
    lines = lines[:3] + ["", "  "] + lines[3:]
    lines[8] = lines[8].replace(lines[8].split(",")[1], "oops", 1)
    (d / "nodes.csv").write_text("\n".join(lines))
    with pytest.raises(ValueError, match=r"nodes\.csv, row 6 \(line 9\), column 'x': malformed number 'oops'"):
        read_results(d)


def test_missing_folder_and_files(tmp_path, good_folder):
    with pytest.raises(ValueError, match="no such result folder"):
        read_results(tmp_path / "nothing")
    with pytest.raises(ValueError, match="no such .npz file"):
        read_results(tmp_path / "nothing.npz")
    d = _copy(good_folder, tmp_path / "r")
    (d / "gauss.csv").unlink()
    with pytest.raises(ValueError, match=r"gauss\.csv: file not found"):
        read_results(d)
    (tmp_path / "bad.npz").write_bytes(b"not a zip")
    with pytest.raises(ValueError, match=r"bad\.npz: not a readable \.npz results file"):
        read_results(tmp_path / "bad.npz")


def test_npz_missing_array(tmp_path):
    mesh, field = model_2d()
    write_results(tmp_path / "x.npz", mesh, field)
    with np.load(tmp_path / "x.npz") as z:
        arrays = {k: z[k] for k in z.files if k != "tri6.values"}
    np.savez(tmp_path / "y.npz", **arrays)
    with pytest.raises(ValueError, match=r"y\.npz: missing array 'tri6\.values'"):
        read_results(tmp_path / "y.npz")


def test_writer_refuses_unwritable_names_and_foreign_fields(tmp_path):
    mesh = rectangle_mesh("quad4", 1, 1)
    f = GaussField(mesh, {"quad4": np.zeros((1, 4, 1))}, ("a,b",))
    with pytest.raises(ValueError, match="cannot be written"):
        write_results(tmp_path, mesh, f)
    with pytest.raises(ValueError, match="another mesh"):
        write_results(tmp_path, rectangle_mesh("quad4", 1, 1), f)
    with pytest.raises(ValueError, match="'points' is written from the model"):
        write_results(tmp_path, mesh, GaussField(mesh, {"quad4": np.zeros((1, 4, 1))}, ("a",)),
                      about={"points": "full"})


# ---------------------------------------------------------------------------
# fuzzing: any damage to the files gives success or a ValueError naming a file
# ---------------------------------------------------------------------------
_TOKENS = st.sampled_from(["", " ", "abc", "1e999", "-1e999", "nan", "inf", "-", "+", "1.5", "0x1f", "1_0",
                           "9" * 30, "-9223372036854775808", "quad8", "tri6", "hex20", "QUAD8", "1,2", '"3"',
                           "\x00", "é", "٣", "1e5", "-0", "2", "1001", ";", "\t7\t"])


@st.composite
def damage(draw):
    ops = []
    for _ in range(draw(st.integers(1, 4))):
        kind = draw(st.sampled_from(["cell", "cell", "text_cell", "drop_col", "dup_row", "del_row",
                                     "garbage_row", "header", "truncate"]))
        ops.append((kind, draw(st.sampled_from(FILES[:3])), draw(st.integers(0, 10_000)),
                    draw(st.integers(0, 20)), draw(_TOKENS),
                    draw(st.text(alphabet=string.printable + "é\x00", max_size=40))))
    return ops


def _apply(lines, op):
    kind, _, r, c, tok, text = op
    n = len(lines)
    r = r % max(n, 1)
    if kind in ("cell", "text_cell") and n:
        cells = lines[r].split(",")
        cells[c % len(cells)] = tok if kind == "cell" else text
        lines[r] = ",".join(cells)
    elif kind == "drop_col":
        lines = [",".join(x.split(",")[:c] + x.split(",")[c + 1:]) for x in lines]
    elif kind == "dup_row" and n:
        lines.insert(r, lines[r])
    elif kind == "del_row" and n:
        del lines[r]
    elif kind == "garbage_row":
        lines.insert(r, text)
    elif kind == "header" and n:
        lines[0] = text
    elif kind == "truncate":
        lines = lines[:r]
    return lines


@pytest.fixture(scope="module")
def fuzz_base(tmp_path_factory):
    d = tmp_path_factory.mktemp("fuzz")
    mesh = _merge([rectangle_mesh("quad8", 2, 1, distort=0.2, seed=1),
                   rectangle_mesh("tri6", 1, 1, origin=(1.0, 0.0))])
    f = GaussField(mesh, {b.name: np.ones((len(b), b.element.rule("full").npoints, 2)) for b in mesh.blocks},
                   ("sxx", "syy"))
    write_results(d, mesh, f)
    return {name: (d / name).read_text() for name in FILES}


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ops=damage())
def test_fuzzed_files_raise_only_value_errors_naming_the_file(fuzz_base, ops):
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        texts = {k: v.split("\n") for k, v in fuzz_base.items()}
        for op in ops:
            texts[op[1]] = _apply(texts[op[1]], op)
        for name, lines in texts.items():
            (d / name).write_text("\n".join(lines), encoding="utf-8")
        try:
            mesh, field = read_results(d)
        except ValueError as e:
            assert any(name in str(e) for name in FILES), str(e)
        else:
            assert isinstance(field, GaussField) and field.mesh is mesh


# ---------------------------------------------------------------------------
# VTU
# ---------------------------------------------------------------------------
# Node orders of the VTK cells, from the VTK class documentation: mid-edge
# nodes of vtkQuadraticTriangle on edges (0,1), (1,2), (2,0); vtkQuadraticQuad
# and vtkBiQuadraticQuad on (0,1), (1,2), (2,3), (3,0) (the latter's node 8 at
# the centre); vtkQuadraticTetra on (0,1), (1,2), (2,0), (0,3), (1,3), (2,3);
# vtkQuadraticHexahedron on (0,1), (1,2), (2,3), (3,0), (4,5), (5,6), (6,7),
# (7,4), (0,4), (1,5), (2,6), (3,7).  vtkHexahedron: face 0-1-2-3, then 4-7
# above 0-3; vtkTetra: 0-1-2 counter-clockwise seen from node 3.
VTK_EDGES = {
    "tri6": [(0, 1), (1, 2), (2, 0)],
    "quad8": [(0, 1), (1, 2), (2, 3), (3, 0)],
    "quad9": [(0, 1), (1, 2), (2, 3), (3, 0)],
    "tet10": [(0, 1), (1, 2), (2, 0), (0, 3), (1, 3), (2, 3)],
    "hex20": [(0, 1), (1, 2), (2, 3), (3, 0), (4, 5), (5, 6), (6, 7), (7, 4), (0, 4), (1, 5), (2, 6), (3, 7)],
}


@pytest.mark.parametrize("name", list(ELEMENTS))
def test_vtu_cells_read_back_with_vtk_node_order(tmp_path, name):
    et = ELEMENTS[name]
    # one element on its reference nodes, sheared so no two orders coincide by symmetry
    x = et.nodes @ (np.eye(et.dim) + 0.1 * np.triu(np.ones((et.dim, et.dim)), 1))
    mesh = Mesh(x, {name: np.arange(et.nnodes)[None, :]})
    write_vtu(tmp_path / "one.vtu", mesh)
    m = meshio.read(tmp_path / "one.vtu")
    assert len(m.cells) == 1 and m.cells[0].type == VTK_CELL_TYPES[name]
    assert np.array_equal(m.cells[0].data, [np.arange(et.nnodes)])
    assert np.allclose(m.points[:, :et.dim], x)
    P = m.points[m.cells[0].data[0]]
    for k, (a, b) in enumerate(VTK_EDGES.get(name, [])):
        assert np.allclose(P[et.ncorners + k], 0.5 * (P[a] + P[b]))      # mid-edge node k on VTK's edge k
    if name == "quad9":
        assert np.allclose(P[8], P[:4].mean(axis=0))
    if et.shape == "hex":
        assert np.allclose(P[4:8, 2] - P[:4, 2], 1 * 2)                  # top face above the bottom one
    if et.shape == "tet":
        assert np.linalg.det(P[1:4] - P[0]) > 0                          # 0-1-2 counter-clockwise seen from 3
    if et.shape in ("quad", "tri"):
        a, b, c = P[0], P[1], P[2]
        assert (b - a)[0] * (c - a)[1] - (b - a)[1] * (c - a)[0] > 0      # corners counter-clockwise


def test_vtu_point_and_cell_data(tmp_path):
    mesh, field = model_2d(seed=12)
    field = GaussField(mesh, {k: np.tanh(v) for k, v in field.values.items()}, field.components)
    nodal = project_l2(field, across_regions=True)
    write_vtu(tmp_path / "m.vtu", mesh, nodal=nodal, field=field)
    m = meshio.read(tmp_path / "m.vtu")
    assert np.allclose(m.points[:, :2], mesh.nodes)
    for j, c in enumerate(field.components):
        assert np.allclose(m.point_data[c], nodal.to_array()[:, j])
    assert np.array_equal(m.point_data["node_id"], mesh.node_ids)
    for i, b in enumerate(mesh.blocks):
        v = field.values[b.name]
        assert np.array_equal(m.cell_data["element_id"][i], b.ids)
        assert np.allclose(m.cell_data["sxx_mean"][i], v[:, :, 0].mean(axis=1))
        for p in range(9):
            got = m.cell_data[f"syy_gp{p + 1}"][i]
            assert np.allclose(got, v[:, p, 1]) if p < v.shape[1] else np.isnan(got).all()


def test_vtu_keeps_every_value_of_split_nodes(tmp_path):
    mesh = rectangle_mesh("quad4", 4, 2, regions=lambda c: (c[:, 0] > 0.5).astype(int))
    rng = np.random.default_rng(3)
    field = GaussField(mesh, {"quad4": rng.standard_normal((8, 4, 1))}, ("s",))
    nodal = project_l2(field)                       # one value per region at the 3 shared nodes
    assert nodal.split_nodes.size == 3
    write_vtu(tmp_path / "s.vtu", mesh, nodal=nodal)
    m = meshio.read(tmp_path / "s.vtu")
    assert len(m.points) == len(nodal.node)
    assert np.array_equal(np.sort(m.point_data["s"]), np.sort(nodal.values[:, 0]))
    b = mesh.block("quad4")
    pid = m.cells[0].data
    # each cell uses the copies of its own region, at the right place
    assert np.array_equal(m.point_data["region"][pid], np.repeat(b.regions[:, None], 4, axis=1))
    assert np.allclose(m.points[pid][..., :2], mesh.nodes[b.cells])
    assert np.array_equal(m.point_data["node_id"][pid], mesh.node_ids[b.cells])


def test_nodal_csv(tmp_path):
    mesh, field = demo_bracket("pull")
    nodal = project_l2(field)
    write_nodal_csv(tmp_path / "n.csv", nodal)
    lines = (tmp_path / "n.csv").read_text().splitlines()
    assert lines[0] == "node,region,sxx,syy,sxy" and len(lines) == len(nodal.node) + 1
    a = np.loadtxt(tmp_path / "n.csv", delimiter=",", skiprows=1)
    assert np.array_equal(a[:, 0], mesh.node_ids[nodal.node]) and np.array_equal(a[:, 2:], nodal.values)


def test_demo_bracket_folder():
    mesh, field = demo_bracket("pull")
    assert mesh.ncells == 320 and mesh.blocks[0].name == "quad8" and list(mesh.regions) == [1, 2]
    assert read_about(DEMO)["units"] == {"length": "mm", "stress": "MPa"}
    assert sum(p.stat().st_size for p in DEMO.iterdir()) < 500_000
    # the raw field is the Kirsch field: 3 x 80 MPa at the notch root (Kirsch 1898);
    # the L2 projection of the jumpy values lands close to it
    n = project_l2(field)
    root = np.argmin(np.hypot(mesh.nodes[:, 0] - 60.0, mesh.nodes[:, 1] - 32.0))
    assert abs(n.to_array(region=1)[root, 0] - 240.0) < 5.0


@pytest.mark.parametrize("shift, accepted", [(0.005, True), (0.03, False)])
def test_point_matching_tolerance_is_a_hundredth_in_natural_coordinates(tmp_path, shift, accepted):
    """Imported integration points are matched to a Gauss point within
    POINT_TOL = 0.01 in natural coordinates (the documented contract of
    toolkit.io.points): element 1's 2x2 points moved by 0.005 along xi are
    still the 2x2 rule (rounding of exported coordinates); moved by 0.03
    they are none of the first element's points and the reader says so
    instead of reading them as Gauss points."""
    mesh = rectangle_mesh("quad4", 3, 1)
    f = GaussField(mesh, {"quad4": np.arange(12.0).reshape(3, 4, 1)}, ("s",))
    write_results(tmp_path, mesh, f)
    g = 1 / np.sqrt(3)
    _move_element_1_points(tmp_path, mesh, np.array([[-g, -g], [g, -g], [-g, g], [g, g]]) + [shift, 0.0])
    if accepted:
        _, f2 = read_results(tmp_path)
        assert f2.rule_labels["quad4"] == mesh.block("quad4").element.full_rule.name
        assert np.array_equal(f2.values["quad4"], f.values["quad4"])
    else:
        with pytest.raises(ValueError, match=r"point 1 of element 1 .*same set of points"):
            read_results(tmp_path)


# ---------------------------------------------------------------------------
# sizes and types given in files are checked before anything is allocated
# ---------------------------------------------------------------------------
def test_about_huge_point_count_is_refused_fast(tmp_path):
    # behaviour: 1e8 = 10^4 x 10^4 would build a 100-million-point tensor rule (8.6 GB) before failing
    import time
    d = _copy(DEMO, tmp_path / "d")
    about = json.loads((d / "about.json").read_text()) if (d / "about.json").exists() else {}
    about["points"] = 100_000_000
    (d / "about.json").write_text(json.dumps(about))
    t0 = time.perf_counter()
    with pytest.raises(ValueError, match=r"about\.json.*'points' 100000000 is more than the 1000 integration points"):
        read_results(d)
    assert time.perf_counter() - t0 < 5.0


def test_npz_cell_index_beyond_32_bits_is_refused(tmp_path):
    # behaviour: 2**32 + 3 cast to int32 would read as node 3
    mesh, field = model_2d()
    write_results(tmp_path / "x.npz", mesh, field)
    with np.load(tmp_path / "x.npz") as z:
        arrays = {k: z[k] for k in z.files}
    cells = arrays["quad8.cells"].astype(np.int64)
    cells[0, 0] = 2**32 + 3
    arrays["quad8.cells"] = cells
    np.savez(tmp_path / "y.npz", **arrays)
    with pytest.raises(ValueError, match=r"y\.npz: array 'quad8\.cells', cell 0: node index out of range 0\.\.\d+ "
                                         r"\(\[4294967299,"):
        read_results(tmp_path / "y.npz")


@pytest.mark.parametrize("key", ["quad8.cells", "quad8.ids", "node_ids"])
def test_npz_text_where_integers_belong_is_one_line_error(tmp_path, key):
    mesh, field = model_2d()
    write_results(tmp_path / "x.npz", mesh, field)
    with np.load(tmp_path / "x.npz") as z:
        arrays = {k: z[k] for k in z.files}
    arrays[key] = arrays[key].astype(str)
    np.savez(tmp_path / "y.npz", **arrays)
    with pytest.raises(ValueError, match=rf"y\.npz: array '{key}' must hold integers, got text") as e:
        read_results(tmp_path / "y.npz")
    assert "\n" not in str(e.value)
