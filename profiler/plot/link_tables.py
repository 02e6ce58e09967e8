"""The link sheet's radio table and its notes on magnetic bearings and RF exposure.

The radio table has one row per end (A, B): transmitter power, antenna
gain, feeder loss, EIRP against the plan's limit, the receiver's
sensitivity and its source, the fade margin it receives with and the data
rate recommended in that direction, so that the budget can be reproduced
from the sheet.  Values come from the report's ``radio_ends``, ``budget``,
``budget_downlink``, ``lora`` and ``rf_exposure`` blocks.
"""

from __future__ import annotations

import math

from .sheet import DASH, clean, num

__all__ = ["radio_block", "bearing_lines", "exposure_line", "declination_text", "exposure_distance_text"]

#: Column heads of the radio table, each with the unit of its cells ("SF12/125" is the spreading
#: factor / the bandwidth in kHz).
RADIO_HEADER = ["", "Tx [dBm]", "Gain [dBi]", "Feeder [dB]", "EIRP [dBm]", "Sens. [dBm]",
                "Sensitivity source", "Margin (req.) [dB]", "Rx rate (SF/kHz)"]


def declination_text(value) -> str:
    """``4.04° E`` / ``3.10° W``: the declination's size and its hemisphere letter (no sign with the
    letter); ``0.00°`` when it rounds to zero; an em dash when unknown."""
    if value is None:
        return DASH
    shown = f"{abs(float(value)):.2f}"
    if float(shown) == 0.0:
        return "0.00\u00b0"
    return f"{shown}\u00b0 {'E' if value > 0 else 'W'}"


def _rate(bud: dict, lora_dir: dict | None) -> str:
    if bud.get("sf") is None:
        return "n/a (sensitivity given)"
    rate = f"SF{bud['sf']}/{bud['bw_khz']:g}"
    dr = bud.get("dr")
    if lora_dir is not None and lora_dir.get("recommended_dr") is not None:
        dr = lora_dir["recommended_dr"]
    return rate if dr is None else f"DR{dr} {rate}"


def _source(end: dict, bud: dict) -> str:
    if end.get("sensitivity_source") == "given":
        return "given"
    if bud.get("sf") is None:
        return clean(end.get("sensitivity_source") or DASH)
    return f"LoRa SF{bud['sf']}/{bud['bw_khz']:g}, NF {num(end.get('noise_figure_db'), 'g')} dB"


def radio_block(report: dict):
    """The radio table for :func:`profiler.plot.sheet.draw_tables`: ``(title, header, rows)``."""
    ends = report.get("radio_ends") or {}
    up, down = report["budget"], report.get("budget_downlink") or report["budget"]
    lora = report.get("lora") or {}
    rows = []
    for key in ("a", "b"):
        end = ends.get(key)
        if end is None:
            continue
        receives = up if up.get("receiver") == key else down
        direction = "uplink" if receives is up else "downlink"
        limit = end.get("max_eirp_dbm")
        eirp = num(end.get("eirp_dbm"), ".1f")
        if limit is not None:
            ok = end["eirp_dbm"] <= limit + 1e-9
            eirp += f" \u2264 {num(limit, 'g')} met" if ok else f" > {num(limit, 'g')} EXCEEDED"
        rows.append((f"{key.upper()} {clean(end.get('role') or '')}",
                     num(end.get("tx_power_dbm"), ".2f"), num(end.get("gain_dbi"), ".2f"),
                     num(end.get("cable_loss_db"), ".2f"), eirp,
                     num(end.get('sensitivity_dbm'), '.1f'), _source(end, receives),
                     f"{num(receives.get('margin_db'), '+.1f')} (\u2265 "
                     f"{num(receives.get('fade_margin_required_db'), '.1f')})",
                     f"{_rate(receives, lora.get(direction))} {'up' if direction == 'uplink' else 'down'}"))
    return ("Radio", RADIO_HEADER, rows)


def bearing_lines(report: dict) -> list[str]:
    """Notes on the magnetic bearings: the model, epoch and date, and any compass caution."""
    model = report.get("magnetic_model")
    if not model:
        return []
    date = clean((report.get("sheet") or {}).get("date") or "")
    lines = [f"Magnetic bearings: World Magnetic Model {clean(model.get('model') or '')} (epoch "
             f"{num(model.get('epoch'), '.1f')}, {clean(model.get('package') or '')}) for {date}; "
             "magnetic = true \u2212 declination (east positive)."]
    for key in ("a", "b"):
        caution = report.get(f"compass_caution_{key}")
        if caution:
            lines.append(f"Site {key.upper()}: {clean(caution)}")
    return lines


def exposure_distance_text(distance_m) -> str:
    """A distance rounded up to the centimetre (never undercuts the estimate): ``0.03 m``."""
    if distance_m is None or not math.isfinite(distance_m):
        return DASH
    return f"{math.ceil(distance_m * 100.0 - 1e-9) / 100.0:.2f} m"


def exposure_line(report: dict) -> str:
    """The RF-exposure note: the larger general-public distance per transmitting end, with the caution."""
    blocks = report.get("rf_exposure") or {}
    parts = []
    for key in ("a", "b"):
        b = blocks.get(key)
        if b is None:
            continue
        parts.append(f"{exposure_distance_text(b.get('largest_general_public_m'))} from antenna {key.upper()} "
                     f"({num(b.get('eirp_dbm'), '.1f', ' dBm')} EIRP, {num(b.get('frequency_mhz'), '.1f', ' MHz')})")
    if not parts:
        return ""
    return ("RF exposure, general public (larger of ICNIRP 2020, 47 CFR 1.1310): keep people "
            + "; ".join(parts) + " away. Far-field estimate S = EIRP/(4\u03c0r\u00b2); local rules prevail.")
