"""Re-running a report exactly: an executed notebook keeps the parameters it
was rendered with, ``--params summary.json`` reproduces them, the inputs hash
covers imported files, the S-N data and the toolkit version, and every input
problem found before the kernel starts is exit 2 with no notebook executed.

Numbers come from tests/data/tiny.ipynb worked by hand: area = width * count
* factor (factor 2 for "round"), checked against a limit of 100 mm2; width 40,
count 4, "round" gives 320 mm2, a FAIL; count 1 gives 80 mm2, a PASS.
"""
import json
import shutil
from pathlib import Path

import nbclient
import nbformat
import pytest

from toolkit.cli import main
from toolkit.report.summary import find_input, inputs_hash, inputs_record
from toolkit.workbook import WORKBOOKS_DIR, new_workbook, render, workbook_parameters
from toolkit.workbook.notebook import recorded_parameters

DATA = Path(__file__).resolve().parent / "data"
TINY = DATA / "tiny.ipynb"
DEMO = Path(__file__).resolve().parents[1] / "data" / "demo_bracket"
FAILING = {"width": 40.0, "count": 4, "shape": "round"}
from helpers import render_refused_by_rule


@pytest.fixture(scope="module")
def failing_run(tmp_path_factory):
    base = tmp_path_factory.mktemp("rerun")
    return render(TINY, base / "first", params=FAILING, progress=False)


def test_rerender_of_an_executed_notebook_keeps_its_parameters(failing_run, tmp_path):
    assert failing_run.summary["checks"][0]["status"] == "FAIL"          # 320 > 100 (by hand)
    again = render(failing_run.notebook, tmp_path / "again", progress=False)
    assert again.summary["parameters"] == FAILING
    assert again.summary["checks"] == failing_run.summary["checks"]     # the FAIL stays a FAIL
    assert again.summary["inputs_hash"] == failing_run.summary["inputs_hash"]


def test_set_overrides_a_recorded_parameter_name_by_name(failing_run, tmp_path):
    r = render(failing_run.notebook, tmp_path / "one", params={"count": 1}, progress=False)
    assert r.summary["parameters"] == {"width": 40.0, "count": 1, "shape": "round"}
    assert r.summary["values"]["area"]["value"] == 80.0 and r.summary["checks"][0]["status"] == "PASS"


def test_params_summary_json_reproduces_every_value(failing_run, tmp_path, capsys):
    out = tmp_path / "from_summary"
    assert main(["render", str(TINY), "--params", str(failing_run.summary_path), "--out", str(out), "--quiet"]) == 0
    s = json.loads((out / failing_run.summary_path.name).read_text())
    first = json.loads(failing_run.summary_path.read_text())
    for key in ("parameters", "inputs_hash", "inputs", "values", "checks"):
        assert s[key] == first[key], key


def test_recorded_parameters_are_read_from_the_summary_or_the_injected_cell(failing_run):
    nb = nbformat.read(str(failing_run.notebook), as_version=4)
    assert recorded_parameters(nb, "tiny") == FAILING
    for cell in nb.cells:                        # without the summary record: the injected cell
        cell.outputs = [] if cell.cell_type == "code" else None
    assert recorded_parameters(nb, "tiny") == FAILING


def test_params_summary_of_another_workbook_is_exit_2(tmp_path, capsys, no_kernel):
    other = tmp_path / "summary.json"
    other.write_text(json.dumps({"workbook": "plate_with_hole", "parameters": {"width": 12.0}}))
    out = tmp_path / "out"
    assert main(["render", str(TINY), "--params", str(other), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "summary of workbook 'plate_with_hole', not of 'tiny'" in err and err.count("\n") == 1
    assert not out.exists()


# ---------------------------------------------------------------------------
# The inputs hash (no kernel)
# ---------------------------------------------------------------------------
def test_hash_changes_with_one_value_in_an_imported_gauss_csv(tmp_path):
    d = tmp_path / "bracket"
    shutil.copytree(DEMO, d)
    params = {"results": "bracket", "fat_class": 90.0}
    before = inputs_record(params, dirs=[tmp_path])
    assert set(before["files"]) == {"results"}
    lines = (d / "gauss.csv").read_text().splitlines(keepends=True)
    i = 1                                                          # the first data row
    cols = lines[i].rstrip("\n").split(",")
    cols[-1] = repr(float(cols[-1]) * 1.2 + 1.0)
    lines[i] = ",".join(cols) + "\n"
    (d / "gauss.csv").write_text("".join(lines))
    after = inputs_record(params, dirs=[tmp_path])
    assert after["files"]["results"] != before["files"]["results"]
    assert inputs_hash(params, after) != inputs_hash(params, before)
    assert inputs_hash(params) == inputs_hash(dict(params))        # parameters alone still hash


def test_hash_changes_with_the_sn_data(tmp_path):
    from toolkit.assess.checks import SN_DATA_PATH
    sn = tmp_path / "sn.json"
    sn.write_bytes(SN_DATA_PATH.read_bytes())
    params = {"fat_class": 90.0}
    a = inputs_record(params, dirs=[tmp_path], sn_path=sn)
    assert a["sn_data"] == inputs_record(params, dirs=[tmp_path])["sn_data"]
    sn.write_text(SN_DATA_PATH.read_text().replace("2000000", "2000001", 1))
    b = inputs_record(params, dirs=[tmp_path], sn_path=sn)
    assert a["sn_data"] != b["sn_data"] and inputs_hash(params, a) != inputs_hash(params, b)


def test_hash_covers_a_file_named_inside_a_list(tmp_path):
    (tmp_path / "a.csv").write_text("1\n")
    r = inputs_record({"refined": ["a.csv", "missing.csv"], "shape": ""}, dirs=[tmp_path])
    assert list(r["files"]) == ["refined[0]"]


# ---------------------------------------------------------------------------
# Early checks: exit 2, one line, no kernel started, nothing executed
# ---------------------------------------------------------------------------
@pytest.fixture
def no_kernel(monkeypatch):
    def boom(*a, **k):
        raise AssertionError("a kernel was started")
    monkeypatch.setattr(nbclient, "NotebookClient", boom)


def _tiny_with(tmp_path, cell_source=None, mutate=None):
    nb = nbformat.read(str(TINY), as_version=4)
    if cell_source is not None:
        cell = next(c for c in nb.cells if "parameters" in c.metadata.get("tags", []))
        cell.source = cell_source
    if mutate is not None:
        mutate(nb)
    p = tmp_path / "wb" / "tiny.ipynb"
    p.parent.mkdir()
    p.write_text(json.dumps(nb, indent=1) + "\n")
    return p


LISTS = ('width = 10.0      # mm; range: 0 < x <= 100\ncount = 3         # >= 1\n'
         'shape = "flat"    # one of: "flat", "round"\n'
         'sizes = [1.0, 2.0]   # mm; items: > 0\npaths = [{"name": "a", "start": [0.0, 1.0]}]\n'
         'limit = 50.0      # rule: width < limit')


def _bad_cell(nb):
    nb.cells[1]["cell_type"] = "cod"


@pytest.mark.parametrize("source, mutate, args, expect", [
    (None, _bad_cell, [], r"cell 2 \(id 'setup', cell_type 'cod'\) has an unknown cell type"),
    (LISTS, None, ["--params", "NAN"], r"'sizes' of tiny.ipynb, item 1: must be finite"),
    (LISTS, None, ["--set", "paths=[]"], r"'paths' of tiny.ipynb has 0 entries; it needs length >= 1"),
    (LISTS, None, ["--set", 'paths=[{"name": "a", "start": [[[0.0]]]}]'], r"'paths' of tiny.ipynb: nested deeper"),
    (LISTS, None, ["--set", "sizes=[[1.0]]"], r"'sizes' of tiny.ipynb: nested deeper than its type allows \(1 level"),
    (LISTS, None, ["--set", "sizes=[1.0, -2.0]"], r"item 1 = -2.0 is out of range: x > 0"),
    (LISTS, None, ["--set", "width=60"], r"rule 'width < limit' of tiny.ipynb does not hold \(width = 60, limit = 50\)"),
])
def test_input_problems_are_exit_2_before_any_kernel(tmp_path, capsys, no_kernel, source, mutate, args, expect):
    import re
    wb = _tiny_with(tmp_path, source, mutate)
    if args[:2] == ["--params", "NAN"]:
        f = tmp_path / "p.json"
        f.write_text('{"sizes": [1.0, NaN]}')
        args = ["--params", str(f)]
    out = tmp_path / "out"
    assert main(["render", str(wb), *args, "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert re.search(expect, err), err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert not out.exists() or not list(out.glob("*.ipynb"))


@pytest.mark.parametrize("workbook, given, rule", [
    ("plate_with_hole", ["hole_diameter=150"], "hole_diameter < width"),
    ("shoulder_fillet", ["small_width=70"], "small_width < large_width"),
    ("weld_toe", ["weld_leg=0.4", "element_size=0.25"], "element_size <= min(plate_thickness, weld_leg) / 2"),
])
def test_shipped_workbooks_check_their_rules_before_running(tmp_path, capsys, no_kernel, workbook, given, rule):
    render_refused_by_rule(tmp_path, capsys, workbook, given, rule)


# ---------------------------------------------------------------------------
# new from_results elsewhere: the default result path still resolves
# ---------------------------------------------------------------------------
def test_new_from_results_elsewhere_still_finds_the_demo(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    target = new_workbook("from_results", "Part 7", tmp_path / "elsewhere")
    default = workbook_parameters(target)["results"].default
    found = find_input(default, dirs=[target.parent, tmp_path])
    assert found is not None and (found / "gauss.csv").is_file()
    assert (WORKBOOKS_DIR / "from_results.ipynb").is_file()
