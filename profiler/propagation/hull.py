"""Upper convex hull of the points before a moving end, kept incrementally along a radial (plain arithmetic).

A maximum over the points ``0 < i < j`` of a slope seen from a point to the
right of all of them (or to the left of all of them) is attained at a vertex
of the upper convex hull of those points, and along the hull's vertices (in
order of distance) the slope rises then falls, so a binary search finds it
in O(log n).  Along a radial the distances increase, so the hull of the
first ``j`` points is the hull of the first ``j - 1`` plus point ``j - 1``
(Andrew's monotone chain, amortised O(1) per point).

The slopes of the coverage reductions become such slopes after a
transformation of the heights that is the same for every node ``j``:
subtracting the parabola ``c x_i^2`` (``c = 500 / a_e`` [m/km^2]) from the
heights, see :func:`profiler.propagation.p1812.prefix._horizon_kernels` and
:func:`profiler.propagation.prefix_kernel._hull_kernels`.

References
----------
.. [1] A. M. Andrew, "Another efficient algorithm for convex hulls in two
   dimensions", Information Processing Letters 9(5), 1979, pp. 216-219
   (the monotone chain).
"""

from __future__ import annotations

import math

import numpy as np


def upper_hull_push(x, y, hull, hx, hy, m, i):
    """Add point ``i`` (right of every hull point) to the upper hull ``hull[:m]`` (point indices); new ``m``.

    A vertex is dropped when it is on or below the segment from the vertex
    before it to the new point (collinear points are dropped: on a tied edge
    the left vertex, the first point, stays).  The vertices' coordinates are
    kept beside their indices (``hx``, ``hy``): the test of a vertex then
    reads them directly, not through its index (in the compiled kernels an
    indirect load on the loop's critical path cost about 3x the whole push).

    Parameters
    ----------
    x, y : ndarray, shape (N,)
        Abscissae (strictly increasing) and ordinates of the points.
    hull : ndarray of int, shape (N,)
        Indices of the hull's vertices in ``hull[:m]``, by increasing ``x``; updated in place.
    hx, hy : ndarray, shape (N,)
        ``x[hull[:m]]`` and ``y[hull[:m]]``; updated in place.
    m : int
        Number of vertices before the call (a count).
    i : int
        Index of the new point, ``x[i]`` greater than that of every vertex.

    Returns
    -------
    int
        Number of vertices after the call (a count).

    References
    ----------
    .. [1] A. M. Andrew (1979), the upper chain of the monotone chain algorithm.
    """
    xi, yi = x[i], y[i]
    while m >= 2:
        ax, ay = hx[m - 2], hy[m - 2]
        if (hx[m - 1] - ax) * (yi - ay) - (hy[m - 1] - ay) * (xi - ax) >= 0.0:   # b not above a -> i
            m -= 1
        else:
            break
    hull[m], hx[m], hy[m] = i, xi, yi
    return m + 1


def block_tops(y, n, block, group):
    """Largest ``y`` of every whole block of samples before sample ``n``, and of every whole group of blocks.

    Block ``k`` is the samples ``1 + k block`` to ``(k + 1) block``; group
    ``g`` the blocks ``g`` to ``g + group - 1`` (``g`` a multiple of ``group``).

    Parameters
    ----------
    y : ndarray, shape (N,)
        Ordinates of the samples (heights less the Earth-curvature parabola) [m].
    n : int
        Samples of the radial (a count).
    block, group : int
        Samples per block, blocks per group (counts).

    Returns
    -------
    ndarray, shape (2, max(blocks, 1))
        Row 0: the largest ``y`` of each block [m]; row 1, at each group's
        first block: the largest of the group (-inf elsewhere).
    """
    count = (n - 1) // block
    tops = np.full((2, max(count, 1)), -np.inf)
    for k in range(count):
        for i in range(1 + k * block, 1 + (k + 1) * block):
            tops[0, k] = max(tops[0, k], y[i])
        g = k - k % group
        tops[1, g] = max(tops[1, g], tops[0, k])
    return tops


def pruning_unit(tops, k, full, group):
    """The blocks a pruned scan tests at once from block ``k`` (before block ``full``): ``(count, largest y)``.

    A whole group when ``k`` starts one that ends before ``full``, else the
    block alone (``tops`` of :func:`block_tops`).
    """
    if k % group == 0 and k + group <= full:
        return group, tops[1, k]
    return 1, tops[0, k]


def nu_bound(ytop, p, a, xs, xe, d):
    """Upper bound of ``N_i W(x_i)`` over samples from ``xs`` to ``xe`` (a pruning test, O(1)).

    ``N_i = y_i + p x_i - a`` is at most ``top = ytop + max(p xs, p xe) - a``
    (``ytop`` the largest ``y``); ``W(x) = sqrt(0.002 d / (x (d - x)))`` is
    convex with its least value at ``d / 2``, so between ``xs`` and ``xe`` it
    is at most its larger end value and at least its value at ``d / 2``
    clamped into the range: the bound is ``top W_max`` for ``top >= 0`` and
    ``top W_min`` below.  The worst clearance ratio (``W`` with ``1 / λ``
    for ``0.002``) uses the same bound: a constant factor of ``W`` scales
    both sides of the test.

    Parameters
    ----------
    ytop : float
        Largest ``y`` of the samples [m].
    p : float
        Slope of the linear part of ``N`` [m/km] (or [m/m]).
    a : float
        Height of the site end [m].
    xs, xe : float
        Distances of the first and last sample [km] (or [m]), ``0 < xs <= xe < d``.
    d : float
        Length of the link [km] (or [m]).

    Returns
    -------
    float
        The bound of ``N W`` (``W`` with the factor 0.002) [m^0.5 per unit of distance^0.5].

    References
    ----------
    .. [1] ITU-R P.452-18 eq. (16) (ν); ITU-R P.526-15 eq. (2) (the first Fresnel radius).
    """
    top = ytop + max(p * xs, p * xe) - a
    if top >= 0.0:
        u = min(xs * (d - xs), xe * (d - xe))
    else:
        xm = min(max(0.5 * d, xs), xe)
        u = xm * (d - xm)
    return top * math.sqrt(0.002 * d / u)
