"""The propagation model under every sheet's verdict, and the link budget's P.1812-8 loss parts.

Check values:

- the wording issue 19 asks for under the verdict, "P.1812-8, 50 % time,
  95 % locations", with the percentages of the JSON report beside the sheet;
- the loss parts against the JSON report's ``loss_db`` and ``p1812`` block,
  the free-space row against ITU-R P.1812-8 eq. (8),
  Lbfs = 92.4 + 20 log f[GHz] + 20 log d_fs[km] with
  d_fs = sqrt(d² + ((hts − hrs)/1000)²);
- the layout with matplotlib's own renderer extents
  (:func:`profiler.plot.audit.layout_problems`), A4 and letter, short and
  200-character names, for both models.
"""

from __future__ import annotations

import copy
import dataclasses
import json
import math

import pytest
from click.testing import CliRunner
from matplotlib.text import Text
from sample_sites import DEM, GATEWAY, PUMP, ROOT

from profiler.cli import main
from profiler.engine.model import PropagationSettings
from profiler.engine.radio import RadioSettings
from profiler.io.report import model_line
from profiler.plot.audit import drawn_texts, layout_problems

ISSUE_LINE = "P.1812-8, {time:g} % time, {locations:g} % locations"     # issue 19, "Deliver" item 3
TERRAIN_LINE = "Terrain model (free space + delta-bullington diffraction), median"
NAME_200 = ("Osterby Farm pump house and irrigation controller beside the long southern reservoir dam wall of "
            "the Vellmoor valley water board, station number seventeen, lower terrace, behind the east gate and yard")
MODELS = ("p1812", "terrain")
PAPERS = ("a4", "letter")


def _radio(model):
    """The run's radio settings: P.1812-8 at 50 % time and 95 % locations, or the terrain model."""
    prop = PropagationSettings(model="p1812", location_percent=95.0) if model == "p1812" else \
        PropagationSettings(model="terrain")
    return dataclasses.replace(RadioSettings(), propagation=prop)


def _expected(model, settings) -> str:
    """The line the issue asks for, from the percentages the JSON holds."""
    if model == "terrain":
        return TERRAIN_LINE
    return ISSUE_LINE.format(time=settings["time_percent"], locations=settings["location_percent"])


def _model_texts(fig) -> list[str]:
    """The drawn model line(s) under the badge (gid ``title-model``), line breaks as spaces."""
    return [" ".join(t.get_text().split()) for t in drawn_texts(fig) if t.get_gid() == "title-model"]


def _under_badge(fig) -> bool:
    """The model line lies below the verdict badge and within its column (right-aligned under it)."""
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    texts = {t.get_gid(): t for t in fig.findobj(Text) if t.get_gid() in ("title-badge", "title-model")}
    badge = texts["title-badge"].get_bbox_patch().get_window_extent(renderer)
    line = texts["title-model"].get_window_extent(renderer)
    return line.y1 <= badge.y0 + 0.5 and abs(line.x1 - (badge.x1 - 0.45 * texts["title-badge"].get_fontsize()
                                                         * renderer.dpi / 72.0)) < 2.0


# --------------------------------------------------------------------------- the link sheet
@pytest.fixture(scope="module")
def link_reports():
    from profiler.api import link

    return {model: link(GATEWAY, PUMP, dem=DEM, name_a="Cairnfell Beacon", name_b="Osterby Farm pump",
                        mast_a_m=10.0, mast_b_m=2.0, radio=_radio(model)).to_dict() for model in MODELS}


def test_model_line_wording(link_reports):
    p1812, terrain = link_reports["p1812"], link_reports["terrain"]
    assert p1812["model"] == "p1812" and p1812["propagation"]["location_percent"] == 95.0
    assert model_line(p1812) == "P.1812-8, 50 % time, 95 % locations"          # the issue's own example
    assert model_line(p1812) == PropagationSettings(model="p1812", location_percent=95.0).summary()
    assert terrain["loss_db"]["diffraction_method"] == "delta-bullington"
    assert model_line(terrain) == TERRAIN_LINE
    assert model_line({"settings": {"model": "p1812", "time_percent": 10.0, "location_percent": 50.0}}) == \
        "P.1812-8, 10 % time, 50 % locations"
    assert model_line({}) == ""


# p1812 is the default model: tests/plot/test_layout_audit.py audits its whole matrix; here both models
# meet both papers and both name lengths once each.
@pytest.mark.parametrize(("model", "paper", "names"), [("p1812", "a4", "short"), ("p1812", "letter", "200"),
                                                       ("terrain", "a4", "200"), ("terrain", "letter", "short")])
def test_link_sheet_states_the_model_under_the_verdict(link_reports, model, paper, names):
    from profiler.plot.link import build_link_figure

    report = copy.deepcopy(link_reports[model])
    if names == "200":
        report["site_a"]["name"], report["site_b"]["name"] = NAME_200, "Millbrook" * 22 + "Tk"
    fig = build_link_figure(report, paper=paper, dpi=100)
    problems = layout_problems(fig)
    assert problems == [], "\n".join(str(p) for p in problems[:10])
    assert _model_texts(fig) == [_expected(model, report["propagation"])]
    assert _under_badge(fig)


def _shown(value) -> str:
    """A loss as the sheet shows it: 0.1 dB, U+2212 for a minus sign, no negative zero."""
    return f"{round(value, 1) + 0.0:.1f} dB".replace("-", "\u2212")


def test_link_budget_parts_equal_the_json_and_add_up(link_reports):
    from profiler.plot.link import _budget_rows, build_link_figure

    report = link_reports["p1812"]
    loss, p = report["loss_db"], report["p1812"]
    # eq. (8) of P.1812-8 from the block's inputs
    d_fs = math.hypot(p["d_km"], (p["hts_m"] - p["hrs_m"]) / 1000.0)
    assert loss["free_space"] == pytest.approx(92.4 + 20 * math.log10(p["f_ghz"]) + 20 * math.log10(d_fs), abs=1e-9)
    assert loss["basic_transmission"] == pytest.approx(p["lb_db"], abs=1e-9)
    assert loss["location"] == pytest.approx(p["location_term_db"], abs=1e-9) and loss["location"] > 0.0
    parts = loss["free_space"] + loss["diffraction"] + loss["combination"] + loss["location"]
    assert parts == pytest.approx(loss["basic_transmission"], abs=1e-9)
    assert loss["basic_transmission"] + loss["extra"] + loss["polarization"] == pytest.approx(loss["total"], abs=1e-9)
    rows = dict(_budget_rows(report))
    expected = {"Free-space loss (eq. 8)": loss["free_space"], "Diffraction (50 % time)": loss["diffraction"],
                "Combination term": loss["combination"], "Location term (95 %)": loss["location"],
                "Basic transmission loss": loss["basic_transmission"],
                "Other losses": loss["extra"] + loss["polarization"], "Total path loss": loss["total"]}
    for label, value in expected.items():
        assert rows[label] == _shown(value), label
    assert "\u22120.0" not in " ".join(rows.values())
    drawn = [t.get_text() for t in drawn_texts(build_link_figure(report, dpi=100))]
    for label, value in expected.items():                  # each row is on the sheet, label and number
        assert label in drawn and _shown(value) in drawn, label


def test_terrain_budget_rows_unchanged(link_reports):
    from profiler.plot.link import _budget_rows

    report = link_reports["terrain"]
    loss = report["loss_db"]
    rows = _budget_rows(report)
    assert [label for label, _ in rows[:5]] == ["Diffraction method", "Free-space loss", "Diffraction loss",
                                                "Other losses", "Total path loss"]
    assert dict(rows)["Total path loss"] == _shown(loss["total"])
    assert loss["free_space"] + loss["diffraction"] + loss["extra"] + loss["polarization"] == \
        pytest.approx(loss["total"], abs=1e-9)
    assert not any("Combination" in label or "Location" in label for label, _ in rows)


@pytest.mark.parametrize("model", MODELS)
def test_report_pdf_loss_table_and_model_line(link_reports, model):
    from profiler.plot.report_pdf import build_link_report_pages

    report = link_reports[model]
    loss = report["loss_db"]
    pages = build_link_report_pages(report, "a4", 100.0)
    for page in pages:
        problems = layout_problems(page)
        assert problems == [], "\n".join(str(p) for p in problems[:10])
    for page in pages[1:]:                                  # the sheet is page 1 (tested above)
        assert _model_texts(page) == [_expected(model, report["propagation"])]
    drawn = [" ".join(t.get_text().split()) for t in drawn_texts(pages[1])]

    def cell(value):
        return f"{round(value, 2) + 0.0:.2f} dB".replace("-", "\u2212")

    keys = ("free_space", "diffraction", "extra", "polarization", "total")
    if model == "p1812":
        keys += ("combination", "location", "basic_transmission")
        for label in ("Free space (eq. 8)", "Diffraction (50 % time)", "Location term (95 % locations)",
                      "Basic transmission loss"):
            assert label in drawn
        assert model_line(report) in drawn
    else:
        assert not any(text.startswith(("Combination", "Location term", "Basic transmission")) for text in drawn)
    for key in keys:
        assert cell(loss[key]) in drawn, key


# --------------------------------------------------------------------------- mast, network, coverage, siting
def _cli(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.fixture(scope="module")
def mast_reports(tmp_path_factory):
    folder = tmp_path_factory.mktemp("mast-model")
    out = {}
    for model, extra in (("p1812", ["--location-percent", "95"]), ("terrain", ["--model", "terrain"])):
        path = folder / f"{model}.json"
        res = _cli("mast", "--dem", DEM[0], "--site-a", f"{GATEWAY[0]},{GATEWAY[1]}", "--site-b",
                   f"{PUMP[0]},{PUMP[1]}", "--solve", "a", *extra, "--json", path)
        assert res.exit_code == 0, res.output
        out[model] = json.loads(path.read_text(encoding="utf-8"))
    return out


@pytest.mark.parametrize("paper", PAPERS)
@pytest.mark.parametrize("model", MODELS)
def test_mast_sheet_states_the_model(mast_reports, model, paper):
    from profiler.plot.mast import build_mast_figure

    report = mast_reports[model]
    assert report["model"] == model
    fig = build_mast_figure(report, paper)
    problems = layout_problems(fig)
    assert problems == [], "\n".join(str(p) for p in problems[:10])
    assert _model_texts(fig) == [_expected(model, report["propagation"])]
    assert _under_badge(fig)


@pytest.fixture(scope="module")
def networks():
    from profiler.api import network

    return {model: network(str(ROOT / "examples" / "siting_sites.csv"), dem=DEM, radio=_radio(model),
                           progress=False).to_dict() for model in MODELS}


@pytest.mark.parametrize("paper", PAPERS)
@pytest.mark.parametrize("model", MODELS)
def test_network_sheet_states_the_model(networks, model, paper):
    from profiler.plot import build_network_figure

    report = networks[model]
    assert report["settings"]["model"] == model
    fig = build_network_figure(report, paper=paper, dem_paths=DEM)
    problems = layout_problems(fig)
    assert problems == [], "\n".join(str(p) for p in problems[:10])
    assert _model_texts(fig) == [_expected(model, report["settings"])]
    assert _under_badge(fig)


@pytest.mark.parametrize("model", MODELS)
def test_siting_report_settings_and_sheet(networks, model):
    from profiler.plot.siting import build_siting_figure
    from profiler.products.siting.report import siting_from_network

    net = networks[model]
    rep = siting_from_network(net, min_margin_db=net["fade_margin_db"], redundancy=1)
    assert rep["schema"] == "profiler.siting/3"
    assert rep["settings"] == {key: net["settings"][key] for key in ("model", "time_percent", "location_percent",
                                                                     "diffraction_method")}
    for paper in PAPERS:
        fig = build_siting_figure(rep, net, paper=paper, dem_paths=DEM, sheet={"date": "2026-03-15"})
        problems = layout_problems(fig)
        assert problems == [], "\n".join(str(p) for p in problems[:10])
        assert _model_texts(fig) == [_expected(model, rep["settings"])]


@pytest.mark.parametrize("model", MODELS)
def test_coverage_sheet_states_the_model(model):
    from profiler.plot.coverage import build_coverage_figure
    from profiler.products.coverage.map import coverage

    result = coverage(GATEWAY, dem=DEM, mast_m=10.0, name="Cairnfell Beacon", radius_km=1.5, resolution_m=150.0,
                      radio=_radio(model), progress=False)
    settings = result.report["settings"]
    assert settings["model"] == model
    for paper in PAPERS:
        fig = build_coverage_figure(result, paper=paper, dem_paths=DEM, date_text="2026-03-15")
        problems = layout_problems(fig)
        assert problems == [], "\n".join(str(p) for p in problems[:10])
        assert _model_texts(fig) == [_expected(model, settings)]


@pytest.mark.parametrize("model", MODELS)
@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_link_sheet_shows_every_terminal_term(tmp_path, model, paper):
    # Issue 20: each terminal term (P.2108 clutter correction, P.2109 building entry, fixed extra loss per end)
    # is on the sheet under its own name, equal to the JSON, and the rows add up to the total.
    from click.testing import CliRunner

    from profiler.cli import main
    from profiler.plot.link import _budget_rows, build_link_figure

    out = tmp_path / "r.json"
    args = ["link", "--dem", "dem_samples", "--site-a", "-29.9125,-19.955", "--site-b", "-29.9,-19.825",
            "--model", model, "--clutter-b", "urban", "--indoor-b", "traditional", "--indoor-a", "thermally-efficient",
            "--extra-loss-a-db", "2", "--extra-loss-b-db", "3", "--json", str(out)]
    assert CliRunner().invoke(main, args).exit_code == 0
    report = json.loads(out.read_text())
    loss = report["loss_db"]
    rows = dict(_budget_rows(report))
    terms = {"Building entry at A": "building_entry_a", "Building entry at B": "building_entry_b",
             "Extra loss at A": "extra_a", "Extra loss at B": "extra_b",
             **({"Clutter at B": "clutter_b"} if model == "terrain" else {})}
    for label, key in terms.items():
        assert loss[key] > 0 and rows[label] == _shown(loss[key]), label
    ends = sum(loss[f"{k}_{e}"] for k in ("clutter", "building_entry", "extra") for e in "ab")
    assert loss["basic_transmission"] + ends + loss["extra"] + loss["polarization"] == \
        pytest.approx(loss["total"], abs=1e-9)
    fig = build_link_figure(report, paper=paper, dpi=100)
    drawn = [t.get_text() for t in drawn_texts(fig)]
    assert all(label in drawn for label in terms)
    problems = layout_problems(fig)
    assert problems == [], "\n".join(str(p) for p in problems[:10])
