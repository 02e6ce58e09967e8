"""Coverage benchmark: a 20 km radius at 30 m (about 1.4 million pixels) on a 1-arc-second tile.

Measured in one run on the machine at hand (figures, never asserted):

* the full run (delta-Bullington at every pixel, both budgets) on a local
  Dask cluster of ``--workers`` processes (default 2), and in-process unless
  ``--no-inprocess``;
* line of sight only: sampling every radial and the exact cumulative-maximum
  test (:func:`profiler.coverage_map.line_of_sight_radials`) put on the grid;
* the whole command with ``--diffraction none`` (free space; the Fresnel
  band still needs the geometry of every prefix);
* GDAL's ``gdal_viewshed`` on the same tile when that program is on the
  PATH (agreement of the visible pixels and the time ratio); otherwise the
  script says it is absent.

Usage: ``python benchmarks/bench_coverage.py [--radius-km 20] [--resolution-m 30] [--workers 2] [--no-inprocess]``
"""

from __future__ import annotations

import argparse
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench_profile import TILE_SOUTH, TILE_WEST, make_tile, tile_path  # noqa: E402

from profiler import geometry  # noqa: E402
from profiler.coverage_map import (Gateway, coverage, line_of_sight_radials, make_grid,  # noqa: E402
                                   pixel_polar, radial_count, radial_lookup, sample_radials)
from profiler.dem import ElevationModel  # noqa: E402
from profiler.radio import RadioSettings  # noqa: E402

SITE = (TILE_SOUTH + 0.5, TILE_WEST + 0.5)
MAST_M, NODE_M = 10.0, 1.5


def los_only(dem, radius_m, res_m):
    """Line-of-sight map alone: radial sampling, cumulative maximum, nearest-sample lookup [s, map]."""
    t0 = time.perf_counter()
    gw = Gateway("bench", SITE[0], SITE[1], MAST_M)
    grid = make_grid([gw], radius_m, res_m)
    n_rad = radial_count(radius_m, res_m)
    with ElevationModel.open([dem]) as model:
        d, t, n = sample_radials(model, gw, np.arange(n_rad) * 360.0 / n_rad, radius_m, res_m, False)
    los = line_of_sight_radials(d, t, n, t[:, 0] + MAST_M, NODE_M, float(geometry.effective_radius_m(4 / 3)))
    k, j, inside = radial_lookup(*pixel_polar(grid, gw), n_rad, radius_m / (d.shape[1] - 1), radius_m)
    ok = inside & (j < n[k])
    out = np.full(k.shape, np.nan, dtype=np.float32)
    out[ok] = los[k[ok], j[ok]]
    return time.perf_counter() - t0, out, grid


def viewshed(dem, grid, los_map, radius_m):
    """gdal_viewshed on the same tile, if installed: (seconds, agreement) or None."""
    exe = shutil.which("gdal_viewshed")
    if exe is None:
        return None
    import rasterio
    from rasterio.warp import Resampling, reproject

    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "vs.tif"
        t0 = time.perf_counter()
        subprocess.run([exe, "-ox", str(SITE[1]), "-oy", str(SITE[0]), "-oz", str(MAST_M), "-tz", str(NODE_M),
                        "-md", str(radius_m), "-cc", str(1 - 0.75), "-vv", "1", "-iv", "0", "-ov", "0",
                        str(dem), str(out)], check=True, capture_output=True)
        seconds = time.perf_counter() - t0
        with rasterio.open(out) as src:
            dst = np.zeros(los_map.shape, dtype=np.float32)
            reproject(rasterio.band(src, 1), dst, dst_transform=rasterio.Affine(*grid.transform),
                      dst_crs=grid.crs_wkt, resampling=Resampling.nearest)
    ok = np.isfinite(los_map)
    return seconds, float(np.mean((dst[ok] > 0.5) == (los_map[ok] > 0.5)))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--radius-km", type=float, default=20.0)
    ap.add_argument("--resolution-m", type=float, default=30.0)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--no-inprocess", action="store_true")
    args = ap.parse_args(argv)
    dem = tile_path()
    make_tile(dem)
    radius_m = args.radius_km * 1000.0
    kw = dict(dem=[dem], mast_m=MAST_M, radius_km=args.radius_km, resolution_m=args.resolution_m,
              node_mast_m=NODE_M, progress=False)
    t_los, los_map, grid = los_only(dem, radius_m, args.resolution_m)
    pixels = int(np.isfinite(los_map).sum())
    print(f"grid {grid.width} x {grid.height}, {pixels:,} pixels within {args.radius_km:g} km at "
          f"{args.resolution_m:g} m, {radial_count(radius_m, args.resolution_m)} radials")
    print(f"line of sight only (sampling + cumulative maximum + grid): {t_los:6.2f} s")
    t0 = time.perf_counter()
    coverage(SITE, radio=RadioSettings(diffraction_method="none"), workers=args.workers, **kw)
    print(f"--diffraction none, {args.workers} workers:              {time.perf_counter() - t0:6.2f} s")
    t0 = time.perf_counter()
    full = coverage(SITE, workers=args.workers, **kw)
    t_full = time.perf_counter() - t0
    print(f"delta-Bullington, {args.workers} workers:                {t_full:6.2f} s "
          f"({pixels / t_full:,.0f} pixels/s)")
    agree = np.mean((full.bands["line_of_sight"] == 1)[np.isfinite(los_map)] == (los_map == 1)[np.isfinite(los_map)])
    print(f"line-of-sight map vs the full run's band: {agree:.4%} agree")
    if not args.no_inprocess:
        t0 = time.perf_counter()
        coverage(SITE, **kw)
        t_in = time.perf_counter() - t0
        print(f"delta-Bullington, in-process:             {t_in:6.2f} s (workers speed-up {t_in / t_full:.2f}x)")
    vs = viewshed(dem, grid, los_map, radius_m)
    if vs is None:
        print("gdal_viewshed: absent on this machine (no comparison)")
    else:
        print(f"gdal_viewshed: {vs[0]:.2f} s (ours / GDAL time {t_los / vs[0]:.2f}), agreement {vs[1]:.2%}")


if __name__ == "__main__":
    main()
