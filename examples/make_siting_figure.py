"""Draw the example siting sheet of the invented Vellmoor valley scenario from a real run.

``profiler siting --redundancy 2 --land-cover dem_samples/vellmoor_landcover.tif``
over ``examples/siting_sites.csv`` (one existing gateway, four candidate
sites, five nodes, the pump in its pump house) on the synthetic terrain and
land cover in ``dem_samples/``; a node is heard when the probability over
locations that its uplink keeps the fade margin reaches the location
percentage (``--min-probability``).  Run from the repository root::

    python examples/make_siting_figure.py           # writes examples/vellmoor_siting.png
"""

from __future__ import annotations

import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
if str(HERE.parent) not in sys.path:    # run from a source checkout without installing
    sys.path.insert(0, str(HERE.parent))

from profiler import siting  # noqa: E402
from profiler.plot.siting import write_siting_figure  # noqa: E402


def main(out=HERE / "vellmoor_siting.png", redundancy=2):
    dem = [str(HERE.parent / "dem_samples")]
    result = siting(HERE / "siting_sites.csv", dem=dem, redundancy=redundancy, progress=False,
                    land_cover=[str(HERE.parent / "dem_samples" / "vellmoor_landcover.tif")])
    write_siting_figure(result.to_dict(), result.network, out, paper="a4", dpi=150, dem_paths=dem,
                        sheet={"project": "Vellmoor valley telemetry", "date": "2026-12-03"})
    print(f"{out}: chosen {', '.join(result.chosen)}; greedy objective {result.greedy['objective']:g}")


if __name__ == "__main__":
    main()
