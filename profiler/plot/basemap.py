"""Map panels shared by the sheets: extent, hillshade, north arrow, scale bar, degree ticks.

A map panel is drawn in plain longitude/latitude degrees with the axes'
aspect set to (metres per degree of latitude) / (metres per degree of
longitude) at the centre, so a metre is the same length both ways there
(an equirectangular view, adequate over the tens of kilometres a sheet
covers).  Metres per degree and the scale bar come from ``pyproj.Geod`` on
the WGS84 ellipsoid.

The usual order::

    ext = map_extent(ax, lon, lat)          # extent widened to the panel's shape
    prepare_map(ax, ext)                    # aspect, hatched "no data" background
    caption = hillshade(ax, dem_paths, ext) # rasterized relief
    ... draw the content ...
    finish_map(ax, ext)                     # limits, aspect applied
    furniture = place_furniture(ax, ext, points, reserved)  # north arrow and scale bar where least in the way
    ... labels scored with label_score(box, points, taken, furniture) ...

matplotlib and pyproj are imported inside the functions.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from .sheet import NODATA_HATCH, put_text


class MapExtent(NamedTuple):
    """A map panel's extent [deg] and scale [m/deg] (longitudes continuous, may pass 180)."""

    west: float
    east: float
    south: float
    north: float
    m_lon: float          # metres per degree of longitude at the centre
    m_lat: float          # metres per degree of latitude at the centre
    box_aspect: float     # width / height of the panel as placed, before its aspect is applied


def continuous_lon(lon_deg) -> np.ndarray:
    """Longitudes [deg] made continuous around the first one (no jump across 180 degrees)."""
    lon = np.asarray(lon_deg, dtype=float)
    if lon.size == 0:
        return lon
    return lon[0] + (lon - lon[0] + 180.0) % 360.0 - 180.0


def geod():
    """The WGS84 ellipsoid as a ``pyproj.Geod``."""
    import pyproj

    return pyproj.Geod(ellps="WGS84")


def box_aspect(ax) -> float:
    """Width / height of the axes as placed on the figure."""
    pos = ax.get_position()
    fig_w, fig_h = ax.figure.get_size_inches()
    return (pos.width * fig_w) / (pos.height * fig_h)


def map_extent(ax, lon_deg, lat_deg, margin_frac: float = 0.22, min_margin_m: float = 300.0) -> MapExtent:
    """The extent around points (box plus a margin) widened to the panel's shape, equal metres both ways.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        The map panel (its shape on the figure sets the extent's shape).
    lon_deg, lat_deg : array_like
        Points to show [deg]; longitudes continuous (:func:`continuous_lon`).
    margin_frac : float
        Margin as a fraction of the larger side of the points' box.
    min_margin_m : float
        Smallest margin [m].
    """
    lon, lat = np.asarray(lon_deg, dtype=float), np.asarray(lat_deg, dtype=float)
    g = geod()
    lat_c = float(np.clip(0.5 * (lat.min() + lat.max()), -89.0, 89.0))
    lon_c = float(0.5 * (lon.min() + lon.max()))
    m_lat = g.inv(lon_c, lat_c - 0.05, lon_c, lat_c + 0.05)[2] / 0.1
    m_lon = max(g.inv(lon_c - 0.05, lat_c, lon_c + 0.05, lat_c)[2] / 0.1, 1e-3 * m_lat)
    aspect = box_aspect(ax)
    w_m = (lon.max() - lon.min()) * m_lon
    h_m = (lat.max() - lat.min()) * m_lat
    margin = max(margin_frac * max(w_m, h_m), min_margin_m)
    w_m, h_m = w_m + 2 * margin, h_m + 2 * margin
    if w_m / h_m < aspect:
        w_m = h_m * aspect
    else:
        h_m = w_m / aspect
    lat_mid = 0.5 * (lat.min() + lat.max())
    south, north = max(lat_mid - 0.5 * h_m / m_lat, -90.0), min(lat_mid + 0.5 * h_m / m_lat, 90.0)
    return MapExtent(lon_c - 0.5 * w_m / m_lon, lon_c + 0.5 * w_m / m_lon, south, north, m_lon, m_lat, aspect)


def prepare_map(ax, ext: MapExtent) -> None:
    """Equal-metre aspect and a hatched background that shows wherever there is no elevation data."""
    from matplotlib.patches import Rectangle

    ax.set_aspect(ext.m_lat / ext.m_lon, adjustable="box")
    ax.add_patch(Rectangle((0, 0), 1, 1, transform=ax.transAxes, fc="white", ec="0.7",
                           hatch=NODATA_HATCH, lw=0.0, zorder=0))


def finish_map(ax, ext: MapExtent) -> None:
    """Set the limits of the extent and apply the aspect (so display positions are final)."""
    ax.set_xlim(ext.west, ext.east)
    ax.set_ylim(ext.south, ext.north)
    ax.apply_aspect()


def halo(width: float = 3.8):
    """Path effect: a white stroke under a line or text, for legibility over the relief."""
    from matplotlib import patheffects

    return [patheffects.withStroke(linewidth=width, foreground="white")]


def hillshade(ax, dem_paths, ext: MapExtent, pixels: int = 250) -> str:
    """Draw the hillshade of the elevation model over the extent (one image); return a caption.

    Tinted by height and lit from the north-west (azimuth 315 deg, altitude
    40 deg), with a vertical exaggeration of 1 to 6 chosen from the relief.
    ``pixels`` is the geometric mean of the grid's width and height.
    """
    from matplotlib.colors import LightSource, LinearSegmentedColormap, Normalize

    from ..terrain.elevation import ElevationModel

    west, east, south, north = ext.west, ext.east, ext.south, ext.north
    aspect = ext.box_aspect
    nx = int(round(pixels * math.sqrt(aspect)))
    ny = int(round(pixels / math.sqrt(aspect)))
    grid_lon, grid_lat = np.meshgrid(np.linspace(west, east, nx), np.linspace(north, south, ny))
    with ElevationModel.open(list(dem_paths)) as model:
        z = np.asarray(model.sample((grid_lon + 180.0) % 360.0 - 180.0, grid_lat), dtype=float)
    valid = np.isfinite(z)
    if not valid.any():
        return "no elevation data in the map area"
    zmin, zmax = float(np.nanmin(z)), float(np.nanmax(z))
    filled = np.where(valid, z, np.nanmean(z))
    cmap = LinearSegmentedColormap.from_list(
        "profiler_relief", ["#c9dcb4", "#e2dcae", "#d6bf92", "#bf9f78", "#ece6dc"])
    dx = (east - west) / max(nx - 1, 1) * ext.m_lon
    dy = (north - south) / max(ny - 1, 1) * ext.m_lat
    exaggeration = float(np.clip(0.08 * max(dx * nx, dy * ny) / max(zmax - zmin, 1.0), 1.0, 6.0))
    intensity = LightSource(azdeg=315.0, altdeg=40.0).hillshade(filled, vert_exag=exaggeration, dx=dx, dy=dy)
    tint = cmap(Normalize(zmin, zmax if zmax > zmin else zmin + 1.0)(filled))
    rgba = tint.copy()
    rgba[..., :3] = tint[..., :3] * (0.45 + 0.62 * intensity[..., np.newaxis]).clip(0.0, 1.0)
    rgba[..., 3] = np.where(valid, 1.0, 0.0)
    half_x, half_y = 0.5 * (east - west) / max(nx - 1, 1), 0.5 * (north - south) / max(ny - 1, 1)
    ax.imshow(rgba, extent=(west - half_x, east + half_x, south - half_y, north + half_y), origin="upper",
              interpolation="bilinear", zorder=1, aspect=ax.get_aspect(), rasterized=True)
    return f"hillshade, terrain {zmin:.0f}\u2013{zmax:.0f} m AMSL (hatched: no data)"


# --------------------------------------------------------------------------- label geometry
def keep_inside(label, ax, renderer) -> float:
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


def points_in(points: np.ndarray, box) -> float:
    """Fraction of ``points`` (N x 2, axes fraction) inside ``box``, padded by 1 % of the axes."""
    pad = 0.01
    inside = ((points[:, 0] > box.x0 - pad) & (points[:, 0] < box.x1 + pad)
              & (points[:, 1] > box.y0 - pad) & (points[:, 1] < box.y1 + pad))
    return float(np.count_nonzero(inside)) / max(len(points), 1)


def overlap(a, b) -> float:
    """Area shared by two boxes (any units, squared)."""
    return max(0.0, min(a.x1, b.x1) - max(a.x0, b.x0)) * max(0.0, min(a.y1, b.y1) - max(a.y0, b.y0))


# --------------------------------------------------------------------------- map furniture
def place_furniture(ax, ext: MapExtent, points: np.ndarray, boxes=(), renderer=None) -> list:
    """North arrow and scale bar in the corners least covered by ``points`` and ``boxes``; their boxes.

    ``points`` (N x 2) and ``boxes`` (matplotlib ``Bbox``: labels already
    placed, or room kept around markers still to be labelled) are in axes
    fractions.  Degree ticks go on the frame.  Returns the bounding boxes of
    the north arrow and of the scale bar in axes fractions (measured with
    ``renderer``, default the figure's), so that labels placed afterwards
    can keep clear of them (:func:`label_score`).
    """
    from matplotlib.transforms import Bbox

    def crowding(x0, y0, x1, y1):
        area = Bbox([[x0, y0], [x1, y1]])
        return points_in(points, area) + 50.0 * sum(overlap(area, b) for b in boxes)

    height_in = ax.get_window_extent().height / ax.figure.dpi       # furniture keeps its size on a big map
    arrow_x = min((0.92, 0.08), key=lambda x: crowding(x - 0.06, 0.74, x + 0.06, 0.98))
    arrow = north_arrow(ax, halo(), arrow_x, length=min(0.15, 0.38 / height_in))
    g = geod()
    bar_w = bar_length(g, ext.west, ext.east, ext.south, ext.north)[1] / (ext.east - ext.west)
    lefts = (0.06, 0.5 - 0.5 * bar_w, 0.88 - bar_w)                 # left, middle, right
    bar_left = min(lefts, key=lambda x: crowding(x - 0.04, 0.02, x + bar_w + 0.1, 0.18))
    bar = scale_bar(ax, g, ext.west, ext.east, ext.south, ext.north, height_frac=min(0.018, 0.045 / height_in),
                    left_frac=bar_left)
    degree_ticks(ax, ext.west, ext.east, ext.south, ext.north)
    renderer = renderer or ax.figure.canvas.get_renderer()
    return [artists_box(ax, artists, renderer) for artists in (arrow, bar)]


def artists_box(ax, artists, renderer):
    """The union of the drawn extents of ``artists`` (an annotation's arrow included) in axes fractions."""
    from matplotlib.transforms import Bbox

    extents = []
    for artist in artists:
        extents.append(artist.get_window_extent(renderer))
        patch = getattr(artist, "arrow_patch", None)
        if patch is not None:
            extents.append(patch.get_window_extent(renderer))
    return Bbox.union(extents).transformed(ax.transAxes.inverted())


def label_score(box, points, taken=(), furniture=(), moved_pt: float = 0.0) -> float:
    """How much a candidate label ``box`` (axes fractions) is in the way; lower is better.

    Sums the fraction of ``points`` it covers, the share of its area over
    other labels (``taken``) and, weighted most (any contact costs more
    than all the rest), over the map furniture (``furniture``: north arrow,
    scale bar, each padded by 0.6 % of the axes), plus the shift [pt] that
    :func:`keep_inside` needed to keep it within the frame.
    """
    area = max(box.width * box.height, 1e-9)
    covered = sum(overlap(box, other) for other in taken) / area
    pad = 0.006                    # a gap of about 2 pt to the furniture on a small map
    blocked = sum(overlap(box, other.padded(pad)) for other in furniture) / area
    return points_in(points, box) + 20.0 * covered + (10.0 + 200.0 * blocked if blocked else 0.0) + moved_pt / 30.0


def north_arrow(ax, path_effects, x: float, length: float = 0.15) -> list:
    """North arrow at axes-fraction ``x``, ``length`` axes fractions long (the map is drawn north up).

    Returns its artists (gid ``north-arrow``).
    """
    arrow = ax.annotate("", xy=(x, 0.95), xytext=(x, 0.95 - length), xycoords="axes fraction", zorder=8,
                        arrowprops=dict(arrowstyle="-|>,head_length=0.8,head_width=0.35", lw=1.4, color="black",
                                        shrinkA=0, shrinkB=0), gid="north-arrow")
    letter = put_text(ax, x, 0.935 - length, "N", transform=ax.transAxes, ha="center", va="top", fontsize=8,
                      fontweight="bold", zorder=8, path_effects=path_effects, gid="north-arrow")
    return [arrow, letter]


def bar_length(g, west, east, south, north) -> tuple[float, float, float]:
    """The scale bar's length: a 1-2-5 value about a third of the map's width [m], the same in
    longitude [deg], and the latitude it is measured along [deg] (pyproj.Geod, WGS84)."""
    y0 = south + 0.07 * (north - south)
    width_m = g.line_length([west, 0.5 * (west + east), east], [y0] * 3)
    target = 0.32 * width_m
    exponent = math.floor(math.log10(target))
    nice = max(v * 10 ** exponent for v in (1, 2, 5) if v * 10 ** exponent <= target)
    return nice, (g.fwd(west, y0, 90.0, nice)[0] - west) % 360.0, y0


def scale_bar(ax, g, west, east, south, north, right: bool = False, height_frac: float = 0.018,
              left_frac: float | None = None) -> list:
    """Scale bar along the parallel in a lower corner; lengths from pyproj.Geod (WGS84).

    The bar is a 1-2-5 length about a third of the map's width, drawn as a
    black and a white half (gid ``scale-bar``), ``height_frac`` of the map's
    height, on a white backing (gid ``scale-bar-backing``) with its numbers
    and unit (gid ``scale-bar``), in the lower left or right corner, or
    with its left end at ``left_frac`` of the map's width.  Returns all its
    artists.
    """
    from matplotlib.patches import Rectangle

    nice, length_deg, y0 = bar_length(g, west, east, south, north)
    if left_frac is not None:           # the bar's left end at this fraction of the map's width
        x0 = west + left_frac * (east - west)
    else:
        x0 = east - 0.12 * (east - west) - length_deg if right else west + 0.06 * (east - west)
    x1 = x0 + length_deg
    h = height_frac * (north - south)
    xm = 0.5 * (x0 + x1)
    artists = [ax.add_patch(Rectangle((x0 - 0.02 * (east - west), y0 - 2.6 * h), (x1 - x0) + 0.09 * (east - west),
                                      6.4 * h, fc="white", ec="none", alpha=0.8, zorder=7,
                                      gid="scale-bar-backing"))]
    for left, right_x, face in ((x0, xm, "black"), (xm, x1, "white")):
        artists.append(ax.add_patch(Rectangle((left, y0), right_x - left, h, fc=face, ec="black", lw=0.6, zorder=8,
                                              gid="scale-bar")))
    unit, scale = ("km", 1000.0) if nice >= 1000 else ("m", 1.0)
    for x, value in ((x0, 0.0), (x1, nice / scale)):
        artists.append(put_text(ax, x, y0 + 1.6 * h, f"{value:g}", ha="center", va="bottom", fontsize=6.2, zorder=8,
                                gid="scale-bar"))
    artists.append(put_text(ax, x1 + 0.012 * (east - west), y0 + 0.5 * h, unit, ha="left", va="center",
                            fontsize=6.2, zorder=8, gid="scale-bar"))
    return artists


def degree_ticks(ax, west, east, south, north) -> None:
    """Three or so ticks per side labelled in degrees with a hemisphere letter."""
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


def empty_panel(ax, message: str, detail: str) -> None:
    """A hatched panel with a boxed message in place of a map."""
    from matplotlib.patches import Rectangle

    ax.set_xticks([])
    ax.set_yticks([])
    ax.add_patch(Rectangle((0, 0), 1, 1, transform=ax.transAxes, fc="white", ec="0.75",
                           hatch=NODATA_HATCH, lw=0.0, zorder=0))
    put_text(ax, 0.5, 0.52, message, transform=ax.transAxes, ha="center", va="bottom", fontsize=8.5,
             fontweight="bold", bbox=dict(boxstyle="square,pad=0.4", fc="white", ec="0.4", lw=0.6))
    put_text(ax, 0.5, 0.44, detail, transform=ax.transAxes, ha="center", va="top", fontsize=6.8, color="0.25",
             bbox=dict(boxstyle="square,pad=0.3", fc="white", ec="none"))
