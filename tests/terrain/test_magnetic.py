"""Magnetic declination (World Magnetic Model via pygeomag) against IGRF and published values."""

import datetime as dt

import numpy as np
import pytest

from profiler.errors import ProfilerError
from profiler.terrain import magnetic

# Mid-latitude and low-latitude points well away from the magnetic poles (|lat| <= 65).
POINTS = np.array([
    (47.0, 8.0), (51.5, -0.1), (40.0, -105.3), (-33.9, 151.2), (35.7, 139.7),
    (-23.5, -46.6), (1.35, 103.8), (60.2, 24.9), (-41.3, 174.8), (19.4, -99.1),
    (-34.6, -58.4), (28.6, 77.2), (64.1, -21.9),
])

# Tolerance against IGRF-14: 0.25 deg.  WMM and IGRF are fitted to the same satellite and
# observatory data, and their declinations agree to about 0.1 deg at such points (IGRF-14
# revised 2015-2020 with definitive data, where WMM2015 was a forecast).  0.25 deg is
# about the constant term of the WMM declination uncertainty (0.26 deg, WMM2025 report,
# error model) and still catches a model one epoch off: in Europe D drifts by about
# 0.2 deg/year, so a five-year-old model is about 1 deg off.
IGRF_TOLERANCE_DEG = 0.25


def _igrf_declination_deg(lat, lon, height_km, date):
    """Independent reference: IGRF-14 via ppigrf, D = atan2(B_east, B_north)."""
    import ppigrf  # in the test extra; a missing package must fail, not skip
    b_east, b_north, _ = ppigrf.igrf(lon, lat, height_km, dt.datetime(date.year, date.month, date.day))
    return np.degrees(np.arctan2(b_east, b_north))[0]


@pytest.mark.parametrize("date", [dt.date(2012, 5, 1), dt.date(2017, 3, 1), dt.date(2022, 9, 1),
                                  dt.date(2025, 1, 1), dt.date(2026, 12, 2), dt.date(2029, 6, 30)])
def test_declination_matches_igrf14(date):
    lat, lon = POINTS[:, 0], POINTS[:, 1]
    wmm = magnetic.declination_deg(lat, lon, date)
    igrf = _igrf_declination_deg(lat, lon, 0.0, date)
    assert wmm.shape == lat.shape
    np.testing.assert_allclose(wmm, igrf, atol=IGRF_TOLERANCE_DEG)


def test_declination_with_height_matches_igrf14():
    date = dt.date(2027, 4, 15)
    height_m = np.array([0.0, 1500.0, 3000.0])
    wmm = magnetic.declination_deg(46.5, 7.9, date, height_m)
    np.testing.assert_allclose(wmm, _igrf_declination_deg(46.5, 7.9, height_m / 1000.0, date),
                               atol=IGRF_TOLERANCE_DEG)


def test_wmm2025_report_test_value():
    # WMM2025 Technical Report, test values table: 2025.0, height 0 km, 80 N, 0 E:
    # D = 1.28 deg (as quoted in the docs.rs "magnetics" crate example, which cites the
    # report's test values table; 2 decimals as published).
    assert magnetic.declination_deg(80.0, 0.0, dt.date(2025, 1, 1)) == pytest.approx(1.28, abs=0.005)


def test_published_vendor_examples():
    # MathWorks Aerospace Toolbox documentation, wrldmagm examples (an independent WMM
    # implementation): 1000 m over Natick, Massachusetts (42.283 N, 71.35 W).
    # 4 July 2028 with WMM-2025: DEC = -13.6891 deg.
    assert magnetic.declination_deg(42.283, -71.35, dt.date(2028, 7, 4), 1000.0) == pytest.approx(-13.6891, abs=0.001)
    # 4 July 2020 with WMM2020.COF: D = -14.2536 deg.
    assert magnetic.declination_deg(42.283, -71.35, dt.date(2020, 7, 4), 1000.0) == pytest.approx(-14.2536, abs=0.001)


def test_longitude_0_360_equivalent():
    date = dt.date(2026, 6, 1)
    assert magnetic.declination_deg(-80.0, 240.0, date) == pytest.approx(magnetic.declination_deg(-80.0, -120.0, date))


def test_model_info_names_model_and_validity():
    info = magnetic.model_info(dt.date(2026, 12, 2))
    # WMM2025: epoch 2025.0, life span 2025.0-2030.0 (WMM2025 report; NOAA NCEI product page).
    assert info["model"] == "WMM2025"
    assert info["epoch"] == 2025.0
    assert (info["valid_from"], info["valid_to"]) == ("2025-01-01", "2029-12-31")
    assert info["package"].startswith("pygeomag ")
    # The date picks the model: WMM2020 (epoch 2020.0) covers 2020.0-2025.0 (WMM2020 report).
    older = magnetic.model_info(dt.date(2024, 12, 31))
    assert (older["model"], older["epoch"], older["valid_to"]) == ("WMM2020", 2020.0, "2024-12-31")


@pytest.mark.parametrize("date", [dt.date(2009, 12, 31), dt.date(2030, 1, 1), dt.date(2100, 6, 1)])
def test_date_outside_models_is_a_one_line_error(date):
    with pytest.raises(ProfilerError, match=date.isoformat()):
        magnetic.declination_deg(47.0, 8.0, date)
    with pytest.raises(ProfilerError, match="life span"):
        magnetic.model_info(date)


def test_bad_coordinates_are_profiler_errors():
    with pytest.raises(ProfilerError, match="latitude"):
        magnetic.declination_deg(91.0, 0.0, dt.date(2026, 1, 1))
    with pytest.raises(ProfilerError, match="finite"):
        magnetic.declination_deg(45.0, np.nan, dt.date(2026, 1, 1))
    with pytest.raises(ProfilerError, match="calendar date"):
        magnetic.decimal_year("2026-01-01")


def test_decimal_year_hand_values():
    # Hand computation: year + (day of year - 1) / days in year.
    assert magnetic.decimal_year(dt.date(2025, 1, 1)) == 2025.0
    assert magnetic.decimal_year(dt.date(2020, 7, 2)) == pytest.approx(2020 + 183 / 366)  # leap year: 2020.5
    assert magnetic.decimal_year(dt.date(2026, 12, 31)) == pytest.approx(2026 + 364 / 365)
    assert magnetic.decimal_year(dt.datetime(2027, 7, 2, 18, 0)) == pytest.approx(2027 + 182 / 365)


def test_magnetic_azimuth_hand_values():
    # Az_mag = Az_true - D (D east positive), wrapped to [0, 360): hand computation.
    np.testing.assert_allclose(magnetic.magnetic_azimuth_deg([10.0, 359.5, 90.0, 0.0], [12.0, -1.0, -13.69, 1e-17]),
                               [358.0, 0.5, 103.69, 0.0])
    assert magnetic.magnetic_azimuth_deg(45.0, 3.46) == pytest.approx(41.54)
    assert 0.0 <= magnetic.magnetic_azimuth_deg(0.0, 1e-17) < 360.0


def test_compass_caution_near_magnetic_pole():
    # The WMM2025 report's Blackout Zone: horizontal intensity below 2000 nT.  Near the
    # north dip pole (about 86 N, 140-150 E in 2025, WMM2025 report pole positions,
    # from memory) H is a few hundred nT; at 47 N 8 E it is about 21 000 nT (from memory).
    near_pole, mid_latitude = magnetic.compass_caution([86.0, 47.0], [150.0, 8.0], dt.date(2026, 6, 1))
    assert "Blackout Zone" in near_pole
    assert mid_latitude == ""
    assert magnetic.compass_caution(47.0, 8.0, dt.date(2026, 6, 1)) == ""


def test_bearing_block_uses_each_sites_declination():
    # A link across a large span (47 N 8 E to 60.2 N 24.9 E) so the two declinations differ;
    # the reference declinations are IGRF-14 (ppigrf), magnetic = true - D (hand formula).
    date = dt.date(2026, 12, 2)
    block = magnetic.bearing_block(47.0, 8.0, 60.2, 24.9, 30.0, 225.0, date, 400.0, 20.0)
    igrf_a = _igrf_declination_deg(47.0, 8.0, 0.4, date)
    igrf_b = _igrf_declination_deg(60.2, 24.9, 0.02, date)
    assert block["declination_a_deg"] == pytest.approx(igrf_a, abs=IGRF_TOLERANCE_DEG)
    assert block["declination_b_deg"] == pytest.approx(igrf_b, abs=IGRF_TOLERANCE_DEG)
    assert block["azimuth_a_to_b_magnetic_deg"] == pytest.approx(30.0 - igrf_a, abs=IGRF_TOLERANCE_DEG)
    assert block["azimuth_b_to_a_magnetic_deg"] == pytest.approx(225.0 - igrf_b, abs=IGRF_TOLERANCE_DEG)
    assert block["magnetic_model"]["model"] == "WMM2025"
    assert (block["compass_caution_a"], block["compass_caution_b"]) == ("", "")
    assert abs(block["declination_a_deg"] - block["declination_b_deg"]) > 1.0  # the two ends are distinct
