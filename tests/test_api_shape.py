"""One API shape (issue 18, item 3): the five command functions of ``profiler``.

Check values: the commands themselves.  For the same inputs on the bundled terrain, each function's
``to_dict()`` equals the JSON the command prints with ``--json -`` (the contracts of docs/json.md);
the signatures are read with ``inspect.signature`` (positional sites, keyword-only options, no
``**kwargs``, one name per quantity).
"""

from __future__ import annotations

import datetime
import inspect
import json
import warnings
from pathlib import Path

import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, MODEL_OPTIONS, PUMP

import profiler
from profiler.cli import main
from profiler.io.report import json_text

ROOT = Path(__file__).resolve().parents[1]
SITES = str(ROOT / "examples" / "siting_sites.csv")
DEM_PATH = str(DEM[0])
DATE = datetime.date(2026, 3, 1)
FUNCTIONS = ("link", "mast", "network", "coverage", "siting")

#: Positional parameters of each function (the sites); everything else is keyword-only.
POSITIONAL = {"link": ["site_a", "site_b"], "mast": ["site_a", "site_b"], "network": ["sites"],
              "coverage": ["site"], "siting": ["sites"]}
#: Keyword-only parameters each function must have (the issue's shape and the shared quantities).
REQUIRED_KEYWORDS = {
    "link": {"dem", "mast_a_m", "mast_b_m", "k_factor", "clearance_ratio", "frequency_mhz", "band", "step_m",
             "fill_voids", "radio", "date", "sheet_info"},
    "mast": {"dem", "mast_a_m", "mast_b_m", "k_factor", "clearance_ratio", "frequency_mhz", "band", "step_m",
             "fill_voids", "radio", "date", "sheet_info", "low_k_factor", "low_k_clearance_ratio", "min_margin_db",
             "solve", "max_mast_m", "mast_step_m"},
    "network": {"dem", "k_factor", "clearance_ratio", "frequency_mhz", "band", "step_m", "fill_voids", "radio",
                "workers", "scheduler", "progress", "pairs", "max_distance_km"},
    "coverage": {"dem", "mast_m", "radius_km", "node_mast_m", "k_factor", "clearance_ratio", "frequency_mhz",
                 "band", "fill_voids", "radio", "date", "sheet_info", "workers", "scheduler", "progress"},
    "siting": {"dem", "k_factor", "clearance_ratio", "frequency_mhz", "band", "step_m", "fill_voids", "radio",
               "workers", "scheduler", "progress", "redundancy", "min_margin_db", "max_gateways", "time_limit_s"},
}
#: Names the API once used (or might drift to) for a quantity that has one name now.
OTHER_NAMES = {"clearance_ratio_required", "k", "k_text", "freq_mhz", "band_name", "dem_paths", "mast_a", "mast_b",
               "sites_csv", "pairs_csv", "no_progress", "sheet_date", "low_k", "low_k_clearance", "kwargs"}


def signature(name):
    return inspect.signature(getattr(profiler, name))


@pytest.mark.parametrize("name", FUNCTIONS)
def test_signature_has_the_documented_shape(name):
    params = list(signature(name).parameters.values())
    positional = [p.name for p in params if p.kind is p.POSITIONAL_OR_KEYWORD]
    keyword_only = {p.name for p in params if p.kind is p.KEYWORD_ONLY}
    assert positional == POSITIONAL[name]
    assert all(p.kind in (p.POSITIONAL_OR_KEYWORD, p.KEYWORD_ONLY) for p in params), "no *args or **kwargs"
    assert REQUIRED_KEYWORDS[name] <= keyword_only
    assert not (keyword_only & OTHER_NAMES)


@pytest.mark.parametrize("name", FUNCTIONS)
def test_every_parameter_is_documented(name):
    from numpydoc.docscrape import FunctionDoc

    documented = {n.strip() for p in FunctionDoc(getattr(profiler, name))["Parameters"] for n in p.name.split(",")}
    assert set(signature(name).parameters) == documented


def test_one_quantity_has_one_name_and_one_default_across_the_functions():
    seen = {}
    for name in FUNCTIONS:
        for p in signature(name).parameters.values():
            seen.setdefault(p.name, set()).add(repr(p.default))
    shared = {"k_factor", "clearance_ratio", "frequency_mhz", "band", "step_m", "fill_voids", "radio", "date",
              "sheet_info", "workers", "scheduler", "progress", "mast_a_m", "mast_b_m", "min_margin_db"}
    assert shared <= set(seen)
    # The same quantity has the same default everywhere (mast's clearance criteria may be None: off).
    assert {q: d for q, d in seen.items() if q in shared and len(d) > 1} == {}


def test_the_functions_are_top_level_without_warning():
    import profiler.api

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        for name in (*FUNCTIONS, "load_profile"):
            assert getattr(profiler, name) is getattr(profiler.api, name)
        from profiler import mast
    assert mast is profiler.api.mast
    assert set(FUNCTIONS) <= set(profiler.__all__)


def cli_json(*args):
    result = CliRunner().invoke(main, [str(a) for a in args] + ["--json", "-"], catch_exceptions=False)
    assert result.exit_code in (0, 3), result.output
    return json.loads(result.output)


def same_json(result) -> dict:
    """The result's report as the command writes it (JSON numbers, lists for tuples)."""
    return json.loads(json_text(result.to_dict()))


def test_link_to_dict_is_the_command_json():
    result = profiler.link(GATEWAY, PUMP, dem=[DEM_PATH], mast_a_m=12.0, name_a="Cairnfell Beacon",
                           clearance_ratio=0.5, date=DATE)
    cli = cli_json("link", "--dem", DEM_PATH, "--site-a", "-29.9125,-19.955", "--site-b", "-29.9,-19.825",
                   "--mast-a", 12, "--name-a", "Cairnfell Beacon", "--clearance-ratio", 0.5, "--date", DATE)
    assert same_json(result) == cli
    assert cli["clearance_ratio_required"] == 0.5
    assert len(result.profile["distance_m"]) == len(cli["profile"]["distance_m"]) > 100


def test_mast_to_dict_is_the_command_json():
    from profiler.products.mast.result import MastResult

    result = profiler.mast(GATEWAY, PUMP, dem=[DEM_PATH], solve="a", low_k_factor="3/4", mast_step_m=2.0,
                           date=DATE)
    cli = cli_json("mast", "--dem", DEM_PATH, "--site-a", "-29.9125,-19.955", "--site-b", "-29.9,-19.825",
                   "--solve", "a", "--low-k", "3/4", "--mast-step-m", 2, "--date", DATE)
    assert isinstance(result, MastResult)
    assert same_json(result) == cli
    assert cli["feasible"] and cli["required_mast_a_m"] > 10.0     # the ridge needs a higher gateway mast


def test_mast_without_clearance_criteria_is_the_command_json():
    result = profiler.mast(GATEWAY, PUMP, dem=[DEM_PATH], clearance_ratio=None, low_k_clearance_ratio=None,
                           min_margin_db=15.0, date=DATE)
    cli = cli_json("mast", "--dem", DEM_PATH, "--site-a", "-29.9125,-19.955", "--site-b", "-29.9,-19.825",
                   "--no-clearance", "--min-margin-db", 15, "--date", DATE)
    assert same_json(result) == cli
    assert [c["criterion"] for c in cli["criteria"]] == ["margin"]


def test_network_to_dict_is_the_command_json():
    result = profiler.network(SITES, dem=[DEM_PATH], max_distance_km=20.0, progress=False)
    cli = cli_json("network", "--dem", DEM_PATH, "--sites", SITES, "--max-distance-km", 20, "--no-progress")
    assert same_json(result) == cli
    assert len(result.links) == cli["summary"]["links"] > 0


def test_siting_to_dict_is_the_command_json():
    result = profiler.siting(SITES, dem=[DEM_PATH], redundancy=2, progress=False)
    cli = cli_json("siting", "--dem", DEM_PATH, "--sites", SITES, "--redundancy", 2, "--no-progress")
    assert same_json(result) == cli
    assert result.network["schema"] == "profiler.network/4" and cli["schema"] == "profiler.siting/3"


def test_coverage_to_dict_is_the_command_json():
    import numpy as np

    result = profiler.coverage(GATEWAY, dem=[DEM_PATH], mast_m=10.0, radius_km=1.5, resolution_m=150.0,
                               name="Cairnfell Beacon", date=DATE, progress=False)
    cli = cli_json("coverage", "--dem", DEM_PATH, "--site", "-29.9125,-19.955", "--mast-m", 10, "--radius-km", 1.5,
                   "--resolution-m", 150, "--name", "Cairnfell Beacon", "--date", DATE, "--no-progress")
    assert same_json(result) == cli
    margin = result.bands["margin_db"]
    assert margin.shape == (result.grid.height, result.grid.width) and margin.dtype == np.float32
    assert set(result.bands) == set(cli["bands"])


def propagation_of(options) -> dict:
    """``PropagationSettings`` keywords of command-line model options (``--time-percent 10`` -> 10.0)."""
    pairs = dict(zip(options[::2], options[1::2]))
    return {k[2:].replace("-", "_"): (v if k == "--model" else float(v)) for k, v in pairs.items()}


@pytest.mark.parametrize("model", MODEL_OPTIONS)
def test_propagation_settings_reach_link_and_network_as_the_options_do(model):
    # RadioSettings(propagation=PropagationSettings(...)) is the API's spelling of the model options.
    from profiler.engine.model import PropagationSettings
    from profiler.engine.radio import RadioSettings

    radio = RadioSettings(propagation=PropagationSettings(**propagation_of(MODEL_OPTIONS[model])))
    result = profiler.link(GATEWAY, PUMP, dem=[DEM_PATH], radio=radio, date=DATE)
    cli = cli_json("link", "--dem", DEM_PATH, "--site-a", "-29.9125,-19.955", "--site-b", "-29.9,-19.825",
                   "--date", DATE, *MODEL_OPTIONS[model])
    assert same_json(result) == cli and cli["model"] == MODEL_OPTIONS[model][1]
    result = profiler.network(SITES, dem=[DEM_PATH], max_distance_km=20.0, progress=False, radio=radio)
    cli = cli_json("network", "--dem", DEM_PATH, "--sites", SITES, "--max-distance-km", 20, "--no-progress",
                   *MODEL_OPTIONS[model])
    assert same_json(result) == cli and cli["settings"]["model"] == MODEL_OPTIONS[model][1]


def test_renamed_keyword_warns_and_still_works():
    from profiler.products.link import analyze_link

    prof = profiler.load_profile(GATEWAY, PUMP, dem=[DEM_PATH])
    new = analyze_link(prof, frequency_mhz=868.1, clearance_ratio=0.3, date=DATE).to_dict()
    with pytest.warns(DeprecationWarning, match=r"clearance_ratio_required=.*use clearance_ratio="):
        old = analyze_link(prof, frequency_mhz=868.1, clearance_ratio_required=0.3, date=DATE).to_dict()
    assert old == new and new["clearance_ratio_required"] == 0.3
    with pytest.raises(TypeError, match="give only 'clearance_ratio'"):
        analyze_link(prof, frequency_mhz=868.1, clearance_ratio=0.3, clearance_ratio_required=0.3)
    assert "clearance_ratio_required" not in inspect.signature(analyze_link).parameters


def test_renamed_site_keywords_warn_and_still_work():
    from profiler.products.link import analyze_link
    from profiler.products.mast.solve import solve_mast

    prof = profiler.load_profile(GATEWAY, PUMP, dem=[DEM_PATH])
    new = analyze_link(prof, frequency_mhz=868.1, site_a=GATEWAY, site_b=PUMP, date=DATE).to_dict()
    with pytest.warns(DeprecationWarning, match=r"site_a_lat_lon=.*use site_a="):
        old = analyze_link(prof, frequency_mhz=868.1, site_a_lat_lon=GATEWAY, site_b=PUMP, date=DATE).to_dict()
    assert old == new and new["site_a"]["lat_deg"] == GATEWAY[0]
    assert new["declination_a_deg"] is not None              # the bearings need both sites
    new = solve_mast(prof, frequency_mhz=868.1, site_a=GATEWAY, site_b=PUMP).to_dict()
    with pytest.warns(DeprecationWarning, match=r"site_b_lat_lon=.*use site_b="):
        old = solve_mast(prof, frequency_mhz=868.1, site_a=GATEWAY, site_b_lat_lon=PUMP).to_dict()
    assert old == new and new["site_b"]["lon_deg"] == PUMP[1]
