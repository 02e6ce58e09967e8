"""``profiler survey`` on the command line: outputs written all or nothing, one-line refusals.

Check values: the JSON written beside the other outputs (the CSV rows and the calibration TOML
carry the JSON's numbers; TOML read back with the standard library's ``tomllib``); the GeoJSON
structure of IETF RFC 7946 (a FeatureCollection of Points, longitude first).
"""

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
BASE = ["survey", "--dem", str(ROOT / "dem_samples"), "--sites", str(ROOT / "examples" / "sites.csv"),
        "--measurements", str(ROOT / "examples" / "vellmoor_survey.csv"), "--no-progress"]


def run(*args):
    return subprocess.run([sys.executable, "-m", "profiler", *args], capture_output=True, text=True, cwd=ROOT,
                          env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"})


def test_every_output_and_the_summary(tmp_path):
    import csv

    import tomllib

    out = {k: tmp_path / f"s.{k}" for k in ("json", "csv", "geojson", "toml", "png")}
    r = run(*BASE, "--json", out["json"], "--csv", out["csv"], "--geojson", out["geojson"], "--calibration-out",
            out["toml"], "--plot", out["png"], "--dpi", "60", "--fit", "slope", "--cell-m", "80")
    assert r.returncode == 0, r.stderr
    rep = json.loads(out["json"].read_text())
    assert rep["schema"] == "profiler.survey/1" and rep["settings"]["cell_m"] == 80.0
    assert rep["calibration"]["fit"] == "slope"
    cal = tomllib.loads(out["toml"].read_text())
    assert cal["offset_db"] == rep["calibration"]["offset_db"]
    assert cal["slope_db_per_decade"] == rep["calibration"]["slope_db_per_decade"]
    assert cal["location_sigma_db"] == rep["location_sigma_db"]
    assert set(cal["clutter"]) == set(rep["calibration_by_clutter"])
    rows = list(csv.DictReader(out["csv"].open()))
    assert len(rows) - 1 == len(rep["measurements"])      # the caution row last
    assert float(rows[0]["residual_db"]) == pytest.approx(rep["measurements"][0]["residual_db"], abs=1e-6)
    gj = json.loads(out["geojson"].read_text())
    assert gj["type"] == "FeatureCollection"
    m0 = rep["measurements"][0]
    assert gj["features"][0]["geometry"] == {"type": "Point", "coordinates": [m0["lon_deg"], m0["lat_deg"]]}
    assert out["png"].stat().st_size > 10_000
    assert "Survey:" in r.stdout and "calibration" in r.stdout


def test_slope_only_with_fit_slope(tmp_path):
    r = run(*BASE, "--calibration-out", tmp_path / "c.toml")
    assert r.returncode == 0, r.stderr
    assert "slope_db_per_decade = 0.0" in (tmp_path / "c.toml").read_text()


def test_a_malformed_file_is_refused_with_its_line_and_nothing_is_written(tmp_path):
    bad = tmp_path / "m.csv"
    bad.write_text("gateway,lat_deg,lon_deg,rssi_dbm,snr_db\nCairnfell Beacon,-29.9,-19.8,-110,5\n"
                   "Cairnfell Beacon,-29.9,-19.8,-110,loud\n", encoding="utf-8")
    args = [a if a != str(ROOT / "examples" / "vellmoor_survey.csv") else str(bad) for a in BASE]
    r = run(*args, "--json", tmp_path / "out.json")
    assert r.returncode == 2
    assert r.stderr.count("\n") == 1 and "line 3: snr_db 'loud' is not a number" in r.stderr
    assert "Traceback" not in r.stderr and not (tmp_path / "out.json").exists()


@pytest.mark.parametrize("option, value", [("--cell-m", "0"), ("--folds", "1"), ("--fit", "curve")])
def test_bad_options_are_refused_in_one_line(option, value):
    r = run(*BASE, option, value)
    assert r.returncode == 2 and r.stderr.startswith("profiler: error:") and r.stderr.count("\n") == 1


def test_calibration_out_must_be_toml(tmp_path):
    r = run(*BASE, "--calibration-out", tmp_path / "c.txt")
    assert r.returncode == 2 and ".toml" in r.stderr


def test_the_model_options_reach_the_prediction(tmp_path):
    r = run(*BASE, "--model", "terrain", "--json", tmp_path / "t.json")
    p = run(*BASE, "--location-percent", "90", "--json", tmp_path / "p.json")
    assert r.returncode == 0 and p.returncode == 0, r.stderr + p.stderr
    t, q = json.loads((tmp_path / "t.json").read_text()), json.loads((tmp_path / "p.json").read_text())
    assert t["settings"]["model"] == "terrain" and q["settings"]["location_percent"] == 90.0
    # P.1812 at 90 % of locations predicts more loss than at the median: the offset fitted drops
    assert q["calibration"]["offset_db"] < t["calibration"]["offset_db"] or q["calibration"]["offset_db"] < 3.4


def test_the_json_on_stdout_is_the_python_api_report():
    from profiler import survey

    r = run(*BASE, "--json", "-")
    assert r.returncode == 0, r.stderr
    api = survey(str(ROOT / "examples" / "sites.csv"), str(ROOT / "examples" / "vellmoor_survey.csv"),
                 dem=[str(ROOT / "dem_samples")], progress=False).to_dict()
    assert json.loads(r.stdout) == json.loads(json.dumps(api))
