"""Radials of a coverage run: their count and step, terrain along them, and the engine at every sample.

The pieces of :func:`profiler.products.coverage.map.coverage` that work on radial
profiles (arrays of shape (radials, samples)): :func:`radial_count` and
:func:`radial_step_m` choose the radials, :func:`sample_radials` samples the
terrain along them with the link engine, :func:`line_of_sight_radials` is the
exact cumulative-maximum line of sight, and :func:`radial_fields` gives the
engine's results for a node at every sample (the numba kernels of
:mod:`profiler.propagation.prefix_kernel` and, with ``--model p1812``,
:mod:`profiler.propagation.p1812.prefix` for the reductions over every
prefix, or the numpy prefix batches).  No physics of its own: every number
comes from :mod:`profiler.engine`, :mod:`profiler.propagation.diffraction_batch`,
:mod:`profiler.propagation.p1812` and :func:`profiler.engine.links.link_fields`.

References
----------
.. [1] ITU-R P.452-18 eq. (156a) (elevation angle with Earth curvature, the
   line-of-sight criterion); ITU-R P.526-15 sections 2 and 4.5 via
   :mod:`profiler.propagation.diffraction`.
"""

from __future__ import annotations

import math

import numpy as np

from ...propagation import geometry
from .grid import Gateway

BLOCK_ELEMENTS = 100_000
"""Profile samples per engine call (rows x columns of one block); bounds memory per worker."""
_FIELDS = {"worst_fresnel_ratio": "worst_fresnel_ratio", "path_loss_db": "total_loss_db",
           "rx_level_dbm": "rx_level_dbm", "margin_db": "margin_db", "downlink_margin_db": "downlink_margin_db",
           "recommended_dr": "recommended_dr"}
_EXTRA = ("location_sigma_db", "probability_heard", "building_entry_loss_db")
"""Per-link values beside :data:`_FIELDS`: σL and the probability (:func:`profiler.engine.links.probability_heard`,
with the node's antenna height) and the node's building entry loss (a band with ``--indoor-b`` only)."""


def radial_count(radius_m: float, resolution_m: float) -> int:
    """Radials so that their arc spacing at the rim is about two pixels (a multiple of 8, at least 64)."""
    n = math.ceil(2.0 * math.pi * radius_m / (2.0 * resolution_m))
    return int(max(64, 8 * math.ceil(n / 8)))


def radial_step_m(resolution_m: float, diffraction_method: str) -> float:
    """Largest sample step along the radials [m]: half the resolution with a diffraction model, else the resolution.

    A pixel takes the values of the radial sample nearest its centre.  Free
    space and the Fresnel ratio change slowly with the node's place, but a
    diffraction loss changes by up to a few dB over one pixel where the node
    is close behind an edge; half-pixel steps halve that offset along the
    radial (measured on the sample terrain at its 1" pixel, path loss at
    the pixel centre within 0.5 dB of ``profiler link``: 95 % of pixels at
    one-pixel steps, 99 % at half-pixel steps), at four times the
    O(N^2) work per radial.
    """
    return float(resolution_m) if diffraction_method == "none" else 0.5 * float(resolution_m)


def line_of_sight_radials(distance_m, terrain_m, n, site_amsl_m, node_mast_m, effective_radius_m) -> np.ndarray:
    """Line of sight from the site to a node at every sample of every radial (exact, O(N) per radial).

    The path to sample j is clear when every interior sample i (0 < i < j)
    is below the straight ray over the curved Earth:
    ``(t_i - h_a) / d_i - d_i / (2 a_e) < (h_j - h_a) / d_j - d_j / (2 a_e)``,
    i.e. the cumulative maximum of the curvature-corrected elevation-angle
    tangent stays below that of the node [1]_; the same criterion as
    :func:`profiler.engine.geometry.geometry_batch` (clearance > 0 at every interior sample).

    Parameters
    ----------
    distance_m, terrain_m : ndarray, shape (R, N)
        Radial profiles [m], [m AMSL] (NaN padded beyond ``n``).
    n : ndarray of int, shape (R,)
        Samples per radial.
    site_amsl_m : ndarray, shape (R,)
        Site antenna height [m AMSL].
    node_mast_m : float
        Node antenna height above ground [m].
    effective_radius_m : float
        Effective Earth radius [m].

    Returns
    -------
    ndarray of bool, shape (R, N)
        True where clear (samples 0 and 1 always; False beyond ``n``).

    References
    ----------
    .. [1] ITU-R P.452-18 eq. (156a); ITU-R P.526-15 section 2.
    """
    d = np.asarray(distance_m, dtype=float)
    t = np.asarray(terrain_m, dtype=float)
    h_a = np.asarray(site_amsl_m, dtype=float)[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        angle = geometry.elevation_tangent(h_a, t, d, effective_radius_m)
        node = geometry.elevation_tangent(h_a, t + node_mast_m, d, effective_radius_m)
    angle[:, 0] = -np.inf
    angle = np.where(np.isfinite(angle), angle, -np.inf)
    horizon = np.maximum.accumulate(angle, axis=1)
    clear = np.ones(d.shape, dtype=bool)
    clear[:, 2:] = node[:, 2:] > horizon[:, 1:-1]
    clear &= np.arange(d.shape[1])[None, :] < np.asarray(n)[:, None]
    return clear


def _blocks(n_max: int, n_radials: int):
    """Endpoint index blocks [j0, j1) from 2 to n_max, each about BLOCK_ELEMENTS profile samples."""
    j0 = 2
    while j0 < n_max:
        rows = max(4, BLOCK_ELEMENTS // (n_radials * max(j0 + 16, 64)))
        j1 = min(n_max, j0 + rows)
        yield j0, j1
        j0 = j1


def _overrides(values: dict | None, size: int):
    if not values:
        return None
    return {"gateway": {k: np.full(size, float(v)) for k, v in values.items()}}


def kernel_available() -> bool:
    """True when numba is installed (a dependency; absent only where it cannot be installed): the compiled kernel."""
    try:
        import numba  # noqa: F401 - about to be used by the kernel; a broken install falls back to numpy
    except ImportError:
        return False
    return True


def radial_fields(distance_m, terrain_m, n, mast_m, node_mast_m, settings, overrides=None, kernel=None,
                  coordinates=None, clutter=None, need=None) -> dict:
    """Engine results for a node at every sample of every radial (every prefix of a radial is one link).

    The reductions over each link's samples run in the compiled kernel of
    :mod:`profiler.propagation.prefix_kernel` (numba), or without numba (or with
    ``kernel=False``) through the numpy engine in prefix batches of row
    blocks; the per-link formulas after them are the same numpy functions
    either way (:func:`profiler.engine.links.link_fields`).  The kernel
    also takes a land cover under ``--model p1812`` (R on the interior
    points of each prefix); a terminal option or sites cell in clutter, or a
    land cover under ``--model terrain`` (the P.2108-1 section 3.1 correction
    raises the antenna per pixel), runs the numpy prefix batches.

    Parameters
    ----------
    distance_m, terrain_m : ndarray, shape (R, N)
        Radial profiles from the site [m], [m AMSL].
    n : ndarray of int, shape (R,)
        Samples per radial (0 for a radial that could not be sampled).
    mast_m, node_mast_m : float
        Site and node antenna heights above ground [m].
    settings : profiler.engine.links.NetworkSettings
        Band, k, clearance and radio settings.
    overrides : dict, optional
        The site's radio values (``tx_power_dbm``, ``gain_dbi``, ...; NaN: the option).
    kernel : bool, optional
        Use the numba kernel; default: when numba is installed (both
        models: :mod:`profiler.propagation.prefix_kernel` and, for
        ``--model p1812``, :mod:`profiler.propagation.p1812.prefix`).
    coordinates : dict, optional
        ``lat_a_deg``, ``lon_a_deg`` (the site, floats) and ``lat_b_deg``,
        ``lon_b_deg`` (every sample, (R, N)) [deg]: needed by ``--model p1812``.
    clutter : dict, optional
        A land cover at every sample: ``clutter_m`` (R, N) [m, NaN none] and
        ``clutter_class`` (R, N) [index into the clutter classes, -1 none].
    need : ndarray of bool, shape (R, N), optional
        The samples to compute (:func:`profiler.products.coverage.grid.needed_samples`:
        those some pixel takes; default every one).  Every link's reductions
        are exact whichever links are computed.

    Returns
    -------
    dict of ndarray, shape (R, N)
        The bands of :data:`BANDS` except ``terrain_m`` and ``line_of_sight``
        (NaN where not computed or not needed; ``recommended_dr`` NaN where none closes),
        plus ``building_entry_loss_db`` with an indoor node.
    """
    from ...engine.links import link_fields
    from ...engine.terminals import any_terminal

    d, t = np.asarray(distance_m, float), np.asarray(terrain_m, float)
    n = np.asarray(n)
    out = {k: np.full(d.shape, np.nan) for k in (*_FIELDS, *_EXTRA)}
    p1812 = settings.radio.propagation.model == "p1812"
    fast = settings.radio.diffraction_method == "none" and not p1812

    def run(rr, jj, dd, tt, nn, cc=None):
        h_a = t[rr, 0] + mast_m
        h_b = t[rr, jj] + node_mast_m
        _store(out, rr * d.shape[1] + jj, link_fields(dd, tt, nn, h_a, h_b, settings, _overrides(overrides, rr.size),
                                                      paths=_paths(coordinates, rr, jj, cc),
                                                      node_height_m=np.full(rr.size, float(node_mast_m))))

    if kernel is None:
        kernel = kernel_available()
    kernel = kernel and not any_terminal(settings.radio, overrides=_overrides(overrides, 1))
    kernel = kernel and (clutter is None or p1812)
    cols = np.arange(d.shape[1])[None, :]
    wanted = (cols < n[:, None]) if need is None else (cols < n[:, None]) & np.asarray(need, dtype=bool)
    rr, jj = np.nonzero(wanted & (cols >= 1))
    # free space, or (numpy, no diffraction) a loss that depends on the two ends only
    straight = (jj == 1) | (fast and not kernel)
    if straight.any():
        r, j = rr[straight], jj[straight]
        d_end, t0, t_end = d[r, j], t[r, 0], t[r, j]
        dd = np.stack([np.zeros_like(d_end), d_end / 2.0, d_end], axis=1)
        tt = np.stack([t0, (t0 + t_end) / 2.0, t_end], axis=1)
        run(r, j, dd, tt, np.full(r.size, 3), _straight_clutter(clutter, r, j))
    if kernel:
        _kernel_fields(out, d, t, n, mast_m, node_mast_m, settings, overrides, fast, coordinates, clutter, wanted)
    elif fast:
        _fresnel_only(out, d, t, n, mast_m, node_mast_m, settings, wanted)
    else:
        for j0, j1 in _blocks(int(n.max(initial=0)), d.shape[0]):
            mask = (jj >= j0) & (jj < j1)
            if mask.any():
                r, j = rr[mask], jj[mask]
                cc = None if clutter is None else {k: v[r, :j1] for k, v in clutter.items()}
                run(r, j, d[r, :j1], t[r, :j1], j + 1, cc)
    first = n >= 2
    for band in out:
        out[band][first, 0] = out[band][first, 1]
    out["recommended_dr"] = np.where(out["recommended_dr"] >= 0, out["recommended_dr"], np.nan)
    return _indoor_band(out, settings)


def _straight_clutter(clutter, r, j):
    """The land cover of the three-sample links to sample 1: the two ends' values, no clutter at the midpoint."""
    if clutter is None:
        return None
    c, k = clutter["clutter_m"], clutter["clutter_class"]
    return {"clutter_m": np.stack([c[r, 0], np.zeros(r.size), c[r, j]], axis=1),
            "clutter_class": np.stack([k[r, 0], np.full(r.size, -1), k[r, j]], axis=1)}


def _indoor_band(out, settings) -> dict:
    """Keep the ``building_entry_loss_db`` band only with an indoor node (``--indoor-b``)."""
    if settings.radio.propagation.indoor_b is None:
        out.pop("building_entry_loss_db")
    return out


def _fresnel_only(out, d, t, n, mast_m, node_mast_m, settings, wanted) -> None:
    """Worst Fresnel ratio by the geometry of the prefix batches (no diffraction)."""
    from ...engine.geometry import geometry_batch
    from ...propagation.free_space import wavelength_m

    lam = float(wavelength_m(settings.frequency_mhz))
    ae = float(geometry.effective_radius_m(settings.k_factor))
    cols = np.arange(d.shape[1])[None, :]
    rr, jj = np.nonzero((cols >= 2) & wanted)
    for j0, j1 in _blocks(int(n.max(initial=0)), d.shape[0]):
        mask = (jj >= j0) & (jj < j1)
        if mask.any():
            r, j = rr[mask], jj[mask]
            g = geometry_batch(d[r, :j1], t[r, :j1], j + 1, t[r, 0] + mast_m, t[r, j] + node_mast_m, lam, ae,
                               settings.clearance_ratio)
            out["worst_fresnel_ratio"][r, j] = g.worst_ratio


def _paths(coordinates, rr, jj, clutter=None):
    """The ``paths`` of :func:`profiler.engine.links.link_fields` for the links to samples ``jj`` of radials ``rr``.

    ``clutter``: the links' own (L, N') land-cover columns, when there are any.
    """
    paths = {} if clutter is None else dict(clutter)
    if coordinates is not None:
        # the site: one value for every link (its sine and cosine taken once in the path-centre latitude)
        lat, lon = (np.ascontiguousarray(coordinates[k]) for k in ("lat_b_deg", "lon_b_deg"))
        flat = np.asarray(rr) * lat.shape[1] + np.asarray(jj)   # [rr, jj] by flat index: take, not fancy indexing
        paths.update(lat_a_deg=float(coordinates["lat_a_deg"]), lon_a_deg=float(coordinates["lon_a_deg"]),
                     lat_b_deg=lat.reshape(-1).take(flat), lon_b_deg=lon.reshape(-1).take(flat))
    return paths or None


def _kernel_fields(out, d, t, n, mast_m, node_mast_m, settings, overrides, fast, coordinates=None,
                   clutter=None, wanted=None) -> None:
    """Links to samples 2 .. n - 1 (``wanted``) of every radial: the kernel's reductions, then the numpy finish.

    ``--model terrain``: the delta-Bullington reductions of
    :mod:`profiler.propagation.prefix_kernel`; ``--model p1812``: those of
    :class:`profiler.propagation.p1812.prefix.PrefixReducer` (horizons,
    roughness and both delta-Bullington passes) through
    :func:`profiler.propagation.p1812.reductions.p1812_reductions`, with the
    land cover's R (``clutter``) on the interior points of every prefix.
    """
    from ...engine.links import link_fields
    from ...propagation import prefix_kernel
    from ...propagation.diffraction_batch import diffraction_reductions
    from ...propagation.free_space import wavelength_m

    lam = float(wavelength_m(settings.frequency_mhz))
    ae = float(geometry.effective_radius_m(settings.k_factor))
    cols = np.arange(d.shape[1])[None, :]
    wanted = (cols < n[:, None]) if wanted is None else wanted
    rr, jj = np.nonzero((cols >= 2) & wanted)
    if rr.size == 0:
        return
    flat = rr * d.shape[1] + jj   # the links' flat indices into the (R, N) tables (take: faster than [rr, jj])
    site, node = t[:, 0] + mast_m, t + node_mast_m
    worst = prefix_kernel.worst_ratio_prefixes(d, t, n, site, node, lam, ae, wanted)
    h_a, h_b = site.take(rr), node.reshape(-1).take(flat)
    length, worst = d.reshape(-1).take(flat), worst.reshape(-1).take(flat)
    if fast:   # no diffraction: the budget needs the length and the worst ratio only
        _store(out, flat, link_fields(None, None, None, h_a, h_b, settings, _overrides(overrides, rr.size),
                                      reduced={"length_m": length, "worst_ratio": worst},
                                      node_height_m=np.full(rr.size, float(node_mast_m))))
        return
    d_km = d * 1e-3
    prop = settings.radio.propagation
    if prop.model == "p1812":
        from ...engine.losses import p1812_delta_n
        from ...propagation.p1812 import p1812_reductions
        from ...propagation.p1812.prefix import PrefixReducer

        reducer = PrefixReducer(d_km, t, n, rr, jj, None if clutter is None else clutter["clutter_m"])
        reduced = {"p1812": p1812_reductions(reducer, h_a - reducer.h_first_m, h_b - reducer.h_last_m,
                                             p1812_delta_n(prop, ae), prop.time_percent, informative=False)}
    else:
        reduce = prefix_kernel.prefix_reduce(d_km, t, n, rr, jj, ae * 1e-3,
                                             nu_always=settings.radio.diffraction_method == "knife-edge")
        reduced = diffraction_reductions(reduce, length * 1e-3, t[:, 0].take(rr), t.reshape(-1).take(flat), h_a,
                                         h_b)
    reduced.update(length_m=length, worst_ratio=worst)
    _store(out, flat, link_fields(None, None, None, h_a, h_b, settings, _overrides(overrides, rr.size),
                                  reduced=reduced, paths=_paths(coordinates, rr, jj),
                                  node_height_m=np.full(rr.size, float(node_mast_m))))


def _store(out, at, res) -> None:
    """One batch of links into the radial arrays: the bands, σL and the probability of being heard of
    :func:`profiler.engine.links.link_fields` (given the node's antenna height), the node's building entry loss.

    ``at``: the links' flat indices into the (R, N) arrays."""
    for band, key in _FIELDS.items():
        out[band].reshape(-1)[at] = res[key]
    out["location_sigma_db"].reshape(-1)[at] = res["location_sigma_db"]
    out["probability_heard"].reshape(-1)[at] = res["probability_heard"]
    out["building_entry_loss_db"].reshape(-1)[at] = res["loss_db"]["building_entry_b"]


# --------------------------------------------------------------------------- radials
def sample_radials(model, gw: Gateway, azimuth_deg, radius_m: float, step_m: float, fill_voids: bool,
                   with_coordinates: bool = False):
    """Terrain along radials from the site, each cut where it leaves the data (or meets a void).

    Returns ``(distance_m, terrain_m, n)`` with arrays (R, N) padded with NaN
    and ``n`` the samples kept per radial (0: fewer than 3); samples are
    equally spaced by ``radius_m / (N - 1)``, at most ``step_m``.  With
    ``with_coordinates`` also the samples' WGS84 ``(lat_deg, lon_deg)``
    (R, N) [deg] (NaN where there is no sample), the positions the terrain
    was read at.

    The positions are those of the link engine
    (:func:`profiler.terrain.geodesic.geodesic_anchors` and
    :func:`~profiler.terrain.geodesic.geodesic_positions`: exact direct
    geodesics every 250 m, linear between) and the terrain its bilinear
    read; a void (no data, or a height outside the range of the Earth's
    surface, :data:`profiler.limits.LIMITS`) cuts the radial there, or with
    ``fill_voids`` is interpolated linearly in distance
    (:func:`profiler.terrain.voids.fill_voids_along_profile`) while the
    radial is inside the data.
    """
    from pyproj import Geod

    from ...limits import LIMITS
    from ...terrain.geodesic import geodesic_anchors, geodesic_positions

    geod = Geod(ellps="WGS84")
    az = np.asarray(azimuth_deg, dtype=float)
    size = az.size
    n_full = max(math.ceil(radius_m / step_m) + 1, 3)
    spacing = radius_m / (n_full - 1)
    lat0, lon0 = np.full(size, gw.lat_deg), np.full(size, gw.lon_deg)
    anchors = geodesic_anchors(geod, lat0, lon0, az, np.full(size, float(radius_m)), np.ones(size, dtype=bool))
    steps = np.arange(n_full) * spacing
    lon, lat = geodesic_positions(geod, lat0, lon0, az, anchors, np.repeat(np.arange(size), n_full),
                                  np.tile(steps, size))
    lon, lat = lon.reshape(size, n_full), lat.reshape(size, n_full)
    t = np.asarray(model.sample(lon, lat), dtype=float).reshape(size, n_full)
    lim = LIMITS["terrain"]
    with np.errstate(invalid="ignore"):
        t = np.where((t >= lim.low) & (t <= lim.high), t, np.nan)   # an undeclared void value is a void
    n = np.full(size, n_full, dtype=np.int64)
    bad = np.flatnonzero(~np.isfinite(t).all(axis=1))
    if bad.size:
        keep = np.asarray(model.covers(lon[bad], lat[bad])) if fill_voids else np.isfinite(t[bad])
        n[bad] = np.where(keep.all(axis=1), n_full, np.argmin(keep, axis=1))
        if fill_voids:
            _fill_radial_voids(t, n, bad, steps)
    n[n < 3] = 0
    beyond = np.arange(n_full)[None, :] >= n[:, None]
    d = np.where(beyond, np.nan, np.broadcast_to(steps, (size, n_full)))
    t[beyond] = np.nan
    if not with_coordinates:
        return d, t, n
    lon, lat = np.where(beyond, np.nan, lon), np.where(beyond, np.nan, lat)
    return d, t, n, lat, lon


def _fill_radial_voids(t, n, rows, steps) -> None:
    """Fill the voids of radials ``rows`` within their ``n`` samples in place (linear in distance); a radial with
    no data before its cut keeps none (n = 0)."""
    from ...terrain.voids import fill_voids_along_profile

    for r in rows:   # only radials with a void: rare, each its own interpolation
        m = int(n[r])
        if m and np.isfinite(t[r, :m]).any():
            t[r, :m] = fill_voids_along_profile(steps[:m], t[r, :m])[0]
        else:
            n[r] = 0


def keep_freed_memory() -> bool:
    """Ask glibc's allocator to keep freed memory for reuse (process-wide; no-op elsewhere).

    The prefix batches allocate and free many temporaries of a few MB; by
    default glibc returns them to the kernel (``munmap``, heap trim) and every
    new array faults its pages in again, which cost more system time than the
    arithmetic itself (measured: 2.9 s -> 1.2 s for a 4 km run).  Raising
    M_MMAP_THRESHOLD to 32 MiB and M_TRIM_THRESHOLD to 1 GiB (mallopt(3))
    keeps them in the heap.  M_ARENA_MAX 1 keeps the sector threads in that
    one heap too: each thread's own arena is a separate heap that glibc
    trims on its own, and with one per thread the page faults of a 20 km
    P.1812 map on two threads went from 55,000 to 227,000 (1.2 s of system
    time; 2.8 s -> 2.3 s wall with one arena).  Returns True when applied.
    """
    import ctypes
    import ctypes.util
    import sys

    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        m_trim_threshold, m_mmap_threshold, m_arena_max = -1, -3, -8
        return bool(libc.mallopt(m_mmap_threshold, 32 * 1024 * 1024)) and \
            bool(libc.mallopt(m_trim_threshold, 1024 * 1024 * 1024)) and bool(libc.mallopt(m_arena_max, 1))
    except (OSError, AttributeError):   # not glibc
        return False
