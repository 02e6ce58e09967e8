"""Coverage of a gateway site: margin and data rate at every pixel within a radius.

:func:`coverage` is the one Python call behind ``profiler coverage``.  Every
value comes from the link engine (:mod:`profiler.engine`, the diffraction
and budget of :func:`profiler.network_analysis.link_fields`): nothing here
re-implements the physics.

Method
------
1. Radials from the site, ``radial_count`` of them (arc spacing at the rim
   about two output pixels), each sampled at the output resolution along
   its WGS84 geodesic by :func:`profiler.engine.sample_links`.
2. Every sample ``j`` of a radial is the node end of one link whose profile
   is the first ``j + 1`` samples of the radial.  The reductions over each
   link's interior samples (worst Fresnel ratio, the maxima of the two
   Bullington passes and the smooth-Earth heights) run for all prefixes of
   all radials in the numba kernel of :mod:`profiler.prefix_kernel`, or
   without numba as the (n, n) prefix batch of a radial in row blocks
   through the numpy engine; the per-link formulas after them are the
   engine's own (:func:`profiler.diffraction_engine.diffraction_finish`,
   :func:`profiler.network_analysis.link_fields`).  Sample 1 (two samples,
   no interior point) is a three-sample straight slope, i.e. free space;
   sample 0 (the site itself) takes the value of sample 1.
3. Line of sight is the exact cumulative maximum of the curvature-corrected
   elevation-angle tangent along each radial (see :func:`line_of_sight_radials`).
4. Each output pixel takes the value of the radial sample nearest to it in
   (azimuth, distance) from the site, found with the inverse geodesic
   problem.  The sample is at most half a sample step along the radial and
   half the arc spacing (one pixel at the rim) across it from the pixel
   centre: that offset is the only difference from ``profiler link`` to the
   pixel centre.

Radial sectors (chunks of radials) are the tasks of
:func:`profiler.cluster.run_chunks`, in-process or on Dask.

References
----------
.. [1] ITU-R P.526-15 sections 2, 4.5 (Bullington, delta-Bullington) via
   :mod:`profiler.diffraction`; ITU-R P.452-18 eq. (156a) (elevation angle
   with Earth curvature, the LOS criterion).
.. [2] J. P. Snyder, "Map Projections: A Working Manual", USGS PP 1395
   (1987), ch. 25 (azimuthal equidistant projection: true distance and
   azimuth from the centre).
"""

from __future__ import annotations

import functools
import math
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from . import CAUTION, __version__, geometry
from .coverage_grid import (BANDS, COMPOSITE_BANDS, MAX_PIXELS, CoverageGrid, Gateway, composite,  # noqa: F401
                            make_grid, pixel_polar, radial_lookup, to_grid)
from .errors import ProfilerError

SCHEMA = "profiler.coverage/1"
RADIALS_PER_CHUNK = 32
"""Radials per task (one sector)."""
BLOCK_ELEMENTS = 100_000
"""Profile samples per engine call (rows x columns of one block); bounds memory per worker."""
_FIELDS = {"worst_fresnel_ratio": "worst_fresnel_ratio", "path_loss_db": "total_loss_db",
           "rx_level_dbm": "rx_level_dbm", "margin_db": "margin_db", "downlink_margin_db": "downlink_margin_db",
           "recommended_dr": "recommended_dr"}


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
    :func:`profiler.engine.geometry_batch` (clearance > 0 at every interior sample).

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
        curve = d / (2.0 * effective_radius_m)
        angle = (t - h_a) / d - curve
        node = (t + node_mast_m - h_a) / d - curve
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


def radial_fields(distance_m, terrain_m, n, mast_m, node_mast_m, settings, overrides=None, kernel=None) -> dict:
    """Engine results for a node at every sample of every radial (every prefix of a radial is one link).

    The reductions over each link's samples run in the compiled kernel of
    :mod:`profiler.prefix_kernel` (numba), or without numba (or with
    ``kernel=False``) through the numpy engine in prefix batches of row
    blocks; the per-link formulas after them are the same numpy functions
    either way (:func:`profiler.network_analysis.link_fields`).

    Parameters
    ----------
    distance_m, terrain_m : ndarray, shape (R, N)
        Radial profiles from the site [m], [m AMSL].
    n : ndarray of int, shape (R,)
        Samples per radial (0 for a radial that could not be sampled).
    mast_m, node_mast_m : float
        Site and node antenna heights above ground [m].
    settings : profiler.network_analysis.NetworkSettings
        Band, k, clearance and radio settings.
    overrides : dict, optional
        The site's radio values (``tx_power_dbm``, ``gain_dbi``, ...; NaN: the option).
    kernel : bool, optional
        Use the numba kernel; default: when numba is installed.

    Returns
    -------
    dict of ndarray, shape (R, N)
        The bands of :data:`BANDS` except ``terrain_m`` and ``line_of_sight``
        (NaN where not computed; ``recommended_dr`` NaN where none closes).
    """
    from .network_analysis import link_fields

    d, t = np.asarray(distance_m, float), np.asarray(terrain_m, float)
    n = np.asarray(n)
    out = {k: np.full(d.shape, np.nan) for k in _FIELDS}
    fast = settings.radio.diffraction_method == "none"

    def run(rr, jj, dd, tt, nn):
        h_a = t[rr, 0] + mast_m
        h_b = t[rr, jj] + node_mast_m
        res = link_fields(dd, tt, nn, h_a, h_b, settings, _overrides(overrides, rr.size))
        for band, key in _FIELDS.items():
            out[band][rr, jj] = res[key]

    if kernel is None:
        kernel = kernel_available()
    rr, jj = np.nonzero((np.arange(d.shape[1])[None, :] >= 1) & (np.arange(d.shape[1])[None, :] < n[:, None]))
    # free space, or (numpy, no diffraction) a loss that depends on the two ends only
    straight = (jj == 1) | (fast and not kernel)
    if straight.any():
        r, j = rr[straight], jj[straight]
        d_end, t0, t_end = d[r, j], t[r, 0], t[r, j]
        dd = np.stack([np.zeros_like(d_end), d_end / 2.0, d_end], axis=1)
        tt = np.stack([t0, (t0 + t_end) / 2.0, t_end], axis=1)
        run(r, j, dd, tt, np.full(r.size, 3))
    if kernel:
        _kernel_fields(out, d, t, n, mast_m, node_mast_m, settings, overrides, fast)
    elif fast:
        _fresnel_only(out, d, t, n, mast_m, node_mast_m, settings)
    else:
        for j0, j1 in _blocks(int(n.max(initial=0)), d.shape[0]):
            mask = (jj >= j0) & (jj < j1)
            if mask.any():
                r, j = rr[mask], jj[mask]
                run(r, j, d[r, :j1], t[r, :j1], j + 1)
    first = n >= 2
    for band in out:
        out[band][first, 0] = out[band][first, 1]
    out["recommended_dr"] = np.where(out["recommended_dr"] >= 0, out["recommended_dr"], np.nan)
    return out


def _fresnel_only(out, d, t, n, mast_m, node_mast_m, settings) -> None:
    """Worst Fresnel ratio by the geometry of the prefix batches (no diffraction)."""
    from .bands import wavelength_m
    from .engine import geometry_batch

    lam = float(wavelength_m(settings.frequency_mhz))
    ae = float(geometry.effective_radius_m(settings.k_factor))
    cols = np.arange(d.shape[1])[None, :]
    rr, jj = np.nonzero((cols >= 2) & (cols < n[:, None]))
    for j0, j1 in _blocks(int(n.max(initial=0)), d.shape[0]):
        mask = (jj >= j0) & (jj < j1)
        if mask.any():
            r, j = rr[mask], jj[mask]
            g = geometry_batch(d[r, :j1], t[r, :j1], j + 1, t[r, 0] + mast_m, t[r, j] + node_mast_m, lam, ae,
                               settings.clearance_ratio)
            out["worst_fresnel_ratio"][r, j] = g.worst_ratio


def _kernel_fields(out, d, t, n, mast_m, node_mast_m, settings, overrides, fast) -> None:
    """Links to samples 2 .. n - 1 of every radial: the kernel's reductions, then the numpy finish (fills ``out``)."""
    from . import prefix_kernel
    from .bands import wavelength_m
    from .diffraction_engine import diffraction_reductions, smooth_sum_terms
    from .network_analysis import link_fields

    lam = float(wavelength_m(settings.frequency_mhz))
    ae = float(geometry.effective_radius_m(settings.k_factor))
    cols = np.arange(d.shape[1])[None, :]
    rr, jj = np.nonzero((cols >= 2) & (cols < n[:, None]))
    if rr.size == 0:
        return
    site, node = t[:, 0] + mast_m, t + node_mast_m
    worst = prefix_kernel.worst_ratio_prefixes(d, t, n, site, node, lam, ae)
    h_a, h_b = site[rr], node[rr, jj]
    if fast:   # no diffraction: the budget needs the length and the worst ratio only
        _store(out, rr, jj, link_fields(None, None, None, h_a, h_b, settings, _overrides(overrides, rr.size),
                                        reduced={"length_m": d[rr, jj], "worst_ratio": worst[rr, jj]}))
        return
    d_km = d * 1e-3
    seg = np.diff(d_km, axis=1)
    v1_terms, v2_terms = smooth_sum_terms(seg, d_km[:, :-1], d_km[:, 1:], t[:, :-1], t[:, 1:])
    v1, v2 = np.cumsum(v1_terms, axis=1), np.cumsum(v2_terms, axis=1)   # eqs. (161)-(162) of every prefix

    def reduce(actual, hts, hrs):
        full_a, full_b = np.zeros(d.shape), np.zeros(d.shape)
        full_a[rr, jj], full_b[rr, jj] = hts, hrs
        red = prefix_kernel.bullington_prefixes(d_km, t, n, full_a, full_b, ae * 1e-3, actual)
        res = {k: v[rr, jj] for k, v in red.items()}
        if actual:
            res.update(v1=v1[rr, jj - 1], v2=v2[rr, jj - 1])
        return res

    reduced = diffraction_reductions(reduce, d_km[rr, jj], t[rr, 0], t[rr, jj], h_a, h_b)
    reduced.update(length_m=d[rr, jj], worst_ratio=worst[rr, jj])
    _store(out, rr, jj, link_fields(None, None, None, h_a, h_b, settings, _overrides(overrides, rr.size),
                                    reduced=reduced))


def _store(out, rr, jj, res) -> None:
    for band, key in _FIELDS.items():
        out[band][rr, jj] = res[key]


# --------------------------------------------------------------------------- radials
def sample_radials(model, gw: Gateway, azimuth_deg, radius_m: float, step_m: float, fill_voids: bool):
    """Terrain along radials from the site, each cut where it leaves the data (or meets a void).

    Returns ``(distance_m, terrain_m, n)`` with arrays (R, N) padded with NaN
    and ``n`` the samples kept per radial (0: none); samples are equally
    spaced by ``radius_m / (N - 1)``, at most ``step_m``.
    """
    from pyproj import Geod

    from .engine import sample_links

    geod = Geod(ellps="WGS84")
    az = np.asarray(azimuth_deg, dtype=float)
    size = az.size
    lat0, lon0 = np.full(size, gw.lat_deg), np.full(size, gw.lon_deg)
    n_full = max(math.ceil(radius_m / step_m) + 1, 3)
    spacing = radius_m / (n_full - 1)
    lon_e, lat_e, _ = geod.fwd(lon0, lat0, az, np.full(size, radius_m))
    s = sample_links(model, lat0, lon0, lat_e, lon_e, step_m=spacing * (1 + 1e-9), fill_voids=fill_voids)
    d = np.full((size, n_full), np.nan)
    t = np.full((size, n_full), np.nan)
    n = np.zeros(size, dtype=np.int64)
    ok = s.ok & (s.n == n_full)
    if ok.any():
        d[ok], t[ok], n[ok] = s.distance_m[ok, :n_full], s.terrain_m[ok, :n_full], n_full
    bad = np.flatnonzero(~ok)
    if bad.size:
        steps = np.arange(n_full) * spacing
        lo, la, _ = geod.fwd(np.repeat(lon0[bad], n_full), np.repeat(lat0[bad], n_full), np.repeat(az[bad], n_full),
                             np.tile(steps, bad.size))
        lo, la = np.asarray(lo).reshape(bad.size, n_full), np.asarray(la).reshape(bad.size, n_full)
        good = model.covers(lo, la)
        if not fill_voids:
            z = np.full(lo.shape, np.nan)
            z[good] = model.sample(lo[good], la[good])
            good &= np.isfinite(z)
        keep = np.where(good.all(axis=1), n_full, np.argmin(good, axis=1))
        short = keep >= 3
        if short.any():
            b, k = bad[short], keep[short]
            lon_k, lat_k, _ = geod.fwd(lon0[b], lat0[b], az[b], (k - 1) * spacing)
            s2 = sample_links(model, lat0[b], lon0[b], lat_k, lon_k, step_m=spacing * (1 + 1e-9),
                              fill_voids=fill_voids)
            fine = s2.ok & (s2.n == k)
            for i in np.flatnonzero(fine):  # one copy per cut radial (rows of different length)
                m = int(k[i])
                d[b[i], :m], t[b[i], :m], n[b[i]] = s2.distance_m[i, :m], s2.terrain_m[i, :m], m
    return d, t, n


def keep_freed_memory() -> bool:
    """Ask glibc's allocator to keep freed memory for reuse (process-wide; no-op elsewhere).

    The prefix batches allocate and free many temporaries of a few MB; by
    default glibc returns them to the kernel (``munmap``, heap trim) and every
    new array faults its pages in again, which cost more system time than the
    arithmetic itself (measured: 2.9 s -> 1.2 s for a 4 km run).  Raising
    M_MMAP_THRESHOLD to 32 MiB and M_TRIM_THRESHOLD to 1 GiB (mallopt(3))
    keeps them in the heap.  It matters for the numpy path (no numba); the
    kernel allocates per sector only.  Returns True when applied.
    """
    import ctypes
    import ctypes.util
    import sys

    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        m_trim_threshold, m_mmap_threshold = -1, -3
        return bool(libc.mallopt(m_mmap_threshold, 32 * 1024 * 1024)) and \
            bool(libc.mallopt(m_trim_threshold, 1024 * 1024 * 1024))
    except (OSError, AttributeError):   # not glibc
        return False


def _sector_job(chunk, *, settings, n_radials, radius_m, step_m, node_mast_m, kernel=None, model=None):
    """One task ``(gateway, radial indices)``: sample a sector and run the engine on every sample.

    Opens the elevation files by path when no model is given (on a worker).
    """
    if model is None:
        from .dem import ElevationModel

        keep_freed_memory()   # a worker process of ours: tune its allocator (never a caller's process)
        with ElevationModel.open(list(settings.dem_paths)) as opened:
            return _sector_job(chunk, settings=settings, n_radials=n_radials, radius_m=radius_m, step_m=step_m,
                               node_mast_m=node_mast_m, kernel=kernel, model=opened)
    gw, indices = chunk
    az = np.asarray(indices) * (360.0 / n_radials)
    d, t, n = sample_radials(model, gw, az, radius_m, step_m, settings.fill_voids)
    ae = float(geometry.effective_radius_m(settings.k_factor))
    out = radial_fields(d, t, n, gw.mast_m, node_mast_m, settings, gw.overrides, kernel)
    out["terrain_m"] = np.where(np.isfinite(d), t, np.nan)
    los = line_of_sight_radials(d, t, n, t[:, 0] + gw.mast_m, node_mast_m, ae)
    out["line_of_sight"] = np.where(np.isfinite(out["margin_db"]), los.astype(float), np.nan)
    out["n"] = n
    return {k: (v.astype(np.float32) if k != "n" else v) for k, v in out.items()}


# --------------------------------------------------------------------------- the run
@dataclass(frozen=True)
class CoverageResult:
    """Bands on the grid (float32, NaN = nodata) and the ``profiler.coverage/1`` summary."""

    bands: dict
    grid: CoverageGrid
    report: dict

    def to_dict(self) -> dict:
        return self.report


def _area_summary(bands, resolution_m, fade_margin_db, dr_values) -> dict:
    """Area computed, and area and share covered per recommended DR and in total [km^2]."""
    px_km2 = resolution_m * resolution_m * 1e-6
    margin = bands["margin_db"]
    computed = int(np.isfinite(margin).sum())
    dr = bands["recommended_dr"]
    closes = np.isfinite(margin) & (margin >= fade_margin_db)

    def entry(count):
        return {"pixels": int(count), "area_km2": round(float(count) * px_km2, 4),
                "share": round(float(count) / computed, 6) if computed else None}

    per_dr = [{"dr": int(v), **entry(np.sum(dr == v))} for v in dr_values]
    los = bands["line_of_sight"]
    return {"pixels_computed": computed, "area_computed_km2": round(computed * px_km2, 4),
            "covered": entry(int(closes.sum())), "covered_by_dr": per_dr,
            "line_of_sight": entry(int(np.sum(los == 1.0)))}


def _gateways(site, mast_m, name, sites):
    """The gateways of the run: ``--site``/``--mast-m`` or the gateway rows of a site list."""
    from .sites import read_sites_csv

    if sites is not None:
        if site is not None or mast_m is not None:
            raise ProfilerError("give either --sites or --site/--mast-m, not both")
        table = sites if hasattr(sites, "names") else read_sites_csv(sites)
        rows = table.gateway_indices()
        if rows.size == 0:
            raise ProfilerError(f"{table.source} has no gateway rows; mark the gateway sites with role gateway")
        from .network_analysis import _site_overrides

        over = _site_overrides(table, rows)
        return [Gateway(name=table.names[i], lat_deg=float(table.lat_deg[i]), lon_deg=float(table.lon_deg[i]),
                        mast_m=float(table.mast_m[i]),
                        overrides={k: float(v[m]) for k, v in over.items() if np.isfinite(v[m])})
                for m, i in enumerate(rows)]
    if site is None or mast_m is None:
        raise ProfilerError("give the site with --site LAT,LON and --mast-m M (or a site list with --sites)")
    lat, lon = (float(v) for v in site)
    if not (-90 <= lat <= 90 and -180 <= lon <= 180):
        raise ProfilerError(f"--site {lat:g},{lon:g} is not a WGS84 LAT,LON")
    if not (math.isfinite(float(mast_m)) and 0.0 <= float(mast_m) <= 1000.0):
        raise ProfilerError(f"--mast-m {mast_m} must be 0 to 1000 m")
    return [Gateway(name=str(name), lat_deg=lat, lon_deg=lon, mast_m=float(mast_m))]


def _check_numbers(radius_km, resolution_m, node_mast_m):
    for label, value, low, high in (("--radius-km", radius_km, 0.0, 200.0), ("--node-mast-m", node_mast_m, 0.0, 1000.0)):
        if not (isinstance(value, (int, float)) and math.isfinite(value) and low <= value <= high) or \
                (label == "--radius-km" and value <= 0):
            raise ProfilerError(f"{label} {value} is out of range; give a number from {low:g} to {high:g}")
    if resolution_m is not None and not (math.isfinite(resolution_m) and resolution_m > 0):
        raise ProfilerError(f"--resolution-m {resolution_m} must be a positive number of metres")


def coverage(site=None, *, dem, mast_m=None, name="site", sites=None, radius_km: float, resolution_m=None,
             node_mast_m: float = 1.5, band=None, frequency_mhz=None, k_factor="4/3", clearance_ratio: float = 0.6,
             fill_voids: bool = False, radio=None, workers=None, scheduler=None, progress=None,
             out=None, plot=None, kmz=None, json=None, paper="a4", dpi=200, kernel=None) -> CoverageResult:
    """Coverage of one site (or the composite of a site list's gateways) within a radius.

    Parameters
    ----------
    site : (lat_deg, lon_deg), optional
        The gateway (WGS84); with ``mast_m`` [m above ground] and ``name``.
    dem : str, Path or list of them
        Elevation files or folders.
    sites : SiteTable, str or Path, optional
        A site list whose gateway rows (each with its mast and overrides) replace ``site``.
    radius_km : float
        Radius around each gateway [km].
    resolution_m : float, optional
        Output pixel size [m]; default the elevation pixel at the (first) site.
    node_mast_m : float
        Node antenna height above ground at every pixel [m].
    band, frequency_mhz, k_factor, clearance_ratio, fill_voids, radio
        As for :func:`profiler.link` (the gateway is end A).
    workers, scheduler, progress
        As for :func:`profiler.network`; radial sectors are the tasks.
    out, plot, kmz, json : str or Path, optional
        Files to write (GeoTIFF, map sheet, KMZ, JSON summary), all or nothing.
    kernel : bool, optional
        Reductions over the samples in the numba kernel (default: when numba
        is installed) or, with False, in the numpy prefix batches; the results
        agree to rounding.

    Returns
    -------
    CoverageResult
    """
    from .coverage_io import coverage_outputs
    from .dem import ElevationModel
    from .outputs import check_outputs, write_outputs

    outputs = coverage_outputs(out, plot, kmz, json, paper=paper, dpi=dpi, dem_paths=dem)
    check_outputs(outputs)
    _check_numbers(radius_km, resolution_m, node_mast_m)
    gateways = _gateways(site, mast_m, name, sites)
    settings = _settings(dem, band, frequency_mhz, k_factor, clearance_ratio, fill_voids, radio)
    radius_m = float(radius_km) * 1000.0
    with ElevationModel.open(list(settings.dem_paths)) as model:
        lon_g = np.array([g.lon_deg for g in gateways])
        lat_g = np.array([g.lat_deg for g in gateways])
        outside = ~np.asarray(model.covers(lon_g, lat_g))
        if outside.any():
            g = gateways[int(np.argmax(outside))]
            raise ProfilerError(f"{g.name} ({g.lat_deg:.5f}, {g.lon_deg:.5f}) is outside the elevation data; "
                                f"coverage: {model.bounds_text()}")
        res = float(resolution_m) if resolution_m is not None else float(model.pixel_size_m(lon_g[:1], lat_g[:1]))
        grid = make_grid(gateways, radius_m, res)
        with ThreadPoolExecutor(1) as pool:   # pyproj releases the GIL: the pixel positions overlap the sweep
            positions = pool.submit(grid.lon_lat)
            per_gateway, inside_any, sweep = _sweep(model, settings, gateways, grid, radius_m, res,
                                                    float(node_mast_m), workers, scheduler, progress, kernel)
            lon, lat = positions.result()
        outside_data = ~np.asarray(model.covers(lon, lat))
        sources = [{"path": s.path, "sha256": s.sha256, "crs": s.crs, "resolution": list(s.resolution)}
                   for s in model.sources_used(lon_g, lat_g)]
    bands = per_gateway[0] if sites is None else composite(per_gateway, settings.radio.fade_margin_db)
    for values in bands.values():   # a pixel centre off the data is nodata, whatever its nearest radial sample
        values[outside_data] = np.nan
    if not np.isfinite(bands["margin_db"]).any():
        raise ProfilerError("no pixel could be computed: the radius lies outside the elevation data or in a void; "
                            "check --dem, --site and --fill-voids")
    settings_record = {"radius_km": float(radius_km), "resolution_m": res, "node_mast_m": float(node_mast_m),
                       "band": settings.band, "frequency_mhz": settings.frequency_mhz, "k_factor": settings.k_factor,
                       "clearance_ratio": settings.clearance_ratio, "fade_margin_db": settings.radio.fade_margin_db,
                       "diffraction": settings.radio.diffraction_method, "fill_voids": settings.fill_voids, **sweep}
    report = _report(gateways, sites is not None, settings_record, grid, bands, inside_any, sources)
    result = CoverageResult(bands=bands, grid=grid, report=report)
    if outputs:
        write_outputs(coverage_outputs(out, plot, kmz, json, paper=paper, dpi=dpi, dem_paths=dem, result=result),
                      report)
    return result


def _settings(dem, band, frequency_mhz, k_factor, clearance_ratio, fill_voids, radio):
    """Validated engine settings (a picklable NetworkSettings) of a coverage run."""
    from .bands import resolve_frequency_mhz
    from .network_analysis import NetworkSettings
    from .radio import RadioSettings

    radio = (radio or RadioSettings()).validate()
    if radio.gateway != "a":
        raise ProfilerError("in a coverage map the site is the gateway (end A); drop --gateway b")
    f_mhz, band_name = resolve_frequency_mhz(frequency_mhz, band)
    dem_paths = tuple(str(p) for p in (dem if isinstance(dem, (list, tuple)) else [dem]))
    if not dem_paths:
        raise ProfilerError("no elevation data: give --dem FILE_OR_FOLDER")
    return NetworkSettings(dem_paths=dem_paths, frequency_mhz=f_mhz, band=band_name,
                           k_factor=geometry.parse_k_factor(k_factor), clearance_ratio=float(clearance_ratio),
                           step_m=None, fill_voids=bool(fill_voids), radio=radio)


def _sweep(model, settings, gateways, grid, radius_m, res, node_mast_m, workers, scheduler, progress, kernel=None):
    """Every gateway's radial sectors through the engine (the tasks), then onto the grid."""
    from .cluster import chunked, run_chunks

    n_radials = radial_count(radius_m, res)
    step_m = radial_step_m(res, settings.radio.diffraction_method)
    n_full = max(math.ceil(radius_m / step_m) + 1, 3)
    spacing = radius_m / (n_full - 1)
    sectors = chunked(n_radials, RADIALS_PER_CHUNK)
    chunks = [(g, np.arange(n_radials)[sl]) for g in gateways for sl in sectors]
    local = workers is None and scheduler is None
    job = functools.partial(_sector_job, settings=settings, n_radials=n_radials, radius_m=radius_m, step_m=step_m,
                            node_mast_m=node_mast_m, kernel=kernel, model=model if local else None)
    parts = run_chunks(job, chunks, workers=workers, scheduler=scheduler, progress=progress, desc="radials",
                       weights=[c[1].size for c in chunks])
    per_gateway = []
    inside_any = np.zeros((grid.height, grid.width), dtype=bool)
    for i, g in enumerate(gateways):
        lookup = radial_lookup(*pixel_polar(grid, g), n_radials, spacing, radius_m)
        inside_any |= lookup[2]
        per_gateway.append(to_grid(parts[i * len(sectors):(i + 1) * len(sectors)], lookup, n_radials, n_full))
    return per_gateway, inside_any, {"radials": n_radials, "radial_step_m": spacing}


def _report(gateways, composite_run, settings_record, grid, bands, inside_any, sources) -> dict:
    """The ``profiler.coverage/1`` summary."""
    from .regional import plan as regional_plan

    band_name = settings_record["band"]
    plan = regional_plan(band_name) if band_name is not None else None
    warnings = []
    missing = int(np.sum(inside_any & ~np.isfinite(bands["margin_db"])))
    if missing:
        warnings.append(f"{missing / max(int(inside_any.sum()), 1):.1%} of the area within the radius has no value: "
                        "outside the elevation data, or behind it or a void along the radial")
    return {"schema": SCHEMA, "tool_version": __version__,
            "site": None if composite_run else _gateway_record(gateways[0]),
            "gateways": [_gateway_record(g) for g in gateways] if composite_run else None,
            "settings": settings_record, "grid": grid.to_dict(), "bands": list(bands),
            "summary": _area_summary(bands, settings_record["resolution_m"], settings_record["fade_margin_db"],
                                     sorted(plan.data_rates) if plan is not None else []),
            "dem": {"sources": sources}, "warnings": warnings, "caution": CAUTION}


def _gateway_record(g: Gateway) -> dict:
    return {"name": g.name, "lat_deg": g.lat_deg, "lon_deg": g.lon_deg, "mast_m": g.mast_m}
