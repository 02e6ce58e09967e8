"""Frequency plans: the LoRaWAN regional channel plans and their working frequency.

Each plan is given by the lowest and highest channel centre frequency of its
common channel plan; the working frequency used for propagation is the mean
of the two (the geometric quantities vary by well under 1 % across a plan).

References
----------
.. [1] LoRa Alliance, "RP002-1.0.4 LoRaWAN Regional Parameters", 2022, an
   open specification: sections "EU863-870", "US902-928", "AU915-928",
   "AS923", "KR920-923", "IN865-867", "CN470-510", "RU864-870",
   "EU433". Channel edges as tabulated there (transcribed from memory of
   the specification; the EU868 span 867.1-869.525 MHz is common practice).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import ProfilerError


@dataclass(frozen=True)
class Band:
    """A channel plan: name, lowest and highest channel frequency [MHz].

    Parameters
    ----------
    name : str
        Plan name as LoRaWAN RP002-1.0.4 spells it (``"EU868"``, ...).
    low_mhz : float
        Lowest channel centre frequency of the plan [MHz].
    high_mhz : float
        Highest channel centre frequency of the plan [MHz].
    description : str
        One-line description shown in listings.
    """

    name: str
    low_mhz: float
    high_mhz: float
    description: str

    @property
    def frequency_mhz(self) -> float:
        """Working (uplink) frequency: mean of the lowest and highest uplink channel [MHz].

        For plans whose downlinks reuse the uplink channels (EU868, ...) this
        is the mean of the whole span; for US915, AU915 and CN470 it is the
        mean of the uplink channels (see :mod:`profiler.lora.regional`).
        """
        from .regional import PLANS

        return PLANS[self.name].uplink_frequency_mhz


BANDS: dict[str, Band] = {
    b.name: b
    for b in (
        Band("EU868", 867.1, 869.525, "Europe 863-870 MHz"),
        Band("US915", 902.3, 927.5, "North America 902-928 MHz (uplink 902.3-914.9, downlink 923.3-927.5)"),
        Band("AU915", 915.2, 927.8, "Australia 915-928 MHz (uplink 915.2-927.8, downlink 923.3-927.5)"),
        Band("AS923", 923.2, 923.4, "Asia 923 MHz group 1 (default channels)"),
        Band("KR920", 920.9, 923.3, "Korea 920-923 MHz"),
        Band("IN865", 865.0625, 866.55, "India 865-867 MHz"),
        Band("CN470", 470.3, 509.7, "China 470-510 MHz (uplink 470.3-489.3, downlink 500.3-509.7)"),
        Band("RU864", 864.1, 869.1, "Russia 864-870 MHz"),
        Band("EU433", 433.175, 434.665, "Europe 433 MHz"),
    )
}

DEFAULT_BAND = "EU868"


def band(name: str) -> Band:
    """Look up a channel plan by name (case-insensitive).

    Parameters
    ----------
    name : str
        Plan name, e.g. ``"EU868"`` or ``"us915"``.

    Returns
    -------
    Band
        The channel plan.

    Raises
    ------
    ProfilerError
        If no plan has that name.
    """
    key = str(name).strip().upper()
    if key not in BANDS:
        raise ProfilerError(f"unknown band {name!r}; choose one of {', '.join(BANDS)} or give --freq-mhz")
    return BANDS[key]


def resolve_frequency_mhz(freq_mhz: float | None = None, band_name: str | None = None) -> tuple[float, str | None]:
    """Return the working frequency [MHz] and the band name it came from.

    An explicit frequency wins; otherwise the named band (default EU868).

    Parameters
    ----------
    freq_mhz : float, optional
        Explicit frequency [MHz], positive and finite.
    band_name : str, optional
        Channel plan name; used only when ``freq_mhz`` is None.

    Returns
    -------
    frequency_mhz : float
        Working frequency [MHz].
    band_name : str or None
        The plan the frequency came from; None for an explicit frequency.

    Raises
    ------
    ProfilerError
        If the frequency is not a positive number, both arguments are given,
        or the band name is unknown.
    """
    if freq_mhz is not None:
        f = float(freq_mhz)
        if not math.isfinite(f) or f <= 0:
            raise ProfilerError(f"frequency must be a positive number of MHz, got {freq_mhz}")
        if band_name is not None:
            raise ProfilerError("give either --freq-mhz or --band, not both")
        return f, None
    b = band(band_name or DEFAULT_BAND)
    return b.frequency_mhz, b.name
