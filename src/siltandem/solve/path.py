"""Operating points on the traced path of a string below its tunnel junctions' peaks: Voc, Jsc and the
MPP as roots on the curve parameterised by the pilot's junction voltage, the MPP certified; with a
curve, the dense pass (dense.py) instead.
"""
import numpy as np

from siltandem.numerics.roots import bracketed_root, safeguarded_newton
from siltandem.solve.certificate import certify_mpp
from siltandem.solve.dense import solve_dense
from siltandem.solve.string import FORWARD_CURRENT_FRACTION, open_circuit_voltages
from siltandem.solve.tail import finite_or, lower_end, tail_samples, tail_short_circuit


#: grid points used to bracket the MPP before root finding
MPP_GRID_POINTS = 48


def solve_on_path(string, temperature_K, curve_points, reverse_fraction):
    """Vectorized solve along the pilot voltage with every tunnel junction on its tunnel branch.

    Also tells, per design, whether the trace reaches a junction's peak current (then the design
    is traced again piece by piece). With ``curve_points``, the dense pass (dense.py) answers.
    """
    t_zero, t_forward, t_voc, t_lowest, t_low, limited = _trace_range(string, temperature_K)
    if curve_points:
        return solve_dense(string, curve_points, reverse_fraction, t_voc=t_voc,
                           t_zero=t_zero, t_forward=t_forward, t_lowest=t_lowest, t_low=t_low,
                           limited=limited)

    at_voc = string.evaluate(t_voc)
    voc = at_voc["voltage"]
    v_floor = -np.maximum(reverse_fraction * voc, 0.3)
    low = string.evaluate(t_low)
    v_low = finite_or(low["voltage"], -1e3)
    reaches_peak, capped, tail_rows = lower_end(string, v_low, v_floor, t_low, t_lowest,
                                                low["current"], limited)
    t_sc = _short_circuit_root(string, t_low, t_voc, voc, v_low)
    t_sc = np.where(capped[:, None], t_low, t_sc)
    # beyond the pilot's lowest voltage, with V still positive: the tail, sampled by current;
    # Jsc lies there
    tail = None
    if tail_rows.any():
        tail = tail_samples(string, low["current"], tail_rows)
        t_sc = np.where(tail_rows[:, None], t_low, t_sc)

    # MPP: best of a coarse grid in t from short to open circuit, then dP/dt = 0 inside the
    # grid cells around it
    s = np.linspace(0.0, 1.0, MPP_GRID_POINTS)[None, :]
    grid_t = t_sc + (t_voc - t_sc) * s
    grid = string.evaluate(grid_t, slopes=True)
    jsc = np.where(capped[:, None], np.nan, grid["current"][:, :1])
    if tail is not None:
        jsc = np.where(tail_rows[:, None], tail_short_circuit(string, tail, tail_rows), jsc)
    t_mpp, at_mpp, interior = _mpp_in_grid(string, grid_t, grid)
    # the certificate (certificate.py): between t_sc and t_voc lies every point of positive
    # power (V rises with t)
    proof, t_mpp, at_mpp = certify_mpp(string, grid_t, grid, t_mpp, at_mpp, t_voc,
                                      open_circuit_voltages(string, at_voc), interior[:, 0],
                                      ~reaches_peak & np.isfinite(t_mpp[:, 0]), tail)
    j_mpp, v_mpp = at_mpp["current"], at_mpp["voltage"]

    return dict(voc=voc.copy(), jsc=jsc.copy(), v_mpp=v_mpp.copy(), j_mpp=j_mpp.copy(),
                p_mpp=(j_mpp * v_mpp).copy(),
                voltages_mpp=[np.array(np.broadcast_to(v, j_mpp.shape), dtype=float)
                              for v in at_mpp["voltages"]],
                voltages_voc=[np.array(np.broadcast_to(v, voc.shape), dtype=float)
                              for v in at_voc["voltages"]],
                curve=None, reaches_peak=reaches_peak, capped=capped, certificate=proof,
                t_voc=t_voc)


def _trace_range(string, temperature_K):
    """The pilot voltages (B, 1 each) that bound the trace: at zero current (``t_zero``, and
    ``t_voc`` one Newton step on, open circuit to rounding), at the forward end, the pilot's
    lowest, and the trace's lower end ``t_low``; with ``limited`` (B, 1) bool, or None without
    isotype interfaces, where an interface's flat-band current sets ``t_low``.

    With tunnel junctions, every one on its tunnel branch, the trace must stay below the
    smallest peak current, i.e. above the pilot voltage that carries it. An isotype interface
    driven forward carries at most its flat-band current: the law has no voltage beyond it,
    so the trace stops there (reported, never invented).
    """
    jph = string.pilot_photocurrent
    # zero current, the forward end and the smallest peak current in one inverse
    targets = [np.zeros_like(jph), FORWARD_CURRENT_FRACTION * jph]
    if string.tunnels:
        smallest_peak = np.min(np.concatenate(
            [t.peak(temperature_K)[1] for t in string.tunnels], axis=1),
            axis=1, keepdims=True)
        targets.append(np.broadcast_to(smallest_peak * (1 - 1e-9), jph.shape))
    with np.errstate(invalid="ignore"):
        inverted = string.pilot_voltage_at(np.concatenate(targets, axis=1))
    t_zero, t_forward = inverted[:, :1], inverted[:, 1:2]
    t_voc = string.open_circuit_pilot_voltage(t_zero)
    t_lowest = string.lowest_pilot_voltage()
    t_low = t_lowest
    if string.tunnels:
        t_peak = inverted[:, 2:3]
        t_low = np.where(np.isfinite(t_peak) & (t_peak > t_lowest), t_peak, t_lowest)
    limited = None
    caps = [np.broadcast_to(e.current_cap(temperature_K), jph.shape) for e in string.elements
            if e.kind == "isotype"]
    if caps:
        cap = np.min(np.concatenate(caps, axis=1), axis=1, keepdims=True)
        with np.errstate(invalid="ignore"):
            t_cap = string.pilot_voltage_at(cap * (1 - 1e-9))
        limited = np.isfinite(t_cap) & (t_cap > t_low)
        t_low = np.where(limited, t_cap, t_low)
    return t_zero, t_forward, t_voc, t_lowest, t_low, limited


def _short_circuit_root(string, t_low, t_voc, voc, v_low):
    """The pilot voltage (B, 1) of V = 0 between ``t_low`` and ``t_voc``: V rises strictly
    with t and its slope is analytic, so safeguarded Newton takes a few evaluations. First
    guess: the terminal voltage follows t one to one (the pilot takes up the change)."""
    def voltage(t):
        e = string.evaluate(t, slopes=True)
        finite = np.isfinite(e["voltage"]) & np.isfinite(e["dvoltage"])
        return (np.where(finite, e["voltage"], -1e3), np.where(finite, e["dvoltage"], 1.0))

    return safeguarded_newton(voltage, np.broadcast_to(t_low, voc.shape),
                              np.broadcast_to(t_voc, voc.shape), start=t_voc - voc,
                              end_values=(v_low, finite_or(voc, -1e3)), idle=np.nan)


def _mpp_in_grid(string, grid_t, grid):
    """The MPP from a grid in t (``grid``: its exact evaluation with slopes): the root of
    dP/dt in the grid cells around the best grid point (the grid's exact slopes are the
    bracket's end values), else the best grid point. Returns (t_mpp, its evaluation,
    interior: where the root was found)."""
    power = finite_or(grid["current"] * grid["voltage"], -np.inf)
    # no value only where the current is beyond what an element can carry, at the reverse
    # end of the bracket, where P still rises towards the MPP: count it as rising (a zero
    # there would be a false root)
    grid_slope = finite_or(grid["dcurrent"] * grid["voltage"]
                            + grid["current"] * grid["dvoltage"], 1e300)
    last = grid_t.shape[1] - 1
    best = np.argmax(power, axis=1)[:, None]
    low_index = np.clip(best - 1, 0, last)
    high_index = np.clip(best + 1, 0, last)
    lo = np.take_along_axis(grid_t, low_index, axis=1)
    hi = np.take_along_axis(grid_t, high_index, axis=1)

    def power_slope(t):
        e = string.evaluate(t, slopes=True)
        return finite_or(e["dcurrent"] * e["voltage"] + e["current"] * e["dvoltage"], 1e300)

    t_mpp = bracketed_root(power_slope, lo, hi,
                           end_values=(np.take_along_axis(grid_slope, low_index, axis=1),
                                       np.take_along_axis(grid_slope, high_index, axis=1)),
                           idle=np.nan)
    interior = np.isfinite(t_mpp)
    t_mpp = np.where(interior, t_mpp, np.take_along_axis(grid_t, best, axis=1))
    at_mpp = string.evaluate(t_mpp, slopes=True)
    lost = ~np.isfinite(at_mpp["current"] * at_mpp["voltage"])
    if np.any(lost):
        t_mpp = np.where(lost, np.take_along_axis(grid_t, best, axis=1), t_mpp)
        at_mpp = string.evaluate(t_mpp, slopes=True)
    return t_mpp, at_mpp, interior
