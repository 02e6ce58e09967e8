"""A survey's calibration applied to a run: ``--calibration FILE.toml``, the loss term ``loss_db.calibration``.

``profiler survey --calibration-out`` fits the correction
``c(d) = offset + slope * log10(d / 1 km)`` [dB] of the model's loss to
field measurements (overall and per clutter class); link, mast, network,
coverage and siting read the file (:func:`load_calibration`) and
:func:`profiler.engine.losses.path_loss_batch` adds
:func:`calibration_correction_db` at each path's ground length as a loss
term of its own, with the table of the node end's clutter class where the
file has one, else the overall terms.  Pure numpy; the engine's only
reader of the file.

References
----------
.. [1] N. R. Draper and H. Smith, "Applied Regression Analysis", 3rd ed.,
   Wiley, 1998: the fitted line evaluated here is the least-squares fit of
   :mod:`profiler.products.survey.calibration`.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass

import numpy as np

from ..errors import ProfilerError


@dataclass(frozen=True)
class Calibration:
    """A calibration file as read: its terms, path and digest.

    Parameters
    ----------
    path : str
        The file as given.
    sha256 : str
        SHA-256 of the file's bytes (hex).
    offset_db : float
        Overall offset [dB].
    slope_db_per_decade : float
        Overall slope [dB per decade of distance].
    location_sigma_db : float, optional
        The location variability the survey measured [dB] (informative).
    clutter : tuple
        ``((name, offset_db, slope_db_per_decade), ...)`` per clutter class with its own table.
    """

    path: str
    sha256: str
    offset_db: float
    slope_db_per_decade: float = 0.0
    location_sigma_db: float | None = None
    clutter: tuple = ()

    def terms(self) -> dict:
        """The form :func:`calibration_correction_db` takes (``offset_db``, ``slope_db_per_decade``, ``clutter``)."""
        return {"offset_db": self.offset_db, "slope_db_per_decade": self.slope_db_per_decade,
                "location_sigma_db": self.location_sigma_db,
                "clutter": {name: {"offset_db": o, "slope_db_per_decade": s} for name, o, s in self.clutter}}

    def to_dict(self) -> dict:
        """The reports' ``calibration`` settings: ``path``, ``sha256``, the overall terms and ``clutter`` tables."""
        return {"path": self.path, "sha256": self.sha256, **self.terms()}

    def applied(self, clutter: str | None) -> dict:
        """The terms taken for a node end in class ``clutter``: ``{offset_db, slope_db_per_decade, clutter}``.

        ``clutter`` is the class whose table was taken, None for the overall terms.
        """
        for name, offset, slope in self.clutter:
            if name == clutter:
                return {"offset_db": offset, "slope_db_per_decade": slope, "clutter": name}
        return {"offset_db": self.offset_db, "slope_db_per_decade": self.slope_db_per_decade, "clutter": None}


def calibration_correction_db(calibration, distance_m, clutter=None) -> np.ndarray:
    """The loss term a calibration adds at each distance and clutter class [dB].

    Parameters
    ----------
    calibration : dict or Calibration
        ``offset_db``, ``slope_db_per_decade`` and optionally ``clutter``
        (class name -> a dict with the same keys), as read from the
        ``--calibration-out`` TOML file.
    distance_m : array_like
        Path length [m], > 0.
    clutter : sequence of str, optional
        Clutter class of each path; a class with its own table uses it, any
        other (or None) the overall terms.

    Returns
    -------
    ndarray
        ``offset + slope * log10(d / 1 km)`` per path [dB] (NaN where d <= 0).
    """
    if isinstance(calibration, Calibration):
        calibration = calibration.terms()
    d = np.asarray(distance_m, float)
    logd = np.log10(np.where(d > 0, d, np.nan) / 1000.0)
    offset = np.full(d.shape, float(calibration["offset_db"]))
    slope = np.full(d.shape, float(calibration.get("slope_db_per_decade") or 0.0))
    tables = calibration.get("clutter") or {}
    if clutter is not None and tables:
        names = np.asarray(["" if c is None else str(c) for c in clutter], dtype=object).reshape(d.shape)
        for name, terms in tables.items():   # a few classes: one vector operation each
            sel = names == name
            offset[sel] = float(terms["offset_db"])
            slope[sel] = float(terms.get("slope_db_per_decade") or 0.0)
    return offset + slope * logd


def _terms(table, where, p) -> dict:
    """``offset_db``, ``slope_db_per_decade`` (default 0) and ``location_sigma_db`` (None) of one table."""
    out = {}
    for key in ("offset_db", "slope_db_per_decade", "location_sigma_db"):
        value = table.get(key, 0.0 if key == "slope_db_per_decade" else None)
        if value is None and key == "offset_db":
            raise ProfilerError(f"calibration file {p}: {where}offset_db is missing; "
                                "write it with profiler survey --calibration-out")
        if value is not None and (isinstance(value, bool) or not isinstance(value, (int, float))
                                  or not math.isfinite(value)):
            raise ProfilerError(f"calibration file {p}: {where}{key} must be a number, got {value!r}")
        out[key] = None if value is None else float(value)
    return out


def _read(path):
    """The file's parsed TOML and its SHA-256, refusing in one line."""
    from pathlib import Path

    try:
        import tomllib
    except ModuleNotFoundError:  # pragma: no cover - Python 3.10
        import tomli as tomllib

    p = Path(path)
    try:
        raw = p.read_bytes()
        data = tomllib.loads(raw.decode("utf-8"))
    except FileNotFoundError:
        raise ProfilerError(f"calibration file not found: {p}; check --calibration") from None
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        reason = " ".join(str(exc).split())
        raise ProfilerError(f"calibration file {p} is not readable TOML ({reason}); "
                            "write it with profiler survey --calibration-out") from None
    return p, data, hashlib.sha256(raw).hexdigest()


def read_calibration(path) -> dict:
    """Read a ``--calibration-out`` TOML file into the form :func:`calibration_correction_db` takes.

    Parameters
    ----------
    path : str or os.PathLike
        The file: ``offset_db``, ``slope_db_per_decade``, optional
        ``location_sigma_db`` and ``[clutter.NAME]`` tables with the same keys.

    Returns
    -------
    dict
        ``offset_db``, ``slope_db_per_decade``, ``location_sigma_db`` (None
        when absent) and ``clutter`` (name -> terms).

    Raises
    ------
    ProfilerError
        One line naming the file for a missing file, bad TOML or a missing or non-numeric key.
    """
    return _parse(*_read(path)[:2])


def _parse(p, data) -> dict:
    """The terms of a parsed calibration file (:func:`read_calibration`)."""
    out = _terms(data, "", p)
    clutter = data.get("clutter", {})
    if not isinstance(clutter, dict):
        raise ProfilerError(f"calibration file {p}: clutter must be tables [clutter.NAME]")
    out["clutter"] = {}
    for name, table in clutter.items():
        if not isinstance(table, dict):
            raise ProfilerError(f"calibration file {p}: clutter.{name} must be a table [clutter.{name}]")
        out["clutter"][str(name)] = _terms(table, f"[clutter.{name}] ", p)
    return out


def load_calibration(path) -> Calibration:
    """Read a calibration file (:func:`read_calibration`) with its path and SHA-256 digest.

    Parameters
    ----------
    path : str or os.PathLike
        The ``--calibration`` file.

    Returns
    -------
    Calibration
        The terms, the path as given and the file's digest.

    Raises
    ------
    ProfilerError
        As :func:`read_calibration`.
    """
    p, data, digest = _read(path)
    terms = _parse(p, data)
    clutter = tuple((name, t["offset_db"], t["slope_db_per_decade"]) for name, t in sorted(terms["clutter"].items()))
    return Calibration(path=str(path), sha256=digest, offset_db=terms["offset_db"],
                       slope_db_per_decade=terms["slope_db_per_decade"],
                       location_sigma_db=terms["location_sigma_db"], clutter=clutter)


def as_calibration(value):
    """``calibration=`` of the API: None, a :class:`Calibration`, or a file path (read here)."""
    if value is None or isinstance(value, Calibration):
        return value
    return load_calibration(value)
