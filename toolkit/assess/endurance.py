"""Fatigue of non-welded steel parts by the stress-life method: the endurance
limit estimated from the tensile strength and corrected by Marin factors,
the mean-stress criteria (Goodman, Gerber, ASME elliptic, Soderberg) with
their fatigue factor of safety, Langer's first-cycle yield check, and the
check that puts them together as a :class:`~toolkit.assess.checks.CheckResult`.

Source throughout: R. G. Budynas and J. K. Nisbett, *Shigley's Mechanical
Engineering Design*, 9th ed., McGraw-Hill 2011, chapter 6 (§6-7 endurance
limit, §6-9 Marin factors, §6-12 mean-stress criteria).  The equation and
table numbers quoted are from memory; the coefficients were written from
memory of the printed tables and should be checked against them before a
project relies on them.  This route is separate from the welded (IIW) route
of :mod:`toolkit.assess.checks`, which applies no mean-stress correction to
as-welded joints (f(R) = 1).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from statistics import NormalDist

import numpy as np

from toolkit.assess.checks import CheckResult, Working
from toolkit.core.numbers import finite_number, positive_number
from toolkit.errors import InputError

__all__ = ["SHIGLEY", "SURFACE_FINISHES", "LOAD_FACTORS", "MEAN_STRESS_CRITERIA", "endurance_limit_estimate",
           "surface_factor", "size_factor", "equivalent_diameter", "load_factor", "reliability_factor",
           "EnduranceLimit", "endurance_limit", "criterion_amplitude", "fatigue_safety_factor",
           "langer_safety_factor", "endurance_check", "first_cycle_yield_check"]

SHIGLEY = "Shigley's Mechanical Engineering Design, 9th ed. (Budynas & Nisbett 2011)"

#: Surface factor ``ka = a Sut^b`` (Sut in MPa): finish -> (a in MPa, b).  Shigley 9th ed., Table 6-2
#: (from memory; in kpsi the factors a are 1.34, 2.70, 14.4 and 39.9).
SURFACE_FINISHES = {
    "ground": (1.58, -0.085),
    "machined": (4.51, -0.265),          # machined or cold-drawn
    "cold-drawn": (4.51, -0.265),
    "hot-rolled": (57.7, -0.718),
    "as-forged": (272.0, -0.995),
}

#: Load factor kc by kind of loading.  Shigley 9th ed., Eq. (6-26) (from memory).
LOAD_FACTORS = {"bending": 1.0, "axial": 0.85, "torsion": 0.59}

MEAN_STRESS_CRITERIA = ("goodman", "gerber", "asme-elliptic", "soderberg")

_SUT_KNEE = 1400.0   # MPa: above it the endurance-limit estimate stays at 700 MPa



def _choice(value, name, choices):
    key = str(value).lower().replace("_", "-").replace(" ", "-")
    if key not in choices:
        raise InputError(f"{name} must be one of {', '.join(repr(c) for c in choices)}, got {value!r}")
    return key


# ---------------------------------------------------------------------------
# Endurance limit and Marin factors
# ---------------------------------------------------------------------------
def endurance_limit_estimate(tensile_strength) -> float:
    """Rotating-beam endurance limit of a steel specimen estimated from its tensile strength.

    ``S'e = 0.5 Sut`` for ``Sut <= 1400 MPa``, ``S'e = 700 MPa`` above
    (Shigley 9th ed., §6-7, Eq. (6-8); equation number from memory).  MPa.
    """
    sut = positive_number("tensile_strength", tensile_strength)
    return 0.5 * sut if sut <= _SUT_KNEE else 700.0


def surface_factor(tensile_strength, finish) -> float:
    """Marin surface factor ``ka = a Sut^b`` (Sut in MPa).

    ``finish``: "ground", "machined" (or "cold-drawn"), "hot-rolled",
    "as-forged"; ``a`` and ``b`` from :data:`SURFACE_FINISHES` (Shigley 9th
    ed., Eq. (6-19) and Table 6-2; from memory).
    """
    sut = positive_number("tensile_strength", tensile_strength)
    a, b = SURFACE_FINISHES[_choice(finish, "finish", tuple(SURFACE_FINISHES))]
    return a * sut ** b


def equivalent_diameter(section, diameter=None, height=None, width=None) -> float:
    """Equivalent diameter ``de`` of a part that is not a rotating round bar, for :func:`size_factor`.

    The round bar whose area stressed above 95 % of the peak in rotating
    bending, ``A95 = 0.0766 de²``, equals the part's (Shigley 9th ed., §6-9,
    Eqs. (6-23)-(6-25) and Table 6-3; from memory); the coefficients are the
    published, rounded ones:

    * "round-rotating": ``de = d``;
    * "round-nonrotating" (A95 = 0.01046 d²): ``de = 0.370 d``;
    * "rectangle" in bending, height ``h`` (in the plane of bending) and
      width ``b`` (A95 = 0.05 h b): ``de = 0.808 √(h b)``.

    Lengths in mm.
    """
    kind = _choice(section, "section", ("round-rotating", "round-nonrotating", "rectangle"))
    if kind == "rectangle":
        h = positive_number("height", height)
        b = positive_number("width", width)
        return 0.808 * math.sqrt(h * b)
    d = positive_number("diameter", diameter)
    return d if kind == "round-rotating" else 0.370 * d


def size_factor(diameter, load="bending") -> float:
    """Marin size factor kb (lengths in mm).

    Bending and torsion of a rotating round bar of diameter ``d`` (for other
    sections give :func:`equivalent_diameter`): ``kb = (d/7.62)^-0.107 =
    1.24 d^-0.107`` for 2.79 <= d <= 51 mm, ``kb = 1.51 d^-0.157`` for
    51 < d <= 254 mm; axial loading ``kb = 1`` (no size effect).  Shigley
    9th ed., §6-9, Eq. (6-20) (from memory).  Outside 2.79..254 mm the fit
    is not stated and an InputError is raised.
    """
    kind = _choice(load, "load", tuple(LOAD_FACTORS))
    if kind == "axial":
        return 1.0
    d = positive_number("diameter", diameter)
    if not 2.79 <= d <= 254.0:
        raise InputError(f"diameter {d:g} mm lies outside 2.79..254 mm, the range of the size-factor fit")
    return (d / 7.62) ** -0.107 if d <= 51.0 else 1.51 * d ** -0.157


def load_factor(load) -> float:
    """Marin load factor kc: bending 1, axial 0.85, torsion 0.59 (Shigley 9th ed., Eq. (6-26); from memory)."""
    return LOAD_FACTORS[_choice(load, "load", tuple(LOAD_FACTORS))]


def reliability_factor(reliability) -> float:
    """Marin reliability factor ``ke = 1 − 0.08 z_a``.

    ``z_a`` is the standard normal variate of the reliability (``Φ(z_a) =
    R``), with the endurance limit's standard deviation taken as 8 % of its
    mean (Shigley 9th ed., §6-9, Eq. (6-29) and Table 6-5; from memory).
    ``reliability`` in [0.5, 1): 0.5 gives 1, 0.99 gives 0.814.
    """
    r = finite_number("reliability", reliability)
    if not 0.5 <= r < 1.0:
        raise InputError(f"reliability must lie in [0.5, 1), got {reliability!r}")
    return 1.0 - 0.08 * NormalDist().inv_cdf(r)


@dataclass(frozen=True)
class EnduranceLimit:
    """The corrected endurance limit ``Se = ka kb kc kd ke kf S'e`` with its factors.

    ``factors`` maps each symbol ("S'e", "ka", ...) to ``(value, what, source)``;
    ``rows()`` gives the table a report shows.
    """

    se_prime: float
    ka: float
    kb: float
    kc: float
    kd: float
    ke: float
    kf: float
    sources: dict = field(default_factory=dict)

    @property
    def value(self) -> float:
        """Se in MPa."""
        return self.ka * self.kb * self.kc * self.kd * self.ke * self.kf * self.se_prime

    def rows(self) -> list:
        """``[symbol, value, what and source]`` rows: S'e, the six factors, Se."""
        names = ("ka", "kb", "kc", "kd", "ke", "kf")
        return ([["S'e (MPa)", self.se_prime, self.sources.get("S'e", "")]]
                + [[k, getattr(self, k), self.sources.get(k, "")] for k in names]
                + [["Se (MPa)", self.value, "Se = ka kb kc kd ke kf S'e, Marin equation (Shigley 9th ed., Eq. "
                                            "(6-18); from memory)"]])

    def __repr__(self):
        return (f"EnduranceLimit(Se = {self.value:.4g} MPa = {self.ka:.4g} x {self.kb:.4g} x {self.kc:.4g} x "
                f"{self.kd:.4g} x {self.ke:.4g} x {self.kf:.4g} x S'e {self.se_prime:.4g} MPa)")


def endurance_limit(tensile_strength, finish, load="bending", diameter=None, reliability=0.5,
                    temperature_factor=1.0, misc_factor=1.0) -> EnduranceLimit:
    """Marin-corrected endurance limit of a steel part, ``Se = ka kb kc kd ke kf S'e``.

    Parameters
    ----------
    tensile_strength : Sut in MPa; ``S'e`` by :func:`endurance_limit_estimate`.
    finish : surface finish for ``ka`` (:func:`surface_factor`).
    load : "bending", "axial" or "torsion", for ``kb`` and ``kc``.
    diameter : (equivalent) diameter in mm for ``kb`` in bending and torsion
        (:func:`size_factor`, :func:`equivalent_diameter`); not used for axial.
    reliability : for ``ke`` (:func:`reliability_factor`); 0.5 gives 1.
    temperature_factor, misc_factor : ``kd`` and ``kf`` (Shigley's
        miscellaneous-effects factor, not the fatigue notch factor Kf, which
        :func:`endurance_check` applies to the stresses), given by the user,
        positive and at most 1.5.

    Source: Shigley 9th ed., §6-9, Marin equation (6-18) (from memory).
    """
    kind = _choice(load, "load", tuple(LOAD_FACTORS))
    kd = positive_number("temperature_factor", temperature_factor)
    kf = positive_number("misc_factor", misc_factor)
    for v, name in ((kd, "temperature_factor"), (kf, "misc_factor")):
        if v > 1.5:
            raise InputError(f"{name} must lie in (0, 1.5], got {v:g}")
    sut = positive_number("tensile_strength", tensile_strength)
    src = {
        "S'e": "0.5 Sut for Sut ≤ 1400 MPa, else 700 MPa (Shigley 9th ed., Eq. (6-8); from memory)",
        "ka": f"surface, {_choice(finish, 'finish', tuple(SURFACE_FINISHES))}: a Sut^b (Shigley 9th ed., Table 6-2; "
              "from memory)",
        "kb": ("size: 1 for axial loading" if kind == "axial" else
               f"size: (d/7.62)^-0.107 or 1.51 d^-0.157, d = {positive_number('diameter', diameter):.4g} mm "
               "(Shigley 9th ed., Eq. (6-20); from memory)"),
        "kc": f"load, {kind} (Shigley 9th ed., Eq. (6-26); from memory)",
        "kd": "temperature, as given",
        "ke": f"reliability {float(reliability):g}: 1 − 0.08 z_a (Shigley 9th ed., Table 6-5; from memory)",
        "kf": "miscellaneous effects, as given",
    }
    return EnduranceLimit(se_prime=endurance_limit_estimate(sut), ka=surface_factor(sut, finish),
                          kb=size_factor(diameter, kind), kc=load_factor(kind), kd=kd,
                          ke=reliability_factor(reliability), kf=kf, sources=src)


# ---------------------------------------------------------------------------
# Mean-stress criteria
# ---------------------------------------------------------------------------
_CRITERION_TEXT = {
    "goodman": ("modified Goodman", "σa/Se + σm/Sut = 1/n"),
    "gerber": ("Gerber", "n σa/Se + (n σm/Sut)² = 1"),
    "asme-elliptic": ("ASME elliptic", "(n σa/Se)² + (n σm/Sy)² = 1"),
    "soderberg": ("Soderberg", "σa/Se + σm/Sy = 1/n"),
}


def _strengths(criterion, endurance, tensile_strength, yield_strength):
    crit = _choice(criterion, "criterion", MEAN_STRESS_CRITERIA)
    se = positive_number("endurance", endurance)
    sut = positive_number("tensile_strength", tensile_strength)
    sy = None
    if crit in ("asme-elliptic", "soderberg") or yield_strength is not None:
        if yield_strength is None:
            raise InputError(f"yield_strength is needed for the {crit} criterion")
        sy = positive_number("yield_strength", yield_strength)
        if sy > sut:
            raise InputError(f"yield_strength {sy:g} MPa exceeds tensile_strength {sut:g} MPa")
    return crit, se, sut, sy


def criterion_amplitude(mean_stress, endurance, tensile_strength, yield_strength=None, criterion="goodman"):
    """The alternating strength ``Sa`` the criterion allows at mean stress ``σm`` (n = 1).

    Goodman ``Se (1 − σm/Sut)``, Gerber ``Se (1 − (σm/Sut)²)``, ASME
    elliptic ``Se √(1 − (σm/Sy)²)``, Soderberg ``Se (1 − σm/Sy)``, zero
    beyond the criterion's intercept on the mean axis (Shigley 9th ed.,
    §6-12; from memory).  A compressive mean gives no benefit: ``Sa = Se``
    for ``σm <= 0`` (common practice; Shigley draws the compressive side
    this way).  Array in, array out.  MPa.
    """
    crit, se, sut, sy = _strengths(criterion, endurance, tensile_strength, yield_strength)
    sm = np.asarray(mean_stress, dtype=float)
    if not np.all(np.isfinite(sm)):
        raise InputError(f"mean_stress must be finite, got {mean_stress}")
    x = np.maximum(sm, 0.0)
    if crit == "goodman":
        sa = se * (1.0 - x / sut)
    elif crit == "gerber":
        sa = se * (1.0 - (x / sut) ** 2)
    elif crit == "asme-elliptic":
        sa = se * np.sqrt(np.clip(1.0 - (x / sy) ** 2, 0.0, None))
    else:
        sa = se * (1.0 - x / sy)
    sa = np.maximum(sa, 0.0)
    return float(sa) if sa.ndim == 0 else sa


def fatigue_safety_factor(amplitude, mean_stress, endurance, tensile_strength, yield_strength=None,
                          criterion="goodman") -> float:
    """Fatigue factor of safety ``n_f`` along the load line (σm/σa fixed), by the named criterion.

    With ``σm > 0`` (Shigley 9th ed., §6-12, Table 6-7 and 6-8; from memory):

    * Goodman: ``1/n = σa/Se + σm/Sut``;
    * Gerber: ``n σa/Se + (n σm/Sut)² = 1``, so
      ``n = ½ (Sut/σm)² (σa/Se) [−1 + √(1 + (2 σm Se / (Sut σa))²)]``;
    * ASME elliptic: ``(n σa/Se)² + (n σm/Sy)² = 1``, so
      ``n = 1/√((σa/Se)² + (σm/Sy)²)``;
    * Soderberg: ``1/n = σa/Se + σm/Sy``.

    ``σm <= 0``: no benefit from a compressive mean, ``n = Se/σa`` for every
    criterion (common practice; see :func:`criterion_amplitude`).  Stresses
    in MPa; ``amplitude`` > 0.
    """
    crit, se, sut, sy = _strengths(criterion, endurance, tensile_strength, yield_strength)
    sa = positive_number("amplitude", amplitude)
    sm = max(finite_number("mean_stress", mean_stress), 0.0)
    if sm == 0.0:
        return se / sa
    if crit == "goodman":
        return 1.0 / (sa / se + sm / sut)
    if crit == "gerber":
        c = 2.0 * sm * se / (sut * sa)
        # -1 + sqrt(1 + c²) written as c² / (1 + sqrt(1 + c²)): no cancellation for a small mean
        return 0.5 * (sut / sm) ** 2 * (sa / se) * c * c / (1.0 + math.sqrt(1.0 + c * c))
    if crit == "asme-elliptic":
        return 1.0 / math.sqrt((sa / se) ** 2 + (sm / sy) ** 2)
    return 1.0 / (sa / se + sm / sy)


def langer_safety_factor(amplitude, mean_stress, yield_strength) -> float:
    """First-cycle yield factor of safety, Langer line: ``n_y = Sy / (σa + |σm|)``.

    The largest stress of the cycle, ``σmax = σa + σm`` (or ``|σmin| = σa −
    σm`` for a compressive mean), against the yield strength (Shigley 9th ed.,
    §6-12, Eq. (6-49); from memory).  MPa.
    """
    sa = finite_number("amplitude", amplitude)
    if sa < 0:
        raise InputError(f"amplitude must be >= 0, got {amplitude!r}")
    sm = finite_number("mean_stress", mean_stress)
    sy = positive_number("yield_strength", yield_strength)
    peak = sa + abs(sm)
    if peak <= 0:
        raise InputError("amplitude and mean_stress are both zero: there is no stress to check")
    return sy / peak


# ---------------------------------------------------------------------------
# Checks
# ---------------------------------------------------------------------------
def _local(amplitude, mean_stress, notch_factor):
    kf = positive_number("notch_factor", notch_factor)
    if kf < 1.0:
        raise InputError(f"notch_factor must be >= 1 (Kf = 1 + q (Kt − 1)), got {kf:g}")
    sa = finite_number("amplitude", amplitude)
    if sa <= 0:
        raise InputError(f"amplitude must be > 0 (with no alternating stress there is no fatigue check), got "
                         f"{amplitude!r}")
    sm = finite_number("mean_stress", mean_stress)
    return kf, sa, sm


def endurance_check(amplitude, mean_stress, endurance, tensile_strength, yield_strength=None, criterion="goodman",
                    notch_factor=1.0, safety_factor=1.0, unit="MPa", name=None) -> CheckResult:
    """Fatigue check of a non-welded part for infinite life with a mean-stress criterion.

    The local stresses are the nominal ones times the fatigue notch factor,
    ``σa = Kf σa,nom`` and ``σm = Kf σm,nom`` (Shigley 9th ed., §6-10; Kf on
    the mean as well, for a part that does not yield locally: common
    practice).  The criterion gives ``n_f`` (:func:`fatigue_safety_factor`);
    the check reads ``σa <= Sa / n_req`` with ``Sa = n_f σa`` the
    criterion's strength amplitude on the load line, so ``utilization =
    n_req / n_f``.  A compressive mean is taken as zero (no benefit).

    Parameters
    ----------
    amplitude, mean_stress : nominal stress amplitude (> 0) and mean, MPa.
    endurance : Se in MPa (an :class:`EnduranceLimit` or a number).
    tensile_strength, yield_strength : Sut and Sy in MPa; Sy is needed for
        "asme-elliptic" and "soderberg", and shown as Langer's first-cycle
        yield factor in the notes when given.
    criterion : one of :data:`MEAN_STRESS_CRITERIA`.
    notch_factor : Kf >= 1 (e.g. :func:`toolkit.assess.references.fatigue_notch_factor`).
    safety_factor : the required fatigue factor of safety n_req >= 1.
    """
    se_rec = endurance if isinstance(endurance, EnduranceLimit) else None
    se = se_rec.value if se_rec is not None else positive_number("endurance", endurance)
    crit, se, sut, sy = _strengths(criterion, se, tensile_strength, yield_strength)
    kf, sa_nom, sm_nom = _local(amplitude, mean_stress, notch_factor)
    nreq = positive_number("safety_factor", safety_factor)
    if nreq < 1.0:
        raise InputError(f"safety_factor must be >= 1, got {nreq:g}")
    sa, sm = kf * sa_nom, kf * sm_nom
    nf = fatigue_safety_factor(sa, sm, se, sut, sy, crit)
    label, form = _CRITERION_TEXT[crit]
    strength_amp = nf * sa
    limit = strength_amp / nreq
    src = f"{SHIGLEY}, §6-12 (from memory)"
    working = [
        Working("local amplitude", "σa = Kf σa,nom", "{0} × {1}", ((kf, "-"), (sa_nom, unit)), (sa, unit),
                "fatigue notch factor on the nominal stress (Shigley 9th ed., §6-10)"),
        Working("local mean", "σm = Kf σm,nom", "{0} × {1}", ((kf, "-"), (sm_nom, unit)), (sm, unit),
                "Kf on the mean as well (no local yielding; common practice)"),
    ]
    if se_rec is not None:
        working.append(Working("endurance limit", "Se = ka kb kc kd ke kf S'e",
                               "{0} × {1} × {2} × {3} × {4} × {5} × {6}",
                               tuple((getattr(se_rec, k), "-") for k in ("ka", "kb", "kc", "kd", "ke", "kf"))
                               + ((se_rec.se_prime, unit),), (se, unit),
                               "Marin equation (Shigley 9th ed., Eq. (6-18); from memory)"))
    sm_used = max(sm, 0.0)
    args = "σa, σm, Se, Sut" + (", Sy" if sy is not None else "")
    working.append(Working(f"fatigue factor of safety, {label}: {form}", f"n_f({args})",
                           "n_f({0}, {1}, {2}, {3}" + (", {4})" if sy is not None else ")"),
                           ((sa, unit), (sm_used, unit), (se, unit), (sut, unit))
                           + (((sy, unit),) if sy is not None else ()), (nf, "-"),
                           src + ("; compressive mean taken as 0, no benefit (common practice)" if sm < 0 else "")))
    working += [
        Working("strength amplitude", "Sa = n_f σa", "{0} × {1}", ((nf, "-"), (sa, unit)), (strength_amp, unit),
                "on the load line, σm/σa fixed"),
        Working("utilization", "u = n_req / n_f", "{0} / {1}", ((nreq, "-"), (nf, "-")), (nreq / nf, "-"),
                "PASS if u ≤ 1"),
    ]
    notes = [f"{label} criterion: n_f = {nf:.4g} against the required {nreq:g}"]
    if sm < 0:
        notes.append("compressive mean stress: taken as zero for the criterion (no benefit; common practice)")
    if sy is not None:
        ny = langer_safety_factor(sa, sm, sy)
        notes.append(f"first-cycle yield (Langer): n_y = Sy / (σa + |σm|) = {ny:.4g}")
    notes.append("non-welded route (stress-life, infinite life); welded joints follow the IIW route, which applies "
                 "no mean-stress correction to as-welded joints (f(R) = 1)")
    inputs = {"criterion": label, "notch_factor": kf, "nominal_amplitude": sa_nom, "nominal_mean": sm_nom,
              "amplitude": sa, "mean_stress": sm, "endurance_limit": se, "tensile_strength": sut,
              "fatigue_safety_factor": nf, "required_safety_factor": nreq, "source": src}
    if sy is not None:
        inputs["yield_strength"] = sy
    return CheckResult(name=name or f"fatigue, non-welded ({label})", value=sa, limit=limit, unit=unit,
                       inputs=inputs, notes=notes, working=working)


def first_cycle_yield_check(amplitude, mean_stress, yield_strength, notch_factor=1.0, safety_factor=1.0,
                            unit="MPa", name="first-cycle yield (Langer)") -> CheckResult:
    """Langer's first-cycle yield check: ``σa + |σm| <= Sy / n_req`` with ``σ = Kf σ_nom``.

    ``utilization = n_req / n_y`` with ``n_y`` by :func:`langer_safety_factor`
    (Shigley 9th ed., §6-12; from memory).  Inputs as :func:`endurance_check`.
    """
    kf, sa_nom, sm_nom = _local(amplitude, mean_stress, notch_factor)
    sy = positive_number("yield_strength", yield_strength)
    nreq = positive_number("safety_factor", safety_factor)
    if nreq < 1.0:
        raise InputError(f"safety_factor must be >= 1, got {nreq:g}")
    sa, sm = kf * sa_nom, kf * sm_nom
    peak = sa + abs(sm)
    ny = langer_safety_factor(sa, sm, sy)
    working = [
        Working("largest local stress", "σmax = Kf (σa,nom + |σm,nom|)", "{0} × ({1} + {2})",
                ((kf, "-"), (sa_nom, unit), (abs(sm_nom), unit)), (peak, unit), "Langer line"),
        Working("yield factor of safety", "n_y = Sy / σmax", "{0} / {1}", ((sy, unit), (peak, unit)), (ny, "-"),
                f"{SHIGLEY}, §6-12 (from memory)"),
        Working("utilization", "u = n_req / n_y", "{0} / {1}", ((nreq, "-"), (ny, "-")), (nreq / ny, "-"),
                "PASS if u ≤ 1"),
    ]
    inputs = {"notch_factor": kf, "amplitude": sa, "mean_stress": sm, "yield_strength": sy,
              "required_safety_factor": nreq}
    notes = ["linear elastic: the local peak Kf σ is compared with yield (common practice for the first cycle)"]
    return CheckResult(name=name, value=peak, limit=sy / nreq, unit=unit, inputs=inputs, notes=notes,
                       working=working)
