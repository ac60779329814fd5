"""Fermi-Dirac statistics in stack files where an isotype side is (nearly) degenerate, by default
(circuit/isotype.py FERMI_DIRAC_WITHIN_KT; the law of laws/interface_charge.py, compiled in
laws/compiled_fermi.py), and the interface key statistics = "boltzmann" that keeps the Boltzmann law.

Checks and their sources:
- The threshold: a side whose Fermi level is less than 3 kT below its band edge takes the
  Fermi-Dirac law, one just below keeps the Boltzmann law: the doping at the threshold is
  N F_1/2(-3) with F_1/2 from mpmath's polylogarithm (J. S. Blakemore, Solid-State Electron. 25
  (1982) 1067).
- Non-degenerate interfaces keep today's law bit for bit: no Fermi levels on the element, the
  compiled law serves it, and the element's voltage equals that of the same element with the
  Fermi-Dirac fields explicitly None (np.array_equal).
- The placement demo's "in silicon" p-GaP/p-Si interface at the MPP current 17.462 mA/cm^2:
  issue 18's Fermi-Dirac figure, 316.4 mV (its own calculation, no published source; 0.05 mV),
  and, independently, the operating point against Poisson's equation solved numerically across
  both sides with Fermi-Dirac carriers (tests/test_poisson_reference.py: scipy's solve_bvp, F_1/2
  from mpmath; Sze & Ng 2007 ch. 2-3) and the Fermi-Dirac supply J = A T^2 ln(1 + sigma(a)(e^v - 1))
  (R. Stratton, F. A. Padovani, Solid-State Electron. 10 (1967) 813): the current at the element's
  voltage within 1e-6 relative of the target.
- The result's warning names the layer and says which statistics the law takes.
"""
import warnings
from pathlib import Path

import mpmath
import numpy as np
import pytest
from test_poisson_reference import poisson_split

from siltandem import load_stack, run_stack
from siltandem.circuit.compile import compile_stack
from siltandem.circuit.isotype import FERMI_DIRAC_WITHIN_KT
from siltandem.constants import BOLTZMANN_EV_K, thermal_voltage_V
from siltandem.laws.compiled import PARAMETER_WIDTH
from siltandem.laws.compiled_fermi import FERMI_FORM
from siltandem.laws.compiled_isotype import FORMS, fill_expansion, isotype_rows, isotype_voltages
from siltandem.materials import load_material
from siltandem.stack.placements import with_placement


@pytest.fixture(autouse=True)
def thermionic_default(monkeypatch):
    """The Fermi-Dirac law is thermionic emission's (the thermionic-field default has no such
    form): these tests take thermionic emission as the default transport."""
    from siltandem.circuit import isotype

    monkeypatch.setattr(isotype, "DEFAULT_TRANSPORT", "thermionic")


T = 298.15
KT = BOLTZMANN_EV_K * T
PLACEMENTS = Path(__file__).resolve().parents[1] / "stacks" / "demo_placements.toml"


def element_stack(tmp_path, upper, lower, n_upper, n_lower, carrier="hole", extra=""):
    path = tmp_path / "s.toml"
    path.write_text('[conditions]\nspectrum = "am1.5g"\n[[element]]\nkind = "subcell"\nname = "cell"\n'
                    'gap_eV = 1.4\n[[element]]\nkind = "isotype"\nname = "i"\n'
                    f'upper_material = "{upper}"\nlower_material = "{lower}"\nupper_doping_cm3 = {n_upper!r}\n'
                    f'lower_doping_cm3 = {n_lower!r}\ncarrier = "{carrier}"\n{extra}')
    return load_stack(path)


def threshold_doping_cm3(material, carrier):
    """N at which eta = -FERMI_DIRAC_WITHIN_KT: N = N_band F_1/2(-3) (mpmath polylog)."""
    m = load_material(material)
    band = float((m.conduction_dos_per_m3 if carrier == "electron" else m.valence_dos_per_m3)(T))
    f_half = float(mpmath.re(-mpmath.polylog(1.5, -mpmath.exp(-FERMI_DIRAC_WITHIN_KT))))
    return band * f_half * 1e-6


@pytest.mark.parametrize("factor, fermi_dirac", [(0.97, False), (1.03, True)])
def test_threshold_three_kt_below_the_band(tmp_path, factor, fermi_dirac):
    n_si = threshold_doping_cm3("Si", "hole") * factor
    element = compile_stack(element_stack(tmp_path, "GaP", "Si", 1e16, n_si)).element("i")
    side = next(s for s in element.sides.values() if s["material"] == "Si")
    assert side["fermi_dirac"] is fermi_dirac
    depth_kt = side["fermi_depth_eV"] / KT
    assert (depth_kt < FERMI_DIRAC_WITHIN_KT) is fermi_dirac and abs(depth_kt - 3.0) < 0.05
    assert element.general_law is fermi_dirac
    # the compiled law serves both: the general law's rows (laws/compiled_fermi.py) or today's
    assert bool(element.compiled_rows(T)[0, 4] == FERMI_FORM) is fermi_dirac


def test_non_degenerate_interface_keeps_todays_law_bit_for_bit(tmp_path):
    from dataclasses import replace

    element = compile_stack(element_stack(tmp_path, "GaP", "Si", 1e17, 1e17)).element("i")
    assert element.accumulation_fermi_eV is None and element.depletion_fermi_eV is None
    assert element.compiled_rows(T) is not None
    today = replace(element, accumulation_fermi_eV=None, depletion_fermi_eV=None)
    j = np.linspace(-300.0, 300.0, 41)[None, :]
    for a, b in zip(element.voltage(j, T), today.voltage(j, T)):
        assert np.array_equal(a, b)


def in_silicon_interface():
    stack = load_stack(PLACEMENTS)
    chosen = next(p for p in stack.extra["placements"] if p.name == "in silicon")
    return compile_stack(with_placement(stack, chosen)).element("interface buffer / junction p")


def test_demo_in_silicon_drop_is_the_fermi_dirac_one():
    e = in_silicon_interface()
    assert e.accumulation_fermi_eV is not None and e.depletion_fermi_eV is not None
    drop, _ = e.voltage(174.6237, T)        # the MPP current 17.462 mA/cm^2 (measured with `run`)
    assert abs(1000 * float(drop[0, 0])) == pytest.approx(316.4, abs=0.05)


def test_demo_in_silicon_operating_point_against_numerical_poisson():
    e = in_silicon_interface()
    target = 174.6237
    drop, _ = e.voltage(target, T)
    s = float(e.direction[0, 0])
    v_law = -s * float(drop[0, 0])                              # the law's voltage (V > 0 forward)
    vt = thermal_voltage_V(T)
    vb = (float(e.built_in_V[0, 0]) - v_law) / vt
    acc, dep = e.sides["accumulation"], e.sides["depletion"]
    eta1, eta2 = -acc["fermi_depth_eV"] / KT, -dep["fermi_depth_eV"] / KT
    r = acc["permittivity"] / dep["permittivity"]
    v1, _, _ = poisson_split(vb, float(e.alpha[0, 0]), eta1=eta1, eta2=eta2, r=r)
    a = v1 - float(e.barrier_eV[0, 0]) / vt
    v = v_law / vt
    supply = float(mpmath.log1p(1 / (1 + mpmath.exp(-a)) * mpmath.expm1(v)))
    current = float(e.richardson_A_m2_K2[0, 0]) * T ** 2 * supply
    # measured -1.2e-10 relative (the reference's F_1/2 spline)
    assert current == pytest.approx(s * target, rel=1e-6)


def test_warning_names_the_layer_and_the_statistics():
    stack = load_stack(PLACEMENTS)
    chosen = next(p for p in stack.extra["placements"] if p.name == "in silicon")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = run_stack(with_placement(stack, chosen), curve_points=30)
    said = [w for w in result.summary["warnings"] if "'interface buffer / junction p'" in w]
    silicon = [w for w in said if "layer 'junction p'" in w]
    assert len(silicon) == 1 and "degenerate (Fermi level 59 meV inside the band)" in silicon[0]
    assert "the law takes Fermi-Dirac statistics" in silicon[0]


def test_boltzmann_key_keeps_the_boltzmann_law(tmp_path):
    """statistics = "boltzmann": the degenerate side is still flagged, its Fermi level still
    Fermi-Dirac, but the element has no Fermi levels (the compiled Boltzmann law) and the warning
    says the bending and emission stay Boltzmann, naming the key."""
    from siltandem.result.summary import _degenerate_side_warnings

    stack = element_stack(tmp_path, "GaP", "Si", 1e16, 1e20, extra='statistics = "boltzmann"\n')
    element = compile_stack(stack).element("i")
    assert element.accumulation_fermi_eV is None and element.depletion_fermi_eV is None
    assert element.compiled_rows(T)[0, 4] == FORMS["exact"]
    said = _degenerate_side_warnings(element)
    assert len(said) == 1 and "stay Boltzmann approximations" in said[0] and "(Si," in said[0]
    assert 'statistics = "boltzmann"' in said[0]


def test_boltzmann_key_is_the_boltzmann_law_bit_for_bit(tmp_path):
    """The law of "boltzmann" is the law stack files took before the Fermi-Dirac form (the exact
    Boltzmann depletion side on the Fermi-Dirac Fermi levels, laws/thermionic.py, compiled in
    laws/compiled_isotype.py): its parameter rows and voltages equal the compiled Boltzmann law's
    on the same interface numbers, bit for bit; the default differs (the Fermi-Dirac law)."""
    fd = compile_stack(element_stack(tmp_path, "GaP", "Si", 1e16, 1e20)).element("i")
    boltzmann = compile_stack(element_stack(tmp_path, "GaP", "Si", 1e16, 1e20,
                                            extra='statistics = "boltzmann"\n')).element("i")
    for name in ("barrier_eV", "built_in_V", "alpha", "richardson_A_m2_K2", "direction"):
        assert np.array_equal(getattr(fd, name), getattr(boltzmann, name))
    rows = fill_expansion(isotype_rows(
        built_in_V=fd.built_in_V, alpha=fd.alpha, barrier_eV=fd.barrier_eV,
        richardson_A_m2_K2=fd.richardson_A_m2_K2, temperature_K=T, form="exact",
        transport="thermionic", field_energy_eV=np.nan, spike_eV=fd.offset_eV,
        direction=fd.direction, width=PARAMETER_WIDTH))
    assert np.array_equal(boltzmann.compiled_rows(T), rows)
    j = np.linspace(-300.0, 300.0, 41)[None, :]
    v_law, slope = isotype_voltages(rows, (fd.direction * j).copy())
    v, dv = boltzmann.voltage(j, T)
    assert np.array_equal(v, -fd.direction * v_law) and np.array_equal(dv, -1.0 / slope)
    assert not np.allclose(fd.voltage(j, T)[0], v, rtol=1e-3, atol=0.0)


def test_layer_key_reaches_the_interface():
    """The layer key on the upper layer of a layer stack's interface: the placement demo's "in
    silicon" drop at the MPP current 17.462 mA/cm^2 is the Boltzmann law's 323.3 mV with
    statistics = "boltzmann" on the buffer (README, the figure before the Fermi-Dirac form; 0.05 mV)
    and the Fermi-Dirac 316.4 mV without it."""
    from dataclasses import replace

    stack = load_stack(PLACEMENTS)
    layers = tuple(replace(layer, statistics="boltzmann") if layer.name == "buffer" else layer
                   for layer in stack.layers)
    chosen = next(p for p in stack.extra["placements"] if p.name == "in silicon")
    e = compile_stack(with_placement(replace(stack, layers=layers), chosen)).element("interface buffer / junction p")
    assert e.accumulation_fermi_eV is None and e.depletion_fermi_eV is None
    drop, _ = e.voltage(174.6237, T)
    assert abs(1000 * float(drop[0, 0])) == pytest.approx(323.3, abs=0.05)
