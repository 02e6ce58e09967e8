"""End-to-end checks of `profiler link`: the JSON contract, bad input, and
properties of the analysis over the bundled synthetic terrain."""

import csv
import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st
from rasterio.transform import from_origin
from reference_data import missing_reason, reference_folder

from profiler.cli import main
from profiler.products.link import analyze_link
from profiler.terrain.elevation import ElevationModel
from profiler.terrain.profile import TerrainProfile, profile_from_dem

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = str(ROOT / "dem_samples")
GW = "-29.9125,-19.955"          # invented gateway site on the synthetic terrain
PUMP = "-29.9,-19.825"           # invented sensor site behind the ridge
QUARRY = "-29.965,-19.82"        # path crosses the synthetic void

TOP_KEYS = {"schema", "tool_version", "site_a", "site_b", "frequency_mhz", "band", "wavelength_m", "k_factor",
            "effective_radius_m", "distance_m", "azimuth_a_to_b_deg", "azimuth_b_to_a_deg",
            "elevation_angle_a_deg", "elevation_angle_b_deg", "profile", "worst", "line_of_sight",
            "fresnel_clear", "clearance_ratio_required", "dem", "warnings", "loss_db", "budget", "lora",
            "budget_downlink", "compliance", "slant_distance_m", "gateway", "radio_ends", "rf_exposure", "sheet",
            "declination_a_deg", "declination_b_deg", "azimuth_a_to_b_magnetic_deg",
            "azimuth_b_to_a_magnetic_deg", "magnetic_model", "compass_caution_a", "compass_caution_b"}
SITE_KEYS = {"name", "lat_deg", "lon_deg", "ground_m", "mast_m", "antenna_amsl_m"}
LOSS_KEYS = {"model", "free_space", "diffraction", "combination", "location", "basic_transmission", "extra",
             "polarization", "total", "diffraction_method", "smooth_surface_height_a_m", "smooth_surface_height_b_m"}
PROFILE_KEYS = {"distance_m", "lat_deg", "lon_deg", "terrain_m", "bulge_m", "los_m", "fresnel_radius_m", "clearance_m"}


def run(*args):
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def run_json(*args):
    res = run("link", *args, "--json", "-")
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def one_line_error(res):
    assert res.exit_code != 0
    assert "Traceback" not in res.output
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, res.stderr
    assert lines[0].startswith("profiler: error:")
    return lines[0]


def test_json_contract_on_sample_terrain():
    r = run_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--name-a", "Cairnfell Beacon",
                 "--name-b", "Osterby Farm pump")
    assert TOP_KEYS <= set(r)
    assert r["schema"] == "profiler.link/6"
    assert SITE_KEYS <= set(r["site_a"]) and SITE_KEYS <= set(r["site_b"])
    assert PROFILE_KEYS <= set(r["profile"])
    assert {"distance_m", "clearance_m", "fresnel_ratio", "v"} <= set(r["worst"])
    assert {"sources", "voids_filled"} <= set(r["dem"])
    src = r["dem"]["sources"][0]
    assert {"path", "sha256", "crs", "resolution"} <= set(src) and len(src["sha256"]) == 64
    # The default model is ITU-R P.1812-8 (issue 19): link/4 names it and carries its settings and values.
    assert r["model"] == "p1812" and r["loss_db"]["model"] == "p1812" and r["propagation"]["model"] == "p1812"
    assert {"time_percent", "location_percent", "location_sigma_db", "area_width_m", "delta_n", "n0",
            "coast_distance_a_km", "coast_distance_b_km"} <= set(r["propagation"])
    assert LOSS_KEYS | {"delta_bullington"} <= set(r["loss_db"])
    assert {"location_percent", "location_sigma_db", "location_term_db", "lb_db", "lbfs_db",
            "e_dbuv_m"} <= set(r["p1812"])
    assert {"tx_power_dbm", "eirp_dbm", "rx_power_dbm", "sensitivity_dbm", "margin_db",
            "fade_margin_required_db", "closes", "sf"} <= set(r["budget"])
    assert {"bw_khz", "payload_bytes", "per_sf", "lowest_closing_sf"} <= set(r["lora"])
    assert [row["sf"] for row in r["lora"]["per_sf"]] == [7, 8, 9, 10, 11, 12]
    n = len(r["profile"]["distance_m"])
    assert all(len(r["profile"][k]) == n for k in PROFILE_KEYS)
    # Default band EU868: mean of 867.1 and 869.525 MHz = 868.3125 MHz (common practice).
    assert r["frequency_mhz"] == pytest.approx(868.3125)
    assert r["wavelength_m"] == pytest.approx(299_792_458 / 868.3125e6)
    assert r["site_a"]["mast_m"] == 10 and r["site_b"]["mast_m"] == 2       # issue defaults
    assert r["site_a"]["antenna_amsl_m"] == pytest.approx(r["site_a"]["ground_m"] + 10)
    assert r["budget"]["closes"] == (r["budget"]["margin_db"] >= r["budget"]["fade_margin_required_db"])
    # Sample spacing no larger than the 1" pixel (about 26.8 m east-west at 29.9 S, from memory:
    # 30.87 m * cos(29.9 deg)).
    assert np.diff(r["profile"]["distance_m"]).max() <= 26.9


def test_worst_point_v_and_loss_are_consistent_with_p526():
    r = run_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP)
    w, p = r["worst"], r["profile"]
    i = p["distance_m"].index(w["distance_m"])
    d, lam = r["distance_m"], r["wavelength_m"]
    d1, d2 = p["distance_m"][i], d - p["distance_m"][i]
    h = -w["clearance_m"]      # height of the obstacle above the line of sight
    # ITU-R P.526-15 eq. (22): v = h sqrt(2/lambda (1/d1 + 1/d2)).
    assert w["v"] == pytest.approx(h * math.sqrt(2 / lam * (1 / d1 + 1 / d2)), rel=1e-9)
    # Worst point = smallest clearance ratio over the interior samples.
    ratios = [c / f for c, f in zip(p["clearance_m"][1:-1], p["fresnel_radius_m"][1:-1])]
    assert w["fresnel_ratio"] == pytest.approx(min(ratios))
    assert r["line_of_sight"] == (min(p["clearance_m"][1:-1]) > 0)


def test_terrain_model_contract_on_sample_terrain():
    r = run_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--model", "terrain")
    assert r["model"] == "terrain" and r["loss_db"]["model"] == "terrain" and r["p1812"] is None
    assert LOSS_KEYS | {"knife_edge", "bullington", "delta_bullington", "spherical_earth"} <= set(r["loss_db"])


def test_p1812_block_has_every_validation_column():
    """The ``p1812`` block is named like the columns of the SG3 validation set (issue 19, JSON)."""
    folder = reference_folder("p1812-validation")
    if folder is None:
        pytest.skip(missing_reason("p1812-validation"))
    with open(folder / "expected.csv", newline="") as fh:
        columns = next(csv.reader(fh))
    wanted = (set(columns) - {"profile", "dataset"}) | {"location_percent", "location_sigma_db", "location_term_db"}
    r = run_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP)
    assert wanted <= set(r["p1812"]), sorted(wanted - set(r["p1812"]))


@pytest.mark.parametrize("extra", [["--model", "terrain"], ["--model", "p1812"],
                                   ["--model", "p1812", "--time-percent", "10", "--location-percent", "95"]])
def test_total_loss_is_the_sum_of_its_parts(extra):
    r = run_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--extra-loss-db", "7.5",
                 "--polarization-b", "45", *extra)
    loss = r["loss_db"]
    assert loss["model"] == extra[1]
    assert loss["extra"] == 7.5
    # 45 degrees between polarizations: 20 log10(sqrt 2) = 3.01 dB (handbook).
    assert loss["polarization"] == pytest.approx(3.0103, abs=1e-3)
    parts = loss["free_space"] + loss["diffraction"] + loss["combination"] + loss["location"]
    assert loss["basic_transmission"] == pytest.approx(parts, abs=1e-9)
    assert loss["total"] == pytest.approx(parts + 7.5 + loss["polarization"], abs=1e-9)
    if extra[1] == "terrain":
        assert loss["combination"] == 0 and loss["location"] == 0
        assert loss["diffraction"] == loss["delta_bullington"]
        # ITU-R P.525-4: free-space loss 32.45 + 20 log f(MHz) + 20 log d(km) (constant 20 log10(4 pi 1e9 / c)),
        # d the straight line between the antenna tips (hypot of ground distance and height difference).
        dz = r["site_a"]["antenna_amsl_m"] - r["site_b"]["antenna_amsl_m"]
        f, dk = r["frequency_mhz"], math.hypot(r["distance_m"], dz) / 1000
        assert loss["free_space"] == pytest.approx(32.4478 + 20 * math.log10(f) + 20 * math.log10(dk), abs=1e-3)
        return
    p = r["p1812"]
    # ITU-R P.1812-8 section 4.9: loss_db.total is Lb at the asked percentages (eq. 69) plus the extra and
    # polarization losses; free space is Lbfs (eq. 8), diffraction Ldp (eq. 41).
    assert loss["basic_transmission"] == p["lb_db"] and loss["free_space"] == p["lbfs_db"]
    assert loss["diffraction"] == p["ldp_db"] and loss["location"] == p["location_term_db"]
    # Eq. (41): Ldp = Ld50 + Fi (Ldbeta - Ld50), Fi = 0 at 50 % of time (eq. 40); delta_bullington is Ld50.
    assert loss["delta_bullington"] == p["ld50_db"]
    assert (p["fi"] == 0.0 and p["ldp_db"] == p["ld50_db"]) == (p["time_percent"] == 50)
    assert p["time_percent"] == float(r["propagation"]["time_percent"])
    # Location term of eq. (69): sigma_L Q^-1(1 - pL/100), with Q^-1 from scipy.special.ndtri (within the
    # Recommendation's 0.00054 for I(x), Attachment 2); sigma_L = (0.024 f[GHz] + 0.52) wa^0.28 (section 4.7)
    # times u(h) = 1 - (h - R) / 10 for the node's 2 m antenna over no clutter (R = 0): 0.8.
    from scipy.special import ndtri
    sigma = (0.024 * r["frequency_mhz"] / 1000 + 0.52) * 100 ** 0.28 * 0.8
    assert p["location_sigma_db"] == pytest.approx(sigma, rel=1e-12)
    pl = r["propagation"]["location_percent"]
    assert loss["location"] == pytest.approx(sigma * ndtri(pl / 100), abs=0.00054 * sigma)
    assert (loss["location"] == 0.0) == (pl == 50)


@pytest.mark.parametrize("method,key", [("knife-edge", "knife_edge"), ("bullington", "bullington"),
                                        ("delta-bullington", "delta_bullington"), ("none", None)])
def test_diffraction_method_selects_the_part(method, key):
    r = run_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--model", "terrain", "--diffraction", method)
    assert r["loss_db"]["diffraction_method"] == method
    assert r["loss_db"]["diffraction"] == (0.0 if key is None else r["loss_db"][key])


@pytest.mark.parametrize("method", ["knife-edge", "bullington", "none"])
def test_p1812_refuses_another_diffraction_method(method):
    # P.1812-8 section 4.3 has its own delta-Bullington diffraction: another method is the terrain model's.
    msg = one_line_error(run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--diffraction", method))
    assert f"--diffraction {method}" in msg and "--model terrain" in msg
    res = run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--model", "p1812", "--diffraction", method)
    assert res.exit_code == 2 and one_line_error(res) == msg


def test_negative_coordinates_both_spellings():
    a = run_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP)
    b = run_json("--dem", SAMPLE, f"--site-a={GW}", f"--site-b={PUMP}")
    assert a["distance_m"] == b["distance_m"] and a["site_a"]["lat_deg"] == -29.9125


def test_human_summary_names_the_essentials():
    res = run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--name-a", "Cairnfell Beacon")
    assert res.exit_code == 0
    for word in ("Cairnfell Beacon", "km", "azimuth", "verdict", "worst point", "% of F1", "margin", "SF",
                 "Planning aid"):
        assert word in res.output


def test_void_refused_then_filled():
    res = run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", QUARRY)
    msg = one_line_error(res)
    assert "void" in msg and "km from site A" in msg and "--fill-voids" in msg
    r = run_json("--dem", SAMPLE, "--site-a", GW, "--site-b", QUARRY, "--fill-voids")
    assert r["dem"]["voids_filled"] > 0
    assert any("void" in w for w in r["warnings"])


def test_csv_has_units_and_summary(tmp_path):
    out = tmp_path / "p.csv"
    res = run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--csv", str(out))
    assert res.exit_code == 0
    lines = out.read_text().splitlines()
    header = lines[0].split(",")
    assert header[0] == "distance_m" and all(h.endswith(("_m", "_deg", "_ratio")) for h in header)
    assert any(line.startswith("# total_loss_db") for line in lines)
    assert any(line.startswith("# caution") for line in lines)


def test_near_field_warning():
    # Two points about 2 m apart: closer than the 3 m rule of thumb (common practice).
    r = run_json("--dem", SAMPLE, "--site-a", "-29.9,-19.9", "--site-b", "-29.9,-19.89998", "--step-m", "0.5",
                 "--mast-a", "2", "--mast-b", "2")
    assert r["distance_m"] < 3
    assert r["slant_distance_m"] < 3
    assert any("wavelengths" in w for w in r["warnings"])


def test_slant_distance_and_free_space_use_the_antenna_tips():
    # Equal ground distance, 10 m vs 2 m masts: the free-space loss uses the straight line between the
    # antenna tips.  Reference: the Euclidean distance between the two tips in Earth-centred coordinates
    # from pyproj (WGS84 geocentric, EPSG:4978), heights taken as ellipsoidal.
    from pyproj import Transformer
    r = run_json("--dem", SAMPLE, "--site-a", "-29.9,-19.9", "--site-b", "-29.9,-19.89998", "--step-m", "0.5",
                 "--model", "terrain")
    a, b = r["site_a"]["antenna_amsl_m"], r["site_b"]["antenna_amsl_m"]
    to_ecef = Transformer.from_crs("EPSG:4979", "EPSG:4978", always_xy=True)
    pa = to_ecef.transform(-19.9, -29.9, a)
    pb = to_ecef.transform(-19.89998, -29.9, b)
    chord = math.dist(pa, pb)
    assert r["slant_distance_m"] == pytest.approx(chord, rel=1e-6)
    # Flat-Earth check (hypot): agrees to 1e-4 (the (R + h) / R arc stretch at ~650 m AMSL is 1e-4).
    assert r["slant_distance_m"] == pytest.approx(math.hypot(r["distance_m"], a - b), rel=2e-4)
    # P.525-4 eq. (4) with c from scipy.constants.
    from scipy import constants
    lam = constants.c / (r["frequency_mhz"] * 1e6)
    assert r["loss_db"]["free_space"] == pytest.approx(20 * math.log10(4 * math.pi * chord / lam), abs=1e-6)


@pytest.mark.parametrize("site_b,step", [("-29.9,-19.89998", "0.5"), (PUMP, None)])
def test_p1812_free_space_uses_eq_8a(site_b, step):
    # ITU-R P.1812-8 eq. (8): Lbfs = 92.4 + 20 log f[GHz] + 20 log dfs[km], with eq. (8a)
    # dfs = sqrt(d^2 + ((hts - hrs) / 1000)^2), hts and hrs the antenna heights [m AMSL]: a flat-Earth slant
    # distance, and a constant 0.05 dB below P.525-4's 32.4478 + 20 log 1000.  On the 2 m path the masts
    # (10 m and 2 m) make dfs four times d.
    r = run_json("--dem", SAMPLE, "--site-a", "-29.9,-19.9" if step else GW, "--site-b", site_b,
                 *(["--step-m", step] if step else []))
    assert r["model"] == "p1812"
    d_km = r["distance_m"] / 1000
    dfs = math.hypot(d_km, (r["site_a"]["antenna_amsl_m"] - r["site_b"]["antenna_amsl_m"]) / 1000)
    f_ghz = r["frequency_mhz"] / 1000
    expected = 92.4 + 20 * math.log10(f_ghz) + 20 * math.log10(dfs)
    assert r["loss_db"]["free_space"] == pytest.approx(expected, abs=1e-9)
    assert r["p1812"]["lbfs_db"] == r["loss_db"]["free_space"]
    if step:
        assert dfs > 4 * d_km


def test_sites_centimetres_apart_are_refused_as_too_close():
    # Two points about 2 cm apart (1e-7 deg of longitude at 30 S is about 1 cm; common geodesy).
    r = run("link", "--dem", SAMPLE, "--site-a", "-29.9,-19.9", "--site-b", "-29.9,-19.8999998", "--step-m", "0.005",
            "--mast-a", "2", "--mast-b", "2")
    assert r.exit_code == 2
    assert "too close" in r.stderr and "path loss" not in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1


@pytest.mark.parametrize("args,needle", [
    (["--site-a", "91,0", "--site-b", "0,0"], "latitude"),
    (["--site-a", "10,200", "--site-b", "0,0"], "longitude"),
    (["--site-a", "abc", "--site-b", "0,0"], "LAT,LON"),
    (["--site-a", "10", "--site-b", "0,0"], "LAT,LON"),
    (["--site-a", GW, "--site-b", GW], "same point"),
    (["--site-a", GW, "--site-b", PUMP, "--k", "0"], "k-factor"),
    (["--site-a", GW, "--site-b", PUMP, "--k", "-4/3"], "k-factor"),
    (["--site-a", GW, "--site-b", PUMP, "--k", "os.system('x')"], "k-factor"),
    (["--site-a", GW, "--site-b", PUMP, "--freq-mhz", "0"], "freq"),
    (["--site-a", GW, "--site-b", PUMP, "--freq-mhz", "-5"], "freq"),
    (["--site-a", GW, "--site-b", PUMP, "--band", "XX999"], "band"),
    (["--site-a", GW, "--site-b", "-40,-19.8"], "outside"),
    (["--site-a", GW, "--site-b", PUMP, "--sf", "13"], "spreading factor"),
    (["--site-a", GW, "--site-b", PUMP, "--sf", "6"], "spreading factor"),
    (["--site-a", GW, "--site-b", PUMP, "--bw-khz", "200"], "bandwidth"),
    (["--site-a", GW, "--site-b", PUMP, "--mast-a", "-1"], "mast"),
    (["--site-a", GW, "--site-b", PUMP, "--mast-b", "-0.5"], "mast"),
    (["--site-a", GW, "--site-b", PUMP, "--polarization-a", "diagonal"], "polarization"),
    (["--site-a", GW], "site-b"),
])
def test_bad_input_one_line(args, needle):
    res = run("link", "--dem", SAMPLE, *args)
    msg = one_line_error(res)
    assert needle.lower() in msg.lower()


def test_outside_coverage_names_site_and_bounds():
    msg = one_line_error(run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", "-40,-19.8", "--name-b", "Far Hut"))
    assert "Far Hut" in msg and "coverage" in msg


def test_bad_dem_files(tmp_path):
    missing = one_line_error(run("link", "--dem", str(tmp_path / "nope.tif"), "--site-a", GW, "--site-b", PUMP))
    assert "nope.tif" in missing
    text = tmp_path / "notes.tif"
    text.write_text("this is not a raster")
    assert "notes.tif" in one_line_error(run("link", "--dem", str(text), "--site-a", GW, "--site-b", PUMP))
    # A truncated GeoTIFF: the header survives, the pixel blocks do not.
    src = (ROOT / "dem_samples" / "vellmoor_synthetic_1s.tif").read_bytes()
    cut = tmp_path / "cut.tif"
    cut.write_bytes(src[: len(src) // 3])
    assert "cut.tif" in one_line_error(run("link", "--dem", str(cut), "--site-a", GW, "--site-b", PUMP))


def test_nothing_half_written(tmp_path):
    out = tmp_path / "missing_folder" / "r.json"
    one_line_error(run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--json", str(out)))
    assert not out.exists()
    good = tmp_path / "r.json"
    res = run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", "-40,-19.8", "--json", str(good))
    assert res.exit_code != 0 and not good.exists()
    assert list(tmp_path.iterdir()) == []        # no temporary leftovers


def test_antimeridian_path(write_dem):
    # A smooth synthetic surface on two tiles either side of 180 degrees.
    res = 1 / 1200
    def tile(west, name):
        cols = west + (np.arange(240) + 0.5) * res
        rows = 0.1 - (np.arange(240) + 0.5) * res
        lon, lat = np.meshgrid(cols, rows)
        z = 100 + 50 * np.cos(np.radians(lon)) ** 2 + 200 * lat
        return write_dem(f"am/{name}.tif", z.astype("float32"), from_origin(west, 0.1, res, res))
    tile(179.8, "east")
    tile(-180.0, "west")
    folder = str(Path(tile(179.8, "east")).parent)
    r = run_json("--dem", folder, "--site-a", "0.05,179.9", "--site-b", "0.0,-179.9")
    from geographiclib.geodesic import Geodesic
    assert r["distance_m"] == pytest.approx(Geodesic.WGS84.Inverse(0.05, 179.9, 0.0, -179.9)["s12"], abs=1e-3)
    assert r["distance_m"] < 30_000        # the short way across 180 degrees, not around the globe
    lons = np.array(r["profile"]["lon_deg"])
    assert (lons > 179).any() and (lons < -179).any()
    assert np.all(np.isfinite(r["profile"]["terrain_m"]))


# --- surveyed profiles -------------------------------------------------------------------------

def write_profile(tmp_path, rows, header="distance_m,elevation_m"):
    p = tmp_path / "survey.csv"
    p.write_text(header + "\n" + "\n".join(rows) + "\n")
    return str(p)


def test_surveyed_profile(tmp_path):
    path = write_profile(tmp_path, ["0,100", "1000,120", "2000,180", "3000,110", "4000,100"])
    res = run("link", "--profile", path, "--json", "-")
    assert res.exit_code == 0, res.output
    r = json.loads(res.stdout)
    assert r["profile"]["distance_m"] == [0, 1000, 2000, 3000, 4000]      # used as given
    assert r["profile"]["terrain_m"] == [100, 120, 180, 110, 100]
    assert r["site_a"]["lat_deg"] is None and r["azimuth_a_to_b_deg"] is None
    assert r["dem"]["kind"] == "surveyed"


@pytest.mark.parametrize("rows,needle", [
    (["0,100", "1000,120"], "at least 3"),
    (["0,100", "2000,120", "1000,110"], "distance"),
    (["0,100", "1000,120", "1000,110"], "duplicate"),
    (["0,100", "1000,nan", "2000,110"], "NaN"),
    (["0,100", "1000,abc", "2000,110"], "line 3"),
])
def test_bad_surveyed_profiles(tmp_path, rows, needle):
    msg = one_line_error(run("link", "--profile", write_profile(tmp_path, rows)))
    assert needle in msg


# --- properties --------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def sample_model():
    with ElevationModel.open([SAMPLE]) as model:
        yield model


coord = st.tuples(st.floats(-30.04, -29.81), st.floats(-19.99, -19.76))


@settings(max_examples=25, deadline=None)
@given(a=coord, b=coord, mast_a=st.floats(0, 40), mast_b=st.floats(0, 40))
def test_swapping_sites_mirrors_the_profile(sample_model, a, b, mast_a, mast_b):
    if abs(a[0] - b[0]) + abs(a[1] - b[1]) < 0.005:
        return
    ab = profile_from_dem(sample_model, a[0], a[1], b[0], b[1], step_m=50, fill_voids=True)
    ba = profile_from_dem(sample_model, b[0], b[1], a[0], a[1], step_m=50, fill_voids=True)
    assert np.allclose(ab.terrain_m, ba.terrain_m[::-1], atol=1e-6)
    assert np.allclose(ab.distance_m, ab.distance_m[-1] - ba.distance_m[::-1], atol=1e-6)
    r1 = analyze_link(ab, mast_a_m=mast_a, mast_b_m=mast_b, frequency_mhz=868.3)
    r2 = analyze_link(ba, mast_a_m=mast_b, mast_b_m=mast_a, frequency_mhz=868.3)
    assert np.allclose(r1.profile["clearance_m"], r2.profile["clearance_m"][::-1], atol=1e-6)
    assert r1.worst["fresnel_ratio"] == pytest.approx(r2.worst["fresnel_ratio"], abs=1e-9)


@settings(max_examples=40, deadline=None)
@given(terrain=st.lists(st.floats(0, 800), min_size=3, max_size=40), mast_a=st.floats(0, 50),
       mast_b=st.floats(0, 50), raise_a=st.floats(0, 30), raise_b=st.floats(0, 30))
def test_raising_a_mast_never_lowers_clearance(terrain, mast_a, mast_b, raise_a, raise_b):
    d = np.linspace(0, 250.0 * (len(terrain) - 1), len(terrain))
    prof = TerrainProfile(distance_m=d, terrain_m=np.array(terrain), kind="surveyed")
    low = analyze_link(prof, mast_a_m=mast_a, mast_b_m=mast_b, frequency_mhz=868.0)
    high = analyze_link(prof, mast_a_m=mast_a + raise_a, mast_b_m=mast_b + raise_b, frequency_mhz=868.0)
    assert np.all(high.profile["clearance_m"] >= low.profile["clearance_m"] - 1e-9)
    assert high.worst["fresnel_ratio"] >= low.worst["fresnel_ratio"] - 1e-12


def test_void_stretches_are_reported_and_marked_on_the_sheet(tmp_path):
    # The sample DEM has a void on the path to the Quarry Gate sensor (examples/run_examples.sh): with
    # --fill-voids the report lists the interpolated stretch, its sample count matches the samples inside it,
    # and the figure's legend names it (SVG text, parsed by xml.etree).
    import xml.etree.ElementTree as ET

    svg = tmp_path / "void.svg"
    r = run_json("--dem", SAMPLE, "--site-a", GW, "--site-b", "-29.965,-19.82", "--fill-voids", "--plot", svg)
    stretches = r["dem"]["void_stretches_m"]
    assert len(stretches) == 1 and stretches[0][0] < stretches[0][1]
    d = np.array(r["profile"]["distance_m"])
    inside = int(np.sum((d >= stretches[0][0]) & (d <= stretches[0][1])))
    assert inside == r["dem"]["voids_filled"]
    text = "".join(ET.parse(svg).getroot().itertext())
    assert "Interpolated across a void" in text
