"""``profiler network``: every gateway -> node link of a site list, one table."""

from __future__ import annotations

import sys

import click

from .options import cluster_options, network_call_kwargs, network_options, plot_options, sheet_options, sheet_settings  # noqa: F401


@click.command("network")
@network_options
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON report ('-' for stdout).")
@click.option("--csv", "csv_path", default=None, metavar="FILE", help="Write one CSV row per link.")
@click.option("--geojson", "geojson_path", default=None, metavar="FILE", help="Write sites and links as GeoJSON.")
@click.option("--kml", "kml_path", default=None, metavar="FILE", help="Write sites and links as KML.")
@plot_options
@sheet_options
@cluster_options
def network_command(json_path, csv_path, geojson_path, kml_path, plot_path, paper, dpi, workers, scheduler,
                    no_progress, **kw):
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
    from ..api import network
    from ..outputs import check_output_path

    for path, option, suffixes in ((json_path, "--json", None), (csv_path, "--csv", None),
                                   (geojson_path, "--geojson", None), (kml_path, "--kml", None),
                                   (plot_path, "--plot", (".png", ".pdf", ".svg"))):
        check_output_path(path, suffixes, option)
    sheet_info, date = sheet_settings(kw)
    call = network_call_kwargs(kw)
    result = network(call.pop("sites"), workers=workers, scheduler=scheduler,
                     progress=False if no_progress else None, **call)
    report = result.to_dict()
    write_network_outputs(report, json_path=json_path, csv_path=csv_path, geojson_path=geojson_path,
                          kml_path=kml_path, plot_path=plot_path, paper=paper, dpi=dpi, dem_paths=call["dem"],
                          sheet={**sheet_info.to_dict(), "date": date.isoformat()})
    if json_path != "-":
        click.echo(network_summary_text(report), nl=False)


def write_network_outputs(report, *, json_path=None, csv_path=None, geojson_path=None, kml_path=None,
                          plot_path=None, paper="a4", dpi=200, dem_paths=None, sheet=None):
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

        from ..textsafe import safe_strings

        write_network_figure(report, plot_path, paper=paper, dpi=dpi, dem_paths=dem_paths,
                             sheet=safe_strings(sheet, "figure") if sheet else None)
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
