"""ITU-R P.1812-8, the part that needs the profile samples: reductions over the samples of every path.

:func:`p1812_reductions` turns a *reducer* (the maxima, indices and sums over
the samples of every path) into everything the per-path formulas of
:func:`profiler.propagation.p1812.p1812_finish` need, the same split as
:func:`profiler.propagation.diffraction_batch.diffraction_reductions` /
``diffraction_finish``.  Two reducers exist: :class:`ProfileReducer` here
(numpy, padded profiles, what :func:`profiler.propagation.p1812.p1812_batch`
uses) and :class:`profiler.propagation.p1812.prefix.PrefixReducer` (numba,
every prefix of every coverage radial).  Both evaluate the same elementwise
terms (:func:`profiler.propagation.p1812.geometry.elevation_tangent_term`,
:func:`~profiler.propagation.p1812.geometry.roughness_term` and the
delta-Bullington terms of :mod:`profiler.propagation.diffraction_batch`).

A reducer is a :class:`Reducer`: ``d_total_km``, ``h_first_m``,
``h_last_m`` and the methods documented there.

References
----------
.. [1] Recommendation ITU-R P.1812-8, Annex 1 sections 3-4.3 and
   Attachment 1 (path profile analysis).
.. [2] Recommendation ITU-R P.452-18, section 4.2 and Attachment 2
   section 5.1.6.
"""

from __future__ import annotations

import numpy as np

from ..diffraction_batch import bulge_km_term, diffraction_reductions, numpy_reduce, v_unit_term
from .geometry import (
    EARTH_RADIUS_KM,
    ZONE_INLAND,
    ZONE_SEA,
    effective_radius_km,
    elevation_tangent_term,
    horizon_geometry,
    inland_zones_km,
    padded_profile,
    roughness_term,
    zone_sections_km,
)


class Reducer:
    """What :func:`p1812_reductions` asks of a reducer: the reductions over the samples of L paths.

    Attributes
    ----------
    d_total_km : ndarray, shape (L,)
        Path lengths [km].
    h_first_m, h_last_m : ndarray, shape (L,)
        Ground heights at the transmitter and the receiver [m amsl].
    """

    def horizons(self, hts, hrs, ae_km):
        """The horizons: largest elevation-angle tangents from each terminal and where they are, and where ν is largest.

        The receiver's horizon is read on trans-horizon paths only and the
        sample of the largest ν on the others
        (:func:`~profiler.propagation.p1812.geometry.trans_horizon` of
        ``tan_t_max``): a reducer may skip the one a path does not need.

        Parameters
        ----------
        hts, hrs : ndarray, shape (L,)
            Antenna heights [m amsl].
        ae_km : float
            Median effective Earth radius [km].

        Returns
        -------
        dict of ndarray, shape (L,)
            ``tan_t_max``, ``tan_r_max`` (largest
            :func:`~profiler.propagation.p1812.geometry.elevation_tangent_term`
            of an interior point from the transmitter and the receiver) [-],
            ``theta_t_index``, ``theta_r_index`` (their sample index) and
            ``nu_index`` (index of the largest ν of P.452-18 eq. 16).
        """
        raise NotImplementedError

    def distance_at(self, index):
        """Distance of one sample of every path from the transmitter [km].

        Parameters
        ----------
        index : ndarray of int, shape (L,)
            Sample index per path.

        Returns
        -------
        ndarray, shape (L,)
            Distance [km].
        """
        raise NotImplementedError

    def roughness(self, first, last, hst, slope):
        """Largest height above the smooth-Earth line over the samples ``first .. last`` of every path [m].

        Parameters
        ----------
        first, last : ndarray of int, shape (L,)
            First and last sample index per path (the horizons).
        hst : ndarray, shape (L,)
            Smooth-surface height at the transmitter, eq. (90a) [m amsl].
        slope : ndarray, shape (L,)
            Slope of the smooth-Earth surface [m/km].

        Returns
        -------
        ndarray, shape (L,)
            hm [m] (the largest
            :func:`~profiler.propagation.p1812.geometry.roughness_term`;
            -inf for an empty range).
        """
        raise NotImplementedError

    def zones(self):
        """Zone statistics of every path.

        Returns
        -------
        dict of ndarray, shape (L,)
            ``w_sea_fraction`` [-], ``dtm_km``, ``dlm_km`` [km]
            (:func:`~profiler.propagation.p1812.geometry.zone_sections_km`).
        """
        raise NotImplementedError

    def terminals(self):
        """Clutter and zone at and next to the terminals.

        Returns
        -------
        dict of ndarray, shape (L,)
            ``r2_m``, ``rn1_m`` (clutter next to the transmitter and the
            receiver), ``clutter_t_m``, ``clutter_r_m`` (at them) [m];
            ``sea_t``, ``sea_r`` (bool: the terminal's sample is at sea).
        """
        raise NotImplementedError

    def bullington(self, ae_km):
        """One delta-Bullington reduction at an effective Earth radius.

        Parameters
        ----------
        ae_km : float or ndarray, shape (L,)
            Effective Earth radius [km].

        Returns
        -------
        callable
            ``reduce(actual, hts, hrs)`` of
            :func:`profiler.propagation.diffraction_batch.diffraction_reductions`
            (Bullington over terrain plus clutter, smooth surface of the terrain).
        """
        raise NotImplementedError


def documented(reducer_class):
    """Give the methods of a :class:`Reducer` subclass the docstrings of the protocol.

    Parameters
    ----------
    reducer_class : type
        A subclass of :class:`Reducer`.

    Returns
    -------
    type
        ``reducer_class``, its public methods without a docstring given :class:`Reducer`'s.
    """
    for name, method in vars(reducer_class).items():
        if callable(method) and not name.startswith("_") and method.__doc__ is None and hasattr(Reducer, name):
            method.__doc__ = getattr(Reducer, name).__doc__
    return reducer_class


def _col(x):
    return np.asarray(x, dtype=float).reshape(-1, 1) if np.ndim(x) else x


@documented
class ProfileReducer(Reducer):
    """The reductions of :func:`p1812_reductions` over padded profiles (numpy; see :class:`Reducer`).

    Parameters
    ----------
    distance_km, height_m, clutter_m : ndarray, shape (L, N)
        Padded profiles: distances from the transmitter [km], terrain
        heights [m amsl], representative clutter heights [m] (NaN: 0).
    zone : ndarray of int, shape (L, N)
        Radio-meteorological zone codes [-] (1 sea, 3 coastal land, 4 inland).
    n_samples : ndarray of int, shape (L,)
        Samples per path (a count), at least 3.
    """

    def __init__(self, distance_km, height_m, clutter_m, zone, n_samples):
        clutter = np.where(np.isfinite(clutter_m), clutter_m, 0.0)
        self.d, self.h, self.g, self.interior, self.rows, self.n, self.d_total_km = padded_profile(
            distance_km, height_m, clutter, n_samples)
        self.h_first_m, self.h_last_m = self.h[:, 0], self.h[self.rows, self.n - 1]
        self._distance, self._zone, self._clutter = distance_km, zone, clutter

    # the horizons are those of the terrain; the clutter enters the Bullington part only
    def horizons(self, hts, hrs, ae_km):
        ae = _col(ae_km)
        di = np.where(self.interior, self.d, 1.0)
        dr = np.where(self.interior, self.d_total_km[:, None] - self.d, 1.0)
        theta_i = np.where(self.interior, elevation_tangent_term(self.h - hts[:, None], di, ae), -np.inf)
        it = np.argmax(theta_i, axis=1)
        theta_j = np.where(self.interior, elevation_tangent_term(self.h - hrs[:, None], dr, ae), -np.inf)
        nu = np.where(self.interior, v_unit_term(self.h + bulge_km_term(di, dr, ae), hts[:, None], hrs[:, None],
                                                 di, dr, self.d_total_km[:, None]), -np.inf)
        ir = np.argmax(theta_j, axis=1)
        return {"tan_t_max": theta_i[self.rows, it], "theta_t_index": it, "tan_r_max": theta_j[self.rows, ir],
                "theta_r_index": ir, "nu_index": np.argmax(nu, axis=1)}

    def distance_at(self, index):
        return self.d[self.rows, index]

    def roughness(self, first, last, hst, slope):
        cols = np.arange(self.d.shape[1])[None, :]
        between = (cols >= first[:, None]) & (cols <= last[:, None])
        return np.max(np.where(between, roughness_term(self.h, hst[:, None], slope[:, None], self.d), -np.inf),
                      axis=1)

    def zones(self):
        valid = np.arange(self.d.shape[1])[None, :] < self.n[:, None]
        if np.all(np.where(valid, self._zone, ZONE_INLAND) == ZONE_INLAND):
            return inland_zones_km(self.d_total_km)
        return zone_sections_km(np.where(np.isfinite(self._distance), self._distance, np.nan), self._zone, self.n)

    def terminals(self):
        r, rows, last = self._clutter, self.rows, self.n - 1
        zone = self._zone
        return {"r2_m": r[rows, 1], "rn1_m": r[rows, last - 1], "clutter_t_m": r[:, 0], "clutter_r_m": r[rows, last],
                "sea_t": zone[:, 0] == ZONE_SEA, "sea_r": zone[rows, last] == ZONE_SEA}

    def bullington(self, ae_km):
        return numpy_reduce(self.d, self.h, self.n, ae_km, self.g)


def p1812_reductions(reducer, htg_m, hrg_m, delta_n, time_percent, informative=True) -> dict:
    """Everything of P.1812-8 that needs the profile samples, per path (independent of the frequency).

    Parameters
    ----------
    reducer : Reducer
        The reductions over the samples: :class:`ProfileReducer` or
        :class:`profiler.propagation.p1812.prefix.PrefixReducer`.
    htg_m, hrg_m : float or ndarray, shape (L,)
        Antenna heights above ground [m].
    delta_n : float or ndarray, shape (L,)
        Refractivity lapse rate ΔN [N-units/km] (gives a_e).
    time_percent : float or ndarray, shape (L,)
        Time percentage p [%]: the diffraction pass at aβ = 3 x 6371 km is
        reduced only where p < 50 % (or with ``informative``).
    informative : bool, default True
        Also reduce the pass at aβ where it does not change the result.

    Returns
    -------
    dict
        ``htg_m``, ``hrg_m`` [m], ``delta_n``, ``ae_km`` [km], the dicts
        ``geometry`` (``d_km``, ``dlt_km``, ``dlr_km``, ``theta_t_mrad``,
        ``theta_r_mrad``, ``theta_mrad``, ``hts_m``, ``hrs_m``,
        ``trans_horizon``), ``zones`` (:meth:`ProfileReducer.zones`),
        ``heights`` (``hst_eq85_m``, ``hsr_eq86_m``, ``hst_eq90a_m``,
        ``hsr_eq90b_m``, ``hte_m``, ``hre_m``, ``hm_m``), ``terminals``
        (:meth:`ProfileReducer.terminals`), and the delta-Bullington
        reductions ``ld50`` (at a_e) and ``ldb`` (at aβ; None when not reduced).

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3, section 4.3 (eq. 39: Ldβ at aβ)
       and Attachment 1 (horizons, smooth-Earth surface eqs. 85-90,
       effective heights, terrain roughness hm).
    """
    ae = effective_radius_km(delta_n)
    d, h_first, h_last = reducer.d_total_km, reducer.h_first_m, reducer.h_last_m
    htg, hrg = np.asarray(htg_m, dtype=float), np.asarray(hrg_m, dtype=float)
    hts, hrs = np.broadcast_to(h_first + htg, d.shape), np.broadcast_to(h_last + hrg, d.shape)
    geo = horizon_geometry(reducer.horizons(hts, hrs, ae), reducer.distance_at, d, hts, hrs, ae)
    ld50 = diffraction_reductions(reducer.bullington(ae), d, h_first, h_last, hts, hrs)
    hst, hsr = ld50["hst"], ld50["hsr"]                                           # eqs. (85), (86)
    hst_g, hsr_g = np.minimum(hst, h_first), np.minimum(hsr, h_last)              # eq. (90)
    hm = reducer.roughness(geo.pop("ilt"), geo.pop("ilr"), hst_g, (hsr_g - hst_g) / d)
    needed = informative or bool(np.any(np.asarray(time_percent, dtype=float) < 50.0))
    ldb = diffraction_reductions(reducer.bullington(3.0 * EARTH_RADIUS_KM), d, h_first, h_last, hts,
                                 hrs) if needed else None
    heights = {"hst_eq85_m": hst, "hsr_eq86_m": hsr, "hst_eq90a_m": hst_g, "hsr_eq90b_m": hsr_g,
               "hte_m": hts - hst_g, "hre_m": hrs - hsr_g, "hm_m": hm}
    return {"htg_m": htg, "hrg_m": hrg, "delta_n": np.asarray(delta_n, dtype=float), "ae_km": ae, "geometry": geo,
            "zones": reducer.zones(), "heights": heights, "terminals": reducer.terminals(), "ld50": ld50,
            "ldb": ldb}
