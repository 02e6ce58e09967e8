"""Lowest antenna mast that meets Fresnel-clearance and link-margin criteria.

:func:`solve_mast` is the computation behind ``profiler mast`` and
:func:`profiler.mast` (which load the profile and add the sheet block).  It
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

This module validates the options and assembles the answer; the closed-form
clearance bounds are in :mod:`profiler.products.mast.clearance`, the height search
(margin scan and bisection) in :mod:`profiler.products.mast.search`, the cheapest
split in :mod:`profiler.products.mast.split` and the report in
:mod:`profiler.products.mast.result`.

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

import numpy as np

from ... import limits
from ...engine.radio import RadioSettings
from ...errors import ProfilerError
from ...keywords import renamed_keyword
from ...lora.regional import plan as regional_plan
from ...propagation import geometry
from ...terrain.profile import TerrainProfile
from ..link import link_paths
from .clearance import SOLVE_ENDS, clearance_criteria, clearance_target_m, required_height_m, round_up_mm
from .result import SCHEMA, MastResult, feasible_binding, infeasible_outcome, per_extra_metre
from .search import (
    MARGIN_TOLERANCE_M,
    MAST_BATCH,
    MAX_GRID_POINTS,
    MONOTONE_TOLERANCE_DB,
    MastProblem,
    height_grid,
    margin_criterion,
    monotone_note,
    table_rows,
)
from .split import cheapest_split, cheapest_split_m

__all__ = ["solve_mast", "MastResult", "required_height_m", "cheapest_split_m", "clearance_target_m",
           "round_up_mm", "SCHEMA", "SOLVE_ENDS", "CRITERIA", "MAX_GRID_POINTS", "MAST_BATCH",
           "MARGIN_TOLERANCE_M", "MONOTONE_TOLERANCE_DB"]

CRITERIA = ("clearance", "clearance_low_k", "margin")


def _check_ratio(value, option):
    if value is None:
        return None
    v = float(value)
    if not (math.isfinite(v) and v >= 0):
        raise ProfilerError(f"{option} must be 0 or more, got {value}")
    return v


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


@renamed_keyword("site_a_lat_lon", "site_a", since="0.2")
@renamed_keyword("site_b_lat_lon", "site_b", since="0.2")
def solve_mast(profile: TerrainProfile, *, frequency_mhz: float, solve: str = "b",
               mast_a_m: float = 10.0, mast_b_m: float = 2.0,
               clearance_ratio: float | None = 0.6, k_factor=4.0 / 3.0,
               low_k_clearance_ratio: float | None = 0.0, low_k_factor=2.0 / 3.0,
               min_margin_db: float | None = None, radio: RadioSettings | None = None,
               max_mast_m: float = 60.0, mast_step_m: float = 1.0, band: str | None = None,
               name_a: str = "A", name_b: str = "B",
               site_a: tuple[float, float] | None = None,
               site_b: tuple[float, float] | None = None) -> MastResult:
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
    band, name_a, name_b, site_a, site_b
        Report metadata, as for :func:`profiler.products.link.analyze_link` (``site_a``, ``site_b``:
        ``(lat_deg, lon_deg)`` [deg]; the former keywords ``site_a_lat_lon``, ``site_b_lat_lon`` still
        work until the next release, with a ``DeprecationWarning``).

    Returns
    -------
    MastResult
        ``feasible`` False (with ``message``) when no height up to
        ``max_mast_m`` meets every criterion.

    References
    ----------
    ITU-R P.530-18 section 2.2.2.1 (planning criteria); ITU-R P.526-15
    section 2, eq. (2); margin as :func:`profiler.engine.radio.radio_results`.
    """
    limits.check_name(name_a, "name_a")
    limits.check_name(name_b, "name_b")
    radio = (radio or RadioSettings()).validate()
    has_coordinates = site_a is not None and site_b is not None
    model_chosen = radio.propagation.model
    radio = radio.with_model(has_coordinates)
    max_mast_m, mast_step_m, m_a0, m_b0, ratio, ratio_low = _validated(
        solve, frequency_mhz, max_mast_m, mast_step_m, mast_a_m, mast_b_m, clearance_ratio,
        low_k_clearance_ratio, min_margin_db)
    plan = regional_plan(band) if band is not None else None
    k, k_low = radio.propagation.k_factor(geometry.parse_k_factor(k_factor)), geometry.parse_k_factor(low_k_factor)
    limits.check_values({"--k": k, "--low-k": k_low})
    paths = link_paths(profile, site_a, site_b) if has_coordinates else None
    pb = MastProblem(profile, solve, m_a0, m_b0, frequency_mhz, k, k_low, radio, plan, max_mast_m, paths)

    criteria, clearance_req = clearance_criteria(pb, ratio, ratio_low)
    name_c = max(clearance_req, key=lambda n: clearance_req[n][0]) if clearance_req else None
    t_clear = max(pb.lower, round_up_mm(clearance_req[name_c][0])) if name_c else pb.lower
    clearance_ok = t_clear <= pb.upper + 1e-12

    grid = height_grid(pb.lower, pb.current, pb.upper, mast_step_m)
    table_t = grid[grid >= pb.current - 1e-9]
    x_db = None if min_margin_db is None else float(min_margin_db)
    t_margin, margin_monotone, notes = _margin_scan(pb, grid, table_t, x_db, t_clear, clearance_ok, mast_step_m,
                                                    criteria)

    feasible = clearance_ok and (min_margin_db is None or t_margin is not None)
    message = best = t_sol = None
    if feasible:
        t_sol = t_margin if min_margin_db is not None else t_clear
        binding = feasible_binding(pb, t_sol, t_clear, name_c, clearance_req, min_margin_db)
    else:
        ratios = {"clearance": (ratio, pb.k), "clearance_low_k": (ratio_low, pb.k_low)}
        binding, best, message = infeasible_outcome(pb, grid, clearance_ok, name_c, clearance_req, ratios, x_db,
                                                    max_mast_m)

    split = _split_row(pb, clearance_req, max_mast_m, mast_step_m, x_db) if solve == "both" else None
    warnings = []
    if model_chosen is None and radio.propagation.model == "terrain":
        warnings.append("the terrain model was used: ITU-R P.1812-8 needs the coordinates of both ends; with "
                        "--profile give --site-a LAT,LON and --site-b LAT,LON for it")
    if profile.voids_filled:
        warnings.append(f"{profile.voids_filled} profile samples were interpolated across elevation voids")
    if feasible:
        req_a, req_b = pb.masts_at(t_sol)
    else:
        req_a = None if solve in ("a", "both") else m_a0
        req_b = None if solve in ("b", "both") else m_b0
    return MastResult(
        site_a=_site(name_a, site_a, pb.g_a, m_a0),
        site_b=_site(name_b, site_b, pb.g_b, m_b0),
        frequency_mhz=float(frequency_mhz), band=band, wavelength_m=pb.lam, distance_m=pb.total,
        solve=solve, criteria=criteria, feasible=bool(feasible),
        required_mast_a_m=req_a, required_mast_b_m=req_b,
        added_height_m=round(t_sol, 6) if (feasible and solve == "both") else None,
        binding=binding, at_required=pb.state(t_sol) if feasible else None,
        per_extra_metre=per_extra_metre(pb, t_sol) if feasible else None, best_achievable=best,
        cheapest_split=split, margin_monotone=margin_monotone, max_mast_m=max_mast_m, mast_step_m=mast_step_m,
        search={"parameter": {"a": "mast_a_m", "b": "mast_b_m", "both": "added_height_m"}[solve],
                "lower_m": pb.lower, "current_m": pb.current, "upper_m": pb.upper},
        table=table_rows(pb, table_t), diffraction_method=radio.diffraction_method, message=message,
        notes=notes,
        dem={"kind": profile.kind, "sources": list(profile.sources), "voids_filled": int(profile.voids_filled)},
        warnings=warnings, model=radio.propagation.model, propagation=radio.propagation.to_dict(k),
        calibration=radio.propagation.calibration_dict(),
    )


def _margin_scan(pb, grid, table_t, x_db, t_clear, clearance_ok, step, criteria):
    """(t meeting margin and clearance or None, monotone flag, notes); appends the margin criterion row.

    Without a margin criterion (``x_db`` None) the table heights are scanned only to tell whether
    the margin rises steadily with height.
    """
    if x_db is not None:
        row, t_margin, monotone, notes = margin_criterion(pb, grid, x_db, t_clear, clearance_ok, step)
        criteria.append(row)
        return t_margin, monotone, notes
    pb.prefetch(table_t)
    margins = np.array([pb.margin_at(t) for t in table_t])
    monotone, notes = monotone_note(pb, table_t, margins, None, step) if margins.size > 1 else (None, [])
    return None, monotone, notes


def _split_row(pb, clearance_req, max_mast_m, step, x_db):
    """The report's ``cheapest_split`` (with its worst clearance ratios), or None."""
    split = cheapest_split(pb.d, pb.g_a, pb.g_b, clearance_req, max_mast_m, step, x_db,
                           lambda ma, mb: pb.radio_masts(ma, mb)["margin_db"])
    if split is not None:
        split["total_m"] = round(split["mast_a_m"] + split["mast_b_m"], 6)   # no float noise in the JSON
        split.update({"worst_ratio": pb.worst(split["mast_a_m"], split["mast_b_m"])[0],
                      "worst_ratio_low_k": pb.worst(split["mast_a_m"], split["mast_b_m"], True)[0]})
    return split


def _site(name, lat_lon, ground, mast):
    """The report's ``site_a`` / ``site_b``."""
    return {"name": name,
            "lat_deg": None if lat_lon is None else float(lat_lon[0]),
            "lon_deg": None if lat_lon is None else float(lat_lon[1]),
            "ground_m": float(ground), "mast_m": float(mast)}
