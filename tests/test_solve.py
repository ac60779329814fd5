"""The series solve against published detailed-balance limits, pvlib and brute force."""
import numpy as np
import pytest
from scipy import optimize
from pvlib import pvsystem

from conftest import radiative_cells
from siltandem.constants import thermal_voltage_V
from siltandem.circuit.elements import Resistor, Subcell, batch
from siltandem.solve.series import solve_string


def efficiency_pct(gaps, spectrum, temperature_K=300.0, four_terminal=False):
    cells = radiative_cells(gaps, spectrum)
    if four_terminal:
        power = sum(solve_string([c], temperature_K).mpp_W_m2 for c in cells)
    else:
        power = solve_string(cells, temperature_K).mpp_W_m2
    return 100 * power / spectrum.irradiance_W_m2


@pytest.mark.parametrize("gap, jsc, voc, ff, eta300, eta298", [
    # S. Ruehle, Solar Energy 130 (2016) 139: 33.7 % at 1.34 eV (C); the rows are the R values of
    # ../shared/REFERENCES.md standing for that table; tolerance 0.15 % absolute (issue 2)
    (1.12, 43.81, 0.8766, 86.97, 33.40, 33.50),
    (1.34, 35.02, 1.0817, 88.90, 33.68, 33.76),
    (1.42, 32.04, 1.1565, 89.46, 33.15, 33.23),
    (1.70, 22.44, 1.4181, 91.01, 28.96, 29.01),
    (1.90, 16.93, 1.6052, 91.85, 24.96, 25.00),
])
def test_shockley_queisser_single_junction(am15g, gap, jsc, voc, ff, eta300, eta298):
    cells = radiative_cells([gap], am15g)
    s = solve_string(cells, 300.0)
    assert 100 * s.mpp_W_m2[0] / am15g.irradiance_W_m2 == pytest.approx(eta300, abs=0.15)
    assert s.voc_V[0] == pytest.approx(voc, abs=2e-3)
    assert s.jsc_A_m2[0] / 10 == pytest.approx(jsc, abs=0.05)
    assert 100 * s.fill_factor[0] == pytest.approx(ff, abs=0.05)
    assert efficiency_pct([gap], am15g, 298.15) == pytest.approx(eta298, abs=0.15)


def test_shockley_queisser_peak_near_1_34_eV(am15g):
    # Ruehle 2016: maximum 33.7 % near 1.34 eV (AM1.5G, 1000 W/m2)
    best = optimize.minimize_scalar(lambda g: -efficiency_pct([g], am15g), bounds=(1.2, 1.45),
                                    method="bounded", options=dict(xatol=1e-3))
    assert -best.fun == pytest.approx(33.7, abs=0.15)
    assert best.x == pytest.approx(1.34, abs=0.03)


def test_two_terminal_dual_on_silicon_optimum(am15g):
    # R: 45.06 % at 1.73 eV (300 K); published 45.2 % at 1.71 eV (A. Fell et al., EES Solar 2025)
    # and about 45 % at about 1.7 eV (I. Almansouri et al., IEEE J. Photovolt. 5 (2015) 968)
    best = optimize.minimize_scalar(lambda g: -efficiency_pct([g, 1.12], am15g),
                                    bounds=(1.6, 1.9), method="bounded",
                                    options=dict(xatol=1e-4))
    assert best.x == pytest.approx(1.73, abs=0.01)
    assert -best.fun == pytest.approx(45.06, abs=0.05)
    assert -best.fun == pytest.approx(45.2, abs=0.3)   # the published figure


def test_two_terminal_dual_top_gap_scan_batched(am15g):
    # R row of ../shared/REFERENCES.md; the whole scan in one batched solve
    gaps = np.array([1.60, 1.65, 1.70, 1.75, 1.80, 1.90])
    expected = [36.83, 40.41, 44.09, 44.67, 43.03, 39.05]
    cells = radiative_cells([gaps, np.full(6, 1.12)], am15g)
    s = solve_string(cells, 300.0)
    np.testing.assert_allclose(100 * s.mpp_W_m2 / am15g.irradiance_W_m2, expected, atol=0.02)
    # the limiting (pilot) cell switches from the silicon to the top cell above the optimum
    assert list(s.pilot_index) == [1, 1, 1, 0, 0, 0]


def test_four_terminal_dual(am15g):
    # R: 45.25 % with the top near 1.81 eV (broad optimum)
    best = optimize.minimize_scalar(lambda g: -efficiency_pct([g, 1.12], am15g,
                                                              four_terminal=True),
                                    bounds=(1.6, 2.1), method="bounded",
                                    options=dict(xatol=1e-3))
    assert -best.fun == pytest.approx(45.25, abs=0.05)
    assert best.x == pytest.approx(1.81, abs=0.03)


def test_triples(am15g):
    # R: 2T triple on Si 49.45 % at 2.01/1.50/1.12; lattice-matched 1.88/1.42/1.12 39.3 %,
    # silicon-limited at 11.76 mA/cm2
    assert efficiency_pct([2.01, 1.50, 1.12], am15g) == pytest.approx(49.45, abs=0.05)
    cells = radiative_cells([1.88, 1.42, 1.12], am15g)
    s = solve_string(cells, 300.0)
    assert 100 * s.mpp_W_m2[0] / 1000 == pytest.approx(39.3, abs=0.05)
    assert s.pilot_index[0] == 2
    assert s.jsc_A_m2[0] / 10 == pytest.approx(11.76, abs=0.01)


def test_unconstrained_dual(am15g):
    # R: 45.74 % at 1.63 / 0.96 eV
    assert efficiency_pct([1.63, 0.96], am15g) == pytest.approx(45.74, abs=0.05)


@pytest.mark.parametrize("rs, rsh", [(0.0, np.inf), (1e-5, 1e2), (5e-5, 3.0), (2e-4, 30.0)])
def test_single_subcell_mpp_matches_pvlib_singlediode(rs, rsh):
    # reference: pvlib.pvsystem.singlediode (its own MPP search on the Lambert W curve)
    jph, j0, temperature = 320.0, 1e-13, 310.0
    cell = Subcell("c", batch(1.4), series_ohm_m2=batch(rs),
                   shunt_S_m2=batch(0.0 if np.isinf(rsh) else 1 / rsh))
    cell = cell.with_photocurrent(jph)
    # bind the saturation current directly: override J0 through the ERE
    ere = cell.j01_A_m2(temperature)[0, 0] / j0
    cell = Subcell("c", batch(1.4), ere=batch(ere), series_ohm_m2=batch(rs),
                   shunt_S_m2=batch(0.0 if np.isinf(rsh) else 1 / rsh)).with_photocurrent(jph)
    s = solve_string([cell], temperature)
    ref = pvsystem.singlediode(jph, j0, rs, rsh, thermal_voltage_V(temperature))
    assert s.voc_V[0] == pytest.approx(ref["v_oc"], rel=1e-9)
    assert s.jsc_A_m2[0] == pytest.approx(ref["i_sc"], rel=1e-9)
    assert s.mpp_W_m2[0] == pytest.approx(ref["p_mp"], rel=1e-9)
    assert s.mpp_V[0] == pytest.approx(ref["v_mp"], rel=1e-6)


def test_string_voltage_is_sum_of_pvlib_voltages(am15g):
    # brute force: at the solved MPP current every element's voltage equals pvlib's v_from_i
    temperature = 300.0
    cells = radiative_cells([1.75, 1.12], am15g)
    cells = [Subcell(c.name, c.gap_eV, ere=batch(0.01), series_ohm_m2=batch(2e-5),
                     shunt_S_m2=batch(0.001)).with_photocurrent(c.photocurrent_A_m2)
             for c in cells]
    resistor = Resistor("grid", batch(3e-5))
    s = solve_string([cells[0], resistor, cells[1]], temperature)
    j = s.mpp_A_m2[0]
    total = -j * 3e-5
    for c in cells:
        total += pvsystem.v_from_i(j, c.photocurrent_A_m2[0, 0],
                                   c.j01_A_m2(temperature)[0, 0], 2e-5, 1e3,
                                   thermal_voltage_V(temperature))
    assert s.mpp_V[0] == pytest.approx(total, abs=1e-9)
    # and the MPP is the maximum of P(J) found independently by scipy on that pvlib curve
    def negative_power(current):
        v = -current * 3e-5 + sum(
            pvsystem.v_from_i(current, c.photocurrent_A_m2[0, 0], c.j01_A_m2(temperature)[0, 0],
                              2e-5, 1e3, thermal_voltage_V(temperature)) for c in cells)
        return -current * v
    best = optimize.minimize_scalar(negative_power, bounds=(0.5 * j, 1.0 * s.jsc_A_m2[0]),
                                    method="bounded", options=dict(xatol=1e-10))
    assert s.mpp_W_m2[0] == pytest.approx(-best.fun, rel=1e-10)
    assert s.power_balance_error_W_m2[0] < 1e-9 * s.mpp_W_m2[0]


def test_batch_equals_one_by_one(am15g):
    gaps = np.array([1.55, 1.7, 1.85, 2.0])
    together = solve_string(radiative_cells([gaps, np.full(4, 1.12)], am15g), 300.0)
    for k, g in enumerate(gaps):
        alone = solve_string(radiative_cells([g, 1.12], am15g), 300.0)
        assert together.mpp_W_m2[k] == pytest.approx(alone.mpp_W_m2[0], rel=1e-12)
        assert together.voc_V[k] == pytest.approx(alone.voc_V[0], rel=1e-12)


def test_reverse_biased_limiting_cell_with_tiny_saturation_current(am15g):
    # float64 trap (issue 5): J0/Jph < eps; with a shunt the limiting cell goes into reverse
    # bias at short circuit, carrying the other cell's forward voltage
    cells = radiative_cells([1.9, 1.12], am15g)
    top = Subcell("top", batch(1.9), shunt_S_m2=batch(1.0)).with_photocurrent(
        cells[0].photocurrent_A_m2)
    s = solve_string([top, cells[1]], 300.0, curve_points=200)
    assert top.j01_A_m2(300.0)[0, 0] / top.photocurrent_A_m2[0, 0] < 1e-20
    v_top_sc = None
    # at short circuit the top cell's voltage is minus the silicon's
    curve = s.curve
    k = np.argmin(np.abs(curve["voltage_V"][0]))
    v_top_sc = curve["top"][0, k]
    assert v_top_sc < -0.5
    assert curve["voltage_V"][0, 0] < 0   # the trace reaches reverse bias
    # the shunt carries the excess: J = Jph_top - V_top * G (ideal diode off in reverse)
    assert curve["current_A_m2"][0, 0] == pytest.approx(
        top.photocurrent_A_m2[0, 0] - curve["top"][0, 0] * 1.0, rel=1e-9)


def test_curve_is_monotone_and_contains_mpp(am15g):
    s = solve_string(radiative_cells([1.7, 1.12], am15g), 300.0, curve_points=300)
    v, j = s.curve["voltage_V"][0], s.curve["current_A_m2"][0]
    assert np.all(np.diff(v) > 0) and np.all(np.diff(j) <= 0)
    assert v[0] < 0 < s.voc_V[0] < v[-1]
    assert np.max(v * j) <= s.mpp_W_m2[0] * (1 + 1e-12)
    np.testing.assert_allclose(s.curve["cell0"][0] + s.curve["cell1"][0], v, atol=1e-12)


def test_explicit_fast_path_agrees_with_the_traced_solve(am15g):
    # the summary-only fast path (V explicit in J) against the pilot-voltage trace (forced by
    # asking for a curve): two independent parameterisations of the same string
    rng = np.random.default_rng(7)
    gaps = rng.uniform(1.5, 2.1, 50)
    absorptance = rng.uniform(0.5, 1.0, 50)
    cells = radiative_cells([gaps, np.full(50, 1.12)], am15g, [absorptance, 1.0])
    cells = [Subcell(c.name, c.gap_eV, absorptance=c.absorptance, ere=batch(0.01),
                     series_ohm_m2=batch(1e-5)).with_photocurrent(c.photocurrent_A_m2)
             for c in cells]
    elements = [cells[0], Resistor("grid", batch(3e-5)), cells[1]]
    fast = solve_string(elements, 300.0)
    traced = solve_string(elements, 300.0, curve_points=20)
    np.testing.assert_allclose(fast.mpp_W_m2, traced.mpp_W_m2, rtol=1e-12)
    np.testing.assert_allclose(fast.voc_V, traced.voc_V, rtol=1e-12)
    np.testing.assert_allclose(fast.jsc_A_m2, traced.jsc_A_m2, rtol=1e-9)
    np.testing.assert_allclose(fast.mpp_V, traced.mpp_V, rtol=1e-7)
    assert np.all(fast.power_balance_error_W_m2 < 1e-9 * fast.mpp_W_m2)


def test_dim_light_unshunted_middle_cell_still_has_an_mpp():
    # found by the energy-yield study at sunset: the shunted limiting cell lets the current rise
    # to an unshunted cell's photocurrent, where that cell's voltage has no float64 value; the
    # MPP search must not take that end for a root (demo triple, invented values, 1 W/m2 light)
    from pathlib import Path

    from siltandem.circuit.compile import compile_stack
    from siltandem import load_stack

    circuit = compile_stack(load_stack(Path(__file__).resolve().parents[1] / "stacks"
                                       / "demo_triple.toml"))
    currents = {"top": 0.222261, "middle": 0.144605, "silicon": 0.069241}
    elements = [e.with_photocurrent(currents[e.name]) if e.kind == "subcell" else e
                for e in circuit.strings[0]]
    s = solve_string(elements, 292.578)
    assert not s.failed[0]
    assert 0 < s.mpp_W_m2[0] < s.voc_V[0] * s.jsc_A_m2[0]
    assert s.power_balance_error_W_m2[0] < 1e-9 * s.mpp_W_m2[0]


@pytest.mark.parametrize("gaps, eres, shunt_S_m2, temperature", [
    # the top cell, without a shunt, saturates at its photocurrent: V -> -inf at the limit
    ([1.875, 1.125, 0.71875], [1.0, 1.0, 1.0], [0.0, 0.0, 10.0], 273.15),
    # nearly ideal shunts (1e10 ohm cm2): V plunges by volts within 1e-9 V of pilot voltage
    ([1.0, 0.703125], [1.0, 1e-5], [1e-6, 1e-6], 400.0),
])
def test_curve_and_summary_paths_agree_on_steep_short_circuits(am15g, gaps, eres, shunt_S_m2,
                                                               temperature):
    # found by a deep property run: the curve path once lost Jsc (NaN) where V is steep or
    # unbounded at short circuit; the summary path (a Newton search in t) and the curve path
    # (dense samples, polish) must agree. Contract test of our own (no outside source).
    cells = radiative_cells([np.array(g) for g in gaps], am15g)
    cells = [Subcell(c.name, c.gap_eV, ere=batch(e), shunt_S_m2=batch(g)).with_photocurrent(
        c.photocurrent_A_m2) for c, e, g in zip(cells, eres, shunt_S_m2)]
    summary = solve_string(cells, temperature)
    traced = solve_string(cells, temperature, curve_points=401)
    assert np.isfinite(traced.jsc_A_m2[0])
    assert traced.jsc_A_m2[0] == pytest.approx(summary.jsc_A_m2[0], rel=1e-9)
    assert traced.mpp_W_m2[0] == pytest.approx(summary.mpp_W_m2[0], rel=1e-12)
    assert traced.voc_V[0] == pytest.approx(summary.voc_V[0], rel=1e-12)
