"""The compiled general isotype law (laws/compiled_fermi.py: Fermi-Dirac sides, sheet charge)
against the numpy law it compiles and against independent references.

Sources:
- The numpy law laws/interface_charge.py (its Fermi-Dirac charge and supply function are checked
  against a numerical Poisson solution in tests/test_poisson_reference.py and
  tests/test_fermi_dirac_stacks.py): the compiled form is the same equations in scalar form and
  must agree with it to rounding, over random dopings (reduced Fermi levels -10...10 kT or
  Boltzmann), temperatures 250-400 K, alpha 1e-3...1e3, built-in 0.02-1 V, sheet charges and
  voltages on both sides of zero bias.
- F_j(eta) against mpmath's polylogarithm, F_j = -Li_(j+1)(-e^eta) (J. S. Blakemore,
  Solid-State Electron. 25 (1982) 1067 for the normalisation).
- The forward law's J at the inverse's V returns the target current (a round trip through two
  different kernels), and the slope range encloses slopes sampled inside each interval.
"""
import mpmath
import numpy as np
import pytest

from siltandem.constants import thermal_voltage_V
from siltandem.laws import compiled_isotype
from siltandem.laws.compiled_fermi import (fermi_currents, fermi_rows, fermi_scalar, fermi_slope_ranges,
                                           fermi_voltages)
from siltandem.laws.interface_charge import interface_law


#: which sides are Fermi-Dirac (the numpy law takes None for a Boltzmann side, for the whole batch)
SIDES = [(True, True), (True, False), (False, True), (False, False)]


def _cases(n=400, seed=11, sides=(True, True)):
    """Random laws: both, one or neither side Fermi-Dirac (neither: the sheet charge alone)."""
    rng = np.random.default_rng(seed)
    vbi = 10 ** rng.uniform(np.log10(0.02), 0, n)
    temperature = rng.uniform(250.0, 400.0, n)
    vt = thermal_voltage_V(temperature)
    eta1, eta2 = (rng.uniform(-10.0, 10.0, n) * vt if fermi else None for fermi in sides)
    sheet = rng.uniform(-3.0, 3.0, n)
    if any(sides):
        sheet = np.where(rng.uniform(size=n) < 0.3, sheet, 0.0)
    law = dict(barrier_eV=vbi + rng.uniform(-0.1, 0.3, n), built_in_V=vbi, alpha=10 ** rng.uniform(-3, 3, n),
               richardson_A_m2_K2=10 ** rng.uniform(5.0, 6.2, n), temperature_K=temperature,
               accumulation_fermi_eV=eta1, depletion_fermi_eV=eta2, sheet_charge=sheet)
    distance = 10 ** rng.uniform(-4, 0.3, n)
    voltage = np.where(rng.uniform(size=n) < 0.5, vbi - distance, -distance)
    return law, voltage


def _rows(law):
    return fermi_rows(direction=1.0, **law)


@pytest.mark.parametrize("k, order", [(0, -0.5), (1, 0.5), (2, 1.5)])
def test_fermi_integral_against_mpmath(k, order):
    for eta in (-60.0, -41.0, -39.5, -3.0, -0.3, 0.0, 0.7, 5.5, 39.9, 40.5, 120.0):
        reference = float(mpmath.re(-mpmath.polylog(order + 1.0, -mpmath.exp(eta))))
        assert fermi_scalar(k, eta) == pytest.approx(reference, rel=2e-14)
    assert np.isnan(fermi_scalar(k, np.nan))


@pytest.mark.parametrize("sides", SIDES)
def test_forward_law_equals_numpy_law(sides):
    law, voltage = _cases(sides=sides)
    j_ref, slope_ref = interface_law("current", voltage, with_derivative=True, **law)
    j, slope = (a[:, 0] for a in fermi_currents(_rows(law), voltage[:, None].copy()))
    assert np.all(np.isfinite(j_ref)) and np.all(np.isfinite(slope_ref))
    scale = np.abs(j_ref) + 1e-300
    assert np.max(np.abs(j - j_ref) / scale) < 1e-11
    assert np.max(np.abs(slope / slope_ref - 1.0)) < 1e-11
    # beyond flat band: NaN in both
    beyond, _ = fermi_currents(_rows(law), (law["built_in_V"] + 1e-3)[:, None].copy())
    assert np.all(np.isnan(beyond))


@pytest.mark.parametrize("sides", SIDES)
def test_inverse_equals_numpy_law_and_round_trips(sides):
    law, voltage = _cases(seed=12, sides=sides)
    rows = _rows(law)
    target = interface_law("current", voltage, **law)
    v_ref, dvdj_ref = interface_law("voltage", target, with_derivative=True, **law)
    v, slope = (a[:, 0] for a in fermi_voltages(rows, target[:, None].copy()))
    vt = thermal_voltage_V(law["temperature_K"])
    assert np.all(np.isfinite(v)) and np.all(np.isfinite(v_ref))
    assert np.max(np.abs(v - v_ref) / vt) < 1e-9
    assert np.max(np.abs(v - voltage) / vt) < 1e-9
    assert np.max(np.abs(1.0 / slope / dvdj_ref - 1.0)) < 1e-8
    back, _ = fermi_currents(rows, v[:, None].copy())
    assert np.max(np.abs(back[:, 0] - target) / (np.abs(target) + 1e-300)) < 1e-9
    # above the flat-band current: NaN, as the numpy law
    flat = interface_law("current", law["built_in_V"], **law)
    above, _ = fermi_voltages(rows, (flat * 1.01 + 1.0)[:, None].copy())
    assert np.all(np.isnan(above))


@pytest.mark.parametrize("sides", SIDES)
def test_slope_range_equals_numpy_and_encloses_samples(sides):
    law, voltage = _cases(seed=13, sides=sides)
    rows = _rows(law)
    low_v, high_v = voltage - 0.02, voltage
    lo_ref, hi_ref = interface_law("slopes", low_v, high_v, **law)
    lo, hi = (a[:, 0] for a in fermi_slope_ranges(rows, low_v[:, None].copy(), high_v[:, None].copy()))
    assert np.max(np.abs(lo / lo_ref - 1.0)) < 1e-10 and np.max(np.abs(hi / hi_ref - 1.0)) < 1e-10
    inside = low_v[:, None] + 0.02 * np.linspace(0.0, 1.0, 9)[None, :]
    _, slopes = fermi_currents(rows, inside.copy())
    assert np.all(slopes >= lo[:, None]) and np.all(slopes <= hi[:, None])


def test_compiled_isotype_dispatches_general_rows():
    """laws/compiled_isotype.py hands rows of the general form to these kernels (the fused pass of
    a string calls isotype_inverse): the same numbers to rounding (inlined into another kernel, LLVM
    may contract a multiply-add differently: measured 3e-16)."""
    law, voltage = _cases(n=50, seed=14)
    rows = _rows(law)
    a = compiled_isotype.isotype_currents(rows, voltage[:, None].copy())
    b = fermi_currents(rows, voltage[:, None].copy())
    assert all(np.allclose(x, y, rtol=1e-13, atol=0.0) for x, y in zip(a, b))
    a = compiled_isotype.isotype_voltages(rows, b[0].copy())
    b = fermi_voltages(rows, b[0].copy())
    vt = rows[:, 3:4]
    assert np.max(np.abs(a[0] - b[0]) / vt) < 1e-12 and np.allclose(a[1], b[1], rtol=1e-12, atol=0.0)
    assert np.max(np.abs(b[0] - voltage[:, None]) / vt) < 1e-9
