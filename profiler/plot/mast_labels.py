"""Texts of a plot panel placed off its curves: data labels and the legend never sit on a line.

A label on a curve hides the curve and is hard to read, so the mast sheet
places every text inside a panel at a spot that no plotted line crosses:

* :func:`line_points` samples every line of an axes (data lines and
  reference lines alike) in display coordinates, one point per pixel;
* :func:`place_label` tries offsets around the labelled point, nearest
  first, and keeps the first whose box (background included) holds no
  line point, stays inside the panel and overlaps no text placed before;
* :func:`place_legend` tries the legend positions the same way;
* :func:`place_off_lines` places a panel's labels and then its legend,
  giving the panel more headroom (a taller y range) and trying again when
  something finds no free spot.

matplotlib is imported only inside functions.
"""

from __future__ import annotations

import numpy as np

__all__ = ["line_points", "box_px", "is_clear", "place_label", "place_legend", "place_off_lines",
           "CLEAR_PT", "LEGEND_LOCS"]

#: Gap kept between a text's box and any line or other text [pt] (a marker's radius and a line's width).
CLEAR_PT = 2.5

#: Legend positions tried, in order.
LEGEND_LOCS = ("upper left", "upper right", "lower right", "lower left", "center left", "center right",
               "upper center", "lower center", "center")

#: Offsets of a label from its point: directions (x, y) and distances [pt], nearest first.
DIRECTIONS = ((1, 1), (1, -1), (-1, 1), (-1, -1), (0, 1), (0, -1), (1, 0), (-1, 0))
RADII_PT = (4.0, 8.0, 13.0, 20.0, 30.0, 42.0)


def line_points(ax) -> np.ndarray:
    """Display coordinates [px] of every visible line of ``ax``, sampled about once per pixel (N x 2)."""
    chunks = [np.empty((0, 2))]
    for line in ax.lines:
        if not line.get_visible():
            continue
        xy = line.get_transform().transform(line.get_path().vertices)
        xy = xy[np.isfinite(xy).all(axis=1)]
        if len(xy) < 2:
            chunks.append(xy)
            continue
        seg = np.diff(xy, axis=0)
        n = np.maximum(np.ceil(np.hypot(seg[:, 0], seg[:, 1])).astype(int), 1)
        idx = np.repeat(np.arange(len(seg)), n)
        frac = (np.arange(n.sum()) - np.repeat(np.cumsum(n) - n, n)) / np.repeat(n, n)
        chunks.extend([xy[idx] + seg[idx] * frac[:, None], xy[-1:]])
    return np.concatenate(chunks)


def box_px(artist, renderer) -> tuple[float, float, float, float]:
    """Display box (x0, y0, x1, y1) [px] of a text (its background box included) or a legend."""
    from matplotlib.text import Annotation, Text
    from matplotlib.transforms import Bbox

    if not isinstance(artist, Text):
        bb = artist.get_window_extent(renderer)
        return bb.x0, bb.y0, bb.x1, bb.y1
    if isinstance(artist, Annotation):
        artist.update_positions(renderer)
    bb = Text.get_window_extent(artist, renderer)
    patch = artist.get_bbox_patch()
    if patch is not None:
        artist.update_bbox_position_size(renderer)
        bb = Bbox.union([bb, patch.get_window_extent(renderer)])
    return bb.x0, bb.y0, bb.x1, bb.y1


def is_clear(box, ax, points, taken, pad_px: float) -> bool:
    """True when ``box`` lies inside ``ax``, holds no point of ``points`` and meets no box of ``taken``
    (each kept ``pad_px`` away)."""
    x0, y0, x1, y1 = box
    inner = ax.get_window_extent()
    if x0 < inner.x0 + pad_px or y0 < inner.y0 + pad_px or x1 > inner.x1 - pad_px or y1 > inner.y1 - pad_px:
        return False
    if len(points) and np.any((points[:, 0] > x0 - pad_px) & (points[:, 0] < x1 + pad_px)
                              & (points[:, 1] > y0 - pad_px) & (points[:, 1] < y1 + pad_px)):
        return False
    return not any(x0 < b[2] + pad_px and b[0] < x1 + pad_px and y0 < b[3] + pad_px and b[1] < y1 + pad_px
                   for b in taken)


def place_label(ax, renderer, text: str, xy, points, taken, *, force: bool = False, **kw):
    """An annotation of the data point ``xy`` at the nearest offset that :func:`is_clear` accepts.

    Returns the annotation (its box appended to ``taken``), or None when no offset is free (the
    annotation is then removed) unless ``force``: then it stays at the first offset tried.
    """
    pad = CLEAR_PT * ax.figure.dpi / 72.0
    ann = ax.annotate(text, xy, xytext=(0.0, 0.0), textcoords="offset points", parse_math=False,
                      annotation_clip=False, **kw)
    for radius in RADII_PT:
        for dx, dy in DIRECTIONS:
            ann.set_position((dx * radius, dy * radius))
            ann.set_horizontalalignment({1: "left", -1: "right", 0: "center"}[dx])
            ann.set_verticalalignment({1: "bottom", -1: "top", 0: "center"}[dy])
            box = box_px(ann, renderer)
            if is_clear(box, ax, points, taken, pad):
                taken.append(box)
                return ann
    if force:
        ann.set_position((RADII_PT[0], RADII_PT[0]))
        ann.set_horizontalalignment("left")
        ann.set_verticalalignment("bottom")
        taken.append(box_px(ann, renderer))
        return ann
    ann.remove()
    return None


def place_legend(ax, renderer, points, taken, *, force: bool = False, **kw):
    """The legend of ``ax`` at the first of :data:`LEGEND_LOCS` that :func:`is_clear` accepts.

    Returns the legend, or None when no position is free (the legend is removed) unless ``force``.
    """
    pad = CLEAR_PT * ax.figure.dpi / 72.0
    for loc in LEGEND_LOCS:
        legend = ax.legend(loc=loc, **kw)
        box = box_px(legend, renderer)
        if is_clear(box, ax, points, taken, pad):
            taken.append(box)
            return legend
    if force:
        legend = ax.legend(loc=LEGEND_LOCS[0], **kw)
        taken.append(box_px(legend, renderer))
        return legend
    ax.legend_.remove()
    return None


def place_off_lines(ax, renderer, labels, legend_kw, label_kw, attempts: int = 5):
    """Place ``labels`` (``[(text, (x, y)), ...]`` in data coordinates) and the legend of ``ax`` off its lines.

    The y range is frozen first; when something finds no free spot everything placed is removed,
    the range grows by 30 % at the top (headroom) and the placement starts again; the last
    attempt keeps what it cannot place at its first position.  Returns the boxes [px] placed.
    """
    ax.set_xlim(ax.get_xlim())
    ax.set_ylim(ax.get_ylim())
    for attempt in range(attempts):
        last = attempt == attempts - 1
        points, taken, placed = line_points(ax), [], []
        for text, xy in labels:
            ann = place_label(ax, renderer, text, xy, points, taken, force=last, **label_kw)
            if ann is None:
                break
            placed.append(ann)
        else:
            if place_legend(ax, renderer, points, taken, force=last, **legend_kw) is not None:
                return taken
        for ann in placed:
            ann.remove()
        low, high = ax.get_ylim()
        ax.set_ylim(low, high + 0.3 * (high - low))
    return []
