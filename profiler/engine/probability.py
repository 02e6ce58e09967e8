"""The probability, over locations, that a link closes with its fade margin.

Outdoors the loss at a location is the median loss plus a normal location
term of standard deviation σL (ITU-R P.1812-8 section 4.7), so the margin
at a location is normal with mean the median margin and standard deviation
σL; the probability of keeping the fade margin is Φ((median margin − fade
margin) / σL).  Indoors the building entry loss of ITU-R P.2109 adds an
independent loss with its own distribution; the probability is the mean of
the outdoor probability over that distribution (numerical integration over
equally probable points of P.2109's distribution,
:func:`profiler.propagation.building_entry.building_entry_loss_distribution`).

The margins are those without the location term and without the building
entry loss: at 50 % of locations (the median) and outdoors.
"""

from __future__ import annotations

import numpy as np


def outdoor_probability(median_margin_db, fade_margin_db, sigma_db):
    """Probability over locations that the margin reaches the fade margin, outdoors [-].

    Parameters
    ----------
    median_margin_db : float or ndarray
        Margin at 50 % of locations, outdoors [dB].
    fade_margin_db : float or ndarray
        Margin the link must keep [dB].
    sigma_db : float or ndarray
        Location variability σL [dB]; 0 gives 1 or 0 (a certain outcome).

    Returns
    -------
    probability : float or ndarray
        Φ((median margin − fade margin) / σL) [-], 0 to 1; NaN where the
        margin is NaN.

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 4.7 (the loss over locations is
       log-normal with standard deviation σL) and section 4.9, eq. (69).
    """
    from scipy.special import ndtr

    excess = np.asarray(median_margin_db, dtype=float) - np.asarray(fade_margin_db, dtype=float)
    sigma = np.asarray(sigma_db, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(sigma > 0.0, excess / np.where(sigma > 0.0, sigma, 1.0), np.where(excess >= 0.0, np.inf,
                                                                                         -np.inf))
    return np.where(np.isfinite(excess), ndtr(z), np.nan)


def indoor_probability(median_margin_db, fade_margin_db, sigma_db, frequency_ghz, elevation_deg, building,
                       n_points: int = 200):
    """Probability over locations that an indoor node keeps the fade margin [-].

    The mean over P.2109's building entry loss distribution of
    :func:`outdoor_probability` with the margin lowered by that loss.

    Parameters
    ----------
    median_margin_db : ndarray, shape (L,)
        Margin at 50 % of locations without the building entry loss [dB].
    fade_margin_db : float or ndarray
        Margin the link must keep [dB].
    sigma_db : float or ndarray, shape (L,)
        Location variability σL of the outdoor loss [dB].
    frequency_ghz : float or ndarray
        Frequency [GHz].
    elevation_deg : ndarray, shape (L,)
        Elevation angle of the path at the facade [deg].
    building : str or sequence of str
        ``traditional`` or ``thermally-efficient`` per link.
    n_points : int, default 200
        Equally probable points of the building entry loss distribution (a count).

    Returns
    -------
    probability : ndarray, shape (L,)
        P(heard) [-], 0 to 1.

    References
    ----------
    .. [1] ITU-R P.2109-1 Annex 1 section 3, eq. (1) (the building entry
       loss distribution); ITU-R P.1812-8 Annex 1 section 4.7.
    """
    from ..propagation.building_entry import building_entry_loss_distribution

    _, weight, loss = building_entry_loss_distribution(frequency_ghz, elevation_deg, building, n_points)
    margin = np.asarray(median_margin_db, dtype=float)[..., None] - loss
    sigma = np.asarray(sigma_db, dtype=float)[..., None]
    return np.sum(weight * outdoor_probability(margin, np.asarray(fade_margin_db, dtype=float)[..., None], sigma),
                  axis=-1)
