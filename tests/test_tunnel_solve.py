"""Strings with tunnel junctions: the trace through negative differential resistance."""
import numpy as np
import pytest
from scipy import optimize
from pvlib import pvsystem

from conftest import radiative_cells
from siltandem.constants import thermal_voltage_V
from siltandem.circuit.elements import Resistor, Subcell, TunnelJunction, batch
from siltandem.solve.series import solve_string
from siltandem.solve.trace import voltage_sweep

T = 300.0
SHUNT_S_M2 = 0.1      # 1e5 ohm cm2


def lit_dual(spectrum):
    top, bottom = radiative_cells([1.73, 1.12], spectrum)
    return [Subcell(c.name, c.gap_eV, shunt_S_m2=batch(SHUNT_S_M2)).with_photocurrent(
        c.photocurrent_A_m2) for c in (top, bottom)]


def junction(peak_mA_cm2, *, peak_V=0.05, valley_mA_cm2=1.0, valley_V=0.2):
    return TunnelJunction("tj", batch(10 * peak_mA_cm2), batch(peak_V), batch(10 * valley_mA_cm2),
                          batch(valley_V))


def power_balance_along(solution, elements):
    """|sum V_i J_i(V_i) - V J| / sum |V_i J| at every traced point, J_i from forward laws."""
    curve = solution.curve
    j = curve["current_A_m2"]
    total = np.zeros_like(j)
    scale = np.zeros_like(j)
    for element in elements:
        v_i = curve[element.name]
        j_i, _ = element.current(v_i, T)
        total += v_i * j_i
        scale += np.abs(v_i * j)
    return np.abs(total - curve["voltage_V"] * j) / scale


def ndr_product(cells, tunnel, resistance):
    """max over the negative-resistance branch of (R + r_cells) * |dJ/du| (the issue's criterion)."""
    ext = tunnel.extrema(T)
    u = np.linspace(ext.peak_V[0, 0], ext.valley_V[0, 0], 2001)[None, 1:-1]
    j, slope = tunnel.junction_current(u, T)
    r_cells = sum(-c.voltage(j, T)[1] for c in cells)
    return float(np.max((resistance + r_cells) * -slope))


def test_peak_above_photocurrent_stays_on_tunnel_branch(am15g):
    cells = lit_dual(am15g)
    tj = junction(50.0)
    s = solve_string([cells[0], tj, cells[1]], T, curve_points=300)
    assert s.regime[0] == "below peak"
    assert s.tunnel_branch_at_mpp["tj"][0] == "tunnel"
    without = solve_string(cells, T)
    # a good junction costs little: a few mV at the MPP (ohmic slope Vp/(e Jp) of the law)
    assert 0 < without.mpp_W_m2[0] - s.mpp_W_m2[0] < 0.01 * without.mpp_W_m2[0]
    assert np.max(power_balance_along(s, [cells[0], tj, cells[1]])) < 1e-9


@pytest.mark.parametrize("resistance, expected", [(0.0, "past peak, no hysteresis"),
                                                  (2e-3, "past peak, hysteresis")])
def test_hysteresis_criterion(am15g, resistance, expected):
    # hysteresis in a voltage sweep exists only where (R + r_rest) * |g_ndr| > 1 (issue 5); the
    # same follows from dV/dJ on the negative branch: -(R + r_rest) + 1/|g| < 0
    cells = lit_dual(am15g)
    tj = junction(15.0)
    elements = [cells[0], tj, cells[1], Resistor("r", batch(resistance))]
    s = solve_string(elements, T, curve_points=600)
    product = ndr_product(cells, tj, resistance)
    assert (product > 1) == (expected == "past peak, hysteresis")
    assert s.regime[0] == expected
    v, j = s.curve["voltage_V"][0], s.curve["current_A_m2"][0]
    assert np.all(np.isfinite(v)) and np.all(np.isfinite(j))
    up = voltage_sweep(v, j, direction="up", points=300)
    down = voltage_sweep(v, j, direction="down", points=300)
    gap = np.nanmax(np.abs(up[1] - down[1][::-1]))
    if expected.endswith("no hysteresis"):
        assert gap < 1e-9 * np.max(j)
    else:
        assert gap > 0.05 * np.max(j)          # the sweeps take different branches
    assert np.max(power_balance_along(s, elements)) < 1e-9


def test_past_peak_mpp_is_the_global_maximum(am15g):
    # independent reference: pvlib v_from_i for the subcells, scipy brentq for the junction on
    # each of its branches, scipy minimize_scalar for P on each branch; the global best wins
    cells = lit_dual(am15g)
    tj = junction(15.0)
    resistance = 2e-3
    s = solve_string([cells[0], tj, cells[1], Resistor("r", batch(resistance))], T)
    ext = tj.extrema(T)
    vp, jp, vv, jv = (float(x[0, 0]) for x in ext)

    def cells_voltage(current):
        return sum(pvsystem.v_from_i(current, c.photocurrent_A_m2[0, 0], c.j01_A_m2(T)[0, 0],
                                     0.0, 1 / SHUNT_S_M2, thermal_voltage_V(T)) for c in cells)

    def junction_voltage(current, lo, hi):
        return optimize.brentq(lambda u: float(tj.junction_current(u, T)[0][0, 0]) - current, lo, hi,
                               xtol=1e-15)

    def best(lo_j, hi_j, lo_u, hi_u):
        def negative_power(current):
            v = cells_voltage(current) - junction_voltage(current, lo_u, hi_u) - resistance * current
            return -current * v
        found = optimize.minimize_scalar(negative_power, bounds=(lo_j, hi_j), method="bounded",
                                         options=dict(xatol=1e-10))
        return max(-found.fun, -negative_power(hi_j))

    jph = min(c.photocurrent_A_m2[0, 0] for c in cells)
    candidates = [best(0.5 * jp, jp, -1.0, vp),                  # tunnel branch
                  best(jv, jp, vp, vv),                          # negative branch
                  best(jv, 0.999 * jph, vv, 5.0)]                # thermal branch
    assert s.mpp_W_m2[0] == pytest.approx(max(candidates), rel=1e-9)


def test_two_junctions_in_a_triple(am15g):
    top, middle, bottom = radiative_cells([1.88, 1.42, 1.12], am15g)
    shunted = [Subcell(c.name, c.gap_eV, shunt_S_m2=batch(SHUNT_S_M2)).with_photocurrent(
        c.photocurrent_A_m2) for c in (top, middle, bottom)]
    upper = TunnelJunction("upper", batch(500.0), batch(0.1), batch(20.0), batch(0.4))
    lower = TunnelJunction("lower", batch(90.0), batch(0.05), batch(10.0), batch(0.25))
    elements = [shunted[0], upper, shunted[1], lower, shunted[2], Resistor("r", batch(1e-3))]
    s = solve_string(elements, T, curve_points=500)
    assert s.regime[0].startswith("past peak")
    assert s.tunnel_branch_at_mpp["upper"][0] == "tunnel"
    assert np.all(np.isfinite(s.curve["voltage_V"])) and np.all(np.isfinite(s.curve["current_A_m2"]))
    # the lower junction limits: the MPP current cannot exceed its peak on the tunnel branch
    assert s.mpp_A_m2[0] <= 90.0 * (1 + 1e-9) or s.tunnel_branch_at_mpp["lower"][0] != "tunnel"
    assert np.max(power_balance_along(s, elements)) < 1e-9
    assert s.power_balance_error_W_m2[0] < 1e-9 * s.mpp_W_m2[0]


def test_batch_mixes_simple_and_traced_designs(am15g):
    cells = lit_dual(am15g)
    peaks = np.array([500.0, 150.0, 300.0])       # A/m2: only the middle design goes past peak
    tj = TunnelJunction("tj", batch(peaks), batch(0.05), batch(10.0), batch(0.2))
    together = solve_string([cells[0], tj, cells[1]], T, curve_points=100)
    assert list(together.regime) == ["below peak", "past peak, no hysteresis", "below peak"]
    for k, peak in enumerate(peaks):
        one = TunnelJunction("tj", batch(peak), batch(0.05), batch(10.0), batch(0.2))
        alone = solve_string([cells[0], one, cells[1]], T)
        assert together.mpp_W_m2[k] == pytest.approx(alone.mpp_W_m2[0], rel=1e-12)


@pytest.mark.parametrize("series_ohm_cm2, ere", [(0.0, 1.0), (20.0, 1.0), (20.0, 0.01)])
def test_past_peak_mpp_is_the_curves_maximum(am15g, series_ohm_cm2, ere):
    # the reported MPP is a point of the curve and no traced point gives more power, on the
    # N-shaped curve (no series resistance: the MPP on the thermal branch, far out along a long
    # piece) and on the S-shaped one: an invariant of the solve (no outside source). A refinement
    # that settled for a worse point once cost 1 W/m^2 here; with lossy cells the MPP sits
    # next to the fold, where dP/dt is unbounded (0.01 W/m^2 once).
    cells = lit_dual(am15g)
    for cell in cells:
        object.__setattr__(cell, "shunt_S_m2", batch(10.0))
        object.__setattr__(cell, "ere", batch(ere))
    elements = [cells[0], junction(15.0), cells[1]]
    if series_ohm_cm2:
        elements.append(Resistor("contacts", batch(series_ohm_cm2 * 1e-4)))
    s = solve_string(elements, T, curve_points=20000)
    assert s.regime[0].startswith("past peak")
    p = s.curve["current_A_m2"][0] * s.curve["voltage_V"][0]
    best = np.nanmax(p)
    assert s.mpp_W_m2[0] >= best * (1 - 1e-12)
    assert s.mpp_W_m2[0] <= best * (1 + 1e-6)
    assert solve_string(elements, T).mpp_W_m2[0] == pytest.approx(s.mpp_W_m2[0], rel=1e-12)


def test_a_batch_mixing_regimes_and_pilots_equals_its_designs_alone(am15g):
    # one batched call with curves: a design below its junction's peak, one past it, and one
    # whose limiting (pilot) subcell is the other one; each row as if solved alone
    # (contract test of our own: batching must not change a design's answer)
    top, bottom = radiative_cells([1.73, 1.12], am15g)
    jph = np.array([top.photocurrent_A_m2[0, 0], top.photocurrent_A_m2[0, 0],
                    1.5 * bottom.photocurrent_A_m2[0, 0]])
    cells = [Subcell("top", batch([1.73] * 3), shunt_S_m2=batch(SHUNT_S_M2),
                     j02_A_m2=batch(1e-7)).with_photocurrent(jph),
             Subcell("bottom", batch([1.12] * 3), shunt_S_m2=batch(SHUNT_S_M2)).with_photocurrent(
                 np.full(3, bottom.photocurrent_A_m2[0, 0]))]
    tj = TunnelJunction("tj", batch([1000.0, 100.0, 1000.0]), batch(0.05),
                        batch([100.0, 10.0, 100.0]), batch(0.2))
    elements = [cells[0], tj, cells[1], Resistor("r", batch(1e-3))]
    together = solve_string(elements, T, curve_points=300)
    assert list(together.regime) == ["below peak", "past peak, hysteresis", "below peak"]
    assert list(together.pilot_index) == [0, 0, 1]
    from siltandem.circuit.elements import take_rows
    for row in range(3):
        alone = solve_string([take_rows(e, np.array([row])) for e in elements], T,
                             curve_points=300)
        for name in ("voc_V", "jsc_A_m2", "mpp_W_m2", "mpp_V"):
            assert getattr(together, name)[row] == pytest.approx(getattr(alone, name)[0],
                                                                 rel=1e-12), name
        np.testing.assert_allclose(together.curve["voltage_V"][row], alone.curve["voltage_V"][0],
                                   rtol=1e-12, atol=1e-12)
