"""Batched layer designs (issue 19): designs of one recognised structure joined into one batched
circuit (circuit/batch.py) and solved at once give, bit for bit, the numbers of each design
solved alone.

No physics value is checked here: the reference is the same design through the one-by-one path
(compiled, illuminated and solved on its own), and the check is exact equality (``==``) of every
result column, as issue 19 asks. The demo stacks are INVENTED DATA (marked in their files).
"""
from pathlib import Path
import warnings

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


def test_recall_gives_a_fresh_evaluation_bit_for_bit():
    """numerics/memo.py recall: a repeated input is answered from the store, equal (==) to
    scipy.special.expn evaluated afresh; a changed input is evaluated; changing a returned array
    does not change what the store answers next; inputs past RECALL_ENTRIES are not kept."""
    from scipy.special import expn

    from siltandem.numerics import memo

    seen = []

    def counted(x):
        seen.append(np.size(x))
        return 2.0 * expn(3, x), expn(2, x)

    store = {}
    x = np.random.default_rng(7).uniform(0.0, 30.0, (3, 20))
    first = memo.recall(store, x, counted)
    first[0][:] = -1.0                              # the caller's copy, not the store's
    again = memo.recall(store, x.copy(), counted)
    assert seen == [60]
    np.testing.assert_array_equal(again[0], 2.0 * expn(3, x))
    np.testing.assert_array_equal(again[1], expn(2, x))
    y = x.copy()
    y[2, 5] += 1e-12
    np.testing.assert_array_equal(memo.recall(store, y, counted)[0], 2.0 * expn(3, y))
    assert seen == [60, 60]
    big = np.ones(memo.RECALL_ENTRIES + 1)
    memo.recall(store, big, counted)
    memo.recall(store, big, counted)
    assert seen[-2:] == [big.size, big.size] and len(store) == 2


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
    assert reuse[("remembered", "isotype")]      # something was reused


def test_joined_isotype_interfaces_keep_the_compiled_law():
    """A batch of layer designs joins each isotype interface's fields into (B, 1) arrays, the
    defaulted ones too (a zero sheet charge becomes B zeros): the interface still takes the
    compiled law (laws/compiled_isotype.py), and its voltages equal the element's numpy law's to 1e-9
    (the references: laws/thermionic.py, validated against mpmath in tests/test_isotype_exact.py;
    laws/field_emission.py and laws/field_emission_fermi.py, against Poisson/WKB references in
    tests/test_field_emission.py and tests/test_field_emission_fermi.py).
    A nonzero sheet charge in any row sends the joined interface to the numpy law."""
    from dataclasses import replace

    from siltandem.circuit.elements import IsotypeInterface

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
        # a (nearly) degenerate side takes the Fermi-Dirac law (circuit/isotype.py), compiled too
        # (laws/compiled_fermi.py; laws/compiled_field_fermi.py for thermionic-field transport); the
        # same interface with Boltzmann sides keeps the compiled Boltzmann law
        assert joined.compiled_rows(temperature) is not None, name
        boltzmann = replace(joined, accumulation_fermi_eV=None, depletion_fermi_eV=None)
        assert boltzmann.compiled_rows(temperature) is not None, name
        for element in (joined, boltzmann):
            voltage, _ = element.voltage(current, temperature)
            s = element.direction
            # the element's numpy law (laws/thermionic.py, laws/field_emission.py or
            # laws/field_emission_fermi.py) on the joined numbers
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                reference = element._functions()[1](s * current, **element._law(temperature))
            np.testing.assert_allclose(voltage, -s * reference, rtol=1e-9, atol=1e-12)
        charged = replace(boltzmann, sheet_charge=np.array([[0.0], [0.1], [0.0]]))
        assert charged.compiled_rows(temperature) is None, name


def _element_fields(element):
    """An element's numeric fields as bytes (exact comparison, NaN-safe)."""
    from dataclasses import fields

    out = {}
    for f in fields(element):
        value = getattr(element, f.name)
        if isinstance(value, np.ndarray) or isinstance(value, float):
            out[f.name] = np.asarray(value, dtype=float).tobytes()
        elif isinstance(value, tuple) and value and isinstance(value[0], np.ndarray):
            out[f.name] = tuple(np.asarray(v, dtype=float).tobytes() for v in value)
    return out


def test_remembered_compile_equals_a_fresh_compile():
    """A study's compile keeps one reuse dict (numerics/memo.remembered: subcells, tunnel
    junctions, couplings and per-layer optics keyed by every input they read). Over a 2-D
    thickness grid (both varied layers, visited in an order that revisits values), every element
    and coupling equals, bit for bit, the design compiled without the dict; and the subcells of the
    unvaried layers were built once, not per design (the memo did work)."""
    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    reuse = {}
    grid = [(t, m) for t in (450.0, 800.0, 1300.0) for m in (1200.0, 2500.0)] + [(450.0, 2500.0)]
    for top, middle in grid:
        design = layer_design(stack, {"top base.thickness_nm": top, "middle base.thickness_nm": middle})
        kept, fresh = compile_stack(design, reuse), compile_stack(design)
        assert [e.name for e in kept.elements] == [e.name for e in fresh.elements]
        for a, b in zip(kept.elements, fresh.elements):
            assert _element_fields(a) == _element_fields(b), a.name
        assert kept.model.subcells == fresh.model.subcells
        details_kept, details_fresh = kept.optics["layer_details"], fresh.optics["layer_details"]
        assert repr(details_kept) == repr(details_fresh)
    subcells = reuse[("remembered", "subcell")]
    # 3 top, 2 middle, 1 silicon subcell: 6 distinct subcells for 7 designs x 3 subcells
    assert len(subcells) == 6


def test_remembered_builds_once_per_key_and_again_for_another():
    """numerics/memo.remembered: the same key answers from the dict (build not called), another
    key builds; without a dict every call builds; a kind's table is bounded (oldest first)."""
    from siltandem.numerics.memo import remembered

    calls = []

    def build(x):
        calls.append(x)
        return [x]

    reuse = {}
    first = remembered(reuse, "k", 1.0, lambda: build(1.0))
    assert remembered(reuse, "k", 1.0, lambda: build(1.0)) is first
    assert remembered(reuse, "k", 2.0, lambda: build(2.0)) == [2.0]
    assert remembered(reuse, "other", 1.0, lambda: build(-1.0)) == [-1.0]   # a kind apart
    assert calls == [1.0, 2.0, -1.0]
    remembered(None, "k", 1.0, lambda: build(1.0))
    assert calls[-1] == 1.0 and len(calls) == 4
    small = {}
    for x in range(5):
        remembered(small, "k", x, lambda x=x: build(x), entries=3)
    assert list(small[("remembered", "k")]) == [2, 3, 4]


def test_stacked_optics_rows_equal_each_design_lit_alone(monkeypatch):
    """optics.layers.light_designs lights the designs of one optical group at once ((B, M)
    arrays); each design's photocurrents equal, bit for bit, illuminate on it alone, which takes
    the same stacked pass with B = 1. Thicknesses of both varied layers and the grid shading (a
    [device] value) differ between rows."""
    from siltandem.optics.layers import light_designs, optical_group

    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    light = study_light(stack)
    designs = [layer_design(stack, {"top base.thickness_nm": t, "middle base.thickness_nm": m,
                                    "device.shading_fraction": f})
               for t, m, f in ((500.0, 1200.0, 0.0), (900.0, 3000.0, 0.05), (1400.0, 2000.0, 0.02))]
    compiled = [compile_stack(d) for d in designs]
    assert len({optical_group(c.model) for c in compiled}) == 1
    together = light_designs([c.model for c in compiled], light.wavelength_nm, light.photon_flux)
    from siltandem.optics import layers

    monkeypatch.setattr(layers, "LIGHT_BATCH", 2)            # batches of 2 and 1: the same rows
    assert light_designs([c.model for c in compiled], light.wavelength_nm, light.photon_flux) == together
    for circuit, currents in zip(compiled, together):
        alone = illuminate(circuit, light)
        assert currents == [float(alone.element(c.name).photocurrent_A_m2.reshape(-1)[0])
                            for c in circuit.model.subcells]
    assert len({tuple(c) for c in together}) == 3


def test_entry_memo_takes_equal_rows_from_the_row_before():
    """numerics/memo.EntryMemo on a stacked pass (..., B, M): an entry equal to the one a row
    before is taken from it (a run of equal rows evaluated once), others evaluated; the answer
    equals scipy.special.expn evaluated afresh (==), NaN entries included."""
    from scipy.special import expn

    from siltandem.numerics.memo import EntryMemo

    seen = []

    def counted(x):
        seen.append(np.size(x))
        return 2.0 * expn(3, x)

    memo = EntryMemo(counted)
    rng = np.random.default_rng(3)
    row = rng.uniform(0.0, 30.0, 40)
    x = np.stack([np.stack([row, row, row, row + 1.0, row + 1.0, row]) for _ in range(2)])  # (2, 6, 40)
    x[1] += 2.0
    x[0, 2, 5] = np.nan
    x[0, 4, 9] = 7.0
    got = memo(x, "rows")
    assert np.array_equal(got, 2.0 * expn(3, x), equal_nan=True)
    # per layer: rows 0, 3 and 5 differ from the row before (3 x 40 fresh); plus, in layer 0, the
    # NaN (never equal) and the changed entry of row 4 (row 3's entry after the NaN is fresh anyway)
    assert seen == [2 * 3 * 40 + 2]


def test_value_memo_answers_only_bit_equal_arguments():
    """numerics/memo.ValueMemo (the collection law's remembered fractions, laws/collection.py):
    bit-equal arguments answer from the memo without calling the function, any changed bit or
    shape calls it; every answer equals the function evaluated afresh (==) and is read-only."""
    from siltandem.numerics.memo import ValueMemo

    calls = []

    def law(a, w):
        calls.append(1)
        return np.exp(-a * w) + a * w

    memo = ValueMemo(law, entries=2)
    a = np.linspace(0.0, 5.0, 30)
    first = memo(a, 1e-6)
    assert not first.flags.writeable
    again = memo(a.copy(), 1e-6)
    assert again is first and len(calls) == 1
    nudged = memo(a, np.nextafter(1e-6, 1.0))          # one bit of the width changed
    assert len(calls) == 2 and np.array_equal(nudged, law(a, np.nextafter(1e-6, 1.0)))
    reshaped = memo(a.reshape(5, 6), 1e-6)              # same bytes, another shape
    assert len(calls) == 4 and reshaped.shape == (5, 6)
    np.testing.assert_array_equal(memo(a, 1e-6), law(a, 1e-6))  # evicted (2 entries): evaluated again


def test_collected_photocurrent_with_its_memo_equals_the_law_afresh():
    """laws/collection.collected_photocurrent remembers its regions' collected fractions (lit and
    uniform generation): a second
    call with the same absorber and another flux gives, bit for bit, the law with the memo emptied
    (Hovel's collection law, tests/test_collection.py checks it against published values)."""
    from siltandem.laws import collection

    alpha = np.logspace(3, 7, 200)
    geometry = dict(emitter_thickness_m=1e-7, emitter_diffusion_length_m=3e-7, emitter_diffusivity_m2_s=2e-4,
                    front_srv_m_s=10.0, depletion_width_m=5e-8, base_thickness_m=2e-6,
                    base_diffusion_length_m=4e-6, base_diffusivity_m2_s=1e-2, back_srv_m_s=100.0)
    collection.collected_photocurrent(alpha, photon_flux_m2_s=np.ones(200), uniform_absorbed_m2_s=1.0, **geometry)
    flux = np.linspace(1e18, 3e18, 200)
    kept = collection.collected_photocurrent(alpha, photon_flux_m2_s=flux, uniform_absorbed_m2_s=0.1 * flux,
                                             **geometry)
    collection._COLLECTION_MEMO.clear()
    collection._UNIFORM_MEMO.clear()
    fresh = collection.collected_photocurrent(alpha, photon_flux_m2_s=flux, uniform_absorbed_m2_s=0.1 * flux,
                                              **geometry)
    for a, b in zip(kept, fresh):
        np.testing.assert_array_equal(a, b)
def test_coupled_layer_designs_do_not_depend_on_their_batch():
    """Luminescent coupling varied: the coupled pilot's Newton steps (circuit/coupling.py) take a
    different count per design, and the solve's roots evaluate stopped designs at NaN
    (numerics/roots.py ``idle``); each design keeps, bit for bit, its numbers alone. Reference:
    the same designs solved one by one (no physics value is checked)."""
    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    columns = {"top base.luminescent_coupling": np.array([0.0, 0.05, 0.3, 0.9]),
               "middle base.thickness_nm": np.array([1500.0, 2500.0, 1200.0, 3500.0])}
    assert max(structures(stack, columns)) > 1
    batched = solve_designs(stack, columns)
    assert_same_bits(batched, one_by_one(stack, columns))
    assert len(set(np.round(batched["efficiency_pct"], 9))) == 4


def test_mixed_pilots_drive_each_subcell_only_on_its_rows(monkeypatch):
    """A batch whose designs are led by different subcells (solve/string.py: the pilot is the
    subcell of least photocurrent, per design): each subcell's forward law is driven only on the
    rows it leads (NaN elsewhere; those values were never selected), and every design keeps its
    numbers alone bit for bit. Reference: the same designs solved one by one."""
    from siltandem.circuit.coupling import CoupledSubcell
    from siltandem.circuit.elements import Subcell

    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    columns = {"top base.thickness_nm": np.array([300.0, 300.0, 1500.0, 1500.0]),
               "middle base.thickness_nm": np.array([1000.0, 4000.0, 1000.0, 4000.0])}
    driven = []
    for cls in (Subcell, CoupledSubcell):
        original = cls.pilot_current

        def recorded(self, t, temperature_K, _original=original):
            driven.append(np.isfinite(np.asarray(t)).any(axis=-1).reshape(-1))
            return _original(self, t, temperature_K)
        monkeypatch.setattr(cls, "pilot_current", recorded)
    batched = solve_designs(stack, columns)
    assert len(set(batched["limiting_subcell"])) > 1, "one pilot for all: the test proves nothing"
    # in the batch of four, no row is driven through two subcells at once
    per_call = [d for d in driven if d.size == 4]
    assert per_call and max(int(d.sum()) for d in per_call) < 4
    assert_same_bits(batched, one_by_one(stack, columns))


def test_chunks_of_a_layer_map_share_one_reuse_dict_and_equal_their_designs_alone(monkeypatch):
    """`siltandem.design_map` in chunks of 2 designs (in this process): the chunks get one and the
    same reuse dict (studies/sweep.study_reuse), let go when the map is done, and every row is,
    bit for bit, the design solved alone in a fresh one (the check is the project's own
    one-by-one path, whose physics the other test files check against their sources)."""
    from siltandem import design_map, parse_vary
    from siltandem.studies import sweep

    given = []
    keep = sweep.study_reuse

    def recorded(*args):
        given.append(keep(*args))
        return given[-1]

    monkeypatch.setattr(sweep, "study_reuse", recorded)
    stack = load_stack(ROOT / "stacks" / "demo_dual_layers.toml")
    first = parse_vary("top base.thickness_nm=900:2100:3", stack)
    second = parse_vary("top emitter.thickness_nm=60:120:2", stack)
    table = design_map(stack, first, second, progress=False, chunk_rows=2)
    assert len(given) == 3 and all(reuse is given[0] for reuse in given)
    assert given[0]                                        # something was kept between chunks
    assert getattr(sweep._STUDY_REUSE, "last", None) is None
    columns = {c: table[c].to_numpy() for c in (first.column, second.column)}
    alone = one_by_one(stack, columns)
    assert_same_bits({key: table[key].to_numpy() for key in alone}, alone)
