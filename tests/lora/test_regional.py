"""Regional LoRaWAN plans, per-DR budgets in both directions, compliance.

Check values come from the LoRa Alliance specification RP002-1.0.4 "LoRaWAN
Regional Parameters" (2022), cited per plan by section and table; they are
written here from the tables of the specification as the authors remember
them ("from memory"), independently of the project's data module.
"""

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner

from profiler.cli import main
from profiler.lora import lorawan, regional
from profiler.lora import modem as lora_modem

SAMPLE = str(Path(__file__).resolve().parents[2] / "dem_samples")
GW = "-29.9125,-19.955"      # Cairnfell Beacon (invented), sample DEM
PUMP = "-29.9,-19.825"       # Osterby Farm pump (invented)
RESERVOIR = "-30.0,-19.845"  # Wendle Reservoir (invented): deep behind the ridge

EU_DR = {0: (12, 125), 1: (11, 125), 2: (10, 125), 3: (9, 125), 4: (8, 125), 5: (7, 125), 6: (7, 250)}
EU_N = {0: 51, 1: 51, 2: 51, 3: 115, 4: 242, 5: 242, 6: 242}

# plan -> (section, uplink DR table, downlink DRs, N per DR, RX2 (MHz, DR), max EIRP dBm), RP002-1.0.4 (from memory)
SPEC = {
    # 2.4.3 Table "EU863-870 TX Data rate table"; 2.4.6 "EU863-870 maximum payload size"; 2.4.7 RX2 869.525 MHz DR0;
    # 2.4.3 default MaxEIRP +16 dBm.
    "EU868": ("2.4", EU_DR, (0, 1, 2, 3, 4, 5, 6), EU_N, (869.525, 0), 16.0),
    # 2.5.3 "US902-928 TX Data rate table": DR0-3 SF10-SF7/125, DR4 SF8/500, DR8-13 SF12-SF7/500;
    # 2.5.6 maximum payload (no repeater) N = 11, 53, 125, 242, 242 and 53, 129, 242, 242, 242, 242;
    # 2.5.7 RX2 923.3 MHz DR8; 2.5.2 +30 dBm conducted, 6 dBi -> 36 dBm EIRP.
    "US915": ("2.5", {0: (10, 125), 1: (9, 125), 2: (8, 125), 3: (7, 125), 4: (8, 500)}, (8, 9, 10, 11, 12, 13),
              {0: 11, 1: 53, 2: 125, 3: 242, 4: 242, 8: 53, 9: 129, 10: 242, 11: 242, 12: 242, 13: 242},
              (923.3, 8), 36.0),
    # 2.8.3 "AU915-928 Data rate table": DR0-5 SF12-SF7/125, DR6 SF8/500, DR8-13 as US915; 2.8.6 payload
    # without dwell time 51, 51, 51, 115, 242, 242, 242; 2.8.7 RX2 923.3 MHz DR8; MaxEIRP +30 dBm.
    "AU915": ("2.8", {**{d: EU_DR[d] for d in range(6)}, 6: (8, 500)}, (8, 9, 10, 11, 12, 13),
              {0: 51, 1: 51, 2: 51, 3: 115, 4: 242, 5: 242, 6: 242}, (923.3, 8), 30.0),
    # 2.10.3 "AS923 Data rate table" (as EU868); 2.10.6 payload (UplinkDwellTime = 0) as EU868;
    # 2.10.7 RX2 923.2 MHz DR2 (AS923-1); MaxEIRP +16 dBm.
    "AS923": ("2.10", EU_DR, (0, 1, 2, 3, 4, 5, 6), EU_N, (923.2, 2), 16.0),
    # 2.11.3 DR0-5 SF12-SF7/125; 2.11.6 payload 51, 51, 51, 115, 242, 242; 2.11.7 RX2 921.9 MHz DR0;
    # MaxEIRP +14 dBm.
    "KR920": ("2.11", {d: EU_DR[d] for d in range(6)}, (0, 1, 2, 3, 4, 5), {d: EU_N[d] for d in range(6)},
              (921.9, 0), 14.0),
    # 2.12.3 DR0-5 SF12-SF7/125 (DR7 FSK); 2.12.7 RX2 866.550 MHz DR2; MaxEIRP +30 dBm.
    "IN865": ("2.12", {d: EU_DR[d] for d in range(6)}, (0, 1, 2, 3, 4, 5), {d: EU_N[d] for d in range(6)},
              (866.55, 2), 30.0),
    # 2.9.3 DR0-5 SF12-SF7/125; 2.9.7 RX2 505.3 MHz DR0; MaxEIRP +19.15 dBm.
    "CN470": ("2.9", {d: EU_DR[d] for d in range(6)}, (0, 1, 2, 3, 4, 5), {d: EU_N[d] for d in range(6)},
              (505.3, 0), 19.15),
    # 2.13.3 as EU868; 2.13.7 RX2 869.1 MHz DR0; MaxEIRP +16 dBm.
    "RU864": ("2.13", EU_DR, (0, 1, 2, 3, 4, 5, 6), EU_N, (869.1, 0), 16.0),
    # 2.7.3 as EU868; 2.7.7 RX2 434.665 MHz DR0; MaxEIRP +12.15 dBm.
    "EU433": ("2.7", EU_DR, (0, 1, 2, 3, 4, 5, 6), EU_N, (434.665, 0), 12.15),
}


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def link_json(*args):
    res = run("link", *args, "--json", "-")
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


@pytest.mark.parametrize("name", sorted(SPEC))
def test_plan_tables_match_the_specification(name):
    section, up, down_drs, n, rx2, eirp = SPEC[name]
    p = regional.plan(name)
    assert p.section.startswith(f"RP002-1.0.4 section {section} ")
    assert {d: p.data_rates[d] for d in p.uplink_drs} == up
    assert p.downlink_drs == down_drs
    for d in list(up) + list(down_drs):
        assert p.max_app_payload[d] == n.get(d, p.max_app_payload[d]), (name, d)
    for d, expected in n.items():
        assert p.max_app_payload[d] == expected, (name, d)
    assert (p.rx2_frequency_mhz, p.rx2_dr) == rx2
    assert p.max_eirp_dbm == eirp


def test_dwell_time_and_duty_cycle_rules():
    # RP002-1.0.4 2.5: US902-928 400 ms uplink dwell time, always; 2.8 / 2.10: AU915 and AS923 when
    # UplinkDwellTime = 1 (the defaults chosen here: on, documented), payload with dwell time 2.10.6:
    # DR0, DR1 not usable, DR2 11, DR3 53, DR4 125 bytes (from memory).
    us, au, as_, eu = (regional.plan(n) for n in ("US915", "AU915", "AS923", "EU868"))
    assert regional.dwell_time_limit_ms(us) == 400.0
    with pytest.raises(Exception, match="always enforces"):
        regional.dwell_time_limit_ms(us, "off")
    assert regional.dwell_time_limit_ms(au) == 400.0 and regional.dwell_time_limit_ms(au, "off") is None
    assert regional.dwell_time_limit_ms(eu) is None
    for d, expected in {0: None, 1: None, 2: 11, 3: 53, 4: 125, 5: 242}.items():
        assert regional.max_app_payload_bytes(as_, d, dwell_limited=True) == expected
    # ETSI EN 300 220-2 annex B: 868.0-868.6 MHz 1 %, 869.4-869.65 MHz 10 % (from memory); none in US915.
    assert regional.duty_cycle_at(eu, 868.3) == 0.01
    assert regional.duty_cycle_at(eu, 869.525) == 0.10
    assert regional.duty_cycle_at(us, 910.0) is None


def test_us915_never_recommends_sf11_or_sf12_uplink():
    # A blocked path that needs the slowest rate: US915 uplinks stop at SF10 (RP002-1.0.4 2.5.3).
    r = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", RESERVOIR, "--band", "US915")
    up = r["lora"]["uplink"]
    assert {row["sf"] for row in up["per_dr"] if row["bw_khz"] == 125} == {7, 8, 9, 10}
    assert r["budget"]["sf"] <= 10
    rec = up["recommended_dr"]
    if rec is not None:
        assert rec in (0, 1, 2, 3, 4)
    # lowest_closing_sf is the SF of the recommended uplink DR.
    sf_of = {row["dr"]: row["sf"] for row in up["per_dr"]}
    assert r["lora"]["lowest_closing_sf"] == (sf_of[rec] if rec is not None else None)
    # Asking for SF12 anyway is reported as not allowed.
    r12 = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", RESERVOIR, "--band", "US915", "--sf", "12")
    assert any("not an allowed uplink data rate of US915" in w for w in r12["warnings"])


def test_recommended_dr_is_the_fastest_allowed_closing():
    r = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP)
    for direction in ("uplink", "downlink"):
        rows = r["lora"][direction]["per_dr"]
        ok = [row for row in rows if row["allowed"] and row["closes"]]
        # Bit rate SF * BW / 2^SF (LoRa modem datasheets, common practice) orders the DRs.
        fastest = max(ok, key=lambda row: row["sf"] * row["bw_khz"] / 2 ** row["sf"])
        assert r["lora"][direction]["recommended_dr"] == fastest["dr"]
    assert r["budget"]["dr"] == r["lora"]["uplink"]["recommended_dr"]


def test_dwell_time_case():
    # AS923 with the dwell-time limit on (the default): DR0 and DR1 may not be used (RP002-1.0.4 2.10.6).
    r = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", RESERVOIR, "--band", "AS923")
    rows = {row["dr"]: row for row in r["lora"]["uplink"]["per_dr"]}
    assert not rows[0]["allowed"] and "dwell time" in rows[0]["reason"]
    assert not rows[1]["allowed"] and rows[2]["allowed"]
    assert r["compliance"]["dwell_time_limit_ms"] == 400.0
    off = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", RESERVOIR, "--band", "AS923", "--dwell-time", "off")
    assert all(row["allowed"] for row in off["lora"]["uplink"]["per_dr"])
    assert off["compliance"]["dwell_time_limit_ms"] is None
    # The time-on-air rule on its own: a 60-byte PHY payload at SF10/125 kHz (LoRa time-on-air formula,
    # CR 4/5, 8-symbol preamble, explicit header, CRC; by hand: T_sym = 2^10 / 125 kHz = 8.192 ms,
    # payload symbols 8 + ceil((480 - 40 + 28 + 16) / 40) * 5 = 73, preamble 12.25: 85.25 symbols
    # = 698.4 ms) breaks the 400 ms dwell time.
    rules = lorawan.dr_rules(regional.plan("US915"), "uplink", 60, 5, 400.0, 908.6)
    assert rules["time_on_air_ms"][0] == pytest.approx(85.25 * 8.192, abs=1e-6)
    assert not rules["allowed"][0] and "exceeds the 400 ms dwell time" in rules["reason"][0]


def test_payload_too_long():
    # 60 application bytes exceed N = 51 at EU868 DR0-DR2 (RP002-1.0.4 2.4.6); PHY = 60 + 13 = 73 bytes.
    r = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--app-payload-bytes", "60")
    rows = {row["dr"]: row for row in r["lora"]["uplink"]["per_dr"]}
    assert r["lora"]["payload_bytes"] == 73 and r["lora"]["app_payload_bytes"] == 60
    for d in (0, 1, 2):
        assert not rows[d]["allowed"] and "exceeds the 51-byte limit" in rows[d]["reason"]
    assert rows[3]["allowed"] and rows[3]["max_payload_bytes"] == 115
    res = run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--app-payload-bytes", "60",
              "--payload-bytes", "73")
    assert res.exit_code == 2 and "not both" in res.stderr


def test_eirp_over_limit_warns_and_cap_eirp_lowers_power():
    # 14 dBm + 6 dBi - 2 dB = 18 dBm EIRP, above EU868's +16 dBm (RP002-1.0.4 2.4.3).
    args = ["--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--tx-power-dbm", 14, "--gain-b-dbi", 6,
            "--cable-loss-b-db", 2]
    r = link_json(*args)
    c = r["compliance"]
    assert c["max_eirp_dbm"] == 16.0 and c["eirp_node_dbm"] == pytest.approx(18.0)
    assert c["eirp_ok"] is False
    assert any("above the EU868 limit" in w for w in r["warnings"])
    text = run("link", *args).stdout
    assert "warning" in text and "above the EU868 limit" in text
    capped = link_json(*args, "--cap-eirp")
    assert capped["budget"]["tx_power_dbm"] == pytest.approx(12.0)   # 16 - 6 + 2
    assert capped["compliance"]["eirp_node_dbm"] == pytest.approx(16.0)
    assert capped["compliance"]["eirp_ok"] is True
    assert any("--cap-eirp" in n for n in capped["compliance"]["notes"])


def test_us915_conducted_power_rule():
    # RP002-1.0.4 2.5.2 / FCC: +30 dBm conducted with antennas up to 6 dBi; 9 dBi -> at most 27 dBm.
    p = regional.plan("US915")
    assert regional.max_tx_power_dbm(p, 9.0, 0.0) == pytest.approx(27.0)
    assert regional.max_tx_power_dbm(p, 3.0, 0.0) == pytest.approx(30.0)


def test_downlink_differs_from_uplink_by_power_and_noise_figure():
    # Same frequency and SF in both directions (--freq-mhz, --sf): the path loss and the antennas are
    # reciprocal, so margin_down - margin_up = (P_gw - P_node) - (NF_node - NF_gw) exactly (link budget,
    # ITU-R P.525-4; sensitivity -174 + 10 log BW + NF + SNR: the SNR and BW terms cancel).
    r = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--freq-mhz", 868.0, "--sf", 9,
                  "--tx-power-a-dbm", 20, "--tx-power-b-dbm", 11, "--noise-figure-a-db", 2.5,
                  "--noise-figure-b-db", 7.0, "--gain-a-dbi", 5, "--cable-loss-a-db", 1.5)
    up, down = r["budget"], r["budget_downlink"]
    assert (up["transmitter"], up["receiver"], down["transmitter"]) == ("b", "a", "a")
    assert up["sf"] == down["sf"] == 9
    assert down["margin_db"] - up["margin_db"] == pytest.approx((20 - 11) - (7.0 - 2.5), abs=1e-9)
    assert up["path_loss_db"] == down["path_loss_db"]
    # --gateway b swaps the roles: the budget (uplink) now goes A -> B.
    rb = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--freq-mhz", 868.0, "--gateway", "b")
    assert (rb["budget"]["transmitter"], rb["gateway"]) == ("a", "b")


def test_default_powers_and_noise_figures():
    r = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP)
    # EU868 +16 dBm EIRP with a 2.15 dBi dipole: 13.85 dBm at both ends (RP002-1.0.4 2.4.3).
    assert r["budget"]["tx_power_dbm"] == pytest.approx(16.0 - 2.15)
    assert r["budget_downlink"]["tx_power_dbm"] == pytest.approx(16.0 - 2.15)
    assert r["compliance"]["eirp_ok"] is True
    assert r["budget"]["noise_figure_db"] == 3.0 and r["budget_downlink"]["noise_figure_db"] == 6.0
    # Sensitivity at the budget's DR: -174 + 10 log10(BW) + NF + SNR_min (common practice for LoRa modems).
    b = r["budget"]
    snr = {7: -7.5, 8: -10.0, 9: -12.5, 10: -15.0, 11: -17.5, 12: -20.0}[b["sf"]]
    assert b["sensitivity_dbm"] == pytest.approx(-174 + 10 * math.log10(b["bw_khz"] * 1e3) + 3.0 + snr)


def test_duty_cycle_messages_per_hour():
    r = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP)
    for row in r["lora"]["uplink"]["per_dr"]:
        # 1 % of an hour is 36 s (ETSI sub-band 868.0-868.6 MHz, from memory).
        assert row["max_uplinks_per_hour"] == math.floor(36_000.0 / row["time_on_air_ms"] + 1e-9)
    us = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--band", "US915")
    assert all(row["max_uplinks_per_hour"] is None for row in us["lora"]["uplink"]["per_dr"])
    assert us["compliance"]["duty_cycle"] is None


def test_given_sensitivity_claims_no_spreading_factor():
    r = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--sensitivity-dbm", -110)
    assert r["lora"] is None
    assert r["budget"]["sf"] is None and r["budget"]["sensitivity_source"] == "given"
    text = run("link", "--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP, "--sensitivity-dbm", -110).stdout
    assert "SF" not in text and "DR" not in text and "recommended" not in text


def test_rx2_block():
    r = link_json("--dem", SAMPLE, "--site-a", GW, "--site-b", PUMP)
    rx2 = r["lora"]["downlink"]["rx2"]
    assert (rx2["frequency_mhz"], rx2["dr"], rx2["sf"], rx2["bw_khz"]) == (869.525, 0, 12, 125.0)
    # SF12/125 kHz with the node's 6 dB noise figure: -174 + 51 + 6 - 20 = -137 dBm (common practice).
    assert rx2["sensitivity_dbm"] == pytest.approx(-174 + 10 * math.log10(125e3) + 6 - 20)


def test_bands_command_lists_and_prints_one_plan():
    res = run("bands", "--json")
    rows = json.loads(res.stdout)
    assert {r["band"] for r in rows} == set(SPEC)
    eu = next(r for r in rows if r["band"] == "EU868")
    assert eu["frequency_mhz"] == pytest.approx(868.3125)  # mean of 867.1-869.525 MHz (common practice)
    one = json.loads(run("bands", "US915", "--json").stdout)
    assert [row["sf"] for row in one["uplink_drs"]] == [10, 9, 8, 7, 8]
    assert one["dwell_time_ms"] == 400.0 and one["max_conducted_dbm"] == 30.0
    text = run("bands", "eu868").stdout
    assert "869.5250 MHz at DR0" in text
    bad = run("bands", "XX915")
    assert bad.exit_code == 2 and "unknown band" in bad.stderr


def test_budget_lora_time_on_air_unchanged_by_dr_rules():
    # The per-DR time on air is the modem formula at that DR's SF and bandwidth.
    rules = lorawan.dr_rules(regional.plan("EU868"), "uplink", 25, 12, None, 868.3)
    for i in range(rules["dr"].size):
        assert rules["time_on_air_ms"][i] == pytest.approx(
            lora_modem.lora_time_on_air_ms(int(rules["sf"][i]), rules["bw_khz"][i], 25))
