"""``--report FILE.pdf``: the multi-page report of a link or mast run.

Page 1 is the sheet itself; page 2 the budget (both directions, every data
rate of the plan, compliance) or, for a mast run, the whole height table;
page 3 the record: the full command line, every option's value, the
elevation files with their full sha256, and the versions of the tool and
its libraries, so that the run can be reproduced.  Written with
matplotlib's ``PdfPages`` to the temporary file that
:func:`profiler.outputs.write_outputs` renames into place.
"""

from __future__ import annotations

import os
import platform

from .. import CAUTION, __version__
from ..errors import ProfilerError
from .titleblock import datum_line, draw_notes, draw_title_box, title_block_rows
from .sheet import (DASH, clean, draw_tables, draw_title_block, inch_axes, metadata,
                    new_sheet, num, paper_size_in, check_dpi, site_name, style, EN, BADGE_GOOD)

__all__ = ["write_link_report", "write_mast_report", "library_versions"]

PAGES = 3
LIBRARIES = ("numpy", "scipy", "pyproj", "rasterio", "matplotlib", "pygeomag", "click")


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


def write_link_report(report: dict, path, paper: str = "a4", dpi: float = 200, dem_paths=None,
                      record: dict | None = None) -> None:
    """The link report: sheet, budget page, record page (PDF)."""
    from .link import build_link_figure

    name = f"{site_name(report['site_a'])} {EN} {site_name(report['site_b'])}"
    pages = [lambda: build_link_figure(report, paper=paper, dem_paths=dem_paths, sheet_no=1, sheet_count=PAGES),
             lambda: _table_page(report, paper, f"Link budget: {name}", _link_budget_blocks(report), 2, name),
             lambda: _table_page(report, paper, f"Record: {name}", _record_blocks(report, record), 3, name)]
    _write_pages(path, paper, dpi, pages, f"Radio path report: {name}", report)


def write_mast_report(report: dict, path, paper: str = "a4", dpi: float = 200, record: dict | None = None) -> None:
    """The mast report: sheet, height table, record page (PDF)."""
    from .mast import build_mast_figure

    name = f"{site_name(report['site_a'])} {EN} {site_name(report['site_b'])}"
    pages = [lambda: build_mast_figure(report, paper, sheet_no=1, sheet_count=PAGES),
             lambda: _table_page(report, paper, f"Mast table: {name}", _mast_blocks(report), 2, name),
             lambda: _table_page(report, paper, f"Record: {name}", _record_blocks(report, record), 3, name)]
    _write_pages(path, paper, dpi, pages, f"Mast report: {name}", report)


def _write_pages(path, paper, dpi, pages, title, report) -> None:
    from matplotlib.backends.backend_pdf import PdfPages

    paper_size_in(paper)
    dpi = check_dpi(dpi)
    if str(path).lower().endswith(".pdf") is False:
        raise ProfilerError(f"--report {path}: the report is a PDF; give a file name ending in .pdf")
    with style():
        try:
            with PdfPages(path, metadata=metadata(title, report, "pdf")) as pdf:
                for build in pages:
                    pdf.savefig(build(), dpi=dpi)
        except OSError as exc:
            raise ProfilerError(f"cannot write {path}: {exc.strerror or exc}") from exc


def _table_page(report, paper, title, groups, sheet_no, name):
    """A framed page: header, groups of tables stacked from the top, title block and caution at the bottom."""
    fig, renderer, width_in, height_in = new_sheet(paper)
    margin, block_w = 0.38, 3.05
    draw_title_block(inch_axes(fig, (margin, height_in - margin - 0.66, width_in - 2 * margin, 0.66), width_in,
                               height_in), renderer, clean(title), "Planning aid report", f"sheet {sheet_no} of {PAGES}",
                     BADGE_GOOD, badge_label="PAGE")
    top = height_in - margin - 0.85
    for blocks in groups:
        room = top - (margin + 1.7)
        if room < 0.3:
            break
        used = draw_tables(inch_axes(fig, (margin, top - room, width_in - 2 * margin, room), width_in, height_in),
                           renderer, blocks, max_row_h=0.14, wrap_rows=("Command line", "sha256", "note"))
        top -= used + 0.18
    draw_title_box(inch_axes(fig, (width_in - margin - block_w, margin, block_w, 1.5), width_in, height_in), renderer,
                   title_block_rows(report.get("sheet"), name, report, sheet_no, PAGES))
    draw_notes(inch_axes(fig, (margin, margin, width_in - 2 * margin - block_w - 0.2, 0.6), width_in, height_in),
               renderer, [f"Datums: {clean(datum_line(report))}", CAUTION])
    return fig


# --------------------------------------------------------------------------- link budget page
BUDGET_KEYS = (("transmitter", "Transmitter", "s"), ("receiver", "Receiver", "s"), ("frequency_mhz", "Frequency", ".4f MHz"),
               ("tx_power_dbm", "Tx power", ".2f dBm"), ("eirp_dbm", "EIRP", ".2f dBm"),
               ("path_loss_db", "Path loss", ".2f dB"), ("rx_power_dbm", "Rx power", ".2f dBm"),
               ("noise_figure_db", "Noise figure", ".1f dB"), ("sensitivity_dbm", "Sensitivity", ".2f dBm"),
               ("sensitivity_source", "Sensitivity source", "s"), ("margin_db", "Margin", "+.2f dB"),
               ("fade_margin_required_db", "Fade margin required", ".1f dB"), ("closes", "Closes", "b"),
               ("dr", "Data rate (DR)", "d"), ("sf", "Spreading factor", "d"), ("bw_khz", "Bandwidth", "g kHz"))


def _cell(value, spec: str) -> str:
    if value is None:
        return DASH
    if spec == "s":
        return clean(str(value))
    if spec == "b":
        return "yes" if value else "NO"
    fmt, _, unit = spec.partition(" ")
    try:
        return num(value, fmt, f" {unit}" if unit else "")
    except (TypeError, ValueError):
        return clean(str(value))


def _link_budget_blocks(report):
    up, down = report["budget"], report.get("budget_downlink") or report["budget"]
    both = [(label, _cell(up.get(k), spec), _cell(down.get(k), spec)) for k, label, spec in BUDGET_KEYS]
    loss = report.get("loss_db") or {}
    losses = [(clean(k.replace("_", " ")), _cell(v, ".2f dB" if not isinstance(v, str) else "s"))
              for k, v in loss.items()]
    comp = report.get("compliance") or {}
    comp_rows = [(clean(k.replace("_", " ")), _cell(v, "s" if isinstance(v, str) else ("b" if isinstance(v, bool)
                                                                                        else "g")))
                 for k, v in comp.items() if k != "notes"]
    comp_rows += [("note", clean(n)) for n in comp.get("notes") or []]
    groups = [[("Budget", ["", "Uplink (node \u2192 gateway)", "Downlink (gateway \u2192 node)"], both),
               ("Path loss", None, losses), ("Compliance", None, comp_rows)]]
    lora = report.get("lora") or {}
    dr_blocks = []
    for direction in ("uplink", "downlink"):
        block = lora.get(direction)
        if not block:
            continue
        rec = block.get("recommended_dr")
        rows = [(f"DR{r['dr']}{' (recommended)' if r['dr'] == rec else ''}", f"SF{r['sf']}/{r['bw_khz']:g}", _cell(r.get("sensitivity_dbm"), ".1f dBm"),
                 _cell(r.get("margin_db"), "+.1f dB"), _cell(r.get("closes"), "b"),
                 _cell(r.get("time_on_air_ms"), ".1f ms"), "yes" if r.get("allowed") else
                 f"no: {clean(r.get('reason') or '')}")
                for r in block.get("per_dr") or []]
        dr_blocks.append((direction.capitalize(),
                          ["", "Rate [kHz]", "Sensitivity", "Margin", "Closes", "Time on air", "Allowed"], rows))
    if dr_blocks:
        groups.append(dr_blocks)
    return groups


# --------------------------------------------------------------------------- mast table page
def _mast_blocks(report):
    from .mast import rate_label

    rows = [(num(r["mast_a_m"], ".2f", " m"), num(r["mast_b_m"], ".2f", " m"), num(r["worst_ratio"], ".3f"),
             num(r["worst_ratio_low_k"], ".3f"), num(r["diffraction_db"], ".2f", " dB"),
             num(r["margin_db"], "+.2f", " dB"), rate_label(r) or DASH) for r in report["table"]]
    head = ["", "Mast B", "Worst F1 (k)", "Worst F1 (low k)", "Diffraction", "Margin", "Data rate"]
    per = max(1, (len(rows) + 1) // 2) if len(rows) > 28 else len(rows)
    chunks = [rows[i:i + per] for i in range(0, len(rows), per)][:2]
    if len(rows) > 56:
        chunks = [rows[:28], rows[28:56]]
    return [[(f"Mast A{' (continued)' if i else ''}", head, chunk) for i, chunk in enumerate(chunks)]]


# --------------------------------------------------------------------------- record page
def _chunks(text: str, n: int) -> list[str]:
    """``text`` in pieces of ``n`` characters (a digest wraps at the spaces between them)."""
    return [text[i:i + n] for i in range(0, len(text), n)] or [""]


def _record_blocks(report, record):
    record = record or {}
    options = sorted((record.get("options") or {}).items())
    opt_rows = [(clean(k.replace("_", "-")), clean(v) or DASH) for k, v in options]
    third = (len(opt_rows) + 2) // 3
    import shlex

    command = [("Command line", clean(shlex.join(record.get("command_line") or [])) or DASH)]
    run = [("Report schema", clean(report.get("schema") or "")), ("Date", clean((report.get("sheet") or {}).get("date") or ""))]
    files = []
    for s in (report.get("dem") or {}).get("sources") or []:
        files += [("Path", clean(os.path.basename(str(s.get("path") or "")))),
                  ("sha256", " ".join(_chunks(clean(str(s.get("sha256") or DASH)), 16))), ("CRS", clean(str(s.get("crs") or DASH)))]
    versions = [(n, clean(v)) for n, v in library_versions()]
    groups = [[("Command", None, command)], [("Run", None, run), ("Elevation files", None, files or [("Path", DASH)]),
               ("Versions", None, versions)]]
    if opt_rows:
        groups.append([("Options", None, opt_rows[:third]),
                       ("Options (continued)", None, opt_rows[third:2 * third] or [("", "")]),
                       ("Options (continued)", None, opt_rows[2 * third:] or [("", "")])])
    return groups
