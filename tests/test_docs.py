"""Documentation that runs: every docstring example (``>>>``) in the toolkit,
and the README's "Using the library" snippet, checked against closed forms."""
from __future__ import annotations

import doctest
import importlib
import pkgutil
import re
from pathlib import Path

import numpy as np
import pytest

import toolkit

README = Path(__file__).resolve().parents[1] / "README.md"


def _modules():
    names = []
    for info in pkgutil.walk_packages(toolkit.__path__, prefix="toolkit."):
        if info.name.split(".")[1] in ("data", "workbooks"):      # package data, not code
            continue
        names.append(info.name)
    return sorted(names)


@pytest.mark.parametrize("name", _modules())
def test_docstring_examples_run(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE, verbose=False)
    assert result.failed == 0, f"{result.failed} of {result.attempted} docstring examples failed in {name}"


@pytest.mark.parametrize("obj", ["Mesh", "GaussField", "project_l2", "L2Projector", "sample", "hot_spot_stress",
                                 "linearize"])
def test_the_main_entry_points_carry_an_example(obj):
    """The objects a new user meets first each show a runnable example."""
    doc = getattr(toolkit, obj).__doc__ or ""
    assert ">>>" in doc, f"toolkit.{obj} has no docstring example"


def _readme_snippet() -> str:
    text = README.read_text(encoding="utf-8")
    section = text.split("## Using the library", 1)[1]
    m = re.search(r"```python\n(.*?)```", section, re.DOTALL)
    assert m, "README: no python block under 'Using the library'"
    return m.group(1)


def test_readme_library_snippet_runs_and_gets_the_closed_form(capsys):
    """The README snippet as printed: pure bending of a strip, sxx = 12 (y - 5)
    MPa, is linear in y, so the projection reproduces it at the nodes and the
    linearisation through the depth gives membrane 0 and bending -60 MPa at
    y = 0 (beam theory, Navier)."""
    ns: dict = {}
    exec(compile(_readme_snippet(), str(README), "exec"), ns)
    nodal, lin, mesh, r = ns["nodal"], ns["lin"], ns["mesh"], ns["r"]
    exact = 12.0 * (mesh.nodes[nodal.node, 1] - 5.0)
    np.testing.assert_allclose(nodal.values[:, 0], exact, atol=1e-7)
    np.testing.assert_allclose(ns["nodal_avg"].values[:, 0], exact, atol=1e-9)
    np.testing.assert_allclose(ns["nodal_lumped"].values[:, 0], exact, atol=1e-9)
    assert abs(float(lin.membrane)) < 1e-7 and float(lin.bending) == pytest.approx(-60.0, abs=1e-7)
    np.testing.assert_allclose(r.values[:, 0], 2.0 * exact, atol=1e-7)        # the second load case
    assert "bending" in capsys.readouterr().out
