"""Draw the example network map of the invented Vellmoor valley scenario from a real run.

``profiler network --land-cover dem_samples/vellmoor_landcover.tif`` over
``examples/vellmoor_network.csv`` (two gateways, four candidate sites, forty
nodes: the water meters indoors with a meter-pit loss, the soil probes in
orchard trees) on the synthetic terrain and land cover in ``dem_samples/``,
drawn as ``profiler network --plot`` draws it by default
(``--links best``: per node its best link from an existing gateway and its
best from a candidate site).  Run from the repository root::

    python examples/make_network_figure.py          # writes examples/vellmoor_network.png
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
if str(ROOT) not in sys.path:           # run from a source checkout without installing
    sys.path.insert(0, str(ROOT))

from profiler import network  # noqa: E402
from profiler.plot import write_network_figure  # noqa: E402

DEM = ROOT / "dem_samples"


def main(out=HERE / "vellmoor_network.png"):
    t0 = time.perf_counter()
    report = network(HERE / "vellmoor_network.csv", dem=[str(DEM)], progress=False,
                     land_cover=[str(DEM / "vellmoor_landcover.tif")]).to_dict()
    write_network_figure(report, out, paper="a4", dpi=150, dem_paths=[str(DEM)], date_text="2026-12-02",
                         links="best")
    print(f"{out} ({out.stat().st_size // 1024} kB, {time.perf_counter() - t0:.1f} s)")


if __name__ == "__main__":
    main()
