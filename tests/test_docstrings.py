"""Docstrings as specification: numpydoc's own validator over the physics.

Every public function and class of the physics modules must carry a
numpydoc docstring (summary, Parameters, Returns), each numeric parameter
its unit in brackets (or a word saying it has none), and every function
that computes a physical quantity a References section naming the
published source. The check is numpydoc's ``numpydoc.validate.validate``,
not a home-made parser.
"""

from __future__ import annotations

import importlib
import inspect
import re

import numpydoc.validate as numpydoc_validate
import pytest
from numpydoc.docscrape import ClassDoc, FunctionDoc

# The physics modules, by import name: the terrain, propagation, LoRa and
# engine packages (tests/test_architecture.py keeps them below the products).
PHYSICS_MODULES = [
    "profiler.terrain.elevation",
    "profiler.terrain.sources",
    "profiler.terrain.mosaic",
    "profiler.terrain.source_info",
    "profiler.terrain.voids",
    "profiler.terrain.datum",
    "profiler.terrain.digests",
    "profiler.terrain.geodesic",
    "profiler.terrain.sampling",
    "profiler.terrain.profile",
    "profiler.terrain.magnetic",
    "profiler.terrain.landcover",
    "profiler.propagation.geometry",
    "profiler.propagation.free_space",
    "profiler.propagation.diffraction",
    "profiler.propagation.diffraction_batch",
    "profiler.propagation.spherical_earth",
    "profiler.propagation.polarization",
    "profiler.propagation.prefix_kernel",
    "profiler.propagation.p1812",
    "profiler.propagation.p1812.geometry",
    "profiler.propagation.p1812.losses",
    "profiler.propagation.p1812.location",
    "profiler.propagation.p1812.reductions",
    "profiler.propagation.p1812.prefix",
    "profiler.propagation.p2108",
    "profiler.propagation.building_entry",
    "profiler.lora.bands",
    "profiler.lora.regional",
    "profiler.lora.modem",
    "profiler.lora.lorawan",
    "profiler.lora.budget",
    "profiler.lora.rf_exposure",
    "profiler.engine.geometry",
    "profiler.engine.radio",
    "profiler.engine.losses",
    "profiler.engine.model",
    "profiler.engine.probability",
    "profiler.engine.terminals",
]

# Modules of formulas and published rules (physical quantities, regional
# limits, field models): every public function names its published source
# in a References section.
REFERENCED_MODULES = {
    "geometry", "free_space", "diffraction", "diffraction_batch", "spherical_earth",
    "polarization", "prefix_kernel", "regional", "modem", "lorawan",
    "budget", "rf_exposure", "magnetic", "datum", "p2108", "building_entry",
}
# ... and these functions of the other modules, which compute a physical
# quantity among bookkeeping neighbours (module.qualified name).
REFERENCED_FUNCTIONS = {
    "geodesic.geodesic_inverse", "geodesic.geodesic_path",
    "profile.profile_from_dem", "sampling.sample_links",
    "elevation.ElevationModel.sample", "elevation.ElevationModel.pixel_size_m",
    "elevation.ElevationModel.pixel_sizes_m", "sources.metres_per_degree",
    "sources.unit_scale_m", "sources.describe_raster",
    "losses.slant_distance_m", "radio.check_separation", "radio.diffraction_losses",
    "losses.path_loss_batch", "losses.terrain_loss_batch", "losses.p1812_loss_batch",
    "losses.node_location_sigma_db", "losses.p1812_delta_n", "radio.radio_batch", "radio.radio_results",
    "model.delta_n_from_k", "model.k_from_delta_n",
    "location.location_sigma_db", "location.height_factor", "location.inverse_normal",
    "location.location_term_db", "landcover.worldcover_mapping",
}

# Modules that transcribe ITU-R recommendations or the LoRaWAN regional
# parameters: their References must also point into the source (an equation,
# section, annex or table), not just name it.
EQUATION_MODULES = {
    "geometry", "free_space", "diffraction", "diffraction_batch", "spherical_earth",
    "prefix_kernel", "budget", "regional", "p2108", "building_entry",
}
WHERE_IN_SOURCE = re.compile(
    r"\beqs?\.|\bsection|§|\btable|\bannex|\bappendix|\bsubsection",
    re.IGNORECASE)

# numpydoc error codes that fail the build (see numpydoc.validate.ERROR_MSGS).
FORBIDDEN = {"GL08", "SS01", "SS03", "PR01", "PR02", "PR10"}

# A parameter whose type names a number must say its unit in brackets or say
# that it has none.
NUMERIC_TYPE = re.compile(r"\b(float|int|array_like|ndarray|array)\b")
UNIT_WORDS = re.compile(
    r"\[[^\]]+\]|dimensionless|\bcount\b|\bflag\b|\bindex\b|\bnumber of\b",
    re.IGNORECASE)


def _public_objects():
    """Yield (qualified name, object) for every public callable to check."""
    for mod_name in PHYSICS_MODULES:
        mod = importlib.import_module(mod_name)
        names = getattr(mod, "__all__", None)
        if names is None:
            names = [n for n in vars(mod) if not n.startswith("_")]
        for name in names:
            obj = getattr(mod, name)
            if not (inspect.isfunction(obj) or inspect.isclass(obj)):
                continue
            if getattr(obj, "__module__", None) != mod.__name__:
                continue   # imported from elsewhere; checked at home
            yield f"{mod_name}.{name}", obj
            if inspect.isclass(obj):
                for meth_name, meth in vars(obj).items():
                    if meth_name.startswith("_"):
                        continue
                    if isinstance(meth, (staticmethod, classmethod)):
                        meth = meth.__func__
                    if inspect.isfunction(meth):
                        yield f"{mod_name}.{name}.{meth_name}", meth


OBJECTS = sorted(_public_objects())


def _module(obj) -> str:
    """Last part of the defining module's name (``geometry``), wherever it lives."""
    return obj.__module__.rsplit(".", 1)[-1]


def _returns_something(func) -> bool:
    """True when the function's source has a ``return <value>``."""
    try:
        src = inspect.getsource(func)
    except (OSError, TypeError):
        return False
    if inspect.isgeneratorfunction(func):
        return True
    ann = inspect.signature(func).return_annotation
    if ann in (None, "None"):
        return False
    return re.search(r"^\s+return\s+\S", src, re.MULTILINE) is not None


def test_objects_found():
    # The list above must point at real modules with real functions.
    assert len(OBJECTS) > 100


@pytest.mark.parametrize("qualname, obj", OBJECTS, ids=[q for q, _ in OBJECTS])
def test_numpydoc_valid(qualname, obj):
    result = numpydoc_validate.validate(qualname)
    errors = [(code, msg) for code, msg in result["errors"]
              if code in FORBIDDEN]
    if inspect.isfunction(obj) and _returns_something(obj):
        errors += [(code, msg) for code, msg in result["errors"]
                   if code == "RT01"]
    assert not errors, f"{qualname}: {errors}"


def _numbers_without_unit(obj) -> list[str]:
    """Documented numeric parameters, returns and attributes that give no unit."""
    doc = ClassDoc(obj) if inspect.isclass(obj) else FunctionDoc(obj)
    missing = []
    for section in ("Parameters", "Returns", "Attributes"):
        for param in doc[section]:
            if "bool" in param.type:
                continue   # a flag
            desc = " ".join(param.desc)
            if NUMERIC_TYPE.search(param.type) and not UNIT_WORDS.search(desc):
                missing.append(f"{section}: {param.name or param.type}")
    return missing


def test_unit_check_flags_a_missing_unit():
    def with_unit(distance_m, n):
        """Sample.

        Parameters
        ----------
        distance_m : float
            Distance from A [m].
        n : int
            Number of samples.
        """

    def without_unit(distance_m, vertical):
        """Sample.

        Parameters
        ----------
        distance_m : float
            Distance from A.
        vertical : bool
            Vertical polarization.
        """

    assert _numbers_without_unit(with_unit) == []
    assert _numbers_without_unit(without_unit) == ["Parameters: distance_m"]


@pytest.mark.parametrize("qualname, obj", OBJECTS, ids=[q for q, _ in OBJECTS])
def test_numeric_parameters_carry_units(qualname, obj):
    missing = _numbers_without_unit(obj)
    assert not missing, f"{qualname}: no unit in brackets for {missing}"


REFERENCED = [(q, o) for q, o in OBJECTS if inspect.isfunction(o) and (
    _module(o) in REFERENCED_MODULES
    or f"{_module(o)}.{o.__qualname__}" in REFERENCED_FUNCTIONS)]


def test_referenced_functions_exist():
    found = {f"{_module(o)}.{o.__qualname__}" for _, o in REFERENCED}
    assert REFERENCED_FUNCTIONS <= found, REFERENCED_FUNCTIONS - found


@pytest.mark.parametrize("qualname, obj", REFERENCED, ids=[q for q, _ in REFERENCED])
def test_physics_functions_name_their_source(qualname, obj):
    refs = " ".join(FunctionDoc(obj)["References"]).strip()
    assert refs, f"{qualname}: no References section"
    if _module(obj) in EQUATION_MODULES:
        assert WHERE_IN_SOURCE.search(refs), (
            f"{qualname}: References name no equation, section or table: {refs!r}")
