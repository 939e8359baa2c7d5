"""A built wheel carries its data and runs from any folder.

``data/`` and ``workbooks/`` stay at the top of the repository and ship inside
the package as ``toolkit.data`` and ``toolkit.workbooks``.  This builds the
wheel from a copy of the project's own files (pyproject.toml, README, toolkit,
data, workbooks), checks what it holds, and renders a workbook with the
unpacked wheel first on the path, from a folder far from the repository.
"""
from __future__ import annotations

import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def wheel(tmp_path_factory):
    src = tmp_path_factory.mktemp("src")
    for name in ("pyproject.toml", "README.md"):
        shutil.copy2(ROOT / name, src / name)
    skip = shutil.ignore_patterns("__pycache__", "*.pyc", ".ipynb_checkpoints")
    for name in ("toolkit", "data", "workbooks"):
        shutil.copytree(ROOT / name, src / name, ignore=skip)
    out = tmp_path_factory.mktemp("wheel")
    r = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--quiet", "-w", str(out), str(src)],
                       capture_output=True, text=True, timeout=600)
    if r.returncode != 0 and ("Could not find a version" in r.stderr or "No matching distribution" in r.stderr):
        pytest.skip("no package registry to fetch the build backend from")
    assert r.returncode == 0, r.stderr
    (whl,) = out.glob("stresspath-*.whl")
    return whl


def test_wheel_holds_the_data_and_the_workbooks(wheel):
    names = set(zipfile.ZipFile(wheel).namelist())
    for need in ("toolkit/data/sn_curves.json", "toolkit/data/SOURCES.md", "toolkit/data/demo_bracket/gauss.csv",
                 "toolkit/data/demo_bracket/nodes.csv", "toolkit/data/demo_histories/weld_toe.csv", "toolkit/workbooks/weld_toe.ipynb",
                 "toolkit/workbooks/from_results.ipynb", "toolkit/workbook/templates/offline_report/index.html.j2",
                 "toolkit/core/elements.py", "toolkit/cli.py"):
        assert need in names, f"{need} missing from {wheel.name}"
    assert not any(n.startswith("tests/") for n in names)


def test_unpacked_wheel_renders_a_workbook_from_another_folder(wheel, tmp_path):
    site = tmp_path / "site"
    zipfile.ZipFile(wheel).extractall(site)
    work = tmp_path / "elsewhere"
    work.mkdir()
    env = {**os.environ, "PYTHONPATH": str(site)}
    probe = subprocess.run([sys.executable, "-c", "import toolkit, toolkit.assess.checks as c; "
                            "print(toolkit.__file__); print(c.SN_DATA_PATH)"],
                           cwd=work, env=env, capture_output=True, text=True)
    assert probe.returncode == 0, probe.stderr
    assert all(line.startswith(str(site)) for line in probe.stdout.split()), probe.stdout
    r = subprocess.run([sys.executable, "-m", "toolkit", "render", "weld_toe", "--quiet", "--out", "report"],
                       cwd=work, env=env, capture_output=True, text=True, timeout=600)
    assert r.returncode == 0, r.stderr
    assert (work / "report" / "weld_toe.html").is_file() and (work / "report" / "weld_toe.summary.json").is_file()
