"""The terminal options and sites columns of issue 20 items 2-3 on every command, and network = link with them.

Options: ``--clutter-a/-b``, ``--clutter-height-a-m/-b-m``,
``--terminal-clutter-m``, ``--clutter-statistics``, ``--indoor-a/-b``,
``--extra-loss-a-db/-b-db``; sites columns ``clutter``,
``clutter_height_m``, ``indoor``, ``extra_loss_db``.  The values checked
against the Recommendations are in ``tests/engine/test_terminals.py``; here
one engine: a network link with a site's columns equals ``profiler link``
with the same values as options.
"""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, PUMP, TANK
from test_model_options import MISSING_DEM, command_args, one_line_error

from profiler.cli import main
from profiler.products.sites import read_sites_csv

HEADER = "name,lat_deg,lon_deg,mast_m,role,clutter,clutter_height_m,indoor,extra_loss_db\n"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def write_sites(tmp_path, body):
    path = tmp_path / "terminal_sites.csv"
    path.write_text(HEADER + body)
    return path


SITES = (f"Cairnfell Beacon,{GATEWAY[0]},{GATEWAY[1]},10,gateway,,,,\n"
         f"Osterby Farm pump,{PUMP[0]},{PUMP[1]},1.5,node,urban,,traditional,2\n"
         f"Millbrook Tank,{TANK[0]},{TANK[1]},2,node,trees,12,,\n")


def test_sites_columns_are_read(tmp_path):
    table = read_sites_csv(write_sites(tmp_path, SITES))
    assert table.clutter == (None, "urban", "trees") and table.indoor == (None, "traditional", None)
    assert list(table.clutter_height_m[1:]) == [pytest.approx(float("nan"), nan_ok=True), 12.0]
    assert table.extra_loss_db[1] == 2.0
    rec = table.to_records()[2]
    assert (rec["clutter"], rec["clutter_height_m"], rec["indoor"], rec["extra_loss_db"]) == ("trees", 12, None, None)


@pytest.mark.parametrize("row,needle", [
    ("tundra,,,", "clutter 'tundra' is not known"),
    (",8,,", "clutter_height_m needs the clutter class"),
    ("urban,0,,", "clutter_height_m 0 is out of range"),
    ("urban,101,,", "clutter_height_m 101 is out of range"),
    (",,cellar,", "indoor 'cellar' is not known"),
    (",,,-1", "extra_loss_db -1 is out of range"),
    (",,,lots", "extra_loss_db 'lots' is not a number"),
])
def test_bad_sites_cells_are_refused_with_file_and_line(tmp_path, row, needle):
    path = write_sites(tmp_path, f"Cairnfell Beacon,{GATEWAY[0]},{GATEWAY[1]},10,gateway,,,,\n"
                                 f"Osterby Farm pump,{PUMP[0]},{PUMP[1]},1.5,node,{row}\n")
    line = one_line_error(run("network", "--dem", DEM[0], "--sites", path, "--no-progress", "--json", "-"))
    assert f"sites file {path} line 3" in line and needle in line


@pytest.mark.parametrize("model", ["terrain", "p1812"])
def test_network_with_site_columns_equals_link_with_the_options(tmp_path, model):
    # Node rows carry their clutter, indoor type and extra loss; the gateway takes the options (--*-a).
    path = write_sites(tmp_path, SITES)
    common = ["--model", model, "--location-percent", "90", "--extra-loss-a-db", "1.5", "--indoor-a", "traditional"]
    res = run("network", "--dem", DEM[0], "--sites", path, *common, "--no-progress", "--json", "-")
    assert res.exit_code == 0, res.output
    net = json.loads(res.stdout)
    by_node = {row["node"]: row for row in net["links"]}
    per_node = {"Osterby Farm pump": (PUMP, 1.5, ["--clutter-b", "urban", "--indoor-b", "traditional",
                                                  "--extra-loss-b-db", "2"]),
                "Millbrook Tank": (TANK, 2, ["--clutter-b", "trees", "--clutter-height-b-m", "12"])}
    for name, (site, mast, options) in per_node.items():
        one = run("link", "--dem", DEM[0], "--site-a", f"{GATEWAY[0]},{GATEWAY[1]}", "--site-b",
                  f"{site[0]},{site[1]}", "--mast-a", 10, "--mast-b", mast, *common, *options, "--json", "-")
        assert one.exit_code == 0, one.output
        one = json.loads(one.stdout)
        row = by_node[name]
        assert row["error"] is None
        assert row["total_loss_db"] == pytest.approx(one["loss_db"]["total"], abs=0.01)
        assert row["margin_db"] == pytest.approx(one["budget"]["margin_db"], abs=0.01)
        assert one["loss_db"]["extra_a"] == 1.5 and one["loss_db"]["building_entry_a"] > 0


TERMINAL_OPTIONS = ["--clutter-a", "open", "--clutter-b", "urban", "--clutter-height-b-m", "12",
                    "--terminal-clutter-m", "60", "--indoor-b", "thermally-efficient", "--extra-loss-a-db", "1",
                    "--extra-loss-b-db", "2"]


@pytest.mark.parametrize("command", ["link", "mast", "network", "coverage", "siting"])
def test_terminal_options_are_accepted_by_every_command(command, tmp_path):
    # Every option parses and passes validation: the run gets as far as opening the (missing) terrain.
    line = one_line_error(run(*command_args(command, MISSING_DEM, tmp_path), *TERMINAL_OPTIONS))
    assert "no-such-elevation-file" in line
    line = one_line_error(run(*command_args(command, MISSING_DEM, tmp_path), "--model", "terrain",
                              "--clutter-b", "urban", "--clutter-statistics"))
    assert "no-such-elevation-file" in line


@pytest.mark.parametrize("options,needle", [
    (["--clutter-height-b-m", "12"], "--clutter-height-b-m needs --clutter-b"),
    (["--model", "p1812", "--clutter-b", "urban", "--clutter-statistics"], "--clutter-statistics is for --model"),
    (["--clutter-b", "urban", "--clutter-height-b-m", "0"], "--clutter-height-b-m 0"),
    (["--clutter-b", "urban", "--clutter-height-b-m", "100.5"], "--clutter-height-b-m 100.5"),
    (["--extra-loss-a-db", "-1"], "--extra-loss-a-db -1"),
    (["--terminal-clutter-m", "0"], "--terminal-clutter-m 0"),
])
def test_bad_terminal_options_are_refused_in_one_line(options, needle, tmp_path):
    line = one_line_error(run(*command_args("link", MISSING_DEM, tmp_path), *options))
    assert needle in line and "no-such-elevation-file" not in line


def test_coverage_node_in_clutter_loses_margin(tmp_path):
    # --model terrain with the node end in urban clutter (P.2108-1 section 3.1 at every pixel): the numpy batches
    # run instead of the kernel and every computed pixel's margin drops by at least the smallest correction.
    def margins(*options):
        out = tmp_path / "cov.json"
        res = run("coverage", "--dem", DEM[0], "--site", f"{GATEWAY[0]},{GATEWAY[1]}", "--mast-m", "10",
                  "--radius-km", "1", "--resolution-m", "200", "--node-mast-m", "1.5", "--model", "terrain",
                  "--no-progress", "--out", tmp_path / "cov.tif", "--json", out, *options)
        assert res.exit_code == 0, res.output
        return json.loads(out.read_text())

    plain, urban = margins(), margins("--clutter-b", "urban")
    assert urban["summary"] != plain["summary"]


def test_coverage_takes_the_gateway_rows_terminal_columns(tmp_path):
    # A gateway row's extra_loss_db and indoor type are end A's: the path loss of every pixel rises by the
    # extra loss plus ITU-R P.2109-1 at that pixel's elevation angle (> 0), the received level falls by the same
    # (the margin is that of the recommended data rate, which may change).
    import numpy as np

    import profiler
    from profiler.engine.model import PropagationSettings
    from profiler.engine.radio import RadioSettings

    def bands(row_tail):
        path = tmp_path / "gw.csv"
        path.write_text(HEADER + f"Cairnfell Beacon,{GATEWAY[0]},{GATEWAY[1]},10,gateway,{row_tail}\n")
        result = profiler.coverage(sites=str(path), dem=str(DEM[0]), radius_km=1.0, resolution_m=200.0,
                                   radio=RadioSettings(propagation=PropagationSettings(model="terrain")),
                                   progress=False)
        return result.bands

    plain, inside = bands(",,,"), bands(",,traditional,4")
    ok = np.isfinite(plain["path_loss_db"]) & np.isfinite(inside["path_loss_db"])
    assert ok.sum() > 10
    rise = inside["path_loss_db"][ok] - plain["path_loss_db"][ok]
    assert np.all(rise > 4.0)
    assert np.allclose(plain["rx_level_dbm"][ok] - inside["rx_level_dbm"][ok], rise, atol=1e-3)


def test_antenna_at_ground_level_in_clutter_is_refused_in_one_line():
    # P.2108-1 section 3.1 is defined for h > 0 (eq. 2b: log10(h / R)): no number, one line, no traceback.
    res = run("link", "--dem", DEM[0], "--site-a", f"{GATEWAY[0]},{GATEWAY[1]}", "--site-b", f"{TANK[0]},{TANK[1]}",
              "--mast-b", "0", "--model", "terrain", "--clutter-b", "open", "--json", "-")
    assert "loss_db.total" in one_line_error(res)
