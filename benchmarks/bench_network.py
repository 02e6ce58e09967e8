"""Network engine benchmark: links per second of the batch engine against a per-link loop.

Measured in one run on the machine at hand (ratios, never asserted):

* 1,000 links of about 10 km from one gateway on a 1-arc-second tile
  (3601 x 3601, the synthetic tile of ``bench_profile.py``): the batch engine
  in-process (``profiler.network.network``) with ``--model terrain`` and
  ``--model p1812`` (best of ``--repeat`` runs each, alternating) and their
  ratio (target p1812 / terrain <= 1.3 in time per link), and the per-link
  loop with the elevation model opened once (``profile_from_dem`` +
  ``analyze_link`` per link), in the same run.
* ``--big N`` (default 100,000): N links streamed in chunks, with the peak
  resident memory of the process (``resource.getrusage``).
* ``profiler link --json -`` on a 100 km path against a bare
  ``python -c "import rasterio, pyproj, numpy, scipy"`` (see bench_profile.py).

Usage: ``python benchmarks/bench_network.py [--links 1000] [--repeat 3] [--loop 200] [--big 100000]``
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench_profile import TILE_SOUTH, TILE_WEST, cli_ratio, make_tile, tile_path  # noqa: E402

from profiler.engine.model import PropagationSettings  # noqa: E402
from profiler.engine.radio import RadioSettings  # noqa: E402
from profiler.products.link import analyze_link  # noqa: E402
from profiler.products.network import network  # noqa: E402
from profiler.products.sites import sites_from_records  # noqa: E402
from profiler.terrain.elevation import ElevationModel  # noqa: E402
from profiler.terrain.profile import profile_from_dem  # noqa: E402

GATEWAY = (TILE_SOUTH + 0.5, TILE_WEST + 0.5)


def ring_sites(n_links, radius_m=10_000.0, seed=5):
    """One gateway in the tile centre and nodes on a ring of about ``radius_m``."""
    from pyproj import Geod

    rng = np.random.default_rng(seed)
    az = rng.uniform(0.0, 360.0, n_links)
    dist = radius_m * rng.uniform(0.9, 1.1, n_links)
    lon, lat, _ = Geod(ellps="WGS84").fwd(np.full(n_links, GATEWAY[1]), np.full(n_links, GATEWAY[0]), az, dist)
    records = [{"name": "gateway", "lat_deg": GATEWAY[0], "lon_deg": GATEWAY[1], "mast_m": 15.0, "role": "gateway"}]
    records += [{"name": f"node {i}", "lat_deg": float(lat[i]), "lon_deg": float(lon[i]), "mast_m": 2.0,
                 "role": "node"} for i in range(n_links)]
    return sites_from_records(records)


def batch_rate(tile, n_links, model="p1812"):
    table = ring_sites(n_links)
    radio = RadioSettings(propagation=PropagationSettings(model=model))
    t0 = time.perf_counter()
    report = network(table, dem=[str(tile)], radio=radio, progress=False).to_dict()
    elapsed = time.perf_counter() - t0
    assert report["summary"]["links"] == n_links
    return n_links / elapsed, report, table


def model_rates(tile, n_links, repeat):
    """Best links/s of each model over ``repeat`` alternating runs: ({model: rate}, the p1812 report, table)."""
    rates, report, table = {"terrain": 0.0, "p1812": 0.0}, None, None
    batch_rate(tile, 50, "terrain"), batch_rate(tile, 50, "p1812")   # imports and caches outside the timings
    for _ in range(repeat):
        for model in rates:
            rate, rep, table = batch_rate(tile, n_links, model)
            rates[model] = max(rates[model], rate)
            report = rep if model == "p1812" else report
    return rates, report, table


def loop_rate(tile, n_links, report, table):
    margins = []
    with ElevationModel.open([str(tile)]) as model:
        t0 = time.perf_counter()
        for i in range(1, n_links + 1):  # the per-link loop being compared against
            prof = profile_from_dem(model, GATEWAY[0], GATEWAY[1], table.lat_deg[i], table.lon_deg[i])
            res = analyze_link(prof, mast_a_m=15.0, mast_b_m=2.0, frequency_mhz=868.3125, band="EU868",
                               radio=RadioSettings(propagation=PropagationSettings(model="terrain")))
            margins.append(res.budget["margin_db"])
        elapsed = time.perf_counter() - t0
    batch = [row["margin_db"] for row in report["links"][:n_links]]
    worst = float(np.max(np.abs(np.array(margins) - np.array(batch))))
    return n_links / elapsed, worst


def big_run(tile, n_links):
    table = ring_sites(n_links, seed=9)
    t0 = time.perf_counter()
    report = network(table, dem=[str(tile)], progress=False).to_dict()
    elapsed = time.perf_counter() - t0
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    return n_links / elapsed, peak_mb, report["summary"]["links"]


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--links", type=int, default=1000)
    parser.add_argument("--repeat", type=int, default=3, help="runs of each model (the best counts)")
    parser.add_argument("--loop", type=int, default=200, help="links of the per-link loop (its rate is per link)")
    parser.add_argument("--big", type=int, default=100_000, help="links of the streaming run (0: skip)")
    parser.add_argument("--no-cli", action="store_true")
    args = parser.parse_args(argv)
    tile = tile_path()
    if make_tile(tile):
        print(f"made the synthetic tile {tile}")
    rates, _, _ = model_rates(tile, args.links, args.repeat)
    for model, r in rates.items():
        print(f"batch    : {args.links} links of ~10 km, --model {model:<7}: {r:8.0f} links/s in-process "
              "(target >= 2000)")
    print(f"model    : p1812 / terrain time per link = {rates['terrain'] / rates['p1812']:.2f} (target <= 1.3)")
    rate, report, table = batch_rate(tile, args.links, "terrain")
    loop, worst = loop_rate(tile, min(args.loop, args.links), report, table)
    print(f"loop     : profile_from_dem + analyze_link per link: {loop:8.0f} links/s; batch / loop = "
          f"{rate / loop:.1f}x (target >= 10x); largest margin difference {worst:.2e} dB")
    if args.big:
        rate_big, peak_mb, n = big_run(tile, args.big)
        print(f"stream   : {n} links in chunks: {rate_big:8.0f} links/s, peak resident memory {peak_mb:.0f} MB "
              "(target < 1024 MB)")
    if not args.no_cli:
        from pyproj import Geod

        lon_b, lat_b, _ = Geod(ellps="WGS84").fwd(TILE_WEST + 0.05, TILE_SOUTH + 0.05, 45.0, 100_000.0)
        cli_ratio(tile, (TILE_SOUTH + 0.05, TILE_WEST + 0.05), (lat_b, lon_b), 5)


if __name__ == "__main__":
    main()
