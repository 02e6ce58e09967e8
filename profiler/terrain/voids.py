"""Elevation voids along a terrain profile."""

from __future__ import annotations

import numpy as np

from profiler.errors import ProfilerError

__all__ = ["fill_voids_along_profile"]


def fill_voids_along_profile(distance_m, elevation_m):
    """Fill NaN voids of a terrain profile by linear interpolation in distance.

    Parameters
    ----------
    distance_m : array_like
        Distance of each sample from the start of the path [m], increasing.
    elevation_m : array_like
        Terrain height [m]; NaN marks voids.

    Returns
    -------
    filled : numpy.ndarray
        Heights with interior voids linearly interpolated between the nearest
        valid samples, and voids at either end set to the nearest valid
        sample [m].
    n_filled : int
        Number of samples that were filled.

    Raises
    ------
    ProfilerError
        If every sample is void.

    References
    ----------
    Linear interpolation between two points (two-point form of a line).
    """
    distance = np.asarray(distance_m, dtype=float)
    elevation = np.asarray(elevation_m, dtype=float)
    void = ~np.isfinite(elevation)
    if void.all():
        raise ProfilerError("the elevation model has no data anywhere along the path "
                            "(all samples void); use a DEM with data there")
    if not void.any():
        return elevation.copy(), 0
    filled = elevation.copy()
    filled[void] = np.interp(distance[void], distance[~void], elevation[~void])
    return filled, int(void.sum())
