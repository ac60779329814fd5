"""Where a traced curve's points go: evenly in arc length along exact samples of the curve; and
where those samples go (uniform in t and uniform in current).

Points uniform in the pilot voltage t leave the knee of a non-limiting subcell, or a tunnel
junction's valley, nearly empty (the curve moves fast in t there and slowly elsewhere). The
curve's points are therefore placed evenly in the arc length of the terminal curve in
(V / V-span, J / J-span), plus PARAMETER_WEIGHT times |dt| / t-span (which keeps a few points on
stretches where the curve barely moves). A step to or from a sample without a finite voltage or
current counts by its t only, and the spans are those of the finite samples. The placed t are then
evaluated exactly by the caller; only their placement comes from the samples.

Pure functions of (B, N) arrays, a row per design: a design's points never depend on its batch.
"""
import functools

import numpy as np

#: weight of the parameter's own step in the arc length (relative to the V and J steps)
PARAMETER_WEIGHT = 0.05

#: smallest span a coordinate is scaled by (a flat coordinate then adds nothing)
SPAN_FLOOR = 1e-12


@functools.lru_cache(maxsize=16)
def unit_steps(points):
    """np.linspace(0, 1, points) as a (1, points) row, made once (read-only)."""
    steps = np.linspace(0.0, 1.0, points)[None, :]
    steps.flags.writeable = False
    return steps


def _finite_or_nan(x):
    x = np.asarray(x, dtype=float)
    return np.where(np.isfinite(x), x, np.nan)


def curve_spans(voltage, current, parameter):
    """The spans (max - min) of the finite samples of V, J and t, each (B, 1), at least
    SPAN_FLOOR (also where a row has no finite sample)."""
    spans = []
    for x in (voltage, current, parameter):
        x = _finite_or_nan(x)
        with np.errstate(invalid="ignore"):
            span = np.fmax.reduce(x, axis=1, keepdims=True) - \
                np.fmin.reduce(x, axis=1, keepdims=True)
        spans.append(np.fmax(span, SPAN_FLOOR))
    return tuple(spans)


def arc_length(voltage, current, parameter, spans=None):
    """Cumulative arc length (B, N), 0 at the first sample, of samples (B, N) of a curve in the
    order given.

    ``spans`` (optional): the (V, J, t) spans to scale by, each (B, 1) or scalar, when several
    pieces of one curve share them (default: curve_spans of these samples).
    """
    v_span, j_span, t_span = curve_spans(voltage, current, parameter) if spans is None \
        else spans
    dv = np.diff(_finite_or_nan(voltage), axis=1) / v_span
    dj = np.diff(_finite_or_nan(current), axis=1) / j_span
    moved = np.hypot(dv, dj)
    step = np.where(np.isfinite(moved), moved, 0.0) \
        + PARAMETER_WEIGHT * np.abs(np.diff(parameter, axis=1)) / t_span
    return np.concatenate([np.zeros((step.shape[0], 1)), np.cumsum(step, axis=1)], axis=1)


def interpolate_rows(x, xp, fp):
    """``np.interp`` row by row: x (B, M), xp and fp (B, N), each row of xp non-decreasing."""
    x, xp, fp = (np.asarray(a, dtype=float) for a in (x, xp, fp))
    out = np.empty(x.shape)
    for row in range(x.shape[0]):
        out[row] = np.interp(x[row], xp[row], fp[row])
    return out


def even_fractions(points, skip=None):
    """Fractions 0 .. 1 (B, points) evenly spaced, as np.linspace(0, 1, n) gives them; with
    ``skip`` (B,) int, a row's first ``skip`` entries are 0 and the evenly spaced ones follow
    (n = points - skip)."""
    skip = np.zeros(1, dtype=int) if skip is None else np.asarray(skip)
    count = points - skip[:, None]
    k = np.arange(points)[None, :] - skip[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        fraction = k * (1.0 / (count - 1))
    fraction = np.where(k >= count - 1, 1.0, fraction)
    return np.where((k <= 0) | (count <= 1), 0.0, fraction)


def evenly_spaced(arc, parameter, points, *, start=None, skip=None):
    """Parameter values (B, points) at arc lengths evenly spaced from ``start`` (B, 1; default
    0) to the end of each row of ``arc`` (B, N, non-decreasing, from arc_length), by linear
    interpolation in the samples' ``parameter`` (B, N). ``skip`` (B,) int: a row's first
    ``skip`` points all sit at ``start`` (even_fractions)."""
    start = np.zeros((arc.shape[0], 1)) if start is None else start
    targets = start + (arc[:, -1:] - start) * even_fractions(points, skip)
    return interpolate_rows(targets, arc, parameter)


def parameter_samples(t_a, t_b, j_a, j_b, counts, inverse):
    """Pilot voltages (B, n_t + n_j) to sample a piece of the curve at, sorted ascending: n_t
    uniform in t from ``t_a`` to ``t_b`` (both included), and n_j where the current is uniform
    strictly between ``j_a`` and ``j_b`` (``inverse``: current -> t; kept inside the piece, and
    ``t_a`` where it has no value). Uniform t alone leaves the stretches where the current
    changes fast nearly empty, uniform current those where it barely changes. ``counts`` =
    (n_t, n_j); t_a, t_b, j_a, j_b (B, 1)."""
    n_t, n_j = counts
    by_t = t_a + (t_b - t_a) * unit_steps(n_t)
    with np.errstate(invalid="ignore"):
        by_j = inverse(j_a + (j_b - j_a) * unit_steps(n_j + 2)[:, 1:-1])
    by_j = np.where(np.isfinite(by_j), np.clip(by_j, np.minimum(t_a, t_b), np.maximum(t_a, t_b)),
                    t_a)
    return np.sort(np.concatenate([by_t, by_j], axis=1), axis=1)
