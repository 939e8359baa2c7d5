"""The four workbooks through the commands an engineer uses: demo, render
with changed parameters, bad parameters.  (Each workbook's stored outputs are
also compared cell by cell by strict nbval: see pyproject's pytest options.)"""
import json
import re

import pytest

from toolkit.cli import main
from toolkit.assess.references import heywood_kt_net, kirsch_kt

WORKBOOKS = ("plate_with_hole", "shoulder_fillet", "weld_toe", "from_results")


@pytest.fixture(scope="module")
def demo_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("reports")
    assert main(["demo", "--out", str(out)]) == 0
    return out


def _summary(folder, name=None):
    """The summary render wrote for workbook ``name`` (default: the folder's name)."""
    return json.loads((folder / f"{name or folder.name}.summary.json").read_text())


def test_demo_writes_every_report(demo_dir):
    assert (demo_dir / "recovery" / "plate_hole_nodal_l2.csv").is_file()
    for name in WORKBOOKS:
        d = demo_dir / name
        for f in (f"{name}.ipynb", f"{name}.html", f"{name}.summary.json"):
            assert (d / f).is_file(), f
        s = _summary(d)
        assert s["workbook"] == name and len(s["inputs_hash"]) == 12
        assert s["checks"] and all(set(c) >= {"name", "value", "limit", "utilization", "status"}
                                   for c in s["checks"])
        assert all(c["status"] in ("PASS", "FAIL") for c in s["checks"])


def test_summary_names_required_by_the_workbooks(demo_dir):
    need = {"plate_with_hole": {"kt_net", "kt_gross", "peak_stress"},
            "shoulder_fillet": {"kt", "peak_stress"},
            "weld_toe": {"hot_spot_stress", "hot_spot_stress_quadratic", "membrane_stress", "bending_stress",
                         "utilization"},
            "from_results": {"peak_stress", "hot_spot_stress"}}
    for name, keys in need.items():
        values = _summary(demo_dir / name)["values"]
        assert keys <= set(values), (name, keys - set(values))
        assert all(set(v) == {"value", "unit"} or "note" in v for v in values.values())


def test_reports_load_nothing_remote(demo_dir):
    for name in WORKBOOKS:
        html = (demo_dir / name / f"{name}.html").read_text(encoding="utf-8")
        for m in re.finditer(r'(?:src|href)\s*=\s*"([^"]*)"', html):
            assert m.group(1).startswith(("data:", "#")), (name, m.group(1)[:80])
        assert not re.search(r"<script[^>]+src=", html), name
        assert not re.search(r"https?://", html), name          # no URL at all, not even a link
        assert "<img" not in html or "data:image/png;base64" in html


def test_default_numbers_against_references(demo_dir):
    """Plate with hole: Kt,net within 3 % of Heywood (1952); weld toe: the
    linearised membrane stress equals the applied one by equilibrium (1 %)."""
    plate = _summary(demo_dir / "plate_with_hole")
    p = plate["parameters"]
    assert plate["values"]["kt_net"]["value"] == pytest.approx(heywood_kt_net(p["hole_diameter"] / p["width"]),
                                                              rel=0.03)
    weld = _summary(demo_dir / "weld_toe")
    assert weld["values"]["membrane_stress"]["value"] == pytest.approx(weld["parameters"]["membrane_stress_range"],
                                                                      rel=0.01)


def test_wider_plate_lowers_kt_toward_kirsch(demo_dir, tmp_path):
    """Heywood's Kt,gross = Kt,net / (1 - d/W) falls toward Kirsch's 3 as W/d grows."""
    out = tmp_path / "wide"
    assert main(["render", "plate_with_hole", "--set", "width=250", "--set", "length=600",
                 "--out", str(out), "--quiet"]) == 0
    wide = _summary(out, "plate_with_hole")["values"]["kt_gross"]["value"]
    narrow = _summary(demo_dir / "plate_with_hole")["values"]["kt_gross"]["value"]
    assert wide < narrow
    assert abs(wide - kirsch_kt()) < abs(narrow - kirsch_kt())
    assert wide == pytest.approx(heywood_kt_net(25 / 250) / (1 - 25 / 250), rel=0.03)


@pytest.mark.parametrize("args,reason", [
    (["--set", "widht=3"], "unknown parameter 'widht'"),
    (["--set", "width=wide"], "width"),
    (["--set", "width=-5"], "width"),
    (["--set", "safety_factor=0.5"], "safety_factor"),
])
def test_bad_parameters_stop_before_running(tmp_path, capsys, args, reason):
    out = tmp_path / "bad"
    assert main(["render", "plate_with_hole", *args, "--out", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("error:") and reason in err[0]
    assert not out.exists() or not any(out.iterdir())


def test_shape_choice_is_enforced(tmp_path, capsys):
    assert main(["render", "shoulder_fillet", "--set", "shape=square", "--out", str(tmp_path / "x")]) == 2
    assert "shape" in capsys.readouterr().err
