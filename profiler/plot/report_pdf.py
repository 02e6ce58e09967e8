"""``--report FILE.pdf``: the multi-page report of a link or mast run.

Page 1 is the sheet itself; then the budget (both directions with each end
named, every data rate of the plan, the RX2 window, compliance in words)
or, for a mast run, every row of the height table; then the record: the
full command line, every option as typed on the command line with its
value (the band and frequency as used), the elevation files with their full
sha256, and the versions of the tool and its libraries, so that the run can
be reproduced.  Tables that do not fit continue on further pages
("continued", "page n of m"; :mod:`profiler.plot.report_layout`).

Text is shown as given (:func:`profiler.textsafe.figure_text`: one line,
no spreadsheet guard: that belongs to CSV only).
:func:`build_link_report_pages` and :func:`build_mast_report_pages` return
the pages as figures (for the layout audit); the writers save them with
matplotlib's ``PdfPages`` to the temporary file that
:func:`profiler.io.outputs.write_outputs` renames into place.
"""

from __future__ import annotations

import platform
import shlex

from ..about import CAUTION, __version__
from ..errors import ProfilerError
from ..io.report import model_line
from ..textsafe import figure_text
from .report_layout import Measure, Table, draw_placed, paginate
from .sheet import BADGE_GOOD, DASH, EN, check_dpi, inch_axes, k_text, metadata, new_sheet, num, paper_size_in, style
from .titleblock import datum_line, draw_notes, draw_title_box, title_block_rows

__all__ = ["write_link_report", "write_mast_report", "build_link_report_pages", "build_mast_report_pages",
           "library_versions"]

LIBRARIES = ("numpy", "scipy", "pyproj", "rasterio", "matplotlib", "pygeomag", "click")
MARGIN_IN, HEADER_IN, HEADER_GAP_IN = 0.38, 0.66, 0.19      # page margin, header band, gap under it [in]
BLOCK_W_IN, BLOCK_H_IN, FOOT_GAP_IN = 3.05, 1.5, 0.2        # title block (taller for long names), gap above [in]
#: Options whose value, when left to its default, is shown as the run used it: option -> (report key, format).
AS_USED = {"--band": (("band",), "s"), "--freq-mhz": (("frequency_mhz",), ".4f"), "--date": (("sheet", "date"), "s")}


def library_versions() -> list[tuple[str, str]]:
    """``(name, version)`` of Python and the libraries the results depend on (installed metadata)."""
    from importlib import metadata as md

    out = [("python", platform.python_version()), ("profiler", __version__)]
    for name in LIBRARIES:
        try:
            out.append((name, md.version(name)))
        except md.PackageNotFoundError:
            out.append((name, "not installed"))
    return out


def _name(report) -> str:
    return f"{figure_text(report['site_a'].get('name'))} {EN} {figure_text(report['site_b'].get('name'))}"


def build_link_report_pages(report: dict, paper: str = "a4", dpi: float = 100.0, dem_paths=None,
                            record: dict | None = None) -> list:
    """The link report's pages as figures: the sheet, the budget page(s), the record page(s)."""
    from .link import build_link_figure

    sections = [("Link budget", _link_budget_groups(report)), ("Record", _record_groups(report, record))]
    return _pages(report, paper, dpi, sections, lambda count: build_link_figure(
        report, paper=paper, dem_paths=dem_paths, sheet_no=1, sheet_count=count, dpi=dpi))


def build_mast_report_pages(report: dict, paper: str = "a4", dpi: float = 100.0, record: dict | None = None) -> list:
    """The mast report's pages as figures: the sheet, every row of the height table, the record."""
    from .mast import build_mast_figure

    sections = [("Mast table", _mast_groups(report)), ("Record", _record_groups(report, record))]
    return _pages(report, paper, dpi, sections,
                  lambda count: build_mast_figure(report, paper, sheet_no=1, sheet_count=count))


def write_link_report(report: dict, path, paper: str = "a4", dpi: float = 200, dem_paths=None,
                      record: dict | None = None) -> None:
    """The link report (PDF): :func:`build_link_report_pages` saved page by page."""
    _write(path, paper, dpi, lambda d: build_link_report_pages(report, paper, d, dem_paths, record),
           f"Radio path report: {_name(report)}", report)


def write_mast_report(report: dict, path, paper: str = "a4", dpi: float = 200, record: dict | None = None) -> None:
    """The mast report (PDF): :func:`build_mast_report_pages` saved page by page."""
    _write(path, paper, dpi, lambda d: build_mast_report_pages(report, paper, d, record),
           f"Mast report: {_name(report)}", report)


def _write(path, paper, dpi, build, title, report) -> None:
    from matplotlib.backends.backend_pdf import PdfPages

    paper_size_in(paper)
    dpi = check_dpi(dpi)
    if str(path).lower().endswith(".pdf") is False:
        raise ProfilerError(f"--report {path}: the report is a PDF; give a file name ending in .pdf")
    with style():
        try:
            with PdfPages(path, metadata=metadata(title, report, "pdf")) as pdf:
                for fig in build(dpi):
                    pdf.savefig(fig, dpi=dpi)
        except OSError as exc:
            raise ProfilerError(f"cannot write {path}: {exc.strerror or exc}") from exc


def _pages(report, paper, dpi, sections, first_page) -> list:
    """Paginate every section (each starts a page), then draw the sheet and the pages numbered n of m."""
    with style():
        probe, renderer, width_in, height_in = new_sheet(paper, dpi)
        # the title block as tall as long names need (it wraps them and shrinks to 5 pt, see draw_title_box)
        block_h = max(BLOCK_H_IN, draw_title_box(inch_axes(probe, (0.0, 0.0, BLOCK_W_IN, BLOCK_H_IN), width_in,
                                                           height_in), renderer, _title_rows(report, 99, 99)))
        foot = block_h + FOOT_GAP_IN
        body_w, body_h = width_in - 2 * MARGIN_IN, height_in - 2 * MARGIN_IN - HEADER_IN - HEADER_GAP_IN - foot
        measure = Measure(renderer)
        laid = [(heading, i, placed) for heading, groups in sections
                for i, placed in enumerate(paginate(groups, measure, body_w, body_h))]
        count = 1 + len(laid)
        figs = [first_page(count)]
        for page_no, (heading, i, placed) in enumerate(laid, start=2):
            figs.append(_table_page(report, (paper, dpi, measure), heading + (" (continued)" if i else ""),
                                    placed, (page_no, count), block_h))
    return figs


def _title_rows(report, page_no, count):
    return title_block_rows(report.get("sheet"), _name(report), report, page_no, count)


def _table_page(report, sheet, heading, placed, page, block_h):
    """A framed page: header, the placed tables, title block (``block_h`` tall) and caution at the bottom.

    ``sheet`` is (paper, dpi, :class:`~profiler.plot.report_layout.Measure`); ``page`` is (n, m).
    """
    from .sheet import draw_title_block

    paper, dpi, measure = sheet
    fig, renderer, width_in, height_in = new_sheet(paper, dpi)
    head = inch_axes(fig, (MARGIN_IN, height_in - MARGIN_IN - HEADER_IN, width_in - 2 * MARGIN_IN, HEADER_IN),
                     width_in, height_in)
    # the link's name in the heading when it fits; it is always in the title block below
    draw_title_block(head, renderer, f"{heading}: {_name(report)}", "Planning aid report",
                     f"page {page[0]} of {page[1]}", BADGE_GOOD, badge_label="PAGE",
                     fit_title=lambda artist, room: artist.set_text(heading), note=figure_text(model_line(report)))
    top, bottom = height_in - MARGIN_IN - HEADER_IN - HEADER_GAP_IN, MARGIN_IN + block_h + FOOT_GAP_IN
    draw_placed(inch_axes(fig, (MARGIN_IN, bottom, width_in - 2 * MARGIN_IN, top - bottom), width_in, height_in),
                measure, placed)
    draw_title_box(inch_axes(fig, (width_in - MARGIN_IN - BLOCK_W_IN, MARGIN_IN, BLOCK_W_IN, block_h), width_in,
                             height_in), renderer, _title_rows(report, *page))
    draw_notes(inch_axes(fig, (MARGIN_IN, MARGIN_IN, width_in - 2 * MARGIN_IN - BLOCK_W_IN - 0.2, 0.6), width_in,
                         height_in), renderer, [f"Datums: {figure_text(datum_line(report))}", CAUTION])
    return fig


# --------------------------------------------------------------------------- link budget page
def _yes(value) -> str:
    return DASH if value is None else ("yes" if value else "NO")


def _rate(row) -> str:
    """``DR0 SF12/125 kHz`` (``SF12/125 kHz`` without a DR number; a dash without LoRa settings)."""
    if row.get("sf") is None:
        return DASH
    rate = f"SF{row['sf']}/{row['bw_khz']:g} kHz"
    return rate if row.get("dr") is None else f"DR{row['dr']} {rate}"


def _end(report, key) -> str:
    """``Gateway Cairnfell Beacon``: an end's role and name."""
    role = ((report.get("radio_ends") or {}).get(key) or {}).get("role") or ("site " + key.upper())
    return f"{figure_text(role).capitalize()} {figure_text(report[f'site_{key}'].get('name'))}"


def _source(bud) -> str:
    if bud.get("sensitivity_source") == "given":
        return "given (--sensitivity-dbm)"
    if bud.get("sensitivity_source") == "lora":
        return f"LoRa {_rate(bud)}, noise figure {num(bud.get('noise_figure_db'), '.1f', ' dB')}"
    return figure_text(bud.get("sensitivity_source") or DASH)


def _budget_table(report) -> Table:
    up, down = report["budget"], report.get("budget_downlink") or report["budget"]
    rows = [("Transmitter", _end(report, up["transmitter"]), _end(report, down["transmitter"])),
            ("Receiver", _end(report, up["receiver"]), _end(report, down["receiver"]))]
    for key, label, fmt, unit in (("frequency_mhz", "Frequency", ".4f", " MHz"),
                                  ("tx_power_dbm", "Tx power", ".2f", " dBm"),
                                  ("eirp_dbm", "EIRP", ".2f", " dBm"), ("path_loss_db", "Path loss", ".2f", " dB"),
                                  ("rx_power_dbm", "Rx power", ".2f", " dBm"),
                                  ("noise_figure_db", "Noise figure", ".1f", " dB"),
                                  ("sensitivity_dbm", "Sensitivity", ".2f", " dBm"),
                                  ("margin_db", "Margin", "+.2f", " dB"),
                                  ("fade_margin_required_db", "Fade margin required", ".1f", " dB")):
        rows.append((label, num(up.get(key), fmt, unit), num(down.get(key), fmt, unit)))
    rows += [("Sensitivity source", _source(up), _source(down)),
             ("Closes", _yes(up.get("closes")), _yes(down.get("closes"))),
             ("Data rate", _rate(up), _rate(down))]
    return Table("Budget", ("", "Uplink (node \u2192 gateway)", "Downlink (gateway \u2192 node)"), tuple(rows))


LOSS_LABELS = {"model": "Model", "free_space": "Free space", "diffraction": "Diffraction (used)",
               "combination": "Combination (P.1812-8 line of sight, ducting and troposcatter beyond free space "
                              "and diffraction)",
               "location": "Location term", "basic_transmission": "Basic transmission loss", "extra": "Extra",
               "polarization": "Polarization", "total": "Total", "diffraction_method": "Diffraction method",
               "knife_edge": "Single knife edge", "bullington": "Bullington", "delta_bullington": "Delta-Bullington",
               "spherical_earth": "Spherical Earth", "smooth_surface_height_a": "Smooth-Earth height of A",
               "smooth_surface_height_b": "Smooth-Earth height of B",
               "clutter_a": "Clutter at A (P.2108-1)", "clutter_b": "Clutter at B (P.2108-1)",
               "building_entry_a": "Building entry at A (P.2109-1)",
               "building_entry_b": "Building entry at B (P.2109-1)",
               "extra_a": "Extra loss at A", "extra_b": "Extra loss at B",
               "calibration": "Calibration (profiler survey)"}


#: ``loss_db`` keys the terrain model's table leaves out: always 0 or equal to free space + diffraction there.
P1812_ONLY = ("combination", "location", "basic_transmission")


def _loss_table(report) -> Table:
    """The ``loss_db`` block: each term with its unit (``_m`` keys are heights in metres), the model as
    :func:`profiler.io.report.model_line` says it; with P.1812-8 the diffraction at the time percentage and
    the location term at the location percentage; with the terrain model without the P.1812-8 parts."""
    loss = report.get("loss_db") or {}
    p1812 = loss.get("model") == "p1812"
    prop = report.get("propagation") or {}
    labels = dict(LOSS_LABELS)
    if p1812:
        labels["free_space"] = "Free space (eq. 8)"
        labels["diffraction"] = f"Diffraction ({prop.get('time_percent', 50.0):g} % time)"
        labels["location"] = f"Location term ({prop.get('location_percent', 50.0):g} % locations)"
    rows = []
    for key, value in loss.items():
        if (not p1812 and key in P1812_ONLY) or (key == "calibration" and not report.get("calibration")):
            continue
        base, unit = (key[:-2], " m") if key.endswith("_m") else (key, " dB")
        value = (model_line(report) or value) if key == "model" else value
        rows.append((labels.get(base, base.replace("_", " ").capitalize()),
                     figure_text(value) if isinstance(value, str) else num(_no_negative_zero(value), ".2f", unit)))
    return Table("Path loss", None, tuple(rows))


def _no_negative_zero(value):
    """``value`` rounded to 0.01 with −0.00 made 0.00 (a term that rounds to zero); None stays None."""
    return value if value is None or isinstance(value, bool) else round(float(value), 2) + 0.0


def _duty(duty, freq) -> str:
    if duty is None:
        return "no duty-cycle limit in the plan"
    return f"Duty cycle {100 * duty:g} % (sub-band of {num(freq, '.4f')} MHz)"


def _compliance_table(report) -> Table:
    """Compliance in words: EIRP of each end against the limit, dwell time, duty cycle, notes."""
    comp, lora = report.get("compliance") or {}, report.get("lora") or {}
    rows = []
    for key, end in sorted((report.get("radio_ends") or {}).items()):
        limit, eirp = end.get("max_eirp_dbm"), end.get("eirp_dbm")
        verdict = ("no regional plan, not checked" if limit is None else
                   f"limit {num(limit, 'g')} dBm: {'met' if eirp <= limit + 1e-9 else 'EXCEEDED'}")
        rows.append((f"{figure_text(end.get('role') or 'site').capitalize()} ({key.upper()})",
                     f"EIRP {num(eirp, '.1f')} dBm, {verdict}"))
    if comp.get("eirp_ok") is not None:
        rows.append(("Power limits", "all met" if comp["eirp_ok"] else "NOT met (see the notes)"))
    up, down = lora.get("uplink") or {}, lora.get("downlink") or {}
    if comp.get("max_eirp_dbm") is not None:
        dwell = comp.get("dwell_time_limit_ms")
        rows.append(("Dwell time", "no limit in the plan" if dwell is None else
                     f"at most {num(dwell, 'g')} ms per uplink transmission"))
        rec = next((r for r in up.get("per_dr") or [] if r["dr"] == up.get("recommended_dr")), None)
        per_hour = (f": at most {rec['max_uplinks_per_hour']} uplinks per hour at DR{rec['dr']}"
                    if rec and rec.get("max_uplinks_per_hour") is not None else "")
        rows.append(("Uplink", _duty(comp.get("duty_cycle"), up.get("frequency_mhz")) + per_hour))
        rows.append(("Downlink", _duty(comp.get("duty_cycle_downlink"), down.get("frequency_mhz"))
                     + (" applies to the gateway's transmissions" if comp.get("duty_cycle_downlink") is not None
                        else "")))
    rows += [("Note", figure_text(n)) for n in comp.get("notes") or []
             if not str(n).startswith(("duty cycle ", "uplink dwell time"))]
    return Table(f"Compliance ({figure_text(report.get('band'))})" if report.get("band") else "Compliance",
                 None, tuple(rows))


DR_COLUMNS = ("Data rate", "Sensitivity [dBm]", "Margin [dB]", "Closes", "Time on air [ms]", "Max. messages per hour",
              "Allowed")


def _rate_tables(report) -> list[Table]:
    """Every data rate of the plan per direction, and the RX2 window (per spreading factor without a plan)."""
    lora = report.get("lora") or {}
    tables = []
    for direction, title in (("uplink", "Uplink data rates (node \u2192 gateway"),
                             ("downlink", "Downlink RX1 data rates (gateway \u2192 node")):
        block = lora.get(direction)
        if not block:
            continue
        rec = block.get("recommended_dr")
        rows = tuple((_rate(r) + (" (recommended)" if r["dr"] == rec else ""), num(r.get("sensitivity_dbm"), ".1f"),
                      num(r.get("margin_db"), "+.1f"), _yes(r.get("closes")), num(r.get("time_on_air_ms"), ".1f"),
                      DASH if r.get("max_uplinks_per_hour") is None else str(r["max_uplinks_per_hour"]),
                      "yes" if r.get("allowed") else f"no: {figure_text(r.get('reason') or '')}")
                     for r in block.get("per_dr") or [])
        tables.append(Table(f"{title}, {num(block.get('frequency_mhz'), '.4f')} MHz)", DR_COLUMNS, rows))
    groups = [tables] if tables else []
    rx2 = (lora.get("downlink") or {}).get("rx2")
    if rx2:
        groups.append([Table("Downlink RX2 window (gateway \u2192 node)",
                             ("Frequency [MHz]", "Data rate", "Sensitivity [dBm]", "Margin [dB]", "Closes"),
                             ((num(rx2.get("frequency_mhz"), ".4f"), _rate(rx2), num(rx2.get("sensitivity_dbm"), ".1f"),
                               num(rx2.get("margin_db"), "+.1f"), _yes(rx2.get("closes"))),))])
    if not tables and lora.get("per_sf"):
        rows = tuple((f"SF{r['sf']}/{lora.get('bw_khz', 0):g} kHz", num(r.get("sensitivity_dbm"), ".1f"),
                      num(r.get("margin_db"), "+.1f"), _yes(r.get("closes")), num(r.get("time_on_air_ms"), ".1f"),
                      DASH if r.get("uplinks_per_hour_1pct") is None else str(r["uplinks_per_hour_1pct"]))
                     for r in lora["per_sf"])
        groups.append([Table("Uplink spreading factors (no regional plan)", DR_COLUMNS[:5] + ("Per hour at 1 %",),
                             rows)])
    return groups


def _link_budget_groups(report):
    return [[_budget_table(report), _loss_table(report), _compliance_table(report)], *_rate_tables(report)]


# --------------------------------------------------------------------------- mast table page
def _mast_groups(report):
    """Every row of the JSON height table, two parts side by side, continued on further pages."""
    crit = {c["criterion"]: c for c in report.get("criteria") or []}
    k_hi, k_lo = ((crit.get(n) or {}).get("k_factor") for n in ("clearance", "clearance_low_k"))
    rows = tuple((num(r["mast_a_m"], ".2f"), num(r["mast_b_m"], ".2f"), num(r["worst_ratio"], ".3f"),
                  num(r["worst_ratio_low_k"], ".3f"), num(r["diffraction_db"], ".2f"), num(r["margin_db"], "+.2f"),
                  _rate(r)) for r in report["table"])
    head = ("Mast A [m]", "Mast B [m]", f"Clearance / F1 (k {k_text(k_hi)})",
            f"Clearance / F1 (k {k_text(k_lo)})", "Diffraction [dB]", "Margin [dB]", "Data rate")
    return [[Table(f"Mast heights searched: all {len(rows)} rows", head, rows, flow=2)]]


# --------------------------------------------------------------------------- record page
def _chunks(text: str, n: int) -> str:
    """``text`` in pieces of ``n`` characters joined by spaces (a digest wraps between them)."""
    return " ".join(text[i:i + n] for i in range(0, len(text), n))


def _option_rows(report, record):
    """(option as typed, value, set by) of every option; ``--band`` and ``--freq-mhz`` as the run used them."""
    rows = []
    for opt in record.get("options") or []:
        value = figure_text(opt.get("value"))
        if not value and opt.get("option") in AS_USED:
            keys, fmt = AS_USED[opt["option"]]
            used = report
            for key in keys:
                used = (used or {}).get(key)
            value = "" if used is None else (figure_text(used) if fmt == "s" else num(used, fmt)) + " (as used)"
        rows.append((figure_text(opt.get("option")), value or DASH, "given" if opt.get("given") else "default"))
    return tuple(rows)


def _version_rows():
    """Python and profiler on a row each, the libraries on one (wrapped) row."""
    versions = library_versions()
    return ((versions[0][0].capitalize(), versions[0][1]), versions[1],
            ("Libraries", ", ".join(f"{n} {figure_text(v)}" for n, v in versions[2:])))


def _record_groups(report, record):
    record = record or {}
    command = figure_text(shlex.join(record.get("command_line") or [])) or DASH
    run = (("Command", figure_text(record.get("command")) or DASH),
           ("Report schema", figure_text(report.get("schema"))),
           ("Date", figure_text((report.get("sheet") or {}).get("date")) or DASH),
           ("Band (as used)", figure_text(report.get("band")) or DASH),
           ("Frequency (as used)", num(report.get("frequency_mhz"), ".4f", " MHz")))
    files = []
    for s in (report.get("dem") or {}).get("sources") or []:
        files += [("Path", figure_text(s.get("path")) or DASH),
                  ("sha256", _chunks(figure_text(s.get("sha256")), 16) or DASH),
                  ("CRS", figure_text(s.get("crs")) or DASH)]
    groups = [[Table("Command line", None, ((command,),))],
              [Table("Run", None, run), Table("Elevation files", None, tuple(files) or (("Path", DASH),)),
               Table("Versions", None, _version_rows())]]
    options = _option_rows(report, record)
    if options:
        groups.append([Table("Options", ("Option", "Value", "Set by"), options, flow=4)])
    return groups
