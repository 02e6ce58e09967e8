"""Permit-grade sheets: title block, full names, radio table, datums, magnetic bearings, RF distance, report.

The sheets are read back as text (SVG ``<text>`` elements; the PDF report
through ``pdftotext`` from poppler-utils) and the numbers on them are
checked against sources outside the project: the declination against
IGRF-14 (ppigrf), the RF-exposure distance against the hand formula with
the ICNIRP (2020) and 47 CFR 1.1310 reference levels, the vertical datum
against pyproj, the file digest against hashlib.
"""

import datetime as dt
import hashlib
import json
import math
import shutil
import subprocess
import sys
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, PUMP  # noqa: E402

from profiler.cli import main

SVG_NS = "{http://www.w3.org/2000/svg}"
LONG_A = "Cairnfell Beacon upper hill-top gateway cabinet north"    # invented names
LONG_B = "Osterby Farm lower pump house telemetry node"
DATE = "2026-03-01"
SITES = ["--dem", str(DEM[0]), "--site-a", f"{GATEWAY[0]},{GATEWAY[1]}", "--site-b", f"{PUMP[0]},{PUMP[1]}"]
# 27 dBm + 6 dBi at the gateway: EIRP 33 dBm (above the EU868 16 dBm limit on purpose: the sheet says so).
RADIO = ["--band", "EU868", "--tx-power-a-dbm", "27", "--gain-a-dbi", "6", "--cable-loss-a-db", "0",
         "--mast-a", "10", "--mast-b", "2"]
IGRF_TOLERANCE_DEG = 0.25    # as tests/test_magnetic.py: WMM2025 error model, constant term 0.26 deg


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def _svg_text(path) -> str:
    root = ET.parse(path).getroot()
    return " ".join("".join(el.itertext()) for el in root.iter(f"{SVG_NS}text"))


def _pdf_pages(path) -> list[str]:
    if shutil.which("pdftotext") is None:   # poppler-utils (Debian); the SVG checks still run
        pytest.skip("pdftotext (poppler-utils) not installed")
    out = subprocess.run(["pdftotext", "-raw", str(path), "-"], check=True, capture_output=True, text=True).stdout
    return [" ".join(page.split()) for page in out.split("\f") if page.strip()]


@pytest.fixture(scope="module")
def link_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("sheets")
    info = folder / "sheet.toml"
    info.write_text('project = "Vellmoor valley LoRaWAN telemetry"\ndocument = "VV-RF-0012"\nrevision = "A"\n'
                    'prepared_by = "A. Planner"\norganisation = "Vellmoor water board"\n', encoding="utf-8")
    # a real process, so that the record page shows the real command line
    res = subprocess.run([sys.executable, "-m", "profiler", "link", *SITES, *RADIO, "--name-a", LONG_A, "--name-b",
                          LONG_B, "--sheet-info", str(info), "--revision", "C", "--date", DATE, "--json",
                          str(folder / "r.json"), "--plot", str(folder / "s.svg"), "--report", str(folder / "r.pdf")],
                         capture_output=True, text=True)
    assert res.returncode == 0, res.stderr
    report = json.loads((folder / "r.json").read_text(encoding="utf-8"))
    return report, _svg_text(folder / "s.svg"), folder


def test_title_block_fields_options_win_and_blank_boxes(link_run):
    report, svg, _ = link_run
    assert report["sheet"] == {"project": "Vellmoor valley LoRaWAN telemetry", "document": "VV-RF-0012",
                               "revision": "C", "prepared_by": "A. Planner", "checked_by": "",
                               "organisation": "Vellmoor water board", "notes": "", "date": DATE}
    for text in ("Vellmoor valley LoRaWAN telemetry", "VV-RF-0012", "A. Planner", "Vellmoor water board",
                 DATE, "1 of 1", f"profiler {report['tool_version']}", "CHECKED BY", "REVISION"):
        assert text in svg, text
    assert " A " not in svg.split("REVISION", 1)[1][:12]           # the option (C) replaced the file's A


def test_full_long_names_appear_wrapped_never_cut(link_run):
    _, svg, _ = link_run
    assert LONG_A in svg and LONG_B in svg                         # sites table and title block, whole
    assert svg.count(LONG_A) >= 2


def test_datum_line_matches_pyproj(link_run):
    import pyproj

    report, svg, _ = link_run
    crs = pyproj.CRS.from_user_input(report["dem"]["sources"][0]["crs"])
    assert not crs.is_vertical and not crs.is_compound             # EPSG:4326 states no vertical datum
    assert "Horizontal: WGS84" in svg and "vertical datum: not stated in the data" in svg


def test_magnetic_azimuths_against_igrf(link_run):
    import ppigrf

    report, svg, _ = link_run
    date = dt.datetime.fromisoformat(DATE)
    for key, (lat, lon), az_key in (("a", GATEWAY, "azimuth_a_to_b"), ("b", PUMP, "azimuth_b_to_a")):
        h_km = report[f"site_{key}"]["antenna_amsl_m"] / 1000.0
        east, north, _ = ppigrf.igrf(lon, lat, h_km, date)                  # IGRF-14, independent model
        igrf = float(np.degrees(np.arctan2(east, north)).ravel()[0])
        assert report[f"declination_{key}_deg"] == pytest.approx(igrf, abs=IGRF_TOLERANCE_DEG)
        magnetic = (report[f"{az_key}_deg"] - igrf) % 360.0                  # magnetic = true - D
        assert report[f"{az_key}_magnetic_deg"] == pytest.approx(magnetic, abs=IGRF_TOLERANCE_DEG)
        shown = f"{report[f'{az_key}_magnetic_deg']:.2f}\u00b0"
        assert shown in svg
    assert report["magnetic_model"]["model"] == "WMM2025" and "WMM2025" in svg and DATE in svg


def test_rf_exposure_distance_by_hand(link_run):
    report, svg, _ = link_run
    gw = report["rf_exposure"]["a"]
    f = gw["frequency_mhz"]
    eirp_w = 10 ** ((27 + 6 - 30) / 10.0)                     # 33 dBm
    s_icnirp = f / 200.0     # ICNIRP (2020) Table 5, general public, 400-2000 MHz: f/200 W/m^2
    s_fcc = f / 1500.0 * 10.0  # 47 CFR 1.1310 Table 1 (B), 300-1500 MHz: f/1500 mW/cm^2 (1 mW/cm^2 = 10 W/m^2)
    r_icnirp = math.sqrt(eirp_w / (4 * math.pi * s_icnirp))   # S = EIRP / (4 pi r^2)
    r_fcc = math.sqrt(eirp_w / (4 * math.pi * s_fcc))
    assert gw["eirp_dbm"] == pytest.approx(33.0)
    assert gw["icnirp2020"]["general_public_m"] == pytest.approx(r_icnirp, rel=1e-9)
    assert gw["fcc_1_1310"]["general_public_m"] == pytest.approx(r_fcc, rel=1e-9)
    assert gw["largest_general_public_m"] == pytest.approx(max(r_icnirp, r_fcc), rel=1e-9)
    shown = f"{math.ceil(max(r_icnirp, r_fcc) * 100) / 100:.2f} m from antenna A"   # rounded up to the cm
    assert shown in svg and "local rules prevail" in svg and "Far-field" in svg


def test_radio_table_per_end_reproduces_the_budget(link_run):
    report, svg, _ = link_run
    ends = report["radio_ends"]
    assert ends["a"]["role"] == "gateway" and ends["b"]["role"] == "node"
    for key in ("a", "b"):
        e = ends[key]
        assert e["eirp_dbm"] == pytest.approx(e["tx_power_dbm"] + e["gain_dbi"] - e["cable_loss_db"])
    # the uplink budget: rx = EIRP(node) - path loss + G(gw) - L(gw)
    up = report["budget"]
    assert up["rx_power_dbm"] == pytest.approx(ends["b"]["eirp_dbm"] - up["path_loss_db"] + ends["a"]["gain_dbi"]
                                               - ends["a"]["cable_loss_db"], abs=1e-6)
    for text in ("Tx [dBm]", "27.00", "Gain [dBi]", "6.00", "33.0 > 16 EXCEEDED", "LoRa SF", " up", " down"):
        assert text in svg, text


def test_link_report_pdf_pages(link_run):
    report, _, folder = link_run
    pages = _pdf_pages(folder / "r.pdf")
    n = len(pages)
    assert n >= 3 and all(f"{i} of {n}" in page for i, page in enumerate(pages, start=1))
    assert "Vellmoor valley LoRaWAN telemetry" in pages[0]
    assert LONG_A in pages[0] and "Horizontal: WGS84" in pages[0]
    assert "Uplink" in pages[1] and "Downlink" in pages[1] and "DR0" in pages[1] and "DR5" in pages[1]
    # readable compliance, per-end names and the RX2 window in the PDF itself (27 dBm + 6 dBi > 16 dBm on purpose)
    assert "EIRP 33.0 dBm, limit 16 dBm: EXCEEDED" in pages[1] and "max eirp dbm" not in pages[1]
    # the budget pages: the loss table's per-end terms (link/5) may move the RX2 window onto the next page
    budget = " ".join(pages[1:-1])
    assert f"Gateway {LONG_A}" in budget and "Downlink RX2 window" in budget
    record = " ".join(pages[2:])
    digest = hashlib.sha256(DEM[0].read_bytes()).hexdigest()                # the file's own digest
    assert digest in record.replace(" ", "")
    assert "--sheet-info" in record and "--tx-power-a-dbm 27.0 given" in record and "--band EU868 given" in record
    assert "tx-power-a-dbm" not in record.replace("--tx-power-a-dbm", "")   # no internal names
    from importlib.metadata import version
    assert version("numpy") in record and version("matplotlib") in record


def test_mast_sheet_and_report_share_the_title_block(tmp_path):
    res = run("mast", *SITES, "--band", "EU868", "--clearance-ratio", "0.3", "--project", "Vellmoor masts",
              "--checked-by", "B. Checker", "--date", DATE, "--plot", tmp_path / "m.svg", "--report",
              tmp_path / "m.pdf", "--json", tmp_path / "m.json")
    assert res.exit_code == 0, res.output
    svg = _svg_text(tmp_path / "m.svg")
    for text in ("Vellmoor masts", "B. Checker", DATE, "PREPARED BY", "Elevation data: vellmoor_synthetic_1s.tif",
                 "profiler ", "Horizontal: WGS84", "chosen"):
        assert text in svg, text
    report = json.loads((tmp_path / "m.json").read_text())
    assert report["schema"] == "profiler.mast/4" and report["sheet"]["checked_by"] == "B. Checker"
    pages = _pdf_pages(tmp_path / "m.pdf")
    assert len(pages) >= 3 and "Vellmoor masts" in pages[2] and "Mast table" in pages[1]


def test_mast_rate_change_reason():
    from profiler.plot.mast import rate_changes

    rows = [{"sf": 8, "bw_khz": 125.0, "dr": 4, "margin_db": 12.0},
            {"sf": 7, "bw_khz": 125.0, "dr": 5, "margin_db": 10.0},
            {"sf": 7, "bw_khz": 125.0, "dr": 5, "margin_db": 11.0}]
    (i, reason), = rate_changes(rows)
    assert i == 1 and "DR4 SF8/125 \u2192 DR5 SF7/125" in reason and "lower" in reason


def test_bad_sheet_info_is_one_line_exit_2(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text('projekt = "x"\n', encoding="utf-8")
    res = run("link", *SITES, "--sheet-info", bad, "--json", tmp_path / "r.json")
    assert res.exit_code == 2 and "unknown key 'projekt'" in res.output
    res = run("link", *SITES, "--date", "2026-13-01", "--json", tmp_path / "r.json")
    assert res.exit_code == 2 and "not a date" in res.output
    res = run("link", *SITES, "--report", tmp_path / "r.png", "--json", tmp_path / "r.json")
    assert res.exit_code == 2 and "--report" in res.output and ".pdf" in res.output
    assert not (tmp_path / "r.json").exists()


def test_network_accepts_sheet_options(tmp_path):
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    res = run("network", "--dem", DEM[0], "--sites", root / "examples" / "vellmoor_network.csv",
              "--pairs", root / "examples" / "vellmoor_pairs.csv", "--project", "Vellmoor network",
              "--document", "VV-NET-1", "--date", DATE, "--plot", tmp_path / "n.svg", "--no-progress")
    assert res.exit_code == 0, res.output
    svg = _svg_text(tmp_path / "n.svg")
    assert "Vellmoor network" in svg and "VV-NET-1" in svg and DATE in svg


def test_mast_sheet_writes_the_rate_and_the_reason_of_a_drop(tmp_path):
    from profiler.plot import write_mast_figure

    res = run("mast", *SITES, "--band", "EU868", "--clearance-ratio", "0.3", "--json", tmp_path / "m.json")
    assert res.exit_code == 0, res.output
    report = json.loads((tmp_path / "m.json").read_text())
    for i, row in enumerate(report["table"]):     # a slower rate below 8 m, as a lower mast would recommend
        if i < 6:
            row.update(sf=9, bw_khz=125.0, dr=3, margin_db=row["margin_db"] + 8.0)
    write_mast_figure(report, tmp_path / "m.svg")
    svg = _svg_text(tmp_path / "m.svg")
    assert "DR3 SF9/125" in svg and "\u2193 DR6 SF7/250" in svg and "margin drops where a taller mast" in svg
