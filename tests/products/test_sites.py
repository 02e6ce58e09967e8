"""Network site lists and pairs files: parsing, every refusal with its line,
and the gateway x node pairing with distances checked against geographiclib
(Karney's own implementation, independent of the PROJ code used by profiler).
"""

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic
from sample_sites import ROOT

from profiler.errors import ProfilerError
from profiler.products.sites import (
    SiteTable,
    candidate_pairs,
    pairs_from_names,
    read_pairs_csv,
    read_sites_csv,
    sites_from_records,
)

HEADER = "name,lat_deg,lon_deg,mast_m,role"
GOOD = (
    "name,lat_deg,lon_deg,mast_m,role,tx_power_dbm,gain_dbi,cable_loss_db,noise_figure_db,polarization,cost,note\n"
    "Cairnfell Beacon,-29.9125,-19.955,10,Gateway,27,5.5,1.5,4,vertical,,\"hill-top, mains power\"\n"
    " Osterby Farm pump ,-29.9000,-19.825,2,node,,,,,45,,\n"
    "Millbrook Tank,-29.85,-19.78,2,NODE,,,,,,7,\n"
    "\n"
    "Gorsey Knoll,-29.95,-19.90,6,candidate,,,,,,2.5,\n"
    "Tallow Barn,-29.97,-19.86,0,candidate,,,,,,,\n"
)


def _write(tmp_path, text, name="sites.csv", encoding="utf-8"):
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return path


@pytest.fixture
def sites(tmp_path):
    return read_sites_csv(_write(tmp_path, GOOD))


def test_reads_columns_roles_overrides_and_cost(sites):
    assert isinstance(sites, SiteTable) and len(sites) == 5
    assert sites.names == ("Cairnfell Beacon", "Osterby Farm pump", "Millbrook Tank", "Gorsey Knoll", "Tallow Barn")
    assert list(sites.role) == ["gateway", "node", "node", "candidate", "candidate"]
    np.testing.assert_array_equal(sites.mast_m, [10, 2, 2, 6, 0])
    assert sites.tx_power_dbm[0] == 27 and np.isnan(sites.tx_power_dbm[1:]).all()
    assert sites.cable_loss_db[0] == 1.5 and sites.noise_figure_db[0] == 4 and sites.gain_dbi[0] == 5.5
    assert sites.polarization == ("vertical", "45", None, None, None)
    # cost: read for candidates only (default 1); NaN for gateways and nodes.
    assert sites.cost[3] == 2.5 and sites.cost[4] == 1.0
    assert np.isnan(sites.cost[:3]).all()
    np.testing.assert_array_equal(sites.gateway_indices(), [0, 3, 4])
    np.testing.assert_array_equal(sites.indices("node"), [1, 2])
    np.testing.assert_array_equal(sites.indices("Candidate"), [3, 4])
    assert sites.index_of("Millbrook Tank") == 2 and sites.index_of("  Osterby Farm pump") == 1
    rec = sites.to_records()
    assert rec[0]["tx_power_dbm"] == 27 and rec[1]["tx_power_dbm"] is None and rec[3]["cost"] == 2.5
    assert rec[2]["cost"] is None and rec[1]["name"] == "Osterby Farm pump"
    assert sites_from_records(rec).names == sites.names


def test_arrays_are_read_only(sites):
    with pytest.raises(ValueError):
        sites.lat_deg[0] = 0.0


def test_bom_and_any_column_order(tmp_path):
    text = "role,mast_m,lon_deg,lat_deg,name\nnode,2,-19.8,-29.9,Trough 4\n"
    s = read_sites_csv(_write(tmp_path, text, encoding="utf-8-sig"))
    assert s.names == ("Trough 4",) and s.lat_deg[0] == -29.9 and s.lon_deg[0] == -19.8


def test_example_network_files_read():
    s = read_sites_csv(ROOT / "examples" / "vellmoor_network.csv")
    assert len(s.indices("gateway")) == 2 and 3 <= len(s.indices("candidate")) <= 4
    assert len(s.indices("node")) >= 35
    assert np.all(s.cost[s.indices("candidate")] > 0)
    # Inside the sample DEM (-30.05..-29.8, -20.0..-19.75) with a 500 m margin:
    # 500 m is 0.0045 deg of latitude and 0.0052 deg of longitude at 30 deg S (1 deg lat ~ 111 km,
    # 1 deg lon ~ 111 km x cos 30 deg; common practice).
    assert np.all((s.lat_deg > -30.05 + 0.0045) & (s.lat_deg < -29.8 - 0.0045))
    assert np.all((s.lon_deg > -20.0 + 0.0052) & (s.lon_deg < -19.75 - 0.0052))
    gw, node = read_pairs_csv(ROOT / "examples" / "vellmoor_pairs.csv", s)
    assert gw.size >= 3 and set(s.role[node]) == {"node"}


@pytest.mark.parametrize("text, fragment", [
    ("", "is empty"),
    ("\n\n", "is empty"),
    ("name,lat_deg,lon_deg,role\nA,1,2,gateway\n", "line 1: missing column mast_m"),
    (HEADER + "\n", "no sites"),
    (HEADER + "\nA,-29.9,-19.8,2,gateway\nB,-29.9,-19.8,2,node\n A ,1,2,3,node\n",
     "line 4: site name 'A' already used on line 2"),
    (HEADER + "\nA,-29.9,-19.8,2,gateway\n,-29.9,-19.8,2,node\n", "line 3: the site name is empty"),
    (HEADER + "\nA,-29.9,-19.8,2,relay\n", "line 2: role 'relay' is not known"),
    (HEADER + "\nA,-29.9,-19.8,2,gateway\nB,south,-19.8,2,node\n", "line 3: lat_deg 'south' is not a number"),
    (HEADER + "\nA,-29.9,-19.8,,gateway\n", "line 2: mast_m is empty"),
    (HEADER + "\nA,-91,-19.8,2,gateway\n", "line 2: lat_deg -91 is out of range; use -90 to 90"),
    (HEADER + "\nA,-29.9,180.5,2,gateway\n", "line 2: lon_deg 180.5 is out of range; use -180 to 180"),
    (HEADER + "\nA,-29.9,-19.8,1001,gateway\n", "line 2: mast_m 1001 is out of range; use 0 to 1000"),
    (HEADER + "\nA,-29.9,-19.8,-1,gateway\n", "line 2: mast_m -1 is out of range"),
    (HEADER + "\nA,nan,-19.8,2,gateway\n", "line 2: lat_deg 'nan' must be a finite number"),
    (HEADER + "\n\nA,-29.9,-19.8,2,gateway,extra\n", "line 3: 6 fields but the header has 5"),
    (HEADER + ",cost\nA,-29.9,-19.8,2,candidate,0\n", "line 2: cost 0 is out of range; use greater than 0"),
    (HEADER + ",cable_loss_db\nA,-29.9,-19.8,2,gateway,-2\n", "line 2: cable_loss_db -2 is out of range"),
    (HEADER + ",tx_power_dbm\nA,-29.9,-19.8,2,gateway,lots\n", "line 2: tx_power_dbm 'lots' is not a number"),
    (HEADER + ",polarization\nA,-29.9,-19.8,2,gateway,diagonal\n", "line 2: polarization 'diagonal'"),
    ("name,name,lat_deg,lon_deg,mast_m,role\n", "column name appears twice"),
    (HEADER + '\n"A,-29.9,-19.8,2,gateway\n', "line 2"),
])
def test_malformed_site_files_are_refused_with_the_line(tmp_path, text, fragment):
    path = _write(tmp_path, text)
    with pytest.raises(ProfilerError) as err:
        read_sites_csv(path)
    message = str(err.value)
    assert fragment in message and str(path) in message and "\n" not in message


def test_non_utf8_and_missing_file(tmp_path):
    path = _write(tmp_path, HEADER + "\nK\u00f6hler Mill,-29.9,-19.8,2,node\n", encoding="latin-1")
    with pytest.raises(ProfilerError, match=r"line 2: not UTF-8 text"):
        read_sites_csv(path)
    with pytest.raises(ProfilerError, match=r"sites file not found: .*nothere.csv; check --sites"):
        read_sites_csv(tmp_path / "nothere.csv")


def test_records_are_validated_like_files():
    with pytest.raises(ProfilerError, match=r"site 2: lat_deg 95 is out of range"):
        sites_from_records([dict(name="A", lat_deg=-29.9, lon_deg=-19.8, mast_m=10, role="gateway"),
                            dict(name="B", lat_deg=95, lon_deg=-19.8, mast_m=2, role="node")])
    with pytest.raises(ProfilerError, match="missing column"):
        sites_from_records([dict(name="A", lat_deg=1, lon_deg=2, role="node")])


# --------------------------------------------------------------------------- pairs
def test_pairs_file(tmp_path, sites):
    path = _write(tmp_path, "\ufeffGateway,Node,comment\nCairnfell Beacon,Millbrook Tank,x\n"
                            "Gorsey Knoll, Osterby Farm pump ,\n", name="pairs.csv")
    gw, node = read_pairs_csv(path, sites)
    assert gw.dtype == np.int64 and list(gw) == [0, 3] and list(node) == [2, 1]
    gw2, node2 = pairs_from_names([("Cairnfell Beacon", "Millbrook Tank"), ("Gorsey Knoll", "Osterby Farm pump")],
                                  sites)
    assert list(gw2) == list(gw) and list(node2) == list(node)


@pytest.mark.parametrize("text, fragment", [
    ("gateway,node\nCairnfell Beacon,Nowhere Well\n", "line 2: node 'Nowhere Well' is not in"),
    ("gateway,node\nCairnfell Beacon,Millbrook Tank\nMillbrook Tank,Osterby Farm pump\n",
     "line 3: gateway 'Millbrook Tank' is a node; the gateway column takes gateway or candidate sites"),
    ("gateway,node\nCairnfell Beacon,Gorsey Knoll\n", "line 2: node 'Gorsey Knoll' is a candidate"),
    ("gateway,node\nCairnfell Beacon,Millbrook Tank\n\nCairnfell Beacon,Millbrook Tank\n",
     "line 4: pair 'Cairnfell Beacon', 'Millbrook Tank' already listed on line 2"),
    ("gateway,sensor\nCairnfell Beacon,Millbrook Tank\n", "line 1: missing column node"),
    ("gateway,node\n", "no pairs"),
    ("", "is empty"),
])
def test_bad_pairs_are_refused_with_the_line(tmp_path, sites, text, fragment):
    path = _write(tmp_path, text, name="pairs.csv")
    with pytest.raises(ProfilerError) as err:
        read_pairs_csv(path, sites)
    assert fragment in str(err.value) and str(path) in str(err.value)


# --------------------------------------------------------------------------- candidate pairs
def test_candidate_pairs_distances_against_geographiclib(sites):
    gw, node, dist = candidate_pairs(sites, 1e6)
    # Every gateway-like row (0, 3, 4) with every node row (1, 2), gateway order first.
    assert list(zip(gw, node)) == [(0, 1), (0, 2), (3, 1), (3, 2), (4, 1), (4, 2)]
    geod = Geodesic.WGS84
    for g, n, d in zip(gw, node, dist):
        ref = geod.Inverse(sites.lat_deg[g], sites.lon_deg[g], sites.lat_deg[n], sites.lon_deg[n])["s12"]
        assert d == pytest.approx(ref, abs=1e-6)        # Karney (2013): both solvers agree to nanometres


def test_candidate_pairs_limit_keeps_order(sites):
    _, _, all_dist = candidate_pairs(sites, 1e6)
    limit = float(np.median(all_dist))
    gw, node, dist = candidate_pairs(sites, limit)
    assert np.all(dist <= limit) and dist.size == np.count_nonzero(all_dist <= limit)
    assert list(gw) == sorted(gw)


def test_candidate_pairs_random_network_matches_geographiclib():
    rng = np.random.default_rng(7)
    n = 60
    roles = rng.choice(["gateway", "node", "node", "candidate"], size=n)
    recs = [dict(name=f"S{i}", lat_deg=-30 + rng.random(), lon_deg=-20 + rng.random(), mast_m=2, role=r)
            for i, r in enumerate(roles)]
    sites = sites_from_records(recs)
    gw, node, dist = candidate_pairs(sites, 60_000.0)
    geod = Geodesic.WGS84
    expected = [(g, m) for g in sites.gateway_indices() for m in sites.indices("node")
                if geod.Inverse(sites.lat_deg[g], sites.lon_deg[g], sites.lat_deg[m],
                                sites.lon_deg[m])["s12"] <= 60_000.0]
    assert list(zip(gw.tolist(), node.tolist())) == expected


def test_candidate_pairs_edge_cases(sites):
    nodes_only = sites_from_records([dict(name="A", lat_deg=1, lon_deg=2, mast_m=2, role="node")])
    gw, node, dist = candidate_pairs(nodes_only, 50_000)
    assert gw.size == node.size == dist.size == 0
    for bad in (0, -5, float("nan"), "far"):
        with pytest.raises(ProfilerError, match="largest link distance must be a positive number"):
            candidate_pairs(sites, bad)
    with pytest.raises(ProfilerError, match="unknown site role 'relay'"):
        sites.indices("relay")
    with pytest.raises(ProfilerError, match="no site called 'Nobody'"):
        sites.index_of("Nobody")
