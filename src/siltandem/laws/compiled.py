"""Compiled element laws and their inverses, one entry at a time (numba).

Every evaluation of a string inverts each non-pilot element at the string's current (solve.py).
Done with whole-array numpy steps, that costs tens of array operations per element and call; here
the same work (find the table cell that brackets the target, guess, safeguarded Newton inside the
cell) runs as one compiled loop over the entries (numba), so each entry takes only the law
evaluations it needs. Every kernel uses numpy's floating-point error model: a division by zero
gives inf or NaN, as the numpy code around it expects, never an exception.

The laws are the scalar forms of :func:`siltandem.laws.diode.junction_current` (two diodes,
shunt, Bishop breakdown) and of the Esaki three-term law of :mod:`siltandem.laws.esaki` (prepared,
with its exponentials continued linearly beyond ``EXP_LIMIT``); tests/test_kernels.py
checks both against the numpy laws and the inverses against ``scipy.optimize.brentq``.

References
----------
W. H. Press et al., Numerical Recipes, 3rd ed., Cambridge 2007, sec. 3.1 (locating a value in a
table by bisection) and sec. 9.4 ('rtsafe': Newton's method safeguarded by a bracket).
J. W. Bishop, Solar Cells 25 (1988) 73 (breakdown term); L. Esaki, Phys. Rev. 109 (1958) 603.
"""
import math
from pathlib import Path

from siltandem.numerics import jit as numba
import numpy as np

from siltandem.numerics.kernel_cache import drop_stale_kernels

# before any kernel is loaded from numba's cache: a cache built from other kernel sources goes
drop_stale_kernels(Path(__file__).resolve().parents[1], once=True)

from siltandem.laws.compiled_bulk import BULK_OFFSET, BULK_WIDTH, bulk_law, bulk_slopes  # noqa: E402
from siltandem.laws.compiled_isotype import ROW_WIDTH, element_inverse  # noqa: E402

__all__ = ["SUBCELL_LAW", "TUNNEL_LAW", "ISOTYPE_LAW", "as_input", "parameter_rows", "evaluate_law",
           "tunnel_curvature", "invert", "invert_table", "element_voltages",
           "subcell_table", "subcell_grid", "subcell_terminal_current", "exact_peak_shape",
           "tunnel_extrema", "bose_einstein_tail", "slope_range"]

#: law codes of :func:`invert_table`
SUBCELL_LAW = 0
TUNNEL_LAW = 1
#: an isotype interface in :func:`element_voltages` (inverted by laws/compiled_isotype.py, no table)
ISOTYPE_LAW = 2
#: columns of a law's parameter rows: the law's 8 parameters, then quantities derived from them (a
#: subcell: 1/Vt, the 9 columns of a Si base's law, laws/compiled_bulk.py; an isotype row: ROW_WIDTH)
PARAMETER_WIDTH = max(BULK_OFFSET + BULK_WIDTH, ROW_WIDTH)


def as_input(x, dtype=float):
    """``x`` as a C-ordered, writable array of ``dtype`` (copied only where needed): every
    kernel argument goes through it, so that each kernel is compiled for one array type only
    (a read-only view, such as np.broadcast_to gives, would be a second type and a second
    compilation)."""
    a = np.ascontiguousarray(x, dtype=dtype)
    return a if a.flags.writeable else a.copy()


def parameter_rows(code, base, bulk=None):
    """A law's parameter rows for the kernels: ``base`` (R, 8), (Jph, J01, J02, G, Vt, Vbr, a, m)
    for a subcell or (A, V1, Jv, Vv, C2, J0, n Vt, k) for a tunnel junction, followed by the
    derived columns its scalar form reads (reciprocals, the shifted excess prefactor); a
    subcell's ``bulk`` (R or 1, up to BULK_WIDTH) columns of a silicon base's law (laws/silicon.py
    bulk_columns), none when None."""
    base = np.asarray(base, dtype=float)
    rows = np.zeros((base.shape[0], PARAMETER_WIDTH))
    rows[:, :8] = base
    if bulk is not None:
        bulk = np.asarray(bulk, dtype=float)
        rows[:, BULK_OFFSET:BULK_OFFSET + bulk.shape[1]] = bulk
    with np.errstate(divide="ignore", over="ignore", under="ignore", invalid="ignore"):
        if code == SUBCELL_LAW:
            rows[:, 8] = 1.0 / base[:, 4]
        else:
            rows[:, 8] = 1.0 / base[:, 1]
            rows[:, 9] = 1.0 / base[:, 6]
            rows[:, 10] = base[:, 7] * np.exp(-base[:, 4] * base[:, 3])
    return rows


#: exponent beyond which every exponential of the tunnel law is continued along its tangent (value
#: and slope continuous) so that nothing overflows; e**300 ~ 2e130 lies far outside any physical
#: operating point (the numpy law in laws/esaki.py uses the same limit)
EXP_LIMIT = 300.0
EPS = np.finfo(float).eps


@numba.njit(cache=True, inline="always", error_model="numpy")
def _limited_exp(z):
    """exp(z), continued by its tangent beyond EXP_LIMIT: (value, first derivative, second)."""
    if z > EXP_LIMIT:
        e = math.exp(EXP_LIMIT)
        return e * (1.0 + (z - EXP_LIMIT)), e, 0.0
    e = math.exp(z)
    return e, e, e


@numba.njit(cache=True, inline="always", error_model="numpy")
def subcell_law(v, p):
    """Junction current and dJ/dVj of a subcell; p = (Jph, J01, J02, G, Vt, Vbr, a, m, 1/Vt)
    (rows from :func:`parameter_rows`). expm1(2z) = expm1(z) (expm1(z) + 2): one exponential."""
    jph, j01, j02, g, vbr, a, m, inverse = p[0], p[1], p[2], p[3], p[5], p[6], p[7], p[8]
    e2 = math.expm1(0.5 * v * inverse)
    e1 = e2 * (e2 + 2.0)
    multiplier, multiplier_slope = 1.0, 0.0
    if a > 0.0 and math.isfinite(vbr):
        base = max(1.0 - v / vbr, 1e-300)
        power = base ** (-m)
        multiplier = 1.0 + a * power
        multiplier_slope = a * m * power / base / vbr
    second, second_slope = 0.0, 0.0
    if j02 > 0.0:
        second = j02 * e2
        second_slope = 0.5 * j02 * inverse * (e2 + 1.0)
    j = jph - j01 * e1 - second - g * v * multiplier
    dj = -j01 * inverse * (e1 + 1.0) - second_slope - g * (multiplier + v * multiplier_slope)
    if p[BULK_OFFSET] > 0.0:
        jb, djb = bulk_law(v, p, inverse)
        j -= jb
        dj -= djb
    return j, dj


@numba.njit(cache=True, inline="always", error_model="numpy")
def _tunnel(v, p):
    """Esaki three-term current and dJ/du; p = (A, V1, Jv, Vv, C2, J0, n Vt, k, 1/V1, 1/(n Vt),
    k exp(-C2 Vv)), k the excess term's prefactor Jv / (1 - exp(-2 C2 Vv)) (rows from
    :func:`parameter_rows`)."""
    a, vv, c2, j0, k = p[0], p[3], p[4], p[5], p[7]
    inverse_v1, inverse_nvt, shifted = p[8], p[9], p[10]
    x = v * inverse_v1
    e1, e1d, _ = _limited_exp(1.0 - x)
    c2v = c2 * v
    if abs(c2v) + c2 * vv < 0.9 * EXP_LIMIT:
        # exp(C2 (V - Vv)) and exp(-C2 (V + Vv)) from one exponential
        ec = math.exp(c2v)
        ei = 1.0 / ec
        excess = shifted * (ec - ei)
        excess_slope = shifted * c2 * (ec + ei)
    else:
        ea, ead, _ = _limited_exp(c2 * (v - vv))
        eb, ebd, _ = _limited_exp(-c2 * (v + vv))
        excess = k * (ea - eb)
        excess_slope = k * c2 * (ead + ebd)
    z3 = v * inverse_nvt
    if z3 > EXP_LIMIT:
        e3, e3d, _ = _limited_exp(z3)
        e3m1 = e3 - 1.0
    else:
        e3m1 = math.expm1(z3)
        e3d = e3m1 + 1.0
    j = a * x * e1 + excess + j0 * e3m1
    dj = a * inverse_v1 * (e1 - x * e1d) + excess_slope + j0 * e3d * inverse_nvt
    return j, dj


@numba.njit(cache=True, inline="always", error_model="numpy")
def _tunnel_bend(u, p):
    """d2J/du2 of the Esaki three-term law at u (parameters as for the tunnel law)."""
    a, v1, vv, c2, j0, nvt, k = p[0], p[1], p[3], p[4], p[5], p[6], p[7]
    x = u / v1
    _, e1d, e1dd = _limited_exp(1.0 - x)
    _, _, ea2 = _limited_exp(c2 * (u - vv))
    _, _, eb2 = _limited_exp(-c2 * (u + vv))
    _, _, e32 = _limited_exp(u / nvt)
    return ((a / (v1 * v1)) * (-2.0 * e1d + x * e1dd) + k * c2 * c2 * (ea2 - eb2)
            + j0 * e32 / (nvt * nvt))


@numba.njit(cache=True, error_model="numpy")
def tunnel_curvature(params, v):
    """d2J/du2 of the Esaki three-term law (parameters as for the tunnel law) at ``v`` (R', N),
    parameter rows (R, P) with R = R' or R = 1: the curvature of a peak or valley."""
    rows, n = v.shape
    out = np.empty((rows, n))
    for b in range(rows):
        p = params[0] if params.shape[0] == 1 else params[b]
        for i in range(n):
            out[b, i] = _tunnel_bend(v[b, i], p)
    return out


@numba.njit(cache=True, inline="always", error_model="numpy")
def _law(code, v, p):
    if code == SUBCELL_LAW:
        return subcell_law(v, p)
    return _tunnel(v, p)


@numba.njit(cache=True, error_model="numpy")
def evaluate_law(code, params, v):
    """J and dJ/du of law ``code`` at ``v`` (R', N) with parameter rows ``params`` (R, P),
    R = R' or R = 1 (for tests and forward evaluations)."""
    rows, n = v.shape
    j = np.empty((rows, n))
    dj = np.empty((rows, n))
    shared = params.shape[0] == 1
    for b in range(rows):
        p = params[0] if shared else params[b]
        for i in range(n):
            j[b, i], dj[b, i] = _law(code, v[b, i], p)
    return j, dj


@numba.njit(cache=True, inline="always", error_model="numpy")
def _subcell_slopes(lo, hi, p):
    """Smallest and largest dJ/dVj of the subcell law over [lo, hi]: the compiled form of
    laws/diode.py junction_slope_range (the same terms, each monotone in Vj; the breakdown
    shape q(w) = w^(-m-1) (m - (m - 1) w) has its one minimum at w = (m + 1)/(m - 1))."""
    j01, j02, g, vbr, a, m, inverse = p[1], p[2], p[3], p[5], p[6], p[7], p[8]
    small = j01 * inverse * math.exp(lo * inverse)
    large = j01 * inverse * math.exp(hi * inverse)
    if j02 > 0.0:
        half = 0.5 * inverse
        small += j02 * half * math.exp(lo * half)
        large += j02 * half * math.exp(hi * half)
    shunt_small, shunt_large = g, g
    if a > 0.0 and math.isfinite(vbr):
        w_lo, w_hi = 1.0 - lo / vbr, 1.0 - hi / vbr
        q_lo = w_lo ** (-m - 1.0) * (m - (m - 1.0) * w_lo)
        q_hi = w_hi ** (-m - 1.0) * (m - (m - 1.0) * w_hi)
        q_min, q_max = min(q_lo, q_hi), max(q_lo, q_hi)
        if m > 1.0:
            turn = (m + 1.0) / (m - 1.0)
            if w_lo < turn < w_hi:
                q_min = turn ** (-m - 1.0) * (m - (m - 1.0) * turn)
        shunt_small = g * (1.0 + a * q_min)
        shunt_large = g * (1.0 + a * q_max)
    steep, flat = -(large + shunt_large) * (1.0 + 1e-12), -(small + shunt_small) * (1.0 - 1e-12)
    if p[BULK_OFFSET] > 0.0:
        b_lo, b_hi = bulk_slopes(lo, hi, p, inverse)
        steep -= b_hi
        flat -= b_lo
    return steep, flat


@numba.njit(cache=True, inline="always", error_model="numpy")
def _tunnel_slopes(lo, hi, p):
    """Smallest and largest dJ/du of the Esaki law over [lo, hi]: the compiled form of
    laws/esaki.py slope_range (the tunnelling term falls in x = u/V1 up to x = 2 and rises
    beyond; one excess exponential rises and one falls in u; the thermal term rises)."""
    a, v1, vv, c2, j0, nvt, k = p[0], p[1], p[3], p[4], p[5], p[6], p[7]
    x_lo, x_hi = lo / v1, hi / v1
    turn = min(max(2.0, min(x_lo, x_hi)), max(x_lo, x_hi))
    smallest, largest = math.inf, -math.inf
    for x in (x_lo, x_hi, turn):
        value, first, _ = _limited_exp(1.0 - x)
        term = (a / v1) * (value - x * first)
        smallest, largest = min(smallest, term), max(largest, term)
    rise_lo = math.exp(min(c2 * (lo - vv), EXP_LIMIT))
    rise_hi = math.exp(min(c2 * (hi - vv), EXP_LIMIT))
    fall_lo = math.exp(min(-c2 * (lo + vv), EXP_LIMIT))
    fall_hi = math.exp(min(-c2 * (hi + vv), EXP_LIMIT))
    smallest += k * c2 * (rise_lo + fall_hi) + j0 / nvt * math.exp(min(lo / nvt, EXP_LIMIT))
    largest += k * c2 * (rise_hi + fall_lo) + j0 / nvt * math.exp(min(hi / nvt, EXP_LIMIT))
    spread = 1e-12 * (abs(smallest) + abs(largest))
    return smallest - spread, largest + spread


@numba.njit(cache=True, error_model="numpy")
def slope_range(code, params, lo, hi):
    """Smallest and largest slope of law ``code`` over the intervals [lo, hi] (R', N each),
    parameter rows (R, P), R = R' or R = 1: the ranges the MPP certificate's bounds rest on
    (certificate.py). NaN where an end is NaN."""
    rows, n = lo.shape
    low = np.empty((rows, n))
    high = np.empty((rows, n))
    shared = params.shape[0] == 1
    for b in range(rows):
        p = params[0] if shared else params[b]
        for i in range(n):
            if code == SUBCELL_LAW:
                low[b, i], high[b, i] = _subcell_slopes(lo[b, i], hi[b, i], p)
            else:
                low[b, i], high[b, i] = _tunnel_slopes(lo[b, i], hi[b, i], p)
    return low, high


@numba.njit(cache=True, inline="always", error_model="numpy")
def _hermite_inverse(y, xl, xh, jl, jh, dl, dh):
    """u at J = y inside one cell from the cubic Hermite interpolant of the inverse u(J) (its
    slopes 1/J' at both ends); the linear estimate where a slope is zero or not finite."""
    width = jh - jl
    if width == 0.0:
        return 0.5 * (xl + xh)
    s = (y - jl) / width
    linear = xl + s * (xh - xl)
    if not (dl != 0.0 and dh != 0.0 and math.isfinite(dl) and math.isfinite(dh)):
        return linear
    s2 = s * s
    s3 = s2 * s
    x = ((2.0 * s3 - 3.0 * s2 + 1.0) * xl + (s3 - 2.0 * s2 + s) * width / dl
         + (3.0 * s2 - 2.0 * s3) * xh + (s3 - s2) * width / dh)
    if x >= xl and x <= xh:
        return x
    return linear


@numba.njit(cache=True, inline="always", error_model="numpy")
def _bracketed_step(x, g, dg, xl, xh, previous):
    """One step of a safeguarded Newton search on a rising g inside [xl, xh]: the bracket
    shrinks to the side where g changes sign, Newton's step is taken where it stays inside and
    at most halves the previous step, bisection otherwise (W. H. Press et al., Numerical
    Recipes, sec. 9.4, 'rtsafe'). Returns (x, step, xl, xh)."""
    if g < 0.0:
        xl = x
    else:
        xh = x
    newton = x - g / dg if dg != 0.0 else math.nan
    if newton > xl and newton < xh and abs(newton - x) <= 0.5 * abs(previous):
        return newton, newton - x, xl, xh
    step = 0.5 * (xh - xl)
    return xl + step, step, xl, xh


@numba.njit(cache=True, inline="always", error_model="numpy")
def _locate_cell(gj, m, sign, ys, hint):
    """(lo, hi): the table cell whose values sign * gj bracket ``ys`` (rising in the index).
    From ``hint`` (a cell to try first) it hunts outwards in growing steps, as targets along a
    curve come in order, then bisects what is left (Numerical Recipes, sec. 3.1)."""
    lo, hi = 0, m - 1
    if hint >= 0 and hint < m - 1:
        if sign * gj[hint] <= ys:
            lo, step = hint, 1
            while lo + step < m - 1 and sign * gj[lo + step] <= ys:
                lo += step
                step += step
            hi = min(lo + step, m - 1)
        else:
            hi, step = hint, 1
            while hi - step > 0 and sign * gj[hi - step] > ys:
                hi -= step
                step += step
            lo = max(hi - step, 0)
    while hi - lo > 1:
        mid = (lo + hi) >> 1
        if sign * gj[mid] <= ys:
            lo = mid
        else:
            hi = mid
    return lo, hi


@numba.njit(cache=True, inline="always", error_model="numpy")
def _first_guess(y, lo, hi, m, gu, gj, gs, fold_low, fold_high):
    """The first u for J = y in the cell [lo, hi]: the quadratic fold's inverse in an end cell
    at a fold, else the cubic Hermite inverse (:func:`_hermite_inverse`); the cell's middle if
    that leaves the cell."""
    xl, xh = gu[lo], gu[hi]
    if lo == 0 and fold_low > 0.0:
        x = xl + math.sqrt(2.0 * abs(y - gj[lo]) / fold_low)
    elif hi == m - 1 and fold_high > 0.0:
        x = xh - math.sqrt(2.0 * abs(gj[hi] - y) / fold_high)
    else:
        x = _hermite_inverse(y, xl, xh, gj[lo], gj[hi], gs[lo], gs[hi])
    if not (x >= xl and x <= xh):
        x = 0.5 * (xl + xh)
    return x


@numba.njit(cache=True, inline="always", error_model="numpy")
def invert_one(code, p, gu, gj, gs, m, sign, fold_low, fold_high, y, xtol, rtol,
                max_iterations, hint):
    """(u, dJ/du, inside, cell) for one target y in one law's table (see
    :func:`invert_table`); ``hint`` is a cell to try first (the previous entry's: targets
    along a curve come in order)."""
    ys = sign * y
    first, last = sign * gj[0], sign * gj[m - 1]
    if not (ys >= first and ys <= last):
        # a few rounding units beyond an end (a fold's value computed elsewhere): the end
        slack = 4.0 * EPS * abs(y)
        if not math.isfinite(y):
            return math.nan, math.nan, False, hint
        if ys >= first - slack and ys < first:
            ys, y = first, gj[0]
        elif ys <= last + slack and ys > last:
            ys, y = last, gj[m - 1]
        else:
            return math.nan, math.nan, False, hint
    lo, hi = _locate_cell(gj, m, sign, ys, hint)
    xl, xh = gu[lo], gu[hi]
    x = _first_guess(y, lo, hi, m, gu, gj, gs, fold_low, fold_high)
    ftol = 2.0 * EPS * abs(y)
    # one law evaluation per pass of this loop (a single call site keeps the compiled code
    # small): stage 0 at the first guess, stage 1 at its Newton point, stage 2 the general
    # search (Newton inside the shrinking bracket, bisection where a step would leave it or
    # stop shrinking)
    stage = 0
    previous = xh - xl
    step = xh - xl
    for _ in range(max_iterations + 2):
        j, dj = _law(code, x, p)
        g = sign * (j - y)
        if abs(g) <= ftol:
            return x, dj, True, lo
        if stage == 2:
            if abs(step) <= xtol + rtol * abs(x) or xh - xl <= xtol:
                return x, dj, True, lo
        elif dj != 0.0 and math.isfinite(dj):
            step = (j - y) / dj
            newton = x - step
            if newton > xl and newton < xh:
                # the error the step leaves, |J''| s^2 / (2 |J'|), with |J''| bounded by 4
                # times the larger of the slope's mean rates of change from the cell's ends to
                # the point (written without divisions: each side's rate over its distance)
                tolerance = (xtol + rtol * abs(newton)) * abs(dj)
                squared = 2.0 * step * step
                if (squared * abs(dj - gs[lo]) <= tolerance * (x - gu[lo])
                        and squared * abs(gs[hi] - dj) <= tolerance * (gu[hi] - x)):
                    if stage == 1:
                        return newton, dj, True, lo
                    side = gs[hi] if newton > x else gs[lo]
                    end = xh if newton > x else xl
                    slope = dj + (side - dj) * (newton - x) / (end - x) if end != x else dj
                    return newton, slope, True, lo
                if stage == 0:
                    # not yet: one more evaluation at the Newton point, and the same test on
                    # the next step (which quadratic convergence makes tiny)
                    if g < 0.0:
                        xl = x
                    else:
                        xh = x
                    x = newton
                    stage = 1
                    continue
            stage = 2
            previous = xh - xl
        else:
            stage = 2
            previous = xh - xl
        # the general search from x
        x, step, xl, xh = _bracketed_step(x, g, sign * dj, xl, xh, previous)
        previous = step
    return x, dj, True, lo


@numba.njit(cache=True, error_model="numpy")
def invert_table(code, params, grid_u, grid_j, grid_slope, increasing, fold_low, fold_high,
                 targets, xtol, rtol, max_iterations):
    """u with J(u) = target, entry by entry, inside the cell of a sampled law that brackets it.

    Parameters
    ----------
    code : int
        SUBCELL_LAW or TUNNEL_LAW.
    params : (R, P) float array
        Law parameters, one row per design (R = 1: shared by all).
    grid_u, grid_j, grid_slope : (R, M) float arrays
        The law and its slope dJ/du sampled on an increasing grid of u, J strictly monotone
        along each row.
    increasing : bool
        Whether J rises with u.
    fold_low, fold_high : (R,) float arrays
        |d2J/du2| where the table's first (last) sample is a fold of the law (J' = 0: a tunnel
        junction's peak or valley), else 0; there the first guess is the fold's quadratic model.
    targets : (B, N) float array
        Currents; B = R, or any B when R = 1.
    xtol, rtol : float
        Absolute and relative tolerance on u. A residual within two rounding units of the
        target also ends the search.
    max_iterations : int

    Returns
    -------
    u, slope : (B, N) arrays
        The root and dJ/du there; NaN where the target is outside the table (``inside`` False).
    inside : (B, N) bool array

    Notes
    -----
    First guess: the cubic Hermite interpolant of the inverse law in the cell (next to a fold,
    the fold's quadratic model). One evaluation there and a Newton step; the step is the answer
    when the error it leaves, |J''| s^2 / (2 |J'|) with J'' bounded from the slopes at the
    cell's ends and at the guess (times 4), is below the tolerance. Otherwise the search goes
    on: Newton steps inside the bracket, bisection where a step would leave it or stop
    shrinking (W. H. Press et al., Numerical Recipes, sec. 9.4).
    """
    rows, n = targets.shape
    m = grid_u.shape[1]
    sign = 1.0 if increasing else -1.0
    u_out = np.empty((rows, n))
    slope_out = np.empty((rows, n))
    inside = np.empty((rows, n), dtype=np.bool_)
    for b in range(rows):
        r = 0 if grid_u.shape[0] == 1 else b
        p = params[0] if params.shape[0] == 1 else params[b]
        gu, gj, gs, fl, fh = grid_u[r], grid_j[r], grid_slope[r], fold_low[r], fold_high[r]
        cell = -1
        for i in range(n):
            u_out[b, i], slope_out[b, i], inside[b, i], cell = invert_one(
                code, p, gu, gj, gs, m, sign, fl, fh, targets[b, i], xtol, rtol,
                max_iterations, cell)
    return u_out, slope_out, inside


@numba.njit(cache=True, error_model="numpy")
def element_voltages(current, codes, params, grid_u, grid_j, grid_slope, lengths, signs,
                     fold_low, fold_high, lower, upper, range_low, range_high, voltage_sign,
                     series, xtol, rtol, max_iterations):
    """Every element of a string at the string's current, in one compiled pass.

    Element e (of E) has law ``codes[e]``, parameter rows ``params[e]`` (R, P), a table of
    ``lengths[e]`` samples in ``grid_*[e]`` (R, M, padded), direction ``signs[e]`` (+1 where J
    rises with u), fold curvatures ``fold_low[e]``, ``fold_high[e]`` (R,), the range
    [``lower[e]``, ``upper[e]``] (R,) its current is clipped to (a tunnel junction's branch
    ends at its peak or valley) and the range [``range_low[e]``, ``range_high[e]``] beyond
    which it has no voltage (NaN); ``voltage_sign[e]`` is +1 for a subcell, whose voltage is
    Vj - J Rs (``series[e]`` (R,)), -1 for a tunnel junction, whose voltage is -u.
    ``current`` (B, N), B = R or R = 1.

    Returns the voltages and dV/dJ (E, B, N), and ``covered`` (E, B, N): where the clipped
    current lies in the element's table (elsewhere the caller solves the entry its own way).
    """
    count = codes.shape[0]
    rows, n = current.shape
    element_voltage = np.empty((count, rows, n))
    element_slope = np.empty((count, rows, n))
    covered = np.empty((count, rows, n), dtype=np.bool_)
    shared = grid_u.shape[1] == 1
    for e in range(count):
        m = lengths[e]
        code, sign, vsign = codes[e], signs[e], voltage_sign[e]
        for b in range(rows):
            r = 0 if shared else b
            p, gu, gj, gs = params[e, r], grid_u[e, r], grid_j[e, r], grid_slope[e, r]
            low, high, fl, fh = lower[e, r], upper[e, r], fold_low[e, r], fold_high[e, r]
            range_lo, range_hi, rs = range_low[e, r], range_high[e, r], series[e, r]
            cell = -1
            for i in range(n):
                j = current[b, i]
                if code == ISOTYPE_LAW:
                    # the same current as the point before (a quarter of the finite currents of
                    # the layer map's solve): the inverse is a pure function, its values again
                    if i > 0 and j == current[b, i - 1]:
                        element_voltage[e, b, i] = element_voltage[e, b, i - 1]
                        element_slope[e, b, i] = element_slope[e, b, i - 1]
                        covered[e, b, i] = True
                        continue
                    # V = -s V_law(s J), dV/dJ = -1/J_law'(V_law), s = p[8] the direction
                    v_law, law_slope = element_inverse(p[8] * j, p)
                    element_voltage[e, b, i] = -p[8] * v_law
                    element_slope[e, b, i] = -1.0 / law_slope
                    covered[e, b, i] = True
                    continue
                y = min(max(j, low), high)
                u, slope, inside, cell = invert_one(code, p, gu, gj, gs, m, sign, fl, fh, y,
                                                     xtol, rtol, max_iterations, cell)
                covered[e, b, i] = inside or math.isnan(j)
                if not (j >= range_lo and j <= range_hi):
                    u = math.nan
                if math.isfinite(u):
                    inverse_slope = 1.0 / slope
                else:
                    inverse_slope = -math.inf if vsign > 0.0 else math.nan
                element_voltage[e, b, i] = vsign * u - rs * j
                element_slope[e, b, i] = vsign * inverse_slope - rs
    return element_voltage, element_slope, covered


#: tolerances of the element inverses: |du| below XTOL + RTOL |u|
XTOL = 1e-13
RTOL = 4e-16
MAX_ITERATIONS = 100


def invert(code, params, table, targets, *, increasing, fold_low=None, fold_high=None):
    """:func:`invert_table` on a :class:`siltandem.inverse.LawTable` with numpy broadcasting.

    ``targets`` of shape (R, N), or anything that broadcasts to (B, N) when the table and the
    parameters have one row (R = 1). Returns (u, slope, inside), each of the broadcast shape.
    """
    rows = max(table.rows, params.shape[0])
    targets = np.asarray(targets, dtype=float)
    if targets.ndim < 2:
        targets = targets.reshape(1, -1) if targets.ndim == 1 else targets.reshape(1, 1)
    if rows > 1:
        targets = np.broadcast_to(targets, (rows, targets.shape[1]))
        if table.rows == 1:
            # one table for every design (shared law), parameters per design: repeat the table
            grid_u = np.broadcast_to(table.u, (rows, table.u.shape[1]))
            grid_j = np.broadcast_to(table.j, (rows, table.j.shape[1]))
            grid_slope = np.broadcast_to(table.slope, (rows, table.j.shape[1]))
        else:
            grid_u, grid_j, grid_slope = table.u, table.j, table.slope
    else:
        grid_u, grid_j, grid_slope = table.u, table.j, table.slope
    zeros = np.zeros(grid_u.shape[0])
    fold_low = zeros if fold_low is None else as_input(
        np.broadcast_to(np.ravel(fold_low), zeros.shape), dtype=float)
    fold_high = zeros if fold_high is None else as_input(
        np.broadcast_to(np.ravel(fold_high), zeros.shape), dtype=float)
    return invert_table(code, as_input(params), as_input(grid_u),
                        as_input(grid_j), as_input(grid_slope),
                        bool(increasing), fold_low, fold_high,
                        as_input(targets), XTOL, RTOL, MAX_ITERATIONS)


@numba.njit(cache=True, error_model="numpy")
def subcell_terminal_current(params, series, voltage, xtol, rtol, max_iterations):
    """Current J and dJ/dV of subcells at terminal voltages V, with series resistance Rs.

    Solves V = Vj - Rs J(Vj) for the junction voltage Vj (strictly increasing in Vj) inside its
    exact bracket between V and V + Rs J(V) (J falls with Vj), by Newton steps safeguarded by
    bisection, then J = J(Vj) and dJ/dV = J'/(1 - Rs J'). ``params`` (R, 8) as for the subcell
    law, ``series`` (R,), ``voltage`` (B, N) with B = R or R = 1. The same solve as
    :func:`siltandem.laws.diode.subcell_current`, compiled.
    """
    rows, n = voltage.shape
    current = np.empty((rows, n))
    slope = np.empty((rows, n))
    for b in range(rows):
        r = 0 if params.shape[0] == 1 else b
        p = params[r]
        rs = series[r]
        vbr = p[5]
        for i in range(n):
            v = voltage[b, i]
            j, dj = subcell_law(v, p)
            if rs == 0.0 or not math.isfinite(j):
                current[b, i], slope[b, i] = j, dj
                continue
            other = v + rs * j
            xl = min(v, other) - 1e-12
            xh = max(v, other) + 1e-12
            if math.isfinite(vbr) and p[6] > 0.0:
                xl = max(xl, vbr * (1.0 - 1e-12))
            x = min(max(other, xl), xh)
            previous = xh - xl
            j, dj = subcell_law(x, p)
            for _ in range(max_iterations):
                h = x - rs * j - v
                dh = 1.0 - rs * dj
                if h == 0.0:
                    break
                x, step, xl, xh = _bracketed_step(x, h, dh, xl, xh, previous)
                previous = step
                j, dj = subcell_law(x, p)
                if abs(step) <= xtol + rtol * abs(x) or xh - xl <= xtol:
                    break
            current[b, i] = j
            slope[b, i] = dj / (1.0 - rs * dj)
    return current, slope


@numba.njit(cache=True, error_model="numpy")
def subcell_table(params, forward_points, reverse_points):
    """Grid, J and dJ/dVj of a subcell's junction law for its inverse table, one row per
    parameter row: forward from 0 to where the J01 diode alone carries three times the
    photocurrent (plus 4 Vt), and in reverse either uniformly down to just above the breakdown
    voltage (or -3 V), or geometrically from -1e-3 V to -1e7 V (the shunt's nearly straight
    reverse branch)."""
    rows = params.shape[0]
    m = reverse_points + forward_points
    grid = np.empty((rows, m))
    j = np.empty((rows, m))
    dj = np.empty((rows, m))
    for r in range(rows):
        p = params[r]
        subcell_grid(p, forward_points, reverse_points, grid[r])
        for k in range(m):
            j[r, k], dj[r, k] = subcell_law(grid[r, k], p)
    return grid, j, dj


@numba.njit(cache=True, inline="always", error_model="numpy")
def subcell_grid(p, forward_points, reverse_points, grid):
    """The junction voltages of one row of :func:`subcell_table` (law parameters ``p``), into
    ``grid`` (reverse_points + forward_points,); laws/compiled_untabled.py samples the same."""
    jph, j01, vt, vbr, a = p[0], p[1], p[4], p[5], p[6]
    highest = vt * math.log1p(3.0 * max(jph, 1e-3) / j01) + 4.0 * vt
    if p[BULK_OFFSET] > 0.0:
        # a silicon base's recombination may carry it first: the first 10 mV step where it does
        for k in range(1, 400):
            if 0.01 * k >= highest or bulk_law(0.01 * k, p, p[8])[0] > 3.0 * max(jph, 1e-3):
                highest = min(highest, 0.01 * k + 4.0 * vt)
                break
    if a > 0.0 and math.isfinite(vbr):
        lowest = max(vbr * (1.0 - 1e-9), -3.0)
        for k in range(reverse_points):
            grid[k] = lowest * (1.0 - k / reverse_points)
    else:
        ratio = math.log(1e-3 / 1e7) / (reverse_points - 1)
        for k in range(reverse_points):
            grid[k] = -1e7 * math.exp(ratio * k)
        grid[reverse_points - 1] = -1e-3
    for k in range(forward_points):
        grid[reverse_points + k] = highest * (k / (forward_points - 1))


@numba.njit(cache=True, error_model="numpy")
def exact_peak_shape(peak, peak_v, valley, valley_v, c2, j0, nvt):
    """Tunnelling-term prefactor A and voltage scale V1 that put the combined Esaki curve's
    maximum exactly at (Vp, Jp): u = Vp/V1 = 1 + R'(Vp) Vp / (Jp - R(Vp)), A = (Jp - R(Vp)) /
    (u e^(1-u)), with R the excess plus thermal current (laws/esaki.py,
    tunnel_term_for_exact_peak, says more). 1-D arrays of one length in; (A, V1, ok) out, ok
    False where Jp <= R(Vp) or the curvature at Vp is not negative (the numpy law then raises
    the error that says why)."""
    n = peak.shape[0]
    a = np.empty(n)
    v1 = np.empty(n)
    ok = np.empty(n, dtype=np.bool_)
    p = np.zeros(PARAMETER_WIDTH)
    for i in range(n):
        k = valley[i] / -math.expm1(-2.0 * c2[i] * valley_v[i])
        p[0], p[1], p[2], p[3], p[4], p[5], p[6], p[7] = (0.0, 1.0, valley[i], valley_v[i],
                                                          c2[i], j0[i], nvt[i], k)
        p[8], p[9], p[10] = 1.0, 1.0 / nvt[i], k * math.exp(-c2[i] * valley_v[i])
        rest, rest1 = _tunnel(peak_v[i], p)
        margin = peak[i] - rest
        u = 1.0 + rest1 * peak_v[i] / margin
        v1[i] = peak_v[i] / u
        a[i] = margin / (u * math.exp(1.0 - u))
        rest2 = _tunnel_bend(peak_v[i], p)      # R''(Vp): the law without its tunnel term
        curvature = (a[i] / v1[i] ** 2) * math.exp(1.0 - u) * (u - 2.0) + rest2
        ok[i] = margin > 0.0 and curvature < 0.0
    return a, v1, ok


@numba.njit(cache=True, inline="always", error_model="numpy")
def _slope_root(p, lo, hi, s_lo, s_hi, rising, xtol, rtol, max_iterations):
    """Root of the tunnel law's dJ/du in [lo, hi] (it changes sign there, falling for a peak,
    rising for a valley): Newton steps on dJ/du with d2J/du2, kept inside the shrinking
    bracket, bisection otherwise (Numerical Recipes, sec. 9.4)."""
    sign = 1.0 if rising else -1.0
    x = lo + s_lo * (hi - lo) / (s_lo - s_hi)
    if not (x >= lo and x <= hi):
        x = 0.5 * (lo + hi)
    previous = hi - lo
    for _ in range(max_iterations):
        _, g = _tunnel(x, p)
        g = sign * g
        if g == 0.0:
            break
        x, step, lo, hi = _bracketed_step(x, g, sign * _tunnel_bend(x, p), lo, hi, previous)
        previous = step
        if abs(step) <= xtol + rtol * abs(x) or hi - lo <= xtol:
            break
    return x


@numba.njit(cache=True, error_model="numpy")
def tunnel_extrema(params, exact_peak_v, samples, xtol, rtol, max_iterations):
    """Peak and valley voltages of the Esaki three-term curve, one per parameter row.

    dJ/du is sampled on ``samples`` points over (0, 3 max(Vv, 2 V1)]; the peak lies in the first
    cell where it turns negative and the valley in the next cell where it turns positive again
    (for u >= 0, dJ/du falls to a single minimum and rises after it: laws/esaki.py,
    attained_peak_and_valley). Each root is polished inside its cell by :func:`_slope_root`.
    Where ``exact_peak_v`` (R,) is finite and lies in the peak's cell or a neighbour of it, it
    is the peak (the law was prepared to peak there in closed form). NaN where the samples see
    no such pair (the caller then brackets from the steepest point).
    """
    rows = params.shape[0]
    peak = np.full(rows, np.nan)
    valley = np.full(rows, np.nan)
    for r in range(rows):
        p = params[r]
        top = 3.0 * max(p[3], 2.0 * p[1])
        first = -1
        previous_u, previous_s = 0.0, 0.0
        peak_cell = (0.0, 0.0, 0.0, 0.0)
        for i in range(1, samples + 1):
            u = top * i / samples
            _, slope = _tunnel(u, p)
            if first < 0:
                if slope < 0.0:
                    first = i
                    peak_cell = (previous_u, u, previous_s, slope)
            elif not slope < 0.0:                     # the first rise after it (or NaN)
                if first > 1 and slope >= 0.0:
                    lo, hi, s_lo, s_hi = peak_cell
                    vp = exact_peak_v[r]
                    # (a sample can land on Vp itself, where the slope is zero to rounding
                    # and its sign is chance: the neighbouring cells count too)
                    width = hi - lo
                    if math.isfinite(vp) and lo - width <= vp and vp <= hi + width:
                        peak[r] = vp
                    else:
                        peak[r] = _slope_root(p, lo, hi, s_lo, s_hi, False, xtol, rtol,
                                              max_iterations)
                    valley[r] = _slope_root(p, previous_u, u, previous_s, slope, True, xtol,
                                            rtol, max_iterations)
                break
            previous_u, previous_s = u, slope
    return peak, valley


@numba.njit(cache=True, error_model="numpy")
def bose_einstein_tail(x, terms):
    """I(x) = integral_x^inf t^2 / (e^t - 1) dt by its series sum_k e^(-k x) (x^2/k + 2x/k^2 +
    2/k^3), ``terms`` terms, for a flat array x > 0 (laws/radiative.py says when it is exact)."""
    out = np.empty(x.shape[0])
    for i in range(x.shape[0]):
        xi = x[i]
        total = 0.0
        for k in range(1, terms + 1):
            total += math.exp(-k * xi) * (xi * xi / k + 2.0 * xi / (k * k) + 2.0 / (k * k * k))
        out[i] = total
    return out

