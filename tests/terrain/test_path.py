"""Geodesic sampling checked against geographiclib (Karney's own implementation,
independent of PROJ/pyproj)."""

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic

from profiler.errors import ProfilerError
from profiler.terrain.geodesic import geodesic_path

CASES = [
    # (lat_a, lon_a, lat_b, lon_b, step_m) -- arbitrary test sites, not real installations
    (46.0, 7.0, 46.1, 7.2, 30.0),
    (-29.9125, -19.955, -29.9, -19.825, 30.0),    # southern + western hemisphere
    (0.1, 179.95, -0.05, -179.9, 50.0),           # across the antimeridian
    (60.0, 10.0, 60.9, 11.5, 90.0),               # ~110 km
    (-45.0, -70.0, -45.0, -69.0, 25.0),           # east-west at 45 S
]


@pytest.mark.parametrize("lat_a,lon_a,lat_b,lon_b,step", CASES)
def test_distance_and_azimuths_match_geographiclib(lat_a, lon_a, lat_b, lon_b, step):
    p = geodesic_path(lat_a, lon_a, lat_b, lon_b, step)
    ref = Geodesic.WGS84.Inverse(lat_a, lon_a, lat_b, lon_b)
    assert abs(p.length_m - ref["s12"]) < 1e-3                       # 1 mm
    assert abs(((p.azimuth_a_to_b_deg - ref["azi1"]) + 180) % 360 - 180) < 1e-6
    # geographiclib azi2 is the forward azimuth at B; the back azimuth is azi2 + 180.
    back = (ref["azi2"] + 180.0) % 360.0
    assert abs(((p.azimuth_b_to_a_deg - back) + 180) % 360 - 180) < 1e-6


@pytest.mark.parametrize("lat_a,lon_a,lat_b,lon_b,step", CASES)
def test_samples_lie_on_the_geodesic_at_their_distance(lat_a, lon_a, lat_b, lon_b, step):
    p = geodesic_path(lat_a, lon_a, lat_b, lon_b, step)
    line = Geodesic.WGS84.InverseLine(lat_a, lon_a, lat_b, lon_b)
    idx = np.linspace(0, p.distance_m.size - 1, 25).astype(int)
    for i in idx:
        pos = line.Position(p.distance_m[i])
        assert abs(p.lat_deg[i] - pos["lat2"]) < 1e-8
        dlon = (p.lon_deg[i] - pos["lon2"] + 180) % 360 - 180
        assert abs(dlon) < 1e-8
    assert -180 <= p.lon_deg.min() and p.lon_deg.max() <= 180


@pytest.mark.parametrize("lat_a,lon_a,lat_b,lon_b,step", CASES)
def test_spacing_is_equal_and_not_larger_than_step(lat_a, lon_a, lat_b, lon_b, step):
    p = geodesic_path(lat_a, lon_a, lat_b, lon_b, step)
    spacing = np.diff(p.distance_m)
    assert spacing.max() <= step + 1e-9
    assert np.allclose(spacing, spacing[0], rtol=1e-9)
    assert p.distance_m[0] == 0 and p.distance_m[-1] == pytest.approx(p.length_m)
    assert (p.lat_deg[0], p.lon_deg[0]) == pytest.approx((lat_a, lon_a))
    assert p.lat_deg[-1] == pytest.approx(lat_b) and p.lon_deg[-1] == pytest.approx(lon_b)


@pytest.mark.parametrize("bad", [(91, 0), (-90.5, 0), (0, 181), (float("nan"), 0)])
def test_bad_coordinates_are_refused(bad):
    with pytest.raises(ProfilerError):
        geodesic_path(bad[0], bad[1], 10, 10, 30)


def test_identical_sites_are_refused():
    with pytest.raises(ProfilerError, match="same point"):
        geodesic_path(10, 10, 10, 10, 30)
