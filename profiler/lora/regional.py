"""LoRaWAN regional parameters: data-rate tables, channels, power and time limits.

This module is data, not code: one :class:`Plan` record per channel plan the
tool lists, transcribed from the LoRa Alliance specification *RP002-1.0.4
LoRaWAN Regional Parameters* (2022), an open specification.  The section of
each plan is named in its ``section`` field.  The few helpers at the end only
look values up.

What is tabulated per plan
--------------------------
- ``data_rates``: DR -> (spreading factor, bandwidth [kHz]) for the LoRa
  data rates (FSK and LR-FHSS data rates are not modelled and are left out;
  ``notes`` says which).
- ``uplink_drs`` / ``downlink_drs``: the DRs each direction may use.
- channels: the uplink channel range, the RX1 downlink rule and range, the
  RX2 default frequency and DR.
- ``max_eirp_dbm``: the plan's default maximum EIRP; where the plan states
  a conducted power and an antenna gain instead (US902-928), those two
  (``max_conducted_dbm``, ``max_antenna_gain_dbi``) and the EIRP they give.
- ``dwell_time_ms``: the uplink dwell-time limit where the plan imposes one;
  ``dwell_time_default`` says whether it applies by default and
  ``dwell_time_optional`` whether ``--dwell-time on|off`` may change it.
- ``max_app_payload``: the largest application payload (FRMPayload, N)
  per DR; ``max_app_payload_dwell`` the smaller limits under the dwell-time
  limit (None: the DR may not be used at all).
- ``duty_cycle_subbands``: (low MHz, high MHz, duty cycle) where the plan
  has a duty-cycle rule; None elsewhere.

Values are transcribed from memory of the RP002-1.0.4 text; they agree with
the tables of the published specification as far as the authors know, and
each plan's ``section`` names where to check them.  The ETSI sub-band duty
cycles quoted by the EU plans come from ETSI EN 300 220-2, annex B (from
memory).

References
----------
.. [1] LoRa Alliance, "RP002-1.0.4 LoRaWAN Regional Parameters", 2022:
   section 2.4 EU863-870, 2.5 US902-928, 2.7 EU433, 2.8 AU915-928,
   2.9 CN470-510, 2.10 AS923, 2.11 KR920-923, 2.12 IN865-867,
   2.13 RU864-870 (subsections ".3 Data Rate and End-device Output Power
   Encoding", ".6 Maximum Payload Size", ".7 Receive Windows").
.. [2] ETSI EN 300 220-2 V3.2.1 (2018), annex B, sub-bands h1.3-h1.8
   (duty cycle and e.r.p. limits in 863-870 MHz) and h1.4 (433 MHz).
.. [3] LoRaWAN L2 1.0.4 specification, section 4: PHYPayload =
   MHDR (1) + FHDR (7 or more) + FPort (1) + FRMPayload + MIC (4), so
   PHY = N + 13 bytes without MAC options.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import ProfilerError

LORAWAN_OVERHEAD_BYTES = 13
"""MHDR + FHDR (no options) + FPort + MIC [byte]: PHY = application payload + 13."""


@dataclass(frozen=True)
class Plan:
    """One regional channel plan (see the module docstring for the fields).

    Parameters
    ----------
    name : str
        Plan name (``"EU868"``, ...).
    section : str
        Section of RP002-1.0.4 the values come from.
    data_rates : dict
        DR -> (spreading factor [-], bandwidth [kHz]) for the LoRa DRs.
    uplink_drs, downlink_drs : tuple of int
        Data-rate indices [-] each direction may use.
    uplink_channels_mhz, downlink_channels_mhz : tuple of float
        Lowest and highest channel of each direction [MHz].
    rx1_rule : str
        How RX1 picks its channel and DR, in words.
    rx1_dr : dict
        Uplink DR -> RX1 DR (RX1DROffset 0).
    rx2_frequency_mhz : float
        RX2 default frequency [MHz].
    rx2_dr : int
        RX2 default DR [-].
    max_eirp_dbm : float
        Default maximum EIRP [dBm].
    max_app_payload : dict
        DR -> largest application payload N [byte].
    max_conducted_dbm : float, optional
        Conducted power limit where the plan states one [dBm].
    max_antenna_gain_dbi : float, optional
        Antenna gain allowed with that conducted limit [dBi].
    dwell_time_ms : float, optional
        Uplink dwell-time limit where the plan imposes one [ms].
    dwell_time_default : bool, default False
        Whether the dwell-time limit applies by default.
    dwell_time_optional : bool, default False
        Whether ``--dwell-time on|off`` may change it.
    max_app_payload_dwell : dict
        DR -> N under the dwell-time limit [byte] (None: DR not usable).
    duty_cycle_subbands : tuple, optional
        (low [MHz], high [MHz], duty cycle [-]) per sub-band; None for none.
    default_channels_mhz : tuple of float
        Default channels [MHz].
    notes : tuple of str
        Remarks shown with the plan.
    """

    name: str
    section: str
    data_rates: dict
    uplink_drs: tuple
    downlink_drs: tuple
    uplink_channels_mhz: tuple
    downlink_channels_mhz: tuple
    rx1_rule: str
    rx1_dr: dict
    rx2_frequency_mhz: float
    rx2_dr: int
    max_eirp_dbm: float
    max_app_payload: dict
    max_conducted_dbm: float | None = None
    max_antenna_gain_dbi: float | None = None
    dwell_time_ms: float | None = None
    dwell_time_default: bool = False
    dwell_time_optional: bool = False
    max_app_payload_dwell: dict = field(default_factory=dict)
    duty_cycle_subbands: tuple | None = None
    default_channels_mhz: tuple = ()
    notes: tuple = ()

    @property
    def uplink_frequency_mhz(self) -> float:
        """Working uplink frequency: mean of the lowest and highest uplink channel [MHz]."""
        return round(0.5 * (min(self.uplink_channels_mhz) + max(self.uplink_channels_mhz)), 6)

    @property
    def downlink_frequency_mhz(self) -> float:
        """Working RX1 downlink frequency: mean of the lowest and highest RX1 channel [MHz]."""
        return round(0.5 * (min(self.downlink_channels_mhz) + max(self.downlink_channels_mhz)), 6)


# Shared tables (the same numbers appear in several plans of RP002-1.0.4).
_DR_SF12_TO_SF7 = {0: (12, 125), 1: (11, 125), 2: (10, 125), 3: (9, 125), 4: (8, 125), 5: (7, 125)}
_DR_EU = {**_DR_SF12_TO_SF7, 6: (7, 250)}
_N_EU = {0: 51, 1: 51, 2: 51, 3: 115, 4: 242, 5: 242, 6: 242, 7: 242}
_N_DWELL_AS_AU = {0: None, 1: None, 2: 11, 3: 53, 4: 125, 5: 242, 6: 242, 7: 242}
_DL_500 = {8: (12, 500), 9: (11, 500), 10: (10, 500), 11: (9, 500), 12: (8, 500), 13: (7, 500)}
_N_DL_500 = {8: 53, 9: 129, 10: 242, 11: 242, 12: 242, 13: 242}
_SAME_DR = "RX1 uses the uplink channel; RX1 DR = uplink DR (RX1DROffset 0)"

# ETSI EN 300 220-2 annex B sub-bands (low MHz, high MHz, duty cycle), from memory.
_ETSI_868 = ((863.0, 865.0, 0.001), (865.0, 868.0, 0.01), (868.0, 868.6, 0.01),
             (868.7, 869.2, 0.001), (869.4, 869.65, 0.10), (869.7, 870.0, 0.01))


def _grid(first_mhz, step_mhz, count):
    return tuple(round(first_mhz + step_mhz * i, 4) for i in range(count))


PLANS: dict[str, Plan] = {p.name: p for p in (
    Plan(
        name="EU868", section="RP002-1.0.4 section 2.4 (EU863-870)",
        data_rates=_DR_EU, uplink_drs=(0, 1, 2, 3, 4, 5, 6), downlink_drs=(0, 1, 2, 3, 4, 5, 6),
        default_channels_mhz=(868.1, 868.3, 868.5),
        uplink_channels_mhz=(867.1, 867.3, 867.5, 867.7, 867.9, 868.1, 868.3, 868.5, 869.525),
        downlink_channels_mhz=(867.1, 867.3, 867.5, 867.7, 867.9, 868.1, 868.3, 868.5, 869.525),
        rx1_rule=_SAME_DR, rx1_dr={d: d for d in range(7)},
        rx2_frequency_mhz=869.525, rx2_dr=0, max_eirp_dbm=16.0, max_app_payload=_N_EU,
        duty_cycle_subbands=_ETSI_868,
        notes=("DR7 (FSK 50 kbit/s) and DR8-DR11 (LR-FHSS) are not modelled",
               "channel span 867.1-869.525 MHz is the common network plan (common practice): the three "
               "default channels plus five added by the network and the RX2 channel",
               "the 869.4-869.65 MHz sub-band of RX2 allows 500 mW e.r.p. (27 dBm) for a gateway under "
               "ETSI EN 300 220-2; the check uses the plan's default MaxEIRP for both ends")),
    Plan(
        name="US915", section="RP002-1.0.4 section 2.5 (US902-928)",
        data_rates={0: (10, 125), 1: (9, 125), 2: (8, 125), 3: (7, 125), 4: (8, 500), **_DL_500},
        uplink_drs=(0, 1, 2, 3, 4), downlink_drs=(8, 9, 10, 11, 12, 13),
        default_channels_mhz=_grid(902.3, 0.2, 64) + _grid(903.0, 1.6, 8),
        uplink_channels_mhz=_grid(902.3, 0.2, 64) + _grid(903.0, 1.6, 8),
        downlink_channels_mhz=_grid(923.3, 0.6, 8),
        rx1_rule="RX1 channel = uplink channel modulo 8 (923.3 + 0.6 n MHz); RX1 DR from the RX1DROffset 0 column",
        rx1_dr={0: 10, 1: 11, 2: 12, 3: 13, 4: 13},
        rx2_frequency_mhz=923.3, rx2_dr=8, max_eirp_dbm=36.0, max_conducted_dbm=30.0, max_antenna_gain_dbi=6.0,
        dwell_time_ms=400.0, dwell_time_default=True, dwell_time_optional=False,
        max_app_payload={0: 11, 1: 53, 2: 125, 3: 242, 4: 242, **_N_DL_500},
        notes=("DR5-DR6 (LR-FHSS) are not modelled",
               "no SF11 or SF12 uplink: the 400 ms dwell time rules them out",
               "power: +30 dBm conducted with an antenna gain up to 6 dBi; above 6 dBi the conducted power "
               "is reduced by the excess (EIRP at most 36 dBm)")),
    Plan(
        name="AU915", section="RP002-1.0.4 section 2.8 (AU915-928)",
        data_rates={**_DR_SF12_TO_SF7, 6: (8, 500), **_DL_500},
        uplink_drs=(0, 1, 2, 3, 4, 5, 6), downlink_drs=(8, 9, 10, 11, 12, 13),
        default_channels_mhz=_grid(915.2, 0.2, 64) + _grid(915.9, 1.6, 8),
        uplink_channels_mhz=_grid(915.2, 0.2, 64) + _grid(915.9, 1.6, 8),
        downlink_channels_mhz=_grid(923.3, 0.6, 8),
        rx1_rule="RX1 channel = uplink channel modulo 8 (923.3 + 0.6 n MHz); RX1 DR from the RX1DROffset 0 column",
        rx1_dr={0: 8, 1: 9, 2: 10, 3: 11, 4: 12, 5: 13, 6: 13},
        rx2_frequency_mhz=923.3, rx2_dr=8, max_eirp_dbm=30.0,
        dwell_time_ms=400.0, dwell_time_default=True, dwell_time_optional=True,
        max_app_payload={0: 51, 1: 51, 2: 51, 3: 115, 4: 242, 5: 242, 6: 242, **_N_DL_500},
        max_app_payload_dwell={**_N_DWELL_AS_AU, 7: None},
        notes=("DR7 (LR-FHSS) is not modelled",
               "dwell time: on by default here (the safe assumption when the network's TxParamSetupReq "
               "setting is not known); --dwell-time off when the network does not enforce it")),
    Plan(
        name="AS923", section="RP002-1.0.4 section 2.10 (AS923, group AS923-1)",
        data_rates=_DR_EU, uplink_drs=(0, 1, 2, 3, 4, 5, 6), downlink_drs=(0, 1, 2, 3, 4, 5, 6),
        default_channels_mhz=(923.2, 923.4), uplink_channels_mhz=(923.2, 923.4),
        downlink_channels_mhz=(923.2, 923.4), rx1_rule=_SAME_DR, rx1_dr={d: d for d in range(7)},
        rx2_frequency_mhz=923.2, rx2_dr=2, max_eirp_dbm=16.0,
        dwell_time_ms=400.0, dwell_time_default=True, dwell_time_optional=True,
        max_app_payload=_N_EU, max_app_payload_dwell=_N_DWELL_AS_AU,
        notes=("DR7 (FSK 50 kbit/s) is not modelled",
               "dwell time: on by default (required in some AS923 countries and the safe assumption when "
               "the network's TxParamSetupReq setting is not known); --dwell-time off otherwise",
               "no duty cycle in the plan; listen-before-talk applies in some countries")),
    Plan(
        name="KR920", section="RP002-1.0.4 section 2.11 (KR920-923)",
        data_rates=_DR_SF12_TO_SF7, uplink_drs=(0, 1, 2, 3, 4, 5), downlink_drs=(0, 1, 2, 3, 4, 5),
        default_channels_mhz=(922.1, 922.3, 922.5), uplink_channels_mhz=_grid(920.9, 0.2, 13),
        downlink_channels_mhz=_grid(920.9, 0.2, 13), rx1_rule=_SAME_DR, rx1_dr={d: d for d in range(6)},
        rx2_frequency_mhz=921.9, rx2_dr=0, max_eirp_dbm=14.0,
        max_app_payload={d: _N_EU[d] for d in range(6)},
        notes=("no duty cycle in the plan; listen-before-talk is required",)),
    Plan(
        name="IN865", section="RP002-1.0.4 section 2.12 (IN865-867)",
        data_rates=_DR_SF12_TO_SF7, uplink_drs=(0, 1, 2, 3, 4, 5), downlink_drs=(0, 1, 2, 3, 4, 5),
        default_channels_mhz=(865.0625, 865.4025, 865.985), uplink_channels_mhz=(865.0625, 865.4025, 865.985, 866.55),
        downlink_channels_mhz=(865.0625, 865.4025, 865.985, 866.55), rx1_rule=_SAME_DR,
        rx1_dr={d: d for d in range(6)}, rx2_frequency_mhz=866.55, rx2_dr=2, max_eirp_dbm=30.0,
        max_app_payload={d: _N_EU[d] for d in range(6)},
        notes=("DR7 (FSK 50 kbit/s) is not modelled", "no duty cycle in the plan")),
    Plan(
        name="CN470", section="RP002-1.0.4 section 2.9 (CN470-510)",
        data_rates=_DR_SF12_TO_SF7, uplink_drs=(0, 1, 2, 3, 4, 5), downlink_drs=(0, 1, 2, 3, 4, 5),
        default_channels_mhz=_grid(470.3, 0.2, 96), uplink_channels_mhz=_grid(470.3, 0.2, 96),
        downlink_channels_mhz=_grid(500.3, 0.2, 48),
        rx1_rule="RX1 channel = uplink channel modulo 48 (500.3 + 0.2 n MHz); RX1 DR = uplink DR",
        rx1_dr={d: d for d in range(6)}, rx2_frequency_mhz=505.3, rx2_dr=0, max_eirp_dbm=19.15,
        max_app_payload={d: _N_EU[d] for d in range(6)},
        notes=("the 96 uplink / 48 downlink channel arrangement (470.3-489.3 / 500.3-509.7 MHz); "
               "RP002-1.0.4 also defines 20 MHz and 26 MHz channel-plan types, not modelled here",
               "no duty cycle in the plan")),
    Plan(
        name="RU864", section="RP002-1.0.4 section 2.13 (RU864-870)",
        data_rates=_DR_EU, uplink_drs=(0, 1, 2, 3, 4, 5, 6), downlink_drs=(0, 1, 2, 3, 4, 5, 6),
        default_channels_mhz=(868.9, 869.1), uplink_channels_mhz=(864.1, 864.3, 864.5, 868.9, 869.1),
        downlink_channels_mhz=(864.1, 864.3, 864.5, 868.9, 869.1), rx1_rule=_SAME_DR,
        rx1_dr={d: d for d in range(7)}, rx2_frequency_mhz=869.1, rx2_dr=0, max_eirp_dbm=16.0,
        max_app_payload=_N_EU,
        duty_cycle_subbands=((864.0, 865.0, 0.001), (866.0, 868.0, 0.01), (868.7, 869.2, 0.01)),
        notes=("DR7 (FSK 50 kbit/s) is not modelled",
               "duty-cycle sub-bands as quoted for the national rules (from memory)")),
    Plan(
        name="EU433", section="RP002-1.0.4 section 2.7 (EU433)",
        data_rates=_DR_EU, uplink_drs=(0, 1, 2, 3, 4, 5, 6), downlink_drs=(0, 1, 2, 3, 4, 5, 6),
        default_channels_mhz=(433.175, 433.375, 433.575), uplink_channels_mhz=(433.175, 433.375, 433.575, 434.665),
        downlink_channels_mhz=(433.175, 433.375, 433.575, 434.665), rx1_rule=_SAME_DR,
        rx1_dr={d: d for d in range(7)}, rx2_frequency_mhz=434.665, rx2_dr=0, max_eirp_dbm=12.15,
        max_app_payload=_N_EU, duty_cycle_subbands=((433.04, 434.79, 0.10),),
        notes=("DR7 (FSK 50 kbit/s) is not modelled",
               "duty cycle of ETSI EN 300 220-2 sub-band h1.4 (433.04-434.79 MHz, from memory)")),
)}


def plan(name: str) -> Plan:
    """Look up a regional plan by name (case-insensitive).

    Parameters
    ----------
    name : str
        Plan name, e.g. ``"EU868"``.

    Returns
    -------
    Plan
        The regional plan.

    Raises
    ------
    ProfilerError
        If no plan has that name.

    References
    ----------
    .. [1] LoRa Alliance, RP002-1.0.4 LoRaWAN Regional Parameters (2022),
       sections 2.4-2.13.
    """
    key = str(name).strip().upper()
    if key not in PLANS:
        raise ProfilerError(f"unknown band {name!r}; choose one of {', '.join(PLANS)} or give --freq-mhz")
    return PLANS[key]


def duty_cycle_at(p: Plan, frequency_mhz: float):
    """Duty cycle of the sub-band holding ``frequency_mhz`` [-], or None where the plan has none.

    Parameters
    ----------
    p : Plan
        Regional plan.
    frequency_mhz : float
        Frequency [MHz].

    Returns
    -------
    duty_cycle : float or None
        Duty cycle [-] (0.01 for 1 %); None outside every sub-band or where
        the plan has no duty-cycle rule.

    References
    ----------
    .. [1] ETSI EN 300 220-2 V3.2.1 (2018), annex B (sub-bands of
       863-870 MHz and 433 MHz), as quoted by RP002-1.0.4 section 2.4.
    """
    if p.duty_cycle_subbands is None:
        return None
    for low, high, duty in p.duty_cycle_subbands:
        if low <= frequency_mhz <= high:
            return duty
    return None


def dwell_time_limit_ms(p: Plan, dwell_time: str | None = None):
    """The uplink dwell-time limit in force [ms], or None.

    ``dwell_time`` is ``"on"``, ``"off"`` or None (the plan's default).
    Refused where the plan does not let it be changed.

    Parameters
    ----------
    p : Plan
        Regional plan.
    dwell_time : {"on", "off"}, optional
        Dwell-time choice; None for the plan's default.

    Returns
    -------
    limit_ms : float or None
        Dwell-time limit [ms]; None where none applies.

    Raises
    ------
    ProfilerError
        If the choice is not understood or the plan does not let it be changed.

    References
    ----------
    .. [1] RP002-1.0.4, dwell-time rules of the AS923 and AU915 plans
       (sections 2.10 and 2.8).
    """
    if dwell_time is None:
        return p.dwell_time_ms if p.dwell_time_default else None
    choice = str(dwell_time).strip().lower()
    if choice not in ("on", "off"):
        raise ProfilerError(f"--dwell-time {dwell_time!r} is not understood; use on or off")
    if p.dwell_time_ms is None:
        if choice == "on":
            raise ProfilerError(f"{p.name} has no dwell-time limit; drop --dwell-time")
        return None
    if not p.dwell_time_optional and choice == "off":
        raise ProfilerError(f"{p.name} always enforces its {p.dwell_time_ms:g} ms dwell time; drop --dwell-time off")
    return p.dwell_time_ms if choice == "on" else None


def max_app_payload_bytes(p: Plan, dr: int, dwell_limited: bool):
    """Largest application payload N at ``dr`` [byte]; None where the DR may not be used.

    Parameters
    ----------
    p : Plan
        Regional plan.
    dr : int
        Data-rate index [-].
    dwell_limited : bool
        Whether the uplink dwell-time limit is in force.

    Returns
    -------
    n_bytes : int or None
        Largest application payload N [byte]; None where the DR may not be used.

    References
    ----------
    .. [1] RP002-1.0.4, the plan's "Maximum Payload Size" subsection.
    """
    if dwell_limited and p.max_app_payload_dwell and dr in p.uplink_drs:
        return p.max_app_payload_dwell.get(dr)
    return p.max_app_payload.get(dr)


def max_tx_power_dbm(p: Plan, gain_dbi, cable_loss_db):
    """Highest transmitter power the plan allows with this antenna and feeder [dBm].

    EIRP = P + G - L must not exceed ``max_eirp_dbm``; where the plan states a
    conducted limit with an antenna-gain allowance (US915), the power is also
    at most ``max_conducted_dbm - max(0, G - max_antenna_gain_dbi)``.

    Parameters
    ----------
    p : Plan
        Regional plan.
    gain_dbi : float or array_like
        Antenna gain G [dBi].
    cable_loss_db : float or array_like
        Feeder and connector loss L [dB].

    Returns
    -------
    power_dbm : float or ndarray
        Highest transmitter output power [dBm].

    References
    ----------
    .. [1] RP002-1.0.4, the plan's "Data Rate and End-device Output Power
       Encoding" subsection; section 2.5 (US902-928 conducted power and
       antenna-gain allowance).
    """
    gain = np.asarray(gain_dbi, dtype=float)
    limit = p.max_eirp_dbm - gain + np.asarray(cable_loss_db, dtype=float)
    if p.max_conducted_dbm is not None:
        excess = np.maximum(0.0, gain - p.max_antenna_gain_dbi)
        limit = np.minimum(limit, p.max_conducted_dbm - excess)
    return limit[()] if limit.ndim == 0 else limit


def plan_dict(p: Plan) -> dict:
    """One plan as plain JSON types (``profiler bands NAME --json``).

    Parameters
    ----------
    p : Plan
        Regional plan.

    Returns
    -------
    dict
        The plan's fields as JSON types: frequencies [MHz], powers [dBm],
        gains [dBi], times [ms], payloads [byte].

    References
    ----------
    .. [1] LoRa Alliance, RP002-1.0.4 LoRaWAN Regional Parameters (2022),
       the plan's section.
    """
    def dr_rows(drs, dwell):
        rows = []
        for dr in drs:
            sf, bw = p.data_rates[dr]
            rows.append({"dr": dr, "sf": sf, "bw_khz": bw, "max_app_payload_bytes": p.max_app_payload.get(dr),
                         "max_app_payload_dwell_bytes": (p.max_app_payload_dwell.get(dr) if dwell else None)})
        return rows

    dwell = bool(p.max_app_payload_dwell)
    return {
        "band": p.name, "section": p.section,
        "uplink_frequency_mhz": p.uplink_frequency_mhz, "downlink_frequency_mhz": p.downlink_frequency_mhz,
        "uplink_channels_mhz": [min(p.uplink_channels_mhz), max(p.uplink_channels_mhz)],
        "uplink_channel_count": len(p.uplink_channels_mhz),
        "default_channels_mhz": list(p.default_channels_mhz)[:8],
        "downlink_channels_mhz": [min(p.downlink_channels_mhz), max(p.downlink_channels_mhz)],
        "rx1": {"rule": p.rx1_rule, "dr_for_uplink_dr": {str(k): v for k, v in p.rx1_dr.items()}},
        "rx2": {"frequency_mhz": p.rx2_frequency_mhz, "dr": p.rx2_dr},
        "uplink_drs": dr_rows(p.uplink_drs, dwell), "downlink_drs": dr_rows(p.downlink_drs, False),
        "max_eirp_dbm": p.max_eirp_dbm, "max_conducted_dbm": p.max_conducted_dbm,
        "max_antenna_gain_dbi": p.max_antenna_gain_dbi,
        "dwell_time_ms": p.dwell_time_ms, "dwell_time_default": p.dwell_time_default if p.dwell_time_ms else None,
        "dwell_time_optional": p.dwell_time_optional if p.dwell_time_ms else None,
        "duty_cycle_subbands": (None if p.duty_cycle_subbands is None else
                                [{"low_mhz": lo, "high_mhz": hi, "duty_cycle": dc}
                                 for lo, hi, dc in p.duty_cycle_subbands]),
        "notes": list(p.notes),
    }
