"""Datum statement against what pyproj (the independent reference) reports for EPSG CRSs."""

import pyproj
import pytest

from profiler.errors import ProfilerError
from profiler.terrain.datum import datum_text, vertical_datums

PREFIX = "Horizontal: WGS84; heights: metres above mean sea level as given by the elevation data; "


def _pyproj_vertical_datum(code):
    """Reference: the datum of the vertical sub-CRS as pyproj reports it."""
    (vertical,) = [sub for sub in pyproj.CRS(code).sub_crs_list if sub.is_vertical]
    return vertical.datum.name


def test_horizontal_only_crs_states_no_vertical_datum():
    assert datum_text([pyproj.CRS("EPSG:4326").to_wkt()]) == PREFIX + "vertical datum: not stated in the data"
    assert datum_text([]) == PREFIX + "vertical datum: not stated in the data"
    assert datum_text([None, ""]) == PREFIX + "vertical datum: not stated in the data"


def test_compound_egm96():
    # EPSG:4326+5773 = WGS 84 + EGM96 height; EPSG registry: EPSG:5773 "EGM96 height" on datum
    # EPSG:5171 "EGM96 geoid" (datum codes from memory; the names are checked against pyproj).
    expected = _pyproj_vertical_datum("EPSG:4326+5773")
    assert expected == "EGM96 geoid"
    assert datum_text([pyproj.CRS("EPSG:4326+5773").to_wkt()]) == PREFIX + "vertical datum: EGM96 geoid"


def test_compound_utm_navd88():
    # EPSG:5703 "NAVD88 height" on datum EPSG:5103 "North American Vertical Datum 1988".
    expected = _pyproj_vertical_datum("EPSG:32633+5703")
    assert expected == "North American Vertical Datum 1988"
    assert datum_text(["EPSG:32633+5703"]) == PREFIX + f"vertical datum: {expected}"


def test_one_file_stating_a_datum_is_enough_and_names_are_distinct():
    files = [pyproj.CRS("EPSG:4326").to_wkt(), "EPSG:4326+5773", "EPSG:9518", "EPSG:4326+5773"]
    # EPSG:9518 = WGS 84 + EGM2008 height (datum "EGM2008 geoid", EPSG registry).
    assert vertical_datums(files) == ("EGM96 geoid", _pyproj_vertical_datum("EPSG:9518"))
    assert datum_text(files).endswith("vertical datum: EGM96 geoid, EGM2008 geoid")


def test_plain_vertical_crs():
    assert vertical_datums([pyproj.CRS("EPSG:5773")]) == (pyproj.CRS("EPSG:5773").datum.name,)


def test_unreadable_crs_is_profiler_error():
    with pytest.raises(ProfilerError, match="cannot read the elevation file's CRS"):
        datum_text(["NOT A CRS"])
