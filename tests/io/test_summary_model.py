"""The text summaries, the CSV summary and the export descriptions state the model and its loss parts.

Check values: the JSON report beside them (``loss_db``, ``propagation``,
``settings``), the wording of issue 19 ("P.1812-8, 50 % time, 95 %
locations"), and the sums the parts must make (P.1812-8: basic transmission
loss = free space + diffraction + combination + location term, then + extra
+ polarization = total).
"""

from __future__ import annotations

import csv
import dataclasses
import io
import math

import pytest
from sample_sites import DEM, GATEWAY, PUMP, ROOT

from profiler.engine.model import PropagationSettings
from profiler.engine.radio import RadioSettings
from profiler.io.report import csv_text, format_cell, losses_text, summary_rows, summary_text

MODELS = ("p1812", "terrain")


def _radio(model):
    prop = PropagationSettings(model="p1812", location_percent=95.0) if model == "p1812" else \
        PropagationSettings(model="terrain")
    return dataclasses.replace(RadioSettings(), propagation=prop)


@pytest.fixture(scope="module")
def reports():
    from profiler.api import link

    return {model: link(GATEWAY, PUMP, dem=DEM, mast_a_m=10.0, mast_b_m=2.0, radio=_radio(model)).to_dict()
            for model in MODELS}


def _db(value) -> str:
    return f"{round(value, 1) + 0.0:.1f} dB"


def test_losses_line_p1812_adds_up_to_the_json(reports):
    report = reports["p1812"]
    loss = report["loss_db"]
    expected = (f"P.1812-8 (50 % time, 95 % locations): free space {_db(loss['free_space'])} + diffraction "
                f"{_db(loss['diffraction'])} + combination {_db(loss['combination'])} + location "
                f"{_db(loss['location'])} = basic {_db(loss['basic_transmission'])}; + extra {_db(loss['extra'])} "
                f"+ polarization {_db(loss['polarization'])} = {_db(loss['total'])}")
    assert losses_text(report) == expected
    assert f"  losses        {expected}" in summary_text(report).splitlines()
    assert loss["free_space"] + loss["diffraction"] + loss["combination"] + loss["location"] == \
        pytest.approx(loss["basic_transmission"], abs=1e-9)
    assert "-0.0" not in expected


def test_losses_line_terrain(reports):
    loss = reports["terrain"]["loss_db"]
    assert losses_text(reports["terrain"]) == (
        f"terrain model: free space {_db(loss['free_space'])} + diffraction {_db(loss['diffraction'])} "
        f"(delta-bullington) + extra {_db(loss['extra'])} + polarization {_db(loss['polarization'])} = "
        f"{_db(loss['total'])}")


@pytest.mark.parametrize("model", MODELS)
def test_csv_summary_rows_hold_the_model_and_the_parts(reports, model):
    report = reports[model]
    rows = dict(summary_rows(report))
    loss, prop = report["loss_db"], report["propagation"]
    assert rows["model"] == model
    assert rows["time_percent"] == prop["time_percent"] and rows["location_percent"] == prop["location_percent"]
    for key in ("combination", "location", "basic_transmission"):
        assert rows[f"{key}_loss_db"] == loss[key]
    tail = [r for r in csv.reader(io.StringIO(csv_text(report).split("\n\n", 1)[1])) if r]
    cells = {name[2:]: value for name, value in tail}
    assert cells["model"] == model and float(cells["location_percent"]) == prop["location_percent"]
    assert float(cells["basic_transmission_loss_db"]) == pytest.approx(loss["basic_transmission"], abs=5e-4)
    assert not any(value.startswith("-0.000") for value in cells.values())


def test_format_cell_has_no_negative_zero():
    assert format_cell(-1.4e-8) == "0.000"           # a combination term of -1.4e-8 dB is 0.000 dB
    assert format_cell(-0.25, 1) == "-0.2"            # round half to even, as format() does
    assert format_cell(-1.5) == "-1.500" and format_cell(math.nan) == "nan"


def test_geojson_description_states_the_losses(reports):
    from profiler.io.exports import geojson_dict

    report = reports["p1812"]
    path = next(f for f in geojson_dict(report)["features"] if f["id"] == "path")
    assert f"losses {losses_text(report)}" in path["properties"]["description"]
    assert path["properties"]["model"] == "p1812" and path["properties"]["location_percent"] == 95.0


@pytest.mark.parametrize("model", MODELS)
def test_network_and_coverage_summaries_state_the_model(model):
    from profiler.api import network
    from profiler.cli.network import network_summary_text
    from profiler.io.coverage import coverage_summary_text
    from profiler.io.report import model_line
    from profiler.products.coverage.map import coverage

    net = network(str(ROOT / "examples" / "siting_sites.csv"), dem=DEM, radio=_radio(model), progress=False).to_dict()
    cov = coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=1.0, resolution_m=200.0, radio=_radio(model),
                   progress=False).report
    expected = ("P.1812-8, 50 % time, 95 % locations" if model == "p1812" else
                "Terrain model (free space + delta-bullington diffraction), median")
    for report, text in ((net, network_summary_text(net)), (cov, coverage_summary_text(cov))):
        assert model_line(report) == expected
        assert f"  model         {expected}" in text.splitlines()
