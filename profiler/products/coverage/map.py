"""Coverage of a gateway site: margin and data rate at every pixel within a radius.

:func:`coverage` is the one Python call behind ``profiler coverage``.  Every
value comes from the link engine (:mod:`profiler.engine`, the diffraction
and budget of :func:`profiler.engine.links.link_fields`): nothing here
re-implements the physics.

Method
------
1. Radials from the site, ``radial_count`` of them (arc spacing at the rim
   about two output pixels), each sampled along its WGS84 geodesic by
   :func:`profiler.terrain.sampling.sample_links` at ``radial_step_m`` (half the
   output resolution with a diffraction model, the resolution without);
   the radial functions are in :mod:`profiler.products.coverage.radials`.
2. Every sample ``j`` of a radial is the node end of one link whose profile
   is the first ``j + 1`` samples of the radial.  The reductions over each
   link's interior samples (worst Fresnel ratio, the maxima of the two
   Bullington passes and the smooth-Earth heights) run for all prefixes of
   all radials in the numba kernel of :mod:`profiler.propagation.prefix_kernel`, or
   without numba as the (n, n) prefix batch of a radial in row blocks
   through the numpy engine; the per-link formulas after them are the
   engine's own (:func:`profiler.propagation.diffraction_batch.diffraction_finish`,
   :func:`profiler.engine.links.link_fields`).  Sample 1 (two samples,
   no interior point) is a three-sample straight slope, i.e. free space;
   sample 0 (the site itself) takes the value of sample 1.
3. Line of sight is the exact cumulative maximum of the curvature-corrected
   elevation-angle tangent along each radial (see :func:`line_of_sight_radials`).
4. Each output pixel takes the value of the radial sample nearest to it in
   (azimuth, distance) from the site, found with the inverse geodesic
   problem.  The sample is at most half a sample step along the radial and
   half the arc spacing (one pixel at the rim) across it from the pixel
   centre: that offset is the only difference from ``profiler link`` to the
   pixel centre.

Radial sectors (chunks of radials) are the tasks of
:func:`profiler.engine.cluster.run_chunks`, in-process or on Dask.

References
----------
.. [1] ITU-R P.526-15 sections 2, 4.5 (Bullington, delta-Bullington) via
   :mod:`profiler.propagation.diffraction`; ITU-R P.452-18 eq. (156a) (elevation angle
   with Earth curvature, the LOS criterion).
.. [2] J. P. Snyder, "Map Projections: A Working Manual", USGS PP 1395
   (1987), ch. 25 (azimuthal equidistant projection: true distance and
   azimuth from the centre).
"""

from __future__ import annotations

import functools
import math
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from ...about import CAUTION, __version__
from ...errors import ProfilerError
from ...propagation import geometry
from .grid import (
    CoverageGrid,
    Gateway,
    RunningComposite,
    add_counts,
    combine_bands,
    make_grid,
    mark_needed,
    needed_samples,
    overlap,
    tile_counts,
    to_grid,
    window_lookup,
)
from .radials import radial_count, radial_step_m
from .sectors import SectorJobs, cores, sector_radials

SCHEMA = "profiler.coverage/5"
_MOVED_TO_SECTORS = ("RADIALS_PER_CHUNK", "SAMPLING_RADIALS", "SECTOR_SAMPLES", "radial_clutter")
"""Names that moved to :mod:`profiler.products.coverage.sectors` (reached from here for one release, warned)."""


def __getattr__(name):
    if name in _MOVED_TO_SECTORS:
        import warnings

        from . import sectors

        warnings.warn(f"profiler.products.coverage.map.{name} is deprecated and will be removed in the next release; "
                      f"use profiler.products.coverage.sectors.{name}", DeprecationWarning, stacklevel=2)
        return getattr(sectors, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
# --------------------------------------------------------------------------- the run
@dataclass(frozen=True)
class CoverageResult:
    """Bands on the grid (float32, NaN = nodata) and the ``profiler.coverage/5`` summary."""

    bands: dict | None
    grid: CoverageGrid
    report: dict
    geotiff_path: str | None = None
    """A streamed run (bands None): the temporary GeoTIFF holding the bands, moved into place by
    :func:`profiler.io.coverage.write_geotiff` (call :meth:`discard` when no GeoTIFF is written)."""

    def discard(self) -> None:
        """Remove a streamed run's temporary GeoTIFF if it is still there."""
        import os

        if self.geotiff_path and os.path.exists(self.geotiff_path):
            os.unlink(self.geotiff_path)

    def to_dict(self) -> dict:
        return self.report


def _area_summary(counts, resolution_m, location_percent=50.0) -> dict:
    """Area computed, and area and share covered per recommended DR and in total [km^2], from the pixel counts.

    ``covered_by_gateways``: the pixels the existing gateways alone hear with the fade margin (no candidate
    sites: the covered pixels).  ``heard_at_location_percent``: the pixels whose ``probability_heard`` reaches the
    run's location percentage; ``mean_probability_heard`` the mean of that band over the computed pixels [-].
    """
    px_km2 = resolution_m * resolution_m * 1e-6
    computed = counts["computed"]

    def entry(count):
        return {"pixels": int(count), "area_km2": round(float(count) * px_km2, 4),
                "share": round(float(count) / computed, 6) if computed else None}

    return {"pixels_computed": computed, "area_computed_km2": round(computed * px_km2, 4),
            "covered": entry(counts["covered"]), "covered_by_gateways": entry(counts["by_gateways"]),
            "covered_by_dr": [{"dr": v, **entry(n)} for v, n in sorted(counts["dr"].items())],
            "line_of_sight": entry(counts["line_of_sight"]),
            "heard_at_location_percent": {"location_percent": float(location_percent), **entry(counts["heard"])},
            "mean_probability_heard": round(counts["prob_sum"] / counts["prob_n"], 6) if counts["prob_n"] else None}


def _gateways(site, mast_m, name, sites):
    """The gateways of the run: ``--site``/``--mast-m`` or the gateway rows of a site list."""
    from ..sites import read_sites_csv, site_overrides

    if sites is not None:
        if site is not None or mast_m is not None:
            raise ProfilerError("give either --sites or --site/--mast-m, not both")
        table = sites if hasattr(sites, "names") else read_sites_csv(sites)
        rows = table.gateway_indices()
        if rows.size == 0:
            raise ProfilerError(f"{table.source} has no gateway rows; mark the gateway sites with role gateway")
        over = site_overrides(table, rows)
        return [Gateway(name=table.names[i], lat_deg=float(table.lat_deg[i]), lon_deg=float(table.lon_deg[i]),
                        mast_m=float(table.mast_m[i]), role=str(table.role[i]),
                        overrides={k: float(v[m]) for k, v in over.items() if np.isfinite(v[m])})
                for m, i in enumerate(rows)]
    if site is None or mast_m is None:
        raise ProfilerError("give the site with --site LAT,LON and --mast-m M (or a site list with --sites)")
    lat, lon = (float(v) for v in site)
    if not (-90 <= lat <= 90 and -180 <= lon <= 180):
        raise ProfilerError(f"--site {lat:g},{lon:g} is not a WGS84 LAT,LON")
    if not (math.isfinite(float(mast_m)) and 0.0 <= float(mast_m) <= 1000.0):
        raise ProfilerError(f"--mast-m {mast_m} must be 0 to 1000 m")
    return [Gateway(name=str(name), lat_deg=lat, lon_deg=lon, mast_m=float(mast_m))]


def _check_numbers(radius_km, resolution_m, node_mast_m):
    for label, value, low, high in (("--radius-km", radius_km, 0.0, 200.0),
                                    ("--node-mast-m", node_mast_m, 0.0, 1000.0)):
        if not (isinstance(value, (int, float)) and math.isfinite(value) and low <= value <= high) or \
                (label == "--radius-km" and value <= 0):
            raise ProfilerError(f"{label} {value} is out of range; give a number from {low:g} to {high:g}")
    if resolution_m is not None and not (math.isfinite(resolution_m) and resolution_m > 0):
        raise ProfilerError(f"--resolution-m {resolution_m} must be a positive number of metres")


def coverage(site=None, *, dem, mast_m=None, name="site", sites=None, radius_km: float, resolution_m=None,
             node_mast_m: float = 1.5, band=None, frequency_mhz=None, k_factor="4/3", clearance_ratio: float = 0.6,
             fill_voids: bool = False, radio=None, workers=None, scheduler=None, progress=None,
             kernel=None, date=None, sheet_info=None, land_cover=None, land_cover_classes=None, max_memory_mb=None,
             stream_dir=None) -> CoverageResult:
    """Coverage of one site (or the composite of a site list's gateways) within a radius.

    Parameters
    ----------
    site : (lat_deg, lon_deg), optional
        The gateway (WGS84); with ``mast_m`` [m above ground] and ``name``.
    dem : str, Path or list of them
        Elevation files or folders.
    sites : SiteTable, str or Path, optional
        A site list whose gateway and candidate rows (each with its mast and overrides) replace ``site``;
        the bands are the composite of all of them, ``summary.covered_by_gateways`` the area the
        existing gateways alone hear.
    radius_km : float
        Radius around each gateway [km].
    resolution_m : float, optional
        Output pixel size [m]; default the elevation pixel at the (first) site.
    node_mast_m : float
        Node antenna height above ground at every pixel [m].
    band, frequency_mhz, k_factor, clearance_ratio, fill_voids, radio
        As for :func:`profiler.link` (the gateway is end A).
    workers, scheduler, progress
        As for :func:`profiler.network`; radial sectors are the tasks.
    kernel : bool, optional
        Reductions over the samples in the numba kernel (default: when numba
        is installed) or, with False, in the numpy prefix batches; the results
        agree to rounding.
    date : datetime.date, optional
        Date of the sheet (default today).
    sheet_info : profiler.io.sheetinfo.SheetInfo, optional
        Title-block fields (project, document, ...) for the report's ``sheet`` block.
    land_cover : str, Path or list of them, optional
        Land-cover rasters of class codes (``--land-cover``), sampled at the
        nearest pixel at every radial sample: the clutter of every path and
        of every node's end (bands ``clutter_class``, ``clutter_height_m``).
    land_cover_classes : str or Path, optional
        Code -> clutter class TOML file (default: the built-in ESA WorldCover mapping).
    max_memory_mb : float, optional
        Memory budget of the grid and radial tables [MB] (``--max-memory-mb``).  A run whose estimate
        (:func:`memory_estimate_bytes`) exceeds it, or any grid over :data:`grid.MAX_PIXELS` (then with a
        2048 MB budget), streams: the radial sectors go to temporary files on disk (:class:`grid.RadialStore`),
        the bands are written to a temporary GeoTIFF tile by tile and the summary is summed per tile; the
        result then has ``bands=None`` and ``geotiff_path``.
    stream_dir : str or Path, optional
        Folder of a streamed run's temporary files (default the system's); the output's folder makes the
        final rename atomic.

    Returns
    -------
    CoverageResult
    """
    import contextlib

    from ...terrain.elevation import ElevationModel
    from ...terrain.landcover import LandCover, class_mapping_for, land_cover_paths

    _check_numbers(radius_km, resolution_m, node_mast_m)
    if max_memory_mb is not None:
        from ...limits import check

        max_memory_mb = check("--max-memory-mb", max_memory_mb)
    gateways = _gateways(site, mast_m, name, sites)
    settings = _settings(dem, band, frequency_mhz, k_factor, clearance_ratio, fill_voids, radio)
    mapping = class_mapping_for(land_cover, land_cover_classes)
    land = None if mapping is None else (land_cover_paths(land_cover), mapping)
    radius_m = float(radius_km) * 1000.0
    # the land cover opened here only to refuse a bad file before any work: the sector threads open their own
    with ElevationModel.open(list(settings.dem_paths)) as model, \
            (contextlib.nullcontext() if land is None else LandCover.open(land[0])):
        lon_g = np.array([g.lon_deg for g in gateways])
        lat_g = np.array([g.lat_deg for g in gateways])
        outside = ~np.asarray(model.covers(lon_g, lat_g))
        if outside.any():
            g = gateways[int(np.argmax(outside))]
            raise ProfilerError(f"{g.name} ({g.lat_deg:.5f}, {g.lon_deg:.5f}) is outside the elevation data; "
                                f"coverage: {model.bounds_text()}")
        model.start_digests(lon_g, lat_g)   # provenance hashes run while the radials are swept
        res = float(resolution_m) if resolution_m is not None else float(model.pixel_size_m(lon_g[:1], lat_g[:1]))
        grid = make_grid(gateways, radius_m, res)
        run = functools.partial(_stream if _streams(grid, gateways, radius_m, res, settings, max_memory_mb)
                                else _in_memory, model, settings, gateways, grid, radius_m, res, float(node_mast_m),
                                workers, scheduler, progress, kernel, land, composite_run=sites is not None,
                                max_memory_mb=max_memory_mb, stream_dir=stream_dir)
        bands, counts, sweep, geotiff_path = run()
        sources = model.provenance(model.sources_used(lon_g, lat_g))
    settings_record = {"radius_km": float(radius_km), "resolution_m": res, "node_mast_m": float(node_mast_m),
                       "band": settings.band, "frequency_mhz": settings.frequency_mhz, "k_factor": settings.k_factor,
                       "clearance_ratio": settings.clearance_ratio, "fade_margin_db": settings.radio.fade_margin_db,
                       "diffraction": settings.radio.diffraction_method, "fill_voids": settings.fill_voids, **sweep,
                       **settings.radio.propagation.to_dict(settings.k_factor),
                       "calibration": settings.radio.propagation.calibration_dict(),
                       "land_cover": None if land is None else list(land[0]),
                       "land_cover_classes": None if land_cover_classes is None else str(land_cover_classes)}
    report = _report(gateways, sites is not None, settings_record, grid, bands, counts, sources,
                     _radio_ends(gateways, settings), _sheet_block(date, sheet_info))
    report["warnings"] += _clutter_warnings(counts, land, float(node_mast_m))
    if land is not None:
        report["summary"]["land_cover_classes"] = _land_cover_table(counts, land[1], settings.radio.propagation.model,
                                                                    res)
    return CoverageResult(bands=None if geotiff_path else bands, grid=grid, report=report, geotiff_path=geotiff_path)


DEFAULT_STREAM_MB = 2048.0
"""Memory budget of a run streamed because its grid exceeds :data:`grid.MAX_PIXELS` [MB]."""
STREAM_BYTES_PER_BAND_PIXEL = 4
"""float32 bands."""


def memory_estimate_bytes(grid, n_gateways, n_radials, n_full, n_bands=16) -> int:
    """Bytes an in-memory run holds: every gateway's radial tables and bands, plus the lookups (about 64 B/pixel)."""
    pixels = grid.width * grid.height
    return int(n_gateways * (n_radials * n_full + pixels) * n_bands * STREAM_BYTES_PER_BAND_PIXEL + 64 * pixels)


def _streams(grid, gateways, radius_m, res, settings, max_memory_mb) -> bool:
    from .grid import MAX_PIXELS

    if grid.width * grid.height > MAX_PIXELS:
        return True
    if max_memory_mb is None:
        return False
    n_full = max(math.ceil(radius_m / radial_step_m(res, settings.radio.diffraction_method)) + 1, 3)
    return memory_estimate_bytes(grid, len(gateways), radial_count(radius_m, res), n_full) > max_memory_mb * 2**20


def _stream(model, settings, gateways, grid, radius_m, res, node_mast_m, workers, scheduler, progress, kernel,
            land, composite_run, max_memory_mb, stream_dir):
    """A run over its memory budget: each gateway's sectors to disk in batches, then the GeoTIFF tile by tile.

    Holds at most about half the budget in sector results (at least one sector) and half in a tile of
    every gateway's bands (at least 16 x 16 pixels); the rest is the engine's work on one sector.
    """
    import tempfile

    from ...engine.cluster import chunked, progress_bar
    from .grid import RadialStore, band_names

    budget = (DEFAULT_STREAM_MB if max_memory_mb is None else float(max_memory_mb)) * 2**20
    n_radials = radial_count(radius_m, res)
    n_full = max(math.ceil(radius_m / radial_step_m(res, settings.radio.diffraction_method)) + 1, 3)
    sectors = chunked(n_radials, sector_radials(n_full))
    jobs = SectorJobs(settings, n_radials, radius_m, radial_step_m(res, settings.radio.diffraction_method),
                       node_mast_m, kernel, land, workers, scheduler)
    per_batch = max(1, int(budget / 2 // (sector_radials(n_full) * n_full * 16 * STREAM_BYTES_PER_BAND_PIXEL)))
    folder = str(stream_dir) if stream_dir is not None else tempfile.gettempdir()
    stores = []
    bar = progress_bar(progress, "radials", n_radials * len(gateways))   # one bar over every batch
    try:
        for i, g in enumerate(gateways):
            need = needed_samples(grid, g, n_radials, radius_m / (n_full - 1), radius_m, n_full, threads=cores())
            for b0 in range(0, len(sectors), per_batch):
                batch = sectors[b0:b0 + per_batch]
                parts = jobs.run([(g, np.arange(n_radials)[sl], need[sl]) for sl in batch], progress, bar)
                for sl, part in zip(batch, parts):
                    if len(stores) == i:
                        stores.append(RadialStore(_temp_file(folder, ".f32"), band_names(part), n_radials, n_full))
                    stores[-1].write(sl.start, part)
                del parts
        sweep = {"radials": n_radials, "radial_step_m": radius_m / (n_full - 1)}
        names, counts, path = _write_tiles(model, settings, gateways, grid, stores, sweep, radius_m, composite_run,
                                           land, budget, folder)
        return names, counts, sweep, path
    finally:
        jobs.close()
        if bar is not None:
            bar.close()
        for store in stores:
            store.close()


def _temp_file(folder, suffix) -> str:
    import os
    import tempfile

    fd, path = tempfile.mkstemp(prefix=".coverage-stream.", suffix=suffix, dir=folder)
    os.close(fd)
    return path


def _write_tiles(model, settings, gateways, grid, stores, sweep, radius_m, composite_run, land, budget, folder):
    """Every tile: each gateway's bands from its store, combined, written to a temporary GeoTIFF and counted."""
    from ...io.coverage import StreamedGeoTIFF

    per_pixel = len(gateways) * (len(stores[0].names) * 4 + 48) + 256   # bands, lookups, polar, positions [B]
    tile = 16
    while tile < 1024 and (2 * tile) ** 2 * per_pixel <= budget / 2:
        tile *= 2
    geotiff = StreamedGeoTIFF(grid, _temp_file(folder, ".tif"), block_px=min(tile, 256))
    windows = [grid.circle_window(g, radius_m) for g in gateways]
    counts = {}
    try:
        for r0, r1, c0, c1 in grid.tiles(tile):
            sub = grid.window(r0, r1, c0, c1)
            lon, lat = sub.lon_lat()
            outside = ~np.asarray(model.covers(lon, lat))
            inside_any = np.zeros(outside.shape, dtype=bool)
            running = RunningComposite(outside.shape, settings.radio.fade_margin_db)
            for i, (g, store, gw_window) in enumerate(zip(gateways, stores, windows)):
                w = overlap(gw_window, (r0, r1, c0, c1))
                if w is None:
                    continue   # the tile is off this gateway's circle
                lookup = window_lookup(grid.window(*w), g, sweep["radials"], sweep["radial_step_m"], radius_m,
                                       cores())
                local = (w[0] - r0, w[1] - r0, w[2] - c0, w[3] - c0)
                inside_any[local[0]:local[1], local[2]:local[3]] |= lookup[2]
                running.add(i, g, store.to_grid(lookup), local, adopt=True)
            if running.bands is None:   # no gateway reaches the tile: every band NaN
                running.add(0, gateways[0], {n: np.full(outside.shape, np.nan, dtype=np.float32)
                                             for n in stores[0].names})
            bands, heard = combine_bands(running, composite_run, outside)
            geotiff.write(bands, (r0, r1, c0, c1))
            counts = add_counts(counts, tile_counts(bands, inside_any, heard, settings, land))
        _no_pixel(counts)
        return list(bands), counts, geotiff.close(SCHEMA)
    except BaseException:
        geotiff.abort()
        raise


def _no_pixel(counts) -> None:
    if not counts["computed"]:
        raise ProfilerError("no pixel could be computed: the radius lies outside the elevation data or in a void; "
                            "check --dem, --site and --fill-voids")


def _in_memory(model, settings, gateways, grid, radius_m, res, node_mast_m, workers, scheduler, progress, kernel,
               land, composite_run, **_):
    """The whole grid in memory: ``(bands, counts, sweep record, None)``."""
    def off_data():   # the pixel centres off the elevation data (the model's extents only: no reads)
        return ~np.asarray(model.covers(*grid.lon_lat()))

    with ThreadPoolExecutor(1) as pool:   # pyproj and numpy release the GIL: the pixel positions overlap the sweep
        positions = pool.submit(off_data)
        running, inside_any, sweep = _sweep(settings, gateways, grid, radius_m, res, node_mast_m, workers,
                                            scheduler, progress, kernel, land)
        outside_data = positions.result()
    bands, heard_by_gateways = combine_bands(running, composite_run, outside_data)
    counts = tile_counts(bands, inside_any, heard_by_gateways, settings, land)
    _no_pixel(counts)
    return bands, counts, sweep, None


def _clutter_warnings(counts, land, node_mast_m) -> list:
    """No land cover and nodes below 10 m (likely optimistic), or computed pixels without a land-cover class."""
    from ..link import LOW_NODE_M

    if land is None:
        if node_mast_m < LOW_NODE_M:
            return [f"no land cover: the paths have no clutter, so nodes {node_mast_m:g} m above ground (below "
                    f"{LOW_NODE_M:g} m) are likely optimistic; give --land-cover FILE"]
        return []
    if counts["no_class"]:
        return [f"{counts['no_class']} of {counts['computed']} pixels have no land-cover class (void or outside the "
                "land cover): no clutter is assumed there"]
    return []


def _land_cover_table(counts, mapping, model, resolution_m) -> list:
    """The land-cover codes at the computed pixels: code, clutter class, R [m], area [km^2] and share of each."""
    if not counts["codes"]:
        return []
    values = np.array(sorted(counts["codes"]), dtype=np.int64)
    samples = mapping.clutter(values.astype(np.int32), model)
    total = counts["computed"]
    return [{"code": int(v), "clutter": str(name), "clutter_height_m": float(h), "pixels": int(counts["codes"][v]),
             "area_km2": round(float(counts["codes"][v]) * resolution_m * resolution_m * 1e-6, 4),
             "share": round(float(counts["codes"][v]) / total, 6)}
            for v, name, h in zip(values.tolist(), samples.class_names(), samples.height_m)]


def _settings(dem, band, frequency_mhz, k_factor, clearance_ratio, fill_voids, radio):
    """Validated engine settings (a picklable NetworkSettings) of a coverage run."""
    from ...engine.links import NetworkSettings
    from ...engine.radio import RadioSettings
    from ...lora.bands import resolve_frequency_mhz

    radio = (radio or RadioSettings()).validate().with_model(True)
    if radio.gateway != "a":
        raise ProfilerError("in a coverage map the site is the gateway (end A); "
                            "leave RadioSettings(gateway=...) at 'a'")
    f_mhz, band_name = resolve_frequency_mhz(frequency_mhz, band)
    dem_paths = tuple(str(p) for p in (dem if isinstance(dem, (list, tuple)) else [dem]))
    if not dem_paths:
        raise ProfilerError("no elevation data: give --dem FILE_OR_FOLDER")
    return NetworkSettings(dem_paths=dem_paths, frequency_mhz=f_mhz, band=band_name,
                           k_factor=radio.propagation.k_factor(geometry.parse_k_factor(k_factor)),
                           clearance_ratio=float(clearance_ratio),
                           step_m=None, fill_voids=bool(fill_voids), radio=radio)


def _sweep(settings, gateways, grid, radius_m, res, node_mast_m, workers, scheduler, progress, kernel=None,
           land=None):
    """Every gateway's radial sectors through the engine (the tasks), then onto the grid."""
    from ...engine.cluster import chunked

    n_radials = radial_count(radius_m, res)
    step_m = radial_step_m(res, settings.radio.diffraction_method)
    n_full = max(math.ceil(radius_m / step_m) + 1, 3)
    spacing = radius_m / (n_full - 1)
    sectors = chunked(n_radials, sector_radials(n_full))
    windows = [grid.circle_window(g, radius_m) for g in gateways]
    threads = cores()   # the lookups and the bands of this process: one thread per core
    lookups = [None if overlap(w, (0, grid.height, 0, grid.width)) is None else
               window_lookup(grid.window(*w), g, n_radials, spacing, radius_m, threads)
               for g, w in zip(gateways, windows)]
    needs = [np.zeros((n_radials, n_full), dtype=bool) if lookup is None else
             mark_needed(np.zeros((n_radials, n_full), dtype=bool), lookup) for lookup in lookups]
    chunks = [(g, np.arange(n_radials)[sl], need[sl]) for g, need in zip(gateways, needs) for sl in sectors]
    jobs = SectorJobs(settings, n_radials, radius_m, step_m, node_mast_m, kernel, land, workers, scheduler)
    try:
        parts = jobs.run(chunks, progress)
    finally:
        jobs.close()
    running = RunningComposite((grid.height, grid.width), settings.radio.fade_margin_db)
    inside_any = np.zeros((grid.height, grid.width), dtype=bool)
    for i, (g, w, lookup) in enumerate(zip(gateways, windows, lookups)):   # each over its circle's window only
        if lookup is None:
            continue
        inside_any[w[0]:w[1], w[2]:w[3]] |= lookup[2]
        running.add(i, g, to_grid(parts[i * len(sectors):(i + 1) * len(sectors)], lookup, n_radials, n_full,
                                  threads), w, adopt=True)
        parts[i * len(sectors):(i + 1) * len(sectors)] = [None] * len(sectors)   # free the gateway's tables
    return running, inside_any, {"radials": n_radials, "radial_step_m": spacing}


def _radio_ends(gateways, settings) -> dict:
    """Transmitter power, antenna gain, feeder loss and EIRP of every gateway [dBm, dBi, dB, dBm].

    The same resolution as the engine's (:func:`profiler.engine.radio.resolve_ends`: the options, per-site
    columns of the site list, the plan's EIRP limit); EIRP = P + G - L (ITU-R P.525-4).
    """
    from ...engine.radio import resolve_ends
    from ...lora.lorawan import eirp_dbm
    from ...lora.regional import plan as regional_plan

    plan = regional_plan(settings.band) if settings.band is not None else None
    keys = sorted({k for g in gateways for k in g.overrides})
    over = {k: np.array([g.overrides.get(k, np.nan) for g in gateways], dtype=float) for k in keys}
    ends, _ = resolve_ends(settings.radio, plan, len(gateways), {"gateway": over})
    gw = ends["gateway"]
    return {"tx_power_dbm": gw["tx_power_dbm"], "gain_dbi": gw["gain_dbi"], "cable_loss_db": gw["cable_loss_db"],
            "eirp_dbm": eirp_dbm(gw["tx_power_dbm"], gw["gain_dbi"], gw["cable_loss_db"])}


def _sheet_block(date, sheet_info) -> dict:
    """The ``sheet`` block: title-block fields (empty: blank boxes) and the date (ISO 8601)."""
    import datetime

    from ...io.sheetinfo import SheetInfo

    return {**(sheet_info or SheetInfo()).to_dict(), "date": (date or datetime.date.today()).isoformat()}


def _report(gateways, composite_run, settings_record, grid, bands, counts, sources, radio, sheet) -> dict:
    """The ``profiler.coverage/5`` summary (``bands``: the band names, in order)."""
    warnings = []
    if counts["missing"]:
        warnings.append(f"{counts['missing'] / max(counts['inside'], 1):.1%} of the area within the radius has no "
                        "value: outside the elevation data, or behind it or a void along the radial")
    records = [_gateway_record(g, {k: float(v[i]) for k, v in radio.items()}) for i, g in enumerate(gateways)]
    summary = _area_summary(counts, settings_record["resolution_m"], settings_record["location_percent"])
    summary = {"gateways": sum(g.role == "gateway" for g in gateways),
               "candidates": sum(g.role == "candidate" for g in gateways), **summary}
    return {"schema": SCHEMA, "tool_version": __version__,
            "site": None if composite_run else records[0], "gateways": records if composite_run else None,
            "settings": settings_record, "grid": grid.to_dict(), "bands": list(bands), "summary": summary,
            "dem": {"sources": sources}, "sheet": sheet, "warnings": warnings, "caution": CAUTION}


def _gateway_record(g: Gateway, radio: dict) -> dict:
    return {"name": g.name, "role": g.role, "lat_deg": g.lat_deg, "lon_deg": g.lon_deg, "mast_m": g.mast_m, **radio}
