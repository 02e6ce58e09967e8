"""The per-link result of already sampled links: geometry, losses, both budgets, the recommended DR.

:func:`link_fields` is what ``profiler network`` (:mod:`profiler.products.network`)
and ``profiler coverage`` (:mod:`profiler.products.coverage.radials`, every
prefix of every radial a link) compute for each batch; :class:`NetworkSettings`
is the picklable settings a batch needs (sent to Dask workers).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..lora.regional import plan as regional_plan
from ..propagation import geometry
from ..propagation.free_space import wavelength_m
from .geometry import geometry_batch
from .radio import RadioSettings, radio_batch


@dataclass(frozen=True)
class NetworkSettings:
    """Everything a chunk needs besides the link indices (picklable, sent to workers)."""

    dem_paths: tuple
    frequency_mhz: float
    band: str | None
    k_factor: float
    clearance_ratio: float
    step_m: float | None
    fill_voids: bool
    radio: RadioSettings


def link_fields(d, terrain, n, h_a, h_b, settings: NetworkSettings, overrides=None, *, wavelength=None,
                effective_radius=None, reduced=None, paths=None, node_height_m=None) -> dict:
    """Geometry, losses and both budgets of a batch of sampled links (the engine, no sampling).

    Parameters
    ----------
    d, terrain : ndarray, shape (L, N)
        Padded profiles (distance from the gateway [m], terrain [m AMSL]).
    n : ndarray of int, shape (L,)
        Samples per link (at least 3).
    h_a, h_b : ndarray, shape (L,)
        Gateway and node antenna heights [m AMSL].
    settings : NetworkSettings
        Band, k, clearance and radio settings.
    overrides : dict, optional
        Per-link end values, see :func:`profiler.engine.radio.resolve_ends`.
    wavelength, effective_radius : float, optional
        Wavelength and effective Earth radius [m] (default: from ``settings``).
    reduced : dict, optional
        The per-link reductions over the samples, already computed
        (``profiler coverage``'s kernel): the diffraction reductions of
        :func:`profiler.propagation.diffraction_batch.diffraction_reductions` plus
        ``length_m``, ``worst_ratio`` and optionally ``worst_distance_m``
        (the minimum of :func:`profiler.propagation.geometry.clearance_ratio_term` and
        where it is; NaN when not given); then
        ``d``, ``terrain`` and ``n`` may be None.
    paths : dict, optional
        Terminal coordinates (and clutter/zone columns) of the links, which
        ``--model p1812`` needs (:func:`profiler.engine.losses.path_loss_batch`).
    node_height_m : float or ndarray, optional
        The node antenna's height above its ground [m], for σL under
        ``--model terrain`` (:func:`probability_heard`; default: from the
        profiles, or with ``reduced`` and no profiles u(h) = 1).

    Returns
    -------
    dict of ndarray, shape (L,)
        ``worst_fresnel_ratio``, ``worst_distance_m``, ``line_of_sight``,
        ``fresnel_clear``, ``diffraction_db``, ``total_loss_db``,
        ``rx_level_dbm`` (uplink, at the gateway), ``margin_db``,
        ``downlink_margin_db``, ``closes``, ``downlink_closes``,
        ``recommended_dr`` (-1: none), ``max_margin_db``;
        ``location_sigma_db`` (σL at the node [dB]) and ``probability_heard``
        (:func:`probability_heard`, 0 to 1); and ``loss_db``, the
        loss block of :func:`profiler.engine.losses.path_loss_batch` at the uplink frequency (its terms,
        ``terminals`` and ``p1812``: the named values, None with ``terrain``).
    """
    radio = settings.radio
    lam = float(wavelength_m(settings.frequency_mhz)) if wavelength is None else wavelength
    ae = float(geometry.effective_radius_m(settings.k_factor)) if effective_radius is None else effective_radius
    plan = regional_plan(settings.band) if settings.band is not None else None
    if reduced is None:
        g = geometry_batch(d, terrain, n, h_a, h_b, lam, ae, settings.clearance_ratio)
        worst, worst_d, los, clear = g.worst_ratio, g.worst_distance_m, g.line_of_sight, g.fresnel_clear
    else:   # clearance > 0 at every interior sample <=> worst ratio > 0 (F1 > 0 there)
        worst = reduced["worst_ratio"]
        worst_d = reduced.get("worst_distance_m", np.full(worst.shape, np.nan))
        los, clear = worst > 0.0, worst >= settings.clearance_ratio
    rb = radio_batch(d, terrain, n, h_a, h_b, settings.frequency_mhz, ae, radio, plan, overrides, rx2=False,
                     reduced=reduced, informative=False, paths=paths)
    fade = radio.fade_margin_db
    up, down = rb["uplink"], rb["downlink"]
    margin_up = up["rx_power_dbm"] - up["budget_sensitivity_dbm"]
    margin_down = down["rx_power_dbm"] - down["budget_sensitivity_dbm"]
    loss = rb["losses"][settings.frequency_mhz]
    out = {"worst_fresnel_ratio": worst, "worst_distance_m": worst_d,
           "line_of_sight": los, "fresnel_clear": clear, "diffraction_db": loss["diffraction"],
           "total_loss_db": loss["total"], "rx_level_dbm": up["rx_power_dbm"], "margin_db": margin_up,
           "downlink_margin_db": margin_down, "closes": margin_up >= fade, "downlink_closes": margin_down >= fade,
           "loss_db": {**loss, "terminals": rb["terminals"][settings.frequency_mhz],
                       "p1812": rb["p1812"].get(settings.frequency_mhz)},
           **probability_heard(margin_up, rb, settings,
                              _node_height_m(terrain, n, h_a, h_b, radio) if node_height_m is None else node_height_m)}
    if "recommended" in up:
        out["recommended_dr"] = np.where(up["recommended"] >= 0, up["dr"], -1)
        out["max_margin_db"] = up["max_margin_db"]
    else:
        out["recommended_dr"] = np.full(margin_up.shape, -1)
        out["max_margin_db"] = margin_up
    return out


def _node_height_m(terrain, n, h_a, h_b, radio):
    """The node's antenna height above its ground [m], from the profiles (None without them)."""
    if terrain is None:
        return None
    t = np.asarray(terrain, dtype=float)
    if radio.gateway == "a":
        return np.asarray(h_b, dtype=float) - t[np.arange(t.shape[0]), np.asarray(n) - 1]
    return np.asarray(h_a, dtype=float) - t[:, 0]


def probability_heard(margin_db, rb, settings: NetworkSettings, node_height_m=None) -> dict:
    """The probability over locations that the uplink keeps the fade margin, per link [-].

    The margin at 50 % of locations, outdoors, is the run's margin (at its
    location percentage, with the location term and the building entry loss
    at that percentage) plus the location term plus the node end's building
    entry loss.  Outdoors the probability is
    :func:`profiler.engine.probability.outdoor_probability` of it, with σL
    of the link; an indoor node end (its ``indoor`` type, per link) is
    :func:`profiler.engine.probability.indoor_probability`, at the
    elevation angle of the path at the node.

    Parameters
    ----------
    margin_db : ndarray, shape (L,)
        Uplink margin at the run's location percentage [dB].
    rb : dict
        :func:`profiler.engine.radio.radio_batch` of the links: at the run's
        frequency its ``losses`` (``location``, ``building_entry_a``/``_b``),
        ``terminals`` (the ends, the elevation angles) and, with ``--model
        p1812``, ``p1812`` (``location_sigma_db``).
    settings : NetworkSettings
        The run (fade margin, frequency, propagation settings; the node is
        the end that is not ``radio.gateway``).
    node_height_m : ndarray, shape (L,), optional
        Node antenna height above ground [m]; ``--model terrain`` needs it for
        σL (P.1812-8 section 4.7 with u(h) of that height and the node's R;
        without it, u(h) = 1: the antenna taken at its clutter height).

    Returns
    -------
    dict
        ``location_sigma_db`` [dB] and ``probability_heard`` [-], arrays (L,);
        NaN where the margin is NaN.

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.7 (σL, u(h)) and eq. (69).
    .. [2] ITU-R P.2109-1 Annex 1 (the building entry loss distribution).
    """
    from .losses import node_location_sigma_db
    from .probability import indoor_probability, outdoor_probability

    radio, f_mhz = settings.radio, settings.frequency_mhz
    node = "b" if radio.gateway == "a" else "a"
    margin = np.asarray(margin_db, dtype=float)
    loss, terminals = rb["losses"][f_mhz], rb["terminals"][f_mhz]
    ends = terminals["ends"][node]
    if f_mhz in rb["p1812"]:
        sigma = np.asarray(rb["p1812"][f_mhz]["location_sigma_db"], dtype=float) + np.zeros_like(margin)
    else:
        r_node = np.asarray(ends["clutter_height_m"], dtype=float) + np.zeros_like(margin)
        r_node = np.where(np.isfinite(r_node), r_node, 0.0)
        height = r_node if node_height_m is None else np.asarray(node_height_m, dtype=float) + np.zeros_like(margin)
        sigma = node_location_sigma_db(radio.propagation, f_mhz, height, r_node,
                                       np.zeros(margin.shape, dtype=bool))
    median = margin + loss["location"] + loss[f"building_entry_{node}"]
    p = outdoor_probability(median, radio.fade_margin_db, sigma)
    indoor = (np.asarray(ends["indoor_index"]) >= 0) & np.isfinite(median)
    if indoor.any():
        from ..propagation.building_entry import BUILDING_TYPES

        kind = [BUILDING_TYPES[i] for i in np.asarray(ends["indoor_index"])[indoor]]
        elevation = np.asarray(terminals[f"elevation_angle_{node}_deg"], dtype=float) + np.zeros_like(margin)
        p = np.array(p, dtype=float)
        p[indoor] = indoor_probability(median[indoor], radio.fade_margin_db, sigma[indoor],
                                       f_mhz * 1e-3, elevation[indoor], kind)
    return {"location_sigma_db": sigma, "probability_heard": p}
