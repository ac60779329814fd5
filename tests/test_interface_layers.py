"""`siltandem interface` on layer stacks: the recognised isotype interfaces, chosen by name, by the
two layers they join or by one of them, in any [[placement]] candidate.

The check is consistency: what the command prints and draws is the interface `run_stack` solves in
the same stack (its drop at the MPP, its built-in potential), and every refusal names the file, the
option and the choices. The physics of the interface law is checked in test_thermionic.py and
test_isotype_statistics.py against independent solutions; demo data are invented and are never
check values here.
"""
from pathlib import Path

import pytest

from siltandem import StackError, load_stack, run_stack
from siltandem.circuit.compile import compile_stack
from siltandem.stack.placements import with_placement
from siltandem.studies.interface import band_diagram, choose_interface, isotype_interfaces
from test_main_job import cli

ROOT = Path(__file__).resolve().parents[1]
PLACEMENTS = ROOT / "stacks" / "demo_placements.toml"
DUAL_LAYERS = ROOT / "stacks" / "demo_dual_layers.toml"


def placement(stack, name):
    return with_placement(stack, next(p for p in stack.extra["placements"] if p.name == name))


def test_layer_stack_interfaces_are_listed_with_their_layers():
    stack = load_stack(PLACEMENTS)
    circuit = compile_stack(placement(stack, "in silicon"))
    found = isotype_interfaces(circuit)
    assert ("interface buffer / junction p", ["buffer", "junction p"]) in found
    assert [name for name, _ in found] == [e.name for e in circuit.elements if e.kind == "isotype"]
    # element stacks: names only
    element = compile_stack(load_stack(ROOT / "stacks" / "demo_interfaces.toml"))
    assert isotype_interfaces(element) == [("electron interface", None), ("hole interface", None)]


def test_choose_by_name_by_layer_pair_or_by_one_layer():
    circuit = compile_stack(placement(load_stack(PLACEMENTS), "in silicon"))
    name = "interface buffer / junction p"
    assert choose_interface(circuit, name) == name
    assert choose_interface(circuit, "buffer / junction p") == name
    assert choose_interface(circuit, "junction p") == name          # borders only this one
    assert choose_interface(circuit) == "interface top window / top emitter"   # the first
    with pytest.raises(StackError, match="layer 'buffer' borders 2 isotype interfaces") as info:
        choose_interface(circuit, "buffer", file="f.toml", placement="in silicon")
    assert info.value.where == "--layer" and "'interface top base / buffer'" in info.value.fix
    with pytest.raises(StackError, match="no isotype interface named 'nothing'") as info:
        choose_interface(circuit, "nothing", file="f.toml")
    assert name in info.value.fix and "upper / lower" in info.value.fix


def test_layer_stack_without_interface_is_refused_with_a_fix(tmp_path):
    path = tmp_path / "one.toml"
    path.write_text('[conditions]\nspectrum = "am1.5g"\n'
                    '[[layer]]\nname = "emitter"\nmaterial = "GaAs"\nthickness_nm = 100\n'
                    'doping = "n:1e18"\ndiffusion_length_um = 1.0\n'
                    '[[layer]]\nname = "base"\nmaterial = "GaAs"\nthickness_nm = 2000\n'
                    'doping = "p:1e17"\ndiffusion_length_um = 5.0\n')
    with pytest.raises(StackError, match="has no isotype interface") as info:
        choose_interface(compile_stack(load_stack(path)), file=str(path))
    assert "two adjacent layers of one type" in info.value.fix


def test_band_diagram_of_a_layer_stack_interface():
    # the layer-stack element carries its sides: the diagram's far edges sit at the sides' Fermi
    # depths and the bending adds up to the built-in potential, as for the materials form
    result = run_stack(load_stack(DUAL_LAYERS), curve_points=50)
    element = result.circuit.element(choose_interface(result.circuit, "buffer / silicon emitter"))
    d = band_diagram(element, 298.15, 0.0)
    assert d is not None and d["depletion_material"] in ("GaP", "Si")
    assert d["accumulation_V"] + d["depletion_V"] == pytest.approx(
        float(element.built_in_V[0, 0]), rel=1e-12)


def test_interface_command_on_a_placement_stack(tmp_path):
    figure = tmp_path / "i.png"
    done = cli("interface", PLACEMENTS, "--placement", "in silicon", "--layer", "junction p",
               "--plot", figure, "--points", "5")
    assert done.returncode == 0, done.stderr
    assert "'interface buffer / junction p'" in done.stdout and "[in silicon]" in done.stdout
    assert figure.read_bytes()[:4] == b"\x89PNG"
    # the drop printed is the one the main job solves for the same candidate
    result = run_stack(placement(load_stack(PLACEMENTS), "in silicon"), curve_points=60)
    row = next(r for r in result.summary["interfaces"]
               if r["name"] == "interface buffer / junction p")
    assert f"{1000 * row['drop_at_mpp_V']:.2f} mV at the MPP" in done.stdout
    assert ("BLOCKS" in done.stdout) == row["blocking"]


def test_interface_command_defaults_and_refusals():
    first = cli("interface", PLACEMENTS, "--points", "3")
    assert first.returncode == 0, first.stderr
    assert "'interface top window / top emitter'" in first.stdout and "[in GaP]" in first.stdout
    bad = cli("interface", PLACEMENTS, "--placement", "nowhere")
    assert bad.returncode == 2 and "no placement named 'nowhere'" in bad.stderr
    assert "'in silicon'" in bad.stderr and "Traceback" not in bad.stderr
    none = cli("interface", ROOT / "stacks" / "demo_dual.toml", "--placement", "in silicon")
    assert none.returncode == 2 and "declares no [[placement]]" in none.stderr
    ambiguous = cli("interface", DUAL_LAYERS, "--layer", "buffer")
    assert ambiguous.returncode == 2 and "borders 2 isotype interfaces" in ambiguous.stderr
    assert "demo_dual_layers.toml" in ambiguous.stderr
