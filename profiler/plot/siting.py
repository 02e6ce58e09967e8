"""The gateway siting sheet: the chosen sites, the links they serve, the proof and the greedy comparison.

:func:`write_siting_figure` draws one landscape sheet from the
``profiler.siting/4`` report and the ``profiler.network/5`` report it was
solved over:

* the map (the network map's relief, markers, north arrow, scale bar and
  name placement, :mod:`profiler.plot.network`), with links drawn only from
  the chosen sites to the nodes they hear: each node's best server solid
  (thinner and paler from a candidate site, as on the network map), the
  other chosen sites that hear it thin, dotted and grey; chosen sites
  ringed, sites not chosen without links, unreachable nodes crossed;
* the header: the nodes heard R times out of all, as in ``summary``;
* the side column: the legend, the solution (objective, whether it is
  proven optimal and the gap, the greedy objective, the redundancy asked
  for, the counts of ``summary``), then the chosen sites with their cost,
  the greedy choice and the unreachable nodes with their reason;
* the title block (lower right) and the notes naming the
  ``profiler.siting/4`` report, the elevation data, the warnings and the
  caution.

Every count on the sheet is read from the siting report, so the sheet and
the JSON beside it agree.  Nothing is cut: the lists are wrapped (a word
longer than the column is broken between characters), the font shrinks
from 6.5 pt to :data:`MIN_FONT_PT` (5 pt), and the entries that still do not
fit continue on continuation sheets (:mod:`profiler.plot.continuation`), a
last line saying how many and on which sheet.  A map name that the
network map's placement shortened is replaced by the site's row in the site
list (``[6]``); the lists use that number and end with the full names.
"""

from __future__ import annotations

import numpy as np

from ..io.report import model_line
from . import audit
from .sheet import (
    BADGE_BAD,
    BADGE_GOOD,
    BADGE_WARN,
    ELLIPSIS,
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

__all__ = ["build_siting_figure", "build_siting_sheets", "write_siting_figure", "served_links", "MIN_FONT_PT"]

#: Smallest font of the side lists [pt]; what does not fit at it continues on a continuation sheet.
MIN_FONT_PT = 5.0

#: Font of the notes under the map [pt] (as ``titleblock.draw_notes``).
NOTES_PT = 6.0


# --------------------------------------------------------------------------- public API
def write_siting_figure(siting: dict, network: dict, path, paper: str = "a4", dpi: float = 150, dem_paths=None, *,
                        sheet: dict | None = None, date_text: str | None = None, files=None) -> None:
    """Draw the siting sheet and write it to ``path`` (PNG, PDF or SVG by extension).

    Parameters
    ----------
    siting : dict
        The ``profiler.siting/4`` report.
    network : dict
        The ``profiler.network/5`` report it was solved over (site positions, links).
    path : str or os.PathLike
        ``.png``, ``.pdf`` or ``.svg``; written atomically.
    paper : {"a4", "letter"}
    dpi : float
        Resolution [dots per inch] of a PNG and of the hillshade in a PDF or SVG.
    dem_paths : list, optional
        Elevation files or folders for the hillshade.
    sheet : dict, optional
        Title-block fields (``SheetInfo.to_dict()`` plus ``date``).
    date_text : str, optional
        Date on the sheet; default ``sheet["date"]``, else today.
    files : profiler.io.outputs.ExtraFiles, optional
        The run's transaction, for the continuation sheets of a PNG or SVG (:func:`~profiler.plot.sheet.write_sheet`).
    """
    # Laid out at 100 dpi, as the network map whose drawing it reuses (and as the layout audit checks it).
    write_sheet(path, paper, dpi, lambda: build_siting_sheets(
        siting, network, paper=paper, dem_paths=dem_paths, sheet=sheet, date_text=date_text),
        f"Gateway siting: {_title(siting)}", siting, files)


def build_siting_figure(siting: dict, network: dict, paper: str = "a4", dem_paths=None, *, sheet: dict | None = None,
                        date_text: str | None = None, dpi: float = 100.0):
    """The siting sheet as a :class:`matplotlib.figure.Figure` (the first of :func:`build_siting_sheets`)."""
    return build_siting_sheets(siting, network, paper, dem_paths, sheet=sheet, date_text=date_text, dpi=dpi)[0]


def build_siting_sheets(siting: dict, network: dict, paper: str = "a4", dem_paths=None, *, sheet: dict | None = None,
                        date_text: str | None = None, dpi: float = 100.0) -> list:
    """Build the siting sheet and its continuation sheets (the list entries it has no room for) as Figures.

    Parameters are those of :func:`write_siting_figure`.  The map axes has
    the label ``"siting-map"``; the best-server links are the collections
    with gid ``links-closes`` (from existing gateways) and
    ``candidate-links-closes`` (from chosen candidate sites, thinner and
    paler as on the network map), the other links used ``links-error`` and
    ``candidate-links-error`` (the network map's faint style).
    """
    from . import network as netmap
    from .continuation import continuation_figures, plan

    served = served_links(siting)
    with style():
        fig, renderer, width_in, height_in = new_sheet(paper, dpi)
        side_w = 3.7 - 0.5 * max(0.0, 11.69 - width_in)
        notes = _note_lines(siting, network)
        notes_h = _notes_height(notes, width_in - 2 * 0.38 - side_w - 0.2, renderer)
        boxes = _layout(width_in, height_in, side_w, notes_h)
        _draw_header(inch_axes(fig, boxes["header"], width_in, height_in), siting, network, renderer)
        sites = netmap._site_table(network)
        covered = {nd["name"]: nd["covered"] for nd in siting.get("nodes") or []}
        sites["covered"] = np.array([covered.get(n, False) for n in sites["name"]], dtype=bool)
        sites["candidate_covered"] = np.zeros(len(sites["name"]), dtype=bool)    # heard R times or not
        row = {site.get("name"): k + 1 for k, site in enumerate(network.get("sites") or [])}
        sites["row"] = [row.get(n, 0) for n in sites["name"]]
        ax = fig.add_axes(fraction(boxes["map"], width_in, height_in), label="siting-map")
        map_report = {**network, "links": [{"gateway": g, "node": n, "margin_db": m} for g, n, m, _ in served]}
        status = ["closes" if best else "error" for *_, best in served]
        netmap._draw_map(ax, map_report, sites, status, np.arange(len(served)), dem_paths,
                         set(siting.get("chosen") or ()), {u["name"] for u in siting.get("unreachable") or []},
                         renderer)
        keys = _key_shortened_labels(ax, sites)
        rest = _draw_side(fig, boxes["side"], width_in, height_in, siting, served, keys, renderer)
        layout = plan(renderer, paper, rest)
        sheet = {**(sheet or {}), **({"date": date_text} if date_text else {})}
        title = f"Gateway siting: {_title(siting)}"
        draw_title_box(inch_axes(fig, boxes["title_block"], width_in, height_in), renderer,
                       title_block_rows(sheet, title, siting, 1, layout.count))
        draw_notes(inch_axes(fig, boxes["notes"], width_in, height_in), renderer, notes, fontsize=NOTES_PT)
        return [fig] + continuation_figures(layout, paper, dpi, title=title, report=siting, sheet=sheet, notes=notes)


def served_links(siting: dict) -> list[tuple]:
    """The links the sheet draws: ``(site, node, margin_db, best)`` for each chosen site hearing a node.

    From ``nodes[].heard_by`` (chosen sites that hear the node, best first),
    so exactly the links of the GeoJSON export; ``best`` marks the node's
    best server.
    """
    return [(gw, nd["name"], margin, rank == 0) for nd in siting.get("nodes") or []
            for rank, (gw, margin) in enumerate(zip(nd.get("heard_by") or [], nd.get("heard_by_margin_db") or []))]


# --------------------------------------------------------------------------- layout and header
def _layout(width_in: float, height_in: float, side_w: float, notes_h: float) -> dict:
    """Boxes (left, bottom, width, height) [in]: header, map, side column, notes, title block."""
    margin, header_h = 0.38, 0.66
    header = (margin, height_in - margin - header_h, width_in - 2 * margin, header_h)
    side_left = width_in - margin - side_w
    notes = (margin, margin, side_left - 0.2 - margin, notes_h)
    map_left, map_bottom, map_top = margin + 0.42, margin + notes_h + 0.55, header[1] - 0.28
    return {"header": header, "map": (map_left, map_bottom, side_left - 0.3 - map_left, map_top - map_bottom),
            "side": (side_left, margin + 1.6, side_w, map_top - margin - 1.6), "notes": notes,
            "title_block": (side_left, margin, side_w, 1.45)}


def _title(siting: dict) -> str:
    s = siting.get("summary") or {}
    return (f"{s.get('sites_chosen', len(siting.get('chosen') or []))} of {len(siting.get('sites') or [])} "
            f"sites chosen for {s.get('nodes_total', 0)} nodes")


def _times(r: int) -> str:
    return "once" if r == 1 else f"{r} times"


def _draw_header(ax, siting: dict, network: dict, renderer) -> None:
    s = siting.get("summary") or {}
    r = int(siting.get("redundancy") or 1)
    total, heard = s.get("nodes_total") or 0, s.get("nodes_heard") or 0
    mode = "least total cost" if siting.get("mode") == "min_cost" else \
        f"most nodes with at most {siting.get('max_gateways')} sites"
    parts = [mode, f"redundancy {r}", _rule_text(siting), _radio_text(siting, network)]
    badge = f"{heard} of {total} nodes heard {_times(r)}"
    badge_style = BADGE_GOOD if total and heard == total else (BADGE_WARN if heard else BADGE_BAD)
    # The subtitle must fit beside the badge uncut: the radio settings give way first (the notes have them).
    room = ax.get_xlim()[1] - text_width_in(renderer, badge, 9.5, True) - 0.55
    while len(parts) > 1 and text_width_in(renderer, f"  {MIDDOT}  ".join(parts), 8.5) > room:
        parts.pop()
    draw_title_block(ax, renderer, f"Gateway siting: {_title(siting)}", f"  {MIDDOT}  ".join(parts), badge,
                     badge_style, badge_label="NODES HEARD",
                     note=clean(model_line(siting if siting.get("settings") else network)))


def _rule_text(siting: dict) -> str:
    """``"heard: P ≥ 0.95"`` (and ``", margin ≥ 7.0 dB"``), or ``"least margin 10.0 dB"`` (older reports)."""
    p, margin = siting.get("min_probability"), siting.get("min_margin_db")
    if p is None:
        return f"least margin {num(margin, '.1f', ' dB')}"
    return f"heard: P ≥ {p:.2f}" + ("" if margin is None else f", margin ≥ {num(margin, '.1f', ' dB')}")


def _radio_text(siting: dict, network: dict) -> str:
    band = siting.get("band")
    return (num(siting.get("frequency_mhz"), ".4f", " MHz") + (f" ({clean(band)})" if band else "")
            + f", k = {k_text(network.get('k_factor'))}")


def _note_lines(siting: dict, network: dict) -> list[str]:
    n_links = len(network.get("links") or [])
    extra = [f"Solved over the {n_links} links computed by the network engine, from every gateway and "
             f"candidate site to every node at {_radio_text(siting, network)}; a site hears a node when an allowed "
             f"data rate closes the uplink ({_rule_text(siting)}; P: the probability over locations that the "
             "uplink keeps the fade margin). "
             "Links drawn as straight lines."]
    return provenance_lines(siting, source_text(siting.get("dem")), extra)


def _notes_height(lines, width_in: float, renderer) -> float:
    """Height [in] :func:`titleblock.draw_notes` needs for ``lines`` at :data:`NOTES_PT`."""
    line_h = NOTES_PT * 1.25 / 72.0
    lines = list(dict.fromkeys(line for line in lines if line))
    n = sum(len(wrap_text(line, width_in, renderer, NOTES_PT, bold=(i == len(lines) - 1)))
            for i, line in enumerate(lines))
    return n * line_h + 0.15 * line_h * len(lines) + 0.06


# --------------------------------------------------------------------------- map names
def _key_shortened_labels(ax, sites) -> dict:
    """Replace every map name the placement shortened (an ellipsis) by its row in the site list
    (``sites[]`` of the network report, 1-based); returns name -> number.

    The number is smaller than the shortened name, so it stays clear of
    everything the name was placed clear of.
    """
    xy = np.column_stack([sites["lon"], sites["lat"]])
    keys = {}
    for text in ax.texts:
        if ELLIPSIS not in text.get_text() or not hasattr(text, "xy"):
            continue
        i = int(np.argmin(np.hypot(*(xy - np.asarray(text.xy, dtype=float)).T)))
        keys[sites["name"][i]] = sites["row"][i]
        text.set_text(f"[{sites['row'][i]}]")
    return keys


# --------------------------------------------------------------------------- side column
def _draw_side(fig, box, width_in, height_in, siting, served, keys, renderer) -> list:
    """Legend, solution table, then the chosen sites, the greedy choice and the unreachable nodes;
    returns the sections ``(heading, entries)`` left for the continuation sheets."""
    left, bottom, w, h = box
    legend_h = 1.08
    legend_ax = inch_axes(fig, (left, bottom + h - legend_h, w, legend_h), width_in, height_in)
    _draw_legend(legend_ax, siting)
    top = h - legend_h - 0.08
    table_ax = inch_axes(fig, (left, bottom, w, top), width_in, height_in)
    rows = _solution_rows(siting, served)
    used = draw_tables(table_ax, renderer, [("Solution", None, rows)], max_row_h=0.17,
                       wrap_rows=[label for label, _ in rows])
    lists_h = top - used - 0.12
    if lists_h > 0.2:
        lists_ax = inch_axes(fig, (left, bottom, w, lists_h), width_in, height_in)
        return _draw_lists(lists_ax, renderer, _sections(siting, keys))
    return _sections(siting, keys)


def _draw_legend(ax, siting) -> None:
    from matplotlib.lines import Line2D

    from .network import CANDIDATE_LINK, HIGHLIGHT_STYLE, MARKED_STYLE, ROLE_STYLE, STATUS_STYLE

    r = int(siting.get("redundancy") or 1)
    line = {k: dict(color=STATUS_STYLE[k]["color"], lw=STATUS_STYLE[k]["lw"], ls=STATUS_STYLE[k]["ls"])
            for k in ("closes", "error")}
    pale = dict(line["closes"], lw=line["closes"]["lw"] * CANDIDATE_LINK["width"], alpha=CANDIDATE_LINK["alpha"])
    handles = [Line2D([], [], label="Best server: gateway", **line["closes"]),
               Line2D([], [], label="Best server: candidate", **pale),
               Line2D([], [], label="Other chosen site hearing it", **line["error"]),
               Line2D([], [], ls="none", label="Existing gateway", **ROLE_STYLE["gateway"]),
               Line2D([], [], ls="none", label="Candidate site", **ROLE_STYLE["candidate"]),
               Line2D([], [], ls="none", label="Chosen (ring)", **{**HIGHLIGHT_STYLE, "ms": 10.0}),
               Line2D([], [], ls="none", label=f"Node heard {_times(r)}", **ROLE_STYLE["node"]),
               Line2D([], [], ls="none", label="Node not heard" if r == 1 else "Node heard fewer times",
                      **ROLE_STYLE["node_uncovered"]),
               Line2D([], [], ls="none", label="Unreachable node", **{**MARKED_STYLE, "ms": 8.0})]
    audit.contain(put_text(ax, 0.0, ax.get_ylim()[1], "Legend", ha="left", va="top", fontsize=7.5,
                           fontweight="bold"), ax)
    legend = sheet_legend(ax, handles, loc="upper left", bbox_to_anchor=(0.0, 0.83), ncol=2, handlelength=2.6,
                          labelspacing=0.5, columnspacing=1.0, fontsize=6.4)
    for text in legend.get_texts():
        audit.contain(text, ax)


def _solution_rows(siting: dict, served) -> list[tuple[str, str]]:
    """The solution table: objective, proof and gap, greedy, redundancy and the counts of ``summary``."""
    s = siting.get("summary") or {}
    r = int(siting.get("redundancy") or 1)
    gap = siting.get("gap")
    proof = "proven optimal" if siting.get("proven_optimal") else "not proven optimal"
    proof += f", gap {gap:g}" if gap is not None else ", gap unknown"
    if not siting.get("proven_optimal"):
        proof += f" ({clean(siting.get('status') or '')})"
    greedy = siting.get("greedy") or {}
    same = sorted(greedy.get("chosen") or []) == sorted(siting.get("chosen") or [])
    best = sum(1 for *_, b in served if b)
    objective = siting.get("objective", 0)
    rows = [("Objective", f"cost {objective:g} (least)" if siting.get("mode") == "min_cost" else
             f"{objective:g} nodes heard {_times(r)} (most)"),
            ("Optimal", proof),
            ("Greedy", f"objective {greedy.get('objective', 0):g} ({'same' if same else 'other'} sites)"),
            ("Redundancy", f"{r} chosen site{'s' if r > 1 else ''} per node asked"),
            ("Heard when", _rule_text(siting).removeprefix("heard: "))]
    if siting.get("max_gateways") is not None:
        rows.append(("At most", f"{siting['max_gateways']} sites"))
    rows += [("Sites chosen", f"{s.get('sites_chosen', 0)} of {len(siting.get('sites') or [])}, "
                              f"{_count(s.get('candidates_opened', 0), 'candidate')} opened"),
             ("Total cost", f"{s.get('cost_total', 0):g}"),
             ("Nodes heard", f"{s.get('nodes_heard', 0)} of {s.get('nodes_total', 0)}, each {_times(r)}"),
             ("Unreachable", _count(s.get("nodes_unreachable", 0), "node")),
             ("Links drawn", f"{len(served)}: {best} best servers, {len(served) - best} others")]
    return rows


def _count(n: int, noun: str) -> str:
    return f"{n} {noun}{'' if n == 1 else 's'}"


def _named(name: str, keys: dict) -> str:
    """A site as the lists show it: its number when the map shows one (the full name is in the last list)."""
    return f"[{keys[name]}]" if name in keys else clean(name)


def _sections(siting: dict, keys: dict) -> list[tuple[str, list[str]]]:
    """(heading, entries) of the lists under the table, in the order drawn."""
    s = siting.get("summary") or {}
    by_name = {g["name"]: g for g in siting.get("sites") or []}
    role = {"gateway": "existing gateway", "candidate": "candidate"}
    chosen = [f"{_named(n, keys)}: {role.get(by_name.get(n, {}).get('role'), 'site')}, cost "
              f"{by_name.get(n, {}).get('cost', 0):g}, hears {_count(by_name.get(n, {}).get('nodes_heard', 0), 'node')}"
              for n in siting.get("chosen") or []]
    greedy = siting.get("greedy") or {}
    same = sorted(greedy.get("chosen") or []) == sorted(siting.get("chosen") or [])
    g_names = "the same sites as chosen" if same else \
        "; ".join(_named(n, keys) for n in greedy.get("chosen") or []) or "none"
    unreachable = []
    for u in siting.get("unreachable") or []:                  # one entry per unreachable node (output)
        reason = clean(u.get("reason") or "")
        for name in sorted(keys, key=len, reverse=True):        # numbered names in the reason, longest first
            reason = reason.replace(clean(name), f"[{keys[name]}]")
        unreachable.append(f"{_named(u['name'], keys)}: {reason}")
    sections = [(f"Chosen sites ({len(chosen)}), total cost {s.get('cost_total', 0):g}", chosen),
                (f"Greedy, for comparison: objective {greedy.get('objective', 0):g}", [g_names]),
                (f"Unreachable nodes ({len(unreachable)})", unreachable or ["none"])]
    if keys:
        sections.append(("Numbered sites (row of the site list)",
                         [f"[{k}] {clean(n)}" for n, k in sorted(keys.items(), key=lambda item: item[1])]))
    return sections


#: Sections whose entries move first to a continuation sheet when the lists do not fit: the names of numbered sites
#: (also in the site list, by row), the chosen sites (ringed and named on the map; their count and
#: total cost in the table), the greedy choice, and last the unreachable nodes (their reasons are
#: nowhere else on the sheet).
DROP_ORDER = (3, 0, 1, 2)


class _Widths:
    """Drawn widths [in] of words, each measured once.

    ``exact=False``: measured at 10 pt and scaled to the size asked (text
    width is about proportional to the font size; the rounding of glyph
    advances makes small type up to a few per cent wider), to choose the
    size quickly; ``exact=True``: measured at the size asked, for the lines
    drawn.
    """

    def __init__(self, renderer, exact: bool = False):
        self.renderer, self.exact, self.cache = renderer, exact, {}

    def __call__(self, s: str, size: float, bold: bool = False) -> float:
        ref = size if self.exact else 10.0
        if (s, bold, ref) not in self.cache:
            self.cache[s, bold, ref] = text_width_in(self.renderer, s, ref, bold)
        return self.cache[s, bold, ref] * size / ref

    def space(self, size: float, bold: bool = False) -> float:
        return self("n n", size, bold) - self("nn", size, bold)


#: Fraction of a column a wrapped line may fill (the scaled widths may be off by a little).
WIDTH_SLACK = 0.96


def _wrap(s: str, width_in: float, widths: _Widths, size: float, bold: bool = False) -> list[str]:
    """``s`` wrapped at spaces to ``width_in``; a word wider than that is broken between characters."""
    room, space = WIDTH_SLACK * width_in, widths.space(size, bold)
    lines, line, used = [], [], 0.0
    for word in s.split():
        w = widths(word, size, bold)
        if line and used + space + w > room:
            lines.append(" ".join(line))
            line, used = [], 0.0
        while w > room and len(word) > 1:              # break the word: the longest prefix that fits
            cum = np.cumsum([widths(c, size, bold) for c in word])
            k = max(1, int(np.searchsorted(cum, room, side="right")))
            lines.append(word[:k])
            word = word[k:]
            w = widths(word, size, bold)
        line.append(word)
        used = used + space + w if len(line) > 1 else w
    return lines + [" ".join(line)] if line else lines or [""]


def _list_layout(sections, width_in, widths, size):
    """Wrapped lines of every section at ``size``: [(heading lines, [entry lines, ...]), ...]."""
    indent = 0.1
    return [(_wrap(head, width_in, widths, size + 0.8, True),
             [_wrap(entry, width_in - indent, widths, size) for entry in entries])
            for head, entries in sections]


def _lines_height(layout, size) -> float:
    line_h = size * 1.25 / 72.0
    head_h = (size + 0.8) * 1.25 / 72.0
    return sum(len(head) * head_h + sum(len(e) for e in entries) * line_h + 0.6 * line_h for head, entries in layout)


def _draw_lists(ax, renderer, sections) -> list:
    """The lists, wrapped; the font shrinks to :data:`MIN_FONT_PT`, then the last entries of the lists
    (in :data:`DROP_ORDER`) move to sheet 2, a line under each list saying how many of its entries
    ("and 5 more: continued on sheet 2"); returns the sections moved ``(heading, entries)``."""
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    widths = _Widths(renderer)
    size = 6.5
    layout = _list_layout(sections, width, widths, size)
    while _lines_height(layout, size) > height and size > MIN_FONT_PT:
        size = max(MIN_FONT_PT, size - 0.25)
        layout = _list_layout(sections, width, widths, size)
    widths = _Widths(renderer, exact=True)            # the lines drawn: wrapped with widths at their size
    layout = _list_layout(sections, width, widths, size)
    line_h = size * 1.25 / 72.0

    def notes():                                    # per list, the line saying how many moved
        return [_wrap(f"and {len(all_) - len(kept)} more: continued on sheet 2", width, widths, size)
                if len(kept) < len(all_) else [] for (_, all_), (_, kept) in zip(sections, layout)]

    while (_lines_height(layout, size) + sum(map(len, notes())) * line_h > height
           and any(e for _, e in layout)):
        k = next(i for i in DROP_ORDER if i < len(layout) and layout[i][1])
        layout[k][1].pop()              # the last entry of the least needed list: to the continuation sheet
    head_h = (size + 0.8) * 1.25 / 72.0
    y = height
    for (head, entries), note in zip(layout, notes()):
        for line in head:
            audit.contain(put_text(ax, 0.0, y, line, ha="left", va="top", fontsize=size + 0.8, fontweight="bold"), ax)
            y -= head_h
        for entry in entries:
            for j, line in enumerate(entry):
                audit.contain(put_text(ax, 0.0 if j == 0 else 0.1, y, line, ha="left", va="top", fontsize=size,
                                       color="0.1"), ax)
                y -= line_h
        for line in note:
            audit.contain(put_text(ax, 0.0, y, line, ha="left", va="top", fontsize=size, fontstyle="italic"), ax)
            y -= line_h
        y -= 0.6 * line_h
    return [(head, entries[len(kept):]) for (head, entries), (_, kept) in zip(sections, layout)
            if len(kept) < len(entries)]
