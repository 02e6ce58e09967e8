"""profiler coverage with a land cover and the probability of being heard.

References outside the coverage code: ``profiler.link --land-cover`` (the
link engine with its own land-cover sampling, checked against P.1812-8 and
P.2108-1 in its own tests) for every value at a radial sample;
``scipy.stats.norm`` (the standard normal distribution) for the outdoor
probability Φ((median margin − fade margin) / σL) of ITU-R P.1812-8
section 4.7; :func:`profiler.engine.probability.indoor_probability` (checked
against P.2109-1 in its own tests) for an indoor node; rasterio/GDAL for
the band names of the GeoTIFF; the numpy prefix batches for the kernel.
"""

import json

import numpy as np
import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, ROOT

import profiler
from profiler.api import coverage
from profiler.cli import main
from profiler.engine.model import PropagationSettings
from profiler.engine.radio import RadioSettings
from profiler.products.coverage.grid import BANDS, INDOOR_BANDS, LAND_COVER_BANDS, Gateway

LAND_COVER = ROOT / "dem_samples" / "vellmoor_landcover.tif"
RADIUS_KM, RES_M, NODE_M = 7.0, 120.0, 1.5
TREES = 10             # ESA WorldCover code of tree cover (the sample's forest east of the gateway)


def _radio(**prop):
    return RadioSettings(propagation=PropagationSettings(**prop))


@pytest.fixture(scope="module", params=["p1812", "terrain"])
def pair(request):
    """The same run without and with the sample land cover, by model."""
    kw = dict(dem=DEM, mast_m=10.0, name="Cairnfell Beacon", radius_km=RADIUS_KM, resolution_m=RES_M,
              node_mast_m=NODE_M, progress=False, radio=_radio(model=request.param))
    return coverage(GATEWAY, **kw), coverage(GATEWAY, land_cover=LAND_COVER, **kw), request.param


def test_land_cover_gives_a_smaller_heard_area(pair):
    bare, covered, model = pair
    for key in ("covered", "heard_at_location_percent"):
        assert covered.report["summary"][key]["area_km2"] < bare.report["summary"][key]["area_km2"], (model, key)
    assert covered.report["summary"]["mean_probability_heard"] < bare.report["summary"]["mean_probability_heard"]
    # the loss grows where the node is in the forest
    trees = covered.bands["clutter_class"] == TREES
    assert trees.sum() > 50
    assert np.nanmean(covered.bands["path_loss_db"][trees] - bare.bands["path_loss_db"][trees]) > 1.0
    assert covered.report["settings"]["land_cover"] == [str(LAND_COVER)]
    assert covered.report["settings"]["land_cover_classes"] is None
    assert bare.report["settings"]["land_cover"] is None
    table = {row["code"]: row for row in covered.report["summary"]["land_cover_classes"]}
    assert table[TREES]["clutter"] == "trees"
    assert table[TREES]["pixels"] == int(np.sum(trees & np.isfinite(covered.bands["margin_db"])))
    assert "land_cover_classes" not in bare.report["summary"]
    # without a land cover a node at 1.5 m is likely optimistic, and the report says so
    assert any(w.startswith("no land cover") for w in bare.report["warnings"])
    assert not any(w.startswith("no land cover") for w in covered.report["warnings"])


def test_bands_and_geotiff_names(pair, tmp_path):
    import rasterio

    _, covered, _ = pair
    assert list(covered.bands) == list(BANDS + LAND_COVER_BANDS)
    height = covered.bands["clutter_height_m"][covered.bands["clutter_class"] == TREES]
    default = 15.0   # trees: P.1812-8 Table 2 and P.2108-1 Table 3 both give 15 m
    assert np.all(height == default)
    out = tmp_path / "cov.tif"
    coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=2.0, resolution_m=200.0, progress=False,
             land_cover=LAND_COVER, radio=_radio(indoor_b="traditional"), out=out)
    with rasterio.open(out) as ds:
        assert ds.descriptions == BANDS + LAND_COVER_BANDS + INDOOR_BANDS


def _sample_pixels(result, count, select):
    """Pixels (rows, cols) with ``select`` true, with their radial sample's position and index."""
    from pyproj import Geod

    s = result.report["settings"]
    lon, lat = result.grid.lon_lat()
    az, _, dist = Geod(ellps="WGS84").inv(np.full(lon.shape, GATEWAY[1]), np.full(lat.shape, GATEWAY[0]), lon, lat)
    j = np.rint(np.asarray(dist) / s["radial_step_m"]).astype(int)
    ok = select & np.isfinite(result.bands["margin_db"]) & (j >= 2)
    idx = np.flatnonzero(ok.ravel())
    pick = np.random.default_rng(5).choice(idx, min(count, idx.size), replace=False)
    rows, cols = np.unravel_index(pick, ok.shape)
    step_az = 360.0 / s["radials"]
    az_k = np.rint(np.asarray(az)[rows, cols] / step_az) * step_az
    lo, la, _ = Geod(ellps="WGS84").fwd(np.full(rows.size, GATEWAY[1]), np.full(rows.size, GATEWAY[0]), az_k,
                                        j[rows, cols] * s["radial_step_m"])
    return rows, cols, np.asarray(la), np.asarray(lo)


def test_a_sample_with_land_cover_equals_profiler_link_with_land_cover(pair):
    _, covered, model = pair
    trees = covered.bands["clutter_class"] == TREES
    rows, cols, la, lo = _sample_pixels(covered, 8, trees)
    step = covered.report["settings"]["radial_step_m"]
    for r, c, lat, lon in zip(rows, cols, la, lo):
        rep = profiler.link(GATEWAY, (lat, lon), dem=DEM, mast_a_m=10.0, mast_b_m=NODE_M, step_m=step * (1 + 1e-9),
                            radio=_radio(model=model), land_cover=LAND_COVER).to_dict()
        assert rep["profile"]["clutter_class"][-1] == "trees"
        np.testing.assert_allclose([covered.bands["path_loss_db"][r, c], covered.bands["margin_db"][r, c]],
                                   [rep["loss_db"]["total"], rep["budget"]["margin_db"]], atol=0.01, rtol=0)


@pytest.mark.parametrize("model", ["p1812", "terrain"])
def test_kernel_equals_the_numpy_prefix_batches_with_land_cover(model):
    from profiler.products.coverage.map import _settings
    from profiler.products.coverage.radials import radial_fields, sample_radials
    from profiler.products.coverage.sectors import radial_clutter
    from profiler.terrain.elevation import ElevationModel
    from profiler.terrain.landcover import LandCover, worldcover_mapping

    settings = _settings(DEM, None, None, "4/3", 0.6, False, _radio(model=model))
    gw = Gateway(name="g", lat_deg=GATEWAY[0], lon_deg=GATEWAY[1], mast_m=10.0)
    az = np.array([60.0, 80.0, 95.0, 110.0])     # across the forest east of the gateway
    with ElevationModel.open(DEM) as dem, LandCover.open([LAND_COVER]) as cover:
        d, t, n, lat, lon = sample_radials(dem, gw, az, 7000.0, 60.0, False, with_coordinates=True)
        coords = {"lat_a_deg": gw.lat_deg, "lon_a_deg": gw.lon_deg, "lat_b_deg": lat, "lon_b_deg": lon}
        clutter, _ = radial_clutter(cover, worldcover_mapping(), coords, model)
    assert np.nanmax(clutter["clutter_m"]) > 0
    fields = [radial_fields(d, t, n, 10.0, NODE_M, settings, None, kernel, coords if model == "p1812" else None,
                            clutter) for kernel in (True, False)]
    for band in ("path_loss_db", "margin_db", "probability_heard", "location_sigma_db"):
        np.testing.assert_allclose(fields[0][band], fields[1][band], atol=1e-6, rtol=0, equal_nan=True)


def test_moved_sector_names_warn_from_the_old_module():
    """radial_clutter and the sector sizes moved from coverage.map to coverage.sectors: reached, with a warning."""
    from profiler.products.coverage import map as cmap
    from profiler.products.coverage import sectors

    with pytest.warns(DeprecationWarning, match="coverage.sectors.radial_clutter"):
        assert cmap.radial_clutter is sectors.radial_clutter
    with pytest.raises(AttributeError):
        cmap.no_such_name


def test_radial_sample_positions_are_the_direct_geodesic_problem():
    """Where a coverage run reads the terrain and land cover: pyproj's Geod.fwd (Karney 2013) to 1e-7 deg (1 cm)."""
    from pyproj import Geod

    from profiler.products.coverage.radials import sample_radials
    from profiler.terrain.elevation import ElevationModel

    gw = Gateway(name="g", lat_deg=GATEWAY[0], lon_deg=GATEWAY[1], mast_m=10.0)
    az = np.array([0.0, 37.5, 95.0, 181.0, 300.0])
    with ElevationModel.open(DEM) as dem:
        d, _, n, lat, lon = sample_radials(dem, gw, az, 6000.0, 45.0, False, with_coordinates=True)
    ok = np.isfinite(d)
    assert ok.sum() > 500 and np.array_equal(ok, np.isfinite(lat))
    ref_lon, ref_lat, _ = Geod(ellps="WGS84").fwd(np.full(ok.sum(), gw.lon_deg), np.full(ok.sum(), gw.lat_deg),
                                                  np.broadcast_to(az[:, None], d.shape)[ok], d[ok])
    np.testing.assert_allclose(lat[ok], ref_lat, atol=1e-7, rtol=0)   # anchored positions: within 1 cm
    np.testing.assert_allclose(lon[ok], ref_lon, atol=1e-7, rtol=0)


def test_probability_outdoors_is_the_normal_cdf_of_the_bands():
    from scipy.stats import norm

    percent, fade = 90.0, 10.0
    run = coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=5.0, resolution_m=150.0, progress=False,
                   land_cover=LAND_COVER, radio=_radio(location_percent=percent))
    m, sigma, p = (run.bands[k].astype(float) for k in ("margin_db", "location_sigma_db", "probability_heard"))
    ok = np.isfinite(m)
    assert np.all(sigma[ok] > 0)
    # the margin band holds the loss at 90 % of locations: the median is sigma * z(0.90) dB better
    # (P.1812-8 eq. 69; scipy's norm.ppf as the reference).  P.1812-8 computes z with its rational
    # approximation of the inverse normal (Attachment 2 to Annex 1: absolute error below 0.00054), which
    # moves the probability by at most phi(0) * 0.00054 < 2.2e-4
    median = m + sigma * norm.ppf(percent / 100.0)
    np.testing.assert_allclose(p[ok], norm.cdf((median[ok] - fade) / sigma[ok]), atol=2.2e-4)
    heard = run.report["summary"]["heard_at_location_percent"]
    assert heard["location_percent"] == percent
    # heard at 90 % of locations <=> the margin at 90 % of locations keeps the fade margin
    assert abs(heard["pixels"] - int(np.sum(m[ok] >= fade))) <= int(np.sum(np.abs(m[ok] - fade) < 1e-3))
    assert run.report["summary"]["mean_probability_heard"] == pytest.approx(float(np.mean(p[ok])), abs=1e-5)


def test_probability_indoors_integrates_over_the_building_entry_loss():
    from profiler.engine.probability import indoor_probability
    from profiler.products.coverage.map import _settings
    from profiler.products.coverage.radials import radial_fields, sample_radials
    from profiler.propagation import geometry
    from profiler.terrain.elevation import ElevationModel

    settings = _settings(DEM, None, None, "4/3", 0.6, False, _radio(model="terrain", indoor_b="traditional"))
    gw = Gateway(name="g", lat_deg=GATEWAY[0], lon_deg=GATEWAY[1], mast_m=10.0)
    with ElevationModel.open(DEM) as dem:
        d, t, n = sample_radials(dem, gw, np.array([0.0, 135.0]), 4000.0, 80.0, False)
    out = radial_fields(d, t, n, 10.0, NODE_M, settings)
    ok = np.isfinite(out["margin_db"])
    ok[:, 0] = False   # the site's own sample (a copy of sample 1)
    h_a = (t[:, 0] + 10.0)[:, None] + 0 * t
    ae = float(geometry.effective_radius_m(4.0 / 3.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        elevation = geometry.elevation_angle_deg(t + NODE_M, h_a, d, ae)
    bel = out["building_entry_loss_db"]
    assert np.all(bel[ok] > 5.0)
    want = indoor_probability(out["margin_db"][ok] + bel[ok], 10.0, out["location_sigma_db"][ok],
                              settings.frequency_mhz * 1e-3, elevation[ok], "traditional")
    np.testing.assert_allclose(out["probability_heard"][ok], want, atol=1e-9)
    # and it is below the outdoor probability of the same margin without the building
    from profiler.engine.probability import outdoor_probability

    assert np.all(want <= outdoor_probability(out["margin_db"][ok] + bel[ok], 10.0, out["location_sigma_db"][ok]))


def test_cli_land_cover_and_probability_map(tmp_path):
    out_json, png = tmp_path / "c.json", tmp_path / "c.png"
    res = CliRunner().invoke(main, ["coverage", "--dem", str(DEM[0]), "--site", f"{GATEWAY[0]},{GATEWAY[1]}",
                                    "--mast-m", "10", "--radius-km", "2", "--resolution-m", "200",
                                    "--land-cover", str(LAND_COVER), "--map", "probability", "--json", str(out_json),
                                    "--plot", str(png), "--no-progress"])
    assert res.exit_code == 0, res.output
    report = json.loads(out_json.read_text())
    assert report["schema"] == "profiler.coverage/5"
    assert report["settings"]["land_cover"] == [str(LAND_COVER)]
    assert {"heard_at_location_percent", "mean_probability_heard", "land_cover_classes"} <= set(report["summary"])
    assert png.stat().st_size > 10_000
    bad = CliRunner().invoke(main, ["coverage", "--dem", str(DEM[0]), "--site", f"{GATEWAY[0]},{GATEWAY[1]}",
                                    "--mast-m", "10", "--radius-km", "2", "--map", "heat", "--json", "-"])
    assert bad.exit_code == 2 and "heat" in bad.output


@pytest.mark.slow   # a Dask cluster or a memory trace of a whole map: in the slow run (.ci/run)
def test_dask_workers_open_the_land_cover_and_give_identical_arrays():
    kw = dict(dem=DEM, mast_m=10.0, radius_km=7.0, resolution_m=300.0, progress=False, land_cover=LAND_COVER)
    local = coverage(GATEWAY, **kw)
    remote = coverage(GATEWAY, workers=2, **kw)
    assert list(remote.bands) == list(local.bands)
    for name in local.bands:
        assert np.array_equal(remote.bands[name], local.bands[name], equal_nan=True), name
