"""The report's title block: project, document number, component, revision,
prepared by, checked by and date, read from the run and shown at the top.

The title values are not workbook parameters (they do not change results):
``toolkit.workbook.render`` passes them to the kernel as JSON in the
``STRESSPATH_TITLE`` environment variable, and the workbook's first cell shows
them with :func:`title_block`.  A field not given shows as ``"not given"``;
no value is ever invented (no date is taken from the clock), so a workbook run
without a title (e.g. under ``pytest --nbval``) shows every field as "not
given" and its output stays the same from run to run.
"""
from __future__ import annotations

import html
import json
import os
from pathlib import Path

from toolkit.errors import InputError
from toolkit.io.files import read_json

__all__ = ["TITLE_FIELDS", "TITLE_ENV", "NOT_GIVEN", "TitleBlock", "title_block", "title_from_env",
           "read_title_file", "complete_title"]

#: The title fields in the order shown, with their labels.
TITLE_FIELDS = {"project": "Project", "document": "Document", "component": "Component", "revision": "Revision",
                "prepared_by": "Prepared by", "checked_by": "Checked by", "date": "Date"}
TITLE_ENV = "STRESSPATH_TITLE"
NOT_GIVEN = "not given"


def _clean(values, where) -> dict:
    """The given title fields as stripped strings (empty ones dropped); unknown keys refused."""
    if not isinstance(values, dict):
        raise InputError(f"{where}: a title is a JSON object with keys {', '.join(TITLE_FIELDS)}")
    unknown = sorted(set(values) - set(TITLE_FIELDS))
    if unknown:
        raise InputError(f"{where}: unknown title field(s) {', '.join(unknown)}; known: {', '.join(TITLE_FIELDS)}")
    out = {}
    for k, v in values.items():
        if v is None:
            continue
        if not isinstance(v, (str, int, float)) or isinstance(v, bool):
            raise InputError(f"{where}: title field {k!r} must be text, got {type(v).__name__}")
        v = str(v).strip()
        if v:
            out[k] = v
    return out


def read_title_file(path) -> dict:
    """The title fields of a JSON file such as ``{"project": "...", "document": "...", "revision": "B"}``."""
    p = Path(path)
    return _clean(read_json(p, "title file"), str(p))


def complete_title(*sources) -> dict:
    """Every title field, from the given dicts (later ones win), ``"not given"`` where none has it."""
    given = {}
    for s in sources:
        if s:
            given.update(_clean(s, "title"))
    return {k: given.get(k, NOT_GIVEN) for k in TITLE_FIELDS}


def title_from_env() -> dict:
    """The run's title (every field; ``"not given"`` where missing) from ``STRESSPATH_TITLE``."""
    text = os.environ.get(TITLE_ENV, "")
    if not text.strip():
        return complete_title()
    try:
        data = json.loads(text)
    except json.JSONDecodeError as e:
        raise InputError(f"{TITLE_ENV}: not valid JSON ({e})") from None
    return complete_title(data)


class TitleBlock:
    """The title block as a table (``text/plain`` and ``text/html``)."""

    def __init__(self, heading, title):
        self.heading = str(heading)
        self.title = complete_title(title)

    def __repr__(self):
        w = max(len(v) for v in TITLE_FIELDS.values())
        return "\n".join([self.heading] + [f"  {TITLE_FIELDS[k]:<{w}}  {v}" for k, v in self.title.items()])

    def _repr_html_(self):
        missing = " class='sp-not-given'"
        rows = "".join(f"<tr><th>{html.escape(TITLE_FIELDS[k])}</th><td{missing if v == NOT_GIVEN else ''}>"
                       f"{html.escape(v)}</td></tr>" for k, v in self.title.items())
        return (f"<div class='sp-title-block'><h1>{html.escape(self.heading)}</h1>"
                f"<table class='sp-title'>{rows}</table></div>")


def title_block(heading) -> TitleBlock:
    """The title block of the running workbook: ``heading`` and the title fields of the run."""
    return TitleBlock(heading, title_from_env())
