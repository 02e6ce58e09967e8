"""Magnetic declination from the World Magnetic Model, and magnetic azimuths.

Installers align antennas with a compass, which points to magnetic north.
The declination D (east positive) is the angle from true north to the
horizontal magnetic field; a true azimuth Az_true reads on a compass as
Az_mag = (Az_true - D) mod 360.

The field comes from the US/UK World Magnetic Model (WMM), evaluated by the
``pygeomag`` package, which ships the WMM coefficient files (WMM2010 to
WMM2025) and works offline.  The model is chosen by the calendar year of the
date (the model whose five-year life span holds it); a date outside every
shipped model raises :class:`~profiler.errors.ProfilerError` rather than
extrapolating (the model's secular variation is linear and is not meant to
be used beyond its life span).

``pygeomag`` evaluates one point per call, so :func:`declination_deg` loops
over the points.  That is meant for the handful of sites of a sheet (about
0.1 ms a point), not for rasters.

References
----------
.. [1] Chulliat, A. et al., "The US/UK World Magnetic Model for 2025-2030:
   Technical Report", NOAA NCEI / British Geological Survey, 2025: the
   seven field elements (D = arctan(Y, X), H = sqrt(X^2 + Y^2)), the
   model life span 2025.0-2030.0 with linear secular variation, and the
   Blackout Zone (H < 2000 nT) and Caution Zone (2000 nT <= H < 6000 nT)
   where a compass is unreliable (topics named; section numbers differ
   between the report editions).
.. [2] pygeomag (https://github.com/boxpet/pygeomag), a Python port of the
   NOAA WMM legacy C code, with the NOAA coefficient files.
"""

from __future__ import annotations

import datetime as _dt

import numpy as np

from ..errors import ProfilerError

BLACKOUT_H_NT = 2000.0
"""Horizontal intensity below which the WMM report's Blackout Zone begins [nT] (WMM2025 report, Blackout Zone)."""

CAUTION_H_NT = 6000.0
"""Horizontal intensity below which the WMM report's Caution Zone begins [nT] (WMM2025 report, Blackout Zone)."""

MODEL_LIFE_SPAN_YEARS = 5.0
"""Life span of one WMM release after its epoch [years] (WMM2025 report, model life span)."""


def decimal_year(date: _dt.date) -> float:
    """Decimal year of a calendar date, the time argument of the WMM.

    Parameters
    ----------
    date : datetime.date or datetime.datetime
        The date (a datetime is reduced to its date; the field changes by
        far less than the model's accuracy within a day).

    Returns
    -------
    float
        year + (day of year - 1) / (days in that year) [year], so that
        1 January is exactly the integer year.

    References
    ----------
    .. [1] WMM2025 Technical Report (time argument in decimal years).
    """
    if isinstance(date, _dt.datetime):
        date = date.date()
    if not isinstance(date, _dt.date):
        raise ProfilerError(f"magnetic model date must be a calendar date, got {date!r}")
    start = _dt.date(date.year, 1, 1)
    days_in_year = (_dt.date(date.year + 1, 1, 1) - start).days
    return date.year + (date - start).days / days_in_year


def _model(date: _dt.date):
    """The pygeomag model whose life span holds ``date`` (ProfilerError otherwise)."""
    import pygeomag

    year = decimal_year(date)
    try:
        model = pygeomag.GeoMag(base_year=date)
        start, end = model.life_span
    except ValueError:
        start = end = None
    if start is None or not start <= year < end:
        raise ProfilerError(
            f"no World Magnetic Model in pygeomag {pygeomag.__version__} covers {date.isoformat()}; "
            "give a date inside a model's five-year life span or upgrade pygeomag")
    return model


def model_info(date: _dt.date) -> dict:
    """Name, epoch and validity of the World Magnetic Model used for a date.

    Parameters
    ----------
    date : datetime.date
        The sheet's date.

    Returns
    -------
    dict
        ``{"model": "WMM2025", "epoch": 2025.0 [decimal year],
        "valid_from": "2025-01-01", "valid_to": "2029-12-31" (last valid
        day), "release_date": "2024-11-13", "package": "pygeomag 1.1.0"}``.

    Raises
    ------
    ProfilerError
        If no shipped model covers the date.

    References
    ----------
    .. [1] WMM2025 Technical Report (model life span).
    """
    import pygeomag

    model = _model(date)
    start, end = model.life_span
    month, day, year = (int(part) for part in model.release_date.split("/"))
    return {
        "model": model.model.replace("-", ""),
        "epoch": float(start),
        "valid_from": _dt.date(int(start), 1, 1).isoformat(),
        "valid_to": (_dt.date(int(end), 1, 1) - _dt.timedelta(days=1)).isoformat(),
        "release_date": _dt.date(year, month, day).isoformat(),
        "package": f"pygeomag {pygeomag.__version__}",
    }


def _field(lat_deg, lon_deg, date, height_m):
    """Declination [deg] and horizontal intensity [nT] at broadcast points."""
    lat, lon, height = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (lat_deg, lon_deg, height_m)))
    if not (np.all(np.isfinite(lat)) and np.all(np.abs(lat) <= 90.0)):
        raise ProfilerError("latitude for the magnetic model must be within -90..90 degrees")
    if not np.all(np.isfinite(lon)) or not np.all(np.isfinite(height)):
        raise ProfilerError("longitude and height for the magnetic model must be finite numbers")
    model = _model(date)
    year = decimal_year(date)
    lon180 = (lon + 180.0) % 360.0 - 180.0
    dec = np.empty(lat.shape)
    h_nt = np.empty(lat.shape)
    # pygeomag is scalar-only: one call per point (a sheet has a handful of sites).
    for index in np.ndindex(lat.shape):
        result = model.calculate(glat=float(lat[index]), glon=float(lon180[index]),
                                 alt=float(height[index]) / 1000.0, time=year)
        dec[index] = result.d
        h_nt[index] = result.h
    return dec, h_nt


def declination_deg(lat_deg, lon_deg, date: _dt.date, height_m=0.0):
    """Magnetic declination from the World Magnetic Model.

    Parameters
    ----------
    lat_deg, lon_deg : array_like
        Geodetic latitude and longitude (WGS84) [deg]; broadcast together.
    date : datetime.date
        Date of the sheet; selects the model and the secular variation.
    height_m : array_like, optional
        Height above mean sea level [m] (the WMM accepts MSL or ellipsoidal
        height; the difference is negligible for declination).

    Returns
    -------
    numpy.ndarray or float
        Declination D [deg], east of true north positive; a float for
        scalar input.

    Raises
    ------
    ProfilerError
        For coordinates out of range or a date outside every shipped model.

    Notes
    -----
    Loops over the points because ``pygeomag`` is scalar-only; meant for a
    handful of sites.

    References
    ----------
    .. [1] WMM2025 Technical Report (field elements), D = arctan(Y, X).
    """
    dec, _ = _field(lat_deg, lon_deg, date, height_m)
    return float(dec) if dec.ndim == 0 else dec


def compass_caution(lat_deg, lon_deg, date: _dt.date, height_m=0.0):
    """Warning text where a magnetic compass is unreliable, "" elsewhere.

    Parameters
    ----------
    lat_deg, lon_deg : array_like
        Geodetic latitude and longitude (WGS84) [deg].
    date : datetime.date
        Date of the sheet.
    height_m : array_like, optional
        Height above mean sea level [m].

    Returns
    -------
    str or list of str
        Per point: a Blackout Zone text (H < 2000 nT), a Caution Zone text
        (2000 <= H < 6000 nT) or ""; a str for scalar input, else a flat
        list.

    References
    ----------
    .. [1] WMM2025 Technical Report (Blackout and Caution Zones).
    """
    _, h_nt = _field(lat_deg, lon_deg, date, height_m)
    texts = [_caution_text(h) for h in h_nt.ravel()]
    return texts[0] if h_nt.ndim == 0 else texts


def _caution_text(h_nt):
    if h_nt < BLACKOUT_H_NT:
        return f"compass unreliable here (WMM Blackout Zone: horizontal field {h_nt:.0f} nT < {BLACKOUT_H_NT:.0f} nT)"
    if h_nt < CAUTION_H_NT:
        return (f"compass may be unreliable here (WMM Caution Zone: horizontal field {h_nt:.0f} nT "
                f"< {CAUTION_H_NT:.0f} nT)")
    return ""


def magnetic_azimuth_deg(true_azimuth_deg, declination_deg):
    """Magnetic azimuth from a true azimuth and the declination.

    Parameters
    ----------
    true_azimuth_deg : array_like
        Azimuth from true north, clockwise [deg].
    declination_deg : array_like
        Magnetic declination, east positive [deg].

    Returns
    -------
    numpy.ndarray or float
        (true - declination) mod 360, in [0, 360) [deg].

    References
    ----------
    .. [1] WMM2025 Technical Report (field elements: D is the angle from
       true north to the horizontal field, east positive).
    """
    az = np.mod(np.asarray(true_azimuth_deg, dtype=float) - np.asarray(declination_deg, dtype=float), 360.0)
    az = np.where(az >= 360.0, 0.0, az)  # mod of a tiny negative number rounds up to 360
    return float(az) if az.ndim == 0 else az


def bearing_block(lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg, azimuth_a_to_b_deg, azimuth_b_to_a_deg,
                  date: _dt.date, height_a_m=0.0, height_b_m=0.0) -> dict:
    """The JSON magnetic-bearing keys of a link.

    Each magnetic azimuth uses the declination at the site it is read from
    (A to B at A, B to A at B).

    Parameters
    ----------
    lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg : float
        Site coordinates (WGS84) [deg].
    azimuth_a_to_b_deg, azimuth_b_to_a_deg : float
        True azimuths at A towards B and at B towards A [deg].
    date : datetime.date
        Date of the sheet.
    height_a_m, height_b_m : float, optional
        Site heights above mean sea level [m].

    Returns
    -------
    dict
        ``{"declination_a_deg", "declination_b_deg",
        "azimuth_a_to_b_magnetic_deg", "azimuth_b_to_a_magnetic_deg",
        "magnetic_model": model_info(date), "compass_caution_a",
        "compass_caution_b"}`` (floats unrounded; cautions "" when none).

    References
    ----------
    .. [1] WMM2025 Technical Report (field elements; Blackout and Caution Zones).
    """
    lat = [lat_a_deg, lat_b_deg]
    lon = [lon_a_deg, lon_b_deg]
    height = [height_a_m, height_b_m]
    (dec_a, dec_b), (h_a, h_b) = _field(lat, lon, date, height)
    return {
        "declination_a_deg": float(dec_a),
        "declination_b_deg": float(dec_b),
        "azimuth_a_to_b_magnetic_deg": magnetic_azimuth_deg(azimuth_a_to_b_deg, dec_a),
        "azimuth_b_to_a_magnetic_deg": magnetic_azimuth_deg(azimuth_b_to_a_deg, dec_b),
        "magnetic_model": model_info(date),
        "compass_caution_a": _caution_text(h_a),
        "compass_caution_b": _caution_text(h_b),
    }
