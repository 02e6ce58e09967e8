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

from .. import CAUTION, __version__
from ..errors import ProfilerError
from .sheet import MIDDOT, clean, put_text, wrap_text

__all__ = ["title_block_rows", "draw_title_box", "draw_notes", "provenance_lines", "datum_line"]


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


def _row_heights(rows, width, renderer, fontsize, label_size):
    """Wrapped values and heights [in] of the title-block rows at ``fontsize``."""
    pad, line_h, label_h = 0.04, fontsize * 1.22 / 72.0, label_size * 1.25 / 72.0
    out = []
    for r, cells in enumerate(rows):
        cell_w = width / len(cells)
        wrapped = [wrap_text(value, cell_w - 2 * pad, renderer, fontsize, bold=(r == 0)) if value else [""]
                   for _, value in cells]
        out.append((wrapped, label_h + line_h * max(len(lines) for lines in wrapped) + 1.1 * pad))
    return out


def draw_title_box(ax, renderer, rows, fontsize: float = 7.0, label_size: float = 5.2) -> float:
    """A ruled title block filling the width of ``ax`` from its top: labelled cells, values wrapped, never cut.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        An :func:`~profiler.plot.sheet.inch_axes` at the lower right of the sheet.
    rows : list of list of (label, value)
        Cells of each row share its width equally; a value is wrapped at
        spaces onto as many lines as it needs (the first row's value in
        bold); an empty value leaves the box blank.
    fontsize, label_size : float
        Largest sizes [pt]; both shrink (down to 5 pt) until the block fits
        the height of ``ax``.

    Returns
    -------
    float
        Height used [in] (more than the axes only when even 5 pt does not fit).
    """
    from matplotlib.patches import Rectangle

    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    layout = _row_heights(rows, width, renderer, fontsize, label_size)
    while sum(h for _, h in layout) > height and fontsize > 5.0:
        fontsize, label_size = fontsize - 0.25, max(4.5, label_size - 0.15)
        layout = _row_heights(rows, width, renderer, fontsize, label_size)
    pad, label_h = 0.04, label_size * 1.25 / 72.0
    y = height
    for r, (cells, (wrapped, row_h)) in enumerate(zip(rows, layout)):
        cell_w = width / len(cells)
        for j, ((label, _), lines) in enumerate(zip(cells, wrapped)):
            x = j * cell_w
            ax.add_patch(Rectangle((x, y - row_h), cell_w, row_h, fill=False, ec="0.15", lw=0.6, clip_on=False))
            put_text(ax, x + pad, y - 0.5 * pad, label.upper(), ha="left", va="top", fontsize=label_size,
                     color="0.35", fontweight="bold", clip_on=False)
            put_text(ax, x + pad, y - 0.5 * pad - label_h, "\n".join(lines), ha="left", va="top",
                     fontsize=fontsize, fontweight="bold" if r == 0 else "normal", linespacing=1.05,
                     clip_on=False)
        y -= row_h
    ax.add_patch(Rectangle((0.0, y), width, height - y, fill=False, ec="0.1", lw=1.1, clip_on=False))
    return height - y


def draw_notes(ax, renderer, lines, fontsize: float = 6.0, bold_last: bool = True) -> None:
    """Lines of provenance and cautions from the top of ``ax``, each wrapped to its width (never cut).

    Repeated lines are drawn once; the last line (the caution) in bold.
    """
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    line_h = fontsize * 1.25 / 72.0
    y = height - 0.03
    lines = list(dict.fromkeys(line for line in lines if line))
    for i, line in enumerate(lines):
        strong = bold_last and i == len(lines) - 1
        for part in wrap_text(line, width, renderer, fontsize, bold=strong):
            put_text(ax, 0.0, y, part, ha="left", va="top", fontsize=fontsize, color="0.1",
                     fontweight="bold" if strong else "normal")
            y -= line_h
        y -= 0.15 * line_h


def provenance_lines(report: dict, source_line: str, extra=()) -> list[str]:
    """Footer lines of a sheet: elevation data, datums, extras, tool / schema / warnings, and the caution."""
    warnings = list(dict.fromkeys(clean(w) for w in (report.get("warnings") or [])))
    tool = f"profiler {clean(report.get('tool_version') or __version__)}  {MIDDOT}  report {clean(report.get('schema') or '')}"
    if warnings:
        tool += f"  {MIDDOT}  warnings: " + "; ".join(warnings)
    return [source_line, f"Datums: {clean(datum_line(report))}", *extra, tool, CAUTION]


def datum_line(report: dict) -> str:
    """The datum statement (:func:`profiler.datum.datum_text`) for the report's elevation files."""
    from ..datum import datum_text

    sources = (report.get("dem") or {}).get("sources") or []
    try:
        return datum_text([s.get("crs") for s in sources])
    except ProfilerError:      # an unreadable CRS string: say so rather than fail the sheet
        return datum_text([]).replace("not stated in the data", "unreadable CRS in the data")
