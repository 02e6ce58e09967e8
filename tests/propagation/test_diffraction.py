"""Tests of profiler.propagation.diffraction against ITU-R texts, their validation data and scipy.

Check values come from:
- ITU-R SG3 validation examples for Rec. ITU-R P.452-18 (../shared/reference/p452-validation,
  see its README): every row of expected.csv.
- ITU-R P.526-15 section 4.1 (knife-edge v and J(v)) and section 4.5.1
  (Bullington construction), evaluated here by hand from the geometry.
- scipy.integrate.quad as an independent evaluation of the Fresnel integrals.
"""

import ast
import functools
import math
from pathlib import Path

import numpy as np
import pytest
from reference_data import expected_rows, missing_reason, reference_folder
from scipy.integrate import quad

from profiler.errors import ProfilerError
from profiler.propagation import diffraction
from profiler.propagation.diffraction import (
    DeltaBullington,
    bullington,
    delta_bullington,
    knife_edge,
    smooth_earth_heights,
    spherical_earth,
)
from profiler.propagation.diffraction_batch import j_knife_edge_db, j_knife_edge_exact_db

C0 = 299_792_458.0  # speed of light [m/s], SI definition
DATA = reference_folder("p452-validation")          # ../shared/reference/p452-validation (see its README)
NO_DATA = pytest.mark.skipif(DATA is None, reason=missing_reason("p452-validation"))


# ---------------------------------------------------------------------------
# ITU-R SG3 validation examples for Rec. ITU-R P.452-18
# ---------------------------------------------------------------------------

ROWS = expected_rows(DATA)


@functools.lru_cache(maxsize=None)
def _profile(name):
    """Published profile: column 1 distance [km], column 2 height [m amsl]."""
    data = np.loadtxt(DATA / "profiles" / f"{name}.csv", delimiter=",", skiprows=1, usecols=(0, 1))
    return data[:, 0] * 1000.0, data[:, 1]


def _row_id(row):
    return f"{row['profile']}-{row['f_ghz']}GHz-{row['polarization']}"


@NO_DATA
def test_validation_data_complete():
    # ITU-R SG3 validation examples for Rec. ITU-R P.452-18: 7 profiles, 125 rows.
    assert len(ROWS) == 125
    assert len({r["profile"] for r in ROWS}) == 7


@pytest.mark.parametrize("row", ROWS, ids=_row_id)
def test_delta_bullington_itu_validation(row):
    # Expected values: ITU-R SG3 validation examples for Rec. ITU-R P.452-18
    # (Ld, hstd, hsrd, Ldsph columns of expected.csv).
    d, h = _profile(row["profile"])
    res = delta_bullington(
        d, h,
        float(row["site_a_antenna_amsl_m"]), float(row["site_b_antenna_amsl_m"]),
        float(row["f_ghz"]) * 1000.0, float(row["effective_radius_km"]) * 1000.0,
        polarization=row["polarization"], sea_fraction=float(row["sea_fraction"]),
    )
    assert isinstance(res, DeltaBullington)
    assert res.loss_db == pytest.approx(float(row["Ld_delta_bullington_db"]), abs=0.01)
    assert res.effective_height_a_m == pytest.approx(float(row["hstd_m"]), abs=0.01)
    assert res.effective_height_b_m == pytest.approx(float(row["hsrd_m"]), abs=0.01)
    assert res.spherical_earth_db == pytest.approx(float(row["Ldsph_db"]), abs=0.01)
    # Internal consistency of P.452-18 eq. for Ld: Ld = Lbulla + max(Ldsph - Lbulls, 0).
    assert res.loss_db == pytest.approx(
        res.bullington_actual_db + max(res.spherical_earth_db - res.bullington_smooth_db, 0.0), abs=1e-9)


@pytest.mark.parametrize("row", ROWS[::6], ids=_row_id)
def test_spherical_earth_itu_validation(row):
    # Ldsph for the published modified heights hts - hstd, hrs - hsrd:
    # ITU-R SG3 validation examples for Rec. ITU-R P.452-18.
    d, _ = _profile(row["profile"])
    hts = float(row["site_a_antenna_amsl_m"]) - float(row["hstd_m"])
    hrs = float(row["site_b_antenna_amsl_m"]) - float(row["hsrd_m"])
    loss = spherical_earth(d[-1] - d[0], hts, hrs, float(row["f_ghz"]) * 1000.0,
                           float(row["effective_radius_km"]) * 1000.0,
                           polarization=row["polarization"], sea_fraction=float(row["sea_fraction"]))
    assert loss == pytest.approx(float(row["Ldsph_db"]), abs=0.01)


@pytest.mark.parametrize("name", sorted({r["profile"] for r in ROWS}))
def test_smooth_earth_heights_itu_validation(name):
    # hstd, hsrd: ITU-R SG3 validation examples for Rec. ITU-R P.452-18
    # (b2iseac_land_eqdist_no_clutter has a negative hsrd of -36.496 m).
    row = next(r for r in ROWS if r["profile"] == name)
    d, h = _profile(name)
    sh = smooth_earth_heights(d, h, float(row["site_a_antenna_amsl_m"]), float(row["site_b_antenna_amsl_m"]))
    assert sh.effective_height_a_m == pytest.approx(float(row["hstd_m"]), abs=0.01)
    assert sh.effective_height_b_m == pytest.approx(float(row["hsrd_m"]), abs=0.01)


def test_smooth_earth_heights_of_a_straight_slope():
    # A least-squares line through a terrain that is itself a straight line is
    # that line (property of least squares); no obstruction above the antenna
    # line, so hstd = hst and hsrd = hsr (P.452-18 Att. 2 section 5.1.6).
    d = np.linspace(0.0, 20_000.0, 401)
    h = 100.0 + 0.01 * d
    sh = smooth_earth_heights(d, h, 130.0, 330.0)
    assert sh.surface_height_a_m == pytest.approx(100.0, abs=1e-9)
    assert sh.surface_height_b_m == pytest.approx(300.0, abs=1e-9)
    assert sh.effective_height_a_m == pytest.approx(100.0, abs=1e-9)
    assert sh.effective_height_b_m == pytest.approx(300.0, abs=1e-9)


# ---------------------------------------------------------------------------
# Knife-edge loss J(v), ITU-R P.526-15 section 4.1
# ---------------------------------------------------------------------------

def test_j_approximation_matches_fresnel_form():
    # P.526-15 section 4.1 gives the closed form as an approximation of the
    # Fresnel-integral J(v) for v > -0.78; agreement within 0.2 dB (brief's
    # tolerance; the actual worst case is about 0.12 dB near v = 4.6).
    v = np.linspace(-0.78, 10.0, 4001)
    assert np.max(np.abs(j_knife_edge_db(v) - j_knife_edge_exact_db(v))) < 0.2


def test_j_at_grazing():
    # Exact: C(0) = S(0) = 0, so J(0) = -20 log10(1/2) = 6.0206 dB (P.526-15 eq. for J(v)).
    assert j_knife_edge_exact_db(0.0) == pytest.approx(20.0 * math.log10(2.0), abs=1e-12)
    # About 6 dB loss at grazing incidence (from memory, P.526 Fig. 9).
    assert j_knife_edge_db(0.0) == pytest.approx(6.02, abs=0.05)


@pytest.mark.parametrize("v", [50.0, 100.0, 300.0])
def test_j_large_v_asymptote(v):
    # J(v) ~ 13 + 20 log10(v) for large v (handbook asymptote, from memory).
    assert j_knife_edge_db(v) == pytest.approx(13.0 + 20.0 * math.log10(v), abs=0.15)
    assert j_knife_edge_exact_db(v) == pytest.approx(13.0 + 20.0 * math.log10(v), abs=0.15)


@pytest.mark.parametrize("v", [-2.0, -0.5, 0.5, 1.0, 2.4])
def test_j_exact_against_numerical_fresnel_integrals(v):
    # C(v), S(v) integrated independently with scipy.integrate.quad (P.526-15 section 2.7).
    c = quad(lambda t: math.cos(math.pi * t * t / 2.0), 0.0, v)[0]
    s = quad(lambda t: math.sin(math.pi * t * t / 2.0), 0.0, v)[0]
    expected = -20.0 * math.log10(math.hypot(1.0 - c - s, c - s) / 2.0)
    assert j_knife_edge_exact_db(v) == pytest.approx(expected, abs=1e-8)


def test_j_zero_below_threshold_and_shapes():
    # P.526-15 section 4.1: the approximation applies for v > -0.78; 0 dB below.
    assert j_knife_edge_db(-0.78) == 0.0
    assert j_knife_edge_db(-50.0) == 0.0
    v = np.array([[-3.0, -0.5], [0.0, 4.0]])
    out = j_knife_edge_db(v)
    assert out.shape == v.shape
    assert out[0, 0] == 0.0 and out[0, 1] > 0.0
    assert np.ndim(j_knife_edge_db(1.0)) == 0
    assert j_knife_edge_exact_db(v).shape == v.shape


# ---------------------------------------------------------------------------
# Knife edge and Bullington on synthetic obstacles
# ---------------------------------------------------------------------------

FLAT_EARTH_RADIUS_M = 1e15  # Earth-curvature term below 1e-7 m: negligible (tolerances 1e-6 dB)


def _single_obstacle(obstacle_m, n=1001, length_m=10_000.0, at_m=4_000.0):
    d = np.linspace(0.0, length_m, n)
    h = np.zeros(n)
    i = int(round(at_m / (length_m / (n - 1))))
    h[i] = obstacle_m
    return d, h, i


def _v_closed_form(h_m, d1_m, d2_m, wavelength_m):
    # P.526-15 section 4.1, eq. (22): v = h sqrt(2/lambda (1/d1 + 1/d2)).
    return h_m * math.sqrt(2.0 / wavelength_m * (1.0 / d1_m + 1.0 / d2_m))


def test_knife_edge_single_obstacle_flat_earth():
    f_mhz = 900.0
    lam = C0 / (f_mhz * 1e6)
    d, h, i = _single_obstacle(30.0)
    ke = knife_edge(d, h, 10.0, 10.0, f_mhz, FLAT_EARTH_RADIUS_M)
    expected_v = _v_closed_form(20.0, 4_000.0, 6_000.0, lam)
    assert ke.index == i
    assert ke.v_max == pytest.approx(expected_v, rel=1e-8)
    assert ke.loss_db == pytest.approx(float(j_knife_edge_db(expected_v)), abs=1e-6)


def test_knife_edge_includes_earth_bulge():
    # Effective-Earth bulge at the obstacle: d1 d2 / (2 a_e) (handbook formula,
    # P.526-15 / P.452-18 use 500 d1 d2 / a_e with km and m).
    f_mhz, ae = 2400.0, 8_500_000.0
    lam = C0 / (f_mhz * 1e6)
    d, h, i = _single_obstacle(30.0)
    bulge = 4_000.0 * 6_000.0 / (2.0 * ae)
    ke = knife_edge(d, h, 10.0, 10.0, f_mhz, ae)
    assert ke.index == i
    assert ke.v_max == pytest.approx(_v_closed_form(20.0 + bulge, 4_000.0, 6_000.0, lam), rel=1e-8)


def _bullington_from_uncorrected(luc_db, d_km):
    # P.452-18 eq. (22) / P.526-15 section 4.5.1: Lb = Luc + [1 - exp(-Luc/6)](10 + 0.02 d).
    return luc_db + (1.0 - math.exp(-luc_db / 6.0)) * (10.0 + 0.02 * d_km)


@pytest.mark.parametrize("obstacle_m", [30.0, 9.0])  # 20 m above / 1 m below the antenna line
def test_bullington_equals_knife_edge_for_single_obstacle(obstacle_m):
    # With one obstacle the Bullington point is the obstacle itself
    # (P.526-15 section 4.5.1), so Luc = J(v) of P.526-15 eq. (22).
    f_mhz = 450.0
    lam = C0 / (f_mhz * 1e6)
    d, h, _ = _single_obstacle(obstacle_m)
    v = _v_closed_form(obstacle_m - 10.0, 4_000.0, 6_000.0, lam)
    expected = _bullington_from_uncorrected(float(j_knife_edge_db(v)), 10.0)
    assert bullington(d, h, 10.0, 10.0, f_mhz, FLAT_EARTH_RADIUS_M) == pytest.approx(expected, abs=1e-6)
    ke = knife_edge(d, h, 10.0, 10.0, f_mhz, FLAT_EARTH_RADIUS_M)
    assert bullington(d, h, 10.0, 10.0, f_mhz, FLAT_EARTH_RADIUS_M) == pytest.approx(
        _bullington_from_uncorrected(ke.loss_db, 10.0), abs=1e-6)


def test_bullington_two_obstacles_equivalent_edge():
    # Trans-horizon Bullington construction (P.526-15 section 4.5.1): the
    # equivalent edge is where the steepest ray from A meets the steepest ray
    # from B.  Geometry solved here by hand on a flat Earth.
    f_mhz = 1000.0
    lam = C0 / (f_mhz * 1e6)
    d = np.linspace(0.0, 20_000.0, 201)  # 100 m step
    h = np.zeros_like(d)
    h[50], h[150] = 60.0, 40.0           # 5 km and 15 km
    ha, hb = 20.0, 10.0
    s_a = (60.0 - ha) / 5_000.0          # ray from A over the first hill
    s_b = (40.0 - hb) / 5_000.0          # ray from B over the second hill
    x = (hb + s_b * 20_000.0 - ha) / (s_a + s_b)
    y = ha + s_a * x
    height_above_los = y - (ha + (hb - ha) * x / 20_000.0)
    v = _v_closed_form(height_above_los, x, 20_000.0 - x, lam)
    expected = _bullington_from_uncorrected(float(j_knife_edge_db(v)), 20.0)
    assert bullington(d, h, ha, hb, f_mhz, FLAT_EARTH_RADIUS_M) == pytest.approx(expected, abs=1e-6)
    res = delta_bullington(d, h, ha, hb, f_mhz, FLAT_EARTH_RADIUS_M)
    assert res.trans_horizon
    assert res.bullington_v == pytest.approx(v, rel=1e-8)


# ---------------------------------------------------------------------------
# Bad input
# ---------------------------------------------------------------------------

def _good():
    d = np.linspace(0.0, 5_000.0, 51)
    return dict(distance_m=d, height_m=np.zeros_like(d), h_tx_amsl_m=10.0, h_rx_amsl_m=10.0,
                frequency_mhz=868.0, effective_radius_m=8_500_000.0)


@pytest.mark.parametrize("change", [
    {"polarization": "circular"},
    {"polarization": None},
    {"sea_fraction": 1.5},
    {"sea_fraction": -0.1},
    {"sea_fraction": "lots"},
    {"frequency_mhz": 0.0},
    {"frequency_mhz": float("nan")},
    {"effective_radius_m": -1.0},
    {"h_tx_amsl_m": float("inf")},
    {"height_m": np.zeros(50)},
    {"distance_m": np.array([0.0, 10.0]), "height_m": np.array([0.0, 0.0])},
    {"distance_m": np.r_[0.0, np.linspace(0.0, 5_000.0, 50)]},
    {"height_m": np.r_[np.zeros(50), np.nan]},
    {"height_m": np.zeros((51, 1))},
    {"height_m": ["high"] * 51},
])
def test_bad_input_raises_profiler_error(change):
    args = {**_good(), **change}
    with pytest.raises(ProfilerError):
        delta_bullington(**args)


def test_spherical_earth_rejects_negative_height_and_bad_polarization():
    with pytest.raises(ProfilerError):
        spherical_earth(10_000.0, -1.0, 10.0, 868.0, 8.5e6)
    with pytest.raises(ProfilerError):
        spherical_earth(10_000.0, 10.0, 10.0, 868.0, 8.5e6, polarization="diagonal")


def test_polarization_is_case_insensitive():
    a = delta_bullington(**_good(), polarization="Horizontal")
    b = delta_bullington(**_good(), polarization="horizontal")
    assert a == b


# ---------------------------------------------------------------------------
# Vectorization and speed
# ---------------------------------------------------------------------------

def test_module_has_no_python_loops():
    # Design rule (DEVELOPERS.md): no Python loops over profile samples.
    from profiler.propagation import diffraction_batch as diffraction_engine

    for module in (diffraction, diffraction_engine):
        tree = ast.parse(Path(module.__file__).read_text())
        loops = [node.lineno for node in ast.walk(tree)
                 if isinstance(node, (ast.For, ast.While, ast.comprehension))]
        assert loops == [], module.__name__


def test_batch_equals_single_profiles():
    # One engine: a batch of padded profiles of different lengths gives, row by row, exactly the
    # single-profile results (the single-profile functions are checked against the ITU-R SG3
    # validation examples above).  The check value is the scalar path, validated externally.
    rng = np.random.default_rng(7)
    rows = []
    for n in (5, 40, 333):
        d = np.linspace(0.0, rng.uniform(2e3, 4e4), n)
        h = 100.0 + rng.uniform(0.0, 120.0, n)
        rows.append((d, h, h[0] + rng.uniform(1, 30), h[-1] + rng.uniform(1, 30)))
    n_max = max(r[0].size for r in rows)
    dd = np.zeros((3, n_max))
    hh = np.zeros((3, n_max))
    for i, (d, h, _, _) in enumerate(rows):
        dd[i, :d.size], hh[i, :h.size] = d, h
    out = diffraction.diffraction_batch(dd, hh, np.array([r[0].size for r in rows]),
                                        np.array([r[2] for r in rows]), np.array([r[3] for r in rows]),
                                        868.0, 8.5e6)
    for i, (d, h, ha, hb) in enumerate(rows):
        single = delta_bullington(d, h, ha, hb, 868.0, 8.5e6)
        assert out["delta_bullington"][i] == pytest.approx(single.loss_db, abs=1e-9)
        assert out["spherical_earth"][i] == pytest.approx(single.spherical_earth_db, abs=1e-9)
        assert out["knife_edge"][i] == pytest.approx(knife_edge(d, h, ha, hb, 868.0, 8.5e6).loss_db, abs=1e-9)


@NO_DATA
def test_batch_with_one_frequency_per_link_and_explicit_bullington_heights():
    # ITU-R SG3 validation examples for Rec. ITU-R P.452-18: two rows of different frequencies in one
    # batch (frequency per link) give each row's Ld column; passing the terrain itself as
    # bullington_height_m changes nothing.
    from profiler.propagation.diffraction_batch import diffraction_batch

    rows = [r for r in ROWS if r["profile"] == ROWS[0]["profile"]]
    rows = [rows[0], next(r for r in rows if r["f_ghz"] != rows[0]["f_ghz"])]
    d, h = _profile(rows[0]["profile"])
    dd, hh = np.vstack([d, d]), np.vstack([h, h])
    n = np.array([len(d), len(d)])
    args = (dd, hh, n, [float(r["site_a_antenna_amsl_m"]) for r in rows],
            [float(r["site_b_antenna_amsl_m"]) for r in rows], np.array([float(r["f_ghz"]) * 1000.0 for r in rows]),
            np.array([float(r["effective_radius_km"]) * 1000.0 for r in rows]))
    kw = dict(vertical=np.array([r["polarization"] == "vertical" for r in rows]),
              sea_fraction=np.array([float(r["sea_fraction"]) for r in rows]))
    res = diffraction_batch(*args, **kw)
    same = diffraction_batch(*args, **kw, bullington_height_m=hh)
    assert np.array_equal(res["delta_bullington"], same["delta_bullington"])
    for i, r in enumerate(rows):
        assert abs(res["delta_bullington"][i] - float(r["Ld_delta_bullington_db"])) <= 1e-3, _row_id(r)
