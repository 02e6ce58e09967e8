"""The Python API: one call per command, each returning a result object whose ``to_dict()`` is the JSON report.

:func:`link`, :func:`mast`, :func:`network`, :func:`coverage`, :func:`siting` and :func:`survey` take the sites as
``(lat_deg, lon_deg)`` tuples (a site list as a CSV path) and the elevation data as ``dem``; every
option is a keyword with the same name for the same quantity in every function (``mast_a_m``,
``k_factor``, ``clearance_ratio``, ``frequency_mhz``, ``band``, ``step_m``, ``fill_voids``, ``radio``,
``date``, ``sheet_info``, ``workers``, ``scheduler``, ``progress``).  Only :func:`coverage` writes
files, and only those it is asked for (``out``, ``plot``, ``kmz``, ``json``), after the computation.
"""

from __future__ import annotations

from .engine.cluster import CHUNK_LINKS
from .engine.radio import RadioSettings
from .errors import ProfilerError
from .limits import check_name
from .lora.bands import resolve_frequency_mhz
from .products.link import LinkResult, analyze_link
from .propagation.geometry import parse_k_factor
from .terrain.profile import profile_from_dem, read_profile_csv

#: One wording per shared parameter of the functions' docstrings (``<<name>>`` in a docstring; numpydoc text).
PARAMETERS = {
    "site_a": "site_a, site_b : tuple of float, optional\n"
              "        ``(lat_deg, lon_deg)`` of each site [deg] (WGS84).  Required with ``dem``.",
    "dem": "dem : str, Path or list of them\n        Elevation files or folders of tiles.",
    "profile_csv": "profile_csv : str or Path, optional\n"
                   "        A surveyed profile (``distance_m,elevation_m``) instead of ``dem``; A is its first row.",
    "name_a": "name_a, name_b : str\n        Site names (at most :data:`profiler.limits.MAX_NAME_CHARS` characters).",
    "k_factor": "k_factor : float or str\n"
                "        Effective-Earth-radius factor [-], a number or a fraction such as ``\"4/3\"``.",
    "frequency_mhz": "frequency_mhz : float, optional\n"
                     "        Working frequency [MHz]; otherwise the mean channel frequency of ``band``.",
    "band": "band : str, optional\n        Regional channel plan (default EU868; see ``profiler bands``).",
    "step_m": "step_m : float, optional\n"
              "        Largest spacing of profile samples [m]; default the finest DEM pixel along each path.",
    "clearance_ratio": "clearance_ratio : float\n"
                       "        Required clearance as a fraction of the first Fresnel radius [-].",
    "fill_voids": "fill_voids : bool\n"
                  "        Interpolate across elevation voids; otherwise a path over a void is refused (a network\n"
                  "        link fails, a coverage pixel is nodata).",
    "sheet_info": "sheet_info : profiler.io.sheetinfo.SheetInfo, optional\n"
                  "        Title-block fields (project, document, ...) for the report's ``sheet`` block.",
    "digests": "digests : profiler.terrain.digests.FileDigests, optional\n"
               "        Provenance digests of the elevation (and land-cover) files, possibly already started.",
    "workers": "workers : int, optional\n"
               "        Run the chunks of work on a local Dask cluster of this many worker processes.",
    "scheduler": "scheduler : str, optional\n"
                 "        Run them on the Dask cluster at this address (``tcp://HOST:PORT``); the elevation files\n"
                 "        must be visible to every worker at the same path.",
    "progress": "progress : bool, optional\n        Progress bar on standard error (default: when it is a terminal).",
    "land_cover": "land_cover : str, Path or list of them, optional\n"
                  "        Land-cover rasters of class codes (files or folders of tiles, any CRS): the clutter class\n"
                  "        and height of the nearest pixel at every profile sample.  Not with ``profile_csv``.",
    "land_cover_classes": "land_cover_classes : str or Path, optional\n"
                          "        TOML file mapping each land-cover code to a clutter class and height (default: the\n"
                          "        built-in ESA WorldCover mapping).",
    "calibration": "calibration : str, Path or profiler.engine.calibration.Calibration, optional\n"
                   "        A ``profiler survey --calibration-out`` TOML file: its correction offset + slope *\n"
                   "        log10(d / 1 km) [dB] is the loss term ``loss_db.calibration`` (the node end's clutter\n"
                   "        class table where the file has one); the report names the file and its SHA-256.",
    "chunk_links": "chunk_links : int\n"
                   "        Links per chunk: the unit of work of a worker and of the progress bar.",
}


def shared_parameters(function):
    """Decorator: write the :data:`PARAMETERS` entries into ``function.__doc__`` at their ``<<name>>``."""
    for name, text in PARAMETERS.items():
        function.__doc__ = function.__doc__.replace(f"<<{name}>>", text)
    return function


@shared_parameters
def link(site_a=None, site_b=None, *, dem=None, profile_csv=None, mast_a_m: float = 10.0,
         mast_b_m: float = 2.0, name_a: str = "A", name_b: str = "B", k_factor="4/3",
         frequency_mhz: float | None = None, band: str | None = None, step_m: float | None = None,
         clearance_ratio: float = 0.6, fill_voids: bool = False,
         radio: RadioSettings | None = None, date=None, sheet_info=None, digests=None, land_cover=None,
         land_cover_classes=None, calibration=None) -> LinkResult:
    """Analyse the link A-B over elevation data or a surveyed profile (``profiler link``).

    Parameters
    ----------
    <<site_a>>
    <<dem>>
    <<profile_csv>>
    mast_a_m, mast_b_m : float
        Antenna heights above ground at A and B [m].
    <<name_a>>
    <<k_factor>>
    <<frequency_mhz>>
    <<band>>
    <<step_m>>
    <<clearance_ratio>>
    <<fill_voids>>
    radio : RadioSettings, optional
        Link-budget and LoRa settings (powers, gains, losses, fade margin, SF, diffraction method, which
        end is the gateway).
    date : datetime.date, optional
        Date of the sheet and of the magnetic declination (default today).
    <<sheet_info>>
    <<digests>>
    <<land_cover>>
    <<land_cover_classes>>
    <<calibration>>

    Returns
    -------
    LinkResult
        ``result.to_dict()`` is the ``profiler.link/6`` JSON report; ``result.profile`` holds the
        per-sample arrays (``distance_m``, ``terrain_m``, ``bulge_m``, ``los_m``, ``fresnel_radius_m``,
        ``clearance_m``, with a land cover ``clutter_class`` and ``clutter_height_m``, ...).
    """
    k = parse_k_factor(k_factor)
    radio, f_mhz, band_name, prof = _path_run(site_a, site_b, dem, profile_csv, step_m, fill_voids, name_a, name_b,
                                              frequency_mhz, band, radio, calibration, land_cover,
                                              land_cover_classes, digests)
    return analyze_link(prof, mast_a_m=mast_a_m, mast_b_m=mast_b_m, frequency_mhz=f_mhz, band=band_name,
                        k_factor=k, clearance_ratio=clearance_ratio, radio=radio,
                        name_a=name_a, name_b=name_b,
                        site_a=tuple(site_a) if site_a is not None else None,
                        site_b=tuple(site_b) if site_b is not None else None,
                        date=date, sheet_info=sheet_info)


@shared_parameters
def mast(site_a=None, site_b=None, *, dem=None, profile_csv=None, mast_a_m: float = 10.0,
         mast_b_m: float = 2.0, name_a: str = "A", name_b: str = "B", k_factor="4/3",
         frequency_mhz: float | None = None, band: str | None = None, step_m: float | None = None,
         clearance_ratio: float | None = 0.6, fill_voids: bool = False, low_k_factor="2/3",
         low_k_clearance_ratio: float | None = 0.0, min_margin_db: float | None = None, solve: str = "b",
         max_mast_m: float = 60.0, mast_step_m: float = 1.0, radio: RadioSettings | None = None, date=None,
         sheet_info=None, digests=None, land_cover=None, land_cover_classes=None, calibration=None):
    """The lowest mast that meets every given criterion on the link A-B (``profiler mast``).

    The criteria that are given must all hold: clearance >= ``clearance_ratio`` F1 at ``k_factor``,
    clearance >= ``low_k_clearance_ratio`` F1 at ``low_k_factor``, and link margin >= ``min_margin_db``
    (see :func:`profiler.products.mast.solve.solve_mast`).

    Parameters
    ----------
    <<site_a>>
    <<dem>>
    <<profile_csv>>
    mast_a_m, mast_b_m : float
        Antenna heights above ground at A and B [m]: the fixed height of the end not solved, and the
        first row of the table.
    <<name_a>>
    k_factor : float or str
        Median effective-Earth-radius factor [-], a number or a fraction such as ``"4/3"`` (also the
        factor of the margin).
    <<frequency_mhz>>
    <<band>>
    <<step_m>>
    clearance_ratio : float or None
        Required clearance at ``k_factor`` as a fraction of the first Fresnel radius [-]; None drops the
        criterion (the command's ``--no-clearance`` drops it and the low-k one).
    <<fill_voids>>
    low_k_factor : float or str
        Low (sub-refractive) effective-Earth-radius factor [-] of the second clearance criterion.
    low_k_clearance_ratio : float or None
        Required clearance at ``low_k_factor`` as a fraction of F1 [-]; None drops the criterion
        (``--no-low-k``).
    min_margin_db : float, optional
        Least uplink margin [dB] at the chosen or recommended data rate with the radio's diffraction
        method; None: no margin criterion.
    solve : {"a", "b", "both"}
        End raised: A, B, or both by the same added height (the cheapest split is reported too).
    max_mast_m : float
        Highest allowed mast [m].
    mast_step_m : float
        Height step of the table and of the margin scan [m].
    radio : RadioSettings, optional
        Link-budget and LoRa settings, as for :func:`link`.
    date : datetime.date, optional
        Date of the sheet (default today).
    <<sheet_info>>
    <<digests>>
    <<land_cover>>
    <<land_cover_classes>>
    <<calibration>>

    Returns
    -------
    profiler.products.mast.result.MastResult
        ``result.to_dict()`` is the ``profiler.mast/4`` JSON report; ``result.feasible`` is False (with
        ``result.message``) when no height up to ``max_mast_m`` meets every criterion.
    """
    import dataclasses
    import datetime

    from .products.link import sheet_block
    from .products.mast.solve import solve_mast

    radio, f_mhz, band_name, prof = _path_run(site_a, site_b, dem, profile_csv, step_m, fill_voids, name_a, name_b,
                                              frequency_mhz, band, radio, calibration, land_cover,
                                              land_cover_classes, digests)
    result = solve_mast(prof, frequency_mhz=f_mhz, band=band_name, solve=solve, mast_a_m=mast_a_m,
                        mast_b_m=mast_b_m, clearance_ratio=clearance_ratio, k_factor=k_factor,
                        low_k_clearance_ratio=low_k_clearance_ratio, low_k_factor=low_k_factor,
                        min_margin_db=min_margin_db, radio=radio, max_mast_m=max_mast_m, mast_step_m=mast_step_m,
                        name_a=name_a, name_b=name_b,
                        site_a=tuple(site_a) if site_a is not None else None,
                        site_b=tuple(site_b) if site_b is not None else None)
    return dataclasses.replace(result, sheet=sheet_block(sheet_info, date or datetime.date.today()))


def _path_run(site_a, site_b, dem, profile_csv, step_m, fill_voids, name_a, name_b, frequency_mhz, band, radio,
              calibration, land_cover, land_cover_classes, digests):
    """What a one-path command (link, mast) starts from: ``(radio, f_mhz, band_name, profile)``.

    Names checked, the calibration applied to ``radio``, the frequency resolved, the land-cover mapping
    refused early when it cannot apply, the profile loaded and its clutter sampled.
    """
    check_names(name_a=name_a, name_b=name_b)
    radio = calibrated(radio, calibration)
    f_mhz, band_name = resolve_frequency_mhz(frequency_mhz, band)
    mapping = _class_mapping(land_cover, land_cover_classes, profile_csv)
    prof = load_profile(site_a, site_b, dem=dem, profile_csv=profile_csv, step_m=step_m,
                        fill_voids=fill_voids, name_a=name_a, name_b=name_b, digests=digests)
    return radio, f_mhz, band_name, _with_land_cover(prof, land_cover, mapping, radio, digests)


def _class_mapping(land_cover, land_cover_classes, profile_csv):
    """The class mapping of a link or mast run with a land cover (None without); refusals before any work."""
    from .terrain.landcover import class_mapping_for, land_cover_paths

    if profile_csv is not None and land_cover_paths(land_cover):
        raise ProfilerError("give either --profile or --land-cover, not both: a surveyed profile gives its clutter "
                            "in its clutter_height_m column")
    return class_mapping_for(land_cover, land_cover_classes)


def _with_land_cover(prof, land_cover, mapping, radio, digests=None):
    """The profile with the land cover's clutter at every sample, for the run's model (unchanged without)."""
    if mapping is None:
        return prof
    from .terrain.landcover import LandCover, land_cover_paths
    from .terrain.profile import with_land_cover

    model = (radio or RadioSettings()).propagation.resolved(True).model
    with LandCover.open(land_cover_paths(land_cover), digests=digests) as cover:
        return with_land_cover(prof, cover, mapping, model)


@shared_parameters
def load_profile(site_a=None, site_b=None, *, dem=None, profile_csv=None, step_m: float | None = None,
                 fill_voids: bool = False, name_a: str = "A", name_b: str = "B", digests=None):
    """The terrain profile from a surveyed CSV file or from elevation data along the geodesic A-B.

    Parameters
    ----------
    <<site_a>>
    <<dem>>
    <<profile_csv>>
    <<step_m>>
    <<fill_voids>>
    name_a, name_b : str
        Site names, for the profile's end labels.
    <<digests>>

    Returns
    -------
    profiler.terrain.profile.TerrainProfile
        Distances [m] and terrain heights [m] from A to B, with the elevation sources.
    """
    check_names(name_a=name_a, name_b=name_b)
    if profile_csv is not None:
        if dem:
            raise ProfilerError("give either --dem or --profile, not both")
        return read_profile_csv(profile_csv)
    if not dem:
        raise ProfilerError("no elevation data: give --dem FILE_OR_FOLDER or --profile FILE.csv")
    if site_a is None or site_b is None:
        raise ProfilerError("both --site-a and --site-b are needed with --dem (format LAT,LON)")
    from .terrain.elevation import ElevationModel

    with ElevationModel.open(dem, digests=digests) as model:
        return profile_from_dem(model, site_a[0], site_a[1], site_b[0], site_b[1], step_m=step_m,
                                fill_voids=fill_voids,
                                name_a=f"site A ({name_a})" if name_a != "A" else "site A",
                                name_b=f"site B ({name_b})" if name_b != "B" else "site B")


@shared_parameters
def network(sites, *, dem, pairs=None, max_distance_km: float = 50.0, k_factor="4/3",
            frequency_mhz: float | None = None, band: str | None = None, step_m: float | None = None,
            clearance_ratio: float = 0.6, fill_voids: bool = False, radio: RadioSettings | None = None,
            workers: int | None = None, scheduler: str | None = None, progress: bool | None = None,
            chunk_links: int = CHUNK_LINKS, land_cover=None, land_cover_classes=None, calibration=None,
            min_probability: float | None = None):
    """Every gateway -> node link of a site list (``profiler network``).

    Gateways and candidate sites are end A of every link, nodes end B: the ``radio`` settings of end A
    apply to the gateways, those of end B to the nodes; per-site columns of the site list override them.

    Parameters
    ----------
    sites : str, Path or profiler.products.sites.SiteTable
        The site list, a CSV file ``name,lat_deg,lon_deg,mast_m,role`` (role gateway, node or candidate)
        with optional per-site columns (see :func:`profiler.products.sites.read_sites_csv`).
    <<dem>>
    pairs : str or Path, optional
        Exactly these links (a ``gateway,node`` CSV file) instead of every pair within
        ``max_distance_km``.
    max_distance_km : float
        Longest gateway-node link considered [km].
    <<k_factor>>
    <<frequency_mhz>>
    <<band>>
    <<step_m>>
    <<clearance_ratio>>
    <<fill_voids>>
    radio : RadioSettings, optional
        Link-budget and LoRa settings; the gateway is end A (``RadioSettings(gateway="a")``).
    <<workers>>
    <<scheduler>>
    <<progress>>
    <<chunk_links>>
    <<land_cover>>
    <<land_cover_classes>>
    <<calibration>>
    min_probability : float, optional
        Least probability over locations that a node's uplink keeps the fade margin (``probability_heard``
        of its link, 0 to 1) for the node to count as heard (default: the location percentage / 100).

    Returns
    -------
    profiler.products.network.NetworkResult
        ``result.to_dict()`` is the ``profiler.network/5`` JSON report (``links``, ``nodes``, ``sites``,
        ``summary`` as attributes too).
    """
    from .products.network import network as _network

    radio = calibrated(radio, calibration)
    return _network(sites, dem=dem, pairs=pairs, max_distance_km=max_distance_km, band=band,
                    frequency_mhz=frequency_mhz, k_factor=k_factor, clearance_ratio=clearance_ratio, step_m=step_m,
                    fill_voids=fill_voids, radio=radio, workers=workers, scheduler=scheduler, progress=progress,
                    chunk_links=chunk_links, land_cover=land_cover, land_cover_classes=land_cover_classes,
                    min_probability=min_probability)


@shared_parameters
def survey(sites, measurements, *, dem, k_factor="4/3", frequency_mhz: float | None = None, band: str | None = None,
           step_m: float | None = None, clearance_ratio: float = 0.6, fill_voids: bool = False,
           radio: RadioSettings | None = None, cell_m: float = 50.0, fit: str = "offset", folds: int = 5,
           workers: int | None = None, scheduler: str | None = None, progress: bool | None = None,
           chunk_links: int = CHUNK_LINKS, land_cover=None, land_cover_classes=None):
    """Field measurements against the model, their statistics and a calibration (``profiler survey``).

    Every measurement is predicted with the engine of :func:`network` (its gateway end A, the node end B
    at the measured position); residual = measured - predicted path loss.

    Parameters
    ----------
    sites : str, Path or profiler.products.sites.SiteTable
        The site list, as for :func:`network`; the measurements name its gateways.
    measurements : str, Path or profiler.products.survey.Measurements
        The measurement CSV file (``gateway,lat_deg,lon_deg,rssi_dbm,snr_db`` and optional columns, see
        :func:`profiler.products.survey.read_measurements_csv`) or a table already read.
    <<dem>>
    <<k_factor>>
    <<frequency_mhz>>
    <<band>>
    <<step_m>>
    <<clearance_ratio>>
    <<fill_voids>>
    radio : RadioSettings, optional
        Link-budget settings; the gateway is end A, the node end B (a row's ``tx_power_dbm`` wins).
    cell_m : float
        Side of a location cell [m]; a cell's measurements count once (their median). A row without a
        ``clutter`` cell takes the land cover's class at the node (with ``land_cover``).
    fit : {"offset", "slope"}
        Calibration ``offset`` or ``offset + slope * log10(d / 1 km)``.
    folds : int
        Cross-validation folds, by location cell.
    <<workers>>
    <<scheduler>>
    <<progress>>
    <<chunk_links>>
    <<land_cover>>
    <<land_cover_classes>>

    Returns
    -------
    profiler.products.survey.SurveyResult
        ``result.to_dict()`` is the ``profiler.survey/1`` JSON report.
    """
    from .products.survey import survey as _survey

    return _survey(sites, measurements, dem=dem, band=band, frequency_mhz=frequency_mhz, k_factor=k_factor,
                   clearance_ratio=clearance_ratio, step_m=step_m, fill_voids=fill_voids, radio=radio, cell_m=cell_m,
                   fit=fit, folds=folds, workers=workers, scheduler=scheduler, progress=progress,
                   chunk_links=chunk_links, land_cover=land_cover, land_cover_classes=land_cover_classes)


@shared_parameters
def siting(sites, *, dem, redundancy: int = 1, min_margin_db: float | None = None, max_gateways: int | None = None,
           time_limit_s: float = 60.0, pairs=None, max_distance_km: float = 50.0, k_factor="4/3",
           frequency_mhz: float | None = None, band: str | None = None, step_m: float | None = None,
           clearance_ratio: float = 0.6, fill_voids: bool = False, radio: RadioSettings | None = None,
           workers: int | None = None, scheduler: str | None = None, progress: bool | None = None,
           chunk_links: int = CHUNK_LINKS, land_cover=None, land_cover_classes=None, calibration=None,
           min_probability: float | None = None):
    """The cheapest set of candidate gateway sites that hears every node (``profiler siting``).

    Runs :func:`network` from every ``gateway`` and ``candidate`` site to every node, then solves the
    set multicover (or, with ``max_gateways``, maximum coverage) programme of
    :mod:`profiler.products.siting.setcover`.  A node is heard by a site when an allowed data rate
    closes their link and its ``probability_heard`` reaches ``min_probability`` (and, when
    ``min_margin_db`` is given, the best uplink margin over the allowed data rates reaches it).

    Parameters
    ----------
    sites : str, Path or profiler.products.sites.SiteTable
        The site list, as for :func:`network`; role ``candidate`` may get a gateway (optional ``cost``
        column, default 1), ``gateway`` is an existing one that is always kept, ``node`` must be heard.
    <<dem>>
    redundancy : int
        Gateways that must hear each node.
    min_margin_db : float, optional
        Least uplink margin for a node to count as heard [dB] (default: no margin rule besides the
        probability).
    max_gateways : int, optional
        Choose at most this many sites (existing gateways included) hearing the most nodes.
    time_limit_s : float
        Solver time limit [s]; the best set found is returned with its gap.
    pairs, max_distance_km, k_factor, frequency_mhz, band, step_m, clearance_ratio, fill_voids, radio
        The links, as for :func:`network` (``max_distance_km`` [km], ``frequency_mhz`` [MHz],
        ``step_m`` [m], ``k_factor`` and ``clearance_ratio`` [-]).
    workers, scheduler, progress, chunk_links
        Where and in which chunks the links run, as for :func:`network`.
    land_cover, land_cover_classes
        The land cover and its class mapping, as for :func:`network`.
    <<calibration>>
    min_probability : float, optional
        Least ``probability_heard`` [-] for a node to count as heard, as for :func:`network`.

    Returns
    -------
    profiler.products.siting.report.SitingResult
        ``result.to_dict()`` is the ``profiler.siting/4`` JSON report; ``result.network`` the
        ``profiler.network/5`` report it was solved over.
    """
    from .products.siting.report import SitingResult, siting_from_network

    net = network(sites, dem=dem, pairs=pairs, max_distance_km=max_distance_km, band=band,
                  frequency_mhz=frequency_mhz, k_factor=k_factor, clearance_ratio=clearance_ratio, step_m=step_m,
                  fill_voids=fill_voids, radio=radio, workers=workers, scheduler=scheduler, progress=progress,
                  chunk_links=chunk_links, land_cover=land_cover, land_cover_classes=land_cover_classes,
                  calibration=calibration, min_probability=min_probability).to_dict()
    report = siting_from_network(net, min_margin_db=min_margin_db, redundancy=redundancy, max_gateways=max_gateways,
                                 time_limit_s=time_limit_s)
    return SitingResult(report, net)


@shared_parameters
def coverage(site=None, *, dem, mast_m: float | None = None, radius_km: float, name: str = "site", sites=None,
             resolution_m: float | None = None, node_mast_m: float = 1.5, k_factor="4/3",
             frequency_mhz: float | None = None, band: str | None = None, clearance_ratio: float = 0.6,
             fill_voids: bool = False, radio: RadioSettings | None = None, workers: int | None = None,
             scheduler: str | None = None, progress: bool | None = None, kernel: bool | None = None, date=None,
             sheet_info=None, out=None, plot=None, kmz=None, json=None, paper: str = "a4", dpi: int = 200,
             calibration=None, land_cover=None, land_cover_classes=None,
             map_kind: str = "margin", max_memory_mb: float | None = None):
    """Margin and data rate at every pixel within a radius of a gateway site (``profiler coverage``).

    The computation (:func:`profiler.products.coverage.map.coverage`) writes no file; the files asked
    for with ``out``, ``plot``, ``kmz`` and ``json`` are checked before it and written after it, all or
    nothing (:func:`coverage_outputs`, the writers the command uses too).

    Parameters
    ----------
    site : tuple of float, optional
        ``(lat_deg, lon_deg)`` of the gateway [deg] (WGS84), with ``mast_m``; or give ``sites``.
    <<dem>>
    mast_m : float, optional
        Antenna height of the gateway ``site`` above ground [m] (required with ``site``).
    radius_km : float
        Radius around each gateway [km].
    name : str
        Name of the site (at most :data:`profiler.limits.MAX_NAME_CHARS` characters).
    sites : str, Path or profiler.products.sites.SiteTable, optional
        A site list (the network format) instead of ``site``: the bands are the composite over its
        gateway and candidate rows, each with its own mast and overrides.
    resolution_m : float, optional
        Output pixel size [m]; default the elevation pixel at the (first) site.
    node_mast_m : float
        Node antenna height above ground at every pixel [m].
    <<k_factor>>
    <<frequency_mhz>>
    <<band>>
    <<clearance_ratio>>
    <<fill_voids>>
    radio : RadioSettings, optional
        Link-budget and LoRa settings; the site is the gateway, end A.
    workers, scheduler, progress
        Where the radial sectors run, as for :func:`network`.
    kernel : bool, optional
        Reductions in the numba kernel (default: when numba is installed) or, with False, in numpy
        prefix batches; the results agree to rounding.
    date : datetime.date, optional
        Date of the sheet (default today).
    <<sheet_info>>
    out, plot, kmz, json : str or Path, optional
        Files to write: the bands as a float32 GeoTIFF, the map sheet (.png, .pdf or .svg), a KMZ ground
        overlay, the JSON report (``"-"``: standard output).
    paper : {"a4", "letter"}
        Paper size of the map sheet.
    dpi : int
        Resolution of a PNG map sheet [dots per inch].
    <<calibration>>
    <<land_cover>>
    <<land_cover_classes>>
    map_kind : {"margin", "probability"}
        What the sheet's map shows (``--map``): the margin classes or the probability of being heard.
    max_memory_mb : float, optional
        Memory budget [MB] (``--max-memory-mb``): a larger run (or any grid over 40 million pixels)
        streams, the GeoTIFF written tile by tile, the sheet and overlay drawn from a decimated read of it.

    Returns
    -------
    profiler.products.coverage.map.CoverageResult
        ``result.to_dict()`` is the ``profiler.coverage/5`` JSON report; ``result.bands`` maps each band
        name to a float32 array on ``result.grid`` (NaN: nodata), or is None for a streamed run (read the
        bands from ``out``).
    """
    from .io.outputs import check_outputs, write_outputs
    from .products.coverage.map import coverage as _coverage

    check_names(name=name)
    radio = calibrated(radio, calibration)
    check_outputs(coverage_outputs(out, plot, kmz, json, paper=paper, dpi=dpi, dem_paths=dem))
    result = _coverage(site, dem=dem, mast_m=mast_m, name=name, sites=sites, radius_km=radius_km,
                       resolution_m=resolution_m, node_mast_m=node_mast_m, band=band, frequency_mhz=frequency_mhz,
                       k_factor=k_factor, clearance_ratio=clearance_ratio, fill_voids=fill_voids, radio=radio,
                       workers=workers, scheduler=scheduler, progress=progress, kernel=kernel, date=date,
                       sheet_info=sheet_info, land_cover=land_cover, land_cover_classes=land_cover_classes,
                       max_memory_mb=max_memory_mb, stream_dir=stream_folder(out))
    try:
        write_outputs(coverage_outputs(out, plot, kmz, json, paper=paper, dpi=dpi, dem_paths=dem, result=result,
                                       map_kind=map_kind), result.to_dict())
    finally:
        result.discard()   # a streamed run's temporary GeoTIFF, unless --out took it
    return result


def stream_folder(out):
    """The folder of a streamed coverage's temporary files: the GeoTIFF's own (an atomic rename), else None."""
    from pathlib import Path

    return None if out is None else str(Path(out).resolve().parent)

def coverage_outputs(out=None, plot=None, kmz=None, json=None, *, paper="a4", dpi=200, dem_paths=(), result=None,
                     summary=False, map_kind="margin"):
    """The outputs of a coverage run for :func:`profiler.io.outputs.write_outputs` (the API and the command).

    ``map_kind``: ``margin`` (the margin classes) or ``probability`` (of being heard) on the sheet's map.
    """
    from .io.coverage import coverage_kmz_bytes, coverage_summary_text, decimated_view, write_geotiff
    from .io.outputs import Output

    view = result
    if result is not None and result.bands is None and (plot is not None or kmz is not None):
        view = decimated_view(result)   # before --out moves the streamed GeoTIFF into place

    def render_tif(report, path):
        write_geotiff(result, path)

    def render_json(report, path):
        from .io.report import json_text
        return json_text(report)

    def render_kmz(report, path):
        return coverage_kmz_bytes(view, report)

    def render_plot(report, path, files=None):
        from .plot import write_coverage_figure
        write_coverage_figure(view, path, paper=paper, dpi=dpi, dem_paths=list(dem_paths or ()), report=report,
                              date_text=(report.get("sheet") or {}).get("date"), files=files, map_kind=map_kind)

    outputs = [Output("--out", out, render_tif, "raw", suffixes=(".tif", ".tiff"), stdout=False),
               Output("--json", json, render_json, "json"),
               Output("--kmz", kmz, render_kmz, "xml", suffixes=(".kmz",), stdout=False),
               Output("--plot", plot, render_plot, "figure", suffixes=(".png", ".pdf", ".svg"), stdout=False,
                      extra_files=True)]
    if summary:
        outputs.append(Output("summary", None if str(json) == "-" else "-",
                              lambda report, path: coverage_summary_text(report), "terminal"))
    return outputs


def calibrated(radio: RadioSettings | None, calibration) -> RadioSettings | None:
    """``radio`` with ``calibration`` (a file path or a read :class:`profiler.engine.calibration.Calibration`) set.

    None leaves ``radio`` as it is (its own ``propagation.calibration``, if any, stays).
    """
    if calibration is None:
        return radio
    from dataclasses import replace

    from .engine.calibration import as_calibration

    radio = radio or RadioSettings()
    return replace(radio, propagation=replace(radio.propagation, calibration=as_calibration(calibration)))


def check_names(**names) -> None:
    """Refuse any name longer than :data:`profiler.limits.MAX_NAME_CHARS` (one line naming the argument)."""
    for key, value in names.items():
        check_name(value, key)
