"""Fermi-Dirac sides and a fixed sheet charge at an isotype interface (laws/interface_charge.py).

Checks and their sources:
- F_j(eta) against mpmath's polylogarithm, F_j(eta) = -Li_(j+1)(-e^eta) (J. S. Blakemore,
  Solid-State Electron. 25 (1982) 1067, eq. for the normalised integral; mpmath as the reference
  library), for j = -1/2, 1/2, 3/2 over eta -50..80.
- The first integral g(x; eta) = [F_3/2(eta + x) - F_3/2(eta) - x F_1/2(eta)] / F_1/2(eta) (Sze & Ng,
  Physics of Semiconductor Devices, 3rd ed. 2007, ch. 3, surface space-charge; with Fermi-Dirac
  carriers) evaluated in mpmath at 30 digits.
- The general form with Boltzmann sides and no sheet charge against the thermionic law's own
  "exact" depletion form (Lambert W bracket + Newton, a separate implementation) to 1e-13.
- dJ/dV against a central difference of J; V(J) round trip; the slope enclosure contains sampled
  slopes.
- Defaults of the new parameters give the law bit for bit (np.array_equal).
"""
import mpmath
import numpy as np
import pytest

from siltandem.constants import BOLTZMANN_EV_K
from siltandem.laws import interface_charge as ic
from siltandem.laws import thermionic as th

T = 300.0
KT = BOLTZMANN_EV_K * T
mpmath.mp.dps = 30


def fd_mp(order, eta):
    """F_j(eta) = -Li_(j+1)(-e^eta) in mpmath (Blakemore 1982 normalisation)."""
    return mpmath.re(-mpmath.polylog(order + 1, -mpmath.exp(eta)))


@pytest.mark.parametrize("order", [-0.5, 0.5, 1.5])
def test_fermi_integral_against_mpmath_polylog(order):
    eta = np.linspace(-50.0, 80.0, 131)
    ours = ic.fermi_integral(order, eta)
    ref = np.array([float(fd_mp(order, mpmath.mpf(e))) for e in eta])
    assert np.max(np.abs(ours / ref - 1.0)) < 1e-13


@pytest.mark.parametrize("eta", [-40.0, -3.0, 0.5, 15.0, 60.0])
def test_charge_integral_against_mpmath(eta):
    x = np.array([-30.0, -5.0, -0.02, -1e-3, 1e-6, 1e-4, 0.005, 0.3, 5.0, 20.0, 45.0])
    g, dg, c = ic.charge_integral(x, eta)
    e = mpmath.mpf(eta)
    ref = [float((fd_mp(1.5, e + mpmath.mpf(v)) - fd_mp(1.5, e) - mpmath.mpf(v) * fd_mp(0.5, e))
                 / fd_mp(0.5, e)) for v in x]
    dref = [float((fd_mp(0.5, e + mpmath.mpf(v)) - fd_mp(0.5, e)) / fd_mp(0.5, e)) for v in x]
    assert np.max(np.abs(g / ref - 1.0)) < 1e-10
    assert np.max(np.abs(dg / dref - 1.0)) < 1e-12
    assert abs(c[0] / float(fd_mp(-0.5, e) / fd_mp(0.5, e)) - 1.0) < 1e-12


def test_charge_integral_boltzmann_limit():
    """eta -> -inf: g -> e^x - 1 - x (Boltzmann; F_j = e^eta (1 - e^eta / 2^(j+1) + ...), Blakemore
    1982): at eta = -45 and x <= 20 the relative Fermi-Dirac correction is below e^-25 ~ 1.4e-11."""
    x = np.linspace(-20.0, 20.0, 81)
    g, _, _ = ic.charge_integral(x, -45.0)
    assert np.allclose(g, np.expm1(x) - x, rtol=5e-11, atol=0)


LAW = dict(barrier_eV=0.5, built_in_V=0.3, alpha=0.3, richardson_A_m2_K2=1.2e6, temperature_K=T)


@pytest.mark.parametrize("alpha", [1e-3, 0.3, 1.0, 7.0, 1e4])
def test_general_form_equals_the_exact_law_for_boltzmann_sides(alpha):
    law = dict(LAW, alpha=alpha)
    v = np.linspace(-1.0, 0.2999, 301)
    j0, d0 = th.isotype_current_density(v, depletion="exact", with_derivative=True, **law)
    j1, d1 = ic.interface_law("current", v, with_derivative=True, **law)
    assert np.max(np.abs(j1 / j0 - 1.0)) < 1e-13
    assert np.max(np.abs(d1 / d0 - 1.0)) < 1e-12


def test_new_parameters_default_to_todays_law_bit_for_bit():
    v = np.linspace(-1.0, 0.299, 57)
    for depletion in ("exact", "tail", "plain"):
        law = dict(LAW, depletion=depletion)
        a = th.isotype_current_density(v, with_derivative=True, **law)
        b = th.isotype_current_density(v, with_derivative=True, accumulation_fermi_eV=None,
                                       depletion_fermi_eV=None, sheet_charge=0.0, **law)
        assert all(np.array_equal(x, y, equal_nan=True) for x, y in zip(a, b))
        j = a[0][np.isfinite(a[0])]
        assert np.array_equal(th.isotype_voltage(j, **law),
                              th.isotype_voltage(j, sheet_charge=np.zeros(3)[:1], **law), equal_nan=True)


def test_general_form_needs_the_exact_depletion_side():
    with pytest.raises(th.IsotypeParameterError, match="depletion=\"exact\""):
        th.isotype_current_density(0.1, sheet_charge=0.5, depletion="tail", **LAW)


CASES = [dict(accumulation_fermi_eV=4 * KT),
         dict(accumulation_fermi_eV=4 * KT, depletion_fermi_eV=-2 * KT),
         dict(sheet_charge=1.5), dict(sheet_charge=-0.7),
         dict(accumulation_fermi_eV=2 * KT, sheet_charge=3.0)]


@pytest.mark.parametrize("extra", CASES)
def test_derivative_inverse_and_slope_enclosure(extra):
    law = dict(LAW, depletion="exact", **extra)
    v = np.linspace(-0.8, 0.28, 19)
    j, dj = th.isotype_current_density(v, with_derivative=True, **law)
    h = 1e-6
    fd = (th.isotype_current_density(v + h, **law) - th.isotype_current_density(v - h, **law)) / (2 * h)
    assert np.allclose(dj, fd, rtol=1e-5, atol=0)
    assert np.all(np.diff(j) > 0)                          # strictly increasing
    back, dvdj = th.isotype_voltage(j, with_derivative=True, **law)
    assert np.allclose(back, v, rtol=0, atol=1e-10)
    assert np.allclose(dvdj * dj, 1.0, rtol=1e-9)
    lo, hi = th.current_slope_range(v[:-1], v[1:], **law)
    for k in range(v.size - 1):
        inside = np.linspace(v[k], v[k + 1], 5)
        slopes = th.isotype_current_density(inside, with_derivative=True, **law)[1]
        assert lo[k] <= slopes.min() and slopes.max() <= hi[k]
    lo, hi = th.current_slope_range(v[:-1], v[:-1] + 1e-5, **law)   # shrinks with the interval
    assert np.all(hi / lo < 1.01)


def test_fermi_dirac_occupancy_tends_to_boltzmann():
    """With both Fermi levels 40 kT below their band edges and the barrier top > 15 kT above both
    quasi-Fermi levels, Fermi-Dirac occupancy gives the Boltzmann law to ~e^-15 (Sze & Ng ch. 1:
    F_j -> e^eta)."""
    law = dict(LAW, barrier_eV=0.9, depletion="exact")
    v = np.linspace(-0.5, 0.25, 30)                       # (no point at V = 0, where J = 0)
    j0 = th.isotype_current_density(v, **law)
    j1 = th.isotype_current_density(v, accumulation_fermi_eV=-40 * KT, depletion_fermi_eV=-40 * KT, **law)
    assert np.max(np.abs(j1 / j0 - 1.0)) < 1e-6


def test_reduced_sheet_charge_sign_and_scale():
    """s = sigma_c / sqrt(2 eps2 kT N2), sigma_c = +q sigma for electrons, -q sigma for holes
    (Gauss's law at a charged interface, Sze & Ng ch. 3); 1e12 cm^-2 against Si-like 1e17 cm^-3:
    q 1e16 / sqrt(2 * 11.7 eps0 kT 1e23) computed by hand from CODATA constants."""
    from scipy import constants as c
    expected = c.e * 1e16 / np.sqrt(2 * 11.7 * c.epsilon_0 * c.k * T * 1e23)
    s = ic.reduced_sheet_charge(1e12, carrier="electron", depletion_doping_m3=1e23,
                                depletion_permittivity=11.7, temperature_K=T)
    assert np.isclose(s, expected, rtol=1e-14)
    assert np.isclose(ic.reduced_sheet_charge(1e12, carrier="hole", depletion_doping_m3=1e23,
                                              depletion_permittivity=11.7, temperature_K=T), -expected)


def test_demo_in_silicon_drop_with_fermi_dirac_sides():
    """The p-GaP/p-Si interface of stacks/demo_placements.toml, placement "in silicon" (Si at
    1e20 cm^-3 degenerate, 59 meV), at its MPP current 17.462 mA/cm^2 (measured with `run`):
    the Boltzmann law drops 323.3 mV (README), Fermi-Dirac charge and occupancy 316.4 mV, the
    figure issue 18 reports for Fermi-Dirac statistics (its own independent computation, no
    published source)."""
    from pathlib import Path

    from siltandem import load_stack
    from siltandem.circuit.compile import compile_stack
    from siltandem.stack.placements import with_placement

    stack = load_stack(Path(__file__).resolve().parents[1] / "stacks" / "demo_placements.toml")
    chosen = next(p for p in stack.extra["placements"] if p.name == "in silicon")
    circuit = compile_stack(with_placement(stack, chosen))
    e = circuit.element("interface buffer / junction p")
    law = dict(barrier_eV=e.barrier_eV, built_in_V=e.built_in_V, alpha=e.alpha,
               richardson_A_m2_K2=e.richardson_A_m2_K2, temperature_K=298.15, depletion="exact")
    current = float(e.direction[0, 0]) * 174.6237
    boltzmann = -1000 * float(e.direction[0, 0]) * float(th.isotype_voltage(current, **law)[0, 0])
    fermi = -1000 * float(e.direction[0, 0]) * float(th.isotype_voltage(
        current, accumulation_fermi_eV=-e.sides["accumulation"]["fermi_depth_eV"],
        depletion_fermi_eV=-e.sides["depletion"]["fermi_depth_eV"], **law)[0, 0])
    assert abs(boltzmann) == pytest.approx(323.3, abs=0.05)
    assert abs(fermi) == pytest.approx(316.4, abs=0.05)


def test_element_with_fermi_levels_runs_the_general_law():
    """An IsotypeInterface built (from Python) with Fermi levels is marked general_law and gives the
    law's own voltage (the compiled path must leave it to numpy)."""
    from siltandem.circuit.elements import IsotypeInterface, batch

    plain = IsotypeInterface("i", barrier_eV=batch(0.5), built_in_V=batch(0.3), alpha=batch(0.3),
                             richardson_A_m2_K2=batch(1.2e6))
    fermi = IsotypeInterface("i", barrier_eV=batch(0.5), built_in_V=batch(0.3), alpha=batch(0.3),
                             richardson_A_m2_K2=batch(1.2e6), accumulation_fermi_eV=batch(3 * KT))
    assert fermi.general_law and not plain.general_law
    current = np.array([[10.0, 100.0]])
    volts, _ = fermi.voltage(current, T)
    law = th.isotype_voltage(current, accumulation_fermi_eV=3 * KT, **dict(LAW, depletion="exact"))
    assert np.allclose(volts, -law, rtol=1e-12, atol=0)
    assert not np.allclose(volts, plain.voltage(current, T)[0], rtol=1e-3)
