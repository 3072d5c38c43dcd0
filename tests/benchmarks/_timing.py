"""Timing helper shared by the benchmark scripts (imported from the scripts'
own folder, which Python puts first on ``sys.path``)."""

import time


def best_time(func, repeat):
    """Shortest wall-clock time of ``repeat`` calls of ``func()``, in seconds."""
    best = float("inf")
    for _ in range(repeat):
        start = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - start)
    return best
