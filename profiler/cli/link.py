"""``profiler link``: analyse one point-to-point link."""

from __future__ import annotations

import click

from .options import (
    clearance_ratio_option,
    frequency_options,
    k_option,
    land_cover_kwargs,
    plot_options,
    radio_options,
    radio_settings,
    report_option,
    run_record,
    sheet_options,
    sheet_settings,
    site_options,
    terrain_options,
)


@click.command("link")
@site_options
@terrain_options
@k_option
@frequency_options
@clearance_ratio_option()
@radio_options
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON report ('-' for stdout).")
@click.option("--csv", "csv_path", default=None, metavar="FILE", help="Write one CSV row per profile sample.")
@click.option("--geojson", "geojson_path", default=None, metavar="FILE",
              help="Write the path, sites and worst point as GeoJSON.")
@click.option("--kml", "kml_path", default=None, metavar="FILE", help="Write the path and sites as KML.")
@plot_options
@report_option
@sheet_options
def link_command(site_a, site_b, name_a, name_b, mast_a_m, mast_b_m, dem_paths, profile_csv, step_m, fill_voids,
                 k_text, freq_mhz, band_name, clearance_ratio, json_path, csv_path, geojson_path, kml_path,
                 plot_path, paper, dpi, report_path, **radio_kw):
    """Analyse the link from site A to site B over the terrain.

    Prints a short summary (distance, azimuths, verdict, worst obstruction,
    losses, margin, recommended spreading factor) unless --json - is given.

    Examples on the bundled Vellmoor terrain (dem_samples/): a gateway on
    Cairnfell Beacon and a pump behind Harrowback Ridge; a clear path to
    Millbrook Tank drawn on a sheet; a blocked path with the node at A.

    \b
    Examples:
      profiler link --dem dem_samples --site-a -29.9125,-19.955 --site-b -29.9,-19.825
      profiler link --dem dem_samples --site-a -29.9125,-19.955 --site-b -29.85,-19.78 \\
          --name-a "Cairnfell Beacon" --name-b "Millbrook Tank" --plot link.png --json link.json
      profiler link --dem dem_samples --site-a -30.0,-19.845 --site-b -29.9125,-19.955 \\
          --gateway b --mast-b 10 --mast-a 2 --csv profile.csv
    """
    from ..terrain.digests import FileDigests

    digests = FileDigests()
    digests.start(dem_paths + radio_kw.get("land_cover_paths", ()))   # hashed while the libraries load
    from ..api import link
    from ..io.outputs import check_outputs, write_outputs
    from ..limits import quiet_numerics, require_finite

    outputs = link_outputs(json_path, csv_path, geojson_path, kml_path, plot_path, paper, dpi, list(dem_paths),
                           report_path=report_path, record=run_record())
    check_outputs(outputs)  # refuse bad outputs before any computation
    sheet_info, date = sheet_settings(radio_kw)
    cover = land_cover_kwargs(radio_kw)
    radio = radio_settings(radio_kw)
    with quiet_numerics():
        result = link(site_a, site_b, dem=list(dem_paths), profile_csv=profile_csv, mast_a_m=mast_a_m,
                      mast_b_m=mast_b_m, name_a=name_a, name_b=name_b, k_factor=k_text, frequency_mhz=freq_mhz,
                      band=band_name, step_m=step_m, clearance_ratio=clearance_ratio, fill_voids=fill_voids,
                      radio=radio, date=date, sheet_info=sheet_info, digests=digests, **cover)
        report = result.to_dict()
        require_finite(report, LINK_FINITE, "link analysis")
        write_outputs(outputs, report)


#: Numbers the summary, figure and exports need; a non-finite one is refused (limits.require_finite).
LINK_FINITE = ("distance_m", "frequency_mhz", "k_factor", "elevation_angle_a_deg", "elevation_angle_b_deg",
               "site_a.antenna_amsl_m", "site_b.antenna_amsl_m", "worst.distance_m", "worst.clearance_m",
               "worst.v", "loss_db.free_space", "loss_db.diffraction", "loss_db.total", "budget.eirp_dbm",
               "budget.rx_power_dbm", "budget.sensitivity_dbm", "budget.margin_db")


def link_outputs(json_path, csv_path, geojson_path, kml_path, plot_path, paper="a4", dpi=150, dem_paths=(), *,
                 report_path=None, record=None):
    """The outputs of ``profiler link`` for :func:`profiler.io.outputs.write_outputs`.

    The terminal summary goes to standard output unless another output does.
    ``report_path`` is the ``--report`` PDF; ``record`` the run record for
    its record page (:func:`profiler.cli.options.run_record`).
    """
    from ..io.outputs import Output, summary_output, text_of

    def render_plot(report, path):
        from ..plot import write_link_figure

        write_link_figure(report, path, paper=paper, dpi=dpi, dem_paths=list(dem_paths),
                          date_text=report["sheet"]["date"])

    def render_report(report, path):
        from ..plot.report_pdf import write_link_report
        from ..textsafe import safe_strings

        write_link_report(report, path, paper=paper, dpi=dpi, dem_paths=list(dem_paths),
                          record=safe_strings(record, "figure"))

    return [
        Output("--json", json_path, text_of("io.report", "json_text"), "json"),
        Output("--csv", csv_path, text_of("io.report", "csv_text"), "csv"),
        Output("--geojson", geojson_path, text_of("io.exports", "geojson_text"), "json"),
        Output("--kml", kml_path, text_of("io.exports", "kml_text"), "xml"),
        Output("--plot", plot_path, render_plot, "figure", suffixes=(".png", ".pdf", ".svg"), stdout=False),
        Output("--report", report_path, render_report, "figure", suffixes=(".pdf",), stdout=False),
        summary_output(text_of("io.report", "summary_text"), json_path, csv_path, geojson_path, kml_path),
    ]
