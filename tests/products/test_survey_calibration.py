"""The survey's arithmetic: the RSSI/SNR rule, the measured path loss, cells, statistics and the fit.

Check values:

* the received power from RSSI and SNR: Semtech SX1276/77/78/79 datasheet Rev. 4 (2015), section
  5.5.5 (below the noise floor, SNR < 0, the packet strength is the packet RSSI plus the SNR);
* the path loss: the link budget by hand (EIRP = power + gain - feeder loss; received = EIRP - loss +
  receive gain - receive feeder loss);
* the least-squares fit and its standard errors: scipy.stats.linregress (slope and intercept with
  ``stderr`` / ``intercept_stderr``) and, for the offset alone, the standard error of the mean
  ``s / sqrt(n)`` (Draper and Smith, Applied Regression Analysis, 3rd ed., ch. 1);
* statistics: numpy's own mean, median, std and the definitions of RMSE and shares.
"""

import math

import numpy as np
import pytest

from profiler.engine.calibration import read_calibration
from profiler.errors import ProfilerError
from profiler.products.survey import calibration as cal
from profiler.products.survey.measurements import measured_loss_db, received_power_dbm


def test_received_power_is_rssi_plus_snr_only_below_the_noise_floor():
    # SX1276 datasheet 5.5.5: packet strength = RSSI when SNR >= 0, RSSI + SNR when SNR < 0
    got = received_power_dbm([-100.0, -118.0, -120.0, -119.0], [7.5, 0.0, -8.25, -0.25])
    assert got.tolist() == [-100.0, -118.0, -128.25, -119.25]


def test_measured_path_loss_by_hand():
    # node 14 dBm, 2.15 dBi, 0.5 dB feeder: EIRP 15.65 dBm; gateway 5 dBi, 1.5 dB feeder; received -120 dBm
    # loss = 15.65 - (-120) + 5 - 1.5 = 139.15 dB
    assert measured_loss_db(-120.0, 14.0, 2.15, 0.5, 5.0, 1.5) == pytest.approx(139.15, abs=1e-12)


def test_statistics_by_definition():
    r = np.array([-12.0, -5.0, 0.0, 3.0, 6.0, 9.5, np.nan])
    s = cal.residual_stats(r)
    v = r[:-1]
    assert s["n"] == 6
    assert s["mean_db"] == pytest.approx(v.mean(), abs=1e-6)
    assert s["median_db"] == pytest.approx(1.5, abs=1e-6)
    assert s["std_db"] == pytest.approx(np.std(v, ddof=1), abs=1e-6)
    assert s["rmse_db"] == pytest.approx(math.sqrt(np.mean(v ** 2)), abs=1e-6)
    assert s["within_6db_share"] == pytest.approx(4 / 6, abs=1e-6)     # -5, 0, 3, 6
    assert s["within_10db_share"] == pytest.approx(5 / 6, abs=1e-6)    # all but -12


def test_cells_group_nearby_points_and_never_across_gateways():
    # 0.0001 deg of latitude is 11 m: three points within a 50 m cell, one 1 km away, one of another gateway
    lat = np.array([-29.90000, -29.90010, -29.90020, -29.91000, -29.90000])
    lon = np.full(5, -19.85)
    cell = cal.location_cells(["A", "A", "A", "A", "B"], lat, lon, 50.0)
    assert len({cell[0], cell[1], cell[2]}) <= 2          # a 50 m grid may split a 22 m cluster at a line
    assert cell[3] not in cell[:3] and cell[4] not in cell[:4]
    assert cal.cell_medians(np.array([0, 0, 0, 1]), np.array([1.0, 5.0, 2.0, 7.0])).tolist() == [2.0, 7.0]


def test_within_cell_sigma_is_the_pooled_standard_deviation():
    cell = np.array([0, 0, 0, 1, 1])
    r = np.array([1.0, 2.0, 3.0, 10.0, 14.0])
    # sum of squares about the cell means: (1 + 0 + 1) + (4 + 4) = 10, dof 5 - 2 = 3
    assert cal.within_cell_sigma_db(cell, r) == pytest.approx(math.sqrt(10 / 3), abs=1e-6)
    assert cal.within_cell_sigma_db(np.array([0, 1]), np.array([1.0, 2.0])) is None


def _synthetic(offset, slope, sigma, n=400, seed=7):
    rng = np.random.default_rng(seed)
    d = 10 ** rng.uniform(2.7, 4.3, n)                   # 0.5 to 20 km
    r = offset + slope * np.log10(d / 1000.0) + rng.normal(0.0, sigma, n)
    return d, r


def test_slope_fit_equals_linregress_and_recovers_what_was_put_in():
    from scipy.stats import linregress

    d, r = _synthetic(4.0, -3.0, 5.0)
    fit = cal.fit_correction(d, r, "slope")
    ref = linregress(np.log10(d / 1000.0), r)
    assert fit["offset_db"] == pytest.approx(ref.intercept, abs=1e-5)
    assert fit["slope_db_per_decade"] == pytest.approx(ref.slope, abs=1e-5)
    assert fit["offset_se_db"] == pytest.approx(ref.intercept_stderr, rel=1e-5)
    assert fit["slope_se_db_per_decade"] == pytest.approx(ref.stderr, rel=1e-5)
    # recovered within three standard errors of what was put in
    assert abs(fit["offset_db"] - 4.0) < 3 * fit["offset_se_db"]
    assert abs(fit["slope_db_per_decade"] + 3.0) < 3 * fit["slope_se_db_per_decade"]


def test_offset_fit_is_the_mean_with_the_standard_error_of_the_mean():
    d, r = _synthetic(4.0, 0.0, 6.0, n=150, seed=11)
    fit = cal.fit_correction(d, r, "offset")
    assert fit["offset_db"] == pytest.approx(r.mean(), abs=1e-5)
    assert fit["offset_se_db"] == pytest.approx(r.std(ddof=1) / math.sqrt(r.size), rel=1e-5)
    assert fit["slope_db_per_decade"] == 0.0 and fit["slope_se_db_per_decade"] is None
    assert abs(fit["offset_db"] - 4.0) < 3 * fit["offset_se_db"]


def test_fit_refuses_an_unknown_kind():
    with pytest.raises(ProfilerError, match="--fit"):
        cal.fit_correction([1000.0, 2000.0], [1.0, 2.0], "curve")


def test_calibration_correction_uses_the_class_table_where_there_is_one():
    c = {"offset_db": 4.0, "slope_db_per_decade": 2.0,
         "clutter": {"trees": {"offset_db": 9.0, "slope_db_per_decade": 0.0}}}
    got = cal.calibration_correction_db(c, [1000.0, 10_000.0, 10_000.0], ["open", "open", "trees"])
    assert got.tolist() == pytest.approx([4.0, 6.0, 9.0])
    assert cal.calibration_correction_db(c, [100.0]).tolist() == pytest.approx([2.0])


def test_cross_validation_folds_never_share_a_cell():
    n_cells = 23
    fold = cal.fold_of_cells(n_cells, 5)
    cell = np.repeat(np.arange(n_cells), 3)              # three measurements per cell
    per_cell = {c: set(fold[cell[cell == c]]) for c in range(n_cells)}
    assert all(len(f) == 1 for f in per_cell.values())
    assert sorted(np.unique(fold).tolist()) == [0, 1, 2, 3, 4]
    assert np.array_equal(fold, cal.fold_of_cells(n_cells, 5))   # deterministic


def test_cross_validated_rmse_is_close_to_the_noise_for_a_true_offset():
    d, r = _synthetic(4.0, 0.0, 3.0, n=200, seed=3)
    cv = cal.cross_validate(d, r, ["open"] * r.size, np.arange(r.size), "offset", 5)
    assert 2.5 < cv < 3.5


def test_read_calibration_round_trip(tmp_path):
    from profiler.io.survey_exports import calibration_toml_text

    report = {"calibration": {"fit": "offset", "offset_db": 3.5, "slope_db_per_decade": 0.0},
              "location_sigma_db": 2.25, "settings": {"measurements_file": "m.csv"},
              "calibration_by_clutter": {"dense-urban": {"offset_db": 7.0, "slope_db_per_decade": 0.0,
                                                         "location_sigma_db": None}}}
    path = tmp_path / "cal.toml"
    path.write_text(calibration_toml_text(report), encoding="utf-8")
    got = read_calibration(path)
    assert got == {"offset_db": 3.5, "slope_db_per_decade": 0.0, "location_sigma_db": 2.25,
                   "clutter": {"dense-urban": {"offset_db": 7.0, "slope_db_per_decade": 0.0,
                                               "location_sigma_db": None}}}
    bad = tmp_path / "bad.toml"
    bad.write_text("slope_db_per_decade = 1\n", encoding="utf-8")
    with pytest.raises(ProfilerError, match="offset_db is missing"):
        read_calibration(bad)
