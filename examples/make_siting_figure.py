"""Draw the example siting sheet of the invented Vellmoor valley scenario from a real run.

``profiler siting --redundancy 2`` over ``examples/siting_sites.csv`` (one
existing gateway, four candidate sites, five nodes) on the synthetic terrain
in ``dem_samples/``: the optimum opens two candidates (cost 4) where greedy
opens three (cost 5).  Run from the repository root::

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
    result = siting(HERE / "siting_sites.csv", dem=dem, redundancy=redundancy, progress=False)
    write_siting_figure(result.to_dict(), result.network, out, paper="a4", dpi=150, dem_paths=dem,
                        sheet={"project": "Vellmoor valley telemetry", "date": "2026-12-03"})
    print(f"{out}: chosen {', '.join(result.chosen)}; greedy objective {result.greedy['objective']:g}")


if __name__ == "__main__":
    main()
