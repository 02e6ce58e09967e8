"""Elevation model: seamless bilinear sampling of terrain rasters.

:class:`ElevationModel` opens any raster that GDAL/rasterio reads (GeoTIFF,
COG, SRTM ``.hgt``, VRT, ERDAS ``.img``, ESRI ASCII grids, ...), indexes the
tiles by their bounds from metadata alone, and samples terrain heights in
metres at arbitrary WGS84 longitude/latitude points:

* tiles that share a CRS, pixel size and grid alignment are joined into one
  virtual mosaic with global pixel indices, so bilinear interpolation across
  a tile seam uses pixels from both tiles;
* sample points are transformed into each source's CRS with pyproj;
* only the internal blocks that the samples touch are read, and each block is
  kept in a bounded in-memory LRU cache owned by the model;
* heights in feet (band unit or vertical CRS) are converted to metres;
* nodata gives NaN; :meth:`ElevationModel.covers` tells voids from points
  outside every source.

Pixel registration.  GDAL always reports a geotransform that maps pixel
*corners*: for GeoTIFFs tagged ``AREA_OR_POINT=Point`` (``PixelIsPoint``) it
shifts the stored tie point by half a pixel on reading, and the SRTMHGT driver
reports a transform whose pixel centres fall exactly on the integer-degree tile
edges.  Hence in every case the centre of pixel (row ``i``, column ``j``) is
``transform * (j + 0.5, i + 0.5)``, which is what this module uses.

Only numpy, rasterio and pyproj are imported at module level.
"""

from __future__ import annotations

import math
import os
import warnings
from collections import OrderedDict
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

import numpy as np
import pyproj
import rasterio
from rasterio.windows import Window

from profiler.errors import ProfilerError
from profiler.provenance import FileDigests, file_sha256

__all__ = ["ElevationModel", "SourceInfo", "fill_voids_along_profile"]

#: File name endings searched for when a folder is given.
RASTER_SUFFIXES = (
    ".tif", ".tiff", ".hgt", ".vrt", ".img", ".asc", ".dem", ".bil", ".flt",
    ".zip",
)

#: WGS84 semi-major axis [m] and flattening [-] (NIMA TR8350.2, table 3.1).
_WGS84_A_M = 6378137.0
_WGS84_F = 1.0 / 298.257223563

#: International foot and US survey foot [m] (NIST SP 811, appendix B.6).
_FOOT_M = 0.3048
_US_SURVEY_FOOT_M = 1200.0 / 3937.0

#: Fractional pixel offsets closer than this to an integer are snapped, so a
#: sample at a pixel centre returns that pixel's value exactly.
_SNAP_PX = 1e-6

#: A point this close (in pixels) outside the bottom or right edge of a mosaic is on that edge.
_EDGE_PX = 1e-9

#: Native blocks of fewer than _CHUNK_PX**2 / 4 pixels (one-row strips, tiny
#: tiles) are read in aligned groups of whole blocks about _CHUNK_PX pixels on
#: a side; larger blocks are read one by one.
_CHUNK_PX = 256

_DEFAULT_CACHE_BYTES = 256 * 1024 * 1024
_DEFAULT_MAX_OPEN = 64


def _metres_per_degree(lat_deg):
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


def _unit_scale_m(unit, path):
    """Metres per vertical unit for a band unit string ('' means metres)."""
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


@dataclass
class SourceInfo:
    """Description of one elevation raster.

    Attributes
    ----------
    path : str
        Path as GDAL opened it (``/vsizip/...`` for a raster inside a zip).
    crs : str
        Horizontal/compound CRS, e.g. ``"EPSG:4326"``.
    resolution : tuple of float
        Pixel size (x, y) in CRS units [deg or m].
    resolution_m : float
        Approximate pixel size [m]: the smaller of the x and y sizes at the
        centre of the raster.
    bounds_lonlat : tuple of float
        (west, south, east, north) of the raster extent in WGS84 [deg].
    vertical_scale : float
        Metres per stored height unit [m] (1 for metres, 0.3048 for feet).
    """

    path: str
    crs: str
    resolution: tuple
    resolution_m: float
    bounds_lonlat: tuple
    vertical_scale: float
    file_path: str = field(default="", repr=False, compare=False)

    @cached_property
    def sha256(self) -> str:
        """SHA-256 of the file on disk [hex] (a model's :meth:`ElevationModel.provenance` hashes each file once)."""
        return file_sha256(self.file_path or self.path)


class _Tile:
    """One raster file: metadata, its place in a mosaic grid, read chunking."""

    def __init__(self, index, gdal_path, info, ds, pcrs, crs_key):
        self.index = index
        self.gdal_path = gdal_path
        self.info = info
        self.crs_key = crs_key
        self.pcrs = pcrs
        self.transform = ds.transform
        self.width = ds.width
        self.height = ds.height
        self.dtype = np.dtype(ds.dtypes[0])
        self.void_value = _void_value(self.dtype, ds.nodata)
        self.scale = float(ds.scales[0]) if ds.scales else 1.0
        self.offset = float(ds.offsets[0]) if ds.offsets else 0.0
        block_h, block_w = ds.block_shapes[0]
        if block_h * block_w >= _CHUNK_PX * _CHUNK_PX // 4:
            self.chunk_h, self.chunk_w = block_h, block_w  # read native blocks
        else:  # tiny tiles or one-row strips: aligned groups of whole blocks
            self.chunk_h = min(self.height, block_h * max(1, math.ceil(_CHUNK_PX / block_h)))
            self.chunk_w = min(self.width, block_w * max(1, math.ceil(_CHUNK_PX / block_w)))
        self.n_chunk_cols = math.ceil(self.width / self.chunk_w)
        self.row0 = 0
        self.col0 = 0

    def to_float(self, raw):
        """Stored values (native dtype) to float64 heights in stored units, NaN void."""
        values = raw.astype(np.float64)
        if self.void_value is not None:
            values[raw == self.void_value] = np.nan
        if self.scale != 1.0 or self.offset != 0.0:
            values = values * self.scale + self.offset
        return values


def _void_value(dtype, nodata):
    """The nodata value in the raster's dtype, or None (NaN is always void)."""
    if nodata is None or math.isnan(nodata):
        return None
    if dtype.kind in "iu":
        limits = np.iinfo(dtype)
        if not (float(nodata).is_integer() and limits.min <= nodata <= limits.max):
            return None
    elif dtype.kind == "c":
        return None
    return dtype.type(nodata)


class _Group:
    """Tiles sharing CRS, pixel size and grid alignment: one virtual mosaic."""

    def __init__(self, tile, transformer):
        self.tiles = [tile]
        self.transformer = transformer
        self.transform = tile.transform
        inv = ~tile.transform
        self.inverse = (inv.a, inv.b, inv.c, inv.d, inv.e, inv.f)
        self.vertical_scale = tile.info.vertical_scale
        self.pcrs = tile.pcrs
        self.crs_key = tile.crs_key

    def try_add(self, tile):
        """Add ``tile`` if it lies on this group's pixel grid; return success."""
        if tile.crs_key != self.crs_key or tile.info.vertical_scale != self.vertical_scale:
            return False
        ref, new = self.transform, tile.transform
        size = max(abs(ref.a), abs(ref.b), abs(ref.d), abs(ref.e))
        for p, q in ((ref.a, new.a), (ref.b, new.b), (ref.d, new.d), (ref.e, new.e)):
            if abs(p - q) > 1e-9 * size:
                return False
        ia, ib, ic, id_, ie, if_ = self.inverse
        col = ia * new.c + ib * new.f + ic
        row = id_ * new.c + ie * new.f + if_
        if abs(col - round(col)) > 1e-4 or abs(row - round(row)) > 1e-4:
            return False
        tile.col0, tile.row0 = int(round(col)), int(round(row))
        self.tiles.append(tile)
        return True

    def finish(self):
        """Build the tile rectangle arrays used for vectorized look-ups."""
        self.r0 = np.array([t.row0 for t in self.tiles])
        self.c0 = np.array([t.col0 for t in self.tiles])
        self.r1 = self.r0 + np.array([t.height for t in self.tiles])
        self.c1 = self.c0 + np.array([t.width for t in self.tiles])
        self.order = min(t.index for t in self.tiles)
        self.resolution_m = min(t.info.resolution_m for t in self.tiles)
        self.is_geographic = bool(self.pcrs.is_geographic)
        # Longitudes wrap (lon 180 = lon -180): the mosaic's west edge for a north-up grid in degrees.
        t = self.transform
        in_degrees = any(str(a.unit_name).lower().startswith("degree") for a in self.pcrs.axis_info)
        self.wrap_west = (t.c + t.a * float(self.c0.min())
                          if self.is_geographic and in_degrees and t.b == 0 and t.d == 0 and t.a > 0 else None)
        self.chunk_h = np.array([t.chunk_h for t in self.tiles])
        self.chunk_w = np.array([t.chunk_w for t in self.tiles])
        self.n_chunk_cols = np.array([t.n_chunk_cols for t in self.tiles])
        n_chunks = np.array([t.n_chunk_cols * math.ceil(t.height / t.chunk_h) for t in self.tiles])
        self.block_base = np.concatenate(([0], np.cumsum(n_chunks)[:-1]))
        self.n_blocks = int(n_chunks.sum())
        # All tiles store heights alike: gather raw values, convert once.
        first = self.tiles[0]
        same = all(t.dtype == first.dtype and t.scale == first.scale and t.offset == first.offset
                   and ((t.void_value is None and first.void_value is None)
                        or (t.void_value is not None and first.void_value is not None
                            and t.void_value == first.void_value))
                   for t in self.tiles)
        self.uniform_tile = first if same else None

    def pixel_coords(self, lon_deg, lat_deg):
        """Fractional corner-based (row, col) in the group grid for lon/lat."""
        if self.transformer is None:
            x, y = lon_deg, lat_deg
        else:
            with np.errstate(all="ignore"):
                x, y = self.transformer.transform(lon_deg, lat_deg, errcheck=False)
            x = np.asarray(x, dtype=float)
            y = np.asarray(y, dtype=float)
        if self.wrap_west is not None:  # the same meridian, inside the grid's 360-degree window
            with np.errstate(invalid="ignore"):
                x = self.wrap_west + np.mod(np.asarray(x, dtype=float) - self.wrap_west, 360.0)
        ia, ib, ic, id_, ie, if_ = self.inverse
        with np.errstate(invalid="ignore"):  # non-finite input stays non-finite
            return id_ * x + ie * y + if_, ia * x + ib * y + ic

    def owner_pixels(self, frow, fcol):
        """Pixel (row, col) holding each point and its tile (-1 if none).

        The mosaic's far edges are closed: a point exactly on the bottom or
        right edge (latitude -90 on a global grid) belongs to the edge pixel.
        """
        rows, cols = _floor_int(frow), _floor_int(fcol)
        owner = self.tile_of(rows, cols)
        missing = owner < 0
        if missing.any():
            r2 = np.where(missing, _floor_int(frow - _EDGE_PX), rows)
            c2 = np.where(missing, _floor_int(fcol - _EDGE_PX), cols)
            o2 = self.tile_of(r2, c2)
            fix = missing & (o2 >= 0)
            rows, cols, owner = np.where(fix, r2, rows), np.where(fix, c2, cols), np.where(fix, o2, owner)
        return rows, cols, owner

    def tile_of(self, rows, cols):
        """Index (into ``self.tiles``) of the first tile holding each pixel, -1 if none."""
        if len(self.tiles) == 1:
            inside = ((rows >= self.r0[0]) & (rows < self.r1[0])
                      & (cols >= self.c0[0]) & (cols < self.c1[0]))
            return inside.astype(np.intp) - 1
        found = np.full(rows.shape, -1, dtype=np.intp)
        if rows.size == 0:
            return found
        rmin, rmax, cmin, cmax = rows.min(), rows.max(), cols.min(), cols.max()
        candidates = np.flatnonzero((self.r0 <= rmax) & (self.r1 > rmin)
                                    & (self.c0 <= cmax) & (self.c1 > cmin))
        for k in candidates:
            inside = ((found < 0) & (rows >= self.r0[k]) & (rows < self.r1[k])
                      & (cols >= self.c0[k]) & (cols < self.c1[k]))
            found[inside] = k
        return found

    def block_index(self, owner, rows, cols):
        """Global block number, flat offset in the block and block width.

        Entries whose ``owner`` is negative get meaningless values.
        """
        if len(self.tiles) == 1:
            t = self.tiles[0]
            br, r_in = np.divmod(rows - t.row0, t.chunk_h)
            bc, c_in = np.divmod(cols - t.col0, t.chunk_w)
            return br * t.n_chunk_cols + bc, r_in * t.chunk_w + c_in, np.full(rows.shape, t.chunk_w)
        k = np.maximum(owner, 0)
        width = self.chunk_w[k]
        br, r_in = np.divmod(rows - self.r0[k], self.chunk_h[k])
        bc, c_in = np.divmod(cols - self.c0[k], width)
        key = self.block_base[k] + br * self.n_chunk_cols[k] + bc
        return key, r_in * width + c_in, width


def _floor_int(frac):
    """Integer floor of fractional pixel coordinates; NaN maps far outside."""
    out = np.floor(np.where(np.isfinite(frac), frac, -2.0 ** 40))
    return out.astype(np.int64)


class ElevationModel:
    """Terrain heights from one or more elevation rasters.

    Open with :meth:`ElevationModel.open`; use as a context manager or call
    :meth:`close`.  The model owns an LRU cache of the blocks it has read
    (bounded by ``cache_bytes``), so a second profile in the same area reads
    nothing from disk.  ``blocks_read`` counts the block reads done so far.

    Attributes
    ----------
    sources : list of SourceInfo
        The rasters, in the order given (folders expanded, sorted by path).
    blocks_read : int
        Number of raster blocks read from disk since opening.
    """

    def __init__(self, tiles, groups, cache_bytes=_DEFAULT_CACHE_BYTES,
                 max_open=_DEFAULT_MAX_OPEN, digests=None):
        self._tiles = tiles
        self.digests = digests if digests is not None else FileDigests()
        self._groups = groups
        self.sources = [t.info for t in tiles]
        self._cache = OrderedDict()
        self._cache_bytes = 0
        self._cache_limit = int(cache_bytes)
        self._handles = OrderedDict()
        self._max_open = max(1, int(max_open))
        self.blocks_read = 0

    # ------------------------------------------------------------------ open
    @classmethod
    def open(cls, paths, cache_bytes=_DEFAULT_CACHE_BYTES, digests=None):
        """Open elevation rasters from files and/or folders.

        Parameters
        ----------
        paths : str or os.PathLike or sequence of them
            Raster files (anything GDAL opens, including ``.zip`` archives of
            rasters) or folders searched recursively for files ending in
            :data:`RASTER_SUFFIXES`.
        cache_bytes : int, optional
            Upper bound of the in-memory block cache [bytes].
        digests : profiler.provenance.FileDigests, optional
            Provenance digests, possibly already started on the files (by a
            command, before its heavy imports); default a new one.

        Returns
        -------
        ElevationModel

        Raises
        ------
        ProfilerError
            A path is missing, a folder holds no raster, or a file is not a
            georeferenced raster.
        """
        if isinstance(paths, (str, os.PathLike)):
            paths = [paths]
        paths = list(paths)
        if not paths:
            raise ProfilerError("no DEM given; pass --dem with a raster file or folder")
        files = []
        for entry in paths:
            files.extend(_expand_path(Path(entry)))

        model = cls([], [], cache_bytes=cache_bytes, digests=digests)
        crs_cache = {}
        tiles = []
        try:
            for gdal_path, file_path in files:
                ds = _open_dataset(gdal_path, file_path)
                try:
                    tile = _describe(len(tiles), gdal_path, file_path, ds, crs_cache)
                except BaseException:
                    ds.close()
                    raise
                tiles.append(tile)
                model._remember_handle(tile.index, ds)
        except BaseException:
            model.close()
            raise
        model._tiles = tiles
        model.sources = [t.info for t in tiles]
        model._groups = _build_groups(tiles, crs_cache)
        return model

    def sources_covering(self, lon_deg, lat_deg):
        """Sources whose WGS84 bounds contain at least one of the points (a cheap test, no pixel read)."""
        lon = np.atleast_1d(np.asarray(lon_deg, dtype=float))
        lat = np.atleast_1d(np.asarray(lat_deg, dtype=float))
        found = []
        for source in self.sources:  # a handful of files, not points
            west, south, east, north = source.bounds_lonlat
            if np.any((lon >= west) & (lon <= east) & (lat >= south) & (lat <= north)):
                found.append(source)
        return found

    def start_digests(self, lon_deg, lat_deg) -> None:
        """Start hashing, in the background, the files of the sources that cover the points."""
        self.digests.start([s.file_path or s.path for s in self.sources_covering(lon_deg, lat_deg)])

    def provenance(self, sources) -> list:
        """Report records ``{path, sha256, crs, resolution}`` of ``sources``, each file hashed once per model."""
        return [{"path": s.path, "sha256": self.digests.sha256(s.file_path or s.path), "crs": s.crs,
                 "resolution": list(s.resolution)} for s in sources]

    # ------------------------------------------------------------- sampling
    def sample(self, lon_deg, lat_deg):
        """Terrain height at WGS84 points by bilinear interpolation.

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude [deg]; broadcast together.

        Returns
        -------
        numpy.ndarray
            Height above the DEM's vertical datum (usually mean sea level) [m];
            NaN where any of the four neighbouring pixels is void or where no
            source covers the point.

        Notes
        -----
        Sources are tried finest resolution first (ties: order given); a point
        that is void in one source is taken from the next source covering it.
        Between the outermost pixel centre and the raster edge the edge pixel
        is used (clamping).

        References
        ----------
        Bilinear interpolation on a unit square, e.g. Press et al., Numerical
        Recipes, 3rd ed., eq. (3.6.5).
        """
        values, _ = self._sample(lon_deg, lat_deg, want_used=False)
        return values

    def covers(self, lon_deg, lat_deg):
        """Whether any source's extent contains each point.

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude [deg].

        Returns
        -------
        numpy.ndarray of bool
            True inside at least one raster (even where it is void).
        """
        lon, lat, shape = _flat_points(lon_deg, lat_deg)
        covered = np.zeros(lon.shape, dtype=bool)
        for group in self._groups:
            todo = np.flatnonzero(~covered)
            if todo.size == 0:
                break
            fr, fc = group.pixel_coords(lon[todo], lat[todo])
            covered[todo] = group.owner_pixels(fr, fc)[2] >= 0
        return covered.reshape(shape)

    def sources_used(self, lon_deg, lat_deg):
        """Sources that supplied at least one pixel to valid samples.

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude [deg].

        Returns
        -------
        list of SourceInfo
            In the order of :attr:`sources`.
        """
        _, used = self._sample(lon_deg, lat_deg)
        return [self._tiles[i].info for i in sorted(used)]

    def pixel_size_m(self, lon_deg, lat_deg):
        """Finest pixel size among the sources covering the points.

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude [deg].

        Returns
        -------
        float
            Pixel size [m].  For a geographic CRS: the smaller of the y size
            and the x size times cos(latitude), using WGS84 metres per degree
            at the covered latitudes; for a projected CRS: the smaller pixel
            side in metres.

        Raises
        ------
        ProfilerError
            If no source covers any of the points.

        References
        ----------
        WGS84 meridional and parallel radii, NIMA TR8350.2 ch. 4.
        """
        sizes = self.pixel_sizes_m(lon_deg, lat_deg)
        best = float(np.min(sizes)) if sizes.size else math.inf
        if not math.isfinite(best):
            raise ProfilerError(
                f"the path is outside the elevation model ({self.bounds_text()}); "
                "use a DEM that covers both sites")
        return best

    def pixel_sizes_m(self, lon_deg, lat_deg):
        """Finest pixel size of the sources covering each point [m]; inf where none covers it.

        The per-point form of :meth:`pixel_size_m` (same rules), so that a
        batch of links gets each link's sampling step in one call.
        """
        lon, lat, _ = _flat_points(lon_deg, lat_deg)
        best = np.full(lon.shape, math.inf)
        for group in self._groups:  # a handful of source groups, not points
            fr, fc = group.pixel_coords(lon, lat)
            inside = group.owner_pixels(fr, fc)[2] >= 0
            if not inside.any():
                continue
            res_x, res_y = group.tiles[0].info.resolution
            if group.is_geographic:
                # Measured at pixel centres: the pixel next to a pole has a width, the pole itself has none.
                centre_lat = np.clip(lat[inside], -90.0 + res_y / 2.0, 90.0 - res_y / 2.0)
                m_lat, m_lon = _metres_per_degree(centre_lat)
                size = np.minimum(res_y * m_lat, res_x * m_lon)
            else:
                size = min(res_x, res_y) * _linear_unit_m(group.pcrs)
            best[inside] = np.minimum(best[inside], size)
        return best

    def bounds_text(self):
        """One-line description of the area covered, in WGS84 degrees.

        Returns
        -------
        str
            e.g. ``"lon 7.0000 to 8.0000, lat 45.0000 to 46.0000 (1 raster)"``;
            one box per mosaic, separated by ``"; "``.
        """
        parts = []
        for group in sorted(self._groups, key=lambda g: g.order):
            boxes = np.array([t.info.bounds_lonlat for t in group.tiles])
            west, south = boxes[:, 0].min(), boxes[:, 1].min()
            east, north = boxes[:, 2].max(), boxes[:, 3].max()
            count = len(group.tiles)
            noun = "raster" if count == 1 else "rasters"
            parts.append(f"lon {west:.4f} to {east:.4f}, lat {south:.4f} to {north:.4f} "
                         f"({count} {noun})")
        if len(parts) > 6:
            parts = parts[:6] + [f"and {len(parts) - 6} more areas"]
        return "; ".join(parts) if parts else "no coverage"

    # ------------------------------------------------------------- lifetime
    def close(self):
        """Close all open raster handles and drop the block cache."""
        while self._handles:
            _, ds = self._handles.popitem(last=False)
            ds.close()
        self._cache.clear()
        self._cache_bytes = 0

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False

    # ------------------------------------------------------------ internals
    def _sample(self, lon_deg, lat_deg, want_used=True):
        lon, lat, shape = _flat_points(lon_deg, lat_deg)
        out = np.full(lon.shape, np.nan)
        used = set()
        for number, group in enumerate(self._groups):
            if number == 0:
                out, tiles_used = self._sample_group(group, lon, lat, want_used)
            else:
                todo = np.flatnonzero(np.isnan(out))
                if todo.size == 0:
                    break
                out[todo], tiles_used = self._sample_group(group, lon[todo], lat[todo],
                                                           want_used)
            used.update(tiles_used)
        return out.reshape(shape), used

    def _sample_group(self, group, lon, lat, want_used=True):
        """Bilinear samples from one mosaic (NaN where void or not covered)."""
        result = np.full(lon.shape, np.nan)
        frow, fcol = group.pixel_coords(lon, lat)
        own_r, own_c, owner = group.owner_pixels(frow, fcol)
        inside = owner >= 0
        if not inside.any():
            return result, set()
        if inside.all():
            idx = slice(None)
        else:
            idx = np.flatnonzero(inside)
            own_r, own_c = own_r[idx], own_c[idx]
        # Pixel centres sit at integer + 0.5 in corner-based coordinates.
        u = fcol[idx] - 0.5
        v = frow[idx] - 0.5
        nearest_u, nearest_v = np.rint(u), np.rint(v)
        u = np.where(np.abs(u - nearest_u) < _SNAP_PX, nearest_u, u)
        v = np.where(np.abs(v - nearest_v) < _SNAP_PX, nearest_v, v)
        j0 = np.floor(u).astype(np.int64)
        i0 = np.floor(v).astype(np.int64)
        wx = u - j0
        wy = v - i0
        # A neighbour with zero weight is the same pixel (no read, no NaN).
        dj = (wx > 0.0).astype(np.int64)
        di = (wy > 0.0).astype(np.int64)
        j1 = j0 + dj
        i1 = i0 + di

        # Fast path: all four neighbours in one block of one tile (nearly all
        # samples); one look-up per sample, four offsets into the block.
        t00 = group.tile_of(i0, j0)
        t11 = group.tile_of(i1, j1)
        key00, local00, width00 = group.block_index(t00, i0, j0)
        key11, _, _ = group.block_index(t11, i1, j1)
        fast = (t00 >= 0) & (t00 == t11) & (key00 == key11)
        n = u.size
        z = np.empty((4, n))
        owner_used = []
        f = np.flatnonzero(fast)
        if f.size:
            base = local00[f]
            step_c = dj[f]
            step_r = di[f] * width00[f]
            locals4 = np.stack([base, base + step_c, base + step_r, base + step_r + step_c],
                               axis=1)
            z[:, f] = self._gather(group, key00[f], locals4).T
            owner_used.append(t00[f])
        slow = np.flatnonzero(~fast)
        if slow.size:
            z[:, slow], owner = self._gather_clamped(
                group, i0[slow], j0[slow], i1[slow], j1[slow], own_r[slow], own_c[slow])
            owner_used.append(owner.reshape(4, -1))
        top = z[0] + wx * (z[1] - z[0])
        bottom = z[2] + wx * (z[3] - z[2])
        z = top + wy * (bottom - top)
        if group.vertical_scale != 1.0:
            z = z * group.vertical_scale
        result[idx] = z
        if not want_used:
            return result, set()
        valid = np.isfinite(z)
        counts = np.zeros(len(group.tiles), dtype=np.int64)
        if f.size:
            counts += np.bincount(t00[f][valid[f]], minlength=len(group.tiles))
        if slow.size:
            ok = np.broadcast_to(valid[slow], (4, slow.size))
            counts += np.bincount(owner_used[-1][ok], minlength=len(group.tiles))
        used = {group.tiles[k].index for k in np.flatnonzero(counts)}
        return result, used

    def _gather_clamped(self, group, i0, j0, i1, j1, own_r, own_c):
        """Four neighbours per sample, clamped at the mosaic edge; (4, n) values."""
        rows = np.concatenate([i0, i0, i1, i1])
        cols = np.concatenate([j0, j1, j0, j1])
        own_r4 = np.tile(own_r, 4)
        own_c4 = np.tile(own_c, 4)
        owner = group.tile_of(rows, cols)
        # Clamp at the mosaic edge: replace a missing neighbour's row, then its
        # column, then both, by those of the pixel holding the point.
        for use_row, use_col in ((True, False), (False, True), (True, True)):
            missing = owner < 0
            if not missing.any():
                break
            r_try = own_r4[missing] if use_row else rows[missing]
            c_try = own_c4[missing] if use_col else cols[missing]
            found = group.tile_of(r_try, c_try)
            ok = found >= 0
            sel = np.flatnonzero(missing)[ok]
            rows[sel], cols[sel], owner[sel] = r_try[ok], c_try[ok], found[ok]
        key, local, _ = group.block_index(owner, rows, cols)
        values = self._gather(group, key, local[:, np.newaxis])[:, 0]
        return values.reshape(4, -1), owner

    def _gather(self, group, key, local):
        """Values (stored units, NaN void) at offsets ``local`` of blocks ``key``.

        Parameters
        ----------
        key : ndarray of int, shape (n,)
            Global block number of each sample in the group.
        local : ndarray of int, shape (n, m)
            Flat offsets inside that block (m offsets per sample).

        Returns
        -------
        ndarray of float, shape (n, m)

        Samples along a path come in long runs in the same block: such runs
        are used as they are.  Otherwise one (radix) sort groups the samples
        by block.  Each run is fetched once and indexed with ``take``.
        """
        changes = np.flatnonzero(key[1:] != key[:-1]) + 1
        if changes.size < max(64, key.size // 32):
            order = None
            key_sorted, local_sorted = key, local
        else:
            if group.n_blocks < 65536:  # small integers: numpy's stable sort is radix
                order = np.argsort(key.astype(np.uint16), kind="stable")
            else:
                order = np.argsort(key, kind="stable")
            key_sorted = key[order]
            local_sorted = local[order]
            changes = np.flatnonzero(key_sorted[1:] != key_sorted[:-1]) + 1
        starts = np.concatenate(([0], changes))
        ends = np.append(starts[1:], key_sorted.size)
        block_keys = key_sorted[starts]
        tile_ids = np.searchsorted(group.block_base, block_keys, side="right") - 1
        in_tile = block_keys - group.block_base[tile_ids]
        uniform = group.uniform_tile
        raw_sorted = np.empty(local_sorted.shape,
                              dtype=uniform.dtype if uniform is not None else float)
        for start, end, k, number in zip(starts.tolist(), ends.tolist(), tile_ids.tolist(),
                                         in_tile.tolist()):
            tile = group.tiles[k]
            block = self._block(tile, *divmod(number, tile.n_chunk_cols))
            if uniform is not None:
                np.take(block, local_sorted[start:end], out=raw_sorted[start:end])
            else:
                raw_sorted[start:end] = tile.to_float(np.take(block, local_sorted[start:end]))
        values_sorted = uniform.to_float(raw_sorted) if uniform is not None else raw_sorted
        if order is None:
            return values_sorted
        values = np.empty_like(values_sorted)
        values[order] = values_sorted
        return values

    def _block(self, tile, block_r, block_c):
        key = (tile.index, block_r, block_c)
        block = self._cache.get(key)
        if block is not None:
            self._cache.move_to_end(key)
            return block
        row_off = block_r * tile.chunk_h
        col_off = block_c * tile.chunk_w
        window = Window(col_off, row_off, min(tile.chunk_w, tile.width - col_off),
                        min(tile.chunk_h, tile.height - row_off))
        ds = self._handle(tile)
        try:
            raw = ds.read(1, window=window)
        except Exception as exc:  # GDAL raises various CPLE_* / RasterioIOError
            reason = _root_cause(exc)
            raise ProfilerError(
                f"cannot read elevation data from {tile.info.path} ({reason}); "
                "the file may be truncated or corrupt") from exc
        block = raw  # kept in the raster's dtype; converted per sample in _gather
        if block.shape != (tile.chunk_h, tile.chunk_w):  # edge block: pad to full size
            padded = np.zeros((tile.chunk_h, tile.chunk_w), dtype=block.dtype)
            padded[:block.shape[0], :block.shape[1]] = block
            block = padded
        block = block.ravel()
        self.blocks_read += 1
        self._cache[key] = block
        self._cache_bytes += block.nbytes
        while self._cache_bytes > self._cache_limit and len(self._cache) > 1:
            _, old = self._cache.popitem(last=False)
            self._cache_bytes -= old.nbytes
        return block

    def _handle(self, tile):
        ds = self._handles.get(tile.index)
        if ds is not None:
            self._handles.move_to_end(tile.index)
            return ds
        ds = _open_dataset(tile.gdal_path, tile.info.file_path)
        self._remember_handle(tile.index, ds)
        return ds

    def _remember_handle(self, index, ds):
        self._handles[index] = ds
        while len(self._handles) > self._max_open:
            _, old = self._handles.popitem(last=False)
            old.close()


# ---------------------------------------------------------------- helpers
def _flat_points(lon_deg, lat_deg):
    lon, lat = np.broadcast_arrays(np.asarray(lon_deg, dtype=float),
                                   np.asarray(lat_deg, dtype=float))
    return lon.ravel(), lat.ravel(), lon.shape


def _root_cause(exc):
    """First line of the innermost message in an exception chain."""
    reason, seen = type(exc).__name__, set()
    while exc is not None and id(exc) not in seen:
        seen.add(id(exc))
        text = str(exc).strip()
        if text:
            reason = text.splitlines()[0]
        exc = exc.__cause__ or exc.__context__
    return reason


def _expand_path(path):
    """List of (gdal_path, file_path) for a file, zip archive or folder."""
    if not path.exists():
        raise ProfilerError(f"DEM not found: {path}; check --dem")
    if path.is_dir():
        found = sorted(p for p in path.rglob("*")
                       if p.is_file() and p.name.lower().endswith(RASTER_SUFFIXES)
                       and not p.name.lower().endswith(".aux.xml"))
        result = []
        for candidate in found:
            if candidate.suffix.lower() == ".zip":
                result.extend(_zip_members(candidate, required=False))
            else:
                result.append((str(candidate), str(candidate)))
        if not result:
            raise ProfilerError(
                f"no elevation rasters ({', '.join(RASTER_SUFFIXES)}) found in folder "
                f"{path}; check --dem")
        return result
    if path.suffix.lower() == ".zip":
        return _zip_members(path, required=True)
    return [(str(path), str(path))]


def _zip_members(path, required):
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
        raise ProfilerError(f"no elevation raster inside zip archive {path}; check --dem")
    absolute = path.resolve().as_posix()
    return [(f"/vsizip/{absolute}/{name}", str(path)) for name in names]


def _open_dataset(gdal_path, file_path):
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return rasterio.open(gdal_path)
    except Exception as exc:
        raise ProfilerError(
            f"not a raster that GDAL can read: {file_path}; "
            "give a GeoTIFF, .hgt, VRT or other GDAL raster") from exc


def _linear_unit_m(pcrs):
    try:
        return float(pcrs.axis_info[0].unit_conversion_factor)
    except (IndexError, AttributeError):
        return 1.0


def _crs_entry(ds, crs_cache, path):
    """(key, pyproj CRS, display string, vertical unit [m]) for a dataset."""
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


def _describe(index, gdal_path, file_path, ds, crs_cache):
    """Build a _Tile from dataset metadata (no pixel reads)."""
    if ds.count < 1:
        raise ProfilerError(f"raster has no bands: {file_path}; give an elevation raster")
    transform = ds.transform
    if transform.is_identity:
        raise ProfilerError(f"raster has no georeferencing: {file_path}; "
                            "give a georeferenced DEM (GeoTIFF, .hgt, ...)")
    entry = _crs_entry(ds, crs_cache, file_path)
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
    if band_unit:
        vertical_scale = _unit_scale_m(band_unit, file_path)
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
        m_lat, m_lon = _metres_per_degree(lat_c)
        resolution_m = min(res_y * float(m_lat), res_x * float(m_lon))
    else:
        resolution_m = min(res_x, res_y) * _linear_unit_m(pcrs)
    info = SourceInfo(path=gdal_path, crs=name, resolution=(res_x, res_y),
                      resolution_m=float(resolution_m), bounds_lonlat=bounds_lonlat,
                      vertical_scale=float(vertical_scale), file_path=file_path)
    return _Tile(index, gdal_path, info, ds, pcrs, key)


def _build_groups(tiles, crs_cache):
    """Join grid-aligned tiles into mosaics; order finest first, then as given."""
    transformers = {}
    groups = []
    for tile in tiles:
        if any(group.try_add(tile) for group in groups):
            continue
        if tile.crs_key not in transformers:
            if tile.pcrs.equals("EPSG:4326", ignore_axis_order=True):
                transformers[tile.crs_key] = None
            else:
                transformers[tile.crs_key] = pyproj.Transformer.from_crs(
                    "EPSG:4326", tile.pcrs, always_xy=True)
        groups.append(_Group(tile, transformers[tile.crs_key]))
    for group in groups:
        group.finish()
    groups.sort(key=lambda g: (round(g.resolution_m, 6), g.order))
    return groups


def fill_voids_along_profile(distance_m, elevation_m):
    """Fill NaN voids of a terrain profile by linear interpolation in distance.

    Parameters
    ----------
    distance_m : array_like
        Distance of each sample from the start of the path [m], increasing.
    elevation_m : array_like
        Terrain height [m]; NaN marks voids.

    Returns
    -------
    filled : numpy.ndarray
        Heights with interior voids linearly interpolated between the nearest
        valid samples, and voids at either end set to the nearest valid
        sample [m].
    n_filled : int
        Number of samples that were filled.

    Raises
    ------
    ProfilerError
        If every sample is void.

    References
    ----------
    Linear interpolation between two points (two-point form of a line).
    """
    distance = np.asarray(distance_m, dtype=float)
    elevation = np.asarray(elevation_m, dtype=float)
    void = ~np.isfinite(elevation)
    if void.all():
        raise ProfilerError("the elevation model has no data anywhere along the path "
                            "(all samples void); use a DEM with data there")
    if not void.any():
        return elevation.copy(), 0
    filled = elevation.copy()
    filled[void] = np.interp(distance[void], distance[~void], elevation[~void])
    return filled, int(void.sum())
