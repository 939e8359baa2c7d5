"""Command line: python -m toolkit recover / export-vtu (toolkit.__main__)."""
from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import meshio
import numpy as np
import pytest

from toolkit import average_nodal, project_l2
from toolkit.cli import build_parser, main
from toolkit.io import read_results
from helpers import demo_bracket
from toolkit.recovery.spr import recover_spr

DEMO = Path(__file__).resolve().parents[1] / "data" / "demo_bracket"


@pytest.fixture(scope="module")
def demo():
    return demo_bracket("pull")


def _read_nodal(path):
    header = path.read_text().splitlines()[0].split(",")
    return header, np.loadtxt(path, delimiter=",", skiprows=1)


@pytest.mark.parametrize("method, across", [("l2", False), ("l2", True), ("lumped", False), ("average", False),
                                            ("spr", False)])
def test_recover_writes_the_projected_field(tmp_path, demo, capsys, method, across):
    mesh, field = demo
    out = tmp_path / "nodal.csv"
    argv = (["recover", str(DEMO), "--case", "pull", "--method", method, "--out", str(out)]
            + (["--across-regions"] if across else []))
    assert main(argv) == 0
    assert capsys.readouterr().err == ""                # small input: no progress lines
    header, a = _read_nodal(out)
    assert header == ["node", "region", "sxx", "syy", "sxy"]
    want = {"l2": lambda: project_l2(field, across_regions=across),
            "lumped": lambda: project_l2(field, lumped=True, across_regions=across),
            "average": lambda: average_nodal(field, across_regions=across),
            "spr": lambda: recover_spr(field, across_regions=across)}[method]()
    assert np.array_equal(a[:, 0], mesh.node_ids[want.node])        # node ids from the file, not rows
    assert np.array_equal(a[:, 1], want.region)
    assert np.array_equal(a[:, 2:], want.values)                    # written losslessly
    if across:
        assert set(a[:, 1]) == {-1} and len(a) == mesh.nnodes
    else:
        assert set(a[:, 1]) == {1, 2} and len(a) > mesh.nnodes       # nodes on the lug boundary twice


def test_recover_without_case_writes_every_load_case(tmp_path, demo):
    """The demo folder holds the load cases pull and shear: without --case
    both are recovered (their components as columns of one solve) and
    written side by side as <case>.<component>; each equals the case
    recovered alone (projection is linear and column by column; to the CG
    tolerance, 1e-10 relative)."""
    mesh, pull = demo
    _, shear = demo_bracket("shear")
    out = tmp_path / "all.csv"
    assert main(["recover", str(DEMO), "--out", str(out)]) == 0
    header, a = _read_nodal(out)
    assert header == ["node", "region", "pull.sxx", "pull.syy", "pull.sxy", "shear.sxx", "shear.syy", "shear.sxy"]
    for cols, f in ((slice(2, 5), pull), (slice(5, 8), shear)):
        want = project_l2(f)
        assert np.array_equal(a[:, 1], want.region)
        assert np.allclose(a[:, cols], want.values, rtol=0, atol=1e-7 * np.abs(want.values).max())
    vtu = tmp_path / "all.vtu"
    assert main(["export-vtu", str(DEMO), "--method", "none", "--out", str(vtu)]) == 0
    raw = meshio.read(vtu)
    assert np.array_equal(raw.cell_data["shear.sxy_gp5"][0], shear.values["quad8"][:, 4, 2])


def test_unknown_case_exits_2(tmp_path, capsys):
    assert main(["recover", str(DEMO), "--case", "twist", "--out", str(tmp_path / "x.csv")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: --case 'twist'") and "'pull', 'shear'" in err and err.count("\n") == 1
    assert not (tmp_path / "x.csv").exists()


def test_recover_reads_npz(tmp_path, demo):
    from toolkit.io import write_results
    mesh, field = demo
    write_results(tmp_path / "d.npz", mesh, field)
    assert main(["recover", str(tmp_path / "d.npz"), "--out", str(tmp_path / "n.csv")]) == 0
    _, a = _read_nodal(tmp_path / "n.csv")
    assert np.array_equal(a[:, 2:], project_l2(field).values)


def test_module_entry_point_runs(tmp_path):
    out = tmp_path / "n.csv"
    r = subprocess.run([sys.executable, "-m", "toolkit", "recover", str(DEMO), "--method", "average",
                        "--out", str(out), "--progress", "on"], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    assert out.is_file()
    lines = [l for l in r.stderr.splitlines() if l.startswith("[")]
    assert [l.split(":")[0] for l in lines] == ["[1/3] read", "[2/3] recover", "[3/3] write"]
    assert "1057 nodes, 320 elements, 2880 integration points" in lines[0]


def _broken(tmp_path, fname, row, col, token):
    d = tmp_path / "broken"
    shutil.copytree(DEMO, d)
    p = d / fname
    lines = p.read_text().split("\n")
    cells = lines[row].split(",")
    cells[col] = token
    lines[row] = ",".join(cells)
    p.write_text("\n".join(lines))
    return d


@pytest.mark.parametrize("command, suffix", [("recover", ".csv"), ("export-vtu", ".vtu")])
def test_bad_input_exits_2_with_one_line_and_no_file(tmp_path, command, suffix):
    d = _broken(tmp_path, "gauss.csv", 40, 6, "1.2e")          # case,element,point,x,y,sxx,syy,...
    out = tmp_path / f"out{suffix}"
    r = subprocess.run([sys.executable, "-m", "toolkit", command, str(d), "--out", str(out)],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 2
    assert r.stdout == ""
    lines = r.stderr.splitlines()
    assert len(lines) == 1 and "Traceback" not in r.stderr
    assert lines[0].startswith("error: ") and "gauss.csv, row 40 (line 41), column 'syy': malformed number '1.2e'" in lines[0]
    assert not out.exists() and list(tmp_path.glob("*.tmp")) == [] and sorted(p.name for p in tmp_path.iterdir()) == ["broken"]


@pytest.mark.parametrize("args, text", [
    (["recover", "no/such/folder", "--out", "x.csv"], "no such result folder"),
    (["recover", "{demo}", "--method", "l2", "--out", "{tmp}/new_folder/x.csv"], None),
])
def test_main_in_process(tmp_path, capsys, args, text):
    args = [a.format(demo=DEMO, tmp=tmp_path) for a in args]
    code = main(args)
    err = capsys.readouterr().err
    if text is None:
        assert code == 0 and err == "" and (tmp_path / "new_folder" / "x.csv").is_file()
    else:
        assert code == 2 and err.count("\n") == 1 and err.startswith("error: ") and text in err
        assert not Path("x.csv").exists()


def test_usage_errors_exit_2(capsys):
    assert main(["recover", str(DEMO), "--method", "spline", "--out", "x.csv"]) == 2
    assert "invalid choice" in capsys.readouterr().err
    assert main([]) == 2


def test_export_vtu(tmp_path, demo):
    mesh, field = demo
    out = tmp_path / "m.vtu"
    assert main(["export-vtu", str(DEMO), "--case", "pull", "--method", "l2", "--out", str(out)]) == 0
    m = meshio.read(out)
    nodal = project_l2(field)
    # split nodes on the region boundary are written once per region
    assert len(m.points) == len(nodal.node) and m.cells[0].type == "quad8"
    assert np.allclose(np.sort(m.point_data["sxx"]), np.sort(nodal.values[:, 0]))
    assert np.allclose(m.cell_data["sxx_gp5"][0], field.values["quad8"][:, 4, 0])
    assert main(["export-vtu", str(DEMO), "--case", "pull", "--method", "none", "--out", str(tmp_path / "raw.vtu")]) == 0
    raw = meshio.read(tmp_path / "raw.vtu")
    assert len(raw.points) == mesh.nnodes and "sxx" not in raw.point_data and "sxx_mean" in raw.cell_data


def test_parser_has_demo_with_default_output():
    args = build_parser().parse_args(["demo"])
    assert args.command == "demo" and args.out == "reports" and not args.recovery_only
    assert build_parser().parse_args(["demo", "--out", "x"]).out == "x"


def test_an_internal_error_is_a_bug_not_bad_input(tmp_path, monkeypatch, capsys):
    """A numpy error inside the toolkit (planted: a broadcasting failure while
    reading) is not the user's mistake: traceback, a request to report it,
    exit code 1, and no output file."""
    def broken(path):
        return np.ones((3, 2)) + np.ones((4, 5))

    monkeypatch.setattr("toolkit.io.read_cases", broken)
    out = tmp_path / "nodal.csv"
    code = main(["recover", str(DEMO), "--method", "l2", "--out", str(out)])
    err = capsys.readouterr().err
    assert code == 1, err
    assert "Traceback" in err and "operands could not be broadcast" in err
    assert "internal error" in err and "please report it" in err
    assert not out.exists()


@pytest.mark.parametrize("argv, message", [
    (["recover", "no/such/folder", "--out", "x.csv"], "no/such/folder"),
    (["render", "no_such_workbook", "--out", "o"], "no_such_workbook"),
    (["render", "weld_toe", "--set", "plate_thickness=-3", "--out", "o"], "plate_thickness"),
])
def test_the_users_mistakes_are_one_line_and_exit_2(tmp_path, monkeypatch, capsys, argv, message):
    monkeypatch.chdir(tmp_path)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and err.count("\n") == 1 and message in err
    assert "Traceback" not in err
