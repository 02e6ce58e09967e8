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

from ..errors import ProfilerError
from . import modem as lora_modem
from .regional import LORAWAN_OVERHEAD_BYTES, Plan, duty_cycle_at, max_app_payload_bytes

DIRECTIONS = ("uplink", "downlink")


def bitrate_bps(sf, bw_khz, coding_rate=1):
    r"""Nominal LoRa bit rate, :math:`R_b = SF \cdot BW / 2^{SF} \cdot 4 / (4 + CR)` [bit/s].

    Parameters
    ----------
    sf : int or array_like
        Spreading factor [-], 7 to 12.
    bw_khz : float or array_like
        Bandwidth [kHz].
    coding_rate : int, default 1
        CR [-], 1 to 4 for code rates 4/5 to 4/8.

    Returns
    -------
    bitrate_bps : float or ndarray
        Nominal bit rate [bit/s].

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

    Parameters
    ----------
    payload_bytes : int, optional
        PHY payload length [byte].
    app_payload_bytes : int, optional
        Application payload length N [byte].
    default_phy_bytes : int, default 12
        PHY payload used when neither is given [byte].

    Returns
    -------
    phy_bytes : int
        PHY payload length [byte].
    app_bytes : int
        Application payload length [byte].

    Raises
    ------
    ProfilerError
        If both payloads are given, or a payload is out of range
        (PHY 1 to 255 bytes, application 0 to 242 bytes).

    References
    ----------
    .. [1] LoRaWAN L2 1.0.4 section 4 (frame format).
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
    """The LoRa data rates a direction may use: arrays ``dr``, ``sf``, ``bw_khz`` (in DR order).

    Parameters
    ----------
    p : Plan
        Regional plan (:func:`profiler.lora.regional.plan`).
    direction : {"uplink", "downlink"}
        Link direction.

    Returns
    -------
    dr : ndarray of int
        Data-rate indices [-].
    sf : ndarray of int
        Spreading factor of each DR [-].
    bw_khz : ndarray of float
        Bandwidth of each DR [kHz].

    Raises
    ------
    ProfilerError
        If ``direction`` is neither "uplink" nor "downlink".

    References
    ----------
    .. [1] RP002-1.0.4, the plan's "Data Rate and End-device Output Power
       Encoding" subsection (DR -> SF and bandwidth table).
    """
    if direction not in DIRECTIONS:
        raise ProfilerError(f"direction must be uplink or downlink, got {direction!r}")
    drs = p.uplink_drs if direction == "uplink" else p.downlink_drs
    dr = np.array(drs, dtype=np.int64)
    sf = np.array([p.data_rates[d][0] for d in drs], dtype=np.int64)
    bw = np.array([p.data_rates[d][1] for d in drs], dtype=float)
    return dr, sf, bw


def dr_rules(p: Plan, direction: str, phy_bytes: int, app_bytes: int, dwell_limit_ms, frequency_mhz: float):
    """What the plan allows at each DR of a direction (independent of the link).

    Parameters
    ----------
    p : Plan
        Regional plan.
    direction : {"uplink", "downlink"}
        Link direction.
    phy_bytes : int
        PHY payload length for the time on air [byte].
    app_bytes : int
        Application payload N checked against the plan's limit [byte].
    dwell_limit_ms : float or None
        Uplink dwell-time limit in force [ms]; None for none.
    frequency_mhz : float
        Working frequency, to find the duty-cycle sub-band [MHz].

    Returns
    -------
    dict
        Arrays over the direction's DRs: ``dr`` [-], ``sf`` [-], ``bw_khz``
        [kHz], ``time_on_air_ms`` [ms], ``max_payload_bytes`` (application
        payload N [byte]; -1 where the DR may not be used), ``allowed``
        (bool), ``reason`` (list of str, "" where allowed), ``max_per_hour``
        [1/h] (NaN where the plan has no duty cycle), ``duty_cycle`` ([-] or
        None), ``bitrate_bps`` [bit/s].

    References
    ----------
    .. [1] RP002-1.0.4, the plan's "Maximum Payload Size" subsection (N per
       DR, with the dwell-time variant) and its dwell-time rule.
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
    sensitivity_dbm : ndarray, shape (..., n_dr)
        Receiver sensitivity per DR [dBm].
    margin_db : ndarray, shape (..., n_dr)
        Received power minus sensitivity [dB].
    closes : ndarray of bool, shape (..., n_dr)
        Margin at least the fade margin.
    recommended : ndarray of int, shape (...)
        Index (into the DR axis) of the fastest allowed DR that closes; -1
        where none does.

    References
    ----------
    .. [1] Sensitivity S = -174 + 10 log10(BW) + NF + SNR_min (thermal noise
       density kT_0 with T_0 = 290 K, ITU-R P.372); see
       :func:`profiler.lora.modem.lora_sensitivity_dbm`.
    """
    nf = np.asarray(noise_figure_db, dtype=float)[..., None]
    sens = lora_modem.lora_sensitivity_batch_dbm(rules["sf"], rules["bw_khz"], nf)
    margin = np.asarray(rx_power_dbm, dtype=float)[..., None] - sens
    closes = margin >= fade_margin_db
    score = np.where(closes & rules["allowed"], rules["bitrate_bps"], -np.inf)
    best = np.argmax(score, axis=-1)
    ok = np.take_along_axis(score, best[..., None], axis=-1)[..., 0] > -np.inf
    return sens, margin, closes, np.where(ok, best, -1)


def dr_best(rx_power_dbm, rules: dict, noise_figure_db, fade_margin_db):
    """The recommended DR and the largest margin over the allowed DRs, without the per-DR tables.

    The same two results as :func:`dr_margins` (its ``recommended`` and the
    maximum of its ``margin_db`` over the allowed DRs), bit for bit, for
    batch callers that need no per-DR table.  With one noise figure for
    every link each DR closes above one received power: the least power
    ``P`` with ``P - S >= fade`` in floating point (the subtraction is
    monotone in ``P``), found from ``fade + S`` by a few neighbouring
    floats.  Taken in the order of :func:`dr_margins` (fastest first, the
    lower index first among equal bit rates), the running minimum of those
    powers is non-increasing, so the first DR that closes is a binary
    search; the largest margin is the power minus the lowest allowed
    sensitivity.  Several noise figures fall back to the tables.

    Parameters
    ----------
    rx_power_dbm, rules, noise_figure_db, fade_margin_db
        As for :func:`dr_margins`: the power at the receiver input [dBm]
        (shape (L,)), the :func:`dr_rules`, the receiver noise figure [dB]
        and the margin the link must keep [dB].

    Returns
    -------
    recommended : ndarray of int, shape (L,)
        Index (into the DR axis) of the fastest allowed DR that closes; -1
        where none does.
    max_margin_db : ndarray, shape (L,)
        Largest margin over the allowed DRs [dB]; -inf when none is allowed.

    References
    ----------
    .. [1] RP002-1.0.4, the plan's data-rate table; the sensitivity of
       :func:`profiler.lora.modem.lora_sensitivity_dbm`.
    """
    p = np.asarray(rx_power_dbm, dtype=float)
    nf = np.broadcast_to(np.asarray(noise_figure_db, dtype=float), p.shape)
    allowed = np.asarray(rules["allowed"], dtype=bool)
    if nf.size and not np.all(nf == nf.flat[0]):
        _, margin, _, rec = dr_margins(p, rules, nf, fade_margin_db)
        return rec, np.max(np.where(allowed, margin, -np.inf), axis=-1)
    nf0 = float(nf.flat[0]) if nf.size else 0.0
    sens = lora_modem.lora_sensitivity_batch_dbm(rules["sf"], rules["bw_khz"], nf0)
    if not allowed.any():
        return np.full(p.shape, -1), np.full(p.shape, -np.inf)
    order = np.argsort(-np.asarray(rules["bitrate_bps"], dtype=float), kind="stable")
    order = order[allowed[order]]
    fade = float(fade_margin_db)
    least = np.empty(order.size)
    for i, s in enumerate(sens[order].tolist()):   # a few DRs: the least power that keeps the fade margin
        t = fade + s
        while not t - s >= fade:
            t = math.nextafter(t, math.inf)
        while math.nextafter(t, -math.inf) - s >= fade:
            t = math.nextafter(t, -math.inf)
        least[i] = t
    first = np.searchsorted(-np.minimum.accumulate(least), -p, side="left")
    rec = np.where(first < order.size, order[np.minimum(first, order.size - 1)], -1)
    return rec, p - float(np.min(sens[allowed]))


def slowest_allowed(rules: dict) -> int:
    """Index of the slowest allowed DR (the fallback when none closes); -1 when none is allowed.

    Parameters
    ----------
    rules : dict
        Output of :func:`dr_rules`.

    Returns
    -------
    index : int
        Index into the DR axis [-]; -1 when no DR is allowed.

    References
    ----------
    .. [1] RP002-1.0.4, the plan's data-rate table (the slowest DR has the
       lowest bit rate).
    """
    score = np.where(rules["allowed"], -rules["bitrate_bps"], -np.inf)
    i = int(np.argmax(score))
    return i if np.isfinite(score[i]) else -1


def direction_block(rules: dict, frequency_mhz: float, sens, margin, closes, recommended: int) -> dict:
    """The ``lora.uplink`` / ``lora.downlink`` block of the JSON report for one link.

    Parameters
    ----------
    rules : dict
        Output of :func:`dr_rules`.
    frequency_mhz : float
        Working frequency of the direction [MHz].
    sens : ndarray, shape (n_dr,)
        Sensitivity per DR [dBm].
    margin : ndarray, shape (n_dr,)
        Margin per DR [dB].
    closes : ndarray of bool, shape (n_dr,)
        Whether each DR closes.
    recommended : int
        Index of the recommended DR [-]; -1 for none.

    Returns
    -------
    dict
        ``frequency_mhz`` [MHz], ``duty_cycle`` [-], ``per_dr`` (one dict per
        DR with ``sensitivity_dbm`` [dBm], ``margin_db`` [dB],
        ``time_on_air_ms`` [ms], ...) and ``recommended_dr``.

    References
    ----------
    .. [1] RP002-1.0.4, the plan's data-rate, payload-size and duty-cycle
       rules (see :func:`dr_rules`).
    """
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
    """EIRP = P + G - L [dBm] (ITU-R P.525-4 Annex 1 section 2.2: losses between isotropic antennas).

    Parameters
    ----------
    tx_power_dbm : float or array_like
        Transmitter output power P [dBm].
    gain_dbi : float or array_like
        Antenna gain G [dBi].
    cable_loss_db : float or array_like
        Feeder and connector loss L [dB].

    Returns
    -------
    eirp_dbm : ndarray
        Equivalent isotropically radiated power [dBm].

    References
    ----------
    .. [1] ITU-R P.525-4 Annex 1 section 2.2.
    """
    return np.asarray(tx_power_dbm, dtype=float) + gain_dbi - cable_loss_db


def compliance_block(p: Plan | None, ends: dict, dwell_limit_ms, capped: list) -> dict:
    """The ``compliance`` block: EIRP of both ends against the plan's limit, dwell time, duty cycle.

    Parameters
    ----------
    p : Plan or None
        Regional plan; None for an explicit frequency (nothing is checked).
    ends : dict
        Maps "gateway" and "node" to dicts with ``tx_power_dbm`` [dBm],
        ``gain_dbi`` [dBi] and ``cable_loss_db`` [dB].
    dwell_limit_ms : float or None
        Uplink dwell-time limit in force [ms]; None for none.
    capped : list of str
        Notes from ``--cap-eirp``.

    Returns
    -------
    dict
        ``max_eirp_dbm``, ``eirp_gateway_dbm``, ``eirp_node_dbm`` [dBm],
        ``eirp_ok``, ``dwell_time_limit_ms`` [ms], ``duty_cycle``,
        ``duty_cycle_downlink`` [-] and ``notes``.

    References
    ----------
    .. [1] RP002-1.0.4, the plan's "Data Rate and End-device Output Power
       Encoding" subsection (maximum EIRP) and its dwell-time rule.
    .. [2] ETSI EN 300 220-2 V3.2.1, annex B (sub-band duty cycles).
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
