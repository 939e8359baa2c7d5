"""Building blocks the workbooks share: recovery by every method, a mesh
convergence study with Richardson extrapolation and GCI, the check table."""
from __future__ import annotations

import numpy as np

from toolkit.assess.convergence import grid_convergence
from toolkit.recovery.methods import METHODS, recover
from toolkit.report.tables import Table, headless

__all__ = ["METHODS", "recover_all", "convergence_study", "convergence_lines", "check_table"]


def recover_all(field, methods=("l2", "average", "spr")) -> dict:
    """``{label: NodalField}`` for each method name in ``methods`` (keys of
    the registry :data:`toolkit.recovery.METHODS`, whose labels these are)."""
    out = {}
    for m in methods:
        nodal = recover(field, m)               # raises for an unknown name
        out[METHODS[m].label] = nodal
    return out


def convergence_study(run, sizes, quantity="peak stress", unit="MPa", progress=None):
    """Run ``run(size) -> value`` for each element size (finest first), then
    Richardson extrapolation and Roache's GCI (Celik et al. 2008) via
    :func:`toolkit.quality.grid_convergence`.

    Returns ``(values, ConvergenceResult, Table)``.  A tqdm bar shows the runs
    (``tqdm.auto``: a widget in notebooks) unless run headless.
    """
    sizes = [float(s) for s in sizes]
    if progress is None:
        progress = not headless()
    it = sizes
    if progress:
        from tqdm.auto import tqdm
        it = tqdm(sizes, desc="convergence runs", leave=False)
    values = [float(run(h)) for h in it]
    conv = grid_convergence(values, sizes)
    rows = [[h, v] for h, v in zip(sizes, values)]
    rows.append(["extrapolated (h -> 0)", conv.extrapolated])
    table = Table(rows, ["element size h (mm)", f"{quantity} ({unit})"], title="Mesh convergence")
    return values, conv, table


def convergence_lines(conv) -> list[str]:
    """Plain lines for the order, the extrapolated value and the GCI."""
    out = [f"observed order p = {conv.order:.3g}",
           f"GCI fine grid = {conv.gci_fine:.3%}, coarse = {conv.gci_coarse:.3%}",
           f"asymptotic-range ratio = {conv.asymptotic_ratio:.4g} (near 1: in the asymptotic range)"]
    out += [f"warning: {w}" for w in conv.warnings]
    if getattr(conv, "fallback", ""):
        out.append(f"fallback: {conv.fallback}")
    return out


def check_table(checks) -> Table:
    """One row per check: value, limit, utilization, status."""
    return Table([[c.name, c.value, c.limit, c.utilization, c.status] for c in checks],
                 ["check", "value", "limit", "utilization", "status"], title="Check table")
