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
                effective_radius=None, reduced=None, paths=None) -> dict:
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

    Returns
    -------
    dict of ndarray, shape (L,)
        ``worst_fresnel_ratio``, ``worst_distance_m``, ``line_of_sight``,
        ``fresnel_clear``, ``diffraction_db``, ``total_loss_db``,
        ``rx_level_dbm`` (uplink, at the gateway), ``margin_db``,
        ``downlink_margin_db``, ``closes``, ``downlink_closes``,
        ``recommended_dr`` (-1: none), ``max_margin_db``; and ``loss_db``, the
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
                       "p1812": rb["p1812"].get(settings.frequency_mhz)}}
    if "recommended" in up:
        out["recommended_dr"] = np.where(up["recommended"] >= 0, up["dr"], -1)
        allowed = up["rules"]["allowed"]
        out["max_margin_db"] = np.max(np.where(allowed, up["margin_db"], -np.inf), axis=1)
    else:
        out["recommended_dr"] = np.full(margin_up.shape, -1)
        out["max_margin_db"] = margin_up
    return out
