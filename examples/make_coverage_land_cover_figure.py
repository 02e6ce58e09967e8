"""Draw the README's side-by-side maps: the same gateway without and with the sample land cover.

``profiler coverage`` from Cairnfell Beacon (-29.9125, -19.955), a 10 m mast,
nodes at 1.5 m, 8 km radius at the elevation data's own pixel size, the
default model (ITU-R P.1812-8), once on the bare terrain and once with
``--land-cover dem_samples/vellmoor_landcover.tif`` (the built-in ESA
WorldCover mapping).  Both maps show the margin classes of the coverage
sheet.  Run from the repository root::

    python examples/make_coverage_land_cover_figure.py   # writes examples/vellmoor_coverage_land_cover.png
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
if str(ROOT) not in sys.path:           # run from a source checkout without installing
    sys.path.insert(0, str(ROOT))

from profiler import CAUTION, coverage  # noqa: E402

DEM = ROOT / "dem_samples"
LAND_COVER = DEM / "vellmoor_landcover.tif"
SITE = (-29.9125, -19.955)


def build(bare, covered, dem_paths):
    """The figure: two maps side by side, their heard areas, one legend, the caution."""
    import matplotlib.pyplot as plt
    from matplotlib.patches import Patch

    from profiler.io.coverage import CLASS_ALPHA, CLASS_COLOURS, class_labels
    from profiler.plot.coverage import draw_coverage_map
    from profiler.plot.sheet import style

    with style():
        fig = plt.figure(figsize=(11.0, 6.2))
        renderer = fig.canvas.get_renderer()
        for i, (result, what) in enumerate(((bare, "without land cover"), (covered, "with the sample land cover"))):
            ax = fig.add_axes((0.04 + 0.49 * i, 0.2, 0.44, 0.68))
            draw_coverage_map(ax, result, dem_paths, renderer)
            s = result.report["summary"]
            ax.set_title(f"Cairnfell Beacon, {what}\nheard with the fade margin: "
                         f"{s['covered']['area_km2']:.1f} km\u00b2 ({s['covered']['share']:.0%}), "
                         f"mean probability {s['mean_probability_heard']:.2f}",
                         fontsize=9, fontweight="bold", loc="left")
        fade = bare.report["settings"]["fade_margin_db"]
        handles = [Patch(fc=c, alpha=a, ec="0.3", lw=0.5, label=t)
                   for c, a, t in zip(CLASS_COLOURS, CLASS_ALPHA, class_labels(bare.bands, fade))]
        fig.legend(handles=handles, loc="lower center", ncol=3, fontsize=7.5, frameon=False,
                   bbox_to_anchor=(0.5, 0.035), title="Uplink margin (node to gateway), data rate",
                   title_fontsize=8)
        fig.text(0.5, 0.01, CAUTION, ha="center", va="bottom", fontsize=7, fontweight="bold")
    return fig


def main(out=HERE / "vellmoor_coverage_land_cover.png"):
    t0 = time.perf_counter()
    kw = dict(dem=[str(DEM)], mast_m=10.0, name="Cairnfell Beacon", radius_km=8.0, node_mast_m=1.5, progress=False)
    bare = coverage(SITE, **kw)
    covered = coverage(SITE, land_cover=[str(LAND_COVER)], **kw)
    for label, r in (("without", bare), ("with", covered)):
        s = r.report["summary"]
        heard = s["heard_at_location_percent"]
        print(f"{label} land cover: heard {s['covered']['area_km2']:.2f} km2, at {heard['location_percent']:g} % "
              f"of locations {heard['area_km2']:.2f} km2, mean probability {s['mean_probability_heard']:.3f}")
    fig = build(bare, covered, [str(DEM)])
    fig.savefig(out, dpi=110)
    print(f"{out} ({out.stat().st_size // 1024} kB, {time.perf_counter() - t0:.1f} s)")


if __name__ == "__main__":
    main()
