"""Large stacks: many resistors, subcells and isotype interfaces, and the batched penalties.

No timing here (the machine is shared): the checks are correctness at large N against
independent references (Ohm's law, the string solved again without each element one by one, the
per-wavelength photon count), and call counts as the complexity guard: the efficiency penalties
of a string cost one solve per group of alike elements, not one per element.

The stacks are built by benchmarks/bench_scaling.py (invented values, no real device).
"""
import sys
from pathlib import Path

import numpy as np
import pytest

from siltandem.result import penalties
from siltandem.result import driver as result_module
from siltandem.circuit.compile import compile_stack
from siltandem.circuit.elements import Resistor, Subcell, batch
from siltandem.optics.illuminate import illuminate
from siltandem.result.penalties import removal_powers
from siltandem import run_stack, load_stack
from siltandem.solve.series import solve_string
from siltandem.materials.spectra import get_spectrum
from test_photocurrents_large import per_wavelength

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
import bench_scaling  # noqa: E402

TEMPERATURE_K = 298.15
STACKS = Path(__file__).resolve().parents[1] / "stacks"


def built(tmp_path, family, n):
    path = tmp_path / f"{family}_{n}.toml"
    path.write_text(bench_scaling.FAMILIES[family][0](n))
    return load_stack(path)


def lit_strings(stack):
    light = get_spectrum(stack.conditions.spectrum, suns=stack.conditions.suns,
                         relative_to=stack.folder)
    return illuminate(compile_stack(stack), light).strings


def one_by_one(string):
    """Reference: the string solved again without each passive element, one at a time."""
    return {e.name: float(np.ravel(solve_string([x for x in string if x is not e],
                                                TEMPERATURE_K).mpp_W_m2)[0])
            for e in string if e.kind != "subcell"}


@pytest.fixture
def solve_calls(monkeypatch):
    calls = []
    for module in (penalties, result_module):
        original = module.solve_string

        def counted(string, *args, _original=original, **kwargs):
            calls.append(len(string))
            return _original(string, *args, **kwargs)

        monkeypatch.setattr(module, "solve_string", counted)
    return calls


# ----------------------------------------------------------------------------------------------
# batched penalties against the strings solved one by one

@pytest.mark.parametrize("name", ["demo_dual.toml", "demo_triple_layers.toml",
                                  "demo_interfaces.toml", "demo_tunnel_limit.toml",
                                  "demo_concentrator.toml", "demo_four_terminal.toml"])
def test_removal_powers_equal_one_by_one_solves_on_the_demo_stacks(name):
    for string in lit_strings(load_stack(STACKS / name)):
        reference = one_by_one(string)
        got = removal_powers(string, TEMPERATURE_K)
        assert list(got) == list(reference)
        np.testing.assert_allclose(list(got.values()), list(reference.values()), rtol=1e-12,
                                   atol=1e-9)


@pytest.mark.parametrize("family, n", [("subcells", 8), ("resistors", 30), ("isotype", 6)])
def test_removal_powers_equal_one_by_one_solves_on_larger_stacks(tmp_path, family, n):
    (string,) = lit_strings(built(tmp_path, family, n))
    reference = one_by_one(string)
    got = removal_powers(string, TEMPERATURE_K)
    np.testing.assert_allclose([got[k] for k in reference], list(reference.values()),
                               rtol=1e-12, atol=1e-9)


def test_interleaved_groups_of_resistors_and_junctions(am15g):
    # resistors and tunnel junctions alternate between subcells; one group each
    from siltandem.circuit.elements import TunnelJunction
    from siltandem.laws.optics import step_absorber_photocurrents

    gaps = [1.9, 1.4, 1.1]
    currents = step_absorber_photocurrents(gaps, [0.9] * 3, am15g.wavelength_nm,
                                           am15g.photon_flux)
    cells = [Subcell(f"cell {k}", batch(g), absorptance=batch(0.9), ere=batch(0.01))
             .with_photocurrent(j) for k, (g, j) in enumerate(zip(gaps, currents))]

    def junction(k, peak):
        return TunnelJunction(f"junction {k}", batch(peak), batch(0.05), batch(peak / 20),
                              batch(0.3))

    string = [Resistor("r0", batch(2e-5)), cells[0], junction(1, 900.0),
              Resistor("r1", batch(5e-5)), cells[1], junction(2, 2000.0),
              Resistor("r2", batch(1e-5)), cells[2], Resistor("r3", batch(3e-5))]
    reference = one_by_one(string)
    got = removal_powers(string, TEMPERATURE_K)
    np.testing.assert_allclose([got[k] for k in reference], list(reference.values()),
                               rtol=1e-12, atol=1e-9)


# ----------------------------------------------------------------------------------------------
# correctness at large N

def test_a_thousand_resistors_obey_ohms_law(tmp_path, solve_calls):
    stack = built(tmp_path, "resistors", 1000)
    answer = run_stack(stack)
    resistances = np.full(1000, 0.001 * 1e-4)                     # 1 mohm cm2 each [ohm m2]
    total = resistances.sum()
    iv = answer.iv
    current = iv["current_mA_cm2"].to_numpy() * 10.0               # A/m2
    drops = iv[[f"resistor {k + 1}_V" for k in range(1000)]].to_numpy()
    # each resistor drops -J R (Ohm's law), and together -J sum(R)
    np.testing.assert_allclose(drops, -current[:, None] * resistances[None, :], rtol=1e-12,
                               atol=1e-300)
    np.testing.assert_allclose(drops.sum(axis=1), -current * total, rtol=1e-11, atol=1e-15)
    np.testing.assert_allclose(iv["voltage_V"], iv["silicon_V"] + drops.sum(axis=1),
                               rtol=1e-12, atol=1e-12)
    # the same cell with one lumped resistor of the sum: the same MPP
    (string,) = lit_strings(stack)
    cell = string[0]
    lumped = solve_string([cell, Resistor("sum", batch(total))], TEMPERATURE_K)
    assert answer.summary["mpp_W_m2"] == pytest.approx(float(lumped.mpp_W_m2[0]), rel=1e-12)
    # each resistor's penalty: the cell with the other 999 (Ohm: sum minus one)
    without_one = solve_string([cell, Resistor("sum", batch(total - resistances[0]))],
                               TEMPERATURE_K)
    expected = 100 * (float(without_one.mpp_W_m2[0]) - answer.summary["mpp_W_m2"]) / \
        answer.summary["conditions"]["irradiance_W_m2"]
    penalties_pct = [e["efficiency_penalty_pct_abs"] for e in answer.summary["elements"]
                     if e["kind"] == "resistor"]
    assert len(penalties_pct) == 1000
    np.testing.assert_allclose(penalties_pct, expected, rtol=1e-9, atol=0)
    # the complexity guard: main solve, the cell alone, one batch for all 1000 penalties
    assert len(solve_calls) == 3


def test_fifty_subcells_with_junctions(tmp_path, solve_calls, am15g):
    stack = built(tmp_path, "subcells", 50)
    answer = run_stack(stack)
    s = answer.summary
    assert np.isfinite(s["efficiency_pct"]) and 0 < s["efficiency_pct"] < 100
    assert len(s["subcells"]) == 50 and len(s["tunnel_junctions"]) == 49
    # photocurrents against the independent per-wavelength photon count
    gaps = [c["gap_eV"] for c in s["subcells"]]
    reference = per_wavelength(gaps, [0.9] * 50, am15g.wavelength_nm, am15g.photon_flux)
    np.testing.assert_allclose([c["photocurrent_mA_cm2"] * 10 for c in s["subcells"]],
                               reference, rtol=1e-12)
    assert all(np.isfinite(e["efficiency_penalty_pct_abs"]) for e in s["elements"]
               if e["kind"] != "subcell")
    # main solve, 50 cells alone, one batch for the 49 junctions, one for the contact resistor
    assert len(solve_calls) == 1 + 50 + 2


def test_forty_isotype_layers_solve(tmp_path, solve_calls):
    stack = built(tmp_path, "isotype", 40)
    answer = run_stack(stack)
    s = answer.summary
    assert np.isfinite(s["efficiency_pct"]) and s["efficiency_pct"] > 0
    assert len(s["interfaces"]) == 41                          # 40 in the buffer, 1 at the top
    assert all(np.isfinite(row["efficiency_penalty_pct_abs"]) for row in s["interfaces"])
    assert abs(s["power_balance_error_W_m2"]) < 1e-6 * s["mpp_W_m2"]
    # main solve, 2 cells alone, the junction's penalty alone, one batch per interface group:
    # interfaces batch together unless a non-numeric setting differs (result/penalties.py), here
    # the carrier and which sides take the Fermi-Dirac law (a side within 3 kT of its band:
    # circuit/isotype.py; the bias is a number per design; every interface takes the exact
    # depletion side)
    from siltandem.circuit.compile import compile_stack
    from siltandem.circuit.elements import IsotypeInterface

    groups = {(e.carrier, e.accumulation_fermi_eV is None, e.depletion_fermi_eV is None)
              for e in compile_stack(stack).elements if isinstance(e, IsotypeInterface)}
    assert len(groups) >= 1
    assert len(solve_calls) == 1 + 2 + 1 + len(groups)
