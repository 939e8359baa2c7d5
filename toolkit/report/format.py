"""The toolkit's one number formatter and one JSON converter.

:func:`fmt` turns a value into the text a table, a summary or a check shows
(numbers to a given count of significant figures); :func:`plain` turns a value
into plain JSON data (numpy to Python, tuples to lists, objects with
``to_dict()`` to dicts), with one rule for NaN and infinity;
:func:`json_text` writes such data as the indented UTF-8 JSON the reports use.
"""
from __future__ import annotations

import json
import math
import numbers

import numpy as np

from toolkit.errors import InputError

__all__ = ["fmt", "fmt_unit", "unit_text", "plain", "first_non_finite", "json_text", "DIMENSIONLESS"]

#: Units that mean "dimensionless"; shown as an en dash in a unit column, nothing after a number.
DIMENSIONLESS = ("", "-", "1", "–")
_SHOWN = 8  # array entries shown before the middle is elided


def fmt(v, digits=4) -> str:
    """``v`` as text, numbers to ``digits`` significant figures.

    * ``bool``, ``None`` and strings: as they are (a string is never read as a number);
    * integers (Python or numpy): every digit, ``12000000``;
    * other real numbers: ``f"{x:.{digits}g}"``; a zero of either sign is ``"0"``,
      NaN ``"nan"``, infinity ``"inf"``;
    * numpy arrays: the entries one by one by this same rule, separated by
      ``", "`` (no brackets: never numpy's repr); more than 8 entries show the
      first and last three around ``"…"``; an array of more than one dimension
      is flattened after its shape, ``"(2×3) 1, 2, …"``;
    * anything else: ``str(v)``.

    >>> fmt(123.456789), fmt(123.456789, 6), fmt(-0.0), fmt(7), fmt("S355")
    ('123.5', '123.457', '0', '7', 'S355')
    """
    if isinstance(v, (bool, str)) or v is None:
        return str(v)
    if isinstance(v, numbers.Integral):
        return str(int(v))
    if isinstance(v, np.ndarray):
        flat = [fmt(x, digits) for x in v.ravel().tolist()] if v.size <= _SHOWN else \
            [fmt(x, digits) for x in v.ravel()[:3].tolist()] + ["…"] + [fmt(x, digits) for x in v.ravel()[-3:].tolist()]
        text = ", ".join(flat)
        return text if v.ndim <= 1 else f"({'×'.join(str(n) for n in v.shape)}) {text}"
    if isinstance(v, numbers.Real):
        x = float(v)
        return "0" if x == 0 else f"{x:.{digits}g}"
    return str(v)


def unit_text(unit) -> str:
    """A unit as a table's unit column shows it: ``"–"`` for a dimensionless one
    (``""``, ``"-"``, ``"1"`` or ``None``), else the unit itself.

    >>> unit_text("MPa"), unit_text("1"), unit_text("-")
    ('MPa', '–', '–')
    """
    return "–" if unit is None or str(unit).strip() in DIMENSIONLESS else str(unit)


def fmt_unit(v, unit, digits=4) -> str:
    """``v`` by :func:`fmt` followed by its unit; a dimensionless value has no unit after it.

    >>> fmt_unit(60.0, "MPa"), fmt_unit(2.44023, "1"), fmt_unit(np.array([99.796, 74.847]), "MPa", 3)
    ('60 MPa', '2.44', '99.8, 74.8 MPa')
    """
    u = unit_text(unit)
    return fmt(v, digits) if u == "–" else f"{fmt(v, digits)} {u}"


def plain(v, where="value"):
    """A copy of ``v`` that :func:`json.dumps` writes as strict JSON.

    Numpy scalars and arrays become Python numbers and lists, tuples become
    lists, dict keys become strings, an object with a ``to_dict()`` method
    becomes that dict; ``bool``, ``None``, strings, ints and floats stay.

    Non-finite numbers: JSON has no NaN or infinity, so they become the strings
    ``"nan"``, ``"inf"`` and ``"-inf"``.  The data stays readable by any JSON
    reader and says plainly what the number was (an S-N curve's life below its
    cut-off is legitimately infinite).  A record that must hold finite numbers
    (the workbook summary) refuses them before converting, with
    :func:`first_non_finite`.

    Raises ValueError (naming ``where``) for a value of any other type.
    """
    if isinstance(v, (bool, str)) or v is None:
        return v
    if isinstance(v, numbers.Integral):
        return int(v)
    if isinstance(v, numbers.Real):
        x = float(v)
        if math.isfinite(x):
            return x
        return "inf" if x > 0 else ("-inf" if x < 0 else "nan")
    if isinstance(v, dict):
        return {str(k): plain(x, where) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [plain(x, where) for x in v]
    if hasattr(v, "tolist") and hasattr(v, "dtype"):  # numpy array or scalar
        return plain(v.tolist(), where)
    if callable(getattr(v, "to_dict", None)):
        return plain(v.to_dict(), where)
    raise InputError(f"{where}: cannot store a {type(v).__name__} in JSON")


def first_non_finite(v):
    """The first NaN or infinity in ``v`` (searched as :func:`plain` converts it), or None."""
    if isinstance(v, (bool, str)) or v is None:
        return None
    if isinstance(v, numbers.Real):
        x = float(v)
        return None if math.isfinite(x) else x
    if isinstance(v, dict):
        v = list(v.values())
    elif hasattr(v, "tolist") and hasattr(v, "dtype"):
        v = v.tolist()
        v = v if isinstance(v, list) else [v]
    elif callable(getattr(v, "to_dict", None)):
        v = list(v.to_dict().values())
    if isinstance(v, (list, tuple)):
        for x in v:
            bad = first_non_finite(x)
            if bad is not None:
                return bad
    return None


def json_text(data) -> str:
    """``data`` (already :func:`plain`) as indented UTF-8 JSON with a final newline;
    a bare NaN or infinity is refused (ValueError), never written."""
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
