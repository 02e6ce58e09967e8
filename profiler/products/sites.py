"""Site lists and link pairs of a radio network (``profiler network``).

A network is a table of sites -- gateways, nodes and candidate gateway sites
-- read from a CSV file (:func:`read_sites_csv`) or built from Python records
(:func:`sites_from_records`), plus the links to compute: either the pairs
listed in a pairs file (:func:`read_pairs_csv`) or every gateway-like site
with every node within a distance (:func:`candidate_pairs`).

A malformed file is refused whole with one :class:`~profiler.errors.ProfilerError`
naming the file, the line and what to do; nothing is half-read.

References
----------
.. [1] C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87, 43-55
   (2013): the inverse geodesic problem, as implemented by PROJ's ``geod``
   (``pyproj.Geod.inv``), for the site-to-site distances.
.. [2] Y. Shafranovich, "Common Format and MIME Type for Comma-Separated
   Values (CSV) Files", IETF RFC 4180, 2005 (quoting of fields).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ProfilerError, refuse_empty_path
from ..limits import check_name

__all__ = ["SiteTable", "read_sites_csv", "sites_from_records", "read_pairs_csv", "pairs_from_names",
           "candidate_pairs", "ROLES", "GATEWAY_ROLES", "REQUIRED_COLUMNS", "OVERRIDE_COLUMNS", "TERMINAL_COLUMNS",
           "MAX_MAST_M"]

ROLES = ("gateway", "node", "candidate")
"""Site roles; a ``candidate`` is a possible gateway site and links like a gateway."""

GATEWAY_ROLES = ("gateway", "candidate")

REQUIRED_COLUMNS = ("name", "lat_deg", "lon_deg", "mast_m", "role")

OVERRIDE_COLUMNS = ("tx_power_dbm", "gain_dbi", "cable_loss_db", "noise_figure_db")
"""Optional numeric per-site columns; an empty cell means "use the command option"."""

TERMINAL_COLUMNS = ("clutter", "clutter_height_m", "indoor", "extra_loss_db")
"""Optional per-site terminal columns (:mod:`profiler.engine.terminals`); an empty cell means "use the option"."""

MAX_MAST_M = 1000.0
"""Highest accepted antenna height above ground [m]."""

_SITES_HINT = "header name,lat_deg,lon_deg,mast_m,role (see docs/network.md, 'Site and pairs files')"


# --------------------------------------------------------------------------- the table
@dataclass(frozen=True, eq=False)
class SiteTable:
    """The sites of a network, one array element per site (file row order).

    Attributes
    ----------
    names : tuple of str
        Unique, non-empty site names (surrounding spaces stripped).
    lat_deg, lon_deg : ndarray of float
        Coordinates [deg, WGS84].
    mast_m : ndarray of float
        Antenna height above ground [m], 0 to :data:`MAX_MAST_M`.
    role : ndarray of str
        ``"gateway"``, ``"node"`` or ``"candidate"`` (lower case).
    tx_power_dbm, gain_dbi, cable_loss_db, noise_figure_db : ndarray of float
        Per-site overrides of the command's radio options [dBm, dBi, dB, dB];
        NaN where the file leaves the cell empty.
    polarization : tuple of (str or None)
        Per-site polarization override as written (``vertical``,
        ``horizontal`` or degrees from vertical); None where empty.
    cost : ndarray of float
        Relative cost of a candidate site (> 0, default 1); NaN for
        gateways and nodes.
    source : str
        Where the table came from (file path), for messages.
    clutter : tuple of (str or None)
        Clutter class around the site (``water``, ``open``, ``suburban``,
        ``urban``, ``trees``, ``dense-urban``); None where empty.
    clutter_height_m : ndarray of float
        Representative clutter height of that class at the site [m]; NaN
        where empty (the class's default for the run's model).
    indoor : tuple of (str or None)
        ``traditional`` or ``thermally-efficient`` for a site inside a
        building; None where empty.
    extra_loss_db : ndarray of float
        Fixed extra loss at the site [dB]; NaN where empty.
    """

    names: tuple
    lat_deg: np.ndarray
    lon_deg: np.ndarray
    mast_m: np.ndarray
    role: np.ndarray
    tx_power_dbm: np.ndarray
    gain_dbi: np.ndarray
    cable_loss_db: np.ndarray
    noise_figure_db: np.ndarray
    polarization: tuple
    cost: np.ndarray
    source: str = "sites"
    clutter: tuple | None = None
    clutter_height_m: np.ndarray | None = None
    indoor: tuple | None = None
    extra_loss_db: np.ndarray | None = None

    def __post_init__(self):
        n = len(self.names)
        empty = np.full(n, np.nan)
        empty.setflags(write=False)
        for name, value in (("clutter", (None,) * n), ("clutter_height_m", empty), ("indoor", (None,) * n),
                            ("extra_loss_db", empty)):
            if getattr(self, name) is None:
                object.__setattr__(self, name, value)

    def __len__(self) -> int:
        return len(self.names)

    def indices(self, role: str) -> np.ndarray:
        """Row indices of the sites with ``role`` (``gateway``, ``node`` or ``candidate``)."""
        key = str(role).strip().lower()
        if key not in ROLES:
            raise ProfilerError(f"unknown site role {role!r}; use one of {', '.join(ROLES)}")
        return np.flatnonzero(self.role == key)

    def gateway_indices(self) -> np.ndarray:
        """Row indices of the gateway-like sites (``gateway`` and ``candidate``), in row order."""
        return np.flatnonzero(np.isin(self.role, GATEWAY_ROLES))

    def index_of(self, name: str) -> int:
        """Row index of the site called ``name`` (surrounding spaces ignored)."""
        key = str(name).strip()
        try:
            return self.names.index(key)
        except ValueError:
            raise ProfilerError(f"no site called {key!r} in {self.source}; check the spelling") from None

    def to_records(self) -> list[dict]:
        """One dict per site; NaN overrides and costs become None."""
        def cell(array, i):
            value = float(array[i])
            return value if math.isfinite(value) else None

        return [{"name": self.names[i], "lat_deg": float(self.lat_deg[i]), "lon_deg": float(self.lon_deg[i]),
                 "mast_m": float(self.mast_m[i]), "role": str(self.role[i]),
                 **{col: cell(getattr(self, col), i) for col in OVERRIDE_COLUMNS},
                 "polarization": self.polarization[i], "cost": cell(self.cost, i),
                 "clutter": self.clutter[i], "clutter_height_m": cell(self.clutter_height_m, i),
                 "indoor": self.indoor[i], "extra_loss_db": cell(self.extra_loss_db, i)}
                for i in range(len(self))]


# --------------------------------------------------------------------------- CSV reading
def _read_rows(path, what: str, option: str, hint: str) -> tuple[list[str], list[tuple[int, list[str]]]]:
    """Header (lower case, stripped) and ``(line number, cells)`` data rows of a CSV file."""
    refuse_empty_path(path, option, f"the {what} CSV file")
    p = Path(path)
    if not p.is_file():
        raise ProfilerError(f"{what} file not found: {p}; check {option}")
    try:
        text = p.read_bytes().decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = p.read_bytes()[:exc.start].count(b"\n") + 1
        raise ProfilerError(f"{what} file {p} line {line}: not UTF-8 text; save it as a UTF-8 CSV file") from None
    except OSError as exc:
        raise ProfilerError(f"cannot read {what} file {p}: {exc.strerror}; check {option}") from None
    reader = csv.reader(text.splitlines(keepends=True))
    rows, header = [], None
    try:
        for cells in reader:
            if not any(c.strip() for c in cells):
                continue
            if header is None:
                header = [c.strip().lower() for c in cells]
            else:
                rows.append((reader.line_num, cells))
    except csv.Error as exc:
        raise ProfilerError(f"{what} file {p} line {reader.line_num}: {exc}; check the quoting") from None
    if header is None:
        raise ProfilerError(f"{what} file {p} is empty; it needs a {hint}")
    dup = sorted({c for c in header if c and header.count(c) > 1})
    if dup:
        raise ProfilerError(f"{what} file {p} line 1: column {dup[0]} appears twice; keep one")
    return header, rows


def _cells_by_column(header, rows, columns, where) -> dict[str, list[str]]:
    """The stripped cells of ``columns`` (absent optional columns give empty cells)."""
    for line, cells in rows:
        if len(cells) > len(header):
            raise ProfilerError(f"{where(line)}: {len(cells)} fields but the header has {len(header)}; "
                                "put text that contains commas in double quotes")
    out = {}
    for col in columns:
        if col in header:
            j = header.index(col)
            out[col] = [cells[j].strip() if j < len(cells) else "" for _, cells in rows]
        else:
            out[col] = [""] * len(rows)
    return out


def _numbers(cells, lines, column, where, *, required, low=-math.inf, high=math.inf,
             low_open=False, default=math.nan) -> np.ndarray:
    """Parse a numeric column; empty cells give ``default`` unless ``required``."""
    values = np.full(len(cells), float(default))
    for k, text in enumerate(cells):       # site lists are small; only parsing loops here
        if not text:
            if required:
                raise ProfilerError(f"{where(lines[k])}: {column} is empty; give a number")
            continue
        try:
            value = float(text)
        except ValueError:
            raise ProfilerError(f"{where(lines[k])}: {column} {text!r} is not a number; "
                                "write a decimal number such as 12.5") from None
        if not math.isfinite(value):
            raise ProfilerError(f"{where(lines[k])}: {column} {text!r} must be a finite number")
        if value < low or value > high or (low_open and value == low):
            rng = f"greater than {low:g}" if high == math.inf else f"{low:g} to {high:g}"
            raise ProfilerError(f"{where(lines[k])}: {column} {text} is out of range; use {rng}")
        values[k] = value
    return values


def _separator_hint(header) -> str:
    """``; the file seems to use ';' ...`` when the header is one cell holding ``;`` or a tab; else empty."""
    if len(header) == 1:
        for sep, shown in ((";", "';'"), ("\t", "tabs")):
            if sep in header[0]:
                return f"; the file seems to use {shown} as separator, but it must be comma-separated"
    return ""


def _build_table(header, rows, where, source) -> SiteTable:
    """Validate data rows and build the :class:`SiteTable`."""
    missing = [c for c in REQUIRED_COLUMNS if c not in header]
    if missing:
        raise ProfilerError(f"{where(1)}: missing column {', '.join(missing)}{_separator_hint(header)}; "
                            f"the file needs a {_SITES_HINT}")
    if not rows:
        raise ProfilerError(f"{source} has a header but no sites; add one row per site")
    cols = _cells_by_column(header, rows, REQUIRED_COLUMNS + OVERRIDE_COLUMNS + TERMINAL_COLUMNS
                            + ("polarization", "cost"), where)
    lines = [line for line, _ in rows]
    names = cols["name"]
    seen: dict[str, int] = {}
    for k, name in enumerate(names):
        if not name:
            raise ProfilerError(f"{where(lines[k])}: the site name is empty; give every site a name")
        check_name(name, f"{where(lines[k])}: the site name")
        if name in seen:
            raise ProfilerError(f"{where(lines[k])}: site name {name!r} already used on line {seen[name]}; "
                                "site names must be unique")
        seen[name] = lines[k]
    roles = [r.lower() for r in cols["role"]]
    for k, role in enumerate(roles):
        if role not in ROLES:
            raise ProfilerError(f"{where(lines[k])}: role {cols['role'][k]!r} is not known; "
                                f"use {', '.join(ROLES)}")
    role = np.array(roles, dtype=str)
    num = dict(lines=lines, where=where)
    lat = _numbers(cols["lat_deg"], column="lat_deg", required=True, **num)
    lon = _numbers(cols["lon_deg"], column="lon_deg", required=True, **num)
    _check_lat_lon(lat, lon, cols, lines, where)
    mast = _numbers(cols["mast_m"], column="mast_m", required=True, low=0.0, high=MAX_MAST_M, **num)
    overrides = {c: _numbers(cols[c], column=c, required=False,
                             low=0.0 if c in ("cable_loss_db", "noise_figure_db") else -math.inf, **num)
                 for c in OVERRIDE_COLUMNS}
    cost = _numbers(cols["cost"], column="cost", required=False, low=0.0, low_open=True, default=1.0, **num)
    cost[role != "candidate"] = np.nan
    polarization = tuple(_polarization(text, lines[k], where) for k, text in enumerate(cols["polarization"]))
    terminals = _terminal_columns(cols, lines, where, num)
    for array in (lat, lon, mast, cost, *overrides.values(), terminals["clutter_height_m"],
                  terminals["extra_loss_db"]):
        array.setflags(write=False)
    role.setflags(write=False)
    return SiteTable(names=tuple(names), lat_deg=lat, lon_deg=lon, mast_m=mast, role=role,
                     polarization=polarization, cost=cost, source=source, **overrides, **terminals)


def _terminal_columns(cols, lines, where, num) -> dict:
    """The ``clutter``, ``clutter_height_m``, ``indoor`` and ``extra_loss_db`` columns, checked."""
    from ..limits import LIMITS
    from ..propagation.building_entry import BUILDING_TYPES
    from ..propagation.p2108 import CLUTTER_CLASSES

    def names(column, valid):
        out = []
        for k, text in enumerate(cols[column]):
            value = text.lower() or None
            if value is not None and value not in valid:
                raise ProfilerError(f"{where(lines[k])}: {column} {text!r} is not known; use {', '.join(valid)} "
                                    "or leave the cell empty")
            out.append(value)
        return tuple(out)

    clutter = names("clutter", CLUTTER_CLASSES)
    height_limit, loss_limit = LIMITS["--clutter-height-a-m"], LIMITS["--extra-loss-a-db"]
    height = _numbers(cols["clutter_height_m"], column="clutter_height_m", required=False, low=height_limit.low,
                      high=height_limit.high, low_open=True, **num)
    for k in np.flatnonzero(np.isfinite(height)):
        if clutter[k] is None:
            raise ProfilerError(f"{where(lines[k])}: clutter_height_m needs the clutter class in the same row; "
                                "fill in clutter or empty clutter_height_m")
    extra = _numbers(cols["extra_loss_db"], column="extra_loss_db", required=False, low=loss_limit.low,
                     high=loss_limit.high, **num)
    return {"clutter": clutter, "clutter_height_m": height, "indoor": names("indoor", BUILDING_TYPES),
            "extra_loss_db": extra}


def _check_lat_lon(lat, lon, cols, lines, where) -> None:
    """Refuse the first row whose latitude or longitude is out of range (hinting at swapped columns)."""
    from ..terrain.geodesic import swapped_hint

    bad = np.flatnonzero((np.abs(lat) > 90.0) | (np.abs(lon) > 180.0))
    if bad.size == 0:
        return
    k = int(bad[0])
    if abs(lat[k]) > 90.0:
        raise ProfilerError(f"{where(lines[k])}: lat_deg {cols['lat_deg'][k]} is out of range; use -90 to 90"
                            f"{swapped_hint(lat[k], lon[k])}")
    raise ProfilerError(f"{where(lines[k])}: lon_deg {cols['lon_deg'][k]} is out of range; use -180 to 180")


def _polarization(text: str, line: int, where) -> str | None:
    """A polarization cell checked by :func:`profiler.propagation.polarization.polarization_angle_deg`;
    None when empty."""
    from ..propagation.polarization import polarization_angle_deg

    if not text:
        return None
    try:
        polarization_angle_deg(text)
    except ProfilerError as exc:
        raise ProfilerError(f"{where(line)}: {exc}") from None
    return text


def read_sites_csv(path) -> SiteTable:
    """Read a network site list.

    Parameters
    ----------
    path : str or os.PathLike
        CSV file, UTF-8 with or without a byte-order mark, comma separated,
        with a header row holding at least ``name,lat_deg,lon_deg,mast_m,role``
        (any order, any case).  Optional columns: ``tx_power_dbm``,
        ``gain_dbi``, ``cable_loss_db``, ``noise_figure_db``, ``polarization``,
        ``clutter`` (a clutter class), ``clutter_height_m`` (its height,
        needs ``clutter``), ``indoor`` (``traditional`` or
        ``thermally-efficient``), ``extra_loss_db`` (per-site overrides; an
        empty cell uses the command option) and
        ``cost`` (candidate sites only; default 1, must be > 0).  Other
        columns are ignored; blank lines are skipped.

    Returns
    -------
    SiteTable
        The sites in file order.

    Raises
    ------
    ProfilerError
        For a missing file, non-UTF-8 text, an empty file, a missing column,
        an empty or duplicate name, an unknown role, a value that is not a
        number or is out of range (lat -90..90, lon -180..180 [deg], mast
        0..1000 [m], losses and noise figure >= 0 [dB], cost > 0, clutter
        height above 0 and at most 100 [m], extra loss 0..300 [dB]), an
        unknown polarization, clutter class or building type, or a clutter
        height without its class.  The message names the file and the line.
    """
    header, rows = _read_rows(path, "sites", "--sites", _SITES_HINT)
    p = Path(path)
    return _build_table(header, rows, lambda line: f"sites file {p} line {line}", str(p))


def sites_from_records(records, source: str = "sites") -> SiteTable:
    """Build a :class:`SiteTable` from dicts with the columns of the sites file.

    Parameters
    ----------
    records : iterable of dict
        One mapping per site with at least ``name, lat_deg, lon_deg, mast_m,
        role``; optional keys as in :func:`read_sites_csv`; None means empty.
    source : str
        Name used in messages.

    Returns
    -------
    SiteTable
        Validated exactly like a file; messages say ``site N`` (from 1).
    """
    records = list(records)
    keys: list[str] = []
    for rec in records:
        if not isinstance(rec, dict):
            raise ProfilerError(f"{source}: each site must be a dict with keys {', '.join(REQUIRED_COLUMNS)}")
        keys.extend(k for k in rec if k not in keys)
    header = [str(k).strip().lower() for k in keys] or list(REQUIRED_COLUMNS)
    rows = [(n, ["" if rec.get(k) is None else str(rec.get(k)) for k in keys]) for n, rec in enumerate(records, 1)]
    return _build_table(header, rows, lambda n: f"{source}: site {n}" if n else source, source)


# --------------------------------------------------------------------------- pairs
def _check_pairs(names, lines, sites: SiteTable, where) -> tuple[np.ndarray, np.ndarray]:
    """Site indices of (gateway, node) name pairs; unknown names, roles and duplicates refused."""
    lookup = {name: i for i, name in enumerate(sites.names)}
    gw_idx = np.empty(len(names), dtype=np.int64)
    node_idx = np.empty(len(names), dtype=np.int64)
    seen: dict[tuple[int, int], int] = {}
    for k, (gw, node) in enumerate(names):
        for column, name, roles in (("gateway", gw, GATEWAY_ROLES), ("node", node, ("node",))):
            if name not in lookup:
                raise ProfilerError(f"{where(lines[k])}: {column} {name!r} is not in {sites.source}; "
                                    "use the names of the sites file")
            role = str(sites.role[lookup[name]])
            if role not in roles:
                raise ProfilerError(f"{where(lines[k])}: {column} {name!r} is a {role}; the {column} column "
                                    f"takes {' or '.join(roles)} sites")
        pair = (lookup[gw], lookup[node])
        if pair in seen:
            raise ProfilerError(f"{where(lines[k])}: pair {gw!r}, {node!r} already listed on line {seen[pair]}; "
                                "list each pair once")
        seen[pair] = lines[k]
        gw_idx[k], node_idx[k] = pair
    return gw_idx, node_idx


def read_pairs_csv(path, sites: SiteTable) -> tuple[np.ndarray, np.ndarray]:
    """Read the links to compute: a CSV file with header ``gateway,node`` (site names).

    Parameters
    ----------
    path : str or os.PathLike
        CSV file (UTF-8, with or without byte-order mark); other columns are
        ignored.
    sites : SiteTable
        The network's sites.

    Returns
    -------
    gw_idx, node_idx : ndarray of int64
        Row indices into ``sites`` of each pair, in file order.

    Raises
    ------
    ProfilerError
        For a missing column, an unknown name, a ``gateway`` that is not a
        gateway or candidate, a ``node`` that is not a node, a duplicate
        pair, or a file without pairs; the message names the line.
    """
    header, rows = _read_rows(path, "pairs", "--pairs", "header gateway,node and one row per link")
    p = Path(path)
    where = lambda line: f"pairs file {p} line {line}"  # noqa: E731
    missing = [c for c in ("gateway", "node") if c not in header]
    if missing:
        raise ProfilerError(f"{where(1)}: missing column {', '.join(missing)}{_separator_hint(header)}; "
                            "the file needs a header gateway,node with site names")
    if not rows:
        raise ProfilerError(f"pairs file {p} has a header but no pairs; add one row gateway,node per link")
    cols = _cells_by_column(header, rows, ("gateway", "node"), where)
    return _check_pairs(list(zip(cols["gateway"], cols["node"])), [line for line, _ in rows], sites, where)


def pairs_from_names(pairs, sites: SiteTable) -> tuple[np.ndarray, np.ndarray]:
    """Row indices of ``(gateway_name, node_name)`` pairs, checked like :func:`read_pairs_csv`."""
    names = [(str(g).strip(), str(n).strip()) for g, n in pairs]
    if not names:
        raise ProfilerError("no pairs given; list at least one (gateway, node) pair")
    return _check_pairs(names, list(range(1, len(names) + 1)), sites, lambda n: f"pair {n}")


def candidate_pairs(sites: SiteTable, max_distance_m: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Every gateway-like site with every node no farther apart than ``max_distance_m``.

    Parameters
    ----------
    sites : SiteTable
        The network's sites; ``gateway`` and ``candidate`` rows pair with
        ``node`` rows.
    max_distance_m : float
        Longest link to keep [m], > 0.

    Returns
    -------
    gw_idx, node_idx : ndarray of int64
        Row indices into ``sites``, ordered by gateway row, then node row.
    distance_m : ndarray of float
        Geodesic distance of each pair on the WGS84 ellipsoid [m].

    References
    ----------
    Karney (2013), inverse geodesic problem (``pyproj.Geod.inv``, vectorized).
    """
    from pyproj import Geod

    try:
        limit = float(max_distance_m)
    except (TypeError, ValueError):
        limit = math.nan
    if not (math.isfinite(limit) and limit > 0):
        raise ProfilerError(f"the largest link distance must be a positive number, got {max_distance_m!r}")
    gw, node = np.meshgrid(sites.gateway_indices(), sites.indices("node"), indexing="ij")
    gw, node = gw.ravel(), node.ravel()
    if gw.size == 0:
        empty = np.empty(0, dtype=np.int64)
        return empty, empty.copy(), np.empty(0, dtype=float)
    _, _, dist = Geod(ellps="WGS84").inv(sites.lon_deg[gw], sites.lat_deg[gw],
                                         sites.lon_deg[node], sites.lat_deg[node])
    dist = np.asarray(dist, dtype=float)
    keep = dist <= limit
    return gw[keep].astype(np.int64), node[keep].astype(np.int64), dist[keep]


def site_overrides(sites, idx):
    """Per-link override arrays of the sites at ``idx`` (NaN: use the command's option)."""
    from ..propagation.polarization import polarization_angle_deg

    pol = np.array([math.nan if p is None else polarization_angle_deg(p) for p in sites.polarization])
    from ..propagation.building_entry import BUILDING_TYPES
    from ..propagation.p2108 import CLUTTER_CLASSES

    clutter = np.array([-1 if c is None else CLUTTER_CLASSES.index(c) for c in sites.clutter])
    indoor = np.array([-1 if c is None else BUILDING_TYPES.index(c) for c in sites.indoor])
    return {"tx_power_dbm": sites.tx_power_dbm[idx], "gain_dbi": sites.gain_dbi[idx],
            "cable_loss_db": sites.cable_loss_db[idx], "noise_figure_db": sites.noise_figure_db[idx],
            "polarization_deg": pol[idx], "clutter_index": clutter[idx],
            "clutter_height_m": sites.clutter_height_m[idx], "indoor_index": indoor[idx],
            "extra_loss_db": sites.extra_loss_db[idx]}
