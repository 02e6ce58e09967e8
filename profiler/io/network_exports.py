"""Exports of a network report (``profiler.network/5``): CSV, GeoJSON and KML.

Every writer takes the JSON report dictionary and returns text; the caller
writes it with :func:`profiler.io.outputs.write_text` (atomic).  The safety
rules of the single-link exports hold: CSV and KML text values pass through
:func:`profiler.io.report.inert_text` (no spreadsheet formulas), GeoJSON carries
names as given (:mod:`json` escapes control characters), JSON is escaped
by :mod:`json`, XML by :mod:`xml.etree.ElementTree` and KML descriptions are
HTML-escaped (the helpers of :mod:`profiler.io.exports`), and every export
carries :data:`profiler.CAUTION`.

A link's status (:func:`link_status`) is ``closes`` (margin at least the
fade margin), ``marginal`` (closes, but with less than the fade margin),
``fails`` (negative margin) or ``error`` (not computed).

References
----------
.. [1] H. Butler et al., "The GeoJSON Format", IETF RFC 7946, 2016:
   sections 3.1.2 (Point), 3.1.4 (LineString), 3.1.9 (antimeridian
   cutting), 6.1 (foreign members).
.. [2] OGC 07-147r2, "OGC KML", version 2.2.0, 2008: sections 9.10 (Folder),
   9.11 (Placemark), 10.7 (LineString), 10.8 (Point), 12 (styles; colours
   are aabbggrr).
.. [3] Y. Shafranovich, IETF RFC 4180, 2005 (CSV).
"""

from __future__ import annotations

import csv
import io
import json
import xml.etree.ElementTree as ET

import numpy as np

from ..about import CAUTION
from ..errors import ProfilerError
from ..terrain.geodesic import geodesic_path
from .exports import (
    EN_DASH,
    KML_NAMESPACE,
    extended_data,
    geojson_positions,
    html_description,
    kml_coordinates,
    kml_style,
    num,
    property_value,
    split_at_antimeridian,
    sub_element,
    wrap_longitude,
)
from .report import inert_text

__all__ = ["LINK_COLUMNS", "STATUSES", "link_status", "network_csv_text", "network_geojson_text",
           "network_geojson_dict", "network_kml_text"]

LINK_COLUMNS = (
    ("gateway", "text"), ("node", "text"),
    ("distance_m", 2), ("azimuth_deg", 3),
    ("line_of_sight", "bool"), ("fresnel_clear", "bool"),
    ("worst_fresnel_ratio", 4), ("worst_distance_m", 2),
    ("diffraction_db", 2), ("total_loss_db", 2), ("margin_db", 2), ("downlink_margin_db", 2),
    ("max_margin_db", 2), ("recommended_dr", "int"), ("closes", "bool"), ("downlink_closes", "bool"),
    ("location_sigma_db", 2), ("probability_heard", 4), ("error", "text"),
)
"""CSV columns of a link: the keys of ``links[]`` (units in the names) and their format
(decimal places, or text / bool / int)."""

STATUSES = ("closes", "marginal", "fails", "error")

#: A node's results carried by its GeoJSON feature and KML placemark: existing gateways, then candidate sites.
NODE_RESULT_KEYS = ("gateways_heard", "best_gateway", "best_margin_db", "recommended_dr", "candidates_heard",
                    "best_candidate", "best_candidate_margin_db", "best_candidate_recommended_dr")

STATUS_TEXT = {"closes": "closes with the fade margin", "marginal": "closes below the fade margin",
               "fails": "does not close", "error": "not computed"}

# KML colours (aabbggrr) and widths per link status; widths differ too, so print in grey stays legible.
_LINK_STYLE = {"closes": ("ff2e9e2e", 3.0), "marginal": ("ff00a5e6", 2.0),
               "fails": ("ff2020d0", 1.5), "error": ("ff808080", 1.0)}
_SITE_STYLE = {"gateway": ("ff1e1ecc", 1.4), "candidate": ("ffcc7a1e", 1.2), "node": ("ffffffff", 0.9)}


# --------------------------------------------------------------------------- status
def _float_column(links, key) -> np.ndarray:
    return np.array([np.nan if link.get(key) is None else link[key] for link in links], dtype=float)


def link_status(report_links, fade_margin_db) -> np.ndarray:
    """Status of every link: ``closes``, ``marginal``, ``fails`` or ``error``.

    Parameters
    ----------
    report_links : list of dict
        ``links[]`` of the network report (``margin_db``, ``error``).
    fade_margin_db : float
        Margin a link must keep above sensitivity [dB].

    Returns
    -------
    ndarray of str
        ``error`` where ``error`` is set (or the margin is missing),
        ``closes`` where ``margin_db >= fade_margin_db``, ``marginal`` where
        ``0 <= margin_db < fade_margin_db``, ``fails`` where ``margin_db < 0``.
    """
    margin = _float_column(report_links, "margin_db")
    failed = np.array([link.get("error") is not None for link in report_links], dtype=bool)
    failed |= ~np.isfinite(margin)
    with np.errstate(invalid="ignore"):
        status = np.select([failed, margin >= float(fade_margin_db), margin >= 0.0],
                           ["error", "closes", "marginal"], default="fails")
    return status.astype("<U8")


# --------------------------------------------------------------------------- CSV
def _csv_column(links, key, kind) -> list:
    """One formatted column: numbers to fixed decimals, empty cells for null, text made inert."""
    values = [link.get(key) for link in links]
    if kind == "text":
        return ["" if v is None else inert_text(v) for v in values]
    if kind == "bool":
        return ["" if v is None else ("true" if v else "false") for v in values]
    if kind == "int":
        return ["" if v is None else str(int(v)) for v in values]
    numbers = np.array([np.nan if v is None else v for v in values], dtype=float)
    text = np.char.mod(f"%.{kind}f", np.nan_to_num(numbers)).astype(object)
    text[~np.isfinite(numbers)] = ""
    return text.tolist()


def _summary_rows(report: dict) -> list[tuple[str, object]]:
    summary = report.get("summary") or {}
    rows = [(key, report.get(key)) for key in ("schema", "tool_version", "band", "frequency_mhz", "k_factor",
                                                "fade_margin_db")]
    rows += [(f"summary_{key}", value) for key, value in summary.items()]
    rows += [("warning", text) for text in report.get("warnings") or []]
    return rows + [("caution", CAUTION)]


def network_csv_text(report: dict) -> str:
    """One row per link (the fields of ``links[]``, units in the header), then a ``#`` summary block.

    Numbers are written to 0.01 dB and 1 cm (angles 0.001 deg, ratios 1e-4);
    a null value is an empty cell.  The summary block follows a blank line;
    each of its rows starts with ``#`` so that tools reading comments skip it.
    """
    links = report.get("links") or []
    columns = [_csv_column(links, key, kind) for key, kind in LINK_COLUMNS]
    status = link_status(links, report.get("fade_margin_db", 0.0)).tolist()
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow([key for key, _ in LINK_COLUMNS] + ["status"])
    writer.writerows(zip(*columns, status))
    buf.write("\n")
    for key, value in _summary_rows(report):
        if isinstance(value, bool):
            shown = "true" if value else "false"
        else:
            shown = "" if value is None else inert_text(value) if isinstance(value, str) else repr(value)
        writer.writerow(["# " + key, shown])
    return buf.getvalue()


# --------------------------------------------------------------------------- shared geometry
def _site_lookup(report: dict) -> tuple[dict, np.ndarray, np.ndarray]:
    """Name -> row, and the wrapped longitudes and latitudes of ``sites[]`` [deg]."""
    sites = report.get("sites") or []
    lookup = {site["name"]: i for i, site in enumerate(sites)}
    lon = wrap_longitude(_float_column(sites, "lon_deg"))
    lat = _float_column(sites, "lat_deg")
    if not (np.all(np.isfinite(lon)) and np.all(np.isfinite(lat))):
        raise ProfilerError("the network report has a site without coordinates; it cannot be exported")
    return lookup, lon, lat


def _link_ends(report: dict, lookup: dict) -> tuple[np.ndarray, np.ndarray]:
    """Rows in ``sites[]`` of each link's gateway and node."""
    try:
        gw = np.array([lookup[link["gateway"]] for link in report.get("links") or []], dtype=np.int64)
        node = np.array([lookup[link["node"]] for link in report.get("links") or []], dtype=np.int64)
    except KeyError as exc:
        raise ProfilerError(f"the network report names site {exc.args[0]!r} in links[] but not in sites[]; "
                            "it cannot be exported") from None
    return gw, node


def _link_name(link: dict) -> str:
    return f"{inert_text(link['gateway'])} {EN_DASH} {inert_text(link['node'])}"


def _site_results(report: dict, status: np.ndarray) -> dict[str, dict]:
    """Per-site results: a node's ``nodes[]`` entry; a gateway's link counts."""
    results: dict[str, dict] = {}
    for node in report.get("nodes") or []:
        results[node["name"]] = {key: property_value(node.get(key)) for key in NODE_RESULT_KEYS if key in node}
    links = report.get("links") or []
    gateways = np.array([link["gateway"] for link in links], dtype=object)
    for site in report.get("sites") or []:
        if site.get("role") in ("gateway", "candidate"):
            mine = gateways == site["name"] if gateways.size else np.zeros(0, dtype=bool)
            results[site["name"]] = {"links": int(np.count_nonzero(mine)),
                                     "links_closing": int(np.count_nonzero(mine & (status == "closes")))}
    return results


def _link_properties(link: dict, status: str) -> dict:
    props = {"feature": "link", "name": property_value(f"{link['gateway']} {EN_DASH} {link['node']}")}
    props.update({key: property_value(link.get(key)) for key, _ in LINK_COLUMNS})
    props["status"] = status
    return props


def _link_lines(link: dict, status: str) -> list[str]:
    head = f"{_link_name(link)}: {STATUS_TEXT[status]}"
    if status == "error":
        return [head, f"error: {inert_text(link.get('error') or 'no margin computed')}"]
    dist = link.get("worst_distance_m")
    return [
        head,
        f"distance {num(link['distance_m'] / 1000.0, '.3f')} km, azimuth {num(link.get('azimuth_deg'), '.2f')} "
        f"deg from the gateway",
        f"worst clearance {num(link.get('worst_fresnel_ratio'), '.2f')} F1 at "
        f"{num(None if dist is None else dist / 1000.0, '.3f')} km; diffraction "
        f"{num(link.get('diffraction_db'), '.1f')} dB, total loss {num(link.get('total_loss_db'), '.1f')} dB",
        f"margin uplink {num(link.get('margin_db'), '+.1f')} dB, downlink "
        f"{num(link.get('downlink_margin_db'), '+.1f')} dB, recommended DR "
        f"{'n/a' if link.get('recommended_dr') is None else link['recommended_dr']}",
    ]


def _site_lines(site: dict, results: dict) -> list[str]:
    lines = [f"{inert_text(site.get('role'))} {inert_text(site['name'])}",
             f"ground {num(site.get('ground_m'), '.1f')} m AMSL, mast {num(site.get('mast_m'), '.1f')} m"]
    if "gateways_heard" in results:
        lines.append(f"heard by {results['gateways_heard']} existing gateway(s) with the fade margin; best "
                     f"{inert_text(results.get('best_gateway') or 'none')} at "
                     f"{num(results.get('best_margin_db'), '+.1f')} dB")
    if "candidates_heard" in results:
        lines.append(f"heard by {results['candidates_heard']} candidate site(s) with the fade margin; best "
                     f"{inert_text(results.get('best_candidate') or 'none')} at "
                     f"{num(results.get('best_candidate_margin_db'), '+.1f')} dB")
    elif "links" in results:
        lines.append(f"{results['links_closing']} of {results['links']} links close with the fade margin")
    return lines + [CAUTION]


def _title(report: dict) -> str:
    summary = report.get("summary") or {}
    return (f"Radio network: {len(report.get('sites') or [])} sites, {summary.get('links', 0)} links, "
            f"{summary.get('closing', 0)} closing")


# --------------------------------------------------------------------------- GeoJSON
#: Vertex spacing of a link drawn along its geodesic when it crosses the antimeridian [m].
ANTIMERIDIAN_STEP_M = 1000.0


def _crossing_geometry(lat_a: float, lon_a: float, lat_b: float, lon_b: float) -> dict:
    """A link across the antimeridian: its geodesic (vertices 1 km apart) cut at +-180 deg."""
    path = geodesic_path(lat_a, lon_a, lat_b, lon_b, ANTIMERIDIAN_STEP_M)
    parts = split_at_antimeridian(path.lon_deg, path.lat_deg)
    if len(parts) == 1:
        return {"type": "LineString", "coordinates": geojson_positions(*parts[0])}
    return {"type": "MultiLineString", "coordinates": [geojson_positions(*part) for part in parts]}


def network_geojson_dict(report: dict) -> dict:
    """The network as an RFC 7946 FeatureCollection (a plain dict).

    Features: one ``Point`` per site (``feature: site``, its role and
    results: a node's gateways heard and best margin, a gateway's links
    closing) and one ``LineString`` per link from the gateway to the node
    (straight, two vertices; a link that crosses the antimeridian follows
    its geodesic and is cut there into a ``MultiLineString``) carrying the
    link's results and status.  Positions are ``[longitude, latitude]``
    (WGS84); heights are properties.  Foreign members (RFC 7946 section 6.1)
    carry the schema, version and caution.
    """
    lookup, lon, lat = _site_lookup(report)
    links = report.get("links") or []
    status = link_status(links, report.get("fade_margin_db", 0.0))
    results = _site_results(report, status)
    site_xy = np.round(np.column_stack([lon, lat]), 7).tolist()
    features = []
    for i, site in enumerate(report.get("sites") or []):
        props = {"feature": "site", "name": property_value(site["name"]), "role": property_value(site.get("role")),
                 "lat_deg": site.get("lat_deg"), "lon_deg": site.get("lon_deg"),
                 "mast_m": site.get("mast_m"), "ground_m": site.get("ground_m"),
                 **results.get(site["name"], {}),
                 "description": inert_text("; ".join(_site_lines(site, results.get(site["name"], {})))),
                 "caution": CAUTION}
        features.append({"type": "Feature", "id": f"site-{i + 1}",
                         "geometry": {"type": "Point", "coordinates": site_xy[i]}, "properties": props})
    gw, node = _link_ends(report, lookup)
    crosses = np.abs(lon[node] - lon[gw]) > 180.0
    straight = np.round(np.stack([lon[gw], lat[gw], lon[node], lat[node]], axis=1), 7).tolist()
    for k, link in enumerate(links):
        if crosses[k]:
            geometry = _crossing_geometry(lat[gw[k]], lon[gw[k]], lat[node[k]], lon[node[k]])
        else:
            x0, y0, x1, y1 = straight[k]
            geometry = {"type": "LineString", "coordinates": [[x0, y0], [x1, y1]]}
        props = _link_properties(link, str(status[k]))
        props["crosses_antimeridian"] = bool(crosses[k])
        features.append({"type": "Feature", "id": f"link-{k + 1}", "geometry": geometry, "properties": props})
    return {"type": "FeatureCollection", "name": inert_text(_title(report)),
            "report_schema": property_value(report.get("schema")),
            "tool_version": property_value(report.get("tool_version")),
            "caution": CAUTION, "features": features}


def network_geojson_text(report: dict) -> str:
    """The GeoJSON export as text (UTF-8 JSON, no NaN)."""
    try:
        return json.dumps(network_geojson_dict(report), ensure_ascii=False, allow_nan=False,
                          separators=(",", ":")) + "\n"
    except ValueError as exc:
        raise ProfilerError(f"cannot write GeoJSON: the report holds a value that is not a number ({exc})") from exc


# --------------------------------------------------------------------------- KML
def kml_site(folder, site: dict, results: dict, lon: float, lat: float) -> None:
    mark = sub_element(folder, "Placemark")
    sub_element(mark, "name", inert_text(site["name"]))
    sub_element(mark, "description", html_description(_site_lines(site, results)))
    role = site.get("role") if site.get("role") in _SITE_STYLE else "node"
    sub_element(mark, "styleUrl", f"#site-{role}")
    extended_data(mark, {"role": site.get("role"), "mast_m": site.get("mast_m"),
                          "ground_m": site.get("ground_m"), **results})
    point = sub_element(mark, "Point")
    ground, mast = site.get("ground_m"), site.get("mast_m")
    if ground is None or mast is None:
        sub_element(point, "altitudeMode", "clampToGround")
        sub_element(point, "coordinates", kml_coordinates([lon], [lat]))
    else:   # the antenna tip above mean sea level, drawn as a mast down to the ground
        sub_element(point, "extrude", 1)
        sub_element(point, "altitudeMode", "absolute")
        sub_element(point, "coordinates", kml_coordinates([lon], [lat], [float(ground) + float(mast)]))


def network_kml_text(report: dict) -> str:
    """The network as OGC KML 2.2 text.

    A ``Sites`` folder with one placemark per site, styled by role (at the
    antenna tip, extruded to the ground, when the ground height is known),
    and a ``Links`` folder with one sub-folder per status holding one
    ground-clamped line per link, styled by status (colour and width), each
    with its results as ``ExtendedData``.
    """
    lookup, lon, lat = _site_lookup(report)
    links = report.get("links") or []
    status = link_status(links, report.get("fade_margin_db", 0.0))
    results = _site_results(report, status)
    gw, node = _link_ends(report, lookup)
    ET.register_namespace("", KML_NAMESPACE)
    root = ET.Element(f"{{{KML_NAMESPACE}}}kml")
    doc = sub_element(root, "Document")
    sub_element(doc, "name", inert_text(_title(report)))
    sub_element(doc, "open", 1)
    summary = report.get("summary") or {}
    sub_element(doc, "description", html_description([
        inert_text(_title(report)),
        f"{num(report.get('frequency_mhz'), '.4f')} MHz, k = {num(report.get('k_factor'), '.4g')}, "
        f"fade margin {num(report.get('fade_margin_db'), '.1f')} dB",
        f"nodes covered by the existing gateways {summary.get('nodes_covered_by_gateways', 0)} of "
        f"{summary.get('nodes_total', 0)} ({summary.get('nodes_covered_twice', 0)} by two or more), with the "
        f"candidate sites {summary.get('nodes_covered_with_candidates', 0)}, errors {summary.get('errors', 0)}",
        *[inert_text(w) for w in report.get("warnings") or []], CAUTION]))
    for role, (colour, scale) in _SITE_STYLE.items():
        kml_style(doc, f"site-{role}", icon_color=colour, icon_scale=scale)
    for name, (colour, width) in _LINK_STYLE.items():
        kml_style(doc, f"link-{name}", line_color=colour, line_width=width)
    sites_folder = sub_element(doc, "Folder")
    sub_element(sites_folder, "name", "Sites")
    for i, site in enumerate(report.get("sites") or []):
        kml_site(sites_folder, site, results.get(site["name"], {}), float(lon[i]), float(lat[i]))
    links_folder = sub_element(doc, "Folder")
    sub_element(links_folder, "name", "Links")
    folders = {}
    for name in STATUSES:
        folders[name] = sub_element(links_folder, "Folder")
        sub_element(folders[name], "name", f"{STATUS_TEXT[name]} ({int(np.count_nonzero(status == name))})")
    for k, link in enumerate(links):
        mark = sub_element(folders[str(status[k])], "Placemark")
        sub_element(mark, "name", _link_name(link))
        sub_element(mark, "description", html_description(_link_lines(link, str(status[k]))))
        sub_element(mark, "styleUrl", f"#link-{status[k]}")
        extended_data(mark, _link_properties(link, str(status[k])))
        line = sub_element(mark, "LineString")
        sub_element(line, "tessellate", 1)
        sub_element(line, "altitudeMode", "clampToGround")
        sub_element(line, "coordinates", kml_coordinates(lon[[gw[k], node[k]]], lat[[gw[k], node[k]]]))
    ET.indent(root, space=" ")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"
