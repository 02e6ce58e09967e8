"""The network map sheet: gateways, nodes and every link by status over a hillshade.

:func:`write_network_figure` draws one landscape sheet from the
``profiler.network/1`` report: the map (sites by role with different marker
shapes, links by status with different line styles as well as colours, a
north arrow, a scale bar and degree ticks), the legend, a summary table, the
radio settings, the nodes not covered, and the title block, provenance and
caution line shared with the link sheet (:mod:`profiler.plot.sheet`).

Link status (:func:`link_status`):

* ``closes``: ``margin_db >= fade_margin_db``;
* ``marginal``: ``0 <= margin_db < fade_margin_db`` (closes, but below the
  fade margin);
* ``fails``: ``margin_db < 0``;
* ``error``: the link could not be computed (``error`` is not null, or no
  margin): drawn thin, dotted and grey.

The palette (dark blue, amber, vermilion, grey) avoids red-green pairs and
steps in lightness (relative luminance about 0.08, 0.42, 0.22 and 0.26
by IEC 61966-2-1 / ITU-R BT.709); line width and dash pattern differ as
well, so the statuses also read with a colour-vision deficiency and in
greyscale.  Links are drawn as straight lines
between the sites on the equirectangular map (one collection per status),
and the relief is one rasterized image, so the sheet stays fast.
"""

from __future__ import annotations

import numpy as np

from ..errors import ProfilerError
from . import basemap
from .titleblock import draw_title_box, title_block_rows
from .sheet import (BADGE_BAD, BADGE_GOOD, BADGE_WARN, DASH, EN, MIDDOT, abbreviate, clean, draw_footer,
                    draw_tables, draw_title_block, fraction, inch_axes, k_text, new_sheet, num, put_text,
                    sheet_legend, source_text, style, text_width_in, wrap_text, write_sheet)

__all__ = ["STATUSES", "build_network_figure", "link_status", "write_network_figure"]

#: Link statuses in legend order.
STATUSES = ("closes", "marginal", "fails", "error")

#: Line style of each status: colour, width [pt], dash pattern; drawn bottom to top in reverse order.
STATUS_STYLE = {
    "closes": {"color": "#1a4f8b", "lw": 2.0, "ls": "-"},
    "marginal": {"color": "#e5a000", "lw": 1.7, "ls": (0, (6.0, 2.5))},
    "fails": {"color": "#d35f1d", "lw": 1.3, "ls": (0, (4.0, 1.8, 1.0, 1.8))},
    "error": {"color": "0.55", "lw": 0.7, "ls": (0, (1.0, 1.6))},
}

#: Marker of each role (and of a node no gateway hears with the fade margin).
ROLE_STYLE = {
    "gateway": {"marker": "^", "ms": 9.0, "mfc": "black", "mec": "white", "mew": 1.0},
    "candidate": {"marker": "D", "ms": 6.5, "mfc": "white", "mec": "black", "mew": 1.3},
    "node": {"marker": "o", "ms": 5.5, "mfc": "0.2", "mec": "white", "mew": 0.8},
    "node_uncovered": {"marker": "o", "ms": 5.5, "mfc": "white", "mec": "black", "mew": 1.1},
}
HIGHLIGHT_STYLE = {"marker": "o", "ms": 15.0, "mfc": "none", "mec": "black", "mew": 2.0}
MARKED_STYLE = {"marker": "x", "ms": 11.0, "mec": "#d35f1d", "mew": 2.2}

MAX_NODE_LABELS = 40      # at most this many node names on the map; gateways are always named


# --------------------------------------------------------------------------- public API
def link_status(links, fade_margin_db) -> list[str]:
    """Status of each link: ``"closes"``, ``"marginal"``, ``"fails"`` or ``"error"`` (see module notes).

    Parameters
    ----------
    links : list of dict
        The report's ``links`` (``margin_db`` [dB] and ``error`` are read).
    fade_margin_db : float
        The required fade margin [dB].
    """
    margin = np.array([np.nan if ln.get("margin_db") is None else ln["margin_db"] for ln in links], dtype=float)
    failed = np.array([ln.get("error") is not None for ln in links], dtype=bool) | ~np.isfinite(margin)
    fade = float(fade_margin_db or 0.0)
    with np.errstate(invalid="ignore"):
        status = np.where(margin >= fade, "closes", np.where(margin >= 0.0, "marginal", "fails"))
    return np.where(failed, "error", status).tolist()


def write_network_figure(report: dict, path, paper: str = "a4", dpi: float = 200, dem_paths=None, *,
                         highlight=None, marked=None, date_text: str | None = None, sheet: dict | None = None) -> None:
    """Draw the network map sheet and write it to ``path`` (PNG, PDF or SVG by extension).

    Parameters
    ----------
    report : dict
        The ``profiler.network/1`` report.
    path : str or os.PathLike
        ``.png``, ``.pdf`` or ``.svg``; written atomically.
    paper : {"a4", "letter"}
        Landscape paper size.
    dpi : float
        Resolution [dots per inch] of a PNG and of the hillshade in a PDF or SVG.
    dem_paths : list of str or os.PathLike, optional
        Elevation files or folders (as given to ``--dem``) for the hillshade;
        none draws the sites and links on a hatched background.
    highlight : iterable of str, optional
        Site names drawn as chosen (a thick ring).
    marked : iterable of str, optional
        Site names drawn as unreachable (a cross).
    date_text : str, optional
        Date printed on the sheet; default ``sheet["date"]``, else today's date (ISO 8601).
    sheet : dict, optional
        Title-block fields (``SheetInfo.to_dict()`` plus ``date``); empty
        fields are drawn as blank boxes.

    Raises
    ------
    ProfilerError
        Unknown extension or paper size, a bad dpi, a report without sites,
        a missing output folder or a write error.
    """
    write_sheet(path, paper, dpi, lambda: build_network_figure(
        report, paper=paper, dem_paths=dem_paths, highlight=highlight, marked=marked, date_text=date_text,
        sheet=sheet), f"Network map: {_title(report)}", report)


def build_network_figure(report: dict, paper: str = "a4", dem_paths=None, *, highlight=None, marked=None,
                         date_text: str | None = None, sheet: dict | None = None):
    """Build the network map sheet as a :class:`matplotlib.figure.Figure` (Agg canvas).

    Parameters are those of :func:`write_network_figure`.  The map axes
    carries the label ``"network-map"``; the site markers of a role are one
    line artist with the gid ``sites-<role>``, the links of a status one
    collection with the gid ``links-<status>``.
    """
    sites = _site_table(report)
    status = link_status(report.get("links") or [], report.get("fade_margin_db"))
    with style():
        fig, renderer, width_in, height_in = new_sheet(paper)
        boxes = _layout(width_in, height_in)
        _draw_header(inch_axes(fig, boxes["header"], width_in, height_in), report, renderer)
        ax = fig.add_axes(fraction(boxes["map"], width_in, height_in), label="network-map")
        _draw_map(ax, report, sites, status, dem_paths, set(highlight or ()), set(marked or ()), renderer)
        _draw_side(fig, boxes["side"], width_in, height_in, report, sites, status, renderer,
                   bool(highlight), bool(marked))
        sheet = dict(sheet or {})
        date_text = date_text or sheet.get("date")
        if date_text:
            sheet["date"] = date_text
        draw_title_box(inch_axes(fig, boxes["title_block"], width_in, height_in), renderer,
                       title_block_rows(sheet, f"Network map: {_title(report)}", report))
        draw_footer(inch_axes(fig, boxes["footer"], width_in, height_in), renderer, report,
                    source_text(report.get("dem")), date_text)
    return fig


# --------------------------------------------------------------------------- data and layout
def _site_table(report: dict) -> dict:
    """Sites with coordinates as arrays: name, role, lon (continuous), lat, covered flag."""
    rows = [s for s in (report.get("sites") or []) if s.get("lat_deg") is not None and s.get("lon_deg") is not None]
    if not rows:
        raise ProfilerError("the network report has no sites with coordinates; nothing to draw")
    heard = {n.get("name"): (n.get("gateways_heard") or 0) > 0 for n in (report.get("nodes") or [])}
    role = np.array([str(s.get("role") or "node") for s in rows])
    role = np.where(role == "sensor", "node", role)
    names = [str(s.get("name") or "") for s in rows]
    return {"name": names, "label": [clean(n) for n in names], "role": role,
            "lon": basemap.continuous_lon([s["lon_deg"] for s in rows]),
            "lat": np.array([s["lat_deg"] for s in rows], dtype=float),
            "covered": np.array([heard.get(n, False) for n in names], dtype=bool)}


def _layout(width_in: float, height_in: float) -> dict:
    """Boxes (left, bottom, width, height) [in]: header, map, side column, footer."""
    margin = 0.38
    header_h = 0.66
    header = (margin, height_in - margin - header_h, width_in - 2 * margin, header_h)
    side_w = 3.25 - 0.4 * max(0.0, 11.69 - width_in)
    side_left = width_in - margin - side_w
    footer = (margin, margin, side_left - 0.2 - margin, 0.44)
    title_block = (side_left, margin, side_w, 1.45)
    map_bottom = margin + 0.52 + 0.42
    map_top = header[1] - 0.28
    map_left = margin + 0.42
    map_box = (map_left, map_bottom, side_left - 0.3 - map_left, map_top - map_bottom)
    side = (side_left, margin + 1.6, side_w, map_top - margin - 1.6)
    return {"header": header, "map": map_box, "side": side, "footer": footer, "title_block": title_block}


def _title(report: dict) -> str:
    sites = report.get("sites") or []
    gateways = [clean(s.get("name") or "") for s in sites if s.get("role") in ("gateway", "candidate")]
    nodes = sum(1 for s in sites if s.get("role") not in ("gateway", "candidate"))
    if len(gateways) == 1:
        return f"{gateways[0]} and {nodes} nodes"
    return f"{len(gateways)} gateway sites and {nodes} nodes" if gateways else "no gateway"


def _draw_header(ax, report: dict, renderer) -> None:
    summary = report.get("summary") or {}
    total, covered = summary.get("nodes_total") or 0, summary.get("nodes_covered") or 0
    band = report.get("band")
    freq = num(report.get("frequency_mhz"), ".4f", " MHz") + (f" ({clean(band)})" if band else "")
    parts = ["Network map", f"{summary.get('links', 0)} links", freq, f"k = {k_text(report.get('k_factor'))}",
             f"fade margin {num(report.get('fade_margin_db'), '.1f', ' dB')}"]
    badge = f"{covered} of {total} nodes covered"
    badge_style = BADGE_GOOD if total and covered == total else (BADGE_WARN if covered else BADGE_BAD)
    draw_title_block(ax, renderer, _title(report), f"  {MIDDOT}  ".join(parts), badge, badge_style,
                     badge_label="COVERAGE")


# --------------------------------------------------------------------------- map
def _draw_map(ax, report, sites, status, dem_paths, highlight, marked, renderer) -> None:
    """Relief, links, sites, labels, north arrow, scale bar and degree ticks."""
    ext = basemap.map_extent(ax, sites["lon"], sites["lat"], margin_frac=0.1, min_margin_m=500.0)
    basemap.prepare_map(ax, ext)
    caption = "no elevation model given: sites and links only"
    if dem_paths:
        caption = basemap.hillshade(ax, dem_paths, ext, pixels=420)
    segments = _draw_links(ax, report, sites, status)
    _draw_sites(ax, sites, highlight, marked)
    basemap.finish_map(ax, ext)
    to_axes = ax.transData + ax.transAxes.inverted()
    t = np.linspace(0.0, 1.0, 12)[:, None, None]
    along = (segments[:, 0][None] * (1 - t) + segments[:, 1][None] * t).reshape(-1, 2) if len(segments) else []
    points = to_axes.transform(np.vstack([np.column_stack([sites["lon"], sites["lat"]])] +
                                         ([along] if len(along) else [])))
    # The furniture first, where fewest sites (and the room for their names) and links are; then the
    # names, clear of it.
    from matplotlib.transforms import Bbox

    n_sites = len(sites["name"])
    room = [Bbox([[x - 0.08, y - 0.04], [x + 0.08, y + 0.04]]) for x, y in points[:n_sites]]
    furniture = basemap.place_furniture(ax, ext, points, room, renderer)
    _, omitted = _label_sites(ax, sites, highlight, marked, renderer, furniture)
    if omitted:
        caption += f"  {MIDDOT}  {omitted} of {len(sites['name'])} site names left out (crowded)"
    ax.annotate(f"{caption}  {MIDDOT}  links drawn as straight lines between sites", xy=(0.5, 0.0),
                xycoords="axes fraction", xytext=(0.0, -13.0), textcoords="offset points", ha="center", va="top",
                fontsize=6.2, color="0.25", parse_math=False)


def _draw_links(ax, report, sites, status) -> np.ndarray:
    """One line collection per status, under the sites; returns all segments (N x 2 x 2) [deg]."""
    from matplotlib.collections import LineCollection

    index = {name: i for i, name in enumerate(sites["name"])}
    links = report.get("links") or []
    ends = np.array([(index.get(ln.get("gateway"), -1), index.get(ln.get("node"), -1)) for ln in links],
                    dtype=int).reshape(-1, 2)
    known = (ends >= 0).all(axis=1)
    xy = np.column_stack([sites["lon"], sites["lat"]])
    segments = xy[ends[known]]                                   # (N, 2 ends, 2 coordinates)
    kinds = np.asarray(status, dtype=object)[known] if len(status) else np.array([], dtype=object)
    for z, kind in enumerate(reversed(STATUSES)):
        chosen = segments[kinds == kind] if len(segments) else segments
        if not len(chosen):
            continue
        s = STATUS_STYLE[kind]
        ax.add_collection(LineCollection(chosen, colors=s["color"], linewidths=s["lw"], linestyles=[s["ls"]],
                                         zorder=3 + 0.1 * z, gid=f"links-{kind}", capstyle="round",
                                         path_effects=basemap.halo(s["lw"] + 1.6) if kind != "error" else None))
    return segments


def _draw_sites(ax, sites, highlight, marked) -> None:
    """Markers by role (nodes filled when covered, hollow when not), chosen rings, unreachable crosses."""
    role, lon, lat = sites["role"], sites["lon"], sites["lat"]
    groups = {"gateway": role == "gateway", "candidate": role == "candidate",
              "node": (role == "node") & sites["covered"], "node_uncovered": (role == "node") & ~sites["covered"]}
    for z, (key, mask) in enumerate(groups.items()):
        if mask.any():
            ax.plot(lon[mask], lat[mask], ls="none", zorder=6 - 0.1 * z, gid=f"sites-{key}", **ROLE_STYLE[key])
    names = np.array(sites["name"], dtype=object)
    for chosen, style_kw, gid in ((highlight, HIGHLIGHT_STYLE, "sites-highlight"), (marked, MARKED_STYLE, "sites-marked")):
        mask = np.isin(names, list(chosen)) if chosen else np.zeros(names.size, dtype=bool)
        if mask.any():
            ax.plot(lon[mask], lat[mask], ls="none", zorder=7, gid=gid, **style_kw)


def _label_order(sites, highlight, marked) -> list[int]:
    """Sites to name, most important first: chosen, unreachable, gateways, nodes not covered, the rest.

    Gateways and candidates are always tried; at most MAX_NODE_LABELS nodes.
    """
    names, role, covered = sites["name"], sites["role"], sites["covered"]
    rank = np.where(role != "node", 2, np.where(covered, 4, 3))
    rank = np.where(np.isin(np.array(names, dtype=object), list(marked or ())), 1, rank)
    rank = np.where(np.isin(np.array(names, dtype=object), list(highlight or ())), 0, rank)
    order = [int(i) for i in np.argsort(rank, kind="stable")]
    nodes = [i for i in order if rank[i] >= 3]
    return [i for i in order if rank[i] < 3] + nodes[:MAX_NODE_LABELS]


def _label_sites(ax, sites, highlight, marked, renderer, furniture=()):
    """Name the sites where a label fits clear of markers, other labels and the ``furniture`` (north
    arrow and scale bar boxes [axes fractions]), else abbreviated, else left out.

    Returns the label boxes (axes fraction) and the number of sites left unnamed.  The labels sit
    on a translucent white box rather than a stroked halo, so that they stay text in SVG and PDF.
    """
    from matplotlib.transforms import Bbox

    dpi = ax.figure.dpi
    xy = ax.transData.transform(np.column_stack([sites["lon"], sites["lat"]]))
    frame = ax.get_window_extent(renderer)
    half = _marker_half_px(sites, highlight, marked, dpi)
    taken = [Bbox.from_extents(x - r, y - r, x + r, y + r) for (x, y), r in zip(xy, half)]     # the markers
    taken += [box.transformed(ax.transAxes) for box in furniture]
    placed, order = [], _label_order(sites, highlight, marked)
    for i in order:
        strong = sites["role"][i] != "node"
        size = 6.8 if strong else 5.8
        spot = _free_spot(sites["label"][i], xy[i], half[i] + 2.0, taken, frame, renderer, size, strong)
        if spot is None:
            continue
        text, (ox, oy), ha, va, box, far = spot
        leader = dict(arrowstyle="-", lw=0.5, color="0.2", shrinkA=0, shrinkB=3) if far else None
        ax.annotate(text, xy=(sites["lon"][i], sites["lat"][i]), xytext=(ox * 72.0 / dpi, oy * 72.0 / dpi),
                    textcoords="offset points", ha=ha, va=va, fontsize=size, zorder=8, parse_math=False,
                    fontweight="bold" if strong else "normal", arrowprops=leader,
                    bbox=dict(boxstyle="square,pad=0.12", fc="white", ec="none", alpha=0.72))
        taken.append(box)
        placed.append(box.transformed(ax.transAxes.inverted()))
    return placed, len(sites["name"]) - len(placed)


def _marker_half_px(sites, highlight, marked, dpi) -> np.ndarray:
    """Half the drawn size [px] of each site's largest marker (ring and cross included)."""
    ms = np.select([sites["role"] == "gateway", sites["role"] == "candidate"],
                   [ROLE_STYLE["gateway"]["ms"], ROLE_STYLE["candidate"]["ms"]], ROLE_STYLE["node"]["ms"])
    names = np.array(sites["name"], dtype=object)
    ms = np.where(np.isin(names, list(marked or ())), np.maximum(ms, MARKED_STYLE["ms"]), ms)
    ms = np.where(np.isin(names, list(highlight or ())), np.maximum(ms, HIGHLIGHT_STYLE["ms"]), ms)
    return 0.5 * ms * dpi / 72.0


def _free_spot(name, point, gap, taken, frame, renderer, size, bold):
    """The first of eight places around ``point`` [px], ``gap`` [px] out then farther, where the
    label overlaps nothing taken (markers included).

    Tries the full name, then the name cut to 14 characters.  Returns
    ``(text, (dx, dy) [px], ha, va, Bbox, far)`` or None; a far label gets a leader line.
    """
    from matplotlib.transforms import Bbox

    h = size * 1.25 / 72.0 * renderer.dpi
    for text in dict.fromkeys((name, abbreviate(name, 14))):
        w = text_width_in(renderer, text, size, bold) * renderer.dpi
        for far, out in ((False, gap), (True, gap + 10.0)):
            for ox, oy in ((1, 0), (-1, 0), (0, 1), (0, -1), (1, 1), (-1, 1), (1, -1), (-1, -1)):
                dx, dy = ox * out, oy * (out if ox == 0 else 0.6 * out)
                x0 = point[0] + dx - (0.0 if ox > 0 else (w if ox < 0 else w / 2))
                y0 = point[1] + dy - (0.0 if oy > 0 else (h if oy < 0 else h / 2))
                box = Bbox.from_extents(x0 - 1, y0 - 1, x0 + w + 1, y0 + h + 1)
                if box.x0 < frame.x0 + 2 or box.x1 > frame.x1 - 2 or box.y0 < frame.y0 + 2 or box.y1 > frame.y1 - 2:
                    continue
                if any(basemap.overlap(box, other) > 0 for other in taken):
                    continue
                ha = "left" if ox > 0 else ("right" if ox < 0 else "center")
                va = "bottom" if oy > 0 else ("top" if oy < 0 else "center")
                return text, (dx, dy), ha, va, box, far
    return None


# --------------------------------------------------------------------------- side column
def _draw_side(fig, box, width_in, height_in, report, sites, status, renderer, highlight, marked) -> None:
    """Legend, summary table, radio settings and the nodes not covered, top to bottom."""
    left, bottom, w, h = box
    legend_h = 1.5 + 0.16 * (bool(highlight) + bool(marked))
    legend_ax = inch_axes(fig, (left, bottom + h - legend_h, w, legend_h), width_in, height_in)
    _draw_legend(legend_ax, report, status, highlight, marked)
    table_h = 1.85
    table_ax = inch_axes(fig, (left, bottom + h - legend_h - 0.12 - table_h, w, table_h), width_in, height_in)
    draw_tables(table_ax, renderer, _summary_blocks(report, status), max_row_h=0.2)
    notes_h = h - legend_h - table_h - 0.3
    if notes_h > 0.3:
        _draw_uncovered(inch_axes(fig, (left, bottom, w, notes_h), width_in, height_in), report, sites, renderer)


def _draw_legend(ax, report, status, highlight, marked) -> None:
    from matplotlib.lines import Line2D

    fade = num(report.get("fade_margin_db"), ".1f", " dB")
    counts = {kind: status.count(kind) for kind in STATUSES}
    texts = {"closes": f"Closes with the fade margin (\u2265 {fade})",
             "marginal": f"Closes below the fade margin (0 to {fade})", "fails": "Fails (margin below 0 dB)",
             "error": "Not computed (error)"}
    handles = [Line2D([], [], color=STATUS_STYLE[k]["color"], lw=STATUS_STYLE[k]["lw"], ls=STATUS_STYLE[k]["ls"],
                      label=f"{texts[k]}: {counts[k]}") for k in STATUSES]
    roles = (("gateway", "Gateway"), ("candidate", "Candidate gateway"), ("node", "Node, covered"),
             ("node_uncovered", "Node, not covered"))
    handles += [Line2D([], [], ls="none", label=label, **ROLE_STYLE[key]) for key, label in roles]
    if highlight:
        handles.append(Line2D([], [], ls="none", label="Chosen site", **{**HIGHLIGHT_STYLE, "ms": 10.0}))
    if marked:
        handles.append(Line2D([], [], ls="none", label="Unreachable site", **{**MARKED_STYLE, "ms": 8.0}))
    put_text(ax, 0.0, ax.get_ylim()[1], "Legend", ha="left", va="top", fontsize=7.5, fontweight="bold")
    sheet_legend(ax, handles, loc="upper left", bbox_to_anchor=(0.0, 0.9), ncol=1, handlelength=3.2,
                 labelspacing=0.45, fontsize=6.8)


def _summary_blocks(report, status) -> list:
    summary = report.get("summary") or {}
    total = summary.get("nodes_total")
    rows = [
        ("Links computed", num(summary.get("links"), "d")),
        ("Closing (\u2265 fade margin)", num(summary.get("closing"), "d")),
        ("Below the fade margin", f"{status.count('marginal')}"),
        ("Failing", f"{status.count('fails')}"),
        ("Errors", num(summary.get("errors"), "d")),
        ("Nodes covered", f"{num(summary.get('nodes_covered'), 'd')} of {num(total, 'd')}"),
        ("Nodes covered twice", num(summary.get("nodes_covered_twice"), "d")),
        ("Band / frequency", f"{clean(report.get('band') or DASH)} / {num(report.get('frequency_mhz'), '.4f', ' MHz')}"),
        ("k-factor", k_text(report.get("k_factor"))),
    ]
    return [("Summary", None, rows)]


def _draw_uncovered(ax, report, sites, renderer) -> None:
    """The names of the nodes no gateway hears with the fade margin, wrapped, cut with a count."""
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    missing = [sites["label"][i] for i in np.flatnonzero((sites["role"] == "node") & ~sites["covered"])]
    put_text(ax, 0.0, height, f"Nodes not covered ({len(missing)})", ha="left", va="top", fontsize=7.5,
             fontweight="bold")
    lines = wrap_text(", ".join(missing) if missing else "none", width, renderer, 6.5)
    room = max(int((height - 0.2) / 0.13), 1)
    if len(lines) > room:
        lines = lines[:room - 1] + [f"{EN} and more (see the JSON or CSV report)"]
    put_text(ax, 0.0, height - 0.18, "\n".join(lines), ha="left", va="top", fontsize=6.5, color="0.15",
             linespacing=1.25)
