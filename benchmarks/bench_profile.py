"""Time a 100 km terrain profile from a 1 arc-second tile.

Run:  python3 benchmarks/bench_profile.py [--length-km 100] [--repeat 5] [--no-cli]

The script generates (once, cached under the temp folder) a synthetic 1 deg x
1 deg, 1 arc-second tile of invented terrain: 3601 x 3601 int16, tiled GeoTIFF
with 256 x 256 blocks, uncompressed.  It then prints

* cold: geodesic_path + ElevationModel.sample + Earth bulge, line of sight and
  Fresnel radius for a 100 km path, with the model open but nothing read yet;
  compared with taking the same points one by one with rasterio's
  ``DatasetReader.sample`` on a fresh dataset handle;
* warm: the same for a nearby parallel path whose blocks are already cached;
* CLI: ``profiler link ... --json -`` against ``python -c "import rasterio,
  pyproj, numpy, scipy"`` (start-up overhead ratio).

Targets: cold < 30 ms and >= 5x faster than one by one; warm >= 100x; CLI
ratio <= 1.3.  The script reports; it does not assert.
"""

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))

import rasterio  # noqa: E402
from _timing import best_of  # noqa: E402
from affine import Affine  # noqa: E402
from pyproj import Geod  # noqa: E402

from profiler.terrain.elevation import ElevationModel  # noqa: E402

TILE_SAMPLES = 3601
ARCSEC_DEG = 1.0 / 3600.0
TILE_WEST, TILE_SOUTH = 7, 45  # invented terrain; only the grid matters
FREQUENCY_MHZ = 868.0


def tile_path():
    folder = Path(tempfile.gettempdir()) / "profiler-bench"
    folder.mkdir(exist_ok=True)
    return folder / f"N{TILE_SOUTH:02d}E{TILE_WEST:03d}_1arcsec.tif"


def make_tile(path):
    """Write the synthetic tile (pixel centres on whole arc-seconds, like SRTM)."""
    if path.exists():
        return False
    n = TILE_SAMPLES
    transform = Affine(ARCSEC_DEG, 0.0, TILE_WEST - 0.5 * ARCSEC_DEG,
                       0.0, -ARCSEC_DEG, TILE_SOUTH + 1 + 0.5 * ARCSEC_DEG)
    tmp = path.with_suffix(".partial.tif")
    rng = np.random.default_rng(11)
    x = np.linspace(0.0, 1.0, n)
    with rasterio.open(tmp, "w", driver="GTiff", width=n, height=n, count=1, dtype="int16",
                       crs="EPSG:4326", transform=transform, nodata=-32768, tiled=True,
                       blockxsize=256, blockysize=256) as dst:
        for r0 in range(0, n, 512):
            y = 1.0 - np.arange(r0, min(n, r0 + 512))[:, None] / (n - 1)
            hills = (600 + 400 * np.sin(7.0 * x[None, :] + 3.0 * y) * np.cos(5.0 * y)
                     + 150 * np.sin(41.0 * x[None, :]) * np.sin(37.0 * y)
                     + rng.normal(0.0, 3.0, (y.shape[0], n)))
            dst.write(np.round(hills).astype("int16"), 1,
                      window=rasterio.windows.Window(0, r0, n, y.shape[0]))
    os.replace(tmp, path)
    return True


def profile(model, lat_a, lon_a, lat_b, lon_b, step_m, geodesic_path, geometry):
    """One terrain profile with the curved-Earth and Fresnel quantities."""
    path = geodesic_path(lat_a, lon_a, lat_b, lon_b, step_m)
    terrain = model.sample(path.lon_deg, path.lat_deg)
    d1 = path.distance_m
    d2 = path.length_m - d1
    bulge = geometry.earth_bulge_m(d1, d2, geometry.effective_radius_m(4.0 / 3.0))
    los = geometry.line_of_sight_m(d1, path.length_m, terrain[0] + 10.0, terrain[-1] + 10.0)
    fresnel = geometry.fresnel_radius_m(d1, d2, 299_792_458.0 / (FREQUENCY_MHZ * 1e6))
    clearance = los - (terrain + bulge)
    return path, terrain, float(np.nanmin(clearance - 0.6 * fresnel))


def one_by_one_s(tile, lon, lat):
    """Time rasterio's per-point sampling on a fresh dataset handle."""
    with rasterio.open(tile) as ds:
        t0 = time.perf_counter()
        values = [v[0] for v in ds.sample(zip(lon.tolist(), lat.tolist()), indexes=1)]
        elapsed = time.perf_counter() - t0
    assert len(values) == lon.size
    return elapsed


def cli_ratio(tile, site_a, site_b, repeat):
    exe = shutil.which("profiler")
    cmd = [exe] if exe else [sys.executable, "-m", "profiler"]
    cmd += ["link", "--site-a", f"{site_a[0]:.6f},{site_a[1]:.6f}",
            "--site-b", f"{site_b[0]:.6f},{site_b[1]:.6f}", "--dem", str(tile), "--json", "-"]
    env = dict(os.environ)
    env["PYTHONPATH"] = str(Path(__file__).resolve().parents[1]) + os.pathsep + env.get("PYTHONPATH", "")
    # Steady-state start-up: byte-code compiled once, as an installed package has it (a shell that sets
    # PYTHONDONTWRITEBYTECODE would otherwise recompile every module on every run).
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    import compileall

    compileall.compile_dir(str(Path(__file__).resolve().parents[1] / "profiler"), quiet=1)
    baseline = [sys.executable, "-c", "import rasterio, pyproj, numpy, scipy"]

    def run(command):
        return subprocess.run(command, env=env, capture_output=True, text=True, timeout=120)

    first = run(cmd)
    if first.returncode != 0:
        reason = (first.stderr.strip().splitlines() or ["no output"])[-1]
        print(f"cli      : skipped ({reason[:120]})")
        return
    t_cli = best_of(lambda: run(cmd), repeat)
    t_base = best_of(lambda: run(baseline), repeat)
    print(f"cli      : profiler link {t_cli * 1e3:7.1f} ms, bare imports {t_base * 1e3:7.1f} ms, "
          f"ratio {t_cli / t_base:.2f} (target <= 1.3)")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--length-km", type=float, default=100.0)
    parser.add_argument("--repeat", type=int, default=10)
    parser.add_argument("--no-cli", action="store_true", help="skip the CLI start-up timing")
    args = parser.parse_args(argv)

    tile = tile_path()
    t0 = time.perf_counter()
    made = make_tile(tile)
    print(f"tile     : {tile} ({'generated' if made else 'cached'}, "
          f"{time.perf_counter() - t0:.2f} s, {tile.stat().st_size / 1e6:.1f} MB)")

    from profiler.propagation import geometry
    from profiler.terrain.geodesic import geodesic_path

    geod = Geod(ellps="WGS84")
    lat_a, lon_a = 45.06, 7.12
    lon_b, lat_b, _ = geod.fwd(lon_a, lat_a, 28.0, args.length_km * 1000.0)
    # A nearby parallel path: both ends 150 m further east.
    lon_a2, lat_a2, _ = geod.fwd(lon_a, lat_a, 90.0, 150.0)
    lon_b2, lat_b2, _ = geod.fwd(lon_b, lat_b, 90.0, 150.0)

    def cold_run():
        """Fresh model (file open, nothing of this path read): time one profile."""
        with ElevationModel.open(tile) as model:
            step = model.pixel_size_m([lon_a, lon_b], [lat_a, lat_b])
            # Exercise the code paths once on a far corner of the tile (one or
            # two other blocks) so the timing measures reading, not first calls.
            profile(model, 45.95, 7.9, 45.96, 7.91, step, geodesic_path, geometry)
            before = model.blocks_read
            t0 = time.perf_counter()
            result = profile(model, lat_a, lon_a, lat_b, lon_b, step, geodesic_path, geometry)
            return time.perf_counter() - t0, model.blocks_read - before, step, result

    cold = [cold_run() for _ in range(args.repeat)]
    times = sorted(c[0] for c in cold)
    t_cold, t_cold_median = times[0], times[len(times) // 2]
    _, cold_reads, step_m, (path, terrain, _) = cold[0]
    n = path.distance_m.size
    t_one = min(one_by_one_s(tile, path.lon_deg, path.lat_deg) for _ in range(3))
    print(f"cold     : {args.length_km:.0f} km, {n} samples at {step_m:.1f} m, {cold_reads} blocks read, "
          f"best {t_cold * 1e3:.1f} ms / median {t_cold_median * 1e3:.1f} ms of {args.repeat} "
          f"({n / t_cold:,.0f} samples/s) (target < 30 ms)")
    print(f"1-by-1   : rasterio DatasetReader.sample {t_one * 1e3:.1f} ms (best of 3); "
          f"cold speed-up {t_one / t_cold:.1f}x, at median {t_one / t_cold_median:.1f}x (target >= 5x)")

    with ElevationModel.open(tile) as model:
        profile(model, lat_a, lon_a, lat_b, lon_b, step_m, geodesic_path, geometry)
        reads_before = model.blocks_read
        profile(model, lat_a2, lon_a2, lat_b2, lon_b2, step_m, geodesic_path, geometry)
        nearby_reads = model.blocks_read - reads_before
        reads_before = model.blocks_read
        t_warm = best_of(lambda: profile(model, lat_a2, lon_a2, lat_b2, lon_b2, step_m,
                                         geodesic_path, geometry), args.repeat)
        warm_reads = model.blocks_read - reads_before
        path2, _, _ = profile(model, lat_a2, lon_a2, lat_b2, lon_b2, step_m, geodesic_path, geometry)
        t_one2 = min(one_by_one_s(tile, path2.lon_deg, path2.lat_deg) for _ in range(3))
        t_sample = best_of(lambda: model.sample(path2.lon_deg, path2.lat_deg), args.repeat)
        t_path = best_of(lambda: geodesic_path(lat_a2, lon_a2, lat_b2, lon_b2, step_m), args.repeat)
        print(f"warm     : nearby path (first pass read {nearby_reads} new blocks), best of "
              f"{args.repeat}: {t_warm * 1e3:.2f} ms ({path2.distance_m.size / t_warm:,.0f} samples/s, "
              f"{warm_reads} blocks read); of which geodesic_path {t_path * 1e3:.2f} ms, "
              f"sample() {t_sample * 1e3:.2f} ms")
        print(f"1-by-1   : rasterio DatasetReader.sample {t_one2 * 1e3:.1f} ms (best of 3); "
              f"warm speed-up {t_one2 / t_warm:.0f}x (target >= 100x)")
        print(f"terrain  : {np.nanmin(terrain):.0f} to {np.nanmax(terrain):.0f} m, "
              f"{int(np.isnan(terrain).sum())} NaN")

    if not args.no_cli:
        cli_ratio(tile, (lat_a, lon_a), (lat_b, lon_b), max(3, args.repeat // 2))


if __name__ == "__main__":
    main()
