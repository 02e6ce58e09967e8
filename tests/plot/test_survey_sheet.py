"""Layout audit of the survey sheet, and its numbers against the JSON beside it.

The report is the real ``profiler.survey/1`` JSON of the bundled sample survey
(``examples/vellmoor_survey.csv`` on ``dem_samples/``); each sheet (A4 and letter; the gateway's own
name, 80- and 200-character names; ``--fit offset`` and ``slope``) is checked against matplotlib's
own renderer extents (:func:`profiler.plot.audit.layout_problems`), and the badge and the
calibration table are compared with the JSON.  Built at 100 dpi.
"""

import copy
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
DEM = [str(ROOT / "dem_samples")]
CASES = [("a4", None, "offset"), ("letter", None, "slope"), ("a4", 200, "slope"), ("letter", 200, "offset"),
         ("a4", 80, "offset")]


@pytest.fixture(scope="module")
def reports():
    from profiler import survey

    return {fit: survey(ROOT / "examples" / "sites.csv", ROOT / "examples" / "vellmoor_survey.csv", dem=DEM,
                        fit=fit, progress=False).to_dict() for fit in ("offset", "slope")}


def long_names(report: dict, chars: int) -> dict:
    out = copy.deepcopy(report)
    new = {s["name"]: ((s["name"] + " ") * chars)[:chars] for s in out["sites"]}
    for s in out["sites"]:
        s["name"] = new[s["name"]]
    for m in out["measurements"]:
        m["gateway"] = new[m["gateway"]]
    for b in out["statistics"]["by_gateway"]:
        b["gateway"] = new[b["gateway"]]
    return out


@pytest.fixture(scope="module")
def sheets(reports):
    from profiler.plot.survey import build_survey_figure

    built = {}
    for paper, chars, fit in CASES:
        rep = reports[fit] if chars is None else long_names(reports[fit], chars)
        sheet = {"project": "Vellmoor valley meters " * (1 if chars is None else 4), "date": "2026-12-03"}
        built[paper, chars, fit] = (rep, build_survey_figure(rep, paper, DEM, sheet=sheet))
    return built


@pytest.mark.parametrize("case", CASES, ids=lambda c: f"{c[0]}-{c[1] or 'short'}-{c[2]}")
def test_survey_sheet_passes_the_layout_audit(sheets, case):
    from profiler.plot.audit import layout_problems

    _, fig = sheets[case]
    problems = layout_problems(fig)
    assert problems == [], "\n".join(map(str, problems))


@pytest.mark.parametrize("case", CASES, ids=lambda c: f"{c[0]}-{c[1] or 'short'}-{c[2]}")
def test_sheet_numbers_equal_the_json(sheets, case):
    from matplotlib.text import Text

    rep, fig = sheets[case]
    texts = {t.get_text().replace("\n", " ") for t in fig.findobj(Text) if t.get_visible()}
    c = rep["calibration"]
    assert f"{c['offset_db']:+.2f} \u00b1 {c['offset_se_db']:.2f} dB" in texts
    assert f"{c['rmse_before_db']:.1f} / {c['rmse_after_db']:.1f} dB" in texts
    assert str(rep["statistics"]["n"]) in texts
    assert any(rep["caution"] in t for t in texts)
    if c["fit"] == "slope":
        assert f"{c['slope_db_per_decade']:+.2f} \u00b1 {c['slope_se_db_per_decade']:.2f} dB/decade" in texts


def test_write_survey_figure_writes_the_file(tmp_path, reports):
    from profiler.plot.survey import write_survey_figure

    path = tmp_path / "s.svg"
    write_survey_figure(reports["offset"], path, dem_paths=DEM)
    assert path.read_text().count("Residual map") == 1


def test_a_survey_of_one_place_is_drawn_without_problems(tmp_path):
    """One location cell, a row outside the data, a missed uplink: no std, no sigma, no cross-validation."""
    import sys

    sys.path.insert(0, str(ROOT / "tests"))
    from sample_sites import GATEWAY, PUMP, TANK

    from profiler import survey
    from profiler.plot.audit import layout_problems
    from profiler.plot.survey import build_survey_figure

    sites = tmp_path / "s.csv"
    sites.write_text(f"name,lat_deg,lon_deg,mast_m,role\nG,{GATEWAY[0]},{GATEWAY[1]},10,gateway\n", encoding="utf-8")
    meas = tmp_path / "m.csv"
    meas.write_text(f"gateway,lat_deg,lon_deg,rssi_dbm,snr_db\nG,{TANK[0]},{TANK[1]},-100,5\nG,-31.5,-19.9,-100,5\n"
                    f"G,{PUMP[0]},{PUMP[1]},,\n", encoding="utf-8")
    rep = survey(sites, meas, dem=DEM, progress=False).to_dict()
    assert rep["calibration"]["cross_validated_rmse_db"] is None and rep["location_sigma_db"] is None
    fig = build_survey_figure(rep, "letter", DEM)
    assert layout_problems(fig) == []
    from matplotlib.text import Text

    texts = {t.get_text() for t in fig.findobj(Text)}
    assert "\u2014 (too few location cells)" in texts
