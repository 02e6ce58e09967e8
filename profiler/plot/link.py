"""The link sheet: terrain profile, locator map, title block and results table.

:func:`write_link_figure` draws one landscape sheet (A4 or US letter) from
the JSON report dictionary (``LinkResult.to_dict()``) and writes it as PNG,
PDF or SVG, chosen by the file extension.  The sheet holds

* the profile panel: terrain raised by the Earth bulge for the chosen k,
  the straight line of sight between the antenna tips, the first Fresnel
  zone, the required-clearance boundary, the masts to scale, every stretch
  where the clearance falls short of the requirement and the worst point;
* the locator panel: the path over a hillshade of the elevation model with
  a north arrow and a scale bar (a note instead for a surveyed profile);
* the title block and the results table (sites, path, link budget), the
  elevation data used, the tool version, the date and a caution line.

The shared style (paper, fonts, title block, tables, footer) is
:mod:`profiler.plot.sheet`; the map helpers are :mod:`profiler.plot.basemap`.
"""

from __future__ import annotations

import math

import numpy as np

from ..io.report import model_line, verdict
from . import audit, basemap
from .link_tables import bearing_lines, declination_text, exposure_line, radio_block
from .profile_panel import draw_profile, end_label
from .sheet import (
    BADGE_BAD,
    BADGE_GOOD,
    BADGE_WARN,
    DASH,
    EN,
    MIDDOT,
    arr,
    clean,
    dms,
    draw_title_block,
    ends_located,
    figure_format,
    fraction,
    inch_axes,
    k_text,
    km,
    nanmax,
    new_sheet,
    num,
    site_name,
    source_text,
    style,
    write_sheet,
)
from .tables import draw_tables
from .textfit import Measure, fit_text
from .titleblock import draw_notes, draw_title_box, provenance_lines, title_block_rows, title_box_height

__all__ = ["build_link_figure", "write_link_figure"]


# --------------------------------------------------------------------------- public API
def write_link_figure(report: dict, path, paper: str = "a4", dpi: float = 150,
                      dem_paths=None, *, date_text: str | None = None, sheet_no: int = 1,
                      sheet_count: int = 1) -> None:
    """Draw the link sheet and write it to ``path`` (PNG, PDF or SVG by extension).

    Parameters
    ----------
    report : dict
        The JSON report (``LinkResult.to_dict()``).
    path : str or os.PathLike
        Output file; ``.png``, ``.pdf`` or ``.svg``.  Written atomically
        (temporary file beside it, then renamed), so a failure leaves nothing
        half-written.
    paper : {"a4", "letter"}
        Landscape paper size: A4 297 mm x 210 mm or letter 11 in x 8.5 in.
    dpi : float
        Resolution [dots per inch] of a PNG and of the hillshade embedded in
        a PDF or SVG; 150 dpi keeps 6 pt text legible on A4.
    dem_paths : list of str or os.PathLike, optional
        Elevation files or folders for the locator hillshade; none (or a
        surveyed profile) draws the panel with a note instead of a map.
    date_text : str, optional
        Date printed on the sheet; default the report's ``sheet.date``, else
        today's date (ISO 8601).
    sheet_no, sheet_count : int
        "Sheet n of m" in the title block.

    Raises
    ------
    ProfilerError
        Unknown extension or paper size, a non-positive dpi, a missing output
        folder or a write error.
    """
    title = f"Radio path profile: {site_name(report['site_a'])} {EN} {site_name(report['site_b'])}"
    # A PNG is built at its own resolution (text measured once, canvas reused when saving); PDF and
    # SVG text is not rasterized, so it is measured at 100 dpi as before.
    build_dpi = float(dpi) if figure_format(path) == "png" else 100.0
    write_sheet(path, paper, dpi, lambda: build_link_figure(report, paper=paper, dem_paths=dem_paths,
                                                            date_text=date_text, sheet_no=sheet_no,
                                                            sheet_count=sheet_count, dpi=build_dpi), title, report)


def build_link_figure(report: dict, paper: str = "a4", dem_paths=None, *, date_text: str | None = None,
                      sheet_no: int = 1, sheet_count: int = 1, dpi: float = 100.0):
    """Build the link sheet as a :class:`matplotlib.figure.Figure` (Agg canvas).

    Parameters are those of :func:`write_link_figure`; ``dpi`` [dots per
    inch] is the figure's resolution, best the one it will be saved at.  The figure is not
    attached to pyplot; save it with ``fig.savefig(...)`` inside
    :func:`profiler.plot.sheet.style` for output identical to
    :func:`write_link_figure`.

    Returns
    -------
    matplotlib.figure.Figure
    """
    with style():
        fig, renderer, width_in, height_in = new_sheet(paper, dpi)
        boxes = _layout(width_in, height_in)
        _draw_header(inch_axes(fig, boxes["header"], width_in, height_in), report, renderer)
        profile_ax = fig.add_axes(fraction(boxes["profile"], width_in, height_in))
        draw_profile(fig, profile_ax, report, width_in, height_in)
        map_ax = fig.add_axes(fraction(boxes["map"], width_in, height_in))
        _draw_locator(map_ax, report, dem_paths, renderer)
        draw_tables(inch_axes(fig, boxes["table"], width_in, height_in), renderer, _results_blocks(report),
                    wrap_rows=("Name",), max_row_h=0.2)
        draw_tables(inch_axes(fig, boxes["radio"], width_in, height_in), renderer, [radio_block(report)],
                    max_row_h=0.19, max_fontsize=6.8)
        n_points = len(report["profile"]["distance_m"])
        sheet = dict(report.get("sheet") or {})
        if date_text:
            sheet["date"] = date_text
        block_ax = inch_axes(fig, boxes["title_block"], width_in, height_in)
        measure = Measure(renderer)
        draw_title_box(block_ax, renderer, _title_rows(report, sheet, sheet_no, sheet_count, block_ax, measure),
                       measure=measure)
        extra = [*bearing_lines(report), exposure_line(report)]
        draw_notes(inch_axes(fig, boxes["footer"], width_in, height_in), renderer,
                   provenance_lines(report, source_text(report.get("dem"), n_points, ends_located(report)), extra))
    return fig


def _title_rows(report, sheet, sheet_no, sheet_count, ax, measure):
    """The title block's rows: titled with both names, or, when they do not fit it even at 5 pt, with
    the sites' letters (the names are in full in the header and the sites table)."""
    name = f"Radio path profile {site_name(report['site_a'])} {EN} {site_name(report['site_b'])}"
    rows = title_block_rows(sheet, name, report, sheet_no, sheet_count)
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    if title_box_height(width, height, measure.renderer, rows, measure=measure) > height + 1e-9:
        rows = title_block_rows(sheet, f"Radio path profile A {EN} B (site names: sites table)", report,
                                sheet_no, sheet_count)
    return rows


def _layout(width_in: float, height_in: float) -> dict:
    """Boxes (left, bottom, width, height) [in] of the sheet's parts.

    Lower right: the title block; left of it the radio table above the
    provenance notes; above them the locator and the results tables; the
    profile fills the rest under the header.
    """
    margin = 0.38
    inner_w = width_in - 2 * margin
    block_w = 3.05
    left_w = inner_w - block_w - 0.15
    footer = (margin, margin, left_w, 0.95)
    radio = (margin, margin + 0.99, left_w, 0.55)
    title_block = (width_in - margin - block_w, margin, block_w, 1.62)
    band_bottom = margin + 1.66
    band_h = 2.3 + 0.5 * (height_in - 8.27)
    map_left = margin + 0.5
    map_w = 2.6 - 0.6 * max(0.0, 11.69 - width_in)      # narrower paper: narrower map
    map_box = (map_left, band_bottom + 0.36, map_w, band_h - 0.36 - 0.2)
    table_left = map_left + map_w + 0.25
    table = (table_left, band_bottom, width_in - margin - table_left, band_h)
    header_h = 0.66
    header = (margin, height_in - margin - header_h, inner_w, header_h)
    prof_top = height_in - margin - header_h - 0.36
    prof_bottom = band_bottom + band_h + 0.62
    prof_left = margin + 0.58
    profile = (prof_left, prof_bottom, width_in - margin - 0.08 - prof_left, prof_top - prof_bottom)
    return {"header": header, "profile": profile, "map": map_box, "table": table, "footer": footer, "radio": radio,
            "title_block": title_block}


# --------------------------------------------------------------------------- header
def _verdict_style(report: dict) -> dict:
    closes = report["budget"]["closes"] and (report.get("budget_downlink") or report["budget"])["closes"]
    if report["fresnel_clear"] and closes:
        return BADGE_GOOD
    if closes:
        return BADGE_WARN
    return BADGE_BAD


def _draw_header(ax, report: dict, renderer) -> None:
    """Both names in the title (wrapped and shrunk, never cut) and the whole verdict in the badge."""
    name_a, name_b = site_name(report["site_a"]), site_name(report["site_b"])
    band = report.get("band")
    freq = num(report.get("frequency_mhz"), ".4f", " MHz") + (f" ({clean(band)})" if band else "")
    parts = ["Point-to-point radio path profile", num(km(report.get("distance_m")), ".3f", " km"), freq,
             f"k = {k_text(report.get('k_factor'))}"]
    draw_title_block(ax, renderer, f"{name_a} {EN} {name_b}", f"  {MIDDOT}  ".join(parts), clean(verdict(report)),
                     _verdict_style(report), note=clean(model_line(report)))


# --------------------------------------------------------------------------- locator panel
def _draw_locator(ax, report: dict, dem_paths, renderer) -> None:
    """The path over the hillshade, sites labelled clear of the path, north arrow and scale bar."""
    ax.set_title("Locator", loc="left", fontsize=7.5, fontweight="bold", pad=3)
    prof = report["profile"]
    if prof.get("lat_deg") is None or prof.get("lon_deg") is None:
        basemap.empty_panel(ax, "no map: surveyed profile", "only the ends have coordinates" if ends_located(report)
                            else "the profile has no coordinates")
        return
    lat = arr(prof["lat_deg"])
    lon = np.degrees(np.unwrap(np.radians(arr(prof["lon_deg"]))))   # continuous across 180 deg
    ext = basemap.map_extent(ax, lon, lat)
    basemap.prepare_map(ax, ext)
    caption = "no elevation model given: path only"
    if dem_paths:
        caption = basemap.hillshade(ax, dem_paths, ext)
    ax.annotate(caption, xy=(0.5, 0.0), xycoords="axes fraction", xytext=(0.0, -13.0), textcoords="offset points",
                ha="center", va="top", fontsize=6.2, color="0.25", parse_math=False)
    _draw_path(ax, report, lon, lat)
    basemap.finish_map(ax, ext)
    to_axes = ax.transData + ax.transAxes.inverted()
    points = to_axes.transform(np.column_stack([lon, lat])[:: max(1, lon.size // 400)])
    # The furniture first, kept off the path and off the room around the sites; then the labels, kept
    # off the furniture, the path and the frame.
    furniture = basemap.place_furniture(ax, ext, points, _site_room(points), renderer)
    _label_sites(ax, report, lon, lat, ext, points, renderer, furniture)


def _site_room(points) -> list:
    """Room [axes fractions] around both site markers for their labels (kept free of the furniture)."""
    from matplotlib.transforms import Bbox

    return [Bbox([[x - 0.2, y - 0.08], [x + 0.2, y + 0.08]]) for x, y in (points[0], points[-1])]


def _draw_path(ax, report: dict, lon, lat) -> None:
    """Path (white halo), stretches short of the requirement, site markers, worst point."""
    from .profile_panel import SHORT_EDGE

    prof = report["profile"]
    ax.plot(lon, lat, color="black", lw=1.6, zorder=4, path_effects=basemap.halo(), solid_capstyle="round")
    clearance = arr(prof["los_m"]) - arr(prof["terrain_m"]) - np.nan_to_num(arr(prof["bulge_m"]))
    short = clearance < float(report.get("clearance_ratio_required") or 0.0) * np.nan_to_num(
        arr(prof["fresnel_radius_m"]))
    short[0] = short[-1] = False
    if short.any():
        ax.plot(lon, np.where(short, lat, np.nan), color=SHORT_EDGE, lw=2.6, ls=(0, (2.0, 1.0)), zorder=5)
    # sites above the worst point
    ax.plot(lon[0], lat[0], marker="^", ms=8, mfc="black", mec="white", mew=1.0, zorder=7)
    ax.plot(lon[-1], lat[-1], marker="o", ms=7, mfc="white", mec="black", mew=1.4, zorder=7)
    worst = report.get("worst") or {}
    if worst.get("lon_deg") is not None:
        wl = lon[int(np.argmin(np.abs(arr(prof["distance_m"]) - worst["distance_m"])))]
        # smaller than the site markers and under them: it never hides a site
        ax.plot(wl, worst["lat_deg"], marker="X", ms=6, mfc="white", mec="black", mew=0.9, zorder=6)


def _label_sites(ax, report: dict, lon, lat, ext, points, renderer, furniture=()) -> list:
    """Site labels: of sixteen places around each marker (eight directions, two distances), the one least in the way of
    the furniture, the path, the other label and the frame (:func:`basemap.label_score`); first choice on opposite
    sides of the path; always inside the frame.  Returns their boxes [axes fractions]."""
    ux, uy = (lon[-1] - lon[0]) * ext.m_lon, (lat[-1] - lat[0]) * ext.m_lat
    norm = math.hypot(ux, uy) or 1.0
    nx_, ny_ = -uy / norm, ux / norm
    if ny_ < 0 or (ny_ == 0 and nx_ < 0):
        nx_, ny_ = -nx_, -ny_
    boxes = []
    measure = Measure(renderer)
    room_in = 0.55 * ax.get_window_extent(renderer).width / renderer.dpi
    for key, x, y, sign in (("a", lon[0], lat[0], 1.0), ("b", lon[-1], lat[-1], -1.0)):
        text, size = _locator_text(key, site_name(report[f"site_{key}"]), room_in, measure)
        first = math.atan2(sign * ny_, sign * nx_)
        best = None
        for step in range(16):       # eight directions at 8 pt from the marker, then at 16 pt
            angle = first + (((step % 8) + 1) // 2) * (math.pi / 4) * (1 if step % 2 else -1)
            ox, oy = math.cos(angle), math.sin(angle)
            offset = 8.0 if step < 8 else 16.0
            label = ax.annotate(text, xy=(x, y), xytext=(offset * ox, offset * oy),
                                textcoords="offset points",
                                ha="left" if ox > 0.38 else ("right" if ox < -0.38 else "center"),
                                va="bottom" if oy > 0.38 else ("top" if oy < -0.38 else "center"),
                                fontsize=size, fontweight="bold", zorder=8, parse_math=False, linespacing=1.1,
                                path_effects=basemap.halo(2.6), gid=f"site-label-{key}")
            moved = basemap.keep_inside(label, ax, renderer)
            box = label.get_window_extent(renderer).transformed(ax.transAxes.inverted())
            clash = basemap.label_score(box, points, boxes, furniture, moved)
            score = clash + 0.02 * step
            if best is None or score < best[0]:
                if best is not None:
                    best[1].remove()
                best = (score, label, box)
            else:
                label.remove()
            if clash == 0.0 or (step == 7 and best[0] < 10.0):   # free, or no contact: look no further
                break
        audit.contain(best[1], ax, name="locator")
        boxes.append(best[2])
    return boxes


def _locator_text(key: str, name: str, room_in: float, measure) -> tuple[str, float]:
    """A site's map label and font size [pt]: ``"A  name"`` wrapped onto at most three lines of
    ``room_in`` [in] at 6.8 pt down to 5 pt; just the letter when even that does not hold the whole
    name (the name is in full in the sites table), never a cut name."""
    laid = fit_text(end_label(key, name), room_in, measure, 6.8, max_lines=3, bold=True, linespacing=1.1)
    if laid.fits:
        return laid.text, laid.fontsize
    return key.upper(), 6.8


# --------------------------------------------------------------------------- results table
def _results_blocks(report: dict) -> list[tuple[str, list[str] | None, list[tuple]]]:
    """The three tables of the results band: sites, path and clearance, link budget."""
    gw = report.get("gateway", "a")
    roles = ("gateway", "node") if gw == "a" else ("node", "gateway")
    return [("Sites", ["", f"Site A ({roles[0]})", f"Site B ({roles[1]})"], _site_rows(report)),
            ("Path and clearance", None, _path_rows(report)),
            ("Link budget", None, _budget_rows(report))]


def _site_rows(report: dict) -> list[tuple]:
    a, b = report["site_a"], report["site_b"]

    def tilt(angle):
        if angle is None:
            return DASH
        return num(angle, "+.3f", "\u00b0") + (" (up)" if angle > 0 else (" (down)" if angle < 0 else ""))

    def both(key, spec, unit):
        return num(a.get(key), spec, unit), num(b.get(key), spec, unit)

    return [
        ("Name", site_name(a), site_name(b)),
        ("Latitude", *both("lat_deg", ".6f", "\u00b0")),
        ("", dms(a.get("lat_deg"), "N", "S"), dms(b.get("lat_deg"), "N", "S")),
        ("Longitude", *both("lon_deg", ".6f", "\u00b0")),
        ("", dms(a.get("lon_deg"), "E", "W"), dms(b.get("lon_deg"), "E", "W")),
        ("Ground elevation", *both("ground_m", ".1f", " m AMSL")),
        ("Mast height", *both("mast_m", ".1f", " m")),
        ("Antenna height", *both("antenna_amsl_m", ".1f", " m AMSL")),
        ("Azimuth (true)", num(report.get("azimuth_a_to_b_deg"), ".2f", "\u00b0"),
         num(report.get("azimuth_b_to_a_deg"), ".2f", "\u00b0")),
        ("Azimuth (magnetic)", num(report.get("azimuth_a_to_b_magnetic_deg"), ".2f", "\u00b0"),
         num(report.get("azimuth_b_to_a_magnetic_deg"), ".2f", "\u00b0")),
        ("Declination", declination_text(report.get("declination_a_deg")),
         declination_text(report.get("declination_b_deg"))),
        ("Elevation angle", tilt(report.get("elevation_angle_a_deg")), tilt(report.get("elevation_angle_b_deg"))),
    ]


def _path_rows(report: dict) -> list[tuple]:
    worst = report.get("worst") or {}
    ratio_req = float(report.get("clearance_ratio_required") or 0.0)
    prof = report["profile"]
    pct = None if worst.get("fresnel_ratio") is None else 100.0 * worst["fresnel_ratio"]
    return [
        ("Distance A\u2013B", num(km(report.get("distance_m")), ".3f", " km")),
        ("Frequency", num(report.get("frequency_mhz"), ".4f", " MHz")),
        ("Band", clean(report["band"]) if report.get("band") else DASH),
        ("k-factor (a\u2091)", f"{k_text(report.get('k_factor'))} "
         f"({num(km(report.get('effective_radius_m')), '.0f', ' km')})"),
        ("Max. bulge / F1", f"{num(nanmax(arr(prof['bulge_m'])), '.1f')} / "
         f"{num(nanmax(arr(prof['fresnel_radius_m'])), '.1f', ' m')}"),
        ("Clearance required", f"{ratio_req * 100:.0f} % of F1"),
        ("Line of sight", "yes" if report["line_of_sight"] else "NO"),
        ("Fresnel clearance", "met" if report["fresnel_clear"] else "NOT met"),
        ("Worst point from A", num(km(worst.get("distance_m")), ".3f", " km")),
        ("Worst clearance", num(worst.get("clearance_m"), "+.1f", " m")),
        ("Worst clearance / F1", num(pct, ".0f", " %")),
        ("v / knife-edge loss", f"{num(worst.get('v'), '.2f')} / "
         f"{num(worst.get('knife_edge_loss_db'), '.1f', ' dB')}"),
    ]


def _rate(bud: dict) -> str:
    """``DR5 SF7/125`` (``SF7/125`` without a plan); empty without a LoRa rate (a given sensitivity)."""
    if bud.get("sf") is None:
        return ""
    rate = f"SF{bud['sf']}/{bud['bw_khz']:g}"
    return rate if bud.get("dr") is None else f"DR{bud['dr']} {rate}"


def loss_db_text(value) -> str:
    """A loss term as the sheet shows it: 0.1 dB, a term that rounds to zero shown as 0.0 (never −0.0)."""
    return num(None if value is None else round(float(value), 1) + 0.0, ".1f", " dB")


def _loss_rows(report: dict) -> list[tuple]:
    """The path-loss rows: with P.1812-8 its basic transmission loss in parts (free space, eq. 8; diffraction at
    the time percentage; the combination's share; the location term), then the other losses and the total;
    with the terrain model the diffraction method, free space, diffraction, other losses and the total."""
    loss = report["loss_db"]
    other = (loss.get("extra") or 0.0) + (loss.get("polarization") or 0.0)
    if loss.get("model") == "p1812":
        prop = report.get("propagation") or {}
        rows = [("Free-space loss (eq. 8)", loss_db_text(loss.get("free_space"))),
                (f"Diffraction ({prop.get('time_percent', 50.0):g} % time)", loss_db_text(loss.get("diffraction"))),
                ("Combination term", loss_db_text(loss.get("combination"))),
                (f"Location term ({prop.get('location_percent', 50.0):g} %)", loss_db_text(loss.get("location"))),
                ("Basic transmission loss", loss_db_text(loss.get("basic_transmission")))]
    else:
        rows = [("Diffraction method", clean(loss.get("diffraction_method") or DASH)),
                ("Free-space loss", loss_db_text(loss.get("free_space"))),
                ("Diffraction loss", loss_db_text(loss.get("diffraction")))]
    calibration = [("Calibration", loss_db_text(loss.get("calibration")))] if report.get("calibration") else []
    return rows + _terminal_rows(loss) + [("Other losses", loss_db_text(other)), *calibration,
                                          ("Total path loss", loss_db_text(loss.get("total")))]


#: The per-end loss_db terms of a terminal (issue 20), each on its own row when not zero.
TERMINAL_ROWS = (("clutter", "Clutter at {end}"), ("building_entry", "Building entry at {end}"),
                 ("extra", "Extra loss at {end}"))


def _terminal_rows(loss: dict) -> list[tuple]:
    """Rows for the terminal terms (clutter correction, building entry, fixed extra loss per end) that are not 0."""
    return [(label.format(end=end.upper()), loss_db_text(loss[f"{key}_{end}"]))
            for key, label in TERMINAL_ROWS for end in ("a", "b") if loss.get(f"{key}_{end}")]


def _budget_rows(report: dict) -> list[tuple]:
    up = report["budget"]
    down = report.get("budget_downlink") or up
    comp = report.get("compliance") or {}
    if comp.get("max_eirp_dbm") is None:
        limit = "not checked (no plan)"
    else:
        limit = f"{num(comp['max_eirp_dbm'], 'g', ' dBm')}: " + ("met" if comp.get("eirp_ok") else "EXCEEDED")
    return [
        *_loss_rows(report),
        ("EIRP limit", limit),
        ("Margin up / down", f"{num(up.get('margin_db'), '+.1f')} / {num(down.get('margin_db'), '+.1f', ' dB')}"),
        *([("Data rate up", f"{_rate(up)} kHz"), ("Data rate down", f"{_rate(down)} kHz")]
          if up.get("sf") is not None else []),
        ("Margin required", f"\u2265 {num(up.get('fade_margin_required_db'), '.1f', ' dB')}"),
        ("Link closes", f"up {'yes' if up.get('closes') else 'NO'} / down {'yes' if down.get('closes') else 'NO'}"),
    ]

