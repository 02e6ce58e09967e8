"""Ruled tables of the sheets: columns sized to their contents, cells wrapped, never cut.

:func:`draw_tables` lays out tables side by side across an
:func:`~profiler.plot.sheet.inch_axes`.  Each column is as wide as its
widest cell when everything fits; otherwise the widest columns are
narrowed first (a water level over the columns, never below a column's
widest word, or :data:`MAX_CELL_IN` for a very long word, which is then
broken between characters) and their cells wrap at spaces onto more lines.
When the tables are then too tall for the axes the font shrinks, in 0.25 pt
steps, down to :data:`~profiler.plot.textfit.MIN_FONT_PT` (5 pt); when even
that does not fit the tables are drawn at the minimum and the height
returned exceeds the axes (``strict=True`` raises
:class:`~profiler.plot.textfit.LayoutOverflow` instead, for a caller that
continues on another page).  Every cell text is marked with
:func:`profiler.plot.audit.contain` so the layout audit checks it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import audit
from .textfit import MIN_FONT_PT, LayoutOverflow, Measure, largest_size, text_height_in, wrap_lines

__all__ = ["draw_tables", "draw_table", "table_layout", "TableLayout", "MAX_CELL_IN"]

RULE = "0.35"             # table rules
SHADE = "0.93"            # alternate table rows
MAX_CELL_IN = 1.12        # at 7 pt [in]: a word wider than this (scaled with the font) is broken between characters
V_PAD_IN = 0.022          # space above and below a cell's text [in]
LINESPACING = 1.0


@dataclass
class TableLayout:
    """The layout of :func:`draw_tables` at one font size."""

    fontsize: float
    widths: list            # per table, column widths [in]
    cells: list             # per table, per row (header first), per cell: list of lines
    row_h: float            # height of a one-line row [in]
    height_in: float        # height of the tallest table [in]
    fits: bool


def _strong(j: int, cell: str) -> bool:
    return j > 0 and cell.startswith("NO")


def _columns(tables, measure, f, pad):
    """Natural and smallest widths [in] of every column at ``f`` [pt] (both with padding)."""
    cap = MAX_CELL_IN * f / 7.0
    natural, smallest = [], []
    for head, rows in tables:
        nat, low = [], []
        for j in range(len(head)):
            texts = [(row[j], _strong(j, row[j])) for row in rows]
            if j > 0 or len(head) > 2:
                texts.append((head[j], True))
            nat.append(max(measure(t, f, b) for t, b in texts) + 2 * pad)
            low.append(max(min(measure.widest_word(t, f, b), cap) for t, b in texts) + 2 * pad)
        if len(head) == 2:          # a two-column block's title spans both columns
            extra = measure(head[0], f, True) + 2 * pad - nat[0]
            nat[1] = max(nat[1], extra)
        natural.append(nat)
        smallest.append(low)
    return natural, smallest


def _water_level(natural, smallest, usable):
    """Column widths: the natural ones when they fit, else each capped at a common level (not below
    its smallest width) so that they add up to ``usable``; the spare width shared evenly."""
    nat = np.concatenate([np.asarray(c, float) for c in natural])
    low = np.minimum(np.concatenate([np.asarray(c, float) for c in smallest]), nat)
    if nat.sum() <= usable:
        flat = nat + (usable - nat.sum()) / nat.size
    elif low.sum() >= usable:
        flat = low * usable / low.sum() if low.sum() > usable else low
    else:
        lo, hi = 0.0, float(nat.max())
        for _ in range(40):
            mid = 0.5 * (lo + hi)
            if np.clip(nat, low, mid).sum() > usable:
                hi = mid
            else:
                lo = mid
        flat = np.clip(nat, low, lo)
        flat += (usable - flat.sum()) / flat.size
    out, k = [], 0
    for cols in natural:
        out.append([float(w) for w in flat[k:k + len(cols)]])
        k += len(cols)
    return out


def table_layout(renderer, blocks, width_in: float, height_in: float, gap: float = 0.12, pad: float = 0.045,
                 max_row_h: float = 0.215, max_fontsize: float = 7.0, min_fontsize: float = MIN_FONT_PT,
                 measure=None) -> TableLayout:
    """The layout :func:`draw_tables` would draw in a box of ``width_in`` x ``height_in`` [in]."""
    measure = measure or Measure(renderer)
    tables = [([title] + (header[1:] if header is not None else [""]), rows) for title, header, rows in blocks]
    usable = width_in - gap * (len(tables) - 1)
    def layout(f):
        laid = _layout_at(tables, measure, f, usable, height_in, pad, max_row_h)
        return laid, laid.fits

    return largest_size(layout, max_fontsize, min_fontsize)[1][0]


def _layout_at(tables, measure, f, usable, height_in, pad, max_row_h) -> TableLayout:
    natural, smallest = _columns(tables, measure, f, pad)
    widths = _water_level(natural, smallest, usable)
    line_h = text_height_in(1, f, LINESPACING)
    cells, heights, extra_lines = [], [], []
    for (head, rows), cols in zip(tables, widths):
        table = []
        for i, row in enumerate([head] + list(rows)):
            out = []
            for j, (cell, w) in enumerate(zip(row, cols)):
                room = w - 2 * pad
                if i == 0 and j == 0 and len(cols) == 2 and not row[1]:
                    room = sum(cols) - 2 * pad            # a title spanning both columns
                out.append(wrap_lines(cell, room, measure, f, i == 0 or _strong(j, cell)) if cell else [""])
            table.append(out)
        cells.append(table)
        extra_lines.append(sum(max(len(c) for c in row) - 1 for row in table))
    min_row = line_h + 2 * V_PAD_IN
    room_rows = [(height_in - 0.02 - n_extra * line_h) / len(table) for table, n_extra in zip(cells, extra_lines)]
    row_h = min([max_row_h] + room_rows)
    fits = row_h >= min_row - 1e-9
    row_h = max(row_h, min_row)
    heights = [row_h * len(table) + n_extra * line_h for table, n_extra in zip(cells, extra_lines)]
    return TableLayout(f, widths, cells, row_h, max(heights), fits)


def draw_tables(ax, renderer, blocks, gap: float = 0.12, pad: float = 0.045, max_row_h: float = 0.215,
                wrap_rows=(), max_fontsize: float = 7.0, min_fontsize: float = MIN_FONT_PT,
                strict: bool = False, measure=None) -> float:
    """Ruled tables side by side across ``ax`` (an :func:`inch_axes`); widths from their contents.

    Parameters
    ----------
    blocks : list of (title, header or None, rows)
        ``header`` is ``["", col1, col2, ...]`` for a table with column
        heads; ``rows`` are tuples of cell strings.  A two-column table's
        title spans both columns.  Cells too wide for their column wrap at
        spaces (a very long word between characters); when the tables are
        then too tall, the font shrinks from ``max_fontsize`` down to
        ``min_fontsize`` (default 5 pt).  Nothing is cut.
    wrap_rows : iterable of str
        Kept for compatibility: every row wraps when it needs to.
    max_fontsize, min_fontsize : float
        Largest and smallest font [pt].
    strict : bool
        Raise :class:`~profiler.plot.textfit.LayoutOverflow` (nothing drawn)
        when even ``min_fontsize`` does not fit the axes.
    measure : Measure, optional
        A width cache to share with the caller.

    Returns
    -------
    float
        Height drawn [in], from the top of ``ax`` to the lowest table's bottom
        rule: more than the axes' height when even the minimum font does not fit.
    """
    del wrap_rows
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    layout = table_layout(renderer, blocks, width, height, gap, pad, max_row_h, max_fontsize, min_fontsize, measure)
    if strict and not layout.fits:
        raise LayoutOverflow(f"tables need {layout.height_in:.2f} in at {layout.fontsize:g} pt; "
                             f"{height:.2f} in available")
    x, lowest = 0.0, height
    for cols, table in zip(layout.widths, layout.cells):
        lowest = min(lowest, draw_table(ax, x, height, cols, table, layout.fontsize, layout.row_h, pad))
        x += sum(cols) + gap
    return height - lowest


def draw_table(ax, x0, y_top, widths, table, fontsize, row_h, pad) -> float:
    """One ruled table from its wrapped cells (header first): dark header row, shaded alternate rows,
    "NO..." cells in bold.  Each row is as tall as its longest cell; returns the y of the bottom rule [in]."""
    from matplotlib.patches import Rectangle

    from .sheet import cell_text

    total = sum(widths)
    line_h = text_height_in(1, fontsize, LINESPACING)
    lefts = np.concatenate([[x0], x0 + np.cumsum(widths)[:-1]])
    top = y_top
    for i, cells in enumerate(table):
        h = row_h + (max(len(lines) for lines in cells) - 1) * line_h
        y = top - 0.5 * h
        if i == 0:
            ax.add_patch(Rectangle((x0, top - h), total, h, fc="0.22", ec="none", zorder=1))
        elif i % 2 == 0:
            ax.add_patch(Rectangle((x0, top - h), total, h, fc=SHADE, ec="none", zorder=0))
        spans = i == 0 and len(cells) == 2 and not cells[1][0]
        for j, (lines, left, w) in enumerate(zip(cells, lefts, widths)):
            cell = "\n".join(lines)
            if not cell:
                continue
            right = x0 + total if (spans and j == 0) else left + w
            strong = i == 0 or _strong(j, cell)
            colour = "white" if i == 0 else ("0.25" if j == 0 else "black")
            t = cell_text(ax, left + pad, y, cell, ha="left", va="center", fontsize=fontsize,
                          linespacing=LINESPACING, color=colour, fontweight="bold" if strong else "normal", zorder=2)
            audit.contain(t, ax, (left, top - h, right, top), name="table cell")
        top -= h
    bottom = top
    audit.reserve(ax, (x0, bottom, x0 + total, y_top), name="a table")
    ax.plot([x0, x0 + total], [bottom, bottom], color=RULE, lw=0.8)
    if len(lefts) > 1:   # every column rule in one artist (fewer artists: faster drawing)
        first = y_top - row_h - (max(len(lines) for lines in table[0]) - 1) * line_h
        xs = np.repeat(lefts[1:], 3)
        ys = np.tile([bottom, first, np.nan], len(lefts) - 1)
        ax.plot(xs, ys, color="0.75", lw=0.4)
    return bottom
