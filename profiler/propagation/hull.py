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


def upper_hull_push(x, y, hull, m, i):
    """Add point ``i`` (right of every hull point) to the upper hull ``hull[:m]`` (point indices); new ``m``.

    A vertex is dropped when it is on or below the segment from the vertex
    before it to the new point (collinear points are dropped: on a tied edge
    the left vertex, the first point, stays).

    Parameters
    ----------
    x, y : ndarray, shape (N,)
        Abscissae (strictly increasing) and ordinates of the points.
    hull : ndarray of int, shape (N,)
        Indices of the hull's vertices in ``hull[:m]``, by increasing ``x``; updated in place.
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
    while m >= 2:
        a, b = hull[m - 2], hull[m - 1]
        if (x[b] - x[a]) * (y[i] - y[a]) - (y[b] - y[a]) * (x[i] - x[a]) >= 0.0:   # b not above a -> i
            m -= 1
        else:
            break
    hull[m] = i
    return m + 1
