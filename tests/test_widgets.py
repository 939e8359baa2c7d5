"""The path panel: a static figure first, then a live panel whose callback
redraws for every control value (run here without a frontend)."""
import matplotlib

matplotlib.use("Agg")
import numpy as np
import pytest

import toolkit as tk
from toolkit.fem.models import rectangle_mesh
from toolkit.report.widgets import path_panel


def test_panel_draws_and_every_choice_redraws(capsys, monkeypatch):
    """Each control value redraws the chosen path, quantity and methods.  The
    field is linear (sxx = x, syy = y, sxy = 0), which every method recovers
    exactly on quad4, so each drawn curve is a closed form: on the line y = 1
    the normal stress is syy = 1; on the arc of radius 1 the radial stress is
    cos³θ + sin³θ (θ = s, the arc length); on the line shifted to y = 1.5 the
    von Mises stress is sqrt(x² + 1.5² - 1.5 x) (plane stress, common
    practice).  Tolerance 1e-9: exact reproduction; a wrong quantity (the
    tangential stress, sxx = x) or a path not shifted (y = 1) is off by 0.1
    or more."""
    import matplotlib.pyplot as plt

    monkeypatch.delenv("STRESSPATH_HEADLESS", raising=False)
    shown = []
    monkeypatch.setattr(plt, "show", lambda *a, **k: shown.append(plt.gcf()))
    m = rectangle_mesh("quad4", 6, 4, size=(3.0, 2.0))
    x = m.geometry("quad4", "full").x_cqi
    f = tk.GaussField(m, {"quad4": np.stack([x[..., 0], x[..., 1], 0 * x[..., 0]], -1)}, ("sxx", "syy", "sxy"))
    rec = {"L2 projection": tk.project_l2(f), "nodal averaging": tk.average_nodal(f)}
    paths = {"mid": tk.line((0.0, 1.0), (3.0, 1.0)), "arc": tk.arc((0.0, 0.0), 1.0, 0.0, 60.0)}
    exact = {"mid": lambda s: np.ones_like(s), "arc": lambda s: np.cos(s) ** 3 + np.sin(s) ** 3}
    panel = path_panel(paths, rec, f, quantities=("snn", "von_mises"), shift_range=0.5)
    assert panel is not None
    names = [c.description for c in panel.children[:-1]]
    assert names == ["path", "quantity", "method", "shift"]

    def curves():
        ax = shown[-1].axes[0]
        return ax, {ln.get_label(): (ln.get_xdata(), ln.get_ydata()) for ln in ax.get_lines()
                    if not ln.get_label().startswith("_")}

    for path in paths:
        for method in ("all methods", "nodal averaging"):
            panel.children[0].value = path
            panel.children[2].value = method
            panel.update()
            ax, drawn = curves()
            assert ax.get_title() == path
            methods = list(rec) if method == "all methods" else [method]
            assert sorted(drawn) == sorted(methods + ["raw (per element)"])
            for name in methods:
                s, v = drawn[name]
                assert len(s) == 101 and s[-1] == pytest.approx(paths[path].length, rel=1e-12)
                np.testing.assert_allclose(v, exact[path](s), atol=1e-9)
            s, v = drawn["raw (per element)"]
            np.testing.assert_allclose(v, exact[path](s), atol=1e-9)
    # a shifted path is redrawn too, for the other quantity
    panel.children[0].value = "mid"
    panel.children[1].value = "von_mises"
    panel.children[2].value = "L2 projection"
    panel.children[3].value = 0.5
    panel.update()
    ax, drawn = curves()
    assert ax.get_ylabel() == "von_mises (MPa)"
    s, v = drawn["L2 projection"]
    np.testing.assert_allclose(v, np.sqrt(s ** 2 + 1.5 ** 2 - 1.5 * s), atol=1e-9)
    plt.close("all")


def test_headless_run_draws_only_the_static_figure(monkeypatch):
    monkeypatch.setenv("STRESSPATH_HEADLESS", "1")
    m = rectangle_mesh("quad4", 3, 3)
    x = m.geometry("quad4", "full").x_cqi
    f = tk.GaussField(m, {"quad4": np.stack([x[..., 0], x[..., 1], 0 * x[..., 0]], -1)}, ("sxx", "syy", "sxy"))
    assert path_panel({"mid": tk.line((0.0, 0.5), (1.0, 0.5))}, {"L2": tk.project_l2(f)}, f) is None
    monkeypatch.setenv("STRESSPATH_HEADLESS", "0")
    assert path_panel({"mid": tk.line((0.0, 0.5), (1.0, 0.5))}, {"L2": tk.project_l2(f)}, f) is not None
