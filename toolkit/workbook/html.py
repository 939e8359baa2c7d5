"""The offline HTML report: an executed notebook exported with the
``offline_report`` template, images embedded, and refused if anything in it
would load from the network.

nbconvert is imported when needed, so ``import toolkit`` does not need it.
"""
from __future__ import annotations

import re
from importlib.resources import files

from toolkit.errors import WorkbookError

__all__ = ["notebook_html", "TEMPLATE_NAME"]

TEMPLATE_NAME = "offline_report"

_REMOTE_LOAD = re.compile(
    # any element whose src/href/data/srcset points off the page (plain links included)
    r"""<[a-z][a-z0-9]*\b[^>]*?\b(?:src|href|data|srcset)\s*=\s*["']?\s*(?:https?:)?//"""
    r"""|url\(\s*["']?\s*(?:https?:)?//|@import""", re.IGNORECASE)
_STYLE = re.compile(r"(<style[^>]*>)(.*?)(</style>)", re.DOTALL | re.IGNORECASE)
_CSS_COMMENT = re.compile(r"/\*.*?\*/", re.DOTALL)


def _offline_css(css):
    """Drop the URL scheme of references inside CSS comments (attributions kept, no URL)."""
    return _CSS_COMMENT.sub(lambda m: re.sub(r"https?://", "", m.group(0)), css)


def notebook_html(nb, title):
    """A self-contained HTML page of notebook ``nb`` titled ``title``; WorkbookError
    if it would load remote content."""
    from importlib.resources import as_file

    from nbconvert import HTMLExporter

    with as_file(files("toolkit.workbook") / "templates") as tdir:
        exporter = HTMLExporter(template_name=TEMPLATE_NAME, extra_template_basedirs=[str(tdir)],
                                embed_images=True)
        body, _ = exporter.from_notebook_node(nb, resources={"metadata": {"name": title}})
    body = _STYLE.sub(lambda m: m.group(1) + _offline_css(m.group(2)) + m.group(3), body)
    bad = _REMOTE_LOAD.search(body)
    if bad:
        raise WorkbookError(f"the HTML report would load remote content ({body[bad.start():bad.start() + 80]!r}); "
                            "embed the file or drop the reference")
    return body
