"""Chunked work in-process and on a local Dask cluster (127.0.0.1, 2 workers):
identical results, chunk order kept, every failure one line.

The check values of the numpy work come from a closed form outside the
project: the first Fresnel radius F1 = sqrt(lambda d1 d2 / d), ITU-R P.526-15
eq. (2), evaluated here with the standard library's math module.
"""

import functools
import math
import sys

import numpy as np
import pytest

from profiler.engine.cluster import chunked, run_chunks
from profiler.errors import ProfilerError

WAVELENGTH_M = 299_792_458.0 / 868.1e6          # c / f, c exact by SI definition
PATH_M = 100_000.0


def fresnel_chunk(chunk, distance_m=PATH_M):
    """F1 along a 100 km path at the samples (10 m apart) of one chunk (pure numpy)."""
    d1 = np.arange(chunk.start, chunk.stop, dtype=float) * 10.0
    return np.sqrt(WAVELENGTH_M * d1 * (distance_m - d1) / distance_m)


def failing_chunk(chunk):
    if chunk.start == 300:
        raise ValueError("boom\non two lines")
    return chunk.start


def refusing_chunk(chunk):
    raise ProfilerError("site Wendle Reservoir is outside the elevation data; add tiles")


def test_chunked_slices():
    assert chunked(10, 4) == [slice(0, 4), slice(4, 8), slice(8, 10)]
    assert chunked(0, 4) == [] and chunked(3, 3) == [slice(0, 3)]
    covered = np.concatenate([np.arange(2001)[s] for s in chunked(2001, 250)])
    np.testing.assert_array_equal(covered, np.arange(2001))
    for bad in ((10, 0), (-1, 5), (10, 2.5), (True, 3)):
        with pytest.raises(ProfilerError):
            chunked(*bad)


def test_in_process_results_in_order_and_against_closed_form():
    out = run_chunks(fresnel_chunk, chunked(2001, 300), progress=False)
    values = np.concatenate(out)
    assert values.size == 2001
    for i in (0, 1, 777, 1000, 2000):           # P.526-15 eq. (2) with math.sqrt
        d1 = 10.0 * i
        assert values[i] == pytest.approx(math.sqrt(WAVELENGTH_M * d1 * (PATH_M - d1) / PATH_M), rel=1e-12)
    out = run_chunks(functools.partial(fresnel_chunk, distance_m=20_000.0), [slice(1000, 1001)], progress=False)
    # At mid-path F1 = sqrt(lambda d) / 2 (P.526-15 eq. (2) with d1 = d2 = d/2).
    assert out[0][0] == pytest.approx(0.5 * math.sqrt(WAVELENGTH_M * 20_000.0), rel=1e-12)


@pytest.fixture(scope="module")
def scheduler_address():
    """One local Dask cluster (2 worker processes on 127.0.0.1) for the ``scheduler=`` tests."""
    distributed = pytest.importorskip("distributed")
    import logging

    from profiler.engine.cluster import _NO_DASHBOARD

    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, host="127.0.0.1", dashboard_address=None,
                                  silence_logs=logging.ERROR, scheduler_kwargs=_NO_DASHBOARD) as cluster:
        yield cluster.scheduler_address


def test_existing_scheduler_gives_identical_results(scheduler_address):
    chunks = chunked(3001, 250)
    here = run_chunks(fresnel_chunk, chunks, progress=False)
    there = run_chunks(fresnel_chunk, chunks, scheduler=scheduler_address, progress=False)
    for a, b in zip(here, there, strict=True):
        np.testing.assert_array_equal(a, b)


def test_local_cluster_gives_identical_results():
    chunks = chunked(5003, 400)
    here = run_chunks(fresnel_chunk, chunks, progress=False)
    there = run_chunks(functools.partial(fresnel_chunk), chunks, workers=2, progress=False)
    assert len(there) == len(here) == 13
    for a, b in zip(here, there):
        np.testing.assert_array_equal(a, b)         # bit for bit: same numpy code, same inputs


def test_worker_failure_is_one_line_and_profiler_errors_keep_their_message(scheduler_address):
    with pytest.raises(ProfilerError) as err:
        run_chunks(failing_chunk, chunked(500, 100), scheduler=scheduler_address, progress=False)
    message = str(err.value)
    assert message.startswith("a Dask worker failed on chunk 4 of 5: ValueError: boom on two lines")
    assert "\n" not in message
    with pytest.raises(ProfilerError, match="^site Wendle Reservoir is outside the elevation data; add tiles$"):
        run_chunks(refusing_chunk, chunked(10, 5), scheduler=scheduler_address, progress=False)


def test_in_process_errors_pass_through():
    with pytest.raises(ProfilerError, match="outside the elevation data"):
        run_chunks(refusing_chunk, chunked(10, 5), progress=False)


@pytest.mark.parametrize("kwargs, fragment", [
    (dict(workers=2, scheduler="tcp://127.0.0.1:8786"), "not both"),
    (dict(workers=0), "--workers must be a whole number of worker processes >= 1"),
    (dict(workers=True), "--workers must be a whole number"),
    (dict(scheduler="localhost:8786"), "is not a Dask scheduler address; give it as tcp://HOST:PORT"),
    (dict(scheduler="tcp://a b:1"), "is not a Dask scheduler address"),
])
def test_bad_options(kwargs, fragment):
    with pytest.raises(ProfilerError, match=fragment):
        run_chunks(fresnel_chunk, chunked(10, 5), progress=False, **kwargs)


def test_unreachable_scheduler_is_one_line():
    import socket

    with socket.socket() as s:                     # a free port on 127.0.0.1 that nobody listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    with pytest.raises(ProfilerError, match=rf"cannot reach the Dask scheduler at tcp://127.0.0.1:{port}"):
        run_chunks(fresnel_chunk, chunked(10, 5), scheduler=f"tcp://127.0.0.1:{port}", progress=False,
                   connect_timeout_s=1.0)


def test_missing_dask_names_the_extra(monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)      # import distributed -> ImportError
    with pytest.raises(ProfilerError) as err:
        run_chunks(fresnel_chunk, chunked(10, 5), workers=2, progress=False)
    assert 'pip install -e ".[cluster]"' in str(err.value) and "\n" not in str(err.value)


def test_progress_bar_only_when_asked_or_on_a_terminal(capsys):
    run_chunks(fresnel_chunk, chunked(1000, 100))               # pytest's stderr is not a terminal
    assert capsys.readouterr().err == ""
    run_chunks(fresnel_chunk, chunked(1000, 100), progress=False)
    assert capsys.readouterr().err == ""
    run_chunks(fresnel_chunk, chunked(1000, 100), progress=True, desc="links")
    captured = capsys.readouterr()
    assert "1000/1000" in captured.err and "links" in captured.err and captured.out == ""
    run_chunks(fresnel_chunk, chunked(1000, 100), progress=True, weights=[3] * 10)
    assert "30/30" in capsys.readouterr().err
    with pytest.raises(ProfilerError, match="one per chunk"):
        run_chunks(fresnel_chunk, chunked(1000, 100), weights=[1, 2])


def test_dask_and_tqdm_are_not_imported_up_front():
    import subprocess

    code = ("import sys, profiler.engine.cluster, profiler.products.sites; "
            "print(sorted(m for m in ('dask', 'distributed', 'tqdm') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
