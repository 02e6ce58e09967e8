"""Layout audit of the network map sheet over a matrix of cases, and its counts against the JSON.

The report is the real ``profiler.network/4`` JSON of the bundled Vellmoor scenario
(``examples/vellmoor_network.csv``: 2 existing gateways, 4 candidate sites, 40 nodes) on the
bundled synthetic terrain.  Each sheet (A4 and letter; the sites' own names, 80- and
200-character names; ``links="best"`` and ``"all"``) is checked against matplotlib's own
renderer extents (:func:`profiler.plot.audit.layout_problems`: every text inside the frame and
its panel, no two texts overlapping, nothing shortened with an ellipsis), and every count the
sheet prints is compared with the JSON ``summary`` beside it.  Built at 100 dpi.
"""

import copy
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = str(ROOT / "dem_samples")
EXAMPLE_SITES = ROOT / "examples" / "vellmoor_network.csv"

CASES = [(paper, chars, links) for chars in (None, 200) for paper in ("a4", "letter") for links in ("best", "all")]
CASES += [("letter", 80, "best")]


@pytest.fixture(scope="module")
def report():
    from profiler import network

    return network(str(EXAMPLE_SITES), dem=[SAMPLE], progress=False).to_dict()


def long_names(report: dict, chars: int) -> dict:
    """The report with every site renamed to exactly ``chars`` characters (its name repeated, so still unique)."""
    out = copy.deepcopy(report)
    new = {s["name"]: ((s["name"] + " ") * chars)[:chars - 1] + "x" for s in out["sites"]}
    assert all(len(v) == chars for v in new.values()) and len(set(new.values())) == len(new)
    for site in out["sites"]:
        site["name"] = new[site["name"]]
    for link in out["links"]:
        link["gateway"], link["node"] = new[link["gateway"]], new[link["node"]]
    for node in out["nodes"]:
        for key in ("name", "best_gateway", "best_candidate"):
            if node.get(key) is not None:
                node[key] = new[node[key]]
    return out


@pytest.fixture(scope="module")
def sheets(report):
    """Each case's report and figure, built once."""
    from profiler.plot import build_network_figure

    built = {}
    for paper, chars, links in CASES:
        rep = report if chars is None else long_names(report, chars)
        fig = build_network_figure(rep, paper=paper, dem_paths=[SAMPLE], links=links,
                                   sheet={"project": "Vellmoor valley meters", "date": "2026-03-01"})
        built[paper, chars, links] = (rep, fig)
    return built


def _row_value(fig, label: str) -> str:
    """The text in the same table row as the cell ``label``, right of it."""
    cell = next(t for t in fig.texts if t.get_text() == label)
    x, y = cell.get_position()
    row = [t for t in fig.texts if t is not cell and t.get_position()[1] == y and t.get_position()[0] > x]
    return min(row, key=lambda t: t.get_position()[0]).get_text()


@pytest.mark.parametrize("case", CASES, ids=lambda c: f"{c[0]}-{c[1] or 'short'}-{c[2]}")
def test_network_sheet_passes_the_layout_audit(sheets, case):
    from profiler.plot.audit import layout_problems

    _, fig = sheets[case]
    problems = layout_problems(fig)
    assert problems == [], "\n".join(map(str, problems))


@pytest.mark.parametrize("case", CASES, ids=lambda c: f"{c[0]}-{c[1] or 'short'}-{c[2]}")
def test_sheet_counts_equal_the_json(sheets, case):
    """Gateways and candidates apart on the sheet, with the numbers of the JSON summary."""
    from matplotlib.text import Text

    rep, fig = sheets[case]
    s = rep["summary"]
    texts = [t.get_text() for t in fig.findobj(Text) if t.get_visible()]
    total = s["nodes_total"]
    assert f"{s['nodes_covered_by_gateways']} of {total} nodes covered by gateways" in texts        # the badge
    assert f"{s['gateways']} gateways, {s['candidates']} candidate sites and {total} nodes" in texts  # the title
    expected = {"Existing gateways": s["gateways"], "Candidate sites": s["candidates"], "Nodes": total,
                "Covered by gateways": f"{s['nodes_covered_by_gateways']} of {total} nodes",
                "Twice by gateways": f"{s['nodes_covered_twice']} of {total} nodes",
                "Covered with candidates": f"{s['nodes_covered_with_candidates']} of {total} nodes",
                "Links computed": s["links"], "Closing (\u2265 fade margin)": s["closing"], "Errors": s["errors"]}
    for label, value in expected.items():
        assert _row_value(fig, label) == str(value), label
    roles = [site["role"] for site in rep["sites"]]
    assert (s["gateways"], s["candidates"]) == (roles.count("gateway"), roles.count("candidate"))
    uncovered = [n for n in rep["nodes"] if n["gateways_heard"] == 0]
    assert f"Nodes not covered by gateways ({len(uncovered)})" in texts


@pytest.mark.parametrize("case", [c for c in CASES if c[1] is None], ids=lambda c: f"{c[0]}-{c[2]}")
def test_links_drawn_are_the_best_per_node_or_all(sheets, case):
    """--links best: per node exactly the link from its best gateway and from its best candidate (the
    JSON's nodes[]); all: every link.  The caption states the number drawn."""
    rep, fig = sheets[case]
    ax = next(a for a in fig.axes if a.get_label() == "network-map")
    drawn = sum(len(c.get_segments()) for c in ax.collections if "links-" in (c.get_gid() or ""))
    best = {(n[k], n["name"]) for n in rep["nodes"] for k in ("best_gateway", "best_candidate") if n[k]}
    expected = len(best) if case[2] == "best" else len(rep["links"])
    assert drawn == expected
    caption = next(t.get_text() for t in ax.texts if "links drawn" in t.get_text()).replace("\n", " ")
    count = re.search(r"(all (\d+)|(\d+) of (\d+)) links drawn", caption)
    assert int(count.group(2) or count.group(3)) == expected
