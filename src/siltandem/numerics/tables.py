"""Sampled laws and whole-array root polishing.

An element law J = f(u) (a subcell's junction current against its junction voltage, a tunnel
junction's current on one branch) is cheap to evaluate forward and costly to invert by a root
find from a wide bracket. The series solver inverts every non-pilot element at every point of
the curve, so each element keeps a :class:`LawTable`: f and its slope sampled once on a grid of
u. The compiled inverse (siltandem.kernels.invert_table) finds a target's cell (two
neighbouring samples that bracket it), guesses by cubic Hermite interpolation of the inverse,
and polishes by Newton steps kept inside the cell. The cell is an exact bracket, so the result
is the law's own root to rounding, never an interpolated value.

:func:`polish_root` is the whole-array counterpart for residuals that are Python callables (the
string's voltage in the solver's dense pass, the laws' own root finds).

References
----------
W. H. Press et al., Numerical Recipes, 3rd ed., Cambridge 2007, sec. 3.1 (locating a value in a
table by bisection) and sec. 9.4 ('rtsafe': Newton's method safeguarded by a bracket).
"""
import numpy as np

from siltandem.numerics.roots import safeguarded_newton

__all__ = ["LawTable", "polish_root"]

#: the quadratic-convergence shortcut is trusted only where the slope changed by less than this
#: fraction over the last step (a slope that changes a lot says the function is far from its
#: quadratic model, however small the steps look)
STEADY_SLOPE = 0.1


class LawTable:
    """A strictly monotone law J(u) and its slope sampled on increasing grids of u, one row per
    design; :func:`siltandem.kernels.invert_table` inverts through it.

    Parameters
    ----------
    u : (R, M) ndarray
        Grid of the law's variable, increasing along each row.
    j : (R, M) ndarray
        The law's values there, strictly monotone along each row and in the same direction in
        every row (rounding may leave equal neighbours where the law is flat). Finite.
    slope : (R, M) ndarray, optional
        dJ/du there (for the cubic first guesses of the compiled inverse); NaN when not given.
    """

    __slots__ = ("u", "j", "slope", "increasing")

    def __init__(self, u, j, slope=None):
        self.u = np.ascontiguousarray(u, dtype=float)
        self.j = np.ascontiguousarray(j, dtype=float)
        if slope is None:
            self.slope = np.full_like(self.j, np.nan)
        else:
            slope = np.asarray(slope, dtype=float)
            self.slope = np.ascontiguousarray(
                slope if slope.shape == self.j.shape else np.broadcast_to(slope, self.j.shape))
        self.increasing = bool(self.j[0, -1] >= self.j[0, 0])

    @property
    def rows(self):
        return self.j.shape[0]


def polish_root(residual, guess, lower, upper, *, increasing, active=None, xtol=1e-13,
                rtol=4e-16, ftol=0.0, max_iterations=60, plain_steps=2):
    """Root of ``residual`` inside exact brackets, by Newton steps that never leave the bracket.

    Parameters
    ----------
    residual : callable
        ``residual(x) -> (f, df/dx)`` elementwise, f monotone in x on each bracket.
    guess, lower, upper : ndarray
        First guess and bracket ends (lower < upper); f changes sign on every bracket.
    increasing : bool
        Whether f increases with x (then f(lower) <= 0 <= f(upper)).
    active : ndarray of bool, optional
        Entries to solve (the others keep their guess); all by default.
    xtol, rtol : float
        Absolute and relative tolerance on the root.
    ftol : float or ndarray
        A residual this small also ends the search: the root is then fixed only to rounding
        (pass a few rounding units of the target, as the element inverses do).
    plain_steps : int
        Plain Newton steps tried on every entry before the safeguarded search (at least 2);
        an entry is taken as soon as its last two steps pass the test below.

    Returns
    -------
    root : ndarray
    slope : ndarray
        df/dx at the last point evaluated before the final step (relative error of the order
        of the last step times the curvature; for Newton updates, not for reporting).

    Notes
    -----
    First two plain Newton steps on every entry; where they stay inside the entry's bracket and
    converge quadratically (with the slope steady over the step), that is the entry's answer.
    The other entries go through :func:`siltandem.numerics.safeguarded_newton` from their guess
    inside their brackets (bisection wherever Newton would leave the bracket or creep, so the
    search cannot diverge: W. H. Press et al., Numerical Recipes, 3rd ed., sec. 9.4), and one
    more evaluation gives their slopes. Converged entries are frozen: a result never depends on
    the other entries of the array.
    """
    x = np.array(guess, dtype=float)
    done = np.zeros(x.shape, dtype=bool) if active is None else ~np.broadcast_to(active, x.shape)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # common case first: plain Newton steps, each entry kept as soon as its last two steps
        # stay in the bracket and show quadratic convergence (predicted next step below the
        # tolerance); a kept entry is frozen there
        f, df = residual(x)
        x1 = x - f / df
        fine = np.zeros(x.shape, dtype=bool)
        kept, kept_slope = x.copy(), np.array(np.broadcast_to(df, x.shape), dtype=float)
        before, df_before = x, df
        for _ in range(max(plain_steps, 2) - 1):
            f1, df1 = residual(x1)
            x2 = x1 - f1 / df1
            s1, s2 = np.abs(x1 - before), np.abs(x2 - x1)
            tolerance = xtol + rtol * np.abs(x2)
            # the quadratic model holds only where the slope barely changed over the step
            steady = np.abs(df1 - df_before) <= STEADY_SLOPE * np.abs(df1)
            now = ~done & ~fine & ((x2 >= lower) & (x2 <= upper)
                                   & ((s2 <= tolerance)
                                      | (steady & (s2 * s2 * s2 <= tolerance * s1 * s1))
                                      | (np.abs(f1) <= ftol)))
            kept = np.where(now, x2, kept)
            kept_slope = np.where(now, df1, kept_slope)
            fine = fine | now
            if np.all(fine | done):
                break
            before, df_before, x1 = x1, df1, x2
    if np.all(fine | done):
        return np.where(fine, kept, x), np.where(fine, kept_slope, df)
    # the others: the whole-array safeguarded Newton search (numerics.safeguarded_newton) from
    # their first guess, each entry on its own; the cells' ends bracket by their known signs
    rest = ~(done | fine)
    low_sign, high_sign = (-1.0, 1.0) if increasing else (1.0, -1.0)
    searched = safeguarded_newton(
        residual, np.broadcast_to(lower, x.shape), np.broadcast_to(upper, x.shape), start=x,
        end_values=(np.where(rest, low_sign, np.nan), np.where(rest, high_sign, np.nan)),
        xtol=xtol, rtol=rtol, ftol=ftol, max_iterations=max_iterations)
    x = np.where(fine, kept, np.where(rest, searched, x))
    _, last_slope = residual(np.where(np.isfinite(x), x, guess))
    slope = np.where(fine, kept_slope, np.where(rest, last_slope, df))
    return x, slope
