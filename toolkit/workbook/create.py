"""Starting and showing workbooks: :func:`new_workbook` copies a template
for a new component, :func:`demo` renders workbooks with their defaults.

Title block: a workbook's first cell, tagged ``title``, shows the title
block of the run (:func:`toolkit.report.title.title_block`); :func:`new_workbook`
stores the title fields it is given (the component defaults to the new
name) in the notebook's metadata, and every ``render`` of it shows them
(:mod:`toolkit.workbook.title`).  A template without a title cell may
instead carry a component field in its first markdown cell, a line
``Component: <text>`` (the label may be bold, ``**Component:**``, or a list
item) or a table row ``| Component | <text> |``; :func:`new_workbook` sets it.
"""
from __future__ import annotations

import difflib
import re
import time
from pathlib import Path

from toolkit.errors import WorkbookError, WorkbookExecutionError
from toolkit.io.files import same_file
from toolkit.workbook.execute import render
from toolkit.workbook.notebook import (WORKBOOKS_DIR, clean_notebook, clear_outputs, drop_injected, ensure_ids,
                                       known_workbooks, parameters_cell, read_notebook, write_notebook)
from toolkit.workbook.parameters import parse_parameters
from toolkit.report.title import complete_title, read_title_file
from toolkit.workbook.title import set_notebook_title

__all__ = ["new_workbook", "demo", "known_workbooks", "TITLE_TAG"]

TITLE_TAG = "title"


_COMPONENT_LINE = re.compile(r"^(?P<head>[ \t]*(?:[-*+][ \t]+)?(?:\*\*|__)?Component(?:\*\*|__)?[ \t]*:[ \t]*"
                             r"(?:\*\*|__)?[ \t]*)(?P<val>[^\n]*?)[ \t]*$", re.IGNORECASE | re.MULTILINE)
_COMPONENT_ROW = re.compile(r"^(?P<head>[ \t]*\|[ \t]*(?:\*\*|__)?Component(?:\*\*|__)?[ \t]*\|[ \t]*)"
                            r"(?P<val>[^|\n]*?)(?P<tail>[ \t]*\|[^\n]*)$", re.IGNORECASE | re.MULTILINE)


def _set_component(source, name):
    for rx in (_COMPONENT_ROW, _COMPONENT_LINE):
        m = rx.search(source)
        if m:
            head, tail = m.group("head"), m.groupdict().get("tail") or ""
            if rx is _COMPONENT_LINE and not head.endswith((" ", "\t")):
                head += " "
            return source[:m.start()] + head + name + tail + source[m.end():]
    return None


def new_workbook(template, name, out_dir, source_dir=None, overwrite=False, title=None, title_file=None) -> Path:
    """Start a calculation from a template workbook: ``out_dir/<name>.ipynb``.

    The copy has every output cleared, no injected cell, and the title
    fields given (``title_file``, then ``title``; the component defaults to
    ``name``) stored for its title block (see the module notes); the
    parameters cell keeps the template's defaults, ready to fill.

    Parameters
    ----------
    template : str
        A workbook name in ``source_dir`` (default ``workbooks/``), e.g. ``"plate_with_hole"``.
    name : str
        The component; also the file name.
    overwrite : bool
        Replace an existing file (default: refuse); the template itself is never replaced.
    title : dict, optional
        Title fields (project, document, component, revision, prepared_by, checked_by, date).
    title_file : str or Path, optional
        A JSON object of title fields.
    """
    folder = Path(source_dir) if source_dir is not None else WORKBOOKS_DIR
    known = known_workbooks(folder)
    if template not in known:
        hint = difflib.get_close_matches(str(template), known, n=1)
        raise WorkbookError(f"unknown template {template!r}" + (f" (did you mean {hint[0]!r}?)" if hint else "")
                            + f"; known: {', '.join(known) if known else '(none)'} in {folder}")
    name = str(name).strip()
    if not name or name.startswith(".") or any(ch in name for ch in '/\\:*?"<>|\n'):
        raise WorkbookError(f"component name {name!r} cannot be a file name; use letters, digits, spaces, '-', '_', '.'")
    src = folder / f"{template}.ipynb"
    nb = read_notebook(src)
    drop_injected(nb)
    parse_parameters(nb.cells[parameters_cell(nb, src.name)].source, src.name)
    given = read_title_file(title_file) if title_file is not None else {}
    given.update({k: v for k, v in (title or {}).items() if v is not None and str(v).strip()})
    given.setdefault("component", name)
    fields = complete_title(given)            # checks the field names
    has_title_cell = any(TITLE_TAG in c.get("metadata", {}).get("tags", []) for c in nb.cells)
    for cell in nb.cells:
        if cell.cell_type == "markdown":
            new = _set_component(cell.source, fields["component"])
            if new is not None:
                cell.source = new
                break
    else:
        if not has_title_cell:
            raise WorkbookError(f"template {src.name} has neither a cell tagged {TITLE_TAG!r} nor a component "
                                "field in a markdown cell (a line 'Component: ...' or a row '| Component | ... |')")
    set_notebook_title(nb, given)
    clear_outputs(nb)
    clean_notebook(nb)
    ensure_ids(nb)
    out = Path(out_dir)
    target = out / f"{name}.ipynb"
    if same_file(target, src):
        raise WorkbookError(f"{target} is the template itself; choose another --out")
    if target.exists() and not overwrite:
        raise WorkbookError(f"{target} exists; choose another name or remove it first")
    out.mkdir(parents=True, exist_ok=True)
    write_notebook(nb, target)
    return target


def demo(out_dir="reports", workbooks=None, progress=False):
    """Render workbooks with their defaults into ``out_dir/<name>/``, printing the time of each.

    ``workbooks``: names or paths (default: every workbook in ``workbooks/``).
    Returns the list of :class:`RenderResult`; if any fail, the others still
    run and a :class:`WorkbookError` listing the failures is raised at the end.
    """
    items = list(workbooks) if workbooks is not None else known_workbooks()
    if not items:
        raise WorkbookError(f"no workbooks to render in {WORKBOOKS_DIR}")
    results, failures, cell_failed = [], [], False
    for wb in items:
        stem = Path(wb).stem
        t0 = time.perf_counter()
        try:
            r = render(wb, Path(out_dir) / stem, progress=progress)
        except WorkbookError as e:                # WorkbookExecutionError included
            cell_failed |= isinstance(e, WorkbookExecutionError)
            print(f"{stem:<28} FAILED after {time.perf_counter() - t0:6.1f} s: {e}")
            failures.append(f"{stem} ({e})")
            continue
        checks = r.summary["checks"]
        fails = sum(c["status"] == "FAIL" for c in checks)
        print(f"{stem:<28} {r.seconds:6.1f} s  {len(checks)} checks, {fails} FAIL  -> {r.html}")
        results.append(r)
    if failures:          # a failed cell (exit code 1) outranks a refused input (2)
        kind = WorkbookExecutionError if cell_failed else WorkbookError
        raise kind(f"{len(failures)} of {len(items)} workbooks failed: " + "; ".join(failures))
    return results
