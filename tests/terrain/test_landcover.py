"""Land cover: nearest-pixel class codes, the class mapping and its TOML file, the sample raster.

The sampling is checked against rasterio's own ``DatasetReader.sample`` on the
same points (GDAL's pixel of each point), in a geographic and a projected
(UTM) raster and across a tile seam; the WorldCover mapping against the class
table of the ESA WorldCover Product User Manual; the default clutter heights
against the published values quoted beside them.
"""

from __future__ import annotations

import numpy as np
import pyproj
import pytest
import rasterio
from rasterio.transform import from_origin
from reference_data import missing_reason, reference_folder
from sample_sites import DEM, GATEWAY, PUMP, ROOT, SHEEPFOLD, TANK
from test_dem import one_line_error

from profiler.terrain.elevation import ElevationModel
from profiler.terrain.geodesic import geodesic_path
from profiler.terrain.landcover import (
    CLUTTER_CLASSES,
    DEFAULT_HEIGHTS_M,
    NO_CLASS,
    WORLDCOVER_CLASSES,
    LandCover,
    read_class_mapping,
    worldcover_mapping,
)

SAMPLE = ROOT / "dem_samples" / "vellmoor_landcover.tif"
CODES = np.array(sorted(WORLDCOVER_CLASSES), dtype=np.uint8)


def _codes_grid(shape, seed):
    """Random WorldCover codes with some nodata (0) pixels."""
    rng = np.random.default_rng(seed)
    grid = rng.choice(CODES, size=shape)
    grid[rng.random(shape) < 0.05] = 0
    return grid


def _rasterio_codes(path, x, y):
    """GDAL's pixel of each point (x, y in the raster's CRS) through rasterio: code, or NO_CLASS when masked."""
    with rasterio.open(path) as ds:
        values = np.ma.concatenate([v for v in ds.sample(zip(x, y), indexes=1, masked=True)])
    return np.where(np.ma.getmaskarray(values), NO_CLASS, values.filled(0).astype(np.int32))


# --------------------------------------------------------------------------- nearest pixel = rasterio's pixel
def test_geographic_raster_matches_rasterio_sample(write_dem):
    path = write_dem("lc_geo.tif", _codes_grid((120, 150), 1), from_origin(10.0, 50.0, 0.001, 0.001),
                     nodata=0, blocksize=32)
    rng = np.random.default_rng(2)
    lon = rng.uniform(10.0, 10.15, 5000)
    lat = rng.uniform(49.88, 50.0, 5000)
    with LandCover.open(path) as lc:
        got = lc.codes(lon, lat)
    assert got.dtype == np.int32 and (got == NO_CLASS).any()
    np.testing.assert_array_equal(got, _rasterio_codes(path, lon, lat))


def test_projected_raster_matches_rasterio_sample(write_dem):
    # 30 m pixels in UTM zone 33N (EPSG:32633); points drawn in lon/lat and carried to UTM for rasterio.
    path = write_dem("lc_utm.tif", _codes_grid((90, 110), 3), from_origin(500000.0, 5540000.0, 30.0, 30.0),
                     crs="EPSG:32633", nodata=0)
    with rasterio.open(path) as ds:
        west, south, east, north = ds.bounds
    to_lonlat = pyproj.Transformer.from_crs("EPSG:32633", "EPSG:4326", always_xy=True)
    rng = np.random.default_rng(4)
    lon, lat = to_lonlat.transform(rng.uniform(west, east, 4000), rng.uniform(south, north, 4000))
    x, y = pyproj.Transformer.from_crs("EPSG:4326", "EPSG:32633", always_xy=True).transform(lon, lat)
    with LandCover.open(path) as lc:
        got = lc.codes(lon, lat)
    np.testing.assert_array_equal(got, _rasterio_codes(path, x, y))


def test_tiles_in_a_folder_sample_as_the_whole_raster(write_dem):
    grid = _codes_grid((80, 100), 5)
    whole = write_dem("whole.tif", grid, from_origin(-3.0, 40.0, 0.01, 0.01), nodata=0)
    for name, part, origin in (("tiles/w.tif", grid[:, :37], -3.0), ("tiles/e.tif", grid[:, 37:], -2.63)):
        write_dem(name, part, from_origin(origin, 40.0, 0.01, 0.01), nodata=0)
    rng = np.random.default_rng(6)
    lon, lat = rng.uniform(-3.0, -2.0, 3000), rng.uniform(39.2, 40.0, 3000)
    with LandCover.open(whole.parent / "tiles") as lc:
        got = lc.codes(lon.reshape(60, 50), lat.reshape(60, 50))
        west_only = lc.provenance([-2.9, -2.8], [39.5, 39.6])
    assert got.shape == (60, 50) and len(lc.sources) == 2
    assert [r["path"] for r in west_only] == [str(whole.parent / "tiles" / "w.tif")]
    assert len(west_only[0]["sha256"]) == 64
    np.testing.assert_array_equal(got.ravel(), _rasterio_codes(whole, lon, lat))


def test_outside_every_raster_is_no_class(write_dem):
    path = write_dem("small.tif", np.full((4, 4), 50, np.uint8), from_origin(0.0, 1.0, 0.25, 0.25), nodata=0)
    with LandCover.open(path) as lc:
        got = lc.codes([0.5, 2.0, 0.5, np.nan], [0.5, 0.5, -3.0, 0.5])
    np.testing.assert_array_equal(got, [50, NO_CLASS, NO_CLASS, NO_CLASS])


def test_a_raster_of_fractions_is_refused(write_dem):
    path = write_dem("frac.tif", np.full((4, 4), 0.5, np.float32), from_origin(0.0, 1.0, 0.25, 0.25))
    with LandCover.open(path) as lc:
        message = one_line_error(lambda: lc.codes(0.5, 0.5))
    assert "frac.tif" in message and "class code" in message


def test_dem_folder_and_land_cover_folder_pick_their_own_rasters():
    # dem_samples holds both; before RasterRole.skips, --dem dem_samples took the class map as heights.
    with ElevationModel.open(DEM[0].parent) as dem, LandCover.open(DEM[0].parent) as lc:
        assert [s.path for s in dem.sources] == [str(DEM[0])]
        assert [s.path for s in lc.sources] == [str(SAMPLE)]
        assert 150.0 < float(dem.sample(GATEWAY[1], GATEWAY[0])) < 800.0


def test_missing_land_cover_names_the_option(tmp_path):
    message = one_line_error(lambda: LandCover.open(tmp_path / "nothing.tif"))
    assert message == f"land cover not found: {tmp_path / 'nothing.tif'}; check --land-cover"


# --------------------------------------------------------------------------- the class mapping
# ESA WorldCover Product User Manual v2.0 (2021 v200), class table of the Map layer.
WORLDCOVER_TABLE = {10: "Tree cover", 20: "Shrubland", 30: "Grassland", 40: "Cropland", 50: "Built-up",
                    60: "Bare / sparse vegetation", 70: "Snow and ice", 80: "Permanent water bodies",
                    90: "Herbaceous wetland", 95: "Mangroves", 100: "Moss and lichen"}


def test_worldcover_mapping_covers_the_class_table():
    assert {code: name for code, (name, _) in WORLDCOVER_CLASSES.items()} == WORLDCOVER_TABLE
    mapping = worldcover_mapping()
    codes = np.array(sorted(WORLDCOVER_TABLE) + [0, NO_CLASS])     # 0: the table's "no data"
    for model in DEFAULT_HEIGHTS_M:
        samples = mapping.clutter(codes, model)
        names = samples.class_names()
        assert all(n in CLUTTER_CLASSES for n in names[:-2]) and list(names[-2:]) == [None, None]
        assert np.all(np.isfinite(samples.height_m[:-2])) and np.all(np.isnan(samples.height_m[-2:]))
        assert list(samples.code[-2:]) == [NO_CLASS, NO_CLASS]
    assert dict(zip(sorted(WORLDCOVER_TABLE), mapping.clutter(codes[:-2], "p1812").class_names())) == {
        10: "trees", 20: "open", 30: "open", 40: "open", 50: "urban", 60: "open", 70: "open",
        80: "water", 90: "open", 95: "trees", 100: "open"}


def test_built_in_mapping_refuses_a_code_outside_the_table():
    message = one_line_error(lambda: worldcover_mapping().clutter([10, 7, 50], "terrain"))
    assert "code 7" in message and "built-in ESA WorldCover" in message and "--land-cover-classes" in message


def test_p2108_heights_are_table_3():
    # ITU-R P.2108-1 Table 3 as listed by the U.S. reference implementation's README (NTIA/p2108):
    # water/sea 10, open/rural 10, suburban 10, urban 15, trees/forest 15, dense urban 20 m.
    assert dict(DEFAULT_HEIGHTS_M["terrain"]) == {"water": 10.0, "open": 10.0, "suburban": 10.0,
                                                  "urban": 15.0, "trees": 15.0, "dense-urban": 20.0}


P1812 = reference_folder("p1812-validation")


@pytest.mark.skipif(P1812 is None, reason=missing_reason("p1812-validation"))
@pytest.mark.parametrize("name", ["b2iseac.csv", "rburg.csv"])
def test_p1812_heights_agree_with_the_sg3_profiles(name):
    # ITU-R SG3 validation examples for Rec. ITU-R P.1812-8: profile column 3 is the ground-cover
    # code (1 water/sea, 2 open/rural, 3 suburban, 4 urban/trees/forest), column 4 its height R [m].
    text = (P1812 / "profiles" / name).read_text(encoding="latin-1")
    block = text.split("{Begin of Profile}")[1].split("{End of Profile}")[0]
    pairs = {(int(float(c[2])), float(c[3])) for c in (line.split(",") for line in block.splitlines())
             if c[0][:1].isdigit()}
    by_code = {1: ("water",), 2: ("open",), 3: ("suburban",), 4: ("urban", "trees")}
    for code, height in pairs:
        assert all(DEFAULT_HEIGHTS_M["p1812"][c] == height for c in by_code[code]), (code, height)


def test_toml_file_overrides_heights_and_keeps_model_defaults(tmp_path):
    path = tmp_path / "classes.toml"
    path.write_text('[classes.50]\nclutter = "urban"\nheight_m = 12.5\n\n'
                    '[classes.10]\nclutter = "trees"\n\n[classes.80]\nclutter = "water"\nheight_m = 0\n')
    mapping = read_class_mapping(path)
    p1812 = mapping.clutter(np.array([[50, 10], [80, NO_CLASS]]), "p1812")
    np.testing.assert_array_equal(p1812.height_m, [[12.5, 15.0], [0.0, np.nan]])
    assert p1812.class_names().tolist() == [["urban", "trees"], ["water", None]]
    assert mapping.clutter([10], "terrain").height_m.tolist() == [15.0]


REFUSED = [
    ('[classes.50]\nclutter = "urban"\n', [40], "code 40", "add [classes.40]"),
    ('[classes.50]\nclutter = "town"\n', [50], "[classes.50]", "unknown clutter class 'town'"),
    ('[classes.50]\nclutter = "urban"\nheight_m = -3\n', [50], "[classes.50]", "height_m = -3"),
    ('[classes.50]\nclutter = "urban"\nheight_m = "15"\n', [50], "[classes.50]", "height_m = '15'"),
    ('[classes.50]\nclutter = "urban"\nheight_m = true\n', [50], "[classes.50]", "height_m = True"),
    ('[classes.50]\nclutter = "urban"\nheight_m = nan\n', [50], "[classes.50]", "height_m = nan"),
    ('[classes.50]\nclutter = "urban"\nheight_m = 150\n', [50], "[classes.50]", "from 0 to 100"),
    ('[classes.50]\nclutter = "urban"\nheigth_m = 15\n', [50], "[classes.50]", "unknown key 'heigth_m'"),
    ('[classes.50]\nheight_m = 15\n', [50], "[classes.50]", "no clutter"),
    ('[classes.town]\nclutter = "urban"\n', [50], "[classes.town]", "not a class code"),
    ('[classes]\n', [50], "classes.toml", "no [classes.CODE] tables"),
    ('[class.50]\nclutter = "urban"\n', [50], "classes.toml", "unknown key 'class'"),
    ('[classes.50\nclutter = "urban"\n', [50], "classes.toml", "not valid TOML"),
]


@pytest.mark.parametrize("text, codes, where, what", REFUSED, ids=[r[3] for r in REFUSED])
def test_toml_refusals_are_one_line_with_file_and_code(tmp_path, text, codes, where, what):
    path = tmp_path / "classes.toml"
    path.write_text(text)
    message = one_line_error(lambda: read_class_mapping(path).clutter(codes, "p1812"))
    assert str(path) in message and where in message and what in message, message


def test_unreadable_class_file_is_one_line(tmp_path):
    assert "cannot read land-cover classes" in one_line_error(lambda: read_class_mapping(tmp_path / "no.toml"))
    assert "--land-cover-classes" in one_line_error(lambda: read_class_mapping(" "))


# --------------------------------------------------------------------------- the sample scenario
# make_sample_landcover.py: town (50) around the church, Vellmoor Grange, the Osterby farmstead and the
# water meters' hamlets; fields (40 cropland / 30 grassland) elsewhere; Wendle Reservoir (80); heath
# (20) on Cairnfell; Harrowback Wood (10) across the paths from Cairnfell to the valley.
SAMPLE_SITES = {
    "Cairnfell Beacon": (GATEWAY, 20),
    "Osterby Farm pump": (PUMP, 50),
    "Vellmoor Grange roof": ((-29.925, -19.83), 50),
    "Vellmoor church tower": ((-29.95, -19.83), 50),
    "Ingleside water meter": ((-29.8112, -19.9547), 50),
    "Coldwater water meter": ((-29.9563, -19.8851), 50),
    "Wendle Reservoir": ((-30.0, -19.845), 80),
    "Millbrook Tank": (TANK, 30),
    "Sheepfold gauge": (SHEEPFOLD, 30),
    "Quarry Gate sensor": ((-29.965, -19.82), 40),
    "Saltmarsh Lane trough": ((-29.83, -19.93), 40),
    "Pellow Farm trough": ((-29.93, -19.821), 40),
}


def test_sample_land_cover_has_the_promised_class_at_each_site():
    lat, lon = np.array([site for site, _ in SAMPLE_SITES.values()]).T
    with LandCover.open(SAMPLE) as lc:
        got = dict(zip(SAMPLE_SITES, lc.codes(lon, lat).tolist()))
    assert got == {name: code for name, (_, code) in SAMPLE_SITES.items()}


def test_sample_forest_lies_across_the_path_to_the_pump():
    path = geodesic_path(*GATEWAY, *PUMP, 30.0)
    with LandCover.open(SAMPLE) as lc:
        codes = lc.codes(path.lon_deg, path.lat_deg)
    trees = np.flatnonzero(codes == 10)
    assert trees.size > 20 and 0.3 < path.distance_m[trees].mean() / path.distance_m[-1] < 0.7


def test_sample_raster_is_synthetic_small_and_on_the_dem_grid():
    with rasterio.open(SAMPLE) as lc, rasterio.open(DEM[0]) as dem:
        assert lc.tags()["SYNTHETIC"] == "yes" and lc.dtypes[0] == "uint8"
        assert lc.transform == dem.transform and lc.shape == dem.shape and lc.crs == dem.crs
        assert set(np.unique(lc.read(1)).tolist()) <= set(WORLDCOVER_TABLE)
    assert SAMPLE.stat().st_size < 64 * 1024



def test_sample_raster_is_what_its_script_writes(tmp_path):
    import importlib.util

    spec = importlib.util.spec_from_file_location("make_sample_landcover",
                                                  ROOT / "dem_samples" / "make_sample_landcover.py")
    script = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(script)
    fresh = script.main(tmp_path / "again.tif")
    with rasterio.open(fresh) as again, rasterio.open(SAMPLE) as kept:
        np.testing.assert_array_equal(again.read(1), kept.read(1))
        assert again.colormap(1) == kept.colormap(1) and again.tags() == kept.tags()
