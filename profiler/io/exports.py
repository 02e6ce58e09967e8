"""Standard geographic exports of a link: GeoJSON (RFC 7946) and KML (OGC KML 2.2).

Both writers take the JSON report dictionary (``LinkResult.to_dict()``) and
write atomically.  A surveyed profile has no coordinates and cannot be
exported; the writers then raise :class:`~profiler.errors.ProfilerError`.

GeoJSON carries text values (site names, descriptions, the verdict) as
given: :mod:`json` escapes control characters itself, so a name with a tab
or a newline reads back unchanged.  In KML, text values pass through
:func:`profiler.io.report.inert_text`, so a cell copied into a spreadsheet is
never taken for a formula; XML escaping is done by
:mod:`xml.etree.ElementTree`, and text inside a KML ``description`` (which
viewers render as HTML) is HTML-escaped first.

References
----------
.. [1] H. Butler et al., "The GeoJSON Format", IETF RFC 7946, 2016:
   section 3.1.4 (LineString), 3.1.9 (antimeridian cutting), section 4
   (WGS84 longitude, latitude in decimal degrees; a third position element
   would be ellipsoidal height, hence none is written here).
.. [2] OGC 07-147r2, "OGC KML", version 2.2.0, 2008: sections 9.11
   (Placemark), 10.7 (LineString), 10.8 (Point), 16.1 (altitudeMode:
   ``absolute`` is height above sea level).
"""

from __future__ import annotations

import html
import json
import math
import xml.etree.ElementTree as ET

import numpy as np

from ..about import CAUTION
from ..errors import ProfilerError
from ..textsafe import json_text
from .outputs import write_text
from .report import inert_text, losses_text, summary_rows, verdict

__all__ = ["geojson_dict", "geojson_text", "write_geojson", "kml_text", "write_kml",
           "split_at_antimeridian", "site_label", "KML_NAMESPACE"]

KML_NAMESPACE = "http://www.opengis.net/kml/2.2"

#: Decimal places of exported longitudes and latitudes (1e-7 deg is about 1 cm).
COORDINATE_DECIMALS = 7

EN_DASH = "\u2013"


# --------------------------------------------------------------------------- shared helpers
def _coordinates(report: dict, what: str) -> tuple[np.ndarray, np.ndarray]:
    """Longitudes and latitudes of the profile samples [deg]; refuse a surveyed profile."""
    prof = report["profile"]
    if prof.get("lat_deg") is None or prof.get("lon_deg") is None:
        raise ProfilerError(f"{what} needs coordinates; a surveyed profile has none")
    lon = np.array(prof["lon_deg"], dtype=float)
    lat = np.array(prof["lat_deg"], dtype=float)
    if not (np.all(np.isfinite(lon)) and np.all(np.isfinite(lat))):
        raise ProfilerError(f"{what} needs coordinates for every profile sample; the report has gaps")
    return wrap_longitude(lon), lat


def wrap_longitude(lon_deg):
    """Longitude folded into [-180, 180) [deg]."""
    return (np.asarray(lon_deg, dtype=float) + 180.0) % 360.0 - 180.0


def _text(value) -> str:
    """A KML text value made inert for spreadsheets (leading = + - @ tab CR get a quote)."""
    return inert_text(value)


def _as_given(value) -> str:
    """A GeoJSON text value: as given (valid Unicode; :mod:`json` escapes control characters)."""
    return json_text(value)


def _link_name(report: dict, text=_text) -> str:
    return f"{text(report['site_a']['name'])} {EN_DASH} {text(report['site_b']['name'])}"


def site_label(key: str, name: str) -> str:
    """``A Cairnfell Beacon``: the end's letter and its name, or the name alone when it is that letter
    (a site named ``A`` is labelled ``A``, not ``A A``)."""
    return name if name.strip().upper() == key.upper() else f"{key.upper()} {name}"


def property_value(value):
    """A property value as given: KML makes its strings inert when it writes them (:func:`extended_data`)."""
    return _as_given(value) if isinstance(value, str) else value


def headline_properties(report: dict) -> dict:
    """The headline results as a flat ``name_with_unit -> value`` dict.

    The summary rows of the CSV (:func:`profiler.io.report.summary_rows`) plus
    the masts, azimuths, elevation angles, verdict and provenance; text as
    given (GeoJSON), made inert where KML writes it.
    """
    a, b = report["site_a"], report["site_b"]
    props = {"name": _link_name(report, _as_given)}
    props.update({key: property_value(value) for key, value in summary_rows(report)})
    lora = report.get("lora") or {}
    worst = report.get("worst") or {}
    props.update({
        "band": property_value(report.get("band")),
        "mast_a_m": a.get("mast_m"), "mast_b_m": b.get("mast_m"),
        "antenna_a_amsl_m": a.get("antenna_amsl_m"), "antenna_b_amsl_m": b.get("antenna_amsl_m"),
        "azimuth_a_to_b_deg": report.get("azimuth_a_to_b_deg"),
        "azimuth_b_to_a_deg": report.get("azimuth_b_to_a_deg"),
        "elevation_angle_a_deg": report.get("elevation_angle_a_deg"),
        "elevation_angle_b_deg": report.get("elevation_angle_b_deg"),
        "clearance_ratio_required": report.get("clearance_ratio_required"),
        "worst_v": worst.get("v"), "worst_knife_edge_loss_db": worst.get("knife_edge_loss_db"),
        "sensitivity_dbm": (report.get("budget") or {}).get("sensitivity_dbm"),
        "lowest_closing_sf": lora.get("lowest_closing_sf"),
        "verdict": _as_given(verdict(report)),
        "tool_version": property_value(report.get("tool_version")),
        "report_schema": property_value(report.get("schema")),
        "caution": _as_given(CAUTION),
    })
    return props


def _site_lines(report: dict, key: str, text=_text) -> list[str]:
    site = report[f"site_{key}"]
    other = "b" if key == "a" else "a"
    azimuth = report.get(f"azimuth_{key}_to_{other}_deg")
    angle = report.get(f"elevation_angle_{key}_deg")
    return [
        f"Site {key.upper()}: {text(site['name'])}",
        f"ground {num(site.get('ground_m'), '.1f')} m AMSL, mast {num(site.get('mast_m'), '.1f')} m, "
        f"antenna {num(site.get('antenna_amsl_m'), '.1f')} m AMSL",
        f"azimuth to {other.upper()} {num(azimuth, '.2f')} deg (true), elevation angle {num(angle, '+.3f')} deg",
    ]


def _worst_lines(report: dict) -> list[str]:
    w = report.get("worst") or {}
    ratio = w.get("fresnel_ratio")
    return [
        f"Worst point {num(None if w.get('distance_m') is None else w['distance_m'] / 1000.0, '.3f')} km from A",
        f"clearance {num(w.get('clearance_m'), '+.1f')} m = {num(None if ratio is None else 100 * ratio, '.0f')} % "
        f"of F1 (required {100 * (report.get('clearance_ratio_required') or 0):.0f} %)",
        f"v = {num(w.get('v'), '.2f')}, knife-edge loss {num(w.get('knife_edge_loss_db'), '.1f')} dB, "
        f"terrain {num(w.get('terrain_m'), '.1f')} m AMSL",
    ]


def _link_lines(report: dict, text=_text) -> list[str]:
    bud = report["budget"]
    return [
        f"Link {_link_name(report, text)}: {text(verdict(report))}",
        f"distance {num(report['distance_m'] / 1000.0, '.3f')} km, {num(report['frequency_mhz'], '.4f')} MHz, "
        f"k = {num(report.get('k_factor'), '.4g')}",
        f"losses {text(losses_text(report))}",
        f"received {num(bud.get('rx_power_dbm'), '.1f')} dBm, margin {num(bud.get('margin_db'), '+.1f')} dB "
        f"at SF{bud.get('sf')}",
        CAUTION,
    ]


def num(value, spec: str) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    return format(value, spec)


# --------------------------------------------------------------------------- GeoJSON
def split_at_antimeridian(lon_deg, lat_deg) -> list[tuple[np.ndarray, np.ndarray]]:
    """Cut a line into parts that do not cross the antimeridian (RFC 7946 section 3.1.9).

    Parameters
    ----------
    lon_deg, lat_deg : array_like
        Vertices of the line [deg]; longitudes in [-180, 180].

    Returns
    -------
    list of (lon_deg, lat_deg) arrays
        One part when the line stays on one side; otherwise each crossing
        ends a part at longitude +-180 and starts the next at -+180, at the
        latitude linearly interpolated between the two vertices either side.

    Notes
    -----
    A step of more than 180 degrees of longitude between consecutive
    vertices is taken as a crossing (sample spacing is far below that).
    """
    lon = np.asarray(lon_deg, dtype=float)
    lat = np.asarray(lat_deg, dtype=float)
    step = np.diff(lon)
    crossings = np.flatnonzero(np.abs(step) > 180.0)
    if crossings.size == 0:
        return [(lon, lat)]
    # Where each crossing meets the antimeridian: edge longitude and interpolated latitude.
    l0, l1 = lon[crossings], lon[crossings + 1]
    edge = np.where(l0 > 0.0, 180.0, -180.0)
    l1_unwrapped = np.where(l0 > 0.0, l1 + 360.0, l1 - 360.0)
    t = (edge - l0) / (l1_unwrapped - l0)
    lat_x = lat[crossings] + t * (lat[crossings + 1] - lat[crossings])
    bounds = np.concatenate([[0], crossings + 1, [lon.size]])
    parts = []
    for k in range(bounds.size - 1):        # one iteration per part, not per sample
        seg_lon = lon[bounds[k]:bounds[k + 1]]
        seg_lat = lat[bounds[k]:bounds[k + 1]]
        if k > 0:
            seg_lon = np.concatenate([[-edge[k - 1]], seg_lon])
            seg_lat = np.concatenate([[lat_x[k - 1]], seg_lat])
        if k < crossings.size:
            seg_lon = np.concatenate([seg_lon, [edge[k]]])
            seg_lat = np.concatenate([seg_lat, [lat_x[k]]])
        keep = np.concatenate([[True], (np.diff(seg_lon) != 0) | (np.diff(seg_lat) != 0)])
        seg_lon, seg_lat = seg_lon[keep], seg_lat[keep]
        if seg_lon.size >= 2:
            parts.append((seg_lon, seg_lat))
    return parts


def geojson_position(lon, lat) -> list:
    return [round(float(lon), COORDINATE_DECIMALS), round(float(lat), COORDINATE_DECIMALS)]


def geojson_positions(lon: np.ndarray, lat: np.ndarray) -> list:
    return np.round(np.column_stack([lon, lat]), COORDINATE_DECIMALS).tolist()


def geojson_dict(report: dict) -> dict:
    """The link as an RFC 7946 FeatureCollection (a plain dict).

    Features: the path (``LineString``, or ``MultiLineString`` when it
    crosses the antimeridian) carrying the headline results, the two sites
    and the worst point (``Point``).  Positions are ``[longitude, latitude]``
    in decimal degrees (WGS84); no height element is written, since RFC 7946
    reserves it for ellipsoidal height and the report's heights are above
    mean sea level (they are given as properties instead).

    Raises
    ------
    ProfilerError
        For a surveyed profile (no coordinates).
    """
    lon, lat = _coordinates(report, "GeoJSON")
    parts = split_at_antimeridian(lon, lat)
    if len(parts) == 1:
        path_geometry = {"type": "LineString", "coordinates": geojson_positions(*parts[0])}
    else:
        path_geometry = {"type": "MultiLineString", "coordinates": [geojson_positions(*p) for p in parts]}
    path_props = {"feature": "path", **headline_properties(report),
                  "crosses_antimeridian": len(parts) > 1,
                  "description": "; ".join(_link_lines(report, _as_given))}

    features = [{"type": "Feature", "id": "path", "geometry": path_geometry, "properties": path_props}]
    for key in ("a", "b"):
        site = report[f"site_{key}"]
        other = "b" if key == "a" else "a"
        site_lon = site.get("lon_deg") if site.get("lon_deg") is not None else lon[0 if key == "a" else -1]
        site_lat = site.get("lat_deg") if site.get("lat_deg") is not None else lat[0 if key == "a" else -1]
        features.append({
            "type": "Feature", "id": f"site_{key}",
            "geometry": {"type": "Point", "coordinates": geojson_position(wrap_longitude(site_lon), site_lat)},
            "properties": {
                "feature": "site", "site": key.upper(), "name": _as_given(site["name"]),
                "ground_m": site.get("ground_m"), "mast_m": site.get("mast_m"),
                "antenna_amsl_m": site.get("antenna_amsl_m"),
                f"azimuth_to_{other}_deg": report.get(f"azimuth_{key}_to_{other}_deg"),
                "elevation_angle_deg": report.get(f"elevation_angle_{key}_deg"),
                "description": "; ".join(_site_lines(report, key, _as_given)),
            },
        })
    worst = report.get("worst") or {}
    if worst.get("lon_deg") is not None and worst.get("lat_deg") is not None:
        features.append({
            "type": "Feature", "id": "worst",
            "geometry": {"type": "Point",
                         "coordinates": geojson_position(wrap_longitude(worst["lon_deg"]), worst["lat_deg"])},
            "properties": {
                "feature": "worst_point", "name": "worst point",
                "distance_m": worst.get("distance_m"), "clearance_m": worst.get("clearance_m"),
                "fresnel_ratio": worst.get("fresnel_ratio"), "v": worst.get("v"),
                "knife_edge_loss_db": worst.get("knife_edge_loss_db"), "terrain_m": worst.get("terrain_m"),
                "description": "; ".join(_worst_lines(report)),
            },
        })
    return {"type": "FeatureCollection", "features": features}


def geojson_text(report: dict) -> str:
    """The GeoJSON export as text (UTF-8 JSON, no NaN)."""
    try:
        return json.dumps(geojson_dict(report), ensure_ascii=False, allow_nan=False, separators=(",", ":")) + "\n"
    except ValueError as exc:  # a NaN slipped into the report
        raise ProfilerError(f"cannot write GeoJSON: the report holds a value that is not a number ({exc})") from exc


def write_geojson(report: dict, path) -> None:
    """Write the path, the sites and the worst point as RFC 7946 GeoJSON to ``path``.

    Raises
    ------
    ProfilerError
        For a surveyed profile (no coordinates), a missing folder or a write error.
    """
    write_text(path, geojson_text(report))


# --------------------------------------------------------------------------- KML
def sub_element(parent, tag: str, text=None, **attrib):
    element = ET.SubElement(parent, f"{{{KML_NAMESPACE}}}{tag}", attrib)
    if text is not None:
        element.text = str(text)
    return element


def html_description(lines: list[str]) -> str:
    """Description text for a KML viewer (rendered as HTML): each line escaped, joined by <br/>."""
    return "<br/>".join(html.escape(line, quote=True) for line in lines)


def kml_style(doc, style_id: str, *, line_color=None, line_width=None, icon_color=None, icon_scale=None):
    style = sub_element(doc, "Style", id=style_id)
    if icon_color is not None:
        icon = sub_element(style, "IconStyle")
        sub_element(icon, "color", icon_color)
        sub_element(icon, "scale", icon_scale)
    if line_color is not None:
        line = sub_element(style, "LineStyle")
        sub_element(line, "color", line_color)
        sub_element(line, "width", line_width)


def extended_data(placemark, props: dict) -> None:
    data = sub_element(placemark, "ExtendedData")
    for key, value in props.items():
        if value is None:
            shown = ""
        elif isinstance(value, bool):
            shown = "true" if value else "false"
        elif isinstance(value, str):
            shown = _text(value)
        else:
            shown = repr(value)
        item = sub_element(data, "Data", name=key)
        sub_element(item, "value", shown)


def kml_coordinates(lon, lat, alt=None) -> str:
    if alt is None:
        return " ".join(map("{:.7f},{:.7f}".format, lon, lat))
    return " ".join(map("{:.7f},{:.7f},{:.2f}".format, lon, lat, alt))


def ray_height_amsl_m(report: dict) -> np.ndarray:
    """Height of the radio ray above mean sea level on the real (curved) Earth [m].

    In the curved-Earth convention of the profile the terrain is raised by
    the Earth bulge and the line of sight is straight (``los_m``).  A viewer
    that draws true terrain heights on the globe needs the ray lowered by the
    same bulge, ``los_m - bulge_m``, so that its clearance over the viewer's
    terrain equals the report's ``clearance_m``.  At both antennas the bulge
    is zero and the height is the antenna tip.

    References
    ----------
    ITU-R P.452-18 eq. (153) (Earth bulge term of the profile geometry).
    """
    prof = report["profile"]
    los = np.array(prof["los_m"], dtype=float)
    bulge = np.nan_to_num(np.array(prof["bulge_m"], dtype=float), nan=0.0)
    return los - bulge


def kml_text(report: dict) -> str:
    """The link as OGC KML 2.2 text.

    Placemarks: the line of sight (``LineString``, ``altitudeMode``
    absolute, heights of the ray above mean sea level, see
    :func:`ray_height_amsl_m`) with the headline results as ``ExtendedData``,
    the ground track (clamped to the ground), both sites at their antenna
    tips (extruded to the ground as a mast) and the worst point.

    Raises
    ------
    ProfilerError
        For a surveyed profile (no coordinates).
    """
    lon, lat = _coordinates(report, "KML")
    alt = ray_height_amsl_m(report)
    ET.register_namespace("", KML_NAMESPACE)
    root = ET.Element(f"{{{KML_NAMESPACE}}}kml")
    doc = sub_element(root, "Document")
    sub_element(doc, "name", f"Radio link {_link_name(report)}")
    sub_element(doc, "open", 1)
    sub_element(doc, "description", html_description(_link_lines(report)))
    # KML colours are aabbggrr.
    kml_style(doc, "line-of-sight", line_color="ff000000", line_width=2.5)
    kml_style(doc, "ground-track", line_color="ff2a62c4", line_width=1.5)
    kml_style(doc, "site", icon_color="ffffffff", icon_scale=1.1)
    kml_style(doc, "worst-point", icon_color="ff1414c8", icon_scale=1.0)

    los_mark = sub_element(doc, "Placemark")
    sub_element(los_mark, "name", f"Line of sight {_link_name(report)}")
    sub_element(los_mark, "description", html_description(
        _link_lines(report)
        + [f"Altitudes: ray height above mean sea level with the Earth bulge for k = "
           f"{num(report.get('k_factor'), '.4g')} (line of sight minus bulge)."]))
    sub_element(los_mark, "styleUrl", "#line-of-sight")
    extended_data(los_mark, headline_properties(report))
    line = sub_element(los_mark, "LineString")
    sub_element(line, "extrude", 0)
    sub_element(line, "tessellate", 0)
    sub_element(line, "altitudeMode", "absolute")
    sub_element(line, "coordinates", kml_coordinates(lon, lat, alt))

    track = sub_element(doc, "Placemark")
    sub_element(track, "name", f"Ground track {_link_name(report)}")
    sub_element(track, "styleUrl", "#ground-track")
    ground = sub_element(track, "LineString")
    sub_element(ground, "tessellate", 1)
    sub_element(ground, "altitudeMode", "clampToGround")
    sub_element(ground, "coordinates", kml_coordinates(lon, lat))

    for key, index in (("a", 0), ("b", -1)):
        site = report[f"site_{key}"]
        mark = sub_element(doc, "Placemark")
        sub_element(mark, "name", site_label(key, _text(site["name"])))
        sub_element(mark, "description", html_description(_site_lines(report, key)))
        sub_element(mark, "styleUrl", "#site")
        point = sub_element(mark, "Point")
        sub_element(point, "extrude", 1)
        sub_element(point, "altitudeMode", "absolute")
        tip = site.get("antenna_amsl_m")
        sub_element(point, "coordinates", kml_coordinates([lon[index]], [lat[index]],
                                                    [float(tip) if tip is not None else float(alt[index])]))

    worst = report.get("worst") or {}
    if worst.get("lon_deg") is not None and worst.get("lat_deg") is not None:
        mark = sub_element(doc, "Placemark")
        sub_element(mark, "name", "Worst point")
        sub_element(mark, "description", html_description(_worst_lines(report)))
        sub_element(mark, "styleUrl", "#worst-point")
        point = sub_element(mark, "Point")
        sub_element(point, "altitudeMode", "absolute")
        height = worst.get("terrain_m") or 0.0
        sub_element(point, "coordinates", kml_coordinates([float(wrap_longitude(worst["lon_deg"]))],
                                                    [float(worst["lat_deg"])], [float(height)]))

    ET.indent(root, space=" ")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


def write_kml(report: dict, path) -> None:
    """Write the line of sight, ground track, sites and worst point as KML 2.2 to ``path``.

    Raises
    ------
    ProfilerError
        For a surveyed profile (no coordinates), a missing folder or a write error.
    """
    write_text(path, kml_text(report))
