"""Thermionic-field emission with a Fermi-Dirac accumulation side (laws/field_emission_fermi.py).

Checks against sources outside the law:

* a slow reference kept here, in physical units: the accumulation side's interface field from the
  Fermi-Dirac first integral of Poisson's equation, eps E^2 / 2 = kT [Nc (F_3/2(eta + u) - F_3/2(eta))
  - N u] with n = Nc F_1/2 (S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed. 2007,
  ch. 1-2), F_j from mpmath's polylogarithm F_j(eta) = -Li_(j+1)(-e^eta) (J. S. Blakemore,
  Solid-State Electron. 25 (1982) 1067), the exact Boltzmann depletion side, the split by
  continuity of D solved with scipy.optimize.brentq; then the WKB exponent integrated numerically
  (scipy.integrate.quad) through the parabolic depletion barrier and the current as the energy
  integral of transmission times the Boltzmann supply (C. R. Crowell, V. L. Rideout, Solid-State
  Electron. 12 (1969) 89; K. Yang, J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321);
* the Boltzmann limit (eta -> -inf, Blakemore's F_j -> e^eta): the law of laws/field_emission.py
  with the exact depletion side;
* the inverse against the forward law, dJ/dV against central differences.
"""
import math

import mpmath
import numpy as np
import pytest
from scipy import integrate, optimize

from siltandem.constants import BOLTZMANN_EV_K, ELECTRON_MASS_KG, ELEMENTARY_CHARGE_C, PLANCK_J_S, \
    VACUUM_PERMITTIVITY_F_M
from siltandem.laws import field_emission as fe
from siltandem.laws import field_emission_fermi as ff
from siltandem.laws import thermionic as te
from siltandem.materials import load_material
from siltandem.materials.tunnelling import tunnelling_mass_ratio

HBAR = PLANCK_J_S / (2 * math.pi)
Q = ELEMENTARY_CHARGE_C
EPS0 = VACUUM_PERMITTIVITY_F_M
T = 300.0
KT = BOLTZMANN_EV_K * T


def fd(order, eta):
    """F_j(eta) = -Li_(j+1)(-e^eta) (Blakemore 1982 normalisation), mpmath."""
    return float(mpmath.re(-mpmath.polylog(order + 1, -mpmath.exp(eta))))


def case(carrier, upper, lower, n_upper_cm3, n_lower_cm3, fermi_alignment=False):
    """Law parameters (Boltzmann alignment of laws/thermionic.py as given inputs), E00, eta1 and the
    sides' numbers for the reference."""
    a, b = (load_material(*m) if isinstance(m, tuple) else load_material(m) for m in (upper, lower))
    electron = carrier == "electron"
    dos = [(m.conduction_dos_per_m3 if electron else m.valence_dos_per_m3)(T) for m in (a, b)]
    n_a, n_b = n_upper_cm3 * 1e6, n_lower_cm3 * 1e6
    al = te.isotype_band_alignment(
        carrier=carrier, affinity_a_eV=a.electron_affinity_eV, gap_a_eV=a.gap_eV(T), band_dos_a_m3=dos[0],
        doping_a_m3=n_a, relative_permittivity_a=a.relative_permittivity,
        affinity_b_eV=b.electron_affinity_eV, gap_b_eV=b.gap_eV(T), band_dos_b_m3=dos[1],
        doping_b_m3=n_b, relative_permittivity_b=b.relative_permittivity, temperature_K=T)
    # the Fermi-Dirac case (electrons): the side with the lower conduction band edge accumulates
    # (checked below: Vbi > 0)
    first = bool(al.a_accumulates) if not fermi_alignment else a.electron_affinity_eV > b.electron_affinity_eV
    acc, dep = (a, b) if first else (b, a)
    n1, n2 = (n_a, n_b) if first else (n_b, n_a)
    nc1, nc2 = (dos[0], dos[1]) if first else (dos[1], dos[0])
    eta1 = optimize.brentq(lambda e: fd(0.5, e) - n1 / nc1, -40.0, 30.0, xtol=1e-14)
    mass = tunnelling_mass_ratio(dep, carrier)
    e00 = float(fe.field_energy_eV(doping_m3=n2, relative_permittivity=dep.relative_permittivity, mass_ratio=mass))
    rich = min(getattr(m, "electron_richardson_A_m2_K2" if electron else "hole_richardson_A_m2_K2") for m in (a, b))
    law = dict(barrier_eV=float(al.barrier_eV), built_in_V=float(al.built_in_V), alpha=float(al.alpha),
               richardson_A_m2_K2=rich, temperature_K=T, field_energy_eV=e00, spike_eV=float(al.offset_eV))
    if fermi_alignment:
        # the same alignment with both Fermi levels from their own statistics (side 1 Fermi-Dirac,
        # side 2 Boltzmann as in the law): the spike seen from side 1 is the band offset, its top
        # over side 1's Fermi level at flat band offset - eta1 kT, Vbi = (eta1 - eta2) kT - offset
        assert electron
        offset = acc.electron_affinity_eV - dep.electron_affinity_eV
        eta2 = math.log(n2 / nc2)
        law.update(barrier_eV=offset - eta1 * KT, built_in_V=(eta1 - eta2) * KT - offset, spike_eV=offset,
                   alpha=acc.relative_permittivity * n1 / (dep.relative_permittivity * n2))
    sides = dict(n1=n1, nc1=nc1, eta1=eta1, n2=n2, er1=acc.relative_permittivity, er2=dep.relative_permittivity,
                 mass=mass)
    return law, eta1 * KT, sides


def reference_current(V, law, sides):
    """Slow reference J(V) [A/m^2] (module docstring), physical units."""
    eps1, eps2 = sides["er1"] * EPS0, sides["er2"] * EPS0
    eta = sides["eta1"]
    vb = (law["built_in_V"] - V) / KT

    def d_side1(u):          # eps1 E1^2 / 2 [J/m^3], Fermi-Dirac accumulation side
        return Q * KT * (sides["nc1"] * (fd(1.5, eta + u) - fd(1.5, eta)) - sides["n1"] * u)

    def d_side2(u):          # eps2 E2^2 / 2, exact Boltzmann depletion side
        return Q * KT * sides["n2"] * (math.exp(-u) - 1 + u)

    # continuity of D: eps1 d_side1(u1) = eps2 d_side2(vb - u1)
    u1 = optimize.brentq(lambda u: eps1 * d_side1(u) - eps2 * d_side2(vb - u), 0.0, vb, xtol=1e-15, rtol=1e-14)
    f0 = math.sqrt(2 * eps1 * d_side1(u1)) / eps2            # field on the depletion side [V/m]
    curvature = Q * sides["n2"] / (2 * eps2)                   # Ec(x) = top - f0 x + curvature x^2 [eV]
    x_vertex = f0 / (2 * curvature)
    top = law["barrier_eV"] - u1 * KT
    lowest = max(top - f0 * x_vertex / 2, top - law["spike_eV"])
    m = sides["mass"] * ELECTRON_MASS_KG

    def exponent(E):
        depth = top - E
        x_turn = (f0 - math.sqrt(max(f0 * f0 - 4 * curvature * depth, 0.0))) / (2 * curvature)
        val, _ = integrate.quad(lambda x: math.sqrt(max(2 * m * Q * (depth - f0 * x + curvature * x * x), 0.0)),
                                0.0, x_turn, epsabs=0, epsrel=1e-11, limit=200)
        return 2 * val / HBAR

    def supply(E):                                             # Boltzmann supply, both sides
        return math.exp((V - E) / KT) - math.exp(-E / KT)

    scale = law["richardson_A_m2_K2"] * T / BOLTZMANN_EV_K
    below, _ = integrate.quad(lambda E: math.exp(-exponent(E)) * supply(E) * math.exp(top / KT),
                              lowest, top, epsabs=0, epsrel=1e-9, limit=400)
    above, _ = integrate.quad(lambda E: supply(E) * math.exp(top / KT), top, top + 60 * KT,
                              epsabs=0, epsrel=1e-11, limit=200)
    return scale * (below + above) * math.exp(-top / KT)


CASES = [
    ("hole", "GaP", "Si", 1e19, 1e19, (-0.3, 0.1, 0.5)),          # p-Si accumulates, eta1 ~ -0.4
    ("electron", "GaP", "Si", 1e17, 1e19, (-0.2, 0.05, 0.1)),      # n-Si accumulates
]
# n-GaAs at 1e18 (eta1 ~ +1.5) on n-GaInP (x = 0.51) at 1e16, aligned with its Fermi-Dirac level (the
# Boltzmann alignment would make the GaInP side accumulate, issue 18)
FERMI_CASE = ("electron", ("GaInP", 0.51), "GaAs", 1e16, 1e18, (-0.2, 0.02, 0.05))


@pytest.mark.parametrize("carrier, upper, lower, n_upper, n_lower, volts, aligned",
                         [c + (False,) for c in CASES] + [FERMI_CASE + (True,)])
def test_fermi_split_matches_the_poisson_wkb_reference(carrier, upper, lower, n_upper, n_lower, volts, aligned):
    """2e-5 relative, as in tests/test_field_emission.py (the two quadratures' ~1e-6 and quad's
    tolerance); the Boltzmann split (laws/field_emission.py) misses the reference by more than
    that at the degenerate side, so the check tells the two apart."""
    law, fermi_eV, sides = case(carrier, upper, lower, n_upper, n_lower, aligned)
    assert law["barrier_eV"] > 0 and law["built_in_V"] > 0
    worst_boltzmann = 0.0
    for V in volts:
        if V >= law["built_in_V"]:
            continue
        ref = reference_current(V, law, sides)
        fast = float(ff.fermi_field_current_density(V, accumulation_fermi_eV=fermi_eV, **law))
        boltzmann = float(fe.field_emission_current_density(V, depletion="exact", **law))
        assert fast == pytest.approx(ref, rel=2e-5), (V, fast, ref)
        worst_boltzmann = max(worst_boltzmann, abs(boltzmann / ref - 1))
    assert worst_boltzmann > 1e-3, worst_boltzmann


def test_nondegenerate_limit_is_the_boltzmann_law():
    """eta1 = -60: F_j(eta) = e^eta (1 - e^eta / 2^(j+1) ...) (Blakemore 1982), so the split and
    the current are laws/field_emission.py's with the exact depletion side to rounding."""
    law = dict(barrier_eV=0.5, built_in_V=0.4, alpha=0.8, richardson_A_m2_K2=5e5, temperature_K=T,
               field_energy_eV=0.03, spike_eV=0.45)
    V = np.linspace(-0.5, 0.39, 13)
    j, dj = ff.fermi_field_current_density(V, accumulation_fermi_eV=-60 * KT, with_derivative=True, **law)
    jb, djb = fe.field_emission_current_density(V, depletion="exact", with_derivative=True, **law)
    np.testing.assert_allclose(j, jb, rtol=1e-12)
    np.testing.assert_allclose(dj, djb, rtol=1e-12)


@pytest.mark.parametrize("fermi_eV", [0.0, 0.1, 0.3])
def test_inverse_returns_the_voltage_and_the_slope_matches_differences(fermi_eV):
    """V(J(V)) = V to 1e-12 V; J rises strictly; dJ/dV against central differences to 1e-3 (the
    fixed gain quadrature of laws/field_emission.py moves its panels with w: its own analytic
    dlnG/dw and the rule's difference quotient differ by up to ~4e-4, measured there too)."""
    law = dict(barrier_eV=0.5, built_in_V=0.4, alpha=0.8, richardson_A_m2_K2=5e5, temperature_K=T,
               field_energy_eV=0.03, spike_eV=0.45)
    V = np.linspace(-0.5, 0.39, 19)
    j, dj = ff.fermi_field_current_density(V, accumulation_fermi_eV=fermi_eV, with_derivative=True, **law)
    assert np.all(np.diff(j) > 0)
    back, dvdj = ff.fermi_field_voltage(j, accumulation_fermi_eV=fermi_eV, with_derivative=True, **law)
    np.testing.assert_allclose(back, V, atol=1e-12, rtol=0)
    np.testing.assert_allclose(dvdj * dj, 1.0, rtol=1e-9)
    h = 1e-5
    num = (ff.fermi_field_current_density(V + h, accumulation_fermi_eV=fermi_eV, **law)
           - ff.fermi_field_current_density(V - h, accumulation_fermi_eV=fermi_eV, **law)) / (2 * h)
    np.testing.assert_allclose(num, dj, rtol=1e-3)
    flat = float(ff.fermi_field_current_density(0.4, accumulation_fermi_eV=fermi_eV, **law))
    with np.errstate(all="ignore"):
        assert np.isnan(ff.fermi_field_voltage(2 * abs(flat) + 1.0, accumulation_fermi_eV=fermi_eV, **law))


@pytest.mark.parametrize("fermi_eV", [-0.05, 0.1, 0.3])
def test_slope_range_holds_sampled_slopes_and_shrinks(fermi_eV):
    """Interval arithmetic (R. E. Moore, R. B. Kearfott, M. J. Cloud, Introduction to Interval
    Analysis, SIAM 2009): every dJ/dV sampled inside a cell lies in the cell's range; the range
    shrinks toward the point slope as the cell does."""
    rng = np.random.default_rng(18)
    for _ in range(4):
        law = dict(barrier_eV=rng.uniform(0.2, 0.8), built_in_V=rng.uniform(0.1, 0.6), alpha=10 ** rng.uniform(-1, 1),
                   richardson_A_m2_K2=5e5, temperature_K=T, field_energy_eV=10 ** rng.uniform(-2.5, -1),
                   spike_eV=rng.uniform(0.05, 0.6))
        a, b = np.sort(rng.uniform(-0.6, law["built_in_V"] - 0.01, 2))
        inside = np.linspace(a, b, 41)
        _, dj = ff.fermi_field_current_density(inside, accumulation_fermi_eV=fermi_eV, with_derivative=True, **law)
        low, high = ff.fermi_field_slope_range(a, b, accumulation_fermi_eV=fermi_eV, **law)
        assert np.all(dj >= low) and np.all(dj <= high), (law, a, b, low, high, dj.min(), dj.max())
        mid = 0.5 * (a + b)
        _, point = ff.fermi_field_current_density(mid, accumulation_fermi_eV=fermi_eV, with_derivative=True, **law)
        low, high = ff.fermi_field_slope_range(mid - 1e-6, mid + 1e-6, accumulation_fermi_eV=fermi_eV, **law)
        assert low <= point <= high and (high - low) < 1e-3 * abs(point), (low, point, high)


def materials_element(monkeypatch, switch, **extra):
    """p-GaP/p-Si at 1e19/1e19 from the library (the Si side, within 3 kT of its valence band,
    accumulates), with circuit/isotype.py's FERMI_DIRAC_FIELD set to ``switch``."""
    from siltandem.circuit import isotype
    from siltandem.stack.load import ElementSpec

    monkeypatch.setattr(isotype, "FERMI_DIRAC_FIELD", switch)
    values = dict(upper_material="GaP", lower_material="Si", upper_doping_cm3=1e19, lower_doping_cm3=1e19,
                  carrier="hole", carriers_flow="down") | extra
    return isotype.isotype_from_materials(ElementSpec(0, "isotype", "i", 1, values), T, None)


def test_element_is_boltzmann_unless_switched_on_and_boltzmann_key_wins(monkeypatch):
    """Off: the element has no Fermi level, the compiled Boltzmann law serves it and the degenerate
    depletion side's warning says what stays Boltzmann. On (the default): the accumulation side
    takes the Fermi-Dirac law (compiled rows marked Fermi-Dirac, laws/compiled_field_fermi.py), the
    depletion side stays Boltzmann; with statistics = "boltzmann" the element is the switched-off
    one field for field."""
    from siltandem.circuit import isotype
    from siltandem.laws import compiled_field_fermi
    from siltandem.result.summary import _degenerate_side_warnings

    off = materials_element(monkeypatch, False)
    assert off.transport == "thermionic-field" and off.accumulation_fermi_eV is None
    assert off.compiled_rows(T) is not None and not off.sides["accumulation"]["fermi_dirac"]
    said = _degenerate_side_warnings(off)        # GaP (depletion side) is degenerate, Si 26 meV from its band
    assert len(said) == 1 and "depletion side (GaP" in said[0]
    assert "no Fermi-Dirac form for the depletion side: its charge, barrier and tunnelling stay Boltzmann" in said[0]
    assert off.compiled_rows(T)[0, compiled_field_fermi.FLAG] == 0.0
    assert isotype.FERMI_DIRAC_FIELD is False          # monkeypatched; the module's default is on
    monkeypatch.undo()
    assert isotype.FERMI_DIRAC_FIELD is True
    on = materials_element(monkeypatch, True)
    assert on.accumulation_fermi_eV is not None and on.depletion_fermi_eV is None
    assert on.sides["accumulation"]["fermi_dirac"] and not on.sides["depletion"]["fermi_dirac"]
    assert on.compiled_rows(T)[0, compiled_field_fermi.FLAG] == 1.0
    said = [w for w in _degenerate_side_warnings(on) if "accumulation side" in w]
    assert len(said) == 1 and "Fermi-Dirac statistics for its Fermi level and its charge" in said[0]
    assert "tunnelling stay Boltzmann" in said[0]
    boltzmann = materials_element(monkeypatch, True, statistics="boltzmann")
    assert boltzmann == off and boltzmann.accumulation_fermi_eV is None


@pytest.mark.parametrize("compiled", [False, True])
def test_switched_on_element_runs_the_fermi_law_exactly(monkeypatch, compiled):
    """The element's current and inverse are laws/field_emission_fermi.py's on its own numbers
    (checked above against the Poisson/WKB reference): bit for bit through the numpy law
    (interface_element.COMPILED_ISOTYPE off), to rounding (1e-12 relative, 1e-12 V) through the
    compiled one (laws/compiled_field_fermi.py); and they differ from the Boltzmann element's."""
    from siltandem.circuit import interface_element

    monkeypatch.setattr(interface_element, "COMPILED_ISOTYPE", compiled)
    on, off = materials_element(monkeypatch, True), materials_element(monkeypatch, False)
    law = dict(barrier_eV=on.barrier_eV, built_in_V=on.built_in_V, alpha=on.alpha,
               richardson_A_m2_K2=on.richardson_A_m2_K2, temperature_K=T, field_energy_eV=on.field_energy_eV,
               spike_eV=on.offset_eV, accumulation_fermi_eV=on.accumulation_fermi_eV)
    volts = np.linspace(-0.8, 0.8, 16)[None, :]
    j, dj = on.law_current(volts, T)
    j_ref, dj_ref = ff.fermi_field_current_density(volts, with_derivative=True, **law)
    currents = np.array([[-200.0, 1.0, 200.0]])
    v, _ = on.voltage(currents, T)
    v_ref = ff.fermi_field_voltage(on.direction * currents, **law)
    if compiled:
        assert on.compiled_rows(T) is not None
        np.testing.assert_allclose(j, j_ref, rtol=1e-12, atol=0)
        np.testing.assert_allclose(dj, dj_ref, rtol=1e-12, atol=0)
        np.testing.assert_allclose(v, -on.direction * v_ref, rtol=0, atol=1e-12)
    else:
        assert on.compiled_rows(T) is None
        assert np.array_equal(j, j_ref) and np.array_equal(dj, dj_ref)
        assert np.array_equal(v, -on.direction * v_ref)
    j_off, _ = off.law_current(volts, T)
    assert np.max(np.abs(j / j_off - 1)) > 1e-3
