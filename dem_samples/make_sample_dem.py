"""Generate the synthetic sample terrain for the invented Vellmoor valley scenario.

The terrain is made up: a hill-top with the gateway (Cairnfell Beacon) on the
west, a long north-south ridge (Harrowback Ridge) across the middle, the
Vellmoor valley floor with farms east of it, and a small nodata void (an
unsurveyed quarry pit) to show --fill-voids.  It is placed in open ocean
(South Atlantic) on purpose, so it can never be mistaken for real terrain.
The GeoTIFF carries SYNTHETIC=yes in its metadata.

Run:  python dem_samples/make_sample_dem.py   (writes dem_samples/vellmoor_synthetic_1s.tif)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import rasterio
from rasterio.transform import from_origin

WEST, NORTH = -20.000, -29.800          # upper-left corner [deg]
SIZE_DEG = 0.25                          # 0.25 deg x 0.25 deg
RES_DEG = 1.0 / 3600.0                   # 1 arc-second pixels
NODATA = -32768


def terrain_m(lon: np.ndarray, lat: np.ndarray) -> np.ndarray:
    """Synthetic elevation [m] at lon/lat (deg); smooth, deterministic."""
    x = (lon - WEST) / SIZE_DEG          # 0 (west) .. 1 (east)
    y = (NORTH - lat) / SIZE_DEG         # 0 (north) .. 1 (south)
    z = 160.0 + 60.0 * y                 # gentle tilt to the south
    z += 470.0 * np.exp(-(((x - 0.18) / 0.10) ** 2 + ((y - 0.45) / 0.12) ** 2))       # Cairnfell hill
    ridge_x = 0.47 + 0.05 * np.sin(2 * np.pi * y)
    z += 260.0 * np.exp(-((x - ridge_x) / 0.035) ** 2) * (0.75 + 0.25 * np.cos(3 * np.pi * y))  # Harrowback Ridge
    z += 140.0 * np.exp(-(((x - 0.88) / 0.09) ** 2 + ((y - 0.20) / 0.10) ** 2))       # Tollan Down, east
    z -= 60.0 * np.exp(-((x - 0.68) / 0.08) ** 2)                                      # Vellmoor valley floor
    rng = np.random.default_rng(20261201)
    z += 4.0 * np.sin(37 * x + 3 * rng.random()) * np.sin(41 * y + 3 * rng.random())  # field-scale relief
    return z


def main(out: Path | None = None) -> Path:
    out = out or Path(__file__).with_name("vellmoor_synthetic_1s.tif")
    n = int(round(SIZE_DEG / RES_DEG))
    cols = WEST + (np.arange(n) + 0.5) * RES_DEG
    rows = NORTH - (np.arange(n) + 0.5) * RES_DEG
    lon, lat = np.meshgrid(cols, rows)
    z = np.round(terrain_m(lon, lat)).astype(np.int16)
    # Unsurveyed quarry pit: a nodata void east of the ridge.
    x = (lon - WEST) / SIZE_DEG
    y = (NORTH - lat) / SIZE_DEG
    z[((x - 0.63) ** 2 + (y - 0.62) ** 2) < 0.012 ** 2] = NODATA
    profile = dict(driver="GTiff", width=n, height=n, count=1, dtype="int16", crs="EPSG:4326",
                   transform=from_origin(WEST, NORTH, RES_DEG, RES_DEG), nodata=NODATA,
                   tiled=True, blockxsize=256, blockysize=256, compress="deflate", predictor=2)
    tmp = out.with_suffix(".tmp.tif")
    with rasterio.open(tmp, "w", **profile) as dst:
        dst.write(z, 1)
        dst.update_tags(SYNTHETIC="yes", SCENARIO="Vellmoor valley (invented)",
                        DESCRIPTION="Synthetic terrain for the profiler examples; not real elevation data.",
                        GENERATOR="dem_samples/make_sample_dem.py")
        dst.set_band_unit(1, "metre")
    tmp.replace(out)
    return out


if __name__ == "__main__":
    print(main())
