"""Checked names of a fixed set (clutter classes, building types) as array indices."""

from __future__ import annotations

import numpy as np

from ..errors import ProfilerError


def name_index(names, choices, what):
    """Index of each name in ``choices``, same shape as ``names``; an unknown one raises naming it and the choices."""
    names = np.asarray(names, dtype=str)
    unique, inverse = np.unique(names, return_inverse=True)
    unknown = [str(u) for u in unique if str(u) not in choices]
    if unknown:
        raise ProfilerError(f"unknown {what} {unknown[0]!r}; use one of {', '.join(choices)}")
    index = np.array([choices.index(str(u)) for u in unique], dtype=int)
    return index[inverse].reshape(names.shape)
