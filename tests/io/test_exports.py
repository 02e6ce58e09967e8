"""GeoJSON (RFC 7946) and KML (OGC KML 2.2) exports, and the inert text of
every export: positions checked against geographiclib (independent of the
PROJ code that built the path), ray heights against the handbook Earth-bulge
formula, hostile names against JSON / XML parsers and the spreadsheet rule.
"""

import csv
import html
import io
import json
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic
from sample_sites import EVIL_A, EVIL_B, GATEWAY, PUMP  # noqa: E402

from profiler.api import link
from profiler.errors import ProfilerError
from profiler.io.exports import geojson_dict, split_at_antimeridian, write_geojson, write_kml
from profiler.io.report import csv_text, inert_text
from profiler.products.link import analyze_link
from profiler.terrain.geodesic import geodesic_path
from profiler.terrain.profile import TerrainProfile

KML = "{http://www.opengis.net/kml/2.2}"
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")    # OWASP "CSV injection" trigger characters
EARTH_RADIUS_M = 6_371_000.0                         # ITU-R P.452-18 eq. (6a), mean Earth radius


@pytest.fixture(scope="module")
def report(los_report):
    """The sample link (shared fixture ``los_report``)."""
    return los_report


@pytest.fixture(scope="module")
def surveyed_report(tmp_path_factory):
    path = tmp_path_factory.mktemp("surveyed") / "profile.csv"
    path.write_text("distance_m,elevation_m\n0,100\n500,120\n1000,110\n1500,105\n")
    return link(profile_csv=path, name_a="Upper Weir", name_b="Lambing Shed").to_dict()


@pytest.fixture(scope="module")
def antimeridian_report():
    """A flat 54 km path from 179.8 E to 179.7 W (invented coastal sites)."""
    p = geodesic_path(-16.5, 179.8, -16.6, -179.7, 250.0)
    prof = TerrainProfile(distance_m=p.distance_m, terrain_m=np.full(p.distance_m.size, 5.0),
                          lat_deg=p.lat_deg, lon_deg=p.lon_deg, azimuth_a_to_b_deg=p.azimuth_a_to_b_deg,
                          azimuth_b_to_a_deg=p.azimuth_b_to_a_deg, kind="dem")
    return analyze_link(prof, mast_a_m=30.0, mast_b_m=30.0, frequency_mhz=915.0, name_a="West Spit",
                        name_b="East Spit", site_a=(-16.5, 179.8),
                        site_b=(-16.6, -179.7)).to_dict()


def _is_number(text):
    try:
        float(text)
    except ValueError:
        return False
    return True


# --------------------------------------------------------------------------- GeoJSON
def test_geojson_is_a_feature_collection_in_lon_lat_order(tmp_path, report):
    out = tmp_path / "link.geojson"
    write_geojson(report, out)
    doc = json.loads(out.read_text(encoding="utf-8"))
    assert doc["type"] == "FeatureCollection"
    feats = {f["id"]: f for f in doc["features"]}
    assert set(feats) == {"path", "site_a", "site_b", "worst"}
    assert all(f["type"] == "Feature" for f in doc["features"])
    # RFC 7946 section 3.1.1: positions are [longitude, latitude].
    assert feats["site_a"]["geometry"] == {"type": "Point", "coordinates": [GATEWAY[1], GATEWAY[0]]}
    assert feats["site_b"]["geometry"]["coordinates"] == [PUMP[1], PUMP[0]]
    line = np.array(feats["path"]["geometry"]["coordinates"])
    assert feats["path"]["geometry"]["type"] == "LineString" and line.shape[1] == 2
    assert np.all(np.abs(line[:, 0]) <= 180.0) and np.all(np.abs(line[:, 1]) <= 90.0)
    assert line[0].tolist() == [GATEWAY[1], GATEWAY[0]] and line[-1].tolist() == [PUMP[1], PUMP[0]]
    # The vertices lie on the geodesic: their summed lengths give the geographiclib distance.
    geod = Geodesic.WGS84
    total = sum(geod.Inverse(a[1], a[0], b[1], b[0])["s12"] for a, b in zip(line[:-1], line[1:]))
    ref = geod.Inverse(GATEWAY[0], GATEWAY[1], PUMP[0], PUMP[1])["s12"]
    assert total == pytest.approx(ref, abs=0.5)
    props = feats["path"]["properties"]
    assert props["distance_m"] == pytest.approx(ref, abs=1e-3)
    for key in ("frequency_mhz", "line_of_sight", "fresnel_clear", "total_loss_db", "margin_db", "sf", "closes",
                "site_a_name", "site_b_name", "mast_a_m", "mast_b_m", "verdict", "caution"):
        assert key in props
    assert props["total_loss_db"] == report["loss_db"]["total"]
    assert props["mast_a_m"] == 10.0 and props["mast_b_m"] == 2.0
    worst = feats["worst"]
    assert worst["geometry"]["coordinates"] == pytest.approx([report["worst"]["lon_deg"], report["worst"]["lat_deg"]])
    # The worst point lies on the path at its stated distance from A (geographiclib direct problem).
    pos = geod.InverseLine(GATEWAY[0], GATEWAY[1], PUMP[0], PUMP[1]).Position(worst["properties"]["distance_m"])
    assert worst["geometry"]["coordinates"] == pytest.approx([pos["lon2"], pos["lat2"]], abs=1e-6)


def test_geojson_splits_a_path_across_the_antimeridian(antimeridian_report):
    doc = geojson_dict(antimeridian_report)
    geom = doc["features"][0]["geometry"]
    assert geom["type"] == "MultiLineString" and len(geom["coordinates"]) == 2   # RFC 7946 section 3.1.9
    west, east = (np.array(part) for part in geom["coordinates"])
    assert np.all(west[:, 0] > 0) and np.all(east[:, 0] < 0)
    assert west[-1, 0] == 180.0 and east[0, 0] == -180.0
    assert west[-1, 1] == east[0, 1]
    # Where the geodesic meets the 180 deg meridian, found with geographiclib by bisection.
    line = Geodesic.WGS84.InverseLine(-16.5, 179.8, -16.6, -179.7)
    lo, hi = 0.0, line.s13
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if line.Position(mid)["lon2"] > 0 else (lo, mid)
    assert west[-1, 1] == pytest.approx(line.Position(lo)["lat2"], abs=1e-6)
    assert doc["features"][0]["properties"]["crosses_antimeridian"] is True
    assert doc["features"][2]["geometry"]["coordinates"] == [-179.7, -16.6]


def test_split_keeps_a_line_that_stays_on_one_side():
    parts = split_at_antimeridian([10.0, 11.0, 12.0], [1.0, 2.0, 3.0])
    assert len(parts) == 1 and parts[0][0].tolist() == [10.0, 11.0, 12.0]
    # East-west mirror of the crossing: from 179.5 W to 179.5 E along the equator.
    parts = split_at_antimeridian([-179.5, 179.5], [0.0, 0.0])
    assert [p[0].tolist() for p in parts] == [[-179.5, -180.0], [180.0, 179.5]]


def test_surveyed_profile_cannot_be_exported(tmp_path, surveyed_report):
    with pytest.raises(ProfilerError, match="GeoJSON needs coordinates; a surveyed profile has none"):
        write_geojson(surveyed_report, tmp_path / "x.geojson")
    with pytest.raises(ProfilerError, match="KML needs coordinates; a surveyed profile has none"):
        write_kml(surveyed_report, tmp_path / "x.kml")
    assert list(tmp_path.iterdir()) == []


def test_missing_folder_is_a_profiler_error(tmp_path, report):
    for writer, name in ((write_geojson, "x.geojson"), (write_kml, "x.kml")):
        with pytest.raises(ProfilerError, match="does not exist"):
            writer(report, tmp_path / "missing" / name)
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- KML
def test_kml_line_of_sight_has_absolute_ray_heights(tmp_path, report):
    out = tmp_path / "link.kml"
    write_kml(report, out)
    root = ET.parse(out).getroot()
    assert root.tag == f"{KML}kml"
    marks = root.findall(f"{KML}Document/{KML}Placemark")
    los = next(m for m in marks if m.findtext(f"{KML}name").startswith("Line of sight"))
    assert los.findtext(f"{KML}LineString/{KML}altitudeMode") == "absolute"
    coords = np.array([[float(v) for v in c.split(",")]
                       for c in los.findtext(f"{KML}LineString/{KML}coordinates").split()])
    prof = report["profile"]
    assert coords.shape == (len(prof["distance_m"]), 3)
    assert np.allclose(coords[:, 0], prof["lon_deg"], atol=1e-7)
    assert np.allclose(coords[:, 1], prof["lat_deg"], atol=1e-7)
    # Ray above mean sea level: straight between the antenna tips (ground + mast) minus the Earth bulge
    # d1 d2 / (2 k a) (ITU-R P.452-18 eq. 14 curvature term), so its clearance over true terrain is the report's.
    d = np.array(prof["distance_m"])
    tip_a = report["site_a"]["ground_m"] + 10.0
    tip_b = report["site_b"]["ground_m"] + 2.0
    ray = tip_a + (tip_b - tip_a) * d / d[-1] - d * (d[-1] - d) / (2 * report["k_factor"] * EARTH_RADIUS_M)
    assert np.allclose(coords[:, 2], ray, atol=0.006)                       # written to 0.01 m
    assert np.allclose(coords[:, 2] - np.array(prof["terrain_m"]), prof["clearance_m"], atol=0.006)
    sites = [m for m in marks if m.find(f"{KML}Point/{KML}extrude") is not None]
    assert len(sites) == 2
    tip = [float(v) for v in sites[0].findtext(f"{KML}Point/{KML}coordinates").split(",")]
    assert tip == pytest.approx([GATEWAY[1], GATEWAY[0], tip_a], abs=0.006)
    assert sites[0].findtext(f"{KML}Point/{KML}altitudeMode") == "absolute"
    data = {d.get("name"): d.findtext(f"{KML}value") for d in los.iter(f"{KML}Data")}
    assert float(data["distance_m"]) == pytest.approx(report["distance_m"])
    assert data["closes"] in ("true", "false")


# --------------------------------------------------------------------------- hostile names
def test_hostile_names_survive_every_export_escaped_and_inert(tmp_path, evil_report):
    inert_b = "'" + EVIL_B                       # a leading quote: the spreadsheet shows text

    # CSV (report.csv_text): the summary rows carry the names.
    rows = {r[0]: r[1] for r in csv.reader(io.StringIO(csv_text(evil_report))) if r and r[0].startswith("# ")}
    assert rows["# site_a_name"] == EVIL_A
    assert rows["# site_b_name"] == inert_b

    # GeoJSON: valid JSON, names exactly as given (docs/outputs.md: JSON carries text as given).
    write_geojson(evil_report, tmp_path / "evil.geojson")
    doc = json.loads((tmp_path / "evil.geojson").read_text(encoding="utf-8"))
    feats = {f["id"]: f for f in doc["features"]}
    assert feats["site_a"]["properties"]["name"] == EVIL_A
    assert feats["site_b"]["properties"]["name"] == EVIL_B
    assert feats["path"]["properties"]["site_b_name"] == EVIL_B

    # KML: well-formed XML, names as text, descriptions HTML-escaped (viewers render them as HTML).
    write_kml(evil_report, tmp_path / "evil.kml")
    raw = (tmp_path / "evil.kml").read_text(encoding="utf-8")
    root = ET.fromstring(raw)
    names = [el.text for el in root.iter(f"{KML}name")]
    assert f"A {EVIL_A}" in names and f"B {inert_b}" in names
    descriptions = [el.text for el in root.iter(f"{KML}description")]
    assert any(html.escape(EVIL_A, quote=True) in d for d in descriptions)
    assert not any("<b>" in d or "<i>" in d for d in descriptions)
    values = [el.text or "" for el in root.iter(f"{KML}value")]
    texts = [v for v in values if not _is_number(v)]          # numbers such as -103.8 stay numbers
    assert inert_b in texts and not [v for v in texts if v.startswith(FORMULA_START)]
    assert "<b>" not in raw and "<i>" not in raw


def test_inert_text_rule():
    # OWASP "CSV injection": cells starting with = + - @ tab or CR get a leading quote.
    for text in ("=1+1", "+1", "-1", "@SUM(A1)", "  =1+1"):
        assert inert_text(text) == "'" + text
    # Tab and CR (also OWASP triggers) never reach the file raw: they are written as visible escapes.
    for text in ("\tx", "\rx", "\r=1+1"):
        out = inert_text(text)
        assert not any(c in out for c in "\t\r\n") and not out.lstrip().startswith(FORMULA_START)
    assert inert_text("Cairnfell Beacon") == "Cairnfell Beacon"
