"""The propagation-model options of issue 19 on every command: accepted, recorded, refused out of range.

Commands: link, mast, network, coverage, siting. Options: ``--model``,
``--time-percent``, ``--location-percent``, ``--location-sigma-db``,
``--area-width-m``, ``--delta-n``, ``--n0``, ``--coast-distance-a-km``,
``--coast-distance-b-km``; and the ``--profile`` CSV columns
``clutter_height_m`` and ``zone`` (link, mast).  Ranges: ITU-R P.1812-8
section 1 (1 to 50 % of time, 1 to 99 % of locations, as issue 19 states);
k = 157 / (157 - ΔN) of P.1812-8 section 3.7 (ΔN = 157 is an infinite
Earth); the others as :data:`profiler.limits.LIMITS` states them.
"""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, PUMP, ROOT, TANK

from profiler import limits
from profiler.cli import main

SITE_A, SITE_B = f"{GATEWAY[0]},{GATEWAY[1]}", f"{PUMP[0]},{PUMP[1]}"
SITING = str(ROOT / "examples" / "siting_sites.csv")
MISSING_DEM = str(ROOT / "no-such-elevation-file.tif")   # reached only once every option was accepted


def command_args(command, dem, tmp_path):
    """The arguments of one small run of ``command`` (before the model options)."""
    if command == "link":
        return ["link", "--dem", dem, "--site-a", SITE_A, "--site-b", SITE_B]
    if command == "mast":
        return ["mast", "--dem", dem, "--site-a", SITE_A, "--site-b", SITE_B, "--solve", "a"]
    if command == "network":
        sites = tmp_path / "sites.csv"
        sites.write_text("name,lat_deg,lon_deg,mast_m,role\n"
                         f"Cairnfell Beacon,{GATEWAY[0]},{GATEWAY[1]},10,gateway\n"
                         f"Osterby Farm pump,{PUMP[0]},{PUMP[1]},2,node\n"
                         f"Millbrook Tank,{TANK[0]},{TANK[1]},3,node\n")
        return ["network", "--dem", dem, "--sites", sites, "--no-progress"]
    if command == "coverage":
        return ["coverage", "--dem", dem, "--site", SITE_A, "--mast-m", "10", "--radius-km", "1",
                "--resolution-m", "100", "--no-progress", "--out", tmp_path / "cov.tif"]
    return ["siting", "--dem", dem, "--sites", SITING, "--no-progress"]


COMMANDS = ("link", "mast", "network", "coverage", "siting")
# Non-default values, all different, so that each one is seen where the report records it.
VALUES = {"--time-percent": 10.0, "--location-percent": 95.0, "--location-sigma-db": 4.5, "--area-width-m": 500.0,
          "--delta-n": 45.0, "--n0": 330.0, "--coast-distance-a-km": 20.0, "--coast-distance-b-km": 40.0}
# Just outside each range (ITU-R P.1812-8 section 1 for the percentages; section 3.7 for ΔN = 157).
OUTSIDE = {"--time-percent": ["0.99", "50.01"], "--location-percent": ["0.99", "99.01"],
           "--location-sigma-db": ["-0.01", "30.01"], "--area-width-m": ["0.99", "100000.1"],
           "--delta-n": ["-1413.01", "157"], "--n0": ["199.99", "500.01"],
           "--coast-distance-a-km": ["-0.01", "20100.01"], "--coast-distance-b-km": ["-0.01", "20100.01"]}
BOUNDS = {"--time-percent": ["1", "50"], "--location-percent": ["1", "99"], "--location-sigma-db": ["0", "30"],
          "--area-width-m": ["1", "100000"], "--delta-n": ["-1413", "156.9"], "--n0": ["200", "500"],
          "--coast-distance-a-km": ["0", "20100"], "--coast-distance-b-km": ["0", "20100"]}


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def one_line_error(res) -> str:
    """The one line of a refusal (exit 2, no traceback: rule 6 of the developers' brief)."""
    lines = [line for line in res.output.splitlines() if line.strip()]
    ok = res.exit_code == 2 and isinstance(res.exception, (SystemExit, type(None)))
    assert ok and len(lines) == 1 and lines[0].startswith("profiler: error: "), (res.exception, res.output)
    return lines[0]


def report_of(command, tmp_path, *options):
    """The JSON report of a run of ``command`` on the sample terrain with ``options``."""
    out = tmp_path / f"{command}.json"
    res = run(*command_args(command, DEM[0], tmp_path), *options, "--json", out)
    assert res.exit_code == 0, res.output
    return json.loads(out.read_text())


def recorded_settings(command, report) -> dict:
    """Where each command records its propagation settings (siting: in none, see the siting test)."""
    return {"link": report.get("propagation"), "mast": report.get("propagation"),
            "network": report.get("settings"), "coverage": report.get("settings")}[command]


# ---------------------------------------------------------------- accepted and recorded
@pytest.mark.parametrize("command", ["link", "mast", "network", "coverage"])
def test_every_model_option_is_accepted_and_recorded(command, tmp_path):
    options = [str(v) for option, value in VALUES.items() for v in (option, value)]
    settings = recorded_settings(command, report_of(command, tmp_path, "--model", "p1812", *options))
    for option, value in VALUES.items():
        assert settings[option[2:].replace("-", "_")] == value, option
    assert settings["model"] == "p1812"
    terrain = recorded_settings(command, report_of(command, tmp_path, "--model", "terrain"))
    assert terrain["model"] == "terrain"


def test_siting_uses_the_model_options(tmp_path):
    # The siting report has no settings block: the options show in the margins it sums instead.
    # ITU-R P.1812-8 eq. (69): 95 % of locations costs more than the median, so the margins drop.
    median = report_of("siting", tmp_path)["margin_total_db"]
    at95 = report_of("siting", tmp_path, "--location-percent", "95")["margin_total_db"]
    assert at95 < median
    assert report_of("siting", tmp_path, "--model", "terrain")["margin_total_db"] != median


@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize("option", list(OUTSIDE))
def test_each_model_option_refuses_its_range_in_one_line(command, option, tmp_path):
    for value in OUTSIDE[option]:
        line = one_line_error(run(*command_args(command, MISSING_DEM, tmp_path), option, value))
        assert f"{option} {value}" in line and "out of range" in line and limits.range_text(option) in line
    for value in BOUNDS[option]:          # the bounds themselves pass: the run gets as far as the terrain
        line = one_line_error(run(*command_args(command, MISSING_DEM, tmp_path), option, value))
        assert "no-such-elevation-file" in line, (option, value, line)
    assert "no-such-elevation-file" not in one_line_error(
        run(*command_args(command, MISSING_DEM, tmp_path), "--model", "p1813"))


@pytest.mark.parametrize("command", COMMANDS)
def test_k_and_delta_n_together_are_refused(command, tmp_path):
    line = one_line_error(run(*command_args(command, MISSING_DEM, tmp_path), "--k", "4/3", "--delta-n", "40"))
    assert "--k" in line and "--delta-n" in line and "no-such-elevation-file" not in line


@pytest.mark.parametrize("command", ["link", "mast", "network", "coverage"])
def test_delta_n_sets_k(command, tmp_path):
    # ITU-R P.1812-8 section 3.7: k50 = 157 / (157 - ΔN); ΔN = 45 gives 157/112, a_e = 6371 km k50.
    report = report_of(command, tmp_path, "--delta-n", "45")
    k = {"link": lambda r: r["k_factor"], "mast": lambda r: r["criteria"][0]["k_factor"],
         "network": lambda r: r["k_factor"], "coverage": lambda r: r["settings"]["k_factor"]}[command](report)
    assert k == pytest.approx(157 / 112, rel=1e-12)
    if command == "link":
        assert report["effective_radius_m"] == pytest.approx(6_371_000 * 157 / 112, rel=1e-12)
        assert report["p1812"]["ae_km"] == pytest.approx(6371 * 157 / 112, rel=1e-12)
        assert report["p1812"]["delta_n"] == 45


# ---------------------------------------------------------------- --profile with and without coordinates
PROFILE_ROWS = ["0,100,0,inland", "1000,120,10,inland", "2000,180,15,coastal", "3000,110,20,sea",
                "4000,100,5,inland"]


def write_profile(tmp_path, rows, header="distance_m,elevation_m,clutter_height_m,zone"):
    path = tmp_path / "survey.csv"
    path.write_text(header + "\n" + "\n".join(rows) + "\n")
    return path


def profile_run(command, path, *options):
    extra = ["--solve", "a", "--max-mast-m", "200"] if command == "mast" else []
    return run(command, "--profile", path, *extra, *options, "--json", "-")


@pytest.mark.parametrize("command", ["link", "mast"])
def test_p1812_with_a_profile_and_no_sites_says_what_to_add(command, tmp_path):
    path = write_profile(tmp_path, [row.split(",", 2)[0] + "," + row.split(",")[1] for row in PROFILE_ROWS],
                         header="distance_m,elevation_m")
    line = one_line_error(profile_run(command, path, "--model", "p1812"))
    assert "--model p1812" in line and "add --site-a" in line and "--site-b" in line


@pytest.mark.parametrize("command", ["link", "mast"])
def test_a_profile_alone_uses_the_terrain_model_and_says_so(command, tmp_path):
    res = profile_run(command, write_profile(tmp_path, PROFILE_ROWS))
    assert res.exit_code == 0, res.output
    report = json.loads(res.stdout)
    assert report["model"] == "terrain"
    said = [w for w in report["warnings"] if "terrain model" in w]
    assert len(said) == 1 and "--site-a" in said[0] and "--site-b" in said[0]
    with_sites = json.loads(profile_run(command, write_profile(tmp_path, PROFILE_ROWS), "--site-a", SITE_A,
                                        "--site-b", SITE_B).stdout)
    # Issue 19: with --profile, --site-a/--site-b give the terminals' coordinates P.1812-8 needs (mast ignored
    # them before: it then refused --model p1812 asking for the very options it had been given).
    assert with_sites["model"] == "p1812" and not any("terrain model" in w for w in with_sites["warnings"])
    assert (with_sites["site_a"]["lat_deg"], with_sites["site_b"]["lon_deg"]) == (GATEWAY[0], PUMP[1])


def p1812_link(tmp_path, rows, *options):
    res = profile_run("link", write_profile(tmp_path, rows), "--site-a", SITE_A, "--site-b", SITE_B, *options)
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def test_profile_clutter_and_zone_columns_are_read(tmp_path):
    r = p1812_link(tmp_path, PROFILE_ROWS)
    p = r["p1812"]
    assert r["profile"]["clutter_height_m"] == [0, 10, 15, 20, 5]
    # SG3 validation set README: r2_m and rn1_m are the clutter heights next to the terminals (2nd and
    # next-to-last points).
    assert (p["r2_m"], p["rn1_m"]) == (10, 20)
    # P.1812-8 section 3.6: the sea point makes part of the path sea (w), and the longest inland stretch
    # (dlm) is shorter than the longest land stretch (dtm), itself shorter than the path.
    assert 0 < p["w_sea_fraction"] < 0.5
    assert 0 < p["dlm_km"] < p["dtm_km"] < p["d_km"] == 4
    bare = p1812_link(tmp_path, [",".join(row.split(",")[:2]) + ",," for row in PROFILE_ROWS])["p1812"]
    assert (bare["r2_m"], bare["rn1_m"], bare["w_sea_fraction"]) == (0, 0, 0)
    assert bare["dlm_km"] == bare["dtm_km"] == 4
    assert bare["lb_db"] != p["lb_db"]


def test_terminal_clutter_changes_only_the_location_variability(tmp_path):
    # P.1812-8 section 4 (issue 19): clutter is added at the interior points, never at the terminals; the
    # node's own clutter height R enters only u(h) of section 4.7: u = 1 for h < R, 1 - (h - R)/10 above.
    low = p1812_link(tmp_path, PROFILE_ROWS, "--location-percent", "95")
    rows = PROFILE_ROWS[:-1] + ["4000,100,12,inland"]        # the node (B, 2 m mast) now inside 12 m clutter
    high = p1812_link(tmp_path, rows, "--location-percent", "95")
    for key in ("lbfs_db", "ld50_db", "ldp_db", "lbc_db", "d_km", "hts_m", "hrs_m"):
        assert high["p1812"][key] == low["p1812"][key], key
    wa = (0.024 * low["frequency_mhz"] / 1000 + 0.52) * 100 ** 0.28      # sigma_L [dB] for wa = 100 m, f in GHz
    assert low["p1812"]["location_sigma_db"] == pytest.approx(wa * 1.0, rel=1e-12)       # h = 2 m < R = 5 m
    assert high["p1812"]["location_sigma_db"] == pytest.approx(wa * 1.0, rel=1e-12)      # h = 2 m < R = 12 m
    no_clutter = p1812_link(tmp_path, PROFILE_ROWS[:-1] + ["4000,100,0,inland"], "--location-percent", "95")
    assert no_clutter["p1812"]["location_sigma_db"] == pytest.approx(wa * 0.8, rel=1e-12)  # R = 0: 1 - 2/10
    assert no_clutter["p1812"]["lbc_db"] == low["p1812"]["lbc_db"]


@pytest.mark.parametrize("cell,column", [("-3", "clutter_height_m"), ("abc", "clutter_height_m"),
                                         ("nan", "clutter_height_m"), ("1e9", "clutter_height_m")])
def test_bad_clutter_height_is_refused_with_its_line(tmp_path, cell, column):
    rows = PROFILE_ROWS[:2] + [f"2000,180,{cell},coastal"] + PROFILE_ROWS[3:]
    line = one_line_error(profile_run("link", write_profile(tmp_path, rows), "--site-a", SITE_A,
                                      "--site-b", SITE_B))
    assert "line 4" in line and column in line and repr(cell) in line


@pytest.mark.parametrize("cell", ["swamp", "1", "land"])
def test_bad_zone_is_refused_with_its_line(tmp_path, cell):
    rows = PROFILE_ROWS[:3] + [f"3000,110,20,{cell}"] + PROFILE_ROWS[4:]
    line = one_line_error(profile_run("link", write_profile(tmp_path, rows), "--site-a", SITE_A,
                                      "--site-b", SITE_B))
    assert "line 5" in line and "zone" in line and repr(cell) in line and "sea, coastal or inland" in line


def test_link_hands_the_options_to_p1812(tmp_path):
    # The p1812 block holds the inputs P.1812-8 ran with, under the SG3 column names (dct, dcr: section 3.4).
    options = [str(v) for option, value in VALUES.items() for v in (option, value)]
    p = report_of("link", tmp_path, *options)["p1812"]
    assert (p["time_percent"], p["location_percent"], p["location_sigma_db"]) == (10, 95, 4.5)
    assert (p["delta_n"], p["n0"], p["dct_km"], p["dcr_km"]) == (45, 330, 20, 40)
    # Eq. (69) location term: sigma_L Q^-1(0.05), Q^-1 = scipy.special.ndtri(0.95), within I(x)'s 0.00054.
    from scipy.special import ndtri
    assert p["location_term_db"] == pytest.approx(4.5 * ndtri(0.95), abs=4.5 * 0.00054)
