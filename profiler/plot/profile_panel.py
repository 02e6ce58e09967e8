"""The profile panel of the link sheet: terrain, line of sight, Fresnel zone, masts, worst point.

Terrain is drawn raised by the Earth bulge for the chosen k (curved-Earth
convention, ITU-R P.452-18 eq. 14 curvature term) under a straight line of
sight; the first Fresnel zone radius is ITU-R P.530 eq. 2 (via
:func:`profiler.propagation.geometry.fresnel_radius_m`).  Stretches where the
clearance falls short of the requirement are hatched, also as a bar along
the bottom, so the panel reads in greyscale.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from ..propagation.free_space import wavelength_m
from ..propagation.geometry import fresnel_radius_m
from . import audit
from .sheet import MIDDOT, arr, k_text, km, num, round_sig, sheet_legend, site_name
from .textfit import Measure, fit_text

__all__ = ["draw_profile", "end_label", "SHORT_EDGE", "SHORT_FACE", "SHORT_HATCH"]

# Greyscale-safe palette: every element also differs by line style, hatch or marker.
TERRAIN_FACE = "#d2bf97"
TERRAIN_EDGE = "#4b3a22"
FRESNEL_FACE = "#d3e3f0"
FRESNEL_EDGE = "#24527a"
REQUIRED = "#5b2c83"
SHORT_FACE = "#efb3b3"
SHORT_EDGE = "#9c1414"
MAST = "#1c1c1c"
FRESNEL_STYLE = (0, (5.0, 2.5))
REQUIRED_STYLE = (0, (7.0, 2.0, 1.5, 2.0))
SHORT_HATCH = "xxxx"


def draw_profile(fig, ax, report: dict, width_in: float, height_in: float) -> None:
    """Draw the whole profile panel of ``report`` into ``ax`` (a sheet of ``width_in`` x ``height_in``)."""
    d = _profile_data(report)
    _set_axes(ax, d)
    _draw_zones(ax, d)
    short_label = _draw_shortfall(ax, d)
    void_label = _draw_voids(ax, report, d)
    note_box = _draw_worst(ax, report, d)
    _draw_masts(ax, report, d, note_box)
    ax.set_xlabel("Distance from site A [km]", labelpad=2)
    ax.set_ylabel("Height above mean sea level [m]", labelpad=3)
    ax.tick_params(length=3, pad=2)
    _legend(ax, report, d, short_label, void_label)
    _exaggeration_note(fig, ax, report, d, width_in, height_in)


def _profile_data(report: dict) -> SimpleNamespace:
    """The panel's arrays: samples, curved-Earth surface, shortfall, and a fine grid for smooth curves."""
    prof = report["profile"]
    x_km = arr(prof["distance_m"]) / 1000.0
    bulge = np.nan_to_num(arr(prof["bulge_m"]), nan=0.0)
    los = arr(prof["los_m"])
    f1 = np.nan_to_num(arr(prof["fresnel_radius_m"]), nan=0.0)
    surface = arr(prof["terrain_m"]) + bulge                 # curved-Earth convention
    ratio_req = float(report.get("clearance_ratio_required") or 0.0)
    interior = np.zeros(x_km.size, dtype=bool)
    interior[1:-1] = True
    short = interior & (los - surface < ratio_req * f1)
    length_km = float(x_km[-1])
    # The Fresnel ellipse and the clearance boundary are smooth: draw them on a fine grid (all
    # samples kept) so that a sparsely sampled profile still shows their true shape.
    fine_km = np.union1d(x_km, np.linspace(0.0, length_km, 600))
    fine_d = fine_km * 1000.0
    wavelength = report.get("wavelength_m") or wavelength_m(float(report["frequency_mhz"]))
    fine_f1 = fresnel_radius_m(fine_d, fine_d[-1] - fine_d, wavelength)
    fine_los = np.interp(fine_km, x_km, los)
    return SimpleNamespace(
        x_km=x_km, bulge=bulge, los=los, f1=f1, surface=surface, ratio_req=ratio_req, short=short,
        length_km=length_km, fine_km=fine_km, fine_f1=fine_f1, fine_los=fine_los,
        fine_surface=np.interp(fine_km, x_km, surface), fine_required=fine_los - ratio_req * fine_f1,
        tip_a=float(report["site_a"]["antenna_amsl_m"]), tip_b=float(report["site_b"]["antenna_amsl_m"]))


def _set_axes(ax, d) -> None:
    """Limits with headroom for the labels, a light dotted grid; stores y0, y1, span, pad in ``d``."""
    surface = d.surface
    top = float(np.nanmax(np.concatenate([d.fine_los + d.fine_f1, surface, [d.tip_a, d.tip_b]])))
    low = float(np.nanmin(np.concatenate([surface, d.los - 0.5 * d.f1])))
    low = max(low, float(np.nanmin(surface)) - 0.35 * max(top - float(np.nanmin(surface)), 1.0))
    d.span = max(top - low, 10.0)
    d.y0 = min(low - 0.05 * d.span, float(np.nanmin(surface)) - 0.12 * d.span)
    d.y1 = d.y0 + (top - d.y0) / 0.70                        # headroom for the labels
    d.pad = 0.012 * d.length_km
    ax.set_xlim(-d.pad, d.length_km + d.pad)
    ax.set_ylim(d.y0, d.y1)
    ax.set_axisbelow(True)
    ax.grid(True, color="0.82", lw=0.5, ls=(0, (1, 2)))


def _draw_zones(ax, d) -> None:
    """First Fresnel zone (under the terrain), terrain, shortfall, boundaries, line of sight."""
    ax.fill_between(d.fine_km, d.fine_los - d.fine_f1, d.fine_los + d.fine_f1, facecolor=FRESNEL_FACE,
                    edgecolor="none", zorder=1)
    ax.fill_between(d.x_km, d.y0 - d.span, d.surface, facecolor=TERRAIN_FACE, edgecolor="none", zorder=2)
    ax.plot(d.x_km, d.surface, color=TERRAIN_EDGE, lw=0.9, zorder=2.5)
    ax.fill_between(d.fine_km, d.fine_required, d.fine_surface, where=d.fine_surface > d.fine_required,
                    interpolate=True, facecolor=SHORT_FACE, edgecolor=SHORT_EDGE, hatch=SHORT_HATCH, lw=0.0,
                    zorder=3)
    for sign in (1.0, -1.0):
        ax.plot(d.fine_km, d.fine_los + sign * d.fine_f1, color=FRESNEL_EDGE, lw=0.8, ls=FRESNEL_STYLE, zorder=4)
    if d.ratio_req > 0:
        ax.plot(d.fine_km, d.fine_required, color=REQUIRED, lw=1.0, ls=REQUIRED_STYLE, zorder=4)
    ax.plot(d.x_km, d.los, color="black", lw=1.5, zorder=5)


def _draw_shortfall(ax, d) -> str:
    """Stretches short of the requirement as a hatched bar along the bottom; returns the legend label."""
    starts, ends = _runs(d.short)
    if not starts.size:
        return "Clearance short of requirement (none)"
    x_km = d.x_km
    left = 0.5 * (x_km[starts - 1] + x_km[starts])
    right = 0.5 * (x_km[ends] + x_km[ends + 1])
    ax.broken_barh(list(zip(left, right - left)), (0.0, 0.035), transform=ax.get_xaxis_transform(),
                   facecolors=SHORT_FACE, edgecolors=SHORT_EDGE, hatch=SHORT_HATCH, lw=0.6, zorder=6)
    short_km = float(np.sum(right - left))
    plural = "" if starts.size == 1 else "es"
    return f"Clearance short of requirement ({starts.size} stretch{plural}, {short_km:.2f} km)"


VOID_FACE = "white"
VOID_EDGE = "0.35"
VOID_HATCH = "...."


def _draw_voids(ax, report: dict, d):
    """Stretches interpolated across elevation voids: a dotted bar above the shortfall bar, and the
    terrain line drawn dotted there; returns the legend label (None when the path has no void)."""
    stretches = (report.get("dem") or {}).get("void_stretches_m") or []
    if not stretches:
        return None
    spans = [(a / 1000.0, max(b - a, 1e-3 * d.length_km * 1000.0) / 1000.0) for a, b in stretches]
    ax.broken_barh(spans, (0.04, 0.035), transform=ax.get_xaxis_transform(), facecolors=VOID_FACE,
                   edgecolors=VOID_EDGE, hatch=VOID_HATCH, lw=0.6, zorder=6)
    inside = np.zeros(d.x_km.size, dtype=bool)
    for a, b in stretches:
        inside |= (d.x_km >= a / 1000.0) & (d.x_km <= b / 1000.0)
    ax.plot(d.x_km, np.where(inside, d.surface, np.nan), color="white", lw=1.4, ls=(0, (1, 1.5)), zorder=2.6)
    total_km = sum(b - a for a, b in stretches) / 1000.0
    n = len(stretches)
    return f"Interpolated across a void ({n} stretch{'' if n == 1 else 'es'}, {total_km:.2f} km)"


def _draw_masts(ax, report: dict, d, note_box=None) -> None:
    """Masts to scale, tips marked, each end labelled in a box near the top, clear of the worst-point
    note (``note_box``, display units)."""
    ends = ((0.0, float(report["site_a"]["ground_m"]), d.tip_a),
            (d.length_km, float(report["site_b"]["ground_m"]), d.tip_b))
    for x, ground, tip in ends:
        ax.plot([x, x], [ground, tip], color=MAST, lw=3.0, solid_capstyle="butt", zorder=6)
        ax.plot([x], [tip], marker="o", ms=4.5, mfc="white", mec=MAST, mew=1.1, zorder=7)
        ax.plot([x], [ground], marker="_", ms=9, mec=MAST, mew=1.4, zorder=7)
    label_kw = dict(textcoords="axes fraction", va="top", zorder=9, annotation_clip=False,
                    parse_math=False,
                    bbox=dict(boxstyle="round,pad=0.3", fc="white", ec="0.55", lw=0.5),
                    arrowprops=dict(arrowstyle="-", lw=0.6, color="0.35", ls=(0, (1.0, 1.5)), shrinkA=0, shrinkB=4))
    room_in = _label_room_in(ax, note_box)
    measure = Measure(ax.figure.canvas.get_renderer())
    for key, x, tip, ha, xt in (("a", 0.0, d.tip_a, "left", 0.006), ("b", d.length_km, d.tip_b, "right", 0.994)):
        site = report[f"site_{key}"]
        mast = f"mast {num(site.get('mast_m'), '.1f', ' m')}  {MIDDOT}  antenna {num(tip, '.1f', ' m AMSL')}"
        text, size = _end_text(key, site_name(site), mast, room_in, measure)
        label = ax.annotate(text, xy=(x, tip), xytext=(xt, 0.975), ha=ha, fontsize=size, **label_kw)
        audit.contain(label, ax, name="profile panel")


def end_label(key: str, name: str) -> str:
    """``"A  Cairnfell Beacon"``; just ``"A"`` when the site is named by its letter (no "A A")."""
    letter = key.upper()
    return letter if name.strip().upper() in ("", letter) else f"{letter}  {name}"


def _label_room_in(ax, note_box) -> float:
    """Width [in] each end label may take: up to the worst-point note (or 40 % of the panel), less the
    labels' box padding."""
    renderer = ax.figure.canvas.get_renderer()
    panel = ax.get_window_extent(renderer)
    room_px = 0.40 * panel.width
    if note_box is not None:
        room_px = min(room_px, note_box.x0 - panel.x0 - 0.006 * panel.width,
                      panel.x1 - note_box.x1 - 0.006 * panel.width)
    return room_px / renderer.dpi - 0.2


def _end_text(key: str, name: str, mast: str, room_in: float, measure) -> tuple[str, float]:
    """An end label: ``"A  name"`` (just ``"A"`` for a site named A) on at most two lines, then the mast
    line, at 7.2 pt down to 5 pt; when the whole name does not fit that, the letter alone (the name is
    in full in the title and the sites table), never a cut name."""
    head = fit_text(end_label(key, name), room_in, measure, 7.2, max_lines=2)
    if not head.fits:
        head = fit_text(key.upper(), room_in, measure, 7.2, max_lines=1)
    size = head.fontsize
    tail = fit_text(mast, room_in, measure, size, max_lines=1)
    size = min(size, tail.fontsize)
    if size < head.fontsize:
        head = fit_text(head.text.replace("\n", " "), room_in, measure, size, max_lines=2, min_fontsize=size)
    return f"{head.text}\n{mast}", size


def _draw_worst(ax, report: dict, d):
    """Worst point: marker, clearance dimension line and a note; returns the note's box (display units)."""
    worst = report.get("worst") or {}
    if worst.get("distance_m") is None:
        return None
    i = int(np.argmin(np.abs(d.x_km - worst["distance_m"] / 1000.0)))
    xw, yw = float(d.x_km[i]), float(d.surface[i])
    ax.annotate("", xy=(xw, float(d.los[i])), xytext=(xw, yw), zorder=7,
                arrowprops=dict(arrowstyle="<|-|>", lw=0.7, color="black", shrinkA=0, shrinkB=0, mutation_scale=6))
    ax.plot([xw], [yw], marker="X", ms=8, mfc=SHORT_EDGE if d.short[i] else "white", mec="black", mew=0.9, zorder=8)
    frac = (xw + d.pad) / (d.length_km + 2 * d.pad)
    pct = None if worst.get("fresnel_ratio") is None else 100.0 * worst["fresnel_ratio"]
    note = (f"Worst point {MIDDOT} {num(km(worst['distance_m']), '.3f', ' km')} from A\n"
            f"clearance {num(worst.get('clearance_m'), '+.1f', ' m')} = {num(pct, '.0f', ' %')} of F1 "
            f"(required {d.ratio_req * 100:.0f} %)\n"
            f"v = {num(worst.get('v'), '.2f')}  {MIDDOT}  knife-edge loss "
            f"{num(worst.get('knife_edge_loss_db'), '.1f', ' dB')}\n"
            f"terrain {num(worst.get('terrain_m'), '.1f', ' m AMSL')}")
    label = ax.annotate(note, xy=(xw, yw), xytext=(min(max(frac, 0.40), 0.60), 0.975), textcoords="axes fraction",
                        ha="center", va="top", fontsize=7.2, zorder=9, parse_math=False,
                        bbox=dict(boxstyle="square,pad=0.4", fc="white", ec="black", lw=0.7),
                        arrowprops=dict(arrowstyle="-|>", lw=0.7, color="black", shrinkA=0, shrinkB=5,
                                        mutation_scale=8))
    audit.contain(label, ax, name="profile panel")
    renderer = ax.figure.canvas.get_renderer()
    pad_px = 0.4 * 7.2 / 72.0 * renderer.dpi
    return label.get_window_extent(renderer).padded(pad_px)


def _legend(ax, report: dict, d, short_label: str, void_label: str | None = None) -> None:
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    freq = report.get("frequency_mhz")
    handles = [
        Patch(fc=TERRAIN_FACE, ec=TERRAIN_EDGE, lw=0.8,
              label=f"Terrain + Earth bulge (k = {k_text(report.get('k_factor'))})"),
        Line2D([], [], color="black", lw=1.5, label="Line of sight"),
        Patch(fc=FRESNEL_FACE, ec=FRESNEL_EDGE, lw=0.8, ls=FRESNEL_STYLE,
              label=f"1st Fresnel zone \u00b1F1 ({num(freq, '.1f', ' MHz')})"),
        Line2D([], [], color=REQUIRED, lw=1.0, ls=REQUIRED_STYLE,
               label=f"Required clearance: {d.ratio_req * 100:.0f} % of F1"),
        Patch(fc=SHORT_FACE, ec=SHORT_EDGE, hatch=SHORT_HATCH, lw=0.6, label=short_label),
        Line2D([], [], ls="none", marker="X", ms=7, mfc="white", mec="black", label="Worst point"),
        Line2D([], [], color=MAST, lw=3.0, label="Mast (to scale)"),
    ]
    if void_label:
        handles.append(Patch(fc=VOID_FACE, ec=VOID_EDGE, hatch=VOID_HATCH, lw=0.6, label=void_label))
    sheet_legend(ax, handles, loc="lower left", bbox_to_anchor=(-0.005, 1.0), ncol=4)


def _exaggeration_note(fig, ax, report: dict, d, width_in: float, height_in: float) -> None:
    """Vertical exaggeration of the drawn panel: (inches per metre up) / (inches per metre along)."""
    pos = ax.get_position()
    w_in, h_in = pos.width * width_in, pos.height * height_in
    x_range_m = (d.length_km + 2 * d.pad) * 1000.0
    ve = (h_in / (d.y1 - d.y0)) / (w_in / x_range_m) if x_range_m > 0 else float("nan")
    bulge_max = float(np.nanmax(d.bulge)) if d.bulge.size else 0.0
    note = (f"Curved-Earth convention: terrain raised by the Earth bulge for k = {k_text(report.get('k_factor'))} "
            f"(up to {bulge_max:.1f} m), line of sight straight.   Vertical exaggeration "
            f"\u00d7{round_sig(ve)}")
    fig.text((pos.x0 + pos.x1) / 2, pos.y0 - 0.40 / height_in, note, ha="center", va="top", fontsize=6.8,
             style="italic", color="0.15", parse_math=False)


def _runs(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First and last index of each run of True in a boolean array."""
    padded = np.concatenate([[0], mask.astype(np.int8), [0]])
    step = np.diff(padded)
    return np.flatnonzero(step == 1), np.flatnonzero(step == -1) - 1
