"""Compiled loops of the series solve (numba): one pass of a string along the pilot's junction voltage,
the crossing of a level and the maximum of the power between exact samples.

The element laws and inverses they call are in :mod:`siltandem.laws.compiled`.
"""
import math
import warnings

from siltandem.numerics import jit as numba
import numpy as np

from siltandem.errors import CompileNotice
from siltandem.laws.compiled import element_voltages, subcell_law


@numba.njit(cache=True, error_model="numpy")
def string_pass(pilot, t, codes, params, grid_u, grid_j, grid_slope, lengths, signs, fold_low,
                fold_high, lower, upper, range_low, range_high, voltage_sign, series, xtol, rtol,
                max_iterations):
    """One evaluation of a series string along the pilot junction voltage t, compiled: the
    pilot subcell's forward law (parameter rows ``pilot`` (R, P)) gives the string current
    J(t) and dJ/dt, then :func:`element_voltages` (the other arguments) every packed element
    at J. Returns (current, dcurrent, element voltages, their dV/dJ, covered)."""
    rows, n = t.shape
    current = np.empty((rows, n))
    dcurrent = np.empty((rows, n))
    for b in range(rows):
        pp = pilot[0] if pilot.shape[0] == 1 else pilot[b]
        for i in range(n):
            current[b, i], dcurrent[b, i] = subcell_law(t[b, i], pp)
    element_voltage, element_slope, covered = element_voltages(
        current, codes, params, grid_u, grid_j, grid_slope, lengths, signs, fold_low, fold_high,
        lower, upper, range_low, range_high, voltage_sign, series, xtol, rtol, max_iterations)
    return current, dcurrent, element_voltage, element_slope, covered


@numba.njit(cache=True, inline="always", error_model="numpy")
def _clip01(x):
    """x clipped to [0, 1]; NaN stays NaN."""
    if x < 0.0:
        return 0.0
    if x > 1.0:
        return 1.0
    return x


@numba.njit(cache=True, error_model="numpy")
def hermite_crossing(t, v, dv, level, finite):
    """Where sampled, rising V(t) crosses ``level`` (one per row): the cubic Hermite
    interpolant of the exact values and slopes in the crossing cell, by Newton steps.

    ``t``, ``v``, ``dv``, ``finite`` (B, N); ``level`` (B,). Returns (crossing, t0, t1) of
    shape (B,): NaN where the samples do not cross the level between two samples that both
    have a value (``finite``), and the crossing cell's ends.
    """
    rows, n = t.shape
    crossing = np.empty(rows)
    t0_out = np.empty(rows)
    t1_out = np.empty(rows)
    for b in range(rows):
        below = 0
        for i in range(n):
            if v[b, i] < level[b]:
                below += 1
        crossed = below > 0 and below < n
        k = min(max(below, 1), n - 1)
        crossed = crossed and finite[b, k - 1] and finite[b, k]
        t0, t1 = t[b, k - 1], t[b, k]
        v0, v1 = v[b, k - 1], v[b, k]
        h = t1 - t0
        m0, m1 = h * dv[b, k - 1], h * dv[b, k]
        x = _clip01((level[b] - v0) / (v1 - v0)) if v1 != v0 else 0.5
        if not (math.isfinite(m0) and math.isfinite(m1)):
            m0 = m1 = v1 - v0
        for _ in range(4):
            x2, x3 = x * x, x * x * x
            p = ((2 * x3 - 3 * x2 + 1) * v0 + (x3 - 2 * x2 + x) * m0 + (3 * x2 - 2 * x3) * v1
                 + (x3 - x2) * m1)
            dp = (6 * x2 - 6 * x) * (v0 - v1) + (3 * x2 - 4 * x + 1) * m0 + (3 * x2 - 2 * x) * m1
            x = _clip01(x - ((p - level[b]) / dp if dp > 0 else 0.0))
        crossing[b] = t0 + x * h if crossed else math.nan
        t0_out[b] = t0
        t1_out[b] = t1
    return crossing, t0_out, t1_out


@numba.njit(cache=True, error_model="numpy")
def power_maximum(t, j, v, dj, dv):
    """The best sample of P = J V per row and the maximum of P's cubic Hermite interpolant in
    the cell next to it where dP/dt changes sign.

    Returns (t_best, t_other, turns, t_mpp, curvature), each (B,): the best sample, the cell's
    other end, whether dP/dt changes sign in that cell, the interpolant's maximum (t_best
    where it does not turn) and the interpolant's d2P/dt2 there.
    """
    rows, n = t.shape
    t_best = np.empty(rows)
    t_other = np.empty(rows)
    turns = np.empty(rows, dtype=np.bool_)
    t_mpp = np.empty(rows)
    curvature = np.empty(rows)
    for b in range(rows):
        best, best_power = 0, -math.inf
        for i in range(n):                          # the first largest, as numpy's argmax
            power = j[b, i] * v[b, i] if math.isfinite(j[b, i]) else -math.inf
            if i == 0 or power > best_power:
                best, best_power = i, power
        g_best = dj[b, best] * v[b, best] + j[b, best] * dv[b, best]
        other = best + 1 if g_best > 0 else best - 1
        other = min(max(other, 0), n - 1)
        g_other = dj[b, other] * v[b, other] + j[b, other] * dv[b, other]
        p_other = j[b, other] * v[b, other] if math.isfinite(j[b, other]) else -math.inf
        turn = (math.isfinite(g_best) and math.isfinite(g_other)
                and ((g_best > 0 and g_other < 0) or (g_best < 0 and g_other > 0)))
        h = t[b, other] - t[b, best]
        m0, m1 = h * g_best, h * g_other
        x = _clip01(g_best / (g_best - g_other)) if turn else 0.0
        qa = 6.0 * (best_power - p_other) + 3.0 * (m0 + m1)
        qb = -6.0 * (best_power - p_other) - 4.0 * m0 - 2.0 * m1
        for _ in range(3):
            dq = 2.0 * qa * x + qb
            x = _clip01(x - ((qa * x * x + qb * x + m0) / dq if dq != 0 else 0.0))
        t_best[b] = t[b, best]
        t_other[b] = t[b, other]
        turns[b] = turn
        t_mpp[b] = t[b, best] + x * h if (turn and math.isfinite(x)) else t[b, best]
        curvature[b] = (2.0 * qa * x + qb) / (h * h)
    return t_best, t_other, turns, t_mpp, curvature


_COMPILE_NOTICE_GIVEN = []


def notice_compiling():
    """Issue :class:`siltandem.errors.CompileNotice` once per process when the next solve will
    compile the kernels (:func:`compiled_already` is False); nothing when they are cached or when
    it cannot tell."""
    if _COMPILE_NOTICE_GIVEN:
        return
    _COMPILE_NOTICE_GIVEN.append(True)
    if compiled_already() is False:
        warnings.warn("siltandem: compiling the solver's kernels (the first solve after installing or "
                      "updating; about 10-20 s, once)", CompileNotice, stacklevel=3)


def compiled_already():
    """True when the kernels' compiled code is in numba's cache for this source (the solve
    starts at once); False when the next solve compiles them (the first run after installing
    or changing this file). Reads numba's cache index; None when it cannot tell. True when the
    kernels run interpreted (numerics/jit.py): nothing to compile."""
    if numba.mode() == "interpreted":
        return True
    try:
        return bool(string_pass._cache._cache_file._load_index())
    except Exception:                                   # numba's private layout changed
        return None
