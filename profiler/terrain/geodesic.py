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
    Karney (2013), the inverse geodesic problem and equally spaced points
    of one geodesic line (pyproj ``Geod.inv_intermediate``).
    """
    lat_a, lon_a = validate_lat_lon(lat_a_deg, lon_a_deg, "site A")
    lat_b, lon_b = validate_lat_lon(lat_b_deg, lon_b_deg, "site B")
    geod = Geod(ellps="WGS84")
    az_ab, az_back, length = geod.inv(lon_a, lat_a, lon_b, lat_b)
    if length <= 0.0:
        raise ProfilerError("site A and site B are the same point; give two different sites")
    n = sample_count(length, step_m)  # refused here, before any array is allocated
    # One geodesic line sampled at equal spacing (every point exact): the reference form of the
    # anchored batch sampler below, for one path (line vertices, checks); twice as fast as the direct
    # problem at every point.
    line = geod.inv_intermediate(lon_a, lat_a, lon_b, lat_b, npts=n, initial_idx=0, terminus_idx=0,
                                 return_back_azimuth=True)
    lons = (np.asarray(line.lons, dtype=float) + 180.0) % 360.0 - 180.0
    lats = np.asarray(line.lats, dtype=float)
    distance = np.linspace(0.0, length, n)
    return GeodesicPath(distance_m=distance, lat_deg=lats, lon_deg=lons, length_m=float(length),
                        azimuth_a_to_b_deg=float(az_ab) % 360.0,
                        azimuth_b_to_a_deg=float(az_back) % 360.0)


ANCHOR_M = 250.0
"""Spacing of the exact geodesic anchors between which samples are interpolated [m]."""

POLAR_LAT_DEG = 80.0
"""Links reaching beyond this latitude take the direct geodesic problem at every sample."""

MAX_ANCHORED_M = 1_000_000.0
"""Links longer than this (they may pass near a pole) take the direct problem at every sample [m]."""


def geodesic_anchors(geod, lat_a, lon_a, az_ab, length, ok):
    """Exact points of the direct geodesic problem every :data:`ANCHOR_M` along each link.

    With :func:`geodesic_positions`, the geodesic sampling of many links at
    once that the link engine's :func:`profiler.terrain.sampling.sample_links`
    uses; :func:`geodesic_path` is the exact form for one path.

    Parameters
    ----------
    geod : pyproj.Geod
        The WGS84 ellipsoid.
    lat_a, lon_a : numpy.ndarray
        Start of each link [deg].
    az_ab : numpy.ndarray
        Forward azimuth at the start [deg from true north].
    length : numpy.ndarray
        Geodesic length of each link [m].
    ok : numpy.ndarray of bool
        Links to sample (others get no anchors).

    Returns
    -------
    dict
        ``lon`` (unwrapped) and ``lat`` of the anchors [deg], per link
        ``start`` (index of its first anchor), ``count`` [count] and
        ``spacing`` [m], ``rows`` (link of each anchor) and ``polar`` (flag:
        the link takes the direct problem at every sample).

    References
    ----------
    .. [1] C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87,
       43-55 (2013): the direct geodesic problem (pyproj ``Geod.fwd``).
    """
    n_anchor = np.where(ok, np.ceil(np.nan_to_num(length) / ANCHOR_M).astype(np.int64) + 1, 0)
    a_rows = np.repeat(np.arange(lat_a.size), n_anchor)
    a_start = np.concatenate([[0], np.cumsum(n_anchor)[:-1]])
    a_cols = np.arange(a_rows.size) - np.repeat(a_start, n_anchor)
    spacing = np.where(n_anchor > 1, np.nan_to_num(length) / np.maximum(n_anchor - 1, 1), 1.0)
    a_lon, a_lat, _ = geod.fwd(lon_a[a_rows], lat_a[a_rows], az_ab[a_rows], a_cols * spacing[a_rows])
    a_lon, a_lat = np.asarray(a_lon, dtype=float), np.asarray(a_lat, dtype=float)
    step = np.diff(a_lon, prepend=a_lon[:1])
    step = np.where(a_cols == 0, 0.0, (step + 180.0) % 360.0 - 180.0)
    unwrapped = a_lon[a_start[a_rows]] + _segment_cumsum(step, a_start, n_anchor, a_rows) if a_rows.size else a_lon
    reach = np.zeros(lat_a.size)
    has = n_anchor > 0
    if has.any():
        reach[has] = np.maximum.reduceat(np.abs(a_lat), a_start[has])
    polar = ok & ((reach > POLAR_LAT_DEG) | (length > MAX_ANCHORED_M))
    return {"lon": unwrapped, "lat": a_lat, "start": a_start, "count": n_anchor, "spacing": spacing,
            "rows": a_rows, "polar": polar}


def geodesic_positions(geod, lat_a, lon_a, az_ab, anchors, rows, dist):
    """Sample coordinates: linear in (latitude, unwrapped longitude) between exact anchors 250 m apart.

    Parameters
    ----------
    geod : pyproj.Geod
        The WGS84 ellipsoid.
    lat_a, lon_a, az_ab : numpy.ndarray
        Start [deg] and forward azimuth [deg] of each link.
    anchors : dict
        :func:`geodesic_anchors` of the same links.
    rows : numpy.ndarray of int
        Link index of each sample.
    dist : numpy.ndarray
        Distance of each sample from the start of its link [m].

    Returns
    -------
    lon_deg, lat_deg : numpy.ndarray
        Sample longitudes (-180 to 180) and latitudes [deg].

    Notes
    -----
    Between anchors the geodesic departs from that straight line by less
    than L^2 kappa / 8, about 1 mm at mid latitudes (kappa ~ tan(lat) / R),
    far below any elevation pixel.  Links reaching beyond 80 degrees of
    latitude, or longer than 1,000 km, take the direct problem at every sample.

    References
    ----------
    .. [1] C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87,
       43-55 (2013): the direct geodesic problem (pyproj ``Geod.fwd``).
    """
    a_lon, a_lat, a_start, n_anchor = anchors["lon"], anchors["lat"], anchors["start"], anchors["count"]
    lon_s = np.empty(rows.size)
    lat_s = np.empty(rows.size)
    exact = anchors["polar"][rows]
    near = slice(None)   # every sample between anchors (no mask to apply), unless some link is polar
    if exact.any():
        lo, la, _ = geod.fwd(lon_a[rows[exact]], lat_a[rows[exact]], az_ab[rows[exact]], dist[exact])
        lon_s[exact], lat_s[exact] = lo, la
        near = ~exact
    r = rows[near]
    start, count = a_start.take(r), n_anchor.take(r)
    u = dist[near] / anchors["spacing"].take(r)
    i0 = np.clip(np.floor(u).astype(np.int64), 0, np.maximum(count - 2, 0))
    w = u - i0
    k0 = start + i0
    k1 = np.minimum(k0 + 1, start + count - 1)
    lon_s[near] = a_lon.take(k0) * (1.0 - w) + a_lon.take(k1) * w
    lat_s[near] = a_lat.take(k0) * (1.0 - w) + a_lat.take(k1) * w
    if lon_s.size and lon_s.min() >= -180.0 and lon_s.max() < 180.0:   # already in range (NaN: wrapped below)
        return lon_s, lat_s
    return (lon_s + 180.0) % 360.0 - 180.0, lat_s


def _segment_cumsum(values, starts, counts, rows):
    """Cumulative sum of ``values`` restarting at every segment start."""
    total = np.cumsum(values)
    first = np.minimum(starts, total.size - 1)
    before = np.where(counts > 0, total[first] - values[first], 0.0) if total.size else np.zeros(starts.size)
    return total - before[rows]
