"""Speed of the layer-stack studies of issue 19: the yield year and the thickness match.

1. The layer-stack yield year (`annual_yield`, stacks/demo_triple_layers.toml, pvlib's TMY3 year,
   4421 hours with light), process CPU time, medians of 3: as it runs now (the layers' collection per
   photon once per 1 K bin, each hour's photocurrent a product with its flux) and with the optics of
   before re-created here (every hour's spectrum through the layers, per bin and once more at the
   stack's temperature); the optics part alone, both ways; and the hours' batched solves.
2. A layer-thickness match (`match_currents`, "middle base.thickness_nm=1000:4000:11") end to end,
   CPU medians of 3; and its root search alone: on batched optics (studies.matching.ThicknessOptics,
   one compile, brentq a value per step) against brentq compiling and illuminating a design per step
   (sweep.photocurrents_at).
3. The year now against the year with the work it no longer repeats re-created (--reuse-only):
   each subcell on its own building its tables afresh (a lone pilot's too, for its two
   inversions), and every isotype member's one-sample table
   written into each row of the packed element pass; CPU medians of 3, interleaved, and whether
   the two years agree with == (annual energy, every hourly column).

Asserts nothing: prints medians and ratios (the machine is shared: compare ratios, not seconds),
and the year's CPU and wall medians against the target of issue 19 (a layer-stack yield year under
TARGET_S). Run: python benchmarks/bench_layer_year.py [--match-only | --year-only | --reuse-only]
(--reuse-only: the year now against the year with the repeated work of before re-created,
reuse_before_after)
"""
from pathlib import Path
import statistics
import sys
import time
import warnings

import numpy as np
from scipy import optimize

from siltandem import load_stack, match_currents, parse_vary
from siltandem.materials import weather as weather_files
from siltandem.studies import matching
from siltandem.studies import yield_year as Y
from siltandem.studies.sweep import photocurrents_at

ROOT = Path(__file__).resolve().parents[1]
#: issue 19's target for a layer-stack yield year [s]
TARGET_S = 5.0
TRIPLE = ROOT / "stacks" / "demo_triple_layers.toml"


def cpu(function, repeats=3):
    times, value = [], None
    for _ in range(repeats):
        start = time.process_time()
        value = function()
        times.append(time.process_time() - start)
    return statistics.median(times), value


def optics_before(circuit, light, flux, reference, temperature):
    """The year's layer optics as they were: every hour's spectrum through the layers."""
    from siltandem.circuit.from_layers import dark_currents_at
    from siltandem.optics.layers import layer_photocurrents, layer_photocurrents_by_temperature

    photocurrents = [np.asarray(j, dtype=float).reshape(-1, 1) for j in layer_photocurrents_by_temperature(
        circuit.model, light.wavelength_nm, flux, temperature)]
    spectral_only = [np.asarray(j, dtype=float).reshape(-1, 1) for j in
                     layer_photocurrents(circuit.model, light.wavelength_nm, flux)]
    on_grid = np.interp(light.wavelength_nm, reference.wavelength_nm, reference.photon_flux)
    reference_currents = [np.asarray(j, dtype=float) for j in layer_photocurrents(
        circuit.model, light.wavelength_nm, on_grid)]
    return photocurrents, spectral_only, reference_currents, dark_currents_at(circuit.model, circuit, temperature)


def year(stack, weather):
    now = Y._layer_photocurrents
    parts = {}

    def timed_optics(*args):
        start = time.process_time()
        out = parts["function"](*args)
        parts["optics"] = time.process_time() - start
        return out

    Y._layer_photocurrents = timed_optics
    try:
        rows = {}
        for label, function in (("now", now), ("before", optics_before)):
            parts["function"] = function
            runs = []
            for _ in range(3):
                start, wall = time.process_time(), time.perf_counter()
                result = Y.annual_yield(stack, weather)
                runs.append((time.process_time() - start, parts["optics"], time.perf_counter() - wall))
            rows[label] = (statistics.median(r[0] for r in runs), statistics.median(r[1] for r in runs),
                           result.summary["annual_energy_kWh_m2"], statistics.median(r[2] for r in runs))
            if "--year-only" in sys.argv:
                break
    finally:
        Y._layer_photocurrents = now
    return rows


def certificate_on_whole_batch(stack, weather):
    """The year with every certificate pass over the whole batch of hours (certificate.RESTRICT_ROWS
    out of reach), as before the later passes ran on the unproven hours alone: (CPU, wall, energy)."""
    from siltandem.solve import certificate

    rows = certificate.RESTRICT_ROWS
    certificate.RESTRICT_ROWS = 10 ** 12
    try:
        runs = []
        for _ in range(3):
            start, wall = time.process_time(), time.perf_counter()
            result = Y.annual_yield(stack, weather)
            runs.append((time.process_time() - start, time.perf_counter() - wall))
    finally:
        certificate.RESTRICT_ROWS = rows
    return (statistics.median(r[0] for r in runs), statistics.median(r[1] for r in runs),
            result.summary["annual_energy_kWh_m2"])


def reuse_before_after(stack, weather):
    """The year as it runs now against the year with the repeated work of before re-created here
    (each subcell solved on its own building its tables afresh, Subcell.on_string without the
    shared cache, and a lone pilot's table built for its two inversions, Subcell
    ._junction_voltage_table always tabled; every isotype member's one-sample table written into
    every row of the packed element pass, solve/string.py _padded), interleaved, CPU medians of
    3. Returns (now, before,
    equal): ``equal`` whether the annual energy and every hourly column agree with ==."""
    from dataclasses import replace

    from siltandem.circuit.elements import Subcell
    from siltandem.solve import string as packing

    shared, padded, tabled = Subcell.on_string, packing._padded, Subcell._junction_voltage_table

    def padded_before(members, rows):
        out = padded(members, rows)
        for e, m in enumerate(members):
            if m["table"] is packing._NO_TABLE:
                for k, name in ((2, "u"), (3, "j"), (4, "slope")):
                    out[k][e, :, :1] = getattr(m["table"], name)
        return out

    times = {"now": [], "before": []}
    results = {}
    for _ in range(3):
        for label in ("now", "before"):
            if label == "before":
                Subcell.on_string = lambda self, number: replace(self, string=number)
                packing._padded = padded_before
                Subcell._junction_voltage_table = lambda self, j, t, _=True: tabled(self, j, t, True)
            try:
                start = time.process_time()
                results[label] = Y.annual_yield(stack, weather)
                times[label].append(time.process_time() - start)
            finally:
                Subcell.on_string, packing._padded = shared, padded
                Subcell._junction_voltage_table = tabled
    a, b = results["now"], results["before"]
    equal = a.summary == b.summary and all(
        np.array_equal(a.hourly[c].to_numpy(), b.hourly[c].to_numpy()) for c in a.hourly.columns)
    return statistics.median(times["now"]), statistics.median(times["before"]), equal


def root_search(stack, column, low, high, a, b):
    optics = matching.thickness_optics(stack, column)
    batched, value_batched = cpu(lambda: optics.crossing(a, b, low, high))
    reuse = {}

    def per_step():
        def gap(value):
            currents = photocurrents_at(stack, column, value, reuse=reuse)
            return currents[a] - currents[b]
        return optimize.brentq(gap, low, high, xtol=1e-14, rtol=1e-15)

    stepwise, value_stepwise = cpu(per_step)
    return batched, value_batched, stepwise, value_stepwise


def main():
    warnings.simplefilter("ignore")
    stack = load_stack(TRIPLE)
    if "--reuse-only" in sys.argv:
        weather = weather_files.read_weather("demo")
        Y.annual_yield(stack, weather)          # warm: kernels, pvlib tables, imports
        now, before, equal = reuse_before_after(stack, weather)
        print(f"layer yield year, demo triple layers: CPU medians of 3 (interleaved) {now:.2f} s now, "
              f"{before:.2f} s with tables rebuilt per solve, a lone pilot's table built and isotype "
              f"slots written (x{before / now:.2f}); "
              f"annual energy and hourly columns equal (==): {equal}")
        return 0
    if "--match-only" not in sys.argv:
        weather = weather_files.read_weather("demo")
        Y.annual_yield(stack, weather)          # warm: kernels, pvlib tables, imports
        rows = year(stack, weather)
        now, optics_now, energy_now, wall_now = rows["now"]
        print(f"layer yield year, demo triple layers ({len(weather.data)} "
              f"weather hours): CPU median of 3 {now:.2f} s, wall median {wall_now:.2f} s; target {TARGET_S:g} s: "
              f"CPU/target x{now / TARGET_S:.2f}, wall/target x{wall_now / TARGET_S:.2f}; annual energy "
              f"{energy_now!r} kWh/m2")
        whole = certificate_on_whole_batch(stack, weather)
        print(f"  with the certificate's later passes on the whole batch (as before): CPU median of 3 "
              f"{whole[0]:.2f} s, wall {whole[1]:.2f} s (x{whole[0] / now:.2f} CPU); annual energy {whole[2]!r} kWh/m2")
        if "--year-only" in sys.argv:
            return 0
        before, optics_then, energy_then, _ = rows["before"]
        print(f"layer yield year, demo triple layers, CPU medians of 3: {now:.2f} s now, {before:.2f} s with the "
              f"optics of before (x{before / now:.2f}); annual energy {energy_now:.6f} / {energy_then:.6f} kWh/m2")
        print(f"  its layer optics: {optics_now:.2f} s now, {optics_then:.2f} s before "
              f"(x{optics_then / optics_now:.1f}); the rest (the hours' batched solves, sky, tables) "
              f"{now - optics_now:.2f} s")

    variation = parse_vary("middle base.thickness_nm=1000:4000:11", stack)
    match_currents(stack, variation)
    seconds, (_, matches) = cpu(lambda: match_currents(stack, variation))
    print(f"layer match, {variation.column} over 11 values, end to end: {seconds:.2f} s CPU (median of 3); "
          + "; ".join(f"{m['subcells'][0]}/{m['subcells'][1]} matched at {m['value']:.4f} nm" for m in matches))
    shortcut = matching.thickness_optics
    matching.thickness_optics = lambda *args, **kwargs: None      # the search as before: a compile per step
    try:
        before, _ = cpu(lambda: match_currents(stack, variation))
    finally:
        matching.thickness_optics = shortcut
    print(f"  the same with a design compiled per root-search step (as before): {before:.2f} s CPU "
          f"(x{before / seconds:.2f})")
    for m in matches:
        low, high = 1000.0, 1300.0        # the bracket of the 11-value grid around the demo's root
        batched, value_b, stepwise, value_s = root_search(stack, variation.column, low, high, *m["subcells"])
        print(f"  root search alone in [{low:g}, {high:g}] nm: batched optics {1e3 * batched:.0f} ms, a design "
              f"compiled per step {1e3 * stepwise:.0f} ms (x{stepwise / batched:.1f}); roots {value_b:.10f} / "
              f"{value_s:.10f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
