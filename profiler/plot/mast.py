"""The mast sheet: link margin and worst clearance ratio against mast height, the chosen height marked.

Drawn from the ``profiler.mast/1`` report (``MastResult.to_dict()``); two
panels sharing the height axis, the required margin and clearance as
dotted lines, the caution line along the bottom.
"""

from __future__ import annotations

import math

from .. import CAUTION
from ..errors import ProfilerError
from ..outputs import atomic_path
from .sheet import paper_size_in

__all__ = ["write_mast_figure"]


def write_mast_figure(report: dict, path, paper: str = "a4", dpi: int = 200) -> None:
    """Margin and worst clearance ratio against mast height, the chosen height marked."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    solve = report["solve"]
    rows = report["table"]
    if solve == "both":
        x = [r["mast_a_m"] - report["site_a"]["mast_m"] for r in rows]
        xlabel, chosen = "height added at both ends [m]", report["added_height_m"]
    else:
        key = f"mast_{solve}_m"
        x = [r[key] for r in rows]
        name = report["site_" + solve]["name"]
        label = solve.upper() if name == solve.upper() else f"{solve.upper()} ({name})"
        xlabel, chosen = f"mast at {label} [m]", report[f"required_{key}"]
    fig = Figure(figsize=paper_size_in(paper), layout="constrained")
    fig.get_layout_engine().set(rect=(0.0, 0.03, 1.0, 0.97))  # leave a strip for the caution line
    FigureCanvasAgg(fig)
    ax_m, ax_c = fig.subplots(2, 1, sharex=True)
    ax_m.plot(x, [r["margin_db"] for r in rows], "o-", ms=3, label="margin")
    ax_c.plot(x, [r["worst_ratio"] for r in rows], "o-", ms=3, label="worst clearance / F1 (k)")
    ax_c.plot(x, [r["worst_ratio_low_k"] for r in rows], "s--", ms=3, label="worst clearance / F1 (low k)")
    for c in report["criteria"]:
        if c["criterion"] == "margin":
            ax_m.axhline(c["min_margin_db"], color="C3", lw=1, ls=":", label=f"required {c['min_margin_db']:g} dB")
        else:
            ax_c.axhline(c["clearance_ratio"], color="C3" if c["criterion"] == "clearance" else "C4", lw=1, ls=":",
                         label=f"required {c['clearance_ratio']:g} F1 at k = {c['k_factor']:.3g}")
    if report["feasible"] and chosen is not None:
        for ax in (ax_m, ax_c):
            ax.axvline(chosen, color="k", lw=1.2)
        shown = math.ceil(chosen * 100 - 1e-9) / 100   # rounded up to the centimetre, as in the text
        ax_m.annotate(f"chosen {shown:.2f} m ({report['binding']['criterion']})", (chosen, 1.0),
                      xycoords=("data", "axes fraction"), xytext=(4, -14), textcoords="offset points", fontsize=8,
                      bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": "0.5", "lw": 0.5})
    ax_m.set_ylabel("link margin [dB]")
    ax_c.set_ylabel("clearance / F1")
    ax_c.set_xlabel(xlabel)
    for ax in (ax_m, ax_c):
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=8, loc="best")
    a, b = report["site_a"]["name"], report["site_b"]["name"]
    verdict = "" if report["feasible"] else " - no height up to the maximum works"
    fig.suptitle(f"Mast height {a} -> {b}, {report['distance_m'] / 1000:.2f} km, "
                 f"{report['frequency_mhz']:.2f} MHz{verdict}")
    fig.text(0.5, 0.005, CAUTION, ha="center", va="bottom", fontsize=7)
    with atomic_path(path) as tmp:
        try:
            fig.savefig(tmp, dpi=dpi)
        except (OSError, ValueError) as exc:
            raise ProfilerError(f"cannot write figure {path}: {exc}") from exc
