"""``profiler network``: every gateway -> node link of a site list, one table."""

from __future__ import annotations

import sys

import click

from .options import (POSITIVE, clearance_ratio_option, frequency_options, k_option, plot_options, radio_options,
                      radio_settings)


def cluster_options(f):
    """``--workers N`` / ``--scheduler ADDRESS`` / ``--no-progress`` (shared by batch commands)."""
    for option in reversed([
        click.option("--workers", type=click.IntRange(1, 256), default=None,
                     help="Run on a local Dask cluster of N worker processes (pip install -e \".[cluster]\")."),
        click.option("--scheduler", default=None, metavar="ADDRESS",
                     help="Run on an existing Dask cluster, e.g. tcp://10.0.0.5:8786 (the elevation files must be "
                          "visible to every worker at the same path)."),
        click.option("--no-progress", is_flag=True, help="No progress bar (it is shown only on a terminal anyway)."),
    ]):
        f = option(f)
    return f


@click.command("network")
@click.option("--dem", "dem_paths", multiple=True, metavar="PATH",
              help="Elevation file (GeoTIFF, .hgt, VRT, ...) or folder of tiles; repeatable.")
@click.option("--sites", "sites_csv", required=True, type=click.Path(dir_okay=False), metavar="SITES.csv",
              help="Site list: name,lat_deg,lon_deg,mast_m,role (gateway, node or candidate) [+ overrides].")
@click.option("--pairs", "pairs_csv", default=None, type=click.Path(dir_okay=False), metavar="PAIRS.csv",
              help="Exactly these links (header gateway,node) instead of every pair within --max-distance-km.")
@click.option("--max-distance-km", type=POSITIVE, default=50.0, show_default=True,
              help="Longest gateway-node link considered [km].")
@click.option("--step-m", type=POSITIVE, default=None,
              help="Largest sample spacing [m] (default: the finest DEM pixel along each path).")
@click.option("--fill-voids", is_flag=True, help="Interpolate across elevation voids instead of failing the link.")
@k_option
@frequency_options
@clearance_ratio_option()
@radio_options
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON report ('-' for stdout).")
@click.option("--csv", "csv_path", default=None, metavar="FILE", help="Write one CSV row per link.")
@click.option("--geojson", "geojson_path", default=None, metavar="FILE", help="Write sites and links as GeoJSON.")
@click.option("--kml", "kml_path", default=None, metavar="FILE", help="Write sites and links as KML.")
@plot_options
@cluster_options
def network_command(dem_paths, sites_csv, pairs_csv, max_distance_km, step_m, fill_voids, k_text, freq_mhz,
                    band_name, clearance_ratio, json_path, csv_path, geojson_path, kml_path, plot_path, paper, dpi,
                    workers, scheduler, no_progress, **radio_kw):
    """Analyse every gateway -> node link of a site list: who hears whom, at which data rate, and why not.

    Gateways and candidate sites are end A of every link, nodes end B: the
    -a options (--gain-a-dbi, --tx-power-a-dbm, ...) apply to gateways, the
    -b options to nodes; per-site columns of SITES.csv override them. A link
    that cannot be computed carries its error in its row; the exit status is
    0 unless every link failed.

    \b
    Example:
      profiler network --dem dem_samples --sites examples/vellmoor_network.csv --csv links.csv
    """
    from ..errors import ProfilerError
    from ..network import network
    from ..outputs import check_output_path

    for path, option, suffixes in ((json_path, "--json", None), (csv_path, "--csv", None),
                                   (geojson_path, "--geojson", None), (kml_path, "--kml", None),
                                   (plot_path, "--plot", (".png", ".pdf", ".svg"))):
        check_output_path(path, suffixes, option)
    if not dem_paths:
        raise ProfilerError("no elevation data: give --dem FILE_OR_FOLDER")
    radio = radio_settings(radio_kw)
    if pairs_csv is not None and click.get_current_context().get_parameter_source("max_distance_km").name != "DEFAULT":
        raise ProfilerError("give either --pairs or --max-distance-km, not both")
    result = network(sites_csv, dem=list(dem_paths), pairs=pairs_csv, max_distance_km=max_distance_km,
                     band=band_name, frequency_mhz=freq_mhz, k_factor=k_text, clearance_ratio=clearance_ratio,
                     step_m=step_m, fill_voids=fill_voids, radio=radio, workers=workers, scheduler=scheduler,
                     progress=False if no_progress else None)
    report = result.to_dict()
    write_network_outputs(report, json_path=json_path, csv_path=csv_path, geojson_path=geojson_path,
                          kml_path=kml_path, plot_path=plot_path, paper=paper, dpi=dpi, dem_paths=list(dem_paths))
    if json_path != "-":
        click.echo(network_summary_text(report), nl=False)


def write_network_outputs(report, *, json_path=None, csv_path=None, geojson_path=None, kml_path=None,
                          plot_path=None, paper="a4", dpi=200, dem_paths=None):
    """Write every requested output of a network report."""
    from ..outputs import write_text
    from ..report import json_text

    if csv_path or geojson_path or kml_path:
        from ..exports_network import network_csv_text, network_geojson_text, network_kml_text
    if json_path and json_path != "-":
        write_text(json_path, json_text(report))
    if csv_path:
        write_text(csv_path, network_csv_text(report))
    if geojson_path:
        write_text(geojson_path, network_geojson_text(report))
    if kml_path:
        write_text(kml_path, network_kml_text(report))
    if plot_path:
        from ..plot import write_network_figure

        write_network_figure(report, plot_path, paper=paper, dpi=dpi, dem_paths=dem_paths)
    if json_path == "-":
        sys.stdout.write(json_text(report))


def network_summary_text(report: dict) -> str:
    """Short human summary: counts, then one line per node (best gateway, margin, data rate)."""
    from .. import CAUTION

    s = report["summary"]
    band = f" ({report['band']})" if report.get("band") else ""
    lines = [f"Network: {s['links']} links, {s['closing']} close with the {report['fade_margin_db']:g} dB fade margin, "
             f"{s['errors']} could not be computed",
             f"  frequency     {report['frequency_mhz']:.4f} MHz{band}, k = {report['k_factor']:.4g}",
             f"  nodes         {s['nodes_covered']} of {s['nodes_total']} heard, {s['nodes_covered_twice']} by two "
             "or more gateways",
             "  node                              heard  best gateway                     margin [dB]  DR"]
    for n in report["nodes"]:
        margin = f"{n['best_margin_db']:11.1f}" if n["best_margin_db"] is not None else "          -"
        dr = f"DR{n['recommended_dr']}" if n["recommended_dr"] is not None else "-"
        lines.append(f"  {_cut(n['name'], 32):<32}  {n['gateways_heard']:>5}  {_cut(n['best_gateway'] or '-', 31):<31}"
                     f"  {margin}  {dr}")
    for msg in report["warnings"]:
        lines.append(f"  warning       {msg}")
    lines.append(f"  {CAUTION}")
    return "\n".join(lines) + "\n"


def _cut(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "~"
