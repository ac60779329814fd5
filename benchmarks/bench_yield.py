"""Speed of the energy yield: a full year (8760 hours) of a triple, measured in one run.

1. `siltandem.studies.yield_year.annual_yield` end to end for the demo triple (stacks/demo_triple.toml:
   J02 and a shunt, so the traced solve, not the explicit fast path) over the TMY3 year pvlib
   ships (8760 hours, about 4400 with light): median of 3 runs, as by default and with the loss
   split (one more batched solve: the subcells-only series string). The target is under 10 s.
2. Where the time goes: weather file, sun + plane of array + SPECTRL2 + cell temperature,
   photocurrents, the stack's batched solve, each subcell alone, the subcells-only string.
3. The same stack's hours solved one by one (200 hours through `solve_string`, scaled to all
   hours) against the one batched solve: the ratio.
4. A detailed-balance triple 2.01 / 1.50 / 1.12 eV (the explicit fast path) end to end.
5. A layer stack's optics over the year at one temperature and following each hour's (1 K bins).

Asserts nothing: prints medians and ratios (the machine is shared: compare ratios, not seconds).
Run: python benchmarks/bench_yield.py
"""
from dataclasses import replace
from pathlib import Path
import statistics
import sys
import tempfile
import time
import warnings

import numpy as np

from siltandem.circuit.compile import compile_stack
from siltandem.circuit.elements import take_rows
from siltandem.laws.spectral import step_absorber_photocurrents_rows
from siltandem.solve.series import solve_string
from siltandem import load_stack
from siltandem.studies import yield_year as Y
from siltandem.materials import weather as weather_files
from siltandem.studies import sky

ROOT = Path(__file__).resolve().parents[1]
RADIATIVE_TRIPLE = """[conditions]
temperature_K = 298.15
[[element]]
kind = "subcell"
name = "top"
gap_eV = 2.01
[[element]]
kind = "subcell"
name = "middle"
gap_eV = 1.50
[[element]]
kind = "subcell"
name = "bottom"
gap_eV = 1.12
"""


def timed(function, repeats=1):
    times, value = [], None
    for _ in range(repeats):
        start = time.perf_counter()
        value = function()
        times.append(time.perf_counter() - start)
    return statistics.median(times), value


def quiet(function):
    def run(*args, **kwargs):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            return function(*args, **kwargs)
    return run


def layers_optics(light, temperature):
    """5. A layer stack's optics over the year (stacks/demo_triple_layers.toml): every hour at the
    stack's temperature against every hour at its own cell temperature (1 K bins)."""
    from siltandem.optics.layers import layer_photocurrents, layer_photocurrents_by_temperature

    model = compile_stack(load_stack(ROOT / "stacks" / "demo_triple_layers.toml")).model
    bins = np.unique(np.floor(temperature)).size
    fixed, _ = timed(lambda: layer_photocurrents(model, light.wavelength_nm, light.photon_flux), repeats=3)
    follow, _ = timed(lambda: layer_photocurrents_by_temperature(model, light.wavelength_nm, light.photon_flux,
                                                                 temperature), repeats=3)
    print(f"layer-stack optics of the year (demo triple layers, {temperature.size} hours, {bins} bins of 1 K): "
          f"one temperature {fixed:.2f} s, each hour's temperature {follow:.2f} s (medians of 3): "
          f"ratio {follow / fixed:.2f}; the yield year runs both (the first for the mismatch factors)")


@quiet
def main():
    triple = load_stack(ROOT / "stacks" / "demo_triple.toml")
    seconds_weather, weather = timed(lambda: weather_files.read_weather("demo"))
    hours = len(weather.data)
    Y.annual_yield(triple, weather)  # warm caches (pvlib tables, imports)
    total, result = timed(lambda: Y.annual_yield(triple, weather), repeats=3)
    split, _ = timed(lambda: Y.annual_yield(triple, weather, split_losses=True), repeats=3)
    lit = result.summary["weather"]["hours_with_light"]
    print(f"demo triple over {hours} hours ({lit} with light), end to end: {total:.2f} s "
          f"(median of 3; target < 10 s), {1e3 * total / lit:.2f} ms per hour with light; "
          f"{result.summary['failed_hours']} hour(s) without an operating point")

    print(f"  the same with the loss split (split_losses=True, --split-losses): {split:.2f} s "
          "(median of 3)")

    tilt, azimuth = abs(weather.latitude), 180.0
    seconds_light, light = timed(lambda: sky.hourly_light(weather, tilt_deg=tilt,
                                                        azimuth_deg=azimuth), repeats=3)
    circuit = compile_stack(triple)
    cells = circuit.subcells
    temperature = (light.frame["cell_temperature_C"].to_numpy() + 273.15).reshape(-1, 1)
    seconds_optics, currents = timed(lambda: step_absorber_photocurrents_rows(
        [c.gap_eV for c in cells], [c.absorptance for c in cells], light.wavelength_nm,
        light.photon_flux), repeats=3)
    lit_cells = {c.name: replace(c, photocurrent_A_m2=j) for c, j in zip(cells, currents)}
    string = [lit_cells.get(e.name, e) for e in circuit.strings[0]]
    seconds_stack, _ = timed(lambda: solve_string(string, temperature))
    seconds_alone, _ = timed(lambda: [solve_string([c], temperature)
                                      for c in lit_cells.values()])
    seconds_bare, _ = timed(lambda: solve_string(list(lit_cells.values()), temperature))
    print(f"  weather file (pvlib.iotools.read_tmy3)                 {seconds_weather:6.2f} s")
    print(f"  sun, plane of array, SPECTRL2, cell temperature        {seconds_light:6.2f} s")
    print(f"  photocurrents of {len(cells)} subcells x {lit} spectra            "
          f"{seconds_optics:6.3f} s")
    print(f"  the stack, one batched solve of all hours              {seconds_stack:6.2f} s")
    print(f"  each subcell alone (four-terminal), {len(cells)} solves            "
          f"{seconds_alone:6.2f} s")
    print(f"  the subcells only, in series (loss split)              {seconds_bare:6.2f} s")

    sample = np.linspace(0, lit - 1, 200).astype(int)

    def one_by_one():
        for row in sample:
            rows = np.array([row])
            solve_string([take_rows(e, rows) for e in string], temperature[rows])

    seconds_loop, _ = timed(one_by_one)
    per_hour = seconds_loop / sample.size
    print(f"  the stack hour by hour: {1e3 * per_hour:.1f} ms per hour, {per_hour * lit:.1f} s "
          f"for all hours; batched {seconds_stack:.2f} s: ratio "
          f"{per_hour * lit / seconds_stack:.0f}x")

    layers_optics(light, temperature)

    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "triple.toml"
        path.write_text(RADIATIVE_TRIPLE)
        radiative = load_stack(path)
        Y.annual_yield(radiative, weather)
        seconds_radiative, answer = timed(lambda: Y.annual_yield(radiative, weather), repeats=3)
    print(f"detailed-balance triple 2.01/1.50/1.12 eV (explicit fast path), end to end: "
          f"{seconds_radiative:.2f} s (median of 3); annual energy "
          f"{answer.summary['annual_energy_kWh_m2']:.1f} kWh/m2, energy-weighted "
          f"{answer.summary['energy_weighted_efficiency_pct']:.2f} %")
    return 0


if __name__ == "__main__":
    sys.exit(main())
