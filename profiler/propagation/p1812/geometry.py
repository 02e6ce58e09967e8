"""ITU-R P.1812-8 path profile analysis: effective Earth radius, zones, β0, horizons (per path).

Padded arrays with one row per path, shape (L, N), as in
:mod:`profiler.propagation.p1812`; practical units of the Recommendation
(km, m, mrad, GHz).  The elementwise terms of one profile sample
(:func:`elevation_mrad_term`, :func:`roughness_term`) are the ones the numpy
reductions of :mod:`profiler.propagation.p1812.reductions` and the numba
prefix kernel of :mod:`profiler.propagation.p1812.prefix` both use.

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
    # numpy's sin and cos of float64 cost ten times its sqrt: each taken once, and the cosine of an angle in
    # [-90, 90] deg (a latitude, half the path's angle) as sqrt(1 - sin^2), which is >= 0 there
    sin_pt, cos_pt, sin_pr = np.sin(pt), np.cos(pt), np.sin(pr)
    cos_pr = np.sqrt(np.maximum(1.0 - sin_pr * sin_pr, 0.0))
    east = np.sin(dlon) * cos_pr                                   # the initial bearing's components
    north = cos_pt * sin_pr - sin_pt * cos_pr * np.cos(dlon)
    length = np.sqrt(east * east + north * north)
    cos_bearing = np.divide(north, length, out=np.ones_like(length), where=length > 0.0)   # due north when equal
    sin_delta = np.sin(0.5 * np.asarray(d_km, dtype=float) / EARTH_RADIUS_KM)
    cos_delta = np.sqrt(1.0 - sin_delta * sin_delta)
    return np.degrees(np.arcsin(sin_pt * cos_delta + cos_pt * sin_delta * cos_bearing))


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
    low = phi <= 70.0   # each branch's exponent, then one power: the same values as both powers and a choice
    mu4 = 10.0 ** (np.where(low, -0.935 + 0.0176 * phi, 0.3) * log_mu1)
    return np.where(low, 10.0 ** (-0.015 * phi + 1.67), 4.17) * mu1 * mu4


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


def inland_zones_km(d_km):
    """The zone statistics of paths wholly inland: no sea, the longest land and inland sections the whole path.

    Parameters
    ----------
    d_km : ndarray, shape (L,)
        Path lengths [km].

    Returns
    -------
    dict of ndarray, shape (L,)
        ``w_sea_fraction`` = 0 [-], ``dtm_km`` = ``dlm_km`` = d [km]: what
        :func:`zone_sections_km` gives for samples all in zone 4.

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3 (ω, dtm, dlm) and Table 2.
    """
    d = np.asarray(d_km, dtype=float)
    return {"w_sea_fraction": np.zeros(d.shape), "dtm_km": d, "dlm_km": d}


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


def elevation_tangent_term(dh_m, d_km, ae_km):
    """Tangent of the elevation angle of a point ``dh`` higher at distance ``d`` over the effective Earth [-].

    The reductions take the largest tangent (the arctangent is increasing,
    so the largest angle is the arctangent of the largest tangent, at the
    same sample): :func:`elevation_mrad_term` of one value per path.

    Parameters
    ----------
    dh_m : float or ndarray
        Height of the point above the antenna [m].
    d_km : float or ndarray
        Distance of the point from the antenna [km], greater than 0.
    ae_km : float or ndarray
        Median effective Earth radius [km].

    Returns
    -------
    tangent : float or ndarray
        dh / (1000 d) - d / (2 a_e) [-].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 Attachment 1 (elevation angles θi, θj of
       the profile points, θtd, θrd of the other terminal).
    """
    return dh_m / (1000.0 * d_km) - d_km / (2.0 * ae_km)


def elevation_mrad_term(dh_m, d_km, ae_km):
    """Elevation angle of a point ``dh`` higher at distance ``d`` over the effective Earth [mrad].

    Parameters
    ----------
    dh_m, d_km, ae_km : float or ndarray
        Height of the point above the antenna [m], its distance [km] and the
        effective Earth radius [km], as :func:`elevation_tangent_term`.

    Returns
    -------
    theta_mrad : float or ndarray
        1000 arctan(dh / (1000 d) - d / (2 a_e)) [mrad].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 Attachment 1 (elevation angles θi, θj of
       the profile points, θtd, θrd of the other terminal).
    """
    return 1000.0 * np.arctan(elevation_tangent_term(dh_m, d_km, ae_km))


def roughness_term(h_m, hst_m, slope_m_per_km, d_km):
    """Height of a profile point above the smooth-Earth line through hst with the given slope [m].

    Parameters
    ----------
    h_m : float or ndarray
        Terrain height of the point [m amsl].
    hst_m : float or ndarray
        Smooth-surface height at the transmitter, limited to the ground (eq. 90a) [m amsl].
    slope_m_per_km : float or ndarray
        Slope m of the smooth-Earth surface, (hsr - hst) / d [m/km].
    d_km : float or ndarray
        Distance of the point from the transmitter [km].

    Returns
    -------
    height_m : float or ndarray
        h - (hst + m d) [m]; its maximum between the horizons is the
        terrain roughness hm.

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 Attachment 1 (terrain roughness hm).
    """
    return h_m - (hst_m + slope_m_per_km * d_km)


def trans_horizon(tan_t_max, d_km, hts_m, hrs_m, ae_km):
    """Whether each path is trans-horizon: the transmitter's horizon above the receiver's direction.

    Parameters
    ----------
    tan_t_max : ndarray, shape (L,)
        Largest :func:`elevation_tangent_term` of an interior point seen
        from the transmitter [-].
    d_km : ndarray, shape (L,)
        Path lengths [km].
    hts_m, hrs_m : ndarray, shape (L,)
        Antenna heights [m amsl].
    ae_km : float or ndarray, shape (L,)
        Median effective Earth radius [km].

    Returns
    -------
    trans : ndarray of bool, shape (L,)
        θmax > θtd, θmax the elevation angle of the transmitter's horizon
        (1000 arctan of ``tan_t_max``).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 Attachment 1 (the path is trans-horizon
       when θmax > θtd).
    """
    return 1000.0 * np.arctan(tan_t_max) > elevation_mrad_term(hrs_m - hts_m, d_km, ae_km)


def horizon_geometry(horizons, distance_at, d_km, hts_m, hrs_m, ae_km):
    """Horizon distances, elevation angles and angular distance of each path from its horizon reductions.

    Parameters
    ----------
    horizons : dict of ndarray, shape (L,)
        The reductions over the interior samples (``horizons`` of a
        :class:`profiler.propagation.p1812.reductions.Reducer`):
        ``tan_t_max`` and ``tan_r_max`` (largest :func:`elevation_tangent_term`
        from the transmitter and the receiver [-]) with their sample
        indices ``theta_t_index``, ``theta_r_index``, and ``nu_index``
        (sample of the largest diffraction parameter ν).  ``tan_r_max`` and
        ``theta_r_index`` are read for trans-horizon paths only,
        ``nu_index`` for line-of-sight paths only (:func:`trans_horizon`).
    distance_at : callable
        ``distance_at(index) -> d [km]``, shape (L,): the distance of a
        sample index of every path.
    d_km, hts_m, hrs_m, ae_km : ndarray, shape (L,)
        Path lengths [km], antenna heights [m amsl] and the median effective
        Earth radius [km], as :func:`trans_horizon`.

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
    ae1 = np.asarray(ae_km, dtype=float)
    trans = trans_horizon(horizons["tan_t_max"], d_km, hts_m, hrs_m, ae1)
    theta_max = 1000.0 * np.arctan(horizons["tan_t_max"])                          # θi of the horizon
    theta_td = elevation_mrad_term(hrs_m - hts_m, d_km, ae1)
    theta_rd = elevation_mrad_term(hts_m - hrs_m, d_km, ae1)
    iv = horizons["nu_index"]
    ilt, ilr = np.where(trans, horizons["theta_t_index"], iv), np.where(trans, horizons["theta_r_index"], iv)
    theta_t = np.where(trans, theta_max, theta_td)
    theta_r = np.where(trans, 1000.0 * np.arctan(horizons["tan_r_max"]), theta_rd)
    return {"d_km": d_km, "dlt_km": distance_at(ilt), "dlr_km": d_km - distance_at(ilr),
            "theta_t_mrad": theta_t, "theta_r_mrad": theta_r,
            "theta_mrad": 1000.0 * d_km / ae1 + theta_t + theta_r,
            "hts_m": hts_m, "hrs_m": hrs_m, "trans_horizon": trans, "ilt": ilt, "ilr": ilr}
