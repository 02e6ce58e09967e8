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

The module keeps the sampling; the blocks read and cached are in
:mod:`profiler.terrain.blocks`, opening the sources
(files, folders, zip archives, CRS, vertical units) is in
:mod:`profiler.terrain.sources`, the tile mosaics in :mod:`profiler.terrain.mosaic`,
the source descriptions in :mod:`profiler.terrain.source_info` (file digests: :mod:`profiler.terrain.digests`)
and the void filling in :mod:`profiler.terrain.voids`.

Only numpy, rasterio and pyproj are imported at module level.
"""

from __future__ import annotations

import math
import os
from pathlib import Path

import numpy as np

from profiler.errors import ProfilerError, refuse_empty_path
from profiler.terrain.blocks import BlockCache
from profiler.terrain.digests import FileDigests
from profiler.terrain.mosaic import build_groups
from profiler.terrain.source_info import SourceInfo
from profiler.terrain.sources import (
    DEM_ROLE,
    RASTER_SUFFIXES,
    describe_raster,
    expand_path,
    linear_unit_m,
    metres_per_degree,
    open_dataset,
)
from profiler.terrain.voids import fill_voids_along_profile

__all__ = ["ElevationModel", "SourceInfo", "fill_voids_along_profile", "RASTER_SUFFIXES"]

#: Fractional pixel offsets closer than this to an integer are snapped, so a
#: sample at a pixel centre returns that pixel's value exactly.
_SNAP_PX = 1e-6

_DEFAULT_CACHE_BYTES = 256 * 1024 * 1024
_DEFAULT_MAX_OPEN = 64


class ElevationModel:
    """Terrain heights from one or more elevation rasters.

    Open with :meth:`ElevationModel.open`; use as a context manager or call
    :meth:`close`.  The model owns an LRU cache of the blocks it has read
    (bounded by ``cache_bytes``), so a second profile in the same area reads
    nothing from disk.  ``blocks_read`` counts the block reads done so far.

    Parameters
    ----------
    tiles : list of profiler.terrain.mosaic.Tile
        The rasters, in the order given.
    groups : list of profiler.terrain.mosaic.TileGroup
        The same rasters joined into grid-aligned mosaics, finest first.
    cache_bytes : int, default 256 MiB
        Upper bound of the in-memory block cache [bytes].
    max_open : int, default 64
        Largest number of raster files kept open at once (a count).
    digests : profiler.terrain.digests.FileDigests, optional
        Provenance digests; default a new one.
    role : profiler.terrain.sources.RasterRole, optional
        What the rasters hold (elevation by default; class codes for a land
        cover), for the messages.

    Attributes
    ----------
    sources : list of SourceInfo
        The rasters, in the order given (folders expanded, sorted by path).
    blocks_read : int
        Number of raster blocks read from disk since opening.
    """

    def __init__(self, tiles, groups, cache_bytes=_DEFAULT_CACHE_BYTES,
                 max_open=_DEFAULT_MAX_OPEN, digests=None, role=DEM_ROLE):
        self._tiles = tiles
        self.role = role
        self.digests = digests if digests is not None else FileDigests()
        self._groups = groups
        self.sources = [t.info for t in tiles]
        self._blocks = BlockCache(role, cache_bytes, max_open)

    # ------------------------------------------------------------------ open
    @classmethod
    def open(cls, paths, cache_bytes=_DEFAULT_CACHE_BYTES, digests=None, role=DEM_ROLE):
        """Open elevation rasters (or, with ``role``, rasters of class codes) from files and/or folders.

        Parameters
        ----------
        paths : str or os.PathLike or sequence of them
            Raster files (anything GDAL opens, including ``.zip`` archives of
            rasters) or folders searched recursively for files ending in
            :data:`RASTER_SUFFIXES`.
        cache_bytes : int, optional
            Upper bound of the in-memory block cache [bytes].
        digests : profiler.terrain.digests.FileDigests, optional
            Provenance digests, possibly already started on the files (by a
            command, before its heavy imports); default a new one.
        role : profiler.terrain.sources.RasterRole, optional
            What the rasters hold: :data:`~profiler.terrain.sources.DEM_ROLE`
            (default) or ``LAND_COVER_ROLE`` (class codes: band units ignored;
            the messages name ``--land-cover``).  A raster of the other kind
            found in a folder is left out (``RasterRole.skips``).

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
            raise ProfilerError(f"no {role.label} given; pass {role.option} with a raster file or folder")
        files = []
        for entry in paths:
            refuse_empty_path(entry, role.option, role.a("file or folder"))
            in_folder = Path(entry).is_dir()
            files.extend((gdal, file, in_folder) for gdal, file in expand_path(Path(entry), role))

        model = cls([], [], cache_bytes=cache_bytes, digests=digests, role=role)
        crs_cache = {}
        tiles = []
        try:
            for gdal_path, file_path, in_folder in files:
                ds = open_dataset(gdal_path, file_path)
                if in_folder and role.skips(ds):
                    ds.close()
                    continue
                try:
                    tile = describe_raster(len(tiles), gdal_path, file_path, ds, crs_cache, role)
                except BaseException:
                    ds.close()
                    raise
                tiles.append(tile)
                model._blocks.remember_handle(tile.index, ds)
        except BaseException:
            model.close()
            raise
        if not tiles:
            raise ProfilerError(f"no {role.noun} rasters found in {', '.join(map(str, paths))}; "
                                f"check {role.option}")
        model._tiles = tiles
        model.sources = [t.info for t in tiles]
        model._groups = build_groups(tiles)
        return model

    def sources_covering(self, lon_deg, lat_deg):
        """Sources whose WGS84 bounds contain at least one of the points (a cheap test, no pixel read).

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude [deg].

        Returns
        -------
        list of SourceInfo
            In the order of :attr:`sources`.
        """
        lon = np.atleast_1d(np.asarray(lon_deg, dtype=float))
        lat = np.atleast_1d(np.asarray(lat_deg, dtype=float))
        found = []
        for source in self.sources:  # a handful of files, not points
            west, south, east, north = source.bounds_lonlat
            if np.any((lon >= west) & (lon <= east) & (lat >= south) & (lat <= north)):
                found.append(source)
        return found

    def start_digests(self, lon_deg, lat_deg) -> None:
        """Start hashing, in the background, the files of the sources that cover the points.

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude [deg].
        """
        self.digests.start([s.file_path or s.path for s in self.sources_covering(lon_deg, lat_deg)])

    def provenance(self, sources) -> list:
        """Report records ``{path, sha256, crs, resolution}`` of ``sources``, each file hashed once per model.

        Parameters
        ----------
        sources : list of SourceInfo
            The sources to describe (e.g. from :meth:`sources_used`).

        Returns
        -------
        list of dict
            One record per source: ``path``, ``sha256`` (hex), ``crs`` and
            ``resolution`` (pixel size in CRS units [deg or m]).
        """
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

    def sample_nearest(self, lon_deg, lat_deg):
        """Stored value of the pixel holding each point, never interpolated (class codes).

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            Points, WGS84 longitude and latitude [deg] (broadcast).

        Returns
        -------
        numpy.ndarray
            Value of the pixel whose area holds the point (the nearest centre
            in the raster's CRS; on an edge the pixel right/below, as
            ``rasterio``'s ``index``), band scale and offset applied, as float
            [stored units]; NaN where void or not covered.  Sources, block
            cache and fall-back order as :meth:`sample`.
        """
        values, _ = self._sample(lon_deg, lat_deg, want_used=False, nearest=True)
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

    def sources_used(self, lon_deg, lat_deg, nearest=False):
        """Sources that supplied at least one pixel to valid samples.

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude [deg].
        nearest : bool, optional
            Samples of :meth:`sample_nearest` instead of :meth:`sample` (a flag).

        Returns
        -------
        list of SourceInfo
            In the order of :attr:`sources`.
        """
        _, used = self._sample(lon_deg, lat_deg, nearest=nearest)
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

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude [deg].

        Returns
        -------
        ndarray
            Pixel size per point [m], flattened; inf where no source covers it.

        References
        ----------
        WGS84 meridional and parallel radii, NIMA TR8350.2 ch. 4.
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
                m_lat, m_lon = metres_per_degree(centre_lat)
                size = np.minimum(res_y * m_lat, res_x * m_lon)
            else:
                size = min(res_x, res_y) * linear_unit_m(group.pcrs)
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
    @property
    def blocks_read(self) -> int:
        """Number of raster blocks read from disk since opening (a count)."""
        return self._blocks.blocks_read

    def close(self):
        """Close all open raster handles and drop the block cache."""
        self._blocks.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False

    # ------------------------------------------------------------ internals
    def _sample(self, lon_deg, lat_deg, want_used=True, nearest=False):
        lon, lat, shape = _flat_points(lon_deg, lat_deg)
        out = np.full(lon.shape, np.nan)
        used = set()
        sample_group = self._nearest_group if nearest else self._sample_group
        for number, group in enumerate(self._groups):
            if number == 0:
                out, tiles_used = sample_group(group, lon, lat, want_used)
            else:
                todo = np.flatnonzero(np.isnan(out))
                if todo.size == 0:
                    break
                out[todo], tiles_used = sample_group(group, lon[todo], lat[todo], want_used)
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
            z[:, f] = self._blocks.gather(group, key00[f], locals4).T
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

    def _nearest_group(self, group, lon, lat, want_used=False):
        """The pixel holding each point in one mosaic (NaN where void or not covered)."""
        result = np.full(lon.shape, np.nan)
        rows, cols, owner = group.owner_pixels(*group.pixel_coords(lon, lat))
        idx = np.flatnonzero(owner >= 0)
        if idx.size:
            key, local, _ = group.block_index(owner[idx], rows[idx], cols[idx])
            result[idx] = self._blocks.gather(group, key, local[:, np.newaxis])[:, 0] * group.vertical_scale
        used = {group.tiles[k].index for k in np.unique(owner[idx][np.isfinite(result[idx])])}
        return result, (used if want_used else set())

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
        values = self._blocks.gather(group, key, local[:, np.newaxis])[:, 0]
        return values.reshape(4, -1), owner

# ---------------------------------------------------------------- helpers
def _flat_points(lon_deg, lat_deg):
    lon, lat = np.broadcast_arrays(np.asarray(lon_deg, dtype=float),
                                   np.asarray(lat_deg, dtype=float))
    return lon.ravel(), lat.ravel(), lon.shape


