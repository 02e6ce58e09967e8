"""The network map sheet: gateways, candidate sites, nodes and their links by status over a hillshade.

:func:`write_network_figure` draws one landscape sheet from the
``profiler.network/5`` report: the map (sites by role with different marker
shapes and colours, links by status with different line styles as well as
colours, a north arrow, a scale bar and degree ticks), the legend, a summary
table, the radio settings, the nodes not covered, and the title block,
provenance and caution line shared with the link sheet
(:mod:`profiler.plot.sheet`).  Node names that do not fit the side column
even at its smallest type continue on continuation sheets
(:mod:`profiler.plot.continuation`).

Existing gateways (role ``gateway``) and candidate sites (role
``candidate``) are kept apart: candidates are reddish-purple diamonds, their
links thinner and paler than those of the gateways, a node heard only by a
candidate is drawn in the candidate colour, and the summary counts them
apart (the numbers of the report's ``summary``).  ``links="best"`` draws
per node only the link from its best gateway and from its best candidate
(``nodes[].best_gateway`` / ``best_candidate``); ``links="all"`` every link.

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
from ..io.report import model_line
from . import basemap
from .audit import contain
from .network_text import TextMeasure, wrap_label
from .sheet import (
    BADGE_BAD,
    BADGE_GOOD,
    BADGE_WARN,
    DASH,
    EN,
    MIDDOT,
    clean,
    draw_footer,
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
    wrap_text,
    write_sheet,
)
from .tables import draw_tables
from .titleblock import draw_title_box, title_block_rows

__all__ = ["LINK_CHOICES", "STATUSES", "build_network_figure", "build_network_sheets", "drawn_links", "link_status",
           "write_network_figure"]

#: The choices of ``links``: per node the best link from a gateway and from a candidate, or every link.
LINK_CHOICES = ("best", "all")

#: Link statuses in legend order.
STATUSES = ("closes", "marginal", "fails", "error")

#: Line style of each status: colour, width [pt], dash pattern; drawn bottom to top in reverse order.
STATUS_STYLE = {
    "closes": {"color": "#1a4f8b", "lw": 2.0, "ls": "-"},
    "marginal": {"color": "#e5a000", "lw": 1.7, "ls": (0, (6.0, 2.5))},
    "fails": {"color": "#d35f1d", "lw": 1.3, "ls": (0, (4.0, 1.8, 1.0, 1.8))},
    "error": {"color": "0.55", "lw": 0.7, "ls": (0, (1.0, 1.6))},
}

#: Colour of the candidate sites (and of the nodes only a candidate hears): reddish purple, apart
#: from the link colours in hue and from black in lightness.
CANDIDATE_COLOR = "#b8579a"

#: A candidate site's links: the status style at this fraction of the width, at this opacity.
CANDIDATE_LINK = {"width": 0.55, "alpha": 0.6}

#: Marker of each role (and of a node heard only by a candidate, or by no site, with the fade margin).
ROLE_STYLE = {
    "gateway": {"marker": "^", "ms": 9.0, "mfc": "black", "mec": "white", "mew": 1.0},
    "candidate": {"marker": "D", "ms": 7.0, "mfc": CANDIDATE_COLOR, "mec": "black", "mew": 1.0},
    "node": {"marker": "o", "ms": 5.5, "mfc": "0.2", "mec": "white", "mew": 0.8},
    "node_candidate": {"marker": "o", "ms": 5.5, "mfc": CANDIDATE_COLOR, "mec": "black", "mew": 0.8},
    "node_uncovered": {"marker": "o", "ms": 5.5, "mfc": "white", "mec": "black", "mew": 1.1},
}
HIGHLIGHT_STYLE = {"marker": "o", "ms": 15.0, "mfc": "none", "mec": "black", "mew": 2.0}
MARKED_STYLE = {"marker": "x", "ms": 11.0, "mec": "#d35f1d", "mew": 2.2}

MAX_NODE_LABELS = 40      # at most this many node names on the map; gateways are always named
LABEL_WRAP_IN = 1.4       # a site name that finds no place on one line is tried wrapped to this width [in]


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
                         highlight=None, marked=None, date_text: str | None = None, sheet: dict | None = None,
                         links: str = "best", files=None) -> None:
    """Draw the network map sheet and write it to ``path`` (PNG, PDF or SVG by extension).

    Parameters
    ----------
    report : dict
        The ``profiler.network/5`` report.
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
    links : {"best", "all"}
        Links drawn: per node the one from its best existing gateway and the
        one from its best candidate site (default), or every link of the
        report.  The counts on the sheet are always of every link.
    files : profiler.io.outputs.ExtraFiles, optional
        The run's transaction, for the continuation sheets of a PNG or SVG (:func:`~profiler.plot.sheet.write_sheet`).

    Raises
    ------
    ProfilerError
        Unknown extension, paper size or ``links``, a bad dpi, a report
        without sites, a missing output folder or a write error.
    """
    write_sheet(path, paper, dpi, lambda: build_network_sheets(
        report, paper=paper, dem_paths=dem_paths, highlight=highlight, marked=marked, date_text=date_text,
        sheet=sheet, links=links), f"Network map: {_title(report)}", report, files)


def build_network_figure(report: dict, paper: str = "a4", dem_paths=None, *, highlight=None, marked=None,
                         date_text: str | None = None, sheet: dict | None = None, links: str = "best"):
    """The network map sheet as a :class:`matplotlib.figure.Figure` (the first of :func:`build_network_sheets`)."""
    return build_network_sheets(report, paper, dem_paths, highlight=highlight, marked=marked, date_text=date_text,
                                sheet=sheet, links=links)[0]


def build_network_sheets(report: dict, paper: str = "a4", dem_paths=None, *, highlight=None, marked=None,
                         date_text: str | None = None, sheet: dict | None = None, links: str = "best") -> list:
    """Build the network map sheet and its continuation sheets (node names it has no room for) as Figures.

    Parameters are those of :func:`write_network_figure`.  The map axes
    carries the label ``"network-map"``; the site markers of a role are one
    line artist with the gid ``sites-<role>``, the drawn links of a status
    one collection with the gid ``links-<status>`` (from existing gateways)
    or ``candidate-links-<status>`` (from candidate sites).
    """
    from .continuation import continuation_figures
    from .titleblock import provenance_lines

    sites = _site_table(report)
    status = link_status(report.get("links") or [], report.get("fade_margin_db"))
    drawn = drawn_links(report, links)
    with style():
        fig, renderer, width_in, height_in = new_sheet(paper)
        boxes = _layout(width_in, height_in)
        _draw_header(inch_axes(fig, boxes["header"], width_in, height_in), report, renderer)
        ax = fig.add_axes(fraction(boxes["map"], width_in, height_in), label="network-map")
        _draw_map(ax, report, sites, status, drawn, dem_paths, set(highlight or ()), set(marked or ()), renderer)
        layout = _draw_side(fig, boxes["side"], width_in, height_in, report, sites, status, drawn, renderer,
                            bool(highlight), bool(marked), paper)
        sheet = dict(sheet or {})
        date_text = date_text or sheet.get("date")
        if date_text:
            sheet["date"] = date_text
        title = f"Network map: {_title(report)}"
        draw_title_box(inch_axes(fig, boxes["title_block"], width_in, height_in), renderer,
                       title_block_rows(sheet, title, report, 1, layout.count))
        draw_footer(inch_axes(fig, boxes["footer"], width_in, height_in), renderer, report,
                    source_text(report.get("dem")), date_text)
        notes = provenance_lines(report, source_text(report.get("dem")))
        return [fig] + continuation_figures(layout, paper, fig.dpi, title=title, report=report,
                                            sheet=sheet, notes=notes)


def drawn_links(report: dict, links: str = "best") -> np.ndarray:
    """Indices into the report's ``links`` of the links the map draws.

    ``"all"``: every link.  ``"best"``: per node, the link from its best
    existing gateway (``nodes[].best_gateway``) and the link from its best
    candidate site (``nodes[].best_candidate``), whatever their status.
    """
    if links not in LINK_CHOICES:
        raise ProfilerError(f"links must be one of {', '.join(LINK_CHOICES)}, not {links!r}")
    rows = report.get("links") or []
    if links == "all":
        return np.arange(len(rows))
    best = {(n.get(key), n.get("name")) for n in (report.get("nodes") or [])
            for key in ("best_gateway", "best_candidate") if n.get(key) is not None}
    return np.array([i for i, ln in enumerate(rows) if (ln.get("gateway"), ln.get("node")) in best], dtype=int)


# --------------------------------------------------------------------------- data and layout
def _site_table(report: dict) -> dict:
    """Sites with coordinates as arrays: name, role, lon (continuous), lat; a node's ``covered`` (by an
    existing gateway) and ``candidate_covered`` (by a candidate site) flags, with the fade margin."""
    rows = [s for s in (report.get("sites") or []) if s.get("lat_deg") is not None and s.get("lon_deg") is not None]
    if not rows:
        raise ProfilerError("the network report has no sites with coordinates; nothing to draw")
    nodes = report.get("nodes") or []
    heard = {n.get("name"): (n.get("gateways_heard") or 0) > 0 for n in nodes}
    heard_cand = {n.get("name"): (n.get("candidates_heard") or 0) > 0 for n in nodes}
    role = np.array([str(s.get("role") or "node") for s in rows])
    role = np.where(role == "sensor", "node", role)
    names = [str(s.get("name") or "") for s in rows]
    return {"name": names, "label": [clean(n) for n in names], "role": role,
            "lon": basemap.continuous_lon([s["lon_deg"] for s in rows]),
            "lat": np.array([s["lat_deg"] for s in rows], dtype=float),
            "covered": np.array([heard.get(n, False) for n in names], dtype=bool),
            "candidate_covered": np.array([heard_cand.get(n, False) for n in names], dtype=bool)}


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


def _plural(count: int, word: str) -> str:
    return f"{count} {word}" + ("" if count == 1 else "s")


def _title(report: dict) -> str:
    """``"2 gateways, 4 candidate sites and 40 nodes"`` (the candidates only when there are some)."""
    roles = [s.get("role") for s in report.get("sites") or []]
    gateways, candidates = roles.count("gateway"), roles.count("candidate")
    nodes = len(roles) - gateways - candidates
    parts = [_plural(gateways, "gateway")] + ([_plural(candidates, "candidate site")] if candidates else [])
    return f"{', '.join(parts)} and {_plural(nodes, 'node')}"


def _draw_header(ax, report: dict, renderer) -> None:
    summary = report.get("summary") or {}
    total, covered = summary.get("nodes_total") or 0, _covered_by_gateways(summary)
    band = report.get("band")
    freq = num(report.get("frequency_mhz"), ".4f", " MHz") + (f" ({clean(band)})" if band else "")
    parts = ["Network map", f"{summary.get('links', 0)} links", freq, f"k = {k_text(report.get('k_factor'))}",
             f"fade margin {num(report.get('fade_margin_db'), '.1f', ' dB')}", heard_rule(report)]
    badge = f"{covered} of {total} nodes covered by gateways"
    badge_style = BADGE_GOOD if total and covered == total else (BADGE_WARN if covered else BADGE_BAD)
    draw_title_block(ax, renderer, _title(report), f"  {MIDDOT}  ".join(p for p in parts if p), badge,
                     badge_style, badge_label="COVERAGE", note=clean(model_line(report)))


def heard_rule(report: dict) -> str:
    """``"heard: P ≥ 0.95"``: the rule a node is heard by (``settings.min_probability``); empty without it."""
    p = (report.get("settings") or {}).get("min_probability")
    return "" if p is None else f"heard: P ≥ {p:.2f}"





# --------------------------------------------------------------------------- map
def _has_candidates(report: dict) -> bool:
    return any(s.get("role") == "candidate" for s in report.get("sites") or [])


def _covered_by_gateways(summary: dict) -> int:
    """Nodes the existing gateways hear (``nodes_covered`` in a report older than ``profiler.network/3``)."""
    return int(summary.get("nodes_covered_by_gateways", summary.get("nodes_covered")) or 0)


def _draw_map(ax, report, sites, status, drawn, dem_paths, highlight, marked, renderer) -> None:
    """Relief, links, sites, labels, north arrow, scale bar and degree ticks."""
    ext = basemap.map_extent(ax, sites["lon"], sites["lat"], margin_frac=0.1, min_margin_m=500.0)
    basemap.prepare_map(ax, ext)
    caption = "no elevation model given: sites and links only"
    if dem_paths:
        caption = basemap.hillshade(ax, dem_paths, ext, pixels=420)
    segments = _draw_links(ax, report, sites, status, drawn)
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
    total = len(report.get("links") or [])
    best = "from a gateway and from a candidate" if _has_candidates(report) else "from a gateway"
    shown = (f"all {total} links drawn" if len(drawn) == total else
             f"{len(drawn)} of {total} links drawn (per node the best {best})")
    width_in = ax.get_window_extent(renderer).width / ax.figure.dpi
    text = f"{caption}  {MIDDOT}  {shown}, straight between the sites"
    ax.annotate("\n".join(wrap_text(text, width_in, renderer, 6.2)), xy=(0.5, 0.0), xycoords="axes fraction",
                xytext=(0.0, -13.0), textcoords="offset points", ha="center", va="top", fontsize=6.2, color="0.25",
                parse_math=False)


def _draw_links(ax, report, sites, status, drawn) -> np.ndarray:
    """One line collection per status and kind of site, under the sites: the links of candidate sites
    thinner and paler, below those of the gateways.  Returns the drawn segments (N x 2 x 2) [deg]."""
    from matplotlib.collections import LineCollection

    index = {name: i for i, name in enumerate(sites["name"])}
    links = [(report.get("links") or [])[i] for i in drawn]
    ends = np.array([(index.get(ln.get("gateway"), -1), index.get(ln.get("node"), -1)) for ln in links],
                    dtype=int).reshape(-1, 2)
    known = (ends >= 0).all(axis=1)
    xy = np.column_stack([sites["lon"], sites["lat"]])
    segments = xy[ends[known]]                                   # (N, 2 ends, 2 coordinates)
    kinds = np.asarray(status, dtype=object)[np.asarray(drawn, dtype=int)][known]
    from_candidate = sites["role"][ends[known][:, 0]] == "candidate"
    for cand, prefix, width, alpha, base in ((True, "candidate-links", CANDIDATE_LINK["width"],
                                              CANDIDATE_LINK["alpha"], 2.5), (False, "links", 1.0, 1.0, 3.0)):
        for z, kind in enumerate(reversed(STATUSES)):
            chosen = segments[(kinds == kind) & (from_candidate == cand)]
            if not len(chosen):
                continue
            s = STATUS_STYLE[kind]
            lw = s["lw"] * width
            halo = basemap.halo(lw + 1.6) if kind != "error" and not cand else None
            ax.add_collection(LineCollection(chosen, colors=s["color"], linewidths=lw, linestyles=[s["ls"]],
                                             alpha=alpha, zorder=base + 0.1 * z, gid=f"{prefix}-{kind}",
                                             capstyle="round", path_effects=halo))
    return segments


def _draw_sites(ax, sites, highlight, marked) -> None:
    """Markers by role (nodes dark when a gateway hears them, in the candidate colour when only a
    candidate does, hollow when none), chosen rings, unreachable crosses."""
    role, lon, lat = sites["role"], sites["lon"], sites["lat"]
    node, covered, cand = role == "node", sites["covered"], sites["candidate_covered"]
    groups = {"gateway": role == "gateway", "candidate": role == "candidate", "node": node & covered,
              "node_candidate": node & ~covered & cand, "node_uncovered": node & ~covered & ~cand}
    for z, (key, mask) in enumerate(groups.items()):
        if mask.any():
            ax.plot(lon[mask], lat[mask], ls="none", zorder=6 - 0.1 * z, gid=f"sites-{key}", **ROLE_STYLE[key])
    names = np.array(sites["name"], dtype=object)
    for chosen, style_kw, gid in ((highlight, HIGHLIGHT_STYLE, "sites-highlight"),
                                  (marked, MARKED_STYLE, "sites-marked")):
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
    arrow and scale bar boxes [axes fractions]), else wrapped, else left out (never cut).

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
    placed, order, measure = [], _label_order(sites, highlight, marked), TextMeasure(renderer)
    for i in order:
        strong = sites["role"][i] != "node"
        size = 6.8 if strong else 5.8
        spot = _free_spot(sites["label"][i], xy[i], half[i] + 2.0, taken, frame, renderer, size, strong, measure)
        if spot is None:
            continue
        text, (ox, oy), ha, va, box, far = spot
        at = dict(xy=(sites["lon"][i], sites["lat"][i]), xytext=(ox * 72.0 / dpi, oy * 72.0 / dpi),
                  textcoords="offset points")
        if far:     # the leader is an annotation of its own, so the label's extent is its text only
            ax.annotate("", **at, zorder=8, arrowprops=dict(arrowstyle="-", lw=0.5, color="0.2", shrinkA=0,
                                                            shrinkB=3))
        contain(ax.annotate(text, **at, ha=ha, va=va, fontsize=size, zorder=8, parse_math=False,
                            fontweight="bold" if strong else "normal", linespacing=1.2,
                            bbox=dict(boxstyle="square,pad=0.12", fc="white", ec="none", alpha=0.72)),
                ax, name="the map")
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


def _free_spot(name, point, gap, taken, frame, renderer, size, bold, measure=None):
    """The first of eight places around ``point`` [px], ``gap`` [px] out then farther, where the
    label overlaps nothing taken (markers included).

    Tries the name on one line, then wrapped to :data:`LABEL_WRAP_IN`.  Returns
    ``(text, (dx, dy) [px], ha, va, Bbox, far)`` or None; a far label gets a leader line.
    """
    from matplotlib.transforms import Bbox

    line_h = size * 1.2 / 72.0 * renderer.dpi
    measure = measure or TextMeasure(renderer)
    one_line = [name] if measure.estimate(name, size, bold) * renderer.dpi < frame.width else []
    for text in dict.fromkeys(one_line + [wrap_label(name, LABEL_WRAP_IN, renderer, size, bold, measure=measure)]):
        lines = text.split("\n")
        w = max(measure.exact(line, size, bold) for line in lines) * renderer.dpi
        h = line_h * len(lines) + 0.05 * size / 72.0 * renderer.dpi
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
def _draw_side(fig, box, width_in, height_in, report, sites, status, drawn, renderer, highlight, marked, paper):
    """Legend, summary table and the nodes not covered, top to bottom; returns the
    :class:`~profiler.plot.continuation.Plan` of the names left for continuation sheets."""
    from .continuation import plan

    left, bottom, w, h = box
    legend_h = 1.72 + 0.15 * (bool(highlight) + bool(marked))
    legend_ax = inch_axes(fig, (left, bottom + h - legend_h, w, legend_h), width_in, height_in)
    _draw_legend(legend_ax, report, highlight, marked)
    blocks = _summary_blocks(report, status)
    table_h = 0.165 * (len(blocks[0][2]) + 1) + 0.03
    table_ax = inch_axes(fig, (left, bottom + h - legend_h - 0.1 - table_h, w, table_h), width_in, height_in)
    draw_tables(table_ax, renderer, blocks, max_row_h=0.2)
    notes_h = h - legend_h - table_h - 0.25
    if notes_h > 0.3:
        return _draw_uncovered(inch_axes(fig, (left, bottom, w, notes_h), width_in, height_in), report, sites,
                               renderer, paper)
    return plan(renderer, paper, _uncovered_sections(report, sites))


def _draw_legend(ax, report, highlight, marked) -> None:
    """The link statuses, a candidate's link, the site roles and node states (no counts: the summary
    table has them, of every link, whichever links are drawn)."""
    from matplotlib.lines import Line2D

    fade = num(report.get("fade_margin_db"), ".1f", " dB")
    texts = {"closes": f"Closes with the fade margin (\u2265 {fade})",
             "marginal": f"Closes below the fade margin (0 to {fade})", "fails": "Fails (margin below 0 dB)",
             "error": "Not computed (error)"}
    handles = [Line2D([], [], color=STATUS_STYLE[k]["color"], lw=STATUS_STYLE[k]["lw"], ls=STATUS_STYLE[k]["ls"],
                      label=texts[k]) for k in STATUSES]
    candidates = _has_candidates(report)
    closes = STATUS_STYLE["closes"]
    if candidates:
        handles.append(Line2D([], [], color=closes["color"], lw=closes["lw"] * CANDIDATE_LINK["width"],
                              alpha=CANDIDATE_LINK["alpha"], label="Link of a candidate site: thinner, paler"))
    roles = (("gateway", "Existing gateway"), ("candidate", "Candidate site (not built)"),
             ("node", "Node covered by a gateway"), ("node_candidate", "Node covered only with a candidate"),
             ("node_uncovered", "Node not covered"))
    roles = [r for r in roles if candidates or r[0] not in ("candidate", "node_candidate")]
    handles += [Line2D([], [], ls="none", label=label, **ROLE_STYLE[key]) for key, label in roles]
    if highlight:
        handles.append(Line2D([], [], ls="none", label="Chosen site", **{**HIGHLIGHT_STYLE, "ms": 10.0}))
    if marked:
        handles.append(Line2D([], [], ls="none", label="Unreachable site", **{**MARKED_STYLE, "ms": 8.0}))
    contain(put_text(ax, 0.0, ax.get_ylim()[1], "Legend", ha="left", va="top", fontsize=7.5, fontweight="bold"), ax)
    legend = sheet_legend(ax, handles, loc="upper left", bbox_to_anchor=(0.0, 0.92), ncol=1, handlelength=3.2,
                          labelspacing=0.4, fontsize=6.8)
    for text in legend.get_texts() if legend is not None else ():
        contain(text, ax, name="the legend panel")


def _summary_blocks(report, status) -> list:
    """The summary table: the report's ``summary`` counts (existing gateways and candidates apart) and
    the links by status."""
    summary = report.get("summary") or {}
    total = num(summary.get("nodes_total"), "d")
    rows = [
        ("Existing gateways", num(summary.get("gateways"), "d")),
        ("Candidate sites", num(summary.get("candidates"), "d")),
        ("Nodes", total),
        ("Covered by gateways", f"{_covered_by_gateways(summary)} of {total} nodes"),
        ("Twice by gateways", f"{num(summary.get('nodes_covered_twice'), 'd')} of {total} nodes"),
        ("Covered with candidates", f"{num(summary.get('nodes_covered_with_candidates'), 'd')} of {total} nodes"),
        ("Links computed", num(summary.get("links"), "d")),
        ("Closing (\u2265 fade margin)", num(summary.get("closing"), "d")),
        ("Below the fade margin", f"{status.count('marginal')}"),
        ("Failing", f"{status.count('fails')}"),
        ("Errors", num(summary.get("errors"), "d")),
        ("Band / frequency",
         f"{clean(report.get('band') or DASH)} / {num(report.get('frequency_mhz'), '.4f', ' MHz')}"),
        ("k-factor", k_text(report.get("k_factor"))),
    ]
    return [("Summary", None, rows)]


#: Font sizes [pt] of the names of the nodes not covered: wrapped at the first, shrunk to the second
#: (the smallest) when they do not fit; what still does not fit continues on a continuation sheet.
NAME_LIST_PT = (6.5, 5.6)


def _name_lines(names, width, renderer, room, size, measure=None) -> tuple[list[str], list]:
    """The names, comma-separated, wrapped to ``width`` [in] at ``size`` [pt], in at most ``room``
    lines: whole names only, then a last line counting the rest (:func:`_more_line`).  Returns the
    lines and the names left for a continuation sheet."""
    body = wrap_label(", ".join(names) if names else "none", width, renderer, size, measure=measure).split("\n")
    if len(body) <= room:
        return body, []
    shown = []
    for k, name in enumerate(names):               # whole names only, then the count of the rest
        wrapped = wrap_label(name + ",", width, renderer, size, measure=measure).split("\n")
        if len(shown) + len(wrapped) > room - 1:
            return shown + [_more_line(len(names) - k, 2)], list(names[k:])
        shown += wrapped
    return shown, []


def _more_line(n: int, sheet_no: int) -> str:
    return f"{EN} and {n} more: continued on sheet {sheet_no}"


def _uncovered_sections(report, sites) -> list:
    """``(heading, names)``: the nodes no existing gateway hears with the fade margin, then (with
    candidate sites) those no candidate hears either."""
    node = sites["role"] == "node"
    by_gateways = [sites["label"][i] for i in np.flatnonzero(node & ~sites["covered"])]
    at_all = [sites["label"][i] for i in np.flatnonzero(node & ~sites["covered"] & ~sites["candidate_covered"])]
    sections = [(f"Nodes not covered by gateways ({len(by_gateways)})", by_gateways)]
    if _has_candidates(report):
        sections.append((f"Not covered even with candidates ({len(at_all)})", at_all))
    return sections


def _draw_uncovered(ax, report, sites, renderer, paper):
    """The nodes no existing gateway hears with the fade margin, then those no candidate hears either;
    names wrapped, shrunk down to ``NAME_LIST_PT[-1]`` (5.6 pt) when needed, never cut; the names that
    still do not fit continue on continuation sheets, a last line saying how many and on which sheet.
    Returns their :class:`~profiler.plot.continuation.Plan`."""
    from .continuation import plan

    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    sections = _uncovered_sections(report, sites)
    title_h, gap, measure = 0.16, 0.06, TextMeasure(renderer)
    for size in NAME_LIST_PT:
        line_h = size * 1.25 / 72.0
        total = int((height - len(sections) * (title_h + gap)) / line_h)
        blocks, rest, left = [], [], total
        for k, (title, names) in enumerate(sections):     # the later sections keep one line each
            lines, more = _name_lines(names, width, renderer, max(left - (len(sections) - 1 - k), 1), size, measure)
            blocks.append((title, lines))
            rest.append((title, more))
            left -= len(lines)
        if not any(more for _, more in rest):
            break
    layout = plan(renderer, paper, rest)
    for k, (_, more) in enumerate(rest):            # the sheet each list continues on, from the plan
        if more:
            blocks[k][1][-1] = _more_line(len(more), layout.first_sheet[k])
    y = height
    for title, lines in blocks:
        contain(put_text(ax, 0.0, y, title, ha="left", va="top", fontsize=7.0, fontweight="bold"), ax)
        y -= title_h
        contain(put_text(ax, 0.0, y, "\n".join(lines), ha="left", va="top", fontsize=size, color="0.15",
                         linespacing=1.25 / 1.2), ax)
        y -= line_h * len(lines) + gap
    return layout
