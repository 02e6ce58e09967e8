"""ITU-R P.1812-8 losses: free space, diffraction for p % of time, troposcatter, ducting and their combination.

Per-path arrays of shape (L,), as in :mod:`profiler.propagation.p1812`;
practical units of the Recommendation (km, m, mrad, GHz, dB).  The
delta-Bullington model is :mod:`profiler.propagation.diffraction_batch`
(P.452-18 section 4.2 = P.1812-8 section 4.3), the one implementation.

References
----------
.. [1] Recommendation ITU-R P.1812-8, Annex 1 sections 4.2-4.10,
   eqs. (8)-(70).
"""

from __future__ import annotations

import numpy as np

from .geometry import EARTH_RADIUS_KM


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


def diffraction_losses(ld50_reduced, ldb_reduced, out, f_ghz, time_percent, ae_km, vertical):
    """Diffraction loss of P.1812-8 section 4.3 for p % of time, and the basic losses associated with it.

    Parameters
    ----------
    ld50_reduced, ldb_reduced : dict
        The delta-Bullington reductions
        (:func:`profiler.propagation.diffraction_batch.diffraction_reductions`)
        at a_e and at aβ = 3 x 6371 km (None: not reduced, where p >= 50 %
        makes Fi = 0; its values are then the median pass's), from
        :func:`profiler.propagation.p1812.reductions.p1812_reductions`.
    out : dict
        Path geometry and basic losses (``w_sea_fraction``,
        ``beta0_percent``, ``lbfs_db``, ``lb0p_db``).
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
    .. [1] ITU-R P.1812-8 Annex 1 section 4.3 (delta-Bullington, Lbull
       eq. 21, Ldsph eq. 27, the same model as ITU-R P.452-18 section 4.2)
       and eqs. (39)-(43) (Ld50, Ldβ with aβ = 3 x 6371 km, Fi, Ldp, Lbd50,
       Lbd).
    """
    from ..diffraction_batch import diffraction_finish

    f_mhz, sea = np.asarray(f_ghz, dtype=float) * 1000.0, out["w_sea_fraction"]
    ld50 = diffraction_finish(ld50_reduced, f_mhz, np.asarray(ae_km, dtype=float) * 1000.0, vertical, sea)
    ldb = ld50 if ldb_reduced is None else diffraction_finish(ldb_reduced, f_mhz, 3.0 * EARTH_RADIUS_KM * 1000.0,
                                                              vertical, sea)
    p = np.asarray(time_percent, dtype=float)
    beta0 = out["beta0_percent"]
    if np.all(p >= 50.0):   # eq. (40): Fi = 0 at 50 % of time
        fi = np.zeros(np.broadcast_shapes(p.shape, np.shape(beta0)))
    else:
        above = p > beta0
        fi = np.where(above, inverse_normal_tail(np.where(above, p, 1.0) / 100.0)
                      / inverse_normal_tail(beta0 / 100.0), 1.0)                           # eq. (40)
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
    if not np.any(near):   # no terminal near the coast of a mostly sea path: 0 everywhere
        return np.zeros(np.shape(near))
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


def combined_losses(out, f_ghz, location_term_db=0.0):
    """Overall basic transmission loss for p % time and pL % locations, and the field strength for 1 kW e.r.p.

    Parameters
    ----------
    out : dict
        ``lbs_db``, ``lbam_db``, ``lb0p_db`` [dB].
    f_ghz : float or ndarray, shape (L,)
        Frequency [GHz].
    location_term_db : float or ndarray, shape (L,)
        -I(pL / 100) σL of :func:`profiler.propagation.p1812.location.location_term_db`
        [dB] (0: 50 % of locations).

    Returns
    -------
    dict of ndarray, shape (L,)
        ``lbc_db`` (eq. 63) and ``lb_db`` (eq. 69) [dB], and ``e_dbuv_m``
        (eq. 70, for 1 kW e.r.p.) [dBµV/m].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 eq. (63) (combination with
       troposcatter), section 4.9 eq. (69) (Lb at pL % of locations) and
       section 4.10 eq. (70) (field strength for 1 kW e.r.p.).
    """
    lbc = -5.0 * np.log10(10.0 ** (-0.2 * out["lbs_db"]) + 10.0 ** (-0.2 * out["lbam_db"]))   # eq. (63)
    lb = np.maximum(out["lb0p_db"], lbc + location_term_db)                                    # eq. (69)
    e = 199.36 + 20.0 * np.log10(np.asarray(f_ghz, dtype=float)) - lb                          # eq. (70)
    return {"lbc_db": lbc, "lb_db": lb, "e_dbuv_m": e}
