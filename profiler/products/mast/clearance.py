"""Closed-form clearance bounds of the mast solver.

The clearance criteria of :func:`profiler.products.mast.solve.solve_mast` are linear in the
antenna heights at every profile sample, so the lowest mast that meets one is
the maximum over the samples of a per-sample bound: the target height of the
line of sight (:func:`clearance_target_m`), the bound for one raised end or
both (:func:`required_height_m`), and the lowest mast at B for a given mast
at A (:func:`lowest_b_clearance_m`).  Heights are rounded up to the next
millimetre (:func:`round_up_mm`), so a reported height meets its criterion.

References
----------
.. [1] ITU-R P.530-18 (09/2021), section 2.2.2.1 (planning criteria for
   antenna heights, from memory).
.. [2] ITU-R P.526-15 (10/2019), section 2 (Earth bulge d1 d2 / (2 a_e)
   with the effective radius) and eq. (2) (first Fresnel radius
   F1 = sqrt(lambda d1 d2 / d)).
"""

from __future__ import annotations

import numpy as np

from ...errors import ProfilerError
from ...propagation import geometry

__all__ = ["SOLVE_ENDS", "round_up_mm", "clearance_target_m", "required_height_m", "lowest_b_clearance_m",
           "clearance_criteria"]

SOLVE_ENDS = ("a", "b", "both")


def round_up_mm(height_m):
    """Round a height up to the next millimetre, strictly above the input [m].

    The result exceeds the input by at least 1 micrometre and at most
    1.001 mm, so a height bound met with equality is met with room to
    spare after rounding (floating-point noise cannot flip the verdict).
    """
    h = np.asarray(height_m, dtype=float)
    out = np.round(np.ceil((h + 1e-6) * 1000.0) / 1000.0, 3)
    return float(out) if out.ndim == 0 else out


def clearance_target_m(distance_m, terrain_m, wavelength_m, effective_radius_m, clearance_ratio):
    """Height the line of sight must reach at each sample [m above mean sea level].

    t_i = terrain_i + b_i + R F1_i, with the bulge b_i = d1 d2 / (2 a_e) and
    the first Fresnel radius F1_i = sqrt(lambda d1 d2 / d).

    Parameters
    ----------
    distance_m : array_like
        Distance of each sample from A [m], increasing, first 0.
    terrain_m : array_like
        Terrain height [m AMSL].
    wavelength_m : float
        Wavelength [m].
    effective_radius_m : float
        Effective Earth radius a_e [m].
    clearance_ratio : float
        Required clearance as a fraction R of the first Fresnel radius [-].

    Returns
    -------
    ndarray
        Target height at every sample [m AMSL] (the end values are the
        terrain heights, where F1 and the bulge vanish).

    References
    ----------
    ITU-R P.526-15 section 2 and eq. (2); ITU-R P.530-18 section 2.2.2.1.
    """
    d = np.asarray(distance_m, dtype=float)
    terrain = np.asarray(terrain_m, dtype=float)
    d2 = d[-1] - d
    return (terrain + geometry.earth_bulge_m(d, d2, effective_radius_m)
            + clearance_ratio * geometry.fresnel_radius_m(d, d2, wavelength_m))


def required_height_m(distance_m, target_m, ground_a_m, ground_b_m, solve, mast_a_m=0.0, mast_b_m=0.0):
    """Closed-form lowest height that lifts the line of sight to ``target_m`` everywhere.

    The line of sight at sample i is los_i = H_a (1 - x_i) + H_b x_i with
    x_i = d_i / d and H = ground + mast.  The condition los_i >= t_i is linear
    in each antenna height, so for every interior sample

    * ``solve="a"``:    m_a >= (t_i - H_b x_i) / (1 - x_i) - ground_a
    * ``solve="b"``:    m_b >= (t_i - H_a (1 - x_i)) / x_i - ground_b
    * ``solve="both"``: delta >= t_i - los_i  (the same height added at both ends)

    and the requirement is the maximum of these bounds.

    Parameters
    ----------
    distance_m : array_like
        Distance of each sample from A [m]; the two end samples are the sites.
    target_m : array_like
        Height the line of sight must reach [m AMSL], see :func:`clearance_target_m`.
    ground_a_m, ground_b_m : float
        Ground height at A and B [m AMSL].
    solve : {"a", "b", "both"}
        Which end is raised.
    mast_a_m, mast_b_m : float
        Current masts [m]: the fixed end's mast, or both masts for ``"both"``.

    Returns
    -------
    required_m : float
        The mast at A (``"a"``), at B (``"b"``), or the added height
        (``"both"``) [m]; unclamped, so it may be negative (the obstruction
        is cleared even by a mast below ground) or exceed any limit.
    index : int
        Profile sample that sets the requirement (the binding obstruction).

    References
    ----------
    ITU-R P.526-15 section 2 (straight ray over the bulged terrain).
    """
    d = np.asarray(distance_m, dtype=float)
    t = np.asarray(target_m, dtype=float)[1:-1]
    x = d[1:-1] / d[-1]
    h_a = ground_a_m + mast_a_m
    h_b = ground_b_m + mast_b_m
    if solve == "a":
        bound = (t - h_b * x) / (1.0 - x) - ground_a_m
    elif solve == "b":
        bound = (t - h_a * (1.0 - x)) / x - ground_b_m
    elif solve == "both":
        bound = t - (h_a * (1.0 - x) + h_b * x)
    else:
        raise ProfilerError(f"--solve must be one of {', '.join(SOLVE_ENDS)}, got {solve!r}")
    j = int(np.argmax(bound))
    return float(bound[j]), j + 1



def lowest_b_clearance_m(d, targets, g_a, g_b, m_a):
    """Lowest mast at B (>= 0, rounded up to mm) meeting every clearance target with mast m_a at A.

    Parameters
    ----------
    d : array_like
        Distance of each sample from A [m].
    targets : list of array_like
        Target heights of the line of sight, one array per criterion [m AMSL].
    g_a, g_b : float
        Ground height at A and B [m AMSL].
    m_a : float
        Mast at A [m].

    Returns
    -------
    float
        Mast at B [m], 0 when there is no target.

    References
    ----------
    ITU-R P.526-15 section 2, as :func:`required_height_m`.
    """
    if not targets:
        return 0.0
    bound = max(required_height_m(d, t, g_a, g_b, "b", m_a, 0.0)[0] for t in targets)
    return max(0.0, round_up_mm(bound))


def clearance_criteria(pb, ratio, ratio_low):
    """Closed-form clearance requirements: (criteria rows, {name: (bound, index, target)})."""
    criteria, req = [], {}
    for name, r, kk, ae_k in (("clearance", ratio, pb.k, pb.ae), ("clearance_low_k", ratio_low, pb.k_low, pb.ae_low)):
        if r is None:
            continue
        target = clearance_target_m(pb.d, pb.terrain, pb.lam, ae_k, r)
        bound, idx = required_height_m(pb.d, target, pb.g_a, pb.g_b, pb.solve, pb.m_a0, pb.m_b0)
        req[name] = (bound, idx, target)
        t_req = max(pb.lower, round_up_mm(bound))
        criteria.append({"criterion": name, "clearance_ratio": r, "k_factor": kk, "effective_radius_m": ae_k,
                         **pb.pair(t_req), "within_max": bool(t_req <= pb.upper + 1e-12), **pb.point(idx)})
    return criteria, req
