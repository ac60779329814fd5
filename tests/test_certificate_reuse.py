"""Work the MPP certificate no longer does (issue 19's year speed) gives the same numbers, bit for
bit:

* solve/slopes.py slope_bounds evaluates the subcell laws' slope ranges only where the bound
  reads them (the cells a row really asks for, not the padding that repeats its first cell; the
  pilot's range over t, the other subcells' over their junction voltages, the pilot's junction
  range only where it lights a coupled subcell): its bounds and widths equal (==) those of
  evaluating every entry;
* the certificate's later passes on the unproven designs alone (SeriesString.rows) take the rows
  of the subcells' law parameters and junction tables the whole batch built
  (circuit/elements.py take_rows_with_tables): equal (==) to building them again;
* so a week of the layer-stack yield year equals (==) the year without either.

Reference: the same computation without the reuse (identity, not physics; the certificate's
bounds are checked against exhaustive sampling in tests/test_global_mpp.py). The stack is the
invented demo triple (stacks/demo_triple_layers.toml): demo data, used for invariants only.
"""
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack
from siltandem.circuit import elements as element_module
from siltandem.circuit.compile import compile_stack
from siltandem.materials.spectra import get_spectrum
from siltandem.optics.illuminate import illuminate
from siltandem.solve import certificate, slopes
from siltandem.solve import string as string_module
from siltandem.solve.string import SeriesString
from siltandem.studies import yield_year as Y

ROOT = Path(__file__).resolve().parents[1]
TRIPLE = ROOT / "stacks" / "demo_triple_layers.toml"


def _coupled_triple(scales):
    """The demo triple's elements under AM1.5G (its layers couple light from each subcell to
    the next), each subcell's photocurrent scaled per design: ``scales`` (designs, subcells)."""
    circuit = illuminate(compile_stack(load_stack(TRIPLE)), get_spectrum("am1.5g"))
    scales = np.asarray(scales, dtype=float)
    out, k = [], 0
    for e in circuit.strings[0]:
        if e.kind == "subcell":
            e = e.with_photocurrent(e.photocurrent_A_m2[:, 0] * scales[:, k])
            k += 1
        out.append(e)
    return out


@pytest.fixture(scope="module")
def sampled():
    """A coupled string of six designs whose pilots differ, sampled at 40 pilot voltages from
    near short circuit to open circuit, as the certificate's first segment."""
    scales = np.array([[1.0, 1.0, 1.0], [0.8, 1.0, 1.0], [1.0, 0.7, 1.0], [1.0, 1.0, 0.6],
                       [0.9, 1.1, 1.2], [1.2, 1.0, 0.95]])
    temperature = np.linspace(290.0, 330.0, 6)[:, None]
    string = SeriesString(_coupled_triple(scales), temperature)
    assert string.coupled and len(set(string.pilot_index[:, 0])) == 3
    low = string.pilot_voltage_at(0.999 * string.pilot_photocurrent)
    high = string.open_circuit_pilot_voltage()
    t = low + (high - low) * np.linspace(0.0, 1.0, 40)[None, :]
    e = string.evaluate(t, slopes=True)
    segment = certificate.Segment.from_evaluation({}, t, e, [j.name for j in string.tunnels])
    return string, segment


def test_slope_bounds_of_the_cells_asked_for_equal_every_entrys(sampled):
    string, segment = sampled
    rng = np.random.default_rng(19)
    cells_count = segment.t.shape[1] - 1
    for fraction in (0.02, 0.3, 1.0):
        need = rng.random((segment.t.shape[0], cells_count)) < fraction
        need[0] = False                          # a row asking for nothing
        need[1, :] = False
        need[1, 7] = True                        # a row asking for one cell
        cells, real = certificate._compact(need)
        want = slopes.slope_bounds(string, segment, cells)
        got = slopes.slope_bounds(string, segment, cells, real)
        for w, g in zip(want, got):
            np.testing.assert_array_equal(w, g)
        # the bounds are real numbers where asked (not all inf): the comparison compares
        # something
        assert np.isfinite(got[0][real]).mean() > 0.8


def test_the_ranges_not_read_are_not_evaluated(sampled, monkeypatch):
    string, segment = sampled
    need = np.zeros((segment.t.shape[0], segment.t.shape[1] - 1), dtype=bool)
    need[:, 10:14] = True
    cells, real = certificate._compact(need)
    counted = []
    slope_range = slopes.kernels.slope_range

    def counting(code, params, lo, hi):
        counted.append(lo.size)
        return slope_range(code, params, lo, hi)

    monkeypatch.setattr(slopes.kernels, "slope_range", counting)
    slopes.slope_bounds(string, segment, cells, real)
    subcells, pilots = len(string.subcells), string.pilot_index[:, 0]
    # three subcells, each of its junction and over t: 2 x 3 ranges per cell before; now the
    # two others' junction ranges, the pilot's over t, and its junction range where it is the
    # source of a coupled subcell (the top and middle ones here; the bottom one lights none)
    sources = np.array([k < subcells - 1 for k in pilots])
    assert counted[0] == 4 * (3 * len(pilots) + sources.sum())
    assert counted[0] < 2 * subcells * need.sum()


def test_rows_of_a_string_take_the_batchs_tables(sampled):
    string, _ = sampled
    rows = np.array([1, 3, 4])
    # every subcell's table built for the whole batch (a coupled string inverts them all)
    for cell in string.subcells:
        cell._table(string.temperature_K)
    part = string.rows(rows)
    key = ("table", part.temperature_K.tobytes())
    for whole, cell in zip(string.subcells, part.subcells):
        assert key in cell._cache                        # carried, not built
        fresh = element_module.take_rows(whole, rows)
        assert key not in fresh._cache
        carried, rebuilt = cell._table(part.temperature_K), fresh._table(part.temperature_K)
        for name in ("u", "j", "slope"):
            np.testing.assert_array_equal(getattr(carried, name), getattr(rebuilt, name))
        np.testing.assert_array_equal(cell._law_parameters(part.temperature_K),
                                      fresh._law_parameters(part.temperature_K))
    # and the restricted string answers as one built afresh
    fresh_string = SeriesString([element_module.take_rows(e, rows) for e in string.given],
                                part.temperature_K)
    t = np.linspace(0.5, 1.4, 9)[None, :] * np.ones((3, 1))
    a, b = part.evaluate(t, slopes=True), fresh_string.evaluate(t, slopes=True)
    for name in ("current", "voltage", "dcurrent", "dvoltage"):
        np.testing.assert_array_equal(a[name], b[name])


def test_year_equals_the_year_evaluating_every_range_and_rebuilding_tables(summer_days, monkeypatch):
    stack = load_stack(TRIPLE)
    now = Y.annual_yield(stack, summer_days)
    bounds = certificate.slope_bounds
    monkeypatch.setattr(certificate, "slope_bounds",
                        lambda string, view, cells, real=None: bounds(string, view, cells))
    monkeypatch.setattr(string_module, "take_rows_with_tables",
                        lambda e, rows, whole, part: element_module.take_rows(e, rows))
    before = Y.annual_yield(stack, summer_days)
    assert len(now.hourly) > 50 and now.summary["annual_energy_kWh_m2"] > 0
    assert now.summary == before.summary
    for column in now.hourly.columns:
        a, b = now.hourly[column].to_numpy(), before.hourly[column].to_numpy()
        if a.dtype.kind == "f":
            np.testing.assert_array_equal(a, b, err_msg=column)
        else:
            assert (a == b).all(), column
