"""Tests of profiler.propagation.p1812 against the ITU-R SG3 validation examples for Rec. ITU-R P.1812-8.

Check values: ITU-R SG3 validation examples for Rec. ITU-R P.1812-8
(../shared/reference/p1812-validation, see its README): every row of
expected.csv, every column the module computes so far, within 0.01 dB
(heights, distances and angles within 1e-3).  The profile files are read in
their SG3 data-bank layout by the test helper ``tests/sg3_p1812.py`` (shared
with ``tests/cli/test_p1812_validation.py``, the same cases through the CLI).
"""

import functools

import numpy as np
import pytest
from reference_data import missing_reason
from sg3_p1812 import (
    DATA,
    GEOMETRY,
    LOSSES,
    NO_DATA,
    ROWS,
    lat_lon,
    lbd_kept,
    read_sg3_file,
    read_sg3_profile,
    reference_lbd_db,
    row_id,
    tolerance,
)

from profiler.propagation import p1812


def _batch(rows):
    """The module run over all ``rows`` at once (one padded batch)."""
    profiles = [read_sg3_profile(r["profile"])[1] for r in rows]
    n = np.array([len(p) for p in profiles])
    shape = (len(rows), n.max())
    d, h, r, z = (np.full(shape, np.nan) for _ in range(4))
    for i, p in enumerate(profiles):
        d[i, :n[i]], h[i, :n[i]], r[i, :n[i]], z[i, :n[i]] = p[:, 0], p[:, 1], p[:, 3], p[:, 4]
    coords = np.array([lat_lon(read_sg3_profile(r["profile"])[0]) for r in rows]).T
    col = {k: np.array([float(r[k]) for r in rows]) for k in ("f_ghz", "time_percent", "htg_m", "hrg_m",
                                                              "polarization", "delta_n", "n0", "dct_km",
                                                              "dcr_km")}
    return p1812.p1812_batch(d, h, r, np.nan_to_num(z).astype(int), n, f_ghz=col["f_ghz"],
                             time_percent=col["time_percent"], htg_m=col["htg_m"], hrg_m=col["hrg_m"],
                             vertical=col["polarization"] == 2, delta_n=col["delta_n"], n0=col["n0"],
                             lat_t_deg=coords[0], lon_t_deg=coords[1], lat_r_deg=coords[2],
                             lon_r_deg=coords[3], dct_km=col["dct_km"], dcr_km=col["dcr_km"])


@functools.lru_cache(maxsize=None)
def _result():
    return _batch(ROWS)


@NO_DATA
def test_validation_data_complete():
    # ITU-R SG3 validation examples for Rec. ITU-R P.1812-8: 13 profiles, 42 cases.
    assert len(ROWS) == 42
    assert len({r["profile"] for r in ROWS}) == 13


def test_parser_reads_header_and_profile():
    if DATA is None:
        pytest.skip(missing_reason("p1812-validation"))
    header, columns = read_sg3_profile("b2iseac.csv")
    # ITU-R SG3 validation examples for Rec. ITU-R P.1812-8, b2iseac.csv: 211 points, 235.1 km.
    assert columns.shape == (211, 5)
    assert columns[-1, 0] == 235.1
    assert float(header["Average annual values dN (N-units/km)"]) == 45.0


@pytest.mark.parametrize("column", GEOMETRY)
@NO_DATA
def test_geometry_every_row(column):
    # Expected: ITU-R SG3 validation examples for Rec. ITU-R P.1812-8, expected.csv column `column`.
    got = np.asarray(_result()[column], dtype=float)
    want = np.array([float(r[column]) for r in ROWS])
    tol = tolerance(column)
    bad = [(row_id(r), g, w) for r, g, w in zip(ROWS, got, want) if not abs(g - w) <= tol]
    assert not bad, bad


@pytest.mark.parametrize("column", LOSSES)
@NO_DATA
def test_losses_every_row(column):
    # Expected: ITU-R SG3 validation examples for Rec. ITU-R P.1812-8, expected.csv column `column` [dB].
    got = np.asarray(_result()[column], dtype=float)
    want = np.array([float(r[column]) for r in ROWS])
    bad = [(row_id(r), g, w) for r, g, w in zip(ROWS, got, want) if not abs(g - w) <= tolerance(column)]
    assert not bad, bad


@NO_DATA
def test_lbd_eq43_every_row_where_the_examples_keep_it():
    # Expected: ITU-R SG3 validation examples for Rec. ITU-R P.1812-8, column lbd_db [dB].  Where the
    # examples have Lminbap <= Lbd (2 of 42 rows, rburg_urban_with_clutter 0 and 3) their lbd_db holds
    # Lbda of eq. (61) (equal to their lbda_db, checked in test_losses_every_row); there lbd_db (eq. 43)
    # is Lb0p + Ldp, as in every other row.
    got = np.asarray(_result()["lbd_db"], dtype=float)
    assert sum(lbd_kept(r) for r in ROWS) == 40
    for row, g in zip(ROWS, got):
        want = reference_lbd_db(row)
        assert abs(g - want) <= 0.01, (row_id(row), g, want)


def _measurement_rows(name):
    """Measurement block of an SG3 profile file: (p [%], e.r.p. [dBW], E [dBuV/m], Lb [dB]) per case."""
    cases = [cells for cells in read_sg3_file(name)[1]["Measurements"] if cells[0]]
    return [(float(c[14]), float(c[12]), float(c[16]), float(c[17])) for c in cases]


@NO_DATA
def test_lb_matches_the_profile_files_own_reference_values():
    # Expected: ITU-R SG3 validation examples for Rec. ITU-R P.1812-8, the measurement block of each
    # profile file (columns 13, 15, 17, 18: total e.r.p. [dBW], p [%], field strength [dBuV/m] for that
    # e.r.p., basic transmission loss Lb [dB]); e_dbuv_m is for 1 kW (30 dBW).
    res = _result()
    for i, row in enumerate(ROWS):
        p, erp_dbw, e, lb = _measurement_rows(row["profile"])[int(row["dataset"])]
        assert p == float(row["time_percent"])
        assert abs(res["lb_db"][i] - lb) <= 0.01, (row_id(row), res["lb_db"][i], lb)
        e_got = res["e_dbuv_m"][i] + erp_dbw - 30.0
        assert abs(e_got - e) <= 0.01, (row_id(row), e_got, e)


@NO_DATA
def test_one_path_alone_gives_what_the_padded_batch_gives():
    # Padding must not change a path's result: each row alone equals its row in the batch of 42
    # (the check values are the batch's; both are validated against the SG3 examples above).
    whole = _result()
    for i in (0, 13, 24, 41):
        alone = _batch([ROWS[i]])
        for key in ("theta_t_mrad", "hstd_m", "ld50_db", "lba_db", "lb_db"):
            assert alone[key][0] == pytest.approx(whole[key][i], abs=1e-9), (row_id(ROWS[i]), key)


def test_path_centre_latitude_is_the_midpoint_on_the_6371_km_sphere():
    # Check values: pyproj.Geod on a sphere of 6371 km (a = b, Karney's geodesics): the point d/2 along the
    # great circle from the transmitter towards the receiver (P.1812-8 section 3, φ); paths near a pole, across
    # 120 deg of longitude, across the antimeridian, short (15 m) and zero length
    from pyproj import Geod

    sphere = Geod(a=6_371_000.0, b=6_371_000.0)
    lat_t = np.array([45.5, -33.9, 89.2, 10.0, 0.0, 60.0, 12.3, 51.0])
    lon_t = np.array([7.5, 18.4, 20.0, 179.9, -60.0, -150.0, 45.0, 1.0])
    lat_r = np.array([45.6, -34.5, 88.9, 10.5, 1.0, 58.0, 12.3, 51.0])
    lon_r = np.array([7.8, 19.9, -100.0, -179.6, 60.0, -30.0, 45.000_15, 1.0])
    az, _, dist_m = sphere.inv(lon_t, lat_t, lon_r, lat_r)
    _, expected, _ = sphere.fwd(lon_t, lat_t, az, dist_m / 2.0)
    got = p1812.path_centre_latitude_deg(lat_t, lon_t, lat_r, lon_r, dist_m * 1e-3)
    np.testing.assert_allclose(got, expected, rtol=0, atol=1e-9)
    # one transmitter for every path (a coverage map's site) gives the same
    one = p1812.path_centre_latitude_deg(45.5, 7.5, lat_r, lon_r, dist_m * 1e-3)
    np.testing.assert_allclose(one, p1812.path_centre_latitude_deg(np.full(8, 45.5), np.full(8, 7.5), lat_r, lon_r,
                                                                   dist_m * 1e-3), rtol=0, atol=0)
