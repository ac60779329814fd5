"""The series solve: the light I-V of each string of elements, its MPP, Voc, Jsc and fill factor.

Every element of a string carries the same current J; the string's voltage is the sum of the
element voltages. Sign convention: generated current positive, so the power quadrant is J > 0,
V > 0.

How the curve is parameterised
------------------------------
A subcell's voltage as a function of current, V(J) = Vt ln1p((Jph - J)/J0), cannot reach its
reverse-biased branch in float64 when J0/Jph is below machine epsilon: J - Jph is lost to
rounding before the logarithm sees it. The string is therefore traced along the junction voltage
``t`` of one *pilot* subcell, the one with the smallest photocurrent (per design in a batch):
J = J_pilot(t) is computed forward (no cancellation), and every other element gives its voltage
at that current. The terminal voltage rises strictly with t, so the whole curve, from forward
bias beyond Voc down to reverse bias of the pilot, is single-valued in t. MPP, Voc and Jsc are
roots on that curve (not grid readings): Voc exactly at J = 0, Jsc as the root of V(t) = 0, and
the MPP as the root of dP/dt = 0 bracketed by the best point of a coarse grid.

Everything is batched: element parameters are (B, 1) arrays and the solve works on (B, N) grids.
"""
from dataclasses import dataclass, field
import warnings

import numpy as np

from .numerics import bracketed_root

#: forward end of a traced curve: the pilot carries this fraction of its photocurrent backwards
FORWARD_CURRENT_FRACTION = -0.3
#: grid points used to bracket the MPP before root finding
MPP_GRID_POINTS = 48
#: a junction voltage the trace never goes below [V] (the reverse end is set by the terminal voltage)
LOWEST_PILOT_VOLTAGE_V = -100.0


@dataclass(frozen=True)
class StringSolution:
    """Solution of B designs of one series string (arrays of shape (B,)).

    Attributes
    ----------
    element_names : list of str
        In current order (front terminal to back terminal).
    voc_V, jsc_A_m2, mpp_V, mpp_A_m2, mpp_W_m2, fill_factor : ndarray
    voltage_at_mpp_V : dict
        Element name -> its voltage at the MPP [V].
    voltage_at_zero_current_V : dict
        Element name -> its voltage at open circuit [V].
    power_balance_error_W_m2 : ndarray
        |sum_i V_i J_i(V_i) - V J| at the MPP, each J_i from the element's own forward law.
    failed : ndarray of bool
        Designs for which no answer was found (their numbers are NaN).
    curve : dict or None
        ``{"current_A_m2": (B, N), "voltage_V": (B, N), element name: (B, N)}`` when asked for.
    """

    element_names: list
    voc_V: np.ndarray
    jsc_A_m2: np.ndarray
    mpp_V: np.ndarray
    mpp_A_m2: np.ndarray
    mpp_W_m2: np.ndarray
    fill_factor: np.ndarray
    voltage_at_mpp_V: dict
    voltage_at_zero_current_V: dict
    power_balance_error_W_m2: np.ndarray
    failed: np.ndarray
    pilot_index: np.ndarray
    curve: dict | None = field(default=None)


class _String:
    """Evaluates a string of elements along the pilot junction voltage t (arrays (B, N))."""

    def __init__(self, elements, temperature_K):
        self.elements = list(elements)
        self.temperature_K = temperature_K
        self.subcells = [e for e in self.elements if e.kind == "subcell"]
        if not self.subcells:
            raise ValueError("a string needs at least one subcell")
        photocurrents = np.concatenate([s.photocurrent_A_m2 for s in self.subcells], axis=1)
        self.pilot_index = np.argmin(photocurrents, axis=1)[:, None]  # (B, 1)
        self.pilot_photocurrent = np.take_along_axis(photocurrents, self.pilot_index, axis=1)

    def _select(self, per_subcell):
        *values, index = np.broadcast_arrays(*per_subcell, self.pilot_index)
        stacked = np.stack(values, axis=0)
        index = index[None]
        return np.take_along_axis(stacked, index, axis=0)[0]

    def pilot_voltage_at(self, current_A_m2):
        """Pilot junction voltage t carrying ``current_A_m2`` (safe away from Jph)."""
        return self._select([s.junction_voltage_at(current_A_m2, self.temperature_K)
                             for s in self.subcells])

    def lowest_pilot_voltage(self):
        return self._select([np.maximum(s.lowest_junction_voltage() * (1 - 1e-9),
                                        LOWEST_PILOT_VOLTAGE_V) for s in self.subcells])

    def evaluate(self, t, *, slopes=False):
        """String current, voltage (and d/dt of both) at pilot junction voltage ``t``.

        Returns dict with ``current``, ``voltage``, ``voltages`` (one per element) and, with
        ``slopes``, ``dcurrent`` and ``dvoltage``.
        """
        forward = [s.pilot_current(t, self.temperature_K) for s in self.subcells]
        current = self._select([f[0] for f in forward])
        dcurrent = self._select([f[1] for f in forward])
        pilot_v = self._select([f[2] for f in forward])
        pilot_dv = self._select([f[3] for f in forward])
        voltages, dvoltage = [], np.zeros(np.shape(t))
        subcell_number = 0
        for element in self.elements:
            if element.kind == "subcell":
                is_pilot = self.pilot_index == subcell_number
                subcell_number += 1
                if np.all(is_pilot):
                    v, dv_dt = pilot_v, pilot_dv
                else:
                    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
                        v_other, slope = element.voltage(current, self.temperature_K)
                        v = np.where(is_pilot, pilot_v, v_other)
                        dv_dt = np.where(is_pilot, pilot_dv, slope * dcurrent)
            else:
                v_other, slope = element.voltage(current, self.temperature_K)
                v, dv_dt = v_other, slope * dcurrent
            voltages.append(v)
            dvoltage = dvoltage + dv_dt
        voltage = np.sum(voltages, axis=0)
        out = dict(current=current, voltage=voltage, voltages=voltages)
        if slopes:
            out.update(dcurrent=dcurrent, dvoltage=dvoltage)
        return out


def _finite_or(value, fallback):
    return np.where(np.isfinite(value), value, fallback)


def solve_string(elements, temperature_K, *, curve_points=0, reverse_fraction=0.3):
    """Solve a batch of series strings.

    Parameters
    ----------
    elements : sequence of element objects
        In current order; subcells must carry photocurrents. Parameters (B, 1).
    temperature_K : float or (B, 1) array
    curve_points : int
        Points of the traced light I-V to return (0 for none).
    reverse_fraction : float
        The curve extends into reverse bias down to -reverse_fraction * Voc (at least 0.3 V).

    Returns
    -------
    StringSolution
    """
    string = _String(elements, temperature_K)
    jph = string.pilot_photocurrent
    t_voc = string.pilot_voltage_at(np.zeros_like(jph))
    t_forward = string.pilot_voltage_at(FORWARD_CURRENT_FRACTION * jph)
    t_lowest = string.lowest_pilot_voltage()

    at_voc = string.evaluate(t_voc)
    voc = at_voc["voltage"]

    # Jsc: root of V(t) = 0 between the lowest pilot voltage and open circuit
    def terminal(t):
        return _finite_or(string.evaluate(t)["voltage"], -1e3)

    t_sc = bracketed_root(terminal, t_lowest, t_voc)
    at_sc = string.evaluate(t_sc)
    jsc = at_sc["current"]

    # MPP: best of a coarse grid in t between short and open circuit, then dP/dt = 0
    s = np.linspace(0.0, 1.0, MPP_GRID_POINTS)[None, :]
    grid_t = t_sc + (t_voc - t_sc) * s
    grid = string.evaluate(grid_t)
    power = _finite_or(grid["current"] * grid["voltage"], -np.inf)
    best = np.argmax(power, axis=1)[:, None]
    lo = np.take_along_axis(grid_t, np.clip(best - 1, 0, MPP_GRID_POINTS - 1), axis=1)
    hi = np.take_along_axis(grid_t, np.clip(best + 1, 0, MPP_GRID_POINTS - 1), axis=1)

    def power_slope(t):
        e = string.evaluate(t, slopes=True)
        return _finite_or(e["dcurrent"] * e["voltage"] + e["current"] * e["dvoltage"], 0.0)

    t_mpp = bracketed_root(power_slope, lo, hi)
    interior = np.isfinite(t_mpp)
    t_mpp = np.where(interior, t_mpp, np.take_along_axis(grid_t, best, axis=1))
    at_mpp = string.evaluate(t_mpp)
    j_mpp, v_mpp = at_mpp["current"], at_mpp["voltage"]
    p_mpp = j_mpp * v_mpp

    # power balance: each element's own forward law at its voltage
    balance = np.zeros_like(p_mpp)
    for element, v_i in zip(string.elements, at_mpp["voltages"]):
        j_i, _ = element.current(v_i, temperature_K)
        balance = balance + v_i * j_i
    balance_error = np.abs(balance - p_mpp)

    with np.errstate(invalid="ignore", divide="ignore"):
        fill_factor = p_mpp / (voc * jsc)
    results = [voc, jsc, v_mpp, j_mpp, p_mpp, fill_factor]
    failed = ~np.all([np.isfinite(r) for r in results], axis=0)[:, 0]
    if np.any(failed):
        warnings.warn(f"{int(failed.sum())} of {failed.size} designs found no operating point; "
                      "their results are NaN", RuntimeWarning, stacklevel=2)

    curve = None
    if curve_points:
        v_floor = -np.maximum(reverse_fraction * voc, 0.3)
        t_floor = bracketed_root(lambda t: terminal(t) - v_floor, t_lowest, t_voc)
        t_floor = np.where(np.isfinite(t_floor), t_floor, t_sc)
        curve_t = t_floor + (t_forward - t_floor) * np.linspace(0.0, 1.0, curve_points)[None, :]
        traced = string.evaluate(curve_t)
        curve = {"current_A_m2": traced["current"], "voltage_V": traced["voltage"]}
        for element, v_i in zip(string.elements, traced["voltages"]):
            curve[element.name] = v_i

    names = [e.name for e in string.elements]
    flat = lambda a: np.asarray(a, dtype=float)[:, 0]  # noqa: E731
    return StringSolution(
        element_names=names, voc_V=flat(voc), jsc_A_m2=flat(jsc), mpp_V=flat(v_mpp),
        mpp_A_m2=flat(j_mpp), mpp_W_m2=flat(p_mpp), fill_factor=flat(fill_factor),
        voltage_at_mpp_V={n: flat(v) for n, v in zip(names, at_mpp["voltages"])},
        voltage_at_zero_current_V={n: flat(v) for n, v in zip(names, at_voc["voltages"])},
        power_balance_error_W_m2=flat(balance_error), failed=failed,
        pilot_index=string.pilot_index[:, 0], curve=curve)
