"""profiler coverage over its memory budget: streamed to the GeoTIFF tile by tile, identical to the in-memory map.

The reference is the in-memory run of the same coverage (itself checked against ``profiler link`` and
pyproj in test_coverage.py), read back through rasterio/GDAL; memory is Python's own allocation tracer
(``tracemalloc``, which numpy reports its buffers to).
"""

import json
import math
import os
import tracemalloc

import numpy as np
import pytest
from sample_sites import DEM, GATEWAY

from profiler.api import coverage
from profiler.products.coverage.grid import BANDS, COMPOSITE_BANDS

RADIUS_KM = 3.0
RES_M = 90.0
TINY_MB = 0.1
"""A budget far below the in-memory run's: one sector per batch, 16 x 16 pixel tiles."""


def _bands(path):
    import rasterio

    with rasterio.open(path) as ds:
        return list(ds.descriptions), ds.read(), ds.block_shapes[0]


def _both(tmp_path, **kw):
    memory = coverage(out=tmp_path / "memory.tif", json=tmp_path / "memory.json", progress=False, **kw)
    streamed = coverage(out=tmp_path / "stream.tif", json=tmp_path / "stream.json", progress=False,
                        max_memory_mb=TINY_MB, **kw)
    return memory, streamed


def _same_files(tmp_path, names):
    names_m, data_m, _ = _bands(tmp_path / "memory.tif")
    names_s, data_s, block = _bands(tmp_path / "stream.tif")
    assert names_m == names_s == list(names)
    assert block == (16, 16)   # written in 16 x 16 tiles: it did stream
    for i, name in enumerate(names):
        assert np.array_equal(data_m[i], data_s[i], equal_nan=True), name
    report_m = json.loads((tmp_path / "memory.json").read_text())
    report_s = json.loads((tmp_path / "stream.json").read_text())
    assert report_m["summary"] == report_s["summary"]
    assert report_m["warnings"] == report_s["warnings"]
    assert report_m["bands"] == report_s["bands"]
    assert not [p for p in os.listdir(tmp_path) if p.startswith(".")]   # no temporary file left


def test_streamed_geotiff_equals_the_in_memory_one_band_by_band(tmp_path):
    memory, streamed = _both(tmp_path, site=GATEWAY, dem=DEM, mast_m=10.0, radius_km=RADIUS_KM, resolution_m=RES_M)
    assert memory.bands is not None and streamed.bands is None
    _same_files(tmp_path, BANDS)


def test_streamed_composite_combines_per_tile(tmp_path):
    csv = tmp_path / "sites.csv"   # two sites 1.1 km apart (the grid centred between them) and a candidate
    lat, lon = GATEWAY
    csv.write_text(f"name,lat_deg,lon_deg,mast_m,role\nHigh,{lat},{lon},10,gateway\n"
                   f"East,{lat},{lon + 0.0115},6,gateway\nHill,{lat - 0.01},{lon},8,candidate\n")
    _both(tmp_path, dem=DEM, sites=csv, radius_km=2.0, resolution_m=RES_M)
    _same_files(tmp_path, COMPOSITE_BANDS)


@pytest.mark.slow   # a Dask cluster or a memory trace of a whole map: in the slow run (.ci/run)
def test_streamed_dask_run_is_identical(tmp_path):
    coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=RADIUS_KM, resolution_m=RES_M, out=tmp_path / "memory.tif",
             json=tmp_path / "memory.json", progress=False)
    coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=RADIUS_KM, resolution_m=RES_M, out=tmp_path / "stream.tif",
             json=tmp_path / "stream.json", progress=False, max_memory_mb=0.9, workers=2)   # 2 batches of sectors
    names, _, block = _bands(tmp_path / "stream.tif")
    assert block[0] < 256   # streamed (an in-memory run writes 256 x 256 blocks)
    _same_files_any_block(tmp_path, names)


def _same_files_any_block(tmp_path, names):
    _, data_m, _ = _bands(tmp_path / "memory.tif")
    _, data_s, _ = _bands(tmp_path / "stream.tif")
    for i, name in enumerate(names):
        assert np.array_equal(data_m[i], data_s[i], equal_nan=True), name
    assert json.loads((tmp_path / "memory.json").read_text())["summary"] == \
        json.loads((tmp_path / "stream.json").read_text())["summary"]


def _peak_mb(func):
    tracemalloc.start()
    try:
        func()
        return tracemalloc.get_traced_memory()[1] / 2**20
    finally:
        tracemalloc.stop()


@pytest.mark.slow   # a Dask cluster or a memory trace of a whole map: in the slow run (.ci/run)
def test_peak_memory_stays_within_the_budget_plus_one_sector(tmp_path, monkeypatch):
    """Peak traced memory of a streamed run <= budget + the engine's work on one sector per core + 4 MB.

    The stated overhead: one sector (``sector_radials`` radials) through the engine, measured here alone, on
    each of the threads of the run (one per core), plus 4 MB of pyproj/rasterio/report buffers.  The same
    map in memory exceeds that bound, so the check can fail.
    """
    import functools

    from profiler.products.coverage import map as cmap
    from profiler.products.coverage import sectors
    from profiler.products.coverage.grid import Gateway
    from profiler.terrain.elevation import ElevationModel

    monkeypatch.setattr(sectors, "RADIALS_PER_CHUNK", 16)   # sectors small against this map (as on a large one)
    kw = dict(dem=DEM, mast_m=10.0, radius_km=5.0, resolution_m=15.0, progress=False)
    coverage(GATEWAY, **{**kw, "radius_km": 0.5})   # imports and compiled kernels out of the measurement
    budget_mb = 2.0
    settings = cmap._settings(DEM, None, None, "4/3", 0.6, False, None)
    radius_m, step_m = 5000.0, cmap.radial_step_m(15.0, settings.radio.diffraction_method)
    n_radials = cmap.radial_count(radius_m, 15.0)
    gw = Gateway(name="g", lat_deg=GATEWAY[0], lon_deg=GATEWAY[1], mast_m=10.0)
    with ElevationModel.open([str(p) for p in DEM]) as model:
        job = functools.partial(sectors.sector_job, settings=settings, n_radials=n_radials, radius_m=radius_m,
                                step_m=step_m, node_mast_m=1.5, model=model)
        n_full = math.ceil(radius_m / step_m) + 1
        sector_mb = _peak_mb(lambda: job((gw, np.arange(sectors.sector_radials(n_full)), None)))
    bound = budget_mb + sectors.cores() * sector_mb + 4.0
    streamed = _peak_mb(lambda: coverage(GATEWAY, **kw, max_memory_mb=budget_mb, out=tmp_path / "s.tif"))
    in_memory = _peak_mb(lambda: coverage(GATEWAY, **kw))
    assert streamed <= bound, (streamed, bound)
    assert in_memory > bound, (in_memory, bound)


def test_cli_streams_and_draws_the_sheet_from_a_decimated_read(tmp_path):
    from click.testing import CliRunner

    from profiler.cli import main

    out, png, kmz = tmp_path / "c.tif", tmp_path / "c.png", tmp_path / "c.kmz"
    res = CliRunner().invoke(main, ["coverage", "--dem", str(DEM[0]), "--site", f"{GATEWAY[0]},{GATEWAY[1]}",
                                    "--mast-m", "10", "--radius-km", "2", "--resolution-m", "90",
                                    "--max-memory-mb", str(TINY_MB), "--out", str(out), "--plot", str(png),
                                    "--kmz", str(kmz), "--no-progress"])
    assert res.exit_code == 0, res.output
    assert out.stat().st_size > 0 and png.stat().st_size > 0 and kmz.stat().st_size > 0
    assert _bands(out)[2] == (16, 16)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.kmz", "c.png", "c.tif"]


def test_streamed_run_without_out_leaves_no_file(tmp_path):
    import tempfile

    before = set(os.listdir(tempfile.gettempdir()))
    r = coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=2.0, resolution_m=RES_M, json=tmp_path / "c.json",
                 max_memory_mb=TINY_MB, progress=False)
    assert r.bands is None and not os.path.exists(r.geotiff_path)
    assert {p for p in set(os.listdir(tempfile.gettempdir())) - before if p.startswith(".coverage-stream")} == set()


def test_a_failed_stream_leaves_nothing(tmp_path, monkeypatch):
    """A failure after the tiles were written (here: rendering the JSON) leaves neither file nor temporary."""
    from profiler.io import report as io_report

    def boom(report):
        raise OSError("disk full")

    monkeypatch.setattr(io_report, "json_text", boom)
    with pytest.raises(Exception, match="disk full"):
        coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=2.0, resolution_m=RES_M, out=tmp_path / "c.tif",
                 json=tmp_path / "c.json", max_memory_mb=TINY_MB, progress=False)
    assert list(tmp_path.iterdir()) == []


def test_running_composite_equals_the_stacked_composite():
    """Gateways added window by window give :func:`composite` of the whole-grid stacks (ties, NaN, voids)."""
    from profiler.products.coverage.grid import Gateway, RunningComposite, composite

    rng = np.random.default_rng(7)
    shape, windows = (40, 50), [(0, 40, 0, 50), (5, 30, 10, 45), (20, 40, 0, 20), (0, 12, 30, 50)]
    per_gateway, running = [], RunningComposite(shape, 10.0)
    for i, (r0, r1, c0, c1) in enumerate(windows):
        full = {n: np.full(shape, np.nan, dtype=np.float32) for n in BANDS}
        for n in BANDS:
            values = np.round(rng.normal(10.0, 8.0, (r1 - r0, c1 - c0))).astype(np.float32)   # ties
            values[rng.random(values.shape) < 0.2] = np.nan
            full[n][r0:r1, c0:c1] = values
        per_gateway.append(full)
        running.add(i, Gateway(f"g{i}", 0.0, 0.0, 10.0, role="gateway" if i % 2 else "candidate"),
                    {n: v[r0:r1, c0:c1] for n, v in full.items()}, (r0, r1, c0, c1))
    expected = composite(per_gateway, 10.0)
    bands, heard = running.result(True)
    assert list(bands) == list(expected)
    for name in expected:
        assert np.array_equal(bands[name], expected[name], equal_nan=True), name
    by_gateways = np.zeros(shape, dtype=bool)
    for i, b in enumerate(per_gateway):
        by_gateways |= bool(i % 2) & np.isfinite(b["margin_db"]) & (b["margin_db"] >= 10.0)
    assert np.array_equal(heard, by_gateways)


@pytest.mark.parametrize("budget", ["0", "-5", "nan", "1e9"])
def test_a_bad_budget_is_one_line_exit_2_nothing_written(tmp_path, budget):
    from click.testing import CliRunner

    from profiler.cli import main

    res = CliRunner().invoke(main, ["coverage", "--dem", str(DEM[0]), "--site", f"{GATEWAY[0]},{GATEWAY[1]}",
                                    "--mast-m", "10", "--radius-km", "2", "--max-memory-mb", budget,
                                    "--out", str(tmp_path / "c.tif")])
    assert res.exit_code == 2 and "--max-memory-mb" in res.output and "Traceback" not in res.output
    assert list(tmp_path.iterdir()) == []


def test_the_api_checks_the_budget_too():
    from profiler.errors import ProfilerError

    with pytest.raises(ProfilerError, match="^--max-memory-mb -1"):
        coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=2.0, max_memory_mb=-1.0, progress=False)


def test_one_progress_bar_over_every_batch(tmp_path, capsys):
    """A streamed run in many batches of sectors shows one bar that starts once and reaches its total (not one bar
    per batch)."""
    import re

    from profiler.products.coverage.radials import radial_count

    coverage(GATEWAY, dem=DEM, mast_m=10.0, radius_km=1.5, resolution_m=30.0, progress=True, max_memory_mb=0.5,
             out=tmp_path / "s.tif")
    err = capsys.readouterr().err
    total = radial_count(1500.0, 30.0)
    assert len(re.findall(r"radials:\s+0%", err)) == 1 and f"{total}/{total}" in err, err[-400:]
