"""How the main job grows with the size of the stack: subcells, resistors, isotype layers.

Builds stack files in a temporary folder (invented values, made up to exercise the solver; they
describe no real device) and times the main job on each: load the file, compile, illuminate,
solve with a 401-point curve and the full summary (every element's efficiency penalty included),
as `siltandem run` does. Prints the median of a few runs per size and the growth ratio
time(next size) / time(size) with the size ratio beside it: a linear cost grows like the size.

- element stacks of N subcells (gaps 2.2 eV down to 1.0 eV) joined by N - 1 Esaki tunnel
  junctions, plus one contact resistor: N = 5, 10, 20, 50;
- one silicon subcell in series with N resistors: N = 10, 100, 1000;
- a layer-stack dual whose buffer is a pile of alternating n-GaP / n-AlP layers, N isotype
  interfaces in the buffer and around it (one more sits under the top window): N = 10, 20, 40.

Asserts nothing (the machine is shared and noisy; compare ratios, not seconds). A size whose
previous size took longer than ``--budget`` seconds is skipped (the former 2^N
photocurrents made 20 subcells take 89 s, 540 times the time of 10). Run:

    python benchmarks/bench_scaling.py [--repeats 3] [--budget 120]
                                       [--only subcells|resistors|isotype]
"""
import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

HEADER = """# INVENTED BENCHMARK DATA: made up to time the solver; no real device.
[stack]
name = "{name}"
notes = "Invented benchmark stack."

[conditions]
spectrum = "am1.5g"
"""


def subcell_stack(n):
    """N subcells, gaps 2.2 eV down to 1.0 eV, a tunnel junction between each pair, a resistor."""
    parts = [HEADER.format(name=f"{n} subcells")]
    for k in range(n):
        gap = 2.2 - 1.2 * k / max(n - 1, 1)
        parts.append(f"""
[[element]]
kind = "subcell"
name = "cell {k + 1}"
gap_eV = {gap:.6f}
absorptance = 0.9
ere = 0.01
shunt_ohm_cm2 = 1e5
""")
        if k < n - 1:
            parts.append(f"""
[[element]]
kind = "tunnel"
name = "junction {k + 1}"
peak_mA_cm2 = 5000
peak_V = 0.05
valley_mA_cm2 = 50
valley_V = 0.3
""")
    parts.append("""
[[element]]
kind = "resistor"
name = "contacts"
series_ohm_cm2 = 0.3
""")
    return "".join(parts)


def resistor_stack(n):
    """One silicon subcell and N resistors of 1 mohm cm2 each."""
    parts = [HEADER.format(name=f"{n} resistors"), """
[[element]]
kind = "subcell"
name = "silicon"
gap_eV = 1.12
absorptance = 0.9
ere = 0.005
shunt_ohm_cm2 = 1e5
"""]
    for k in range(n):
        parts.append(f"""
[[element]]
kind = "resistor"
name = "resistor {k + 1}"
series_ohm_cm2 = 0.001
""")
    return "".join(parts)


def isotype_layer_stack(n):
    """A GaAsP-on-Si layer dual whose n-type buffer has N isotype interfaces (N >= 2)."""
    parts = [HEADER.format(name=f"{n} isotype interfaces"), """
[optics]
back_reflectance = 0.9

[[layer]]
name = "top window"
material = "GaP"
thickness_nm = 20
doping = "n:2e18"

[[layer]]
name = "top emitter"
material = "GaAsP"
composition = 0.23
thickness_nm = 80
doping = "n:2e18"
diffusion_length_um = 0.4
srv_cm_s = 1e3

[[layer]]
name = "top base"
material = "GaAsP"
composition = 0.23
thickness_nm = 1400
doping = "p:1e17"
diffusion_length_um = 3.0
srv_cm_s = 1e3

[[layer]]
name = "tunnel p"
material = "GaAsP"
composition = 0.23
thickness_nm = 25
doping = "p:8e19"

[[layer]]
name = "tunnel n"
material = "GaAsP"
composition = 0.23
thickness_nm = 25
doping = "n:2e19"
"""]
    # n - 1 buffer layers: n - 2 interfaces among them, one above (tunnel n) and one below (Si)
    for k in range(n - 1):
        parts.append(f"""
[[layer]]
name = "buffer {k + 1}"
material = "{'GaP' if k % 2 == 0 else 'AlP'}"
thickness_nm = 5
doping = "n:1e18"
""")
    parts.append("""
[[layer]]
name = "silicon emitter"
material = "Si"
thickness_nm = 400
doping = "n:5e18"
diffusion_length_um = 3.0
srv_cm_s = 1e3

[[layer]]
name = "silicon base"
material = "Si"
thickness_nm = 180000
doping = "p:1e16"
diffusion_length_um = 600
srv_cm_s = 10
""")
    return "".join(parts)


FAMILIES = {
    "subcells": (subcell_stack, (5, 10, 20, 50)),
    "resistors": (resistor_stack, (10, 100, 1000)),
    "isotype": (isotype_layer_stack, (10, 20, 40)),
}


def main_job(path):
    """What `siltandem run FILE` computes: load, compile, illuminate, solve, summary."""
    from siltandem import run_stack, load_stack

    return run_stack(load_stack(path))


def median_seconds(function, repeats):
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return statistics.median(times), times


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3, help="runs per size (median)")
    parser.add_argument("--budget", type=float, default=120.0,
                        help="skip the next size once one run took longer than this [s]")
    parser.add_argument("--only", choices=sorted(FAMILIES), action="append",
                        help="run one family (repeatable)")
    args = parser.parse_args(argv)

    main_job(Path(__file__).resolve().parents[1] / "stacks" / "demo_dual.toml")  # warm caches
    print("the main job (load, compile, illuminate, 401-point curve, summary with penalties);"
          f" median of {args.repeats} runs")
    with tempfile.TemporaryDirectory() as folder:
        for family in args.only or list(FAMILIES):
            build, sizes = FAMILIES[family]
            print(f"\n{family}:")
            previous = None
            for n in sizes:
                path = Path(folder) / f"{family}_{n}.toml"
                path.write_text(build(n))
                if previous is not None and previous[1] > args.budget:
                    print(f"  N = {n:5d}: skipped (N = {previous[0]} took {previous[1]:.1f} s, "
                          f"over the {args.budget:g} s budget)")
                    continue
                first_start = time.perf_counter()
                result = main_job(path)                        # one run, to see it works
                first = time.perf_counter() - first_start
                repeats = args.repeats if first < args.budget / 4 else 1
                seconds = first if repeats == 1 else median_seconds(lambda: main_job(path),
                                                                    repeats)[0]
                growth = ""
                if previous is not None:
                    growth = (f"   x{seconds / previous[1]:6.2f} for x{n / previous[0]:g} "
                              "the size")
                print(f"  N = {n:5d}: {seconds:9.3f} s  (efficiency "
                      f"{result.summary['efficiency_pct']:.3f} %, "
                      f"{len(result.summary['elements'])} elements){growth}")
                previous = (n, seconds)
                sys.stdout.flush()


if __name__ == "__main__":
    main()
