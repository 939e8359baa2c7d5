"""Load histories read from CSV (toolkit.io.read_load_history): superposition
of unit load cases (linear elasticity, common practice) and the error paths."""
import numpy as np
import pytest

from toolkit.errors import InputError
from toolkit.io import LoadHistory, read_load_history


def _write(tmp_path, text, name="h.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_reads_factors_and_combines_by_superposition(tmp_path):
    p = _write(tmp_path, "time,a,b\n0,0,0\n1,2,1\n2,-1,0.5\n")
    h = read_load_history(p)
    assert h.cases == ("a", "b") and len(h) == 3
    np.testing.assert_array_equal(h.column("b"), [0, 1, 0.5])
    # states of unit cases combine linearly: sigma(t) = sum_c f_c(t) sigma_c (superposition)
    s = h.combine({"a": np.array([10.0, 1.0]), "b": np.array([0.0, 4.0])})
    np.testing.assert_allclose(s, [[0, 0], [20, 6], [-10, 1]])


def test_cases_reorder_and_must_match(tmp_path):
    p = _write(tmp_path, "time,a,b\n0,0,0\n1,2,1\n")
    assert read_load_history(p, cases=["b", "a"]).factors[1].tolist() == [1.0, 2.0]
    with pytest.raises(InputError, match=r"lacks \['c'\]"):
        read_load_history(p, cases=["a", "b", "c"])
    with pytest.raises(InputError, match=r"unknown cases \['b'\]"):
        read_load_history(p, cases=["a"])


@pytest.mark.parametrize("text, message", [
    ("t,a\n0,1\n1,2\n", "first column must be 'time'"),
    ("time\n0\n1\n", "one column of load factors"),
    ("time,a\n0,1\n0,2\n", r"row 2 .*time 0 does not increase"),
    ("time,a,b\n0,1,1\n1,nan,2\n", r"row 2 .*column 'a'.*not a finite"),
    ("time,a\n0,1\n1,x\n", r"row 2"),
    ("time,a\n0,1\n", "at least 2"),
    ("time,a,a\n0,1,1\n1,2,2\n", "twice"),
])
def test_bad_files_name_the_row_and_column(tmp_path, text, message):
    with pytest.raises(InputError, match=message):
        read_load_history(_write(tmp_path, text))


def test_missing_values_for_a_case_are_refused():
    h = LoadHistory(time=[0, 1], factors=[[0, 0], [1, 1]], cases=("a", "b"))
    with pytest.raises(InputError, match=r"load case\(s\) \['b'\]"):
        h.combine({"a": 1.0})
    with pytest.raises(InputError, match="no load case 'c'"):
        h.column("c")


def test_shipped_demo_histories_read():
    from importlib.resources import files
    root = files("toolkit.data") / "demo_histories"
    assert read_load_history(root / "weld_toe.csv").cases == ("membrane", "bending")
    assert read_load_history(root / "bracket.csv").cases == ("pull", "shear")
