"""The coverage kernel (numba) against the numpy link engine.

The point of these checks is that two implementations agree: the compiled
reductions of :mod:`profiler.propagation.prefix_kernel` followed by the shared per-link
formulas must give the same bands as the numpy prefix batches of
:func:`profiler.engine.geometry.geometry_batch` / :func:`profiler.propagation.diffraction_batch.diffraction_batch`
(the engine whose ITU-R checks are in test_diffraction.py) to rounding,
1e-9 dB / 1e-9 of the Fresnel ratio.  Skipped without numba (the optional
``fast`` extra).
"""

import subprocess
import sys

import numpy as np
import pytest
from sample_sites import DEM, GATEWAY

pytest.importorskip("numba")

from profiler.engine.radio import RadioSettings  # noqa: E402
from profiler.products.coverage.map import _settings, coverage
from profiler.products.coverage.radials import radial_fields  # noqa: E402

TOL = 1e-9


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


@pytest.mark.parametrize("band, method", [("EU868", "delta-bullington"), ("US915", "delta-bullington"),
                                          ("EU868", "bullington"), ("AU915", "knife-edge"), ("EU868", "none")])
def test_kernel_equals_numpy_engine_on_random_radials(band, method):
    st = _settings(DEM, band, None, "4/3", 0.6, False, RadioSettings(diffraction_method=method))
    for seed in (1, 2):
        d, t, n = _random_radials(seed)
        over = {"tx_power_dbm": 20.0, "gain_dbi": 5.0} if seed == 2 else None   # the site's own radio values
        ref = radial_fields(d, t, n, 10.0, 1.5, st, over, kernel=False)
        got = radial_fields(d, t, n, 10.0, 1.5, st, over, kernel=True)
        for key in ref:
            assert np.array_equal(np.isfinite(ref[key]), np.isfinite(got[key])), key
            ok = np.isfinite(ref[key])
            assert ok.sum() > 200, key
            np.testing.assert_allclose(got[key][ok], ref[key][ok], rtol=0, atol=TOL, err_msg=key)


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
            assert abs(got[key][r, j] - ref[key][0]) <= TOL * max(1.0, abs(ref[key][0])), (key, j)


def test_coverage_with_and_without_kernel_agree():
    kw = dict(dem=DEM, mast_m=10.0, radius_km=1.5, resolution_m=90.0, progress=False)
    fast, slow = coverage(GATEWAY, kernel=True, **kw), coverage(GATEWAY, kernel=False, **kw)
    for name, values in slow.bands.items():
        assert np.array_equal(np.isfinite(values), np.isfinite(fast.bands[name])), name
        ok = np.isfinite(values)
        # float32 bands: agreement to the float32 rounding of the values
        np.testing.assert_allclose(fast.bands[name][ok], values[ok], rtol=1e-6, atol=1e-5, err_msg=name)


def test_cache_key_follows_the_terms(monkeypatch):
    from profiler.propagation import diffraction_batch as diffraction_engine
    from profiler.propagation import prefix_kernel

    before = prefix_kernel._fingerprint()
    monkeypatch.setattr(diffraction_engine, "slope_term",
                        lambda hc_m, h_end_m, distance_km: (hc_m + h_end_m) / distance_km)
    assert prefix_kernel._fingerprint() != before


def test_numba_is_not_imported_by_the_package_or_the_link_command():
    code = ("import sys, profiler, profiler.cli, profiler.products.link, profiler.products.coverage.map, "
            "profiler.cli.coverage; "
            "print('numba' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"
