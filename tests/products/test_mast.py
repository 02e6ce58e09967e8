"""Mast solver: closed forms on analytic terrains, brute force through ``profiler link``,
an independent LP solver for the cheapest split, and a monotonicity property."""

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sample_sites import MODEL_OPTIONS
from scipy import constants
from scipy.optimize import linprog

from profiler.cli import main
from profiler.engine.radio import RadioSettings
from profiler.products.mast.solve import solve_mast
from profiler.terrain.profile import TerrainProfile

F_MHZ = 868.0
# lambda = c / f, c from scipy.constants (CODATA, exact SI value): ITU-R P.525-4 section 1.
LAM = constants.c / (F_MHZ * 1e6)
EARTH_KM = 6371.0  # ITU-R P.452-18 eq. (6a) / P.834-9: a_e = k * 6371 km
HUGE_K = "1e6"  # effective radius 6.4e9 km: the Earth bulge over 10 km is 2e-6 m, i.e. flat
SAMPLE_DEM = Path(__file__).resolve().parents[2] / "dem_samples" / "vellmoor_synthetic_1s.tif"
GATEWAY = "-29.9125,-19.955"  # "Cairnfell Beacon" on the sample DEM
PUMP = "-29.9,-19.825"  # "Osterby Farm pump", behind a ridge


def f1_m(d1, d2):
    """First Fresnel radius, ITU-R P.526-15 eq. (2): sqrt(lambda d1 d2 / (d1 + d2))."""
    return math.sqrt(LAM * d1 * d2 / (d1 + d2))


def write_profile(tmp_path, distance_m, terrain_m, name="profile.csv"):
    path = tmp_path / name
    rows = ["distance_m,elevation_m"] + [f"{float(d)!r},{float(h)!r}" for d, h in zip(distance_m, terrain_m)]
    path.write_text("\n".join(rows) + "\n")
    return path


def knife_edge_terrain(length_m=10_000.0, step_m=100.0, obstacle_at_m=3_000.0, obstacle_m=20.0,
                       valley_m=-50.0):
    """Ends at 0 m, a valley at ``valley_m`` so that only the obstacle can bind, one knife edge."""
    d = np.arange(0.0, length_m + step_m / 2, step_m)
    h = np.full(d.size, valley_m)
    h[0] = h[-1] = 0.0
    h[np.argmin(abs(d - obstacle_at_m))] = obstacle_m
    return d, h


def run(*args):
    result = CliRunner().invoke(main, [str(a) for a in args])
    return result


def run_json(*args):
    result = run(*args, "--json", "-")
    assert result.exit_code == 0, result.stderr
    return json.loads(result.stdout)


# --- closed forms ------------------------------------------------------------------------------

@pytest.mark.parametrize("solve", ["a", "b"])
def test_knife_edge_matches_similar_triangles_and_link_brute_force(tmp_path, solve):
    # The obstacle stands 3 km from the raised end (x = 0.3 from A, or 0.7 from A when B is raised).
    d1 = 3000.0 if solve == "a" else 7000.0
    d2 = 10_000.0 - d1
    d, h = knife_edge_terrain(obstacle_at_m=d1)
    csv = write_profile(tmp_path, d, h)
    r = 0.6
    x = d1 / 10_000.0
    fixed = 2.0
    # Similar triangles over a flat Earth: the ray from the raised antenna to the fixed one must pass
    # r * F1 above the obstacle top: m_a = (h_obs + r F1 - H_b x) / (1 - x) - ground_a, and mirrored
    # m_b = (h_obs + r F1 - H_a (1 - x)) / x - ground_b (grounds are 0 here).
    if solve == "a":
        expected = (20.0 + r * f1_m(d1, d2) - fixed * x) / (1 - x)
        masts = ["--mast-a", 0, "--mast-b", fixed]
    else:
        expected = (20.0 + r * f1_m(d1, d2) - fixed * (1 - x)) / x
        masts = ["--mast-a", fixed, "--mast-b", 0]
    report = run_json("mast", "--profile", csv, "--k", HUGE_K, "--no-low-k", "--freq-mhz", F_MHZ,
                      "--solve", solve, *masts, "--max-mast-m", 80)
    got = report[f"required_mast_{solve}_m"]
    assert report["feasible"] is True
    assert got == pytest.approx(expected, abs=0.01)
    assert got >= expected  # rounded up, never down
    assert report["binding"] == {"criterion": "clearance", "distance_m": d1, "terrain_m": 20.0}
    other = "b" if solve == "a" else "a"
    assert report[f"required_mast_{other}_m"] == fixed

    # Brute force through the link command: the solved mast clears 0.6 F1, 10 cm less does not.
    def link(mast):
        masts_link = (["--mast-a", mast, "--mast-b", fixed] if solve == "a"
                      else ["--mast-a", fixed, "--mast-b", mast])
        return run_json("link", "--profile", csv, "--k", HUGE_K, "--freq-mhz", F_MHZ, *masts_link,
                        "--clearance-ratio", r)

    assert link(got)["fresnel_clear"] is True
    assert link(got - 0.1)["fresnel_clear"] is False


@pytest.mark.parametrize("current_m", [0.0, 10.0])
def test_flat_earth_equal_masts_handbook_formula(tmp_path, current_m):
    # Smooth Earth at k = 4/3, both masts equal: grazing at midpoint needs h = d^2 / (8 a_e)
    # (handbook; in practical units h = d1 d2 / (12.74 k), d in km, from memory).
    length = 20_000.0
    d = np.arange(0.0, length + 1, 100.0)
    csv = write_profile(tmp_path, d, np.zeros(d.size))
    ae = 4 / 3 * EARTH_KM * 1e3
    grazing = length ** 2 / (8 * ae)
    assert grazing == pytest.approx(10 * 10 / (12.74 * 4 / 3), rel=1e-3)
    # Current masts of 10 m are taller than needed: the equal change is then negative.
    report = run_json("mast", "--profile", csv, "--freq-mhz", F_MHZ, "--solve", "both", "--mast-a", current_m,
                      "--mast-b", current_m, "--clearance-ratio", 0, "--no-low-k", "--mast-step-m", 10)
    assert report["required_mast_a_m"] == pytest.approx(grazing, abs=0.01)
    assert report["required_mast_b_m"] == report["required_mast_a_m"]
    assert report["added_height_m"] == pytest.approx(report["required_mast_a_m"] - current_m, abs=1e-9)
    assert report["binding"]["criterion"] == "clearance"
    assert report["binding"]["distance_m"] == 10_000.0

    # With 0.6 F1 both the bulge and F1 peak at midpoint: h = d^2/(8 a_e) + 0.6 sqrt(lambda d) / 2.
    report = run_json("mast", "--profile", csv, "--freq-mhz", F_MHZ, "--solve", "both", "--mast-a", current_m,
                      "--mast-b", current_m, "--no-low-k", "--mast-step-m", 10)
    assert report["required_mast_a_m"] == pytest.approx(grazing + 0.6 * math.sqrt(LAM * length) / 2, abs=0.01)


def test_low_k_criterion_binds_with_its_own_radius(tmp_path):
    # Flat terrain, median criterion "0 F1 at a huge k" (no bulge), low-k criterion 0 F1 at k = 2/3:
    # the low-k bulge d^2 / (8 * 2/3 * 6371 km) sets the height (ITU-R P.530-18 section 2.2.2.1 step 2).
    length = 20_000.0
    d = np.arange(0.0, length + 1, 100.0)
    csv = write_profile(tmp_path, d, np.zeros(d.size))
    report = run_json("mast", "--profile", csv, "--freq-mhz", F_MHZ, "--solve", "both", "--mast-a", 0,
                      "--mast-b", 0, "--clearance-ratio", 0, "--k", HUGE_K, "--low-k", "2/3",
                      "--low-k-clearance", 0, "--mast-step-m", 10)
    assert report["required_mast_a_m"] == pytest.approx(length ** 2 / (8 * 2 / 3 * EARTH_KM * 1e3), abs=0.01)
    assert report["binding"]["criterion"] == "clearance_low_k"
    by_name = {c["criterion"]: c for c in report["criteria"]}
    assert by_name["clearance"]["required_mast_a_m"] == pytest.approx(0.0, abs=0.01)


def test_cheapest_split_matches_scipy_linprog(tmp_path):
    # Two obstacles; minimise m_a + m_b subject to the 0.6 F1 clearance lines, solved independently
    # with scipy's HiGHS linear-programming solver over the same constraints.
    d = np.arange(0.0, 12_001.0, 100.0)
    h = np.full(d.size, -40.0)
    h[0], h[-1] = 5.0, 12.0
    h[np.searchsorted(d, 2500.0)] = 18.0
    h[np.searchsorted(d, 8200.0)] = 30.0
    prof = TerrainProfile(distance_m=d, terrain_m=h, kind="surveyed")
    res = solve_mast(prof, frequency_mhz=F_MHZ, solve="both", mast_a_m=0.0, mast_b_m=0.0, k_factor=4 / 3,
                     low_k_clearance_ratio=None, max_mast_m=60.0, mast_step_m=60.0)
    split = res.cheapest_split
    assert split is not None and split["method"] == "exact"

    x = d[1:-1] / d[-1]
    d1, d2 = d[1:-1], d[-1] - d[1:-1]
    ae = 4 / 3 * EARTH_KM * 1e3
    target = h[1:-1] + d1 * d2 / (2 * ae) + 0.6 * np.sqrt(LAM * d1 * d2 / d[-1])
    c = target - h[0] * (1 - x) - h[-1] * x
    lp = linprog([1.0, 1.0], A_ub=-np.column_stack([1 - x, x]), b_ub=-c, bounds=[(0, 60), (0, 60)],
                 method="highs")
    assert lp.status == 0
    assert split["total_m"] == pytest.approx(lp.fun, abs=0.01)
    # The split really meets the criterion everywhere (with its own rounding up).
    los = (h[0] + split["mast_a_m"]) * (1 - x) + (h[-1] + split["mast_b_m"]) * x
    assert np.all(los >= target)
    # And it is no dearer than equal added heights.
    assert split["total_m"] <= res.required_mast_a_m + res.required_mast_b_m + 1e-9


# --- margin criterion ----------------------------------------------------------------------------

def test_margin_criterion_against_link_brute_force(tmp_path):
    d, h = knife_edge_terrain(obstacle_m=40.0)
    csv = write_profile(tmp_path, d, h)
    common = ["--profile", csv, "--freq-mhz", F_MHZ, "--mast-b", 2, "--sf", 12, "--tx-power-dbm", -10,
              "--diffraction", "delta-bullington"]
    m0 = run_json("link", *common, "--mast-a", 0)["budget"]["margin_db"]
    m40 = run_json("link", *common, "--mast-a", 40)["budget"]["margin_db"]
    assert m40 > m0 + 3
    wanted = 0.5 * (m0 + m40)
    report = run_json("mast", *common, "--mast-a", 0, "--solve", "a", "--no-clearance",
                      "--min-margin-db", wanted)
    got = report["required_mast_a_m"]
    assert report["feasible"] is True and 0 < got < 40
    assert report["binding"]["criterion"] == "margin"
    assert report["margin_monotone"] is True
    # Brute force through the link command: the solved height meets the margin, 10 cm less does not.
    assert run_json("link", *common, "--mast-a", got)["budget"]["margin_db"] >= wanted
    assert run_json("link", *common, "--mast-a", got - 0.1)["budget"]["margin_db"] < wanted
    assert report["at_required"]["margin_db"] >= wanted


def test_cheapest_split_with_margin_criterion_against_link(tmp_path):
    # Obstacle near A: the cheapest way to reach the margin raises A more than B.  The split must meet
    # the margin through the link command, B 10 cm lower must not, and it is no dearer than equal heights.
    d, h = knife_edge_terrain(obstacle_m=40.0, obstacle_at_m=2000.0)
    csv = write_profile(tmp_path, d, h)
    common = ["--profile", csv, "--freq-mhz", F_MHZ, "--sf", 12, "--tx-power-dbm", -10]
    wanted = run_json("link", *common, "--mast-a", 15, "--mast-b", 15)["budget"]["margin_db"]
    report = run_json("mast", *common, "--mast-a", 0, "--mast-b", 0, "--solve", "both", "--no-clearance",
                      "--min-margin-db", wanted, "--max-mast-m", 30, "--mast-step-m", 3)
    split = report["cheapest_split"]
    assert split["method"] == "grid+golden"
    assert split["mast_a_m"] > split["mast_b_m"]
    assert split["total_m"] <= report["required_mast_a_m"] + report["required_mast_b_m"] + 1e-9

    def margin(a, b):
        return run_json("link", *common, "--mast-a", a, "--mast-b", b)["budget"]["margin_db"]

    assert margin(split["mast_a_m"], split["mast_b_m"]) >= wanted
    if split["mast_b_m"] >= 0.1:
        assert margin(split["mast_a_m"], split["mast_b_m"] - 0.1) < wanted


def test_margin_not_monotone_is_reported(tmp_path):
    # With no --sf the margin is taken at the recommended (lowest closing) SF: when a lower SF starts to
    # close the margin drops by its sensitivity step (about 2.5 dB per SF, LoRa modem datasheets, common
    # practice), so the curve is a saw-tooth and must be reported as not monotone.
    d, h = knife_edge_terrain(obstacle_m=40.0)
    csv = write_profile(tmp_path, d, h)
    common = ["--profile", csv, "--freq-mhz", F_MHZ, "--mast-b", 2, "--tx-power-dbm", 0]
    report = run_json("mast", *common, "--mast-a", 0, "--solve", "a", "--no-clearance",
                      "--min-margin-db", 11.0)
    rows = report["table"]
    margins = [row["margin_db"] for row in rows]
    assert any(b < a - 0.5 for a, b in zip(margins, margins[1:])), "test profile should make a saw-tooth"
    assert report["margin_monotone"] is False
    assert any("does not increase steadily" in n for n in report["notes"])
    got = report["required_mast_a_m"]
    assert run_json("link", *common, "--mast-a", got)["budget"]["margin_db"] >= 11.0
    assert run_json("link", *common, "--mast-a", max(0.0, got - 0.1))["budget"]["margin_db"] < 11.0


# --- sample DEM, end to end ------------------------------------------------------------------------

def test_sample_dem_solve_a_end_to_end(tmp_path):
    out = tmp_path / "mast.json"
    result = run("mast", "--dem", SAMPLE_DEM, "--site-a", GATEWAY, "--site-b", PUMP, "--name-a", "Cairnfell Beacon",
                 "--name-b", "Osterby Farm pump", "--solve", "a", "--json", out)
    assert result.exit_code == 0, result.stderr
    assert "Cairnfell Beacon" in result.stdout and "each metre" in result.stdout
    report = json.loads(out.read_text())
    assert report["schema"] == "profiler.mast/4"
    for key in ("feasible", "required_mast_a_m", "required_mast_b_m", "binding", "table"):
        assert key in report
    assert set(report["binding"]) >= {"criterion", "distance_m", "terrain_m"}
    assert set(report["table"][0]) >= {"mast_a_m", "mast_b_m", "worst_ratio", "worst_ratio_low_k",
                                       "diffraction_db", "margin_db"}
    assert report["table"][0]["mast_a_m"] == 10.0 and report["table"][-1]["mast_a_m"] == 60.0
    got = report["required_mast_a_m"]
    assert report["required_mast_b_m"] == 2.0

    def link(mast, *extra):
        return run_json("link", "--dem", SAMPLE_DEM, "--site-a", GATEWAY, "--site-b", PUMP, "--mast-a", mast, *extra)

    # Median-k criterion checked by the link command at the solved height and 10 cm lower.
    assert link(got)["worst"]["fresnel_ratio"] >= 0.6
    assert link(got - 0.1)["worst"]["fresnel_ratio"] < 0.6
    # Low-k criterion (0 F1 at k = 2/3) holds too.
    assert link(got, "--k", "2/3")["worst"]["fresnel_ratio"] >= 0.0


@pytest.mark.parametrize("model", MODEL_OPTIONS)
def test_mast_margin_equals_profiler_link(model):
    # One engine (issue 19 item 5): the mast scan's row at the current heights and the row at the solved
    # height give what `profiler link` gives for the same path and options, with either model.
    opts = ["--dem", SAMPLE_DEM, "--site-a", GATEWAY, "--site-b", PUMP, "--gain-b-dbi", 0, *MODEL_OPTIONS[model]]
    report = run_json("mast", *opts, "--solve", "a", "--min-margin-db", 5)
    assert report["model"] == report["propagation"]["model"] == MODEL_OPTIONS[model][1]
    rows = {"current": report["table"][0], "required": report["at_required"]}
    assert rows["current"]["mast_a_m"] == 10.0 and rows["required"]["mast_a_m"] == report["required_mast_a_m"]
    for row in rows.values():
        one = run_json("link", *opts, "--mast-a", row["mast_a_m"], "--mast-b", row["mast_b_m"])
        assert one["model"] == report["model"]
        assert row["margin_db"] == pytest.approx(one["budget"]["margin_db"], abs=0.01)
        assert row["diffraction_db"] == pytest.approx(one["loss_db"]["diffraction"], abs=0.01)
        assert row["worst_ratio"] == pytest.approx(one["worst"]["fresnel_ratio"], abs=1e-6)
        assert (row["sf"], row["dr"]) == (one["budget"]["sf"], one["budget"]["dr"])


def test_sample_dem_solve_b_is_infeasible_and_still_writes_report(tmp_path):
    # The pump sits behind a ridge; the obstruction near the gateway cannot be cleared from B.
    out = tmp_path / "mast.json"
    result = run("mast", "--dem", SAMPLE_DEM, "--site-a", GATEWAY, "--site-b", PUMP, "--solve", "b", "--json", out)
    assert result.exit_code == 3
    err = result.stderr.strip()
    assert "\n" not in err and err.startswith("profiler: error: no mast up to 60 m")
    assert "binding obstruction at" in err and "best achievable" in err
    report = json.loads(out.read_text())
    assert report["feasible"] is False
    assert report["required_mast_b_m"] is None and report["required_mast_a_m"] == 10.0
    assert report["best_achievable"]["worst_ratio"] < 0.6
    assert f"{report['binding']['distance_m'] / 1000:.3f} km" in err


def test_infeasible_wall_exits_nonzero_with_one_line(tmp_path):
    d, h = knife_edge_terrain(obstacle_m=500.0)
    csv = write_profile(tmp_path, d, h)
    out = tmp_path / "r.json"
    result = run("mast", "--profile", csv, "--freq-mhz", F_MHZ, "--solve", "a", "--json", out)
    assert result.exit_code == 3
    assert result.stderr.count("\n") == 1 and "3.000 km (terrain 500.0 m)" in result.stderr
    report = json.loads(out.read_text())
    assert report["feasible"] is False and report["required_mast_a_m"] is None
    assert report["binding"]["distance_m"] == 3000.0


# --- property: more terrain never needs a lower mast ----------------------------------------------

terrain_strategy = st.lists(st.floats(-20.0, 40.0, allow_nan=False), min_size=4, max_size=30)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(terrain=terrain_strategy, data=st.data(), solve=st.sampled_from(["a", "b", "both"]))
def test_adding_terrain_never_lowers_required_height(terrain, data, solve):
    n = len(terrain)
    bump = data.draw(st.lists(st.floats(0.0, 30.0, allow_nan=False), min_size=n, max_size=n))
    bump[0] = bump[-1] = 0.0  # the sites' ground stays; only the path between gets higher
    d = np.linspace(0.0, 5000.0, n)
    base = np.asarray(terrain)
    kw = dict(frequency_mhz=F_MHZ, solve=solve, mast_a_m=5.0, mast_b_m=5.0, max_mast_m=60.0, mast_step_m=60.0,
              radio=RadioSettings(diffraction_method="knife-edge"))
    r0 = solve_mast(TerrainProfile(distance_m=d, terrain_m=base), **kw)
    r1 = solve_mast(TerrainProfile(distance_m=d, terrain_m=base + np.asarray(bump)), **kw)
    if not r0.feasible:
        assert not r1.feasible
        return
    if r1.feasible:
        assert r1.required_mast_a_m >= r0.required_mast_a_m
        assert r1.required_mast_b_m >= r0.required_mast_b_m
    if solve == "both" and r1.cheapest_split is not None:
        assert r0.cheapest_split is not None
        assert r1.cheapest_split["total_m"] >= r0.cheapest_split["total_m"] - 0.002


# --- input errors and outputs -----------------------------------------------------------------------

def test_no_clearance_needs_margin(tmp_path):
    d, h = knife_edge_terrain()
    csv = write_profile(tmp_path, d, h)
    result = run("mast", "--profile", csv, "--no-clearance")
    assert result.exit_code == 2
    assert result.stderr.startswith("profiler: error:") and "--min-margin-db" in result.stderr
    assert result.stderr.count("\n") == 1


def test_current_mast_above_maximum_is_refused(tmp_path):
    d, h = knife_edge_terrain()
    csv = write_profile(tmp_path, d, h)
    result = run("mast", "--profile", csv, "--solve", "b", "--mast-b", 70)
    assert result.exit_code == 2 and "--max-mast-m" in result.stderr


def test_plot_is_written(tmp_path):
    d, h = knife_edge_terrain()
    csv = write_profile(tmp_path, d, h)
    fig = tmp_path / "mast.png"
    result = run("mast", "--profile", csv, "--freq-mhz", F_MHZ, "--solve", "a", "--plot", fig, "--dpi", 50,
                 "--mast-step-m", 5)
    assert result.exit_code == 0, result.stderr
    assert fig.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification, section 5.2)


def test_bad_plot_extension_is_refused_before_solving(tmp_path):
    d, h = knife_edge_terrain()
    csv = write_profile(tmp_path, d, h)
    result = run("mast", "--profile", csv, "--solve", "a", "--plot", tmp_path / "mast.jpg")
    assert result.exit_code == 2 and result.stderr.startswith("profiler: error:") and ".png" in result.stderr
    assert not (tmp_path / "mast.jpg").exists()


def test_mast_rounding_and_data_rate_per_row(tmp_path):
    # EU868 plan, no --sf: the recommended data rate (RP002-1.0.4 2.4.3) changes as the mast rises, and a
    # faster rate needs more signal, so the margin at the recommended rate drops there: the text table
    # shows the DR of every row and flags the drop.
    d, h = knife_edge_terrain(obstacle_m=40.0)
    csv = write_profile(tmp_path, d, h)
    common = ["--profile", csv, "--band", "EU868", "--mast-b", 2.3, "--tx-power-dbm", 0]
    args = ["mast", *common, "--mast-a", 0.7, "--solve", "both", "--no-clearance", "--min-margin-db", 11.0,
            "--max-mast-m", 40, "--mast-step-m", 0.7]
    report = run_json(*args)
    for row in report["table"]:
        assert row["dr"] is not None and row["sf"] is not None
        for key in ("mast_a_m", "mast_b_m"):
            assert row[key] == round(row[key], 6)   # no float noise such as 35.089999999999996
    assert report["required_mast_a_m"] == round(report["required_mast_a_m"], 6)
    text = run(*args).stdout
    assert "data rate" in text and "DR" in text
    assert "faster data rate recommended" in text or not any(
        b["margin_db"] < a["margin_db"] - 1e-6 and b["dr"] != a["dr"]
        for a, b in zip(report["table"], report["table"][1:]))
    # Heights in the text are rounded up to the centimetre and the parts add up.
    req_line = next(ln for ln in text.splitlines() if ln.strip().startswith("required"))
    a_txt = req_line.split("A ")[1].split(" m")[0]
    assert float(a_txt) == math.ceil(report["required_mast_a_m"] * 100 - 1e-9) / 100
    split_line = next(ln for ln in text.splitlines() if ln.strip().startswith("cheapest"))
    parts = [float(x) for x in split_line.replace("=", "+").replace("m", "").split()[1:] if
             x.replace(".", "").isdigit()]
    assert parts[0] + parts[1] == pytest.approx(parts[2], abs=1e-9)
