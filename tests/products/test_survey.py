"""``profiler survey`` end to end on the bundled synthetic terrain (dem_samples/).

Check values: the prediction is ``profiler network``'s for the same gateway -> node pair (the same
engine, a consistency check across commands); the measured loss follows the SX1276 datasheet
(Rev. 4, 2015, section 5.5.5) RSSI/SNR rule and the link budget by hand; a synthetic survey made
from the model plus a known offset and Gaussian noise (numpy's seeded generator) is recovered within
three of the fit's standard errors (least squares: Draper and Smith, ch. 1).
"""

import csv

import numpy as np
import pytest
from sample_sites import DEM, GATEWAY, PUMP, TANK

from profiler.errors import ProfilerError

SITES_HEADER = "name,lat_deg,lon_deg,mast_m,role\n"
SITES = SITES_HEADER + f"Cairnfell Beacon,{GATEWAY[0]},{GATEWAY[1]},10,gateway\n"
HEADER = ["gateway", "lat_deg", "lon_deg", "rssi_dbm", "snr_db", "node_mast_m", "clutter"]


def _write(tmp_path, rows, header=HEADER, name="meas.csv"):
    path = tmp_path / name
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)
    return path


@pytest.fixture
def sites(tmp_path):
    path = tmp_path / "sites.csv"
    path.write_text(SITES, encoding="utf-8")
    return path


def test_prediction_equals_profiler_network_for_the_same_pair(tmp_path, sites):
    from profiler import network, survey

    for model in ("p1812", "terrain"):
        from profiler.engine.model import PropagationSettings
        from profiler.engine.radio import RadioSettings

        radio = RadioSettings(propagation=PropagationSettings(model=model))
        net_sites = tmp_path / "net.csv"
        net_sites.write_text(SITES + f"pump,{PUMP[0]},{PUMP[1]},1.5,node\ntank,{TANK[0]},{TANK[1]},1.5,node\n",
                             encoding="utf-8")
        net = network(net_sites, dem=DEM, radio=radio, progress=False).to_dict()
        meas = _write(tmp_path, [["Cairnfell Beacon", PUMP[0], PUMP[1], -110, 5, 1.5, ""],
                                 ["Cairnfell Beacon", TANK[0], TANK[1], -100, 8, "", ""]])
        rep = survey(sites, meas, dem=DEM, radio=radio, progress=False).to_dict()
        for link, m in zip(net["links"], rep["measurements"]):
            assert m["predicted_loss_db"] == pytest.approx(link["total_loss_db"], abs=1e-6)
            assert m["distance_m"] == pytest.approx(link["distance_m"], abs=1e-6)


def test_measured_loss_uses_the_radio_settings_and_the_rssi_snr_rule(tmp_path, sites):
    from profiler import survey
    from profiler.engine.radio import RadioSettings

    meas = _write(tmp_path, [["Cairnfell Beacon", PUMP[0], PUMP[1], -118, -6.5, 1.5, ""]],
                  header=HEADER)
    radio = RadioSettings(tx_power_dbm=12.0, gain_a_dbi=6.0, cable_loss_a_db=2.0, gain_b_dbi=0.0,
                          cable_loss_b_db=0.5)
    rep = survey(sites, meas, dem=DEM, radio=radio, band="EU868", progress=False).to_dict()
    # EIRP 12 + 0 - 0.5 = 11.5 dBm; received -118 + (-6.5) = -124.5 dBm; loss = 11.5 + 124.5 + 6 - 2 = 140
    assert rep["measurements"][0]["measured_loss_db"] == pytest.approx(140.0, abs=1e-9)


def test_a_bad_row_carries_its_error_and_the_run_goes_on(tmp_path, sites):
    from profiler import survey

    rows = [["Cairnfell Beacon", PUMP[0], PUMP[1], -110, 5, 1.5, ""],
            ["Cairnfell Beacon", -31.5, -19.9, -120, -3, 1.5, ""],          # outside the elevation data
            ["Cairnfell Beacon", TANK[0], TANK[1], "", "", 1.5, ""]]         # a missed uplink
    rep = survey(sites, _write(tmp_path, rows), dem=DEM, progress=False).to_dict()
    m = rep["measurements"]
    assert m[0]["error"] is None and m[0]["residual_db"] is not None
    assert m[1]["error"] and m[1]["residual_db"] is None and m[1]["predicted_loss_db"] is None
    assert m[2]["error"] is None and m[2]["measured_loss_db"] is None and m[2]["predicted_loss_db"] is not None
    assert rep["heard"]["errors"] == 1 and rep["heard"]["missed"] == 1
    assert any("could not be predicted" in w for w in rep["warnings"])


def test_json_keys_are_those_of_the_issue(tmp_path, sites):
    from profiler import survey

    rows = [["Cairnfell Beacon", PUMP[0], PUMP[1], -110, 5, 1.5, "open"],
            ["Cairnfell Beacon", TANK[0], TANK[1], -100, 8, 1.5, "open"]]
    rep = survey(sites, _write(tmp_path, rows), dem=DEM, progress=False).to_dict()
    assert rep["schema"] == "profiler.survey/1"
    assert {"measurements", "statistics", "location_sigma_db", "calibration", "settings", "dem", "warnings",
            "caution"} <= set(rep)
    assert set(rep["measurements"][0]) == {"gateway", "lat_deg", "lon_deg", "distance_m", "measured_loss_db",
                                           "predicted_loss_db", "residual_db", "line_of_sight", "clutter", "error"}
    assert set(rep["statistics"]) == {"n", "mean_db", "median_db", "std_db", "rmse_db", "within_6db_share",
                                      "within_10db_share", "by_distance", "by_line_of_sight", "by_clutter",
                                      "by_gateway"}
    assert set(rep["calibration"]) == {"fit", "offset_db", "offset_se_db", "slope_db_per_decade",
                                       "slope_se_db_per_decade", "cross_validated_rmse_db", "rmse_before_db",
                                       "rmse_after_db"}


def test_a_synthetic_survey_is_recovered_within_the_standard_errors(tmp_path, sites):
    """Model + 5 dB + 2 dB per decade + Gaussian noise (sigma 3 dB) at 60 places -> the fit gives them back."""
    from profiler import survey

    rng = np.random.default_rng(2026)
    lat = rng.uniform(-30.03, -29.82, 60)
    lon = rng.uniform(-19.94, -19.76, 60)
    first = _write(tmp_path, [["Cairnfell Beacon", a, b, -100, 5, 1.5, ""] for a, b in zip(lat, lon)], name="a.csv")
    base = survey(sites, first, dem=DEM, progress=False).to_dict()
    ok = [m["error"] is None for m in base["measurements"]]      # a few cross the quarry void: left out
    lat, lon = lat[ok], lon[ok]
    pred = np.array([m["predicted_loss_db"] for m in base["measurements"] if m["error"] is None], float)
    d = np.array([m["distance_m"] for m in base["measurements"] if m["error"] is None], float)
    assert pred.size > 40
    loss = pred + 5.0 + 2.0 * np.log10(d / 1000.0) + rng.normal(0.0, 3.0, pred.size)
    rx = 14.0 - 0.15 + 2.15 - loss + 2.15          # EU868: the node's power capped to 16 dBm EIRP (13.85 dBm)
    rows = [["Cairnfell Beacon", a, b, f"{p:.6f}", "5", 1.5, ""] for a, b, p in zip(lat, lon, rx)]
    rep = survey(sites, _write(tmp_path, rows, name="b.csv"), dem=DEM, fit="slope", progress=False).to_dict()
    c = rep["calibration"]
    assert abs(c["offset_db"] - 5.0) < 3 * c["offset_se_db"]
    assert abs(c["slope_db_per_decade"] - 2.0) < 3 * c["slope_se_db_per_decade"]
    assert c["rmse_after_db"] < c["rmse_before_db"]
    assert 2.0 < c["cross_validated_rmse_db"] < 4.5


def test_the_sample_survey_recovers_its_offset():
    """examples/make_survey.py put +4 dB in (the 44 places drawn average +3.6 dB)."""
    from pathlib import Path

    from profiler import survey

    root = Path(__file__).resolve().parents[2]
    rep = survey(root / "examples" / "sites.csv", root / "examples" / "vellmoor_survey.csv",
                 dem=[root / "dem_samples"], progress=False).to_dict()
    c = rep["calibration"]
    assert abs(c["offset_db"] - 4.0) < 3 * c["offset_se_db"]
    assert rep["heard"]["missed"] > 0


@pytest.mark.parametrize("rows, message", [
    ([["Nowhere", -29.9, -19.8, -110, 5, 1.5, ""]], "line 2: gateway 'Nowhere' is not a gateway"),
    ([["Cairnfell Beacon", -29.9, -19.8, -110, 5, 1.5, ""], ["Cairnfell Beacon", -29.9, -19.8, "strong", 5, 1.5, ""]],
     "line 3: rssi_dbm 'strong' is not a number"),
    ([["Cairnfell Beacon", -29.9, -19.8, -110, "", 1.5, ""]], "line 2: give both rssi_dbm and snr_db"),
    ([["Cairnfell Beacon", "", -19.8, -110, 5, 1.5, ""]], "line 2: lat_deg is empty"),
    ([["Cairnfell Beacon", -95, -19.8, -110, 5, 1.5, ""]], "line 2: lat_deg -95 is out of range"),
])
def test_malformed_files_are_refused_whole_with_the_line(tmp_path, sites, rows, message):
    from profiler import survey

    with pytest.raises(ProfilerError, match=message):
        survey(sites, _write(tmp_path, rows), dem=DEM, progress=False)


def test_a_missing_column_is_refused(tmp_path, sites):
    from profiler import survey

    path = _write(tmp_path, [["Cairnfell Beacon", -29.9, -19.8, -110]], header=HEADER[:4])
    with pytest.raises(ProfilerError, match="line 1: missing column snr_db"):
        survey(sites, path, dem=DEM, progress=False)


def test_missed_uplinks_are_compared_with_the_prediction(tmp_path, sites):
    """A missed uplink on a clear path is 'predicted to close'; a received one far below sensitivity the reverse."""
    from profiler import survey

    rows = [["Cairnfell Beacon", TANK[0], TANK[1], "", "", 1.5, ""],                 # missed, clear path
            ["Cairnfell Beacon", TANK[0], TANK[1], -100, 5, 1.5, ""]]
    rep = survey(sites, _write(tmp_path, rows), dem=DEM, progress=False).to_dict()
    assert rep["heard"]["missed_predicted_to_close"] == 1
    assert rep["heard"]["received_predicted_not_to_close"] == 0


def test_the_row_data_rate_sets_the_sensitivity(tmp_path, sites):
    """EU868 DR0 is SF12/125 kHz, DR5 SF7/125 kHz (LoRaWAN RP002-1.0.4 section 2.1.3): a path whose predicted
    received power lies between the two sensitivities closes at DR0 and not at DR5."""
    from profiler import survey
    from profiler.lora.modem import lora_sensitivity_batch_dbm

    rows = [["Cairnfell Beacon", PUMP[0], PUMP[1], "", "", 1.5, "", dr] for dr in (0, 5)]
    rows.append(["Cairnfell Beacon", TANK[0], TANK[1], -100, 5, 1.5, "", ""])      # one received: something to compare
    rep = survey(sites, _write(tmp_path, rows, header=HEADER + ["dr"]), dem=DEM, band="EU868",
                 progress=False).to_dict()
    loss = rep["measurements"][0]["predicted_loss_db"]
    rx = 13.85 + 2.15 - loss + 2.15          # EU868: the node's default power capped to 16 dBm EIRP
    s12, s7 = lora_sensitivity_batch_dbm(np.array([12, 7]), 125.0, 3.0)
    closes = [rx >= s12, rx >= s7]
    assert rep["heard"]["missed_predicted_to_close"] == sum(closes)
    bad = _write(tmp_path, [["Cairnfell Beacon", PUMP[0], PUMP[1], "", "", 1.5, "", 9]],
                 header=HEADER + ["dr"], name="bad.csv")
    with pytest.raises(ProfilerError, match="line 2: dr 9 is not an uplink data rate of EU868"):
        survey(sites, bad, dem=DEM, band="EU868", progress=False)


def test_the_frequency_column_predicts_at_that_frequency(tmp_path, sites):
    from profiler import network, survey

    net_sites = tmp_path / "net.csv"
    net_sites.write_text(SITES + f"tank,{TANK[0]},{TANK[1]},1.5,node\n", encoding="utf-8")
    net = network(net_sites, dem=DEM, frequency_mhz=433.175, progress=False).to_dict()
    net868 = network(net_sites, dem=DEM, progress=False).to_dict()
    rows = [["Cairnfell Beacon", TANK[0], TANK[1], -100, 5, 1.5, "", 433.175],
            ["Cairnfell Beacon", TANK[0], TANK[1], -100, 5, 1.5, "", ""]]
    rep = survey(sites, _write(tmp_path, rows, header=HEADER + ["frequency_mhz"]), dem=DEM,
                 progress=False).to_dict()
    m = rep["measurements"]
    assert m[0]["predicted_loss_db"] == pytest.approx(net["links"][0]["total_loss_db"], abs=1e-6)
    assert m[1]["predicted_loss_db"] == pytest.approx(net868["links"][0]["total_loss_db"], abs=1e-6)
    assert m[1]["predicted_loss_db"] > m[0]["predicted_loss_db"] + 1


def test_measurements_from_records_checks_like_the_file():
    from profiler.products.survey.measurements import measurements_from_records

    m = measurements_from_records([{"gateway": "G", "lat_deg": -29.9, "lon_deg": -19.8, "rssi_dbm": None,
                                    "snr_db": None, "clutter": "Trees"}], ["G"])
    assert not m.heard[0] and m.clutter == ("trees",) and m.node_mast_m[0] == 1.5
    with pytest.raises(ProfilerError, match="measurement 1: clutter 'forest' is not a clutter class"):
        measurements_from_records([{"gateway": "G", "lat_deg": 0, "lon_deg": 0, "rssi_dbm": -90, "snr_db": 3,
                                    "clutter": "forest"}], ["G"])


@pytest.mark.parametrize("extra, value, message", [
    ("time", "yesterday", "line 2: time 'yesterday' is not ISO 8601"),
    ("indoor", "cellar", "line 2: indoor 'cellar' is not known"),
    ("sf", "9", "line 2: give sf and bw_khz together"),
    ("snr_db", "nan", "line 2: snr_db 'nan' must be a finite number"),
])
def test_other_malformed_values_are_refused_with_the_line(tmp_path, sites, extra, value, message):
    from profiler import survey

    header = ["gateway", "lat_deg", "lon_deg", "rssi_dbm", "snr_db"] + ([extra] if extra != "snr_db" else [])
    row = ["Cairnfell Beacon", TANK[0], TANK[1], -100, 5 if extra != "snr_db" else value]
    row += [value] if extra != "snr_db" else []
    with pytest.raises(ProfilerError, match=message):
        survey(sites, _write(tmp_path, [row], header=header), dem=DEM, progress=False)


def test_not_utf8_and_empty_files_are_refused(tmp_path, sites):
    from profiler import survey

    bad = tmp_path / "latin1.csv"
    bad.write_bytes("gateway,lat_deg,lon_deg,rssi_dbm,snr_db\nM\xfchle,1,2,3,4\n".encode("latin-1"))
    with pytest.raises(ProfilerError, match="line 2: not UTF-8"):
        survey(sites, bad, dem=DEM, progress=False)
    empty = tmp_path / "empty.csv"
    empty.write_text("gateway,lat_deg,lon_deg,rssi_dbm,snr_db\n", encoding="utf-8")
    with pytest.raises(ProfilerError, match="has a header but no rows"):
        survey(sites, empty, dem=DEM, progress=False)


def test_with_a_land_cover_the_prediction_equals_profiler_network_and_rows_take_its_class(tmp_path, sites):
    from pathlib import Path

    from profiler import network, survey

    cover = [Path(DEM[0]).parent / "vellmoor_landcover.tif"]
    net_sites = tmp_path / "net.csv"
    net_sites.write_text(SITES + f"pump,{PUMP[0]},{PUMP[1]},1.5,node\ntank,{TANK[0]},{TANK[1]},1.5,node\n",
                         encoding="utf-8")
    net = network(net_sites, dem=DEM, land_cover=cover, progress=False).to_dict()
    meas = _write(tmp_path, [["Cairnfell Beacon", PUMP[0], PUMP[1], -110, 5, 1.5, ""],
                             ["Cairnfell Beacon", TANK[0], TANK[1], -100, 8, 1.5, "water"]])
    rep = survey(sites, meas, dem=DEM, land_cover=cover, progress=False).to_dict()
    for link, m in zip(net["links"], rep["measurements"]):
        assert m["predicted_loss_db"] == pytest.approx(link["total_loss_db"], abs=1e-6)
    from profiler.terrain.landcover import CLUTTER_CLASSES, LandCover, worldcover_mapping

    with LandCover.open(cover) as lc:
        idx = worldcover_mapping().clutter(lc.codes(np.array([PUMP[1]]), np.array([PUMP[0]])), "p1812").class_index
    assert rep["measurements"][0]["clutter"] == CLUTTER_CLASSES[int(idx[0])]      # the land cover's class
    assert rep["measurements"][1]["clutter"] == "water"                           # the row's own wins
    assert rep["settings"]["land_cover"] == [str(cover[0])]
    assert not any(w.startswith("no land cover") for w in rep["warnings"])
