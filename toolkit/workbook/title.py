"""The title of a run: the fields ``new`` stored in the notebook's metadata,
then a title file, then single options (later ones win), every field
completed with "not given" (:func:`toolkit.report.title.complete_title`).

``new`` keeps what it is given under ``metadata["stresspath"]["title"]`` of
the new workbook, so each later ``render`` of it carries the same title block
without repeating the options.
"""
from __future__ import annotations

from toolkit.report.title import complete_title, read_title_file

__all__ = ["TITLE_METADATA_KEY", "notebook_title", "set_notebook_title", "run_title"]

TITLE_METADATA_KEY = "stresspath"


def notebook_title(nb) -> dict:
    """The title fields stored in a notebook's metadata (only those given)."""
    title = nb.metadata.get(TITLE_METADATA_KEY, {}).get("title", {})
    return {k: v for k, v in complete_title(title).items() if k in title}


def set_notebook_title(nb, fields: dict):
    """Store the given title fields in ``nb``'s metadata (nothing stored if there are none)."""
    complete_title(fields)                      # checks the field names
    given = {k: str(v).strip() for k, v in (fields or {}).items() if v is not None and str(v).strip()}
    if given:
        nb.metadata.setdefault(TITLE_METADATA_KEY, {})["title"] = given


def run_title(nb, title=None, title_file=None) -> dict:
    """Every title field of a run of ``nb``: notebook metadata, then ``title_file``, then ``title``."""
    from_file = read_title_file(title_file) if title_file is not None else {}
    return complete_title(notebook_title(nb), from_file, title)
