"""The sheet family's shared style: paper, fonts, frame, title block, tables, footer, text.

Every sheet (link, network, later coverage and siting) is drawn the same way:

1. :func:`new_sheet` gives a landscape :class:`matplotlib.figure.Figure` on
   the Agg canvas with the :func:`draw_frame` border; :func:`inch_axes`
   places invisible axes whose data coordinates are inches, for text;
2. :func:`draw_title_block` draws the title, the subtitle and a boxed
   verdict in the top band; :func:`draw_tables` ruled tables whose column
   widths follow their contents; :func:`sheet_legend` a legend in the
   family's style;
3. :func:`draw_footer` draws the provenance (elevation files with their
   sha256 prefix, resolution and CRS; tool version, report schema, date,
   warnings) and the caution line :data:`profiler.CAUTION`;
4. :func:`write_sheet` checks the format, paper and dpi, and writes the
   figure atomically (temporary file, then rename) inside :func:`style`.

Maps (hillshade, north arrow, scale bar, degree ticks, label placement) are
in :mod:`profiler.plot.basemap`.

Meaning is carried by line styles, hatching and markers as well as colour,
so sheets stay legible in greyscale.  Text stays text: TrueType (Type 42)
fonts in PDF and ``<text>`` elements in SVG.  matplotlib is imported only
inside functions, and only its object-oriented API is used (no pyplot).
"""

from __future__ import annotations

import datetime
import math
import os
import textwrap
from fractions import Fraction
from pathlib import Path

import numpy as np

from .. import CAUTION, __version__
from ..errors import ProfilerError
from ..outputs import atomic_path
from ..report import inert_text

#: Landscape paper sizes (width, height) [in]: ISO 216 A4 is 297 mm x 210 mm,
#: ANSI letter is 11 in x 8.5 in.
PAPER_SIZES_IN = {"a4": (297.0 / 25.4, 210.0 / 25.4), "letter": (11.0, 8.5)}

#: File formats by extension.
FIGURE_FORMATS = ("png", "pdf", "svg")

DASH = "\u2014"           # em dash: a value that is not known
EN = "\u2013"             # en dash in a link name
MIDDOT = "\u00b7"
ELLIPSIS = "\u2026"

RULE = "0.35"             # table rules
SHADE = "0.93"            # alternate table rows
NODATA_HATCH = "////"     # no data (map outside the elevation model, empty panel)
WRAP_LINE = 0.62          # each further line of a wrapped cell adds this fraction of a row height
MAX_CELL_IN = 1.12        # widest table cell at 7 pt [in]; longer text is shortened with an ellipsis

#: Title-block badge styles (``bbox`` keywords): heavier border as the news gets worse, so the
#: badge reads in greyscale too.
BADGE_GOOD = {"fc": "#e2f0dc", "ec": "0.1", "lw": 0.8}
BADGE_WARN = {"fc": "#fbeccb", "ec": "0.1", "lw": 1.6}
BADGE_BAD = {"fc": "#f6d2d2", "ec": "0.0", "lw": 2.6}

#: Keyword arguments of ``Axes.legend`` shared by the sheets: no frame, small type.
LEGEND_KW = dict(frameon=False, handlelength=2.4, handleheight=0.9, columnspacing=1.4, labelspacing=0.25,
                 borderaxespad=0.15, borderpad=0.1, fontsize=6.8)


# --------------------------------------------------------------------------- paper, format, writing
def figure_format(path) -> str:
    """The figure format for ``path`` from its extension: ``png``, ``pdf`` or ``svg``.

    Raises
    ------
    ProfilerError
        For any other extension.
    """
    suffix = Path(str(path)).suffix.lower().lstrip(".")
    if suffix not in FIGURE_FORMATS:
        shown = f".{suffix}" if suffix else "no extension"
        raise ProfilerError(f"cannot write a figure as {path} ({shown}); use a file name ending in .png, .pdf or .svg")
    return suffix


def paper_size_in(paper: str) -> tuple[float, float]:
    """Landscape (width, height) of a paper size [in]: ``"a4"`` or ``"letter"``."""
    key = str(paper).strip().lower()
    if key not in PAPER_SIZES_IN:
        raise ProfilerError(f"unknown paper size {paper!r}; use a4 or letter")
    return PAPER_SIZES_IN[key]


def check_dpi(dpi) -> float:
    """The resolution [dots per inch] as a float between 10 and 2400, else a ProfilerError."""
    try:
        dpi = float(dpi)
    except (TypeError, ValueError):
        raise ProfilerError(f"--dpi must be a number, got {dpi!r}") from None
    if not (math.isfinite(dpi) and 10.0 <= dpi <= 2400.0):
        raise ProfilerError(f"--dpi must be between 10 and 2400, got {dpi:g}")
    return dpi


def write_sheet(path, paper: str, dpi, build, title: str, report: dict) -> None:
    """Check the output, build the figure with ``build()`` and write it atomically.

    Parameters
    ----------
    path : str or os.PathLike
        ``.png``, ``.pdf`` or ``.svg``; a missing folder fails before drawing.
    paper : {"a4", "letter"}
    dpi : float
        Resolution of a PNG and of the rasters embedded in a PDF or SVG [dpi].
    build : callable
        No arguments; returns the :class:`matplotlib.figure.Figure`.
    title : str
        Document title for the file's metadata.
    report : dict
        The report drawn (its ``tool_version`` goes into the metadata).
    """
    fmt = figure_format(path)
    paper_size_in(paper)
    dpi = check_dpi(dpi)
    with atomic_path(path) as tmp, style():
        fig = build()
        try:
            # zlib level 1 for PNG: about 0.15 s less at 200 dpi for a slightly larger file
            extra = {"pil_kwargs": {"compress_level": 1}} if fmt == "png" else {}
            fig.savefig(tmp, format=fmt, dpi=dpi, metadata=metadata(title, report, fmt), **extra)
        except OSError as exc:
            raise ProfilerError(f"cannot write {path}: {exc.strerror or exc}") from exc


def metadata(title: str, report: dict, fmt: str) -> dict:
    """File metadata (title, creator, the caution) under the keys each format knows."""
    creator = f"profiler {report.get('tool_version') or __version__}"
    if fmt == "png":
        return {"Title": title, "Software": creator, "Disclaimer": CAUTION}
    if fmt == "pdf":
        return {"Title": title, "Creator": creator, "Subject": CAUTION}
    return {"Title": title, "Creator": creator, "Description": CAUTION}


# --------------------------------------------------------------------------- style and layout
def style():
    """Style context: matplotlib defaults plus the sheets' fonts and sizes.

    ``svg.fonttype = 'none'`` keeps SVG text as ``<text>`` elements and
    ``pdf.fonttype = 42`` embeds TrueType fonts so PDF text stays searchable.
    """
    import contextlib

    import matplotlib
    import matplotlib.style

    stack = contextlib.ExitStack()
    stack.enter_context(matplotlib.style.context("default"))
    stack.enter_context(matplotlib.rc_context({
        "font.family": "sans-serif", "font.sans-serif": ["DejaVu Sans"], "font.size": 7.5,
        "text.usetex": False, "svg.fonttype": "none", "svg.hashsalt": "profiler",
        "pdf.fonttype": 42, "ps.fonttype": 42, "axes.linewidth": 0.7, "axes.labelsize": 8,
        "xtick.labelsize": 7, "ytick.labelsize": 7, "xtick.major.width": 0.6, "ytick.major.width": 0.6,
        "hatch.linewidth": 0.6, "legend.fontsize": 7, "figure.facecolor": "white",
        "savefig.facecolor": "white", "axes.unicode_minus": True, "image.interpolation": "antialiased",
    }))
    return stack


def new_sheet(paper: str, dpi: float = 100.0):
    """A framed landscape sheet: ``(fig, renderer, width_in, height_in)``; call inside :func:`style`.

    ``dpi`` [dots per inch] should be the resolution the sheet is saved at:
    the text measured while building is then laid out at that resolution
    already, and saving reuses the measurements and the canvas.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    width_in, height_in = paper_size_in(paper)
    fig = Figure(figsize=(width_in, height_in), dpi=dpi)
    FigureCanvasAgg(fig)
    draw_frame(fig, width_in, height_in)
    return fig, fig.canvas.get_renderer(), width_in, height_in


def fraction(box, width_in, height_in):
    """A box (left, bottom, width, height) [in] as figure fractions."""
    left, bottom, w, h = box
    return (left / width_in, bottom / height_in, w / width_in, h / height_in)


def inch_axes(fig, box, width_in, height_in):
    """An invisible axes whose data coordinates are inches from its lower-left corner."""
    ax = fig.add_axes(fraction(box, width_in, height_in))
    ax.set_xlim(0.0, box[2])
    ax.set_ylim(0.0, box[3])
    ax.set_axis_off()
    return ax


def draw_frame(fig, width_in, height_in):
    """The sheet border, 0.22 in inside the paper edge."""
    from matplotlib.patches import Rectangle

    pad = 0.22
    fig.add_artist(Rectangle((pad / width_in, pad / height_in), 1 - 2 * pad / width_in, 1 - 2 * pad / height_in,
                             transform=fig.transFigure, fill=False, lw=0.9, ec="0.15"))


def sheet_legend(ax, handles, **kw):
    """``ax.legend`` in the family's style (:data:`LEGEND_KW`, overridable)."""
    return ax.legend(handles=handles, **{**LEGEND_KW, **kw})


# --------------------------------------------------------------------------- text helpers
def clean(text) -> str:
    """User text made safe for the sheet: inert as a spreadsheet formula, one line."""
    s = inert_text(text)
    return " ".join(s.replace("\r", " ").replace("\n", " ").replace("\t", " ").split(" ")) if s else s


def site_name(site: dict) -> str:
    """A site's name, cleaned (:func:`clean`)."""
    return clean(site.get("name") or "")


def arr(values) -> np.ndarray:
    """A report list as a float array; None (JSON null) becomes NaN."""
    if values is None:
        return None
    return np.array(values, dtype=float)


def num(value, spec: str, unit: str = "") -> str:
    """Format a number with ``spec`` and ``unit``; a missing value shows as an em dash."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return DASH
    shown = format(value, spec).replace("-", "\u2212")
    return f"{shown}{unit}"


def km(value_m):
    """Metres to kilometres; None stays None."""
    return None if value_m is None else value_m / 1000.0


def nanmax(values):
    """Largest finite value of an array, or None."""
    if values is None or values.size == 0 or not np.isfinite(values).any():
        return None
    return float(np.nanmax(values))


def round_sig(value: float) -> str:
    """A positive number to two significant digits (23, 150, 1.2); an em dash otherwise."""
    if not math.isfinite(value) or value <= 0:
        return DASH
    return f"{float(f'{value:.2g}'):g}"


def dms(value, positive: str, negative: str) -> str:
    """Degrees, minutes and seconds with a hemisphere letter, seconds to 0.01''."""
    if value is None:
        return DASH
    hundredths = int(round(abs(float(value)) * 360000.0))
    deg, rest = divmod(hundredths, 360000)
    minutes, cs = divmod(rest, 6000)
    hemi = positive if value >= 0 else negative
    return f"{deg}\u00b0{minutes:02d}\u2032{cs / 100:05.2f}\u2033 {hemi}"


def k_text(k) -> str:
    """The k-factor as a small fraction when it is one (4/3), else 4 significant digits."""
    if k is None:
        return DASH
    frac = Fraction(float(k)).limit_denominator(12)
    if frac.denominator > 1 and abs(float(frac) - k) < 1e-9:
        return f"{frac.numerator}/{frac.denominator}"
    return f"{k:.4g}"


def abbreviate(name: str, max_chars: int) -> str:
    """``name`` cut to at most ``max_chars`` characters, an ellipsis marking the cut."""
    return name if len(name) <= max_chars else name[:max_chars - 1].rstrip() + ELLIPSIS


def text_width_in(renderer, s: str, fontsize: float, bold: bool = False) -> float:
    """Drawn width of ``s`` [in] at ``fontsize`` in the sheet font."""
    from matplotlib.font_manager import FontProperties

    if not s:
        return 0.0
    prop = FontProperties(family="sans-serif", size=fontsize, weight="bold" if bold else "normal")
    return renderer.get_text_width_height_descent(s, prop, ismath=False)[0] / renderer.dpi


def wrap_text(s: str, max_width_in: float, renderer, fontsize: float, bold: bool = False) -> list[str]:
    """``s`` broken at spaces into lines at most ``max_width_in`` wide (a word too long stays whole)."""
    char_in = max(text_width_in(renderer, "n", fontsize, bold), 1e-3)
    width = max(int(max_width_in / char_in), 4)
    while True:
        lines = textwrap.wrap(s, width=width, break_long_words=False, break_on_hyphens=False) or [""]
        if width <= 4 or all(text_width_in(renderer, line, fontsize, bold) <= max_width_in for line in lines):
            return lines
        width -= 1


def fit(text_artist, max_width_in: float, renderer) -> None:
    """Shorten a Text artist with an ellipsis until it is at most ``max_width_in`` wide."""
    full = text_artist.get_text()
    dpi = text_artist.figure.dpi

    def width(s):
        text_artist.set_text(s)
        return text_artist.get_window_extent(renderer).width / dpi

    if width(full) <= max_width_in:
        return
    lo, hi = 0, len(full)
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if width(full[:mid].rstrip() + ELLIPSIS) <= max_width_in:
            lo = mid
        else:
            hi = mid - 1
    text_artist.set_text(full[:lo].rstrip() + ELLIPSIS)


def cell_text(ax, x, y, s, **kw):
    """Text at data coordinates of ``ax`` drawn as a figure text: no clip path to set up (much faster
    for the many cells of a table); mathtext off."""
    return ax.figure.text(x, y, s, transform=ax.transData, parse_math=False, **kw)


def put_text(ax, x, y, s, **kw):
    """ax.text with mathtext off (a ``$`` in a site name stays a dollar sign)."""
    return ax.text(x, y, s, parse_math=False, **kw)


# --------------------------------------------------------------------------- title block
def draw_title_block(ax, renderer, title: str, subtitle: str, badge: str, badge_style: dict,
                     badge_label: str = "VERDICT", fit_title=None) -> None:
    """Title (15 pt bold), subtitle and a boxed badge at the right, ruled underneath.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        An :func:`inch_axes` over the sheet's top band.
    title, subtitle, badge : str
        The badge is the sheet's one-line verdict, fitted to 4.6 in.
    badge_style : dict
        ``bbox`` keywords of the badge (``fc``, ``ec``, ``lw``).
    badge_label : str
        Small caps label above the badge.
    fit_title : callable, optional
        ``fit_title(text_artist, room_in)`` shortens the title to ``room_in``
        [in]; default :func:`fit` (one ellipsis at the end).
    """
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    box = put_text(ax, width - 0.08, height * 0.5, badge, ha="right", va="center", fontsize=9.5,
                   fontweight="bold", bbox=dict(boxstyle="square,pad=0.45", **badge_style))
    fit(box, 4.6, renderer)
    badge_w = box.get_window_extent(renderer).width / ax.figure.dpi + 0.3
    put_text(ax, width - 0.08, height * 0.5 + 0.23, badge_label, ha="right", va="bottom", fontsize=6.5,
             color="0.3", fontweight="bold")
    head = put_text(ax, 0.0, height - 0.02, title, ha="left", va="top", fontsize=15, fontweight="bold")
    room = width - badge_w - 0.3
    if head.get_window_extent(renderer).width / ax.figure.dpi > room:
        (fit_title or (lambda artist, r: fit(artist, r, renderer)))(head, room)
    sub = put_text(ax, 0.0, 0.04, subtitle, ha="left", va="bottom", fontsize=8.5, color="0.2")
    fit(sub, width - badge_w - 0.3, renderer)
    ax.plot([0.0, width], [-0.08, -0.08], color="0.15", lw=0.9, clip_on=False)


# --------------------------------------------------------------------------- tables
def draw_tables(ax, renderer, blocks, gap: float = 0.12, pad: float = 0.045, max_row_h: float = 0.215,
                wrap_rows=(), max_fontsize: float = 7.0) -> float:
    """Ruled tables side by side across ``ax`` (an :func:`inch_axes`); widths from their contents.

    Parameters
    ----------
    blocks : list of (title, header or None, rows)
        ``header`` is ``["", col1, col2, ...]`` for a table with column
        heads; ``rows`` are tuples of cell strings.  A two-column table's
        title spans both columns.  The font is the largest from 7 pt down to
        6 pt at which the contents fit; cells still too wide are shortened
        with an ellipsis, except in the rows named in ``wrap_rows``.
    wrap_rows : iterable of str
        Row labels (first cell) whose cells are wrapped onto two or more
        lines instead of shortened (full site names).
    max_fontsize : float
        Largest font [pt].

    Returns
    -------
    float
        Height drawn [in], from the top of ``ax`` to the lowest table's bottom rule.
    """
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    tables = [([title] + (header[1:] if header is not None else [""]), rows) for title, header, rows in blocks]
    usable = width - gap * (len(tables) - 1)
    fontsize = max_fontsize
    widths_in = {}       # (text, fontsize, bold) -> drawn width [in], measured once per call
    natural = _natural_widths(tables, renderer, fontsize, pad, widths_in)
    n_cols = sum(len(cols) for cols in natural)
    total = sum(sum(cols) for cols in natural)
    if total > usable:
        fontsize = max(6.0, fontsize * (usable - 2 * pad * n_cols) / (total - 2 * pad * n_cols) - 0.05)
        natural = _natural_widths(tables, renderer, fontsize, pad, widths_in)
        total = sum(sum(cols) for cols in natural)
    if total <= usable:
        widths = [[w + (usable - total) / n_cols for w in cols] for cols in natural]
    else:
        widths = [[w * usable / total for w in cols] for cols in natural]
    wrap_rows = set(wrap_rows)

    def extra_lines(rows, cols):     # further lines of the wrapped rows, in row heights
        return sum(WRAP_LINE * (max(len(lines) for lines in _row_cells(renderer, row, cols, fontsize, pad, True)) - 1)
                   for row in rows if row[0] in wrap_rows)

    n_rows = max(len(rows) + extra_lines(rows, cols) for (_, rows), cols in zip(tables, widths)) + 1
    row_h = min(max_row_h, (height - 0.02) / n_rows)
    x, lowest = 0.0, height
    for (head, rows), cols in zip(tables, widths):
        lowest = min(lowest, draw_table(ax, renderer, x, height, cols, head, rows, fontsize, row_h, pad,
                                        wrap_rows=wrap_rows, widths_in=widths_in))
        x += sum(cols) + gap
    return height - lowest


def _measure(cache, renderer, s, fontsize, bold=False):
    """:func:`text_width_in` through ``cache`` (a dict, or None for no cache)."""
    if cache is None:
        return text_width_in(renderer, s, fontsize, bold)
    key = (s, fontsize, bold)
    if key not in cache:
        cache[key] = text_width_in(renderer, s, fontsize, bold)
    return cache[key]


def _natural_widths(tables, renderer, fontsize, pad, cache=None):
    """Column widths [in] that hold each table's contents at ``fontsize`` (capped by MAX_CELL_IN)."""
    natural = []
    for head, rows in tables:
        cols = []
        for j in range(len(head)):
            head_w = _measure(cache, renderer, head[j], fontsize, True) if (j > 0 or len(head) == 3) else 0.0
            widest = max([_measure(cache, renderer, row[j], fontsize) for row in rows] + [head_w])
            cols.append(min(widest, MAX_CELL_IN * fontsize / 7.0) + 2 * pad)   # long names get cut
        if len(head) == 2:          # a two-column block's title spans both columns
            cols[1] = max(cols[1], text_width_in(renderer, head[0], fontsize, True) + 2 * pad - cols[0])
        natural.append(cols)
    return natural


def _row_cells(renderer, row, widths, fontsize, pad, wrap: bool):
    """A row's cells as lists of lines: wrapped at spaces when ``wrap`` (never cut), else one line each."""
    if not wrap:
        return [[cell] for cell in row]
    return [[cell] if j == 0 else wrap_text(cell, w - 2 * pad, renderer, fontsize) for j, (cell, w)
            in enumerate(zip(row, widths))]


def draw_table(ax, renderer, x0, y_top, widths, header, rows, fontsize, row_h, pad, wrap_rows=(),
               widths_in=None) -> float:
    """One ruled table: dark header row, shaded alternate rows; "NO..." cells in bold.

    Rows whose label is in ``wrap_rows`` are as tall as their longest wrapped cell.  Returns the
    y of the bottom rule [in].
    """
    from matplotlib.patches import Rectangle

    total = sum(widths)
    ax.add_patch(Rectangle((x0, y_top - row_h), total, row_h, fc="0.22", ec="none", zorder=1))
    lefts = np.concatenate([[x0], x0 + np.cumsum(widths)[:-1]])
    for j, (cell, left, w) in enumerate(zip(header, lefts, widths)):
        if not cell:
            continue
        room = total - (left - x0) if (j == 0 and len(header) == 2 and not header[1]) else w
        t = put_text(ax, left + pad, y_top - 0.5 * row_h, cell, ha="left", va="center", fontsize=fontsize,
                     fontweight="bold", color="white", zorder=2)
        fit(t, room - 2 * pad, renderer)
    top = y_top - row_h
    for i, row in enumerate(rows, start=1):
        wrap = row[0] in wrap_rows
        cells = _row_cells(renderer, row, widths, fontsize, pad, wrap)
        n_lines = max(len(lines) for lines in cells)
        h = row_h * (1.0 + WRAP_LINE * (n_lines - 1))
        y = top - 0.5 * h
        if i % 2 == 0:
            ax.add_patch(Rectangle((x0, top - h), total, h, fc=SHADE, ec="none", zorder=0))
        for j, (lines, left, w) in enumerate(zip(cells, lefts, widths)):
            cell = "\n".join(lines)
            strong = j > 0 and (cell.startswith("NO") or cell.startswith("NOT"))
            t = cell_text(ax, left + pad, y, cell, ha="left", va="center", fontsize=fontsize, linespacing=1.0,
                          color="0.25" if j == 0 else "black", fontweight="bold" if strong else "normal", zorder=2)
            if not wrap and _measure(widths_in, renderer, cell, fontsize, strong) > w - 2 * pad:
                fit(t, w - 2 * pad, renderer)
        top -= h
    bottom = top
    ax.plot([x0, x0 + total], [bottom, bottom], color=RULE, lw=0.8)
    if len(lefts) > 1:   # every column rule in one artist (fewer artists: faster drawing)
        xs = np.repeat(lefts[1:], 3)
        ys = np.tile([bottom, y_top - row_h, np.nan], len(lefts) - 1)
        ax.plot(xs, ys, color="0.75", lw=0.4)
    return bottom


# --------------------------------------------------------------------------- provenance footer
def source_text(dem: dict | None, n_points: int | None = None) -> str:
    """One line naming the elevation data: file, sha256 prefix, pixel size, CRS, voids filled.

    ``dem`` is the report's ``dem`` block; a surveyed profile (``kind ==
    "surveyed"``) names its file and ``n_points``.
    """
    dem = dem or {}
    sources = dem.get("sources") or []
    if dem.get("kind") == "surveyed":
        names = ", ".join(clean(os.path.basename(str(s.get("path") or ""))) for s in sources) or DASH
        return f"Terrain: surveyed profile {names} ({n_points} points, no coordinates)"
    parts = []
    for source in sources[:3]:
        digest = clean(str(source.get("sha256") or ""))[:12]
        parts.append(f"{clean(os.path.basename(str(source.get('path') or '')))} "
                     f"({'sha256 ' + digest + ', ' if digest else ''}"
                     f"{resolution_text(source.get('resolution'), source.get('crs'))}, "
                     f"{clean(source.get('crs') or 'CRS unknown')})")
    more = f" and {len(sources) - 3} more" if len(sources) > 3 else ""
    filled = dem.get("voids_filled") or 0
    voids = f"; {filled} samples interpolated across voids" if filled else ""
    return f"Elevation data: {'; '.join(parts) or DASH}{more}{voids}"


def resolution_text(resolution, crs) -> str:
    """Pixel size in arc-seconds for a geographic CRS, else in the CRS's units."""
    if not resolution:
        return "resolution unknown"
    rx, ry = (float(v) for v in resolution[:2])
    geographic = False
    if crs:
        try:
            import pyproj

            geographic = pyproj.CRS.from_user_input(crs).is_geographic
        except Exception:  # an unparsable CRS string: print the numbers as they are
            geographic = False
    if geographic:
        return f"{rx * 3600:.3g}\u2033 \u00d7 {ry * 3600:.3g}\u2033 pixels"
    return f"{rx:.4g} \u00d7 {ry:.4g} pixels (CRS units)"


def draw_footer(ax, renderer, report: dict, source_line: str, date_text: str | None = None) -> None:
    """Provenance (elevation data; tool, schema, date, warnings) and the caution line, ruled above."""
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    date_text = date_text or datetime.date.today().isoformat()
    ax.plot([0.0, width], [height, height], color="0.15", lw=0.9)
    line1 = put_text(ax, 0.0, height - 0.05, source_line, ha="left", va="top", fontsize=6.5, color="0.15")
    fit(line1, width, renderer)
    warnings = list(dict.fromkeys(clean(w) for w in (report.get("warnings") or [])))   # each once
    tool = (f"profiler {clean(report.get('tool_version') or __version__)}  {MIDDOT}  report "
            f"{clean(report.get('schema') or '')}  {MIDDOT}  drawn {clean(date_text)}")
    if warnings:
        tool += f"  {MIDDOT}  warnings: " + "; ".join(warnings)
    line2 = put_text(ax, 0.0, height - 0.19, tool, ha="left", va="top", fontsize=6.5, color="0.15")
    fit(line2, width, renderer)
    line3 = put_text(ax, 0.0, height - 0.33, CAUTION, ha="left", va="top", fontsize=7.0, fontweight="bold")
    fit(line3, width, renderer)
