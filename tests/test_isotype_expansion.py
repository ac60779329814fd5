"""The isotype law near zero bias as a polynomial (laws/compiled_isotype.py ``fill_expansion``,
``element_inverse``, the neighbourhood slope range) against the exact compiled law.

Sources:
- The exact compiled inverse and forward law of laws/compiled_isotype.py, themselves checked
  against the numpy laws (tests/test_compiled_isotype.py), a 40-digit mpmath charge balance and
  the Poisson/WKB references of tests/test_field_emission*.py (thermionic emission: A. Chandra,
  L. F. Eastman, Solid-State Electron. 23 (1980) 599; thermionic-field emission: K. Yang,
  J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321).
- The slope: a central difference of the exact inverse (its truncation and rounding about 1e-11
  relative at the step used here, common practice, no source).
- The demo result: the layer triple solved with and without the expansion (the same model; its
  efficiency equal to 1e-12 relative, far inside the solver's own inverse tolerance of 1e-13 V
  on a 3 V string).
"""
import math
import warnings
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack
from siltandem.circuit import interface_element
from siltandem.laws import compiled_isotype as ci
from siltandem.laws.compiled import PARAMETER_WIDTH
from siltandem.result.driver import run_stack

ROOT = Path(__file__).resolve().parents[1]
CASES = [("thermionic", "exact"), ("thermionic", "tail"), ("thermionic", "plain"),
         ("thermionic-field", "exact"), ("thermionic-field", "tail"),
         ("thermionic-field", "plain")]
C = ci.EXPANSION_COLUMN


def _rows(transport, form, n=300, seed=11):
    """Random laws over tests/test_compiled_isotype.py's ranges (alpha 1e-6..1e6, Vbi 0.01..1 V,
    T 250..400 K, E00 1e-3..1e-1 eV, spike 0..0.5 eV), both directions, with the expansion."""
    rng = np.random.default_rng(seed)
    vbi = 10 ** rng.uniform(-2, 0, n)
    rows = ci.isotype_rows(
        built_in_V=vbi, alpha=10 ** rng.uniform(-6, 6, n), barrier_eV=vbi + rng.uniform(0.02, 0.3, n),
        richardson_A_m2_K2=8e5, temperature_K=rng.uniform(250, 400, n), form=form,
        transport=transport, field_energy_eV=10 ** rng.uniform(-3, -1, n),
        spike_eV=rng.uniform(0.0, 0.5, n), direction=np.where(rng.uniform(size=n) < 0.5, 1.0, -1.0),
        width=PARAMETER_WIDTH)
    return ci.fill_expansion(rows)


def _currents(p, fractions):
    return np.asarray(fractions) * p[C + 1] * p[C]


FRACTIONS = np.concatenate([np.linspace(-1.0, 1.0, 41), np.geomspace(1e-12, 1.0, 13),
                            -np.geomspace(1e-12, 1.0, 13)])


@pytest.mark.parametrize("transport, form", CASES)
def test_polynomial_matches_the_exact_inverse_inside_its_radius(transport, form):
    rows = _rows(transport, form)
    expanded = rows[:, C + 1] > 0
    # most such laws are smooth about zero bias: the expansion serves them
    assert expanded.mean() > 0.5, expanded.mean()
    worst_v, worst_slope = 0.0, 0.0
    for p in rows[expanded]:
        for j in _currents(p, FRACTIONS):
            v, slope = ci.element_inverse(j, p)
            v_exact, _ = ci.isotype_inverse(j, p)
            if v_exact != 0.0:
                worst_v = max(worst_v, abs(v - v_exact) / abs(v_exact))
            else:
                assert v == 0.0
            # the slope against a central difference of the exact inverse
            h = 1e-3 * p[C + 1] * p[C]
            difference = 2 * h / (ci.isotype_inverse(j + h, p)[0] - ci.isotype_inverse(j - h, p)[0])
            worst_slope = max(worst_slope, abs(slope - difference) / abs(difference))
    assert worst_v <= 2e-13, worst_v
    assert worst_slope <= 1e-9, worst_slope


@pytest.mark.parametrize("transport, form", CASES)
def test_outside_its_radius_the_inverse_is_the_exact_one(transport, form):
    rows = _rows(transport, form, n=100)
    for p in rows:
        scale = p[C] if p[C + 1] > 0 else 1.0
        radius = p[C + 1] if p[C + 1] > 0 else 1e-3
        for j in np.array([1.0001, 2.0, 10.0, -1.0001, -5.0]) * radius * scale:
            a, b = ci.element_inverse(j, p), ci.isotype_inverse(j, p)
            assert (a[0] == b[0] or (math.isnan(a[0]) and math.isnan(b[0]))), (a, b)


def test_rows_without_the_expansion_columns_invert_exactly():
    """A row packed with zeros beyond its own columns (radius 0) takes the exact inverse, and
    rows narrower than ROW_WIDTH are left as they are."""
    rows = _rows("thermionic-field", "exact", n=20)
    bare = rows.copy()
    bare[:, C:] = 0.0
    for p in bare:
        for j in (-50.0, 0.0, 1e-3, 116.0):
            assert ci.element_inverse(j, p) == ci.isotype_inverse(j, p)
    narrow = rows[:, :ci.ISOTYPE_COLUMNS].copy()
    assert np.array_equal(ci.fill_expansion(narrow.copy()), narrow)


def test_a_flat_band_start_is_not_expanded_beyond_its_agreement():
    """Zero built-in voltage on the exact depletion side: y(w) ~ sqrt(2 w) at flat band, not
    analytic there. Whatever radius the check keeps, the polynomial must still meet the exact
    inverse inside it."""
    rows = ci.fill_expansion(ci.isotype_rows(
        built_in_V=np.array([0.0, 1e-4, 1e-3]), alpha=np.array([1.0, 0.3, 3.0]), barrier_eV=0.1,
        richardson_A_m2_K2=8e5, temperature_K=300.0, form="exact", transport="thermionic",
        field_energy_eV=0.0, spike_eV=0.0, direction=1.0, width=PARAMETER_WIDTH))
    for p in rows:
        if p[C + 1] == 0:
            continue
        for j in _currents(p, FRACTIONS):
            v, _ = ci.element_inverse(j, p)
            v_exact, _ = ci.isotype_inverse(j, p)
            assert abs(v - v_exact) <= 2e-13 * abs(v_exact) + 1e-300, (p[0], j, v, v_exact)


@pytest.mark.parametrize("transport, form", CASES)
def test_neighbourhood_slope_range_encloses_every_cell_inside_it(transport, form):
    """A cell in the inner half of the neighbourhood gets the range stored for the whole of it:
    it must enclose the exact law's rigorous range over the cell, and the slope at points in it."""
    rows = _rows(transport, form, n=60)
    rows = rows[rows[:, C + 1] > 0]
    rng = np.random.default_rng(3)
    for p in rows:
        v_lo, v_hi = 0.5 * p[C + 6], 0.5 * p[C + 7]
        ends = np.sort(rng.uniform(v_lo, v_hi, (20, 2)), axis=1)
        low, high = ci.isotype_slope_ranges(p[None, :], ends[:, :1].T.copy(), ends[:, 1:].T.copy())
        assert np.all(low == p[C + 8]) and np.all(high == p[C + 9])
        for (a, b), lo, hi in zip(ends, low[0], high[0]):
            exact_lo, exact_hi = ci.isotype_slope_range(a, b, p)
            assert lo <= exact_lo and hi >= exact_hi, (a, b, lo, exact_lo, hi, exact_hi)
            for v in np.linspace(a, b, 5):
                assert lo <= ci.isotype_current(v, p)[1] <= hi
    # a cell reaching beyond the inner half takes the exact range
    p = rows[0]
    beyond = np.array([[0.6 * p[C + 7]]]), np.array([[2.0 * p[C + 7]]])
    low, high = ci.isotype_slope_ranges(p[None, :], *beyond)
    assert (low[0, 0], high[0, 0]) == ci.isotype_slope_range(beyond[0][0, 0], beyond[1][0, 0], p)


def test_layer_triple_with_and_without_the_expansion(monkeypatch):
    """The layer demo (its six interfaces carry microvolts: every one expanded) solved both ways."""
    stack = ROOT / "stacks" / "demo_triple_layers.toml"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        expanded = run_stack(load_stack(stack))
        monkeypatch.setattr(interface_element.compiled_isotype, "fill_expansion", lambda rows: rows)
        exact = run_stack(load_stack(stack))
    a, b = expanded.summary["efficiency_pct"], exact.summary["efficiency_pct"]
    assert abs(a - b) <= 1e-12 * abs(b), (a, b)
    assert expanded.summary["mpp_certificate"]["certified"]
    assert exact.summary["mpp_certificate"]["certified"]
