"""Workbook notebooks as files: finding a workbook by name, reading and
writing, cell tags and ids, the parameters cell, injecting a run's values
after it, and cleaning what changes between identical runs.

The notebook libraries (nbformat) are imported when needed, so ``import
toolkit`` does not need them.
"""
from __future__ import annotations

import difflib
from importlib.resources import files
from pathlib import Path

from toolkit.errors import WorkbookError
from toolkit.io.files import atomic_write
from toolkit.workbook.parameters import parse_parameters

__all__ = ["WORKBOOKS_DIR", "PARAMETERS_TAG", "INJECTED_TAG", "INJECTED_CELL_ID", "WIDGET_VIEW_MIME",
           "known_workbooks", "resolve_workbook", "read_notebook", "write_notebook", "cell_tags",
           "drop_injected", "parameters_cell", "workbook_parameters", "inject_parameters", "clear_outputs",
           "clean_notebook", "ensure_ids", "validate_notebook", "recorded_parameters"]

#: The shipped workbooks (``workbooks/`` in the repository, ``toolkit.workbooks`` installed).
WORKBOOKS_DIR = Path(str(files("toolkit.workbooks")))
PARAMETERS_TAG = "parameters"
INJECTED_TAG = "injected-parameters"
INJECTED_CELL_ID = "injected-parameters"
WIDGET_VIEW_MIME = "application/vnd.jupyter.widget-view+json"


def known_workbooks(folder=None):
    """Names (file stems) of the workbooks in ``folder`` (default ``workbooks/``)."""
    folder = Path(folder) if folder is not None else WORKBOOKS_DIR
    return sorted(p.stem for p in folder.glob("*.ipynb")) if folder.is_dir() else []


def resolve_workbook(workbook, folder=None):
    """The ``.ipynb`` path of a workbook given by name in ``folder`` (default
    ``workbooks/``) or by path; WorkbookError with the nearest name if unknown."""
    p = Path(workbook)
    if p.suffix == ".ipynb" or p.is_file():
        if not p.is_file():
            raise WorkbookError(f"workbook file {p} not found")
        return p.resolve()
    folder = Path(folder) if folder is not None else WORKBOOKS_DIR
    cand = folder / f"{workbook}.ipynb"
    if cand.is_file():
        return cand.resolve()
    known = known_workbooks(folder)
    hint = difflib.get_close_matches(str(workbook), known, n=1)
    raise WorkbookError(f"unknown workbook {str(workbook)!r} in {folder}"
                        + (f" (did you mean {hint[0]!r}?)" if hint else "")
                        + f"; known: {', '.join(known) if known else '(none)'}")


def cell_tags(cell):
    """The cell's tags (a list, empty if none)."""
    return cell.get("metadata", {}).get("tags", [])


def read_notebook(path):
    """The notebook at ``path`` (nbformat 4), or WorkbookError."""
    import nbformat

    try:
        nb = nbformat.read(str(path), as_version=4)
    except Exception as e:  # nbformat raises several kinds (JSON, validation)
        raise WorkbookError(f"cannot read notebook {path}: {e}") from None
    return nb


def validate_notebook(nb, label):
    """Check ``nb`` against the nbformat schema before anything runs: a
    one-line WorkbookError naming the first invalid cell, or None."""
    import nbformat
    from nbformat.validator import NotebookValidationError

    try:
        nbformat.validate(nb)
    except NotebookValidationError as e:
        where = list(getattr(e, "absolute_path", []) or [])
        if len(where) >= 2 and where[0] == "cells" and isinstance(where[1], int):
            cell = nb.cells[where[1]] if where[1] < len(nb.cells) else {}
            kind = cell.get("cell_type") if isinstance(cell, dict) else None
            what = f"cell {where[1] + 1} (id {cell.get('id')!r}, cell_type {kind!r})"
            if kind not in ("code", "markdown", "raw"):
                raise WorkbookError(f"{label} is not a valid notebook: {what} has an unknown cell type; "
                                    "use 'code', 'markdown' or 'raw'") from None
            raise WorkbookError(f"{label} is not a valid notebook: {what} breaks the nbformat schema") from None
        msg = " ".join(str(getattr(e, "message", e)).split())[:200]
        raise WorkbookError(f"{label} is not a valid notebook: {msg}") from None


def recorded_parameters(nb, label):
    """The parameter values an executed notebook was rendered with, or {}.

    The summary record's ``parameters`` (the full set, when the workbook
    passed them to ``Summary``) if the notebook carries one, else the values
    in its ``injected-parameters`` cell; a notebook never rendered gives {}.
    """
    from toolkit.report.summary import SUMMARY_METADATA_KEY

    for cell in nb.cells:
        for out in cell.get("outputs", []) if cell.get("cell_type") == "code" else []:
            md = out.get("metadata", {}).get(SUMMARY_METADATA_KEY)
            if isinstance(md, dict) and isinstance(md.get("summary"), dict) \
                    and isinstance(md["summary"].get("parameters"), dict):
                return dict(md["summary"]["parameters"])
    values = {}
    for cell in nb.cells:
        if INJECTED_TAG in cell_tags(cell):
            values.update({k: p.default for k, p in
                           parse_parameters(cell.source, f"injected cell of {label}").items()})
    return values


def write_notebook(nb, path):
    """Validate ``nb`` and write it to ``path`` (UTF-8, ``\\n`` line ends),
    whole or not at all (through a temporary file beside it)."""
    import nbformat

    nbformat.validate(nb)
    atomic_write(Path(path), lambda f: nbformat.write(nb, f))


def drop_injected(nb):
    """Remove the cell an earlier run injected (in place)."""
    nb.cells = [c for c in nb.cells if INJECTED_TAG not in cell_tags(c)]
    return nb


def parameters_cell(nb, label):
    """Index of the one code cell tagged ``parameters``, or WorkbookError."""
    idx = [i for i, c in enumerate(nb.cells) if PARAMETERS_TAG in cell_tags(c)]
    if not idx:
        raise WorkbookError(f"{label} has no cell tagged {PARAMETERS_TAG!r}")
    if len(idx) > 1:
        raise WorkbookError(f"{label} has {len(idx)} cells tagged {PARAMETERS_TAG!r} "
                            f"(cells {', '.join(str(i + 1) for i in idx)}); keep one")
    if nb.cells[idx[0]].cell_type != "code":
        raise WorkbookError(f"{label}: the cell tagged {PARAMETERS_TAG!r} is not a code cell")
    return idx[0]


def workbook_parameters(workbook):
    """``{name: Parameter}`` of a workbook (name in ``workbooks/`` or path)."""
    path = resolve_workbook(workbook)
    nb = read_notebook(path)
    return parse_parameters(nb.cells[parameters_cell(nb, path.name)].source, path.name)


def inject_parameters(nb, index, overrides):
    """Insert a cell tagged ``injected-parameters`` that assigns ``overrides``
    right after cell ``index`` (the parameters cell); nothing if there are none."""
    if not overrides:
        return nb
    import nbformat

    src = "# Parameters of this run (stresspath render)\n" + "".join(
        f"{k} = {v!r}\n" for k, v in overrides.items())
    cell = nbformat.v4.new_code_cell(src.rstrip("\n"), metadata={"tags": [INJECTED_TAG]})
    cell["id"] = INJECTED_CELL_ID
    nb.cells.insert(index + 1, cell)
    return nb


def clear_outputs(nb):
    """Empty every code cell's outputs and execution count (in place)."""
    for c in nb.cells:
        if c.cell_type == "code":
            c.outputs, c.execution_count = [], None
    return nb


def clean_notebook(nb):
    """Strip what changes between identical runs or carries widget state (in place)."""
    nb.metadata.pop("widgets", None)
    li = nb.metadata.get("language_info")
    if isinstance(li, dict):
        li.pop("version", None)
    for cell in nb.cells:
        cell.metadata.pop("execution", None)
        cell.metadata.pop("ExecuteTime", None)
        if cell.cell_type == "code":
            cell.outputs = [o for o in cell.get("outputs", []) if WIDGET_VIEW_MIME not in o.get("data", {})]
    return nb


def ensure_ids(nb):
    """Cell ids for nbformat 4.5: keep existing ones, give missing ones a stable id."""
    nb.nbformat, nb.nbformat_minor = 4, max(nb.get("nbformat_minor", 5), 5)
    seen = {c.get("id") for c in nb.cells if c.get("id")}
    for i, cell in enumerate(nb.cells):
        if not cell.get("id"):
            cid = f"cell-{i}"
            while cid in seen:
                cid += "-x"
            cell["id"] = cid
            seen.add(cid)
