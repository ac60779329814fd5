"""Speed of the series solve: batched designs against a per-design loop, measured in one run.

Prints medians of repeated runs and their ratios; asserts nothing (these machines are shared and
noisy: compare ratios, not seconds). Run: python benchmarks/bench_solve.py
"""

import numpy as np

from timing import median_time

from siltandem.circuit.elements import Subcell, batch
from siltandem.laws.optics import step_absorber_photocurrents
from siltandem import run_stack, load_stack
from siltandem.solve.series import solve_string
from siltandem.materials.spectra import get_spectrum




def dual_cells(gaps, spectrum):
    bottom = np.full_like(gaps, 1.12)
    top_j, bottom_j = step_absorber_photocurrents([gaps, bottom], [1.0, 1.0],
                                                  spectrum.wavelength_nm, spectrum.photon_flux)
    return [Subcell("top", batch(gaps)).with_photocurrent(top_j),
            Subcell("bottom", batch(bottom)).with_photocurrent(bottom_j)]


def main():
    spectrum = get_spectrum("am1.5g")
    stack = load_stack("stacks/demo_dual.toml")
    run_stack(stack)  # warm caches (pvlib table read once)
    single = median_time(lambda: run_stack(stack))
    print(f"one stack, whole main job (401-point curve, summary): {single * 1e3:8.1f} ms (median)")

    n_batch, n_loop = 10_000, 100
    gaps = np.linspace(1.5, 2.1, n_batch)
    batched = median_time(lambda: solve_string(dual_cells(gaps, spectrum), 300.0), repeats=3)
    loop_gaps = gaps[:: n_batch // n_loop]
    looped = median_time(lambda: [solve_string(dual_cells(np.array([g]), spectrum), 300.0)
                                  for g in loop_gaps], repeats=3)
    per_design_batch = batched / n_batch
    per_design_loop = looped / n_loop
    print(f"dual on Si, {n_batch} designs batched: {batched:8.3f} s "
          f"({per_design_batch * 1e6:.1f} us per design)")
    print(f"dual on Si, {n_loop} designs one by one: {looped:8.3f} s "
          f"({per_design_loop * 1e6:.1f} us per design)")
    print(f"ratio, per-design loop / batched: {per_design_loop / per_design_batch:8.1f} x")


if __name__ == "__main__":
    main()
