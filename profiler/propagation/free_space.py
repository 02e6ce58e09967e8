"""Free space: wavelength, free-space basic transmission loss, near-field distance.

References
----------
.. [1] ITU-R P.525-4 (2019), "Calculation of free-space attenuation",
   section 1 (wavelength lambda = c / f with c = 299 792 458 m/s) and
   Annex 1 section 2.2, eqs. (4), (6).
"""

from __future__ import annotations

import numpy as np

from ..numeric_args import positive, scalar_or_array

SPEED_OF_LIGHT_M_S = 299_792_458.0
"""Speed of light in vacuum [m/s] (exact, SI definition)."""

NEAR_FIELD_WAVELENGTHS = 4.0
"""Minimum separation between antennas in wavelengths (common practice)."""

NEAR_FIELD_RULE_OF_THUMB_M = 3.0
"""Rule-of-thumb minimum separation between antennas [m] (common practice)."""


def wavelength_m(frequency_mhz):
    """Free-space wavelength.

    Parameters
    ----------
    frequency_mhz : float or array_like
        Frequency [MHz].

    Returns
    -------
    wavelength_m : float or ndarray
        lambda = c / f [m].

    References
    ----------
    ITU-R P.525-4 section 1.
    """
    return SPEED_OF_LIGHT_M_S / (frequency_mhz * 1e6)


def free_space_loss_db(distance_m, frequency_mhz):
    r"""Free-space basic transmission loss between isotropic antennas.

    .. math:: L_{bf} = 20 \log_{10}\left(\frac{4 \pi d}{\lambda}\right),
              \qquad \lambda = c / f

    Parameters
    ----------
    distance_m : float or array_like
        Path length :math:`d` [m], greater than 0.
    frequency_mhz : float or array_like
        Frequency :math:`f` [MHz], greater than 0.  Broadcasts against
        ``distance_m``.

    Returns
    -------
    loss_db : float or numpy.ndarray
        Free-space basic transmission loss :math:`L_{bf}` [dB].

    Raises
    ------
    ProfilerError
        If a distance or frequency is not a positive finite number.

    Notes
    -----
    With :math:`f` in MHz and :math:`d` in km this equals
    :math:`32.45 + 20\log_{10} f + 20\log_{10} d`; ITU-R P.525-4 rounds
    the constant to 32.4 in its practical-units form.  The formula assumes
    the far field (see :func:`near_field_distance_m`).

    References
    ----------
    .. [1] ITU-R P.525-4 (2019), "Calculation of free-space attenuation",
       Annex 1 §2.2, eq. (4) (wavelength form) and eq. (6) (practical
       units: f in MHz, d in km).
    """
    d = positive("distance", distance_m, "m")
    f = positive("frequency", frequency_mhz, "MHz")
    return scalar_or_array(free_space_term_db(d, f))


def free_space_term_db(distance_m, frequency_mhz):
    """Free-space basic transmission loss of many links [dB] (plain arithmetic, no checks).

    The one formula behind :func:`free_space_loss_db` and the link engine
    (:func:`profiler.engine.radio.path_loss`): L_bf = 20 log10(4 pi d f / c).

    Parameters
    ----------
    distance_m : float or array_like
        Path length d [m], greater than 0.
    frequency_mhz : float or array_like
        Frequency f [MHz], greater than 0; broadcasts against ``distance_m``.

    Returns
    -------
    loss_db : float or numpy.ndarray
        Free-space basic transmission loss [dB].

    References
    ----------
    .. [1] ITU-R P.525-4 (2019), "Calculation of free-space attenuation",
       Annex 1 section 2.2, eq. (4).
    """
    return 20.0 * np.log10(4.0 * np.pi * distance_m * frequency_mhz * 1e6 / SPEED_OF_LIGHT_M_S)


def near_field_distance_m(frequency_mhz, wavelengths=4.0):
    r"""Distance inside which an antenna is not yet in its far field.

    A rule of thumb: keep obstacles and the other antenna more than a few
    wavelengths away, :math:`d = n \lambda`.

    Parameters
    ----------
    frequency_mhz : float or array_like
        Frequency [MHz], greater than 0.
    wavelengths : float, default 4
        Number of wavelengths :math:`n` [-], greater than 0.

    Returns
    -------
    distance_m : float or numpy.ndarray
        :math:`n \lambda` [m] with :math:`\lambda = c / f`.

    References
    ----------
    .. [1] Common practice (a few wavelengths clear of the antenna); the
       wavelength is :math:`\lambda = c/f` as in ITU-R P.525-4, Annex 1
       §2.2, eq. (4).
    """
    f = positive("frequency", frequency_mhz, "MHz")
    n = positive("near-field distance", wavelengths, "wavelengths")
    return scalar_or_array(n * wavelength_m(f))
