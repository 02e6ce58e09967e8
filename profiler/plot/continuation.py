"""Continuation sheets: the entries of a sheet's lists that do not fit on it, on further sheets of the family.

A sheet whose lists (sites, nodes, entries) do not fit even at its smallest
type keeps what fits, says where the rest is ("continued on sheet 2") and
hands the rest to :func:`plan` as sections ``(heading, entries)``.  The plan
pours them, in order, into three columns per sheet at :data:`FONT_PT`
(each entry wrapped at spaces, a word wider than a column broken between
characters; never cut, never shrunk further), under its heading followed by
", continued", repeated at the top of every column the section runs into.  Then
:func:`continuation_figures` draws the sheets: the same frame, a header
"<title> (continued)" with the sheet number as its badge, the columns, the
lower-right title block ("Sheet k of n") and the notes ending with the
caution :data:`profiler.CAUTION`.

:func:`profiler.plot.sheet.write_sheet` writes the list of figures: a PDF as
pages of one file, a PNG or SVG as ``NAME.png``, ``NAME-2.png``, ...
"""

from __future__ import annotations

from dataclasses import dataclass, field

from . import audit
from .sheet import inch_axes, new_sheet, paper_size_in, put_text
from .textfit import Measure, wrap_lines

__all__ = ["Plan", "plan", "continuation_figures", "FONT_PT", "HEAD_PT",
           "COLUMNS"]

#: Type of the entries [pt] and of the section headings [pt, bold] on a continuation sheet.
FONT_PT = 7.0
HEAD_PT = 7.8

#: Columns of entries per continuation sheet, the gap between them [in] and a wrapped entry's indent [in].
COLUMNS = 3
GAP_IN = 0.3
INDENT_IN = 0.12

MARGIN_IN, HEADER_IN, BAND_IN = 0.38, 0.66, 1.45      # frame margin, header band, title block height


@dataclass
class Plan:
    """Continuation sheets laid out before drawing.

    Attributes
    ----------
    pages : list
        Per continuation sheet, per column, the lines ``(text, fontsize, bold, indent_in)`` top down.
    first_sheet : list of int
        The sheet number (the main sheet is 1) on which each section given to :func:`plan` starts.
    """

    pages: list = field(default_factory=list)
    first_sheet: list = field(default_factory=list)

    @property
    def count(self) -> int:
        """Sheets in all: the main sheet and its continuation sheets."""
        return 1 + len(self.pages)


def _side_w(width_in: float) -> float:
    return 3.25 - 0.4 * max(0.0, 11.69 - width_in)


def column_boxes(paper: str) -> list[tuple[float, float, float, float]]:
    """The columns (left, bottom, width, height) [in] of a continuation sheet on ``paper``."""
    width_in, height_in = paper_size_in(paper)
    top = height_in - MARGIN_IN - HEADER_IN - 0.28
    bottom = MARGIN_IN + BAND_IN + 0.2
    col_w = (width_in - 2 * MARGIN_IN - GAP_IN * (COLUMNS - 1)) / COLUMNS
    return [(MARGIN_IN + k * (col_w + GAP_IN), bottom, col_w, top - bottom) for k in range(COLUMNS)]


def _line_h(size: float) -> float:
    return size * 1.25 / 72.0


def _entry_rows(entry, width: float, measure) -> list[tuple]:
    """An entry's lines: a string wrapped at :data:`FONT_PT`, or ``(lead, rest)``: the lead in bold, then
    the rest; lines after an entry's first indented."""
    parts = [(entry[0], True), (entry[1], False)] if isinstance(entry, tuple) else [(entry, False)]
    rows = []
    for text, bold in parts:                # every line within the width less the indent, the first too
        for line in wrap_lines(text, width - INDENT_IN, measure, FONT_PT, bold) if text else ():
            rows.append((line, FONT_PT, bold, INDENT_IN if rows else 0.0))
    return rows


def _heading_rows(heading: str, width: float, measure) -> list[tuple]:
    return [(line, HEAD_PT, True, 0.0) for line in wrap_lines(heading, width, measure, HEAD_PT, True)]


def plan(renderer, paper: str, sections) -> Plan:
    """Lay out ``sections`` (``[(heading, [entry, ...]), ...]``; an entry a string or ``(lead, rest)``)
    on continuation sheets of ``paper``, measured with ``renderer`` (the main sheet's, same dpi).

    Empty sections are left out (their ``first_sheet`` is 0).  An entry is kept in one column when
    it fits one; a heading is never left at the foot of a column without an entry under it.
    """
    sections = list(sections)
    boxes = column_boxes(paper)
    width, room = boxes[0][2], boxes[0][3]
    measure = Measure(renderer)
    columns, col, used = [], [], 0.0
    first = [0] * len(sections)

    def height(rows):
        return sum(_line_h(size) for _, size, _, _ in rows)

    def new_column():
        nonlocal col, used
        columns.append(col)
        col, used = [], 0.0

    for i, (heading, entries) in enumerate(sections):
        if not entries:
            continue
        head = again = _heading_rows(f"{heading}, continued", width, measure)     # every list began on sheet 1
        blocks = [_entry_rows(e, width, measure) for e in entries]
        first_block = blocks[0] if height(head) + height(blocks[0]) <= room else blocks[0][:1]
        if col and used + height(head) + height(first_block) > room:      # the heading with its first entry
            new_column()
        first[i] = 2 + (len(columns) // COLUMNS)
        col += head
        used += height(head)
        for block in blocks:
            if col and used + height(block) > room and height(again) + height(block) <= room:
                new_column()
                col += again
                used += height(again)
            for row in block:                       # an entry taller than a column: its lines run on
                if used + _line_h(row[1]) > room:
                    new_column()
                    col += again
                    used += height(again)
                col.append(row)
                used += _line_h(row[1])
        used += 0.6 * _line_h(FONT_PT)              # a gap under the section
    if col:
        columns.append(col)
    pages = [columns[k:k + COLUMNS] for k in range(0, len(columns), COLUMNS)]
    return Plan(pages=pages, first_sheet=first)


def continuation_figures(layout: Plan, paper: str, dpi: float, *, title: str, report: dict, sheet: dict | None,
                         notes) -> list:
    """Draw the continuation sheets of ``layout`` (sheets 2 to ``layout.count``); returns their Figures.

    Parameters
    ----------
    layout : Plan
        From :func:`plan`.
    paper : {"a4", "letter"}
    dpi : float
        Resolution the sheets are laid out at (the main sheet's) [dots per inch].
    title : str
        The main sheet's title; each header reads "<title> (continued)".
    report : dict
        The report drawn (tool version in the title block).
    sheet : dict or None
        Title-block fields (project, document, ..., date), as on the main sheet.
    notes : list of str
        The notes under the columns (provenance lines ending with the caution), as on the main sheet.
    """
    from .sheet import BADGE_PLAIN, draw_title_block
    from .titleblock import draw_notes, draw_title_box, title_block_rows

    figures = []
    boxes = column_boxes(paper)
    for k, columns in enumerate(layout.pages, start=2):
        fig, renderer, width_in, height_in = new_sheet(paper, dpi)
        header = (MARGIN_IN, height_in - MARGIN_IN - HEADER_IN, width_in - 2 * MARGIN_IN, HEADER_IN)
        where = f"Continued from sheet {k - 1}" + (f"; continues on sheet {k + 1}" if k < layout.count else "")
        draw_title_block(inch_axes(fig, header, width_in, height_in), renderer, f"{title} (continued)", where,
                         f"Sheet {k} of {layout.count}", BADGE_PLAIN, badge_label="CONTINUATION")
        for box, rows in zip(boxes, columns):
            _draw_column(inch_axes(fig, box, width_in, height_in), rows)
        side_w = _side_w(width_in)
        draw_title_box(inch_axes(fig, (width_in - MARGIN_IN - side_w, MARGIN_IN, side_w, BAND_IN), width_in,
                                 height_in), renderer, title_block_rows(sheet, title, report, k, layout.count))
        draw_notes(inch_axes(fig, (MARGIN_IN, MARGIN_IN, width_in - 2 * MARGIN_IN - side_w - 0.25, BAND_IN),
                             width_in, height_in), renderer, notes)
        figures.append(fig)
    return figures


def _draw_column(ax, rows) -> None:
    """The lines of one column from its top, each marked to stay in the column."""
    y = ax.get_ylim()[1]
    for text, size, bold, indent in rows:
        t = put_text(ax, indent, y, text, ha="left", va="top", fontsize=size,
                     fontweight="bold" if bold else "normal", color="black" if bold else "0.1")
        audit.contain(t, ax, name="continuation column")
        y -= _line_h(size)
