"""Continuation sheets: what a sheet's lists have no room for continues on further sheets, never dropped.

Check values: the lists of the JSON report beside each sheet (coverage ``gateways[]``, network ``nodes[]``
not heard by an existing gateway, siting ``chosen[]`` and ``unreachable[]``) against the texts matplotlib
draws on the sheets (map labels left out, so a name counts only where the lists print it); the layout
from the renderer's own extents (:func:`profiler.plot.audit.layout_problems`); the page count of a PDF
from its ``/Type /Page`` objects (ISO 32000-1, 7.7.3.3, page objects).  Built at 100 dpi.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from matplotlib.text import Text
from test_network_layout import long_names  # noqa: E402  (the tests folder is on the path, as sample_sites)

from profiler.errors import ProfilerError
from profiler.io.outputs import Output, write_outputs
from profiler.plot import audit

ROOT = Path(__file__).resolve().parents[2]
DEM = [str(ROOT / "dem_samples")]
NETWORK_SITES = ROOT / "examples" / "vellmoor_network.csv"
MAPS = {"coverage-map", "network-map", "siting-map"}


def sheet_text(figures) -> str:
    """Every drawn text of the sheets except the map's, whitespace removed (a wrapped name joins again)."""
    texts = [str(t.get_text()) for fig in figures for t in fig.findobj(Text)
             if t.get_visible() and not (t.axes is not None and t.axes.get_label() in MAPS)]
    return re.sub(r"\s+", "", "".join(texts))


def on_sheets(name: str, drawn: str) -> bool:
    return re.sub(r"\s+", "", name) in drawn


def pdf_pages(path) -> int:
    """Page objects of a PDF (``/Type /Page``, not ``/Pages``)."""
    return len(re.findall(rb"/Type\s*/Page(?![a-z])", Path(path).read_bytes()))


def renamed(report: dict) -> dict:
    """The network report with every site renamed to 200 characters (the longest a site list may carry)."""
    return long_names(report, 200)


def assert_clean(figures):
    for k, fig in enumerate(figures, start=1):
        assert [str(p) for p in audit.layout_problems(fig)] == [], f"sheet {k}"


# --------------------------------------------------------------------------- coverage: 6 sites
@pytest.fixture(scope="module")
def coverage_result():
    from profiler import coverage

    return coverage(dem=DEM, sites=NETWORK_SITES, radius_km=3, resolution_m=300, progress=False)


def test_coverage_sites_all_on_the_sheets(coverage_result):
    from profiler.plot.coverage import build_coverage_sheets

    names = [s["name"] for s in coverage_result.report["gateways"]]
    assert len(names) == 6
    for paper in ("a4", "letter"):
        figures = build_coverage_sheets(coverage_result, paper=paper, dem_paths=DEM, date_text="2026-03-15")
        assert len(figures) >= 2          # the site table has no room for all six beside the area table
        drawn = sheet_text(figures)
        assert [n for n in names if not on_sheets(n, drawn)] == []
        assert "continuedonsheet2" in sheet_text(figures[:1])
        assert f"Sheet2of{len(figures)}" in drawn and "(continued)" in sheet_text(figures[1:2])
        assert_clean(figures)


def test_coverage_png_writes_name_2_and_pdf_more_pages(coverage_result, tmp_path):
    from profiler.api import coverage_outputs

    report = coverage_result.to_dict()
    png, pdf = tmp_path / "c.png", tmp_path / "c.pdf"
    write_outputs(coverage_outputs(plot=png, dpi=60, dem_paths=DEM, result=coverage_result), report)
    assert (tmp_path / "c-2.png").is_file() and not (tmp_path / "c-3.png").exists()
    write_outputs(coverage_outputs(plot=pdf, dpi=60, dem_paths=DEM, result=coverage_result), report)
    assert pdf_pages(pdf) == 2
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c-2.png", "c.pdf", "c.png"]


def test_a_failing_later_output_leaves_no_continuation_file(coverage_result, tmp_path):
    from profiler.api import coverage_outputs

    def fails(report, path):
        raise ProfilerError("the later output fails")

    good, bad = tmp_path / "good", tmp_path / "bad"
    good.mkdir()
    bad.mkdir()
    write_outputs(coverage_outputs(plot=good / "c.png", dpi=60, dem_paths=DEM, result=coverage_result),
                  coverage_result.to_dict())
    assert sorted(p.name for p in good.iterdir()) == ["c-2.png", "c.png"]       # the run has a continuation sheet
    outputs = coverage_outputs(plot=bad / "c.png", dpi=60, dem_paths=DEM, result=coverage_result)
    with pytest.raises(ProfilerError, match="later output"):
        write_outputs(outputs + [Output("--csv", bad / "late.csv", fails)], coverage_result.to_dict())
    assert list(bad.iterdir()) == []        # neither the sheet, nor its continuation, nor a temporary file


def test_stale_continuation_sheets_removed_others_kept(coverage_result, tmp_path):
    from profiler.api import coverage_outputs

    outputs = coverage_outputs(plot=tmp_path / "c.png", dpi=60, dem_paths=DEM, result=coverage_result)
    write_outputs(outputs, coverage_result.to_dict())
    (tmp_path / "c-3.png").write_bytes((tmp_path / "c-2.png").read_bytes())     # sheet 3 of an earlier run
    (tmp_path / "c-4.png").write_bytes(b"a picture of someone else's")          # not a continuation sheet
    (tmp_path / "c-3b.png").write_bytes((tmp_path / "c-2.png").read_bytes())    # not the exact pattern
    write_outputs(outputs, coverage_result.to_dict())
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c-2.png", "c-3b.png", "c-4.png", "c.png"]


# --------------------------------------------------------------------------- network: 40 nodes not covered
@pytest.fixture(scope="module")
def uncovered_network(tmp_path_factory):
    """The Vellmoor gateways, one candidate and 20 nodes with a 60 dB fade margin (few nodes covered)
    and 200-character names."""
    from profiler import network
    from profiler.engine.radio import RadioSettings

    rows = NETWORK_SITES.read_text(encoding="utf-8").splitlines()
    csv = tmp_path_factory.mktemp("net") / "sites.csv"
    csv.write_text("\n".join(rows[:4] + rows[7:27]) + "\n", encoding="utf-8")
    report = network(str(csv), dem=DEM, radio=RadioSettings(fade_margin_db=60.0), progress=False)
    return renamed(report.to_dict())


def test_network_nodes_not_covered_all_on_the_sheets(uncovered_network, tmp_path):
    from profiler.plot.network import build_network_sheets
    from profiler.plot.sheet import write_sheet

    report = uncovered_network
    missing = [n["name"] for n in report["nodes"] if not n["gateways_heard"]]
    s = report["summary"]
    assert len(missing) == s["nodes_total"] - s["nodes_covered_by_gateways"] > 12
    figures = build_network_sheets(report, paper="letter", dem_paths=None, sheet={"date": "2026-03-15"})
    drawn = sheet_text(figures)
    assert len(figures) >= 2 and [n for n in missing if not on_sheets(n, drawn)] == []
    assert f"Nodesnotcoveredbygateways({len(missing)})" in drawn            # the JSON's count
    assert "continuedonsheet2" in sheet_text(figures[:1])
    assert_clean(figures)
    write_sheet(tmp_path / "n.pdf", "letter", 40, lambda: figures, "Network map", report)     # as drawn above
    assert pdf_pages(tmp_path / "n.pdf") == len(figures)


# --------------------------------------------------------------------------- siting: long lists
def test_siting_lists_all_on_the_sheets():
    from profiler import network
    from profiler.plot.siting import build_siting_sheets
    from profiler.products.siting.report import siting_from_network

    net = renamed(network(str(NETWORK_SITES), dem=DEM, progress=False).to_dict())
    rep = siting_from_network(net, min_margin_db=25.0, redundancy=2)
    entries = list(rep["chosen"]) + [u["name"] for u in rep["unreachable"]] + list(rep["greedy"]["chosen"])
    assert rep["unreachable"] and rep["chosen"]
    figures = build_siting_sheets(rep, net, paper="a4", dem_paths=None, sheet={"date": "2026-03-15"})
    drawn = sheet_text(figures)
    assert len(figures) >= 2 and [n for n in entries if not on_sheets(n, drawn)] == []
    assert f"Chosensites({len(rep['chosen'])})" in drawn
    assert "continuedonsheet2" in sheet_text(figures[:1])
    assert_clean(figures)
