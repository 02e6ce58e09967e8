"""The output grid of a coverage run and the pixel -> radial-sample lookup.

References
----------
.. [2] J. P. Snyder, "Map Projections: A Working Manual", USGS PP 1395
   (1987), ch. 25 (azimuthal equidistant projection: true distance and
   azimuth from the centre).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np

from ...errors import ProfilerError

BANDS = ("terrain_m", "worst_fresnel_ratio", "path_loss_db", "rx_level_dbm", "margin_db", "downlink_margin_db",
         "recommended_dr", "line_of_sight", "location_sigma_db", "probability_heard")
LAND_COVER_BANDS = ("clutter_class", "clutter_height_m")
"""Bands of a run with a land cover: the land-cover code and R at the pixel's sample."""
INDOOR_BANDS = ("building_entry_loss_db",)
"""Band of a run with an indoor node (``--indoor-b``)."""
COMPOSITE_BANDS = BANDS + ("best_gateway", "gateways_heard")


def band_names(parts) -> list:
    """The bands a run's radial results hold, in the GeoTIFF's order (:data:`BANDS`, land cover, indoor)."""
    return [b for b in BANDS + LAND_COVER_BANDS + INDOOR_BANDS if b in parts]
MAX_PIXELS = 40_000_000
"""Largest grid held in memory (pixels); a larger one streams to the GeoTIFF tile by tile (see ``max_memory_mb``)."""
MAX_STREAM_PIXELS = 4_000_000_000
"""Largest grid accepted at all (pixels): 4e9 float32 values per band, a BigTIFF."""


@dataclass(frozen=True)
class Gateway:
    """One site of a coverage run (picklable)."""

    name: str
    lat_deg: float
    lon_deg: float
    mast_m: float
    overrides: dict = field(default_factory=dict)
    role: str = "gateway"
    """``gateway`` (an existing gateway) or ``candidate`` (a possible site, from ``--sites``)."""


# --------------------------------------------------------------------------- output grid
@dataclass(frozen=True)
class CoverageGrid:
    """The output grid: a local azimuthal-equidistant CRS (WGS84) in metres, north up.

    ``transform`` is the GDAL/rasterio affine (a, b, c, d, e, f):
    ``x = a col + b row + c``, ``y = d col + e row + f`` at pixel corners.
    """

    proj4: str
    crs_wkt: str
    transform: tuple
    width: int
    height: int
    resolution_m: float
    lattice_px: int = 1
    """Pixels between the exactly transformed points of :meth:`lon_lat` (1: every pixel exactly)."""

    def centres(self, rows=None):
        """Pixel-centre projected coordinates ``(x, y)`` [m], each (height, width); of rows ``rows[0]:rows[1]``
        only when given (the same values)."""
        a, _, c, _, e, f = self.transform
        x = c + a * (np.arange(self.width) + 0.5)
        y = f + e * (np.arange(*((0, self.height) if rows is None else rows)) + 0.5)
        return np.meshgrid(x, y)

    def window(self, row0: int, row1: int, col0: int, col1: int) -> "CoverageGrid":
        """The rows ``row0:row1`` and columns ``col0:col1`` as a grid of their own (same CRS, shifted origin)."""
        a, b, c, d, e, f = self.transform
        return CoverageGrid(proj4=self.proj4, crs_wkt=self.crs_wkt,
                            transform=(a, b, c + a * col0, d, e, f + e * row0), width=col1 - col0,
                            height=row1 - row0, resolution_m=self.resolution_m, lattice_px=self.lattice_px)

    def circle_window(self, gw: "Gateway", radius_m: float) -> tuple:
        """Window ``(row0, row1, col0, col1)`` holding every pixel within ``radius_m`` of ``gw`` (1 % + 2 px spare)."""
        from pyproj import Transformer

        x, y = Transformer.from_crs("EPSG:4326", self.proj4, always_xy=True).transform(gw.lon_deg, gw.lat_deg)
        a, _, c, _, e, f = self.transform
        reach = radius_m * 1.01 + 2 * self.resolution_m   # aeqd off its centre: distances within 1 %
        col0, col1 = math.floor((x - reach - c) / a), math.ceil((x + reach - c) / a)
        row0, row1 = math.floor((y + reach - f) / e), math.ceil((y - reach - f) / e)
        return (max(row0, 0), min(max(row1, 0), self.height), max(col0, 0), min(max(col1, 0), self.width))

    def tiles(self, tile_px: int) -> list:
        """Windows ``(row0, row1, col0, col1)`` of at most ``tile_px`` square covering the grid, row by row."""
        return [(r, min(r + tile_px, self.height), c, min(c + tile_px, self.width))
                for r in range(0, self.height, tile_px) for c in range(0, self.width, tile_px)]

    def lon_lat(self):
        """Pixel-centre WGS84 longitude and latitude [deg], each (height, width).

        Transformed exactly (pyproj) at every ``lattice_px``-th pixel of the
        whole grid (counted from the projection's origin, so a window gives
        the very values of the whole grid) and bilinear in between, as GDAL's
        approximate transformer does [1]_; :func:`make_grid` chose
        ``lattice_px`` so that the interpolation is within 1e-3 pixel.
        Longitudes are interpolated unwrapped about the projection's centre
        (a grid across the antimeridian) and given in [-180, 180).

        References
        ----------
        .. [1] GDAL documentation, gdalwarp ``-et`` (error threshold of the
           approximate transformer, which interpolates between exactly
           transformed points).
        """
        step = self.lattice_px
        col0, row0 = self._origin_index()
        if step <= 1:
            lon, lat = self._exact(np.arange(self.height)[:, None] + row0, np.arange(self.width)[None, :] + col0)
            return (lon + 180.0) % 360.0 - 180.0, lat
        rows = np.arange(row0 // step * step, -(-(row0 + self.height - 1) // step) * step + 1, step)
        cols = np.arange(col0 // step * step, -(-(col0 + self.width - 1) // step) * step + 1, step)
        node_lon, node_lat = self._exact(rows[:, None], cols[None, :])
        lon, lat = (_bilinear(v, rows, cols, row0, self.height, col0, self.width) for v in (node_lon, node_lat))
        return (lon + 180.0) % 360.0 - 180.0, lat

    def _origin_index(self):
        """Column and row of pixel (0, 0) counted from the projection's origin (integers: make_grid's pixels are
        centred on multiples of the resolution)."""
        a, _, c, _, e, f = self.transform
        return round((c + 0.5 * a) / a), round((f + 0.5 * e) / e)

    def _exact(self, rows_abs, cols_abs):
        """Longitude (unwrapped about the projection's centre) and latitude [deg] of pixels given by their
        indices from the projection's origin (broadcast), by pyproj."""
        from pyproj import Transformer

        a, e = self.transform[0], self.transform[4]
        x, y = np.broadcast_arrays(a * np.asarray(cols_abs, dtype=float), e * np.asarray(rows_abs, dtype=float))
        tr = Transformer.from_crs(self.proj4, "EPSG:4326", always_xy=True)
        lon, lat = tr.transform(np.ascontiguousarray(x), np.ascontiguousarray(y))
        ref = tr.transform(0.0, 0.0)[0]   # the projection's centre: the same for every window
        return ref + (np.asarray(lon) - ref + 180.0) % 360.0 - 180.0, np.asarray(lat)

    def to_dict(self) -> dict:
        return {"crs": "local azimuthal equidistant (WGS84), metres", "proj4": self.proj4, "wkt": self.crs_wkt,
                "transform": list(self.transform), "width": self.width, "height": self.height,
                "resolution_m": self.resolution_m}


def _bilinear(values, rows, cols, row0, height, col0, width):
    """Values on the lattice ``rows`` x ``cols`` (increasing pixel indices) -> pixels ``row0 ..`` x ``col0 ..``,
    bilinear, (height, width)."""
    def weights(nodes, first, size):
        at = np.arange(first, first + size)
        k = np.clip(np.searchsorted(nodes, at, side="right") - 1, 0, max(nodes.size - 2, 0))
        span = np.maximum(nodes[np.minimum(k + 1, nodes.size - 1)] - nodes[k], 1)
        return k, np.where(nodes.size > 1, (at - nodes[k]) / span, 0.0)

    (kr, wr), (kc, wc) = weights(rows, row0, height), weights(cols, col0, width)
    kr1, kc1 = np.minimum(kr + 1, rows.size - 1), np.minimum(kc + 1, cols.size - 1)
    along = values[:, kc] + (values[:, kc1] - values[:, kc]) * wc   # the lattice rows at every column
    top = along[kr]
    return top + (along[kr1] - top) * wr[:, None]


def make_grid(gateways, radius_m: float, resolution_m: float) -> CoverageGrid:
    """Grid of pixels ``resolution_m`` square covering every gateway's circle; centred on the (mean) site.

    The azimuthal-equidistant projection keeps true distance and azimuth from
    its centre [2]_, so with one site the radius is exact in the grid and the
    site sits at the centre of a pixel; with several the centre is their mean.
    """
    from pyproj import CRS, Transformer

    lat0 = float(np.mean([g.lat_deg for g in gateways]))
    lon0 = float(np.degrees(np.angle(np.mean(np.exp(1j * np.radians([g.lon_deg for g in gateways]))))))
    proj4 = f"+proj=aeqd +lat_0={lat0:.9f} +lon_0={lon0:.9f} +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs"
    tr = Transformer.from_crs("EPSG:4326", proj4, always_xy=True)
    x, y = tr.transform([g.lon_deg for g in gateways], [g.lat_deg for g in gateways])
    reach = radius_m * 1.002 + resolution_m
    i0, i1 = math.floor((min(x) - reach) / resolution_m), math.ceil((max(x) + reach) / resolution_m)
    j0, j1 = math.floor((min(y) - reach) / resolution_m), math.ceil((max(y) + reach) / resolution_m)
    width, height = i1 - i0 + 1, j1 - j0 + 1
    if width * height > MAX_STREAM_PIXELS:
        raise ProfilerError(f"the grid would have {width * height:,} pixels (more than {MAX_STREAM_PIXELS:,}); give a "
                            "coarser --resolution-m or a smaller --radius-km")
    transform = (resolution_m, 0.0, (i0 - 0.5) * resolution_m, 0.0, -resolution_m, (j1 + 0.5) * resolution_m)
    grid = CoverageGrid(proj4=proj4, crs_wkt=CRS.from_proj4(proj4).to_wkt(), transform=transform, width=width,
                        height=height, resolution_m=float(resolution_m))
    return dataclasses.replace(grid, lattice_px=_lattice_px(grid))


def _lattice_px(grid: CoverageGrid, tolerance_px: float = 1e-3) -> int:
    """The coarsest lattice (16, 8, 4 or 2 pixels; else 1: every pixel exact) whose bilinear interpolation of the
    pixel positions is within ``tolerance_px`` of a pixel at the centre of every lattice cell of the grid."""
    col0, row0 = grid._origin_index()
    metres_per_deg = 111_320.0   # [m/deg] of latitude, about (the test's scale only)
    for step in (16, 8, 4, 2):
        rows = np.arange(row0 // step * step, -(-(row0 + grid.height - 1) // step) * step + 1, step)
        cols = np.arange(col0 // step * step, -(-(col0 + grid.width - 1) // step) * step + 1, step)
        if rows.size < 2 or cols.size < 2:
            return 1
        lon, lat = grid._exact(rows[:, None], cols[None, :])
        mid_lon, mid_lat = grid._exact(0.5 * (rows[:-1] + rows[1:])[:, None], 0.5 * (cols[:-1] + cols[1:])[None, :])
        guess = [0.25 * (v[:-1, :-1] + v[1:, :-1] + v[:-1, 1:] + v[1:, 1:]) for v in (lon, lat)]
        off_m = np.hypot((guess[0] - mid_lon) * np.cos(np.radians(mid_lat)), guess[1] - mid_lat) * metres_per_deg
        if np.max(off_m) <= tolerance_px * grid.resolution_m:
            return step
    return 1


def pixel_polar(grid: CoverageGrid, gw: Gateway, rows=None):
    """Geodesic azimuth [deg] and distance [m] from the gateway to every pixel centre (of rows
    ``rows[0]:rows[1]`` only when given: the same values).

    At the projection's centre they are read off the grid (the
    azimuthal-equidistant projection keeps both exactly [2]_); elsewhere by
    the inverse geodesic problem (pyproj.Geod).
    """
    from pyproj import Geod

    if f"+lat_0={gw.lat_deg:.9f} +lon_0={gw.lon_deg:.9f} " in grid.proj4:
        x, y = grid.centres(rows)
        return np.degrees(np.arctan2(x, y)), np.hypot(x, y)
    lon, lat = (grid if rows is None else grid.window(rows[0], rows[1], 0, grid.width)).lon_lat()
    az, _, dist = Geod(ellps="WGS84").inv(np.full(lon.shape, gw.lon_deg), np.full(lat.shape, gw.lat_deg), lon, lat)
    return np.asarray(az), np.asarray(dist)


def radial_lookup(az, dist, n_radials: int, spacing_m: float, radius_m: float):
    """Nearest radial sample of every pixel: ``(radial, sample, inside)`` arrays of the pixels' shape."""
    k = np.rint((az % 360.0) / (360.0 / n_radials)).astype(np.int64) % n_radials
    j = np.rint(dist / spacing_m).astype(np.int64)
    return k, j, dist <= radius_m


def window_lookup(grid: CoverageGrid, gw: Gateway, n_radials: int, spacing_m: float, radius_m: float,
                  threads: int = 1):
    """:func:`radial_lookup` of :func:`pixel_polar` over a grid (a gateway's window), in row bands on ``threads``
    threads: the same arrays as one call (a pixel's values depend on it alone; numpy and pyproj release the GIL)."""
    if threads <= 1 or grid.height < 8 * threads:
        return radial_lookup(*pixel_polar(grid, gw), n_radials, spacing_m, radius_m)
    from concurrent.futures import ThreadPoolExecutor

    shape = (grid.height, grid.width)
    k, j, inside = np.empty(shape, dtype=np.int64), np.empty(shape, dtype=np.int64), np.empty(shape, dtype=bool)

    def band(rows):
        k[rows[0]:rows[1]], j[rows[0]:rows[1]], inside[rows[0]:rows[1]] = radial_lookup(
            *pixel_polar(grid, gw, rows), n_radials, spacing_m, radius_m)

    edges = np.linspace(0, grid.height, 2 * threads + 1).astype(int).tolist()
    with ThreadPoolExecutor(threads) as pool:
        list(pool.map(band, zip(edges[:-1], edges[1:])))
    return k, j, inside


def needed_samples(grid: CoverageGrid, gw: Gateway, n_radials: int, spacing_m: float, radius_m: float,
                   n_full: int, tile_px: int = 1024, threads: int = 1) -> np.ndarray:
    """The radial samples some pixel takes (:func:`radial_lookup`): a bool table (radials, samples).

    A coverage run reduces only these links (a pixel takes the value of one
    sample: about half the samples at half-pixel steps); sample 1 is needed
    with sample 0 (the site's pixel takes sample 1's values).  The gateway's
    circle is looked up in tiles of ``tile_px`` square (bounded memory), each in row bands on
    ``threads`` threads (:func:`window_lookup`).
    """
    need = np.zeros((n_radials, n_full), dtype=bool)
    w = grid.circle_window(gw, radius_m)
    if overlap(w, (0, grid.height, 0, grid.width)) is None:
        return need
    for r0, r1, c0, c1 in grid.window(*w).tiles(tile_px):
        mark_needed(need, window_lookup(grid.window(w[0] + r0, w[0] + r1, w[2] + c0, w[2] + c1), gw, n_radials,
                                        spacing_m, radius_m, threads))
    return need


def mark_needed(need: np.ndarray, lookup) -> np.ndarray:
    """Mark in ``need`` (radials, samples) the samples a ``(radial, sample, inside)`` lookup takes (and sample 1
    wherever sample 0 is taken); returns ``need``."""
    k, j, inside = lookup
    ok = inside & (j < need.shape[1])
    need[k[ok], j[ok]] = True
    need[:, 1] |= need[:, 0]
    return need


def to_grid(parts, lookup, n_radials, n_full, threads: int = 1):
    """Per-radial results of one gateway's sectors -> bands on the grid (NaN outside); the bands on ``threads``
    threads (numpy's copies and gathers release the GIL)."""
    k, j, inside = lookup
    n = np.concatenate([p["n"] for p in parts])
    valid = np.flatnonzero(inside & (j < n[k]))
    flat = k.reshape(-1).take(valid) * n_full + j.reshape(-1).take(valid)   # one index for every band

    def band(name):
        table = np.concatenate([p[name] for p in parts]).reshape(-1)
        grid = np.full(k.shape, np.nan, dtype=np.float32)
        grid.reshape(-1)[valid] = table.take(flat)
        return grid

    names = band_names(parts[0])
    if threads <= 1:
        return {name: band(name) for name in names}
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(threads) as pool:
        return dict(zip(names, pool.map(band, names)))


class RadialStore:
    """One gateway's radial results on disk: float32 ``(radial, sample, band)``, written sector by sector.

    The streamed run (:func:`profiler.products.coverage.map.coverage` over ``max_memory_mb``) keeps the radial
    tables here instead of in memory; :meth:`to_grid` reads back only the stretch of each radial a tile needs (one read
    per radial), and gives the tile's bands exactly as :func:`to_grid` gives the whole grid's.
    """

    def __init__(self, path, names, n_radials: int, n_full: int):
        self.path, self.names, self.n_full = str(path), list(names), int(n_full)
        self.n = np.zeros(n_radials, dtype=np.int64)
        self._file = open(self.path, "w+b")
        self._file.truncate(n_radials * n_full * len(self.names) * 4)

    def write(self, first_radial: int, part: dict) -> None:
        """Store a sector's results (its ``n`` and every band, each (R, n_full)) from radial ``first_radial``."""
        table = np.stack([np.asarray(part[b], dtype=np.float32) for b in self.names], axis=-1)
        self.n[first_radial:first_radial + table.shape[0]] = part["n"]
        self._file.seek(first_radial * self.n_full * len(self.names) * 4)
        self._file.write(np.ascontiguousarray(table).tobytes())

    def to_grid(self, lookup) -> dict:
        """The bands of a tile from its ``(radial, sample, inside)`` lookup (NaN outside)."""
        import os

        self._file.flush()
        k, j, inside = (np.ravel(a) for a in lookup)
        valid = np.flatnonzero(inside & (j < self.n[k]))
        out = np.full((k.size, len(self.names)), np.nan, dtype=np.float32)
        order = valid[np.argsort(k[valid], kind="stable")]
        radials, starts = np.unique(k[order], return_index=True)
        row_bytes = len(self.names) * 4
        for r, pixels in zip(radials, np.split(order, starts[1:])):   # one read per radial, not per pixel
            first = int(j[pixels].min())
            count = int(j[pixels].max()) + 1 - first
            data = os.pread(self._file.fileno(), count * row_bytes, (int(r) * self.n_full + first) * row_bytes)
            out[pixels] = np.frombuffer(data, dtype=np.float32).reshape(count, -1)[j[pixels] - first]
        shape = np.shape(lookup[0])
        return {b: out[:, i].reshape(shape) for i, b in enumerate(self.names)}

    def close(self) -> None:
        import os

        self._file.close()
        if os.path.exists(self.path):
            os.unlink(self.path)


def overlap(a: tuple, b: tuple):
    """The intersection of two windows ``(row0, row1, col0, col1)``, None when empty."""
    w = (max(a[0], b[0]), min(a[1], b[1]), max(a[2], b[2]), min(a[3], b[3]))
    return w if w[0] < w[1] and w[2] < w[3] else None


class RunningComposite:
    """The composite of gateways added one at a time in index order, each over its window only.

    Equal to :func:`composite` of all of them on the whole grid (the first highest margin wins; where no
    margin is finite the bands are gateway 0's), at a cost of the windows' pixels instead of N x the grid's:
    a composite of N sites costs about N single maps.  Also the pixels existing gateways hear.
    """

    def __init__(self, shape, fade_margin_db: float):
        self.shape, self.fade_margin_db, self.bands = tuple(shape), float(fade_margin_db), None
        self.score = np.full(shape, -np.inf, dtype=np.float32)
        self.best = np.zeros(shape, dtype=np.int32)
        self.heard = np.zeros(shape, dtype=np.int32)
        self.heard_by_gateways = np.zeros(shape, dtype=bool)

    def add(self, index: int, gw: "Gateway", bands: dict, window=None, adopt: bool = False) -> None:
        """Gateway ``index``'s bands over ``window`` ``(row0, row1, col0, col1)`` (default the whole shape).

        ``adopt``: gateway 0's float32 arrays over the whole shape become the composite's own, without a copy
        (the caller hands them over; a single-site map then holds its bands once).
        """
        sl = np.s_[:, :] if window is None else np.s_[window[0]:window[1], window[2]:window[3]]
        margin = bands["margin_db"]
        ok = np.isfinite(margin)
        score = np.where(ok, margin, -np.inf).astype(np.float32)
        take = np.ones(margin.shape, dtype=bool) if index == 0 else score > self.score[sl]
        if adopt and self.bands is None and index == 0 and margin.shape == self.shape:
            self.bands = {n: np.asarray(bands[n], dtype=np.float32) for n in band_names(bands)}
        elif self.bands is None:
            self.bands = {n: np.full(self.shape, np.nan, dtype=np.float32) for n in band_names(bands)}
        for name, values in self.bands.items():
            if values is not bands[name]:
                values[sl][take] = bands[name][take]
        self.score[sl][take] = score[take]
        self.best[sl][take] = index
        hears = ok & (margin >= self.fade_margin_db)
        self.heard[sl] += hears
        if gw.role == "gateway":
            self.heard_by_gateways[sl] |= hears

    def result(self, composite_run: bool):
        """``(bands, heard_by_gateways)``; with ``composite_run`` also ``best_gateway`` and ``gateways_heard``."""
        bands = dict(self.bands)
        if composite_run:
            has = np.isfinite(self.score)
            bands["best_gateway"] = np.where(has, self.best, np.nan).astype(np.float32)
            bands["gateways_heard"] = np.where(has, self.heard, np.nan).astype(np.float32)
        return bands, self.heard_by_gateways


def composite(per_gateway: list, fade_margin_db: float) -> dict:
    """Bands of the best gateway (highest uplink margin) per pixel plus ``best_gateway`` and ``gateways_heard``."""
    margin = np.stack([b["margin_db"] for b in per_gateway])
    score = np.where(np.isfinite(margin), margin, -np.inf)
    best = np.argmax(score, axis=0)
    has = np.isfinite(score).any(axis=0)
    out = {}
    for name in band_names(per_gateway[0]):
        stack = np.stack([b[name] for b in per_gateway])
        out[name] = np.take_along_axis(stack, best[None], axis=0)[0]
    out["best_gateway"] = np.where(has, best, np.nan).astype(np.float32)
    heard = np.sum(np.where(np.isfinite(margin), margin >= fade_margin_db, False), axis=0)
    out["gateways_heard"] = np.where(has, heard, np.nan).astype(np.float32)
    return out


def combine_bands(running, composite_run, outside_data):
    """Bands of the run (the one gateway's, or the composite) and the pixels existing gateways hear, off-data NaN."""
    bands, heard_by_gateways = running.result(composite_run)
    for values in bands.values():   # a pixel centre off the data is nodata, whatever its nearest radial sample
        values[outside_data] = np.nan
    return bands, heard_by_gateways & ~outside_data


def tile_counts(bands, inside_any, heard_by_gateways, settings, land) -> dict:
    """Pixel counts (and the probability sum) of one tile, summed over tiles into the summary."""
    from ...lora.regional import plan as regional_plan

    plan = regional_plan(settings.band) if settings.band is not None else None
    fade, location_percent = settings.radio.fade_margin_db, settings.radio.propagation.location_percent
    margin = bands["margin_db"]
    ok = np.isfinite(margin)
    closes = ok & (margin >= fade)
    prob = np.where(ok, bands["probability_heard"], np.nan)
    # a probability within float32 rounding of the percentage counts as reaching it
    heard = np.isfinite(prob) & (prob >= location_percent / 100.0 - 1e-6)
    counts = {"computed": int(ok.sum()), "covered": int(closes.sum()),
              "by_gateways": int((heard_by_gateways & ok).sum()),
              "line_of_sight": int(np.sum(bands["line_of_sight"] == 1.0)), "heard": int(heard.sum()),
              "prob_sum": float(np.sum(prob[np.isfinite(prob)], dtype=np.float64)),
              "prob_n": int(np.isfinite(prob).sum()), "missing": int(np.sum(inside_any & ~ok)),
              "inside": int(inside_any.sum()),
              "dr": {int(v): int(np.sum(bands["recommended_dr"] == v))
                     for v in (sorted(plan.data_rates) if plan is not None else [])}}
    if land is not None:
        codes = bands["clutter_class"][ok]
        counts["no_class"] = int(np.sum(~np.isfinite(codes)))
        values, n = np.unique(codes[np.isfinite(codes)].astype(np.int64), return_counts=True)
        counts["codes"] = dict(zip(values.tolist(), n.tolist()))
    return counts


def add_counts(total: dict, counts: dict) -> dict:
    """Sum of two tiles' counts (nested dicts key by key)."""
    if not total:
        return counts
    return {k: add_counts(v, counts.get(k, {})) if isinstance(v, dict) and k != "codes" else
            ({c: v.get(c, 0) + counts[k].get(c, 0) for c in set(v) | set(counts[k])} if k == "codes" else
             v + counts[k]) for k, v in total.items()}
