"""Strings with tunnel junctions against ngspice, an independent general-purpose circuit solver.

The circuit is the one of tests/test_against_ngspice.py (current sources, ngspice's built-in
diode model, resistors; mapping, signs and fairness in tests/spice.py) plus, for each tunnel
junction, an ngspice behavioural current source (B-source) whose expression is the three-term
Esaki law (after L. Esaki, Phys. Rev. 109 (1958) 603) written out from the law's own internal
numbers (``esaki.prepare_tunnel_law``). ngspice evaluates that text and its derivatives itself;
it solves the circuit by Newton's method at each point of a DC sweep of the terminal voltage,
each point starting from the one before (continuation). The reference values are ngspice's.
The cell and junction parameters are invented to exercise the circuit (no source); the
subcells are detailed-balance absorbers (W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961)
510) with non-radiative losses and shunts.

Fairness
--------
* Thermal voltage: the diodes' N is scaled to our kT/q (tests/spice.py); a B-source has no
  built-in physical constants, so the deck carries the number n kT/q of our constants (CODATA
  2018 through scipy) in the junction's thermal term.
* The law: our element continues each exponential along its tangent beyond an exponent of 300;
  the plain formula does not, and ngspice 39's B-source ``exp()`` stops at 1e99 (an exponent of
  227.96; measured with a B-source ``V=exp(229)``). The first test shows that the plain formula
  equals our law to rounding in the operating range, and that ngspice evaluates both the plain
  text there and the limited text (``spice.tunnel_current_expression(limited=True)``, our
  tangent continuation written so that the cap is never reached) everywhere to our law. Every
  comparison asserts that the law's exponents stay below 227.96 along both curves, so that the
  plain formula, the limited one and our law are the same function wherever they are compared.
  The sweeps past the peak use the limited text because of the second trap below.

ngspice traps seen here (ngspice 39)
------------------------------------
* Without ``.nodeset``, the first point of a sweep started from all nodes at 0 V. For the dual
  with 20 ohm cm^2 (plain exponentials) ngspice printed "singular matrix" and fell back to gmin
  stepping (up sweep) or, when gmin stepping failed, to source stepping (down sweep, from
  forward bias); with the limited text the warnings remained on the first point. The points it
  reached were right. With ``.nodeset`` from our solution at the sweep's first voltage
  (``spice.node_voltages``) and the limited text none of the sweeps below printed a warning --
  but a deck whose tunnelling prefactor was 1e-4 larger than ours (a deliberate mutation, to
  see what the test notices) brought back one "singular matrix" on the first point, so such
  recovered warnings are let through (and counted in what the comparison returns), while
  anything fatal fails.
  ``.nodeset`` acts on the first point only; every later point of a DC sweep starts from the
  previous one.
* Silent spurious convergence: in the triple with 20 ohm cm^2, sweeping down with plain
  ``exp()`` and without ``.nodeset``, ngspice's Newton iterations at the jump (where no solution
  is left nearby) went astray, presumably into the capped exponentials, and ngspice reported a
  converged point with two node voltages of -/+1.09e63 V (the top cell and the upper junction,
  cancelling in the sum) and -866 A/m^2 instead of +14 A/m^2, with no warning at that point, and
  kept that "solution" to the end of the sweep. With ``.nodeset`` but plain ``exp()`` it did not happen
  there, while the same deck of the triple with 0.1 ohm cm^2 then printed "singular matrix":
  the outcome depends on Newton's path. With the limited text it happened in none of the sweeps
  tried (both triples, both duals, with and without ``.nodeset``). Every ngspice point is still
  checked for it (:func:`no_spurious_points`).

What is compared (issue 5)
--------------------------
(a) Junction below its peak: the whole curve, terminal and every element (1 mV at equal
    current), and Voc, Jsc, MPP, with the harness of tests/test_against_ngspice.py.
(b) Junction driven past its peak: a DC sweep measures the branch it follows by continuation.
    Our ``siltandem.trace.voltage_sweep`` applied to our traced curve says what a voltage sweep
    measures; it is compared to ngspice's up sweep and to its down sweep (a second deck with
    reversed limits) at ngspice's own sweep voltages, away from the jumps: voltage at equal
    current within 1 mV where the curve is steep enough for the current to fix the voltage,
    current at equal voltage where it is flat (tolerances below). The jumps must happen at the
    same voltages within JUMP_STEPS sweep steps. Both regimes: small series resistance (N-shaped
    curve, no hysteresis) and large (S-shaped, hysteresis); StringSolution.regime says which.
(c) A triple with two junctions, one driven past its peak, the same way.

Tolerances
----------
* VOLTAGE_TOL_V = 1 mV at equal current (issue 5; about what an I-V measurement resolves,
  common practice, no source). At a ngspice point the deviation at equal current is
  (J_ours(V) - J_ngspice(V)) / (dJ/dV) with our curve's local slope: the first-order inverse,
  exact for the micro-volt deviations met here. Element voltages at the same points: 1 mV.
* CURRENT_TOL_OF_JSC = 1e-6 of Jsc at equal voltage where the curve is flat (|dJ/dV| * 1 mV
  below it). Our curve (40001 points) is interpolated linearly; away from folds that was
  measured to 1e-10 Jsc on the flat parts and 5e-8 Jsc on the knee.
* FOLD_CURRENT_TOL_OF_JSC = 1e-4 of Jsc (2 uA/cm^2 here, below what a measurement resolves;
  common practice, no source) at equal voltage within FOLD_SEGMENTS segments of a fold of our
  curve in current (a junction's peak or valley on the swept branch). Our traced curve is exact
  at its points, but spaced evenly in current and in the pilot voltage, so the last step into a
  fold spans several millivolts (the voltage goes as the square root of the current there), and
  the chord across it is off: measured up to 0.017 A/m^2 (8e-5 Jsc) with 20001 points, 2.9e-5
  Jsc with 40001. There the slope is near zero and the voltage is not fixed by the current.
* JUMP_STEPS = 3 sweep steps (12.6 mV for the dual, 21 mV for the triple, at 801 points): a
  continuation sweep leaves a branch at the first sweep point past the fold, our emulation at
  the same point (measured: the same step in every case); the window allows for a fold within
  rounding of a sweep voltage. Points within the window are not compared in current.
"""
import re

import numpy as np
import pytest

import spice
from conftest import radiative_cells
from siltandem.circuit.elements import Resistor, TunnelJunction, batch
from siltandem.laws import esaki
from siltandem.solve.series import solve_string
from siltandem.solve.trace import voltage_sweep
from test_against_ngspice import (compare_curves, compare_operating_points, require_ngspice,
                                  with_losses)

TEMPERATURE_K = 300.0
VOLTAGE_TOL_V = 1e-3
CURRENT_TOL_OF_JSC = 1e-6
FOLD_CURRENT_TOL_OF_JSC = 1e-4
#: sweep points interpolated within this many segments of a current extremum of our curve
FOLD_SEGMENTS = 3
JUMP_STEPS = 3
#: points of our traced curve (interpolated) and of ngspice's sweeps
CURVE_POINTS = 40001
SWEEP_POINTS = 801
#: an element voltage beyond this [V] is a spurious ngspice point (the strings here span < 4 V)
SPURIOUS_V = 50.0
#: ngspice 39's B-source exp() returns at most 1e99: exponents above ln(1e99) are capped
NGSPICE_EXP_CAP = np.log(1e99)


def tunnel(name, *, peak_A_m2, valley_ratio=15.0, peak_V=0.05, valley_V=0.3):
    """A tunnel junction (invented values of the usual orders: peak 50 mV, valley 0.3 V)."""
    return TunnelJunction(name, batch(peak_A_m2), batch(peak_V), batch(peak_A_m2 / valley_ratio),
                          batch(valley_V))


def dual(spectrum, *, peak_A_m2, series_ohm_m2):
    """1.73 / 1.12 eV dual (near the detailed-balance optimum on silicon) with a junction."""
    top, bottom = radiative_cells([1.73, 1.12], spectrum)
    top = with_losses(top, ere=1e-2, series_ohm_m2=2e-5, shunt_S_m2=0.1)
    bottom = with_losses(bottom, ere=1e-3, series_ohm_m2=3e-5, shunt_S_m2=0.3)
    return [top, tunnel("junction", peak_A_m2=peak_A_m2), bottom,
            Resistor("contacts", batch(series_ohm_m2))]


def triple(spectrum, *, lower_peak_A_m2, series_ohm_m2):
    """1.88 / 1.42 / 1.12 eV triple (the cells of test_against_ngspice.py) with two junctions."""
    top, middle, bottom = radiative_cells([1.88, 1.42, 1.12], spectrum)
    top = with_losses(top, ere=5e-2, j02_A_m2=1e-8, series_ohm_m2=1e-5, shunt_S_m2=0.01)
    middle = with_losses(middle, ere=1e-1, j02_A_m2=1e-7, series_ohm_m2=1e-5, shunt_S_m2=0.01)
    bottom = with_losses(bottom, ere=1e-2, j02_A_m2=1e-5, series_ohm_m2=2e-5,
                         shunt_S_m2=1 / 0.3)
    return [top, tunnel("upper", peak_A_m2=1000.0, valley_ratio=12.0, peak_V=0.06, valley_V=0.35),
            middle, tunnel("lower", peak_A_m2=lower_peak_A_m2), bottom,
            Resistor("contacts", batch(series_ohm_m2))]


def no_spurious_points(theirs, elements):
    """Every element voltage ngspice reports is finite and physical (see the module notes)."""
    for element in elements:
        v = theirs[element.name]
        assert np.all(np.isfinite(v)) and np.max(np.abs(v)) < SPURIOUS_V, (
            f"ngspice reached a spurious point: {element.name} at {np.max(np.abs(v)):.3g} V")
    assert np.all(np.isfinite(theirs["current_A_m2"]))


def junction_forward_voltages(theirs, elements):
    """Forward voltage u = -(element voltage) of each tunnel junction in a ngspice result."""
    return {e.name: -theirs[e.name] for e in elements if e.kind == "tunnel"}


def assert_exponents_in_range(u, element):
    """Every exponent of the law at forward voltages ``u`` stays below ngspice's exp() cap
    (227.96) and hence below our law's limit (300): the plain formula is our law there."""
    numbers = spice.tunnel_law_numbers(element, TEMPERATURE_K)
    assert np.max(spice.tunnel_exponents(u, numbers)) < NGSPICE_EXP_CAP < esaki.EXP_LIMIT


def solve(elements):
    solution = solve_string(elements, TEMPERATURE_K, curve_points=CURVE_POINTS)
    assert not solution.failed[0]
    curve = {k: v[0] for k, v in solution.curve.items()}
    assert np.all(np.isfinite(curve["voltage_V"])) and np.all(np.isfinite(curve["current_A_m2"]))
    return solution, curve


def ngspice_sweep(elements, curve, direction):
    """ngspice's DC sweep over our curve's voltage range, started from our solution there."""
    v = curve["voltage_V"]
    first = int(np.argmin(v)) if direction == "up" else int(np.argmax(v))
    nodeset = spice.node_voltages(elements, TEMPERATURE_K,
                                  element_voltages_V={e.name: curve[e.name][first]
                                                      for e in elements},
                                  current_A_m2=curve["current_A_m2"][first])
    start, stop = (v.min(), v.max()) if direction == "up" else (v.max(), v.min())
    theirs = spice.sweep(elements, TEMPERATURE_K, start_V=start, stop_V=stop,
                         points=SWEEP_POINTS, nodeset=nodeset, limited_exponentials=True,
                         strict=False)
    # a warning that ngspice recovered from (singular matrix, then gmin or source stepping at
    # the first point) is let through and reported: the points are checked below, and a point
    # that did not converge ends the sweep early (fewer points); anything else fails
    log = theirs.pop("log")
    fatal = re.findall(r"(?im)^.*(?:error|no convergence|too small|abort).*$", log)
    assert not fatal, log
    theirs["warnings"] = re.findall(r"(?im)^.*(?:warning).*$", log)
    assert theirs["voltage_V"].size == SWEEP_POINTS, log
    no_spurious_points(theirs, elements)
    return theirs


def our_jumps(curve, segment, direction):
    """Sweep steps n -> n+1 across which our emulated sweep jumps (skips a fold of the curve).

    Between the two segments the sweep stands on, our curve must run monotonically in the
    sweep's direction; where it turns back in voltage (an S-shaped part) the sweep jumped.
    """
    v = curve["voltage_V"]
    steps = []
    for n in range(len(segment) - 1):
        a, b = sorted((segment[n], segment[n + 1]))
        if np.any(np.diff(v[a:b + 2]) < 0):
            steps.append(n)
    return steps


def compare_sweep(elements, solution, curve, direction):
    """ngspice's sweep in one direction against our emulated sweep; returns the deviations."""
    theirs = ngspice_sweep(elements, curve, direction)
    v_ng, j_ng = theirs["voltage_V"], theirs["current_A_m2"]
    for element in elements:   # the limited form used in the deck is the plain formula here
        if element.kind == "tunnel":
            assert_exponents_in_range(-curve[element.name], element)
            assert_exponents_in_range(-theirs[element.name], element)
    target, j_ours, segment, weight = voltage_sweep(curve["voltage_V"], curve["current_A_m2"],
                                                    direction=direction, points=SWEEP_POINTS)
    step = abs(target[1] - target[0])
    assert np.max(np.abs(target - v_ng)) < 1e-9 * step   # the same sweep voltages
    assert np.all(segment >= 0) and np.all(np.isfinite(j_ours))

    jumps = our_jumps(curve, segment, direction)
    # ngspice's jumps: its largest current steps near each of ours must be jumps of about the
    # same size (a sweep elsewhere changes the current by far less per step)
    dj_ng = np.abs(np.diff(j_ng))
    dj_ours = np.abs(np.diff(j_ours))
    jump_offsets = []
    for n in jumps:
        lo, hi = max(n - JUMP_STEPS, 0), min(n + JUMP_STEPS + 1, len(dj_ng))
        m = lo + int(np.argmax(dj_ng[lo:hi]))
        jump_offsets.append(m - n)
        assert dj_ng[m] > 0.5 * dj_ours[n], (direction, target[n], dj_ng[m], dj_ours[n])
    near_jump = np.zeros(SWEEP_POINTS, dtype=bool)
    for n in jumps:
        near_jump[max(n - JUMP_STEPS, 0):n + JUMP_STEPS + 2] = True

    # deviations away from the jumps
    v, j = curve["voltage_V"], curve["current_A_m2"]
    slope = (j[segment + 1] - j[segment]) / (v[segment + 1] - v[segment])
    jsc = solution.jsc_A_m2[0]
    turns = np.flatnonzero(np.diff(np.sign(np.diff(j))) != 0) + 1   # current extrema of our curve
    near_fold = np.zeros(SWEEP_POINTS, dtype=bool)
    for i in turns:
        near_fold |= np.abs(segment - i) <= FOLD_SEGMENTS
    near_fold &= ~near_jump
    resolved = (np.abs(slope) * VOLTAGE_TOL_V >= CURRENT_TOL_OF_JSC * jsc) & ~near_jump & ~near_fold
    flat = ~resolved & ~near_jump & ~near_fold
    current_error = j_ours - j_ng
    with np.errstate(divide="ignore", invalid="ignore"):
        voltage_error = current_error / slope      # V_ours(J) - V_ngspice at equal current
    element_error = {}
    for element in elements:
        ours = curve[element.name][segment] + weight * (curve[element.name][segment + 1]
                                                        - curve[element.name][segment])
        element_error[element.name] = np.abs(ours - theirs[element.name])

    def worst_of(x, mask):
        return float(np.max(np.abs(x[mask]))) if mask.any() else 0.0

    worst = dict(direction=direction, jumps_V=[float(target[n]) for n in jumps],
                 jump_offsets_steps=jump_offsets,
                 voltage_V=worst_of(voltage_error, resolved),
                 current_of_jsc=worst_of(current_error, flat) / jsc,
                 current_near_folds_of_jsc=worst_of(current_error, near_fold) / jsc,
                 elements_V={n: worst_of(e, resolved) for n, e in element_error.items()},
                 resolved=int(resolved.sum()), flat=int(flat.sum()),
                 near_folds=int(near_fold.sum()), skipped_near_jumps=int(near_jump.sum()),
                 ngspice_warnings=len(theirs["warnings"]))
    assert resolved.sum() > SWEEP_POINTS // 10, worst
    assert np.all(np.abs(voltage_error[resolved]) <= VOLTAGE_TOL_V), worst
    assert np.all(np.abs(current_error[flat]) <= CURRENT_TOL_OF_JSC * jsc), worst
    assert np.all(np.abs(current_error[near_fold]) <= FOLD_CURRENT_TOL_OF_JSC * jsc), worst
    for name, error in element_error.items():
        assert np.all(error[resolved] <= VOLTAGE_TOL_V), (name, worst)
    return worst, theirs, target, j_ours


def test_tunnel_source_is_our_law():
    # the B-source text against our law, first in numpy (the plain formula, term by term), then
    # as ngspice itself evaluates it: a voltage source across the B-source, swept in u
    require_ngspice()
    element = tunnel("junction", peak_A_m2=150.0)
    numbers = spice.tunnel_law_numbers(element, TEMPERATURE_K)
    prepared = esaki.prepare_tunnel_law(**element._law(TEMPERATURE_K))
    # the operating range: forward voltages the junction takes on the curves below (reverse
    # bias of the stack down to -1.2 V leaves it on its thermal branch, below 1.0 V)
    u = np.linspace(-0.5, 1.0, 1501)
    assert_exponents_in_range(u, element)
    ours = esaki.evaluate_prepared(u, prepared)[0].ravel()
    np.testing.assert_allclose(spice.tunnel_current_numpy(u, numbers), ours, rtol=1e-12,
                               atol=1e-12)
    # far outside it (Zener side beyond -15 V, thermal side beyond 7.8 V) an exponent passes
    # 300, our law continues along the tangent and the plain formula is no longer our law
    far = np.array([-20.0, 10.0])
    assert np.all(spice.tunnel_exponents(far, numbers) > esaki.EXP_LIMIT)
    plain, limited_law = spice.tunnel_current_numpy(far, numbers), esaki.evaluate_prepared(
        far, prepared)[0].ravel()
    assert np.all(np.abs(plain / limited_law) > 1e10)

    for limited, (lo, hi) in ((False, (-0.5, 1.0)), (True, (-20.0, 10.0))):
        expression = spice.tunnel_current_expression("v(a)", numbers, limited=limited)
        lines = ["Vu a 0 DC 0", f"Bjunction a 0 I={expression}",
                 f".dc Vu {lo} {hi} {(hi - lo) / 1500}"]
        columns = spice.run_deck(lines, ["run", "wrdata {out}/law.txt i(vu) v(a)"],
                                 ["law.txt"])["law.txt"]
        u_ng = columns["v(a)"]
        j_ng = -columns["i(vu)"] / spice.AREA_M2   # the B-source's current leaves Vu's + node
        ours = esaki.evaluate_prepared(u_ng, prepared)[0].ravel()
        # ngspice's branch current is that of its last Newton iterate, converged to RELTOL
        # 1e-10 (measured: 2.3e-10 in the operating range, 1.2e-9 at 1e135 A/m^2 far outside)
        np.testing.assert_allclose(j_ng, ours, rtol=1e-8 if limited else 1e-9, atol=1e-9)
        if limited:   # the limited form was checked where the tangent continuation acts
            assert np.any(spice.tunnel_exponents(u_ng, numbers) > esaki.EXP_LIMIT)


def assert_hysteresis(up, down, theirs_up, theirs_down, target_up):
    """S-shaped: one jump each way, the up sweep's at a higher voltage; ngspice's loop is open."""
    assert len(up["jumps_V"]) == 1 and len(down["jumps_V"]) == 1
    assert up["jumps_V"][0] > down["jumps_V"][0] + 10 * abs(target_up[1] - target_up[0])
    inside = (target_up > down["jumps_V"][0] + 0.01) & (target_up < up["jumps_V"][0] - 0.01)
    gap = np.abs(theirs_up["current_A_m2"][inside] - theirs_down["current_A_m2"][::-1][inside])
    assert inside.sum() > 5 and gap.min() > 10.0     # A/m^2: two branches, in ngspice too


def test_dual_with_junction_below_its_peak(am15g):
    # peak 100 mA/cm2, about five times the photocurrent: the junction stays on its tunnel
    # branch; the deck is the plain formula without .nodeset, as ngspice meets it
    require_ngspice()
    elements = dual(am15g, peak_A_m2=1000.0, series_ohm_m2=1e-5)
    solution = solve_string(elements, TEMPERATURE_K, curve_points=80001)
    assert solution.regime[0] == "below peak"
    worst, theirs, resolved = compare_curves(elements, solution)
    points = compare_operating_points(elements, solution)
    assert resolved.all()
    no_spurious_points(theirs, elements)
    u = junction_forward_voltages(theirs, elements)["junction"]
    assert np.max(u) < 0.05 and np.min(u) < 0 < np.max(u)   # both directions, below peak_V
    assert_exponents_in_range(u, elements[1])
    assert_exponents_in_range(-solution.curve["junction"][0], elements[1])
    print("below peak:", worst, points)


@pytest.mark.parametrize("series_ohm_m2, regime", [
    (1e-5, "past peak, no hysteresis"),     # 0.1 ohm cm2
    (2e-3, "past peak, hysteresis"),        # 20 ohm cm2
])
def test_dual_with_junction_past_its_peak(am15g, series_ohm_m2, regime):
    # peak 15 mA/cm2, below the 21.7 mA/cm2 photocurrent (as in stacks/demo_tunnel_limit.toml)
    require_ngspice()
    elements = dual(am15g, peak_A_m2=150.0, series_ohm_m2=series_ohm_m2)
    solution, curve = solve(elements)
    assert solution.regime[0] == regime
    up, theirs_up, target_up, _ = compare_sweep(elements, solution, curve, "up")
    down, theirs_down, _, _ = compare_sweep(elements, solution, curve, "down")
    peak_v, _, valley_v, _ = (float(x[0, 0]) for x in elements[1].extrema(TEMPERATURE_K))
    if regime == "past peak, no hysteresis":
        # N-shaped: no jumps; ngspice holds the junction inside its negative-resistance region
        # and measures the terminal current rising with voltage there; its two sweeps coincide
        assert up["jumps_V"] == [] and down["jumps_V"] == []
        u = junction_forward_voltages(theirs_up, elements)["junction"]
        assert np.count_nonzero((u > peak_v + 0.01) & (u < valley_v - 0.01)) > 10
        assert np.count_nonzero(np.diff(theirs_up["current_A_m2"]) > 0.1) > 10
        np.testing.assert_allclose(theirs_down["current_A_m2"][::-1], theirs_up["current_A_m2"],
                                   rtol=0, atol=1e-6 * solution.jsc_A_m2[0])
    else:
        assert_hysteresis(up, down, theirs_up, theirs_down, target_up)
    print(regime, up, down)


def test_triple_with_two_junctions_one_past_its_peak(am15g):
    # 1.88 / 1.42 / 1.12 eV: the bottom cell limits at 11.8 mA/cm2; the lower junction's peak
    # (10 mA/cm2) is below it, the upper junction's (100 mA/cm2) far above every current
    require_ngspice()
    elements = triple(am15g, lower_peak_A_m2=100.0, series_ohm_m2=2e-3)
    solution, curve = solve(elements)
    assert solution.regime[0] == "past peak, hysteresis"
    up, theirs_up, target_up, _ = compare_sweep(elements, solution, curve, "up")
    down, theirs_down, _, _ = compare_sweep(elements, solution, curve, "down")
    assert_hysteresis(up, down, theirs_up, theirs_down, target_up)
    upper = elements[1].extrema(TEMPERATURE_K)
    lower = elements[3].extrema(TEMPERATURE_K)
    for theirs in (theirs_up, theirs_down):
        u = junction_forward_voltages(theirs, elements)
        assert np.max(u["upper"]) < upper.peak_V[0, 0]    # never past its peak
        assert np.max(u["lower"]) > lower.valley_V[0, 0]  # reaches its thermal branch
    print("triple:", up, down)
