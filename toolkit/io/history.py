"""A load history: load factors of named load cases over time, read from one
CSV file (``time`` first, then one column per load case)."""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from toolkit.errors import InputError
from toolkit.io.table import first_true, read_csv

__all__ = ["LoadHistory", "read_load_history"]


@dataclass(frozen=True)
class LoadHistory:
    """Load factors over time.

    ``time`` (steps,) strictly increasing; ``factors`` (steps, cases), one
    column per name in ``cases``: the state at step ``i`` is
    ``sum_c factors[i, c] * case_c`` (linear elasticity: superposition of the
    unit load cases).  ``source`` names the file it came from.
    """

    time: np.ndarray
    factors: np.ndarray
    cases: tuple
    source: str = ""

    def __post_init__(self):
        t = np.asarray(self.time, dtype=float)
        f = np.asarray(self.factors, dtype=float)
        where = self.source or "load history"
        if t.ndim != 1 or len(t) < 2:
            raise InputError(f"{where}: a load history needs at least 2 time steps, got {t.shape}")
        if f.shape != (len(t), len(self.cases)):
            raise InputError(f"{where}: factors shaped {f.shape} for {len(t)} steps and {len(self.cases)} cases")
        if len(set(self.cases)) != len(self.cases):
            raise InputError(f"{where}: a load case is named twice in {list(self.cases)}")
        object.__setattr__(self, "time", t)
        object.__setattr__(self, "factors", f)
        object.__setattr__(self, "cases", tuple(self.cases))

    def __len__(self):
        return len(self.time)

    def column(self, case) -> np.ndarray:
        """The factors of one load case over time."""
        if case not in self.cases:
            raise InputError(f"{self.source or 'load history'}: no load case {case!r} (has {list(self.cases)})")
        return self.factors[:, self.cases.index(case)]

    def combine(self, values) -> np.ndarray:
        """``values`` per case, a mapping name -> array shaped (...) (all alike),
        combined at every step: (steps, ...) = ``sum_c factors[:, c] values[c]``."""
        missing = [c for c in self.cases if c not in values]
        if missing:
            raise InputError(f"{self.source or 'load history'}: no values given for load case(s) {missing}")
        stack = np.stack([np.asarray(values[c], dtype=float) for c in self.cases])      # (cases, ...)
        return np.tensordot(self.factors, stack, axes=(1, 0))

    def __repr__(self):
        return (f"LoadHistory({len(self.time)} steps, t = {self.time[0]:g} .. {self.time[-1]:g}, "
                f"cases {list(self.cases)})")


def read_load_history(path, cases=None) -> LoadHistory:
    """Read a load history from a CSV file.

    The header is ``time`` and then one column per load case (its name as the
    results name it); every row holds the time and the load factor of each
    case at that time.  Times must increase strictly; factors must be finite.
    With ``cases`` given, the file must have exactly those case columns (in
    any order; the result follows ``cases``).

    Errors name the file, the row and the column.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "history.csv"
    >>> _ = p.write_text("time,pull,shear\\n0,0,0\\n1,1.0,0.5\\n2,0.2,-0.5\\n")
    >>> h = read_load_history(p)
    >>> h
    LoadHistory(3 steps, t = 0 .. 2, cases ['pull', 'shear'])
    >>> h.combine({"pull": 80.0, "shear": 10.0}).tolist()
    [0.0, 85.0, 11.0]
    """
    path = Path(path)

    def schema(p, names):
        if names[0].lower() != "time":
            raise InputError(f"{p}: the first column must be 'time', found {names[0]!r}")
        if len(names) < 2:
            raise InputError(f"{p}: after 'time' give one column of load factors per load case")
        return ["f"] * len(names)

    table = read_csv(path, schema)
    names = table.names[1:]
    if cases is not None:
        cases = [str(c) for c in cases]
        missing = [c for c in cases if c not in names]
        extra = [n for n in names if n not in cases]
        if missing or extra:
            raise InputError(f"{path}: the load cases of the results are {cases}; the file "
                             + (f"lacks {missing}" if missing else "") + (" and " if missing and extra else "")
                             + (f"has columns for unknown cases {extra}" if extra else ""))
        names = cases
    t = table.col(table.names[0])
    f = np.stack([table.col(n) for n in names], axis=1)
    bad = first_true(~np.isfinite(t))
    if bad is not None:
        raise InputError(f"{table.where(bad)}: time {t[bad]} is not a finite number")
    bad_rows = ~np.isfinite(f).all(axis=1)
    bad = first_true(bad_rows)
    if bad is not None:
        j = int(np.flatnonzero(~np.isfinite(f[bad]))[0])
        raise InputError(f"{table.where(bad)}, column {names[j]!r}: load factor {f[bad, j]} is not a finite number")
    bad = first_true(np.diff(t) <= 0)
    if bad is not None:
        raise InputError(f"{table.where(bad + 1)}: time {t[bad + 1]:g} does not increase (the row before has "
                         f"{t[bad]:g})")
    if len(t) < 2:
        raise InputError(f"{path}: a load history needs at least 2 rows, found {len(t)}")
    return LoadHistory(time=t, factors=f, cases=tuple(names), source=str(path))
