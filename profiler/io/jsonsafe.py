"""Plain JSON values for the reports: numpy scalars to Python numbers, non-finite numbers to None."""

from __future__ import annotations

import math

import numpy as np

__all__ = ["json_number", "json_clean"]


def json_number(x):
    """A JSON-safe number: float, int or None for missing / non-finite."""
    if x is None:
        return None
    if isinstance(x, (bool, np.bool_)):
        return bool(x)
    if isinstance(x, (int, np.integer)):
        return int(x)
    x = float(x)
    return x if math.isfinite(x) else None


def json_clean(obj):
    """Plain JSON types throughout dicts, lists and tuples; non-finite numbers become None."""
    if isinstance(obj, dict):
        return {k: json_clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_clean(v) for v in obj]
    if isinstance(obj, (str,)) or obj is None:
        return obj
    if isinstance(obj, (bool, np.bool_, int, float, np.integer, np.floating)):
        return json_number(obj)
    return obj
