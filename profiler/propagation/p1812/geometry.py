"""ITU-R P.1812-8 path profile analysis: effective Earth radius, zones, β0, horizons, heights (per path).

Padded arrays with one row per path, shape (L, N), as in
:mod:`profiler.propagation.p1812`; practical units of the Recommendation
(km, m, mrad, GHz).

References
----------
.. [1] Recommendation ITU-R P.1812-8, Annex 1 section 3 and Attachment 1
   (path profile analysis).
"""

from __future__ import annotations

import numpy as np

ZONE_SEA, ZONE_COASTAL, ZONE_INLAND = 1, 3, 4
"""Radio-meteorological zone codes of a profile sample (P.1812-8 Table 2): sea, coastal land, inland."""

EARTH_RADIUS_KM = 6371.0
"""Mean Earth radius of P.1812-8 [km]."""


def _col(x):
    return np.asarray(x, dtype=float).reshape(-1, 1) if np.ndim(x) else float(x)


def effective_radius_km(delta_n):
    """Median effective Earth radius a_e [km] from the refractivity lapse rate.

    Parameters
    ----------
    delta_n : float or ndarray
        Average radio-refractivity lapse rate through the lowest 1 km of the
        atmosphere, ΔN [N-units/km].

    Returns
    -------
    ae_km : float or ndarray
        a_e = 6371 k50 with k50 = 157 / (157 - ΔN) [km].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3 (radio-meteorological
       parameters: median effective Earth-radius factor k50 and a_e).
    """
    return EARTH_RADIUS_KM * 157.0 / (157.0 - np.asarray(delta_n, dtype=float))


def path_centre_latitude_deg(lat_t_deg, lon_t_deg, lat_r_deg, lon_r_deg, d_km):
    """Latitude of the path centre, φ [deg]: the point d/2 from the transmitter towards the receiver.

    Parameters
    ----------
    lat_t_deg, lon_t_deg, lat_r_deg, lon_r_deg : float or ndarray
        Transmitter and receiver latitude and longitude [deg] (they give
        the direction of the path).
    d_km : float or ndarray
        Path length of the profile [km].

    Returns
    -------
    phi_deg : float or ndarray
        Latitude of the point d/2 along the great circle from the
        transmitter towards the receiver, on a sphere of 6371 km [deg].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3 (φ, the path centre latitude),
       spherical-Earth great-circle geometry.
    """
    pt, pr = np.radians(lat_t_deg), np.radians(lat_r_deg)
    dlon = np.radians(np.asarray(lon_r_deg, dtype=float) - lon_t_deg)
    bearing = np.arctan2(np.sin(dlon) * np.cos(pr), np.cos(pt) * np.sin(pr) - np.sin(pt) * np.cos(pr) * np.cos(dlon))
    delta = 0.5 * np.asarray(d_km, dtype=float) / EARTH_RADIUS_KM
    return np.degrees(np.arcsin(np.sin(pt) * np.cos(delta) + np.cos(pt) * np.sin(delta) * np.cos(bearing)))


def beta0_percent(phi_deg, dtm_km, dlm_km):
    """Time percentage β0 for which refractive gradients exceed 100 N-units/km in the lowest 100 m [%].

    Parameters
    ----------
    phi_deg : float or ndarray
        Path centre latitude φ [deg].
    dtm_km : float or ndarray
        Longest continuous land (inland + coastal) section of the path [km].
    dlm_km : float or ndarray
        Longest continuous inland section of the path [km].

    Returns
    -------
    beta0_percent : float or ndarray
        β0 [%].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3 (radio-meteorological
       parameters: β0, τ, μ1, μ4).
    """
    phi = np.abs(np.asarray(phi_deg, dtype=float))
    tau = 1.0 - np.exp(-4.12e-4 * np.asarray(dlm_km, dtype=float) ** 2.41)
    mu1 = (10.0 ** (-np.asarray(dtm_km, dtype=float) / (16.0 - 6.6 * tau))
           + 10.0 ** (-5.0 * (0.496 + 0.354 * tau))) ** 0.2
    mu1 = np.minimum(mu1, 1.0)
    log_mu1 = np.log10(mu1)
    mu4 = np.where(phi <= 70.0, 10.0 ** ((-0.935 + 0.0176 * phi) * log_mu1), 10.0 ** (0.3 * log_mu1))
    return np.where(phi <= 70.0, 10.0 ** (-0.015 * phi + 1.67) * mu1 * mu4, 4.17 * mu1 * mu4)


def _runs_max_km(cover_km, member):
    """Longest run of consecutive samples in ``member``, summed over their cover [km] (per row)."""
    csum = np.cumsum(np.where(member, cover_km, 0.0), axis=1)
    # running total reset at every sample outside the set: subtract the total at the last break
    breaks = np.where(member, 0.0, csum)
    last_break = np.maximum.accumulate(breaks, axis=1)
    return np.max(np.where(member, csum - last_break, 0.0), axis=1)


def zone_sections_km(d_km, zone, n_samples):
    """Zone statistics of each path: sea fraction ω, longest land section dtm, longest inland section dlm.

    Sample i stands for the stretch between the mid-points to its neighbours
    (the ends: from the terminal to the first mid-point).

    Parameters
    ----------
    d_km : ndarray, shape (L, N)
        Distances from the transmitter [km], padded.
    zone : ndarray of int, shape (L, N)
        Zone code of each sample [-] (1 sea, 3 coastal land, 4 inland).
    n_samples : ndarray of int, shape (L,)
        Samples per path (a count).

    Returns
    -------
    dict of ndarray, shape (L,)
        ``w_sea_fraction`` [-], ``dtm_km`` [km], ``dlm_km`` [km].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3 (ω, dtm, dlm) and Table 2
       (radio-meteorological zones).
    """
    n = np.asarray(n_samples, dtype=np.int64)
    cols = np.arange(d_km.shape[1])
    valid = cols[None, :] < n[:, None]
    d = np.where(valid, d_km, np.nan)
    rows = np.arange(d.shape[0])
    d_total = d[rows, n - 1]
    mid = 0.5 * (d[:, 1:] + d[:, :-1])
    lower = np.concatenate([np.zeros((d.shape[0], 1)), mid], axis=1)
    upper = np.concatenate([mid, np.full((d.shape[0], 1), np.nan)], axis=1)
    upper[rows, n - 1] = d_total
    cover = np.where(valid, upper - lower, 0.0)
    zone = np.where(valid, zone, 0)
    sea = np.sum(np.where(zone == ZONE_SEA, cover, 0.0), axis=1)
    return {"w_sea_fraction": sea / d_total,
            "dtm_km": _runs_max_km(cover, (zone == ZONE_COASTAL) | (zone == ZONE_INLAND)),
            "dlm_km": _runs_max_km(cover, zone == ZONE_INLAND)}


def smooth_surface_m(d_km, h_m, n_samples):
    """Least-squares smooth surface of the terrain: heights at the terminals [m amsl].

    Parameters
    ----------
    d_km : ndarray, shape (L, N)
        Distances [km], padded.
    h_m : ndarray, shape (L, N)
        Terrain heights [m amsl], padded.
    n_samples : ndarray of int, shape (L,)
        Samples per path (a count).

    Returns
    -------
    hst_m, hsr_m : ndarray, shape (L,)
        Heights of the smooth surface at the transmitter and the receiver
        [m amsl], eqs. (85), (86).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 Attachment 1 (smooth-Earth surface,
       eqs. 85-86); ITU-R P.452-18 Attachment 2 eqs. (161)-(164).
    """
    n = np.asarray(n_samples, dtype=np.int64)
    cols = np.arange(d_km.shape[1])
    pair = (cols[None, 1:] < n[:, None])
    d0, d1 = d_km[:, :-1], d_km[:, 1:]
    h0, h1 = h_m[:, :-1], h_m[:, 1:]
    seg = d1 - d0
    v1 = np.sum(np.where(pair, seg * (h1 + h0), 0.0), axis=1)
    v2 = np.sum(np.where(pair, seg * (h1 * (2 * d1 + d0) + h0 * (d1 + 2 * d0)), 0.0), axis=1)
    d = d_km[np.arange(d_km.shape[0]), n - 1]
    return (2 * v1 * d - v2) / d ** 2, (v2 - v1 * d) / d ** 2


def padded_profile(distance_km, height_m, clutter_m, n_samples):
    """The pieces of padded profiles used by the model, with the padding zeroed.

    Parameters
    ----------
    distance_km : ndarray, shape (L, N)
        Distances from the transmitter [km], padded.
    height_m : ndarray, shape (L, N)
        Terrain heights h_i [m amsl], padded.
    clutter_m : ndarray, shape (L, N)
        Representative clutter heights R_i [m], padded.
    n_samples : ndarray of int, shape (L,)
        Samples per path (a count).

    Returns
    -------
    tuple
        d [km], h [m amsl], g = h + R at the interior points and h at the
        terminals [m amsl] (each (L, N)), the interior mask (L, N), the row
        index (L,), n (L,) and the path length d (L,) [km].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3 (profile h_i, g_i = h_i + R_i
       at the interior points).
    """
    n = np.asarray(n_samples, dtype=np.int64)
    cols = np.arange(np.shape(distance_km)[1])
    valid = cols[None, :] < n[:, None]
    interior = (cols[None, :] >= 1) & (cols[None, :] < (n - 1)[:, None])
    d = np.where(valid, np.asarray(distance_km, dtype=float), 0.0)
    h = np.where(valid, np.asarray(height_m, dtype=float), 0.0)
    g = np.where(interior, h + np.where(valid, np.asarray(clutter_m, dtype=float), 0.0), h)
    rows = np.arange(d.shape[0])
    return d, h, g, interior, rows, n, d[rows, n - 1]


def _elevation_mrad(dh_m, d_km, ae_km):
    """Elevation angle of a point dh [m] higher at distance d [km] over the effective Earth [mrad]."""
    return 1000.0 * np.arctan(dh_m / (1000.0 * d_km) - d_km / (2.0 * ae_km))


def path_geometry(distance_km, height_m, n_samples, htg_m, hrg_m, f_ghz, ae_km):
    """Horizon geometry of each path: horizon distances, elevation angles and the angular distance.

    Parameters
    ----------
    distance_km : ndarray, shape (L, N)
        Distances from the transmitter [km], padded.
    height_m : ndarray, shape (L, N)
        Terrain heights h_i [m amsl], padded (the horizons are those of
        the terrain; the clutter enters the Bullington part of the
        diffraction only).
    n_samples : ndarray of int, shape (L,)
        Samples per path (a count), at least 3.
    htg_m, hrg_m : float or ndarray, shape (L,)
        Antenna heights above ground [m].
    f_ghz : float or ndarray, shape (L,)
        Frequency [GHz].
    ae_km : float or ndarray, shape (L,)
        Median effective Earth radius [km].

    Returns
    -------
    dict of ndarray, shape (L,)
        ``d_km``, ``dlt_km``, ``dlr_km`` [km], ``theta_t_mrad``,
        ``theta_r_mrad``, ``theta_mrad`` [mrad], ``hts_m``, ``hrs_m``
        [m amsl], ``trans_horizon`` (bool), ``ilt``, ``ilr`` (sample indices
        of the horizons).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 Attachment 1 (horizon angles θt, θr,
       horizon distances dlt, dlr, path angular distance θ; line-of-sight
       test against θtd; diffraction parameter ν for the line-of-sight
       case).
    """
    d, h, g, interior, rows, n, d_total = padded_profile(distance_km, height_m, np.zeros_like(height_m), n_samples)
    ae = _col(ae_km)
    hts = h[:, 0] + np.asarray(htg_m, dtype=float)
    hrs = h[rows, n - 1] + np.asarray(hrg_m, dtype=float)
    di = np.where(interior, d, 1.0)
    dr = np.where(interior, d_total[:, None] - d, 1.0)
    theta_i = np.where(interior, _elevation_mrad(g - hts[:, None], di, ae), -np.inf)
    theta_rj = np.where(interior, _elevation_mrad(g - hrs[:, None], dr, ae), -np.inf)
    ae1 = np.asarray(ae_km, dtype=float)
    theta_td = _elevation_mrad(hrs - hts, d_total, ae1)
    theta_rd = _elevation_mrad(hts - hrs, d_total, ae1)
    it, ir = np.argmax(theta_i, axis=1), np.argmax(theta_rj, axis=1)
    theta_max = theta_i[rows, it]
    trans = theta_max > theta_td
    wavelength_m = 0.299792458 / np.asarray(f_ghz, dtype=float)
    nu = np.where(interior, (g + 500.0 * di * dr / ae - (hts[:, None] * dr + hrs[:, None] * di) / d_total[:, None])
                  * np.sqrt(0.002 * d_total[:, None] / (_col(wavelength_m) * di * dr)), -np.inf)
    iv = np.argmax(nu, axis=1)
    ilt, ilr = np.where(trans, it, iv), np.where(trans, ir, iv)
    theta_t = np.where(trans, theta_max, theta_td)
    theta_r = np.where(trans, theta_rj[rows, ir], theta_rd)
    return {"d_km": d_total, "dlt_km": d[rows, ilt], "dlr_km": d_total - d[rows, ilr],
            "theta_t_mrad": theta_t, "theta_r_mrad": theta_r,
            "theta_mrad": 1000.0 * d_total / ae1 + theta_t + theta_r,
            "hts_m": hts, "hrs_m": hrs, "trans_horizon": trans, "ilt": ilt, "ilr": ilr}


def effective_heights(distance_km, height_m, n_samples, geometry):
    """Smooth-surface and effective antenna heights of the ducting/layer-reflection model, and hm.

    Parameters
    ----------
    distance_km, height_m : ndarray, shape (L, N)
        Distances [km] and terrain heights [m amsl], padded.
    n_samples : ndarray of int, shape (L,)
        Samples per path (a count).
    geometry : dict
        Output of :func:`path_geometry`.

    Returns
    -------
    dict of ndarray, shape (L,)
        ``hst_eq85_m``, ``hsr_eq86_m`` (smooth surface, eqs. 85-86),
        ``hst_eq90a_m``, ``hsr_eq90b_m`` (limited to the ground, eq. 90),
        ``hte_m``, ``hre_m`` (effective antenna heights) [m amsl or m], and
        ``hm_m`` (terrain roughness between the horizons) [m].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 Attachment 1 (smooth-Earth surface,
       eqs. 85-90; effective heights and terrain roughness hm).
    """
    d, h, _, _, rows, n, d_total = padded_profile(distance_km, height_m, height_m, n_samples)
    hst, hsr = smooth_surface_m(d, h, n)
    hst_g, hsr_g = np.minimum(hst, h[:, 0]), np.minimum(hsr, h[rows, n - 1])
    slope = (hsr_g - hst_g) / d_total
    cols = np.arange(d.shape[1])[None, :]
    between = (cols >= geometry["ilt"][:, None]) & (cols <= geometry["ilr"][:, None])
    hm = np.max(np.where(between, h - (hst_g[:, None] + slope[:, None] * d), -np.inf), axis=1)
    return {"hst_eq85_m": hst, "hsr_eq86_m": hsr, "hst_eq90a_m": hst_g, "hsr_eq90b_m": hsr_g,
            "hte_m": geometry["hts_m"] - hst_g, "hre_m": geometry["hrs_m"] - hsr_g, "hm_m": hm}
