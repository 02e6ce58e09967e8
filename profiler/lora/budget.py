"""Link budget: received power and margin over a path loss.

Pure numpy functions.  Every argument and return value carries its unit in
its name; inputs that a user can get wrong raise
:class:`profiler.errors.ProfilerError` with a one-line message.

The free-space loss is in :mod:`profiler.propagation.free_space`, the
LoRa modem figures (sensitivity, time on air, the SF table) in
:mod:`profiler.lora.modem` and the polarization mismatch in
:mod:`profiler.propagation.polarization`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..numeric_args import non_negative, numbers, scalar_or_array
from .modem import lora_sensitivity_dbm

__all__ = ["link_budget", "LinkBudget"]


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

