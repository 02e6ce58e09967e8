"""profiler network: one engine with profiler link, errors per row, the JSON contract, Dask."""

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from geographiclib.geodesic import Geodesic
from sample_sites import MODEL_OPTIONS

from profiler.cli import main

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = str(ROOT / "dem_samples")
EXAMPLE_SITES = ROOT / "examples" / "vellmoor_network.csv"
GW = (-29.9125, -19.955)        # Cairnfell Beacon (invented)
GW2 = (-29.8535, -19.787)       # Tollan Down mast (invented)
HEADER = "name,lat_deg,lon_deg,mast_m,role\n"

LINK_KEYS = {"gateway", "node", "distance_m", "azimuth_deg", "line_of_sight", "fresnel_clear", "worst_fresnel_ratio",
             "worst_distance_m", "diffraction_db", "total_loss_db", "margin_db", "downlink_margin_db",
             "recommended_dr", "closes", "error"}


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def net_json(*args):
    res = run("network", *args, "--json", "-", "--no-progress")
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def random_sites(tmp_path, n_nodes=25, seed=3, extra=""):
    """Two gateways and random nodes inside the sample DEM (lat -30.05..-29.8, lon -20..-19.75)."""
    rng = np.random.default_rng(seed)
    lat = rng.uniform(-30.04, -29.81, n_nodes)
    lon = rng.uniform(-19.99, -19.76, n_nodes)
    mast = rng.choice([1.5, 2.0, 3.0, 6.0], n_nodes)
    rows = [f"Gate One,{GW[0]},{GW[1]},10,gateway", f"Gate Two,{GW2[0]},{GW2[1]},15,gateway"]
    rows += [f"node {i:02d},{float(lat[i])!r},{float(lon[i])!r},{float(mast[i])!r},node" for i in range(n_nodes)]
    path = tmp_path / "sites.csv"
    path.write_text(HEADER + "\n".join(rows) + "\n" + extra)
    return path


@pytest.mark.parametrize("model", MODEL_OPTIONS)
def test_every_network_number_equals_profiler_link(tmp_path, model):
    # One engine: each link of the table equals `profiler link --site-a GATEWAY --site-b NODE --gateway a`
    # with the same masts and options, to 0.01 dB and 1 cm (the contract), with either model.
    sites = random_sites(tmp_path)
    opts = ["--band", "EU868", "--gain-a-dbi", "4", "--cable-loss-a-db", "1", "--fill-voids", *MODEL_OPTIONS[model]]
    report = net_json("--dem", SAMPLE, "--sites", sites, *opts)
    settings = report["settings"]
    assert settings["model"] == MODEL_OPTIONS[model][1]
    assert (settings["time_percent"], settings["location_percent"]) == ((10, 95) if "95" in model else (50, 50))
    by_name = {s["name"]: s for s in report["sites"]}
    checked = 0
    for row in report["links"][::3]:
        if row["error"]:
            continue
        g, n = by_name[row["gateway"]], by_name[row["node"]]
        one = json.loads(run("link", "--dem", SAMPLE, "--site-a", f"{g['lat_deg']},{g['lon_deg']}",
                             "--site-b", f"{n['lat_deg']},{n['lon_deg']}", "--mast-a", g["mast_m"],
                             "--mast-b", n["mast_m"], "--gateway", "a", *opts, "--json", "-").stdout)
        assert row["distance_m"] == pytest.approx(one["distance_m"], abs=0.01)
        assert row["worst_distance_m"] == pytest.approx(one["worst"]["distance_m"], abs=0.01)
        assert row["worst_fresnel_ratio"] == pytest.approx(one["worst"]["fresnel_ratio"], abs=1e-6)
        assert row["azimuth_deg"] == pytest.approx(one["azimuth_a_to_b_deg"], abs=1e-9)
        assert row["diffraction_db"] == pytest.approx(one["loss_db"]["diffraction"], abs=0.01)
        assert row["total_loss_db"] == pytest.approx(one["loss_db"]["total"], abs=0.01)
        assert row["margin_db"] == pytest.approx(one["budget"]["margin_db"], abs=0.01)
        assert row["downlink_margin_db"] == pytest.approx(one["budget_downlink"]["margin_db"], abs=0.01)
        assert row["recommended_dr"] == one["lora"]["uplink"]["recommended_dr"]
        assert row["closes"] == one["budget"]["closes"]
        assert row["line_of_sight"] == one["line_of_sight"] and row["fresnel_clear"] == one["fresnel_clear"]
        assert one["model"] == settings["model"]
        checked += 1
    assert checked >= 12


def test_distances_and_azimuths_against_geographiclib(tmp_path):
    report = net_json("--dem", SAMPLE, "--sites", random_sites(tmp_path, 8), "--fill-voids")
    by_name = {s["name"]: s for s in report["sites"]}
    for row in report["links"]:
        g, n = by_name[row["gateway"]], by_name[row["node"]]
        ref = Geodesic.WGS84.Inverse(g["lat_deg"], g["lon_deg"], n["lat_deg"], n["lon_deg"])
        assert row["distance_m"] == pytest.approx(ref["s12"], abs=1e-3)
        assert (row["azimuth_deg"] - ref["azi1"] + 180) % 360 - 180 == pytest.approx(0.0, abs=1e-6)


def test_contract_nodes_and_summary(tmp_path):
    report = net_json("--dem", SAMPLE, "--sites", random_sites(tmp_path, 12), "--fill-voids")
    assert report["schema"] == "profiler.network/5"
    assert {"sites", "links", "nodes", "summary", "band", "frequency_mhz", "k_factor", "dem", "warnings",
            "caution"} <= set(report)
    assert LINK_KEYS <= set(report["links"][0])
    assert {"name", "lat_deg", "lon_deg", "mast_m", "role", "ground_m"} <= set(report["sites"][0])
    assert report["dem"]["sources"][0]["sha256"]
    # Recount from the links table (independent of the aggregation code).
    fade = report["fade_margin_db"]
    for node in report["nodes"]:
        rows = [r for r in report["links"] if r["node"] == node["name"] and not r["error"]]
        assert node["gateways_heard"] == sum(r["margin_db"] >= fade for r in rows)
        best = max(rows, key=lambda r: r["margin_db"])
        assert node["best_gateway"] == best["gateway"]
        assert node["best_margin_db"] == pytest.approx(best["margin_db"])
    s = report["summary"]
    assert s["links"] == len(report["links"]) == 2 * 12
    assert s["nodes_covered"] == sum(n["gateways_heard"] >= 1 for n in report["nodes"])
    assert s["nodes_covered_twice"] == sum(n["gateways_heard"] >= 2 for n in report["nodes"])


def test_failed_link_is_reported_in_its_row_and_the_run_goes_on(tmp_path):
    sites = random_sites(tmp_path, 4, extra="Far Away,-29.0,-19.9,2,node\n")
    report = net_json("--dem", SAMPLE, "--sites", sites, "--fill-voids", "--max-distance-km", 200)
    bad = [r for r in report["links"] if r["node"] == "Far Away"]
    assert bad and all(r["error"] and "outside the elevation data" in r["error"] for r in bad)
    assert all(r["margin_db"] is None and r["closes"] is False for r in bad)
    assert report["summary"]["errors"] == len(bad)
    assert any(not r["error"] for r in report["links"])


def test_every_link_failing_exits_non_zero(tmp_path):
    path = tmp_path / "sites.csv"
    path.write_text(HEADER + "Gate,-29.0,-19.9,10,gateway\nFar,-29.01,-19.9,2,node\n")
    res = run("network", "--dem", SAMPLE, "--sites", path, "--json", tmp_path / "out.json")
    assert res.exit_code == 2
    assert "no link could be computed" in res.stderr and len(res.stderr.strip().splitlines()) == 1
    assert not (tmp_path / "out.json").exists()


@pytest.mark.parametrize("body,needle", [
    ("name,lat_deg,lon_deg,role\nA,-29.9,-19.9,gateway\n", "mast_m"),
    (HEADER + "A,-29.9,-19.9,10,gateway\nA,-29.91,-19.9,2,node\n", "already used"),
    (HEADER + "A,-29.9,-19.9,ten,gateway\n", "line 2"),
    (HEADER + "A,-99.9,-19.9,10,gateway\n", "lat"),
])
def test_malformed_site_list_is_refused_whole(tmp_path, body, needle):
    path = tmp_path / "sites.csv"
    path.write_text(body)
    out = tmp_path / "out.csv"
    res = run("network", "--dem", SAMPLE, "--sites", path, "--csv", out)
    assert res.exit_code == 2 and needle in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1 and "Traceback" not in res.output
    assert not out.exists()


def test_pairs_file_gives_exactly_those_links(tmp_path):
    sites = random_sites(tmp_path, 6)
    pairs = tmp_path / "pairs.csv"
    pairs.write_text("gateway,node\nGate One,node 03\nGate Two,node 00\n")
    report = net_json("--dem", SAMPLE, "--sites", sites, "--pairs", pairs, "--fill-voids")
    assert [(r["gateway"], r["node"]) for r in report["links"]] == [("Gate One", "node 03"), ("Gate Two", "node 00")]
    res = run("network", "--dem", SAMPLE, "--sites", sites, "--pairs", pairs, "--max-distance-km", 10)
    assert res.exit_code == 2 and "not both" in res.stderr


def test_max_distance_filters_pairs(tmp_path):
    sites = random_sites(tmp_path, 10)
    near = net_json("--dem", SAMPLE, "--sites", sites, "--max-distance-km", 12, "--fill-voids")
    assert near["links"] and all(r["distance_m"] is None or r["distance_m"] <= 12_000 for r in near["links"])


def test_sample_scenario_outputs(tmp_path):
    files = {k: tmp_path / f"net.{k}" for k in ("json", "csv", "geojson", "kml")}
    res = run("network", "--dem", SAMPLE, "--sites", EXAMPLE_SITES, "--no-progress",
              *[x for k, p in files.items() for x in (f"--{k}", p)])
    assert res.exit_code == 0, res.output
    assert "Network:" in res.stdout and "Planning aid only" in res.stdout
    report = json.loads(files["json"].read_text())
    assert report["summary"]["nodes_total"] == 40
    header = files["csv"].read_text().splitlines()[0]
    assert "margin_db" in header
    assert json.loads(files["geojson"].read_text())["type"] == "FeatureCollection"
    import xml.etree.ElementTree as ET
    ET.fromstring(files["kml"].read_bytes())


def test_dask_local_cluster_gives_identical_results(tmp_path):
    pytest.importorskip("distributed")
    from profiler.products.network import network
    from profiler.products.sites import read_sites_csv

    table = read_sites_csv(random_sites(tmp_path, 10))
    local = network(table, dem=[SAMPLE], fill_voids=True, chunk_links=6).to_dict()
    remote = network(table, dem=[SAMPLE], fill_voids=True, chunk_links=6, workers=2, progress=False).to_dict()
    assert local["links"] == remote["links"]
    assert local["nodes"] == remote["nodes"]
    assert math.isfinite(local["links"][0]["margin_db"])


def test_siting_command_on_the_sample_scenario(tmp_path):
    # The chosen set must hear every reachable node R times by the network table's own margins (recounted
    # here), be no dearer than greedy, and be proven optimal by the solver (HiGHS status).
    sites = ROOT / "examples" / "siting_sites.csv"
    out = tmp_path / "siting.json"
    res = run("siting", "--dem", SAMPLE, "--sites", sites, "--redundancy", 2, "--json", out, "--no-progress",
              "--csv", tmp_path / "siting.csv", "--geojson", tmp_path / "siting.geojson")
    assert res.exit_code == 0, res.output
    rep = json.loads(out.read_text())
    assert rep["schema"] == "profiler.siting/4" and rep["proven_optimal"] is True
    assert rep["objective"] <= rep["greedy"]["objective"]
    net = net_json("--dem", SAMPLE, "--sites", sites)
    chosen = set(rep["chosen"])
    fade = net["fade_margin_db"]
    unreachable = {u["name"] for u in rep["unreachable"]}
    for node in [s["name"] for s in net["sites"] if s["role"] == "node"]:
        heard = {r["gateway"] for r in net["links"] if r["node"] == node and not r["error"]
                 and r["max_margin_db"] >= fade}
        if node not in unreachable:
            assert len(heard & chosen) >= 2, node
    assert {s["name"] for s in net["sites"] if s["role"] == "gateway"} <= chosen   # existing ones always kept
    assert "Siting:" in res.stdout and "Planning aid only" in res.stdout


def test_network_outputs_are_all_or_nothing_and_text_safe(tmp_path):
    # A hostile site name (formula start after a carriage return, an XML-forbidden control character)
    # and an output in a missing folder: nothing is written; with good paths, the CSV cell is inert
    # (OWASP CSV injection) and the KML parses (XML 1.0 forbids U+0001).
    sites = random_sites(tmp_path, 3, extra='"\r=1+1\x01 pump",-29.95,-19.9,2,node\n')
    good = tmp_path / "net.json"
    res = run("network", "--dem", SAMPLE, "--sites", sites, "--json", good, "--kml", tmp_path / "no" / "x.kml")
    assert res.exit_code == 2 and not good.exists()
    assert list(tmp_path.glob(".*")) == []                     # no temporary file left behind
    res = run("network", "--dem", SAMPLE, "--sites", sites, "--csv", tmp_path / "n.csv", "--kml", tmp_path / "n.kml",
              "--fill-voids")
    assert res.exit_code == 0, res.output
    import csv as csv_module
    import xml.etree.ElementTree as ET
    rows = list(csv_module.reader((tmp_path / "n.csv").read_text().splitlines()))
    cells = [c for r in rows for c in r]
    assert not any(c.lstrip().startswith(("=", "+", "@")) for c in cells if "pump" in c)
    assert not any("\r" in c or "\x01" in c for c in cells)
    ET.fromstring((tmp_path / "n.kml").read_bytes())
    assert "\x01" not in res.stdout


def test_existing_gateways_and_candidates_are_counted_apart(tmp_path):
    # The sample scenario (2 existing gateways, 4 candidate sites, 40 nodes, the water meters indoors with
    # a meter-pit loss): the two gateways hear 35 nodes, the candidates add the other 5.  A node is heard
    # when its link's probability_heard reaches settings.min_probability (the location percentage / 100).
    # Every per-node field is recounted here from links[] and the sites' roles (independent of the
    # aggregation code); the CSV carries the JSON's link values.
    out = {k: tmp_path / f"net.{k}" for k in ("json", "csv")}
    res = run("network", "--dem", SAMPLE, "--sites", EXAMPLE_SITES, "--no-progress", "--json", out["json"],
              "--csv", out["csv"], "--plot", tmp_path / "net.png", "--dpi", 50, "--links", "all")
    assert res.exit_code == 0, res.output
    report = json.loads(out["json"].read_text())
    assert report["schema"] == "profiler.network/5"
    role = {s["name"]: s["role"] for s in report["sites"]}
    fade = report["fade_margin_db"]
    for node in report["nodes"]:
        rows = [r for r in report["links"] if r["node"] == node["name"] and not r["error"]]
        for kind, heard, best, margin, dr in (
                ("gateway", "gateways_heard", "best_gateway", "best_margin_db", "recommended_dr"),
                ("candidate", "candidates_heard", "best_candidate", "best_candidate_margin_db",
                 "best_candidate_recommended_dr")):
            mine = [r for r in rows if role[r["gateway"]] == kind]
            assert node[heard] == sum(r["probability_heard"] >= report["settings"]["min_probability"] for r in mine)
            # outdoors at 50 % of locations the rule is the margin rule (Φ(x) >= 0.5 <=> x >= 0)
            assert all((r["probability_heard"] >= 0.5) == (r["margin_db"] >= fade) for r in mine
                       if not r["node"].endswith("water meter") and r["node"] != "Osterby Farm pump")
            top = max(mine, key=lambda r: r["margin_db"])
            assert (node[best], node[margin], node[dr]) == (top["gateway"], pytest.approx(top["margin_db"]),
                                                            top["recommended_dr"])
    s = report["summary"]
    assert (s["gateways"], s["candidates"], s["nodes_total"]) == (2, 4, 40)
    assert s["nodes_covered_by_gateways"] == s["nodes_covered"] == 35            # the two gateways hear 35
    assert s["nodes_covered_with_candidates"] == 40
    assert s["nodes_covered_twice"] == sum(n["gateways_heard"] >= 2 for n in report["nodes"])
    assert s["nodes_covered_twice_with_candidates"] == sum(n["gateways_heard"] + n["candidates_heard"] >= 2
                                                           for n in report["nodes"])
    import csv as csv_module
    table = out["csv"].read_text().split("\n\n")[0]
    rows = list(csv_module.DictReader(table.splitlines()))
    assert len(rows) == len(report["links"])
    for row, link in zip(rows, report["links"]):
        assert row["downlink_closes"] == ("true" if link["downlink_closes"] else "false")
        if link["max_margin_db"] is None:
            assert row["max_margin_db"] == ""
        else:
            assert float(row["max_margin_db"]) == pytest.approx(link["max_margin_db"], abs=0.005)   # to 0.01 dB
    assert (tmp_path / "net.png").stat().st_size > 0


def test_summary_text_names_gateways_and_candidates_apart(tmp_path):
    res = run("network", "--dem", SAMPLE, "--sites", EXAMPLE_SITES, "--no-progress")
    assert res.exit_code == 0, res.output
    assert "35 of 40 heard by the existing gateways" in res.stdout and "40 of 40 with the candidate sites" in res.stdout
    line = next(ln for ln in res.stdout.splitlines() if ln.strip().startswith("Birkett Moss tank gauge"))
    assert "Harrowback" in line or "Vellmoor Grange" in line or "Sennet" in line   # its best candidate is named


def test_links_option_takes_best_or_all_only(tmp_path):
    res = run("network", "--dem", SAMPLE, "--sites", EXAMPLE_SITES, "--plot", tmp_path / "n.png", "--links", "some")
    assert res.exit_code == 2 and "'--links'" in res.output and "'best', 'all'" in res.output
    assert len(res.output.strip().splitlines()) == 1 and not (tmp_path / "n.png").exists()


def test_api_refuses_a_gateway_at_end_b_naming_the_python_setting():
    """The commands no longer take --gateway; the API's refusal names the Python setting instead."""
    from profiler import network
    from profiler.engine.radio import RadioSettings
    from profiler.errors import ProfilerError

    with pytest.raises(ProfilerError, match=r"RadioSettings\(gateway=\.\.\.\) at 'a'") as err:
        network(str(EXAMPLE_SITES), dem=[SAMPLE], radio=RadioSettings(gateway="b"))
    assert "--gateway" not in str(err.value)


def test_network_and_link_share_one_minimum_separation():
    # ITU-R P.525-4 eq. (4): L = 20 log10(4 pi d / lambda) is 0 dB at d = lambda / (4 pi); no loss
    # estimate below that nor below 0.1 m (engine.radio.MIN_SEPARATION_M), the same rule for a batch
    import math

    from profiler.engine.radio import MIN_SEPARATION_M, minimum_separation_m

    lam_868 = 299_792_458.0 / 868.1e6          # 0.3454 m: lambda / (4 pi) = 0.0275 m < 0.1 m
    lam_100 = 299_792_458.0 / 100e6            # 2.998 m: lambda / (4 pi) = 0.2386 m
    assert MIN_SEPARATION_M == 0.1
    assert minimum_separation_m(lam_868) == 0.1
    assert minimum_separation_m(lam_100) == pytest.approx(lam_100 / (4 * math.pi), rel=1e-12)
    assert minimum_separation_m(lam_100) == pytest.approx(0.23856725, rel=1e-6)
    import profiler.products.network as network_module

    assert "max(0.1" not in Path(network_module.__file__).read_text()   # the batch uses minimum_separation_m
