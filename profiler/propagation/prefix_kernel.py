"""Compiled reductions over every prefix of every radial (``profiler coverage`` only; imports numba).

In a coverage map every sample ``j`` of a radial is the node end of a link
whose profile is the first ``j + 1`` samples.  The only work of such a link
that grows with its length is a handful of reductions over its interior
samples ``0 < i < j``: the worst clearance / F1 ratio
(:func:`profiler.engine.geometry.geometry_batch`), and the maxima of one Bullington
pass (:func:`profiler.propagation.diffraction_batch.diffraction_reductions`).  The worst
ratio scans, per node ``j``, only the blocks of interior samples that a
hull bound does not rule out (:func:`_ratio_hull_kernels`; O(n) memory
instead of the (n, n) numpy temporaries of the prefix batch).  The Bullington pass takes
its slopes and obstacle maxima as tangent queries on upper convex hulls
kept along the radial (O(log n) per link) and its largest ν over the
blocks of samples that a hull bound does not rule out
(:func:`_hull_kernels`); its loop over every interior sample
(``_bullington_kernel``) is kept as the reference of the tests.

There is no physics in this module: every per-sample term is a function of
`profiler.propagation.geometry` or `profiler.propagation.diffraction_batch` (the ones the numpy
reductions use), compiled here by ``numba.njit`` with its globals pointing at
the compiled versions of the terms it calls.  Everything after the
reductions (eqs. 15, 19-22, 43, the spherical Earth, the budgets) is the
numpy finish stage shared with ``profiler link``.

numba is imported by this module and :mod:`profiler.propagation.compiled` only, and this module only by
:func:`profiler.products.coverage.radials.radial_fields`; compiled code is cached on disk
(``cache=True``).

References
----------
.. [1] ITU-R P.452-18 section 4.2.1, eqs. (14), (16), (18), and Attachment 2
   section 5.1.6, eqs. (165a)-(165d), through :mod:`profiler.propagation.diffraction_batch`.
.. [2] ITU-R P.526-15 section 2 and eq. (2), through :mod:`profiler.propagation.geometry`.
"""

from __future__ import annotations

import contextlib
import hashlib
import math
import threading
from pathlib import Path

import numba
import numpy as np

from . import compiled, geometry, hull
from . import diffraction_batch as diffraction_engine
from .compiled import FASTMATH, compile_terms  # noqa: F401 - also this module's names (p1812.prefix)

_TERMS = ((geometry, ("bulge_term", "line_term", "fresnel_term", "clearance_ratio_term")),
          (diffraction_engine, ("bulge_km_term", "slope_term", "obstacle_term", "v_unit_term")),
          (hull, ("upper_hull_push", "block_tops", "pruning_unit", "nu_bound")))


def fingerprint(terms=None) -> str:
    """Digest of the terms' code and the fast-math flags: part of the kernels' cache key.

    Parameters
    ----------
    terms : tuple of (module, tuple of str), optional
        The terms a set of kernels calls (default: this module's).

    Returns
    -------
    str
        :func:`profiler.propagation.compiled.fingerprint` of ``terms``.

    References
    ----------
    .. [1] numba documentation, developer reference section "Notes on
       caching": the cache does not see changes in the functions a cached
       function calls.
    """
    return compiled.fingerprint(_TERMS if terms is None else terms)


_G, _D, _H = (compile_terms(module, names) for module, names in _TERMS)
_push, _block_tops, _pruning_unit, _nu_bound = (_H[k] for k in ("upper_hull_push", "block_tops", "pruning_unit",
                                                                  "nu_bound"))
_ratio, _bulge, _line = _G["clearance_ratio_term"], _G["bulge_term"], _G["line_term"]
_bulge_km, _slope, _obstacle, _v_unit = (_D[k] for k in ("bulge_km_term", "slope_term", "obstacle_term",
                                                          "v_unit_term"))


BLOCK = 16
"""Samples per block of the ν and clearance-ratio bounds in :func:`_hull_kernels`, :func:`_ratio_hull_kernels`."""
GROUP = 16
"""Blocks per group: a group whose bound rules it out is skipped whole (two levels of
:func:`profiler.propagation.hull.nu_bound`)."""


def _kernels(key: str):
    """The two compiled kernels (closures over ``key`` only, the terms' fingerprint, which keys their disk cache)."""

    @numba.njit(cache=True, parallel=True, nogil=True, fastmath=FASTMATH)
    def geometry_kernel(d_m, t_m, n, h_a, h_b, wavelength_m, ae_m, need, worst):   # pragma: no cover (compiled)
        _key = key   # noqa: F841 (the cache key); every link, needed or not (the arguments of the hull kernel)
        for r in numba.prange(d_m.shape[0]):
            for j in range(2, n[r]):
                best = np.inf
                for i in range(1, j):
                    best = min(best, _ratio(d_m[r, i], d_m[r, j], t_m[r, i], h_a[r], h_b[r, j], wavelength_m, ae_m))
                worst[r, j] = best

    @numba.njit(cache=True, parallel=True, nogil=True, fastmath=FASTMATH)
    def bullington_kernel(d_km, h_m, g_m, n, hts, hrs, ae_km, actual, need, nu_always, out):   # pragma: no cover
        _key = key   # noqa: F841 (the cache key); every link, needed or not (the arguments of the hull kernel)
        weight = 1.0 if actual else 0.0
        for r in numba.prange(d_km.shape[0]):
            for j in range(2, n[r]):
                d, a, b = d_km[r, j], hts[r, j], hrs[r, j]
                stim = srim = v_max = hobs = aobt = aobr = -np.inf
                for i in range(1, j):
                    di = d_km[r, i]
                    dd = d - di
                    hc = weight * g_m[r, i] + _bulge_km(di, dd, ae_km)
                    stim = max(stim, _slope(hc, a, di))
                    srim = max(srim, _slope(hc, b, dd))
                    v_max = max(v_max, _v_unit(hc, a, b, di, dd, d))
                    if actual:
                        ob = _obstacle(h_m[r, i], a, b, di, dd, d)
                        hobs = max(hobs, ob)
                        aobt = max(aobt, ob / di)
                        aobr = max(aobr, ob / dd)
                out[0, r, j], out[1, r, j], out[2, r, j] = stim, srim, v_max
                out[3, r, j], out[4, r, j], out[5, r, j] = hobs, aobt, aobr

    return geometry_kernel, bullington_kernel


@numba.njit(cache=True, fastmath=FASTMATH)
def nu_scan(x, g, s, e, d, a, b, ae_km):   # pragma: no cover (compiled)
    """Largest ν (eq. 16, times sqrt(λ)) over samples ``s`` to ``e - 1`` of the link ending at ``d`` and its first
    sample ``(value, index)``."""
    best = -np.inf
    at = s
    for i in range(s, e):
        nu = _v_unit(g[i] + _bulge_km(x[i], d - x[i], ae_km), a, b, x[i], d - x[i], d)
        if nu > best:
            best, at = nu, i
    return best, at


@numba.njit(cache=True, fastmath=FASTMATH)
def nu_argmax_blocks(x, g, tops, j, a, b, ae_km, hint):   # pragma: no cover (compiled)
    """Largest ν over the samples ``0 < i < j`` and its first sample, as the loop over every sample gives them.

    The samples after the last whole block and the block ``hint`` (the
    previous link's) are scanned first; then a group of blocks, or a block,
    whose :func:`profiler.propagation.hull.nu_bound` (``tops`` of
    :func:`profiler.propagation.hull.block_tops` over ``g - c x^2``) is below
    the best found beyond a slack holds neither a larger ν nor a tie, and is
    skipped.  ``(value, index)``; used by the Bullington pass here and the
    P.1812 horizons (:mod:`profiler.propagation.p1812.prefix`).
    """
    d = x[j]
    full = (j - 1) // BLOCK
    best, at = nu_scan(x, g, 1 + full * BLOCK, j, d, a, b, ae_km)
    if hint < full:
        v, i = nu_scan(x, g, 1 + hint * BLOCK, 1 + (hint + 1) * BLOCK, d, a, b, ae_km)
        if v > best or (v == best and i < at):
            best, at = v, i
    p = 500.0 / ae_km * d - (b - a) / d
    k = 0
    while k < full:
        size, top = _pruning_unit(tops, k, full, GROUP)
        s = 1 + k * BLOCK
        if _nu_bound(top, p, a, x[s], x[s + size * BLOCK - 1], d) < best - 1e-9 * (1.0 + abs(best)):
            k += size   # no sample of these blocks can beat the best or tie with it
            continue
        for q in range(k, k + size):
            s = 1 + q * BLOCK
            if q != hint and (size == 1 or _nu_bound(tops[0, q], p, a, x[s], x[s + BLOCK - 1], d)
                              >= best - 1e-9 * (1.0 + abs(best))):
                v, i = nu_scan(x, g, s, s + BLOCK, d, a, b, ae_km)
                if v > best or (v == best and i < at):
                    best, at = v, i
        k += size
    return best, at


SOURCE_DIGEST = hashlib.sha256(Path(__file__).read_bytes()).hexdigest()
"""Digest of this file: part of the cache key of the P.1812 kernels, which call :func:`nu_argmax_blocks`."""


def _hull_kernels(key: str):
    """The Bullington pass of every needed prefix by hull queries (closures over ``key``, the cache key).

    With ``c = 500 / a_e`` [m/km^2], ``y_i = w g_i - c d_i^2`` (``w`` 1 on
    the actual profile, 0 on the smooth one) and ``hc_i = y_i + c d d_i``
    (P.452-18 eq. (14), P.1812-8 eq. (13)), the slopes of the link ending at
    ``d`` with antennas ``a`` (site) and ``b`` (node) are

        stim_i = (y_i - a) / d_i + c d                      (eq. 14 / 13),
        srim_i = (y_i - Y) / (d - d_i) - c d,  Y = b - c d^2   (eq. 18 / 17),

    slopes from a point left of every sample, resp. right of every sample,
    to the points ``(d_i, y_i)``, which do not depend on the link: their
    maxima are tangents to the upper hull of those points, kept along the
    radial (:func:`profiler.propagation.hull.upper_hull_push`).  The obstacle
    height ``o_i = h_i - a - (b - a) d_i / d`` (eq. 165d) is a linear
    function of ``(d_i, h_i)``, and ``o_i / d_i = (h_i - a) / d_i - (b - a) / d``,
    ``o_i / (d - d_i) = (h_i - b) / (d - d_i) + (b - a) / d`` (eqs. 165a-c) are
    tangents from the two ends: three queries on the upper hull of
    ``(d_i, h_i)``.  Along a hull's vertices each of these rises then falls:
    a binary search on the terms themselves finds the maximum.

    ν (eq. 16) is ``N_i W(d_i)`` with ``N_i = y_i + p d_i - a``,
    ``p = c d - (b - a) / d``, linear in ``(d_i, y_i)``, and
    ``W(x) = sqrt(0.002 d / (x (d - x)))``: no tangent.  It enters the loss
    only on a line-of-sight pass (``stim < Str`` of eq. (15), or
    ``stim + srim <= 0``; eqs. (17), (19)-(21)), so it is taken there only
    (beyond a rounding slack; everywhere with ``nu_always``, the knife-edge
    method).  On the actual profile the blocks of samples that
    :func:`~profiler.propagation.hull.nu_bound` does not rule out are scanned, first the block of the
    previous link's largest ν.  On the smooth profile (every height 0) with
    ``a, b >= 0``, ν rises then falls along the samples: with
    ``t = sqrt(x / (d - x))`` (increasing in x),
    ``ν / sqrt(0.002 d) = f(t) = A t / (1 + t^2) - α / t - β t`` with
    ``A = c d``, ``α = a / d``, ``β = b / d``, and
    ``t^2 f'(t) = m(s) = A s (1 - s) / (1 + s)^2 - β s + α`` (``s = t^2``),
    whose derivative ``A (1 - 3 s) / (1 + s)^3 - β`` falls on ``s < 1`` and
    is negative beyond ``1 / 3``: ``m`` starts at ``α >= 0``, rises at most
    once and then falls, so ``f'`` changes sign at most once, from + to -.
    A climb on the terms finds the largest (a binary search after 8 steps),
    from the sample next to the root of ``m`` (four Newton steps on the
    cubic ``(1 + s)^2 m(s)`` from the previous link's root: the peak moves
    with the link's antenna heights, and a climb from the previous link's
    peak took 11 steps or more on 42 % of the benchmark's links, 6.5 % from
    this start); its slopes are the concave (or convex) functions of
    :func:`smooth_slope` (O(log n)).

    Only the links with ``need[r, j]`` are reduced (the samples some output
    pixel takes); the hulls are kept over every sample.
    """

    @numba.njit(cache=True, fastmath=FASTMATH)
    def term(kind, i, x, wg, h, d, a, b, ae_km):   # pragma: no cover (compiled)
        di = x[i]
        dd = d - di
        if kind == 0:   # the terms of the loop in bullington_kernel, as they are written there
            return _slope(wg[i] + _bulge_km(di, dd, ae_km), a, di)
        if kind == 1:
            return _slope(wg[i] + _bulge_km(di, dd, ae_km), b, dd)
        ob = _obstacle(h[i], a, b, di, dd, d)
        if kind == 2:
            return ob
        if kind == 3:
            return ob / di
        return ob / dd

    @numba.njit(cache=True, fastmath=FASTMATH)
    def search(kind, vertex, m, x, wg, h, d, a, b, ae_km, guess):   # pragma: no cover (compiled)
        # ``guess``: the vertex (sample index) of the previous link's largest; when it is still a vertex and
        # neither neighbour on the hull is larger it is the largest again (the terms rise then fall along the
        # vertices, equal values only at the top); else a binary search
        q = guess[kind]
        if 0 <= q < m and vertex[q] == guess[kind + 5]:
            here = term(kind, vertex[q], x, wg, h, d, a, b, ae_km)
            if (q == 0 or term(kind, vertex[q - 1], x, wg, h, d, a, b, ae_km) <= here) and \
                    (q == m - 1 or term(kind, vertex[q + 1], x, wg, h, d, a, b, ae_km) <= here):
                return here
        lo, hi = 0, m - 1
        while lo < hi:
            mid = (lo + hi) // 2
            if term(kind, vertex[mid + 1], x, wg, h, d, a, b, ae_km) > term(kind, vertex[mid], x, wg, h, d, a, b,
                                                                               ae_km):
                lo = mid + 1
            else:
                hi = mid
        guess[kind], guess[kind + 5] = lo, vertex[lo]
        return term(kind, vertex[lo], x, wg, h, d, a, b, ae_km)

    @numba.njit(cache=True, fastmath=FASTMATH)
    def smooth_nu(x, j, d, a, b, ae_km, s0):   # pragma: no cover (compiled)
        # the smooth profile with a, b >= 0: ν rises then falls along the samples (see _hull_kernels), so a climb
        # on the terms ends on the largest, (ν, s of the continuous peak); after 8 steps a binary search on the
        # terms.  The climb starts next to the continuous peak, the root of (1 + s)^2 m(s) = -β s^3 +
        # (α - A - 2β) s^2 + (A - β + 2α) s + α (s = x / (d - x)), four Newton steps from the previous link's
        # root ``s0`` (a start only: the climb decides)
        big_a, alpha, beta = 500.0 / ae_km * d, a / d, b / d
        c2, c1 = alpha - big_a - 2.0 * beta, big_a - beta + 2.0 * alpha
        root = s0
        for _ in range(4):   # Newton's method on the cubic from the previous link's root (a start, nothing more)
            slope = (-3.0 * beta * root + 2.0 * c2) * root + c1
            value = ((-beta * root + c2) * root + c1) * root + alpha
            root = root - value / slope if slope < 0.0 else 2.0 * root   # rising: the root is further on
            root = min(max(root, 1e-6), 1e6)
        q = min(max(int(d * root / (1.0 + root) / x[1] + 0.5), 1), j - 1) if x[1] > 0.0 else 1
        here = _v_unit(_bulge_km(x[q], d - x[q], ae_km), a, b, x[q], d - x[q], d)
        for _ in range(8):
            if q + 1 <= j - 1:
                up = _v_unit(_bulge_km(x[q + 1], d - x[q + 1], ae_km), a, b, x[q + 1], d - x[q + 1], d)
                if up > here:
                    q, here = q + 1, up
                    continue
            if q - 1 >= 1:
                down = _v_unit(_bulge_km(x[q - 1], d - x[q - 1], ae_km), a, b, x[q - 1], d - x[q - 1], d)
                if down > here:
                    q, here = q - 1, down
                    continue
            return here, root
        lo, hi = 1, j - 1
        while lo < hi:
            mid = (lo + hi) // 2
            if _v_unit(_bulge_km(x[mid + 1], d - x[mid + 1], ae_km), a, b, x[mid + 1], d - x[mid + 1], d) > \
                    _v_unit(_bulge_km(x[mid], d - x[mid], ae_km), a, b, x[mid], d - x[mid], d):
                lo = mid + 1
            else:
                hi = mid
        return _v_unit(_bulge_km(x[lo], d - x[lo], ae_km), a, b, x[lo], d - x[lo], d), root

    @numba.njit(cache=True, fastmath=FASTMATH)
    def smooth_slope(kind, x, wg, h, j, d, a, b, ae_km):   # pragma: no cover (compiled)
        # the smooth profile (all heights 0): stim_i = c (d - x_i) - a / x_i (+ rounding) is concave in x_i for
        # a > 0 (largest next to x = sqrt(a / c)) and convex otherwise (largest at an end); srim_i = c (d + x_i) -
        # b / (d - x_i) likewise about x = d - sqrt(b / c): the largest is one of four samples
        c = 500.0 / ae_km
        end = a if kind == 0 else b
        best = max(term(kind, 1, x, wg, h, d, a, b, ae_km), term(kind, j - 1, x, wg, h, d, a, b, ae_km))
        if end > 0.0:
            target = math.sqrt(end / c) if kind == 0 else d - math.sqrt(end / c)
            # the first sample at or beyond the target (the last if none is): on equal steps (a coverage
            # radial) the guess ceil(target / x[1]) is checked, else a binary search on the distances
            lo = min(max(int(math.ceil(target / x[1])), 1), j - 1) if x[1] > 0.0 and target < x[j - 1] else j - 1
            if not ((x[lo] >= target or lo == j - 1) and (lo == 1 or x[lo - 1] < target)):
                lo, hi = 1, j - 1
                while lo < hi:
                    mid = (lo + hi) // 2
                    if x[mid] < target:
                        lo = mid + 1
                    else:
                        hi = mid
            best = max(best, term(kind, lo, x, wg, h, d, a, b, ae_km))
            if lo > 1:
                best = max(best, term(kind, lo - 1, x, wg, h, d, a, b, ae_km))
        return best

    @numba.njit(cache=True, parallel=True, nogil=True, fastmath=FASTMATH)
    def bullington_hull_kernel(d_km, h_m, g_m, n, hts, hrs, ae_km, actual, need, nu_always, out):   # pragma: no cover
        _key = key   # noqa: F841 (the cache key)
        weight = 1.0 if actual else 0.0
        c = 500.0 / ae_km
        for r in numba.prange(d_km.shape[0]):
            x, h = d_km[r], h_m[r]
            wg = weight * g_m[r]
            y = wg - c * x * x   # the heights less the parabola: the same for every node
            size = max(n[r], 1)
            hy, hh = np.empty(size, np.int64), np.empty(size, np.int64)
            hy_x, hy_y, hh_x, hh_y = np.empty(size), np.empty(size), np.empty(size), np.empty(size)
            tops = _block_tops(y, n[r], BLOCK, GROUP)
            my = mh = 0
            hint = 0
            guess = np.full(10, -1, np.int64)   # per query kind: hull position, then sample index, of the last largest
            root = 1.0   # the smooth pass's ν peak of the last link (s = x / (d - x) of the continuous one)
            for j in range(2, n[r]):
                i = j - 1
                if actual:
                    my = _push(x, y, hy, hy_x, hy_y, my, i)
                    mh = _push(x, h, hh, hh_x, hh_y, mh, i)
                if not need[r, j]:
                    continue
                d, a, b = x[j], hts[r, j], hrs[r, j]
                if actual:
                    out[0, r, j] = search(0, hy, my, x, wg, h, d, a, b, ae_km, guess)
                    out[1, r, j] = search(1, hy, my, x, wg, h, d, a, b, ae_km, guess)
                    for kind in range(2, 5):
                        out[kind + 1, r, j] = search(kind, hh, mh, x, wg, h, d, a, b, ae_km, guess)
                else:
                    out[0, r, j] = smooth_slope(0, x, wg, h, j, d, a, b, ae_km)
                    out[1, r, j] = smooth_slope(1, x, wg, h, j, d, a, b, ae_km)
                    out[3, r, j] = out[4, r, j] = out[5, r, j] = -np.inf
                s_tr = (b - a) / d   # eq. (15): ν is used on a line-of-sight pass only (eqs. 17, 19-21)
                slack = 1e-9 * (1.0 + abs(s_tr) + abs(out[0, r, j]) + abs(out[1, r, j]))
                if not nu_always and out[0, r, j] > s_tr + slack and out[0, r, j] + out[1, r, j] > slack:
                    out[2, r, j] = np.nan   # trans-horizon beyond rounding: no ν
                    continue
                if not actual and a >= 0.0 and b >= 0.0:
                    out[2, r, j], root = smooth_nu(x, j, d, a, b, ae_km, root)
                else:
                    out[2, r, j], at = nu_argmax_blocks(x, wg, tops, j, a, b, ae_km, hint)
                    hint = (at - 1) // BLOCK

    return bullington_hull_kernel


HULL_SCAN = 48
"""Largest hull (vertices) whose scan the clearance-ratio kernel tries before the blocks."""


def _ratio_hull_kernels(key: str):
    """The worst clearance / F1 ratio of every needed prefix over the blocks a bound keeps (closure over ``key``).

    With ``y_i = t_i - d_i^2 / (2 a_e)`` [m], the height of sample ``i``
    above the antennas' line, ``N_i = t_i + d_i (d - d_i) / (2 a_e) - L_i =
    y_i + (d / (2 a_e) - (b - a) / d) d_i - a``, is linear in ``(d_i, y_i)``
    and the ratio is ``-N_i sqrt(d / (λ d_i (d - d_i)))`` (P.526-15 eq. (2),
    :func:`profiler.propagation.geometry.clearance_ratio_term`): a block whose
    :func:`~profiler.propagation.hull.nu_bound` (a lower bound of its ratios, times a constant) shows it
    cannot hold a smaller ratio is skipped.  The blocks are scanned first
    where the previous link's worst ratio was, so the bound prunes from the
    start; the samples after the last whole block are always scanned.

    An obstructed link (worst ratio < 0, some ``N_i > 0``) has its worst
    ratio at a vertex of the upper hull of the points ``(d_i, y_i)`` (kept
    along the radial): a point below the hull has a point of a hull edge
    above it with a larger ``N`` and the same ``W``, and along an edge
    ``N W`` is ``(α x + β) / sqrt(x (d - x))`` times a constant, whose
    derivative has the sign of ``x (α d / 2 + β) - β d / 2``: an interior
    maximum needs ``β < 0`` and ``α d / 2 + β < 0``, and inside ``(0, d)``
    (``α < -β / d``) its value has the sign of ``α d + β < 0``.  So a
    positive largest ``N W`` is at an edge's end.  When the hull has at most
    :data:`HULL_SCAN` vertices they are scanned first; a negative worst
    among them is the link's, otherwise the blocks are.
    """

    @numba.njit(cache=True, fastmath=FASTMATH)
    def ratio_scan(x, t, s, e, d, a, b, wavelength_m, ae_m):   # pragma: no cover (compiled)
        best = np.inf
        for i in range(s, e):
            best = min(best, _ratio(x[i], d, t[i], a, b, wavelength_m, ae_m))
        return best

    @numba.njit(cache=True, fastmath=FASTMATH)
    def ratio_min(x, t, tops, j, d, a, b, wavelength_m, ae_m, hint):   # pragma: no cover (compiled)
        scale = math.sqrt(500.0 / wavelength_m)   # nu_bound's W (0.002) -> sqrt(d / (λ x (d - x)))
        full = (j - 1) // BLOCK
        best, at = ratio_scan(x, t, 1 + full * BLOCK, j, d, a, b, wavelength_m, ae_m), full
        if hint < full:
            v = ratio_scan(x, t, 1 + hint * BLOCK, 1 + (hint + 1) * BLOCK, d, a, b, wavelength_m, ae_m)
            if v < best:
                best, at = v, hint
        p = d / (2.0 * ae_m) - (b - a) / d
        k = 0
        while k < full:
            size, top = _pruning_unit(tops, k, full, GROUP)
            s = 1 + k * BLOCK
            if -scale * _nu_bound(top, p, a, x[s], x[s + size * BLOCK - 1], d) > best + 1e-9 * (1.0 + abs(best)):
                k += size   # no ratio of these blocks is below the worst found
                continue
            k_end = k + size
            while k < k_end:
                s = 1 + k * BLOCK
                if k != hint and (size == 1 or -scale * _nu_bound(tops[0, k], p, a, x[s], x[s + BLOCK - 1], d)
                                  <= best + 1e-9 * (1.0 + abs(best))):
                    v = ratio_scan(x, t, s, s + BLOCK, d, a, b, wavelength_m, ae_m)
                    if v < best:
                        best, at = v, k
                k += 1
        return best, at

    @numba.njit(cache=True, parallel=True, nogil=True, fastmath=FASTMATH)
    def geometry_hull_kernel(d_m, t_m, n, h_a, h_b, wavelength_m, ae_m, need, worst):   # pragma: no cover
        _key = key   # noqa: F841 (the cache key)
        for r in numba.prange(d_m.shape[0]):
            x, t, a = d_m[r], t_m[r], h_a[r]
            y = t - x * x / (2.0 * ae_m)   # the heights less the parabola: the same for every node
            tops = _block_tops(y, n[r], BLOCK, GROUP)
            vertex = np.empty(max(n[r], 1), np.int64)
            vx, vy = np.empty(max(n[r], 1)), np.empty(max(n[r], 1))
            m = 0
            hint = 0
            for j in range(2, n[r]):
                m = _push(x, y, vertex, vx, vy, m, j - 1)
                if not need[r, j]:
                    continue
                d, b = x[j], h_b[r, j]
                if m <= HULL_SCAN:   # an obstructed link's worst ratio is at a hull vertex (see above)
                    best = np.inf
                    for q in range(m):
                        best = min(best, _ratio(x[vertex[q]], d, t[vertex[q]], a, b, wavelength_m, ae_m))
                    if best < 0.0:
                        worst[r, j] = best
                        continue
                worst[r, j], hint = ratio_min(x, t, tops, j, d, a, b, wavelength_m, ae_m, hint)

    return geometry_hull_kernel


_geometry_kernel, _bullington_kernel = _kernels(fingerprint(_TERMS))
_geometry_hull_kernel = _ratio_hull_kernels(fingerprint(_TERMS))
_bullington_hull_kernel = _hull_kernels(fingerprint(_TERMS))
LAUNCH = threading.Lock()
"""Held by a kernel launch under numba's workqueue threading layer (:func:`launch`)."""


@contextlib.contextmanager
def launch():
    """Guard one kernel launch: concurrent launches from several threads where numba's threading layer allows them.

    The sector threads of a coverage run (and the threads of a Dask worker)
    launch the kernels at the same time under the OpenMP and TBB layers;
    the workqueue layer aborts on concurrent launches, so under it (and
    before the first launch has chosen the layer) one launch at a time
    holds :data:`LAUNCH`.  The layer is read at every launch (numba keeps
    it): no state here.

    References
    ----------
    .. [1] numba documentation, user manual section "The Threading Layers"
       (selecting a threading layer for safe parallel execution: the tbb and
       omp layers are thread safe, workqueue is not).
    """
    try:
        concurrent = numba.threading_layer() != "workqueue"
    except ValueError:   # no parallel launch yet in this process: the first one chooses the layer
        concurrent = False
    if concurrent:
        yield
        return
    with LAUNCH:
        yield


def worst_ratio_prefixes(distance_m, terrain_m, n, site_amsl_m, node_amsl_m, wavelength_m, effective_radius_m,
                         need=None):
    """Worst clearance / F1 ratio of the link to every (needed) sample of every radial.

    Parameters
    ----------
    distance_m, terrain_m : ndarray, shape (R, N)
        Radial profiles [m], [m AMSL].
    n : ndarray of int, shape (R,)
        Number of samples per radial (a count).
    site_amsl_m : ndarray, shape (R,)
        Site antenna [m AMSL].
    node_amsl_m : ndarray, shape (R, N)
        Node antenna at every sample [m AMSL].
    wavelength_m, effective_radius_m : float
        Wavelength and effective Earth radius [m].
    need : ndarray of bool, shape (R, N), optional
        The links to reduce (default every one).

    Returns
    -------
    ndarray, shape (R, N)
        Minimum of :func:`profiler.propagation.geometry.clearance_ratio_term` over
        ``0 < i < j`` at ``[r, j]`` [-] (NaN for ``j < 2``, beyond ``n`` or not needed).
        Not where it is: tracking the index would keep the loop from vectorizing.

    References
    ----------
    .. [1] ITU-R P.526-15 section 2 and eq. (2).
    """
    shape = np.shape(distance_m)
    worst = np.full(shape, np.nan)
    with launch():
        _geometry_hull_kernel(np.ascontiguousarray(distance_m, dtype=float),
                              np.ascontiguousarray(terrain_m, dtype=float), np.asarray(n, dtype=np.int64),
                              np.asarray(site_amsl_m, dtype=float), np.ascontiguousarray(node_amsl_m, dtype=float),
                              float(wavelength_m), float(effective_radius_m), _need(need, shape), worst)
    return worst


def _need(need, shape):
    """The mask of the links to reduce as the kernels take it (every link when None)."""
    if need is None:
        return np.ones(shape, dtype=np.bool_)
    return np.ascontiguousarray(need, dtype=np.bool_)


def bullington_prefixes(distance_km, height_m, n, hts_m, hrs_m, effective_radius_km, actual,
                        bullington_height_m=None, need=None, nu_always=False):
    """One Bullington pass over every prefix of every radial: the reductions of ``diffraction_reductions``.

    Parameters
    ----------
    distance_km, height_m : ndarray, shape (R, N)
        Radial profiles [km from the site], [m AMSL].
    n : ndarray of int, shape (R,)
        Number of samples per radial (a count).
    hts_m, hrs_m : ndarray, shape (R, N)
        Antenna heights of the link ending at each sample [m AMSL].
    effective_radius_km : float
        Effective Earth radius [km].
    actual : bool
        Terrain + bulge (the actual profile) or the bulge alone (the smooth profile).
    bullington_height_m : ndarray, shape (R, N), optional
        Heights of the Bullington pass over the actual profile [m AMSL]
        (default ``height_m``; P.1812-8: g = h + R at the interior points);
        the obstacle heights (eqs. 165a-d) stay those of ``height_m``.
    need : ndarray of bool, shape (R, N), optional
        The links to reduce (default every one; the others are left unset).
    nu_always : bool
        ``v_unit`` of every link (the knife-edge method); by default only of
        the links whose pass is line of sight (the only ones whose loss uses
        it; NaN elsewhere).

    Returns
    -------
    dict of ndarray, shape (R, N)
        ``stim``, ``srim`` [m/km], ``v_unit`` [m^0.5] and, with ``actual``,
        ``hobs`` [m], ``alpha_obt``, ``alpha_obr`` [m/km] of the link ending
        at ``[r, j]`` (set for ``2 <= j < n[r]`` where ``need``: the tables
        are not filled elsewhere); no ``v_index`` (the
        knife-edge sample, which a coverage map does not show).

    References
    ----------
    .. [1] ITU-R P.452-18 eqs. (14), (16), (18), (165a)-(165d).

    Notes
    -----
    Hull queries and a pruned ν (:func:`_hull_kernels`); the loop over every
    interior sample, ``_bullington_kernel``, is the reference of
    ``tests/propagation/test_hull.py``.
    """
    out = np.empty((6,) + np.shape(distance_km))   # every needed link's values are written (ν NaN where not taken)
    h = np.ascontiguousarray(height_m, dtype=float)
    g = h if bullington_height_m is None else np.ascontiguousarray(bullington_height_m, dtype=float)
    with launch():
        _bullington_hull_kernel(np.ascontiguousarray(distance_km, dtype=float), h, g, np.asarray(n, dtype=np.int64),
                                np.ascontiguousarray(hts_m, dtype=float), np.ascontiguousarray(hrs_m, dtype=float),
                                float(effective_radius_km), bool(actual), _need(need, out.shape[1:]),
                                bool(nu_always), out)
    keys = ("stim", "srim", "v_unit") + (("hobs", "alpha_obt", "alpha_obr") if actual else ())
    return {k: out[i] for i, k in enumerate(keys)}


def prefix_reduce(distance_km, height_m, n, rr, jj, effective_radius_km, bullington_height_m=None,
                  nu_always=False):
    """The ``reduce`` of ``diffraction_reductions`` for the links to samples ``jj`` of radials ``rr``.

    Parameters
    ----------
    distance_km, height_m, n : ndarray
        The radials [km from the site], [m AMSL] and their sample counts, as
        :func:`bullington_prefixes`.
    rr, jj : ndarray of int, shape (L,)
        Radial and node sample of every link (``2 <= jj < n[rr]``).
    effective_radius_km : float
        Effective Earth radius [km].
    bullington_height_m : ndarray, shape (R, N), optional
        Heights of the Bullington pass [m AMSL] (see :func:`bullington_prefixes`).
    nu_always : bool
        ``v_unit`` of every link, not only of the line-of-sight passes (see :func:`bullington_prefixes`).

    Returns
    -------
    callable
        ``reduce(actual, hts, hrs) -> dict`` of arrays (L,), see
        :func:`profiler.propagation.diffraction_batch.diffraction_reductions`:
        :func:`bullington_prefixes` and, with ``actual``, the sums of
        :func:`profiler.propagation.diffraction_batch.smooth_sum_terms` of every
        prefix (cumulative sums along the radial).

    References
    ----------
    .. [1] ITU-R P.452-18 eqs. (14), (16), (18), (161)-(162), (165a)-(165d).
    """
    d_km, t = np.asarray(distance_km, dtype=float), np.asarray(height_m, dtype=float)
    v1_terms, v2_terms = diffraction_engine.smooth_sum_terms(np.diff(d_km, axis=1), d_km[:, :-1], d_km[:, 1:],
                                                             t[:, :-1], t[:, 1:])
    v1, v2 = np.cumsum(v1_terms, axis=1), np.cumsum(v2_terms, axis=1)   # eqs. (161)-(162) of every prefix

    rr, jj = np.asarray(rr, dtype=np.int64), np.asarray(jj, dtype=np.int64)
    flat, flat_sums = rr * d_km.shape[1] + jj, rr * v1.shape[1] + jj - 1   # flat indices: take, not [rr, jj]
    need = np.zeros(d_km.shape, dtype=np.bool_)
    need.reshape(-1)[flat] = True   # only these links are reduced

    def reduce(actual, hts, hrs):
        full_a, full_b = np.empty(d_km.shape), np.empty(d_km.shape)   # read at the needed links only
        full_a.reshape(-1)[flat], full_b.reshape(-1)[flat] = hts, hrs
        red = bullington_prefixes(d_km, t, n, full_a, full_b, effective_radius_km, actual, bullington_height_m, need,
                                  nu_always)
        res = {k: v.reshape(-1).take(flat) for k, v in red.items()}
        if actual:
            res.update(v1=v1.reshape(-1).take(flat_sums), v2=v2.reshape(-1).take(flat_sums))
        return res

    return reduce
