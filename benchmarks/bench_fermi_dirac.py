"""Speed of the Fermi-Dirac integrals (laws/fermi_dirac.py): the fast F_j (series / Chebyshev table /
Sommerfeld) against the quadrature it is built from, and the isotype law's Fermi-Dirac form
(V(J) at 200 currents, a degenerate p-Si side as in the placement demo), numpy and compiled
(laws/compiled_fermi.py). Process CPU time, medians.

Run: python benchmarks/bench_fermi_dirac.py   (prints numbers; asserts nothing about time)
"""
import statistics
import time

import numpy as np

from siltandem.laws import fermi_dirac as fd
from siltandem.laws.compiled_fermi import fermi_rows, fermi_voltages
from siltandem.laws import thermionic as th


def cpu_median(function, repeats=5):
    times = []
    for _ in range(repeats):
        start = time.process_time()
        function()
        times.append(time.process_time() - start)
    return statistics.median(times)


def main():
    eta = np.linspace(-30.0, 30.0, 10_000)
    fd.fermi_integral(0.5, eta)                       # build the table once
    fast = cpu_median(lambda: fd.fermi_integral(0.5, eta))
    slow = cpu_median(lambda: fd.fermi_integral_quadrature(0.5, eta))
    print(f"F_1/2 at 1e4 points: fast {fast * 1e3:.2f} ms, quadrature {slow * 1e3:.1f} ms, ratio {slow / fast:.0f}")
    x = np.linspace(-20.0, 20.0, 10_000)
    charge = cpu_median(lambda: fd.charge_integral(x, 2.3))
    print(f"charge integral at 1e4 points: {charge * 1e3:.2f} ms")
    law = dict(barrier_eV=0.36, built_in_V=0.33, alpha=0.05, richardson_A_m2_K2=6.6e5, temperature_K=298.15,
               depletion="exact")
    j = np.linspace(-300.0, 300.0, 200)
    boltzmann = cpu_median(lambda: th.isotype_voltage(j, **law))
    fermi = cpu_median(lambda: th.isotype_voltage(j, accumulation_fermi_eV=-0.2, depletion_fermi_eV=0.059, **law))
    print(f"isotype V(J) at 200 currents: Boltzmann {boltzmann * 1e3:.1f} ms, Fermi-Dirac {fermi * 1e3:.1f} ms")
    rows = fermi_rows(direction=1.0, accumulation_fermi_eV=-0.2, depletion_fermi_eV=0.059,
                      **{k: v for k, v in law.items() if k != "depletion"})
    currents = j[None, :].copy()
    fermi_voltages(rows, currents)                    # compile (or load from numba's cache) once
    compiled = cpu_median(lambda: fermi_voltages(rows, currents))
    print(f"compiled Fermi-Dirac V(J) at 200 currents: {compiled * 1e3:.2f} ms "
          f"({fermi / compiled:.0f}x faster than the numpy Fermi-Dirac law)")


if __name__ == "__main__":
    main()
