"""Nothing lost: an earlier report or output survives a failed cell, a timeout,
a full disk, Ctrl-C and SIGTERM byte for byte; no temporary file, staging
folder, lock or kernel is left behind; two renders into one folder do not mix;
an output that is one of the inputs is refused before anything runs
(toolkit.workbook.execute, toolkit.io.files, toolkit.cli).  The facts checked
are the toolkit's own contract (common practice for safe file writing:
write a temporary file beside the target, rename it over the target)."""
from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import nbformat
import psutil
import pytest

from toolkit.cli import main
from toolkit.workbook import WorkbookError, WorkbookExecutionError, render
from toolkit.workbook.create import new_workbook
from toolkit.workbook.execute import LOCK_FILE

ROOT = Path(__file__).resolve().parents[1]
TINY = ROOT / "tests" / "data" / "tiny.ipynb"
DEMO = ROOT / "data" / "demo_bracket"
REPORT = ("tiny.ipynb", "tiny.html", "tiny.summary.json")
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT)] + os.environ.get("PYTHONPATH", "").split(os.pathsep))}


def _variant(folder: Path, extra_source: str, name="tiny") -> Path:
    """A copy of tiny.ipynb named ``name``.ipynb in ``folder`` with one more cell at the end."""
    nb = nbformat.read(str(TINY), as_version=4)
    cell = nbformat.v4.new_code_cell(extra_source)
    cell["id"] = "extra"
    nb.cells.append(cell)
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"{name}.ipynb"
    nbformat.write(nb, str(path))
    return path


def _snapshot(folder: Path) -> dict:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


@pytest.fixture(scope="module")
def good_report(tmp_path_factory):
    """A finished report of tiny.ipynb (rendered once, copied by each test)."""
    out = tmp_path_factory.mktemp("good") / "report"
    render(TINY, out, params={"width": 12.0}, progress=False)
    return out


@pytest.fixture
def report(good_report, tmp_path):
    out = tmp_path / "report"
    shutil.copytree(good_report, out)
    assert sorted(p.name for p in out.iterdir()) == sorted(REPORT)
    return out


@pytest.mark.parametrize("kind", ["cell fails", "timeout"])
def test_failed_run_keeps_the_earlier_report_byte_identical(report, tmp_path, kind):
    before = _snapshot(report)
    if kind == "cell fails":
        src = _variant(tmp_path / "src", 'raise RuntimeError("deliberate")')
        timeout = 600
    else:
        src = _variant(tmp_path / "src", "import time\ntime.sleep(30)")
        timeout = 2.5
    with pytest.raises(WorkbookExecutionError) as e:
        render(src, report, timeout=timeout, progress=False)
    assert "an earlier report is left as it was" in str(e.value)
    after = _snapshot(report)
    assert set(after) == set(before) | {"tiny.failed.ipynb"}        # no staging folder, no lock, no temp file
    assert all(after[k] == before[k] for k in before)
    failed = nbformat.read(str(report / "tiny.failed.ipynb"), as_version=4)
    if kind == "cell fails":
        assert [o.evalue for c in failed.cells if c.cell_type == "code" for o in c.outputs
                if o.output_type == "error"] == ["deliberate"]
        # the next good run replaces the report and drops the out-of-date failed notebook
        render(TINY, report, progress=False)
        assert sorted(p.name for p in report.iterdir()) == sorted(REPORT)


def _limited(limit_bytes, argv):
    """Run the command line in a child whose files may not grow past ``limit_bytes`` (a full disk)."""
    code = ("import resource, signal, sys\n"
            "signal.signal(signal.SIGXFSZ, signal.SIG_IGN)\n"        # write() then fails with EFBIG
            f"resource.setrlimit(resource.RLIMIT_FSIZE, ({limit_bytes}, resource.RLIM_INFINITY))\n"
            "from toolkit.cli import main\n"
            f"sys.exit(main({argv!r}))\n")
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=ENV, timeout=300)


def test_full_disk_during_render_keeps_the_earlier_report(report):
    before = _snapshot(report)
    # the notebook (about 20 kB) fits, the HTML report (about 290 kB) does not
    r = _limited(60_000, ["render", str(TINY), "--out", str(report), "--quiet"])
    assert r.returncode == 2, r.stderr
    assert r.stderr.startswith("error: ") and r.stderr.count("\n") == 1, r.stderr
    assert _snapshot(report) == before                              # no temp file, staging folder or lock left


def test_full_disk_during_csv_write_keeps_the_earlier_file(tmp_path):
    out = tmp_path / "nodal.csv"
    out.write_text("node,region,sxx\n1,1,1.0\n")
    r = _limited(2_000, ["recover", str(DEMO), "--out", str(out)])
    assert r.returncode == 2, r.stderr
    assert "File too large" in r.stderr
    assert out.read_text() == "node,region,sxx\n1,1,1.0\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["nodal.csv"]


@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGTERM])
def test_interrupted_render_exits_130_and_leaves_nothing_behind(report, tmp_path, sig):
    before = _snapshot(report)
    mark = tmp_path / "started"
    src = _variant(tmp_path / "src", f"open({str(mark)!r}, 'w').close()\nimport time\ntime.sleep(60)")
    p = subprocess.Popen([sys.executable, "-m", "toolkit", "render", str(src), "--out", str(report), "--quiet"],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=ENV)
    t0 = time.monotonic()
    while not mark.exists():                                        # the slow cell runs in the kernel
        assert p.poll() is None and time.monotonic() - t0 < 120
        time.sleep(0.1)
    kids = psutil.Process(p.pid).children(recursive=True)
    assert kids                                                     # the kernel
    p.send_signal(sig)
    _, err = p.communicate(timeout=180)                         # generous: a loaded machine stops kernels slowly
    assert p.returncode == 130
    assert err == "error: interrupted\n"
    gone, alive = psutil.wait_procs(kids, timeout=10)
    assert not alive, alive                                         # no kernel left
    assert _snapshot(report) == before                              # no staging folder, lock or temp file


def _footer_hash(nb_path):
    nb = nbformat.read(str(nb_path), as_version=4)
    text = "".join(o.get("text", "") for c in nb.cells if c.cell_type == "code" for o in c.outputs)
    return text.split("inputs ")[-1].split()[0]


def test_two_renders_into_one_folder_do_not_mix(tmp_path):
    out = tmp_path / "report"
    procs = [subprocess.Popen([sys.executable, "-m", "toolkit", "render", str(TINY), "--set", f"width={w}",
                               "--out", str(out), "--quiet"], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                              text=True, env=ENV) for w in (11, 22)]
    results = [(p.wait(timeout=300), p.stderr.read()) for p in procs]
    for p in procs:
        p.stdout.close()
        p.stderr.close()
    assert any(rc == 0 for rc, _ in results), results
    for rc, err in results:
        assert rc == 0 or (rc == 2 and "another render is writing into" in err and "(pid " in err), (rc, err)
    summary = json.loads((out / "tiny.summary.json").read_text())
    assert summary["inputs_hash"] == _footer_hash(out / "tiny.ipynb")  # notebook and summary of one run
    assert f"inputs {summary['inputs_hash']}" in (out / "tiny.html").read_text()   # and the HTML of it too
    assert sorted(p.name for p in out.iterdir()) == sorted(REPORT)


def test_a_live_lock_is_refused_and_a_stale_lock_taken_over(tmp_path):
    out = tmp_path / "report"
    out.mkdir()
    (out / LOCK_FILE).write_text(f"{os.getpid()}\n")               # a live process holds the folder
    with pytest.raises(WorkbookError, match=rf"another render is writing into .* \(pid {os.getpid()}\)"):
        render(TINY, out, progress=False)
    assert main(["render", str(TINY), "--out", str(out), "--quiet"]) == 2
    assert sorted(p.name for p in out.iterdir()) == [LOCK_FILE]
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    (out / LOCK_FILE).write_text(f"{dead.pid}\n")                   # its process is gone
    render(TINY, out, progress=False)
    assert sorted(p.name for p in out.iterdir()) == sorted(REPORT)  # lock taken over, then released


def test_two_workbooks_in_one_folder_keep_their_own_summaries(report, tmp_path):
    other = tmp_path / "src" / "other.ipynb"
    other.parent.mkdir()
    shutil.copy(TINY, other)
    r = render(other, report, params={"width": 7.0}, progress=False)
    assert r.summary_path == report / "other.summary.json"
    mine = json.loads((report / "tiny.summary.json").read_text())
    theirs = json.loads(r.summary_path.read_text())
    assert (mine["workbook"], mine["parameters"]["width"]) == ("tiny", 12.0)
    assert (theirs["workbook"], theirs["parameters"]["width"]) == ("other", 7.0)


# ---------------------------------------------------------------------------
# An output that is one of the inputs is refused before anything runs
# ---------------------------------------------------------------------------
@pytest.fixture
def results_copy(tmp_path):
    d = tmp_path / "model"
    shutil.copytree(DEMO, d)
    return d


@pytest.mark.parametrize("command", ["recover", "export-vtu"])
@pytest.mark.parametrize("target", ["gauss.csv", "nodes.csv", "elements.csv", "about.json", "."])
def test_output_over_a_file_of_the_input_folder_is_refused(results_copy, capsys, command, target):
    before = _snapshot(results_copy)
    out = results_copy / target
    assert main([command, str(results_copy), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: --out ") and "is an input of this command" in err and err.count("\n") == 1
    assert _snapshot(results_copy) == before


@pytest.mark.parametrize("command", ["recover", "export-vtu"])
def test_output_over_the_input_npz_or_a_link_to_it_is_refused(tmp_path, command):
    from toolkit.io import read_results, write_results

    from helpers import demo_bracket

    mesh, field = demo_bracket("pull")
    npz = tmp_path / "m.npz"
    write_results(npz, mesh, field)
    data = npz.read_bytes()
    link = tmp_path / "link.npz"
    link.symlink_to(npz)
    for out in (npz, tmp_path / "." / "m.npz", link):
        assert main([command, str(npz), "--out", str(out)]) == 2
    assert npz.read_bytes() == data


def test_render_never_writes_over_its_own_notebook_or_a_workbook_in_the_output_folder(tmp_path, capsys):
    studies = tmp_path / "studies"
    src = _variant(studies, "pass")
    data = src.read_bytes()
    assert main(["render", str(src), "--out", str(studies), "--quiet"]) == 2      # its own folder
    assert "own folder" in capsys.readouterr().err
    # a workbook made by `new` (no HTML report beside it) is not a report to replace
    assert main(["render", str(TINY), "--out", str(studies), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "is not a report from render" in err and err.count("\n") == 1
    assert src.read_bytes() == data and sorted(p.name for p in studies.iterdir()) == ["tiny.ipynb"]


def test_new_never_writes_over_its_template(tmp_path):
    folder = tmp_path / "templates"
    folder.mkdir()
    shutil.copy(TINY, folder / "tiny.ipynb")
    data = (folder / "tiny.ipynb").read_bytes()
    with pytest.raises(WorkbookError, match="is the template itself"):
        new_workbook("tiny", "tiny", folder, source_dir=folder, overwrite=True)
    assert (folder / "tiny.ipynb").read_bytes() == data
