"""Sheet information for the title block: project, document, revision, names.

The fields come from a small TOML file (``--sheet-info FILE.toml``) and/or
command-line options; an option that is given wins over the file.  Text is
kept whole: nothing is cut or shortened here (wrapping is the sheet's job).

Example file::

    project = "Vellmoor valley LoRaWAN"
    document = "VV-RF-001"
    revision = "B"
    prepared_by = "A. Planner"
    checked_by = ""
    organisation = "Vellmoor water board"
    notes = "Gateway on the pump house roof."

References
----------
.. [1] TOML v1.0.0 specification, https://toml.io/en/v1.0.0 (read with the
   standard-library ``tomllib`` on Python 3.11+, ``tomli`` before).
"""

from __future__ import annotations

import dataclasses
import sys
from dataclasses import dataclass
from pathlib import Path

from ..errors import ProfilerError, refuse_empty_path


@dataclass(frozen=True)
class SheetInfo:
    """Title-block fields of a sheet; empty strings are blank boxes to fill by hand."""

    project: str = ""
    document: str = ""
    revision: str = ""
    prepared_by: str = ""
    checked_by: str = ""
    organisation: str = ""
    notes: str = ""

    def to_dict(self) -> dict:
        """The fields as a plain dict (field name -> text)."""
        return dataclasses.asdict(self)


SHEET_INFO_KEYS = tuple(field.name for field in dataclasses.fields(SheetInfo))
"""The keys a sheet-information file may hold, in title-block order."""


def _toml_module():
    if sys.version_info >= (3, 11):
        import tomllib
        return tomllib
    import tomli
    return tomli


def read_sheet_info(path) -> SheetInfo:
    """Read a sheet-information TOML file.

    Parameters
    ----------
    path : str or os.PathLike
        TOML file with top-level string keys among :data:`SHEET_INFO_KEYS`;
        keys left out stay empty.

    Returns
    -------
    SheetInfo

    Raises
    ------
    ProfilerError
        One line naming the file (and the key): unreadable file, invalid
        TOML, an unknown key, or a value that is not a string.

    References
    ----------
    .. [1] TOML v1.0.0 (strings, key/value pairs, tables).
    """
    refuse_empty_path(path, "--sheet-info", "a TOML file")
    toml = _toml_module()
    path = Path(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise ProfilerError(f"cannot read sheet information {path}: {exc.strerror or exc}") from None
    try:
        table = toml.loads(data.decode("utf-8"))
    except UnicodeDecodeError:
        raise ProfilerError(f"sheet information {path} is not UTF-8 text: save it as UTF-8") from None
    except toml.TOMLDecodeError as exc:
        raise ProfilerError(f"sheet information {path} is not valid TOML: {exc}") from None
    for key, value in table.items():
        if key not in SHEET_INFO_KEYS:
            raise ProfilerError(f"sheet information {path}: unknown key {key!r}; "
                                f"allowed keys: {', '.join(SHEET_INFO_KEYS)}")
        if not isinstance(value, str):
            raise ProfilerError(f"sheet information {path}: key {key!r} must be a quoted string, "
                                f"got {type(value).__name__}")
    return SheetInfo(**table)


def merge(info: SheetInfo | None, **overrides) -> SheetInfo:
    """Sheet information with the given (non-None) options winning over ``info``.

    Parameters
    ----------
    info : SheetInfo or None
        Fields read from a file (None: all empty).
    **overrides : str or None
        Field name -> text; None means "option not given" and keeps the
        value from ``info``.  An empty string clears the field.

    Returns
    -------
    SheetInfo

    Raises
    ------
    TypeError
        For a name that is not a field, or a value that is not a string
        (a programming error, not user input).
    """
    base = info if info is not None else SheetInfo()
    unknown = set(overrides) - set(SHEET_INFO_KEYS)
    if unknown:
        raise TypeError(f"not sheet-information fields: {', '.join(sorted(unknown))}")
    given = {key: value for key, value in overrides.items() if value is not None}
    for key, value in given.items():
        if not isinstance(value, str):
            raise TypeError(f"sheet-information field {key} must be str, got {type(value).__name__}")
    return dataclasses.replace(base, **given)
