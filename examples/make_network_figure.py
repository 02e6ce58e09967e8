"""Draw the example network map for the invented Vellmoor valley scenario.

Two gateways (the hill-top Cairnfell Beacon and a candidate on Tollan Down)
and their nodes on the synthetic terrain in ``dem_samples/``.  The report is
a hand-built stand-in for a ``profiler network`` run (schema
``profiler.network/1``): distances and azimuths are real geodesics (pyproj,
WGS84), the margins are invented to show every link status.

Run from the repository root::

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

from profiler import CAUTION, __version__  # noqa: E402
from profiler.plot import write_network_figure  # noqa: E402

DEM = ROOT / "dem_samples" / "vellmoor_synthetic_1s.tif"
FADE_MARGIN_DB = 10.0

# name, lat [deg], lon [deg], mast [m], role, ground [m AMSL]
SITES = [
    ("Cairnfell Beacon", -29.9125, -19.955, 10.0, "gateway", 656.0),
    ("Tollan Down mast", -29.852, -19.792, 8.0, "candidate", 402.0),
    ("Osterby Farm pump", -29.900, -19.825, 2.0, "node", 281.0),
    ("Millbrook Tank", -29.850, -19.780, 2.0, "node", 395.0),
    ("Wendle Reservoir", -30.000, -19.845, 2.0, "node", 190.0),
    ("Quarry Gate sensor", -29.965, -19.820, 2.0, "node", 240.0),
    ("Saltmarsh Lane trough", -29.830, -19.930, 2.0, "node", 160.0),
    ("Harrowback weir gauge", -29.935, -19.870, 2.0, "node", 300.0),
    ("Greywater Sheepfold", -29.950, -19.930, 2.0, "node", 210.0),
    ("Lower Vellmoor school", -29.880, -19.890, 3.0, "node", 230.0),
    ("Fennick soil probe 1", -29.905, -19.800, 1.5, "node", 330.0),
    ("Fennick soil probe 2", -29.912, -19.795, 1.5, "node", 335.0),
    ("Tarn End rain gauge", -29.990, -19.760, 2.0, "node", 260.0),
    ("Offshore buoy (no data)", -29.780, -19.720, 2.0, "node", None),
]

# gateway, node, uplink margin [dB] (None: the link could not be computed), error
LINKS = [
    ("Cairnfell Beacon", "Osterby Farm pump", 14.2, None),
    ("Cairnfell Beacon", "Millbrook Tank", 18.9, None),
    ("Cairnfell Beacon", "Wendle Reservoir", -12.4, None),
    ("Cairnfell Beacon", "Quarry Gate sensor", None, "void in the elevation data on this path; use --fill-voids"),
    ("Cairnfell Beacon", "Saltmarsh Lane trough", 4.1, None),
    ("Cairnfell Beacon", "Harrowback weir gauge", 22.7, None),
    ("Cairnfell Beacon", "Greywater Sheepfold", 25.3, None),
    ("Cairnfell Beacon", "Lower Vellmoor school", 19.8, None),
    ("Cairnfell Beacon", "Fennick soil probe 1", 6.5, None),
    ("Cairnfell Beacon", "Fennick soil probe 2", -3.2, None),
    ("Cairnfell Beacon", "Tarn End rain gauge", -8.0, None),
    ("Cairnfell Beacon", "Offshore buoy (no data)", None, "site outside the elevation data"),
    ("Tollan Down mast", "Millbrook Tank", 31.5, None),
    ("Tollan Down mast", "Osterby Farm pump", 12.8, None),
    ("Tollan Down mast", "Fennick soil probe 1", 16.0, None),
    ("Tollan Down mast", "Fennick soil probe 2", 11.2, None),
    ("Tollan Down mast", "Tarn End rain gauge", 7.4, None),
    ("Tollan Down mast", "Wendle Reservoir", -1.5, None),
    ("Tollan Down mast", "Offshore buoy (no data)", None, "site outside the elevation data"),
]


def fixture_report() -> dict:
    """The hand-built ``profiler.network/1`` report of the example."""
    import pyproj

    geod = pyproj.Geod(ellps="WGS84")
    where = {s[0]: s for s in SITES}
    links = []
    for gateway, node, margin, error in LINKS:
        g, n = where[gateway], where[node]
        azimuth, _, distance = geod.inv(g[2], g[1], n[2], n[1])
        links.append({
            "gateway": gateway, "node": node, "distance_m": distance, "azimuth_deg": azimuth % 360.0,
            "line_of_sight": None if error else margin > 5.0, "fresnel_clear": None if error else margin > 15.0,
            "worst_fresnel_ratio": None, "worst_distance_m": None, "diffraction_db": None, "total_loss_db": None,
            "margin_db": margin, "downlink_margin_db": None if margin is None else margin + 1.0,
            "recommended_dr": None if margin is None or margin < 0 else "DR0", "closes": margin is not None and margin >= 0,
            "error": error})
    nodes = []
    for name, *_ in (s for s in SITES if s[4] == "node"):
        heard = [ln for ln in links if ln["node"] == name and ln["margin_db"] is not None
                 and ln["margin_db"] >= FADE_MARGIN_DB]
        best = max(heard, key=lambda ln: ln["margin_db"]) if heard else None
        nodes.append({"name": name, "gateways_heard": len(heard), "best_gateway": best and best["gateway"],
                      "best_margin_db": best and best["margin_db"], "recommended_dr": best and "DR0"})
    return {
        "schema": "profiler.network/1", "tool_version": __version__, "band": "EU868", "frequency_mhz": 868.1,
        "k_factor": 4.0 / 3.0, "fade_margin_db": FADE_MARGIN_DB,
        "sites": [{"name": s[0], "lat_deg": s[1], "lon_deg": s[2], "mast_m": s[3], "role": s[4], "ground_m": s[5]}
                  for s in SITES],
        "links": links, "nodes": nodes,
        "summary": {"links": len(links), "closing": sum(
                        1 for ln in links if ln["margin_db"] is not None and ln["margin_db"] >= FADE_MARGIN_DB),
                    "errors": sum(1 for ln in links if ln["error"]), "nodes_total": len(nodes),
                    "nodes_covered": sum(1 for n in nodes if n["gateways_heard"]),
                    "nodes_covered_twice": sum(1 for n in nodes if n["gateways_heard"] >= 2)},
        "dem": {"sources": [{"path": str(DEM.relative_to(ROOT)), "sha256": _sha256(DEM), "crs": "EPSG:4326",
                             "resolution": [1 / 3600, 1 / 3600]}]},
        "warnings": [], "caution": CAUTION}


def _sha256(path: Path) -> str:
    import hashlib

    return hashlib.sha256(path.read_bytes()).hexdigest()


def main(out: Path | None = None, dpi: int = 120, paper: str = "a4") -> Path:
    """Write the example network map; return the output path."""
    out = Path(out) if out is not None else HERE / "vellmoor_network.png"
    write_network_figure(fixture_report(), out, paper=paper, dpi=dpi, dem_paths=[DEM])
    return out


if __name__ == "__main__":
    start = time.perf_counter()
    path = main()
    print(f"{path} ({path.stat().st_size / 1024:.0f} kB, {time.perf_counter() - start:.1f} s)")
