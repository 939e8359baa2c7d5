"""What a checker reads: the title block, the verdict first, the working of
each check, and a clean printed page.

One real workbook (plate_with_hole, defaults) is rendered once through the
command line with some title fields given; the tests read its HTML report and
summary.json.  The check working is tested without a kernel.  Expected values
are closed forms worked here by hand (σ_allow = f_y / S; IIW S-N curve
N = 2e6 (FAT/Δσ)^3 from the IIW recommendations, Hobbacher 2016; Palmgren–Miner
D = Σ n/N).  The PDF test runs only where a headless Chromium is installed.
"""
import json
import re

import numpy as np
import pytest

from toolkit.assess.checks import fatigue_check, sn_curve, static_check
from toolkit.cli import main
from toolkit.report.format import fmt, fmt_unit, unit_text
from toolkit.report.title import NOT_GIVEN, TITLE_ENV, TITLE_FIELDS, complete_title, title_block
from toolkit.report.verdict import Verdict
from toolkit.workbook import new_workbook
from toolkit.workbook.html import report_notebook
from toolkit.workbook.pdf import find_chromium

NUMPY_REPR = re.compile(r"\[\s*-?\d[\d.e+-]*\s+-?\d")   # "[" then digits and spaces: numpy's array text
GIVEN = {"--project": "Pump P-12", "--document": "CALC-0412", "--revision": "B", "--prepared-by": "A. Engineer"}


def _at(html, cls):
    """Where the element of class ``cls`` starts (not the style sheet's rule for it)."""
    return re.search(r"""<div class=["']%s""" % cls, html).start()


@pytest.fixture(scope="module")
def rendered(tmp_path_factory):
    out = tmp_path_factory.mktemp("plate")
    argv = ["render", "plate_with_hole", "--out", str(out), "--quiet"]
    for k, v in GIVEN.items():
        argv += [k, v]
    assert main(argv) == 0
    html = (out / "plate_with_hole.html").read_text(encoding="utf-8")
    summary = json.loads((out / "plate_with_hole.summary.json").read_text(encoding="utf-8"))
    return out, html, summary


# ---------------------------------------------------------------------------
# Title block
# ---------------------------------------------------------------------------
def test_title_fields_given_appear_in_the_html_and_summary_and_missing_ones_say_not_given(rendered):
    _, html, summary = rendered
    title = summary["title"]
    assert list(title) == list(TITLE_FIELDS)
    assert title["project"] == "Pump P-12" and title["document"] == "CALC-0412"
    assert title["revision"] == "B" and title["prepared_by"] == "A. Engineer"
    for k in ("component", "checked_by", "date"):
        assert title[k] == NOT_GIVEN
    block = html[_at(html, "sp-title-block"):]
    block = block[:block.index("</table>")]
    for v in GIVEN.values():
        assert v in block
    assert block.count(NOT_GIVEN) == 3
    for placeholder in ("Demonstration project", "(name)", "(date)"):
        assert placeholder not in html
    # the document number and revision on every printed page (CSS @page margin box)
    assert "@bottom-left" in html and "CALC-0412, revision B" in html and "counter(page)" in html


def test_title_fields_do_not_change_the_inputs_hash(rendered):
    _, _, summary = rendered
    from toolkit.report.summary import inputs_hash

    assert summary["inputs_hash"] == inputs_hash(summary["parameters"], summary["inputs"])


def test_title_block_without_a_title_shows_every_field_not_given(monkeypatch):
    monkeypatch.delenv(TITLE_ENV, raising=False)
    text = repr(title_block("Heading"))
    assert text.count(NOT_GIVEN) == len(TITLE_FIELDS)
    monkeypatch.setenv(TITLE_ENV, json.dumps({"date": "2026-03-02"}))
    text = repr(title_block("Heading"))
    assert "2026-03-02" in text and text.count(NOT_GIVEN) == len(TITLE_FIELDS) - 1


def test_an_unknown_title_field_is_refused(tmp_path, capsys):
    f = tmp_path / "title.json"
    f.write_text(json.dumps({"projekt": "typo"}), encoding="utf-8")
    assert main(["render", "plate_with_hole", "--title-file", str(f), "--out", str(tmp_path / "o")]) == 2
    assert "projekt" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_new_stores_the_title_fields_it_is_given(tmp_path):
    f = tmp_path / "p12.json"
    f.write_text(json.dumps({"project": "Pump P-12", "revision": "A"}), encoding="utf-8")
    p = new_workbook("plate_with_hole", "bracket 7", tmp_path / "wb", title={"revision": "C"}, title_file=f)
    import nbformat

    nb = nbformat.read(str(p), as_version=4)
    assert nb.metadata["stresspath"]["title"] == {"project": "Pump P-12", "revision": "C", "component": "bracket 7"}
    from toolkit.workbook.title import run_title

    t = run_title(nb, {"checked_by": "C. Checker"})
    assert t["component"] == "bracket 7" and t["checked_by"] == "C. Checker" and t["date"] == NOT_GIVEN


def test_cli_new_takes_the_title_options(tmp_path):
    assert main(["new", "weld_toe", "joint 12", "--out", str(tmp_path), "--document", "CALC-9"]) == 0
    import nbformat

    nb = nbformat.read(str(tmp_path / "joint 12.ipynb"), as_version=4)
    assert nb.metadata["stresspath"]["title"] == {"document": "CALC-9", "component": "joint 12"}


# ---------------------------------------------------------------------------
# Verdict first
# ---------------------------------------------------------------------------
def test_the_verdict_comes_before_the_first_figure_and_names_the_governing_check(rendered):
    _, html, summary = rendered
    v = _at(html, "sp-verdict")
    assert v < html.index("<img") and _at(html, "sp-title-block") < v
    block = html[v:html.index("</div>", v)]
    gov = max(summary["checks"], key=lambda c: c["utilization"])
    assert "governing check: " + gov["name"] in block
    assert "(governing)" in block
    for c in summary["checks"]:
        assert f"{c['utilization']:.3f}" in block and c["status"] in block
    assert "kt_net" in block and "MPa" in block     # key design values with units


def test_verdict_counts_failures_and_picks_the_largest_utilization():
    s = {"values": {"kt": {"value": 2.44, "unit": "1", "key": True}, "other": {"value": 1.0, "unit": "mm"}},
         "checks": [{"name": "a", "value": 1, "limit": 2, "utilization": 0.5, "status": "PASS", "unit": "MPa"},
                    {"name": "b", "value": 3, "limit": 2, "utilization": 1.5, "status": "FAIL", "unit": "-"}]}
    v = Verdict(s)
    assert v.status == "FAIL" and v.governing["name"] == "b"
    text = repr(v)
    assert "1 of 2 checks fail" in text and "governing check: b, utilization 1.500" in text
    assert "kt = 2.44" in text and "other" not in text
    assert Verdict({"values": {}, "checks": []}).status == "NO CHECKS"


def test_the_stored_notebook_keeps_the_placeholder(rendered):
    out, _, _ = rendered
    import nbformat

    nb = nbformat.read(str(out / "plate_with_hole.ipynb"), as_version=4)
    cell = next(c for c in nb.cells if "verdict" in c.metadata.get("tags", []))
    assert "filled in by render" in cell.outputs[0]["data"]["text/plain"]
    filled = report_notebook(nb, {"values": {}, "checks": []})
    cell = next(c for c in filled.cells if "verdict" in c.metadata.get("tags", []))
    assert "no checks recorded" in cell.outputs[0]["data"]["text/plain"]


# ---------------------------------------------------------------------------
# Checks show their working
# ---------------------------------------------------------------------------
def test_static_check_working_has_formula_substituted_numbers_and_units():
    # closed form: σ_allow = 355 / 1.5 = 236.7 MPa; u = 141.2 / 236.7 = 0.5966
    r = static_check(141.2, 355.0, 1.5)
    lines = r.working_lines()
    limit = next(line for line in lines if line.startswith("limit"))
    assert "f_y / S" in limit and "355 MPa / 1.5 = 236.7 MPa" in limit and "common practice" in limit
    util = next(line for line in lines if line.startswith("utilization"))
    assert "141.2 MPa / 236.7 MPa = 0.5966" in util
    assert r.to_dict()["working"] == lines


def test_fatigue_check_working_has_formula_substituted_numbers_units_and_source():
    # IIW FAT 90, m = 3 (Hobbacher 2016): N = 2e6 (90/100)^3 = 1.458e6 cycles; D = 1e5 / 1.458e6 = 0.06859
    r = fatigue_check([100.0, 50.0], [1e5, 1e5], sn_curve(90, amplitude="constant"))
    lines = r.working_lines()
    lives = next(line for line in lines if line.startswith("lives"))
    assert "N_i = N_ref (FAT_d / Δσ_d,i)^m" in lives and "100, 50 MPa" in lives and "1.458e+06" in lives
    damage = next(line for line in lines if line.startswith("damage"))
    assert "D = Σ n_i / N_i" in damage and "= 0.06859" in damage and "Palmgren–Miner" in damage
    assert any("IIW" in line for line in lines)
    assert next(line for line in lines if line.startswith("design FAT")).endswith("resistance]")


def test_no_numpy_repr_in_check_output():
    r = fatigue_check(np.array([99.796, 74.847, 49.898]), np.array([1e5, 2e5, 1e6]),
                      sn_curve(90, amplitude="variable"))
    for text in (repr(r), r._repr_html_(), json.dumps(r.to_dict()["working"], ensure_ascii=False)):
        assert not NUMPY_REPR.search(text), text
    assert "99.8, 74.85, 49.9" in repr(r)
    s = static_check(np.array([[100.0, 20.0, 5.0], [80.0, 0.0, 0.0]]), 355, 1.5, components=("sxx", "syy", "sxy"))
    assert not NUMPY_REPR.search(repr(s))


def test_the_formatter_formats_arrays_element_wise_and_dimensionless_values_without_a_unit():
    assert fmt(np.array([99.796, 74.847, 49.898])) == "99.8, 74.85, 49.9"
    assert fmt(np.arange(20.0)) == "0, 1, 2, …, 17, 18, 19"
    assert fmt(np.ones((2, 2))) == "(2×2) 1, 1, 1, 1"
    assert fmt_unit(2.4402, "1") == "2.44" and fmt_unit(2.4402, "-") == "2.44" and fmt_unit(60.0, "MPa") == "60 MPa"
    assert unit_text("1") == "–" and unit_text("MPa") == "MPa"
    assert complete_title({"project": "  "})["project"] == NOT_GIVEN


def test_the_report_has_no_numpy_repr_and_no_dimensionless_unit_one(rendered):
    _, html, _ = rendered
    assert not NUMPY_REPR.search(html)
    assert not re.search(r"\d 1(?:\s|<)", html.replace("1 1", ""))  # "2.4402 1" style values


# ---------------------------------------------------------------------------
# A clean printed page
# ---------------------------------------------------------------------------
def test_import_cells_markers_and_plumbing_are_absent_from_the_html(rendered):
    _, html, _ = rendered
    for code in ("import numpy", "from toolkit", "%matplotlib", "NBVAL_IGNORE_OUTPUT", "summary = Summary",
                 "title_block(", "verdict_placeholder"):
        assert code not in html, code
    assert "static_check</span>" in html            # the calculation's own code stays


def test_code_wraps_and_the_page_is_a4(rendered):
    _, html, _ = rendered
    assert re.search(r"pre[^{]*\{[^}]*white-space:\s*pre-wrap", html)
    assert re.search(r"@page\s*\{\s*size:\s*A4", html)


def test_pdf_without_chromium_is_exit_2_before_anything_runs(tmp_path, monkeypatch, capsys):
    monkeypatch.setattr("toolkit.workbook.pdf.find_chromium", lambda: None)
    assert main(["render", "plate_with_hole", "--pdf", "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "Chromium" in err[0]
    assert not (tmp_path / "o").exists()


@pytest.mark.skipif(find_chromium() is None, reason="no headless Chromium installed")
def test_pdf_is_written_when_chromium_exists(tmp_path):
    assert main(["render", "plate_with_hole", "--pdf", "--quiet", "--document", "CALC-1", "--out", str(tmp_path)]) == 0
    assert (tmp_path / "plate_with_hole.pdf").read_bytes()[:5] == b"%PDF-"
