"""profiler network / siting: probability_heard per link and the --min-probability rule.

Check values: the link's own median margin and σL from ``profiler link`` of the same path
(``p1812.location_sigma_db``, ``p1812.location_term_db``, ``budget.margin_db``, ``loss_db.building_entry_b``,
``elevation_angle_b_deg``); outdoors Φ of the normalised excess with the standard library's
``statistics.NormalDist`` (ITU-R P.1812-8 Annex 1 section 4.7: the loss over locations is log-normal,
standard deviation σL); indoors :func:`profiler.engine.probability.indoor_probability` (its own tests hold
P.2109-1 against the SG3 workbook values).
"""

import json
from pathlib import Path
from statistics import NormalDist

import pytest
from click.testing import CliRunner

from profiler.cli import main
from profiler.engine.probability import indoor_probability

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = str(ROOT / "dem_samples")
GW = (-29.9125, -19.955)          # Cairnfell Beacon (invented)
NODES = {"pump outdoors": ((-29.9, -19.825), ""), "pump indoors": ((-29.9, -19.825), "traditional"),
         "reservoir": ((-30.0, -19.845), ""), "quarry": ((-29.965, -19.82), ""), "trough": ((-29.83, -19.93), "")}
OPTS = ("--band", "EU868", "--fill-voids", "--model", "p1812", "--location-percent", "90")


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def _sites(tmp_path):
    rows = ["name,lat_deg,lon_deg,mast_m,role,indoor", f"Cairnfell Beacon,{GW[0]},{GW[1]},10,gateway,"]
    rows += [f"{name},{lat},{lon},2,node,{indoor}" for name, ((lat, lon), indoor) in NODES.items()]
    path = tmp_path / "sites.csv"
    path.write_text("\n".join(rows) + "\n")
    return path


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    res = run("network", "--dem", SAMPLE, "--sites", _sites(tmp_path_factory.mktemp("p")), *OPTS, "--json", "-",
              "--no-progress")
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def _link_report(name):
    (lat, lon), indoor = NODES[name]
    args = ["link", "--dem", SAMPLE, "--site-a", f"{GW[0]},{GW[1]}", "--site-b", f"{lat},{lon}", "--mast-a", "10",
            "--mast-b", "2", "--gateway", "a", *OPTS, "--json", "-"]
    res = run(*args, *(["--indoor-b", indoor] if indoor else []))
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


@pytest.mark.parametrize("name", list(NODES))
def test_probability_heard_is_that_of_the_links_own_median_margin_and_sigma(report, name):
    link = {lk["node"]: lk for lk in report["links"]}[name]
    ref = _link_report(name)
    fade = ref["budget"]["fade_margin_required_db"]
    sigma, term = ref["p1812"]["location_sigma_db"], ref["p1812"]["location_term_db"]
    assert link["margin_db"] == pytest.approx(ref["budget"]["margin_db"], abs=0.01)
    assert link["location_sigma_db"] == pytest.approx(sigma, abs=1e-9) and sigma > 0 and term > 0
    median = ref["budget"]["margin_db"] + term            # at 50 % of locations, outdoors
    if NODES[name][1]:
        bel = ref["loss_db"]["building_entry_b"]
        assert bel > 0
        expected = float(indoor_probability([median + bel], fade, [sigma], ref["frequency_mhz"] * 1e-3,
                                            [ref["elevation_angle_b_deg"]], "traditional")[0])
    else:
        expected = NormalDist().cdf((median - fade) / sigma)
    assert link["probability_heard"] == pytest.approx(expected, abs=1e-9)


def test_an_indoor_node_is_heard_with_a_lower_probability_than_outdoors(report):
    p = {lk["node"]: lk["probability_heard"] for lk in report["links"]}
    assert 0.0 <= p["pump indoors"] < p["pump outdoors"] <= 1.0


def test_nodes_heard_follow_min_probability(tmp_path, report):
    # default: the location percentage / 100
    assert report["settings"]["min_probability"] == pytest.approx(0.90)
    sites = _sites(tmp_path)
    probability = {lk["node"]: lk["probability_heard"] for lk in report["links"]}
    counts = {}
    for p_min in (0.0, 0.5, 0.9, 0.999, 1.0):
        res = run("network", "--dem", SAMPLE, "--sites", sites, *OPTS, "--min-probability", p_min, "--json", "-",
                  "--no-progress")
        assert res.exit_code == 0, res.output
        rep = json.loads(res.stdout)
        assert rep["settings"]["min_probability"] == p_min
        heard = {n["name"] for n in rep["nodes"] if n["gateways_heard"]}
        assert heard == {name for name, p in probability.items() if p >= p_min}
        assert rep["summary"]["nodes_covered"] == len(heard) == rep["summary"]["heard"]
        counts[p_min] = len(heard)
    assert counts[0.0] == len(NODES) and counts[0.5] > counts[0.999]


@pytest.mark.parametrize("value", ["1.5", "-0.1", "nan", "lots"])
@pytest.mark.parametrize("command", ["network", "siting"])
def test_min_probability_out_of_range_is_refused(tmp_path, command, value):
    out = tmp_path / "out.json"
    res = CliRunner().invoke(main, [command, "--dem", SAMPLE, "--sites", str(_sites(tmp_path)), *OPTS,
                                    "--min-probability", value, "--json", str(out), "--no-progress"])
    assert res.exit_code != 0 and "--min-probability" in res.output
    assert "Traceback" not in res.output and not out.exists()


def test_siting_hears_by_the_probability(tmp_path, report):
    from profiler.products.siting.report import siting_from_network

    probability = {lk["node"]: lk["probability_heard"] for lk in report["links"]}
    for p_min in (0.5, 0.999):
        rep = siting_from_network(report, min_probability=p_min)
        assert rep["min_probability"] == p_min and rep["min_margin_db"] is None
        assert rep["sites"][0]["nodes_heard"] == sum(p >= p_min for p in probability.values())
    res = run("siting", "--dem", SAMPLE, "--sites", _sites(tmp_path), *OPTS, "--json", "-", "--no-progress")
    assert res.exit_code == 0, res.output
    rep = json.loads(res.stdout)
    assert rep["schema"] == "profiler.siting/4" and rep["min_probability"] == pytest.approx(0.9)
    assert rep["summary"]["nodes_heard"] == sum(p >= 0.9 for p in probability.values())


def test_terrain_model_uses_the_p1812_sigma_of_the_node(tmp_path):
    # ITU-R P.1812-8 Annex 1 eq. (64): σL = (0.024 f + 0.52) wa^0.28 [dB] (f in GHz, wa = 100 m), times
    # u(h) of section 4.7 (h = 2 m above ground, R = 0: u = 1 - 2/10).  With --model terrain the loss is
    # the median (no location term), so P(heard) = Φ((margin - fade) / σL) outdoors.
    opts = ("--band", "EU868", "--fill-voids", "--model", "terrain")
    res = run("network", "--dem", SAMPLE, "--sites", _sites(tmp_path), *opts, "--json", "-", "--no-progress")
    assert res.exit_code == 0, res.output
    rep = json.loads(res.stdout)
    f_ghz = rep["frequency_mhz"] * 1e-3
    sigma = (0.024 * f_ghz + 0.52) * 100.0 ** 0.28 * (1.0 - 2.0 / 10.0)
    for link in rep["links"]:
        assert link["location_sigma_db"] == pytest.approx(sigma, rel=1e-9)
        if link["node"] != "pump indoors":
            expected = NormalDist().cdf((link["margin_db"] - rep["fade_margin_db"]) / sigma)
            assert link["probability_heard"] == pytest.approx(expected, abs=1e-9)


def test_a_clear_terrain_path_with_clutter_diffraction_is_not_called_free_space_limited():
    # Defect: the siting reason said "path clear; free-space loss ... limits the budget, diffraction 37.3 dB"
    # for a pump whose terrain path is clear but whose land-cover clutter diffracts it.
    from profiler.products.siting.report import _obstruction_text

    text = _obstruction_text({"line_of_sight": True, "fresnel_clear": True, "worst_fresnel_ratio": 0.9,
                              "diffraction_db": 37.3, "distance_m": 6210.0})
    assert "free-space loss" not in text and "clutter" in text and "37.3 dB" in text
    clear = _obstruction_text({"line_of_sight": True, "fresnel_clear": True, "diffraction_db": 0.0,
                               "distance_m": 6210.0})
    assert "free-space loss over 6.21 km" in clear
