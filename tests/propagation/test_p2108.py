"""Tests of profiler.propagation.p2108 against the U.S. reference implementation of Rec. ITU-R P.2108-1.

Check values: NTIA/ITS "Recommendation ITU-R P.2108 - U.S. Reference
Software Implementation", Python package ``proplib-p2108`` (module
``ITS.ITU.PSeries.P2108``, a wrapper of the compiled library; the ``test``
extra installs it): section 3.1 (``HeightGainTerminalCorrectionModel``)
over frequencies, antenna heights, clutter classes, clutter heights and
street widths; section 3.2 (``TerrestrialStatisticalModel``) over
frequencies, distances and location percentages; all within 0.01 dB.  The
default clutter heights come from P.2108-1 Table 3 (also listed in the
reference implementation's documentation).
"""

import itertools

import numpy as np
import pytest

from profiler.errors import ProfilerError
from profiler.propagation import p2108

reference = pytest.importorskip("ITS.ITU.PSeries.P2108.p2108", reason="proplib-p2108 (the test extra) not installed")

# P.2108-1 Table 3, the classes as the reference implementation names them.
REFERENCE_TYPE = {"water": reference.ClutterType.WaterSea, "open": reference.ClutterType.OpenRural,
                  "suburban": reference.ClutterType.Suburban, "urban": reference.ClutterType.Urban,
                  "trees": reference.ClutterType.TreesForest, "dense-urban": reference.ClutterType.DenseUrban}
TABLE_3_HEIGHT_M = {"water": 10, "open": 10, "suburban": 10, "urban": 15, "trees": 15, "dense-urban": 20}

FREQUENCIES_31_GHZ = [0.03, 0.1, 0.433, 0.868, 0.915, 1.8, 3.0]
HEIGHTS_M = [0.2, 1.0, 1.5, 3.0, 5.0, 9.9, 10.0, 14.0, 15.0, 19.5, 25.0]
STREET_WIDTHS_M = [8.0, 27.0, 60.0]


def test_table_3_default_heights():
    assert p2108.DEFAULT_CLUTTER_HEIGHT_M == TABLE_3_HEIGHT_M
    np.testing.assert_array_equal(p2108.representative_height_m(list(TABLE_3_HEIGHT_M)),
                                  list(TABLE_3_HEIGHT_M.values()))


def _grid(*axes):
    """Columns of the cartesian product of ``axes`` (one array per axis)."""
    return [np.array(column) for column in zip(*itertools.product(*axes))]


def test_height_gain_matches_reference_at_table_3_heights():
    f, h, kind, ws = _grid(FREQUENCIES_31_GHZ, HEIGHTS_M, p2108.CLUTTER_CLASSES, STREET_WIDTHS_M)
    ours = p2108.height_gain_correction_db(f, h, kind, street_width_m=ws)     # one vectorized call
    expected = [reference.HeightGainTerminalCorrectionModel(fi, hi, wi, TABLE_3_HEIGHT_M[ki], REFERENCE_TYPE[ki])
                for fi, hi, ki, wi in zip(f, h, kind, ws)]
    np.testing.assert_allclose(ours, expected, rtol=0, atol=0.01)
    assert np.ptp(expected) > 30          # the grid spans the corrections, not just zeros


@pytest.mark.parametrize("clutter_height_m", [4.0, 12.5, 30.0])
def test_height_gain_matches_reference_at_other_clutter_heights(clutter_height_m):
    f, h, kind = _grid(FREQUENCIES_31_GHZ, HEIGHTS_M, p2108.CLUTTER_CLASSES)
    ours = p2108.height_gain_correction_db(f, h, kind, clutter_height_m)
    expected = [reference.HeightGainTerminalCorrectionModel(fi, hi, 27.0, clutter_height_m, REFERENCE_TYPE[ki])
                for fi, hi, ki in zip(f, h, kind)]
    np.testing.assert_allclose(ours, expected, rtol=0, atol=0.01)


@pytest.mark.parametrize("f_ghz, h_m, r_m, ws_m", [
    (0.0299, 1.5, 15.0, 27.0), (3.01, 1.5, 15.0, 27.0), (0.868, 0.0, 15.0, 27.0),
    (0.868, 1.5, 0.0, 27.0), (0.868, 1.5, 15.0, 0.0)])
def test_height_gain_out_of_range_is_nan_where_the_reference_refuses(f_ghz, h_m, r_m, ws_m):
    with pytest.raises(Exception, match="must be"):
        reference.HeightGainTerminalCorrectionModel(f_ghz, h_m, ws_m, r_m, REFERENCE_TYPE["urban"])
    assert np.isnan(p2108.height_gain_correction_db(f_ghz, h_m, "urban", r_m, ws_m))
    # the other elements of the same batch are still computed
    batch = p2108.height_gain_correction_db([f_ghz, 0.868], [h_m, 1.5], "urban", [r_m, 15.0], [ws_m, 27.0])
    assert np.isnan(batch[0]) and np.isfinite(batch[1])


def test_unknown_clutter_class_is_refused_by_name():
    with pytest.raises(ProfilerError, match="'forest'.*water, open, suburban, urban, trees, dense-urban"):
        p2108.height_gain_correction_db(0.868, 1.5, ["urban", "forest"])


def test_node_in_urban_clutter_loses_more_than_in_open():
    # 868 MHz, antenna at 1.5 m, Table 3 heights: urban (eq. 2a, R = 15 m) against open (eq. 2b, R = 10 m).
    urban, open_ = p2108.height_gain_correction_db(0.868, 1.5, ["urban", "open"])
    assert urban == pytest.approx(reference.HeightGainTerminalCorrectionModel(
        0.868, 1.5, 27.0, 15.0, REFERENCE_TYPE["urban"]), abs=0.01)
    assert urban > open_ > 0


def test_terminal_path_height_is_the_clutter_height_below_it():
    np.testing.assert_array_equal(p2108.terminal_path_height_m([1.5, 12.0, 30.0], 15.0), [15.0, 15.0, 30.0])


FREQUENCIES_32_GHZ = [0.5, 0.868, 2.0, 6.0, 28.0, 67.0]
DISTANCES_KM = [0.25, 0.5, 1.0, 2.0, 3.0, 10.0, 100.0]
PERCENTAGES = [1e-4, 1.0, 10.0, 50.0, 90.0, 99.0, 99.99]


def test_statistical_loss_matches_reference():
    f, d, p = _grid(FREQUENCIES_32_GHZ, DISTANCES_KM, PERCENTAGES)
    ours = p2108.terrestrial_clutter_loss_db(f, d, p)
    expected = [reference.TerrestrialStatisticalModel(fi, di, pi) for fi, di, pi in zip(f, d, p)]
    np.testing.assert_allclose(ours, expected, rtol=0, atol=0.01)
    assert np.ptp(expected) > 30


def test_statistical_loss_grows_with_the_location_percentage():
    loss = p2108.terrestrial_clutter_loss_db(0.868, 3.0, np.linspace(1, 99, 50))
    assert np.all(np.diff(loss) > 0)


@pytest.mark.parametrize("f_ghz, d_km, p", [
    (0.49, 1.0, 50.0), (67.5, 1.0, 50.0), (0.868, 0.24, 50.0), (0.868, 1.0, 0.0), (0.868, 1.0, 100.0)])
def test_statistical_loss_out_of_range_is_nan_where_the_reference_refuses(f_ghz, d_km, p):
    with pytest.raises(Exception, match="must be"):
        reference.TerrestrialStatisticalModel(f_ghz, d_km, p)
    assert np.isnan(p2108.terrestrial_clutter_loss_db(f_ghz, d_km, p))
    batch = p2108.terrestrial_clutter_loss_db([f_ghz, 0.868], [d_km, 1.0], [p, 50.0])
    assert np.isnan(batch[0]) and np.isfinite(batch[1])
