"""Earth curvature, Fresnel zone and elevation angles against closed forms and ITU-R P.526."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from profiler.errors import ProfilerError
from profiler.propagation import geometry
from profiler.propagation.free_space import wavelength_m


def test_effective_radius_four_thirds():
    # ITU-R P.452-18 eq. (6a): a_e = 6371 k; k = 4/3 gives 8495 km (P.452 text, median value).
    assert geometry.effective_radius_m(4 / 3) == pytest.approx(8494.667e3, abs=1)


@pytest.mark.parametrize("d_km", [1, 10, 50, 100])
def test_bulge_matches_exact_circle_geometry(d_km):
    # Closed form on a sphere of radius a_e: the height of the arc above the chord
    # at angle phi from A is a_e (cos(phi - theta/2) - cos(theta/2)), theta = d / a_e.
    # The parabolic bulge d1 d2 / (2 a_e) of P.526 section 2 must agree to 0.1 %.
    ae = geometry.effective_radius_m(4 / 3)
    d = d_km * 1000.0
    d1 = np.linspace(0, d, 101)
    theta, phi = d / ae, d1 / ae
    exact = ae * (np.cos(phi - theta / 2) - np.cos(theta / 2))
    approx = geometry.earth_bulge_m(d1, d - d1, ae)
    assert np.allclose(approx, exact, rtol=1e-3, atol=1e-6)


def test_bulge_hand_value():
    # Handbook value (from memory): midpoint bulge of a 50 km path at k = 4/3 is about 36.8 m
    # (d1 = d2 = 25 km: 25e3**2 / (2 * 8494.7e3) = 36.79 m).
    assert geometry.earth_bulge_m(25e3, 25e3, geometry.effective_radius_m(4 / 3)) == pytest.approx(36.79, abs=0.01)


@pytest.mark.parametrize("f_mhz,d1_km,d2_km", [(868.3125, 5, 9), (433.92, 1, 1), (2400, 20, 30), (915, 0.2, 14)])
def test_fresnel_radius_matches_p526_practical_units(f_mhz, d1_km, d2_km):
    # ITU-R P.526-15 eq. (3): R1 = 550 sqrt(d1 d2 / ((d1 + d2) f)), d in km, f in MHz.
    # The constant 550 is rounded from sqrt(c/1e6 * 1000) = 547.5, so agree to 0.5 %.
    r_p526 = 550.0 * math.sqrt(d1_km * d2_km / ((d1_km + d2_km) * f_mhz))
    r = geometry.fresnel_radius_m(d1_km * 1e3, d2_km * 1e3, wavelength_m(f_mhz))
    assert r == pytest.approx(r_p526, rel=5e-3)


def test_fresnel_radius_closed_form_and_ends():
    # P.526-15 eq. (2): F1 = sqrt(lambda d1 d2 / d). lambda = c / f with c = 299 792 458 m/s exactly.
    lam = 299_792_458.0 / 868.3125e6
    assert geometry.fresnel_radius_m(7000.0, 7000.0, lam) == pytest.approx(math.sqrt(lam * 3500.0), rel=1e-12)
    r = geometry.fresnel_radius_m(np.array([0.0, 14000.0]), np.array([14000.0, 0.0]), lam)
    assert np.all(r == 0)


@pytest.mark.parametrize("h_a,h_b,d_km", [(310.0, 95.0, 12.0), (20.0, 20.0, 30.0), (5.0, 900.0, 40.0)])
def test_elevation_angle_matches_spherical_geometry(h_a, h_b, d_km):
    # Exact elevation of B seen from A on a sphere of radius a_e:
    # theta = atan2(r_B cos(delta) - r_A, r_B sin(delta)), r = a_e + h, delta = d / a_e.
    # P.452-18 eq. (153) is its small-angle form; agree to 0.002 deg at these distances.
    ae = geometry.effective_radius_m(4 / 3)
    d = d_km * 1e3
    delta = d / ae
    ra, rb = ae + h_a, ae + h_b
    exact = math.degrees(math.atan2(rb * math.cos(delta) - ra, rb * math.sin(delta)))
    assert geometry.elevation_angle_deg(h_a, h_b, d, ae) == pytest.approx(exact, abs=2e-3)


@pytest.mark.parametrize("text,value", [("4/3", 4 / 3), ("1.333", 1.333), ("2/3", 2 / 3), (" 1 ", 1.0), ("0.5", 0.5),
                                        ("1e0", 1.0)])
def test_parse_k_factor(text, value):
    assert geometry.parse_k_factor(text) == pytest.approx(value)


@pytest.mark.parametrize("text", ["0", "-1", "4/0", "__import__('os')", "abc", "inf", "nan", "1/-3", ""])
def test_parse_k_factor_refuses(text):
    with pytest.raises(ProfilerError):
        geometry.parse_k_factor(text)


@settings(max_examples=60, deadline=None)
@given(h_a=st.floats(0, 2000), h_b=st.floats(0, 2000), d=st.floats(10, 2e5), frac=st.floats(0.01, 0.99),
       extra=st.floats(0.01, 100))
def test_clearance_increases_with_antenna_height(h_a, h_b, d, frac, extra):
    # The line of sight is linear in each antenna height with a non-negative weight.
    x = frac * d
    base = geometry.line_of_sight_m(x, d, h_a, h_b)
    assert geometry.line_of_sight_m(x, d, h_a + extra, h_b) >= base
    assert geometry.line_of_sight_m(x, d, h_a, h_b + extra) >= base
