"""Spherical-Earth diffraction loss (ITU-R P.452-18 sections 4.2.2 and 4.2.2.1), vectorized over paths.

Every function takes arrays with one value per path (or scalars) and
evaluates the branches of the recommendation with ``numpy.where``, so that a
single link and a batch of thousands share the same code.  Practical units
of the recommendation: distances in km, heights in m, frequency in GHz.

References
----------
.. [1] Recommendation ITU-R P.452-18 (10/2023), section 4.2.2, eqs. (23)-(32)
   (spherical-Earth loss) and section 4.2.2.1, eqs. (33)-(41) (first-term
   part); ITU-R P.526-15 sections 3.1.1 and 3.2.
"""

from __future__ import annotations

import numpy as np

# Ground electrical constants of P.452-18 section 4.2.2.1: (relative permittivity, conductivity [S/m]).
LAND_EPS_R, LAND_SIGMA_S_M = 22.0, 0.003
SEA_EPS_R, SEA_SIGMA_S_M = 80.0, 5.0


def first_term_one_ground_db(d_km, hts_m, hrs_m, adft_km, f_ghz, eps_r, sigma_s_m, vertical):
    """First-term spherical-Earth loss for one ground type [dB], P.452-18 eqs. (34)-(41).

    Parameters
    ----------
    d_km : float or ndarray
        Path length [km].
    hts_m, hrs_m : float or ndarray
        Antenna heights above the smooth spherical surface [m].
    adft_km : float or ndarray
        Effective Earth radius used by the first term [km].
    f_ghz : float
        Frequency [GHz].
    eps_r : float
        Relative permittivity of the ground [-].
    sigma_s_m : float
        Conductivity of the ground [S/m].
    vertical : bool or ndarray of bool
        Vertical polarization (eq. 34b).

    Returns
    -------
    loss_db : float or ndarray
        First-term loss for that ground [dB].

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2.2.1, eqs. (34a)-(41).
    """
    d_km, hts, hrs, adft = (np.asarray(x, dtype=float) for x in (d_km, hts_m, hrs_m, adft_km))
    k = (0.036 * (adft * f_ghz) ** (-1.0 / 3.0)
         * ((eps_r - 1.0) ** 2 + (18.0 * sigma_s_m / f_ghz) ** 2) ** -0.25)          # eq. (34a)
    k = np.where(vertical, k * np.sqrt(eps_r ** 2 + (18.0 * sigma_s_m / f_ghz) ** 2), k)  # eq. (34b)
    k2 = k * k
    beta = (1.0 + 1.6 * k2 + 0.67 * k2 * k2) / (1.0 + 4.5 * k2 + 1.53 * k2 * k2)    # eq. (35)
    x = 21.88 * beta * (f_ghz / adft ** 2) ** (1.0 / 3.0) * d_km                     # eq. (36)
    y = 0.9575 * beta * (f_ghz ** 2 / adft) ** (1.0 / 3.0)                           # eq. (37)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_x = np.log10(x)
        fx = np.where(x >= 1.6, 11.0 + 10.0 * log_x - 17.6 * x, -20.0 * log_x - 5.6488 * x ** 1.425)  # eq. (38)
    g_min = 2.0 + 20.0 * np.log10(k)

    def height_gain(h_m):
        b = beta * y * h_m                                                           # eq. (39)
        with np.errstate(divide="ignore", invalid="ignore"):
            high = 17.6 * np.sqrt(np.maximum(b - 1.1, 0.0)) - 5.0 * np.log10(np.maximum(b - 1.1, 1e-300)) - 8.0
            low = np.where(b > 0.0, 20.0 * np.log10(np.maximum(b + 0.1 * b ** 3, 1e-300)), -np.inf)
        return np.maximum(np.where(b > 2.0, high, low), g_min)                       # eq. (40)

    return -fx - height_gain(hts) - height_gain(hrs)                                 # eq. (41)


def first_term_db(d_km, hts_m, hrs_m, adft_km, f_ghz, vertical, sea_fraction):
    """First-term loss mixing land and sea, Ldft = w Ldft_sea + (1 - w) Ldft_land, eq. (33).

    Parameters
    ----------
    d_km : float or ndarray
        Path length [km].
    hts_m, hrs_m : float or ndarray
        Antenna heights above the smooth spherical surface [m].
    adft_km : float or ndarray
        Effective Earth radius used by the first term [km].
    f_ghz : float
        Frequency [GHz].
    vertical : bool or ndarray of bool
        Vertical polarization.
    sea_fraction : float or ndarray
        Fraction omega of the path over sea [-], 0 to 1.

    Returns
    -------
    loss_db : float or ndarray
        First-term loss Ldft [dB].

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2.2.1, eq. (33); ground constants of
       the same section (land eps_r = 22, sigma = 0.003 S/m; sea
       eps_r = 80, sigma = 5 S/m).
    """
    land = first_term_one_ground_db(d_km, hts_m, hrs_m, adft_km, f_ghz, LAND_EPS_R, LAND_SIGMA_S_M, vertical)
    omega = np.asarray(sea_fraction, dtype=float)
    if not np.any(omega):
        return land
    sea = first_term_one_ground_db(d_km, hts_m, hrs_m, adft_km, f_ghz, SEA_EPS_R, SEA_SIGMA_S_M, vertical)
    return omega * sea + (1.0 - omega) * land


def spherical_earth_db(d_km, hts_m, hrs_m, ae_km, f_ghz, wavelength_m, vertical, sea_fraction):
    """Spherical-Earth diffraction loss Ldsph [dB], P.452-18 eqs. (23)-(32), vectorized over paths.

    Parameters
    ----------
    d_km : float or ndarray
        Path length [km].
    hts_m, hrs_m : float or ndarray
        Antenna heights above the smooth spherical surface [m], >= 0.
    ae_km : float or ndarray
        Effective Earth radius [km].
    f_ghz : float
        Frequency [GHz].
    wavelength_m : float
        Wavelength [m].
    vertical : bool or ndarray of bool
        Vertical polarization (surface admittance K, eq. 34b).
    sea_fraction : float or ndarray
        Fraction omega of the path over sea [-].

    Returns
    -------
    ndarray
        Ldsph [dB], one value per path.

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2.2, eqs. (23)-(32).
    """
    d, hts, hrs, ae = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (d_km, hts_m, hrs_m, ae_km)))
    dlos = np.sqrt(2.0 * ae) * (np.sqrt(0.001 * hts) + np.sqrt(0.001 * hrs))          # eq. (23)
    with np.errstate(divide="ignore", invalid="ignore"):
        hsum = np.where(hts + hrs > 0, hts + hrs, 1.0)
        c = (hts - hrs) / hsum                                                        # eq. (25)
        m = 250.0 * d ** 2 / (ae * hsum)                                              # eq. (26)
        arg = np.clip(1.5 * c * np.sqrt(3.0 * m / (m + 1.0) ** 3), -1.0, 1.0)
        b = 2.0 * np.sqrt((m + 1.0) / (3.0 * m)) * np.cos(np.pi / 3.0 + np.arccos(arg) / 3.0)  # eq. (27)
        b = np.where(np.isfinite(b), b, 0.0)
        dse1 = np.minimum(d, np.maximum(0.0, 0.5 * d * (1.0 + b)))                   # eq. (28a)
        dse2 = d - dse1                                                               # eq. (28b)
        hse = ((hts - 500.0 * dse1 ** 2 / ae) * dse2 + (hrs - 500.0 * dse2 ** 2 / ae) * dse1) / d  # eq. (29)
        hreq = 17.456 * np.sqrt(dse1 * dse2 * wavelength_m / d)                       # eq. (30)
        root = np.sqrt(hts) + np.sqrt(hrs)
        aem = 500.0 * (d / np.where(root > 0, root, 1.0)) ** 2                         # eq. (31)
    beyond = d >= dlos   # eq. (24): the first term at ae; within the horizon, at aem (eq. 31) in eq. (32)
    ldft = first_term_db(d, hts, hrs, np.where(beyond, ae, aem), f_ghz, vertical, sea_fraction)
    with np.errstate(divide="ignore", invalid="ignore"):
        inside = np.where(hreq <= 0.0, ldft, (1.0 - hse / np.where(hreq > 0, hreq, 1.0)) * ldft)  # eq. (32)
    inside = np.where((hse > hreq) | (ldft < 0.0), 0.0, inside)
    return np.where(beyond, ldft, inside)
