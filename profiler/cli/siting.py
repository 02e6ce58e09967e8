"""``profiler siting``: the fewest (or cheapest) gateway sites that hear every node, proven optimal."""

from __future__ import annotations

import click

from .options import (
    INTEGER,
    NUMBER,
    cluster_options,
    network_call_kwargs,
    network_options,
    plot_options,
    sheet_options,
    sheet_settings,
)


@click.command("siting")
@network_options
@click.option("--redundancy", type=INTEGER, default=1, show_default=True,
              help="Gateways that must hear each node.")
@click.option("--min-margin-db", type=NUMBER, default=None,
              help="Also require this uplink margin for a node to count as heard [dB] (default: only "
                   "--min-probability).")
@click.option("--max-gateways", type=INTEGER, default=None,
              help="Choose at most K sites (existing gateways included) hearing the most nodes.")
@click.option("--time-limit-s", type=NUMBER, default=60.0, show_default=True,
              help="Solver time limit [s]; the best set found is returned with its gap.")
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON report ('-' for stdout).")
@click.option("--csv", "csv_path", default=None, metavar="FILE", help="Write one CSV row per node.")
@click.option("--geojson", "geojson_path", default=None, metavar="FILE",
              help="Write the sites (chosen or not) and the links used as GeoJSON.")
@click.option("--kml", "kml_path", default=None, metavar="FILE",
              help="Write the chosen sites, the nodes and the links used as KML.")
@plot_options(continued=True)
@sheet_options
@cluster_options
def siting_command(redundancy, min_margin_db, max_gateways, time_limit_s, json_path, csv_path, geojson_path,
                   kml_path, plot_path, paper, dpi, workers, scheduler, no_progress, **kw):
    """Choose where the gateways go: the cheapest set of candidate sites that hears every node.

    Roles in SITES.csv: 'candidate' may get a gateway (optional 'cost'
    column, default 1), 'gateway' is an existing one that is always kept,
    'node' must be heard. Solved exactly (integer programme, HiGHS); the
    greedy choice is reported for comparison. --plot draws the siting sheet:
    the chosen sites, the links they serve, the proof and the greedy choice.

    \b
    Example:
      profiler siting --dem dem_samples --sites examples/siting_sites.csv --redundancy 2
    """
    from . import collect_garbage

    collect_garbage()   # long runs and Dask: the collector on as usual
    from ..api import siting
    from ..io.outputs import check_outputs, write_outputs
    from ..limits import quiet_numerics

    sheet_info, date = sheet_settings(kw)
    call = network_call_kwargs(kw)
    outputs = siting_outputs(json_path, csv_path, geojson_path, plot_path, paper, dpi, call["dem"],
                             kml_path=kml_path, sheet={**sheet_info.to_dict(), "date": date.isoformat()})
    check_outputs(outputs)
    with quiet_numerics():
        result = siting(call.pop("sites"), redundancy=redundancy, min_margin_db=min_margin_db,
                        max_gateways=max_gateways, time_limit_s=time_limit_s, workers=workers,
                        scheduler=scheduler, progress=False if no_progress else None, **call)
        write_outputs(outputs, {"siting": result.to_dict(), "network": result.network})


def siting_outputs(json_path, csv_path, geojson_path, plot_path, paper="a4", dpi=150, dem_paths=(), *,
                   kml_path=None, sheet=None):
    """The outputs of ``profiler siting``; each render gets ``{"siting": report, "network": network_report}``.

    ``sheet`` holds the title-block fields and the date of the siting sheet (``--plot``).
    """
    from ..io.outputs import Output, summary_output, text_of

    def of_siting(render):
        return lambda both, path: render(both["siting"], path)

    def of_both(function):
        def render(both, path):
            from ..products.siting import report as siting_report
            return getattr(siting_report, function)(both["siting"], both["network"])
        return render

    def csv_text(both, path):
        from ..products.siting.report import siting_csv_text
        return siting_csv_text(both["siting"])

    def render_plot(both, path, files=None):
        from ..plot.siting import write_siting_figure
        from ..textsafe import safe_strings

        write_siting_figure(both["siting"], both["network"], path, paper=paper, dpi=dpi, dem_paths=list(dem_paths),
                            sheet=safe_strings(sheet, "figure") if sheet else None, files=files)

    return [
        Output("--json", json_path, of_siting(text_of("io.report", "json_text")), "json"),
        Output("--csv", csv_path, csv_text, "csv"),
        Output("--geojson", geojson_path, of_both("siting_geojson_text"), "json"),
        Output("--kml", kml_path, of_both("siting_kml_text"), "xml"),
        Output("--plot", plot_path, render_plot, "figure", suffixes=(".png", ".pdf", ".svg"), stdout=False,
               extra_files=True),
        summary_output(lambda both, path: siting_summary_text(both["siting"]), json_path, csv_path, geojson_path,
                       kml_path),
    ]


def siting_summary_text(report: dict) -> str:
    """Short human summary: the chosen sites, the proof, greedy for comparison, the unreachable nodes."""
    from ..about import CAUTION

    s = report.get("summary", {})
    proven = "proven optimal" if report.get("proven_optimal") else f"not proven optimal (gap {report.get('gap')})"
    lines = [f"Siting: {len(report['chosen'])} site(s) chosen, objective {report['objective']:g} ({proven})",
             f"  chosen        {', '.join(report['chosen']) or '-'}",
             f"  greedy        {', '.join(report['greedy']['chosen']) or '-'} "
             f"(objective {report['greedy']['objective']:g})"]
    if s:
        lines.append(f"  nodes         {s.get('nodes_heard')} of {s.get('nodes_total')} heard "
                     f"{report.get('redundancy', s.get('redundancy', 1))} time(s); "
                     f"{s.get('nodes_unreachable')} unreachable")
    for u in report["unreachable"]:
        lines.append(f"  unreachable   {u['name']}: {u['reason']}")
    for msg in report.get("warnings", []):
        lines.append(f"  warning       {msg}")
    lines.append(f"  {CAUTION}")
    return "\n".join(lines) + "\n"
