"""The coverage map sheet: uplink margin classes over a hillshade, the sites, range rings, line of sight.

:func:`write_coverage_figure` draws one landscape sheet from a
:class:`profiler.products.coverage.map.CoverageResult`: the map (margin classes of
:func:`profiler.io.coverage.margin_classes` as one translucent image over
the relief, so terrain shadow stays visible; the edge of the line-of-sight
area as a contour of the ``line_of_sight`` band; existing gateways and
candidate sites with their own markers; range rings every quarter radius;
north arrow, scale bar and degree ticks), the legend in dB and data rate,
the site table (position, mast, antenna gain and EIRP of every site, the
numbers of the JSON), the area table, the lower-right title block, the
provenance notes and the caution line.

The four class colours (dark blue, mid blue, amber, grey;
:data:`profiler.io.coverage.CLASS_COLOURS`) step in lightness and lie on
the blue-yellow axis, so they stay distinct with the common red-green
colour-vision deficiencies and in greyscale.

Nothing is cut: site names are wrapped (in the table and on the map); the
site table's type shrinks from 6.8 pt to :data:`MIN_TABLE_PT` (5.5 pt) when
the sites do not fit, and the sites that still do not fit continue on
continuation sheets (:mod:`profiler.plot.continuation`: a PDF's further
pages, ``NAME-2.png`` beside a PNG), the table's last line saying how many
and on which sheet.
"""

from __future__ import annotations

import numpy as np

from ..io.report import model_line
from . import basemap
from .audit import contain
from .sheet import (
    BADGE_BAD,
    BADGE_GOOD,
    BADGE_WARN,
    MIDDOT,
    clean,
    draw_title_block,
    fraction,
    inch_axes,
    k_text,
    new_sheet,
    num,
    put_text,
    sheet_legend,
    source_text,
    style,
    text_width_in,
    wrap_text,
    write_sheet,
)
from .tables import draw_tables
from .titleblock import draw_notes, draw_title_box, provenance_lines, title_block_rows

__all__ = ["build_coverage_figure", "build_coverage_sheets", "write_coverage_figure", "site_rows", "MIN_TABLE_PT",
           "draw_coverage_map"]

#: Smallest type of the site table [pt].
MIN_TABLE_PT = 5.5

#: Markers of the two site roles (as on the network map: filled triangle, open diamond).
SITE_STYLE = {"gateway": {"marker": "^", "ms": 10.0, "mfc": "black", "mec": "white", "mew": 1.2},
              "candidate": {"marker": "D", "ms": 7.5, "mfc": "white", "mec": "black", "mew": 1.5}}
ROLE_LABEL = {"gateway": "Existing gateway", "candidate": "Candidate site"}

#: The edge of the line-of-sight area: a dark plum line with a white halo (not a colour of the classes).
LOS_STYLE = {"colors": "#5b1a4a", "linewidths": 1.1}

#: The probability map's colour scale: matplotlib's ``cividis`` (sequential, even in lightness, readable with
#: red-green colour-vision deficiencies), translucent over the relief.
PROBABILITY_CMAP = "cividis"
PROBABILITY_ALPHA = 0.62

#: Width of the land-cover inset's column between the map and the side column [in].
INSET_W_IN = 1.75

#: Colours of the clutter classes in the land-cover inset (own choice: steps in lightness, water blue, trees green).
CLUTTER_COLOURS = {"water": "#4a7fb5", "open": "#eee3b8", "suburban": "#c9a27e", "urban": "#8c6d62",
                   "trees": "#4f8a4b", "dense-urban": "#4b3b36"}


def write_coverage_figure(result, path, paper: str = "a4", dpi: float = 200, dem_paths=None, *, report=None,
                          date_text: str | None = None, files=None, map_kind: str = "margin") -> None:
    """Draw the coverage map sheet and write it to ``path`` (PNG, PDF or SVG by extension).

    Parameters
    ----------
    result : profiler.products.coverage.map.CoverageResult
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
        Date printed on the sheet (default the report's ``sheet.date``, else today).
    files : profiler.io.outputs.ExtraFiles, optional
        The run's transaction, for the continuation sheets of a PNG or SVG (:func:`~profiler.plot.sheet.write_sheet`).
    map_kind : {"margin", "probability"}
        The map shows the margin classes or the probability of being heard (``--map``).
    """
    report = report or result.report
    write_sheet(path, paper, dpi, lambda: build_coverage_sheets(result, report, paper, dem_paths, date_text,
                                                                map_kind=map_kind),
                f"Coverage map: {_title(report)}", report, files)


def _sites(report) -> list:
    return report.get("gateways") or [report["site"]]


def _title(report) -> str:
    from ..io.coverage import site_count_text

    names = [clean(s["name"]) for s in _sites(report)]
    return names[0] if len(names) == 1 else site_count_text(report["summary"])


def build_coverage_figure(result, report=None, paper: str = "a4", dem_paths=None, date_text=None, dpi=100.0,
                          map_kind: str = "margin"):
    """Build the sheet as a :class:`matplotlib.figure.Figure`; the map axes has the label ``coverage-map``
    (the first of :func:`build_coverage_sheets`)."""
    return build_coverage_sheets(result, report, paper, dem_paths, date_text, dpi, map_kind)[0]


def build_coverage_sheets(result, report=None, paper: str = "a4", dem_paths=None, date_text=None, dpi=100.0,
                          map_kind: str = "margin"):
    """The sheet and its continuation sheets (the sites the table has no room for) as a list of Figures.

    ``map_kind`` ``probability``: the map shows ``probability_heard`` on :data:`PROBABILITY_CMAP` with a
    colour bar in the legend.  With a land cover (the report's ``summary.land_cover_classes``) a
    land-cover inset (axes label ``coverage-land-cover``) sits under the legend.
    """
    from .continuation import continuation_figures, plan

    report = report or result.report
    with style():
        fig, renderer, width_in, height_in = new_sheet(paper, dpi)
        margin = 0.38
        header = (margin, height_in - margin - 0.66, width_in - 2 * margin, 0.66)
        side_w = 3.25 - 0.4 * max(0.0, 11.69 - width_in)
        side_left = width_in - margin - side_w
        block_h, notes_h = 1.5, 0.66
        map_bottom, map_top, map_left = margin + notes_h + 0.42, header[1] - 0.28, margin + 0.42
        _draw_header(inch_axes(fig, header, width_in, height_in), report, renderer)
        inset = bool(report["summary"].get("land_cover_classes"))
        map_right = side_left - 0.3 - (INSET_W_IN if inset else 0.0)
        ax = fig.add_axes(fraction((map_left, map_bottom, map_right - map_left, map_top - map_bottom),
                                   width_in, height_in), label="coverage-map")
        _draw_map(ax, result, report, dem_paths, renderer, map_kind)
        roles = {s.get("role") or "gateway" for s in _sites(report)}
        legend_h = 0.3 + 0.145 * (6 + len(roles))
        legend_bottom = map_top - legend_h
        legend_ax = inch_axes(fig, (side_left, legend_bottom, side_w, legend_h), width_in, height_in)
        if map_kind == "probability":
            _draw_probability_legend(legend_ax, report, roles)
        else:
            _draw_legend(legend_ax, result, report, roles)
        if inset:
            _draw_land_cover_inset(fig, (map_right + 0.15, map_bottom, INSET_W_IN - 0.2, map_top - map_bottom),
                                   width_in, height_in, result, report, renderer)
        below = legend_bottom - 0.12 - (margin + block_h + 0.15)
        sites_ax = inch_axes(fig, (side_left, margin + block_h + 0.15, side_w, below), width_in, height_in)
        sites_ax.set_label("coverage-sites")
        area_h = 0.125 * (len(_blocks(report)[0][2]) + 1) + 0.03      # the area table at least 0.125 in a row
        used, rest = draw_site_table(sites_ax, renderer, _sites(report), max_height_in=below - 0.15 - area_h)
        layout = plan(renderer, paper, [(_site_heading(_sites(report)), [_site_entry(row) for row in rest])])
        table_ax = inch_axes(fig, (side_left, margin + block_h + 0.15, side_w, below - used - 0.15), width_in,
                             height_in)
        draw_tables(table_ax, renderer, _blocks(report), max_row_h=0.2)
        sheet = dict(report.get("sheet") or {})
        if date_text:
            sheet["date"] = date_text
        title = f"Coverage map: {_title(report)}"
        draw_title_box(inch_axes(fig, (side_left, margin, side_w, block_h), width_in, height_in), renderer,
                       title_block_rows(sheet, title, report, 1, layout.count))
        notes = provenance_lines(report, source_text(report.get("dem")))
        draw_notes(inch_axes(fig, (margin, margin, side_left - 0.25 - margin, notes_h), width_in, height_in),
                   renderer, notes)
        return [fig] + continuation_figures(layout, paper, dpi, title=title, report=report, sheet=sheet, notes=notes)


def _draw_header(ax, report, renderer) -> None:
    from ..io.coverage import site_count_text

    st, s = report["settings"], report["summary"]
    share = s["covered"]["share"] or 0.0
    parts = [f"radius {st['radius_km']:g} km at {st['resolution_m']:.0f} m", node_text(st),
             num(st["frequency_mhz"], ".4f", " MHz") + (f" ({clean(st['band'])})" if st.get("band") else ""),
             f"k = {k_text(st['k_factor'])}", f"diffraction {clean(st['diffraction'])}"]
    badge_style = BADGE_GOOD if share >= 0.9 else (BADGE_WARN if share >= 0.5 else BADGE_BAD)
    short = f"Coverage map: {site_count_text(s)}"

    def fit_title(artist, room_in):      # a name too long for one line: the count here, the names in the table
        artist.set_text(short)

    label = "COVERAGE WITH THE CANDIDATE SITES" if s.get("candidates") else "COVERAGE"
    draw_title_block(ax, renderer, f"Coverage map: {_title(report)}", f"  {MIDDOT}  ".join(parts),
                     f"{share:.0%} of the area heard", badge_style, badge_label=label, fit_title=fit_title,
                     note=clean(model_line(report)))


# --------------------------------------------------------------------------- map
def draw_coverage_map(ax, result, dem_paths, renderer, map_kind: str = "margin") -> None:
    """The sheet's map (classes or probability over the hillshade, rings, sites, furniture) in any axes."""
    _draw_map(ax, result, result.report, dem_paths, renderer, map_kind)


def _draw_map(ax, result, report, dem_paths, renderer, map_kind="margin") -> None:
    from ..io.coverage import class_rgba, geographic_classes

    sites = _sites(report)
    radius = report["settings"]["radius_km"] * 1000.0
    g = basemap.geod()
    az = np.linspace(0.0, 360.0, 181)
    rings = []
    for s in sites:
        for frac in (0.25, 0.5, 0.75, 1.0):
            lo, la, _ = g.fwd(np.full(az.size, s["lon_deg"]), np.full(az.size, s["lat_deg"]), az,
                              np.full(az.size, radius * frac))
            rings.append((frac, basemap.continuous_lon(np.asarray(lo)), np.asarray(la)))
    ext = basemap.map_extent(ax, np.concatenate([r[1] for r in rings]), np.concatenate([r[2] for r in rings]),
                             margin_frac=0.04, min_margin_m=300.0)
    basemap.prepare_map(ax, ext)
    caption = basemap.hillshade(ax, dem_paths, ext, pixels=420) if dem_paths else "no elevation model given"
    if map_kind == "probability":
        prob, box = geographic_classes(result, max_pixels=900, band="probability_heard")
        ax.imshow(np.ma.masked_invalid(prob), extent=box, origin="upper", interpolation="nearest", zorder=2,
                  aspect="auto", cmap=PROBABILITY_CMAP, vmin=0.0, vmax=1.0, alpha=PROBABILITY_ALPHA,
                  gid="coverage-probability")
    else:
        cls, box = geographic_classes(result, max_pixels=900)
        ax.imshow(class_rgba(cls), extent=box, origin="upper", interpolation="nearest", zorder=2, aspect="auto",
                  gid="coverage-classes")
    _draw_los_edge(ax, result)
    for frac, lo, la in rings:
        ax.plot(lo, la, color="black", lw=0.9 if frac == 1.0 else 0.5, ls="-" if frac == 1.0 else (0, (4, 3)),
                zorder=4, alpha=0.8)
    lon = basemap.continuous_lon([s["lon_deg"] for s in sites])
    lat = np.array([s["lat_deg"] for s in sites])
    role = np.array([s.get("role") or "gateway" for s in sites])
    for key, kw in SITE_STYLE.items():
        if (role == key).any():
            ax.plot(lon[role == key], lat[role == key], ls="none", zorder=6, gid=f"sites-{key}", **kw)
    basemap.finish_map(ax, ext)
    ring_labels = []
    for frac in (0.5, 1.0):     # ring distances once, on the first site's rings (all rings have these radii)
        lo, la, _ = g.fwd(sites[0]["lon_deg"], sites[0]["lat_deg"], 45.0, radius * frac)
        ring_labels.append(contain(put_text(ax, lo, la, f"{radius * frac / 1000:g} km", fontsize=6.2, ha="left",
                                            va="bottom", zorder=5, path_effects=basemap.halo(2.4)), ax))
    to_axes = ax.transData + ax.transAxes.inverted()
    points = to_axes.transform(np.column_stack([lon, lat]))
    from matplotlib.transforms import Bbox

    taken = [basemap.artists_box(ax, [t], renderer) for t in ring_labels]
    if basemap.overlap(*taken) > 0:        # small rings on a wide map: the outer label only (the caption
        ring_labels.pop(0).remove()        # states the ring spacing)
        taken.pop(0)
    room = [Bbox([[x - 0.1, y - 0.05], [x + 0.1, y + 0.05]]) for x, y in points]   # for the names, placed next
    furniture = basemap.place_furniture(ax, ext, points, taken + room, renderer)
    _label_sites(ax, sites, lon, lat, points, taken, furniture, renderer)
    ax.annotate(f"{caption}  {MIDDOT}  range rings every {radius / 4000:g} km", xy=(0.5, 0.0),
                xycoords="axes fraction", xytext=(0.0, -13.0), textcoords="offset points", ha="center", va="top",
                fontsize=6.2, color="0.25", parse_math=False)


def _draw_los_edge(ax, result) -> None:
    """The edge of the line-of-sight area: the 0.5 contour of the ``line_of_sight`` band
    (gid ``line-of-sight-edge``)."""
    from ..io.coverage import geographic_classes

    los, (west, east, south, north) = geographic_classes(result, max_pixels=900, band="line_of_sight")
    ny, nx = los.shape
    glon = west + (np.arange(nx) + 0.5) * (east - west) / nx
    glat = north - (np.arange(ny) + 0.5) * (north - south) / ny
    if not (np.nanmax(los, initial=0.0) > 0.5 > np.nanmin(los, initial=1.0)):
        return                      # all in sight or none: no edge to draw
    edge = ax.contour(glon, glat, np.ma.masked_invalid(los), levels=[0.5], zorder=3, **LOS_STYLE)
    edge.set_gid("line-of-sight-edge")
    edge.set_path_effects(basemap.halo(2.6))


def _wrapped(text: str, width_in: float, renderer, fontsize: float, bold: bool = False) -> list[str]:
    """``text`` wrapped at spaces to ``width_in`` [in]; a word longer than that is broken between characters."""
    lines = []
    for line in wrap_text(text, width_in, renderer, fontsize, bold):
        while text_width_in(renderer, line, fontsize, bold) > width_in and len(line) > 1:
            cut = max(1, int(len(line) * width_in / text_width_in(renderer, line, fontsize, bold)))
            while cut > 1 and text_width_in(renderer, line[:cut], fontsize, bold) > width_in:
                cut -= 1
            lines.append(line[:cut])
            line = line[cut:]
        lines.append(line)
    return lines


def _label_sites(ax, sites, lon, lat, points, taken, furniture, renderer) -> None:
    """Each site's name (wrapped to 1.8 in) at the place around its marker that is least in the way
    (:func:`profiler.plot.basemap.label_score`: markers, labels already placed, north arrow and scale bar).

    A name longer than two such lines is labelled with its key (:func:`site_keys`: "Gateway 2"), the
    name in full beside the same key in the site table."""
    offsets = ((9, 0, "left", "center"), (-9, 0, "right", "center"), (0, 9, "center", "bottom"),
               (0, -9, "center", "top"), (7, 7, "left", "bottom"), (-7, 7, "right", "bottom"),
               (7, -7, "left", "top"), (-7, -7, "right", "top"))
    to_axes = ax.transAxes.inverted()
    for s, key, x, y in zip(sites, site_keys(sites), lon, lat):
        lines = _wrapped(clean(s["name"]), 1.8, renderer, 7.5, bold=True)
        text = "\n".join(lines) if len(lines) <= 2 else key      # a long name: its key here, in full in the table
        tries = []
        for dx, dy, ha, va in offsets:
            label = ax.annotate(text, xy=(x, y), xytext=(dx, dy), textcoords="offset points", ha=ha, va=va,
                                fontsize=7.5, fontweight="bold", zorder=6, parse_math=False, linespacing=1.0,
                                path_effects=basemap.halo(3.0))
            moved = basemap.keep_inside(label, ax, renderer)
            box = label.get_window_extent(renderer).transformed(to_axes)
            tries.append((basemap.label_score(box, points, taken, furniture, moved), len(tries), label, box))
        _, _, chosen, box = min(tries)          # the first of equal scores
        for _, _, label, _ in tries:
            if label is not chosen:
                label.remove()
        contain(chosen, ax)
        taken.append(box)


def _draw_legend(ax, result, report, roles) -> None:
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    from ..io.coverage import CLASS_ALPHA, CLASS_COLOURS, class_labels

    st = report["settings"]
    labels = class_labels(result.bands, st["fade_margin_db"])
    handles = [Patch(fc=c, alpha=a, ec="0.3", lw=0.5, label=t) for c, a, t in zip(CLASS_COLOURS, CLASS_ALPHA, labels)]
    handles.append(Line2D([], [], color=LOS_STYLE["colors"], lw=LOS_STYLE["linewidths"],
                          path_effects=basemap.halo(2.6),
                          label=f"Edge of line of sight (node at {st['node_mast_m']:g} m)"))
    handles += [Line2D([], [], ls="none", label=ROLE_LABEL[key], **SITE_STYLE[key]) for key in SITE_STYLE
                if key in roles]
    put_text(ax, 0.0, ax.get_ylim()[1], "Uplink margin (node to gateway), data rate", ha="left", va="top",
             fontsize=7.5, fontweight="bold")
    sheet_legend(ax, handles, loc="upper left", bbox_to_anchor=(0.0, 1.0 - 0.24 / ax.get_ylim()[1]), ncol=1,
                 handlelength=2.2, labelspacing=0.38, fontsize=6.8)


def _draw_probability_legend(ax, report, roles) -> None:
    """The colour bar of ``probability_heard`` (0 to 1), the line-of-sight edge and the site markers."""
    from matplotlib.lines import Line2D

    st = report["settings"]
    top, width = ax.get_ylim()[1], ax.get_xlim()[1]
    put_text(ax, 0.0, top, "Probability of being heard (uplink, fade margin kept)", ha="left", va="top",
             fontsize=7.5, fontweight="bold")
    contain(put_text(ax, 0.0, top - 0.17, f"over locations; fade margin {st['fade_margin_db']:g} dB", ha="left",
                     va="top", fontsize=6.5, color="0.25"), ax)
    bar_x, bar_w, bar_top = 0.1, min(2.6, width - 0.3), top - 0.38
    ramp = np.linspace(0.0, 1.0, 256)[None, :]
    ax.imshow(ramp, extent=(bar_x, bar_x + bar_w, bar_top - 0.16, bar_top), cmap=PROBABILITY_CMAP, vmin=0.0,
              vmax=1.0, alpha=PROBABILITY_ALPHA, aspect="auto", zorder=1, gid="probability-colour-bar")
    for value in (0.0, 0.25, 0.5, 0.75, 1.0):
        x = bar_x + value * bar_w
        ax.plot([x, x], [bar_top - 0.16, bar_top - 0.2], color="0.2", lw=0.6)
        contain(put_text(ax, x, bar_top - 0.21, f"{value:g}", ha="center", va="top", fontsize=6.5), ax)
    ax.set_xlim(0.0, width)
    ax.set_ylim(0.0, top)
    handles = [Line2D([], [], color=LOS_STYLE["colors"], lw=LOS_STYLE["linewidths"], path_effects=basemap.halo(2.6),
                      label=f"Edge of line of sight (node at {st['node_mast_m']:g} m)")]
    handles += [Line2D([], [], ls="none", label=ROLE_LABEL[key], **SITE_STYLE[key]) for key in SITE_STYLE
                if key in roles]
    sheet_legend(ax, handles, loc="upper left", bbox_to_anchor=(0.0, 1.0 - 0.78 / top), ncol=1,
                 handlelength=2.2, labelspacing=0.38, fontsize=6.8)


def _draw_land_cover_inset(fig, box, width_in, height_in, result, report, renderer) -> None:
    """A small map of the clutter classes over the area (the ``clutter_class`` band) and its legend under it:
    each land-cover code with its clutter class, R and share of the computed area
    (``summary.land_cover_classes``), wrapped to the column (6.2 pt)."""
    from matplotlib.colors import to_rgb
    from matplotlib.patches import Rectangle

    from ..io.coverage import geographic_classes

    left, bottom, w, h = box
    table = report["summary"]["land_cover_classes"]
    codes, (west, east, south, north) = geographic_classes(result, max_pixels=300, band="clutter_class")
    rgba = np.zeros(codes.shape + (4,))
    for row in table:
        rgba[codes == row["code"]] = (*to_rgb(CLUTTER_COLOURS[row["clutter"]]), 1.0)
    img = fig.add_axes(fraction((left, bottom + h - 0.42 - w, w, w), width_in, height_in),
                       label="coverage-land-cover")
    img.imshow(rgba, extent=(west, east, south, north), origin="upper", interpolation="nearest", aspect="auto")
    img.set_xticks([])
    img.set_yticks([])
    for spine in img.spines.values():
        spine.set_linewidth(0.6)
    ax = inch_axes(fig, box, width_in, height_in)
    contain(put_text(ax, 0.0, h, "Land cover", ha="left", va="top", fontsize=7.5, fontweight="bold"), ax)
    contain(put_text(ax, 0.0, h - 0.17, "clutter class, R, share", ha="left", va="top", fontsize=6.2,
                     color="0.25"), ax)
    size, line_h = 6.2, 6.2 * 1.25 / 72.0
    y = h - 0.42 - w - 0.1
    for row in table:
        lines = _wrapped(f"{row['code']} {row['clutter']}, R {row['clutter_height_m']:g} m, "
                         f"{(row['share'] or 0):.0%}", w - 0.2, renderer, size)
        ax.add_patch(Rectangle((0.0, y - 0.1), 0.12, 0.1, fc=CLUTTER_COLOURS[row["clutter"]], ec="0.3", lw=0.4))
        contain(put_text(ax, 0.18, y, "\n".join(lines), ha="left", va="top", fontsize=size, linespacing=1.05), ax)
        y -= len(lines) * line_h + 0.05


# --------------------------------------------------------------------------- tables
def site_keys(sites) -> list[str]:
    """What names each site in the table and, for a long name, on the map: ``Gateway``, ``Gateway 2``,
    ``Candidate site``, ``Candidate site 3`` (numbered within its role when the role has several)."""
    roles = [s.get("role") or "gateway" for s in sites]
    seen = {}
    keys = []
    for role in roles:
        seen[role] = seen.get(role, 0) + 1
        word = "Gateway" if role == "gateway" else "Candidate site"
        keys.append(word if roles.count(role) == 1 else f"{word} {seen[role]}")
    return keys


def site_rows(sites) -> list[tuple]:
    """The site table as printed: ``(key: name, position, mast, gain, EIRP)`` per site, existing gateways first.

    Position in degrees with a hemisphere letter to 5 decimals (about 1 m),
    mast [m], gain [dBi] and EIRP [dBm] to 2 decimals, all from the report's
    site records.
    """
    keyed = sorted(zip(sites, site_keys(sites)), key=lambda pair: (pair[0].get("role") or "gateway") != "gateway")
    return [(f"{key}: {clean(s['name'])}", f"{abs(s['lat_deg']):.5f}\u00b0 {'S' if s['lat_deg'] < 0 else 'N'}\n"
             f"{abs(s['lon_deg']):.5f}\u00b0 {'W' if s['lon_deg'] < 0 else 'E'}", f"{s['mast_m']:g} m",
             num(s.get("gain_dbi"), ".2f", " dBi"), num(s.get("eirp_dbm"), ".2f", " dBm")) for s, key in keyed]


HEADS = ("Position", "Mast", "Gain", "EIRP")


def _site_layout(rows, width, renderer, fontsize, pad):
    """Column widths [in], wrapped names, the heights [in] of a text line and of each site's block, and
    whether the position (latitude, longitude) fits on one line."""
    one_line = [(row[0], row[1].replace("\n", "  "), *row[2:]) for row in rows]
    if sum(_site_columns(one_line, renderer, fontsize, pad)) <= width:
        cols = _site_columns(one_line, renderer, fontsize, pad)
        rows, position_lines = one_line, 1
    else:
        cols, position_lines = _site_columns(rows, renderer, fontsize, pad), 2
    cols[0] += max(0.0, width - sum(cols))           # the position column takes the room left
    line_h = fontsize * 1.25 / 72.0
    names = [_wrapped(row[0], width - 2 * pad, renderer, fontsize, bold=True) for row in rows]
    heights = [(len(n) + position_lines) * line_h + 2 * pad for n in names]
    return cols, names, heights, line_h, rows


def _site_columns(rows, renderer, fontsize, pad) -> list:
    """Widths [in] of the number columns (position, mast, gain, EIRP) that hold their heads and cells."""
    return [max([text_width_in(renderer, h, fontsize, True)] +
                [text_width_in(renderer, line, fontsize) for row in rows for line in row[j + 1].split("\n")])
            + 2 * pad for j, h in enumerate(HEADS)]


def _site_heading(sites) -> str:
    """``Sites: 2 gateways and 4 candidate sites`` (the counts of the report's ``summary``)."""
    from ..io.coverage import site_count_text

    roles = [s.get("role") or "gateway" for s in sites]
    return "Sites: " + site_count_text({"gateways": roles.count("gateway"), "candidates": roles.count("candidate")})


def _site_entry(row) -> tuple[str, str]:
    """A site table row as a continuation sheet's entry: the key and name, then position, mast, gain, EIRP."""
    kept = [f"{h} {v}".replace(" ", "\u00a0") for h, v in zip(HEADS[1:], row[2:])]     # a value on one line
    return row[0], f"  {MIDDOT}  ".join([row[1].replace("\n", "  ")] + kept)


def draw_site_table(ax, renderer, sites, max_height_in: float, fontsize: float = 6.8, pad: float = 0.035,
                    continued_on: int = 2) -> tuple[float, list]:
    """The sites (existing gateways, then candidate sites) from the top of ``ax``.

    A dark heading counts the sites by role, a row of column heads names position, mast, antenna
    gain and EIRP; each site has its role and name in bold across the whole width (wrapped, never
    cut), then its numbers.  The type shrinks to :data:`MIN_TABLE_PT` (5.5 pt) until the table fits
    ``max_height_in``; the sites that still do not fit are left for sheet ``continued_on``, a last
    line saying how many.  Returns the height drawn [in] and the rows left (:func:`site_rows`).
    """
    from matplotlib.patches import Rectangle

    width, top = ax.get_xlim()[1], ax.get_ylim()[1]
    all_rows = site_rows(sites)
    heading = _site_heading(sites)
    while True:
        widths, names, heights, line_h, rows = _site_layout(all_rows, width, renderer, fontsize, pad)
        head_h = line_h + 2 * pad
        if 2 * head_h + sum(heights) <= max_height_in or fontsize <= MIN_TABLE_PT:
            break
        fontsize = max(MIN_TABLE_PT, fontsize - 0.3)
    lefts = np.concatenate([[0.0], np.cumsum(widths)[:-1]])

    def cell(x, y0, text, box, **kw):
        contain(put_text(ax, x + pad, y0, text, ha="left", va="top", fontsize=fontsize, zorder=2, linespacing=1.05,
                         **kw), ax, box)

    ax.add_patch(Rectangle((0.0, top - head_h), width, head_h, fc="0.22", ec="none", zorder=1))
    cell(0.0, top - pad, heading, (0.0, top - head_h, width, top), fontweight="bold", color="white")
    y = top - head_h
    ax.add_patch(Rectangle((0.0, y - head_h), width, head_h, fc="0.85", ec="none", zorder=1))
    for text, x, w in zip(HEADS, lefts, widths):
        cell(x, y - pad, text, (x, y - head_h, x + w, y), fontweight="bold", color="0.2")
    y -= head_h
    shown = _rows_that_fit(heights, max_height_in - 2 * head_h,
                           _wrapped(_more_text(len(rows), continued_on), width, renderer, fontsize, True), line_h)
    for i, (row, name, h) in enumerate(zip(rows[:shown], names, heights)):
        if i % 2:
            ax.add_patch(Rectangle((0.0, y - h), width, h, fc="0.93", ec="none", zorder=0))
        name_h = len(name) * line_h + 0.5 * pad
        cell(0.0, y - pad, "\n".join(name), (0.0, y - name_h - pad, width, y), fontweight="bold")
        for text, x, w in zip(row[1:], lefts, widths):
            cell(x, y - name_h - 0.5 * pad, text, (x, y - h, x + w, y - name_h))
        y -= h
    ax.plot([0.0, width], [y, y], color="0.35", lw=0.8)
    if shown < len(rows):
        lines = _wrapped(_more_text(len(rows) - shown, continued_on), width, renderer, fontsize, bold=True)
        cell(-pad, y - 0.04, "\n".join(lines), None, fontweight="bold")
        y -= 0.04 + len(lines) * line_h
    return top - y, all_rows[shown:]


def _more_text(n: int, sheet_no: int) -> str:
    return f"{n} more site{'' if n == 1 else 's'} continued on sheet {sheet_no}"


def _rows_that_fit(heights, room: float, note_lines, line_h: float) -> int:
    """How many rows of ``heights`` [in] fit ``room`` [in], with the note's lines under them when not all do."""
    cum = np.cumsum(heights)
    if not len(cum) or cum[-1] <= room + 1e-9:
        return len(heights)
    return int(np.searchsorted(cum, room - 0.04 - len(note_lines) * line_h + 1e-9, side="right"))


def _blocks(report) -> list:
    s, st = report["summary"], report["settings"]

    def area(entry):
        return f"{entry['area_km2']:.1f} km\u00b2 ({(entry['share'] or 0):.0%})"

    rows = [("Area computed", f"{s['area_computed_km2']:.1f} km\u00b2"),
            ("Heard (\u2265 fade margin)", area(s["covered"]))]
    if s.get("candidates"):
        rows.append(("Heard by the gateways alone", area(s["covered_by_gateways"])))
    rows.append(("Line of sight", area(s["line_of_sight"])))
    heard = s.get("heard_at_location_percent")
    if heard is not None:
        rows.append((f"Heard at {heard['location_percent']:g} % of locations", area(heard)))
        rows.append(("Mean probability heard", num(s.get("mean_probability_heard"), ".2f")))
    rows += [(f"DR{r['dr']}", area(r)) for r in s["covered_by_dr"] if r["pixels"]]
    rows.append(("Radials / step", f"{st['radials']} / {st['radial_step_m']:.1f} m"))
    return [("Area", None, rows)]


def node_text(settings: dict) -> str:
    """The node of a coverage map: its mast, and where it is when the options say (indoors, in a clutter class).

    Reads the report's ``settings`` (``node_mast_m``, ``indoor_b``, ``clutter_b``, ``clutter_height_b_m``).
    """
    text = f"node mast {settings['node_mast_m']:g} m"
    if settings.get("clutter_b"):
        height = settings.get("clutter_height_b_m")
        text += f" in {clean(settings['clutter_b'])}" + ("" if height is None else f" (R {height:g} m)")
    if settings.get("indoor_b"):
        text += f", indoors ({clean(settings['indoor_b'])})"
    return text
