"""The sheet family's title block (lower right) and provenance notes.

:func:`title_block_rows` turns the report's ``sheet`` block (project,
document, revision, prepared by, checked by, organisation, notes, date)
into labelled cells; :func:`draw_title_box` draws them ruled, wrapped and
never cut, empty fields as blank boxes to fill by hand.
:func:`provenance_lines` gives the notes every sheet prints (elevation
files, datums, extras, tool and warnings, the caution) and
:func:`draw_notes` draws them wrapped.  matplotlib is imported only inside
functions.
"""

from __future__ import annotations

import datetime

from ..about import CAUTION, __version__
from ..errors import ProfilerError
from . import audit
from .sheet import MIDDOT, clean, draw_stacked, put_text
from .textfit import MIN_FONT_PT, Measure, largest_size, wrap_lines

__all__ = ["title_block_rows", "draw_title_box", "title_box_height", "draw_notes", "provenance_lines", "datum_line"]


# --------------------------------------------------------------------------- title block (lower right)
def title_block_rows(sheet: dict | None, title: str, report: dict, sheet_no: int = 1, sheet_count: int = 1):
    """The cells of the lower-right title block: ``[[(label, value), ...], ...]`` row by row.

    ``sheet`` is the report's ``sheet`` block (project, document, revision,
    prepared_by, checked_by, organisation, notes, date); missing or empty
    fields stay empty, drawn as blank boxes to fill by hand.
    """
    s = {k: clean(v) for k, v in (sheet or {}).items() if isinstance(v, str)}
    rows = [[("Title", clean(title))],
            [("Project", s.get("project", ""))],
            [("Organisation", s.get("organisation", ""))],
            [("Document", s.get("document", "")), ("Revision", s.get("revision", ""))],
            [("Prepared by", s.get("prepared_by", "")), ("Checked by", s.get("checked_by", ""))],
            [("Date", s.get("date") or datetime.date.today().isoformat()),
             ("Sheet", f"{sheet_no} of {sheet_count}"),
             ("Tool", f"profiler {clean(report.get('tool_version') or __version__)}")]]
    if s.get("notes"):
        rows.insert(3, [("Notes", s["notes"])])
    return rows


def _row_heights(rows, width, measure, fontsize, label_size):
    """Wrapped values and heights [in] of the title-block rows at ``fontsize``."""
    pad, line_h, label_h = 0.04, fontsize * 1.05 / 72.0, label_size * 1.25 / 72.0
    out = []
    for r, cells in enumerate(rows):
        cell_w = width / len(cells)
        wrapped = [wrap_lines(value, cell_w - 2 * pad, measure, fontsize, bold=(r == 0)) if value else [""]
                   for _, value in cells]
        out.append((wrapped, label_h + line_h * max(len(lines) for lines in wrapped) + 1.1 * pad))
    return out


def _fitted_rows(rows, width, height, measure, fontsize, label_size):
    """The rows' layout at the largest sizes (values down to 5 pt, labels 0.6 pt smaller for every
    pt, at least 4.5 pt) at which they fit ``height``: ``(layout, fontsize, label_size)``."""
    def label_at(size):
        return max(4.5, label_size - 0.6 * (fontsize - size))

    def layout(size):
        rows_h = _row_heights(rows, width, measure, size, label_at(size))
        return rows_h, sum(h for _, h in rows_h) <= height + 1e-9

    size, (rows_h, _) = largest_size(layout, fontsize, MIN_FONT_PT)
    return rows_h, size, label_at(size)


def title_box_height(width_in: float, height_in: float, renderer, rows, fontsize: float = 7.0,
                     label_size: float = 5.2, measure=None) -> float:
    """Height [in] :func:`draw_title_box` would use in a box ``width_in`` x ``height_in`` (more than
    ``height_in`` when even 5 pt does not fit: the caller can then give a shorter title).  ``measure``:
    a :class:`~profiler.plot.textfit.Measure` to share with the drawing."""
    layout, _, _ = _fitted_rows(rows, width_in, height_in, measure or Measure(renderer), fontsize, label_size)
    return sum(h for _, h in layout)


def draw_title_box(ax, renderer, rows, fontsize: float = 7.0, label_size: float = 5.2, measure=None) -> float:
    """A ruled title block filling the width of ``ax`` from its top: labelled cells, values wrapped, never cut.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        An :func:`~profiler.plot.sheet.inch_axes` at the lower right of the sheet.
    rows : list of list of (label, value)
        Cells of each row share its width equally; a value is wrapped at
        spaces (a word wider than its cell between characters) onto as many
        lines as it needs (the first row's value in bold); an empty value
        leaves the box blank.  Every text is marked to stay in its cell
        (:func:`profiler.plot.audit.contain`).
    fontsize, label_size : float
        Largest sizes [pt]; both shrink (values down to
        :data:`~profiler.plot.textfit.MIN_FONT_PT`, 5 pt; labels to 4.5 pt)
        until the block fits the height of ``ax``.

    Returns
    -------
    float
        Height used [in] (more than the axes only when even 5 pt does not fit).
    """
    from matplotlib.patches import Rectangle

    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    layout, fontsize, label_size = _fitted_rows(rows, width, height, measure or Measure(renderer), fontsize,
                                                label_size)
    pad, label_h = 0.04, label_size * 1.25 / 72.0
    y = height
    for r, (cells, (wrapped, row_h)) in enumerate(zip(rows, layout)):
        cell_w = width / len(cells)
        for j, ((label, _), lines) in enumerate(zip(cells, wrapped)):
            x = j * cell_w
            ax.add_patch(Rectangle((x, y - row_h), cell_w, row_h, fill=False, ec="0.15", lw=0.6, clip_on=False))
            cell = (x, y - row_h, x + cell_w, y)
            t = put_text(ax, x + pad, y - 0.5 * pad, label.upper(), ha="left", va="top", fontsize=label_size,
                         color="0.35", fontweight="bold", clip_on=False)
            audit.contain(t, ax, cell, name="title-block box")
            t = put_text(ax, x + pad, y - 0.5 * pad - label_h, "\n".join(lines), ha="left", va="top",
                         fontsize=fontsize, fontweight="bold" if r == 0 else "normal", linespacing=1.05,
                         clip_on=False)
            audit.contain(t, ax, cell, name="title-block box")
        y -= row_h
    ax.add_patch(Rectangle((0.0, y), width, height - y, fill=False, ec="0.1", lw=1.1, clip_on=False))
    audit.reserve(ax, (0.0, y, width, height), name="the title block")
    return height - y


def draw_notes(ax, renderer, lines, fontsize: float = 6.0, bold_last: bool = True) -> bool:
    """Lines of provenance and cautions from the top of ``ax``, each wrapped to its width (never cut).

    Repeated lines are drawn once; the last line (the caution) in bold.  When
    they do not fit the height of ``ax`` all shrink down to
    :data:`~profiler.plot.textfit.MIN_FONT_PT` (5 pt); returns False when
    even that does not fit.
    """
    lines = list(dict.fromkeys(line for line in lines if line))
    items = [(line, fontsize, bold_last and i == len(lines) - 1) for i, line in enumerate(lines)]
    return draw_stacked(ax, renderer, items, top=ax.get_ylim()[1] - 0.03, gap=0.15 * fontsize * 1.25 / 72.0)


def provenance_lines(report: dict, source_line: str, extra=()) -> list[str]:
    """Footer lines of a sheet: elevation data, datums, extras, tool / schema / warnings, and the caution."""
    warnings = list(dict.fromkeys(clean(w) for w in (report.get("warnings") or [])))
    tool = (f"profiler {clean(report.get('tool_version') or __version__)}  {MIDDOT}  "
            f"report {clean(report.get('schema') or '')}")
    if warnings:
        tool += f"  {MIDDOT}  warnings: " + "; ".join(warnings)
    return [source_line, f"Datums: {clean(datum_line(report))}", *extra, tool, CAUTION]


def datum_line(report: dict) -> str:
    """The datum statement (:func:`profiler.terrain.datum.datum_text`) for the report's elevation files."""
    from ..terrain.datum import datum_text

    sources = (report.get("dem") or {}).get("sources") or []
    try:
        return datum_text([s.get("crs") for s in sources])
    except ProfilerError:      # an unreadable CRS string: say so rather than fail the sheet
        return datum_text([]).replace("not stated in the data", "unreadable CRS in the data")
