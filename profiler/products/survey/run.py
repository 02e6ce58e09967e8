"""``profiler survey``: predicted against measured, with the same engine as ``profiler network``.

:func:`survey` reads the sites and the measurements, predicts every
gateway -> node path with :func:`profiler.products.network.compute_links`
(the engine of ``profiler network``, gateway end A, node end B at the
measured position and ``node_mast_m``), computes the measured path loss
(:mod:`.measurements`), the residual statistics and the calibration fit
(:mod:`.calibration`).  :meth:`SurveyResult.to_dict` is the JSON contract
``profiler.survey/1``.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field, replace

import numpy as np

from ...about import CAUTION, __version__
from ...engine.cluster import CHUNK_LINKS
from ...engine.links import NetworkSettings
from ...engine.radio import RadioSettings, resolve_ends
from ...errors import ProfilerError
from ...limits import check_values
from ...lora.bands import resolve_frequency_mhz
from ...lora.regional import plan as regional_plan
from ...propagation import geometry
from . import calibration as cal
from .measurements import Measurements, measured_loss_db, read_measurements_csv, received_power_dbm

SCHEMA = "profiler.survey/1"
MEASUREMENT_KEYS = ("gateway", "lat_deg", "lon_deg", "distance_m", "measured_loss_db", "predicted_loss_db",
                    "residual_db", "line_of_sight", "clutter", "error")


@dataclass(frozen=True)
class SurveyResult:
    """The survey report; :meth:`to_dict` is the JSON contract ``profiler.survey/1``."""

    measurements: list
    statistics: dict
    location_sigma_db: float | None
    calibration: dict
    calibration_by_clutter: dict
    heard: dict
    sites: list
    settings: dict
    dem: dict
    warnings: list = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"schema": SCHEMA, "tool_version": __version__, "measurements": self.measurements,
                "statistics": self.statistics, "location_sigma_db": self.location_sigma_db,
                "calibration": self.calibration, "calibration_by_clutter": self.calibration_by_clutter,
                "heard": self.heard, "sites": self.sites, "settings": self.settings, "dem": self.dem,
                "warnings": list(self.warnings), "caution": CAUTION}


def _chunk_job(rows, *, settings, arrays, model=None, land_cover_paths=(), mapping=None, land_cover=None):
    """Predict one chunk of measurements; opens the elevation (and land-cover) files by path on a worker."""
    from ..network import compute_links

    a = arrays
    over = {role: {k: v[rows] for k, v in a["overrides"][role].items()} for role in ("gateway", "node")}
    args = (replace(settings, frequency_mhz=float(a["frequency_mhz"][rows[0]])), a["lat_gw"][rows],
            a["lon_gw"][rows], a["mast_gw"][rows], a["lat"][rows], a["lon"][rows], a["mast"][rows], over,
            [a["names_gw"][i] for i in rows], [f"measurement on line {a['line'][i]}" for i in rows])
    if model is not None:
        return compute_links(model, *args, land_cover=land_cover, mapping=mapping)
    from ...terrain.elevation import ElevationModel

    with ElevationModel.open(list(settings.dem_paths)) as opened, _open_cover(land_cover_paths, mapping) as cover:
        return compute_links(opened, *args, land_cover=cover, mapping=mapping)


def _open_cover(paths, mapping):
    """The land cover opened (a context manager), or a null context without one."""
    from contextlib import nullcontext

    from ...terrain.landcover import LandCover

    return nullcontext() if mapping is None else LandCover.open(list(paths))


def _clutter_names(meas, cover, mapping, model):
    """Each row's clutter class: its ``clutter`` cell, else the land cover's class at the node ("" none)."""
    from ...terrain.landcover import CLUTTER_CLASSES

    names = list(meas.clutter)
    if cover is None:
        return names
    index = mapping.clutter(cover.codes(meas.lon_deg, meas.lat_deg), model).class_index
    return [c or (CLUTTER_CLASSES[i] if i >= 0 else "") for c, i in zip(names, index.tolist())]


def _chunks(freq, chunk_links):
    """Row index chunks, one frequency per chunk."""
    out = []
    for f in np.unique(freq):
        rows = np.flatnonzero(freq == f)
        out += [rows[i:i + chunk_links] for i in range(0, rows.size, chunk_links)]
    return out


def _gateway_rows(table, meas):
    from ..sites import GATEWAY_ROLES

    lookup = {name: i for i, name in enumerate(table.names) if table.role[i] in GATEWAY_ROLES}
    return np.array([lookup[g] for g in meas.gateway], dtype=np.int64)


def _row_modulation(meas, plan):
    """SF and bandwidth of each row from ``sf``/``bw_khz`` or ``dr`` (the plan's uplink table); NaN: the run's."""
    sf, bw = meas.sf.copy(), meas.bw_khz.copy()
    has_dr = np.isfinite(meas.dr)
    if has_dr.any() and plan is None:
        raise ProfilerError(f"{meas.source}: the dr column needs a regional plan; give --band (or use sf and "
                            "bw_khz)")
    for i in np.flatnonzero(has_dr):     # per-row table look-up, parsing only
        dr = int(meas.dr[i])
        if dr not in plan.uplink_drs or dr not in plan.data_rates:
            raise ProfilerError(f"{meas.source} line {meas.line[i]}: dr {dr} is not an uplink data rate of "
                                f"{plan.name}; check the band")
        sf[i], bw[i] = plan.data_rates[dr]
    return sf, bw


def _predicted_margin_db(sf, bw, radio, nf_gw, engine_margin, predicted_rx):
    """Predicted uplink margin of each row at its own SF and bandwidth, else the engine's (the run's budget)."""
    from ...lora.modem import lora_sensitivity_batch_dbm

    own = np.isfinite(sf)
    margin = np.array(engine_margin, float)
    if own.any():
        sens = (np.full(own.sum(), float(radio.sensitivity_dbm)) if radio.sensitivity_dbm is not None
                else lora_sensitivity_batch_dbm(sf[own].astype(int), bw[own], nf_gw[own]))
        margin[own] = predicted_rx[own] - sens
    return margin


def _records(meas, res, measured, predicted, residual):
    out = []
    dist = res["distance_m"]
    for i in range(len(meas)):   # output records, one per measurement
        err = res["error"][i]
        out.append({"gateway": meas.gateway[i], "lat_deg": float(meas.lat_deg[i]), "lon_deg": float(meas.lon_deg[i]),
                    "distance_m": None if err else cal._num(dist[i]),
                    "measured_loss_db": cal._num(measured[i]),
                    "predicted_loss_db": None if err else cal._num(predicted[i]),
                    "residual_db": None if err else cal._num(residual[i]),
                    "line_of_sight": None if err else bool(res["line_of_sight"][i]),
                    "clutter": res["clutter"][i] or None, "error": err})
    return out


def _statistics(meas, res, residual, cell_m, fit, folds):
    """Cells, statistics, location sigma and the calibration of the compared rows."""
    rows = np.flatnonzero(np.isfinite(residual))
    cells = cal.cell_summary([meas.gateway[i] for i in rows], meas.lat_deg[rows], meas.lon_deg[rows],
                             residual[rows], res["distance_m"][rows], res["line_of_sight"][rows],
                             [res["clutter"][i] for i in rows], cell_m)
    cell, r_cell, d_cell = cells["cell"], cells["residual_db"], cells["distance_m"]
    los_cell, clutter, gw_cell = cells["line_of_sight"], cells["clutter"], cells["gateway"]
    stats = {**cal.residual_stats(r_cell), "by_distance": cal.distance_band_stats(r_cell, d_cell),
             "by_line_of_sight": cal.grouped_stats(r_cell, [bool(x) for x in los_cell], "line_of_sight"),
             "by_clutter": cal.grouped_stats(r_cell, clutter, "clutter"),
             "by_gateway": cal.grouped_stats(r_cell, gw_cell, "gateway")}
    sigma = cal.within_cell_sigma_db(cell, residual[rows])
    fitted = cal.fit_calibration(d_cell, r_cell, clutter, fit)
    after = r_cell - cal.calibration_correction_db(fitted, d_cell, clutter)
    cv = cal.cross_validate(d_cell, r_cell, clutter, np.arange(r_cell.size), fit, folds)
    o = fitted["overall"]
    calibration = {"fit": fit, "offset_db": o["offset_db"], "offset_se_db": o["offset_se_db"],
                   "slope_db_per_decade": o["slope_db_per_decade"],
                   "slope_se_db_per_decade": o["slope_se_db_per_decade"], "cross_validated_rmse_db": cv,
                   "rmse_before_db": cal.residual_stats(r_cell)["rmse_db"],
                   "rmse_after_db": cal.residual_stats(after)["rmse_db"]}
    names = np.array([res["clutter"][i] for i in rows], dtype=object)
    by_clutter = {name: {**terms, "n_cells": int(sum(c == name for c in clutter)),
                         "location_sigma_db": cal.within_cell_sigma_db(cell[names == name],
                                                                       residual[rows][names == name])}
                  for name, terms in fitted["per_class"].items()}
    return stats, sigma, calibration, by_clutter, int(r_cell.size)


def _predict(settings, arrays, table, meas, cover_paths, mapping, run):
    """The engine's results per measurement (file order, with each row's clutter class), the sites' ground
    heights and the DEM provenance; ``run`` holds ``chunk_links``, ``workers``, ``scheduler``, ``progress``."""
    from ...engine.cluster import run_chunks
    from ...terrain.elevation import ElevationModel

    chunks = _chunks(arrays["frequency_mhz"], run["chunk_links"])
    with ElevationModel.open(list(settings.dem_paths)) as model, _open_cover(cover_paths, mapping) as cover:
        model.start_digests(meas.lon_deg, meas.lat_deg)
        local = run["workers"] is None and run["scheduler"] is None
        job = functools.partial(_chunk_job, settings=settings, arrays=arrays, model=model if local else None,
                                land_cover_paths=cover_paths, mapping=mapping, land_cover=cover if local else None)
        parts = run_chunks(job, chunks, workers=run["workers"], scheduler=run["scheduler"], progress=run["progress"],
                           weights=[c.size for c in chunks])
        ground = model.sample(table.lon_deg, table.lat_deg)
        sources = model.provenance(model.sources_used(meas.lon_deg, meas.lat_deg))
        clutter = _clutter_names(meas, cover, mapping, settings.radio.propagation.model)
    order = np.concatenate(chunks)
    n = len(meas)
    res = {key: np.empty(n, dtype=parts[0][key].dtype) for key in parts[0] if key != "error"}
    for key in res:
        res[key][order] = np.concatenate([p[key] for p in parts])
    errors = [None] * n
    for i, e in zip(order.tolist(), [e for p in parts for e in p["error"]]):
        errors[i] = e
    res["error"] = errors
    res["clutter"] = clutter
    return res, ground, sources


def _clutter_warnings(meas, res, mapping, failed) -> list:
    """As ``profiler network`` says it: samples without a land-cover class, or no land cover for low nodes."""
    from ..link import LOW_NODE_M

    if mapping is not None:
        gaps = int(np.count_nonzero(np.asarray(res["samples_without_class"])[~failed]))
        return [f"{gaps} of {len(meas)} paths have profile samples without a land-cover class (void or outside the "
                "land cover): no clutter is assumed there"] if gaps else []
    low = int(np.count_nonzero(meas.node_mast_m < LOW_NODE_M))
    return [f"no land cover: {low} measurements with the node below {LOW_NODE_M:g} m; the predictions are likely "
            "optimistic (give --land-cover)"] if low else []


def survey(sites, measurements, *, dem, band: str | None = None, frequency_mhz: float | None = None,
           k_factor="4/3", clearance_ratio: float = 0.6, step_m: float | None = None, fill_voids: bool = False,
           radio: RadioSettings | None = None, cell_m: float = 50.0, fit: str = "offset", folds: int = 5,
           workers: int | None = None, scheduler: str | None = None, progress: bool | None = None,
           chunk_links: int = CHUNK_LINKS, land_cover=None, land_cover_classes=None) -> SurveyResult:
    """Compare field measurements with the model and fit a calibration (see :func:`profiler.survey`)."""
    from ...terrain.landcover import class_mapping_for, land_cover_paths
    from ..sites import GATEWAY_ROLES, read_sites_csv, site_overrides

    mapping = class_mapping_for(land_cover, land_cover_classes)
    cover_paths = tuple(land_cover_paths(land_cover))

    check_values({"--cell-m": cell_m, "--folds": folds})
    if fit not in cal.FITS:
        raise ProfilerError(f"--fit {fit!r} is not known; use offset or slope")
    table = sites if hasattr(sites, "names") else read_sites_csv(sites)
    gw_names = [n for i, n in enumerate(table.names) if table.role[i] in GATEWAY_ROLES]
    meas = measurements if isinstance(measurements, Measurements) else read_measurements_csv(measurements, gw_names)
    radio = (radio or RadioSettings()).validate().with_model(True)
    if radio.gateway != "a":
        raise ProfilerError("in a survey the gateway is end A of every path; leave RadioSettings(gateway=...) at 'a'")
    if radio.propagation.calibration is not None:
        raise ProfilerError("a survey compares the measurements with the uncalibrated model and fits the calibration "
                            "itself: leave the calibration out of its radio settings")
    f_mhz, band_name = resolve_frequency_mhz(frequency_mhz, band)
    plan = regional_plan(band_name) if band_name is not None else None
    k = radio.propagation.k_factor(geometry.parse_k_factor(k_factor))
    dem_paths = tuple(str(p) for p in (dem if isinstance(dem, (list, tuple)) else [dem]))
    settings = NetworkSettings(dem_paths=dem_paths, frequency_mhz=f_mhz, band=band_name, k_factor=k,
                               clearance_ratio=float(clearance_ratio), step_m=step_m, fill_voids=bool(fill_voids),
                               radio=radio)
    gw = _gateway_rows(table, meas)
    sf, bw = _row_modulation(meas, plan)
    n = len(meas)
    node_over = {"tx_power_dbm": meas.tx_power_dbm, **{key: np.full(n, np.nan) for key in
                                                        ("gain_dbi", "cable_loss_db", "noise_figure_db",
                                                         "polarization_deg")}}
    overrides = {"gateway": site_overrides(table, gw), "node": node_over}
    freq = np.where(np.isfinite(meas.frequency_mhz), meas.frequency_mhz, f_mhz)
    arrays = {"lat_gw": table.lat_deg[gw], "lon_gw": table.lon_deg[gw], "mast_gw": table.mast_m[gw],
              "names_gw": [table.names[i] for i in gw], "lat": meas.lat_deg, "lon": meas.lon_deg,
              "mast": meas.node_mast_m, "line": meas.line, "frequency_mhz": freq, "overrides": overrides}
    res, ground, sources = _predict(settings, arrays, table, meas, cover_paths, mapping,
                                    {"chunk_links": chunk_links, "workers": workers, "scheduler": scheduler,
                                     "progress": progress})
    errors = res["error"]
    ends, _ = resolve_ends(radio, plan, n, overrides)
    node, gwe = ends["node"], ends["gateway"]
    failed = np.array([e is not None for e in errors])
    predicted = np.where(failed, np.nan, res["total_loss_db"])
    received = np.where(meas.heard, received_power_dbm(meas.rssi_dbm, meas.snr_db), np.nan)
    measured = measured_loss_db(received, node["tx_power_dbm"], node["gain_dbi"], node["cable_loss_db"],
                                gwe["gain_dbi"], gwe["cable_loss_db"])
    residual = measured - predicted
    if not np.isfinite(residual).any():
        first = next((e for e in errors if e), None)
        raise ProfilerError("no received uplink could be compared with the model"
                            + (f"; the first failed with: {first}" if first else "; every row is a missed uplink"))
    stats, sigma, calibration, by_clutter, n_cells = _statistics(meas, res, residual, cell_m, fit, folds)
    predicted_rx = (node["tx_power_dbm"] + node["gain_dbi"] - node["cable_loss_db"] - predicted + gwe["gain_dbi"]
                    - gwe["cable_loss_db"])
    margin = _predicted_margin_db(sf, bw, radio, gwe["noise_figure_db"], res["margin_db"], predicted_rx)
    closes = np.isfinite(margin) & (margin >= 0.0) & ~failed
    heard = {"uplinks": n, "received": int(meas.heard.sum()), "missed": int((~meas.heard).sum()),
             "errors": int(failed.sum()),
             "missed_predicted_to_close": int(np.sum(~meas.heard & closes)),
             "received_predicted_not_to_close": int(np.sum(meas.heard & ~closes & ~failed))}
    warnings = []
    if failed.any():
        warnings.append(f"{int(failed.sum())} of {n} measurements could not be predicted (see their error)")
    warnings += _clutter_warnings(meas, res, mapping, failed)
    if sigma is None:
        warnings.append(f"no location cell of {cell_m:g} m holds two received uplinks: the location variability "
                        "seen cannot be measured")
    if calibration["cross_validated_rmse_db"] is None:
        warnings.append("too few location cells to cross-validate the calibration")
    site_rows = [{"name": r["name"], "lat_deg": r["lat_deg"], "lon_deg": r["lon_deg"], "mast_m": r["mast_m"],
                  "role": r["role"], "ground_m": cal._num(ground[i])} for i, r in enumerate(table.to_records())]
    settings_out = {"band": band_name, "frequency_mhz": f_mhz, "k_factor": k, "cell_m": float(cell_m),
                    "cells": n_cells, "fit": fit, "folds": int(folds), "clearance_ratio": float(clearance_ratio),
                    "diffraction_method": radio.diffraction_method, "fade_margin_db": radio.fade_margin_db,
                    "measurements_file": meas.source, **radio.propagation.to_dict(k),
                    "land_cover": list(cover_paths) if mapping is not None else None,
                    "land_cover_classes": None if land_cover_classes is None else str(land_cover_classes)}
    return SurveyResult(measurements=_records(meas, res, measured, predicted, residual), statistics=stats,
                        location_sigma_db=sigma, calibration=calibration, calibration_by_clutter=by_clutter,
                        heard=heard, sites=site_rows, settings=settings_out,
                        dem={"kind": "dem", "sources": sources,
                             "voids_filled": int(np.sum(res["voids_filled"]))}, warnings=warnings)
