"""Version 0.1 module names (workbooks copied with ``new`` under 0.1 import
them) still work, warn once with the new name, and are the new modules
themselves, not copies."""
import importlib
import sys

import pytest

from toolkit.compat import OLD_NAMES


@pytest.mark.parametrize("old, new", sorted(OLD_NAMES.items()))
def test_old_module_name_is_the_new_module(old, new):
    sys.modules.pop(old, None)
    with pytest.warns(FutureWarning, match=new.replace(".", r"\.")):
        mod = importlib.import_module(old)
    assert mod is importlib.import_module(new)
    assert mod.__spec__.name == new                 # the new module keeps its own identity


def test_a_version_0_1_import_cell_still_runs():
    """The import lines of the 0.1 weld-toe workbook, as a copied study has them."""
    cell = ("import toolkit as tk\n"
            "from toolkit.checks import static_check\n"
            "from toolkit.models import weld_toe\n"
            "from toolkit.solve import solve\n"
            "from toolkit.stress import von_mises\n"
            "from toolkit.study import check_table, convergence_lines, convergence_study, recover_all\n"
            "from toolkit.widgets import path_panel, plot_path_comparison\n"
            "from toolkit.paths import PointLocator, path_from_spec\n")
    for old in OLD_NAMES:
        sys.modules.pop(old, None)
    ns = {}
    with pytest.warns(FutureWarning):
        exec(cell, ns)
    from toolkit.fem import solve
    assert ns["solve"] is solve


def test_unknown_names_still_fail():
    with pytest.raises(ModuleNotFoundError):
        importlib.import_module("toolkit.no_such_module")
