"""The mast sheet: link margin and worst clearance ratio against mast height, in the sheet family's style.

Drawn from the ``profiler.mast/4`` report (``MastResult.to_dict()``): two
panels sharing the height axis (margin above, clearance ratios below), the
required margin and clearance as dotted lines, the chosen height marked
with its label above the panel, the recommended data rate written beside
the margin curve with the reason for each drop (a taller mast lets a
faster, less sensitive data rate close, so the margin at the recommended
rate can fall while the path improves).  Labels and legends are placed off
every curve (:mod:`profiler.plot.mast_labels`).

The result table says the whole answer: the required heights, the binding
criterion and obstruction, the state at that height and what each extra
metre buys; with ``--solve both`` also the cheapest split (heights at A and
B and their total); and when no height up to the limit works, that no mast
up to the limit works, the height the binding criterion would need (when
known), the binding obstruction and the best achievable value at the
limit.  Every number is the report's, formatted as the text summary does
(heights rounded up to the centimetre; no negative zero).

The header title wraps and shrinks (15 pt down to 7 pt, the header growing
when needed), the x-axis label drops the site name rather than run past
the panel, and the lower-right title block grows to hold long names: no
text is cut.  The table, the title block and the notes come from
:mod:`profiler.plot.sheet` and :mod:`profiler.plot.titleblock`.
"""

from __future__ import annotations

from ..io.report import model_line
from ..products.mast.result import fixed, up_text
from .mast_labels import place_off_lines
from .sheet import (
    BADGE_BAD,
    BADGE_GOOD,
    DASH,
    EN,
    MIDDOT,
    clean,
    draw_title_block,
    ends_located,
    fraction,
    inch_axes,
    k_text,
    new_sheet,
    site_name,
    source_text,
    style,
    text_width_in,
    wrap_text,
    write_sheet,
)
from .tables import draw_tables
from .titleblock import draw_notes, draw_title_box, provenance_lines, title_block_rows

__all__ = ["write_mast_figure", "build_mast_figure", "rate_changes", "rate_label", "value_text", "height_text"]

#: Sizes tried for the header title [pt], largest first; 7 pt is the least.
TITLE_SIZES_PT = (15.0, 13.0, 11.0, 10.0, 9.0, 8.0, 7.0)
HEADER_IN = 0.66          # header band height when the title fits on it [in]
SUBTITLE_IN = 0.24        # room kept under the title for the subtitle [in]
TITLE_BOX_IN = 1.6        # lower-right title block height unless long names need more [in]


def write_mast_figure(report: dict, path, paper: str = "a4", dpi: int = 200, *, sheet_no: int = 1,
                      sheet_count: int = 1) -> None:
    """Draw the mast sheet and write it atomically to ``path`` (PNG, PDF or SVG by extension)."""
    title = f"Mast height: {site_name(report['site_a'])} {EN} {site_name(report['site_b'])}"
    write_sheet(path, paper, dpi, lambda: build_mast_figure(report, paper, sheet_no=sheet_no,
                                                            sheet_count=sheet_count), title, report)


def value_text(value, spec: str, unit: str = "") -> str:
    """A number as the sheet prints it: ``spec``, a true minus sign, never a negative zero; a dash if missing."""
    if value is None:
        return DASH
    return fixed(float(value), spec).replace("-", "\u2212") + unit


def height_text(value_m) -> str:
    """A height rounded up to the centimetre (as the text summary), with its unit; a dash if missing."""
    return DASH if value_m is None else up_text(value_m).replace("-", "\u2212") + " m"


def _heights(report):
    solve, rows = report["solve"], report["table"]
    if solve == "both":
        return ([r["mast_a_m"] - report["site_a"]["mast_m"] for r in rows], "height added at both ends [m]",
                report["added_height_m"])
    key = f"mast_{solve}_m"
    return [r[key] for r in rows], None, report[f"required_{key}"]


def rate_label(row) -> str:
    """``DR5 SF7/125`` of a table row ("" without a LoRa rate)."""
    if row.get("sf") is None:
        return ""
    rate = f"SF{row['sf']}/{row['bw_khz']:g}"
    return rate if row.get("dr") is None else f"DR{row['dr']} {rate}"


def rate_changes(rows) -> list[tuple[int, str]]:
    """Indices where the recommended rate changes, with the reason text (a drop in margin explained)."""
    out = []
    for i in range(1, len(rows)):
        before, after = rate_label(rows[i - 1]), rate_label(rows[i])
        if before == after:
            continue
        drop = rows[i]["margin_db"] is not None and rows[i - 1]["margin_db"] is not None and \
            rows[i]["margin_db"] < rows[i - 1]["margin_db"] - 1e-6
        reason = (f"{before} \u2192 {after}: faster rate now closes, so the margin at it is lower" if drop
                  else f"{before} \u2192 {after}")
        out.append((i, reason))
    return out


def build_mast_figure(report: dict, paper: str = "a4", *, sheet_no: int = 1, sheet_count: int = 1):
    """The mast sheet as a :class:`matplotlib.figure.Figure` (Agg canvas, 100 dpi)."""
    with style():
        fig, renderer, width_in, height_in = new_sheet(paper)
        margin, block_w = 0.38, 3.05
        left_w = width_in - 2 * margin - block_w - 0.25
        badge, badge_style = _badge(report)
        header_h = _header_height(report, badge, width_in - 2 * margin, renderer)
        header = inch_axes(fig, (margin, height_in - margin - header_h, width_in - 2 * margin, header_h),
                           width_in, height_in)
        _header(header, report, renderer, badge, badge_style)
        _contain_texts(header, "the header")
        top = height_in - margin - header_h - 0.45
        bottom = margin + 1.25
        panel_h = (top - bottom - 0.35) / 2
        left = margin + 0.6
        ax_c = fig.add_axes(fraction((left, bottom, left_w - 0.6, panel_h), width_in, height_in))
        ax_m = fig.add_axes(fraction((left, bottom + panel_h + 0.35, left_w - 0.6, panel_h), width_in, height_in),
                            sharex=ax_c)
        _panels(ax_m, ax_c, report, renderer, left_w - 0.6)
        right = width_in - margin - block_w
        box_h = _title_box(fig, report, renderer, (right, margin, block_w), width_in, height_in,
                           sheet_no, sheet_count)
        table_bottom, rows = margin + box_h + 0.15, result_rows(report)
        draw_tables(inch_axes(fig, (right, table_bottom, block_w, top + 0.3 - table_bottom), width_in, height_in),
                    renderer, [("Result", None, rows)], max_row_h=0.2, wrap_rows=[label for label, _ in rows])
        source = source_text(report.get("dem"), None, ends_located(report))   # no profile samples in the report
        notes = inch_axes(fig, (margin, margin, left_w, 0.8), width_in, height_in)
        draw_notes(notes, renderer, provenance_lines(report, source))
        _contain_texts(notes, "the notes")
    return fig


def _contain_texts(ax, name, kind=None):
    """Mark every text of ``ax`` (of class ``kind`` if given) to stay inside it (checked by
    :func:`profiler.plot.audit.layout_problems`)."""
    from .audit import contain

    for text in ax.texts:
        if kind is None or isinstance(text, kind):
            contain(text, ax, name=name)


def _title_box(fig, report, renderer, place, width_in, height_in, sheet_no, sheet_count) -> float:
    """The lower-right title block, grown upwards when long names need more than :data:`TITLE_BOX_IN`."""
    right, bottom, block_w = place
    name = f"Mast height {site_name(report['site_a'])} {EN} {site_name(report['site_b'])}"
    name = _break_long_words(name, block_w - 0.1, renderer, 7.0)     # its cells wrap at spaces only
    rows = title_block_rows(report.get("sheet"), name, report, sheet_no, sheet_count)
    ax = inch_axes(fig, (right, bottom, block_w, TITLE_BOX_IN), width_in, height_in)
    used = draw_title_box(ax, renderer, rows)
    if used > TITLE_BOX_IN + 1e-6:
        ax.remove()
        ax = inch_axes(fig, (right, bottom, block_w, used + 0.02), width_in, height_in)
        draw_title_box(ax, renderer, rows)
    _contain_texts(ax, "the title block")
    return used + 0.02 if used > TITLE_BOX_IN + 1e-6 else TITLE_BOX_IN


def _badge(report):
    if report["feasible"]:
        _, _, chosen = _heights(report)
        what = "add" if report["solve"] == "both" else "mast"
        return f"{what} {height_text(chosen)} ({clean(report['binding']['criterion'])})", BADGE_GOOD
    return f"NO mast up to {report['max_mast_m']:g} m {_where(report)} works", BADGE_BAD


def _where(report) -> str:
    return {"a": "at A", "b": "at B", "both": "at both ends"}[report["solve"]]


def _title_lines(title, room_in, height_in, renderer, sizes=TITLE_SIZES_PT):
    """(lines, size, fits): the title wrapped at the largest of ``sizes`` [pt] whose lines fit
    ``room_in`` x ``height_in``, else at the least size (``fits`` False).

    A size at which the longest words alone are wider than ``room_in`` is skipped unmeasured; at the
    least size such a word is broken into pieces that fit (a name without spaces is not cut either).
    """
    longest = sorted(set(title.split()), key=len)[-3:]
    for size in sizes:
        if any(text_width_in(renderer, word, size, True) > room_in for word in longest):
            continue
        lines = wrap_text(title, room_in, renderer, size, bold=True)
        if len(lines) * size * 1.3 / 72.0 <= height_in and \
                all(text_width_in(renderer, line, size, True) <= room_in for line in lines):
            return lines, size, True
    size = sizes[-1]
    return wrap_text(_break_long_words(title, room_in, renderer, size), room_in, renderer, size, bold=True), size, False


def _break_long_words(text, room_in, renderer, size) -> str:
    """``text`` with every word wider than ``room_in`` at ``size`` [pt] split into pieces as wide as fit
    (each then fills a line of its own when wrapped)."""
    def pieces(word):
        while text_width_in(renderer, word, size, True) > room_in:
            lo, hi = 1, len(word) - 1
            while lo < hi:               # the longest prefix that fits
                mid = (lo + hi + 1) // 2
                lo, hi = (mid, hi) if text_width_in(renderer, word[:mid], size, True) <= room_in else (lo, mid - 1)
            yield word[:lo]
            word = word[lo:]
        yield word

    return " ".join(" ".join(pieces(word)) for word in text.split())


def _header_height(report, badge, width_in, renderer) -> float:
    """Header band height [in]: :data:`HEADER_IN`, or taller when the title needs more lines at 9 pt."""
    room = width_in - text_width_in(renderer, badge, 9.5, True) - 2 * 0.45 * 9.5 / 72.0 - 0.75
    title = f"{site_name(report['site_a'])} {EN} {site_name(report['site_b'])}"
    if _title_lines(title, room, HEADER_IN - 0.02 - SUBTITLE_IN, renderer, TITLE_SIZES_PT[:5])[2]:
        return HEADER_IN
    lines, size, _ = _title_lines(title, room, 100.0, renderer, (9.0, 8.0, 7.0))    # as tall as needed
    return 0.02 + len(lines) * size * 1.3 / 72.0 + SUBTITLE_IN + 0.02


def _header(ax, report, renderer, badge, badge_style):
    a, b = site_name(report["site_a"]), site_name(report["site_b"])
    band = f" ({clean(report['band'])})" if report.get("band") else ""
    solve = "both ends" if report["solve"] == "both" else f"mast {report['solve'].upper()}"
    sub = f"  {MIDDOT}  ".join(["Lowest mast meeting every criterion",
                                value_text(report["distance_m"] / 1000.0, ".3f", " km"),
                                value_text(report["frequency_mhz"], ".4f", " MHz") + band, f"solving {solve}"])
    height = ax.get_ylim()[1]

    def fit_title(artist, room_in):      # wrap, then shrink down to 7 pt: never cut
        lines, size, _ = _title_lines(artist.get_text(), room_in, height - 0.02 - SUBTITLE_IN, renderer)
        artist.set_text("\n".join(lines))
        artist.set_fontsize(size)
        artist.set_linespacing(1.05)

    draw_title_block(ax, renderer, f"{a} {EN} {b}", sub, badge, badge_style, badge_label="RESULT",
                     fit_title=fit_title, note=clean(model_line(report)))


def _xlabel(report, renderer, width_in) -> str:
    """The height axis label, naming the raised site when the name fits on one line at 8 pt."""
    solve = report["solve"]
    x, label, _ = _heights(report)
    if label is not None:
        return label
    name = site_name(report["site_" + solve])
    full = f"mast at {solve.upper()} ({name}) [m]"
    if name == solve.upper() or text_width_in(renderer, full, 8.0) > width_in:
        return f"mast at {solve.upper()} [m]"
    return full


def _panels(ax_m, ax_c, report, renderer, width_in):
    from matplotlib.text import Annotation

    rows = report["table"]
    x, _, chosen = _heights(report)
    margin = [r["margin_db"] for r in rows]
    ax_m.plot(x, margin, "o-", ms=2.5, color="black", lw=1.1, label="margin at the recommended data rate")
    ax_c.plot(x, [r["worst_ratio"] for r in rows], "o-", ms=2.5, color="black", lw=1.1,
              label="worst clearance / F1 (k)")
    ax_c.plot(x, [r["worst_ratio_low_k"] for r in rows], "s--", ms=2.5, color="0.4", lw=1.0,
              label="worst clearance / F1 (low k)")
    for c in report["criteria"]:
        if c["criterion"] == "margin":
            ax_m.axhline(c["min_margin_db"], color="#b03030", lw=1, ls=":", label=f"required {c['min_margin_db']:g} dB")
        else:
            ax_c.axhline(c["clearance_ratio"], color="#b03030" if c["criterion"] == "clearance" else "#3050b0",
                         lw=1, ls=":", label=f"required {c['clearance_ratio']:g} F1 at k = {k_text(c['k_factor'])}")
    feasible = report["feasible"] and chosen is not None
    if feasible:
        for ax in (ax_m, ax_c):
            ax.axvline(chosen, color="0.1", lw=1.0, ls="-.", label="chosen height" if ax is ax_c else None)
    labels = _rate_labels(ax_m, x, margin, rows)
    ax_m.set_ylabel("link margin [dB]")
    ax_c.set_ylabel("clearance / F1")
    ax_c.set_xlabel(_xlabel(report, renderer, width_in), parse_math=False)
    legend_kw = dict(fontsize=6.5, frameon=True, framealpha=0.95)
    label_kw = dict(fontsize=6, color="0.15", bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.85))
    for ax, panel_labels in ((ax_m, labels), (ax_c, [])):
        ax.grid(True, alpha=0.3, lw=0.5)
        place_off_lines(ax, renderer, panel_labels, legend_kw, label_kw)
        _contain_texts(ax, "its panel", Annotation)      # the data labels (the note under the panel is not one)
    ax_m.tick_params(labelbottom=False)
    if feasible:
        _chosen_label(ax_m, renderer, chosen, report)


def _chosen_label(ax, renderer, chosen, report):
    """The chosen height written above the panel over its line, kept within the panel's width."""
    ann = ax.annotate(f"chosen {height_text(chosen)} ({clean(report['binding']['criterion'])})", (chosen, 1.0),
                      xycoords=("data", "axes fraction"), xytext=(0, 3), textcoords="offset points", fontsize=7,
                      ha="center", va="bottom", fontweight="bold", parse_math=False, annotation_clip=False)
    box, panel = ann.get_window_extent(renderer), ax.get_window_extent()
    shift = min(0.0, panel.x1 - box.x1) + max(0.0, panel.x0 - box.x0)
    ann.set_position((shift * 72.0 / ax.figure.dpi, 3))


def _rate_labels(ax, x, margin, rows):
    """The data rate at the first height and at each change (a drop marked with an arrow), as
    ``[(text, (x, y))]``; one note under the panel gives the reason for the drops."""
    if not rows or rows[0].get("sf") is None:
        return []
    changes = rate_changes(rows)
    labels = [(rate_label(rows[0]), (x[0], margin[0]))]
    for i, reason in changes[:8]:
        labels.append((("\u2193 " if "lower" in reason else "") + rate_label(rows[i]), (x[i], margin[i])))
    if any("lower" in reason for _, reason in changes):
        ax.margins(y=0.15)
        ax.text(0.0, -0.03, "\u2193 margin drops where a taller mast lets a faster (less sensitive) data rate "
                "close: the margin is counted at the recommended rate", transform=ax.transAxes, fontsize=6.3,
                color="0.1", ha="left", va="top", parse_math=False)
    return [(text, xy) for text, xy in labels if xy[1] is not None]


def result_rows(report) -> list[tuple[str, str]]:
    """The rows of the sheet's result table: ``[(label, value), ...]``, every number from ``report``."""
    rows = _feasible_rows(report) if report["feasible"] else _infeasible_rows(report)
    rows += _split_rows(report)
    rows += [("Diffraction method", clean(report.get("diffraction_method") or "")),
             ("Elevation", "surveyed profile" if (report.get("dem") or {}).get("kind") == "surveyed" else "DEM")]
    for c in report["criteria"]:
        if c["criterion"] == "margin":
            rows.append(("Criterion", f"margin \u2265 {c['min_margin_db']:g} dB"))
        else:
            rows.append(("Criterion", f"clearance \u2265 {c['clearance_ratio']:g} F1, k = {k_text(c['k_factor'])}"))
    return rows


def _mast_rows(report, masts):
    """Mast A and mast B of a state (``masts`` holds ``mast_a_m`` / ``mast_b_m``); the end not solved is given."""
    solve = report["solve"]
    return [(f"Mast {end.upper()}", height_text(masts.get(f"mast_{end}_m"))
             + (" (given)" if solve not in (end, "both") else "")) for end in ("a", "b")]


def _obstruction(report) -> list[tuple[str, str]]:
    bind = report.get("binding") or {}
    if bind.get("criterion") in (None, "none") or bind.get("distance_m") is None:
        return []
    return [("Binding obstruction", f"{value_text(bind['distance_m'] / 1000.0, '.3f', ' km')} from A, terrain "
                                    f"{value_text(bind['terrain_m'], '.1f', ' m')}")]


def _feasible_rows(report):
    at = report.get("at_required") or {}
    pm = report.get("per_extra_metre") or {}
    required = {key: report.get(f"required_{key}") for key in ("mast_a_m", "mast_b_m")}
    rows = [(f"Required m{label[1:]}", value) for label, value in _mast_rows(report, required)]
    if report["solve"] == "both":
        rows.append(("Added at both ends", height_text(report.get("added_height_m"))))
    low = at.get("worst_ratio_low_k")
    rows += [("Binding criterion", clean((report.get("binding") or {}).get("criterion") or DASH)),
             *_obstruction(report),
             ("Worst clearance", value_text(at.get("worst_ratio"), ".2f", " F1")
              + ("" if low is None else f", low k {value_text(low, '.2f', ' F1')}")),
             ("Diffraction loss", value_text(at.get("diffraction_db"), ".1f", " dB")),
             ("Margin", value_text(at.get("margin_db"), "+.1f", " dB")),
             ("Data rate", rate_label(at) or DASH)]
    if pm:
        rows.append(("Each extra metre", f"margin {value_text(pm.get('margin_db_per_m'), '+.2f', ' dB/m')}, "
                                         f"clearance {value_text(pm.get('worst_ratio_per_m'), '+.3f', ' F1/m')}"))
    return rows


def _infeasible_rows(report):
    """No height works: say so, the height needed (when known), the obstruction and the best achievable."""
    bind, best = report.get("binding") or {}, report.get("best_achievable") or {}
    criterion = bind.get("criterion")
    crit = next((c for c in report["criteria"] if c["criterion"] == criterion), {})
    rows = [("Result", f"NO mast up to {report['max_mast_m']:g} m {_where(report)} meets every criterion"),
            ("Height needed", _needed_text(report, crit)),
            ("Binding criterion", clean(criterion or DASH)),
            *_obstruction(report)]
    if criterion == "margin":
        value = (f"margin {value_text(best.get('margin_db'), '+.1f', ' dB')} "
                 f"(need {value_text(crit.get('min_margin_db'), 'g', ' dB')})")
    else:
        ratio = best.get("worst_ratio_low_k" if criterion == "clearance_low_k" else "worst_ratio")
        value = (f"worst clearance {value_text(ratio, '.2f', ' F1')} "
                 f"(need {value_text(crit.get('clearance_ratio'), 'g', ' F1')})")
    rows += [("Best achievable", value)]
    rows += [(f"{label} there", text) for label, text in _mast_rows(report, best)]
    rows += [("Margin there", value_text(best.get("margin_db"), "+.1f", " dB")
              + (f", {rate_label(best)}" if rate_label(best) else "")),
             ("Diffraction there", value_text(best.get("diffraction_db"), ".1f", " dB"))]
    return rows


def _needed_text(report, crit) -> str:
    """The height the binding clearance criterion needs (beyond the limit); unknown for the margin."""
    solve = report["solve"]
    if crit.get("criterion") in ("clearance", "clearance_low_k") and crit.get("required_mast_a_m") is not None:
        if solve == "both":
            added = crit["required_mast_a_m"] - report["site_a"]["mast_m"]
            return (f"{height_text(added)} added at both ends (A {height_text(crit['required_mast_a_m'])}, "
                    f"B {height_text(crit['required_mast_b_m'])})")
        return f"{height_text(crit[f'required_mast_{solve}_m'])} at {solve.upper()}"
    return f"not known: beyond the {report['max_mast_m']:g} m limit (not searched above it)"


def _split_rows(report):
    """With ``--solve both``: the cheapest split (least total height), its parts adding up to the total shown."""
    split = report.get("cheapest_split")
    if report["solve"] != "both":
        return []
    if split is None:
        return [("Cheapest split", f"none up to {report['max_mast_m']:g} m")]
    a, b = up_text(split["mast_a_m"]), up_text(split["mast_b_m"])
    rows = [("Cheapest split", f"A {height_text(split['mast_a_m'])} + B {height_text(split['mast_b_m'])}"),
            ("Split total", f"{value_text(float(a) + float(b), '.2f', ' m')} of mast (least total height)")]
    if report["feasible"]:
        equal = float(up_text(report["required_mast_a_m"])) + float(up_text(report["required_mast_b_m"]))
        rows.append(("Equal raise total", value_text(equal, ".2f", " m")))
    return rows
