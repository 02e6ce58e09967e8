"""Shared pytest fixtures: small elevation rasters written on the fly."""

from pathlib import Path

import numpy as np
import pytest


@pytest.fixture
def write_dem(tmp_path):
    """Factory writing a GeoTIFF DEM under ``tmp_path`` and returning its path.

    ``write_dem(name, array, transform, crs="EPSG:4326", nodata=None,
    units=None, tags=None, blocksize=None)``: ``array`` is 2-D (one band) or
    3-D (bands first); ``blocksize`` makes a tiled GeoTIFF with square blocks;
    ``units`` sets the band unit (e.g. ``"ft"``); ``tags`` are dataset tags
    (e.g. ``{"AREA_OR_POINT": "Point"}``).  ``name`` may contain folders.
    """
    import rasterio

    def _write(name, array, transform, crs="EPSG:4326", nodata=None, units=None,
               tags=None, blocksize=None):
        data = np.asarray(array)
        if data.ndim == 2:
            data = data[np.newaxis]
        path = Path(tmp_path) / name
        path.parent.mkdir(parents=True, exist_ok=True)
        profile = dict(driver="GTiff", width=data.shape[2], height=data.shape[1],
                       count=data.shape[0], dtype=data.dtype, crs=crs,
                       transform=transform, nodata=nodata)
        if blocksize:
            profile.update(tiled=True, blockxsize=blocksize, blockysize=blocksize)
        with rasterio.open(path, "w", **profile) as dst:
            dst.write(data)
            if units:
                dst.units = (units,) * data.shape[0]
            if tags:
                dst.update_tags(**tags)
        return path

    return _write


@pytest.fixture(scope="session")
def los_report():
    """Sample link with line of sight over Harrowback Ridge, Fresnel zone obstructed (JSON dict)."""
    from sample_sites import DEM, GATEWAY, PUMP

    from profiler.api import link

    return link(GATEWAY, PUMP, dem=DEM, name_a="Cairnfell Beacon", name_b="Osterby Farm pump",
                mast_a_m=10.0, mast_b_m=2.0).to_dict()


@pytest.fixture(scope="session")
def evil_report():
    """The same link with hostile site names (JSON dict)."""
    from sample_sites import DEM, EVIL_A, EVIL_B, GATEWAY, PUMP

    from profiler.api import link

    return link(GATEWAY, PUMP, dem=DEM, name_a=EVIL_A, name_b=EVIL_B, mast_a_m=10.0, mast_b_m=2.0).to_dict()
