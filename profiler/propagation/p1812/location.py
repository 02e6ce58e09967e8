"""ITU-R P.1812-8 location variability: σL for the prediction resolution, the height factor u(h), Lb at pL %.

Per-path arrays of shape (L,) or scalars, as in :mod:`profiler.propagation.p1812`;
practical units of the Recommendation (GHz, m, dB).

References
----------
.. [1] Recommendation ITU-R P.1812-8, Annex 1 section 4.7 (location
   variability of losses: σL as a function of frequency and prediction
   resolution, reduced for a receiver/mobile antenna above its
   representative clutter height and zero at sea), section 4.9 (basic
   transmission loss not exceeded for p % time and pL % locations, eq. 69)
   and Attachment 2 (the inverse complementary cumulative normal
   distribution I(x)).
"""

from __future__ import annotations

import numpy as np

from .losses import inverse_normal_tail


def location_sigma_db(f_ghz, area_width_m):
    """Location variability σL of the median loss over a square of width wa [dB].

    Parameters
    ----------
    f_ghz : float or ndarray
        Frequency [GHz].
    area_width_m : float or ndarray
        Prediction resolution wa: width of the square area over which the
        variability applies [m].

    Returns
    -------
    sigma_db : float or ndarray
        σL = (0.024 f + 0.52) wa^0.28 [dB].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.7 (location variability of
       losses).
    """
    return (0.024 * np.asarray(f_ghz, dtype=float) + 0.52) * np.asarray(area_width_m, dtype=float) ** 0.28


def height_factor(antenna_height_m, clutter_height_m):
    """Height factor u(h) of the location variability [-]: 1 at or below the clutter, 0 from 10 m above it.

    Parameters
    ----------
    antenna_height_m : float or ndarray
        Receiver/mobile antenna height above ground h [m].
    clutter_height_m : float or ndarray
        Representative clutter height R at the receiver/mobile [m].

    Returns
    -------
    u : float or ndarray
        u = 1 for h < R, 1 - (h - R) / 10 for R <= h < R + 10, 0 above [-].

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.7 (the reduction of σL for an
       antenna above the representative clutter height).
    """
    excess = np.asarray(antenna_height_m, dtype=float) - np.asarray(clutter_height_m, dtype=float)
    return np.clip(1.0 - excess / 10.0, 0.0, 1.0)


def inverse_normal(x):
    """I(x) for 0 < x < 1: the Recommendation's approximation, and -I(1 - x) above one half [-].

    Parameters
    ----------
    x : float or ndarray
        Probability [-], 1e-6 to 1 - 1e-6.

    Returns
    -------
    i : float or ndarray
        The value [-] the standard normal exceeds with probability ``x``
        (0 exactly at one half; absolute error below 0.00054).

    References
    ----------
    .. [1] ITU-R P.1812-8 Attachment 2 to Annex 1 (I(x) for x <= 0.5 and the
       symmetry of the normal distribution for x > 0.5).
    """
    x = np.asarray(x, dtype=float)
    low = np.minimum(x, 1.0 - x)
    value = inverse_normal_tail(np.where(low > 0.0, low, 0.5))
    return np.where(x == 0.5, 0.0, np.where(x < 0.5, value, -value))


def location_term_db(location_percent, sigma_db):
    """Term added to the median loss for the loss not exceeded at pL % of locations [dB].

    Parameters
    ----------
    location_percent : float or ndarray
        Location percentage pL [%], 1 to 99.
    sigma_db : float or ndarray
        Location variability σL (after the height factor) [dB].

    Returns
    -------
    term_db : float or ndarray
        -I(pL / 100) σL [dB]: zero at 50 %, positive above (a loss not
        exceeded at more locations is larger).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.9, eq. (69).
    """
    term = -inverse_normal(np.asarray(location_percent, dtype=float) / 100.0) * np.asarray(sigma_db, dtype=float)
    return term + 0.0   # no negative zero at 50 %
