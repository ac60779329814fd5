"""The reported maximum power point is the global maximum of the string's curve.

Checked against an independent dense evaluation of the element laws, parameterised by the
CURRENT (the solver is parameterised by the pilot subcell's junction voltage and refines by a
certificate of bounds; the reference shares neither):

* for a grid of currents from zero to where the terminal voltage falls to zero (uniform, plus
  points clustered towards each subcell's photocurrent, each tunnel junction's peak and each
  isotype interface's flat-band current), each element's voltage is found by plain bisection
  (64 halvings, to about 1e-17 V) on its forward law:

  - subcells on ``pvlib.singlediode.bishop88`` (single diode, shunt and the J. W. Bishop,
    Solar Cells 25 (1988) 73 breakdown term, independent of our code), with the ideality-2
    term J02 (exp(Vj / 2Vt) - 1) added by hand (C.-T. Sah, R. N. Noyce, W. Shockley, Proc. IRE
    45 (1957) 1228), and the terminal voltage Vj - J Rs;
  - tunnel junctions on the numpy Esaki law (laws/esaki.py, ``evaluate_prepared``), taking at
    each current the smallest junction voltage that carries it (the tunnel branch up to the
    peak, the thermal branch beyond): the largest element voltage, so the reference is the
    upper envelope over every branch of the curve;
  - isotype interfaces on the numpy thermionic law (laws/thermionic.py,
    ``isotype_current_density``), oriented as the element is;
  - resistors as -J R;

* the power J V is maximised over the grid, then refined three times by 64 points between the
  best point's neighbours. The result is a point ON the curve (an evaluated current and the
  law's voltages), so it is a lower bound of the true maximum: the reported MPP must reach it
  (to 1e-9 relative, common practice, no source, well above the solver's 1e-13 V inverses).

The reported point must itself lie on the curve: each element's own forward law at its
reported voltage carries the reported current.

Also here: the certificate of the global MPP (``StringSolution.mpp_certified``,
``mpp_bound_W_m2``) on the demo stacks and the grids, and the consistency of the efficiency
penalty of an element that drops no voltage at the MPP.
"""
import itertools
from dataclasses import replace as dataclasses_replace
import json
import os
import re
import warnings
from pathlib import Path

import numpy as np
import pytest
import scipy.constants as sc
from hypothesis import HealthCheck, event, given, settings, strategies as st

import pvlib
from siltandem.circuit.elements import IsotypeInterface, Resistor, Subcell, TunnelJunction, batch
from siltandem.laws import esaki, thermionic
from siltandem.report.text import text_summary
from siltandem.solve.series import solve_string

#: multiplies the property test's example count (``SILTANDEM_HYPOTHESIS_SCALE=30`` for a deep
#: local run, as in tests/test_properties.py); CI runs the default, 1, derandomized
SCALE = max(1, int(os.environ.get("SILTANDEM_HYPOTHESIS_SCALE", "1")))
#: the reported MPP may fall short of the reference by at most this (relative), plus
#: ABSOLUTE_TOLERANCE_W_M2 (common practice, no source: far above the solver's inverses)
RELATIVE_TOLERANCE = 1e-9
ABSOLUTE_TOLERANCE_W_M2 = 1e-9
TEMPERATURE_K = 298.15
STACKS = Path(__file__).resolve().parent.parent / "stacks"


def ci_settings(examples):
    return settings(max_examples=examples * SCALE, derandomize=True, database=None,
                    deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


# ---------------------------------------------------------------------------------------------
# the independent reference: terminal voltage as a function of current, by bisection

def _column(value, rows):
    return np.broadcast_to(np.asarray(value, dtype=float).reshape(-1, 1), (rows, 1))


def _bisect(below, lo, hi, halvings=64):
    """The boundary between lo and hi of a predicate true at lo's side (``below(x)``: x lies
    below the root) and false at hi's side: plain bisection, elementwise."""
    lo, hi = lo.copy(), hi.copy()
    for _ in range(halvings):
        mid = 0.5 * (lo + hi)
        go = below(mid)
        lo = np.where(go, mid, lo)
        hi = np.where(go, hi, mid)
    return 0.5 * (lo + hi)


def _widen(outside, start, step):
    """Move ``start`` by ``step(x)`` until ``outside(x)`` is false everywhere (60 times at most)."""
    x = start.copy()
    for _ in range(60):
        bad = outside(x)
        if not bad.any():
            break
        x = np.where(bad, step(x), x)
    return x


class Reference:
    """Element voltages of a batch of strings (element parameters (B, 1)) at currents (B, N)."""

    def __init__(self, elements, temperature_K=TEMPERATURE_K):
        self.elements = list(elements)
        self.temperature = float(temperature_K)
        self.vt = sc.k * self.temperature / sc.e              # CODATA 2018 through scipy
        self.rows = max(np.shape(v)[0] for e in self.elements for v in vars(e).values()
                        if isinstance(v, np.ndarray) and v.ndim == 2)

    # the forward laws ---------------------------------------------------------------------
    def subcell_current(self, e, vj):
        """J(Vj) of a subcell: pvlib's bishop88 (no series resistance) minus the J02 diode."""
        rows = self.rows
        g = _column(e.shunt_S_m2, rows)
        vbr, factor = _column(e.breakdown_V, rows), _column(e.breakdown_factor, rows)
        active = (factor > 0) & np.isfinite(vbr) & (g > 0)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            current = pvlib.singlediode.bishop88(
                vj, _column(e.photocurrent_A_m2, rows), _column(e.j01_A_m2(self.temperature),
                                                                 rows),
                0.0, np.where(g > 0, 1.0 / np.where(g > 0, g, 1.0), np.inf), self.vt,
                breakdown_factor=np.where(active, factor, 0.0),
                breakdown_voltage=np.where(active, vbr, -np.inf),
                breakdown_exp=_column(e.breakdown_exponent, rows))[0]
            j02 = _column(e.j02_A_m2, rows)
            return current - np.where(j02 > 0, j02 * np.expm1(vj / (2 * self.vt)), 0.0)

    def tunnel_law(self, e):
        prepared = esaki.prepare_tunnel_law(
            peak_A_m2=_column(e.peak_A_m2, self.rows), peak_V=_column(e.peak_V, self.rows),
            valley_A_m2=_column(e.valley_A_m2, self.rows),
            valley_V=_column(e.valley_V, self.rows),
            excess_slope_per_V=(None if e.excess_slope_per_V is None
                                else _column(e.excess_slope_per_V, self.rows)),
            saturation_A_m2=_column(e.saturation_A_m2, self.rows),
            ideality=_column(e.ideality, self.rows), temperature_K=self.temperature,
            exact_peak=True)
        return lambda u: esaki.evaluate_prepared(u, prepared)[0]

    def isotype_law(self, e):
        law = dict(barrier_eV=_column(e.barrier_eV, self.rows),
                   built_in_V=_column(e.built_in_V, self.rows),
                   alpha=_column(e.alpha, self.rows),
                   richardson_A_m2_K2=_column(e.richardson_A_m2_K2, self.rows),
                   temperature_K=self.temperature, depletion=e.depletion)

        def current(x):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", thermionic.IsotypeDomainWarning)
                return thermionic.isotype_current_density(x, **law)
        # the law's domain ends a kT/q below the built-in potential (with the tail)
        edge = law["built_in_V"] - (1.0 + 1e-6 if e.depletion == "tail" else 1e-6) * self.vt
        return current, edge

    def element_current(self, e, v):
        """The element's own forward law: the current it carries at its voltage ``v``."""
        if e.kind == "subcell":
            rs = _column(e.series_ohm_m2, self.rows)
            # V = Vj - J(Vj) Rs, increasing in Vj: bisection for Vj
            lo = _widen(lambda x: x - self.subcell_current(e, x) * rs > v,
                        np.minimum(v, -1.0), lambda x: 2 * x - 1)
            lo = np.maximum(lo, np.where(np.isfinite(_column(e.breakdown_V, self.rows)) &
                                         (_column(e.breakdown_factor, self.rows) > 0),
                                         _column(e.breakdown_V, self.rows) * (1 - 1e-15),
                                         -np.inf))
            hi = _widen(lambda x: x - self.subcell_current(e, x) * rs < v,
                        np.maximum(v, 1.0), lambda x: 2 * x + 1)
            vj = _bisect(lambda x: x - self.subcell_current(e, x) * rs < v, lo, hi)
            return self.subcell_current(e, vj)
        if e.kind == "tunnel":
            return self.tunnel_law(e)(-v)
        current, _ = self.isotype_law(e)
        s = _column(e.direction, self.rows)
        return s * current(-s * v)

    # the inverses ---------------------------------------------------------------------------
    def element_voltage(self, e, j):
        """The largest voltage of the element carrying current ``j`` (B, N); NaN where none."""
        rows = self.rows
        if e.kind == "resistor":
            return -j * _column(e.series_ohm_m2, rows)
        if e.kind == "subcell":
            jph = _column(e.photocurrent_A_m2, rows)
            j0 = _column(e.j01_A_m2(self.temperature), rows) + _column(e.j02_A_m2, rows)
            vbr, factor = _column(e.breakdown_V, rows), _column(e.breakdown_factor, rows)
            g = _column(e.shunt_S_m2, rows)
            breakdown = (factor > 0) & np.isfinite(vbr) & (g > 0)
            law = lambda x: self.subcell_current(e, x)  # noqa: E731
            with np.errstate(divide="ignore", invalid="ignore"):
                start = np.where(g > 0, np.minimum((jph - j) / np.where(g > 0, g, 1.0), 0.0)
                                 - 1.0, -200.0)
            lo = np.where(breakdown, vbr * (1 - 1e-15), start + 0 * j)
            lo = np.where(breakdown, lo, _widen(lambda x: (law(x) < j) & (g > 0), lo,
                                                lambda x: 2 * x - 1))
            hi = _widen(lambda x: law(x) > j,
                        np.broadcast_to(self.vt * np.log1p(np.abs(jph) / j0 + np.abs(j) / j0)
                                        + 0.1, j.shape), lambda x: 2 * x + 0.5)
            feasible = law(lo) >= j
            vj = _bisect(lambda x: law(x) > j, lo, hi)
            return np.where(feasible, vj - j * _column(e.series_ohm_m2, rows), np.nan)
        if e.kind == "tunnel":
            law = self.tunnel_law(e)
            vp, jp = _column(e.peak_V, rows), _column(e.peak_A_m2, rows)
            lo = _widen(lambda x: law(x) >= j, np.broadcast_to(-vp, j.shape),
                        lambda x: 2 * x - 0.1)
            hi = _widen(lambda x: law(x) < j, np.broadcast_to(vp + 1.0, j.shape),
                        lambda x: 2 * x + 1.0)
            # below the peak: the tunnel branch (-inf, Vp]; above it: the smallest root beyond
            # Vp, where the law first rises through the current (thermal branch)
            lower = np.where(j <= jp, lo, vp)
            upper = np.where(j <= jp, vp, hi)
            u = _bisect(lambda x: law(x) < j, lower, upper)
            return -u
        current, edge = self.isotype_law(e)
        s = _column(e.direction, rows)
        target = s * j
        feasible = current(np.broadcast_to(edge, j.shape)) >= target
        lo = _widen(lambda x: current(x) >= target, np.broadcast_to(-1.0 + 0 * edge, j.shape),
                    lambda x: 2 * x - 0.1)
        x = _bisect(lambda x: current(x) < target, lo, np.broadcast_to(edge, j.shape))
        return np.where(feasible, -s * x, np.nan)

    def voltage(self, j):
        return sum(self.element_voltage(e, j) for e in self.elements)

    def power(self, j):
        v = self.voltage(j)
        return np.where(np.isfinite(v), j * v, -np.inf)

    # the dense maximum ------------------------------------------------------------------------
    def maximum(self, points=1000):
        """(P, J) of the best point found, (B,) each: a point on the curve."""
        rows = self.rows
        photocurrents = [_column(e.photocurrent_A_m2, rows) for e in self.elements
                         if e.kind == "subcell"]
        top = np.max(np.concatenate(photocurrents, axis=1), axis=1, keepdims=True)
        # the grid's end: where the terminal voltage has fallen to zero (or has no value)
        end = _widen(lambda j: np.isfinite(self.voltage(j)) & (self.voltage(j) > 0),
                     1.05 * top, lambda j: 1.5 * j)
        marks = list(photocurrents)
        for e in self.elements:
            if e.kind == "tunnel":
                marks.append(_column(e.peak_A_m2, rows))
            elif e.kind == "isotype":
                current, edge = self.isotype_law(e)
                marks.append(np.abs(current(edge)))
        near = np.logspace(-12, -0.3, 160)[None, :]
        grid = [end * np.linspace(0.0, 1.0, points)[None, :]]
        grid += [m * (1 - near) for m in marks] + [m * (1 + near) for m in marks]
        j = np.sort(np.clip(np.concatenate(grid, axis=1), 0.0, end), axis=1)
        p = self.power(j)
        for _ in range(3):
            best = np.argmax(p, axis=1)[:, None]
            lo = np.take_along_axis(j, np.maximum(best - 1, 0), axis=1)
            hi = np.take_along_axis(j, np.minimum(best + 1, j.shape[1] - 1), axis=1)
            j = np.concatenate([np.take_along_axis(j, best, axis=1),
                                lo + (hi - lo) * np.linspace(0.0, 1.0, 64)[None, :]], axis=1)
            j = np.sort(j, axis=1)
            p = self.power(j)
        best = np.argmax(p, axis=1)[:, None]
        return np.take_along_axis(p, best, axis=1)[:, 0], np.take_along_axis(j, best, axis=1)[:, 0]


def reported_point_is_on_the_curve(reference, solution):
    """Each element's forward law at its reported voltage carries the reported current, and
    the element voltages add up to the reported terminal voltage."""
    j = solution.mpp_A_m2[:, None]
    total = np.zeros_like(j)
    for e in reference.elements:
        v = solution.voltage_at_mpp_V[e.name][:, None]
        total = total + v
        if e.kind == "resistor":           # Ohm's law (R may be 0: any current at 0 V)
            if not np.all(np.abs(v + j * _column(e.series_ohm_m2, reference.rows)) <=
                          1e-12 * (np.abs(v) + 1e-9)):
                return False
            continue
        carried = reference.element_current(e, v)
        # the law's slope there scales what a 1e-12 V error of the voltage may move
        with np.errstate(over="ignore", invalid="ignore"):
            slope = np.abs(reference.element_current(e, v + 1e-7) - carried) / 1e-7
        scale = np.abs(j) + 1e-3
        if not np.all(np.abs(carried - j) <= 1e-9 * scale + 1e-11 * slope):
            return False
    return bool(np.all(np.abs(total - solution.mpp_V[:, None]) <= 1e-9 *
                       (np.abs(total) + 1e-3)))


def certificate_holds(solution, elements, row):
    """The certificate's promise: the bound is at least the MPP and at most the MPP plus the
    tolerance (1e-9 relative plus 1e-12 V times the pilot's photocurrent, certificate.py)."""
    pilot = min(float(e.photocurrent_A_m2[min(row, e.photocurrent_A_m2.shape[0] - 1), 0])
                for e in elements if e.kind == "subcell")
    p, bound = solution.mpp_W_m2[row], solution.mpp_bound_W_m2[row]
    return bool(p <= bound <= p + 1e-9 * abs(p) + 1e-12 * pilot)


def shortfall(reported_W_m2, reference_W_m2):
    """How far the reported MPP falls below the reference beyond the tolerance (<= 0: fine)."""
    return reference_W_m2 - reported_W_m2 - (RELATIVE_TOLERANCE * np.abs(reference_W_m2)
                                             + ABSOLUTE_TOLERANCE_W_M2)


# ---------------------------------------------------------------------------------------------
# the breakdown grid: triples with unmatched photocurrents whose current-limiting subcell (the
# middle one, or the bottom one) has a shunt and reverse breakdown: 4 shunts x 4 breakdown
# voltages x 3 breakdown factors x 4 concentrations each. Invented design numbers (gaps,
# photocurrents); the Bishop parameters span common practice, no source.

SHUNTS_OHM_CM2 = [1.0, 8.0, 30.0, 300.0]
BREAKDOWN_V = [0.5, 1.5, 4.0, 12.0]
BREAKDOWN_FACTORS = [1e-3, 1e-2, 1e-1]
SUNS = [1.0, 4.0, 30.0, 300.0]
#: (gap eV, photocurrent at one sun A/m2, ERE) of the three subcells, sun side first, and the
#: subcell that limits the current (it gets the shunt and the breakdown)
TRIPLES = {"middle limits": ([(1.90, 160.0, 0.05), (1.42, 110.0, 0.05), (1.12, 150.0, 0.005)], 1),
           "bottom limits": ([(1.90, 150.0, 0.05), (1.42, 140.0, 0.05), (1.12, 110.0, 0.005)], 2)}
GRID = list(itertools.product(SHUNTS_OHM_CM2, BREAKDOWN_V, BREAKDOWN_FACTORS, SUNS))


def breakdown_triple(triple, broken, shunts, breakdowns, factors, suns):
    """The batch of triples; subcell ``broken`` gets the shunt and the breakdown."""
    cells = []
    for k, (gap, jph, ere) in enumerate(triple):
        keys = dict(ere=batch(ere))
        if k == broken:
            keys.update(shunt_S_m2=batch(1.0 / (np.asarray(shunts) * 1e-4)),
                        breakdown_V=batch(-np.asarray(breakdowns)),
                        breakdown_factor=batch(factors))
        cells.append(Subcell(f"cell {k + 1}", batch(np.full(len(suns), gap)),
                             **keys).with_photocurrent(batch(jph * np.asarray(suns))))
    return cells + [Resistor("contacts", batch(np.full(len(suns), 0.05e-4)))]


@pytest.fixture(scope="module", params=list(TRIPLES))
def breakdown_grid(request):
    shunts, breakdowns, factors, suns = (np.array(x) for x in zip(*GRID))
    elements = breakdown_triple(*TRIPLES[request.param], shunts, breakdowns, factors, suns)
    reference = Reference(elements)
    best, _ = reference.maximum()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        summary = solve_string(elements, TEMPERATURE_K)                   # what studies call
        traced = solve_string(elements, TEMPERATURE_K, curve_points=101)  # what `run` calls
    return reference, best, summary, traced


@pytest.mark.parametrize("index", range(len(GRID)),
                         ids=[f"sh{s:g}-bd{b:g}-a{a:g}-{n:g}suns" for s, b, a, n in GRID])
def test_breakdown_grid_reports_the_global_mpp(breakdown_grid, index):
    reference, best, summary, traced = breakdown_grid
    for solution in (summary, traced):
        assert shortfall(solution.mpp_W_m2[index], best[index]) <= 0, \
            (solution.mpp_W_m2[index], best[index])
        assert solution.mpp_certified[index]
        assert certificate_holds(solution, reference.elements, index)


def test_breakdown_grid_points_lie_on_the_curve(breakdown_grid):
    reference, _, summary, traced = breakdown_grid
    assert reported_point_is_on_the_curve(reference, summary)
    assert reported_point_is_on_the_curve(reference, traced)


# ---------------------------------------------------------------------------------------------
# random stacks

LOG_UNIFORM = lambda lo, hi: st.floats(lo, hi).map(lambda x: 10.0 ** x)  # noqa: E731


@st.composite
def random_strings(draw):
    """A string of 1-4 subcells with random shunts (low ones included), breakdown, J02 and
    series resistance, 0-2 tunnel junctions (some peaks below the photocurrents), 0-2 isotype
    interfaces in either orientation and 0-1 resistor, at 1-1000 suns (photocurrents drawn
    directly: the optics are not under test here)."""
    count = draw(st.integers(1, 4))
    suns = draw(LOG_UNIFORM(0, 3))
    gaps = sorted((draw(st.floats(0.8, 2.1)) for _ in range(count)), reverse=True)
    elements = []
    for k, gap in enumerate(gaps):
        keys = dict(ere=batch(draw(LOG_UNIFORM(-4, 0))))
        shunt = draw(st.one_of(st.none(), LOG_UNIFORM(0, 2), LOG_UNIFORM(2, 6)))
        if shunt is not None:
            keys["shunt_S_m2"] = batch(1.0 / (shunt * 1e-4))
            if draw(st.booleans()):
                keys["breakdown_V"] = batch(-draw(st.floats(0.2, 20.0)))
                keys["breakdown_factor"] = batch(draw(LOG_UNIFORM(-4, 0)))
                keys["breakdown_exponent"] = batch(draw(st.floats(0.5, 6.0)))
        if draw(st.booleans()):
            keys["j02_A_m2"] = batch(draw(LOG_UNIFORM(-12, -5)))
        if draw(st.booleans()):
            keys["series_ohm_m2"] = batch(draw(st.floats(0.0, 2.0)) * 1e-4)
        jph = draw(st.floats(80.0, 250.0)) * suns
        elements.append(Subcell(f"cell {k + 1}", batch(gap), **keys).with_photocurrent(
            batch(jph)))
    largest = max(float(e.photocurrent_A_m2[0, 0]) for e in elements)
    extras = []
    for k in range(draw(st.integers(0, 2)) if count > 1 else 0):
        peak_v = draw(st.floats(0.05, 0.3))
        peak = largest * draw(LOG_UNIFORM(-0.5, 1.5))
        extras.append(TunnelJunction(
            f"junction {k + 1}", batch(peak), batch(peak_v),
            batch(peak * draw(st.floats(0.01, 0.3))),
            batch(peak_v + draw(st.floats(0.2, 0.8)))))
    for k in range(draw(st.integers(0, 2))):
        built_in = draw(st.floats(0.05, 0.8))
        extras.append(IsotypeInterface(
            f"interface {k + 1}", batch(built_in + draw(st.floats(0.0, 0.4))), batch(built_in),
            batch(draw(LOG_UNIFORM(-4, 4))), batch(draw(LOG_UNIFORM(5.5, 6.5))),
            direction=batch(draw(st.sampled_from([1.0, -1.0])))))
    if draw(st.booleans()):
        extras.append(Resistor("contacts", batch(draw(st.floats(0.0, 2.0)) * 1e-4)))
    for extra in extras:
        elements.insert(draw(st.integers(0, len(elements))), extra)
    return elements


@ci_settings(40)
@given(elements=random_strings())
def test_random_strings_report_the_global_mpp(elements):
    reference = Reference(elements)
    best, _ = reference.maximum()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        summary = solve_string(elements, TEMPERATURE_K)
        traced = solve_string(elements, TEMPERATURE_K, curve_points=60)
    for solution in (summary, traced):
        if not np.isfinite(solution.mpp_W_m2[0]):
            event("no MPP reported")        # (counted in --hypothesis-show-statistics)
            continue
        assert shortfall(solution.mpp_W_m2[0], best[0]) <= 0, \
            (solution.mpp_W_m2[0], best[0], solution.regime[0])
        assert reported_point_is_on_the_curve(reference, solution)
        assert solution.mpp_certified[0]
        assert certificate_holds(solution, elements, 0)


# ---------------------------------------------------------------------------------------------
# the certificate on the demo stacks, in the summary and the JSON

DEMOS = sorted(STACKS.glob("*.toml"))


@pytest.mark.parametrize("path", DEMOS, ids=[p.stem for p in DEMOS])
def test_the_demo_stacks_carry_a_proven_mpp(path):
    from siltandem import run_stack, load_stack

    result = run_stack(load_stack(path))
    summary = result.summary
    proofs = summary["mpp_certificate"]
    proofs = proofs if isinstance(proofs, list) else [proofs]
    assert len(proofs) == len(result.solutions) == len(summary["strings"])
    for proof, row in zip(proofs, summary["strings"]):
        assert proof == row["mpp_certificate"]
        assert proof["certified"] is True
        # strings of subcells without breakdown or a silicon base law, and resistors: P(J) is
        # concave (solve/certificate.is_concave)
        concave = all(e.kind == "resistor" or (e.kind == "subcell" and e.bulk is None and not (
            e.breakdown_factor[0, 0] > 0 and np.isfinite(e.breakdown_V[0, 0])
            and e.shunt_S_m2[0, 0] > 0)) for e in result.circuit.strings[row["string"] - 1])
        assert proof["proof"] == ("concavity" if concave else "cell bounds")
        assert (proof["cells_checked"] == 0) == concave
        assert row["mpp_W_m2"] <= proof["upper_bound_W_m2"] <= row["mpp_W_m2"] * (1 + 1e-9) + \
            1e-12 * float(np.min([e.photocurrent_A_m2[0, 0] for e in result.circuit.strings[
                row["string"] - 1] if e.kind == "subcell"]))
    loaded = json.loads(result.to_json())
    assert loaded["mpp_certificate"] == (proofs if len(proofs) > 1 else proofs[0])
    assert "not proven" not in text_summary(result)


# ---------------------------------------------------------------------------------------------
# the efficiency penalty of an element that drops (almost) nothing at the MPP

def penalty_stack(shunt, breakdown, factor, suns, absorptance):
    """A triple whose middle subcell (reduced absorptance: it limits the current) has a low
    shunt and breakdown, with an isotype interface of a low barrier (forward: it drops about a
    microvolt) above it. Invented design numbers; the interface numbers are the law's own
    units."""
    elements = [{"kind": "subcell", "name": "top", "gap_eV": 1.90, "ere": 0.05},
                {"kind": "isotype", "name": "interface", "barrier_eV": 0.3, "built_in_V": 0.2,
                 "alpha": 1.0, "orientation": "forward"},
                {"kind": "subcell", "name": "middle", "gap_eV": 1.42, "ere": 0.05,
                 "absorptance": absorptance, "shunt_ohm_cm2": shunt, "breakdown_V": breakdown,
                 "breakdown_factor": factor},
                {"kind": "subcell", "name": "bottom", "gap_eV": 1.12, "ere": 0.005}]
    return {"stack": {"name": "penalty"}, "conditions": {"suns": suns}, "element": elements}


#: designs where the previous search gave the interface a penalty of 0.8-5.6 % absolute while
#: it dropped under a microvolt at the MPP (the search found a higher maximum without it)
PENALTY_CASES = [(1.0, 1.5, 1e-3, 1.0, 0.5), (1.0, 4.0, 1e-3, 1.0, 0.6),
                 (1.0, 1.5, 0.1, 1.0, 0.6), (1.0, 0.5, 1e-3, 1.0, 0.6)]


@pytest.mark.parametrize("shunt, breakdown, factor, suns, absorptance", PENALTY_CASES)
def test_an_element_that_drops_nothing_costs_nothing(shunt, breakdown, factor, suns,
                                                     absorptance):
    """Removing an element raises the string's power at every current J by J times its drop
    there (nothing else changes), so the efficiency regained lies between its loss at the MPP
    and its largest loss J |V(J)| over the curve (both maxima global)."""
    from siltandem import run_stack
    from siltandem.stack.load import parse_stack

    result = run_stack(parse_stack(penalty_stack(shunt, breakdown, factor, suns,
                                                 absorptance)))
    (row,) = result.summary["interfaces"]
    irradiance = result.summary["conditions"]["irradiance_W_m2"]
    penalty = row["efficiency_penalty_pct_abs"] * irradiance / 100          # W/m2
    iv = result.iv
    current = iv["current_mA_cm2"].to_numpy() * 10                          # A/m2
    dissipated = np.max(np.where(current > 0, -current * iv["interface_V"].to_numpy(), 0.0))
    assert row["drop_at_mpp_V"] < 1e-5
    assert row["loss_W_m2"] - 1e-9 <= penalty <= dissipated + 1e-9
    assert row["efficiency_penalty_pct_abs"] < 1e-4
    assert not row["blocking"]


# ---------------------------------------------------------------------------------------------
# the slope ranges the certificate's bounds rest on enclose every slope of the law

def _enclosed(low, high, slopes):
    """Every sampled slope (rows: intervals) lies in [low, high], to 1e-7 of the range's
    scale (the central differences' error)."""
    scale = np.abs(low) + np.abs(high) + 1e-300
    return bool(np.all((slopes >= low - 1e-7 * scale) & (slopes <= high + 1e-7 * scale)))


def _intervals(rng, lo, hi, count=300):
    a, b = rng.uniform(lo, hi, count), rng.uniform(lo, hi, count)
    width = np.abs(b - a) * rng.choice([1.0, 1e-3, 1e-6], count)
    start = np.minimum(a, b)
    return start[:, None], (start + width)[:, None]


@pytest.mark.parametrize("breakdown", [False, True])
def test_the_subcell_slope_range_encloses_the_law(breakdown):
    """Against central differences of pvlib's bishop88 current (single diode, shunt,
    breakdown; J. W. Bishop, Solar Cells 25 (1988) 73) with the ideality-2 term added by hand.
    (Not bishop88's own ``gradients=True``: with breakdown its dI/dVd differs from central
    differences of its current, here by a factor of about 2.8 at Vd = -2 V; the breakdown
    term's derivative there lacks the chain factor -1/Vbr, pvlib 0.16.1.)"""
    from siltandem.laws.diode import junction_slope_range

    rng = np.random.default_rng(7)
    vt = sc.k * TEMPERATURE_K / sc.e
    jph, j01, j02, g = 300.0, 1e-17, 1e-8, 50.0
    vbr, factor, exponent = (-3.0, 0.2, 4.5) if breakdown else (-np.inf, 0.0, 3.28)
    lo, hi = _intervals(rng, -2.9 if breakdown else -8.0, 1.2)
    low, high = junction_slope_range(lo, hi, photocurrent_A_m2=jph, j01_A_m2=j01,
                                     j02_A_m2=j02, shunt_S_m2=g, temperature_K=TEMPERATURE_K,
                                     breakdown_V=vbr, breakdown_factor=factor,
                                     breakdown_exponent=exponent)
    v = lo + (hi - lo) * np.linspace(0.0, 1.0, 201)[None, :]

    def current(x):
        return (pvlib.singlediode.bishop88(x, jph, j01, 0.0, 1.0 / g, vt,
                                           breakdown_factor=factor,
                                           breakdown_voltage=vbr if breakdown else -np.inf,
                                           breakdown_exp=exponent)[0]
                - j02 * np.expm1(x / (2 * vt)))

    step = 1e-7
    slopes = (current(v + step) - current(v - step)) / (2 * step)
    assert _enclosed(low, high, slopes)
    assert np.all(high < 0)


def test_the_tunnel_slope_range_encloses_the_law():
    """Against central differences of the numpy Esaki law (laws/esaki.py), over intervals of
    every branch (reverse bias to beyond the valley)."""
    rng = np.random.default_rng(11)
    prepared = esaki.prepare_tunnel_law(peak_A_m2=2000.0, peak_V=0.1, valley_A_m2=200.0,
                                        valley_V=0.4, saturation_A_m2=1e-13,
                                        temperature_K=TEMPERATURE_K, exact_peak=True)
    lo, hi = _intervals(rng, -0.5, 1.2)
    low, high = esaki.slope_range(lo, hi, prepared)
    u = lo + (hi - lo) * np.linspace(0.0, 1.0, 201)[None, :]
    step = 1e-7
    slopes = (esaki.evaluate_prepared(u + step, prepared)[0]
              - esaki.evaluate_prepared(u - step, prepared)[0]) / (2 * step)
    assert _enclosed(low, high, slopes)


@pytest.mark.parametrize("alpha", [1e-3, 1.0, 1e3])
def test_the_isotype_slope_range_encloses_the_law(alpha):
    """Against central differences of the numpy thermionic law (laws/thermionic.py)."""
    rng = np.random.default_rng(13)
    law = dict(barrier_eV=0.5, built_in_V=0.4, alpha=alpha, richardson_A_m2_K2=1.2e6,
               temperature_K=TEMPERATURE_K, include_tail=True)
    vt = sc.k * TEMPERATURE_K / sc.e
    lo, hi = _intervals(rng, -1.0, 0.4 - 1.5 * vt)
    low, high = thermionic.current_slope_range(lo, hi, **law)
    v = lo + (hi - lo) * np.linspace(0.0, 1.0, 201)[None, :]
    step = 1e-7
    slopes = (thermionic.isotype_current_density(v + step, **law)
              - thermionic.isotype_current_density(v - step, **law)) / (2 * step)
    assert _enclosed(low, high, slopes)
    assert np.all(low > 0)


# ---------------------------------------------------------------------------------------------
# strings blocked by an isotype interface: Voc is the point of zero current, the rest is null
# where there is no operating point, and the text shows no "nan"

#: (alpha, barrier eV, built-in V, temperature K, orientation, suns): large barriers inside the
#: documented ranges, which once gave Voc of 1e20 to 1e35 V, NaN, or an interface voltage at
#: open circuit
BLOCKED = [(1e8, 2.0, 2.0, 200.0, "reverse", 1000.0), (1e8, 3.0, 0.3, 298.15, "reverse", 1.0),
           (1e8, 2.0, 2.0, 298.15, "forward", 1000.0), (1e8, 3.0, 0.6, 200.0, "reverse", 1.0),
           (1.0, 1.2, 1.0, 200.0, "reverse", 1.0)]


@pytest.mark.parametrize("alpha, barrier, built_in, temperature, orientation, suns", BLOCKED)
def test_a_blocked_string_reports_the_zero_current_voc(alpha, barrier, built_in, temperature,
                                                       orientation, suns):
    """At zero current every element but a subcell has zero voltage, so Voc is the sum of the
    subcells' own open-circuit voltages, here each from pvlib's single-diode solution at zero
    current (``pvlib.singlediode.bishop88_v_from_i``, independent of our code)."""
    from siltandem import run_stack
    from siltandem.stack.load import parse_stack

    elements = [{"kind": "subcell", "name": "top", "gap_eV": 1.73, "ere": 0.02},
                {"kind": "isotype", "name": "interface", "barrier_eV": barrier,
                 "built_in_V": built_in, "alpha": alpha, "orientation": orientation},
                {"kind": "subcell", "name": "silicon", "gap_eV": 1.12, "ere": 0.005}]
    document = {"stack": {"name": "blocked"},
                "conditions": {"suns": suns, "temperature_K": temperature},
                "element": elements}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        result = run_stack(parse_stack(document), curve_points=60)
    vt = sc.k * temperature / sc.e
    expected = sum(float(pvlib.singlediode.bishop88_v_from_i(
        0.0, float(c.photocurrent_A_m2[0, 0]), float(c.j01_A_m2(temperature)[0, 0]), 0.0,
        np.inf, vt)) for c in result.circuit.subcells)
    summary = json.loads(result.to_json())                  # strict JSON: null, never NaN
    assert summary["voc_V"] == pytest.approx(expected, rel=1e-12)
    for row in summary["elements"]:
        if row["kind"] != "subcell":
            assert row["voltage_at_open_circuit_V"] == 0.0
    # every number is physical or null, and a null is named in a warning
    missing = [label for label, key in (("Jsc", "jsc_mA_cm2"), ("the MPP", "mpp_V"),
                                        ("the fill factor", "fill_factor_pct"))
               if summary[key] is None]
    if missing and not any("capped" in w for w in summary["warnings"]):
        (said,) = [w for w in summary["warnings"] if "no operating point found for" in w]
        assert all(label in said for label in missing)
    if summary["mpp_V"] is not None:
        assert summary["mpp_V"] <= summary["voc_V"] * (1 + 1e-12)
        assert summary["mpp_mA_cm2"] >= 0
    text = text_summary(result)
    headline = text.split("subcells (optical order")[0]
    assert not re.search(r"\bnan\b", headline, re.IGNORECASE), headline
    assert not any(re.search(r"\bnan\b", w, re.IGNORECASE) for w in summary["warnings"])


def test_an_unproven_mpp_says_so(monkeypatch):
    """With no refinement allowed, the cells next to a hidden maximum cannot be bounded: the
    summary says the MPP is not certified, with the largest bound, and the text says so in one
    line (and only then: test_the_demo_stacks_carry_a_proven_mpp)."""
    import siltandem.solve.certificate as certificate
    from siltandem import run_stack
    from siltandem.stack.load import parse_stack

    monkeypatch.setattr(certificate, "MAX_PASSES", 0)
    result = run_stack(parse_stack(penalty_stack(1.0, 1.5, 1e-3, 1.0, 0.5)))
    proof = result.summary["mpp_certificate"]
    assert proof["certified"] is False and proof["proof"] is None
    assert proof["upper_bound_W_m2"] > result.summary["mpp_W_m2"]
    line = [x for x in text_summary(result).splitlines() if "not proven" in x]
    assert line == [f"  MPP not proven global: the curve may reach "
                    f"{proof['upper_bound_W_m2']:.6g} W/m2 between its evaluated points"]


# ---------------------------------------------------------------------------------------------
# a breakdown that only starts within 1e-9 of its voltage: the curve's tail, by current

@pytest.mark.parametrize("peak", [None, 1000.0], ids=["no junction", "junction past peak"])
def test_the_tail_beyond_a_steep_breakdown_is_followed(peak):
    """The current-limiting subcell (a 1e5 ohm cm2 shunt, breakdown at 0.2 V, exponent 0.5)
    carries 1432 A/m2 at the lowest junction voltage the trace keeps (a relative 1e-9 above its
    breakdown voltage), where the string still gives power; the curve goes on by current, and
    the maximum lies there (J = 1462.5 A/m2). Jsc is where the unshunted 1500 A/m2 subcell
    reaches its current limit. Invented numbers."""
    elements = [Subcell("cell 1", batch(1.0), shunt_S_m2=batch(0.1), breakdown_V=batch(-0.2),
                        breakdown_factor=batch(1.0),
                        breakdown_exponent=batch(0.5)).with_photocurrent(batch(800.0)),
                Subcell("cell 2", batch(1.0)).with_photocurrent(batch(2100.0)),
                Subcell("cell 3", batch(1.0), shunt_S_m2=batch(1e4)).with_photocurrent(
                    batch(800.0)),
                Subcell("cell 4", batch(1.0)).with_photocurrent(batch(1500.0))]
    if peak is not None:
        elements.insert(1, TunnelJunction("junction", batch(peak), batch(0.1),
                                          batch(peak / 10), batch(0.4)))
    reference = Reference(elements)
    best, _ = reference.maximum()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        summary = solve_string(elements, TEMPERATURE_K)
        traced = solve_string(elements, TEMPERATURE_K, curve_points=60)
    for solution in (summary, traced):
        assert shortfall(solution.mpp_W_m2[0], best[0]) <= 0
        assert reported_point_is_on_the_curve(reference, solution)
        assert solution.mpp_certified[0] and certificate_holds(solution, elements, 0)
        assert not solution.failed[0]
        assert solution.jsc_A_m2[0] == pytest.approx(1500.0, rel=1e-9)
    if peak is None:
        assert traced.mpp_A_m2[0] > 1432.0                       # the maximum in the tail
        assert np.max(traced.curve["current_A_m2"]) >= traced.jsc_A_m2[0]


def test_the_compiled_slope_ranges_are_the_numpy_ones():
    """kernels.slope_range (what the certificate calls) against the numpy forms above."""
    from siltandem.laws import compiled as kernels
    from siltandem.laws.diode import junction_slope_range

    rng = np.random.default_rng(17)
    cell = Subcell("cell", batch([1.4, 1.5]), j02_A_m2=batch([1e-8, 0.0]),
                   shunt_S_m2=batch([30.0, 0.0]), breakdown_V=batch([-3.0, -np.inf]),
                   breakdown_factor=batch([0.2, 0.0])).with_photocurrent(batch([300.0, 200.0]))
    lo = rng.uniform(-2.9, 1.2, (2, 200))
    hi = lo + rng.uniform(0.0, 1.0, (2, 200))
    compiled = kernels.slope_range(kernels.SUBCELL_LAW, cell._law_parameters(TEMPERATURE_K),
                                   lo, hi)
    reference = junction_slope_range(lo, hi, **cell._junction(TEMPERATURE_K))
    for a, b in zip(compiled, reference):
        assert np.allclose(a, b, rtol=1e-13, atol=0.0)
    junction = TunnelJunction("junction", batch(2000.0), batch(0.1), batch(200.0), batch(0.4))
    lo = rng.uniform(-0.5, 1.2, (1, 300))
    hi = lo + rng.uniform(0.0, 0.3, (1, 300))
    compiled = kernels.slope_range(kernels.TUNNEL_LAW,
                                   junction._law_parameters(TEMPERATURE_K), lo, hi)
    reference = esaki.slope_range(lo, hi, junction._prepared(TEMPERATURE_K))
    for a, b in zip(compiled, reference):
        assert np.allclose(a, b, rtol=1e-13, atol=0.0)


# ---------------------------------------------------------------------------------------------
# the certificate's later passes on the unproven designs alone (certificate._certify_rows)

def test_later_passes_on_the_unproven_designs_alone_change_nothing(monkeypatch):
    """Refining only the designs a pass left unproven gives, bit for bit, what refining the whole
    batch gives (the previous path of the same solver: every step of the certificate works per
    design), and the answers still reach the independent dense reference above (pvlib's
    bishop88 subcells, bisection per element)."""
    import dataclasses

    import siltandem.solve.certificate as certificate

    shunts, breakdowns, factors, suns = (np.array(x) for x in zip(*GRID))
    elements = breakdown_triple(*TRIPLES["bottom limits"], shunts, breakdowns, factors, suns)
    calls = []
    restricted = certificate._certify_rows

    def counted(*args, **kwargs):
        calls.append(int(args[4].sum()))
        return restricted(*args, **kwargs)

    monkeypatch.setattr(certificate, "_certify_rows", counted)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        alone = solve_string(elements, TEMPERATURE_K)
        assert calls and all(0 < n <= certificate.RESTRICT_FRACTION * len(GRID) for n in calls)
        monkeypatch.setattr(certificate, "RESTRICT_ROWS", 10 ** 9)
        whole = solve_string(elements, TEMPERATURE_K)
    for field in dataclasses.fields(whole):
        a, b = getattr(alone, field.name), getattr(whole, field.name)
        if isinstance(a, dict):
            assert a.keys() == b.keys()
            pairs = [(a[k], b[k]) for k in a]
        else:
            pairs = [(a, b)]
        for x, y in pairs:
            if isinstance(x, np.ndarray):
                assert x.dtype == y.dtype and np.array_equal(x, y, equal_nan=x.dtype.kind == "f"), field.name
            else:
                assert x == y, field.name
    best, _ = Reference(elements).maximum()
    assert np.all(shortfall(alone.mpp_W_m2, best) <= 0)
    assert alone.mpp_certified.all()


def test_a_batch_restriction_keeps_each_designs_silicon_base_columns():
    """take_rows restricts a subcell's silicon base columns (a tuple of per-design arrays, as the
    yield year gives them) with its other per-design fields."""
    from siltandem import load_stack
    from siltandem.circuit.compile import compile_stack
    from siltandem.circuit.elements import take_rows

    circuit = compile_stack(load_stack(STACKS / "demo_dual_layers.toml"))
    cell = next(c for c in circuit.subcells if c.bulk is not None)
    scale = np.linspace(0.5, 2.0, 5).reshape(-1, 1)
    hourly = dataclasses_replace(cell, bulk=(*cell.bulk[:4], cell.bulk[4] * scale),
                                 photocurrent_A_m2=300.0 * scale)
    part = take_rows(hourly, np.array([1, 3]))
    assert np.array_equal(part.bulk[4], hourly.bulk[4][[1, 3]])
    assert np.array_equal(part.photocurrent_A_m2, hourly.photocurrent_A_m2[[1, 3]])
    assert all(x is y for x, y in zip(part.bulk[:4], hourly.bulk[:4]))
