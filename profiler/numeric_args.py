"""Checked numeric arguments of the budget and LoRa functions.

Every function turns a user-given value into a numpy array (or a Python
scalar) or raises :class:`profiler.errors.ProfilerError` with a one-line
message naming the value and what to give instead.
"""

from __future__ import annotations

import numpy as np

from profiler.errors import ProfilerError

__all__ = ["fmt_value", "numbers", "positive", "non_negative", "integers", "single_integer", "flag",
           "scalar_or_array"]


def fmt_value(value) -> str:
    """Format one offending value for an error message."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return repr(value)
    if np.isfinite(v) and v == int(v):
        return str(int(v))
    return f"{v:g}"


def numbers(name: str, value, unit: str, fix: str | None = None) -> np.ndarray:
    """Return ``value`` as a finite float array or raise ProfilerError."""
    fix = fix or f"give it in {unit}"
    if isinstance(value, (str, bytes)):
        raise ProfilerError(f"{name} {value!r} is not a number; {fix}")
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ProfilerError(f"{name} {value!r} is not a number; {fix}") from None
    if arr.size == 0:
        raise ProfilerError(f"{name} is empty; {fix}")
    bad = ~np.isfinite(arr)
    if np.any(bad):
        raise ProfilerError(
            f"{name} {fmt_value(arr[bad].flat[0])} is not a finite number; {fix}")
    return arr


def positive(name: str, value, unit: str, fix: str | None = None) -> np.ndarray:
    fix = fix or f"give a value greater than 0 {unit}"
    arr = numbers(name, value, unit, fix)
    bad = arr <= 0
    if np.any(bad):
        shown = f"{fmt_value(arr[bad].flat[0])} {unit}".strip()
        raise ProfilerError(f"{name} {shown} is not greater than 0; {fix}")
    return arr


def non_negative(name: str, value, unit: str) -> np.ndarray:
    arr = numbers(name, value, unit)
    bad = arr < 0
    if np.any(bad):
        raise ProfilerError(
            f"{name} {fmt_value(arr[bad].flat[0])} {unit} is negative; use 0 {unit} or more")
    return arr


def integers(name: str, value, low: int, high: int, hint: str) -> np.ndarray:
    """Return ``value`` as an int64 array within [low, high] or raise."""
    if isinstance(value, (bool, np.bool_)):
        raise ProfilerError(f"{name} {value!r} is not a number; {hint}")
    arr = numbers(name, value, "", fix=hint)
    frac = arr != np.round(arr)
    if np.any(frac):
        raise ProfilerError(
            f"{name} {fmt_value(arr[frac].flat[0])} is not a whole number; {hint}")
    out = (arr < low) | (arr > high)
    if np.any(out):
        raise ProfilerError(f"{name} {fmt_value(arr[out].flat[0])} is out of range; {hint}")
    return arr.astype(np.int64)


def single_integer(name: str, value, low: int, high: int, hint: str) -> int:
    arr = integers(name, value, low, high, hint)
    if arr.ndim != 0:
        raise ProfilerError(f"{name} must be a single value; {hint}")
    return int(arr)



def flag(name: str, value) -> bool:
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    raise ProfilerError(f"{name} must be true or false, not {value!r}")


def scalar_or_array(arr):
    """0-d results become Python scalars; other arrays are returned as is."""
    arr = np.asarray(arr)
    return arr.item() if arr.ndim == 0 else arr
