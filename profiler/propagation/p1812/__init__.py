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

The location variability (section 4.7: σL, the height factor u(h)) is in
:mod:`profiler.propagation.p1812.location`; :func:`p1812_batch` takes σL
(after the height factor, chosen by the caller for the receiving end) and
the location percentage.  The engine's ``--model p1812`` is
:mod:`profiler.engine.losses`.

:func:`p1812_batch` is :func:`p1812_reductions` (everything that needs the
profile samples, :mod:`profiler.propagation.p1812.reductions`, here with the
numpy :class:`ProfileReducer`) followed by :func:`p1812_finish` (per-path
formulas only).  ``profiler coverage`` runs the same two with the numba
reducer of :mod:`profiler.propagation.p1812.prefix` over every prefix of its
radials.

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

from .geometry import (
    EARTH_RADIUS_KM,
    ZONE_COASTAL,
    ZONE_INLAND,
    ZONE_SEA,
    beta0_percent,
    effective_radius_km,
    elevation_mrad_term,
    elevation_tangent_term,
    horizon_geometry,
    inland_zones_km,
    padded_profile,
    path_centre_latitude_deg,
    roughness_term,
    trans_horizon,
    zone_sections_km,
)
from .location import height_factor, inverse_normal, location_sigma_db, location_term_db
from .losses import (
    basic_losses,
    combined_losses,
    diffraction_losses,
    ducting_blend,
    ducting_db,
    inverse_normal_tail,
    troposcatter_db,
)
from .reductions import ProfileReducer, p1812_reductions

__all__ = ["EARTH_RADIUS_KM", "ZONE_COASTAL", "ZONE_INLAND", "ZONE_SEA", "ProfileReducer", "basic_losses",
           "beta0_percent", "combined_losses", "diffraction_losses", "ducting_blend", "ducting_db",
           "effective_radius_km", "elevation_mrad_term", "elevation_tangent_term",
           "height_factor", "horizon_geometry", "inland_zones_km", "inverse_normal",
           "inverse_normal_tail", "location_sigma_db", "location_term_db", "p1812_batch", "p1812_finish",
           "p1812_reductions", "path_centre_latitude_deg", "padded_profile", "roughness_term", "trans_horizon",
           "troposcatter_db", "zone_sections_km"]


def p1812_batch(distance_km, height_m, clutter_m, zone, n_samples, *, f_ghz, time_percent, htg_m, hrg_m,
                vertical, delta_n, n0, lat_t_deg, lon_t_deg, lat_r_deg, lon_r_deg, dct_km=500.0, dcr_km=500.0,
                location_percent=50.0, location_sigma_db=0.0, informative=True):
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
    location_percent : float or ndarray, shape (L,)
        Location percentage pL [%], 1 to 99 (default 50).
    location_sigma_db : float or ndarray, shape (L,)
        Location variability σL at the receiving end, after the height
        factor u(h) [dB] (:mod:`profiler.propagation.p1812.location`;
        default 0, as the SG3 examples).
    informative : bool, default True
        Also compute the diffraction loss at aβ when it does not change the
        result (p >= 50 %, where Fi = 0); with False its values equal the
        median ones (``ldb_db``, ``lbulla_db``, ``lbulls_db``, ``ldsph_db``
        then belong to a_e).

    Returns
    -------
    dict of ndarray, shape (L,)
        Keyed by the column names of the SG3 validation examples, units in
        the names ([km], [m], [mrad], [deg], [%], [dB]): the inputs
        (``f_ghz``, ``time_percent``, ``htg_m``, ``hrg_m``, ``polarization``
        1 horizontal / 2 vertical, ``delta_n``, ``n0``, ``dct_km``, ``dcr_km``,
        ``r2_m``, ``rn1_m`` the clutter heights next to the terminals) and the
        intermediate values, plus
        ``location_percent`` [%], ``location_sigma_db`` and
        ``location_term_db`` [dB].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 sections 3-4 and Attachment 1.
    """
    reducer = ProfileReducer(distance_km, height_m, clutter_m, zone, n_samples)
    reduced = p1812_reductions(reducer, htg_m, hrg_m, delta_n, time_percent, informative)
    return p1812_finish(reduced, f_ghz=f_ghz, time_percent=time_percent, vertical=vertical, n0=n0,
                        lat_t_deg=lat_t_deg, lon_t_deg=lon_t_deg, lat_r_deg=lat_r_deg, lon_r_deg=lon_r_deg,
                        dct_km=dct_km, dcr_km=dcr_km, location_percent=location_percent,
                        location_sigma_db=location_sigma_db)


def p1812_finish(reduced, *, f_ghz, time_percent, vertical, n0, lat_t_deg, lon_t_deg, lat_r_deg, lon_r_deg,
                 dct_km=500.0, dcr_km=500.0, location_percent=50.0, location_sigma_db=0.0):
    """The named values of :func:`p1812_batch` from :func:`p1812_reductions` (per-path formulas only).

    Parameters
    ----------
    reduced : dict
        Output of :func:`profiler.propagation.p1812.reductions.p1812_reductions`
        (the numpy :class:`ProfileReducer` or the coverage prefix kernel).
    f_ghz : float or ndarray, shape (L,)
        Frequency [GHz], 0.03 to 6.
    time_percent : float or ndarray, shape (L,)
        Time percentage p [%], 1 to 50.
    vertical : bool or ndarray of bool, shape (L,)
        Vertical polarization (else horizontal).
    n0 : float or ndarray, shape (L,)
        Sea-level surface refractivity N0 [N-units].
    lat_t_deg, lon_t_deg, lat_r_deg, lon_r_deg : float or ndarray, shape (L,)
        Terminal coordinates [deg].
    dct_km, dcr_km : float or ndarray, shape (L,)
        Distances of the transmitter and the receiver from the coast [km].
    location_percent : float or ndarray, shape (L,)
        Location percentage pL [%], 1 to 99.
    location_sigma_db : float or ndarray, shape (L,)
        Location variability σL at the receiving end, after u(h) [dB].

    Returns
    -------
    dict of ndarray, shape (L,)
        The named values of :func:`p1812_batch`, the unit in each name
        ([km], [m], [mrad], [deg], [%], [dB]).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3 (β0), sections 4.2-4.10,
       eqs. (8)-(70).
    """
    r = reduced
    f_ghz = np.asarray(f_ghz, dtype=float)
    geo, ae = r["geometry"], r["ae_km"]
    shape = geo["d_km"].shape
    # one value per path: read-only views where an input is one value for every path (no copies)
    out = {name: np.broadcast_to(np.asarray(value, dtype=float), shape) for name, value in (
        ("f_ghz", f_ghz), ("time_percent", time_percent), ("htg_m", r["htg_m"]), ("hrg_m", r["hrg_m"]),
        ("polarization", np.where(vertical, 2.0, 1.0)), ("delta_n", r["delta_n"]), ("n0", n0), ("dct_km", dct_km),
        ("dcr_km", dcr_km), ("r2_m", r["terminals"]["r2_m"]), ("rn1_m", r["terminals"]["rn1_m"]))}
    out.update(geo)
    out.update(r["zones"])
    out["phi_path_centre_deg"] = path_centre_latitude_deg(lat_t_deg, lon_t_deg, lat_r_deg, lon_r_deg,
                                                             out["d_km"])
    out["beta0_percent"] = beta0_percent(out["phi_path_centre_deg"], out["dtm_km"], out["dlm_km"])
    out["ae_km"] = ae * np.ones_like(out["d_km"])
    out["htc_table5_m"], out["hrc_table5_m"] = out["hts_m"], out["hrs_m"]
    out.update(r["heights"])
    out.update(basic_losses(out, f_ghz, time_percent, out["beta0_percent"]))
    out.update(diffraction_losses(r["ld50"], r["ldb"], out, f_ghz, time_percent, ae, vertical))
    out["lbs_db"] = troposcatter_db(out["d_km"], out["theta_mrad"], f_ghz, n0, time_percent)
    out["lba_db"] = ducting_db(out, f_ghz, time_percent, ae, dct_km, dcr_km)
    out.update(ducting_blend(out, time_percent))
    out["location_percent"] = np.broadcast_to(np.asarray(location_percent, dtype=float), shape)
    out["location_sigma_db"] = np.broadcast_to(np.asarray(location_sigma_db, dtype=float), shape)
    out["location_term_db"] = location_term_db(out["location_percent"], out["location_sigma_db"])
    out.update(combined_losses(out, f_ghz, out["location_term_db"]))
    return out
