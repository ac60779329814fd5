"""The layer-stack yield year (issue 19) with and without the certificate work it no longer does.

"before" re-creates, in this process, the paths of before: solve/slopes.py slope_bounds evaluating
every subcell law's slope range on every padded cell (certificate._compact pads each row to the
widest), and the certificate's restricted passes (SeriesString.rows) building their subcells'
law parameters and tables again instead of taking the batch's rows (take_rows_with_tables).
Years interleaved (before, now, before, now, ...), process CPU time, medians; and whether the two
years agree with == (annual energy, every hourly column).

Asserts nothing: prints medians and their ratio (the machine is shared: compare the ratio).
Run: python benchmarks/bench_certificate_reuse.py [repeats, default 3]
"""
from pathlib import Path
import statistics
import sys
import time
import warnings

import numpy as np

from siltandem import load_stack
from siltandem.circuit.elements import take_rows
from siltandem.materials import weather as weather_files
from siltandem.solve import certificate
from siltandem.solve import string as string_module
from siltandem.studies import yield_year as Y

ROOT = Path(__file__).resolve().parents[1]
TRIPLE = ROOT / "stacks" / "demo_triple_layers.toml"


def main():
    warnings.simplefilter("ignore")
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    stack = load_stack(TRIPLE)
    weather = weather_files.read_weather("demo")
    bounds, carried = certificate.slope_bounds, string_module.take_rows_with_tables
    Y.annual_yield(stack, weather)           # warm: kernels, pvlib tables, imports
    times, results = {"now": [], "before": []}, {}
    for _ in range(repeats):
        for label in ("before", "now"):
            if label == "before":
                certificate.slope_bounds = lambda string, view, cells, real=None: bounds(string, view, cells)
                string_module.take_rows_with_tables = lambda e, rows, whole, part: take_rows(e, rows)
            try:
                start = time.process_time()
                results[label] = Y.annual_yield(stack, weather)
                times[label].append(time.process_time() - start)
            finally:
                certificate.slope_bounds, string_module.take_rows_with_tables = bounds, carried
    a, b = results["now"], results["before"]
    equal = a.summary == b.summary and all(
        np.array_equal(a.hourly[c].to_numpy(), b.hourly[c].to_numpy()) for c in a.hourly.columns)
    now, before = statistics.median(times["now"]), statistics.median(times["before"])
    print(f"layer yield year, demo triple layers ({len(weather.data)} weather hours): CPU medians of "
          f"{repeats} (interleaved) {now:.2f} s now, {before:.2f} s with every slope range on every padded "
          f"cell and the restricted passes' tables rebuilt (x{before / now:.3f}); annual energy "
          f"{a.summary['annual_energy_kWh_m2']!r} / {b.summary['annual_energy_kWh_m2']!r} kWh/m2; "
          f"summary and hourly columns equal (==): {equal}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
