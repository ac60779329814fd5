"""The tail of a curve beyond a steep reverse breakdown, where the pilot's junction voltage cannot
resolve the current: sampled, traced and crossed by current, every element through its inverse law.
"""
import numpy as np

from siltandem.numerics.roots import bracketed_root
from siltandem.solve.spacing import unit_steps


def finite_or(value, fallback):
    return np.where(np.isfinite(value), value, fallback)


def lower_end(string, v_low, v_floor, t_low, t_lowest, j_low, limited):
    """What lies at the lower end of a trace along t (every tunnel junction on its tunnel
    branch), per design (B,) bool each: whether a junction reaches its peak current there
    (``reaches_peak``: the design is traced again through its branches, trace.py), whether an
    isotype interface's flat-band current ends the curve above zero volts (``capped``: no Jsc
    to give), and whether the curve goes on beyond the pilot's lowest voltage with V still
    positive (``tail``: sampled by current, tail_samples).

    ``v_low``, ``j_low`` (B, 1): the voltage (-inf where the trace ends below the floor) and
    current at the lower end ``t_low``; ``t_lowest``: the pilot's lowest voltage; ``limited``
    (B, 1) bool or None: where an isotype interface's cap sets ``t_low``.
    """
    size = v_low.shape[0]
    reaches_peak = np.zeros(size, dtype=bool)
    if string.tunnels:
        # (where an isotype interface's flat-band current ends the curve first, no junction
        # reaches its peak)
        capped_first = np.zeros(size, dtype=bool) if limited is None else limited[:, 0]
        reaches_peak = (v_low > v_floor)[:, 0] & (t_low > t_lowest)[:, 0] & ~capped_first
    capped = np.zeros(size, dtype=bool) if limited is None else (limited & (v_low > 0))[:, 0]
    # (just above its breakdown voltage the pilot's current can rise faster than t resolves)
    tail = ((t_low <= t_lowest) & (v_low > 0) & np.isfinite(j_low))[:, 0] & ~capped
    return reaches_peak, capped, tail


#: samples of a tail by current (uniform, plus points towards each subcell's photocurrent)
TAIL_SAMPLES = 64


def tail_samples(string, j_low, rows, branches=None):
    """The tail of the curve beyond the pilot's lowest voltage, sampled by current.

    Just above a subcell's breakdown voltage its current rises so steeply with its junction
    voltage that the pilot's t (kept a relative 1e-9 above the breakdown voltage) cannot follow
    it: the curve goes on at currents from ``j_low`` (B, 1), the current there, upwards. Every
    element, the pilot too, is evaluated there through its own inverse law
    (SeriesString.evaluate_current), from ``j_low`` to where V falls to zero or below (V falls with
    J on these branches), uniformly and towards each subcell's photocurrent (its knee). Rows
    outside ``rows`` (B,) repeat ``j_low``. Returns (currents (B, N), evaluation, rows,
    branches)."""
    photocurrents = [np.broadcast_to(c.photocurrent_A_m2, j_low.shape) for c in string.subcells]
    top = np.max(np.concatenate(photocurrents, axis=1), axis=1, keepdims=True)
    j_end = np.maximum(2.0 * j_low, j_low + top)
    for _ in range(60):
        v = string.evaluate_current(j_end, branches=branches)["voltage"]
        grow = rows[:, None] & np.isfinite(v) & (v > 0)
        if not grow.any():
            break
        j_end = np.where(grow, 2.0 * j_end, j_end)
    near = np.logspace(-12, -0.5, 12)[None, :]
    x = [j_low + (j_end - j_low) * unit_steps(TAIL_SAMPLES)]
    x += [jph * (1.0 - near) for jph in photocurrents] + [jph * (1.0 + near)
                                                           for jph in photocurrents]
    x = np.concatenate(x, axis=1)
    x = np.where(rows[:, None] & (x >= j_low) & (x <= j_end), x, j_low)
    x = np.sort(x, axis=1)
    return x, string.evaluate_current(x, branches=branches), rows, branches


def with_tail_curve(string, final, tail, in_tail, v_floor):
    """The curve's first ``in_tail`` points (per row) on the tail, from its reverse end (the
    first sample where V has fallen below ``v_floor`` or has no finite value, else its last
    sample) to the current where t stops, evenly in current and evaluated by current; the
    rest of ``final`` unchanged."""
    x, e, rows, branches = tail
    v = e["voltage"]
    beyond = ~(np.isfinite(v) & (v >= v_floor))
    last = np.where(beyond.any(axis=1), np.argmax(beyond, axis=1), x.shape[1] - 1)
    j_end = x[np.arange(x.shape[0]), last][:, None]
    count = int(in_tail.max())
    # from the reverse end towards the current where t stops (excluded: the t part starts there)
    steps = np.linspace(0.0, 1.0, count + 1)[None, :-1]
    j = j_end + (x[:, :1] - j_end) * steps
    points = string.evaluate_current(j, branches=branches)
    out = {k: (np.array(np.broadcast_to(final[k], final["current"].shape), dtype=float)
               if k != "voltages" else
               [np.array(np.broadcast_to(y, final["current"].shape), dtype=float)
                for y in final[k]]) for k in ("current", "voltage", "voltages")}
    for row in np.flatnonzero(in_tail):
        k = in_tail[row]
        out["current"][row, :k] = points["current"][row, :k]
        out["voltage"][row, :k] = points["voltage"][row, :k]
        for a, b in zip(out["voltages"], points["voltages"]):
            a[row, :k] = np.broadcast_to(b, j.shape)[row, :k]
    return {**final, **out}


def tail_short_circuit(string, tail, rows):
    """Jsc in a tail (tail_samples): where V falls through zero between two of its samples,
    by a root of V(J) (each evaluation by current); NaN where it does not."""
    x, e, _, branches = tail
    v = e["voltage"]
    change = (v[:, :-1] > 0) & (v[:, 1:] <= 0)
    found = rows & change.any(axis=1)
    k = np.argmax(change, axis=1)[:, None]
    lo, hi = np.take_along_axis(x, k, axis=1), np.take_along_axis(x, k + 1, axis=1)
    v_lo = np.take_along_axis(v, k, axis=1)
    v_hi = np.take_along_axis(v, k + 1, axis=1)
    lo, hi = np.where(found[:, None], lo, x[:, :1]), np.where(found[:, None], hi, x[:, :1])

    big = np.finfo(float).max

    def voltage(j):
        w = string.evaluate_current(j, branches=branches)["voltage"]
        return np.clip(np.where(np.isnan(w), -np.inf, w), -big, big)

    root = bracketed_root(voltage, lo, hi, end_values=(
        np.where(found[:, None], np.clip(v_lo, -big, big), 0.0),
        np.where(found[:, None], np.clip(v_hi, -big, big), 0.0)))
    return np.where(found[:, None], root, np.nan)
