"""Generate the synthetic land cover of the invented Vellmoor valley scenario.

Same grid and extent as the synthetic terrain ``vellmoor_synthetic_1s.tif``
(read from it, with its heights: 1 arc-second pixels, 0.25 deg x 0.25 deg in
open ocean; run ``make_sample_dem.py`` first), classes in the ESA WorldCover
code table (``profiler.terrain.landcover.WORLDCOVER_CLASSES``):

* Vellmoor town (50 built-up) on the valley floor around the church and
  Vellmoor Grange, with the Osterby farmstead north of it and small hamlets
  at the six water meters (Ingleside, Oxcroft, Coldwater, Underhill,
  Cressbrook, Ivybridge Pound);
* Harrowback Wood (10 tree cover) on the west slope of Harrowback Ridge,
  across the paths from Cairnfell Beacon to the valley;
* fields: cropland (40) parcels on the low ground, grassland (30) pasture
  on the slopes and the downs; heath (20 shrubland) on the top of Cairnfell
  hill; the quarry (60 bare) around the unsurveyed pit;
* Wendle Reservoir (80 permanent water bodies), with its level gauge.

Deterministic (the parcels' pasture draw is seeded).  The GeoTIFF is uint8 with the WorldCover
legend as its colour table (a class map, which ``--dem dem_samples`` leaves
out), DEFLATE-compressed, and carries SYNTHETIC=yes in its metadata.

Run:  python dem_samples/make_sample_landcover.py   (writes dem_samples/vellmoor_landcover.tif)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import rasterio

HERE = Path(__file__).resolve().parent
DEM = HERE / "vellmoor_synthetic_1s.tif"
WEST, NORTH, SIZE_DEG = -20.000, -29.800, 0.25    # the DEM's upper-left corner and size [deg]

TREES, SHRUBS, GRASS, CROPS, BUILT, BARE, WATER = 10, 20, 30, 40, 50, 60, 80
NODATA = 0  # the WorldCover value for "no data"

#: The WorldCover legend colours (product user manual class table), as the raster's colour table.
LEGEND_RGB = {10: (0, 100, 0), 20: (255, 187, 34), 30: (255, 255, 76), 40: (240, 150, 255),
              50: (250, 0, 0), 60: (180, 180, 180), 70: (240, 240, 240), 80: (0, 100, 200),
              90: (0, 150, 160), 95: (0, 207, 117), 100: (250, 230, 160)}

#: Hamlets at the water meters of examples/vellmoor_network.csv: (lat, lon) [deg], radius [-]
#: (Ingleside, Oxcroft, Coldwater, Underhill, Cressbrook, Ivybridge Pound).
HAMLETS = ((-29.8112, -19.9547, 0.010), (-29.9717, -19.9619, 0.010), (-29.9563, -19.8851, 0.008),
           (-29.8127, -19.8466, 0.009), (-30.0263, -19.9419, 0.009), (-29.9944, -19.8817, 0.008))


def _xy(lat_deg, lon_deg):
    """Grid fractions (0 west/north .. 1 east/south) of a point."""
    return (lon_deg - WEST) / SIZE_DEG, (NORTH - lat_deg) / SIZE_DEG


def _ellipse(x, y, cx, cy, rx, ry):
    return ((x - cx) / rx) ** 2 + ((y - cy) / ry) ** 2 < 1.0


def land_cover(lon: np.ndarray, lat: np.ndarray, z: np.ndarray) -> np.ndarray:
    """WorldCover class code (uint8) at lon/lat [deg] over terrain z [m]; painted in layers, later on top."""
    x, y = _xy(lat, lon)
    # Fields: cropland parcels on the low ground (a patchwork: about two parcels in seven are
    # pasture), grassland elsewhere.
    pasture = np.random.default_rng(20261203).random((64, 64)) < 2.0 / 7.0   # one draw per parcel
    col = np.clip(np.floor(x / 0.021).astype(np.int64), 0, 63)
    row = np.clip(np.floor(y / 0.017).astype(np.int64), 0, 63)
    code = np.where((z < 215.0) & ~pasture[row, col], CROPS, GRASS).astype(np.uint8)
    code[z > 520.0] = SHRUBS                                                    # heath on Cairnfell top
    # Harrowback Wood: the west slope of the ridge, with wavy edges.
    ridge_x = 0.47 + 0.05 * np.sin(2 * np.pi * y)
    edge = 0.09 + 0.015 * np.sin(23.0 * y)
    span = ((y - 0.45) / (0.17 + 0.02 * np.sin(31.0 * x))) ** 2 < 1.0
    code[(x > ridge_x - edge) & (x < ridge_x - 0.016 + 0.004 * np.sin(60.0 * y)) & span] = TREES
    code[_ellipse(x, y, 0.63, 0.62, 0.026, 0.022)] = BARE                     # the quarry
    # Vellmoor town on the valley floor, a little irregular, and the Osterby farmstead.
    wobble = 0.004 * np.sin(40.0 * x + 17.0 * y)
    code[_ellipse(x + wobble, y, 0.685, 0.56, 0.028, 0.075)] = BUILT
    code[_ellipse(x, y, 0.700, 0.40, 0.012, 0.010)] = BUILT
    for lat_c, lon_c, r in HAMLETS:
        cx, cy = _xy(lat_c, lon_c)
        code[_ellipse(x, y, cx, cy, r, r)] = BUILT
    code[_ellipse(x, y + 0.003 * np.sin(50.0 * x), 0.65, 0.80, 0.04, 0.022)] = WATER  # Wendle Reservoir
    return code


def main(out: Path | None = None) -> Path:
    out = out or HERE / "vellmoor_landcover.tif"
    with rasterio.open(DEM) as dem:
        z = dem.read(1, masked=True).astype(float).filled(np.nan)   # the quarry void is painted over
        grid = dict(width=dem.width, height=dem.height, crs=dem.crs, transform=dem.transform)
    cols, rows = np.meshgrid(np.arange(grid["width"]) + 0.5, np.arange(grid["height"]) + 0.5)
    lon, lat = grid["transform"] * (cols, rows)
    code = land_cover(lon, lat, z)
    profile = dict(driver="GTiff", count=1, dtype="uint8", nodata=NODATA, tiled=True, blockxsize=256,
                   blockysize=256, compress="deflate", predictor=1, **grid)
    tmp = out.with_suffix(".tmp.tif")
    with rasterio.open(tmp, "w", **profile) as dst:
        dst.write(code, 1)
        dst.write_colormap(1, {k: (*rgb, 255) for k, rgb in LEGEND_RGB.items()})
        dst.update_tags(SYNTHETIC="yes", SCENARIO="Vellmoor valley (invented)",
                        DESCRIPTION="Synthetic land cover for the profiler examples (ESA WorldCover "
                                    "class codes); not real land-cover data.",
                        GENERATOR="dem_samples/make_sample_landcover.py")
    tmp.replace(out)
    return out


if __name__ == "__main__":
    print(main())
