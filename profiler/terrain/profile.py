"""Terrain profiles: taken from elevation models along a geodesic, or read
from a surveyed profile file.

A :class:`TerrainProfile` is the hand-off between elevation access and the
radio computations: distances from site A and terrain heights, plus the
coordinates and provenance when they are known.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from ..errors import ProfilerError, refuse_empty_path
from ..limits import check, check_array
from .geodesic import validate_lat_lon
from .sampling import MAX_SAMPLES

MIN_SURVEY_SPACING_M = 0.001
"""Closest allowed spacing of surveyed profile rows [m] (the smallest --step-m)."""



@dataclass(frozen=True)
class TerrainProfile:
    """Terrain along the path from site A (first sample) to site B (last).

    Parameters
    ----------
    distance_m : ndarray
        Distance from A [m], strictly increasing, first element 0.
    terrain_m : ndarray
        Terrain height [m above mean sea level].
    lat_deg, lon_deg : ndarray or None
        Sample coordinates [deg, WGS84]; None for a surveyed profile.
    azimuth_a_to_b_deg, azimuth_b_to_a_deg : float or None
        Geodesic azimuths at the ends [deg]; None for a surveyed profile.
    sources : list of dict
        Provenance: ``{path, sha256, crs, resolution}`` per elevation source
        used, or the surveyed profile file.
    voids_filled : int
        Number of samples interpolated across elevation voids.
    kind : str
        ``"dem"`` or ``"surveyed"``.
    void_stretches_m : list
        ``[[from_m, to_m], ...]`` of the interpolated stretches (distance from A).
    clutter_height_m : ndarray or None
        Representative clutter height R at each sample [m] (ITU-R P.1812-8
        section 3.2); None: no clutter.
    zone : ndarray of int or None
        Radio-meteorological zone code of each sample [-] (1 sea, 3 coastal land,
        4 inland; P.1812-8 section 3.3); None: inland.
    clutter_class : ndarray of int8 or None
        Clutter class of each sample from a land cover [-] (index into
        :data:`profiler.terrain.landcover.CLUTTER_CLASSES`, -1 none); None:
        no land cover (a surveyed profile's clutter has no class).
    land_cover : dict or None
        Provenance of the land cover (:func:`with_land_cover`): ``sources``
        (``{path, sha256, crs, resolution}`` per raster that gave a class),
        ``classes`` (:func:`profiler.terrain.landcover.mapping_provenance`),
        ``samples_without_class``; None without a land cover.
    """

    distance_m: np.ndarray
    terrain_m: np.ndarray
    lat_deg: np.ndarray | None = None
    lon_deg: np.ndarray | None = None
    azimuth_a_to_b_deg: float | None = None
    azimuth_b_to_a_deg: float | None = None
    sources: list = field(default_factory=list)
    voids_filled: int = 0
    kind: str = "dem"
    void_stretches_m: list = field(default_factory=list)
    clutter_height_m: np.ndarray | None = None
    zone: np.ndarray | None = None
    clutter_class: np.ndarray | None = None
    land_cover: dict | None = None

    @property
    def length_m(self) -> float:
        """Path length [m]."""
        return float(self.distance_m[-1])


def profile_from_dem(model, lat_a_deg: float, lon_a_deg: float, lat_b_deg: float, lon_b_deg: float,
                     step_m: float | None = None, fill_voids: bool = False,
                     name_a: str = "site A", name_b: str = "site B") -> TerrainProfile:
    """Sample an elevation model along the geodesic from A to B.

    Parameters
    ----------
    model : profiler.terrain.elevation.ElevationModel
        Open elevation model.
    lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg : float
        Site coordinates [deg, WGS84].
    step_m : float, optional
        Largest sample spacing [m]; default the finest pixel size of the
        elevation data along the path.
    fill_voids : bool
        Interpolate across nodata voids along the profile instead of refusing.
    name_a, name_b : str
        Site names used in error messages.

    Returns
    -------
    TerrainProfile
        Distances from A [m], terrain [m AMSL], coordinates and provenance.

    Raises
    ------
    ProfilerError
        If a coordinate or the step is out of range, or the path cannot be
        sampled (outside the elevation data, or a void with ``fill_voids``
        False).

    References
    ----------
    .. [1] C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87, 43-55
       (2013) (the geodesic the samples follow).
    """
    from .sampling import sample_links

    lat_a, lon_a = validate_lat_lon(lat_a_deg, lon_a_deg, name_a)
    lat_b, lon_b = validate_lat_lon(lat_b_deg, lon_b_deg, name_b)
    if step_m is not None:
        step_m = check("--step-m", step_m)
    model.start_digests([lon_a, lon_b], [lat_a, lat_b])   # provenance hashes run while the path is sampled
    batch = sample_links(model, lat_a, lon_a, lat_b, lon_b, step_m=step_m, fill_voids=fill_voids,
                         names_a=[name_a], names_b=[name_b])
    if batch.error[0] is not None:
        raise ProfilerError(batch.error[0])
    m = int(batch.n[0])
    lat, lon = batch.lat_deg[0, :m], batch.lon_deg[0, :m]
    sources = model.provenance(model.sources_used(lon, lat))
    return TerrainProfile(distance_m=batch.distance_m[0, :m], terrain_m=batch.terrain_m[0, :m],
                          lat_deg=lat, lon_deg=lon,
                          azimuth_a_to_b_deg=float(batch.azimuth_a_to_b_deg[0]),
                          azimuth_b_to_a_deg=float(batch.azimuth_b_to_a_deg[0]),
                          sources=sources, voids_filled=int(batch.voids_filled[0]), kind="dem",
                          void_stretches_m=list(batch.void_stretches_m[0]))


def with_land_cover(profile: TerrainProfile, land_cover, mapping, model: str) -> TerrainProfile:
    """The profile with the clutter of a land cover at every sample, end points included.

    Each sample takes the class code of the land-cover pixel holding it
    (nearest pixel, never interpolated: the same sample positions as the
    terrain), its clutter class and its representative clutter height R
    from ``mapping`` for ``model``.  A sample with no class (void pixel,
    outside the land cover, or a void code of the mapping) has no clutter:
    class -1 and R = 0.

    Parameters
    ----------
    profile : TerrainProfile
        A profile with sample coordinates (from elevation data).
    land_cover : profiler.terrain.landcover.LandCover
        The open land cover.
    mapping : profiler.terrain.landcover.ClassMapping
        Code -> clutter class and height.
    model : str
        ``p1812`` or ``terrain``: whose default heights R the mapping falls back on.

    Returns
    -------
    TerrainProfile
        A copy with ``clutter_class`` [-], ``clutter_height_m`` [m] and ``land_cover`` (provenance).

    Raises
    ------
    ProfilerError
        The profile has no coordinates; a code that occurs is not in the
        mapping (its code and the file name).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3.2 (representative clutter height
       R of each sample; the model adds it at the interior points only).
    """
    from .landcover import mapping_provenance

    if profile.lat_deg is None or profile.lon_deg is None:
        raise ProfilerError("--land-cover needs the coordinates of the profile samples: give --dem with --site-a "
                            "and --site-b (a --profile gives its clutter in its clutter_height_m column)")
    lon, lat = np.asarray(profile.lon_deg, dtype=float), np.asarray(profile.lat_deg, dtype=float)
    samples = mapping.clutter(land_cover.codes(lon, lat), model)
    none = samples.class_index < 0
    record = {"sources": land_cover.provenance(lon, lat), "classes": mapping_provenance(mapping),
              "samples_without_class": int(np.count_nonzero(none))}
    return replace(profile, clutter_class=samples.class_index.copy(),
                   clutter_height_m=np.where(none, 0.0, samples.height_m), land_cover=record)


ZONE_NAMES = {"sea": 1, "coastal": 3, "inland": 4}
"""Values of the profile CSV column ``zone`` and their codes (ITU-R P.1812-8 Table 2)."""

MAX_CLUTTER_HEIGHT_M = 1000.0
"""Tallest representative clutter height a profile row may give [m] (common practice: taller than any building)."""


def read_profile_csv(path) -> TerrainProfile:
    """Read a surveyed profile: a CSV file with columns ``distance_m,elevation_m``.

    A header row is required; rows are used as given (no resampling).  Site A
    is the first row and site B the last.  Distances must be strictly
    increasing; they are taken relative to the first row.  Optional columns:
    ``clutter_height_m`` (representative clutter height R [m], 0 to 1000,
    empty = 0) and ``zone`` (``sea``, ``coastal`` or ``inland``, empty =
    inland), the inputs of ITU-R P.1812-8 sections 3.2-3.3.

    Parameters
    ----------
    path : str or path-like
        The CSV file (distances [m], elevations [m above mean sea level]).

    Returns
    -------
    TerrainProfile
        With ``kind="surveyed"`` and no coordinates.

    Raises
    ------
    ProfilerError
        If the file is missing, not UTF-8, has no proper header, fewer than
        3 or too many rows, or values that are not numbers.
    """
    import hashlib

    refuse_empty_path(path, "--profile", "a profile CSV file")
    p = Path(path)
    if not p.is_file():
        raise ProfilerError(f"profile file not found: {p}; check --profile")
    raw = p.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise ProfilerError(f"profile file {p} is not UTF-8 text; save it as a CSV file") from None
    rows = [r for r in csv.reader(text.splitlines()) if r and any(c.strip() for c in r)]
    if not rows:
        raise ProfilerError(f"profile file {p} is empty; "
                            "it needs a header 'distance_m,elevation_m' and at least 3 rows")
    header = [c.strip().lower() for c in rows[0]]
    if "distance_m" not in header or "elevation_m" not in header:
        raise ProfilerError(f"profile file {p} needs a header row with columns distance_m,elevation_m; "
                            f"found {','.join(rows[0])}")
    i_d, i_h = header.index("distance_m"), header.index("elevation_m")
    body = rows[1:]
    if len(body) < 3:
        raise ProfilerError(f"profile file {p} has {len(body)} data rows; at least 3 are needed")
    if len(body) > MAX_SAMPLES:
        raise ProfilerError(f"profile file {p} has {len(body)} data rows; at most {MAX_SAMPLES} are allowed")
    try:
        d = np.array([float(r[i_d]) for r in body], dtype=float)
        h = np.array([float(r[i_h]) for r in body], dtype=float)
    except (ValueError, IndexError):
        bad = next(n for n, r in enumerate(body, start=2) if not _row_ok(r, i_d, i_h))
        raise ProfilerError(f"profile file {p} line {bad}: expected two numbers distance_m,elevation_m") from None
    if not np.all(np.isfinite(d)) or not np.all(np.isfinite(h)):
        bad = int(np.argmax(~(np.isfinite(d) & np.isfinite(h)))) + 2
        raise ProfilerError(f"profile file {p} line {bad}: distance and elevation must be finite numbers (no NaN)")
    check_array("terrain", h, lambda i: f"profile file {p} line {i + 2}: elevation_m")
    check_array("distance", np.abs(d - d[0]),
                lambda i: f"profile file {p} line {i + 2}: distance_m (from the first row)")
    steps = np.diff(d)
    if np.any(steps <= 0):
        bad = int(np.argmax(steps <= 0)) + 3
        kind = "duplicate" if steps[bad - 3] == 0 else "decreasing"
        raise ProfilerError(f"profile file {p} line {bad}: {kind} distance; "
                            "distances must strictly increase from site A to site B")
    if np.any(steps < MIN_SURVEY_SPACING_M):
        bad = int(np.argmax(steps < MIN_SURVEY_SPACING_M)) + 3
        raise ProfilerError(f"profile file {p} line {bad}: rows only {steps[bad - 3]:.3g} m apart; "
                            f"rows must be at least {MIN_SURVEY_SPACING_M:g} m apart")
    d = d - d[0]
    clutter = _clutter_column(p, header, body)
    zone = _zone_column(p, header, body)
    source = {"path": str(p), "sha256": hashlib.sha256(raw).hexdigest(), "crs": None, "resolution": None}
    return TerrainProfile(distance_m=d, terrain_m=h, sources=[source], kind="surveyed", clutter_height_m=clutter,
                          zone=zone)


def _cell(row, i) -> str:
    return row[i].strip() if i < len(row) else ""


def _clutter_column(p, header, body):
    """The optional ``clutter_height_m`` column [m] (empty cells 0), or None without the column."""
    if "clutter_height_m" not in header:
        return None
    i = header.index("clutter_height_m")
    out = np.zeros(len(body))
    for line, row in enumerate(body, start=2):
        text = _cell(row, i)
        try:
            value = float(text) if text else 0.0
        except ValueError:
            value = float("nan")
        if not (0.0 <= value <= MAX_CLUTTER_HEIGHT_M):
            raise ProfilerError(f"profile file {p} line {line}: clutter_height_m {text!r} must be a height of 0 to "
                                f"{MAX_CLUTTER_HEIGHT_M:g} m (or empty for none)")
        out[line - 2] = value
    return out


def _zone_column(p, header, body):
    """The optional ``zone`` column as P.1812-8 zone codes (empty cells inland), or None without the column."""
    if "zone" not in header:
        return None
    i = header.index("zone")
    out = np.full(len(body), ZONE_NAMES["inland"], dtype=np.int64)
    for line, row in enumerate(body, start=2):
        text = _cell(row, i).lower()
        if text and text not in ZONE_NAMES:
            raise ProfilerError(f"profile file {p} line {line}: zone {_cell(row, i)!r} is not sea, coastal or "
                                "inland (or empty for inland)")
        out[line - 2] = ZONE_NAMES[text] if text else ZONE_NAMES["inland"]
    return out


def _row_ok(row, i_d, i_h) -> bool:
    try:
        float(row[i_d])
        float(row[i_h])
        return True
    except (ValueError, IndexError):
        return False
