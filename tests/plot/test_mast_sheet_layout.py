"""The mast sheet says the whole answer, in every size, and nothing on it is cut, hidden or on a curve.

The checks are outside the sheet's own code: the layout from matplotlib's
renderer extents (:func:`profiler.plot.audit.layout_problems`, and the
texts' window extents against the plotted lines' display paths, sampled
here independently), the numbers from the JSON report written by the same
``profiler mast`` run (formatted as docs/mast.md states: heights rounded up to
the centimetre, the parts shown adding up to the totals shown).

Cases on the bundled terrain (dem_samples, invented Vellmoor valley):
feasible (raise A), infeasible (the ridge path with a 15 m limit; exit 3),
infeasible by the margin (``--no-clearance --min-margin-db 40``) and
``--solve both`` (the cheapest split), at A4 and letter with short and
200-character names.
"""

import json
import math
import re
import shlex

import numpy as np
import pytest
import rasterio
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, PUMP, ROOT  # noqa: E402

from profiler.cli import main
from profiler.plot.audit import layout_problems
from profiler.plot.mast import build_mast_figure
from profiler.plot.sheet import style
from profiler.products.mast.result import fixed, up_text

A = f"{GATEWAY[0]},{GATEWAY[1]}"
BLOCKED_B = "-30.0,-19.845"      # behind the ridge: 0.6 F1 needs about 165 m at B
CASES = {
    "feasible": ["--site-b", f"{PUMP[0]},{PUMP[1]}", "--solve", "a", "--name-a", "Cairnfell Beacon",
                 "--name-b", "Osterby Farm pump"],
    "infeasible": ["--site-b", BLOCKED_B, "--max-mast-m", "15"],
    "infeasible-margin": ["--site-b", f"{PUMP[0]},{PUMP[1]}", "--solve", "both", "--no-clearance",
                          "--min-margin-db", "40", "--max-mast-m", "30"],
    "both": ["--site-b", f"{PUMP[0]},{PUMP[1]}", "--solve", "both"],
    "both-terrain": ["--site-b", f"{PUMP[0]},{PUMP[1]}", "--solve", "both", "--model", "terrain"],
}
LONG = ("Cairnfell Beacon upper hill-top gateway cabinet on the north ridge above the old quarry road, east of the "
        "Vellmoor reservoir dam, second mast of the valley telemetry network, beside the shepherds' hut")
assert len(LONG) == 200
MINUS = "\u2212"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    """The JSON report of each case, written by ``profiler mast`` (exit 0, or 3 when infeasible)."""
    folder = tmp_path_factory.mktemp("mast_sheet")
    out = {}
    for case, args in CASES.items():
        path = folder / f"{case}.json"
        res = run("mast", "--dem", DEM[0], "--site-a", A, *args, "--json", path)
        assert res.exit_code == (3 if case.startswith("infeasible") else 0), res.output
        out[case] = json.loads(path.read_text())
    return out


def _named(report, names):
    if names == "short":
        return report
    report = json.loads(json.dumps(report))
    report["site_a"]["name"], report["site_b"]["name"] = LONG, LONG[::-1].strip()
    return report


@pytest.fixture(scope="module")
def figures(reports):
    """Figures (100 dpi) built once per (case, paper, names)."""
    cache = {}

    def get(case, paper="a4", names="short"):
        if (case, paper, names) not in cache:
            with style():
                cache[case, paper, names] = build_mast_figure(_named(reports[case], names), paper)
        return cache[case, paper, names]
    return get


def sheet_text(fig) -> str:
    """Every visible text of the sheet, whitespace (wrapping) collapsed."""
    from matplotlib.text import Text

    texts = [t for t in fig.findobj(Text) if t.get_visible() and str(t.get_text()).strip()]
    return " | ".join(" ".join(str(t.get_text()).split()) for t in texts)


def shown(value, spec, unit=""):
    """A JSON value formatted as a sheet prints it (true minus sign)."""
    return fixed(value, spec).replace("-", MINUS) + unit


def m(value):
    return up_text(value).replace("-", MINUS) + " m"


# --------------------------------------------------------------------------- layout audit
@pytest.mark.parametrize("names", ["short", "long"])
@pytest.mark.parametrize("paper", ["a4", "letter"])
@pytest.mark.parametrize("case", ["feasible", "infeasible", "both"])
def test_mast_sheet_layout_is_clean(figures, case, paper, names):
    with style():
        problems = layout_problems(figures(case, paper, names))
    assert problems == [], "\n".join(map(str, problems))


def test_infeasible_by_margin_layout_is_clean(figures):
    with style():
        assert layout_problems(figures("infeasible-margin")) == []


# --------------------------------------------------------------------------- no text on a curve
def _line_pixels(ax):
    """Display coordinates of the plotted lines of ``ax``, 4 samples per pixel along each segment."""
    out = []
    for line in ax.lines:
        xy = line.get_transform().transform(line.get_path().vertices)
        xy = xy[np.isfinite(xy).all(axis=1)]
        for p, q in zip(xy[:-1], xy[1:]):
            n = int(4 * math.hypot(*(q - p))) + 2
            out.append(p + np.linspace(0.0, 1.0, n)[:, None] * (q - p))
    return np.concatenate(out) if out else np.empty((0, 2))


def _panel_texts(ax, renderer):
    """(text, window box) of every text inside a panel: annotations, texts, legend entries and frame."""
    from matplotlib.transforms import Bbox

    items = []
    for t in ax.texts:
        bb = t.get_window_extent(renderer)
        if t.get_bbox_patch() is not None:
            t.update_bbox_position_size(renderer)
            bb = Bbox.union([bb, t.get_bbox_patch().get_window_extent(renderer)])
        items.append((t.get_text(), bb))
    legend = ax.get_legend()
    if legend is not None:
        items += [(t.get_text(), t.get_window_extent(renderer)) for t in legend.get_texts()]
        items.append(("legend frame", legend.get_window_extent(renderer)))
    return items


@pytest.mark.parametrize("paper", ["a4", "letter"])
@pytest.mark.parametrize("case", ["feasible", "infeasible", "infeasible-margin", "both"])
def test_no_label_or_legend_on_a_curve(figures, case, paper):
    fig = figures(case, paper)
    renderer = fig.canvas.get_renderer()
    panels = [ax for ax in fig.axes if ax.lines and ax.get_legend() is not None]
    assert len(panels) == 2     # the margin and the clearance panel
    for ax in panels:
        points = _line_pixels(ax)
        assert len(points) > 100
        inner = ax.get_window_extent()
        for text, bb in _panel_texts(ax, renderer):
            if not inner.overlaps(bb):
                continue                  # outside the panel (the chosen height above it, the note below)
            inside = ((points[:, 0] >= bb.x0) & (points[:, 0] <= bb.x1)
                      & (points[:, 1] >= bb.y0) & (points[:, 1] <= bb.y1))
            assert not inside.any(), f"{text!r} lies on a plotted line ({case}, {paper})"


# --------------------------------------------------------------------------- numbers equal the JSON
def test_infeasible_sheet_says_the_answer(reports, figures):
    r = reports["infeasible"]
    assert not r["feasible"]
    text = sheet_text(figures("infeasible"))
    bind, best = r["binding"], r["best_achievable"]
    crit = next(c for c in r["criteria"] if c["criterion"] == bind["criterion"])
    assert bind["criterion"] == "clearance" and not crit["within_max"]
    need = m(crit["required_mast_b_m"])
    assert f"NO mast up to {r['max_mast_m']:g} m at B meets every criterion" in text
    assert f"{need} at B" in text and f"would need {up_text(crit['required_mast_b_m'])} m at B" in r["message"]
    assert f"{bind['distance_m'] / 1000:.3f} km from A, terrain {bind['terrain_m']:.1f} m" in text
    assert f"worst clearance {shown(best['worst_ratio'], '.2f')} F1 (need {crit['clearance_ratio']:g} F1)" in text
    assert f"Mast B there | {m(best['mast_b_m'])}" in text and best["mast_b_m"] == r["max_mast_m"]
    assert f"Margin there | {shown(best['margin_db'], '+.1f')} dB" in text
    assert f"{best['worst_ratio']:.2f} F1".replace("-", "") in r["message"].replace("-", "")


def test_infeasible_by_margin_sheet_says_the_answer(reports, figures):
    r = reports["infeasible-margin"]
    text = sheet_text(figures("infeasible-margin"))
    bind, best = r["binding"], r["best_achievable"]
    assert bind["criterion"] == "margin"
    assert f"NO mast up to {r['max_mast_m']:g} m at both ends meets every criterion" in text
    assert f"not known: beyond the {r['max_mast_m']:g} m limit" in text
    assert f"margin {shown(best['margin_db'], '+.1f')} dB (need 40 dB)" in text
    assert f"{bind['distance_m'] / 1000:.3f} km from A, terrain {bind['terrain_m']:.1f} m" in text
    assert f"Mast A there | {m(best['mast_a_m'])}" in text and f"Mast B there | {m(best['mast_b_m'])}" in text


def test_feasible_sheet_numbers_equal_the_json(reports, figures):
    r = reports["feasible"]
    text = sheet_text(figures("feasible"))
    at, pm, bind = r["at_required"], r["per_extra_metre"], r["binding"]
    assert f"mast {m(r['required_mast_a_m'])} ({bind['criterion']})" in text
    assert f"Required mast A | {m(r['required_mast_a_m'])}" in text
    assert f"Required mast B | {m(r['required_mast_b_m'])} (given)" in text
    assert f"{bind['distance_m'] / 1000:.3f} km from A, terrain {bind['terrain_m']:.1f} m" in text
    assert f"{shown(at['worst_ratio'], '.2f')} F1, low k {shown(at['worst_ratio_low_k'], '.2f')} F1" in text
    assert f"Margin | {shown(at['margin_db'], '+.1f')} dB" in text
    assert f"Diffraction loss | {shown(at['diffraction_db'], '.1f')} dB" in text
    assert (f"margin {shown(pm['margin_db_per_m'], '+.2f')} dB/m, clearance "
            f"{shown(pm['worst_ratio_per_m'], '+.3f')} F1/m") in text


def test_both_sheet_shows_the_cheapest_split(reports, figures):
    r = reports["both"]
    split = r["cheapest_split"]
    assert split is not None and split["total_m"] == round(split["mast_a_m"] + split["mast_b_m"], 6)
    text = sheet_text(figures("both"))
    a, b = up_text(split["mast_a_m"]), up_text(split["mast_b_m"])
    assert f"Cheapest split | A {a} m + B {b} m" in text
    assert f"Split total | {float(a) + float(b):.2f} m" in text          # the parts shown add up
    assert float(a) + float(b) >= split["total_m"] - 1e-9              # rounded up, never below
    assert f"Added at both ends | {m(r['added_height_m'])}" in text
    equal = float(up_text(r["required_mast_a_m"])) + float(up_text(r["required_mast_b_m"]))
    assert f"Equal raise total | {equal:.2f} m" in text and equal >= float(a) + float(b)


NEGATIVE_ZERO = re.compile(r"[-\u2212]0(\.0+)?(?![\d.]*[1-9])")


@pytest.mark.parametrize("case", ["feasible", "both-terrain"])
def test_no_negative_zero_on_the_sheet(reports, figures, case):
    pm = reports[case]["per_extra_metre"]
    assert -0.005 < pm["margin_db_per_m"] < 0.0      # a tiny negative slope: "-0.00" before the fix
    text = sheet_text(figures(case))
    assert "Each extra metre | margin 0.00 dB/m" in text
    assert not NEGATIVE_ZERO.search(text), NEGATIVE_ZERO.search(text)


def test_equal_raise_keeps_the_p1812_margin(reports, figures):
    # Under the default ITU-R P.1812-8 the free-space distance is eq. (8a), dfs = sqrt(d^2 + ((hts - hrs)/1000)^2):
    # raising both masts by the same metre keeps hts - hrs, and the path is in line of sight (no diffraction),
    # so the margin does not move; the terrain model's spherical slant distance gives the tiny slope above.
    r = reports["both"]
    assert r["model"] == "p1812" and reports["both-terrain"]["model"] == "terrain"
    pm = r["per_extra_metre"]
    assert pm["diffraction_db_per_m"] == 0.0 and abs(pm["margin_db_per_m"]) < 1e-9
    text = sheet_text(figures("both"))
    assert "Each extra metre | margin 0.00 dB/m" in text
    assert not NEGATIVE_ZERO.search(text), NEGATIVE_ZERO.search(text)


def test_fixed_never_gives_a_negative_zero():
    assert fixed(-1.36e-6, "+.2f") == "0.00" and fixed(-0.004, ".2f") == "0.00" and fixed(0.0, "+.1f") == "0.0"
    assert fixed(-0.006, ".2f") == "-0.01" and fixed(0.02, "+.2f") == "+0.02" and fixed(-1.85, ".2f") == "-1.85"
    assert up_text(-1e-9) == "0.00" and up_text(1.001) == "1.01"


@pytest.mark.parametrize("case", ["both", "both-terrain"])      # both-terrain: a tiny negative slope
def test_summary_has_no_negative_zero(reports, case):
    from profiler.cli.mast import mast_summary_text

    text = mast_summary_text(reports[case])
    assert "each metre    0.00 dB margin" in text and not NEGATIVE_ZERO.search(text)


# --------------------------------------------------------------------------- --help examples
def test_help_examples_run_on_the_bundled_terrain(tmp_path, monkeypatch):
    res = run("mast", "--help")
    examples = [line.strip() for line in res.output.splitlines() if line.strip().startswith("profiler mast ")]
    assert examples, res.output
    with rasterio.open(DEM[0]) as src:
        bounds = src.bounds
    (tmp_path / "dem_samples").symlink_to(ROOT / "dem_samples")
    monkeypatch.chdir(tmp_path)
    for example in examples:
        args = shlex.split(example)[1:]
        for flag in ("--site-a", "--site-b"):
            lat, lon = (float(v) for v in args[args.index(flag) + 1].split(","))
            assert bounds.bottom < lat < bounds.top and bounds.left < lon < bounds.right, example
        out = run(*args)
        assert out.exit_code in (0, 3), (example, out.output)
