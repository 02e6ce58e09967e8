"""The survey sheet: measured against predicted, residuals by distance and on the map, statistics, calibration.

:func:`write_survey_figure` draws one landscape sheet from the
``profiler.survey/1`` report:

* measured against predicted path loss (every received uplink a dot, the
  1:1 line);
* the residual (measured - predicted) against distance, one point per
  location cell (the median of its uplinks) before calibration, and after
  (hollow), with the fitted correction;
* the residual map over the hillshade: each received uplink coloured by its
  residual on a diverging scale, missed uplinks as crosses, the gateways as
  triangles (their names are in the statistics table);
* the residual distribution per location cell before and after calibration;
* the statistics table (overall, by distance band, line of sight, clutter
  class and gateway) and the calibration table, drawn with
  :func:`profiler.plot.tables.draw_tables` (cells wrap, the font shrinks to
  5 pt, nothing is cut);
* the title block, the provenance and the caution.

Every number printed is the report's, formatted to one decimal.
"""

from __future__ import annotations

import numpy as np

from ..engine.calibration import calibration_correction_db
from ..errors import ProfilerError
from ..products.survey.calibration import cell_summary
from . import basemap
from .audit import contain
from .sheet import (
    BADGE_GOOD,
    BADGE_WARN,
    DASH,
    MIDDOT,
    clean,
    draw_footer,
    draw_title_block,
    fraction,
    inch_axes,
    new_sheet,
    num,
    source_text,
    style,
    write_sheet,
)
from .tables import draw_tables
from .titleblock import draw_title_box, title_block_rows

__all__ = ["write_survey_figure", "build_survey_figure", "cell_points"]

RESIDUAL_LIMIT_DB = 15.0
"""The residual colour scale runs from -15 to +15 dB (clipped beyond)."""
BEFORE, AFTER, ONE_TO_ONE, GATEWAY = "#1f4e9c", "#d35f1d", "0.15", "black"


def write_survey_figure(report: dict, path, paper: str = "a4", dpi: float = 150, dem_paths=None, *,
                        sheet: dict | None = None) -> None:
    """Draw the survey sheet and write it to ``path`` (PNG, PDF or SVG by extension).

    Parameters
    ----------
    report : dict
        The ``profiler.survey/1`` report.
    path : str or os.PathLike
        ``.png``, ``.pdf`` or ``.svg``; written atomically.
    paper : {"a4", "letter"}
        Landscape paper size.
    dpi : float
        Resolution [dots per inch].
    dem_paths : list, optional
        Elevation files or folders for the hillshade.
    sheet : dict, optional
        Title-block fields (``SheetInfo.to_dict()`` plus ``date``).
    """
    write_sheet(path, paper, dpi, lambda: build_survey_figure(report, paper, dem_paths, sheet=sheet, dpi=dpi),
                "Field survey", report)


def cell_points(report: dict) -> dict:
    """Per location cell of the compared measurements: residual before and after the calibration, distance.

    The cells of :func:`profiler.products.survey.calibration.cell_summary`
    with the report's ``settings.cell_m``; "after" subtracts the report's
    calibration (its clutter tables where a class has one).
    """
    rows = [m for m in report["measurements"] if m["residual_db"] is not None]
    if not rows:
        raise ProfilerError("the survey report has no compared measurement; nothing to draw")
    col = {k: [m[k] for m in rows] for k in ("gateway", "lat_deg", "lon_deg", "residual_db", "distance_m",
                                             "line_of_sight", "clutter")}
    cells = cell_summary(col["gateway"], np.array(col["lat_deg"]), np.array(col["lon_deg"]),
                         np.array(col["residual_db"], float), np.array(col["distance_m"], float),
                         np.array(col["line_of_sight"], bool), col["clutter"], report["settings"]["cell_m"])
    cal = {**report["calibration"], "clutter": report.get("calibration_by_clutter") or {}}
    after = cells["residual_db"] - calibration_correction_db(cal, cells["distance_m"], cells["clutter"])
    return {"before": cells["residual_db"], "after": after, "distance_m": cells["distance_m"]}


def _layout(width_in, height_in) -> dict:
    margin = 0.38
    header_h = 0.66
    header = (margin, height_in - margin - header_h, width_in - 2 * margin, header_h)
    side_w = 3.7
    side_left = width_in - margin - side_w
    footer_h = 0.66
    footer = (margin, margin, side_left - 0.2 - margin, footer_h)
    title_block = (side_left, margin, side_w, 1.45)
    top = header[1] - 0.2
    bottom = margin + footer_h + 0.42
    left = margin + 0.55
    right = side_left - 0.3
    gap_x, gap_y = 0.95, 0.62
    w = (right - left - gap_x) / 2
    h = (top - bottom - gap_y) / 2
    panels = {"scatter": (left, bottom + h + gap_y, w, h - 0.1), "distance": (left + w + gap_x, bottom + h + gap_y,
                                                                              w, h - 0.1),
              "map": (left, bottom, w, h - 0.1), "histogram": (left + w + gap_x, bottom, w, h - 0.1)}
    side = (side_left, margin + 1.6, side_w, top - margin - 1.6)
    return {"header": header, "side": side, "footer": footer, "title_block": title_block, **panels}


def build_survey_figure(report: dict, paper: str = "a4", dem_paths=None, *, sheet: dict | None = None,
                        dpi: float = 100.0):
    """The survey sheet as a :class:`matplotlib.figure.Figure` (parameters of :func:`write_survey_figure`)."""
    points = cell_points(report)
    with style():
        fig, renderer, width_in, height_in = new_sheet(paper, dpi)
        boxes = _layout(width_in, height_in)
        _draw_header(inch_axes(fig, boxes["header"], width_in, height_in), report, renderer)
        _scatter(fig.add_axes(fraction(boxes["scatter"], width_in, height_in), label="survey-scatter"), report)
        _distance(fig.add_axes(fraction(boxes["distance"], width_in, height_in), label="survey-distance"),
                  report, points)
        _map(fig.add_axes(fraction(boxes["map"], width_in, height_in), label="survey-map"), report, dem_paths)
        _histogram(fig.add_axes(fraction(boxes["histogram"], width_in, height_in), label="survey-histogram"),
                   report, points)
        _draw_side(fig, boxes["side"], width_in, height_in, report, renderer)
        sheet = dict(sheet or {})
        draw_title_box(inch_axes(fig, boxes["title_block"], width_in, height_in), renderer,
                       title_block_rows(sheet, _title(report), report, 1, 1))
        draw_footer(inch_axes(fig, boxes["footer"], width_in, height_in), renderer, report,
                    source_text(report.get("dem")), sheet.get("date"))
    return fig


def _title(report: dict) -> str:
    h = report["heard"]
    gateways = len({m["gateway"] for m in report["measurements"]})
    return f"Field survey: {h['uplinks']} uplinks to {gateways} gateway" + ("" if gateways == 1 else "s")


def _draw_header(ax, report, renderer) -> None:
    c, s = report["calibration"], report["statistics"]
    se = f" \u00b1 {c['offset_se_db']:.1f}" if c["offset_se_db"] is not None else ""
    cells = f"{s['n']} location cell{'' if s['n'] == 1 else 's'} of {report['settings']['cell_m']:g} m"
    parts = ["Predicted against measured", cells,
             num(report["settings"].get("frequency_mhz"), ".4f", " MHz"), f"model {clean(report['settings']['model'])}"]
    badge = f"offset {c['offset_db']:+.1f}{se} dB, RMSE {num(c['rmse_before_db'], '.1f')} \u2192 " \
            f"{num(c['rmse_after_db'], '.1f')} dB"
    good = c["rmse_before_db"] is not None and c["rmse_before_db"] <= 6.0
    draw_title_block(ax, renderer, _title(report), f"  {MIDDOT}  ".join(parts), badge,
                     BADGE_GOOD if good else BADGE_WARN, badge_label="CALIBRATION")


def _panel(ax, title, xlabel, ylabel) -> None:
    from matplotlib.ticker import MaxNLocator

    ax.set_title(title, fontsize=7.5, fontweight="bold", loc="left", pad=4)
    ax.set_xlabel(xlabel, fontsize=6.8)
    ax.set_ylabel(ylabel, fontsize=6.8)
    ax.tick_params(labelsize=6.3)
    ax.xaxis.set_major_locator(MaxNLocator(6))
    ax.yaxis.set_major_locator(MaxNLocator(6))
    ax.grid(True, color="0.88", lw=0.5)


def _legend(ax, loc="upper left"):
    legend = ax.legend(loc=loc, fontsize=6.0, frameon=True, framealpha=0.9, handlelength=1.6, borderpad=0.4)
    for text in legend.get_texts():
        contain(text, ax, name="a panel")


def _scatter(ax, report) -> None:
    rows = [m for m in report["measurements"] if m["residual_db"] is not None]
    pred = np.array([m["predicted_loss_db"] for m in rows], float)
    meas = np.array([m["measured_loss_db"] for m in rows], float)
    lo, hi = float(min(pred.min(), meas.min())) - 3, float(max(pred.max(), meas.max())) + 3
    ax.plot([lo, hi], [lo, hi], color=ONE_TO_ONE, lw=0.9, label="1:1 (model exact)")
    ax.plot(pred, meas, ls="none", marker="o", ms=2.6, color=BEFORE, alpha=0.6, label="received uplink")
    ax.set_xlim(lo, hi)
    ax.set_ylim(lo, hi)
    ax.set_aspect("equal", adjustable="box")
    _panel(ax, "Measured against predicted", "predicted path loss [dB]", "measured path loss [dB]")
    _legend(ax)


def _distance(ax, report, points) -> None:
    d_km = points["distance_m"] / 1000.0
    c = report["calibration"]
    ax.axhline(0.0, color=ONE_TO_ONE, lw=0.8)
    ax.plot(d_km, points["before"], ls="none", marker="o", ms=3.2, color=BEFORE, label="before (cell median)")
    ax.plot(d_km, points["after"], ls="none", marker="o", ms=3.6, mfc="none", mec=AFTER, mew=0.8,
            label="after calibration")
    x = np.geomspace(max(float(d_km.min()), 0.05), float(d_km.max()), 50)
    ax.plot(x, calibration_correction_db(c, x * 1000.0), color=AFTER, lw=1.1, label="fitted correction (overall)")
    ax.set_xscale("log")
    from matplotlib.ticker import FuncFormatter, LogLocator

    ax.xaxis.set_major_locator(LogLocator(subs=(1.0, 2.0, 5.0)))
    ax.xaxis.set_minor_locator(LogLocator(subs=()))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    _panel(ax, "Residual against distance", "distance [km]", "measured \u2212 predicted [dB]")
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(LogLocator(subs=(1.0, 2.0, 5.0)))
    ax.yaxis.set_major_locator(MaxNLocator(6))
    _legend(ax, "lower left")


def _histogram(ax, report, points) -> None:
    lim = float(np.ceil(max(np.abs(points["before"]).max(), np.abs(points["after"]).max(), 1.0)))
    bins = np.arange(-lim - 1.0, lim + 2.0, 2.0)
    c = report["calibration"]
    ax.hist(points["before"], bins=bins, histtype="stepfilled", color=BEFORE, alpha=0.35,
            label=f"before: RMSE {num(c['rmse_before_db'], '.1f')} dB")
    ax.hist(points["after"], bins=bins, histtype="step", color=AFTER, lw=1.3,
            label=f"after: RMSE {num(c['rmse_after_db'], '.1f')} dB")
    ax.axvline(0.0, color=ONE_TO_ONE, lw=0.8)
    _panel(ax, "Residual per location cell", "residual [dB]", "cells")
    from matplotlib.ticker import MaxNLocator

    ax.yaxis.set_major_locator(MaxNLocator(6, integer=True))
    _legend(ax)


def _map(ax, report, dem_paths) -> None:
    rows = [m for m in report["measurements"] if m["error"] is None]
    sites = [s for s in report["sites"] if s["role"] != "node" and s["name"] in {m["gateway"] for m in rows}]
    lon = basemap.continuous_lon([m["lon_deg"] for m in rows] + [s["lon_deg"] for s in sites])
    lat = np.array([m["lat_deg"] for m in rows] + [s["lat_deg"] for s in sites], float)
    ext = basemap.map_extent(ax, lon, lat, margin_frac=0.08, min_margin_m=300.0)
    basemap.prepare_map(ax, ext)
    if dem_paths:
        basemap.hillshade(ax, dem_paths, ext, pixels=300)
    n = len(rows)
    res = np.array([np.nan if m["residual_db"] is None else m["residual_db"] for m in rows], float)
    heard = np.isfinite(res)
    sc = ax.scatter(lon[:n][heard], lat[:n][heard], c=res[heard], cmap="RdBu_r", vmin=-RESIDUAL_LIMIT_DB,
                    vmax=RESIDUAL_LIMIT_DB, s=14, edgecolors="0.2", linewidths=0.3, zorder=4)
    ax.plot(lon[:n][~heard], lat[:n][~heard], ls="none", marker="x", ms=4.5, mew=1.0, color="0.1", zorder=4,
            label="missed uplink")
    ax.plot(lon[n:], lat[n:], ls="none", marker="^", ms=8, mfc=GATEWAY, mec="white", mew=0.8, zorder=5,
            label="gateway")
    basemap.finish_map(ax, ext)
    from matplotlib.transforms import Bbox

    to_axes = ax.transData + ax.transAxes.inverted()
    keep_clear = [Bbox([[0.55, 0.8], [1.0, 1.0]])]        # the legend, upper right
    basemap.place_furniture(ax, ext, to_axes.transform(np.column_stack([lon, lat])), keep_clear)
    ax.tick_params(labelsize=5.8)
    ax.set_title("Residual map", fontsize=7.5, fontweight="bold", loc="left", pad=4)
    _legend(ax, "upper right")
    bar = ax.figure.colorbar(sc, ax=ax, fraction=0.04, pad=0.02)
    bar.set_label("residual [dB]", fontsize=6.3)
    bar.ax.tick_params(labelsize=6.0)


def _draw_side(fig, box, width_in, height_in, report, renderer) -> None:
    """The calibration table above the statistics table, each in its own part of the side column."""
    left, bottom, w, h = box
    cal, stats = _table_blocks(report)
    cal_h = 0.19 * (len(cal[0][2]) + 1) + 0.3
    used = draw_tables(inch_axes(fig, (left, bottom + h - cal_h, w, cal_h), width_in, height_in), renderer, cal,
                       max_row_h=0.19, max_fontsize=6.8)
    rest = h - min(used, cal_h) - 0.15
    draw_tables(inch_axes(fig, (left, bottom, w, rest), width_in, height_in), renderer, stats, max_row_h=0.19,
                max_fontsize=6.8)


def _stat_row(label, s) -> tuple:
    return (label, str(s["n"]), num(s["mean_db"], "+.1f"), num(s["median_db"], "+.1f"), num(s["std_db"], ".1f"),
            num(s["rmse_db"], ".1f"), _share(s["within_6db_share"]), _share(s["within_10db_share"]))


def _share(x) -> str:
    return DASH if x is None else f"{100.0 * x:.0f} %"


def _table_blocks(report) -> list:
    s, c, h = report["statistics"], report["calibration"], report["heard"]
    rows = [_stat_row("all cells", s)]
    rows += [_stat_row(f"{b['from_km']:g}\u2013{b['to_km']:g} km" if b["to_km"] is not None
                       else f"from {b['from_km']:g} km", b) for b in s["by_distance"]]
    rows += [_stat_row("line of sight" if b["line_of_sight"] else "no line of sight", b)
             for b in s["by_line_of_sight"]]
    rows += [_stat_row(f"clutter {clean(b['clutter'])}" if b["clutter"] else "clutter not given", b)
             for b in s["by_clutter"]]
    rows += [_stat_row(clean(b["gateway"]), b) for b in s["by_gateway"]]
    stats = ("Residual [dB] per location cell", ["", "n", "mean", "median", "std", "RMSE", "\u00b16 dB", "\u00b110 dB"],
             rows)
    se = lambda v: "" if v is None else f" \u00b1 {v:.2f}"  # noqa: E731
    cal_rows = [("Fit", "offset + slope \u00b7 log10(d / 1 km)" if c["fit"] == "slope" else "offset"),
                ("Offset", f"{num(c['offset_db'], '+.2f')}{se(c['offset_se_db'])} dB")]
    if c["fit"] == "slope":
        cal_rows.append(("Slope", f"{num(c['slope_db_per_decade'], '+.2f')}{se(c['slope_se_db_per_decade'])} "
                                  "dB/decade"))
    cal_rows += [("RMSE before / after", f"{num(c['rmse_before_db'], '.1f')} / {num(c['rmse_after_db'], '.1f')} dB"),
                 ("Cross-validated RMSE", num(c["cross_validated_rmse_db"], ".1f", " dB") + (
                     f" ({report['settings']['folds']} folds by cell)" if c["cross_validated_rmse_db"] is not None
                     else " (too few location cells)")),
                 ("Location sigma seen", num(report["location_sigma_db"], ".1f", " dB")),
                 ("Uplinks", f"{h['uplinks']}: {h['received']} received, {h['missed']} missed, {h['errors']} "
                             "not predicted"),
                 ("Missed, predicted to close", str(h["missed_predicted_to_close"])),
                 ("Received, predicted not to", str(h["received_predicted_not_to_close"]))]
    for name, t in sorted((report.get("calibration_by_clutter") or {}).items()):
        cal_rows.append((f"Offset, clutter {clean(name)}", f"{num(t['offset_db'], '+.2f')}{se(t['offset_se_db'])} dB"))
    return [("Calibration", None, cal_rows)], [stats]
