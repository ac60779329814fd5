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
