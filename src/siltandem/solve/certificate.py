"""A certificate that the reported maximum power point is the global maximum of the curve.

The solver evaluates a string exactly at pilot junction voltages t (solve.py), on one branch
state of its tunnel junctions at a time (the whole curve below the peaks; each piece of a trace
past them, trace.py). Between two evaluated points t_a < t_b of one branch state:

* the current J = J_pilot(t) falls with t (the pilot's forward law), so J lies between its
  values at the ends;
* every other element's voltage is a monotone function of J on its branch (a subcell's, a
  resistor's, an isotype interface's in either orientation, a tunnel junction's on its tunnel
  and thermal branches fall with J, on its negative branch it rises), so it lies between its
  values at the ends; so does the pilot's own voltage t - J Rs (both terms rise with t).

**Corner bound.** So the terminal voltage V lies between the sums of the elements' smaller and
larger end values, and P = J V is at most the largest of the four products of those bounds (a
bilinear function takes its maximum over a box at a corner). This is a proof, but of first
order: between two points around a smooth maximum it exceeds the maximum by about
|dJ/dt| V (t_b - t_a), so certifying a maximum to 1e-9 by it alone would take some 10^4 cells.

**Slope bound.** dP/dt = J + J' (V + J S), with J' = dJ/dt the pilot law's slope and
S = sum of dV_i/dJ over the other elements minus the pilot's series resistance. Each law gives
a rigorous range of its own slope over the cell from its monotone terms (laws/diode.py
``junction_slope_range``, laws/esaki.py ``slope_range``, laws/thermionic.py
``current_slope_range``; a resistor's is exact), so interval arithmetic gives
dP/dt in [D_lo, D_hi] over the cell, and by the mean value theorem
P(t) <= min(P_a + D_hi (t - t_a), P_b - D_lo (t_b - t)). The width of [D_lo, D_hi] shrinks with
the cell, so this bound is of second order next to a smooth maximum. Where a slope range is
unbounded (a junction at its fold, a subcell past its current limit, an end with no value) only
the corner bound serves. Each cell keeps the smaller of the two.

**Refinement.** Every cell whose bound exceeds the best evaluated power by more than the
tolerance (RELATIVE_TOLERANCE of it plus ABSOLUTE_TOLERANCE_V times the pilot's photocurrent)
is refined: the run of such cells around the reported MPP by points at geometrically growing
distances from it (the first at a distance where the slope bound's excess falls below the
tolerance), every other such cell by its quarter points. The new points are evaluated exactly; if one
beats the reported MPP, the MPP moves there and is polished again by a root of dP/dt in the
cell next to it. This repeats until no cell exceeds the tolerance (certified) or MAX_PASSES
is reached. Then, up to floating-point rounding (about 1e-15 relative, against the 1e-9
tolerance) and the solver's inverse tolerance (1e-13 V): the reported power is at least every
evaluated point, and no point of the traced range of the curve exceeds the reported bound.
Outside the traced range the power is negative (see solve.py and trace.py for why the range
holds every point of positive power). On every branch state of all-tunnel branches a cell whose
current is nowhere positive has P <= 0: V(J) falls with J there, so V >= V(0) = sum of the
subcells' open-circuit voltages >= 0 wherever J <= 0.

**Segments by current.** Just above a subcell's breakdown voltage its current can rise faster
than t resolves (the trace keeps t a relative 1e-9 above it): the rest of such a curve is
sampled by current (solve.tail_samples, every element through its inverse). There every
element's voltage, the pilot's too, is monotone in J, and dP/dJ = V + J S: the same two bounds
hold with J as the parameter.

Every step works per design: a design's certificate never depends on its batch.

References
----------
R. E. Moore, R. B. Kearfott, M. J. Cloud, Introduction to Interval Analysis, SIAM 2009, ch. 6
(the mean value form and branch and bound for global optimization); E. Hansen, G. W. Walster,
Global Optimization Using Interval Analysis, 2nd ed., Dekker 2004, ch. 12 (the cluster effect
of first-order bounds next to a smooth maximum).
"""
from dataclasses import dataclass

import numpy as np

from siltandem.circuit.coupling import is_coupled, linear_emission
from siltandem.numerics.roots import bracketed_root
from siltandem.solve.slopes import SEGMENT_ROWS, product_range, slope_bounds

#: a cell is certified when its bound is below the reported power times (1 + this) ...
RELATIVE_TOLERANCE = 1e-9
#: ... plus this times the pilot's photocurrent [V] (an absolute power, for strings of ~0 power)
ABSOLUTE_TOLERANCE_V = 1e-12
#: refinement passes before giving up (the certificate is then reported as not proven)
MAX_PASSES = 40
#: ratio of successive distances of the points placed around the MPP
GROWTH = 1.6
#: at most this many points around the MPP on each side in one pass
GROWTH_STEPS = 48
#: a design's budget of refinement points in one certificate, and per pass
MAX_POINTS = 4000
MAX_POINTS_PER_PASS = 400
#: once a pass leaves at most this fraction of a batch of at least RESTRICT_ROWS designs unproven,
#: the remaining passes run on those alone (certify); a speed setting, no physics (a year of hours
#: leaves one or two of 4421 after the first pass, and each further pass over all of them cost
#: about 0.6 s of CPU)
RESTRICT_FRACTION = 0.25
RESTRICT_ROWS = 16


#: rows of a segment's data: the parameter, current, terminal voltage, power, dP/d(parameter),
#: the bound known for the cell to the right; then one row per element's voltage
_T, _J, _V, _P, _SLOPE, _KNOWN, _PARTS = SEGMENT_ROWS


class Segment:
    """Exact samples of one branch state, in one array ``data`` (6 + E, B, M) ordered by the
    parameter: the pilot's junction voltage t (or, with ``by_current``, the current itself),
    the current, the terminal voltage, the power, dP/d(parameter) (NaN where not evaluated),
    the bound last proven for the cell to the right of each sample (NaN where none is known:
    a new sample, or a cell just split), and the element voltages."""

    def __init__(self, state, data, all_tunnel, by_current=False, falling=True):
        self.state, self.data = dict(state), data
        self.all_tunnel, self.by_current, self.falling = all_tunnel, by_current, falling
        #: the bounds of the last pass (bound, width, view), while no sample was added since
        self.last = None

    t = property(lambda self: self.data[_T])
    current = property(lambda self: self.data[_J])
    voltage = property(lambda self: self.data[_V])
    power = property(lambda self: self.data[_P])
    slope = property(lambda self: self.data[_SLOPE])
    known = property(lambda self: self.data[_KNOWN])
    parts = property(lambda self: self.data[_PARTS:])

    @classmethod
    def from_evaluation(cls, state, t, e, tunnels=(), by_current=False):
        t = np.asarray(t, dtype=float)
        shape = np.broadcast_shapes(t.shape, np.shape(e["current"]))
        with np.errstate(invalid="ignore", over="ignore"):
            power = e["current"] * e["voltage"]
            slope = (e["dcurrent"] * e["voltage"] + e["current"] * e["dvoltage"]
                     if "dcurrent" in e else np.nan)
        voltages = e["voltages"]
        data = np.empty((_PARTS + len(voltages),) + shape)
        for row, value in enumerate([t, e["current"], e["voltage"], power, slope, np.nan]):
            data[row] = value
        for row, value in enumerate(voltages, start=_PARTS):
            data[row] = value
        ordered = data[_T]
        if ordered.shape[1] > 1 and not np.all(ordered[:, 1:] >= ordered[:, :-1]):
            order = np.argsort(ordered, axis=1, kind="stable")
            data = data[:, np.arange(shape[0])[:, None], order]
        all_tunnel = all(state.get(name, "tunnel") == "tunnel" for name in tunnels)
        falling = all(state.get(name, "tunnel") != "negative" for name in tunnels)
        return cls(state, data, all_tunnel, by_current, falling)

    def evaluate(self, string, x):
        """The string, exactly, at parameters ``x`` (B, K) of this segment's kind."""
        if self.by_current:
            return string.evaluate_current(x, branches=self.state)
        return string.evaluate(x, slopes=True, branches=self.state)

    def rows(self, rows):
        """The same samples restricted to some designs of the batch (``rows`` indices)."""
        return Segment(self.state, self.data[:, rows], self.all_tunnel, self.by_current, self.falling)

    def merge(self, other):
        """The samples of both, in order of the parameter; a cell that a new sample splits
        loses its known bound."""
        count = self.data.shape[2]
        data = np.concatenate([self.data, other.data], axis=2)
        data[_KNOWN, :, count:] = np.nan
        order = np.argsort(data[_T], axis=1, kind="stable")
        data = data[:, np.arange(order.shape[0])[:, None], order]
        # the sample before a new one now starts a new (shorter) cell
        new = order >= count
        data[_KNOWN, :, :-1] = np.where(new[:, 1:], np.nan, data[_KNOWN, :, :-1])
        self.data = data
        self.last = None


@dataclass
class Certificate:
    """Per design (arrays (B,)): whether the MPP is proven global, the largest upper bound of
    the power over the traced range [W/m2], and how many cells the proof took."""

    certified: np.ndarray
    bound_W_m2: np.ndarray
    cells: np.ndarray


class _Finite:
    """A segment seen through its samples of finite power only: a sample with none (an
    element's inverse found no voltage there) takes the values of the last sample before it
    that has, so a run of them closes into one cell between the finite samples around it (the
    monotone bounds need only a cell's two ends). Samples before the first finite one
    (``lead``) or after the last (``trail``) have nothing to close onto."""

    def __init__(self, segment):
        # (a voltage of -inf is a value: a subcell without a shunt cannot carry that much)
        finite = np.isfinite(segment.current) & ~np.isnan(segment.voltage) & \
            (segment.voltage < np.inf)
        self.state, self.all_tunnel = segment.state, segment.all_tunnel
        self.by_current, self.falling = segment.by_current, segment.falling
        self.t_own = segment.t
        if finite.all():
            # (the common case: the segment itself)
            self.data = segment.data
            self.lead = self.trail = np.zeros(finite.shape, dtype=bool)
            self.open = np.zeros((finite.shape[0], finite.shape[1] - 1), dtype=bool)
            self.complete = True
            return
        self.complete = False
        size, count = finite.shape
        index = np.broadcast_to(np.arange(count), finite.shape)
        last = np.maximum.accumulate(np.where(finite, index, -1), axis=1)
        first = np.argmax(finite, axis=1)[:, None]
        final = np.max(np.where(finite, index, -1), axis=1, keepdims=True)
        self.lead = last < 0
        self.trail = index > final
        source = np.where(self.lead, first, last)
        self.data = segment.data[:, np.arange(size)[:, None], source]
        # the cells with nothing to close onto keep their own ends, for halving
        self.open = self.lead[:, :-1] | self.trail[:, 1:]

    t = property(lambda self: self.data[_T])
    current = property(lambda self: self.data[_J])
    power = property(lambda self: self.data[_P])
    parts = property(lambda self: self.data[_PARTS:])


def _open_ends(view):
    """Bounds of P before the first and after the last finite sample of a segment (B, 1 each).
    On all-tunnel branches V rises and J falls with t: before a first sample where J > 0 and
    V < 0, P <= J V there (< 0); after a last sample where J <= 0, P <= 0 (V >= Voc >= 0
    wherever J <= 0). Elsewhere nothing is known (inf)."""
    rows = np.arange(view.t.shape[0])
    first = np.argmax(~view.lead, axis=1)
    last = view.t.shape[1] - 1 - np.argmax(~view.trail[:, ::-1], axis=1)
    j_first, v_first = view.current[rows, first], view.power[rows, first]
    with np.errstate(invalid="ignore", divide="ignore"):
        v_first = v_first / j_first
    if view.by_current:
        # samples by current: beyond the last one J rises, and V falls (no junction on its
        # negative branch)
        j_last = view.current[rows, last]
        with np.errstate(invalid="ignore", divide="ignore"):
            v_last = view.power[rows, last] / j_last
        after = np.where(view.falling & (j_last > 0) & (v_last < 0),
                         view.power[rows, last], np.inf)[:, None]
        return np.full(after.shape, np.inf), after
    before = np.where(view.all_tunnel & (j_first > 0) & (v_first < 0),
                      view.power[rows, first], np.inf)[:, None]
    after = np.where(view.all_tunnel & (view.current[rows, last] <= 0), 0.0, np.inf)[:, None]
    return before, after


def corner_bounds(segment, open_circuit=None):
    """The corner bound of P over each cell of a segment (B, M - 1); inf where unknown.

    On a segment of all-tunnel branches every element's voltage falls with J, so the part of
    a cell where J < 0 has P <= 0, and on the rest every element's voltage lies between its
    value at the end where J >= 0 and its value at J = 0 (``open_circuit``: the element
    voltages at zero current, a list of (B, 1)): an end with J < 0 is replaced by the point
    of zero current."""
    j_a, j_b = segment.current[:, :-1], segment.current[:, 1:]
    a, b = segment.parts[:, :, :-1], segment.parts[:, :, 1:]
    if segment.all_tunnel and open_circuit is not None:
        zero = np.stack(open_circuit)
        a, b = np.where(j_a < 0, zero, a), np.where(j_b < 0, zero, b)
        j_a, j_b = np.maximum(j_a, 0.0), np.maximum(j_b, 0.0)
    j_lo, j_hi = np.minimum(j_a, j_b), np.maximum(j_a, j_b)
    v_lo = np.minimum(a, b).sum(axis=0)
    v_hi = np.maximum(a, b).sum(axis=0)
    _, bound = product_range(j_lo, j_hi, v_lo, v_hi)
    if segment.all_tunnel:
        bound = np.where(j_hi <= 0, np.minimum(bound, 0.0), bound)
    return bound


def _compact(mask):
    """Indices (B, K) of the True entries of each row of ``mask`` (B, C), K the largest count,
    rows padded with their first index (or 0); and which entries are real."""
    count = mask.sum(axis=1)
    width = max(int(count.max()), 1) if mask.size else 1
    order = np.argsort(~mask, axis=1, kind="stable")[:, :width]
    real = np.arange(width)[None, :] < count[:, None]
    return np.where(real, order, order[:, :1]), real


def cell_bounds(string, segment, target, open_circuit=None):
    """Upper bounds of P over every cell of a segment (B, M - 1), and the dP/dt range width
    per unit of t (inf where not computed): a bound already proven below ``target`` (B, 1)
    stays (``segment.known``); elsewhere the corner bound, and the slope bound where the corner
    bound exceeds the target and the current is positive at both ends. The bounds found are
    kept in ``segment.known``."""
    previous = segment.known[:, :-1]
    settled = previous <= target
    if segment.last is not None and np.all(settled):
        # nothing added since the last pass, and every cell proven below the target: as then
        return segment.last
    view = _Finite(segment)
    bound = np.where(settled, previous, corner_bounds(view, open_circuit))
    width = np.full(bound.shape, np.inf)
    need = ((bound > target) & (view.current[:, :-1] > 0) & (view.current[:, 1:] > 0)
            & (view.t[:, 1:] > view.t[:, :-1]))
    if np.any(need):
        # (a row's padding repeats one of its cells: the same bound is written twice)
        cells, real = _compact(need)
        slope, spread = slope_bounds(string, view, cells, real)
        rows = np.arange(bound.shape[0])[:, None]
        bound[rows, cells] = np.minimum(bound[rows, cells], slope)
        width[rows, cells] = spread
    if not view.complete:
        # the ends of the segment with no finite sample to close onto
        before, after = _open_ends(view)
        bound = np.where(view.lead[:, :-1], before, bound)
        bound = np.where(view.trail[:, 1:], after, bound)
    segment.known[:, :-1] = bound
    segment.last = (bound, width, view)
    return bound, width, view


def _points(segment, fail, bound, width, t_mpp, p_mpp, holds_mpp, tolerance):
    """New pilot voltages (B, K) for a segment's failing cells, NaN-padded: around the MPP
    (rows where ``holds_mpp``) points at geometrically growing distances covering the run of
    failing cells next to it, elsewhere each failing cell's quarter points. ``segment`` is the
    finite view (_Finite)."""
    t = segment.t
    rows, count = fail.shape
    if not (holds_mpp & fail).any():
        # (no MPP here: quarter points only)
        return _quarter_points(segment, fail, np.empty((rows, 0)))
    index = np.arange(count)[None, :]
    # the cells on each side of the MPP: cell k spans [t_k, t_k+1]
    at = np.argmin(np.abs(t - t_mpp), axis=1)[:, None]                   # the MPP's sample
    ok = ~fail
    left_ok = np.max(np.where(ok & (index < at), index, -1), axis=1)[:, None]
    right_ok = np.min(np.where(ok & (index >= at), index, count), axis=1)[:, None]
    in_run = holds_mpp & (index > left_ok) & (index < right_ok)
    left_end = np.take_along_axis(t, np.clip(left_ok + 1, 0, count), axis=1)
    right_end = np.take_along_axis(t, np.clip(right_ok, 0, count), axis=1)
    # the first distance: the slope bound's excess over a cell of length d next to the
    # maximum is about width d^2; keep it to half the tolerance
    # (or, where only the corner bound serves, a first-order excess: the excess over the
    # cell next to the MPP per unit of its length, times the distance)
    sides = np.concatenate([np.clip(at - 1, 0, count - 1), np.clip(at, 0, count - 1)], axis=1)
    near = np.take_along_axis(width, sides, axis=1).max(axis=1, keepdims=True)
    lengths = np.take_along_axis(np.diff(t, axis=1), sides, axis=1)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        rate = np.max((np.take_along_axis(bound, sides, axis=1) - p_mpp) / lengths, axis=1,
                      keepdims=True)
        first = np.fmax(np.sqrt(0.5 * tolerance / near), 0.5 * tolerance / rate)
    floor = 2 * np.finfo(float).eps * np.maximum(np.abs(t_mpp), 1.0)
    first = np.where(np.isfinite(first) & (first > 0), np.maximum(first, floor), np.nan)
    steps = first * GROWTH ** np.arange(GROWTH_STEPS)[None, :]
    around = np.concatenate([np.where(steps < t_mpp - left_end, t_mpp - steps, np.nan),
                             np.where(steps < right_end - t_mpp, t_mpp + steps, np.nan)],
                            axis=1)
    around = np.where(holds_mpp & in_run.any(axis=1, keepdims=True), around, np.nan)
    return _quarter_points(segment, fail, around)


def _quarter_points(segment, fail, around):
    """``around`` (B, G) with the quarter points of every failing cell that none of them
    splits: sorted, NaN-padded, no point twice or outside the samples' range."""
    t = segment.t
    cells, real = _compact(fail)
    rows = np.arange(t.shape[0])[:, None]
    own = segment.open[rows, cells]
    lo = np.where(own, segment.t_own[rows, cells], t[rows, cells])
    hi = np.where(own, segment.t_own[rows, cells + 1], t[rows, cells + 1])
    split = ((around[:, None, :] > lo[:, :, None]) & (around[:, None, :] < hi[:, :, None])
             ).any(axis=2)
    # (at its quarter points: one pass of these does what two of halving would)
    middle = lo[:, :, None] + (hi - lo)[:, :, None] * np.array([0.25, 0.5, 0.75])
    middle = np.where((real & ~split)[:, :, None] & (middle > lo[:, :, None])
                      & (middle < hi[:, :, None]), middle, np.nan).reshape(lo.shape[0], -1)
    new = np.concatenate([around, middle], axis=1)
    # no point outside the samples' range, and none twice
    own_t = segment.t_own
    new = np.where((new > own_t[:, :1]) & (new < own_t[:, -1:]), new, np.nan)
    new = np.sort(new, axis=1)
    new[:, 1:] = np.where(new[:, 1:] == new[:, :-1], np.nan, new[:, 1:])
    new = np.sort(new, axis=1)
    keep = max(int(np.isfinite(new).sum(axis=1).max()), 0)
    return new[:, :keep]


def polisher(string, segments):
    """The polish ``certify`` calls: the root of dP/dt in a bracket on a segment's branch state
    (numerics.bracketed_root; rows not to polish come with a zero-length bracket). A
    non-finite dP/dt counts as rising, as in solve.py."""
    def polish(k, lower, upper, g_lower, g_upper):
        segment = segments[k]

        def power_slope(t):
            e = segment.evaluate(string, t)
            with np.errstate(invalid="ignore", over="ignore"):
                g = e["dcurrent"] * e["voltage"] + e["current"] * e["dvoltage"]
            return np.where(np.isfinite(g), g, 1e300)

        return bracketed_root(power_slope, lower, upper, end_values=(g_lower, g_upper),
                              idle=np.nan)
    # (certify builds the same polish on a restriction of the batch: _certify_rows)
    polish.rebuilt = polisher
    return polish


def _as_point(e, shape):
    """current, voltage and element voltages of an evaluation, as (B, 1) arrays."""
    return {"current": np.array(np.broadcast_to(e["current"], shape), dtype=float),
            "voltage": np.array(np.broadcast_to(e["voltage"], shape), dtype=float),
            "voltages": [np.array(np.broadcast_to(x, shape), dtype=float)
                         for x in e["voltages"]]}


def _move(string, segment, k, rows, polish):
    """For the designs ``rows`` whose best evaluated point lies in this segment: that point,
    polished by a root of dP/dt in the cell next to it where dP/dt changes sign (kept only if
    it is at least as high). Returns (t, evaluation) (B, 1) (other rows: their best sample)."""
    power = np.where(np.isfinite(segment.power), segment.power, -np.inf)
    i = np.argmax(power, axis=1)[:, None]
    last = segment.t.shape[1] - 1
    g = segment.slope
    t_best = np.take_along_axis(segment.t, i, axis=1)
    rising = np.take_along_axis(g, i, axis=1) >= 0
    lo = np.where(rising, i, np.clip(i - 1, 0, last))
    hi = np.where(rising, np.clip(i + 1, 0, last), i)
    t_lo, t_hi = (np.take_along_axis(segment.t, x, axis=1) for x in (lo, hi))
    g_lo, g_hi = (np.take_along_axis(g, x, axis=1) for x in (lo, hi))
    bracket = (rows[:, None] & np.isfinite(g_lo) & np.isfinite(g_hi) & (g_lo >= 0)
               & (g_hi <= 0) & (t_hi > t_lo))
    t_new = t_best
    if bracket.any():
        root = polish(k, np.where(bracket, t_lo, t_best),
                      np.where(bracket, t_hi, t_best), np.where(bracket, g_lo, 0.0),
                      np.where(bracket, g_hi, 0.0))
        t_new = np.where(bracket & np.isfinite(root), root, t_best)
    both = np.concatenate([t_new, t_best], axis=1)
    e = segment.evaluate(string, both)
    point = _as_point(e, both.shape)
    with np.errstate(invalid="ignore", over="ignore"):
        p = point["current"] * point["voltage"]
    root_wins = np.isfinite(p[:, :1]) & (p[:, :1] >= p[:, 1:])
    segment.merge(Segment.from_evaluation(segment.state, t_new, {
        key: (x[:, :1] if key != "voltages" else [y[:, :1] for y in x])
        for key, x in {**point, "dcurrent": np.broadcast_to(e["dcurrent"], both.shape),
                       "dvoltage": np.broadcast_to(e["dvoltage"], both.shape)}.items()},
        [t.name for t in string.tunnels], segment.by_current))
    pick = lambda x: np.where(root_wins, x[:, :1], x[:, 1:])  # noqa: E731
    return pick(both), {"current": pick(point["current"]), "voltage": pick(point["voltage"]),
                        "voltages": [pick(x) for x in point["voltages"]]}


def certify(string, segments, mpp_segment, t_mpp, at_mpp, *, photocurrent, polish,
            open_circuit=None, active=None, passes=None, spent=None):
    """Prove (or fail to prove) that the reported MPP is the global maximum over the segments.

    Parameters
    ----------
    string : solve.SeriesString
    segments : list of Segment
        Every branch state's exact samples (batch B each), including the reported MPP's own
        point in its segment. Refinement adds samples to them.
    mpp_segment : (B,) int
        The segment holding each design's reported MPP.
    t_mpp : (B, 1)
    at_mpp : dict
        The evaluation at t_mpp (``current``, ``voltage``, ``voltages``).
    photocurrent : (B, 1)
        The pilot's photocurrent (scale of the absolute tolerance).
    polish : callable
        ``polish(segment_index, lo, hi, g_lo, g_hi) -> t`` (B, 1): the root of dP/dt in
        [lo, hi] on that segment's branch state (rows not to polish come with lo = hi); NaN
        where none is found.
    open_circuit : (t, voltages), optional
        The pilot voltage of open circuit (B, 1) and every element's voltage at zero current
        (a list of (B, 1)): a point of the curve with P = 0, in the first segment (all-tunnel
        branches). Where the MPP given has P < 0 (a string that gives no power) the MPP is
        this point instead.
    active : (B,) bool, optional
        The designs to certify (others are left alone: not certified, never moved).
    passes : int, optional
        Refinement passes at most (default MAX_PASSES).
    spent : (B,) int array, optional
        New points each design has already spent of its budget (MAX_POINTS; default none).

    Once a pass leaves few designs unproven (RESTRICT_FRACTION of a batch of at least
    RESTRICT_ROWS), the remaining passes run on those designs alone (_certify_rows): every step
    works per design, and a proven design's samples, bounds and MPP no longer change, so the
    answer is the same as refining the whole batch, at the cost of the unproven rows only.

    Returns
    -------
    certificate, t_mpp, at_mpp, mpp_segment, moved
        ``moved`` (B,) is True where the MPP moved to a higher point than the one given
        (t_mpp, at_mpp and mpp_segment then hold the new point).
    """
    passes = MAX_PASSES if passes is None else passes
    t_mpp = np.array(t_mpp, dtype=float)
    mpp_segment = np.array(mpp_segment)
    size = t_mpp.shape[0]
    at_mpp = _as_point(at_mpp, t_mpp.shape)
    moved = np.zeros(size, dtype=bool)
    spent = np.zeros(size, dtype=int) if spent is None else np.array(spent, dtype=int)
    active = np.ones(size, dtype=bool) if active is None else np.asarray(active, dtype=bool)
    absolute = ABSOLUTE_TOLERANCE_V * np.abs(photocurrent)
    zero = None
    if open_circuit is not None:
        zero, t_mpp, at_mpp, mpp_segment, below = _no_lower_than_open_circuit(
            open_circuit, active, t_mpp, at_mpp, mpp_segment)
        moved |= below
    for attempt in range(passes + 1):
        # 1. the reported MPP is at least every evaluated point: where one is higher, the MPP
        # moves there (polished)
        t_mpp, at_mpp, mpp_segment, higher = _move_to_best(string, segments, active, t_mpp,
                                                           at_mpp, mpp_segment, polish)
        moved |= higher
        with np.errstate(invalid="ignore", over="ignore"):
            p_mpp = at_mpp["current"] * at_mpp["voltage"]
        # 2. the bounds of every cell
        tolerance = RELATIVE_TOLERANCE * np.abs(p_mpp) + absolute
        # (designs left alone never ask for a bound)
        target = np.where(active[:, None] & np.isfinite(p_mpp), p_mpp + tolerance, np.inf)
        results = [cell_bounds(string, segment, target, zero) for segment in segments]
        fails = [active[:, None] & np.isfinite(p_mpp) & (bound > target)
                 for bound, _, _ in results]
        failing = np.zeros(size, dtype=bool)
        for fail in fails:
            failing |= fail.any(axis=1)
        if not failing.any() or attempt == passes:
            break
        if _restrictable(failing, polish):
            # the remaining passes on the unproven designs alone
            return _certify_rows(string, segments, results, p_mpp, failing, active, moved, spent,
                                 mpp_segment, t_mpp, at_mpp, photocurrent, polish, zero,
                                 passes - attempt)
        # 3. refinement: new points evaluated exactly and added to the samples
        if not _refine(string, segments, results, fails, spent, mpp_segment, t_mpp, p_mpp,
                       tolerance):
            break
    return _outcome(segments, results, p_mpp, failing, active), t_mpp, at_mpp, mpp_segment, \
        moved


def _restrictable(failing, polish):
    """Whether the remaining passes run on the failing designs alone: a batch of at least
    RESTRICT_ROWS with at most RESTRICT_FRACTION of it failing, and a polish built by
    :func:`polisher` (which can be built again on the restriction)."""
    size = failing.shape[0]
    return (size >= RESTRICT_ROWS and getattr(polish, "rebuilt", None) is not None
            and int(failing.sum()) <= RESTRICT_FRACTION * size)


def _certify_rows(string, segments, results, p_mpp, failing, active, moved, spent, mpp_segment,
                  t_mpp, at_mpp, photocurrent, polish, zero, passes):
    """:func:`certify`'s remaining ``passes`` on the failing designs alone (``string.rows``,
    ``Segment.rows``), their answers written over the batch's outcome of this pass (the proven
    designs keep theirs). The first pass of the restriction repeats this pass's move and bounds
    on the same samples (the same answers), then refines as the batch would have. The
    caller's segments keep the samples they had (the restriction refines copies)."""
    rows = np.flatnonzero(failing)
    outcome = _outcome(segments, results, p_mpp, failing, active)
    sub_string = string.rows(rows)
    sub_segments = [segment.rows(rows) for segment in segments]
    pick = lambda x: np.asarray(x)[rows]  # noqa: E731
    point = {"current": pick(at_mpp["current"]), "voltage": pick(at_mpp["voltage"]),
             "voltages": [pick(v) for v in at_mpp["voltages"]]}
    open_circuit = None
    if zero is not None:
        # (the move to open circuit is done: the restriction never moves there again, as
        # no MPP left has P < 0; its zero-current voltages still close the corner bounds)
        open_circuit = (pick(t_mpp), [pick(z) for z in zero])
    proof, t_sub, at_sub, where_sub, moved_sub = certify(
        sub_string, sub_segments, pick(mpp_segment), pick(t_mpp), point,
        photocurrent=pick(np.broadcast_to(photocurrent, t_mpp.shape)),
        polish=polish.rebuilt(sub_string, sub_segments), open_circuit=open_circuit,
        active=pick(active), passes=passes, spent=pick(spent))
    certified, bound, cells = (np.array(x) for x in (outcome.certified, outcome.bound_W_m2,
                                                      outcome.cells))
    certified[rows], bound[rows], cells[rows] = proof.certified, proof.bound_W_m2, proof.cells
    t_mpp, mpp_segment, moved = np.array(t_mpp), np.array(mpp_segment), moved.copy()
    t_mpp[rows], mpp_segment[rows] = t_sub, where_sub
    moved[rows] |= moved_sub
    at_mpp = {"current": np.array(at_mpp["current"]), "voltage": np.array(at_mpp["voltage"]),
              "voltages": [np.array(v) for v in at_mpp["voltages"]]}
    for key in ("current", "voltage"):
        at_mpp[key][rows] = at_sub[key]
    for full, part in zip(at_mpp["voltages"], at_sub["voltages"]):
        full[rows] = part
    return Certificate(certified, bound, cells), t_mpp, at_mpp, mpp_segment, moved


def _outcome(segments, results, p_mpp, failing, active):
    """The Certificate from the last pass: certified where no cell failed, the largest bound
    (at least the MPP's power), and the cells of positive length checked."""
    size = failing.shape[0]
    bound = np.full(size, np.nan)
    cells = np.zeros(size, dtype=int)
    for (b, _, _), segment in zip(results, segments):
        if b.shape[1]:
            bound = np.fmax(bound, b.max(axis=1))
        cells += (np.diff(segment.t, axis=1) > 0).sum(axis=1)
    finite = np.isfinite(p_mpp[:, 0])
    bound = np.where(finite, np.fmax(bound, p_mpp[:, 0]), np.nan)
    certified = ~failing & finite & active
    bound = np.where(active, bound, np.nan)
    return Certificate(certified, bound, cells)


def _no_lower_than_open_circuit(open_circuit, active, t_mpp, at_mpp, mpp_segment):
    """Where the MPP given has P < 0 (a string that gives no power), open circuit (P = 0, in
    the first segment) instead. Returns (the element voltages at zero current (B, 1 each),
    t_mpp, at_mpp, mpp_segment, where it moved (B,))."""
    t_open, zero = open_circuit
    zero = [np.array(np.broadcast_to(z, t_mpp.shape), dtype=float) for z in zero]
    with np.errstate(invalid="ignore", over="ignore"):
        below = active & ((at_mpp["current"] * at_mpp["voltage"])[:, 0] < 0)
    if below.any():
        chosen = below[:, None]
        t_mpp = np.where(chosen, t_open, t_mpp)
        at_mpp = {"current": np.where(chosen, 0.0, at_mpp["current"]),
                  "voltage": np.where(chosen, sum(zero), at_mpp["voltage"]),
                  "voltages": [np.where(chosen, z, v) for z, v in
                               zip(zero, at_mpp["voltages"])]}
        mpp_segment = np.where(below, 0, mpp_segment)
    return zero, t_mpp, at_mpp, mpp_segment, below


def _move_to_best(string, segments, active, t_mpp, at_mpp, mpp_segment, polish):
    """Where an evaluated point of some segment is higher than the MPP, the MPP moves there,
    polished (_move). Returns (t_mpp, at_mpp, mpp_segment, where it moved (B,))."""
    with np.errstate(invalid="ignore", over="ignore"):
        p_mpp = at_mpp["current"] * at_mpp["voltage"]
    best = np.stack([np.max(np.where(np.isfinite(s.power), s.power, -np.inf), axis=1)
                     for s in segments])                                   # (S, B)
    where = np.argmax(best, axis=0)
    higher = active & np.isfinite(p_mpp[:, 0]) & (best.max(axis=0) > p_mpp[:, 0])
    for k, segment in enumerate(segments):
        rows = higher & (where == k)
        if not rows.any():
            continue
        t_new, e = _move(string, segment, k, rows, polish)
        chosen = rows[:, None]
        t_mpp = np.where(chosen, t_new, t_mpp)
        at_mpp = {"current": np.where(chosen, e["current"], at_mpp["current"]),
                  "voltage": np.where(chosen, e["voltage"], at_mpp["voltage"]),
                  "voltages": [np.where(chosen, a, b) for a, b in
                               zip(e["voltages"], at_mpp["voltages"])]}
        mpp_segment = np.where(rows, k, mpp_segment)
    return t_mpp, at_mpp, mpp_segment, higher


def _refine(string, segments, results, fails, spent, mpp_segment, t_mpp, p_mpp, tolerance):
    """New exact points in every segment's failing cells (_points), added to its samples,
    within each design's budget (a design that spends it stays unproven; ``spent`` (B,)
    counts in place). Returns whether any point was added."""
    tunnels = [t.name for t in string.tunnels]
    added_any = False
    for k, (segment, (bound, width, view), fail) in enumerate(zip(segments, results, fails)):
        fail = fail & (spent < MAX_POINTS)[:, None]
        if not fail.any():
            continue
        holds = (mpp_segment == k)[:, None]
        new = _points(view, fail, bound, width, t_mpp, p_mpp, holds, tolerance)
        new = new[:, :MAX_POINTS_PER_PASS]
        if new.shape[1] == 0:
            continue
        real = np.isfinite(new)
        spent += real.sum(axis=1)
        # rows with fewer new points repeat their first sample (a zero-length cell)
        new = np.where(real, new, segment.t[:, :1])
        e = segment.evaluate(string, new)
        segment.merge(Segment.from_evaluation(segment.state, new, e, tunnels,
                                              segment.by_current))
        added_any = True
    return added_any


def is_concave(string):
    """(B,) True where the string's V(J) is concave: only subcells without breakdown or a
    silicon base law, and resistors. A subcell's J(Vj) is then concave and falling (every term of it is), so its
    inverse Vj(J) is concave, and Vj - J Rs too; so is the sum. Then P = J V(J) is concave on
    J >= 0 (P'' = 2 V' + J V'' < 0) and P(t) unimodal (J falls with t): a root of dP/dt where
    it changes sign is the global maximum."""
    if any(e.kind not in ("subcell", "resistor") for e in string.elements):
        return np.zeros(string.size, dtype=bool)
    concave = np.ones(string.size, dtype=bool)
    if any(getattr(cell, "bulk", None) is not None for cell in string.subcells):
        # a silicon base's recombination law is not shown concave: bound the cells instead
        return np.zeros(string.size, dtype=bool)
    # luminescent coupling keeps it where each gain is affine in J (coupling.linear_emission)
    for cell in string.subcells:
        if is_coupled(cell):
            concave &= linear_emission(cell, string.size)
    for cell in string.subcells:
        breakdown = ((cell.breakdown_factor > 0) & np.isfinite(cell.breakdown_V)
                     & (cell.shunt_S_m2 > 0))
        concave &= ~np.broadcast_to(breakdown, (string.size, 1))[:, 0]
    return concave


def certify_mpp(string, t, samples, t_mpp, at_mpp, t_voc, zero, turned, active, tail=None):
    """The certificate of the MPP over one branch state (every junction on its tunnel branch)
    from the exact samples (t ascending) and the MPP's own evaluation: by concavity where the
    MPP is a turn of dP/dt on a concave string (is_concave), else by bounding every cell
    (certificate.certify; the MPP may move to a higher point found there), with the tail's
    samples by current where there is one (tail_samples). Returns (Certificate, t_mpp,
    at_mpp)."""
    size = t_mpp.shape[0]
    with np.errstate(invalid="ignore", over="ignore"):
        power = (at_mpp["current"] * at_mpp["voltage"])[:, 0]
    by_shape = active & turned & is_concave(string) & np.isfinite(power)
    if tail is not None:
        by_shape &= ~tail[2]
    rest = active & ~by_shape
    certified, bound = by_shape.copy(), np.where(by_shape, power, np.nan)
    cells = np.zeros(size, dtype=int)
    if rest.any():
        segment = segment_of({}, t, samples, string)
        segment.merge(segment_of({}, t_mpp, at_mpp, string))
        segments = [segment]
        if tail is not None:
            segments.append(Segment.from_evaluation({}, tail[0], tail[1],
                                                    [e.name for e in string.tunnels],
                                                    by_current=True))
        proof, t_mpp, at_mpp, _, _ = certify(
            string, segments, np.zeros(size, dtype=int), t_mpp, at_mpp,
            photocurrent=string.pilot_photocurrent, polish=polisher(string, segments),
            open_circuit=(t_voc, zero), active=rest)
        certified = np.where(rest, proof.certified, certified)
        bound = np.where(rest, proof.bound_W_m2, bound)
        cells = np.where(rest, proof.cells, cells)
    return Certificate(certified, bound, cells), t_mpp, at_mpp


def segment_of(state, t, evaluation, string):
    """Exact samples of one branch state for the certificate (certificate.Segment)."""
    return Segment.from_evaluation(state, t, evaluation, [e.name for e in string.tunnels])
