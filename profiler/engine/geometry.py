"""Curved-Earth geometry of a batch of links: bulge, line of sight, Fresnel zone, clearance, worst point.

Profiles of different lengths are held in padded arrays of shape (links,
samples) as :mod:`profiler.terrain.sampling` returns them.

References
----------
.. [1] ITU-R P.526-15 section 2 and eq. (2) (Earth bulge, first Fresnel
   radius); ITU-R P.452-18 eqs. (153), (156a) (elevation angles).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..propagation import geometry


@dataclass(frozen=True)
class LinkGeometry:
    """Curved-Earth geometry of a batch of links (arrays (L, N) padded with NaN, or (L,)).

    Parameters
    ----------
    bulge_m : ndarray, shape (L, N)
        Earth bulge at each sample [m].
    los_m : ndarray, shape (L, N)
        Height of the antenna-to-antenna line [m AMSL].
    fresnel_radius_m : ndarray, shape (L, N)
        First Fresnel radius F1 [m].
    clearance_m : ndarray, shape (L, N)
        Clearance of the line above terrain plus bulge [m].
    ratio : ndarray, shape (L, N)
        Clearance over F1 [-].
    worst_index : ndarray of int, shape (L,)
        Index of the interior sample with the smallest ratio.
    worst_ratio : ndarray, shape (L,)
        Smallest clearance over F1 [-].
    worst_distance_m : ndarray, shape (L,)
        Distance of that sample from A [m].
    worst_clearance_m : ndarray, shape (L,)
        Clearance at that sample [m].
    worst_terrain_m : ndarray, shape (L,)
        Terrain at that sample [m AMSL].
    line_of_sight : ndarray of bool, shape (L,)
        Positive clearance at every interior sample.
    fresnel_clear : ndarray of bool, shape (L,)
        Ratio at least the required clearance ratio at every interior sample.
    elevation_angle_a_deg, elevation_angle_b_deg : ndarray, shape (L,)
        Elevation angle of the line at A and at B [deg above horizontal].
    """

    bulge_m: np.ndarray
    los_m: np.ndarray
    fresnel_radius_m: np.ndarray
    clearance_m: np.ndarray
    ratio: np.ndarray
    worst_index: np.ndarray
    worst_ratio: np.ndarray
    worst_distance_m: np.ndarray
    worst_clearance_m: np.ndarray
    worst_terrain_m: np.ndarray
    line_of_sight: np.ndarray
    fresnel_clear: np.ndarray
    elevation_angle_a_deg: np.ndarray
    elevation_angle_b_deg: np.ndarray


def geometry_batch(distance_m, terrain_m, n, antenna_a_amsl_m, antenna_b_amsl_m, wavelength_m,
                   effective_radius_m, clearance_ratio_required) -> LinkGeometry:
    """Earth bulge, line of sight, Fresnel zone, clearance and the worst point of every link.

    Parameters
    ----------
    distance_m, terrain_m : ndarray, shape (L, N)
        Padded profiles [m], [m AMSL].
    n : ndarray of int, shape (L,)
        Number of samples per link.
    antenna_a_amsl_m, antenna_b_amsl_m : ndarray, shape (L,)
        Antenna heights [m AMSL].
    wavelength_m, effective_radius_m : float
        Wavelength and effective Earth radius [m].
    clearance_ratio_required : float
        Required clearance as a fraction of F1 [-].

    Returns
    -------
    LinkGeometry
        Per-sample and per-link geometry.

    References
    ----------
    .. [1] ITU-R P.526-15 section 2 (bulge d1 d2 / (2 a_e)) and eq. (2) (F1);
       P.452-18 eqs. (153), (156a) (elevation angles).
    """
    d = np.asarray(distance_m, dtype=float)
    rows = np.arange(d.shape[0])
    cols = np.arange(d.shape[1])
    total = d[rows, n - 1]
    interior = (cols >= 1) & (cols[None, :] < (n - 1)[:, None])
    h_a = np.asarray(antenna_a_amsl_m, dtype=float)
    h_b = np.asarray(antenna_b_amsl_m, dtype=float)
    d2 = total[:, None] - d
    bulge = geometry.earth_bulge_m(d, d2, effective_radius_m)
    with np.errstate(invalid="ignore", divide="ignore"):
        los = geometry.line_of_sight_m(d, total[:, None], h_a[:, None], h_b[:, None])
        f1 = geometry.fresnel_radius_m(d, d2, wavelength_m)
        clearance = geometry.clearance_m(los, terrain_m, bulge)
        ratio = geometry.clearance_ratio(clearance, f1)
    masked = np.where(interior, ratio, np.inf)
    worst = np.argmin(masked, axis=1)
    pick = (rows, worst)
    with np.errstate(invalid="ignore"):
        los_ok = np.all(np.where(interior, clearance > 0.0, True), axis=1)
        clear = np.all(np.where(interior, ratio >= clearance_ratio_required, True), axis=1)
        angle_a = geometry.elevation_angle_deg(h_a, h_b, total, effective_radius_m)
        angle_b = geometry.elevation_angle_deg(h_b, h_a, total, effective_radius_m)
    return LinkGeometry(bulge_m=bulge, los_m=los, fresnel_radius_m=f1, clearance_m=clearance, ratio=ratio,
                        worst_index=worst, worst_ratio=ratio[pick], worst_distance_m=d[pick],
                        worst_clearance_m=clearance[pick], worst_terrain_m=np.asarray(terrain_m)[pick],
                        line_of_sight=los_ok, fresnel_clear=clear, elevation_angle_a_deg=angle_a,
                        elevation_angle_b_deg=angle_b)
