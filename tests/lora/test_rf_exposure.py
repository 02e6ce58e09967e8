"""RF-exposure reference levels against the published tables, distances against hand computation."""

import json
import math

import numpy as np
import pytest

from profiler.errors import ProfilerError
from profiler.lora import rf_exposure

GP, OCC = "general_public", "occupational"

# ICNIRP (2020) Guidelines, Health Phys. 118(5):483-524, Table 5 (whole-body average,
# 30 min), S_inc [W/m^2], f in MHz.
ICNIRP_TABLE5 = [
    # (f, general public, occupational, row)
    (50.0, 2.0, 10.0, ">30-400 MHz: 2 / 10 W/m^2"),
    (400.0, 2.0, 10.0, ">30-400 MHz (upper edge)"),
    (433.92, 433.92 / 200, 433.92 / 40, ">400-2000 MHz: f/200 / f/40"),
    (868.0, 4.34, 21.7, ">400-2000 MHz: f/200 / f/40"),
    (915.0, 4.575, 22.875, ">400-2000 MHz: f/200 / f/40"),
    (2000.0, 10.0, 50.0, ">400-2000 MHz (upper edge)"),
    (2450.0, 10.0, 50.0, ">2-300 GHz: 10 / 50 W/m^2"),
    (5800.0, 10.0, 50.0, ">2-300 GHz: 10 / 50 W/m^2"),
    (300_000.0, 10.0, 50.0, ">2-300 GHz (upper edge)"),
]

# 47 CFR 1.1310 Table 1, power density [mW/cm^2], f in MHz; (B) general population /
# uncontrolled, (A) occupational / controlled; * = plane-wave equivalent.
FCC_TABLE1 = [
    (1.0, 100.0, 100.0, "0.3-1.34 (B) 100*, 0.3-3.0 (A) 100*"),
    (2.0, 180.0 / 4.0, 100.0, "1.34-30 (B) 180/f^2*, 0.3-3.0 (A) 100*"),
    (10.0, 1.8, 9.0, "1.34-30 (B) 180/f^2*, 3.0-30 (A) 900/f^2*"),
    (144.0, 0.2, 1.0, "30-300: 0.2 / 1.0"),
    (433.92, 433.92 / 1500, 433.92 / 300, "300-1500: f/1500 / f/300"),
    (868.0, 868.0 / 1500, 868.0 / 300, "300-1500: f/1500 / f/300"),
    (915.0, 0.61, 3.05, "300-1500: f/1500 / f/300"),
    (2450.0, 1.0, 5.0, "1500-100000: 1.0 / 5"),
    (100_000.0, 1.0, 5.0, "1500-100000 (upper edge)"),
]


@pytest.mark.parametrize("f_mhz,s_gp,s_occ,row", ICNIRP_TABLE5)
def test_icnirp2020_table5(f_mhz, s_gp, s_occ, row):
    assert rf_exposure.reference_level_w_m2(f_mhz, "icnirp2020", GP) == pytest.approx(s_gp, rel=1e-12), row
    assert rf_exposure.reference_level_w_m2(f_mhz, "icnirp2020", OCC) == pytest.approx(s_occ, rel=1e-12), row


def test_icnirp2020_below_30_mhz_is_plane_wave_equivalent_of_e_field():
    # ICNIRP (2020) Table 5, 0.1-30 MHz: E_inc = 300 / f^0.7 V/m (general public),
    # 660 / f^0.7 V/m (occupational); plane-wave S = E^2 / Z0, Z0 = 376.730 ohm (CODATA).
    for f in (0.1, 1.0, 10.0, 27.0):
        assert (rf_exposure.reference_level_w_m2(f, "icnirp2020", GP)
                == pytest.approx((300 / f ** 0.7) ** 2 / 376.730, rel=1e-5))
        assert (rf_exposure.reference_level_w_m2(f, "icnirp2020", OCC)
                == pytest.approx((660 / f ** 0.7) ** 2 / 376.730, rel=1e-5))
    # Continuity with the >30 MHz rows (2 and 10 W/m^2) within 3 %: a check on the exponent.
    assert rf_exposure.reference_level_w_m2(30.0, "icnirp2020", GP) == pytest.approx(2.0, rel=0.03)
    assert rf_exposure.reference_level_w_m2(30.0, "icnirp2020", OCC) == pytest.approx(10.0, rel=0.03)


@pytest.mark.parametrize("f_mhz,mw_gp,mw_occ,row", FCC_TABLE1)
def test_fcc_1310_table1_with_unit_conversion(f_mhz, mw_gp, mw_occ, row):
    # 1 mW/cm^2 = 1e-3 W / 1e-4 m^2 = 10 W/m^2 (SI prefixes).
    assert rf_exposure.reference_level_w_m2(f_mhz, "fcc", GP) == pytest.approx(10.0 * mw_gp, rel=1e-12), row
    assert rf_exposure.reference_level_w_m2(f_mhz, "fcc", OCC) == pytest.approx(10.0 * mw_occ, rel=1e-12), row


def test_reference_levels_are_vectorized():
    f = np.array([144.0, 868.0, 2450.0])
    np.testing.assert_allclose(rf_exposure.reference_level_w_m2(f, "fcc", GP), [2.0, 5.786667, 10.0], rtol=1e-6)
    np.testing.assert_allclose(rf_exposure.reference_level_w_m2(f, "icnirp2020", OCC), [10.0, 21.7, 50.0])


def test_distance_hand_computation_16_dbm_868_mhz():
    # Hand computation: 16 dBm = 10^(-1.4) W = 0.0398107 W.
    # ICNIRP GP at 868 MHz: S = 868/200 = 4.34 W/m^2; r = sqrt(0.0398107 / (4 pi 4.34)) = 0.027018 m.
    # FCC GP: S = 868/1500 mW/cm^2 = 5.78667 W/m^2; r = sqrt(0.0398107 / (4 pi 5.78667)) = 0.023398 m.
    assert rf_exposure.eirp_w(16.0) == pytest.approx(0.0398107, rel=1e-6)
    assert rf_exposure.exposure_distance_m(16.0, 868.0, "icnirp2020", GP) == pytest.approx(0.027018, rel=1e-4)
    assert rf_exposure.exposure_distance_m(16.0, 868.0, "fcc", GP) == pytest.approx(0.023398, rel=1e-4)


def test_distance_hand_computation_36_dbm_915_mhz():
    # 36 dBm EIRP (US915 limit with a 6 dBi antenna, common practice) = 3.98107 W.
    # FCC occupational: S = 915/300 mW/cm^2 = 30.5 W/m^2; r = sqrt(3.98107/(4 pi 30.5)) = 0.10192 m.
    # ICNIRP GP: S = 4.575 W/m^2; r = sqrt(3.98107/(4 pi 4.575)) = 0.26315 m.
    assert rf_exposure.exposure_distance_m(36.0, 915.0, "fcc", OCC) == pytest.approx(0.10192, rel=1e-4)
    assert rf_exposure.exposure_distance_m(36.0, 915.0, "icnirp2020", GP) == pytest.approx(0.26315, rel=1e-4)


def test_distance_scales_with_square_root_of_power():
    # r ~ sqrt(EIRP): +20 dB (x100 in power) gives x10 in distance (from the formula).
    r = rf_exposure.exposure_distance_m(np.array([10.0, 30.0, 50.0]), 2450.0, "fcc", GP)
    np.testing.assert_allclose(r[1:] / r[:-1], 10.0)
    # Power density back at that distance equals the reference level (inverse check).
    p_w = 10 ** ((30.0 - 30.0) / 10)
    assert p_w / (4 * math.pi * r[1] ** 2) == pytest.approx(10.0)  # FCC GP > 1500 MHz: 1.0 mW/cm^2 = 10 W/m^2


def test_rf_exposure_block_shape_and_values():
    block = rf_exposure.rf_exposure_block(16.0, 868.0)
    assert set(block) == {"eirp_dbm", "eirp_w", "frequency_mhz", "method", "icnirp2020", "fcc_1_1310",
                          "largest_general_public_m", "note"}
    for key in ("icnirp2020", "fcc_1_1310"):
        assert set(block[key]) == {"general_public_m", "occupational_m", "general_public_w_m2",
                                   "occupational_w_m2", "reference"}
    assert block["method"] == "far-field S = EIRP/(4 pi r^2)"
    assert block["note"] == "far-field estimate; local rules prevail"
    assert block["icnirp2020"]["general_public_w_m2"] == pytest.approx(4.34)
    assert block["fcc_1_1310"]["occupational_w_m2"] == pytest.approx(28.9333, rel=1e-5)  # 868/300 mW/cm^2
    # The larger general-public distance at 868 MHz is ICNIRP's (4.34 < 5.79 W/m^2): hand computation above.
    assert block["largest_general_public_m"] == pytest.approx(0.027018, rel=1e-4)
    json.dumps(block)  # plain JSON types


def test_rf_exposure_block_vectorized():
    block = rf_exposure.rf_exposure_block([16.0, 36.0], 915.0)
    assert block["frequency_mhz"] == [915.0, 915.0]
    assert block["largest_general_public_m"] == pytest.approx([0.026315, 0.26315], rel=1e-4)


@pytest.mark.parametrize("args,match", [
    ((868.0, "who", GP), "rule"),
    ((868.0, "fcc", "visitors"), "exposure"),
    ((0.2, "fcc", GP), "0.3-100000 MHz"),
    ((400_000.0, "icnirp2020", GP), "0.1-300000 MHz"),
    ((np.nan, "icnirp2020", GP), "range"),
])
def test_bad_input_is_profiler_error(args, match):
    with pytest.raises(ProfilerError, match=match):
        rf_exposure.reference_level_w_m2(*args)


def test_bad_eirp_is_profiler_error():
    with pytest.raises(ProfilerError, match="EIRP"):
        rf_exposure.exposure_distance_m(np.inf, 868.0, "fcc", GP)
