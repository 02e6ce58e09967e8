"""``--land-cover`` on link, mast, network and siting: the clutter at every profile sample.

Check values: the land-cover codes from rasterio's own ``sample()`` of the
raster (GDAL, outside the project's sampling code), the class table of ESA
WorldCover (Product User Manual, the built-in mapping), the default heights
of ITU-R P.1812-8 section 3.2.1; the run with a land cover against the same
path given as a ``--profile`` CSV with the same ``clutter_height_m`` column
(issue 20 item 2: "gives exactly what the same path gives as a --profile").
"""

import csv
import datetime
import hashlib
import json
from pathlib import Path

import numpy as np
import pytest
import rasterio
from click.testing import CliRunner
from sample_sites import GATEWAY, MODEL_OPTIONS, PUMP, TANK

from profiler.cli import main
from profiler.terrain.landcover import DEFAULT_HEIGHTS_M, WORLDCOVER_CLASSES

ROOT = Path(__file__).resolve().parents[2]
DEM = str(ROOT / "dem_samples" / "vellmoor_synthetic_1s.tif")
COVER = str(ROOT / "dem_samples" / "vellmoor_landcover.tif")
GW, NODE = f"{GATEWAY[0]},{GATEWAY[1]}", f"{PUMP[0]},{PUMP[1]}"
PATH = ("--site-a", GW, "--site-b", NODE)


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def report_of(command, *args, exit_codes=(0,)) -> dict:
    """The JSON report of a run of ``command`` (on standard output)."""
    res = run(command, *args, "--json", "-")
    assert res.exit_code in exit_codes, res.output
    return json.loads(res.stdout)


def one_line_error(res) -> str:
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("profiler: error:"), res.stderr
    return lines[0]


def profile_csv(report, path) -> Path:
    """The link's path as a surveyed profile: distance_m, elevation_m and clutter_height_m from its JSON."""
    prof = report["profile"]
    with open(path, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["distance_m", "elevation_m", "clutter_height_m"])
        w.writerows(zip(map(repr, prof["distance_m"]), map(repr, prof["terrain_m"]),
                        map(repr, prof["clutter_height_m"])))
    return path


@pytest.mark.parametrize("model", MODEL_OPTIONS)
def test_land_cover_run_is_exactly_the_same_path_as_a_profile(tmp_path, model):
    opts = MODEL_OPTIONS[model]
    cover = report_of("link", "--dem", DEM, "--land-cover", COVER, *PATH, *opts)
    assert cover["schema"] == "profiler.link/5"
    assert any(h > 0 for h in cover["profile"]["clutter_height_m"])
    # Under --model terrain the land cover's class at each end gives that terminal's P.2108 section 3.1
    # correction (issue 20 item 2); a surveyed profile has heights only, so it names the end classes.
    ends = end_class_options(cover) if opts[1] == "terrain" else []
    surveyed = report_of("link", "--profile", profile_csv(cover, tmp_path / "p.csv"), *PATH, *opts, *ends)
    assert surveyed["model"] == cover["model"] == opts[1]
    for key in ("free_space", "diffraction", "combination", "location", "basic_transmission", "total"):
        assert surveyed["loss_db"][key] == cover["loss_db"][key], key
    assert surveyed["p1812"] == cover["p1812"]
    assert surveyed["budget"]["margin_db"] == cover["budget"]["margin_db"]


def test_clutter_class_is_the_raster_pixel_at_every_sample():
    report = report_of("link", "--dem", DEM, "--land-cover", COVER, *PATH)
    prof = report["profile"]
    with rasterio.open(COVER) as ds:      # GDAL's own sampling of the pixel holding each point (EPSG:4326)
        codes = [int(v[0]) for v in ds.sample(zip(prof["lon_deg"], prof["lat_deg"]))]
    # ESA WorldCover class table (Product User Manual v2.0) -> clutter class of the built-in mapping;
    # heights: ITU-R P.1812-8 section 3.2.1 defaults (the run's model is p1812).
    expected = [WORLDCOVER_CLASSES[c][1] for c in codes]
    assert prof["clutter_class"] == expected
    assert prof["clutter_height_m"] == [DEFAULT_HEIGHTS_M["p1812"][c] for c in expected]
    assert {"open", "trees"} <= set(expected)      # the path crosses the forest
    assert len(prof["clutter_class"]) == len(prof["distance_m"])     # end points included
    block = report["land_cover"]
    assert block["sources"][0]["path"] == COVER and len(block["sources"][0]["sha256"]) == 64
    assert block["classes"] == {"source": "built-in ESA WorldCover", "path": None, "sha256": None}


def test_terrain_model_heights_and_a_class_file(tmp_path):
    # --model terrain takes the heights of ITU-R P.2108-1 Table 3; a TOML file overrides the height of its codes.
    plain = report_of("link", "--dem", DEM, "--land-cover", COVER, *PATH, "--model", "terrain")
    names = plain["profile"]["clutter_class"]
    assert plain["profile"]["clutter_height_m"] == [DEFAULT_HEIGHTS_M["terrain"][c] for c in names]
    toml = tmp_path / "classes.toml"
    toml.write_text("".join(f'[classes.{code}]\nclutter = "{cls}"\n' + ("height_m = 22.5\n" if code == 10 else "")
                            for code, (_, cls) in WORLDCOVER_CLASSES.items()))
    custom = report_of("link", "--dem", DEM, "--land-cover", COVER, "--land-cover-classes", toml, *PATH)
    heights = [22.5 if c == "trees" else DEFAULT_HEIGHTS_M["p1812"][c] for c in custom["profile"]["clutter_class"]]
    assert custom["profile"]["clutter_height_m"] == heights
    digest = hashlib.sha256(toml.read_bytes()).hexdigest()      # the standard library's SHA-256
    assert custom["land_cover"]["classes"] == {"source": "file", "path": str(toml), "sha256": digest}


def end_class_options(report):
    """--clutter-a/-b and their heights: the classes and R of a report's end samples (none: no option)."""
    prof, out = report["profile"], []
    for end, i in (("a", 0), ("b", -1)):
        if prof["clutter_class"][i] is not None:
            out += [f"--clutter-{end}", prof["clutter_class"][i], f"--clutter-height-{end}-m",
                    repr(prof["clutter_height_m"][i])]
    return out


def test_terrain_model_path_loss_does_not_change_with_the_land_cover():
    # Issue 20 item 2: with --model terrain the profile's clutter only feeds the terminal correction, so the
    # run equals a run without land cover whose ends carry the land cover's classes.
    with_cover = report_of("link", "--dem", DEM, "--land-cover", COVER, *PATH, "--model", "terrain")
    ends = end_class_options(with_cover)
    assert ends
    without = report_of("link", "--dem", DEM, *PATH, "--model", "terrain", *ends)
    assert with_cover["loss_db"]["total"] == without["loss_db"]["total"]


def test_forest_on_the_gateway_pump_path_adds_p1812_loss():
    # The gateway-pump path crosses the forest of the sample land cover: R added at the interior points
    # (ITU-R P.1812-8 section 3.2) raises the obstacles, so the loss exceeds the bare-terrain loss.
    without = report_of("link", "--dem", DEM, *PATH, "--model", "p1812")
    with_cover = report_of("link", "--dem", DEM, "--land-cover", COVER, *PATH, "--model", "p1812")
    interior = with_cover["profile"]["clutter_class"][1:-1]
    assert "trees" in interior
    assert with_cover["loss_db"]["total"] > without["loss_db"]["total"] + 1.0


def test_folders_as_dem_and_as_land_cover_pick_their_own_rasters():
    # dem_samples/ holds the elevation and the class raster: as --dem the colour-indexed class map is left
    # out, as --land-cover the raster with a length unit.
    files = report_of("link", "--dem", DEM, "--land-cover", COVER, *PATH)
    folder = str(ROOT / "dem_samples")
    folders = report_of("link", "--dem", folder, "--land-cover", folder, *PATH)
    assert folders["profile"]["clutter_class"] == files["profile"]["clutter_class"]
    assert folders["loss_db"]["total"] == files["loss_db"]["total"]
    assert [s["path"] for s in folders["land_cover"]["sources"]] == [str(Path(folder) / "vellmoor_landcover.tif")]


def test_no_data_samples_have_no_clutter_and_a_warning(tmp_path):
    # A land cover that covers only the west of the path: the samples east of it have no class and R = 0.
    cut = tmp_path / "west.tif"
    with rasterio.open(COVER) as ds:
        window = rasterio.windows.Window(0, 0, 300, ds.height)
        profile = {**ds.profile, "width": 300, "transform": ds.window_transform(window)}
        data = ds.read(1, window=window)
        with rasterio.open(cut, "w", **profile) as out:
            out.write(data, 1)
    report = report_of("link", "--dem", DEM, "--land-cover", cut, *PATH)
    prof = report["profile"]
    none = [i for i, c in enumerate(prof["clutter_class"]) if c is None]
    assert none and none[-1] == len(prof["distance_m"]) - 1
    assert all(prof["clutter_height_m"][i] == 0.0 for i in none)
    assert report["land_cover"]["samples_without_class"] == len(none)
    assert any(f"{len(none)} of {len(prof['distance_m'])} profile samples have no land-cover class" in w
               for w in report["warnings"])


def test_low_node_without_land_cover_is_said_to_be_optimistic():
    low = report_of("link", "--dem", DEM, *PATH, "--mast-b", "2")
    assert any("no land cover" in w and "likely optimistic" in w for w in low["warnings"])
    high = report_of("link", "--dem", DEM, *PATH, "--mast-b", "12")
    assert not any("no land cover" in w for w in high["warnings"])
    node_at_a = report_of("link", "--dem", DEM, *PATH, "--mast-b", "2", "--mast-a", "12", "--gateway", "b")
    assert not any("no land cover" in w for w in node_at_a["warnings"])
    covered = report_of("link", "--dem", DEM, "--land-cover", COVER, *PATH, "--mast-b", "2")
    assert not any("no land cover" in w for w in covered["warnings"])


def test_refusals_are_one_line(tmp_path):
    toml = tmp_path / "few.toml"
    toml.write_text('[classes.30]\nclutter = "open"\n')
    line = one_line_error(run("link", "--dem", DEM, "--land-cover", COVER, "--land-cover-classes", toml, *PATH))
    assert "land-cover code" in line and str(toml) in line
    assert "not in" in line
    line = one_line_error(run("link", "--dem", DEM, "--land-cover", tmp_path / "missing.tif", *PATH))
    assert "--land-cover" in line or "land cover" in line
    junk = tmp_path / "junk.tif"
    junk.write_bytes(b"not a raster")
    one_line_error(run("link", "--dem", DEM, "--land-cover", junk, *PATH))
    one_line_error(run("link", "--dem", DEM, "--land-cover", COVER, "--land-cover-classes", tmp_path / "no.toml",
                       *PATH))
    report = report_of("link", "--dem", DEM, "--land-cover", COVER, *PATH)
    survey = profile_csv(report, tmp_path / "p.csv")
    line = one_line_error(run("link", "--profile", survey, "--land-cover", COVER, *PATH))
    assert "--profile" in line and "--land-cover" in line and "clutter_height_m" in line
    line = one_line_error(run("mast", "--profile", survey, "--land-cover", COVER, *PATH))
    assert "clutter_height_m" in line
    line = one_line_error(run("link", "--dem", DEM, "--land-cover-classes", toml, *PATH))
    assert "--land-cover" in line
    line = one_line_error(run("network", "--sites", sites_file(tmp_path), "--dem", DEM, "--land-cover", COVER,
                              "--land-cover-classes", toml, "--no-progress"))
    assert "land-cover code" in line and str(toml) in line


def test_mast_with_land_cover_needs_more_than_without():
    # The forest on the path raises the mast the margin needs (P.1812-8 with R at the interior points).
    def required(*extra):
        return report_of("mast", "--dem", DEM, *PATH, "--solve", "b", "--no-clearance", "--min-margin-db", "10",
                         *extra, exit_codes=(0, 3))

    bare, covered = required(), required("--land-cover", COVER)
    assert covered["feasible"] and bare["feasible"]
    assert covered["required_mast_b_m"] > bare["required_mast_b_m"] + 1.0


def sites_file(tmp_path) -> Path:
    path = tmp_path / "sites.csv"
    path.write_text("name,lat_deg,lon_deg,mast_m,role\n"
                    f"Cairnfell Beacon,{GATEWAY[0]},{GATEWAY[1]},10,gateway\n"
                    f"Osterby Farm pump,{PUMP[0]},{PUMP[1]},2,node\n"
                    f"Millbrook Tank,{TANK[0]},{TANK[1]},3,node\n"
                    "Fenward gate,-29.95,-19.93,1.5,node\n")
    return path


@pytest.mark.parametrize("model", MODEL_OPTIONS)
def test_network_equals_link_with_land_cover(tmp_path, model):
    opts = ["--dem", DEM, "--land-cover", COVER, *MODEL_OPTIONS[model]]
    report = report_of("network", "--sites", sites_file(tmp_path), *opts, "--no-progress")
    assert report["settings"]["land_cover"] == [COVER] and report["settings"]["land_cover_classes"] is None
    by_name = {s["name"]: s for s in report["sites"]}
    for row in report["links"]:
        g, n = by_name[row["gateway"]], by_name[row["node"]]
        one = report_of("link", "--site-a", f"{g['lat_deg']},{g['lon_deg']}",
                        "--site-b", f"{n['lat_deg']},{n['lon_deg']}", "--mast-a", g["mast_m"], "--mast-b", n["mast_m"],
                        *opts)
        assert row["total_loss_db"] == pytest.approx(one["loss_db"]["total"], abs=0.01)
        assert row["margin_db"] == pytest.approx(one["budget"]["margin_db"], abs=0.01)
    assert not any("no land cover" in w for w in report["warnings"])


def test_network_says_once_that_low_nodes_without_land_cover_are_optimistic(tmp_path):
    report = report_of("network", "--sites", sites_file(tmp_path), "--dem", DEM, "--no-progress")
    said = [w for w in report["warnings"] if "no land cover" in w]
    assert len(said) == 1 and "3 nodes" in said[0]
    assert report["settings"]["land_cover"] is None


def test_siting_takes_the_land_cover(tmp_path):
    siting = report_of("siting", "--sites", sites_file(tmp_path), "--dem", DEM, "--land-cover", COVER,
                       "--no-progress")
    assert siting["schema"] == "profiler.siting/3" and siting["summary"]["nodes_total"] == 3


def test_api_keywords_match_the_command(tmp_path):
    import profiler

    api = profiler.link(GATEWAY, PUMP, dem=DEM, land_cover=COVER, date=datetime.date(2026, 3, 1))
    cli = report_of("link", "--dem", DEM, "--land-cover", COVER, *PATH, "--date", "2026-03-01")
    assert api.to_dict()["profile"]["clutter_class"] == cli["profile"]["clutter_class"]
    assert api.to_dict()["loss_db"]["total"] == cli["loss_db"]["total"]
    net = profiler.network(sites_file(tmp_path), dem=DEM, land_cover=[COVER])
    assert net.settings["land_cover"] == [COVER]
    assert np.all(np.isfinite([r["total_loss_db"] for r in net.links]))
