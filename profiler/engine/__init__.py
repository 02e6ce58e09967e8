"""The link engine every command uses: batches of links through geometry and radio, and their distribution.

:mod:`profiler.engine.geometry` (curved-Earth geometry of sampled links),
:mod:`profiler.engine.radio` (losses, budgets and LoRaWAN rules of a batch),
:mod:`profiler.engine.cluster` (chunks on a Dask cluster).  The package keeps
the public names of the former module ``profiler.engine`` (a facade; the
sampling itself is :mod:`profiler.terrain.sampling`; imported on first use).
"""

__all__ = ["ANCHOR_M", "MAX_ANCHORED_M", "MAX_SAMPLES", "POLAR_LAT_DEG", "LinkGeometry", "LinkSamples",
           "geometry_batch", "sample_links"]


def __getattr__(name):
    if name in ("LinkGeometry", "geometry_batch"):
        from . import geometry

        return getattr(geometry, name)
    if name in __all__:
        from ..terrain import sampling

        return getattr(sampling, name)
    raise AttributeError(f"module 'profiler.engine' has no attribute {name!r}")
