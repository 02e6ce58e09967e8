"""The coverage map sheet: uplink margin classes over a hillshade, the site, range rings.

:func:`write_coverage_figure` draws one landscape sheet from a
:class:`profiler.coverage_map.CoverageResult`: the map (margin classes of
:func:`profiler.coverage_io.margin_classes` as one semi-transparent image
over the relief, the gateway(s), range rings every quarter radius, north
arrow, scale bar, degree ticks), the legend in dB and data rate, the area
table, and the title block, provenance and caution line of the link sheet.

The four class colours (dark blue, mid blue, amber, grey;
:data:`profiler.coverage_io.CLASS_COLOURS`) step in lightness and lie on
the blue-yellow axis, so they stay distinct with the common red-green
colour-vision deficiencies and in greyscale.
"""

from __future__ import annotations

import numpy as np

from . import basemap
from .sheet import (BADGE_BAD, BADGE_GOOD, BADGE_WARN, MIDDOT, clean, draw_footer, draw_tables, draw_title_block,
                    fraction, inch_axes, k_text, new_sheet, num, put_text, sheet_legend, source_text, style,
                    write_sheet)

__all__ = ["build_coverage_figure", "write_coverage_figure"]


def write_coverage_figure(result, path, paper: str = "a4", dpi: float = 200, dem_paths=None, *, report=None,
                          date_text: str | None = None) -> None:
    """Draw the coverage map sheet and write it to ``path`` (PNG, PDF or SVG by extension).

    Parameters
    ----------
    result : profiler.coverage_map.CoverageResult
        Bands and grid of the run.
    path : str or os.PathLike
        ``.png``, ``.pdf`` or ``.svg``; written atomically.
    paper : {"a4", "letter"}
    dpi : float
        Resolution of a PNG [dots per inch].
    dem_paths : list, optional
        Elevation files for the hillshade.
    report : dict, optional
        The summary to print (default ``result.report``; the CLI passes it with its text made safe).
    date_text : str, optional
        Date printed on the sheet (default today).
    """
    report = report or result.report
    write_sheet(path, paper, dpi, lambda: build_coverage_figure(result, report, paper, dem_paths, date_text),
                f"Coverage map: {_title(report)}", report)


def _sites(report) -> list:
    return report.get("gateways") or [report["site"]]


def _title(report) -> str:
    names = [clean(s["name"]) for s in _sites(report)]
    return names[0] if len(names) == 1 else f"{len(names)} gateways"


def build_coverage_figure(result, report=None, paper: str = "a4", dem_paths=None, date_text=None):
    """Build the sheet as a :class:`matplotlib.figure.Figure`; the map axes has the label ``coverage-map``."""
    report = report or result.report
    with style():
        fig, renderer, width_in, height_in = new_sheet(paper)
        margin = 0.38
        header = (margin, height_in - margin - 0.66, width_in - 2 * margin, 0.66)
        footer = (margin, margin, width_in - 2 * margin, 0.44)
        side_w = 3.25
        side_left = width_in - margin - side_w
        map_bottom, map_top, map_left = margin + 0.94, header[1] - 0.28, margin + 0.42
        _draw_header(inch_axes(fig, header, width_in, height_in), report, renderer)
        ax = fig.add_axes(fraction((map_left, map_bottom, side_left - 0.3 - map_left, map_top - map_bottom),
                                   width_in, height_in), label="coverage-map")
        _draw_map(ax, result, report, dem_paths)
        side_h = map_top - margin - 0.56
        legend_h = 1.75
        _draw_legend(inch_axes(fig, (side_left, margin + 0.56 + side_h - legend_h, side_w, legend_h), width_in,
                               height_in), result, report)
        table_ax = inch_axes(fig, (side_left, margin + 0.56, side_w, side_h - legend_h - 0.15), width_in, height_in)
        draw_tables(table_ax, renderer, _blocks(report), max_row_h=0.2)
        draw_footer(inch_axes(fig, footer, width_in, height_in), renderer, report, source_text(report.get("dem")),
                    date_text)
    return fig


def _draw_header(ax, report, renderer) -> None:
    st, s = report["settings"], report["summary"]
    share = s["covered"]["share"] or 0.0
    parts = ["Coverage map", f"radius {st['radius_km']:g} km at {st['resolution_m']:.0f} m",
             f"node mast {st['node_mast_m']:g} m",
             num(st["frequency_mhz"], ".4f", " MHz") + (f" ({clean(st['band'])})" if st.get("band") else ""),
             f"k = {k_text(st['k_factor'])}", f"diffraction {clean(st['diffraction'])}"]
    badge_style = BADGE_GOOD if share >= 0.9 else (BADGE_WARN if share >= 0.5 else BADGE_BAD)
    draw_title_block(ax, renderer, _title(report), f"  {MIDDOT}  ".join(parts),
                     f"{share:.0%} of the area heard", badge_style, badge_label="COVERAGE")


def _draw_map(ax, result, report, dem_paths) -> None:
    from ..coverage_io import _geographic_classes, class_rgba

    from pyproj import Geod

    sites = _sites(report)
    radius = report["settings"]["radius_km"] * 1000.0
    g = Geod(ellps="WGS84")
    az = np.linspace(0.0, 360.0, 181)
    rings = []
    for s in sites:
        for frac in (0.25, 0.5, 0.75, 1.0):
            lo, la, _ = g.fwd(np.full(az.size, s["lon_deg"]), np.full(az.size, s["lat_deg"]), az,
                              np.full(az.size, radius * frac))
            rings.append((frac, basemap.continuous_lon(np.asarray(lo)), np.asarray(la)))
    all_lon = np.concatenate([r[1] for r in rings])
    all_lat = np.concatenate([r[2] for r in rings])
    ext = basemap.map_extent(ax, all_lon, all_lat, margin_frac=0.04, min_margin_m=300.0)
    basemap.prepare_map(ax, ext)
    caption = basemap.hillshade(ax, dem_paths, ext, pixels=420) if dem_paths else "no elevation model given"
    cls, (west, east, south, north) = _geographic_classes(result, max_pixels=900)
    ax.imshow(class_rgba(cls), extent=(west, east, south, north), origin="upper", interpolation="nearest",
              zorder=2, aspect="auto", gid="coverage-classes")
    for frac, lo, la in rings:
        ax.plot(lo, la, color="black", lw=0.9 if frac == 1.0 else 0.5, ls="-" if frac == 1.0 else (0, (4, 3)),
                zorder=4, alpha=0.8)
    for s in sites:
        for frac in (0.5, 1.0):
            lo, la, _ = g.fwd(s["lon_deg"], s["lat_deg"], 45.0, radius * frac)
            put_text(ax, lo, la, f"{radius * frac / 1000:g} km", fontsize=6.2, ha="left", va="bottom", zorder=5,
                     path_effects=basemap.halo(2.4))
    lon = basemap.continuous_lon([s["lon_deg"] for s in sites])
    lat = np.array([s["lat_deg"] for s in sites])
    ax.plot(lon, lat, ls="none", marker="^", ms=10, mfc="black", mec="white", mew=1.2, zorder=6, gid="sites-gateway")
    for s, x, y in zip(sites, lon, lat):
        put_text(ax, x, y, f"  {clean(s['name'])}", fontsize=7.5, fontweight="bold", ha="left", va="top", zorder=6,
                 path_effects=basemap.halo(3.0))
    basemap.finish_map(ax, ext)
    ax.annotate(f"{caption}  {MIDDOT}  range rings every {radius / 4000:g} km", xy=(0.5, 0.0),
                xycoords="axes fraction", xytext=(0.0, -13.0), textcoords="offset points", ha="center", va="top",
                fontsize=6.2, color="0.25", parse_math=False)
    to_axes = ax.transData + ax.transAxes.inverted()
    basemap.place_furniture(ax, ext, to_axes.transform(np.column_stack([lon, lat])))


def _draw_legend(ax, result, report) -> None:
    from matplotlib.patches import Patch

    from ..coverage_io import CLASS_ALPHA, CLASS_COLOURS, class_labels

    labels = class_labels(result.bands, report["settings"]["fade_margin_db"])
    handles = [Patch(fc=c, alpha=a, ec="0.3", lw=0.5, label=t) for c, a, t in zip(CLASS_COLOURS, CLASS_ALPHA, labels)]
    put_text(ax, 0.0, ax.get_ylim()[1], "Uplink margin (node to gateway), data rate", ha="left", va="top",
             fontsize=7.5, fontweight="bold")
    sheet_legend(ax, handles, loc="upper left", bbox_to_anchor=(0.0, 0.88), ncol=1, handlelength=2.2,
                 labelspacing=0.5, fontsize=6.8)


def _blocks(report) -> list:
    s, st = report["summary"], report["settings"]
    rows = [("Area computed", f"{s['area_computed_km2']:.1f} km\u00b2"),
            ("Heard (\u2265 fade margin)", f"{s['covered']['area_km2']:.1f} km\u00b2 ({(s['covered']['share'] or 0):.0%})"),
            ("Line of sight", f"{s['line_of_sight']['area_km2']:.1f} km\u00b2 ({(s['line_of_sight']['share'] or 0):.0%})")]
    rows += [(f"DR{r['dr']}", f"{r['area_km2']:.1f} km\u00b2 ({r['share']:.0%})") for r in s["covered_by_dr"]
             if r["pixels"]]
    rows += [("Fade margin", num(st["fade_margin_db"], ".1f", " dB")),
             ("Radials / step", f"{st['radials']} / {st['radial_step_m']:.1f} m")]
    return [("Area", None, rows)]
