"""Repository-wide pytest set-up.

* ``tests/data`` holds fixtures, not tests: its notebooks (``tiny.ipynb``) are
  inputs of tests/test_workbook.py and must not be collected by ``--nbval``.
* ``--nbval-sanitize-with`` is read by nbval relative to the working
  directory; a relative path is made absolute here, from the rootdir (where
  pyproject.toml is) first, then from the working directory, so
  ``pytest`` works from any folder.
"""
import os
from pathlib import Path

import pytest

collect_ignore = ["tests/data"]


def pytest_configure(config):
    # nbval's kernels inherit this: workbooks draw their static figures and skip
    # live widgets and progress widgets (see toolkit.report.headless)
    os.environ["STRESSPATH_HEADLESS"] = "1"
    value = getattr(config.option, "nbval_sanitize_with", None)
    if not value or os.path.isabs(value):
        return
    for base in (Path(config.rootpath), Path.cwd()):
        candidate = base / value
        if candidate.is_file():
            config.option.nbval_sanitize_with = str(candidate.resolve())
            return
    raise pytest.UsageError(f"--nbval-sanitize-with: {value} not found under {config.rootpath} or {Path.cwd()}")
