"""Gateway siting: MILP optimum against brute-force enumeration, variants, report builders.

The independent reference for every optimum is exhaustive enumeration of
all subsets of candidate sites (itertools), which is correct by
definition; the greedy worst case is the standard set-cover construction
(two "row" sets against columns of doubling size, cf. Johnson 1974 and
Chvatal 1979, from memory).
"""

from __future__ import annotations

import csv
import io
import itertools
import json

import numpy as np
import pytest

from profiler.about import CAUTION
from profiler.errors import ProfilerError
from profiler.products.siting.report import (
    margin_matrix,
    site_costs,
    siting_csv_text,
    siting_from_network,
    siting_geojson_dict,
    siting_geojson_text,
)
from profiler.products.siting.setcover import greedy_siting, hearing_matrix, solve_siting


# --------------------------------------------------------------------------- brute-force references
def brute_min_cost(hears, cost, fixed, redundancy):
    """Least total cost of candidates (fixed ones free and open) covering every reachable node R times."""
    m = hears.shape[0]
    reachable = hears.sum(axis=0) >= redundancy
    free = [j for j in range(m) if j not in fixed]
    best = np.inf
    for k in range(len(free) + 1):
        for subset in itertools.combinations(free, k):
            opened = list(fixed) + list(subset)
            if np.all((hears[opened].sum(axis=0) >= redundancy)[reachable]):
                best = min(best, float(np.sum(cost[list(subset)])))
    return best


def brute_max_coverage(hears, margin, fixed, redundancy, k_max):
    """Best (nodes heard R times, total best margin of those nodes) with at most K sites."""
    m = hears.shape[0]
    free = [j for j in range(m) if j not in fixed]
    best = (-1, -np.inf)
    for k in range(k_max - len(fixed) + 1):
        for subset in itertools.combinations(free, k):
            opened = list(fixed) + list(subset)
            covered = hears[opened].sum(axis=0) >= redundancy
            best_margin = np.where(hears[opened], margin[opened], -np.inf).max(axis=0, initial=-np.inf)
            best = max(best, (int(covered.sum()), round(float(best_margin[covered].sum()), 6)))
    return best


def random_instance(rng, density=0.4):
    m, n = int(rng.integers(3, 8)), int(rng.integers(1, 12))
    hears = rng.random((m, n)) < density
    margin = np.where(hears, np.round(rng.uniform(0.0, 30.0, (m, n)), 1), np.nan)
    return hears, margin


def covered_enough(hears, chosen, redundancy):
    reachable = hears.sum(axis=0) >= redundancy
    return bool(np.all((hears[chosen].sum(axis=0) >= redundancy)[reachable]))


# --------------------------------------------------------------------------- exact optimum
@pytest.mark.parametrize("redundancy", [1, 2])
def test_min_cost_equals_brute_force(redundancy):
    rng = np.random.default_rng(12 + redundancy)
    for _ in range(25):
        hears, margin = random_instance(rng)
        if hears.shape[0] < redundancy:
            continue
        cost = rng.integers(1, 6, hears.shape[0]).astype(float)
        fixed = [int(f) for f in np.flatnonzero(rng.random(hears.shape[0]) < 0.2)]
        sol = solve_siting(hears, cost=cost, fixed=fixed, redundancy=redundancy, margin_db=margin)
        assert sol.proven_optimal and sol.status.startswith(("optimal", "nothing to solve"))
        assert sol.objective == pytest.approx(brute_min_cost(hears, cost, fixed, redundancy))
        assert covered_enough(hears, sol.chosen, redundancy)
        assert set(fixed) <= set(sol.chosen.tolist())
        assert sol.objective == pytest.approx(cost[[j for j in sol.chosen if j not in fixed]].sum())
        assert sol.gap == pytest.approx(0.0, abs=1e-9)
        # The greedy choice is feasible and never cheaper than the optimum.
        assert covered_enough(hears, sol.greedy_chosen, redundancy)
        assert sol.greedy_objective >= sol.objective - 1e-9


@pytest.mark.parametrize("redundancy", [1, 2])
def test_max_coverage_equals_brute_force_with_margin_tiebreak(redundancy):
    rng = np.random.default_rng(40 + redundancy)
    for _ in range(25):
        hears, margin = random_instance(rng, density=0.5)
        m = hears.shape[0]
        if m < redundancy:
            continue
        fixed = [0] if rng.random() < 0.3 else []
        k_max = int(rng.integers(max(1, len(fixed)), m + 1))
        sol = solve_siting(hears, fixed=fixed, redundancy=redundancy, max_gateways=k_max, margin_db=margin)
        ref = brute_max_coverage(hears, margin, fixed, redundancy, k_max)
        assert (int(sol.objective), round(sol.margin_total_db, 6)) == ref
        assert len(sol.chosen) <= k_max and set(fixed) <= set(sol.chosen.tolist())
        assert sol.proven_optimal
        assert sol.greedy_objective <= sol.objective


def test_max_coverage_tie_broken_by_total_margin():
    # Sites 0 and 1 hear the same three nodes; site 1 with 2 dB more on each. K = 1.
    hears = np.array([[1, 1, 1], [1, 1, 1], [1, 0, 0]], dtype=bool)
    margin = np.array([[10.0, 11.0, 12.0], [12.0, 13.0, 14.0], [30.0, np.nan, np.nan]])
    sol = solve_siting(hears, max_gateways=1, margin_db=margin)
    assert sol.chosen.tolist() == [1]
    assert sol.objective == 3 and sol.margin_total_db == pytest.approx(39.0)
    assert "ties broken by total margin" in sol.status
    # K = 2: all three are heard by {0, 1} or {1, 2}; {1, 2} adds node 0 at 30 dB: 30 + 13 + 14.
    sol2 = solve_siting(hears, max_gateways=2, margin_db=margin)
    assert sorted(sol2.chosen.tolist()) == [1, 2] and sol2.margin_total_db == pytest.approx(57.0)
    # heard_by is best margin first.
    assert sol2.heard_by[0].tolist() == [2, 1]


def greedy_worst_case(columns=3):
    """Standard greedy set-cover worst case: 2 rows x (2^columns - 1) elements.

    Sets: row 0, row 1 (2^c - 1 elements each), and blocks B_t of 2^t
    columns (t = 0..c-1, both rows: 2^(t+1) elements).  Greedy takes the
    blocks, largest first (2^c > 2^c - 1 each time), c sets in all; the
    optimum is the two rows (from memory; cf. Johnson 1974, Chvatal 1979).
    """
    width = 2 ** columns - 1
    node = np.arange(2 * width).reshape(2, width)
    hears = np.zeros((2 + columns, 2 * width), dtype=bool)
    hears[0, node[0]] = True
    hears[1, node[1]] = True
    start = 0
    for t in range(columns):
        hears[2 + t, node[:, start:start + 2 ** t].ravel()] = True
        start += 2 ** t
    return hears


@pytest.mark.parametrize("columns", [3, 4])
def test_greedy_needs_more_sites_than_optimum(columns):
    hears = greedy_worst_case(columns)
    sol = solve_siting(hears)
    assert sorted(sol.chosen.tolist()) == [0, 1] and sol.objective == 2
    assert sol.greedy_objective == columns
    assert sorted(sol.greedy_chosen.tolist()) == list(range(2, 2 + columns))
    # Maximum coverage with K = 2: the rows hear all; greedy's two largest blocks hear 2^c + 2^(c-1).
    sol2 = solve_siting(hears, max_gateways=2)
    assert sol2.objective == hears.shape[1]
    assert sol2.greedy_objective == 2 ** columns + 2 ** (columns - 1)


def test_costs_change_the_answer():
    # Site 0 hears all four nodes but costs 5; sites 1 and 2 hear two each at cost 2.
    hears = np.array([[1, 1, 1, 1], [1, 1, 0, 0], [0, 0, 1, 1]], dtype=bool)
    assert solve_siting(hears).chosen.tolist() == [0]
    sol = solve_siting(hears, cost=[5.0, 2.0, 2.0])
    assert sorted(sol.chosen.tolist()) == [1, 2] and sol.objective == 4.0
    # Greedy ratio: 4/5 = 0.8 < 2/2 = 1, so greedy also opens 1 then 2.
    assert sol.greedy_objective == 4.0


def test_fixed_gateways_are_kept_and_free():
    hears = np.array([[1, 1, 0, 0], [0, 0, 1, 1], [1, 1, 1, 1]], dtype=bool)
    sol = solve_siting(hears, fixed=[0])
    # With site 0 fixed, one more site is needed: 1 or 2; cost counts candidates only.
    assert 0 in sol.chosen.tolist() and len(sol.chosen) == 2 and sol.objective == 1
    sol2 = solve_siting(hears, fixed=np.array([True, True, False]))
    assert sorted(sol2.chosen.tolist()) == [0, 1] and sol2.objective == 0
    with pytest.raises(ProfilerError, match="--max-gateways 1 is below the 2 existing"):
        solve_siting(hears, fixed=[0, 1], max_gateways=1)


def test_unreachable_nodes_are_excluded_and_listed():
    hears = np.array([[1, 0, 1], [1, 0, 0]], dtype=bool)
    sol = solve_siting(hears, redundancy=2)
    assert sol.unreachable.tolist() == [1, 2]
    assert sorted(sol.chosen.tolist()) == [0, 1] and sol.covered.tolist() == [True, False, False]
    everyone = solve_siting(np.zeros((2, 3), dtype=bool))
    assert everyone.chosen.size == 0 and everyone.objective == 0 and everyone.proven_optimal
    assert everyone.unreachable.tolist() == [0, 1, 2] and "nothing to solve" in everyone.status


def test_time_limit_returns_a_feasible_choice():
    rng = np.random.default_rng(7)
    hears = rng.random((80, 400)) < 0.08
    sol = solve_siting(hears, redundancy=2, time_limit_s=1e-3)
    assert not sol.proven_optimal
    assert "time limit" in sol.status
    assert covered_enough(hears, sol.chosen, 2)
    assert sol.gap is None or sol.gap >= 0.0
    sol2 = solve_siting(hears, redundancy=2, max_gateways=20, time_limit_s=1e-3,
                        margin_db=np.where(hears, 10.0, np.nan))
    assert not sol2.proven_optimal and "time limit" in sol2.status
    assert len(sol2.chosen) <= 20 and sol2.objective >= sol2.greedy_objective


@pytest.mark.parametrize("kwargs, message", [
    (dict(hears=np.zeros((0, 3), bool)), "needs gateway sites"),
    (dict(hears=np.zeros((3, 0), bool)), "needs nodes"),
    (dict(hears=np.ones((2, 3), bool), redundancy=3), "--redundancy 3 needs at least 3"),
    (dict(hears=np.ones((2, 3), bool), redundancy=0), "--redundancy must be a whole number"),
    (dict(hears=np.ones((2, 3), bool), max_gateways=1.5), "--max-gateways must be a whole number"),
    (dict(hears=np.ones((2, 3), bool), cost=[1.0, -1.0]), "cost must be a positive"),
    (dict(hears=np.ones((2, 3), bool), cost=[1.0]), "1 costs given for 2"),
    (dict(hears=np.ones((2, 3), bool), time_limit_s=0), "--time-limit-s must be a positive"),
    (dict(hears=np.ones((2, 3), bool), fixed=[5]), "fixed sites must be indices"),
])
def test_bad_inputs_are_one_line_errors(kwargs, message):
    hears = kwargs.pop("hears")
    with pytest.raises(ProfilerError, match=message) as err:
        solve_siting(hears, **kwargs)
    assert "\n" not in str(err.value)


def test_hearing_matrix_threshold_and_nan():
    margin = np.array([[12.0, np.nan, 9.99], [10.0, 30.0, 11.0]])
    allowed = np.array([[True, True, True], [True, False, True]])
    assert hearing_matrix(margin, allowed, 10.0).tolist() == [[True, False, False], [True, False, True]]
    with pytest.raises(ProfilerError):
        hearing_matrix(margin, allowed[:, :2], 10.0)


def test_greedy_stops_at_max_gateways():
    hears = greedy_worst_case(3)
    mask = greedy_siting(hears, np.ones(5), np.zeros(5, bool), 1, max_gateways=1)
    assert np.flatnonzero(mask).tolist() == [4]            # the 8-element block


# --------------------------------------------------------------------------- network report
def link(gateway, node, margin, dr=3, error=None, **extra):
    row = {"gateway": gateway, "node": node, "margin_db": margin, "recommended_dr": dr, "closes": dr is not None,
           "error": error, "line_of_sight": True, "fresnel_clear": True, "worst_fresnel_ratio": 0.9,
           "worst_distance_m": 1000.0, "diffraction_db": 0.0, "distance_m": 5000.0}
    row.update(extra)
    return row


def network_report():
    """Invented Vellmoor-style sites: one existing gateway, three candidates, five nodes."""
    sites = [
        {"name": "Cairnfell Beacon", "lat_deg": -29.9125, "lon_deg": -19.955, "mast_m": 10, "role": "gateway",
         "ground_m": 610.0},
        {"name": "Kestrel Mast", "lat_deg": -29.95, "lon_deg": -19.80, "mast_m": 15, "role": "candidate",
         "ground_m": 420.0, "cost": 2.0},
        {"name": "Tollan Down roof", "lat_deg": -29.86, "lon_deg": -19.79, "mast_m": 6, "role": "candidate",
         "ground_m": 380.0},
        {"name": "=Harrow Loft", "lat_deg": -29.99, "lon_deg": -19.90, "mast_m": 8, "role": "candidate",
         "ground_m": 300.0},
    ] + [{"name": name, "lat_deg": -29.9 + 0.01 * k, "lon_deg": -19.85, "mast_m": 2, "role": "node",
          "ground_m": 200.0} for k, name in enumerate(
              ["Osterby Farm pump", "Millbrook Tank", "Wendle Reservoir", "Quarry Gate sensor",
               "Saltmarsh Lane trough"])]
    links = [
        link("Cairnfell Beacon", "Osterby Farm pump", 14.0),
        link("Cairnfell Beacon", "Millbrook Tank", 3.0, fresnel_clear=False, worst_fresnel_ratio=0.2),
        link("Kestrel Mast", "Millbrook Tank", 18.5),
        link("Tollan Down roof", "Millbrook Tank", 12.0),
        link("Tollan Down roof", "Millbrook Tank", 5.0),                    # duplicate, worse: ignored
        link("Kestrel Mast", "Wendle Reservoir", -7.2, dr=None, line_of_sight=False, worst_fresnel_ratio=-1.5,
             worst_distance_m=3410.0, diffraction_db=24.1),
        link("Cairnfell Beacon", "Wendle Reservoir", -20.0, dr=None, line_of_sight=False),
        link("Kestrel Mast", "Quarry Gate sensor", None, dr=None, error="elevation void on the path: use --fill-voids"),
        link("=Harrow Loft", "Saltmarsh Lane trough", 25.0),
        link("Tollan Down roof", "Saltmarsh Lane trough", 11.0),
    ]
    return {"schema": "profiler.network/1", "sites": sites, "links": links, "dem": [{"path": "dem_samples"}],
            "warnings": ["sample warning"], "band": "EU868", "frequency_mhz": 868.1}


def test_margin_matrix_against_a_plain_loop():
    rep = network_report()
    mm = margin_matrix(rep)
    assert mm.site_names == ["Cairnfell Beacon", "Kestrel Mast", "Tollan Down roof", "=Harrow Loft"]
    assert mm.node_names[0] == "Osterby Farm pump" and len(mm.node_names) == 5
    # Independent reference: a dict filled link by link, keeping the larger margin of a duplicate.
    ref = {}
    for lk in rep["links"]:
        ok = lk["error"] is None and lk["recommended_dr"] is not None
        value = np.nan if lk["error"] or lk["margin_db"] is None else lk["margin_db"]
        key = (lk["gateway"], lk["node"])
        if key not in ref or (ok, value) > ref[key]:
            ref[key] = (ok, value)
    for (g, n), (ok, value) in ref.items():
        j, i = mm.site_names.index(g), mm.node_names.index(n)
        assert mm.allowed[j, i] == ok
        assert (np.isnan(value) and np.isnan(mm.margin_db[j, i])) or mm.margin_db[j, i] == value
    assert np.isnan(mm.margin_db).sum() == 4 * 5 - len(ref) + 1   # the void link has no margin
    assert mm.link_index[2, 1] == 3                               # the better duplicate


def test_margin_matrix_refuses_unknown_sites():
    rep = network_report()
    rep["links"].append(link("Nowhere Hill", "Millbrook Tank", 5.0))
    with pytest.raises(ProfilerError, match="Nowhere Hill"):
        margin_matrix(rep)
    with pytest.raises(ProfilerError, match="no sites"):
        margin_matrix({"links": []})


def test_site_costs():
    rep = network_report()
    mm = margin_matrix(rep)
    assert site_costs(rep, mm).tolist() == [0.0, 2.0, 1.0, 1.0]
    assert site_costs(rep, mm, {"Tollan Down roof": 3}).tolist() == [0.0, 2.0, 3.0, 1.0]
    with pytest.raises(ProfilerError, match="Kestrel Mast"):
        site_costs(rep, mm, {"Kestrel Mast": "free"})


def test_siting_report_contract():
    rep = network_report()
    out = siting_from_network(rep, min_margin_db=10.0)
    json.dumps(out, allow_nan=False)
    assert out["schema"] == "profiler.siting/4" and out["caution"] == CAUTION
    # Osterby: Cairnfell (fixed). Millbrook: Kestrel (cost 2) or Tollan (1). Saltmarsh: Harrow (1) or Tollan (1).
    # Optimum: Tollan alone (cost 1) covers both.
    assert out["chosen"][0] in ("Cairnfell Beacon", "Tollan Down roof")
    assert sorted(out["chosen"]) == ["Cairnfell Beacon", "Tollan Down roof"]
    assert out["objective"] == 1.0 and out["proven_optimal"] and out["gap"] == 0.0
    assert out["summary"] == {"nodes_total": 5, "nodes_heard": 3, "nodes_unreachable": 2, "sites_chosen": 2,
                              "candidates_opened": 1, "cost_total": 1.0, "redundancy": 1}
    nodes = {nd["name"]: nd for nd in out["nodes"]}
    assert nodes["Millbrook Tank"]["heard_by"] == ["Tollan Down roof"]
    assert nodes["Millbrook Tank"]["best_margin_db"] == 12.0 and nodes["Millbrook Tank"]["recommended_dr"] == 3
    assert nodes["Wendle Reservoir"]["covered"] is False and nodes["Wendle Reservoir"]["unreachable"] is True
    why = {u["name"]: u for u in out["unreachable"]}
    assert why["Wendle Reservoir"]["best_margin_db"] == -7.2
    assert why["Wendle Reservoir"]["reason"] == (
        "best margin -7.2 dB from Kestrel Mast (needs 10.0 dB, no allowed data rate closes); "
        "terrain blocks the line of sight 3.41 km from the gateway, diffraction 24.1 dB")
    assert why["Quarry Gate sensor"]["best_margin_db"] is None
    assert "elevation void" in why["Quarry Gate sensor"]["reason"]
    assert out["warnings"][0] == "sample warning"
    assert [w for w in out["warnings"] if "could not be computed" in w] == [
        "1 of 10 links could not be computed (see their error in the network table) and count as not heard"]
    assert out["redundancy"] == 1 and out["min_margin_db"] == 10.0 and out["max_gateways"] is None


def test_unreachable_reason_says_no_rate_closes_only_below_zero_margin():
    # A margin of 0 dB or more means the uplink closes (received power at or above the sensitivity: the
    # definition of the margin), even when no rate keeps the fade margin (recommended_dr null). The sample
    # scenario's Saltmarsh Lane trough (9.4 dB from Kestrel Mast, docs/siting.md) was said to have no closing rate.
    rep = network_report()
    rep["links"] = [lk for lk in rep["links"] if lk["node"] != "Wendle Reservoir"]
    rep["links"].append(link("Kestrel Mast", "Wendle Reservoir", 9.4, dr=None))
    why = {u["name"]: u["reason"] for u in siting_from_network(rep, min_margin_db=10.0)["unreachable"]}
    assert why["Wendle Reservoir"].startswith("best margin 9.4 dB from Kestrel Mast (needs 10.0 dB);")
    assert "no allowed data rate closes" not in why["Wendle Reservoir"]


def test_failed_links_are_warned_about_once():
    # Issue 17: `siting` printed the network's "could not be computed" warning and its own one about the same
    # links. The network report's warning is replaced by one that also says what it means for siting.
    rep = network_report()
    rep["warnings"] = ["1 of 10 links could not be computed (see their error)", "sample warning"]
    out = siting_from_network(rep, min_margin_db=10.0)
    about = [w for w in out["warnings"] if "could not be computed" in w]
    assert len(about) == 1 and "count as not heard" in about[0] and "sample warning" in out["warnings"]


def test_siting_report_redundancy_and_max_gateways():
    rep = network_report()
    two = siting_from_network(rep, min_margin_db=10.0, redundancy=2)
    # Only Millbrook (Kestrel, Tollan) and Saltmarsh (Harrow, Tollan) can be heard twice.
    assert two["summary"]["nodes_heard"] == 2 and two["objective"] == 4.0
    why = {u["name"]: u["reason"] for u in two["unreachable"]}
    assert why["Osterby Farm pump"].startswith("heard by 1 site(s) (Cairnfell Beacon), 2 required")
    capped = siting_from_network(rep, min_margin_db=10.0, max_gateways=2)
    # Cairnfell is kept; the second site is Tollan (hears Millbrook and Saltmarsh).
    assert sorted(capped["chosen"]) == ["Cairnfell Beacon", "Tollan Down roof"] and capped["objective"] == 3.0
    lower = siting_from_network(rep, min_margin_db=2.0, max_gateways=1)
    # Only the existing gateway fits: it now hears Osterby and Millbrook (3 dB >= 2 dB).
    assert lower["chosen"] == ["Cairnfell Beacon"] and lower["objective"] == 2.0


def test_siting_csv_rows_and_inert_text():
    rep = network_report()
    rep["sites"][4]["name"] = "+Osterby"
    rep["links"][0]["node"] = "+Osterby"
    out = siting_from_network(rep, min_margin_db=10.0)
    text = siting_csv_text(out)
    head, summary = text.split("\n\n")
    rows = head.splitlines()
    assert rows[0].split(",")[:3] == ["node", "covered", "unreachable"]
    assert len(rows) == 1 + 5
    assert rows[1].startswith("'+Osterby,true,false,1,Cairnfell Beacon,Cairnfell Beacon,14.00,3,")
    tail = {row[0]: row[1] for row in csv.reader(io.StringIO(summary))}
    assert tail["# caution"] == CAUTION and tail["# chosen"] == "Tollan Down roof; Cairnfell Beacon"
    assert tail["# proven_optimal"] == "true" and tail["# objective"] == "1.00"


def test_siting_geojson():
    rep = network_report()
    out = siting_from_network(rep, min_margin_db=10.0)
    gj = siting_geojson_dict(out, rep)
    sites = [f for f in gj["features"] if f["properties"]["feature"] == "site"]
    links = [f for f in gj["features"] if f["properties"]["feature"] == "link"]
    assert len(sites) == 9 and len(links) == 3            # Osterby, Millbrook, Saltmarsh each heard once
    chosen = {f["properties"]["name"]: f["properties"].get("chosen") for f in sites}
    assert chosen["Tollan Down roof"] is True and chosen["Kestrel Mast"] is False
    assert chosen["=Harrow Loft"] is False                  # name as given (GeoJSON is not a spreadsheet)
    assert sites[0]["geometry"]["coordinates"] == [-19.955, -29.9125]
    json.loads(siting_geojson_text(out, rep))
    # A link across the antimeridian is cut (RFC 7946 section 3.1.9).
    rep["sites"][0]["lon_deg"], rep["sites"][4]["lon_deg"] = 179.9, -179.9
    gj = siting_geojson_dict(out, rep)
    crossing = [f for f in gj["features"] if f["id"] == "link:Cairnfell Beacon:Osterby Farm pump"][0]
    assert crossing["geometry"]["type"] == "MultiLineString"


def test_malformed_network_inputs_are_one_line_errors():
    rep = network_report()
    rep["links"][0]["margin_db"] = "lots"
    with pytest.raises(ProfilerError, match="malformed"):
        margin_matrix(rep)
    with pytest.raises(ProfilerError, match="--min-margin-db"):
        siting_from_network(network_report(), min_margin_db=float("nan"))


def test_max_coverage_opens_no_useless_site():
    # Site 0 hears both nodes; with K = 3 and no margins, sites 1 and 2 add nothing and stay closed.
    hears = np.array([[1, 1], [1, 0], [0, 1]], dtype=bool)
    sol = solve_siting(hears, max_gateways=3)
    assert sol.chosen.tolist() == [0] and sol.objective == 2
    # With margins, a second site that improves a node's best margin is worth opening.
    margin = np.array([[10.0, 10.0], [15.0, np.nan], [np.nan, 9.0]])
    sol2 = solve_siting(hears, max_gateways=3, margin_db=margin)
    assert sorted(sol2.chosen.tolist()) == [0, 1] and sol2.margin_total_db == pytest.approx(25.0)


def test_heard_by_order_without_margins_is_by_index():
    # Site 2 hears the most nodes, so it comes first in `chosen`, but heard_by lists sites by index.
    hears = np.array([[1, 0, 0, 0], [0, 1, 0, 0], [1, 1, 1, 1]], dtype=bool)
    sol = solve_siting(hears, redundancy=2, max_gateways=3)
    assert sol.chosen.tolist() == [2, 0, 1]
    assert [a.tolist() for a in sol.heard_by] == [[0, 2], [1, 2], [2], [2]]   # heard once is listed too
    assert sol.covered.tolist() == [True, True, False, False] and sol.unreachable.tolist() == [2, 3]
