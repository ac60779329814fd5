"""Placements and loss waterfalls of layer stacks: alike solves batched against one by one,
measured in one run (stacks/demo_placements.toml, stacks/demo_triple_layers.toml,
stacks/demo_dual_layers.toml: INVENTED DATA).

- ``placements --auto`` of the placement demo (its 3 candidates: each its own circuit shape);
- twelve declared candidates: the demo's three placements with junction layers of 10, 20, 30
  and 40 nm each (invented variants; four candidates per shape);
- the loss waterfall of the triple and the dual layer demos.

"batched" is the study as it runs (result/batched.py: circuits of one shape as one batched
solve; every subcell-alone, element-removal and loss-step string grouped by shape, one solve per
group); "one by one" sets ``result.batched.ONE_BY_ONE`` (every circuit and string solved on its
own, the path before). Both give the same numbers bit for bit (tests/test_batched_results.py).
Compile and optics are in both (a fresh reuse dict per placement study, as the command has).

Times are process CPU time (time.process_time), medians of REPEATS runs, the two modes
interleaved: the machine is shared. Asserts nothing: prints numbers and ratios.
Run: python benchmarks/bench_layer_studies.py [repeats]  (default 3)
"""
from dataclasses import replace
import statistics
import sys
import time
from pathlib import Path

import pandas as pd

from siltandem import load_stack
from siltandem.result import batched
from siltandem.stack.placements import Placement
from siltandem.studies.losses import loss_waterfall
from siltandem.studies.placements import evaluate_candidates, rank_placements

STACKS = Path(__file__).resolve().parents[1] / "stacks"
REPEATS = int(sys.argv[1]) if len(sys.argv) > 1 else 3


def cpu(function):
    start = time.process_time()
    function()
    return time.process_time() - start


def compare(label, function, repeats):
    """Median CPU [s] of ``function()`` batched and one by one, interleaved; printed."""
    times = {False: [], True: []}
    function()                                    # warm-up: kernels, material tables
    for _ in range(repeats):
        for mode in (False, True):
            batched.ONE_BY_ONE = mode
            try:
                times[mode].append(cpu(function))
            finally:
                batched.ONE_BY_ONE = False
    fast, slow = statistics.median(times[False]), statistics.median(times[True])
    print(f"{label:<52} batched {fast:7.3f} s   one by one {slow:7.3f} s   "
          f"ratio {slow / fast:5.2f}x")
    return fast, slow


def thickness_variants(stack, thicknesses_nm=(10.0, 20.0, 30.0, 40.0)):
    """The declared placements, each with its junction layers at several thicknesses."""
    out = []
    for placement in stack.extra["placements"]:
        for thickness in thicknesses_nm:
            layers = tuple(replace(layer, thickness_nm=thickness) for layer in placement.layers)
            out.append(Placement(f"{placement.name}, {thickness:g} nm", placement.after, layers))
    return tuple(out)


def main():
    print(f"CPU medians of {REPEATS} (process_time), batched and one by one interleaved")
    placements = load_stack(STACKS / "demo_placements.toml")
    compare("placements --auto, demo (3 candidates, 3 shapes)",
            lambda: rank_placements(placements, auto=True), REPEATS)
    variants = thickness_variants(placements)
    table = pd.DataFrame({"design": range(len(variants))})
    compare(f"placements, {len(variants)} declared candidates (3 shapes)",
            lambda: evaluate_candidates(table, stack=placements, candidates=variants), REPEATS)
    for name in ("demo_triple_layers", "demo_dual_layers"):
        stack = load_stack(STACKS / f"{name}.toml")
        compare(f"losses, {name}", lambda stack=stack: loss_waterfall(stack), REPEATS)


if __name__ == "__main__":
    main()
