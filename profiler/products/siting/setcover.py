"""Gateway siting: which gateway sites hear every node (set multicover / maximum coverage).

Pure functions over a *hearing matrix* ``hears[j, i]``: gateway site ``j``
(an existing gateway or a candidate) hears node ``i`` when the node's uplink
closes at an allowed data rate with at least the required margin.

Two problems are solved exactly as 0-1 integer programmes with HiGHS
through :func:`scipy.optimize.milp` [1]_:

* **Minimum cost (set multicover).**  Open candidate sites ``x_j`` in
  {0, 1} (existing gateways are fixed open at cost 0) so that every node
  that *can* be heard ``R`` times is::

      minimise  sum_j c_j x_j
      such that sum_j hears[j, i] x_j >= R   for every reachable node i

  This is the set covering location problem of Toregas et al. [2]_ with
  multiplicity ``R`` (``R = 1``: set cover).  A node heard by fewer than
  ``R`` sites even with every site open has no feasible constraint; it is
  left out and reported as unreachable.

* **Maximum coverage with at most K sites** (maximal covering location
  problem, Church & ReVelle [3]_): binary ``y_i`` = node ``i`` heard ``R``
  times::

      maximise  sum_i y_i
      such that sum_j hears[j, i] x_j >= R y_i,   sum_j x_j <= K,   x_j = 1 (fixed)

  Ties are broken by the total margin, lexicographically (see
  :func:`solve_siting`).

For comparison the classic greedy heuristic is run as well: open the site
with the best ratio of newly satisfied coverage units to cost until nothing
is left to gain.  For set cover its cost is within ``H(d) <= 1 + ln d`` of
the optimum (``d`` the largest number of nodes one site hears) [4]_ [5]_,
and instances exist where it needs more sites than the optimum (tested).

References
----------
.. [1] SciPy reference, ``scipy.optimize.milp`` (HiGHS branch and cut;
   options ``time_limit``, ``mip_rel_gap``; result ``status`` 0 optimal,
   1 iteration or time limit; ``mip_gap``, ``mip_dual_bound``).
   Q. Huangfu, J. A. J. Hall, "Parallelizing the dual revised simplex
   method", Math. Prog. Comp. 10 (2018) (HiGHS).
.. [2] C. Toregas, R. Swain, C. ReVelle, L. Bergman, "The location of
   emergency service facilities", Operations Research 19 (1971) (from memory).
.. [3] R. Church, C. ReVelle, "The maximal covering location problem",
   Papers of the Regional Science Association 32 (1974), 101-118 (from memory).
.. [4] D. S. Johnson, "Approximation algorithms for combinatorial problems",
   J. Computer and System Sciences 9 (1974), 256-278 (from memory).
.. [5] V. Chvatal, "A greedy heuristic for the set-covering problem",
   Mathematics of Operations Research 4 (1979), 233-235 (from memory).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from ...errors import ProfilerError

__all__ = ["SitingSolution", "hearing_matrix", "solve_siting", "greedy_siting"]

#: Solver statuses of :func:`scipy.optimize.milp` in words.
_MILP_STATUS = {0: "optimal", 1: "time limit reached", 2: "infeasible", 3: "unbounded", 4: "solver stopped"}


@dataclass(frozen=True, eq=False)
class SitingSolution:
    """The chosen gateway sites and what they hear.

    Attributes
    ----------
    chosen : ndarray of int
        Indices into the gateway-site axis of the open sites (fixed ones
        included), ordered by how many nodes each hears (most first; ties by
        index).
    objective : float
        Minimum-cost mode: total cost of the opened candidates (fixed sites
        cost 0; with unit costs, the number of candidates opened).
        Maximum-coverage mode: the number of nodes heard ``redundancy`` times.
    proven_optimal : bool
        HiGHS proved the optimum (``status == 0`` and ``success``) for every
        solve made (the tie-break solve included), or the problem was trivial.
    gap : float or None
        Relative MIP gap ``|primal - dual bound| / |primal|`` of the main
        solve (0 when proven), None when no bound is known.
    status : str
        What the solver did, in words (``"optimal"``, ``"time limit
        reached ..."``, ...).
    mode : str
        ``"min_cost"`` or ``"max_coverage"``.
    covered : ndarray of bool, shape (n_nodes,)
        Node heard by at least ``redundancy`` chosen sites.
    heard_by : tuple of ndarray of int
        Per node, the chosen sites that hear it (best margin first when
        margins were given, else by index).
    unreachable : ndarray of int
        Nodes that cannot be heard ``redundancy`` times even with every site open.
    margin_total_db : float or None
        Sum over covered nodes of their best margin from a chosen site [dB]
        (None without margins).
    greedy_chosen : ndarray of int
        The greedy choice, in the same order convention as ``chosen``.
    greedy_objective : float
        The greedy choice's objective (same meaning as ``objective``).
    """

    chosen: np.ndarray
    objective: float
    proven_optimal: bool
    gap: float | None
    status: str
    mode: str
    covered: np.ndarray
    heard_by: tuple
    unreachable: np.ndarray
    margin_total_db: float | None
    greedy_chosen: np.ndarray
    greedy_objective: float


def hearing_matrix(margin_db, allowed, min_margin_db: float) -> np.ndarray:
    """Which gateway site hears which node.

    Parameters
    ----------
    margin_db : array_like, shape (n_sites, n_nodes)
        Best uplink margin (node -> gateway) at an allowed data rate [dB];
        NaN where the link was not computed or failed.
    allowed : array_like of bool, same shape
        An allowed data rate closes the link (the link's recommended data
        rate is not null and it carries no error).
    min_margin_db : float
        Least margin for a node to count as heard [dB] (default in the
        command: the fade margin).

    Returns
    -------
    ndarray of bool, same shape
        ``allowed & (margin_db >= min_margin_db)``; NaN margins never hear.
    """
    margin = np.asarray(margin_db, dtype=float)
    ok = np.asarray(allowed, dtype=bool)
    if margin.ndim != 2 or ok.shape != margin.shape:
        raise ProfilerError(f"hearing matrix: margins {margin.shape} and allowed flags {ok.shape} "
                            "must be two arrays of the same (sites x nodes) shape")
    if not (isinstance(min_margin_db, (int, float)) and not isinstance(min_margin_db, bool)
            and math.isfinite(min_margin_db)):
        raise ProfilerError(f"--min-margin-db must be a finite number of dB, not {min_margin_db!r}")
    with np.errstate(invalid="ignore"):
        return ok & (margin >= float(min_margin_db))


def hearing_rule(network_report: dict, matrix, min_margin_db, min_probability):
    """The rule a site hears a node by: ``(hears, min_margin_db, min_probability)``.

    With the links' ``probability_heard``: an allowed data rate closes and
    the probability reaches ``min_probability`` (default the network's
    ``settings.min_probability``, else the location percentage / 100); the
    margin rule only when ``min_margin_db`` is given.  Without it (an older
    report): the margin rule, ``min_margin_db`` defaulting to the fade margin.
    """
    from ...limits import check

    settings = network_report.get("settings") or {}
    if matrix.probability is None:
        margin = float(network_report.get("fade_margin_db", 0.0) if min_margin_db is None else min_margin_db)
        return hearing_matrix(matrix.margin_db, matrix.allowed, margin), margin, None
    if min_probability is None:
        min_probability = settings.get("min_probability")
    if min_probability is None:
        min_probability = float(settings.get("location_percent", 50.0)) / 100.0
    p_min = float(check("--min-probability", min_probability))
    with np.errstate(invalid="ignore"):
        hears = matrix.allowed & (matrix.probability >= p_min)
    if min_margin_db is not None:
        hears &= hearing_matrix(matrix.margin_db, matrix.allowed, min_margin_db)
    return hears, None if min_margin_db is None else float(min_margin_db), p_min


def need_text(min_margin_db, min_probability) -> str:
    """The hearing rule in words: "P(heard) >= 0.95", "7.0 dB" or both."""
    parts = [] if min_probability is None else [f"P(heard) >= {min_probability:.2f}"]
    if min_margin_db is not None:
        parts.append(f"{min_margin_db:.1f} dB")
    return " and ".join(parts)

# --------------------------------------------------------------------------- input checks
def _check_inputs(hears, cost, fixed, redundancy, max_gateways, margin_db, time_limit_s):
    """Validated arrays: hears (bool), cost (float, 0 on fixed), fixed mask, margins or None."""
    h = np.asarray(hears, dtype=bool)
    if h.ndim != 2:
        raise ProfilerError(f"siting: the hearing matrix must be 2-D (sites x nodes), not {h.ndim}-D")
    m, n = h.shape
    if m == 0:
        raise ProfilerError("siting needs gateway sites: add rows with role 'candidate' or 'gateway' to the sites file")
    if n == 0:
        raise ProfilerError("siting needs nodes to hear: add rows with role 'node' to the sites file")
    redundancy = _whole(redundancy, "--redundancy")
    if redundancy > m:
        raise ProfilerError(f"--redundancy {redundancy} needs at least {redundancy} gateway sites; "
                            f"there are {m}: lower --redundancy or add candidate sites")
    fixed_mask = np.zeros(m, dtype=bool)
    if fixed is not None:
        f = np.asarray(fixed)
        if f.dtype == bool:
            if f.shape != (m,):
                raise ProfilerError(f"siting: the fixed-site mask has shape {f.shape}, expected ({m},)")
            fixed_mask = f.copy()
        elif f.size:
            if not np.issubdtype(f.dtype, np.integer) or f.min() < 0 or f.max() >= m:
                raise ProfilerError(f"siting: fixed sites must be indices 0..{m - 1}")
            fixed_mask[f.astype(int)] = True
    c = np.ones(m) if cost is None else np.asarray(cost, dtype=float)
    if c.shape != (m,):
        raise ProfilerError(f"siting: {c.size} costs given for {m} gateway sites")
    if not np.all(np.isfinite(c[~fixed_mask]) & (c[~fixed_mask] > 0)):
        raise ProfilerError("every candidate site's cost must be a positive number "
                            "(use a small one for a nearly free site)")
    c = np.where(fixed_mask, 0.0, c)
    if max_gateways is not None:
        max_gateways = _whole(max_gateways, "--max-gateways")
        if fixed_mask.sum() > max_gateways:
            raise ProfilerError(f"--max-gateways {max_gateways} is below the {int(fixed_mask.sum())} existing "
                                "gateways, which are always kept: raise it or mark some as candidates")
    margin = None
    if margin_db is not None:
        margin = np.asarray(margin_db, dtype=float)
        if margin.shape != h.shape:
            raise ProfilerError(f"siting: margins {margin.shape} do not match the hearing matrix {h.shape}")
        if not np.all(np.isfinite(margin[h])):
            raise ProfilerError("siting: every hearing link needs a finite margin")
    if not (isinstance(time_limit_s, (int, float)) and math.isfinite(time_limit_s) and time_limit_s > 0):
        raise ProfilerError(f"--time-limit-s must be a positive number of seconds, not {time_limit_s}")
    return h, c, fixed_mask, redundancy, max_gateways, margin


def _whole(value, option: str) -> int:
    """A whole number >= 1, or a one-line error naming the option."""
    ok = isinstance(value, (int, float, np.integer, np.floating)) and not isinstance(value, bool)
    if not ok or not math.isfinite(value) or not float(value).is_integer() or value < 1:
        raise ProfilerError(f"{option} must be a whole number >= 1, not {value!r}")
    return int(value)


# --------------------------------------------------------------------------- greedy
def greedy_siting(hears, cost, fixed_mask, redundancy: int, max_gateways: int | None = None) -> np.ndarray:
    """The greedy choice: a boolean mask of open sites.

    Starting from the fixed sites, repeatedly open the site with the largest
    ratio of newly satisfied coverage units to cost (a unit is one of the
    ``redundancy`` hearings a reachable node still lacks; ties go to the
    lower index) until no unit is left or ``max_gateways`` sites are open.
    With ``max_gateways`` the costs are not used (every site counts 1).

    Parameters
    ----------
    hears : ndarray of bool, shape (n_sites, n_nodes)
    cost : ndarray, shape (n_sites,)
        Positive costs of the candidates (ignored with ``max_gateways``).
    fixed_mask : ndarray of bool, shape (n_sites,)
    redundancy : int
    max_gateways : int or None

    References
    ----------
    Johnson (1974), Chvatal (1979): the greedy set cover is within
    ``H(d) <= 1 + ln d`` of the optimum (from memory).
    """
    h = np.asarray(hears, dtype=bool)
    weight = np.ones(h.shape[0]) if max_gateways is not None else np.asarray(cost, dtype=float)
    is_open = np.asarray(fixed_mask, dtype=bool).copy()
    reachable = h.sum(axis=0) >= redundancy
    demand = np.where(reachable, np.maximum(redundancy - h[is_open].sum(axis=0), 0), 0)
    budget = math.inf if max_gateways is None else max_gateways - int(is_open.sum())
    while budget > 0 and demand.any():          # one iteration per site opened
        units = np.where(is_open, 0.0, h[:, demand > 0].sum(axis=1))
        if units.max() <= 0.0:
            break
        j = int(np.argmax(np.where(units > 0.0, units / np.where(is_open, 1.0, weight), -np.inf)))
        is_open[j] = True
        demand = demand - (h[j] & (demand > 0))
        budget -= 1
    return is_open


# --------------------------------------------------------------------------- MILP
def _run_milp(c, constraints, lb, ub, integrality, time_limit_s):
    """One HiGHS solve; returns the raw result and the seconds it took."""
    from scipy.optimize import Bounds, milp

    start = time.perf_counter()
    res = milp(c, integrality=integrality, bounds=Bounds(lb, ub), constraints=constraints,
               options={"time_limit": float(time_limit_s), "mip_rel_gap": 0.0, "disp": False})
    return res, time.perf_counter() - start


def _gap(res) -> float | None:
    gap = getattr(res, "mip_gap", None)
    return float(gap) if gap is not None and math.isfinite(gap) else None


def _cover_matrix(h, reachable):
    """Sparse (reachable nodes x sites) incidence matrix of the hearing relation."""
    from scipy import sparse

    return sparse.csr_matrix(h[:, reachable].T.astype(float))


def _solve_min_cost(h, c, fixed_mask, redundancy, reachable, time_limit_s):
    from scipy.optimize import LinearConstraint

    m = h.shape[0]
    cons = [LinearConstraint(_cover_matrix(h, reachable), lb=redundancy, ub=np.inf)]
    res, _ = _run_milp(c, cons, fixed_mask.astype(float), np.ones(m), np.ones(m), time_limit_s)
    x = None if res.x is None else res.x[:m] > 0.5
    return x, res


def _solve_max_coverage(h, fixed_mask, redundancy, max_gateways, reachable, time_limit_s):
    """Primary solve: most nodes heard ``redundancy`` times with at most K sites."""
    from scipy import sparse
    from scipy.optimize import LinearConstraint

    m, r = h.shape[0], int(reachable.sum())
    a = sparse.hstack([_cover_matrix(h, reachable), -redundancy * sparse.identity(r)], format="csr")
    count = np.concatenate([np.ones(m), np.zeros(r)])[np.newaxis]
    cons = [LinearConstraint(a, lb=0.0, ub=np.inf), LinearConstraint(count, lb=0.0, ub=max_gateways)]
    cobj = np.concatenate([np.zeros(m), -np.ones(r)])
    lb = np.concatenate([fixed_mask.astype(float), np.zeros(r)])
    res, spent = _run_milp(cobj, cons, lb, np.ones(m + r), np.ones(m + r), time_limit_s)
    x = None if res.x is None else res.x[:m] > 0.5
    return x, res, spent


def _solve_margin_tiebreak(h, margin, fixed_mask, redundancy, max_gateways, reachable, covered_min, time_limit_s):
    """Second, lexicographic solve: among choices hearing >= ``covered_min`` nodes, the largest total margin.

    Variables ``x`` (sites, binary), ``y`` (reachable nodes, binary) and
    ``z_p`` for each hearing pair ``p = (j, i)`` (continuous in [0, 1]):
    ``sum_p(i) z_p = y_i`` and ``z_p <= x_j`` assign each covered node to
    one open site that hears it, and the objective ``sum_p margin_p z_p``
    is maximised by assigning it to its best one.
    """
    from scipy import sparse
    from scipy.optimize import LinearConstraint

    m, r = h.shape[0], int(reachable.sum())
    hr = h[:, reachable]
    site_of, node_of = np.nonzero(hr)                       # hearing pairs
    p = site_of.size
    cover = sparse.hstack([_cover_matrix(h, reachable), -redundancy * sparse.identity(r),
                           sparse.csr_matrix((r, p))], format="csr")
    count = np.concatenate([np.ones(m), np.zeros(r + p)])[np.newaxis]
    heard = np.concatenate([np.zeros(m), np.ones(r), np.zeros(p)])[np.newaxis]
    rows = np.arange(p)
    assign = sparse.hstack([sparse.csr_matrix((r, m)), -sparse.identity(r),
                            sparse.csr_matrix((np.ones(p), (node_of, rows)), shape=(r, p))], format="csr")
    link = sparse.hstack([sparse.csr_matrix((-np.ones(p), (rows, site_of)), shape=(p, m)),
                          sparse.csr_matrix((p, r)), sparse.identity(p)], format="csr")
    cons = [LinearConstraint(cover, lb=0.0, ub=np.inf), LinearConstraint(count, lb=0.0, ub=max_gateways),
            LinearConstraint(heard, lb=covered_min, ub=np.inf), LinearConstraint(assign, lb=0.0, ub=0.0),
            LinearConstraint(link, lb=-np.inf, ub=0.0)]
    cobj = np.concatenate([np.zeros(m + r), -margin[:, reachable][site_of, node_of]])
    lb = np.concatenate([fixed_mask.astype(float), np.zeros(r + p)])
    integrality = np.concatenate([np.ones(m + r), np.zeros(p)])
    res, _ = _run_milp(cobj, cons, lb, np.ones(m + r + p), integrality, time_limit_s)
    x = None if res.x is None else res.x[:m] > 0.5
    return x, res


# --------------------------------------------------------------------------- results
def _order_by_hearing(h, is_open) -> np.ndarray:
    """Open site indices, most nodes heard first (ties: lower index first)."""
    idx = np.flatnonzero(is_open)
    return idx[np.lexsort((idx, -h[idx].sum(axis=1)))]


def _heard_by(h, margin, chosen) -> tuple:
    """Per node, the chosen sites that hear it, best margin first (or by index)."""
    sub = h[chosen]                                            # (k, n)
    if margin is None:
        key = np.broadcast_to(chosen[:, np.newaxis].astype(float), sub.shape)
    else:
        key = np.where(sub, -margin[chosen], np.inf)
    order = np.argsort(key, axis=0, kind="stable")
    mask = np.take_along_axis(sub, order, axis=0).T           # (n, k), node-major
    sites = chosen[order].T
    return tuple(np.split(sites[mask], np.cumsum(mask.sum(axis=1))[:-1]))


def _margin_total(h, margin, is_open, covered) -> float | None:
    """Sum over covered nodes of their best margin from an open site that hears them [dB]."""
    if margin is None:
        return None
    best = np.where(h & is_open[:, np.newaxis], margin, -np.inf).max(axis=0, initial=-np.inf)
    return float(best[covered].sum())


def _objective(h, c, is_open, redundancy, mode) -> float:
    if mode == "min_cost":
        return float(c[is_open].sum())
    return float((h[is_open].sum(axis=0) >= redundancy).sum())


def _relative_gap(objective_min: float, bound) -> float | None:
    """``|primal - dual| / |primal|`` in the minimisation sense the solver uses (HiGHS convention)."""
    if bound is None or not math.isfinite(bound):
        return None
    diff = abs(objective_min - float(bound))
    if objective_min == 0.0:
        return 0.0 if diff == 0.0 else None
    return diff / abs(objective_min)


def _settle(x, res, greedy_open, score, time_limit_s):
    """Choose between the solver's answer and the greedy one; say what happened.

    ``score(mask)`` is larger-is-better, so ``-score(mask)[0]`` is the
    objective in the solver's minimisation sense (for the gap).  Returns
    (mask, proven, gap, status).
    """
    word = _MILP_STATUS.get(int(res.status), "solver stopped")
    proven = bool(res.status == 0 and res.success and x is not None)
    if proven:
        return x, True, _gap(res), "optimal (proven by HiGHS)"
    limit = f"{word} ({time_limit_s:g} s)" if res.status == 1 else f"{word}: {res.message}"
    bound = getattr(res, "mip_dual_bound", None)
    if x is None or score(greedy_open) > score(x):
        why = "no solution found" if x is None else "the greedy choice beats the best solution found"
        gap = _relative_gap(-score(greedy_open)[0], bound)
        return greedy_open, False, gap, (f"{limit}; {why}, the greedy choice (less any site that adds nothing) "
                                         "is returned, not proven optimal")
    return x, False, _gap(res), f"{limit}; best solution found is returned, not proven optimal"


def solve_siting(hears, *, cost=None, fixed=None, redundancy: int = 1, max_gateways: int | None = None,
                 margin_db=None, time_limit_s: float = 60.0) -> SitingSolution:
    """The gateway sites to open: exact by MILP (HiGHS), with the greedy choice for comparison.

    Parameters
    ----------
    hears : array_like of bool, shape (n_sites, n_nodes)
        Gateway site ``j`` hears node ``i`` (see :func:`hearing_matrix`).
    cost : array_like, shape (n_sites,), optional
        Positive cost of each candidate (default 1: the count is
        minimised); ignored for fixed sites (cost 0) and with ``max_gateways``.
    fixed : array_like of int or bool mask, optional
        Existing gateways: always open.
    redundancy : int
        ``R``: how many sites must hear a node (default 1).
    max_gateways : int, optional
        ``K``: at most ``K`` open sites in total, fixed ones included; then
        the number of nodes heard ``R`` times is maximised.
    margin_db : array_like, shape (n_sites, n_nodes), optional
        Margins [dB], finite where ``hears``: the tie-break of the
        ``max_gateways`` problem and the order of ``heard_by``.
    time_limit_s : float
        Wall-clock limit of the solver [s] (shared by the two solves of the
        ``max_gateways`` problem).

    Returns
    -------
    SitingSolution

    Notes
    -----
    Without ``max_gateways`` the minimum-cost multicover is solved over the
    reachable nodes (heard by at least ``R`` sites when all are open);
    that problem is always feasible (open everything).

    With ``max_gateways`` the tie-break by total margin is
    **lexicographic**: solve 1 maximises the number ``N`` of nodes heard
    ``R`` times and yields ``N*``; solve 2 adds ``sum_i y_i >= N*`` and
    maximises ``M = sum_(j,i) margin[j, i] z_ji`` with ``sum_j z_ji = y_i``
    and ``z_ji <= x_j`` over hearing pairs.  *Correctness:* every feasible
    point of solve 2 is feasible for solve 1 with ``N >= N*``, so ``N = N*``
    (``N*`` is the maximum): solve 2 never gives up coverage.  For fixed
    ``x, y`` the ``z`` problem splits by node into ``max sum_j m_ji z_ji``
    over ``{z >= 0, sum_j z_ji = y_i, z_ji <= x_j}``, whose optimum puts the
    whole weight on the best open site that hears ``i`` (an LP over a
    simplex face attains its optimum at a vertex), so ``M`` is exactly the
    sum over covered nodes of their best margin; maximising over ``x, y``
    gives the best total margin among all choices hearing ``N*`` nodes.
    A weighted single objective would need a weight small enough to never
    trade a node for margin, which mixes scales the solver's tolerances
    can blur; two solves avoid that.  ``proven_optimal`` requires both
    solves proven; if the first one used up the time, the tie-break is
    skipped and the status says so.

    After a time limit the best solution found is returned, or the greedy
    choice when the solver found none or a worse one; the gap is then
    computed from HiGHS's dual bound when one is known.

    References
    ----------
    scipy.optimize.milp (HiGHS); Church & ReVelle (1974) maximal covering;
    Johnson (1974) and Chvatal (1979) for the greedy bound (from memory).
    """
    h, c, fixed_mask, redundancy, max_gateways, margin = _check_inputs(
        hears, cost, fixed, redundancy, max_gateways, margin_db, time_limit_s)
    mode = "min_cost" if max_gateways is None else "max_coverage"
    reachable = h.sum(axis=0) >= redundancy
    greedy_open = greedy_siting(h, c, fixed_mask, redundancy, max_gateways)

    def score(mask):
        """Larger is better: (objective with the right sign, total margin)."""
        obj = _objective(h, c, mask, redundancy, mode)
        covered = h[mask].sum(axis=0) >= redundancy
        total = _margin_total(h, margin, mask, covered) if mode == "max_coverage" else None
        return (-obj if mode == "min_cost" else obj, total or 0.0)

    def pruned(mask):
        """``mask`` with the candidates closed that keep it feasible and score no less."""
        reference = score(mask)

        def no_worse(trial):
            feasible = mode == "max_coverage" or bool(np.all((h[trial].sum(axis=0) >= redundancy)[reachable]))
            return feasible and score(trial) >= reference

        return _prune(h, mask, fixed_mask, no_worse)

    is_open, proven, gap, status = _solve_exact(h, c, fixed_mask, redundancy, max_gateways, margin, reachable,
                                                pruned(greedy_open), score, time_limit_s)
    is_open = pruned(is_open)
    chosen = _order_by_hearing(h, is_open)
    covered = h[is_open].sum(axis=0) >= redundancy
    return SitingSolution(
        chosen=chosen, objective=_objective(h, c, is_open, redundancy, mode), proven_optimal=proven,
        gap=gap, status=status, mode=mode, covered=covered, heard_by=_heard_by(h, margin, chosen),
        unreachable=np.flatnonzero(~reachable), margin_total_db=_margin_total(h, margin, is_open, covered),
        greedy_chosen=_order_by_hearing(h, greedy_open),
        greedy_objective=_objective(h, c, greedy_open, redundancy, mode))


def _solve_exact(h, c, fixed_mask, redundancy, max_gateways, margin, reachable, greedy_open, score, time_limit_s):
    """Dispatch to the MILP of the mode; returns (open mask, proven, gap, status)."""
    if not reachable.any():
        status = f"nothing to solve: no node can be heard {redundancy} time(s) even with every site open"
        return fixed_mask, True, 0.0, status
    if max_gateways is None:
        x, res = _solve_min_cost(h, c, fixed_mask, redundancy, reachable, time_limit_s)
        return _settle(x, res, greedy_open, score, time_limit_s)
    x, res, spent = _solve_max_coverage(h, fixed_mask, redundancy, max_gateways, reachable, time_limit_s)
    is_open, proven, gap, status = _settle(x, res, greedy_open, score, time_limit_s)
    is_open, proven, status = _tiebreak(h, margin, fixed_mask, redundancy, max_gateways, reachable,
                                        is_open, proven, status, score, time_limit_s - spent)
    return is_open, proven, gap, status


def _prune(h, is_open, fixed_mask, acceptable):
    """Close open candidates that add nothing, fewest nodes heard first.

    A site is closed when ``acceptable(mask without it)``: the choice stays
    feasible and its score (cost, or coverage and total margin) is no
    worse, so an optimum stays optimal; in the maximum-coverage mode this
    drops sites the solver had no reason to leave closed.
    """
    mask = is_open.copy()
    for j in _order_by_hearing(h, mask & ~fixed_mask)[::-1]:    # one trial per open site
        trial = mask.copy()
        trial[j] = False
        if acceptable(trial):
            mask = trial
    return mask


def _tiebreak(h, margin, fixed_mask, redundancy, max_gateways, reachable, is_open, proven, status, score,
              remaining_s):
    """Run the lexicographic margin solve when margins are given and time is left."""
    if margin is None:
        return is_open, proven, status
    if remaining_s < 0.01:
        return is_open, False, status + "; no time left for the margin tie-break"
    covered_min = score(is_open)[0]
    x, res = _solve_margin_tiebreak(h, margin, fixed_mask, redundancy, max_gateways, reachable,
                                    covered_min, remaining_s)
    if x is not None and score(x) >= score(is_open):
        is_open = x
    if res.status == 0 and res.success:
        return is_open, proven, status + "; ties broken by total margin (optimal)"
    word = _MILP_STATUS.get(int(res.status), "solver stopped")
    return is_open, False, status + f"; margin tie-break: {word}, best found kept"
