"""The link analysis: terrain profile in, every figure a planner needs out.

:func:`analyze_link` is the one Python call behind ``profiler link``.  It
returns a :class:`LinkResult` whose :meth:`LinkResult.to_dict` is exactly the
JSON report (schema ``profiler.link/6``).
"""

from __future__ import annotations

import datetime as _dt
import math
from dataclasses import dataclass, field

import numpy as np

from .. import limits
from ..about import __version__
from ..engine.geometry import geometry_batch
from ..engine.losses import profile_paths
from ..engine.radio import RadioSettings, check_separation, radio_results
from ..engine.radio import slant_distance_m as radio_slant
from ..errors import ProfilerError
from ..io.jsonsafe import json_clean, json_number
from ..keywords import renamed_keyword
from ..lora.regional import plan as regional_plan
from ..propagation import diffraction, geometry
from ..propagation.free_space import NEAR_FIELD_RULE_OF_THUMB_M, NEAR_FIELD_WAVELENGTHS, wavelength_m
from ..terrain.profile import TerrainProfile

SCHEMA = "profiler.link/6"


@dataclass(frozen=True)
class LinkResult:
    """Everything the link analysis found; ``to_dict()`` is the JSON report.

    The nested dictionaries use the key names of the JSON contract
    documented in README ("JSON report").
    """

    site_a: dict
    site_b: dict
    frequency_mhz: float
    band: str | None
    wavelength_m: float
    k_factor: float
    effective_radius_m: float
    distance_m: float
    azimuth_a_to_b_deg: float | None
    azimuth_b_to_a_deg: float | None
    elevation_angle_a_deg: float
    elevation_angle_b_deg: float
    profile: dict
    worst: dict
    line_of_sight: bool
    fresnel_clear: bool
    clearance_ratio_required: float
    loss_db: dict
    budget: dict
    lora: dict | None
    dem: dict
    budget_downlink: dict = field(default_factory=dict)
    compliance: dict = field(default_factory=dict)
    gateway: str = "a"
    slant_distance_m: float | None = None
    radio_ends: dict = field(default_factory=dict)
    bearings: dict = field(default_factory=dict)
    rf_exposure: dict = field(default_factory=dict)
    sheet: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    model: str = "terrain"
    propagation: dict = field(default_factory=dict)
    p1812: dict | None = None
    land_cover: dict | None = None
    calibration: dict | None = None
    tool_version: str = __version__
    schema: str = SCHEMA

    def to_dict(self) -> dict:
        """The JSON report as plain Python types (lists, floats, None)."""
        profile = {k: list(v) if k == "clutter_class" else _float_list(v) for k, v in self.profile.items()}
        return {
            "schema": self.schema,
            "tool_version": self.tool_version,
            "site_a": json_clean(self.site_a),
            "site_b": json_clean(self.site_b),
            "frequency_mhz": json_number(self.frequency_mhz),
            "band": self.band,
            "model": self.model,
            "propagation": json_clean(self.propagation),
            "wavelength_m": json_number(self.wavelength_m),
            "k_factor": json_number(self.k_factor),
            "effective_radius_m": json_number(self.effective_radius_m),
            "distance_m": json_number(self.distance_m),
            "slant_distance_m": json_number(self.slant_distance_m),
            "gateway": self.gateway,
            "azimuth_a_to_b_deg": json_number(self.azimuth_a_to_b_deg),
            "azimuth_b_to_a_deg": json_number(self.azimuth_b_to_a_deg),
            **json_clean(self.bearings),
            "elevation_angle_a_deg": json_number(self.elevation_angle_a_deg),
            "elevation_angle_b_deg": json_number(self.elevation_angle_b_deg),
            "profile": profile,
            "worst": json_clean(self.worst),
            "line_of_sight": bool(self.line_of_sight),
            "fresnel_clear": bool(self.fresnel_clear),
            "clearance_ratio_required": json_number(self.clearance_ratio_required),
            "loss_db": json_clean(self.loss_db),
            "calibration": json_clean(self.calibration),
            "p1812": json_clean(self.p1812),
            "budget": json_clean(self.budget),
            "budget_downlink": json_clean(self.budget_downlink),
            "lora": json_clean(self.lora),
            "compliance": json_clean(self.compliance),
            "radio_ends": json_clean(self.radio_ends),
            "rf_exposure": json_clean(self.rf_exposure),
            "dem": json_clean(self.dem),
            "land_cover": json_clean(self.land_cover),
            "sheet": dict(self.sheet),
            "warnings": list(self.warnings),
        }


def _float_list(values):
    """An array as a list of floats, non-finite values as None (vectorized; None stays None)."""
    if values is None:
        return None
    a = np.asarray(values, dtype=float)
    out = a.tolist()
    bad = np.flatnonzero(~np.isfinite(a))
    for i in bad:  # rare: only non-finite entries
        out[i] = None
    return out


def _check_mast(value: float, which: str) -> float:
    v = float(value)
    if not math.isfinite(v) or v < 0:
        raise ProfilerError(f"--mast-{which} must be a height of 0 m or more, got {value}")
    return v


@renamed_keyword("clearance_ratio_required", "clearance_ratio", since="0.2")
@renamed_keyword("site_a_lat_lon", "site_a", since="0.2")
@renamed_keyword("site_b_lat_lon", "site_b", since="0.2")
def analyze_link(profile: TerrainProfile, *, mast_a_m: float = 10.0, mast_b_m: float = 2.0,
                 frequency_mhz: float, band: str | None = None, k_factor: float = 4.0 / 3.0,
                 clearance_ratio: float = 0.6, radio: RadioSettings | None = None,
                 name_a: str = "A", name_b: str = "B",
                 site_a: tuple[float, float] | None = None,
                 site_b: tuple[float, float] | None = None,
                 date: _dt.date | None = None, sheet_info=None) -> LinkResult:
    """Analyse a point-to-point link over a terrain profile.

    Parameters
    ----------
    profile : TerrainProfile
        Terrain from A (first sample) to B (last sample).
    mast_a_m, mast_b_m : float
        Antenna heights above ground at A and B [m].
    frequency_mhz : float
        Working frequency [MHz].
    band : str, optional
        Name of the channel plan the frequency came from (for the report).
    k_factor : float
        Effective-Earth-radius factor k (default 4/3).
    clearance_ratio : float
        Fraction of the first Fresnel radius that must be clear [-] (default 0.6; the report's
        ``clearance_ratio_required``).  The former keyword ``clearance_ratio_required`` still works
        until the next release, with a ``DeprecationWarning``.
    radio : RadioSettings, optional
        Link-budget and modem settings (defaults: 14 dBm, 2.15 dBi dipoles,
        10 dB fade margin, LoRa 125 kHz, NF 6 dB, 12-byte payload).
    name_a, name_b : str
        Site names.
    site_a, site_b : tuple of float, optional
        ``(lat_deg, lon_deg)`` of each site [deg] for the report (None for a surveyed profile).  The
        former keywords ``site_a_lat_lon``, ``site_b_lat_lon`` still work until the next release, with a
        ``DeprecationWarning``.
    date : datetime.date, optional
        Date of the sheet and of the magnetic declination (default today).
    sheet_info : profiler.io.sheetinfo.SheetInfo, optional
        Title-block fields, copied into the report's ``sheet`` block.

    Returns
    -------
    LinkResult

    References
    ----------
    Geometry: ITU-R P.526-15 section 2 and eq. (2); P.452-18 eqs. (153),
    (156a).  Diffraction: P.526-15 section 4.5 / P.452-18 section 4.2.
    Free space: P.525-4 eq. (6).
    """
    limits.check_name(name_a, "name_a")
    limits.check_name(name_b, "name_b")
    radio = (radio or RadioSettings()).validate()
    has_coordinates = site_a is not None and site_b is not None
    model_chosen = radio.propagation.model
    radio = radio.with_model(has_coordinates)
    mast_a = _check_mast(mast_a_m, "a")
    mast_b = _check_mast(mast_b_m, "b")
    if not (math.isfinite(frequency_mhz) and frequency_mhz > 0):
        raise ProfilerError(f"frequency must be a positive number of MHz, got {frequency_mhz}")
    k = radio.propagation.k_factor(geometry.parse_k_factor(k_factor))
    limits.check_values({"--mast-a": mast_a, "--mast-b": mast_b, "--freq-mhz": frequency_mhz, "--k": k,
                         "--clearance-ratio": clearance_ratio})
    if not (math.isfinite(clearance_ratio) and clearance_ratio >= 0):
        raise ProfilerError(f"--clearance-ratio must be 0 or more, got {clearance_ratio}")

    d = np.asarray(profile.distance_m, dtype=float)
    terrain = np.asarray(profile.terrain_m, dtype=float)
    total = float(d[-1])
    lam = float(wavelength_m(frequency_mhz))
    ae = float(geometry.effective_radius_m(k))
    h_a = float(terrain[0]) + mast_a
    h_b = float(terrain[-1]) + mast_b

    # The geometry of the link engine, as a batch of one.
    g = geometry_batch(d[None, :], terrain[None, :], np.array([d.size]), np.array([h_a]), np.array([h_b]),
                       lam, ae, clearance_ratio)
    bulge, los, f1, clearance = g.bulge_m[0], g.los_m[0], g.fresnel_radius_m[0], g.clearance_m[0]
    worst = _worst_block(g, profile)
    line_of_sight, fresnel_clear = bool(g.line_of_sight[0]), bool(g.fresnel_clear[0])
    angle_a, angle_b = float(g.elevation_angle_a_deg[0]), float(g.elevation_angle_b_deg[0])

    plan = regional_plan(band) if band is not None else None
    slant = float(radio_slant(total, h_a, h_b))
    check_separation(slant, lam)
    rr = radio_results(d, terrain, h_a, h_b, frequency_mhz, ae, radio, plan,
                       paths=link_paths(profile, site_a, site_b) if has_coordinates else None)

    warnings = _link_warnings(rr, slant, lam, profile, radio) + clutter_warnings(
        profile, mast_b if radio.gateway == "a" else mast_a)
    if profile.kind == "surveyed" and has_coordinates:
        warnings += _profile_length_warning(total, site_a, site_b)
    if model_chosen is None and radio.propagation.model == "terrain":
        warnings.append("the terrain model was used: ITU-R P.1812-8 needs the coordinates of both ends; with "
                        "--profile give --site-a LAT,LON and --site-b LAT,LON for it")
    loss = rr["loss_db"]
    date = date or _dt.date.today()
    ends = end_blocks(rr, radio.gateway, plan)
    return LinkResult(
        site_a={**_site(name_a, site_a, terrain[0], mast_a), **rr["terminals"]["a"]},
        site_b={**_site(name_b, site_b, terrain[-1], mast_b), **rr["terminals"]["b"]},
        frequency_mhz=float(frequency_mhz), band=band, wavelength_m=lam, k_factor=k,
        effective_radius_m=ae, distance_m=total,
        azimuth_a_to_b_deg=profile.azimuth_a_to_b_deg, azimuth_b_to_a_deg=profile.azimuth_b_to_a_deg,
        elevation_angle_a_deg=angle_a, elevation_angle_b_deg=angle_b,
        profile={"distance_m": d, "lat_deg": profile.lat_deg, "lon_deg": profile.lon_deg,
                 "terrain_m": terrain, "bulge_m": bulge, "los_m": los,
                 "fresnel_radius_m": f1, "clearance_m": clearance,
                 **({} if profile.clutter_class is None else {"clutter_class": _class_names(profile.clutter_class)}),
                 **({} if profile.clutter_height_m is None else {"clutter_height_m": profile.clutter_height_m})},
        worst=worst, line_of_sight=line_of_sight, fresnel_clear=fresnel_clear,
        clearance_ratio_required=float(clearance_ratio),
        loss_db=loss, budget=rr["budget"], lora=rr["lora"], budget_downlink=rr["budget_downlink"],
        compliance=rr["compliance"], gateway=radio.gateway, slant_distance_m=rr["slant_distance_m"],
        radio_ends=ends, rf_exposure=exposure_blocks(ends),
        bearings=magnetic_bearings(site_a, site_b, profile, h_a, h_b, date),
        sheet=sheet_block(sheet_info, date),
        dem={"kind": profile.kind, "sources": list(profile.sources), "voids_filled": int(profile.voids_filled),
             "void_stretches_m": [list(map(float, x)) for x in profile.void_stretches_m]},
        warnings=warnings, model=radio.propagation.model, propagation=radio.propagation.to_dict(k),
        p1812=rr["p1812"], land_cover=profile.land_cover,
        calibration=calibration_block(radio, rr["terminals"][radio.node].get("clutter")),
    )


def calibration_block(radio, node_clutter):
    """The report's ``calibration``: ``{path, sha256, offset_db, slope_db_per_decade, clutter}`` or None.

    ``clutter`` is the class whose ``[clutter.NAME]`` table was taken for
    the node end's class ``node_clutter`` (None: the file's overall terms),
    ``offset_db`` and ``slope_db_per_decade`` the terms applied.
    """
    cal = radio.propagation.calibration
    if cal is None:
        return None
    return {"path": cal.path, "sha256": cal.sha256, **cal.applied(node_clutter)}


#: Antenna height above ground below which a node is likely inside the clutter around it [m] (common
#: practice; ITU-R P.2108-1 Table 3 gives representative clutter heights of 10 m and more).
LOW_NODE_M = 10.0


def link_paths(profile, site_a, site_b) -> dict:
    """The ``paths`` of the engine for one profile: :func:`profiler.engine.losses.profile_paths` and ``clutter_class``.

    ``clutter_class`` (shape (1, N), index into
    :data:`profiler.terrain.landcover.CLUTTER_CLASSES`, -1 none) is there
    when the profile came with a land cover, else None.
    """
    paths = profile_paths(profile, site_a, site_b)
    paths["clutter_class"] = None if profile.clutter_class is None else np.asarray(profile.clutter_class)[None, :]
    return paths


def clutter_warnings(profile, node_mast_m: float) -> list:
    """Warnings on the clutter of a profile: samples without a land-cover class, or no clutter at all for a low node."""
    if profile.land_cover is not None and profile.land_cover["samples_without_class"]:
        return [f"{profile.land_cover['samples_without_class']} of {len(profile.distance_m)} profile samples have "
                "no land-cover class (void or outside the land cover): no clutter is assumed there"]
    if profile.clutter_height_m is None and node_mast_m < LOW_NODE_M:
        return [f"no land cover: the path has no clutter, so a node antenna {node_mast_m:g} m above ground (below "
                f"{LOW_NODE_M:g} m) is likely optimistic; give --land-cover FILE for the clutter along the path"]
    return []


def _class_names(clutter_class) -> list:
    """Clutter class names per sample, None where there is no class."""
    from ..terrain.landcover import CLUTTER_CLASSES

    names = list(CLUTTER_CLASSES) + [None]
    return [names[i] for i in np.asarray(clutter_class, dtype=int).tolist()]   # -1 picks the trailing None


def _profile_length_warning(length_m: float, site_a, site_b) -> list:
    """A warning when a surveyed profile's length and the sites' geodesic distance differ by over 5 %."""
    from ..terrain.geodesic import geodesic_inverse

    apart_m = float(geodesic_inverse(site_a[0], site_a[1], site_b[0], site_b[1])[0])
    if abs(length_m - apart_m) <= 0.05 * max(apart_m, length_m):
        return []
    return [f"the profile is {length_m / 1000:.3f} km long but the sites are {apart_m / 1000:.3f} km apart: the "
            "losses use the profile's distances, the sites only give the direction and the path-centre latitude"]


def _worst_block(g, profile) -> dict:
    """The report's ``worst``: the sample of least clearance ratio of a batch-of-one geometry ``g``.

    References
    ----------
    ITU-R P.526-15 eqs. (22)-(23) with h = -c: the diffraction parameter
    v = -sqrt(2) c / F1; the knife-edge loss J(v), eq. (31).
    """
    d = np.asarray(profile.distance_m, dtype=float)
    i_worst = int(g.worst_index[0])
    worst_ratio = float(g.worst_ratio[0])
    # Diffraction parameter at the worst point: v = -sqrt(2) c / F1 (P.526-15 eqs. 22-23 with h = -c).
    worst_v = -math.sqrt(2.0) * worst_ratio
    worst = {
        "distance_m": float(d[i_worst]),
        "clearance_m": float(g.clearance_m[0][i_worst]),
        "fresnel_ratio": worst_ratio,
        "v": worst_v,
        "terrain_m": float(np.asarray(profile.terrain_m, dtype=float)[i_worst]),
        "knife_edge_loss_db": float(diffraction.j_knife_edge_db(worst_v)),
    }
    if profile.lat_deg is not None:
        worst["lat_deg"] = float(profile.lat_deg[i_worst])
        worst["lon_deg"] = float(profile.lon_deg[i_worst])
    return worst


def _link_warnings(rr, slant, lam, profile, radio) -> list:
    """The radio warnings, plus near-field coupling, interpolated voids and a polarization mismatch."""
    warnings = list(rr["warnings"])
    near_field_m = max(NEAR_FIELD_WAVELENGTHS * lam, NEAR_FIELD_RULE_OF_THUMB_M)
    if slant < near_field_m:
        warnings.append(
            f"the antennas are {slant:.2f} m apart, closer than {NEAR_FIELD_WAVELENGTHS:g} wavelengths "
            f"({NEAR_FIELD_WAVELENGTHS * lam:.2f} m) or the {NEAR_FIELD_RULE_OF_THUMB_M:g} m rule of thumb: "
            "near-field coupling makes these results unreliable")
    if profile.voids_filled:
        warnings.append(f"{profile.voids_filled} profile samples were interpolated across elevation voids")
    loss = rr["loss_db"]
    if radio.polarization_a != radio.polarization_b and loss["polarization"] > 0:
        warnings.append(f"antenna polarizations differ: {loss['polarization']:.1f} dB mismatch loss included")
    return warnings


def _site(name, lat_lon, ground, mast) -> dict:
    """The report's ``site_a`` / ``site_b``."""
    return {"name": name,
            "lat_deg": None if lat_lon is None else float(lat_lon[0]),
            "lon_deg": None if lat_lon is None else float(lat_lon[1]),
            "ground_m": float(ground), "mast_m": float(mast), "antenna_amsl_m": float(ground + mast)}


def end_blocks(rr: dict, gateway: str, plan) -> dict:
    """The report's ``radio_ends``: per end ("a", "b") its role and radio, so the sheet's table is reproducible.

    Each end: ``role``, ``tx_power_dbm``, ``gain_dbi``, ``cable_loss_db``,
    ``noise_figure_db``, ``eirp_dbm`` (P + G - L), ``transmit_frequency_mhz``
    (uplink frequency for the node, downlink for the gateway),
    ``max_eirp_dbm`` (the plan's limit, None without a plan),
    ``sensitivity_dbm`` and ``sensitivity_source`` of its receiver.
    """
    up, down = rr["budget"], rr["budget_downlink"] or rr["budget"]
    out = {}
    for role, e in rr["ends"].items():
        tx_budget, rx_budget = (up, down) if role == "node" else (down, up)
        out[e["end"]] = {
            "role": role,
            "tx_power_dbm": e["tx_power_dbm"], "gain_dbi": e["gain_dbi"], "cable_loss_db": e["cable_loss_db"],
            "noise_figure_db": e["noise_figure_db"],
            "eirp_dbm": e["tx_power_dbm"] + e["gain_dbi"] - e["cable_loss_db"],
            "transmit_frequency_mhz": tx_budget["frequency_mhz"],
            "max_eirp_dbm": None if plan is None else float(plan.max_eirp_dbm),
            "sensitivity_dbm": rx_budget["sensitivity_dbm"], "sensitivity_source": rx_budget["sensitivity_source"],
        }
    return dict(sorted(out.items()))


def exposure_blocks(ends: dict) -> dict:
    """The report's ``rf_exposure``: per transmitting end the far-field distances (profiler.lora.rf_exposure)."""
    from ..lora.rf_exposure import rf_exposure_block

    return {key: {"role": e["role"], **rf_exposure_block(e["eirp_dbm"], e["transmit_frequency_mhz"])}
            for key, e in ends.items()}


MAGNETIC_KEYS = ("declination_a_deg", "declination_b_deg", "azimuth_a_to_b_magnetic_deg",
                 "azimuth_b_to_a_magnetic_deg", "magnetic_model", "compass_caution_a", "compass_caution_b")


def magnetic_bearings(site_a_lat_lon, site_b_lat_lon, profile, h_a, h_b, date) -> dict:
    """The magnetic-bearing keys (profiler.terrain.magnetic.bearing_block) or all None without coordinates."""
    if site_a_lat_lon is None or site_b_lat_lon is None or profile.azimuth_a_to_b_deg is None:
        return dict.fromkeys(MAGNETIC_KEYS)
    from ..terrain.magnetic import bearing_block

    return bearing_block(site_a_lat_lon[0], site_a_lat_lon[1], site_b_lat_lon[0], site_b_lat_lon[1],
                         profile.azimuth_a_to_b_deg, profile.azimuth_b_to_a_deg, date, h_a, h_b)


def sheet_block(sheet_info, date) -> dict:
    """The report's ``sheet``: title-block fields (empty strings: blank boxes) and the ISO date."""
    from ..io.sheetinfo import SheetInfo

    return {**(sheet_info or SheetInfo()).to_dict(), "date": date.isoformat()}
