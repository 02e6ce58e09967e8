"""Tests for profiler.terrain.elevation: bilinear sampling, registration, seams, units, voids.

Check values come from outside the project: the exactness of bilinear
interpolation on bilinear functions and its h^2/8 error bound (handbook
properties), the SRTM tile layout, the NIST definitions of the foot, pyproj
projections, geographiclib distances and the open USGS 3 arc-second DEM that
matplotlib ships as sample data.
"""

import math
import zipfile
from pathlib import Path

import numpy as np
import pytest
import rasterio
import rasterio.io
from affine import Affine
from pyproj import Transformer

from profiler.errors import ProfilerError
from profiler.terrain.elevation import ElevationModel
from profiler.terrain.voids import fill_voids_along_profile

ARCSEC3_DEG = 3.0 / 3600.0
ARCSEC1_DEG = 1.0 / 3600.0


def from_origin(west, north, xsize, ysize):
    """North-up geotransform with its top-left corner at (west, north)."""
    return Affine(xsize, 0.0, west, 0.0, -ysize, north)


def bilinear_surface_m(lon, lat):
    """a + b x + c y + d x y in degrees from (7, 45): reproduced exactly by bilinear."""
    x = np.asarray(lon) - 7.0
    y = np.asarray(lat) - 45.0
    return 500.0 + 1200.0 * x + 800.0 * y + 3000.0 * x * y


def smooth_surface_m(lon, lat):
    """Plane plus a smooth undulation (wavelengths 0.05 deg and 0.07 deg)."""
    x = np.asarray(lon) - 7.0
    y = np.asarray(lat) - 45.0
    return (500.0 + 1200.0 * x + 800.0 * y
            + 50.0 * np.sin(2 * np.pi * x / 0.05) * np.cos(2 * np.pi * y / 0.07))


def smooth_bilinear_bound_m(hx_deg, hy_deg):
    """Bilinear error bound hx^2/8 max|f_xx| + hy^2/8 max|f_yy| for smooth_surface_m.

    Linear interpolation error |f - p| <= h^2/8 max|f''| (Burden & Faires,
    Numerical Analysis, Thm 3.3 with n = 1), applied along each axis.
    """
    fxx = 50.0 * (2 * np.pi / 0.05) ** 2
    fyy = 50.0 * (2 * np.pi / 0.07) ** 2
    return hx_deg ** 2 / 8 * fxx + hy_deg ** 2 / 8 * fyy


def grid_centres(transform, height, width):
    """Pixel-centre coordinates of an area-registered grid (GDAL convention)."""
    cols, rows = np.meshgrid(np.arange(width) + 0.5, np.arange(height) + 0.5)
    x = transform.c + transform.a * cols + transform.b * rows
    y = transform.f + transform.d * cols + transform.e * rows
    return x, y


def geographic_dem(write_dem, surface, name="surface.tif", west=7.0, north=45.2,
                   size_deg=0.2, step_deg=ARCSEC3_DEG, dtype="float64", **kwargs):
    n = int(round(size_deg / step_deg))
    transform = from_origin(west, north, step_deg, step_deg)
    lon, lat = grid_centres(transform, n, n)
    return write_dem(name, surface(lon, lat).astype(dtype), transform, **kwargs)


def random_points(rng, n, west, south, east, north):
    return rng.uniform(west, east, n), rng.uniform(south, north, n)


# --------------------------------------------------------------- bilinear
def test_bilinear_function_reproduced_exactly(write_dem):
    path = geographic_dem(write_dem, bilinear_surface_m)
    lon, lat = random_points(np.random.default_rng(1), 2000,
                             7.0 + ARCSEC3_DEG, 45.0 + ARCSEC3_DEG,
                             7.2 - ARCSEC3_DEG, 45.2 - ARCSEC3_DEG)
    with ElevationModel.open(path) as dem:
        got = dem.sample(lon, lat)
    # Bilinear interpolation reproduces a + bx + cy + dxy exactly (Numerical
    # Recipes 3rd ed., eq. 3.6.5: the interpolant is of exactly this form).
    np.testing.assert_allclose(got, bilinear_surface_m(lon, lat), rtol=0, atol=1e-6)


def test_smooth_surface_within_bilinear_error_bound(write_dem):
    path = geographic_dem(write_dem, smooth_surface_m)
    lon, lat = random_points(np.random.default_rng(2), 2000,
                             7.0 + ARCSEC3_DEG, 45.0 + ARCSEC3_DEG,
                             7.2 - ARCSEC3_DEG, 45.2 - ARCSEC3_DEG)
    with ElevationModel.open(path) as dem:
        err = np.abs(dem.sample(lon, lat) - smooth_surface_m(lon, lat))
    bound = smooth_bilinear_bound_m(ARCSEC3_DEG, ARCSEC3_DEG)  # about 0.1 m
    assert err.max() <= bound + 1e-6
    assert err.max() > 0.05 * bound  # the surface is really not bilinear


def test_edge_clamp_and_outside(write_dem):
    # Between the outermost centre and the raster edge the edge pixel row is
    # used; beyond the edge nothing is covered.
    path = geographic_dem(write_dem, bilinear_surface_m)
    half = 0.5 * ARCSEC3_DEG
    lon = np.array([7.1, 7.1, 7.2 + 1e-3, 6.99])
    lat = np.array([45.2 - 0.25 * half, 45.2 - half, 45.1, 45.1])
    with ElevationModel.open(path) as dem:
        got = dem.sample(lon, lat)
        covered = dem.covers(lon, lat)
    top_centre = bilinear_surface_m(7.1, 45.2 - half)
    assert got[0] == pytest.approx(top_centre, abs=1e-6)
    assert got[1] == pytest.approx(top_centre, abs=1e-6)
    assert np.isnan(got[2:]).all()
    np.testing.assert_array_equal(covered, [True, True, False, False])


# ------------------------------------------------------------- open data
def test_usgs_3arcsec_sample_data_exact_at_pixel_centres(write_dem):
    cbook = pytest.importorskip("matplotlib.cbook")
    # USGS 3 arc-second DEM shipped with matplotlib (sample_data).  Its extent
    # values are outer pixel edges: (xmax - xmin) / dx = 403 = number of columns.
    # Row 0 is the northern row (matplotlib's shading examples draw it with
    # imshow's default origin='upper', from memory); the key 'ymin' holds the
    # northern edge.
    data = cbook.get_sample_data("jacksboro_fault_dem.npz")
    elevation = data["elevation"]
    dx, dy = float(data["dx"]), float(data["dy"])
    west = float(data["xmin"])
    north = max(float(data["ymin"]), float(data["ymax"]))
    assert (float(data["xmax"]) - west) / dx == pytest.approx(elevation.shape[1])
    assert dx == pytest.approx(ARCSEC3_DEG)
    transform = from_origin(west, north, dx, dy)
    path = write_dem("usgs.tif", elevation, transform)
    lon, lat = grid_centres(transform, *elevation.shape)
    with ElevationModel.open(path) as dem:
        got = dem.sample(lon, lat)
        # Midway between four centres bilinear gives their mean (eq. 3.6.5 with
        # t = u = 1/2).
        mid = dem.sample(lon[:-1, :-1] + dx / 2, lat[:-1, :-1] - dy / 2)
    np.testing.assert_array_equal(got, elevation.astype(float))
    e = elevation.astype(float)
    mean4 = (e[:-1, :-1] + e[:-1, 1:] + e[1:, :-1] + e[1:, 1:]) / 4
    np.testing.assert_allclose(mid, mean4, rtol=0, atol=1e-6)


# ------------------------------------------------------- pixel registration
def test_point_registered_geotiff(write_dem):
    # GeoTIFF PixelIsPoint: GDAL reports a corner-based geotransform (it shifts
    # the tie point by half a pixel), so centres are still transform*(j+.5, i+.5).
    transform = from_origin(7.0, 45.2, ARCSEC3_DEG, ARCSEC3_DEG)
    lon, lat = grid_centres(transform, 240, 240)
    values = bilinear_surface_m(lon, lat)
    path = write_dem("point.tif", values, transform, tags={"AREA_OR_POINT": "Point"})
    with rasterio.open(path) as ds:
        assert ds.tags()["AREA_OR_POINT"] == "Point"
    with ElevationModel.open(path) as dem:
        got = dem.sample(lon[::7, ::5], lat[::7, ::5])
    np.testing.assert_allclose(got, values[::7, ::5], rtol=0, atol=1e-9)


def write_hgt(folder, name, surface, samples=1201):
    """SRTM .hgt: big-endian int16, row 0 north, first/last row and column on the
    integer-degree edges (NASA/USGS SRTM documentation, from memory)."""
    south = int(name[1:3]) * (1 if name[0] == "N" else -1)
    west = int(name[4:7]) * (1 if name[3] == "E" else -1)
    step = 1.0 / (samples - 1)
    lon = west + np.arange(samples) * step
    lat = south + 1.0 - np.arange(samples) * step
    grid = surface(*np.meshgrid(lon, lat))
    path = folder / f"{name}.hgt"
    np.round(grid).astype(">i2").tofile(path)
    return path


def steep_surface_m(lon, lat):
    """Steep enough (10 m per 3" pixel north-south) to expose half-pixel shifts."""
    x = np.asarray(lon) - 7.0
    y = np.asarray(lat) - 45.0
    return (100.0 + 8000.0 * x + 12000.0 * y
            + 40.0 * np.sin(2 * np.pi * x / 0.2) * np.cos(2 * np.pi * y / 0.3))


def test_hgt_tiles_registration_and_seam(tmp_path):
    folder = tmp_path / "srtm"
    folder.mkdir()
    write_hgt(folder, "N45E007", steep_surface_m)
    write_hgt(folder, "N45E008", steep_surface_m)
    (folder / "N45E007.hgt.aux.xml").write_text("<PAMDataset/>")  # sidecar: ignored
    with ElevationModel.open(folder) as dem:
        assert len(dem.sources) == 2
        assert dem.sources[0].resolution == pytest.approx((ARCSEC3_DEG, ARCSEC3_DEG))
        # First sample of the first row is the NW corner (7 E, 46 N) exactly.
        assert dem.sample(7.0, 46.0) == round(float(steep_surface_m(7.0, 46.0)))
        # A path across the 8 E seam between the two tiles.
        lon = np.linspace(7.7, 8.3, 3001)
        lat = np.linspace(45.2, 45.8, 3001)
        got = dem.sample(lon, lat)
        used = dem.sources_used(lon, lat)
    assert len(used) == 2
    # int16 rounding (<= 0.5 m) plus the h^2/8 bilinear bound of the sine part.
    fxx = 40.0 * (2 * np.pi / 0.2) ** 2
    fyy = 40.0 * (2 * np.pi / 0.3) ** 2
    bound = 0.5 + ARCSEC3_DEG ** 2 / 8 * (fxx + fyy)
    err = np.abs(got - steep_surface_m(lon, lat))
    assert err.max() <= bound
    # A half-pixel registration error would cost 0.5 * 12000 / 1200 = 5 m.


def test_hgt_matches_geotiff_profile(tmp_path, write_dem):
    write_hgt(tmp_path, "N45E007", steep_surface_m)
    transform = from_origin(7.0, 46.0, ARCSEC3_DEG, ARCSEC3_DEG)
    lon_c, lat_c = grid_centres(transform, 1200, 1200)
    tif = write_dem("area.tif", steep_surface_m(lon_c, lat_c).astype("float32"), transform)
    lon = np.linspace(7.05, 7.95, 2001)
    lat = np.linspace(45.9, 45.1, 2001)
    with ElevationModel.open(tmp_path / "N45E007.hgt") as hgt, ElevationModel.open(tif) as gt:
        diff = np.abs(hgt.sample(lon, lat) - gt.sample(lon, lat))
    assert diff.max() <= 1.0  # both within ~0.5 m of the same surface


def test_hgt_1arcsec_size_and_zip(tmp_path):
    # 1" SRTM tiles have 3601 x 3601 samples (SRTM documentation, from memory).
    path = tmp_path / "N10W001.hgt"
    np.full((3601, 3601), 7, dtype=">i2").tofile(path)
    with zipfile.ZipFile(tmp_path / "N10W001.hgt.zip", "w") as archive:
        archive.write(path, "N10W001.hgt")
    path.unlink()
    with ElevationModel.open(tmp_path / "N10W001.hgt.zip") as dem:
        assert dem.sources[0].resolution == pytest.approx((ARCSEC1_DEG, ARCSEC1_DEG))
        assert dem.sample(-0.5, 10.5) == 7.0
        assert dem.covers(-1.0, 11.0) and not dem.covers(-1.01, 11.0)


# ------------------------------------------------- projected CRS and tiles
UTM32 = "EPSG:32632"


def test_utm_tiles_are_seamless(write_dem, tmp_path):
    to_utm = Transformer.from_crs("EPSG:4326", UTM32, always_xy=True)
    to_ll = Transformer.from_crs(UTM32, "EPSG:4326", always_xy=True)
    e0, n0 = to_utm.transform(7.5, 45.5)
    e0, n0 = 30.0 * round(e0 / 30.0), 30.0 * round(n0 / 30.0)
    transform = from_origin(e0, n0, 30.0, 30.0)
    east, north = grid_centres(transform, 200, 200)
    values = smooth_surface_m(*to_ll.transform(east, north))
    single = write_dem("single/utm.tif", values, transform, crs=UTM32)
    for i in range(2):
        for j in range(2):
            part = values[100 * i:100 * (i + 1), 100 * j:100 * (j + 1)]
            write_dem(f"tiles/t{i}{j}.tif", part,
                      from_origin(e0 + 3000.0 * j, n0 - 3000.0 * i, 30.0, 30.0),
                      crs=UTM32, blocksize=32)
    (tmp_path / "tiles" / "t00.prj").write_text("not a raster")  # ignored
    # A path through the area crossing both seams (in lon/lat).
    lon_a, lat_a = to_ll.transform(e0 + 200.0, n0 - 5800.0)
    lon_b, lat_b = to_ll.transform(e0 + 5800.0, n0 - 300.0)
    lon = np.linspace(lon_a, lon_b, 4001)
    lat = np.linspace(lat_a, lat_b, 4001)
    with ElevationModel.open(single) as one, ElevationModel.open(tmp_path / "tiles") as four:
        z_one = one.sample(lon, lat)
        z_four = four.sample(lon, lat)
        # By hand: the line crosses easting e0+3000 at 3050 m south of n0 (below
        # the row seam), so it runs t10 -> t11 -> t01 and never enters t00.
        used = sorted(Path(s.path).stem for s in four.sources_used(lon, lat))
        assert used == ["t01", "t10", "t11"]
        assert four.sources[0].crs == UTM32
        assert four.pixel_size_m(lon, lat) == pytest.approx(30.0)
    assert np.isfinite(z_one).all()
    # Seamless: the split mosaic interpolates across seams like the single file.
    np.testing.assert_allclose(z_four, z_one, rtol=0, atol=1e-9)
    # And both follow the surface (bilinear bound in metres: 30 m pixels are
    # about 3.9e-4 deg in lon and 2.7e-4 deg in lat at 45.5 N; 0.2 m margin).
    err = np.abs(z_one - smooth_surface_m(lon, lat))
    assert err.max() <= smooth_bilinear_bound_m(4.0e-4, 3.0e-4) + 0.2


def test_geographic_tiles_are_seamless(write_dem, tmp_path):
    transform = from_origin(7.0, 45.2, ARCSEC3_DEG, ARCSEC3_DEG)
    lon_c, lat_c = grid_centres(transform, 240, 240)
    values = smooth_surface_m(lon_c, lat_c)
    single = write_dem("one.tif", values, transform)
    for i in range(2):
        for j in range(2):
            # Different nodata values per tile: the mosaic still joins them.
            write_dem(f"quad/q{i}{j}.tif", values[120 * i:120 * (i + 1), 120 * j:120 * (j + 1)],
                      from_origin(7.0 + 0.1 * j, 45.2 - 0.1 * i, ARCSEC3_DEG, ARCSEC3_DEG),
                      nodata=-9999.0 - i - 2 * j)
    lon = np.linspace(7.0, 7.2, 5001)[1:-1]
    lat = np.linspace(45.19, 45.01, 5001)[1:-1]
    with ElevationModel.open(single) as one, ElevationModel.open([tmp_path / "quad"]) as four:
        np.testing.assert_allclose(four.sample(lon, lat), one.sample(lon, lat),
                                   rtol=0, atol=1e-9)


def test_priority_finest_first_then_order_given(write_dem):
    coarse = geographic_dem(write_dem, lambda lon, lat: np.full_like(lon, 100.0),
                            name="coarse.tif", west=6.9, north=45.3, size_deg=0.4,
                            step_deg=2 * ARCSEC3_DEG)
    fine = geographic_dem(write_dem, lambda lon, lat: np.full_like(lon, 200.0),
                          name="fine.tif")
    same = geographic_dem(write_dem, lambda lon, lat: np.full_like(lon, 300.0),
                          name="same.tif", west=7.001)
    lon, lat = np.array([7.1, 6.95]), np.array([45.1, 45.1])
    with ElevationModel.open([coarse, fine, same]) as dem:
        np.testing.assert_array_equal(dem.sample(lon, lat), [200.0, 100.0])
        assert dem.pixel_size_m(lon[:1], lat[:1]) < dem.sources[0].resolution_m
        assert "lon 6.9000 to 7.3000" in dem.bounds_text()
    with ElevationModel.open([same, fine]) as dem:
        assert dem.sample(7.1, 45.1) == 300.0


def test_pixel_size_geographic_against_geographiclib(write_dem):
    geodesic = pytest.importorskip("geographiclib.geodesic").Geodesic.WGS84
    path = geographic_dem(write_dem, bilinear_surface_m)
    with ElevationModel.open(path) as dem:
        size = dem.pixel_size_m([7.1], [45.1])
    # geographiclib: one 3" step along the parallel is the shorter side.
    dy = geodesic.Inverse(45.1, 7.1, 45.1 + ARCSEC3_DEG, 7.1)["s12"]
    dx = geodesic.Inverse(45.1, 7.1, 45.1, 7.1 + ARCSEC3_DEG)["s12"]
    assert size == pytest.approx(min(dx, dy), rel=1e-6)


# ---------------------------------------------------------------- units
@pytest.mark.parametrize("units, crs, metres_per_unit", [
    ("ft", "EPSG:4326", 0.3048),                    # NIST SP 811 B.6: 1 ft = 0.3048 m
    ("US survey foot", "EPSG:4326", 1200 / 3937),   # NIST SP 811 B.6: US survey foot
    (None, "EPSG:4326+6360", 1200 / 3937),          # EPSG:6360 NAVD88 height (ftUS)
    (None, "EPSG:4326+8228", 0.3048),               # EPSG:8228 NAVD88 height (ft)
    (None, "EPSG:4326", 1.0),
])
def test_feet_are_converted_to_metres(write_dem, units, crs, metres_per_unit):
    path = geographic_dem(write_dem, lambda lon, lat: np.full_like(lon, 1000.0),
                          units=units, crs=crs)
    with ElevationModel.open(path) as dem:
        assert dem.sources[0].vertical_scale == pytest.approx(metres_per_unit)
        assert dem.sample(7.1, 45.1) == pytest.approx(1000.0 * metres_per_unit, abs=1e-9)


# ---------------------------------------------------------------- voids
def test_voids_are_nan_but_covered_and_fill_linearly(write_dem):
    transform = from_origin(7.0, 45.2, ARCSEC3_DEG, ARCSEC3_DEG)
    lon_c, lat_c = grid_centres(transform, 240, 240)
    values = np.round(bilinear_surface_m(lon_c, 45.1 + 0 * lat_c)).astype("int16")
    values[100:140, 100:140] = -32768
    path = write_dem("void.tif", values, transform, nodata=-32768)
    lon = np.linspace(7.01, 7.19, 1001)
    lat = np.full_like(lon, 45.1 + 0.1 * ARCSEC3_DEG)
    with ElevationModel.open(path) as dem:
        z = dem.sample(lon, lat)
        covered = dem.covers(lon, lat)
    void = np.isnan(z)
    assert void.any() and not void.all()
    assert covered.all()
    # Void span: columns 100..139 plus the bilinear neighbours on either side.
    lon_void = lon[void]
    assert lon_void.min() >= 7.0 + 99.5 * ARCSEC3_DEG
    assert lon_void.max() <= 7.0 + 140.5 * ARCSEC3_DEG
    distance_m = (lon - lon[0]) * 78_000.0
    filled, n_filled = fill_voids_along_profile(distance_m, z)
    assert n_filled == void.sum()
    # Terrain linear in longitude along this parallel: linear interpolation
    # across the void restores the surface up to int16 rounding (<= 0.5 m).
    np.testing.assert_allclose(filled, bilinear_surface_m(lon, 45.1), rtol=0, atol=0.5)


def test_fill_voids_along_profile_cases():
    d = np.arange(10.0) * 30.0
    z = 100.0 + 0.25 * d  # a straight line: linear fill is exact
    holes = z.copy()
    holes[[0, 3, 4, 5, 9]] = np.nan
    filled, n = fill_voids_along_profile(d, holes)
    assert n == 5
    np.testing.assert_allclose(filled[1:9], z[1:9], rtol=0, atol=1e-12)
    assert filled[0] == z[1] and filled[9] == z[8]  # ends: nearest valid sample
    same, n0 = fill_voids_along_profile(d, z)
    assert n0 == 0 and np.array_equal(same, z)
    with pytest.raises(ProfilerError):
        fill_voids_along_profile(d, np.full(10, np.nan))


def test_nan_float_voids(write_dem):
    transform = from_origin(7.0, 45.2, ARCSEC3_DEG, ARCSEC3_DEG)
    values = np.full((240, 240), 10.0, dtype="float32")
    values[50, 50] = np.nan
    path = write_dem("nan.tif", values, transform)
    centre_lon = 7.0 + 50.5 * ARCSEC3_DEG
    centre_lat = 45.2 - 50.5 * ARCSEC3_DEG
    with ElevationModel.open(path) as dem:
        z = dem.sample([centre_lon + 0.4 * ARCSEC3_DEG, centre_lon + 1.2 * ARCSEC3_DEG],
                       [centre_lat, centre_lat])
    assert np.isnan(z[0]) and z[1] == 10.0


# --------------------------------------------------------------- block I/O
def test_reads_only_touched_blocks_and_caches_them(write_dem, monkeypatch):
    transform = from_origin(7.0, 45.5, ARCSEC3_DEG, ARCSEC3_DEG)
    values = np.arange(1024 * 1024, dtype="int32").reshape(1024, 1024) % 5000
    path = write_dem("tiled.tif", values.astype("int16"), transform, blocksize=128)
    windows = []
    original = rasterio.io.DatasetReader.read

    def counting_read(self, *args, **kwargs):
        windows.append(kwargs.get("window"))
        return original(self, *args, **kwargs)

    monkeypatch.setattr(rasterio.io.DatasetReader, "read", counting_read)
    # Along pixel row 448.3 (block row 3 spans rows 384..511) from column 200.5
    # to 600.5: by hand the blocks crossed are columns 1..4 of block row 3.
    lon = 7.0 + np.linspace(200.5, 600.5, 500) * ARCSEC3_DEG
    lat = np.full_like(lon, 45.5 - 448.3 * ARCSEC3_DEG)
    with ElevationModel.open(path) as dem:
        first = dem.sample(lon, lat)
        assert dem.blocks_read == 4
        offsets = sorted((w.row_off, w.col_off, w.height, w.width) for w in windows)
        assert offsets == [(384, 128 * k, 128, 128) for k in range(1, 5)]
        again = dem.sample(lon, lat)
        nearby = dem.sample(lon + 10 * ARCSEC3_DEG, lat - 5 * ARCSEC3_DEG)
        assert dem.blocks_read == 4 and len(windows) == 4
    np.testing.assert_array_equal(again, first)
    assert np.isfinite(nearby).all()


def test_small_cache_evicts_and_rereads(write_dem):
    transform = from_origin(7.0, 45.5, ARCSEC3_DEG, ARCSEC3_DEG)
    path = write_dem("tiled.tif", np.ones((512, 512), "int16"), transform, blocksize=128)
    lon = 7.0 + np.linspace(10.5, 500.5, 50) * ARCSEC3_DEG
    lat = np.full_like(lon, 45.5 - 60.5 * ARCSEC3_DEG)
    with ElevationModel.open(path, cache_bytes=128 * 128 * 4) as dem:
        dem.sample(lon, lat)
        dem.sample(lon, lat)
        assert dem.blocks_read == 8  # one cached block: every block read twice


# ------------------------------------------------------------------ errors
def one_line_error(call):
    with pytest.raises(ProfilerError) as info:
        call()
    message = str(info.value)
    assert "\n" not in message and message
    return message


def test_errors_are_one_line(tmp_path, write_dem):
    missing = tmp_path / "nowhere.tif"
    assert one_line_error(lambda: ElevationModel.open(missing)) == \
        f"DEM not found: {missing}; check --dem"
    empty = tmp_path / "empty"
    empty.mkdir()
    (empty / "readme.txt").write_text("no rasters here")
    assert "no elevation rasters" in one_line_error(lambda: ElevationModel.open(empty))
    bogus = tmp_path / "bogus.tif"
    bogus.write_text("this is not a raster")
    assert str(bogus) in one_line_error(lambda: ElevationModel.open(bogus))
    assert "no DEM" in one_line_error(lambda: ElevationModel.open([]))
    # Truncated tiled GeoTIFF: header intact, pixel blocks missing.
    good = write_dem("trunc.tif", np.ones((512, 512), "int16"),
                     from_origin(7.0, 45.5, ARCSEC3_DEG, ARCSEC3_DEG), blocksize=128)
    good.write_bytes(good.read_bytes()[: good.stat().st_size // 3])
    with ElevationModel.open(good) as dem:
        message = one_line_error(lambda: dem.sample(7.0 + 400 * ARCSEC3_DEG,
                                                    45.5 - 400 * ARCSEC3_DEG))
    assert "trunc.tif" in message and "corrupt" in message
    outside = geographic_dem(write_dem, bilinear_surface_m, name="small.tif")
    with ElevationModel.open(outside) as dem:
        assert "lon 7.0000 to 7.2000" in one_line_error(lambda: dem.pixel_size_m([0.0], [0.0]))


def test_multiband_uses_band_one(write_dem):
    stack = np.stack([np.full((240, 240), 5.0), np.full((240, 240), 9.0)])
    path = write_dem("bands.tif", stack, from_origin(7.0, 45.2, ARCSEC3_DEG, ARCSEC3_DEG))
    with ElevationModel.open(str(path)) as dem:
        assert dem.sample(7.1, 45.1) == 5.0
        assert dem.sources[0].crs == "EPSG:4326"
        assert len(dem.sources[0].sha256) == 64
        assert math.isclose(dem.sources[0].bounds_lonlat[0], 7.0)


# ------------------------------------------------------------ other formats
def test_vrt_and_ascii_grid(write_dem, tmp_path):
    transform = from_origin(7.0, 45.2, ARCSEC3_DEG, ARCSEC3_DEG)
    lon_c, lat_c = grid_centres(transform, 240, 240)
    values = bilinear_surface_m(lon_c, lat_c)
    tif = write_dem("base.tif", values, transform)
    # A hand-written GDAL VRT (format described in the GDAL "VRT" driver docs).
    vrt = tmp_path / "mosaic.vrt"
    vrt.write_text(f"""<VRTDataset rasterXSize="240" rasterYSize="240">
  <SRS>EPSG:4326</SRS>
  <GeoTransform>7.0, {ARCSEC3_DEG!r}, 0.0, 45.2, 0.0, {-ARCSEC3_DEG!r}</GeoTransform>
  <VRTRasterBand dataType="Float64" band="1">
    <SimpleSource>
      <SourceFilename relativeToVRT="1">base.tif</SourceFilename>
      <SourceBand>1</SourceBand>
    </SimpleSource>
  </VRTRasterBand>
</VRTDataset>""")
    # ESRI ASCII grid without a .prj: taken as WGS84 longitude/latitude.
    asc = tmp_path / "grid.asc"
    with rasterio.open(tif) as src, rasterio.open(
            asc, "w", driver="AAIGrid", width=240, height=240, count=1, dtype="float64",
            transform=transform) as dst:
        dst.write(src.read(1), 1)
    lon, lat = random_points(np.random.default_rng(5), 300, 7.01, 45.01, 7.19, 45.19)
    # The ASCII grid stores values as decimal text with limited digits: 1e-4 m.
    for path, atol in ((vrt, 1e-6), (asc, 1e-4)):
        with ElevationModel.open(path) as dem:
            # Bilinear on a bilinear function is exact (Numerical Recipes eq. 3.6.5).
            np.testing.assert_allclose(dem.sample(lon, lat), bilinear_surface_m(lon, lat),
                                       rtol=0, atol=atol)
            assert dem.sources[0].crs == "EPSG:4326"


def test_void_in_fine_source_is_taken_from_coarser(write_dem):
    coarse = geographic_dem(write_dem, lambda lon, lat: np.full_like(lon, 100.0),
                            name="coarse.tif", step_deg=2 * ARCSEC3_DEG)
    fine_values = np.full((240, 240), 200, dtype="int16")
    fine_values[100:140, 100:140] = -32768
    fine = write_dem("fine.tif", fine_values,
                     from_origin(7.0, 45.2, ARCSEC3_DEG, ARCSEC3_DEG), nodata=-32768)
    with ElevationModel.open([coarse, fine]) as dem:
        z = dem.sample([7.05, 7.1], [45.15, 45.1])
        assert [Path(s.path).name for s in dem.sources_used([7.1], [45.1])] == ["coarse.tif"]
    np.testing.assert_array_equal(z, [200.0, 100.0])
