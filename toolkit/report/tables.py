"""Small result tables and the workbook footer.

A :class:`Table` shows as fixed-width text (what strict ``pytest --nbval``
compares, so numbers are formatted, never bare reprs) and as an HTML table
in notebooks and reports.
"""
from __future__ import annotations

import html
import os
import platform

from toolkit.errors import InputError
from toolkit.report.format import fmt
from toolkit.report.summary import inputs_hash, inputs_record

__all__ = ["Table", "inputs_table", "footer", "headless", "HEADLESS_ENV"]

HEADLESS_ENV = "STRESSPATH_HEADLESS"


def headless() -> bool:
    """True when a workbook runs without a person at it (``render``, ``demo``,
    ``pytest --nbval``): live widgets and progress widgets are then left out,
    because their comm traffic can stall a headless notebook client and they
    would be dropped from the report anyway.  Set by ``toolkit.workbook.render`` through the
    ``STRESSPATH_HEADLESS`` environment variable."""
    return os.environ.get(HEADLESS_ENV, "") not in ("", "0")


class Table:
    """Rows of cells with a header; ``digits`` significant figures for numbers."""

    def __init__(self, rows, headers, title=None, digits=4):
        self.headers = [str(h) for h in headers]
        self.rows = [[fmt(c, digits) for c in r] for r in rows]
        for i, r in enumerate(self.rows):
            if len(r) != len(self.headers):
                raise InputError(f"table row {i + 1} has {len(r)} cells for {len(self.headers)} headers")
        self.title = title

    def __repr__(self):
        widths = [max(len(h), *(len(r[i]) for r in self.rows)) if self.rows else len(h)
                  for i, h in enumerate(self.headers)]
        line = lambda cells: "  ".join(c.ljust(w) for c, w in zip(cells, widths)).rstrip()
        out = ([self.title] if self.title else []) + [line(self.headers), line(["-" * w for w in widths])]
        out += [line(r) for r in self.rows]
        return "\n".join(out)

    def _repr_html_(self):
        h = "".join(f"<th>{html.escape(c)}</th>" for c in self.headers)
        body = "".join("<tr>" + "".join(f"<td>{html.escape(c)}</td>" for c in r) + "</tr>" for r in self.rows)
        cap = f"<caption>{html.escape(self.title)}</caption>" if self.title else ""
        return f"<table>{cap}<thead><tr>{h}</tr></thead><tbody>{body}</tbody></table>"


def inputs_table(params: dict, units: dict | None = None, notes: dict | None = None) -> Table:
    """The inputs as given, with their units, for the echo section."""
    units = units or {}
    notes = notes or {}
    rows = [[k, v if not isinstance(v, (list, tuple, dict)) else str(v), units.get(k, ""), notes.get(k, "")]
            for k, v in params.items()]
    return Table(rows, ["parameter", "value", "unit", "note"], title="Inputs", digits=6)


def footer(params: dict) -> str:
    """Toolkit version, Python version and the full inputs hash (parameters,
    imported files, S-N data, toolkit version: ``inputs_hash(params,
    inputs_record(params))``, the hash render writes to summary.json), so a
    checker can tell two runs apart."""
    from toolkit import __version__

    return (f"Stresspath {__version__} (Python {platform.python_version_tuple()[0]}."
            f"{platform.python_version_tuple()[1]}); inputs hash {inputs_hash(params, inputs_record(params))}")
