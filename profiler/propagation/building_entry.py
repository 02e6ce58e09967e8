"""ITU-R P.2109-1 building entry loss: its value at a probability and its distribution, vectorized.

The loss L_BEL(P) not exceeded with probability P for a terminal inside a
``traditional`` or a ``thermally-efficient`` building (Annex 1 section 3,
eq. (1) with the terms defined with it and the coefficients of Table 1),
at frequency f and elevation angle θ of the path at the facade.  Both
lognormal terms A(P) and B(P) use the same F^-1(P), so L_BEL is a
monotone function of one standard normal variable: P.2109 gives a whole
distribution, not a single number.  :func:`building_entry_loss_db` gives
the loss at given probabilities; :func:`building_entry_loss_distribution`
gives it at equally probable points of the distribution so that a caller
can integrate over it (e.g. the probability that a link closes, with the
location variability of the outdoor path combined).

Practical units of the Recommendation: frequency in GHz, angles in
degrees, losses in dB; probabilities in percent here (the Recommendation's
P is a fraction).  Out of range values (frequency outside 0.08-100 GHz,
probability not strictly between 0 and 100 %, |θ| above 90°) give NaN
element by element; an unknown building type raises
:class:`~profiler.errors.ProfilerError` naming it and the valid ones.

Edition: P.2109-1 (08/2019).  The tests compare every value of the ITU-R
SG3 "Clutter and BEL" workbook for P.2109-1 (28 GHz at 0°, 2 GHz at 45°,
both building types, 1e-5 % to 99.99999 %) within 0.01 dB; the largest
difference is 0.0005 dB, the workbook's rounding to 0.001 dB, so no
difference in the model.  F^-1 is evaluated exactly
(``scipy.special.ndtri``).  The elevation enters through |θ|
(L_e = 0.212 |θ|), so a path arriving from below the horizontal is taken
like one from above; the workbook only has angles of 0° and 45°.

References
----------
.. [1] Recommendation ITU-R P.2109-1 (08/2019), "Prediction of building
   entry loss", Annex 1 section 3 (eq. (1) and its terms A(P), B(P), C,
   μ1, μ2, σ1, σ2, L_h, L_e) and Table 1 (the coefficients r, s, t, u, v,
   w, x, y, z of each building type); scope 0.08-100 GHz.
.. [2] ITU-R Study Group 3, "Clutter and BEL" workbook, validation values
   of Rec. ITU-R P.2109 (the test reference).
"""

from __future__ import annotations

import numpy as np

from ..errors import ProfilerError
from ._names import name_index

__all__ = ["BUILDING_TYPES", "TABLE_1", "FREQUENCY_GHZ", "building_types", "building_entry_loss_db",
           "building_entry_loss_distribution"]

#: The building types of Table 1, by the names the project uses.
BUILDING_TYPES = ("traditional", "thermally-efficient")
#: Table 1: the coefficients (r, s, t, u, v, w, x, y, z) of each building type.
TABLE_1 = {
    "traditional": (12.64, 3.72, 0.96, 9.6, 2.0, 9.1, -3.0, 4.5, -2.0),
    "thermally-efficient": (28.19, -3.00, 8.48, 13.5, 3.8, 27.8, -2.9, 9.4, -2.1),
}
#: Scope of the Recommendation: frequency range [GHz], inclusive.
FREQUENCY_GHZ = (0.08, 100.0)
#: Eq. (1): the constant term C [dB].
_C_DB = -3.0


def building_types(building):
    """Check building type names and give their index in :data:`BUILDING_TYPES`.

    Parameters
    ----------
    building : str or sequence of str
        ``traditional`` or ``thermally-efficient`` per element.

    Returns
    -------
    index : numpy.ndarray of int
        Index [-] of each type in :data:`BUILDING_TYPES`, same shape as the
        input.

    Raises
    ------
    ProfilerError
        A name is not a building type (the message names it and the valid
        ones).

    References
    ----------
    .. [1] ITU-R P.2109-1 Annex 1 section 2.1 and Table 1 (the two building
       types).
    """
    return name_index(building, BUILDING_TYPES, "building type")


def _loss_at_normal_db(frequency_ghz, elevation_deg, building, normal):
    """L_BEL at the standard normal value ``normal`` = F^-1(P), broadcast over the inputs [dB]."""
    coefficients = np.array([TABLE_1[name] for name in BUILDING_TYPES])[building_types(building)]
    r, s, t, u, v, w, x, y, z = np.moveaxis(coefficients, -1, 0)
    f = np.asarray(frequency_ghz, dtype=float)
    theta = np.asarray(elevation_deg, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_f = np.log10(f)
        l_h = r + s * log_f + t * log_f ** 2          # median loss of horizontal paths
        l_e = 0.212 * np.abs(theta)                   # correction for the elevation angle
        mu_1, mu_2 = l_h + l_e, w + x * log_f
        sigma_1, sigma_2 = u + v * log_f, y + z * log_f
        a = normal * sigma_1 + mu_1                   # A(P)
        b = normal * sigma_2 + mu_2                   # B(P)
        loss = 10.0 * np.log10(10.0 ** (0.1 * a) + 10.0 ** (0.1 * b) + 10.0 ** (0.1 * _C_DB))   # eq. (1)
    low, high = FREQUENCY_GHZ
    valid = (f >= low) & (f <= high) & (np.abs(theta) <= 90.0)
    return np.where(valid, loss, np.nan)


def building_entry_loss_db(frequency_ghz, elevation_deg, probability_percent, building):
    """Building entry loss L_BEL(P) not exceeded with probability P [dB].

    Parameters
    ----------
    frequency_ghz : float or array_like
        Frequency f [GHz], 0.08 to 100.
    elevation_deg : float or array_like
        Elevation angle θ of the path at the building facade [deg above the
        horizontal], -90 to 90 (the loss depends on |θ|).
    probability_percent : float or array_like
        Probability P [%] with which the loss is not exceeded, strictly
        between 0 and 100 (the location percentage of a run).
    building : str or sequence of str
        ``traditional`` or ``thermally-efficient`` per element.

    Returns
    -------
    loss_db : numpy.ndarray
        L_BEL(P) [dB], broadcast over the inputs; NaN where an input is out
        of range.

    References
    ----------
    .. [1] ITU-R P.2109-1 Annex 1 section 3, eq. (1) (with A(P), B(P), C,
       μ1, μ2, σ1, σ2, L_h, L_e) and Table 1.
    """
    from scipy.special import ndtri

    p = np.asarray(probability_percent, dtype=float)
    inside = (p > 0.0) & (p < 100.0)
    normal = ndtri(np.where(inside, p, 50.0) / 100.0)      # F^-1(P): inverse cumulative normal
    loss = _loss_at_normal_db(frequency_ghz, elevation_deg, building, normal)
    return np.where(inside, loss, np.nan)


def building_entry_loss_distribution(frequency_ghz, elevation_deg, building, n_points=200):
    """The building entry loss at n equally probable points of its distribution, for integrating over it.

    Point k sits at the middle probability P_k = (k + 1/2) / n of the k-th
    of n equal slices of probability and carries weight 1/n, so that
    sum_k w_k g(L_k) approximates the mean of any function g of the loss
    over P.2109's distribution (the midpoint rule in P; the loss is
    increasing in P, so the points are sorted).

    Parameters
    ----------
    frequency_ghz : float or array_like
        Frequency f [GHz], 0.08 to 100.
    elevation_deg : float or array_like
        Elevation angle θ of the path at the building facade [deg above the
        horizontal], -90 to 90.
    building : str or sequence of str
        ``traditional`` or ``thermally-efficient`` per element.
    n_points : int, optional
        Number of points n (count), at least 2; 200 by default.

    Returns
    -------
    probability_percent : numpy.ndarray, shape (n,)
        P_k [%], increasing.
    weight : numpy.ndarray, shape (n,)
        Weight of each point [-], 1/n each (they sum to 1).
    loss_db : numpy.ndarray, shape (..., n)
        L_BEL(P_k) [dB]: the broadcast shape of the inputs, then one axis
        for the points; NaN where an input is out of range.

    Raises
    ------
    ProfilerError
        ``n_points`` is not an integer of at least 2.

    References
    ----------
    .. [1] ITU-R P.2109-1 Annex 1 section 3, eq. (1) and Table 1 (L_BEL as
       a function of P).
    """
    from scipy.special import ndtri

    if isinstance(n_points, bool) or not isinstance(n_points, (int, np.integer)) or n_points < 2:
        raise ProfilerError(f"the number of points of the building entry loss distribution must be an integer "
                            f"of at least 2, not {n_points!r}")
    n = int(n_points)
    probability = (np.arange(n) + 0.5) / n
    loss = _loss_at_normal_db(np.asarray(frequency_ghz, dtype=float)[..., None],
                              np.asarray(elevation_deg, dtype=float)[..., None],
                              np.asarray(building, dtype=str)[..., None], ndtri(probability))
    return 100.0 * probability, np.full(n, 1.0 / n), loss
