"""Work the layer-stack yield year no longer repeats (issue 19's year speed) gives the same numbers,
bit for bit:

* each subcell solved on its own terminals after the whole stack (the four-terminal powers) reuses
  the whole stack's cached law parameters, tables and inverses where its light is the same
  (Subcell.on_string): the year's summary and hourly table equal (==) those of a year whose
  subcells build everything afresh;
* the pilot of a string of one subcell is asked for its junction voltage at a few currents only:
  it is inverted without building its table (laws/compiled_untabled.py, the law evaluated at the
  table's samples the search reads), and gives the table inverse's numbers, bit for bit;
* the compiled element pass never reads an isotype member's table slots (its law inverts without
  a table), so solve/string.py _padded leaves them unwritten: filling them with NaN changes no
  voltage, slope or coverage flag of the pass.

Reference: the same computation without the reuse (identity, not physics; the physics of these
laws is checked in tests/test_compiled_isotype.py, tests/test_layer_year.py and the solver's
tests). The stack is the invented demo triple (stacks/demo_triple_layers.toml): demo data, used
for invariants only.
"""
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack
from siltandem.circuit.compile import compile_stack
from siltandem.circuit.elements import Subcell
from siltandem.laws import compiled as kernels
from siltandem.laws.compiled_untabled import subcell_inverse_untabled
from siltandem.numerics.tables import LawTable
from siltandem.materials.spectra import get_spectrum
from siltandem.optics.illuminate import illuminate
from siltandem.solve.string import SeriesString
from siltandem.studies import yield_year as Y

ROOT = Path(__file__).resolve().parents[1]
TRIPLE = ROOT / "stacks" / "demo_triple_layers.toml"


def test_on_string_shares_the_cache_and_a_new_photocurrent_does_not():
    cell = Subcell("a", gap_eV=np.array([[1.4]]), j02_A_m2=np.array([[1e-9]]),
                   photocurrent_A_m2=np.array([[300.0]]))
    table = cell._table(300.0)
    moved = cell.on_string(2)
    assert moved.string == 2 and cell.string == 1
    assert moved._table(300.0) is table                  # the same table, not rebuilt
    relit = moved.with_photocurrent(310.0)
    assert relit._cache is not cell._cache
    assert relit._table(300.0) is not table
    # the rebuilt table follows the new photocurrent: the junction law at the same grid
    # point carries 10 A/m2 more (J = Jph - dark current)
    grid_point = relit._table(300.0).u[0, 200]
    j_old, _ = cell.junction_current(np.array([[grid_point]]), 300.0)
    j_new, _ = relit.junction_current(np.array([[grid_point]]), 300.0)
    assert j_new[0, 0] - j_old[0, 0] == pytest.approx(10.0, rel=1e-12)


def _lit_triple(scales):
    """The demo triple's elements under AM1.5G, the photocurrents scaled per design (rows)."""
    circuit = illuminate(compile_stack(load_stack(TRIPLE)), get_spectrum("am1.5g"))
    scales = np.asarray(scales, dtype=float)
    return [e.with_photocurrent(e.photocurrent_A_m2[:, 0] * scales) if e.kind == "subcell" else e
            for e in circuit.strings[0]]


def _untabled_equals_tabled(params, targets):
    table = LawTable(*kernels.subcell_table(params, 512, 160))
    want = kernels.invert(kernels.SUBCELL_LAW, params, table, targets, increasing=False)
    got = subcell_inverse_untabled(params, kernels.as_input(targets), 512, 160, kernels.XTOL,
                                   kernels.RTOL, kernels.MAX_ITERATIONS)
    for w, g in zip(want, got):
        np.testing.assert_array_equal(w, g)
    return want


def test_untabled_inverse_equals_the_table_inverse_bit_for_bit():
    # the silicon base (its recombination law) and a III-V top cell of the demo triple, five
    # designs at five temperatures; currents from deep reverse to beyond the photocurrent, the
    # table's ends a few rounding units out, repeats and NaN
    elements = _lit_triple([1.0, 0.9, 0.7, 0.4, 0.05])
    temperature = np.array([[280.0], [298.15], [310.0], [330.0], [350.0]])
    for cell in [e for e in elements if e.kind == "subcell"]:
        params = cell._law_parameters(temperature)
        jph = params[:, :1]
        shape = np.linspace(-0.3, 1.02, 41)[None, :]
        targets = np.concatenate([jph * shape, jph * shape[:, ::-1], np.full((5, 2), np.nan)], axis=1)
        table = LawTable(*kernels.subcell_table(params, 512, 160))
        ends = np.concatenate([table.j[:, :1] * (1 + 2e-16), table.j[:, -1:] * (1 - 2e-16),
                               table.j[:, :1], table.j[:, -1:]], axis=1)
        u, _, inside = _untabled_equals_tabled(params, kernels.as_input(np.concatenate([targets, ends], axis=1)))
        assert inside[:, :82].sum() > 300 and np.isfinite(u).sum() > 300
    # one law for a batch of targets (R = 1), a subcell with breakdown (the reverse grid is then
    # uniform above the breakdown voltage)
    breakdown = Subcell("b", gap_eV=np.array([[1.8]]), j02_A_m2=np.array([[1e-7]]),
                        shunt_S_m2=np.array([[10.0]]), breakdown_V=np.array([[-8.0]]),
                        breakdown_factor=np.array([[0.1]]), photocurrent_A_m2=np.array([[150.0]]))
    params = breakdown._law_parameters(300.0)
    _untabled_equals_tabled(params, np.array([[-400.0, -10.0, 0.0, 100.0, 149.0, 151.0],
                                              [160.0, 149.99, -1e3, 20.0, 20.0, -5.0]]))


def test_a_lone_pilot_is_inverted_without_a_table_and_the_same_numbers():
    elements = _lit_triple(np.linspace(0.3, 1.0, 7))
    temperature = np.linspace(285.0, 340.0, 7)[:, None]
    silicon = [e for e in elements if e.kind == "subcell"][-1]
    lone = SeriesString([silicon], temperature)
    currents = np.concatenate([np.zeros((7, 1)), 0.99 * lone.pilot_photocurrent], axis=1)
    t = lone.pilot_voltage_at(currents)
    key = ("table", temperature.tobytes())
    assert key not in silicon._cache                      # no table was built
    # the same subcell, its table built, through the tabled inverse (a fresh cache each)
    again = replace(silicon, string=1)
    t_table = again.junction_voltage_at(currents, temperature)
    assert key in again._cache
    np.testing.assert_array_equal(t, t_table)
    # open circuit: the junction law carries (almost) no current there
    j, _ = silicon.junction_current(t[:, :1], temperature)
    assert np.all(np.abs(j) < 1e-6 * lone.pilot_photocurrent)


def test_year_with_shared_and_untabled_inverses_equals_the_year_building_every_table(summer_days, monkeypatch):
    stack = load_stack(TRIPLE)
    shared = Y.annual_yield(stack, summer_days)
    monkeypatch.setattr(Subcell, "on_string", lambda self, number: replace(self, string=number))
    tabled = Subcell._junction_voltage_table
    monkeypatch.setattr(Subcell, "_junction_voltage_table",
                        lambda self, current, temperature, _=True: tabled(self, current, temperature, True))
    fresh = Y.annual_yield(stack, summer_days)
    assert len(shared.hourly) > 50
    assert shared.summary["annual_energy_kWh_m2"] > 0
    assert shared.summary == fresh.summary
    for column in shared.hourly.columns:
        a, b = shared.hourly[column].to_numpy(), fresh.hourly[column].to_numpy()
        if a.dtype.kind == "f":
            np.testing.assert_array_equal(a, b, err_msg=column)
        else:
            assert (a == b).all(), column


def test_element_pass_never_reads_an_isotype_members_table_slots():
    circuit = illuminate(compile_stack(load_stack(TRIPLE)), get_spectrum("am1.5g"))
    temperature = np.full((3, 1), 298.15)
    # three designs of one batch (the photocurrents scaled), so the tables have rows
    string = SeriesString([e.with_photocurrent(e.photocurrent_A_m2[:, 0] * np.array([1.0, 0.8, 0.5]))
                           if e.kind == "subcell" else e for e in circuit.strings[0]], temperature)
    group = string._group({})
    codes = group.packed[0]
    assert (codes == kernels.ISOTYPE_LAW).any() and (codes != kernels.ISOTYPE_LAW).any()
    photocurrent = string.pilot_photocurrent
    current = photocurrent * np.linspace(-0.5, 0.999, 40)[None, :]
    want = kernels.element_voltages(kernels.as_input(current), *group.packed)
    spoiled = list(group.packed)
    for k in (2, 3, 4):                  # grid_u, grid_j, grid_slope (E, rows, width)
        spoiled[k] = spoiled[k].copy()
        spoiled[k][codes == kernels.ISOTYPE_LAW] = np.nan
    got = kernels.element_voltages(kernels.as_input(current), *spoiled)
    for w, g in zip(want, got):
        np.testing.assert_array_equal(w, g)
    # the pass did invert something at these currents (not all NaN)
    assert np.isfinite(want[0][codes == kernels.ISOTYPE_LAW]).mean() > 0.5
