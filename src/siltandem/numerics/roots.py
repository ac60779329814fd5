"""Small numerical tools shared by the solver: a whole-array bracketed root finder, and
Chandrupatla's method on flat arrays (`chandrupatla_roots`, the isotype law's inverse).

``scipy.optimize.elementwise.find_root`` evaluates its function only on the elements still
active, which needs every parameter passed through ``args``. The series solver evaluates whole
element chains whose parameters live in dataclasses, so it uses this whole-array variant: the
Illinois modification of regula falsi (M. Dowell, P. Jarratt, BIT 11 (1971) 168), guarded by
bisection, always on the full array; a stale end's value is halved once more each further time
in a row it is kept. A caller that always solves one design at a time (the piecewise trace past a
tunnel junction's peak) may ask for ``scipy.optimize.brentq`` instead (``one_by_one``, imported there only: a plain run
never loads scipy.optimize, about 0.3 s of start-up); batched
callers never do, so that a design's root is the same whether its batch holds one design or many.
"""
import numpy as np


def bracketed_root(function, lower, upper, *, xtol=1e-13, rtol=4e-16, max_iterations=200,
                   end_values=None, one_by_one=False, idle=None):
    """Roots of an elementwise function inside brackets, on whole arrays.

    Parameters
    ----------
    function : callable
        ``function(x) -> ndarray`` of the shape of ``x``, elementwise.
    lower, upper : ndarray
        Brackets; ``function`` must change sign between them (else the result is NaN there).
    xtol, rtol : float
        Absolute and relative tolerance on the root.
    end_values : (ndarray, ndarray), optional
        ``function(lower), function(upper)`` when the caller has them already.
    one_by_one : bool
        The caller solves a single design, always (never a batch that may hold one): a root of
        one entry then goes to Brent's method. False (batched callers): every entry, even a
        batch of one, by the whole-array iteration, whose entries stop on their own, so a
        design's root does not depend on the other designs of its batch.

    Returns
    -------
    root : ndarray
        NaN where the bracket held no sign change or the function was not finite.
    """
    a = np.array(lower, dtype=float, copy=True)
    b = np.array(upper, dtype=float, copy=True)
    a, b = np.broadcast_arrays(a, b)
    a, b = a.copy(), b.copy()
    if one_by_one and a.size == 1:
        return _one_root(function, a, b, xtol, rtol, max_iterations, end_values)
    if end_values is None:
        fa = np.asarray(function(a), dtype=float)
        fb = np.asarray(function(b), dtype=float)
    else:
        fa, fb = (np.array(np.broadcast_to(v, a.shape), dtype=float) for v in end_values)
    valid = np.isfinite(fa) & np.isfinite(fb) & (np.sign(fa) * np.sign(fb) <= 0)
    side = np.zeros(a.shape, dtype=int)
    x = np.where(fa == 0, a, b)
    stale = np.zeros(a.shape)                    # how many times in a row end a was kept
    for _ in range(max_iterations):
        width = np.abs(b - a)
        done = (width <= xtol + rtol * np.abs(x)) | (fa == 0) | (fb == 0) | ~valid
        if np.all(done):
            break
        with np.errstate(divide="ignore", invalid="ignore"):
            x = b - fb * (b - a) / (fb - fa)
        middle = 0.5 * (a + b)
        bad = ~np.isfinite(x) | (x <= np.minimum(a, b)) | (x >= np.maximum(a, b))
        x = np.where(bad, middle, x)
        x = np.where(done, np.where(fa == 0, a, b), x)
        fx = np.asarray(function(x if idle is None else np.where(done, idle, x)), dtype=float)
        fx = np.where(np.isfinite(fx), fx, np.sign(fx) * np.finfo(float).max)
        same_as_b = np.sign(fx) == np.sign(fb)
        active = ~done
        # keep the bracket [a, b] with the sign change; Illinois: halve the stale end's value,
        # and halve it again more each further time in a row (2, 4, 8, ...): an end whose value
        # dwarfs the other's would otherwise take one halving per factor of two
        kept = active & same_as_b & (side == -1)
        stale = np.where(kept, stale + 1, 0.0)
        new_a = np.where(active & same_as_b, a, np.where(active, b, a))
        new_fa = np.where(active & same_as_b, np.where(kept, fa * 0.5**stale, fa),
                          np.where(active, fb, fa))
        side = np.where(active, np.where(same_as_b, -1, 1), side)
        a, fa = new_a, new_fa
        b = np.where(active, x, b)
        fb = np.where(active, fx, fb)
    root = np.where(np.abs(fa) < np.abs(fb), a, b)
    return np.where(valid, root, np.nan)


def _one_root(function, a, b, xtol, rtol, max_iterations, end_values):
    """A single root by Brent's method (``scipy.optimize.brentq``): the function is evaluated
    on arrays of the input's shape, one point at a time. Brent's inverse quadratic
    interpolation with bisection copes with an end value that dwarfs the other (a fold's
    slope), where regula falsi creeps."""
    shape = a.shape
    if end_values is None:
        fa = float(np.asarray(function(a), dtype=float).reshape(-1)[0])
        fb = float(np.asarray(function(b), dtype=float).reshape(-1)[0])
    else:
        fa, fb = (float(np.asarray(v, dtype=float).reshape(-1)[0]) for v in end_values)
    lo, hi = float(a.reshape(-1)[0]), float(b.reshape(-1)[0])
    if not (np.isfinite(fa) and np.isfinite(fb)) or np.sign(fa) * np.sign(fb) > 0:
        return np.full(shape, np.nan)
    if fa == 0 or fb == 0:
        return np.full(shape, lo if fa == 0 else hi)
    known = {lo: fa, hi: fb}

    def scalar(x):
        if x in known:
            return known[x]
        value = float(np.asarray(function(np.full(shape, x)), dtype=float).reshape(-1)[0])
        return value if np.isfinite(value) else np.sign(value) * np.finfo(float).max

    from scipy.optimize import brentq      # here only: a plain run never needs it (start-up)

    try:
        root = brentq(scalar, lo, hi, xtol=xtol, rtol=max(rtol, 4 * np.finfo(float).eps),
                      maxiter=max_iterations)
    except (RuntimeError, ValueError):
        return np.full(shape, np.nan)
    return np.full(shape, root)


def safeguarded_newton(function, lower, upper, *, start=None, xtol=1e-13, rtol=4e-16,
                       ftol=0.0, max_iterations=100, end_values=None, idle=None):
    """Roots of an elementwise function with known derivative, inside brackets, on whole arrays.

    ``function(x) -> (f, df/dx)``. ``start`` (optional) is a first guess inside the bracket (a
    close one saves most iterations); ``end_values`` (optional) the function's values at the
    two ends when the caller has them (their signs are enough); ``ftol`` a residual small
    enough to stop at (the root is then fixed only to rounding). Newton steps, replaced by bisection whenever a
    step leaves the
    current bracket; the bracket shrinks around the sign change at every iteration, so the method
    cannot diverge (as in W. H. Press et al., Numerical Recipes, 3rd ed. 2007, sec. 9.4, 'rtsafe').
    NaN where the bracket held no sign change. ``idle``: as for :func:`bracketed_root`, where
    the entries that have stopped are evaluated (None: at their last point).
    """
    a, b = np.broadcast_arrays(np.array(lower, dtype=float), np.array(upper, dtype=float))
    a, b = a.copy(), b.copy()
    if end_values is None:
        fa, _ = function(a)
        fb, _ = function(b)
    else:
        fa, fb = end_values
    fa, fb = (np.broadcast_to(np.asarray(v, dtype=float), a.shape) for v in (fa, fb))
    # an end where the function overflows (+-inf) still brackets by its sign
    valid = ~np.isnan(fa) & ~np.isnan(fb) & (np.sign(fa) * np.sign(fb) <= 0)
    # orient so that f(a) <= 0 <= f(b)
    swap = fa > 0
    a, b = np.where(swap, b, a), np.where(swap, a, b)
    x = 0.5 * (a + b)
    if start is not None:
        guess = np.broadcast_to(np.asarray(start, dtype=float), x.shape)
        inside = np.isfinite(guess) & (guess > np.minimum(a, b)) & (guess < np.maximum(a, b))
        x = np.where(inside, guess, x)
    x = np.where(fa == 0, np.where(swap, b, a), x)
    done = ~valid
    previous_step = np.abs(b - a)
    for _ in range(max_iterations):
        f, df = function(x if idle is None else np.where(done, idle, x))
        f = np.asarray(f, dtype=float)
        # an overflowed value still has a sign (+-inf): it moves the bracket like any other;
        # only NaN says nothing
        negative = f < 0
        a = np.where(negative & ~done, x, a)
        b = np.where((f > 0) & ~done, x, b)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            step = f / df
        newton = x - step
        low, high = np.minimum(a, b), np.maximum(a, b)
        # bisect when Newton leaves the bracket or does not at least halve the step before last
        # (W. H. Press et al., Numerical Recipes, 3rd ed., 'rtsafe'): creeping steps far from
        # the root (a huge exponential) cannot stall the search
        slow = np.abs(step) > 0.5 * previous_step
        # a step below the tolerance has converged, even where rounding puts it on the bracket's
        # end (bisecting there would throw the root away)
        tiny = np.abs(step) <= xtol + rtol * np.abs(x)
        bad = (~np.isfinite(newton) | (newton <= low) | (newton >= high) | slow) & ~tiny
        new_x = np.where(bad, 0.5 * (a + b), newton)
        previous_step = np.where(done, previous_step, np.abs(new_x - x))
        # every design stops on its own: a converged entry is frozen, so a result never
        # depends on which other designs share its batch
        lost = np.isnan(f)
        converged = ((np.isfinite(f) & (np.abs(new_x - x) <= xtol + rtol * np.abs(x)))
                     | (f == 0) | (np.abs(high - low) <= xtol + rtol * np.abs(x))
                     | (np.abs(f) <= ftol))
        x = np.where(done | (f == 0), x, new_x)
        valid = valid & ~(lost & ~done)
        done = done | converged | lost
        if np.all(done):
            break
    # an entry still moving after max_iterations is not an answer: NaN, never a made-up number
    return np.where(valid & done, x, np.nan)


def chandrupatla_roots(function, lower, upper, args):
    """Roots of ``function(x, *args)`` bracketed by [lower, upper], on flat arrays.

    Chandrupatla's hybrid of inverse quadratic interpolation and bisection, with the iterates,
    the defaults and the stopping rule of ``scipy.optimize.elementwise.find_root`` (scipy 1.15+:
    stop where |f(x_min)| <= tiny, or where |x2 - x1| < 4 eps |x_min| + 4 tiny; NaN where the
    ends have one sign or nothing is finite), so its roots are scipy's. Written out in numpy
    because scipy's general array-API loop costs about 0.4 ms per iteration in overhead, which
    made every isotype interface of a stack cost milliseconds per solver pass. ``function`` must
    be elementwise. Returns (x, success), flat.

    References
    ----------
    .. [1] T. R. Chandrupatla, Adv. Eng. Softw. 28 (1997) 145.
    """
    tiny, eps = np.finfo(float).smallest_normal, np.finfo(float).eps
    x_atol, x_rtol, f_atol = 4.0 * tiny, 4.0 * eps, tiny
    max_iterations = np.log2(np.finfo(float).max) - np.log2(tiny)
    x1 = np.array(lower, dtype=float).reshape(-1)
    x2 = np.array(upper, dtype=float).reshape(-1)
    args = [np.asarray(a).reshape(-1) for a in args]
    with np.errstate(all="ignore"):
        f1 = np.asarray(function(x1, *args), dtype=float)
        f2 = np.asarray(function(x2, *args), dtype=float)
        f_rtol = 0.0 * np.minimum(np.abs(f1), np.abs(f2))
    x_out = np.zeros(x1.size)
    status = np.ones(x1.size, dtype=np.int8)          # 1 running, 0 converged, -1 failed
    active = np.arange(x1.size)
    x3 = f3 = None
    t = 0.5
    iterations = 0
    with np.errstate(all="ignore"):
        while True:
            # the termination test (scipy's check_termination)
            smaller = np.abs(f1) < np.abs(f2)
            x_min = np.where(smaller, x1, x2)
            f_min = np.where(smaller, f1, f2)
            state = np.ones(x1.size, dtype=np.int8)
            stop = np.abs(f_min) <= f_atol + f_rtol
            state[stop] = 0
            failed = ((np.sign(f1) == np.sign(f2)) | ~(np.isfinite(x1) & np.isfinite(x2))
                      | (np.isnan(f1) & np.isnan(f2))) & ~stop
            x_min[failed] = np.nan
            state[failed] = -1
            stop |= failed
            dx = np.abs(x2 - x1)
            tolerance = np.abs(x_min) * x_rtol + x_atol
            close = dx < tolerance
            state[close] = 0
            stop |= close
            if np.any(stop):
                x_out[active[stop]] = x_min[stop]
                status[active[stop]] = state[stop]
                keep = ~stop
                active = active[keep]
                x1, f1, x2, f2, f_rtol, dx, tolerance = (a[keep] for a in (
                    x1, f1, x2, f2, f_rtol, dx, tolerance))
                args = [a[keep] for a in args]
                if x3 is not None:
                    x3, f3 = x3[keep], f3[keep]
            if active.size == 0 or iterations >= max_iterations:
                break
            if iterations:        # the next step (scipy's post_termination_check)
                xi = (x1 - x2) / (x3 - x2)
                phi = (f1 - f2) / (f3 - f2)
                alpha = (x3 - x1) / (x2 - x1)
                quadratic = ((1 - np.sqrt(1 - xi)) < phi) & (phi < np.sqrt(xi))
                t = np.full_like(alpha, 0.5)
                a, b, c, k = f1[quadratic], f2[quadratic], f3[quadratic], alpha[quadratic]
                t[quadratic] = a / (a - b) * c / (c - b) - k * a / (c - a) * b / (b - c)
                limit = 0.5 * tolerance / dx
                t = np.clip(t, limit, 1 - limit)
            x = x1 + t * (x2 - x1)
            f = np.asarray(function(x, *args), dtype=float)
            # keep the bracket (scipy's post_func_eval)
            x3, f3 = x2.copy(), f2.copy()
            same = np.sign(f) == np.sign(f1)
            x3[same], f3[same] = x1[same], f1[same]
            x2[~same], f2[~same] = x1[~same], f1[~same]
            x1, f1 = x, f
            iterations += 1
    status[active] = -1                               # out of iterations
    return x_out, status == 0
