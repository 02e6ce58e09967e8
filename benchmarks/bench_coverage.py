"""Coverage benchmark: a 20 km radius at 30 m (about 1.4 million pixels) on a 1-arc-second tile.

Measured in one run on the machine at hand (figures, never asserted):

* line of sight only: sampling every radial and the exact cumulative-maximum
  test (:func:`profiler.products.coverage.radials.line_of_sight_radials`) put on the grid;
* ``--diffraction none`` (line of sight, worst Fresnel ratio of every
  prefix, free-space budget), the full delta-Bullington model
  (``--model terrain``) and ITU-R P.1812-8 (``--model p1812``, 50 % time and
  locations), each in-process (best of ``--repeat`` runs, the two models
  alternating) and on a local Dask cluster of ``--workers`` processes, with
  the numba kernels and (unless ``--no-numpy``) with the numpy prefix
  batches; printed: the ratio p1812 / terrain of the times (target <= 1.3);
* the P.1812 horizon kernel alone on the same radials: the receiver's
  horizon by a tangent query on the upper convex hull against the loop over
  every interior sample it replaced, and one Bullington pass (hull
  queries and pruned ν against the loop; both kept; same results checked);
* GDAL's ``gdal_viewshed`` on the same elevation data (when on the PATH):
  the tile is warped (bilinear, ``gdalwarp``) onto the coverage grid itself,
  so both maps have the same pixels; observer height = the mast, target
  height = the node mast, curvature coefficient ``-cc = a / (k R)`` (GDAL
  lowers the terrain by ``cc d^2 / (2 a)`` with ``a`` the ellipsoid's
  semi-major axis, i.e. an Earth ``1 / cc`` times larger; our bulge is
  ``d^2 / (2 k R)`` with R = 6371 km).  Printed: the share of pixels where
  visible/invisible agree.
* the targets: ``--repeat`` rounds, each GDAL's two steps then our four maps
  (line of sight, ``--diffraction none``, P.1812, delta-Bullington), the
  best of each: both sides of a ratio timed under the same load.

Usage: ``python benchmarks/bench_coverage.py [--radius-km 20] [--resolution-m 30] [--workers 2] [--repeat 2]
[--no-numpy] [--no-workers]``
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

from profiler.engine.model import PropagationSettings  # noqa: E402
from profiler.engine.radio import RadioSettings  # noqa: E402
from profiler.products.coverage.grid import Gateway, make_grid, pixel_polar, radial_lookup  # noqa: E402
from profiler.products.coverage.map import coverage  # noqa: E402
from profiler.products.coverage.radials import keep_freed_memory, line_of_sight_radials, radial_count, sample_radials  # noqa: E402
from profiler.products.coverage.sectors import RADIALS_PER_CHUNK  # noqa: E402
from profiler.propagation import geometry  # noqa: E402
from profiler.terrain.elevation import ElevationModel  # noqa: E402

SITE = (TILE_SOUTH + 0.5, TILE_WEST + 0.5)
MAST_M, NODE_M = 10.0, 1.5


def los_only(dem, radius_m, res_m):
    """Line-of-sight map alone: radial sampling, cumulative maximum, nearest-sample lookup [s, map]."""
    t0 = time.perf_counter()
    gw = Gateway("bench", SITE[0], SITE[1], MAST_M)
    grid = make_grid([gw], radius_m, res_m)
    n_rad = radial_count(radius_m, res_m)
    ae = float(geometry.effective_radius_m(4 / 3))
    parts, counts = [], []
    with ElevationModel.open([dem]) as model:   # sector by sector, as the coverage run samples
        for s0 in range(0, n_rad, RADIALS_PER_CHUNK):
            d, t, n = sample_radials(model, gw, np.arange(s0, min(s0 + RADIALS_PER_CHUNK, n_rad)) * 360.0 / n_rad,
                                     radius_m, res_m, False)
            parts.append(line_of_sight_radials(d, t, n, t[:, 0] + MAST_M, NODE_M, ae))
            counts.append(n)
    los, n = np.concatenate(parts), np.concatenate(counts)
    k, j, inside = radial_lookup(*pixel_polar(grid, gw), n_rad, radius_m / (los.shape[1] - 1), radius_m)
    ok = inside & (j < n[k])
    out = np.full(k.shape, np.nan, dtype=np.float32)
    out[ok] = los[k[ok], j[ok]]
    return time.perf_counter() - t0, out, grid


def horizon_stage(dem, radius_m, res_m, repeat):
    """The P.1812 horizon kernel alone on the benchmark's radials (half-pixel steps): hull query against the loop.

    Prints the best of ``repeat`` runs of ``_horizon_kernel`` (receiver
    horizon by a tangent query on the upper convex hull) and of
    ``_horizon_kernel_reference`` (every interior sample), the largest
    difference of their tangents and the share of links whose horizon
    sample is the same.
    """
    from profiler.propagation.p1812 import prefix

    gw = Gateway("bench", SITE[0], SITE[1], MAST_M)
    n_rad = radial_count(radius_m, res_m)
    with ElevationModel.open([dem]) as model:
        d, t, n = sample_radials(model, gw, np.arange(n_rad) * 360.0 / n_rad, radius_m, res_m / 2.0, False)
    d_km, ae_km = np.ascontiguousarray(d * 1e-3), float(geometry.effective_radius_m(4 / 3)) * 1e-3
    site, hrs = t[:, 0] + MAST_M, np.ascontiguousarray(t + NODE_M)
    out = {}
    for name in ("_horizon_kernel_reference", "_horizon_kernel"):
        tangents, index = np.full((2,) + d.shape, np.nan), np.zeros((2,) + d.shape, dtype=np.int64)
        need = np.ones(d.shape, dtype=bool)
        getattr(prefix, name)(d_km[:1], t[:1], n[:1], site[:1], hrs[:1], ae_km, need[:1], tangents[:, :1].copy(),
                              index[:, :1].copy())   # load (or compile) it outside the timing
        seconds = min(timed_once(lambda: getattr(prefix, name)(d_km, t, n, site, hrs, ae_km, need, tangents, index))
                      for _ in range(repeat))
        out[name] = (seconds, tangents, index)
        print(f"{f'P.1812 horizons alone, {name.strip(chr(95))}':<52} {seconds:7.2f} s", flush=True)
    (_, t_ref, i_ref), (_, t_hull, i_hull) = out["_horizon_kernel_reference"], out["_horizon_kernel"]
    ok = np.isfinite(t_ref[1])
    print(f"  largest tangent difference {np.max(np.abs(t_hull[:, ok] - t_ref[:, ok])):.1e}, same horizon sample on "
          f"{np.mean(i_hull[1][ok] == i_ref[1][ok]):.4%} of {ok.sum():,} links")
    bullington_stage(d_km, t, n, site, hrs, ae_km, repeat)


def bullington_stage(d_km, t, n, site, hrs, ae_km, repeat):
    """One Bullington pass over the actual profile of every prefix: hull queries and pruned ν against the loop."""
    from profiler.propagation import prefix_kernel

    hts = np.ascontiguousarray(np.broadcast_to(site[:, None], t.shape))
    out = {}
    for name in ("_bullington_kernel", "_bullington_hull_kernel"):
        red = np.full((6,) + t.shape, np.nan)
        kernel = getattr(prefix_kernel, name)
        need = np.ones(t.shape, dtype=bool)
        kernel(d_km[:1], t[:1], t[:1], n[:1], hts[:1], hrs[:1], ae_km, True, need[:1], True,
               red[:, :1].copy())   # load it
        seconds = min(timed_once(lambda: kernel(d_km, t, t, n, hts, hrs, ae_km, True, need, True, red))
                      for _ in range(repeat))
        out[name] = red
        print(f"{f'Bullington pass alone, {name.strip(chr(95))}':<52} {seconds:7.2f} s", flush=True)
    ref, got = out["_bullington_kernel"], out["_bullington_hull_kernel"]
    ok = np.isfinite(ref)
    print(f"  largest relative difference {np.max(np.abs(got[ok] - ref[ok]) / np.maximum(1.0, np.abs(ref[ok]))):.1e}")


def timed_once(func):
    """Wall time of one call [s]."""
    t0 = time.perf_counter()
    func()
    return time.perf_counter() - t0


def gdal_commands(dem, grid, radius_m, tmp, k_factor=4 / 3):
    """The ``gdalwarp`` (onto the coverage grid) and ``gdal_viewshed`` command lines, writing into ``tmp``; None when
    GDAL's tools are not on the PATH."""
    exe, warp = shutil.which("gdal_viewshed"), shutil.which("gdalwarp")
    if exe is None or warp is None:
        return None
    a, _, c, _, e, f = grid.transform[:6]
    bounds = [str(v) for v in (c, f + e * grid.height, c + a * grid.width, f)]
    cc = 6378137.0 / (k_factor * geometry.EARTH_RADIUS_M)     # WGS84 semi-major axis / (k R)
    warped, out, wkt = Path(tmp) / "dem_grid.tif", Path(tmp) / "vs.tif", Path(tmp) / "grid.wkt"
    wkt.write_text(grid.to_dict()["proj4"])   # the system GDAL may be older than pyproj's WKT2
    return ([warp, "-q", "-overwrite", "-t_srs", str(wkt), "-te", *bounds, "-ts", str(grid.width), str(grid.height),
             "-r", "bilinear", "-ot", "Float32", str(dem), str(warped)],
            [exe, "-q", "-ox", "0", "-oy", "0", "-oz", str(MAST_M), "-tz", str(NODE_M), "-md", str(radius_m),
             "-cc", f"{cc:.6f}", "-vv", "1", "-iv", "0", "-ov", "255", str(warped), str(out)], out)


def viewshed(dem, grid, los_map, radius_m, k_factor=4 / 3, repeat=1):
    """gdal_viewshed on the tile warped onto the coverage grid, if installed: (warp s, viewshed s, agreement, n).

    Each GDAL step is timed as the best of ``repeat`` runs, as ours are.
    """
    with tempfile.TemporaryDirectory() as tmp:
        commands = gdal_commands(dem, grid, radius_m, tmp, k_factor)
        if commands is None:
            return None
        import rasterio

        warp_cmd, view_cmd, out = commands
        a, _, c, _, e, f = grid.transform[:6]
        t_warp = min(timed_once(lambda: subprocess.run(warp_cmd, check=True, capture_output=True))
                     for _ in range(repeat))
        t_view = min(timed_once(lambda: subprocess.run(view_cmd, check=True, capture_output=True))
                     for _ in range(repeat))
        with rasterio.open(out) as src:   # the output may be cut to the window within -md: place it on the grid
            col0 = round((src.transform.c - c) / a)
            row0 = round((src.transform.f - f) / e)
            vs = np.full((grid.height, grid.width), 255, dtype=np.uint8)
            vs[row0:row0 + src.height, col0:col0 + src.width] = src.read(1)
    from scipy import ndimage

    ok = np.isfinite(los_map) & (vs != 255)
    ours, theirs = ok & (los_map > 0.5), ok & (vs == 1)
    differ = ours != theirs
    edge = ndimage.binary_dilation(ours, iterations=2) & ndimage.binary_dilation(ok & ~ours, iterations=2)
    return {"warp_s": t_warp, "viewshed_s": t_view, "agree": 1.0 - differ[ok].mean(), "pixels": int(ok.sum()),
            "visible_ours": ours[ok].mean(), "visible_gdal": theirs[ok].mean(),
            "visible_iou": (ours & theirs).sum() / max((ours | theirs).sum(), 1),
            "near_edge": (differ & edge).sum() / max(differ.sum(), 1)}


def target_rounds(dem, grid, radius_m, res_m, kw, repeat):
    """The four maps of the targets and GDAL's two steps, in ``repeat`` rounds of one of each: best wall time [s].

    Both sides of every ratio are timed under the same load (the other
    tenants of a shared machine come and go within a minute); None when
    GDAL's tools are absent.
    """
    radios = {"none": RadioSettings(diffraction_method="none", propagation=PropagationSettings(model="terrain")),
              "p1812": RadioSettings(propagation=PropagationSettings(model="p1812")),
              "terrain": RadioSettings(propagation=PropagationSettings(model="terrain"))}
    best = dict.fromkeys(("gdal", "los", *radios), float("inf"))
    with tempfile.TemporaryDirectory() as tmp:
        commands = gdal_commands(dem, grid, radius_m, tmp)
        if commands is None:
            return None
        warp_cmd, view_cmd, _ = commands
        for _ in range(repeat):
            gdal = timed_once(lambda: [subprocess.run(cmd, check=True, capture_output=True)
                                       for cmd in (warp_cmd, view_cmd)])
            best["gdal"] = min(best["gdal"], gdal)
            best["los"] = min(best["los"], los_only(dem, radius_m, res_m)[0])
            for name, radio in radios.items():
                best[name] = min(best[name], timed_once(lambda: coverage(SITE, radio=radio, **kw)))
    return best


def stage_times(kw):
    """Where the time of a ``--model p1812`` run goes: wall seconds per stage of a run of one sector at a time.

    Stages: sampling the radials (geodesic positions and the elevation),
    the compiled reductions (clearance ratio, horizons, roughness, both
    Bullington passes; each on every core), the per-link formulas after
    them (P.1812, budgets, probabilities), and putting the radial samples
    on the grid (polar lookup, needed samples, bands).
    """
    import functools

    import profiler.products.coverage.map as cov
    import profiler.products.coverage.sectors as sectors
    from profiler.engine import links
    from profiler.propagation import prefix_kernel
    from profiler.propagation.p1812 import prefix as p1812_prefix

    spent = {}
    reducer = p1812_prefix.PrefixReducer
    wrapped = [(sectors, "sample_radials", "sampling"), (sectors, "line_of_sight_radials", "line of sight"),
               (prefix_kernel, "worst_ratio_prefixes", "reductions"),
               (prefix_kernel, "bullington_prefixes", "reductions"), (reducer, "horizons", "reductions"),
               (reducer, "roughness", "reductions"), (links, "link_fields", "per-link formulas"),
               (cov, "window_lookup", "grid"), (cov, "mark_needed", "grid"),
               (cov, "to_grid", "grid")]
    saved = [(owner, name, getattr(owner, name)) for owner, name, _ in wrapped]

    def timer(func, stage):
        @functools.wraps(func)
        def run(*args, **kwargs):
            t0 = time.perf_counter()
            try:
                return func(*args, **kwargs)
            finally:
                spent[stage] = spent.get(stage, 0.0) + time.perf_counter() - t0
        return run

    try:
        for owner, name, stage in wrapped:
            setattr(owner, name, timer(getattr(owner, name), stage))
        sectors.cores, cores = (lambda: 1), sectors.cores
        t0 = time.perf_counter()
        coverage(SITE, radio=RadioSettings(propagation=PropagationSettings(model="p1812")), **kw)
        total = time.perf_counter() - t0
    finally:
        sectors.cores = cores
        for owner, name, func in saved:
            setattr(owner, name, func)
    print(f"stages of a --model p1812 run, one sector at a time ({total:.2f} s):")
    for stage, seconds in spent.items():
        print(f"  {stage:<50} {seconds:7.2f} s")
    print(f"  {'the rest (composite, counts, pixel positions, ...)':<50} {total - sum(spent.values()):7.2f} s")


def timed(label, func):
    t0 = time.perf_counter()
    result = func()
    seconds = time.perf_counter() - t0
    print(f"{label:<52} {seconds:7.2f} s", flush=True)
    return seconds, result


def model_times(label, repeat, run):
    """Best wall and CPU time of ``run(radio)`` per model over ``repeat`` alternating rounds; prints them and ratios.

    The CPU time (every thread of this process) moves less than the wall
    time when other jobs share the cores.
    """
    models = {m: RadioSettings(propagation=PropagationSettings(model=m)) for m in ("terrain", "p1812")}
    best, cpu, results = dict.fromkeys(models, float("inf")), dict.fromkeys(models, float("inf")), {}
    for _ in range(repeat):
        for model, radio in models.items():
            t0, c0 = time.perf_counter(), time.process_time()
            results[model] = run(radio)
            best[model] = min(best[model], time.perf_counter() - t0)
            cpu[model] = min(cpu[model], time.process_time() - c0)
    for model, seconds in best.items():
        print(f"{f'--model {model}, {label}':<52} {seconds:7.2f} s (CPU {cpu[model]:.2f} s)", flush=True)
    print(f"{f'  p1812 / terrain, {label}':<52} {best['p1812'] / best['terrain']:7.2f}   (CPU "
          f"{cpu['p1812'] / cpu['terrain']:.2f}; target <= 1.3)")
    return best, results


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--radius-km", type=float, default=20.0)
    ap.add_argument("--resolution-m", type=float, default=30.0)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--repeat", type=int, default=2, help="in-process runs of each model (the best counts)")
    ap.add_argument("--no-numpy", action="store_true", help="skip the runs without the kernel")
    ap.add_argument("--no-workers", action="store_true", help="skip the local Dask cluster runs")
    args = ap.parse_args(argv)
    dem = tile_path()
    make_tile(dem)
    radius_m = args.radius_km * 1000.0
    kw = dict(dem=[dem], mast_m=MAST_M, radius_km=args.radius_km, resolution_m=args.resolution_m,
              node_mast_m=NODE_M, progress=False)
    keep_freed_memory()   # as the command does (the numpy path needs it; the kernel does not)
    for model in ("terrain", "p1812"):   # load (or compile) the kernels once, outside the timings
        coverage(SITE, radio=RadioSettings(propagation=PropagationSettings(model=model)), **{**kw, "radius_km": 1.0})
    los_runs = [los_only(dem, radius_m, args.resolution_m) for _ in range(args.repeat)]
    t_los, los_map, grid = min(los_runs, key=lambda run: run[0])
    print(f"{'line of sight only (sampling + cumulative max + grid)':<52} {t_los:7.2f} s", flush=True)
    pixels = int(np.isfinite(los_map).sum())
    horizon_stage(dem, radius_m, args.resolution_m, args.repeat)
    print(f"grid {grid.width} x {grid.height}, {pixels:,} pixels within {args.radius_km:g} km at "
          f"{args.resolution_m:g} m, {radial_count(radius_m, args.resolution_m)} radials")
    none = RadioSettings(diffraction_method="none", propagation=PropagationSettings(model="terrain"))
    runs = [("kernel", True)] + ([] if args.no_numpy else [("numpy", False)])
    full = fast = None
    for name, kernel in runs:
        for _ in range(args.repeat):
            _, res_none = timed(f"--diffraction none, in-process, {name}",
                                lambda: coverage(SITE, radio=none, kernel=kernel, **kw))
        fast = fast or res_none
        best, res = model_times(f"in-process, {name}", args.repeat,
                                lambda radio: coverage(SITE, radio=radio, kernel=kernel, **kw))
        print(f"{'':<52} ({pixels / best['terrain']:,.0f} / {pixels / best['p1812']:,.0f} pixels/s)")
        full = full or res["terrain"]
        if not args.no_workers:
            timed(f"--diffraction none, {args.workers} workers, {name}",
                  lambda: coverage(SITE, radio=none, kernel=kernel, workers=args.workers, **kw))
            model_times(f"{args.workers} workers, {name}", 1,
                        lambda radio: coverage(SITE, radio=radio, kernel=kernel, workers=args.workers, **kw))
    ok = np.isfinite(los_map)
    for label, run in (("--diffraction none run (same radial step)", fast),
                       ("--model terrain run (half the step)", full)):
        agree = np.mean((run.bands["line_of_sight"] == 1)[ok] == (los_map == 1)[ok])
        print(f"line-of-sight map vs the {label}'s band: {agree:.4%} agree")
    stage_times(kw)
    vs = viewshed(dem, grid, los_map, radius_m)   # the agreement and GDAL's split; the rounds time it
    if vs is None:
        print("gdal_viewshed: absent on this machine (no comparison)")
        return
    gdal = vs["warp_s"] + vs["viewshed_s"]
    print(f"gdalwarp onto the grid {vs['warp_s']:.2f} s + gdal_viewshed {vs['viewshed_s']:.2f} s = {gdal:.2f} s "
          "(one run)")
    print(f"  visible/invisible agree on {vs['agree']:.2%} of {vs['pixels']:,} common pixels; visible: ours "
          f"{vs['visible_ours']:.2%}, GDAL {vs['visible_gdal']:.2%}, intersection/union {vs['visible_iou']:.1%}; "
          f"{vs['near_edge']:.1%} of the differing pixels within 2 px of a shadow edge of our map")
    best = target_rounds(dem, grid, radius_m, args.resolution_m, kw, args.repeat)
    print(f"targets, best of {args.repeat} rounds of GDAL's two steps and our four maps (the same load on both "
          f"sides): GDAL {best['gdal']:.2f} s")
    for label, key, target in (("line of sight only", "los", 2.0), ("--model terrain --diffraction none", "none", 3.0),
                               ("--model p1812 (the default)", "p1812", 6.0),
                               ("--model terrain (delta-Bullington)", "terrain", None)):
        ratio = best[key] / best["gdal"]
        goal = "" if target is None else f" (target <= {target:g}: {'met' if ratio <= target else 'NOT met'})"
        print(f"  {label:<40} {best[key]:6.2f} s = {ratio:5.2f} x GDAL{goal}")


if __name__ == "__main__":
    main()
