"""Start-up of the command line against the floor of a bare `import numpy, scipy, pandas` process
(issue 19: `siltandem run` of the demo within 1.3x of that floor; `--help` and `materials`
without numba, pandas or pvlib).

Each command runs as a fresh process; prints the median wall time of several runs and its
ratio to the floor measured in the same run. Asserts nothing (shared, noisy machines: compare
ratios). Run: python benchmarks/bench_startup.py [repeats] [--before SRC]

``--before SRC`` also times the two `run` commands with another copy of the package's source
folder first on PYTHONPATH (e.g. ``git archive <commit> | tar -x -C /tmp/old``, SRC
/tmp/old/src), interleaved with the rest: a before/after comparison from one run.
"""
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = str(ROOT / "stacks" / "demo_dual.toml")
LAYERS = str(ROOT / "stacks" / "demo_triple_layers.toml")

COMMANDS = {
    "floor: python -c 'import numpy, scipy, pandas'": [sys.executable, "-c", "import numpy, scipy, pandas"],
    "siltandem --help": [sys.executable, "-m", "siltandem.cli", "--help"],
    "siltandem materials": [sys.executable, "-m", "siltandem.cli", "materials"],
    "siltandem run demo_dual.toml": [sys.executable, "-m", "siltandem.cli", "run", DEMO],
    "siltandem run demo_triple_layers.toml": [sys.executable, "-m", "siltandem.cli", "run", LAYERS],
}


def wall(argv, source=None):
    env = None
    if source is not None:
        env = {**os.environ, "PYTHONPATH": os.pathsep.join([source, os.environ.get("PYTHONPATH", "")])}
    start = time.perf_counter()
    subprocess.run(argv, check=True, capture_output=True, cwd=ROOT, env=env)
    return time.perf_counter() - start


def main():
    args = sys.argv[1:]
    before = None
    if "--before" in args:
        at = args.index("--before")
        before = str(Path(args[at + 1]).resolve())
        del args[at:at + 2]
    repeats = int(args[0]) if args else 5
    commands = {name: (argv, None) for name, argv in COMMANDS.items()}
    if before is not None:
        commands.update({f"before: {name}": (argv, before) for name, argv in COMMANDS.items()
                         if " run " in name})
    for argv, source in commands.values():    # warm the file cache and numba's cache once
        wall(argv, source)
    medians = {}
    for _ in range(repeats):                  # interleaved, so load changes hit every command alike
        for name, (argv, source) in commands.items():
            medians.setdefault(name, []).append(wall(argv, source))
    floor = statistics.median(next(iter(medians.values())))
    print(f"process wall, median of {repeats} interleaved runs")
    for name, times in medians.items():
        median = statistics.median(times)
        print(f"  {name:<48} {median:6.3f} s   {median / floor:5.2f}x the floor")


if __name__ == "__main__":
    main()
