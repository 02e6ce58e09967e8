"""Sheets and reports of a calibrated run (``--calibration``): the note with the file's digest, the link
budget's "Calibration" row, the rows adding up to the total.

Check values: the digest is ``hashlib.sha256`` of the file's bytes (FIPS 180-4), the row values the
JSON report's ``loss_db`` beside the sheet, and the layout matplotlib's own renderer extents
(:func:`profiler.plot.audit.layout_problems`): A4 and letter, short and 200-character names.
"""

from __future__ import annotations

import copy
import hashlib

import pytest
from sample_sites import DEM, GATEWAY, PUMP, ROOT

from profiler.io.report import model_line, summary_text
from profiler.plot.audit import drawn_texts, layout_problems

NAME_200 = ("Osterby Farm pump house and irrigation controller beside the long southern reservoir dam wall of "
            "the Vellmoor valley water board, station number seventeen, lower terrace, behind the east gate and yard")
PAPERS = ("a4", "letter")


@pytest.fixture(scope="module")
def cal_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("cal") / "vellmoor-calibration.toml"
    path.write_text("offset_db = 3.5\nslope_db_per_decade = 2.0\nlocation_sigma_db = 6.0\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def digest(cal_file):
    return hashlib.sha256(cal_file.read_bytes()).hexdigest()


def _model_texts(fig) -> list[str]:
    return [" ".join(t.get_text().split()) for t in drawn_texts(fig) if t.get_gid() == "title-model"]


def _note(digest) -> str:
    return f"calibrated (sha256 {digest[:12]})"


@pytest.fixture(scope="module")
def link_report(cal_file):
    from profiler.api import link

    return link(GATEWAY, PUMP, dem=DEM, name_a="Cairnfell Beacon", name_b="Osterby Farm pump",
                calibration=cal_file).to_dict()


def _shown(value) -> str:
    return f"{round(value, 1) + 0.0:.1f} dB".replace("-", "\u2212")


@pytest.mark.parametrize(("paper", "names"), [("a4", "short"), ("letter", "200")])
def test_link_sheet_shows_the_calibration_row_and_the_digest(link_report, digest, paper, names):
    from profiler.plot.link import _budget_rows, build_link_figure

    report = copy.deepcopy(link_report)
    if names == "200":
        report["site_a"]["name"], report["site_b"]["name"] = NAME_200, "Millbrook" * 22 + "Tk"
    loss = report["loss_db"]
    rows = dict(_budget_rows(report))
    assert rows["Calibration"] == _shown(loss["calibration"])
    # the rows add up to the total: basic transmission + other + calibration (no terminal term here)
    assert loss["basic_transmission"] + loss["extra"] + loss["polarization"] + loss["calibration"] == \
        pytest.approx(loss["total"], abs=1e-9)
    shown = sum(float(rows[k].replace("\u2212", "-").split()[0]) for k in
                ("Basic transmission loss", "Other losses", "Calibration"))
    assert shown == pytest.approx(float(rows["Total path loss"].split()[0]), abs=0.15)
    fig = build_link_figure(report, paper=paper, dpi=100)
    problems = layout_problems(fig)
    assert problems == [], "\n".join(str(p) for p in problems[:10])
    drawn = [t.get_text() for t in drawn_texts(fig)]
    assert "Calibration" in drawn and rows["Calibration"] in drawn
    assert _model_texts(fig) == [model_line(report)] and model_line(report).endswith(_note(digest))


def test_uncalibrated_link_has_no_row_and_no_note():
    from profiler.api import link
    from profiler.plot.link import _budget_rows

    report = link(GATEWAY, PUMP, dem=DEM).to_dict()
    assert "Calibration" not in dict(_budget_rows(report)) and "calibrated" not in model_line(report)
    assert "calibration" not in summary_text(report).split("losses", 1)[1].split("\n", 1)[0]


def test_link_text_and_pdf_report_name_the_file_and_digest(link_report, cal_file, digest):
    from profiler.plot.report_pdf import build_link_report_pages

    text = summary_text(link_report)
    assert f"calibration   {cal_file} (sha256 {digest})" in text
    assert f"+ calibration {_shown(link_report['loss_db']['calibration']).replace(chr(0x2212), '-')}" in text
    pages = build_link_report_pages(link_report, "a4", 100.0)
    for page in pages:
        problems = layout_problems(page)
        assert problems == [], "\n".join(str(p) for p in problems[:10])
    drawn = [" ".join(t.get_text().split()) for page in pages for t in drawn_texts(page)]
    assert "Calibration (profiler survey)" in drawn
    assert f"{round(link_report['loss_db']['calibration'], 2) + 0.0:.2f} dB" in drawn


def test_mast_sheet_and_report(cal_file, digest):
    from profiler.api import mast
    from profiler.plot.mast import build_mast_figure

    report = mast(GATEWAY, PUMP, dem=DEM, solve="a", calibration=cal_file).to_dict()
    assert report["schema"] == "profiler.mast/4" and report["calibration"]["sha256"] == digest
    for paper in PAPERS:
        fig = build_mast_figure(report, paper)
        problems = layout_problems(fig)
        assert problems == [], "\n".join(str(p) for p in problems[:10])
        assert _model_texts(fig) == [model_line(report)] and model_line(report).endswith(_note(digest))


def test_network_and_siting_sheets(cal_file, digest):
    from profiler.api import network
    from profiler.plot import build_network_figure
    from profiler.plot.siting import build_siting_figure
    from profiler.products.siting.report import siting_from_network

    net = network(str(ROOT / "examples" / "siting_sites.csv"), dem=DEM, progress=False,
                  calibration=cal_file).to_dict()
    rep = siting_from_network(net, min_margin_db=net["fade_margin_db"], redundancy=1)
    assert rep["schema"] == "profiler.siting/4" and rep["settings"]["calibration"]["sha256"] == digest
    for paper in PAPERS:
        for fig in (build_network_figure(net, paper=paper, dem_paths=DEM),
                    build_siting_figure(rep, net, paper=paper, dem_paths=DEM, sheet={"date": "2026-03-15"})):
            problems = layout_problems(fig)
            assert problems == [], "\n".join(str(p) for p in problems[:10])
            assert [t for t in _model_texts(fig) if t.endswith(_note(digest))], _model_texts(fig)


def test_coverage_sheet(cal_file, digest):
    from profiler.api import coverage
    from profiler.plot.coverage import build_coverage_figure

    result = coverage(GATEWAY, dem=DEM, mast_m=10.0, name="Cairnfell Beacon", radius_km=1.5, resolution_m=150.0,
                      progress=False, calibration=cal_file)
    for paper in PAPERS:
        fig = build_coverage_figure(result, paper=paper, dem_paths=DEM, date_text="2026-03-15")
        problems = layout_problems(fig)
        assert problems == [], "\n".join(str(p) for p in problems[:10])
        assert _model_texts(fig) == [model_line(result.to_dict())] and _model_texts(fig)[0].endswith(_note(digest))
