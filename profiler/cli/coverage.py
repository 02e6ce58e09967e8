"""``profiler coverage``: margin and data rate at every pixel within a radius of a gateway site."""

from __future__ import annotations

import click

from .options import (
    NON_NEGATIVE,
    POSITIVE,
    SITE_NAME,
    LatLon,
    batch_radio_options,
    calibration_option,
    clearance_ratio_option,
    cluster_options,
    frequency_options,
    k_option,
    land_cover_kwargs,
    land_cover_options,
    plot_options,
    radio_settings,
    sheet_options,
    sheet_settings,
)


@click.command("coverage")
@click.option("--dem", "dem_paths", multiple=True, metavar="PATH",
              help="Elevation file (GeoTIFF, .hgt, VRT, ...) or folder of tiles; repeatable.")
@click.option("--site", type=LatLon(), default=None, help="The gateway as LAT,LON in decimal degrees (WGS84).")
@click.option("--mast-m", type=NON_NEGATIVE, default=None, help="Gateway antenna height above ground [m].")
@click.option("--name", type=SITE_NAME, default="site", show_default=True,
              help="Name of the site (at most 200 characters).")
@click.option("--sites", "sites_csv", default=None, type=click.Path(dir_okay=False), metavar="GATEWAYS.csv",
              help="Site list (the network format): a composite over its gateway rows, each with its own mast.")
@click.option("--radius-km", type=POSITIVE, required=True, help="Radius around each gateway [km].")
@click.option("--resolution-m", type=POSITIVE, default=None,
              help="Output pixel size [m] (default: the elevation pixel at the site).")
@click.option("--node-mast-m", type=NON_NEGATIVE, default=1.5, show_default=True,
              help="Node antenna height above ground at every pixel [m].")
@click.option("--fill-voids", is_flag=True, help="Interpolate across elevation voids instead of leaving nodata.")
@land_cover_options
@k_option
@frequency_options
@clearance_ratio_option()
@batch_radio_options
@calibration_option
@click.option("--out", "out_path", default=None, type=click.Path(dir_okay=False), metavar="COVERAGE.tif",
              help="Write the bands as a float32 GeoTIFF (give at least one of --out, --plot, --kmz, --json).")
@click.option("--kmz", "kmz_path", default=None, type=click.Path(dir_okay=False), metavar="OVERLAY.kmz",
              help="Write a KML 2.2 ground overlay of the margin classes with the site placemark.")
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON summary ('-' for stdout).")
@click.option("--map", "map_kind", type=click.Choice(["margin", "probability"]), default="margin", show_default=True,
              help="What the sheet's map shows: the margin classes or the probability of being heard (0-1).")
@click.option("--max-memory-mb", type=POSITIVE, default=None, metavar="MB",
              help="Memory budget of the map [MB]: a larger run streams, writing the GeoTIFF tile by tile "
                   "(grids over 40 million pixels always stream, within 2048 MB).")
@plot_options(continued=True)
@sheet_options
@cluster_options
def coverage_command(dem_paths, site, mast_m, name, sites_csv, radius_km, resolution_m, node_mast_m, fill_voids,
                     k_text, freq_mhz, band_name, clearance_ratio, out_path, kmz_path, json_path, map_kind,
                     max_memory_mb, plot_path, paper, dpi, workers, scheduler, no_progress, **kw):
    """Where a node at --node-mast-m is heard from a site, at which data rate: every pixel within --radius-km.

    The site is the gateway (end A); every pixel centre is a node. Bands:
    terrain_m, worst_fresnel_ratio, path_loss_db, rx_level_dbm, margin_db,
    downlink_margin_db, recommended_dr, line_of_sight, location_sigma_db,
    probability_heard (+ clutter_class and clutter_height_m with
    --land-cover, building_entry_loss_db with --indoor-b, best_gateway and
    gateways_heard with --sites).

    \b
    Examples:
      profiler coverage --dem dem_samples --site -29.9125,-19.955 --mast-m 10 --radius-km 10 --out cov.tif
      profiler coverage --dem dem_samples --site -29.9125,-19.955 --mast-m 10 --radius-km 4 --plot cov.png \\
          --project "Vellmoor valley LoRaWAN" --document VV-RF-002
      profiler coverage --dem dem_samples --land-cover dem_samples/vellmoor_landcover.tif \\
          --site -29.9125,-19.955 --mast-m 10 --radius-km 4 --map probability --plot cov.png
    """
    from . import collect_garbage

    collect_garbage()   # long runs and Dask: the collector on as usual
    from ..api import coverage_outputs, stream_folder
    from ..errors import ProfilerError
    from ..io.outputs import check_outputs, write_outputs
    from ..limits import quiet_numerics
    from ..products.coverage.map import coverage

    if all(p is None for p in (out_path, plot_path, kmz_path, json_path)):
        raise ProfilerError("nothing to write: give --out COVERAGE.tif, --plot MAP.png, --kmz OVERLAY.kmz "
                            "or --json FILE (or several)")
    if not dem_paths:
        raise ProfilerError("no elevation data: give --dem FILE_OR_FOLDER")
    sheet_info, date = sheet_settings(kw)
    cover = land_cover_kwargs(kw)
    radio = radio_settings(kw)
    check_outputs(coverage_outputs(out_path, plot_path, kmz_path, json_path, paper=paper, dpi=dpi))
    from ..products.coverage.radials import keep_freed_memory

    keep_freed_memory()   # the command owns its process: keep freed temporaries in the heap (see the docstring)
    with quiet_numerics():
        result = coverage(site, dem=list(dem_paths), mast_m=mast_m, name=name, sites=sites_csv, radius_km=radius_km,
                          resolution_m=resolution_m, node_mast_m=node_mast_m, band=band_name, frequency_mhz=freq_mhz,
                          k_factor=k_text, clearance_ratio=clearance_ratio, fill_voids=fill_voids, radio=radio,
                          workers=workers, scheduler=scheduler, progress=False if no_progress else None,
                          date=date, sheet_info=sheet_info, max_memory_mb=max_memory_mb,
                          stream_dir=stream_folder(out_path), **cover)
        try:
            outputs = coverage_outputs(out_path, plot_path, kmz_path, json_path, paper=paper, dpi=dpi,
                                       dem_paths=dem_paths, result=result, summary=True, map_kind=map_kind)
            write_outputs(outputs, result.to_dict())
        finally:
            result.discard()   # a streamed run's temporary GeoTIFF, unless --out took it
