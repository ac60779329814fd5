"""Speed of one in-process solve of the layer triple (stacks/demo_triple_layers.toml), with the
isotype interfaces through the compiled law (laws/compiled_isotype.py) and through the numpy laws
(circuit/interface_element.py COMPILED_ISOTYPE = False), both measured in this run.

Three things timed, medians of REPEATS runs each (the first run, which may compile the kernels, is
not counted):

* the whole main job ``compute_result`` (compile the stack, optics, solve, each passive element's
  penalty by re-solving without it, summary);
* the string solve alone: ``solve_strings`` of the compiled, illuminated circuit (the 401-point
  light I-V, its MPP and the MPP certificate, as the main job solves it), the quantity issue 19's
  20 ms target is about; fresh elements each run, built before the clock starts;
* the penalties alone: ``removal_powers`` of the string.

Prints medians and the numpy/compiled ratios; asserts nothing (a shared, noisy machine: compare
the ratios). Run: python benchmarks/bench_layer_solve.py [repeats]
"""
import timing  # noqa: E402  (benchmarks/timing.py, beside this script)
import sys
from pathlib import Path

from siltandem import load_stack
from siltandem.circuit import interface_element
from siltandem.circuit.compile import compile_stack
from siltandem.materials.spectra import get_spectrum
from siltandem.optics.illuminate import illuminate
from siltandem.result.driver import compute_result
from siltandem.result.penalties import removal_powers
from siltandem.solve.series import solve_string, solve_strings

STACK = Path(__file__).resolve().parents[1] / "stacks" / "demo_triple_layers.toml"
REPEATS = int(sys.argv[1]) if len(sys.argv) > 1 else 15
#: the main job's curve (compute_result's default)
CURVE_POINTS = 401


def measure(compiled, repeats):
    """(whole job, string solve, penalties) medians [s] and the efficiency [%]."""
    interface_element.COMPILED_ISOTYPE = compiled
    stack = load_stack(STACK)
    summary = compute_result(stack).summary             # warm-up (and kernel compilation)
    light = get_spectrum(stack.conditions.spectrum, suns=stack.conditions.suns,
                         relative_to=stack.folder)
    temperature = stack.conditions.temperature_K

    def circuits():
        # fresh elements for each run, built before the clock starts: no cached rows or tables
        # carry over, and compiling the stack and its optics is not timed
        return iter([illuminate(compile_stack(stack), light) for _ in range(repeats)])

    def timed(function):
        fresh = circuits()
        return timing.median_time(lambda: function(next(fresh)), repeats)

    whole = timing.median_time(lambda: compute_result(stack), repeats)
    solve_time = timed(lambda c: solve_strings(c.strings, c.subcells, temperature,
                                               curve_points=CURVE_POINTS, solve=solve_string))
    penalty_time = timed(lambda c: [removal_powers(s, temperature) for s in c.strings])
    return whole, solve_time, penalty_time, summary["efficiency_pct"]


def main():
    before = measure(False, max(3, REPEATS // 3))
    after = measure(True, REPEATS)
    interface_element.COMPILED_ISOTYPE = True
    print(f"layer triple {STACK.name}: medians, numpy isotype laws -> compiled isotype law")
    for k, what in enumerate(("whole main job (compute_result)", "string solve (solve_strings)",
                              "penalties (removal_powers)")):
        print(f"  {what:34s} {before[k] * 1e3:8.1f} ms -> {after[k] * 1e3:7.1f} ms "
              f"({before[k] / after[k]:5.1f}x)")
    print(f"  efficiency {before[3]:.12f} % -> {after[3]:.12f} % "
          f"(relative difference {abs(after[3] / before[3] - 1):.1e})")
    print(f"  issue 19 target for the string solve: under 20 ms; measured {after[1] * 1e3:.1f} ms")


if __name__ == "__main__":
    main()
