"""Path loss of a batch of links at one frequency: the ``terrain`` model or ITU-R P.1812-8.

:func:`path_loss_batch` is the one place the engine turns sampled profiles
into the ``loss_db`` block; :func:`profiler.engine.radio.radio_batch` calls
it once per frequency of the budgets.  ``--model terrain`` is free space
over the slant distance (ITU-R P.525-4) plus the chosen diffraction method;
``--model p1812`` is :func:`profiler.propagation.p1812.p1812_batch` at the
run's time and location percentages, with the location variability at the
node's end.  Both add the fixed extra loss and the polarization mismatch.

The ``loss_db`` keys of both models: ``model``, ``free_space``,
``diffraction``, ``combination`` (P.1812-8: what its combination of
line-of-sight, diffraction, ducting and troposcatter, eqs. 9-63 and 69,
adds beyond free space and diffraction; 0 for ``terrain``), ``location``
(the location term of eq. 69; 0 for ``terrain``), ``basic_transmission``
(their sum: the basic transmission loss), ``extra``, ``polarization``,
``clutter_a``/``_b`` (the ITU-R P.2108-1 terminal term of ``terrain``; 0
for ``p1812``, whose profile carries the clutter), ``building_entry_a``/``_b``
(ITU-R P.2109-1), ``extra_a``/``_b`` (the fixed loss per end),
``calibration`` (a survey's fitted correction, ``--calibration``:
:mod:`profiler.engine.calibration`; 0 without), ``total`` (basic
transmission + extra + polarization + the per-end terms + calibration), ``diffraction_method``,
the informative diffraction values and the smooth-surface heights.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ProfilerError
from ..propagation import polarization
from ..propagation.diffraction_batch import diffraction_batch, diffraction_finish
from ..propagation.free_space import free_space_term_db
from .model import delta_n_from_k

EARTH_RADIUS_M = 6_371_000.0
ZONE_SEA, ZONE_INLAND = 1, 4


def slant_distance_m(distance_m, antenna_a_amsl_m, antenna_b_amsl_m, earth_radius_m: float = EARTH_RADIUS_M):
    r"""Straight-line distance between the antenna tips over the spherical Earth [m].

    .. math:: s^2 = (h_a - h_b)^2 + 4 (R + h_a)(R + h_b) \sin^2\left(\frac{d}{2R}\right)

    (the law of cosines for two points at radii :math:`R + h` separated by
    the ground angle :math:`d / R`, written without cancellation).

    Parameters
    ----------
    distance_m : float or ndarray
        Ground distance between the sites [m].
    antenna_a_amsl_m, antenna_b_amsl_m : float or ndarray
        Antenna heights [m above mean sea level].
    earth_radius_m : float
        True (not effective) Earth radius [m]: this is geometry, not refraction.

    Returns
    -------
    slant_m : float or ndarray
        Distance between the antenna tips [m].

    References
    ----------
    Law of cosines (handbook); ITU-R P.525-4 uses the distance between the
    antennas for the free-space loss.
    """
    ha = np.asarray(antenna_a_amsl_m, dtype=float)
    hb = np.asarray(antenna_b_amsl_m, dtype=float)
    s = np.sin(np.asarray(distance_m, dtype=float) / (2.0 * earth_radius_m))
    return np.sqrt((ha - hb) ** 2 + 4.0 * (earth_radius_m + ha) * (earth_radius_m + hb) * s * s)


def terrain_loss_batch(d, terrain, n, h_a, h_b, frequency_mhz, ae, radio, pol_a_deg, pol_b_deg, reduced=None,
                       informative=True):
    """The ``loss_db`` block of ``--model terrain`` for one frequency, one value per link [dB].

    Free space over the slant distance (ITU-R P.525-4), the chosen diffraction
    method (ITU-R P.526-15 / P.452-18, :func:`profiler.propagation.diffraction_batch.diffraction_batch`),
    the fixed extra loss and the polarization mismatch.  The spherical-Earth
    term uses the polarization of antenna A.  ``smooth_surface_height_a_m``/
    ``_b_m`` are the smooth-surface heights hstd, hsrd of the diffraction model
    (P.452-18 Attachment 2 eqs. 165-167), not antenna heights.  With
    ``reduced`` (:func:`profiler.propagation.diffraction_batch.diffraction_reductions` of these
    links, already computed) the profiles are not read again: ``d``,
    ``terrain`` and ``n`` may be None.  With ``informative=False`` and
    ``--diffraction none`` no diffraction model runs at all (its informative
    values are NaN).

    Parameters
    ----------
    d, terrain : ndarray, shape (L, N), or None
        Padded profiles (distance from A [m], terrain [m AMSL]).
    n : ndarray of int, shape (L,), or None
        Number of samples per link.
    h_a, h_b : ndarray, shape (L,)
        Antenna heights [m AMSL].
    frequency_mhz : float
        Frequency [MHz].
    ae : float or ndarray
        Effective Earth radius [m].
    radio : RadioSettings
        Validated settings (diffraction method, extra loss, sea fraction).
    pol_a_deg, pol_b_deg : float
        Polarization angles of the antennas [deg from vertical].
    reduced : dict, optional
        Frequency-independent diffraction reductions of these links.
    informative : bool, default True
        Compute the diffraction models even where they are only informative.

    Returns
    -------
    dict
        The ``loss_db`` keys of the module docstring: ``free_space``,
        ``diffraction``, ``extra``, ``polarization``, ``total``, ``knife_edge``, ``bullington``, ``delta_bullington``,
        ``spherical_earth`` [dB], ``smooth_surface_height_a_m``/``_b_m``
        [m AMSL] (arrays over links) and ``diffraction_method``.

    References
    ----------
    .. [1] ITU-R P.525-4 Annex 1 section 2.2, eq. (4) (free space).
    .. [2] ITU-R P.526-15 section 4.1 and P.452-18 section 4.2 (diffraction).
    """
    vertical = np.abs(np.cos(np.radians(pol_a_deg))) >= math.sqrt(0.5)
    if radio.diffraction_method == "none" and not informative:
        nan = np.full(np.shape(h_a), np.nan)
        parts = dict.fromkeys(("knife_edge", "bullington", "delta_bullington", "spherical_earth", "hstd", "hsrd"),
                              nan)
        length = d[np.arange(d.shape[0]), n - 1] if reduced is None else reduced["length_m"]
    elif reduced is None:
        parts = diffraction_batch(d, terrain, n, h_a, h_b, frequency_mhz, ae, vertical,
                                  radio.sea_fraction)
        length = d[np.arange(d.shape[0]), n - 1]
    else:
        parts = diffraction_finish(reduced, frequency_mhz, ae, vertical, radio.sea_fraction)
        length = reduced["length_m"]
    method = radio.diffraction_method
    diff = np.zeros_like(h_a) if method == "none" else parts[method.replace("-", "_")]
    slant = slant_distance_m(length, h_a, h_b)
    free = free_space_term_db(slant, frequency_mhz)                                     # P.525-4 eq. (4)
    pol_loss = polarization.polarization_mismatch_db(pol_a_deg, pol_b_deg) + np.zeros_like(h_a)
    zero = np.zeros_like(h_a)
    basic = free + diff
    return {"model": "terrain", "free_space": free, "diffraction": diff, "combination": zero, "location": zero,
            "basic_transmission": basic, "extra": np.full_like(h_a, radio.extra_loss_db),
            "polarization": pol_loss, "total": basic + radio.extra_loss_db + pol_loss, "diffraction_method": method,
            "knife_edge": parts["knife_edge"], "bullington": parts["bullington"],
            "delta_bullington": parts["delta_bullington"], "spherical_earth": parts["spherical_earth"],
            "smooth_surface_height_a_m": parts["hstd"], "smooth_surface_height_b_m": parts["hsrd"]}




def path_loss_batch(d, terrain, n, h_a, h_b, frequency_mhz, ae, radio, pol_a_deg, pol_b_deg, reduced=None,
                    informative=True, paths=None, overrides=None):
    """The ``loss_db`` block for one frequency, one value per link, by the run's model [dB].

    The terminals (clutter at each end, indoor ends, fixed per-end losses)
    are :mod:`profiler.engine.terminals`, the same for both models.

    Parameters
    ----------
    d, terrain, n, h_a, h_b, frequency_mhz, ae, radio, pol_a_deg, pol_b_deg, reduced, informative
        As :func:`terrain_loss_batch`.
    paths : dict, optional
        What ``--model p1812`` needs besides the profiles: ``lat_a_deg``,
        ``lon_a_deg``, ``lat_b_deg``, ``lon_b_deg`` (L,) [deg] (or one value for
        every link: a coverage map's site) and optionally
        ``clutter_m`` (L, N) [m], ``clutter_class`` (L, N) [index into the
        clutter classes, -1 none] and ``zone`` (L, N) (1 sea, 3 coastal
        land, 4 inland; default inland).
    overrides : dict, optional
        A sites file's per-role terminal arrays (:func:`profiler.engine.terminals.terminal_ends`).

    Returns
    -------
    dict
        The ``loss_db`` block (module docstring) with the per-end keys
        ``clutter_a``, ``clutter_b``, ``building_entry_a``, ``building_entry_b``,
        ``extra_a``, ``extra_b`` and ``calibration`` (:func:`calibration_term_db`) [dB] in
        ``total``; ``terminals`` (the ends of
        :func:`profiler.engine.terminals.terminal_ends`, the elevation angles,
        ``skipped_a``/``_b`` and ``near_a``/``_b``); with ``p1812`` also the key
        ``p1812``: the named values of :func:`profiler.propagation.p1812.p1812_batch`.

    References
    ----------
    .. [1] ITU-R P.525-4 and P.452-18 section 4.2 (``terrain``, see
       :func:`terrain_loss_batch`); ITU-R P.1812-8 Annex 1 sections 3-4
       (``p1812``, see :func:`p1812_loss_batch`).
    .. [2] ITU-R P.2108-1 Annex 1 sections 3.1-3.2 and ITU-R P.2109-1
       (:mod:`profiler.engine.terminals`).
    """
    from .terminals import indoor_losses, terminal_ends, terrain_clutter

    h_a, h_b = np.asarray(h_a, dtype=float), np.asarray(h_b, dtype=float)
    ends = terminal_ends(radio, h_a.size, paths, overrides, n)
    if reduced is not None:
        length = np.asarray(reduced["length_m"], dtype=float)
    else:
        length = np.asarray(d, dtype=float)[np.arange(np.shape(d)[0]), np.asarray(n) - 1]
    info = {"ends": ends, **indoor_losses(frequency_mhz, h_a, h_b, length, ae, ends,
                                          radio.propagation.location_percent)}
    zero = np.zeros_like(h_a)
    if radio.propagation.model == "p1812":
        block = p1812_loss_batch(d, terrain, n, h_a, h_b, frequency_mhz, ae, radio, pol_a_deg, pol_b_deg, paths,
                                 informative, ends, None if reduced is None else reduced.get("p1812"))
        info.update(block.pop("near"), skipped_a=zero > 0, skipped_b=zero > 0)
        clutter_a = clutter_b = zero
    else:
        if reduced is None and (ends["a"]["clutter_index"] >= 0).any() | (ends["b"]["clutter_index"] >= 0).any():
            t = np.asarray(terrain, dtype=float)
            tc = terrain_clutter(frequency_mhz, h_a, h_b, t[:, 0], t[np.arange(t.shape[0]), np.asarray(n) - 1],
                                 length, ends, radio)
        elif reduced is not None and any((ends[e]["clutter_index"] >= 0).any() for e in "ab"):
            raise RuntimeError("terminal clutter needs the profiles, not only their reductions")
        else:
            tc = {"h_a": h_a, "h_b": h_b, "clutter_a": zero, "clutter_b": zero, "skipped_a": zero > 0,
                  "skipped_b": zero > 0}
        block = terrain_loss_batch(d, terrain, n, tc["h_a"], tc["h_b"], frequency_mhz, ae, radio, pol_a_deg,
                                   pol_b_deg, reduced, informative)
        info.update(skipped_a=tc["skipped_a"], skipped_b=tc["skipped_b"], near_a=zero, near_b=zero)
        clutter_a, clutter_b = tc["clutter_a"], tc["clutter_b"]
    terms = {"clutter_a": clutter_a + zero, "clutter_b": clutter_b + zero,
             "building_entry_a": info["building_entry_a"] + zero, "building_entry_b": info["building_entry_b"] + zero,
             "extra_a": ends["a"]["extra_loss_db"] + zero, "extra_b": ends["b"]["extra_loss_db"] + zero}
    terms["calibration"] = calibration_term_db(radio, length, ends) + zero
    block.update(terms)
    block["total"] = block["total"] + sum(terms.values())
    block["terminals"] = info
    return block


def calibration_term_db(radio, length_m, ends):
    """``loss_db.calibration``: the run's ``--calibration`` at each path's length, per the node end's class [dB].

    Parameters
    ----------
    radio : RadioSettings
        ``propagation.calibration`` (None: the term is 0) and which end is the node.
    length_m : ndarray, shape (L,)
        Ground length of each path [m].
    ends : dict
        The terminals (:func:`profiler.engine.terminals.terminal_ends`): the
        node end's ``clutter_index`` (the sites file's or option's class, else
        the land cover's at the node sample; -1 none) picks the file's
        ``[clutter.NAME]`` table where it has one, else the overall terms.

    Returns
    -------
    ndarray, shape (L,)
        ``offset + slope * log10(d / 1 km)`` [dB].
    """
    calibration = radio.propagation.calibration
    length_m = np.asarray(length_m, dtype=float)
    if calibration is None:
        return np.zeros_like(length_m)
    from ..terrain.landcover import CLUTTER_CLASSES
    from .calibration import calibration_correction_db

    names = np.array([None, *CLUTTER_CLASSES], dtype=object)[np.asarray(ends[radio.node]["clutter_index"]) + 1]
    return calibration_correction_db(calibration, length_m, names)


def node_location_sigma_db(propagation, frequency_mhz, node_height_m, node_clutter_m, node_at_sea):
    """σL at the node's end [dB]: the given value, or P.1812-8 section 4.7 for wa with u(h); 0 at sea.

    Parameters
    ----------
    propagation : profiler.engine.model.PropagationSettings
        ``location_sigma_db`` (None: computed) and ``area_width_m``.
    frequency_mhz : float
        Frequency [MHz].
    node_height_m : ndarray, shape (L,)
        Node antenna height above ground [m].
    node_clutter_m : ndarray, shape (L,)
        Representative clutter height at the node [m].
    node_at_sea : ndarray of bool, shape (L,)
        The node's end lies in the sea zone.

    Returns
    -------
    ndarray, shape (L,)
        σL [dB].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.7.
    """
    from ..propagation.p1812 import height_factor, location_sigma_db

    if propagation.location_sigma_db is not None:
        sigma = np.full(np.shape(node_height_m), float(propagation.location_sigma_db))
    else:
        sigma = (location_sigma_db(frequency_mhz * 1e-3, propagation.area_width_m)
                 * height_factor(node_height_m, node_clutter_m))
    return np.where(node_at_sea, 0.0, sigma)


def p1812_delta_n(propagation, effective_radius_m):
    """ΔN of a P.1812-8 run [N-units/km]: the given ``--delta-n``, or the value that gives the run's k.

    Parameters
    ----------
    propagation : profiler.engine.model.PropagationSettings
        ``delta_n`` (None: from the effective Earth radius).
    effective_radius_m : float or ndarray
        Effective Earth radius of the run [m].

    Returns
    -------
    float or ndarray
        ΔN [N-units/km].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3 (k50 = 157 / (157 - ΔN)).
    """
    if propagation.delta_n is not None:
        return propagation.delta_n
    return delta_n_from_k(np.asarray(effective_radius_m, dtype=float) / EARTH_RADIUS_M)


def p1812_loss_batch(d, terrain, n, h_a, h_b, frequency_mhz, ae, radio, pol_a_deg, pol_b_deg, paths,
                     informative=True, ends=None, reduced=None):
    """The ``loss_db`` block of ``--model p1812`` for one frequency, one value per link [dB].

    Site A is the transmitter of P.1812-8 and B the receiver (the loss is
    the same both ways; the coast distances follow the ends); the location
    variability is that of the node's end (``radio.gateway``).

    Parameters
    ----------
    d, terrain : ndarray, shape (L, N), or None
        Padded profiles (distance from A [m], terrain [m AMSL]); None with
        ``reduced``.
    n : ndarray of int, shape (L,), or None
        Samples per link (a count), at least 3.
    h_a, h_b : ndarray, shape (L,)
        Antenna heights [m AMSL].
    frequency_mhz : float
        Frequency [MHz].
    ae : float or ndarray
        Effective Earth radius [m] (ΔN of P.1812-8 from it, unless given).
    radio : RadioSettings
        Validated settings with ``propagation.model == "p1812"``.
    pol_a_deg, pol_b_deg : float or ndarray
        Polarization angles of the antennas [deg from vertical].
    paths : dict
        Terminal coordinates and the optional clutter and zone columns
        (:func:`path_loss_batch`).
    informative : bool
        Also the diffraction pass at aβ where it does not change the result.
    ends : dict, optional
        The terminals (:func:`profiler.engine.terminals.terminal_ends`): an
        overridden end's R near that end (:func:`profiler.engine.terminals.p1812_clutter`).
    reduced : dict, optional
        :func:`profiler.propagation.p1812.reductions.p1812_reductions` of
        these links, already computed (``profiler coverage``'s kernel, with
        ΔN of :func:`p1812_delta_n`, no clutter): the profiles are not read again.

    Returns
    -------
    dict
        The ``loss_db`` block, ``p1812`` (named values, arrays (L,)) and
        ``near`` (``near_a``, ``near_b``: the interior samples each end's
        override set, counts (L,)).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 sections 3-4, eqs. (8)-(70).
    .. [2] ITU-R P.1812-8 Annex 1 section 4.7 (σL and u(h)).
    """
    from ..propagation.p1812 import ProfileReducer, p1812_finish, p1812_reductions

    if paths is None or paths.get("lat_a_deg") is None:
        raise ProfilerError("--model p1812 needs the latitude and longitude of both terminals; "
                            "use --model terrain for a profile without coordinates")
    prop = radio.propagation
    h_a, h_b = np.asarray(h_a, dtype=float), np.asarray(h_b, dtype=float)
    near = {"near_a": np.zeros(h_a.size, int), "near_b": np.zeros(h_a.size, int)}
    if reduced is None:
        d, t, n = np.asarray(d, dtype=float), np.asarray(terrain, dtype=float), np.asarray(n, dtype=np.int64)
        clutter = paths.get("clutter_m")
        clutter = np.zeros(d.shape) if clutter is None else np.where(np.isfinite(clutter), clutter, 0.0)
        if ends is not None:
            from .terminals import p1812_clutter

            clutter, counts = p1812_clutter(d, n, clutter, ends, prop.terminal_clutter_m)
            near = {"near_a": counts["a"], "near_b": counts["b"]}
        zone = paths.get("zone")
        zone = np.full(d.shape, ZONE_INLAND) if zone is None else np.asarray(zone)
        reducer = ProfileReducer(d * 1e-3, t, clutter, zone, n)
        reduced = p1812_reductions(reducer, h_a - reducer.h_first_m, h_b - reducer.h_last_m,
                                   p1812_delta_n(prop, ae), prop.time_percent, informative)
    at_ends = reduced["terminals"]
    node = "r" if radio.gateway == "a" else "t"
    sigma = node_location_sigma_db(prop, frequency_mhz, reduced["hrg_m" if node == "r" else "htg_m"],
                                   at_ends[f"clutter_{node}_m"], at_ends[f"sea_{node}"])
    vertical = np.abs(np.cos(np.radians(pol_a_deg))) >= math.sqrt(0.5)
    out = p1812_finish(reduced, f_ghz=frequency_mhz * 1e-3, time_percent=prop.time_percent, vertical=vertical,
                       n0=prop.n0, lat_t_deg=paths["lat_a_deg"], lon_t_deg=paths["lon_a_deg"],
                       lat_r_deg=paths["lat_b_deg"], lon_r_deg=paths["lon_b_deg"], dct_km=prop.coast_distance_a_km,
                       dcr_km=prop.coast_distance_b_km, location_percent=prop.location_percent,
                       location_sigma_db=sigma)
    pol_loss = polarization.polarization_mismatch_db(pol_a_deg, pol_b_deg) + np.zeros_like(h_a)
    free, diff, loc, basic = out["lbfs_db"], out["ldp_db"], out["location_term_db"], out["lb_db"]
    return {"model": "p1812", "free_space": free, "diffraction": diff, "combination": basic - free - diff - loc,
            "location": loc, "basic_transmission": basic, "extra": np.full_like(h_a, radio.extra_loss_db),
            "polarization": pol_loss, "total": basic + radio.extra_loss_db + pol_loss,
            "diffraction_method": "delta-bullington", "delta_bullington": out["ld50_db"],
            "smooth_surface_height_a_m": out["hstd_m"], "smooth_surface_height_b_m": out["hsrd_m"], "p1812": out,
            "near": near}


def profile_paths(profile, site_a, site_b) -> dict:
    """The ``paths`` of :func:`profiler.engine.losses.path_loss_batch` for one profile (a batch of one).

    Parameters
    ----------
    profile : profiler.terrain.profile.TerrainProfile
        The path; its ``clutter_height_m`` and ``zone`` columns when it has them.
    site_a, site_b : tuple of float
        ``(lat_deg, lon_deg)`` of the ends [deg].

    Returns
    -------
    dict
        ``lat_a_deg``, ``lon_a_deg``, ``lat_b_deg``, ``lon_b_deg`` (shape (1,)),
        ``clutter_m`` and ``zone`` (shape (1, N) or None).
    """
    def row(values):
        return None if values is None else np.asarray(values)[None, :]

    return {"lat_a_deg": np.array([float(site_a[0])]), "lon_a_deg": np.array([float(site_a[1])]),
            "lat_b_deg": np.array([float(site_b[0])]), "lon_b_deg": np.array([float(site_b[1])]),
            "clutter_m": row(profile.clutter_height_m), "zone": row(profile.zone)}
