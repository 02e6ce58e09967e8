"""The mast sheet: link margin and worst clearance ratio against mast height, in the sheet family's style.

Drawn from the ``profiler.mast/2`` report (``MastResult.to_dict()``): two
panels sharing the height axis (margin above, clearance ratios below), the
required margin and clearance as dotted lines, the chosen height marked
with its label above the panel (never on a curve), the recommended data
rate written along the margin curve with the reason for each drop (a
taller mast lets a faster, less sensitive data rate close, so the margin at
the recommended rate can fall while the path improves).  The header, the
result table, the lower-right title block and the provenance notes come
from :mod:`profiler.plot.sheet`.
"""

from __future__ import annotations

import math

from .titleblock import draw_notes, draw_title_box, provenance_lines, title_block_rows
from .sheet import (BADGE_BAD, BADGE_GOOD, EN, MIDDOT, clean, draw_tables, draw_title_block,
                    fraction, inch_axes, new_sheet, num, site_name, source_text,
                    style, write_sheet)

__all__ = ["write_mast_figure", "build_mast_figure", "rate_changes"]


def write_mast_figure(report: dict, path, paper: str = "a4", dpi: int = 200, *, sheet_no: int = 1,
                      sheet_count: int = 1) -> None:
    """Draw the mast sheet and write it atomically to ``path`` (PNG, PDF or SVG by extension)."""
    title = f"Mast height: {site_name(report['site_a'])} {EN} {site_name(report['site_b'])}"
    write_sheet(path, paper, dpi, lambda: build_mast_figure(report, paper, sheet_no=sheet_no,
                                                            sheet_count=sheet_count), title, report)


def _up(x):
    return math.ceil(x * 100 - 1e-9) / 100   # rounded up to the centimetre, as in the text summary


def _heights(report):
    solve, rows = report["solve"], report["table"]
    if solve == "both":
        return ([r["mast_a_m"] - report["site_a"]["mast_m"] for r in rows], "height added at both ends [m]",
                report["added_height_m"])
    key = f"mast_{solve}_m"
    name = site_name(report["site_" + solve])
    label = solve.upper() if name == solve.upper() else f"{solve.upper()} ({name})"
    return [r[key] for r in rows], f"mast at {label} [m]", report[f"required_{key}"]


def rate_label(row) -> str:
    """``DR5 SF7/125`` of a table row ("" without a LoRa rate)."""
    if row.get("sf") is None:
        return ""
    rate = f"SF{row['sf']}/{row['bw_khz']:g}"
    return rate if row.get("dr") is None else f"DR{row['dr']} {rate}"


def rate_changes(rows) -> list[tuple[int, str]]:
    """Indices where the recommended rate changes, with the reason text (a drop in margin explained)."""
    out = []
    for i in range(1, len(rows)):
        before, after = rate_label(rows[i - 1]), rate_label(rows[i])
        if before == after:
            continue
        drop = rows[i]["margin_db"] is not None and rows[i - 1]["margin_db"] is not None and \
            rows[i]["margin_db"] < rows[i - 1]["margin_db"] - 1e-6
        reason = (f"{before} \u2192 {after}: faster rate now closes, so the margin at it is lower" if drop
                  else f"{before} \u2192 {after}")
        out.append((i, reason))
    return out


def build_mast_figure(report: dict, paper: str = "a4", *, sheet_no: int = 1, sheet_count: int = 1):
    """The mast sheet as a :class:`matplotlib.figure.Figure` (Agg canvas)."""
    with style():
        fig, renderer, width_in, height_in = new_sheet(paper)
        margin, block_w = 0.38, 3.05
        left_w = width_in - 2 * margin - block_w - 0.25
        header_h = 0.66
        _header(inch_axes(fig, (margin, height_in - margin - header_h, width_in - 2 * margin, header_h),
                          width_in, height_in), report, renderer)
        top = height_in - margin - header_h - 0.45
        bottom = margin + 1.25
        panel_h = (top - bottom - 0.35) / 2
        left = margin + 0.6
        ax_c = fig.add_axes(fraction((left, bottom, left_w - 0.6, panel_h), width_in, height_in))
        ax_m = fig.add_axes(fraction((left, bottom + panel_h + 0.35, left_w - 0.6, panel_h), width_in, height_in),
                            sharex=ax_c)
        _panels(ax_m, ax_c, report)
        right = width_in - margin - block_w
        draw_tables(inch_axes(fig, (right, margin + 1.75, block_w, top + 0.3 - margin - 1.75), width_in, height_in),
                    renderer, [("Result", None, _result_rows(report))], max_row_h=0.2)
        name = f"Mast height {site_name(report['site_a'])} {EN} {site_name(report['site_b'])}"
        draw_title_box(inch_axes(fig, (right, margin, block_w, 1.6), width_in, height_in), renderer,
                       title_block_rows(report.get("sheet"), name, report, sheet_no, sheet_count))
        source = source_text(report.get("dem"))
        if (report.get("dem") or {}).get("kind") == "surveyed":   # the mast report holds no profile samples
            source = source.split(" (", 1)[0] + " (no coordinates)"
        draw_notes(inch_axes(fig, (margin, margin, left_w, 0.8), width_in, height_in), renderer,
                   provenance_lines(report, source))
    return fig


def _header(ax, report, renderer):
    a, b = site_name(report["site_a"]), site_name(report["site_b"])
    band = f" ({clean(report['band'])})" if report.get("band") else ""
    solve = "both ends" if report["solve"] == "both" else f"mast {report['solve'].upper()}"
    sub = f"  {MIDDOT}  ".join(["Lowest mast meeting every criterion", num(report["distance_m"] / 1000.0, ".3f", " km"),
                                num(report["frequency_mhz"], ".4f", " MHz") + band, f"solving {solve}"])
    if report["feasible"]:
        _, _, chosen = _heights(report)
        badge, badge_style = (f"{'add' if report['solve'] == 'both' else 'mast'} {_up(chosen):.2f} m "
                              f"({clean(report['binding']['criterion'])})"), BADGE_GOOD
    else:
        badge, badge_style = f"no height up to {report['max_mast_m']:g} m works", BADGE_BAD
    draw_title_block(ax, renderer, f"{a} {EN} {b}", sub, badge, badge_style, badge_label="RESULT")


def _panels(ax_m, ax_c, report):
    rows = report["table"]
    x, xlabel, chosen = _heights(report)
    margin = [r["margin_db"] for r in rows]
    ax_m.plot(x, margin, "o-", ms=2.5, color="black", lw=1.1, label="margin at the recommended data rate")
    ax_c.plot(x, [r["worst_ratio"] for r in rows], "o-", ms=2.5, color="black", lw=1.1,
              label="worst clearance / F1 (k)")
    ax_c.plot(x, [r["worst_ratio_low_k"] for r in rows], "s--", ms=2.5, color="0.4", lw=1.0,
              label="worst clearance / F1 (low k)")
    for c in report["criteria"]:
        if c["criterion"] == "margin":
            ax_m.axhline(c["min_margin_db"], color="#b03030", lw=1, ls=":", label=f"required {c['min_margin_db']:g} dB")
        else:
            ax_c.axhline(c["clearance_ratio"], color="#b03030" if c["criterion"] == "clearance" else "#3050b0",
                         lw=1, ls=":", label=f"required {c['clearance_ratio']:g} F1 at k = {c['k_factor']:.3g}")
    _rate_notes(ax_m, x, margin, rows)
    if report["feasible"] and chosen is not None:
        for ax in (ax_m, ax_c):
            ax.axvline(chosen, color="0.1", lw=1.0, ls="-.")
        ax_m.annotate(f"chosen {_up(chosen):.2f} m ({clean(report['binding']['criterion'])})", (chosen, 1.0),
                      xycoords=("data", "axes fraction"), xytext=(0, 3), textcoords="offset points", fontsize=7,
                      ha="center", va="bottom", fontweight="bold", parse_math=False, annotation_clip=False)
    ax_m.set_ylabel("link margin [dB]")
    ax_c.set_ylabel("clearance / F1")
    ax_c.set_xlabel(xlabel, parse_math=False)
    for ax in (ax_m, ax_c):
        ax.grid(True, alpha=0.3, lw=0.5)
        ax.legend(fontsize=6.5, loc="lower right" if ax is ax_c else "upper right", frameon=True, framealpha=0.9)
    ax_m.tick_params(labelbottom=False)


def _rate_notes(ax, x, margin, rows):
    """The data rate written along the margin curve (at the start and at each change), each drop
    marked, and one note giving the reason for the drops."""
    if not rows or rows[0].get("sf") is None:
        return
    halo = dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.85)
    ax.annotate(rate_label(rows[0]), (x[0], margin[0]), xytext=(5, 5), textcoords="offset points", fontsize=6,
                color="0.15", parse_math=False, va="bottom", bbox=halo)
    changes = rate_changes(rows)
    for i, reason in changes[:8]:
        drop = "lower" in reason
        ax.annotate(("\u2193 " if drop else "") + rate_label(rows[i]), (x[i], margin[i]), xytext=(5, -4),
                    textcoords="offset points", fontsize=6, color="0.15", parse_math=False, va="top", bbox=halo)
    if any("lower" in reason for _, reason in changes):
        ax.margins(y=0.15)
        ax.text(0.0, -0.03, "\u2193 margin drops where a taller mast lets a faster (less sensitive) data rate "
                "close: the margin is counted at the recommended rate", transform=ax.transAxes, fontsize=6.3,
                color="0.1", ha="left", va="top", parse_math=False)


def _result_rows(report):
    at = report.get("at_required") or {}
    pm = report.get("per_extra_metre") or {}
    rows = [("Required mast A", num(report.get("required_mast_a_m") and _up(report["required_mast_a_m"]), ".2f", " m")),
            ("Required mast B", num(report.get("required_mast_b_m") and _up(report["required_mast_b_m"]), ".2f", " m")),
            ("Binding criterion", clean((report.get("binding") or {}).get("criterion") or "\u2014")),
            ("Worst clearance", num(at.get("worst_ratio"), ".2f", " F1")),
            ("Diffraction loss", num(at.get("diffraction_db"), ".1f", " dB")),
            ("Margin", num(at.get("margin_db"), "+.1f", " dB")),
            ("Data rate", rate_label(at) or "\u2014"),
            ("Each extra metre", num(pm.get("margin_db_per_m"), "+.2f", " dB/m")),
            ("Diffraction method", clean(report.get("diffraction_method") or "")),
            ("Elevation", "surveyed profile" if (report.get("dem") or {}).get("kind") == "surveyed" else "DEM")]
    for c in report["criteria"]:
        if c["criterion"] == "margin":
            rows.append(("Criterion", f"margin \u2265 {c['min_margin_db']:g} dB"))
        else:
            rows.append(("Criterion", f"clearance \u2265 {c['clearance_ratio']:g} F1, k = {c['k_factor']:.3g}"))
    if not report["feasible"]:
        rows.insert(0, ("Result", "NO height works"))
    return rows
