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


# ---------------------------------------------------------------------------
# Batched cores: many profiles at once (links x samples, padded)
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class _Paths:
    """Padded profiles in the recommendation's units; one row per path.

    ``d_km`` and ``h`` are (L, N); row l uses its first ``n[l]`` samples
    (site A first, site B at ``n[l] - 1``); ``interior`` masks samples
    1 .. n - 2.  ``di`` and ``dd`` are the distances to each end, set to 1 km
    outside the interior so that no division fails there.
    """

    d_km: np.ndarray
    h: np.ndarray
    n: np.ndarray
    d_total: np.ndarray
    interior: np.ndarray
    di: np.ndarray
    dd: np.ndarray
    bulge: np.ndarray
    h_first: np.ndarray
    h_last: np.ndarray


def _paths(d_km, h, n, ae_km):
    d_km = np.asarray(d_km, dtype=float)
    h = np.asarray(h, dtype=float)
    n = np.asarray(n, dtype=np.int64)
    rows = np.arange(d_km.shape[0])
    cols = np.arange(d_km.shape[1])
    valid = cols[None, :] < n[:, None]
    d_km = np.where(valid, d_km, 0.0)       # padding (NaN or anything) never reaches a sum
    interior = (cols >= 1) & (cols[None, :] < (n - 1)[:, None])
    d_total = d_km[rows, n - 1]
    di = np.where(interior, d_km, 1.0)
    dd = np.where(interior, d_total[:, None] - d_km, 1.0)
    ae = np.asarray(ae_km, dtype=float).reshape(-1, 1) if np.ndim(ae_km) else ae_km
    bulge = np.where(interior, bulge_km_term(di, dd, ae), 0.0)
    return _Paths(d_km, np.where(valid, h, 0.0), n, d_total, interior, di, dd, bulge, h[:, 0], h[rows, n - 1])


def _masked_max(values, mask):
    return np.max(np.where(mask, values, -np.inf), axis=-1)


def _col(x):
    return np.asarray(x, dtype=float).reshape(-1, 1) if np.ndim(x) else float(x)


# ---------------------------------------------------------------------------
# Elementwise terms of one interior sample (plain arithmetic on arrays or
# floats).  The numpy reductions below and the numba kernel of
# profiler.prefix_kernel (coverage) use these same functions.
# ---------------------------------------------------------------------------

def bulge_km_term(di_km, dd_km, ae_km):
    """Earth-curvature term 500 C_e d_i (d - d_i) of P.452-18 eq. (14) [m] (C_e = 1 / a_e [1/km])."""
    return (500.0 / ae_km) * di_km * dd_km


def slope_term(hc_m, h_end_m, distance_km):
    """Slope from an antenna to an interior point, P.452-18 eqs. (14), (18) [m/km]."""
    return (hc_m - h_end_m) / distance_km


def obstacle_term(h_m, hts_m, hrs_m, di_km, dd_km, d_km):
    """Height above the straight antenna-to-antenna line, P.452-18 eq. (165d) [m]."""
    return h_m - (hts_m * dd_km + hrs_m * di_km) / d_km


def v_unit_term(hc_m, hts_m, hrs_m, di_km, dd_km, d_km):
    """Diffraction parameter of P.452-18 eq. (16) times sqrt(wavelength) [m^0.5].

    v = v_unit / sqrt(lambda [m]); the wavelength is a common factor of every
    sample, so the reductions (maximum, its index) do not depend on it.
    """
    return obstacle_term(hc_m, hts_m, hrs_m, di_km, dd_km, d_km) * np.sqrt(0.002 * d_km / (di_km * dd_km))


def smooth_sum_terms(seg_km, d0_km, d1_km, h0_m, h1_m):
    """The summands of one profile segment in P.452-18 eqs. (161) and (162): (v1 term, v2 term)."""
    return seg_km * (h1_m + h0_m), seg_km * (h1_m * (2.0 * d1_km + d0_km) + h0_m * (d1_km + 2.0 * d0_km))


# ---------------------------------------------------------------------------
# Reductions over the interior samples (numpy) and the per-link finish
# ---------------------------------------------------------------------------

def _numpy_reducer(p: _Paths, ae_km):
    """The reduction of one Bullington pass over padded profiles (see :func:`diffraction_reductions`)."""

    def reduce(actual, hts, hrs):
        hc = np.where(p.interior, p.h + p.bulge, 0.0) if actual else p.bulge
        d = p.d_total[:, None]
        v = np.where(p.interior, v_unit_term(hc, _col(hts), _col(hrs), p.di, p.dd, d), -np.inf)
        out = {"stim": _masked_max(slope_term(hc, _col(hts), p.di), p.interior),      # eq. (14)
               "srim": _masked_max(slope_term(hc, _col(hrs), p.dd), p.interior),      # eq. (18)
               "v_unit": np.max(v, axis=1), "v_index": np.argmax(v, axis=1)}           # eq. (16)
        if actual:
            cols = np.arange(p.d_km.shape[1] - 1)
            seg_ok = cols[None, :] < (p.n - 1)[:, None]
            seg = np.where(seg_ok, np.diff(p.d_km, axis=1), 0.0)
            t1, t2 = smooth_sum_terms(seg, p.d_km[:, :-1], p.d_km[:, 1:], p.h[:, :-1], p.h[:, 1:])
            big_h = obstacle_term(p.h, _col(hts), _col(hrs), p.di, p.dd, d)          # eq. (165d)
            out.update(v1=np.sum(t1, axis=1), v2=np.sum(t2, axis=1),                  # eqs. (161), (162)
                       hobs=_masked_max(big_h, p.interior),                           # eq. (165a)
                       alpha_obt=_masked_max(big_h / p.di, p.interior),               # eq. (165b)
                       alpha_obr=_masked_max(big_h / p.dd, p.interior))               # eq. (165c)
        return out

    return reduce


def _bullington_finish(stim, srim, v_los, d, hts, hrs, wavelength_m):
    """Bullington loss from the reductions of one pass: (Lbull [dB], v [-], trans_horizon), each (L,).

    ``v_los`` is the largest v of eq. (16) [-]; P.452-18 eqs. (15), (17), (19)-(22).
    """
    s_tr = (hrs - hts) / d                                                       # eq. (15) [m/km]
    # Case 1 (LoS) also catches an edge exactly grazing the line, where eq. (19) is 0/0.
    los = (stim < s_tr) | (stim + srim <= 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        dbp = (hrs - hts + srim * d) / np.where(los, 1.0, stim + srim)          # eq. (19) [km]
        v_th = ((hts + stim * dbp - (hts * (d - dbp) + hrs * dbp) / d)
                * np.sqrt(0.002 * d / (wavelength_m * dbp * (d - dbp))))        # eq. (20)
    v = np.where(los, v_los, v_th)
    luc = j_knife_edge_db(v)                                                     # eqs. (17) / (21)
    lbull = luc + (1.0 - np.exp(-luc / 6.0)) * (10.0 + 0.02 * d)                # eq. (22)
    return lbull, v, ~los


def _smooth_finish(v1, v2, hobs, alpha_obt, alpha_obr, d_total, h_first, h_last):
    """(hst, hsr, hstd, hsrd) [m amsl] from the sums and obstacle maxima: P.452-18 eqs. (163)-(167)."""
    hst = (2.0 * v1 * d_total - v2) / d_total ** 2                              # eq. (163)
    hsr = (v2 - v1 * d_total) / d_total ** 2                                    # eq. (164)
    with np.errstate(divide="ignore", invalid="ignore"):
        gt = alpha_obt / (alpha_obt + alpha_obr)                                # eq. (166e)
        gr = alpha_obr / (alpha_obt + alpha_obr)                                # eq. (166f)
    obstructed = hobs > 0.0
    hstp = np.where(obstructed, hst - hobs * np.where(obstructed, gt, 0.0), hst)  # eq. (166a, c)
    hsrp = np.where(obstructed, hsr - hobs * np.where(obstructed, gr, 0.0), hsr)  # eq. (166b, d)
    hstd = np.minimum(hstp, h_first)                                            # eq. (167a, b)
    hsrd = np.minimum(hsrp, h_last)                                             # eq. (167c, d)
    return hst, hsr, hstd, hsrd


def diffraction_reductions(reduce, d_total_km, h_first_m, h_last_m, h_tx_amsl_m, h_rx_amsl_m) -> dict:
    """Everything of the delta-Bullington model that needs the profile samples, per link.

    Parameters
    ----------
    reduce : callable ``(actual, hts, hrs) -> dict``
        One Bullington pass over the interior samples of every link: with
        ``actual`` the terrain heights plus the bulge, otherwise the bulge
        alone (the smooth profile), for antenna heights ``hts``, ``hrs``
        [m amsl] of shape (L,).  Returns per-link arrays ``stim``, ``srim``
        (max of :func:`slope_term`), ``v_unit`` (max of :func:`v_unit_term`),
        optionally ``v_index`` (its sample index; else ``knife_edge_index``
        is None) and, with ``actual``, ``v1``, ``v2``
        (sums of :func:`smooth_sum_terms`), ``hobs``, ``alpha_obt``,
        ``alpha_obr`` (max of :func:`obstacle_term`, and divided by the
        distances to A and B).  The numpy reduction of
        :func:`diffraction_batch` and the numba kernel of
        :mod:`profiler.prefix_kernel` are two such callables.
    d_total_km : ndarray, shape (L,)
        Path lengths [km].
    h_first_m, h_last_m : ndarray, shape (L,)
        Ground heights at A and B [m amsl].
    h_tx_amsl_m, h_rx_amsl_m : ndarray, shape (L,)
        Antenna heights [m amsl].

    Returns
    -------
    dict of ndarray, shape (L,)
        Independent of the frequency: input of :func:`diffraction_finish`.

    References
    ----------
    ITU-R P.452-18 section 4.2 (eqs. 14-18) and Attachment 2 section 5.1.6 (eqs. 161-167).
    """
    hts = np.asarray(h_tx_amsl_m, dtype=float)
    hrs = np.asarray(h_rx_amsl_m, dtype=float)
    first = reduce(True, hts, hrs)
    hst, hsr, hstd, hsrd = _smooth_finish(first["v1"], first["v2"], first["hobs"], first["alpha_obt"],
                                          first["alpha_obr"], d_total_km, h_first_m, h_last_m)
    hts_mod, hrs_mod = hts - hstd, hrs - hsrd
    second = reduce(False, hts_mod, hrs_mod)
    return {"d_total_km": d_total_km, "hts": hts, "hrs": hrs, "stim": first["stim"], "srim": first["srim"],
            "v_unit": first["v_unit"], "v_index": first.get("v_index"), "hst": hst, "hsr": hsr, "hstd": hstd,
            "hsrd": hsrd, "hts_mod": hts_mod, "hrs_mod": hrs_mod, "smooth_stim": second["stim"],
            "smooth_srim": second["srim"], "smooth_v_unit": second["v_unit"]}


def diffraction_finish(reduced, frequency_mhz, effective_radius_m, vertical=True, sea_fraction=0.0) -> dict:
    """The losses of :func:`diffraction_batch` from :func:`diffraction_reductions` (per-link formulas only).

    References
    ----------
    ITU-R P.452-18 section 4.2 (eqs. 13-43); ITU-R P.526-15 sections 4.1 and 4.5.
    """
    f_mhz = float(frequency_mhz)
    wavelength_m = float(_wavelength_m(f_mhz))
    ae_km = np.asarray(effective_radius_m, dtype=float) * 1e-3
    r = reduced
    d, hts, hrs, hts_mod, hrs_mod = r["d_total_km"], r["hts"], r["hrs"], r["hts_mod"], r["hrs_mod"]
    root = math.sqrt(wavelength_m)
    v_max = r["v_unit"] / root
    lbulla, v_bull, trans = _bullington_finish(r["stim"], r["srim"], v_max, d, hts, hrs, wavelength_m)
    lbulls = _bullington_finish(r["smooth_stim"], r["smooth_srim"], r["smooth_v_unit"] / root, d, hts_mod,
                                hrs_mod, wavelength_m)[0]
    ldsph = spherical_earth_db(d, np.maximum(hts_mod, 0.0), np.maximum(hrs_mod, 0.0),
                               ae_km, f_mhz * 1e-3, wavelength_m, vertical, sea_fraction)
    return {"knife_edge": j_knife_edge_db(v_max), "knife_edge_index": r["v_index"], "knife_edge_v": v_max,
            "bullington": lbulla, "bullington_v": v_bull, "trans_horizon": trans,
            "delta_bullington": lbulla + np.maximum(ldsph - lbulls, 0.0),             # eq. (43)
            "bullington_smooth": lbulls, "spherical_earth": ldsph, "hst": r["hst"], "hsr": r["hsr"],
            "hstd": r["hstd"], "hsrd": r["hsrd"], "modified_height_a_m": hts_mod, "modified_height_b_m": hrs_mod}


def diffraction_batch(distance_m, height_m, n_samples, h_tx_amsl_m, h_rx_amsl_m, frequency_mhz,
                      effective_radius_m, vertical=True, sea_fraction=0.0) -> dict:
    """Knife-edge, Bullington and delta-Bullington losses of many profiles at once.

    The numpy reduction over the samples (:func:`diffraction_reductions`)
    followed by the per-link formulas (:func:`diffraction_finish`).

    Parameters
    ----------
    distance_m, height_m : ndarray, shape (L, N)
        Padded profiles: row l holds ``n_samples[l]`` samples from site A
        (distance 0) to site B; values beyond are ignored.  Distances [m]
        strictly increase; heights [m amsl].
    n_samples : ndarray of int, shape (L,)
        Samples per profile, at least 3.
    h_tx_amsl_m, h_rx_amsl_m : float or ndarray, shape (L,)
        Antenna heights at A and B [m amsl].
    frequency_mhz : float
        Frequency [MHz].
    effective_radius_m : float or ndarray, shape (L,)
        Effective Earth radius [m].
    vertical : bool or ndarray of bool
        Polarization of the spherical-Earth first-term part.
    sea_fraction : float or ndarray
        Fraction of each path over sea [-].

    Returns
    -------
    dict of ndarray, shape (L,)
        ``knife_edge`` (J(v_max)), ``knife_edge_index``, ``knife_edge_v``,
        ``bullington`` (Lbulla), ``bullington_v``, ``trans_horizon``,
        ``delta_bullington`` (Ld, eq. 43), ``bullington_smooth`` (Lbulls),
        ``spherical_earth`` (Ldsph), ``hst``, ``hsr``, ``hstd``, ``hsrd``
        [m amsl], ``modified_height_a_m``, ``modified_height_b_m``.

    References
    ----------
    ITU-R P.452-18 section 4.2 (eqs. 13-43) and Attachment 2 section 5.1.6
    (eqs. 161-167); ITU-R P.526-15 sections 4.1 and 4.5.
    """
    ae_km = np.asarray(effective_radius_m, dtype=float) * 1e-3
    p = _paths(np.asarray(distance_m, dtype=float) * 1e-3, height_m, n_samples, ae_km)
    hts = np.broadcast_to(np.asarray(h_tx_amsl_m, dtype=float), p.d_total.shape)
    hrs = np.broadcast_to(np.asarray(h_rx_amsl_m, dtype=float), p.d_total.shape)
    reduced = diffraction_reductions(_numpy_reducer(p, ae_km), p.d_total, p.h_first, p.h_last, hts, hrs)
    return diffraction_finish(reduced, frequency_mhz, effective_radius_m, vertical, sea_fraction)


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
