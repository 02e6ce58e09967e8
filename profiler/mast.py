"""Lowest antenna mast that meets Fresnel-clearance and link-margin criteria.

:func:`solve_mast` is the one Python call behind ``profiler mast``.  It
answers "how high must the mast be?" for site A, site B, or both ends raised
by the same amount, under any combination of three criteria that must all
hold:

``clearance``
    clearance >= R F1 with the median effective-Earth-radius factor k;
``clearance_low_k``
    clearance >= R2 F1 with a low (sub-refractive) factor k2;
``margin``
    link margin >= X dB at the chosen (or recommended) spreading factor with
    the selected diffraction method, i.e. the ``budget.margin_db`` of
    ``profiler link``.

The clearance criteria are linear in the antenna heights at every profile
sample, so their requirement is a closed form: the maximum over the samples
of a per-sample bound (:func:`required_height_m`).  The cheapest split for
two raised ends is a two-variable linear programme solved exactly on its
convex lower envelope (:func:`cheapest_split_m`).  The margin criterion is a
bracketing search: a scan of the height grid, then bisection to 1 mm inside
the first grid cell that meets it; a margin that does not increase steadily
over the grid is reported.

Heights are rounded *up* to the next millimetre (strictly above the exact
bound), so a reported height always meets its criterion.

References
----------
.. [1] ITU-R P.530-18 (09/2021), section 2.2.2.1 (planning criteria for
   antenna heights, from memory): determine heights for the median k with
   a Fresnel-clearance fraction, again for a low k exceeded 99.9 % of the
   time with a smaller fraction (0.0 F1 for a single isolated obstacle,
   0.3 F1 for an extended one), and use the larger.  The defaults 0.6 F1
   at k = 4/3 and 0.0 F1 at k = 2/3 are common practice.
.. [2] ITU-R P.526-15 (10/2019), section 2 (Earth bulge d1 d2 / (2 a_e)
   with the effective radius) and eq. (2) (first Fresnel radius
   F1 = sqrt(lambda d1 d2 / d)).
.. [3] ITU-R P.452-18 eq. (6a) / P.834-9: a_e = k * 6371 km.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import CAUTION, __version__, geometry, limits
from .radio import RadioSettings, radio_batch
from .regional import plan as regional_plan
from .bands import wavelength_m as _wavelength_m
from .errors import ProfilerError
from .terrain import TerrainProfile

SCHEMA = "profiler.mast/2"
SOLVE_ENDS = ("a", "b", "both")
CRITERIA = ("clearance", "clearance_low_k", "margin")
MAX_GRID_POINTS = 5001
"""Upper bound on height-grid points (range / step); a finer step is refused with a hint."""

MAST_BATCH = 64
"""Heights per batch of the link engine in a mast scan."""

MARGIN_TOLERANCE_M = 1e-3
"""Bisection stops when the bracket on the margin criterion is this narrow [m]."""

MONOTONE_TOLERANCE_DB = 0.005
"""A margin drop larger than this between grid heights marks the curve as not monotone [dB]
(smaller drops come from the slant distance growing with height and are not shown)."""


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


def cheapest_split_m(distance_m, target_m, ground_a_m, ground_b_m, max_mast_m):
    """Masts at A and B with the smallest sum that lift the line of sight to the target.

    Minimises m_a + m_b subject to (1 - x_i) m_a + x_i m_b >= c_i with
    c_i = t_i - ground_a (1 - x_i) - ground_b x_i at every interior sample
    (and every row of a 2-D ``target_m``), 0 <= m_a, m_b <= max_mast_m.
    For a given m_a the lowest feasible m_b is the upper envelope
    f(m_a) = max(0, max_i (c_i - (1 - x_i) m_a) / x_i) of straight lines,
    a convex, non-increasing function, so m_a + f(m_a) is convex and a
    golden-section search finds its minimum to 1e-9 m.

    Parameters
    ----------
    distance_m : array_like
        Distance of each sample from A [m].
    target_m : array_like
        Target height per sample [m AMSL]; 2-D (criteria x samples) to
        impose several criteria at once.
    ground_a_m, ground_b_m : float
        Ground height at A and B [m AMSL].
    max_mast_m : float
        Highest allowed mast at either end [m].

    Returns
    -------
    tuple of float or None
        ``(mast_a_m, mast_b_m)`` unrounded, or None when no pair in the
        allowed range works.

    References
    ----------
    ITU-R P.526-15 section 2; linear programming in two variables: the
    optimum lies on the lower envelope of the constraint lines (common
    practice).
    """
    d = np.asarray(distance_m, dtype=float)
    t = np.atleast_2d(np.asarray(target_m, dtype=float))[:, 1:-1].ravel()
    x = np.tile(d[1:-1] / d[-1], t.size // (d.size - 2))
    c = t - ground_a_m * (1.0 - x) - ground_b_m * x

    def f(m_a):
        return max(0.0, float(np.max((c - (1.0 - x) * m_a) / x)))

    a_min = max(0.0, float(np.max((c - x * max_mast_m) / (1.0 - x))))
    if a_min > max_mast_m:
        return None
    lo, hi = a_min, float(max_mast_m)
    golden = (math.sqrt(5.0) - 1.0) / 2.0
    p, q = hi - golden * (hi - lo), lo + golden * (hi - lo)
    gp, gq = p + f(p), q + f(q)
    while hi - lo > 1e-9 * max(1.0, hi):
        if gp <= gq:
            hi, q, gq = q, p, gp
            p = hi - golden * (hi - lo)
            gp = p + f(p)
        else:
            lo, p, gp = p, q, gq
            q = lo + golden * (hi - lo)
            gq = q + f(q)
    m_a = 0.5 * (lo + hi)
    for cand in (a_min, float(max_mast_m)):  # the ends of the range, in case the minimum sits there
        if cand + f(cand) < m_a + f(m_a):
            m_a = cand
    return m_a, f(m_a)


@dataclass(frozen=True)
class MastResult:
    """Everything the mast solver found; ``to_dict()`` is the JSON report (``profiler.mast/2``)."""

    site_a: dict
    site_b: dict
    frequency_mhz: float
    band: str | None
    wavelength_m: float
    distance_m: float
    solve: str
    criteria: list
    feasible: bool
    required_mast_a_m: float | None
    required_mast_b_m: float | None
    added_height_m: float | None
    binding: dict
    at_required: dict | None
    per_extra_metre: dict | None
    best_achievable: dict | None
    cheapest_split: dict | None
    margin_monotone: bool | None
    max_mast_m: float
    mast_step_m: float
    search: dict
    table: list
    diffraction_method: str
    message: str | None
    notes: list = field(default_factory=list)
    dem: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    sheet: dict = field(default_factory=dict)
    tool_version: str = __version__
    schema: str = SCHEMA

    def to_dict(self) -> dict:
        """The JSON report as plain Python types (no NaN: missing values are None)."""
        return _clean({
            "schema": self.schema,
            "tool_version": self.tool_version,
            "site_a": self.site_a,
            "site_b": self.site_b,
            "frequency_mhz": self.frequency_mhz,
            "band": self.band,
            "wavelength_m": self.wavelength_m,
            "distance_m": self.distance_m,
            "solve": self.solve,
            "criteria": self.criteria,
            "diffraction_method": self.diffraction_method,
            "feasible": self.feasible,
            "required_mast_a_m": self.required_mast_a_m,
            "required_mast_b_m": self.required_mast_b_m,
            "added_height_m": self.added_height_m,
            "binding": self.binding,
            "at_required": self.at_required,
            "per_extra_metre": self.per_extra_metre,
            "best_achievable": self.best_achievable,
            "cheapest_split": self.cheapest_split,
            "margin_monotone": self.margin_monotone,
            "max_mast_m": self.max_mast_m,
            "mast_step_m": self.mast_step_m,
            "search": self.search,
            "table": self.table,
            "message": self.message,
            "notes": list(self.notes),
            "dem": self.dem,
            "sheet": dict(self.sheet),
            "warnings": list(self.warnings),
            "caution": CAUTION,
        })


def _clean(obj):
    """Plain JSON types; non-finite numbers become None."""
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return float(obj) if math.isfinite(obj) else None
    return obj


def _check_ratio(value, option):
    if value is None:
        return None
    v = float(value)
    if not (math.isfinite(v) and v >= 0):
        raise ProfilerError(f"{option} must be 0 or more, got {value}")
    return v


def _height_grid(lower, current, upper, step):
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


class _MastProblem:
    """The geometry and radio of one mast search; the solved parameter ``t`` is the mast at A
    (``solve="a"``), at B (``"b"``) or the height added at both ends (``"both"``)."""

    def __init__(self, profile, solve, m_a0, m_b0, frequency_mhz, k, k_low, radio, plan, max_mast_m):
        self.profile, self.solve, self.m_a0, self.m_b0 = profile, solve, m_a0, m_b0
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

        The heights are the link axis of one :func:`profiler.radio.radio_batch` call: a mast scan is the
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
            rb = radio_batch(d, t, np.full(k, self.d.size), self.g_a + ma_arr[sl], self.g_b + mb_arr[sl],
                             self.frequency_mhz, self.ae, self.radio, self.plan, rx2=False)
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


def _table(pb: _MastProblem, heights):
    pb.prefetch(heights)
    return [pb.state(t) for t in heights]


def _clearance_criteria(pb: _MastProblem, ratio, ratio_low):
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


def _lowest_meeting(pb: _MastProblem, grid, t_lo, x_db):
    """Lowest t >= t_lo on [t_lo, upper] with margin >= x_db (grid scan, then bisection to 1 mm), or None."""
    if t_lo > pb.upper + 1e-12:
        return None
    if pb.margin_at(t_lo) >= x_db:
        return t_lo
    prev = t_lo
    for t in grid[grid > t_lo + 1e-9]:
        if pb.margin_at(t) >= x_db:
            return _bisect_up(pb.margin_at, prev, float(t), x_db, float(t))
        prev = float(t)
    return None


def _bisect_up(margin_fn, lo, hi, x_db, limit):
    """Bisection on [lo, hi] (margin(hi) >= x_db) to 1 mm; prefer a whole millimetre that is verified."""
    while hi - lo > MARGIN_TOLERANCE_M:
        mid = 0.5 * (lo + hi)
        if margin_fn(mid) >= x_db:
            hi = mid
        else:
            lo = mid
    for r in (round_up_mm(lo), round(round_up_mm(lo) + 0.001, 3), round_up_mm(hi)):
        if r <= limit + 1e-12 and margin_fn(r) >= x_db:
            return r
    return hi


def _monotone_note(pb: _MastProblem, grid, margins, x_db, step):
    """Whether the margin rises steadily over the grid, and a note naming the first drop and its cause."""
    drops = np.diff(margins) < -MONOTONE_TOLERANCE_DB
    if not drops.any():
        return True, []
    j = int(np.argmax(drops))
    r0, r1 = pb.radio_at(grid[j]), pb.radio_at(grid[j + 1])
    cause = ""
    if (r0["sf"], r0["bw_khz"], r0["dr"]) != (r1["sf"], r1["bw_khz"], r1["dr"]) and r0["sf"] is not None:
        cause = (f" because the recommended data rate changes from {_rate(r0)} to {_rate(r1)} (faster, so it "
                 "needs more signal)")
    what = (f"; the solver took the lowest grid height meeting {x_db:g} dB and refined within its {step:g} m cell"
            if x_db is not None else "")
    return False, [f"the margin does not increase steadily with height: it drops from {margins[j]:.2f} dB to "
                   f"{margins[j + 1]:.2f} dB between grid heights {grid[j]:g} and {grid[j + 1]:g} m{cause}{what}"]


def _rate(r) -> str:
    rate = f"SF{r['sf']}/{r['bw_khz']:g} kHz"
    return rate if r["dr"] is None else f"DR{r['dr']} ({rate})"


def _margin_criterion(pb: _MastProblem, grid, min_margin_db, t_clear, clearance_ok, step):
    """(criterion row, t meeting margin and clearance or None, monotone flag, notes)."""
    x_db = float(min_margin_db)
    pb.prefetch(grid)
    margins = np.array([pb.margin_at(t) for t in grid])
    monotone, notes = _monotone_note(pb, grid, margins, x_db, step)
    t_alone = _lowest_meeting(pb, grid, pb.lower, x_db)
    row = {"criterion": "margin", "min_margin_db": x_db, "sf": pb.radio.sf,
           "diffraction_method": pb.radio.diffraction_method, "k_factor": pb.k,
           **(pb.pair(t_alone) if t_alone is not None else {"required_mast_a_m": None, "required_mast_b_m": None}),
           "within_max": t_alone is not None, "monotone": monotone}
    if not clearance_ok or t_alone is None:
        t_margin = None
    elif t_alone >= t_clear:
        t_margin = t_alone
    else:
        t_margin = _lowest_meeting(pb, grid, t_clear, x_db)
    return row, t_margin, monotone, notes


def _feasible_binding(pb, t_sol, t_clear, name_c, clearance_req, min_margin_db):
    if min_margin_db is not None and t_sol > t_clear + 1e-12:
        criterion = "margin"
    elif name_c is not None and clearance_req[name_c][0] > pb.lower:
        criterion = name_c
    elif min_margin_db is not None and t_sol > pb.lower:
        criterion = "margin"
    else:
        criterion = "none"
    idx = clearance_req[criterion][1] if criterion in clearance_req else pb.worst(*pb.masts_at(t_sol))[1]
    return {"criterion": criterion, **pb.point(idx)}


def _infeasible(pb, grid, clearance_ok, name_c, clearance_req, ratios, x_db, max_mast_m):
    """(binding, best achievable state, one-line message) when no height works."""
    solve = pb.solve
    if not clearance_ok:
        criterion, idx = name_c, clearance_req[name_c][1]
        r_need, k_need = ratios[name_c]
        best = pb.state(pb.upper)
        best_ratio = best["worst_ratio"] if name_c == "clearance" else best["worst_ratio_low_k"]
        need = round_up_mm(clearance_req[name_c][0])
        need_text = f"{_up_text(need)} m at {solve.upper()}" if solve != "both" else f"{_up_text(need)} m added at both ends"
        what = (f"clearance {r_need:g} F1 at k = {k_need:.4g} would need {need_text}; best achievable worst "
                f"clearance {best_ratio:.2f} F1")
    else:
        criterion = "margin"
        t_clear = max(pb.lower, round_up_mm(clearance_req[name_c][0])) if name_c else pb.lower
        t_ok = grid[grid >= t_clear - 1e-9]
        vals = np.array([pb.margin_at(t) for t in t_ok])
        t_best = float(t_ok[int(np.argmax(vals))])
        best = pb.state(t_best)
        idx = pb.worst(*pb.masts_at(t_best))[1]
        what = f"best achievable margin {best['margin_db']:.1f} dB (need {x_db:g} dB)"
    where = {"a": "at A", "b": "at B", "both": "at both ends"}[solve]
    at = (f"with {_up_text(best['mast_a_m'])} m at A and {_up_text(best['mast_b_m'])} m at B" if solve == "both"
          else f"with {_up_text(best['mast_' + solve + '_m'])} m")
    message = (f"no mast up to {max_mast_m:g} m {where} meets the criteria: binding obstruction at "
               f"{pb.d[idx] / 1000.0:.3f} km (terrain {pb.terrain[idx]:.1f} m); {what} {at}")
    return {"criterion": criterion, **pb.point(idx)}, best, message


def _up_text(x) -> str:
    """A height rounded up to the centimetre, as text (a printed height never undercuts the solution)."""
    return f"{math.ceil(x * 100 - 1e-9) / 100:.2f}"


def _per_extra_metre(pb, t_sol):
    t0, t1 = (t_sol, t_sol + 1.0) if t_sol + 1.0 <= pb.upper + 1e-12 else (max(pb.lower, t_sol - 1.0), t_sol)
    if not t1 > t0:
        return None
    s0, s1 = pb.state(t0), pb.state(t1)
    span = t1 - t0
    return {"from_m": round(t0, 6), "to_m": round(t1, 6),
            **{f"{key}_per_m": (s1[key] - s0[key]) / span
               for key in ("worst_ratio", "worst_ratio_low_k", "diffraction_db", "margin_db")}}


def _validated(solve, frequency_mhz, max_mast_m, mast_step_m, mast_a_m, mast_b_m, clearance_ratio,
               low_k_clearance_ratio, min_margin_db):
    if solve not in SOLVE_ENDS:
        raise ProfilerError(f"--solve must be one of {', '.join(SOLVE_ENDS)}, got {solve!r}")
    if not (math.isfinite(frequency_mhz) and frequency_mhz > 0):
        raise ProfilerError(f"frequency must be a positive number of MHz, got {frequency_mhz}")
    max_mast_m, mast_step_m = float(max_mast_m), float(mast_step_m)
    if not (math.isfinite(max_mast_m) and max_mast_m > 0):
        raise ProfilerError(f"--max-mast-m must be a positive height, got {max_mast_m}")
    if not (math.isfinite(mast_step_m) and mast_step_m > 0):
        raise ProfilerError(f"--mast-step-m must be a positive height, got {mast_step_m}")
    masts = {}
    for end, value in (("a", mast_a_m), ("b", mast_b_m)):
        v = float(value)
        if not (math.isfinite(v) and v >= 0):
            raise ProfilerError(f"--mast-{end} must be a height of 0 m or more, got {value}")
        if solve in (end, "both") and v > max_mast_m:
            raise ProfilerError(f"--mast-{end} {v:g} m is above --max-mast-m {max_mast_m:g} m; "
                                "raise --max-mast-m or give a lower current mast")
        masts[end] = v
    ratio = _check_ratio(clearance_ratio, "--clearance-ratio")
    ratio_low = _check_ratio(low_k_clearance_ratio, "--low-k-clearance")
    if min_margin_db is not None and not math.isfinite(float(min_margin_db)):
        raise ProfilerError(f"--min-margin-db must be a finite number, got {min_margin_db}")
    if ratio is None and ratio_low is None and min_margin_db is None:
        raise ProfilerError("no criterion left: with --no-clearance give --min-margin-db")
    limits.check_values({"--freq-mhz": frequency_mhz, "--mast-a": masts["a"], "--mast-b": masts["b"],
                         "--max-mast-m": max_mast_m, "--mast-step-m": mast_step_m, "--clearance-ratio": ratio,
                         "--low-k-clearance": ratio_low, "--min-margin-db": min_margin_db})
    return max_mast_m, mast_step_m, masts["a"], masts["b"], ratio, ratio_low


def solve_mast(profile: TerrainProfile, *, frequency_mhz: float, solve: str = "b",
               mast_a_m: float = 10.0, mast_b_m: float = 2.0,
               clearance_ratio: float | None = 0.6, k_factor=4.0 / 3.0,
               low_k_clearance_ratio: float | None = 0.0, low_k_factor=2.0 / 3.0,
               min_margin_db: float | None = None, radio: RadioSettings | None = None,
               max_mast_m: float = 60.0, mast_step_m: float = 1.0, band: str | None = None,
               name_a: str = "A", name_b: str = "B",
               site_a_lat_lon: tuple[float, float] | None = None,
               site_b_lat_lon: tuple[float, float] | None = None) -> MastResult:
    """Find the lowest mast(s) that meet every given criterion.

    Parameters
    ----------
    profile : TerrainProfile
        Terrain from A (first sample) to B (last sample).
    frequency_mhz : float
        Working frequency [MHz].
    solve : {"a", "b", "both"}
        End raised: A, B, or both by the same added height (then the
        cheapest split minimising m_a + m_b is reported too).
    mast_a_m, mast_b_m : float
        Current masts [m]: the fixed height of an end not solved, and the
        first row of the table.
    clearance_ratio : float or None
        Fraction R of F1 to clear at ``k_factor`` (None: criterion off).
    k_factor : float or str
        Median effective-Earth-radius factor k (also used for the margin).
    low_k_clearance_ratio : float or None
        Fraction R2 of F1 to clear at ``low_k_factor`` (None: criterion off).
    low_k_factor : float or str
        Low effective-Earth-radius factor k2.
    min_margin_db : float or None
        Least uplink margin [dB] at the chosen or recommended data rate
        (``budget.margin_db`` of the link report; None: off).
    radio : RadioSettings, optional
        Link-budget, LoRa and diffraction settings.
    max_mast_m : float
        Highest allowed mast [m] (default 60).
    mast_step_m : float
        Height step of the table and of the margin scan [m] (default 1).
    band, name_a, name_b, site_a_lat_lon, site_b_lat_lon
        Report metadata, as for :func:`profiler.analysis.analyze_link`.

    Returns
    -------
    MastResult
        ``feasible`` False (with ``message``) when no height up to
        ``max_mast_m`` meets every criterion.

    References
    ----------
    ITU-R P.530-18 section 2.2.2.1 (planning criteria); ITU-R P.526-15
    section 2, eq. (2); margin as :func:`profiler.radio.radio_results`.
    """
    radio = (radio or RadioSettings()).validate()
    max_mast_m, mast_step_m, m_a0, m_b0, ratio, ratio_low = _validated(
        solve, frequency_mhz, max_mast_m, mast_step_m, mast_a_m, mast_b_m, clearance_ratio,
        low_k_clearance_ratio, min_margin_db)
    plan = regional_plan(band) if band is not None else None
    k, k_low = geometry.parse_k_factor(k_factor), geometry.parse_k_factor(low_k_factor)
    limits.check_values({"--k": k, "--low-k": k_low})
    pb = _MastProblem(profile, solve, m_a0, m_b0, frequency_mhz, k, k_low, radio, plan, max_mast_m)

    criteria, clearance_req = _clearance_criteria(pb, ratio, ratio_low)
    name_c = max(clearance_req, key=lambda n: clearance_req[n][0]) if clearance_req else None
    t_clear = max(pb.lower, round_up_mm(clearance_req[name_c][0])) if name_c else pb.lower
    clearance_ok = t_clear <= pb.upper + 1e-12

    grid = _height_grid(pb.lower, pb.current, pb.upper, mast_step_m)
    table_t = grid[grid >= pb.current - 1e-9]
    notes, t_margin, x_db = [], None, None
    if min_margin_db is not None:
        x_db = float(min_margin_db)
        row, t_margin, margin_monotone, notes = _margin_criterion(pb, grid, x_db, t_clear, clearance_ok, mast_step_m)
        criteria.append(row)
    else:
        pb.prefetch(table_t)
        margins = np.array([pb.margin_at(t) for t in table_t])
        margin_monotone, notes = (_monotone_note(pb, table_t, margins, None, mast_step_m) if margins.size > 1
                                  else (None, []))

    feasible = clearance_ok and (min_margin_db is None or t_margin is not None)
    message = best = t_sol = None
    if feasible:
        t_sol = t_margin if min_margin_db is not None else t_clear
        binding = _feasible_binding(pb, t_sol, t_clear, name_c, clearance_req, min_margin_db)
    else:
        ratios = {"clearance": (ratio, pb.k), "clearance_low_k": (ratio_low, pb.k_low)}
        binding, best, message = _infeasible(pb, grid, clearance_ok, name_c, clearance_req, ratios, x_db, max_mast_m)

    split = None
    if solve == "both":
        split = _cheapest_split(pb.d, pb.g_a, pb.g_b, clearance_req, max_mast_m, mast_step_m, x_db,
                                lambda ma, mb: pb.radio_masts(ma, mb)["margin_db"])
        if split is not None:
            split.update({"worst_ratio": pb.worst(split["mast_a_m"], split["mast_b_m"])[0],
                          "worst_ratio_low_k": pb.worst(split["mast_a_m"], split["mast_b_m"], True)[0]})

    warnings = []
    if profile.voids_filled:
        warnings.append(f"{profile.voids_filled} profile samples were interpolated across elevation voids")

    def site(name, lat_lon, ground, mast):
        return {"name": name,
                "lat_deg": None if lat_lon is None else float(lat_lon[0]),
                "lon_deg": None if lat_lon is None else float(lat_lon[1]),
                "ground_m": float(ground), "mast_m": float(mast)}

    if feasible:
        req_a, req_b = pb.masts_at(t_sol)
    else:
        req_a = None if solve in ("a", "both") else m_a0
        req_b = None if solve in ("b", "both") else m_b0
    return MastResult(
        site_a=site(name_a, site_a_lat_lon, pb.g_a, m_a0),
        site_b=site(name_b, site_b_lat_lon, pb.g_b, m_b0),
        frequency_mhz=float(frequency_mhz), band=band, wavelength_m=pb.lam, distance_m=pb.total,
        solve=solve, criteria=criteria, feasible=bool(feasible),
        required_mast_a_m=req_a, required_mast_b_m=req_b,
        added_height_m=round(t_sol, 6) if (feasible and solve == "both") else None,
        binding=binding, at_required=pb.state(t_sol) if feasible else None,
        per_extra_metre=_per_extra_metre(pb, t_sol) if feasible else None, best_achievable=best,
        cheapest_split=split, margin_monotone=margin_monotone, max_mast_m=max_mast_m, mast_step_m=mast_step_m,
        search={"parameter": {"a": "mast_a_m", "b": "mast_b_m", "both": "added_height_m"}[solve],
                "lower_m": pb.lower, "current_m": pb.current, "upper_m": pb.upper},
        table=_table(pb, table_t), diffraction_method=radio.diffraction_method, message=message,
        notes=notes,
        dem={"kind": profile.kind, "sources": list(profile.sources), "voids_filled": int(profile.voids_filled)},
        warnings=warnings,
    )


def _cheapest_split(d, g_a, g_b, clearance_req, max_mast_m, step, min_margin_db, margin_fn):
    """Masts (m_a, m_b) minimising m_a + m_b under all criteria, or None.

    Clearance only: exact (:func:`cheapest_split_m`).  With the margin
    criterion: for m_a on the height grid, the lowest m_b that meets the
    clearance bound (closed form) and then the margin (bisection to 1 mm,
    assuming the margin rises with m_b); the best grid m_a is refined by a
    golden-section search over its two neighbouring cells.
    """
    targets = [v[2] for v in clearance_req.values()]
    if min_margin_db is None:
        sol = cheapest_split_m(d, np.array(targets), g_a, g_b, max_mast_m)
        if sol is None:
            return None
        m_a = round_up_mm(sol[0]) if sol[0] > 0 else 0.0
        m_a = min(m_a, max_mast_m)
        m_b = _lowest_b_clearance(d, targets, g_a, g_b, m_a)
        if m_b > max_mast_m:
            return None
        return {"mast_a_m": m_a, "mast_b_m": m_b, "total_m": m_a + m_b, "method": "exact"}

    def lowest_b(m_a):
        lo = _lowest_b_clearance(d, targets, g_a, g_b, m_a) if targets else 0.0
        if lo > max_mast_m:
            return None
        if margin_fn(m_a, lo) >= min_margin_db:
            return lo
        if margin_fn(m_a, max_mast_m) < min_margin_db:
            return None
        hi = max_mast_m
        while hi - lo > MARGIN_TOLERANCE_M:
            mid = 0.5 * (lo + hi)
            if margin_fn(m_a, mid) >= min_margin_db:
                hi = mid
            else:
                lo = mid
        for r in (round_up_mm(lo), round(round_up_mm(lo) + 0.001, 3), round_up_mm(hi)):
            if r <= max_mast_m and margin_fn(m_a, r) >= min_margin_db:
                return r
        return hi

    grid = _height_grid(0.0, 0.0, max_mast_m, step)
    sums = []
    for m_a in grid:
        m_b = lowest_b(float(m_a))
        sums.append(math.inf if m_b is None else float(m_a) + m_b)
    sums = np.array(sums)
    if not np.isfinite(sums).any():
        return None
    j = int(np.argmin(sums))
    lo, hi = float(grid[max(j - 1, 0)]), float(grid[min(j + 1, grid.size - 1)])
    best_a, best_sum = float(grid[j]), float(sums[j])

    def total(m_a):
        m_b = lowest_b(m_a)
        return math.inf if m_b is None else m_a + m_b

    golden = (math.sqrt(5.0) - 1.0) / 2.0
    p, q = hi - golden * (hi - lo), lo + golden * (hi - lo)
    sp, sq = total(p), total(q)
    while hi - lo > 0.01:
        if sp <= sq:
            hi, q, sq = q, p, sp
            p = hi - golden * (hi - lo)
            sp = total(p)
        else:
            lo, p, sp = p, q, sq
            q = lo + golden * (hi - lo)
            sq = total(q)
    for m_a, s in ((p, sp), (q, sq)):
        m_a_r = round_up_mm(m_a) if m_a > 0 else 0.0
        if m_a_r <= max_mast_m:
            s_r = total(m_a_r)
            if s_r < best_sum:
                best_a, best_sum = m_a_r, s_r
    m_b = lowest_b(best_a)
    return {"mast_a_m": best_a, "mast_b_m": m_b, "total_m": best_a + m_b, "method": "grid+golden"}


def _lowest_b_clearance(d, targets, g_a, g_b, m_a):
    """Lowest mast at B (>= 0, rounded up to mm) meeting every clearance target with mast m_a at A."""
    if not targets:
        return 0.0
    bound = max(required_height_m(d, t, g_a, g_b, "b", m_a, 0.0)[0] for t in targets)
    return max(0.0, round_up_mm(bound))
