"""Diffraction loss over a terrain profile: knife edge, Bullington, delta-Bullington.

All functions are pure numpy: no loops over profile samples, no hidden state.
Profiles are 1-D arrays that include both end points (first sample = site A,
last sample = site B); distances are measured from site A in metres and
heights are metres above mean sea level.  Antenna heights are above mean sea
level too (ground + mast).  Internally the ITU-R formulas are evaluated in
their own practical units (distances in km, heights in m, wavelength in m,
frequency in GHz) so that every constant can be checked against the text.

Equation numbers below are those of the cited editions.  The
delta-Bullington model of ITU-R P.452-18 section 4.2 is the same as that of
ITU-R P.526-15 section 4.5 (and ITU-R P.1812); P.452's numbering is used.

References
----------
.. [1] Recommendation ITU-R P.526-15 (10/2019), "Propagation by diffraction":
   section 2.7 (Fresnel integrals), section 4.1 (single knife edge,
   J(v) exact and approximate forms), section 4.5 (Bullington and
   delta-Bullington method for a general terrestrial path).
.. [2] Recommendation ITU-R P.452-18 (10/2023), "Prediction procedure for the
   evaluation of interference between stations on the surface of the Earth
   at frequencies above about 0.1 GHz": section 4.2 (diffraction,
   eqs. 13-43: 4.2.1 Bullington part, 4.2.2 spherical-Earth loss,
   4.2.2.1 first-term part, 4.2.3 complete delta-Bullington loss) and
   Attachment 2 to Annex 1, section 5.1.6 (smooth-Earth heights,
   eqs. 161-167).
.. [3] ITU-R Study Group 3 validation examples for Rec. ITU-R P.452-18
   (used by the tests).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .bands import wavelength_m as _wavelength_m
from .errors import ProfilerError

__all__ = [
    "KnifeEdge",
    "SmoothEarthHeights",
    "DeltaBullington",
    "j_knife_edge_db",
    "j_knife_edge_exact_db",
    "knife_edge",
    "bullington",
    "spherical_earth",
    "smooth_earth_heights",
    "delta_bullington",
]

# Speed of light in vacuum [m/s] (SI definition).

# Ground electrical constants of P.452-18 section 4.2.2.1:
# (relative permittivity, conductivity [S/m]).
_LAND_EPS_R, _LAND_SIGMA_S_M = 22.0, 0.003
_SEA_EPS_R, _SEA_SIGMA_S_M = 80.0, 5.0

_POLARIZATIONS = ("horizontal", "vertical")


# ---------------------------------------------------------------------------
# Result types
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class KnifeEdge:
    """Single knife edge at the profile sample of largest diffraction parameter.

    Attributes
    ----------
    loss_db : float
        Knife-edge loss J(v_max) [dB].
    index : int
        Index (into the full profile arrays) of the sample with the largest v.
    v_max : float
        Largest diffraction parameter v over the interior samples [-].
    """

    loss_db: float
    index: int
    v_max: float


@dataclass(frozen=True)
class SmoothEarthHeights:
    """Smooth-Earth surface heights of P.452-18 Attachment 2 section 5.1.6.

    Attributes
    ----------
    surface_height_a_m : float
        Least-squares smooth-surface height at site A, hst [m amsl] (eq. 163).
    surface_height_b_m : float
        Least-squares smooth-surface height at site B, hsr [m amsl] (eq. 164).
    effective_height_a_m : float
        Smooth-surface height at site A used by the diffraction model,
        hstd [m amsl] (eqs. 165-167).
    effective_height_b_m : float
        Smooth-surface height at site B used by the diffraction model,
        hsrd [m amsl] (eqs. 165-167).  It may be negative (below sea level).
    """

    surface_height_a_m: float
    surface_height_b_m: float
    effective_height_a_m: float
    effective_height_b_m: float


@dataclass(frozen=True)
class DeltaBullington:
    """Complete delta-Bullington diffraction loss and its parts (P.452-18 section 4.2.3).

    Attributes
    ----------
    loss_db : float
        Ld = Lbulla + max(Ldsph - Lbulls, 0) [dB] (eq. 43).
    bullington_actual_db : float
        Lbulla, Bullington loss of the actual profile [dB].
    bullington_smooth_db : float
        Lbulls, Bullington loss of the zero-height profile with the
        modified antenna heights [dB].
    spherical_earth_db : float
        Ldsph, spherical-Earth loss for the modified antenna heights [dB].
    effective_height_a_m : float
        hstd, smooth-surface height at site A [m amsl].
    effective_height_b_m : float
        hsrd, smooth-surface height at site B [m amsl].
    modified_height_a_m : float
        h'ts = hts - hstd, antenna A height above the smooth surface [m].
    modified_height_b_m : float
        h'rs = hrs - hsrd, antenna B height above the smooth surface [m].
    trans_horizon : bool
        True when the actual profile is trans-horizon (P.452-18 section 4.2.1, case 2).
    bullington_v : float
        Diffraction parameter of the Bullington point of the actual profile [-].
    """

    loss_db: float
    bullington_actual_db: float
    bullington_smooth_db: float
    spherical_earth_db: float
    effective_height_a_m: float
    effective_height_b_m: float
    modified_height_a_m: float
    modified_height_b_m: float
    trans_horizon: bool
    bullington_v: float


# ---------------------------------------------------------------------------
# Knife-edge loss J(v)
# ---------------------------------------------------------------------------

def j_knife_edge_db(v):
    """Knife-edge diffraction loss J(v), approximate closed form [dB].

    J(v) = 6.9 + 20 log10( sqrt((v - 0.1)^2 + 1) + v - 0.1 ) for v > -0.78,
    and 0 dB otherwise.

    Parameters
    ----------
    v : array_like
        Fresnel-Kirchhoff diffraction parameter [-].

    Returns
    -------
    numpy.ndarray or numpy.float64
        Loss J(v) [dB], same shape as ``v``.

    References
    ----------
    ITU-R P.526-15 section 4.1, eq. (31); ITU-R P.452-18 section 4.2, eq. (13).
    """
    v = np.asarray(v, dtype=float)
    w = np.maximum(v, -0.78) - 0.1  # clip: the formula is only used above -0.78
    loss = 6.9 + 20.0 * np.log10(np.sqrt(w * w + 1.0) + w)
    return np.where(v > -0.78, loss, 0.0)[()]


def j_knife_edge_exact_db(v):
    """Knife-edge diffraction loss J(v) from the Fresnel integrals [dB].

    J(v) = -20 log10( sqrt([1 - C(v) - S(v)]^2 + [C(v) - S(v)]^2) / 2 ),
    with C(v) = integral_0^v cos(pi t^2 / 2) dt and S(v) = integral_0^v
    sin(pi t^2 / 2) dt (``scipy.special.fresnel`` uses the same definition
    and returns ``(S, C)``).

    Parameters
    ----------
    v : array_like
        Fresnel-Kirchhoff diffraction parameter [-].

    Returns
    -------
    numpy.ndarray or numpy.float64
        Loss J(v) [dB], same shape as ``v``; tends to 0 dB for v -> -inf.

    References
    ----------
    ITU-R P.526-15 section 2.7 (Fresnel integrals) and section 4.1,
    eqs. (26)-(27).
    """
    v = np.asarray(v, dtype=float)
    from scipy.special import fresnel  # imported here: keeps CLI start-up fast

    s, c = fresnel(v)
    magnitude = np.sqrt((1.0 - c - s) ** 2 + (c - s) ** 2) / 2.0
    return (-20.0 * np.log10(magnitude))[()]


# ---------------------------------------------------------------------------
# Input checks (private)
# ---------------------------------------------------------------------------

def _profile_km(distance_m, height_m):
    """Validate a profile; return (distance from A [km], height [m]) as float arrays."""
    try:
        d = np.asarray(distance_m, dtype=float)
        h = np.asarray(height_m, dtype=float)
    except (TypeError, ValueError):
        raise ProfilerError("profile distances and heights must be numbers; check the profile data") from None
    if d.ndim != 1 or h.ndim != 1 or d.shape != h.shape:
        raise ProfilerError(
            f"profile distance and height must be 1-D arrays of equal length (got shapes {d.shape} "
            f"and {h.shape}); pass one value per profile sample")
    if d.size < 3:
        raise ProfilerError(
            f"a diffraction profile needs at least 3 samples (got {d.size}); use a smaller sampling step")
    if not (np.isfinite(d).all() and np.isfinite(h).all()):
        raise ProfilerError("the profile contains NaN or infinite values; fill elevation voids first")
    if not (np.diff(d) > 0.0).all():
        raise ProfilerError(
            "profile distances must increase strictly from site A to site B; check the sampling")
    return (d - d[0]) * 1e-3, h


def _positive(name, value):
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ProfilerError(f"{name} must be a number (got {value!r})") from None
    if not (math.isfinite(x) and x > 0.0):
        raise ProfilerError(f"{name} must be a positive finite number (got {value!r})")
    return x


def _finite(name, value):
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ProfilerError(f"{name} must be a number (got {value!r})") from None
    if not math.isfinite(x):
        raise ProfilerError(f"{name} must be finite (got {value!r})")
    return x


def _polarization(polarization):
    pol = str(polarization).strip().lower()
    if pol not in _POLARIZATIONS:
        raise ProfilerError(f"polarization must be 'horizontal' or 'vertical' (got {polarization!r})")
    return pol


def _sea_fraction(sea_fraction):
    try:
        omega = float(sea_fraction)
    except (TypeError, ValueError):
        raise ProfilerError(f"sea fraction must be a number between 0 and 1 (got {sea_fraction!r})") from None
    if not 0.0 <= omega <= 1.0:
        raise ProfilerError(f"sea fraction must be between 0 and 1 (got {sea_fraction!r})")
    return omega


# ---------------------------------------------------------------------------
# Bullington part (P.452-18 section 4.2.1)
# ---------------------------------------------------------------------------

def _path_inputs(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m):
    """Validate a profile and both antenna heights: (d [km], h [m], h_ts [m], h_rs [m])."""
    d_km, h = _profile_km(distance_m, height_m)
    return (d_km, h, _finite("antenna height at site A", h_tx_amsl_m),
            _finite("antenna height at site B", h_rx_amsl_m))


def _interior(d_km, effective_radius_km):
    """Interior distances di, d - di [km] and Earth-curvature term 500 Ce di (d - di) [m]."""
    di = d_km[1:-1]
    d_total = float(d_km[-1])
    dd = d_total - di
    bulge = (500.0 / effective_radius_km) * di * dd
    return di, dd, d_total, bulge


def _v_profile(hc, di, dd, d_total, hts, hrs, wavelength_m):
    """Diffraction parameter of every interior sample, P.452-18 eq. (16)."""
    return (hc - (hts * dd + hrs * di) / d_total) * np.sqrt(0.002 * d_total / (wavelength_m * di * dd))


def _bullington_core(hc, di, dd, d_total, hts, hrs, wavelength_m):
    """Bullington loss of a profile whose interior heights + bulge are ``hc``.

    Returns (Lbull [dB], v of the Bullington point [-], trans_horizon).
    """
    stim = float(np.max((hc - hts) / di))                   # eq. (14) [m/km]
    s_tr = (hrs - hts) / d_total                             # eq. (15) [m/km]
    srim = float(np.max((hc - hrs) / dd)) if stim >= s_tr else 0.0  # eq. (18)
    if stim < s_tr or stim + srim <= 0.0:
        # Case 1, LoS path (the second test only catches an edge exactly grazing
        # the line, where eq. (19) is 0/0 and eq. (16) gives the same v = 0).
        v = float(np.max(_v_profile(hc, di, dd, d_total, hts, hrs, wavelength_m)))  # eq. (16)
        trans_horizon = False
    else:
        # Case 2, trans-horizon path.
        dbp = (hrs - hts + srim * d_total) / (stim + srim)  # eq. (19) [km]
        v = ((hts + stim * dbp - (hts * (d_total - dbp) + hrs * dbp) / d_total)
             * math.sqrt(0.002 * d_total / (wavelength_m * dbp * (d_total - dbp))))  # eq. (20)
        trans_horizon = True
    luc = float(j_knife_edge_db(v))                          # eqs. (17) / (21)
    lbull = luc + (1.0 - math.exp(-luc / 6.0)) * (10.0 + 0.02 * d_total)  # eq. (22)
    return lbull, v, trans_horizon


def knife_edge(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m, frequency_mhz, effective_radius_m):
    """Single knife-edge loss at the profile sample of largest diffraction parameter.

    For every interior sample i

    v_i = [h_i + 500 C_e d_i (d - d_i) - (h_ts (d - d_i) + h_rs d_i) / d]
          * sqrt(0.002 d / (lambda d_i (d - d_i)))

    (d, d_i in km, heights in m, lambda in m, C_e = 1/a_e in 1/km), and the
    loss is J(v_max).  Without Earth curvature this is P.526-15 eq. (22),
    v = h sqrt(2/lambda (1/d1 + 1/d2)).

    Parameters
    ----------
    distance_m : array_like
        Distance of each profile sample from site A [m], strictly increasing.
    height_m : array_like
        Terrain height of each sample [m amsl].
    h_tx_amsl_m, h_rx_amsl_m : float
        Antenna heights at site A and site B [m amsl].
    frequency_mhz : float
        Frequency [MHz].
    effective_radius_m : float
        Effective Earth radius a_e [m].

    Returns
    -------
    KnifeEdge
        ``loss_db`` [dB], ``index`` of the sample of largest v, ``v_max`` [-].

    References
    ----------
    ITU-R P.452-18 section 4.2.1, eq. (16); ITU-R P.526-15 section 4.1,
    eqs. (22) and (31).
    """
    d_km, h, hts, hrs = _path_inputs(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m)
    wavelength_m = _wavelength_m(_positive("frequency (MHz)", frequency_mhz))
    ae_km = _positive("effective Earth radius (m)", effective_radius_m) * 1e-3
    di, dd, d_total, bulge = _interior(d_km, ae_km)
    v = _v_profile(h[1:-1] + bulge, di, dd, d_total, hts, hrs, wavelength_m)
    i = int(np.argmax(v))
    v_max = float(v[i])
    return KnifeEdge(loss_db=float(j_knife_edge_db(v_max)), index=i + 1, v_max=v_max)


def bullington(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m, frequency_mhz, effective_radius_m):
    """Bullington diffraction loss of a terrain profile [dB].

    Finds the Bullington point (the sample of largest v on a LoS path, or the
    intersection of the steepest rays from both ends on a trans-horizon path),
    takes its knife-edge loss Luc = J(v) and applies the empirical correction
    Lbull = Luc + [1 - exp(-Luc/6)] (10 + 0.02 d).

    Parameters
    ----------
    distance_m : array_like
        Distance of each profile sample from site A [m], strictly increasing.
    height_m : array_like
        Terrain height of each sample [m amsl].
    h_tx_amsl_m, h_rx_amsl_m : float
        Antenna heights at site A and site B [m amsl].
    frequency_mhz : float
        Frequency [MHz].
    effective_radius_m : float
        Effective Earth radius a_e [m].

    Returns
    -------
    float
        Lbull [dB].

    References
    ----------
    ITU-R P.452-18 section 4.2.1, eqs. (14)-(22); ITU-R P.526-15 section 4.5.1.
    """
    d_km, h, hts, hrs = _path_inputs(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m)
    wavelength_m = _wavelength_m(_positive("frequency (MHz)", frequency_mhz))
    ae_km = _positive("effective Earth radius (m)", effective_radius_m) * 1e-3
    di, dd, d_total, bulge = _interior(d_km, ae_km)
    return _bullington_core(h[1:-1] + bulge, di, dd, d_total, hts, hrs, wavelength_m)[0]


# ---------------------------------------------------------------------------
# Spherical-Earth loss (P.452-18 section 4.2.2 and 4.2.2.1)
# ---------------------------------------------------------------------------

def _first_term_one_ground(d_km, hts, hrs, adft_km, f_ghz, eps_r, sigma, vertical):
    """First-term spherical-Earth loss for one ground type [dB], eqs. (34)-(41)."""
    k = (0.036 * (adft_km * f_ghz) ** (-1.0 / 3.0)
         * ((eps_r - 1.0) ** 2 + (18.0 * sigma / f_ghz) ** 2) ** -0.25)          # eq. (34a)
    if vertical:
        k *= math.sqrt(eps_r ** 2 + (18.0 * sigma / f_ghz) ** 2)                 # eq. (34b)
    k2 = k * k
    beta = (1.0 + 1.6 * k2 + 0.67 * k2 * k2) / (1.0 + 4.5 * k2 + 1.53 * k2 * k2)  # eq. (35)
    x = 21.88 * beta * (f_ghz / adft_km ** 2) ** (1.0 / 3.0) * d_km              # eq. (36)
    y = 0.9575 * beta * (f_ghz ** 2 / adft_km) ** (1.0 / 3.0)                    # eq. (37)
    if x >= 1.6:                                                                 # eq. (38)
        fx = 11.0 + 10.0 * math.log10(x) - 17.6 * x
    else:
        fx = -20.0 * math.log10(x) - 5.6488 * x ** 1.425
    g_min = 2.0 + 20.0 * math.log10(k)

    def height_gain(h_m):
        b = beta * y * h_m                                                       # eq. (39)
        if b > 2.0:                                                              # eq. (40)
            g = 17.6 * math.sqrt(b - 1.1) - 5.0 * math.log10(b - 1.1) - 8.0
        else:
            g = 20.0 * math.log10(b + 0.1 * b ** 3) if b > 0.0 else -math.inf
        return max(g, g_min)

    return -fx - height_gain(hts) - height_gain(hrs)                             # eq. (41)


def _first_term(d_km, hts, hrs, adft_km, f_ghz, vertical, omega):
    """First-term loss mixing land and sea, Ldft = w Ldft_sea + (1 - w) Ldft_land, eq. (33)."""
    land = _first_term_one_ground(d_km, hts, hrs, adft_km, f_ghz, _LAND_EPS_R, _LAND_SIGMA_S_M, vertical)
    if omega == 0.0:
        return land
    sea = _first_term_one_ground(d_km, hts, hrs, adft_km, f_ghz, _SEA_EPS_R, _SEA_SIGMA_S_M, vertical)
    return omega * sea + (1.0 - omega) * land


def _spherical_core(d_km, hts, hrs, ae_km, f_ghz, wavelength_m, vertical, omega):
    """Spherical-Earth diffraction loss Ldsph [dB], eqs. (23)-(32)."""
    dlos = math.sqrt(2.0 * ae_km) * (math.sqrt(0.001 * hts) + math.sqrt(0.001 * hrs))  # eq. (23)
    if d_km >= dlos:
        return _first_term(d_km, hts, hrs, ae_km, f_ghz, vertical, omega)            # eq. (24)
    c = (hts - hrs) / (hts + hrs)                                                    # eq. (25)
    m = 250.0 * d_km ** 2 / (ae_km * (hts + hrs))                                    # eq. (26)
    arg = min(1.0, max(-1.0, 1.5 * c * math.sqrt(3.0 * m / (m + 1.0) ** 3)))  # |arg| <= 1 up to rounding
    b = 2.0 * math.sqrt((m + 1.0) / (3.0 * m)) * math.cos(math.pi / 3.0 + math.acos(arg) / 3.0)  # eq. (27)
    # Rounding can push b a hair past 1 when one height is zero: keep the split on the path.
    dse1 = min(d_km, max(0.0, 0.5 * d_km * (1.0 + b)))                               # eq. (28a)
    dse2 = d_km - dse1                                                               # eq. (28b)
    hse = ((hts - 500.0 * dse1 ** 2 / ae_km) * dse2
           + (hrs - 500.0 * dse2 ** 2 / ae_km) * dse1) / d_km                        # eq. (29)
    hreq = 17.456 * math.sqrt(dse1 * dse2 * wavelength_m / d_km)                     # eq. (30)
    if hse > hreq:
        return 0.0
    aem = 500.0 * (d_km / (math.sqrt(hts) + math.sqrt(hrs))) ** 2                    # eq. (31)
    ldft = _first_term(d_km, hts, hrs, aem, f_ghz, vertical, omega)
    if ldft < 0.0:
        return 0.0
    if hreq <= 0.0:  # degenerate: closest approach at an antenna of zero height (grazing)
        return ldft
    return (1.0 - hse / hreq) * ldft                                                 # eq. (32)


def spherical_earth(distance_m, h_tx_eff_m, h_rx_eff_m, frequency_mhz, effective_radius_m,
                    polarization="vertical", sea_fraction=0.0):
    """Spherical-Earth diffraction loss Ldsph [dB].

    Beyond the smooth-Earth line-of-sight distance the first-term residue
    series loss is used directly; inside it the loss is interpolated from the
    first-term loss at the marginal-LoS radius a_em using the path clearance
    h_se relative to the required clearance h_req.  The first-term loss mixes
    land (eps_r = 22, sigma = 0.003 S/m) and sea (eps_r = 80, sigma = 5 S/m)
    by the sea fraction omega.

    Parameters
    ----------
    distance_m : float
        Path length [m].
    h_tx_eff_m, h_rx_eff_m : float
        Antenna heights above the smooth spherical surface at site A and
        site B [m] (in the delta-Bullington model h'ts = hts - hstd and
        h'rs = hrs - hsrd); must be >= 0.
    frequency_mhz : float
        Frequency [MHz].
    effective_radius_m : float
        Effective Earth radius a_e [m].
    polarization : {"vertical", "horizontal"}
        Polarization (affects the surface admittance K).
    sea_fraction : float
        Fraction omega of the path over sea, 0 to 1 [-].

    Returns
    -------
    float
        Ldsph [dB].

    References
    ----------
    ITU-R P.452-18 section 4.2.2, eqs. (23)-(32), and section 4.2.2.1,
    eqs. (33)-(41); ITU-R P.526-15 sections 3.1.1 and 3.2.
    """
    d_km = _positive("path length (m)", distance_m) * 1e-3
    hts = _finite("antenna height above the smooth Earth at site A", h_tx_eff_m)
    hrs = _finite("antenna height above the smooth Earth at site B", h_rx_eff_m)
    if hts < 0.0 or hrs < 0.0:
        raise ProfilerError("antenna heights above the smooth Earth must not be negative; check the inputs")
    f_mhz = _positive("frequency (MHz)", frequency_mhz)
    ae_km = _positive("effective Earth radius (m)", effective_radius_m) * 1e-3
    vertical = _polarization(polarization) == "vertical"
    omega = _sea_fraction(sea_fraction)
    return _spherical_core(d_km, hts, hrs, ae_km, f_mhz * 1e-3, _wavelength_m(f_mhz),
                           vertical, omega)


# ---------------------------------------------------------------------------
# Smooth-Earth heights (P.452-18 Attachment 2, section 5.1.6)
# ---------------------------------------------------------------------------

def _smooth_heights_core(d_km, h, hts, hrs):
    """Return (hst, hsr, hstd, hsrd) [m amsl]."""
    d_total = float(d_km[-1])
    seg = np.diff(d_km)
    d0, d1 = d_km[:-1], d_km[1:]
    h0, h1 = h[:-1], h[1:]
    v1 = float(np.dot(seg, h1 + h0))                                        # eq. (161)
    v2 = float(np.dot(seg, h1 * (2.0 * d1 + d0) + h0 * (d1 + 2.0 * d0)))    # eq. (162)
    hst = (2.0 * v1 * d_total - v2) / d_total ** 2                          # eq. (163)
    hsr = (v2 - v1 * d_total) / d_total ** 2                                # eq. (164)

    di = d_km[1:-1]
    big_h = h[1:-1] - (hts * (d_total - di) + hrs * di) / d_total            # eq. (165d)
    hobs = float(np.max(big_h))                                             # eq. (165a)
    if hobs <= 0.0:
        hstp, hsrp = hst, hsr                                               # eq. (166a, b)
    else:
        alpha_obt = float(np.max(big_h / di))                               # eq. (165b)
        alpha_obr = float(np.max(big_h / (d_total - di)))                   # eq. (165c)
        gt = alpha_obt / (alpha_obt + alpha_obr)                            # eq. (166e)
        gr = alpha_obr / (alpha_obt + alpha_obr)                            # eq. (166f)
        hstp = hst - hobs * gt                                              # eq. (166c)
        hsrp = hsr - hobs * gr                                              # eq. (166d)
    hstd = min(hstp, float(h[0]))                                           # eq. (167a, b)
    hsrd = min(hsrp, float(h[-1]))                                          # eq. (167c, d)
    return hst, hsr, hstd, hsrd


def smooth_earth_heights(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m):
    """Smooth-Earth surface heights at both ends of a profile.

    A least-squares straight line is fitted to the profile (hst, hsr); for the
    diffraction model it is lowered by the highest obstruction above the
    flat-Earth antenna-to-antenna line, shared between the two ends in
    proportion to the obstruction elevation angles, and capped at the ground
    height of each end (hstd, hsrd).  hsrd or hstd may be negative.

    Parameters
    ----------
    distance_m : array_like
        Distance of each profile sample from site A [m], strictly increasing.
    height_m : array_like
        Terrain height of each sample [m amsl].
    h_tx_amsl_m, h_rx_amsl_m : float
        Antenna heights at site A and site B [m amsl].

    Returns
    -------
    SmoothEarthHeights
        hst, hsr, hstd, hsrd [m amsl].

    References
    ----------
    ITU-R P.452-18 Attachment 2 to Annex 1, section 5.1.6.2, eqs. (161)-(164),
    and section 5.1.6.3, eqs. (165)-(167).
    """
    d_km, h, hts, hrs = _path_inputs(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m)
    hst, hsr, hstd, hsrd = _smooth_heights_core(d_km, h, hts, hrs)
    return SmoothEarthHeights(surface_height_a_m=hst, surface_height_b_m=hsr,
                              effective_height_a_m=hstd, effective_height_b_m=hsrd)


# ---------------------------------------------------------------------------
# Complete delta-Bullington model (P.452-18 section 4.2.3)
# ---------------------------------------------------------------------------

def delta_bullington(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m, frequency_mhz, effective_radius_m,
                     polarization="vertical", sea_fraction=0.0):
    """Complete delta-Bullington diffraction loss of a terrain profile.

    Ld = Lbulla + max(Ldsph - Lbulls, 0), where Lbulla is the Bullington loss
    of the actual profile, Lbulls the Bullington loss of a zero-height profile
    with antenna heights h'ts = hts - hstd and h'rs = hrs - hsrd, and Ldsph
    the spherical-Earth loss for those same heights.

    Parameters
    ----------
    distance_m : array_like
        Distance of each profile sample from site A [m], strictly increasing;
        the first sample is site A and the last site B.
    height_m : array_like
        Terrain height of each sample [m amsl].
    h_tx_amsl_m, h_rx_amsl_m : float
        Antenna heights at site A and site B [m amsl] (ground + mast).
    frequency_mhz : float
        Frequency [MHz].
    effective_radius_m : float
        Effective Earth radius a_e [m] (e.g. the median value for k50).
    polarization : {"vertical", "horizontal"}
        Polarization, used by the spherical-Earth first-term part.
    sea_fraction : float
        Fraction omega of the path over sea, 0 to 1 [-].

    Returns
    -------
    DeltaBullington
        Ld and its parts [dB], with hstd, hsrd and the modified heights [m].

    References
    ----------
    ITU-R P.452-18 section 4.2.3, eqs. (42)-(43), using sections 4.2.1,
    4.2.2, 4.2.2.1 and Attachment 2 section 5.1.6; ITU-R P.526-15
    section 4.5.2.
    """
    d_km, h, hts, hrs = _path_inputs(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m)
    f_mhz = _positive("frequency (MHz)", frequency_mhz)
    ae_km = _positive("effective Earth radius (m)", effective_radius_m) * 1e-3
    vertical = _polarization(polarization) == "vertical"
    omega = _sea_fraction(sea_fraction)
    wavelength_m = _wavelength_m(f_mhz)

    di, dd, d_total, bulge = _interior(d_km, ae_km)
    # Bullington loss of the actual profile, Lbulla.
    lbulla, v_actual, trans_horizon = _bullington_core(h[1:-1] + bulge, di, dd, d_total, hts, hrs,
                                                       wavelength_m)
    # Smooth-surface heights and modified antenna heights (hstd <= h1 and
    # hsrd <= hn, so both modified heights are at least the mast heights).
    _, _, hstd, hsrd = _smooth_heights_core(d_km, h, hts, hrs)
    hts_mod = hts - hstd
    hrs_mod = hrs - hsrd
    # Bullington loss of the zero-height profile, Lbulls.
    lbulls = _bullington_core(bulge, di, dd, d_total, hts_mod, hrs_mod, wavelength_m)[0]
    # Spherical-Earth loss for the modified heights, Ldsph.
    ldsph = _spherical_core(d_total, max(hts_mod, 0.0), max(hrs_mod, 0.0), ae_km, f_mhz * 1e-3,
                            wavelength_m, vertical, omega)
    loss = lbulla + max(ldsph - lbulls, 0.0)                                # eq. (43)
    return DeltaBullington(
        loss_db=loss,
        bullington_actual_db=lbulla,
        bullington_smooth_db=lbulls,
        spherical_earth_db=ldsph,
        effective_height_a_m=hstd,
        effective_height_b_m=hsrd,
        modified_height_a_m=hts_mod,
        modified_height_b_m=hrs_mod,
        trans_horizon=trans_horizon,
        bullington_v=v_actual,
    )
