"""Operating points from a dense sample of the whole curve, for strings whose power may have several
maxima (breakdown, low shunts): Voc, Jsc and the MPP refined inside the sample and the MPP
certified.
"""
import functools

import numpy as np

from siltandem.laws import compiled as kernels
from siltandem.numerics.tables import polish_root
from siltandem.solve.certificate import certify_mpp
from siltandem.solve.kernels import hermite_crossing, power_maximum
from siltandem.solve.spacing import (arc_length, evenly_spaced, interpolate_rows,
                                     parameter_samples)
from siltandem.solve.string import FORWARD_CURRENT_FRACTION, open_circuit_voltages
from siltandem.solve.tail import finite_or, tail_samples, tail_short_circuit, with_tail_curve


#: exact samples of the dense pass of a traced curve: uniform in t, and uniform in current
DENSE_T_SAMPLES = 384


DENSE_J_SAMPLES = 128


#: the terminal voltage at a reported Jsc is within this of zero [V]
SHORT_CIRCUIT_TOLERANCE_V = 1e-6


def solve_dense(string, curve_points, reverse_fraction, *, t_voc, t_zero, t_forward, t_lowest,
                 t_low, limited):
    """The traced curve and its summary from one dense exact pass (every tunnel junction on its
    tunnel branch).

    1. Open circuit from the subcells alone (at zero current nothing else has a voltage).
    2. Exact samples (values and slopes) from below the reverse end of the curve to its forward
       end, with open circuit itself. Along the tunnel branches dV/dt >= 1 (the pilot's own voltage rises with t, and
       every other element's voltage falls with the current, which falls with t), so
       V(t_voc) - V(t) >= t_voc - t: the curve's reverse end (V = v_floor) lies above
       t_voc - (Voc - v_floor), where the samples start.
    3. Jsc and the reverse end where the cubic Hermite interpolant of the samples crosses 0 and
       v_floor; the MPP where the exact dP/dt of the samples changes sign. Then one exact
       evaluation there: a Newton step for the two crossings, a secant step on dP/dt for the
       MPP (errors of the order of 1e-12 V after the step).
    4. The curve's points spaced evenly in arc length along the samples, evaluated exactly
       together with the corrected Jsc and MPP points.
    """
    jph = string.pilot_photocurrent
    size = jph.shape[0]
    # open circuit before any evaluation: at zero current every element but the subcells has
    # zero voltage (a resistor, a tunnel junction, an isotype interface), and each subcell its
    # own open-circuit voltage; this fixes where the samples start
    voc_guess = functools.reduce(np.add, [
        t_zero if k == string.single_pilot else
        s.junction_voltage_at(np.zeros_like(jph), string.temperature_K)
        for k, s in enumerate(string.subcells)])
    floor_guess = -np.maximum(reverse_fraction * voc_guess, 0.3)
    # (with a margin: where dV/dt = 1 exactly the bound is the reverse end itself)
    t_start = np.maximum(t_low, finite_or(t_voc - 1.05 * (voc_guess - floor_guess) - 0.01,
                                           t_low))
    # the current at the samples' reverse end, from the pilot's forward law alone
    j_top = finite_or(string.pilot_current_at(t_start), jph)
    t = parameter_samples(t_start, t_forward, FORWARD_CURRENT_FRACTION * jph, j_top,
                          (DENSE_T_SAMPLES, DENSE_J_SAMPLES), string.pilot_voltage_at)
    points = t.shape[1]
    dense = string.evaluate(np.concatenate([t, t_voc], axis=1), slopes=True)
    voc = dense["voltage"][:, points:]
    voltages_voc = [np.array(np.broadcast_to(x, dense["voltage"].shape)[:, points:], dtype=float)
                    for x in dense["voltages"]]
    dense = {k: (x[:, :points] if k != "voltages" else
                 [np.broadcast_to(y, x_shape)[:, :points] for y in x])
             for k, x in dense.items() for x_shape in [dense["voltage"].shape]}
    v = finite_or(dense["voltage"], -1e3)
    j = finite_or(dense["current"], np.nan)
    dv = finite_or(dense["dvoltage"], np.nan)
    dj = finite_or(dense["dcurrent"], np.nan)
    v_floor = -np.maximum(reverse_fraction * voc, 0.3)

    # the trace's lower end: where the samples start there, they give its voltage; elsewhere
    # it lies below the floor (dV/dt >= 1), so no peak and no cap is reached
    at_low = t_start <= t_low
    v_low = np.where(at_low, v[:, :1], -np.inf)
    reaches_peak = np.zeros(size, dtype=bool)
    if string.tunnels:
        # (where an isotype interface's flat-band current ends the curve first, no junction
        # reaches its peak)
        capped_first = np.zeros(size, dtype=bool) if limited is None else limited[:, 0]
        reaches_peak = (v_low > v_floor)[:, 0] & (t_low > t_lowest)[:, 0] & ~capped_first
    capped = np.zeros(size, dtype=bool)
    if limited is not None:
        # the curve ends at the interface's flat-band current above zero volts: no Jsc to give
        capped = (limited & (v_low > 0))[:, 0]
    # where V is still positive at the pilot's lowest voltage (just above its breakdown), the
    # curve goes on at currents that t no longer resolves: its tail, sampled by current
    tail_rows = ((at_low & (t_low <= t_lowest) & (v_low > 0))[:, 0]
                 & np.isfinite(dense["current"][:, 0]) & ~capped & ~reaches_peak)
    tail = tail_samples(string, dense["current"][:, :1], tail_rows) if tail_rows.any() \
        else None
    if np.all(reaches_peak):
        # every design is traced again through its junctions' branches (trace.py)
        nan = np.full((size, 1), np.nan)
        return dict(voc=voc.copy(), jsc=nan.copy(), v_mpp=nan.copy(), j_mpp=nan.copy(),
                    p_mpp=nan.copy(), voltages_mpp=[nan.copy() for _ in string.elements],
                    voltages_voc=voltages_voc, reaches_peak=reaches_peak, capped=capped,
                    curve={name: np.full((size, curve_points), np.nan) for name in
                           ["current_A_m2", "voltage_V"] + [e.name for e in string.elements]},
                    samples=(t, dense), t_voc=t_voc)

    # a crossing may end on a sample where a subcell without a shunt is past its current limit
    # (its voltage -> -inf: the crossing lies just before the limit), never on one where a law
    # has no value at all (NaN)
    finite = ((np.isfinite(dense["voltage"]) & np.isfinite(dense["dvoltage"]))
              | (dense["voltage"] == -np.inf))
    # both crossings at once: the rows twice, once per level (compiled, kernels.py)
    twice = [kernels.as_input(np.concatenate([x, x], axis=0), x.dtype)
             for x in (t, v, dv, finite)]
    crossing, cell_lo, cell_hi = (x[:, None] for x in hermite_crossing(
        twice[0], twice[1], twice[2], np.concatenate([np.zeros_like(voc), v_floor], axis=0)[:, 0],
        twice[3]))
    t_sc, t_floor = crossing[:size], crossing[size:]
    sc_lo, floor_lo, sc_hi, floor_hi = cell_lo[:size], cell_lo[size:], cell_hi[:size], cell_hi[size:]
    # the best sample of P and, in the cell next to it where dP/dt changes sign, the maximum
    # of the cubic Hermite interpolant of P (exact P and dP/dt at both ends), with its d2P/dt2
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        t_best, t_other, turns, t_mpp, curvature = (x[:, None] for x in power_maximum(
            kernels.as_input(t), kernels.as_input(j), kernels.as_input(v),
            kernels.as_input(dj), kernels.as_input(dv)))

    # polish the three estimates together inside their sample cells (exact brackets): Newton
    # on V - level for the two crossings, and on -dP/dt for the MPP with d2P/dt2 from the
    # interpolant, then from the secant of the last two evaluations (inverse.polish_root: up
    # to four plain steps, the secant usually needs three; a safeguarded search otherwise)
    levels = np.concatenate([np.zeros_like(voc), v_floor], axis=1)
    lower = np.concatenate([sc_lo, floor_lo, np.minimum(t_best, t_other)], axis=1)
    upper = np.concatenate([sc_hi, floor_hi, np.maximum(t_best, t_other)], axis=1)
    guess = np.concatenate([t_sc, t_floor, t_mpp], axis=1)
    active = np.isfinite(guess) & np.concatenate([np.ones((size, 2), dtype=bool), turns], axis=1)
    guess = np.where(active, guess, 0.5 * (lower + upper))
    memory = {}

    def residual(x):
        e = string.evaluate(x, slopes=True)
        g = e["dcurrent"][:, 2:] * e["voltage"][:, 2:] + e["current"][:, 2:] * e["dvoltage"][:, 2:]
        bend = curvature
        if memory:
            with np.errstate(divide="ignore", invalid="ignore"):
                secant = (g - memory["g"]) / (x[:, 2:] - memory["t"])
            bend = np.where(np.isfinite(secant) & (secant != 0), secant, memory["bend"])
        memory.update(g=g, t=x[:, 2:], bend=bend)
        # beyond a subcell's current limit (V = -inf) the voltage counts as far below any level
        # (the search then closes in on the limit by bisection), as in solve_on_path
        v = np.where(e["voltage"][:, :2] == -np.inf, -1e3, e["voltage"][:, :2])
        dv = np.where(np.isfinite(e["dvoltage"][:, :2]), e["dvoltage"][:, :2], 1.0)
        f = np.concatenate([v - levels, -g], axis=1)
        df = np.concatenate([dv, -bend], axis=1)
        finite = np.isfinite(f) & np.isfinite(df)
        return np.where(finite, f, np.nan), df

    with np.errstate(invalid="ignore"):
        polished, _ = polish_root(residual, guess, lower, upper, increasing=True, active=active,
                                  xtol=1e-13, rtol=4e-16, plain_steps=4)
    polished = np.where(active, polished, np.nan)
    t_sc, t_floor = polished[:, :1], polished[:, 1:2]
    t_mpp = np.where(turns, polished[:, 2:], t_best)
    t_sc = np.where(capped[:, None], t_low, t_sc)
    t_floor = np.where(np.isfinite(t_floor), t_floor, np.where(np.isfinite(t_sc), t_sc, t_low))

    # the curve: points evenly spaced in arc length along the samples (spacing.py), from the
    # reverse end to the forward end; with a tail, its first eighth of the points lie on the
    # tail (by current)
    in_tail = np.where(tail_rows, max(curve_points // 8, 2), 0) if tail is not None else \
        np.zeros(size, dtype=int)
    arc = arc_length(dense["voltage"], dense["current"], t)
    curve_t = evenly_spaced(arc, t, curve_points, start=interpolate_rows(t_floor, t, arc),
                            skip=in_tail)
    curve_t = np.where(np.arange(curve_points)[None, :] <= in_tail[:, None], t_floor, curve_t)
    curve_t[:, -1:] = t_forward
    final = string.evaluate(np.concatenate([curve_t, t_sc, t_mpp], axis=1), slopes=True)
    if tail is not None:
        final = with_tail_curve(string, final, tail, in_tail, v_floor)
    n = curve_points
    current = final["current"]
    voltage = final["voltage"]
    # the certificate: the samples' cells and the MPP, refined until every cell's bound is
    # within the tolerance of the MPP (certificate.py); the MPP moves where a higher point is
    # found. The samples hold every point of positive power: below them V < v_floor < 0
    # (dV/dt >= 1), beyond t_voc the current is negative and V >= Voc.
    at_mpp = {key: (final[key][:, n + 1:] if key != "voltages" else
                    [np.broadcast_to(x, current.shape)[:, n + 1:] for x in final[key]])
              for key in ("current", "voltage", "voltages", "dcurrent", "dvoltage")}
    proof, t_mpp, at_mpp = certify_mpp(string, t, dense, t_mpp, at_mpp, t_voc,
                                      open_circuit_voltages(string, {"voltages": voltages_voc}),
                                      turns[:, 0].astype(bool),
                                      ~reaches_peak & np.isfinite(t_mpp[:, 0]), tail)
    v_sc, j_sc = voltage[:, n:n + 1], current[:, n:n + 1]
    reached = np.abs(v_sc) <= SHORT_CIRCUIT_TOLERANCE_V
    change = np.zeros_like(j_sc)
    if not np.all(reached | ~np.isfinite(t_sc)):
        # where V is so steep in t that the polish stops short of V = 0, the current is still
        # fixed if it barely changes over the remaining Newton distance V / (dV/dt): take it
        # there (first order). Where it is not (V jumps across zero between neighbouring floats
        # of t while the current jumps too: an element blocks), there is no short circuit.
        # Where the polish ends beyond a subcell's current limit (V = -inf: a subcell without a
        # shunt cannot carry more), V falls from positive to -inf within a step of t: Jsc is
        # the limit to rounding, when V is still >= 0 a rounding step further forward and the
        # current moves by under 1e-9 over that step.
        at = np.where(np.isfinite(t_sc), t_sc, t_voc)
        step = 1e-12 * np.maximum(np.abs(at), 1.0)
        near = string.evaluate(np.concatenate([at, at + step], axis=1), slopes=True)
        with np.errstate(divide="ignore", invalid="ignore"):
            change = near["dcurrent"][:, :1] * (-v_sc / near["dvoltage"][:, :1])
        steep = np.isfinite(change) & (np.abs(change) <= 1e-9 * np.abs(j_sc))
        change = np.where(steep & ~reached, change, 0.0)
        limit = ((v_sc == -np.inf) & (near["voltage"][:, 1:] >= 0)
                 & (np.abs(near["current"][:, 1:] - j_sc) <= 1e-9 * np.abs(j_sc)))
        reached = reached | steep | limit
    jsc = np.where(capped[:, None] | ~reached, np.nan, j_sc + change)
    if tail is not None:
        jsc = np.where(tail_rows[:, None], tail_short_circuit(string, tail, tail_rows), jsc)
    j_mpp, v_mpp = at_mpp["current"], at_mpp["voltage"]
    element_voltages = [x if x.shape == current.shape else np.broadcast_to(x, current.shape)
                        for x in final["voltages"]]
    curve = {"current_A_m2": current[:, :n].copy(), "voltage_V": voltage[:, :n].copy()}
    for element, v_i in zip(string.elements, element_voltages):
        curve[element.name] = np.array(v_i[:, :n], dtype=float)
    return dict(voc=voc.copy(), jsc=jsc, v_mpp=v_mpp.copy(), j_mpp=j_mpp.copy(),
                p_mpp=j_mpp * v_mpp, voltages_mpp=[np.array(x, dtype=float)
                                                   for x in at_mpp["voltages"]],
                voltages_voc=voltages_voc, curve=curve, reaches_peak=reaches_peak,
                capped=capped, samples=(t, dense), certificate=proof, t_voc=t_voc)
