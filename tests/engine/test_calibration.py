"""``--calibration FILE.toml``: a survey's fitted correction as the loss term ``loss_db.calibration``.

Check values: the correction is the hand formula of issue 21, item 5,
``offset + slope * log10(d / 1 km)`` [dB], with the file's numbers and the
report's own ``distance_m``; the file's digest is ``hashlib.sha256`` of its
bytes (FIPS 180-4); the per-class table is the one of the node end's class
(the option, the sites file, else the land cover at the node sample); the
uncalibrated run of the same command is the reference the calibrated one
must equal plus the correction (issue 21, "Done when": the calibrated
coverage equals the uncalibrated one shifted by the fitted terms); the
survey's own calibration file (its ``--calibration-out`` text) applied to
its predictions through ``profiler network`` gives the survey's
``rmse_after_db`` (RMSE by definition over the location cells).
"""

from __future__ import annotations

import csv
import hashlib
import math

import numpy as np
import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, PUMP, TANK

from profiler.engine.calibration import Calibration, calibration_correction_db, load_calibration, read_calibration
from profiler.errors import ProfilerError

CAL = """offset_db = 4.0
slope_db_per_decade = 10.0
location_sigma_db = 6.5

[clutter.urban]
offset_db = 9.0
slope_db_per_decade = -3.0
"""


def _hand(offset, slope, d_m):
    """Issue 21 item 5: offset + slope * log10(d / 1 km) [dB]."""
    return offset + slope * math.log10(d_m / 1000.0)


@pytest.fixture
def cal_file(tmp_path):
    path = tmp_path / "cal.toml"
    path.write_text(CAL, encoding="utf-8")
    return path


def test_link_calibration_term_is_the_hand_formula_and_in_the_total(cal_file):
    from profiler import link

    base = link(GATEWAY, PUMP, dem=DEM).to_dict()
    rep = link(GATEWAY, PUMP, dem=DEM, calibration=cal_file).to_dict()
    want = _hand(4.0, 10.0, rep["distance_m"])
    assert rep["loss_db"]["calibration"] == pytest.approx(want, abs=1e-9)
    assert base["loss_db"]["calibration"] == 0.0 and base["calibration"] is None
    assert rep["loss_db"]["total"] == pytest.approx(base["loss_db"]["total"] + want, abs=1e-9)
    assert rep["budget"]["rx_power_dbm"] == pytest.approx(base["budget"]["rx_power_dbm"] - want, abs=1e-9)
    assert rep["calibration"] == {"path": str(cal_file), "sha256": hashlib.sha256(cal_file.read_bytes()).hexdigest(),
                                  "offset_db": 4.0, "slope_db_per_decade": 10.0, "clutter": None}
    assert rep["schema"] == "profiler.link/6"


def test_the_class_table_is_taken_for_a_node_in_that_class(cal_file):
    from profiler import link
    from profiler.engine.model import PropagationSettings
    from profiler.engine.radio import RadioSettings

    for gateway, node_end in (("a", "clutter_b"), ("b", "clutter_a")):
        radio = RadioSettings(gateway=gateway, propagation=PropagationSettings(**{node_end: "urban"}))
        rep = link(GATEWAY, PUMP, dem=DEM, radio=radio, calibration=cal_file).to_dict()
        assert rep["loss_db"]["calibration"] == pytest.approx(_hand(9.0, -3.0, rep["distance_m"]), abs=1e-9)
        assert rep["calibration"]["clutter"] == "urban" and rep["calibration"]["offset_db"] == 9.0
    # the gateway's class does not choose the table
    radio = RadioSettings(propagation=PropagationSettings(clutter_a="urban"))
    rep = link(GATEWAY, PUMP, dem=DEM, radio=radio, calibration=cal_file).to_dict()
    assert rep["loss_db"]["calibration"] == pytest.approx(_hand(4.0, 10.0, rep["distance_m"]), abs=1e-9)


def test_the_land_cover_class_at_the_node_sample_chooses_the_table(cal_file):
    """No option or sites class: the land cover's class at the node's end sample (column n - 1 for B)."""
    from profiler.engine.losses import calibration_term_db
    from profiler.engine.model import PropagationSettings
    from profiler.engine.radio import RadioSettings
    from profiler.engine.terminals import terminal_ends
    from profiler.terrain.landcover import CLUTTER_CLASSES

    urban, trees = CLUTTER_CLASSES.index("urban"), CLUTTER_CLASSES.index("trees")
    classes = np.array([[trees, -1, -1, urban, -1], [urban, -1, trees, -1, -1]])   # link 2 has 3 samples
    n = np.array([4, 3])
    length = np.array([2500.0, 800.0])
    for gateway, want in (("a", [_hand(9.0, -3.0, 2500.0), _hand(4.0, 10.0, 800.0)]),     # node B: urban, trees
                          ("b", [_hand(4.0, 10.0, 2500.0), _hand(9.0, -3.0, 800.0)])):    # node A: trees, urban
        radio = RadioSettings(gateway=gateway, propagation=PropagationSettings(calibration=load_calibration(cal_file)))
        ends = terminal_ends(radio, 2, {"clutter_class": classes, "clutter_m": np.full(classes.shape, 10.0)}, None, n)
        assert calibration_term_db(radio, length, ends) == pytest.approx(want, abs=1e-9)


def _net_sites(tmp_path, pump_clutter=""):
    path = tmp_path / "net.csv"
    path.write_text("name,lat_deg,lon_deg,mast_m,role,clutter\n"
                    f"Cairnfell Beacon,{GATEWAY[0]},{GATEWAY[1]},10,gateway,\n"
                    f"pump,{PUMP[0]},{PUMP[1]},1.5,node,{pump_clutter}\n"
                    f"tank,{TANK[0]},{TANK[1]},1.5,node,\n", encoding="utf-8")
    return path


def test_network_links_carry_the_correction_of_their_node_class(tmp_path, cal_file):
    from profiler import network
    from profiler.engine.radio import RadioSettings

    sites = _net_sites(tmp_path, "urban")
    radio = RadioSettings(sf=12)          # a fixed data rate: the margin moves with the loss, dB for dB
    base = network(sites, dem=DEM, progress=False, radio=radio).to_dict()
    rep = network(sites, dem=DEM, progress=False, radio=radio, calibration=cal_file).to_dict()
    assert rep["schema"] == "profiler.network/5"
    assert rep["settings"]["calibration"]["sha256"] == hashlib.sha256(cal_file.read_bytes()).hexdigest()
    assert rep["settings"]["calibration"]["clutter"] == {"urban": {"offset_db": 9.0, "slope_db_per_decade": -3.0}}
    assert base["settings"]["calibration"] is None
    for b, c in zip(base["links"], rep["links"]):
        offset, slope = (9.0, -3.0) if c["node"] == "pump" else (4.0, 10.0)
        want = _hand(offset, slope, c["distance_m"])
        assert c["total_loss_db"] == pytest.approx(b["total_loss_db"] + want, abs=1e-6)
        assert c["margin_db"] == pytest.approx(b["margin_db"] - want, abs=1e-6)


def test_calibrated_coverage_is_the_uncalibrated_shifted_by_the_correction(tmp_path, cal_file):
    """Issue 21 "Done when": at every pixel the margin is lowered by the correction at the distance of the
    radial sample it takes its value from (sample j at j * radial_step_m; the site's own pixel takes sample 1)."""
    from profiler import coverage
    from profiler.engine.radio import RadioSettings
    from profiler.products.coverage.grid import Gateway, pixel_polar

    radio = RadioSettings(sf=12)          # a fixed data rate: the margin moves with the loss, dB for dB
    kw = dict(dem=DEM, mast_m=10.0, radius_km=2.0, resolution_m=90.0, progress=False, radio=radio)
    base = coverage(GATEWAY, **kw)
    cal = coverage(GATEWAY, calibration=cal_file, **kw)
    settings = cal.to_dict()["settings"]
    assert cal.to_dict()["schema"] == "profiler.coverage/5"
    assert settings["calibration"]["path"] == str(cal_file)
    step = settings["radial_step_m"]
    _, dist = pixel_polar(base.grid, Gateway(name="site", lat_deg=GATEWAY[0], lon_deg=GATEWAY[1], mast_m=10.0))
    j = np.maximum(np.rint(dist / step), 1.0)
    want = 4.0 + 10.0 * np.log10(j * step / 1000.0)
    for band in ("margin_db", "downlink_margin_db"):
        ok = np.isfinite(base.bands[band])
        assert ok.sum() > 100 and np.array_equal(ok, np.isfinite(cal.bands[band]))
        got = base.bands[band][ok] - cal.bands[band][ok]
        assert got == pytest.approx(want[ok], abs=2e-3)          # float32 bands
    ok = np.isfinite(base.bands["path_loss_db"])
    assert (cal.bands["path_loss_db"] - base.bands["path_loss_db"])[ok] == pytest.approx(want[ok], abs=2e-3)


def _write_rows(path, rows):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["gateway", "lat_deg", "lon_deg", "rssi_dbm", "snr_db", "node_mast_m"])
        w.writerows(rows)
    return path


@pytest.mark.parametrize("fit", ["offset", "slope"])
def test_the_survey_calibration_file_applied_to_its_predictions_gives_its_rmse_after(tmp_path, fit):
    """Survey -> --calibration-out text -> profiler network over the same places with it: the residuals
    measured - calibrated prediction, one per location cell, have the RMSE the survey reported."""
    from profiler import network, survey
    from profiler.io.survey_exports import calibration_toml_text
    from profiler.products.survey.calibration import cell_medians, location_cells

    sites = tmp_path / "sites.csv"
    sites.write_text(f"name,lat_deg,lon_deg,mast_m,role\nCairnfell Beacon,{GATEWAY[0]},{GATEWAY[1]},10,gateway\n",
                     encoding="utf-8")
    rng = np.random.default_rng(21)
    lat, lon = rng.uniform(-29.95, -29.86, 24), rng.uniform(-19.93, -19.80, 24)
    rssi = -95.0 - 12.0 * rng.random(24)
    rep = survey(sites, _write_rows(tmp_path / "m.csv", [["Cairnfell Beacon", a, b, f"{r:.3f}", "8", 1.5]
                                                           for a, b, r in zip(lat, lon, rssi)]),
                 dem=DEM, fit=fit, progress=False).to_dict()
    cal_path = tmp_path / "fitted.toml"
    cal_path.write_text(calibration_toml_text(rep), encoding="utf-8")
    rows = [m for m in rep["measurements"] if m["error"] is None]
    assert len(rows) > 15
    net_sites = tmp_path / "net.csv"
    net_sites.write_text(sites.read_text(encoding="utf-8") + "".join(
        f"n{i},{m['lat_deg']},{m['lon_deg']},1.5,node\n" for i, m in enumerate(rows)), encoding="utf-8")
    links = {x["node"]: x for x in network(net_sites, dem=DEM, progress=False, calibration=cal_path).to_dict()["links"]}
    after = np.array([m["measured_loss_db"] - links[f"n{i}"]["total_loss_db"] for i, m in enumerate(rows)])
    cell = location_cells([m["gateway"] for m in rows], [m["lat_deg"] for m in rows], [m["lon_deg"] for m in rows],
                          rep["settings"]["cell_m"])
    per_cell = cell_medians(cell, after)
    c = rep["calibration"]
    assert math.sqrt(np.mean(per_cell ** 2)) == pytest.approx(c["rmse_after_db"], abs=1e-5)
    assert c["rmse_after_db"] < c["rmse_before_db"]


@pytest.mark.parametrize("text, message", [
    ("offset_db = \n", "is not readable TOML"),
    ("slope_db_per_decade = 1.0\n", "offset_db is missing"),
    ('offset_db = "four"\n', "offset_db must be a number"),
    ("offset_db = true\n", "offset_db must be a number"),
    ("offset_db = 1.0\nslope_db_per_decade = nan\n", "slope_db_per_decade must be a number"),
    ("offset_db = 1.0\n[clutter.urban]\nslope_db_per_decade = 2.0\n", r"\[clutter.urban\] offset_db is missing"),
    ("offset_db = 1.0\n[clutter.urban]\noffset_db = [1]\n", r"\[clutter.urban\] offset_db must be a number"),
    ("offset_db = 1.0\nclutter = 3\n", "clutter must be tables"),
    ("offset_db = 1.0\nclutter = {urban = 3}\n", "clutter.urban must be a table"),
])
def test_bad_files_are_refused_in_one_line_with_the_file_name(tmp_path, text, message):
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ProfilerError, match=message) as err:
        read_calibration(path)
    assert str(path) in str(err.value) and "\n" not in str(err.value)


@pytest.mark.parametrize("command", ["link", "mast", "network", "coverage", "siting"])
def test_every_command_refuses_a_bad_file_before_any_output(tmp_path, command):
    from profiler.cli import main

    bad = tmp_path / "bad.toml"
    bad.write_text('offset_db = "x"\n', encoding="utf-8")
    out = tmp_path / "out.json"
    sites = _net_sites(tmp_path)
    args = {"link": ["link", "--site-a", f"{GATEWAY[0]},{GATEWAY[1]}", "--site-b", f"{PUMP[0]},{PUMP[1]}"],
            "mast": ["mast", "--site-a", f"{GATEWAY[0]},{GATEWAY[1]}", "--site-b", f"{PUMP[0]},{PUMP[1]}"],
            "network": ["network", "--sites", str(sites)], "siting": ["siting", "--sites", str(sites)],
            "coverage": ["coverage", "--site", f"{GATEWAY[0]},{GATEWAY[1]}", "--mast-m", "10", "--radius-km", "1"]}
    res = CliRunner().invoke(main, [*args[command], "--dem", str(DEM[0]), "--calibration", str(bad),
                                    "--json", str(out)])
    assert res.exit_code != 0
    lines = [x for x in res.output.splitlines() if x.strip()]
    assert len(lines) == 1 and str(bad) in lines[0] and "offset_db must be a number" in lines[0], res.output
    assert not out.exists()
    missing = CliRunner().invoke(main, [*args[command], "--dem", str(DEM[0]), "--calibration",
                                        str(tmp_path / "none.toml"), "--json", str(out)])
    assert missing.exit_code != 0 and "calibration file not found" in missing.output and not out.exists()


def test_the_api_takes_a_read_calibration_and_the_correction_function_takes_it_too(cal_file):
    cal = load_calibration(cal_file)
    assert isinstance(cal, Calibration) and cal.sha256 == hashlib.sha256(cal_file.read_bytes()).hexdigest()
    d = np.array([1000.0, 10_000.0, 10_000.0])
    got = calibration_correction_db(cal, d, [None, "open", "urban"])
    assert got == pytest.approx([4.0, 14.0, 6.0])
    with pytest.raises(ProfilerError, match="calibration"):
        from profiler.engine.model import PropagationSettings

        PropagationSettings(calibration={"offset_db": 1.0}).validate()


def test_a_survey_refuses_a_calibrated_model(tmp_path, cal_file):
    """The survey fits the calibration against the uncalibrated model; a calibrated one would be misstated."""
    from profiler import survey
    from profiler.engine.model import PropagationSettings
    from profiler.engine.radio import RadioSettings

    sites = tmp_path / "sites.csv"
    sites.write_text(f"name,lat_deg,lon_deg,mast_m,role\nCairnfell Beacon,{GATEWAY[0]},{GATEWAY[1]},10,gateway\n",
                     encoding="utf-8")
    meas = _write_rows(tmp_path / "m.csv", [["Cairnfell Beacon", PUMP[0], PUMP[1], "-100", "5", 1.5]])
    radio = RadioSettings(propagation=PropagationSettings(calibration=load_calibration(cal_file)))
    with pytest.raises(ProfilerError, match="uncalibrated model"):
        survey(sites, meas, dem=DEM, radio=radio, progress=False)


def test_the_pdf_loss_table_has_no_calibration_row_without_a_calibration():
    from profiler import link
    from profiler.plot.report_pdf import _loss_table

    report = link(GATEWAY, PUMP, dem=DEM).to_dict()
    assert report["loss_db"]["calibration"] == 0.0
    assert not [row for row in _loss_table(report).rows if row[0].startswith("Calibration")]
