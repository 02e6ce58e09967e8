"""Gateway siting over a network report: margin matrix, ``profiler.siting/4`` report, CSV and GeoJSON.

The network engine's report (``profiler.network/5``) gives ``sites[]``
(``name, lat_deg, lon_deg, mast_m, role, ground_m``; role ``gateway`` =
existing, always kept; ``candidate`` = may get a gateway; ``node`` = must be
heard; an optional ``cost`` on candidates) and ``links[]`` (``gateway,
node, margin_db`` (uplink, node -> gateway, at ``recommended_dr``),
``recommended_dr`` (null: no allowed data rate closes), ``error``,
``line_of_sight``, ``fresnel_clear``, ``worst_fresnel_ratio``,
``worst_distance_m`` (from the gateway), ``diffraction_db``,
``probability_heard``, ...).

A node is heard by a site when their link has no error, an allowed data
rate closes (``recommended_dr`` not null) and ``probability_heard >=
min_probability`` (and ``margin_db >= min_margin_db`` when that is given;
:func:`hearing_rule`).  :func:`siting_from_network` builds the matrices, solves
with :func:`profiler.products.siting.setcover.solve_siting` and returns the JSON report.

References
----------
.. [1] H. Butler et al., "The GeoJSON Format", IETF RFC 7946, 2016:
   section 3.1.4 (LineString), 3.1.9 (antimeridian cutting), 6.1 (foreign members).
"""

from __future__ import annotations

import csv
import io
import json
import math
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from ...about import CAUTION, __version__
from ...errors import ProfilerError
from ...io.exports import geojson_position, geojson_positions, split_at_antimeridian, wrap_longitude
from ...io.report import format_cell, inert_text
from .setcover import hearing_rule, need_text, solve_siting

__all__ = ["SCHEMA", "SitingResult", "MarginMatrix", "margin_matrix", "hearing_rule", "site_costs",
           "siting_from_network",
           "siting_report", "siting_csv_text", "siting_geojson_dict", "siting_geojson_text", "siting_kml_text"]

SCHEMA = "profiler.siting/4"
#: The ``settings`` keys copied from the network report the sites were chosen over: the propagation
#: model, its percentages, the diffraction method and the calibration applied (``profiler.siting/4``).
SETTINGS_KEYS = ("model", "time_percent", "location_percent", "diffraction_method", "calibration")

#: Roles on the gateway-site axis; ``gateway`` sites are fixed open.
SITE_ROLES = ("gateway", "candidate")


class MarginMatrix(NamedTuple):
    """The link table as (gateway sites x nodes) arrays.

    ``site_names``/``site_roles``: gateway and candidate sites in the order
    of ``sites[]``; ``node_names``: the nodes; ``margin_db``: uplink margin
    [dB], NaN where there is no link, it failed or has no margin;
    ``allowed``: no error, finite margin and a recommended data rate;
    ``link_index``: the row of ``links[]`` behind each cell (-1: no link);
    ``probability``: the cell's link ``probability_heard`` [-] (NaN none),
    or None when the links carry none (a report before ``profiler.network/4``).
    """

    site_names: list
    node_names: list
    margin_db: np.ndarray
    allowed: np.ndarray
    link_index: np.ndarray
    site_roles: list
    probability: np.ndarray | None = None


@dataclass(frozen=True)
class SitingResult:
    """The answer of :func:`profiler.siting`: :meth:`to_dict` is the ``profiler.siting/4`` JSON report.

    ``network`` is the ``profiler.network/5`` report the choice was made
    over (every gateway and candidate site to every node); the sheet and the
    GeoJSON/KML exports draw the sites and links from it.  The headline
    values are read-only views of the report.
    """

    report: dict
    network: dict

    def to_dict(self) -> dict:
        """The ``profiler.siting/4`` report (a plain dict, no NaN)."""
        return self.report

    chosen = property(lambda self: list(self.report["chosen"]),
                      doc="Names of the open sites (existing gateways included).")
    objective = property(lambda self: self.report["objective"],
                         doc="Total cost of the candidates opened, or the nodes heard R times (``max_gateways``).")
    proven_optimal = property(lambda self: self.report["proven_optimal"],
                              doc="Whether the solver proved the objective optimal.")
    gap = property(lambda self: self.report["gap"], doc="Relative MIP gap (None when no bound is known).")
    greedy = property(lambda self: self.report["greedy"], doc="The greedy choice: ``{chosen, objective}``.")
    unreachable = property(lambda self: self.report["unreachable"],
                           doc="Nodes no choice of sites hears R times: ``{name, best_margin_db, reason}``.")
    summary = property(lambda self: self.report["summary"], doc="The report's ``summary`` block.")


def _sites_and_links(network_report) -> tuple[list, list]:
    if not isinstance(network_report, dict):
        raise ProfilerError("siting needs a network report (a dict with sites[] and links[])")
    sites, links = network_report.get("sites"), network_report.get("links")
    if not isinstance(sites, list) or not isinstance(links, list):
        raise ProfilerError("the network report has no sites[] or links[]: run the network engine first")
    return sites, links


def margin_matrix(network_report: dict) -> MarginMatrix:
    """Uplink margins of every gateway site x node pair from the network link table.

    One pass over ``links[]`` builds index arrays (names looked up in
    dicts); the matrices are then filled by numpy fancy indexing.  When a
    pair is listed twice, the better link is kept (allowed first, then the
    larger margin).

    Raises
    ------
    ProfilerError
        When the report lacks sites or links, or a link names a site that
        is not a gateway/candidate (``gateway``) or a node (``node``).
    """
    sites, links = _sites_and_links(network_report)
    site_names = [s.get("name") for s in sites if s.get("role") in SITE_ROLES]
    site_roles = [s.get("role") for s in sites if s.get("role") in SITE_ROLES]
    node_names = [s.get("name") for s in sites if s.get("role") == "node"]
    site_at = {name: k for k, name in enumerate(site_names)}
    node_at = {name: k for k, name in enumerate(node_names)}
    m, n = len(site_names), len(node_names)
    # max_margin_db (the best uplink margin over the plan's allowed data rates) says whether any allowed
    # rate reaches the required margin; without it, the margin at the recommended rate is used.
    key = "max_margin_db" if links and "max_margin_db" in links[0] else "margin_db"
    try:
        rows = np.array([(site_at.get(lk.get("gateway"), -1), node_at.get(lk.get("node"), -1),
                          np.nan if lk.get(key) is None else lk[key],
                          not lk.get("error"), key == "max_margin_db" or lk.get("recommended_dr") is not None)
                         for lk in links],
                        dtype=float).reshape(-1, 5)
    except (AttributeError, TypeError, ValueError) as exc:
        raise ProfilerError(f"the network report's links[] are malformed ({exc}): rerun the network engine") from exc
    gi, ni = rows[:, 0].astype(int), rows[:, 1].astype(int)
    bad = np.flatnonzero((gi < 0) | (ni < 0))
    if bad.size:
        lk = links[bad[0]]
        raise ProfilerError(f"network link {bad[0] + 1} ({lk.get('gateway')!r} -> {lk.get('node')!r}) does not join "
                            "a gateway or candidate site to a node of sites[]")
    margin = np.where(rows[:, 3] > 0, rows[:, 2], np.nan)
    ok = (rows[:, 3] > 0) & (rows[:, 4] > 0) & np.isfinite(margin)
    cell = gi * n + ni
    order = np.lexsort((np.nan_to_num(margin, nan=-np.inf), ok, cell))   # best link of a cell last
    last = np.r_[cell[order][1:] != cell[order][:-1], True] if order.size else np.zeros(0, bool)
    keep = order[last]
    margin_db = np.full((m, n), np.nan)
    allowed = np.zeros((m, n), dtype=bool)
    link_index = np.full((m, n), -1, dtype=int)
    margin_db[gi[keep], ni[keep]] = margin[keep]
    allowed[gi[keep], ni[keep]] = ok[keep]
    link_index[gi[keep], ni[keep]] = keep
    probability = None
    if links and "probability_heard" in links[0]:
        p = np.array([np.nan if lk.get("probability_heard") is None else lk["probability_heard"] for lk in links],
                     dtype=float)
        probability = np.full((m, n), np.nan)
        probability[gi[keep], ni[keep]] = p[keep]
    return MarginMatrix(site_names, node_names, margin_db, allowed, link_index, site_roles, probability)


def site_costs(network_report: dict, matrix: MarginMatrix, costs: dict | None = None) -> np.ndarray:
    """Cost of each gateway site: ``costs[name]``, else the site's ``cost`` field, else 1; existing gateways 0.

    Raises
    ------
    ProfilerError
        For a candidate whose cost is not a positive number.
    """
    sites, _ = _sites_and_links(network_report)
    given = {s.get("name"): s.get("cost") for s in sites if s.get("role") in SITE_ROLES}
    given.update(costs or {})
    out = np.zeros(len(matrix.site_names))
    for k, (name, role) in enumerate(zip(matrix.site_names, matrix.site_roles)):  # one per site
        if role == "gateway":
            continue
        value = given.get(name)
        value = 1.0 if value is None or value == "" else value
        try:
            out[k] = float(value)
        except (TypeError, ValueError):
            out[k] = math.nan
        if not (math.isfinite(out[k]) and out[k] > 0):
            raise ProfilerError(f"candidate site {name!r}: cost {value!r} is not a positive number; "
                                "fix the cost column")
    return out


def siting_from_network(network_report: dict, *, min_margin_db: float | None = None, redundancy: int = 1,
                        max_gateways: int | None = None, time_limit_s: float = 60.0,
                        costs: dict | None = None, min_probability: float | None = None) -> dict:
    """Solve the siting problem over a network report and return the ``profiler.siting/4`` report.

    Parameters
    ----------
    network_report : dict
        The network engine's report (``profiler.network/5``), links from
        every gateway and candidate site to the nodes.
    min_margin_db : float, optional
        Least uplink margin for a node to count as heard [dB] (``--min-margin-db``);
        :func:`hearing_rule` says when it applies.
    min_probability : float, optional
        Least ``probability_heard`` [-] (:func:`hearing_rule`).
    redundancy, max_gateways, time_limit_s
        As in :func:`profiler.products.siting.setcover.solve_siting`.
    costs : dict, optional
        ``site name -> cost`` overriding the sites' ``cost`` fields.
    """
    matrix = margin_matrix(network_report)
    hears, min_margin_db, min_probability = hearing_rule(network_report, matrix, min_margin_db, min_probability)
    cost = site_costs(network_report, matrix, costs)
    fixed = np.array([role == "gateway" for role in matrix.site_roles], dtype=bool)
    solution = solve_siting(hears, cost=cost, fixed=fixed, redundancy=redundancy, max_gateways=max_gateways,
                            margin_db=np.where(hears, matrix.margin_db, np.nan), time_limit_s=time_limit_s)
    return siting_report(network_report, matrix, hears, solution, cost=cost, min_margin_db=min_margin_db,
                         min_probability=min_probability, redundancy=redundancy, max_gateways=max_gateways,
                         time_limit_s=time_limit_s)


# --------------------------------------------------------------------------- report
def _round(x, digits=2):
    return None if x is None or not math.isfinite(x) else round(float(x), digits)


def _best(mask, margin):
    """Per node: index of the best finite margin where ``mask`` (-1 if none)."""
    score = np.where(mask & np.isfinite(margin), margin, -np.inf)
    best = np.argmax(score, axis=0) if score.shape[0] else np.zeros(score.shape[1], dtype=int)
    found = np.isfinite(score.max(axis=0, initial=-np.inf))
    return np.where(found, best, -1)


def _obstruction_text(link: dict) -> str:
    """What limits a link, from its worst point and diffraction loss."""
    dist = link.get("worst_distance_m")
    where = f" {dist / 1000.0:.2f} km from the gateway" if dist is not None else ""
    diff = link.get("diffraction_db")
    loss = f", diffraction {diff:.1f} dB" if diff is not None else ""
    ratio = link.get("worst_fresnel_ratio")
    los = link.get("line_of_sight")
    if los is False or (los is None and ratio is not None and ratio < 0):
        return f"terrain blocks the line of sight{where}{loss}"
    if link.get("fresnel_clear") is False:
        pct = f" ({100.0 * ratio:.0f} % of F1 clear)" if ratio is not None else ""
        return f"Fresnel zone obstructed{where}{pct}{loss}"
    if diff is not None and diff >= CLUTTER_DIFFRACTION_DB:   # the terrain is clear: the clutter diffracts
        return f"terrain clear of the first Fresnel zone; diffraction {diff:.1f} dB over the clutter along the path"
    distance = link.get("distance_m")
    span = f" over {distance / 1000.0:.2f} km" if distance is not None else ""
    return f"path clear; free-space loss{span} limits the budget{loss}"


#: Diffraction loss [dB] above which a path whose terrain clears the first Fresnel zone is said to be limited
#: by the clutter it crosses (the land cover's R on the profile): over clear terrain the diffraction
#: models give well under this (about 0 dB at 60 % of F1 clear, ITU-R P.526-15 Figure 3 knife edge).
CLUTTER_DIFFRACTION_DB = 6.0


def _unreachable_reason(k, links, matrix, hears, need, redundancy) -> tuple[str, object]:
    """Reason for node ``k`` and the best margin over all sites."""
    names = matrix.site_names
    heard = np.flatnonzero(hears[:, k])
    margin = matrix.margin_db[:, k]
    parts = []
    if heard.size:
        parts.append(f"heard by {heard.size} site(s) ({', '.join(names[j] for j in heard)}), "
                     f"{redundancy} required")
    rest = np.where(~hears[:, k] & np.isfinite(margin), margin, -np.inf)
    best_all = float(np.nanmax(margin)) if np.isfinite(margin).any() else None
    if np.isfinite(rest).any():
        j = int(np.argmax(rest))
        link = links[matrix.link_index[j, k]]
        # recommended_dr is null when no allowed rate keeps the fade margin; the link still closes when its
        # margin is not negative, so only then is "no allowed data rate closes" true.
        dr = ", no allowed data rate closes" if link.get("recommended_dr") is None and margin[j] < 0 else ""
        label = "next best" if heard.size else "best"
        heard_p = "" if matrix.probability is None else f", P(heard) {matrix.probability[j, k]:.2f}"
        parts.append(f"{label} margin {margin[j]:.1f} dB{heard_p} from {names[j]} (needs {need}{dr})")
        parts.append(_obstruction_text(link))
    else:
        failed = matrix.link_index[:, k][matrix.link_index[:, k] >= 0]
        errors = [links[i].get("error") for i in failed if links[i].get("error")]
        if errors:
            parts.append(f"no link could be computed: {errors[0]}")
        elif not heard.size:
            parts.append("no gateway or candidate site within range: no link was computed")
        else:
            parts.append("no other site has a link to it")
    return "; ".join(parts), best_all


def _node_rows(links, matrix, hears, solution, is_open) -> list[dict]:
    """``nodes[]``: every node with the chosen sites that hear it and its best link among them."""
    margin = matrix.margin_db
    best_heard = _best(hears & is_open[:, None], margin)
    best_any = _best(np.broadcast_to(is_open[:, None], margin.shape), margin)
    best = np.where(best_heard >= 0, best_heard, best_any)
    unreachable = np.zeros(len(matrix.node_names), dtype=bool)
    unreachable[solution.unreachable] = True
    rows = []
    for k, name in enumerate(matrix.node_names):                 # one row per node (output)
        j = int(best[k])
        link = links[matrix.link_index[j, k]] if j >= 0 and matrix.link_index[j, k] >= 0 else {}
        by = solution.heard_by[k]
        rows.append({
            "name": name, "covered": bool(solution.covered[k]), "unreachable": bool(unreachable[k]),
            "heard_by": [matrix.site_names[s] for s in by],
            "heard_by_margin_db": [_round(margin[s, k]) for s in by],
            "best_gateway": matrix.site_names[j] if j >= 0 else None,
            "best_margin_db": _round(margin[j, k]) if j >= 0 else None,
            "recommended_dr": link.get("recommended_dr"),
        })
    return rows


def siting_report(network_report: dict, matrix: MarginMatrix, hears, solution, *, cost, min_margin_db,
                  redundancy: int, max_gateways: int | None, time_limit_s: float,
                  min_probability: float | None = None) -> dict:
    """The ``profiler.siting/4`` JSON report (a plain dict, no NaN).

    Parameters
    ----------
    network_report : dict
        The network report the matrices came from (``dem``, ``warnings``,
        ``band`` and ``frequency_mhz`` are carried over, and its ``settings``
        keys :data:`SETTINGS_KEYS` become the report's ``settings``).
    matrix : MarginMatrix
    hears : ndarray of bool
        The hearing matrix the solution was computed on.
    solution : profiler.siting.SitingSolution
    cost : ndarray
        Cost of each gateway site (0 for existing gateways).
    min_margin_db, min_probability, redundancy, max_gateways, time_limit_s
        The settings used (recorded in the report; None: that rule not applied).
    """
    _, links = _sites_and_links(network_report)
    names = matrix.site_names
    is_open = np.zeros(len(names), dtype=bool)
    is_open[solution.chosen] = True
    heard_counts = hears.sum(axis=1)
    unreachable = []
    for k in solution.unreachable:                              # one per unreachable node (output)
        reason, best = _unreachable_reason(int(k), links, matrix, hears, need_text(min_margin_db, min_probability),
                                           redundancy)
        unreachable.append({"name": matrix.node_names[k], "best_margin_db": _round(best), "reason": reason})
    nodes = _node_rows(links, matrix, hears, solution, is_open)
    min_cost = solution.mode == "min_cost"
    errors = sum(1 for lk in links if lk.get("error"))
    # The network run already warns about links it could not compute; say it once, with what it means here.
    warnings = [w for w in network_report.get("warnings") or [] if not (errors and "could not be computed" in str(w))]
    if errors:
        warnings.append(f"{errors} of {len(links)} links could not be computed (see their error in the network "
                        "table) and count as not heard")
    if not solution.proven_optimal:
        warnings.append(f"the optimum is not proven ({solution.status}); raise --time-limit-s for a proof")
    if unreachable:
        warnings.append(f"{len(unreachable)} node(s) cannot be heard {redundancy} time(s) by any choice of sites: "
                        "see unreachable[]")
    return {
        "schema": SCHEMA, "tool_version": __version__, "mode": solution.mode,
        "chosen": [names[j] for j in solution.chosen],
        "sites": [{"name": names[j], "role": matrix.site_roles[j], "cost": float(cost[j]),
                   "chosen": bool(is_open[j]), "nodes_heard": int(heard_counts[j])} for j in range(len(names))],
        "nodes": nodes, "unreachable": unreachable,
        "objective": float(solution.objective),
        "objective_meaning": ("total cost of the candidate sites opened" if min_cost
                              else f"nodes heard {redundancy} time(s)"),
        "proven_optimal": bool(solution.proven_optimal), "gap": _round(solution.gap, 6),
        "status": solution.status,
        "margin_total_db": _round(solution.margin_total_db),
        "greedy": {"chosen": [names[j] for j in solution.greedy_chosen],
                   "objective": float(solution.greedy_objective)},
        "summary": {
            "nodes_total": len(matrix.node_names), "nodes_heard": int(solution.covered.sum()),
            "nodes_unreachable": len(unreachable), "sites_chosen": int(is_open.sum()),
            "candidates_opened": int((is_open & (cost > 0)).sum()),
            "cost_total": float(cost[is_open].sum()), "redundancy": int(redundancy),
        },
        "redundancy": int(redundancy), "min_margin_db": None if min_margin_db is None else float(min_margin_db),
        "min_probability": None if min_probability is None else float(min_probability),
        "max_gateways": None if max_gateways is None else int(max_gateways), "time_limit_s": float(time_limit_s),
        "band": network_report.get("band"), "frequency_mhz": network_report.get("frequency_mhz"),
        "settings": {key: (network_report.get("settings") or {}).get(key) for key in SETTINGS_KEYS},
        "dem": network_report.get("dem"), "warnings": warnings, "caution": CAUTION,
    }



# --------------------------------------------------------------------------- CSV
NODE_CSV_COLUMNS = ("node", "covered", "unreachable", "heard_by_count", "heard_by", "best_gateway",
                    "best_margin_db", "recommended_dr", "reason")


def _cell(value) -> str:
    """A CSV cell: text made inert, numbers as in the link CSV (2 decimals)."""
    return inert_text(value) if isinstance(value, str) else format_cell(value, 2)


def siting_csv_text(report: dict) -> str:
    """One row per node (columns :data:`NODE_CSV_COLUMNS`), then ``# name,value`` summary rows.

    ``heard_by`` lists the chosen sites that hear the node, separated by
    ``"; "``; ``reason`` is filled for unreachable nodes.  Text cells pass
    through :func:`profiler.io.report.inert_text`.
    """
    reasons = {u["name"]: u["reason"] for u in report["unreachable"]}
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(NODE_CSV_COLUMNS)
    w.writerows([[_cell(v) for v in (nd["name"], nd["covered"], nd["unreachable"], len(nd["heard_by"]),
                                     "; ".join(nd["heard_by"]), nd["best_gateway"], nd["best_margin_db"],
                                     nd["recommended_dr"], reasons.get(nd["name"]))]
                 for nd in report["nodes"]])
    buf.write("\n")
    s = report["summary"]
    summary = [("schema", report["schema"]), ("mode", report["mode"]), ("chosen", "; ".join(report["chosen"])),
               ("objective", report["objective"]), ("objective_meaning", report["objective_meaning"]),
               ("proven_optimal", report["proven_optimal"]), ("gap", report["gap"]), ("status", report["status"]),
               ("greedy_chosen", "; ".join(report["greedy"]["chosen"])),
               ("greedy_objective", report["greedy"]["objective"]),
               *[(key, s[key]) for key in ("nodes_total", "nodes_heard", "nodes_unreachable", "sites_chosen",
                                           "cost_total")],
               ("redundancy", report["redundancy"]), ("min_margin_db", report["min_margin_db"]),
               ("min_probability", report.get("min_probability")), ("max_gateways", report["max_gateways"]),
               ("time_limit_s", report["time_limit_s"]),
               ("caution", CAUTION)]
    w.writerows([["# " + key, _cell(value)] for key, value in summary])
    return buf.getvalue()


# --------------------------------------------------------------------------- GeoJSON
def siting_geojson_dict(report: dict, network_report: dict) -> dict:
    """Sites (by role, whether chosen) and the links used, as an RFC 7946 FeatureCollection.

    Point features carry ``role``, ``chosen`` (gateway sites) or
    ``covered``/``unreachable`` (nodes); one ``LineString`` (split at the
    antimeridian into a ``MultiLineString``) joins each chosen site to each
    node it hears, with its ``margin_db`` and ``best`` (the node's best
    link).  Positions are ``[longitude, latitude]``; heights are properties.
    The collection carries ``schema`` and ``caution`` as foreign members
    (RFC 7946 section 6.1), and every feature ``caution`` as a property.

    Raises
    ------
    ProfilerError
        When a site of the siting report has no coordinates in the network report.
    """
    sites, _ = _sites_and_links(network_report)
    where = {s.get("name"): s for s in sites}
    gateways = {g["name"]: g for g in report["sites"]}
    nodes = {nd["name"]: nd for nd in report["nodes"]}
    unreachable = {u["name"]: u["reason"] for u in report["unreachable"]}
    caution = inert_text(CAUTION)
    features = []
    for s in sites:                                             # one feature per site (output)
        name = s.get("name")
        info = gateways.get(name) or nodes.get(name)
        if info is None:
            continue
        props = {"feature": "site", "name": name, "role": s.get("role"),   # as given: json escapes
                 "ground_m": s.get("ground_m"), "mast_m": s.get("mast_m")}
        if name in gateways:
            props.update(chosen=info["chosen"], cost=info["cost"], nodes_heard=info["nodes_heard"])
        else:
            props.update(covered=info["covered"], unreachable=info["unreachable"],
                         heard_by_count=len(info["heard_by"]), best_margin_db=info["best_margin_db"],
                         reason=inert_text(unreachable.get(name, "")))
        props["caution"] = caution
        features.append({"type": "Feature", "id": f"site:{name}", "properties": props,
                         "geometry": {"type": "Point", "coordinates": _site_position(where, name)}})
    for nd in report["nodes"]:                                  # one feature per link used (output)
        for rank, (gw, margin) in enumerate(zip(nd["heard_by"], nd["heard_by_margin_db"])):
            lon, lat = np.array([_site_position(where, gw), _site_position(where, nd["name"])]).T
            parts = split_at_antimeridian(lon, lat)
            geometry = ({"type": "LineString", "coordinates": geojson_positions(*parts[0])} if len(parts) == 1 else
                        {"type": "MultiLineString", "coordinates": [geojson_positions(*p) for p in parts]})
            features.append({"type": "Feature", "id": f"link:{gw}:{nd['name']}", "geometry": geometry,
                             "properties": {"feature": "link", "gateway": gw,
                                            "node": nd["name"], "margin_db": margin,
                                            "best": rank == 0, "caution": caution}})
    return {"type": "FeatureCollection", "schema": report["schema"], "caution": caution, "features": features}


def _site_position(where: dict, name) -> list:
    s = where.get(name) or {}
    lat, lon = s.get("lat_deg"), s.get("lon_deg")
    if lat is None or lon is None:
        raise ProfilerError(f"site {name!r} has no coordinates in the network report; GeoJSON needs them")
    return geojson_position(wrap_longitude(lon), lat)


def siting_geojson_text(report: dict, network_report: dict) -> str:
    """The siting GeoJSON as text (UTF-8 JSON, no NaN)."""
    try:
        return json.dumps(siting_geojson_dict(report, network_report), ensure_ascii=False, allow_nan=False,
                          separators=(",", ":")) + "\n"
    except ValueError as exc:
        raise ProfilerError(f"cannot write GeoJSON: the report holds a value that is not a number ({exc})") from exc


# --------------------------------------------------------------------------- KML
#: KML colours (aabbggrr) and widths: the best server of a node, and the other chosen sites that hear it.
_KML_LINKS = {"best": ("ffb0501a", 3.0, "best server of the node"),
              "other": ("80808080", 1.0, "other chosen site hearing the node")}
_KML_SITES = {"gateway": ("ff1e1ecc", 1.4), "candidate": ("ffcc7a1e", 1.2), "node": ("ffffffff", 0.9)}


def siting_kml_text(report: dict, network_report: dict) -> str:
    """The chosen sites, the nodes and the links used as OGC KML 2.2 text.

    Folders: ``Chosen sites`` (existing gateways and the candidates opened,
    with cost and nodes heard), ``Nodes`` (heard R times or not, with the
    chosen sites hearing them) and ``Nodes unreachable`` (with the reason),
    each placemark at the antenna tip extruded to the ground as in the
    network KML (:mod:`profiler.io.network_exports`); ``Links used``: one
    ground-clamped line from each chosen site to each node it hears, the
    node's best server in its own sub-folder.  Sites not chosen are left
    out (they are in the GeoJSON with ``chosen: false``).

    References: OGC 07-147r2 (KML 2.2) sections 9.10 (Folder), 9.11
    (Placemark), 10.7 (LineString), 12 (styles; colours aabbggrr).
    """
    import xml.etree.ElementTree as ET

    from ...io.exports import KML_NAMESPACE, extended_data, html_description, kml_coordinates, kml_style, sub_element
    from ...io.network_exports import kml_site

    sites, _ = _sites_and_links(network_report)
    where = {s.get("name"): s for s in sites}
    s = report["summary"]
    ET.register_namespace("", KML_NAMESPACE)
    root = ET.Element(f"{{{KML_NAMESPACE}}}kml")
    doc = sub_element(root, "Document")
    title = f"Gateway siting: {len(report['chosen'])} sites chosen for {s['nodes_total']} nodes"
    sub_element(doc, "name", title)
    sub_element(doc, "open", 1)
    sub_element(doc, "description",
                html_description([inert_text(line) for line in _headline_lines(report)] + [CAUTION]))
    for role, (colour, scale) in _KML_SITES.items():
        kml_style(doc, f"site-{role}", icon_color=colour, icon_scale=scale)
    for kind, (colour, width, _) in _KML_LINKS.items():
        kml_style(doc, f"link-{kind}", line_color=colour, line_width=width)
    folders = {}
    for key, name in (("chosen", "Chosen sites"), ("node", "Nodes"), ("unreachable", "Nodes unreachable")):
        folders[key] = sub_element(doc, "Folder")
        sub_element(folders[key], "name", name)
    gateways = {g["name"]: g for g in report["sites"]}
    reasons = {u["name"]: u["reason"] for u in report["unreachable"]}
    for name in report["chosen"]:                              # one placemark per chosen site (output)
        g = gateways[name]
        lon, lat = _site_position(where, name)
        kml_site(folders["chosen"], where[name], {"chosen": True, "cost": g["cost"], "nodes_heard": g["nodes_heard"]},
                  lon, lat)
    for nd in report["nodes"]:                                  # one placemark per node (output)
        lon, lat = _site_position(where, nd["name"])
        kml_site(folders["unreachable" if nd["unreachable"] else "node"], where[nd["name"]],
                  {"covered": nd["covered"], "unreachable": nd["unreachable"], "heard_by": "; ".join(nd["heard_by"]),
                   "best_gateway": nd["best_gateway"], "best_margin_db": nd["best_margin_db"],
                   "reason": reasons.get(nd["name"])}, lon, lat)
    used = sub_element(doc, "Folder")
    sub_element(used, "name", "Links used")
    kinds = {}
    for kind, (_, _, text) in _KML_LINKS.items():
        kinds[kind] = sub_element(used, "Folder")
        sub_element(kinds[kind], "name", text)
    for nd in report["nodes"]:                                  # one line per link used (output)
        for rank, (gw, margin) in enumerate(zip(nd["heard_by"], nd["heard_by_margin_db"])):
            kind = "best" if rank == 0 else "other"
            mark = sub_element(kinds[kind], "Placemark")
            sub_element(mark, "name", f"{inert_text(gw)} \u2013 {inert_text(nd['name'])}")
            sub_element(mark, "description", html_description([f"{inert_text(gw)} hears {inert_text(nd['name'])}: "
                                                          f"uplink margin {margin} dB ({_KML_LINKS[kind][2]})"]))
            sub_element(mark, "styleUrl", f"#link-{kind}")
            extended_data(mark, {"gateway": gw, "node": nd["name"], "margin_db": margin, "best": rank == 0})
            line = sub_element(mark, "LineString")
            sub_element(line, "tessellate", 1)
            sub_element(line, "altitudeMode", "clampToGround")
            (x0, y0), (x1, y1) = _site_position(where, gw), _site_position(where, nd["name"])
            sub_element(line, "coordinates", kml_coordinates([x0, x1], [y0, y1]))
    ET.indent(root, space=" ")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


def _headline_lines(report: dict) -> list[str]:
    """The answer in words: chosen sites and cost, proof, greedy, redundancy, nodes heard (KML, sheet)."""
    s = report["summary"]
    proof = ("proven optimal" if report["proven_optimal"] else "not proven optimal") + \
        (f", gap {report['gap']:g}" if report.get("gap") is not None else ", gap unknown")
    return [f"chosen: {'; '.join(report['chosen']) or 'none'} (total cost {s['cost_total']:g})",
            f"objective {report['objective']:g} ({report['objective_meaning']}): {proof}",
            f"greedy for comparison: objective {report['greedy']['objective']:g}, "
            f"{'; '.join(report['greedy']['chosen']) or 'none'}",
            f"redundancy {report['redundancy']}: nodes heard {s['nodes_heard']} of {s['nodes_total']}, "
            f"unreachable {s['nodes_unreachable']}",
            *report.get("warnings", [])]
