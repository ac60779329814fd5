"""Ranking tunnel-junction placements in a layer stack.

Sources: the electron-affinity rule (R. L. Anderson, Solid-State Electron. 5 (1962) 341) on
the affinities and gaps of ../shared/REFERENCES.md for the GaP/Si offsets; every ranked row is
also checked against the main job run on its own.
"""
from pathlib import Path

import numpy as np
import pytest

from siltandem import StackError, run_stack, load_stack, rank_placements
from siltandem.studies.placements import auto_candidates
from test_main_job import cli

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "stacks" / "demo_placements.toml"


def test_ranking_finds_the_costly_interface():
    # a silicon junction under a p-GaP buffer creates a p-P GaP/Si interface: holes face the
    # large valence-band offset (about 0.9 eV by the electron-affinity rule on the REFERENCES
    # affinities and gaps), which costs far more than the GaP or hetero junctions
    table = rank_placements(load_stack(DEMO), progress=False)
    assert list(table["rank"]) == [1, 2, 3]
    assert table["placement"].iloc[-1] == "in silicon"
    worst, best = table.iloc[-1], table.iloc[0]
    assert worst["interface_penalty_pct_abs"] > 1.0
    assert best["interface_penalty_pct_abs"] < 0.2
    assert np.all(np.diff(table["efficiency_pct"].to_numpy()) <= 0)
    # each candidate's row equals the main job on the stack with that placement
    from siltandem.stack.placements import with_placement

    stack = load_stack(DEMO)
    candidate = next(p for p in stack.extra["placements"] if p.name == "in silicon")
    direct = run_stack(with_placement(stack, candidate), curve_points=40).summary
    assert worst["efficiency_pct"] == pytest.approx(direct["efficiency_pct"], rel=1e-12)


def test_auto_tries_the_pair_in_every_material_version():
    candidates = auto_candidates(load_stack(DEMO))
    names = [c.name for c in candidates]
    assert len(names) == 3   # as given (GaP) = in GaP, in Si, hetero GaP/Si
    assert any("in Si" in n for n in names) and any("hetero GaP/Si" in n for n in names)
    assert all(c.after == 3 for c in candidates)   # after the p-GaP buffer: the p->n boundary


def test_auto_ranking_equals_each_candidate_solved_alone():
    """--auto shares one compile/optics memo (reuse) among its candidates: every ranked row
    equals, to the last bit, the candidate compiled, lit and solved on its own in a fresh memo
    (the one-by-one path), and the ranking is theirs."""
    import pandas as pd

    from siltandem.studies.placements import evaluate_candidates

    stack = load_stack(DEMO)
    candidates = auto_candidates(stack)
    table = rank_placements(stack, auto=True, progress=False)
    alone = pd.concat([evaluate_candidates(pd.DataFrame({"design": [k]}), stack=load_stack(DEMO),
                                           candidates=candidates) for k in range(len(candidates))])
    alone = alone.sort_values("efficiency_pct", ascending=False).reset_index(drop=True)
    assert list(table["placement"]) == list(alone["placement"])
    for column in alone.columns:
        if alone[column].dtype.kind == "f":
            assert np.array_equal(table[column].to_numpy(), alone[column].to_numpy(), equal_nan=True), column
        else:
            assert list(table[column]) == list(alone[column]), column


def test_run_uses_the_first_placement():
    summary = run_stack(load_stack(DEMO), curve_points=40).summary
    assert "first declared placement" in summary["warnings"][0]
    assert summary["efficiency_pct"] > 20


@pytest.mark.parametrize("old, new, message", [
    ('after = "buffer"\n[[placement.layer]]\nname = "junction p"\nmaterial = "Si"',
     'after = "nowhere"\n[[placement.layer]]\nname = "junction p"\nmaterial = "Si"',
     "no layer named 'nowhere'"),
    ('name = "in GaP"\nafter = "buffer"', 'name = "in GaP"\nafter = "buffer"\nbefore = "buffer"',
     "exactly one of 'after' or 'before'"),
    ('name = "junction p"\nmaterial = "GaP"\nthickness_nm = 20\ndoping = "p:1e20"\n'
     '[[placement.layer]]\nname = "junction n"\nmaterial = "GaP"',
     'name = "buffer"\nmaterial = "GaP"\nthickness_nm = 20\ndoping = "p:1e20"\n'
     '[[placement.layer]]\nname = "junction n"\nmaterial = "GaP"', "already in the stack"),
])
def test_bad_placements(tmp_path, old, new, message):
    text = DEMO.read_text()
    assert old in text
    path = tmp_path / "p.toml"
    path.write_text(text.replace(old, new, 1))
    with pytest.raises(StackError, match=message):
        load_stack(path)


def test_placements_command(tmp_path):
    done = cli("placements", DEMO, "--csv", tmp_path / "r.csv", "--plot", tmp_path / "r.png",
               "--quiet")
    assert done.returncode == 0, done.stderr
    assert "in silicon" in done.stdout and "rank" in done.stdout
    assert (tmp_path / "r.png").stat().st_size > 1000
    bad = cli("placements", ROOT / "stacks" / "demo_dual.toml")
    assert bad.returncode == 2 and "layer stacks" in bad.stderr


def test_placements_by_energy_rank_by_the_year():
    from siltandem.stack.placements import with_placement
    from siltandem.studies.placements import energy_of_candidates
    from siltandem import annual_yield, read_weather

    stack = load_stack(DEMO)
    weather = read_weather("demo")
    table = energy_of_candidates(stack, rank_placements(stack, progress=False),
                                 weather=weather, progress=False)
    assert np.all(np.diff(table["annual_energy_kWh_m2"].to_numpy()) <= 0)
    assert table["placement"].iloc[-1] == "in silicon"
    best = next(p for p in stack.extra["placements"] if p.name == table["placement"].iloc[0])
    alone = annual_yield(with_placement(stack, best), weather).summary["annual_energy_kWh_m2"]
    assert table["annual_energy_kWh_m2"].iloc[0] == pytest.approx(alone, rel=1e-12)
