"""``profiler network``: every gateway -> node link of a site list, one table."""

from __future__ import annotations

import click

from .options import cluster_options, network_call_kwargs, network_options, plot_options, sheet_options, sheet_settings  # noqa: F401


def links_option(f):
    """``--links best|all``: the links the map draws (the JSON and the exports keep every link)."""
    return click.option("--links", "links", type=click.Choice(["best", "all"]), default="best", show_default=True,
                        help="Links drawn on the --plot map: per node the best from an existing gateway and from a "
                             "candidate site (best), or every link (all); the JSON and CSV keep every link.")(f)


@click.command("network")
@network_options
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON report ('-' for stdout).")
@click.option("--csv", "csv_path", default=None, metavar="FILE", help="Write one CSV row per link.")
@click.option("--geojson", "geojson_path", default=None, metavar="FILE", help="Write sites and links as GeoJSON.")
@click.option("--kml", "kml_path", default=None, metavar="FILE", help="Write sites and links as KML.")
@plot_options(continued=True)
@links_option
@sheet_options
@cluster_options
def network_command(json_path, csv_path, geojson_path, kml_path, plot_path, paper, dpi, links, workers, scheduler,
                    no_progress, **kw):
    """Analyse every gateway -> node link of a site list: who hears whom, at which data rate, and why not.

    Gateways and candidate sites are end A of every link, nodes end B: the
    -a options (--gain-a-dbi, --tx-power-a-dbm, ...) apply to gateways, the
    -b options to nodes; per-site columns of SITES.csv override them. Existing
    gateways and candidate sites are counted apart: a node's best gateway is
    the best existing one, its best candidate the best candidate site. A link
    that cannot be computed carries its error in its row; the exit status is
    0 unless every link failed.

    \b
    Examples:
      profiler network --dem dem_samples --sites examples/vellmoor_network.csv --csv links.csv
      profiler network --dem dem_samples --sites examples/vellmoor_network.csv --plot net.png --links all
    """
    from . import collect_garbage

    collect_garbage()   # long runs and Dask: the collector on as usual
    from ..api import network
    from ..io.outputs import check_outputs, write_outputs
    from ..limits import quiet_numerics

    sheet_info, date = sheet_settings(kw)
    call = network_call_kwargs(kw)
    outputs = network_outputs(json_path, csv_path, geojson_path, kml_path, plot_path, paper, dpi, call["dem"],
                              sheet={**sheet_info.to_dict(), "date": date.isoformat()}, links=links)
    check_outputs(outputs)
    with quiet_numerics():
        result = network(call.pop("sites"), workers=workers, scheduler=scheduler,
                         progress=False if no_progress else None, **call)
        write_outputs(outputs, result.to_dict())


def network_outputs(json_path, csv_path, geojson_path, kml_path, plot_path, paper="a4", dpi=200, dem_paths=(), *,
                    sheet=None, links="best"):
    """The outputs of ``profiler network`` for :func:`profiler.io.outputs.write_outputs` (summary on stdout
    unless another output goes there); ``sheet`` holds the title-block fields and date of the map,
    ``links`` the links it draws (``best`` or ``all``)."""
    from ..io.outputs import Output, summary_output, text_of

    def render_plot(report, path, files=None):
        from ..plot import write_network_figure
        from ..textsafe import safe_strings

        write_network_figure(report, path, paper=paper, dpi=dpi, dem_paths=list(dem_paths),
                             sheet=safe_strings(sheet, "figure") if sheet else None, links=links, files=files)

    return [
        Output("--json", json_path, text_of("io.report", "json_text"), "json"),
        Output("--csv", csv_path, text_of("io.network_exports", "network_csv_text"), "csv"),
        Output("--geojson", geojson_path, text_of("io.network_exports", "network_geojson_text"), "json"),
        Output("--kml", kml_path, text_of("io.network_exports", "network_kml_text"), "xml"),
        Output("--plot", plot_path, render_plot, "figure", suffixes=(".png", ".pdf", ".svg"), stdout=False,
               extra_files=True),
        summary_output(lambda report, path: network_summary_text(report), json_path, csv_path, geojson_path,
                       kml_path),
    ]


def network_summary_text(report: dict) -> str:
    """Short human summary: counts (existing gateways and candidate sites apart), then one line per node
    (best gateway, margin, data rate; with candidate sites, the candidates heard, the best and its margin)."""
    from ..about import CAUTION
    from ..io.report import model_line

    s = report["summary"]
    cand = s["candidates"] > 0
    band = f" ({report['band']})" if report.get("band") else ""
    with_cand = (f"; {s['nodes_covered_with_candidates']} of {s['nodes_total']} with the candidate sites"
                 if cand else "")
    lines = [f"Network: {s['links']} links, {s['closing']} close with the {report['fade_margin_db']:g} dB fade margin, "
             f"{s['errors']} could not be computed",
             f"  frequency     {report['frequency_mhz']:.4f} MHz{band}, k = {report['k_factor']:.4g}",
             f"  model         {model_line(report)}",
             f"  sites         {_count(s['gateways'], 'existing gateway')}, "
             f"{_count(s['candidates'], 'candidate site')}, "
             f"{_count(s['nodes_total'], 'node')}",
             f"  nodes         {s['nodes_covered_by_gateways']} of {s['nodes_total']} heard by the existing gateways "
             f"({s['nodes_covered_twice']} by two or more){with_cand}",
             f"  heard         when P(uplink keeps the fade margin) >= {report['settings']['min_probability']:.2f}",
             "  node                              heard  best gateway                     margin [dB]  DR"
             + ("   cand.  best candidate                   margin [dB]" if cand else "")]
    for n in report["nodes"]:
        line = (f"  {_cut(n['name'], 32):<32}  {n['gateways_heard']:>5}  {_cut(n['best_gateway'] or '-', 31):<31}"
                f"  {_margin(n['best_margin_db'])}  {_dr(n['recommended_dr']):<4}")
        if cand:
            line += (f" {n['candidates_heard']:>5}  {_cut(n['best_candidate'] or '-', 31):<31}"
                     f"  {_margin(n['best_candidate_margin_db'])}")
        lines.append(line)
    for msg in report["warnings"]:
        lines.append(f"  warning       {msg}")
    lines.append(f"  {CAUTION}")
    return "\n".join(line.rstrip() for line in lines) + "\n"


def _count(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def _margin(value) -> str:
    return f"{value:11.1f}" if value is not None else "          -"


def _dr(value) -> str:
    return f"DR{value}" if value is not None else "-"


def _cut(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "~"
