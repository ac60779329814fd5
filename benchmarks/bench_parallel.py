"""Overhead of the study execution layer (siltandem.parallel), measured in one run.

- per-chunk overhead for a trivial function: in-process, local pool (2 processes), and a dask
  LocalCluster (2 processes, 1 thread each, loopback); from the difference between runs of
  SMALL and LARGE chunk counts, so pool and cluster start-up cancel out;
- for comparison, the same one-design tasks through one client.map and one gather;
- on dask: one task per design against a few large chunks, for the same designs;
- in-process run_chunks against calling the function once on the whole table, with and without
  Parquet chunk files.

Prints medians and ratios; asserts nothing (the machine is shared and noisy).
Run: python benchmarks/bench_parallel.py
"""
import timing  # noqa: E402  (benchmarks/timing.py, beside this script)
import tempfile

import numpy as np
import pandas as pd

from siltandem.studies.runner import default_chunk_rows, run_chunks

SMALL, LARGE = 100, 1000      # chunk counts for the overhead slope (one design per chunk)
REPEATS = 3
MAP_ROWS = 40_000             # a 200 x 200 map


def trivial(chunk):
    """Almost no work: the cost measured is the layer's own."""
    return pd.DataFrame({"design": chunk["design"].to_numpy(),
                         "y": 2.0 * chunk["x"].to_numpy()})


def table(rows):
    return pd.DataFrame({"design": np.arange(rows), "x": np.linspace(0.0, 1.0, rows)})


def median_time(function, repeats=REPEATS):
    return timing.median_time(function, repeats)


def per_chunk(**options):
    """(seconds for SMALL chunks, seconds per extra chunk) for one-design chunks."""
    small = median_time(lambda: run_chunks(trivial, table(SMALL), chunk_rows=1, progress=False,
                                           **options))
    large = median_time(lambda: run_chunks(trivial, table(LARGE), chunk_rows=1, progress=False,
                                           **options))
    return small, large, (large - small) / (LARGE - SMALL)


def main():
    from distributed import LocalCluster

    print(f"per-chunk overhead, trivial function, one design per chunk "
          f"({SMALL} vs {LARGE} chunks, median of {REPEATS}):")
    rows = {}
    rows["in-process"] = per_chunk()
    rows["local pool, 2 processes"] = per_chunk(workers=2)
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address=None) as cluster:
        address = cluster.scheduler_address
        rows["dask LocalCluster, 2 x 1"] = per_chunk(cluster=address)
        for name, (small, large, slope) in rows.items():
            print(f"  {name:26s} {slope * 1e3:8.3f} ms per chunk   "
                  f"({SMALL} chunks {small:6.2f} s, {LARGE} chunks {large:6.2f} s)")

        # for comparison, without this layer: the same chunks in one client.map + one gather
        from distributed import Client
        with Client(address, set_as_default=False) as client:
            def raw(count):
                data = table(count)
                pieces = [data.iloc[i:i + 1] for i in range(count)]
                client.gather(client.map(trivial, pieces, pure=False))
            raw_small, raw_large = median_time(lambda: raw(SMALL)), median_time(lambda: raw(LARGE))
        print(f"  {'dask, map + gather alone':26s} "
              f"{(raw_large - raw_small) / (LARGE - SMALL) * 1e3:8.3f} ms per task    "
              "(same chunks, one client.map and one gather, no run_chunks)")

        few = default_chunk_rows(LARGE, slots=2, local=False)
        chunked = median_time(lambda: run_chunks(trivial, table(LARGE), cluster=address,
                                                 progress=False))
        one_each = rows["dask LocalCluster, 2 x 1"][1]
        print(f"dask, {LARGE} designs: one task per design {one_each:6.2f} s, "
              f"{LARGE // few} chunks of {few} {chunked:6.3f} s; ratio {one_each / chunked:6.1f} x")

    data = table(MAP_ROWS)
    direct = median_time(lambda: trivial(data), repeats=7)
    layered = median_time(lambda: run_chunks(trivial, data, progress=False), repeats=7)
    with tempfile.TemporaryDirectory() as folder:
        written = median_time(lambda: run_chunks(trivial, data, chunk_rows=5_000, output=folder,
                                                 resume=False, progress=False), repeats=7)
        resumed = median_time(lambda: run_chunks(trivial, data, chunk_rows=5_000, output=folder,
                                                 progress=False), repeats=7)
    print(f"in-process, {MAP_ROWS} designs (median of 7): function alone {direct * 1e3:7.2f} ms,"
          f" run_chunks {layered * 1e3:7.2f} ms (+{(layered - direct) * 1e3:.2f} ms)")
    print(f"  with 8 Parquet chunk files + results: {written * 1e3:7.2f} ms; "
          f"resumed from them: {resumed * 1e3:7.2f} ms")


if __name__ == "__main__":
    main()
