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

from . import budget, diffraction, lorawan
from .errors import ProfilerError
from .regional import Plan, dwell_time_limit_ms, max_tx_power_dbm

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

    def validate(self) -> "RadioSettings":
        """Check the settings; raise :class:`ProfilerError` on the first problem."""
        if self.gateway not in ("a", "b"):
            raise ProfilerError(f"--gateway must be a or b, got {self.gateway!r}")
        for name in ("tx_power_dbm", "tx_power_a_dbm", "tx_power_b_dbm", "gain_a_dbi", "gain_b_dbi",
                     "cable_loss_a_db", "cable_loss_b_db", "fade_margin_db", "noise_figure_db",
                     "noise_figure_a_db", "noise_figure_b_db", "extra_loss_db", "sea_fraction", "sensitivity_dbm"):
            value = getattr(self, name)
            if value is not None and not math.isfinite(float(value)):
                raise ProfilerError(f"--{name.replace('_', '-')} must be a finite number, got {value}")
        for name in ("cable_loss_a_db", "cable_loss_b_db", "extra_loss_db", "fade_margin_db"):
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
            budget.lora_sensitivity_dbm(12, self.bw_khz, 0.0 if nf is None else nf)
        if self.sf is not None:
            budget.lora_sensitivity_dbm(self.sf, self.bw_khz, 0.0)
        phy, _ = lorawan.payload_sizes(self.payload_bytes, self.app_payload_bytes)
        budget.lora_time_on_air_ms(12, self.bw_khz, phy)
        budget.polarization_angle_deg(self.polarization_a)
        budget.polarization_angle_deg(self.polarization_b)
        return self

    @property
    def node(self) -> str:
        """The node's end, "a" or "b"."""
        return "b" if self.gateway == "a" else "a"


def resolve_ends(radio: RadioSettings, plan: Plan | None):
    """Powers, gains, feeder losses and noise figures of both ends, and ``--cap-eirp`` notes.

    Returns
    -------
    ends : dict
        ``{"gateway": {...}, "node": {...}}``, each with ``end`` ("a"/"b"),
        ``tx_power_dbm``, ``gain_dbi``, ``cable_loss_db``, ``noise_figure_db``.
    notes : list of str
        What ``--cap-eirp`` changed.
    """
    if radio.cap_eirp and plan is None:
        raise ProfilerError("--cap-eirp needs a regional plan: give --band instead of --freq-mhz")
    ends, notes = {}, []
    for role, end in (("gateway", radio.gateway), ("node", radio.node)):
        gain = float(getattr(radio, f"gain_{end}_dbi"))
        loss = float(getattr(radio, f"cable_loss_{end}_db"))
        power = getattr(radio, f"tx_power_{end}_dbm")
        if power is None and role == "node":
            power = radio.tx_power_dbm
        if power is None:
            typical = NODE_TX_POWER_DBM if role == "node" or plan is None else GATEWAY_TX_POWER_DBM
            power = typical if plan is None else min(typical, max_tx_power_dbm(plan, gain, loss))
        elif radio.cap_eirp and power > max_tx_power_dbm(plan, gain, loss) + 1e-9:
            capped = max_tx_power_dbm(plan, gain, loss)
            notes.append(f"--cap-eirp: {role} power lowered from {power:g} to {capped:.2f} dBm to meet the "
                         f"{plan.name} EIRP limit of {plan.max_eirp_dbm:g} dBm")
            power = capped
        nf = getattr(radio, f"noise_figure_{end}_db")
        if nf is None:
            nf = radio.noise_figure_db
        if nf is None:
            nf = GATEWAY_NOISE_FIGURE_DB if role == "gateway" else NODE_NOISE_FIGURE_DB
        ends[role] = {"end": end, "tx_power_dbm": float(power), "gain_dbi": gain, "cable_loss_db": loss,
                      "noise_figure_db": float(nf)}
    return ends, notes


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

    References
    ----------
    Law of cosines (handbook); ITU-R P.525-4 uses the distance between the
    antennas for the free-space loss.
    """
    ha = np.asarray(antenna_a_amsl_m, dtype=float)
    hb = np.asarray(antenna_b_amsl_m, dtype=float)
    s = np.sin(np.asarray(distance_m, dtype=float) / (2.0 * earth_radius_m))
    return np.sqrt((ha - hb) ** 2 + 4.0 * (earth_radius_m + ha) * (earth_radius_m + hb) * s * s)


def diffraction_losses(distance_m, terrain_m, antenna_a_amsl_m, antenna_b_amsl_m, frequency_mhz,
                       effective_radius_m, polarization="vertical", sea_fraction=0.0) -> dict:
    """Knife-edge, Bullington and delta-Bullington losses of one profile [dB].

    Returns a dict with keys ``knife_edge``, ``bullington``,
    ``delta_bullington``, ``spherical_earth``, ``smooth_surface_height_a_m``,
    ``smooth_surface_height_b_m`` (the smooth-surface heights hstd, hsrd of
    the diffraction model, not antenna heights).

    References
    ----------
    ITU-R P.526-15 sections 4.1 and 4.5; ITU-R P.452-18 section 4.2 and
    Attachment 2 eqs. (165)-(167).
    """
    args = (distance_m, terrain_m, antenna_a_amsl_m, antenna_b_amsl_m, frequency_mhz, effective_radius_m)
    ke = diffraction.knife_edge(*args)
    bu = diffraction.bullington(*args)
    db = diffraction.delta_bullington(*args, polarization=polarization, sea_fraction=sea_fraction)
    return {"knife_edge": float(ke.loss_db), "bullington": float(bu), "delta_bullington": float(db.loss_db),
            "spherical_earth": float(db.spherical_earth_db),
            "smooth_surface_height_a_m": float(db.effective_height_a_m),
            "smooth_surface_height_b_m": float(db.effective_height_b_m)}


def path_loss(d, terrain, h_a, h_b, frequency_mhz, ae, radio: RadioSettings) -> dict:
    """The ``loss_db`` block for one frequency: free space (slant distance), diffraction, extra, polarization."""
    pol_a = budget.polarization_angle_deg(radio.polarization_a)
    pol_b = budget.polarization_angle_deg(radio.polarization_b)
    # The spherical-Earth term needs one polarization: that of antenna A.
    ground_pol = "vertical" if abs(math.cos(math.radians(pol_a))) >= math.sqrt(0.5) else "horizontal"
    parts = diffraction_losses(d, terrain, h_a, h_b, frequency_mhz, ae, ground_pol, radio.sea_fraction)
    method = radio.diffraction_method
    diff = 0.0 if method == "none" else parts[method.replace("-", "_")]
    slant = float(slant_distance_m(d[-1], h_a, h_b))
    free = float(budget.free_space_loss_db(slant, frequency_mhz))
    pol_loss = float(budget.polarization_mismatch_db(pol_a, pol_b))
    total = free + diff + radio.extra_loss_db + pol_loss
    return {"free_space": free, "diffraction": diff, "extra": float(radio.extra_loss_db),
            "polarization": pol_loss, "total": total, "diffraction_method": method, **parts}


def check_separation(slant_m: float, wavelength_m: float) -> None:
    """Refuse sites too close for any path-loss estimate (closer than 0.1 m or lambda / (4 pi))."""
    need = max(MIN_SEPARATION_M, wavelength_m / (4.0 * math.pi))
    if not slant_m >= need:
        raise ProfilerError(f"the sites are too close: the antennas are {slant_m:.3f} m apart and a link needs at "
                            f"least {need:.2f} m; check the coordinates and masts")


def _budget_block(direction, tx, rx, loss_total, frequency_mhz, sensitivity, fade, sf, bw, dr, source):
    eirp = float(lorawan.eirp_dbm(tx["tx_power_dbm"], tx["gain_dbi"], tx["cable_loss_db"]))
    rx_power = eirp - loss_total + rx["gain_dbi"] - rx["cable_loss_db"]
    margin = rx_power - sensitivity
    return {"direction": direction, "transmitter": tx["end"], "receiver": rx["end"],
            "frequency_mhz": float(frequency_mhz), "path_loss_db": float(loss_total),
            "tx_power_dbm": tx["tx_power_dbm"], "eirp_dbm": eirp, "rx_power_dbm": rx_power,
            "noise_figure_db": rx["noise_figure_db"], "sensitivity_dbm": float(sensitivity),
            "margin_db": float(margin), "fade_margin_required_db": float(fade), "closes": bool(margin >= fade),
            "sf": sf, "bw_khz": bw, "dr": dr, "sensitivity_source": source}


def _rx_power(tx, rx, loss_total):
    return float(lorawan.eirp_dbm(tx["tx_power_dbm"], tx["gain_dbi"], tx["cable_loss_db"])
                 - loss_total + rx["gain_dbi"] - rx["cable_loss_db"])


def _dr_of(rules, sf, bw):
    hit = np.flatnonzero((rules["sf"] == sf) & (rules["bw_khz"] == bw))
    return None if hit.size == 0 else int(rules["dr"][hit[0]])


def _choose(rules, recommended, radio):
    """(sf, bw, dr) of a direction's budget: --sf, else the recommended DR, else the slowest allowed."""
    if radio.sf is not None:
        return int(radio.sf), float(radio.bw_khz), _dr_of(rules, int(radio.sf), float(radio.bw_khz))
    i = recommended if recommended >= 0 else lorawan.slowest_allowed(rules)
    if i < 0:
        i = int(np.argmin(rules["bitrate_bps"]))
    return int(rules["sf"][i]), float(rules["bw_khz"][i]), int(rules["dr"][i])


def _plan_directions(plan, radio, ends, losses, phy, app, dwell):
    """Uplink and downlink per-DR blocks, the budgets and warnings with a regional plan."""
    fade = radio.fade_margin_db
    out, warnings = {}, []
    for direction, tx, rx, f in (("uplink", ends["node"], ends["gateway"], plan.uplink_frequency_mhz),
                                 ("downlink", ends["gateway"], ends["node"], plan.downlink_frequency_mhz)):
        rules = lorawan.dr_rules(plan, direction, phy, app, dwell, f)
        p_rx = _rx_power(tx, rx, losses[f]["total"])
        sens, margin, closes, rec = lorawan.dr_margins(p_rx, rules, rx["noise_figure_db"], fade)
        block = lorawan.direction_block(rules, f, sens, margin, closes, int(rec))
        sf, bw, dr = _choose(rules, int(rec), radio)
        if block["recommended_dr"] is None:
            best = int(np.argmax(np.where(rules["allowed"], margin, -np.inf)))
            warnings.append(f"no allowed {direction} data rate of {plan.name} closes with the {fade:g} dB fade "
                            f"margin (best: DR{rules['dr'][best]} at {margin[best]:.1f} dB)")
        if radio.sf is not None and (dr is None or dr not in block_allowed(block)):
            warnings.append(f"SF{sf} at {bw:g} kHz is not an allowed {direction} data rate of {plan.name}")
        s = float(budget.lora_sensitivity_dbm(sf, bw, rx["noise_figure_db"])) if radio.sensitivity_dbm is None \
            else radio.sensitivity_dbm
        out[direction] = (block, _budget_block(direction, tx, rx, losses[f]["total"], f, s, fade, sf, bw, dr, "lora"))
    rx2_f = plan.rx2_frequency_mhz
    sf2, bw2 = plan.data_rates[plan.rx2_dr]
    node = ends["node"]
    s2 = float(budget.lora_sensitivity_dbm(sf2, bw2, node["noise_figure_db"]))
    m2 = _rx_power(ends["gateway"], node, losses[rx2_f]["total"]) - s2
    out["downlink"][0]["rx2"] = {"frequency_mhz": rx2_f, "dr": plan.rx2_dr, "sf": sf2, "bw_khz": float(bw2),
                                 "sensitivity_dbm": s2, "margin_db": float(m2), "closes": bool(m2 >= fade)}
    return out, warnings


def block_allowed(block) -> set:
    """DR numbers allowed in a per-DR block."""
    return {row["dr"] for row in block["per_dr"] if row["allowed"]}


def radio_results(d, terrain, h_a, h_b, frequency_mhz, ae, radio: RadioSettings, plan: Plan | None = None):
    """Losses, both budgets, the LoRa tables and compliance for one geometry.

    Parameters
    ----------
    d, terrain : ndarray
        Profile distances from A [m] and terrain heights [m AMSL].
    h_a, h_b : float
        Antenna heights [m AMSL] (ground + mast).
    frequency_mhz : float
        Working (uplink) frequency [MHz]; with a plan, its uplink frequency.
    ae : float
        Effective Earth radius [m].
    radio : RadioSettings
        Validated settings.
    plan : Plan, optional
        Regional plan; None when only a frequency was given.

    Returns
    -------
    dict with keys ``loss_db`` (at the uplink frequency), ``budget``
    (uplink, node -> gateway), ``budget_downlink``, ``lora`` (None with a
    given sensitivity), ``compliance``, ``slant_distance_m``, ``warnings``.
    """
    ends, cap_notes = resolve_ends(radio, plan)
    dwell = dwell_time_limit_ms(plan, radio.dwell_time) if plan is not None else None
    if plan is None and radio.dwell_time is not None:
        raise ProfilerError("--dwell-time needs a regional plan: give --band instead of --freq-mhz")
    freqs = {frequency_mhz}
    if plan is not None:
        freqs |= {plan.uplink_frequency_mhz, plan.downlink_frequency_mhz, plan.rx2_frequency_mhz}
    losses = {f: path_loss(d, terrain, h_a, h_b, f, ae, radio) for f in sorted(freqs)}
    phy, app = lorawan.payload_sizes(radio.payload_bytes, radio.app_payload_bytes)
    fade = radio.fade_margin_db
    up_rx = _rx_power(ends["node"], ends["gateway"], losses[frequency_mhz]["total"])
    table = budget.lora_table(up_rx, radio.bw_khz, ends["gateway"]["noise_figure_db"], phy, fade)
    warnings = [n for n in cap_notes]
    if plan is not None and radio.sensitivity_dbm is None:
        blocks, w = _plan_directions(plan, radio, ends, losses, phy, app, dwell)
        warnings += w
        (up_block, up_budget), (down_block, down_budget) = blocks["uplink"], blocks["downlink"]
        lowest = (plan.data_rates[up_block["recommended_dr"]][0] if up_block["recommended_dr"] is not None else None)
    else:
        up_block = down_block = None
        lowest = budget.lowest_closing_sf(table)
        if radio.sensitivity_dbm is not None:
            sf = bw = None
            s_up = s_down = float(radio.sensitivity_dbm)
        else:
            sf = int(radio.sf) if radio.sf is not None else (lowest if lowest is not None else 12)
            bw = float(radio.bw_khz)
            s_up = float(budget.lora_sensitivity_dbm(sf, bw, ends["gateway"]["noise_figure_db"]))
            s_down = float(budget.lora_sensitivity_dbm(sf, bw, ends["node"]["noise_figure_db"]))
        source = "given" if radio.sensitivity_dbm is not None else "lora"
        f_down = plan.downlink_frequency_mhz if plan is not None else frequency_mhz
        up_budget = _budget_block("uplink", ends["node"], ends["gateway"], losses[frequency_mhz]["total"],
                                  frequency_mhz, s_up, fade, sf, bw, None, source)
        down_budget = _budget_block("downlink", ends["gateway"], ends["node"], losses[f_down]["total"],
                                    f_down, s_down, fade, sf, bw, None, source)
    compliance = lorawan.compliance_block(plan, {k: v for k, v in ends.items()}, dwell, cap_notes)
    if compliance["eirp_ok"] is False:
        warnings += [n for n in compliance["notes"] if "above the" in n]
    lora = None
    if radio.sensitivity_dbm is None:
        lora = {"bw_khz": float(radio.bw_khz), "payload_bytes": phy, "app_payload_bytes": app,
                "noise_figure_db": ends["gateway"]["noise_figure_db"],
                "noise_figure_node_db": ends["node"]["noise_figure_db"],
                "per_sf": table, "lowest_closing_sf": lowest, "uplink": up_block, "downlink": down_block}
    return {"loss_db": losses[frequency_mhz], "budget": up_budget, "budget_downlink": down_budget, "lora": lora,
            "compliance": compliance, "ends": ends,
            "slant_distance_m": float(slant_distance_m(d[-1], h_a, h_b)), "warnings": warnings}
