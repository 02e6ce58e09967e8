"""Small command-line promises: empty output paths, names carried as given, input hints, ``--help`` examples."""

from __future__ import annotations

import json
import shlex

import pytest
from click.testing import CliRunner

from profiler.cli import main
from sample_sites import GATEWAY, PUMP, ROOT

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
    "siting": ("--json", "--csv", "--geojson", "--plot"),
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
