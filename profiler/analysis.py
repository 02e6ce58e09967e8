"""The link analysis: terrain profile in, every figure a planner needs out.

:func:`analyze_link` is the one Python call behind ``profiler link``.  It
returns a :class:`LinkResult` whose :meth:`LinkResult.to_dict` is exactly the
JSON report (schema ``profiler.link/2``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import __version__, budget, diffraction, geometry, limits
from .bands import NEAR_FIELD_RULE_OF_THUMB_M, NEAR_FIELD_WAVELENGTHS, wavelength_m
from .errors import ProfilerError
from .terrain import TerrainProfile

SCHEMA = "profiler.link/2"
DIFFRACTION_METHODS = ("delta-bullington", "bullington", "knife-edge", "none")


@dataclass(frozen=True)
class RadioSettings:
    """Radio, antenna and modem settings for the link budget.

    All powers in dBm, gains in dBi, losses and margins in dB.  Site A is
    the transmitter; path loss is reciprocal, so the margin holds for the
    reverse direction when both ends use the same power and sensitivity.
    """

    tx_power_dbm: float = 14.0
    gain_a_dbi: float = 2.15
    gain_b_dbi: float = 2.15
    cable_loss_a_db: float = 0.0
    cable_loss_b_db: float = 0.0
    fade_margin_db: float = 10.0
    sensitivity_dbm: float | None = None
    bw_khz: float = 125.0
    noise_figure_db: float = 6.0
    sf: int | None = None
    payload_bytes: int = 12
    polarization_a: str = "vertical"
    polarization_b: str = "vertical"
    sea_fraction: float = 0.0
    diffraction_method: str = "delta-bullington"
    extra_loss_db: float = 0.0

    def validate(self) -> "RadioSettings":
        """Check the settings; raise :class:`ProfilerError` on the first problem."""
        limits.check_fields(self)  # physical ranges of every field with an option in limits.LIMITS
        for name in ("tx_power_dbm", "gain_a_dbi", "gain_b_dbi", "cable_loss_a_db", "cable_loss_b_db",
                     "fade_margin_db", "noise_figure_db", "extra_loss_db", "sea_fraction"):
            value = getattr(self, name)
            if not math.isfinite(float(value)):
                raise ProfilerError(f"--{name.replace('_', '-')} must be a finite number, got {value}")
        for name in ("cable_loss_a_db", "cable_loss_b_db", "extra_loss_db"):
            if getattr(self, name) < 0:
                raise ProfilerError(f"--{name.replace('_', '-')} must not be negative, got {getattr(self, name)}")
        if not 0.0 <= self.sea_fraction <= 1.0:
            raise ProfilerError(f"--sea-fraction must be between 0 and 1, got {self.sea_fraction}")
        if self.diffraction_method not in DIFFRACTION_METHODS:
            raise ProfilerError(f"unknown diffraction method {self.diffraction_method!r}; use one of {', '.join(DIFFRACTION_METHODS)}")
        if self.sensitivity_dbm is not None and not math.isfinite(self.sensitivity_dbm):
            raise ProfilerError("--sensitivity-dbm must be a finite number")
        if self.sf is not None:
            budget.lora_sensitivity_dbm(self.sf, self.bw_khz, self.noise_figure_db)
        budget.lora_sensitivity_dbm(12, self.bw_khz, self.noise_figure_db)
        budget.lora_time_on_air_ms(12, self.bw_khz, self.payload_bytes)
        budget.polarization_angle_deg(self.polarization_a)
        budget.polarization_angle_deg(self.polarization_b)
        return self


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
    lora: dict
    dem: dict
    warnings: list = field(default_factory=list)
    tool_version: str = __version__
    schema: str = SCHEMA

    def to_dict(self) -> dict:
        """The JSON report as plain Python types (lists, floats, None)."""
        profile = {k: _float_list(v) for k, v in self.profile.items()}
        return {
            "schema": self.schema,
            "tool_version": self.tool_version,
            "site_a": _clean(self.site_a),
            "site_b": _clean(self.site_b),
            "frequency_mhz": _num(self.frequency_mhz),
            "band": self.band,
            "wavelength_m": _num(self.wavelength_m),
            "k_factor": _num(self.k_factor),
            "effective_radius_m": _num(self.effective_radius_m),
            "distance_m": _num(self.distance_m),
            "azimuth_a_to_b_deg": _num(self.azimuth_a_to_b_deg),
            "azimuth_b_to_a_deg": _num(self.azimuth_b_to_a_deg),
            "elevation_angle_a_deg": _num(self.elevation_angle_a_deg),
            "elevation_angle_b_deg": _num(self.elevation_angle_b_deg),
            "profile": profile,
            "worst": _clean(self.worst),
            "line_of_sight": bool(self.line_of_sight),
            "fresnel_clear": bool(self.fresnel_clear),
            "clearance_ratio_required": _num(self.clearance_ratio_required),
            "loss_db": _clean(self.loss_db),
            "budget": _clean(self.budget),
            "lora": _clean(self.lora),
            "dem": _clean(self.dem),
            "warnings": list(self.warnings),
        }


def _num(x):
    """A JSON-safe number: float, int or None for missing / non-finite."""
    if x is None:
        return None
    if isinstance(x, (bool, np.bool_)):
        return bool(x)
    if isinstance(x, (int, np.integer)):
        return int(x)
    x = float(x)
    return x if math.isfinite(x) else None


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


def _clean(obj):
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if isinstance(obj, (str,)) or obj is None:
        return obj
    if isinstance(obj, (bool, np.bool_, int, float, np.integer, np.floating)):
        return _num(obj)
    return obj


def _check_mast(value: float, which: str) -> float:
    v = float(value)
    if not math.isfinite(v) or v < 0:
        raise ProfilerError(f"--mast-{which} must be a height of 0 m or more, got {value}")
    return v


def analyze_link(profile: TerrainProfile, *, mast_a_m: float = 10.0, mast_b_m: float = 2.0,
                 frequency_mhz: float, band: str | None = None, k_factor: float = 4.0 / 3.0,
                 clearance_ratio_required: float = 0.6, radio: RadioSettings | None = None,
                 name_a: str = "A", name_b: str = "B",
                 site_a_lat_lon: tuple[float, float] | None = None,
                 site_b_lat_lon: tuple[float, float] | None = None) -> LinkResult:
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
    clearance_ratio_required : float
        Fraction of the first Fresnel radius that must be clear (default 0.6).
    radio : RadioSettings, optional
        Link-budget and modem settings (defaults: 14 dBm, 2.15 dBi dipoles,
        10 dB fade margin, LoRa 125 kHz, NF 6 dB, 12-byte payload).
    name_a, name_b : str
        Site names.
    site_a_lat_lon, site_b_lat_lon : tuple, optional
        Site coordinates [deg] for the report (None for a surveyed profile).

    Returns
    -------
    LinkResult

    References
    ----------
    Geometry: ITU-R P.526-15 section 2 and eq. (2); P.452-18 eqs. (153),
    (156a).  Diffraction: P.526-15 section 4.5 / P.452-18 section 4.2.
    Free space: P.525-4 eq. (6).
    """
    radio = (radio or RadioSettings()).validate()
    mast_a = _check_mast(mast_a_m, "a")
    mast_b = _check_mast(mast_b_m, "b")
    if not (math.isfinite(frequency_mhz) and frequency_mhz > 0):
        raise ProfilerError(f"frequency must be a positive number of MHz, got {frequency_mhz}")
    k = geometry.parse_k_factor(k_factor)
    limits.check_values({"--mast-a": mast_a, "--mast-b": mast_b, "--freq-mhz": frequency_mhz, "--k": k,
                         "--clearance-ratio": clearance_ratio_required})
    if not (math.isfinite(clearance_ratio_required) and clearance_ratio_required >= 0):
        raise ProfilerError(f"--clearance-ratio must be 0 or more, got {clearance_ratio_required}")

    d = np.asarray(profile.distance_m, dtype=float)
    terrain = np.asarray(profile.terrain_m, dtype=float)
    total = float(d[-1])
    lam = float(wavelength_m(frequency_mhz))
    ae = float(geometry.effective_radius_m(k))
    h_a = float(terrain[0]) + mast_a
    h_b = float(terrain[-1]) + mast_b

    d2 = total - d
    bulge = geometry.earth_bulge_m(d, d2, ae)
    los = geometry.line_of_sight_m(d, total, h_a, h_b)
    f1 = geometry.fresnel_radius_m(d, d2, lam)
    clearance = geometry.clearance_m(los, terrain, bulge)
    ratio = geometry.clearance_ratio(clearance, f1)

    interior = slice(1, -1)
    i_worst = 1 + int(np.argmin(ratio[interior]))
    worst_ratio = float(ratio[i_worst])
    # Diffraction parameter at the worst point: v = -sqrt(2) c / F1 (P.526-15 eqs. 22-23 with h = -c).
    worst_v = -math.sqrt(2.0) * worst_ratio
    worst = {
        "distance_m": float(d[i_worst]),
        "clearance_m": float(clearance[i_worst]),
        "fresnel_ratio": worst_ratio,
        "v": worst_v,
        "terrain_m": float(terrain[i_worst]),
        "knife_edge_loss_db": float(diffraction.j_knife_edge_db(worst_v)),
    }
    if profile.lat_deg is not None:
        worst["lat_deg"] = float(profile.lat_deg[i_worst])
        worst["lon_deg"] = float(profile.lon_deg[i_worst])
    line_of_sight = bool(np.all(clearance[interior] > 0.0))
    fresnel_clear = bool(np.all(ratio[interior] >= clearance_ratio_required))

    angle_a = float(geometry.elevation_angle_deg(h_a, h_b, total, ae))
    angle_b = float(geometry.elevation_angle_deg(h_b, h_a, total, ae))

    loss, budget_dict, lora = radio_results(d, terrain, h_a, h_b, frequency_mhz, ae, radio)

    warnings = []
    near_field_m = max(NEAR_FIELD_WAVELENGTHS * lam, NEAR_FIELD_RULE_OF_THUMB_M)
    if total < near_field_m:
        warnings.append(
            f"the antennas are {total:.2f} m apart, closer than {NEAR_FIELD_WAVELENGTHS:g} wavelengths "
            f"({NEAR_FIELD_WAVELENGTHS * lam:.2f} m) or the {NEAR_FIELD_RULE_OF_THUMB_M:g} m rule of thumb: "
            "near-field coupling makes these results unreliable")
    if profile.voids_filled:
        warnings.append(f"{profile.voids_filled} profile samples were interpolated across elevation voids")
    if radio.polarization_a != radio.polarization_b and loss["polarization"] > 0:
        warnings.append(f"antenna polarizations differ: {loss['polarization']:.1f} dB mismatch loss included")

    def site(name, lat_lon, ground, mast):
        return {"name": name,
                "lat_deg": None if lat_lon is None else float(lat_lon[0]),
                "lon_deg": None if lat_lon is None else float(lat_lon[1]),
                "ground_m": float(ground), "mast_m": float(mast), "antenna_amsl_m": float(ground + mast)}

    return LinkResult(
        site_a=site(name_a, site_a_lat_lon, terrain[0], mast_a),
        site_b=site(name_b, site_b_lat_lon, terrain[-1], mast_b),
        frequency_mhz=float(frequency_mhz), band=band, wavelength_m=lam, k_factor=k,
        effective_radius_m=ae, distance_m=total,
        azimuth_a_to_b_deg=profile.azimuth_a_to_b_deg, azimuth_b_to_a_deg=profile.azimuth_b_to_a_deg,
        elevation_angle_a_deg=angle_a, elevation_angle_b_deg=angle_b,
        profile={"distance_m": d, "lat_deg": profile.lat_deg, "lon_deg": profile.lon_deg,
                 "terrain_m": terrain, "bulge_m": bulge, "los_m": los,
                 "fresnel_radius_m": f1, "clearance_m": clearance},
        worst=worst, line_of_sight=line_of_sight, fresnel_clear=fresnel_clear,
        clearance_ratio_required=float(clearance_ratio_required),
        loss_db=loss, budget=budget_dict, lora=lora,
        dem={"kind": profile.kind, "sources": list(profile.sources), "voids_filled": int(profile.voids_filled)},
        warnings=warnings,
    )


def diffraction_losses(distance_m, terrain_m, antenna_a_amsl_m, antenna_b_amsl_m, frequency_mhz,
                       effective_radius_m, polarization="vertical", sea_fraction=0.0) -> dict:
    """Knife-edge, Bullington and delta-Bullington losses of one profile [dB].

    Returns a dict with keys ``knife_edge``, ``bullington``,
    ``delta_bullington``, ``spherical_earth``, ``effective_height_a_m``,
    ``effective_height_b_m``.

    References
    ----------
    ITU-R P.526-15 sections 4.1 and 4.5; ITU-R P.452-18 section 4.2.
    """
    ke = diffraction.knife_edge(distance_m, terrain_m, antenna_a_amsl_m, antenna_b_amsl_m,
                                frequency_mhz, effective_radius_m)
    bu = diffraction.bullington(distance_m, terrain_m, antenna_a_amsl_m, antenna_b_amsl_m,
                                frequency_mhz, effective_radius_m)
    db = diffraction.delta_bullington(distance_m, terrain_m, antenna_a_amsl_m, antenna_b_amsl_m,
                                      frequency_mhz, effective_radius_m, polarization=polarization,
                                      sea_fraction=sea_fraction)
    return {
        "knife_edge": float(ke.loss_db),
        "bullington": float(bu),
        "delta_bullington": float(db.loss_db),
        "spherical_earth": float(db.spherical_earth_db),
        "effective_height_a_m": float(db.effective_height_a_m),
        "effective_height_b_m": float(db.effective_height_b_m),
    }


def radio_results(d, terrain, h_a, h_b, frequency_mhz, ae, radio: RadioSettings):
    """Losses, link budget and LoRa table for one geometry.

    Parameters
    ----------
    d, terrain : ndarray
        Profile distances from A [m] and terrain heights [m AMSL].
    h_a, h_b : float
        Antenna heights [m AMSL] (ground + mast).
    frequency_mhz : float
        Working frequency [MHz].
    ae : float
        Effective Earth radius [m].
    radio : RadioSettings
        Validated settings.

    Returns
    -------
    loss : dict
        The ``loss_db`` block of the JSON report.
    budget : dict
        The ``budget`` block (``margin_db``, ``closes``, ``sf``, ...).
    lora : dict
        The ``lora`` block (per-SF table and lowest closing SF).
    """
    pol_a = budget.polarization_angle_deg(radio.polarization_a)
    pol_b = budget.polarization_angle_deg(radio.polarization_b)
    # The spherical-Earth term needs one polarization: that of the transmitting antenna.
    ground_pol = "vertical" if abs(math.cos(math.radians(pol_a))) >= math.sqrt(0.5) else "horizontal"
    parts = diffraction_losses(d, terrain, h_a, h_b, frequency_mhz, ae, ground_pol, radio.sea_fraction)
    method = radio.diffraction_method
    diff = 0.0 if method == "none" else parts[method.replace("-", "_")]
    free = float(budget.free_space_loss_db(d[-1], frequency_mhz))
    pol_loss = float(budget.polarization_mismatch_db(pol_a, pol_b))
    total = free + diff + radio.extra_loss_db + pol_loss
    loss = {"free_space": free, "diffraction": diff, "extra": float(radio.extra_loss_db),
            "polarization": pol_loss, "total": total, "diffraction_method": method, **parts}

    antennas = dict(tx_power_dbm=radio.tx_power_dbm, gain_a_dbi=radio.gain_a_dbi, gain_b_dbi=radio.gain_b_dbi,
                    cable_loss_a_db=radio.cable_loss_a_db, cable_loss_b_db=radio.cable_loss_b_db,
                    fade_margin_db=radio.fade_margin_db)
    # The received level does not depend on the sensitivity: get it first, then choose the SF.
    rx_power_dbm = budget.link_budget(total, sensitivity_dbm=0.0, **antennas).rx_power_dbm
    table = budget.lora_table(rx_power_dbm, radio.bw_khz, radio.noise_figure_db,
                              radio.payload_bytes, radio.fade_margin_db)
    lowest = budget.lowest_closing_sf(table)
    sf = radio.sf if radio.sf is not None else (lowest if lowest is not None else 12)
    sensitivity = (radio.sensitivity_dbm if radio.sensitivity_dbm is not None
                   else float(budget.lora_sensitivity_dbm(sf, radio.bw_khz, radio.noise_figure_db)))
    final = budget.link_budget(total, sensitivity_dbm=sensitivity, **antennas)
    budget_dict = {"tx_power_dbm": final.tx_power_dbm, "eirp_dbm": final.eirp_dbm,
                   "rx_power_dbm": final.rx_power_dbm, "sensitivity_dbm": final.sensitivity_dbm,
                   "margin_db": final.margin_db, "fade_margin_required_db": final.fade_margin_required_db,
                   "closes": bool(final.closes), "sf": int(sf),
                   "sensitivity_source": "given" if radio.sensitivity_dbm is not None else "lora"}
    lora = {"bw_khz": float(radio.bw_khz), "payload_bytes": int(radio.payload_bytes),
            "noise_figure_db": float(radio.noise_figure_db),
            "per_sf": table, "lowest_closing_sf": lowest}
    return loss, budget_dict, lora
