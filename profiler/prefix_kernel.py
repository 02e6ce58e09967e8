"""Compiled reductions over every prefix of every radial (``profiler coverage`` only; imports numba).

In a coverage map every sample ``j`` of a radial is the node end of a link
whose profile is the first ``j + 1`` samples.  The only work of such a link
that grows with its length is a handful of reductions over its interior
samples ``0 < i < j``: the worst clearance / F1 ratio and where it is
(:func:`profiler.engine.geometry_batch`), and the maxima of one Bullington
pass (:func:`profiler.diffraction.diffraction_reductions`).  The two kernels
here loop radial x node index ``j`` x interior sample ``i`` with running
maxima/minima, so a radial costs O(n^2) arithmetic and O(n) memory instead
of the (n, n) numpy temporaries of the prefix batch.

There is no physics in this module: every per-sample term is a function of
:mod:`profiler.geometry` or :mod:`profiler.diffraction` (the ones the numpy
reductions use), compiled here by ``numba.njit`` with its globals pointing at
the compiled versions of the terms it calls.  Everything after the
reductions (eqs. 15, 19-22, 43, the spherical Earth, the budgets) is the
numpy finish stage shared with ``profiler link``.

numba is imported by this module only, and this module only by
:func:`profiler.coverage_map.radial_fields`; compiled code is cached on disk
(``cache=True``).

References
----------
.. [1] ITU-R P.452-18 section 4.2.1, eqs. (14), (16), (18), and Attachment 2
   section 5.1.6, eqs. (165a)-(165d), through :mod:`profiler.diffraction`.
.. [2] ITU-R P.526-15 section 2 and eq. (2), through :mod:`profiler.geometry`.
"""

from __future__ import annotations

import math
import types

import numba
import numpy as np

from . import diffraction, geometry


def _compile_terms(module, names) -> dict:
    """``numba.njit`` copies of ``module``'s term functions, each calling the compiled copies of the others.

    ``names`` are in dependency order (a term after the terms it calls).
    """
    space = {"np": np, "math": math}
    for name in names:
        f = getattr(module, name)
        copy = types.FunctionType(f.__code__, space, name, f.__defaults__, f.__closure__)
        copy.__module__, copy.__qualname__ = module.__name__, f.__qualname__
        space[name] = numba.njit(cache=True)(copy)
    return space


_G = _compile_terms(geometry, ("bulge_term", "line_term", "fresnel_term", "clearance_ratio_term"))
_D = _compile_terms(diffraction, ("bulge_km_term", "slope_term", "obstacle_term", "v_unit_term"))
_ratio = _G["clearance_ratio_term"]
_bulge_km, _slope, _obstacle, _v_unit = (_D[k] for k in ("bulge_km_term", "slope_term", "obstacle_term",
                                                          "v_unit_term"))


@numba.njit(cache=True, parallel=True)
def _geometry_kernel(d_m, t_m, n, h_a, h_b, wavelength_m, ae_m, worst, where):   # pragma: no cover (compiled)
    for r in numba.prange(d_m.shape[0]):
        for j in range(2, n[r]):
            best, at = np.inf, 1
            for i in range(1, j):
                q = _ratio(d_m[r, i], d_m[r, j], t_m[r, i], h_a[r], h_b[r, j], wavelength_m, ae_m)
                if q < best:
                    best, at = q, i
            worst[r, j], where[r, j] = best, at


@numba.njit(cache=True, parallel=True)
def _bullington_kernel(d_km, h_m, n, hts, hrs, ae_km, actual, out):   # pragma: no cover (compiled)
    weight = 1.0 if actual else 0.0
    for r in numba.prange(d_km.shape[0]):
        for j in range(2, n[r]):
            d, a, b = d_km[r, j], hts[r, j], hrs[r, j]
            stim = srim = v_max = hobs = aobt = aobr = -np.inf
            at = 1
            for i in range(1, j):
                di = d_km[r, i]
                dd = d - di
                hc = weight * h_m[r, i] + _bulge_km(di, dd, ae_km)
                stim = max(stim, _slope(hc, a, di))
                srim = max(srim, _slope(hc, b, dd))
                v = _v_unit(hc, a, b, di, dd, d)
                if v > v_max:
                    v_max, at = v, i
                if actual:
                    ob = _obstacle(h_m[r, i], a, b, di, dd, d)
                    hobs = max(hobs, ob)
                    aobt = max(aobt, ob / di)
                    aobr = max(aobr, ob / dd)
            out[0, r, j], out[1, r, j], out[2, r, j], out[3, r, j] = stim, srim, v_max, at
            out[4, r, j], out[5, r, j], out[6, r, j] = hobs, aobt, aobr


def worst_ratio_prefixes(distance_m, terrain_m, n, site_amsl_m, node_amsl_m, wavelength_m, effective_radius_m):
    """Worst clearance / F1 ratio of the link to every sample of every radial, and its sample index.

    Parameters
    ----------
    distance_m, terrain_m : ndarray, shape (R, N)
        Radial profiles [m], [m AMSL].
    n : ndarray of int, shape (R,)
        Samples per radial.
    site_amsl_m : ndarray, shape (R,)
        Site antenna [m AMSL].
    node_amsl_m : ndarray, shape (R, N)
        Node antenna at every sample [m AMSL].
    wavelength_m, effective_radius_m : float
        [m].

    Returns
    -------
    (ndarray, ndarray), shape (R, N)
        Minimum of :func:`profiler.geometry.clearance_ratio_term` over
        ``0 < i < j`` at ``[r, j]`` (NaN for ``j < 2`` or beyond ``n``), and
        the ``i`` where it is (the first of equal values, as ``numpy.argmin``).

    References
    ----------
    ITU-R P.526-15 section 2 and eq. (2).
    """
    shape = np.shape(distance_m)
    worst, where = np.full(shape, np.nan), np.zeros(shape, dtype=np.int64)
    _geometry_kernel(np.ascontiguousarray(distance_m, dtype=float), np.ascontiguousarray(terrain_m, dtype=float),
                     np.asarray(n, dtype=np.int64), np.asarray(site_amsl_m, dtype=float),
                     np.ascontiguousarray(node_amsl_m, dtype=float), float(wavelength_m), float(effective_radius_m),
                     worst, where)
    return worst, where


def bullington_prefixes(distance_km, height_m, n, hts_m, hrs_m, effective_radius_km, actual):
    """One Bullington pass over every prefix of every radial: the reductions of ``diffraction_reductions``.

    Parameters
    ----------
    distance_km, height_m : ndarray, shape (R, N)
        Radial profiles [km from the site], [m AMSL].
    n : ndarray of int, shape (R,)
        Samples per radial.
    hts_m, hrs_m : ndarray, shape (R, N)
        Antenna heights of the link ending at each sample [m AMSL].
    effective_radius_km : float
        [km].
    actual : bool
        Terrain + bulge (the actual profile) or the bulge alone (the smooth profile).

    Returns
    -------
    dict of ndarray, shape (R, N)
        ``stim``, ``srim``, ``v_unit``, ``v_index`` and, with ``actual``,
        ``hobs``, ``alpha_obt``, ``alpha_obr`` of the link ending at
        ``[r, j]`` (defined for ``2 <= j < n[r]``).

    References
    ----------
    ITU-R P.452-18 eqs. (14), (16), (18), (165a)-(165d).
    """
    out = np.full((7,) + np.shape(distance_km), np.nan)
    _bullington_kernel(np.ascontiguousarray(distance_km, dtype=float), np.ascontiguousarray(height_m, dtype=float),
                       np.asarray(n, dtype=np.int64), np.ascontiguousarray(hts_m, dtype=float),
                       np.ascontiguousarray(hrs_m, dtype=float), float(effective_radius_km), bool(actual), out)
    keys = ("stim", "srim", "v_unit", "v_index") + (("hobs", "alpha_obt", "alpha_obr") if actual else ())
    res = {k: out[i] for i, k in enumerate(keys)}
    res["v_index"] = np.nan_to_num(res["v_index"]).astype(np.int64)
    return res
