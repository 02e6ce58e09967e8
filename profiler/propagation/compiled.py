"""numba copies of the shared per-sample term functions, and the digest that keys the compiled kernels' cache.

The per-sample terms of the reductions are plain functions of
:mod:`profiler.propagation.geometry`, :mod:`profiler.propagation.diffraction_batch`,
:mod:`profiler.propagation.hull` and :mod:`profiler.propagation.p1812.geometry`
(the numpy engine calls them on arrays).  :func:`compile_terms` compiles
copies of them for the kernels of :mod:`profiler.propagation.prefix_kernel`
and :mod:`profiler.propagation.p1812.prefix`, so the physics is written
once; :func:`fingerprint` is the digest of their code that is part of those
kernels' disk-cache key.  Imports numba (``profiler coverage`` only).
"""

from __future__ import annotations

import hashlib
import math
import types

import numba
import numpy as np

FASTMATH = {"nsz", "arcp", "contract", "afn", "reassoc"}
"""LLVM fast-math flags of the kernels: reassociation and reciprocals let the inner loops vectorize (about 2x);
no ``nnan``/``ninf`` (the running maxima start at -inf).  Results differ from the numpy engine by rounding only."""


def compile_terms(module, names) -> dict:
    """``numba.njit`` copies of ``module``'s term functions, each calling the compiled copies of the others.

    Not cached themselves: they are compiled into the (cached) kernels.

    Parameters
    ----------
    module : module
        The module holding the terms (plain arithmetic on floats).
    names : tuple of str
        The terms, in dependency order (a term after the terms it calls).

    Returns
    -------
    dict
        Name -> compiled term, plus ``np`` and ``math`` (the globals of the copies).

    References
    ----------
    .. [1] numba documentation, user guide section "Compiling Python code
       with @jit" (``njit``, ``fastmath``): functions called from a compiled
       function must be compiled themselves.
    """
    space = {"np": np, "math": math}
    for name in names:
        f = getattr(module, name)
        copy = types.FunctionType(f.__code__, space, name, f.__defaults__, f.__closure__)
        copy.__module__, copy.__qualname__ = module.__name__, f.__qualname__
        space[name] = numba.njit(fastmath=FASTMATH)(copy)
    return space


def fingerprint(terms) -> str:
    """Digest of the terms' code and the flags: part of the kernels' cache key.

    numba keys a cached function on its own bytecode and closure only, so an
    edited term (in geometry.py or diffraction_batch.py) would otherwise be
    served stale from the cache.

    Parameters
    ----------
    terms : tuple of (module, tuple of str)
        The terms a set of kernels calls.

    Returns
    -------
    str
        SHA-256 hex digest of the fast-math flags and the terms' byte code,
        constants and names.

    References
    ----------
    .. [1] numba documentation, developer reference section "Notes on
       caching": the cache does not see changes in the functions a cached
       function calls.
    """
    digest = hashlib.sha256(repr(sorted(FASTMATH)).encode())
    for module, names in terms:
        for name in names:
            code = getattr(module, name).__code__
            digest.update(code.co_code + repr(code.co_consts).encode() + repr(code.co_names).encode())
    return digest.hexdigest()
