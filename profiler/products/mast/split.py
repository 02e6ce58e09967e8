"""Cheapest split of the mast solver: masts at A and B with the smallest sum.

With the clearance criteria only, the split is a two-variable linear
programme solved exactly on its convex lower envelope
(:func:`cheapest_split_m`); with the margin criterion too, a grid over the
mast at A with the lowest mast at B for each, refined by a golden-section
search (:func:`cheapest_split`).

References
----------
.. [1] ITU-R P.526-15 (10/2019), section 2: the line of sight is linear in
   both antenna heights, so each sample is one constraint line.
.. [2] Linear programming in two variables: the optimum lies on the lower
   envelope of the constraint lines (common practice); golden-section
   search for the minimum of a unimodal function (common practice).
"""

from __future__ import annotations

import math

import numpy as np

from .clearance import lowest_b_clearance_m, round_up_mm
from .search import bisect_up, height_grid

__all__ = ["cheapest_split_m", "cheapest_split", "golden_section"]


def golden_section(fn, lo, hi, tol_m, rel_tol=0.0):
    """Golden-section search for the minimum of a unimodal function on [lo, hi].

    Parameters
    ----------
    fn : callable
        The function of a height [m] to minimise.
    lo, hi : float
        Search interval [m].
    tol_m : float
        Stop when the interval is at most ``max(tol_m, rel_tol * hi)`` wide [m].
    rel_tol : float, optional
        Relative part of the stopping width [-].

    Returns
    -------
    lo, hi : float
        The final interval [m].
    (p, fp), (q, fq) : tuple of float
        Its two interior points and their function values.

    References
    ----------
    J. Kiefer (1953), sequential minimax search for a maximum; the golden
    ratio (sqrt(5) - 1) / 2 shrinks the interval per evaluation (common practice).
    """
    golden = (math.sqrt(5.0) - 1.0) / 2.0
    p, q = hi - golden * (hi - lo), lo + golden * (hi - lo)
    fp, fq = fn(p), fn(q)
    while hi - lo > max(tol_m, rel_tol * hi):
        if fp <= fq:
            hi, q, fq = q, p, fp
            p = hi - golden * (hi - lo)
            fp = fn(p)
        else:
            lo, p, fp = p, q, fq
            q = lo + golden * (hi - lo)
            fq = fn(q)
    return lo, hi, (p, fp), (q, fq)


def cheapest_split_m(distance_m, target_m, ground_a_m, ground_b_m, max_mast_m):
    """Masts at A and B with the smallest sum that lift the line of sight to the target.

    Minimises m_a + m_b subject to (1 - x_i) m_a + x_i m_b >= c_i with
    c_i = t_i - ground_a (1 - x_i) - ground_b x_i at every interior sample
    (and every row of a 2-D ``target_m``), 0 <= m_a, m_b <= max_mast_m.
    For a given m_a the lowest feasible m_b is the upper envelope
    f(m_a) = max(0, max_i (c_i - (1 - x_i) m_a) / x_i) of straight lines,
    a convex, non-increasing function, so m_a + f(m_a) is convex and a
    golden-section search finds its minimum to 1e-9 m.

    Parameters
    ----------
    distance_m : array_like
        Distance of each sample from A [m].
    target_m : array_like
        Target height per sample [m AMSL]; 2-D (criteria x samples) to
        impose several criteria at once.
    ground_a_m, ground_b_m : float
        Ground height at A and B [m AMSL].
    max_mast_m : float
        Highest allowed mast at either end [m].

    Returns
    -------
    tuple of float or None
        ``(mast_a_m, mast_b_m)`` unrounded, or None when no pair in the
        allowed range works.

    References
    ----------
    ITU-R P.526-15 section 2; linear programming in two variables: the
    optimum lies on the lower envelope of the constraint lines (common
    practice).
    """
    d = np.asarray(distance_m, dtype=float)
    t = np.atleast_2d(np.asarray(target_m, dtype=float))[:, 1:-1].ravel()
    x = np.tile(d[1:-1] / d[-1], t.size // (d.size - 2))
    c = t - ground_a_m * (1.0 - x) - ground_b_m * x

    def f(m_a):
        return max(0.0, float(np.max((c - (1.0 - x) * m_a) / x)))

    a_min = max(0.0, float(np.max((c - x * max_mast_m) / (1.0 - x))))
    if a_min > max_mast_m:
        return None
    lo, hi, _, _ = golden_section(lambda m: m + f(m), a_min, float(max_mast_m), 1e-9, 1e-9)
    m_a = 0.5 * (lo + hi)
    for cand in (a_min, float(max_mast_m)):  # the ends of the range, in case the minimum sits there
        if cand + f(cand) < m_a + f(m_a):
            m_a = cand
    return m_a, f(m_a)


def cheapest_split(d, g_a, g_b, clearance_req, max_mast_m, step, min_margin_db, margin_fn):
    """Masts (m_a, m_b) minimising m_a + m_b under all criteria, or None.

    Clearance only: exact (:func:`cheapest_split_m`).  With the margin
    criterion: for m_a on the height grid, the lowest m_b that meets the
    clearance bound (closed form) and then the margin (bisection to 1 mm,
    assuming the margin rises with m_b); the best grid m_a is refined by a
    golden-section search over its two neighbouring cells.
    """
    targets = [v[2] for v in clearance_req.values()]
    if min_margin_db is None:
        sol = cheapest_split_m(d, np.array(targets), g_a, g_b, max_mast_m)
        if sol is None:
            return None
        m_a = round_up_mm(sol[0]) if sol[0] > 0 else 0.0
        m_a = min(m_a, max_mast_m)
        m_b = lowest_b_clearance_m(d, targets, g_a, g_b, m_a)
        if m_b > max_mast_m:
            return None
        return {"mast_a_m": m_a, "mast_b_m": m_b, "total_m": m_a + m_b, "method": "exact"}

    def lowest_b(m_a):
        lo = lowest_b_clearance_m(d, targets, g_a, g_b, m_a) if targets else 0.0
        if lo > max_mast_m:
            return None
        if margin_fn(m_a, lo) >= min_margin_db:
            return lo
        if margin_fn(m_a, max_mast_m) < min_margin_db:
            return None
        return bisect_up(lambda m_b: margin_fn(m_a, m_b), lo, max_mast_m, min_margin_db, max_mast_m)

    grid = height_grid(0.0, 0.0, max_mast_m, step)
    sums = []
    for m_a in grid:
        m_b = lowest_b(float(m_a))
        sums.append(math.inf if m_b is None else float(m_a) + m_b)
    sums = np.array(sums)
    if not np.isfinite(sums).any():
        return None
    j = int(np.argmin(sums))
    lo, hi = float(grid[max(j - 1, 0)]), float(grid[min(j + 1, grid.size - 1)])
    best_a, best_sum = float(grid[j]), float(sums[j])

    def total(m_a):
        m_b = lowest_b(m_a)
        return math.inf if m_b is None else m_a + m_b

    _, _, (p, sp), (q, sq) = golden_section(total, lo, hi, 0.01)
    for m_a, s in ((p, sp), (q, sq)):
        m_a_r = round_up_mm(m_a) if m_a > 0 else 0.0
        if m_a_r <= max_mast_m:
            s_r = total(m_a_r)
            if s_r < best_sum:
                best_a, best_sum = m_a_r, s_r
    m_b = lowest_b(best_a)
    return {"mast_a_m": best_a, "mast_b_m": m_b, "total_m": best_a + m_b, "method": "grid+golden"}

