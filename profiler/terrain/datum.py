"""Datum statement of a sheet: horizontal WGS84, heights and their vertical datum.

Site coordinates are WGS84 latitude/longitude; heights are metres above
mean sea level as the elevation data give them.  The vertical datum is
named only when an elevation file's coordinate reference system states one
(a compound CRS with a vertical component, e.g. "WGS 84 + EGM96 height", or
a vertical CRS); most DEM files carry a horizontal CRS only, and then the
sheet says so rather than guessing.

References
----------
.. [1] ISO 19111:2019 "Referencing by coordinates" / OGC 18-010r7 (WKT2):
   compound CRS = horizontal CRS + vertical CRS; the vertical CRS names its
   vertical datum (read with pyproj: ``CRS.sub_crs_list``,
   ``CRS.is_vertical``, ``CRS.datum.name``).
"""

from __future__ import annotations

from ..errors import ProfilerError

HORIZONTAL_TEXT = "Horizontal: WGS84"
HEIGHTS_TEXT = "heights: metres above mean sea level as given by the elevation data"
NOT_STATED = "not stated in the data"


def _vertical_datum_name(crs):
    """Vertical datum name of a pyproj CRS, or None when it states none."""
    candidates = crs.sub_crs_list if crs.is_compound else [crs]
    for sub in candidates:
        if sub.is_vertical and not sub.is_compound and sub.datum is not None:
            return sub.datum.name
    return None


def vertical_datums(crs_wkt_list) -> tuple[str, ...]:
    """Vertical datum names stated by the elevation files' CRSs.

    Parameters
    ----------
    crs_wkt_list : iterable
        One CRS per elevation file: WKT, an "EPSG:..." string, a
        ``pyproj.CRS`` (anything ``pyproj.CRS.from_user_input`` takes); None
        or "" for a file without a CRS.

    Returns
    -------
    tuple of str
        The distinct vertical datum names in first-seen order (empty when
        no file states one).

    Raises
    ------
    ProfilerError
        A CRS pyproj cannot read.

    References
    ----------
    .. [1] ISO 19111:2019, compound and vertical CRS.
    """
    import pyproj

    names = []
    for item in crs_wkt_list:
        if item is None or (isinstance(item, str) and not item.strip()):
            continue
        try:
            crs = pyproj.CRS.from_user_input(item)
        except pyproj.exceptions.CRSError as exc:
            text = str(item)
            raise ProfilerError(f"cannot read the elevation file's CRS {text[:60]!r}: {exc}") from None
        name = _vertical_datum_name(crs)
        if name is not None and name not in names:
            names.append(name)
    return tuple(names)


def datum_text(crs_wkt_list) -> str:
    """The sheet's datum statement.

    Parameters
    ----------
    crs_wkt_list : iterable
        One CRS per elevation file, as in :func:`vertical_datums`.

    Returns
    -------
    str
        "Horizontal: WGS84; heights: metres above mean sea level as given by
        the elevation data; vertical datum: <name>" (several names joined by
        ", " when the files differ), or "...; vertical datum: not stated in
        the data".

    References
    ----------
    .. [1] ISO 19111:2019, compound and vertical CRS.
    """
    names = vertical_datums(crs_wkt_list)
    return f"{HORIZONTAL_TEXT}; {HEIGHTS_TEXT}; vertical datum: {', '.join(names) if names else NOT_STATED}"
