"""Land cover: class codes sampled at many points, and their clutter classes and heights.

:class:`LandCover` opens rasters of land-cover class codes (``--land-cover``:
any raster GDAL reads, any CRS, files, folders and zip archives of tiles, as
``--dem``) through the same machinery as the terrain
(:class:`profiler.terrain.elevation.ElevationModel` with
:data:`~profiler.terrain.sources.LAND_COVER_ROLE`) and samples them with
:meth:`~profiler.terrain.elevation.ElevationModel.sample_nearest`: the code
of the pixel holding each point, never interpolated.  A void pixel or a point
outside every raster gives :data:`NO_CLASS`.

:class:`ClassMapping` maps each code to one of the :data:`CLUTTER_CLASSES`
and to a representative clutter height.  The built-in mapping
(:func:`worldcover_mapping`) covers the class table of ESA WorldCover; a
file given with ``--land-cover-classes FILE.toml`` (:func:`read_class_mapping`)
replaces it::

    [classes.50]
    clutter = "urban"
    height_m = 15

    [classes.80]
    clutter = "water"        # no height_m: the model's default for water

A code met in the land cover but missing from the mapping is refused with its
code and the file name.  Heights left out of the file are each model's own
defaults (:data:`DEFAULT_HEIGHTS_M`).

The clutter classes are statistical descriptions of an area, not a survey of
the buildings and trees around an antenna.

References
----------
.. [1] ESA WorldCover Product User Manual (WorldCover consortium; v2.0 for
   the 2021 v200 map, the Map class table unchanged from the 2020 v100
   map), class table of the Map layer: 10 tree cover, 20 shrubland,
   30 grassland, 40 cropland, 50 built-up, 60 bare / sparse vegetation,
   70 snow and ice, 80 permanent water bodies, 90 herbaceous wetland,
   95 mangroves, 100 moss and lichen, 0 no data (codes and names as quoted
   from the manual by the product's distribution pages; the manual's PDF
   itself was not read here).  Data sets: Zanaga, D., Van De Kerchove, R.,
   et al., ESA WorldCover 10 m 2020 v100 (2021), doi:10.5281/zenodo.5571936,
   and ESA WorldCover 10 m 2021 v200 (2022).
.. [2] Recommendation ITU-R P.1812-8 (09/2025), Annex 1 section 3.2.1
   (terrain and ground cover data: the representative clutter height R of
   each ground-cover category, added to the interior profile points).
.. [3] Recommendation ITU-R P.2108-1, Annex 1 section 3.1,
   Table 3 (nominal representative clutter heights R for the height-gain
   terminal correction).
.. [4] TOML v1.0.0, https://toml.io/en/v1.0.0 (read with the standard-library
   ``tomllib`` on Python 3.11+, ``tomli`` before).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType

import numpy as np

from profiler.errors import ProfilerError, refuse_empty_path
from profiler.terrain.elevation import ElevationModel
from profiler.terrain.sources import LAND_COVER_ROLE

__all__ = ["NO_CLASS", "CLUTTER_CLASSES", "MODELS", "DEFAULT_HEIGHTS_M", "WORLDCOVER_CLASSES",
           "MAX_CLUTTER_HEIGHT_M", "LandCover", "ClassMapping", "ClutterSamples",
           "worldcover_mapping", "read_class_mapping", "clutter_index", "default_height_m",
           "mapping_provenance", "land_cover_paths", "class_mapping_for", "BUILT_IN_SOURCE"]

NO_CLASS = -1
"""Code returned where the land cover is void or absent (no real class code is negative)."""

CLUTTER_CLASSES = ("water", "open", "suburban", "urban", "trees", "dense-urban")
"""The clutter classes, in this order (:attr:`ClutterSamples.class_index` counts from 0)."""

MODELS = ("p1812", "terrain")
"""The propagation models that have default clutter heights."""

DEFAULT_HEIGHTS_M = MappingProxyType({
    # ITU-R P.1812-8 Annex 1 section 3.2.1, default representative clutter
    # heights by ground-cover category (water/sea, open/rural, suburban,
    # urban/trees/forest, dense urban).  From memory, not read in the
    # published text: the SG3 validation profiles of P.1812-8 carry 0, 0, 10
    # and 15 m for the first four categories (agreeing); dense urban 20 m is
    # unverified.
    "p1812": MappingProxyType({"water": 0.0, "open": 0.0, "suburban": 10.0, "urban": 15.0,
                               "trees": 15.0, "dense-urban": 20.0}),
    # ITU-R P.2108-1 Table 3 (nominal clutter heights of the height-gain
    # terminal correction, section 3.1): water/sea 10, open/rural 10,
    # suburban 10, urban 15, trees/forest 15, dense urban 20 m, as the
    # default values listed by the U.S. reference implementation of P.2108
    # (NTIA) and the SG3 MATLAB implementation; the Recommendation's own
    # table was not read.
    "terrain": MappingProxyType({"water": 10.0, "open": 10.0, "suburban": 10.0, "urban": 15.0,
                                 "trees": 15.0, "dense-urban": 20.0}),
})
"""Representative clutter height R per model and clutter class [m] (see the comments for the sources)."""

WORLDCOVER_CLASSES = MappingProxyType({
    10: ("Tree cover", "trees"),
    20: ("Shrubland", "open"),
    30: ("Grassland", "open"),
    40: ("Cropland", "open"),
    50: ("Built-up", "urban"),
    60: ("Bare / sparse vegetation", "open"),
    70: ("Snow and ice", "open"),
    80: ("Permanent water bodies", "water"),
    90: ("Herbaceous wetland", "open"),
    95: ("Mangroves", "trees"),
    100: ("Moss and lichen", "open"),
})
"""ESA WorldCover Map code -> (class name in the product user manual, clutter class).

The clutter class of each code is this project's choice (no published
mapping): vegetation below a few metres is ``open``, tree cover and mangroves
``trees``, built-up ``urban`` (a 10 m built-up pixel is a building or a
street; a village of detached houses may be better described as
``suburban`` in a ``--land-cover-classes`` file).  Code 0 (no data) is void.
"""

WORLDCOVER_NO_DATA = 0
"""The ESA WorldCover Map value for no data (void, :data:`NO_CLASS`)."""

MAX_CLUTTER_HEIGHT_M = 100.0
"""Largest representative clutter height a class file may give [m]."""

_BUILT_IN = "the built-in ESA WorldCover mapping"

BUILT_IN_SOURCE = "built-in ESA WorldCover"
"""The ``source`` of the built-in mapping in a report's ``land_cover.classes`` record."""


class LandCover:
    """Land-cover class codes from one or more rasters, sampled at the nearest pixel.

    Open with :meth:`LandCover.open`; use as a context manager or call
    :meth:`close`.

    Parameters
    ----------
    model : profiler.terrain.elevation.ElevationModel
        The rasters, opened with ``role=LAND_COVER_ROLE``.

    Attributes
    ----------
    model : profiler.terrain.elevation.ElevationModel
        The rasters, for ``provenance``, ``covers``, ``bounds_text``.
    """

    def __init__(self, model: ElevationModel):
        self.model = model

    @classmethod
    def open(cls, paths, cache_bytes=64 * 1024 * 1024, digests=None) -> LandCover:
        """Open land-cover rasters from files, zip archives and/or folders.

        Parameters
        ----------
        paths : str or os.PathLike or sequence of them
            As ``--dem`` takes them; in a folder, rasters whose band unit is
            a length (elevation) are left out.
        cache_bytes : int, optional
            Upper bound of the in-memory block cache [bytes].
        digests : profiler.terrain.digests.FileDigests, optional
            Provenance digests; default a new one.

        Returns
        -------
        LandCover

        Raises
        ------
        ProfilerError
            One line naming ``--land-cover``: a path is missing, a folder
            holds no raster, a file is not a georeferenced raster.
        """
        return cls(ElevationModel.open(paths, cache_bytes=cache_bytes, digests=digests,
                                       role=LAND_COVER_ROLE))

    def codes(self, lon_deg, lat_deg) -> np.ndarray:
        """Class code of the pixel holding each WGS84 point.

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude of the points [deg], any shape (broadcast).

        Returns
        -------
        numpy.ndarray of int32
            The stored code [-]; :data:`NO_CLASS` where the pixel is void
            (the raster's nodata) or no raster covers the point.

        Raises
        ------
        ProfilerError
            A pixel holds a value that is not a whole number (not a class
            raster).
        """
        values = self.model.sample_nearest(lon_deg, lat_deg)
        valid = np.isfinite(values)
        whole = np.rint(values)
        bad = valid & ((whole != values) | (np.abs(values) > np.iinfo(np.int32).max))
        if bad.any():
            raise ProfilerError(
                f"land cover {self.model.sources[0].path} holds the value {values[bad].flat[0]:g}, "
                "not a class code; give --land-cover a raster of whole-number class codes")
        return np.where(valid, whole, NO_CLASS).astype(np.int32)

    @property
    def sources(self):
        """The rasters (list of :class:`profiler.terrain.source_info.SourceInfo`)."""
        return self.model.sources

    def provenance(self, lon_deg, lat_deg) -> list:
        """Report records ``{path, sha256, crs, resolution}`` of the rasters that gave a code at the points.

        Parameters
        ----------
        lon_deg, lat_deg : array_like
            WGS84 longitude and latitude of the points [deg].

        Returns
        -------
        list of dict
            As :meth:`profiler.terrain.elevation.ElevationModel.provenance`.
        """
        return self.model.provenance(self.model.sources_used(lon_deg, lat_deg, nearest=True))

    def close(self) -> None:
        """Close the rasters and drop the block cache."""
        self.model.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False


@dataclass(frozen=True)
class ClutterSamples:
    """Land cover at sample points: code, clutter class and representative height.

    Parameters
    ----------
    code : numpy.ndarray of int32
        Land-cover class code [-]; :data:`NO_CLASS` where there is none.
    class_index : numpy.ndarray of int8
        Index into :data:`CLUTTER_CLASSES` [-]; -1 where there is no class.
    height_m : numpy.ndarray of float
        Representative clutter height R [m]; NaN where there is no class.
    """

    code: np.ndarray
    class_index: np.ndarray
    height_m: np.ndarray

    def class_names(self) -> np.ndarray:
        """Clutter class names (object array, None where there is no class).

        Returns
        -------
        numpy.ndarray of str or None
            One of :data:`CLUTTER_CLASSES` or None per sample (names, no unit [-]).
        """
        names = np.array(CLUTTER_CLASSES + (None,), dtype=object)
        return names[self.class_index]      # -1 picks the trailing None


@dataclass(frozen=True)
class ClassMapping:
    """Land-cover code -> clutter class and, where given, its representative height.

    Parameters
    ----------
    classes : dict
        Land-cover code [-] -> one of :data:`CLUTTER_CLASSES`.
    heights_m : dict
        Code -> representative clutter height [m], for the codes whose height
        was given (the others take the model's default).
    source : str
        Where the mapping comes from (the file name), for messages.
    void_codes : tuple, optional
        Land-cover codes [-] that mean "no data" (sampled as :data:`NO_CLASS`).
    """

    classes: dict
    heights_m: dict
    source: str
    void_codes: tuple = ()

    def clutter(self, codes, model: str) -> ClutterSamples:
        """Clutter class and representative height of every code, vectorized.

        Parameters
        ----------
        codes : array_like of int
            Land-cover codes [-] (from :meth:`LandCover.codes`);
            :data:`NO_CLASS` and the void codes give no class.
        model : str
            ``p1812`` or ``terrain``: whose default heights fill the heights
            the mapping does not give.

        Returns
        -------
        ClutterSamples
            Same shape as ``codes``.

        Raises
        ------
        ProfilerError
            One line with the code and the file name: a code that occurs is
            not in the mapping.  An unknown ``model``.
        """
        if model not in MODELS:
            raise ProfilerError(f"no default clutter heights for model {model!r}; use one of "
                                f"{', '.join(MODELS)}")
        code = np.asarray(codes).astype(np.int32)
        keys = np.array(sorted(self.classes), dtype=np.int64)
        index = np.array([CLUTTER_CLASSES.index(self.classes[k]) for k in keys], dtype=np.int8)
        heights = np.array([self.heights_m.get(k, DEFAULT_HEIGHTS_M[model][self.classes[k]])
                            for k in keys], dtype=float)
        void = (code == NO_CLASS) | np.isin(code, np.asarray(self.void_codes, dtype=np.int32))
        pos = np.clip(np.searchsorted(keys, code), 0, max(keys.size - 1, 0))
        known = (keys[pos] == code) if keys.size else np.zeros(code.shape, dtype=bool)
        missing = ~known & ~void
        if missing.any():
            first = int(np.unique(code[missing])[0])
            hint = (f"give --land-cover-classes a TOML file with [classes.{first}]"
                    if self.source == _BUILT_IN else f"add [classes.{first}] to it")
            raise ProfilerError(f"land-cover code {first} is not in {self.source}; {hint}")
        ok = known & ~void
        return ClutterSamples(code=np.where(void, NO_CLASS, code).astype(np.int32),
                              class_index=np.where(ok, index[pos], -1).astype(np.int8),
                              height_m=np.where(ok, heights[pos], np.nan))


def worldcover_mapping() -> ClassMapping:
    """The built-in mapping of the ESA WorldCover class codes onto the clutter classes.

    Returns
    -------
    ClassMapping
        Every code of :data:`WORLDCOVER_CLASSES`, heights left to the
        model's defaults; code 0 (no data) void.

    References
    ----------
    .. [1] ESA WorldCover Product User Manual, v2.0, class table of the Map
       layer (see the module references).
    """
    return ClassMapping(classes={code: clutter for code, (_, clutter) in WORLDCOVER_CLASSES.items()},
                        heights_m={}, source=_BUILT_IN, void_codes=(WORLDCOVER_NO_DATA,))


def clutter_index(name, where: str) -> int:
    """Index of a clutter class name in :data:`CLUTTER_CLASSES`, refused in one line.

    Parameters
    ----------
    name : str
        A clutter class (``urban``, ``dense-urban``, ...).
    where : str
        What gave it (an option or a file and table), for the message.

    Returns
    -------
    int
        Index into :data:`CLUTTER_CLASSES` [-].

    Raises
    ------
    ProfilerError
        ``name`` is not one of the clutter classes.
    """
    if isinstance(name, str) and name in CLUTTER_CLASSES:
        return CLUTTER_CLASSES.index(name)
    raise ProfilerError(f"{where}: unknown clutter class {name!r}; use one of "
                        f"{', '.join(CLUTTER_CLASSES)}")


def default_height_m(clutter: str, model: str) -> float:
    """A model's default representative clutter height of a clutter class.

    Parameters
    ----------
    clutter : str
        One of :data:`CLUTTER_CLASSES`.
    model : str
        ``p1812`` or ``terrain``.

    Returns
    -------
    float
        R [m] from :data:`DEFAULT_HEIGHTS_M`.
    """
    return DEFAULT_HEIGHTS_M[model][clutter]


def read_class_mapping(path) -> ClassMapping:
    """Read a ``--land-cover-classes`` TOML file.

    Parameters
    ----------
    path : str or os.PathLike
        TOML file with one table ``[classes.CODE]`` per land-cover code:
        ``clutter`` (one of :data:`CLUTTER_CLASSES`, required) and
        ``height_m`` (representative clutter height, 0 to
        :data:`MAX_CLUTTER_HEIGHT_M` m, optional).

    Returns
    -------
    ClassMapping
        ``source`` is the file name.

    Raises
    ------
    ProfilerError
        One line naming the file (and the code): unreadable file, invalid
        TOML, no ``classes`` table, a key that is not a whole-number code, an
        unknown key, an unknown clutter class, a height that is not a number
        in range.
    """
    refuse_empty_path(path, "--land-cover-classes", "a TOML file")
    path = Path(path)
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib
    try:
        table = tomllib.loads(path.read_bytes().decode("utf-8"))
    except OSError as exc:
        raise ProfilerError(f"cannot read land-cover classes {path}: {exc.strerror or exc}") from None
    except UnicodeDecodeError:
        raise ProfilerError(f"land-cover classes {path} is not UTF-8 text: save it as UTF-8") from None
    except tomllib.TOMLDecodeError as exc:
        raise ProfilerError(f"land-cover classes {path} is not valid TOML: {exc}") from None
    extra = sorted(set(table) - {"classes"})
    if extra or not isinstance(table.get("classes"), dict) or not table["classes"]:
        raise ProfilerError(f"land-cover classes {path}: "
                            + (f"unknown key {extra[0]!r}; " if extra else "no [classes.CODE] tables; ")
                            + 'write [classes.50] with clutter = "urban" and height_m = 15')
    classes, heights = {}, {}
    for key, entry in table["classes"].items():
        code = _class_code(key, path)
        where = f"land-cover classes {path} [classes.{key}]"
        if not isinstance(entry, dict):
            raise ProfilerError(f"{where}: must be a table with clutter = \"...\" and height_m = ...")
        unknown = sorted(set(entry) - {"clutter", "height_m"})
        if unknown:
            raise ProfilerError(f"{where}: unknown key {unknown[0]!r}; use clutter and height_m")
        if "clutter" not in entry:
            raise ProfilerError(f"{where}: no clutter; add clutter = one of {', '.join(CLUTTER_CLASSES)}")
        classes[code] = CLUTTER_CLASSES[clutter_index(entry["clutter"], where)]
        if "height_m" in entry:
            heights[code] = _clutter_height(entry["height_m"], where)
    return ClassMapping(classes=classes, heights_m=heights, source=str(path))


def _class_code(key: str, path) -> int:
    """A ``[classes.KEY]`` key as an integer code, refused in one line."""
    text = key.strip()
    if not text.lstrip("+-").isdigit() or abs(int(text)) > np.iinfo(np.int32).max or int(text) < 0:
        raise ProfilerError(f"land-cover classes {path}: [classes.{key}] is not a class code; "
                            "use the whole number the land-cover raster stores, e.g. [classes.50]")
    return int(text)


def _clutter_height(value, where: str) -> float:
    """A ``height_m`` value checked: a number from 0 to MAX_CLUTTER_HEIGHT_M."""
    ok = isinstance(value, (int, float)) and not isinstance(value, bool)
    if not ok or not math.isfinite(value) or not 0.0 <= value <= MAX_CLUTTER_HEIGHT_M:
        raise ProfilerError(f"{where}: height_m = {value!r} is not a clutter height; give a number "
                            f"of metres from 0 to {MAX_CLUTTER_HEIGHT_M:g}")
    return float(value)


def mapping_provenance(mapping: ClassMapping) -> dict:
    """The report record of where a class mapping comes from.

    Parameters
    ----------
    mapping : ClassMapping
        The built-in mapping (:func:`worldcover_mapping`) or one read by
        :func:`read_class_mapping`.

    Returns
    -------
    dict
        ``{"source": "built-in ESA WorldCover", "path": None, "sha256": None}``
        for the built-in mapping, ``{"source": "file", "path": PATH, "sha256":
        HEX}`` for a ``--land-cover-classes`` file (the digest of its bytes).
    """
    if mapping.source == _BUILT_IN:
        return {"source": BUILT_IN_SOURCE, "path": None, "sha256": None}
    from .digests import file_sha256

    return {"source": "file", "path": mapping.source, "sha256": file_sha256(mapping.source)}


def land_cover_paths(land_cover) -> list:
    """The ``land_cover`` argument of the API as a list of paths (empty: no land cover).

    Parameters
    ----------
    land_cover : str, os.PathLike, sequence of them, or None
        ``--land-cover`` files or folders.

    Returns
    -------
    list of str
    """
    if land_cover is None:
        return []
    if isinstance(land_cover, (str, Path)) or not hasattr(land_cover, "__iter__"):
        return [str(land_cover)]
    return [str(p) for p in land_cover]


def class_mapping_for(land_cover, land_cover_classes) -> ClassMapping | None:
    """The class mapping of a run: None without a land cover, else the TOML file's or the built-in one.

    Parameters
    ----------
    land_cover : str, os.PathLike, sequence of them, or None
        ``--land-cover`` files or folders.
    land_cover_classes : str or os.PathLike or None
        ``--land-cover-classes`` TOML file (None: :func:`worldcover_mapping`).

    Returns
    -------
    ClassMapping or None

    Raises
    ------
    ProfilerError
        ``land_cover_classes`` without ``land_cover``; the TOML file's
        refusals (:func:`read_class_mapping`).
    """
    if not land_cover_paths(land_cover):
        if land_cover_classes is not None:
            raise ProfilerError("--land-cover-classes needs a land cover: give --land-cover FILE_OR_FOLDER too")
        return None
    return worldcover_mapping() if land_cover_classes is None else read_class_mapping(land_cover_classes)
