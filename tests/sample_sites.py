"""Invented sites on the bundled synthetic terrain (dem_samples/), shared by the tests."""

from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEM = [ROOT / "dem_samples" / "vellmoor_synthetic_1s.tif"]
GATEWAY = (-29.9125, -19.955)          # (lat, lon) hill-top gateway "Cairnfell Beacon"
PUMP = (-29.9, -19.825)                # "Osterby Farm pump", behind Harrowback Ridge
TANK = (-29.85, -19.78)                # "Millbrook Tank", clear path
SHEEPFOLD = (-29.95, -19.93)           # low site with the ridge between it and the pump
EVIL_A = '<b>&"=HYPERLINK("x")'        # hostile names: markup, quotes and a spreadsheet formula
EVIL_B = '=HYPERLINK("x")&"<i>"'

#: The propagation-model options every consistency test runs with (issue 19 item 5): the terrain model,
#: ITU-R P.1812-8 at its medians, and P.1812-8 at 10 % of time and 95 % of locations (where the time
#: interpolation and the location term of eq. (69) are not zero).
MODEL_OPTIONS = {
    "terrain": ("--model", "terrain"),
    "p1812": ("--model", "p1812"),
    "p1812-10t-95l": ("--model", "p1812", "--time-percent", "10", "--location-percent", "95"),
}
