"""Tests for profiler.lora.budget against published formulas and handbook values."""

import inspect
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import constants

from profiler.errors import ProfilerError
from profiler.lora import modem as lora_modem
from profiler.lora.budget import LinkBudget, link_budget
from profiler.lora.modem import (
    lora_sensitivity_dbm,
    lora_symbol_time_ms,
    lora_table,
    lora_time_on_air_ms,
    lowest_closing_sf,
    uplinks_per_hour,
)
from profiler.propagation.free_space import free_space_loss_db, near_field_distance_m
from profiler.propagation.polarization import polarization_angle_deg, polarization_mismatch_db

# ---------------------------------------------------------------------------
# free-space loss
# ---------------------------------------------------------------------------

@pytest.mark.parametrize(
    "frequency_mhz, distance_km",
    [(50.0, 1.0), (433.0, 2.5), (868.0, 10.0), (915.0, 0.3), (2400.0, 40.0),
     (10_000.0, 123.0)],
)
def test_free_space_loss_matches_p525_practical_units(frequency_mhz, distance_km):
    # ITU-R P.525-4, Annex 1 eq. (6): L_bf = 32.4 + 20 log f(MHz) + 20 log d(km).
    # P.525 rounds the constant; the exact one is 20 log10(4 pi 1e9 / c) = 32.448,
    # so agreement is 0.048 dB, not 0.01 dB.
    expected_db = 32.4 + 20 * math.log10(frequency_mhz) + 20 * math.log10(distance_km)
    got_db = free_space_loss_db(distance_km * 1000.0, frequency_mhz)
    assert got_db == pytest.approx(expected_db, abs=0.05)
    # Same formula with the unrounded constant (derived with scipy.constants.c,
    # an outside reference): agreement within 0.01 dB.
    constant_db = 20 * math.log10(4 * math.pi * 1e9 / constants.c)
    assert constant_db == pytest.approx(32.45, abs=0.005)  # handbook 32.45 (from memory)
    exact_db = constant_db + 20 * math.log10(frequency_mhz) + 20 * math.log10(distance_km)
    assert got_db == pytest.approx(exact_db, abs=0.01)


def test_free_space_loss_handbook_values():
    # Handbook: 92.45 dB at 1 GHz over 1 km
    # (L = 92.45 + 20 log f(GHz) + 20 log d(km); from memory).
    assert free_space_loss_db(1000.0, 1000.0) == pytest.approx(92.45, abs=0.01)
    # Handbook: 2.4 GHz over 1 km is about 100.0 dB (from memory).
    assert free_space_loss_db(1000.0, 2400.0) == pytest.approx(100.05, abs=0.02)
    # Inverse-square law: doubling distance adds 20 log10(2) = 6.02 dB (handbook).
    d = free_space_loss_db(2000.0, 868.0) - free_space_loss_db(1000.0, 868.0)
    assert d == pytest.approx(6.0206, abs=1e-4)


def test_free_space_loss_broadcasts():
    out = free_space_loss_db(np.array([[1e3], [1e4]]), np.array([433.0, 868.0, 915.0]))
    assert out.shape == (2, 3)
    # a decade of distance is 20 dB (P.525-4 eq. (6))
    assert np.allclose(out[1] - out[0], 20.0)


@pytest.mark.parametrize("distance_m, frequency_mhz",
                         [(0.0, 868.0), (-5.0, 868.0), (1e3, 0.0), (np.nan, 868.0),
                          ("far", 868.0), (1e3, None)])
def test_free_space_loss_rejects_bad_input(distance_m, frequency_mhz):
    with pytest.raises(ProfilerError):
        free_space_loss_db(distance_m, frequency_mhz)


# ---------------------------------------------------------------------------
# LoRa sensitivity
# ---------------------------------------------------------------------------

def test_thermal_noise_density_is_kT_at_290K():
    # kT0 with T0 = 290 K (ITU-R P.372 reference temperature), Boltzmann constant
    # from scipy.constants (outside reference), in dBm/Hz.
    kt_dbm_per_hz = 10 * math.log10(constants.k * 290.0 * 1000.0)
    assert kt_dbm_per_hz == pytest.approx(-173.98, abs=0.005)
    # the module rounds it to -174 dBm/Hz: within 0.03 dB of kT0
    assert lora_modem.THERMAL_NOISE_DBM_PER_HZ == pytest.approx(kt_dbm_per_hz, abs=0.03)
    # and the sensitivity formula uses it: with exact kT0 the result differs by < 0.03 dB
    exact = kt_dbm_per_hz + 10 * math.log10(125e3) + 6.0 - 20.0
    assert lora_sensitivity_dbm(12, 125, 6.0) == pytest.approx(exact, abs=0.03)


def test_sensitivity_check_value_sf12_125khz():
    # -174 + 10 log10(125000) + 6 - 20 = -174 + 50.97 + 6 - 20 = -137.03 dBm
    # (SNR_min(SF12) = -20 dB, common practice for LoRa modems)
    assert lora_sensitivity_dbm(12, 125, 6.0) == pytest.approx(-137.03, abs=0.005)


def test_sensitivity_snr_table_and_bandwidth():
    # SNR_min = -7.5, -10, -12.5, -15, -17.5, -20 dB for SF7..SF12 (common practice)
    s = lora_sensitivity_dbm(np.arange(7, 13), 125, 6.0)
    assert np.allclose(s - s[0], [0.0, -2.5, -5.0, -7.5, -10.0, -12.5])
    # SF7/125 kHz/NF 6: -174 + 50.97 + 6 - 7.5 = -124.53 dBm (hand evaluation)
    assert s[0] == pytest.approx(-124.53, abs=0.005)
    # doubling bandwidth doubles noise power: +10 log10(2) = 3.01 dB (handbook)
    assert lora_sensitivity_dbm(9, 250, 3.0) - lora_sensitivity_dbm(9, 125, 3.0) == \
        pytest.approx(3.0103, abs=1e-4)
    assert lora_sensitivity_dbm(9, 500, 3.0) - lora_sensitivity_dbm(9, 125, 3.0) == \
        pytest.approx(6.0206, abs=1e-4)
    # noise figure adds dB for dB
    assert lora_sensitivity_dbm(9, 125, 8.0) - lora_sensitivity_dbm(9, 125, 3.0) == \
        pytest.approx(5.0)


@pytest.mark.parametrize(
    "sf, bw_khz, nf, message",
    [
        (13, 125, 6, "spreading factor 13 is out of range; use 7 to 12"),
        (6, 125, 6, "spreading factor 6 is out of range; use 7 to 12"),
        (7.5, 125, 6, "spreading factor 7.5 is not a whole number; use 7 to 12"),
        ("seven", 125, 6, "spreading factor 'seven' is not a number; use 7 to 12"),
        (7, 200, 6, "bandwidth 200 kHz is not supported; use 125, 250 or 500 kHz"),
        (7, 125, -1, "noise figure -1 dB is negative; use 0 dB or more"),
    ],
)
def test_sensitivity_rejects_bad_input(sf, bw_khz, nf, message):
    with pytest.raises(ProfilerError) as err:
        lora_sensitivity_dbm(sf, bw_khz, nf)
    assert str(err.value) == message
    assert "\n" not in str(err.value)


# ---------------------------------------------------------------------------
# LoRa time on air
# ---------------------------------------------------------------------------

def test_time_on_air_published_check_values():
    # 12-byte payload, 125 kHz, CR 4/5, 8-symbol preamble, explicit header, CRC on.
    # Widely published LoRa airtime figures (from memory): SF7 41.216 ms,
    # SF12 1155.072 ms.  Re-derived by hand from the standard formula:
    #   SF7 : T_sym = 128/125 kHz = 1.024 ms; ceil((96-28+28+16)/28) = 4 -> 8+4*5 = 28
    #         (8 + 4.25 + 28) * 1.024 = 41.216 ms
    #   SF12: T_sym = 32.768 ms, LDRO on; ceil((96-48+28+16)/40) = 3 -> 8+3*5 = 23
    #         (8 + 4.25 + 23) * 32.768 = 1155.072 ms
    assert lora_time_on_air_ms(7, 125, 12) == pytest.approx(41.216, abs=1e-9)
    assert lora_time_on_air_ms(12, 125, 12) == pytest.approx(1155.072, abs=1e-9)


def test_time_on_air_header_crc_coding_rate_terms():
    # Hand evaluation of the standard formula for SF9, 250 kHz, 20 bytes, implicit
    # header (IH=1), CRC off, CR 4/8, 8-symbol preamble:
    #   T_sym = 512/250 = 2.048 ms; ceil((160-36+28+0-20)/36) = 4 -> 8 + 4*8 = 40
    #   (8 + 4.25 + 40) * 2.048 = 107.008 ms
    got = lora_time_on_air_ms(9, 250, 20, coding_rate=4, explicit_header=False, crc=False)
    assert got == pytest.approx(107.008, abs=1e-9)
    # Preamble: each extra symbol costs one T_sym (standard formula)
    assert lora_time_on_air_ms(9, 250, 20, preamble_symbols=12) - \
        lora_time_on_air_ms(9, 250, 20) == pytest.approx(4 * 2.048)


def test_low_data_rate_optimize_auto():
    # symbol time 2^SF / BW: 8.19, 16.38, 32.77 ms at 125 kHz (arithmetic)
    assert lora_symbol_time_ms(10, 125) == pytest.approx(8.192)
    assert lora_symbol_time_ms(11, 125) == pytest.approx(16.384)
    assert lora_symbol_time_ms(12, 125) == pytest.approx(32.768)
    # LDRO on above 16 ms (common practice): SF11, SF12 on, SF10 off.  Payloads
    # chosen so that DE changes the symbol count (hand evaluation).
    for sf, payload, ldro in [(10, 12, False), (11, 20, True), (12, 12, True)]:
        auto = lora_time_on_air_ms(sf, 125, payload)
        assert auto == lora_time_on_air_ms(sf, 125, payload, low_data_rate_optimize=ldro)
        assert auto != lora_time_on_air_ms(sf, 125, payload,
                                           low_data_rate_optimize=not ldro)
    # SF12 at 500 kHz: 8.19 ms symbols, LDRO stays off
    assert lora_time_on_air_ms(12, 500, 12) == \
        lora_time_on_air_ms(12, 500, 12, low_data_rate_optimize=False)


def test_time_on_air_vectorized_over_sf():
    got = lora_time_on_air_ms(np.arange(7, 13), 125, 12)
    assert got.shape == (6,)
    assert got[0] == pytest.approx(41.216) and got[-1] == pytest.approx(1155.072)


@pytest.mark.parametrize(
    "kwargs, message",
    [
        (dict(payload_bytes=0), "payload 0 is out of range; use 1 to 255 bytes"),
        (dict(payload_bytes=256), "payload 256 is out of range; use 1 to 255 bytes"),
        (dict(payload_bytes=1.5), "payload 1.5 is not a whole number; use 1 to 255 bytes"),
        (dict(payload_bytes=12, coding_rate=5),
         "coding rate 5 is out of range; use 1 to 4 (meaning 4/5 to 4/8)"),
        (dict(payload_bytes=12, preamble_symbols=2),
         "preamble length 2 is out of range; use 6 to 65535 symbols"),
        (dict(payload_bytes=12, crc="yes"), "crc must be true or false, not 'yes'"),
    ],
)
def test_time_on_air_rejects_bad_input(kwargs, message):
    with pytest.raises(ProfilerError) as err:
        lora_time_on_air_ms(7, 125, **kwargs)
    assert str(err.value) == message


@settings(max_examples=200, deadline=None)
@given(
    bw_khz=st.sampled_from([125, 250, 500]),
    payload=st.integers(1, 254),
    cr=st.integers(1, 4),
    explicit=st.booleans(),
    crc=st.booleans(),
)
def test_time_on_air_non_decreasing_in_sf_and_payload(bw_khz, payload, cr, explicit, crc):
    kw = dict(coding_rate=cr, explicit_header=explicit, crc=crc)
    by_sf = lora_time_on_air_ms(np.arange(7, 13), bw_khz, payload, **kw)
    assert np.all(np.diff(by_sf) >= 0)
    longer = lora_time_on_air_ms(np.arange(7, 13), bw_khz, payload + 1, **kw)
    assert np.all(longer >= by_sf)


# ---------------------------------------------------------------------------
# duty cycle
# ---------------------------------------------------------------------------

def test_uplinks_per_hour_check_values():
    # 1 % of 3600 s = 36 s on air per hour (common practice duty cycle)
    # SF12, 12 bytes: floor(36000 / 1155.072) = 31
    assert uplinks_per_hour(lora_time_on_air_ms(12, 125, 12)) == 31
    # SF7, 12 bytes: floor(36000 / 41.216) = 873
    assert uplinks_per_hour(41.216) == 873
    # exact division must not lose one to rounding: 36 s / 36 ms = 1000
    assert uplinks_per_hour(36.0) == 1000
    assert uplinks_per_hour(360.0, duty_cycle=0.1) == 1000
    assert isinstance(uplinks_per_hour(36.0), int)
    assert list(uplinks_per_hour([36.0, 1155.072])) == [1000, 31]


@pytest.mark.parametrize("toa, duty", [(0.0, 0.01), (-1.0, 0.01), (10.0, 0.0),
                                       (10.0, 1.5)])
def test_uplinks_per_hour_rejects_bad_input(toa, duty):
    with pytest.raises(ProfilerError):
        uplinks_per_hour(toa, duty)


# ---------------------------------------------------------------------------
# polarization
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("text, angle", [("vertical", 0.0), (" Horizontal ", 90.0),
                                         ("45", 45.0), ("-30", -30.0), (15, 15.0)])
def test_polarization_angle_parsing(text, angle):
    assert polarization_angle_deg(text) == angle


@pytest.mark.parametrize("text", ["diagonal", "", "nan", "400", None, True])
def test_polarization_angle_rejects_bad_text(text):
    with pytest.raises(ProfilerError):
        polarization_angle_deg(text)


def test_polarization_mismatch_values():
    # PLF = cos^2(psi) (Balanis, Antenna Theory, from memory):
    # 45 deg -> 20 log10(sqrt 2) = 3.01 dB (handbook); 60 deg -> 20 log10(2) = 6.02 dB
    assert polarization_mismatch_db(0.0, 45.0) == pytest.approx(3.0103, abs=1e-4)
    assert polarization_mismatch_db(0.0, 60.0) == pytest.approx(6.0206, abs=1e-4)
    assert polarization_mismatch_db(0.0, 0.0) == 0.0
    # crossed antennas are capped at 25 dB (common practice)
    assert polarization_mismatch_db(0.0, 90.0) == 25.0
    v = polarization_angle_deg("vertical")
    h = polarization_angle_deg("horizontal")
    assert polarization_mismatch_db(v, h) == 25.0
    assert polarization_mismatch_db(-30.0, 60.0) == 25.0
    assert polarization_mismatch_db(0.0, 90.0, cap_db=30.0) == 30.0
    # the sign of the tilt and a half-turn do not matter
    assert polarization_mismatch_db(10.0, -35.0) == pytest.approx(3.0103, abs=1e-4)
    assert polarization_mismatch_db(0.0, 180.0) == pytest.approx(0.0, abs=1e-9)


# ---------------------------------------------------------------------------
# near field
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("frequency_mhz, expected_m",
                         [(868.0, 1.4), (915.0, 1.3), (497.0, 2.4)])
def test_near_field_distance(frequency_mhz, expected_m):
    # four wavelengths clear of the antenna (common practice):
    # ~1.4 m at 868 MHz, ~1.3 m at 915 MHz, ~2.4 m near 497 MHz
    assert near_field_distance_m(frequency_mhz) == pytest.approx(expected_m, abs=0.05)
    # lambda = c / f with c from scipy.constants
    assert near_field_distance_m(frequency_mhz, wavelengths=1) == \
        pytest.approx(constants.c / (frequency_mhz * 1e6), rel=1e-12)


# ---------------------------------------------------------------------------
# link budget
# ---------------------------------------------------------------------------

def test_default_gain_is_half_wave_dipole():
    # half-wave dipole gain 1.64 = 2.15 dBi (Balanis, Antenna Theory, handbook)
    dipole_dbi = 10 * math.log10(1.64)
    params = inspect.signature(link_budget).parameters
    assert params["gain_a_dbi"].default == pytest.approx(dipole_dbi, abs=0.005)
    assert params["gain_b_dbi"].default == pytest.approx(dipole_dbi, abs=0.005)


def test_link_budget_hand_values():
    # Hand evaluation: 14 dBm + 2.15 dBi - 1 dB cable = 15.15 dBm EIRP;
    # 15.15 - 140 + 2.15 - 0.5 = -123.2 dBm; margin vs -137.03 = 13.83 dB.
    lb = link_budget(140.0, tx_power_dbm=14.0, cable_loss_a_db=1.0, cable_loss_b_db=0.5,
                     sensitivity_dbm=-137.03, fade_margin_db=10.0)
    assert isinstance(lb, LinkBudget)
    assert lb.tx_power_dbm == 14.0
    assert lb.eirp_dbm == pytest.approx(15.15)
    assert lb.rx_power_dbm == pytest.approx(-123.2)
    assert lb.sensitivity_dbm == -137.03
    assert lb.margin_db == pytest.approx(13.83)
    assert lb.fade_margin_required_db == 10.0
    assert lb.closes is True
    with pytest.raises(Exception):
        lb.margin_db = 0.0   # frozen


def test_link_budget_default_sensitivity_and_closing_edge():
    # default sensitivity: SF12 / 125 kHz / NF 6 dB = -137.03 dBm (see above)
    assert link_budget(100.0).sensitivity_dbm == pytest.approx(-137.03, abs=0.005)
    # margin exactly equal to the required fade margin closes
    lb = link_budget(120.0, tx_power_dbm=10.0, gain_a_dbi=0.0, gain_b_dbi=0.0,
                     sensitivity_dbm=-120.0, fade_margin_db=10.0)
    assert lb.margin_db == 10.0 and lb.closes is True
    lb = link_budget(120.5, tx_power_dbm=10.0, gain_a_dbi=0.0, gain_b_dbi=0.0,
                     sensitivity_dbm=-120.0, fade_margin_db=10.0)
    assert lb.closes is False


def test_link_budget_vectorized():
    lb = link_budget(np.array([130.0, 150.0]), sensitivity_dbm=-137.0)
    assert lb.margin_db.shape == (2,)
    assert list(lb.closes) == [True, False]


@pytest.mark.parametrize("kwargs", [dict(total_loss_db=-1.0),
                                    dict(total_loss_db=100.0, cable_loss_a_db=-0.5),
                                    dict(total_loss_db=100.0, fade_margin_db=-3.0),
                                    dict(total_loss_db="lots")])
def test_link_budget_rejects_bad_input(kwargs):
    with pytest.raises(ProfilerError):
        link_budget(**kwargs)


@settings(max_examples=200, deadline=None)
@given(
    loss=st.floats(0.0, 250.0),
    extra=st.floats(0.0, 60.0),
    tx=st.floats(-10.0, 30.0),
    gain=st.floats(-5.0, 20.0),
)
def test_margin_drops_one_db_per_db_of_loss(loss, extra, tx, gain):
    a = link_budget(loss, tx_power_dbm=tx, gain_a_dbi=gain, gain_b_dbi=gain)
    b = link_budget(loss + extra, tx_power_dbm=tx, gain_a_dbi=gain, gain_b_dbi=gain)
    assert a.margin_db - b.margin_db == pytest.approx(extra, abs=1e-9)
    assert a.eirp_dbm == b.eirp_dbm
    # closing is monotone: more loss never makes a failing link close
    assert not (b.closes and not a.closes)


# ---------------------------------------------------------------------------
# SF table
# ---------------------------------------------------------------------------

def test_lora_table_rows_and_keys():
    table = lora_table(-120.0, 125, 6.0, 12, 10.0)
    assert [row["sf"] for row in table] == [7, 8, 9, 10, 11, 12]
    for row in table:
        assert set(row) == {"sf", "sensitivity_dbm", "margin_db", "closes",
                            "time_on_air_ms", "uplinks_per_hour_1pct"}
    sf12 = table[-1]
    # values checked above: -137.03 dBm, 1155.072 ms, 31 per hour
    assert sf12["sensitivity_dbm"] == pytest.approx(-137.03, abs=0.005)
    assert sf12["margin_db"] == pytest.approx(17.03, abs=0.005)
    assert sf12["time_on_air_ms"] == pytest.approx(1155.072)
    assert sf12["uplinks_per_hour_1pct"] == 31
    assert table[0]["time_on_air_ms"] == pytest.approx(41.216)
    # margins: -120 - (-124.53 - 2.5 k) -> SF7..SF12 = 4.53 .. 17.03 dB; need 10 dB
    assert [row["closes"] for row in table] == [False, False, False, True, True, True]
    assert lowest_closing_sf(table) == 10
    assert isinstance(table[0]["closes"], bool)
    assert isinstance(table[0]["uplinks_per_hour_1pct"], int)


def test_lowest_closing_sf_none_when_nothing_closes():
    table = lora_table(-140.0, 125, 6.0, 12, 10.0)
    assert not any(row["closes"] for row in table)
    assert lowest_closing_sf(table) is None
    assert lowest_closing_sf(lora_table(-60.0, 500, 6.0, 12, 10.0)) == 7


def test_lora_table_rejects_bad_input():
    with pytest.raises(ProfilerError, match="payload 300 is out of range"):
        lora_table(-120.0, 125, 6.0, 300, 10.0)
    with pytest.raises(ProfilerError, match="bandwidth 100 kHz"):
        lora_table(-120.0, 100, 6.0, 12, 10.0)
    with pytest.raises(ProfilerError):
        lora_table(-120.0, 125, 6.0, 12, -1.0)


@pytest.mark.parametrize("band", ["EU868", "US915", "AS923", "IN865"])
@pytest.mark.parametrize("direction", ["uplink", "downlink"])
@pytest.mark.parametrize("fade_db", [0.0, 7.3])
def test_dr_best_equals_the_per_dr_tables(band, direction, fade_db):
    """The batch shortcut (no per-DR tables) gives the recommended DR and the largest allowed margin of the tables
    bit for bit, also at powers exactly on and one float below each DR's threshold (the reference is the per-DR
    table of dr_margins: sensitivity -174 + 10 log10(BW) + NF + SNR_min, ITU-R P.372 kT0)."""
    from profiler.lora import lorawan
    from profiler.lora.regional import plan

    rules = lorawan.dr_rules(plan(band), direction, 24, 11, None, 868.1 if band == "EU868" else 915.0)
    sens = lora_modem.lora_sensitivity_batch_dbm(rules["sf"], rules["bw_khz"], 6.0)
    edge = sens + fade_db
    power = np.concatenate([np.random.default_rng(7).uniform(-150.0, -100.0, 5000), [np.nan, np.inf, -np.inf],
                            edge, np.nextafter(edge, -np.inf), np.nextafter(edge, np.inf)])
    _, margin, _, rec = lorawan.dr_margins(power, rules, np.full(power.size, 6.0), fade_db)
    best = np.max(np.where(rules["allowed"], margin, -np.inf), axis=1)
    rec2, best2 = lorawan.dr_best(power, rules, 6.0, fade_db)
    assert np.array_equal(rec2, rec) and (rec >= 0).any() and (rec < 0).any()
    assert np.array_equal(best2, best, equal_nan=True)
    nf = np.where(np.arange(power.size) % 2 == 0, 6.0, 3.0)   # several noise figures: the tables themselves
    _, margin, _, rec = lorawan.dr_margins(power, rules, nf, fade_db)
    rec2, best2 = lorawan.dr_best(power, rules, nf, fade_db)
    assert np.array_equal(rec2, rec)
    assert np.array_equal(best2, np.max(np.where(rules["allowed"], margin, -np.inf), axis=1), equal_nan=True)
