"""The imported-results workbook with several load cases and a load history
(issue 12, deliverable 7): the demo history rendered end to end, the damage
of a constant-amplitude history against the closed form of the IIW S-N
curve, linearity of the workbook's combination, and input errors that stop
the run before any work with exit code 2."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

import toolkit as tk
from helpers import DEMO_BRACKET
from toolkit.cli import main
from toolkit.core.cases import combine_nodal
from toolkit.workbook import render


def _render(tmp_path, **params):
    r = render("from_results", tmp_path / "out", params=params, progress=False)
    return r.summary


def _check(summary, start):
    return next(c for c in summary["checks"] if c["name"].startswith(start))


def test_demo_history_renders_and_records_damage_life_equivalent_range_and_the_check(tmp_path):
    """load_history="demo": the summary records the damage of one repeat, the life in repeats (1/D),
    the equivalent range and the Palmgren-Miner check over history_repeats against D = 0.5 (IIW,
    variable amplitude, from memory); the hot-spot stress of the state case_factors is unchanged."""
    s = _render(tmp_path, load_history="demo", history_repeats=20000.0)
    v = s["values"]
    D = v["history_damage"]["value"]
    assert 0 < D < 1e-3
    assert v["history_life"]["value"] == pytest.approx(1.0 / D, rel=1e-12)
    # 30 invented lifts (data/make_demo_histories.py): 30 cycles, none above the largest hot-spot state
    assert v["history_cycles"]["value"] == pytest.approx(30.0)
    hs = v["hot_spot_stress"]["value"]                        # pull alone, as the default report
    assert hs == pytest.approx(86.59, abs=0.01)
    assert 0 < v["equivalent_range"]["value"] < hs
    c = _check(s, "fatigue, hot-spot stress history")
    assert c["value"] == pytest.approx(20000.0 * D, rel=1e-12) and c["limit"] == 0.5
    assert c["status"] == ("PASS" if 20000.0 * D <= 0.5 else "FAIL")
    assert not any(x["name"].startswith("fatigue, hot-spot stress (type a") for x in s["checks"])


def test_constant_amplitude_history_gives_the_closed_form_damage(tmp_path):
    """A history of 50 lifts of the pull case (0 -> 1 -> 0) and no shear: every cycle's range is the
    hot-spot stress of pull, so D = 50 / N with N = 2e6 (FAT f(t) / gamma_M / range)^3 (IIW S-N curve,
    m = 3 above the knee; Hobbacher 2016; the range is the principal one, Mohr's circle of pull's
    hot-spot tensor, whose axis lies within 60 degrees of x), and 2e6 cycles of the equivalent range
    give the same D on the two-slope curve."""
    rows = ["time,pull"] + [f"{k},{k % 2}" for k in range(101)]
    (tmp_path / "lifts.csv").write_text("\n".join(rows) + "\n")
    s = _render(tmp_path, load_history=str(tmp_path / "lifts.csv"))
    v = s["values"]
    assert v["history_cycles"]["value"] == pytest.approx(50.0)
    mesh, cases = tk.read_cases(DEMO_BRACKET)
    nodal = tk.recover_cases(cases, "l2")["pull"]
    ds = np.linspace(0.0, 15.0, 151)
    surf = tk.sample(nodal, tk.line((100.0, 40.0), (85.0, 40.0)), distances=ds)
    hs = np.array([tk.hot_spot_stress((ds, surf[c]), thickness=10.0, rule="a-linear", regions=surf.cell_region).value
                   for c in ("sxx", "syy", "sxy")])
    sxx, syy, sxy = hs
    principal = 0.5 * (sxx + syy) + np.hypot(0.5 * (sxx - syy), sxy)   # Mohr's circle
    N = 2e6 * (90.0 / 1.15 / principal) ** 3
    assert v["history_damage"]["value"] == pytest.approx(50.0 / N, rel=1e-9)
    # equal damage from 2e6 cycles: N_eq = 2e6 / D lies beyond the knee (1e7 cycles), where the
    # variable-amplitude curve has the slope m2 = 22 (IIW 2016, from memory; the value is the data file's)
    D = 50.0 / N
    knee = 90.0 / 1.15 * (2e6 / 1e7) ** (1 / 3)
    assert 2e6 / D > 1e7
    assert v["equivalent_range"]["value"] == pytest.approx(knee * (1e7 / (2e6 / D)) ** (1 / 22), rel=1e-9)


def test_workbook_combination_equals_projecting_the_combined_field():
    """The workbook projects every case with one projector and combines the nodal fields; projection is
    linear (Hinton & Campbell 1974), so this equals projecting the combined integration-point field
    (to the CG tolerance), and so do the hot-spot tensors read from them."""
    mesh, cases = tk.read_cases(DEMO_BRACKET)
    w = {"pull": 0.7, "shear": -1.3}
    combined = combine_nodal(tk.recover_cases(cases, "l2"), w)
    direct = tk.project_l2(cases.combine(w))
    assert np.array_equal(combined.node, direct.node) and np.array_equal(combined.region, direct.region)
    assert np.allclose(combined.values, direct.values, rtol=0, atol=1e-7 * np.abs(direct.values).max())


def _render_code(tmp_path, capsys, **sets):
    argv = ["render", "from_results", "--quiet", "--out", str(tmp_path / "out")]
    for k, v in sets.items():
        argv += ["--set", f"{k}={v}"]
    code = main(argv)
    return code, capsys.readouterr().err


def test_a_history_naming_an_unknown_case_stops_with_exit_2(tmp_path, capsys):
    (tmp_path / "h.csv").write_text("time,pull,twist\n0,0,0\n1,1,0.5\n")
    code, err = _render_code(tmp_path, capsys, load_history=str(tmp_path / "h.csv"))
    assert code == 2, err
    assert err.count("\n") == 1 and "load_history: column 'twist' of h.csv names no load case" in err
    assert "'pull', 'shear'" in err
    assert not (tmp_path / "out" / "from_results.html").exists()
    # it stops in the cell that reads the results, before any recovery
    failed = json.loads((tmp_path / "out" / "from_results.failed.ipynb").read_text())
    ran = [c for c in failed["cells"] if c["cell_type"] == "code" and c.get("outputs")]
    assert "read_cases" in "".join(ran[-1]["source"]) and not any("recover_cases" in "".join(c["source"]) for c in ran)


def test_case_factors_naming_an_unknown_case_stops_with_exit_2(tmp_path, capsys):
    code, err = _render_code(tmp_path, capsys, case_factors='{"pul": 1.0}')
    assert code == 2, err
    assert "case_factors: no load case 'pul' in demo_bracket" in err
