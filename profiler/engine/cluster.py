"""Run chunks of work in-process or on a Dask distributed cluster.

The batch engine splits its links into chunks (:func:`chunked`) and hands
one function and the chunks to :func:`run_chunks`, which runs them here, on
a local cluster of worker processes (``workers=N``) or on an existing
cluster (``scheduler="tcp://HOST:PORT"``) and returns the results in chunk
order, so a run gives the same answer wherever it ran.

``dask`` and ``distributed`` are an optional extra
(``pip install -e ".[cluster]"``) and are imported only when a cluster is
asked for.  Workers must be able to import :mod:`profiler` and to open any
file the function names by the same path.  A local cluster starts its
workers as new processes, so a script that calls :func:`run_chunks` with
``workers`` must keep its top-level code under ``if __name__ == "__main__":``.

References
----------
.. [1] Dask Development Team, "Dask: Library for dynamic task scheduling",
   2016, https://dask.org (``distributed.LocalCluster``, ``Client.map``,
   ``as_completed``).
"""

from __future__ import annotations

import logging
import re
import sys
from typing import Callable, Iterable, Sequence

from ..errors import ProfilerError

__all__ = ["run_chunks", "chunked", "CLUSTER_INSTALL_HINT"]

CLUSTER_INSTALL_HINT = 'pip install -e ".[cluster]"'

CHUNK_LINKS = 256
"""Links per chunk (network, siting): the unit of work of a worker and of the progress bar."""

_ADDRESS = re.compile(r"^(tcp|tls)://[^\s/:]+(:\d{1,5})?$|^(tcp|tls)://\[[0-9a-fA-F:.]+\](:\d{1,5})?$")


#: The scheduler always serves a small HTTP API; no dashboard, any free port on 127.0.0.1 (never 8787 clashes).
_NO_DASHBOARD = {"dashboard": False, "dashboard_address": "127.0.0.1:0"}


def chunked(n_items: int, chunk_size: int) -> list[slice]:
    """Consecutive index slices covering ``range(n_items)``, each at most ``chunk_size`` long.

    Parameters
    ----------
    n_items : int
        Number of items (>= 0).
    chunk_size : int
        Largest chunk (>= 1).

    Returns
    -------
    list of slice
        ``slice(0, c), slice(c, 2c), ...``; empty for ``n_items == 0``.
    """
    for name, value, low in (("number of items", n_items, 0), ("chunk size", chunk_size, 1)):
        if isinstance(value, bool) or not isinstance(value, int) and not hasattr(value, "__index__"):
            raise ProfilerError(f"{name} must be a whole number, got {value!r}")
        if int(value) < low:
            raise ProfilerError(f"{name} must be at least {low}, got {value}")
    n, size = int(n_items), int(chunk_size)
    return [slice(start, min(start + size, n)) for start in range(0, n, size)]


def _weight(chunk, weight) -> int:
    """Items in one chunk for the progress bar: the given weight, a slice's length or ``len``."""
    if weight is not None:
        return int(weight)
    if isinstance(chunk, slice):
        return len(range(chunk.start or 0, chunk.stop, chunk.step or 1)) if chunk.stop is not None else 1
    try:
        return len(chunk)
    except TypeError:
        return 1


def progress_bar(progress, desc: str, total: int):
    """A tqdm bar on standard error, or None when progress is off (``progress`` False, or None and standard error
    not a terminal); one bar can span several :func:`run_chunks` calls (their ``bar``)."""
    show = progress if progress is not None else bool(getattr(sys.stderr, "isatty", lambda: False)())
    if not show:
        return None
    from tqdm import tqdm

    return tqdm(total=total, desc=desc, unit=desc.split()[-1] if desc.split() else "item",
                file=sys.stderr, dynamic_ncols=True)


def _check_options(workers, scheduler) -> None:
    if workers is not None and scheduler is not None:
        raise ProfilerError("give either --workers (a local Dask cluster) or --scheduler (an existing one), not both")
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int) or workers < 1):
        raise ProfilerError(f"--workers must be a whole number of worker processes >= 1, got {workers!r}")
    if scheduler is not None and not (isinstance(scheduler, str) and _ADDRESS.match(scheduler.strip())):
        raise ProfilerError(f"--scheduler {scheduler!r} is not a Dask scheduler address; "
                            "give it as tcp://HOST:PORT (for example tcp://10.0.0.5:8786)")


def run_chunks(func: Callable, chunks: Iterable, *, workers: int | None = None, scheduler: str | None = None,
               progress: bool | None = None, desc: str = "links", total: int | None = None,
               weights: Sequence[int] | None = None, connect_timeout_s: float = 10.0, threads: int = 1,
               bar=None) -> list:
    """Apply ``func`` to every chunk and return the results in chunk order.

    Parameters
    ----------
    func : callable
        ``func(chunk) -> result``; for a cluster it and its results must be
        picklable (module-level functions, ``functools.partial`` of them).
    chunks : iterable
        The work items (index slices, arrays, ...).
    workers : int, optional
        Run on a local Dask cluster of this many worker processes (one
        thread each, bound to 127.0.0.1, no dashboard), closed afterwards.
    scheduler : str, optional
        Run on the existing Dask cluster at ``tcp://HOST:PORT``.
    progress : bool, optional
        Show a progress bar on standard error; default: only when standard
        error is a terminal.
    desc : str
        Label of the bar (its last word is the unit).
    total : int, optional
        Items in all; default the sum of the chunk weights.
    weights : sequence of int, optional
        Items per chunk for the bar; default ``len(chunk)`` (a slice's length).
    connect_timeout_s : float
        How long to wait for ``scheduler`` [s].
    threads : int
        In-process (no ``workers``/``scheduler``): chunks run at once on this
        many threads (``func`` must then be safe to call from several
        threads; numpy and the compiled kernels release the GIL).
    bar : tqdm bar, optional
        A bar of :func:`progress_bar` that spans several calls: updated, not
        closed (``progress``, ``desc`` and ``total`` are then not used).

    Returns
    -------
    list
        ``[func(c) for c in chunks]``.

    Raises
    ------
    ProfilerError
        For both ``workers`` and ``scheduler``, a bad value of either, Dask
        not installed, an unreachable scheduler or a failed chunk (one line;
        a :class:`ProfilerError` raised by ``func`` keeps its message).
    """
    _check_options(workers, scheduler)
    chunks = list(chunks)
    if weights is not None and len(weights) != len(chunks):
        raise ProfilerError(f"got {len(weights)} progress weights for {len(chunks)} chunks; give one per chunk")
    sizes = [_weight(c, None if weights is None else weights[i]) for i, c in enumerate(chunks)]
    own = bar is None
    if own:
        bar = progress_bar(progress, desc, sum(sizes) if total is None else int(total))
    try:
        if workers is None and scheduler is None:
            if threads > 1 and len(chunks) > 1:
                return _run_on_threads(func, chunks, sizes, bar, threads)
            results = []
            for chunk, size in zip(chunks, sizes):
                results.append(func(chunk))
                if bar is not None:
                    bar.update(size)
            return results
        return _run_on_dask(func, chunks, sizes, bar, workers, scheduler, connect_timeout_s)
    finally:
        if own and bar is not None:
            bar.close()


def _run_on_threads(func, chunks, sizes, bar, threads) -> list:
    """Every chunk on a pool of ``threads`` threads of this process, results in chunk order."""
    from concurrent.futures import FIRST_EXCEPTION, ThreadPoolExecutor, wait

    results = [None] * len(chunks)
    with ThreadPoolExecutor(min(int(threads), len(chunks))) as pool:
        index = {pool.submit(func, chunk): i for i, chunk in enumerate(chunks)}
        pending = set(index)
        while pending:
            done, pending = wait(pending, return_when=FIRST_EXCEPTION)
            for future in done:
                if future.exception() is not None:
                    for other in pending:
                        other.cancel()
                    raise future.exception()
                results[index[future]] = future.result()
                if bar is not None:
                    bar.update(sizes[index[future]])
    return results


def _import_distributed():
    try:
        import distributed
    except ImportError:
        raise ProfilerError("--workers and --scheduler need Dask, which is not installed; "
                            f"install it with: {CLUSTER_INSTALL_HINT}") from None
    return distributed


def _run_on_dask(func, chunks, sizes, bar, workers, scheduler, connect_timeout_s) -> list:
    """Submit every chunk to a Dask cluster, gather the results in chunk order."""
    distributed = _import_distributed()
    cluster = None
    try:
        if workers is not None:
            cluster = distributed.LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                                               host="127.0.0.1", dashboard_address=None,
                                               silence_logs=logging.ERROR, scheduler_kwargs=_NO_DASHBOARD)
            client = distributed.Client(cluster)
        else:
            client = distributed.Client(scheduler.strip(), timeout=f"{float(connect_timeout_s)}s")
    except (OSError, TimeoutError) as exc:
        if cluster is not None:
            cluster.close()
        where = f"the Dask scheduler at {scheduler}" if scheduler else f"a local Dask cluster of {workers} workers"
        raise ProfilerError(f"cannot reach {where}: {_one_line(exc)}; check the address and that it is running") \
            from None
    try:
        return _gather(distributed, client, func, chunks, sizes, bar)
    except ProfilerError:
        raise
    except Exception as exc:  # the cluster itself failed (scheduler gone, connection lost)
        raise ProfilerError(f"the Dask cluster failed: {type(exc).__name__}: {_one_line(exc)}; "
                            "check the scheduler and its workers, or run without --workers/--scheduler") from None
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def _gather(distributed, client, func, chunks, sizes, bar) -> list:
    futures = client.map(func, chunks, pure=False)
    index = {future.key: i for i, future in enumerate(futures)}
    results = [None] * len(futures)
    try:
        for future in distributed.as_completed(futures):
            i = index[future.key]
            try:
                results[i] = future.result()
            except ProfilerError as exc:
                raise ProfilerError(str(exc)) from None
            except Exception as exc:  # a crash on a worker: one line, never a remote traceback
                raise ProfilerError(f"a Dask worker failed on chunk {i + 1} of {len(futures)}: "
                                    f"{type(exc).__name__}: {_one_line(exc)}") from None
            if bar is not None:
                bar.update(sizes[i])
    except BaseException:
        client.cancel(futures)
        raise
    return results


def _one_line(exc: BaseException) -> str:
    return " ".join(str(exc).split()) or type(exc).__name__
