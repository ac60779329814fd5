"""Tracing a string through its tunnel junctions' negative differential resistance.

A tunnel junction's current rises to its peak, falls to its valley (negative differential
resistance) and rises again on its thermal branch, so its voltage as a function of current has
three branches. When a string's trace reaches a junction's peak, the curve is continued piece by
piece. Along each piece every junction stays on one branch and the curve is single-valued in the
pilot subcell's junction voltage t (solve.py), with J monotone in t.

A piece ends where the current, moving in its direction, reaches the end of some junction's branch:
the peak (tunnel <-> negative) or the valley (negative <-> thermal). That junction moves onto the
neighbouring branch, and the current reverses its direction, which is how a one-dimensional curve
turns at a fold. The path starts in forward bias (all junctions on their tunnel branch, current
rising). It ends at the reverse-bias floor, at the lowest pilot voltage, or back at the forward end.

Voc, Jsc and the MPP are found on the path: Voc at J = 0 on its first piece; Jsc at the first zero of
the terminal voltage met from open circuit towards reverse bias; the MPP at the global maximum of P
over all pieces, refined by a root of dP/dt inside its piece, and proven global by bounding P
between the samples of every piece (certificate.py). What a terminal-voltage sweep shows
(with its hysteresis) follows from the path in :func:`voltage_sweep`.

One design at a time (B = 1): this is the rare case, kept apart so that the common one stays
vectorized.
"""
import numpy as np

from siltandem.numerics.roots import bracketed_root
from siltandem.solve.certificate import Segment, certify, polisher
from siltandem.solve.spacing import arc_length, curve_spans, evenly_spaced, parameter_samples
from siltandem.solve.string import FORWARD_CURRENT_FRACTION, open_circuit_voltages
from siltandem.solve.tail import tail_samples, tail_short_circuit

SAMPLES_PER_PIECE = 160
#: at most this many pieces per junction (each junction turns at most a few times)
MAX_PIECES_PER_JUNCTION = 6


def _scalar(x):
    return float(np.asarray(x, dtype=float).reshape(-1)[0])


def _next_fold(branches, direction, peaks, valleys):
    """The current at which the next junction leaves its branch, and which junction, and its new branch."""
    best_j, best_k, new = (np.inf if direction > 0 else -np.inf), None, None
    for k, branch in enumerate(branches):
        if direction > 0 and branch in ("tunnel", "negative"):
            candidate, target = peaks[k], ("negative" if branch == "tunnel" else "tunnel")
            if candidate < best_j:
                best_j, best_k, new = candidate, k, target
        elif direction < 0 and branch in ("negative", "thermal"):
            candidate, target = valleys[k], ("thermal" if branch == "negative" else "negative")
            if candidate > best_j:
                best_j, best_k, new = candidate, k, target
    return best_j, best_k, new


def _samples(string, state, t_a, t_b, points):
    """Exact samples (values and slopes) of one piece from t_a to t_b, in path order: half
    uniform in t, half uniform in current (the pilot's forward law gives the current at the
    ends without inverting anything)."""
    pilot = string.subcells[string.single_pilot] if string.single_pilot is not None else None
    half = points // 2
    ends = np.concatenate([t_a, t_b], axis=1)
    if pilot is not None:
        j_ends = pilot.pilot_current(ends, string.temperature_K)[0]
    else:
        j_ends = string.evaluate(ends, branches=state)["current"]
    ts = parameter_samples(t_a, t_b, j_ends[:, :1], j_ends[:, 1:], (points - half, half),
                           string.pilot_voltage_at)
    if _scalar(t_b) < _scalar(t_a):
        ts = ts[:, ::-1]
    return ts, string.evaluate(ts, branches=state, slopes=True)


def _polish_level(string, state, t, level, lo, hi):
    """Newton steps on V(t) = level from ``t`` inside [lo, hi] (exact evaluations, usually one
    or two). Returns (t, last evaluated t, its evaluation): the last step is below 3e-8 V
    where it converged, so first-order extrapolation from the last evaluation to t is exact to
    about 1e-15 relative."""
    for _ in range(6):
        e = string.evaluate(t, branches=state, slopes=True)
        last = t
        with np.errstate(divide="ignore", invalid="ignore"):
            step = (e["voltage"] - level) / e["dvoltage"]
        new = t - step
        if not np.all(np.isfinite(new)) or not (lo <= _scalar(new) <= hi):
            break
        t = new
        if abs(_scalar(step)) <= 3e-8:
            break
    return t, last, e


def _keep_until(ts, e, count, t_point, e_point):
    """The first ``count`` samples of a piece and then one more evaluated point."""
    out = {k: np.concatenate([e[k][:, :count], e_point[k]], axis=1)
           for k in ("current", "voltage", "dcurrent", "dvoltage")}
    out["voltages"] = [np.concatenate([np.broadcast_to(a, e["current"].shape)[:, :count],
                                       np.broadcast_to(b, e_point["current"].shape)], axis=1)
                       for a, b in zip(e["voltages"], e_point["voltages"])]
    return np.concatenate([ts[:, :count], t_point], axis=1), out


def _hermite_level(ts, v, dv, i, level):
    """Cubic Hermite crossing of ``level`` between samples i and i + 1 (exact values, slopes)."""
    t0, t1, v0, v1 = ts[i], ts[i + 1], v[i], v[i + 1]
    h = t1 - t0
    m0, m1 = h * dv[i], h * dv[i + 1]
    if not (np.isfinite(m0) and np.isfinite(m1)):
        m0 = m1 = v1 - v0
    x = min(max((level - v0) / (v1 - v0), 0.0), 1.0) if v1 != v0 else 0.5
    for _ in range(5):
        x2, x3 = x * x, x * x * x
        p = ((2 * x3 - 3 * x2 + 1) * v0 + (x3 - 2 * x2 + x) * m0 + (3 * x2 - 2 * x3) * v1
             + (x3 - x2) * m1)
        dp = (6 * x2 - 6 * x) * (v0 - v1) + (3 * x2 - 4 * x + 1) * m0 + (3 * x2 - 2 * x) * m1
        if dp == 0 or not np.isfinite(dp):
            break
        x = min(max(x - (p - level) / dp, 0.0), 1.0)
    return t0 + x * h


def _build_pieces(string, t_forward, t_lowest, v_floor, first=None):
    """The path's pieces (branch state, t_start, t_end) with their exact samples; ``first``,
    when given, holds the first piece's samples (every junction on its tunnel branch)."""
    tunnels = string.tunnels
    extrema = [string.tunnel_extrema[t.name] for t in tunnels]
    peaks = [_scalar(e.peak_A_m2) for e in extrema]
    valleys = [_scalar(e.valley_A_m2) for e in extrema]
    branches = ["tunnel"] * len(tunnels)
    direction = +1
    t_start = t_forward
    pilot = string.subcells[string.single_pilot] if string.single_pilot is not None else None
    if pilot is not None:
        top_current = _scalar(pilot.pilot_current(t_lowest, string.temperature_K)[0])
    else:
        top_current = _scalar(string.evaluate(t_lowest)["current"])
    pieces = []
    for _ in range(MAX_PIECES_PER_JUNCTION * len(tunnels) + 2):
        fold_j, k, new = _next_fold(branches, direction, peaks, valleys)
        ends_path = k is None or (direction > 0 and fold_j >= top_current)
        if ends_path:
            t_end = t_lowest if direction > 0 else t_forward
        else:
            t_end = string.pilot_voltage_at(np.full((1, 1), fold_j))
        state = {t.name: b for t, b in zip(tunnels, branches)}
        if (ends_path and direction > 0 and pieces and "negative" not in branches
                and np.isfinite(pieces[-1][4]["voltage"][0, -1])):
            # towards reverse bias on tunnel and thermal branches dV/dt >= 1 (solve.py), so
            # the floor is met above t_start - (V(t_start) - v_floor): sample only that far
            v_start = pieces[-1][4]["voltage"][0, -1]
            t_end = np.maximum(t_end, t_start - 1.05 * (v_start - v_floor) - 0.01)
        if first is not None and not pieces and not ends_path:
            ts, e = first
        else:
            ts, e = _samples(string, state, t_start, t_end, SAMPLES_PER_PIECE)
        if direction > 0:
            # the path ends where the terminal voltage first falls through the floor
            v = e["voltage"][0]
            below = np.flatnonzero(np.isfinite(v) & (v <= v_floor))
            if below.size:
                i = below[0]
                if i == 0:
                    t_cut = t_start
                else:
                    t_cut = np.full((1, 1), _hermite_level(ts[0], v, e["dvoltage"][0], i - 1,
                                                           v_floor))
                    lo, hi = sorted((ts[0, i - 1], ts[0, i]))
                    # the piece ends at the polish's last evaluated point (within 3e-8 V of
                    # the floor): the samples before it, then that point
                    _, t_cut, e_cut = _polish_level(string, state, t_cut, v_floor, lo, hi)
                    ts, e = _keep_until(ts, e, i, t_cut, e_cut)
                if i < SAMPLES_PER_PIECE // 2:
                    # most samples lay beyond the floor: sample the piece again up to it
                    ts, e = _samples(string, state, t_start, t_cut, SAMPLES_PER_PIECE)
                pieces.append((dict(state), t_start, t_cut, ts, e))
                break
        pieces.append((dict(state), t_start, t_end, ts, e))
        if ends_path:
            break
        branches[k] = new
        direction = -direction
        t_start = t_end
    return pieces


def _regime(voltage, current):
    """Shape of the terminal curve along the path (ordered forward to reverse)."""
    finite = np.isfinite(voltage) & np.isfinite(current)
    v = voltage[finite]
    scale = max(np.ptp(v), 1e-3)
    rises = np.diff(v) > 1e-9 * scale      # V should fall from forward to reverse bias
    if np.any(rises):
        return "past peak, hysteresis"
    return "past peak, no hysteresis"


def _mpp_by_brent(string, state, t_a, t_b, g_a, g_b):
    """The root of dP/dt between two samples (Brent's method, scipy brentq), evaluated."""
    def power_slope(t):
        ev = string.evaluate(t, branches=state, slopes=True)
        value = ev["dcurrent"] * ev["voltage"] + ev["current"] * ev["dvoltage"]
        return np.where(np.isfinite(value), value, 0.0)

    # P is flat at its maximum: 1e-11 V in t moves P by about 1e-22 relative
    root = bracketed_root(power_slope, np.full((1, 1), t_a), np.full((1, 1), t_b),
                          end_values=(np.full((1, 1), g_a), np.full((1, 1), g_b)), xtol=1e-11,
                          one_by_one=True)
    if not np.all(np.isfinite(root)):
        return np.full((1, 1), t_a), None
    return root, string.evaluate(root, branches=state, slopes=True)


def _mpp_on_piece(string, state, ts, e, i):
    """The MPP near sample i of a piece: where the exact dP/dt of the samples changes sign, the
    maximum of the cubic Hermite interpolant of P, then secant steps on dP/dt (exact
    evaluations) until the step is below 1e-10 V."""
    t, j, v = ts[0], e["current"][0], e["voltage"][0]
    g = e["dcurrent"][0] * v + j * e["dvoltage"][0]
    n = t.size
    candidates = [m for m in (i, i - 1) if 0 <= m < n - 1 and np.isfinite(g[m]) and
                  np.isfinite(g[m + 1]) and g[m] * g[m + 1] <= 0]
    if not candidates:
        return np.full((1, 1), t[i]), None
    m = candidates[0]
    lo, hi = sorted((t[m], t[m + 1]))
    small, large = sorted((abs(g[m]), abs(g[m + 1])))
    if large > 100.0 * small:
        # one end's slope dwarfs the other's (the cell ends at a fold, where dV/dt is
        # unbounded): no interpolant fits; Brent's method on dP/dt inside the cell instead
        return _mpp_by_brent(string, state, t[m], t[m + 1], g[m], g[m + 1])
    h = t[m + 1] - t[m]
    p0, p1, m0, m1 = j[m] * v[m], j[m + 1] * v[m + 1], h * g[m], h * g[m + 1]
    qa = 6.0 * (p0 - p1) + 3.0 * (m0 + m1)
    qb = -6.0 * (p0 - p1) - 4.0 * m0 - 2.0 * m1
    x = g[m] / (g[m] - g[m + 1]) if g[m] != g[m + 1] else 0.5
    for _ in range(3):
        dq = 2.0 * qa * x + qb
        if dq == 0:
            break
        x = min(max(x - (qa * x * x + qb * x + m0) / dq, 0.0), 1.0)
    t_mpp = t[m] + x * h
    curvature = (2.0 * qa * x + qb) / (h * h)
    previous = None
    for _ in range(6):
        ev = string.evaluate(np.full((1, 1), t_mpp), branches=state, slopes=True)
        t_evaluated = t_mpp
        gm = _scalar(ev["dcurrent"] * ev["voltage"] + ev["current"] * ev["dvoltage"])
        if previous is not None and t_mpp != previous[0] and gm != previous[1]:
            curvature = (gm - previous[1]) / (t_mpp - previous[0])
        previous = (t_mpp, gm)
        if not (np.isfinite(gm) and np.isfinite(curvature)) or curvature == 0:
            break
        new = t_mpp - gm / curvature
        if not lo < new < hi or abs(new - t_mpp) <= 1e-10:
            # converged (the next step would move t by under 1e-10 V: P is flat to 1e-20
            # relative there): the evaluated point is the MPP
            break
        t_mpp = new
    return np.full((1, 1), t_evaluated), ev


def solve_path(string, *, curve_points, reverse_fraction, start=None):
    """Trace one design (B = 1) through its junctions' branches; Voc, Jsc, MPP and the curve.

    ``start`` (optional): what the vectorized pass already knows of this design, a dict with
    ``voc`` (1, 1), ``voltages_voc`` (list of (1, 1)) and ``samples`` (t, evaluation) of the
    tunnel branches from the first fold up to the forward end, t ascending: the path's first
    piece is not sampled again.
    """
    jph = string.pilot_photocurrent
    t_forward = string.pilot_voltage_at(FORWARD_CURRENT_FRACTION * jph)
    t_lowest = string.lowest_pilot_voltage()
    t_voc, at_voc, first = _open_circuit(string, start)
    voc = at_voc["voltage"]
    pieces = _build_pieces(string, t_forward, t_lowest,
                           _reverse_floor(string, voc, reverse_fraction), first)
    index, t_mpp, at_mpp = _mpp_on_path(string, pieces)
    # the certificate over every piece (certificate.py): each piece's cells, refined until
    # every bound is within the tolerance of the MPP; the MPP moves to any higher point found
    # (on whichever piece), polished there
    segments, tail = _segments(string, pieces, t_lowest)
    segments[index].merge(Segment.from_evaluation(pieces[index][0], t_mpp, at_mpp,
                                                  [t.name for t in string.tunnels]))
    proof, t_mpp, at_mpp, where, _ = certify(
        string, segments, np.array([index]), t_mpp, at_mpp, photocurrent=jph,
        polish=polisher(string, segments),
        open_circuit=(t_voc, open_circuit_voltages(string, at_voc)))
    branches_mpp = dict(segments[int(where[0])].state)
    jsc = _short_circuit_on_path(string, pieces)
    if tail is not None and not np.all(np.isfinite(jsc)):
        jsc = tail_short_circuit(string, tail, np.array([True]))
    regime = _regime(np.concatenate([e["voltage"][0] for *_, e in pieces]),
                     np.concatenate([e["current"][0] for *_, e in pieces]))
    curve = _path_curve(string, pieces, curve_points) if curve_points else None
    return dict(voc=_scalar(voc), jsc=_scalar(jsc), v_mpp=_scalar(at_mpp["voltage"]),
                j_mpp=_scalar(at_mpp["current"]),
                p_mpp=_scalar(at_mpp["current"] * at_mpp["voltage"]),
                voltages_mpp=[_scalar(v) for v in at_mpp["voltages"]],
                voltages_voc=[_scalar(v) for v in at_voc["voltages"]],
                branches_mpp=branches_mpp, regime=regime, curve=curve, certificate=proof)


def _open_circuit(string, start):
    """(t_voc, the evaluation at open circuit, the first piece's samples in path order or
    None), from ``start`` when the vectorized pass gave it (solve_path)."""
    if start is None:
        t_voc = string.open_circuit_pilot_voltage()
        return t_voc, string.evaluate(t_voc), None
    ts, e = start["samples"]
    # in path order: from the forward end towards the first fold
    first = (ts[:, ::-1], {k: (x[:, ::-1] if k != "voltages" else [v[:, ::-1] for v in x])
                           for k, x in e.items()})
    return start["t_voc"], dict(voltage=start["voc"], voltages=start["voltages_voc"]), first


def _reverse_floor(string, voc, reverse_fraction):
    """The terminal voltage where the path ends in reverse bias [V]: the usual floor, with room
    below it for the junctions' thermal-branch drops."""
    thermal_drop = sum(
        _scalar(np.nan_to_num(t.junction_voltage(string.pilot_photocurrent, string.temperature_K,
                                                  "thermal", string.tunnel_extrema[t.name]),
                              nan=1.0))
        for t in string.tunnels)
    return -max(reverse_fraction * _scalar(voc), 0.3) - thermal_drop


def _mpp_on_path(string, pieces):
    """The global maximum of P over every piece's samples, refined inside its piece: (piece
    index, t_mpp (1, 1), its evaluation)."""
    best = (-np.inf, None, None)
    for index, (_, _, _, _, e) in enumerate(pieces):
        p = np.where(np.isfinite(e["voltage"]), e["current"] * e["voltage"], -np.inf)[0]
        i = int(np.argmax(p))
        if p[i] > best[0]:
            best = (p[i], index, i)
    _, index, i = best
    state, _, _, ts, e = pieces[index]
    t_mpp, at_mpp = _mpp_on_piece(string, state, ts, e, i)
    if at_mpp is None:
        at_mpp = string.evaluate(t_mpp, branches=state)
    if not _scalar(at_mpp["current"] * at_mpp["voltage"]) > best[0]:
        # the polish did not improve on the best sample: Brent's method on dP/dt in each cell
        # next to it where the slope changes sign; as a last resort the best sample itself
        t_all, j_all, v_all = ts[0], e["current"][0], e["voltage"][0]
        g_all = e["dcurrent"][0] * v_all + j_all * e["dvoltage"][0]
        for m in (i, i - 1):
            if 0 <= m < t_all.size - 1 and g_all[m] * g_all[m + 1] < 0:
                t_try, e_try = _mpp_by_brent(string, state, t_all[m], t_all[m + 1], g_all[m],
                                             g_all[m + 1])
                if e_try is not None and _scalar(e_try["current"] * e_try["voltage"]) > \
                        _scalar(at_mpp["current"] * at_mpp["voltage"]):
                    t_mpp, at_mpp = t_try, e_try
        if not _scalar(at_mpp["current"] * at_mpp["voltage"]) >= best[0]:
            t_mpp = ts[:, i:i + 1]
            at_mpp = string.evaluate(t_mpp, branches=state)
    return index, t_mpp, at_mpp


def _segments(string, pieces, t_lowest):
    """The certificate's segments (certificate.Segment), one per piece, and the tail (or
    None): where the path ends at the pilot's lowest voltage (just above its breakdown) with V
    still positive, it goes on at currents that t no longer resolves, sampled by current as
    one more segment."""
    tunnels = [t.name for t in string.tunnels]
    segments = [Segment.from_evaluation(state_k, ts_k, e_k, tunnels)
                for state_k, _, _, ts_k, e_k in pieces]
    tail = None
    last_state, _, _, ts_last, e_last = pieces[-1]
    v_end, j_end = _scalar(e_last["voltage"][:, -1:]), _scalar(e_last["current"][:, -1:])
    if _scalar(ts_last[:, -1:]) <= _scalar(t_lowest) and v_end > 0 and np.isfinite(j_end):
        tail = tail_samples(string, e_last["current"][:, -1:], np.array([True]),
                             branches=last_state)
        segments.append(Segment.from_evaluation(last_state, tail[0], tail[1], tunnels,
                                                by_current=True))
    return segments, tail


def _short_circuit_on_path(string, pieces):
    """Jsc (1, 1): the first zero of V met along the path after open circuit (a cubic Hermite
    estimate in the samples, then Newton steps); NaN where the pieces hold none."""
    passed_open_circuit = False
    for state_k, _, _, ts_k, e in pieces:
        v, j = e["voltage"][0], e["current"][0]
        start = 0
        if not passed_open_circuit:
            crossing = np.flatnonzero((j[:-1] <= 0) & (0 <= j[1:]) | (j[:-1] >= 0) & (0 >= j[1:]))
            if crossing.size == 0:
                continue
            passed_open_circuit, start = True, int(crossing[0])
        finite = np.isfinite(v[:-1]) & np.isfinite(v[1:])
        zero = np.flatnonzero(finite & (v[:-1] >= 0) & (0 >= v[1:]) & (v[:-1] != v[1:]))
        zero = zero[zero >= start]
        if zero.size:
            m = int(zero[0])
            t0 = np.full((1, 1), _hermite_level(ts_k[0], v, e["dvoltage"][0], m, 0.0))
            lo, hi = sorted((ts_k[0, m], ts_k[0, m + 1]))
            t0, last, e0 = _polish_level(string, state_k, t0, 0.0, lo, hi)
            return e0["current"] + e0["dcurrent"] * (t0 - last)
    return np.full((1, 1), np.nan)


def _path_curve(string, pieces, curve_points):
    """The curve along the path, from reverse to forward bias: the points shared among the
    pieces by their arc length (spacing.py, with the spans of the whole path) and spaced
    evenly in arc length along each piece's samples, evaluated exactly."""
    spans = curve_spans(*(np.concatenate(x, axis=1) for x in zip(
        *((e["voltage"], e["current"], ts) for *_, ts, e in pieces))))
    arcs = [arc_length(e["voltage"], e["current"], ts, spans) for *_, ts, e in pieces]
    lengths = np.array([a[0, -1] + 1e-12 for a in arcs])
    counts = np.maximum(2, np.floor(curve_points * lengths / lengths.sum()).astype(int))
    while counts.sum() > curve_points:
        counts[np.argmax(counts)] -= 1
    counts[np.argmax(lengths)] += curve_points - counts.sum()
    parts = []
    for (state, t_a, t_b, ts, _), arc, n in zip(pieces, arcs, counts):
        placed = evenly_spaced(arc, ts, n)[0]
        placed[0], placed[-1] = _scalar(t_a), _scalar(t_b)
        parts.append(string.evaluate(placed[None, :], branches=state))
    curve = {"current_A_m2": np.concatenate([e["current"][0] for e in parts])[::-1],
             "voltage_V": np.concatenate([e["voltage"][0] for e in parts])[::-1]}
    for k, element in enumerate(string.elements):
        curve[element.name] = np.concatenate(
            [np.broadcast_to(e["voltages"][k], e["current"].shape)[0] for e in parts])[::-1]
    return curve


def voltage_sweep(voltage_V, current, *, direction, points=400):
    """What a terminal-voltage sweep measures along a traced curve, with its hysteresis.

    Parameters
    ----------
    voltage_V, current : 1-D arrays
        The traced curve, ordered from reverse to forward bias (as in ``StringSolution.curve``).
    direction : {"up", "down"}
        Sweep from low to high voltage, or from high to low.
    points : int

    Returns
    -------
    voltage, current : arrays of the sweep (NaN where the curve has no point).
    segment, weight : arrays
        The sweep point lies at ``weight`` of the way along segment ``segment`` of the finite points
        of the traced curve (for interpolating element voltages); -1 where there is none.

    Notes
    -----
    Under voltage control the operating point follows the curve continuously while the curve's
    voltage keeps moving in the sweep's direction; where the curve folds back in voltage, no nearby
    solution is left and the point jumps to the next part of the curve at the same voltage, further
    along in the sweep's direction. Up and down sweeps therefore take different branches wherever
    the terminal curve is S-shaped (the hysteresis); where it is single-valued in V they coincide.
    """
    v = np.asarray(voltage_V, dtype=float)
    j = np.asarray(current, dtype=float)
    keep = np.isfinite(v) & np.isfinite(j)
    v, j = v[keep], j[keep]
    targets = np.linspace(v.min(), v.max(), points)
    if direction == "down":
        targets = targets[::-1]
    elif direction != "up":
        raise ValueError("direction is 'up' or 'down'")
    out = np.full(points, np.nan)
    segments = np.full(points, -1)
    weights = np.zeros(points)
    position = 0 if direction == "up" else len(v) - 2
    for n, target in enumerate(targets):
        step = 1 if direction == "up" else -1
        i = position
        found = False
        while 0 <= i <= len(v) - 2:
            a, b = v[i], v[i + 1]
            if b > a and a <= target <= b:
                found = True
                break
            i += step
        if not found:
            continue
        position = i
        w = (target - v[i]) / (v[i + 1] - v[i])
        out[n] = j[i] + w * (j[i + 1] - j[i])
        segments[n], weights[n] = i, w
    return targets, out, segments, weights
