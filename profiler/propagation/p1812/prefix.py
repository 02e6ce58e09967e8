"""ITU-R P.1812-8 reductions over every prefix of every radial (``profiler coverage`` only; imports numba).

The P.1812 counterpart of :mod:`profiler.propagation.prefix_kernel`: in a
coverage map every sample ``j`` of a radial is the node end of a link whose
profile is the first ``j + 1`` samples.  :class:`PrefixReducer` gives
:func:`profiler.propagation.p1812.reductions.p1812_reductions` the
reductions of all those links at once:

* the horizons, one compiled kernel: seen from the site (whose antenna is
  the same for every link of a radial) the largest elevation-angle tangent
  and where it is, a running maximum along the radial; then per link one
  loop over its interior samples, for the largest tangent seen from the
  node where the link is trans-horizon
  (:func:`~profiler.propagation.p1812.geometry.trans_horizon`, compiled),
  else for where ν is largest;
* the terrain roughness hm between the horizons: one compiled loop over the
  samples between the two horizon indices of every link;
* the two delta-Bullington passes (at a_e and at aβ):
  :func:`profiler.propagation.prefix_kernel.prefix_reduce`.

There is no physics in this module: every per-sample term is a function of
:mod:`profiler.propagation.p1812.geometry` or
:mod:`profiler.propagation.diffraction_batch` (the ones the numpy reducer
uses), compiled by ``numba.njit``.  A coverage run has no zones: every
sample is inland (ω = 0, dtm = dlm = d, P.1812-8 Table 2).  With a land
cover the representative clutter height R of every sample is added to the
interior points of each link for the delta-Bullington pass over the actual
profile (g = h + R, P.1812-8 section 3.2); the horizons, the roughness and
the smooth surface are those of the terrain, as in
:class:`~profiler.propagation.p1812.reductions.ProfileReducer`.  A link's
interior points are samples ``1 .. j - 1``, so its node sample ``j`` never
carries clutter into its own path.

References
----------
.. [1] ITU-R P.1812-8 Annex 1 Attachment 1 (horizon elevation angles,
   terrain roughness hm), section 3 (ω, dtm, dlm).
.. [2] ITU-R P.452-18 section 4.2.1, eq. (16) (ν), through
   :mod:`profiler.propagation.diffraction_batch`.
"""

from __future__ import annotations

import numba
import numpy as np

from .. import diffraction_batch as diffraction_engine
from .. import hull, prefix_kernel
from . import geometry
from .reductions import Reducer, documented

_TERMS = ((geometry, ("elevation_tangent_term", "elevation_mrad_term", "trans_horizon", "roughness_term")),
          (diffraction_engine, ("bulge_km_term", "obstacle_term", "v_unit_term")),
          (hull, ("upper_hull_push", "block_tops")))
_G, _D, _H = (prefix_kernel.compile_terms(module, names) for module, names in _TERMS)
_push = _H["upper_hull_push"]
_block_tops = _H["block_tops"]
_nu_argmax_blocks = prefix_kernel.nu_argmax_blocks
_tangent, _trans, _roughness = (_G[k] for k in ("elevation_tangent_term", "trans_horizon", "roughness_term"))
_bulge_km, _v_unit = _D["bulge_km_term"], _D["v_unit_term"]


def _horizon_kernels(key: str):
    """The compiled horizon kernels (closures over ``key`` only, the terms' fingerprint, which keys their disk cache).

    ``horizon_kernel`` finds the receiver's horizon of a trans-horizon link
    by a tangent query on an upper convex hull; ``horizon_kernel_reference``
    loops over every interior sample (O(n^2) per radial; kept for the tests).
    With ``s = d - d_i`` [km], ``c = 500 / a_e`` [m/km^2] and ``h_r`` the
    node antenna [m AMSL], the receiver tangent of sample ``i``
    (P.1812-8 Attachment 1 eq. (7) for θr, :func:`elevation_tangent_term`) is

        1000 tan = (h_i - h_r) / s - c s = (h_i - h_r - c s^2) / s,

    and with ``s^2 = d^2 - 2 d d_i + d_i^2``,

        h_i - h_r - c s^2 = (y_i - Y) - 2 c d s,
        y_i = h_i - c d_i^2,   Y = h_r - c d^2,

    so ``1000 tan = (y_i - Y) / (d - d_i) - 2 c d``: an increasing function
    of the slope ``(y_i - Y) / (d - d_i)`` from the point ``(d, Y)`` (right of
    every interior point) back to the points ``(d_i, y_i)``, whose ordinates
    do not depend on the node ``j``.  Its maximum over ``0 < i < j`` is at a
    vertex of their upper hull, where the tangent rises then falls along the
    vertices: a binary search on the tangents themselves (the first vertex
    not followed by a strictly larger one: the first of tied samples, as the
    loop's strict ``>``), unless the previous link's vertex is still one and
    passes that test against its two neighbours.  The same parabola makes the Bullington slope from
    the node (P.452-18 eq. (18), P.1812-8 eq. (17)) a hull query
    (``srim = (y_i - Y) / (d - d_i) - c d``), but that pass also takes the
    largest ν (eq. (16)), which is no tangent, so it keeps its loop.
    """
    fastmath = prefix_kernel.FASTMATH
    block, group = prefix_kernel.BLOCK, prefix_kernel.GROUP

    @numba.njit(cache=True, fastmath=fastmath)
    def nu_argmax(d_km, h_m, j, a, b, ae_km):   # pragma: no cover (compiled)
        d = d_km[j]
        best = -np.inf
        at = 0
        for i in range(1, j):   # line of sight: where ν is largest
            di = d_km[i]
            dd = d - di
            nu = _v_unit(h_m[i] + _bulge_km(di, dd, ae_km), a, b, di, dd, d)
            if nu > best:
                best, at = nu, i
        return best, at

    @numba.njit(cache=True, parallel=True, nogil=True, fastmath=fastmath)
    def horizon_kernel_reference(d_km, h_m, n, site, hrs, ae_km, need, tangents, index):   # pragma: no cover
        # every link, needed or not (the same arguments as horizon_kernel)
        _key = key   # noqa: F841 (the cache key)
        for r in numba.prange(d_km.shape[0]):
            a = site[r]
            t_max = -np.inf   # seen from the site, a sample's elevation does not depend on the node: running max
            it = 0
            for j in range(2, n[r]):
                tangent = _tangent(h_m[r, j - 1] - a, d_km[r, j - 1], ae_km)
                if tangent > t_max:
                    t_max, it = tangent, j - 1
                d, b = d_km[r, j], hrs[r, j]
                best = -np.inf
                at = 0
                if _trans(t_max, d, a, b, ae_km):   # the receiver's horizon
                    for i in range(1, j):
                        tangent = _tangent(h_m[r, i] - b, d - d_km[r, i], ae_km)
                        if tangent > best:
                            best, at = tangent, i
                else:
                    best, at = nu_argmax(d_km[r], h_m[r], j, a, b, ae_km)
                tangents[0, r, j], tangents[1, r, j] = t_max, best
                index[0, r, j], index[1, r, j] = it, at

    @numba.njit(cache=True, parallel=True, nogil=True, fastmath=fastmath)
    def horizon_kernel(d_km, h_m, n, site, hrs, ae_km, need, tangents, index):   # pragma: no cover (compiled)
        _key = key   # noqa: F841 (the cache key)
        c = 500.0 / ae_km
        for r in numba.prange(d_km.shape[0]):
            a = site[r]
            x = d_km[r]
            y = h_m[r] - c * x * x   # the heights less the parabola: the same for every node
            tops = _block_tops(y, n[r], block, group)
            hint = 0
            vertex = np.empty(max(n[r], 1), dtype=np.int64)
            vx, vy = np.empty(max(n[r], 1)), np.empty(max(n[r], 1))
            m = 0
            t_max = -np.inf
            it = 0
            guess_q, guess_i = -1, -1   # hull position and sample of the last receiver horizon found by search
            for j in range(2, n[r]):
                tangent = _tangent(h_m[r, j - 1] - a, x[j - 1], ae_km)
                if tangent > t_max:
                    t_max, it = tangent, j - 1
                m = _push(x, y, vertex, vx, vy, m, j - 1)
                if not need[r, j]:
                    continue
                d, b = x[j], hrs[r, j]
                if _trans(t_max, d, a, b, ae_km):   # the receiver's horizon: tangent to the hull
                    # the previous link's vertex when it is still one, rises from its left neighbour and is not
                    # exceeded by its right one (the first largest: rising strictly then falling); else a search
                    q = guess_q
                    if 0 <= q < m and vertex[q] == guess_i:
                        best = _tangent(h_m[r, guess_i] - b, d - x[guess_i], ae_km)
                        if (q == 0 or _tangent(h_m[r, vertex[q - 1]] - b, d - x[vertex[q - 1]], ae_km) < best) and \
                                (q == m - 1 or _tangent(h_m[r, vertex[q + 1]] - b, d - x[vertex[q + 1]], ae_km)
                                 <= best):
                            tangents[0, r, j], tangents[1, r, j] = t_max, best
                            index[0, r, j], index[1, r, j] = it, guess_i
                            continue
                    lo, hi = 0, m - 1
                    while lo < hi:
                        mid = (lo + hi) // 2
                        if (_tangent(h_m[r, vertex[mid + 1]] - b, d - x[vertex[mid + 1]], ae_km)
                                > _tangent(h_m[r, vertex[mid]] - b, d - x[vertex[mid]], ae_km)):
                            lo = mid + 1
                        else:
                            hi = mid
                    at = vertex[lo]
                    guess_q, guess_i = lo, at
                    best = _tangent(h_m[r, at] - b, d - x[at], ae_km)
                else:
                    best, at = _nu_argmax_blocks(x, h_m[r], tops, j, a, b, ae_km, hint)
                    hint = (at - 1) // block
                tangents[0, r, j], tangents[1, r, j] = t_max, best
                index[0, r, j], index[1, r, j] = it, at

    return horizon_kernel, horizon_kernel_reference


def _kernels(key: str):
    """The compiled roughness kernels (closures over ``key`` only, the terms' fingerprint: their disk cache key).

    hm is the largest ``h_i - (hst + m d_i)`` over the samples between the
    two horizons (P.1812-8 Attachment 1): ``roughness_kernel`` scans the
    blocks of :data:`~profiler.propagation.prefix_kernel.BLOCK` samples (and
    groups of them) whose bound ``top - hst - min(m d_s, m d_e)`` (``top``
    their highest sample) can reach the largest found, the block of the
    previous link's largest first, and the samples outside whole blocks;
    ``roughness_kernel_reference`` scans every sample (the tests).
    """
    fastmath = prefix_kernel.FASTMATH
    block, group = prefix_kernel.BLOCK, prefix_kernel.GROUP

    @numba.njit(cache=True, fastmath=fastmath)
    def scan(x, h, lo, hi, hst, slope):   # pragma: no cover (compiled)
        best = -np.inf
        for i in range(lo, hi):
            best = max(best, _roughness(h[i], hst, slope, x[i]))
        return best

    @numba.njit(cache=True, fastmath=fastmath)
    def roughness_max(x, h, tops, lo, hi, hst, slope, hint):   # pragma: no cover (compiled)
        kb = max((lo - 1 + block - 1) // block, 0)   # whole blocks k: lo <= 1 + k block, 1 + (k + 1) block <= hi + 1
        ke = max(hi // block, kb)
        if kb >= ke:
            return scan(x, h, lo, hi + 1, hst, slope), hint
        best, at = max(scan(x, h, lo, 1 + kb * block, hst, slope), scan(x, h, 1 + ke * block, hi + 1, hst, slope)), -1
        if kb <= hint < ke:
            best, at = max(best, scan(x, h, 1 + hint * block, 1 + (hint + 1) * block, hst, slope)), hint
        k = kb
        while k < ke:
            size = group if k % group == 0 and k + group <= ke else 1
            top = tops[1, k] if size > 1 else tops[0, k]
            s, e = 1 + k * block, 1 + (k + size) * block - 1
            if top - hst - min(slope * x[s], slope * x[e]) < best - 1e-9 * (1.0 + abs(best)):
                k += size
                continue
            for q in range(k, k + size):
                if q != hint:
                    s = 1 + q * block
                    if size == 1 or tops[0, q] - hst - min(slope * x[s], slope * x[s + block - 1]) >= \
                            best - 1e-9 * (1.0 + abs(best)):
                        v = scan(x, h, s, s + block, hst, slope)
                        if v > best:
                            best, at = v, q
            k += size
        return best, (hint if at < 0 else at)

    @numba.njit(cache=True, parallel=True, nogil=True, fastmath=fastmath)
    def roughness_kernel(d_km, h_m, n, first, last, hst, slope, need, out):   # pragma: no cover (compiled)
        _key = key   # noqa: F841 (the cache key)
        for r in numba.prange(d_km.shape[0]):
            tops = _block_tops(h_m[r], n[r], block, group)
            hint = 0
            for j in range(2, n[r]):
                if need[r, j]:
                    out[r, j], hint = roughness_max(d_km[r], h_m[r], tops, first[r, j], last[r, j], hst[r, j],
                                                    slope[r, j], hint)

    @numba.njit(cache=True, parallel=True, nogil=True, fastmath=fastmath)
    def roughness_kernel_reference(d_km, h_m, n, first, last, hst, slope, need, out):   # pragma: no cover
        _key = key   # noqa: F841 (the cache key); every link, needed or not
        for r in numba.prange(d_km.shape[0]):
            for j in range(2, n[r]):
                out[r, j] = scan(d_km[r], h_m[r], first[r, j], last[r, j] + 1, hst[r, j], slope[r, j])

    return roughness_kernel, roughness_kernel_reference


_horizon_kernel, _horizon_kernel_reference = _horizon_kernels(prefix_kernel.fingerprint(_TERMS)
                                                              + prefix_kernel.SOURCE_DIGEST)
_roughness_kernel, _roughness_kernel_reference = _kernels(prefix_kernel.fingerprint(_TERMS))


@documented
class PrefixReducer(Reducer):
    """The reductions of :func:`~profiler.propagation.p1812.reductions.p1812_reductions` for every prefix of radials.

    Link ``l`` goes from the site (sample 0 of radial ``rr[l]``) to the
    node at sample ``jj[l]``; its profile is samples ``0 .. jj[l]``.

    Parameters
    ----------
    distance_km, height_m : ndarray, shape (R, N)
        Radial profiles [km from the site], [m AMSL] (NaN padded beyond ``n``).
    n : ndarray of int, shape (R,)
        Samples per radial (a count).
    rr, jj : ndarray of int, shape (L,)
        Radial and node sample of every link (``2 <= jj < n[rr]``).
    clutter_m : ndarray, shape (R, N), optional
        Representative clutter height R of every sample [m] (NaN: 0; default none).
    """

    def __init__(self, distance_km, height_m, n, rr, jj, clutter_m=None):
        self.d = np.ascontiguousarray(distance_km, dtype=float)
        self.h = np.ascontiguousarray(height_m, dtype=float)
        self.r = None if clutter_m is None else np.where(np.isfinite(clutter_m), clutter_m, 0.0)
        self.n, self.rr, self.jj = (np.asarray(a, dtype=np.int64) for a in (n, rr, jj))
        self.flat = self.rr * self.d.shape[1] + self.jj   # flat indices of the links (take, not [rr, jj])
        self.d_total_km = self._at(self.d)
        self.h_first_m, self.h_last_m = self.h[:, 0].take(self.rr), self._at(self.h)
        self.need = self._full(True, np.bool_)

    def _at(self, table, offset=0):
        """The links' values of an (R, N) table (C-contiguous), at ``offset`` samples from the node."""
        return table.reshape(-1).take(self.flat + offset)

    def _full(self, values, dtype=float):
        full = np.zeros(self.d.shape, dtype=dtype)
        full.reshape(-1)[self.flat] = values
        return full

    def _site(self, hts):
        site = np.full(self.d.shape[0], np.nan)
        site[self.rr] = hts
        if not np.array_equal(site[self.rr], hts):
            raise ValueError("the prefix kernel needs one site antenna height per radial")
        return site

    def horizons(self, hts, hrs, ae_km):
        # the kernel writes both horizons of every needed link, and only those are read (not filled elsewhere)
        tangents, index = np.empty((2,) + self.d.shape), np.empty((2,) + self.d.shape, dtype=np.int64)
        with prefix_kernel.launch():
            _horizon_kernel(self.d, self.h, self.n, self._site(hts), self._full(hrs), float(ae_km), self.need,
                            tangents, index)
        far, far_index = self._at(tangents[1]), self._at(index[1])
        return {"tan_t_max": self._at(tangents[0]), "theta_t_index": self._at(index[0]), "tan_r_max": far,
                "theta_r_index": far_index, "nu_index": far_index}

    def distance_at(self, index):
        return self.d.reshape(-1).take(self.rr * self.d.shape[1] + index)

    def roughness(self, first, last, hst, slope):
        out = np.empty(self.d.shape)   # written at every needed link, read only there
        with prefix_kernel.launch():
            _roughness_kernel(self.d, self.h, self.n, self._full(first, np.int64), self._full(last, np.int64),
                              self._full(hst), self._full(slope), self.need, out)
        return self._at(out)

    def zones(self):
        return geometry.inland_zones_km(self.d_total_km)   # a coverage radial is inland

    def terminals(self):
        zero, land = np.zeros(self.d_total_km.shape), np.zeros(self.d_total_km.shape, dtype=bool)
        if self.r is None:
            return {"r2_m": zero, "rn1_m": zero, "clutter_t_m": zero, "clutter_r_m": zero, "sea_t": land,
                    "sea_r": land}
        r, rr = self.r, self.rr
        return {"r2_m": r[:, 1].take(rr), "rn1_m": self._at(r, -1), "clutter_t_m": r[:, 0].take(rr),
                "clutter_r_m": self._at(r), "sea_t": land, "sea_r": land}

    def bullington(self, ae_km):
        g = None if self.r is None else self.h + self.r   # interior points only: the kernel reads i = 1 .. j - 1
        return prefix_kernel.prefix_reduce(self.d, self.h, self.n, self.rr, self.jj, float(ae_km), g)
