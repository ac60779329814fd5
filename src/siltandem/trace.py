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
over all pieces, refined by a root of dP/dt inside its piece. What a terminal-voltage sweep shows
(with its hysteresis) follows from the path in :func:`voltage_sweep`.

One design at a time (B = 1): this is the rare case, kept apart so that the common one stays
vectorized.
"""
import numpy as np

from .numerics import bracketed_root

SAMPLES_PER_PIECE = 96
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


def _build_pieces(string, t_forward, t_lowest, v_floor):
    tunnels = string.tunnels
    extrema = [string.tunnel_extrema[t.name] for t in tunnels]
    peaks = [_scalar(e.peak_A_m2) for e in extrema]
    valleys = [_scalar(e.valley_A_m2) for e in extrema]
    branches = ["tunnel"] * len(tunnels)
    direction = +1
    t_start = t_forward
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
        if direction > 0:
            # the path ends where the terminal voltage first falls through the floor
            s = np.linspace(0.0, 1.0, SAMPLES_PER_PIECE)[None, :]
            ts = t_start + (t_end - t_start) * s
            v = string.evaluate(ts, branches=state)["voltage"][0]
            below = np.flatnonzero(np.isfinite(v) & (v <= v_floor))
            if below.size:
                i = below[0]
                if i == 0:
                    t_cut = t_start
                else:
                    def shifted(t):
                        return string.evaluate(t, branches=state)["voltage"] - v_floor
                    t_cut = bracketed_root(shifted, ts[:, i - 1:i], ts[:, i:i + 1])
                    if not np.all(np.isfinite(t_cut)):
                        t_cut = ts[:, i:i + 1]
                pieces.append((dict(state), t_start, t_cut))
                break
        pieces.append((dict(state), t_start, t_end))
        if ends_path:
            break
        branches[k] = new
        direction = -direction
        t_start = t_end
    return pieces


def _sample(string, pieces, counts):
    """Exact points along the pieces: ``counts[i]`` points uniform in t on piece i, in path order."""
    from .solve import spread_parameter

    parts = []
    for (state, t_a, t_b), n in zip(pieces, counts):
        ts = spread_parameter(string, t_a, t_b, n, branches=state)
        e = string.evaluate(ts, branches=state, slopes=True)
        parts.append((state, ts, e))
    return parts


def _regime(voltage, current):
    """Shape of the terminal curve along the path (ordered forward to reverse)."""
    finite = np.isfinite(voltage) & np.isfinite(current)
    v = voltage[finite]
    scale = max(np.ptp(v), 1e-3)
    rises = np.diff(v) > 1e-9 * scale      # V should fall from forward to reverse bias
    if np.any(rises):
        return "past peak, hysteresis"
    return "past peak, no hysteresis"


def solve_path(string, *, curve_points, reverse_fraction):
    """Trace one design (B = 1) through its junctions' branches; Voc, Jsc, MPP and the curve."""
    jph = string.pilot_photocurrent
    t_voc = string.pilot_voltage_at(np.zeros_like(jph))
    t_forward = string.pilot_voltage_at(-0.3 * jph)
    t_lowest = string.lowest_pilot_voltage()
    at_voc = string.evaluate(t_voc)
    voc = at_voc["voltage"]
    # room below the usual floor for the junctions' thermal-branch drops
    thermal_drop = sum(
        _scalar(np.nan_to_num(t.junction_voltage(jph, string.temperature_K, "thermal",
                                                  string.tunnel_extrema[t.name]), nan=1.0))
        for t in string.tunnels)
    v_floor = -max(reverse_fraction * _scalar(voc), 0.3) - thermal_drop
    pieces = _build_pieces(string, t_forward, t_lowest, v_floor)
    dense = _sample(string, pieces, [SAMPLES_PER_PIECE] * len(pieces))

    # MPP: global maximum of P over every piece, refined inside its piece
    best = (-np.inf, None, None)
    for index, (state, ts, e) in enumerate(dense):
        p = np.where(np.isfinite(e["voltage"]), e["current"] * e["voltage"], -np.inf)[0]
        i = int(np.argmax(p))
        if p[i] > best[0]:
            best = (p[i], index, i)
    _, index, i = best
    state, ts, _ = dense[index]
    lo, hi = ts[:, max(i - 1, 0):max(i - 1, 0) + 1], ts[:, min(i + 1, ts.shape[1] - 1):][:, :1]

    def power_slope(t):
        e = string.evaluate(t, branches=state, slopes=True)
        value = e["dcurrent"] * e["voltage"] + e["current"] * e["dvoltage"]
        return np.where(np.isfinite(value), value, 0.0)

    t_mpp = bracketed_root(power_slope, lo, hi)
    if not np.all(np.isfinite(t_mpp)):
        t_mpp = ts[:, i:i + 1]
    at_mpp = string.evaluate(t_mpp, branches=state)

    # Jsc: the first zero of V met along the path after open circuit
    jsc = np.full((1, 1), np.nan)
    passed_open_circuit = False
    for state_k, ts_k, e in dense:
        v, j = e["voltage"][0], e["current"][0]
        for m in range(len(v) - 1):
            if not passed_open_circuit:
                if j[m] <= 0 <= j[m + 1] or j[m] >= 0 >= j[m + 1]:
                    passed_open_circuit = True
                else:
                    continue
            if np.isfinite(v[m]) and np.isfinite(v[m + 1]) and v[m] >= 0 >= v[m + 1] and v[m] != v[m + 1]:
                def terminal(t, state_k=state_k):
                    return string.evaluate(t, branches=state_k)["voltage"]
                t0 = bracketed_root(terminal, ts_k[:, m + 1:m + 2], ts_k[:, m:m + 1])
                jsc = string.evaluate(t0, branches=state_k)["current"]
                break
        if np.isfinite(jsc[0, 0]):
            break

    forward_to_reverse_v = np.concatenate([e["voltage"][0] for _, _, e in dense])
    forward_to_reverse_j = np.concatenate([e["current"][0] for _, _, e in dense])
    regime = _regime(forward_to_reverse_v, forward_to_reverse_j)

    curve = None
    if curve_points:
        # share the points among the pieces by their arc length in (V/Voc, J/Jph)
        lengths = []
        for _, _, e in dense:
            dv = np.diff(np.nan_to_num(e["voltage"][0])) / max(abs(_scalar(voc)), 1e-3)
            dj = np.diff(e["current"][0]) / _scalar(jph)
            lengths.append(np.sum(np.hypot(dv, dj)) + 1e-12)
        lengths = np.array(lengths)
        counts = np.maximum(2, np.floor(curve_points * lengths / lengths.sum()).astype(int))
        while counts.sum() > curve_points:
            counts[np.argmax(counts)] -= 1
        counts[np.argmax(lengths)] += curve_points - counts.sum()
        exact = _sample(string, pieces, counts)
        curve = {"current_A_m2": np.concatenate([e["current"][0] for _, _, e in exact])[::-1],
                 "voltage_V": np.concatenate([e["voltage"][0] for _, _, e in exact])[::-1]}
        for k, element in enumerate(string.elements):
            curve[element.name] = np.concatenate(
                [np.broadcast_to(e["voltages"][k], e["current"].shape)[0] for _, _, e in exact])[::-1]
    return dict(voc=_scalar(voc), jsc=_scalar(jsc), v_mpp=_scalar(at_mpp["voltage"]),
                j_mpp=_scalar(at_mpp["current"]),
                p_mpp=_scalar(at_mpp["current"] * at_mpp["voltage"]),
                voltages_mpp=[_scalar(v) for v in at_mpp["voltages"]],
                voltages_voc=[_scalar(v) for v in at_voc["voltages"]],
                branches_mpp=dict(state), regime=regime, curve=curve)


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
