"""The probability over locations that a link keeps its fade margin (profiler.engine.probability).

Check values: the standard normal distribution of scipy.stats (a reference
library); for indoor nodes a Monte Carlo draw of the location term and of
P.2109's building entry loss (ITU-R P.2109-1 eq. (1), through the
validated profiler.propagation.building_entry), independent of the
midpoint integration under test.
"""

import numpy as np
import pytest
from scipy import stats

from profiler.engine.probability import indoor_probability, outdoor_probability
from profiler.propagation.building_entry import building_entry_loss_db


@pytest.mark.parametrize("median, fade, sigma", [(15.0, 10.0, 5.5), (10.0, 10.0, 3.0), (4.0, 10.0, 2.0)])
def test_outdoor_is_the_normal_cdf(median, fade, sigma):
    # Expected: scipy.stats.norm.cdf((median - fade) / sigma) (P.1812-8 section 4.7: normal in dB).
    assert outdoor_probability(median, fade, sigma) == pytest.approx(stats.norm.cdf((median - fade) / sigma), abs=1e-12)


def test_no_variability_is_certain_and_nan_stays_nan():
    got = outdoor_probability(np.array([11.0, 9.0, 10.0, np.nan]), 10.0, 0.0)
    assert got[:3].tolist() == [1.0, 0.0, 1.0] and np.isnan(got[3])


@pytest.mark.parametrize("building", ["traditional", "thermally-efficient"])
def test_indoor_matches_a_monte_carlo_draw(building):
    # Expected: the share of random locations where median - sigma*z - BEL(P) >= fade, z ~ N(0,1), P ~ U(0,100) %.
    rng = np.random.default_rng(1)
    n = 400_000
    median, fade, sigma, f_ghz, elev = 25.0, 10.0, 4.0, 0.8683125, 3.0
    z = rng.standard_normal(n)
    bel = building_entry_loss_db(f_ghz, elev, rng.uniform(1e-4, 100 - 1e-4, n), building)
    want = np.mean(median - sigma * z - bel >= fade)
    got = indoor_probability(np.array([median]), fade, np.array([sigma]), f_ghz, np.array([elev]), building)
    assert got[0] == pytest.approx(want, abs=0.005)


def test_indoor_is_lower_than_outdoor():
    margin = np.array([5.0, 15.0, 30.0])
    out = outdoor_probability(margin, 10.0, 3.0)
    ins = indoor_probability(margin, 10.0, np.full(3, 3.0), 0.868, np.full(3, 1.0), "traditional")
    assert np.all(ins < out)
