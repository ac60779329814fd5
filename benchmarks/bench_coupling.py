"""Cost of luminescent coupling (circuit/coupling.py) in the batched, compiled solve.

The same batch of dual designs (tabled subcells: J02 and a shunt, so the compiled inverses and
the certificate's cells run) solved without the key and with luminescent_coupling = 0.5 on the
top subcell, both with the top over-producing (the coupled subcell leads the trace and solves
its current by Newton steps) and with the top limiting (the coupled subcell is inverted at the
string current). Prints medians of repeated runs and the ratios coupled / uncoupled; asserts
nothing (shared, noisy machines: compare ratios). Run: python benchmarks/bench_coupling.py
"""
import numpy as np

from timing import median_time

from siltandem.circuit.elements import Subcell, batch
from siltandem.solve.series import solve_string


def dual(top_jph, bottom_jph, coupling, ideal=False):
    size = top_jph.size
    extra = {} if coupling is None else {"luminescent_coupling": batch(np.full(size, coupling))}
    top = Subcell("top", batch(np.full(size, 1.7)), ere=batch(0.05),
                  j02_A_m2=batch(0.0 if ideal else 1e-10), shunt_S_m2=batch(0.0 if ideal else 2.0),
                  series_ohm_m2=batch(0.3e-4), **extra)
    bottom = Subcell("bottom", batch(np.full(size, 1.12)), ere=batch(0.005),
                     j02_A_m2=batch(0.0 if ideal else 1e-8), shunt_S_m2=batch(0.0 if ideal else 1.0))
    return [top.with_photocurrent(top_jph), bottom.with_photocurrent(bottom_jph)]


def main():
    designs = 2000
    for label, top_jph, bottom_jph in (
            ("top over-producing (coupled subcell leads)", np.linspace(200, 240, designs), 190.0),
            ("top limiting (coupled subcell inverted)", np.linspace(160, 185, designs), 190.0)):
        bottom = np.full(designs, bottom_jph)
        for points, what in ((0, "summary solve"), (401, "with a 401-point curve")):
            def run(coupling):
                return solve_string(dual(top_jph, bottom, coupling), 298.15, curve_points=points)

            run(None), run(0.5)          # warm the compiled kernels
            plain = median_time(lambda: run(None), repeats=3)
            coupled = median_time(lambda: run(0.5), repeats=3)
            print(f"{label}, {designs} designs, {what}: uncoupled {plain:7.3f} s, "
                  f"coupled {coupled:7.3f} s, ratio coupled / uncoupled {coupled / plain:5.2f} "
                  f"(medians of 3)")
    # ideal single diodes, the maps' case: uncoupled they take the explicit path in J
    top_jph, bottom = np.linspace(200, 240, designs), np.full(designs, 190.0)
    plain = median_time(lambda: solve_string(dual(top_jph, bottom, None, True), 298.15), repeats=3)
    coupled = median_time(lambda: solve_string(dual(top_jph, bottom, 0.5, True), 298.15), repeats=3)
    print(f"ideal single diodes, top over-producing, {designs} designs, summary solve: uncoupled "
          f"{plain:7.3f} s (explicit path), coupled {coupled:7.3f} s (explicit path too since the "
          f"coupled chain's V(J) is explicit; proof by concavity), "
          f"ratio {coupled / plain:5.1f} (medians of 3)")


if __name__ == "__main__":
    main()
