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

from ..errors import ProfilerError
from .diffraction_batch import diffraction_batch, j_knife_edge_db, j_knife_edge_exact_db
from .free_space import wavelength_m as _wavelength_m
from .spherical_earth import spherical_earth_db

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


_POLARIZATIONS = ("horizontal", "vertical")


# ---------------------------------------------------------------------------
# Result types
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class KnifeEdge:
    """Single knife edge at the profile sample of largest diffraction parameter.

    Parameters
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

    Parameters
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

    Parameters
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


def _one(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m, frequency_mhz, effective_radius_m,
         polarization="vertical", sea_fraction=0.0):
    """Validate one profile and run :func:`diffraction_batch` on it; scalars out."""
    d_km, h, hts, hrs = _path_inputs(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m)
    f = _positive("frequency (MHz)", frequency_mhz)
    ae = _positive("effective Earth radius (m)", effective_radius_m)
    vertical = _polarization(polarization) == "vertical"
    omega = _sea_fraction(sea_fraction)
    out = diffraction_batch(d_km[None, :] * 1e3, h[None, :], np.array([d_km.size]), hts, hrs, f, ae,
                            vertical, omega)
    return out  # arrays of length 1


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
    out = _one(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m, frequency_mhz, effective_radius_m)
    return KnifeEdge(loss_db=float(out["knife_edge"][0]), index=int(out["knife_edge_index"][0]),
                     v_max=float(out["knife_edge_v"][0]))


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
    return float(_one(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m, frequency_mhz,
                      effective_radius_m)["bullington"][0])


# ---------------------------------------------------------------------------
# Spherical-Earth loss (P.452-18 section 4.2.2 and 4.2.2.1)
# ---------------------------------------------------------------------------

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
    return float(spherical_earth_db(d_km, hts, hrs, ae_km, f_mhz * 1e-3, _wavelength_m(f_mhz), vertical, omega))


# ---------------------------------------------------------------------------
# Smooth-Earth heights (P.452-18 Attachment 2, section 5.1.6)
# ---------------------------------------------------------------------------

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
    out = _one(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m, 1000.0, 8.5e6)
    hst, hsr, hstd, hsrd = float(out["hst"][0]), float(out["hsr"][0]), float(out["hstd"][0]), float(out["hsrd"][0])
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
    out = _one(distance_m, height_m, h_tx_amsl_m, h_rx_amsl_m, frequency_mhz, effective_radius_m,
               polarization, sea_fraction)
    lbulla, lbulls = float(out["bullington"][0]), float(out["bullington_smooth"][0])
    ldsph, loss = float(out["spherical_earth"][0]), float(out["delta_bullington"][0])
    hstd, hsrd = float(out["hstd"][0]), float(out["hsrd"][0])
    hts_mod, hrs_mod = float(out["modified_height_a_m"][0]), float(out["modified_height_b_m"][0])
    trans_horizon, v_actual = bool(out["trans_horizon"][0]), float(out["bullington_v"][0])
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
