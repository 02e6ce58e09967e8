"""Many links at once: a gateway (or several) and their nodes, one table.

:func:`network` is the one Python call behind ``profiler network``.  Every
link goes through the same engine as ``profiler link`` (geodesic sampling,
geometry, diffraction and the two-direction budget, vectorized over links in
chunks); the chunks run in-process, on a local Dask cluster
(``workers=N``) or on an existing one (``scheduler="tcp://HOST:PORT"``).
Gateways (and candidate sites) are end A of every link, nodes end B.

The report (:meth:`NetworkResult.to_dict`) is the JSON contract
``profiler.network/5``.  A node is heard by a site when the probability
over locations that their uplink keeps the fade margin
(``probability_heard``, :func:`profiler.engine.links.probability_heard`)
reaches ``min_probability`` (default: the location percentage / 100).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import numpy as np

from ..about import CAUTION, __version__
from ..engine.cluster import CHUNK_LINKS
from ..engine.links import NetworkSettings, link_fields
from ..engine.radio import RadioSettings, check_separation, minimum_separation_m, slant_distance_m
from ..errors import ProfilerError
from ..lora.bands import resolve_frequency_mhz
from ..propagation import geometry
from ..propagation.free_space import wavelength_m

SCHEMA = "profiler.network/5"

LINK_FLOAT_KEYS = ("distance_m", "azimuth_deg", "worst_fresnel_ratio", "worst_distance_m", "diffraction_db",
                   "total_loss_db", "margin_db", "downlink_margin_db", "max_margin_db", "location_sigma_db",
                   "probability_heard")


def compute_links(model, settings: NetworkSettings, lat_gw, lon_gw, mast_gw, lat_node, lon_node, mast_node,
                  overrides=None, names_gw=None, names_node=None, *, land_cover=None, mapping=None) -> dict:
    """Results of a batch of gateway -> node links, one array element per link.

    Parameters
    ----------
    model : profiler.terrain.elevation.ElevationModel
        Open elevation model.
    settings : NetworkSettings
        Band, k, clearance, sampling and radio settings.
    lat_gw, lon_gw, mast_gw, lat_node, lon_node, mast_node : ndarray, shape (L,)
        Gateway (end A) and node (end B) positions [deg] and masts [m].
    overrides : dict, optional
        Per-link radio values per role, see :func:`profiler.engine.radio.resolve_ends`.
    names_gw, names_node : sequence of str, optional
        Site names for error messages.
    land_cover : profiler.terrain.landcover.LandCover, optional
        Open land cover: the clutter class and height R of the pixel at every
        profile sample, end points included (the engine's ``paths``
        ``clutter_m`` and ``clutter_class``); with ``mapping``.
    mapping : profiler.terrain.landcover.ClassMapping, optional
        Land-cover code -> clutter class and height.

    Returns
    -------
    dict of ndarray
        The per-link fields of the ``links[]`` table (NaN where not computed)
        plus ``error`` (list of str or None), ``recommended_dr`` (-1: none),
        ``closes``, ``downlink_closes``, ``line_of_sight``, ``fresnel_clear``,
        ``samples_without_class`` (profile samples of the link with no
        land-cover class).
    """
    from ..terrain.sampling import sample_links

    s = sample_links(model, lat_gw, lon_gw, lat_node, lon_node, step_m=settings.step_m,
                     fill_voids=settings.fill_voids, names_a=names_gw, names_b=names_node)
    n_links = len(s.error)
    errors = list(s.error)
    out = {k: np.full(n_links, np.nan) for k in LINK_FLOAT_KEYS}
    out.update(voids_filled=np.asarray(s.voids_filled), recommended_dr=np.full(n_links, -1),
               samples_without_class=np.zeros(n_links, dtype=np.int64),
               closes=np.zeros(n_links, bool),
               downlink_closes=np.zeros(n_links, bool), line_of_sight=np.zeros(n_links, bool),
               fresnel_clear=np.zeros(n_links, bool))
    ok = s.ok
    if ok.any():
        rows = np.flatnonzero(ok)
        n = s.n[rows]
        d, terrain = s.distance_m[rows, : n.max()], s.terrain_m[rows, : n.max()]
        h_a = terrain[:, 0] + np.asarray(mast_gw, float)[rows]
        h_b = terrain[np.arange(rows.size), n - 1] + np.asarray(mast_node, float)[rows]
        lam = float(wavelength_m(settings.frequency_mhz))
        ae = float(geometry.effective_radius_m(settings.k_factor))
        slant = slant_distance_m(s.length_m[rows], h_a, h_b)
        too_close = ~(slant >= minimum_separation_m(lam))
        for j in np.flatnonzero(too_close):  # rare: each needs its own message
            try:
                check_separation(float(slant[j]), lam)
            except ProfilerError as exc:
                errors[rows[j]] = str(exc)
        keep = ~too_close
        rows, n, d, terrain, h_a, h_b = rows[keep], n[keep], d[keep], terrain[keep], h_a[keep], h_b[keep]
        if rows.size:
            paths = {"lat_a_deg": np.asarray(lat_gw, float)[rows], "lon_a_deg": np.asarray(lon_gw, float)[rows],
                     "lat_b_deg": np.asarray(lat_node, float)[rows], "lon_b_deg": np.asarray(lon_node, float)[rows]}
            if land_cover is not None:
                _clutter_paths(paths, out, rows, s, n, d.shape[1], land_cover, mapping, settings.radio)
            _fill_results(out, rows, s, d, terrain, n, h_a, h_b, lam, ae, settings, overrides, paths)
    bad = ~np.isfinite(out["margin_db"]) & np.array([e is None for e in errors])
    for i in np.flatnonzero(bad):  # a non-finite result is refused per link, never shown as a number
        errors[i] = "the link budget is not a finite number; check the masts, powers and elevation data"
    out["error"] = errors
    return out


def _clutter_paths(paths, out, rows, s, n, width, land_cover, mapping, radio):
    """Put the land cover's clutter at every sample of the links ``rows`` into ``paths`` (R = 0 where no class)."""
    lat, lon = s.lat_deg[rows, :width], s.lon_deg[rows, :width]
    samples = mapping.clutter(land_cover.codes(lon, lat), radio.propagation.model)
    none = samples.class_index < 0
    paths["clutter_m"] = np.where(none, 0.0, samples.height_m)
    paths["clutter_class"] = samples.class_index
    inside = np.arange(width)[None, :] < n[:, None]
    out["samples_without_class"][rows] = np.count_nonzero(none & inside, axis=1)


def _fill_results(out, rows, s, d, terrain, n, h_a, h_b, lam, ae, settings, overrides, paths):
    sub = None if overrides is None else {role: {k: v[rows] for k, v in o.items()} for role, o in overrides.items()}
    res = link_fields(d, terrain, n, h_a, h_b, settings, sub, wavelength=lam, effective_radius=ae, paths=paths)
    out["distance_m"][rows] = s.length_m[rows]
    out["azimuth_deg"][rows] = s.azimuth_a_to_b_deg[rows]
    for key in ("worst_fresnel_ratio", "worst_distance_m", "line_of_sight", "fresnel_clear", "diffraction_db",
                "total_loss_db", "margin_db", "downlink_margin_db", "closes", "downlink_closes", "recommended_dr",
                "max_margin_db", "location_sigma_db", "probability_heard"):
        out[key][rows] = res[key]


def _chunk_job(idx, *, settings, sites_arrays, model=None, land_cover_paths=(), mapping=None, land_cover=None):
    """Compute one chunk of links; opens the elevation (and land-cover) files by path when not given (a worker)."""
    gw, node = idx
    a = sites_arrays
    overrides = {role: {k: v[sel] for k, v in a["overrides"].items()}
                 for role, sel in (("gateway", gw), ("node", node))}
    args = (settings, a["lat"][gw], a["lon"][gw], a["mast"][gw], a["lat"][node], a["lon"][node], a["mast"][node],
            overrides, [a["names"][i] for i in gw], [a["names"][i] for i in node])
    if model is not None:
        return compute_links(model, *args, land_cover=land_cover, mapping=mapping)
    from contextlib import ExitStack

    from ..terrain.elevation import ElevationModel
    from ..terrain.landcover import LandCover

    with ExitStack() as stack:
        opened = stack.enter_context(ElevationModel.open(list(settings.dem_paths)))
        cover = stack.enter_context(LandCover.open(list(land_cover_paths))) if mapping is not None else None
        return compute_links(opened, *args, land_cover=cover, mapping=mapping)


@dataclass(frozen=True)
class NetworkResult:
    """The network report; :meth:`to_dict` is the JSON contract ``profiler.network/5``."""

    sites: list
    links: list
    nodes: list
    summary: dict
    band: str | None
    frequency_mhz: float
    k_factor: float
    fade_margin_db: float
    dem: dict
    warnings: list = field(default_factory=list)
    settings: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {"schema": SCHEMA, "tool_version": __version__, "band": self.band,
                "frequency_mhz": self.frequency_mhz, "k_factor": self.k_factor,
                "fade_margin_db": self.fade_margin_db, "settings": self.settings,
                "sites": self.sites, "links": self.links, "nodes": self.nodes,
                "summary": self.summary, "dem": self.dem, "warnings": list(self.warnings), "caution": CAUTION}


def _num(x):
    x = float(x)
    return x if math.isfinite(x) else None


def _link_records(sites, gw, node, res) -> list:
    """links[] rows (plain JSON types; None for missing numbers)."""
    cols = {k: res[k].tolist() for k in LINK_FLOAT_KEYS}
    dr = res["recommended_dr"].tolist()
    rows = []
    for i in range(gw.size):  # building output records, not computing: one dict per link
        err = res["error"][i]
        rec = {"gateway": sites.names[gw[i]], "node": sites.names[node[i]]}
        for k in LINK_FLOAT_KEYS:
            v = cols[k][i]
            rec[k] = v if (err is None and v == v and abs(v) != math.inf) else None
        rec.update(line_of_sight=None if err else bool(res["line_of_sight"][i]),
                   fresnel_clear=None if err else bool(res["fresnel_clear"][i]),
                   recommended_dr=None if (err or dr[i] < 0) else int(dr[i]),
                   closes=False if err else bool(res["closes"][i]),
                   downlink_closes=False if err else bool(res["downlink_closes"][i]),
                   error=err)
        rows.append(rec)
    return rows


def _best_link(k, margin, usable, n_nodes) -> np.ndarray:
    """Per node, the index of its usable link with the highest margin (-1: none)."""
    m = np.where(usable, margin, -np.inf)
    order = np.lexsort((-m, k))                      # by node, best margin first
    first_k, first = np.unique(k[order], return_index=True)
    best = np.full(n_nodes, -1)
    best[first_k] = order[first]
    return np.where((best >= 0) & usable[np.maximum(best, 0)], best, -1)


def _best_fields(sites, gw, res, b, prefix) -> dict:
    """A node's best link from one kind of site: site name, margin and recommended DR (None: no link)."""
    if b < 0:
        return {prefix: None, f"{prefix}_margin_db": None, f"{prefix}_recommended_dr": None,
                f"{prefix}_probability_heard": None}
    dr = int(res["recommended_dr"][b])
    return {prefix: sites.names[gw[b]], f"{prefix}_margin_db": _num(res["margin_db"][b]),
            f"{prefix}_recommended_dr": dr if dr >= 0 else None,
            f"{prefix}_probability_heard": _num(res["probability_heard"][b])}


def node_summary(sites, gw, node, res, min_probability: float = 0.5):
    """nodes[] rows and the counts of the summary, vectorized over links.

    A node is heard by a site when their link's ``probability_heard``
    reaches ``min_probability`` [-]; ``closing`` still counts the links
    whose margin at the run's location percentage keeps the fade margin.

    Existing gateways (role ``gateway``) and candidate sites (role
    ``candidate``) are counted apart: a node's ``gateways_heard`` and
    ``best_gateway`` are over the existing gateways only, its
    ``candidates_heard`` and ``best_candidate`` over the candidates only;
    the summary's ``nodes_covered_by_gateways`` is the network as built,
    ``nodes_covered_with_candidates`` the network with every candidate added.
    """
    node_rows = sites.indices("node")
    pos = np.full(len(sites), -1)
    pos[node_rows] = np.arange(node_rows.size)
    k = pos[node]
    ok = np.array([e is None for e in res["error"]], dtype=bool)
    closing = ok & res["closes"]
    with np.errstate(invalid="ignore"):
        heard = ok & (res["probability_heard"] >= min_probability)
    from_gateway = sites.role[gw] == "gateway"
    from_candidate = sites.role[gw] == "candidate"
    heard_gw = np.bincount(k[heard & from_gateway], minlength=node_rows.size)
    heard_cand = np.bincount(k[heard & from_candidate], minlength=node_rows.size)
    best_gw = _best_link(k, res["margin_db"], ok & from_gateway, node_rows.size)
    best_cand = _best_link(k, res["margin_db"], ok & from_candidate, node_rows.size)
    nodes = []
    for j, site in enumerate(node_rows):  # output records, one per node
        gw_fields = _best_fields(sites, gw, res, int(best_gw[j]), "best_gateway")
        nodes.append({"name": sites.names[site], "gateways_heard": int(heard_gw[j]),
                      "best_gateway": gw_fields["best_gateway"], "best_margin_db": gw_fields["best_gateway_margin_db"],
                      "recommended_dr": gw_fields["best_gateway_recommended_dr"],
                      "probability_heard": gw_fields["best_gateway_probability_heard"],
                      "candidates_heard": int(heard_cand[j]),
                      **_best_fields(sites, gw, res, int(best_cand[j]), "best_candidate")})
    heard_all = heard_gw + heard_cand
    summary = {"links": int(gw.size), "closing": int(np.sum(closing)), "heard": int(np.sum(heard)),
               "errors": int(np.sum(~ok)),
               "gateways": int(sites.indices("gateway").size), "candidates": int(sites.indices("candidate").size),
               "nodes_total": int(node_rows.size),
               "nodes_covered": int(np.sum(heard_gw >= 1)), "nodes_covered_twice": int(np.sum(heard_gw >= 2)),
               "nodes_covered_by_gateways": int(np.sum(heard_gw >= 1)),
               "nodes_covered_with_candidates": int(np.sum(heard_all >= 1)),
               "nodes_covered_twice_with_candidates": int(np.sum(heard_all >= 2))}
    return nodes, summary


def network(sites, *, dem, pairs=None, max_distance_km: float = 50.0, band: str | None = None,
            frequency_mhz: float | None = None, k_factor="4/3", clearance_ratio: float = 0.6,
            step_m: float | None = None, fill_voids: bool = False, radio: RadioSettings | None = None,
            workers: int | None = None, scheduler: str | None = None, progress: bool | None = None,
            chunk_links: int = CHUNK_LINKS, land_cover=None, land_cover_classes=None,
            min_probability: float | None = None) -> NetworkResult:
    """Analyse every gateway -> node link of a site list.

    Parameters
    ----------
    sites : SiteTable or str or Path
        The sites (see :func:`profiler.products.sites.read_sites_csv`).
    dem : str, Path or list of them
        Elevation files or folders.
    pairs : str, Path or tuple of index arrays, optional
        Exactly these links (a ``gateway,node`` CSV file); otherwise every
        gateway x node pair within ``max_distance_km``.
    max_distance_km : float
        Longest link considered [km] (default 50).
    band, frequency_mhz, k_factor, clearance_ratio, step_m, fill_voids, radio
        As for :func:`profiler.link`; gateways are end A, nodes end B.
    workers, scheduler : optional
        Run the chunks on a local Dask cluster of N workers, or on the
        cluster at ``scheduler``; the elevation files must be visible to every
        worker at the same path.
    progress : bool, optional
        Progress bar on standard error (default: when it is a terminal).
    chunk_links : int
        Links per chunk.
    land_cover : str, Path or list of them, optional
        Land-cover rasters of class codes: the clutter of every profile
        sample (:func:`compute_links`).
    land_cover_classes : str or Path, optional
        Their ``--land-cover-classes`` TOML mapping (default the built-in
        ESA WorldCover mapping).
    min_probability : float, optional
        Least ``probability_heard`` [-] (0 to 1) for a node to count as
        heard by a site (default: the location percentage / 100).

    Returns
    -------
    NetworkResult
    """
    from ..engine.cluster import chunked, run_chunks
    from ..terrain.elevation import ElevationModel
    from ..terrain.landcover import class_mapping_for, land_cover_paths
    from .sites import candidate_pairs, read_pairs_csv, read_sites_csv, site_overrides

    mapping = class_mapping_for(land_cover, land_cover_classes)
    cover_paths = tuple(land_cover_paths(land_cover))
    table = sites if hasattr(sites, "names") else read_sites_csv(sites)
    radio = (radio or RadioSettings()).validate().with_model(True)
    if radio.gateway != "a":
        raise ProfilerError("in a network the gateway is always end A of every link; leave RadioSettings(gateway=...) "
                            "at 'a' (the sites file role column says which site is a gateway)")
    p_min = min_probability_for(min_probability, radio)
    f_mhz, band_name = resolve_frequency_mhz(frequency_mhz, band)
    k = radio.propagation.k_factor(geometry.parse_k_factor(k_factor))
    if pairs is None:
        gw, node, _ = candidate_pairs(table, float(max_distance_km) * 1000.0)
    elif isinstance(pairs, tuple):
        gw, node = pairs
    else:
        gw, node = read_pairs_csv(pairs, table)
    if gw.size == 0:
        raise ProfilerError("no links to compute: no gateway and node are within --max-distance-km of each other "
                            "(or the site list has no gateway or no node); raise --max-distance-km or give --pairs")
    dem_paths = tuple(str(p) for p in (dem if isinstance(dem, (list, tuple)) else [dem]))
    settings = NetworkSettings(dem_paths=dem_paths, frequency_mhz=f_mhz, band=band_name, k_factor=k,
                               clearance_ratio=float(clearance_ratio), step_m=step_m, fill_voids=bool(fill_voids),
                               radio=radio)
    sites_arrays = {"lat": table.lat_deg, "lon": table.lon_deg, "mast": table.mast_m, "names": list(table.names),
                    "overrides": site_overrides(table, np.arange(len(table)))}
    chunks = [(gw[sl], node[sl]) for sl in chunked(gw.size, chunk_links)]
    with ElevationModel.open(list(dem_paths)) as model, _open_cover(cover_paths, mapping) as cover:
        model.start_digests(table.lon_deg, table.lat_deg)
        local = workers is None and scheduler is None
        job = functools.partial(_chunk_job, settings=settings, sites_arrays=sites_arrays,
                                model=model if local else None, land_cover_paths=cover_paths, mapping=mapping,
                                land_cover=cover if local else None)
        parts = run_chunks(job, chunks, workers=workers, scheduler=scheduler, progress=progress,
                           weights=[c[0].size for c in chunks])
        ground = model.sample(table.lon_deg, table.lat_deg)
        sources = model.provenance(model.sources_used(table.lon_deg, table.lat_deg))
    res = {k: np.concatenate([p[k] for p in parts]) for k in parts[0] if k != "error"}
    res["error"] = [e for p in parts for e in p["error"]]
    if all(e is not None for e in res["error"]):
        raise ProfilerError(f"no link could be computed; the first failed with: {res['error'][0]}")
    nodes, summary = node_summary(table, gw, node, res, p_min)
    site_rows = [{"name": r["name"], "lat_deg": r["lat_deg"], "lon_deg": r["lon_deg"], "mast_m": r["mast_m"],
                  "role": r["role"], "ground_m": _num(ground[i]), "cost": r["cost"]}
                 for i, r in enumerate(table.to_records())]
    warnings = []
    if summary["errors"]:
        warnings.append(f"{summary['errors']} of {summary['links']} links could not be computed (see their error)")
    warnings += _clutter_warnings(table, node, res, mapping)
    settings_out = {"clearance_ratio": settings.clearance_ratio, "diffraction_method": radio.diffraction_method,
                    "max_distance_km": None if pairs is not None else float(max_distance_km),
                    "pairs": pairs is not None, **radio.propagation.to_dict(k),
                    "calibration": radio.propagation.calibration_dict(), "min_probability": p_min,
                    "land_cover": list(cover_paths) if mapping is not None else None,
                    "land_cover_classes": None if land_cover_classes is None else str(land_cover_classes)}
    return NetworkResult(sites=site_rows, links=_link_records(table, gw, node, res), nodes=nodes, summary=summary,
                         band=band_name, frequency_mhz=f_mhz, k_factor=k, fade_margin_db=radio.fade_margin_db,
                         dem={"kind": "dem", "sources": sources, "voids_filled": int(np.sum(res["voids_filled"]))},
                         warnings=warnings,
                         settings=settings_out)


def min_probability_for(min_probability, radio) -> float:
    """The least probability of being heard [-]: the given one (checked, 0 to 1) or the location percentage / 100."""
    from ..limits import check

    if min_probability is None:
        return float(radio.propagation.location_percent) / 100.0
    return float(check("--min-probability", min_probability))


def _open_cover(paths, mapping):
    """The land cover opened for the run (a context manager), or a null context without one."""
    from contextlib import nullcontext

    from ..terrain.landcover import LandCover

    return nullcontext() if mapping is None else LandCover.open(list(paths))


def _clutter_warnings(table, node, res, mapping) -> list:
    """Said once: links with samples without a land-cover class, or no land cover while a node is below 10 m."""
    from .link import LOW_NODE_M

    if mapping is not None:
        gaps = int(np.count_nonzero(res["samples_without_class"]))
        return [f"{gaps} of {node.size} links have profile samples without a land-cover class (void or outside "
                "the land cover): no clutter is assumed there"] if gaps else []
    low = table.mast_m[np.unique(node)] < LOW_NODE_M
    if not low.any():
        return []
    return [f"no land cover: {int(np.count_nonzero(low))} nodes below {LOW_NODE_M:g} m likely optimistic"]
