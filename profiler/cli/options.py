"""Options shared by the commands (one place, so every command spells them the same)."""

from __future__ import annotations

import math

import click

from ..engine.radio import DIFFRACTION_METHODS
from ..errors import ProfilerError


class LatLon(click.ParamType):
    """``LAT,LON`` in decimal degrees (WGS84); negative values allowed."""

    name = "LAT,LON"

    def convert(self, value, param, ctx):
        if isinstance(value, tuple):
            return value
        parts = str(value).replace(";", ",").split(",")
        if len(parts) != 2:
            self.fail(f"{value!r} is not LAT,LON (for example -29.9125,-19.955)", param, ctx)
        try:
            lat, lon = float(parts[0]), float(parts[1])
        except ValueError:
            self.fail(f"{value!r} is not LAT,LON in decimal degrees (for example -29.9125,-19.955)", param, ctx)
        if not (math.isfinite(lat) and math.isfinite(lon)):
            self.fail(f"{value!r}: coordinates must be finite numbers", param, ctx)
        if not -90.0 <= lat <= 90.0:
            from ..terrain.geodesic import swapped_hint

            self.fail(f"latitude {lat:g} is out of range -90..90 (the format is LAT,LON)"
                      f"{swapped_hint(lat, lon)}", param, ctx)
        if not -180.0 <= lon <= 180.0:
            self.fail(f"longitude {lon:g} is out of range -180..180 (the format is LAT,LON)", param, ctx)
        return (lat, lon)


class SiteName(click.ParamType):
    """A site name of at most :data:`profiler.limits.MAX_NAME_CHARS` characters."""

    name = "TEXT"

    def convert(self, value, param, ctx):
        from ..limits import check_name

        try:
            return check_name(value, "the name")
        except ProfilerError as exc:
            self.fail(str(exc), param, ctx)


class FiniteFloat(click.ParamType):
    """A finite decimal number (no NaN or infinity), optionally with bounds."""

    name = "NUMBER"

    def __init__(self, min_value=None, max_value=None, min_open=False):
        self.min_value, self.max_value, self.min_open = min_value, max_value, min_open

    def convert(self, value, param, ctx):
        limit = _limit_name(param)
        if limit is not None:  # the physical range from profiler.limits (one table for CLI and API)
            return _checked(limit, value, ctx)
        if isinstance(value, float):
            x = value
        else:
            try:
                x = float(str(value).strip())
            except ValueError:
                self.fail(f"{value!r} is not a number", param, ctx)
        if not math.isfinite(x):
            self.fail(f"{value!r} is not a finite number", param, ctx)
        if self.min_value is not None and (x < self.min_value or (self.min_open and x <= self.min_value)):
            rel = "greater than" if self.min_open else "at least"
            self.fail(f"{x:g} is too small; it must be {rel} {self.min_value:g}", param, ctx)
        if self.max_value is not None and x > self.max_value:
            self.fail(f"{x:g} is too large; it must be at most {self.max_value:g}", param, ctx)
        return x


class WholeNumber(FiniteFloat):
    """A whole number, checked against its range in :data:`profiler.limits.LIMITS`."""

    name = "INTEGER"

    def convert(self, value, param, ctx):
        limit = _limit_name(param)
        if limit is not None:
            return _checked(limit, value, ctx)
        try:
            return int(str(value).strip())
        except ValueError:
            self.fail(f"{value!r} is not a whole number", param, ctx)


class KFactor(click.ParamType):
    """An effective-Earth-radius factor: a decimal or a fraction such as 4/3, within its range."""

    name = "K"

    def convert(self, value, param, ctx):
        from ..propagation.geometry import parse_k_factor

        try:
            return _checked(_limit_name(param) or "--k", parse_k_factor(value), ctx)
        except ProfilerError as exc:
            raise click.UsageError(str(exc), ctx) from None


def _limit_name(param):
    """The :data:`~profiler.limits.LIMITS` key of a click option, or None."""
    from ..limits import LIMITS

    for opt in getattr(param, "opts", ()) if param is not None else ():
        if opt in LIMITS:
            return opt
    return None


def _checked(name, value, ctx):
    """``limits.check`` with its message as a one-line usage error."""
    from ..limits import check

    try:
        return check(name, value)
    except ProfilerError as exc:
        raise click.UsageError(str(exc), ctx) from None


SITE_NAME = SiteName()
NUMBER = FiniteFloat()
NON_NEGATIVE = FiniteFloat(0.0)
POSITIVE = FiniteFloat(0.0, min_open=True)
INTEGER = WholeNumber()


def _apply(options):
    def decorator(f):
        for option in reversed(options):
            f = option(f)
        return f
    return decorator


def site_options(f):
    """Sites, names and masts."""
    return _apply([
        click.option("--site-a", type=LatLon(), help="Site A as LAT,LON in decimal degrees (WGS84)."),
        click.option("--site-b", type=LatLon(), help="Site B as LAT,LON in decimal degrees (WGS84)."),
        click.option("--name-a", type=SITE_NAME, default="A", show_default=True,
                     help="Name of site A (at most 200 characters)."),
        click.option("--name-b", type=SITE_NAME, default="B", show_default=True,
                     help="Name of site B (at most 200 characters)."),
        click.option("--mast-a", "mast_a_m", type=NON_NEGATIVE, default=10.0, show_default=True,
                     help="Antenna height above ground at A [m]."),
        click.option("--mast-b", "mast_b_m", type=NON_NEGATIVE, default=2.0, show_default=True,
                     help="Antenna height above ground at B [m]."),
    ])(f)


def land_cover_option_list():
    """``--land-cover`` (repeatable) and ``--land-cover-classes`` (new decorators on each call)."""
    return [
        click.option("--land-cover", "land_cover_paths", multiple=True, metavar="PATH",
                     help="Land-cover raster of class codes (any CRS) or folder of tiles; repeatable: the clutter "
                          "class and height of the nearest pixel at every profile sample."),
        click.option("--land-cover-classes", "land_cover_classes", type=click.Path(dir_okay=False), default=None,
                     metavar="FILE.toml",
                     help="Land-cover code -> clutter class and height ([classes.50] clutter = \"urban\" "
                          "height_m = 15; default: the built-in ESA WorldCover mapping)."),
    ]


def land_cover_options(f):
    """The land-cover options (:func:`land_cover_option_list`) as one decorator."""
    return _apply(land_cover_option_list())(f)


def land_cover_kwargs(kw):
    """``land_cover`` and ``land_cover_classes`` of the API from the parsed options (popping them from ``kw``)."""
    return {"land_cover": list(kw.pop("land_cover_paths", ())) or None,
            "land_cover_classes": kw.pop("land_cover_classes", None)}


def terrain_options(f):
    """Where the terrain comes from and how finely it is sampled, and the land cover."""
    return _apply([
        click.option("--dem", "dem_paths", multiple=True, metavar="PATH",
                     help="Elevation file (GeoTIFF, .hgt, VRT, ...) or folder of tiles; repeatable."),
        click.option("--profile", "profile_csv", type=click.Path(dir_okay=False),
                     help="Surveyed profile CSV (distance_m,elevation_m) instead of --dem; A is the first row."),
        click.option("--step-m", type=POSITIVE, default=None,
                     help="Largest sample spacing [m] (default: the finest DEM pixel along the path)."),
        click.option("--fill-voids", is_flag=True, help="Interpolate across elevation voids instead of refusing."),
        *land_cover_option_list(),
    ])(f)


def frequency_options(f):
    """Working frequency."""
    return _apply([
        click.option("--freq-mhz", "freq_mhz", type=POSITIVE, default=None,
                     help="Working frequency [MHz] (overrides --band)."),
        click.option("--band", "band_name", default=None, metavar="NAME",
                     help="Frequency plan whose mean channel frequency is used (default EU868; see 'profiler bands')."),
    ])(f)


def radio_options(f):
    """Link budget, LoRa modem, antennas, losses, and ``--gateway`` (which end is the gateway: link, mast)."""
    return _apply([
        click.option("--gateway", type=click.Choice(["a", "b"]), default="a", show_default=True,
                     help="Which end is the gateway; the other end is the node."),
        *_radio_option_list(),
        calibration_option,
    ])(f)


def calibration_option(f):
    """``--calibration FILE.toml``: a survey's fitted correction as the loss term ``loss_db.calibration``."""
    return click.option("--calibration", "calibration_path", default=None, type=click.Path(dir_okay=False),
                        metavar="FILE.toml",
                        help="Apply the correction offset + slope * log10(d / 1 km) [dB] of profiler survey "
                             "--calibration-out as a loss term (the node end's clutter class table where the file "
                             "has one); the reports name the file and its SHA-256.")(f)


def batch_radio_options(f):
    """The radio options of the batch commands (network, siting, coverage): no ``--gateway``.

    There every link runs from a gateway or candidate site (end A) to a
    node (end B); the sites file's ``role`` column says which is which.
    """
    return _apply(_radio_option_list())(f)


def _radio_option_list():
    """The options of :func:`radio_options` other than ``--gateway`` (new decorators on each call)."""
    return [
        click.option("--tx-power-dbm", type=NUMBER, default=None,
                     help="The node's transmitter power [dBm] (shorthand for --tx-power-a/b-dbm of the node end; "
                          "default 14 dBm, or the plan's EIRP limit if lower)."),
        click.option("--tx-power-a-dbm", type=NUMBER, default=None,
                     help="Transmitter power at A [dBm] (default: node 14 dBm, gateway 27 dBm, each at most the "
                          "plan's EIRP limit)."),
        click.option("--tx-power-b-dbm", type=NUMBER, default=None, help="Transmitter power at B [dBm]."),
        click.option("--cap-eirp", is_flag=True, help="Lower each transmitter's power to the plan's EIRP limit."),
        click.option("--gain-a-dbi", type=NUMBER, default=2.15, show_default=True, help="Antenna gain at A [dBi]."),
        click.option("--gain-b-dbi", type=NUMBER, default=2.15, show_default=True, help="Antenna gain at B [dBi]."),
        click.option("--cable-loss-a-db", type=NON_NEGATIVE, default=0.0, show_default=True,
                     help="Feeder loss at A [dB]."),
        click.option("--cable-loss-b-db", type=NON_NEGATIVE, default=0.0, show_default=True,
                     help="Feeder loss at B [dB]."),
        click.option("--fade-margin-db", type=NUMBER, default=10.0, show_default=True,
                     help="Margin the link must keep above sensitivity [dB]."),
        click.option("--sensitivity-dbm", type=NUMBER, default=None,
                     help="Receiver sensitivity [dBm]; default computed from the LoRa settings."),
        click.option("--bw-khz", type=NUMBER, default=125.0, show_default=True,
                     help="LoRa bandwidth: 125, 250 or 500 [kHz]."),
        click.option("--noise-figure-db", type=NON_NEGATIVE, default=None,
                     help="Receiver noise figure of both ends [dB] (default: gateway 3 dB, node 6 dB)."),
        click.option("--noise-figure-a-db", type=NON_NEGATIVE, default=None, help="Receiver noise figure at A [dB]."),
        click.option("--noise-figure-b-db", type=NON_NEGATIVE, default=None, help="Receiver noise figure at B [dB]."),
        click.option("--sf", type=INTEGER, default=None,
                     help="Spreading factor 7-12 for the budget (default: the lowest that closes, else 12)."),
        click.option("--payload-bytes", type=INTEGER, default=None,
                     help="LoRa PHY payload per message for time on air [bytes] (default 12)."),
        click.option("--app-payload-bytes", type=INTEGER, default=None,
                     help="Application payload instead [bytes]: PHY = N + 13 (header, port, MIC)."),
        click.option("--dwell-time", type=click.Choice(["on", "off"]), default=None,
                     help="Uplink dwell-time limit where the plan lets the network choose (AS923, AU915)."),
        click.option("--polarization-a", default="vertical", show_default=True,
                     help="Antenna polarization at A: vertical, horizontal or degrees from vertical."),
        click.option("--polarization-b", default="vertical", show_default=True,
                     help="Antenna polarization at B: vertical, horizontal or degrees from vertical."),
        click.option("--sea-fraction", type=FiniteFloat(0.0, 1.0), default=0.0, show_default=True,
                     help="Fraction of the path over sea (spherical-Earth diffraction term; --model terrain only)."),
        click.option("--diffraction", "diffraction_method", type=click.Choice(DIFFRACTION_METHODS),
                     default="delta-bullington", show_default=True,
                     help="Diffraction model of --model terrain (ITU-R P.526-15); P.1812-8 uses delta-Bullington."),
        click.option("--extra-loss-db", type=NON_NEGATIVE, default=0.0, show_default=True,
                     help="Fixed extra loss of the path (both directions) [dB]."),
        click.option("--extra-loss-a-db", type=NON_NEGATIVE, default=0.0, show_default=True,
                     help="Fixed extra loss at A, what no model covers (meter pit, basement, metal cabinet) [dB]; "
                          "a sites file's extra_loss_db wins for its site."),
        click.option("--extra-loss-b-db", type=NON_NEGATIVE, default=0.0, show_default=True,
                     help="Fixed extra loss at B [dB] (as --extra-loss-a-db)."),
        *model_option_list(),
        *terminal_option_list(),
    ]


def model_option_list():
    """The propagation-model options (:class:`profiler.engine.model.PropagationSettings`), new on each call."""
    return [
        click.option("--model", "model", type=click.Choice(["p1812", "terrain"]), default=None,
                     help="Propagation model: p1812 (ITU-R P.1812-8: terrain, clutter, time and location "
                          "percentages; the default) or terrain (free space + --diffraction, median; the default "
                          "for a --profile without --site-a/--site-b)."),
        click.option("--time-percent", type=NUMBER, default=50.0, show_default=True,
                     help="P.1812: percentage of time the loss is not exceeded, 1 to 50 [%]; below 50 the loss is "
                          "lower, i.e. more optimistic (ducting, layer reflection)."),
        click.option("--location-percent", type=NUMBER, default=50.0, show_default=True,
                     help="P.1812: percentage of locations the loss is not exceeded, 1 to 99 [%]; 95 plans for "
                          "19 spots in 20."),
        click.option("--location-sigma-db", type=NON_NEGATIVE, default=None,
                     help="P.1812: location variability [dB] (default: P.1812-8 section 4.7 for --area-width-m, "
                          "reduced for a node antenna above its clutter; 0 for a node at sea)."),
        click.option("--area-width-m", type=POSITIVE, default=100.0, show_default=True,
                     help="P.1812: prediction resolution, the width of the square the location variability "
                          "applies to [m]."),
        click.option("--delta-n", type=NUMBER, default=None,
                     help="P.1812: refractivity lapse rate [N-units/km]; sets k = 157 / (157 - N) (default: from "
                          "--k, 39.25 for 4/3); not together with --k."),
        click.option("--n0", type=NUMBER, default=315.0, show_default=True,
                     help="P.1812: sea-level surface refractivity [N-units] (default: ITU-R P.453-14 reference "
                          "atmosphere)."),
        click.option("--coast-distance-a-km", type=NON_NEGATIVE, default=500.0, show_default=True,
                     help="P.1812: distance of A from the coast [km] (0: at sea; 500: inland)."),
        click.option("--coast-distance-b-km", type=NON_NEGATIVE, default=500.0, show_default=True,
                     help="P.1812: distance of B from the coast [km] (0: at sea; 500: inland)."),
    ]


def terminal_option_list():
    """The terminal options (clutter and indoor ends, :mod:`profiler.engine.terminals`), new on each call."""
    from ..propagation.building_entry import BUILDING_TYPES
    from ..propagation.p2108 import CLUTTER_CLASSES  # the land cover's classes, without importing rasterio

    options = []
    for end in ("a", "b"):
        end_up = end.upper()
        options += [
            click.option(f"--clutter-{end}", f"clutter_{end}", type=click.Choice(CLUTTER_CLASSES), default=None,
                         help=f"Clutter class around {end_up} (overrides the land cover there): p1812 raises the "
                              f"profile within --terminal-clutter-m of {end_up}; terrain adds ITU-R P.2108-1."),
            click.option(f"--clutter-height-{end}-m", type=POSITIVE, default=None,
                         help=f"Representative clutter height at {end_up} [m] (default: the class's default of "
                              "the run's model; needs the class)."),
            click.option(f"--indoor-{end}", f"indoor_{end}", type=click.Choice(BUILDING_TYPES), default=None,
                         help=f"{end_up} is inside a building of this type: ITU-R P.2109-1 building entry loss "
                              "at --location-percent and the path's elevation angle."),
        ]
    return options + [
        click.option("--terminal-clutter-m", type=POSITIVE, default=50.0, show_default=True,
                     help="p1812: how far from its end a terminal's clutter class sets the profile's clutter [m]."),
        click.option("--clutter-statistics", is_flag=True,
                     help="terrain: ITU-R P.2108-1 section 3.2 statistical clutter loss at a built-up end "
                          "instead of the section 3.1 height-gain correction."),
    ]


TERMINAL_OPTION_NAMES = ("clutter_a", "clutter_b", "clutter_height_a_m", "clutter_height_b_m", "terminal_clutter_m",
                         "clutter_statistics", "indoor_a", "indoor_b")

MODEL_OPTION_NAMES = ("model", "time_percent", "location_percent", "location_sigma_db", "area_width_m", "delta_n",
                      "n0", "coast_distance_a_km", "coast_distance_b_km")


def propagation_settings(kw):
    """:class:`PropagationSettings` from the parsed model options (popping them from ``kw``).

    Refuses ``--delta-n`` together with a ``--k`` given on the command line
    (each sets the effective Earth radius).
    """
    from click.core import ParameterSource

    from ..engine.model import PropagationSettings

    values = {n: kw.pop(n) for n in MODEL_OPTION_NAMES + TERMINAL_OPTION_NAMES if n in kw}
    if kw.get("calibration_path") is not None:
        from ..engine.calibration import load_calibration

        values["calibration"] = load_calibration(kw.pop("calibration_path"))
    kw.pop("calibration_path", None)
    ctx = click.get_current_context(silent=True)
    if values.get("delta_n") is not None and ctx is not None and "k_text" in ctx.params \
            and ctx.get_parameter_source("k_text") in (ParameterSource.COMMANDLINE, ParameterSource.ENVIRONMENT):
        raise ProfilerError("give either --k or --delta-n, not both: each sets the effective Earth radius "
                            "(k = 157 / (157 - delta-n))")
    return PropagationSettings(**values).validate()   # before any terrain is read


def radio_settings(kw):
    """Build :class:`RadioSettings` from the parsed radio options (popping them from ``kw``).

    Without ``--gateway`` (the batch commands) the gateway is end A.
    """
    from ..engine.radio import RadioSettings

    kw.setdefault("gateway", "a")
    names = ("gateway", "tx_power_dbm", "tx_power_a_dbm", "tx_power_b_dbm", "cap_eirp", "gain_a_dbi", "gain_b_dbi",
             "cable_loss_a_db", "cable_loss_b_db", "fade_margin_db", "sensitivity_dbm", "bw_khz", "noise_figure_db",
             "noise_figure_a_db", "noise_figure_b_db", "sf", "payload_bytes", "app_payload_bytes", "dwell_time",
             "polarization_a", "polarization_b", "sea_fraction", "diffraction_method", "extra_loss_db",
             "extra_loss_a_db", "extra_loss_b_db")
    return RadioSettings(**{n: kw.pop(n) for n in names}, propagation=propagation_settings(kw))


#: ``--plot`` of the commands whose sheets may continue on further sheets (network, coverage, siting).
CONTINUED_PLOT_HELP = ("Write the sheet: .png, .pdf or .svg. Lists that do not fit continue on further sheets: "
                       "more pages of a PDF, or NAME-2.png, NAME-3.png and so on beside NAME.png (.svg alike); "
                       "continuation sheets of an earlier run beyond the last one written are removed.")


def plot_options(f=None, *, continued: bool = False):
    """Figure output: ``@plot_options``, or ``@plot_options(continued=True)`` for a sheet with continuation
    sheets (:data:`CONTINUED_PLOT_HELP`)."""
    if f is None:
        return lambda g: plot_options(g, continued=continued)
    return _apply([
        click.option("--plot", "plot_path", type=click.Path(dir_okay=False), default=None,
                     help=CONTINUED_PLOT_HELP if continued else "Write a figure: .png, .pdf or .svg."),
        click.option("--paper", type=click.Choice(["a4", "letter"]), default="a4", show_default=True,
                     help="Paper size of the figure (landscape)."),
        click.option("--dpi", type=INTEGER, default=150, show_default=True,
                     help="Resolution of a PNG figure [dots per inch]."),
    ])(f)


def k_option(f):
    """``--k``: the effective-Earth-radius factor (text, parsed by ``geometry.parse_k_factor``)."""
    return click.option("--k", "k_text", type=KFactor(), default="4/3", show_default=True,
                        help="Effective-Earth-radius factor, a decimal or a fraction such as 4/3.")(f)


def clearance_ratio_option(help_text="Required clearance as a fraction of the first Fresnel radius."):
    """``--clearance-ratio``: required clearance as a fraction of F1 (default 0.6, common practice)."""
    return click.option("--clearance-ratio", type=NUMBER, default=0.6, show_default=True,
                        help=help_text)


def network_options(f):
    """Site list, pairs, elevation data and every link option of a batch command (network, siting)."""
    f = calibration_option(batch_radio_options(clearance_ratio_option()(frequency_options(k_option(f)))))
    return _apply([
        click.option("--dem", "dem_paths", multiple=True, metavar="PATH",
                     help="Elevation file (GeoTIFF, .hgt, VRT, ...) or folder of tiles; repeatable."),
        click.option("--sites", "sites_csv", required=True, type=click.Path(dir_okay=False), metavar="SITES.csv",
                     help="Site list: name,lat_deg,lon_deg,mast_m,role (gateway, node or candidate) [+ overrides]."),
        click.option("--pairs", "pairs_csv", default=None, type=click.Path(dir_okay=False), metavar="PAIRS.csv",
                     help="Exactly these links (header gateway,node) instead of every pair within --max-distance-km."),
        click.option("--max-distance-km", type=POSITIVE, default=None,
                     help="Longest gateway-node link considered [km] (default 50)."),
        click.option("--step-m", type=POSITIVE, default=None,
                     help="Largest sample spacing [m] (default: the finest DEM pixel along each path)."),
        click.option("--fill-voids", is_flag=True,
                     help="Interpolate across elevation voids instead of failing the link."),
        *land_cover_option_list(),
        click.option("--min-probability", type=NUMBER, default=None,
                     help="Least probability over locations that a node's uplink keeps the fade margin for the node "
                          "to count as heard, 0 to 1 (default: --location-percent / 100)."),
    ])(f)


def network_call_kwargs(kw):
    """Keyword arguments of :func:`profiler.network` from the parsed options of :func:`network_options`."""
    from ..errors import ProfilerError

    if not kw["dem_paths"]:
        raise ProfilerError("no elevation data: give --dem FILE_OR_FOLDER")
    if kw["pairs_csv"] is not None and kw["max_distance_km"] is not None:
        raise ProfilerError("give either --pairs or --max-distance-km, not both")
    radio = radio_settings(kw)
    return {"sites": kw["sites_csv"], "dem": list(kw["dem_paths"]), "pairs": kw["pairs_csv"],
            "max_distance_km": 50.0 if kw["max_distance_km"] is None else kw["max_distance_km"],
            "band": kw["band_name"], "frequency_mhz": kw["freq_mhz"], "k_factor": kw["k_text"],
            "clearance_ratio": kw["clearance_ratio"], "step_m": kw["step_m"], "fill_voids": kw["fill_voids"],
            "radio": radio, "min_probability": kw["min_probability"], **land_cover_kwargs(kw)}


def cluster_options(f):
    """``--workers N`` / ``--scheduler ADDRESS`` / ``--no-progress`` (shared by batch commands)."""
    return _apply([
        click.option("--workers", type=INTEGER, default=None,
                     help="Run on a local Dask cluster of N worker processes (pip install -e \".[cluster]\")."),
        click.option("--scheduler", default=None, metavar="ADDRESS",
                     help="Run on an existing Dask cluster, e.g. tcp://10.0.0.5:8786 (the elevation files must be "
                          "visible to every worker at the same path)."),
        click.option("--no-progress", is_flag=True, help="No progress bar (it is shown only on a terminal anyway)."),
    ])(f)


class IsoDate(click.ParamType):
    """A calendar date ``YYYY-MM-DD`` (ISO 8601)."""

    name = "YYYY-MM-DD"

    def convert(self, value, param, ctx):
        import datetime

        if isinstance(value, datetime.date):
            return value
        try:
            return datetime.date.fromisoformat(str(value).strip())
        except ValueError:
            self.fail(f"{value!r} is not a date YYYY-MM-DD (for example 2026-03-15)", param, ctx)


#: Title-block options -> SheetInfo field names (profiler.io.sheetinfo).
SHEET_FIELD_OPTIONS = (("--project", "project", "Project name"), ("--document", "document", "Document number"),
                       ("--revision", "revision", "Revision"), ("--prepared-by", "prepared_by", "Prepared by"),
                       ("--checked-by", "checked_by", "Checked by"),
                       ("--organisation", "organisation", "Organisation"))


def sheet_options(f):
    """Title-block information of the sheets: ``--sheet-info FILE.toml``, the fields one by one, ``--date``."""
    return _apply([
        click.option("--sheet-info", "sheet_info_path", type=click.Path(dir_okay=False), default=None,
                     metavar="FILE.toml", help="Title-block fields from a TOML file (project, document, revision, "
                                               "prepared_by, checked_by, organisation, notes)."),
        *[click.option(opt, dest, default=None, metavar="TEXT", help=f"{text} for the title block (wins over "
                       "--sheet-info).") for opt, dest, text in SHEET_FIELD_OPTIONS],
        click.option("--date", "sheet_date", type=IsoDate(), default=None,
                     help="Date of the sheet and of the magnetic declination (default today)."),
    ])(f)


def sheet_settings(kw):
    """``(SheetInfo, date)`` from the parsed :func:`sheet_options` (popping them from ``kw``)."""
    import datetime

    from ..io.sheetinfo import merge, read_sheet_info

    path = kw.pop("sheet_info_path")
    info = read_sheet_info(path) if path is not None else None
    info = merge(info, **{dest: kw.pop(dest) for _, dest, _ in SHEET_FIELD_OPTIONS})
    return info, kw.pop("sheet_date") or datetime.date.today()


def report_option(f):
    """``--report FILE.pdf``: the multi-page PDF (sheet, budget, record)."""
    return click.option("--report", "report_path", type=click.Path(dir_okay=False), default=None,
                        metavar="FILE.pdf", help="Write a multi-page PDF: the sheet, the budget of both directions "
                                                 "and a record of every input.")(f)


def run_record() -> dict:
    """What the ``--report`` record page lists: the full command line and every option as typed.

    Called inside a click command.  Returns ``{"command_line": [...],
    "command": "profiler link", "options": [{"option", "value", "given"}, ...]}``:
    one entry per option the user could type (click's own parameter
    objects of the command, hidden ones left out), named as on the command
    line (``--k``, ``--dem``, ``--date``), its value as text (``""`` when
    unset) and whether it was given on the command line (or from the
    environment) rather than left to its default.
    """
    import sys

    ctx = click.get_current_context(silent=True)
    options = [] if ctx is None else [_option_entry(ctx, p) for p in ctx.command.params
                                      if isinstance(p, click.Option) and not p.hidden and p.name in ctx.params]
    return {"command_line": [str(a) for a in sys.argv],
            "command": None if ctx is None else ctx.command_path,
            "options": sorted(options, key=lambda o: o["option"])}


def _option_text(value, multiple: bool = False) -> str:
    """An option's value as text: ``LAT,LON`` for a pair, repeated values joined by ", ", flags on/off."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "on" if value else "off"
    if multiple:
        return ", ".join(_option_text(v) for v in value)
    if isinstance(value, (tuple, list)):
        return ",".join(_option_text(v) for v in value)
    return str(value)


def _option_entry(ctx, param) -> dict:
    """One record entry: the option's name as typed (a flag's off-switch when off), value, given or not."""
    from click.core import ParameterSource

    value = ctx.params[param.name]
    names = param.opts
    if param.is_flag and param.secondary_opts and value is False:
        names = param.secondary_opts
    name = max(names, key=lambda n: (n.startswith("--"), len(n)))
    source = ctx.get_parameter_source(param.name)
    return {"option": name, "value": _option_text(value, param.multiple),
            "given": source in (ParameterSource.COMMANDLINE, ParameterSource.ENVIRONMENT)}
