"""The terminals of a batch of links: clutter around each end, indoor ends and fixed per-end losses.

One implementation for every command (link, mast, network, siting,
coverage): :func:`profiler.engine.losses.path_loss_batch` calls
:func:`terminal_ends` and then, by model,

* ``--model p1812`` (:func:`p1812_clutter`): ITU-R P.1812-8 section 3.2
  adds the representative clutter height R to the interior profile points
  only; a terminal's class (``--clutter-a``/``-b``, a sites file's
  ``clutter``) sets R of the interior points within ``--terminal-clutter-m``
  of that end, and of the end sample itself, which P.1812 leaves out of
  the profile but whose R at the node gives u(h) of σL (section 4.7).  No
  term is added: an antenna below its clutter diffracts over it in the
  path itself.
* ``--model terrain`` (:func:`terrain_clutter`): an end whose antenna is
  below its R gets ITU-R P.2108-1 section 3.1: the path is computed with
  that antenna at R and the height-gain correction A_h(h, R) is added.  With
  ``--clutter-statistics`` an end in built-up clutter (suburban, urban,
  dense-urban) gets the statistical clutter loss of section 3.2 at the
  location percentage instead (the path at the antenna's own height); an end
  in water, open land or trees keeps section 3.1 (section 3.2 is a model of
  urban and suburban clutter).  Never both at one end.  An antenna at
  ground level (0 m) in clutter has no section 3.1 value (h > 0): its loss
  is not a number, which a link refuses and a batch reports in that row.  Out of range:
  section 3.1 outside 0.03-3 GHz, or section 3.2 outside 0.5-67 GHz, is
  refused in one line; a link shorter than 0.25 km gets no section 3.2
  term (and a warning); one shorter than 1 km gets it at the node's end
  only (section 3.2 applies it at both ends from 1 km).
* both models: an indoor end (``--indoor-a``/``-b``, a sites file's
  ``indoor``) adds the building entry loss of ITU-R P.2109-1 not exceeded
  with the run's location percentage, at the elevation angle of the
  straight line from that antenna to the other (ITU-R P.452-18 eq. (153)
  with the run's effective radius, as the link report's
  ``elevation_angle_a_deg``/``_b_deg``); outside 0.08-100 GHz refused.
  With ``p1812`` the location term of P.1812 and this loss are each taken
  at the location percentage; their combined distribution is not formed
  here.  And each end's fixed extra loss (``--extra-loss-a-db``/``-b-db``,
  a sites file's ``extra_loss_db``), with no model behind it.

Where an end's class comes from: the override (the sites file's cell, else
the option), else the land cover at that end sample (``paths["clutter_class"]``
and ``paths["clutter_m"]``), else none.  An override's R: its given height,
else the class's default for the run's model
(:func:`profiler.terrain.landcover.default_height_m`).
"""

from __future__ import annotations

import numpy as np

from ..errors import ProfilerError
from ..propagation import building_entry, p2108
from ..propagation.geometry import elevation_angle_deg
from ..terrain.landcover import CLUTTER_CLASSES, default_height_m

#: Classes that take ITU-R P.2108-1 section 3.2 under ``--clutter-statistics`` (urban and suburban clutter).
BUILT_UP_CLASSES = ("suburban", "urban", "dense-urban")
#: Source codes of an end's class, as the link report names them.
SOURCES = ("none", "option", "sites", "land cover")


def _end_column(values, n, end):
    """The values at the end sample (column 0 for A, n - 1 for B) of an (L, N) array, or None."""
    if values is None:
        return None
    values = np.asarray(values)
    rows = np.arange(values.shape[0])
    return values[rows, 0] if end == "a" else values[rows, np.asarray(n) - 1]


def _end(radio, end, n_links, given, paths, n):
    """One end's class index, R, source, indoor index and extra loss, arrays (L,)."""
    prop = radio.propagation
    option_class = getattr(prop, f"clutter_{end}")
    cls = np.full(n_links, -1 if option_class is None else CLUTTER_CLASSES.index(option_class))
    source = np.where(cls >= 0, 1, 0)
    height = getattr(prop, f"clutter_height_{end}_m")
    if option_class is not None and height is None:
        height = default_height_m(option_class, prop.model)
    r = np.full(n_links, np.nan if height is None else float(height))
    site_cls = given.get("clutter_index")
    if site_cls is not None:
        site_cls = np.asarray(site_cls).astype(np.int64)
        defaults = np.array([default_height_m(c, prop.model) for c in CLUTTER_CLASSES])
        site_r = np.asarray(given.get("clutter_height_m", np.full(n_links, np.nan)), dtype=float)
        site_r = np.where(np.isfinite(site_r), site_r, defaults[np.maximum(site_cls, 0)])
        r = np.where(site_cls >= 0, site_r, r)
        source = np.where(site_cls >= 0, 2, source)
        cls = np.where(site_cls >= 0, site_cls, cls)
    land_cls = _end_column(paths.get("clutter_class"), n, end) if paths and n is not None else None
    land_r = _end_column(paths.get("clutter_m"), n, end) if paths and n is not None else None
    if land_cls is not None:
        use = (cls < 0) & (land_cls >= 0)
        cls = np.where(use, land_cls, cls)
        r = np.where(use, np.nan if land_r is None else land_r, r)
        source = np.where(use, 3, source)
    indoor_option = getattr(prop, f"indoor_{end}")
    indoor = np.full(n_links, -1 if indoor_option is None else building_entry.BUILDING_TYPES.index(indoor_option))
    site_indoor = given.get("indoor_index")
    if site_indoor is not None:
        site_indoor = np.asarray(site_indoor).astype(np.int64)
        indoor = np.where(site_indoor >= 0, site_indoor, indoor)
    extra = np.full(n_links, float(getattr(radio, f"extra_loss_{end}_db")))
    site_extra = given.get("extra_loss_db")
    if site_extra is not None:
        extra = np.where(np.isfinite(site_extra), site_extra, extra)
    return {"clutter_index": cls.astype(np.int64), "clutter_height_m": np.where(cls >= 0, r, np.nan),
            "source": source.astype(np.int64), "indoor_index": indoor.astype(np.int64), "extra_loss_db": extra}


def terminal_ends(radio, n_links, paths=None, overrides=None, n=None) -> dict:
    """Each end's clutter class, R, indoor type and fixed extra loss, one value per link.

    Parameters
    ----------
    radio : profiler.engine.radio.RadioSettings
        Validated settings with the model resolved (``propagation.clutter_a``, ..., ``extra_loss_a_db``, ...).
    n_links : int
        Number of links L (count).
    paths : dict, optional
        ``clutter_class`` (L, N) [index into ``CLUTTER_CLASSES``, -1 none] and
        ``clutter_m`` (L, N) [m] of a land cover, when there is one.
    overrides : dict, optional
        ``{"gateway": {...}, "node": {...}}`` per-link arrays of a sites file:
        ``clutter_index`` (-1: the option), ``clutter_height_m`` [m] (NaN:
        the class's default), ``indoor_index`` (-1: the option) and
        ``extra_loss_db`` [dB] (NaN: the option).
    n : ndarray of int, shape (L,), optional
        Samples per link [-] (the land cover's end sample of B is ``n - 1``).

    Returns
    -------
    dict
        ``{"a": {...}, "b": {...}}``, each with arrays (L,): ``clutter_index``
        (-1 none), ``clutter_height_m`` [m] (NaN none), ``source`` (index
        into :data:`SOURCES`), ``indoor_index`` (into
        ``building_entry.BUILDING_TYPES``, -1 outdoors), ``extra_loss_db`` [dB].
    """
    overrides = overrides or {}
    out = {}
    for end in ("a", "b"):
        role = "gateway" if radio.gateway == end else "node"
        out[end] = _end(radio, end, n_links, overrides.get(role, {}), paths or {}, n)
    return out


def any_terminal(radio, paths=None, overrides=None) -> bool:
    """Whether a batch may have a clutter or indoor end (so the profiles are needed, not just reductions).

    Parameters
    ----------
    radio : profiler.engine.radio.RadioSettings
        The run's settings.
    paths : dict, optional
        The batch's ``paths`` (a land cover's ``clutter_class``).
    overrides : dict, optional
        The sites file's per-role arrays.

    Returns
    -------
    bool
        True when an option, a sites cell or a land cover gives an end a class.
    """
    prop = radio.propagation
    if prop.clutter_a is not None or prop.clutter_b is not None:
        return True
    if paths and paths.get("clutter_class") is not None:
        return True
    return any(np.any(np.asarray(o.get("clutter_index", -1)) >= 0) for o in (overrides or {}).values())


def p1812_clutter(d, n, clutter_m, ends, terminal_clutter_m):
    """The P.1812 clutter column with each overridden end's R near that end [m].

    Parameters
    ----------
    d : ndarray, shape (L, N)
        Distance from A [m].
    n : ndarray of int, shape (L,)
        Samples per link [-].
    clutter_m : ndarray, shape (L, N)
        R of every sample without the overrides [m] (zeros without a land cover).
    ends : dict
        :func:`terminal_ends`.
    terminal_clutter_m : float
        Reach of an end's class along the path [m].

    Returns
    -------
    clutter_m : ndarray, shape (L, N)
        R [m]: the interior samples within ``terminal_clutter_m`` of an
        overridden end (the nearer end where both reach), and that end's own
        sample, take the end's R.
    near_counts : dict
        ``{"a": (L,), "b": (L,)}`` the number of interior samples each override set.

    References
    ----------
    .. [1] ITU-R P.1812-8 Annex 1 section 3.2 (R added to the interior
       profile points, eq. (1b)) and section 4.7 (R at the receiver for u(h)).
    """
    d = np.asarray(d, dtype=float)
    n = np.asarray(n)
    rows = np.arange(d.shape[0])
    cols = np.arange(d.shape[1])[None, :]
    length = d[rows, n - 1][:, None]
    interior = (cols >= 1) & (cols <= (n - 2)[:, None])
    out = np.array(clutter_m, dtype=float)
    counts = {}
    for end, far in (("a", d), ("b", length - d)):
        other = length - d if end == "a" else d
        over = ends[end]["source"] != 0
        over &= ends[end]["source"] != SOURCES.index("land cover")
        near = interior & (far <= terminal_clutter_m) & ((far < other) | ((far == other) & (end == "a")))
        near &= over[:, None]
        out = np.where(near, ends[end]["clutter_height_m"][:, None], out)
        col = 0 if end == "a" else n - 1
        out[rows, col] = np.where(over, ends[end]["clutter_height_m"], out[rows, col])
        counts[end] = near.sum(axis=1)
    return out, counts


def _frequency_check(f_ghz, needed, valid_range, what):
    """Refuse a frequency outside a method's range when some end needs the method."""
    low, high = valid_range
    if np.any(needed) and not low <= f_ghz <= high:
        raise ProfilerError(f"{what} covers {low:g} to {high:g} GHz, not {f_ghz:g} GHz: leave out the terminal's "
                            "clutter or indoor options at this frequency")


def terrain_clutter(frequency_mhz, h_a, h_b, ground_a, ground_b, length_m, ends, radio):
    """``--model terrain``: each end's P.2108-1 clutter term and the antenna heights of the path.

    Parameters
    ----------
    frequency_mhz : float
        Frequency [MHz].
    h_a, h_b : ndarray, shape (L,)
        Antenna heights [m AMSL].
    ground_a, ground_b : ndarray, shape (L,)
        Ground at the ends [m AMSL].
    length_m : ndarray, shape (L,)
        Path length [m].
    ends : dict
        :func:`terminal_ends`.
    radio : profiler.engine.radio.RadioSettings
        ``propagation.clutter_statistics``, ``propagation.location_percent`` and ``gateway``.

    Returns
    -------
    dict
        ``h_a``, ``h_b`` [m AMSL] (raised to ground + R where section 3.1
        applies), ``clutter_a``, ``clutter_b`` [dB] (A_h or L_ctt, 0 where
        none) and ``skipped_a``, ``skipped_b`` (bool: section 3.2 out of its
        distance range, no term).

    References
    ----------
    .. [1] ITU-R P.2108-1 Annex 1 section 3.1 (eqs. 2a-2g, the path at R)
       and section 3.2 (eqs. 3a-6, 0.25 km; both ends from 1 km).
    """
    f_ghz = frequency_mhz * 1e-3
    prop = radio.propagation
    length_km = np.asarray(length_m, dtype=float) * 1e-3
    names = np.array(CLUTTER_CLASSES)
    out = {}
    stats = {}
    for end, h, ground in (("a", h_a, ground_a), ("b", h_b, ground_b)):
        e = ends[end]
        cls, r = e["clutter_index"], e["clutter_height_m"]
        above = np.asarray(h, dtype=float) - ground
        inside = (cls >= 0) & np.isfinite(r) & (above < np.where(np.isfinite(r), r, 0.0))
        built = np.isin(names[np.maximum(cls, 0)], BUILT_UP_CLASSES) & (cls >= 0)
        stats[end] = inside & built & prop.clutter_statistics
        gain = inside & ~stats[end]
        _frequency_check(f_ghz, gain, p2108.HEIGHT_GAIN_FREQUENCY_GHZ, "ITU-R P.2108-1 section 3.1")
        _frequency_check(f_ghz, stats[end], p2108.STATISTICAL_FREQUENCY_GHZ, "ITU-R P.2108-1 section 3.2")
        a_h = p2108.height_gain_correction_db(f_ghz, above, names[np.maximum(cls, 0)],
                                              np.where(np.isfinite(r), r, 1.0))
        out[f"h_{end}"] = np.where(gain, ground + np.where(np.isfinite(r), r, 0.0), h)
        out[f"clutter_{end}"] = np.where(gain, a_h, 0.0)
    node = radio.node
    both = stats["a"] & stats["b"]
    l_ctt = p2108.terrestrial_clutter_loss_db(f_ghz, length_km, prop.location_percent)
    for end in ("a", "b"):
        apply = stats[end] & ~(both & (length_km < p2108.BOTH_ENDS_MIN_DISTANCE_KM) & (end != node))
        ok = np.isfinite(l_ctt)
        out[f"clutter_{end}"] = np.where(apply & ok, l_ctt, out[f"clutter_{end}"])
        out[f"skipped_{end}"] = stats[end] & ~(apply & ok)
    return out


def indoor_losses(frequency_mhz, h_a, h_b, length_m, ae, ends, location_percent):
    """Building entry loss of each indoor end, ITU-R P.2109-1 at the location percentage [dB].

    Parameters
    ----------
    frequency_mhz : float
        Frequency [MHz].
    h_a, h_b : ndarray, shape (L,)
        Antenna heights [m AMSL] (the antennas themselves, not raised).
    length_m : ndarray, shape (L,)
        Path length [m].
    ae : float or ndarray
        Effective Earth radius [m].
    ends : dict
        :func:`terminal_ends`.
    location_percent : float
        Probability with which the loss is not exceeded [%].

    Returns
    -------
    dict
        ``building_entry_a``, ``building_entry_b`` [dB] (0 outdoors),
        ``elevation_angle_a_deg``, ``elevation_angle_b_deg`` [deg].

    References
    ----------
    .. [1] ITU-R P.2109-1 Annex 1 section 3, eq. (1) and Table 1.
    .. [2] ITU-R P.452-18 eq. (153) (elevation angle of the straight line).
    """
    f_ghz = frequency_mhz * 1e-3
    length = np.maximum(np.asarray(length_m, dtype=float), 1e-9)
    out = {"elevation_angle_a_deg": elevation_angle_deg(h_a, h_b, length, ae),
           "elevation_angle_b_deg": elevation_angle_deg(h_b, h_a, length, ae)}
    types = np.array(building_entry.BUILDING_TYPES)
    for end in ("a", "b"):
        idx = ends[end]["indoor_index"]
        indoor = idx >= 0
        _frequency_check(f_ghz, indoor, building_entry.FREQUENCY_GHZ, "ITU-R P.2109-1")
        out[f"building_entry_{end}"] = np.zeros(np.shape(idx))   # outdoors: no loss (and nothing to compute)
        if indoor.any():
            out[f"building_entry_{end}"][indoor] = building_entry.building_entry_loss_db(
                f_ghz, out[f"elevation_angle_{end}_deg"][indoor], location_percent, types[idx[indoor]])
    return out


def terminal_report(ends, i, model) -> dict:
    """One link's ends as the link report gives them: class, R, where they came from, indoor type.

    Parameters
    ----------
    ends : dict
        :func:`terminal_ends`.
    i : int
        Link index (count).
    model : str
        The run's model (the defaults' origin).

    Returns
    -------
    dict
        ``{"a": {...}, "b": {...}}`` with ``clutter`` (class or None),
        ``clutter_height_m`` [m] (None), ``clutter_source`` (``option``,
        ``sites``, ``land cover`` or None), ``indoor`` (type or None) and
        ``extra_loss_db`` [dB].
    """
    out = {}
    for end in ("a", "b"):
        e = ends[end]
        cls, indoor, src = int(e["clutter_index"][i]), int(e["indoor_index"][i]), int(e["source"][i])
        r = float(e["clutter_height_m"][i])
        out[end] = {"clutter": CLUTTER_CLASSES[cls] if cls >= 0 else None,
                    "clutter_height_m": r if cls >= 0 and np.isfinite(r) else None,
                    "clutter_source": SOURCES[src] if cls >= 0 else None,
                    "indoor": building_entry.BUILDING_TYPES[indoor] if indoor >= 0 else None,
                    "extra_loss_db": float(e["extra_loss_db"][i])}
    return out


def terminal_warnings(info, radio) -> list:
    """What the terminal terms of a batch of one left out, as the link report's warnings.

    Parameters
    ----------
    info : dict
        The ``terminals`` block of :func:`profiler.engine.losses.path_loss_batch` (one link).
    radio : profiler.engine.radio.RadioSettings
        The run's settings.

    Returns
    -------
    list of str
        Section 3.2 of ITU-R P.2108-1 left out at an end (path too short), and
        a P.1812 override with no profile sample within ``--terminal-clutter-m``.
    """
    warnings = []
    for end in ("a", "b"):
        if bool(np.asarray(info[f"skipped_{end}"])[0]):
            warnings.append(f"ITU-R P.2108-1 section 3.2 left out at end {end.upper()}: it covers paths of 0.25 km "
                            "or more, and both ends only from 1 km (the node's end is kept)")
        source = int(info["ends"][end]["source"][0])
        if radio.propagation.model == "p1812" and source in (1, 2) and int(np.asarray(info[f"near_{end}"])[0]) == 0:
            warnings.append(f"no profile sample within --terminal-clutter-m {radio.propagation.terminal_clutter_m:g} "
                            f"m of end {end.upper()}: its clutter class only sets the location variability; use a "
                            "finer --step-m or a larger --terminal-clutter-m")
    return warnings
