"""Hygiene of the stored workbooks (workbooks/*.ipynb).

A stored workbook is what `pytest --nbval` compares against and what
`toolkit.workbook.render` starts from, so it must carry nothing that changes
between identical runs and nothing render adds itself: exactly one cell
tagged `parameters` (readable by render's grammar), no `injected-parameters`
cell, no execution timing metadata, no widget state, no widget-view outputs,
no `language_info.version`, kernelspec `python3` (common practice for
deterministic notebooks: nbclient writes timing and widget model ids that
change on every run, and nbval picks the kernel by name).  The folder may be empty; every notebook in it is checked.
"""
import copy
from pathlib import Path

import nbformat
import pytest

from toolkit.workbook import ParameterError, parse_parameters

ROOT = Path(__file__).resolve().parents[1]
WORKBOOKS = sorted((ROOT / "workbooks").glob("*.ipynb"))
TINY = Path(__file__).resolve().parent / "data" / "tiny.ipynb"
WIDGET_VIEW = "application/vnd.jupyter.widget-view+json"


def notebook_problems(nb, label="notebook"):
    """Every hygiene problem of one notebook, as readable strings (empty: clean)."""
    problems = []
    tagged = [i for i, c in enumerate(nb.cells) if "parameters" in c.get("metadata", {}).get("tags", [])]
    if len(tagged) != 1:
        problems.append(f"{label}: {len(tagged)} cells tagged 'parameters' (need exactly one)")
    else:
        cell = nb.cells[tagged[0]]
        if cell.cell_type != "code":
            problems.append(f"{label}: the 'parameters' cell is not a code cell")
        else:
            try:
                parse_parameters(cell.source, label)
            except ParameterError as e:
                problems.append(str(e))
    for i, cell in enumerate(nb.cells, start=1):
        md = cell.get("metadata", {})
        if "injected-parameters" in md.get("tags", []):
            problems.append(f"{label}: cell {i} is an 'injected-parameters' cell (a rendered copy, not a workbook)")
        for key in ("execution", "ExecuteTime"):
            if key in md:
                problems.append(f"{label}: cell {i} has execution timing metadata {key!r}")
        if "widgets" in md:
            problems.append(f"{label}: cell {i} has widget metadata")
        for out in cell.get("outputs", []) if cell.cell_type == "code" else []:
            if WIDGET_VIEW in out.get("data", {}):
                problems.append(f"{label}: cell {i} stores a widget-view output")
    meta = nb.metadata
    if "widgets" in meta:
        problems.append(f"{label}: notebook metadata holds widget state")
    if "version" in meta.get("language_info", {}):
        problems.append(f"{label}: language_info.version is stored")
    if meta.get("kernelspec", {}).get("name") != "python3":
        problems.append(f"{label}: kernelspec is {meta.get('kernelspec', {}).get('name')!r}, not 'python3'")
    return problems


def test_every_stored_workbook_is_clean():
    problems = []
    for path in WORKBOOKS:
        problems += notebook_problems(nbformat.read(str(path), as_version=4), path.name)
    assert not problems, "\n".join(problems)


def test_the_test_workbook_is_clean_and_stored_without_outputs():
    nb = nbformat.read(str(TINY), as_version=4)
    assert notebook_problems(nb, TINY.name) == []
    assert all(not c.get("outputs") for c in nb.cells if c.cell_type == "code")


def _spoil(nb, how):
    nb = copy.deepcopy(nb)
    code = [c for c in nb.cells if c.cell_type == "code"]
    if how == "no parameters":
        for c in nb.cells:
            c.metadata.pop("tags", None)
    elif how == "two parameters":
        code[0].metadata["tags"] = ["parameters"]
    elif how == "injected":
        code[-1].metadata["tags"] = ["injected-parameters"]
    elif how == "timing":
        code[0].metadata["execution"] = {"iopub.status.busy": "2024-01-01T00:00:00Z"}
    elif how == "widget state":
        nb.metadata["widgets"] = {"application/vnd.jupyter.widget-state+json": {"state": {}}}
    elif how == "widget view":
        code[-1].outputs = [nbformat.v4.new_output("display_data", data={
            "text/plain": "IntSlider(value=0)", WIDGET_VIEW: {"model_id": "abc", "version_major": 2}})]
    elif how == "language version":
        nb.metadata["language_info"] = {"name": "python", "version": "3.11.9"}
    elif how == "kernel":
        nb.metadata["kernelspec"] = {"name": "python2", "display_name": "old", "language": "python"}
    elif how == "bad grammar":
        for c in nb.cells:
            if "parameters" in c.metadata.get("tags", []):
                c.source = "width = 10.0  # mm, 0 < x <= 100"
    return nb


@pytest.mark.parametrize("how, expect", [
    ("no parameters", "0 cells tagged 'parameters'"),
    ("two parameters", "2 cells tagged 'parameters'"),
    ("injected", "'injected-parameters' cell"),
    ("timing", "timing metadata"),
    ("widget state", "widget state"),
    ("widget view", "widget-view output"),
    ("language version", "language_info.version"),
    ("kernel", "'python2', not 'python3'"),
    ("bad grammar", "malformed constraint"),
])
def test_checker_catches_each_problem(how, expect):
    nb = nbformat.read(str(TINY), as_version=4)
    problems = notebook_problems(_spoil(nb, how), "spoilt.ipynb")
    assert problems and any(expect in p for p in problems), problems
