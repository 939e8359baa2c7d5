"""Static and fatigue checks, S-N curves by FAT class.

Fatigue follows the IIW recommendations (A. Hobbacher (ed.), *Recommendations
for Fatigue Design of Welded Joints and Components*, IIW document
XIII-2460-13, 2nd edition 2016): S-N curves ``N = 2e6 (FAT/Δσ)^m``, the
thickness correction ``f(t) = (t_ref/t_eff)^n`` and the Palmgren–Miner sum
with partial safety factors on actions (γF) and resistance (γM).  Curve data
live in ``data/sn_curves.json`` (source described in ``data/SOURCES.md``).

Every check returns a :class:`CheckResult`: a small record with a readable
``__repr__``, an HTML table for notebooks and ``to_dict()`` for JSON.  Its
``working`` lists the steps of the check (:class:`Working`: formula, the
values substituted, result, and the clause or source), so a checker can follow
the numbers; the steps hold numbers and units and are formatted as text only
when shown (by :mod:`toolkit.report.format`).
"""
from __future__ import annotations

import html
import math
from dataclasses import dataclass, field, replace
from importlib.resources import files
from pathlib import Path

import numpy as np

from toolkit.core import stress as _stress
from toolkit.errors import InputError
from toolkit.io.files import read_json

__all__ = [
    "CAUTION", "CheckResult", "Working", "SNCurve", "sn_curve", "load_sn_data", "SN_DATA_PATH",
    "THICKNESS_EXPONENTS", "thickness_factor", "miner_damage", "fatigue_check", "static_check",
    "free_edge_tangents", "surface_states",
]

CAUTION = ("This result supports, and does not replace, the judgment of a qualified engineer "
           "and the governing local codes.")

#: The S-N curve data file, shipped as package data (``data/`` in the repository, ``toolkit.data`` installed).
SN_DATA_PATH = Path(str(files("toolkit.data").joinpath("sn_curves.json")))

IIW_2016 = "IIW recommendations (Hobbacher 2016, XIII-2460-13)"


# ---------------------------------------------------------------------------
# Check result
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Working:
    """One step of a check's working: ``what: formula = substituted = result  [source]``.

    ``substituted`` is the formula's right-hand side as a ``str.format``
    template with ``{0}``, ``{1}``, ... for the ``values``, each a pair
    ``(number or array, unit)``; ``result`` is a pair ``(number or array,
    unit)`` or None.  Units ``"-"`` or ``"1"`` mean dimensionless.  The numbers
    stay numbers here; ``repr`` (the step as one line of text) formats them
    with :func:`toolkit.report.format.fmt_unit` to 4 significant figures.
    """

    what: str
    formula: str
    substituted: str = ""
    values: tuple = ()
    result: tuple | None = None
    source: str = ""

    def __repr__(self):
        from toolkit.report.format import fmt_unit  # display delegates to the report layer

        parts = [self.formula]
        if self.substituted:
            parts.append(self.substituted.format(*(fmt_unit(v, u, 4) for v, u in self.values)))
        if self.result is not None:
            parts.append(fmt_unit(self.result[0], self.result[1], 4))
        line = f"{self.what}: " + " = ".join(parts)
        return line + (f"  [{self.source}]" if self.source else "")


@dataclass
class CheckResult:
    """Outcome of one check: ``utilization = value / limit``, ``PASS`` if <= 1.

    Attributes
    ----------
    name, value, limit, unit (of value and limit), inputs (dict), notes (list
    of str), cautions (a fixed sentence, :data:`CAUTION`), working (list of
    :class:`Working` steps, shown by :meth:`working_lines`); ``utilization``
    and ``status`` are derived.
    """

    name: str
    value: float
    limit: float
    unit: str
    inputs: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)
    cautions: str = CAUTION
    working: list = field(default_factory=list)

    def __post_init__(self):
        self.value = float(self.value)
        self.limit = float(self.limit)
        if not math.isfinite(self.value):
            raise InputError(f"check {self.name!r}: value is {self.value}")
        if not (math.isfinite(self.limit) and self.limit > 0):
            raise InputError(f"check {self.name!r}: limit must be positive and finite, got {self.limit}")

    @property
    def utilization(self) -> float:
        return self.value / self.limit

    @property
    def status(self) -> str:
        return "PASS" if self.utilization <= 1.0 else "FAIL"

    @property
    def units(self) -> str:
        return self.unit

    def working_lines(self) -> list:
        """The working as lines of text: formula, values substituted, result, source."""
        return [repr(w) for w in self.working]

    def rows(self):
        """(label, text) rows of the table shown by ``__repr__`` and ``_repr_html_``."""
        from toolkit.report.format import fmt, fmt_unit  # display delegates to the report layer

        rows = [("value", fmt_unit(self.value, self.unit, 6)), ("limit", fmt_unit(self.limit, self.unit, 6)),
                ("utilization", f"{self.utilization:.3f}"), ("status", self.status)]
        rows += [("working", line) for line in self.working_lines()]
        rows += [(f"input: {k}", v.label() if isinstance(v, SNCurve) else fmt(v, 6)) for k, v in self.inputs.items()]
        rows += [("note", n) for n in self.notes]
        rows.append(("caution", self.cautions))
        return rows

    def __repr__(self):
        rows = self.rows()
        w = max(len(r[0]) for r in rows)
        return "\n".join([f"CheckResult: {self.name}"] + [f"  {k:<{w}}  {v}" for k, v in rows])

    def _repr_html_(self):
        body = "".join(f"<tr><th style='text-align:left'>{html.escape(k)}</th><td style='text-align:left'>"
                       f"{html.escape(v)}</td></tr>" for k, v in self.rows())
        return (f"<table><caption style='text-align:left'><b>{html.escape(self.name)}</b>: "
                f"{html.escape(self.status)}</caption>{body}</table>")

    def to_dict(self) -> dict:
        """JSON-ready record; inputs by :func:`toolkit.report.format.plain` (NaN and infinity as text)."""
        from toolkit.report.format import plain  # display delegates to the report layer

        return {"name": self.name, "value": self.value, "limit": self.limit, "utilization": self.utilization,
                "status": self.status, "unit": self.unit, "inputs": plain(self.inputs, f"check {self.name!r} inputs"),
                "notes": list(self.notes), "working": self.working_lines(), "cautions": self.cautions}


# ---------------------------------------------------------------------------
# S-N curves
# ---------------------------------------------------------------------------
_CURVE_KEYS = {"name", "fat", "m1", "knee_cycles", "m2", "n_ref", "stress", "unit", "source"}


@dataclass(frozen=True)
class SNCurve:
    """A fatigue resistance curve in the IIW form.

    ``N = n_ref (fat/Δσ)^m1`` for ``Δσ >= Δσ_knee``; beyond the knee
    (``N > knee_cycles``) either no damage (``m2=None``: constant-amplitude
    fatigue limit at ``Δσ_knee``) or ``N = knee_cycles (Δσ_knee/Δσ)^m2``.
    ``Δσ_knee = fat (n_ref/knee_cycles)^(1/m1)``.  IIW 2016: normal stress
    m1 = 3, knee 1e7, m2 = 22 (variable amplitude); shear m1 = 5, knee 1e8.
    """

    name: str
    fat: float
    m1: float = 3.0
    knee_cycles: float = 1e7
    m2: float | None = None
    n_ref: float = 2e6
    stress: str = "normal"
    unit: str = "MPa"
    source: str = "user-defined"

    def __post_init__(self):
        for k in ("fat", "m1", "knee_cycles", "n_ref"):
            v = getattr(self, k)
            if not (isinstance(v, (int, float, np.integer, np.floating)) and math.isfinite(v) and v > 0):
                raise InputError(f"S-N curve {self.name!r}: {k} must be a positive number, got {v!r}")
            object.__setattr__(self, k, float(v))
        if self.m2 is not None:
            if not (isinstance(self.m2, (int, float, np.integer, np.floating)) and math.isfinite(self.m2)
                    and self.m2 > 0):
                raise InputError(f"S-N curve {self.name!r}: m2 must be a positive number or None, got {self.m2!r}")
            object.__setattr__(self, "m2", float(self.m2))
        if self.stress not in ("normal", "shear"):
            raise InputError(f"S-N curve {self.name!r}: stress must be 'normal' or 'shear', got {self.stress!r}")

    @classmethod
    def from_dict(cls, d: dict) -> "SNCurve":
        """A user-defined curve, e.g. ``{"name": "my detail", "fat": 71, "m1": 3, "knee_cycles": 1e7, "m2": 22}``."""
        if isinstance(d, SNCurve):
            return d
        if not isinstance(d, dict):
            raise InputError(f"an S-N curve must be an SNCurve or a dict, got {type(d).__name__}")
        unknown = set(d) - _CURVE_KEYS
        if unknown:
            raise InputError(f"S-N curve dict: unknown key(s) {sorted(unknown)}; allowed: {sorted(_CURVE_KEYS)}")
        if "fat" not in d:
            raise InputError("S-N curve dict needs 'fat' (stress range at n_ref cycles)")
        d = dict(d)
        d.setdefault("name", f"user FAT {d['fat']}")
        return cls(**d)

    def to_dict(self) -> dict:
        return {"name": self.name, "fat": self.fat, "m1": self.m1, "knee_cycles": self.knee_cycles, "m2": self.m2,
                "n_ref": self.n_ref, "stress": self.stress, "unit": self.unit, "source": self.source}

    def label(self) -> str:
        beyond = "no damage below the knee" if self.m2 is None else f"m2 = {self.m2:g}"
        return (f"{self.name} (FAT {self.fat:g} {self.unit} at {self.n_ref:.3g}, m1 = {self.m1:g}, knee at "
                f"{self.knee_cycles:.3g} cycles, {beyond})")

    def __repr__(self):
        return f"SNCurve({self.label()})"

    @property
    def knee_stress(self) -> float:
        """Stress range at the knee, ``fat (n_ref/knee_cycles)^(1/m1)``."""
        return self.fat * (self.n_ref / self.knee_cycles) ** (1.0 / self.m1)

    def life(self, stress_range):
        """Cycles to failure for stress range(s) ``Δσ`` (``inf`` where no damage)."""
        s = np.asarray(stress_range, dtype=float)
        if not np.all(np.isfinite(s)) or np.any(s < 0):
            raise InputError(f"S-N curve {self.name!r}: stress ranges must be finite and >= 0, got {stress_range}")
        sk = self.knee_stress
        with np.errstate(divide="ignore"):
            above = self.n_ref * (self.fat / s) ** self.m1
            if self.m2 is None:
                below = np.full_like(s, np.inf)
            else:
                below = self.knee_cycles * (sk / s) ** self.m2
        N = np.where(s >= sk, above, below)
        return float(N) if N.ndim == 0 else N

    def strength(self, cycles):
        """Stress range at ``cycles`` (the inverse of :meth:`life`; the knee stress beyond the knee if m2 is None)."""
        n = np.asarray(cycles, dtype=float)
        if not np.all(np.isfinite(n)) or np.any(n <= 0):
            raise InputError(f"S-N curve {self.name!r}: cycles must be positive and finite, got {cycles}")
        sk = self.knee_stress
        above = self.fat * (self.n_ref / n) ** (1.0 / self.m1)
        below = np.full_like(n, sk) if self.m2 is None else sk * (self.knee_cycles / n) ** (1.0 / self.m2)
        out = np.where(n <= self.knee_cycles, above, below)
        return float(out) if out.ndim == 0 else out

    def scaled(self, factor: float, why: str = "") -> "SNCurve":
        """The curve with every resistance stress multiplied by ``factor`` (e.g. ``f(t)``, ``1/γM``)."""
        f = float(factor)
        if not (math.isfinite(f) and f > 0):
            raise InputError(f"scale factor must be positive, got {factor}")
        return replace(self, fat=self.fat * f, name=f"{self.name} x {f:.4g}" + (f" ({why})" if why else ""))


def load_sn_data(path=None) -> dict:
    """The S-N data file as a dict (default ``data/sn_curves.json``)."""
    p = Path(path) if path is not None else SN_DATA_PATH
    data = read_json(p, "S-N curve data file")
    for key in ("source", "edition", "reference_cycles", "families", "unit"):
        if key not in data:
            raise InputError(f"{p}: missing top-level key {key!r}")
    return data


def sn_curve(fat, stress="normal", amplitude="constant", path=None) -> SNCurve:
    """An IIW S-N curve by FAT class from ``data/sn_curves.json``.

    Parameters
    ----------
    fat : FAT class (stress range in MPa at 2e6 cycles), one of the file's classes.
    stress : "normal" (m1 = 3, knee 1e7) or "shear" (m1 = 5, knee 1e8).
    amplitude : "constant" (no damage below the knee-point stress),
        "variable" (IIW 2016: m2 = 22 beyond the knee, for Palmgren–Miner) or
        "variable-haibach" (older practice: m2 = 2 m1 - 1).
    """
    data = load_sn_data(path)
    fams = data["families"]
    if stress not in fams:
        raise InputError(f"stress must be one of {sorted(fams)}, got {stress!r}")
    fam = fams[stress]
    if amplitude not in fam["m2"]:
        raise InputError(f"amplitude must be one of {sorted(fam['m2'])}, got {amplitude!r}")
    classes = [float(c) for c in fam["fat"]]
    if float(fat) not in classes:
        raise InputError(f"FAT {fat} is not a {stress}-stress class of {data['source']}: "
                         f"{', '.join(f'{c:g}' for c in classes)}; for another value pass a dict to SNCurve.from_dict")
    return SNCurve(name=f"FAT {float(fat):g} {stress} ({amplitude} amplitude)", fat=float(fat), m1=fam["m1"],
                   knee_cycles=fam["knee_cycles"], m2=fam["m2"][amplitude], n_ref=data["reference_cycles"],
                   stress=stress, unit=data["unit"], source=f"{data['source']}; {fam['m2_notes'][amplitude]}")


def _curve(curve) -> SNCurve:
    if isinstance(curve, SNCurve):
        return curve
    if isinstance(curve, dict):
        return SNCurve.from_dict(curve)
    raise InputError(f"curve must be an SNCurve (see sn_curve(fat, amplitude=...)) or a dict, got {curve!r}")


# ---------------------------------------------------------------------------
# Thickness correction
# ---------------------------------------------------------------------------
# IIW recommendations (Hobbacher 2016), thickness correction exponents (from memory).
THICKNESS_EXPONENTS = {
    "cruciform-as-welded": (0.3, "cruciform joints, transverse T-joints, plates with transverse attachments, "
                                 "ends of longitudinal stiffeners; as-welded"),
    "cruciform-toe-ground": (0.2, "cruciform joints, transverse T-joints, plates with transverse attachments, "
                                  "ends of longitudinal stiffeners; toe ground"),
    "butt-as-welded": (0.2, "transverse butt welds, as-welded"),
    "butt-ground-flush": (0.1, "butt welds ground flush, base material, longitudinal welds or attachments"),
}


def thickness_factor(thickness, joint=None, n=None, t_ref=25.0, toe_distance=None) -> float:
    """IIW thickness reduction factor ``f(t) = (t_ref / t_eff)^n`` for ``t_eff > t_ref``, else 1.

    Multiply the FAT class by ``f(t)``.  ``n`` comes from ``joint`` (a key of
    :data:`THICKNESS_EXPONENTS`: 0.3 cruciform/T-joints as-welded, 0.2 toe
    ground, 0.2 transverse butt welds as-welded, 0.1 butt welds ground flush)
    or is given directly.  ``t_ref = 25 mm``.  With the toe distance ``L``
    (attachment thickness plus weld legs) given and ``L/t <= 2``, the
    effective thickness is ``t_eff = 0.5 L`` (no correction while it stays
    at or below ``t_ref``); otherwise ``t_eff = t``.  Lengths in mm.
    """
    if (joint is None) == (n is None):
        raise InputError(f"thickness_factor: give exactly one of joint= (one of {sorted(THICKNESS_EXPONENTS)}) or n=")
    if joint is not None:
        if joint not in THICKNESS_EXPONENTS:
            raise InputError(f"unknown joint category {joint!r}; choose one of {sorted(THICKNESS_EXPONENTS)}")
        n = THICKNESS_EXPONENTS[joint][0]
    t = float(thickness)
    n = float(n)
    if not (math.isfinite(t) and t > 0):
        raise InputError(f"thickness must be positive, got {thickness}")
    if not (math.isfinite(n) and 0 <= n <= 1):
        raise InputError(f"thickness exponent n must lie in [0, 1], got {n}")
    t_eff = t
    if toe_distance is not None:
        L = float(toe_distance)
        if not (math.isfinite(L) and L > 0):
            raise InputError(f"toe_distance must be positive, got {toe_distance}")
        if L / t <= 2.0:
            t_eff = 0.5 * L
    return (t_ref / t_eff) ** n if t_eff > t_ref else 1.0


# ---------------------------------------------------------------------------
# Palmgren-Miner damage and the fatigue check
# ---------------------------------------------------------------------------
def _histogram(stress_ranges, cycles):
    s = np.atleast_1d(np.asarray(stress_ranges, dtype=float))
    n = np.atleast_1d(np.asarray(cycles, dtype=float))
    if s.ndim != 1 or s.shape != n.shape:
        raise InputError(f"stress ranges {s.shape} and cycles {n.shape} must be 1D of equal length")
    for name, a in (("stress range", s), ("cycle count", n)):
        bad = ~(np.isfinite(a) & (a >= 0))
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"histogram row {i}: {name} {a[i]} must be finite and >= 0")
    return s, n


def miner_damage(stress_ranges, cycles, curve, gamma_F=1.0, gamma_M=1.0, thickness_factor=1.0):
    """Palmgren–Miner damage sum ``D = sum n_i / N_i``.

    ``N_i`` is the life of the design curve (FAT x f(t) / γM) at the design
    range γF Δσ_i, i.e. ``N_i = curve.life(γF γM Δσ_i / f(t))`` (IIW 2016,
    partial safety factors on actions and resistance).  Returns
    ``(D, per_bin)`` with ``per_bin = {"design_range", "life", "damage"}``.
    """
    c = _curve(curve)
    s, n = _histogram(stress_ranges, cycles)
    for k, v in (("gamma_F", gamma_F), ("gamma_M", gamma_M), ("thickness_factor", thickness_factor)):
        if not (math.isfinite(float(v)) and float(v) > 0):
            raise InputError(f"{k} must be positive, got {v}")
    design = c.scaled(thickness_factor / gamma_M) if (thickness_factor != 1.0 or gamma_M != 1.0) else c
    sd = gamma_F * s
    N = np.atleast_1d(design.life(sd))
    d = np.where(np.isinf(N), 0.0, n / N)
    return float(d.sum()), {"design_range": sd, "life": N, "damage": d}


def fatigue_check(stress_ranges, cycles, curve, gamma_F=1.0, gamma_M=1.0, thickness_factor=1.0,
                  damage_limit=0.5, name="fatigue (Palmgren-Miner)") -> CheckResult:
    """Fatigue check of a stress-range histogram: ``D = sum n_i/N_i <= D_limit``.

    ``utilization = D / D_limit``.  ``N_i`` as in :func:`miner_damage`.  The
    default ``damage_limit = 0.5`` is the IIW 2016 recommendation for welded
    joints under variable amplitude loading (from memory; 1.0 is the classical
    Miner value and may be what the governing code asks for).  For constant
    amplitude give a one-row histogram.
    """
    c = _curve(curve)
    D, per = miner_damage(stress_ranges, cycles, c, gamma_F, gamma_M, thickness_factor)
    dl = float(damage_limit)
    if not (math.isfinite(dl) and dl > 0):
        raise InputError(f"damage_limit must be positive, got {damage_limit}")
    s, n = _histogram(stress_ranges, cycles)
    notes = [f"design curve: FAT {c.fat:g} x f(t) {thickness_factor:.4g} / gammaM {gamma_M:g} = "
             f"{c.fat * thickness_factor / gamma_M:.4g} {c.unit}; design ranges = gammaF {gamma_F:g} x ranges"]
    if D > 0:
        notes.append(f"the histogram may be repeated {dl / D:.4g} times before the damage limit is reached")
    else:
        notes.append("no histogram row lies above the knee-point stress of the design curve: zero damage")
    i = int(np.argmax(per["damage"])) if D > 0 else None
    if i is not None:
        notes.append(f"largest contribution: row {i} (range {s[i]:.4g} {c.unit}, {n[i]:.4g} cycles), "
                     f"{per['damage'][i] / D:.1%} of the damage")
    low = np.flatnonzero(per["life"] < 1e4)
    if low.size:
        notes.append(f"rows {low.tolist()} have design lives below 1e4 cycles, outside the high-cycle range "
                     "the S-N curves cover (common practice)")
    working = _fatigue_working(c, s, n, per, D, dl, float(gamma_F), float(gamma_M), float(thickness_factor))
    inputs = {"curve": c, "stress_ranges": s, "cycles": n, "gamma_F": float(gamma_F), "gamma_M": float(gamma_M),
              "thickness_factor": float(thickness_factor), "lives": per["life"], "damage_per_row": per["damage"],
              "source": IIW_2016}
    return CheckResult(name=name, value=D, limit=dl, unit="-", inputs=inputs, notes=notes, working=working)


def _fatigue_working(c, s, n, per, D, dl, gF, gM, ft):
    """The steps of :func:`fatigue_check`: curve, design FAT, design ranges, lives, damage sum, utilization."""
    u = c.unit
    fat_d = c.fat * ft / gM
    beyond = "no damage below the knee" if c.m2 is None else f"m2 = {c.m2:g} beyond it"
    lim_src = ("damage limit 0.5, IIW recommendation for welded joints under variable amplitude (from memory)"
               if dl == 0.5 else "damage limit as given")
    return [
        Working("S-N curve", "N = N_ref (FAT / Δσ)^m1", "{0} × ({1} / Δσ)^{2}",
                ((c.n_ref, "-"), (c.fat, u), (c.m1, "-")), None,
                f"{c.name}: knee at {c.knee_cycles:.3g} cycles, {beyond}; {c.source}"),
        Working("design FAT", "FAT_d = FAT × f(t) / γM", "{0} × {1} / {2}", ((c.fat, u), (ft, "-"), (gM, "-")),
                (fat_d, u), f"{IIW_2016}: thickness correction f(t) = (t_ref/t_eff)^n, partial factor γM on "
                            "resistance"),
        Working("design ranges", "Δσ_d,i = γF × Δσ_i", "{0} × ({1})", ((gF, "-"), (s, u)), (per["design_range"], u),
                f"{IIW_2016}: partial factor γF on actions"),
        Working("lives", "N_i = N_ref (FAT_d / Δσ_d,i)^m", "{0} × ({1} / ({2}))^m", ((c.n_ref, "-"), (fat_d, u),
                (per["design_range"], u)), (per["life"], "cycles"),
                "m = m1 above the knee-point stress, beyond it as the curve says (inf: no damage)"),
        Working("damage", "D = Σ n_i / N_i", "Σ ({0}) / ({1})", ((n, "cycles"), (per["life"], "cycles")), (D, "-"),
                f"Palmgren–Miner sum, {IIW_2016}"),
        Working("utilization", "u = D / D_lim", "{0} / {1}", ((D, "-"), (dl, "-")), (D / dl, "-"),
                lim_src + "; PASS if u ≤ 1"),
    ]


# ---------------------------------------------------------------------------
# Static check
# ---------------------------------------------------------------------------
def free_edge_tangents(nodes, edges) -> np.ndarray:
    """Unit tangents at the nodes of free (traction-free) edges, NaN elsewhere.

    ``nodes`` (n, 2); ``edges`` (m, 2 or 3) rows ``[corner, corner(, mid-side)]``
    (the models' ``edges`` sets).  A corner's tangent is the mean of the chord
    directions of the edges that meet there (oriented alike), a mid-side
    node's the chord of its own edge (exact on a circular arc).  Returns
    (n, 2); use with ``static_check(..., tangents=...)``.
    """
    x = np.asarray(nodes, dtype=float)
    e = np.asarray(edges, dtype=int)
    if x.ndim != 2 or x.shape[1] != 2 or e.ndim != 2 or e.shape[1] not in (2, 3) or len(e) == 0:
        raise InputError(f"free_edge_tangents: need nodes (n, 2) and edges (m, 2|3), got {x.shape}, {e.shape}")
    chord = x[e[:, 1]] - x[e[:, 0]]
    chord /= np.linalg.norm(chord, axis=1, keepdims=True)
    ref = chord[0]
    chord *= np.where(chord @ ref < 0, -1.0, 1.0)[:, None]  # one orientation; the sign does not matter
    acc = np.zeros_like(x)
    np.add.at(acc, e[:, 0], chord)
    np.add.at(acc, e[:, 1], chord)
    if e.shape[1] == 3:
        np.add.at(acc, e[:, 2], chord)
    norm = np.linalg.norm(acc, axis=1)
    out = np.full_like(x, np.nan)
    on = norm > 0
    out[on] = acc[on] / norm[on, None]
    return out


def surface_states(values, components, tangents) -> np.ndarray:
    """Stress states with the components normal to a free edge removed.

    At a traction-free edge with unit normal ``n``, equilibrium gives
    ``S n = 0``: the normal stress and the shear on the edge vanish, and the
    in-plane state is the tangential stress alone, ``S = stt t (x) t`` (plane
    stress at the surface; an out-of-plane ``szz``, e.g. the hoop stress of an
    axisymmetric model, is kept).  A smoothed field does not satisfy this
    exactly (an L2 projection leaves a spurious normal stress at the edge),
    so the check at such points uses ``stt`` only.  Rows whose tangent is NaN
    are returned unchanged.  ``values`` (..., ncomp) 2D components;
    ``tangents`` (..., 2).
    """
    v = np.array(values, dtype=float)
    t = np.asarray(tangents, dtype=float)
    on = np.all(np.isfinite(t), axis=-1)
    if not on.any():
        return v
    tu = _stress.unit_tangent(t[on], name="tangents")
    T = _stress.to_tensor(v[on], components)
    stt = np.einsum("pi,pij,pj->p", tu, T[:, :2, :2], tu)
    T[:, :2, :2] = stt[:, None, None] * np.einsum("pi,pj->pij", tu, tu)
    v[on] = _stress.from_tensor(T, tuple(components))
    return v


def static_check(peak_stress, yield_strength, safety_factor, criterion="von Mises", components=None,
                 unit="MPa", name=None, tangents=None) -> CheckResult:
    """Static strength check: ``σ_eq <= f_y / S``.

    Parameters
    ----------
    peak_stress : float or array
        Without ``components``: equivalent stress value(s) by ``criterion``
        (the largest magnitude is checked).  With ``components``: stress
        states ``(..., ncomp)`` from which the equivalent stress is computed
        (:func:`toolkit.stress.von_mises`, or for ``"max principal"`` the
        principal stress of largest magnitude, tension or compression).
    yield_strength, safety_factor : positive numbers; limit = yield / safety factor.
    criterion : "von Mises" or "max principal".
    tangents : optional (..., 2) unit tangents of free edges at the stress
        states' points, NaN elsewhere (:func:`free_edge_tangents`); with
        ``components``, states on a free edge are checked with the normal
        components removed (:func:`surface_states`: ``snn = snt = 0`` by
        equilibrium, plane stress at the surface).
    """
    crit = {"von mises": "von Mises", "max principal": "max principal"}.get(str(criterion).lower())
    if crit is None:
        raise InputError(f"criterion must be 'von Mises' or 'max principal', got {criterion!r}")
    fy, sf = float(yield_strength), float(safety_factor)
    if not (math.isfinite(fy) and fy > 0):
        raise InputError(f"yield_strength must be positive, got {yield_strength}")
    if not (math.isfinite(sf) and sf > 0):
        raise InputError(f"safety_factor must be positive, got {safety_factor}")
    n_surface = 0
    if components is not None and tangents is not None:
        n_surface = int(np.all(np.isfinite(np.asarray(tangents, dtype=float)), axis=-1).sum())
        peak_stress = surface_states(peak_stress, components, tangents)
    if components is not None:
        eq = _stress.von_mises(peak_stress, components) if crit == "von Mises" else \
            _stress.max_abs_principal(peak_stress, components)
    else:
        eq = np.asarray(peak_stress, dtype=float)
        if eq.size == 0 or not np.all(np.isfinite(eq)):
            raise InputError(f"peak_stress must be finite numbers, got {peak_stress}")
    eq = np.atleast_1d(eq)
    k = int(np.argmax(np.abs(eq).ravel()))
    value = abs(float(eq.ravel()[k]))
    inputs = {"criterion": crit, "yield_strength": fy, "safety_factor": sf}
    notes = [f"limit = yield strength {fy:.6g} / safety factor {sf:g}"]
    if eq.size > 1:
        idx = tuple(int(i) for i in np.unravel_index(k, eq.shape))
        inputs["points_checked"] = int(eq.size)
        notes.append(f"largest of {eq.size} values at index {idx}")
    if n_surface:
        inputs["free_edge_points"] = n_surface
        notes.append(f"at {n_surface} free-edge points the surface state is used: normal and shear stress on the "
                     "edge zero by equilibrium, tangential stress (and any out-of-plane stress) kept")
    if crit == "max principal":
        notes.append("max principal: the principal stress of largest magnitude (tension or compression)")
    crit_src = ("von Mises (distortion-energy) yield criterion (common practice)" if crit == "von Mises" else
                "largest-magnitude principal stress (common practice)")
    working = [
        Working("equivalent stress", f"σ_eq = max |σ_{crit}|",
                f"largest of {eq.size} value{'s' if eq.size > 1 else ''}", (), (value, unit), crit_src),
        Working("limit", "σ_allow = f_y / S", "{0} / {1}", ((fy, unit), (sf, "-")), (fy / sf, unit),
                "allowable stress: yield strength over a safety factor (common practice)"),
        Working("utilization", "u = σ_eq / σ_allow", "{0} / {1}", ((value, unit), (fy / sf, unit)),
                (value / (fy / sf), "-"), "PASS if u ≤ 1"),
    ]
    return CheckResult(name=name or f"static strength ({crit})", value=value, limit=fy / sf, unit=unit,
                       inputs=inputs, notes=notes, working=working)
