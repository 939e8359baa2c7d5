"""Parameter studies (toolkit.workbook.study, study_table; the ``study`` command).

One study of 2 x 2 plate_with_hole variants (width 100/80 mm x hole diameter
20/30 mm, element_size 2.5 mm so each render is quick) plus one variant that
fails in a cell, run once on the default process pool (2 workers) and shared
by the tests; the same four on a 2-worker Dask LocalCluster; a resumed study
through the command line.  About 8 renders in all: roughly 1.5-2 minutes on
2 cores alone (about 4.5 minutes on a loaded machine).
"""
import csv
import os
import shutil
from concurrent.futures import Executor, Future

import pytest

from toolkit import cli
from toolkit.errors import InputError, ParameterError
from toolkit.workbook import grid, render_many
from toolkit.workbook.study import DONE, FAILED, NOT_RUN, check_study, cluster_executor, variant_folder
from toolkit.workbook.study_table import STUDY_CSV, STUDY_HTML, parse_plot

GOOD = grid({"width": [100.0, 80.0], "hole_diameter": [20.0, 30.0], "element_size": [2.5]})
# every documented parameter range renders (issue 16), so the failing variant comes from a copy of the
# workbook with one planted cell that fails for this hole diameter only: a run-time failure of one
# variant (as a file missing on one machine would give), which must not stop the others
BAD = {"width": 100.0, "hole_diameter": 25.0, "element_size": 2.5}
PLANTED = "planted failure for hole_diameter = 25"
PLOT = [(["kt_net", "kt_net_heywood"], "hole_diameter")]


def _rows(path):
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.reader(f))


@pytest.fixture(scope="module")
def workbook(tmp_path_factory):
    """plate_with_hole with one planted last cell that fails for the BAD variant only."""
    import nbformat
    from importlib.resources import files
    nb = nbformat.reads((files("toolkit.workbooks") / "plate_with_hole.ipynb").read_text(encoding="utf-8"),
                        as_version=4)
    nb.cells.append(nbformat.v4.new_code_cell(
        f"if hole_diameter == 25.0:\n    raise RuntimeError({PLANTED!r})"))
    path = tmp_path_factory.mktemp("planted") / "plate_with_hole.ipynb"
    nbformat.write(nb, path)
    return path


@pytest.fixture(scope="module")
def pool_study(tmp_path_factory, workbook):
    out = tmp_path_factory.mktemp("study") / "pool"
    return render_many(workbook, GOOD + [BAD], out, workers=2, plots=PLOT)


def test_pool_study_renders_each_variant_and_bad_one_fails_alone(pool_study):
    r = pool_study
    assert [v.status for v in r.variants] == [DONE] * 4 + [FAILED]
    bad = r.variants[-1]
    assert "failed in cell" in bad.reason and PLANTED in bad.reason
    assert str(r.out) not in bad.reason                 # the table names files relative to the study
    assert (r.out / bad.folder / "plate_with_hole.failed.ipynb").is_file()
    for v in r.variants[:4]:
        folder = r.out / v.folder
        assert {p.name for p in folder.iterdir() if not p.name.startswith(".")} == {
            "plate_with_hole.ipynb", "plate_with_hole.html", "plate_with_hole.summary.json"}
        assert v.summary["parameters"]["width"] == v.given["width"]
    assert r.variants[0].folder == "width=100_hole_diameter=20_element_size=2.5"


def test_kt_net_rises_as_d_over_w_falls(pool_study):
    # Heywood (1952) finite-width formula, as quoted in Pilkey & Pilkey, Peterson's Stress
    # Concentration Factors, 3rd ed. (2008): Kt,net falls from 3 as d/W grows
    done = [v for v in pool_study.variants if v.status == DONE]
    pts = sorted((v.parameters["hole_diameter"] / v.parameters["width"], v.summary["values"]["kt_net"]["value"])
                 for v in done)
    assert [p[0] for p in pts] == [0.2, 0.25, 0.3, 0.375]
    kts = [p[1] for p in pts]
    assert all(a > b for a, b in zip(kts, kts[1:])), kts
    for v in done:      # the FE value beside the handbook curve (the workbook records both)
        vals = v.summary["values"]
        assert vals["kt_net"]["value"] == pytest.approx(vals["kt_net_heywood"]["value"], rel=0.03)


def test_study_csv_and_html(pool_study):
    r = pool_study
    rows = _rows(r.out / STUDY_CSV)
    head = rows[0]
    assert head[:5] == ["variant", "run", "width [mm]", "hole_diameter [mm]", "element_size [mm]"]
    assert "kt_net [1]" in head and "peak_stress [MPa]" in head and "report" in head
    assert [row[1] for row in rows[1:]] == ["done"] * 4 + ["failed"]
    link = rows[1][head.index("report")]
    assert (r.out / link).is_file()
    status = [h for h in head if h.endswith(" status")]
    assert status and rows[1][head.index(status[0])] in ("PASS", "FAIL")
    page = (r.out / STUDY_HTML).read_text(encoding="utf-8")
    assert "data:image/png;base64," in page
    assert "http://" not in page and "https://" not in page          # opens offline
    assert "qualified engineer" in page


def test_local_dask_cluster_gives_the_same_table(pool_study, workbook, tmp_path):
    pytest.importorskip("distributed")
    with cluster_executor("local:2") as ex:
        r = render_many(workbook, GOOD, tmp_path / "dask", ex, plots=PLOT)
    assert [v.status for v in r.variants] == [DONE] * 4
    pool_rows = [row for row in _rows(pool_study.out / STUDY_CSV) if row[1] != "failed"]
    assert _rows(r.out / STUDY_CSV) == pool_rows


def test_interrupted_study_resumes_from_the_command_line(pool_study, workbook, tmp_path, capsys):
    out = tmp_path / "resume"
    shutil.copytree(pool_study.out, out)
    gone = out / pool_study.variants[1].folder
    (gone / "plate_with_hole.summary.json").unlink()       # as if interrupted: the report is incomplete
    sets = tmp_path / "sets.csv"
    sets.write_text("width,hole_diameter,element_size\n" + "".join(
        f"{s['width']},{s['hole_diameter']},{s['element_size']}\n" for s in GOOD + [BAD]))
    code = cli.main(["study", str(workbook), "--sets", str(sets), "--out", str(out), "--workers", "2",
                     "--quiet", "--plot", "kt_net,kt_net_heywood:hole_diameter"])
    err = capsys.readouterr()
    assert code == 1
    assert "4 of 5 variants done (3 already up to date)" in err.out
    assert err.err.count("error: variant") == 1 and "hole_diameter=25" in err.err
    assert (gone / "plate_with_hole.summary.json").is_file()
    assert _rows(out / STUDY_CSV) == _rows(pool_study.out / STUDY_CSV)


class _Cancelling(Executor):
    """An executor that accepts every task and runs none (as when a study is interrupted)."""

    def submit(self, fn, *args, **kwargs):
        f = Future()
        f.cancel()
        f.set_running_or_notify_cancel()     # as an executor does when it reaches a cancelled task
        return f


def test_cancelled_variants_are_recorded_as_not_run(tmp_path):
    r = render_many("plate_with_hole", GOOD[:2], tmp_path, _Cancelling())
    assert [v.status for v in r.variants] == [NOT_RUN, NOT_RUN] and not r.ok
    assert [row[1] for row in _rows(tmp_path / STUDY_CSV)[1:]] == ["not run", "not run"]
    assert not any((tmp_path / v.folder).exists() for v in r.variants)      # no half-written report


def test_every_variant_is_checked_before_anything_runs(tmp_path):
    out = tmp_path / "s"
    with pytest.raises(ParameterError, match=r"variant 2 .*out of range.*variant 3 .*unknown parameter 'widht'"):
        render_many("plate_with_hole", [{"width": 100.0}, {"width": -1.0}, {"widht": 3.0}], out, _Cancelling())
    with pytest.raises(ParameterError, match="same parameters as variant 1"):
        check_study("plate_with_hole", [{"width": 100}, {"width": 100.0}], out)
    assert not out.exists()
    with pytest.raises(InputError, match="not a parameter given"):
        render_many("plate_with_hole", GOOD[:1], out, _Cancelling(), plots=[(["kt_net"], "length")])


def test_command_line_bad_input_exits_2(tmp_path, capsys):
    base = ["study", "plate_with_hole", "--out", str(tmp_path / "s")]
    assert cli.main(base + ["--vary", "width=100,-5"]) == 2
    assert cli.main(base) == 2                                      # no variants
    assert cli.main(base + ["--vary", "width=100", "--vary", "width=80"]) == 2
    assert cli.main(base + ["--vary", "width=100", "--cluster", "local:0"]) == 2
    assert cli.main(base + ["--vary", "width=100", "--plot", "kt_net"]) == 2
    assert cli.main(base + ["--sets", str(tmp_path / "missing.csv")]) == 2
    assert not (tmp_path / "s").exists()
    assert capsys.readouterr().err.count("error:") == 6


def test_variant_folder_and_grid():
    assert variant_folder({}) == "defaults"
    assert variant_folder({"width": 100.0, "detail": "flat"}) == "width=100_detail=flat"
    odd = variant_folder({"detail": "a/b c"})
    assert odd.startswith("detail=a-b-c-") and len(odd) == len("detail=a-b-c-") + 8
    assert variant_folder({"detail": "a/b"}) != variant_folder({"detail": "a b"})
    assert len(variant_folder({"x": "y" * 200})) <= 80
    assert grid({"a": [1, 2], "b": [3, 4]}) == [{"a": 1, "b": 3}, {"a": 1, "b": 4}, {"a": 2, "b": 3},
                                                {"a": 2, "b": 4}]
    with pytest.raises(InputError):
        grid({"a": []})
    assert parse_plot("kt_net,kt_net_heywood:hole_diameter") == (["kt_net", "kt_net_heywood"], "hole_diameter")


@pytest.mark.skipif(os.name == "nt", reason="IPC sockets are POSIX only")
def test_kernels_use_ipc_sockets_of_their_own():
    # parallel kernels on TCP race for ports; on IPC each needs its own socket path prefix
    from toolkit.workbook.execute import KERNEL_TRANSPORT, _kernel_manager_class

    cls = _kernel_manager_class()
    a, b = cls(kernel_name="python3"), cls(kernel_name="python3")
    assert KERNEL_TRANSPORT == "ipc" and a.transport == b.transport == "ipc"
    assert a.ip != b.ip and os.path.isabs(a.ip)
