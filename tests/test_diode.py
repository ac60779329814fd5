"""Subcell law against pvlib's single-diode functions and independent root finds."""
import numpy as np
import pytest
from scipy import optimize
from pvlib import pvsystem, singlediode

from siltandem.constants import thermal_voltage_V
from siltandem.laws import diode
from siltandem.numerics.roots import bracketed_root

T = 300.0
VT = thermal_voltage_V(T)

# parameter sets in pvlib's units (A, ohm) read as per-area quantities (A/m2, ohm m2):
# (photocurrent, saturation current, series resistance, shunt resistance)
CASES = [
    (300.0, 1e-12, 0.0, np.inf),
    (300.0, 1e-12, 1e-5, 1e2),
    (350.0, 1e-9, 5e-5, 1.0),
    (200.0, 1e-16, 2e-4, 10.0),
    (420.0, 1e-6, 1e-5, 1e3),
]


@pytest.mark.parametrize("jph, j0, rs, rsh", CASES)
def test_voltage_from_current_matches_pvlib(jph, j0, rs, rsh):
    # reference: pvlib.pvsystem.v_from_i (Lambert W), the 1e-6 relative tolerance
    current = np.linspace(-0.5 * jph, 0.999 * jph, 41)
    shunt = 0.0 if np.isinf(rsh) else 1.0 / rsh
    ours, _ = diode.subcell_voltage(current, photocurrent_A_m2=jph, j01_A_m2=j0,
                                    shunt_S_m2=shunt, series_ohm_m2=rs, temperature_K=T)
    reference = pvsystem.v_from_i(current, jph, j0, rs, rsh, VT)
    np.testing.assert_allclose(ours, reference, rtol=1e-6, atol=1e-9)


@pytest.mark.parametrize("jph, j0, rs, rsh", CASES)
def test_current_from_voltage_matches_pvlib(jph, j0, rs, rsh):
    # reference: pvlib.pvsystem.i_from_v (Lambert W)
    voc = pvsystem.v_from_i(0.0, jph, j0, rs, rsh, VT)
    voltage = np.linspace(-0.3, 1.02 * voc, 41)
    shunt = 0.0 if np.isinf(rsh) else 1.0 / rsh
    ours, _ = diode.subcell_current(voltage, photocurrent_A_m2=jph, j01_A_m2=j0,
                                    shunt_S_m2=shunt, series_ohm_m2=rs, temperature_K=T)
    reference = pvsystem.i_from_v(voltage, jph, j0, rs, rsh, VT)
    np.testing.assert_allclose(ours, reference, rtol=1e-6, atol=1e-6 * jph)


def test_breakdown_matches_pvlib_bishop88():
    # reference: pvlib.singlediode.bishop88 (J. W. Bishop, Solar Cells 25 (1988) 73)
    vj = np.linspace(-14.9, 0.7, 60)
    kwargs = dict(photocurrent_A_m2=300.0, j01_A_m2=1e-10, shunt_S_m2=1 / 20.0,
                  temperature_K=T, breakdown_V=-15.0, breakdown_factor=2e-3,
                  breakdown_exponent=3.0)
    ours, _ = diode.junction_current(vj, **kwargs)
    reference, _, _ = singlediode.bishop88(vj, 300.0, 1e-10, 0.0, 20.0, VT,
                                           breakdown_factor=2e-3, breakdown_voltage=-15.0,
                                           breakdown_exp=3.0)
    np.testing.assert_allclose(ours, reference, rtol=1e-12)
    # and the inverse returns to the same junction voltages
    back, _ = diode.junction_voltage(ours, **kwargs)
    np.testing.assert_allclose(back, vj, atol=1e-9)


def test_two_diodes_against_brentq():
    # independent method: scipy.optimize.brentq on the two-diode equation, point by point
    params = dict(photocurrent_A_m2=250.0, j01_A_m2=1e-14, j02_A_m2=1e-6, shunt_S_m2=1e-3,
                  temperature_K=T)
    currents = np.array([-100.0, 0.0, 100.0, 240.0, 249.9, 260.0, 400.0])
    ours, _ = diode.junction_voltage(currents, **params)
    for current, v in zip(currents, ours):
        def f(x):
            return diode.junction_current(x, **params)[0] - current
        reference = optimize.brentq(f, -2e5, 2.0, xtol=1e-14, rtol=1e-14)
        assert v == pytest.approx(reference, abs=1e-10)


def test_reverse_branch_reachable_when_j0_below_epsilon():
    # float64 trap: J0/Jph = 1e-25 < machine epsilon; the shunt defines the reverse branch
    params = dict(photocurrent_A_m2=200.0, j01_A_m2=2e-23, shunt_S_m2=1e-4, temperature_K=T)
    currents = np.array([200.0 + 1e-6, 201.0, 250.0])
    v, _ = diode.junction_voltage(currents, **params)
    expected = -(currents - 200.0) / 1e-4   # the ideal diode carries nothing in reverse
    np.testing.assert_allclose(v, expected, rtol=1e-9)
    j, _ = diode.junction_current(v, **params)
    np.testing.assert_allclose(j, currents, rtol=1e-12)


def test_huge_shunt_has_no_cancellation():
    # shunt 1e12 ohm cm2 (1e8 ohm m2): the forward branch must equal the unshunted log form
    params = dict(photocurrent_A_m2=300.0, j01_A_m2=1e-15, temperature_K=T)
    current = np.array([0.0, 150.0, 299.0])
    shunted, _ = diode.junction_voltage(current, shunt_S_m2=1e-8, **params)
    bare = VT * np.log1p((300.0 - current) / 1e-15)
    np.testing.assert_allclose(shunted, bare, rtol=1e-9)


def test_without_shunt_beyond_saturation_is_minus_infinity():
    v, _ = diode.junction_voltage(np.array([301.0]), photocurrent_A_m2=300.0, j01_A_m2=1e-10,
                                  temperature_K=T)
    assert np.isneginf(v[0])


def test_slopes_match_central_differences():
    params = dict(photocurrent_A_m2=300.0, j01_A_m2=1e-12, j02_A_m2=1e-7, shunt_S_m2=0.02,
                  temperature_K=T)
    v = np.linspace(-1.0, 0.75, 30)
    h = 1e-6
    j, slope = diode.junction_current(v, **params)
    numeric = (diode.junction_current(v + h, **params)[0]
               - diode.junction_current(v - h, **params)[0]) / (2 * h)
    # central differences carry ~eps*J/h of rounding: 1e-5 relative
    np.testing.assert_allclose(slope, numeric, rtol=1e-5)
    vj, dv = diode.junction_voltage(j, **params)
    np.testing.assert_allclose(dv * slope, 1.0, rtol=1e-9)


def test_shapes_broadcast():
    j = np.zeros((3, 5))
    v, dv = diode.subcell_voltage(j, photocurrent_A_m2=np.array([[100.0], [200.0], [300.0]]),
                                  j01_A_m2=1e-12, temperature_K=T, series_ohm_m2=1e-5)
    assert v.shape == dv.shape == (3, 5)
    assert np.all(np.diff(v[:, 0]) > 0)


def test_bracketed_root_against_brentq():
    # the solver's whole-array Illinois root finder against scipy.optimize.brentq
    shifts = np.array([0.1, 0.5, 1.7, 3.0])

    def f(x):
        return np.exp(x) - 1.0 - shifts * x - shifts

    roots = bracketed_root(f, np.zeros(4), np.full(4, 5.0))
    for s, r in zip(shifts, roots):
        assert r == pytest.approx(optimize.brentq(lambda x: np.exp(x) - 1 - s * x - s, 0, 5,
                                                  xtol=1e-15), abs=1e-12)
    # no sign change -> NaN, never a made-up number
    assert np.isnan(bracketed_root(lambda x: x * x + 1.0, np.array([-1.0]), np.array([1.0]))[0])


def test_bracketed_root_idle_entries_at_nan_give_the_same_roots():
    # idle=np.nan (the series solve's setting): the entries that have stopped are evaluated at
    # NaN, and the roots are bit for bit those of idle=None; reference: scipy.optimize.brentq
    shifts = np.array([0.1, 0.5, 1.7, 3.0, 40.0])
    seen = []

    def f(x):
        seen.append(np.isnan(x).sum())
        with np.errstate(over="ignore"):
            return np.exp(x) - 1.0 - shifts * x - shifts

    plain = bracketed_root(f, np.zeros(5), np.full(5, 5.0))
    assert max(seen) == 0
    seen.clear()
    idle = bracketed_root(f, np.zeros(5), np.full(5, 5.0), idle=np.nan)
    assert max(seen) > 0, "no entry stopped before the others: the check proves nothing"
    assert np.array_equal(plain, idle, equal_nan=True)
    assert np.isnan(idle[-1])                       # no sign change on [0, 5] for shift 40
    for s, r in zip(shifts[:-1], idle[:-1]):
        assert r == pytest.approx(optimize.brentq(lambda x: np.exp(x) - 1 - s * x - s, 0, 5,
                                                  xtol=1e-15), abs=1e-12)


def test_beyond_reach_marks_exactly_the_currents_the_junction_cannot_carry():
    # without a shunt the two-diode junction carries at most Jph + J01 + J02 (the diode equation
    # at Vj -> -inf: S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., 2007, ch. 13);
    # beyond_reach must say so without searching, where junction_voltage gives -inf, and nowhere else
    jph, j01, j02 = 150.0, 1e-12, 1e-7
    limit = jph + j01 + j02
    current = np.array([-1e4, 0.0, 149.0, limit * (1 - 1e-9), limit * (1 + 1e-9), 1e3, np.nan])
    params = dict(photocurrent_A_m2=jph, j01_A_m2=j01, j02_A_m2=j02, shunt_S_m2=0.0,
                  breakdown_V=-np.inf, breakdown_factor=0.0)
    marked = diode.beyond_reach(current, **params)
    assert marked.tolist() == [False, False, False, False, True, True, True]
    v, _ = diode.junction_voltage(current, temperature_K=T, **params)
    assert np.all(np.isneginf(v[marked])) and np.all(np.isfinite(v[~marked]))
    # a shunt carries any current: nothing is beyond reach but NaN, which the search too
    # answers with -inf
    shunted = {**params, "shunt_S_m2": 1.0}
    assert diode.beyond_reach(current, **shunted).tolist() == [False] * 6 + [True]
    assert np.isneginf(diode.junction_voltage(current[-1:], temperature_K=T, **shunted)[0][0])
