"""Fast inverses (siltandem.inverse) and the solver's root finders, against scipy's brentq.

Outside reference: ``scipy.optimize.brentq`` (R. P. Brent, Algorithms for Minimization without
Derivatives, Prentice-Hall 1973, ch. 4), one scalar root at a time from a wide bracket, on the
same element laws. The laws themselves are checked against their own sources elsewhere
(tests/test_diode.py, tests/test_esaki.py); here only the inversion is under test.
"""
import numpy as np
import pytest
from scipy.optimize import brentq

from siltandem.circuit.elements import Subcell, TunnelJunction, batch
from siltandem.numerics.tables import LawTable, polish_root
from siltandem.laws import diode
from siltandem.numerics.roots import safeguarded_newton

T = 300.0


def two_diode_cell(**extra):
    parameters = dict(ere=batch(1e-2), j02_A_m2=batch(1e-7), series_ohm_m2=batch(1e-5),
                      shunt_S_m2=batch(0.01))
    parameters.update(extra)
    return Subcell("cell", batch(1.42), **parameters).with_photocurrent(batch(300.0))


def brentq_junction_voltage(cell, current, lowest=-50.0):
    junction = {k: np.asarray(v, dtype=float).ravel()[0] if np.ndim(v) else v
                for k, v in cell._junction(T).items()}

    def residual(v):
        return float(diode.junction_current(v, **junction)[0]) - current

    return brentq(residual, lowest, 3.0, xtol=1e-15, rtol=8.9e-16, maxiter=500)


def assert_same_root(ours, theirs, cell, current):
    """Equal within the inverse's own conditioning: a few rounding units of J over |dJ/dVj|."""
    _, slope = diode.junction_current(theirs, **{k: np.asarray(v, dtype=float).ravel()[0]
                                                 if np.ndim(v) else v
                                                 for k, v in cell._junction(T).items()})
    conditioning = 8 * np.finfo(float).eps * max(abs(current), 1.0) / abs(float(slope))
    assert abs(ours - theirs) <= 2e-13 + conditioning, (ours, theirs, conditioning)


@pytest.mark.parametrize("current", [-450.0, -90.0, 0.0, 150.0, 299.0, 300.0, 300.005, 300.02])
def test_subcell_inverse_matches_brentq(current):
    # forward bias beyond Voc, the knee, short circuit and reverse bias through the shunt
    cell = two_diode_cell()
    vj = cell.junction_voltage_at(np.array([[current]]), T)[0, 0]
    assert_same_root(vj, brentq_junction_voltage(cell, current), cell, current)


@pytest.mark.parametrize("current", [305.0, 390.0, 1e4])
def test_subcell_inverse_deep_in_reverse_bias(current):
    # 305 A/m^2 needs about -500 V across a 0.01 S/m^2 shunt: the table's geometric reverse part
    cell = two_diode_cell()
    vj = cell.junction_voltage_at(np.array([[current]]), T)[0, 0]
    assert_same_root(vj, brentq_junction_voltage(cell, current, lowest=-1e7), cell, current)


def test_subcell_inverse_beyond_table_falls_back_to_root_find():
    # -1e7 V is the table's reverse end: 2e5 A/m^2 needs -2e7 V across a 0.01 S/m^2 shunt
    cell = two_diode_cell()
    current = 2e5
    table = cell._table(T)
    assert current > table.j[0].max()
    vj = cell.junction_voltage_at(np.array([[current]]), T)[0, 0]
    assert_same_root(vj, brentq_junction_voltage(cell, current, lowest=-1e8), cell, current)


def test_subcell_inverse_with_breakdown_matches_brentq():
    # J. W. Bishop, Solar Cells 25 (1988) 73 breakdown term in reverse bias
    cell = two_diode_cell(breakdown_V=batch(-2.0), breakdown_factor=batch(0.1))
    for current in (300.5, 301.5, 310.0):
        vj = cell.junction_voltage_at(np.array([[current]]), T)[0, 0]
        assert_same_root(vj, brentq_junction_voltage(cell, current, lowest=-2.0 * (1 - 1e-12)),
                         cell, current)


def test_batched_tables_match_one_design_at_a_time():
    # rows of one table side by side (normalised keys): each row as if solved alone, and the
    # same row at another place in another batch
    jph = np.array([100.0, 250.0, 400.0])
    cells = Subcell("cell", batch([1.9, 1.42, 1.12]), ere=batch([1e-2, 1e-1, 1e-3]),
                    j02_A_m2=batch([1e-9, 1e-7, 1e-5]),
                    shunt_S_m2=batch([0.0, 0.01, 1.0])).with_photocurrent(jph)
    currents = np.linspace(-0.5, 1.0, 41)[None, :] * jph[:, None]
    together = cells.junction_voltage_at(currents, T)
    for row in range(3):
        alone = Subcell("cell", batch(cells.gap_eV[row]), ere=batch(cells.ere[row]),
                        j02_A_m2=batch(cells.j02_A_m2[row]),
                        shunt_S_m2=batch(cells.shunt_S_m2[row])).with_photocurrent(jph[row])
        # bit for bit: a design's numbers never depend on which designs share its batch
        np.testing.assert_array_equal(together[row], alone.junction_voltage_at(
            currents[row:row + 1], T)[0])
        shuffled = Subcell("cell", batch(cells.gap_eV[[2, row, 0]]), ere=batch(cells.ere[[2, row, 0]]),
                           j02_A_m2=batch(cells.j02_A_m2[[2, row, 0]]),
                           shunt_S_m2=batch(cells.shunt_S_m2[[2, row, 0]])).with_photocurrent(
            jph[[2, row, 0]])
        np.testing.assert_array_equal(together[row], shuffled.junction_voltage_at(
            currents[[2, row, 0]], T)[1])
        for current, vj in zip(currents[row, ::8], together[row, ::8]):
            if current >= jph[row] and cells.shunt_S_m2[row, 0] == 0:
                continue                    # no shunt: at and beyond Jph there is no reverse branch
            assert_same_root(vj, brentq_junction_voltage(alone, current), alone, current)


def esaki_junction():
    return TunnelJunction("tj", batch(1000.0), batch(0.06), batch(1000.0 / 12), batch(0.35))


@pytest.mark.parametrize("branch, currents", [
    ("tunnel", [-3e5, -100.0, 0.0, 500.0, 999.0, 1000.0]),
    ("negative", [999.0, 500.0, 200.0, 130.0]),
    ("thermal", [130.0, 500.0, 5e3, 1e8]),
])
def test_tunnel_branch_inverse_matches_brentq(branch, currents):
    tj = esaki_junction()
    peak_v, peak_j, valley_v, valley_j = (float(x[0, 0]) for x in tj.extrema(T))
    brackets = {"tunnel": (-50.0, peak_v), "negative": (peak_v, valley_v),
                "thermal": (valley_v, 20.0)}
    for current in currents:
        u = tj.junction_voltage(np.array([[current]]), T, branch)[0, 0]
        lo, hi = brackets[branch]
        if branch == "negative" and not valley_j <= current <= peak_j:
            continue

        def residual(v):
            return float(tj.junction_current(np.array([[v]]), T)[0][0, 0]) - current

        if residual(lo) * residual(hi) > 0:          # the branch's end itself (a fold)
            assert current == pytest.approx(peak_j if branch != "thermal" else valley_j)
            continue
        expected = brentq(residual, lo, hi, xtol=1e-15, rtol=8.9e-16, maxiter=500)
        assert u == pytest.approx(expected, abs=1e-12, rel=1e-12)


def test_tunnel_inverse_off_branch_is_nan():
    tj = esaki_junction()
    u = tj.junction_voltage(np.array([[1500.0, 50.0]]), T, "negative")
    assert np.all(np.isnan(u))


def test_polish_root_is_independent_of_the_batch():
    # a converged entry is frozen: the same answer alone or among slower neighbours
    def residual(x):
        return np.expm1(x) - 3.0, np.exp(x)

    x0 = np.array([[1.3, 0.2, 2.0]])
    lo, hi = np.zeros_like(x0), np.full_like(x0, 5.0)
    together, _ = polish_root(residual, x0, lo, hi, increasing=True)
    alone, _ = polish_root(residual, x0[:, :1], lo[:, :1], hi[:, :1], increasing=True)
    assert together[0, 0] == alone[0, 0]
    np.testing.assert_allclose(together, np.log(4.0), rtol=0, atol=1e-13)   # xtol


def test_table_flags_currents_outside_and_brackets_inside():
    # a decreasing law sampled on 11 points: inside its range the compiled inverse finds the
    # root of the law itself (u = -J, exact to rounding), outside it flags the entry
    from siltandem.laws import compiled as kernels

    u = np.linspace(0.0, 1.0, 11)[None, :]
    # J = -G u with G = 1: a shunt alone (the subcell law with no photocurrent and no diodes)
    params = kernels.parameter_rows(kernels.SUBCELL_LAW,
                                    [[0.0, 1e-300, 0.0, 1.0, 1.0, -np.inf, 0.0, 3.28]])
    j, slope = kernels.evaluate_law(kernels.SUBCELL_LAW, params, u)
    table = LawTable(u, j, slope)
    assert not table.increasing
    root, _, inside = kernels.invert(kernels.SUBCELL_LAW, params, table,
                                     np.array([[-0.25, -2.0, 0.5]]), increasing=False)
    assert inside.tolist() == [[True, False, False]]
    assert root[0, 0] == pytest.approx(0.25, abs=1e-15)


def test_safeguarded_newton_keeps_a_root_met_exactly():
    # a Newton step below the tolerance must end the search, even where rounding puts it on the
    # bracket's end (it once bisected away from the root and crept back, 40 evaluations)
    calls = []

    def function(x):
        calls.append(1)
        return x - 0.1, np.ones_like(x)

    root = safeguarded_newton(function, np.array([-100.0]), np.array([1.0]), start=np.array([0.5]))
    assert root[0] == pytest.approx(brentq(lambda x: x - 0.1, -100.0, 1.0), abs=1e-15)
    assert len(calls) <= 5


def test_batches_too_large_for_tables_use_the_root_find_and_agree():
    # beyond TABLE_MAX_ENTRIES a batch keeps the laws' own root finds (memory O(designs)); both
    # routes give the same root to the inverse's conditioning
    from siltandem.circuit import elements

    rows = elements.TABLE_MAX_ENTRIES // (elements.TABLE_FORWARD_POINTS
                                           + elements.TABLE_REVERSE_POINTS) + 10
    jph = np.linspace(100.0, 400.0, rows)
    big = Subcell("cell", batch(np.full(rows, 1.42)), ere=batch(1e-2), j02_A_m2=batch(1e-7),
                  shunt_S_m2=batch(0.01)).with_photocurrent(jph)
    assert not big._needs_table(T)
    currents = jph[:, None] * np.array([[-0.3, 0.5, 0.99, 1.0001]])
    general = big.junction_voltage_at(currents, T)
    for row in (0, rows // 2, rows - 1):
        small = Subcell("cell", batch(1.42), ere=batch(1e-2), j02_A_m2=batch(1e-7),
                        shunt_S_m2=batch(0.01)).with_photocurrent(jph[row])
        assert small._needs_table(T)
        tabled = small.junction_voltage_at(currents[row:row + 1], T)[0]
        for current, a, b in zip(currents[row], general[row], tabled):
            assert_same_root(b, a, small, current)


def test_tunnel_peak_without_the_valley_search_equals_the_attained_peak():
    # TunnelJunction.peak takes (Vp, J(Vp)) from the exact-peak shape; the full extrema search
    # (sampled slopes, or Chandrupatla bracketing) finds the same maximum
    rng = np.random.default_rng(5)
    for _ in range(20):
        jp, vp = 10 ** rng.uniform(2, 6), rng.uniform(0.03, 0.2)
        make = lambda: TunnelJunction("tj", batch(jp), batch(vp),  # noqa: E731
                                      batch(jp / rng.uniform(3, 30)), batch(vp * rng.uniform(3, 8)))
        tj = make()
        fresh = TunnelJunction("tj", tj.peak_A_m2, tj.peak_V, tj.valley_A_m2, tj.valley_V)
        peak_v, peak_j = fresh.peak(T)
        attained = tj.extrema(T)
        assert peak_v[0, 0] == pytest.approx(attained.peak_V[0, 0], abs=2e-13)
        assert peak_j[0, 0] == pytest.approx(attained.peak_A_m2[0, 0], rel=1e-13)


def test_safeguarded_newton_idle_entries_at_nan_give_the_same_roots():
    # idle=np.nan (the series solve's setting): stopped entries are evaluated at NaN, the roots
    # stay bit for bit those of idle=None; reference: scipy.optimize.brentq
    scales = np.array([1.0, 3.0, 30.0, 300.0])
    seen = []

    def function(x):
        seen.append(np.isnan(x).sum())
        with np.errstate(over="ignore", invalid="ignore"):
            return np.expm1(scales * x) - 2.0, scales * np.exp(scales * x)

    plain = safeguarded_newton(function, np.zeros(4), np.full(4, 2.0))
    assert max(seen) == 0
    seen.clear()
    idle = safeguarded_newton(function, np.zeros(4), np.full(4, 2.0), idle=np.nan)
    assert max(seen) > 0, "no entry stopped before the others: the check proves nothing"
    assert np.array_equal(plain, idle)
    for s, r in zip(scales, idle):
        assert r == pytest.approx(brentq(lambda x: np.expm1(s * x) - 2.0, 0.0, 2.0, xtol=1e-16),
                                  rel=1e-13)
