"""The mast solver's result: the ``profiler.mast/4`` report and its verdict parts.

:class:`MastResult` is everything :func:`profiler.products.mast.solve.solve_mast` found
(``to_dict()`` is the JSON report); :func:`feasible_binding` and
:func:`infeasible_outcome` name the binding criterion and obstruction,
:func:`per_extra_metre` the gain of one more metre.

References
----------
.. [1] The criteria and their sources: :mod:`profiler.products.mast.solve`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ...about import CAUTION, __version__
from ...io.jsonsafe import json_clean
from .clearance import round_up_mm

__all__ = ["SCHEMA", "MastResult", "feasible_binding", "infeasible_outcome", "up_text", "fixed", "per_extra_metre"]

SCHEMA = "profiler.mast/4"


@dataclass(frozen=True)
class MastResult:
    """Everything the mast solver found; ``to_dict()`` is the JSON report (``profiler.mast/4``)."""

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
    model: str = "terrain"
    propagation: dict = field(default_factory=dict)
    calibration: dict | None = None
    sheet: dict = field(default_factory=dict)
    tool_version: str = __version__
    schema: str = SCHEMA

    def to_dict(self) -> dict:
        """The JSON report as plain Python types (no NaN: missing values are None)."""
        return json_clean({
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
            "model": self.model,
            "propagation": json_clean(self.propagation),
            "calibration": self.calibration,
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


def feasible_binding(pb, t_sol, t_clear, name_c, clearance_req, min_margin_db):
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


def infeasible_outcome(pb, grid, clearance_ok, name_c, clearance_req, ratios, x_db, max_mast_m):
    """(binding, best achievable state, one-line message) when no height works."""
    solve = pb.solve
    if not clearance_ok:
        criterion, idx = name_c, clearance_req[name_c][1]
        r_need, k_need = ratios[name_c]
        best = pb.state(pb.upper)
        best_ratio = best["worst_ratio"] if name_c == "clearance" else best["worst_ratio_low_k"]
        need = round_up_mm(clearance_req[name_c][0])
        need_text = (f"{up_text(need)} m at {solve.upper()}" if solve != "both"
                     else f"{up_text(need)} m added at both ends")
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
    at = (f"with {up_text(best['mast_a_m'])} m at A and {up_text(best['mast_b_m'])} m at B" if solve == "both"
          else f"with {up_text(best['mast_' + solve + '_m'])} m")
    message = (f"no mast up to {max_mast_m:g} m {where} meets the criteria: binding obstruction at "
               f"{pb.d[idx] / 1000.0:.3f} km (terrain {pb.terrain[idx]:.1f} m); {what} {at}")
    return {"criterion": criterion, **pb.point(idx)}, best, message


def up_text(x) -> str:
    """A height rounded up to the centimetre, as text (a printed height never undercuts the solution)."""
    return fixed(math.ceil(x * 100 - 1e-9) / 100, ".2f")


def fixed(value, spec: str) -> str:
    """``format(value, spec)`` without a negative zero: a value that rounds to zero prints unsigned
    (``-1e-6`` with ``"+.2f"`` gives ``"0.00"``, never ``"-0.00"``)."""
    text = format(value, spec)
    if math.isfinite(value) and float(text) == 0.0:
        return format(0.0, spec.replace("+", ""))
    return text


def per_extra_metre(pb, t_sol):
    t0, t1 = (t_sol, t_sol + 1.0) if t_sol + 1.0 <= pb.upper + 1e-12 else (max(pb.lower, t_sol - 1.0), t_sol)
    if not t1 > t0:
        return None
    s0, s1 = pb.state(t0), pb.state(t1)
    span = t1 - t0
    return {"from_m": round(t0, 6), "to_m": round(t1, 6),
            **{f"{key}_per_m": (s1[key] - s0[key]) / span
               for key in ("worst_ratio", "worst_ratio_low_k", "diffraction_db", "margin_db")}}
