"""Raster blocks read on demand and kept in a bounded least-recently-used cache.

:class:`BlockCache` is the I/O half of :class:`profiler.terrain.elevation.ElevationModel`
(which interpolates): it reads the internal blocks of a raster (or aligned
groups of them, :class:`profiler.terrain.mosaic.Tile`) through rasterio
windows, keeps them in the raster's own dtype up to a byte budget, keeps a
bounded number of datasets open, and gathers values at flat offsets of
blocks for the samplers.

Only numpy and rasterio are imported at module level.
"""

from __future__ import annotations

from collections import OrderedDict

import numpy as np
from rasterio.windows import Window

from profiler.errors import ProfilerError
from profiler.terrain.sources import open_dataset, root_cause

__all__ = ["BlockCache"]


class BlockCache:
    """The blocks read from a set of rasters, least recently used dropped beyond a byte budget.

    Parameters
    ----------
    role : profiler.terrain.sources.RasterRole
        What the rasters hold (for the messages).
    cache_bytes : int
        Upper bound of the cached blocks [bytes].
    max_open : int
        Largest number of raster files kept open at once (a count).

    Attributes
    ----------
    blocks_read : int
        Number of raster blocks read from disk so far (a count).
    """

    def __init__(self, role, cache_bytes, max_open):
        self.role = role
        self._cache = OrderedDict()
        self._cache_bytes = 0
        self._cache_limit = int(cache_bytes)
        self._handles = OrderedDict()
        self._max_open = max(1, int(max_open))
        self.blocks_read = 0

    def close(self):
        """Close every open dataset and drop the cached blocks."""
        while self._handles:
            _, ds = self._handles.popitem(last=False)
            ds.close()
        self._cache.clear()
        self._cache_bytes = 0

    def gather(self, group, key, local):
        """Values (stored units, NaN void) at offsets ``local`` of blocks ``key``.

        Parameters
        ----------
        group : profiler.terrain.mosaic.TileGroup
            The mosaic the block numbers refer to.
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
            block = self.block(tile, *divmod(number, tile.n_chunk_cols))
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

    def block(self, tile, block_r, block_c):
        """Block ``(block_r, block_c)`` of ``tile`` (a native block or an aligned group of them), flat, in the
        raster's dtype: from the cache, else read (edge blocks padded to full size)."""
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
            reason = root_cause(exc)
            raise ProfilerError(
                f"cannot read {self.role.noun} data from {tile.info.path} ({reason}); "
                "the file may be truncated or corrupt") from exc
        block = raw  # kept in the raster's dtype; converted per sample in gather
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
        ds = open_dataset(tile.gdal_path, tile.info.file_path)
        self.remember_handle(tile.index, ds)
        return ds

    def remember_handle(self, index, ds):
        """Keep an open dataset of tile ``index`` (the least recently used beyond ``max_open`` are closed)."""
        self._handles[index] = ds
        while len(self._handles) > self._max_open:
            _, old = self._handles.popitem(last=False)
            old.close()
