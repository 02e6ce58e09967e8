"""One call from sites and elevation data to a :class:`~profiler.products.link.LinkResult`."""

from __future__ import annotations

from .engine.radio import RadioSettings
from .errors import ProfilerError
from .limits import check_name
from .lora.bands import resolve_frequency_mhz
from .products.link import LinkResult, analyze_link
from .propagation.geometry import parse_k_factor
from .terrain.profile import profile_from_dem, read_profile_csv


def link(site_a=None, site_b=None, *, dem=None, profile_csv=None, mast_a_m: float = 10.0,
         mast_b_m: float = 2.0, name_a: str = "A", name_b: str = "B", k_factor="4/3",
         frequency_mhz: float | None = None, band: str | None = None, step_m: float | None = None,
         clearance_ratio: float = 0.6, fill_voids: bool = False,
         radio: RadioSettings | None = None, date=None, sheet_info=None, digests=None) -> LinkResult:
    """Analyse the link A-B over elevation data or a surveyed profile.

    Parameters
    ----------
    site_a, site_b : tuple of float, optional
        ``(lat_deg, lon_deg)`` of each site (WGS84).  Required with ``dem``.
    dem : str, Path or list of them
        Elevation files or folders of tiles.
    profile_csv : str or Path
        A surveyed profile (``distance_m,elevation_m``) instead of ``dem``.
    mast_a_m, mast_b_m : float
        Antenna heights above ground [m].
    k_factor : float or str
        Effective-Earth-radius factor, e.g. ``4/3``.
    frequency_mhz : float, optional
        Working frequency [MHz]; otherwise the mean of ``band`` (default EU868).
    step_m : float, optional
        Largest spacing of profile samples [m]; default the finest DEM pixel.
    clearance_ratio : float
        Required clearance as a fraction of the first Fresnel radius.
    fill_voids : bool
        Interpolate across elevation voids instead of refusing.
    radio : RadioSettings, optional
        Link-budget and LoRa settings.
    date : datetime.date, optional
        Date of the sheet and of the magnetic declination (default today).
    sheet_info : profiler.io.sheetinfo.SheetInfo, optional
        Title-block fields (project, document, ...) for the report's ``sheet`` block.
    digests : profiler.terrain.digests.FileDigests, optional
        Provenance digests of the elevation files, possibly already started.

    Returns
    -------
    LinkResult
        ``result.to_dict()`` is the JSON report.
    """
    check_names(name_a=name_a, name_b=name_b)
    f_mhz, band_name = resolve_frequency_mhz(frequency_mhz, band)
    k = parse_k_factor(k_factor)
    prof = load_profile(site_a, site_b, dem=dem, profile_csv=profile_csv, step_m=step_m,
                        fill_voids=fill_voids, name_a=name_a, name_b=name_b, digests=digests)
    return analyze_link(prof, mast_a_m=mast_a_m, mast_b_m=mast_b_m, frequency_mhz=f_mhz, band=band_name,
                        k_factor=k, clearance_ratio_required=clearance_ratio, radio=radio,
                        name_a=name_a, name_b=name_b,
                        site_a_lat_lon=tuple(site_a) if site_a is not None else None,
                        site_b_lat_lon=tuple(site_b) if site_b is not None else None,
                        date=date, sheet_info=sheet_info)


def load_profile(site_a=None, site_b=None, *, dem=None, profile_csv=None, step_m: float | None = None,
                 fill_voids: bool = False, name_a: str = "A", name_b: str = "B", digests=None):
    """The terrain profile from a surveyed CSV file or from elevation data along the geodesic.

    Parameters are those of :func:`link`.  Returns a
    :class:`~profiler.terrain.profile.TerrainProfile`.
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


def network(sites, *, dem, **kwargs):
    """Every gateway -> node link of a site list: see :func:`profiler.products.network.network`.

    Returns a :class:`~profiler.products.network.NetworkResult` whose
    ``to_dict()`` is the ``profiler.network/2`` JSON report.
    """
    from .products.network import network as _network

    return _network(sites, dem=dem, **kwargs)


def siting(sites, *, dem, redundancy: int = 1, min_margin_db: float | None = None, max_gateways: int | None = None,
           time_limit_s: float = 60.0, **kwargs):
    """The cheapest set of candidate gateway sites that hears every node.

    Runs the network engine from every ``gateway`` and ``candidate`` site to
    every node (``kwargs`` as for :func:`network`), then solves the set
    multicover (or, with ``max_gateways``, maximum coverage) programme of
    :mod:`profiler.products.siting.setcover`.  A node is heard by a site when the best
    uplink margin over the plan's allowed data rates reaches
    ``min_margin_db`` (default: the fade margin).

    Returns
    -------
    profiler.products.siting.report.SitingResult
        ``result.to_dict()`` is the ``profiler.siting/1`` JSON report;
        ``result.network`` the ``profiler.network/2`` report it was solved over.
    """
    from .engine.radio import RadioSettings
    from .products.siting.report import SitingResult, siting_from_network

    radio = kwargs.get("radio") or RadioSettings()
    net = network(sites, dem=dem, **kwargs).to_dict()
    threshold = radio.fade_margin_db if min_margin_db is None else float(min_margin_db)
    report = siting_from_network(net, min_margin_db=threshold, redundancy=redundancy, max_gateways=max_gateways,
                                 time_limit_s=time_limit_s)
    return SitingResult(report, net)


def coverage(site=None, *, dem, out=None, plot=None, kmz=None, json=None, paper="a4", dpi=200, **kwargs):
    """Coverage of a site within a radius: see :func:`profiler.products.coverage.map.coverage`.

    Returns a :class:`~profiler.products.coverage.map.CoverageResult` (``bands``: name
    -> float32 array, ``grid``, ``report`` = the ``profiler.coverage/2``
    summary). ``out``, ``plot``, ``kmz``, ``json`` (str or Path, optional):
    files to write (GeoTIFF, map sheet at ``paper`` and ``dpi``, KMZ, JSON
    summary), all or nothing, checked before and written after the computation.
    """
    from .io.outputs import check_outputs, write_outputs
    from .products.coverage.map import coverage as _coverage

    check_names(name=kwargs.get("name"))
    check_outputs(coverage_outputs(out, plot, kmz, json, paper=paper, dpi=dpi, dem_paths=dem))
    result = _coverage(site, dem=dem, **kwargs)
    write_outputs(coverage_outputs(out, plot, kmz, json, paper=paper, dpi=dpi, dem_paths=dem, result=result),
                  result.report)
    return result


def coverage_outputs(out=None, plot=None, kmz=None, json=None, *, paper="a4", dpi=200, dem_paths=(), result=None,
                     summary=False):
    """The outputs of a coverage run for :func:`profiler.io.outputs.write_outputs` (the API and the command)."""
    from .io.coverage import coverage_kmz_bytes, coverage_summary_text, write_geotiff
    from .io.outputs import Output

    def render_tif(report, path):
        write_geotiff(result, path)

    def render_json(report, path):
        from .io.report import json_text
        return json_text(report)

    def render_kmz(report, path):
        return coverage_kmz_bytes(result, report)

    def render_plot(report, path, files=None):
        from .plot import write_coverage_figure
        write_coverage_figure(result, path, paper=paper, dpi=dpi, dem_paths=list(dem_paths or ()), report=report,
                              date_text=(report.get("sheet") or {}).get("date"), files=files)

    outputs = [Output("--out", out, render_tif, "raw", suffixes=(".tif", ".tiff"), stdout=False),
               Output("--json", json, render_json, "json"),
               Output("--kmz", kmz, render_kmz, "xml", suffixes=(".kmz",), stdout=False),
               Output("--plot", plot, render_plot, "figure", suffixes=(".png", ".pdf", ".svg"), stdout=False,
                      extra_files=True)]
    if summary:
        outputs.append(Output("summary", None if str(json) == "-" else "-",
                              lambda report, path: coverage_summary_text(report), "terminal"))
    return outputs


def check_names(**names) -> None:
    """Refuse any name longer than :data:`profiler.limits.MAX_NAME_CHARS` (one line naming the argument)."""
    for key, value in names.items():
        check_name(value, key)
