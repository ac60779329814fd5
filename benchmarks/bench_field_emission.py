"""Speed of the thermionic-field law's pieces (laws/field_emission.py, laws/compiled_isotype.py):
the tunnelling gain (log G and dlnG/dw, one quadrature) per point, the compiled inverse per
point, and the compiled slope range per cell, on random laws (invented ranges: alpha 1e-3..1e3,
Vbi 0.1..0.8 V, E00 1e-3..5e-2 eV, spike 0.05..0.6 eV, T 250..400 K).

Prints medians of process CPU time over REPEATS runs (the first call, which may compile the
kernels, is not counted); asserts nothing (a shared, noisy machine). The DEVELOPERS.md figures
(2026-12-03): gain 2.65 us, inverse 12.1 us per point, slope range 6.4 us per cell; 2026-12-04
(one session, loaded machine): inverse 10.95 -> 6.56 -> 4.70 us per point (the gain reused at the
final point, the zero-bias gain in the row, the root kept at the point last evaluated), slope range
5.57 -> 2.81 us per cell (ends shared by adjacent cells), gain 2.3-2.8 us.
Run: python benchmarks/bench_field_emission.py [repeats]
"""
import sys
import time

import numpy as np

from siltandem.laws import field_emission as fe
from siltandem.laws.compiled_isotype import isotype_rows, isotype_slope_ranges, isotype_voltages


def median_cpu(function, repeats):
    function()
    times = []
    for _ in range(repeats):
        start = time.process_time()
        function()
        times.append(time.process_time() - start)
    return float(np.median(times))


def main(repeats=5):
    rng = np.random.default_rng(0)
    w = 10 ** rng.uniform(-2, 2.5, 100000)
    e00 = 10 ** rng.uniform(-2.5, 0.7, w.size)
    spike = np.where(rng.random(w.size) < 0.5, np.inf, w * rng.uniform(0.1, 2, w.size))
    t = median_cpu(lambda: fe.tunnelling_gain(w, field_energy=e00, spike_depth=spike, with_derivative=True),
                   repeats)
    print(f"tunnelling gain: {1e6 * t / w.size:.2f} us per point (median of {repeats})")
    n = 200
    rows = isotype_rows(built_in_V=rng.uniform(0.1, 0.8, n), alpha=10 ** rng.uniform(-3, 3, n),
                        barrier_eV=rng.uniform(0.1, 0.6, n), richardson_A_m2_K2=1.2e6,
                        temperature_K=rng.uniform(250, 400, n), form="tail", transport="thermionic-field",
                        field_energy_eV=10 ** rng.uniform(-3, -1.3, n), spike_eV=rng.uniform(0.05, 0.6, n),
                        direction=1.0)
    current = np.sign(rng.uniform(-1, 1, (n, 200))) * 10 ** rng.uniform(-2, 3, (n, 200))
    t = median_cpu(lambda: isotype_voltages(rows, current), repeats)
    print(f"compiled inverse: {1e6 * t / current.size:.2f} us per point")
    volts, _ = isotype_voltages(rows, current)
    volts = np.sort(np.where(np.isfinite(volts), volts, 0.0), axis=1)
    low, high = np.ascontiguousarray(volts[:, :-1]), np.ascontiguousarray(volts[:, 1:])
    t = median_cpu(lambda: isotype_slope_ranges(rows, low, high), repeats)
    print(f"compiled slope range: {1e6 * t / low.size:.2f} us per cell")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 5)
