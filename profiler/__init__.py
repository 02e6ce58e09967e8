"""Terrain-aware point-to-point radio path profiler.

Planning aid only: defer to local codes, permits, RF-exposure rules and
licensed professionals.

The Python API mirrors the command line::

    from profiler import ElevationModel, profile_from_dem, analyze_link
    with ElevationModel.open(["dem_samples"]) as dem:
        prof = profile_from_dem(dem, 46.0, 7.0, 46.1, 7.1)
    result = analyze_link(prof, mast_a_m=10, mast_b_m=2, frequency_mhz=868.3125)
    result.to_dict()   # the JSON report

or in one call: :func:`profiler.link` (and :func:`profiler.mast`, :func:`profiler.network`,
:func:`profiler.coverage`, :func:`profiler.siting`, :func:`profiler.survey`: see :mod:`profiler.api`).
"""

from ._deprecated import install as _install_deprecated
from .about import CAUTION, __version__  # noqa: F401 (the package's version, read by users and the CLI)

_install_deprecated()

#: The functions of :mod:`profiler.api`, one per command (and the profile step), as ``profiler.NAME``.
API_FUNCTIONS = ("link", "mast", "network", "coverage", "siting", "survey", "load_profile")


def __getattr__(name):
    # Lazy public API so that `import profiler` (and the CLI start-up) stays fast.
    if name in API_FUNCTIONS:
        from . import api
        return getattr(api, name)
    if name in ("analyze_link", "LinkResult", "RadioSettings"):
        if name == "RadioSettings":
            from .engine.radio import RadioSettings
            return RadioSettings
        from .products import link as link_product
        return getattr(link_product, name)
    if name in ("TerrainProfile", "profile_from_dem", "read_profile_csv"):
        from .terrain import profile
        return getattr(profile, name)
    if name == "ElevationModel":
        from .terrain.elevation import ElevationModel
        return ElevationModel
    if name == "ProfilerError":
        from .errors import ProfilerError
        return ProfilerError
    raise AttributeError(f"module 'profiler' has no attribute {name!r}")


__all__ = ["CAUTION", "ElevationModel", "LinkResult", "ProfilerError", "RadioSettings", "TerrainProfile",
           "analyze_link", "coverage", "link", "load_profile", "mast", "network", "profile_from_dem",
           "read_profile_csv", "siting"]
