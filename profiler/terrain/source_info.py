"""Provenance of elevation sources: what each raster is.

:class:`SourceInfo` describes one raster opened by
:class:`profiler.terrain.elevation.ElevationModel` (path, CRS, pixel size, WGS84 extent,
vertical unit).  The file digests that reports quote are computed once per
run by the model's :class:`profiler.terrain.digests.FileDigests`
(:meth:`profiler.terrain.elevation.ElevationModel.provenance`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

from profiler.terrain.digests import file_sha256

__all__ = ["SourceInfo", "file_sha256"]


@dataclass
class SourceInfo:
    """Description of one elevation raster.

    Parameters
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
    file_path : str, default ""
        The file on disk (the zip archive for a raster inside one).
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
        """SHA-256 of the file on disk [hex]
        (reports use :meth:`profiler.terrain.elevation.ElevationModel.provenance`)."""
        return file_sha256(self.file_path or self.path)
