"""RF-exposure distance: where the far-field power density falls to a reference level.

In the far field of a transmitting antenna the power density on the main
beam is S = EIRP / (4 pi r^2) [W/m^2] (EIRP in W, r in m), so the distance
beyond which S stays below a reference level S_ref is

    r = sqrt(EIRP / (4 pi S_ref)).

Two sets of reference levels are tabulated here, each for the general
public and for occupational exposure, as whole-body average power density
[W/m^2] against frequency f [MHz]:

ICNIRP (2020), Table 5 (averaged over 30 min and the whole body):

==================  =====================  =================
f [MHz]             general public         occupational
==================  =====================  =================
0.1 - 30            E = 300 / f^0.7 V/m    E = 660 / f^0.7 V/m
> 30 - 400          2                      10
> 400 - 2000        f / 200                f / 40
> 2000 - 300 000    10                     50
==================  =====================  =================

Below 30 MHz Table 5 gives field strengths only; the plane-wave
equivalent S = E^2 / Z0 (Z0 = 376.73 ohm, the impedance of free space) is
used there, which joins the 30-400 MHz values continuously.

47 CFR 1.1310, Table 1 (maximum permissible exposure, MPE), in mW/cm^2
(1 mW/cm^2 = 10 W/m^2; "*" plane-wave equivalent power density):

==================  =====================  =================
f [MHz]             general population     occupational
==================  =====================  =================
0.3 - 1.34          100 *                  100 *  (0.3 - 3.0)
1.34 - 30           180 / f^2 *            900 / f^2 *  (3.0 - 30)
30 - 300            0.2                    1.0
300 - 1500          f / 1500               f / 300
1500 - 100 000      1.0                    5
==================  =====================  =================

Limits of the estimate: it assumes the whole EIRP towards the person
(main beam), free space and no ground reflection (an in-phase reflection
doubles the field, i.e. four times S; FCC OET Bulletin 65 uses a factor
1.6^2 = 2.56 for typical ground reflection, from memory), and it is not
valid in the near field (within a few wavelengths, or 2 D^2 / lambda of
an antenna of size D), where the centimetre distances of low-power
transmitters fall.  It is an estimate for a sheet: local rules and
measured or modelled compliance prevail.

References
----------
.. [1] ICNIRP, "Guidelines for limiting exposure to electromagnetic fields
   (100 kHz to 300 GHz)", Health Phys. 118(5):483-524, 2020, Table 5
   (reference levels, whole-body average) and its notes.
.. [2] US Code of Federal Regulations, 47 CFR 1.1310 "Radiofrequency
   radiation exposure limits", Table 1 (Limits for Maximum Permissible
   Exposure: (A) occupational/controlled, (B) general
   population/uncontrolled).
.. [3] Free-space power density of an isotropic radiator, S = P G /
   (4 pi r^2): ITU-R P.525-4, section 2.1 (power flux-density of an
   isotropic source; section number from memory), and FCC OET Bulletin 65
   (1997), far-field prediction equation.
"""

from __future__ import annotations

import numpy as np

from ..errors import ProfilerError

FREE_SPACE_IMPEDANCE_OHM = 376.730313
"""Impedance of free space Z0 = mu0 c [ohm] (CODATA 2018)."""

W_M2_PER_MW_CM2 = 10.0
"""1 mW/cm^2 = 1e-3 W / 1e-4 m^2 = 10 W/m^2."""

RULES = {
    "icnirp2020": "ICNIRP (2020) Guidelines, Health Phys. 118(5), Table 5",
    "fcc": "47 CFR 1.1310, Table 1",
}
"""The reference-level rules and the table each one comes from."""

EXPOSURES = ("general_public", "occupational")
"""Exposure categories (FCC: general population/uncontrolled, occupational/controlled)."""

METHOD = "far-field S = EIRP/(4 pi r^2)"
NOTE = "far-field estimate; local rules prevail"


def _icnirp2020_w_m2(f, occupational):
    # ICNIRP (2020) Table 5, S_inc [W/m^2]; below 30 MHz S = E_inc^2 / Z0 (plane-wave equivalent).
    e_coef, s_30_400, s_div, s_above = (660.0, 10.0, 40.0, 50.0) if occupational else (300.0, 2.0, 200.0, 10.0)
    with np.errstate(divide="ignore"):
        below_30 = (e_coef / f ** 0.7) ** 2 / FREE_SPACE_IMPEDANCE_OHM
    return np.select([f <= 30.0, f <= 400.0, f <= 2000.0], [below_30, s_30_400, f / s_div], s_above)


def _fcc_1310_w_m2(f, occupational):
    # 47 CFR 1.1310 Table 1, S [mW/cm^2], converted to W/m^2.
    with np.errstate(divide="ignore"):
        inv_f2 = 1.0 / f ** 2
    if occupational:
        mw_cm2 = np.select([f <= 3.0, f <= 30.0, f <= 300.0, f <= 1500.0],
                           [100.0, 900.0 * inv_f2, 1.0, f / 300.0], 5.0)
    else:
        mw_cm2 = np.select([f <= 1.34, f <= 30.0, f <= 300.0, f <= 1500.0],
                           [100.0, 180.0 * inv_f2, 0.2, f / 1500.0], 1.0)
    return mw_cm2 * W_M2_PER_MW_CM2


_TABLES = {"icnirp2020": (_icnirp2020_w_m2, 0.1, 300_000.0), "fcc": (_fcc_1310_w_m2, 0.3, 100_000.0)}


def reference_level_w_m2(frequency_mhz, rule: str, exposure: str):
    """Whole-body average power-density reference level.

    Parameters
    ----------
    frequency_mhz : array_like
        Frequency [MHz].
    rule : {"icnirp2020", "fcc"}
        ICNIRP (2020) Table 5, or 47 CFR 1.1310 Table 1.
    exposure : {"general_public", "occupational"}
        Exposure category (FCC: general population / occupational).

    Returns
    -------
    numpy.ndarray or float
        Reference level S_ref [W/m^2]; a float for scalar input.

    Raises
    ------
    ProfilerError
        Unknown rule or exposure, or a frequency outside the table
        (ICNIRP 0.1-300 000 MHz, FCC 0.3-100 000 MHz).

    References
    ----------
    .. [1] ICNIRP (2020), Table 5; below 30 MHz S = E^2 / Z0.
    .. [2] 47 CFR 1.1310, Table 1; 1 mW/cm^2 = 10 W/m^2.
    """
    if rule not in _TABLES:
        raise ProfilerError(f"unknown RF-exposure rule {rule!r}: use one of {', '.join(_TABLES)}")
    if exposure not in EXPOSURES:
        raise ProfilerError(f"unknown exposure category {exposure!r}: use one of {', '.join(EXPOSURES)}")
    table, low, high = _TABLES[rule]
    f = np.asarray(frequency_mhz, dtype=float)
    if not np.all(np.isfinite(f)) or np.any((f < low) | (f > high)):
        raise ProfilerError(f"frequency outside the {RULES[rule]} range {low:g}-{high:g} MHz")
    s = table(f, exposure == "occupational")
    return float(s) if s.ndim == 0 else s


def eirp_w(eirp_dbm):
    """EIRP in watts from dBm: P = 10^((dBm - 30) / 10) [W].

    Parameters
    ----------
    eirp_dbm : array_like
        Equivalent isotropically radiated power [dBm].

    Returns
    -------
    eirp_w : float or ndarray
        The same power [W]; a float for scalar input.

    References
    ----------
    .. [1] Power level relative to 1 mW: P [dBm] = 10 log10(P / 1 mW)
       (Recommendation ITU-R V.574, use of the decibel and the neper).
    """
    p = 10.0 ** ((np.asarray(eirp_dbm, dtype=float) - 30.0) / 10.0)
    return float(p) if p.ndim == 0 else p


def exposure_distance_m(eirp_dbm, frequency_mhz, rule: str, exposure: str):
    """Far-field distance at which S = EIRP / (4 pi r^2) falls to the reference level.

    Parameters
    ----------
    eirp_dbm : array_like
        Equivalent isotropically radiated power [dBm] (time-averaged
        transmitter power times gain; a duty cycle below 100 % lowers it).
    frequency_mhz : array_like
        Frequency [MHz]; broadcast with ``eirp_dbm``.
    rule, exposure : str
        As in :func:`reference_level_w_m2`.

    Returns
    -------
    numpy.ndarray or float
        r = sqrt(EIRP / (4 pi S_ref)) [m].

    References
    ----------
    .. [1] Far-field power density S = EIRP / (4 pi r^2) (ITU-R P.525-4
       section 2.1; FCC OET Bulletin 65).
    """
    p_w = np.asarray(eirp_w(eirp_dbm))
    if not np.all(np.isfinite(p_w)):
        raise ProfilerError("EIRP for the RF-exposure distance must be a finite number of dBm")
    r = np.sqrt(p_w / (4.0 * np.pi * np.asarray(reference_level_w_m2(frequency_mhz, rule, exposure))))
    return float(r) if r.ndim == 0 else r


def _json_value(x):
    x = np.asarray(x, dtype=float)
    return x.item() if x.ndim == 0 else x.tolist()


def rf_exposure_block(eirp_dbm, frequency_mhz) -> dict:
    """The JSON ``rf_exposure`` block of one transmitting end.

    Parameters
    ----------
    eirp_dbm : array_like
        EIRP of the transmitting end [dBm].
    frequency_mhz : array_like
        Frequency [MHz].

    Returns
    -------
    dict
        ``{"eirp_dbm", "eirp_w", "frequency_mhz", "method",
        "icnirp2020": {"general_public_m", "occupational_m",
        "general_public_w_m2", "occupational_w_m2", "reference"},
        "fcc_1_1310": {same keys}, "largest_general_public_m", "note"}``;
        floats for scalar input, lists for arrays.  Values are not rounded.

    Raises
    ------
    ProfilerError
        A frequency outside either table (0.3-100 000 MHz covers both).

    References
    ----------
    .. [1] ICNIRP (2020), Table 5; 47 CFR 1.1310, Table 1.
    """
    shape = np.broadcast_shapes(np.shape(eirp_dbm), np.shape(frequency_mhz))

    def column(values):
        return _json_value(np.broadcast_to(values, shape))

    block = {"eirp_dbm": column(eirp_dbm), "eirp_w": column(eirp_w(eirp_dbm)),
             "frequency_mhz": column(frequency_mhz), "method": METHOD}
    for rule, key in (("icnirp2020", "icnirp2020"), ("fcc", "fcc_1_1310")):
        entry = {f"{exposure}_m": column(exposure_distance_m(eirp_dbm, frequency_mhz, rule, exposure))
                 for exposure in EXPOSURES}
        entry.update({f"{exposure}_w_m2": column(reference_level_w_m2(frequency_mhz, rule, exposure))
                      for exposure in EXPOSURES})
        entry["reference"] = RULES[rule]
        block[key] = entry
    block["largest_general_public_m"] = _json_value(np.maximum(
        block["icnirp2020"]["general_public_m"], block["fcc_1_1310"]["general_public_m"]))
    block["note"] = NOTE
    return block
