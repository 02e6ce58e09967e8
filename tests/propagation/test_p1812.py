"""Tests of profiler.propagation.p1812 against the ITU-R SG3 validation examples for Rec. ITU-R P.1812-8.

Check values: ITU-R SG3 validation examples for Rec. ITU-R P.1812-8
(../shared/reference/p1812-validation, see its README): every row of
expected.csv, every column the module computes so far, within 0.01 dB
(heights, distances and angles within 1e-3).  The profile files are read in
their SG3 data-bank layout by the small parser below (test helper only).
"""

import functools

import numpy as np
import pytest
from reference_data import expected_rows, missing_reason, reference_folder

from profiler.propagation import p1812

DATA = reference_folder("p1812-validation")          # ../shared/reference/p1812-validation (see its README)
NO_DATA = pytest.mark.skipif(DATA is None, reason=missing_reason("p1812-validation"))


ROWS = expected_rows(DATA)


@functools.lru_cache(maxsize=None)
def read_sg3_file(name):
    """An SG3 data-bank file: header values and the cells of each ``{Begin of X}`` .. ``{End of X}`` block."""
    header, blocks, block = {}, {}, None
    for line in (DATA / "profiles" / name).read_text(encoding="latin-1").splitlines():
        cells = [c.strip() for c in line.split(",")]
        if cells[0].startswith("{Begin of "):
            block = blocks.setdefault(cells[0][len("{Begin of "):-1], [])
        elif cells[0].startswith("{End of "):
            block = None
        elif len(cells) > 1 and cells[0].endswith(":") and cells[1]:
            header[cells[0][:-1]] = cells[1]        # "Name:,value" lines, also in the meteorology block
        elif block is not None:
            block.append(cells)
    return header, blocks


@functools.lru_cache(maxsize=None)
def read_sg3_profile(name):
    """One SG3 profile: header values and the profile columns (d [km], h [m], code, R [m], zone)."""
    header, blocks = read_sg3_file(name)
    samples = [[float(c) for c in cells[:5]] for cells in blocks["Profile"] if cells[0][:1].isdigit()]
    return header, np.array(samples)


def _lat_lon(header):
    return (float(header["Tx LAT"]), float(header["Tx LON"]), float(header["Rx LAT"]), float(header["Rx LON"]))


def _batch(rows):
    """The module run over all ``rows`` at once (one padded batch)."""
    profiles = [read_sg3_profile(r["profile"])[1] for r in rows]
    n = np.array([len(p) for p in profiles])
    shape = (len(rows), n.max())
    d, h, r, z = (np.full(shape, np.nan) for _ in range(4))
    for i, p in enumerate(profiles):
        d[i, :n[i]], h[i, :n[i]], r[i, :n[i]], z[i, :n[i]] = p[:, 0], p[:, 1], p[:, 3], p[:, 4]
    lat_lon = np.array([_lat_lon(read_sg3_profile(r["profile"])[0]) for r in rows]).T
    col = {k: np.array([float(r[k]) for r in rows]) for k in ("f_ghz", "time_percent", "htg_m", "hrg_m",
                                                              "polarization", "delta_n", "n0", "dct_km",
                                                              "dcr_km")}
    return p1812.p1812_batch(d, h, r, np.nan_to_num(z).astype(int), n, f_ghz=col["f_ghz"],
                             time_percent=col["time_percent"], htg_m=col["htg_m"], hrg_m=col["hrg_m"],
                             vertical=col["polarization"] == 2, delta_n=col["delta_n"], n0=col["n0"],
                             lat_t_deg=lat_lon[0], lon_t_deg=lat_lon[1], lat_r_deg=lat_lon[2],
                             lon_r_deg=lat_lon[3], dct_km=col["dct_km"], dcr_km=col["dcr_km"])


@functools.lru_cache(maxsize=None)
def _result():
    return _batch(ROWS)


GEOMETRY = ["r2_m", "rn1_m", "delta_n", "n0", "dct_km", "dcr_km", "htg_m", "hrg_m", "f_ghz", "time_percent",
            "polarization", "d_km", "dlt_km", "dlr_km", "theta_t_mrad", "theta_r_mrad", "theta_mrad", "hts_m", "hrs_m",
            "htc_table5_m", "hrc_table5_m", "w_sea_fraction", "dtm_km", "dlm_km", "phi_path_centre_deg",
            "beta0_percent", "ae_km", "hst_eq85_m", "hsr_eq86_m", "hst_eq90a_m", "hsr_eq90b_m", "hstd_m",
            "hsrd_m", "htc_eq37a_m", "hrc_eq37b_m", "hte_m", "hre_m", "hm_m"]


LOSSES = ["lbfs_db", "lb0p_db", "lb0b_db", "lbulla_db", "lbulls_db", "ldsph_db", "ld50_db", "ldb_db", "ldp_db",
          "lbd50_db", "fi", "lbs_db", "lba_db", "fj", "fk", "lminb0p_db", "lminbap_db", "lbda_db", "lbam_db",
          "lbc_db", "lb_db", "e_dbuv_m"]


def _row_id(row):
    return f"{row['profile'][:-4]}-{row['dataset']}"


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
    tol = 1e-3 if column != "w_sea_fraction" else 1e-6
    bad = [(_row_id(r), g, w) for r, g, w in zip(ROWS, got, want) if not abs(g - w) <= tol]
    assert not bad, bad


@pytest.mark.parametrize("column", LOSSES)
@NO_DATA
def test_losses_every_row(column):
    # Expected: ITU-R SG3 validation examples for Rec. ITU-R P.1812-8, expected.csv column `column` [dB].
    got = np.asarray(_result()[column], dtype=float)
    want = np.array([float(r[column]) for r in ROWS])
    bad = [(_row_id(r), g, w) for r, g, w in zip(ROWS, got, want) if not abs(g - w) <= 0.01]
    assert not bad, bad


@NO_DATA
def test_lbd_eq43_every_row_where_the_examples_keep_it():
    # Expected: ITU-R SG3 validation examples for Rec. ITU-R P.1812-8, column lbd_db [dB].  Where the
    # examples have Lminbap <= Lbd (2 of 42 rows, rburg_urban_with_clutter 0 and 3) their lbd_db holds
    # Lbda of eq. (61) (equal to their lbda_db, checked in test_losses_every_row); there lbd_db (eq. 43)
    # is Lb0p + Ldp, as in every other row.
    got = np.asarray(_result()["lbd_db"], dtype=float)
    kept = [float(r["lminbap_db"]) > float(r["lbd_db"]) for r in ROWS]
    assert sum(kept) == 40
    for row, g, keep in zip(ROWS, got, kept):
        want = float(row["lbd_db"]) if keep else float(row["lb0p_db"]) + float(row["ldp_db"])
        assert abs(g - want) <= 0.01, (_row_id(row), g, want)


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
        assert abs(res["lb_db"][i] - lb) <= 0.01, (_row_id(row), res["lb_db"][i], lb)
        e_got = res["e_dbuv_m"][i] + erp_dbw - 30.0
        assert abs(e_got - e) <= 0.01, (_row_id(row), e_got, e)


@NO_DATA
def test_one_path_alone_gives_what_the_padded_batch_gives():
    # Padding must not change a path's result: each row alone equals its row in the batch of 42
    # (the check values are the batch's; both are validated against the SG3 examples above).
    whole = _result()
    for i in (0, 13, 24, 41):
        alone = _batch([ROWS[i]])
        for key in ("theta_t_mrad", "hstd_m", "ld50_db", "lba_db", "lb_db"):
            assert alone[key][0] == pytest.approx(whole[key][i], abs=1e-9), (_row_id(ROWS[i]), key)
