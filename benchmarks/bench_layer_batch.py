"""The batched solve of layer designs, per design, for batches of 1, 10 and 100 designs of the
triple layer demo (stacks/demo_triple_layers.toml, INVENTED DATA), and its ratio to the
element-stack rate (stacks/demo_triple.toml, INVENTED DATA), measured in one run.

The layer designs vary the top and middle base thicknesses (as bench_layer_map.py). Every design
is compiled and illuminated once, before any clock starts; each timed run joins the designs into
one batched circuit afresh (new elements: no table or remembered inversion carries over) and
solves it (studies/sweep.py circuit_results: light I-V, MPP and its certificate). The
element-stack rate is a whole ``solve_designs`` of 1000 designs of the element triple (top gap
varied), per design.

Times are process CPU time (time.process_time), medians of REPEATS runs: the machine is shared
and its wall time follows the load. Asserts nothing: prints numbers and ratios.
Run: python benchmarks/bench_layer_batch.py [repeats]  (default 5)
"""
import statistics
import sys
import time
from pathlib import Path

import numpy as np

from siltandem import load_stack, parse_vary
from siltandem.circuit.batch import join_circuits
from siltandem.circuit.compile import compile_stack
from siltandem.optics.illuminate import illuminate
from siltandem.studies.sweep import circuit_results, layer_design, solve_designs, study_light

STACKS = Path(__file__).resolve().parents[1] / "stacks"
REPEATS = int(sys.argv[1]) if len(sys.argv) > 1 else 5
SIZES = (1, 10, 100)


def cpu_median(function, repeats):
    """Median process CPU time [s] of ``repeats`` calls of ``function()``."""
    times = []
    for _ in range(repeats):
        start = time.process_time()
        function()
        times.append(time.process_time() - start)
    return statistics.median(times)


def layer_designs(stack, size):
    """``size`` illuminated layer designs (top x middle base thickness on a 10-wide grid)."""
    top = parse_vary("top base.thickness_nm=300:1500:10", stack)
    middle = parse_vary("middle base.thickness_nm=1000:4000:10", stack)
    light = study_light(stack)
    grid = [(x, y) for x in top.values for y in middle.values][:size]
    return [illuminate(compile_stack(layer_design(stack, {top.column: x, middle.column: y})),
                       light) for x, y in grid], light


def main():
    stack = load_stack(STACKS / "demo_triple_layers.toml")
    designs, light = layer_designs(stack, max(SIZES))
    circuit_results(join_circuits(designs[:2]), 2, light)           # warm-up (kernels)
    per_design = {}
    for size in SIZES:
        chosen = designs[:size]
        seconds = cpu_median(lambda: circuit_results(join_circuits(chosen), size, light), REPEATS)
        per_design[size] = seconds / size

    element = load_stack(STACKS / "demo_triple.toml")
    gaps = {"top.gap_eV": np.linspace(1.70, 1.95, 1000)}
    solve_designs(element, {"top.gap_eV": gaps["top.gap_eV"][:10]})  # warm-up
    element_rate = cpu_median(lambda: solve_designs(element, gaps), REPEATS) / 1000

    print(f"batched solve of layer designs ({stack.name}), process CPU, medians of {REPEATS}:")
    for size in SIZES:
        print(f"  batch of {size:3d}: {1e3 * per_design[size]:8.2f} ms/design   "
              f"({per_design[size] / element_rate:7.0f} x the element-stack rate)")
    print(f"  element-stack designs (demo_triple.toml, 1000 in one solve_designs): "
          f"{1e6 * element_rate:.1f} us/design")
    print(f"  batch of 1 / batch of 100, per design: {per_design[1] / per_design[100]:.1f} x")
    print(f"  task target for the batch of 100: under ~3 ms/design; measured "
          f"{1e3 * per_design[100]:.2f} ms/design")


if __name__ == "__main__":
    main()
