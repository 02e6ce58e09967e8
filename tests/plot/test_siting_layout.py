"""The siting sheet: its layout audited from matplotlib's own text extents, its counts equal to the JSON's.

Check values: the layout from the renderer (``profiler.plot.audit.layout_problems``: every text inside the
frame and its box, none overlapping, none ellipsized); the counts from the ``profiler.siting/4`` report drawn
(summary, chosen[], unreachable[], nodes[].heard_by) and the links from the GeoJSON export beside it.
"""

from __future__ import annotations

import copy
import json
import re
from pathlib import Path

import pytest
from click.testing import CliRunner
from matplotlib.text import Text

from profiler.cli import main
from profiler.plot import audit
from profiler.plot.siting import build_siting_figure, served_links
from profiler.products.siting.report import siting_from_network, siting_geojson_dict

ROOT = Path(__file__).resolve().parents[2]
DEM = [str(ROOT / "dem_samples")]
SITES = ROOT / "examples" / "siting_sites.csv"


def long_name(name: str, length: int = 200) -> str:
    """A ``length``-character name (200: the longest a site list may carry) starting with ``name``."""
    text = f"{name} on the far side of the Vellmoor valley beside the old drove road and the stream "
    text = (text * 4)[:length - 1].rstrip()
    return text + "x" * (length - len(text))


def renamed(network: dict, length: int = 200) -> dict:
    """The network report with every site renamed to ``length`` characters (the links follow)."""
    out = copy.deepcopy(network)
    new = {s["name"]: long_name(s["name"], length) for s in out["sites"]}
    for s in out["sites"]:
        s["name"] = new[s["name"]]
    for lk in out["links"]:
        lk["gateway"], lk["node"] = new[lk["gateway"]], new[lk["node"]]
    for nd in out.get("nodes") or []:
        nd["name"] = new[nd["name"]]
    return out


@pytest.fixture(scope="module")
def networks():
    from profiler.api import network

    short = network(str(SITES), dem=DEM, progress=False).to_dict()
    return {"short": short, "80": renamed(short, 80), "long": renamed(short)}


@pytest.fixture(scope="module")
def sheets(networks):
    """(names, redundancy, paper) -> (siting report, network report, figure at 100 dpi, its layout problems,
    its drawn texts)."""
    out = {}
    for names, net in networks.items():
        for redundancy in (1, 3) if names != "80" else (3,):
            rep = siting_from_network(net, min_margin_db=net["fade_margin_db"], redundancy=redundancy)
            for paper in ("a4", "letter"):
                fig = build_siting_figure(rep, net, paper=paper, dem_paths=DEM, sheet={"date": "2026-03-15"})
                problems = audit.layout_problems(fig)          # draws the sheet once
                texts = [str(t.get_text()) for t in fig.findobj(Text) if t.get_visible() and t.get_text().strip()]
                out[names, redundancy, paper] = (rep, net, fig, problems, texts)
    return out


CASES = [(names, redundancy, paper) for names in ("short", "80", "long") for redundancy in (1, 3)
         for paper in ("a4", "letter") if names != "80" or redundancy == 3]


@pytest.mark.parametrize("case", CASES, ids=["-".join(map(str, c)) for c in CASES])
def test_siting_sheet_layout_is_clean(sheets, case):
    # Renderer extents: nothing outside the frame or its box, no two texts overlapping, nothing cut.
    rep, net, fig, problems, texts = sheets[case]
    assert problems == [], "\n".join(map(str, problems))


def segments(fig, status) -> int:
    """Segments drawn in the style of ``status``, from existing gateways and from candidate sites."""
    ax = next(a for a in fig.axes if a.get_label() == "siting-map")
    found = [c for c in ax.collections if c.get_gid() in (f"links-{status}", f"candidate-links-{status}")]
    return sum(len(c.get_segments()) for c in found)


def markers(fig, gid) -> int:
    ax = next(a for a in fig.axes if a.get_label() == "siting-map")
    return sum(len(line.get_xdata()) for line in ax.get_lines() if line.get_gid() == gid)


@pytest.mark.parametrize("case", CASES, ids=["-".join(map(str, c)) for c in CASES])
def test_siting_sheet_counts_equal_the_json(sheets, case):
    # Issue 17: with --redundancy 3 the old sheet said "5 of 5 nodes covered" and "Nodes not covered (0)"
    # while the report had an unreachable node, and drew the links of sites that were not chosen.
    rep, net, fig, problems, texts = sheets[case]
    s = rep["summary"]
    r = rep["redundancy"]
    times = "once" if r == 1 else f"{r} times"
    joined = " ".join(texts)
    assert f"{s['nodes_heard']} of {s['nodes_total']} nodes heard {times}" in texts          # the badge
    assert f"{s['nodes_heard']} of {s['nodes_total']}, each {times}" in texts                # the table
    assert f"Chosen sites ({len(rep['chosen'])}), total cost {s['cost_total']:g}" in texts
    assert f"Unreachable nodes ({len(rep['unreachable'])})" in texts
    assert any(t.startswith("Gateway siting: ") for t in texts) and "Network map" not in joined
    assert "report profiler.siting/4" in joined and "profiler.network/" not in joined
    assert "covered" not in joined.lower()
    for word in ("optimal", "greedy", "redundancy"):
        assert word in joined.lower(), word
    assert ("proven optimal, gap 0" if rep["proven_optimal"] else "not proven optimal") in joined
    assert f"{r} chosen site{'s' if r > 1 else ''} per node asked" in texts
    # Links only from chosen sites to the nodes they hear (the GeoJSON's links): the best server solid.
    geo = [f["properties"] for f in siting_geojson_dict(rep, net)["features"] if f["properties"]["feature"] == "link"]
    assert segments(fig, "closes") == sum(p["best"] for p in geo) == sum(bool(n["heard_by"]) for n in rep["nodes"])
    assert segments(fig, "error") == sum(not p["best"] for p in geo)
    assert {p["gateway"] for p in geo} <= set(rep["chosen"])
    assert f"{len(geo)}: {sum(p['best'] for p in geo)} best servers, {sum(not p['best'] for p in geo)} others" in texts
    assert markers(fig, "sites-highlight") == len(rep["chosen"])
    assert markers(fig, "sites-marked") == len(rep["unreachable"])


def test_redundancy_three_lists_the_unreachable_node_with_its_reason(sheets):
    rep, net, fig, problems, texts = sheets["short", 3, "a4"]
    assert [u["name"] for u in rep["unreachable"]] == ["Saltmarsh Lane trough"]     # docs/siting.md: siting example
    joined = " ".join(texts)
    assert "Saltmarsh Lane trough: heard by 2 site(s)" in joined
    assert "terrain blocks the line of sight" in joined


def test_served_links_follow_heard_by():
    rep = {"nodes": [{"name": "n1", "heard_by": ["A", "B"], "heard_by_margin_db": [12.0, 10.5]},
                     {"name": "n2", "heard_by": [], "heard_by_margin_db": []}]}
    assert served_links(rep) == [("A", "n1", 12.0, True), ("B", "n1", 10.5, False)]


def svg_texts(path) -> str:
    import xml.etree.ElementTree as ET

    root = ET.parse(path).getroot()
    return " ".join("".join(el.itertext()) for el in root.iter("{http://www.w3.org/2000/svg}text"))


def test_siting_plot_from_the_command_line(tmp_path):
    # The command: `profiler siting ... --redundancy 3 --plot s.png` (as SVG to read the text back),
    # with the title-block options and --date, and the KML of the chosen sites and the links used.
    out = tmp_path / "s.svg"
    res = CliRunner().invoke(main, ["siting", "--dem", DEM[0], "--sites", str(SITES), "--redundancy", "3",
                                    "--plot", str(out), "--json", str(tmp_path / "s.json"), "--kml",
                                    str(tmp_path / "s.kml"), "--project", "Vellmoor telemetry",
                                    "--prepared-by", "R. Tallis", "--date", "2026-03-15", "--no-progress"],
                             catch_exceptions=False)
    assert res.exit_code == 0, res.output
    rep = json.loads((tmp_path / "s.json").read_text())
    text = svg_texts(out)
    assert "Gateway siting" in text and "Network map" not in text
    assert "4 of 5 nodes heard 3 times" in text and "5 of 5" not in text
    assert rep["summary"]["nodes_heard"] == 4 and rep["summary"]["nodes_unreachable"] == 1
    assert "Vellmoor telemetry" in text and "R. Tallis" in text and "2026-03-15" in text
    kml = (tmp_path / "s.kml").read_text()
    assert kml.count("<LineString>") == sum(len(n["heard_by"]) for n in rep["nodes"])
    assert all(re.search(rf"<name>{re.escape(n)}</name>", kml) for n in rep["chosen"])
    # the warning about the failed link once, in the terminal summary too
    assert res.stdout.count("could not be computed") == 1


def test_api_siting_returns_a_result_like_network(networks):
    # Issue 17: profiler.siting(...) returned a dict while profiler.network(...) returns a result with .to_dict().
    import profiler

    res = profiler.siting(str(SITES), dem=DEM, redundancy=3, progress=False)
    assert not isinstance(res, dict)
    rep = res.to_dict()
    assert rep["schema"] == "profiler.siting/4"
    assert rep == siting_from_network(networks["short"], redundancy=3)
    assert res.network["schema"] == "profiler.network/5"
    assert (res.chosen, res.objective, res.proven_optimal, res.gap) == (rep["chosen"], rep["objective"],
                                                                        rep["proven_optimal"], rep["gap"])
    assert res.greedy == rep["greedy"] and res.unreachable == rep["unreachable"] and res.summary == rep["summary"]


def test_max_coverage_and_unproven_answers_are_stated(networks):
    # At most K sites (objective: nodes heard), and an answer the solver did not prove (time limit): the
    # sheet says which, with the gap, and stays clean. The unproven report is the proven one marked so.
    net = networks["short"]
    most = siting_from_network(net, min_margin_db=net["fade_margin_db"], max_gateways=2)
    unproven = dict(siting_from_network(net, min_margin_db=net["fade_margin_db"]), proven_optimal=False, gap=0.05,
                    status="time limit reached")
    for rep, expected in ((most, f"{most['objective']:g} nodes heard once (most)"),
                          (unproven, "not proven optimal, gap 0.05 (time limit reached)")):
        fig = build_siting_figure(rep, net, paper="letter")
        problems = audit.layout_problems(fig)
        assert problems == [], "\n".join(map(str, problems))
        assert expected in [t.get_text().replace("\n", " ") for t in fig.findobj(Text)]   # table cells wrap
