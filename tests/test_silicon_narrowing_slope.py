"""The proven bounds of Schenk's d dEg / d dn over a cell of the Si base law (laws/silicon.py
schenk_band_slope_bounds and schenk_slope_bounds, laws/compiled_bulk.py slope_bounds), which the
certificate's slope enclosure of the base law takes.

Sources, each named again beside its check:
- A. Schenk, J. Appl. Phys. 84 (1998) 3684: the narrowing's closed form, coded twice in
  laws/silicon.py (schenk_gap_narrowing, the equations as written, and schenk_band_shift with its
  quotient-rule derivative); the bounds must hold the derivative of the first (central differences)
  and of the second (dense samples) inside every cell, including cells around the derivative's
  turning points;
- R. E. Moore, R. B. Kearfott, M. J. Cloud, Introduction to Interval Analysis, SIAM 2009, ch. 2
  and 5: the interval arithmetic the bounds use (a degenerate interval gives the point value);
- scipy.optimize.brentq and a brute-force scan of the numpy law for the certified MPP.
"""
import numpy as np
import pytest
from scipy.optimize import brentq

from siltandem.circuit.elements import Subcell, batch
from siltandem.constants import BOLTZMANN_EV_K
from siltandem.laws import compiled_bulk, diode, silicon
from siltandem.laws.compiled import PARAMETER_WIDTH
from siltandem.solve.series import solve_string

NI = 8.28e9       # cm^-3, about Si's n_i at 25 degC (the laws take it as a parameter)
BASES = [(1e15, 0.0), (0.0, 1e16), (1e17, 0.0), (0.0, 0.0), (1e18, 0.0), (1e13, 0.0)]
TEMPERATURES = (250.0, 300.0, 400.0)


def _equilibrium(donors, acceptors, ni=NI):
    net = abs(donors - acceptors)
    majority = 0.5 * net + np.sqrt(0.25 * net * net + ni * ni)
    return (majority, ni * ni / majority) if donors >= acceptors else (ni * ni / majority, majority)


def _reduced(temperature):
    return BOLTZMANN_EV_K * temperature / silicon.SCHENK_RYDBERG_EV


def _held_slope(x, n0, p0, ions, t):
    """d dEg / d dn as the base law takes it: Schenk's for 0 < dn < the cap, 0 where held."""
    _, k = silicon.schenk_shift(n0 + x, p0 + x, ions, t)
    return np.where((x > 0) & (x < silicon.NARROWING_DENSITY_CM3), k, 0.0)


def _turning_points(n0, p0, ions, t):
    x = np.logspace(2, 19, 4001)
    _, k = silicon.schenk_shift(n0 + x, p0 + x, ions, t)
    change = np.diff(np.sign(np.diff(k))) != 0
    return x[1:-1][change]


def test_bounds_of_a_point_are_schenks_slope():
    # a degenerate cell (a = b): the expanded, regrouped derivative equals the quotient-rule one of
    # schenk_band_shift to rounding (Moore et al. 2009: point intervals give the point value)
    rng = np.random.default_rng(3)
    scale = silicon.SCHENK_BOHR_RADIUS_CM ** 3
    n, p, ions = (10 ** rng.uniform(4, 20, 2000) * scale for _ in range(3))
    for temperature in TEMPERATURES:
        t = _reduced(temperature)
        n_s, n_p = n + p, silicon.SCHENK_ELECTRON[0] * n + silicon.SCHENK_HOLE[0] * p
        for band, c in ((silicon.SCHENK_ELECTRON, n), (silicon.SCHENK_HOLE, p)):
            low, high, size = silicon.schenk_band_slope_bounds(c, c, n_s, n_s, n_p, n_p, ions, t, *band)
            _, slope = silicon.schenk_band_shift(c, n_s, n_p, ions, t, *band)
            allowed = 1e-11 * np.abs(slope) + 1e-12 * size
            assert np.all(np.abs(low - slope) <= allowed) and np.all(np.abs(high - slope) <= allowed)
            assert np.all(size >= np.abs(slope) * (1 - 1e-12))


@pytest.mark.parametrize("temperature", TEMPERATURES)
@pytest.mark.parametrize("donors, acceptors", BASES)
def test_bounds_contain_dense_samples_of_the_slope(donors, acceptors, temperature):
    # 600 random cells in dn (1e4 to 3e19 cm^-3: low to high injection and past the cap), widths
    # from 2e-4 to 3 decades, plus cells bracketing each turning point of dEg'; 401 samples each of
    # schenk_shift's slope, and central differences of schenk_gap_narrowing (Schenk 1998 as written;
    # relative step 1e-5: truncation below 1e-7 relative, rounding below 1e-15 dEg / step) at 41 points
    n0, p0 = _equilibrium(donors, acceptors)
    ions, t = donors + acceptors, _reduced(temperature)
    rng = np.random.default_rng(int(temperature) + int(np.log10(ions + 1)))
    a = 10 ** rng.uniform(4, 19.5, 600)
    b = a * 10 ** (rng.choice([2e-4 / np.log(10), 0.01, 0.1, 1.0, 3.0], 600) * rng.uniform(0.5, 1.0, 600))
    turns = _turning_points(n0, p0, ions, t)
    if ions > 0 and ions < 1e18:
        assert len(turns) == 2          # a doped base's dEg' has two turning points here
    for turn in turns:
        for ratio in (1.0001, 1.01, 1.5, 10.0):
            a = np.append(a, [turn / ratio, turn, turn / ratio ** 2])
            b = np.append(b, [turn * ratio, turn * ratio, turn])
    low, high = silicon.schenk_slope_bounds(a, b, n0, p0, ions, t)
    grid = a[:, None] * (b / a)[:, None] ** np.linspace(0.0, 1.0, 401)[None, :]
    k = _held_slope(grid, n0, p0, ions, t)
    assert np.all(k >= low[:, None]) and np.all(k <= high[:, None])
    # central differences of the narrowing as written (inside the cap only)
    grid = grid[:, ::10]
    inside = grid < silicon.NARROWING_DENSITY_CM3 * (1 - 1e-4)
    step = 1e-5 * grid
    shift = silicon.schenk_gap_narrowing(n0 + grid, p0 + grid, donor_cm3=ions, temperature_K=temperature)
    numeric = (silicon.schenk_gap_narrowing(n0 + grid + step, p0 + grid + step, donor_cm3=ions,
                                            temperature_K=temperature)
               - silicon.schenk_gap_narrowing(n0 + grid - step, p0 + grid - step, donor_cm3=ions,
                                              temperature_K=temperature)) / (2 * step)
    spread = 1e-7 * np.abs(numeric) + 1e-15 * np.abs(shift) / step
    assert np.all(np.where(inside, numeric + spread >= low[:, None], True))
    assert np.all(np.where(inside, numeric - spread <= high[:, None], True))


@pytest.mark.parametrize("donors, acceptors", BASES)
def test_compiled_bounds_are_the_numpy_ones(donors, acceptors):
    # our two forms of one source (compiled for scalars, numpy), to rounding
    n0, p0 = _equilibrium(donors, acceptors)
    rng = np.random.default_rng(5)
    a = np.concatenate([10 ** rng.uniform(4, 19.5, 300), [0.0, -1e5, 5e18]])
    b = np.concatenate([a[:300] * 10 ** rng.uniform(0, 2, 300), [1e12, 1e10, 2e19]])
    for temperature in TEMPERATURES:
        row = np.zeros(PARAMETER_WIDTH)
        off = compiled_bulk.BULK_OFFSET
        row[off + 9:off + 13] = n0, p0, donors + acceptors, _reduced(temperature)
        want = silicon.schenk_slope_bounds(a, b, n0, p0, donors + acceptors, _reduced(temperature))
        got = np.array([compiled_bulk.slope_bounds(x, y, row) for x, y in zip(a, b)]).T
        np.testing.assert_allclose(got[0], want[0], rtol=1e-12, atol=0)
        np.testing.assert_allclose(got[1], want[1], rtol=1e-12, atol=0)


def _columns(donors, acceptors, temperature):
    base = silicon.bulk_base(thickness_m=160e-6, n0_cm3=donors, p0_cm3=acceptors, srh_rate_s=1e3,
                             surface_srv_m_s=0.1)
    return silicon.bulk_columns(base, ni_eff_cm3=NI, temperature_K=temperature, injection_narrowing=1.0)


def test_bounds_are_tighter_than_the_sampled_margin_on_voltage_cells():
    # on voltage cells as the certificate makes them (0 to 0.9 V; widths 1e-4 to 1 of a random
    # span), the proven width (high - low) / max|dEg'| against the end values widened by the former
    # 5 % margin ((|k_b - k_a| + 0.1 max|k_a|, |k_b|) / max|dEg'|) and the true range (401 samples).
    # Measured medians over the 18 bases x temperatures (pooled): printed below.
    widths = {"proven": [], "margin": [], "true": []}
    for temperature in TEMPERATURES:
        for donors, acceptors in BASES:
            columns = _columns(donors, acceptors, temperature)
            n0, p0, ions, t = (float(c) for c in columns[9:13])
            rng = np.random.default_rng(11)
            u, w = rng.uniform(0.05, 0.9, 300), rng.uniform(0.05, 0.9, 300)
            lo = np.minimum(u, w)
            hi = lo + np.abs(u - w) * rng.choice([1.0, 1e-2, 1e-4], 300)
            ends = [silicon.injected_state(v, columns, temperature_K=temperature) for v in (lo, hi)]
            (x_a, *_, k_a), (x_b, *_, k_b) = ends
            low, high = silicon.schenk_slope_bounds(x_a, x_b, n0, p0, ions, t)
            grid = x_a[:, None] * (x_b / x_a)[:, None] ** np.linspace(0.0, 1.0, 401)[None, :]
            k = _held_slope(grid, n0, p0, ions, t)
            assert np.all(k >= low[:, None]) and np.all(k <= high[:, None])
            scale = np.abs(k).max(axis=1)
            used = scale > 0                    # (cells wholly above the cap hold dEg: dEg' = 0)
            scale = np.where(used, scale, 1.0)
            widths["proven"].append(((high - low) / scale)[used])
            widths["margin"].append(((np.abs(k_b - k_a) + 0.1 * np.maximum(np.abs(k_a), np.abs(k_b)))
                                     / scale)[used])
            widths["true"].append(((k.max(axis=1) - k.min(axis=1)) / scale)[used])
    pooled = {key: np.concatenate(value) for key, value in widths.items()}
    medians = {key: float(np.median(value)) for key, value in pooled.items()}
    print("median relative width of dEg' over a cell:", medians, "cells:", len(pooled["true"]),
          "proven wider than the margin in", int(np.sum(pooled["proven"] > pooled["margin"])))
    assert medians["true"] <= medians["proven"] < medians["margin"]


@pytest.mark.parametrize("donors, acceptors", [(0.0, 0.0), (0.0, 1e16), (1e15, 0.0)])
def test_mpp_of_a_si_string_with_injection_narrowing_is_certified_and_global(donors, acceptors):
    # the certified MPP (cell bounds with the proven dEg' bounds) against a brute-force scan of the
    # numpy law solved by brentq (no inverse, no enclosure involved)
    temperature = 298.15
    base = silicon.bulk_base(thickness_m=160e-6, n0_cm3=donors, p0_cm3=acceptors, srh_rate_s=1e3,
                             surface_srv_m_s=0.1)
    si = Subcell("silicon", batch(1.12), j01_fixed_A_m2=batch(1e-17),
                 bulk=tuple(batch(float(x)) for x in (*base, NI, 1.0))).with_photocurrent(batch(200.0))
    top = Subcell("top", batch(1.8)).with_photocurrent(batch(190.0))
    law = si._junction(temperature)
    assert float(law["bulk"][12].reshape(-1)[0]) > 0          # the narrowing follows the injection
    solution = solve_string([top, si], temperature, curve_points=80)
    assert solution.mpp_certified[0]
    j = np.linspace(0.0, 189.9, 20001)[::100]
    top_v, _ = top.voltage(j[None, :], temperature)
    si_v = np.array([brentq(lambda x: diode.junction_current(x, **law)[0][0, 0] - jj, -5, 1.3,
                            xtol=1e-14) for jj in j])
    best = np.max(j * (top_v[0] + si_v))
    assert solution.mpp_W_m2[0] >= best * (1 - 1e-9)
    assert solution.mpp_W_m2[0] <= best * 1.001
