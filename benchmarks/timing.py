"""Shared timing helpers of the benchmark scripts: the median of repeated runs, wall clock or
process CPU."""
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


def median_cpu_time(function, repeats=5):
    """Median process CPU time [s] of ``repeats`` calls of ``function()``."""
    times = []
    for _ in range(repeats):
        start = time.process_time()
        function()
        times.append(time.process_time() - start)
    return statistics.median(times)
