"""Terrain profiles of many links at once: geodesic sampling of the elevation model.

A single link (``profiler link``), a mast scan, and a network of thousands of
links all run through these functions; a single link is a batch of one.
Profiles of different lengths are held in padded arrays of shape
(links, samples): row ``l`` uses its first ``n[l]`` samples (site A first,
site B at ``n[l] - 1``); padding is NaN.

A link that cannot be computed (a site outside the elevation data, a void
without ``fill_voids``, too many samples) does not stop the batch: its
``error`` entry holds a one-line message and its numbers are NaN.

References
----------
.. [1] C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87 (2013):
   the direct and inverse problems on the WGS84 ellipsoid (pyproj.Geod),
   used for equally spaced points along each geodesic.
.. [2] ITU-R P.526-15 section 2 and eq. (2) (Earth bulge, first Fresnel
   radius); ITU-R P.452-18 eqs. (153), (156a) (elevation angles).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import ProfilerError
from ..limits import LIMITS, MAX_PROFILE_SAMPLES, check

MAX_SAMPLES = MAX_PROFILE_SAMPLES
"""Upper bound on samples of one link; a finer step is refused with a hint (see :mod:`profiler.limits`)."""

ANCHOR_M = 250.0
"""Spacing of the exact geodesic anchors between which samples are interpolated [m]."""

POLAR_LAT_DEG = 80.0
"""Links starting beyond this latitude take the direct geodesic problem at every sample."""

MAX_ANCHORED_M = 1_000_000.0
"""Links longer than this (they may pass near a pole) take the direct problem at every sample [m]."""


@dataclass(frozen=True)
class LinkSamples:
    """Terrain profiles of a batch of links (padded arrays, see the module docstring).

    Parameters
    ----------
    distance_m, lat_deg, lon_deg, terrain_m : ndarray, shape (L, N)
        Distance from A [m], sample coordinates [deg, WGS84], terrain [m AMSL].
    n : ndarray of int, shape (L,)
        Number of samples per link (3 for a link with an error, whose values are NaN).
    length_m, azimuth_a_to_b_deg, azimuth_b_to_a_deg : ndarray, shape (L,)
        Geodesic length [m] and azimuths at both ends [deg from true north].
    voids_filled : ndarray of int, shape (L,)
        Number of samples interpolated across voids.
    void_stretches_m : list of list
        Per link, ``[[from_m, to_m], ...]`` of the interpolated stretches (distance from A).
    error : list of (str or None)
        One-line message per link that could not be sampled.
    """

    distance_m: np.ndarray
    lat_deg: np.ndarray
    lon_deg: np.ndarray
    terrain_m: np.ndarray
    n: np.ndarray
    length_m: np.ndarray
    azimuth_a_to_b_deg: np.ndarray
    azimuth_b_to_a_deg: np.ndarray
    voids_filled: np.ndarray
    void_stretches_m: list
    error: list

    @property
    def ok(self) -> np.ndarray:
        """True for links without an error."""
        return np.array([e is None for e in self.error], dtype=bool)


def _point_text(distance_m, lat, lon) -> str:
    return f"{distance_m / 1000.0:.3f} km from site A ({lat:.5f}, {lon:.5f})"


def _set_error(errors, mask, make):
    """Record ``make(i)`` for every link in ``mask`` that has no error yet."""
    for i in np.flatnonzero(mask):  # only links that fail: rare, and each needs its own message
        if errors[i] is None:
            errors[i] = make(int(i))


def sample_links(model, lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg, *, step_m=None, fill_voids=False,
                 names_a=None, names_b=None) -> LinkSamples:
    """Sample the terrain along the WGS84 geodesic of every link, all links in one pass.

    Parameters
    ----------
    model : profiler.terrain.elevation.ElevationModel
        Open elevation model.
    lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg : array_like, shape (L,)
        Site coordinates [deg, WGS84].
    step_m : float, optional
        Largest sample spacing [m]; default: the finest elevation pixel
        along each link.
    fill_voids : bool
        Interpolate across voids (linearly in distance) instead of failing
        the link.
    names_a, names_b : sequence of str, optional
        Site names for the error messages.

    Returns
    -------
    LinkSamples
        Padded profiles: distances [m], coordinates [deg], terrain [m AMSL].

    Notes
    -----
    Each link gets ``n = max(ceil(length / step) + 1, 3)`` equally spaced
    samples including both ends.  Positions are the direct geodesic problem
    from A along the forward azimuth at ``length * j / (n - 1)``.

    References
    ----------
    .. [1] C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87,
       43-55 (2013): the inverse and direct geodesic problems on the
       WGS84 ellipsoid, as implemented by PROJ's ``geod``.
    """
    from pyproj import Geod

    lat_a, lon_a, lat_b, lon_b = (np.atleast_1d(np.asarray(x, dtype=float)) for x in
                                  (lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg))
    n_links = lat_a.size
    names_a = list(names_a) if names_a is not None else ["site A"] * n_links
    names_b = list(names_b) if names_b is not None else ["site B"] * n_links
    errors: list = [None] * n_links
    geod = Geod(ellps="WGS84")
    az_ab, az_back, length = (np.atleast_1d(np.asarray(v, dtype=float))
                              for v in geod.inv(lon_a, lat_a, lon_b, lat_b))
    _set_error(errors, ~(length > 0.0), lambda i: f"{names_a[i]} and {names_b[i]} are the same point; "
                                                    "give two different sites")
    for name, lat, lon in ((names_a, lat_a, lon_a), (names_b, lat_b, lon_b)):
        outside = ~model.covers(lon, lat)
        swapped = outside & (np.abs(lon) <= 90.0)    # the site read as LON,LAT lies inside: say so
        swapped[swapped] = model.covers(lat[swapped], lon[swapped])
        _set_error(errors, outside, lambda i, name=name, lat=lat, lon=lon, swapped=swapped: (
            f"{name[i]} ({lat[i]:.5f}, {lon[i]:.5f}) is outside the elevation data; coverage: "
            f"{model.bounds_text()}" + ("; lat/lon swapped? the site read the other way round lies inside"
                                        if swapped[i] else "")))
    ok = np.array([e is None for e in errors])
    anchors = _anchors(geod, lat_a, lon_a, az_ab, length, ok)
    step = _steps_m(model, anchors, ok, step_m)
    with np.errstate(divide="ignore", invalid="ignore"):
        n = np.where(ok, np.maximum(np.ceil(length / step) + 1, 3), 3)
    too_many = ok & (n > MAX_SAMPLES)
    _set_error(errors, too_many, lambda i: (
        f"the {length[i] / 1000:.3f} km path would need more than {MAX_SAMPLES} samples at {step[i]:g} m "
        f"spacing; give a coarser --step-m (at least {length[i] / (MAX_SAMPLES - 1):.3g} m)"))
    ok &= ~too_many
    n = np.where(ok, n, 3).astype(np.int64)
    n_max = int(n.max()) if n_links else 3
    rows = np.repeat(np.arange(n_links)[ok], n[ok])
    starts = np.concatenate([[0], np.cumsum(n[ok])[:-1]]) if ok.any() else np.zeros(0, dtype=np.int64)
    cols = np.arange(rows.size) - np.repeat(starts, n[ok])
    dist = length[rows] * cols / (n[rows] - 1)
    lon_s, lat_s = _positions(geod, lat_a, lon_a, az_ab, anchors, rows, dist)
    last = cols == n[rows] - 1        # the far end exactly at B, as given
    lon_s[last], lat_s[last] = lon_b[rows[last]], lat_b[rows[last]]
    shape = (n_links, n_max)
    out = {k: np.full(shape, np.nan) for k in ("distance_m", "lat_deg", "lon_deg", "terrain_m")}
    out["distance_m"][rows, cols], out["lat_deg"][rows, cols], out["lon_deg"][rows, cols] = dist, lat_s, lon_s
    covered = model.covers(lon_s, lat_s)
    leaves = np.zeros(n_links, dtype=bool)
    np.logical_or.at(leaves, rows[~covered], True)
    out_idx = np.flatnonzero(~covered)
    failing, first = np.unique(rows[out_idx], return_index=True)
    first_out = dict(zip(failing.tolist(), out_idx[first].tolist()))
    _set_error(errors, leaves, lambda i: (
        f"the path leaves the elevation data at "
        f"{_point_text(dist[first_out[i]], lat_s[first_out[i]], lon_s[first_out[i]])}; add the missing tiles "
        f"with --dem (coverage: {model.bounds_text()})"))
    terrain = np.full(rows.shape, np.nan)
    terrain[covered] = model.sample(lon_s[covered], lat_s[covered])
    out["terrain_m"][rows, cols] = terrain
    has_void = np.zeros(n_links, dtype=bool)
    np.logical_or.at(has_void, rows[~np.isfinite(terrain)], True)
    has_void &= ~leaves
    voids_filled, void_stretches = _handle_voids(out, n, has_void, fill_voids, errors)
    _check_heights(out, errors)
    bad = np.array([e is not None for e in errors], dtype=bool)
    for key in out:
        out[key][bad] = np.nan
    return LinkSamples(n=np.where(bad, 3, n), length_m=np.where(bad, np.nan, length), azimuth_a_to_b_deg=az_ab % 360.0,
                       azimuth_b_to_a_deg=az_back % 360.0, voids_filled=voids_filled, void_stretches_m=void_stretches,
                       error=errors, **out)


def _handle_voids(out, n, has_void, fill_voids, errors):
    """Fill the voids of the links in ``has_void`` in place (``fill_voids``) or set their error.

    Returns the samples filled per link and the void stretches per link ([start, end] in metres).

    References
    ----------
    Linear interpolation in distance, :func:`profiler.terrain.voids.fill_voids_along_profile`.
    """
    from .voids import fill_voids_along_profile

    voids_filled = np.zeros(len(errors), dtype=np.int64)
    void_stretches: list = [[] for _ in range(len(errors))]
    for i in np.flatnonzero(has_void):  # only links with voids: rare
        m = int(n[i])
        t = out["terrain_m"][i, :m]
        if not fill_voids:
            j = int(np.argmax(~np.isfinite(t)))
            errors[i] = errors[i] or (
                f"the elevation data has a void ({int((~np.isfinite(t)).sum())} samples) starting "
                f"{_point_text(out['distance_m'][i, j], out['lat_deg'][i, j], out['lon_deg'][i, j])}; "
                "use --fill-voids to interpolate across it or add better data")
            continue
        try:
            filled, count = fill_voids_along_profile(out["distance_m"][i, :m], t)
        except Exception as exc:  # a profile that is all void: the link fails, the batch goes on
            errors[i] = errors[i] or " ".join(str(exc).split())
            continue
        void_stretches[i] = _stretches_m(out["distance_m"][i, :m], ~np.isfinite(t))   # before t is overwritten
        out["terrain_m"][i, :m] = filled
        voids_filled[i] = count
    return voids_filled, void_stretches


def _stretches_m(distance_m, mask) -> list:
    """``[[from_m, to_m], ...]`` of the runs of True in ``mask`` along a profile."""
    padded = np.concatenate([[0], mask.astype(np.int8), [0]])
    step = np.diff(padded)
    starts, ends = np.flatnonzero(step == 1), np.flatnonzero(step == -1) - 1
    return [[float(distance_m[a]), float(distance_m[b])] for a, b in zip(starts, ends)]


def _check_heights(out, errors):
    """Fail links whose terrain leaves the range of Earth's surface (an undeclared void value such as -3.4e38)."""
    lim = LIMITS["terrain"]
    t = out["terrain_m"]
    with np.errstate(invalid="ignore"):
        wild = np.isfinite(t) & ((t < lim.low) | (t > lim.high))
    for i in np.flatnonzero(wild.any(axis=1)):  # rare: only links with impossible heights
        j = int(np.argmax(wild[i]))
        where = _point_text(out["distance_m"][i, j], out["lat_deg"][i, j], out["lon_deg"][i, j])
        try:
            check("terrain", float(t[i, j]), label=f"the elevation data's height {where}")
        except ProfilerError as exc:
            errors[i] = errors[i] or str(exc)


def _anchors(geod, lat_a, lon_a, az_ab, length, ok):
    """Exact points of the direct geodesic problem every ANCHOR_M along each link (longitudes unwrapped)."""
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


def _positions(geod, lat_a, lon_a, az_ab, anchors, rows, dist):
    """Sample coordinates: linear in (latitude, unwrapped longitude) between exact anchors 250 m apart.

    Between anchors the geodesic departs from that straight line by less
    than L^2 kappa / 8, about 1 mm at mid latitudes (kappa ~ tan(lat) / R),
    far below any elevation pixel.  Links reaching beyond 80 degrees of
    latitude, or longer than 1,000 km, take the direct problem at every sample.
    """
    a_lon, a_lat, a_start, n_anchor = anchors["lon"], anchors["lat"], anchors["start"], anchors["count"]
    lon_s = np.empty(rows.size)
    lat_s = np.empty(rows.size)
    exact = anchors["polar"][rows]
    if exact.any():
        lo, la, _ = geod.fwd(lon_a[rows[exact]], lat_a[rows[exact]], az_ab[rows[exact]], dist[exact])
        lon_s[exact], lat_s[exact] = lo, la
    near = ~exact
    r = rows[near]
    u = dist[near] / anchors["spacing"][r]
    i0 = np.clip(np.floor(u).astype(np.int64), 0, np.maximum(n_anchor[r] - 2, 0))
    w = u - i0
    k0 = a_start[r] + i0
    k1 = np.minimum(k0 + 1, a_start[r] + n_anchor[r] - 1)
    lon_s[near] = a_lon[k0] * (1.0 - w) + a_lon[k1] * w
    lat_s[near] = a_lat[k0] * (1.0 - w) + a_lat[k1] * w
    return (lon_s + 180.0) % 360.0 - 180.0, lat_s


def _segment_cumsum(values, starts, counts, rows):
    """Cumulative sum of ``values`` restarting at every segment start."""
    total = np.cumsum(values)
    before = np.where(counts > 0,
                      total[np.minimum(starts, total.size - 1)] - values[np.minimum(starts, total.size - 1)],
                      0.0) if total.size else np.zeros(starts.size)
    return total - before[rows]


def _steps_m(model, anchors, ok, step_m):
    """Sample spacing of every link [m]: the given step, or the finest elevation pixel at its anchors."""
    n_links = ok.size
    if step_m is not None:
        return np.full(n_links, float(step_m))
    step = np.full(n_links, math.inf)
    has = anchors["count"] > 0
    if has.any():
        lon = (anchors["lon"] + 180.0) % 360.0 - 180.0
        sizes = model.pixel_sizes_m(lon, anchors["lat"])
        step[has] = np.minimum.reduceat(sizes, anchors["start"][has])
    return np.where(np.isfinite(step) & (step > 0), step, math.inf)
