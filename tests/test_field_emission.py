"""Thermionic-field emission across an isotype spike (laws/field_emission.py).

Checks against sources outside the law:

* an independent slow reference (kept here): the depletion-side band profile built in physical
  units from the textbook fields (Boltzmann accumulation layer, S. M. Sze, K. K. Ng, Physics of
  Semiconductor Devices, 3rd ed. 2007; parabolic depletion layer), the WKB exponent integrated
  numerically through it (scipy.integrate.quad of sqrt(2 m (Ec(x) - E))), and the current as the
  energy integral (quad) of transmission times the exact Fermi-Dirac supply function
  ln(1 + exp((E_F - E)/kT)) of each side (C. R. Crowell, V. L. Rideout, Solid-State Electron. 12
  (1969) 89; K. Yang, J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321);
* the gain's fixed quadrature against scipy.integrate.quad of the same integrand;
* E00 against the handbook form 1.85e-11 sqrt(N / (m* eps_r)) eV, N in cm^-3 (E. H. Rhoderick,
  R. H. Williams, Metal-Semiconductor Contacts, 2nd ed. 1988, ch. 3; from memory);
* the field-emission exponent of F. A. Padovani, R. Stratton, Solid-State Electron. 9 (1966) 695:
  ln G grows as qV_b (1/kT - 1/E0), E0 = E00 coth(E00/kT);
* the low-doping limit: G - 1 -> Gamma(5/3) (1.5 e00 sqrt(w))^(2/3), the WKB integral through the
  triangular top of the barrier (Airy-free, textbook integral), -> 0 as E00/kT -> 0;
* the p-GaP/p-Si numbers of issue 18 (a self-consistent WKB calculation quoted there, no published
  source): about 1 mV at 1e19/1e19 and 20 mA/cm^2, against 344 mV for thermionic emission alone.
"""
import math
import warnings
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate

from siltandem.circuit import interface_element
from siltandem.circuit.elements import IsotypeInterface, batch
from siltandem.constants import (BOLTZMANN_EV_K, ELECTRON_MASS_KG, ELEMENTARY_CHARGE_C, PLANCK_J_S,
                                 VACUUM_PERMITTIVITY_F_M)
from siltandem.laws import field_emission as fe
from siltandem.laws import thermionic as te
from siltandem.materials import load_material
from siltandem.materials.tunnelling import tunnelling_mass_ratio

ROOT = Path(__file__).resolve().parents[1]
HBAR = PLANCK_J_S / (2 * math.pi)
Q = ELEMENTARY_CHARGE_C
EPS0 = VACUUM_PERMITTIVITY_F_M


def interface(carrier, upper, lower, n_upper_cm3, n_lower_cm3, T=300.0):
    """The law's parameters for two library materials (thermionic.py's alignment), E00 of the
    depletion side with its library tunnelling mass, and the sides' numbers for the reference."""
    a, b = load_material(upper), load_material(lower)
    electron = carrier == "electron"
    dos = [(m.conduction_dos_per_m3 if electron else m.valence_dos_per_m3)(T) for m in (a, b)]
    n_a, n_b = n_upper_cm3 * 1e6, n_lower_cm3 * 1e6
    al = te.isotype_band_alignment(
        carrier=carrier, affinity_a_eV=a.electron_affinity_eV, gap_a_eV=a.gap_eV(T), band_dos_a_m3=dos[0],
        doping_a_m3=n_a, relative_permittivity_a=a.relative_permittivity,
        affinity_b_eV=b.electron_affinity_eV, gap_b_eV=b.gap_eV(T), band_dos_b_m3=dos[1],
        doping_b_m3=n_b, relative_permittivity_b=b.relative_permittivity, temperature_K=T)
    acc, dep = (a, b) if bool(al.a_accumulates) else (b, a)
    n1, n2 = (n_a, n_b) if bool(al.a_accumulates) else (n_b, n_a)
    mass = tunnelling_mass_ratio(dep, carrier)
    e00 = float(fe.field_energy_eV(doping_m3=n2, relative_permittivity=dep.relative_permittivity,
                                   mass_ratio=mass))
    rich = min(getattr(m, "electron_richardson_A_m2_K2" if electron else "hole_richardson_A_m2_K2")
               for m in (a, b))
    law = dict(barrier_eV=float(al.barrier_eV), built_in_V=float(al.built_in_V), alpha=float(al.alpha),
               richardson_A_m2_K2=rich, temperature_K=T, include_tail=True)
    sides = dict(n1=n1, n2=n2, er1=acc.relative_permittivity, er2=dep.relative_permittivity, mass=mass,
                 offset=float(al.offset_eV))
    return law, e00, sides


def reference_current(V, law, sides, statistics="fermi-dirac"):
    """Slow reference J(V) [A/m^2]: physical units, numerical WKB and supply integrals (quad);
    also the lowest energy that counts over the higher Fermi level [kT] (what bounds the
    difference between the exact and the Boltzmann supply)."""
    T = law["temperature_K"]
    kt = BOLTZMANN_EV_K * T
    split = te.voltage_split(law["built_in_V"] - V, alpha=law["alpha"], temperature_K=T, include_tail=True)
    v1 = float(split.accumulation_V)
    # field at the interface on side 1 (Boltzmann accumulation layer), then D continuity
    eps1, eps2 = sides["er1"] * EPS0, sides["er2"] * EPS0
    u1 = v1 / kt
    f1 = math.sqrt(2 * Q * sides["n1"] * kt / eps1 * (math.expm1(u1) - u1))
    f0 = eps1 * f1 / eps2
    curvature = Q * sides["n2"] / (2 * eps2)                   # Ec(x) = top - f0 x + curvature x^2 [eV]
    x_vertex = f0 / (2 * curvature)
    top = law["barrier_eV"] - v1                               # spike top over E_F1 [eV]
    lowest = max(top - f0 * x_vertex / 2, top - sides["offset"])
    m = sides["mass"] * ELECTRON_MASS_KG

    def exponent(E):                                           # 2/hbar int sqrt(2 m (Ec - E)) dx
        depth = top - E
        x_turn = (f0 - math.sqrt(max(f0 * f0 - 4 * curvature * depth, 0.0))) / (2 * curvature)
        val, _ = integrate.quad(lambda x: math.sqrt(max(2 * m * Q * (depth - f0 * x + curvature * x * x), 0.0)),
                                0.0, x_turn, epsabs=0, epsrel=1e-11, limit=200)
        return 2 * val / HBAR

    def supply(E):                                             # exact Fermi-Dirac supply, both sides
        if statistics == "boltzmann":
            return math.exp((V - E) / kt) - math.exp(-E / kt)
        return np.logaddexp(0.0, (V - E) / kt) - np.logaddexp(0.0, -E / kt)

    scale = law["richardson_A_m2_K2"] * T / (BOLTZMANN_EV_K)   # A T / k per eV of energy
    below, _ = integrate.quad(lambda E: math.exp(-exponent(E)) * supply(E) * math.exp(top / kt),
                              lowest, top, epsabs=0, epsrel=1e-9, limit=400)
    above, _ = integrate.quad(lambda E: supply(E) * math.exp(top / kt), top, top + 60 * kt,
                              epsabs=0, epsrel=1e-11, limit=200)
    return scale * (below + above) * math.exp(-top / kt), (lowest - max(V, 0.0)) / kt


@pytest.mark.parametrize("carrier, n_upper, n_lower, volts", [
    ("hole", 1e17, 1e17, (-0.3, -0.05, 0.1, 0.4)),
    ("hole", 1e18, 1e17, (-0.2, 0.05, 0.3)),
    ("hole", 5e17, 5e17, (-0.1, 0.2)),
    ("electron", 1e18, 1e17, (-0.2, 0.05, 0.2)),
    ("electron", 1e17, 1e18, (-0.2, 0.1)),
])
def test_fast_law_matches_numerical_wkb_reference(carrier, n_upper, n_lower, volts):
    """GaP/Si. With the Boltzmann supply the reference computes the law's own integral another way
    (numerical WKB in metres and volts, adaptive quadrature): 2e-5, from the two quadratures'
    ~1e-6 and quad's tolerance. With the exact Fermi-Dirac supply the law's Boltzmann form is off
    by at most exp(-d) relative, d the distance of the lowest energy that counts from the higher
    Fermi level in kT (ln(1 + e^-x) = e^-x (1 + O(e^-x))): that bound plus 2e-5."""
    law, e00, sides = interface(carrier, "GaP", "Si", n_upper, n_lower)
    for V in volts:
        fast = float(fe.field_emission_current_density(V, field_energy_eV=e00, spike_eV=sides["offset"], **law))
        boltzmann, _ = reference_current(V, law, sides, statistics="boltzmann")
        exact, distance = reference_current(V, law, sides)
        thermionic = float(te.isotype_current_density(V, **law))
        assert fast == pytest.approx(boltzmann, rel=2e-5), (V, fast, boltzmann)
        assert fast == pytest.approx(exact, rel=2e-5 + math.exp(-distance)), (V, fast, exact, distance)
        assert abs(fast) > abs(thermionic)           # the tunnelling adds current in both directions


def gain_by_quad(w, e00, spike=np.inf):
    """log G by scipy.integrate.quad of exp(e - theta(e)) with theta from its own closed form."""
    top = min(w, spike)

    def f(e):
        s = min(math.sqrt(e / w), 1.0)
        g = s - (1 - s * s) * math.atanh(s) if s < 1 else 1.0
        return e - (w / e00) * g
    peak = min(w * math.tanh(e00) ** 2, top)
    fp = f(peak)
    parts = [integrate.quad(lambda e: math.exp(f(e) - fp), lo, hi, epsabs=0, epsrel=1e-12, limit=500)[0]
             for lo, hi in ((0.0, peak), (peak, top))]
    return np.logaddexp(0.0, fp + math.log(sum(parts)))


@pytest.mark.parametrize("w", [0.01, 0.3, 3.0, 30.0, 200.0])
@pytest.mark.parametrize("e00", [0.003, 0.1, 0.5, 1.0, 3.0])
def test_gain_quadrature_matches_adaptive_quadrature(w, e00):
    """Fixed 6 x 16-point Gauss-Legendre panels against adaptive quad. Tolerance 5e-6 on G: the
    slope of the exponent has a log singularity at the parabola's vertex (atanh(s), s -> 1), which
    a fixed rule resolves to ~1e-6 where the peak sits at the vertex (E00 >> kT)."""
    for spike in (np.inf, 0.5 * w):
        fast = float(fe.tunnelling_gain(w, field_energy=e00, spike_depth=spike)[0])
        assert fast == pytest.approx(gain_by_quad(w, e00, spike), abs=5e-6)


def test_field_energy_matches_handbook_form():
    for n_cm3, m, er in ((1e17, 0.26, 11.7), (1e19, 0.2, 11.1), (3e18, 0.067, 12.9)):
        handbook = 1.85e-11 * math.sqrt(n_cm3 / (m * er))
        assert float(fe.field_energy_eV(doping_m3=n_cm3 * 1e6, relative_permittivity=er,
                                        mass_ratio=m)) == pytest.approx(handbook, rel=5e-3)   # 3 digits


@pytest.mark.parametrize("e00", [0.5, 1.0, 2.0])
def test_field_emission_exponent_follows_padovani_stratton(e00):
    """ln G grows with the depletion-side bending w (in kT) at the rate 1 - kT/E0,
    E0 = E00 coth(E00/kT): the Padovani-Stratton TFE exponent exp(qV_b/kT - qV_b/E0)."""
    w = np.array([150.0, 300.0])
    log_g = fe.tunnelling_gain(w, field_energy=e00)
    rate = (log_g[1] - log_g[0]) / (w[1] - w[0])
    expected = 1.0 - math.tanh(e00) / e00
    # the Gaussian prefactor adds (1/2) ln w: (1/2) ln 2 / 150 = 2.3e-3 to the rate
    assert rate == pytest.approx(expected + 0.5 * math.log(2) / 150.0, abs=5e-4)


def test_low_doping_limit_is_the_triangular_top_and_vanishes():
    """E00/kT -> 0: G - 1 -> Gamma(5/3) (1.5 e00 sqrt(w))^(2/3) (WKB through the top of the
    barrier, where it is a triangle of the interface field), and G -> 1."""
    w = 30.0
    previous = np.inf
    for e00 in (1e-3, 1e-4, 1e-5, 1e-6):
        excess = math.expm1(float(fe.tunnelling_gain(w, field_energy=e00)[0]))
        triangle = math.gamma(5 / 3) * (1.5 * e00 * math.sqrt(w)) ** (2 / 3)
        assert excess == pytest.approx(triangle, rel=0.05)
        assert excess < previous
        previous = excess
    assert previous < 1e-3


def test_thermionic_transport_is_todays_law_exactly():
    law, e00, sides = interface("hole", "GaP", "Si", 1e19, 1e19)
    common = dict(barrier_eV=batch(law["barrier_eV"]), built_in_V=batch(law["built_in_V"]),
                  alpha=batch(law["alpha"]), richardson_A_m2_K2=batch(law["richardson_A_m2_K2"]),
                  offset_eV=batch(sides["offset"]), field_energy_eV=batch(e00))
    volts = np.linspace(-1.0, 0.9, 41)[None, :]
    currents = np.array([[-200.0, 1.0, 200.0]])
    # the thermionic law as the element's default depletion side (the exact Boltzmann form) has it:
    # exactly through the numpy law, to rounding through the compiled law (laws/compiled_isotype.py)
    exact = {k: v for k, v in law.items() if k != "include_tail"} | {"depletion": "exact"}
    j_ref, slope_ref = te.isotype_current_density(volts, with_derivative=True, **exact)
    v_ref, dv_ref = te.isotype_voltage(currents, with_derivative=True, **exact)
    for compiled in (False, True):
        interface_element.COMPILED_ISOTYPE = compiled
        try:
            element = IsotypeInterface("x", transport="thermionic", **common)
            j, slope = element.law_current(volts, 300.0)
            v, dv = element.voltage(currents, 300.0)
        finally:
            interface_element.COMPILED_ISOTYPE = True
        if compiled:
            np.testing.assert_allclose(j, j_ref, rtol=1e-13)
            np.testing.assert_allclose(slope, slope_ref, rtol=1e-12)
            np.testing.assert_allclose(v, -v_ref, rtol=1e-12)
            np.testing.assert_allclose(dv, -dv_ref, rtol=1e-11)
        else:
            assert np.array_equal(j, j_ref) and np.array_equal(slope, slope_ref)
            assert np.array_equal(v, -v_ref) and np.array_equal(dv, -dv_ref)
    # and the tunnelling law with a vanishing E00 tends to it
    # (on the depletion-side form the tunnelling law uses: the kT/q tail)
    tiny = fe.field_emission_current_density(volts, field_energy_eV=1e-12, spike_eV=sides["offset"], **law)
    np.testing.assert_allclose(tiny, te.isotype_current_density(volts, **law), rtol=1e-6)


@pytest.mark.parametrize("n_cm3", [1e16, 1e17, 1e18, 3e18, 1e19])
@pytest.mark.parametrize("carrier", ["hole", "electron"])
def test_current_is_monotone_and_the_inverse_returns_it(n_cm3, carrier):
    law, e00, sides = interface(carrier, "GaP", "Si", n_cm3, n_cm3)
    kw = dict(field_energy_eV=e00, spike_eV=sides["offset"], **law)
    volts = np.linspace(-2.0, law["built_in_V"] - 1.01 * BOLTZMANN_EV_K * 300.0, 4001)
    j, djdv = fe.field_emission_current_density(volts, with_derivative=True, **kw)
    assert np.all(np.diff(j) > 0) and np.all(djdv > 0)
    # the analytic slope against central differences
    h = 1e-6
    numeric = (fe.field_emission_current_density(volts[::200] + h, **kw)
               - fe.field_emission_current_density(volts[::200] - h, **kw)) / (2 * h)
    # 3e-3: dlnG/dw integrates atanh(s), log-singular at the parabola's vertex, with the same fixed
    # rule (good to ~1e-3 near flat band, where the vertex carries the integral); 1e-6 elsewhere
    np.testing.assert_allclose(djdv[::200], numeric, rtol=3e-3)
    back, dvdj = fe.field_emission_voltage(j[::50], with_derivative=True, **kw)
    np.testing.assert_allclose(back, volts[::50], rtol=0, atol=1e-9)   # 2e-10 V at 0.01 kT from the edge
    np.testing.assert_allclose(dvdj, 1.0 / djdv[::50], rtol=1e-5)   # slope at the root; 2e-6 at the edge


@pytest.mark.parametrize("include_tail", [True, False])
def test_without_a_spike_the_inverse_is_the_thermionic_one_down_to_tiny_currents(include_tail):
    """No spike (step <= 0): G = 1, so the compiled inverse must give the thermionic inverse, also
    for currents far below what the zero-bias end of its bracket resolves (found by the
    placement demo's removal solves)."""
    law = dict(barrier_eV=0.066, built_in_V=0.05, alpha=0.889, richardson_A_m2_K2=1e6, temperature_K=298.15,
               include_tail=include_tail)
    currents = np.concatenate([-np.geomspace(1e8, 1e-12, 60), [0.0], np.geomspace(1e-12, 1e8, 60)])
    v_ref, dv_ref = te.isotype_voltage(currents, with_derivative=True, **law)
    v, dv = fe.field_emission_voltage(currents, field_energy_eV=0.01, spike_eV=-0.126, with_derivative=True, **law)
    assert np.all(np.isfinite(v))
    np.testing.assert_allclose(v, v_ref, rtol=1e-12, atol=1e-18)
    np.testing.assert_allclose(dv, dv_ref, rtol=1e-12)


def test_slope_range_encloses_the_slope():
    """The certificate's enclosure, on the condition 0 <= dlnG/dw <= 1 it states (checked here
    on a grid of w and e00), holds every sampled dJ/dV of each cell."""
    w = np.geomspace(1e-3, 300.0, 80)[:, None]
    e00 = np.geomspace(1e-3, 5.0, 40)[None, :]
    _, dlog = fe.tunnelling_gain(w, field_energy=e00, with_derivative=True)
    assert np.all(dlog >= 0) and np.all(dlog <= 1)
    for n_cm3 in (1e17, 1e18, 1e19):
        law, e00_, sides = interface("hole", "GaP", "Si", n_cm3, n_cm3)
        kw = dict(field_energy_eV=e00_, spike_eV=sides["offset"], **law)
        edges = np.linspace(-1.5, law["built_in_V"] - 0.05, 25)
        low, high = fe.field_emission_slope_range(edges[:-1], edges[1:], **kw)
        inside = edges[:-1, None] + (edges[1:] - edges[:-1])[:, None] * np.linspace(0, 1, 21)[None, :]
        _, slope = fe.field_emission_current_density(inside, with_derivative=True, **kw)
        assert np.all(slope >= low[:, None]) and np.all(slope <= high[:, None])


def drop_mV(n_cm3, transport, T=300.0, current_A_m2=200.0):
    """Drop of a p-GaP/p-Si interface (holes from GaP into Si, the blocking way) at 20 mA/cm^2."""
    law, e00, sides = interface("hole", "GaP", "Si", n_cm3, n_cm3, T=T)
    if transport == "thermionic":
        return 1e3 * float(te.isotype_voltage(current_A_m2, **law))
    return 1e3 * float(fe.field_emission_voltage(current_A_m2, field_energy_eV=e00, spike_eV=sides["offset"],
                                                 **law))


def test_heavily_doped_gap_si_is_transparent_and_lightly_doped_still_blocks():
    """Issue 18 (self-consistent WKB, no published source): 1e19/1e19 p-GaP/p-Si drops about
    1 mV at 20 mA/cm^2 with tunnelling, 344 mV without."""
    assert drop_mV(1e19, "thermionic") > 300.0
    assert 0.0 < drop_mV(1e19, "thermionic-field") < 5.0
    assert drop_mV(1e17, "thermionic-field") > 300.0
    assert drop_mV(1e16, "thermionic-field") > 0.95 * drop_mV(1e16, "thermionic")


def test_drop_is_continuous_in_doping_and_temperature():
    """No jump: in fine sweeps (120 intervals of doping, 60 of temperature) no single interval holds
    a tenth of the whole change (a switch of form would put a jump in one interval)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        dopings = np.geomspace(1e17, 1e19, 121)
        drops = np.array([drop_mV(n, "thermionic-field") for n in dopings])
        temps = np.linspace(250.0, 400.0, 61)
        by_t = np.array([drop_mV(3e18, "thermionic-field", T=t) for t in temps])
    for series in (drops, by_t):
        steps = np.abs(np.diff(series))
        assert np.all(np.isfinite(series))
        assert steps.max() < 0.1 * (series.max() - series.min())


# --- the transport key in stack files ------------------------------------------------------------

HEAD = '[conditions]\nspectrum = "am1.5g"\ntemperature_K = 300\n'
CELL = '[[element]]\nkind = "subcell"\nname = "cell"\ngap_eV = 1.4\n'
MATERIALS = ('[[element]]\nkind = "isotype"\nname = "i"\nupper_material = "GaP"\nlower_material = "Si"\n'
             'upper_doping_cm3 = 1e19\nlower_doping_cm3 = 1e19\ncarrier = "hole"\ncarriers_flow = "down"\n')
NUMBERS = ('[[element]]\nkind = "isotype"\nname = "i"\nbarrier_eV = 0.92\nbuilt_in_V = 0.95\n'
           'accumulation_doping_cm3 = 1e19\ndepletion_doping_cm3 = 1e19\naccumulation_permittivity = 11.7\n'
           'depletion_permittivity = 11.1\n')


def summary(tmp_path, text):
    from siltandem import load_stack, run_stack

    path = tmp_path / "s.toml"
    path.write_text(HEAD + CELL + text)
    return run_stack(load_stack(path), curve_points=50).summary


def test_materials_form_with_thermionic_field_is_transparent_where_thermionic_blocks(tmp_path):
    """p-GaP/p-Si 1e19/1e19 driven the blocking way (holes from GaP into Si): thermionic-field
    emission (the default without a transport key, circuit/isotype.py DEFAULT_TRANSPORT) drops a
    few mV at the MPP, thermionic emission (transport = "thermionic") the hundreds of mV of the
    thermionic law."""
    default = summary(tmp_path, MATERIALS)["interfaces"][0]
    plain = summary(tmp_path, MATERIALS + 'transport = "thermionic"\n')["interfaces"][0]
    assert default["transport"] == "thermionic-field" and plain["transport"] == "thermionic"
    assert plain["bias"] == "forward" and plain["drop_at_mpp_V"] > 0.25
    assert 0 < default["drop_at_mpp_V"] < 0.005


def test_materials_form_thermionic_is_the_thermionic_law_bit_for_bit():
    """transport = "thermionic" on the materials form builds the thermionic law on the exact
    Boltzmann depletion side (laws/thermionic.py, itself checked against mpmath): the element's
    current and inverse equal that law's on the element's numbers exactly (numpy path); a sheet
    charge without a transport key takes thermionic-field emission (laws/field_emission_sheet.py).
    At 1e19 both sides are within 3 kT of their bands, where stack files take the Fermi-Dirac law
    (tests/test_fermi_dirac_stacks.py): statistics = "boltzmann" here, so the Boltzmann law is compared."""
    from siltandem.circuit.isotype import isotype_from_materials
    from siltandem.stack.load import ElementSpec

    values = dict(upper_material="GaP", lower_material="Si", upper_doping_cm3=1e19,
                  lower_doping_cm3=1e19, carrier="hole", carriers_flow="down", statistics="boltzmann")
    plain = isotype_from_materials(ElementSpec(0, "isotype", "i", 1, values | {"transport": "thermionic"}),
                                   300.0, None)
    charged = isotype_from_materials(ElementSpec(0, "isotype", "i", 1, values | {"sheet_charge_cm2": 1e11}),
                                     300.0, None)
    assert plain.transport == "thermionic" and plain.depletion == "exact"
    assert charged.transport == "thermionic-field" and charged.field_sheet
    law = dict(barrier_eV=plain.barrier_eV, built_in_V=plain.built_in_V, alpha=plain.alpha,
               richardson_A_m2_K2=plain.richardson_A_m2_K2, temperature_K=300.0, depletion="exact")
    volts = np.linspace(-1.0, 0.9, 41)[None, :]
    currents = np.array([[-200.0, 1.0, 200.0]])
    interface_element.COMPILED_ISOTYPE = False
    try:
        j, slope = plain.law_current(volts, 300.0)
        v, dv = plain.voltage(currents, 300.0)
    finally:
        interface_element.COMPILED_ISOTYPE = True
    j_ref, slope_ref = te.isotype_current_density(volts, with_derivative=True, **law)
    v_ref, dv_ref = te.isotype_voltage(plain.direction * currents, with_derivative=True, **law)
    assert np.array_equal(j, j_ref) and np.array_equal(slope, slope_ref)
    assert np.array_equal(v, -plain.direction * v_ref) and np.array_equal(dv, -dv_ref)


def test_numbers_form_keeps_thermionic_unless_asked(tmp_path):
    assert summary(tmp_path, NUMBERS)["interfaces"][0]["transport"] == "thermionic"
    asked = summary(tmp_path, NUMBERS + 'transport = "thermionic-field"\ntunnelling_mass = 0.2\n')
    plain = summary(tmp_path, NUMBERS)
    assert asked["interfaces"][0]["transport"] == "thermionic-field"
    assert asked["interfaces"][0]["drop_at_mpp_V"] < 0.1 * plain["interfaces"][0]["drop_at_mpp_V"]


@pytest.mark.parametrize("extra, problem, key", [
    ('transport = "tunnel"\n', "transport = 'tunnel' is not allowed", None),
    ('transport = "thermionic-field"\n', "needs the depletion side: no tunnelling_mass", "transport"),
    ('tunnelling_mass = 0.2\n', "tunnelling_mass goes with", "tunnelling_mass"),
])
def test_numbers_form_transport_errors_name_the_key(tmp_path, extra, problem, key):
    from siltandem import StackError, load_stack

    path = tmp_path / "s.toml"
    path.write_text(HEAD + CELL + NUMBERS + extra)
    with pytest.raises(StackError) as caught:
        load_stack(path)
    assert problem in caught.value.problem and caught.value.fix
    if key:
        assert f"key {key}" in caught.value.where


def test_layer_transport_key_is_checked(tmp_path):
    from siltandem import StackError, load_stack

    text = (ROOT / "stacks" / "demo_placements.toml").read_text().replace(
        'doping = "p:1e18"\n', 'doping = "p:1e18"\ntransport = "fast"\n', 1)
    path = tmp_path / "s.toml"
    path.write_text(text)
    with pytest.raises(StackError) as caught:
        load_stack(path)
    assert "transport = 'fast'" in caught.value.problem and "key transport" in caught.value.where


def test_gain_slope_range_holds_every_sampled_slope_and_shrinks_with_the_cell():
    """gain_slope_range (the mean-value bound on dlnG/dw) against dense sampling of the law's own
    dlnG/dw over random cells (w, e00, spike depth over the regimes of Padovani-Stratton 1966),
    and its width -> 0 as the cell shrinks (no outside value: the enclosure property itself)."""
    rng = np.random.default_rng(18)
    for _ in range(200):
        e00 = 10 ** rng.uniform(-2, 0.8)
        spike = 10 ** rng.uniform(-1, 2.5) if rng.random() < 0.7 else np.inf
        w_lo = 10 ** rng.uniform(-2, 2.5)
        w_hi = w_lo * (1 + 10 ** rng.uniform(-6, 0))
        ws = np.linspace(w_lo, w_hi, 301)
        log_g, dlog = fe.tunnelling_gain(ws, field_energy=e00, spike_depth=spike, with_derivative=True)
        low, high = fe.gain_slope_range(w_lo, w_hi, e00, spike, log_g[-1], dlog[0], dlog[-1])
        assert low <= dlog.min() and dlog.max() <= high, (e00, spike, w_lo, w_hi)
    # shrinking cells about a point inside each regime: below the spike, above it, no spike
    for e00, spike, w in ((0.5, 40.0, 10.0), (0.5, 4.0, 10.0), (2.0, np.inf, 30.0), (0.05, 8.0, 3.0)):
        widths = []
        for dw in (1e-1, 1e-3, 1e-5):
            ends = np.array([w, w + dw])
            log_g, dlog = fe.tunnelling_gain(ends, field_energy=e00, spike_depth=spike, with_derivative=True)
            low, high = fe.gain_slope_range(ends[0], ends[1], e00, spike, log_g[1], dlog[0], dlog[1])
            widths.append(high - low)
        assert widths[0] > widths[1] > widths[2] and widths[2] < 1e-3, widths


@pytest.mark.parametrize("include_tail", [False, True])
def test_slope_range_of_random_laws_holds_sampled_slopes_and_shrinks(include_tail):
    """field_emission_slope_range over random laws and cells against 41 sampled dJ/dV per cell
    (the law's own analytic slope); the relative width of the range falls toward 0 as a cell
    about a fixed voltage shrinks (1e-2 V -> 1e-6 V), which the certificate's refinement needs."""
    rng = np.random.default_rng(7 + include_tail)
    n = 300
    vbi = rng.uniform(0.1, 0.6, n)
    law = dict(barrier_eV=rng.uniform(0.1, 0.5, n), built_in_V=vbi, alpha=10 ** rng.uniform(-3, 3, n),
               richardson_A_m2_K2=1.2e6, temperature_K=rng.uniform(250, 400, n),
               field_energy_eV=10 ** rng.uniform(-3, -1, n),
               spike_eV=np.where(rng.random(n) < 0.7, rng.uniform(0.02, 0.6, n), np.inf))
    edge = vbi - (0.03 if include_tail else 0.003)
    low = rng.uniform(-1.0, 1.0, n) * vbi
    low = np.minimum(low, edge - 1e-3)
    high = np.minimum(low + 10 ** rng.uniform(-5, -1, n), edge)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", te.IsotypeDomainWarning)
        lo, hi = fe.field_emission_slope_range(low, high, include_tail=include_tail, **law)
        inside = low[:, None] + (high - low)[:, None] * np.linspace(0, 1, 41)[None, :]
        _, slope = fe.field_emission_current_density(
            inside, include_tail=include_tail, with_derivative=True,
            **{k: (np.asarray(v)[:, None] if np.ndim(v) else v) for k, v in law.items()})
    ok = np.isfinite(lo) & np.isfinite(hi)
    assert ok.mean() > 0.95
    assert np.all(slope[ok] >= lo[ok, None]) and np.all(slope[ok] <= hi[ok, None])
    centre = 0.5 * (low + high)
    relative = []
    for dv in (1e-2, 1e-4, 1e-6):
        a, b = np.minimum(centre, edge - dv), np.minimum(centre, edge - dv) + dv
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", te.IsotypeDomainWarning)
            lo, hi = fe.field_emission_slope_range(a, b, include_tail=include_tail, **law)
        relative.append(np.nanmedian((hi - lo) / np.abs(hi)))
    # about linear in the cell (1e-2 V -> 1e-6 V: 0.64, 0.013, 1.3e-4 measured)
    assert relative[1] < relative[0] / 10 and relative[2] < relative[1] / 10 and relative[2] < 1e-3, relative
