"""``profiler siting``: the fewest (or cheapest) gateway sites that hear every node, proven optimal."""

from __future__ import annotations

import click

from .options import INTEGER, NUMBER, cluster_options, network_call_kwargs, network_options


@click.command("siting")
@network_options
@click.option("--redundancy", type=INTEGER, default=1, show_default=True,
              help="Gateways that must hear each node.")
@click.option("--min-margin-db", type=NUMBER, default=None,
              help="Least uplink margin for a node to count as heard [dB] (default: --fade-margin-db).")
@click.option("--max-gateways", type=INTEGER, default=None,
              help="Choose at most K sites (existing gateways included) hearing the most nodes.")
@click.option("--time-limit-s", type=NUMBER, default=60.0, show_default=True,
              help="Solver time limit [s]; the best set found is returned with its gap.")
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON report ('-' for stdout).")
@click.option("--csv", "csv_path", default=None, metavar="FILE", help="Write one CSV row per node.")
@click.option("--geojson", "geojson_path", default=None, metavar="FILE",
              help="Write the sites (chosen or not) and the links used as GeoJSON.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), default=None,
              help="Write the network map with the chosen sites highlighted: .png, .pdf or .svg.")
@click.option("--paper", type=click.Choice(["a4", "letter"]), default="a4", show_default=True,
              help="Paper size of the figure (landscape).")
@click.option("--dpi", type=INTEGER, default=150, show_default=True,
              help="Resolution of a PNG figure [dots per inch].")
@cluster_options
def siting_command(redundancy, min_margin_db, max_gateways, time_limit_s, json_path, csv_path, geojson_path,
                   plot_path, paper, dpi, workers, scheduler, no_progress, **kw):
    """Choose where the gateways go: the cheapest set of candidate sites that hears every node.

    Roles in SITES.csv: 'candidate' may get a gateway (optional 'cost'
    column, default 1), 'gateway' is an existing one that is always kept,
    'node' must be heard. Solved exactly (integer programme, HiGHS); the
    greedy choice is reported for comparison.

    \b
    Example:
      profiler siting --dem dem_samples --sites examples/siting_sites.csv --redundancy 2
    """
    from . import collect_garbage

    collect_garbage()   # long runs and Dask: the collector on as usual
    from ..api import siting
    from ..limits import quiet_numerics
    from ..outputs import check_outputs, write_outputs

    call = network_call_kwargs(kw)
    outputs = siting_outputs(json_path, csv_path, geojson_path, plot_path, paper, dpi, call["dem"])
    check_outputs(outputs)
    with quiet_numerics():
        report, net = siting(call.pop("sites"), redundancy=redundancy, min_margin_db=min_margin_db,
                             max_gateways=max_gateways, time_limit_s=time_limit_s, workers=workers,
                             scheduler=scheduler, progress=False if no_progress else None, return_network=True,
                             **call)
        write_outputs(outputs, {"siting": report, "network": net})


def siting_outputs(json_path, csv_path, geojson_path, plot_path, paper="a4", dpi=150, dem_paths=()):
    """The outputs of ``profiler siting``; each render gets ``{"siting": report, "network": network_report}``."""
    from ..outputs import Output, summary_output, text_of

    def of_siting(render):
        return lambda both, path: render(both["siting"], path)

    def render_geojson(both, path):
        from ..siting_report import siting_geojson_text
        return siting_geojson_text(both["siting"], both["network"])

    def render_plot(both, path):
        from ..plot import write_network_figure
        rep = both["siting"]
        write_network_figure(both["network"], path, paper=paper, dpi=dpi, dem_paths=list(dem_paths),
                             highlight=set(rep["chosen"]), marked={u["name"] for u in rep["unreachable"]})

    return [
        Output("--json", json_path, of_siting(text_of("report", "json_text")), "json"),
        Output("--csv", csv_path, of_siting(text_of("siting_report", "siting_csv_text")), "csv"),
        Output("--geojson", geojson_path, render_geojson, "json"),
        Output("--plot", plot_path, render_plot, "figure", suffixes=(".png", ".pdf", ".svg"), stdout=False),
        summary_output(lambda both, path: siting_summary_text(both["siting"]), json_path, csv_path, geojson_path),
    ]


def siting_summary_text(report: dict) -> str:
    """Short human summary: the chosen sites, the proof, greedy for comparison, the unreachable nodes."""
    from .. import CAUTION

    s = report.get("summary", {})
    proven = "proven optimal" if report.get("proven_optimal") else f"not proven optimal (gap {report.get('gap')})"
    lines = [f"Siting: {len(report['chosen'])} site(s) chosen, objective {report['objective']:g} ({proven})",
             f"  chosen        {', '.join(report['chosen']) or '-'}",
             f"  greedy        {', '.join(report['greedy']['chosen']) or '-'} "
             f"(objective {report['greedy']['objective']:g})"]
    if s:
        lines.append(f"  nodes         {s.get('nodes_heard')} of {s.get('nodes_total')} heard "
                     f"{report.get('redundancy', s.get('redundancy', 1))} time(s); {s.get('nodes_unreachable')} unreachable")
    for u in report["unreachable"]:
        lines.append(f"  unreachable   {u['name']}: {u['reason']}")
    for msg in report.get("warnings", []):
        lines.append(f"  warning       {msg}")
    lines.append(f"  {CAUTION}")
    return "\n".join(lines) + "\n"
