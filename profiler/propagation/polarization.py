"""Antenna polarization: parsing a polarization and the mismatch loss between two antennas."""

from __future__ import annotations

import numpy as np

from profiler.errors import ProfilerError
from profiler.numeric_args import non_negative, numbers, scalar_or_array

__all__ = ["polarization_angle_deg", "polarization_mismatch_db"]

_POLARIZATION_NAMES_DEG = {"vertical": 0.0, "v": 0.0, "horizontal": 90.0, "h": 90.0}


def polarization_angle_deg(text):
    """Parse an antenna polarization into degrees from vertical.

    Parameters
    ----------
    text : str or float
        ``"vertical"`` (0 deg), ``"horizontal"`` (90 deg), or a number of
        degrees from vertical between -180 and 180 (e.g. ``"45"``,
        ``"-30"``).  Case and surrounding spaces are ignored.

    Returns
    -------
    angle_deg : float
        Polarization tilt from vertical [deg].

    Raises
    ------
    ProfilerError
        If the text is neither a known name nor a number in range.

    References
    ----------
    .. [1] Linear polarization described by the tilt of the E-field from
       vertical (common practice).
    """
    hint = "use vertical, horizontal or degrees from vertical (e.g. 45)"
    if isinstance(text, (bool, np.bool_)):
        raise ProfilerError(f"polarization {text!r} is not understood; {hint}")
    if isinstance(text, str):
        key = text.strip().lower()
        if key in _POLARIZATION_NAMES_DEG:
            return _POLARIZATION_NAMES_DEG[key]
        key = key.removesuffix("deg").removesuffix("°").strip()
        try:
            angle = float(key)
        except ValueError:
            raise ProfilerError(
                f"polarization {text!r} is not understood; {hint}") from None
    else:
        try:
            angle = float(text)
        except (TypeError, ValueError):
            raise ProfilerError(
                f"polarization {text!r} is not understood; {hint}") from None
    if not np.isfinite(angle) or abs(angle) > 180.0:
        raise ProfilerError(
            f"polarization angle {text!r} is out of range; use -180 to 180 degrees "
            "from vertical")
    return angle


def polarization_mismatch_db(angle_a_deg, angle_b_deg, cap_db=25.0):
    r"""Loss from misaligned linear polarizations.

    .. math:: L_{pol} = \min\left(-20 \log_{10}
              \left|\cos(\psi_a - \psi_b)\right|,\ L_{cap}\right)

    Parameters
    ----------
    angle_a_deg, angle_b_deg : float or array_like
        Polarization tilt of each antenna from vertical [deg].
    cap_db : float, default 25
        Largest loss returned [dB]: real crossed antennas leak about
        20-30 dB, not an infinite amount (common practice).

    Returns
    -------
    loss_db : float or numpy.ndarray
        Polarization mismatch loss [dB], 0 to ``cap_db``.

    References
    ----------
    .. [1] Polarization loss factor :math:`PLF = \cos^2 \psi_p`,
       C. A. Balanis, *Antenna Theory*, §2.12 (from memory).
    """
    a = numbers("polarization angle", angle_a_deg, "degrees")
    b = numbers("polarization angle", angle_b_deg, "degrees")
    cap = non_negative("polarization loss cap", cap_db, "dB")
    cos_delta = np.abs(np.cos(np.radians(a - b)))
    with np.errstate(divide="ignore"):
        loss = -20.0 * np.log10(cos_delta)
    return scalar_or_array(np.minimum(loss, cap) + 0.0)   # + 0.0: no -0.0
