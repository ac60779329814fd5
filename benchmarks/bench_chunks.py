"""The default in-process chunk against the old default, on a 200 x 200 map (issue 20).

The old default cut a map into 10,000-row chunks and solved each in one batch: more designs than
a subcell's junction table holds (circuit.elements.TABLE_ROWS, 5,952), so the laws' own root
finds served instead of the tables. The default now cuts at runner.MAX_CHUNK_ROWS (2,000), and
the map's chunk function solves in batches of at most that many whatever the chunk size. The old
behaviour is reproduced by raising the cap to 10,000 for one run.

Also printed: other chunk sizes below the table limit, to show why 2,000 was chosen. Medians of
REPEATS runs in this process after one warm-up; prints, asserts nothing (the machine is shared).
Run: python benchmarks/bench_chunks.py
"""
import timing  # noqa: E402  (benchmarks/timing.py, beside this script)

from siltandem import load_stack, parse_vary
from siltandem.studies import runner
from siltandem.studies.maps import design_map

REPEATS = 3
OLD_DEFAULT = 10_000


def main():
    stack = load_stack(timing.__file__.replace("benchmarks/timing.py", "stacks/demo_dual.toml"))
    gap = parse_vary("top.gap_eV=1.5:2.1:200", stack)
    absorb = parse_vary("top.absorptance=0.5:1.0:200", stack)
    design_map(stack, gap, absorb, chunk_rows=500)            # compile and warm the caches
    new = timing.median_time(lambda: design_map(stack, gap, absorb), REPEATS)
    cap = runner.MAX_CHUNK_ROWS
    runner.MAX_CHUNK_ROWS = OLD_DEFAULT                       # the old default, as it was
    try:
        old = timing.median_time(lambda: design_map(stack, gap, absorb), REPEATS)
    finally:
        runner.MAX_CHUNK_ROWS = cap
    print(f"200 x 200 map of the demo dual (40,000 designs), in process, median of {REPEATS}:")
    print(f"  default chunk ({cap:,} rows)        {new:7.2f} s")
    print(f"  old default ({OLD_DEFAULT:,} rows)       {old:7.2f} s   old / new = {old / new:5.2f} x")
    for rows in (1_000, 4_000, 5_952):
        runner.MAX_CHUNK_ROWS = rows
        try:
            other = timing.median_time(lambda: design_map(stack, gap, absorb), REPEATS)
        finally:
            runner.MAX_CHUNK_ROWS = cap
        print(f"  chunks of {rows:,} rows            {other:7.2f} s   / default = "
              f"{other / new:5.2f} x")


if __name__ == "__main__":
    main()
