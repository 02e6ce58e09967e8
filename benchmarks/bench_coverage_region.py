"""A region larger than memory: 100 km at 30 m (35 million pixels in the disc), streamed (figures, never asserted).

Builds an invented 3-arc-second elevation raster of 3 x 3 degrees around the
benchmark tile of ``bench_profile`` (rolling hills and two ridges, seeded,
written once next to the tile), then runs ``profiler coverage`` from the
shell with ``--radius-km 100 --resolution-m 30`` and the default model
(P.1812-8), once in-process and, with ``--workers N``, once on a local Dask
cluster of N processes.  The grid (6,683 x 6,683 = 44.7 million pixels) is
over the in-memory limit, so the run streams: the radial sectors go to
temporary files and the GeoTIFF is written tile by tile within
``--max-memory-mb`` (default 2048).  Printed: wall time, the peak resident
memory of the command (``ru_maxrss`` of the child, and of the Dask workers'
largest where they run), the pixels computed and whether the two GeoTIFFs
are identical.

Usage: ``python benchmarks/bench_coverage_region.py [--radius-km 100] [--resolution-m 30] [--max-memory-mb 2048]
[--workers 0] [--model p1812]``
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_profile import TILE_SOUTH, TILE_WEST  # noqa: E402

SITE = (TILE_SOUTH + 0.5, TILE_WEST + 0.5)
ARCSEC3 = 3.0 / 3600.0


def region_path() -> Path:
    return Path(tempfile.gettempdir()) / "profiler-bench" / f"region_{TILE_SOUTH - 1}_{TILE_WEST - 1}_3arcsec.tif"


def make_region(path: Path) -> None:
    """3 x 3 degrees of invented terrain at 3 arc-seconds (3601 x 3601 int16), written once."""
    import rasterio
    from rasterio.transform import Affine

    if path.exists():
        return
    path.parent.mkdir(parents=True, exist_ok=True)
    n = 3601
    lat = np.linspace(TILE_SOUTH + 2, TILE_SOUTH - 1, n)[:, None]
    lon = np.linspace(TILE_WEST - 1, TILE_WEST + 2, n)[None, :]
    rng = np.random.default_rng(22)
    z = (300.0 + 120.0 * np.sin(lat * 9.0) * np.cos(lon * 7.0) + 60.0 * np.sin(lat * 31.0 + lon * 17.0)
         + 250.0 * np.exp(-((lon - TILE_WEST - 0.8) / 0.05) ** 2)
         + 180.0 * np.exp(-((lat - TILE_SOUTH - 0.2) / 0.04) ** 2)
         + rng.normal(0.0, 4.0, (n, n)))
    transform = Affine(ARCSEC3, 0.0, TILE_WEST - 1 - 0.5 * ARCSEC3, 0.0, -ARCSEC3, TILE_SOUTH + 2 + 0.5 * ARCSEC3)
    tmp = path.with_suffix(".part.tif")
    with rasterio.open(tmp, "w", driver="GTiff", width=n, height=n, count=1, dtype="int16", crs="EPSG:4326",
                       transform=transform, tiled=True, blockxsize=256, blockysize=256, compress="deflate") as dst:
        dst.write(np.round(z).astype(np.int16), 1)
    tmp.rename(path)


def run(args, out: Path, workers: int) -> dict:
    """``profiler coverage`` on the region; wall time, peak memory of the command [MB] and the summary."""
    cmd = [sys.executable, "-m", "profiler", "coverage", "--dem", str(region_path()),
           "--site", f"{SITE[0]},{SITE[1]}", "--mast-m", "30", "--radius-km", str(args.radius_km),
           "--resolution-m", str(args.resolution_m), "--model", args.model,
           "--max-memory-mb", str(args.max_memory_mb), "--out", str(out), "--json", str(out.with_suffix(".json"))]
    if workers:
        cmd += ["--workers", str(workers)]
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    t0 = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True)
    seconds = time.perf_counter() - t0
    if done.returncode:
        raise SystemExit(f"profiler coverage failed: {done.stderr.strip()}")
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    report = json.loads(out.with_suffix(".json").read_text())
    return {"seconds": seconds, "peak_mb": max(peak, before) / 1024.0, "report": report}


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--radius-km", type=float, default=100.0)
    ap.add_argument("--resolution-m", type=float, default=30.0)
    ap.add_argument("--max-memory-mb", type=float, default=2048.0)
    ap.add_argument("--model", default="p1812")
    ap.add_argument("--workers", type=int, default=0, help="also run on a local Dask cluster of N workers")
    args = ap.parse_args(argv)
    make_region(region_path())
    with tempfile.TemporaryDirectory() as tmp:
        outs = {}
        for workers in [0] + ([args.workers] if args.workers else []):
            out = Path(tmp) / f"region_{workers}.tif"
            res = run(args, out, workers)
            s = res["report"]["summary"]
            grid = res["report"]["grid"]
            print(f"{'in-process' if not workers else f'{workers} Dask workers':<16} {res['seconds']:8.1f} s, "
                  f"peak memory {res['peak_mb']:,.0f} MB (largest child process), grid {grid['width']} x "
                  f"{grid['height']}, {s['pixels_computed']:,} pixels computed, budget {args.max_memory_mb:g} MB",
                  flush=True)
            outs[workers] = out
        if len(outs) == 2:
            import rasterio

            with rasterio.open(outs[0]) as a, rasterio.open(outs[args.workers]) as b:
                same = all(np.array_equal(a.read(i), b.read(i), equal_nan=True) for i in range(1, a.count + 1))
            print(f"in-process and Dask GeoTIFFs identical: {same}")


if __name__ == "__main__":
    main()
