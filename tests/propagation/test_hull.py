"""The hull query of the P.1812 receiver horizon against the O(n^2) loop it replaces.

:func:`profiler.propagation.p1812.prefix._horizon_kernels` keeps two horizon
kernels: ``horizon_kernel`` (tangent to the upper convex hull of the earlier
samples, O(log n) per link) and ``horizon_kernel_reference`` (every interior
sample, O(n) per link).  The reference is a maximum by definition
(P.1812-8 Annex 1 Attachment 1: θr is the largest elevation angle of the
profile points seen from the receiver), so the fast kernel must give the
same tangent (1e-9) and, where the largest tangent is unique, the same
sample; on exact ties a sample whose tangent is the maximum.  The losses of
a coverage built on either kernel agree to 1e-6 dB.  Skipped without numba.
"""

import numpy as np
import pytest
from sample_sites import DEM, GATEWAY

pytest.importorskip("numba")

from profiler.engine.model import PropagationSettings  # noqa: E402
from profiler.engine.radio import RadioSettings  # noqa: E402
from profiler.products.coverage.map import coverage  # noqa: E402
from profiler.propagation import hull  # noqa: E402
from profiler.propagation.p1812 import prefix  # noqa: E402
from profiler.propagation.p1812.geometry import elevation_tangent_term  # noqa: E402

AE_KM = 8494.0   # 4/3 of 6371 km


def _radials(kind, seed, size=160):
    """Radials of 30 m steps [km], [m AMSL], a count each: rough, flat, monotone, spiky or integer (ties)."""
    rng = np.random.default_rng(seed)
    rows = 12
    d = np.tile(np.arange(size) * 0.03, (rows, 1))
    if kind == "rough":
        h = 150.0 + np.cumsum(rng.normal(0.0, 6.0, d.shape), axis=1)
    elif kind == "flat":
        h = np.full(d.shape, 120.0)
    elif kind == "rising":
        h = 100.0 + np.cumsum(rng.uniform(0.0, 3.0, d.shape), axis=1)
    elif kind == "falling":
        h = 600.0 - np.cumsum(rng.uniform(0.0, 3.0, d.shape), axis=1)
    elif kind == "spiky":
        h = 100.0 + rng.normal(0.0, 1.0, d.shape) + 80.0 * (rng.random(d.shape) < 0.05)
    else:   # integer heights on a plateau: many equal heights
        h = np.round(100.0 + rng.integers(0, 3, d.shape) * (rng.random(d.shape) < 0.2))
    h[:, 1:4] += 60.0   # a ridge beside the site: most links are trans-horizon
    n = rng.integers(2, size + 1, rows)
    n[0], n[1] = size, 0
    for r, m in enumerate(n):
        d[r, m:], h[r, m:] = np.nan, np.nan
    return d, h, n


def _need(shape, seed):
    """About half of the links, at random (a coverage reduces only the samples some pixel takes)."""
    return np.random.default_rng(seed).random(shape) < 0.5


def _horizons(kernel, d, h, n, site, hrs, need=None):
    tangents, index = np.full((2,) + d.shape, np.nan), np.zeros((2,) + d.shape, dtype=np.int64)
    kernel(d, h, n, site, hrs, AE_KM, np.ones(d.shape, dtype=bool) if need is None else need, tangents, index)
    return tangents, index


@pytest.mark.parametrize("kind", ["rough", "flat", "rising", "falling", "spiky", "ties"])
@pytest.mark.parametrize("seed, size, mast_m", [(1, 160, 2.0), (2, 160, 2.0), (3, 1200, 150.0)])
def test_hull_horizon_equals_the_loop(kind, seed, size, mast_m):
    """Horizons of every link (a tall mast over long radials: many line-of-sight links, whose ν index is found
    by pruned blocks and groups of blocks)."""
    d, h, n = _radials(kind, seed, size=size)
    site = h[:, 0] + mast_m
    hrs = h + 1.5
    ref_t, ref_i = _horizons(prefix._horizon_kernel_reference, d, h, n, site, hrs)
    got_t, got_i = _horizons(prefix._horizon_kernel, d, h, n, site, hrs)
    ok = np.isfinite(ref_t[1])
    assert np.array_equal(ok, np.isfinite(got_t[1])) and ok.sum() > 300
    np.testing.assert_allclose(got_t[:, ok], ref_t[:, ok], rtol=1e-9, atol=1e-12)
    assert np.array_equal(got_i[0], ref_i[0])
    rr, jj = np.nonzero(ok)
    for r, j in zip(rr, jj):   # the tangent of the chosen sample is the maximum (a tie may pick another sample)
        i = np.arange(1, j)
        tan = elevation_tangent_term(h[r, i] - hrs[r, j], d[r, j] - d[r, i], AE_KM)
        if got_i[1, r, j] != ref_i[1, r, j]:
            assert ref_t[1, r, j] == got_t[1, r, j] or kind in ("flat", "ties"), (kind, r, j)
            assert tan[got_i[1, r, j] - 1] >= tan.max() - 1e-12 * max(1.0, abs(tan.max()))
    if kind in ("rough", "rising", "falling", "spiky"):
        assert np.array_equal(got_i[1], ref_i[1])


def test_upper_hull_push_keeps_the_upper_hull():
    """Every point lies on or below the chain, and every kept vertex is strictly above its neighbours' chord."""
    rng = np.random.default_rng(4)
    x = np.cumsum(rng.uniform(0.1, 1.0, 200))
    y = rng.normal(0.0, 5.0, 200)
    y[50:60] = 3.0 * x[50:60]   # collinear points
    vertex, hx, hy = np.zeros(200, dtype=np.int64), np.zeros(200), np.zeros(200)
    m = 0
    for i in range(200):
        m = hull.upper_hull_push(x, y, vertex, hx, hy, m, i)
        v = vertex[:m]
        assert np.all(np.diff(v) > 0) and v[0] == 0 and v[-1] == i
        assert np.array_equal(hx[:m], x[v]) and np.array_equal(hy[:m], y[v])   # the coordinates kept beside
        chain = np.interp(x[:i + 1], x[v], y[v])
        assert np.all(y[:i + 1] <= chain + 1e-9)
        if m >= 3:
            a, b, c = v[:-2], v[1:-1], v[2:]
            cross = (x[b] - x[a]) * (y[c] - y[a]) - (y[b] - y[a]) * (x[c] - x[a])
            assert np.all(cross < 0.0)


@pytest.mark.parametrize("model", ["terrain", "p1812"])
@pytest.mark.parametrize("kind", ["rough", "spiky", "flat"])
def test_link_fields_equal_with_the_reference_kernels(monkeypatch, model, kind):
    """Every field of every prefix (losses, ratios) with the hull kernels and with the loops: 1e-6 dB, 1e-9."""
    from profiler.products.coverage.map import _settings
    from profiler.products.coverage.radials import radial_fields
    from profiler.propagation import prefix_kernel

    d_km, t, n = _radials(kind, 7)
    d = d_km * 1e3
    coordinates = {"lat_a_deg": -29.9, "lon_a_deg": -19.95, "lat_b_deg": -29.9 + d / 111_195.0,
                   "lon_b_deg": np.full(d.shape, -19.95)}
    st = _settings(DEM, "EU868", None, "4/3", 0.6, False,
                   RadioSettings(diffraction_method="delta-bullington", propagation=PropagationSettings(model=model)))
    got = radial_fields(d, t, n, 10.0, 1.5, st, None, kernel=True, coordinates=coordinates)
    monkeypatch.setattr(prefix, "_horizon_kernel", prefix._horizon_kernel_reference)
    monkeypatch.setattr(prefix_kernel, "_bullington_hull_kernel", prefix_kernel._bullington_kernel)
    monkeypatch.setattr(prefix_kernel, "_geometry_hull_kernel", prefix_kernel._geometry_kernel)
    ref = radial_fields(d, t, n, 10.0, 1.5, st, None, kernel=True, coordinates=coordinates)
    for key in ref:
        ok = np.isfinite(ref[key])
        assert np.array_equal(ok, np.isfinite(got[key])) and ok.sum() > 300, key
        np.testing.assert_allclose(got[key][ok], ref[key][ok], rtol=0, atol=1e-9 if "ratio" in key else 1e-6,
                                   err_msg=key)


@pytest.mark.parametrize("seed", [1, 3])
def test_coverage_losses_equal_with_the_reference_kernel(monkeypatch, seed):
    """--model p1812 on the sample terrain: the bands with the hull kernels and the loops (float32: 1e-6 relative)."""
    from profiler.propagation import prefix_kernel

    kw = dict(dem=DEM, mast_m=10.0 * seed, radius_km=1.5, resolution_m=90.0, progress=False,
              radio=RadioSettings(propagation=PropagationSettings(model="p1812")))
    fast = coverage(GATEWAY, kernel=True, **kw)
    monkeypatch.setattr(prefix, "_horizon_kernel", prefix._horizon_kernel_reference)
    monkeypatch.setattr(prefix_kernel, "_bullington_hull_kernel", prefix_kernel._bullington_kernel)
    monkeypatch.setattr(prefix_kernel, "_geometry_hull_kernel", prefix_kernel._geometry_kernel)
    slow = coverage(GATEWAY, kernel=True, **kw)
    for name, values in slow.bands.items():
        ok = np.isfinite(values)
        assert np.array_equal(ok, np.isfinite(fast.bands[name])), name
        np.testing.assert_allclose(fast.bands[name][ok], values[ok], rtol=1e-6, atol=1e-6, err_msg=name)


@pytest.mark.parametrize("kind", ["rough", "flat", "rising", "falling", "spiky", "ties"])
@pytest.mark.parametrize("actual", [True, False])
@pytest.mark.parametrize("nu_always", [True, False])
def test_hull_bullington_pass_equals_the_loop(kind, actual, nu_always):
    """stim, srim, ν and the obstacle maxima of every needed prefix: hull queries and pruned ν against the loop (1e-9).

    Radials of 1,200 samples (75 blocks of 16, four groups of 16 blocks).  ν is
    compared where it is taken: every link with ``nu_always``, else the
    line-of-sight passes (``stim < Str`` or ``stim + srim <= 0``, P.452-18
    eqs. (15), (17)) of the reference, where the fast kernel must have it.
    On the smooth pass (every height 0) the antenna heights above the
    surface include negative ones (the pruned scan instead of the binary
    search).
    """
    from profiler.propagation import prefix_kernel

    d, h, n = _radials(kind, 5, size=1200)
    rng = np.random.default_rng(6)
    if actual:
        high = 400.0 * (rng.random(d.shape) < 0.3)   # some links on tall masts: line of sight over the ridge
        hts = h[:, :1] + rng.uniform(-30.0, 30.0, d.shape) + high   # the heights of the link ending at each sample
        hrs = h + rng.uniform(-30.0, 30.0, d.shape) + high
    else:   # heights above the smooth surface: mostly positive, some negative
        hts, hrs = rng.uniform(-5.0, 60.0, d.shape), rng.uniform(-5.0, 30.0, d.shape)
    g = h + rng.uniform(0.0, 20.0, d.shape)   # a clutter height on the Bullington pass (P.1812)
    need = _need(d.shape, 7)
    runs = []
    for kernel in (prefix_kernel._bullington_kernel, prefix_kernel._bullington_hull_kernel):
        out = np.full((6,) + d.shape, np.nan)
        kernel(d, h, g, n, hts, hrs, AE_KM, actual, need, nu_always, out)
        runs.append(out)
    ref, got = runs
    ok = (np.isfinite(ref) | np.isinf(ref)) & need
    with np.errstate(invalid="ignore", divide="ignore"):
        los = (ref[0] < (hrs - hts) / d) | (ref[0] + ref[1] <= 0.0)
    uses_nu = ok[2] & (los | nu_always)
    assert uses_nu.sum() > 100 and (nu_always or (ok[2] & ~los).sum() > 100)
    rows = [0, 1, 3, 4, 5]
    assert np.array_equal(ok[rows], np.isfinite(got[rows]) | np.isinf(got[rows])) and ok[0].sum() > 2000
    np.testing.assert_allclose(got[rows][ok[rows]], ref[rows][ok[rows]], rtol=1e-9, atol=1e-9)
    assert np.isfinite(got[2][uses_nu]).all() and not np.isfinite(got[2][~need]).any()
    taken = np.isfinite(got[2])
    np.testing.assert_allclose(got[2][taken], ref[2][taken], rtol=1e-9, atol=1e-9)


@pytest.mark.parametrize("kind", ["rough", "flat", "rising", "falling", "spiky", "ties"])
def test_pruned_clearance_ratio_equals_the_loop(kind):
    """The worst clearance / F1 ratio of every prefix: blocks pruned by their hull bound against the loop (1e-9)."""
    from profiler.propagation import prefix_kernel

    d_km, t, n = _radials(kind, 8)
    d = np.concatenate([d_km * 1e3, d_km * 1e3 + d_km[:, -1:] * 1e3 + 30.0], axis=1)   # 320 samples: 4 blocks
    t = np.concatenate([t, t[:, ::-1] + 5.0], axis=1)
    n = np.where(n == 160, 320, n)
    rng = np.random.default_rng(9)
    node = t + rng.uniform(0.5, 40.0, t.shape)
    site = t[:, 0] + 10.0
    need = _need(d.shape, 10)
    runs = []
    for kernel in (prefix_kernel._geometry_kernel, prefix_kernel._geometry_hull_kernel):
        worst = np.full(d.shape, np.nan)
        kernel(d, t, n, site, node, 0.345, AE_KM * 1e3, need, worst)
        runs.append(worst)
    ref, got = runs
    ok = np.isfinite(ref) & need
    assert np.array_equal(ok, np.isfinite(got)) and ok.sum() > 300
    np.testing.assert_allclose(got[ok], ref[ok], rtol=1e-9, atol=1e-9)


@pytest.mark.parametrize("kind", ["rough", "flat", "rising", "falling", "spiky", "ties"])
def test_pruned_roughness_equals_the_loop(kind):
    """hm of every needed prefix between random horizon indices: blocks pruned by their bound against the loop."""
    d, h, n = _radials(kind, 11, size=900)
    rng = np.random.default_rng(12)
    first = rng.integers(1, 900, d.shape)
    last = np.minimum(first + rng.integers(0, 900, d.shape), np.maximum(np.arange(900)[None, :] - 1, 1))
    first = np.minimum(first, last)
    hst, slope = rng.uniform(50.0, 300.0, d.shape), rng.uniform(-20.0, 20.0, d.shape)
    need = _need(d.shape, 13)
    runs = []
    for kernel in (prefix._roughness_kernel_reference, prefix._roughness_kernel):
        out = np.full(d.shape, np.nan)
        kernel(d, h, n, first, last, hst, slope, need, out)
        runs.append(out)
    ref, got = runs
    ok = np.isfinite(ref) & need
    assert np.array_equal(ok, np.isfinite(got)) and ok.sum() > 2000
    np.testing.assert_allclose(got[ok], ref[ok], rtol=1e-9, atol=1e-9)
