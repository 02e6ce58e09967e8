"""LoRa modem physics: sensitivity, symbol time, time on air, duty-cycle airtime, SF table.

Pure numpy functions; arguments a user can get wrong raise
:class:`profiler.errors.ProfilerError` with a one-line message.  The LoRa
figures (minimum demodulator SNR per spreading factor, the time-on-air
formula, the 16 ms low-data-rate-optimize threshold) are the standard values
used for LoRa modems; they are common practice rather than an ITU-R
recommendation.  :func:`lora_sensitivity_batch_dbm` is the unchecked form of
the sensitivity formula for the vectorized link engine.
"""

from __future__ import annotations

import numpy as np

from profiler.errors import ProfilerError
from profiler.numeric_args import (
    flag,
    fmt_value,
    integers,
    non_negative,
    numbers,
    positive,
    scalar_or_array,
    single_integer,
)

__all__ = ["THERMAL_NOISE_DBM_PER_HZ", "LORA_SPREADING_FACTORS", "LORA_BANDWIDTHS_KHZ", "LORA_SNR_MIN_DB",
           "LORA_LDRO_SYMBOL_TIME_MS", "lora_symbol_time_ms", "lora_sensitivity_dbm",
           "lora_sensitivity_batch_dbm", "lora_time_on_air_ms", "uplinks_per_hour", "lora_table",
           "lowest_closing_sf"]

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


def _spreading_factor(sf) -> np.ndarray:
    return integers("spreading factor", sf, 7, 12, "use 7 to 12")


def _bandwidth_khz(bw_khz) -> np.ndarray:
    arr = numbers("bandwidth", bw_khz, "kHz (125, 250 or 500)")
    bad = ~np.isin(arr, LORA_BANDWIDTHS_KHZ)
    if np.any(bad):
        raise ProfilerError(
            f"bandwidth {fmt_value(arr[bad].flat[0])} kHz is not supported; "
            "use 125, 250 or 500 kHz")
    return arr


def lora_symbol_time_ms(sf, bw_khz):
    r"""Duration of one LoRa chirp symbol, :math:`T_{sym} = 2^{SF} / BW`.

    Parameters
    ----------
    sf : int or array_like of int
        Spreading factor [-], 7 to 12.
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
    return scalar_or_array(np.exp2(s) / bw)


def lora_sensitivity_dbm(sf, bw_khz, noise_figure_db):
    r"""Receiver sensitivity of a LoRa modem.

    .. math:: S = -174 + 10 \log_{10}(BW) + NF + SNR_{min}(SF)

    with :math:`BW` in Hz and :math:`SNR_{min}` = -7.5, -10, -12.5, -15,
    -17.5, -20 dB for SF7 to SF12.

    Parameters
    ----------
    sf : int or array_like of int
        Spreading factor [-], 7 to 12.
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
    nf = non_negative("noise figure", noise_figure_db, "dB")
    return scalar_or_array(lora_sensitivity_batch_dbm(s, bw, nf))


def lora_sensitivity_batch_dbm(sf, bw_khz, noise_figure_db):
    r"""Receiver sensitivity of a LoRa modem, unchecked and vectorized (the link engine's form).

    The formula of :func:`lora_sensitivity_dbm`,
    :math:`S = -174 + 10 \log_{10}(BW) + NF + SNR_{min}(SF)`, without the
    argument checks: the caller guarantees valid values.

    Parameters
    ----------
    sf : array_like of int
        Spreading factor [-], 7 to 12.
    bw_khz : array_like
        Signal bandwidth [kHz].
    noise_figure_db : array_like
        Receiver noise figure [dB].

    Returns
    -------
    numpy.ndarray
        Sensitivity [dBm], broadcast over the arguments.

    References
    ----------
    .. [1] ITU-R P.372 (radio noise): reference temperature
       :math:`T_0` = 290 K for the noise density :math:`kT_0`.
    .. [2] Minimum demodulator SNR per spreading factor: common practice
       for LoRa modems.
    """
    snr_min_db = np.asarray(LORA_SNR_MIN_DB)[np.asarray(sf, dtype=np.int64) - 7]
    return (THERMAL_NOISE_DBM_PER_HZ + 10.0 * np.log10(np.asarray(bw_khz, dtype=float) * 1e3)
            + noise_figure_db + snr_min_db)


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
        Spreading factor [-], 7 to 12.
    bw_khz : float or array_like
        Signal bandwidth [kHz]: 125, 250 or 500.
    payload_bytes : int or array_like of int
        Application payload length :math:`PL` [byte], 1 to 255.
    coding_rate : int, default 1
        :math:`CR` [-], 1 to 4, meaning code rate 4/5 to 4/8.
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
    pl = integers("payload", payload_bytes, 1, 255, "use 1 to 255 bytes")
    cr = single_integer("coding rate", coding_rate, 1, 4,
                         "use 1 to 4 (meaning 4/5 to 4/8)")
    n_pre = single_integer("preamble length", preamble_symbols, 6, 65535,
                            "use 6 to 65535 symbols")
    ih = 0 if flag("explicit header", explicit_header) else 1
    crc_on = 1 if flag("crc", crc) else 0

    t_sym_ms = np.exp2(s) / bw
    if low_data_rate_optimize is None:
        de = (t_sym_ms > LORA_LDRO_SYMBOL_TIME_MS).astype(np.int64)
    else:
        de = np.int64(flag("low data rate optimize", low_data_rate_optimize))

    numerator = 8 * pl - 4 * s + 28 + 16 * crc_on - 20 * ih
    denominator = 4 * (s - 2 * de)
    blocks = -((-numerator) // denominator)        # exact integer ceil
    n_payload = 8 + np.maximum(blocks * (cr + 4), 0)
    return scalar_or_array((n_pre + 4.25 + n_payload) * t_sym_ms)


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
    toa = positive("time on air", time_on_air_ms, "ms")
    duty = positive("duty cycle", duty_cycle, "",
                     "give a fraction, e.g. 0.01 for 1 %")
    bad = duty > 1
    if np.any(bad):
        raise ProfilerError(
            f"duty cycle {fmt_value(duty[bad].flat[0])} is above 1; "
            "give a fraction, e.g. 0.01 for 1 %")
    ratio = 3_600_000.0 * duty / toa
    # round away binary noise (e.g. 35.99999999999) before flooring
    return scalar_or_array(np.floor(np.round(ratio, 9)).astype(np.int64))



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
    rx = numbers("received power", rx_power_dbm, "dBm")
    if rx.ndim != 0:
        raise ProfilerError("received power must be a single value in dBm")
    fade = non_negative("fade margin", fade_margin_db, "dB")
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
        Smallest spreading factor [-] with ``closes`` True, or None if no SF closes.

    References
    ----------
    .. [1] Lower SF gives shorter airtime for the same payload; see
       :func:`lora_time_on_air_ms`.
    """
    closing = [int(row["sf"]) for row in table if row["closes"]]
    return min(closing) if closing else None
