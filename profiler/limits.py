"""Physical ranges of every numeric input, checked in one place.

The command-line parameter types (:mod:`profiler.cli.options`) and the
Python entry points (:func:`profiler.products.link.analyze_link`,
:func:`profiler.products.mast.solve.solve_mast`, :func:`profiler.terrain.profile.profile_from_dem`,
:func:`profiler.terrain.profile.read_profile_csv`) all call :func:`check` with the
option name, so a value is refused with the same one-line message
("--mast-a 1e+308 m is out of range; use 0 to 1000 m") wherever it comes
from.  A new option gets its range by adding one line to :data:`LIMITS`.

The ranges are deliberately wide (anything a real installation could use)
but finite, so that no computation downstream can overflow: the largest
product in the geometry (mast x distance, k x Earth radius, ...) stays far
below the float limits.  The same module holds the sample-count guard
(:func:`sample_count`, checked before any array is allocated) and the guard
against non-finite results (:func:`quiet_numerics`, :func:`require_finite`).
"""

from __future__ import annotations

import contextlib
import math
import warnings
from dataclasses import dataclass, fields, is_dataclass
from typing import Iterable, Iterator, Mapping

from .errors import ProfilerError

__all__ = ["Limit", "LIMITS", "MAX_PROFILE_SAMPLES", "MAX_NAME_CHARS", "check_name", "check", "check_values",
           "check_fields", "check_array", "sample_count", "quiet_numerics", "require_finite", "range_text"]


@dataclass(frozen=True)
class Limit:
    """The allowed closed range ``low <= value <= high`` of one input.

    Attributes
    ----------
    low, high : float
        Bounds, in ``unit``.
    unit : str
        Unit shown in messages (``""`` for a pure number).
    hint : str
        What the quantity is, added to the message (may be empty).
    integer : bool
        The value must be a whole number.
    low_open : bool
        ``low`` itself is not allowed (``low < value``).
    """

    low: float
    high: float
    unit: str = ""
    hint: str = ""
    integer: bool = False
    low_open: bool = False


#: Option name (or, for values read from files, a quantity name) -> its range.
#: Sources of the bounds: common practice unless stated.
LIMITS: dict[str, Limit] = {
    # sites and terrain
    "--mast-a": Limit(0.0, 1000.0, "m", "antenna height above ground at A"),
    "--mast-b": Limit(0.0, 1000.0, "m", "antenna height above ground at B"),
    "--step-m": Limit(0.001, 10_000.0, "m", "largest profile sample spacing"),
    # Lowest and highest land surface on Earth: about -430 m and 8849 m; the sea floor reaches -10935 m.
    "terrain": Limit(-11_000.0, 9_000.0, "m", "terrain height above mean sea level"),
    # Half the WGS84 meridian circumference is about 20 004 km: no path between two sites is longer.
    "distance": Limit(0.0, 20_100_000.0, "m", "distance from site A"),
    # radio frequency and refraction
    "--freq-mhz": Limit(1.0, 100_000.0, "MHz", "working frequency"),
    # k = 1e6 is a flat Earth for any path (bulge below a micrometre over 10 km), used for textbook checks.
    "--k": Limit(0.1, 1e6, "", "effective-Earth-radius factor"),
    "--low-k": Limit(0.1, 1e6, "", "low effective-Earth-radius factor"),
    "--clearance-ratio": Limit(0.0, 10.0, "", "fraction of the first Fresnel radius"),
    "--low-k-clearance": Limit(0.0, 10.0, "", "fraction of the first Fresnel radius"),
    # link budget
    "--tx-power-dbm": Limit(-30.0, 60.0, "dBm", "transmitter power"),
    "--tx-power-a-dbm": Limit(-30.0, 60.0, "dBm", "transmitter power at A"),
    "--tx-power-b-dbm": Limit(-30.0, 60.0, "dBm", "transmitter power at B"),
    "--gain-a-dbi": Limit(-30.0, 70.0, "dBi", "antenna gain at A"),
    "--gain-b-dbi": Limit(-30.0, 70.0, "dBi", "antenna gain at B"),
    "--cable-loss-a-db": Limit(0.0, 100.0, "dB", "feeder loss at A"),
    "--cable-loss-b-db": Limit(0.0, 100.0, "dB", "feeder loss at B"),
    "--fade-margin-db": Limit(0.0, 100.0, "dB", "required fade margin"),
    # Thermal noise is -174 dBm in 1 Hz at 290 K (ITU-R P.372): no receiver is more sensitive than that.
    "--sensitivity-dbm": Limit(-174.0, 0.0, "dBm", "receiver sensitivity"),
    "--bw-khz": Limit(1.0, 1000.0, "kHz", "LoRa bandwidth"),
    "--noise-figure-db": Limit(0.0, 30.0, "dB", "receiver noise figure"),
    "--noise-figure-a-db": Limit(0.0, 30.0, "dB", "receiver noise figure at A"),
    "--noise-figure-b-db": Limit(0.0, 30.0, "dB", "receiver noise figure at B"),
    "--sf": Limit(7, 12, "", "LoRa spreading factor", integer=True),
    # LoRa PHY payload length is one byte (Semtech SX1276 datasheet, section 4.1.1.6): at most 255.
    "--payload-bytes": Limit(1, 255, "bytes", "LoRa PHY payload", integer=True),
    "--app-payload-bytes": Limit(0, 255, "bytes", "application payload", integer=True),
    "--sea-fraction": Limit(0.0, 1.0, "", "fraction of the path over sea"),
    "--extra-loss-db": Limit(0.0, 300.0, "dB", "fixed extra loss"),
    "--extra-loss-a-db": Limit(0.0, 300.0, "dB", "fixed extra loss at A"),
    "--extra-loss-b-db": Limit(0.0, 300.0, "dB", "fixed extra loss at B"),
    # terminal clutter: R above 0 and at most the land cover's highest (profiler.terrain.landcover.MAX_CLUTTER_HEIGHT_M)
    "--clutter-height-a-m": Limit(0.0, 100.0, "m", "clutter height at A", low_open=True),
    "--clutter-height-b-m": Limit(0.0, 100.0, "m", "clutter height at B", low_open=True),
    "--terminal-clutter-m": Limit(0.0, 10_000.0, "m", "reach of a terminal's clutter along the path",
                                  low_open=True),
    # propagation model (ITU-R P.1812-8 section 1: 1-50 % of time, 1-99 % of locations)
    "--time-percent": Limit(1.0, 50.0, "%", "time percentage"),
    "--location-percent": Limit(1.0, 99.0, "%", "location percentage"),
    "--location-sigma-db": Limit(0.0, 30.0, "dB", "location variability"),
    "--area-width-m": Limit(1.0, 100_000.0, "m", "prediction resolution"),
    # k = 157 / (157 - ΔN) must stay within the range of --k (0.1 to 1e6): ΔN from -1413 to 157 - 1.57e-4.
    "--delta-n": Limit(-1413.0, 156.9, "N-units/km", "refractivity lapse rate"),
    "--n0": Limit(200.0, 500.0, "N-units", "sea-level surface refractivity"),
    "--coast-distance-a-km": Limit(0.0, 20_100.0, "km", "distance of A from the coast"),
    "--coast-distance-b-km": Limit(0.0, 20_100.0, "km", "distance of B from the coast"),
    # mast search
    "--min-margin-db": Limit(-100.0, 100.0, "dB", "least link margin"),
    "--max-mast-m": Limit(0.0, 1000.0, "m", "highest allowed mast", low_open=True),
    "--mast-step-m": Limit(0.01, 100.0, "m", "height step of the mast search"),
    # network
    "--max-distance-km": Limit(0.0, 20_100.0, "km", "longest link considered", low_open=True),
    "--min-probability": Limit(0.0, 1.0, "", "least probability of being heard"),
    "--workers": Limit(1, 256, "", "worker processes", integer=True),
    "--cell-m": Limit(1.0, 10_000.0, "m", "side of a survey location cell", low_open=False),
    "--folds": Limit(2, 100, "", "cross-validation folds", integer=True),
    # coverage (grids over MAX_PIXELS of profiler.products.coverage.grid stream; MAX_STREAM_PIXELS bounds them)
    "--max-memory-mb": Limit(0.0, 1_048_576.0, "MB", "memory budget of a coverage map", low_open=True),
    "--mast-m": Limit(0.0, 1000.0, "m", "gateway antenna height above ground"),
    "--node-mast-m": Limit(0.0, 1000.0, "m", "node antenna height above ground"),
    "--radius-km": Limit(0.0, 200.0, "km", "coverage radius", low_open=True),
    "--resolution-m": Limit(0.1, 10_000.0, "m", "coverage pixel size"),
    # siting
    "--redundancy": Limit(1, 10, "", "gateways each node must hear", integer=True),
    "--max-gateways": Limit(1, 10_000, "", "most gateways to choose", integer=True),
    "--time-limit-s": Limit(0.01, 86_400.0, "s", "solver time limit"),
    # figure
    "--dpi": Limit(50, 1200, "dots per inch", "figure resolution", integer=True),
}

MAX_PROFILE_SAMPLES = 500_000
"""Upper bound on profile samples (about 12 MB per array); a finer step is refused."""


#: Longest site name [characters] any command or entry point accepts: a sheet prints every name
#: whole (wrapped, never cut), and a name much longer than a sentence is a mistake, not a name.
MAX_NAME_CHARS = 200


def check_name(name, label: str = "site name"):
    """Refuse a name longer than :data:`MAX_NAME_CHARS` characters with one line naming ``label``
    (an option such as ``--name-a``, or "sites file F line N: the site name"); returns ``name``.

    Cheap and called before any computation, so a pasted paragraph is refused at once instead of
    being laid out on a sheet.
    """
    if name is not None and len(str(name)) > MAX_NAME_CHARS:
        raise ProfilerError(f"{label} is {len(str(name))} characters long; use at most {MAX_NAME_CHARS} "
                            "characters")
    return name


def _number_text(x) -> str:
    if isinstance(x, float) and x.is_integer() and abs(x) < 1e9:
        return str(int(x))
    return f"{x:g}" if isinstance(x, float) else str(x)


def range_text(name: str) -> str:
    """``"0 to 1000 m"``: the allowed range of ``name`` as text."""
    lim = LIMITS[name]
    low = f"more than {_number_text(lim.low)}" if lim.low_open else _number_text(lim.low)
    unit = f" {lim.unit}" if lim.unit else ""
    return f"{low} to {_number_text(lim.high)}{unit}"


def _refuse(label: str, shown: str, name: str, problem: str) -> ProfilerError:
    lim = LIMITS[name]
    hint = f" ({lim.hint})" if lim.hint else ""
    return ProfilerError(f"{label} {shown} {problem}; use {range_text(name)}{hint}")


def check(name: str, value, label: str | None = None):
    """Parse ``value`` and check it against ``LIMITS[name]``.

    Parameters
    ----------
    name : str
        Key of :data:`LIMITS`: an option name such as ``"--mast-a"``.
    value : str, int or float
        The value (text is parsed as a number, never evaluated).
    label : str, optional
        How the value is named in the message (default ``name``), e.g.
        ``"profile file p.csv line 7: elevation_m"``.

    Returns
    -------
    float or int
        The value (``int`` for whole-number limits).

    Raises
    ------
    ProfilerError
        "--mast-a 1e+308 m is out of range; use 0 to 1000 m (...)".
    """
    lim = LIMITS[name]
    label = label or name
    unit = f" {lim.unit}" if lim.unit else ""
    try:
        x = float(str(value).strip()) if isinstance(value, (str, bytes)) else float(value)
    except (TypeError, ValueError, OverflowError):
        raise _refuse(label, repr(value), name, "is not a number") from None
    if not math.isfinite(x):
        raise _refuse(label, str(value).strip(), name, "is not a finite number")
    shown = f"{_number_text(value) if isinstance(value, (int, float)) else str(value).strip()}{unit}"
    if lim.integer and x != math.floor(x):
        raise _refuse(label, shown, name, "is not a whole number")
    if x < lim.low or x > lim.high or (lim.low_open and x <= lim.low):
        raise _refuse(label, shown, name, "is out of range")
    return int(x) if lim.integer else x


def check_values(values: Mapping[str, object]) -> dict:
    """Check several values at once: ``{"--mast-a": 10.0, ...}``; ``None`` values are skipped."""
    return {name: check(name, v) for name, v in values.items() if v is not None}


def check_fields(obj) -> None:
    """Check every field of a dataclass whose option (``--`` + name with ``-``) has a limit.

    ``RadioSettings(tx_power_dbm=...)`` is checked against ``--tx-power-dbm``;
    a new field gets its check by adding its option to :data:`LIMITS`.
    """
    if not is_dataclass(obj):
        raise TypeError("check_fields needs a dataclass instance")
    for f in fields(obj):
        option = "--" + f.name.replace("_", "-")
        value = getattr(obj, f.name)
        if option in LIMITS and value is not None:
            check(option, value)


def check_array(name: str, values, where) -> None:
    """Check an array against ``LIMITS[name]``; ``where(i)`` names the first bad element.

    Vectorized: one comparison over the array, a message only for the first
    offending element (``where(i)`` returns e.g. ``"profile file p line 9: elevation_m"``).
    """
    import numpy as np

    a = np.asarray(values, dtype=float)
    lim = LIMITS[name]
    bad = ~np.isfinite(a) | (a < lim.low) | (a > lim.high)
    if bad.any():
        i = int(np.argmax(bad))
        check(name, float(a.flat[i]), label=where(i))


def sample_count(length_m: float, step_m: float, option: str = "--step-m") -> int:
    """Number of samples ``ceil(length / step) + 1`` (at least 3), refused before allocating.

    Raises
    ------
    ProfilerError
        When more than :data:`MAX_PROFILE_SAMPLES` would be needed (or the
        ratio is not finite), naming ``option`` and the smallest step that fits.
    """
    length, step = float(length_m), float(step_m)
    if not (math.isfinite(length) and length >= 0):
        raise ProfilerError(f"path length {length_m} m is not a finite distance; check the sites")
    if not (math.isfinite(step) and step > 0):
        raise ProfilerError(f"{option} must be a positive number of metres, got {step_m}")
    with quiet_numerics():
        ratio = length / step
    if not math.isfinite(ratio) or ratio + 1 > MAX_PROFILE_SAMPLES:
        least = length / (MAX_PROFILE_SAMPLES - 1)
        raise ProfilerError(
            f"the {length / 1000:.3f} km path would need more than {MAX_PROFILE_SAMPLES} samples at "
            f"{step:g} m spacing; give a coarser {option} (at least {least:.3g} m)")
    return max(int(math.ceil(ratio)) + 1, 3)


@contextlib.contextmanager
def quiet_numerics() -> Iterator[None]:
    """Silence numpy floating-point warnings inside the block.

    Numeric faults never reach the user as warnings; a result that came out
    non-finite is refused afterwards by :func:`require_finite`.
    """
    import numpy as np

    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore", RuntimeWarning)
        yield


def _lookup(report: Mapping, key: str):
    value = report
    for part in key.split("."):
        if not isinstance(value, Mapping) or part not in value:
            return None
        value = value[part]
    return value


def require_finite(report: Mapping, keys: Iterable[str], what: str = "result") -> None:
    """Refuse a report whose headline numbers are missing or not finite.

    Parameters
    ----------
    report : mapping
        A JSON report (non-finite numbers appear there as ``None``).
    keys : iterable of str
        Dotted keys that must hold finite numbers, e.g. ``"loss_db.total"``.
    what : str
        The command's result, for the message.
    """
    for key in keys:
        value = _lookup(report, key)
        ok = isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
        if not ok:
            raise ProfilerError(
                f"the {what} has no finite value for {key} (the inputs are at the edge of what the models "
                "can compute); check the masts, frequency, k-factor and terrain, or report it if they look normal")
