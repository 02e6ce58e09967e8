"""Link budget: free-space loss, LoRa sensitivity and airtime, polarization.

Pure numpy functions.  Every argument and return value carries its unit in
its name; inputs that a user can get wrong raise
:class:`profiler.errors.ProfilerError` with a one-line message.

The LoRa figures (minimum demodulator SNR per spreading factor, the
time-on-air formula, the 16 ms low-data-rate-optimize threshold) are the
standard values used for LoRa modems; they are common practice rather than
an ITU-R recommendation.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from profiler.errors import ProfilerError

#: Speed of light in vacuum [m/s] (exact, SI definition).
from profiler.bands import wavelength_m as _wavelength_m

#: Thermal noise power density kT0 at T0 = 290 K [dBm/Hz], rounded as is
#: usual in link budgets (exact value -173.98 dBm/Hz).
THERMAL_NOISE_DBM_PER_HZ = -174.0

#: Spreading factors supported by the LoRa helpers.
LORA_SPREADING_FACTORS = (7, 8, 9, 10, 11, 12)

#: LoRa signal bandwidths supported by the LoRa helpers [kHz].
LORA_BANDWIDTHS_KHZ = (125, 250, 500)

#: Minimum demodulator SNR for SF7..SF12 [dB] (common practice).
LORA_SNR_MIN_DB = (-7.5, -10.0, -12.5, -15.0, -17.5, -20.0)

#: Symbol time above which low-data-rate optimisation is switched on
#: automatically [ms] (common practice).
LORA_LDRO_SYMBOL_TIME_MS = 16.0


# ---------------------------------------------------------------------------
# input checking (private)
# ---------------------------------------------------------------------------

def _fmt(value) -> str:
    """Format one offending value for an error message."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return repr(value)
    if np.isfinite(v) and v == int(v):
        return str(int(v))
    return f"{v:g}"


def _numbers(name: str, value, unit: str, fix: str | None = None) -> np.ndarray:
    """Return ``value`` as a finite float array or raise ProfilerError."""
    fix = fix or f"give it in {unit}"
    if isinstance(value, (str, bytes)):
        raise ProfilerError(f"{name} {value!r} is not a number; {fix}")
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ProfilerError(f"{name} {value!r} is not a number; {fix}") from None
    if arr.size == 0:
        raise ProfilerError(f"{name} is empty; {fix}")
    bad = ~np.isfinite(arr)
    if np.any(bad):
        raise ProfilerError(
            f"{name} {_fmt(arr[bad].flat[0])} is not a finite number; {fix}")
    return arr


def _positive(name: str, value, unit: str, fix: str | None = None) -> np.ndarray:
    fix = fix or f"give a value greater than 0 {unit}"
    arr = _numbers(name, value, unit, fix)
    bad = arr <= 0
    if np.any(bad):
        shown = f"{_fmt(arr[bad].flat[0])} {unit}".strip()
        raise ProfilerError(f"{name} {shown} is not greater than 0; {fix}")
    return arr


def _non_negative(name: str, value, unit: str) -> np.ndarray:
    arr = _numbers(name, value, unit)
    bad = arr < 0
    if np.any(bad):
        raise ProfilerError(
            f"{name} {_fmt(arr[bad].flat[0])} {unit} is negative; use 0 {unit} or more")
    return arr


def _integers(name: str, value, low: int, high: int, hint: str) -> np.ndarray:
    """Return ``value`` as an int64 array within [low, high] or raise."""
    if isinstance(value, (bool, np.bool_)):
        raise ProfilerError(f"{name} {value!r} is not a number; {hint}")
    arr = _numbers(name, value, "", fix=hint)
    frac = arr != np.round(arr)
    if np.any(frac):
        raise ProfilerError(
            f"{name} {_fmt(arr[frac].flat[0])} is not a whole number; {hint}")
    out = (arr < low) | (arr > high)
    if np.any(out):
        raise ProfilerError(f"{name} {_fmt(arr[out].flat[0])} is out of range; {hint}")
    return arr.astype(np.int64)


def _single_integer(name: str, value, low: int, high: int, hint: str) -> int:
    arr = _integers(name, value, low, high, hint)
    if arr.ndim != 0:
        raise ProfilerError(f"{name} must be a single value; {hint}")
    return int(arr)


def _spreading_factor(sf) -> np.ndarray:
    return _integers("spreading factor", sf, 7, 12, "use 7 to 12")


def _bandwidth_khz(bw_khz) -> np.ndarray:
    arr = _numbers("bandwidth", bw_khz, "kHz (125, 250 or 500)")
    bad = ~np.isin(arr, LORA_BANDWIDTHS_KHZ)
    if np.any(bad):
        raise ProfilerError(
            f"bandwidth {_fmt(arr[bad].flat[0])} kHz is not supported; "
            "use 125, 250 or 500 kHz")
    return arr


def _flag(name: str, value) -> bool:
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    raise ProfilerError(f"{name} must be true or false, not {value!r}")


def _scalar_or_array(arr):
    """0-d results become Python scalars; other arrays are returned as is."""
    arr = np.asarray(arr)
    return arr.item() if arr.ndim == 0 else arr


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
    d = _positive("distance", distance_m, "m")
    f = _positive("frequency", frequency_mhz, "MHz")
    return _scalar_or_array(20.0 * np.log10(4.0 * np.pi * d / _wavelength_m(f)))


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
    f = _positive("frequency", frequency_mhz, "MHz")
    n = _positive("near-field distance", wavelengths, "wavelengths")
    return _scalar_or_array(n * _wavelength_m(f))


# ---------------------------------------------------------------------------
# LoRa modem
# ---------------------------------------------------------------------------

def lora_symbol_time_ms(sf, bw_khz):
    r"""Duration of one LoRa chirp symbol, :math:`T_{sym} = 2^{SF} / BW`.

    Parameters
    ----------
    sf : int or array_like of int
        Spreading factor, 7 to 12.
    bw_khz : float or array_like
        Signal bandwidth [kHz]: 125, 250 or 500.

    Returns
    -------
    symbol_time_ms : float or numpy.ndarray
        Symbol duration [ms].

    References
    ----------
    .. [1] Standard LoRa modem time-on-air formula (common practice).
    """
    s = _spreading_factor(sf)
    bw = _bandwidth_khz(bw_khz)
    return _scalar_or_array(np.exp2(s) / bw)


def lora_sensitivity_dbm(sf, bw_khz, noise_figure_db):
    r"""Receiver sensitivity of a LoRa modem.

    .. math:: S = -174 + 10 \log_{10}(BW) + NF + SNR_{min}(SF)

    with :math:`BW` in Hz and :math:`SNR_{min}` = -7.5, -10, -12.5, -15,
    -17.5, -20 dB for SF7 to SF12.

    Parameters
    ----------
    sf : int or array_like of int
        Spreading factor, 7 to 12.
    bw_khz : float or array_like
        Signal bandwidth [kHz]: 125, 250 or 500.
    noise_figure_db : float or array_like
        Receiver noise figure :math:`NF` [dB], 0 or more.

    Returns
    -------
    sensitivity_dbm : float or numpy.ndarray
        Lowest usable received power :math:`S` [dBm].

    Raises
    ------
    ProfilerError
        For a spreading factor outside 7..12, an unsupported bandwidth or a
        negative noise figure.

    Notes
    -----
    -174 dBm/Hz is the thermal noise density :math:`kT_0` at
    :math:`T_0` = 290 K (exactly -173.98 dBm/Hz).

    References
    ----------
    .. [1] ITU-R P.372 (radio noise): reference temperature
       :math:`T_0` = 290 K for the noise density :math:`kT_0`.
    .. [2] Minimum demodulator SNR per spreading factor: common practice
       for LoRa modems.
    """
    s = _spreading_factor(sf)
    bw = _bandwidth_khz(bw_khz)
    nf = _non_negative("noise figure", noise_figure_db, "dB")
    snr_min_db = np.asarray(LORA_SNR_MIN_DB)[s - 7]
    return _scalar_or_array(
        THERMAL_NOISE_DBM_PER_HZ + 10.0 * np.log10(bw * 1e3) + nf + snr_min_db)


def lora_time_on_air_ms(sf, bw_khz, payload_bytes, coding_rate=1,
                        preamble_symbols=8, explicit_header=True, crc=True,
                        low_data_rate_optimize=None):
    r"""Time on air of one LoRa packet.

    .. math::

        T_{sym} &= 2^{SF} / BW \\
        T_{preamble} &= (n_{preamble} + 4.25)\, T_{sym} \\
        n_{payload} &= 8 + \max\left(\left\lceil
            \frac{8PL - 4SF + 28 + 16CRC - 20IH}{4(SF - 2DE)}
            \right\rceil (CR + 4),\ 0\right) \\
        T_{packet} &= T_{preamble} + n_{payload}\, T_{sym}

    Parameters
    ----------
    sf : int or array_like of int
        Spreading factor, 7 to 12.
    bw_khz : float or array_like
        Signal bandwidth [kHz]: 125, 250 or 500.
    payload_bytes : int or array_like of int
        Application payload length :math:`PL` [byte], 1 to 255.
    coding_rate : int, default 1
        :math:`CR`, 1 to 4, meaning code rate 4/5 to 4/8.
    preamble_symbols : int, default 8
        Programmed preamble length :math:`n_{preamble}` [symbol], 6 to 65535.
    explicit_header : bool, default True
        Explicit header mode (:math:`IH = 0`); False for implicit
        (:math:`IH = 1`).
    crc : bool, default True
        Payload CRC present (:math:`CRC = 1`).
    low_data_rate_optimize : bool or None, default None
        :math:`DE`.  None switches it on automatically where the symbol
        time exceeds 16 ms (SF11 and SF12 at 125 kHz, SF12 at 250 kHz).

    Returns
    -------
    time_on_air_ms : float or numpy.ndarray
        Packet duration [ms], broadcast over ``sf``, ``bw_khz`` and
        ``payload_bytes``.

    Raises
    ------
    ProfilerError
        For any argument outside the ranges above.

    References
    ----------
    .. [1] Standard LoRa modem time-on-air formula, as given in LoRa modem
       datasheets (common practice).
    """
    s = _spreading_factor(sf)
    bw = _bandwidth_khz(bw_khz)
    pl = _integers("payload", payload_bytes, 1, 255, "use 1 to 255 bytes")
    cr = _single_integer("coding rate", coding_rate, 1, 4,
                         "use 1 to 4 (meaning 4/5 to 4/8)")
    n_pre = _single_integer("preamble length", preamble_symbols, 6, 65535,
                            "use 6 to 65535 symbols")
    ih = 0 if _flag("explicit header", explicit_header) else 1
    crc_on = 1 if _flag("crc", crc) else 0

    t_sym_ms = np.exp2(s) / bw
    if low_data_rate_optimize is None:
        de = (t_sym_ms > LORA_LDRO_SYMBOL_TIME_MS).astype(np.int64)
    else:
        de = np.int64(_flag("low data rate optimize", low_data_rate_optimize))

    numerator = 8 * pl - 4 * s + 28 + 16 * crc_on - 20 * ih
    denominator = 4 * (s - 2 * de)
    blocks = -((-numerator) // denominator)        # exact integer ceil
    n_payload = 8 + np.maximum(blocks * (cr + 4), 0)
    return _scalar_or_array((n_pre + 4.25 + n_payload) * t_sym_ms)


def uplinks_per_hour(time_on_air_ms, duty_cycle=0.01):
    r"""Number of packets per hour allowed by a transmit duty cycle.

    .. math:: N = \left\lfloor \frac{3600\ \mathrm{s} \cdot \delta}{T_{packet}}
              \right\rfloor

    Parameters
    ----------
    time_on_air_ms : float or array_like
        Packet duration :math:`T_{packet}` [ms], greater than 0.
    duty_cycle : float, default 0.01
        Allowed fraction of time on air :math:`\delta` [-], in (0, 1].

    Returns
    -------
    uplinks : int or numpy.ndarray of int
        Whole packets per hour [1/h].

    References
    ----------
    .. [1] Duty-cycle limit of licence-exempt sub-GHz bands, e.g. 1 % per
       hour (common practice).
    """
    toa = _positive("time on air", time_on_air_ms, "ms")
    duty = _positive("duty cycle", duty_cycle, "",
                     "give a fraction, e.g. 0.01 for 1 %")
    bad = duty > 1
    if np.any(bad):
        raise ProfilerError(
            f"duty cycle {_fmt(duty[bad].flat[0])} is above 1; "
            "give a fraction, e.g. 0.01 for 1 %")
    ratio = 3_600_000.0 * duty / toa
    # round away binary noise (e.g. 35.99999999999) before flooring
    return _scalar_or_array(np.floor(np.round(ratio, 9)).astype(np.int64))


# ---------------------------------------------------------------------------
# polarization
# ---------------------------------------------------------------------------

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
    a = _numbers("polarization angle", angle_a_deg, "degrees")
    b = _numbers("polarization angle", angle_b_deg, "degrees")
    cap = _non_negative("polarization loss cap", cap_db, "dB")
    cos_delta = np.abs(np.cos(np.radians(a - b)))
    with np.errstate(divide="ignore"):
        loss = -20.0 * np.log10(cos_delta)
    return _scalar_or_array(np.minimum(loss, cap) + 0.0)   # + 0.0: no -0.0


# ---------------------------------------------------------------------------
# budget
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class LinkBudget:
    """Result of :func:`link_budget`; array fields when inputs are arrays.

    Attributes
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
    loss = _non_negative("total path loss", total_loss_db, "dB")
    p_tx = _numbers("transmit power", tx_power_dbm, "dBm")
    g_a = _numbers("antenna gain A", gain_a_dbi, "dBi")
    g_b = _numbers("antenna gain B", gain_b_dbi, "dBi")
    l_a = _non_negative("cable loss A", cable_loss_a_db, "dB")
    l_b = _non_negative("cable loss B", cable_loss_b_db, "dB")
    if sensitivity_dbm is None:
        sens = np.asarray(lora_sensitivity_dbm(12, 125, 6.0))
    else:
        sens = _numbers("sensitivity", sensitivity_dbm, "dBm")
    fade = _non_negative("fade margin", fade_margin_db, "dB")

    eirp = p_tx + g_a - l_a
    rx = eirp - loss + g_b - l_b
    margin = rx - sens
    return LinkBudget(
        tx_power_dbm=_scalar_or_array(p_tx),
        eirp_dbm=_scalar_or_array(eirp),
        rx_power_dbm=_scalar_or_array(rx),
        sensitivity_dbm=_scalar_or_array(sens),
        margin_db=_scalar_or_array(margin),
        fade_margin_required_db=_scalar_or_array(fade),
        closes=_scalar_or_array(margin >= fade),
    )


def lora_table(rx_power_dbm, bw_khz, noise_figure_db, payload_bytes,
               fade_margin_db, duty_cycle=0.01):
    """Margin and airtime of one link for every spreading factor 7..12.

    Parameters
    ----------
    rx_power_dbm : float
        Received power at the receiver input [dBm].
    bw_khz : float
        Signal bandwidth [kHz]: 125, 250 or 500.
    noise_figure_db : float
        Receiver noise figure [dB], 0 or more.
    payload_bytes : int
        Payload length [byte], 1 to 255.
    fade_margin_db : float
        Margin the link must keep [dB], 0 or more.
    duty_cycle : float, default 0.01
        Allowed fraction of time on air [-] used for
        ``uplinks_per_hour_1pct``.

    Returns
    -------
    table : list of dict
        One row per SF, with keys ``sf`` (int), ``sensitivity_dbm``,
        ``margin_db``, ``time_on_air_ms`` (float), ``closes`` (bool) and
        ``uplinks_per_hour_1pct`` (int).  Other settings are the
        :func:`lora_time_on_air_ms` defaults (CR 4/5, 8-symbol preamble,
        explicit header, CRC on, automatic low-data-rate optimisation).

    References
    ----------
    .. [1] See :func:`lora_sensitivity_dbm`, :func:`lora_time_on_air_ms`
       and :func:`uplinks_per_hour`.
    """
    rx = _numbers("received power", rx_power_dbm, "dBm")
    if rx.ndim != 0:
        raise ProfilerError("received power must be a single value in dBm")
    fade = _non_negative("fade margin", fade_margin_db, "dB")
    if fade.ndim != 0:
        raise ProfilerError("fade margin must be a single value in dB")
    sf = np.asarray(LORA_SPREADING_FACTORS)
    sens = np.asarray(lora_sensitivity_dbm(sf, bw_khz, noise_figure_db))
    if sens.shape != sf.shape:
        raise ProfilerError("bandwidth and noise figure must be single values")
    toa = np.asarray(lora_time_on_air_ms(sf, bw_khz, payload_bytes))
    if toa.shape != sf.shape:
        raise ProfilerError("payload must be a single value in bytes")
    per_hour = np.asarray(uplinks_per_hour(toa, duty_cycle))
    if per_hour.shape != sf.shape:
        raise ProfilerError("duty cycle must be a single value")
    margin = rx - sens
    closes = margin >= fade
    return [
        {
            "sf": int(sf[i]),
            "sensitivity_dbm": float(sens[i]),
            "margin_db": float(margin[i]),
            "closes": bool(closes[i]),
            "time_on_air_ms": float(toa[i]),
            "uplinks_per_hour_1pct": int(per_hour[i]),
        }
        for i in range(sf.size)
    ]


def lowest_closing_sf(table):
    """Lowest (fastest) spreading factor whose row in ``table`` closes.

    Parameters
    ----------
    table : list of dict
        Output of :func:`lora_table`.

    Returns
    -------
    sf : int or None
        Smallest ``sf`` with ``closes`` True, or None if no SF closes.

    References
    ----------
    .. [1] Lower SF gives shorter airtime for the same payload; see
       :func:`lora_time_on_air_ms`.
    """
    closing = [int(row["sf"]) for row in table if row["closes"]]
    return min(closing) if closing else None
