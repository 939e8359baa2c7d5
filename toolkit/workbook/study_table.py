"""The table of a parameter study: one row per variant (its parameters, its
summary values, its check statuses and utilizations, a link to its report)
written as ``study.csv`` (plain CSV, no pandas) and as ``study.html``, an
offline page with the table and plots of chosen values against one varied
parameter (PNG inlined).

Nothing in either file changes between identical runs (no times, no absolute
paths), so a study rendered on a local pool and on a cluster gives the same files.
"""
from __future__ import annotations

import base64
import csv
import html
import io
import math
import numbers

from toolkit.errors import InputError
from toolkit.io.files import atomic_write
from toolkit.report.format import fmt

__all__ = ["study_rows", "write_study", "parameter_unit", "parse_plot", "STUDY_CSV", "STUDY_HTML"]

STUDY_CSV = "study.csv"
STUDY_HTML = "study.html"
_CAUTION = ("These results support, and do not replace, the judgment of a qualified engineer and the governing "
            "codes; each variant's report states its own scope and cautions.")


def parameter_unit(p) -> str:
    """The unit of a workbook parameter: the first clause of its comment when it is
    one short word (``mm``, ``MPa``), else ``""``."""
    first = (p.text or "").split(",")[0].split(";")[0].strip()
    return first if first and len(first) <= 8 and " " not in first else ""


def parse_plot(text: str) -> tuple:
    """``"Y1,Y2:X"`` -> ``(["Y1", "Y2"], "X")``: summary values Y against parameter X."""
    ys, sep, x = str(text).partition(":")
    names = [y.strip() for y in ys.split(",") if y.strip()]
    if not sep or not names or not x.strip().isidentifier():
        raise InputError(f"--plot {text!r}: write VALUE[,VALUE...]:PARAMETER, e.g. kt_net,kt_net_heywood:hole_diameter")
    return names, x.strip()


def _varied(result) -> list:
    names = []
    for v in result.variants:
        for k in v.given:
            if k not in names:
                names.append(k)
    return names


def study_rows(result, param_units=None) -> tuple:
    """``(headers, rows)`` of the study table, rows in the variants' order;
    numbers kept as numbers (full precision), a missing entry as ``""``."""
    param_units = param_units or {}
    varied = _varied(result)
    values, checks = {}, []
    for v in result.variants:
        for k, e in ((v.summary or {}).get("values") or {}).items():
            values.setdefault(k, e.get("unit", ""))
        for c in (v.summary or {}).get("checks") or []:
            if c["name"] not in checks:
                checks.append(c["name"])
    unit = lambda u: f" [{u}]" if u else ""
    headers = (["variant", "run"] + [k + unit(param_units.get(k, "")) for k in varied]
               + [k + unit(u) for k, u in values.items()]
               + [h for c in checks for h in (f"{c} status", f"{c} utilization")] + ["report", "reason"])
    rows = []
    for v in result.variants:
        s = v.summary or {}
        vals = s.get("values") or {}
        by_check = {c["name"]: c for c in s.get("checks") or []}
        row = [v.folder, v.status] + [v.parameters.get(k, "") for k in varied]
        row += [vals[k]["value"] if k in vals else "" for k in values]
        for c in checks:
            row += [by_check[c]["status"], by_check[c]["utilization"]] if c in by_check else ["", ""]
        row += [f"{v.folder}/{result.workbook}.html" if v.status == "done" else "", v.reason]
        rows.append(row)
    return headers, rows


def _csv_cell(x):
    if isinstance(x, bool):
        return str(x).lower()
    if isinstance(x, float):
        return repr(x)
    if isinstance(x, (list, tuple, dict)):
        import json

        return json.dumps(x, separators=(",", ":"))
    return x


def _number(x):
    return isinstance(x, numbers.Real) and not isinstance(x, bool) and math.isfinite(float(x))


def _plot_lines(result, ys, x):
    """The curves of one plot: for each y, one line per combination of the other varied parameters."""
    others = [k for k in _varied(result) if k != x]
    groups = {}
    for v in result.variants:
        vals = (v.summary or {}).get("values") or {}
        xv = v.parameters.get(x)
        if v.status != "done" or not _number(xv):
            continue
        key = tuple((k, v.parameters.get(k)) for k in others)
        for y in ys:
            if y in vals and _number(vals[y]["value"]):
                groups.setdefault((y, key), []).append((xv, vals[y]["value"]))
    lines = []
    for (y, key), pts in groups.items():
        pts.sort()
        label = ", ".join([y] * (len(ys) > 1) + [f"{k}={fmt(val, 6)}" for k, val in key])
        lines.append((label, [p[0] for p in pts], [p[1] for p in pts]))
    return lines


def _default_plots(result):
    varied = [k for k in _varied(result)
              if len({repr(v.parameters.get(k)) for v in result.variants}) > 1
              and all(_number(v.parameters.get(k)) for v in result.variants)]
    keys = []
    for v in result.variants:
        for k, e in ((v.summary or {}).get("values") or {}).items():
            if e.get("key") and k not in keys:
                keys.append(k)
    return [([k], varied[0]) for k in keys] if varied else []


def _plots_html(result, plots, param_units):
    parts = []
    for ys, x in plots:
        lines = _plot_lines(result, ys, x)
        if not lines:
            parts.append(f"<p>No plot of {html.escape(', '.join(ys))} against {html.escape(x)}: no finished "
                         "variant has these as numbers.</p>")
            continue
        from toolkit.report.study_plot import study_plot_png

        units = sorted({((v.summary or {}).get("values") or {}).get(y, {}).get("unit", "") for v in result.variants
                        for y in ys} - {""})
        xu = param_units.get(x, "")
        png = study_plot_png(lines, x + (f" [{xu}]" if xu else ""),
                             ", ".join(ys) + (f" [{', '.join(units)}]" if units else ""),
                             title=f"{', '.join(ys)} against {x}")
        alt = html.escape(f"{', '.join(ys)} against {x}")
        parts.append(f'<figure><img alt="{alt}" src="data:image/png;base64,{base64.b64encode(png).decode()}">'
                     f"<figcaption>{alt}</figcaption></figure>")
    return "\n".join(parts)


_CSS = """body{font-family:sans-serif;margin:2em;color:#222}table{border-collapse:collapse;font-size:90%}
th,td{border:1px solid #bbb;padding:3px 6px;text-align:right}th{background:#eee}td.t{text-align:left}
.FAIL,.failed,.not-run{color:#b00;font-weight:bold}.PASS{color:#070}figure{display:inline-block;margin:1em}
.caution{border-left:4px solid #c90;padding:0.3em 0.8em;background:#fff8e8}"""


def _html_page(result, headers, rows, plots_html):
    n = len(result.variants)
    done = sum(v.status == "done" for v in result.variants)
    head = "".join(f"<th>{html.escape(h)}</th>" for h in headers[:-2]) + "<th>report</th><th>reason</th>"
    body = []
    for row in rows:
        cells = []
        for h, x in zip(headers, row):
            if h == "report":
                cells.append(f'<td class="t"><a href="{html.escape(x)}">report</a></td>' if x else "<td></td>")
            elif isinstance(x, str):
                cls = x.replace(" ", "-") if x in ("PASS", "FAIL", "failed", "not run") else ""
                cells.append(f'<td class="t {cls}">{html.escape(x)}</td>')
            else:
                cells.append(f"<td>{html.escape(fmt(x, 6))}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return (f"<!DOCTYPE html>\n<html><head><meta charset=\"utf-8\"><title>Study: {html.escape(result.workbook)}"
            f"</title><style>{_CSS}</style></head><body>\n<h1>Parameter study: {html.escape(result.workbook)}</h1>\n"
            f"<p>{done} of {n} variants have a complete report. Each row links to its variant's report; "
            f"the same table is in {STUDY_CSV}.</p>\n<p class=\"caution\">{html.escape(_CAUTION)}</p>\n"
            f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>\n"
            f"{plots_html}\n</body></html>\n")


def write_study(result, plots=None) -> tuple:
    """Write ``study.csv`` and ``study.html`` into ``result.out`` (each whole or
    not at all); returns their paths.  ``plots``: list of ``(y names, x name)``,
    default the key values against the first varied numeric parameter."""
    param_units = result.units or {}
    headers, rows = study_rows(result, param_units)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(headers)
    w.writerows([[_csv_cell(x) for x in row] for row in rows])
    csv_path, html_path = result.out / STUDY_CSV, result.out / STUDY_HTML
    atomic_write(csv_path, lambda f: f.write(buf.getvalue()))
    plots = _default_plots(result) if plots is None else plots
    page = _html_page(result, headers, rows, _plots_html(result, plots, param_units))
    atomic_write(html_path, lambda f: f.write(page))
    return csv_path, html_path
