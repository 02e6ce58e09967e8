"""``profiler mast``: the lowest mast that meets the clearance and margin criteria."""

from __future__ import annotations

import click

from ..errors import ProfilerError
from .options import (
    NUMBER,
    POSITIVE,
    KFactor,
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


class InfeasibleMast(ProfilerError):
    """No height up to the maximum meets the criteria (exit status 3)."""

    exit_code = 3


@click.command("mast")
@site_options
@terrain_options
@k_option
@frequency_options
@clearance_ratio_option("Required clearance as a fraction of the first Fresnel radius at --k.")
@click.option("--low-k", "low_k_text", type=KFactor(), default="2/3", show_default=True,
              help="Low effective-Earth-radius factor for the second clearance criterion.")
@click.option("--low-k-clearance", "low_k_clearance", type=NUMBER, default=0.0,
              show_default=True, help="Required clearance as a fraction of F1 at --low-k.")
@click.option("--no-low-k", is_flag=True, help="Drop the low-k clearance criterion.")
@click.option("--no-clearance", is_flag=True,
              help="Drop both clearance criteria (diffraction accepted); needs --min-margin-db.")
@click.option("--min-margin-db", type=NUMBER, default=None,
              help="Least link margin [dB] at --sf (or the recommended SF) with the --diffraction method.")
@click.option("--solve", type=click.Choice(["a", "b", "both"]), default="b", show_default=True,
              help="End to raise: a, b, or both by the same added height (also reports the cheapest split).")
@click.option("--max-mast-m", type=POSITIVE, default=60.0, show_default=True, help="Highest allowed mast [m].")
@click.option("--mast-step-m", type=POSITIVE, default=1.0, show_default=True,
              help="Height step of the table and of the margin scan [m].")
@radio_options
@click.option("--json", "json_path", default=None, metavar="FILE", help="Write the JSON report ('-' for stdout).")
@plot_options
@report_option
@sheet_options
def mast_command(site_a, site_b, name_a, name_b, mast_a_m, mast_b_m, dem_paths, profile_csv, step_m, fill_voids,
                 k_text, freq_mhz, band_name, clearance_ratio, low_k_text, low_k_clearance, no_low_k,
                 no_clearance, min_margin_db, solve, max_mast_m, mast_step_m, json_path, plot_path, paper, dpi,
                 report_path, **radio_kw):
    """Find the lowest mast that meets every given criterion.

    Criteria (all that are given must hold): clearance >= --clearance-ratio
    F1 at --k, clearance >= --low-k-clearance F1 at --low-k, and, when
    given, margin >= --min-margin-db.  --mast-a / --mast-b are the fixed
    height of the end not solved and the first row of the table.  Exits
    with status 3 when no height up to --max-mast-m works (the report is
    still written).

    \b
    Examples (on the bundled terrain; the second exits with status 3):
      profiler mast --dem dem_samples --site-a -29.9125,-19.955 --site-b -29.9,-19.825 --solve a
      profiler mast --dem dem_samples --site-a -29.9125,-19.955 --site-b -30.0,-19.845 --max-mast-m 15
      profiler mast --dem dem_samples --site-a -29.9125,-19.955 --site-b -29.9,-19.825 --solve both
    """
    from ..api import mast
    from ..io.outputs import check_outputs, write_outputs
    from ..limits import quiet_numerics, require_finite

    outputs = mast_outputs(json_path, plot_path, paper, dpi, report_path=report_path, record=run_record())
    check_outputs(outputs)  # refuse bad outputs before any computation
    sheet_info, date = sheet_settings(radio_kw)
    cover = land_cover_kwargs(radio_kw)
    radio = radio_settings(radio_kw)
    if no_clearance and min_margin_db is None:
        raise ProfilerError("--no-clearance leaves no criterion: give --min-margin-db too")
    with quiet_numerics():
        result = mast(site_a, site_b, dem=list(dem_paths), profile_csv=profile_csv, mast_a_m=mast_a_m,
                      mast_b_m=mast_b_m, name_a=name_a, name_b=name_b, k_factor=k_text, frequency_mhz=freq_mhz,
                      band=band_name, step_m=step_m, fill_voids=fill_voids,
                      clearance_ratio=None if no_clearance else clearance_ratio, low_k_factor=low_k_text,
                      low_k_clearance_ratio=None if (no_clearance or no_low_k) else low_k_clearance,
                      min_margin_db=min_margin_db, solve=solve, max_mast_m=max_mast_m, mast_step_m=mast_step_m,
                      radio=radio, date=date, sheet_info=sheet_info, **cover)
        report = result.to_dict()
        require_finite(report, MAST_FINITE + (MAST_FEASIBLE_FINITE if report["feasible"] else ()), "mast search")
        write_outputs(outputs, report)  # an infeasible search still writes its report, then exits 3
    if not report["feasible"]:
        raise InfeasibleMast(report["message"])


#: Numbers the summary and figure need (limits.require_finite); the second set only when feasible.
MAST_FINITE = ("distance_m", "frequency_mhz")
MAST_FEASIBLE_FINITE = ("required_mast_a_m", "required_mast_b_m", "at_required.worst_ratio",
                        "at_required.diffraction_db", "at_required.margin_db")


def mast_outputs(json_path, plot_path, paper="a4", dpi=200, *, report_path=None, record=None):
    """The outputs of ``profiler mast`` for :func:`profiler.io.outputs.write_outputs` (``--report``: the PDF)."""
    from ..io.outputs import Output, summary_output, text_of

    def render_plot(report, path):
        from ..plot import write_mast_figure

        write_mast_figure(report, path, paper=paper, dpi=dpi)

    def render_report(report, path):
        from ..plot.report_pdf import write_mast_report
        from ..textsafe import safe_strings

        write_mast_report(report, path, paper=paper, dpi=dpi, record=safe_strings(record, "figure"))

    return [
        Output("--json", json_path, text_of("io.report", "json_text"), "json"),
        Output("--plot", plot_path, render_plot, "figure", suffixes=(".png", ".pdf", ".svg"), stdout=False),
        Output("--report", report_path, render_report, "figure", suffixes=(".pdf",), stdout=False),
        summary_output(lambda report, path: mast_summary_text(report), json_path),
    ]


def _criterion_text(c) -> str:
    if c["criterion"] == "margin":
        sf = f"SF{c['sf']}" if c["sf"] is not None else "recommended data rate"
        return f"margin >= {c['min_margin_db']:g} dB ({sf}, {c['diffraction_method']})"
    return f"clearance >= {c['clearance_ratio']:g} F1 at k = {c['k_factor']:.4g}"


def mast_summary_text(report: dict) -> str:
    """Short human summary of the mast report: heights, why, and what each extra metre buys."""
    from ..about import CAUTION
    from ..products.mast.result import fixed
    from ..products.mast.result import up_text as _up

    a, b = report["site_a"], report["site_b"]
    solve = report["solve"]
    lines = [f"Mast {a['name']} -> {b['name']} (raise {'both ends' if solve == 'both' else solve.upper()})"]
    band = f" ({report['band']})" if report.get("band") else ""
    lines.append(f"  distance      {report['distance_m'] / 1000:.3f} km, {report['frequency_mhz']:.4f} MHz{band}")
    lines.append(f"  criteria      {'; '.join(_criterion_text(c) for c in report['criteria'])}")
    bind = report["binding"]
    if report["feasible"]:
        def end(key, letter):
            given = solve not in (letter, "both")
            return f"{letter.upper()} {_up(report[key])} m{' (given)' if given else ''}"

        lines.append(f"  required      {end('required_mast_a_m', 'a')}, {end('required_mast_b_m', 'b')}"
                     + (f" ({'+' if report['added_height_m'] >= 0 else ''}{_up(report['added_height_m'])} m "
                        "at both ends)" if solve == "both" else ""))
        if bind["criterion"] == "none":
            lines.append("  binding       none: every criterion holds with the lowest allowed mast")
        else:
            lines.append(f"  binding       {bind['criterion']}, obstruction {bind['distance_m'] / 1000:.3f} km from A "
                         f"(terrain {bind['terrain_m']:.1f} m)")
        at = report["at_required"]
        low = f", {at['worst_ratio_low_k']:.2f} F1 at low k" if at["worst_ratio_low_k"] is not None else ""
        lines.append(f"  at that mast  worst clearance {at['worst_ratio']:.2f} F1{low}, diffraction "
                     f"{at['diffraction_db']:.1f} dB, margin {at['margin_db']:.1f} dB{_rate(at)}")
        pm = report["per_extra_metre"]
        if pm is not None:
            what = "height added at both ends" if solve == "both" else f"mast {solve.upper()}"
            lines.append(f"  each metre    {fixed(pm['margin_db_per_m'], '+.2f')} dB margin, "
                         f"{fixed(pm['worst_ratio_per_m'], '+.3f')} F1 clearance, "
                         f"{fixed(pm['diffraction_db_per_m'], '+.2f')} dB diffraction "
                         f"({what} {pm['from_m']:.3f} -> {pm['to_m']:.3f} m)")
    else:
        lines.append(f"  result        INFEASIBLE: {report['message']}")
    split = report.get("cheapest_split")
    if split is not None:
        a_txt, b_txt = _up(split['mast_a_m']), _up(split['mast_b_m'])
        lines.append(f"  cheapest      A {a_txt} m + B {b_txt} m = {float(a_txt) + float(b_txt):.2f} m in total")
    table = report["table"]
    if table:
        every = next(e for e in (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 10**9) if len(table) <= 12 * e)
        shown = table[::every] + ([table[-1]] if (len(table) - 1) % every else [])
        lines.append("  table         mast A [m]  mast B [m]  worst F1  low-k F1  diffr [dB]  margin [dB]  data rate"
                     + (f"  (one row in {every}; every row in --json and --report)" if every > 1 else ""))
        previous = None
        for row in shown:
            rate = _rate(row).strip(" ()") or "-"
            change = ""
            if previous is not None and row["margin_db"] < previous["margin_db"] - 1e-6 and \
                    _rate(row) != _rate(previous):
                change = "  <- lower margin: faster data rate recommended"
            lines.append(f"                {_up(row['mast_a_m']):>10}  {_up(row['mast_b_m']):>10}"
                         f"  {_f(row['worst_ratio'])}  {_f(row['worst_ratio_low_k'])}"
                         f"  {row['diffraction_db']:10.1f}  {row['margin_db']:11.1f}  {rate}{change}")
            previous = row
    for msg in report["notes"] + report["warnings"]:
        lines.append(f"  note          {msg}")
    lines.append(f"  {CAUTION}")
    return "\n".join(lines) + "\n"


def _rate(row) -> str:
    """`` (DR5, SF7/125 kHz)`` for a table row, empty without a LoRa rate (a given sensitivity)."""
    if row.get("sf") is None:
        return ""
    rate = f"SF{row['sf']}/{row['bw_khz']:g} kHz"
    return f" ({rate})" if row.get("dr") is None else f" (DR{row['dr']}, {rate})"


def _f(x) -> str:
    return f"{x:8.2f}" if x is not None else "       -"
