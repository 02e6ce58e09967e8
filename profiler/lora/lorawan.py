"""LoRaWAN budget per data rate, both directions, and the plan's compliance checks.

Pure numpy functions over the tables of :mod:`profiler.lora.regional`.  The
received power may be an array (one value per link): every result then
carries a trailing data-rate axis, so a single link and a network of
thousands use the same code.

References
----------
.. [1] LoRa Alliance, "RP002-1.0.4 LoRaWAN Regional Parameters" (2022), the
   sections named in :mod:`profiler.lora.regional` (data-rate tables, maximum
   payload sizes, dwell time, maximum EIRP, receive windows).
.. [2] LoRa modem sensitivity and time on air: see
   :func:`profiler.lora.modem.lora_sensitivity_dbm` and
   :func:`profiler.lora.modem.lora_time_on_air_ms` (common practice).
.. [3] Nominal LoRa bit rate R_b = SF * BW / 2^SF * 4 / (4 + CR) (common
   practice, as given in LoRa modem datasheets).
"""

from __future__ import annotations

import math

import numpy as np

from . import modem as lora_modem
from ..errors import ProfilerError
from .regional import LORAWAN_OVERHEAD_BYTES, Plan, duty_cycle_at, max_app_payload_bytes

DIRECTIONS = ("uplink", "downlink")


def bitrate_bps(sf, bw_khz, coding_rate=1):
    r"""Nominal LoRa bit rate, :math:`R_b = SF \cdot BW / 2^{SF} \cdot 4 / (4 + CR)` [bit/s].

    Parameters
    ----------
    sf : int or array_like
        Spreading factor, 7 to 12.
    bw_khz : float or array_like
        Bandwidth [kHz].
    coding_rate : int, default 1
        CR, 1 to 4 for code rates 4/5 to 4/8.

    References
    ----------
    .. [1] LoRa modem datasheets (common practice); RP002-1.0.4 lists the
       "indicative physical bit rate" of each DR with the same numbers.
    """
    s = np.asarray(sf, dtype=float)
    return s * np.asarray(bw_khz, dtype=float) * 1e3 / np.exp2(s) * 4.0 / (4.0 + coding_rate)


def payload_sizes(payload_bytes=None, app_payload_bytes=None, default_phy_bytes=12):
    """PHY and application payload lengths [byte] from either option.

    ``payload_bytes`` is the PHY payload (for time on air); ``app_payload_bytes``
    the application payload N, with PHY = N + 13 (MHDR, FHDR without
    options, FPort, MIC).  Giving both is refused.  With only a PHY payload,
    N = max(PHY - 13, 0).

    Returns
    -------
    phy_bytes, app_bytes : int

    References
    ----------
    LoRaWAN L2 1.0.4 section 4 (frame format).
    """
    if payload_bytes is not None and app_payload_bytes is not None:
        raise ProfilerError("give either --payload-bytes (PHY) or --app-payload-bytes (application), not both")
    if app_payload_bytes is not None:
        n = int(app_payload_bytes)
        if n != app_payload_bytes or not 0 <= n <= 255 - LORAWAN_OVERHEAD_BYTES:
            raise ProfilerError(f"--app-payload-bytes {app_payload_bytes} is out of range; use 0 to "
                                f"{255 - LORAWAN_OVERHEAD_BYTES} bytes")
        return n + LORAWAN_OVERHEAD_BYTES, n
    phy = default_phy_bytes if payload_bytes is None else payload_bytes
    if int(phy) != phy or not 1 <= int(phy) <= 255:
        raise ProfilerError(f"--payload-bytes {phy} is out of range; use 1 to 255 bytes")
    phy = int(phy)
    return phy, max(phy - LORAWAN_OVERHEAD_BYTES, 0)


def data_rates(p: Plan, direction: str):
    """The LoRa data rates a direction may use: arrays ``dr``, ``sf``, ``bw_khz`` (in DR order)."""
    if direction not in DIRECTIONS:
        raise ProfilerError(f"direction must be uplink or downlink, got {direction!r}")
    drs = p.uplink_drs if direction == "uplink" else p.downlink_drs
    dr = np.array(drs, dtype=np.int64)
    sf = np.array([p.data_rates[d][0] for d in drs], dtype=np.int64)
    bw = np.array([p.data_rates[d][1] for d in drs], dtype=float)
    return dr, sf, bw


def dr_rules(p: Plan, direction: str, phy_bytes: int, app_bytes: int, dwell_limit_ms, frequency_mhz: float):
    """What the plan allows at each DR of a direction (independent of the link).

    Returns
    -------
    dict of arrays over the direction's DRs: ``dr``, ``sf``, ``bw_khz``,
    ``time_on_air_ms``, ``max_payload_bytes`` (application payload N; -1
    where the DR may not be used), ``allowed`` (bool), ``reason`` (list of
    str, "" where allowed), ``max_per_hour`` (float, NaN where the plan has
    no duty cycle), ``duty_cycle`` (float or None), ``bitrate_bps``.

    References
    ----------
    RP002-1.0.4, the plan's "Maximum Payload Size" subsection (N per DR,
    with the dwell-time variant) and its dwell-time rule.
    """
    dr, sf, bw = data_rates(p, direction)
    toa = np.asarray(lora_modem.lora_time_on_air_ms(sf, bw, phy_bytes), dtype=float)
    dwell = dwell_limit_ms if direction == "uplink" else None
    limits = [max_app_payload_bytes(p, int(d), dwell is not None) for d in dr]
    max_n = np.array([-1 if n is None else n for n in limits], dtype=np.int64)
    reasons = []
    for i, d in enumerate(dr):
        if limits[i] is None:
            reasons.append(f"DR{d} may not be used under the {dwell:g} ms dwell time")
        elif app_bytes > limits[i]:
            reasons.append(f"application payload {app_bytes} bytes exceeds the {limits[i]}-byte limit of DR{d}")
        elif dwell is not None and toa[i] > dwell:
            reasons.append(f"time on air {toa[i]:.0f} ms exceeds the {dwell:g} ms dwell time")
        else:
            reasons.append("")
    duty = duty_cycle_at(p, frequency_mhz)
    per_hour = (np.floor(np.round(3_600_000.0 * duty / toa, 9)) if duty is not None
                else np.full(dr.shape, np.nan))
    return {"dr": dr, "sf": sf, "bw_khz": bw, "time_on_air_ms": toa, "max_payload_bytes": max_n,
            "allowed": np.array([r == "" for r in reasons]), "reason": reasons,
            "max_per_hour": per_hour, "duty_cycle": duty, "bitrate_bps": bitrate_bps(sf, bw)}


def dr_margins(rx_power_dbm, rules: dict, noise_figure_db, fade_margin_db):
    """Sensitivity, margin and closing per DR for one or many received powers.

    Parameters
    ----------
    rx_power_dbm : float or ndarray, shape (L,)
        Power at the receiver input [dBm].
    rules : dict
        Output of :func:`dr_rules`.
    noise_figure_db : float or ndarray, shape (L,)
        Receiver noise figure [dB].
    fade_margin_db : float
        Margin the link must keep [dB].

    Returns
    -------
    sensitivity_dbm, margin_db : ndarray, shape (..., n_dr)
    closes : ndarray of bool, shape (..., n_dr)
    recommended : ndarray of int, shape (...)
        Index (into the DR axis) of the fastest allowed DR that closes; -1
        where none does.
    """
    nf = np.asarray(noise_figure_db, dtype=float)[..., None]
    sens = lora_modem.lora_sensitivity_batch_dbm(rules["sf"], rules["bw_khz"], nf)
    margin = np.asarray(rx_power_dbm, dtype=float)[..., None] - sens
    closes = margin >= fade_margin_db
    score = np.where(closes & rules["allowed"], rules["bitrate_bps"], -np.inf)
    best = np.argmax(score, axis=-1)
    ok = np.take_along_axis(score, best[..., None], axis=-1)[..., 0] > -np.inf
    return sens, margin, closes, np.where(ok, best, -1)


def slowest_allowed(rules: dict) -> int:
    """Index of the slowest allowed DR (the fallback when none closes); -1 when none is allowed."""
    score = np.where(rules["allowed"], -rules["bitrate_bps"], -np.inf)
    i = int(np.argmax(score))
    return i if np.isfinite(score[i]) else -1


def direction_block(rules: dict, frequency_mhz: float, sens, margin, closes, recommended: int) -> dict:
    """The ``lora.uplink`` / ``lora.downlink`` block of the JSON report for one link."""
    rows = []
    for i in range(rules["dr"].size):
        n = int(rules["max_payload_bytes"][i])
        per_hour = rules["max_per_hour"][i]
        rows.append({
            "dr": int(rules["dr"][i]), "sf": int(rules["sf"][i]), "bw_khz": float(rules["bw_khz"][i]),
            "sensitivity_dbm": float(sens[i]), "margin_db": float(margin[i]), "closes": bool(closes[i]),
            "time_on_air_ms": float(rules["time_on_air_ms"][i]), "allowed": bool(rules["allowed"][i]),
            "reason": rules["reason"][i] or None, "max_payload_bytes": None if n < 0 else n,
            "max_uplinks_per_hour": None if not math.isfinite(per_hour) else int(per_hour),
        })
    return {"frequency_mhz": float(frequency_mhz), "duty_cycle": rules["duty_cycle"], "per_dr": rows,
            "recommended_dr": None if recommended < 0 else int(rules["dr"][recommended])}


def eirp_dbm(tx_power_dbm, gain_dbi, cable_loss_db):
    """EIRP = P + G - L [dBm] (ITU-R P.525-4 Annex 1 section 2.2: losses between isotropic antennas)."""
    return np.asarray(tx_power_dbm, dtype=float) + gain_dbi - cable_loss_db


def compliance_block(p: Plan | None, ends: dict, dwell_limit_ms, capped: list) -> dict:
    """The ``compliance`` block: EIRP of both ends against the plan's limit, dwell time, duty cycle.

    ``ends`` maps "gateway" and "node" to dicts with tx_power_dbm, gain_dbi,
    cable_loss_db.  ``capped`` holds notes from ``--cap-eirp``.
    """
    eirp = {k: float(eirp_dbm(v["tx_power_dbm"], v["gain_dbi"], v["cable_loss_db"])) for k, v in ends.items()}
    if p is None:
        return {"max_eirp_dbm": None, "eirp_gateway_dbm": eirp["gateway"], "eirp_node_dbm": eirp["node"],
                "eirp_ok": None, "dwell_time_limit_ms": None, "duty_cycle": None, "duty_cycle_downlink": None,
                "notes": ["no regional plan (--freq-mhz): EIRP, dwell time and duty cycle are not checked"] + capped}
    notes = list(capped)
    ok = True
    for end, v in ends.items():
        if eirp[end] > p.max_eirp_dbm + 1e-9:
            ok = False
            notes.append(f"{end} EIRP {eirp[end]:.2f} dBm is above the {p.name} limit of {p.max_eirp_dbm:g} dBm "
                         f"({p.section}); lower its power or use --cap-eirp")
        if p.max_conducted_dbm is not None:
            allowed = p.max_conducted_dbm - max(0.0, v["gain_dbi"] - p.max_antenna_gain_dbi)
            if v["tx_power_dbm"] > allowed + 1e-9:
                ok = False
                notes.append(f"{end} conducted power {v['tx_power_dbm']:g} dBm is above the {p.name} limit of "
                             f"{allowed:g} dBm for a {v['gain_dbi']:g} dBi antenna ({p.section})")
    if dwell_limit_ms is not None:
        notes.append(f"uplink dwell time limited to {dwell_limit_ms:g} ms per transmission")
    duty_up = duty_cycle_at(p, p.uplink_frequency_mhz)
    duty_down = duty_cycle_at(p, p.downlink_frequency_mhz)
    if duty_up is not None:
        notes.append(f"duty cycle {100 * duty_up:g} % in the sub-band of {p.uplink_frequency_mhz:.4f} MHz")
    return {"max_eirp_dbm": p.max_eirp_dbm, "eirp_gateway_dbm": eirp["gateway"], "eirp_node_dbm": eirp["node"],
            "eirp_ok": ok, "dwell_time_limit_ms": dwell_limit_ms, "duty_cycle": duty_up,
            "duty_cycle_downlink": duty_down, "notes": notes}
