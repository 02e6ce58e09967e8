"""Terrain: elevation models and their sources, mosaics, voids, datums, provenance, geodesic sampling, profiles.

The bottom of the package: nothing here imports propagation, LoRa, the
engine, a product, ``io``, ``plot`` or ``cli``.  The package keeps the public
names of the former module ``profiler.terrain`` (a facade over
:mod:`profiler.terrain.profile`, imported on first use: importing
``profiler.terrain.digests`` must not load pyproj).
"""

__all__ = ["MAX_SAMPLES", "MIN_SURVEY_SPACING_M", "TerrainProfile", "profile_from_dem", "read_profile_csv"]


def __getattr__(name):
    if name in __all__:
        from . import profile

        return getattr(profile, name)
    raise AttributeError(f"module 'profiler.terrain' has no attribute {name!r}")
