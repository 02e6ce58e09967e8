"""Draw the example link sheet for the invented Vellmoor valley scenario.

The gateway on Cairnfell Beacon (a hill-top, 10 m mast) talks to the pump
controller at Osterby Farm (2 m mast) across Harrowback Ridge.  The terrain
is the synthetic sample in ``dem_samples/`` (placed in open ocean on
purpose; no real place).  The link has line of sight but the ridge intrudes
into the first Fresnel zone, so the sheet shows the shortfall hatched, the
worst point annotated and the link budget that still closes.

Run from the repository root::

    python examples/make_example_figure.py            # writes examples/vellmoor_link.png

The same sheet from the command line::

    profiler link --dem dem_samples --site-a -29.9125,-19.955 --site-b -29.9,-19.825 \\
        --name-a "Cairnfell Beacon" --name-b "Osterby Farm pump" --mast-a 10 --mast-b 2 \\
        --project "Vellmoor valley LoRaWAN telemetry" --document VV-RF-0001 --revision A \\
        --prepared-by "A. Planner" --organisation "Vellmoor water board" --plot vellmoor_link.pdf
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
if str(ROOT) not in sys.path:           # run from a source checkout without installing
    sys.path.insert(0, str(ROOT))

from profiler.api import link  # noqa: E402
from profiler.io.sheetinfo import SheetInfo  # noqa: E402
from profiler.plot import write_link_figure  # noqa: E402

DEM = ROOT / "dem_samples" / "vellmoor_synthetic_1s.tif"
GATEWAY = ("Cairnfell Beacon", (-29.9125, -19.955), 10.0)      # name, (lat, lon) [deg], mast [m]
NODE = ("Osterby Farm pump", (-29.9, -19.825), 2.0)
SHEET = SheetInfo(project="Vellmoor valley LoRaWAN telemetry", document="VV-RF-0001", revision="A",
                  prepared_by="A. Planner", organisation="Vellmoor water board")   # invented; checked_by left blank


def main(out: Path | None = None, dpi: int = 120, paper: str = "a4") -> Path:
    """Analyse the example link and write its sheet; return the output path."""
    out = Path(out) if out is not None else HERE / "vellmoor_link.png"
    result = link(GATEWAY[1], NODE[1], dem=[DEM], name_a=GATEWAY[0], name_b=NODE[0],
                  mast_a_m=GATEWAY[2], mast_b_m=NODE[2], band="EU868", sheet_info=SHEET)
    write_link_figure(result.to_dict(), out, paper=paper, dpi=dpi, dem_paths=[DEM])
    return out


if __name__ == "__main__":
    start = time.perf_counter()
    path = main()
    print(f"{path} ({path.stat().st_size / 1024:.0f} kB, {time.perf_counter() - start:.1f} s)")
