"""Files of a coverage run: the GeoTIFF, the KMZ overlay, the JSON summary, the map sheet.

Every file is rendered through :func:`profiler.io.outputs.write_outputs`, so a
run writes all of them or none.

References
----------
.. [1] OGC 07-147r2, KML 2.2 (GroundOverlay, LatLonBox, Placemark).
.. [2] GDAL GTiff driver: tiled, DEFLATE-compressed float32 with a
   floating-point predictor (TIFF Technical Note 3); band descriptions.
"""

from __future__ import annotations

import io
import math
import xml.etree.ElementTree as ET
import zipfile

import numpy as np

from ..about import CAUTION
from .report import model_line

KML_NAMESPACE = "http://www.opengis.net/kml/2.2"

CLASS_COLOURS = ("#1d3a6e", "#3f8fc0", "#a6d4e6", "#f2c14e", "#9a9a9a")
"""Classes, best to none: dark blue, mid blue, pale blue, amber, grey (own choice: they step in lightness
and lie on the blue-yellow axis, so they stay distinct with red-green colour-vision deficiencies)."""
CLASS_ALPHA = (0.52, 0.5, 0.5, 0.55, 0.4)
"""Opacity of each class: translucent, so the relief (and its terrain shadow) shows through the map's classes."""
DR_CLASSES = ((5, 99), (3, 4), (0, 2))
"""Recommended-DR groups of classes 0-2 (fast, middle, slow) when a regional plan is known."""


def margin_classes(bands, fade_margin_db: float) -> np.ndarray:
    """Class of every pixel (-1 nodata).

    With data rates (a regional plan): 0 recommended DR5 or faster, 1 DR3-DR4,
    2 DR0-DR2 (all with the fade margin), 3 margin 0 dB to the fade margin,
    4 below 0 dB.  Without: 0 margin >= fade + 20 dB, 1 >= fade + 10 dB,
    2 >= fade, 3 >= 0 dB, 4 below 0 dB.
    """
    m = np.asarray(bands["margin_db"], dtype=float)
    dr = np.asarray(bands["recommended_dr"], dtype=float)
    cls = np.full(m.shape, -1, dtype=np.int8)
    ok = np.isfinite(m)
    cls[ok] = 4
    cls[ok & (m >= 0.0)] = 3
    closes = ok & (m >= fade_margin_db)
    if np.isfinite(dr).any():
        for i, (lo, hi) in reversed(list(enumerate(DR_CLASSES))):
            cls[closes & (dr >= lo) & (dr <= hi)] = i
    else:
        cls[closes] = 2
        cls[ok & (m >= fade_margin_db + 10.0)] = 1
        cls[ok & (m >= fade_margin_db + 20.0)] = 0
    return cls


def class_labels(bands, fade_margin_db: float) -> list[str]:
    """Legend text of the five classes, in data rate and dB."""
    f = fade_margin_db
    tail = [f"0 to {f:g} dB (below the fade margin)", "< 0 dB (not heard)"]
    dr = np.asarray(bands["recommended_dr"], dtype=float)
    if np.isfinite(dr).any():
        top = int(np.nanmax(dr))
        heads = [f"DR5-DR{max(top, 5)}" if top > 5 else "DR5", "DR3-DR4", "DR0-DR2"]
        return [f"{h}, margin >= {f:g} dB" for h in heads] + tail
    return [f">= {f + 20:g} dB", f"{f + 10:g} to {f + 20:g} dB", f"{f:g} to {f + 10:g} dB"] + tail


def class_rgba(cls) -> np.ndarray:
    """RGBA image (uint8) of a class array; nodata transparent."""
    from matplotlib.colors import to_rgb

    rgba = np.zeros(cls.shape + (4,), dtype=np.uint8)
    for i, (colour, alpha) in enumerate(zip(CLASS_COLOURS, CLASS_ALPHA)):
        sel = cls == i
        rgba[sel, :3] = np.round(np.array(to_rgb(colour)) * 255).astype(np.uint8)
        rgba[sel, 3] = round(alpha * 255)
    return rgba


def geotiff_profile(grid, count: int, block_px: int = 256) -> dict:
    """The GTiff creation profile of the bands: tiled, DEFLATE, floating-point predictor, NaN nodata [2]_."""
    import rasterio
    from rasterio.transform import Affine

    return {"driver": "GTiff", "width": grid.width, "height": grid.height, "count": count,
            "dtype": "float32", "crs": rasterio.crs.CRS.from_wkt(grid.crs_wkt),
            "transform": Affine(*grid.transform), "nodata": float("nan"), "tiled": True, "blockxsize": block_px,
            "blockysize": block_px, "compress": "deflate", "predictor": 3, "BIGTIFF": "IF_SAFER",
            "num_threads": "all_cpus"}   # GDAL compresses the tiles on every core (lossless, same file)


def write_geotiff(result, path) -> None:
    """Write the bands as a tiled, DEFLATE-compressed float32 GeoTIFF with band descriptions [2]_.

    A streamed result (``result.geotiff_path``) has written its GeoTIFF already: it is moved to ``path``.
    """
    import rasterio

    if getattr(result, "geotiff_path", None):
        import shutil

        shutil.move(result.geotiff_path, path)   # a rename within the output's folder
        return
    names = list(result.bands)
    with rasterio.open(path, "w", **geotiff_profile(result.grid, len(names))) as ds:
        for i, name in enumerate(names, start=1):
            ds.write(result.bands[name].astype(np.float32), i)
            ds.set_band_description(i, name)
        ds.update_tags(schema=result.report["schema"], caution=CAUTION)


class StreamedGeoTIFF:
    """The GeoTIFF of a streamed run, written window by window to a temporary ``path`` (each block once)."""

    def __init__(self, grid, path, block_px: int = 256):
        self.grid, self.path, self.block_px, self._ds, self._names = grid, str(path), int(block_px), None, None

    def write(self, bands: dict, window) -> None:
        """Write a tile's bands at ``window`` ``(row0, row1, col0, col1)``."""
        import rasterio
        from rasterio.windows import Window

        if self._ds is None:
            self._names = list(bands)
            self._ds = rasterio.open(self.path, "w", **geotiff_profile(self.grid, len(self._names), self.block_px))
        r0, r1, c0, c1 = window
        for i, name in enumerate(self._names, start=1):
            self._ds.write(bands[name].astype(np.float32), i, window=Window(c0, r0, c1 - c0, r1 - r0))

    def close(self, schema: str) -> str:
        """Band descriptions and tags, then close; the path of the finished file."""
        for i, name in enumerate(self._names, start=1):
            self._ds.set_band_description(i, name)
        self._ds.update_tags(schema=schema, caution=CAUTION)
        self._ds.close()
        return self.path

    def abort(self) -> None:
        """Close and remove the unfinished file."""
        import os

        if self._ds is not None and not self._ds.closed:
            self._ds.close()
        if os.path.exists(self.path):
            os.unlink(self.path)


def decimated_view(result, max_side: int = 2048):
    """A streamed result with its bands read back from its GeoTIFF at most ``max_side`` pixels a side.

    GDAL's nearest-neighbour decimated read; the grid is the same extent in fewer, larger pixels.  For the
    sheet and the overlay of a map too large for memory (the report, and so every number, is unchanged).
    """
    import dataclasses

    import rasterio
    from rasterio.enums import Resampling

    grid = result.grid
    with rasterio.open(result.geotiff_path) as ds:
        step = max(grid.width, grid.height) / max_side
        shape = (max(1, math.ceil(grid.height / step)), max(1, math.ceil(grid.width / step))) if step > 1 \
            else (grid.height, grid.width)
        data = ds.read(out_shape=(ds.count,) + shape, resampling=Resampling.nearest)
        names = list(ds.descriptions)
    a, b, c, d, e, f = grid.transform
    sx, sy = grid.width / shape[1], grid.height / shape[0]
    coarse = dataclasses.replace(grid, transform=(a * sx, b, c, d, e * sy, f), width=shape[1], height=shape[0],
                                 resolution_m=grid.resolution_m * max(sx, sy))
    return dataclasses.replace(result, bands={n: data[i] for i, n in enumerate(names)}, grid=coarse,
                               geotiff_path=None)


def geographic_classes(result, max_pixels: int = 2048, band=None):
    """Margin classes resampled (nearest) onto a WGS84 latitude/longitude grid for the overlay.

    With ``band`` (a band name) the band's values (NaN outside) instead of the classes.
    """
    from pyproj import Transformer

    grid = result.grid
    lon, lat = grid.lon_lat()
    ok = np.isfinite(result.bands["margin_db"])
    if not ok.any():
        ok = np.ones(lon.shape, dtype=bool)
    west, east, south, north = lon[ok].min(), lon[ok].max(), lat[ok].min(), lat[ok].max()
    scale = max(grid.width, grid.height)
    size = min(max_pixels, scale)
    aspect = (east - west) * math.cos(math.radians((north + south) / 2)) / max(north - south, 1e-12)
    nx, ny = (size, max(2, round(size / aspect))) if aspect >= 1 else (max(2, round(size * aspect)), size)
    glon = west + (np.arange(nx) + 0.5) * (east - west) / nx
    glat = north - (np.arange(ny) + 0.5) * (north - south) / ny
    glon, glat = np.meshgrid(glon, glat)
    x, y = Transformer.from_crs("EPSG:4326", grid.proj4, always_xy=True).transform(glon, glat)
    a, _, c, _, e, f = grid.transform
    col = np.floor((np.asarray(x) - c) / a).astype(np.int64)
    row = np.floor((np.asarray(y) - f) / e).astype(np.int64)
    inside = (col >= 0) & (col < grid.width) & (row >= 0) & (row < grid.height)
    if band is not None:
        values = np.full(glon.shape, np.nan, dtype=np.float32)
        values[inside] = result.bands[band][row[inside], col[inside]]
        return values, (west, east, south, north)
    cls_grid = margin_classes(result.bands, result.report["settings"]["fade_margin_db"])
    cls = np.full(glon.shape, -1, dtype=np.int8)
    cls[inside] = cls_grid[row[inside], col[inside]]
    return cls, (west, east, south, north)


def coverage_kmz_bytes(result, report: dict) -> bytes:
    """KMZ: a KML 2.2 GroundOverlay of the margin classes (PNG inside) and the site placemarks [1]_."""
    from PIL import Image

    cls, (west, east, south, north) = geographic_classes(result)
    png = io.BytesIO()
    Image.fromarray(class_rgba(cls), "RGBA").save(png, format="PNG")
    ET.register_namespace("", KML_NAMESPACE)

    def sub(parent, tag, text=None, **attrib):
        el = ET.SubElement(parent, f"{{{KML_NAMESPACE}}}{tag}", attrib)
        if text is not None:
            el.text = str(text)
        return el

    root = ET.Element(f"{{{KML_NAMESPACE}}}kml")
    doc = sub(root, "Document")
    sites = report.get("gateways") or [report["site"]]
    sub(doc, "name", f"Coverage: {', '.join(str(s['name']) for s in sites)}")
    sub(doc, "description", CAUTION)
    labels = class_labels(result.bands, report["settings"]["fade_margin_db"])
    overlay = sub(doc, "GroundOverlay")
    sub(overlay, "name", "Uplink margin classes")
    sub(overlay, "description", "; ".join(f"{c}: {t}" for c, t in zip(CLASS_COLOURS, labels)) + ". " + CAUTION)
    sub(sub(overlay, "Icon"), "href", "margin_classes.png")
    box = sub(overlay, "LatLonBox")
    for tag, value in (("north", north), ("south", south), ("east", east), ("west", west)):
        sub(box, tag, f"{value:.8f}")
    for s in sites:
        mark = sub(doc, "Placemark")
        sub(mark, "name", s["name"])
        sub(mark, "description", f"{_role_text(s)}, mast {s['mast_m']:g} m, antenna gain {s['gain_dbi']:.2f} dBi, "
                                 f"EIRP {s['eirp_dbm']:.2f} dBm. {CAUTION}")
        sub(sub(mark, "Point"), "coordinates", f"{s['lon_deg']:.7f},{s['lat_deg']:.7f},0")
    kml = b'<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="utf-8")
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("doc.kml", kml)        # the first entry: the document KML viewers open
        z.writestr("margin_classes.png", png.getvalue())
    return buf.getvalue()


def _role_text(site: dict) -> str:
    return "candidate site" if site.get("role") == "candidate" else "gateway"


def site_count_text(summary: dict) -> str:
    """``1 gateway`` / ``2 gateways and 1 candidate site``: the sites of a run by role."""
    def plural(n, word):
        return f"{n} {word}" + ("" if n == 1 else "s")

    text = plural(summary["gateways"], "gateway")
    return text + (f" and {plural(summary['candidates'], 'candidate site')}" if summary["candidates"] else "")


def coverage_summary_text(report: dict) -> str:
    """Short human summary of a coverage run."""
    s, st = report["summary"], report["settings"]
    sites = report.get("gateways") or [report["site"]]
    fade = f"{st['fade_margin_db']:g} dB fade margin"
    lines = [f"Coverage: {', '.join(str(g['name']) for g in sites)}, radius {st['radius_km']:g} km at "
             f"{st['resolution_m']:.1f} m ({report['grid']['width']} x {report['grid']['height']} pixels, "
             f"{st['radials']} radials)",
             f"  model         {model_line(report)}",
             f"  sites         {site_count_text(s)}"]
    lines += [f"  {'candidate' if g.get('role') == 'candidate' else 'gateway':<13} {g['name']}: "
              f"{g['lat_deg']:.6f}, {g['lon_deg']:.6f}, mast {g['mast_m']:g} m, "
              f"gain {g['gain_dbi']:.2f} dBi, EIRP {g['eirp_dbm']:.2f} dBm" for g in sites]
    lines += [f"  computed      {s['area_computed_km2']:.2f} km2",
              f"  covered       {s['covered']['area_km2']:.2f} km2 ({(s['covered']['share'] or 0):.1%}) with the "
              f"{fade}" + (" (gateways and candidate sites)" if s["candidates"] else "")]
    if s["candidates"]:
        lines.append(f"  by gateways   {s['covered_by_gateways']['area_km2']:.2f} km2 "
                     f"({(s['covered_by_gateways']['share'] or 0):.1%}) with the {fade} (existing gateways alone)")
    lines += [
              f"  line of sight {s['line_of_sight']['area_km2']:.2f} km2 ({(s['line_of_sight']['share'] or 0):.1%})"]
    heard = s.get("heard_at_location_percent")
    if heard is not None:
        lines += [f"  probability   heard at {heard['location_percent']:g} % of locations over {heard['area_km2']:.2f} "
                  f"km2 ({(heard['share'] or 0):.1%}); mean over the area "
                  + ("n/a" if s.get("mean_probability_heard") is None else f"{s['mean_probability_heard']:.2f}")]
    for row in s["covered_by_dr"]:
        if row["pixels"]:
            lines.append(f"  DR{row['dr']:<11} {row['area_km2']:.2f} km2 ({row['share']:.1%})")
    lines += [f"  warning       {w}" for w in report["warnings"]]
    lines.append(f"  {CAUTION}")
    return "\n".join(lines) + "\n"
