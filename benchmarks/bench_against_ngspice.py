"""Speed of one 1000-point light I-V of a triple with two tunnel junctions, ours against ngspice.

Issue 5's speed target: our ``solve_string(..., curve_points=1000)`` against ngspice's process
wall time for the same 1000-point DC sweep of the same circuit (tests/spice.py builds the deck:
built-in diodes for the subcells, a behavioural source per junction). Two cases: (i) both
junctions below their peaks, (ii) the lower junction driven past its peak (20 ohm cm^2 of series
resistance: S-shaped curve, hysteresis). Medians of REPEATS ngspice processes and of OURS_REPEATS
solves each, all measured in this one run; prints ratios and asserts nothing (these machines are
shared and noisy: compare ratios).

What is timed
-------------
* Ours: building the element objects (fresh, so that no cached junction extrema carry over from
  the previous run; photocurrents are computed once beforehand) and ``solve_string`` with a
  1000-point curve, in this process.
* ngspice: the wall time of the ``ngspice -b`` process from start to exit, as the tests run it
  (``spice.run_deck(timings=...)``): reading the deck, the sweep, writing the results. Writing
  the deck and reading the results back in Python are not counted. Twice: with the tests'
  tight tolerances (RELTOL 1e-10, ...: comparable accuracy to ours) and with ngspice's default
  tolerances (its usual speed). Case (ii) uses what the tests use there: ``.nodeset`` from our
  solution and the limited exponentials (tests/test_tunnel_against_ngspice.py says why).
* For scale, the wall time of an ngspice process that solves a one-resistor operating point.

Run: python benchmarks/bench_against_ngspice.py
"""
import timing  # noqa: E402  (benchmarks/timing.py, beside this script)
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
import spice  # noqa: E402  (the tests' ngspice harness)

from siltandem.circuit.elements import Resistor, Subcell, TunnelJunction, batch  # noqa: E402
from siltandem.laws.optics import step_absorber_photocurrents  # noqa: E402
from siltandem.solve.series import solve_string  # noqa: E402
from siltandem.materials.spectra import get_spectrum  # noqa: E402

REPEATS = 7
#: our solve takes about a millisecond: many more runs for a steady median on a shared machine
OURS_REPEATS = 201
CURVE_POINTS = 1000
TEMPERATURE_K = 300.0
#: ngspice's default tolerances, written out (with the tests' GMIN, so that the circuit is equal)
DEFAULT_OPTIONS = "gmin=1e-18"


def median_time(function, repeats=REPEATS):
    return timing.median_time(function, repeats)


def triple_builder(spectrum, *, lower_peak_A_m2, series_ohm_m2, j02=True):
    """A function making fresh elements of the 1.88 / 1.42 / 1.12 eV triple of the tests."""
    gaps = [1.88, 1.42, 1.12]
    currents = step_absorber_photocurrents([np.array(g) for g in gaps], [1.0] * 3,
                                           spectrum.wavelength_nm, spectrum.photon_flux)
    losses = [dict(ere=5e-2, j02=1e-8, rs=1e-5, g=0.01), dict(ere=1e-1, j02=1e-7, rs=1e-5, g=0.01),
              dict(ere=1e-2, j02=1e-5, rs=2e-5, g=1 / 0.3)]

    def build():
        cells = [Subcell(f"cell{i}", batch(g), ere=batch(p["ere"]),
                         j02_A_m2=batch(p["j02"] if j02 else 0.0), series_ohm_m2=batch(p["rs"]),
                         shunt_S_m2=batch(p["g"])).with_photocurrent(j)
                 for i, (g, p, j) in enumerate(zip(gaps, losses, currents))]
        upper = TunnelJunction("upper", batch(1000.0), batch(0.06), batch(1000.0 / 12),
                               batch(0.35))
        lower = TunnelJunction("lower", batch(lower_peak_A_m2), batch(0.05),
                               batch(lower_peak_A_m2 / 15), batch(0.3))
        return [cells[0], upper, cells[1], lower, cells[2],
                Resistor("contacts", batch(series_ohm_m2))]

    return build


def where_time_goes(build):
    """Our solve split into its string evaluations (each inverts every element once at a batch
    of points) and the rest (element set-up: tables, junction extrema; pilot inverses; power
    balance): medians over REPEATS runs."""
    from siltandem.solve import series as solve_module

    original = solve_module.SeriesString.evaluate
    record = []

    def timed(self, t, **keywords):
        start = time.perf_counter()
        out = original(self, t, **keywords)
        record.append(time.perf_counter() - start)
        return out

    solve_module.SeriesString.evaluate = timed
    try:
        totals, inside, counts = [], [], []
        for _ in range(REPEATS):
            record.clear()
            start = time.perf_counter()
            solve_string(build(), TEMPERATURE_K, curve_points=CURVE_POINTS)
            totals.append(time.perf_counter() - start)
            inside.append(sum(record))
            counts.append(len(record))
    finally:
        solve_module.SeriesString.evaluate = original
    return statistics.median(totals), statistics.median(inside), int(statistics.median(counts))


def ngspice_median(elements, solution, *, options, past_peak):
    curve = {k: v[0] for k, v in solution.curve.items()}
    v = curve["voltage_V"]
    nodeset = None
    if past_peak:
        first = int(np.argmin(v))
        nodeset = spice.node_voltages(elements, TEMPERATURE_K,
                                      element_voltages_V={e.name: curve[e.name][first]
                                                          for e in elements},
                                      current_A_m2=curve["current_A_m2"][first])
    timings = []
    for _ in range(REPEATS):
        out = spice.sweep(elements, TEMPERATURE_K, start_V=float(v.min()), stop_V=float(v.max()),
                          points=CURVE_POINTS, nodeset=nodeset, options=options,
                          timings=timings, strict=False, limited_exponentials=past_peak)
        assert out["voltage_V"].size == CURVE_POINTS, "ngspice's sweep ended early"
    return statistics.median(timings)


def main():
    if spice.ngspice_executable() is None:
        print("ngspice is not installed (Debian package 'ngspice'); nothing to compare against")
        return
    spectrum = get_spectrum("am1.5g")
    print(f"ngspice {spice.ngspice_version()}, medians of {REPEATS} runs, "
          f"{CURVE_POINTS}-point curves, one process each")
    startup = []
    for _ in range(REPEATS):
        spice.run_deck(["Rload a 0 1", "Iload 0 a DC 1"], ["op", "wrdata {out}/op.txt v(a)"],
                       ["op.txt"], timings=startup)
    print(f"  ngspice process for a one-resistor operating point: "
          f"{statistics.median(startup) * 1e3:7.1f} ms")
    cases = [
        ("(i)  both junctions below peak", dict(lower_peak_A_m2=1000.0, series_ohm_m2=2e-3), False),
        ("(ii) lower junction past peak ", dict(lower_peak_A_m2=100.0, series_ohm_m2=2e-3), True),
        ("(i)  below peak, no J02       ", dict(lower_peak_A_m2=1000.0, series_ohm_m2=2e-3,
                                               j02=False), False),
        ("(ii) past peak, no J02        ", dict(lower_peak_A_m2=100.0, series_ohm_m2=2e-3,
                                               j02=False), True),
    ]
    for label, parameters, past_peak in cases:
        build = triple_builder(spectrum, **parameters)
        solution = solve_string(build(), TEMPERATURE_K, curve_points=CURVE_POINTS)
        regime = solution.regime[0]
        assert (regime != "below peak") == past_peak, regime   # the case is what it says
        ours = median_time(lambda: solve_string(build(), TEMPERATURE_K,
                                                curve_points=CURVE_POINTS), OURS_REPEATS)
        warm_elements = build()
        solve_string(warm_elements, TEMPERATURE_K, curve_points=CURVE_POINTS)
        warm = median_time(lambda: solve_string(warm_elements, TEMPERATURE_K,
                                                curve_points=CURVE_POINTS), OURS_REPEATS)
        elements = build()
        tight = ngspice_median(elements, solution, options=spice.OPTIONS, past_peak=past_peak)
        loose = ngspice_median(elements, solution, options=DEFAULT_OPTIONS, past_peak=past_peak)
        print(f"{label} [{regime}]")
        print(f"  ours, fresh elements: {ours * 1e3:8.1f} ms   (cached junction extrema: "
              f"{warm * 1e3:.1f} ms)")
        print(f"  ngspice, tight tolerances: {tight * 1e3:8.1f} ms   ratio ngspice / ours: "
              f"{tight / ours:6.2f} x")
        print(f"  ngspice, default tolerances: {loose * 1e3:6.1f} ms   ratio ngspice / ours: "
              f"{loose / ours:6.2f} x   (target: >= 10 x)")
        total, evaluations, count = where_time_goes(build)
        print(f"  where ours goes: {count} string evaluations {evaluations * 1e3:.1f} ms, "
              f"the rest {(total - evaluations) * 1e3:.1f} ms (of {total * 1e3:.1f} ms)")


if __name__ == "__main__":
    main()
