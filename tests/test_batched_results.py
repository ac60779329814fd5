"""Placements and loss waterfalls solve their alike strings in batches (result/batched.py): every
design's numbers must be, to the last bit (``==``), those of solving it on its own.

Reference: the one-by-one path, which the project validates elsewhere: ``compute_result`` of each
candidate stack (the main job, every string solved alone), and ``result.batched.ONE_BY_ONE``
(every circuit and string of a study solved alone). Stacks: stacks/demo_placements.toml,
stacks/demo_triple_layers.toml and the element demos (INVENTED DATA); the junction-thickness
variants below are invented too (they only make candidates of one circuit shape).
"""
from dataclasses import replace
import json
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack, loss_waterfall, rank_placements
from siltandem.circuit.elements import Subcell, batch
from siltandem.result import batched
from siltandem.result.batched import circuit_key, solve_alike, string_key
from siltandem.result.driver import compute_result, compute_results
from siltandem.solve.series import solve_string
from siltandem.stack.placements import Placement, with_placement
from siltandem.studies.placements import auto_candidates

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "stacks" / "demo_placements.toml"
HEADLINE = ("efficiency_pct", "voc_V", "jsc_mA_cm2", "fill_factor_pct", "mpp_V", "mpp_mA_cm2")


@pytest.fixture
def one_by_one():
    """Switch the batched study path to one solve per circuit and string, and back."""
    def switch(function, *args, **kwargs):
        batched.ONE_BY_ONE = True
        try:
            return function(*args, **kwargs)
        finally:
            batched.ONE_BY_ONE = False
    return switch


def _candidates(stack):
    """--auto's candidates, the declared ones, and the declared ones with 30 nm junction layers
    (invented variants: each has the shape of the declared candidate it varies)."""
    thicker = tuple(Placement(f"{p.name}, 30 nm", p.after,
                              tuple(replace(layer, thickness_nm=30.0) for layer in p.layers))
                    for p in stack.extra["placements"])
    return list(auto_candidates(stack)) + list(stack.extra["placements"]) + list(thicker)


def _text(summary):
    return json.dumps(summary, sort_keys=True, default=repr)


def test_candidates_solved_together_equal_each_solved_alone():
    stack = load_stack(DEMO)
    stacks = [with_placement(stack, c) for c in _candidates(stack)]
    together = compute_results(stacks, curve_points=60, reuse={})
    alone = [compute_result(s, curve_points=60, reuse={}) for s in stacks]
    # the test joins circuits for real: several candidates share a circuit shape
    shapes = {circuit_key(r.circuit) for r in together}
    assert len(shapes) == 3 and len(stacks) == 9
    for batch_result, own in zip(together, alone):
        for key in HEADLINE:
            assert batch_result.summary[key] == own.summary[key], key
        # the whole summary too: penalties (removal strings), subcells alone, interfaces, curve
        assert _text(batch_result.summary) == _text(own.summary)
        for a, b in zip(batch_result.solutions, own.solutions):
            assert a.element_names == b.element_names
            for name in ("current_A_m2", "voltage_V", *b.element_names):
                assert np.array_equal(a.curve[name], b.curve[name], equal_nan=True), name


def test_auto_ranking_is_the_one_by_one_ranking(one_by_one):
    stack = load_stack(DEMO)
    table = rank_placements(stack, auto=True, progress=False)
    reference = one_by_one(rank_placements, load_stack(DEMO), auto=True, progress=False)
    assert list(table.columns) == list(reference.columns)
    for column in table.columns:
        if table[column].dtype.kind == "f":
            assert np.array_equal(table[column].to_numpy(), reference[column].to_numpy(),
                                  equal_nan=True), column
        else:
            assert list(table[column]) == list(reference[column]), column


@pytest.mark.parametrize("name", ["demo_triple_layers.toml", "demo_four_terminal.toml",
                                  "demo_dual.toml"])
def test_loss_steps_solved_together_equal_one_by_one(name, one_by_one):
    # the triple has luminescent coupling, six interfaces and two junctions; the four-terminal
    # stack two strings; the element dual the optics steps an element stack repeats
    stack = load_stack(ROOT / "stacks" / name)
    assert loss_waterfall(stack) == one_by_one(loss_waterfall, stack)


def _cell(name, gap_eV, photocurrent_A_m2, **values):
    return Subcell(name, batch(gap_eV), **{k: batch(v) for k, v in values.items()}) \
        .with_photocurrent(photocurrent_A_m2)


def test_solve_alike_joins_only_strings_the_solver_treats_alike():
    ideal = [_cell("a", 1.7, 180.0), _cell("b", 1.12, 400.0, ere=0.01)]
    shunted = _cell("c", 1.4, 250.0, shunt_S_m2=1.0)      # a table, not the explicit law
    two = [_cell("top", 1.8, 160.0), _cell("bottom", 1.1, 170.0)]
    jobs = [([ideal[0]], 300.0, 0), ([ideal[1]], 300.0, 0), ([shunted], 300.0, 0),
            (two, 300.0, 40), ([ideal[0]], 320.0, 0)]
    keys = [string_key(*job) for job in jobs]
    assert keys[0] == keys[1]                 # names and values differ, the shape does not
    assert keys[2] != keys[0]                 # the shunt changes the solver's path
    assert keys[4] != keys[0]                 # another temperature
    for job, found in zip(jobs, solve_alike(jobs)):
        own = solve_string(job[0], job[1], curve_points=job[2])
        assert found.element_names == own.element_names
        for field in ("voc_V", "jsc_A_m2", "mpp_V", "mpp_A_m2", "mpp_W_m2", "fill_factor"):
            assert np.array_equal(getattr(found, field), getattr(own, field)), field
        for name, values in own.voltage_at_mpp_V.items():
            assert np.array_equal(found.voltage_at_mpp_V[name], values)


def test_a_candidate_that_cannot_be_compiled_fails_alone():
    # junction layers doped at 1e16 make a p-n junction of the wrong polarity (the layer
    # compiler's rule): that candidate gets compute_result's own error, the others their Results
    from siltandem import StackError

    stack = load_stack(DEMO)
    good = stack.extra["placements"][0]
    bad = Placement("too lightly doped", good.after,
                    tuple(replace(layer, doping_cm3=1e16) for layer in good.layers))
    found = compute_results([with_placement(stack, good), with_placement(stack, bad)],
                            curve_points=60, reuse={})
    with pytest.raises(StackError) as raised:
        compute_result(with_placement(stack, bad), curve_points=60, reuse={})
    assert isinstance(found[1], StackError) and found[1].problem == raised.value.problem
    own = compute_result(with_placement(stack, good), curve_points=60, reuse={})
    assert _text(found[0].summary) == _text(own.summary)


def test_four_terminal_designs_joined_keep_the_coupling_across_strings():
    # two strings, the top's luminescence reaching the silicon of the other string: the
    # silicon's photocurrent grows by the top's emission at its own MPP (solve_strings), in the
    # joined solve as alone. Two top-base thicknesses (invented) of one circuit shape.
    from siltandem.studies.sweep import layer_design

    stack = load_stack(ROOT / "stacks" / "demo_four_terminal_layers.toml")
    stacks = [layer_design(stack, {"top base.thickness_nm": t}) for t in (1400.0, 1100.0)]
    together = compute_results(stacks, curve_points=60, reuse={})
    assert circuit_key(together[0].circuit) == circuit_key(together[1].circuit)
    assert together[0].summary["subcells"][1]["coupled_mA_cm2"] > 0
    for found, design in zip(together, stacks):
        own = compute_result(design, curve_points=60, reuse={})
        assert _text(found.summary) == _text(own.summary)
