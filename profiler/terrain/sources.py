"""Opening elevation sources: files, folders, zip archives, CRS and vertical units.

Turns the ``--dem`` paths into GDAL datasets and describes each from its
metadata alone (no pixel read): CRS (compound CRS split into horizontal and
vertical parts), pixel size in metres, WGS84 extent, and heights in metres or
feet.  Every problem a user can fix is a one-line
:class:`profiler.errors.ProfilerError`.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np
import pyproj
import rasterio

from profiler.errors import ProfilerError
from profiler.terrain.mosaic import Tile
from profiler.terrain.source_info import SourceInfo

__all__ = ["RASTER_SUFFIXES", "metres_per_degree", "unit_scale_m", "root_cause", "expand_path",
           "zip_members", "open_dataset", "linear_unit_m", "crs_entry", "describe_raster",
           "RasterRole", "DEM_ROLE", "LAND_COVER_ROLE"]

#: File name endings searched for when a folder is given.
RASTER_SUFFIXES = (
    ".tif", ".tiff", ".hgt", ".vrt", ".img", ".asc", ".dem", ".bil", ".flt",
    ".zip",
)



@dataclass(frozen=True)
class RasterRole:
    """What a set of rasters holds: the option that names them, the words of the messages, the values.

    Parameters
    ----------
    option : str
        Command-line option naming the rasters (``--dem``).
    label : str
        Short name in messages (``DEM``).
    noun : str
        Adjective of the data in messages (``elevation``).
    heights : bool
        True: the values are heights (band or vertical-CRS units in metres or
        feet); False: class codes (units ignored, values as stored).
    """

    option: str
    label: str
    noun: str
    heights: bool

    def a(self, thing: str) -> str:
        """``an elevation <thing>`` / ``a land-cover <thing>``, for messages.

        Parameters
        ----------
        thing : str
            What the message asks for (``raster``, ``file or folder``).

        Returns
        -------
        str
            The phrase with its article.
        """
        return f"{'an' if self.noun[0] in 'aeiou' else 'a'} {self.noun} {thing}"

    def skips(self, ds) -> bool:
        """Whether a raster found in a folder is of the other kind and is left out.

        Heights skip colour-indexed rasters (a palette marks a class map);
        class codes skip rasters whose band unit is a length (heights).

        Parameters
        ----------
        ds : rasterio.DatasetReader
            The open dataset (metadata only).

        Returns
        -------
        bool
            True to leave the raster out of the folder's rasters.
        """
        from rasterio.enums import ColorInterp

        if self.heights:
            return ds.count >= 1 and ds.colorinterp[0] == ColorInterp.palette
        unit = (ds.units or ("",))[0]
        try:
            return bool(unit) and unit_scale_m(unit, "") > 0.0
        except ProfilerError:
            return False


DEM_ROLE = RasterRole("--dem", "DEM", "elevation", heights=True)
"""Elevation rasters (``--dem``)."""

LAND_COVER_ROLE = RasterRole("--land-cover", "land cover", "land-cover", heights=False)
"""Land-cover rasters of class codes (``--land-cover``)."""

#: WGS84 semi-major axis [m] and flattening [-] (NIMA TR8350.2, table 3.1).
_WGS84_A_M = 6378137.0
_WGS84_F = 1.0 / 298.257223563

#: International foot and US survey foot [m] (NIST SP 811, appendix B.6).
_FOOT_M = 0.3048
_US_SURVEY_FOOT_M = 1200.0 / 3937.0


def metres_per_degree(lat_deg):
    """WGS84 metres per degree of latitude and of longitude.

    Parameters
    ----------
    lat_deg : array_like
        Geodetic latitude [deg].

    Returns
    -------
    m_per_deg_lat, m_per_deg_lon : numpy.ndarray
        Length of one degree along the meridian and along the parallel [m].

    References
    ----------
    Meridional radius of curvature M = a(1-e^2)/(1-e^2 sin^2 phi)^(3/2) and
    prime-vertical radius N = a/(1-e^2 sin^2 phi)^(1/2); a parallel has radius
    N cos(phi).  Standard ellipsoid formulas, e.g. NIMA TR8350.2 ch. 4.
    """
    phi = np.radians(np.asarray(lat_deg, dtype=float))
    e2 = _WGS84_F * (2.0 - _WGS84_F)
    w2 = 1.0 - e2 * np.sin(phi) ** 2
    m_radius = _WGS84_A_M * (1.0 - e2) / w2 ** 1.5
    n_radius = _WGS84_A_M / np.sqrt(w2)
    return np.radians(m_radius), np.radians(n_radius * np.cos(phi))


def unit_scale_m(unit, path):
    """Metres per vertical unit for a band unit string ('' means metres).

    Parameters
    ----------
    unit : str
        Band unit as the raster states it (``"m"``, ``"ft"``, ``"US survey foot"``, ...).
    path : str
        Raster file, for the message.

    Returns
    -------
    float
        Metres per unit [m]: 1, 0.3048 (international foot) or 1200/3937
        (US survey foot).

    Raises
    ------
    ProfilerError
        If the unit is neither metres nor feet.

    References
    ----------
    .. [1] NIST Special Publication 811 (2008), appendix B (international
       foot 0.3048 m; US survey foot 1200/3937 m).
    """
    text = " ".join(str(unit or "").lower().replace("_", " ").replace("-", " ").split())
    if text in ("", "m", "metre", "metres", "meter", "meters", "metre amsl", "m amsl"):
        return 1.0
    if "survey" in text or text in ("us ft", "ftus", "us foot", "foot us", "us feet"):
        return _US_SURVEY_FOOT_M
    if text in ("ft", "foot", "feet", "international foot", "international feet", "intl ft"):
        return _FOOT_M
    raise ProfilerError(
        f"unsupported vertical unit '{unit}' in {path}; "
        "use a DEM with heights in metres or feet")



def root_cause(exc):
    """First line of the innermost message in an exception chain.

    Parameters
    ----------
    exc : BaseException
        The exception caught.

    Returns
    -------
    str
        First line of the innermost non-empty message, else the type name.
    """
    reason, seen = type(exc).__name__, set()
    while exc is not None and id(exc) not in seen:
        seen.add(id(exc))
        text = str(exc).strip()
        if text:
            reason = text.splitlines()[0]
        exc = exc.__cause__ or exc.__context__
    return reason


def expand_path(path, role=DEM_ROLE):
    """List of (gdal_path, file_path) for a file, zip archive or folder.

    Parameters
    ----------
    path : pathlib.Path
        A raster file, a zip archive of rasters, or a folder searched
        recursively.
    role : RasterRole, optional
        What the rasters hold (for the messages); default elevation.

    Returns
    -------
    list of tuple of str
        ``(gdal_path, file_path)`` per raster, sorted by path.

    Raises
    ------
    ProfilerError
        If the path is missing or holds no raster.
    """
    if not path.exists():
        raise ProfilerError(f"{role.label} not found: {path}; check {role.option}")
    if path.is_dir():
        found = sorted(p for p in path.rglob("*")
                       if p.is_file() and p.name.lower().endswith(RASTER_SUFFIXES)
                       and not p.name.lower().endswith(".aux.xml"))
        result = []
        for candidate in found:
            if candidate.suffix.lower() == ".zip":
                result.extend(zip_members(candidate, required=False, role=role))
            else:
                result.append((str(candidate), str(candidate)))
        if not result:
            raise ProfilerError(
                f"no {role.noun} rasters ({', '.join(RASTER_SUFFIXES)}) found in folder "
                f"{path}; check {role.option}")
        return result
    if path.suffix.lower() == ".zip":
        return zip_members(path, required=True, role=role)
    return [(str(path), str(path))]


def zip_members(path, required, role=DEM_ROLE):
    """The rasters inside a zip archive as GDAL ``/vsizip/`` paths.

    Parameters
    ----------
    path : pathlib.Path
        The zip archive.
    required : bool
        Refuse an unreadable archive or one without rasters (given
        directly) instead of skipping it (found in a folder).
    role : RasterRole, optional
        What the rasters hold (for the messages); default elevation.

    Returns
    -------
    list of tuple of str
        ``(gdal_path, file_path)`` per raster member.

    Raises
    ------
    ProfilerError
        With ``required``, if the archive cannot be read or holds no raster.
    """
    import zipfile

    try:
        with zipfile.ZipFile(path) as archive:
            names = sorted(n for n in archive.namelist()
                           if n.lower().endswith(RASTER_SUFFIXES)
                           and not n.lower().endswith(".zip"))
    except (zipfile.BadZipFile, OSError) as exc:
        if required:
            raise ProfilerError(f"cannot read zip archive {path} ({exc}); "
                                "check the file or unpack it") from exc
        return []
    if not names and required:
        raise ProfilerError(f"no {role.noun} raster inside zip archive {path}; check {role.option}")
    absolute = path.resolve().as_posix()
    return [(f"/vsizip/{absolute}/{name}", str(path)) for name in names]


def open_dataset(gdal_path, file_path):
    """Open one raster with rasterio, GDAL warnings silenced.

    Parameters
    ----------
    gdal_path : str
        Path as GDAL opens it.
    file_path : str
        The file on disk, for the message.

    Returns
    -------
    rasterio.DatasetReader
        The open dataset.

    Raises
    ------
    ProfilerError
        If GDAL cannot read the file as a raster.
    """
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return rasterio.open(gdal_path)
    except Exception as exc:
        raise ProfilerError(
            f"not a raster that GDAL can read: {file_path}; "
            "give a GeoTIFF, .hgt, VRT or other GDAL raster") from exc


def linear_unit_m(pcrs):
    """Metres per unit of the first axis of a CRS (1 when unknown).

    Parameters
    ----------
    pcrs : pyproj.CRS
        A projected CRS.

    Returns
    -------
    float
        Metres per CRS unit [m].
    """
    try:
        return float(pcrs.axis_info[0].unit_conversion_factor)
    except (IndexError, AttributeError):
        return 1.0


def crs_entry(ds, crs_cache, path):
    """(key, pyproj CRS, display string, vertical unit [m]) for a dataset.

    Parameters
    ----------
    ds : rasterio.DatasetReader
        The open dataset.
    crs_cache : dict
        Entries already built, by WKT; the new entry is added to it.
    path : str
        Raster file, for messages.

    Returns
    -------
    tuple or None
        ``(wkt, horizontal pyproj.CRS, display name, metres per vertical
        unit [m] or None)``; None when the raster has no CRS.
    """
    if ds.crs is None:
        return None
    wkt = ds.crs.to_wkt()
    entry = crs_cache.get(wkt)
    if entry is None:
        pcrs = pyproj.CRS.from_wkt(wkt)
        horizontal, vertical_m = pcrs, None
        if pcrs.is_compound:
            for sub in pcrs.sub_crs_list:
                if sub.is_vertical:
                    vertical_m = float(sub.axis_info[0].unit_conversion_factor)
                else:
                    horizontal = sub
        name = ds.crs.to_string()
        if name.startswith(("GEOGCS", "PROJCS", "COMPD_CS", "GEOGCRS", "PROJCRS")):
            authority = pcrs.to_authority(min_confidence=90)
            name = f"{authority[0]}:{authority[1]}" if authority else pcrs.name
        entry = (wkt, horizontal, name, vertical_m)
        crs_cache[wkt] = entry
    return entry


def describe_raster(index, gdal_path, file_path, ds, crs_cache, role=DEM_ROLE):
    """Build a Tile from dataset metadata (no pixel reads).

    Parameters
    ----------
    index : int
        Position of the raster in the order given [-].
    gdal_path : str
        Path as GDAL opens it.
    file_path : str
        The file on disk.
    ds : rasterio.DatasetReader
        The open dataset.
    crs_cache : dict
        CRS entries by WKT (see :func:`crs_entry`).
    role : RasterRole, optional
        What the raster holds; class codes keep their stored values (vertical
        scale 1, band unit ignored).  Default elevation.

    Returns
    -------
    Tile
        With its :class:`SourceInfo` (pixel size [m], WGS84 bounds [deg],
        vertical scale [m]).

    Raises
    ------
    ProfilerError
        If the raster has no band, no georeferencing, no CRS outside
        geographic bounds, or an unsupported vertical unit.

    References
    ----------
    WGS84 meridional and parallel radii, NIMA TR8350.2 ch. 4 (pixel size of
    a geographic grid in metres).
    """
    if ds.count < 1:
        raise ProfilerError(f"raster has no bands: {file_path}; give {role.a('raster')}")
    transform = ds.transform
    if transform.is_identity:
        raise ProfilerError(f"raster has no georeferencing: {file_path}; "
                            f"give a georeferenced {role.label} (GeoTIFF, .hgt, ...)")
    entry = crs_entry(ds, crs_cache, file_path)
    if entry is None:
        left, bottom, right, top = ds.bounds
        if not (-180.5 <= min(left, right) and max(left, right) <= 360.5
                and -90.5 <= min(bottom, top) and max(bottom, top) <= 90.5):
            raise ProfilerError(f"raster has no CRS: {file_path}; "
                                "add a .prj or use a GeoTIFF with a CRS")
        wkt = pyproj.CRS.from_epsg(4326).to_wkt()
        entry = crs_cache.setdefault(wkt, (wkt, pyproj.CRS.from_wkt(wkt), "EPSG:4326", None))
    key, pcrs, name, vertical_m = entry
    band_unit = (ds.units or ("",))[0]
    if not role.heights:
        vertical_scale = 1.0
    elif band_unit:
        vertical_scale = unit_scale_m(band_unit, file_path)
    elif vertical_m is not None:
        vertical_scale = vertical_m
    else:
        vertical_scale = 1.0

    res_x = math.hypot(transform.a, transform.d)
    res_y = math.hypot(transform.b, transform.e)
    left, bottom, right, top = ds.bounds
    if pcrs.is_geographic:
        bounds_lonlat = (min(left, right), min(bottom, top), max(left, right), max(bottom, top))
    else:
        to_lonlat = pyproj.Transformer.from_crs(pcrs, "EPSG:4326", always_xy=True)
        bounds_lonlat = tuple(float(v) for v in to_lonlat.transform_bounds(
            min(left, right), min(bottom, top), max(left, right), max(bottom, top),
            densify_pts=21))
    if pcrs.is_geographic:
        lat_c = 0.5 * (bounds_lonlat[1] + bounds_lonlat[3])
        m_lat, m_lon = metres_per_degree(lat_c)
        resolution_m = min(res_y * float(m_lat), res_x * float(m_lon))
    else:
        resolution_m = min(res_x, res_y) * linear_unit_m(pcrs)
    info = SourceInfo(path=gdal_path, crs=name, resolution=(res_x, res_y),
                      resolution_m=float(resolution_m), bounds_lonlat=bounds_lonlat,
                      vertical_scale=float(vertical_scale), file_path=file_path)
    return Tile(index, gdal_path, info, ds, pcrs, key)

