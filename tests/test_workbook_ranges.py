"""Every documented range of the model workbooks renders (issue 16).

The element sizes scaled to the feature (``*_sizes`` in toolkit.fem.models),
the convergence-study sizes (``study_sizes``), the parameter rules that keep
every combination inside what the models accept, and the corners of the size
and geometry ranges: cheap corners are rendered, heavy ones are checked by
building the model and the study's meshes without rendering (mesher only).
The limits are the models' own (their InputError messages); the size
fractions are common practice, chosen from convergence runs (issue 16).
"""
import math

import numpy as np
import pytest

from toolkit.cli import main
from toolkit.errors import InputError
from toolkit.fem.models import (plate_with_hole, plate_with_hole_sizes, shoulder_fillet, shoulder_fillet_sizes,
                                weld_toe, weld_toe_sizes)
from toolkit.report.steps import study_sizes
from toolkit.workbook import workbook_parameters
from toolkit.workbook.parameters import ParameterError, resolve_values
from helpers import render_refused_by_rule


# ---------------------------------------------------------------------------
# study_sizes: constant ratio, capped coarsest (Celik et al. 2008: three grids, constant ratio)
# ---------------------------------------------------------------------------
def test_study_sizes_doubles_a_fine_size():
    assert study_sizes(0.25, 1.0) == [0.25, 0.5, 1.0]
    assert study_sizes(0.1, 1.0) == pytest.approx([0.1, 0.2, 0.4])


def test_study_sizes_goes_finer_when_4h_would_exceed_the_cap():
    """The coarsest never exceeds the cap; the set keeps its ratio and goes below h."""
    s = study_sizes(1.2, 1.0)
    assert s == pytest.approx([0.25, 0.5, 1.0])
    assert s[0] < 1.2


@pytest.mark.parametrize("size, cap, ratio, count", [(0.3, 2.0, 2.0, 3), (5.0, 2.0, 1.5, 4), (1.0, 1.0, 2.0, 5)])
def test_study_sizes_ratio_and_cap(size, cap, ratio, count):
    s = np.array(study_sizes(size, cap, ratio=ratio, count=count))
    assert len(s) == count and s[-1] <= cap * (1 + 1e-12)
    assert np.allclose(s[1:] / s[:-1], ratio)
    assert s[-1] == pytest.approx(min(size * ratio ** (count - 1), cap))


@pytest.mark.parametrize("kw, what", [
    (dict(size=0.0, coarsest=1.0), "size and coarsest must be positive"),
    (dict(size=1.0, coarsest=-1.0), "size and coarsest must be positive"),
    (dict(size=float("nan"), coarsest=1.0), "size must be a finite number"),
    (dict(size=1.0, coarsest=1.0, ratio=1.0), "ratio must exceed 1"),
    (dict(size=1.0, coarsest=1.0, count=2), "count must be an int of at least 3"),
    (dict(size=True, coarsest=1.0), "size must be a finite number"),
])
def test_study_sizes_input_checks(kw, what):
    with pytest.raises(InputError, match=what):
        study_sizes(**kw)


# ---------------------------------------------------------------------------
# Feature-scaled sizes: the default is a fraction of the feature, the study's
# coarsest size never exceeds the mesher's limit
# ---------------------------------------------------------------------------
def test_scaled_defaults():
    """Plate: π a/64 (16 elements on each 45° of the hole edge); fillet r/16;
    weld toe min(t, 2 leg)/48 (0.25 mm at t = 12, leg 8, the old default)."""
    h, cap = plate_with_hole_sizes(25.0)
    assert h == pytest.approx(math.pi * 12.5 / 64) and cap == pytest.approx(4 * h)
    assert shoulder_fillet_sizes(4.0) == (0.25, 1.0)
    assert weld_toe_sizes(12.0, 8.0) == (0.25, 1.0)
    assert weld_toe_sizes(12.0, 2.0) == pytest.approx((4.0 / 48, 4.0 / 12))
    assert plate_with_hole_sizes(25.0, 2.0)[0] == 2.0          # a positive size is taken as given


@pytest.mark.parametrize("seed", range(3))
def test_study_never_exceeds_the_mesher_limits(seed):
    """Random geometry and sizes up to each model's limit: every study size
    lies in (0, limit] (limits from the models' InputError: plate a, fillet
    r, sharp weld toe min(t, leg)/2)."""
    rng = np.random.default_rng(seed)
    for _ in range(200):
        d, r, t, leg = rng.uniform(0.01, 100, 4)
        for frac in (0.0, rng.uniform(0, 1), 1.0):
            h, cap = plate_with_hole_sizes(d, frac * d / 2)
            assert 0 < max(study_sizes(h, cap)) <= d / 2
            h, cap = shoulder_fillet_sizes(r, frac * r)
            assert 0 < max(study_sizes(h, cap)) <= r
            h, cap = weld_toe_sizes(t, leg, frac * min(t, leg) / 2)
            assert 0 < max(study_sizes(h, cap)) <= min(t, leg) / 2 * (1 + 1e-12)


@pytest.mark.parametrize("call", [lambda: plate_with_hole_sizes(0.0), lambda: plate_with_hole_sizes(10.0, -1.0),
                                  lambda: shoulder_fillet_sizes(float("nan")), lambda: weld_toe_sizes(10.0, -2.0),
                                  lambda: weld_toe_sizes(10.0, 8.0, float("inf"))])
def test_sizes_input_checks(call):
    with pytest.raises(InputError, match="must be"):
        call()


# ---------------------------------------------------------------------------
# Corners of the documented ranges
# ---------------------------------------------------------------------------
def _resolve(workbook, given):
    params = workbook_parameters(workbook)
    values, _ = resolve_values(params, given, workbook)       # raises ParameterError when a rule is broken
    return values


def _plate(v, h):
    return plate_with_hole(v["width"], v["length"], v["hole_diameter"], element_size=h)


def _fillet(v, h):
    return shoulder_fillet(v["shape"], v["large_width"], v["small_width"], v["fillet_radius"], element_size=h,
                           load=v["load"])


def _weld(v, h):
    return weld_toe(v["plate_thickness"], v["attachment_thickness"], v["weld_leg"], sides=v["sides"],
                    element_size=h)


MESHER_CORNERS = [
    # plate: the crash (d = 10, element_size = 2), the largest size allowed, extreme d/W and L/W
    ("plate_with_hole", dict(hole_diameter=10.0, element_size=2.0)),
    ("plate_with_hole", dict(hole_diameter=10.0, element_size=5.0)),
    ("plate_with_hole", dict(width=5000.0, length=5000.0, hole_diameter=5.0)),
    ("plate_with_hole", dict(width=100.0, length=2000.0, hole_diameter=99.0)),
    ("plate_with_hole", dict(width=1.0, length=1.0, hole_diameter=0.005)),
    ("plate_with_hole", dict(width=100.0, length=100.0, hole_diameter=25.0, element_size=0.125)),
    # fillet: the largest size (r), the smallest radius allowed for the width, the shaft, bending
    ("shoulder_fillet", dict(fillet_radius=4.0, element_size=4.0)),
    ("shoulder_fillet", dict(fillet_radius=10.0, element_size=10.0, load="bending")),
    ("shoulder_fillet", dict(shape="shaft", large_width=5000.0, small_width=4000.0, fillet_radius=500.0)),
    ("shoulder_fillet", dict(large_width=10.0, small_width=0.01, fillet_radius=4.995)),
    ("shoulder_fillet", dict(large_width=60.0, small_width=58.8, fillet_radius=0.6, element_size=0.6)),
    # weld toe: the crash (t/10 = 1.2), the largest size, thin and thick plates, small and large legs
    ("weld_toe", dict(element_size=1.2)),
    ("weld_toe", dict(element_size=4.0)),
    ("weld_toe", dict(plate_thickness=2.0, attachment_thickness=0.5, weld_leg=0.2, sides=1)),
    ("weld_toe", dict(plate_thickness=200.0, attachment_thickness=200.0, weld_leg=100.0)),
    ("weld_toe", dict(plate_thickness=2.0, attachment_thickness=20.0, weld_leg=10.0, element_size=1.0)),
]
BUILD = {"plate_with_hole": (_plate, lambda v: plate_with_hole_sizes(v["hole_diameter"], v["element_size"])),
         "shoulder_fillet": (_fillet, lambda v: shoulder_fillet_sizes(v["fillet_radius"], v["element_size"])),
         "weld_toe": (_weld, lambda v: weld_toe_sizes(v["plate_thickness"], v["weld_leg"], v["element_size"]))}


@pytest.mark.parametrize("workbook, given", MESHER_CORNERS)
def test_corner_meshes_build(workbook, given):
    """Mesher only: the rules accept the corner, and the model and the
    convergence study's three meshes all build (the study's coarsest inside
    the model's limit)."""
    v = _resolve(workbook, given)
    make, sizes = BUILD[workbook]
    h, cap = sizes(v)
    for size in [h] + study_sizes(h, cap):
        m = make(v, size)
        assert m.mesh.nodes.shape[0] > 0


RENDER_CORNERS = [
    ("plate_with_hole", ["hole_diameter=10", "element_size=2"]),          # issue 16: crashed in the study
    ("weld_toe", ["element_size=1.2"]),                                    # issue 16: crashed in the study
    ("shoulder_fillet", ["shape=shaft", "fillet_radius=10", "element_size=10"]),
]


@pytest.mark.parametrize("workbook, given", RENDER_CORNERS)
def test_corner_renders(tmp_path, workbook, given):
    """Rendered end to end with coarse meshes: exit 0 and a summary."""
    argv = ["render", workbook, "--out", str(tmp_path), "--quiet"]
    for g in given:
        argv += ["--set", g]
    assert main(argv) == 0
    assert (tmp_path / f"{workbook}.summary.json").is_file()


@pytest.mark.parametrize("workbook, given, rule", [
    ("shoulder_fillet", ["shape=shaft", "load=bending"], "shape == \"flat\" or load == \"tension\""),
    ("plate_with_hole", ["element_size=0.01"], "element_size == 0 or element_size >= hole_diameter / 200"),
    ("plate_with_hole", ["length=50"], "length >= width"),
    ("shoulder_fillet", ["fillet_radius=0.5"], "fillet_radius >= large_width / 100"),
    ("weld_toe", ["effective_notch=true", "weld_leg=0.5"], "effective_notch == False or weld_leg >= 0.59"),
    ("weld_toe", ["element_size=4.5"], "element_size <= min(plate_thickness, weld_leg) / 2"),
])
def test_out_of_rule_combinations_exit_2_before_running(tmp_path, capsys, workbook, given, rule):
    render_refused_by_rule(tmp_path, capsys, workbook, given, rule)
    assert not (tmp_path / "out").exists() or not list((tmp_path / "out").glob("*.ipynb"))


@pytest.mark.parametrize("workbook, given", [("shoulder_fillet", dict(shape="shaft", load="bending")),
                                             ("weld_toe", dict(effective_notch=True, plate_thickness=4.0))])
def test_rules_match_the_model_limits(workbook, given):
    """What the rules refuse, the model (or the method) refuses too."""
    with pytest.raises(ParameterError):
        _resolve(workbook, given)
    if workbook == "shoulder_fillet":
        with pytest.raises(InputError, match="not axisymmetric"):
            shoulder_fillet("shaft", 60.0, 40.0, 4.0, load="bending")
