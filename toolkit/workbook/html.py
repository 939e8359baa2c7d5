"""The offline HTML report: an executed notebook exported with the
``offline_report`` template, images embedded, and refused if anything in it
would load from the network.

Before export, a copy of the notebook is made ready for print: the
``verdict`` cell shows the verdict of the recorded summary
(:class:`toolkit.report.verdict.Verdict`), ``# NBVAL_...`` marker lines are
dropped from the sources, the input of cells tagged ``remove-input``,
``hide-input`` or ``hide-code`` is left out (imports, the title and verdict
cells, plumbing; the code stays in the ``.ipynb``) and cells tagged
``remove-cell`` are left out whole.  The document number, revision and page
numbers go into the margins of every printed page (CSS ``@page``).

nbconvert is imported when needed, so ``import toolkit`` does not need it.
"""
from __future__ import annotations

import copy
import re
from importlib.resources import files

from toolkit.errors import WorkbookError
from toolkit.report.title import complete_title
from toolkit.report.verdict import VERDICT_TAG, Verdict

__all__ = ["notebook_html", "report_notebook", "TEMPLATE_NAME", "REMOVE_INPUT_TAGS", "REMOVE_CELL_TAGS"]

TEMPLATE_NAME = "offline_report"
REMOVE_INPUT_TAGS = ("remove-input", "hide-input", "hide-code")
REMOVE_CELL_TAGS = ("remove-cell",)

_REMOTE_LOAD = re.compile(
    # any element whose src/href/data/srcset points off the page (plain links included)
    r"""<[a-z][a-z0-9]*\b[^>]*?\b(?:src|href|data|srcset)\s*=\s*["']?\s*(?:https?:)?//"""
    r"""|url\(\s*["']?\s*(?:https?:)?//|@import""", re.IGNORECASE)
_STYLE = re.compile(r"(<style[^>]*>)(.*?)(</style>)", re.DOTALL | re.IGNORECASE)
_CSS_COMMENT = re.compile(r"/\*.*?\*/", re.DOTALL)
_NBVAL_LINE = re.compile(r"^[ \t]*#[ \t]*NBVAL_[A-Z_]+[ \t]*(?:\n|$)", re.MULTILINE)


def _offline_css(css):
    """Drop the URL scheme of references inside CSS comments (attributions kept, no URL)."""
    return _CSS_COMMENT.sub(lambda m: re.sub(r"https?://", "", m.group(0)), css)


def _css_string(text):
    """``text`` as a CSS string literal (quotes, backslashes and ``<`` escaped)."""
    out = "".join(f"\\{ord(ch):x} " if ch in '"\\<>\n' else ch for ch in str(text))
    return f'"{out}"'


def _page_css(title):
    """``@page`` margin boxes: document and revision bottom left, page numbers bottom right."""
    left = f"Document {title['document']}, revision {title['revision']}"
    return ("@page { @bottom-left { content: " + _css_string(left) + "; font-size: 8pt; } "
            "@bottom-right { content: \"page \" counter(page) \" of \" counter(pages); font-size: 8pt; } }")


def report_notebook(nb, summary=None):
    """A copy of ``nb`` ready for the report: the verdict cell filled from ``summary``
    (a summary record) and NBVAL marker lines dropped from the sources."""
    nb = copy.deepcopy(nb)
    for cell in nb.cells:
        if cell.cell_type != "code":
            continue
        cell.source = _NBVAL_LINE.sub("", cell.source)
        if summary is not None and VERDICT_TAG in cell.get("metadata", {}).get("tags", []):
            v = Verdict(summary)
            cell.outputs = [{"output_type": "display_data", "metadata": {},
                             "data": {"text/plain": repr(v), "text/html": v._repr_html_()}}]
    return nb


def notebook_html(nb, title, summary=None, title_fields=None):
    """A self-contained HTML page of notebook ``nb`` titled ``title``; WorkbookError
    if it would load remote content.

    ``summary``: the run's summary record (fills the verdict cell);
    ``title_fields``: the title block's fields (document and revision on every printed page).
    """
    from importlib.resources import as_file

    from nbconvert import HTMLExporter
    from traitlets.config import Config

    nb = report_notebook(nb, summary)
    config = Config()
    config.TagRemovePreprocessor.enabled = True
    config.TagRemovePreprocessor.remove_input_tags = set(REMOVE_INPUT_TAGS)
    config.TagRemovePreprocessor.remove_cell_tags = set(REMOVE_CELL_TAGS)
    resources = {"metadata": {"name": title}, "stresspath_page_css": _page_css(complete_title(title_fields))}
    with as_file(files("toolkit.workbook") / "templates") as tdir:
        exporter = HTMLExporter(template_name=TEMPLATE_NAME, extra_template_basedirs=[str(tdir)],
                                embed_images=True, config=config)
        body, _ = exporter.from_notebook_node(nb, resources=resources)
    body = _STYLE.sub(lambda m: m.group(1) + _offline_css(m.group(2)) + m.group(3), body)
    bad = _REMOTE_LOAD.search(body)
    if bad:
        raise WorkbookError(f"the HTML report would load remote content ({body[bad.start():bad.start() + 80]!r}); "
                            "embed the file or drop the reference")
    return body
