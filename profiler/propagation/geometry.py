"""Path geometry over a curved Earth: effective radius, bulge, line of sight,
Fresnel zone and clearance.

All functions are pure and vectorized: they take numpy arrays (or scalars)
and return arrays of the same shape.

References
----------
.. [1] ITU-R P.526-15 (10/2019), "Propagation by diffraction", section 2
   (Earth bulge with the effective radius) and section 3.1, eq. (2)
   (radius of the first Fresnel ellipsoid) and eq. (3) (the same in
   practical units).
.. [2] ITU-R P.452-18 (10/2023), section 4.2 and Attachment 2 section 4,
   eqs. (153) and (156a) (horizon elevation angles for a line-of-sight
   path), and ITU-R P.834-9 (effective Earth radius a_e = k * 6371 km).
.. [3] ITU-R P.530-18, section 2.2.2: Fresnel-clearance planning criteria.
"""

from __future__ import annotations

import math
import re

import numpy as np

from ..errors import ProfilerError

EARTH_RADIUS_M = 6_371_000.0
"""Mean Earth radius used with the k-factor [m] (ITU-R P.452-18 eq. 6a, P.834)."""


_K_PATTERN = re.compile(r"^\s*[0-9.eE+-]+\s*(/\s*[0-9.eE+-]+\s*)?$")


def parse_k_factor(text) -> float:
    """Parse a k-factor given as a decimal (``1.333``) or a fraction (``4/3``).

    The text is parsed as numbers, never evaluated as code.

    Parameters
    ----------
    text : str or float
        The factor as text (``"1.333"``, ``"4/3"``) or as a number [-].

    Returns
    -------
    k : float
        The factor [-]; finite and > 0.

    Raises
    ------
    ProfilerError
        If the text is not a number or a fraction, or the value is not a
        positive finite number.

    References
    ----------
    .. [1] ITU-R P.452-18 eq. (6a): a_e = k a; ITU-R P.834-9
       section 1 (median k = 4/3).
    """
    if isinstance(text, (int, float)):
        value = float(text)
    else:
        s = str(text).strip()
        if not _K_PATTERN.match(s):
            raise ProfilerError(f"k-factor {text!r} is not a number; give a decimal like 1.33 or a fraction like 4/3")
        try:
            if "/" in s:
                num, den = (part.strip() for part in s.split("/", 1))
                value = float(num) / float(den)
            else:
                value = float(s)
        except (ValueError, ZeroDivisionError):
            raise ProfilerError(f"k-factor {text!r} is not a number; "
                                "give a decimal like 1.33 or a fraction like 4/3") from None
    if not math.isfinite(value) or value <= 0:
        raise ProfilerError(f"k-factor must be a positive finite number, got {text!r}")
    return value


def effective_radius_m(k_factor, earth_radius_m: float = EARTH_RADIUS_M):
    """Effective Earth radius a_e = k * a [m].

    Parameters
    ----------
    k_factor : float or array_like
        Effective Earth-radius factor k [-], e.g. 4/3.
    earth_radius_m : float, default 6 371 000
        Mean Earth radius a [m].

    Returns
    -------
    effective_radius_m : float or ndarray
        a_e = k a [m].

    References
    ----------
    .. [1] ITU-R P.452-18 eq. (6a); ITU-R P.834-9 section 1.
    """
    return k_factor * earth_radius_m


def earth_bulge_m(d1_m, d2_m, effective_radius_m):
    """Height of the Earth bulge above the chord between the two ends [m].

    b = d1 d2 / (2 a_e)

    Parameters
    ----------
    d1_m, d2_m : array_like
        Distances from the point to each end [m].
    effective_radius_m : float
        Effective Earth radius a_e [m].

    Returns
    -------
    bulge_m : ndarray
        Bulge b [m], same shape as ``d1_m``.

    References
    ----------
    .. [1] ITU-R P.526-15 section 2 (parabolic approximation of the Earth's
       surface with the effective radius); P.452-18 eq. (14) term
       500 C_e d_i (d - d_i) in practical units.
    """
    return bulge_term(np.asarray(d1_m, dtype=float), np.asarray(d2_m, dtype=float), effective_radius_m)


def line_of_sight_m(distance_m, total_distance_m, antenna_a_amsl_m, antenna_b_amsl_m):
    """Height of the straight line between the antenna tips [m above mean sea level].

    los(d) = h_A + (h_B - h_A) d / D, with the Earth curvature carried by the
    terrain (terrain + bulge), so the line stays straight.

    Parameters
    ----------
    distance_m : array_like
        Distance from A along the path [m].
    total_distance_m : float
        Path length D [m], greater than 0.
    antenna_a_amsl_m : float
        Height of antenna A above mean sea level h_A [m].
    antenna_b_amsl_m : float
        Height of antenna B above mean sea level h_B [m].

    Returns
    -------
    los_m : ndarray
        Height of the line above mean sea level [m], shape of ``distance_m``.

    References
    ----------
    .. [1] ITU-R P.526-15 section 2: the Earth's curvature is put on the
       terrain (bulge with the effective radius) so that the ray is straight.
    """
    return line_term(np.asarray(distance_m, dtype=float), total_distance_m, antenna_a_amsl_m, antenna_b_amsl_m)


def fresnel_radius_m(d1_m, d2_m, wavelength_m, zone: int = 1):
    """Radius of the n-th Fresnel ellipsoid [m].

    F_n = sqrt(n lambda d1 d2 / (d1 + d2)); zero at both ends.

    Parameters
    ----------
    d1_m, d2_m : array_like
        Distances from the point to each end [m], 0 or more.
    wavelength_m : float or array_like
        Wavelength lambda [m].
    zone : int, default 1
        Fresnel zone number n [-], 1 or more.

    Returns
    -------
    radius_m : ndarray
        F_n [m]; 0 where d1 + d2 = 0.

    References
    ----------
    .. [1] ITU-R P.526-15 eq. (2) (first zone) and the general form in
       P.526-15 section 3.1.  Practical units: eq. (3),
       R1 = 550 sqrt(d1 d2 / ((d1+d2) f)) with d in km, f in MHz, R1 in m.
    """
    d1 = np.asarray(d1_m, dtype=float)
    d2 = np.asarray(d2_m, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = fresnel_term(d1, d2, wavelength_m, zone)
    return np.where(d1 + d2 > 0, r, 0.0)


def clearance_m(los_m, terrain_m, bulge_m):
    """Clearance of the line of sight above the bulged terrain [m]: c = los - (terrain + bulge).

    Parameters
    ----------
    los_m : array_like
        Height of the line of sight above mean sea level [m].
    terrain_m : array_like
        Terrain (plus obstacle) height above mean sea level [m].
    bulge_m : array_like
        Earth bulge at the same points [m].

    Returns
    -------
    clearance_m : ndarray
        Clearance c [m]; negative where the terrain blocks the line.

    References
    ----------
    .. [1] ITU-R P.526-15 section 2 (terrain height plus Earth bulge
       against the straight ray).
    """
    return np.asarray(los_m, dtype=float) - (np.asarray(terrain_m, dtype=float) + np.asarray(bulge_m, dtype=float))


def clearance_ratio(clearance, fresnel_radius):
    """Clearance as a fraction of the first Fresnel radius, c / F1 (inf where F1 = 0).

    Parameters
    ----------
    clearance : array_like
        Clearance c of the line above the bulged terrain [m].
    fresnel_radius : array_like
        First Fresnel radius F1 at the same points [m].

    Returns
    -------
    ratio : ndarray
        c / F1 [-]; +inf where F1 = 0 (the path ends).

    References
    ----------
    .. [1] ITU-R P.530-18 section 2.2.2 (clearance criteria in fractions of
       F1); F1 from ITU-R P.526-15 eq. (2).
    """
    c = np.asarray(clearance, dtype=float)
    f = np.asarray(fresnel_radius, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(f > 0, c / np.where(f > 0, f, 1.0), np.inf)


# --------------------------------------------------------------------------- elementwise terms
# Plain arithmetic on numpy arrays or floats: the public functions above and
# profiler.engine.geometry.geometry_batch use them, and profiler.propagation.prefix_kernel compiles
# the very same functions with numba (one definition of each term).

def bulge_term(d1_m, d2_m, effective_radius_m):
    """Earth bulge b = d1 d2 / (2 a_e) [m] (ITU-R P.526-15 section 2); elementwise.

    Parameters
    ----------
    d1_m, d2_m : float or ndarray
        Distances from the point to each end [m].
    effective_radius_m : float or ndarray
        Effective Earth radius a_e [m].

    Returns
    -------
    bulge_m : float or ndarray
        Bulge b [m].

    References
    ----------
    .. [1] ITU-R P.526-15 section 2.
    """
    return d1_m * d2_m / (2.0 * effective_radius_m)


def line_term(distance_m, total_distance_m, antenna_a_amsl_m, antenna_b_amsl_m):
    """Height of the straight antenna-to-antenna line at ``distance_m`` [m AMSL]; elementwise.

    Parameters
    ----------
    distance_m : float or ndarray
        Distance from A [m].
    total_distance_m : float or ndarray
        Path length [m], greater than 0.
    antenna_a_amsl_m, antenna_b_amsl_m : float or ndarray
        Antenna tip heights above mean sea level [m].

    Returns
    -------
    los_m : float or ndarray
        Height of the line above mean sea level [m].

    References
    ----------
    .. [1] ITU-R P.526-15 section 2 (straight ray over the bulged terrain).
    """
    return antenna_a_amsl_m + (antenna_b_amsl_m - antenna_a_amsl_m) * distance_m / total_distance_m


def fresnel_term(d1_m, d2_m, wavelength_m, zone=1):
    """Fresnel radius sqrt(n lambda d1 d2 / (d1 + d2)) [m] (ITU-R P.526-15 eq. 2); elementwise, d1 + d2 > 0.

    Parameters
    ----------
    d1_m, d2_m : float or ndarray
        Distances from the point to each end [m]; d1 + d2 > 0.
    wavelength_m : float or ndarray
        Wavelength [m].
    zone : int, default 1
        Fresnel zone number n [-].

    Returns
    -------
    radius_m : float or ndarray
        F_n [m].

    References
    ----------
    .. [1] ITU-R P.526-15 eq. (2).
    """
    return np.sqrt(zone * wavelength_m * d1_m * d2_m / (d1_m + d2_m))


def clearance_ratio_term(d1_m, total_m, terrain_m, antenna_a_amsl_m, antenna_b_amsl_m, wavelength_m,
                         effective_radius_m):
    """Clearance / F1 of one interior sample (0 < d1 < total) [-]; elementwise.

    ``(line - (terrain + bulge)) / F1``, exactly the ``ratio`` of
    :func:`profiler.engine.geometry.geometry_batch` at an interior sample.

    Parameters
    ----------
    d1_m : float or ndarray
        Distance of the sample from A [m], 0 < d1 < total.
    total_m : float or ndarray
        Path length [m].
    terrain_m : float or ndarray
        Terrain height at the sample above mean sea level [m].
    antenna_a_amsl_m, antenna_b_amsl_m : float or ndarray
        Antenna tip heights above mean sea level [m].
    wavelength_m : float or ndarray
        Wavelength [m].
    effective_radius_m : float or ndarray
        Effective Earth radius [m].

    Returns
    -------
    ratio : float or ndarray
        Clearance over first Fresnel radius [-].

    References
    ----------
    .. [1] ITU-R P.526-15 section 2 and eq. (2).
    """
    d2 = total_m - d1_m
    clearance = line_term(d1_m, total_m, antenna_a_amsl_m, antenna_b_amsl_m) - (
        terrain_m + bulge_term(d1_m, d2, effective_radius_m))
    return clearance / fresnel_term(d1_m, d2, wavelength_m)


def elevation_tangent(h_from_amsl_m, h_to_amsl_m, distance_m, effective_radius_m):
    """Tangent of the elevation angle of a ray over the curved Earth [-] (plain arithmetic, no checks).

    tan(theta) = (h_to - h_from) / d - d / (2 a_e)

    Parameters
    ----------
    h_from_amsl_m : float or array_like
        Height of the end the angle is seen from, above mean sea level [m].
    h_to_amsl_m : float or array_like
        Height of the point seen above mean sea level [m].
    distance_m : float or array_like
        Distance between them d [m], greater than 0.
    effective_radius_m : float or array_like
        Effective Earth radius a_e [m].

    Returns
    -------
    tangent : float or ndarray
        tan(theta) [-]; negative below the local horizontal.

    References
    ----------
    .. [1] ITU-R P.452-18 eqs. (153) and (156a) (horizon elevation angles
       with the Earth's curvature), small-angle form as in the Recommendation.
    """
    return (h_to_amsl_m - h_from_amsl_m) / distance_m - distance_m / (2.0 * effective_radius_m)


def elevation_angle_deg(h_from_amsl_m, h_to_amsl_m, distance_m, effective_radius_m):
    """Elevation angle of the line of sight at the ``from`` end [deg above horizontal].

    theta = atan((h_to - h_from) / d - d / (2 a_e))

    Parameters
    ----------
    h_from_amsl_m : float or array_like
        Height of the end the angle is seen from, above mean sea level [m].
    h_to_amsl_m : float or array_like
        Height of the other end above mean sea level [m].
    distance_m : float or array_like
        Path length d [m], greater than 0.
    effective_radius_m : float or array_like
        Effective Earth radius a_e [m].

    Returns
    -------
    angle_deg : float or ndarray
        Elevation angle [deg]; negative below the local horizontal.

    References
    ----------
    .. [1] ITU-R P.452-18 eqs. (153) and (156a) (line-of-sight horizon
       angles), with heights above mean sea level and d the path length.
    """
    d = np.asarray(distance_m, dtype=float)
    return np.degrees(np.arctan(elevation_tangent(h_from_amsl_m, h_to_amsl_m, d, effective_radius_m)))

