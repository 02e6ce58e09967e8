"""Tests of profiler.propagation.building_entry (Rec. ITU-R P.2109-1 building entry loss).

Check values:

* ITU-R SG3 "Clutter and BEL" workbook, Rec. ITU-R P.2109
  (../shared/reference/p2109-validation, read in place; see its README):
  every row of expected.csv within 0.01 dB;
* at 868 MHz, Rec. ITU-R P.2109-1 Annex 1 section 3 eq. (1) and Table 1
  evaluated by hand (intermediate values written beside each case; F^-1(0.9)
  = 1.281552 from the standard normal table);
* the distribution: its weighted sums against ``scipy.integrate.quad`` over
  the probability.
"""

import numpy as np
import pytest
from reference_data import expected_rows, missing_reason, reference_folder

from profiler.errors import ProfilerError
from profiler.propagation import building_entry

DATA = reference_folder("p2109-validation")          # ../shared/reference/p2109-validation (see its README)
ROWS = expected_rows(DATA)


@pytest.mark.skipif(DATA is None, reason=missing_reason("p2109-validation"))
def test_every_sg3_workbook_value_within_0_01_db():
    column = {key: np.array([row[key] for row in ROWS]) for key in ROWS[0]}
    loss = building_entry.building_entry_loss_db(column["f_ghz"].astype(float), column["elevation_deg"].astype(float),
                                                 column["probability_percent"].astype(float), column["building"])
    expected = column["loss_db"].astype(float)
    worst = np.argmax(np.abs(loss - expected))
    assert np.abs(loss - expected).max() <= 0.01, ROWS[worst]
    assert len(ROWS) == 568 and set(column["building"]) == set(building_entry.BUILDING_TYPES)


# 868 MHz by hand: log10(0.868) = -0.061480.
#  traditional, θ = 0°, P = 50 % (F^-1 = 0): L_h = 12.64 + 3.72 (-0.061480) + 0.96 (0.0037798) = 12.4149 = μ1 = A;
#    μ2 = 9.1 - 3.0 (-0.061480) = 9.2844 = B; L = 10 log10(10^1.24149 + 10^0.92844 + 10^-0.3) = 14.2193 dB.
#  thermally-efficient, θ = 30°, P = 90 % (F^-1 = 1.281552): L_h = 28.19 - 3.00 (-0.061480) + 8.48 (0.0037798)
#    = 28.4065, L_e = 0.212 x 30 = 6.36, μ1 = 34.7665, σ1 = 13.5 + 3.8 (-0.061480) = 13.2664, A = 51.7680;
#    μ2 = 27.8 - 2.9 (-0.061480) = 27.9783, σ2 = 9.4 - 2.1 (-0.061480) = 9.5291, B = 40.1903; L = 52.0600 dB.
#  traditional, θ = 10°, P = 10 % (F^-1 = -1.281552): μ1 = 12.4149 + 2.12 = 14.5349, σ1 = 9.4770, A = 2.3896;
#    σ2 = 4.6230, B = 3.3599; L = 10 log10(10^0.23896 + 10^0.33599 + 10^-0.3) = 6.4370 dB.
@pytest.mark.parametrize("elevation_deg, probability_percent, building, loss_db", [
    (0.0, 50.0, "traditional", 14.2193),
    (30.0, 90.0, "thermally-efficient", 52.0600),
    (10.0, 10.0, "traditional", 6.4370),
])
def test_868_mhz_by_hand(elevation_deg, probability_percent, building, loss_db):
    loss = building_entry.building_entry_loss_db(0.868, elevation_deg, probability_percent, building)
    assert loss == pytest.approx(loss_db, abs=0.001)


def test_elevation_enters_by_its_magnitude():
    up, down = building_entry.building_entry_loss_db(0.868, [12.0, -12.0], 50.0, "traditional")
    assert up == down


@pytest.mark.parametrize("f_ghz, elevation_deg, p", [
    (0.079, 0.0, 50.0), (100.5, 0.0, 50.0), (0.868, 91.0, 50.0), (0.868, 0.0, 0.0), (0.868, 0.0, 100.0)])
def test_out_of_range_is_nan_in_its_element_only(f_ghz, elevation_deg, p):
    loss = building_entry.building_entry_loss_db([f_ghz, 0.868], [elevation_deg, 0.0], [p, 50.0], "traditional")
    assert np.isnan(loss[0]) and loss[1] == pytest.approx(14.2193, abs=0.001)


def test_unknown_building_type_is_refused_by_name():
    with pytest.raises(ProfilerError, match="'basement'.*traditional, thermally-efficient"):
        building_entry.building_entry_loss_db(0.868, 0.0, 50.0, ["traditional", "basement"])


def test_distribution_points_are_the_loss_at_their_probabilities():
    probability, weight, loss = building_entry.building_entry_loss_distribution(
        [0.433, 0.868], [0.0, 20.0], ["traditional", "thermally-efficient"], n_points=40)
    assert loss.shape == (2, 40) and weight.sum() == pytest.approx(1.0)
    assert np.all(np.diff(probability) > 0) and np.all(np.diff(loss, axis=-1) > 0)
    column = np.array([[0.433, 0.0, "traditional"], [0.868, 20.0, "thermally-efficient"]], dtype=object)
    direct = building_entry.building_entry_loss_db(column[:, :1].astype(float), column[:, 1:2].astype(float),
                                                   probability, column[:, 2:].astype(str))
    np.testing.assert_allclose(loss, direct, rtol=0, atol=1e-9)


@pytest.mark.parametrize("threshold_db, sigma_db", [(10.0, 2.0), (25.0, 5.5), (45.0, 8.0)])
def test_distribution_integrates_a_closing_probability(threshold_db, sigma_db):
    """Mean over P.2109's distribution of Φ((threshold - L) / σ): weighted sum against quad over P."""
    from scipy.integrate import quad
    from scipy.special import ndtr

    _, weight, loss = building_entry.building_entry_loss_distribution(0.868, 5.0, "thermally-efficient")
    summed = np.sum(weight * ndtr((threshold_db - loss) / sigma_db))

    def integrand(p):
        return ndtr((threshold_db - building_entry.building_entry_loss_db(
            0.868, 5.0, 100.0 * p, "thermally-efficient")) / sigma_db)

    exact, _ = quad(integrand, 0.0, 1.0, epsabs=1e-10, limit=200)
    assert 0.01 < exact < 0.99                 # a case where the building loss matters
    assert summed == pytest.approx(exact, abs=1e-4)


@pytest.mark.parametrize("n_points", [1, 2.5, True, "50"])
def test_distribution_refuses_a_bad_point_count(n_points):
    with pytest.raises(ProfilerError, match="number of points"):
        building_entry.building_entry_loss_distribution(0.868, 0.0, "traditional", n_points)
