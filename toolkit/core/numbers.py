"""Checks of scalar inputs: one place for "must be a positive number" and its
kind, so every function names the parameter and the value the same way."""
from __future__ import annotations

import math

from toolkit.errors import InputError

__all__ = ["finite_number", "positive_number", "nonnegative_number"]


def _as_float(name, value, what):
    if isinstance(value, bool):
        raise InputError(f"{name} must be {what}, got {value!r}")
    try:
        return float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be {what}, got {value!r}") from None


def finite_number(name, value) -> float:
    """``float(value)``, or an :class:`InputError` naming ``name`` when it is
    not a finite number.

    >>> finite_number("mean_stress", "-20")
    -20.0
    """
    v = _as_float(name, value, "a finite number")
    if not math.isfinite(v):
        raise InputError(f"{name} must be a finite number, got {value!r}")
    return v


def positive_number(name, value) -> float:
    """``float(value)`` when it is finite and > 0, else an :class:`InputError`
    naming ``name``."""
    v = _as_float(name, value, "a positive number")
    if not (math.isfinite(v) and v > 0):
        raise InputError(f"{name} must be a positive number, got {value!r}")
    return v


def nonnegative_number(name, value, why="") -> float:
    """``float(value)`` when it is finite and >= 0, else an :class:`InputError`
    naming ``name`` (``why`` adds a reason, e.g. "a stress range is a magnitude")."""
    v = _as_float(name, value, "a number")
    if not (math.isfinite(v) and v >= 0):
        raise InputError(f"{name} must be finite and >= 0{f' ({why})' if why else ''}, got {value!r}")
    return v
