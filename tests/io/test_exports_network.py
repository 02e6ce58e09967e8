"""Network exports (CSV, GeoJSON RFC 7946, KML 2.2) of a small invented
``profiler.network/3`` report: parsed back with the standard csv, json and
XML parsers, positions in the order the standards prescribe, the
antimeridian cut checked against geographiclib, hostile names against the
OWASP spreadsheet rule, link status at its boundaries.
"""

import copy
import csv
import io
import json
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from geographiclib.geodesic import Geodesic
from sample_sites import EVIL_B  # noqa: E402
from test_exports import FORMULA_START, KML, _is_number  # noqa: E402  (shared checks of the link exports)

from profiler.about import CAUTION
from profiler.errors import ProfilerError
from profiler.io.network_exports import (
    LINK_COLUMNS,
    link_status,
    network_csv_text,
    network_geojson_dict,
    network_geojson_text,
    network_kml_text,
)

LINK_KEYS = [key for key, _ in LINK_COLUMNS]


def _link(gateway, node, margin, **extra):
    link = dict(gateway=gateway, node=node, distance_m=12345.678, azimuth_deg=87.1234, line_of_sight=True,
                fresnel_clear=False, worst_fresnel_ratio=0.41234, worst_distance_m=4567.891, diffraction_db=3.456,
                total_loss_db=128.765, margin_db=margin, downlink_margin_db=None if margin is None else margin - 1.5,
                max_margin_db=None if margin is None else margin + 2.25, recommended_dr=5,
                closes=margin is not None and margin >= 10.0,
                downlink_closes=margin is not None and margin - 1.5 >= 10.0,
                location_sigma_db=None if margin is None else 1.5709,
                probability_heard=None if margin is None else 0.98765, error=None)
    link.update(extra)
    return link


@pytest.fixture
def report():
    """An invented two-gateway network with each link status and a hostile node name."""
    sites = [
        dict(name="Cairnfell Beacon", lat_deg=-29.9125, lon_deg=-19.955, mast_m=10.0, role="gateway", ground_m=628.0),
        dict(name="Harrowback North crest", lat_deg=-29.8625, lon_deg=-19.87, mast_m=6.0, role="candidate",
             ground_m=402.5),
        dict(name="Osterby Farm pump", lat_deg=-29.9, lon_deg=-19.825, mast_m=2.0, role="node", ground_m=141.0),
        dict(name="Millbrook Tank", lat_deg=-29.85, lon_deg=-19.78, mast_m=2.0, role="node", ground_m=305.0),
        dict(name=EVIL_B, lat_deg=-29.95, lon_deg=-19.93, mast_m=1.0, role="node", ground_m=None),
    ]
    links = [
        _link("Cairnfell Beacon", "Osterby Farm pump", 20.7),
        _link("Cairnfell Beacon", "Millbrook Tank", 4.25, closes=False, recommended_dr=0),
        _link("Cairnfell Beacon", EVIL_B, -3.5, closes=False, recommended_dr=None, line_of_sight=False),
        _link("Harrowback North crest", "Millbrook Tank", None, error="=the path leaves the elevation data",
              closes=None, line_of_sight=None, fresnel_clear=None, recommended_dr=None, distance_m=None,
              azimuth_deg=None, worst_fresnel_ratio=None, worst_distance_m=None, diffraction_db=None,
              total_loss_db=None),
    ]
    none = dict(candidates_heard=0, best_candidate=None, best_candidate_margin_db=None,
                best_candidate_recommended_dr=None)
    nodes = [dict(name="Osterby Farm pump", gateways_heard=1, best_gateway="Cairnfell Beacon", best_margin_db=20.7,
                  recommended_dr=5, **none),
             dict(name="Millbrook Tank", gateways_heard=0, best_gateway="Cairnfell Beacon", best_margin_db=4.25,
                  recommended_dr=0, **none),
             dict(name=EVIL_B, gateways_heard=0, best_gateway=None, best_margin_db=None, recommended_dr=None, **none)]
    return {"schema": "profiler.network/5", "tool_version": "0.1.0", "band": "EU868", "frequency_mhz": 868.1,
            "k_factor": 4 / 3, "fade_margin_db": 10.0, "sites": sites, "links": links, "nodes": nodes,
            "summary": dict(links=4, closing=1, errors=1, gateways=1, candidates=1, nodes_total=3, nodes_covered=1,
                            nodes_covered_twice=0, nodes_covered_by_gateways=1, nodes_covered_with_candidates=1,
                            nodes_covered_twice_with_candidates=0),
            "dem": {"sources": []}, "warnings": ["+a warning that starts like a formula"], "caution": CAUTION}


# --------------------------------------------------------------------------- status
def test_link_status_boundaries():
    links = [dict(margin_db=10.0, error=None), dict(margin_db=9.999, error=None), dict(margin_db=0.0, error=None),
             dict(margin_db=-0.001, error=None), dict(margin_db=None, error="void"),
             dict(margin_db=12.0, error="late failure"), dict(margin_db=None, error=None)]
    assert link_status(links, 10.0).tolist() == ["closes", "marginal", "marginal", "fails", "error", "error", "error"]
    assert link_status(links[:4], 0.0).tolist() == ["closes", "closes", "closes", "fails"]
    assert link_status([], 10.0).tolist() == []


# --------------------------------------------------------------------------- CSV
def test_csv_one_row_per_link_with_the_link_fields(report):
    text = network_csv_text(report)
    table, summary = text.split("\n\n")
    rows = list(csv.DictReader(io.StringIO(table)))
    assert list(rows[0]) == LINK_KEYS + ["status"]
    assert len(rows) == 4
    assert [r["status"] for r in rows] == ["closes", "marginal", "fails", "error"]
    first = rows[0]
    assert float(first["distance_m"]) == pytest.approx(12345.678, abs=0.005)       # to 1 cm
    assert float(first["margin_db"]) == pytest.approx(20.7, abs=0.005)             # to 0.01 dB
    assert float(first["downlink_margin_db"]) == pytest.approx(19.2, abs=0.005)
    assert float(first["max_margin_db"]) == pytest.approx(22.95, abs=0.005)
    assert first["downlink_closes"] == "true" and rows[1]["downlink_closes"] == "false"
    assert first["line_of_sight"] == "true" and first["fresnel_clear"] == "false" and first["recommended_dr"] == "5"
    assert first["error"] == ""
    bad = rows[3]
    assert bad["margin_db"] == bad["distance_m"] == bad["closes"] == bad["recommended_dr"] == ""
    assert bad["error"] == "'=the path leaves the elevation data"                   # made inert
    assert rows[2]["node"] == "'" + EVIL_B
    for row in rows:                                                             # OWASP CSV-injection rule
        assert not any(str(v).startswith(FORMULA_START) for v in row.values() if not _is_number(v))
    comments = dict(r for r in csv.reader(io.StringIO(summary)) if r)
    assert comments["# schema"] == "profiler.network/5" and comments["# summary_closing"] == "1"
    assert comments["# summary_nodes_covered_by_gateways"] == "1"
    assert comments["# caution"] == CAUTION and comments["# warning"].startswith("'+")


def test_csv_carries_every_link_field_the_docs_list():
    """docs/network.md says the CSV has one row per link with the fields of links[] in the JSON contract: every
    field docs/json.md lists there (max_margin_db and downlink_closes included) is a CSV column."""
    readme = (Path(__file__).resolve().parents[2] / "docs" / "json.md").read_text(encoding="utf-8")
    block = readme[readme.index("links[]      {"):readme.index("nodes[]      {")]
    fields = set(re.findall(r"\b[a-z]+(?:_[a-z0-9]+)+\b", block)) | {"gateway", "node", "closes", "error"}
    assert {"max_margin_db", "downlink_closes"} <= fields
    assert fields <= set(LINK_KEYS)


# --------------------------------------------------------------------------- GeoJSON
def test_geojson_sites_and_links(report):
    doc = json.loads(network_geojson_text(report))
    assert doc["type"] == "FeatureCollection" and doc["caution"] == CAUTION
    sites = [f for f in doc["features"] if f["properties"]["feature"] == "site"]
    links = [f for f in doc["features"] if f["properties"]["feature"] == "link"]
    assert len(sites) == 5 and len(links) == 4
    assert len({f["id"] for f in doc["features"]}) == 9
    # RFC 7946 section 3.1.1: [longitude, latitude].
    assert sites[0]["geometry"] == {"type": "Point", "coordinates": [-19.955, -29.9125]}
    assert sites[0]["properties"]["role"] == "gateway"
    assert sites[0]["properties"]["links"] == 3 and sites[0]["properties"]["links_closing"] == 1
    assert sites[1]["properties"]["role"] == "candidate" and sites[1]["properties"]["links"] == 1
    assert sites[2]["properties"]["gateways_heard"] == 1 and sites[2]["properties"]["best_margin_db"] == 20.7
    assert sites[2]["properties"]["candidates_heard"] == 0 and sites[2]["properties"]["best_candidate"] is None
    assert sites[4]["properties"]["name"] == EVIL_B and sites[4]["properties"]["ground_m"] is None  # as given
    line = links[0]
    assert line["geometry"] == {"type": "LineString", "coordinates": [[-19.955, -29.9125], [-19.825, -29.9]]}
    assert {k: line["properties"][k] for k in ("margin_db", "recommended_dr", "closes", "status")} == \
        {"margin_db": 20.7, "recommended_dr": 5, "closes": True, "status": "closes"}
    assert set(LINK_KEYS) <= set(line["properties"])
    err = links[3]["properties"]
    assert err["status"] == "error" and err["margin_db"] is None and err["error"].startswith("=")  # as given


def test_geojson_cuts_a_link_at_the_antimeridian(report):
    report = copy.deepcopy(report)
    report["sites"][0].update(lat_deg=-16.5, lon_deg=179.8)          # invented island gateway
    report["sites"][2].update(lat_deg=-16.6, lon_deg=-179.7)
    doc = network_geojson_dict(report)
    link = next(f for f in doc["features"] if f["id"] == "link-1")
    assert link["properties"]["crosses_antimeridian"] is True
    geom = link["geometry"]
    assert geom["type"] == "MultiLineString" and len(geom["coordinates"]) == 2     # RFC 7946 section 3.1.9
    west, east = geom["coordinates"]
    assert west[0] == [179.8, -16.5] and east[-1] == [-179.7, -16.6]
    assert west[-1][0] == 180.0 and east[0][0] == -180.0 and west[-1][1] == east[0][1]
    # The geodesic meets the 180 deg meridian (geographiclib, bisection) within 1e-4 deg of the cut.
    line = Geodesic.WGS84.InverseLine(-16.5, 179.8, -16.6, -179.7)
    lo, hi = 0.0, line.s13
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if line.Position(mid)["lon2"] > 0 else (lo, mid)
    assert west[-1][1] == pytest.approx(line.Position(lo)["lat2"], abs=1e-4)
    others = [f for f in doc["features"] if f["id"] == "link-4"]      # neither end moved
    assert others[0]["geometry"]["type"] == "LineString"


def test_geojson_refuses_unknown_sites_and_nan(report):
    bad = copy.deepcopy(report)
    bad["links"][0]["node"] = "Nowhere Well"
    with pytest.raises(ProfilerError, match="names site 'Nowhere Well' in links"):
        network_geojson_text(bad)
    bad = copy.deepcopy(report)
    bad["links"][0]["margin_db"] = float("nan")
    with pytest.raises(ProfilerError, match="not a number"):
        network_geojson_text(bad)


# --------------------------------------------------------------------------- KML
def test_kml_sites_by_role_and_links_by_status(report):
    root = ET.fromstring(network_kml_text(report))
    assert root.tag == f"{KML}kml"
    doc = root.find(f"{KML}Document")
    styles = {s.get("id") for s in doc.findall(f"{KML}Style")}
    assert {"site-gateway", "site-candidate", "site-node", "link-closes", "link-marginal", "link-fails",
            "link-error"} <= styles
    folders = {f.findtext(f"{KML}name"): f for f in doc.findall(f"{KML}Folder")}
    sites = folders["Sites"].findall(f"{KML}Placemark")
    assert [s.findtext(f"{KML}styleUrl") for s in sites] == ["#site-gateway", "#site-candidate", "#site-node",
                                                             "#site-node", "#site-node"]
    # OGC KML 2.2 section 10.8: longitude,latitude,altitude; absolute altitude = ground + mast.
    tip = [float(v) for v in sites[0].findtext(f"{KML}Point/{KML}coordinates").split(",")]
    assert tip == pytest.approx([-19.955, -29.9125, 638.0], abs=1e-7)
    assert sites[0].findtext(f"{KML}Point/{KML}altitudeMode") == "absolute"
    assert sites[4].findtext(f"{KML}Point/{KML}altitudeMode") == "clampToGround"   # ground unknown
    assert sites[4].findtext(f"{KML}name") == "'" + EVIL_B                       # ET escaped <, &, "
    subs = folders["Links"].findall(f"{KML}Folder")
    by_status = {f.findtext(f"{KML}name"): f.findall(f"{KML}Placemark") for f in subs}
    assert [len(v) for v in by_status.values()] == [1, 1, 1, 1]
    marks = [m for f in subs for m in f.findall(f"{KML}Placemark")]
    assert [m.findtext(f"{KML}styleUrl") for m in marks] == ["#link-closes", "#link-marginal", "#link-fails",
                                                             "#link-error"]
    coords = [[float(v) for v in c.split(",")] for c in marks[0].findtext(f"{KML}LineString/{KML}coordinates").split()]
    assert coords == [[-19.955, -29.9125], [-19.825, -29.9]]
    data = {d.get("name"): d.findtext(f"{KML}value") for d in marks[0].iter(f"{KML}Data")}
    assert float(data["margin_db"]) == 20.7 and data["status"] == "closes" and data["closes"] == "true"
    assert CAUTION in doc.findtext(f"{KML}description")
    assert "<i>" not in network_kml_text(report)                                  # markup escaped
