"""Build the workbooks from their sources and store fresh outputs.

Each workbook is written as a plain Python file in ``workbooks/src/`` with
cell markers (``# %%`` a code cell, ``# %% [markdown]`` a markdown cell whose
lines start with ``# ``, ``# %% tags=["parameters"]`` a tagged code cell), so
that it reviews like code.  This script turns each source into
``workbooks/<name>.ipynb`` and executes it with :func:`toolkit.workbook.render`
(defaults, fresh kernel), storing the executed notebook, whose outputs strict
``pytest --nbval`` then compares.  Cell ids are derived from the workbook name
and the cell number, so rebuilding unchanged sources gives identical files.

    python workbooks/build.py                 # all workbooks
    python workbooks/build.py weld_toe        # one
    python workbooks/build.py --no-run        # notebooks without outputs
"""
from __future__ import annotations

import argparse
import json
import re
import shutil
import sys
import tempfile
from pathlib import Path

import nbformat

HERE = Path(__file__).resolve().parent
SRC = HERE / "src"
MARK = re.compile(r"^# %%(?P<md> \[markdown\])?(?: tags=(?P<tags>\[.*\]))?\s*$")


def parse_source(text: str, name: str):
    cells, cur = [], None
    for line in text.splitlines():
        m = MARK.match(line)
        if m:
            cur = {"markdown": bool(m.group("md")), "tags": json.loads(m.group("tags") or "[]"), "lines": []}
            cells.append(cur)
            continue
        if cur is None:
            if line.strip():
                raise ValueError(f"{name}: text before the first cell marker: {line!r}")
            continue
        cur["lines"].append(line)
    nb = nbformat.v4.new_notebook()
    nb.metadata = {"kernelspec": {"name": "python3", "display_name": "Python 3", "language": "python"},
                   "language_info": {"name": "python"}}
    for i, c in enumerate(cells):
        lines = c["lines"]
        while lines and not lines[-1].strip():
            lines.pop()
        while lines and not lines[0].strip():
            lines.pop(0)
        if c["markdown"]:
            body = "\n".join(l[2:] if l.startswith("# ") else l.lstrip("#") for l in lines)
            cell = nbformat.v4.new_markdown_cell(body)
        else:
            cell = nbformat.v4.new_code_cell("\n".join(lines))
        cell.id = f"{name.replace('_', '-')}-{i:02d}"
        if c["tags"]:
            cell.metadata["tags"] = c["tags"]
        nb.cells.append(cell)
    return nb


def build(name: str, run: bool = True) -> Path:
    from toolkit.workbook import render

    src = SRC / f"{name}.py"
    nb = parse_source(src.read_text(encoding="utf-8"), name)
    target = HERE / f"{name}.ipynb"
    nbformat.write(nb, target)
    if run:
        with tempfile.TemporaryDirectory() as tmp:
            res = render(target, tmp, progress=False)
            shutil.copyfile(res.notebook, target)
            print(f"{name}: {res.seconds:.1f} s, {res.cells} cells")
    return target


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("names", nargs="*", help="workbooks to build (default: all in workbooks/src)")
    ap.add_argument("--no-run", action="store_true", help="write notebooks without executing them")
    a = ap.parse_args(argv)
    names = a.names or sorted(p.stem for p in SRC.glob("*.py"))
    for n in names:
        build(n, run=not a.no_run)
    return 0


if __name__ == "__main__":
    sys.exit(main())
