"""profiler coverage: grid, bands, nodata, consistency with the link engine, line of sight, composite, Dask.

Reference values come from outside the coverage code: pyproj (the WGS84
geodesic, Karney 2013, and the azimuthal-equidistant projection, Snyder
1987 ch. 25), rasterio/GDAL (reading the GeoTIFF back), and
``profiler.link`` / the link engine for every radio number (the coverage
must equal it; the engine's own checks against ITU-R are in
test_diffraction.py and test_budget.py).
"""

import json
import zipfile

import numpy as np
import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY

from profiler.api import coverage  # the computation, and the files it is asked for
from profiler.products.coverage.grid import BANDS, COMPOSITE_BANDS, composite
from profiler.products.coverage.radials import line_of_sight_radials, radial_count

RADIUS_KM = 3.0
RES_M = 90.0
NODE_M = 1.5


@pytest.fixture(scope="module")
def run():
    return coverage(GATEWAY, dem=DEM, mast_m=10.0, name="Cairnfell Beacon", radius_km=RADIUS_KM,
                    resolution_m=RES_M, node_mast_m=NODE_M, progress=False)


def _pixel_geodesics(result, site):
    from pyproj import Geod

    lon, lat = result.grid.lon_lat()
    az, _, dist = Geod(ellps="WGS84").inv(np.full(lon.shape, site[1]), np.full(lat.shape, site[0]), lon, lat)
    return lon, lat, np.asarray(az), np.asarray(dist)


def test_geotiff_grid_bands_and_nodata(run, tmp_path):
    import rasterio
    from pyproj import Transformer

    out = tmp_path / "cov.tif"
    coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=RADIUS_KM, resolution_m=RES_M, out=out, progress=False)
    with rasterio.open(out) as ds:
        assert ds.descriptions == BANDS
        assert ds.dtypes == ("float32",) * len(BANDS)
        assert ds.profile["tiled"] and ds.profile["compress"] == "deflate"
        assert np.isnan(ds.nodata)
        assert ds.res == (RES_M, RES_M)
        # the site projects to (0, 0), the centre of the middle pixel (pyproj, Snyder ch. 25)
        x, y = Transformer.from_crs("EPSG:4326", ds.crs.to_wkt(), always_xy=True).transform(GATEWAY[1], GATEWAY[0])
        assert abs(x) < 1e-6 and abs(y) < 1e-6
        row, col = ds.index(0.0, 0.0)
        assert (row, col) == (ds.height // 2, ds.width // 2)
        data = ds.read()
    for i, name in enumerate(BANDS):
        assert np.array_equal(data[i], run.bands[name], equal_nan=True), name
    _, _, _, dist = _pixel_geodesics(run, GATEWAY)
    margin = run.bands["margin_db"]
    assert np.isnan(margin[dist > RADIUS_KM * 1000.0]).all()          # nodata outside the radius
    assert np.isfinite(margin[dist < RADIUS_KM * 1000.0 - RES_M]).all()  # the sample DEM covers the disc
    # the azimuthal-equidistant grid keeps the geodesic distance from the site (Snyder ch. 25)
    x, y = run.grid.centres()
    assert np.max(np.abs(np.hypot(x, y) - dist)) < 0.05


@pytest.mark.parametrize("lat, lon, radius_m", [(47.5, 8.5, 20000.0), (-33.9, 179.99, 30000.0),
                                                (80.0, 10.0, 40000.0), (0.0, 0.0, 100.0)])
def test_pixel_positions_within_a_thousandth_of_a_pixel_of_pyproj(lat, lon, radius_m):
    """The grid's pixel centres in WGS84 (interpolated on a lattice) against pyproj's exact transform of each.

    Tolerance: 1e-3 pixel (3 cm at 30 m), the lattice's own check; across the
    antimeridian the longitudes stay in [-180, 180); a window of the grid
    gives the whole grid's values bit for bit.
    """
    from pyproj import Transformer

    from profiler.products.coverage.grid import Gateway, make_grid

    grid = make_grid([Gateway("g", lat, lon, 10.0)], radius_m, 30.0)
    lon_px, lat_px = grid.lon_lat()
    ref_lon, ref_lat = Transformer.from_crs(grid.proj4, "EPSG:4326", always_xy=True).transform(*grid.centres())
    east = (lon_px - ref_lon + 180.0) % 360.0 - 180.0
    off_m = np.hypot(east * np.cos(np.radians(ref_lat)), lat_px - ref_lat) * 111_320.0
    assert off_m.max() <= 0.03 and lon_px.min() >= -180.0 and lon_px.max() < 180.0
    window = grid.window(1, grid.height - 2, 2, grid.width - 1)   # a streamed tile: the very same values
    assert all(np.array_equal(w, v[1:-2, 2:-1]) for w, v in zip(window.lon_lat(), (lon_px, lat_px)))



def test_window_lookup_in_row_bands_equals_one_call():
    """The pixel lookup computed in row bands on threads gives the one call's arrays bit for bit, for a site at
    the projection's centre (read off the grid) and one off it (pyproj.Geod inverse problem, reference library)."""
    from profiler.products.coverage.grid import Gateway, make_grid, pixel_polar, radial_lookup, window_lookup

    sites = [Gateway("a", 47.50, 8.50, 10.0), Gateway("b", 47.53, 8.46, 10.0)]
    grid = make_grid(sites, 3000.0, 30.0)
    for gw in sites:
        one = radial_lookup(*pixel_polar(grid, gw), 512, 15.0, 3000.0)
        bands = window_lookup(grid, gw, 512, 15.0, 3000.0, threads=3)
        assert all(np.array_equal(a, b) for a, b in zip(one, bands))
        assert one[2].any() and not one[2].all()

def test_radial_count_spacing_about_two_pixels():
    n = radial_count(20_000.0, 30.0)
    assert n % 8 == 0
    arc = 2 * np.pi * 20_000.0 / n
    assert 59.0 <= arc <= 60.0


def _sample_points(run, pixels):
    """The radial sample each pixel takes its value from (recomputed here with pyproj)."""
    from pyproj import Geod

    s = run.report["settings"]
    lon, lat, az, dist = _pixel_geodesics(run, GATEWAY)
    step_az = 360.0 / s["radials"]
    k = np.rint((az[pixels] % 360.0) / step_az)
    j = np.rint(dist[pixels] / s["radial_step_m"])
    lo, la, _ = Geod(ellps="WGS84").fwd(np.full(k.size, GATEWAY[1]), np.full(k.size, GATEWAY[0]), k * step_az,
                                        j * s["radial_step_m"])
    return np.asarray(la), np.asarray(lo), j, lat[pixels], lon[pixels]


def _link(point, step_m, model):
    import profiler

    r = profiler.link(GATEWAY, point, dem=DEM, mast_a_m=10.0, mast_b_m=NODE_M, step_m=step_m,
                      radio=_radio(model)).to_dict()
    assert r["model"] == MODELS[model]["model"]
    dr = r["lora"]["uplink"]["recommended_dr"]
    return (r["loss_db"]["total"], r["worst"]["fresnel_ratio"], r["budget"]["rx_power_dbm"], r["budget"]["margin_db"],
            r["budget_downlink"]["margin_db"], np.nan if dr is None else dr)


# the cases of sample_sites.MODEL_OPTIONS, as PropagationSettings
MODELS = {"terrain": {"model": "terrain"}, "p1812": {"model": "p1812"},
          "p1812-10t-95l": {"model": "p1812", "time_percent": 10.0, "location_percent": 95.0}}


def _radio(case):
    from profiler.engine.model import PropagationSettings
    from profiler.engine.radio import RadioSettings

    return RadioSettings(propagation=PropagationSettings(**MODELS[case]))


@pytest.fixture(scope="module", params=list(MODELS))
def fine(request):
    """At the elevation data's own pixel size (the default resolution), with each propagation model."""
    return coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=2.5, node_mast_m=NODE_M, progress=False,
                    radio=_radio(request.param)), request.param


def test_values_equal_profiler_link_at_the_sample_and_near_it_at_the_pixel_centre(fine):
    run, model = fine
    assert run.report["settings"]["model"] == MODELS[model]["model"]
    keys = ("path_loss_db", "worst_fresnel_ratio", "rx_level_dbm", "margin_db", "downlink_margin_db",
            "recommended_dr")
    finite = np.flatnonzero(np.isfinite(run.bands["margin_db"]).ravel())
    rng = np.random.default_rng(11)
    pixels = np.unravel_index(rng.choice(finite, 60, replace=False), run.bands["margin_db"].shape)
    la, lo, j, lat_c, lon_c = _sample_points(run, pixels)
    step = run.report["settings"]["radial_step_m"]
    loss_diff, ratio_diff = [], []
    for i in range(la.size):   # one profiler.link call per checked pixel (the reference)
        got = [float(run.bands[k][pixels[0][i], pixels[1][i]]) for k in keys]
        if j[i] >= 2:
            # at the radial sample itself the values are the link engine's, to rounding (float32 bands)
            want = _link((la[i], lo[i]), step * (1 + 1e-9), model)
            np.testing.assert_allclose(got[:5], want[:5], atol=0.01, rtol=0)
            assert got[5] == want[5] or (np.isnan(got[5]) and np.isnan(want[5]))
        centre = _link((lat_c[i], lon_c[i]), step, model)
        loss_diff.append(abs(got[0] - centre[0]))
        ratio_diff.append(abs(got[1] - centre[1]))
    # at the pixel centre only the sampling differs (up to half a step along, one pixel across the radial);
    # measured on this terrain (150 pixels): median 0.06 dB, 99 % within 0.5 dB, largest 0.58 dB;
    # Fresnel ratio all within 0.05
    loss_diff, ratio_diff = np.asarray(loss_diff), np.asarray(ratio_diff)
    assert np.median(loss_diff) < 0.15
    assert np.mean(loss_diff < 0.5) >= 0.95
    assert np.mean(ratio_diff < 0.05) >= 0.95


def test_line_of_sight_against_exact_per_pixel_check(run):
    from profiler.engine.geometry import geometry_batch
    from profiler.propagation import geometry
    from profiler.propagation.free_space import wavelength_m
    from profiler.terrain.elevation import ElevationModel
    from profiler.terrain.sampling import sample_links

    los = run.bands["line_of_sight"]
    ok = np.isfinite(los)
    # the cumulative-maximum map equals the engine's own LOS test at the samples (clearance > 0)
    assert np.array_equal(los[ok] == 1.0, run.bands["worst_fresnel_ratio"][ok] > 0.0)
    lon, lat, _, dist = _pixel_geodesics(run, GATEWAY)
    sel = ok & (dist > 2 * RES_M)
    n_px = int(sel.sum())
    with ElevationModel.open(DEM) as model:
        s = sample_links(model, np.full(n_px, GATEWAY[0]), np.full(n_px, GATEWAY[1]), lat[sel], lon[sel],
                         step_m=run.report["settings"]["radial_step_m"])
    assert all(e is None for e in s.error)
    rows = np.arange(n_px)
    h_a = s.terrain_m[:, 0] + 10.0
    h_b = s.terrain_m[rows, s.n - 1] + NODE_M
    g = geometry_batch(s.distance_m, s.terrain_m, s.n, h_a, h_b, float(wavelength_m(868.3125)),
                       float(geometry.effective_radius_m(4 / 3)), 0.6)
    agree = np.mean(g.line_of_sight == (los[sel] == 1.0))
    assert n_px > 2000 and agree >= 0.995


def test_line_of_sight_radials_brute_force():
    rng = np.random.default_rng(3)
    d = np.tile(np.arange(60) * 25.0, (5, 1))
    t = 300 + np.cumsum(rng.normal(0, 4, d.shape), axis=1)
    ae = 8_494_666.0
    got = line_of_sight_radials(d, t, np.full(5, 60), t[:, 0] + 10.0, 1.5, ae)
    for r in range(5):
        for j in range(2, 60):   # direct definition: clearance above the curved Earth at every interior sample
            di = d[r, 1:j]
            ray = t[r, 0] + 10.0 + (t[r, j] + 1.5 - t[r, 0] - 10.0) * di / d[r, j]
            earth = t[r, 1:j] + di * (d[r, j] - di) / (2 * ae)
            assert got[r, j] == bool(np.all(ray > earth))


def test_composite_picks_the_best_gateway(tmp_path):
    # two gateways at the same point (10 m and 4 m masts) share the grid of a single-site run
    csv = tmp_path / "gw.csv"
    lat, lon = GATEWAY
    csv.write_text(f"name,lat_deg,lon_deg,mast_m,role\nHigh,{lat},{lon},10,gateway\nLow,{lat},{lon},4,gateway\n"
                   f"Farm,{lat + 0.01},{lon},2,node\n")
    both = coverage(dem=DEM, sites=csv, radius_km=2.0, resolution_m=RES_M, progress=False)
    assert tuple(both.bands) == COMPOSITE_BANDS
    singles = [coverage(GATEWAY, dem=DEM, mast_m=m, radius_km=2.0, resolution_m=RES_M, progress=False)
               for m in (10.0, 4.0)]
    m = np.stack([s.bands["margin_db"] for s in singles])
    ok = np.isfinite(both.bands["margin_db"])
    np.testing.assert_array_equal(both.bands["margin_db"][ok], m.max(axis=0)[ok])
    np.testing.assert_array_equal(both.bands["best_gateway"][ok], np.argmax(m, axis=0)[ok])
    np.testing.assert_array_equal(both.bands["gateways_heard"][ok], (m >= 10.0).sum(axis=0)[ok])
    assert [g["name"] for g in both.report["gateways"]] == ["High", "Low"]
    # two separate gateways: every count is 0, 1 or 2
    csv.write_text(f"name,lat_deg,lon_deg,mast_m,role\nA,{lat},{lon},10,gateway\nB,{lat - 0.03},{lon + 0.04},6,"
                   "gateway\n")
    two = coverage(dem=DEM, sites=csv, radius_km=2.0, resolution_m=RES_M, progress=False)
    heard = two.bands["gateways_heard"]
    assert set(np.unique(heard[np.isfinite(heard)])) <= {0.0, 1.0, 2.0}
    assert set(np.unique(two.bands["best_gateway"][np.isfinite(heard)])) == {0.0, 1.0}


def test_composite_function():
    a = {k: np.array([[1.0, np.nan, 5.0]], np.float32) for k in BANDS}
    b = {k: np.array([[2.0, np.nan, -1.0]], np.float32) for k in BANDS}
    out = composite([a, b], fade_margin_db=1.5)
    np.testing.assert_array_equal(out["margin_db"], [[2.0, np.nan, 5.0]])
    np.testing.assert_array_equal(out["best_gateway"], [[1.0, np.nan, 0.0]])
    np.testing.assert_array_equal(out["gateways_heard"], [[1.0, np.nan, 1.0]])


@pytest.mark.slow   # a Dask cluster or a memory trace of a whole map: in the slow run (.ci/run)
def test_dask_local_cluster_gives_identical_arrays(run):
    remote = coverage(GATEWAY, dem=DEM, mast_m=10.0, name="Cairnfell Beacon", radius_km=RADIUS_KM,
                      resolution_m=RES_M, node_mast_m=NODE_M, workers=2, progress=False)
    for name in BANDS:
        assert np.array_equal(remote.bands[name], run.bands[name], equal_nan=True), name


def test_cli_writes_every_output_and_summary(tmp_path):
    from profiler.cli import main

    files = {k: tmp_path / f"c.{k}" for k in ("tif", "json", "kmz", "png")}
    r = CliRunner().invoke(main, ["coverage", "--dem", str(DEM[0]), "--site", f"{GATEWAY[0]},{GATEWAY[1]}",
                                  "--mast-m", "10", "--radius-km", "2", "--resolution-m", "90",
                                  "--out", str(files["tif"]), "--json", str(files["json"]),
                                  "--kmz", str(files["kmz"]), "--plot", str(files["png"]), "--no-progress"])
    assert r.exit_code == 0, r.output
    assert "Coverage:" in r.output and "Planning aid only" in r.output
    report = json.loads(files["json"].read_text())
    assert report["schema"] == "profiler.coverage/5"
    assert report["grid"]["width"] > 0 and len(report["grid"]["transform"]) == 6
    assert report["dem"]["sources"][0]["sha256"]
    s = report["summary"]
    assert s["covered"]["pixels"] == sum(row["pixels"] for row in s["covered_by_dr"])
    with zipfile.ZipFile(files["kmz"]) as z:
        assert z.namelist()[0] == "doc.kml"
        kml = z.read("doc.kml").decode()
    assert "<GroundOverlay>" in kml and "<LatLonBox>" in kml and "Planning aid only" in kml
    assert files["png"].stat().st_size > 10_000


@pytest.mark.parametrize("args, words", [
    (["--site", "-10,-19.9", "--mast-m", "10"], "outside the elevation data"),
    (["--mast-m", "10"], "--site"),
    (["--site", "-29.9125,-19.955"], "--mast-m"),
])
def test_bad_input_one_line_exit_2_nothing_written(tmp_path, args, words):
    from profiler.cli import main

    out = tmp_path / "c.tif"
    r = CliRunner().invoke(main, ["coverage", "--dem", str(DEM[0]), "--radius-km", "2", "--out", str(out),
                                  "--json", str(tmp_path / "c.json"), *args])
    assert r.exit_code == 2
    assert words in r.output and "Traceback" not in r.output
    assert list(tmp_path.iterdir()) == []


def test_nodata_outside_the_elevation_data():
    from profiler.terrain.elevation import ElevationModel

    r = coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=6.0, resolution_m=150.0, progress=False)
    lon, lat = r.grid.lon_lat()
    with ElevationModel.open(DEM) as model:
        covered = np.asarray(model.covers(lon, lat))
    margin = r.bands["margin_db"]
    assert (~covered).sum() > 100
    assert np.isnan(margin[~covered]).all()
    assert any("no value" in w for w in r.report["warnings"])


def test_the_coverage_computation_takes_no_file_to_write():
    # computations return results; profiler.coverage (api) writes out/plot/kmz/json after computing
    import inspect

    from profiler.products.coverage.map import coverage as compute

    assert not {"out", "plot", "kmz", "json", "paper", "dpi"} & set(inspect.signature(compute).parameters)
    assert {"out", "plot", "kmz", "json"} <= set(inspect.signature(coverage).parameters)
