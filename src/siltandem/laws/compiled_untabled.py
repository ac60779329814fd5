"""A subcell's junction-law inverse without building its table first (numba).

laws/compiled.py inverts a subcell's law through a table of the law sampled on a grid of junction
voltages (``subcell_table``: 672 law evaluations per design, ~0.6 µs each with a silicon base's
law): worth it where a string inverts the subcell at many currents, not where it is asked for a
few (the pilot of a string of one subcell is asked for its junction voltage at two currents, then
only run forward). Here the same grid is laid (``compiled.subcell_grid``) but the law is
evaluated only at the samples the table search reads (the two ends, the hunt and bisection of
``compiled._locate_cell``, the cell's ends): then ``compiled.invert_one`` runs on that partly
filled table exactly as on the full one. The samples it reads are the law at the same grid
points, so the answer is the table inverse's, bit for bit (tests/test_year_reuse.py).

Reference: W. H. Press et al., Numerical Recipes, 3rd ed., Cambridge 2007, sec. 3.1 (hunting and
bisecting a table) and sec. 9.4 (Newton's method safeguarded by a bracket).
"""
from pathlib import Path
import math

from siltandem.numerics import jit as numba
import numpy as np

from siltandem.numerics.kernel_cache import drop_stale_kernels

drop_stale_kernels(Path(__file__).resolve().parents[1], once=True)

from siltandem.laws.compiled import (  # noqa: E402
    SUBCELL_LAW, EPS, invert_one, subcell_grid, subcell_law)

__all__ = ["subcell_inverse_untabled"]


@numba.njit(cache=True, inline="always", error_model="numpy")
def _sample(k, p, gu, gj, gs, done):
    """The table's sample k (the law at grid point k), evaluated once."""
    if not done[k]:
        gj[k], gs[k] = subcell_law(gu[k], p)
        done[k] = True
    return gj[k]


@numba.njit(cache=True, inline="always", error_model="numpy")
def _locate_sampling(p, gu, gj, gs, done, m, sign, ys, hint):
    """compiled._locate_cell step for step, evaluating each sample it reads on first read."""
    lo, hi = 0, m - 1
    if hint >= 0 and hint < m - 1:
        if sign * _sample(hint, p, gu, gj, gs, done) <= ys:
            lo, step = hint, 1
            while lo + step < m - 1 and sign * _sample(lo + step, p, gu, gj, gs, done) <= ys:
                lo += step
                step += step
            hi = min(lo + step, m - 1)
        else:
            hi, step = hint, 1
            while hi - step > 0 and sign * _sample(hi - step, p, gu, gj, gs, done) > ys:
                hi -= step
                step += step
            lo = max(hi - step, 0)
    while hi - lo > 1:
        mid = (lo + hi) >> 1
        if sign * _sample(mid, p, gu, gj, gs, done) <= ys:
            lo = mid
        else:
            hi = mid
    _sample(lo, p, gu, gj, gs, done)
    _sample(hi, p, gu, gj, gs, done)


@numba.njit(cache=True, error_model="numpy")
def subcell_inverse_untabled(params, targets, forward_points, reverse_points, xtol, rtol,
                             max_iterations):
    """Junction voltage u with J(u) = target and dJ/du there, as compiled.invert_table gives
    them through ``subcell_table(params, forward_points, reverse_points)`` (no folds, J falling
    with u), without building the table. ``params`` (R, P), ``targets`` (B, N), B = R or R = 1.
    Returns (u, slope, inside) (B, N)."""
    rows, n = targets.shape
    m = reverse_points + forward_points
    sign = -1.0
    u_out = np.empty((rows, n))
    slope_out = np.empty((rows, n))
    inside = np.empty((rows, n), dtype=np.bool_)
    gu = np.empty(m)
    gj = np.empty(m)
    gs = np.empty(m)
    done = np.empty(m, dtype=np.bool_)
    for b in range(rows):
        p = params[0] if params.shape[0] == 1 else params[b]
        subcell_grid(p, forward_points, reverse_points, gu)
        # (NaN where not evaluated: a sample read before it is filled would show in the tests)
        gj[:] = math.nan
        gs[:] = math.nan
        done[:] = False
        cell = -1
        for i in range(n):
            y = targets[b, i]
            ys = sign * y
            first = sign * _sample(0, p, gu, gj, gs, done)
            last = sign * _sample(m - 1, p, gu, gj, gs, done)
            if not (ys >= first and ys <= last):
                # compiled.invert_one's end slack: a few rounding units beyond an end
                slack = 4.0 * EPS * abs(y)
                if ys >= first - slack and ys < first:
                    ys = first
                elif ys <= last + slack and ys > last:
                    ys = last
                else:
                    ys = math.nan
            if ys == ys:
                _locate_sampling(p, gu, gj, gs, done, m, sign, ys, cell)
            u_out[b, i], slope_out[b, i], inside[b, i], cell = invert_one(
                SUBCELL_LAW, p, gu, gj, gs, m, sign, 0.0, 0.0, y, xtol, rtol, max_iterations,
                cell)
    return u_out, slope_out, inside
