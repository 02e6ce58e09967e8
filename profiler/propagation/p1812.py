"""ITU-R P.1812-8 point-to-area prediction for terrain profiles, vectorized over paths.

Every function takes padded arrays with one row per path, shape (L, N): row
l holds ``n_samples[l]`` profile samples from the transmitter (distance 0)
to the receiver; values beyond are ignored (NaN padding as in the engine).
Per-path inputs are scalars or arrays of shape (L,).  The results are dicts
of arrays of shape (L,) keyed by the column names of the ITU-R SG3
validation examples (``d_km``, ``theta_t_mrad``, ``lbfs_db``, ...).

Practical units of the Recommendation inside: distances in km, heights in
m, angles in mrad, frequency in GHz.  The delta-Bullington diffraction of
section 4.3 is :mod:`profiler.propagation.diffraction_batch` (P.452-18
section 4.2, the same model), called with the P.1812 profile (clutter
heights added at the interior points).

Not yet here (later steps of the same issue): diffraction combination for
time percentages, troposcatter, ducting/layer reflection, the overall
combination, the location variability and the field strength.

References
----------
.. [1] Recommendation ITU-R P.1812-8, "A path-specific propagation
   prediction method for point-to-area terrestrial services in the frequency
   range 30 MHz to 6 000 MHz", Annex 1 sections 3-4 and Attachment 1
   (path profile analysis).
.. [2] Recommendation ITU-R P.452-18 (10/2023), section 4.2 and Attachment 2
   section 5.1.6 (the same smooth-surface heights).
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
    .. [1] ITU-R P.1812-8 Annex 1 section 3.5 (median effective Earth-radius
       factor k50 and a_e).
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
    .. [1] ITU-R P.1812-8 Annex 1 section 3.5 (β0, τ, μ1, μ4).
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
       eqs. 83-86); ITU-R P.452-18 Attachment 2 eqs. (161)-(164).
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


def _profile(distance_km, height_m, clutter_m, n_samples):
    """Padded profile pieces: d [km], terrain h, g = h + R inside, interior mask, row index, path length."""
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
    d, h, g, interior, rows, n, d_total = _profile(distance_km, height_m, np.zeros_like(height_m), n_samples)
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
    d, h, _, _, rows, n, d_total = _profile(distance_km, height_m, height_m, n_samples)
    hst, hsr = smooth_surface_m(d, h, n)
    hst_g, hsr_g = np.minimum(hst, h[:, 0]), np.minimum(hsr, h[rows, n - 1])
    slope = (hsr_g - hst_g) / d_total
    cols = np.arange(d.shape[1])[None, :]
    between = (cols >= geometry["ilt"][:, None]) & (cols <= geometry["ilr"][:, None])
    hm = np.max(np.where(between, h - (hst_g[:, None] + slope[:, None] * d), -np.inf), axis=1)
    return {"hst_eq85_m": hst, "hsr_eq86_m": hsr, "hst_eq90a_m": hst_g, "hsr_eq90b_m": hsr_g,
            "hte_m": geometry["hts_m"] - hst_g, "hre_m": geometry["hrs_m"] - hsr_g, "hm_m": hm}


def basic_losses(geometry, f_ghz, time_percent, beta0):
    """Free-space loss along the slant path and the losses not exceeded for p % and β0 % of time [dB].

    Parameters
    ----------
    geometry : dict
        Output of :func:`path_geometry` (``d_km``, ``dlt_km``, ``dlr_km``,
        ``hts_m``, ``hrs_m``).
    f_ghz : float or ndarray, shape (L,)
        Frequency [GHz].
    time_percent : float or ndarray, shape (L,)
        Time percentage p [%].
    beta0 : float or ndarray, shape (L,)
        β0 [%].

    Returns
    -------
    dict of ndarray, shape (L,)
        ``lbfs_db`` (eq. 8, with the slant distance dfs of eq. 8a),
        ``lb0p_db`` (eq. 10) and ``lb0b_db`` (eq. 11) [dB].

    Notes
    -----
    Eq. (8) has the rounded constant 92.4 dB; the exact P.525 form of
    :func:`profiler.propagation.free_space.free_space_term_db` (92.45 dB)
    differs by 0.05 dB, more than the validation tolerance, so the
    Recommendation's own form is used here.

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.2, eqs. (8)-(11) (with the
       focusing/multipath corrections Esp, Esβ of eq. 9).
    """
    g = geometry
    dfs = np.sqrt(g["d_km"] ** 2 + ((g["hts_m"] - g["hrs_m"]) / 1000.0) ** 2)              # eq. (8a) [km]
    lbfs = 92.4 + 20.0 * np.log10(f_ghz) + 20.0 * np.log10(dfs)                           # eq. (8)
    horizons = 2.6 * (1.0 - np.exp(-0.1 * (g["dlt_km"] + g["dlr_km"])))
    esp = horizons * np.log10(np.asarray(time_percent, dtype=float) / 50.0)               # eq. (9a)
    esb = horizons * np.log10(np.asarray(beta0, dtype=float) / 50.0)                      # eq. (9b)
    return {"lbfs_db": lbfs, "lb0p_db": lbfs + esp, "lb0b_db": lbfs + esb}                 # eqs. (10), (11)


def inverse_normal_tail(x):
    """Inverse complementary cumulative normal distribution I(x), approximation for 0 < x <= 0.5 [-].

    Parameters
    ----------
    x : float or ndarray
        Probability [-], 1e-6 to 0.5.

    Returns
    -------
    i : float or ndarray
        I(x) [-], such that the standard normal exceeds it with
        probability x (accurate to 0.00054).

    References
    ----------
    .. [1] ITU-R P.1812-8 Attachment 2 to Annex 1 (approximation of I(x)
       with T(x) and ξ(x)); ITU-R P.452-18 Attachment 3.
    """
    t = np.sqrt(-2.0 * np.log(np.asarray(x, dtype=float)))
    xi = (((0.010328 * t + 0.802853) * t) + 2.515516698) / (((0.001308 * t + 0.189269) * t + 1.432788) * t + 1.0)
    return t - xi


def diffraction_losses(d_km, h_m, g_m, n_samples, out, f_ghz, time_percent, ae_km, vertical):
    """Diffraction loss of P.1812-8 section 4.3 for p % of time, and the basic losses associated with it.

    Parameters
    ----------
    d_km, h_m, g_m : ndarray, shape (L, N)
        Distances [km], terrain heights [m amsl] and terrain plus clutter
        (at the interior points) [m amsl], padded with zeros.
    n_samples : ndarray of int, shape (L,)
        Samples per path (a count).
    out : dict
        Path geometry and basic losses (``hts_m``, ``hrs_m``,
        ``w_sea_fraction``, ``beta0_percent``, ``lbfs_db``, ``lb0p_db``).
    f_ghz : float or ndarray, shape (L,)
        Frequency [GHz].
    time_percent : float or ndarray, shape (L,)
        Time percentage p [%].
    ae_km : float or ndarray, shape (L,)
        Median effective Earth radius [km].
    vertical : bool or ndarray of bool, shape (L,)
        Vertical polarization.

    Returns
    -------
    dict of ndarray, shape (L,)
        ``hstd_m``, ``hsrd_m``, ``htc_eq37a_m``, ``hrc_eq37b_m`` [m],
        ``lbulla_db``, ``lbulls_db``, ``ldsph_db`` (the parts of Ldβ, as
        in the SG3 examples), ``ld50_db``, ``ldb_db``, ``ldp_db``,
        ``lbd50_db``, ``lbd_db`` (eq. 43) [dB] and ``fi`` [-].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.3 (delta-Bullington, eqs. 12-38,
       the same model as ITU-R P.452-18 section 4.2) and section 4.3.5,
       eqs. (39)-(43) (Ld50, Ldβ with aβ = 3 x 6371 km, Fi, Ldp, Lbd50,
       Lbd).
    """
    ld50 = _diffraction(d_km, h_m, g_m, n_samples, out, f_ghz, ae_km, vertical)
    ldb = _diffraction(d_km, h_m, g_m, n_samples, out, f_ghz, 3.0 * EARTH_RADIUS_KM, vertical)
    p = np.asarray(time_percent, dtype=float)
    beta0 = out["beta0_percent"]
    above = p > beta0
    fi = np.where(above, inverse_normal_tail(np.where(above, p, 1.0) / 100.0)
                  / inverse_normal_tail(beta0 / 100.0), 1.0)                               # eq. (40)
    fi = np.where(p >= 50.0, 0.0, fi)
    ldp = ld50["delta_bullington"] + fi * (ldb["delta_bullington"] - ld50["delta_bullington"])  # eq. (41)
    return {"hstd_m": ld50["hstd"], "hsrd_m": ld50["hsrd"], "htc_eq37a_m": ld50["modified_height_a_m"],
            "hrc_eq37b_m": ld50["modified_height_b_m"], "lbulla_db": ldb["bullington"],
            "lbulls_db": ldb["bullington_smooth"], "ldsph_db": ldb["spherical_earth"],
            "ld50_db": ld50["delta_bullington"], "ldb_db": ldb["delta_bullington"], "ldp_db": ldp,
            "lbd50_db": out["lbfs_db"] + ld50["delta_bullington"],                          # eq. (42)
            "lbd_db": out["lb0p_db"] + ldp, "fi": fi}                                         # eq. (43)


def troposcatter_db(d_km, theta_mrad, f_ghz, n0, time_percent):
    """Basic transmission loss due to troposcatter not exceeded for p % of time, Lbs [dB].

    Parameters
    ----------
    d_km : float or ndarray
        Path length [km].
    theta_mrad : float or ndarray
        Path angular distance θ [mrad].
    f_ghz : float or ndarray
        Frequency [GHz].
    n0 : float or ndarray
        Sea-level surface refractivity N0 [N-units].
    time_percent : float or ndarray
        Time percentage p [%], at most 50.

    Returns
    -------
    lbs_db : float or ndarray
        Lbs [dB].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.4, eqs. (44) and (45)
       (frequency-dependent loss Lf).
    """
    f = np.asarray(f_ghz, dtype=float)
    lf = 25.0 * np.log10(f) - 2.5 * np.log10(f / 2.0) ** 2                                   # eq. (45)
    return (190.1 + lf + 20.0 * np.log10(d_km) + 0.573 * np.asarray(theta_mrad) - 0.15 * np.asarray(n0)
            - 10.125 * np.log10(50.0 / np.asarray(time_percent, dtype=float)) ** 0.7)        # eq. (44)


def _site_shielding_db(theta_mrad, dl_km, f_ghz):
    """Site-shielding loss of one terminal towards its horizon [dB] (zero for θ'' <= 0)."""
    tpp = theta_mrad - 0.1 * dl_km                                                           # θ''
    pos = np.maximum(tpp, 0.0)
    return np.where(tpp > 0.0, 20.0 * np.log10(1.0 + 0.361 * pos * np.sqrt(f_ghz * dl_km))
                    + 0.264 * pos * f_ghz ** (1.0 / 3.0), 0.0)


def _sea_coupling_db(dc_km, dl_km, hs_m, w):
    """Over-sea surface-duct coupling correction of one terminal [dB] (zero unless near a mostly-sea path)."""
    near = (w >= 0.75) & (dc_km <= dl_km) & (dc_km <= 5.0)
    return np.where(near, -3.0 * np.exp(-0.25 * dc_km ** 2) * (1.0 + np.tanh(0.07 * (50.0 - hs_m))), 0.0)


def ducting_db(out, f_ghz, time_percent, ae_km, dct_km, dcr_km):
    """Basic transmission loss due to ducting/layer reflection not exceeded for p % of time, Lba [dB].

    Parameters
    ----------
    out : dict
        Path geometry and heights (``d_km``, ``dlt_km``, ``dlr_km``,
        ``theta_t_mrad``, ``theta_r_mrad``, ``hts_m``, ``hrs_m``, ``hte_m``,
        ``hre_m``, ``hm_m``, ``w_sea_fraction``, ``dlm_km``,
        ``beta0_percent``).
    f_ghz : float or ndarray, shape (L,)
        Frequency [GHz].
    time_percent : float or ndarray, shape (L,)
        Time percentage p [%].
    ae_km : float or ndarray, shape (L,)
        Median effective Earth radius [km].
    dct_km, dcr_km : float or ndarray, shape (L,)
        Distances of the transmitter and the receiver from the coast [km]
        (0 for a terminal at sea).

    Returns
    -------
    lba_db : ndarray, shape (L,)
        Lba = Af + Ad(p) [dB]: fixed coupling losses (empirical correction
        Alf below 0.5 GHz, site shielding, over-sea coupling) and the time-percentage and angular-distance
        dependent losses (γd θ' + A(p), with β = β0 μ2 μ3 and Γ).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.5 (ducting/layer reflection:
       Af, Alf, Ast, Asr, Act, Acr, Ad(p), γd, θ', A(p), Γ, β, μ2, α, μ3, τ).
    """
    o = out
    f = np.asarray(f_ghz, dtype=float)
    d, dlt, dlr = o["d_km"], o["dlt_km"], o["dlr_km"]
    a_lf = np.where(f < 0.5, 45.375 - 137.0 * f + 92.5 * f * f, 0.0)                       # below 500 MHz
    af = (102.45 + 20.0 * np.log10(f) + 20.0 * np.log10(dlt + dlr) + a_lf
          + _site_shielding_db(o["theta_t_mrad"], dlt, f) + _site_shielding_db(o["theta_r_mrad"], dlr, f)
          + _sea_coupling_db(np.asarray(dct_km, dtype=float), dlt, o["hts_m"], o["w_sea_fraction"])
          + _sea_coupling_db(np.asarray(dcr_km, dtype=float), dlr, o["hrs_m"], o["w_sea_fraction"]))
    gamma_d = 5e-5 * ae_km * f ** (1.0 / 3.0)                                                # [dB/mrad]
    th_t = np.minimum(o["theta_t_mrad"], 0.1 * dlt)
    th_r = np.minimum(o["theta_r_mrad"], 0.1 * dlr)
    theta_p = 1e3 * d / ae_km + th_t + th_r                                                  # θ' [mrad]
    tau = 1.0 - np.exp(-4.12e-4 * o["dlm_km"] ** 2.41)
    alpha = np.maximum(-0.6 - 3.5e-9 * d ** 3.1 * tau, -3.4)
    mu2 = np.minimum((500.0 / ae_km * d ** 2 / (np.sqrt(o["hte_m"]) + np.sqrt(o["hre_m"])) ** 2) ** alpha, 1.0)
    di = np.minimum(d - dlt - dlr, 40.0)
    mu3 = np.where(o["hm_m"] <= 10.0, 1.0, np.exp(-4.6e-5 * (o["hm_m"] - 10.0) * (43.0 + 6.0 * di)))
    beta = o["beta0_percent"] * mu2 * mu3
    log_b = np.log10(beta)
    gamma = (1.076 / (2.0058 - log_b) ** 1.012
             * np.exp(-(9.51 - 4.8 * log_b + 0.198 * log_b ** 2) * 1e-6 * d ** 1.13))
    p_beta = np.asarray(time_percent, dtype=float) / beta
    a_p = -12.0 + (1.2 + 3.7e-3 * d) * np.log10(p_beta) + 12.0 * p_beta ** gamma
    return af + gamma_d * theta_p + a_p


def ducting_blend(out, time_percent):
    """The blend of diffraction, line-of-sight and ducting losses before troposcatter is added [dB].

    Parameters
    ----------
    out : dict
        ``d_km``, ``theta_mrad``, ``w_sea_fraction``, ``beta0_percent``,
        ``lb0p_db``, ``lb0b_db``, ``ldp_db``, ``lbd50_db``, ``lbd_db``,
        ``lba_db``, ``fi``.
    time_percent : float or ndarray, shape (L,)
        Time percentage p [%].

    Returns
    -------
    dict of ndarray, shape (L,)
        ``fj`` (eq. 57), ``fk`` (eq. 58) [-], ``lminb0p_db`` (eq. 59),
        ``lminbap_db`` (eq. 60), ``lbda_db`` (eq. 61), ``lbam_db``
        (eq. 62) [dB].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.6, eqs. (57)-(62).
    """
    o = out
    fj = 1.0 - 0.5 * (1.0 + np.tanh(3.0 * 0.8 * (o["theta_mrad"] - 0.3) / 0.3))                # eq. (57)
    fk = 1.0 - 0.5 * (1.0 + np.tanh(3.0 * 0.5 * (o["d_km"] - 20.0) / 20.0))                     # eq. (58)
    land_ldp = (1.0 - o["w_sea_fraction"]) * o["ldp_db"]
    lminb0p = np.where(np.asarray(time_percent) < o["beta0_percent"], o["lb0p_db"] + land_ldp,
                       o["lbd50_db"] + (o["lb0b_db"] + land_ldp - o["lbd50_db"]) * o["fi"])      # eq. (59)
    eta = 2.5
    lminbap = eta * np.logaddexp(o["lba_db"] / eta, o["lb0p_db"] / eta)                        # eq. (60)
    lbd = o["lbd_db"]
    lbda = np.where(lminbap > lbd, lbd, lminbap + (lbd - lminbap) * fk)                       # eq. (61)
    lbam = lbda + (lminb0p - lbda) * fj                                                        # eq. (62)
    return {"fj": fj, "fk": fk, "lminb0p_db": lminb0p, "lminbap_db": lminbap, "lbda_db": lbda, "lbam_db": lbam}


def combined_losses(out, f_ghz):
    """Overall basic transmission loss at the median location, and the field strength for 1 kW e.r.p.

    Parameters
    ----------
    out : dict
        ``lbs_db``, ``lbam_db``, ``lb0p_db`` [dB].
    f_ghz : float or ndarray, shape (L,)
        Frequency [GHz].

    Returns
    -------
    dict of ndarray, shape (L,)
        ``lbc_db`` (eq. 63) and ``lb_db`` (eq. 69 at 50 % of locations,
        where the location term is zero) [dB], and ``e_dbuv_m``
        (eq. 70, for 1 kW e.r.p.) [dBµV/m].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.7, eq. (63), section 4.9,
       eq. (69), and section 4.10 (or 5), eq. (70).
    """
    lbc = -5.0 * np.log10(10.0 ** (-0.2 * out["lbs_db"]) + 10.0 ** (-0.2 * out["lbam_db"]))   # eq. (63)
    lb = np.maximum(out["lb0p_db"], lbc)                                                        # eq. (69)
    e = 199.36 + 20.0 * np.log10(np.asarray(f_ghz, dtype=float)) - lb                          # eq. (70)
    return {"lbc_db": lbc, "lb_db": lb, "e_dbuv_m": e}


def p1812_batch(distance_km, height_m, clutter_m, zone, n_samples, *, f_ghz, time_percent, htg_m, hrg_m,
                vertical, delta_n, n0, lat_t_deg, lon_t_deg, lat_r_deg, lon_r_deg, dct_km=500.0, dcr_km=500.0):
    """ITU-R P.1812-8 for many terrain profiles at once: the named intermediate values.

    Parameters
    ----------
    distance_km : ndarray, shape (L, N)
        Distances from the transmitter [km], padded (NaN beyond ``n_samples``).
    height_m : ndarray, shape (L, N)
        Terrain heights h_i [m amsl].
    clutter_m : ndarray, shape (L, N)
        Representative clutter heights R_i [m], added at the interior points.
    zone : ndarray of int, shape (L, N)
        Radio-meteorological zone codes [-] (1 sea, 3 coastal land, 4 inland).
    n_samples : ndarray of int, shape (L,)
        Samples per path (a count), at least 3.
    f_ghz : float or ndarray, shape (L,)
        Frequency [GHz], 0.03 to 6.
    time_percent : float or ndarray, shape (L,)
        Time percentage p [%], 1 to 50.
    htg_m, hrg_m : float or ndarray, shape (L,)
        Antenna heights above ground [m].
    vertical : bool or ndarray of bool, shape (L,)
        Vertical polarization (else horizontal).
    delta_n : float or ndarray, shape (L,)
        Refractivity lapse rate ΔN [N-units/km].
    n0 : float or ndarray, shape (L,)
        Sea-level surface refractivity N0 [N-units].
    lat_t_deg, lon_t_deg, lat_r_deg, lon_r_deg : float or ndarray, shape (L,)
        Terminal coordinates [deg].
    dct_km, dcr_km : float or ndarray, shape (L,)
        Distances of the transmitter and the receiver from the coast [km]
        (default 500, inland; 0 for a terminal at sea).

    Returns
    -------
    dict of ndarray, shape (L,)
        Keyed by the column names of the SG3 validation examples, units in
        the names ([km], [m], [mrad], [deg], [%], [dB]).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 sections 3-4 and Attachment 1.
    """
    f_ghz = np.asarray(f_ghz, dtype=float)
    ae = effective_radius_km(delta_n)
    geo = path_geometry(distance_km, height_m, n_samples, htg_m, hrg_m, f_ghz, ae)
    out = {k: v for k, v in geo.items() if k not in ("ilt", "ilr")}
    d, h, g, _, _, n, _ = _profile(distance_km, height_m, clutter_m, n_samples)
    out.update(zone_sections_km(np.where(np.isfinite(distance_km), distance_km, np.nan), zone, n))
    out["phi_path_centre_deg"] = path_centre_latitude_deg(lat_t_deg, lon_t_deg, lat_r_deg, lon_r_deg,
                                                             out["d_km"])
    out["beta0_percent"] = beta0_percent(out["phi_path_centre_deg"], out["dtm_km"], out["dlm_km"])
    out["ae_km"] = ae * np.ones_like(out["d_km"])
    out["htc_table5_m"], out["hrc_table5_m"] = out["hts_m"], out["hrs_m"]
    out.update(effective_heights(distance_km, height_m, n, geo))
    out.update(basic_losses(out, f_ghz, time_percent, out["beta0_percent"]))
    out.update(diffraction_losses(d, h, g, n, out, f_ghz, time_percent, ae, vertical))
    out["lbs_db"] = troposcatter_db(out["d_km"], out["theta_mrad"], f_ghz, n0, time_percent)
    out["lba_db"] = ducting_db(out, f_ghz, time_percent, ae, dct_km, dcr_km)
    out.update(ducting_blend(out, time_percent))
    out.update(combined_losses(out, f_ghz))
    return out


def _diffraction(d_km, h_m, g_m, n, out, f_ghz, ae_km, vertical):
    """Delta-Bullington of P.1812-8 section 4.3 (= P.452-18 section 4.2): Bullington over g, smooth surface of h."""
    from .diffraction_batch import diffraction_batch

    return diffraction_batch(d_km * 1000.0, h_m, n, out["hts_m"], out["hrs_m"], f_ghz * 1000.0, ae_km * 1000.0,
                             vertical=vertical, sea_fraction=out["w_sea_fraction"], bullington_height_m=g_m)
