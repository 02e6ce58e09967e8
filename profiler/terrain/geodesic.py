"""Sampling a path along the WGS84 geodesic between two sites.

References
----------
.. [1] C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87, 43-55
   (2013), as implemented by PROJ's ``geod`` (pyproj.Geod).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from pyproj import Geod

from ..errors import ProfilerError
from ..limits import sample_count


@dataclass(frozen=True)
class GeodesicPath:
    """Equally spaced points on the geodesic from site A to site B.

    Parameters
    ----------
    distance_m : ndarray
        Distance from A along the geodesic [m]; first 0, last ``length_m``.
    lat_deg, lon_deg : ndarray
        Coordinates of the samples [degrees, WGS84]; longitude in [-180, 180].
    length_m : float
        Geodesic distance A-B [m].
    azimuth_a_to_b_deg, azimuth_b_to_a_deg : float
        Forward azimuth at A towards B and at B towards A [degrees from true
        north, clockwise, 0-360].
    """

    distance_m: np.ndarray
    lat_deg: np.ndarray
    lon_deg: np.ndarray
    length_m: float
    azimuth_a_to_b_deg: float
    azimuth_b_to_a_deg: float


def swapped_hint(lat_deg: float, lon_deg: float) -> str:
    """Hint that latitude and longitude may be swapped.

    ``; lat/lon swapped? (...)`` when a latitude out of -90..90 would be a
    valid longitude and the longitude a valid latitude; empty otherwise.  For
    the one-line refusal of a latitude out of range.

    Parameters
    ----------
    lat_deg : float
        Latitude as given [deg].
    lon_deg : float
        Longitude as given [deg].

    Returns
    -------
    str
        The hint, or ``""``.
    """
    if -90.0 <= lon_deg <= 90.0 and -180.0 <= lat_deg <= 180.0:
        return f"; lat/lon swapped? ({lon_deg:g},{lat_deg:g} would be valid)"
    return ""


def validate_lat_lon(lat_deg: float, lon_deg: float, what: str = "site") -> tuple[float, float]:
    """Check a latitude/longitude pair and return it as floats.

    Parameters
    ----------
    lat_deg : float or str
        Latitude [deg, WGS84], -90 to 90.
    lon_deg : float or str
        Longitude [deg, WGS84], -180 to 180.
    what : str, default "site"
        Name of the site for the message.

    Returns
    -------
    lat_deg : float
        Latitude [deg].
    lon_deg : float
        Longitude [deg].

    Raises
    ------
    ProfilerError
        If a coordinate is not a finite number or is out of range.
    """
    try:
        lat, lon = float(lat_deg), float(lon_deg)
    except (TypeError, ValueError):
        raise ProfilerError(f"{what}: coordinates must be numbers, got {lat_deg!r},{lon_deg!r}") from None
    if not (math.isfinite(lat) and math.isfinite(lon)):
        raise ProfilerError(f"{what}: coordinates must be finite numbers")
    if not -90.0 <= lat <= 90.0:
        raise ProfilerError(f"{what}: latitude {lat:g} is out of range; use -90 to 90 (format LAT,LON)"
                            f"{swapped_hint(lat, lon)}")
    if not -180.0 <= lon <= 180.0:
        raise ProfilerError(f"{what}: longitude {lon:g} is out of range; use -180 to 180 (format LAT,LON)")
    return lat, lon


def geodesic_inverse(lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg) -> tuple[float, float, float]:
    """Geodesic distance [m] and the azimuths at both ends [deg, 0-360].

    Parameters
    ----------
    lat_a_deg, lon_a_deg : float
        Site A [deg, WGS84].
    lat_b_deg, lon_b_deg : float
        Site B [deg, WGS84].

    Returns
    -------
    length_m : float
        Geodesic distance A-B [m].
    azimuth_a_to_b_deg : float
        Azimuth at A towards B [deg from true north, clockwise, 0-360].
    azimuth_b_to_a_deg : float
        Azimuth at B towards A [deg from true north, clockwise, 0-360].

    References
    ----------
    .. [1] C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87, 43-55
       (2013), as implemented by PROJ's ``geod`` (pyproj.Geod).
    """
    geod = Geod(ellps="WGS84")
    az_ab, az_ba_back, dist = geod.inv(lon_a_deg, lat_a_deg, lon_b_deg, lat_b_deg)
    return float(dist), float(az_ab) % 360.0, float(az_ba_back) % 360.0


def geodesic_path(lat_a_deg: float, lon_a_deg: float, lat_b_deg: float, lon_b_deg: float,
                  step_m: float) -> GeodesicPath:
    """Sample the WGS84 geodesic from A to B at equal spacing.

    Parameters
    ----------
    lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg : float
        Site coordinates [degrees, WGS84].
    step_m : float
        Largest allowed spacing between samples [m]; the actual spacing is
        ``length_m / (n - 1)`` with the smallest ``n`` that honours it.

    Returns
    -------
    GeodesicPath
        Samples including both end points.

    References
    ----------
    Karney (2013), solution of the inverse geodesic problem and equally
    spaced intermediate points (pyproj ``Geod.inv_intermediate``).
    """
    lat_a, lon_a = validate_lat_lon(lat_a_deg, lon_a_deg, "site A")
    lat_b, lon_b = validate_lat_lon(lat_b_deg, lon_b_deg, "site B")
    geod = Geod(ellps="WGS84")
    az_ab, az_back, length = geod.inv(lon_a, lat_a, lon_b, lat_b)
    if length <= 0.0:
        raise ProfilerError("site A and site B are the same point; give two different sites")
    n = sample_count(length, step_m)  # refused here, before any array is allocated
    line = geod.inv_intermediate(lon_a, lat_a, lon_b, lat_b, npts=n, initial_idx=0, terminus_idx=0,
                                 return_back_azimuth=True)
    lons = np.asarray(line.lons, dtype=float)
    lats = np.asarray(line.lats, dtype=float)
    lons = (lons + 180.0) % 360.0 - 180.0
    distance = np.linspace(0.0, length, n)
    return GeodesicPath(distance_m=distance, lat_deg=lats, lon_deg=lons, length_m=float(length),
                        azimuth_a_to_b_deg=float(az_ab) % 360.0,
                        azimuth_b_to_a_deg=float(az_back) % 360.0)
