"""The coverage kernels (numba) against the numpy link engine.

The point of these checks is that two implementations agree: the compiled
reductions of :mod:`profiler.propagation.prefix_kernel` (``--model terrain``)
and :mod:`profiler.propagation.p1812.prefix` (``--model p1812``) followed by
the shared per-link formulas must give the same bands as the numpy prefix
batches of :func:`profiler.engine.geometry.geometry_batch` /
:func:`profiler.propagation.diffraction_batch.diffraction_batch` /
:func:`profiler.propagation.p1812.p1812_batch` (the engine whose ITU-R checks
are in test_diffraction.py and test_p1812.py) to rounding: 1e-9 dB / 1e-9 of
the Fresnel ratio for terrain, 1e-6 dB for P.1812-8.  Skipped without numba
(the optional ``fast`` extra).
"""

import subprocess
import sys

import numpy as np
import pytest
from sample_sites import DEM, GATEWAY

pytest.importorskip("numba")

from profiler.engine.model import PropagationSettings  # noqa: E402
from profiler.engine.radio import RadioSettings  # noqa: E402
from profiler.products.coverage.map import _settings, coverage
from profiler.products.coverage.radials import radial_fields  # noqa: E402

TOL = 1e-9
TOL_P1812_DB = 1e-6
TERRAIN = PropagationSettings(model="terrain")


def _random_radials(seed):
    """Rough random terrain on radials of different lengths, NaN-padded (one too short, one empty)."""
    rng = np.random.default_rng(seed)
    n = np.array([90, 61, 3, 2, 0, 47, 90])
    d = np.tile(np.arange(90) * 30.0, (n.size, 1))
    t = 150.0 + np.cumsum(rng.normal(0.0, 6.0, d.shape), axis=1)
    t[5] += 40.0 * np.exp(-((d[5] - 700.0) / 60.0) ** 2)   # a ridge: a trans-horizon stretch
    for r, m in enumerate(n):
        d[r, m:], t[r, m:] = np.nan, np.nan
    return d, t, n


def _coordinates(d):
    """Site and sample coordinates of the random radials: along a meridian from an invented site [deg]."""
    return {"lat_a_deg": -29.9, "lon_a_deg": -19.95, "lat_b_deg": -29.9 + d / 111_195.0,
            "lon_b_deg": np.full(d.shape, -19.95)}


def _assert_kernel_equals_numpy(st, tol):
    for seed in (1, 2):
        d, t, n = _random_radials(seed)
        over = {"tx_power_dbm": 20.0, "gain_dbi": 5.0} if seed == 2 else None   # the site's own radio values
        ref = radial_fields(d, t, n, 10.0, 1.5, st, over, kernel=False, coordinates=_coordinates(d))
        got = radial_fields(d, t, n, 10.0, 1.5, st, over, kernel=True, coordinates=_coordinates(d))
        for key in ref:
            assert np.array_equal(np.isfinite(ref[key]), np.isfinite(got[key])), key
            ok = np.isfinite(ref[key])
            assert ok.sum() > 200, key
            np.testing.assert_allclose(got[key][ok], ref[key][ok], rtol=0, atol=tol, err_msg=key)


@pytest.mark.parametrize("band, method", [("EU868", "delta-bullington"), ("US915", "delta-bullington"),
                                          ("EU868", "bullington"), ("AU915", "knife-edge"), ("EU868", "none")])
def test_kernel_equals_numpy_engine_on_random_radials(band, method):
    st = _settings(DEM, band, None, "4/3", 0.6, False, RadioSettings(diffraction_method=method, propagation=TERRAIN))
    _assert_kernel_equals_numpy(st, TOL)


@pytest.mark.parametrize("band, prop", [
    ("EU868", PropagationSettings()),
    ("US915", PropagationSettings(time_percent=10.0)),
    ("EU868", PropagationSettings(location_percent=95.0)),
    ("AU915", PropagationSettings(time_percent=10.0, location_percent=95.0, delta_n=60.0)),
])
def test_p1812_kernel_equals_numpy_engine_on_random_radials(band, prop):
    """--model p1812: the prefix kernel and the numpy engine through link_fields on the full profiles."""
    st = _settings(DEM, band, None, "4/3", 0.6, False, RadioSettings(propagation=prop))
    _assert_kernel_equals_numpy(st, TOL_P1812_DB)


def test_p1812_prefix_reductions_equal_numpy_reducer_on_each_prefix():
    """Horizons, their indices, the roughness hm and both Bullington passes of every prefix, one numpy batch each."""
    from profiler.propagation.p1812 import ProfileReducer, p1812_reductions
    from profiler.propagation.p1812.prefix import PrefixReducer

    d, t, n = _random_radials(3)
    r = 5
    jj = np.arange(2, n[r])
    rr = np.full(jj.size, r)
    got = p1812_reductions(PrefixReducer(d * 1e-3, t, n, rr, jj), 10.0, 1.5, 40.0, 10.0, informative=True)
    trans = []
    for k, j in enumerate(jj):
        m = j + 1
        ref = p1812_reductions(ProfileReducer(d[r:r + 1, :m] * 1e-3, t[r:r + 1, :m], np.zeros((1, m)),
                                              np.full((1, m), 4), np.array([m])), 10.0, 1.5, 40.0, 10.0)
        for part in ("geometry", "zones", "heights", "ld50", "ldb"):
            for key, want in ref[part].items():
                if got[part][key] is None:   # the knife-edge index, which the prefix kernel does not track
                    continue
                value = float(np.asarray(want).ravel()[0])
                if key.endswith("v_unit") and np.isnan(got[part][key][k]):   # taken on line-of-sight passes only
                    assert not _line_of_sight_pass(ref[part], key.replace("v_unit", "")), (part, key, j)
                    continue
                assert abs(float(got[part][key][k]) - value) <= 1e-9 * max(1.0, abs(value)), (part, key, j)
        trans.append(bool(ref["geometry"]["trans_horizon"][0]))
    assert any(trans) and not all(trans)   # both cases of the horizon analysis are exercised


def _line_of_sight_pass(reduced, prefix=""):
    """Whether a Bullington pass of one link is line of sight, the case that uses its largest ν (P.452-18 eqs. (15),
    (17)): ``prefix`` "" for the actual profile, "smooth_" for the smooth one (its antennas are ``hts_mod``, ...)."""
    hts, hrs = (reduced[k + ("_mod" if prefix else "")] for k in ("hts", "hrs"))
    stim, srim = reduced[prefix + "stim"], reduced[prefix + "srim"]
    s_tr = (np.ravel(hrs)[0] - np.ravel(hts)[0]) / np.ravel(reduced["d_total_km"])[0]
    return bool(np.ravel(stim)[0] < s_tr or np.ravel(stim)[0] + np.ravel(srim)[0] <= 0.0)


def test_kernel_reductions_equal_numpy_reducer_on_each_prefix():
    """stim, srim, v and the obstacle maxima of every prefix, one numpy batch of one per prefix."""
    from profiler.propagation import diffraction_batch as engine
    from profiler.propagation import prefix_kernel

    d, t, n = _random_radials(3)
    r = 5
    hts = np.full(d.shape, t[r, 0] + 10.0)
    hrs = t + 1.5
    ae_km = 8494.0
    got = prefix_kernel.bullington_prefixes(d * 1e-3, t, n, hts, hrs, ae_km, True)
    for j in range(2, n[r]):
        p = engine._paths(d[r:r + 1, :j + 1] * 1e-3, t[r:r + 1, :j + 1], np.array([j + 1]), ae_km)
        ref = engine._numpy_reducer(p, ae_km)(True, hts[r, j:j + 1], hrs[r, j:j + 1])
        for key in ("stim", "srim", "v_unit", "hobs", "alpha_obt", "alpha_obr"):
            if key == "v_unit" and np.isnan(got[key][r, j]):   # taken on line-of-sight passes only
                assert not (ref["stim"][0] < (hrs[r, j] - hts[r, j]) / (d[r, j] * 1e-3)
                            or ref["stim"][0] + ref["srim"][0] <= 0.0), j
                continue
            assert abs(got[key][r, j] - ref[key][0]) <= TOL * max(1.0, abs(ref[key][0])), (key, j)


@pytest.mark.parametrize("model", ["terrain", "p1812"])
def test_coverage_with_and_without_kernel_agree(model):
    kw = dict(dem=DEM, mast_m=10.0, radius_km=1.5, resolution_m=90.0, progress=False,
              radio=RadioSettings(propagation=PropagationSettings(model=model)))
    fast, slow = coverage(GATEWAY, kernel=True, **kw), coverage(GATEWAY, kernel=False, **kw)
    for name, values in slow.bands.items():
        assert np.array_equal(np.isfinite(values), np.isfinite(fast.bands[name])), name
        ok = np.isfinite(values)
        # float32 bands: agreement to the float32 rounding of the values
        np.testing.assert_allclose(fast.bands[name][ok], values[ok], rtol=1e-6, atol=1e-5, err_msg=name)


def test_cache_key_follows_the_terms(monkeypatch):
    from profiler.propagation import diffraction_batch as diffraction_engine
    from profiler.propagation import prefix_kernel

    before = prefix_kernel.fingerprint()
    monkeypatch.setattr(diffraction_engine, "slope_term",
                        lambda hc_m, h_end_m, distance_km: (hc_m + h_end_m) / distance_km)
    assert prefix_kernel.fingerprint() != before


def test_p1812_cache_key_follows_its_terms(monkeypatch):
    from profiler.propagation import prefix_kernel
    from profiler.propagation.p1812 import geometry, prefix

    before = prefix_kernel.fingerprint(prefix._TERMS)
    monkeypatch.setattr(geometry, "roughness_term", lambda h_m, hst_m, slope_m_per_km, d_km: h_m - hst_m)
    assert prefix_kernel.fingerprint(prefix._TERMS) != before


def test_numba_is_not_imported_by_the_package_or_the_link_command():
    code = ("import sys, profiler, profiler.cli, profiler.products.link, profiler.products.coverage.map, "
            "profiler.cli.coverage; "
            "print('numba' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"


@pytest.mark.parametrize("layer, concurrent", [("workqueue", False), ("omp", True), ("tbb", True), (None, False)])
def test_kernel_launches_overlap_only_where_the_threading_layer_allows(monkeypatch, layer, concurrent):
    # numba's documentation ("The Threading Layers", safe parallel execution): the tbb and omp layers are
    # thread safe, workqueue is not (concurrent launches abort); before the first launch no layer is chosen
    import numba

    from profiler.propagation import prefix_kernel

    def threading_layer():
        if layer is None:
            raise ValueError("Threading layer is not initialized.")
        return layer

    monkeypatch.setattr(numba, "threading_layer", threading_layer)
    with prefix_kernel.launch():
        assert prefix_kernel.LAUNCH.locked() is not concurrent
    assert not prefix_kernel.LAUNCH.locked()


def test_kernels_launched_from_several_threads_give_the_serial_results():
    # thread safety, not physics: eight concurrent runs on four threads equal the serial run bit for bit (the
    # serial values are the numpy engine's to 1e-6 dB above, whose ITU-R checks are in test_p1812.py)
    from concurrent.futures import ThreadPoolExecutor

    st = _settings(DEM, "EU868", None, "4/3", 0.6, False, RadioSettings(propagation=PropagationSettings(model="p1812")))
    d, t, n = _random_radials(3)
    serial = radial_fields(d, t, n, 10.0, 1.5, st, kernel=True, coordinates=_coordinates(d))
    with ThreadPoolExecutor(4) as pool:
        runs = list(pool.map(lambda _: radial_fields(d, t, n, 10.0, 1.5, st, kernel=True,
                                                     coordinates=_coordinates(d)), range(8)))
    for got in runs:
        for key, values in serial.items():
            np.testing.assert_array_equal(got[key], values, err_msg=key)
