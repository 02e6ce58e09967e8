"""ITU-R P.1812-8 location variability (profiler.propagation.p1812.location) against the Recommendation.

Check values: scipy.special.ndtri (the inverse of the standard normal
distribution) for I(x), within the 0.00054 the Recommendation states for its
approximation (Attachment 2 to Annex 1); σL = (0.024 f + 0.52) wa^0.28 (f in
GHz, wa in m) and the height factor u(h) of Annex 1 section 4.7, computed by
hand; the location term of eq. (69).
"""

import math

import numpy as np
import pytest
from scipy.special import ndtri

from profiler.propagation.p1812.location import height_factor, inverse_normal, location_sigma_db, location_term_db

I_ACCURACY = 0.00054      # ITU-R P.1812-8 Attachment 2 to Annex 1: the approximation's largest error


def test_inverse_normal_against_scipy_over_the_planning_range():
    # I(x) is the value the standard normal exceeds with probability x: I(x) = -ndtri(x).
    x = np.linspace(0.01, 0.99, 981)
    got = inverse_normal(x)
    assert np.max(np.abs(got - (-ndtri(x)))) < I_ACCURACY
    assert np.all(np.diff(got) < 0)                        # strictly falling, as the exact function
    assert inverse_normal(0.5) == 0.0
    assert inverse_normal(0.05) == pytest.approx(1.6449, abs=I_ACCURACY)   # 95 % one-sided quantile (tables)


def test_location_term_is_zero_at_the_median_exactly():
    for sigma in (0.0, 1.5709, 5.5, 30.0):
        term = location_term_db(50.0, sigma)
        assert term == 0.0 and math.copysign(1.0, term) == 1.0          # no negative zero either
    assert np.all(location_term_db(np.full(3, 50.0), np.array([1.0, 2.0, 3.0])) == 0.0)


def test_location_term_is_sigma_times_the_normal_quantile():
    # Eq. (69): Lb(pL) = Lb(50 %) - I(pL/100) sigma_L; the loss not exceeded at more locations is larger.
    pl = np.array([1.0, 5.0, 10.0, 90.0, 95.0, 99.0])
    sigma = 5.5
    assert np.allclose(location_term_db(pl, sigma), sigma * ndtri(pl / 100), atol=sigma * I_ACCURACY, rtol=0)
    assert location_term_db(95.0, sigma) > 0 > location_term_db(5.0, sigma)
    assert location_term_db(95.0, sigma) == pytest.approx(-location_term_db(5.0, sigma), abs=1e-12)


def test_location_sigma_at_hand_computed_values():
    # sigma_L = (0.024 f + 0.52) wa^0.28, f [GHz], wa [m] (P.1812-8 Annex 1 section 4.7), by hand:
    # 868 MHz, wa = 100 m: (0.020832 + 0.52) * 10^0.56 = 0.540832 * 3.6307805 = 1.9636423 dB.
    assert location_sigma_db(0.868, 100.0) == pytest.approx(1.9636423, abs=1e-6)
    # 433 MHz, wa = 1000 m: (0.010392 + 0.52) * 10^0.84 = 0.530392 * 6.9183097 = 3.6694161 dB.
    assert location_sigma_db(0.433, 1000.0) == pytest.approx(3.6694161, abs=1e-6)
    # Arrays broadcast: one value per link.
    got = location_sigma_db(np.array([0.868, 0.433]), np.array([100.0, 1000.0]))
    assert np.allclose(got, [1.9636423, 3.6694161], atol=1e-6, rtol=0)


@pytest.mark.parametrize("h_m,r_m,u", [
    (1.5, 10.0, 1.0), (0.0, 0.5, 1.0),                     # h < R: the antenna inside the clutter
    (10.0, 10.0, 1.0), (12.0, 10.0, 0.8), (19.0, 10.0, 0.1), (2.0, 0.0, 0.8),   # R <= h < R + 10
    (20.0, 10.0, 0.0), (45.0, 10.0, 0.0), (10.0, 0.0, 0.0),                     # h >= R + 10
])
def test_height_factor_cases(h_m, r_m, u):
    # P.1812-8 section 4.7: u = 1 for h < R, 1 - (h - R)/10 for R <= h < R + 10, 0 for h >= R + 10.
    assert height_factor(h_m, r_m) == pytest.approx(u, abs=1e-12)


def test_height_factor_is_one_array_per_link():
    got = height_factor(np.array([1.5, 12.0, 25.0]), np.array([10.0, 10.0, 10.0]))
    assert got.shape == (3,) and np.allclose(got, [1.0, 0.8, 0.0], atol=1e-12, rtol=0)
