"""``profiler survey``: field measurements against the model, statistics and a calibration."""

from __future__ import annotations

import click

from .options import (
    INTEGER,
    POSITIVE,
    batch_radio_options,
    clearance_ratio_option,
    cluster_options,
    frequency_options,
    k_option,
    land_cover_kwargs,
    land_cover_option_list,
    plot_options,
    radio_settings,
    sheet_options,
    sheet_settings,
)


def survey_input_options(f):
    """Sites, measurements, elevation data and sampling of ``profiler survey``."""
    f = batch_radio_options(clearance_ratio_option()(frequency_options(k_option(f))))
    for option in reversed([
        click.option("--dem", "dem_paths", multiple=True, metavar="PATH",
                     help="Elevation file (GeoTIFF, .hgt, VRT, ...) or folder of tiles; repeatable."),
        click.option("--sites", "sites_csv", required=True, type=click.Path(dir_okay=False), metavar="SITES.csv",
                     help="Site list: name,lat_deg,lon_deg,mast_m,role; the gateways of the measurements."),
        click.option("--measurements", "measurements_csv", required=True, type=click.Path(dir_okay=False),
                     metavar="MEAS.csv", help="One row per uplink: gateway,lat_deg,lon_deg,rssi_dbm,snr_db "
                                              "[+ node_mast_m, sf, bw_khz, dr, tx_power_dbm, clutter, ...]; "
                                              "rssi_dbm and snr_db empty: a missed uplink."),
        click.option("--step-m", type=POSITIVE, default=None,
                     help="Largest sample spacing [m] (default: the finest DEM pixel along each path)."),
        click.option("--fill-voids", is_flag=True,
                     help="Interpolate across elevation voids instead of failing the measurement."),
        *land_cover_option_list(),
        click.option("--cell-m", type=POSITIVE, default=50.0, show_default=True,
                     help="Side of a location cell [m]: repeated measurements of one cell count once (median)."),
        click.option("--fit", type=click.Choice(["offset", "slope"]), default="offset", show_default=True,
                     help="Calibration: an offset, or offset + slope * log10(d / 1 km)."),
        click.option("--folds", type=INTEGER, default=5, show_default=True,
                     help="Cross-validation folds (by location cell)."),
    ]):
        f = option(f)
    return f


@click.command("survey")
@survey_input_options
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON report ('-' for stdout).")
@click.option("--csv", "csv_path", default=None, metavar="FILE", help="Write one CSV row per measurement.")
@click.option("--geojson", "geojson_path", default=None, metavar="FILE",
              help="Write the measurements and gateways as GeoJSON.")
@click.option("--calibration-out", "calibration_path", default=None, metavar="FILE.toml",
              help="Write the fitted calibration (offset_db, slope_db_per_decade, location_sigma_db, "
                   "[clutter.NAME] tables).")
@plot_options
@sheet_options
@cluster_options
def survey_command(json_path, csv_path, geojson_path, calibration_path, plot_path, paper, dpi, workers, scheduler,
                   no_progress, **kw):
    """Compare field measurements with the model: where and by how much it errs, and a calibration.

    Every measured uplink is predicted with the engine of 'profiler network'
    (the gateway end A, the node end B at the measured position): the -a
    options apply to the gateways, the -b options and the file's
    tx_power_dbm column to the node. The measured path loss is the node's
    EIRP minus the received power (RSSI, or RSSI + SNR when the SNR is
    negative) plus the gateway's antenna gain minus its feeder loss. A row
    outside the elevation data carries its error; the run goes on.

    \b
    Examples:
      profiler survey --dem dem_samples --sites examples/sites.csv \\
        --measurements examples/vellmoor_survey.csv --plot survey.png --calibration-out cal.toml
    """
    from . import collect_garbage

    collect_garbage()
    from ..api import survey
    from ..errors import ProfilerError
    from ..io.outputs import check_outputs, write_outputs
    from ..limits import quiet_numerics

    sheet_info, date = sheet_settings(kw)
    if not kw["dem_paths"]:
        raise ProfilerError("no elevation data: give --dem FILE_OR_FOLDER")
    outputs = survey_outputs(json_path, csv_path, geojson_path, calibration_path, plot_path, paper, dpi,
                             list(kw["dem_paths"]), sheet={**sheet_info.to_dict(), "date": date.isoformat()})
    check_outputs(outputs)
    radio = radio_settings(kw)
    cover = land_cover_kwargs(kw)
    with quiet_numerics():
        result = survey(kw["sites_csv"], kw["measurements_csv"], dem=list(kw["dem_paths"]), band=kw["band_name"],
                        frequency_mhz=kw["freq_mhz"], k_factor=kw["k_text"], clearance_ratio=kw["clearance_ratio"],
                        step_m=kw["step_m"], fill_voids=kw["fill_voids"], radio=radio, cell_m=kw["cell_m"],
                        fit=kw["fit"], folds=kw["folds"], workers=workers, scheduler=scheduler,
                        progress=False if no_progress else None, **cover)
        write_outputs(outputs, result.to_dict())


def survey_outputs(json_path, csv_path, geojson_path, calibration_path, plot_path, paper="a4", dpi=150,
                   dem_paths=(), *, sheet=None):
    """The outputs of ``profiler survey`` for :func:`profiler.io.outputs.write_outputs` (summary on stdout
    unless another output goes there); ``sheet`` holds the title-block fields and date of the sheet."""
    from ..io.outputs import Output, summary_output, text_of

    def render_plot(report, path):
        from ..plot.survey import write_survey_figure
        from ..textsafe import safe_strings

        write_survey_figure(report, path, paper=paper, dpi=dpi, dem_paths=list(dem_paths),
                            sheet=safe_strings(sheet, "figure") if sheet else None)

    return [
        Output("--json", json_path, text_of("io.report", "json_text"), "json"),
        Output("--csv", csv_path, text_of("io.survey_exports", "survey_csv_text"), "csv"),
        Output("--geojson", geojson_path, text_of("io.survey_exports", "survey_geojson_text"), "json"),
        Output("--calibration-out", calibration_path, text_of("io.survey_exports", "calibration_toml_text"),
               "raw", suffixes=(".toml",)),
        Output("--plot", plot_path, render_plot, "figure", suffixes=(".png", ".pdf", ".svg"), stdout=False),
        summary_output(text_of("io.survey_exports", "survey_summary_text"), json_path, csv_path, geojson_path,
                       calibration_path),
    ]
