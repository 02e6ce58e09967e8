"""Tables of the PDF report pages: measured, wrapped, never cut, continued on further pages.

A report page is a stack of *groups*; a group is one or more
:class:`Table` side by side across the page.  :func:`paginate` measures
every cell with the renderer before anything is drawn, so that it knows
each row's height:

1. column widths are the widest cell of each column at 7 pt;
2. when a group is wider than the page the font shrinks, down to
   :data:`MIN_FONT_PT` (6 pt);
3. still too wide, the widest columns are narrowed to a common cap and
   their cells wrap at spaces (a word wider than its column is broken
   between characters: nothing is left out);
4. a group taller than the room left on the page continues on the next
   page, titled "(continued)", its column heads repeated.  A table with
   ``flow=n`` is laid out in ``n`` side-by-side parts per page (a long
   height table).

:func:`draw_placed` draws the tables of one page and marks every cell text
with :func:`profiler.plot.audit.contain` so the layout audit checks it
against its own cell.  matplotlib is imported only inside functions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from .audit import contain, reserve
from .sheet import cell_text, text_width_in
from .tables import RULE, SHADE

__all__ = ["Table", "Placed", "Measure", "paginate", "draw_placed", "FONT_PT", "MIN_FONT_PT"]

FONT_PT = 7.0        # table text [pt]
MIN_FONT_PT = 6.0    # smallest the text shrinks to before cells wrap [pt]
PAD_IN = 0.05        # left/right padding inside a cell [in]
VPAD_IN = 0.02       # top/bottom padding inside a cell [in]
GAP_IN = 0.16        # between tables side by side [in]
MAX_EXTRA_IN = 0.6   # at most this much is added to a column to spread a group over the page [in]
GROUP_GAP_IN = 0.2   # between groups stacked down the page [in]
LINESPACING = 1.1
CONTINUED = " (continued)"
BREAK_AFTER = "/,.-_="   # a word too long for its column is broken after one of these when it can


@dataclass(frozen=True)
class Table:
    """A titled table: ``columns`` heads (None: a label/value table), ``rows`` of cell strings.

    ``flow`` > 1 lays the rows out in that many parts side by side (reading
    down the first part, then the next).
    """

    title: str
    columns: tuple | None
    rows: tuple
    flow: int = 1


@dataclass(frozen=True)
class Placed:
    """One table (or part of one) placed on a page: top-left corner [in from the body's top-left]."""

    table: Table
    x_in: float
    y_in: float
    widths_in: tuple
    fontsize: float


#: Width allowance [in] of the fit tests: (w + 2 pad) - 2 pad may fall short of w by a rounding error.
ROUNDING_IN = 1e-6


class Measure:
    """Text widths [in] through one renderer, each (text, size, bold) measured once; share one between
    :func:`paginate` and :func:`draw_placed` (pages at the same dpi measure alike)."""

    def __init__(self, renderer):
        self.renderer, self.cache, self.lines = renderer, {}, {}

    def width(self, s: str, size: float, bold: bool = False) -> float:
        key = (s, size, bold)
        if key not in self.cache:
            self.cache[key] = text_width_in(self.renderer, s, size, bold)
        return self.cache[key]

    def line_in(self, size: float) -> tuple[float, float]:
        """(height of a one-line text, added height of each further line) [in], measured as matplotlib lays
        out multi-line text at :data:`LINESPACING` (its metrics differ between versions)."""
        if size not in self.lines:
            from matplotlib.figure import Figure

            fig = Figure(dpi=self.renderer.dpi)
            one, two = (fig.text(0, 0, s, fontsize=size, linespacing=LINESPACING).get_window_extent(self.renderer)
                        for s in ("Ag", "Ag\nAg"))
            self.lines[size] = (one.height / self.renderer.dpi, (two.height - one.height) / self.renderer.dpi)
        return self.lines[size]

    def wrap(self, s: str, width_in: float, size: float, bold: bool = False) -> list[str]:
        """``s`` in lines at most ``width_in`` wide: broken at spaces, a too-long word between characters."""
        width_in += ROUNDING_IN         # a column sized to its text + padding gives the text back exactly
        if self.width(s, size, bold) <= width_in:
            return [s]
        lines, line = [], ""
        for word in s.split(" "):
            trial = f"{line} {word}" if line else word
            if self.width(trial, size, bold) <= width_in:
                line = trial
                continue
            if line:
                lines.append(line)
            while self.width(word, size, bold) > width_in and len(word) > 1:
                n = self._prefix(word, width_in, size, bold)
                lines.append(word[:n])
                word = word[n:]
            line = word
        return lines + [line] if line or not lines else lines

    def _prefix(self, word, width_in, size, bold) -> int:
        """Length of the longest head of ``word`` that fits, ending after a ``/ , . - _ =`` when one does."""
        lo, hi = 1, len(word) - 1
        while lo < hi:
            mid = (lo + hi + 1) // 2
            if self.width(word[:mid], size, bold) <= width_in:
                lo = mid
            else:
                hi = mid - 1
        cut = max(word.rfind(ch, 0, lo) for ch in BREAK_AFTER) + 1
        return cut if cut > lo // 2 else lo


def _capped(widths: list[float], room: float) -> list[float]:
    """``widths`` with the widest narrowed to one cap so that they sum to ``room`` (water filling)."""
    if sum(widths) <= room:
        return list(widths)
    ordered = sorted(widths)
    rest = room
    for i, w in enumerate(ordered):
        cap = rest / (len(ordered) - i)
        if w >= cap:
            return [min(x, cap) for x in widths]
        rest -= w
    return list(widths)


def _natural(table: Table, m: Measure, size: float, head_words: bool = False) -> list[float]:
    """Column widths [in] holding every cell on one line; with ``head_words`` a column head only needs
    its longest word (it wraps onto two lines before any value does)."""
    n = len(table.columns) if table.columns else max((len(r) for r in table.rows), default=1)
    cols = [0.0] * n
    for j, cell in enumerate(table.columns or ()):
        cols[j] = max(m.width(part, size, True) for part in (cell.split(" ") if head_words else [cell]))
    for row in table.rows:
        for j, cell in enumerate(row):
            cols[j] = max(cols[j], m.width(cell, size))
    return [c + 2 * PAD_IN for c in cols]


def _widths(tables, m: Measure, usable: float):
    """(font size, column widths per table) of a group spread over ``usable`` [in]: heads wrapped first,
    then the font shrunk to :data:`MIN_FONT_PT`, then the widest columns narrowed (their cells wrap)."""
    room = usable - GAP_IN * (len(tables) - 1)
    size = FONT_PT
    natural = [_natural(t, m, size) for t in tables]
    if sum(map(sum, natural)) > room:
        natural = [_natural(t, m, size, head_words=True) for t in tables]
    total = sum(map(sum, natural))
    if total > room:
        size = max(MIN_FONT_PT, math.floor(FONT_PT * room / total * 4) / 4)
        natural = [_natural(t, m, size, head_words=True) for t in tables]
    flat = _capped([w for cols in natural for w in cols], room)
    extra = min((room - sum(flat)) / len(flat), MAX_EXTRA_IN)
    out, i = [], 0
    for cols in natural:
        out.append(tuple(w + extra for w in flat[i:i + len(cols)]))
        i += len(cols)
    return size, out


def _heights(table: Table, widths, m: Measure, size: float):
    """(title height, head height, row heights) [in] of ``table`` in ``widths``."""
    first, pitch = m.line_in(size)

    def h(cells, bold=False, cols=widths):
        n = max(len(m.wrap(c, w - 2 * PAD_IN, size, bold)) for c, w in zip(cells, cols))
        return first + (n - 1) * pitch + 2 * VPAD_IN

    title = h([table.title], True, (sum(widths),))
    head = h(table.columns, True) if table.columns else 0.0
    return title, head, [h(r) for r in table.rows]


def _fitting(heights, room) -> int:
    """How many of the rows (heights) fit in ``room`` [in]."""
    used, n = 0.0, 0
    for rh in heights:
        if used + rh > room + 1e-9:
            break
        used, n = used + rh, n + 1
    return n


def _flow_rows(measured, room, flow: int, force: bool) -> int:
    """Rows per part when a table's rows go into ``flow`` parts side by side: the most for which every part
    fits ``room`` [in] (at least 1 when ``force``)."""
    title, head, rows = measured
    per = min(_fitting(rows, room - title - head), math.ceil(len(rows) / flow))
    while per > 0 and any(sum(rows[i * per:(i + 1) * per]) > room - title - head + 1e-9 for i in range(flow)):
        per -= 1
    return max(per, 1) if force else per


def _continued(table: Table, rows) -> Table:
    title = table.title if table.title.endswith(CONTINUED) else table.title + CONTINUED
    return replace(table, title=title, rows=tuple(rows))


def paginate(groups, m: Measure, width_in: float, room_in: float) -> list[list[Placed]]:
    """The tables of ``groups`` placed on as many pages as they need.

    Parameters
    ----------
    groups : list of list of Table
        Top to bottom; the tables of a group side by side.
    m : Measure
        Text measurement through the renderer of the pages (same dpi).
    width_in, room_in : float
        Width and height [in] of the body of each page.

    Returns
    -------
    list of list of Placed
        The tables of each page (at least one page).
    """
    pages, y = [[]], 0.0
    queue = [list(g) for g in groups if g]
    while queue:
        group = queue.pop(0)
        flow = group[0].flow if len(group) == 1 else 1
        parts = [group[0]] * flow if flow > 1 else group
        size, widths = _widths(parts, m, width_in)
        measured = [_heights(t, w, m, size) for t, w in zip(parts, widths)]
        left = room_in - y
        taken = []
        if flow > 1:
            per = _flow_rows(measured[0], left, flow, force=not pages[-1])
            chunks = [group[0].rows[i * per:(i + 1) * per] for i in range(flow)] if per else []
            rest = group[0].rows[per * flow:] if per else group[0].rows
            taken = [(replace(group[0], rows=c, title=group[0].title if i == 0 else _continued(group[0], c).title),
                      w) for i, (c, w) in enumerate(zip(chunks, widths)) if c]
            remainder = [_continued(group[0], rest)] if rest else []
        else:
            remainder = []
            for t, w, (title, head, rows) in zip(parts, widths, measured):
                n_fit = _fitting(rows, left - title - head)
                if n_fit < len(rows) and n_fit < min(2, len(rows)) and pages[-1]:
                    taken = []          # not even two rows fit: the whole group moves on
                    remainder = group
                    break
                n_fit = max(n_fit, 1) if not pages[-1] else n_fit
                taken.append((replace(t, rows=t.rows[:n_fit]), w))
                if n_fit < len(t.rows):
                    remainder.append(_continued(t, t.rows[n_fit:]))
        if not taken and pages[-1]:
            pages.append([])
            y = 0.0
            queue.insert(0, group)
            continue
        x, bottom = 0.0, y
        for t, w in taken:
            pages[-1].append(Placed(t, x, y, w, size))
            title, head, rows = _heights(t, w, m, size)
            bottom = max(bottom, y + title + head + sum(rows))
            x += sum(w) + GAP_IN
        y = bottom + GROUP_GAP_IN
        if remainder:
            pages.append([])
            y = 0.0
            queue.insert(0, remainder)
    return [p for p in pages if p] or [[]]


def draw_placed(ax, m: Measure, placed) -> None:
    """Draw the tables of one page into ``ax`` (an ``inch_axes`` over the page body), each cell marked.

    Title bar dark with white bold text, column heads bold on grey,
    alternate rows shaded; a cell starting "NO" or "NOT" in bold.
    """
    from matplotlib.patches import Rectangle

    top_in = ax.get_ylim()[1]
    for p in placed:
        t, widths, size = p.table, p.widths_in, p.fontsize
        title_h, head_h, rows_h = _heights(t, widths, m, size)
        x0, total = p.x_in, sum(widths)
        y = top_in - p.y_in
        _cell(ax, m, x0, y, total, title_h, t.title, size, bold=True, fill="0.22", color="white")
        y -= title_h
        lefts = [x0 + sum(widths[:j]) for j in range(len(widths))]
        if t.columns:
            for cell, left, w in zip(t.columns, lefts, widths):
                _cell(ax, m, left, y, w, head_h, cell, size, bold=True, fill="0.82")
            y -= head_h
        body_top = y
        for i, (row, rh) in enumerate(zip(t.rows, rows_h)):
            if i % 2 == 1:
                ax.add_patch(Rectangle((x0, y - rh), total, rh, fc=SHADE, ec="none", zorder=0))
            for j, (cell, left, w) in enumerate(zip(row, lefts, widths)):
                strong = j > 0 and cell.startswith("NO")
                _cell(ax, m, left, y, w, rh, cell, size, bold=strong,
                      color="0.25" if j == 0 < len(row) - 1 else "black")
            y -= rh
        reserve(ax, (x0, y, x0 + total, top_in - p.y_in), name="a table")
        ax.plot([x0, x0 + total], [y, y], color=RULE, lw=0.8)
        for left in lefts[1:]:
            ax.plot([left, left], [y, body_top], color="0.75", lw=0.4)


def _cell(ax, m, x, y_top, w, h, text, size, *, bold=False, fill=None, color="black"):
    """One cell: optional background, its text wrapped from the top-left, marked to stay inside the cell."""
    from matplotlib.patches import Rectangle

    if fill is not None:
        ax.add_patch(Rectangle((x, y_top - h), w, h, fc=fill, ec="none", zorder=1))
    if not text:
        return
    lines = m.wrap(text, w - 2 * PAD_IN, size, bold)
    artist = cell_text(ax, x + PAD_IN, y_top - VPAD_IN, "\n".join(lines), ha="left", va="top", fontsize=size,
                       linespacing=LINESPACING, color=color, fontweight="bold" if bold else "normal", zorder=2)
    contain(artist, ax, (x, y_top - h, x + w, y_top), name="its table cell")
