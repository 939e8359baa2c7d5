"""Several load cases in the neutral result folder (a ``case`` column in
gauss.csv, ``cases`` in about.json) and in the ``.npz`` form: exact round
trips, old single-case folders read unchanged, and every error path naming
the file, the row and the case.

Sources: the format is our own (README, "Results from other codes"); the
exact round trip of doubles is common practice (shortest repr reads back to
the same double, Python's float repr)."""
import json
from pathlib import Path

import numpy as np
import pytest

from toolkit import GaussField, LoadCases, read_cases, read_results, write_results
from toolkit.core.grid import rectangle_mesh
from toolkit.core.mesh import Mesh
from toolkit.errors import InputError

COMPS = ("sxx", "syy", "sxy")


def two_block_model(ncases=3, seed=4, points="full"):
    """A quad8 + tri6 mesh with scattered ids and ``ncases`` random load cases."""
    a = rectangle_mesh("quad8", 2, 2, distort=0.2, seed=1)
    b = rectangle_mesh("tri6", 2, 1, origin=(1.0, 0.0), distort=0.1, seed=2)
    nodes = np.concatenate([a.nodes, b.nodes])
    uniq, first, inv = np.unique(np.round(nodes, 10), axis=0, return_index=True, return_inverse=True)
    inv = inv.ravel()
    mesh = Mesh(nodes[first], {"quad8": inv[a.blocks[0].cells], "tri6": inv[b.blocks[0].cells + a.nnodes]},
                regions={"quad8": np.zeros(4, int), "tri6": np.ones(4, int)},
                node_ids=5 * np.arange(len(uniq)) + 11, cell_ids={"quad8": [40, 10, 30, 20], "tri6": [7, 5, 3, 1]})
    rng = np.random.default_rng(seed)
    fields = {}
    for i in range(ncases):
        vals = {bl.name: rng.normal(size=(len(bl), bl.element.rule(points).npoints, 3)) * 10.0 ** rng.uniform(
            -5, 5) for bl in mesh.blocks}
        fields[f"LC {i + 1}"] = GaussField(mesh, vals, COMPS, points=points)
    return mesh, LoadCases(fields, name="unit loads")


def assert_same_cases(c1, c2):
    assert c1.names == c2.names and c1.components == c2.components and c1.name == c2.name
    for k in c1:
        for b, v in c1[k].values.items():
            assert v.tobytes() == c2[k].values[b].tobytes()
            assert np.array_equal(c1[k].points[b], c2[k].points[b])


@pytest.mark.parametrize("target", ["folder", "res.npz"])
@pytest.mark.parametrize("coordinates", [True, False])
def test_cases_round_trip_is_exact(tmp_path, target, coordinates):
    mesh, cases = two_block_model()
    path = write_results(tmp_path / target, mesh, cases, coordinates=coordinates)
    mesh2, cases2 = read_cases(path)
    assert np.array_equal(mesh2.nodes, mesh.nodes)
    assert_same_cases(cases, cases2)
    assert mesh2.blocks[0].ids.tolist() == [40, 10, 30, 20]


def test_reduced_points_survive_the_round_trip(tmp_path):
    mesh, cases = two_block_model(2, points="reduced")
    for target in ("f", "f.npz"):
        _, back = read_cases(write_results(tmp_path / target, mesh, cases))
        assert_same_cases(cases, back)


def test_folder_layout_has_a_leading_case_column(tmp_path):
    mesh, cases = two_block_model(2)
    write_results(tmp_path / "f", mesh, cases)
    lines = (tmp_path / "f" / "gauss.csv").read_text().splitlines()
    assert lines[0] == "case,element,point,x,y,sxx,syy,sxy"
    nrows = sum(len(b) * b.element.rule("full").npoints for b in mesh.blocks)
    assert len(lines) == 1 + 2 * nrows
    assert lines[1].startswith("LC 1,40,1,") and lines[1 + nrows].startswith("LC 2,40,1,")
    about = json.loads((tmp_path / "f" / "about.json").read_text())
    assert about["cases"] == ["LC 1", "LC 2"] and about["name"] == "unit loads"


def test_single_case_folders_read_as_before(tmp_path):
    mesh, cases = two_block_model(1)
    field = cases["LC 1"]
    old = write_results(tmp_path / "old", mesh, field)                  # no case column
    assert "case" not in (old / "gauss.csv").read_text().splitlines()[0]
    m, f = read_results(old)
    assert isinstance(f, GaussField) and f.name == "field"
    m, c = read_cases(old)
    assert c.names == ("field",) and c["field"].values["quad8"].tobytes() == field.values["quad8"].tobytes()
    one = write_results(tmp_path / "one", mesh, cases)                 # a case column naming one case
    m, f = read_results(one)
    assert isinstance(f, GaussField) and f.name == "LC 1"
    m, f = read_results(write_results(tmp_path / "one.npz", mesh, cases))
    assert isinstance(f, GaussField) and f.name == "LC 1"


def test_read_results_refuses_several_cases_and_points_to_read_cases(tmp_path):
    mesh, cases = two_block_model(3)
    for target in ("f", "f.npz"):
        path = write_results(tmp_path / target, mesh, cases)
        with pytest.raises(InputError, match=r"holds 3 load cases \('LC 1', 'LC 2', 'LC 3'\); read it with read_cases"):
            read_results(path)


def test_case_order_without_about_is_first_appearance_and_rows_may_be_shuffled(tmp_path):
    mesh, cases = two_block_model(3)
    f = write_results(tmp_path / "f", mesh, cases)
    about = json.loads((f / "about.json").read_text())
    del about["cases"]
    (f / "about.json").write_text(json.dumps(about))
    lines = (f / "gauss.csv").read_text().splitlines()
    body = lines[1:]
    body = [r for r in body if r.startswith("LC 3")] + [r for r in body if not r.startswith("LC 3")][::-1]
    (f / "gauss.csv").write_text("\n".join([lines[0]] + body) + "\n")
    _, back = read_cases(f)
    assert back.names == ("LC 3", "LC 2", "LC 1")
    for k in cases:
        for b in cases[k].values:
            assert np.array_equal(back[k].values[b], cases[k].values[b])


# ---------------------------------------------------------------------------
# error paths
# ---------------------------------------------------------------------------
@pytest.fixture
def folder(tmp_path):
    mesh, cases = two_block_model(2)
    return write_results(tmp_path / "f", mesh, cases, coordinates=False)


def _edit_gauss(folder, edit):
    g = folder / "gauss.csv"
    lines = g.read_text().splitlines()
    g.write_text("\n".join(edit(lines)) + "\n")


def _edit_about(folder, edit):
    a = folder / "about.json"
    about = json.loads(a.read_text())
    edit(about)
    a.write_text(json.dumps(about))


def _set_case(lines, row, name):
    cells = lines[row].split(",")
    cells[0] = name
    lines[row] = ",".join(cells)
    return lines


def test_row_without_a_case(folder):
    _edit_gauss(folder, lambda ls: _set_case(ls, 5, ""))
    with pytest.raises(InputError, match=r"gauss.csv, row 5 \(line 6\), column 'case': empty cell"):
        read_cases(folder)


def test_case_name_too_long(folder):
    _edit_gauss(folder, lambda ls: _set_case(ls, 3, "x" * 70))
    with pytest.raises(InputError, match=r"gauss.csv, row 3 \(line 4\), column 'case': load case name .* longer"):
        read_cases(folder)


def test_case_names_differing_only_in_letter_case(folder):
    _edit_about(folder, lambda a: a.pop("cases"))
    _edit_gauss(folder, lambda ls: _set_case(ls, 7, "lc 2"))
    with pytest.raises(InputError, match=r"row 49 .*load case 'LC 2' and 'lc 2' \(row 7\) differ only in letter case"):
        read_cases(folder)


def test_case_missing_points(folder):
    _edit_gauss(folder, lambda ls: ls[:-1])               # the last point of the last element of LC 2
    with pytest.raises(InputError, match=r"element 1 .* has 2 of its 3 points .*missing point\(s\) 3 "
                                         r"\(load case 'LC 2'\)"):
        read_cases(folder)


def test_case_missing_an_element(folder):
    _edit_gauss(folder, lambda ls: [l for l in ls if not l.startswith("LC 1,30,")])
    with pytest.raises(InputError, match=r"element 30 .* has no rows in gauss.csv \(load case 'LC 1'\)"):
        read_cases(folder)


def test_point_given_twice_within_a_case(folder):
    _edit_gauss(folder, lambda ls: ls + [ls[2]])
    with pytest.raises(InputError, match=r"row \d+ .*point 2 of element 40 is given twice \(also on row 2\) "
                                         r"\(load case 'LC 1'\)"):
        read_cases(folder)


def test_case_not_listed_in_about(folder):
    _edit_gauss(folder, lambda ls: _set_case(ls, 4, "LC 9"))
    with pytest.raises(InputError, match=r"row 4 .*load case 'LC 9' is not among the cases .*about.json lists"):
        read_cases(folder)


def test_case_listed_in_about_without_rows(folder):
    _edit_about(folder, lambda a: a.update(cases=["LC 1", "LC 2", "LC 3"]))
    with pytest.raises(InputError, match=r"about.json: lists load case 'LC 3', but gauss.csv has no rows for it"):
        read_cases(folder)


def test_duplicated_case_in_about(folder):
    _edit_about(folder, lambda a: a.update(cases=["LC 1", "LC 2", "lc 1"]))
    with pytest.raises(InputError, match=r"about.json: 'cases' names load case 'lc 1' twice"):
        read_cases(folder)
    _edit_about(folder, lambda a: a.update(cases="LC 1"))
    with pytest.raises(InputError, match=r"'cases' must be a non-empty list"):
        read_cases(folder)


def test_cases_in_about_but_no_case_column(tmp_path):
    mesh, cases = two_block_model(1)
    f = write_results(tmp_path / "f", mesh, cases["LC 1"])
    _edit_about(f, lambda a: a.update(cases=["LC 1"]))
    with pytest.raises(InputError, match=r"lists load cases \['LC 1'\], but gauss.csv has no 'case' column"):
        read_cases(f)


def test_cases_at_different_points(tmp_path):
    # inconsistent point sets between cases (found from coordinates): the case is named
    mesh, cases = two_block_model(2)
    _, reduced = two_block_model(1, points="reduced")
    f = write_results(tmp_path / "f", mesh, cases)
    g = tmp_path / "g"
    write_results(g, mesh, LoadCases({"LC 2": GaussField(mesh, reduced["LC 1"].values, COMPS, points="reduced")}))
    lines = (f / "gauss.csv").read_text().splitlines()
    other = (g / "gauss.csv").read_text().splitlines()[1:]
    (f / "gauss.csv").write_text("\n".join([l for l in lines if not l.startswith("LC 2")] + other) + "\n")
    _edit_about(f, lambda a: a.pop("points"))                  # the points come from the coordinates alone
    with pytest.raises(InputError, match=r"gauss.csv: load case 'LC 2': block quad8 sits at gauss 2x2, load case "
                                         r"'LC 1' at gauss 3x3"):
        read_cases(f)


def test_a_value_missing_in_one_case(folder):
    # components are the columns of one header, so a case cannot lack one; an empty cell is named by row
    _edit_gauss(folder, lambda ls: ls[:9] + [ls[9].rsplit(",", 1)[0] + ","] + ls[10:])
    with pytest.raises(InputError, match=r"gauss.csv, row 9 \(line 10\), column 'sxy': empty cell"):
        read_cases(folder)


def test_writer_refuses_bad_case_names_and_about_keys(tmp_path):
    mesh, cases = two_block_model(2)
    f = cases["LC 1"]
    for bad in ("a,b", 'q"', "x" * 64):
        with pytest.raises(InputError, match="cannot be written to a CSV cell"):
            write_results(tmp_path / "f", mesh, LoadCases({bad: f, "ok": f}))
    with pytest.raises(InputError, match="differ only in letter case"):
        write_results(tmp_path / "f", mesh, LoadCases({"Wind": f, "wind": f}))
    with pytest.raises(InputError, match="'cases' is written from the model"):
        write_results(tmp_path / "f", mesh, cases, about={"cases": ["a"]})
    with pytest.raises(InputError, match="another mesh"):
        write_results(tmp_path / "f", rectangle_mesh("quad4", 1, 1), cases)


def _npz_with(tmp_path, change):
    mesh, cases = two_block_model(2)
    p = write_results(tmp_path / "r.npz", mesh, cases)
    with np.load(p) as z:
        arrays = {k: z[k] for k in z.files}
    change(arrays)
    q = tmp_path / "bad.npz"
    np.savez(q, **arrays)
    return q


def test_npz_case_errors(tmp_path):
    def wrong_count(a):
        a["quad8.values"] = a["quad8.values"][:1]
    with pytest.raises(InputError, match=r"bad.npz: array 'quad8.values' is shaped \(1, 4, 9, 3\), expected "
                                         r"\(cases, cells, points, components\) with 2 cases"):
        read_cases(_npz_with(tmp_path, wrong_count))

    def twice(a):
        a["cases"] = np.array(["LC 1", "LC 1"])
        a["about"] = np.array(json.dumps({k: v for k, v in json.loads(str(a["about"])).items() if k != "cases"}))
    with pytest.raises(InputError, match=r"bad.npz: array 'cases' names load case 'LC 1' twice"):
        read_cases(_npz_with(tmp_path, twice))

    def renamed(a):
        a["cases"] = np.array(["LC 1", "LC 7"])
    with pytest.raises(InputError, match=r"bad.npz: array 'cases' \['LC 1', 'LC 7'\] differs from the about"):
        read_cases(_npz_with(tmp_path, renamed))

    def nan(a):
        a["tri6.values"][1, 2, 0, 1] = np.nan          # case 2, cell 2 (element 3), point 0, syy
    with pytest.raises(InputError, match=r"bad.npz: load case 'LC 2': block tri6, cell 2 \(element 3\): value of syy"):
        read_cases(_npz_with(tmp_path, nan))
