"""Height search of the mast solver: the problem, the height grid, the margin scan and bisection.

:class:`MastProblem` holds the geometry and radio of one search and evaluates
the link engine over a batch of heights (:func:`profiler.engine.radio.radio_batch`
vectorized over heights, cached per height).  The margin criterion is a
bracketing search: a scan of the height grid (:func:`height_grid`), then
bisection to 1 mm inside the first grid cell that meets it
(:func:`lowest_meeting`, :func:`bisect_up`); a margin that does not increase
steadily over the grid is reported (:func:`monotone_note`).

References
----------
.. [1] ITU-R P.526-15 (10/2019), section 2 and eq. (2): the clearance
   ratio of each height, as :func:`profiler.propagation.geometry.clearance_ratio`.
.. [2] The margin of each height is that of :func:`profiler.engine.radio.radio_batch`
   (the ``budget.margin_db`` of ``profiler link``).
"""

from __future__ import annotations

import math

import numpy as np

from ...engine.radio import radio_batch
from ...errors import ProfilerError
from ...propagation import geometry
from ...propagation.free_space import wavelength_m as _wavelength_m
from .clearance import round_up_mm

__all__ = ["MAX_GRID_POINTS", "MAST_BATCH", "MARGIN_TOLERANCE_M", "MONOTONE_TOLERANCE_DB", "height_grid",
           "MastProblem", "table_rows", "lowest_meeting", "bisect_up", "monotone_note", "rate_text",
           "margin_criterion"]

MAX_GRID_POINTS = 5001
"""Upper bound on height-grid points (range / step); a finer step is refused with a hint."""

MAST_BATCH = 64
"""Heights per batch of the link engine in a mast scan."""

MARGIN_TOLERANCE_M = 1e-3
"""Bisection stops when the bracket on the margin criterion is this narrow [m]."""

MONOTONE_TOLERANCE_DB = 0.005
"""A margin drop larger than this between grid heights marks the curve as not monotone [dB]
(smaller drops come from the slant distance growing with height and are not shown)."""

def height_grid(lower, current, upper, step):
    """Heights from ``lower`` to ``upper`` through ``current`` in steps of ``step`` (both ends included)."""
    n_up = int(math.floor((upper - current) / step + 1e-9))
    n_down = int(math.floor((current - lower) / step + 1e-9))
    if n_up + n_down + 3 > MAX_GRID_POINTS:
        raise ProfilerError(
            f"--mast-step-m {step:g} m gives {n_up + n_down + 1} heights between {lower:g} and {upper:g} m; "
            f"use a step of at least {(upper - lower) / (MAX_GRID_POINTS - 3):.3g} m")
    grid = np.concatenate([[lower], current - step * np.arange(n_down, 0, -1),
                           current + step * np.arange(0, n_up + 1), [upper]])
    grid = np.unique(np.round(grid, 9))
    return grid[(grid >= lower - 1e-12) & (grid <= upper + 1e-12)]


class MastProblem:
    """The geometry and radio of one mast search; the solved parameter ``t`` is the mast at A
    (``solve="a"``), at B (``"b"``) or the height added at both ends (``"both"``)."""

    def __init__(self, profile, solve, m_a0, m_b0, frequency_mhz, k, k_low, radio, plan, max_mast_m, paths=None):
        self.profile, self.solve, self.m_a0, self.m_b0 = profile, solve, m_a0, m_b0
        self.paths = paths   # profiler.products.link.profile_paths (a batch of one), for --model p1812
        self.frequency_mhz, self.k, self.k_low, self.radio, self.plan = frequency_mhz, k, k_low, radio, plan
        d = self.d = np.asarray(profile.distance_m, dtype=float)
        terrain = self.terrain = np.asarray(profile.terrain_m, dtype=float)
        if d.size < 3:
            raise ProfilerError("the profile needs at least 3 samples (the two sites and one between)")
        self.total = float(d[-1])
        self.g_a, self.g_b = float(terrain[0]), float(terrain[-1])
        self.lam = float(_wavelength_m(frequency_mhz))
        self.ae = float(geometry.effective_radius_m(k))
        self.ae_low = float(geometry.effective_radius_m(k_low))
        d2 = self.total - d
        self.f1 = geometry.fresnel_radius_m(d, d2, self.lam)
        self.bulge = geometry.earth_bulge_m(d, d2, self.ae)
        self.bulge_low = geometry.earth_bulge_m(d, d2, self.ae_low)
        if solve == "a":
            self.lower, self.current, self.upper = 0.0, m_a0, max_mast_m
        elif solve == "b":
            self.lower, self.current, self.upper = 0.0, m_b0, max_mast_m
        else:
            self.lower, self.current, self.upper = -min(m_a0, m_b0), 0.0, max_mast_m - max(m_a0, m_b0)
        self._cache: dict[float, dict] = {}

    def masts_at(self, t):
        """(mast A, mast B) [m] for the solved parameter ``t`` (rounded to 1 um: no float noise)."""
        if self.solve == "a":
            return round(t, 6), self.m_b0
        if self.solve == "b":
            return self.m_a0, round(t, 6)
        return round(self.m_a0 + t, 6), round(self.m_b0 + t, 6)

    def worst(self, ma, mb, low_k=False):
        """Smallest interior clearance ratio and its sample index for masts ``ma``, ``mb``."""
        los = geometry.line_of_sight_m(self.d, self.total, self.g_a + ma, self.g_b + mb)
        bulge = self.bulge_low if low_k else self.bulge
        r = geometry.clearance_ratio(geometry.clearance_m(los, self.terrain, bulge), self.f1)[1:-1]
        i = int(np.argmin(r))
        return float(r[i]), i + 1

    def radio_masts(self, ma, mb):
        """Uplink budget (the link report's ``budget``) and diffraction for masts ``ma``, ``mb`` (arrays or scalars).

        The heights are the link axis of one :func:`profiler.engine.radio.radio_batch` call: a mast scan is the
        link engine vectorized over heights.  Scalars in, one dict out; arrays in, a list of dicts.
        """
        ma_arr, mb_arr = np.broadcast_arrays(np.atleast_1d(np.asarray(ma, dtype=float)),
                                             np.atleast_1d(np.asarray(mb, dtype=float)))
        rows = []
        for start in range(0, ma_arr.size, MAST_BATCH):  # chunks bound the memory of a long scan
            sl = slice(start, start + MAST_BATCH)
            k = ma_arr[sl].size
            d = np.broadcast_to(self.d, (k, self.d.size))
            t = np.broadcast_to(self.terrain, (k, self.d.size))
            paths = None if self.paths is None else {
                key: None if v is None else np.broadcast_to(v, (k,) + np.shape(v)[1:]) for key, v in self.paths.items()}
            rb = radio_batch(d, t, np.full(k, self.d.size), self.g_a + ma_arr[sl], self.g_b + mb_arr[sl],
                             self.frequency_mhz, self.ae, self.radio, self.plan, rx2=False, paths=paths)
            up = rb["uplink"]
            margin = up["rx_power_dbm"] - up["budget_sensitivity_dbm"]
            diff = rb["losses"][self.frequency_mhz]["diffraction"]
            for i in range(k):  # one dict per height for the table and the cache
                rows.append({"diffraction_db": float(diff[i]), "margin_db": float(margin[i]),
                             "sf": None if up["sf"] is None else int(up["sf"][i]),
                             "bw_khz": None if up["bw_khz"] is None else float(up["bw_khz"][i]),
                             "dr": None if up["dr"] is None or up["dr"][i] < 0 else int(up["dr"][i])})
        return rows if np.ndim(ma) or np.ndim(mb) else rows[0]

    def prefetch(self, ts):
        """Compute the radio state of every height in ``ts`` not cached yet, in one batch."""
        keys = [round(float(t), 9) for t in ts]
        todo = sorted({k for k in keys if k not in self._cache})
        if todo:
            masts = np.array([self.masts_at(k) for k in todo])
            for key, row in zip(todo, self.radio_masts(masts[:, 0], masts[:, 1])):
                self._cache[key] = row

    def radio_at(self, t):
        key = round(float(t), 9)
        if key not in self._cache:
            self._cache[key] = self.radio_masts(*self.masts_at(key))
        return self._cache[key]

    def margin_at(self, t):
        return self.radio_at(t)["margin_db"]

    def state(self, t):
        ma, mb = self.masts_at(t)
        return {"mast_a_m": ma, "mast_b_m": mb, "worst_ratio": self.worst(ma, mb)[0],
                "worst_ratio_low_k": self.worst(ma, mb, True)[0], **self.radio_at(t)}

    def pair(self, t):
        ma, mb = self.masts_at(t)
        return {"required_mast_a_m": ma, "required_mast_b_m": mb}

    def point(self, index):
        out = {"distance_m": float(self.d[index]), "terrain_m": float(self.terrain[index])}
        if self.profile.lat_deg is not None:
            out["lat_deg"] = float(self.profile.lat_deg[index])
            out["lon_deg"] = float(self.profile.lon_deg[index])
        return out


def table_rows(pb: MastProblem, heights):
    pb.prefetch(heights)
    return [pb.state(t) for t in heights]



def lowest_meeting(pb: MastProblem, grid, t_lo, x_db):
    """Lowest t >= t_lo on [t_lo, upper] with margin >= x_db (grid scan, then bisection to 1 mm), or None."""
    if t_lo > pb.upper + 1e-12:
        return None
    if pb.margin_at(t_lo) >= x_db:
        return t_lo
    prev = t_lo
    for t in grid[grid > t_lo + 1e-9]:
        if pb.margin_at(t) >= x_db:
            return bisect_up(pb.margin_at, prev, float(t), x_db, float(t) + 1e-12)
        prev = float(t)
    return None


def bisect_up(margin_fn, lo, hi, x_db, limit):
    """Bisection on [lo, hi] (margin(hi) >= x_db) to 1 mm; prefer a whole millimetre that is verified.

    Parameters
    ----------
    margin_fn : callable
        Margin [dB] of a height [m].
    lo, hi : float
        Bracket [m]: the margin is below ``x_db`` at ``lo`` and meets it at ``hi``.
    x_db : float
        Margin to meet [dB].
    limit : float
        Highest height a rounded candidate may take [m].

    Returns
    -------
    float
        A height within 1 mm above the crossing that meets ``x_db`` [m].

    References
    ----------
    Bisection of a bracketed root (common practice).
    """
    while hi - lo > MARGIN_TOLERANCE_M:
        mid = 0.5 * (lo + hi)
        if margin_fn(mid) >= x_db:
            hi = mid
        else:
            lo = mid
    for r in (round_up_mm(lo), round(round_up_mm(lo) + 0.001, 3), round_up_mm(hi)):
        if r <= limit and margin_fn(r) >= x_db:
            return r
    return hi


def monotone_note(pb: MastProblem, grid, margins, x_db, step):
    """Whether the margin rises steadily over the grid, and a note naming the first drop and its cause."""
    drops = np.diff(margins) < -MONOTONE_TOLERANCE_DB
    if not drops.any():
        return True, []
    j = int(np.argmax(drops))
    r0, r1 = pb.radio_at(grid[j]), pb.radio_at(grid[j + 1])
    cause = ""
    if (r0["sf"], r0["bw_khz"], r0["dr"]) != (r1["sf"], r1["bw_khz"], r1["dr"]) and r0["sf"] is not None:
        cause = (f" because the recommended data rate changes from {rate_text(r0)} to {rate_text(r1)} (faster, so it "
                 "needs more signal)")
    what = (f"; the solver took the lowest grid height meeting {x_db:g} dB and refined within its {step:g} m cell"
            if x_db is not None else "")
    return False, [f"the margin does not increase steadily with height: it drops from {margins[j]:.2f} dB to "
                   f"{margins[j + 1]:.2f} dB between grid heights {grid[j]:g} and {grid[j + 1]:g} m{cause}{what}"]


def rate_text(r) -> str:
    rate = f"SF{r['sf']}/{r['bw_khz']:g} kHz"
    return rate if r["dr"] is None else f"DR{r['dr']} ({rate})"


def margin_criterion(pb: MastProblem, grid, min_margin_db, t_clear, clearance_ok, step):
    """(criterion row, t meeting margin and clearance or None, monotone flag, notes)."""
    x_db = float(min_margin_db)
    pb.prefetch(grid)
    margins = np.array([pb.margin_at(t) for t in grid])
    monotone, notes = monotone_note(pb, grid, margins, x_db, step)
    t_alone = lowest_meeting(pb, grid, pb.lower, x_db)
    row = {"criterion": "margin", "min_margin_db": x_db, "sf": pb.radio.sf,
           "diffraction_method": pb.radio.diffraction_method, "k_factor": pb.k,
           **(pb.pair(t_alone) if t_alone is not None else {"required_mast_a_m": None, "required_mast_b_m": None}),
           "within_max": t_alone is not None, "monotone": monotone}
    if not clearance_ok or t_alone is None:
        t_margin = None
    elif t_alone >= t_clear:
        t_margin = t_alone
    else:
        t_margin = lowest_meeting(pb, grid, t_clear, x_db)
    return row, t_margin, monotone, notes

