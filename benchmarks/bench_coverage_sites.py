"""Composite coverage benchmark: N = 1, 4, 16 sites, in memory and streamed (figures, never asserted).

The sites stand on a square lattice ``--spacing-km`` apart in the middle of the invented 1-arc-second
tile of ``bench_profile``; each has a ``--radius-km`` circle at ``--resolution-m``.  Printed per N: the
wall time of the composite (``profiler.products.coverage.map.coverage`` with a site list), its grid,
and the cost per site against the single map (``t_N / (N t_1)``: 1.0 means a composite of N sites costs
N single maps); then the same composite streamed with ``--max-memory-mb`` (the GeoTIFF tile by tile).
The model is ``--model`` (default ``terrain``, the delta-Bullington diffraction).

Usage: ``python benchmarks/bench_coverage_sites.py [--radius-km 3] [--resolution-m 30] [--spacing-km 3]
[--model terrain] [--max-memory-mb 64] [--sites 1,4,16]``
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench_profile import TILE_SOUTH, TILE_WEST, make_tile, tile_path  # noqa: E402

from profiler.engine.model import PropagationSettings  # noqa: E402
from profiler.engine.radio import RadioSettings  # noqa: E402
from profiler.products.coverage.map import coverage  # noqa: E402
from profiler.products.coverage.radials import keep_freed_memory  # noqa: E402

CENTRE = (TILE_SOUTH + 0.5, TILE_WEST + 0.5)


def site_list(folder: Path, n: int, spacing_km: float) -> Path:
    """A site list of ``n`` gateways on a square lattice ``spacing_km`` apart around the tile's centre."""
    import math

    side = math.ceil(math.sqrt(n))
    dlat = spacing_km / 111.2
    dlon = dlat / math.cos(math.radians(CENTRE[0]))
    rows = ["name,lat_deg,lon_deg,mast_m,role"]
    for i in range(n):
        r, c = divmod(i, side)
        rows.append(f"Bench {i},{CENTRE[0] + (r - (side - 1) / 2) * dlat:.6f},"
                    f"{CENTRE[1] + (c - (side - 1) / 2) * dlon:.6f},10,gateway")
    path = folder / f"sites_{n}.csv"
    path.write_text("\n".join(rows) + "\n")
    return path


def run(dem, csv, args, max_memory_mb=None):
    """One composite run: (wall time [s], grid pixels)."""
    radio = RadioSettings(propagation=PropagationSettings(model=args.model))
    t0 = time.perf_counter()
    result = coverage(dem=[dem], sites=csv, radius_km=args.radius_km, resolution_m=args.resolution_m,
                      radio=radio, progress=False, max_memory_mb=max_memory_mb)
    elapsed = time.perf_counter() - t0
    result.discard()
    return elapsed, result.grid.width * result.grid.height


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--radius-km", type=float, default=3.0)
    ap.add_argument("--resolution-m", type=float, default=30.0)
    ap.add_argument("--spacing-km", type=float, default=3.0)
    ap.add_argument("--model", default="terrain", choices=["terrain", "p1812"])
    ap.add_argument("--max-memory-mb", type=float, default=64.0)
    ap.add_argument("--sites", default="1,4,16")
    args = ap.parse_args(argv)
    keep_freed_memory()
    dem = tile_path()
    make_tile(dem)
    counts = [int(v) for v in args.sites.split(",")]
    with tempfile.TemporaryDirectory() as tmp:
        csvs = {n: site_list(Path(tmp), n, args.spacing_km) for n in counts}
        run(dem, csvs[counts[0]], argparse.Namespace(**{**vars(args), "radius_km": 0.5}))   # warm-up (numba)
        print(f"composite coverage, {args.radius_km:g} km at {args.resolution_m:g} m, sites {args.spacing_km:g} km "
              f"apart, --model {args.model}")
        print(f"{'N':>3} {'pixels':>10} {'memory s':>9} {'per site':>9} {'streamed s':>11} {'per site':>9}")
        single = streamed_single = None
        for n in counts:
            t_mem, pixels = run(dem, csvs[n], args)
            t_str, _ = run(dem, csvs[n], args, max_memory_mb=args.max_memory_mb)
            single = single or t_mem / n
            streamed_single = streamed_single or t_str / n
            print(f"{n:>3} {pixels:>10,} {t_mem:>9.2f} {t_mem / (n * single):>9.2f} {t_str:>11.2f} "
                  f"{t_str / (n * streamed_single):>9.2f}")


if __name__ == "__main__":
    main()
