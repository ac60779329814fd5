"""Stack files: the schema, and one clear message for each kind of bad input."""
from pathlib import Path

import pytest

from siltandem import StackError, load_stack

GOOD_HEAD = '[stack]\nname = "t"\n[conditions]\nspectrum = "am1.5g"\n'
CELL = '[[element]]\nkind = "subcell"\nname = "top"\ngap_eV = 1.7\n'
TUNNEL = ('[[element]]\nkind = "tunnel"\nname = "junction"\npeak_mA_cm2 = 2000\npeak_V = 0.1\n'
          'valley_mA_cm2 = 100\nvalley_V = 0.5\n')


def write(tmp_path, text, name="s.toml"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_minimal_stack_defaults(tmp_path):
    stack = load_stack(write(tmp_path, CELL))
    assert stack.conditions.spectrum == "am1.5g"
    assert stack.conditions.temperature_K == 298.15
    assert stack.conditions.terminals == 2
    (cell,) = stack.elements
    assert cell.values["absorptance"] == 1.0 and cell.values["ere"] == 1.0


BAD = [
    # (file text, expected message fragment, expected 'where' fragment)
    ('[stack\nname = "x"', "TOML syntax error", None),
    (GOOD_HEAD + CELL + "colour = 3\n", "unknown key 'colour'", "element 1 'top'"),
    (GOOD_HEAD + CELL.replace("gap_eV = 1.7", 'gap_eV = "1.7"'), "must be a number",
     "element 1 'top'"),
    (GOOD_HEAD + CELL.replace("gap_eV = 1.7", ""), "missing required key 'gap_eV'",
     "element 1"),
    (GOOD_HEAD + CELL.replace('"subcell"', '"subcel"'), "unknown element kind 'subcel'",
     "element 1"),
    (GOOD_HEAD + CELL.replace("1.7", "7.0"), "outside its physical range", "element 1 'top'"),
    (GOOD_HEAD + CELL + "absorptance = 1.5\n", "absorptance = 1.5 is outside", "element 1"),
    (GOOD_HEAD + CELL + "ere = 0\n", "ere = 0 is outside", "element 1"),
    (GOOD_HEAD + CELL + "ere = -0.1\n", "ere = -0.1 is outside", "element 1"),
    (GOOD_HEAD, "no [[element]] tables", None),
    (GOOD_HEAD + '[[element]]\nkind = "resistor"\nseries_ohm_cm2 = 1\n', "has no subcell", None),
    (GOOD_HEAD.replace("am1.5g", "am1.5g") + CELL + CELL, "is used twice", "element 2 'top'"),
    (GOOD_HEAD + CELL + "breakdown_V = 5\n", "breakdown_V needs shunt_ohm_cm2", "element 1"),
    (GOOD_HEAD.replace('spectrum = "am1.5g"', "suns = -2") + CELL, "suns = -2 is outside its physical range",
     "conditions.suns"),
    (GOOD_HEAD.replace('spectrum = "am1.5g"', "terminals = 3") + CELL, "terminals = 3",
     "conditions.terminals"),
    (GOOD_HEAD.replace('spectrum = "am1.5g"', "temperature_K = 20") + CELL,
     "temperature_K = 20 is outside", "conditions.temperature_K"),
    (GOOD_HEAD.replace('spectrum = "am1.5g"', "sunz = 1") + CELL, "unknown key 'sunz'",
     "conditions.sunz"),
    (GOOD_HEAD.replace('spectrum = "am1.5g"', "terminals = 4") + CELL, "string 2 has no subcell",
     None),
    (GOOD_HEAD + CELL + "string = 2\n", "string = 2 is not a string of this stack", "element 1"),
    ("[stak]\n" + CELL, "unknown table or key 'stak'", "key stak"),
    (GOOD_HEAD + CELL.replace('"subcell"', '"isotype"'), "unknown key 'gap_eV' for an isotype",
     "element 1"),
    (GOOD_HEAD + CELL + TUNNEL.replace("peak_V = 0.1", "peak_V = 0.6"),
     "peak_V = 0.6 V is not below valley_V", "element 2 'junction'"),
    (GOOD_HEAD + CELL + TUNNEL.replace("valley_mA_cm2 = 100", "valley_mA_cm2 = 5000"),
     "valley_mA_cm2 = 5000 is not below peak_mA_cm2", "element 2 'junction'"),
    (GOOD_HEAD + CELL + TUNNEL.replace("peak_mA_cm2 = 2000", "peak_mA_cm2 = -1"),
     "peak_mA_cm2 = -1 is outside", "element 2 'junction'"),
    (GOOD_HEAD + CELL + TUNNEL + "saturation_mA_cm2 = 500\n",
     "excess and thermal currents alone reach", "element 2 'junction'"),
    (GOOD_HEAD + '[[layer]]\nmaterial = "Si"\n', "missing required key 'thickness_nm'",
     "layer 1"),
    (GOOD_HEAD + '[[layer]]\nmaterial = "Si"\nthickness_nm = 100\ndoping = "x:1e18"\n',
     "doping 'x:1e18' is not understood", "layer 1"),
    (GOOD_HEAD + '[[layer]]\nmaterial = "Siliconn"\nthickness_nm = 100\ndoping = "n:1e18"\n',
     "is not in the library", "layer 1"),
    (GOOD_HEAD + '[[layer]]\nmaterial = "Si"\nthickness_nm = -1\ndoping = "n:1e18"\n',
     "thickness_nm = -1 is outside", "layer 1"),
    (GOOD_HEAD + CELL + '[[layer]]\nmaterial = "Si"\nthickness_nm = 1\ndoping = "n:1e18"\n',
     "not both", None),
    ("element = 3\n" + GOOD_HEAD, "must be an array of tables", None),
    (GOOD_HEAD.replace('spectrum = "am1.5g"', "spectrum = 5") + CELL, "spectrum must be text",
     "conditions.spectrum"),
]


@pytest.mark.parametrize("text, message, where", BAD)
def test_bad_stack_messages(tmp_path, text, message, where):
    path = write(tmp_path, text)
    with pytest.raises(StackError, match=message.replace("[", r"\[").replace("]", r"\]")) as info:
        load_stack(path)
    error = info.value
    assert error.file == str(path)
    assert error.fix, "every message says how to fix it"
    if where:
        assert where in error.where
    assert str(path) in str(error)


def test_unknown_key_suggests_the_close_one(tmp_path):
    with pytest.raises(StackError, match=r"did you mean 'gap_eV'"):
        load_stack(write(tmp_path, GOOD_HEAD + CELL.replace("gap_eV", "gap_ev")))


def test_not_utf8_and_missing_file(tmp_path):
    path = tmp_path / "b.toml"
    path.write_bytes(b"\xff\xfe\x00garbage")
    with pytest.raises(StackError, match="not UTF-8"):
        load_stack(path)
    with pytest.raises(StackError, match="stack file not found"):
        load_stack(tmp_path / "none.toml")


def test_bundled_demo_is_the_stacks_demo():
    root = Path(__file__).resolve().parents[1]
    packaged = root / "src" / "siltandem" / "data" / "demo_dual.toml"
    assert packaged.read_text() == (root / "stacks" / "demo_dual.toml").read_text()


@pytest.mark.parametrize("name", sorted(p.name for p in
                                         (Path(__file__).resolve().parents[1] / "stacks")
                                         .glob("*.toml")))
def test_every_demo_stack_loads_and_is_marked_invented(name):
    path = Path(__file__).resolve().parents[1] / "stacks" / name
    load_stack(path)
    assert "INVENTED" in path.read_text()


def test_byte_order_mark_is_accepted(tmp_path):
    # some editors start UTF-8 files with a byte-order mark (common practice, no source)
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + CELL.encode())
    assert load_stack(path).elements[0].name == "top"


def test_subcell_material_key(tmp_path):
    stack = load_stack(write(tmp_path, GOOD_HEAD + CELL + 'material = "GaAs"\n'))
    assert stack.elements[0].values["material"] == "GaAs"
    no_gap = load_stack(write(tmp_path, GOOD_HEAD + CELL.replace("gap_eV = 1.7\n", "")
                              + 'material = "GaAs"\n', "b.toml"))
    # the gap at 298.15 K from the library (VMR 2001 Varshni law for GaAs)
    assert no_gap.elements[0].values["gap_eV"] == pytest.approx(1.4240, abs=2e-3)
    with pytest.raises(StackError, match="not in the library") as info:
        load_stack(write(tmp_path, GOOD_HEAD + CELL + 'material = "GaAz"\n', "c.toml"))
    assert "key material" in info.value.where
    with pytest.raises(StackError, match="material must be text"):
        load_stack(write(tmp_path, GOOD_HEAD + CELL + "material = 3\n", "d.toml"))
