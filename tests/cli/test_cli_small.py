"""Small command-line promises: empty output paths, names carried as given, input hints, ``--help`` examples."""

from __future__ import annotations

import json
import re
import shlex

import pytest
from click.testing import CliRunner
from sample_sites import GATEWAY, PUMP, ROOT

from profiler.cli import main

SITES = str(ROOT / "examples" / "vellmoor_network.csv")
SITING = str(ROOT / "examples" / "siting_sites.csv")
MISSING_DEM = str(ROOT / "no-such-elevation-file.tif")   # reached only if the outputs were accepted


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def one_line_error(res) -> str:
    assert res.exception is None or isinstance(res.exception, SystemExit), res.exception
    lines = [line for line in res.output.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("profiler: error: "), res.output
    return lines[0]


# --------------------------------------------------------------------------- empty output paths
SITE_A, SITE_B = f"{GATEWAY[0]},{GATEWAY[1]}", f"{PUMP[0]},{PUMP[1]}"
COMMANDS = {
    "link": ["link", "--dem", MISSING_DEM, "--site-a", SITE_A, "--site-b", SITE_B],
    "mast": ["mast", "--dem", MISSING_DEM, "--site-a", SITE_A, "--site-b", SITE_B],
    "network": ["network", "--dem", MISSING_DEM, "--sites", SITES],
    "siting": ["siting", "--dem", MISSING_DEM, "--sites", SITING],
    "coverage": ["coverage", "--dem", MISSING_DEM, "--site", SITE_A, "--radius-km", "2"],
}
OUTPUT_OPTIONS = {
    "link": ("--json", "--csv", "--geojson", "--kml", "--plot", "--report"),
    "mast": ("--json", "--plot", "--report"),
    "network": ("--json", "--csv", "--geojson", "--kml", "--plot"),
    "siting": ("--json", "--csv", "--geojson", "--kml", "--plot"),
    "coverage": ("--out", "--json", "--kmz", "--plot"),
}


@pytest.mark.parametrize("command,option,path", [(c, o, p) for c, opts in OUTPUT_OPTIONS.items() for o in opts
                                                 for p in ("", "  ")])
def test_empty_output_path_is_refused_naming_the_option(tmp_path, command, option, path):
    args = COMMANDS[command] + [option, path]
    if command == "coverage" and option != "--out":
        args += ["--out", str(tmp_path / "cov.tif")]
    res = run(*args)
    line = one_line_error(res)
    assert res.exit_code == 2
    assert option in line and "empty" in line          # the option named, before the missing DEM is noticed
    assert "no-such-elevation-file" not in line
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- names as given in (Geo)JSON
ODD = "Tab\there =1\nnext line"      # a tab, a newline and a formula start inside the name


def _geojson_names(doc) -> set:
    props = [f["properties"] for f in doc["features"]]
    return {p.get(key) for p in props for key in ("name", "gateway", "node", "site_a_name", "site_b_name")}


def test_link_geojson_and_json_carry_a_name_with_tab_and_newline_as_given(tmp_path):
    # docs/outputs.md: JSON and GeoJSON carry text as given; json escapes control characters itself (RFC 8259 s. 7).
    res = run("link", "--dem", ROOT / "dem_samples", "--site-a", SITE_A, "--site-b", SITE_B, "--name-b", ODD,
              "--geojson", tmp_path / "l.geojson", "--json", tmp_path / "l.json")
    assert res.exit_code == 0, res.output
    doc = json.loads((tmp_path / "l.geojson").read_text(encoding="utf-8"))
    sites = {f["id"]: f["properties"] for f in doc["features"]}
    assert sites["site_b"]["name"] == ODD and sites["path"]["site_b_name"] == ODD
    assert ODD in sites["path"]["name"] and ODD in sites["site_b"]["description"]
    assert json.loads((tmp_path / "l.json").read_text(encoding="utf-8"))["site_b"]["name"] == ODD


def _odd_sites(tmp_path, role_of_odd="node"):
    rows = ["name,lat_deg,lon_deg,mast_m,role,cost",
            f"Cairnfell Beacon,{SITE_A},10,gateway,",
            f'"{ODD}",{SITE_B},2,{role_of_odd},' + ("1" if role_of_odd == "candidate" else ""),
            "Millbrook Tank,-29.85,-19.78,2,node,"]
    path = tmp_path / "odd_sites.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def test_network_geojson_carries_names_as_given(tmp_path):
    res = run("network", "--dem", ROOT / "dem_samples", "--sites", _odd_sites(tmp_path),
              "--geojson", tmp_path / "n.geojson", "--no-progress")
    assert res.exit_code == 0, res.output
    names = _geojson_names(json.loads((tmp_path / "n.geojson").read_text(encoding="utf-8")))
    assert ODD in names and f"Cairnfell Beacon \u2013 {ODD}" in names


def test_siting_geojson_carries_names_as_given(tmp_path):
    res = run("siting", "--dem", ROOT / "dem_samples", "--sites", _odd_sites(tmp_path, "candidate"),
              "--geojson", tmp_path / "s.geojson", "--no-progress")
    assert res.exit_code == 0, res.output
    doc = json.loads((tmp_path / "s.geojson").read_text(encoding="utf-8"))
    assert ODD in _geojson_names(doc)


# --------------------------------------------------------------------------- hints: separator, swapped lat/lon
def _sites_file(tmp_path, rows, name="sites.csv"):
    path = tmp_path / name
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


@pytest.mark.parametrize("sep,shown", [(";", "';'"), ("\t", "tabs")])
def test_sites_file_with_another_separator_says_so(tmp_path, sep, shown):
    rows = [sep.join(["name", "lat_deg", "lon_deg", "mast_m", "role"]),
            sep.join(["Cairnfell Beacon", str(GATEWAY[0]), str(GATEWAY[1]), "10", "gateway"]),
            sep.join(["Osterby Farm pump", str(PUMP[0]), str(PUMP[1]), "2", "node"])]
    line = one_line_error(run("network", "--dem", ROOT / "dem_samples", "--sites", _sites_file(tmp_path, rows)))
    assert f"seems to use {shown}" in line and "comma-separated" in line


def test_pairs_file_with_semicolons_says_so(tmp_path):
    pairs = _sites_file(tmp_path, ["gateway;node", "Cairnfell Beacon;Osterby Farm pump"], "pairs.csv")
    line = one_line_error(run("network", "--dem", ROOT / "dem_samples", "--sites", SITES, "--pairs", pairs))
    assert "seems to use ';'" in line and "comma-separated" in line


def test_sites_file_latitude_out_of_range_hints_at_swapped_columns(tmp_path):
    rows = ["name,lat_deg,lon_deg,mast_m,role", f"Cairnfell Beacon,{SITE_A},10,gateway",
            "Osterby Farm pump,120.5,-29.9,2,node"]        # lon,lat of a site at 120.5 E
    line = one_line_error(run("network", "--dem", ROOT / "dem_samples", "--sites", _sites_file(tmp_path, rows)))
    assert "line 3" in line and "lat_deg 120.5 is out of range" in line and "lat/lon swapped?" in line
    rows[-1] = "Osterby Farm pump,95,-190,2,node"            # nothing swapped can fix: no hint
    line = one_line_error(run("network", "--dem", ROOT / "dem_samples", "--sites", _sites_file(tmp_path, rows)))
    assert "out of range" in line and "swapped" not in line


def test_site_option_latitude_out_of_range_hints_at_swapped_values():
    res = run("link", "--dem", ROOT / "dem_samples", "--site-a", "120.5,-29.9", "--site-b", SITE_B)
    line = one_line_error(res)
    assert res.exit_code == 2 and "--site-a" in line and "lat/lon swapped?" in line
    line = one_line_error(run("link", "--dem", ROOT / "dem_samples", "--site-a", "95,-100", "--site-b", SITE_B))
    assert "out of range" in line and "swapped" not in line


def test_site_outside_the_terrain_but_inside_when_swapped_says_so(tmp_path):
    swapped = f"{GATEWAY[1]},{GATEWAY[0]}"                  # LON,LAT given for LAT,LON
    res = run("link", "--dem", ROOT / "dem_samples", "--site-a", swapped, "--site-b", SITE_B)
    line = one_line_error(res)
    assert res.exit_code == 2 and "outside the elevation data" in line and "lat/lon swapped?" in line
    far = f"{GATEWAY[1]},{GATEWAY[0] - 10}"                  # outside either way round: no hint
    line = one_line_error(run("mast", "--dem", ROOT / "dem_samples", "--site-a", far, "--site-b", SITE_B))
    assert "outside the elevation data" in line and "swapped" not in line
    # The same for a row of the sites file (the link's error names the site).
    rows = ["name,lat_deg,lon_deg,mast_m,role", f"Cairnfell Beacon,{swapped},10,gateway",
            f"Osterby Farm pump,{SITE_B},2,node"]
    line = one_line_error(run("network", "--dem", ROOT / "dem_samples", "--sites", _sites_file(tmp_path, rows),
                              "--max-distance-km", "2000", "--no-progress"))
    assert "Cairnfell Beacon" in line and "lat/lon swapped?" in line


# --------------------------------------------------------------------------- --gateway only where it means something
@pytest.mark.parametrize("command", ["network", "siting", "coverage"])
def test_batch_commands_do_not_offer_gateway(command):
    res = run(command, "--help")
    assert res.exit_code == 0 and "--gateway" not in res.output
    res = run(*COMMANDS[command], "--gateway", "a")
    assert res.exit_code == 2 and "--gateway" in one_line_error(res)      # no such option


@pytest.mark.parametrize("command", ["link", "mast"])
def test_link_and_mast_keep_gateway(command):
    assert "--gateway" in run(command, "--help").output


def test_link_gateway_b_still_swaps_the_roles():
    # Uplink is node -> gateway: with --gateway b the node is A, so the uplink budget runs A -> B.
    args = ["link", "--dem", ROOT / "dem_samples", "--site-a", SITE_A, "--site-b", SITE_B, "--json", "-"]
    default, swapped = (json.loads(run(*args, *extra).output) for extra in ([], ["--gateway", "b"]))
    assert (default["budget"]["transmitter"], default["budget"]["receiver"]) == ("b", "a")
    assert (swapped["budget"]["transmitter"], swapped["budget"]["receiver"]) == ("a", "b")


# --------------------------------------------------------------------------- --help examples run on the bundled terrain
def help_examples(command: str) -> list[list[str]]:
    """The example command lines of ``profiler COMMAND --help`` (continuation lines joined), split like a shell."""
    text = run(command, "--help").output
    block = re.split(r"Examples?:\n", text, maxsplit=1)[1].split("\n\n", 1)[0]
    joined = block.replace("\\\n", " ")
    return [shlex.split(line.strip()) for line in joined.splitlines() if line.strip().startswith("profiler ")]


@pytest.mark.parametrize("command", ["link", "network", "siting", "coverage"])
def test_help_examples_run_on_the_bundled_terrain(tmp_path, monkeypatch, command):
    examples = help_examples(command)
    assert examples and all(e[:2] == ["profiler", command] for e in examples)
    monkeypatch.chdir(tmp_path)                      # outputs of the examples land here
    for example in examples:
        assert "--dem" in example and example[example.index("--dem") + 1] == "dem_samples"
        args = [str(ROOT / a) if (ROOT / a).exists() and not a.startswith("-") else a for a in example[1:]]
        if command != "link":
            args.append("--no-progress")
        res = run(*args)
        assert res.exit_code == 0, (example, res.output)


# --------------------------------------------------------------------------- labels
def test_kml_labels_a_site_named_like_its_end_once(tmp_path):
    import xml.etree.ElementTree as ET

    kml = "{http://www.opengis.net/kml/2.2}"
    res = run("link", "--dem", ROOT / "dem_samples", "--site-a", SITE_A, "--site-b", SITE_B, "--name-b", "Osterby",
              "--kml", tmp_path / "l.kml")                    # A keeps its default name "A"
    assert res.exit_code == 0, res.output
    names = [el.text for el in ET.parse(tmp_path / "l.kml").getroot().iter(f"{kml}name")]
    assert "A" in names and "B Osterby" in names and "A A" not in names


@pytest.mark.parametrize("path", ["", "   "])
def test_python_writers_refuse_an_empty_path(tmp_path, monkeypatch, path):
    from profiler.errors import ProfilerError
    from profiler.io.report import write_json

    monkeypatch.chdir(tmp_path)
    with pytest.raises(ProfilerError, match="empty"):
        write_json({"schema": "x"}, path)
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- empty input paths
EMPTY_INPUTS = [
    (["link", "--dem", "", "--site-a", SITE_A, "--site-b", SITE_B], "--dem"),     # would scan the working folder
    (["mast", "--profile", "", "--site-a", SITE_A, "--site-b", SITE_B], "--profile"),
    (["link", "--dem", str(ROOT / "dem_samples"), "--site-a", SITE_A, "--site-b", SITE_B, "--sheet-info", ""],
     "--sheet-info"),
    (["network", "--dem", str(ROOT / "dem_samples"), "--sites", ""], "--sites"),
    (["network", "--dem", str(ROOT / "dem_samples"), "--sites", SITES, "--pairs", ""], "--pairs"),
]


@pytest.mark.parametrize("args,option", EMPTY_INPUTS)
def test_empty_input_path_is_refused_naming_the_option(tmp_path, monkeypatch, args, option):
    monkeypatch.chdir(tmp_path)
    res = run(*args)
    line = one_line_error(res)
    assert res.exit_code == 2 and f"{option}: the path is empty" in line
