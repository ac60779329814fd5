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
from siltandem.solve.tail import (finite_or, lower_end, tail_samples, tail_short_circuit,
                                  with_tail_curve)


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
       end, with open circuit itself. Along the tunnel branches dV/dt >= 1 (the pilot's own
       voltage rises with t, and every other element's voltage falls with the current, which
       falls with t), so V(t_voc) - V(t) >= t_voc - t: the curve's reverse end (V = v_floor)
       lies above t_voc - (Voc - v_floor), where the samples start.
    3. Jsc and the reverse end where the cubic Hermite interpolant of the samples crosses 0 and
       v_floor; the MPP where the exact dP/dt of the samples changes sign. Then all three
       polished together inside their sample cells by exact evaluations (Newton on V - level,
       secant steps on dP/dt for the MPP).
    4. The curve's points spaced evenly in arc length along the samples, evaluated exactly
       together with the polished Jsc and MPP points; the MPP certified over the samples.
    """
    size = string.pilot_photocurrent.shape[0]
    t_start = _samples_start(string, reverse_fraction, t_voc, t_zero, t_low)
    t, dense, voc, voltages_voc = _dense_pass(string, t_start, t_forward, t_voc)
    v_floor = -np.maximum(reverse_fraction * voc, 0.3)
    # the trace's lower end: where the samples start there, they give its voltage; elsewhere
    # it lies below the floor (dV/dt >= 1), so no peak and no cap is reached
    at_low = t_start <= t_low
    v_low = np.where(at_low, finite_or(dense["voltage"][:, :1], -1e3), -np.inf)
    reaches_peak, capped, tail_rows = lower_end(string, v_low, v_floor, t_low, t_lowest,
                                                dense["current"][:, :1], limited)
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

    estimates = _estimates(t, dense, voc, v_floor)
    t_sc, t_floor, t_mpp, turns = _polish(string, estimates, voc, v_floor)
    t_sc = np.where(capped[:, None], t_low, t_sc)
    t_floor = np.where(np.isfinite(t_floor), t_floor, np.where(np.isfinite(t_sc), t_sc, t_low))

    # with a tail, its first eighth of the points lie on the tail (by current)
    in_tail = np.where(tail_rows, max(curve_points // 8, 2), 0) if tail is not None else \
        np.zeros(size, dtype=int)
    curve_t = _curve_parameters(t, dense, t_floor, t_forward, curve_points, in_tail)
    final = string.evaluate(np.concatenate([curve_t, t_sc, t_mpp], axis=1), slopes=True)
    if tail is not None:
        final = with_tail_curve(string, final, tail, in_tail, v_floor)
    n = curve_points
    # the certificate: the samples' cells and the MPP, refined until every cell's bound is
    # within the tolerance of the MPP (certificate.py); the MPP moves where a higher point is
    # found. The samples hold every point of positive power: below them V < v_floor < 0
    # (dV/dt >= 1), beyond t_voc the current is negative and V >= Voc.
    at_mpp = {key: (final[key][:, n + 1:] if key != "voltages" else
                    [np.broadcast_to(x, final["current"].shape)[:, n + 1:] for x in final[key]])
              for key in ("current", "voltage", "voltages", "dcurrent", "dvoltage")}
    proof, t_mpp, at_mpp = certify_mpp(string, t, dense, t_mpp, at_mpp, t_voc,
                                      open_circuit_voltages(string, {"voltages": voltages_voc}),
                                      turns[:, 0].astype(bool),
                                      ~reaches_peak & np.isfinite(t_mpp[:, 0]), tail)
    jsc = _short_circuit_current(string, t_sc, t_voc, final["voltage"][:, n:n + 1],
                                 final["current"][:, n:n + 1])
    jsc = np.where(capped[:, None], np.nan, jsc)
    if tail is not None:
        jsc = np.where(tail_rows[:, None], tail_short_circuit(string, tail, tail_rows), jsc)
    j_mpp, v_mpp = at_mpp["current"], at_mpp["voltage"]
    return dict(voc=voc.copy(), jsc=jsc, v_mpp=v_mpp.copy(), j_mpp=j_mpp.copy(),
                p_mpp=j_mpp * v_mpp, voltages_mpp=[np.array(x, dtype=float)
                                                   for x in at_mpp["voltages"]],
                voltages_voc=voltages_voc, curve=_curve(string, final, n),
                reaches_peak=reaches_peak, capped=capped, samples=(t, dense),
                certificate=proof, t_voc=t_voc)


def _samples_start(string, reverse_fraction, t_voc, t_zero, t_low):
    """The pilot voltage (B, 1) where the dense samples start: below the curve's reverse end
    (dV/dt >= 1 on the tunnel branches), never below ``t_low``. Open circuit comes before any
    evaluation: at zero current every element but the subcells has zero voltage (a resistor, a
    tunnel junction, an isotype interface), and each subcell its own open-circuit voltage."""
    jph = string.pilot_photocurrent
    voc_guess = functools.reduce(np.add, [
        t_zero if k == string.single_pilot else
        s.junction_voltage_at(np.zeros_like(jph), string.temperature_K)
        for k, s in enumerate(string.subcells)])
    floor_guess = -np.maximum(reverse_fraction * voc_guess, 0.3)
    # (with a margin: where dV/dt = 1 exactly the bound is the reverse end itself)
    return np.maximum(t_low, finite_or(t_voc - 1.05 * (voc_guess - floor_guess) - 0.01, t_low))


def _dense_pass(string, t_start, t_forward, t_voc):
    """The exact samples (values and slopes) from ``t_start`` to ``t_forward``, uniform in t
    and in current (spacing.parameter_samples), evaluated in one pass with open circuit.
    Returns (t, evaluation at t, Voc, element voltages at open circuit)."""
    jph = string.pilot_photocurrent
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
    return t, dense, voc, voltages_voc


def _estimates(t, dense, voc, v_floor):
    """First estimates from the samples (compiled, kernels.py): Jsc and the reverse end where
    the cubic Hermite interpolant of V crosses 0 and ``v_floor``, with their sample cells; the
    best sample of P and, in the cell next to it where dP/dt changes sign, the maximum of the
    cubic Hermite interpolant of P (exact P and dP/dt at both ends) with its d2P/dt2."""
    size = t.shape[0]
    v = finite_or(dense["voltage"], -1e3)
    j = finite_or(dense["current"], np.nan)
    dv = finite_or(dense["dvoltage"], np.nan)
    dj = finite_or(dense["dcurrent"], np.nan)
    # a crossing may end on a sample where a subcell without a shunt is past its current limit
    # (its voltage -> -inf: the crossing lies just before the limit), never on one where a law
    # has no value at all (NaN)
    finite = ((np.isfinite(dense["voltage"]) & np.isfinite(dense["dvoltage"]))
              | (dense["voltage"] == -np.inf))
    # both crossings at once: the rows twice, once per level
    twice = [kernels.as_input(np.concatenate([x, x], axis=0), x.dtype)
             for x in (t, v, dv, finite)]
    crossing, cell_lo, cell_hi = (x[:, None] for x in hermite_crossing(
        twice[0], twice[1], twice[2], np.concatenate([np.zeros_like(voc), v_floor], axis=0)[:, 0],
        twice[3]))
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        t_best, t_other, turns, t_mpp, curvature = (x[:, None] for x in power_maximum(
            kernels.as_input(t), kernels.as_input(j), kernels.as_input(v),
            kernels.as_input(dj), kernels.as_input(dv)))
    return dict(t_sc=crossing[:size], t_floor=crossing[size:], sc_lo=cell_lo[:size],
                floor_lo=cell_lo[size:], sc_hi=cell_hi[:size], floor_hi=cell_hi[size:],
                t_best=t_best, t_other=t_other, turns=turns, t_mpp=t_mpp, curvature=curvature)


def _polish(string, estimates, voc, v_floor):
    """The three estimates polished together inside their sample cells (exact brackets):
    Newton on V - level for the two crossings, and on -dP/dt for the MPP with d2P/dt2 from the
    interpolant, then from the secant of the last two evaluations (inverse.polish_root: up to
    four plain steps, the secant usually needs three; a safeguarded search otherwise).
    Returns (t_sc, t_floor, t_mpp, turns): NaN where a crossing has no estimate, the best
    sample where dP/dt does not turn."""
    e = estimates
    size = voc.shape[0]
    levels = np.concatenate([np.zeros_like(voc), v_floor], axis=1)
    lower = np.concatenate([e["sc_lo"], e["floor_lo"], np.minimum(e["t_best"], e["t_other"])],
                           axis=1)
    upper = np.concatenate([e["sc_hi"], e["floor_hi"], np.maximum(e["t_best"], e["t_other"])],
                           axis=1)
    guess = np.concatenate([e["t_sc"], e["t_floor"], e["t_mpp"]], axis=1)
    active = np.isfinite(guess) & np.concatenate([np.ones((size, 2), dtype=bool), e["turns"]],
                                                 axis=1)
    guess = np.where(active, guess, 0.5 * (lower + upper))
    memory = {}

    def residual(x):
        ev = string.evaluate(x, slopes=True)
        g = (ev["dcurrent"][:, 2:] * ev["voltage"][:, 2:]
             + ev["current"][:, 2:] * ev["dvoltage"][:, 2:])
        bend = e["curvature"]
        if memory:
            with np.errstate(divide="ignore", invalid="ignore"):
                secant = (g - memory["g"]) / (x[:, 2:] - memory["t"])
            bend = np.where(np.isfinite(secant) & (secant != 0), secant, memory["bend"])
        memory.update(g=g, t=x[:, 2:], bend=bend)
        # beyond a subcell's current limit (V = -inf) the voltage counts as far below any level
        # (the search then closes in on the limit by bisection), as in solve_on_path
        v = np.where(ev["voltage"][:, :2] == -np.inf, -1e3, ev["voltage"][:, :2])
        dv = np.where(np.isfinite(ev["dvoltage"][:, :2]), ev["dvoltage"][:, :2], 1.0)
        f = np.concatenate([v - levels, -g], axis=1)
        df = np.concatenate([dv, -bend], axis=1)
        finite = np.isfinite(f) & np.isfinite(df)
        return np.where(finite, f, np.nan), df

    with np.errstate(invalid="ignore"):
        polished, _ = polish_root(residual, guess, lower, upper, increasing=True, active=active,
                                  xtol=1e-13, rtol=4e-16, plain_steps=4)
    polished = np.where(active, polished, np.nan)
    t_mpp = np.where(e["turns"], polished[:, 2:], e["t_best"])
    return polished[:, :1], polished[:, 1:2], t_mpp, e["turns"]


def _curve_parameters(t, dense, t_floor, t_forward, curve_points, in_tail):
    """Pilot voltages (B, curve_points) of the curve's points: evenly spaced in arc length
    along the samples (spacing.py), from the reverse end ``t_floor`` to the forward end; a
    row's first ``in_tail`` (B,) points (and the next) sit at ``t_floor`` (the tail's points
    replace them)."""
    arc = arc_length(dense["voltage"], dense["current"], t)
    curve_t = evenly_spaced(arc, t, curve_points, start=interpolate_rows(t_floor, t, arc),
                            skip=in_tail)
    curve_t = np.where(np.arange(curve_points)[None, :] <= in_tail[:, None], t_floor, curve_t)
    curve_t[:, -1:] = t_forward
    return curve_t


def _short_circuit_current(string, t_sc, t_voc, v_sc, j_sc):
    """Jsc (B, 1) from the polished crossing of V = 0 (``v_sc``, ``j_sc`` evaluated there);
    NaN where there is no short circuit.

    Where V is so steep in t that the polish stops short of V = 0, the current is still fixed
    if it barely changes over the remaining Newton distance V / (dV/dt): taken there (first
    order). Where it is not (V jumps across zero between neighbouring floats of t while the
    current jumps too: an element blocks), there is no short circuit. Where the polish ends
    beyond a subcell's current limit (V = -inf: a subcell without a shunt cannot carry more),
    V falls from positive to -inf within a step of t: Jsc is the limit to rounding, when V is
    still >= 0 a rounding step further forward and the current moves by under 1e-9 over that
    step."""
    reached = np.abs(v_sc) <= SHORT_CIRCUIT_TOLERANCE_V
    change = np.zeros_like(j_sc)
    if not np.all(reached | ~np.isfinite(t_sc)):
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
    return np.where(~reached, np.nan, j_sc + change)


def _curve(string, final, n):
    """The curve (its first ``n`` points of ``final``) as solve_string returns it."""
    current = final["current"]
    curve = {"current_A_m2": current[:, :n].copy(), "voltage_V": final["voltage"][:, :n].copy()}
    for element, v_i in zip(string.elements, final["voltages"]):
        v_i = v_i if v_i.shape == current.shape else np.broadcast_to(v_i, current.shape)
        curve[element.name] = np.array(v_i[:, :n], dtype=float)
    return curve
