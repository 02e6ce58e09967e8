"""The ITU-R SG3 validation examples for Rec. ITU-R P.1812-8, read in place (test helper).

The data are ``../shared/reference/p1812-validation`` (see its README and
:mod:`reference_data`): 13 profile files in the SG3 data-bank text layout and
``expected.csv`` with one row per case (42) and every intermediate value.
This module reads them for ``tests/propagation/test_p1812.py`` (the module
itself) and ``tests/cli/test_p1812_validation.py`` (the same cases through
``profiler link``): the parser, the column groups and their tolerances, and
the one documented quirk of the examples' ``lbd_db`` column.
"""

import functools

import numpy as np
import pytest
from reference_data import expected_rows, missing_reason, reference_folder

DATA = reference_folder("p1812-validation")          # ../shared/reference/p1812-validation (see its README)
NO_DATA = pytest.mark.skipif(DATA is None, reason=missing_reason("p1812-validation"))
ROWS = expected_rows(DATA)
CITATION = "ITU-R SG3 validation examples for Rec. ITU-R P.1812-8"

#: Inputs, geometry, heights and angles of expected.csv: compared within 1e-3 (w_sea_fraction 1e-6).
GEOMETRY = ["r2_m", "rn1_m", "delta_n", "n0", "dct_km", "dcr_km", "htg_m", "hrg_m", "f_ghz", "time_percent",
            "polarization", "d_km", "dlt_km", "dlr_km", "theta_t_mrad", "theta_r_mrad", "theta_mrad", "hts_m", "hrs_m",
            "htc_table5_m", "hrc_table5_m", "w_sea_fraction", "dtm_km", "dlm_km", "phi_path_centre_deg",
            "beta0_percent", "ae_km", "hst_eq85_m", "hsr_eq86_m", "hst_eq90a_m", "hsr_eq90b_m", "hstd_m",
            "hsrd_m", "htc_eq37a_m", "hrc_eq37b_m", "hte_m", "hre_m", "hm_m"]

#: Losses [dB], the interpolation factors and the field strength of expected.csv: compared within 0.01
#: (``lbd_db`` apart: see :func:`reference_lbd_db`).
LOSSES = ["lbfs_db", "lb0p_db", "lb0b_db", "lbulla_db", "lbulls_db", "ldsph_db", "ld50_db", "ldb_db", "ldp_db",
          "lbd50_db", "fi", "lbs_db", "lba_db", "fj", "fk", "lminb0p_db", "lminbap_db", "lbda_db", "lbam_db",
          "lbc_db", "lb_db", "e_dbuv_m"]

#: SG3 radio-meteorological zone codes -> the zone names of a ``--profile`` CSV (README of the data).
ZONE_NAMES = {1: "sea", 3: "coastal", 4: "inland"}


def tolerance(column: str) -> float:
    """How close a value must come to expected.csv's: 0.01 for losses, 1e-3 for geometry, 1e-6 for ω."""
    if column == "w_sea_fraction":
        return 1e-6
    return 1e-3 if column in GEOMETRY else 0.01


def row_id(row) -> str:
    """``"b2iseac-0"``: profile file without ``.csv`` and the case's dataset number."""
    return f"{row['profile'][:-4]}-{row['dataset']}"


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


def lat_lon(header):
    """``(Tx lat, Tx lon, Rx lat, Rx lon)`` [deg] from an SG3 file's header."""
    return (float(header["Tx LAT"]), float(header["Tx LON"]), float(header["Rx LAT"]), float(header["Rx LON"]))


def lbd_kept(row) -> bool:
    """The examples' ``lbd_db`` holds Lbd of eq. (43): every row where Lminbap > Lbd (40 of 42)."""
    return float(row["lminbap_db"]) > float(row["lbd_db"])


def reference_lbd_db(row) -> float:
    """Lbd of eq. (43) for ``row`` [dB]: the examples' ``lbd_db``, or Lb0p + Ldp where they hold Lbda.

    Where the examples have Lminbap <= Lbd (rburg_urban_with_clutter 0 and 3)
    their ``lbd_db`` column holds Lbda of eq. (61) (equal to their ``lbda_db``);
    there Lbd (eq. 43) is ``lb0p_db + ldp_db`` of the same row, as in every
    other row.
    """
    if lbd_kept(row):
        return float(row["lbd_db"])
    return float(row["lb0p_db"]) + float(row["ldp_db"])
