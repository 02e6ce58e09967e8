"""Layout audit of a sheet: every text inside its box and the frame, none overlapping, none cut.

A sheet never misstates: a value that is cut off, hidden under another
text or pushed past the frame is a wrong value on paper.  :func:`layout_problems`
draws a figure once, records every text matplotlib actually draws, and
checks from the renderer's own extents that

* each text lies inside the sheet frame (:func:`profiler.plot.sheet.draw_frame`);
* each text marked with :func:`contain` lies inside that box (a table cell,
  a title-block box, a panel);
* no two drawn texts overlap (their boxes, a text's background box
  included, intersect by more than :data:`TOLERANCE_IN` on both axes);
* no text is shortened with an ellipsis (``…`` or ``...``);
* no text runs into a region reserved with :func:`reserve` (a table, the
  title block) unless it was marked to stay in that region's axes.

The sheets call :func:`contain` while drawing (cheap: it only stores the
box); the check itself runs in the test suite over a matrix of sheets.
matplotlib is imported only inside functions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["contain", "reserve", "drawn_texts", "layout_problems", "LayoutProblem", "TOLERANCE_IN", "FRAME_PAD_IN"]

#: Overlap or overshoot below this [in] is not a problem (anti-aliasing, rounding of extents).
TOLERANCE_IN = 0.012

#: Distance of the sheet frame from the paper edge [in] (as drawn by ``sheet.draw_frame``).
FRAME_PAD_IN = 0.22

#: Marks of a shortened text.
ELLIPSES = ("\u2026", "...")


@dataclass(frozen=True)
class LayoutProblem:
    """One defect: ``kind`` is ``outside-frame``, ``outside-box``, ``overlap``, ``intrudes`` or ``ellipsis``."""

    kind: str
    text: str
    other: str = ""
    detail: str = ""

    def __str__(self) -> str:
        other = f" / {self.other!r}" if self.other else ""
        detail = f" ({self.detail})" if self.detail else ""
        return f"{self.kind}: {self.text!r}{other}{detail}"


def contain(text, ax, box=None, name: str = ""):
    """Mark ``text`` as belonging inside ``box`` (left, bottom, right, top) in data coordinates of ``ax``.

    Without ``box`` the whole of ``ax`` is the container.  Returns ``text``.
    The box is stored with its transform and converted to display
    coordinates only when audited, so later layout changes are followed.
    """
    text._layout_box = (ax, None if box is None else tuple(float(v) for v in box), name)
    return text


def reserve(ax, box, name: str = ""):
    """Reserve ``box`` (left, bottom, right, top) in data coordinates of ``ax`` for the texts of ``ax``.

    A drawn text that is not marked (:func:`contain`) to stay in ``ax`` and
    overlaps the box is an ``intrudes`` problem: a note running into the
    title block's rules, a label over a table.
    """
    fig = ax.figure
    regions = getattr(fig, "_layout_reserved", None)
    if regions is None:
        regions = fig._layout_reserved = []
    regions.append((ax, tuple(float(v) for v in box), name or "a reserved region"))


def _reserved_px(fig):
    """The reserved regions of ``fig`` as (axes, (x0, y0, x1, y1) [px], name)."""
    out = []
    for ax, box, name in getattr(fig, "_layout_reserved", None) or ():
        (x0, y0), (x1, y1) = ax.transData.transform([(box[0], box[1]), (box[2], box[3])])
        out.append((ax, (min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1)), name))
    return out


def _container_px(text):
    """The display box (x0, y0, x1, y1) [px] a text was marked to stay in, or None."""
    mark = getattr(text, "_layout_box", None)
    if mark is None:
        return None, ""
    ax, box, name = mark
    if box is None:
        bb = ax.get_window_extent()
        return (bb.x0, bb.y0, bb.x1, bb.y1), name or "its panel"
    (x0, y0), (x1, y1) = ax.transData.transform([(box[0], box[1]), (box[2], box[3])])
    return (min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1)), name or "its box"


def drawn_texts(fig):
    """Draw ``fig`` once and return the :class:`matplotlib.text.Text` artists that drew a non-blank string."""
    from matplotlib.text import Text

    drawn = []
    original = Text.draw

    def recording_draw(self, renderer):
        if self.get_visible() and str(self.get_text()).strip() and self.get_alpha() != 0:
            drawn.append(self)
        return original(self, renderer)

    Text.draw = recording_draw
    try:
        fig.canvas.draw()
    finally:
        Text.draw = original
    return list(dict.fromkeys(drawn))


def _extent_px(text, renderer):
    """A drawn text's box [px]: its glyphs, or its background box when it has one."""
    bb = text.get_window_extent(renderer)
    patch = text.get_bbox_patch()
    if patch is not None:
        pb = patch.get_window_extent(renderer)
        bb = type(bb).union([bb, pb])
    return bb.x0, bb.y0, bb.x1, bb.y1


def layout_problems(fig, *, allow_overlap=()) -> list[LayoutProblem]:
    """Every layout defect of ``fig`` (empty list: the sheet is clean).

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        A sheet built on the Agg canvas (``sheet.new_sheet``); it is drawn once.
    allow_overlap : iterable of callable, optional
        Predicates ``(text_a, text_b) -> bool`` for pairs that may overlap by
        design (none of the sheets needs one today).

    Returns
    -------
    list of LayoutProblem
    """
    from .sheet import style

    with style():       # measured as written: the sheets' fonts and (unhinted) glyphs
        return _problems(fig, tuple(allow_overlap))


def _problems(fig, allow) -> list[LayoutProblem]:
    texts = drawn_texts(fig)
    renderer = fig.canvas.get_renderer()
    dpi = fig.dpi
    tol = TOLERANCE_IN * dpi
    width_px, height_px = fig.bbox.width, fig.bbox.height
    frame = (FRAME_PAD_IN * dpi, FRAME_PAD_IN * dpi, width_px - FRAME_PAD_IN * dpi, height_px - FRAME_PAD_IN * dpi)
    problems = []
    boxes = np.array([_extent_px(t, renderer) for t in texts], dtype=float).reshape(-1, 4)
    labels = [str(t.get_text()) for t in texts]
    for t, s, box in zip(texts, labels, boxes):
        if any(mark in s for mark in ELLIPSES):
            problems.append(LayoutProblem("ellipsis", s))
        if _outside(box, frame, tol):
            problems.append(LayoutProblem("outside-frame", s, detail=_by(box, frame, dpi)))
        container, name = _container_px(t)
        if container is not None and _outside(box, container, tol):
            problems.append(LayoutProblem("outside-box", s, detail=f"{name}: {_by(box, container, dpi)}"))
    for ax, region, name in _reserved_px(fig):
        for t, s, box in zip(texts, labels, boxes):
            mark = getattr(t, "_layout_box", None)
            if (mark is None or mark[0] is not ax) and _overlaps(box, region, tol):
                problems.append(LayoutProblem("intrudes", s, name))
    if len(texts) > 1:
        x0, y0, x1, y1 = boxes.T
        dx = np.minimum(x1[:, None], x1[None, :]) - np.maximum(x0[:, None], x0[None, :])
        dy = np.minimum(y1[:, None], y1[None, :]) - np.maximum(y0[:, None], y0[None, :])
        hit = np.triu((dx > tol) & (dy > tol), k=1)
        for i, j in zip(*np.nonzero(hit)):
            if any(rule(texts[i], texts[j]) for rule in allow):
                continue
            problems.append(LayoutProblem("overlap", labels[i], labels[j],
                                          f"{dx[i, j] / dpi:.3f} x {dy[i, j] / dpi:.3f} in"))
    return problems


def _overlaps(box, region, tol) -> bool:
    return (min(box[2], region[2]) - max(box[0], region[0]) > tol
            and min(box[3], region[3]) - max(box[1], region[1]) > tol)


def _outside(box, container, tol) -> bool:
    return (box[0] < container[0] - tol or box[1] < container[1] - tol
            or box[2] > container[2] + tol or box[3] > container[3] + tol)


def _by(box, container, dpi) -> str:
    """How far a box pokes out of its container [in], per side."""
    sides = {"left": container[0] - box[0], "bottom": container[1] - box[1],
             "right": box[2] - container[2], "top": box[3] - container[3]}
    return ", ".join(f"{side} {value / dpi:.3f} in" for side, value in sides.items() if value > 0)
