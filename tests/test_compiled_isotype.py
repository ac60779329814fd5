"""The compiled isotype law (laws/compiled_isotype.py) against the numpy laws and independent solves.

Sources:
- The numpy laws laws/thermionic.py (thermionic emission; its exact depletion side is checked
  against a 50-digit mpmath root in tests/test_isotype_exact.py) and laws/field_emission.py
  (thermionic-field emission, K. Yang, J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993)
  321; F. A. Padovani, R. Stratton, Solid-State Electron. 9 (1966) 695): the compiled forms are
  the same equations in scalar form and must agree with them to rounding.
- An independent solve here: the charge balance of the exact Boltzmann depletion side
  (S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley 2007: the first integral
  of Poisson's equation, alpha (e^v1 - 1 - v1) = e^-v2 - 1 + v2) by mpmath at 40 digits, and the
  law's J = P e^v1 (e^v - 1) (A. Chandra, L. F. Eastman, Solid-State Electron. 23 (1980) 599).
- The demo result: the layer triple solved through the numpy laws and through the compiled law
  (the same model; tolerance 1e-9 relative, the task's bound for "equal to rounding" of a solve
  whose own tolerances are ~1e-13 V).
"""
import warnings
from pathlib import Path

import mpmath as mp
import numpy as np
import pytest

from siltandem import load_stack
from siltandem.circuit import elements, interface_element
from siltandem.constants import thermal_voltage_V
from siltandem.laws import field_emission as fe
from siltandem.laws import thermionic as te
from test_isotype_exact import mp_exact_root
from siltandem.laws.compiled_isotype import (exact_depletion, isotype_currents, isotype_rows,
                                             isotype_slope_ranges, isotype_voltages)

ROOT = Path(__file__).resolve().parents[1]
CASES = [("thermionic", "exact"), ("thermionic", "tail"), ("thermionic", "plain"),
         ("thermionic-field", "tail"), ("thermionic-field", "plain")]


def _points(form, n=3000, seed=7):
    """Random laws over the task's ranges (alpha 1e-6..1e6, Vbi 0.01..1 V, T 250..400 K) and
    voltages on both sides of zero bias, up to just inside flat band."""
    rng = np.random.default_rng(seed)
    alpha = 10 ** rng.uniform(-6, 6, n)
    vbi = 10 ** rng.uniform(-2, 0, n)
    temperature = rng.uniform(250, 400, n)
    law = dict(barrier_eV=vbi + rng.uniform(0.02, 0.3, n), built_in_V=vbi, alpha=alpha,
               richardson_A_m2_K2=8e5, temperature_K=temperature)
    field = dict(field_energy_eV=10 ** rng.uniform(-3, -1, n), spike_eV=rng.uniform(0.0, 0.5, n))
    edge = vbi - (thermal_voltage_V(temperature) if form == "tail" else 0.0)
    distance = 10 ** rng.uniform(-4, 0.5, n)
    voltage = np.where(rng.uniform(size=n) < 0.5, edge - distance, edge + distance - 2 * distance)
    return law, field, voltage, edge


def _numpy_law(transport, form, law, field):
    if transport == "thermionic":
        return (lambda v: te.isotype_current_density(v, depletion=form, with_derivative=True, **law),
                lambda j: te.isotype_voltage(j, depletion=form, with_derivative=True, **law))
    both = dict(law, **field, include_tail=form == "tail")
    return (lambda v: fe.field_emission_current_density(v, with_derivative=True, **both),
            lambda j: fe.field_emission_voltage(j, with_derivative=True, **both))


def _rows(transport, form, law, field):
    return isotype_rows(built_in_V=law["built_in_V"], alpha=law["alpha"], barrier_eV=law["barrier_eV"],
                        richardson_A_m2_K2=law["richardson_A_m2_K2"],
                        temperature_K=law["temperature_K"], form=form, transport=transport,
                        field_energy_eV=field["field_energy_eV"], spike_eV=field["spike_eV"],
                        direction=1.0)


def _column(a):
    return np.ascontiguousarray(a, dtype=float)[:, None].copy()


@pytest.mark.parametrize("transport, form", CASES)
def test_forward_law_matches_the_numpy_law(transport, form):
    law, field, voltage, edge = _points(form)
    forward, _ = _numpy_law(transport, form, law, field)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", te.IsotypeDomainWarning)
        j, dj = forward(voltage)
    jc, djc = (a[:, 0] for a in isotype_currents(_rows(transport, form, law, field), _column(voltage)))
    assert np.array_equal(np.isnan(jc), np.isnan(j))
    assert np.nanmax(np.abs(jc / j - 1)) < 1e-12           # measured 1.7e-14
    # dJ/dV where it is not a difference of nearly equal terms: the thermionic-field slope near
    # flat band is J/Vt times 1e-16 in places (in either form), so compare where J/(Vt dJ/dV)
    # < 1e6 (95 % of the points); measured 5e-14 (thermionic) and 1e-10 (thermionic-field)
    condition = np.abs(j) / (thermal_voltage_V(law["temperature_K"]) * dj)
    far = ((edge - voltage) > 1e-6) & (condition < 1e6)
    assert far.mean() > 0.9
    tolerance = 1e-12 if transport == "thermionic" else 1e-9
    assert np.max(np.abs(djc[far] / dj[far] - 1)) < tolerance


@pytest.mark.parametrize("transport, form", CASES)
def test_inverse_reproduces_the_current_through_the_numpy_law(transport, form):
    law, field, voltage, _ = _points(form, seed=11)
    forward, inverse = _numpy_law(transport, form, law, field)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", te.IsotypeDomainWarning)
        j, _ = forward(voltage)
        vc, djc = (a[:, 0] for a in isotype_voltages(_rows(transport, form, law, field), _column(j)))
        back, _ = forward(vc)
        v_numpy, _ = inverse(j)
    # where the numpy inverse has a voltage, the compiled one has it too (the compiled inverse
    # also solves the thermionic-field law with the tail below Vbi = kT/q, where the numpy
    # inverse's zero-bias bracket is undefined)
    assert not np.any(np.isfinite(v_numpy) & np.isnan(vc))
    ok = np.isfinite(vc) & np.isfinite(j)
    assert ok.mean() > 0.8
    # backward error: the numpy law at the compiled voltage carries the target current
    assert np.max(np.abs(back[ok] / j[ok] - 1)) < 1e-12     # measured 3e-14
    if (transport, form) == ("thermionic", "exact"):       # the elements' default law
        assert np.max(np.abs(vc[ok] - v_numpy[ok]) / np.maximum(np.abs(v_numpy[ok]), 1e-3)) < 1e-11
    assert np.all(djc[ok] > 0)


@pytest.mark.parametrize("transport, form", CASES)
def test_inverse_at_both_signs_and_above_flat_band(transport, form):
    law, field, _, edge = _points(form, n=200, seed=3)
    rows = _rows(transport, form, law, field)
    # zero current: zero volts exactly (NaN where zero bias lies beyond the tail form's domain,
    # Vbi < kT/q); far above the flat-band current: NaN
    v0, _ = isotype_voltages(rows, np.zeros((200, 1)))
    assert np.all(v0[edge >= 0] == 0.0) and np.all(np.isnan(v0[edge < 0]))
    huge, _ = isotype_voltages(rows, np.full((200, 1), 1e30))
    assert np.all(np.isnan(huge))
    reverse, _ = isotype_voltages(rows, np.full((200, 1), -1e3))
    assert np.all(reverse[edge >= 0] < 0)


def test_exact_depletion_side_matches_mpmath():
    # e^-y - 1 + y = c at 40 digits (Sze & Ng: the field integral of a Boltzmann depletion side)
    for c in [1e-30, 1e-12, 1e-6, 0.01, 0.0199, 0.02, 0.3, 1.0, 7.0, 80.0, 1e6]:
        with mp.workdps(40):
            reference = mp.findroot(lambda y: mp.expm1(-y) + y - c, mp.sqrt(2 * c) if c < 1 else c + 1)
        y, s = exact_depletion(c)
        assert abs(y / float(reference) - 1) < 4e-16, c
        assert abs(s - float(-mp.expm1(-reference))) <= 4e-16 * s


def test_forward_law_matches_an_independent_mpmath_solve():
    # the exact Boltzmann balance solved at 50 digits by bisection (tests/test_isotype_exact.py),
    # then J = P e^v1 (e^v - 1)
    law = dict(barrier_eV=0.35, built_in_V=0.2, richardson_A_m2_K2=8.16e5, temperature_K=300.0)
    vt = thermal_voltage_V(300.0)
    for alpha in [1e-6, 0.01, 1.0, 37.0, 1e6]:
        rows = isotype_rows(alpha=alpha, form="exact", transport="thermionic", field_energy_eV=np.nan,
                            spike_eV=np.nan, direction=1.0, **law)
        voltages = np.array([-1.0, -0.05, 0.0, 0.1, 0.19])
        jc, _ = isotype_currents(rows, voltages[None, :].copy())
        for v, j in zip(voltages, jc[0]):
            with mp.workdps(40):
                x = mp_exact_root(mp.mpf(0.2 - v) / vt, alpha)
                p = mp.mpf(8.16e5) * 300.0 ** 2 * mp.exp(-mp.mpf(0.35) / vt)
                reference = float(p * mp.exp(x) * mp.expm1(mp.mpf(v) / vt))
            assert j == reference == 0.0 if v == 0.0 else abs(j / reference - 1) < 1e-13


@pytest.mark.parametrize("transport, form", CASES)
def test_slope_range_matches_the_numpy_bound_and_contains_the_slopes(transport, form):
    law, field, voltage, edge = _points(form, n=600, seed=5)
    low = np.minimum(voltage, edge - 1e-3)
    high = np.minimum(low + 0.02, edge)
    rows = _rows(transport, form, law, field)
    lo_c, hi_c = (a[:, 0] for a in isotype_slope_ranges(rows, _column(low), _column(high)))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", te.IsotypeDomainWarning)
        if transport == "thermionic":
            lo_n, hi_n = te.current_slope_range(low, high, depletion=form, **law)
        else:
            lo_n, hi_n = fe.field_emission_slope_range(low, high, include_tail=form == "tail",
                                                       **law, **field)
        inside = np.linspace(0, 1, 9)[:, None] * (high - low) + low
        _, slopes = isotype_currents(rows, np.ascontiguousarray(inside.T))
    ok = np.isfinite(lo_n)
    assert ok.mean() > 0.9
    # at flat band the smallest slope is a difference of nearly equal terms (1e-10 of the
    # largest in places, in either form): the two agree where the interval stays off it
    off = ok & (edge - high > 1e-6)
    assert np.max(np.abs(lo_c[off] / lo_n[off] - 1)) < 1e-9
    assert np.max(np.abs(hi_c[ok] / hi_n[ok] - 1)) < 1e-9
    assert np.all(slopes[ok] >= lo_c[ok, None] * (1 - 1e-9))
    assert np.all(slopes[ok] <= hi_c[ok, None] * (1 + 1e-9))


def _demo_efficiency(compiled):
    from siltandem.result.driver import compute_result

    saved = interface_element.COMPILED_ISOTYPE
    interface_element.COMPILED_ISOTYPE = compiled
    try:
        summary = compute_result(load_stack(ROOT / "stacks" / "demo_triple_layers.toml")).summary
    finally:
        interface_element.COMPILED_ISOTYPE = saved
    return summary


def test_layer_demo_equals_the_numpy_law_result():
    numpy_path, compiled_path = _demo_efficiency(False), _demo_efficiency(True)
    for key in ("efficiency_pct", "mpp_V", "voc_V", "jsc_mA_cm2", "fill_factor_pct"):
        assert compiled_path[key] == pytest.approx(numpy_path[key], rel=1e-9), key
    assert compiled_path["mpp_certificate"]["certified"]


def test_an_interface_with_a_parameter_the_compiled_law_lacks_takes_the_numpy_law():
    # a field added to IsotypeInterface later (here made up on a subclass) with a non-default
    # value: the element must not be solved by the compiled law, which would ignore it
    from dataclasses import dataclass

    @dataclass(frozen=True)
    class Extended(elements.IsotypeInterface):
        extra_charge: float = 0.0

    common = dict(barrier_eV=elements.batch(0.45), built_in_V=elements.batch(0.3),
                  alpha=elements.batch(2.0), richardson_A_m2_K2=elements.batch(8e5))
    assert Extended("a", **common).compiled_rows(300.0) is not None
    assert Extended("b", extra_charge=1.0, **common).compiled_rows(300.0) is None
    assert elements.IsotypeInterface("c", **common).compiled_rows(300.0) is not None


def test_field_emission_on_the_exact_depletion_side_is_continuous():
    # issue 18: the tail/plain switch at Vbi = 3 kT/q makes the thermionic-field current jump; the
    # exact Boltzmann depletion side (Sze & Ng: the field integral e^-v2 - 1 + v2) has no switch.
    # Invented law numbers (alpha 0.3, E00 20 meV, spike 0.2 eV), Vbi from 2 to 4 kT/q.
    temperature = 300.0
    vt = thermal_voltage_V(temperature)
    vbi = np.linspace(2.0, 4.0, 2001)[:, None] * vt

    def current(form, transport="thermionic-field", e00=0.02):
        rows = isotype_rows(built_in_V=vbi, alpha=0.3, barrier_eV=vbi + 0.1, richardson_A_m2_K2=8e5,
                            temperature_K=temperature, form=form, transport=transport,
                            field_energy_eV=e00, spike_eV=0.2, direction=1.0)
        return isotype_currents(rows, np.full((vbi.size, 1), -0.05))[0][:, 0]

    exact = current("exact")
    switched = np.where(vbi[:, 0] > 3 * vt, current("tail"), current("plain"))
    assert np.max(np.abs(np.diff(np.log(-exact)))) < 1e-3          # steps of 1e-3 kT/q: smooth
    assert np.max(np.abs(np.diff(np.log(-switched)))) > 0.3        # the switch's jump (measured 0.56)
    # deep in the tail form's range the exact side is close to it (measured 1.6 % at 4 kT/q)
    assert exact[-1] == pytest.approx(current("tail")[-1], rel=0.05)
    # vanishing E00: the thermionic law on the exact side (the excess current of the triangular
    # top, Gamma(5/3) (1.5 e00 sqrt(w))^(2/3), about 1e-5 here)
    np.testing.assert_allclose(current("exact", e00=1e-9), current("exact", "thermionic"), rtol=1e-4)


def test_field_emission_exact_side_slope_range_contains_the_slopes():
    # a rigorous enclosure (dlnG/dw bounded over the cell by laws/field_emission.py
    # gain_slope_range) against 17 sampled slopes of the compiled law per cell, at three cell
    # widths; its median relative width shrinks with the cell (no outside value: the enclosure
    # property, which the certificate's refinement needs)
    law, field, voltage, edge = _points("exact", n=600, seed=9)
    rows = _rows("thermionic-field", "exact", law, field)
    widths = []
    for width in (0.02, 1e-4, 1e-6):
        low = np.minimum(voltage, edge - 1e-3)
        high = np.minimum(low + width, edge)
        lo_c, hi_c = (a[:, 0] for a in isotype_slope_ranges(rows, _column(low), _column(high)))
        inside = np.linspace(0, 1, 17)[:, None] * (high - low) + low
        _, slopes = isotype_currents(rows, np.ascontiguousarray(inside.T))
        ok = np.isfinite(lo_c) & np.all(np.isfinite(slopes), axis=1)
        assert ok.mean() > 0.9
        assert np.all(slopes[ok] >= lo_c[ok, None] - 1e-9 * np.abs(lo_c[ok, None]))
        assert np.all(slopes[ok] <= hi_c[ok, None] * (1 + 1e-9))
        widths.append(np.median((hi_c[ok] - lo_c[ok]) / np.abs(hi_c[ok])))
    assert widths[1] < widths[0] / 10 and widths[2] < widths[1] / 10 and widths[2] < 1e-3, widths
