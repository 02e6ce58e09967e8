"""Link budget: free-space loss, near-field distance, received power and margin.

Pure numpy functions.  Every argument and return value carries its unit in
its name; inputs that a user can get wrong raise
:class:`profiler.errors.ProfilerError` with a one-line message.

The LoRa modem figures (sensitivity, time on air, the SF table) are in
:mod:`profiler.lora_modem` and the polarization mismatch in
:mod:`profiler.polarization`; both are re-exported here, as are their
constants.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from profiler.bands import SPEED_OF_LIGHT_M_S
from profiler.bands import wavelength_m as _wavelength_m
from profiler.lora_modem import (LORA_BANDWIDTHS_KHZ, LORA_LDRO_SYMBOL_TIME_MS, LORA_SNR_MIN_DB,
                                 LORA_SPREADING_FACTORS, THERMAL_NOISE_DBM_PER_HZ, lora_sensitivity_dbm,
                                 lora_symbol_time_ms, lora_table, lora_time_on_air_ms, lowest_closing_sf,
                                 uplinks_per_hour)
from profiler.numeric_args import non_negative, numbers, positive, scalar_or_array
from profiler.polarization import polarization_angle_deg, polarization_mismatch_db

__all__ = ["free_space_loss_db", "free_space_term_db", "near_field_distance_m", "link_budget", "LinkBudget",
           "lora_symbol_time_ms", "lora_sensitivity_dbm", "lora_time_on_air_ms", "uplinks_per_hour",
           "lora_table", "lowest_closing_sf", "polarization_angle_deg", "polarization_mismatch_db",
           "THERMAL_NOISE_DBM_PER_HZ", "LORA_SPREADING_FACTORS", "LORA_BANDWIDTHS_KHZ", "LORA_SNR_MIN_DB",
           "LORA_LDRO_SYMBOL_TIME_MS"]


# ---------------------------------------------------------------------------
# free space
# ---------------------------------------------------------------------------

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
    (:func:`profiler.radio.path_loss`): L_bf = 20 log10(4 pi d f / c).

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
    return scalar_or_array(n * _wavelength_m(f))


# ---------------------------------------------------------------------------
# budget
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class LinkBudget:
    """Result of :func:`link_budget`; array fields when inputs are arrays.

    Parameters
    ----------
    tx_power_dbm : float
        Transmitter output power [dBm].
    eirp_dbm : float
        Effective isotropically radiated power at side A [dBm].
    rx_power_dbm : float
        Power delivered to the receiver at side B [dBm].
    sensitivity_dbm : float
        Receiver sensitivity [dBm].
    margin_db : float
        ``rx_power_dbm - sensitivity_dbm`` [dB].
    fade_margin_required_db : float
        Margin the link must keep for fading [dB].
    closes : bool
        ``margin_db >= fade_margin_required_db``.
    """

    tx_power_dbm: float
    eirp_dbm: float
    rx_power_dbm: float
    sensitivity_dbm: float
    margin_db: float
    fade_margin_required_db: float
    closes: bool


def link_budget(total_loss_db, tx_power_dbm=14.0, gain_a_dbi=2.15, gain_b_dbi=2.15,
                cable_loss_a_db=0.0, cable_loss_b_db=0.0, sensitivity_dbm=None,
                fade_margin_db=10.0):
    r"""Received power and margin of a one-way link from A to B.

    .. math::

        EIRP &= P_{tx} + G_a - L_{cable,a} \\
        P_{rx} &= EIRP - L_{total} + G_b - L_{cable,b} \\
        M &= P_{rx} - S

    Parameters
    ----------
    total_loss_db : float or array_like
        Path loss between isotropic antennas [dB], 0 or more: free space
        plus diffraction, polarization and any other losses.
    tx_power_dbm : float or array_like, default 14
        Transmitter output power :math:`P_{tx}` [dBm].
    gain_a_dbi, gain_b_dbi : float or array_like, default 2.15
        Antenna gains relative to isotropic [dBi]; 2.15 dBi is a half-wave
        dipole.
    cable_loss_a_db, cable_loss_b_db : float or array_like, default 0
        Feeder and connector losses [dB], 0 or more.
    sensitivity_dbm : float or array_like, optional
        Receiver sensitivity :math:`S` [dBm].  Default: the LoRa value for
        SF12, 125 kHz and a 6 dB noise figure (about -137.0 dBm), see
        :func:`lora_sensitivity_dbm`.
    fade_margin_db : float or array_like, default 10
        Margin the link must keep [dB], 0 or more.

    Returns
    -------
    LinkBudget
        Frozen dataclass; ``closes`` is True where
        ``margin_db >= fade_margin_required_db``.

    References
    ----------
    .. [1] ITU-R P.525-4, Annex 1 §2.2: basic transmission loss is defined
       between isotropic antennas, so antenna gains [dBi] and e.i.r.p. add
       to it directly.
    .. [2] Half-wave dipole gain 1.64 (2.15 dBi): C. A. Balanis,
       *Antenna Theory*, §4.6 (handbook).
    """
    loss = non_negative("total path loss", total_loss_db, "dB")
    p_tx = numbers("transmit power", tx_power_dbm, "dBm")
    g_a = numbers("antenna gain A", gain_a_dbi, "dBi")
    g_b = numbers("antenna gain B", gain_b_dbi, "dBi")
    l_a = non_negative("cable loss A", cable_loss_a_db, "dB")
    l_b = non_negative("cable loss B", cable_loss_b_db, "dB")
    if sensitivity_dbm is None:
        sens = np.asarray(lora_sensitivity_dbm(12, 125, 6.0))
    else:
        sens = numbers("sensitivity", sensitivity_dbm, "dBm")
    fade = non_negative("fade margin", fade_margin_db, "dB")

    eirp = p_tx + g_a - l_a
    rx = eirp - loss + g_b - l_b
    margin = rx - sens
    return LinkBudget(
        tx_power_dbm=scalar_or_array(p_tx),
        eirp_dbm=scalar_or_array(eirp),
        rx_power_dbm=scalar_or_array(rx),
        sensitivity_dbm=scalar_or_array(sens),
        margin_db=scalar_or_array(margin),
        fade_margin_required_db=scalar_or_array(fade),
        closes=scalar_or_array(margin >= fade),
    )

