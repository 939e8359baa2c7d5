"""Building blocks the workbooks share: recovery by every method, the element
sizes of a mesh convergence study and the study itself (Richardson
extrapolation and GCI), the check table."""
from __future__ import annotations

import math

import numpy as np

from toolkit.errors import InputError
from toolkit.assess.convergence import grid_convergence
from toolkit.recovery.methods import METHODS, recover
from toolkit.report.tables import Table, headless

__all__ = ["METHODS", "recover_all", "study_sizes", "finer_study_note", "convergence_study", "convergence_lines",
           "check_table"]


def recover_all(field, methods=("l2", "average", "spr")) -> dict:
    """``{label: NodalField}`` for each method name in ``methods`` (keys of
    the registry :data:`toolkit.recovery.METHODS`, whose labels these are)."""
    out = {}
    for m in methods:
        nodal = recover(field, m)               # raises for an unknown name
        out[METHODS[m].label] = nodal
    return out


def study_sizes(size, coarsest, ratio=2.0, count=3) -> list[float]:
    """Element sizes of a mesh convergence study, finest first, in a constant
    refinement ratio, whose coarsest mesh never exceeds ``coarsest``.

    ``h_c = min(size * ratio**(count - 1), coarsest)`` and
    ``h_i = h_c / ratio**(count - 1 - i)``, i = 0 .. count - 1.  When the
    model's size is fine enough (``size * ratio**(count - 1) <= coarsest``)
    the study is the usual ``size, ratio*size, ratio**2*size``; otherwise the
    set is made finer than ``size`` rather than coarser, so the coarsest mesh
    stays valid for the mesher and inside the range where the solution is
    asymptotic.  Three or more grids in a constant ratio (2 here, at least 1.3
    recommended) is the procedure of Celik et al., J. Fluids Eng. 130 (2008)
    078001; the cap ``coarsest`` is a fraction of the feature the model
    resolves (hole radius, fillet radius, plate thickness), chosen by the
    workbook.

    Parameters
    ----------
    size : the model's element size (> 0)
    coarsest : the largest size the study may use (> 0)
    ratio : refinement ratio between neighbouring sizes (> 1)
    count : number of sizes (an int >= 3)

    Examples
    --------
    >>> study_sizes(0.5, 4.0)
    [0.5, 1.0, 2.0]
    >>> study_sizes(2.0, 4.0)
    [1.0, 2.0, 4.0]
    """
    for name, v in (("size", size), ("coarsest", coarsest), ("ratio", ratio)):
        if isinstance(v, bool) or not isinstance(v, (int, float, np.floating, np.integer)) or not math.isfinite(v):
            raise InputError(f"study_sizes: {name} must be a finite number, got {v!r}")
    if size <= 0 or coarsest <= 0:
        raise InputError(f"study_sizes: size and coarsest must be positive, got size={size!r}, coarsest={coarsest!r}")
    if ratio <= 1:
        raise InputError(f"study_sizes: ratio must exceed 1, got {ratio!r}")
    if isinstance(count, bool) or not isinstance(count, (int, np.integer)) or count < 3:
        raise InputError(f"study_sizes: count must be an int of at least 3 (three grids for Richardson), got {count!r}")
    top = min(float(size) * ratio ** (count - 1), float(coarsest))
    return [top / ratio ** (count - 1 - i) for i in range(count)]


def finer_study_note(sizes, size, coarsest, cap) -> str:
    """The report's line when :func:`study_sizes` made the study finer than
    the model (``sizes[0] < size``), else ``""``; ``cap`` names the coarsest
    size in words (e.g. ``"r/4"``)."""
    if sizes[0] >= size:
        return ""
    return (f"the study uses sizes finer than the model's {size:.4g} mm: 4h would exceed the coarsest size "
            f"allowed, {coarsest:.4g} mm ({cap})")

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
