"""The about record of a result set, shared by the result folder
(``about.json``) and the ``.npz`` form: the format label, the known keys and
their check, and the point set it declares for an element type."""
from __future__ import annotations

from toolkit.errors import InputError
from toolkit.core.elements import get_element

__all__ = ["FORMAT", "ABOUT_KEYS", "MAX_RULE_POINTS", "check_about", "declared_points"]

#: Format label written into ``about.json`` and ``.npz`` files.
FORMAT = "stresspath-results/1"

ABOUT_KEYS = ("format", "points", "units", "description", "name", "cases")

#: The largest point count a result set may declare per element: a 10 x 10 x 10 Gauss rule on a hex
#: (common practice uses at most 3 or 4 per direction).  Checked before any rule is built, since a
#: tensor rule's size grows with the count.
MAX_RULE_POINTS = 1000


def check_about(about: dict, where: str) -> dict:
    """``about`` itself once checked: only the keys of :data:`ABOUT_KEYS`, our
    format label, ``cases`` a list of distinct load case names, ``points`` a rule name, a point count (at most
    :data:`MAX_RULE_POINTS`) or an object of those
    by element type, ``units`` a string or an object of strings; ``where``
    names the source in the messages."""
    if not isinstance(about, dict):
        raise InputError(f"{where}: must be a JSON object {{...}}, got {type(about).__name__}")
    for k in about:
        if k not in ABOUT_KEYS:
            raise InputError(f"{where}: unknown key {k!r}; known keys: {', '.join(ABOUT_KEYS)}")
    if "format" in about and about["format"] != FORMAT:
        raise InputError(f"{where}: format {about['format']!r} is not {FORMAT!r}")
    pts = about.get("points", "full")
    specs = pts.values() if isinstance(pts, dict) else [pts]
    if isinstance(pts, dict):
        for t in pts:
            try:
                get_element(t)
            except ValueError as e:
                raise InputError(f"{where}: 'points': {e}") from None
    for s in specs:
        ok = s in ("full", "reduced") or (isinstance(s, int) and not isinstance(s, bool) and s > 0)
        if ok and isinstance(s, int) and s > MAX_RULE_POINTS:
            raise InputError(f"{where}: 'points' {s} is more than the {MAX_RULE_POINTS} integration points "
                             "an element may carry")
        if not ok:
            raise InputError(f"{where}: 'points' must be 'full', 'reduced', a point count, or an object "
                             f"{{element type: one of those}}; got {s!r}")
    units = about.get("units", {})
    if not (isinstance(units, str) or (isinstance(units, dict) and all(
            isinstance(k, str) and isinstance(v, str) for k, v in units.items()))):
        raise InputError(f"{where}: 'units' must be a string or an object of strings, e.g. "
                         '{"length": "mm", "stress": "MPa"}')
    for k in ("description", "name"):
        if k in about and not isinstance(about[k], str):
            raise InputError(f"{where}: {k!r} must be a string")
    if "cases" in about:
        cases = about["cases"]
        if not isinstance(cases, list) or not cases or not all(
                isinstance(c, str) and c and c == c.strip() for c in cases):
            raise InputError(f"{where}: 'cases' must be a non-empty list of load case names (non-empty strings "
                             "without surrounding spaces), in order")
        seen = set()
        for c in cases:
            if c.casefold() in seen:
                raise InputError(f"{where}: 'cases' names load case {c!r} twice (names differing only in "
                                 "letter case count as the same)")
            seen.add(c.casefold())
    return about


def declared_points(about, et):
    """The point set ``about`` declares for element type ``et`` (``"full"``
    when it says nothing) and whether it said so."""
    pts = about.get("points", "full")
    if isinstance(pts, dict):
        return pts.get(et.name, "full"), et.name in pts
    return pts, "points" in about
