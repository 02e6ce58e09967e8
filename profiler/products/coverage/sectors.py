"""The tasks of a coverage run: radial sectors sampled and run through the engine, and where they run.

:func:`sector_job` is one task: sample a sector's radials
(:func:`profiler.products.coverage.radials.sample_radials`), take the land
cover at every sample, run the engine on the samples some pixel takes
(:func:`profiler.products.coverage.radials.radial_fields`) and the line of
sight.  :class:`SectorJobs` runs the tasks of a run on one thread per core
of this process (each thread with its own open rasters,
:class:`PerThread`) or on Dask (``--workers``, ``--scheduler``), through
:func:`profiler.engine.cluster.run_chunks`.  :func:`sector_radials` sizes
the sectors so that one holds at most about :data:`SECTOR_SAMPLES`
samples, whatever the radius.
"""

from __future__ import annotations

import functools

import numpy as np

from ...propagation import geometry
from .radials import keep_freed_memory, line_of_sight_radials, radial_fields, sample_radials

RADIALS_PER_CHUNK = 128
"""Most radials per task (one sector): large enough that the per-link formulas work on long arrays."""
SECTOR_SAMPLES = 170_000
"""Most radial samples per task: a sector's working memory stays the same on long radials (:func:`sector_radials`)."""


def sector_radials(n_full: int) -> int:
    """Radials per sector for radials of ``n_full`` samples: :data:`RADIALS_PER_CHUNK`, fewer on long radials so
    that a sector holds at most about :data:`SECTOR_SAMPLES` samples (at least 8 radials)."""
    return int(min(RADIALS_PER_CHUNK, max(8, SECTOR_SAMPLES // max(int(n_full), 1))))
SAMPLING_RADIALS = 32
"""Radials sampled at once within a sector (the elevation blocks they read stay in the CPU's caches)."""
def sector_job(chunk, *, settings, n_radials, radius_m, step_m, node_mast_m, kernel=None, model=None,
                cover=None, land=None):
    """One task ``(gateway, radial indices, needed samples)``: sample a sector, run the engine on the needed samples.

    ``needed samples``: the rows of :func:`grid.needed_samples` for the sector's radials (None: every sample).

    Opens the elevation (and land-cover) files by path when no model is given (on a worker).  ``land``:
    ``(paths, mapping)`` of the land cover, ``cover`` the opened :class:`profiler.terrain.landcover.LandCover`.
    """
    if model is None:
        from ...terrain.elevation import ElevationModel
        from ...terrain.landcover import LandCover

        keep_freed_memory()   # a worker process of ours: tune its allocator (never a caller's process)
        with ElevationModel.open(list(settings.dem_paths)) as opened:
            if land is None:
                return sector_job(chunk, settings=settings, n_radials=n_radials, radius_m=radius_m, step_m=step_m,
                                   node_mast_m=node_mast_m, kernel=kernel, model=opened)
            with LandCover.open(land[0]) as opened_cover:
                return sector_job(chunk, settings=settings, n_radials=n_radials, radius_m=radius_m, step_m=step_m,
                                   node_mast_m=node_mast_m, kernel=kernel, model=opened, cover=opened_cover,
                                   land=land)
    if isinstance(model, PerThread):
        model, cover = model.get()
    gw, indices, need = chunk
    az = np.asarray(indices) * (360.0 / n_radials)
    p1812 = settings.radio.propagation.model == "p1812"
    parts = [sample_radials(model, gw, az[i:i + SAMPLING_RADIALS], radius_m, step_m, settings.fill_voids,
                            with_coordinates=True) for i in range(0, az.size, SAMPLING_RADIALS)]
    d, t, n, lat, lon = (np.concatenate(arrays) for arrays in zip(*parts))
    ae = float(geometry.effective_radius_m(settings.k_factor))
    coordinates = None
    if p1812 or land is not None:   # the positions the terrain was read at (the direct geodesic problem)
        coordinates = {"lat_a_deg": float(gw.lat_deg), "lon_a_deg": float(gw.lon_deg), "lat_b_deg": lat,
                       "lon_b_deg": lon}
    clutter, codes = (None, None) if land is None else radial_clutter(cover, land[1], coordinates,
                                                                      settings.radio.propagation.model)
    out = radial_fields(d, t, n, gw.mast_m, node_mast_m, settings, gw.overrides, kernel,
                        coordinates if p1812 else None, clutter, need)
    out["terrain_m"] = np.where(np.isfinite(d), t, np.nan)
    los = line_of_sight_radials(d, t, n, t[:, 0] + gw.mast_m, node_mast_m, ae)
    out["line_of_sight"] = np.where(np.isfinite(out["margin_db"]), los.astype(float), np.nan)
    if clutter is not None:
        out["clutter_class"] = np.where(codes >= 0, codes, np.nan)
        out["clutter_height_m"] = clutter["clutter_m"]
    out["n"] = n
    return {k: (v.astype(np.float32) if k != "n" else v) for k, v in out.items()}


class PerThread:
    """The elevation (and land-cover) files opened once per thread of an in-process run.

    Raster handles and the elevation block cache are not shared between
    threads; each thread of :func:`profiler.engine.cluster.run_chunks` opens
    its own on its first sector and keeps them for the run.
    """

    def __init__(self, dem_paths, land):
        import threading

        self.dem_paths, self.land = list(dem_paths), land
        self._local, self._lock, self._opened = threading.local(), threading.Lock(), []

    def get(self):
        """``(elevation model, land cover or None)`` of the calling thread."""
        from ...terrain.elevation import ElevationModel
        from ...terrain.landcover import LandCover

        opened = getattr(self._local, "opened", None)
        if opened is None:
            model = ElevationModel.open(self.dem_paths)
            opened = (model, None if self.land is None else LandCover.open(self.land[0]))
            self._local.opened = opened
            with self._lock:
                self._opened.append(opened)
        return opened

    def close(self) -> None:
        with self._lock:
            for model, cover in self._opened:
                model.close()
                if cover is not None:
                    cover.close()
            self._opened.clear()


class SectorJobs:
    """The sector task of a run and where it runs: threads of this process (one per core), or Dask.

    In-process every thread opens the files once (:class:`PerThread`); on
    Dask every task opens them by path.  :meth:`close` closes what the
    threads opened.
    """

    def __init__(self, settings, n_radials, radius_m, step_m, node_mast_m, kernel, land, workers, scheduler):
        local = workers is None and scheduler is None
        self.workers, self.scheduler = workers, scheduler
        self.threads = cores() if local else 1
        self.opened = PerThread(settings.dem_paths, land) if local else None
        self.job = functools.partial(sector_job, settings=settings, n_radials=n_radials, radius_m=radius_m,
                                     step_m=step_m, node_mast_m=node_mast_m, kernel=kernel, model=self.opened,
                                     land=land)

    def run(self, chunks, progress, bar=None) -> list:
        """Every chunk ``(gateway, radial indices, needed samples)``, results in order (``bar``: one progress bar
        over several calls, :func:`profiler.engine.cluster.progress_bar`)."""
        from ...engine.cluster import run_chunks

        return run_chunks(self.job, chunks, workers=self.workers, scheduler=self.scheduler, progress=progress,
                          desc="radials", weights=[c[1].size for c in chunks], threads=self.threads, bar=bar)

    def close(self) -> None:
        if self.opened is not None:
            self.opened.close()


def cores() -> int:
    """Cores this process may run on (the threads of an in-process run)."""
    import os

    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:   # not on Linux
        return max(1, os.cpu_count() or 1)


def radial_clutter(cover, mapping, coordinates, model: str):
    """The land cover at every radial sample (the class of the nearest pixel): the ``clutter`` of radial_fields.

    Returns ``({"clutter_m", "clutter_class"}, codes)``: R [m] (NaN none) and the class index (-1 none), and the
    land-cover codes (-1 none), each (R, N).
    """
    from ...terrain.landcover import NO_CLASS

    lat, lon = coordinates["lat_b_deg"], coordinates["lon_b_deg"]
    ok = np.isfinite(lat) & np.isfinite(lon)
    codes = np.full(lat.shape, NO_CLASS, dtype=np.int32)
    codes[ok] = cover.codes(lon[ok], lat[ok])
    samples = mapping.clutter(codes, model)
    cls = samples.class_index.astype(np.int64)
    return ({"clutter_m": np.where(cls >= 0, samples.height_m, np.nan), "clutter_class": cls},
            np.where(cls >= 0, samples.code, -1))
