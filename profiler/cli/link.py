"""``profiler link``: analyse one point-to-point link."""

from __future__ import annotations

import click

from .options import (clearance_ratio_option, frequency_options, k_option, plot_options, radio_options, radio_settings,
                      site_options, terrain_options)


@click.command("link")
@site_options
@terrain_options
@k_option
@frequency_options
@clearance_ratio_option()
@radio_options
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON report ('-' for stdout).")
@click.option("--csv", "csv_path", default=None, metavar="FILE", help="Write one CSV row per profile sample.")
@click.option("--geojson", "geojson_path", default=None, metavar="FILE", help="Write the path, sites and worst point as GeoJSON.")
@click.option("--kml", "kml_path", default=None, metavar="FILE", help="Write the path and sites as KML.")
@plot_options
def link_command(site_a, site_b, name_a, name_b, mast_a_m, mast_b_m, dem_paths, profile_csv, step_m, fill_voids,
                 k_text, freq_mhz, band_name, clearance_ratio, json_path, csv_path, geojson_path, kml_path,
                 plot_path, paper, dpi, **radio_kw):
    """Analyse the link from site A to site B over the terrain.

    Prints a short summary (distance, azimuths, verdict, worst obstruction,
    losses, margin, recommended spreading factor) unless --json - is given.

    \b
    Example:
      profiler link --dem dem_samples --site-a 46.0,7.0 --site-b 46.1,7.1
    """
    from ..api import link
    from ..outputs import check_output_path
    from ..report import summary_text, write_csv, write_json

    for path, option, suffixes in ((json_path, "--json", None), (csv_path, "--csv", None),
                                   (geojson_path, "--geojson", None), (kml_path, "--kml", None),
                                   (plot_path, "--plot", (".png", ".pdf", ".svg"))):
        check_output_path(path, suffixes, option)
    radio = radio_settings(radio_kw)
    result = link(site_a, site_b, dem=list(dem_paths), profile_csv=profile_csv, mast_a_m=mast_a_m,
                  mast_b_m=mast_b_m, name_a=name_a, name_b=name_b, k_factor=k_text, frequency_mhz=freq_mhz,
                  band=band_name, step_m=step_m, clearance_ratio=clearance_ratio, fill_voids=fill_voids,
                  radio=radio)
    report = result.to_dict()
    if json_path:
        write_json(report, json_path)
    if csv_path:
        write_csv(report, csv_path)
    if geojson_path or kml_path:
        from ..exports import write_geojson, write_kml

        if geojson_path:
            write_geojson(report, geojson_path)
        if kml_path:
            write_kml(report, kml_path)
    if plot_path:
        from ..plot import write_link_figure

        write_link_figure(report, plot_path, paper=paper, dpi=dpi, dem_paths=list(dem_paths))
    if json_path != "-":
        click.echo(summary_text(report), nl=False)
