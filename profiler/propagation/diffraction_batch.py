"""The diffraction engine over many profiles at once (links x samples, padded).

:mod:`profiler.propagation.diffraction` is the single-profile API (validated against the
ITU-R SG3 examples); every one of its functions is a batch of one through
:func:`diffraction_batch` here.  The model is split along what it needs:

* elementwise terms of one interior sample (plain arithmetic on numpy arrays
  or floats): :func:`bulge_km_term`, :func:`slope_term`,
  :func:`obstacle_term`, :func:`v_unit_term`, :func:`smooth_sum_terms`.
  The numpy reductions here and the numba kernel of
  :mod:`profiler.propagation.prefix_kernel` (``profiler coverage``) use these same
  functions;
* :func:`diffraction_reductions`: the maxima and sums over the samples of
  every link (two Bullington passes and the smooth-Earth heights),
  independent of the frequency;
* :func:`diffraction_finish`: per-link formulas only (J(v), eqs. 15, 19-22,
  the spherical Earth, eq. 43).

Practical units of the recommendations inside: distances in km, heights in
m, wavelength in m.

References
----------
.. [1] Recommendation ITU-R P.526-15 (10/2019), section 2.7 and 4.1 (J(v)),
   section 4.5 (Bullington and delta-Bullington).
.. [2] Recommendation ITU-R P.452-18 (10/2023), section 4.2 (eqs. 13-43) and
   Attachment 2 to Annex 1, section 5.1.6 (eqs. 161-167).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .free_space import wavelength_m as _wavelength_m
from .spherical_earth import spherical_earth_db

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
# profiler.propagation.prefix_kernel (coverage) use these same functions.
# ---------------------------------------------------------------------------

def bulge_km_term(di_km, dd_km, ae_km):
    """Earth-curvature term 500 C_e d_i (d - d_i) of P.452-18 eq. (14) [m] (C_e = 1 / a_e [1/km]).

    Parameters
    ----------
    di_km : float or ndarray
        Distance of the sample from site A, d_i [km].
    dd_km : float or ndarray
        Distance of the sample from site B, d - d_i [km].
    ae_km : float or ndarray
        Effective Earth radius a_e [km].

    Returns
    -------
    bulge_m : float or ndarray
        Earth-curvature height [m].

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2.1, eq. (14).
    """
    return (500.0 / ae_km) * di_km * dd_km


def slope_term(hc_m, h_end_m, distance_km):
    """Slope from an antenna to an interior point, P.452-18 eqs. (14), (18) [m/km].

    Parameters
    ----------
    hc_m : float or ndarray
        Height of the point, terrain plus Earth curvature [m amsl].
    h_end_m : float or ndarray
        Antenna height at the end the slope is taken from [m amsl].
    distance_km : float or ndarray
        Distance of the point from that end [km], greater than 0.

    Returns
    -------
    slope_m_per_km : float or ndarray
        (hc - h_end) / distance [m/km].

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2.1, eqs. (14) and (18).
    """
    return (hc_m - h_end_m) / distance_km


def obstacle_term(h_m, hts_m, hrs_m, di_km, dd_km, d_km):
    """Height above the straight antenna-to-antenna line, P.452-18 eq. (165d) [m].

    Parameters
    ----------
    h_m : float or ndarray
        Height of the point [m amsl].
    hts_m, hrs_m : float or ndarray
        Antenna heights at A and B [m amsl].
    di_km : float or ndarray
        Distance of the point from A [km].
    dd_km : float or ndarray
        Distance of the point from B [km].
    d_km : float or ndarray
        Path length [km], greater than 0.

    Returns
    -------
    height_m : float or ndarray
        Height of the point above the line [m]; negative below it.

    References
    ----------
    .. [1] ITU-R P.452-18 Attachment 2 section 5.1.6, eq. (165d).
    """
    return h_m - (hts_m * dd_km + hrs_m * di_km) / d_km


def v_unit_term(hc_m, hts_m, hrs_m, di_km, dd_km, d_km):
    """Diffraction parameter of P.452-18 eq. (16) times sqrt(wavelength) [m^0.5].

    v = v_unit / sqrt(lambda [m]); the wavelength is a common factor of every
    sample, so the reductions (maximum, its index) do not depend on it.

    Parameters
    ----------
    hc_m : float or ndarray
        Height of the point, terrain plus Earth curvature [m amsl].
    hts_m, hrs_m : float or ndarray
        Antenna heights at A and B [m amsl].
    di_km : float or ndarray
        Distance of the point from A [km], greater than 0.
    dd_km : float or ndarray
        Distance of the point from B [km], greater than 0.
    d_km : float or ndarray
        Path length [km].

    Returns
    -------
    v_unit : float or ndarray
        v sqrt(lambda) [m^0.5].

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2.1, eq. (16).
    """
    return obstacle_term(hc_m, hts_m, hrs_m, di_km, dd_km, d_km) * np.sqrt(0.002 * d_km / (di_km * dd_km))


def smooth_sum_terms(seg_km, d0_km, d1_km, h0_m, h1_m):
    """The summands of one profile segment in P.452-18 eqs. (161) and (162): (v1 term, v2 term).

    Parameters
    ----------
    seg_km : float or ndarray
        Segment length d_i - d_(i-1) [km].
    d0_km, d1_km : float or ndarray
        Distances of the segment's first and second sample from A [km].
    h0_m, h1_m : float or ndarray
        Terrain heights of those samples [m amsl].

    Returns
    -------
    v1_term : float or ndarray
        Summand of v1, eq. (161) [km m].
    v2_term : float or ndarray
        Summand of v2, eq. (162) [km^2 m].

    References
    ----------
    .. [1] ITU-R P.452-18 Attachment 2 section 5.1.6, eqs. (161)-(162).
    """
    return seg_km * (h1_m + h0_m), seg_km * (h1_m * (2.0 * d1_km + d0_km) + h0_m * (d1_km + 2.0 * d0_km))


# ---------------------------------------------------------------------------
# Reductions over the interior samples (numpy) and the per-link finish
# ---------------------------------------------------------------------------

def _numpy_reducer(p: _Paths, ae_km, bullington_h=None):
    """The reduction of one Bullington pass over padded profiles (see :func:`diffraction_reductions`).

    ``bullington_h`` (L, N) replaces the heights of the Bullington pass over
    the actual profile (not the smooth-surface heights); None: ``p.h``.
    """
    h_bull = p.h if bullington_h is None else np.asarray(bullington_h, dtype=float)

    def reduce(actual, hts, hrs):
        hc = np.where(p.interior, h_bull + p.bulge, 0.0) if actual else p.bulge
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


def numpy_reduce(distance_km, height_m, n_samples, ae_km, bullington_height_m=None):
    """The numpy ``reduce`` of :func:`diffraction_reductions` over padded profiles (one Bullington pass per call).

    Parameters
    ----------
    distance_km, height_m : ndarray, shape (L, N)
        Padded profiles: distances from A [km], terrain heights [m amsl].
    n_samples : ndarray of int, shape (L,)
        Samples per profile (a count), at least 3.
    ae_km : float or ndarray, shape (L,)
        Effective Earth radius [km].
    bullington_height_m : ndarray, shape (L, N), optional
        Heights of the Bullington pass over the actual profile [m amsl]
        (default ``height_m``), as in :func:`diffraction_batch`.

    Returns
    -------
    callable
        ``reduce(actual, hts, hrs) -> dict``, see :func:`diffraction_reductions`.

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2.1 and Attachment 2 section 5.1.6.
    """
    return _numpy_reducer(_paths(distance_km, height_m, n_samples, ae_km), ae_km, bullington_height_m)


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
        :mod:`profiler.propagation.prefix_kernel` are two such callables.
    d_total_km : ndarray, shape (L,)
        Path lengths [km].
    h_first_m, h_last_m : ndarray, shape (L,)
        Ground heights at A and B [m amsl].
    h_tx_amsl_m, h_rx_amsl_m : ndarray, shape (L,)
        Antenna heights [m amsl].

    Returns
    -------
    dict of ndarray, shape (L,)
        Independent of the frequency: input of :func:`diffraction_finish`;
        heights [m amsl], slopes [m/km], ``v_unit`` [m^0.5], distances [km].

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2 (eqs. 14-18) and Attachment 2
       section 5.1.6 (eqs. 161-167).
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

    Parameters
    ----------
    reduced : dict of ndarray, shape (L,)
        Output of :func:`diffraction_reductions` (heights [m amsl], slopes
        [m/km], distances [km]).
    frequency_mhz : float or ndarray, shape (L,)
        Frequency [MHz] (one per link, or one for all).
    effective_radius_m : float or ndarray, shape (L,)
        Effective Earth radius [m].
    vertical : bool or ndarray of bool
        Polarization of the spherical-Earth first-term part.
    sea_fraction : float or ndarray
        Fraction of each path over sea [-].

    Returns
    -------
    dict of ndarray, shape (L,)
        The keys of :func:`diffraction_batch`: losses [dB], diffraction
        parameters [-], heights [m amsl].

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2 (eqs. 13-43); ITU-R P.526-15
       sections 4.1 and 4.5.
    """
    f_mhz = np.asarray(frequency_mhz, dtype=float) if np.ndim(frequency_mhz) else float(frequency_mhz)
    wavelength_m = _wavelength_m(f_mhz)
    ae_km = np.asarray(effective_radius_m, dtype=float) * 1e-3
    r = reduced
    d, hts, hrs, hts_mod, hrs_mod = r["d_total_km"], r["hts"], r["hrs"], r["hts_mod"], r["hrs_mod"]
    root = np.sqrt(wavelength_m)
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
                      effective_radius_m, vertical=True, sea_fraction=0.0, bullington_height_m=None) -> dict:
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
        Number of samples per profile (a count), at least 3.
    h_tx_amsl_m, h_rx_amsl_m : float or ndarray, shape (L,)
        Antenna heights at A and B [m amsl].
    frequency_mhz : float or ndarray, shape (L,)
        Frequency [MHz] (one per link, or one for all).
    effective_radius_m : float or ndarray, shape (L,)
        Effective Earth radius [m].
    vertical : bool or ndarray of bool
        Polarization of the spherical-Earth first-term part.
    sea_fraction : float or ndarray
        Fraction of each path over sea [-].
    bullington_height_m : ndarray, shape (L, N), optional
        Heights of the Bullington pass over the actual profile [m amsl]
        when they differ from the terrain used for the smooth surface
        (P.1812-8 section 4.3: terrain plus representative clutter at the
        interior points); default ``height_m``.

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
    .. [1] ITU-R P.452-18 section 4.2 (eqs. 13-43) and Attachment 2
       section 5.1.6 (eqs. 161-167); ITU-R P.526-15 sections 4.1 and 4.5.
    """
    ae_km = np.asarray(effective_radius_m, dtype=float) * 1e-3
    p = _paths(np.asarray(distance_m, dtype=float) * 1e-3, height_m, n_samples, ae_km)
    hts = np.broadcast_to(np.asarray(h_tx_amsl_m, dtype=float), p.d_total.shape)
    hrs = np.broadcast_to(np.asarray(h_rx_amsl_m, dtype=float), p.d_total.shape)
    reducer = _numpy_reducer(p, ae_km, bullington_height_m)
    reduced = diffraction_reductions(reducer, p.d_total, p.h_first, p.h_last, hts, hrs)
    return diffraction_finish(reduced, frequency_mhz, effective_radius_m, vertical, sea_fraction)
