"""Provenance of elevation sources: what each raster is, and the SHA-256 of its file.

:class:`SourceInfo` describes one raster opened by
:class:`profiler.dem.ElevationModel` (path, CRS, pixel size, WGS84 extent,
vertical unit) and carries the file digest that reports quote, hashed on first
use or in a background thread started while the path is sampled
(:meth:`SourceInfo.start_digest`; hashlib releases the GIL).
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from functools import cached_property

__all__ = ["SourceInfo", "file_sha256"]


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
        """SHA-256 of the file on disk [hex], computed on first access (or taken from :meth:`start_digest`)."""
        pending = self.__dict__.pop("_digest_thread", None)
        if pending is not None:
            thread, box = pending
            thread.join()
            if "hex" in box:
                return box["hex"]
        return file_sha256(self.file_path or self.path)

    def start_digest(self) -> None:
        """Start hashing the file in a background thread (hashlib releases the GIL), so that the
        provenance digest costs no wall-clock time while the profile is sampled and analysed."""
        import threading

        if "sha256" in self.__dict__ or "_digest_thread" in self.__dict__:
            return
        box: dict = {}

        def work():
            try:
                box["hex"] = file_sha256(self.file_path or self.path)
            except OSError:
                pass  # the property then hashes in the foreground and reports the error there

        thread = threading.Thread(target=work, name="profiler-sha256", daemon=True)
        self.__dict__["_digest_thread"] = (thread, box)
        thread.start()


def file_sha256(path) -> str:
    """SHA-256 of a file [hex].

    Parameters
    ----------
    path : str or os.PathLike
        File on disk.

    Returns
    -------
    str
        Hexadecimal digest (64 characters).

    References
    ----------
    FIPS 180-4, Secure Hash Standard, section 6.2 (SHA-256), via hashlib.
    """
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for chunk in iter(lambda: handle.read(1 << 22), b""):
            digest.update(chunk)
    return digest.hexdigest()
