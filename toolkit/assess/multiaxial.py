"""Fatigue under combined normal and shear stress ranges: the IIW comparison
value ``(Δσ/Δσ_R)² + (Δτ/Δτ_R)² <= CV`` (1.0 proportional, 0.5
non-proportional loading) as a check with its working."""
from __future__ import annotations


from toolkit.assess.checks import CheckResult, SNCurve, Working
from toolkit.core.numbers import nonnegative_number, positive_number as _positive
from toolkit.errors import InputError

__all__ = ["COMPARISON_VALUES", "IIW_MULTIAXIAL", "multiaxial_check"]

#: Where the interaction rule and its comparison values come from (section number and values from memory).
IIW_MULTIAXIAL = ("IIW recommendations (Hobbacher 2016, XIII-2460-13), §5.3.2 combined normal and shear stress "
                  "(section number and comparison values from memory)")

#: The comparison value CV by kind of loading (IIW 2016, from memory).
COMPARISON_VALUES = {"proportional": 1.0, "non-proportional": 0.5}




def _resistance(name, v, stress, cycles):
    """(resistance at ``cycles``, how it was found) from a number or an S-N curve."""
    if isinstance(v, (SNCurve, dict)):
        c = SNCurve.from_dict(v)
        if c.stress != stress:
            raise InputError(f"{name}: the curve {c.name!r} is for {c.stress} stress, this resistance needs a "
                             f"{stress}-stress curve")
        if cycles is None:
            raise InputError(f"{name} is an S-N curve: give cycles= (the number of cycles to read it at)")
        return float(c.strength(_positive("cycles", cycles))), f"{c.name} at {float(cycles):.4g} cycles"
    return _positive(name, v), "as given"


def multiaxial_check(normal_range, shear_range, normal_resistance, shear_resistance, loading="proportional",
                     cycles=None, gamma_F=1.0, gamma_M=1.0, comparison_value=None, unit="MPa",
                     name="fatigue, combined normal and shear stress") -> CheckResult:
    """IIW interaction of normal and shear stress ranges.

    ``CV_act = (γF Δσ / (Δσ_R/γM))² + (γF Δτ / (Δτ_R/γM))² <= CV``, with
    ``CV = 1.0`` for proportional and ``0.5`` for non-proportional loading
    (IIW recommendations, Hobbacher 2016, §5.3.2; the section number and both
    values from memory).  ``utilization = CV_act / CV``.

    Parameters
    ----------
    normal_range, shear_range : Δσ and Δτ, magnitudes (>= 0).
    normal_resistance, shear_resistance : Δσ_R and Δτ_R, the fatigue
        resistances at the number of cycles: positive numbers, or S-N curves
        (:class:`SNCurve` or dicts; ``stress="normal"`` and ``"shear"``) read
        at ``cycles``.  Apply a thickness correction by passing
        ``curve.scaled(f(t))``.
    loading : "proportional" or "non-proportional" (a key of
        :data:`COMPARISON_VALUES`).
    comparison_value : a CV given by the governing code instead (then
        ``loading`` only labels the result).
    gamma_F, gamma_M : partial factors on actions and resistance.

    >>> r = multiaxial_check(60.0, 30.0, 100.0, 80.0, loading="non-proportional")
    >>> round(r.value, 6), r.limit, r.status      # 0.6^2 + 0.375^2 = 0.500625
    (0.500625, 0.5, 'FAIL')
    """
    ds = nonnegative_number("normal_range", normal_range, "a stress range is a magnitude")
    dt = nonnegative_number("shear_range", shear_range, "a stress range is a magnitude")
    rs, rs_how = _resistance("normal_resistance", normal_resistance, "normal", cycles)
    rt, rt_how = _resistance("shear_resistance", shear_resistance, "shear", cycles)
    if cycles is not None and not isinstance(normal_resistance, (SNCurve, dict)) \
            and not isinstance(shear_resistance, (SNCurve, dict)):
        raise InputError("cycles= is used only to read S-N curves; both resistances are numbers here")
    gF = _positive("gamma_F", gamma_F)
    gM = _positive("gamma_M", gamma_M)
    if loading not in COMPARISON_VALUES:
        raise InputError(f"loading must be one of {sorted(COMPARISON_VALUES)}, got {loading!r}")
    if comparison_value is None:
        cv, cv_src = COMPARISON_VALUES[loading], f"{loading} loading: {IIW_MULTIAXIAL}"
    else:
        cv, cv_src = _positive("comparison_value", comparison_value), "comparison value as given"
    a = gF * ds / (rs / gM)
    b = gF * dt / (rt / gM)
    value = a * a + b * b
    working = [
        Working("normal stress ratio", "γF Δσ / (Δσ_R / γM)", "{0} × {1} / ({2} / {3})",
                ((gF, "-"), (ds, unit), (rs, unit), (gM, "-")), (a, "-"), f"Δσ_R {rs_how}"),
        Working("shear stress ratio", "γF Δτ / (Δτ_R / γM)", "{0} × {1} / ({2} / {3})",
                ((gF, "-"), (dt, unit), (rt, unit), (gM, "-")), (b, "-"), f"Δτ_R {rt_how}"),
        Working("comparison value", "CV_act = (Δσ ratio)² + (Δτ ratio)²", "{0}² + {1}²", ((a, "-"), (b, "-")),
                (value, "-"), IIW_MULTIAXIAL),
        Working("utilization", "u = CV_act / CV", "{0} / {1}", ((value, "-"), (cv, "-")), (value / cv, "-"),
                cv_src + "; PASS if u ≤ 1"),
    ]
    inputs = {"normal_range": ds, "shear_range": dt, "normal_resistance": rs, "shear_resistance": rt,
              "loading": loading, "gamma_F": gF, "gamma_M": gM, "comparison_value": cv, "source": IIW_MULTIAXIAL}
    if cycles is not None:
        inputs["cycles"] = float(cycles)
    notes = [f"{loading} loading, CV = {cv:g}"]
    return CheckResult(name=name, value=value, limit=cv, unit="-", inputs=inputs, notes=notes, working=working)
