"""The series solve against ngspice, an independent general-purpose circuit solver.

The same circuit (current sources, ngspice's built-in diode model, resistors; see tests/spice.py
for the mapping, the sign convention and the fairness adjustments) is solved by ngspice through
a DC sweep of the terminal voltage in batch mode, and by ``solve_string`` along its pilot. The
reference values here are ngspice's; nothing is copied from our own output.

Tolerances
----------
* Curve: voltage at equal current within 1 mV over the whole traced range, from reverse bias
  (-0.3 Voc) to beyond Voc (issue 5; 1 mV is about what an I-V measurement resolves,
  common practice, no source), for the terminal and for every element. ngspice sweeps the
  terminal voltage upwards, each point starting from the one before. Our curve (80001 points) is
  interpolated linearly in current; that error falls as the square of the point spacing and was
  measured below 3e-8 V here (0.35 uV with 20001 points), so it does not hide a real difference.
  Where the curve is flat (a subcell without shunt in reverse bias) the current does not fix the
  voltage: a current error of CURRENT_RTOL * Jsc would move it by more than 0.1 mV. There the
  current at equal voltage is compared instead, to CURRENT_RTOL = 1e-9 of Jsc: far below
  anything measurable, yet ten times looser than ngspice's RELTOL (measured: 9e-13 or better).
* Voc, Jsc: relative 1e-9. Both solvers find them to near float precision (ngspice's Newton
  stops at RELTOL 1e-10 and converges quadratically; ours are closed forms or bracketed roots to
  4 eps); what is left is GMIN (1e-18 S) and ngspice's stopping rule.
* Pmpp: relative 1e-8. ngspice's maximum is the vertex of a parabola through three points of a
  fine sweep (spacing Voc / 20000, 0.05 to 0.15 mV) around the best point of a coarse one; the
  cubic term of P(V) moves that vertex by far less than 1e-8 of the peak power. Vmpp, where P is
  flat, within 1e-6 V (an error dV there changes P only by P'' dV^2 / 2).
"""
import os

import numpy as np
import pytest

import spice
from conftest import radiative_cells
from siltandem.constants import thermal_voltage_V
from siltandem.circuit.elements import Resistor, Subcell, batch
from siltandem.solve.series import solve_string

#: 1 mV: the agreement of voltage at equal current asked for (issue 5)
VOLTAGE_TOL_V = 1e-3
#: current tolerance where the voltage is not fixed by the current, relative to Jsc
CURRENT_RTOL = 1e-9
#: our curve is compared in voltage where a current error of CURRENT_RTOL * Jsc moves it less
VOLTAGE_RESOLUTION_V = 1e-4
CURVE_POINTS = 80001
SWEEP_POINTS = 801
TEMPERATURE_K = 300.0


def require_ngspice():
    """Skip without ngspice, with the reason; fail instead when CI is set (issue 5)."""
    if spice.ngspice_executable() is not None:
        return
    message = ("ngspice is not installed (Debian package 'ngspice': apt-get install -y ngspice), "
               "so the cross-check against an independent circuit solver did not run")
    if "CI" in os.environ:
        pytest.fail(message + "; CI is set, so this counts as a failure", pytrace=False)
    pytest.skip(message)


def with_losses(cell, *, ere=1.0, j02_A_m2=0.0, series_ohm_m2=0.0, shunt_S_m2=0.0):
    """The same absorber and photocurrent with non-radiative losses and resistances."""
    return Subcell(cell.name, cell.gap_eV, absorptance=cell.absorptance, ere=batch(ere),
                   j02_A_m2=batch(j02_A_m2), series_ohm_m2=batch(series_ohm_m2),
                   shunt_S_m2=batch(shunt_S_m2)).with_photocurrent(cell.photocurrent_A_m2)


def compare_curves(elements, solution):
    """ngspice's sweep against our traced curve; returns the measured deviations.

    For every ngspice point (V, J): where our curve's slope resolves voltage from current, our
    terminal and element voltages at the same J (interpolated) must be within 1 mV; elsewhere our
    current at the same V must be within CURRENT_RTOL * Jsc.
    """
    curve = {k: v[0] for k, v in solution.curve.items()}
    ours_v, ours_j = curve["voltage_V"], curve["current_A_m2"]
    assert np.all(np.diff(ours_v) > 0), "our curve must rise strictly in voltage"
    # the sweep covers our whole traced range (just inside its ends, to interpolate)
    span = ours_v[-1] - ours_v[0]
    theirs = spice.sweep(elements, TEMPERATURE_K, start_V=ours_v[0] + 1e-9 * span,
                         stop_V=ours_v[-1] - 1e-9 * span, points=SWEEP_POINTS)
    v, j = theirs["voltage_V"], theirs["current_A_m2"]
    assert v.size == SWEEP_POINTS
    jsc = solution.jsc_A_m2[0]

    # current -> voltage: our J falls along the curve; reversed it rises (flat parts repeat)
    rising_j = np.maximum.accumulate(ours_j[::-1])
    conductance = np.abs(np.gradient(ours_j, ours_v))   # |dJ/dV| of our curve [S/m^2]
    resolved = np.interp(v, ours_v, conductance) * VOLTAGE_RESOLUTION_V > CURRENT_RTOL * jsc
    voltage_error = np.interp(j, rising_j, ours_v[::-1]) - v
    current_error = np.interp(v, ours_v, ours_j) - j
    element_error = {}
    for element in elements:
        element_error[element.name] = (np.interp(j, rising_j, curve[element.name][::-1])
                                       - theirs[element.name])
    worst = dict(
        voltage_V=np.max(np.abs(voltage_error[resolved])) if resolved.any() else 0.0,
        current_rel=(np.max(np.abs(current_error[~resolved])) / jsc if (~resolved).any()
                     else 0.0),
        elements_V={n: np.max(np.abs(e[resolved])) for n, e in element_error.items()},
        resolved_points=int(resolved.sum()), points=int(v.size))
    assert np.all(np.abs(voltage_error[resolved]) <= VOLTAGE_TOL_V), worst
    assert np.all(np.abs(current_error[~resolved]) <= CURRENT_RTOL * jsc), worst
    for name, error in element_error.items():
        assert np.all(np.abs(error[resolved]) <= VOLTAGE_TOL_V), (name, worst)
    return worst, theirs, resolved


def compare_operating_points(elements, solution):
    """Voc, Jsc and the maximum power point of ngspice against ours; returns the deviations."""
    voc = spice.open_circuit_voltage_V(elements, TEMPERATURE_K)
    jsc = spice.short_circuit_current_A_m2(elements, TEMPERATURE_K)
    v_mpp, j_mpp, p_mpp = spice.maximum_power_point(elements, TEMPERATURE_K, start_V=0.0,
                                                    stop_V=voc)
    assert solution.voc_V[0] == pytest.approx(voc, rel=1e-9)
    assert solution.jsc_A_m2[0] == pytest.approx(jsc, rel=1e-9)
    assert solution.mpp_W_m2[0] == pytest.approx(p_mpp, rel=1e-8)
    assert solution.mpp_V[0] == pytest.approx(v_mpp, abs=1e-6)
    return dict(voc_rel=abs(solution.voc_V[0] / voc - 1),
                jsc_rel=abs(solution.jsc_A_m2[0] / jsc - 1),
                pmpp_rel=abs(solution.mpp_W_m2[0] / p_mpp - 1),
                vmpp_V=abs(solution.mpp_V[0] - v_mpp))


def test_ngspice_thermal_voltage_is_a_published_codata_value():
    # the fairness adjustment rests on this measurement: ngspice's k/q must be one of the
    # published CODATA sets (CODATA 2014: P. J. Mohr, D. B. Newell, B. N. Taylor, Rev. Mod. Phys.
    # 88 (2016) 035009, k = 1.38064852e-23 J/K, e = 1.6021766208e-19 C; CODATA 2018: E. Tiesinga
    # et al., Rev. Mod. Phys. 93 (2021) 025010, exact k = 1.380649e-23, e = 1.602176634e-19)
    require_ngspice()
    measured = spice.ngspice_thermal_voltage_V(TEMPERATURE_K) / TEMPERATURE_K
    published = [1.38064852e-23 / 1.6021766208e-19, 1.380649e-23 / 1.602176634e-19]
    assert min(abs(measured / k - 1) for k in published) < 1e-12
    # ours is CODATA 2018 (siltandem.constants through scipy.constants)
    assert thermal_voltage_V(TEMPERATURE_K) / TEMPERATURE_K == pytest.approx(published[1],
                                                                             rel=1e-15)


def test_single_detailed_balance_subcell(am15g):
    # one radiative-limit cell (W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510) at
    # 1.34 eV: no shunt, so its reverse branch is flat and is compared in current
    require_ngspice()
    cells = radiative_cells([1.34], am15g)
    solution = solve_string(cells, TEMPERATURE_K, curve_points=CURVE_POINTS)
    worst, theirs, resolved = compare_curves(cells, solution)
    compare_operating_points(cells, solution)
    # both kinds of check did something: the knee and forward branch in voltage, the flat
    # reverse branch (down to -0.3 V) in current
    assert resolved.sum() > 100 and (~resolved).sum() > 100
    assert theirs["voltage_V"][~resolved].min() < -0.25


def test_unadjusted_ngspice_shows_its_older_constants(am15g):
    # without the N adjustment, ngspice's Voc of a shunt-free cell is Vt ln(1 + Jph/J0) with its
    # own Vt: smaller than ours by exactly its k/q ratio (3.4e-7 with CODATA 2014); the 1e-9
    # tolerance above is tight enough to see the adjustment matter
    require_ngspice()
    cells = radiative_cells([1.34], am15g)
    ours = solve_string(cells, TEMPERATURE_K).voc_V[0]
    raw = spice.open_circuit_voltage_V(cells, TEMPERATURE_K, match_thermal_voltage=False)
    ratio = spice.ngspice_thermal_voltage_V(TEMPERATURE_K) / thermal_voltage_V(TEMPERATURE_K)
    assert raw / ours - 1 == pytest.approx(ratio - 1, abs=1e-11)
    assert abs(raw / ours - 1) > 1e-9 or ratio == 1.0


def test_two_terminal_dual_with_losses_and_a_resistor(am15g):
    # a 1.73 / 1.12 eV two-terminal dual (near the detailed-balance optimum on silicon) with
    # non-radiative losses, series and shunt resistance and a lumped resistor between the cells;
    # parameters invented for exercising the circuit, the check values are ngspice's
    require_ngspice()
    top, bottom = radiative_cells([1.73, 1.12], am15g)
    top = with_losses(top, ere=1e-2, series_ohm_m2=2e-5, shunt_S_m2=0.1)
    bottom = with_losses(bottom, ere=1e-3, series_ohm_m2=3e-5, shunt_S_m2=0.3)
    elements = [top, Resistor("grid", batch(5e-5)), bottom]
    solution = solve_string(elements, TEMPERATURE_K, curve_points=CURVE_POINTS)
    worst, theirs, resolved = compare_curves(elements, solution)
    compare_operating_points(elements, solution)
    assert resolved.all()   # both cells have shunts: the whole curve is compared in voltage
    # the resistor's voltage is -J R in ngspice too (sign convention of the element)
    np.testing.assert_allclose(theirs["grid"], -5e-5 * theirs["current_A_m2"], rtol=1e-9)


def test_mismatched_triple_reverse_biases_the_limiting_cell(am15g):
    # 1.88 / 1.42 / 1.12 eV in optical order: the silicon bottom cell gets the least current
    # (11.76 mA/cm2 in the radiative limit, see test_solve.py) and limits the string. Near short
    # circuit the two upper cells drive it into reverse bias along its shunt; our solver traces
    # that branch along its junction voltage, ngspice by its terminal sweep. J02 diodes on two
    # cells (C.-T. Sah, R. N. Noyce, W. Shockley, Proc. IRE 45 (1957) 1228); values invented.
    require_ngspice()
    top, middle, bottom = radiative_cells([1.88, 1.42, 1.12], am15g)
    top = with_losses(top, ere=5e-2, j02_A_m2=1e-8, series_ohm_m2=1e-5, shunt_S_m2=0.01)
    middle = with_losses(middle, ere=1e-1, j02_A_m2=1e-7, series_ohm_m2=1e-5, shunt_S_m2=0.01)
    bottom = with_losses(bottom, ere=1e-2, j02_A_m2=1e-5, series_ohm_m2=2e-5, shunt_S_m2=1 / 0.3)
    elements = [top, middle, bottom]
    solution = solve_string(elements, TEMPERATURE_K, curve_points=CURVE_POINTS)
    assert solution.pilot_index[0] == 2
    worst, theirs, resolved = compare_curves(elements, solution)
    compare_operating_points(elements, solution)
    # the limiting cell is reverse biased at short circuit, in ngspice as in ours
    at_short = np.argmin(np.abs(theirs["voltage_V"]))
    assert theirs[bottom.name][at_short] < -1.5
    assert solution.voltage_at_mpp_V[bottom.name][0] > 0
    # and that reverse branch was compared in voltage (not waved through as flat)
    reverse = resolved & (theirs[bottom.name] < -0.2)
    assert reverse.sum() > 100
    assert theirs[bottom.name][reverse].min() < -2.5
