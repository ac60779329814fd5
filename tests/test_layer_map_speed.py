"""The layer map's speed work (issue 19) changes no number: each faster form is checked, with
``==``, against the form it replaces (numpy's own function, or the same step without the memo).

Reference: numpy's cumsum (an accumulation: entry j added to the sum of the entries before it, in
order, numpy.ufunc.accumulate); no physics value is checked here. The demo stack is INVENTED DATA.
"""
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack
from siltandem.circuit.compile import compile_stack
from siltandem.numerics.sums import running_sum
from siltandem.studies.sweep import layer_design

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.parametrize("shape", [(13, 16, 1291), (13, 1, 40), (2, 3), (1, 5, 7), (0, 4), (6,)])
def test_running_sum_equals_numpy_cumsum_bit_for_bit(shape):
    """running_sum is np.cumsum(axis=0), bit for bit, on optical depths spanning 11 decades
    (where the order of the additions shows in the last bits) and with inf and NaN entries."""
    rng = np.random.default_rng(7)
    values = rng.exponential(size=shape) * 10.0 ** rng.uniform(-8, 3, size=shape)
    if values.size > 4:
        values.reshape(-1)[[1, 3]] = [np.inf, np.nan]
    expected = np.cumsum(values, axis=0)
    found = running_sum(values)
    assert found.dtype == expected.dtype and found.shape == expected.shape
    assert np.array_equal(found, expected, equal_nan=True)
    # a different order of the additions does change the last bits here: the check can fail
    if values.ndim == 3 and values.shape[0] > 2:
        reordered = np.cumsum(values[::-1], axis=0)[::-1]
        assert not np.array_equal(reordered[0], expected[-1], equal_nan=True)


def test_optical_group_with_a_reuse_dict_equals_the_key_afresh():
    """optics.layers.optical_group keeps each layer object's text in a study's reuse dict: the key
    equals the one built afresh, for designs sharing layer objects and for designs that do not
    (another thickness of a thick layer: the same group; another doping: another group)."""
    from siltandem.optics.layers import optical_group

    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    designs = [{"top base.thickness_nm": 500.0}, {"top base.thickness_nm": 900.0},
               {"middle base.thickness_nm": 3000.0}, {"middle base.doping_cm3": 3e17}]
    reuse = {}
    models = [compile_stack(layer_design(stack, d), reuse).model for d in designs]
    keys = [optical_group(m, reuse) for m in models]
    assert keys == [optical_group(m) for m in models]
    assert [optical_group(m, reuse) for m in models] == keys          # answered from the dict
    assert keys[0] == keys[1] == keys[2] != keys[3]


def test_joined_parameters_equal_the_broadcast_concatenation():
    """circuit/batch._concatenate: arrays that already hold their designs' rows are concatenated
    as they are, arrays of one row standing for several are broadcast first; either way the
    result equals np.concatenate of each broadcast to its rows (numpy as the reference), and a
    joined layer study's circuit holds each design's own parameters in its row."""
    from siltandem.circuit.batch import _concatenate, join_circuits
    from siltandem.optics.illuminate import illuminate
    from siltandem.studies.sweep import study_light

    rng = np.random.default_rng(5)
    for values, sizes in (([rng.normal(size=(1, 1)) for _ in range(5)], [1] * 5),
                          ([rng.normal(size=(3, 2)), rng.normal(size=(1, 2))], [3, 4]),
                          ([np.float64(2.5), rng.normal(size=(2,))], [3, 2])):
        expected = np.concatenate([np.broadcast_to(np.asarray(v, dtype=float),
                                                   (size,) + np.shape(v)[1:])
                                   for v, size in zip(values, sizes)], axis=0)
        found = _concatenate(values, sizes)
        assert found.shape == expected.shape and np.array_equal(found, expected)

    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    light = study_light(stack)
    lit = [illuminate(compile_stack(layer_design(stack, {"top base.thickness_nm": t})), light)
           for t in (500.0, 800.0, 1300.0)]
    joined = join_circuits(lit)
    for k, circuit in enumerate(lit):
        for cell in circuit.subcells:
            assert joined.element(cell.name).photocurrent_A_m2[k] == cell.photocurrent_A_m2[0]
    currents = [joined.element(c.name).photocurrent_A_m2[:, 0] for c in lit[0].subcells]
    assert all(len(set(c)) == 3 for c in currents[:1])     # the top subcell's differ by design


def test_recognition_from_its_fields_equals_recognition_of_the_layers():
    """circuit/strings.recognised works out a structure from the recognition fields alone and
    remembers it per key: for designs of the triple demo that vary thicknesses (one key: built
    once), a doping that keeps the roles, and dopings that flip a tunnel junction into a p-n
    junction (another structure or the same StackError), it equals, with ``==``,
    recognise_strings on the full layers. Reference: the recognition rules themselves
    (circuit/recognise.py); no physics value is checked here."""
    from siltandem.circuit.strings import recognise_strings, recognised
    from siltandem.errors import StackError

    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    threshold = stack.rules["tunnel_doping_cm3"]
    designs = [{"top base.thickness_nm": 500.0}, {"top base.thickness_nm": 900.0,
                                                  "middle base.thickness_nm": 3000.0},
               {"middle base.doping_cm3": 3e17}, {"upper tunnel n.doping_cm3": 1e18},
               {"upper tunnel n.doping_cm3": 1e18}, {"top base.lifetime_ns": 5.0}]
    reuse = {}
    outcomes = []
    for values in designs:
        layers = layer_design(stack, values).layers
        try:
            expected = recognise_strings(layers, tunnel_doping_cm3=threshold, file=stack.source)
        except StackError as exc:
            with pytest.raises(StackError) as found:
                recognised(layers, tunnel_doping_cm3=threshold, file=stack.source, reuse=reuse)
            assert str(found.value) == str(exc)
            outcomes.append(str(exc))
            continue
        for memo in (reuse, None):
            assert recognised(layers, tunnel_doping_cm3=threshold, file=stack.source,
                              reuse=memo) == expected
        outcomes.append(expected)
    assert outcomes[0] is outcomes[1] or outcomes[0] == outcomes[1]
    # the thickness designs share one structure; the doping designs are recognised apart
    table = reuse[("remembered", "structure")]
    assert len(table) == 3          # thicknesses, the middle base's doping, the lifetime key
    assert isinstance(outcomes[3], str) and outcomes[3] == outcomes[4]   # refused, both times


def test_a_thickness_map_checks_one_design_and_a_doping_map_every_design(monkeypatch):
    """studies/sweep._check_layer_designs: varied keys that recognition does not read (thickness)
    leave every design's recognition key that of the first, so one design is checked; a varied
    doping checks every design and still names the first one refused."""
    from siltandem import parse_vary
    from siltandem.circuit import strings
    from siltandem.errors import StackError
    from siltandem.studies.sweep import check_designs

    calls = []
    original = strings.recognise_strings

    def counted(layers, **options):
        calls.append(tuple(layer.thickness_nm for layer in layers
                           if hasattr(layer, "thickness_nm")))
        return original(layers, **options)

    monkeypatch.setattr(strings, "recognise_strings", counted)
    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    top = parse_vary("top base.thickness_nm=300:1500:4", stack)
    middle = parse_vary("middle base.thickness_nm=1000:4000:3", stack)
    check_designs(stack, [top, middle])
    assert len(calls) == 1
    calls.clear()
    doping = parse_vary("middle base.doping_cm3=1e16:1e18:3", stack)
    check_designs(stack, [top, doping])
    assert len(calls) == 3          # 12 designs, 3 distinct recognition keys
    tunnel = parse_vary("upper tunnel n.doping_cm3=1e18:2e19:3", stack)
    with pytest.raises(StackError, match=r"--vary: design top base\.thickness_nm = 300, "
                                         r"upper tunnel n\.doping_cm3 = 1e\+18"):
        check_designs(stack, [top, tunnel])


def _fields(element):
    """Every field of an element, arrays as (dtype, shape, bytes): an exact, NaN-safe comparison."""
    from dataclasses import fields

    out = {}
    for f in fields(element):
        value = getattr(element, f.name)
        if isinstance(value, np.ndarray):
            value = (value.dtype.str, value.shape, value.tobytes())
        elif isinstance(value, tuple) and any(isinstance(v, np.ndarray) for v in value):
            value = tuple((v.dtype.str, v.shape, v.tobytes()) if isinstance(v, np.ndarray) else v
                          for v in value)
        elif isinstance(value, float) and value != value:
            value = "nan"
        out[f.name] = value if isinstance(value, (int, float, str, tuple, type(None), bool)) \
            else repr(value)
    return out


@pytest.mark.parametrize("name, designs", [
    ("demo_triple_layers.toml", [{"top base.thickness_nm": t, "middle base.thickness_nm": m}
                                 for t in (450.0, 1300.0) for m in (1200.0, 2500.0)]
     + [{"middle base.doping_cm3": 3e17}, {"top base.lifetime_ns": 5.0}]),
    ("demo_four_terminal_layers.toml", [{"top base.thickness_nm": t} for t in (900.0, 1400.0, 900.0)]
     + [{"silicon emitter.thickness_nm": 300.0}, {"top base.doping_cm3": 2e17}])])
def test_compile_with_a_reuse_dict_equals_a_fresh_compile_field_by_field(name, designs):
    """compile_stack with a study's reuse dict (the structure, materials, subcells, tunnel
    junctions and isotype interfaces remembered with their string, the rear emission, the gaps)
    gives, field by field with ``==`` (arrays by their bytes), every element of the compile
    without the dict: strings and names included, for one string and for two (four terminals);
    the model's subcells and the layer details alike. The demo stacks are INVENTED DATA; the
    reference is the compile without any memo."""
    stack = load_stack(ROOT / "stacks" / name)
    reuse = {}
    for values in designs:
        design = layer_design(stack, values)
        kept, fresh = compile_stack(design, reuse), compile_stack(design)
        assert [type(e) for e in kept.elements] == [type(e) for e in fresh.elements]
        for a, b in zip(kept.elements, fresh.elements):
            assert _fields(a) == _fields(b), a.name
        assert kept.model == fresh.model
        assert repr(kept.optics) == repr(fresh.optics)
        assert kept.strings is not None and [[e.name for e in s] for s in kept.strings] == \
            [[e.name for e in s] for s in fresh.strings]
    assert len({e.string for e in kept.elements}) == (2 if "four" in name else 1)
    assert len(reuse[("remembered", "structure")]) < len(designs)      # the memo did work
