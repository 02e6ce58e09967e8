"""ITU-R P.2108-1 clutter loss at a terminal: the height-gain terminal correction and the statistical clutter loss.

Two methods of Annex 1 section 3, vectorized over arrays (numpy
broadcasting); practical units of the Recommendation (GHz, km, m, dB):

* section 3.1, the height-gain terminal correction model
  (:func:`height_gain_correction_db`): the median extra loss A_h of a
  terminal whose antenna is below the representative clutter height R of
  the clutter around it, 0.03-3 GHz.  The Recommendation computes the path
  with that antenna raised to R (:func:`terminal_path_height_m`) and adds
  A_h.  The clutter classes and their default R are those of its Table 3
  (:data:`DEFAULT_CLUTTER_HEIGHT_M`); the class picks the formula, eq. (2a)
  (diffraction over the clutter into a street of width w_s) or eq. (2b)
  (height gain);
* section 3.2, the statistical clutter loss for terrestrial paths
  (:func:`terrestrial_clutter_loss_db`): the clutter loss not exceeded at
  p % of locations, for a terminal in urban or suburban clutter, 0.5-67
  GHz, paths of 0.25 km or more (applied at both ends only from 1 km,
  :data:`BOTH_ENDS_MIN_DISTANCE_KM`).  Use one method or the other at an
  end, never both.

Outside its range a method returns NaN, element by element (frequency,
distance, percentage, antenna or clutter height, street width): a batch
marks its bad elements and goes on; the caller turns a NaN into its own
one-line message (the ranges are the module's constants).  An unknown
clutter class name is not a value but a choice: it raises
:class:`~profiler.errors.ProfilerError` naming the class and the valid
ones.

The edition is P.2108-1 (09/2021), the one the U.S. reference
implementation ``proplib-p2108`` 1.1 implements (NTIA/ITS, "Recommendation
ITU-R P.2108-1 - U.S. Reference Implementation"); the tests compare both
methods with it within 0.01 dB.  Differences from that implementation: the
inverse complementary normal distribution Q^-1 of eq. (3a) is evaluated
exactly here (``scipy.special.ndtri``), where the reference uses an
approximation (its difference, at most 0.003 dB for σ_cb <= 6 dB, is within
the test tolerance); the reference refuses an entire call out of range,
this module gives NaN for the elements out of range.

References
----------
.. [1] Recommendation ITU-R P.2108-1 (09/2021), "Prediction of clutter
   loss", Annex 1 section 3.1 (eqs. 2a-2g, Table 3) and section 3.2
   (eqs. 3a-6).
.. [2] Recommendation ITU-R P.526-15 (10/2019), section 4.1, eq. (31):
   the knife-edge loss J(ν) of eq. (2a).
.. [3] NTIA/ITS, "Recommendation ITU-R P.2108 - U.S. Reference Software
   Implementation", package ``proplib-p2108`` 1.1 (the test reference).
"""

from __future__ import annotations

import numpy as np

from ._names import name_index
from .diffraction_batch import j_knife_edge_db

__all__ = [
    "CLUTTER_CLASSES", "DEFAULT_CLUTTER_HEIGHT_M", "DIFFRACTION_CLASSES", "DEFAULT_STREET_WIDTH_M",
    "HEIGHT_GAIN_FREQUENCY_GHZ", "STATISTICAL_FREQUENCY_GHZ", "STATISTICAL_MIN_DISTANCE_KM",
    "BOTH_ENDS_MIN_DISTANCE_KM", "clutter_classes", "representative_height_m", "terminal_path_height_m",
    "height_gain_correction_db", "terrestrial_clutter_loss_db",
]

#: The clutter classes of Table 3, by the names the project uses.
CLUTTER_CLASSES = ("water", "open", "suburban", "urban", "trees", "dense-urban")
#: Table 3: the default representative clutter height R of each class [m].
DEFAULT_CLUTTER_HEIGHT_M = {"water": 10.0, "open": 10.0, "suburban": 10.0,
                            "urban": 15.0, "trees": 15.0, "dense-urban": 20.0}
#: Table 3: the classes corrected by eq. (2a) (diffraction); the others by eq. (2b) (height gain).
DIFFRACTION_CLASSES = frozenset({"suburban", "urban", "trees", "dense-urban"})
#: Section 3.1: the street width w_s to use where none is known [m].
DEFAULT_STREET_WIDTH_M = 27.0
#: Section 3.1: frequency range of the height-gain terminal correction [GHz], inclusive.
HEIGHT_GAIN_FREQUENCY_GHZ = (0.03, 3.0)
#: Section 3.2: frequency range of the statistical clutter loss [GHz], inclusive.
STATISTICAL_FREQUENCY_GHZ = (0.5, 67.0)
#: Section 3.2: the shortest path for the statistical clutter loss [km].
STATISTICAL_MIN_DISTANCE_KM = 0.25
#: Section 3.2: the shortest path on which the statistical loss may be applied at both ends [km].
BOTH_ENDS_MIN_DISTANCE_KM = 1.0

def clutter_classes(clutter_class):
    """Check clutter class names and give their index in :data:`CLUTTER_CLASSES`.

    Parameters
    ----------
    clutter_class : str or sequence of str
        One of ``water``, ``open``, ``suburban``, ``urban``, ``trees``,
        ``dense-urban`` per element.

    Returns
    -------
    index : numpy.ndarray of int
        Index [-] of each class in :data:`CLUTTER_CLASSES`, same shape as
        the input.

    Raises
    ------
    ProfilerError
        A name is not a clutter class (the message names it and the valid
        ones).

    References
    ----------
    .. [1] ITU-R P.2108-1 Annex 1 section 3.1, Table 3 (the clutter types).
    """
    return name_index(clutter_class, CLUTTER_CLASSES, "clutter class")


def representative_height_m(clutter_class):
    """The default representative clutter height R of each class (Table 3) [m].

    Parameters
    ----------
    clutter_class : str or sequence of str
        Clutter class name(s) of :data:`CLUTTER_CLASSES`.

    Returns
    -------
    height_m : numpy.ndarray
        R [m]: 10 for water, open and suburban, 15 for urban and trees, 20
        for dense urban; same shape as the input.

    References
    ----------
    .. [1] ITU-R P.2108-1 Annex 1 section 3.1, Table 3.
    """
    table = np.array([DEFAULT_CLUTTER_HEIGHT_M[name] for name in CLUTTER_CLASSES])
    return table[clutter_classes(clutter_class)]


def terminal_path_height_m(antenna_height_m, clutter_height_m):
    """Height at which section 3.1 computes the path: the antenna's, or R when the antenna is below it [m].

    Parameters
    ----------
    antenna_height_m : float or array_like
        Antenna height above ground h [m].
    clutter_height_m : float or array_like
        Representative clutter height R around the terminal [m].

    Returns
    -------
    height_m : numpy.ndarray
        max(h, R) [m]; the correction of :func:`height_gain_correction_db`
        is added to the loss of the path computed with this height.

    References
    ----------
    .. [1] ITU-R P.2108-1 Annex 1 section 3.1 (the terminal at the
       representative clutter height, the correction added to the path
       loss).
    """
    return np.maximum(np.asarray(antenna_height_m, dtype=float), np.asarray(clutter_height_m, dtype=float))


def height_gain_correction_db(frequency_ghz, antenna_height_m, clutter_class, clutter_height_m=None,
                              street_width_m=DEFAULT_STREET_WIDTH_M):
    """Height-gain terminal correction A_h of section 3.1: the median clutter loss of a terminal [dB].

    Zero when the antenna is at or above R; below it, eq. (2a)
    (J(ν) - 6.03, diffraction over the clutter into the street) for
    suburban, urban, trees and dense urban, eq. (2b) (-K_h2 log10(h/R))
    for water and open.

    Parameters
    ----------
    frequency_ghz : float or array_like
        Frequency f [GHz], 0.03 to 3.
    antenna_height_m : float or array_like
        Antenna height above ground h [m], above 0.
    clutter_class : str or sequence of str
        Clutter class of the terminal's surroundings, one of
        :data:`CLUTTER_CLASSES` per element.
    clutter_height_m : float or array_like, optional
        Representative clutter height R [m], above 0; default the class's
        Table 3 value (:func:`representative_height_m`).
    street_width_m : float or array_like, optional
        Street width w_s [m], above 0; default 27 m.

    Returns
    -------
    correction_db : numpy.ndarray
        A_h [dB], broadcast over the inputs; NaN where an input is out of
        range.

    References
    ----------
    .. [1] ITU-R P.2108-1 Annex 1 section 3.1, eqs. (2a)-(2g) and Table 3.
    .. [2] ITU-R P.526-15 section 4.1, eq. (31) (J(ν)).
    """
    index = clutter_classes(clutter_class)
    f = np.asarray(frequency_ghz, dtype=float)
    h = np.asarray(antenna_height_m, dtype=float)
    r = representative_height_m(clutter_class) if clutter_height_m is None else np.asarray(clutter_height_m, float)
    ws = np.asarray(street_width_m, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        h_dif = r - h                                                        # eq. (2d)
        theta_clut_deg = np.degrees(np.arctan(h_dif / ws))                   # eq. (2e)
        k_h2 = 21.8 + 6.2 * np.log10(f)                                      # eq. (2f)
        k_nu = 0.342 * np.sqrt(f)                                            # eq. (2g)
        nu = k_nu * np.sqrt(np.maximum(h_dif * theta_clut_deg, 0.0))         # eq. (2c)
        diffraction = j_knife_edge_db(nu) - 6.03                             # eq. (2a)
        height_gain = -k_h2 * np.log10(h / r)                                # eq. (2b)
    is_diffraction = np.isin(index, [CLUTTER_CLASSES.index(name) for name in DIFFRACTION_CLASSES])
    correction = np.where(h >= r, 0.0, np.where(is_diffraction, diffraction, height_gain))
    low, high = HEIGHT_GAIN_FREQUENCY_GHZ
    valid = (f >= low) & (f <= high) & (h > 0.0) & (r > 0.0) & (ws > 0.0)
    return np.where(valid, correction, np.nan) + 0.0


def terrestrial_clutter_loss_db(frequency_ghz, distance_km, location_percent):
    """Statistical clutter loss of section 3.2 not exceeded at p % of locations, one end of the path [dB].

    L_ctt = -5 log10(10^(-0.2 L_l) + 10^(-0.2 L_s)) - σ_cb Q^-1(p/100),
    no larger than its value at 2 km (eq. 6).

    Parameters
    ----------
    frequency_ghz : float or array_like
        Frequency f [GHz], 0.5 to 67.
    distance_km : float or array_like
        Path length d [km], 0.25 or more (1 km or more to apply it at both
        ends, :data:`BOTH_ENDS_MIN_DISTANCE_KM`).
    location_percent : float or array_like
        Percentage of locations p [%] at which the loss is not exceeded,
        strictly between 0 and 100.

    Returns
    -------
    loss_db : numpy.ndarray
        L_ctt [dB], broadcast over the inputs; NaN where an input is out of
        range.

    References
    ----------
    .. [1] ITU-R P.2108-1 Annex 1 section 3.2, eqs. (3a), (3b), (4a), (4b),
       (5a), (5b) and (6).
    """
    from scipy.special import ndtri

    f = np.asarray(frequency_ghz, dtype=float)
    d = np.asarray(distance_km, dtype=float)
    p = np.asarray(location_percent, dtype=float)
    low, high = STATISTICAL_FREQUENCY_GHZ
    valid = (f >= low) & (f <= high) & (d >= STATISTICAL_MIN_DISTANCE_KM) & (p > 0.0) & (p < 100.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        q_inv = -ndtri(p / 100.0)                   # Q^-1(p/100): the standard normal exceeds it with p/100
        loss = np.minimum(_terrestrial_loss_db(f, d, q_inv), _terrestrial_loss_db(f, 2.0, q_inv))   # eq. (6)
    return np.where(valid, loss, np.nan) + 0.0


def _terrestrial_loss_db(f_ghz, d_km, q_inv):
    """Eqs. (3a)-(5b) of P.2108-1 section 3.2 at one distance, before the 2 km cap of eq. (6) [dB]."""
    sigma_l_db, sigma_s_db = 4.0, 6.0                                               # eqs. (4b), (5b)
    l_l = -2.0 * np.log10(10.0 ** (-5.0 * np.log10(f_ghz) - 12.5) + 10.0 ** -16.5)  # eq. (4a)
    l_s = 32.98 + 23.9 * np.log10(d_km) + 3.0 * np.log10(f_ghz)                    # eq. (5a)
    w_l, w_s = 10.0 ** (-0.2 * l_l), 10.0 ** (-0.2 * l_s)
    sigma_cb = np.sqrt((sigma_l_db ** 2 * w_l + sigma_s_db ** 2 * w_s) / (w_l + w_s))  # eq. (3b)
    return -5.0 * np.log10(w_l + w_s) - sigma_cb * q_inv                            # eq. (3a)
