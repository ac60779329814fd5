"""The compiled thermionic-field law with a Fermi-Dirac accumulation side (laws/compiled_field_fermi.py
through laws/compiled_isotype.py's rows and kernels).

Checks against sources outside the compiled law:

* the numpy law laws/field_emission_fermi.py (the same equations written with numpy and scipy,
  itself checked against the Poisson/WKB reference in tests/test_field_emission_fermi.py): forward J
  and dJ/dV to rounding, the inverse by its backward error through the numpy law;
* that slow reference directly (tests/test_field_emission_fermi.py ``reference_current``: the
  Fermi-Dirac first integral of Poisson's equation, S. M. Sze, K. K. Ng, Physics of Semiconductor
  Devices, 3rd ed. 2007, ch. 1-2, with F_j from mpmath's polylogarithm, J. S. Blakemore,
  Solid-State Electron. 25 (1982) 1067; the WKB exponent by scipy.integrate.quad through the
  parabolic barrier, C. R. Crowell, V. L. Rideout, Solid-State Electron. 12 (1969) 89; K. Yang,
  J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321);
* the Boltzmann limit eta1 -> -inf (Blakemore's F_j(eta) -> e^eta): the compiled Boltzmann
  thermionic-field rows on the exact depletion side;
* interval enclosure (R. E. Moore, R. B. Kearfott, M. J. Cloud, Introduction to Interval Analysis,
  SIAM 2009): the certificate's slope range holds every sampled dJ/dV of its cell.
"""
import numpy as np
import pytest

from siltandem.constants import thermal_voltage_V
from siltandem.laws import compiled_field_fermi as cff
from siltandem.laws import field_emission_fermi as ff
from siltandem.laws.compiled import as_input
from siltandem.laws.compiled_isotype import (isotype_currents, isotype_rows, isotype_slope_ranges,
                                             isotype_voltages)

from test_field_emission_fermi import CASES, FERMI_CASE, case, reference_current

T = 300.0


def random_laws(seed, count):
    """Random interfaces: barrier 0.1-0.9 eV, Vbi 0.05-0.8 V, alpha 1e-3-1e3, E00 1e-3-0.1 eV, spike
    0.02-0.8 eV (or none), T 200-450 K, the accumulation side's Fermi level -10..+10 kT from its band
    edge (the range the switch of circuit/isotype.py hands this law, and beyond)."""
    rng = np.random.default_rng(seed)
    temperature = rng.uniform(200.0, 450.0, count)
    kt = thermal_voltage_V(temperature)
    spike = rng.uniform(0.02, 0.8, count)
    spike[rng.random(count) < 0.2] = np.nan
    return [dict(barrier_eV=rng.uniform(0.1, 0.9), built_in_V=rng.uniform(0.05, 0.8),
                 alpha=10 ** rng.uniform(-3, 3), richardson_A_m2_K2=10 ** rng.uniform(5, 6.2),
                 temperature_K=temperature[i], field_energy_eV=10 ** rng.uniform(-3, -1),
                 spike_eV=spike[i], accumulation_fermi_eV=rng.uniform(-10, 10) * kt[i])
            for i in range(count)]


def rows_of(law, direction=1.0):
    return isotype_rows(built_in_V=law["built_in_V"], alpha=law["alpha"], barrier_eV=law["barrier_eV"],
                        richardson_A_m2_K2=law["richardson_A_m2_K2"], temperature_K=law["temperature_K"],
                        form="exact", transport="thermionic-field", field_energy_eV=law["field_energy_eV"],
                        spike_eV=law["spike_eV"], direction=direction,
                        accumulation_fermi_eV=law.get("accumulation_fermi_eV"))


def volts_of(law, n=25):
    """Law voltages from 1 V of reverse bias to just below flat band [V]."""
    return np.linspace(-1.0, law["built_in_V"] * (1 - 1e-6), n)


def test_forward_matches_the_numpy_law_to_rounding():
    """J and dJ/dV against laws/field_emission_fermi.py on 60 random interfaces x 25 voltages:
    2e-13 relative (measured 7.3e-14 worst, J and dJ/dV, on these draws: the two solve the same split by
    different Newton forms, charge balance against field balance, each to rounding)."""
    worst_j = worst_dj = 0.0
    for law in random_laws(18, 60):
        v = volts_of(law)[None, :]
        j, dj = isotype_currents(rows_of(law), as_input(v))
        j_ref, dj_ref = ff.fermi_field_current_density(v, with_derivative=True, **law)
        nonzero = j_ref != 0
        assert np.all(np.isfinite(j)) and np.array_equal(nonzero, j != 0)
        worst_j = max(worst_j, np.max(np.abs(j[nonzero] / j_ref[nonzero] - 1)))
        worst_dj = max(worst_dj, np.max(np.abs(dj / dj_ref - 1)))
    assert worst_j < 2e-13 and worst_dj < 2e-13, (worst_j, worst_dj)


def test_inverse_backward_error_through_the_numpy_law():
    """V(J) of the compiled inverse put into the numpy forward law gives J back: relative 1e-12
    (plus 1e-12 of the flat-band current for J near zero); its dJ/dV is the numpy law's at that V
    to 1e-11; currents above the flat-band current give NaN; at flat band J and dJ/dV are the numpy
    law's to 1e-13 and V(J_flat) = Vbi."""
    for law in random_laws(19, 40):
        v = volts_of(law, 15)
        j = ff.fermi_field_current_density(v, **law)
        flat = float(ff.fermi_field_current_density(law["built_in_V"], **law))
        rows = rows_of(law)
        targets = np.concatenate([j, [0.0, 1e-6 * flat, -3.0 * abs(flat)]])[None, :]
        back, slope = isotype_voltages(rows, as_input(targets))
        assert np.all(np.isfinite(back)), (law, targets, back)
        again, slope_ref = ff.fermi_field_current_density(back, with_derivative=True, **law)
        np.testing.assert_allclose(again, targets, rtol=1e-12, atol=1e-12 * abs(flat))
        np.testing.assert_allclose(slope, slope_ref, rtol=1e-11)
        above, _ = isotype_voltages(rows, as_input(np.array([[2.0 * abs(flat) + 1.0]])))
        assert np.isnan(above[0, 0])
        # at flat band (dy/dx = sqrt(alpha c1), c1 = F_-1/2/F_1/2: the row's own column)
        _, flat_slope = ff.fermi_field_current_density(law["built_in_V"], with_derivative=True, **law)
        j_flat, dj_flat = isotype_currents(rows, as_input(np.array([[law["built_in_V"]]])))
        assert j_flat[0, 0] == pytest.approx(flat, rel=1e-13) and dj_flat[0, 0] == pytest.approx(flat_slope, rel=1e-13)
        v_flat, _ = isotype_voltages(rows, as_input(j_flat))
        assert v_flat[0, 0] == pytest.approx(law["built_in_V"], abs=1e-15)


def test_slope_range_encloses_sampled_slopes_and_shrinks():
    """Every dJ/dV sampled inside a cell lies in the compiled range of that cell, for cells side by
    side (the kernel's shared-end path) and alone; the range holds the point slope and shrinks in
    proportion to the cell (2e-6 V against 2e-7 V: a tenth, within a factor 2). Its width is that of
    the Boltzmann thermionic-field bracket's form: at E00 near 1e-3 eV a 2e-6 V cell is still a few
    % wide relative for both (measured on these draws), at E00 above 0.01 eV under 1e-4."""
    rng = np.random.default_rng(20)
    for law in random_laws(20, 30):
        rows = rows_of(law)
        edges = np.sort(rng.uniform(-0.8, law["built_in_V"] * (1 - 1e-6), 5))
        low, high = isotype_slope_ranges(rows, as_input(edges[None, :-1]), as_input(edges[None, 1:]))
        for k in range(edges.size - 1):
            inside = np.linspace(edges[k], edges[k + 1], 33)[None, :]
            _, dj = isotype_currents(rows, as_input(inside))
            assert np.all(dj >= low[0, k]) and np.all(dj <= high[0, k]), (law, k, low[0, k], dj.min(),
                                                                           dj.max(), high[0, k])
        mid = 0.5 * (edges[0] + edges[-1])
        _, point = isotype_currents(rows, as_input(np.array([[mid]])))
        widths = []
        for h in (1e-6, 1e-7):
            lo, hi = isotype_slope_ranges(rows, as_input(np.array([[mid - h]])), as_input(np.array([[mid + h]])))
            assert lo[0, 0] <= point[0, 0] <= hi[0, 0]
            widths.append(hi[0, 0] - lo[0, 0])
        assert 5.0 < widths[0] / widths[1] < 20.0, (law, widths)


def test_continuous_as_the_side_becomes_degenerate():
    """J at fixed voltages as eta1 runs from -10 to +10 kT (through the charge integral's series,
    Chebyshev and small-x Gauss branches): no step. Halving the eta step halves the largest change
    of ln|J| between neighbours (a jump would not shrink), and the compiled law matches the numpy
    one all along."""
    law = dict(barrier_eV=0.35, built_in_V=0.3, alpha=2.0, richardson_A_m2_K2=5e5, temperature_K=T,
               field_energy_eV=0.02, spike_eV=0.3)
    kt = thermal_voltage_V(T)
    v = np.array([[-0.4, -0.05, 0.1, 0.29]])

    def log_j(step):
        out = []
        for eta in np.arange(-10.0, 10.0 + step / 2, step):
            j, _ = isotype_currents(rows_of(law | dict(accumulation_fermi_eV=eta * kt)), as_input(v))
            out.append(np.log(np.abs(j[0])))
        return np.array(out)

    coarse, fine = log_j(0.1), log_j(0.05)
    np.testing.assert_allclose(fine[::2], coarse, rtol=0, atol=1e-11)
    ratio = np.max(np.abs(np.diff(fine, axis=0)), axis=0) / np.max(np.abs(np.diff(coarse, axis=0)), axis=0)
    assert np.all((ratio > 0.4) & (ratio < 0.6)), ratio
    for eta in (-10.0, -3.0, 0.0, 3.0, 10.0):
        j, _ = isotype_currents(rows_of(law | dict(accumulation_fermi_eV=eta * kt)), as_input(v))
        j_ref = ff.fermi_field_current_density(v, accumulation_fermi_eV=eta * kt, **law)
        np.testing.assert_allclose(j, j_ref, rtol=2e-13)


def test_boltzmann_limit_and_unmarked_rows_unchanged():
    """eta1 = -40 kT: F_j(eta) = e^eta (1 - e^eta/2^(j+1) + ...) (Blakemore 1982), so the marked rows
    give the compiled Boltzmann law (rows without a Fermi level) to 1e-12; the unmarked rows carry a
    zero flag and are the law they were (tests/test_compiled_isotype.py pins them against the numpy
    Boltzmann law)."""
    law = dict(barrier_eV=0.5, built_in_V=0.4, alpha=0.8, richardson_A_m2_K2=5e5, temperature_K=T,
               field_energy_eV=0.03, spike_eV=0.45)
    v = np.linspace(-0.5, 0.39, 13)[None, :]
    boltzmann_rows = rows_of(law)
    assert np.all(boltzmann_rows[:, cff.FLAG] == 0.0)
    fermi_rows = rows_of(law | dict(accumulation_fermi_eV=-40 * thermal_voltage_V(T)))
    assert np.all(fermi_rows[:, cff.FLAG] == 1.0)
    j_b, dj_b = isotype_currents(boltzmann_rows, as_input(v))
    j_f, dj_f = isotype_currents(fermi_rows, as_input(v))
    np.testing.assert_allclose(j_f, j_b, rtol=1e-12)
    np.testing.assert_allclose(dj_f, dj_b, rtol=1e-12)


@pytest.mark.parametrize("carrier, upper, lower, n_upper, n_lower, volts, aligned",
                         [c + (False,) for c in CASES] + [FERMI_CASE + (True,)])
def test_compiled_law_matches_the_poisson_wkb_reference(carrier, upper, lower, n_upper, n_lower, volts, aligned):
    """2e-5 relative against the slow reference, the tolerance of tests/test_field_emission_fermi.py
    (its two quadratures' ~1e-6 and quad's tolerance), at its interfaces: p-GaP/p-Si and n-GaP/n-Si
    at 1e19, and n-GaInP/n-GaAs with the GaAs side degenerate (eta1 about +1.5)."""
    law, fermi_eV, sides = case(carrier, upper, lower, n_upper, n_lower, aligned)
    rows = rows_of(law | dict(accumulation_fermi_eV=fermi_eV))
    for v in volts:
        if v >= law["built_in_V"]:
            continue
        j, _ = isotype_currents(rows, as_input(np.array([[v]])))
        ref = reference_current(v, law, sides)
        assert j[0, 0] == pytest.approx(ref, rel=2e-5), (v, j[0, 0], ref)


def test_rows_refuse_other_forms_and_narrow_rows():
    """A Fermi-Dirac accumulation side is the exact depletion side's thermionic-field law only."""
    law = dict(built_in_V=0.3, alpha=1.0, barrier_eV=0.3, richardson_A_m2_K2=5e5, temperature_K=T,
               field_energy_eV=0.02, spike_eV=0.3, direction=1.0, accumulation_fermi_eV=0.01)
    with pytest.raises(ValueError, match="thermionic-field"):
        isotype_rows(form="tail", transport="thermionic-field", **law)
    with pytest.raises(ValueError, match="thermionic-field"):
        isotype_rows(form="exact", transport="thermionic", **law)
    with pytest.raises(ValueError, match="columns"):
        isotype_rows(form="exact", transport="thermionic-field", width=12, **law)
