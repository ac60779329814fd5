"""Isotype interfaces in stack files: both ways of writing them, the report, the interface command.

Sources: A. Chandra, L. F. Eastman, Solid-State Electron. 23 (1980) 599 and B. Van Zeghbroeck,
Principles of Semiconductor Devices (the alpha = 1 law); R. L. Anderson, Solid-State Electron. 5
(1962) 341 (electron-affinity rule) with the values of ../shared/REFERENCES.md.
"""
import json
import math
from pathlib import Path

import numpy as np
import pytest

from siltandem.constants import BOLTZMANN_EV_K
from siltandem import StackError, run_stack, load_stack
from test_main_job import cli

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "stacks" / "demo_interfaces.toml"
HEAD = '[conditions]\nspectrum = "am1.5g"\ntemperature_K = 300\n'
CELL = '[[element]]\nkind = "subcell"\nname = "cell"\ngap_eV = 1.4\n'


def write(tmp_path, text):
    path = tmp_path / "s.toml"
    path.write_text(HEAD + CELL + text)
    return path


def test_alpha_one_drop_follows_the_classic_isotype_law(tmp_path):
    # Chandra & Eastman, Solid-State Electron. 23 (1980) 599; B. Van Zeghbroeck, Principles of
    # Semiconductor Devices (n-n+ heterojunction): J = J0 (1 - V/Vbi)(exp(qV/kT) - 1),
    # J0 = q A* T Vbi / k exp(-q Vbi / kT), exact for alpha = 1 with the kT/q tail and barrier = Vbi.
    # The element uses the exact Boltzmann depletion side, whose field integral exceeds the tail
    # form's by exp(-v2): at alpha = 1 that raises v1 (and ln J) by exp(-v2)/exp(v1) = exp(-vb) to
    # first order (vb = (Vbi - V) q/kT), so the classic law holds to that, from above
    vbi, richardson = 0.60, 8.16   # A cm-2 K-2 (REFERENCES: A* = 8.16)
    path = write(tmp_path, f'[[element]]\nkind = "isotype"\nname = "window"\nbarrier_eV = {vbi}\n'
                           f'built_in_V = {vbi}\nalpha = 1.0\nrichardson_A_cm2_K2 = {richardson}\n')
    result = run_stack(load_stack(path), curve_points=50)
    row = result.summary["interfaces"][0]
    v, j = row["drop_at_mpp_V"], result.summary["mpp_mA_cm2"] * 1e-3   # A/cm2
    kt = BOLTZMANN_EV_K * 300.0
    j0 = richardson * 300.0 * vbi / BOLTZMANN_EV_K * math.exp(-vbi / kt)
    classic = j0 * (1 - v / vbi) * math.expm1(v / kt)
    excess = math.exp(-(vbi - v) / kt)
    assert classic * (1 + 0.5 * excess) < j < classic * (1 + 2 * excess)
    assert v > 0.05   # a 0.60 V barrier with a small Richardson constant costs tens of mV


def test_alpha_from_dopings_and_permittivities(tmp_path):
    path = write(tmp_path, '[[element]]\nkind = "isotype"\nname = "i"\nbarrier_eV = 0.4\n'
                           'built_in_V = 0.3\naccumulation_doping_cm3 = 1e17\n'
                           'depletion_doping_cm3 = 1e18\naccumulation_permittivity = 11.7\n'
                           'depletion_permittivity = 11.1\n')
    result = run_stack(load_stack(path), curve_points=50)
    assert result.summary["interfaces"][0]["alpha"] == pytest.approx(11.7e17 / 11.1e18, rel=1e-12)


def test_materials_form_uses_the_electron_affinity_rule():
    # ../shared/REFERENCES.md: chi(Si) = 4.05 eV, chi(GaP) = 3.8 eV, Eg(Si) 1.12, Eg(GaP) 2.27 (X)
    # Anderson rule (R. L. Anderson, Solid-State Electron. 5 (1962) 341): the conduction-band
    # step is 4.05 - 3.8 = 0.25 eV, the valence-band step (3.8 + 2.27) - (4.05 + 1.12) = 0.90 eV
    result = run_stack(load_stack(DEMO), curve_points=50)
    rows = {r["name"]: r for r in result.summary["interfaces"]}
    assert rows["electron interface"]["offset_eV"] == pytest.approx(0.25, abs=1e-9)
    assert rows["hole interface"]["offset_eV"] == pytest.approx(0.90, abs=0.01)


def test_large_offset_costs_far_more_than_small_offset():
    summary = run_stack(load_stack(DEMO), curve_points=50).summary
    rows = {r["name"]: r for r in summary["interfaces"]}
    small, large = rows["electron interface"], rows["hole interface"]
    assert large["efficiency_penalty_pct_abs"] > 100 * max(small["efficiency_penalty_pct_abs"],
                                                           1e-6)
    assert large["blocking"] and not small["blocking"]
    assert any("blocks" in w for w in summary["warnings"])
    assert summary["power_balance_error_W_m2"] < 1e-9 * summary["mpp_W_m2"]
    # the penalty is the efficiency regained by removing the interface: close to its own loss
    assert large["efficiency_penalty_pct_abs"] == pytest.approx(
        100 * large["loss_W_m2"] / 1000, rel=0.05)


def test_reverse_biased_large_offset_blocks_without_nan(tmp_path):
    # the string's current reversed: holes up, so electrons down (one current per string)
    text = DEMO.read_text().replace('carrier = "hole"\ncarriers_flow = "down"',
                                    'carrier = "hole"\ncarriers_flow = "up"')
    text = text.replace('carrier = "electron"\ncarriers_flow = "up"',
                        'carrier = "electron"\ncarriers_flow = "down"')
    assert text.count('carriers_flow = "up"') == 1 and text.count('carriers_flow = "down"') == 1
    (tmp_path / "s.toml").write_text(text.replace('carriers_flow = "up"',
                                                  'carriers_flow = "up"\ntransport = "thermionic"'))
    result = run_stack(load_stack(tmp_path / "s.toml"), curve_points=50)
    s = result.summary
    assert s["efficiency_pct"] < 0.01
    assert math.isfinite(s["efficiency_pct"]) and math.isfinite(s["voc_V"])
    assert json.loads(result.to_json())   # no NaN reaches the JSON
    # with tunnelling (transport = "thermionic-field") the reverse-biased spike leaks by field
    # emission through the widened depletion side (Padovani-Stratton reverse TFE), but still blocks
    (tmp_path / "s.toml").write_text(text.replace('carriers_flow = "up"',
                                                  'carriers_flow = "up"\ntransport = "thermionic-field"'))
    result = run_stack(load_stack(tmp_path / "s.toml"), curve_points=50)
    row = {r["name"]: r for r in result.summary["interfaces"]}["hole interface"]
    assert row["transport"] == "thermionic-field" and row["blocking"] and row["drop_at_mpp_V"] > 1.0
    assert math.isfinite(result.summary["efficiency_pct"]) and json.loads(result.to_json())


@pytest.mark.parametrize("text, message", [
    ('[[element]]\nkind = "isotype"\nbarrier_eV = 0.4\nbuilt_in_V = 0.3\n',
     "alpha is missing and cannot be computed"),
    ('[[element]]\nkind = "isotype"\nbarrier_eV = 0.4\nalpha = 1\n',
     "missing required key 'built_in_V'"),
    ('[[element]]\nkind = "isotype"\nbarrier_eV = 0.4\nbuilt_in_V = 0.3\nalpha = 1\n'
     'orientation = "sideways"\n', "orientation = 'sideways' is not allowed"),
    ('[[element]]\nkind = "isotype"\nupper_material = "GaP"\nlower_material = "Si"\n'
     'upper_doping_cm3 = 1e18\nlower_doping_cm3 = 1e17\nalpha = 1\n', "cannot go with"),
    ('[[element]]\nkind = "isotype"\nupper_material = "GaP"\n', "missing required keys"),
    ('[[element]]\nkind = "isotype"\nbarrier_eV = 0.4\nbuilt_in_V = 0.3\nalpha = 1\n'
     'carriers_flow = "up"\n', "carriers_flow goes with upper_material"),
    ('[[element]]\nkind = "isotype"\nbarrier_eV = 0.4\nbuilt_in_V = 0.3\nalpha = 0\n',
     "alpha = 0 is outside"),
    ('[[element]]\nkind = "isotype"\nbarier_eV = 0.4\n', "did you mean 'barrier_eV'"),
])
def test_bad_isotype_tables(tmp_path, text, message):
    with pytest.raises(StackError, match=message) as info:
        load_stack(write(tmp_path, text))
    assert "element 2" in info.value.where and info.value.fix


def test_unknown_material_names_the_element(tmp_path):
    path = write(tmp_path, '[[element]]\nkind = "isotype"\nname = "x"\nupper_material = "GaPP"\n'
                           'lower_material = "Si"\nupper_doping_cm3 = 1e18\n'
                           'lower_doping_cm3 = 1e17\n')
    with pytest.raises(StackError, match="GaP") as info:
        run_stack(load_stack(path))
    assert "upper_material" in info.value.where


def test_interface_command(tmp_path):
    figure = tmp_path / "i.png"
    done = cli("interface", DEMO, "--layer", "hole interface", "--plot", figure)
    assert done.returncode == 0, done.stderr
    assert "BLOCKS" in done.stdout and "interface voltage V" in done.stdout
    assert figure.read_bytes()[:4] == b"\x89PNG"
    bad = cli("interface", DEMO, "--layer", "nothing")
    assert bad.returncode == 2 and "no isotype interface named 'nothing'" in bad.stderr
    none = cli("interface", ROOT / "stacks" / "demo_dual.toml")
    assert none.returncode == 2 and "has no isotype interface" in none.stderr


def test_band_diagram_edges_follow_the_alignment():
    from siltandem.studies.interface import band_diagram

    result = run_stack(load_stack(DEMO), curve_points=50)
    element = result.circuit.element("electron interface")
    d = band_diagram(element, 298.15, 0.0)
    x, ec = d["x_nm"], d["conduction_eV"]
    # far from the interface each side's band edge sits at its Fermi depth (Fermi-Dirac)
    sides = element.sides
    # the upper (sun-side) layer is drawn on the left, whichever side accumulates
    first, second = (("accumulation", "depletion") if d["accumulation_at_left"]
                     else ("depletion", "accumulation"))
    assert ec[0] == pytest.approx(sides[first]["fermi_depth_eV"], abs=1e-9)
    assert ec[-1] == pytest.approx(sides[second]["fermi_depth_eV"], abs=1e-9)
    # total band bending equals the built-in potential; the step at x = 0 is the offset
    at_interface = np.flatnonzero(x == 0)      # the last point of the left side, the first of the right
    left, right = ec[at_interface[0]], ec[at_interface[1]]
    step = float(element.offset_eV[0, 0])      # seen from the accumulation side
    assert (right - left if d["accumulation_at_left"] else left - right) == pytest.approx(step, abs=1e-9)
    assert d["accumulation_V"] + d["depletion_V"] == pytest.approx(
        float(element.built_in_V[0, 0]), rel=1e-12)
    gaps = d["conduction_eV"] - d["valence_eV"]
    assert np.allclose(gaps[:at_interface[0] + 1], sides[first]["gap_eV"], atol=1e-12)
    assert np.allclose(gaps[at_interface[1]:], sides[second]["gap_eV"], atol=1e-12)


# one current per series string: electrons cross the interfaces against it, holes with it
# (the current density is q (p v_p - n v_n): S. M. Sze, K. K. Ng, Physics of Semiconductor
# Devices, 3rd ed. (2007), ch. 1)
MATERIALS_FORM = ('[[element]]\nkind = "isotype"\nname = "{name}"\nupper_material = "GaP"\n'
                  'lower_material = "Si"\nupper_doping_cm3 = 1e18\nlower_doping_cm3 = 1e17\n'
                  'carrier = "{carrier}"\ncarriers_flow = "{flow}"\nstring = {string}\n')


@pytest.mark.parametrize("electrons, holes, consistent", [
    ("up", "down", True), ("down", "up", True), ("down", "down", False), ("up", "up", False)])
def test_carriers_of_one_string_flow_with_one_current(tmp_path, electrons, holes, consistent):
    text = (MATERIALS_FORM.format(name="n side", carrier="electron", flow=electrons, string=1)
            + MATERIALS_FORM.format(name="p side", carrier="hole", flow=holes, string=1))
    if consistent:
        assert len(load_stack(write(tmp_path, text)).elements) == 3
        return
    with pytest.raises(StackError, match="one series string carries its current one way") as info:
        load_stack(write(tmp_path, text))
    assert info.value.where == "element 3 'p side', key carriers_flow"
    flipped = "up" if holes == "down" else "down"
    assert f'set carriers_flow = "{flipped}" here or "{flipped}" on element 2' in info.value.fix
    # and the same with the fix applied loads
    fixed = (MATERIALS_FORM.format(name="n side", carrier="electron", flow=electrons, string=1)
             + MATERIALS_FORM.format(name="p side", carrier="hole", flow=flipped, string=1))
    assert len(load_stack(write(tmp_path, fixed)).elements) == 3


def test_separate_strings_and_the_numbers_form_are_not_compared(tmp_path):
    # four terminals: each string has its own current; the numbers form (orientation) names no
    # direction of flow and so is left out of the check
    path = tmp_path / "four.toml"
    path.write_text('[conditions]\nspectrum = "am1.5g"\nterminals = 4\n' + CELL
                    + MATERIALS_FORM.format(name="a", carrier="electron", flow="down", string=1)
                    + '[[element]]\nkind = "subcell"\nname = "bottom"\ngap_eV = 1.1\nstring = 2\n'
                    + MATERIALS_FORM.format(name="b", carrier="hole", flow="down", string=2)
                    + '[[element]]\nkind = "isotype"\nname = "c"\nbarrier_eV = 0.4\n'
                      'built_in_V = 0.3\nalpha = 1\ncarrier = "hole"\norientation = "reverse"\n'
                      'string = 2\n')
    assert [e.name for e in load_stack(path).elements] == ["cell", "a", "bottom", "b", "c"]
