"""A layer-thickness match found on batched optics (studies.matching.ThicknessOptics).

Check values: the same photocurrents as each thickness compiled and illuminated on its own
(sweep.photocurrents_at) to rounding, and the matched thickness against the crossing of a dense
grid of full solves (every design compiled, illuminated and solved: sweep.solve_designs), the
current-matching condition of a series string (Green, Solar Cells, 1982, ch. 10). The demo stack is
invented data, used here only to compare two ways of computing the same number.
"""
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack, match_currents, parse_vary
from siltandem.studies import matching
from siltandem.studies.sweep import photocurrents_at, solve_designs

ROOT = Path(__file__).resolve().parents[1]
TRIPLE = ROOT / "stacks" / "demo_triple_layers.toml"


@pytest.fixture(scope="module")
def stack():
    return load_stack(TRIPLE)


def test_batched_thickness_optics_equal_each_design_alone(stack):
    optics = matching.thickness_optics(stack, "middle base.thickness_nm")
    assert optics is not None
    values = np.array([800.0, 1077.0, 2500.0, 4000.0])
    batched = optics(values)
    for i, value in enumerate(values):
        alone = photocurrents_at(stack, "middle base.thickness_nm", value)
        for name, current in alone.items():
            assert batched[name][i] == pytest.approx(current, rel=1e-12)


def test_front_layers_keep_the_design_by_design_search(stack):
    # a layer above the first emitter may join or leave the coherent front: no shortcut
    assert matching.thickness_optics(stack, "top window.thickness_nm") is None
    assert matching.thickness_optics(stack, "middle base.doping_cm3") is None


def test_matched_thickness_against_a_dense_grid_of_full_solves(stack, monkeypatch):
    variation = parse_vary("middle base.thickness_nm=1000:4000:7", stack)
    _, matches = match_currents(stack, variation)
    assert len(matches) >= 1
    for match in matches:
        a, b = match["subcells"]
        root = match["value"]
        # 41 full solves 0.1 nm apart around the root: the crossing by linear interpolation
        grid = np.linspace(root - 2.0, root + 2.0, 41)
        solved = solve_designs(stack, {variation.column: grid})
        d = solved[f"{a}.photocurrent_mA_cm2"] - solved[f"{b}.photocurrent_mA_cm2"]
        k = int(np.flatnonzero(np.sign(d[:-1]) * np.sign(d[1:]) <= 0)[0])
        crossing = grid[k] - d[k] * (grid[k + 1] - grid[k]) / (d[k + 1] - d[k])
        # photocurrents smooth in the thickness: over 0.1 nm the interpolation is good to far
        # below 1e-3 nm (tolerance: common practice, no source)
        assert root == pytest.approx(crossing, abs=1e-3)
    # the same root as the search that compiles a design per step (the shortcut switched off)
    monkeypatch.setattr(matching, "thickness_optics", lambda *args, **kwargs: None)
    _, slow = match_currents(stack, variation)
    assert [m["subcells"] for m in slow] == [m["subcells"] for m in matches]
    for fast, reference in zip(matches, slow):
        assert fast["value"] == pytest.approx(reference["value"], rel=1e-9)
        assert fast["efficiency_pct"] == pytest.approx(reference["efficiency_pct"], rel=1e-9)
