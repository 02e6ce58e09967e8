"""The sheet family's shared style: paper, fonts, frame, title block, tables, footer, text.

Every sheet (link, network, later coverage and siting) is drawn the same way:

1. :func:`new_sheet` gives a landscape :class:`matplotlib.figure.Figure` on
   the Agg canvas with the :func:`draw_frame` border; :func:`inch_axes`
   places invisible axes whose data coordinates are inches, for text;
2. :func:`draw_title_block` draws the title, the subtitle and a boxed
   verdict in the top band, with the run's propagation model and
   percentages right under the verdict (its ``note``, the line of
   :func:`profiler.io.report.model_line`: "P.1812-8, 50 % time, 95 %
   locations"); :func:`draw_tables` ruled tables whose column
   widths follow their contents; :func:`sheet_legend` a legend in the
   family's style;
3. :func:`draw_footer` draws the provenance (elevation files with their
   sha256 prefix, resolution and CRS; tool version, report schema, date,
   warnings) and the caution line :data:`profiler.CAUTION`;
4. :func:`write_sheet` checks the format, paper and dpi, and writes the
   figure and its continuation sheets (:mod:`profiler.plot.continuation`)
   all or nothing (temporary files, then rename) inside :func:`style`.

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
from fractions import Fraction
from pathlib import Path

import numpy as np

from ..about import CAUTION, __version__
from ..errors import ProfilerError
from ..io.outputs import check_output_path
from ..io.report import inert_text
from . import audit
from .style import style
from .textfit import MIN_FONT_PT, Fitted, Measure, fit_text, text_height_in, wrap_chars, wrap_lines

#: Landscape paper sizes (width, height) [in]: ISO 216 A4 is 297 mm x 210 mm,
#: ANSI letter is 11 in x 8.5 in.
PAPER_SIZES_IN = {"a4": (297.0 / 25.4, 210.0 / 25.4), "letter": (11.0, 8.5)}

#: File formats by extension.
FIGURE_FORMATS = ("png", "pdf", "svg")

DASH = "\u2014"           # em dash: a value that is not known
EN = "\u2013"             # en dash in a link name
MIDDOT = "\u00b7"
ELLIPSIS = "\u2026"

NODATA_HATCH = "////"     # no data (map outside the elevation model, empty panel)

#: Title-block badge styles (``bbox`` keywords): heavier border as the news gets worse, so the
#: badge reads in greyscale too.
BADGE_GOOD = {"fc": "#e2f0dc", "ec": "0.1", "lw": 0.8}
BADGE_WARN = {"fc": "#fbeccb", "ec": "0.1", "lw": 1.6}
BADGE_BAD = {"fc": "#f6d2d2", "ec": "0.0", "lw": 2.6}
BADGE_PLAIN = {"fc": "white", "ec": "0.1", "lw": 0.8}     # no verdict: a continuation sheet's number

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


def write_sheet(path, paper: str, dpi, build, title: str, report: dict, files=None) -> None:
    """Check the output, build the sheets with ``build()`` and write them, all or nothing.

    ``build`` returns one :class:`matplotlib.figure.Figure` or a list of them: the sheet and its
    continuation sheets (:mod:`profiler.plot.continuation`).  A PDF gets every sheet as a page of
    the one file; a PNG or SVG ``NAME.png`` gets the first, and sheet *k* goes to ``NAME-k.png``
    beside it (:func:`~profiler.plot.continuation_files.continuation_path`).  Continuation files of an
    earlier run beyond the sheets written now are deleted
    (:func:`~profiler.plot.continuation_files.stale_continuations`).  Every file is written to a
    temporary file and renamed only when all succeeded.

    Parameters
    ----------
    path : str or os.PathLike
        ``.png``, ``.pdf`` or ``.svg``; a missing folder fails before drawing.  With ``files``,
        the temporary file to write the first sheet to.
    paper : {"a4", "letter"}
    dpi : float
        Resolution of a PNG and of the rasters embedded in a PDF or SVG [dpi].
    build : callable
        No arguments; returns the Figure or the list of Figures.
    title : str
        Document title for the file's metadata.
    report : dict
        The report drawn (its ``tool_version`` goes into the metadata).
    files : profiler.io.outputs.ExtraFiles, optional
        The run's transaction (:func:`profiler.io.outputs.write_outputs`): continuation files are
        claimed from it and renamed with the run's other outputs.  Without it the sheet writes
        its own files atomically.
    """
    from ..io.outputs import ExtraFiles, Transaction
    from .continuation_files import stale_continuations

    own = files is None
    target = Path(path) if own else Path(files.target)
    fmt = figure_format(target)
    paper_size_in(paper)
    dpi = check_dpi(dpi)
    if own:
        check_output_path(path, stdout=False)
        transaction = Transaction()
        files = ExtraFiles(target, "figure", transaction)
    try:
        tmp = files.claim(target) if own else Path(path)
        with style():
            figures = build()
            figures = list(figures) if isinstance(figures, (list, tuple)) else [figures]
            _save_sheets(figures, tmp, target, fmt, dpi, title, report, files)
        for stale in stale_continuations(target, len(figures)) if fmt != "pdf" else ():
            files.remove_on_commit(stale)
        if own:
            transaction.commit()
    except BaseException:
        if own:
            transaction.abort()
        raise


def _save_sheets(figures, tmp, target, fmt, dpi, title, report, files) -> None:
    """Save the sheets: a PDF as pages of ``tmp``; else the first to ``tmp``, the others to claimed files."""
    from .continuation_files import continuation_path, continued_title

    # zlib level 1 for PNG: about 0.15 s less at 200 dpi for a slightly larger file
    extra = {"pil_kwargs": {"compress_level": 1}} if fmt == "png" else {}
    try:
        if fmt == "pdf":
            from matplotlib.backends.backend_pdf import PdfPages

            with PdfPages(tmp, metadata=metadata(title, report, fmt)) as pdf:
                for fig in figures:
                    fig.savefig(pdf, format="pdf", dpi=dpi)
            return
        for k, fig in enumerate(figures, start=1):
            out = tmp if k == 1 else files.claim(continuation_path(target, k))
            info = metadata(title if k == 1 else continued_title(title, k, len(figures)), report, fmt)
            fig.savefig(out, format=fmt, dpi=dpi, metadata=info, **extra)
    except OSError as exc:
        raise ProfilerError(f"cannot write {target}: {exc.strerror or exc}") from exc


def metadata(title: str, report: dict, fmt: str) -> dict:
    """File metadata (title, creator, the caution) under the keys each format knows."""
    creator = f"profiler {report.get('tool_version') or __version__}"
    if fmt == "png":
        return {"Title": title, "Software": creator, "Disclaimer": CAUTION}
    if fmt == "pdf":
        return {"Title": title, "Creator": creator, "Subject": CAUTION}
    return {"Title": title, "Creator": creator, "Description": CAUTION}


# --------------------------------------------------------------------------- style and layout
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
    """``name`` whole, broken onto lines of at most ``max_chars`` characters (at spaces where it can).

    Formerly cut with an ellipsis; a sheet never cuts a name, so a long name
    now takes more lines (:func:`profiler.plot.textfit.wrap_chars`).
    """
    return wrap_chars(name, max_chars)


def text_width_in(renderer, s: str, fontsize: float, bold: bool = False) -> float:
    """Drawn width of ``s`` [in] at ``fontsize`` in the sheet font."""
    from matplotlib.font_manager import FontProperties

    if not s:
        return 0.0
    prop = FontProperties(family="sans-serif", size=fontsize, weight="bold" if bold else "normal")
    return renderer.get_text_width_height_descent(s, prop, ismath=False)[0] / renderer.dpi


def wrap_text(s: str, max_width_in: float, renderer, fontsize: float, bold: bool = False,
              measure=None) -> list[str]:
    """``s`` broken at spaces into lines at most ``max_width_in`` wide; a word wider than that is broken
    between characters (never cut).  ``measure``: a :class:`~profiler.plot.textfit.Measure` to share."""
    return wrap_lines(s, max_width_in, measure or Measure(renderer), fontsize, bold)


def fit(text_artist, max_width_in: float, renderer, *, max_lines: int = 1, max_height_in: float | None = None,
        min_fontsize: float = MIN_FONT_PT, measure=None) -> bool:
    """Fit a Text artist into ``max_width_in`` [in]: wrap at spaces (up to ``max_lines`` lines, or as
    many as ``max_height_in`` [in] allows), then shrink its font down to ``min_fontsize`` (default 5 pt).

    Never cuts.  Returns False when even the minimum does not fit (the
    artist then holds the whole text at the minimum size, wider than asked)
    so that the caller can move it elsewhere.
    """
    bold = text_artist.get_fontweight() in ("bold", "heavy", "black", 700, 800, 900)
    if max_height_in is not None:
        max_lines = None
    laid = fit_text(text_artist.get_text(), max_width_in, measure or Measure(renderer), text_artist.get_fontsize(),
                    min_fontsize=min_fontsize, max_lines=max_lines, max_height_in=max_height_in, bold=bold,
                    linespacing=text_artist.get_linespacing())
    text_artist.set_text(laid.text)
    text_artist.set_fontsize(laid.fontsize)
    return laid.fits


def cell_text(ax, x, y, s, **kw):
    """Text at data coordinates of ``ax`` drawn as a figure text: no clip path to set up (much faster
    for the many cells of a table); mathtext off."""
    return ax.figure.text(x, y, s, transform=ax.transData, parse_math=False, **kw)


def put_text(ax, x, y, s, **kw):
    """ax.text with mathtext off (a ``$`` in a site name stays a dollar sign)."""
    return ax.text(x, y, s, parse_math=False, **kw)


# --------------------------------------------------------------------------- title block
BADGE_PAD = 0.45          # badge box padding [fraction of its font size]


def draw_title_block(ax, renderer, title: str, subtitle: str, badge: str, badge_style: dict,
                     badge_label: str = "VERDICT", fit_title=None, note: str = "") -> bool:
    """Title (15 pt bold), subtitle and a boxed badge at the right, ruled underneath; nothing cut.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        An :func:`inch_axes` over the sheet's top band.
    title, subtitle, badge : str
        The badge is the sheet's whole verdict: at most 4.6 in (and 45 % of
        the band) wide, on one or two even lines, its font shrunk from 9.5 pt
        down to :data:`~profiler.plot.textfit.MIN_FONT_PT` (5 pt) only when
        two lines are not enough.  The title takes the width left of the
        badge: wrapped at spaces (long words between characters) and shrunk
        from 15 pt down to 5 pt to fit the height left above the subtitle
        (one or two lines at 8.5 pt, shrunk down to 5 pt).
    badge_style : dict
        ``bbox`` keywords of the badge (``fc``, ``ec``, ``lw``).
    badge_label : str
        Small caps label above the badge.
    fit_title : callable, optional
        ``fit_title(text_artist, room_in)``: the caller's own fitting of the
        title to ``room_in`` [in] wide, called only when the title is wider
        than that on one line at 15 pt (default: wrap and shrink as above).
    note : str, optional
        A line right under the badge (the run's propagation model and
        percentages, :func:`profiler.io.report.model_line`): 6.5 pt, wrapped
        onto two lines and shrunk down to 5 pt only when the badge's column
        (at most 4.6 in) is too narrow for it; the badge shrinks to leave it room.

    Returns
    -------
    bool
        True when everything fits at 5 pt or more; False when some text
        still overflows its room at 5 pt (the caller may raise or move on).
    """
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    measure = Measure(renderer)
    label_h = text_height_in(1, 6.5, 1.0)
    note_fit = fit_text(note, min(4.6, 0.45 * width), measure, 6.5, max_lines=2, linespacing=1.1) if note else None
    note_h = note_fit.height_in + 0.03 if note_fit else 0.0
    badge_fit = _fit_badge(badge, width, height - label_h - 0.04 - note_h, measure)
    pad_in = BADGE_PAD * badge_fit.fontsize / 72.0
    badge_w, badge_h = badge_fit.width_in + 2 * pad_in, badge_fit.height_in + 2 * pad_in
    y0 = max(0.0, 0.5 * (height - badge_h - 0.04 - label_h - note_h)) + note_h
    box = put_text(ax, width - pad_in, y0 + pad_in, badge_fit.text, ha="right", va="bottom",
                   fontsize=badge_fit.fontsize, fontweight="bold", linespacing=1.2, multialignment="center",
                   bbox=dict(boxstyle=f"square,pad={BADGE_PAD}", **badge_style), gid="title-badge")
    audit.contain(box, ax, (width - badge_w - 0.02, 0.0, width + 0.02, height), name="verdict badge")
    label = put_text(ax, width - pad_in, y0 + badge_h + 0.04, badge_label, ha="right", va="bottom",
                     fontsize=6.5, color="0.3", fontweight="bold")
    audit.contain(label, ax, name="title band")
    column_w = badge_w
    if note_fit:
        line = put_text(ax, width - pad_in, y0 - 0.03, note_fit.text, ha="right", va="top",
                        fontsize=note_fit.fontsize, color="0.2", linespacing=1.1, multialignment="right",
                        gid="title-model")
        audit.contain(line, ax, (width - 4.6 - 0.02, 0.0, width + 0.02, y0), name="model line")
        column_w = max(badge_w, note_fit.width_in + pad_in)
    room = width - column_w - 0.3
    sub_fit = fit_text(subtitle, room, measure, 8.5, max_lines=2, max_height_in=0.26, linespacing=1.15)
    sub = put_text(ax, 0.0, 0.04, sub_fit.text, ha="left", va="bottom", fontsize=sub_fit.fontsize, color="0.2",
                   linespacing=1.15)
    audit.contain(sub, ax, (0.0, 0.0, room, height), name="subtitle")
    title_room_h = height - 0.02 - (0.04 + sub_fit.height_in + 0.05)
    head = put_text(ax, 0.0, height - 0.02, title, ha="left", va="top", fontsize=15, fontweight="bold",
                    linespacing=1.05)
    if fit_title is not None and measure(title, 15, True) > room:     # the caller's fitting, only when needed
        fit_title(head, room)
        title_ok = True
    else:
        title_ok = fit(head, room, renderer, max_height_in=title_room_h, measure=measure)
    audit.contain(head, ax, (0.0, 0.04 + sub_fit.height_in, room, height), name="title")
    ax.plot([0.0, width], [-0.08, -0.08], color="0.15", lw=0.9, clip_on=False)
    return bool(badge_fit.fits and sub_fit.fits and title_ok and (note_fit is None or note_fit.fits))


def _fit_badge(badge: str, width: float, room_h: float, measure) -> Fitted:
    """The badge on one line at 9.5 pt if it can, else two even lines, shrinking only when needed."""
    max_w = min(4.6, 0.45 * width)

    def room(fit_size):         # text height left inside the box at a font size
        return room_h - 2 * BADGE_PAD * fit_size / 72.0

    size = 9.5
    while True:
        pad = 2 * BADGE_PAD * size / 72.0
        laid = fit_text(badge, max_w - pad, measure, size, min_fontsize=size, max_lines=2,
                        max_height_in=room(size), bold=True, balance=True)
        if laid.fits or size <= MIN_FONT_PT + 1e-9:
            return laid
        size = max(MIN_FONT_PT, size - 0.5)


# --------------------------------------------------------------------------- provenance footer
def source_text(dem: dict | None, n_points: int | None = None, ends_located: bool = False) -> str:
    """One line naming the elevation data: file, sha256 prefix, pixel size, CRS, voids filled.

    ``dem`` is the report's ``dem`` block; a surveyed profile (``kind ==
    "surveyed"``) names its file and ``n_points`` (None: not stated) and
    whether its ends have coordinates (``ends_located``: --site-a/--site-b
    given) or none of its points do.
    """
    dem = dem or {}
    sources = dem.get("sources") or []
    if dem.get("kind") == "surveyed":
        names = ", ".join(clean(os.path.basename(str(s.get("path") or ""))) for s in sources) or DASH
        where = "only the ends have coordinates" if ends_located else "no coordinates"
        count = "" if n_points is None else f"{n_points} points, "
        return f"Terrain: surveyed profile {names} ({count}{where})"
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


def draw_footer(ax, renderer, report: dict, source_line: str, date_text: str | None = None) -> bool:
    """Provenance (elevation data; tool, schema, date, warnings) and the caution line, ruled above.

    Each line wraps at spaces to the width of ``ax``; when they are together
    too tall for ``ax`` all shrink (6.5 pt, the caution 7 pt bold) down to
    :data:`~profiler.plot.textfit.MIN_FONT_PT` (5 pt).  Never cut.  Returns
    False when even 5 pt does not fit the height of ``ax``.
    """
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    date_text = date_text or datetime.date.today().isoformat()
    ax.plot([0.0, width], [height, height], color="0.15", lw=0.9)
    warnings = list(dict.fromkeys(clean(w) for w in (report.get("warnings") or [])))   # each once
    tool = (f"profiler {clean(report.get('tool_version') or __version__)}  {MIDDOT}  report "
            f"{clean(report.get('schema') or '')}  {MIDDOT}  drawn {clean(date_text)}")
    if warnings:
        tool += f"  {MIDDOT}  warnings: " + "; ".join(warnings)
    items = [(source_line, 6.5, False), (tool, 6.5, False), (CAUTION, 7.0, True)]
    return draw_stacked(ax, renderer, items, top=height - 0.05, color="0.15", gap=0.045)


def draw_stacked(ax, renderer, items, top: float, color: str = "0.1", gap: float = 0.0,
                 linespacing: float = 1.25, min_fontsize: float = MIN_FONT_PT) -> bool:
    """Lines of text from ``top`` [in] down ``ax``, each wrapped to the width of ``ax`` (never cut).

    ``items`` are ``(text, fontsize, bold)``; when they do not fit above the
    bottom of ``ax`` every size shrinks by the same steps down to
    ``min_fontsize`` (5 pt).  Each text is marked for the layout audit.
    Returns False when even the minimum does not fit.
    """
    width = ax.get_xlim()[1]
    measure = Measure(renderer)
    scale = 1.0
    while True:
        laid = [(fit_text(text, width, measure, max(min_fontsize, size * scale), min_fontsize=min_fontsize,
                          bold=bold, linespacing=linespacing), bold) for text, size, bold in items if text]
        used = sum(f.height_in for f, _ in laid) + gap * max(0, len(laid) - 1)
        small = min((f.fontsize for f, _ in laid), default=min_fontsize)
        if used <= top + 1e-9 or small <= min_fontsize + 1e-9:
            break
        scale -= 0.25 / max(size for _, size, _ in items)
    y = top
    for f, bold in laid:
        t = put_text(ax, 0.0, y, f.text, ha="left", va="top", fontsize=f.fontsize, color=color if not bold else "black",
                     fontweight="bold" if bold else "normal", linespacing=linespacing)
        audit.contain(t, ax, name="notes")
        y -= f.height_in + gap
    return used <= top + 1e-9


def ends_located(report: dict) -> bool:
    """Both sites of a link or mast report have a latitude and longitude (a surveyed profile may)."""
    return all((report.get(key) or {}).get("lat_deg") is not None for key in ("site_a", "site_b"))
