"""The sheet_charge_cm2 key of isotype interfaces (element stacks, and layers for the interface with
the layer below): a fixed interface charge in the displacement-field balance
(laws/interface_charge.py; checked against a numerical Poisson solution in
tests/test_poisson_reference.py).

Checks: 0 gives today's result bit for bit; the element carries s = sigma_c / sqrt(2 eps2 kT N2)
computed here by hand from CODATA constants (scipy.constants) and the depletion side's doping and
permittivity (Gauss's law at a charged interface, S. M. Sze, K. K. Ng, Physics of Semiconductor
Devices, 3rd ed. 2007, ch. 3); the element's voltage equals the law's; a charge that attracts the
majority carriers to the interface lowers a blocking interface's drop and one that repels them
raises it (the sign convention of the README); layer stacks take the key on the upper layer.
"""
from pathlib import Path

import numpy as np
import pytest
from scipy import constants

from siltandem import load_stack, run_stack
from siltandem.circuit.compile import compile_stack
from siltandem.laws import thermionic as th

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "stacks" / "demo_interfaces.toml"
HOLE = 'carrier = "hole"\ncarriers_flow = "down"'


def demo_with(tmp_path, sheet):
    text = DEMO.read_text()
    assert HOLE in text
    path = tmp_path / "s.toml"
    path.write_text(text.replace(HOLE, HOLE + f"\nsheet_charge_cm2 = {sheet!r}"))
    return path


def hole_interface(path):
    circuit = compile_stack(load_stack(path))
    return next(e for e in circuit.elements if e.name == "hole interface")


def drop_mV(path):
    rows = {r["name"]: r for r in run_stack(load_stack(path), curve_points=50).summary["interfaces"]}
    return rows["hole interface"]


def test_zero_sheet_charge_is_todays_result_bit_for_bit(tmp_path):
    a = run_stack(load_stack(DEMO), curve_points=50).summary
    b = run_stack(load_stack(demo_with(tmp_path, 0.0)), curve_points=50).summary
    assert a["efficiency_pct"] == b["efficiency_pct"] and a["voc_V"] == b["voc_V"]


@pytest.mark.parametrize("transport", ["thermionic", "thermionic-field"])
def test_element_carries_the_reduced_charge_and_follows_the_law(tmp_path, monkeypatch, transport):
    """Both transports carry the charge: the thermionic law (laws/thermionic.py, general form) and
    thermionic-field emission (laws/field_emission_sheet.py, the default transport)."""
    from siltandem.circuit import isotype
    from siltandem.laws.field_emission_sheet import sheet_field_voltage

    monkeypatch.setattr(isotype, "DEFAULT_TRANSPORT", transport)
    element = hole_interface(demo_with(tmp_path, -2e12))
    assert element.transport == transport
    side = element.sides["depletion"]
    t = 298.15
    # holes: sigma_c = -q sigma (a negative fixed charge attracts them), sigma = -2e12 cm^-2
    expected = (constants.e * 2e12 * 1e4
                / np.sqrt(2 * side["permittivity"] * constants.epsilon_0 * constants.k * t
                          * side["doping_m3"]))
    assert float(element.sheet_charge[0, 0]) == pytest.approx(expected, rel=1e-12)
    assert element.general_law
    current = np.array([[50.0, 100.0, 200.0]])        # A/m^2, with the stack current
    volts, _ = element.voltage(current, t)
    if transport == "thermionic-field":
        assert element.compiled_rows(t) is None            # the numpy law serves it
        law = sheet_field_voltage(element.direction * current, barrier_eV=element.barrier_eV,
                                  built_in_V=element.built_in_V, alpha=element.alpha,
                                  richardson_A_m2_K2=element.richardson_A_m2_K2, temperature_K=t,
                                  field_energy_eV=element.field_energy_eV, spike_eV=element.offset_eV,
                                  sheet_charge=expected, accumulation_fermi_eV=element.accumulation_fermi_eV)
        assert np.allclose(volts, -element.direction * law, rtol=1e-12, atol=0)
        return
    law = th.isotype_voltage(element.direction * current, barrier_eV=element.barrier_eV,
                             built_in_V=element.built_in_V, alpha=element.alpha,
                             richardson_A_m2_K2=element.richardson_A_m2_K2, temperature_K=t,
                             depletion="exact", sheet_charge=expected,
                             # a side within 3 kT of its band takes Fermi-Dirac statistics (circuit/isotype.py)
                             accumulation_fermi_eV=element.accumulation_fermi_eV,
                             depletion_fermi_eV=element.depletion_fermi_eV)
    assert np.allclose(volts, -element.direction * law, rtol=1e-12, atol=0)


@pytest.mark.parametrize("transport", ["thermionic", "thermionic-field"])
def test_attracting_charge_lowers_the_drop_repelling_raises_it(tmp_path, monkeypatch, transport):
    from siltandem.circuit import isotype

    # each transport against itself uncharged
    monkeypatch.setattr(isotype, "DEFAULT_TRANSPORT", transport)
    base = drop_mV(DEMO)
    attract = drop_mV(demo_with(tmp_path, -3e12))       # negative charge: attracts holes
    (tmp_path / "r").mkdir()
    repel = drop_mV(demo_with(tmp_path / "r", 3e12))
    assert attract["loss_W_m2"] < base["loss_W_m2"] < repel["loss_W_m2"]


def test_layer_stack_takes_the_key_on_the_upper_layer(tmp_path):
    """The key on layer 'buffer' reaches the interface with the layer below it, and runs."""
    text = (ROOT / "stacks" / "demo_dual_layers.toml").read_text()
    assert text.count('name = "buffer"') == 1
    path = tmp_path / "p.toml"
    path.write_text(text.replace('name = "buffer"', 'name = "buffer"\nsheet_charge_cm2 = -1e12'))
    interfaces = {e.name: e for e in compile_stack(load_stack(path)).elements if e.kind == "isotype"}
    assert float(interfaces["interface buffer / silicon emitter"].sheet_charge[0, 0]) != 0.0
    assert float(interfaces["interface tunnel n / buffer"].sheet_charge[0, 0]) == 0.0
    summary = run_stack(load_stack(path), curve_points=50).summary
    assert np.isfinite(summary["efficiency_pct"])
