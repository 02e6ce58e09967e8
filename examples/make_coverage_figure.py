"""Draw the example coverage map of the invented Vellmoor valley scenario from a real run.

``profiler coverage`` from Cairnfell Beacon (-29.9125, -19.955), a 10 m
mast, nodes at 1.5 m, 8 km radius at the elevation data's own pixel size, on
the synthetic terrain in ``dem_samples/``.  Run from the repository root::

    python examples/make_coverage_figure.py          # writes examples/vellmoor_coverage.png
"""

from __future__ import annotations

import datetime
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
if str(ROOT) not in sys.path:           # run from a source checkout without installing
    sys.path.insert(0, str(ROOT))

from profiler import coverage  # noqa: E402
from profiler.io.sheetinfo import SheetInfo  # noqa: E402
from profiler.plot import write_coverage_figure  # noqa: E402

DEM = ROOT / "dem_samples"
SITE = (-29.9125, -19.955)


def main(out=HERE / "vellmoor_coverage.png"):
    t0 = time.perf_counter()
    info = SheetInfo(project="Vellmoor valley LoRaWAN telemetry", document="VV-RF-002", revision="A",
                     prepared_by="A. Planner", organisation="Vellmoor water board")
    result = coverage(SITE, dem=[str(DEM)], mast_m=10.0, name="Cairnfell Beacon", radius_km=8.0,
                      node_mast_m=1.5, progress=False, date=datetime.date(2026, 12, 2), sheet_info=info)
    write_coverage_figure(result, out, paper="a4", dpi=150, dem_paths=[str(DEM)], date_text="2026-12-02")
    print(f"{out} ({out.stat().st_size // 1024} kB, {time.perf_counter() - t0:.1f} s)")


if __name__ == "__main__":
    main()
