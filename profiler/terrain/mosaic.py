"""Virtual mosaics of elevation tiles: one pixel grid over the tiles that share it.

A :class:`Tile` is one raster file (metadata, its place in the mosaic grid,
how its blocks are read); a :class:`TileGroup` joins the tiles that share a
CRS, pixel size and grid alignment, so that bilinear interpolation across a
tile seam uses pixels from both tiles, and maps WGS84 points to fractional
pixel coordinates, owning pixels and block numbers, vectorized over points.
:func:`build_groups` builds the groups in sampling order (finest first).

Pixel registration: the centre of pixel (row ``i``, column ``j``) is
``transform * (j + 0.5, i + 0.5)`` (see :mod:`profiler.terrain.elevation`).
"""

from __future__ import annotations

import math

import numpy as np
import pyproj

__all__ = ["Tile", "TileGroup", "build_groups", "floor_int", "void_value", "CHUNK_PX", "EDGE_PX"]

#: A point this close (in pixels) outside the bottom or right edge of a mosaic is on that edge.
EDGE_PX = 1e-9

#: Native blocks of fewer than CHUNK_PX**2 / 4 pixels (one-row strips, tiny
#: tiles) are read in aligned groups of whole blocks about CHUNK_PX pixels on
#: a side; larger blocks are read one by one.
CHUNK_PX = 256


class Tile:
    """One raster file: metadata, its place in a mosaic grid, read chunking.

    Parameters
    ----------
    index : int
        Position of the raster in the order given [-].
    gdal_path : str
        Path as GDAL opens it (``/vsizip/...`` inside a zip).
    info : SourceInfo
        Description of the raster.
    ds : rasterio.DatasetReader
        The open dataset (only its metadata is read).
    pcrs : pyproj.CRS
        Horizontal CRS of the raster.
    crs_key : str
        Key of that CRS (its WKT), shared by rasters with the same CRS.
    """

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
        self.void_value = void_value(self.dtype, ds.nodata)
        self.scale = float(ds.scales[0]) if ds.scales else 1.0
        self.offset = float(ds.offsets[0]) if ds.offsets else 0.0
        block_h, block_w = ds.block_shapes[0]
        if block_h * block_w >= CHUNK_PX * CHUNK_PX // 4:
            self.chunk_h, self.chunk_w = block_h, block_w  # read native blocks
        else:  # tiny tiles or one-row strips: aligned groups of whole blocks
            self.chunk_h = min(self.height, block_h * max(1, math.ceil(CHUNK_PX / block_h)))
            self.chunk_w = min(self.width, block_w * max(1, math.ceil(CHUNK_PX / block_w)))
        self.n_chunk_cols = math.ceil(self.width / self.chunk_w)
        self.row0 = 0
        self.col0 = 0

    def to_float(self, raw):
        """Stored values (native dtype) to float64 heights in stored units, NaN void.

        Parameters
        ----------
        raw : ndarray
            Pixel values as stored [raster units], before scale and offset.

        Returns
        -------
        ndarray of float64
            Heights in the raster's stored units [m or ft], band scale and
            offset applied; NaN where the pixel is void.
        """
        values = raw.astype(np.float64)
        if self.void_value is not None:
            values[raw == self.void_value] = np.nan
        if self.scale != 1.0 or self.offset != 0.0:
            values = values * self.scale + self.offset
        return values


def void_value(dtype, nodata):
    """The nodata value in the raster's dtype, or None (NaN is always void).

    Parameters
    ----------
    dtype : numpy.dtype
        Data type of the band.
    nodata : float or None
        The raster's nodata value [stored units].

    Returns
    -------
    scalar of ``dtype`` or None
        The void marker; None where there is none or it does not fit the dtype.
    """
    if nodata is None or math.isnan(nodata):
        return None
    if dtype.kind in "iu":
        limits = np.iinfo(dtype)
        if not (float(nodata).is_integer() and limits.min <= nodata <= limits.max):
            return None
    elif dtype.kind == "c":
        return None
    return dtype.type(nodata)


class TileGroup:
    """Tiles sharing CRS, pixel size and grid alignment: one virtual mosaic.

    Parameters
    ----------
    tile : Tile
        The first tile; it fixes the grid.
    transformer : pyproj.Transformer or None
        WGS84 to the tile's CRS; None for a geographic WGS84 grid.
    """

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
        """Add ``tile`` if it lies on this group's pixel grid; return success.

        Parameters
        ----------
        tile : Tile
            Candidate raster.

        Returns
        -------
        bool
            True when the tile was added.
        """
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
        """Fractional corner-based (row, col) in the group grid for lon/lat.

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude [deg].

        Returns
        -------
        frow, fcol : ndarray
            Fractional row and column in the group grid [pixel]; non-finite
            input stays non-finite.
        """
        if self.transformer is None:
            x, y = lon_deg, lat_deg
        else:
            with np.errstate(all="ignore"):
                x, y = self.transformer.transform(lon_deg, lat_deg, errcheck=False)
            x = np.asarray(x, dtype=float)
            y = np.asarray(y, dtype=float)
        if self.wrap_west is not None:  # the same meridian, inside the grid's 360-degree window
            x = np.asarray(x, dtype=float)
            if not (x.size and x.min() >= self.wrap_west and x.max() < self.wrap_west + 360.0):   # NaN: wrapped
                with np.errstate(invalid="ignore"):
                    x = self.wrap_west + np.mod(x - self.wrap_west, 360.0)
        ia, ib, ic, id_, ie, if_ = self.inverse
        with np.errstate(invalid="ignore"):  # non-finite input stays non-finite
            return id_ * x + ie * y + if_, ia * x + ib * y + ic

    def owner_pixels(self, frow, fcol):
        """Pixel (row, col) holding each point and its tile (-1 if none).

        The mosaic's far edges are closed: a point exactly on the bottom or
        right edge (latitude -90 on a global grid) belongs to the edge pixel.

        Parameters
        ----------
        frow, fcol : ndarray
            Fractional row and column in the group grid [pixel].

        Returns
        -------
        rows, cols : ndarray of int64
            Pixel indices in the group grid [pixel].
        owner : ndarray of intp
            Index into ``self.tiles`` of the tile holding the pixel; -1 if none.
        """
        rows, cols = floor_int(frow), floor_int(fcol)
        owner = self.tile_of(rows, cols)
        missing = owner < 0
        if missing.any():
            r2 = np.where(missing, floor_int(frow - EDGE_PX), rows)
            c2 = np.where(missing, floor_int(fcol - EDGE_PX), cols)
            o2 = self.tile_of(r2, c2)
            fix = missing & (o2 >= 0)
            rows, cols, owner = np.where(fix, r2, rows), np.where(fix, c2, cols), np.where(fix, o2, owner)
        return rows, cols, owner

    def tile_of(self, rows, cols):
        """Index (into ``self.tiles``) of the first tile holding each pixel, -1 if none.

        Parameters
        ----------
        rows, cols : ndarray of int
            Pixel indices in the group grid [pixel].

        Returns
        -------
        ndarray of intp
            Tile index per pixel (an index); -1 where no tile holds it.
        """
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

        Parameters
        ----------
        owner : ndarray of int
            Tile index per pixel, from :meth:`owner_pixels`.
        rows, cols : ndarray of int
            Pixel indices in the group grid [pixel].

        Returns
        -------
        key : ndarray of int
            Global block number (an index) for the block cache.
        offset : ndarray of int
            Flat index of the pixel inside its block.
        width : ndarray of int
            Block width [pixel].
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


def floor_int(frac):
    """Integer floor of fractional pixel coordinates; NaN maps far outside.

    Parameters
    ----------
    frac : ndarray
        Fractional pixel coordinates [pixel].

    Returns
    -------
    ndarray of int64
        Floor [pixel]; -2**40 where the input is not finite.
    """
    out = np.floor(np.where(np.isfinite(frac), frac, -2.0 ** 40))
    return out.astype(np.int64)


def build_groups(tiles):
    """Join grid-aligned tiles into mosaics; order finest first, then as given.

    Parameters
    ----------
    tiles : list of Tile
        The rasters, in the order given.

    Returns
    -------
    list of TileGroup
        Finished groups, finest resolution first.
    """
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
        groups.append(TileGroup(tile, transformers[tile.crs_key]))
    for group in groups:
        group.finish()
    groups.sort(key=lambda g: (round(g.resolution_m, 6), g.order))
    return groups
