"""Residual statistics, location cells, and the calibration fit of ``profiler survey``.

Pure numpy functions over arrays of one element per measurement or per
location cell.  The correction fitted is
``c(d) = offset + slope * log10(d / 1 km)`` [dB], added to the predicted
loss (residual = measured - predicted; a positive offset means the model was
optimistic).  It is fitted by ordinary least squares with the textbook
standard errors, overall and per clutter class, and cross-validated k-fold
by location cell.

References
----------
.. [1] N. R. Draper and H. Smith, "Applied Regression Analysis", 3rd ed.,
   Wiley, 1998, ch. 1-5: least squares, ``s^2 = RSS / (n - p)``,
   ``Var(b) = s^2 (X^T X)^-1``.
.. [2] T. Hastie, R. Tibshirani and J. Friedman, "The Elements of
   Statistical Learning", 2nd ed., Springer, 2009, section 7.10: K-fold
   cross-validation.
"""

from __future__ import annotations

import math

import numpy as np

from ...engine.calibration import calibration_correction_db
from ...errors import ProfilerError

FITS = ("offset", "slope")
DISTANCE_BANDS_KM = (0.0, 1.0, 2.0, 5.0, 10.0, 20.0, math.inf)
"""Edges of the distance bands of ``statistics.by_distance`` [km]."""
EARTH_RADIUS_M = 6_371_008.8
"""Mean Earth radius (IUGG) [m], for the local cell grid only."""


def _num(x):
    x = float(x)
    return round(x, 6) if math.isfinite(x) else None


def residual_stats(residual_db) -> dict:
    """Mean, median, standard deviation, RMSE and the shares within 6 and 10 dB of residuals.

    Parameters
    ----------
    residual_db : array_like
        Residuals (measured - predicted) [dB]; NaN ignored.

    Returns
    -------
    dict
        ``n``, ``mean_db``, ``median_db``, ``std_db`` (sample, n - 1;
        None below 2), ``rmse_db``, ``within_6db_share``,
        ``within_10db_share`` (None when n is 0).
    """
    r = np.asarray(residual_db, float)
    r = r[np.isfinite(r)]
    if r.size == 0:
        return {"n": 0, "mean_db": None, "median_db": None, "std_db": None, "rmse_db": None,
                "within_6db_share": None, "within_10db_share": None}
    return {"n": int(r.size), "mean_db": _num(r.mean()), "median_db": _num(np.median(r)),
            "std_db": _num(r.std(ddof=1)) if r.size > 1 else None, "rmse_db": _num(np.sqrt(np.mean(r * r))),
            "within_6db_share": _num(np.mean(np.abs(r) <= 6.0)),
            "within_10db_share": _num(np.mean(np.abs(r) <= 10.0))}


def grouped_stats(residual_db, keys, key_name: str) -> list:
    """:func:`residual_stats` per distinct key (in sorted order, None last), ``{key_name: key, ...}``."""
    r = np.asarray(residual_db, float)
    keys = list(keys)
    distinct = sorted({k for k in keys if k is not None}) + ([None] if None in keys else [])
    return [{key_name: k, **residual_stats(r[np.array([x == k for x in keys], bool)])} for k in distinct]


def distance_band_stats(residual_db, distance_m) -> list:
    """:func:`residual_stats` per band of :data:`DISTANCE_BANDS_KM` holding data (``from_km``, ``to_km``)."""
    d_km = np.asarray(distance_m, float) / 1000.0
    r = np.asarray(residual_db, float)
    out = []
    for lo, hi in zip(DISTANCE_BANDS_KM[:-1], DISTANCE_BANDS_KM[1:]):
        sel = (d_km >= lo) & (d_km < hi) & np.isfinite(r)
        if sel.any():
            out.append({"from_km": lo, "to_km": None if math.isinf(hi) else hi, **residual_stats(r[sel])})
    return out


def location_cells(gateway, lat_deg, lon_deg, cell_m: float) -> np.ndarray:
    """Index of the location cell of each measurement (cells of one gateway; squares of ``cell_m``).

    Parameters
    ----------
    gateway : sequence of str
        Gateway of each measurement (a place seen from two gateways is two cells).
    lat_deg, lon_deg : ndarray
        Node positions [deg].
    cell_m : float
        Side of a cell [m], on a local equirectangular grid about the mean
        latitude (adequate over a survey area of tens of km).

    Returns
    -------
    ndarray of int
        Cell index per measurement, 0..C-1, numbered in sorted key order
        (gateway, north-south, east-west): deterministic.
    """
    lat = np.asarray(lat_deg, float)
    lon = np.asarray(lon_deg, float)
    lat0 = math.radians(float(np.mean(lat))) if lat.size else 0.0
    x = np.floor(np.radians(lon) * EARTH_RADIUS_M * math.cos(lat0) / cell_m).astype(np.int64)
    y = np.floor(np.radians(lat) * EARTH_RADIUS_M / cell_m).astype(np.int64)
    _, gw_index = np.unique(np.asarray(gateway, dtype=str), return_inverse=True)
    keys = np.stack([gw_index.ravel(), y, x], axis=1)
    _, cell = np.unique(keys, axis=0, return_inverse=True)
    return cell.ravel()


def cell_medians(cell, values) -> np.ndarray:
    """Median of ``values`` per cell index (NaN ignored; NaN for a cell without a value)."""
    cell = np.asarray(cell)
    v = np.asarray(values, float)
    n = int(cell.max()) + 1 if cell.size else 0
    order = np.lexsort((v, cell))        # NaN sorts last within its cell
    c, vs = cell[order], v[order]
    counts = np.bincount(c[np.isfinite(vs)], minlength=n)
    start = np.searchsorted(c, np.arange(n))
    lo = start + np.maximum(counts - 1, 0) // 2
    hi = start + counts // 2
    med = 0.5 * (vs[np.minimum(lo, v.size - 1)] + vs[np.minimum(hi, v.size - 1)]) if v.size else np.zeros(0)
    return np.where(counts > 0, med, np.nan)


def cell_summary(gateway, lat_deg, lon_deg, residual_db, distance_m, line_of_sight, clutter, cell_m: float) -> dict:
    """One value per location cell of compared measurements (all arrays of one element per measurement).

    Returns
    -------
    dict
        ``cell`` (index per measurement), and per cell: ``residual_db``,
        ``distance_m`` (medians), ``line_of_sight`` (the majority),
        ``clutter`` and ``gateway`` (of the cell's first measurement).
    """
    gateway = list(gateway)
    cell = location_cells(gateway, lat_deg, lon_deg, cell_m)
    first = np.unique(cell, return_index=True)[1]
    return {"cell": cell, "residual_db": cell_medians(cell, residual_db), "distance_m": cell_medians(cell, distance_m),
            "line_of_sight": cell_medians(cell, np.asarray(line_of_sight, float)) > 0.5,
            "clutter": [clutter[j] or None for j in first], "gateway": [gateway[j] for j in first]}


def within_cell_sigma_db(cell, residual_db):
    """Location variability seen: the pooled standard deviation of residuals about their cell mean [dB].

    ``sqrt(sum((r - mean_cell)^2) / (N - C))`` over the C cells holding at
    least one residual (N residuals); None when no cell has two.
    """
    r = np.asarray(residual_db, float)
    ok = np.isfinite(r)
    cell, r = np.asarray(cell)[ok], r[ok]
    if r.size == 0:
        return None
    counts = np.bincount(cell)
    mean = np.bincount(cell, weights=r) / np.maximum(counts, 1)
    dof = r.size - int(np.sum(counts > 0))
    if dof < 1:
        return None
    return _num(np.sqrt(np.sum((r - mean[cell]) ** 2) / dof))


def design_matrix(distance_m, fit: str) -> np.ndarray:
    """Columns ``1`` and, with ``fit="slope"``, ``log10(d / 1 km)``: shape (n, 1) or (n, 2)."""
    d = np.asarray(distance_m, float)
    cols = [np.ones_like(d)] if fit == "offset" else [np.ones_like(d), np.log10(d / 1000.0)]
    return np.stack(cols, axis=1)


def fit_correction(distance_m, residual_db, fit: str = "offset") -> dict:
    """Least-squares fit of ``offset + slope * log10(d / 1 km)`` to residuals, with standard errors.

    Parameters
    ----------
    distance_m : array_like
        Distance of each point [m], > 0.
    residual_db : array_like
        Residual of each point (measured - predicted) [dB].
    fit : {"offset", "slope"}
        Fit the offset only (slope 0) or offset and slope.

    Returns
    -------
    dict
        ``offset_db``, ``offset_se_db``, ``slope_db_per_decade`` (0 with
        ``fit="offset"``), ``slope_se_db_per_decade`` (None then), ``n``;
        the standard errors are None when n <= number of parameters.

    References
    ----------
    .. [1] Draper and Smith (1998): ``b = (X^T X)^-1 X^T y``,
       ``s^2 = RSS / (n - p)``, ``SE(b_j) = sqrt(s^2 [(X^T X)^-1]_jj)``.
    """
    if fit not in FITS:
        raise ProfilerError(f"--fit {fit!r} is not known; use offset or slope")
    x = design_matrix(distance_m, fit)
    y = np.asarray(residual_db, float)
    n, p = x.shape
    if n < p:
        raise ProfilerError(f"too few location cells to fit {'an offset and a slope' if p == 2 else 'an offset'}: "
                            f"{n}; measure at more places (or use --fit offset)")
    coef, *_ = np.linalg.lstsq(x, y, rcond=None)
    se = [None] * p
    if n > p:
        rss = float(np.sum((y - x @ coef) ** 2))
        cov = rss / (n - p) * np.linalg.pinv(x.T @ x)
        se = [_num(math.sqrt(max(cov[j, j], 0.0))) for j in range(p)]
    return {"n": int(n), "offset_db": _num(coef[0]), "offset_se_db": se[0],
            "slope_db_per_decade": _num(coef[1]) if p == 2 else 0.0,
            "slope_se_db_per_decade": se[1] if p == 2 else None}


def fit_calibration(distance_m, residual_db, clutter, fit: str, min_points: int = 3) -> dict:
    """The overall fit and one per clutter class with at least ``min_points`` points.

    Returns
    -------
    dict
        ``{"offset_db", "slope_db_per_decade", "clutter": {name: terms}}``
        (the form :func:`calibration_correction_db` takes) and ``overall``
        and ``per_class`` with the full :func:`fit_correction` results.
    """
    d = np.asarray(distance_m, float)
    r = np.asarray(residual_db, float)
    overall = fit_correction(d, r, fit)
    names = np.asarray(["" if c is None else str(c) for c in clutter], dtype=object)
    per_class = {}
    need = max(min_points, 2 if fit == "offset" else 3)
    for name in sorted({n for n in names if n}):
        sel = names == name
        if int(sel.sum()) >= need:
            per_class[name] = fit_correction(d[sel], r[sel], fit)
    return {"offset_db": overall["offset_db"], "slope_db_per_decade": overall["slope_db_per_decade"],
            "clutter": {k: {"offset_db": v["offset_db"], "slope_db_per_decade": v["slope_db_per_decade"]}
                        for k, v in per_class.items()},
            "overall": overall, "per_class": per_class}


def fold_of_cells(n_cells: int, folds: int) -> np.ndarray:
    """Fold of each cell, ``cell index mod folds`` (deterministic; a cell lies in exactly one fold)."""
    return np.arange(int(n_cells)) % int(folds)


def cross_validate(distance_m, residual_db, clutter, cell, fit: str, folds: int):
    """K-fold cross-validated RMSE of the calibration, folds by location cell [dB].

    Every point of a cell is held out together; each fold is predicted by
    the calibration fitted on the other folds (:func:`fit_calibration`).

    Returns
    -------
    float or None
        RMSE of the held-out residuals after correction; None with fewer
        than two folds or when a training set is too small to fit.
    """
    cell = np.asarray(cell)
    n_cells = int(cell.max()) + 1 if cell.size else 0
    k = min(int(folds), n_cells)
    if k < 2:
        return None
    fold = fold_of_cells(n_cells, k)[cell]
    d, r = np.asarray(distance_m, float), np.asarray(residual_db, float)
    names = list(clutter)
    after = np.full(r.shape, np.nan)
    p = 1 if fit == "offset" else 2
    for j in range(k):      # k fits, each vectorized
        train, test = fold != j, fold == j
        if int(train.sum()) <= p:
            return None
        cal = fit_calibration(d[train], r[train], [names[i] for i in np.flatnonzero(train)], fit)
        after[test] = r[test] - calibration_correction_db(cal, d[test], [names[i] for i in np.flatnonzero(test)])
    return _num(np.sqrt(np.mean(after ** 2)))
