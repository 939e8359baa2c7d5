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

__all__ = ["fmt", "plain", "first_non_finite", "json_text"]


def fmt(v, digits=4) -> str:
    """``v`` as text, numbers to ``digits`` significant figures.

    * ``bool``, ``None`` and strings: as they are (a string is never read as a number);
    * integers (Python or numpy): every digit, ``12000000``;
    * other real numbers: ``f"{x:.{digits}g}"``; a zero of either sign is ``"0"``,
      NaN ``"nan"``, infinity ``"inf"``;
    * numpy arrays: numpy's array text (at most 8 entries shown, the rest elided),
      floating entries to ``digits`` significant figures;
    * anything else: ``str(v)``.

    >>> fmt(123.456789), fmt(123.456789, 6), fmt(-0.0), fmt(7), fmt("S355")
    ('123.5', '123.457', '0', '7', 'S355')
    """
    if isinstance(v, (bool, str)) or v is None:
        return str(v)
    if isinstance(v, numbers.Integral):
        return str(int(v))
    if isinstance(v, np.ndarray):
        if v.dtype.kind == "f":
            return np.array2string(v, threshold=8, separator=" ",
                                   formatter={"float_kind": lambda x: f"{x:.{digits}g}"})
        return np.array2string(v, threshold=8)
    if isinstance(v, numbers.Real):
        x = float(v)
        return "0" if x == 0 else f"{x:.{digits}g}"
    return str(v)


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
