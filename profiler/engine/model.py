"""The propagation model of a run: ``terrain`` or ITU-R P.1812-8, and the P.1812 inputs.

:class:`PropagationSettings` holds the options ``--model``, ``--time-percent``,
``--location-percent``, ``--location-sigma-db``, ``--area-width-m``,
``--delta-n``, ``--n0`` and ``--coast-distance-a-km``/``-b-km``; it travels
inside :class:`profiler.engine.radio.RadioSettings` (field ``propagation``)
to every batch, so a link, a network, a mast scan and a coverage map use the
same values.  The losses themselves are :mod:`profiler.engine.losses`.

Defaults and their basis
------------------------
- ``model``: None means ``p1812`` when both terminals have coordinates (the
  path-centre latitude of P.1812-8 needs them), else ``terrain``.
- ``time_percent`` 50 and ``location_percent`` 50: the medians (P.1812-8
  covers 1-50 % of time and 1-99 % of locations).
- ``area_width_m`` 100: the prediction resolution wa for σL (P.1812-8
  section 4.7 gives σL as a function of wa; 100 m is the pixel size of a
  typical coverage study, common practice).
- ``delta_n``: None means the value that gives the run's k,
  ΔN = 157 (1 - 1/k) (P.1812-8 section 3.7: k50 = 157 / (157 - ΔN)).
- ``n0`` 315 N-units: the sea-level refractivity of the reference
  exponential atmosphere of ITU-R P.453-14 section 2.1 (N0 = 315,
  h0 = 7.35 km), used where the Recommendation's digital maps are not at
  hand (they may not be redistributed).
- ``coast_distance_a_km``/``_b_km`` 500: inland (P.1812-8 section 3.4:
  distances from the coast only matter within a few tens of km; 0 is a
  terminal at sea).
- ``clutter_a``/``_b`` None: the land cover at that end, if any;
  ``clutter_height_a_m``/``_b_m`` None: the class's default height of the
  run's model (:func:`profiler.terrain.landcover.default_height_m`).
- ``terminal_clutter_m`` 50: how far from its end a terminal's clutter
  class reaches along the P.1812 profile (the clutter around a node's
  building and street; common practice for a terminal's surroundings).
- ``indoor_a``/``_b`` None: outdoors.  The terminal terms themselves are
  :mod:`profiler.engine.terminals`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from .. import limits
from ..errors import ProfilerError

MODELS = ("p1812", "terrain")
"""Propagation models: ITU-R P.1812-8, or free space plus the chosen diffraction method."""

N0_DEFAULT = 315.0
"""Sea-level surface refractivity N0 of the reference atmosphere, ITU-R P.453-14 section 2.1 [N-units]."""

K50_CONSTANT = 157.0
"""The constant of k50 = 157 / (157 - ΔN), ITU-R P.1812-8 section 3.7 [N-units/km]."""


def delta_n_from_k(k_factor: float) -> float:
    """Refractivity lapse rate ΔN that gives the effective-Earth-radius factor k [N-units/km].

    Parameters
    ----------
    k_factor : float
        k [-].

    Returns
    -------
    float
        ΔN = 157 (1 - 1/k) [N-units/km].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3.7, k50 = 157 / (157 - ΔN).
    """
    return K50_CONSTANT * (1.0 - 1.0 / float(k_factor))


def k_from_delta_n(delta_n: float) -> float:
    """Effective-Earth-radius factor k of a refractivity lapse rate ΔN [-].

    Parameters
    ----------
    delta_n : float
        ΔN [N-units/km], below 157.

    Returns
    -------
    float
        k = 157 / (157 - ΔN) [-].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3.7.
    """
    return K50_CONSTANT / (K50_CONSTANT - float(delta_n))


@dataclass(frozen=True)
class PropagationSettings:
    """Which propagation model a run uses, and the inputs of ITU-R P.1812-8.

    Parameters
    ----------
    model : {"p1812", "terrain"} or None
        None: ``p1812`` where both terminals have coordinates, else ``terrain``.
    time_percent : float, default 50
        Time percentage p [%], 1 to 50 (below 50 the loss is lower).
    location_percent : float, default 50
        Location percentage pL [%], 1 to 99.
    location_sigma_db : float, optional
        Location variability σL [dB]; None: P.1812-8 section 4.7 for
        ``area_width_m`` with the height factor of the node's antenna.
    area_width_m : float, default 100
        Prediction resolution wa [m].
    delta_n : float, optional
        Refractivity lapse rate ΔN [N-units/km]; None: from the run's k.
    n0 : float, default 315
        Sea-level surface refractivity N0 [N-units].
    coast_distance_a_km, coast_distance_b_km : float, default 500
        Distance of each terminal from the coast [km] (0: at sea).
    clutter_a, clutter_b : str, optional
        Clutter class around each terminal (``water``, ``open``,
        ``suburban``, ``urban``, ``trees``, ``dense-urban``); None: the land
        cover at that end, if any.
    clutter_height_a_m, clutter_height_b_m : float, optional
        Representative clutter height R of that end [m]; None: the class's
        default for the run's model.  Needs the end's class.
    terminal_clutter_m : float, default 50
        Distance from an end within which its class sets R of the interior
        P.1812 profile points [m].
    clutter_statistics : bool, default False
        ``--model terrain``: ITU-R P.2108-1 section 3.2 at a built-up end
        instead of section 3.1.
    indoor_a, indoor_b : str, optional
        ``traditional`` or ``thermally-efficient``: the terminal is inside
        such a building (ITU-R P.2109-1); None: outdoors.
    calibration : profiler.engine.calibration.Calibration, optional
        A survey's fitted correction (``--calibration FILE.toml``), added
        as ``loss_db.calibration``; None: no calibration.
    """

    model: str | None = None
    time_percent: float = 50.0
    location_percent: float = 50.0
    location_sigma_db: float | None = None
    area_width_m: float = 100.0
    delta_n: float | None = None
    n0: float = N0_DEFAULT
    coast_distance_a_km: float = 500.0
    coast_distance_b_km: float = 500.0
    clutter_a: str | None = None
    clutter_b: str | None = None
    clutter_height_a_m: float | None = None
    clutter_height_b_m: float | None = None
    terminal_clutter_m: float = 50.0
    clutter_statistics: bool = False
    indoor_a: str | None = None
    indoor_b: str | None = None
    calibration: object | None = None

    def validate(self) -> "PropagationSettings":
        """Check the settings against their ranges (:data:`profiler.limits.LIMITS`).

        Returns
        -------
        PropagationSettings
            The same settings, for chaining.

        Raises
        ------
        ProfilerError
            On the first setting out of range or not understood.
        """
        if self.model is not None and self.model not in MODELS:
            raise ProfilerError(f"unknown --model {self.model!r}; use p1812 or terrain")
        for name in ("time_percent", "location_percent", "location_sigma_db", "area_width_m", "delta_n", "n0",
                     "coast_distance_a_km", "coast_distance_b_km", "clutter_height_a_m", "clutter_height_b_m",
                     "terminal_clutter_m"):
            value = getattr(self, name)
            if value is not None and not math.isfinite(float(value)):
                raise ProfilerError(f"--{name.replace('_', '-')} must be a finite number, got {value}")
        limits.check_fields(self)
        self._check_terminals()
        from .calibration import Calibration

        if self.calibration is not None and not isinstance(self.calibration, Calibration):
            raise ProfilerError("calibration must be read with profiler.engine.calibration.load_calibration "
                                "(or give the file's path to the API's calibration=)")
        return self

    def _check_terminals(self) -> None:
        """Refuse an unknown clutter class or building type, a clutter height without its class, and
        ``--clutter-statistics`` with ``--model p1812``."""
        if self.model == "p1812" and self.clutter_statistics:
            raise ProfilerError("--clutter-statistics is for --model terrain (ITU-R P.2108-1 section 3.2); "
                                "P.1812-8 carries the clutter in its profile: add --model terrain or leave "
                                "--clutter-statistics out")
        from ..propagation.building_entry import BUILDING_TYPES
        from ..terrain.landcover import clutter_index

        for end in ("a", "b"):
            clutter = getattr(self, f"clutter_{end}")
            if clutter is not None:
                clutter_index(clutter, f"--clutter-{end}")
            elif getattr(self, f"clutter_height_{end}_m") is not None:
                raise ProfilerError(f"--clutter-height-{end}-m needs --clutter-{end} CLASS: the height is that of "
                                    "the class around the terminal")
            indoor = getattr(self, f"indoor_{end}")
            if indoor is not None and indoor not in BUILDING_TYPES:
                raise ProfilerError(f"unknown --indoor-{end} {indoor!r}; use {' or '.join(BUILDING_TYPES)}")

    def resolved(self, has_coordinates: bool) -> "PropagationSettings":
        """The settings with ``model`` chosen: None becomes p1812 with coordinates, terrain without.

        Parameters
        ----------
        has_coordinates : bool
            Both terminals of every link have a latitude and longitude.

        Returns
        -------
        PropagationSettings
            A copy with ``model`` "p1812" or "terrain".

        Raises
        ------
        ProfilerError
            For ``model="p1812"`` without the terminals' coordinates.
        """
        if self.model is None:
            return replace(self, model="p1812" if has_coordinates else "terrain").resolved(has_coordinates)
        if self.model == "p1812" and self.clutter_statistics:
            self._check_terminals()
        if self.model == "p1812" and not has_coordinates:
            raise ProfilerError("--model p1812 needs the latitude and longitude of both terminals: with --profile "
                                "add --site-a LAT,LON and --site-b LAT,LON, or use --model terrain")
        return self

    def k_factor(self, k_factor: float) -> float:
        """The run's effective-Earth-radius factor: from ``delta_n`` when it is given.

        Parameters
        ----------
        k_factor : float
            The k of the run's options [-].

        Returns
        -------
        float
            157 / (157 - ΔN) with ``delta_n`` given, else ``k_factor`` [-].
        """
        return k_factor if self.delta_n is None else k_from_delta_n(self.delta_n)

    def summary(self) -> str:
        """One line for sheets and reports.

        Returns
        -------
        str
            E.g. "P.1812-8, 50 % time, 95 % locations", or the terrain model's line.
        """
        if self.model == "terrain":
            return "Terrain model (free space + diffraction), median"
        return f"P.1812-8, {self.time_percent:g} % time, {self.location_percent:g} % locations"

    def calibration_dict(self):
        """The reports' ``calibration`` settings.

        Returns
        -------
        dict or None
            :meth:`profiler.engine.calibration.Calibration.to_dict` (``path``,
            ``sha256``, ``offset_db``, ``slope_db_per_decade``,
            ``location_sigma_db``, ``clutter``), or None without a calibration.
        """
        return None if self.calibration is None else self.calibration.to_dict()

    def to_dict(self, k_factor: float) -> dict:
        """The ``settings`` entries of the reports (model, percentages, σL, wa, ΔN, N0, coasts).

        Parameters
        ----------
        k_factor : float
            The run's k [-] (ΔN from it when ``delta_n`` is not given).

        Returns
        -------
        dict
            ``model``, ``time_percent`` [%], ``location_percent`` [%],
            ``location_sigma_db`` [dB] (None: computed per link),
            ``area_width_m`` [m], ``delta_n`` [N-units/km], ``n0``
            [N-units], ``coast_distance_a_km``, ``coast_distance_b_km`` [km],
            and the terminal options: ``clutter_a``, ``clutter_b`` (class or
            None), ``clutter_height_a_m``, ``clutter_height_b_m`` [m] (None:
            the class's default), ``terminal_clutter_m`` [m],
            ``clutter_statistics``, ``indoor_a``, ``indoor_b`` (building type
            or None: outdoors).
        """
        def height(value):
            return None if value is None else float(value)

        return {"model": self.model, "time_percent": float(self.time_percent),
                "location_percent": float(self.location_percent),
                "location_sigma_db": None if self.location_sigma_db is None else float(self.location_sigma_db),
                "area_width_m": float(self.area_width_m),
                "delta_n": float(self.delta_n if self.delta_n is not None else delta_n_from_k(k_factor)),
                "n0": float(self.n0), "coast_distance_a_km": float(self.coast_distance_a_km),
                "coast_distance_b_km": float(self.coast_distance_b_km),
                "clutter_a": self.clutter_a, "clutter_b": self.clutter_b,
                "clutter_height_a_m": height(self.clutter_height_a_m),
                "clutter_height_b_m": height(self.clutter_height_b_m),
                "terminal_clutter_m": float(self.terminal_clutter_m),
                "clutter_statistics": bool(self.clutter_statistics), "indoor_a": self.indoor_a,
                "indoor_b": self.indoor_b}
