"""The link figure: terrain profile, locator map, title block and results table.

:func:`write_link_figure` draws one landscape sheet (A4 or US letter) from
the JSON report dictionary (``LinkResult.to_dict()``) and writes it as PNG,
PDF or SVG, chosen by the file extension.  The sheet holds

* the profile panel: terrain raised by the Earth bulge for the chosen k,
  the straight line of sight between the antenna tips, the first Fresnel
  zone, the required-clearance boundary, the masts to scale, every stretch
  where the clearance falls short of the requirement and the worst point;
* the locator panel: the path over a hillshade of the elevation model with
  a north arrow and a scale bar (a note instead for a surveyed profile);
* the title block and the results table (sites, path, link budget), the
  elevation data used, the tool version, the date and a caution line.

Meaning is carried by line styles, hatching and markers, not by colour
alone, so the sheet stays legible when printed in greyscale.  Text stays
text: TrueType (Type 42) fonts in PDF and ``<text>`` elements in SVG.

matplotlib is imported only inside the functions of this module, and only
its object-oriented API is used (``matplotlib.figure.Figure`` with the Agg
canvas), so no pyplot state is touched.
"""

from __future__ import annotations

import datetime
import math
import os
from fractions import Fraction
from pathlib import Path

import numpy as np

from . import CAUTION, __version__
from .errors import ProfilerError
from .bands import wavelength_m
from .geometry import fresnel_radius_m
from .outputs import atomic_path
from .report import inert_text, verdict

__all__ = ["PAPER_SIZES_IN", "FIGURE_FORMATS", "figure_format", "paper_size_in", "write_mast_figure",
           "build_link_figure", "write_link_figure"]

#: Landscape paper sizes (width, height) [in]: ISO 216 A4 is 297 mm x 210 mm,
#: ANSI letter is 11 in x 8.5 in.
PAPER_SIZES_IN = {"a4": (297.0 / 25.4, 210.0 / 25.4), "letter": (11.0, 8.5)}

#: File formats by extension.
FIGURE_FORMATS = ("png", "pdf", "svg")

_DASH = "\u2014"          # em dash: a value that is not known
_EN = "\u2013"            # en dash in the link name
_MIDDOT = "\u00b7"

# Greyscale-safe palette: every element also differs by line style, hatch or marker.
_TERRAIN_FACE = "#d2bf97"
_TERRAIN_EDGE = "#4b3a22"
_FRESNEL_FACE = "#d3e3f0"
_FRESNEL_EDGE = "#24527a"
_REQUIRED = "#5b2c83"
_SHORT_FACE = "#efb3b3"
_SHORT_EDGE = "#9c1414"
_MAST = "#1c1c1c"
_RULE = "0.35"
_SHADE = "0.93"

_MAX_CELL_IN = 1.12       # widest table cell at 7 pt [in]; longer text is shortened with an ellipsis
_FRESNEL_STYLE = (0, (5.0, 2.5))
_REQUIRED_STYLE = (0, (7.0, 2.0, 1.5, 2.0))
_SHORT_HATCH = "xxxx"
_NODATA_HATCH = "////"


# --------------------------------------------------------------------------- public API
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


def write_link_figure(report: dict, path, paper: str = "a4", dpi: float = 200,
                      dem_paths=None, *, date_text: str | None = None) -> None:
    """Draw the link sheet and write it to ``path`` (PNG, PDF or SVG by extension).

    Parameters
    ----------
    report : dict
        The JSON report (``LinkResult.to_dict()``).
    path : str or os.PathLike
        Output file; ``.png``, ``.pdf`` or ``.svg``.  Written atomically
        (temporary file beside it, then renamed), so a failure leaves nothing
        half-written.
    paper : {"a4", "letter"}
        Landscape paper size: A4 297 mm x 210 mm or letter 11 in x 8.5 in.
    dpi : float
        Resolution [dots per inch] of a PNG and of the hillshade embedded in
        a PDF or SVG.
    dem_paths : list of str or os.PathLike, optional
        Elevation files or folders for the locator hillshade; none (or a
        surveyed profile) draws the panel with a note instead of a map.
    date_text : str, optional
        Date printed on the sheet; default today's date (ISO 8601).

    Raises
    ------
    ProfilerError
        Unknown extension or paper size, a non-positive dpi, a missing output
        folder or a write error.
    """
    fmt = figure_format(path)
    paper_size_in(paper)
    try:
        dpi = float(dpi)
    except (TypeError, ValueError):
        raise ProfilerError(f"--dpi must be a number, got {dpi!r}") from None
    if not (math.isfinite(dpi) and 10.0 <= dpi <= 2400.0):
        raise ProfilerError(f"--dpi must be between 10 and 2400, got {dpi:g}")
    with atomic_path(path) as tmp, _style():      # a missing folder fails here, before drawing
        fig = build_link_figure(report, paper=paper, dem_paths=dem_paths, date_text=date_text)
        try:
            fig.savefig(tmp, format=fmt, dpi=dpi, metadata=_metadata(report, fmt))
        except OSError as exc:
            raise ProfilerError(f"cannot write {path}: {exc.strerror or exc}") from exc


def build_link_figure(report: dict, paper: str = "a4", dem_paths=None, *, date_text: str | None = None):
    """Build the link sheet as a :class:`matplotlib.figure.Figure` (Agg canvas).

    Parameters are those of :func:`write_link_figure`.  The figure is not
    attached to pyplot; save it with ``fig.savefig(...)`` inside the same
    style context as :func:`write_link_figure` for identical output.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    width_in, height_in = paper_size_in(paper)
    with _style():
        fig = Figure(figsize=(width_in, height_in), dpi=100)
        FigureCanvasAgg(fig)
        renderer = fig.canvas.get_renderer()
        boxes = _layout(width_in, height_in)
        _draw_frame(fig, width_in, height_in)
        header = _inch_axes(fig, boxes["header"], width_in, height_in)
        _draw_header(header, report, renderer)
        profile_ax = fig.add_axes(_fraction(boxes["profile"], width_in, height_in))
        _draw_profile(fig, profile_ax, report, width_in, height_in)
        map_ax = fig.add_axes(_fraction(boxes["map"], width_in, height_in))
        _draw_locator(map_ax, report, dem_paths, renderer)
        table = _inch_axes(fig, boxes["table"], width_in, height_in)
        _draw_results(table, report, renderer)
        footer = _inch_axes(fig, boxes["footer"], width_in, height_in)
        _draw_footer(footer, report, renderer, date_text)
    return fig


# --------------------------------------------------------------------------- style and layout
def _style():
    """Style context: matplotlib defaults plus this sheet's fonts and sizes.

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


def _layout(width_in: float, height_in: float) -> dict:
    """Boxes (left, bottom, width, height) [in] of the sheet's parts."""
    margin = 0.38
    inner_w = width_in - 2 * margin
    footer = (margin, margin, inner_w, 0.44)
    band_bottom = margin + 0.52
    band_h = 2.78 + (height_in - 8.27)
    map_left = margin + 0.5
    map_w = 2.6 - 0.6 * max(0.0, 11.69 - width_in)      # narrower paper: narrower map
    map_box = (map_left, band_bottom + 0.36, map_w, band_h - 0.36 - 0.2)
    table_left = map_left + map_w + 0.25
    table = (table_left, band_bottom, width_in - margin - table_left, band_h)
    header_h = 0.66
    header = (margin, height_in - margin - header_h, inner_w, header_h)
    prof_top = height_in - margin - header_h - 0.36
    prof_bottom = band_bottom + band_h + 0.62
    prof_left = margin + 0.58
    profile = (prof_left, prof_bottom, width_in - margin - 0.08 - prof_left, prof_top - prof_bottom)
    return {"header": header, "profile": profile, "map": map_box, "table": table, "footer": footer}


def _fraction(box, width_in, height_in):
    left, bottom, w, h = box
    return (left / width_in, bottom / height_in, w / width_in, h / height_in)


def _inch_axes(fig, box, width_in, height_in):
    """An invisible axes whose data coordinates are inches from its lower-left corner."""
    ax = fig.add_axes(_fraction(box, width_in, height_in))
    ax.set_xlim(0.0, box[2])
    ax.set_ylim(0.0, box[3])
    ax.set_axis_off()
    return ax


def _draw_frame(fig, width_in, height_in):
    from matplotlib.patches import Rectangle

    pad = 0.22
    fig.add_artist(Rectangle((pad / width_in, pad / height_in), 1 - 2 * pad / width_in, 1 - 2 * pad / height_in,
                             transform=fig.transFigure, fill=False, lw=0.9, ec="0.15"))


def _metadata(report: dict, fmt: str) -> dict:
    title = f"Radio path profile: {_name(report['site_a'])} {_EN} {_name(report['site_b'])}"
    creator = f"profiler {report.get('tool_version') or __version__}"
    if fmt == "png":
        return {"Title": title, "Software": creator, "Disclaimer": CAUTION}
    if fmt == "pdf":
        return {"Title": title, "Creator": creator, "Subject": CAUTION}
    return {"Title": title, "Creator": creator, "Description": CAUTION}


# --------------------------------------------------------------------------- text helpers
def _clean(text) -> str:
    """User text made safe for the sheet: inert as a spreadsheet formula, one line."""
    s = inert_text(text)
    return " ".join(s.replace("\r", " ").replace("\n", " ").replace("\t", " ").split(" ")) if s else s


def _name(site: dict) -> str:
    return _clean(site.get("name") or "")


def _arr(values) -> np.ndarray:
    """A report list as a float array; None (JSON null) becomes NaN."""
    if values is None:
        return None
    return np.array(values, dtype=float)


def _f(value, spec: str, unit: str = "") -> str:
    """Format a number with ``spec`` and ``unit``; a missing value shows as an em dash."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return _DASH
    text = format(value, spec).replace("-", "\u2212")
    return f"{text}{unit}"


def _dms(value, positive: str, negative: str) -> str:
    """Degrees, minutes and seconds with a hemisphere letter, seconds to 0.01''."""
    if value is None:
        return _DASH
    hundredths = int(round(abs(float(value)) * 360000.0))
    deg, rest = divmod(hundredths, 360000)
    minutes, cs = divmod(rest, 6000)
    hemi = positive if value >= 0 else negative
    return f"{deg}\u00b0{minutes:02d}\u2032{cs / 100:05.2f}\u2033 {hemi}"


def _k_text(k) -> str:
    """The k-factor as a small fraction when it is one (4/3), else 4 significant digits."""
    if k is None:
        return _DASH
    frac = Fraction(float(k)).limit_denominator(12)
    if frac.denominator > 1 and abs(float(frac) - k) < 1e-9:
        return f"{frac.numerator}/{frac.denominator}"
    return f"{k:.4g}"


def _fit(text_artist, max_width_in: float, renderer) -> None:
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
        if width(full[:mid].rstrip() + "\u2026") <= max_width_in:
            lo = mid
        else:
            hi = mid - 1
    text_artist.set_text(full[:lo].rstrip() + "\u2026")


def _text(ax, x, y, s, **kw):
    """ax.text with mathtext off (a ``$`` in a site name stays a dollar sign)."""
    return ax.text(x, y, s, parse_math=False, **kw)


# --------------------------------------------------------------------------- header
def _verdict_style(report: dict) -> dict:
    closes = report["budget"]["closes"]
    if report["fresnel_clear"] and closes:
        return {"fc": "#e2f0dc", "ec": "0.1", "lw": 0.8}
    if closes:
        return {"fc": "#fbeccb", "ec": "0.1", "lw": 1.6}
    return {"fc": "#f6d2d2", "ec": "0.0", "lw": 2.6}


def _draw_header(ax, report: dict, renderer) -> None:
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    verdict_text = _clean(verdict(report))
    box = _text(ax, width - 0.08, height * 0.5, verdict_text, ha="right", va="center", fontsize=9.5,
                fontweight="bold", bbox=dict(boxstyle="square,pad=0.45", **_verdict_style(report)))
    _fit(box, 4.6, renderer)
    verdict_w = box.get_window_extent(renderer).width / ax.figure.dpi + 0.3
    _text(ax, width - 0.08, height * 0.5 + 0.23, "VERDICT", ha="right", va="bottom", fontsize=6.5,
          color="0.3", fontweight="bold")

    name_a, name_b = _name(report["site_a"]), _name(report["site_b"])
    title = _text(ax, 0.0, height - 0.02, f"{name_a} {_EN} {name_b}", ha="left", va="top",
                  fontsize=15, fontweight="bold")
    room = width - verdict_w - 0.3
    dpi = ax.figure.dpi
    if title.get_window_extent(renderer).width / dpi > room:
        # Too long: shorten the longer name first, so both names stay visible.
        widths = []
        for name in (name_a, name_b, f" {_EN} "):
            title.set_text(name)
            widths.append(title.get_window_extent(renderer).width / dpi)
        share = room - widths[2]
        short = min(widths[0], widths[1], share / 2.0)
        budgets = (short, share - short) if widths[0] <= widths[1] else (share - short, short)
        fitted = []
        for name, budget in zip((name_a, name_b), budgets):
            title.set_text(name)
            _fit(title, budget, renderer)
            fitted.append(title.get_text())
        title.set_text(f"{fitted[0]} {_EN} {fitted[1]}")
    band = report.get("band")
    freq = _f(report.get("frequency_mhz"), ".4f", " MHz") + (f" ({_clean(band)})" if band else "")
    parts = ["Point-to-point radio path profile", _f(_km(report.get("distance_m")), ".3f", " km"), freq,
             f"k = {_k_text(report.get('k_factor'))}"]
    sub = _text(ax, 0.0, 0.04, f"  {_MIDDOT}  ".join(parts), ha="left", va="bottom", fontsize=8.5, color="0.2")
    _fit(sub, width - verdict_w - 0.3, renderer)
    ax.plot([0.0, width], [-0.08, -0.08], color="0.15", lw=0.9, clip_on=False)


def _km(value_m):
    return None if value_m is None else value_m / 1000.0


# --------------------------------------------------------------------------- profile panel
def _draw_profile(fig, ax, report: dict, width_in: float, height_in: float) -> None:
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    prof = report["profile"]
    x_km = _arr(prof["distance_m"]) / 1000.0
    terrain = _arr(prof["terrain_m"])
    bulge = np.nan_to_num(_arr(prof["bulge_m"]), nan=0.0)
    los = _arr(prof["los_m"])
    f1 = np.nan_to_num(_arr(prof["fresnel_radius_m"]), nan=0.0)
    surface = terrain + bulge                          # curved-Earth convention
    ratio_req = float(report.get("clearance_ratio_required") or 0.0)
    clearance = los - surface
    n = x_km.size
    interior = np.zeros(n, dtype=bool)
    interior[1:-1] = True
    short = interior & (clearance < ratio_req * f1)

    site_a, site_b = report["site_a"], report["site_b"]
    ground_a, ground_b = float(site_a["ground_m"]), float(site_b["ground_m"])
    tip_a, tip_b = float(site_a["antenna_amsl_m"]), float(site_b["antenna_amsl_m"])
    length_km = float(x_km[-1])

    # The Fresnel ellipse and the clearance boundary are smooth: draw them on a fine grid (all
    # samples kept) so that a sparsely sampled profile still shows their true shape.
    fine_km = np.union1d(x_km, np.linspace(0.0, length_km, 600))
    fine_d = fine_km * 1000.0
    wavelength = report.get("wavelength_m") or wavelength_m(float(report["frequency_mhz"]))
    fine_f1 = fresnel_radius_m(fine_d, fine_d[-1] - fine_d, wavelength)
    fine_los = np.interp(fine_km, x_km, los)
    fine_surface = np.interp(fine_km, x_km, surface)
    fine_required = fine_los - ratio_req * fine_f1

    top = float(np.nanmax(np.concatenate([fine_los + fine_f1, surface, [tip_a, tip_b]])))
    low = float(np.nanmin(np.concatenate([surface, los - 0.5 * f1])))
    low = max(low, float(np.nanmin(surface)) - 0.35 * max(top - float(np.nanmin(surface)), 1.0))
    span = max(top - low, 10.0)
    y0 = min(low - 0.05 * span, float(np.nanmin(surface)) - 0.12 * span)
    y1 = y0 + (top - y0) / 0.70                        # headroom for the labels
    pad = 0.012 * length_km
    ax.set_xlim(-pad, length_km + pad)
    ax.set_ylim(y0, y1)
    ax.set_axisbelow(True)
    ax.grid(True, color="0.82", lw=0.5, ls=(0, (1, 2)))

    # First Fresnel zone (under the terrain), terrain, shortfall, boundaries, line of sight.
    ax.fill_between(fine_km, fine_los - fine_f1, fine_los + fine_f1, facecolor=_FRESNEL_FACE, edgecolor="none",
                    zorder=1)
    ax.fill_between(x_km, y0 - span, surface, facecolor=_TERRAIN_FACE, edgecolor="none", zorder=2)
    ax.plot(x_km, surface, color=_TERRAIN_EDGE, lw=0.9, zorder=2.5)
    ax.fill_between(fine_km, fine_required, fine_surface, where=fine_surface > fine_required, interpolate=True,
                    facecolor=_SHORT_FACE, edgecolor=_SHORT_EDGE, hatch=_SHORT_HATCH, lw=0.0, zorder=3)
    for sign in (1.0, -1.0):
        ax.plot(fine_km, fine_los + sign * fine_f1, color=_FRESNEL_EDGE, lw=0.8, ls=_FRESNEL_STYLE, zorder=4)
    if ratio_req > 0:
        ax.plot(fine_km, fine_required, color=_REQUIRED, lw=1.0, ls=_REQUIRED_STYLE, zorder=4)
    ax.plot(x_km, los, color="black", lw=1.5, zorder=5)

    # Stretches short of the requirement, also as a hatched bar along the bottom.
    starts, ends = _runs(short)
    if starts.size:
        left = 0.5 * (x_km[starts - 1] + x_km[starts])
        right = 0.5 * (x_km[ends] + x_km[ends + 1])
        ax.broken_barh(list(zip(left, right - left)), (0.0, 0.035), transform=ax.get_xaxis_transform(),
                       facecolors=_SHORT_FACE, edgecolors=_SHORT_EDGE, hatch=_SHORT_HATCH, lw=0.6, zorder=6)
        short_km = float(np.sum(right - left))
        plural = "" if starts.size == 1 else "es"
        short_label = f"Clearance short of requirement ({starts.size} stretch{plural}, {short_km:.2f} km)"
    else:
        short_label = "Clearance short of requirement (none)"

    # Masts to scale, tips marked.
    for x, ground, tip in ((0.0, ground_a, tip_a), (length_km, ground_b, tip_b)):
        ax.plot([x, x], [ground, tip], color=_MAST, lw=3.0, solid_capstyle="butt", zorder=6)
        ax.plot([x], [tip], marker="o", ms=4.5, mfc="white", mec=_MAST, mew=1.1, zorder=7)
        ax.plot([x], [ground], marker="_", ms=9, mec=_MAST, mew=1.4, zorder=7)
    label_kw = dict(textcoords="axes fraction", va="top", fontsize=7.2, zorder=9, annotation_clip=False,
                    parse_math=False,
                    bbox=dict(boxstyle="round,pad=0.3", fc="white", ec="0.55", lw=0.5),
                    arrowprops=dict(arrowstyle="-", lw=0.6, color="0.35", ls=(0, (1.0, 1.5)), shrinkA=0, shrinkB=4))
    for key, x, tip, ha, xt in (("a", 0.0, tip_a, "left", 0.006), ("b", length_km, tip_b, "right", 0.994)):
        site = report[f"site_{key}"]
        name = _name(site)
        if len(name) > 38:
            name = name[:37].rstrip() + "\u2026"
        ax.annotate(f"{key.upper()}  {name}\nmast {_f(site.get('mast_m'), '.1f', ' m')}  {_MIDDOT}  antenna "
                    f"{_f(tip, '.1f', ' m AMSL')}", xy=(x, tip), xytext=(xt, 0.975), ha=ha, **label_kw)

    # Worst point: marker, clearance dimension line and a note.
    worst = report.get("worst") or {}
    if worst.get("distance_m") is not None:
        i = int(np.argmin(np.abs(x_km - worst["distance_m"] / 1000.0)))
        xw, yw = float(x_km[i]), float(surface[i])
        ax.annotate("", xy=(xw, float(los[i])), xytext=(xw, yw), zorder=7,
                    arrowprops=dict(arrowstyle="<|-|>", lw=0.7, color="black", shrinkA=0, shrinkB=0,
                                    mutation_scale=6))
        ax.plot([xw], [yw], marker="X", ms=8, mfc=_SHORT_EDGE if short[i] else "white", mec="black",
                mew=0.9, zorder=8)
        frac = (xw + pad) / (length_km + 2 * pad)
        pct = None if worst.get("fresnel_ratio") is None else 100.0 * worst["fresnel_ratio"]
        note = (f"Worst point {_MIDDOT} {_f(_km(worst['distance_m']), '.3f', ' km')} from A\n"
                f"clearance {_f(worst.get('clearance_m'), '+.1f', ' m')} = {_f(pct, '.0f', ' %')} of F1 "
                f"(required {ratio_req * 100:.0f} %)\n"
                f"v = {_f(worst.get('v'), '.2f')}  {_MIDDOT}  knife-edge loss "
                f"{_f(worst.get('knife_edge_loss_db'), '.1f', ' dB')}\n"
                f"terrain {_f(worst.get('terrain_m'), '.1f', ' m AMSL')}")
        ax.annotate(note, xy=(xw, yw), xytext=(min(max(frac, 0.40), 0.60), 0.975), textcoords="axes fraction",
                    ha="center", va="top", fontsize=7.2, zorder=9, parse_math=False,
                    bbox=dict(boxstyle="square,pad=0.4", fc="white", ec="black", lw=0.7),
                    arrowprops=dict(arrowstyle="-|>", lw=0.7, color="black", shrinkA=0, shrinkB=5,
                                    mutation_scale=8))

    ax.set_xlabel("Distance from site A [km]", labelpad=2)
    ax.set_ylabel("Height above mean sea level [m]", labelpad=3)
    ax.tick_params(length=3, pad=2)

    k_text = _k_text(report.get("k_factor"))
    freq = report.get("frequency_mhz")
    handles = [
        Patch(fc=_TERRAIN_FACE, ec=_TERRAIN_EDGE, lw=0.8, label=f"Terrain + Earth bulge (k = {k_text})"),
        Line2D([], [], color="black", lw=1.5, label="Line of sight"),
        Patch(fc=_FRESNEL_FACE, ec=_FRESNEL_EDGE, lw=0.8, ls=_FRESNEL_STYLE,
              label=f"1st Fresnel zone \u00b1F1 ({_f(freq, '.1f', ' MHz')})"),
        Line2D([], [], color=_REQUIRED, lw=1.0, ls=_REQUIRED_STYLE,
               label=f"Required clearance: {ratio_req * 100:.0f} % of F1"),
        Patch(fc=_SHORT_FACE, ec=_SHORT_EDGE, hatch=_SHORT_HATCH, lw=0.6, label=short_label),
        Line2D([], [], ls="none", marker="X", ms=7, mfc="white", mec="black", label="Worst point"),
        Line2D([], [], color=_MAST, lw=3.0, label="Mast (to scale)"),
    ]
    ax.legend(handles=handles, loc="lower left", bbox_to_anchor=(-0.005, 1.0), ncol=4, frameon=False,
              handlelength=2.4, handleheight=0.9, columnspacing=1.4, labelspacing=0.25, borderaxespad=0.15,
              borderpad=0.1, fontsize=6.8)

    # Vertical exaggeration of the drawn panel: (inches per metre up) / (inches per metre along).
    pos = ax.get_position()
    w_in, h_in = pos.width * width_in, pos.height * height_in
    x_range_m = (length_km + 2 * pad) * 1000.0
    ve = (h_in / (y1 - y0)) / (w_in / x_range_m) if x_range_m > 0 else float("nan")
    bulge_max = float(np.nanmax(bulge)) if bulge.size else 0.0
    note = (f"Curved-Earth convention: terrain raised by the Earth bulge for k = {k_text} "
            f"(up to {bulge_max:.1f} m), line of sight straight.   Vertical exaggeration "
            f"\u00d7{_round_sig(ve)}")
    fig.text((pos.x0 + pos.x1) / 2, pos.y0 - 0.40 / height_in, note, ha="center", va="top", fontsize=6.8,
             style="italic", color="0.15", parse_math=False)


def _round_sig(value: float) -> str:
    """A positive number to two significant digits (23, 150, 1.2); an em dash otherwise."""
    if not math.isfinite(value) or value <= 0:
        return _DASH
    return f"{float(f'{value:.2g}'):g}"


def _runs(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First and last index of each run of True in a boolean array."""
    padded = np.concatenate([[0], mask.astype(np.int8), [0]])
    step = np.diff(padded)
    return np.flatnonzero(step == 1), np.flatnonzero(step == -1) - 1


# --------------------------------------------------------------------------- locator panel
def _draw_locator(ax, report: dict, dem_paths, renderer) -> None:
    from matplotlib.patches import Rectangle

    ax.set_title("Locator", loc="left", fontsize=7.5, fontweight="bold", pad=3)
    prof = report["profile"]
    if prof.get("lat_deg") is None or prof.get("lon_deg") is None:
        _empty_panel(ax, "no map: surveyed profile", "the profile has no coordinates")
        return
    lat = _arr(prof["lat_deg"])
    lon = np.degrees(np.unwrap(np.radians(_arr(prof["lon_deg"]))))   # continuous across 180 deg

    import pyproj

    geod = pyproj.Geod(ellps="WGS84")
    lat_c = float(np.clip(0.5 * (lat.min() + lat.max()), -89.0, 89.0))
    lon_c = float(0.5 * (lon.min() + lon.max()))
    m_lat = geod.inv(lon_c, lat_c - 0.05, lon_c, lat_c + 0.05)[2] / 0.1
    m_lon = max(geod.inv(lon_c - 0.05, lat_c, lon_c + 0.05, lat_c)[2] / 0.1, 1e-3 * m_lat)

    # Extent: path box plus margin, widened to the panel's shape (equal metres both ways).
    pos = ax.get_position()
    fig_w, fig_h = ax.figure.get_size_inches()
    box_aspect = (pos.width * fig_w) / (pos.height * fig_h)
    w_m = (lon.max() - lon.min()) * m_lon
    h_m = (lat.max() - lat.min()) * m_lat
    margin = max(0.22 * max(w_m, h_m), 300.0)
    w_m, h_m = w_m + 2 * margin, h_m + 2 * margin
    if w_m / h_m < box_aspect:
        w_m = h_m * box_aspect
    else:
        h_m = w_m / box_aspect
    west, east = lon_c - 0.5 * w_m / m_lon, lon_c + 0.5 * w_m / m_lon
    lat_mid = 0.5 * (lat.min() + lat.max())
    south, north = lat_mid - 0.5 * h_m / m_lat, lat_mid + 0.5 * h_m / m_lat
    south, north = max(south, -90.0), min(north, 90.0)
    ax.set_aspect(m_lat / m_lon, adjustable="box")
    ax.add_patch(Rectangle((0, 0), 1, 1, transform=ax.transAxes, fc="white", ec="0.7",
                           hatch=_NODATA_HATCH, lw=0.0, zorder=0))

    caption = "no elevation model given: path only"
    if dem_paths:
        caption = _hillshade(ax, dem_paths, west, east, south, north, m_lon, m_lat, box_aspect)
    ax.annotate(caption, xy=(0.5, 0.0), xycoords="axes fraction", xytext=(0.0, -13.0), textcoords="offset points",
                ha="center", va="top", fontsize=6.2, color="0.25", parse_math=False)

    # Path (halo for legibility), stretches short of the requirement, sites, worst point.
    from matplotlib import patheffects

    halo = [patheffects.withStroke(linewidth=3.8, foreground="white")]
    ax.plot(lon, lat, color="black", lw=1.6, zorder=4, path_effects=halo, solid_capstyle="round")
    clearance = _arr(prof["los_m"]) - _arr(prof["terrain_m"]) - np.nan_to_num(_arr(prof["bulge_m"]))
    short = clearance < float(report.get("clearance_ratio_required") or 0.0) * np.nan_to_num(
        _arr(prof["fresnel_radius_m"]))
    short[0] = short[-1] = False
    if short.any():
        ax.plot(lon, np.where(short, lat, np.nan), color=_SHORT_EDGE, lw=2.6, ls=(0, (2.0, 1.0)), zorder=5)
    ax.plot(lon[0], lat[0], marker="^", ms=8, mfc="black", mec="white", mew=1.0, zorder=6)
    ax.plot(lon[-1], lat[-1], marker="o", ms=7, mfc="white", mec="black", mew=1.4, zorder=6)
    worst = report.get("worst") or {}
    if worst.get("lon_deg") is not None:
        wl = lon[int(np.argmin(np.abs(_arr(prof["distance_m"]) - worst["distance_m"])))]
        ax.plot(wl, worst["lat_deg"], marker="X", ms=7, mfc="white", mec="black", mew=0.9, zorder=6)

    ax.set_xlim(west, east)
    ax.set_ylim(south, north)
    ax.apply_aspect()

    # Site labels: of eight places around each marker, the one least in the way of the path,
    # the other label and the frame; first choice on opposite sides of the path.
    to_axes = ax.transData + ax.transAxes.inverted()
    points = to_axes.transform(np.column_stack([lon, lat])[:: max(1, lon.size // 400)])
    ux, uy = (lon[-1] - lon[0]) * m_lon, (lat[-1] - lat[0]) * m_lat
    norm = math.hypot(ux, uy) or 1.0
    nx_, ny_ = -uy / norm, ux / norm
    if ny_ < 0 or (ny_ == 0 and nx_ < 0):
        nx_, ny_ = -nx_, -ny_
    labels, boxes = [], []
    for key, x, y, sign in (("a", lon[0], lat[0], 1.0), ("b", lon[-1], lat[-1], -1.0)):
        name = _name(report[f"site_{key}"])
        if len(name) > 26:
            name = name[:25].rstrip() + "\u2026"
        first = math.atan2(sign * ny_, sign * nx_)
        best = None
        for step in range(8):
            angle = first + ((step + 1) // 2) * (math.pi / 4) * (1 if step % 2 else -1)
            ox, oy = math.cos(angle), math.sin(angle)
            label = ax.annotate(f"{key.upper()} {name}", xy=(x, y), xytext=(8 * ox, 8 * oy),
                                textcoords="offset points",
                                ha="left" if ox > 0.38 else ("right" if ox < -0.38 else "center"),
                                va="bottom" if oy > 0.38 else ("top" if oy < -0.38 else "center"),
                                fontsize=6.8, fontweight="bold", zorder=8, parse_math=False,
                                path_effects=[patheffects.withStroke(linewidth=2.6, foreground="white")])
            moved = _keep_inside(label, ax, renderer)
            box = label.get_window_extent(renderer).transformed(ax.transAxes.inverted())
            covered = sum(_overlap(box, other) for other in boxes) / max(box.width * box.height, 1e-9)
            score = _points_in(points, box) + 20.0 * covered + moved / 30.0 + 0.02 * step
            if best is None or score < best[0]:
                if best is not None:
                    best[1].remove()
                best = (score, label, box)
            else:
                label.remove()
        labels.append(best[1])
        boxes.append(best[2])

    # North arrow and scale bar go to the corners least covered by the path and the labels.
    from matplotlib.transforms import Bbox

    def crowding(x0, y0, x1, y1):
        area = Bbox([[x0, y0], [x1, y1]])
        return _points_in(points, area) + 50.0 * sum(_overlap(area, b) for b in boxes)

    arrow_x = min((0.92, 0.08), key=lambda x: crowding(x - 0.06, 0.74, x + 0.06, 0.98))
    _north_arrow(ax, halo, arrow_x)
    bar_right = crowding(0.02, 0.02, 0.5, 0.18) > crowding(0.5, 0.02, 0.98, 0.18)
    _scale_bar(ax, geod, west, east, south, north, bar_right)
    _degree_ticks(ax, west, east, south, north)


def _hillshade(ax, dem_paths, west, east, south, north, m_lon, m_lat, box_aspect) -> str:
    """Draw the hillshade of the elevation model over the map extent; return a caption."""
    from matplotlib.colors import LightSource, LinearSegmentedColormap, Normalize

    from .dem import ElevationModel

    nx = int(round(250 * math.sqrt(box_aspect)))
    ny = int(round(250 / math.sqrt(box_aspect)))
    lons = np.linspace(west, east, nx)
    lats = np.linspace(north, south, ny)
    grid_lon, grid_lat = np.meshgrid(lons, lats)
    with ElevationModel.open(list(dem_paths)) as model:
        z = np.asarray(model.sample((grid_lon + 180.0) % 360.0 - 180.0, grid_lat), dtype=float)
    valid = np.isfinite(z)
    if not valid.any():
        return "no elevation data around the path"
    zmin, zmax = float(np.nanmin(z)), float(np.nanmax(z))
    filled = np.where(valid, z, np.nanmean(z))
    cmap = LinearSegmentedColormap.from_list(
        "profiler_relief", ["#c9dcb4", "#e2dcae", "#d6bf92", "#bf9f78", "#ece6dc"])
    light = LightSource(azdeg=315.0, altdeg=40.0)
    dx = (east - west) / max(nx - 1, 1) * m_lon
    dy = (north - south) / max(ny - 1, 1) * m_lat
    relief = max(zmax - zmin, 1.0)
    exaggeration = float(np.clip(0.08 * max(dx * nx, dy * ny) / relief, 1.0, 6.0))
    intensity = light.hillshade(filled, vert_exag=exaggeration, dx=dx, dy=dy)
    tint = cmap(Normalize(zmin, zmax if zmax > zmin else zmin + 1.0)(filled))
    rgba = tint.copy()
    rgba[..., :3] = tint[..., :3] * (0.45 + 0.62 * intensity[..., np.newaxis]).clip(0.0, 1.0)
    rgba[..., 3] = np.where(valid, 1.0, 0.0)
    half_x, half_y = 0.5 * (east - west) / max(nx - 1, 1), 0.5 * (north - south) / max(ny - 1, 1)
    ax.imshow(rgba, extent=(west - half_x, east + half_x, south - half_y, north + half_y), origin="upper",
              interpolation="bilinear", zorder=1, aspect=ax.get_aspect())
    return f"hillshade, terrain {zmin:.0f}\u2013{zmax:.0f} m AMSL (hatched: no data)"


def _keep_inside(label, ax, renderer) -> float:
    """Shift an offset-points annotation so its text stays within the axes; return the shift [pt]."""
    box = label.get_window_extent(renderer)
    frame = ax.get_window_extent(renderer)
    pad = 3.0
    shift_x = max(0.0, frame.x0 + pad - box.x0) - max(0.0, box.x1 - (frame.x1 - pad))
    shift_y = max(0.0, frame.y0 + pad - box.y0) - max(0.0, box.y1 - (frame.y1 - pad))
    points = 72.0 / ax.figure.dpi
    if shift_x or shift_y:
        ox, oy = label.xyann
        label.xyann = (ox + shift_x * points, oy + shift_y * points)
    return math.hypot(shift_x, shift_y) * points


def _points_in(points: np.ndarray, box) -> float:
    """Fraction of ``points`` (N x 2, axes fraction) inside ``box``, padded by 1 % of the axes."""
    pad = 0.01
    inside = ((points[:, 0] > box.x0 - pad) & (points[:, 0] < box.x1 + pad)
              & (points[:, 1] > box.y0 - pad) & (points[:, 1] < box.y1 + pad))
    return float(np.count_nonzero(inside)) / max(len(points), 1)


def _overlap(a, b) -> float:
    """Area shared by two boxes (axes-fraction units squared)."""
    return max(0.0, min(a.x1, b.x1) - max(a.x0, b.x0)) * max(0.0, min(a.y1, b.y1) - max(a.y0, b.y0))


def _north_arrow(ax, halo, x: float) -> None:
    """North arrow at axes-fraction ``x`` (the map is drawn north up)."""
    ax.annotate("", xy=(x, 0.95), xytext=(x, 0.80), xycoords="axes fraction", zorder=8,
                arrowprops=dict(arrowstyle="-|>,head_length=0.8,head_width=0.35", lw=1.4, color="black",
                                shrinkA=0, shrinkB=0))
    _text(ax, x, 0.785, "N", transform=ax.transAxes, ha="center", va="top", fontsize=8,
          fontweight="bold", zorder=8, path_effects=halo)


def _scale_bar(ax, geod, west, east, south, north, right: bool = False) -> None:
    """Scale bar along the parallel in a lower corner; lengths from pyproj.Geod (WGS84)."""
    from matplotlib.patches import Rectangle

    y0 = south + 0.07 * (north - south)
    width_m = geod.line_length([west, 0.5 * (west + east), east], [y0] * 3)
    target = 0.32 * width_m
    exponent = math.floor(math.log10(target))
    nice = max(v * 10 ** exponent for v in (1, 2, 5) if v * 10 ** exponent <= target)
    length_deg = (geod.fwd(west, y0, 90.0, nice)[0] - west) % 360.0
    x0 = east - 0.12 * (east - west) - length_deg if right else west + 0.06 * (east - west)
    x1 = x0 + length_deg
    h = 0.018 * (north - south)
    xm = 0.5 * (x0 + x1)
    ax.add_patch(Rectangle((x0 - 0.02 * (east - west), y0 - 2.6 * h), (x1 - x0) + 0.09 * (east - west),
                           6.4 * h, fc="white", ec="none", alpha=0.8, zorder=7))
    ax.add_patch(Rectangle((x0, y0), xm - x0, h, fc="black", ec="black", lw=0.6, zorder=8))
    ax.add_patch(Rectangle((xm, y0), x1 - xm, h, fc="white", ec="black", lw=0.6, zorder=8))
    unit, scale = ("km", 1000.0) if nice >= 1000 else ("m", 1.0)
    for x, value, ha in ((x0, 0.0, "center"), (x1, nice / scale, "center")):
        _text(ax, x, y0 + 1.6 * h, f"{value:g}", ha=ha, va="bottom", fontsize=6.2, zorder=8)
    _text(ax, x1 + 0.012 * (east - west), y0 + 0.5 * h, unit, ha="left", va="center", fontsize=6.2, zorder=8)


def _degree_ticks(ax, west, east, south, north) -> None:
    from matplotlib.ticker import FixedFormatter, FixedLocator, MaxNLocator

    def ticks(lo, hi, pos, neg, wrap):
        values = [v for v in MaxNLocator(3).tick_values(lo, hi) if lo <= v <= hi]
        step = values[1] - values[0] if len(values) > 1 else (hi - lo)
        decimals = int(min(max(0, -math.floor(math.log10(step) + 1e-9)), 5))
        labels = []
        for v in values:
            w = (v + 180.0) % 360.0 - 180.0 if wrap else v
            hemi = "" if (w == 0 or abs(abs(w) - 180.0) < 1e-9) else (pos if w > 0 else neg)
            labels.append(f"{abs(w):.{decimals}f}\u00b0{hemi}")
        return values, labels

    xs, xl = ticks(west, east, "E", "W", True)
    ys, yl = ticks(south, north, "N", "S", False)
    ax.xaxis.set_major_locator(FixedLocator(xs))
    ax.xaxis.set_major_formatter(FixedFormatter(xl))
    ax.yaxis.set_major_locator(FixedLocator(ys))
    ax.yaxis.set_major_formatter(FixedFormatter(yl))
    ax.tick_params(labelsize=6, length=2.5, pad=1.5)
    for label in ax.get_yticklabels():
        label.set_rotation(90)
        label.set_va("center")


def _empty_panel(ax, message: str, detail: str) -> None:
    from matplotlib.patches import Rectangle

    ax.set_xticks([])
    ax.set_yticks([])
    ax.add_patch(Rectangle((0, 0), 1, 1, transform=ax.transAxes, fc="white", ec="0.75",
                           hatch=_NODATA_HATCH, lw=0.0, zorder=0))
    _text(ax, 0.5, 0.52, message, transform=ax.transAxes, ha="center", va="bottom", fontsize=8.5,
          fontweight="bold", bbox=dict(boxstyle="square,pad=0.4", fc="white", ec="0.4", lw=0.6))
    _text(ax, 0.5, 0.44, detail, transform=ax.transAxes, ha="center", va="top", fontsize=6.8, color="0.25",
          bbox=dict(boxstyle="square,pad=0.3", fc="white", ec="none"))


# --------------------------------------------------------------------------- results table
def _results_blocks(report: dict) -> list[tuple[str, list[str], list[tuple]]]:
    a, b = report["site_a"], report["site_b"]
    loss, bud, lora = report["loss_db"], report["budget"], report.get("lora") or {}
    worst = report.get("worst") or {}
    ratio_req = float(report.get("clearance_ratio_required") or 0.0)
    prof = report["profile"]
    bulge = _arr(prof["bulge_m"])
    f1 = _arr(prof["fresnel_radius_m"])

    def tilt(angle):
        if angle is None:
            return _DASH
        return _f(angle, "+.3f", "\u00b0") + (" (up)" if angle > 0 else (" (down)" if angle < 0 else ""))

    sites = [
        ("Name", _name(a), _name(b)),
        ("Latitude", _f(a.get("lat_deg"), ".6f", "\u00b0"), _f(b.get("lat_deg"), ".6f", "\u00b0")),
        ("", _dms(a.get("lat_deg"), "N", "S"), _dms(b.get("lat_deg"), "N", "S")),
        ("Longitude", _f(a.get("lon_deg"), ".6f", "\u00b0"), _f(b.get("lon_deg"), ".6f", "\u00b0")),
        ("", _dms(a.get("lon_deg"), "E", "W"), _dms(b.get("lon_deg"), "E", "W")),
        ("Ground elevation", _f(a.get("ground_m"), ".1f", " m AMSL"), _f(b.get("ground_m"), ".1f", " m AMSL")),
        ("Mast height", _f(a.get("mast_m"), ".1f", " m"), _f(b.get("mast_m"), ".1f", " m")),
        ("Antenna height", _f(a.get("antenna_amsl_m"), ".1f", " m AMSL"),
         _f(b.get("antenna_amsl_m"), ".1f", " m AMSL")),
        ("Azimuth (true)", _f(report.get("azimuth_a_to_b_deg"), ".2f", "\u00b0"),
         _f(report.get("azimuth_b_to_a_deg"), ".2f", "\u00b0")),
        ("Elevation angle", tilt(report.get("elevation_angle_a_deg")),
         tilt(report.get("elevation_angle_b_deg"))),
    ]
    pct = None if worst.get("fresnel_ratio") is None else 100.0 * worst["fresnel_ratio"]
    path = [
        ("Distance A\u2013B", _f(_km(report.get("distance_m")), ".3f", " km")),
        ("Frequency", _f(report.get("frequency_mhz"), ".4f", " MHz")),
        ("Band", _clean(report["band"]) if report.get("band") else _DASH),
        ("k-factor (a\u2091)", f"{_k_text(report.get('k_factor'))} "
         f"({_f(_km(report.get('effective_radius_m')), '.0f', ' km')})"),
        ("Max. bulge / F1", f"{_f(_nanmax(bulge), '.1f')} / {_f(_nanmax(f1), '.1f', ' m')}"),
        ("Clearance required", f"{ratio_req * 100:.0f} % of F1"),
        ("Line of sight", "yes" if report["line_of_sight"] else "NO"),
        ("Fresnel clearance", "met" if report["fresnel_clear"] else "NOT met"),
        ("Worst point from A", _f(_km(worst.get("distance_m")), ".3f", " km")),
        ("Worst clearance", _f(worst.get("clearance_m"), "+.1f", " m")),
        ("Worst clearance / F1", _f(pct, ".0f", " %")),
        ("v / knife-edge loss", f"{_f(worst.get('v'), '.2f')} / {_f(worst.get('knife_edge_loss_db'), '.1f', ' dB')}"),
    ]
    other = (loss.get("extra") or 0.0) + (loss.get("polarization") or 0.0)
    closing = lora.get("lowest_closing_sf")
    budget = [
        ("Diffraction method", _clean(loss.get("diffraction_method") or _DASH)),
        ("Free-space loss", _f(loss.get("free_space"), ".1f", " dB")),
        ("Diffraction loss", _f(loss.get("diffraction"), ".1f", " dB")),
        ("Other losses", _f(other, ".1f", " dB")),
        ("Total path loss", _f(loss.get("total"), ".1f", " dB")),
        ("TX power / EIRP", f"{_f(bud.get('tx_power_dbm'), '.1f')} / {_f(bud.get('eirp_dbm'), '.1f', ' dBm')}"),
        ("Received level", _f(bud.get("rx_power_dbm"), ".1f", " dBm")),
        (f"Sensitivity (SF{bud.get('sf')})",
         _f(bud.get("sensitivity_dbm"), ".1f", " dBm")),
        ("Margin (required)", f"{_f(bud.get('margin_db'), '+.1f', ' dB')} "
         f"(\u2265 {_f(bud.get('fade_margin_required_db'), '.1f')})"),
        ("Lowest closing SF", f"SF{closing}" if closing is not None else "none"),
        ("Link closes", "yes" if bud.get("closes") else "NO"),
    ]
    return [("Sites", ["", "Site A (TX)", "Site B"], sites),
            ("Path and clearance", None, path),
            ("Link budget", None, budget)]


def _nanmax(values):
    if values is None or values.size == 0 or not np.isfinite(values).any():
        return None
    return float(np.nanmax(values))


def _draw_results(ax, report: dict, renderer) -> None:
    """Three ruled tables side by side; column widths from their contents."""
    from matplotlib.font_manager import FontProperties

    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    blocks = []
    for title, header, rows in _results_blocks(report):
        head = [title] + (header[1:] if header is not None else [""])
        blocks.append((head, rows))
    gap, pad = 0.12, 0.045
    dpi = ax.figure.dpi
    usable = width - gap * (len(blocks) - 1)

    def natural_widths(fontsize):
        regular = FontProperties(family="sans-serif", size=fontsize)
        bold = FontProperties(family="sans-serif", size=fontsize, weight="bold")

        def text_width(s, prop):
            return renderer.get_text_width_height_descent(s, prop, ismath=False)[0] / dpi if s else 0.0

        natural = []
        for head, rows in blocks:
            cols = []
            for j in range(len(head)):
                head_w = text_width(head[j], bold) if (j > 0 or len(head) == 3) else 0.0
                widest = max([text_width(row[j], regular) for row in rows] + [head_w])
                cols.append(min(widest, _MAX_CELL_IN * fontsize / 7.0) + 2 * pad)   # long names get cut
            if len(head) == 2:          # a two-column block's title spans both columns
                cols[1] = max(cols[1], text_width(head[0], bold) + 2 * pad - cols[0])
            natural.append(cols)
        return natural

    # Largest font from 7 pt down to 6 pt at which the contents fit; then share out the rest.
    fontsize = 7.0
    natural = natural_widths(fontsize)
    n_cols = sum(len(cols) for cols in natural)
    total = sum(sum(cols) for cols in natural)
    if total > usable:
        fontsize = max(6.0, fontsize * (usable - 2 * pad * n_cols) / (total - 2 * pad * n_cols) - 0.05)
        natural = natural_widths(fontsize)
        total = sum(sum(cols) for cols in natural)
    if total <= usable:
        widths = [[w + (usable - total) / n_cols for w in cols] for cols in natural]
    else:
        widths = [[w * usable / total for w in cols] for cols in natural]
    n_rows = max(len(rows) for _, rows in blocks) + 1
    row_h = min(0.215, (height - 0.02) / n_rows)
    x = 0.0
    for (head, rows), cols in zip(blocks, widths):
        _table(ax, renderer, x, height, cols, head, rows, fontsize, row_h, pad)
        x += sum(cols) + gap


def _table(ax, renderer, x0, y_top, widths, header, rows, fontsize, row_h, pad) -> None:
    from matplotlib.patches import Rectangle

    total = sum(widths)
    ax.add_patch(Rectangle((x0, y_top - row_h), total, row_h, fc="0.22", ec="none", zorder=1))
    lefts = np.concatenate([[x0], x0 + np.cumsum(widths)[:-1]])
    for j, (cell, left, w) in enumerate(zip(header, lefts, widths)):
        if not cell:
            continue
        room = total - (left - x0) if (j == 0 and len(header) == 2 and not header[1]) else w
        t = _text(ax, left + pad, y_top - 0.5 * row_h, cell, ha="left", va="center", fontsize=fontsize,
                  fontweight="bold", color="white", zorder=2)
        _fit(t, room - 2 * pad, renderer)
    for i, row in enumerate(rows, start=1):
        y = y_top - (i + 0.5) * row_h
        if i % 2 == 0:
            ax.add_patch(Rectangle((x0, y_top - (i + 1) * row_h), total, row_h, fc=_SHADE, ec="none", zorder=0))
        for j, (cell, left, w) in enumerate(zip(row, lefts, widths)):
            strong = j > 0 and (cell.startswith("NO") or cell.startswith("NOT"))
            t = _text(ax, left + pad, y, cell, ha="left", va="center", fontsize=fontsize,
                      color="0.25" if j == 0 else "black", fontweight="bold" if strong else "normal", zorder=2)
            _fit(t, w - 2 * pad, renderer)
    bottom = y_top - (len(rows) + 1) * row_h
    ax.plot([x0, x0 + total], [bottom, bottom], color=_RULE, lw=0.8)
    for left in lefts[1:]:
        ax.plot([left, left], [bottom, y_top - row_h], color="0.75", lw=0.4)


# --------------------------------------------------------------------------- footer
def _source_text(report: dict) -> str:
    dem = report.get("dem") or {}
    sources = dem.get("sources") or []
    if dem.get("kind") == "surveyed":
        names = ", ".join(_clean(os.path.basename(str(s.get("path") or ""))) for s in sources) or _DASH
        n = len(report["profile"]["distance_m"])
        return f"Terrain: surveyed profile {names} ({n} points, no coordinates)"
    parts = []
    for source in sources[:3]:
        parts.append(f"{_clean(os.path.basename(str(source.get('path') or '')))} "
                     f"({_resolution_text(source.get('resolution'), source.get('crs'))}, "
                     f"{_clean(source.get('crs') or 'CRS unknown')})")
    more = f" and {len(sources) - 3} more" if len(sources) > 3 else ""
    filled = dem.get("voids_filled") or 0
    voids = f"; {filled} samples interpolated across voids" if filled else ""
    return f"Elevation data: {'; '.join(parts) or _DASH}{more}{voids}"


def _resolution_text(resolution, crs) -> str:
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


def _draw_footer(ax, report: dict, renderer, date_text) -> None:
    width, height = ax.get_xlim()[1], ax.get_ylim()[1]
    date_text = date_text or datetime.date.today().isoformat()
    ax.plot([0.0, width], [height, height], color="0.15", lw=0.9)
    line1 = _text(ax, 0.0, height - 0.05, _source_text(report), ha="left", va="top", fontsize=6.5, color="0.15")
    _fit(line1, width, renderer)
    warnings = report.get("warnings") or []
    tool = (f"profiler {_clean(report.get('tool_version') or __version__)}  {_MIDDOT}  report "
            f"{_clean(report.get('schema') or '')}  {_MIDDOT}  drawn {_clean(date_text)}")
    if warnings:
        tool += f"  {_MIDDOT}  warnings: " + "; ".join(_clean(w) for w in warnings)
    line2 = _text(ax, 0.0, height - 0.19, tool, ha="left", va="top", fontsize=6.5, color="0.15")
    _fit(line2, width, renderer)
    line3 = _text(ax, 0.0, height - 0.33, CAUTION, ha="left", va="top", fontsize=7.0, fontweight="bold")
    _fit(line3, width, renderer)


def write_mast_figure(report: dict, path, paper: str = "a4", dpi: int = 200) -> None:
    """Margin and worst clearance ratio against mast height, the chosen height marked."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    solve = report["solve"]
    rows = report["table"]
    if solve == "both":
        x = [r["mast_a_m"] - report["site_a"]["mast_m"] for r in rows]
        xlabel, chosen = "height added at both ends [m]", report["added_height_m"]
    else:
        key = f"mast_{solve}_m"
        x = [r[key] for r in rows]
        name = report["site_" + solve]["name"]
        label = solve.upper() if name == solve.upper() else f"{solve.upper()} ({name})"
        xlabel, chosen = f"mast at {label} [m]", report[f"required_{key}"]
    fig = Figure(figsize=paper_size_in(paper), layout="constrained")
    fig.get_layout_engine().set(rect=(0.0, 0.03, 1.0, 0.97))  # leave a strip for the caution line
    FigureCanvasAgg(fig)
    ax_m, ax_c = fig.subplots(2, 1, sharex=True)
    ax_m.plot(x, [r["margin_db"] for r in rows], "o-", ms=3, label="margin")
    ax_c.plot(x, [r["worst_ratio"] for r in rows], "o-", ms=3, label="worst clearance / F1 (k)")
    ax_c.plot(x, [r["worst_ratio_low_k"] for r in rows], "s--", ms=3, label="worst clearance / F1 (low k)")
    for c in report["criteria"]:
        if c["criterion"] == "margin":
            ax_m.axhline(c["min_margin_db"], color="C3", lw=1, ls=":", label=f"required {c['min_margin_db']:g} dB")
        else:
            ax_c.axhline(c["clearance_ratio"], color="C3" if c["criterion"] == "clearance" else "C4", lw=1, ls=":",
                         label=f"required {c['clearance_ratio']:g} F1 at k = {c['k_factor']:.3g}")
    if report["feasible"] and chosen is not None:
        for ax in (ax_m, ax_c):
            ax.axvline(chosen, color="k", lw=1.2)
        ax_m.annotate(f"chosen {chosen:.2f} m ({report['binding']['criterion']})", (chosen, 1.0),
                      xycoords=("data", "axes fraction"), xytext=(4, -14), textcoords="offset points", fontsize=8,
                      bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": "0.5", "lw": 0.5})
    ax_m.set_ylabel("link margin [dB]")
    ax_c.set_ylabel("clearance / F1")
    ax_c.set_xlabel(xlabel)
    for ax in (ax_m, ax_c):
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=8, loc="best")
    a, b = report["site_a"]["name"], report["site_b"]["name"]
    verdict = "" if report["feasible"] else " - no height up to the maximum works"
    fig.suptitle(f"Mast height {a} -> {b}, {report['distance_m'] / 1000:.2f} km, "
                 f"{report['frequency_mhz']:.2f} MHz{verdict}")
    fig.text(0.5, 0.005, CAUTION, ha="center", va="bottom", fontsize=7)
    with atomic_path(path) as tmp:
        try:
            fig.savefig(tmp, dpi=dpi)
        except (OSError, ValueError) as exc:
            raise ProfilerError(f"cannot write figure {path}: {exc}") from exc
