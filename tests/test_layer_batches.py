"""Batched layer designs (issue 19): designs of one recognised structure joined into one batched
circuit (circuit/batch.py) and solved at once give, bit for bit, the numbers of each design
solved alone.

No physics value is checked here: the reference is the same design through the one-by-one path
(compiled, illuminated and solved on its own), and the check is exact equality (``==``) of every
result column, as issue 19 asks. The demo stacks are INVENTED DATA (marked in their files).
"""
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack
from siltandem.circuit.batch import join_circuits, join_rows, structure_key
from siltandem.circuit.compile import compile_stack
from siltandem.circuit.elements import take_rows
from siltandem.optics.illuminate import illuminate
from siltandem.studies.sweep import layer_design, solve_designs, study_light

ROOT = Path(__file__).resolve().parents[1]


def one_by_one(stack, columns):
    """Every design of ``columns`` as its own layer stack, solved alone (batch of one)."""
    size = len(next(iter(columns.values())))
    rows = [solve_designs(layer_design(stack, {c: v[k] for c, v in columns.items()}), {})
            for k in range(size)]
    return {key: np.concatenate([np.asarray(r[key]).reshape(-1) for r in rows]) for key in rows[0]}


def structures(stack, columns):
    """How many designs each recognised structure holds (the batches the solve forms)."""
    size = len(next(iter(columns.values())))
    light = study_light(stack)
    keys = [structure_key(illuminate(compile_stack(layer_design(
        stack, {c: v[k] for c, v in columns.items()})), light)) for k in range(size)]
    return sorted(keys.count(k) for k in set(keys))


def assert_same_bits(batched, alone):
    assert batched.keys() == alone.keys()
    for key in alone:
        assert batched[key].shape == alone[key].shape, key
        same = batched[key] == alone[key]
        assert same.all(), f"{key}: batched {batched[key][~same]} != alone {alone[key][~same]}"


# thickness, doping and [device] keys varied together; a series resistance of 0 leaves the
# device resistor out of the circuit, so the designs form two structures (two batches)
CASES = {
    "demo_triple_layers.toml": {
        "top base.thickness_nm": np.array([400.0, 650.0, 900.0, 1200.0, 800.0]),
        "middle base.doping_cm3": np.array([5e16, 1e17, 2e17, 3e17, 1e17]),
        "device.series_ohm_cm2": np.array([0.0, 0.2, 0.5, 1.0, 0.0]),
        "device.shading_fraction": np.array([0.02, 0.05, 0.0, 0.1, 0.03]),
    },
    "demo_dual_layers.toml": {
        "top base.thickness_nm": np.array([900.0, 1400.0, 2000.0, 1100.0]),
        "device.series_ohm_cm2": np.array([0.3, 0.0, 0.8, 0.5]),
        "device.shunt_ohm_cm2": np.array([1e4, 5e3, 2e3, 1e5]),
    },
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_batched_layer_designs_equal_their_solves_alone(name):
    stack = load_stack(ROOT / "stacks" / name)
    columns = CASES[name]
    sizes = structures(stack, columns)
    assert max(sizes) > 1, "no batch of more than one design: the test would prove nothing"
    batched = solve_designs(stack, columns)
    alone = one_by_one(stack, columns)
    assert_same_bits(batched, alone)
    # the designs differ (a varied key that changes nothing would make the check empty)
    assert len(set(np.round(batched["efficiency_pct"], 9))) == len(batched["efficiency_pct"])


def test_element_designs_do_not_depend_on_their_batch():
    """The batched solve's roots stop per design (numerics/roots.py): a design solved in a batch
    of one gives the numbers it gives among others."""
    stack = load_stack(ROOT / "stacks" / "demo_triple.toml")
    gaps = np.array([1.70, 1.76, 1.82, 1.88])
    batched = solve_designs(stack, {"top.gap_eV": gaps})
    rows = [solve_designs(stack, {"top.gap_eV": gaps[k:k + 1]}) for k in range(gaps.size)]
    alone = {key: np.concatenate([r[key] for r in rows]) for key in rows[0]}
    assert_same_bits(batched, alone)


def test_join_rows_is_the_inverse_of_take_rows():
    """Joined elements hold each design's parameters in turn; take_rows gives them back."""
    stack = load_stack(ROOT / "stacks" / "demo_dual_layers.toml")
    light = study_light(stack)
    circuits = [illuminate(compile_stack(layer_design(stack, {"top base.thickness_nm": t})), light)
                for t in (900.0, 1600.0, 2400.0)]
    joined = join_circuits(circuits)
    assert joined.optical_order == circuits[0].optical_order
    for name in joined.optical_order:
        element = joined.element(name)
        for k, circuit in enumerate(circuits):
            alone, back = circuit.element(name), take_rows(element, [k])
            for key, value in vars(alone).items():
                if isinstance(value, np.ndarray) and not key.startswith("_"):
                    np.testing.assert_array_equal(np.broadcast_to(value, (1, 1)),
                                                  getattr(back, key), err_msg=f"{name}.{key}")
    # the photocurrents differ between the designs, so the rows are not one design repeated
    top = joined.subcells[0].photocurrent_A_m2[:, 0]
    assert len(set(top)) == 3
    # elements of one batch with a base law keep its columns row by row
    bases = [c for c in circuits[0].subcells if c.bulk is not None]
    for cell in bases:
        joined_cell = join_rows([c.element(cell.name) for c in circuits], [1, 1, 1])
        assert all(np.shape(column) == (3, 1) for column in joined_cell.bulk)


def test_circuits_of_different_structures_are_not_joined():
    stack = load_stack(ROOT / "stacks" / "demo_dual_layers.toml")
    light = study_light(stack)
    circuits = [illuminate(compile_stack(layer_design(stack, {"device.series_ohm_cm2": r})), light)
                for r in (0.0, 0.5)]
    assert structure_key(circuits[0]) != structure_key(circuits[1])
    with pytest.raises(ValueError, match="different structures"):
        join_circuits(circuits)


def test_entry_memo_gives_a_fresh_evaluation_bit_for_bit():
    """numerics/memo.py: entries whose input is unchanged are taken from the last call, the rest
    evaluated; the answer equals scipy.special.expn evaluated afresh (==), and only changed
    entries reach the function."""
    from scipy.special import expn

    from siltandem.numerics.memo import EntryMemo

    seen = []

    def counted(x):
        seen.append(np.size(x))
        return 2.0 * expn(3, x)

    memo = EntryMemo(counted)
    rng = np.random.default_rng(19)
    x = rng.uniform(0.0, 30.0, (4, 50))
    np.testing.assert_array_equal(memo(x, "a"), 2.0 * expn(3, x))
    y = x.copy()
    y[1, 7:12] *= 1.5
    y[3, 0] = np.nan
    got = memo(y, "a")
    assert seen == [200, 6]                       # 5 changed entries and the NaN
    assert np.array_equal(got, 2.0 * expn(3, y), equal_nan=True)
    # another slot or shape is remembered apart
    np.testing.assert_array_equal(memo(x[:2], "a"), 2.0 * expn(3, x[:2]))
    assert seen[-1] == 100


def test_remembered_transmittance_equals_the_law():
    """The Lambertian channel's remembered T (laws/thinfilm.py) against T = 2 E3 itself
    (scipy.special.expn; M. A. Green, Prog. Photovolt. 10 (2002) 235, from memory), bit for bit,
    for a sequence of depths that changes part of its entries."""
    from scipy.special import expn

    from siltandem.laws import thinfilm

    rng = np.random.default_rng(7)
    depth = rng.uniform(0.0, 50.0, (3, 40))
    for step in range(3):
        depth[0, step::3] += 1.0
        np.testing.assert_array_equal(thinfilm._remembered_transmittance(depth, "test"),
                                      2.0 * expn(3, depth))
        np.testing.assert_array_equal(thinfilm.lambertian_transmittance(depth), 2.0 * expn(3, depth))


def test_layer_map_rows_equal_their_designs_alone():
    """`siltandem.design_map` on layer keys (the study path: chunks, batches of one structure):
    every row, bit for bit, the design solved alone."""
    from siltandem import design_map, parse_vary

    stack = load_stack(ROOT / "stacks" / "demo_dual_layers.toml")
    first = parse_vary("top base.thickness_nm=900:2100:3", stack)
    second = parse_vary("device.series_ohm_cm2=0:0.6:2", stack)
    table = design_map(stack, first, second, progress=False)
    columns = {c: table[c].to_numpy() for c in (first.column, second.column)}
    alone = one_by_one(stack, columns)
    batched = {key: table[key].to_numpy() for key in alone}
    assert_same_bits(batched, alone)


def test_photocurrents_with_reuse_equal_a_fresh_compile():
    """The layer-key match's root search keeps one reuse dict between its optics calls
    (studies/matching.py): each call gives, bit for bit, the photocurrents of a fresh compile."""
    from siltandem.studies.sweep import photocurrents_at

    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    reuse = {}
    for value in (500.0, 731.25, 500.0, 1400.0):
        kept = photocurrents_at(stack, "top base.thickness_nm", value, reuse=reuse)
        fresh = photocurrents_at(stack, "top base.thickness_nm", value)
        assert kept == fresh
    assert any(key[0] == "isotype" for key in reuse)      # something was reused


def test_joined_isotype_interfaces_keep_the_compiled_law():
    """A batch of layer designs joins each isotype interface's fields into (B, 1) arrays, the
    defaulted ones too (a zero sheet charge becomes B zeros): the interface still takes the
    compiled law (laws/compiled_isotype.py), and its voltages equal the numpy law's (the
    reference: laws/thermionic.py, validated against mpmath in tests/test_isotype_exact.py).
    A nonzero sheet charge in any row sends the joined interface to the numpy law."""
    from dataclasses import replace

    from siltandem.circuit.elements import IsotypeInterface
    from siltandem.laws import thermionic

    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    circuits = [compile_stack(layer_design(stack, {"top base.thickness_nm": t}))
                for t in (600.0, 900.0, 1200.0)]
    names = [e.name for e in circuits[0].elements if isinstance(e, IsotypeInterface)]
    assert names
    temperature = stack.conditions.temperature_K
    current = np.full((3, 1), 120.0)            # 12 mA/cm2 in A/m2
    for name in names:
        joined = join_rows([c.element(name) for c in circuits], [1, 1, 1])
        assert np.shape(joined.sheet_charge) == (3, 1)
        # a (nearly) degenerate side takes the Fermi-Dirac law (circuit/isotype.py), which has no
        # compiled form: that joined interface goes to the numpy law; the same interface with
        # Boltzmann sides keeps the compiled one
        fermi_dirac = joined.accumulation_fermi_eV is not None or joined.depletion_fermi_eV is not None
        assert (joined.compiled_rows(temperature) is None) is fermi_dirac, name
        boltzmann = replace(joined, accumulation_fermi_eV=None, depletion_fermi_eV=None)
        assert boltzmann.compiled_rows(temperature) is not None, name
        for element in (joined, boltzmann):
            voltage, _ = element.voltage(current, temperature)
            law = dict(element._law(temperature))
            s = element.direction
            reference, _ = thermionic.isotype_voltage(s * current, with_derivative=True, **law) \
                if element.transport == "thermionic" else (None, None)
            if reference is not None:
                np.testing.assert_allclose(voltage, -s * reference, rtol=1e-9, atol=1e-12)
        charged = replace(boltzmann, sheet_charge=np.array([[0.0], [0.1], [0.0]]))
        assert charged.compiled_rows(temperature) is None, name
