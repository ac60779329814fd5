"""Speed of a design map through the study API, measured in one run (medians, ratios).

1. A 200 x 200 map of a detailed-balance dual on Si (top gap x top absorptance) end to end
   through `siltandem.studies.maps.design_map` (in this process).
2. The same map as a bare vectorized numpy evaluation (the floor: closed-form V(J) on a J grid,
   maximum of J V per design, no root finding) - what the study approaches.
3. The same designs solved one by one through the same API (a per-design loop; 200 of them,
   scaled).
4. Optional (`--million`): a 10^6-design sweep streamed to disk chunk by chunk, in a child
   process whose peak memory (ru_maxrss) is reported.

Asserts nothing: prints numbers and ratios. Run: python benchmarks/bench_studies.py [--million]
"""
import subprocess
import sys
import tempfile
import textwrap
from pathlib import Path

import numpy as np

from timing import median_time

from siltandem.constants import thermal_voltage_V
from siltandem.laws.optics import step_absorber_photocurrents
from siltandem.laws.radiative import radiative_saturation_current
from siltandem.materials.spectra import get_spectrum
from siltandem import load_stack, design_map, parse_vary
from siltandem.studies.sweep import solve_designs

DUAL = """[conditions]
spectrum = "am1.5g"
temperature_K = 300
[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.73
[[element]]
kind = "subcell"
name = "bottom"
gap_eV = 1.12
"""




def bare_numpy_map(gaps, absorptances, spectrum, points=400):
    """Closed-form floor: V(J) of two ideal diodes on a J grid, max of J V per design."""
    g, a = np.meshgrid(gaps, absorptances, indexing="ij")
    g, a = g.reshape(-1, 1), a.reshape(-1, 1)
    top, bottom = step_absorber_photocurrents([g, np.full_like(g, 1.12)], [a, 1.0],
                                              spectrum.wavelength_nm, spectrum.photon_flux)
    vt = thermal_voltage_V(300.0)
    j0t = radiative_saturation_current(g, temperature_K=300.0, absorptance=a)
    j0b = radiative_saturation_current(1.12, temperature_K=300.0)
    limit = np.minimum(top, bottom)
    j = limit * np.linspace(0.0, 0.999, points)[None, :]
    v = vt * np.log1p((top - j) / j0t) + vt * np.log1p((bottom - j) / j0b)
    return np.max(j * v, axis=1)


def main():
    folder = Path(tempfile.mkdtemp())
    (folder / "dual.toml").write_text(DUAL)
    stack = load_stack(folder / "dual.toml")
    spectrum = get_spectrum("am1.5g")
    gap = parse_vary("top.gap_eV=1.5:2.1:200", stack)
    absorptance = parse_vary("top.absorptance=0.5:1.0:200", stack)
    design_map(stack, gap, absorptance, progress=False)   # warm caches
    study = median_time(lambda: design_map(stack, gap, absorptance, progress=False))
    floor = median_time(lambda: bare_numpy_map(gap.values, absorptance.values, spectrum))
    sample = gap.values[:200]
    loop = median_time(lambda: [solve_designs(stack, {"top.gap_eV": np.array([x]),
                                                      "top.absorptance": np.array([0.9])})
                                for x in sample], repeats=3) * (40_000 / 200)
    print("200 x 200 map of a detailed-balance dual on Si (40 000 designs), medians:")
    print(f"  study API, end to end      {study:8.3f} s   (target < 0.5 s)")
    print(f"  bare numpy floor           {floor:8.3f} s   study / floor = {study / floor:6.2f}")
    print(f"  one by one (200, scaled)   {loop:8.1f} s   one by one / study = {loop / study:8.0f} x"
          "   (target >= 100 x)")
    if "--million" in sys.argv:
        script = textwrap.dedent(f"""
            import resource, time
            from siltandem.stack.load import load_stack
            from siltandem.studies.maps import design_map
            from siltandem.studies.sweep import parse_vary
            stack = load_stack({str(folder / 'dual.toml')!r})
            a = parse_vary("top.gap_eV=1.5:2.1:1000", stack)
            b = parse_vary("top.absorptance=0.5:1.0:1000", stack)
            start = time.perf_counter()
            table = design_map(stack, a, b, progress=False, output={str(folder / 'million')!r},
                               chunk_rows=50_000)
            print(len(table), time.perf_counter() - start,
                  resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
        """)
        out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                             check=True).stdout.split()
        rows, seconds, peak_kb = int(out[0]), float(out[1]), int(out[2])
        print(f"10^6-design sweep streamed to disk: {rows} rows in {seconds:.1f} s, peak memory "
              f"{peak_kb / 1024:.0f} MB (target < 2048 MB)")


if __name__ == "__main__":
    main()
