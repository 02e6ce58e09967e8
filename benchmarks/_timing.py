"""Timing helper shared by the benchmarks."""

import time


def best_of(func, repeat):
    """Smallest wall-clock time of ``repeat`` calls of ``func()`` [s]."""
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - t0)
    return best
