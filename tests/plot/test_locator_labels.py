"""Site labels on the link sheet's locator map keep clear of the map furniture and of the frame.

Paths run corner to corner of the bundled synthetic terrain (and along a
parallel and a meridian), so that the sites sit near the corners and the
edges of the locator, where the north arrow and the scale bar are.  The
check is geometric, on the drawn figure: each label's box (as rendered by
Agg) lies inside the map axes and shares no area with the north arrow's or
the scale bar's boxes, nor with the other label.
"""

import pytest
from sample_sites import DEM

CORNER_PATHS = {
    "south-west to north-east": ((-30.03, -19.985), (-29.82, -19.765)),
    "north-east to south-west": ((-29.82, -19.765), (-30.03, -19.985)),
    "north-west to south-east": ((-29.82, -19.985), (-30.03, -19.765)),
    "south-east to north-west": ((-30.03, -19.765), (-29.82, -19.985)),
    "west to east": ((-29.93, -19.99), (-29.93, -19.76)),
    "south to north": ((-30.04, -19.87), (-29.81, -19.87)),
}
NAMES = ("Wendle Reservoir overflow weir", "Tollan Down mast and cabin")


def _union(boxes):
    from matplotlib.transforms import Bbox

    return Bbox.union(boxes)


def _shared_area(a, b) -> float:
    return max(0.0, min(a.x1, b.x1) - max(a.x0, b.x0)) * max(0.0, min(a.y1, b.y1) - max(a.y0, b.y0))


@pytest.fixture(scope="module")
def drawn():
    from profiler.api import link
    from profiler.plot import build_link_figure

    out = {}
    for case, (a, b) in CORNER_PATHS.items():
        report = link(a, b, dem=DEM, name_a=NAMES[0], name_b=NAMES[1], band="EU868", fill_voids=True).to_dict()
        fig = build_link_figure(report, dem_paths=DEM)
        fig.canvas.draw()                                   # the positions as rendered
        out[case] = fig
    return out


def _locator(fig):
    return next(ax for ax in fig.axes if ax.get_title(loc="left") == "Locator")


@pytest.mark.parametrize("case", sorted(CORNER_PATHS))
def test_labels_clear_of_furniture_and_inside_the_map(drawn, case):
    fig = drawn[case]
    ax = _locator(fig)
    renderer = fig.canvas.get_renderer()
    frame = ax.get_window_extent(renderer)
    labels = [t for t in ax.texts if (t.get_gid() or "").startswith("site-label-")]
    assert sorted(t.get_gid() for t in labels) == ["site-label-a", "site-label-b"]
    arrow = _union([a.get_window_extent(renderer) for a in ax.get_children() if a.get_gid() == "north-arrow"]
                   + [a.arrow_patch.get_window_extent(renderer) for a in ax.texts
                      if a.get_gid() == "north-arrow" and getattr(a, "arrow_patch", None) is not None])
    bar = _union([a.get_window_extent(renderer) for a in ax.get_children()
                  if (a.get_gid() or "").startswith("scale-bar")])
    boxes = [t.get_window_extent(renderer) for t in labels]
    for box in boxes:
        assert frame.x0 - 0.5 <= box.x0 and box.x1 <= frame.x1 + 0.5      # inside the map axes [px]
        assert frame.y0 - 0.5 <= box.y0 and box.y1 <= frame.y1 + 0.5
        assert _shared_area(box, arrow) == 0.0
        assert _shared_area(box, bar) == 0.0
    assert _shared_area(*boxes) == 0.0


def test_worst_point_marker_never_hides_a_site(drawn):
    ax = _locator(drawn["west to east"])
    markers = {line.get_marker(): line for line in ax.lines if line.get_marker() not in (None, "None", "")}
    worst, site_a, site_b = markers["X"], markers["^"], markers["o"]
    for site in (site_a, site_b):
        assert worst.get_zorder() < site.get_zorder()
        assert worst.get_markersize() < site.get_markersize()
