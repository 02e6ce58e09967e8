"""Terminals (issue 20 items 2-3): clutter at an end, indoor ends and per-end fixed losses, in both models.

Check values: ITU-R P.2108-1 section 3.1 A_h and section 3.2 L_ctt from
:mod:`profiler.propagation.p2108` (held to the U.S. reference implementation
``proplib-p2108`` within 0.01 dB by ``tests/propagation/test_p2108.py``);
ITU-R P.1812-8 by :func:`profiler.propagation.p1812.p1812_batch` called
directly with the clutter column section 3.2 prescribes (held to the SG3
validation examples by ``tests/propagation/test_p1812.py``); ITU-R P.2109-1
by :func:`profiler.propagation.building_entry.building_entry_loss_db` (held
to the SG3 workbook) at the elevation angle of ITU-R P.452-18 eq. (153),
worked here by hand from the report's heights.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, TANK

from profiler.cli import main
from profiler.propagation import p2108
from profiler.propagation.building_entry import building_entry_loss_db
from profiler.terrain.landcover import default_height_m

SITE_A, SITE_B = f"{GATEWAY[0]},{GATEWAY[1]}", f"{TANK[0]},{TANK[1]}"   # a clear 17 km path


def link(*options):
    res = CliRunner().invoke(main, ["link", "--dem", str(DEM[0]), "--site-a", SITE_A, "--site-b", SITE_B,
                                    *[str(o) for o in options], "--json", "-"])
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def test_terrain_model_urban_node_loses_what_p2108_section_3_1_gives():
    # P.2108-1 section 3.1: the path with the antenna at R = max(h, R), plus A_h(h, R).
    base = ["--model", "terrain", "--mast-b", "1.5"]
    totals = {}
    for clutter in ("open", "urban"):
        r = default_height_m(clutter, "terrain")                  # P.2108-1 Table 3: 10 m, 15 m
        with_clutter = link(*base, "--clutter-b", clutter)
        at_r = link("--model", "terrain", "--mast-b", r)          # the same path with B's antenna at R
        f_ghz = with_clutter["frequency_mhz"] * 1e-3
        a_h = float(p2108.height_gain_correction_db(f_ghz, 1.5, clutter, r))
        loss = with_clutter["loss_db"]
        assert loss["clutter_b"] == pytest.approx(a_h, abs=1e-9) and a_h > 0
        assert loss["clutter_a"] == 0 and loss["building_entry_b"] == 0
        assert loss["basic_transmission"] == pytest.approx(at_r["loss_db"]["basic_transmission"], abs=1e-9)
        assert loss["total"] == pytest.approx(at_r["loss_db"]["total"] + a_h, abs=1e-9)
        assert with_clutter["site_b"]["clutter"] == clutter
        assert with_clutter["site_b"]["clutter_height_m"] == r
        assert with_clutter["site_b"]["clutter_source"] == "option" and with_clutter["site_a"]["clutter"] is None
        totals[clutter] = loss["total"]
    assert totals["urban"] > totals["open"]


def test_terrain_antenna_above_its_clutter_gets_no_correction():
    # Section 3.1: A_h = 0 for h >= R; the path at the antenna's own height.
    plain, above = link("--model", "terrain", "--mast-b", "20"), link("--model", "terrain", "--mast-b", "20",
                                                                       "--clutter-b", "urban")
    assert above["loss_db"]["clutter_b"] == 0 and above["loss_db"]["total"] == plain["loss_db"]["total"]


def test_clutter_statistics_is_section_3_2_at_the_location_percentage_instead():
    base = ["--model", "terrain", "--mast-b", "1.5", "--location-percent", "80"]
    plain, stats = link(*base), link(*base, "--clutter-b", "urban", "--clutter-statistics")
    f_ghz = stats["frequency_mhz"] * 1e-3
    l_ctt = float(p2108.terrestrial_clutter_loss_db(f_ghz, stats["distance_m"] * 1e-3, 80.0))
    # Never both: the path stays at the antenna's height (no section 3.1 raise), one term.
    assert stats["loss_db"]["clutter_b"] == pytest.approx(l_ctt, abs=1e-9)
    assert stats["loss_db"]["basic_transmission"] == pytest.approx(plain["loss_db"]["basic_transmission"], abs=1e-9)
    assert stats["loss_db"]["total"] == pytest.approx(plain["loss_db"]["total"] + l_ctt, abs=1e-9)
    # open land is not urban or suburban clutter: section 3.1 applies there
    open_end = link(*base, "--clutter-b", "open", "--clutter-statistics")
    assert open_end["loss_db"]["clutter_b"] == pytest.approx(
        float(p2108.height_gain_correction_db(f_ghz, 1.5, "open", 10.0)), abs=1e-9)


def test_p1812_urban_override_raises_the_profile_near_the_node():
    # P.1812-8 section 3.2: R at the interior points within --terminal-clutter-m of B, never at the ends.
    from profiler.engine.model import delta_n_from_k
    from profiler.propagation.p1812 import p1812_batch

    base = ["--model", "p1812", "--mast-b", "1.5"]
    plain, urban, open_end = link(*base), link(*base, "--clutter-b", "urban"), link(*base, "--clutter-b", "open")
    prof = urban["profile"]
    d, t = np.asarray(prof["distance_m"]), np.asarray(prof["terrain_m"])
    r = default_height_m("urban", "p1812")
    clutter = np.where((d >= d[-1] - 50.0) & (np.arange(d.size) > 0) & (np.arange(d.size) < d.size - 1), r, 0.0)
    assert clutter.sum() > 0                                # at least one sample is within 50 m of B
    out = p1812_batch(d[None] * 1e-3, t[None], clutter[None], np.full((1, d.size), 4), np.array([d.size]),
                      f_ghz=urban["frequency_mhz"] * 1e-3, time_percent=50.0,
                      htg_m=np.array([urban["site_a"]["mast_m"]]), hrg_m=np.array([1.5]), vertical=True,
                      delta_n=delta_n_from_k(urban["k_factor"]), n0=315.0, lat_t_deg=GATEWAY[0],
                      lon_t_deg=GATEWAY[1], lat_r_deg=TANK[0], lon_r_deg=TANK[1], dct_km=500.0, dcr_km=500.0,
                      location_percent=50.0, location_sigma_db=np.array([0.0]))
    assert urban["loss_db"]["basic_transmission"] == pytest.approx(float(out["lb_db"][0]), abs=1e-6)
    assert urban["loss_db"]["clutter_b"] == 0                 # the path itself carries the clutter
    assert urban["loss_db"]["total"] > open_end["loss_db"]["total"] + 10
    assert urban["p1812"]["rn1_m"] == r and plain["p1812"]["rn1_m"] == 0
    assert urban["site_b"]["clutter_height_m"] == r


def test_p1812_node_clutter_feeds_the_location_variability():
    # P.1812-8 section 4.7: u(h) = 1 for an antenna at or below R, so sigma_L of a 1.5 m node in 15 m clutter
    # is the full sigma_L(wa); the location term at 95 % is then sigma_L * I(0.95) (eq. 69), larger than in the
    # open (R = 0, the antenna 1.5 m above it: u(h) < 1).
    from scipy.special import ndtri

    from profiler.propagation.p1812 import location_sigma_db

    urban = link("--model", "p1812", "--mast-b", "1.5", "--clutter-b", "urban", "--location-percent", "95")
    f_ghz = urban["frequency_mhz"] * 1e-3
    sigma = float(location_sigma_db(f_ghz, 100.0))
    assert urban["loss_db"]["location"] == pytest.approx(sigma * float(ndtri(0.95)), abs=0.01)


@pytest.mark.parametrize("model,percent", [("terrain", "50"), ("p1812", "95")])
def test_indoor_node_gets_p2109_at_its_elevation_angle_and_the_location_percentage(model, percent):
    r = link("--model", model, "--mast-b", "1.5", "--location-percent", percent, "--indoor-b", "traditional",
             "--indoor-a", "thermally-efficient")
    plain = link("--model", model, "--mast-b", "1.5", "--location-percent", percent)
    # P.452-18 eq. (153): theta_b = atan((h_a - h_b) / d - d / (2 a_e)), heights AMSL, d the path length
    d, ae = r["distance_m"], r["effective_radius_m"]
    h_a, h_b = r["site_a"]["antenna_amsl_m"], r["site_b"]["antenna_amsl_m"]
    angle_b = math.degrees(math.atan((h_a - h_b) / d - d / (2 * ae)))
    angle_a = math.degrees(math.atan((h_b - h_a) / d - d / (2 * ae)))
    assert r["elevation_angle_b_deg"] == pytest.approx(angle_b, abs=1e-9)
    f_ghz = r["frequency_mhz"] * 1e-3
    bel_b = float(building_entry_loss_db(f_ghz, angle_b, float(percent), "traditional"))
    bel_a = float(building_entry_loss_db(f_ghz, angle_a, float(percent), "thermally-efficient"))
    assert r["loss_db"]["building_entry_b"] == pytest.approx(bel_b, abs=1e-9)
    assert r["loss_db"]["building_entry_a"] == pytest.approx(bel_a, abs=1e-9)
    assert r["loss_db"]["total"] == pytest.approx(plain["loss_db"]["total"] + bel_a + bel_b, abs=1e-9)
    assert (r["site_b"]["indoor"], r["site_a"]["indoor"]) == ("traditional", "thermally-efficient")


def test_per_end_extra_losses_are_shown_and_summed():
    plain = link("--model", "terrain")
    r = link("--model", "terrain", "--extra-loss-db", "1", "--extra-loss-a-db", "2.5", "--extra-loss-b-db", "7")
    loss = r["loss_db"]
    assert (loss["extra"], loss["extra_a"], loss["extra_b"]) == (1, 2.5, 7)
    assert loss["total"] == pytest.approx(plain["loss_db"]["total"] + 10.5, abs=1e-9)
    assert r["budget"]["path_loss_db"] == pytest.approx(loss["total"], abs=1e-9)
    assert (r["site_a"]["extra_loss_db"], r["site_b"]["extra_loss_db"]) == (2.5, 7)


def test_short_path_leaves_section_3_2_out_with_a_warning():
    # P.2108-1 section 3.2 covers paths of 0.25 km or more: a 0.1 km link gets no statistical term, and says so.
    from profiler.engine.model import PropagationSettings
    from profiler.engine.radio import RadioSettings
    from profiler.engine.terminals import terminal_ends, terrain_clutter

    radio = RadioSettings(propagation=PropagationSettings(model="terrain", clutter_b="urban",
                                                          clutter_statistics=True)).validate()
    ends = terminal_ends(radio, 2)
    out = terrain_clutter(868.0, np.array([110.0, 110.0]), np.array([101.5, 101.5]), np.array([100.0, 100.0]),
                          np.array([100.0, 100.0]), np.array([100.0, 2000.0]), ends, radio)
    assert out["clutter_b"][0] == 0 and out["skipped_b"][0]
    assert out["clutter_b"][1] == pytest.approx(float(p2108.terrestrial_clutter_loss_db(0.868, 2.0, 50.0)))


def test_p1812_override_without_a_sample_near_the_end_says_so():
    # --step-m 100: no interior sample within 50 m of B, so the class only reaches u(h) of sigma_L.
    coarse = link("--model", "p1812", "--mast-b", "1.5", "--step-m", "100", "--clutter-b", "urban")
    plain = link("--model", "p1812", "--mast-b", "1.5", "--step-m", "100")
    assert coarse["loss_db"]["basic_transmission"] == pytest.approx(plain["loss_db"]["basic_transmission"])
    said = [w for w in coarse["warnings"] if "--terminal-clutter-m" in w]
    assert len(said) == 1 and "end B" in said[0]
    near = link("--model", "p1812", "--mast-b", "1.5", "--step-m", "100", "--clutter-b", "urban",
                "--terminal-clutter-m", "150")
    assert not [w for w in near["warnings"] if "--terminal-clutter-m" in w]
    assert near["loss_db"]["basic_transmission"] > plain["loss_db"]["basic_transmission"]
