"""Exports of a survey report (``profiler.survey/1``): CSV, GeoJSON, the calibration TOML and the summary.

Every writer takes the JSON report dictionary and returns text; the caller
writes it through :func:`profiler.io.outputs.write_outputs` (all or
nothing).  CSV text cells pass through :func:`profiler.io.report.inert_text`;
every export carries :data:`profiler.CAUTION`.

References
----------
.. [1] H. Butler et al., "The GeoJSON Format", IETF RFC 7946, 2016.
.. [2] Y. Shafranovich, IETF RFC 4180, 2005 (CSV).
.. [3] TOML v1.0.0, https://toml.io/en/v1.0.0 (tables, keys).
"""

from __future__ import annotations

import csv
import io
import json

from ..about import CAUTION
from .report import inert_text

__all__ = ["MEASUREMENT_COLUMNS", "survey_csv_text", "survey_geojson_text", "calibration_toml_text",
           "survey_summary_text"]

MEASUREMENT_COLUMNS = ("gateway", "lat_deg", "lon_deg", "distance_m", "measured_loss_db", "predicted_loss_db",
                       "residual_db", "line_of_sight", "clutter", "error")


def _cell(value):
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.6f}".rstrip("0").rstrip(".")
    return inert_text(value)


def survey_csv_text(report: dict) -> str:
    """One CSV row per measurement (:data:`MEASUREMENT_COLUMNS`), the caution as a last comment row."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(MEASUREMENT_COLUMNS)
    for m in report["measurements"]:   # output rows
        w.writerow([_cell(m[c]) for c in MEASUREMENT_COLUMNS])
    w.writerow([f"# {CAUTION}"])
    return buf.getvalue()


def survey_geojson_text(report: dict) -> str:
    """A FeatureCollection: one Point per measurement (properties as the JSON row) and one per gateway site."""
    features = [{"type": "Feature", "geometry": {"type": "Point", "coordinates": [m["lon_deg"], m["lat_deg"]]},
                 "properties": {"kind": "measurement", **{c: m[c] for c in MEASUREMENT_COLUMNS}}}
                for m in report["measurements"]]
    features += [{"type": "Feature", "geometry": {"type": "Point", "coordinates": [s["lon_deg"], s["lat_deg"]]},
                  "properties": {"kind": "site", "name": s["name"], "role": s["role"], "mast_m": s["mast_m"]}}
                 for s in report["sites"] if s["role"] != "node"]
    doc = {"type": "FeatureCollection", "schema": report["schema"], "caution": CAUTION, "features": features}
    return json.dumps(doc, indent=1, ensure_ascii=False) + "\n"


def _toml_key(name: str) -> str:
    bare = name and all(c.isascii() and (c.isalnum() or c in "-_") for c in name)
    return name if bare else json.dumps(name, ensure_ascii=False)


def _toml_terms(terms: dict, sigma) -> list:
    lines = [f"offset_db = {float(terms['offset_db'] or 0.0)!r}",
             f"slope_db_per_decade = {float(terms['slope_db_per_decade'] or 0.0)!r}"]
    if sigma is not None:
        lines.append(f"location_sigma_db = {float(sigma)!r}")
    return lines


def calibration_toml_text(report: dict) -> str:
    """The ``--calibration-out`` file: ``offset_db``, ``slope_db_per_decade`` (0 without ``--fit slope``),
    ``location_sigma_db`` and one ``[clutter.NAME]`` table per clutter class fitted, same keys."""
    c = report["calibration"]
    lines = ["# Calibration of the propagation model from a field survey (profiler survey).",
             "# correction [dB] = offset_db + slope_db_per_decade * log10(distance / 1 km), added to the",
             "# predicted path loss.",
             f"# fit: {c['fit']}; measurements: {report['settings'].get('measurements_file', '')}",
             f"# {CAUTION}", *_toml_terms(c, report["location_sigma_db"])]
    for name in sorted(report["calibration_by_clutter"]):
        terms = report["calibration_by_clutter"][name]
        lines += ["", f"[clutter.{_toml_key(name)}]", *_toml_terms(terms, terms.get("location_sigma_db"))]
    return "\n".join(lines) + "\n"


def _db(value, signed=False) -> str:
    if value is None:
        return "-"
    return f"{value:+.1f} dB" if signed else f"{value:.1f} dB"


def survey_summary_text(report: dict) -> str:
    """Short human summary: counts, the residual statistics, the calibration and the warnings."""
    s, c, h = report["statistics"], report["calibration"], report["heard"]
    se = f" ± {c['offset_se_db']:.1f}" if c["offset_se_db"] is not None else ""
    slope = (f", slope {c['slope_db_per_decade']:+.2f} ± {c['slope_se_db_per_decade'] or 0:.2f} dB/decade"
             if c["fit"] == "slope" else "")
    lines = [f"Survey: {h['uplinks']} uplinks, {h['received']} received, {h['missed']} missed, "
             f"{h['errors']} could not be predicted; {s['n']} location cell{'' if s['n'] == 1 else 's'} of "
             f"{report['settings']['cell_m']:g} m",
             f"  residual      measured - predicted: mean {_db(s['mean_db'], True)}, median "
             f"{_db(s['median_db'], True)}, std {_db(s['std_db'])}, RMSE {_db(s['rmse_db'])}",
             f"  within        6 dB: {s['within_6db_share']:.0%}, 10 dB: {s['within_10db_share']:.0%}",
             f"  location      sigma seen within cells {_db(report['location_sigma_db'])}",
             f"  missed        {h['missed_predicted_to_close']} predicted to close; "
             f"{h['received_predicted_not_to_close']} received although predicted not to close",
             f"  calibration   offset {c['offset_db']:+.1f}{se} dB{slope}; RMSE {_db(c['rmse_before_db'])} -> "
             f"{_db(c['rmse_after_db'])} (cross-validated {_db(c['cross_validated_rmse_db'])})"]
    lines += [f"  warning       {w}" for w in report["warnings"]]
    lines.append(f"  {CAUTION}")
    return "\n".join(lines) + "\n"
