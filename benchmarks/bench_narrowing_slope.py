"""Cost of the base law's slope enclosure with Schenk's injection-dependent narrowing
(laws/compiled_bulk.py bulk_slopes with slope_bounds, the proven bounds of d dEg / d dn over a
cell) against the same law without the injection part (t = 0), compiled, on 20 000 voltage cells
of a 1e16 cm^-3 p-type 160 um base (0.05-0.8 V, widths 1e-4 to 0.1 V). Process CPU time, medians
of 5, both in one run.

Run: python benchmarks/bench_narrowing_slope.py   (prints numbers; asserts nothing about time)
"""
import numpy as np

from siltandem.constants import thermal_voltage_V
from siltandem.laws import compiled as kernels
from siltandem.laws import silicon
from timing import median_cpu_time as cpu_median  # benchmarks/timing.py, beside this script


def rows(narrowing, temperature=298.15):
    base = silicon.bulk_base(thickness_m=160e-6, n0_cm3=0.0, p0_cm3=1e16, srh_rate_s=1e3, surface_srv_m_s=0.1)
    columns = silicon.bulk_columns(base, ni_eff_cm3=8.28e9, temperature_K=temperature,
                                   injection_narrowing=narrowing)
    vt = float(thermal_voltage_V(temperature))
    return kernels.parameter_rows(kernels.SUBCELL_LAW, [[0.0, 0.0, 0.0, 0.0, vt, -np.inf, 0.0, 3.28]],
                                  bulk=np.array([[float(c) for c in columns]]))


def main():
    rng = np.random.default_rng(1)
    lo = rng.uniform(0.05, 0.8, 20_000)[None, :]
    hi = lo + 10 ** rng.uniform(-4, -1, lo.shape)
    on, off = rows(1.0), rows(0.0)
    for p in (on, off):
        kernels.slope_range(kernels.SUBCELL_LAW, p, lo[:, :10], hi[:, :10])      # compile / load
    with_narrowing = cpu_median(lambda: kernels.slope_range(kernels.SUBCELL_LAW, on, lo, hi))
    without = cpu_median(lambda: kernels.slope_range(kernels.SUBCELL_LAW, off, lo, hi))
    print(f"slope enclosure of 20000 cells: with the injection narrowing {with_narrowing * 1e3:.1f} ms, "
          f"without {without * 1e3:.1f} ms, ratio {with_narrowing / without:.2f}")


if __name__ == "__main__":
    main()
