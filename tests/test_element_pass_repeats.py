"""The compiled element pass (laws/compiled.py element_voltages) at currents that repeat from one
point to the next: an isotype member takes the point before's values there (issue 19's solve
speed), and they must be the values its inverse gives that current on its own, bit for bit.

Sources: the inverse itself (laws/compiled_isotype.isotype_voltages, one point per call), which
tests/test_compiled_isotype.py checks against the numpy laws (thermionic emission; thermionic-field
emission after K. Yang, J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321) and mpmath;
and the numpy law laws/field_emission.field_emission_voltage here, to 1e-9 relative (common
practice for "equal to rounding" of an inverse with tolerances ~1e-13 V, no source). The laws'
numbers below are invented test values inside the ranges those tests cover.
"""
import numpy as np
import pytest

from siltandem.laws import compiled as kernels
from siltandem.laws import field_emission as fe
from siltandem.laws.compiled_isotype import isotype_rows, isotype_voltages

# invented laws (two rows: two designs of a batch), thermionic-field emission with the tail
LAW = dict(built_in_V=np.array([0.25, 0.4]), alpha=np.array([0.3, 20.0]), barrier_eV=np.array([0.35, 0.5]),
           richardson_A_m2_K2=8e5, temperature_K=np.array([300.0, 330.0]))
FIELD = dict(field_energy_eV=np.array([0.01, 0.03]), spike_eV=np.array([0.2, 0.1]))


def _pass(rows, current):
    """element_voltages with one isotype member (no table), as solve/string.py packs it."""
    count, size = 1, rows.shape[0]
    params = np.zeros((count, size, kernels.PARAMETER_WIDTH))
    params[0, :, :rows.shape[1]] = rows
    grid = np.zeros((count, size, 1))
    per_row = np.zeros((count, size))
    return kernels.element_voltages(
        kernels.as_input(current), np.array([kernels.ISOTYPE_LAW], dtype=np.int64), params, grid, grid.copy(),
        grid.copy(), np.ones(count, dtype=np.int64), np.ones(count), per_row, per_row, per_row - np.inf,
        per_row + np.inf, per_row - np.inf, per_row + np.inf, -np.ones(count), per_row, kernels.XTOL,
        kernels.RTOL, kernels.MAX_ITERATIONS)


@pytest.mark.parametrize("direction", [1.0, -1.0])
def test_repeated_currents_give_the_values_of_each_current_alone(direction):
    rows = isotype_rows(**LAW, **FIELD, form="tail", transport="thermionic-field", direction=direction)
    # runs of equal currents (a trace clipped at an end repeats its current), both signs, a NaN
    base = np.array([-30.0, -30.0, -30.0, -2.0, 0.0, 0.0, 1e-3, 5.0, 5.0, np.nan, np.nan, 40.0, 40.0])
    current = np.vstack([base, 0.5 * base])
    voltage, slope, covered = _pass(rows, current)
    assert covered.all()
    for b in range(2):
        for i in range(base.size):
            alone_v, alone_s = isotype_voltages(rows[b:b + 1], np.array([[direction * current[b, i]]]))
            expected_v, expected_s = -direction * alone_v[0, 0], -1.0 / alone_s[0, 0]
            np.testing.assert_array_equal(voltage[0, b, i], expected_v)
            np.testing.assert_array_equal(slope[0, b, i], expected_s)
    # and each point passed alone (a batch of one column never repeats a point)
    for i in range(base.size):
        v1, s1, _ = _pass(rows, current[:, i:i + 1])
        np.testing.assert_array_equal(v1[0, :, 0], voltage[0, :, i])
        np.testing.assert_array_equal(s1[0, :, 0], slope[0, :, i])


def test_repeated_currents_agree_with_the_numpy_field_emission_law():
    rows = isotype_rows(**LAW, **FIELD, form="tail", transport="thermionic-field", direction=1.0)
    base = np.array([-30.0, -30.0, -2.0, 1e-3, 1e-3, 5.0, 5.0])
    current = np.vstack([base, 0.5 * base])
    voltage, _, _ = _pass(rows, current)
    for b in range(2):
        law = {k: (v[b] if np.ndim(v) else v) for k, v in dict(LAW, **FIELD).items()}
        numpy_v = fe.field_emission_voltage(current[b], include_tail=True, **law)
        np.testing.assert_allclose(-voltage[0, b], numpy_v, rtol=1e-9, atol=1e-12)
