"""Writers for the link report: JSON, per-sample CSV and the human summary.

All writers take the report dictionary (``LinkResult.to_dict()``) so they
see exactly what the JSON contract holds.  Files are written atomically.
"""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np

from ..about import CAUTION
from ..textsafe import csv_cell, safe_strings
from .outputs import write_text

CSV_COLUMNS = (
    ("distance_m", "distance_m"),
    ("lat_deg", "lat_deg"),
    ("lon_deg", "lon_deg"),
    ("terrain_m", "terrain_amsl_m"),
    ("bulge_m", "earth_bulge_m"),
    ("los_m", "line_of_sight_amsl_m"),
    ("fresnel_radius_m", "fresnel_radius_m"),
    ("clearance_m", "clearance_m"),
)

FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")


def inert_text(text) -> str:
    """Make a text cell inert in spreadsheets (see :func:`profiler.textsafe.csv_cell`).

    Control characters (tab, CR, LF, ESC, ...) become visible escapes, and a
    cell whose first non-space character is ``= + - @`` gets a leading ``'``
    (OWASP "CSV injection").
    """
    return csv_cell(text)


def json_text(report: dict) -> str:
    """The JSON report as text (UTF-8, indented, no NaN)."""
    # No indent: the C encoder is ~20x faster on long profiles; use `jq .` to pretty-print.
    return json.dumps(safe_strings(report, "json"), allow_nan=False, ensure_ascii=False) + "\n"


def write_json(report: dict, path) -> None:
    """Write the JSON report to ``path`` (``-`` for standard output)."""
    write_text(path, json_text(report))


def format_cell(x, digits=3):
    """A number for a CSV cell: fixed decimals (a value that rounds to zero is 0, never -0), ``true``/``false``,
    empty for None."""
    if x is None:
        return ""
    if isinstance(x, bool):
        return "true" if x else "false"
    if isinstance(x, float):
        return f"{round(x, digits) + 0.0:.{digits}f}" if math.isfinite(x) else f"{x:.{digits}f}"
    return str(x)


def csv_text(report: dict) -> str:
    """One row per profile sample, units in the header, then a summary block.

    The summary block follows a blank line; each of its rows starts with
    ``#`` so that tools reading comments (``comment='#'``) skip it.
    """
    prof = report["profile"]
    n = len(prof["distance_m"])

    def column(values, digits):
        """Format a whole column at once; missing or non-finite values become empty cells."""
        if values is None:
            return np.full(n, "", dtype=object)
        a = np.array(values, dtype=float)  # None -> NaN
        text = np.char.mod(f"%.{digits}f", np.nan_to_num(a)).astype(object)
        text[~np.isfinite(a)] = ""
        return text

    clearance = np.array(prof["clearance_m"], dtype=float)
    fresnel = np.array(prof["fresnel_radius_m"], dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(fresnel > 0, clearance / fresnel, np.nan)
    digits = {"lat_deg": 7, "lon_deg": 7}
    cols = [column(prof.get(key), digits.get(key, 3)) for key, _ in CSV_COLUMNS] + [column(ratio, 4)]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([name for _, name in CSV_COLUMNS] + ["clearance_fresnel_ratio"])
    w.writerows(zip(*cols))
    buf.write("\n")
    for key, value in summary_rows(report):
        w.writerow(["# " + key, inert_text(value) if isinstance(value, str) else format_cell(value, 3)])
    return buf.getvalue()


def summary_rows(report: dict) -> list[tuple[str, object]]:
    """Headline results as ``(name_with_unit, value)`` pairs."""
    a, b, loss, bud = report["site_a"], report["site_b"], report["loss_db"], report["budget"]
    prop = report.get("propagation") or {}
    return [
        ("site_a_name", a["name"]), ("site_b_name", b["name"]),
        ("distance_m", report["distance_m"]), ("frequency_mhz", report["frequency_mhz"]),
        ("k_factor", report["k_factor"]),
        ("line_of_sight", report["line_of_sight"]), ("fresnel_clear", report["fresnel_clear"]),
        ("worst_distance_m", report["worst"]["distance_m"]),
        ("worst_clearance_m", report["worst"]["clearance_m"]),
        ("worst_fresnel_ratio", report["worst"]["fresnel_ratio"]),
        ("model", report.get("model")),
        ("time_percent", prop.get("time_percent")), ("location_percent", prop.get("location_percent")),
        ("free_space_loss_db", loss["free_space"]), ("diffraction_loss_db", loss["diffraction"]),
        ("diffraction_method", loss["diffraction_method"]),
        ("combination_loss_db", loss.get("combination")), ("location_loss_db", loss.get("location")),
        ("basic_transmission_loss_db", loss.get("basic_transmission")),
        ("extra_loss_db", loss["extra"]), ("polarization_loss_db", loss["polarization"]),
        ("total_loss_db", loss["total"]), ("rx_power_dbm", bud["rx_power_dbm"]),
        ("margin_db", bud["margin_db"]), ("sf", bud["sf"]), ("dr", bud.get("dr")), ("closes", bud["closes"]),
        ("downlink_margin_db", report["budget_downlink"]["margin_db"]),
        ("downlink_closes", report["budget_downlink"]["closes"]),
        ("caution", CAUTION),
    ]


def write_csv(report: dict, path) -> None:
    """Write the per-sample CSV with its trailing summary to ``path``."""
    write_text(path, csv_text(report))


def verdict(report: dict) -> str:
    """A one-word-ish verdict for the summary and the figure."""
    if report["fresnel_clear"]:
        geom = "clear"
    elif report["line_of_sight"]:
        geom = "line of sight, Fresnel zone obstructed"
    else:
        geom = "obstructed (no line of sight)"
    up = report["budget"]["closes"]
    down = (report.get("budget_downlink") or report["budget"])["closes"]
    if up and down:
        radio = "link closes both ways"
    elif up:
        radio = "uplink closes, downlink does NOT"
    elif down:
        radio = "downlink closes, uplink does NOT"
    else:
        radio = "link does NOT close"
    return f"{geom}; {radio}"


def model_line(report: dict) -> str:
    """The run's propagation model and percentages on one line, read from a JSON report.

    The wording of :meth:`profiler.engine.model.PropagationSettings.summary`:
    ``"P.1812-8, 50 % time, 95 % locations"``, or for ``--model terrain``
    ``"Terrain model (free space + delta-bullington diffraction), median"``
    (the diffraction method named when the report holds it).  The settings
    are the link and mast reports' ``propagation`` block (``model`` at the
    top level as a fall-back) or the ``settings`` of the network, coverage
    and siting reports.

    Parameters
    ----------
    report : dict
        A link, mast, network, coverage or siting JSON report.

    Returns
    -------
    str
        The line; empty when the report names no model.
    """
    from ..engine.model import PropagationSettings

    st = report.get("propagation") or report.get("settings") or {}
    model = st.get("model") or report.get("model")
    if model not in ("p1812", "terrain"):
        return ""
    if model == "p1812":
        line = PropagationSettings(model="p1812", time_percent=float(st.get("time_percent", 50.0)),
                                   location_percent=float(st.get("location_percent", 50.0))).summary()
    else:
        method = ((report.get("loss_db") or {}).get("diffraction_method") or report.get("diffraction_method")
                  or st.get("diffraction_method") or st.get("diffraction"))
        line = PropagationSettings(model="terrain").summary()
        line = line.replace("+ diffraction)", f"+ {method} diffraction)") if method else line
    return line + calibration_note(report)


def calibration_note(report: dict) -> str:
    """``"; calibrated (sha256 1a2b3c4d5e6f)"`` when the report's run applied a ``--calibration``, else "".

    The digest's first 12 hexadecimal digits (the report holds all 64);
    the calibration is the link and mast reports' ``calibration`` block or
    the ``settings.calibration`` of the network, coverage and siting reports.
    """
    cal = report.get("calibration") or (report.get("settings") or {}).get("calibration")
    if not cal:
        return ""
    return f"; calibrated (sha256 {str(cal.get('sha256', ''))[:12]})"


def summary_text(report: dict) -> str:
    """Short human summary of the link."""
    a, b = report["site_a"], report["site_b"]
    w = report["worst"]
    lines = [f"Link {a['name']} -> {b['name']}"]
    if report["azimuth_a_to_b_deg"] is not None:
        lines.append(f"  distance      {report['distance_m'] / 1000:.3f} km, azimuth A->B "
                     f"{report['azimuth_a_to_b_deg']:.2f} deg, B->A {report['azimuth_b_to_a_deg']:.2f} deg")
    else:
        lines.append(f"  distance      {report['distance_m'] / 1000:.3f} km (surveyed profile)")
    band = f" ({report['band']})" if report.get("band") else ""
    lines.append(f"  frequency     {report['frequency_mhz']:.4f} MHz{band}, k = {report['k_factor']:.4g}")
    lines.append(f"  antennas      A {a['antenna_amsl_m']:.1f} m AMSL ({a['mast_m']:g} m mast), "
                 f"B {b['antenna_amsl_m']:.1f} m AMSL ({b['mast_m']:g} m mast)")
    lines.append(f"  tilt          A {report['elevation_angle_a_deg']:+.3f} deg, "
                 f"B {report['elevation_angle_b_deg']:+.3f} deg")
    lines.append(f"  verdict       {verdict(report)}")
    pct = 100.0 * w["fresnel_ratio"] if w["fresnel_ratio"] is not None else float("nan")
    lines.append(f"  worst point   {w['distance_m'] / 1000:.3f} km from A: clearance {w['clearance_m']:+.1f} m "
                 f"= {pct:.0f} % of F1 (required {100 * report['clearance_ratio_required']:.0f} %), v = {w['v']:.2f}")
    lines.append(f"  losses        {losses_text(report)}")
    cal = report.get("calibration")
    if cal:
        table = f", [clutter.{cal['clutter']}] table" if cal.get("clutter") else ""
        lines.append(f"  calibration   {cal['path']} (sha256 {cal['sha256']}): {cal['offset_db']:+.2f} dB "
                     f"{cal['slope_db_per_decade']:+.2f} dB/decade{table}")
    lines += budget_lines(report)
    for msg in report["warnings"]:
        lines.append(f"  warning       {msg}")
    lines.append(f"  {CAUTION}")
    return "\n".join(lines) + "\n"


def _db(value) -> str:
    """A loss term to 0.1 dB; one that rounds to zero is 0.0, never -0.0."""
    return f"{round(float(value), 1) + 0.0:.1f} dB"


def losses_text(report: dict) -> str:
    """The loss terms of a link report adding up to ``loss_db.total``, the model and percentages first.

    P.1812-8: ``"P.1812-8 (50 % time, 50 % locations): free space 113.2 dB
    + diffraction 8.9 dB + combination 0.0 dB + location 0.0 dB = basic
    122.1 dB; + extra 0.0 dB + polarization 0.0 dB = 122.1 dB"``; the
    terrain model: ``"terrain model: free space ... + diffraction ...
    (method) + extra ... + polarization ... = total"``.
    """
    loss = report["loss_db"]
    cal = f" + calibration {_db(loss['calibration'])}" if report.get("calibration") else ""
    tail = (f"extra {_db(loss['extra'])} + polarization {_db(loss['polarization'])}{cal} = "
            f"{_db(loss['total'])}")
    if loss.get("model") == "p1812":
        prop = report.get("propagation") or {}
        return (f"P.1812-8 ({prop.get('time_percent', 50.0):g} % time, {prop.get('location_percent', 50.0):g} % "
                f"locations): free space {_db(loss['free_space'])} + diffraction {_db(loss['diffraction'])} + "
                f"combination {_db(loss['combination'])} + location {_db(loss['location'])} = basic "
                f"{_db(loss['basic_transmission'])}; + {tail}")
    return (f"terrain model: free space {_db(loss['free_space'])} + diffraction {_db(loss['diffraction'])} "
            f"({loss['diffraction_method']}) + {tail}")


def rate_text(sf, bw_khz, dr=None) -> str:
    """``DR5 (SF7/125 kHz)``, or ``SF7/125 kHz`` without a DR number."""
    rate = f"SF{sf}/{bw_khz:g} kHz"
    return rate if dr is None else f"DR{dr} ({rate})"


def budget_lines(report: dict) -> list[str]:
    """The two budget lines and the recommendation of the human summary."""
    lines = []
    lora = report["lora"]
    for label, bud in (("uplink", report["budget"]), ("downlink", report["budget_downlink"])):
        tx, rx = bud["transmitter"].upper(), bud["receiver"].upper()
        rate = f" at {rate_text(bud['sf'], bud['bw_khz'], bud['dr'])}" if bud["sf"] is not None else ""
        lines.append(f"  {label:<13} {tx}->{rx}: EIRP {bud['eirp_dbm']:.1f} dBm, "
                     f"received {bud['rx_power_dbm']:.1f} dBm, "
                     f"sensitivity {bud['sensitivity_dbm']:.1f} dBm{rate}, margin {bud['margin_db']:.1f} dB "
                     f"(need {bud['fade_margin_required_db']:.1f} dB)")
    if lora is None:
        return lines
    if lora.get("uplink") is not None:
        parts = []
        for direction in ("uplink", "downlink"):
            block = lora[direction]
            dr = block["recommended_dr"]
            if dr is None:
                parts.append(f"{direction}: no allowed data rate closes")
            else:
                row = next(r for r in block["per_dr"] if r["dr"] == dr)
                parts.append(f"{direction} {rate_text(row['sf'], row['bw_khz'], dr)}")
        lines.append(f"  recommended   {'; '.join(parts)}")
    else:
        sf = lora["lowest_closing_sf"]
        lines.append("  recommended   "
                     f"{rate_text(sf, lora['bw_khz']) if sf is not None else 'no spreading factor closes the link'}")
    return lines
