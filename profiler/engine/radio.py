"""Radio settings of both ends and the two-direction link budget of one geometry.

:class:`RadioSettings` holds what the user sets (per end, with the node and
gateway defaults); :func:`resolve_ends` turns it into the powers, gains,
losses and noise figures of the gateway and the node for a regional plan;
:func:`radio_results` computes the losses, the uplink (node -> gateway) and
downlink (gateway -> node) budgets, the LoRaWAN per-DR tables and the
compliance block.

Defaults and their basis
------------------------
- Node transmitter: 14 dBm, or less where the plan's maximum EIRP with the
  node's antenna and feeder calls for it (a LoRa node module typically
  delivers up to 14 dBm; common practice).
- Gateway transmitter: 27 dBm, or less where the plan's EIRP limit calls for
  it (a typical gateway front end; common practice).  Without a plan (only
  ``--freq-mhz``) both ends default to 14 dBm.
- Noise figure: gateway 3 dB, node 6 dB (gateway concentrator front ends
  with a low-noise amplifier against a bare node transceiver; common
  practice).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import limits
from ..errors import ProfilerError
from ..lora import lorawan
from ..lora import modem as lora_modem
from ..lora.regional import Plan, dwell_time_limit_ms, max_tx_power_dbm
from ..propagation import polarization
from ..propagation.diffraction_batch import diffraction_batch
from .losses import path_loss_batch, slant_distance_m  # noqa: F401 - public names of this module before 0.5
from .model import PropagationSettings

DIFFRACTION_METHODS = ("delta-bullington", "bullington", "knife-edge", "none")
NODE_TX_POWER_DBM = 14.0
GATEWAY_TX_POWER_DBM = 27.0
NODE_NOISE_FIGURE_DB = 6.0
GATEWAY_NOISE_FIGURE_DB = 3.0
EARTH_RADIUS_M = 6_371_000.0
MIN_SEPARATION_M = 0.1
"""Closest antenna separation for which a path loss is computed [m]."""


@dataclass(frozen=True)
class RadioSettings:
    """Radio, antenna and modem settings for both ends of the link.

    Powers in dBm, gains in dBi, losses and margins in dB.  ``gateway`` says
    which end ("a" or "b") is the gateway; the other end is the node.  Power
    and noise figure per end (``*_a_*``, ``*_b_*``) win over the shorthands
    ``tx_power_dbm`` (the node's power) and ``noise_figure_db`` (both
    receivers); None means the default of the end's role.

    Parameters
    ----------
    gateway : {"a", "b"}
        Which end is the gateway.
    tx_power_dbm : float, optional
        Transmitter power of the node [dBm].
    tx_power_a_dbm, tx_power_b_dbm : float, optional
        Transmitter power per end [dBm].
    gain_a_dbi, gain_b_dbi : float, default 2.15
        Antenna gains [dBi].
    cable_loss_a_db, cable_loss_b_db : float, default 0
        Feeder and connector losses [dB].
    fade_margin_db : float, default 10
        Margin the link must keep [dB].
    sensitivity_dbm : float, optional
        Fixed receiver sensitivity [dBm]; None to compute the LoRa value.
    bw_khz : float, default 125
        LoRa bandwidth [kHz].
    noise_figure_db : float, optional
        Noise figure of both receivers [dB].
    noise_figure_a_db, noise_figure_b_db : float, optional
        Noise figure per end [dB].
    sf : int, optional
        Spreading factor [-], 7 to 12.
    payload_bytes : int, optional
        PHY payload length [byte].
    app_payload_bytes : int, optional
        Application payload length [byte].
    dwell_time : {"on", "off"}, optional
        Uplink dwell-time choice; None for the plan's default.
    cap_eirp : bool, default False
        Lower the power of an end whose EIRP is above the plan's limit.
    polarization_a, polarization_b : str, default "vertical"
        Antenna polarization: "vertical", "horizontal" or an angle.
    sea_fraction : float, default 0
        Fraction of the path over sea [-], 0 to 1.
    diffraction_method : str, default "delta-bullington"
        One of ``DIFFRACTION_METHODS``.
    extra_loss_db : float, default 0
        Fixed extra loss added to the path [dB].
    extra_loss_a_db, extra_loss_b_db : float, default 0
        Fixed extra loss at each end [dB]: what no model covers (a meter
        pit, a basement, a metal cabinet); a sites file's ``extra_loss_db``
        wins for its site.
    propagation : PropagationSettings
        The propagation model and its inputs (:mod:`profiler.engine.model`;
        default: P.1812-8 where the terminals have coordinates, medians).
    """

    gateway: str = "a"
    tx_power_dbm: float | None = None
    tx_power_a_dbm: float | None = None
    tx_power_b_dbm: float | None = None
    gain_a_dbi: float = 2.15
    gain_b_dbi: float = 2.15
    cable_loss_a_db: float = 0.0
    cable_loss_b_db: float = 0.0
    fade_margin_db: float = 10.0
    sensitivity_dbm: float | None = None
    bw_khz: float = 125.0
    noise_figure_db: float | None = None
    noise_figure_a_db: float | None = None
    noise_figure_b_db: float | None = None
    sf: int | None = None
    payload_bytes: int | None = None
    app_payload_bytes: int | None = None
    dwell_time: str | None = None
    cap_eirp: bool = False
    polarization_a: str = "vertical"
    polarization_b: str = "vertical"
    sea_fraction: float = 0.0
    diffraction_method: str = "delta-bullington"
    extra_loss_db: float = 0.0
    extra_loss_a_db: float = 0.0
    extra_loss_b_db: float = 0.0
    propagation: PropagationSettings = PropagationSettings()

    def validate(self) -> "RadioSettings":
        """Check the settings; raise :class:`ProfilerError` on the first problem.

        Returns
        -------
        RadioSettings
            The same settings, for chaining.

        Raises
        ------
        ProfilerError
            On the first setting out of range or not understood.
        """
        limits.check_fields(self)  # physical ranges of every field with an option in limits.LIMITS
        if self.gateway not in ("a", "b"):
            raise ProfilerError(f"--gateway must be a or b, got {self.gateway!r}")
        for name in ("tx_power_dbm", "tx_power_a_dbm", "tx_power_b_dbm", "gain_a_dbi", "gain_b_dbi",
                     "cable_loss_a_db", "cable_loss_b_db", "fade_margin_db", "noise_figure_db",
                     "noise_figure_a_db", "noise_figure_b_db", "extra_loss_db", "extra_loss_a_db", "extra_loss_b_db",
                     "sea_fraction", "sensitivity_dbm"):
            value = getattr(self, name)
            if value is not None and not math.isfinite(float(value)):
                raise ProfilerError(f"--{name.replace('_', '-')} must be a finite number, got {value}")
        for name in ("cable_loss_a_db", "cable_loss_b_db", "extra_loss_db", "extra_loss_a_db", "extra_loss_b_db",
                     "fade_margin_db"):
            if getattr(self, name) < 0:
                raise ProfilerError(f"--{name.replace('_', '-')} must not be negative, got {getattr(self, name)}")
        node = "b" if self.gateway == "a" else "a"
        if self.tx_power_dbm is not None and getattr(self, f"tx_power_{node}_dbm") is not None:
            raise ProfilerError(f"--tx-power-dbm is the node's power: give it or --tx-power-{node}-dbm, not both")
        if not 0.0 <= self.sea_fraction <= 1.0:
            raise ProfilerError(f"--sea-fraction must be between 0 and 1, got {self.sea_fraction}")
        if self.diffraction_method not in DIFFRACTION_METHODS:
            raise ProfilerError(f"unknown diffraction method {self.diffraction_method!r}; "
                                f"use one of {', '.join(DIFFRACTION_METHODS)}")
        for nf in (self.noise_figure_db, self.noise_figure_a_db, self.noise_figure_b_db):
            lora_modem.lora_sensitivity_dbm(12, self.bw_khz, 0.0 if nf is None else nf)
        if self.sf is not None:
            lora_modem.lora_sensitivity_dbm(self.sf, self.bw_khz, 0.0)
        phy, _ = lorawan.payload_sizes(self.payload_bytes, self.app_payload_bytes)
        lora_modem.lora_time_on_air_ms(12, self.bw_khz, phy)
        polarization.polarization_angle_deg(self.polarization_a)
        polarization.polarization_angle_deg(self.polarization_b)
        self.propagation.validate()
        if self.propagation.model == "p1812":
            self._check_p1812()
        return self

    def _check_p1812(self) -> None:
        """Refuse the terrain model's options with ``--model p1812`` (one line saying what to do)."""
        if self.diffraction_method != "delta-bullington":
            raise ProfilerError(f"--diffraction {self.diffraction_method} is for --model terrain; P.1812-8 has its "
                                "own delta-Bullington diffraction: add --model terrain or leave --diffraction out")
        if self.sea_fraction != 0.0:
            raise ProfilerError("--sea-fraction is for --model terrain; P.1812-8 takes the sea share from the "
                                "profile's zone column: add --model terrain or leave --sea-fraction out")

    def with_model(self, has_coordinates: bool) -> "RadioSettings":
        """These settings with the propagation model chosen (:meth:`PropagationSettings.resolved`) and checked.

        Parameters
        ----------
        has_coordinates : bool
            Both terminals of every link have a latitude and longitude.

        Returns
        -------
        RadioSettings
            A copy whose ``propagation.model`` is "p1812" or "terrain".
        """
        from dataclasses import replace

        out = replace(self, propagation=self.propagation.resolved(has_coordinates))
        if out.propagation.model == "p1812":
            out._check_p1812()
        return out

    @property
    def node(self) -> str:
        """The node's end, "a" or "b"."""
        return "b" if self.gateway == "a" else "a"


def resolve_ends(radio: RadioSettings, plan: Plan | None, n_links: int = 1, overrides: dict | None = None):
    """Powers, gains, feeder losses, noise figures and polarizations of both ends, one value per link.

    Parameters
    ----------
    radio : RadioSettings
        The command's settings.
    plan : Plan or None
        Regional plan (its EIRP limit sets the default powers and ``--cap-eirp``).
    n_links : int
        Number of links L.
    overrides : dict, optional
        ``{"gateway": {...}, "node": {...}}`` with per-link arrays for any of
        ``tx_power_dbm``, ``gain_dbi``, ``cable_loss_db``, ``noise_figure_db``
        (NaN: use the option) and ``polarization_deg`` (NaN: use the option),
        e.g. from the per-site columns of a network site list.

    Returns
    -------
    ends : dict
        ``{"gateway": {...}, "node": {...}}``, each with ``end`` ("a"/"b") and
        arrays of shape (L,): ``tx_power_dbm``, ``gain_dbi``, ``cable_loss_db``,
        ``noise_figure_db``, ``polarization_deg``.
    notes : list of str
        What ``--cap-eirp`` changed.
    """
    if radio.cap_eirp and plan is None:
        raise ProfilerError("--cap-eirp needs a regional plan: give --band instead of --freq-mhz")
    overrides = overrides or {}
    ends, notes = {}, []
    for role, end in (("gateway", radio.gateway), ("node", radio.node)):
        given = overrides.get(role, {})

        def value(key, option):
            base = np.full(n_links, np.nan if option is None else float(option))
            extra = given.get(key)
            return base if extra is None else np.where(np.isfinite(extra), extra, base)

        gain = value("gain_dbi", getattr(radio, f"gain_{end}_dbi"))
        loss = value("cable_loss_db", getattr(radio, f"cable_loss_{end}_db"))
        option_power = getattr(radio, f"tx_power_{end}_dbm")
        if option_power is None and role == "node":
            option_power = radio.tx_power_dbm
        power = value("tx_power_dbm", option_power)
        typical = NODE_TX_POWER_DBM if role == "node" or plan is None else GATEWAY_TX_POWER_DBM
        limit = None if plan is None else max_tx_power_dbm(plan, gain, loss)
        default = np.full(n_links, typical) if plan is None else np.minimum(typical, limit)
        unset = ~np.isfinite(power)
        power = np.where(unset, default, power)
        if radio.cap_eirp:
            over = ~unset & (power > limit + 1e-9)
            if over.any():
                i = int(np.argmax(over))
                what = f"{role} power" if n_links == 1 else f"power of {int(over.sum())} {role}(s)"
                notes.append(f"--cap-eirp: {what} lowered from {power[i]:g} to {limit[i]:.2f} dBm to meet the "
                             f"{plan.name} EIRP limit of {plan.max_eirp_dbm:g} dBm")
                power = np.where(over, limit, power)
        nf_option = getattr(radio, f"noise_figure_{end}_db")
        if nf_option is None:
            nf_option = radio.noise_figure_db
        if nf_option is None:
            nf_option = GATEWAY_NOISE_FIGURE_DB if role == "gateway" else NODE_NOISE_FIGURE_DB
        pol = value("polarization_deg", polarization.polarization_angle_deg(getattr(radio, f"polarization_{end}")))
        ends[role] = {"end": end, "tx_power_dbm": power, "gain_dbi": gain, "cable_loss_db": loss,
                      "noise_figure_db": value("noise_figure_db", nf_option), "polarization_deg": pol}
    return ends, notes


def diffraction_losses(distance_m, terrain_m, antenna_a_amsl_m, antenna_b_amsl_m, frequency_mhz,
                       effective_radius_m, polarization="vertical", sea_fraction=0.0) -> dict:
    """Knife-edge, Bullington and delta-Bullington losses of one profile [dB] (a batch of one).

    Parameters
    ----------
    distance_m : array_like
        Distance from A [m], strictly increasing.
    terrain_m : array_like
        Terrain height [m AMSL].
    antenna_a_amsl_m, antenna_b_amsl_m : float
        Antenna heights [m AMSL].
    frequency_mhz : float
        Frequency [MHz].
    effective_radius_m : float
        Effective Earth radius [m].
    polarization : str, default "vertical"
        "vertical" or "horizontal" (spherical-Earth first term).
    sea_fraction : float, default 0
        Fraction of the path over sea [-].

    Returns
    -------
    dict
        ``knife_edge``, ``bullington``, ``delta_bullington``,
        ``spherical_earth`` [dB] and ``smooth_surface_height_a_m``/``_b_m``
        [m AMSL].

    References
    ----------
    .. [1] ITU-R P.452-18 section 4.2 (eqs. 13-43); ITU-R P.526-15
       section 4.1.
    """
    d = np.asarray(distance_m, dtype=float)[None, :]
    out = diffraction_batch(d, np.asarray(terrain_m, dtype=float)[None, :], np.array([d.shape[1]]),
                            float(antenna_a_amsl_m), float(antenna_b_amsl_m), frequency_mhz,
                            effective_radius_m, polarization == "vertical", sea_fraction)
    return {"knife_edge": float(out["knife_edge"][0]), "bullington": float(out["bullington"][0]),
            "delta_bullington": float(out["delta_bullington"][0]),
            "spherical_earth": float(out["spherical_earth"][0]),
            "smooth_surface_height_a_m": float(out["hstd"][0]), "smooth_surface_height_b_m": float(out["hsrd"][0])}


def minimum_separation_m(wavelength_m: float) -> float:
    """Shortest antenna separation a link is computed for [m]: ``max(MIN_SEPARATION_M, lambda / (4 pi))``.

    Parameters
    ----------
    wavelength_m : float
        Wavelength [m].

    Returns
    -------
    float
        Separation [m] below which the free-space loss of ITU-R P.525-4
        eq. (4) would be negative, or :data:`MIN_SEPARATION_M` if larger.
    """
    return max(MIN_SEPARATION_M, wavelength_m / (4.0 * math.pi))


def check_separation(slant_m: float, wavelength_m: float) -> None:
    """Refuse sites too close for any path-loss estimate (closer than 0.1 m or lambda / (4 pi)).

    Parameters
    ----------
    slant_m : float
        Distance between the antenna tips [m].
    wavelength_m : float
        Wavelength [m].

    Raises
    ------
    ProfilerError
        If the antennas are closer than ``max(0.1 m, lambda / (4 pi))``.

    References
    ----------
    .. [1] ITU-R P.525-4 Annex 1 section 2.2, eq. (4): the free-space loss
       20 log10(4 pi d / lambda) is negative below d = lambda / (4 pi).
    """
    need = minimum_separation_m(wavelength_m)
    if not slant_m >= need:
        raise ProfilerError(f"the sites are too close: the antennas are {slant_m:.3f} m apart and a link needs at "
                            f"least {need:.2f} m; check the coordinates and masts")


def _rx_power(tx, rx, loss_total):
    """Received power [dBm], one value per link: EIRP - path loss + receiving gain - feeder loss."""
    return lorawan.eirp_dbm(tx["tx_power_dbm"], tx["gain_dbi"], tx["cable_loss_db"]) - loss_total \
        + rx["gain_dbi"] - rx["cable_loss_db"]


def _direction_batch(plan, radio, direction, tx, rx, loss_total, frequency_mhz, phy, app, dwell, tables=True):
    """Per-DR margins, the recommended DR and the budget's (sf, bw, dr, sensitivity) for one direction.

    ``tables=False``: no per-DR tables (``sensitivity_dbm``, ``margin_db`` and ``closes`` None), the largest
    allowed margin ``max_margin_db`` instead (:func:`profiler.lora.lorawan.dr_best`, the same numbers).
    """
    rules = lorawan.dr_rules(plan, direction, phy, app, dwell, frequency_mhz)
    p_rx = _rx_power(tx, rx, loss_total)
    if tables:
        sens, margin, closes, rec = lorawan.dr_margins(p_rx, rules, rx["noise_figure_db"], radio.fade_margin_db)
        best_margin = np.max(np.where(rules["allowed"], margin, -np.inf), axis=-1)
    else:
        sens = margin = closes = None
        rec, best_margin = lorawan.dr_best(p_rx, rules, rx["noise_figure_db"], radio.fade_margin_db)
    if radio.sf is not None:
        sf = np.full(rec.shape, int(radio.sf))
        bw = np.full(rec.shape, float(radio.bw_khz))
        hit = np.flatnonzero((rules["sf"] == radio.sf) & (rules["bw_khz"] == radio.bw_khz))
        dr = np.full(rec.shape, int(rules["dr"][hit[0]]) if hit.size else -1)
    else:
        fallback = lorawan.slowest_allowed(rules)
        if fallback < 0:
            fallback = int(np.argmin(rules["bitrate_bps"]))
        idx = np.where(rec >= 0, rec, fallback)
        sf, bw, dr = rules["sf"][idx], rules["bw_khz"][idx], rules["dr"][idx]
    return {"rules": rules, "rx_power_dbm": p_rx, "sensitivity_dbm": sens, "margin_db": margin,
            "closes": closes, "recommended": rec, "max_margin_db": best_margin, "sf": sf, "bw_khz": bw, "dr": dr,
            "budget_sensitivity_dbm": lora_modem.lora_sensitivity_batch_dbm(sf, bw, rx["noise_figure_db"])}


def radio_batch(d, terrain, n, h_a, h_b, frequency_mhz, ae, radio: RadioSettings, plan: Plan | None = None,
                overrides: dict | None = None, rx2: bool = True, reduced: dict | None = None,
                informative: bool = True, paths: dict | None = None) -> dict:
    """Losses and both budgets of many links at once; every value an array over links.

    Parameters
    ----------
    d, terrain : ndarray, shape (L, N)
        Padded profiles (distance from A [m], terrain [m AMSL]); row l uses ``n[l]`` samples.
    n : ndarray of int, shape (L,)
        Number of samples per link.
    h_a, h_b : ndarray, shape (L,)
        Antenna heights [m AMSL].
    frequency_mhz : float
        Working (uplink) frequency [MHz].
    ae : float or ndarray
        Effective Earth radius [m].
    radio : RadioSettings
        Validated settings.
    plan : Plan, optional
        Regional plan; None when only a frequency was given.
    overrides : dict, optional
        Per-link end values, see :func:`resolve_ends`.
    rx2 : bool
        Also compute the RX2 downlink window (a third frequency); a network
        table does not need it.
    reduced : dict, optional
        The frequency-independent reductions of the diffraction model over
        these links (:func:`profiler.propagation.diffraction_batch.diffraction_reductions`);
        then ``d``, ``terrain`` and ``n`` may be None (``profiler coverage``).
    informative : bool
        With False, skip what only a link's report shows: with
        ``--diffraction none`` the diffraction models, and with a regional
        plan the per-SF table ``per_sf`` and the per-DR tables of each
        direction (batch callers report neither).
    paths : dict, optional
        Terminal coordinates and clutter/zone columns for ``--model p1812``
        (:func:`profiler.engine.losses.path_loss_batch`).

    Returns
    -------
    dict
        ``losses`` ({frequency: loss block of arrays}), ``p1812``
        ({frequency: named P.1812-8 values}, with ``--model p1812``), ``terminals``
        ({frequency: the terminals of :func:`profiler.engine.losses.path_loss_batch`}), ``ends``, ``cap_notes``,
        ``uplink`` and ``downlink`` (rx power, the budget's margin, sf, bw,
        dr and sensitivity; with a plan also the rules, the recommended
        index, the largest allowed margin ``max_margin_db`` and the per-DR
        arrays, None with ``informative=False``), ``rx2`` (with a plan), ``per_sf`` (uplink
        margins for SF7-SF12 at --bw-khz; not with ``informative=False`` and a plan), ``phy_bytes``, ``app_bytes``,
        ``dwell_ms``, ``downlink_frequency_mhz``.  Powers [dBm], losses and
        margins [dB], frequencies [MHz], times [ms], payloads [byte].

    References
    ----------
    .. [1] ITU-R P.525-4 Annex 1 section 2.2 (free space and e.i.r.p.
       between isotropic antennas).
    .. [2] ITU-R P.452-18 section 4.2 and ITU-R P.526-15 section 4
       (diffraction).
    .. [3] LoRa Alliance RP002-1.0.4, the plan's data-rate, payload-size,
       power and dwell-time subsections.
    """
    h_a = np.asarray(h_a, dtype=float)
    h_b = np.asarray(h_b, dtype=float)
    ends, cap_notes = resolve_ends(radio, plan, h_a.size, overrides)
    if plan is None and radio.dwell_time is not None:
        raise ProfilerError("--dwell-time needs a regional plan: give --band instead of --freq-mhz")
    dwell = dwell_time_limit_ms(plan, radio.dwell_time) if plan is not None else None
    f_down = plan.downlink_frequency_mhz if plan is not None else frequency_mhz
    freqs = {frequency_mhz, f_down} | ({plan.rx2_frequency_mhz} if plan is not None and rx2 else set())
    pol_a = ends["gateway" if radio.gateway == "a" else "node"]["polarization_deg"]
    pol_b = ends["node" if radio.gateway == "a" else "gateway"]["polarization_deg"]
    losses = {f: path_loss_batch(d, terrain, n, h_a, h_b, f, ae, radio, pol_a, pol_b, reduced, informative, paths,
                                 overrides) for f in sorted(freqs)}
    named = {f: block.pop("p1812") for f, block in losses.items() if "p1812" in block}
    terminals = {f: block.pop("terminals") for f, block in losses.items()}
    phy, app = lorawan.payload_sizes(radio.payload_bytes, radio.app_payload_bytes)
    gw, node = ends["gateway"], ends["node"]
    out = {"losses": losses, "p1812": named, "terminals": terminals, "ends": ends, "cap_notes": cap_notes,
           "phy_bytes": phy, "app_bytes": app,
           "dwell_ms": dwell, "downlink_frequency_mhz": f_down}
    sf_axis = np.asarray(lora_modem.LORA_SPREADING_FACTORS)
    up_rx = _rx_power(node, gw, losses[frequency_mhz]["total"])
    by_plan = plan is not None and radio.sensitivity_dbm is None
    if informative or not by_plan:   # the per-SF table: a link's report, or the budget without a plan
        per_sf_sens = lora_modem.lora_sensitivity_batch_dbm(sf_axis[None, :], radio.bw_khz,
                                                           gw["noise_figure_db"][:, None])
        out["per_sf"] = {"sensitivity_dbm": per_sf_sens, "margin_db": up_rx[:, None] - per_sf_sens}
    if by_plan:
        out["uplink"] = _direction_batch(plan, radio, "uplink", node, gw, losses[frequency_mhz]["total"],
                                         frequency_mhz, phy, app, dwell, informative)
        out["downlink"] = _direction_batch(plan, radio, "downlink", gw, node, losses[f_down]["total"],
                                           f_down, phy, app, dwell, informative)
        if rx2:
            sf2, bw2 = plan.data_rates[plan.rx2_dr]
            s2 = lora_modem.lora_sensitivity_batch_dbm(sf2, bw2, node["noise_figure_db"])
            out["rx2"] = {"sensitivity_dbm": s2,
                          "margin_db": _rx_power(gw, node, losses[plan.rx2_frequency_mhz]["total"]) - s2}
        return out
    closes = out["per_sf"]["margin_db"] >= radio.fade_margin_db
    lowest = np.where(closes.any(axis=1), sf_axis[np.argmax(closes, axis=1)], -1)
    for direction, tx, rx, f in (("uplink", node, gw, frequency_mhz), ("downlink", gw, node, f_down)):
        if radio.sensitivity_dbm is not None:
            sf = bw = dr = None
            sens = np.full(h_a.shape, float(radio.sensitivity_dbm))
        else:
            sf = np.full(h_a.shape, int(radio.sf)) if radio.sf is not None else np.where(lowest > 0, lowest, 12)
            bw = np.full(h_a.shape, float(radio.bw_khz))
            dr = np.full(h_a.shape, -1)
            sens = lora_modem.lora_sensitivity_batch_dbm(sf, bw, rx["noise_figure_db"])
        out[direction] = {"rx_power_dbm": _rx_power(tx, rx, losses[f]["total"]), "sf": sf, "bw_khz": bw,
                          "dr": dr, "budget_sensitivity_dbm": sens, "lowest_closing_sf": lowest}
    return out


def _budget_block(rb, direction, i, fade, frequency_mhz, source):
    """One direction's budget dict for link ``i`` of a :func:`radio_batch` result."""
    ends = rb["ends"]
    tx, rx = (ends["node"], ends["gateway"]) if direction == "uplink" else (ends["gateway"], ends["node"])
    b = rb[direction]
    loss = rb["losses"][frequency_mhz]["total"][i]
    p_rx = float(b["rx_power_dbm"][i])
    sens = float(b["budget_sensitivity_dbm"][i])
    margin = p_rx - sens
    sf = None if b["sf"] is None else int(b["sf"][i])
    dr = None if b["dr"] is None or int(b["dr"][i]) < 0 else int(b["dr"][i])
    return {"direction": direction, "transmitter": tx["end"], "receiver": rx["end"],
            "frequency_mhz": float(frequency_mhz), "path_loss_db": float(loss),
            "tx_power_dbm": float(tx["tx_power_dbm"][i]),
            "eirp_dbm": float(lorawan.eirp_dbm(tx["tx_power_dbm"][i], tx["gain_dbi"][i], tx["cable_loss_db"][i])),
            "rx_power_dbm": p_rx, "noise_figure_db": float(rx["noise_figure_db"][i]), "sensitivity_dbm": sens,
            "margin_db": margin, "fade_margin_required_db": float(fade), "closes": bool(margin >= fade),
            "sf": sf, "bw_khz": None if b["bw_khz"] is None else float(b["bw_khz"][i]), "dr": dr,
            "sensitivity_source": source}


def _lora_blocks(rb, plan, radio, i, frequency_mhz):
    """(lora dict, warnings) for link ``i``."""
    warnings = []
    fade = radio.fade_margin_db
    ends = rb["ends"]
    per_sf_margin = rb["per_sf"]["margin_db"][i]
    toa = np.asarray(lora_modem.lora_time_on_air_ms(np.asarray(lora_modem.LORA_SPREADING_FACTORS), radio.bw_khz,
                                                rb["phy_bytes"]))
    per_hour = np.asarray(lora_modem.uplinks_per_hour(toa, 0.01))
    table = [{"sf": int(sf), "sensitivity_dbm": float(rb["per_sf"]["sensitivity_dbm"][i, j]),
              "margin_db": float(per_sf_margin[j]), "closes": bool(per_sf_margin[j] >= fade),
              "time_on_air_ms": float(toa[j]), "uplinks_per_hour_1pct": int(per_hour[j])}
             for j, sf in enumerate(lora_modem.LORA_SPREADING_FACTORS)]
    lora = {"bw_khz": float(radio.bw_khz), "payload_bytes": rb["phy_bytes"], "app_payload_bytes": rb["app_bytes"],
            "noise_figure_db": float(ends["gateway"]["noise_figure_db"][i]),
            "noise_figure_node_db": float(ends["node"]["noise_figure_db"][i]),
            "per_sf": table, "lowest_closing_sf": None, "uplink": None, "downlink": None}
    if plan is None:
        low = int(rb["uplink"]["lowest_closing_sf"][i])
        lora["lowest_closing_sf"] = low if low > 0 else None
        return lora, warnings
    for direction, f in (("uplink", frequency_mhz), ("downlink", rb["downlink_frequency_mhz"])):
        b = rb[direction]
        rec = int(b["recommended"][i])
        block = lorawan.direction_block(b["rules"], f, b["sensitivity_dbm"][i], b["margin_db"][i], b["closes"][i], rec)
        lora[direction] = block
        if rec < 0:
            allowed = b["rules"]["allowed"]
            j = int(np.argmax(np.where(allowed, b["margin_db"][i], -np.inf)))
            warnings.append(f"no allowed {direction} data rate of {plan.name} closes with the {fade:g} dB fade "
                            f"margin (best: DR{b['rules']['dr'][j]} at {b['margin_db'][i, j]:.1f} dB)")
        if radio.sf is not None and (int(b["dr"][i]) < 0 or int(b["dr"][i]) not in block_allowed(block)):
            warnings.append(f"SF{radio.sf} at {radio.bw_khz:g} kHz is not an allowed {direction} data rate of "
                            f"{plan.name}")
    rec_up = lora["uplink"]["recommended_dr"]
    lora["lowest_closing_sf"] = plan.data_rates[rec_up][0] if rec_up is not None else None
    sf2, bw2 = plan.data_rates[plan.rx2_dr]
    m2 = float(rb["rx2"]["margin_db"][i])
    lora["downlink"]["rx2"] = {"frequency_mhz": plan.rx2_frequency_mhz, "dr": plan.rx2_dr, "sf": sf2,
                               "bw_khz": float(bw2), "sensitivity_dbm": float(rb["rx2"]["sensitivity_dbm"][i]),
                               "margin_db": m2, "closes": bool(m2 >= fade)}
    return lora, warnings


def block_allowed(block) -> set:
    """DR numbers allowed in a per-DR block.

    Parameters
    ----------
    block : dict
        A ``lora.uplink`` / ``lora.downlink`` block
        (:func:`profiler.lora.lorawan.direction_block`).

    Returns
    -------
    set of int
        The allowed DR numbers [-].
    """
    return {row["dr"] for row in block["per_dr"] if row["allowed"]}


def radio_results(d, terrain, h_a, h_b, frequency_mhz, ae, radio: RadioSettings, plan: Plan | None = None,
                  paths: dict | None = None):
    """Losses, both budgets, the LoRa tables and compliance for one geometry (a batch of one).

    Parameters
    ----------
    d : array_like
        Distance from A [m] of the single profile.
    terrain : array_like
        Terrain height [m AMSL].
    h_a, h_b : float
        Antenna heights [m AMSL].
    frequency_mhz : float
        Working (uplink) frequency [MHz].
    ae : float
        Effective Earth radius [m].
    radio : RadioSettings
        Validated settings.
    plan : Plan, optional
        Regional plan; None when only a frequency was given.
    paths : dict, optional
        ``--model p1812``'s terminal coordinates and clutter/zone columns of
        the one profile, each with a leading axis of length 1
        (:func:`profiler.engine.losses.path_loss_batch`).

    Returns
    -------
    dict
        Keys ``p1812`` (the named P.1812-8 values at the uplink frequency,
        floats; None with ``--model terrain``), ``terminals`` (per end "a",
        "b": clutter class, R, its source, indoor type, extra loss;
        :func:`profiler.engine.terminals.terminal_report`), ``loss_db`` (at the uplink frequency), ``budget`` (uplink,
        node -> gateway), ``budget_downlink``, ``lora`` (None with a given
        sensitivity), ``compliance``, ``slant_distance_m`` [m], ``warnings``.

    References
    ----------
    .. [1] ITU-R P.525-4 Annex 1 section 2.2; ITU-R P.452-18 section 4.2;
       LoRa Alliance RP002-1.0.4 (as :func:`radio_batch`).
    """
    from .terminals import terminal_report, terminal_warnings

    d2 = np.asarray(d, dtype=float)[None, :]
    rb = radio_batch(d2, np.asarray(terrain, dtype=float)[None, :], np.array([d2.shape[1]]),
                     np.array([float(h_a)]), np.array([float(h_b)]), frequency_mhz, ae, radio, plan, paths=paths)
    source = "given" if radio.sensitivity_dbm is not None else "lora"
    fade = radio.fade_margin_db
    loss = {k: (v if isinstance(v, str) else float(v[0])) for k, v in rb["losses"][frequency_mhz].items()}
    warnings = list(rb["cap_notes"])
    lora = None
    if radio.sensitivity_dbm is None:
        lora, w = _lora_blocks(rb, plan, radio, 0, frequency_mhz)
        warnings += w
    ends0 = {role: {k: (v if isinstance(v, str) else float(v[0])) for k, v in e.items()}
             for role, e in rb["ends"].items()}
    compliance = lorawan.compliance_block(plan, ends0, rb["dwell_ms"], rb["cap_notes"])
    if compliance["eirp_ok"] is False:
        warnings += [n for n in compliance["notes"] if "above the" in n]
    warnings += terminal_warnings(rb["terminals"][frequency_mhz], radio)
    named = rb["p1812"].get(frequency_mhz)
    p1812 = None if named is None else {k: (bool(v[0]) if v.dtype == bool else float(v[0]))
                                        for k, v in ((k, np.asarray(v)) for k, v in named.items())}
    return {"loss_db": loss, "p1812": p1812,
            "terminals": terminal_report(rb["terminals"][frequency_mhz]["ends"], 0, radio.propagation.model),
            "budget": _budget_block(rb, "uplink", 0, fade, frequency_mhz, source),
            "budget_downlink": _budget_block(rb, "downlink", 0, fade, rb["downlink_frequency_mhz"], source),
            "lora": lora, "compliance": compliance, "ends": ends0,
            "slant_distance_m": float(slant_distance_m(d2[0, -1], h_a, h_b)), "warnings": warnings}

