"""Speed of a layer-thickness map of the triple layer demo (stacks/demo_triple_layers.toml,
INVENTED DATA), measured in one run: medians, ratios, the per-design rate extrapolated to a
100 x 100 map.

1. An N x N map (top base x middle base thickness) through `siltandem.design_map`: every
   design compiled and illuminated on its own, the designs of one structure solved as one batch
   (studies/sweep.py).
2. The same kind of designs one by one: each its own layer stack, compiled, illuminated and
   solved alone (a batch of one), a few of them, per design.
3. Where the batched map's time goes, per design: compile (one reuse dict: parts equal between
   designs built once), illuminate (the designs of one optical group lit at once,
   optics.layers.light_designs), solve (one batch), medians of 3 passes; and one design lit alone,
   for the ratio.

Wall times on a shared machine follow its load; the process CPU times beside them do not.

Asserts nothing: prints numbers and ratios. Run: python benchmarks/bench_layer_map.py [N]
(default N = 6; issue 19's target for 100 x 100 is under 60 s on a 2-core machine).
"""
import sys
from pathlib import Path
import time

import numpy as np

from timing import median_time

from siltandem import design_map, load_stack, parse_vary
from siltandem.circuit.batch import join_circuits
from siltandem.circuit.compile import compile_stack
from siltandem.optics.illuminate import illuminate
from siltandem.studies.sweep import circuit_results, layer_design, lit_designs, solve_designs, study_light

STACK = Path(__file__).resolve().parents[1] / "stacks" / "demo_triple_layers.toml"


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 6
    stack = load_stack(STACK)
    top = parse_vary(f"top base.thickness_nm=300:1500:{n}", stack)
    middle = parse_vary(f"middle base.thickness_nm=1000:4000:{n}", stack)
    design_map(stack, parse_vary("top base.thickness_nm=300:1500:2", stack), middle)  # warm up
    cpu = time.process_time()
    batched = median_time(lambda: design_map(stack, top, middle, progress=False), repeats=3)
    cpu_batched = (time.process_time() - cpu) / 3
    per_batched = batched / n ** 2

    sample = [(x, y) for x, y in zip(top.values[:3], middle.values[::-1][:3])]

    def alone():
        for x, y in sample:
            solve_designs(layer_design(stack, {top.column: x, middle.column: y}), {})

    cpu = time.process_time()
    per_alone = median_time(alone, repeats=3) / len(sample)
    cpu_alone = (time.process_time() - cpu) / 3 / len(sample)

    # where the batched map's time goes (per design, as the study runs it: one reuse dict for the
    # compile, the designs of one optical group lit at once, one batched solve), three passes, each
    # with a fresh reuse dict: medians
    light = study_light(stack)
    grid = [(x, y) for x in top.values for y in middle.values]
    stages = []
    for _ in range(3):
        reuse = {}
        start, cpu = time.perf_counter(), time.process_time()
        compiled = [compile_stack(layer_design(stack, {top.column: x, middle.column: y}), reuse)
                    for x, y in grid]
        t_compile, c_compile = time.perf_counter() - start, time.process_time() - cpu
        start, cpu = time.perf_counter(), time.process_time()
        lit = [c for _, c in lit_designs(compiled, light, reuse)]
        t_light, c_light = time.perf_counter() - start, time.process_time() - cpu
        start, cpu = time.perf_counter(), time.process_time()
        circuit_results(join_circuits(lit), len(lit), light)
        t_solve, c_solve = time.perf_counter() - start, time.process_time() - cpu
        stages.append((t_compile, t_light, t_solve, c_compile, c_light, c_solve))
    t_compile, t_light, t_solve, c_compile, c_light, c_solve = np.median(np.array(stages), axis=0)
    # the same designs each lit alone (illuminate: the stacked pass with one design)
    start, cpu = time.perf_counter(), time.process_time()
    for c in compiled[:20]:
        illuminate(c, light, reuse)
    t_alone, c_alone = (time.perf_counter() - start) / 20, (time.process_time() - cpu) / 20

    size = n * n
    print(f"{n} x {n} layer-thickness map of the triple ({size} designs), medians of 3:")
    print(f"  batched map (design_map)      {batched:8.2f} s   {1e3 * per_batched:8.1f} ms/design"
          f"   (CPU, mean: {1e3 * cpu_batched / size:.1f} ms/design)")
    print(f"  one by one ({len(sample)} designs)        {per_alone:8.3f} s/design"
          f"   (CPU, mean: {1e3 * cpu_alone:.1f} ms/design)")
    print(f"  one by one / batched, per design = {per_alone / per_batched:6.1f} x wall, "
          f"{cpu_alone * size / cpu_batched:6.1f} x CPU")
    print("  where the time goes, medians of 3 passes:")
    print(f"  batched, per design (wall): compile {1e3 * t_compile / size:.1f} ms, illuminate "
          f"{1e3 * t_light / size:.1f} ms, solve {1e3 * t_solve / size:.1f} ms")
    print(f"  batched, per design (CPU):  compile {1e3 * c_compile / size:.1f} ms, illuminate "
          f"{1e3 * c_light / size:.1f} ms, solve {1e3 * c_solve / size:.1f} ms, all "
          f"{1e3 * (c_compile + c_light + c_solve) / size:.1f} ms")
    print(f"  illuminate one design alone: {1e3 * t_alone:.1f} ms wall, {1e3 * c_alone:.1f} ms CPU "
          f"(lit together / alone, CPU: {c_light / size / c_alone:.2f})")
    print(f"  100 x 100 extrapolated from the batched rate: {1e4 * per_batched:8.0f} s wall, "
          f"{1e4 * cpu_batched / size:8.0f} s CPU (target < 60 s; a chunk solves up to 2000 designs "
          f"at once, so the solve's share per design is smaller there than in an N x N this small)")
    print(f"  per-design rate: {1 / per_batched:6.1f} designs/s batched, "
          f"{1 / per_alone:6.2f} designs/s one by one")
    return np.array([batched, per_alone])


if __name__ == "__main__":
    main()
