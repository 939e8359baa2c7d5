"""The path panel: a static figure first, then a live panel whose callback
redraws for every control value (run here without a frontend)."""
import matplotlib

matplotlib.use("Agg")
import numpy as np

import toolkit as tk
from toolkit.fem.models import rectangle_mesh
from toolkit.report.widgets import path_panel


def test_panel_draws_and_every_choice_redraws(capsys, monkeypatch):
    monkeypatch.delenv("STRESSPATH_HEADLESS", raising=False)
    m = rectangle_mesh("quad4", 6, 4, size=(3.0, 2.0))
    x = m.geometry("quad4", "full").x_cqi
    f = tk.GaussField(m, {"quad4": np.stack([x[..., 0], x[..., 1], 0 * x[..., 0]], -1)}, ("sxx", "syy", "sxy"))
    rec = {"L2 projection": tk.project_l2(f), "nodal averaging": tk.average_nodal(f)}
    paths = {"mid": tk.line((0.0, 1.0), (3.0, 1.0)), "arc": tk.arc((0.0, 0.0), 1.0, 0.0, 60.0)}
    panel = path_panel(paths, rec, f, quantities=("snn", "von_mises"), shift_range=0.5)
    assert panel is not None
    names = [c.description for c in panel.children[:-1]]
    assert names == ["path", "quantity", "method", "shift"]
    for path in paths:
        for method in ("all methods", "nodal averaging"):
            panel.children[0].value = path
            panel.children[2].value = method
            panel.update()                      # the callback runs without error for each choice
    # a shifted path is redrawn too
    panel.children[0].value = "mid"
    panel.children[3].value = 0.5
    panel.update()


def test_headless_run_draws_only_the_static_figure(monkeypatch):
    monkeypatch.setenv("STRESSPATH_HEADLESS", "1")
    m = rectangle_mesh("quad4", 3, 3)
    x = m.geometry("quad4", "full").x_cqi
    f = tk.GaussField(m, {"quad4": np.stack([x[..., 0], x[..., 1], 0 * x[..., 0]], -1)}, ("sxx", "syy", "sxy"))
    assert path_panel({"mid": tk.line((0.0, 0.5), (1.0, 0.5))}, {"L2": tk.project_l2(f)}, f) is None
    monkeypatch.setenv("STRESSPATH_HEADLESS", "0")
    assert path_panel({"mid": tk.line((0.0, 0.5), (1.0, 0.5))}, {"L2": tk.project_l2(f)}, f) is not None
