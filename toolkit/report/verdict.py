"""The verdict block at the top of a report: every check's value, limit,
utilization and status, the governing check (largest utilization) and the
key design values, built from the recorded summary.

The verdict can only be known after the checks run, so a workbook puts a
placeholder cell (tagged ``verdict``, :func:`verdict_placeholder`) right after
its title block, and ``toolkit.workbook.render`` fills that cell of the HTML
report from the summary the workbook recorded (:class:`Verdict`).  The
executed ``.ipynb`` keeps the placeholder, so its outputs stay what the kernel
prints and strict ``pytest --nbval`` still compares them.
"""
from __future__ import annotations

import html

from toolkit.report.format import fmt, fmt_unit, unit_text

__all__ = ["VERDICT_TAG", "Verdict", "verdict_placeholder", "governing_check"]

VERDICT_TAG = "verdict"
_PLACEHOLDER = ("Verdict: filled in by render from the recorded summary once the checks have run "
                "(the summary itself is near the end).")


class _Text:
    def __init__(self, text):
        self.text = text

    def __repr__(self):
        return self.text


def verdict_placeholder():
    """The placeholder a workbook shows in its ``verdict`` cell (render fills the report's copy)."""
    return _Text(_PLACEHOLDER)


def governing_check(checks):
    """The check with the largest utilization (the first of equals), or None if there are none."""
    best = None
    for c in checks:
        if best is None or c["utilization"] > best["utilization"]:
            best = c
    return best


class Verdict:
    """The verdict of a summary record (``{"values": {...}, "checks": [...]}``)."""

    def __init__(self, summary: dict):
        self.checks = list(summary.get("checks", []))
        self.key_values = {k: v for k, v in summary.get("values", {}).items() if v.get("key")}
        self.governing = governing_check(self.checks)

    @property
    def status(self) -> str:
        if not self.checks:
            return "NO CHECKS"
        return "FAIL" if any(c["status"] == "FAIL" for c in self.checks) else "PASS"

    def headline(self) -> str:
        n = len(self.checks)
        if not n:
            return "Verdict: no checks recorded"
        fails = sum(c["status"] == "FAIL" for c in self.checks)
        g = self.governing
        if fails:
            what = f"{fails} of {n} checks fail" if n > 1 else "the check fails"
        else:
            what = f"all {n} checks pass" if n > 1 else "the check passes"
        return (f"Verdict: {self.status} ({what}); governing check: {g['name']}, "
                f"utilization {g['utilization']:.3f}")

    def _check_rows(self):
        for c in self.checks:
            u = c.get("unit", "-")
            yield (c["name"], fmt_unit(c["value"], u, 4), fmt_unit(c["limit"], u, 4), f"{c['utilization']:.3f}",
                   c["status"] + ("  (governing)" if c is self.governing else ""))

    def _value_rows(self):
        for name, e in self.key_values.items():
            yield name, fmt(e["value"], 4), unit_text(e["unit"]), e.get("note", "")

    def __repr__(self):
        lines = [self.headline()]
        if self.checks:
            lines.append("  check | value | limit | utilization | status")
            lines += ["  " + " | ".join(r) for r in self._check_rows()]
        if self.key_values:
            lines.append("  key design values:")
            lines += [f"  {n} = {v}" + ("" if u == "–" else f" {u}") + (f"  ({note})" if note else "")
                      for n, v, u, note in self._value_rows()]
        return "\n".join(lines)

    def _repr_html_(self):
        esc = html.escape
        cls = {"PASS": "sp-pass", "FAIL": "sp-fail"}.get(self.status, "sp-none")
        out = [f"<div class='sp-verdict {cls}'><h2>{esc(self.headline())}</h2>"]
        if self.checks:
            out.append("<table><tr><th>check</th><th>value</th><th>limit</th><th>utilization</th><th>status</th></tr>")
            out += ["<tr>" + "".join(f"<td>{esc(x)}</td>" for x in r) + "</tr>" for r in self._check_rows()]
            out.append("</table>")
        if self.key_values:
            out.append("<table><caption style='text-align:left'><b>Key design values</b></caption>"
                       "<tr><th>quantity</th><th>value</th><th>unit</th><th>note</th></tr>")
            out += ["<tr>" + "".join(f"<td>{esc(x)}</td>" for x in r) + "</tr>" for r in self._value_rows()]
            out.append("</table>")
        out.append("</div>")
        return "".join(out)
