"""Shared timing helper of the benchmark scripts: the median of repeated wall-clock runs."""
import statistics
import time


def median_time(function, repeats=5):
    """Median wall time [s] of ``repeats`` calls of ``function()``."""
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return statistics.median(times)
