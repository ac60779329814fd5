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
import functools
import warnings

import numpy as np

from siltandem.laws import compiled as kernels
from siltandem.circuit.elements import take_rows
from siltandem.constants import thermal_voltage_V
from siltandem.numerics.tables import polish_root
from siltandem.numerics.roots import bracketed_root, safeguarded_newton
from siltandem.solve.certificate import Certificate, Segment, certify, polisher

#: forward end of a traced curve: the pilot carries this fraction of its photocurrent backwards
FORWARD_CURRENT_FRACTION = -0.3
#: grid points used to bracket the MPP before root finding
MPP_GRID_POINTS = 48
#: a junction voltage the trace never goes below [V] (the reverse end is set by the terminal voltage)
LOWEST_PILOT_VOLTAGE_V = -100.0
#: pre-sample points per returned point when spacing a curve by arc length
SPREAD_SAMPLES_PER_POINT = 2


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
        ``{"current_A_m2": (B, N), "voltage_V": (B, N), element name: (B, N)}`` when asked for,
        ordered from reverse bias to forward bias along the traced path.
    regime : ndarray of str
        "no tunnel junction", "below peak" (every junction on its tunnel branch), "past peak, no
        hysteresis" (the terminal curve is N-shaped: single-valued in V) or "past peak, hysteresis"
        (S-shaped: a voltage sweep jumps, differently up and down).
    tunnel_branch_at_mpp : dict
        Tunnel junction name -> branch ("tunnel", "negative", "thermal") it sits on at the MPP.
    mpp_certified : ndarray of bool
        The MPP is proven the global maximum of the traced curve (certificate.py): no point of
        it exceeds ``mpp_bound_W_m2``, which is within 1e-9 (relative) of ``mpp_W_m2``.
    mpp_bound_W_m2 : ndarray
        The largest upper bound of the power over the traced curve [W/m2] (>= mpp_W_m2).
    mpp_cells_checked : ndarray of int
        Cells (intervals between evaluated points) the proof bounded.
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
    regime: np.ndarray | None = None
    tunnel_branch_at_mpp: dict = field(default_factory=dict)
    capped: np.ndarray | None = None
    mpp_certified: np.ndarray | None = None
    mpp_bound_W_m2: np.ndarray | None = None
    mpp_cells_checked: np.ndarray | None = None


class _Extrema(dict):
    """Tunnel-junction name -> its Extrema, computed on first access."""

    def __init__(self, junctions, temperature_K):
        super().__init__()
        self._junctions, self._temperature = junctions, temperature_K

    def __missing__(self, name):
        value = self._junctions[name].extrema(self._temperature)
        self[name] = value
        return value


class _CompiledGroup:
    """The string's elements that invert through tables, packed for one compiled pass
    (kernels.element_voltages, kernels.string_pass) at one branch state: subcells other than
    the pilot with a table, tunnel junctions on the requested branch with one. Built once per
    branch state."""

    def __init__(self, string, state):
        temperature = string.temperature_K
        members, codes, params, tables, signs, folds, clips, ranges = [], [], [], [], [], [], \
            [], []
        subcell_number = -1
        for index, element in enumerate(string.elements):
            if element.kind == "subcell":
                subcell_number += 1
                if string.single_pilot is None or subcell_number == string.single_pilot or \
                        not element._needs_table(temperature):
                    continue
                table = element._table(temperature)
                rows = table.rows
                members.append((index, element, None))
                codes.append(kernels.SUBCELL_LAW)
                params.append(element._law_parameters(temperature))
                tables.append(table)
                signs.append(-1.0)
                folds.append((0.0, 0.0))
                clips.append((-np.inf, np.inf))
                ranges.append((-np.inf, np.inf))
            elif element.kind == "tunnel":
                branch = state.get(element.name, "tunnel")
                packed = element._branch_table(temperature, branch)
                if packed is None:
                    continue
                table, peak_curvature, valley_curvature = packed
                if branch == "tunnel":
                    peak_v, peak_j = element.peak(temperature)
                    valley_j = np.full_like(peak_j, -np.inf)
                else:
                    _, peak_j, _, valley_j = string.tunnel_extrema[element.name]
                members.append((index, element, branch))
                codes.append(kernels.TUNNEL_LAW)
                params.append(element._law_parameters(temperature))
                tables.append(table)
                signs.append(-1.0 if branch == "negative" else 1.0)
                folds.append({"tunnel": (0.0, peak_curvature),
                              "negative": (peak_curvature, valley_curvature),
                              "thermal": (valley_curvature, 0.0)}[branch])
                # the current is clipped to the branch's ends; beyond them by more than
                # 1e-9 relative the branch has no voltage (NaN)
                clips.append({"tunnel": (-np.inf, peak_j), "negative": (valley_j, peak_j),
                              "thermal": (valley_j, np.inf)}[branch])
                ranges.append({"tunnel": (-np.inf, peak_j * (1 + 1e-9)),
                               "negative": (valley_j * (1 - 1e-9), peak_j * (1 + 1e-9)),
                               "thermal": (valley_j * (1 - 1e-9), np.inf)}[branch])
        self.members = members
        self.index = {index: k for k, (index, _, _) in enumerate(members)}
        # with one pilot for every design, its forward law runs in the same compiled pass
        self.pilot = None
        if string.single_pilot is not None:
            self.pilot = string.subcells[string.single_pilot]
            self.pilot_index = next(k for k, e in enumerate(string.elements) if e is self.pilot)
            self.pilot_params = self.pilot._law_parameters(temperature)
        if not members and self.pilot is None:
            return
        count = len(members)
        rows = max([t.rows for t in tables] + [p.shape[0] for p in params]
                   + ([self.pilot_params.shape[0]] if self.pilot is not None else []))
        width = max([t.u.shape[1] for t in tables] + [1])
        self.rows = rows
        packed_params = np.empty((count, rows, kernels.PARAMETER_WIDTH))
        # padded tables: every row (R, width), the samples first
        grid_u, grid_j, grid_slope = (np.zeros((count, rows, width)) for _ in range(3))
        per_row = {name: np.empty((count, rows)) for name in
                   ("fold_low", "fold_high", "lower", "upper", "range_low", "range_high",
                    "series")}
        for e, (table, (index, element, _)) in enumerate(zip(tables, members)):
            m = table.u.shape[1]
            packed_params[e] = params[e]
            grid_u[e, :, :m] = table.u
            grid_j[e, :, :m] = table.j
            grid_slope[e, :, :m] = table.slope
            for name, value in (("fold_low", folds[e][0]), ("fold_high", folds[e][1]),
                                ("lower", clips[e][0]), ("upper", clips[e][1]),
                                ("range_low", ranges[e][0]), ("range_high", ranges[e][1]),
                                ("series", element.series_ohm_m2 if element.kind == "subcell"
                                 else 0.0)):
                per_row[name][e] = np.ravel(value)
        # the element's voltage in the stack current's direction: Vj - J Rs for a subcell,
        # -u for a tunnel junction
        voltage_sign = np.array([1.0 if e.kind == "subcell" else -1.0 for _, e, _ in members])
        # the arguments of kernels.element_voltages after the current, in its order
        self.packed = (np.array(codes, dtype=np.int64), packed_params, grid_u, grid_j,
                       grid_slope, np.array([t.u.shape[1] for t in tables], dtype=np.int64),
                       np.array(signs), per_row["fold_low"], per_row["fold_high"],
                       per_row["lower"], per_row["upper"], per_row["range_low"],
                       per_row["range_high"], voltage_sign, per_row["series"],
                       kernels.XTOL, kernels.RTOL, kernels.MAX_ITERATIONS)

    def evaluate(self, t):
        """The fused compiled pass (kernels.string_pass) at pilot voltages ``t``: None where
        some current lies beyond an element's table (the caller then takes the general route)."""
        t = np.asarray(t, dtype=float)
        if self.rows > 1 and t.shape[0] != self.rows:
            t = np.broadcast_to(t, (self.rows, t.shape[1]))
        out = kernels.string_pass(self.pilot_params, kernels.as_input(t), *self.packed)
        if not out[-1].all():
            return None
        return out

    def voltages(self, string, current, branches):
        """(V, dV/dJ) of each member at ``current`` (B, N): two (E, B, N) arrays; entries
        beyond an element's table through the element's own general route."""
        current = np.asarray(current, dtype=float)
        if self.rows > 1 and current.shape[0] != self.rows:
            current = np.broadcast_to(current, (self.rows, current.shape[1]))
        voltage, slope, covered = kernels.element_voltages(kernels.as_input(current),
                                                           *self.packed)
        for e in np.flatnonzero(~covered.reshape(len(self.members), -1).all(axis=1)):
            _, element, branch = self.members[e]
            with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
                if element.kind == "tunnel":
                    v, dv = element.voltage(current, string.temperature_K, branch,
                                            None if branch == "tunnel" else
                                            string.tunnel_extrema[element.name])
                else:
                    v, dv = element.voltage(current, string.temperature_K)
            voltage[e] = np.where(covered[e], voltage[e], v)
            slope[e] = np.where(covered[e], slope[e], dv)
        return voltage, slope


class _String:
    """Evaluates a string of elements along the pilot junction voltage t (arrays (B, N))."""

    def __init__(self, elements, temperature_K):
        self.elements = list(elements)
        self.temperature_K = temperature_K
        self.subcells = [e for e in self.elements if e.kind == "subcell"]
        if not self.subcells:
            raise ValueError("a string needs at least one subcell")
        self.tunnels = [e for e in self.elements if e.kind == "tunnel"]
        # peak and valley of each junction, found when first asked for (the common case, every
        # junction on its tunnel branch, needs only the peaks: TunnelJunction.peak)
        self.tunnel_extrema = _Extrema({t.name: t for t in self.tunnels}, temperature_K)
        size = max([1] + [v.shape[0] for e in self.elements for v in vars(e).values()
                          if isinstance(v, np.ndarray) and v.ndim == 2])
        self.size = size
        photocurrents = np.empty((size, len(self.subcells)))
        for k, s in enumerate(self.subcells):
            photocurrents[:, k] = s.photocurrent_A_m2[:, 0]
        self.pilot_index = np.argmin(photocurrents, axis=1)[:, None]  # (B, 1)
        self.pilot_photocurrent = np.take_along_axis(photocurrents, self.pilot_index, axis=1)
        # one pilot for every design (the common case): only its forward law is needed
        first = int(self.pilot_index[0, 0])
        self.single_pilot = first if np.all(self.pilot_index == first) else None
        # per branch state: the elements inverted together in one compiled pass
        self._groups = {}

    def _group(self, branches):
        key = tuple(branches.get(t.name, "tunnel") for t in self.tunnels)
        if key not in self._groups:
            self._groups[key] = _CompiledGroup(self, branches)
        return self._groups[key]

    def rows(self, rows):
        """The same string restricted to some designs of the batch."""
        temperature = self.temperature_K
        if np.ndim(temperature) == 2 and np.shape(temperature)[0] > 1:
            temperature = temperature[rows]
        return _String([take_rows(e, rows) for e in self.elements], temperature)

    def _select(self, per_subcell):
        *values, index = np.broadcast_arrays(*per_subcell, self.pilot_index)
        stacked = np.stack(values, axis=0)
        index = index[None]
        return np.take_along_axis(stacked, index, axis=0)[0]

    def pilot_current_at(self, t):
        """The string's current at pilot junction voltage ``t`` (the pilot's forward law)."""
        if self.single_pilot is not None:
            return self.subcells[self.single_pilot].pilot_current(t, self.temperature_K)[0]
        return self._select([s.pilot_current(t, self.temperature_K)[0] for s in self.subcells])

    def open_circuit_pilot_voltage(self, t=None):
        """Pilot junction voltage carrying no current, with one more Newton step on the pilot's
        forward law: open circuit to rounding (the inverse stops at its tolerance in t, about
        1e-13 V, where J' ~ Jph/Vt would still leave ~1e-9 A/m^2 flowing). ``t``: the
        inverse at zero current when the caller has it."""
        if t is None:
            t = self.pilot_voltage_at(np.zeros_like(self.pilot_photocurrent))
        if self.single_pilot is not None:
            j, slope, _, _ = self.subcells[self.single_pilot].pilot_current(t, self.temperature_K)
        else:
            forward = [s.pilot_current(t, self.temperature_K) for s in self.subcells]
            j, slope = self._select([f[0] for f in forward]), self._select([f[1] for f in forward])
        with np.errstate(divide="ignore", invalid="ignore"):
            better = t - j / slope
        return np.where(np.isfinite(better), better, t)

    def pilot_voltage_at(self, current_A_m2):
        """Pilot junction voltage t carrying ``current_A_m2`` (safe away from Jph)."""
        if self.single_pilot is not None:
            pilot = self.subcells[self.single_pilot]
            return pilot.junction_voltage_at(current_A_m2, self.temperature_K)
        return self._select([s.junction_voltage_at(current_A_m2, self.temperature_K)
                             for s in self.subcells])

    def lowest_pilot_voltage(self):
        if self.single_pilot is not None:
            lowest = self.subcells[self.single_pilot].lowest_junction_voltage()
            return np.broadcast_to(np.maximum(lowest * (1 - 1e-9), LOWEST_PILOT_VOLTAGE_V),
                                   self.pilot_index.shape)
        return self._select([np.maximum(s.lowest_junction_voltage() * (1 - 1e-9),
                                        LOWEST_PILOT_VOLTAGE_V) for s in self.subcells])

    def evaluate(self, t, *, slopes=False, branches=None):
        """String current, voltage (and d/dt of both) at pilot junction voltage ``t``.

        ``branches`` maps tunnel-junction names to the branch of their characteristic the string
        sits on (default "tunnel" for all). Returns dict with ``current``, ``voltage``,
        ``voltages`` (one per element) and, with ``slopes``, ``dcurrent`` and ``dvoltage``.
        """
        branches = branches or {}
        group = self._group(branches)
        if group.pilot is not None and np.ndim(t) == 2:
            fused = group.evaluate(t)
            if fused is not None:
                return self._finish_fused(t, fused, group, branches, slopes)
        if self.single_pilot is not None:
            current, dcurrent, pilot_v, pilot_dv = self.subcells[self.single_pilot].pilot_current(
                t, self.temperature_K)
        else:
            forward = [s.pilot_current(t, self.temperature_K) for s in self.subcells]
            current = self._select([f[0] for f in forward])
            dcurrent = self._select([f[1] for f in forward])
            pilot_v = self._select([f[2] for f in forward])
            pilot_dv = self._select([f[3] for f in forward])
        voltages, dvoltage = [], np.zeros(np.shape(t))
        if group.members:
            group_v, group_slope = group.voltages(self, current, branches)
        subcell_number = 0
        for index, element in enumerate(self.elements):
            k = group.index.get(index)
            if k is not None:
                subcell_number += element.kind == "subcell"
                v, dv_dt = group_v[k], group_slope[k] * dcurrent
            elif element.kind == "subcell":
                is_pilot = self.pilot_index == subcell_number
                subcell_number += 1
                if self.single_pilot is not None and self.single_pilot != subcell_number - 1:
                    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
                        v, slope = element.voltage(current, self.temperature_K)
                    dv_dt = slope * dcurrent
                elif np.all(is_pilot):
                    v, dv_dt = pilot_v, pilot_dv
                else:
                    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
                        v_other, slope = element.voltage(current, self.temperature_K)
                        v = np.where(is_pilot, pilot_v, v_other)
                        dv_dt = np.where(is_pilot, pilot_dv, slope * dcurrent)
            elif element.kind == "tunnel":
                branch = branches.get(element.name, "tunnel")
                v, slope = element.voltage(current, self.temperature_K, branch,
                                           None if branch == "tunnel" else
                                           self.tunnel_extrema[element.name])
                dv_dt = slope * dcurrent
            else:
                v_other, slope = element.voltage(current, self.temperature_K)
                v, dv_dt = v_other, slope * dcurrent
            voltages.append(v)
            dvoltage = dvoltage + dv_dt
        voltage = functools.reduce(np.add, voltages)
        out = dict(current=current, voltage=voltage, voltages=voltages)
        if slopes:
            out.update(dcurrent=dcurrent, dvoltage=dvoltage)
        return out

    def evaluate_current(self, current, *, branches=None):
        """The string at given currents (B, N), every element through its own inverse law,
        the pilot too: for currents well above the pilot's photocurrent (its reverse branch
        near breakdown, where t no longer resolves the current). Returns the dict of
        :meth:`evaluate` with slopes, ``dcurrent`` = 1 and ``dvoltage`` = dV/dJ."""
        branches = branches or {}
        current = np.asarray(current, dtype=float)
        voltages, dvoltage = [], np.zeros(current.shape)
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            for element in self.elements:
                if element.kind == "tunnel":
                    branch = branches.get(element.name, "tunnel")
                    v, slope = element.voltage(current, self.temperature_K, branch,
                                               None if branch == "tunnel" else
                                               self.tunnel_extrema[element.name])
                else:
                    v, slope = element.voltage(current, self.temperature_K)
                v = np.broadcast_to(v, current.shape)
                voltages.append(v)
                dvoltage = dvoltage + slope
        return dict(current=current, voltage=functools.reduce(np.add, voltages),
                    voltages=voltages, dcurrent=np.ones(current.shape), dvoltage=dvoltage)


    def _finish_fused(self, t, fused, group, branches, slopes):
        """The rest of :meth:`evaluate` after the fused compiled pass: the elements it did not
        take (resistors, isotype interfaces, subcells and junctions without tables), and the
        sums in element order, as the general route adds them (a design's numbers never
        depend on which route its batch took)."""
        current, dcurrent, element_voltage, element_slope, _ = fused
        voltages, dvoltage = [], np.zeros(np.shape(t))
        for index, element in enumerate(self.elements):
            k = group.index.get(index)
            if k is not None:
                v, dv_dt = element_voltage[k], element_slope[k] * dcurrent
            elif index == group.pilot_index:
                v = t - current * element.series_ohm_m2
                dv_dt = 1.0 - element.series_ohm_m2 * dcurrent
            else:
                with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
                    if element.kind == "tunnel":
                        branch = branches.get(element.name, "tunnel")
                        v, slope = element.voltage(current, self.temperature_K, branch,
                                                   None if branch == "tunnel" else
                                                   self.tunnel_extrema[element.name])
                    else:
                        v, slope = element.voltage(current, self.temperature_K)
                    dv_dt = slope * dcurrent
            voltages.append(v)
            dvoltage = dvoltage + dv_dt
        out = dict(current=current, voltage=functools.reduce(np.add, voltages),
                   voltages=voltages)
        if slopes:
            out.update(dcurrent=dcurrent, dvoltage=dvoltage)
        return out


def spread_parameter(string, t_start, t_end, points, branches=None, end_currents=None):
    """Pilot voltages from t_start to t_end (each (B, 1)) spaced evenly along the curve.

    The spacing is uniform in arc length of the terminal curve in (V / V-span, J / J-span): a
    dense pre-sample (uniform in t and in current) gives the arc length as a function of t, and
    the returned t are where it takes evenly spaced values. Every returned point is then
    evaluated exactly by the caller; only their placement comes from the pre-sample. Uniform t
    alone leaves the knee of a non-limiting cell, or a junction's valley, nearly empty.
    ``end_currents`` (optional) are the currents at t_start and t_end when the caller has them.
    """
    dense = SPREAD_SAMPLES_PER_POINT * points
    s = np.linspace(0.0, 1.0, dense // 2)[None, :]
    by_t = t_start + (t_end - t_start) * s
    if end_currents is None:
        j_start = string.evaluate(t_start, branches=branches)["current"]
        j_end = string.evaluate(t_end, branches=branches)["current"]
    else:
        j_start, j_end = end_currents
    inner = np.linspace(0.0, 1.0, dense - dense // 2 + 2)[None, 1:-1]
    with np.errstate(invalid="ignore"):
        by_j = string.pilot_voltage_at(j_start + (j_end - j_start) * inner)
    low, high = np.minimum(t_start, t_end), np.maximum(t_start, t_end)
    by_j = np.where(np.isfinite(by_j), np.clip(by_j, low, high), by_t[:, :1])
    merged = np.sort(np.concatenate([by_t, by_j], axis=1), axis=1)
    merged = np.where(t_end < t_start, merged[:, ::-1], merged)
    sample = string.evaluate(merged, branches=branches)
    v = np.nan_to_num(sample["voltage"], nan=0.0, posinf=0.0, neginf=0.0)
    j = np.nan_to_num(sample["current"], nan=0.0, posinf=0.0, neginf=0.0)
    v_span = np.maximum(np.ptp(v, axis=1, keepdims=True), 1e-12)
    j_span = np.maximum(np.ptp(j, axis=1, keepdims=True), 1e-12)
    step = np.hypot(np.diff(v, axis=1) / v_span, np.diff(j, axis=1) / j_span)
    # a little weight on t itself keeps points on stretches where the curve barely moves
    t_span = np.maximum(np.abs(t_end - t_start), 1e-12)
    step = step + 0.05 * np.abs(np.diff(merged, axis=1)) / t_span
    arc = np.concatenate([np.zeros((merged.shape[0], 1)), np.cumsum(step, axis=1)], axis=1)
    targets = np.linspace(0.0, 1.0, points)[None, :] * arc[:, -1:]
    out = np.empty((merged.shape[0], points))
    for row in range(merged.shape[0]):
        out[row] = np.interp(targets[row], arc[row], merged[row])
    return out


@functools.lru_cache(maxsize=16)
def _unit_steps(points):
    """np.linspace(0, 1, points) as a (1, points) row, made once (read-only)."""
    steps = np.linspace(0.0, 1.0, points)[None, :]
    steps.flags.writeable = False
    return steps


def _finite_or(value, fallback):
    return np.where(np.isfinite(value), value, fallback)


def _open_circuit(string, evaluation):
    """Every element's voltage at zero current from an evaluation at the pilot's open circuit:
    the subcells' own, zero for the rest (a resistor, a tunnel junction and an isotype
    interface carry no current at zero volts)."""
    return [np.asarray(v, dtype=float) if e.kind == "subcell" else np.zeros(np.shape(v))
            for e, v in zip(string.elements, evaluation["voltages"])]


def _concave(string):
    """(B,) True where the string's V(J) is concave: only subcells without breakdown, and
    resistors. A subcell's J(Vj) is then concave and falling (every term of it is), so its
    inverse Vj(J) is concave, and Vj - J Rs too; so is the sum. Then P = J V(J) is concave on
    J >= 0 (P'' = 2 V' + J V'' < 0) and P(t) unimodal (J falls with t): a root of dP/dt where
    it changes sign is the global maximum."""
    if any(e.kind not in ("subcell", "resistor") for e in string.elements):
        return np.zeros(string.size, dtype=bool)
    concave = np.ones(string.size, dtype=bool)
    for cell in string.subcells:
        breakdown = ((cell.breakdown_factor > 0) & np.isfinite(cell.breakdown_V)
                     & (cell.shunt_S_m2 > 0))
        concave &= ~np.broadcast_to(breakdown, (string.size, 1))[:, 0]
    return concave


def _certified(string, t, samples, t_mpp, at_mpp, t_voc, zero, turned, active, tail=None):
    """The certificate of the MPP over one branch state (every junction on its tunnel branch)
    from the exact samples (t ascending) and the MPP's own evaluation: by concavity where the
    MPP is a turn of dP/dt on a concave string (_concave), else by bounding every cell
    (certificate.certify; the MPP may move to a higher point found there), with the tail's
    samples by current where there is one (_tail_samples). Returns (Certificate, t_mpp,
    at_mpp)."""
    size = t_mpp.shape[0]
    with np.errstate(invalid="ignore", over="ignore"):
        power = (at_mpp["current"] * at_mpp["voltage"])[:, 0]
    by_shape = active & turned & _concave(string) & np.isfinite(power)
    if tail is not None:
        by_shape &= ~tail[2]
    rest = active & ~by_shape
    certified, bound = by_shape.copy(), np.where(by_shape, power, np.nan)
    cells = np.zeros(size, dtype=int)
    if rest.any():
        segment = _segment({}, t, samples, string)
        segment.merge(_segment({}, t_mpp, at_mpp, string))
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


#: samples of a tail by current (uniform, plus points towards each subcell's photocurrent)
TAIL_SAMPLES = 64


def _tail_samples(string, j_low, rows, branches=None):
    """The tail of the curve beyond the pilot's lowest voltage, sampled by current.

    Just above a subcell's breakdown voltage its current rises so steeply with its junction
    voltage that the pilot's t (kept a relative 1e-9 above the breakdown voltage) cannot follow
    it: the curve goes on at currents from ``j_low`` (B, 1), the current there, upwards. Every
    element, the pilot too, is evaluated there through its own inverse law
    (_String.evaluate_current), from ``j_low`` to where V falls to zero or below (V falls with
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
    x = [j_low + (j_end - j_low) * _unit_steps(TAIL_SAMPLES)]
    x += [jph * (1.0 - near) for jph in photocurrents] + [jph * (1.0 + near)
                                                           for jph in photocurrents]
    x = np.concatenate(x, axis=1)
    x = np.where(rows[:, None] & (x >= j_low) & (x <= j_end), x, j_low)
    x = np.sort(x, axis=1)
    return x, string.evaluate_current(x, branches=branches), rows, branches


def _with_tail_curve(string, final, tail, in_tail, v_floor):
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


def _tail_short_circuit(string, tail, rows):
    """Jsc in a tail (_tail_samples): where V falls through zero between two of its samples,
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


def _segment(state, t, evaluation, string):
    """Exact samples of one branch state for the certificate (certificate.Segment)."""
    return Segment.from_evaluation(state, t, evaluation, [e.name for e in string.tunnels])


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

    Notes
    -----
    Designs whose tunnel junctions all stay below their peak current over the traced range are
    solved together, vectorized (the common case). A design whose trace reaches a junction's peak
    is traced piece by piece through the junction's negative-differential-resistance and thermal
    branches (trace.py), one design at a time.
    """
    string = _String(elements, temperature_K)
    if not curve_points and all(e.kind == "resistor" or (e.kind == "subcell" and e.is_explicit())
                                for e in string.elements):
        simple = _solve_explicit(string, temperature_K)
    else:
        simple = _solve_simple(string, temperature_K, curve_points, reverse_fraction)
    past_peak = simple["reaches_peak"]
    proof = simple.get("certificate")
    size = past_peak.size
    certified = np.zeros(size, dtype=bool) if proof is None else proof.certified.copy()
    bound = np.full(size, np.nan) if proof is None else np.array(proof.bound_W_m2, dtype=float)
    cells = np.zeros(size, dtype=int) if proof is None else proof.cells.copy()
    regime = np.array(["below peak" if string.tunnels else "no tunnel junction"] * past_peak.size,
                      dtype=object)
    branches = {t.name: np.full(past_peak.shape, "tunnel", dtype=object) for t in string.tunnels}
    if np.any(past_peak):
        from siltandem.solve.trace import solve_path

        for row in np.flatnonzero(past_peak):
            one = string.rows(np.array([row]))
            start = None
            if "samples" in simple:
                # the vectorized pass sampled this design's first piece already
                ts, e = simple["samples"]
                pick = slice(row, row + 1)
                start = dict(voc=simple["voc"][pick], t_voc=simple["t_voc"][pick],
                             voltages_voc=[v[pick] for v in simple["voltages_voc"]],
                             samples=(ts[pick], {
                        k: (x[pick] if k != "voltages" else [v[pick] for v in x])
                        for k, x in e.items()}))
            answer = solve_path(one, curve_points=curve_points, reverse_fraction=reverse_fraction,
                                start=start)
            for key in ("voc", "jsc", "v_mpp", "j_mpp", "p_mpp"):
                simple[key][row] = answer[key]
            for k, v in enumerate(answer["voltages_mpp"]):
                simple["voltages_mpp"][k][row] = v
            for k, v in enumerate(answer["voltages_voc"]):
                simple["voltages_voc"][k][row] = v
            for name, branch in answer["branches_mpp"].items():
                branches[name][row] = branch
            regime[row] = answer["regime"]
            certified[row] = answer["certificate"].certified[0]
            bound[row] = answer["certificate"].bound_W_m2[0]
            cells[row] = answer["certificate"].cells[0]
            if curve_points:
                simple["curve"]["current_A_m2"][row] = answer["curve"]["current_A_m2"]
                simple["curve"]["voltage_V"][row] = answer["curve"]["voltage_V"]
                for element in string.elements:
                    simple["curve"][element.name][row] = answer["curve"][element.name]
    # open circuit is the point of zero current, where every element but a subcell has zero
    # voltage (a resistor, a tunnel junction and an isotype interface each carry no current
    # at zero volts): Voc is the sum of the subcells' open-circuit voltages. (Evaluated at the
    # pilot's open circuit, which leaves a rounding-level current, an interface that blocks
    # would answer with an enormous voltage, or none.)
    simple["voltages_voc"] = _open_circuit(string, {"voltages": simple["voltages_voc"]})
    simple["voc"] = functools.reduce(np.add, simple["voltages_voc"])
    voc, jsc, v_mpp, j_mpp, p_mpp = (simple[k] for k in ("voc", "jsc", "v_mpp", "j_mpp", "p_mpp"))
    # a string that gives no power (blocked) has its best point at open circuit: P = 0 there,
    # never a rounding-level negative power
    dead = np.isfinite(p_mpp) & (p_mpp <= 0)
    if np.any(dead):
        j_mpp, v_mpp, p_mpp = (np.where(dead, 0.0, j_mpp), np.where(dead, voc, v_mpp),
                               np.where(dead, 0.0, p_mpp))
        bound = np.where(dead[:, 0], np.fmax(bound, 0.0), bound)
        simple["voltages_mpp"] = [np.where(dead, vo, vm) for vm, vo in
                                  zip(simple["voltages_mpp"], simple["voltages_voc"])]

    # no MPP found: no half of one either (a current from one point, a voltage from another)
    lost = ~np.isfinite(p_mpp)
    if np.any(lost):
        j_mpp, v_mpp = np.where(lost, np.nan, j_mpp), np.where(lost, np.nan, v_mpp)
        simple["voltages_mpp"] = [np.where(lost, np.nan, v) for v in simple["voltages_mpp"]]

    # power balance: each element's own forward law at its voltage
    balance = np.zeros_like(p_mpp)
    for element, v_i in zip(string.elements, simple["voltages_mpp"]):
        j_i, _ = element.current(v_i, temperature_K)
        balance = balance + v_i * j_i
    balance_error = np.abs(balance - p_mpp)

    with np.errstate(invalid="ignore", divide="ignore"):
        fill_factor = p_mpp / (voc * jsc)
    failed = ~(np.isfinite(voc) & np.isfinite(v_mpp) & np.isfinite(j_mpp)
               & np.isfinite(p_mpp))[:, 0]
    capped = simple.get("capped", np.zeros(failed.shape, dtype=bool))
    failed = failed | (~np.isfinite(jsc[:, 0]) & ~capped)
    if np.any(failed):
        warnings.warn(f"{int(failed.sum())} of {failed.size} designs found no operating point "
                      "for Jsc, the MPP or the fill factor; those results are NaN (Voc, the "
                      "point of zero current, stays)", RuntimeWarning, stacklevel=2)

    names = [e.name for e in string.elements]
    flat = lambda a: np.asarray(a, dtype=float)[:, 0]  # noqa: E731
    return StringSolution(
        element_names=names, voc_V=flat(voc), jsc_A_m2=flat(jsc), mpp_V=flat(v_mpp),
        mpp_A_m2=flat(j_mpp), mpp_W_m2=flat(p_mpp), fill_factor=flat(fill_factor),
        voltage_at_mpp_V={n: flat(v) for n, v in zip(names, simple["voltages_mpp"])},
        voltage_at_zero_current_V={n: flat(v) for n, v in zip(names, simple["voltages_voc"])},
        power_balance_error_W_m2=flat(balance_error), failed=failed,
        pilot_index=string.pilot_index[:, 0], curve=simple["curve"], regime=regime,
        tunnel_branch_at_mpp=branches, capped=capped,
        mpp_certified=certified & np.isfinite(flat(p_mpp)),
        mpp_bound_W_m2=np.where(np.isfinite(flat(p_mpp)), bound, np.nan),
        mpp_cells_checked=cells)


def _solve_explicit(string, temperature_K):
    """Summary of strings whose V(J) is explicit: ideal single-diode subcells without shunt, and
    resistors. Parameterised by J directly (no inverse laws, no pilot): the fast path of studies.

    V(J) = sum_i Vt ln1p((Jph_i - J)/J0_i) - J (sum of series resistances). P = J V is concave in
    J here (each term of V is concave), so the MPP is the one root of g = V + J V' in
    (0, min Jph + J0), found by safeguarded Newton with g' = 2 V' + J V''; Jsc is the root of V.
    """
    from siltandem.numerics.roots import safeguarded_newton

    vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
    size = string.size
    cells = [(np.broadcast_to(e.photocurrent_A_m2, (size, 1)),
              np.broadcast_to(e.j01_A_m2(temperature_K), (size, 1)),
              np.broadcast_to(e.series_ohm_m2, (size, 1))) for e in string.subcells]
    resistance = sum(c[2] for c in cells) + sum(
        np.broadcast_to(e.series_ohm_m2, (size, 1)) for e in string.elements
        if e.kind == "resistor")
    limit = np.min(np.concatenate([jph + j0 for jph, j0, _ in cells], axis=1), axis=1,
                   keepdims=True)

    def voltage(j, order=0):
        v = -resistance * j
        dv = -resistance + 0.0 * j
        d2v = 0.0 * j
        for jph, j0, _ in cells:
            room = jph - j + j0
            with np.errstate(divide="ignore", invalid="ignore"):
                v = v + vt * np.log(room / j0)
                dv = dv - vt / room
                d2v = d2v - vt / room**2
        return v, dv, d2v

    upper = limit * (1 - 1e-15)

    def mpp_equation(j):
        v, dv, d2v = voltage(j)
        return v + j * dv, 2 * dv + j * d2v

    def terminal(j):
        v, dv, _ = voltage(j)
        return v, dv

    zero = np.zeros((size, 1))
    j_mpp = safeguarded_newton(mpp_equation, zero, upper)
    jsc = safeguarded_newton(terminal, zero, upper)
    # no sign change at the upper end (V still > 0 at the saturation limit, in float64): Jsc
    # is the limit itself to rounding
    jsc = np.where(np.isfinite(jsc), jsc, limit)
    v_mpp = voltage(j_mpp)[0]
    voc = voltage(zero)[0]
    voltages_mpp, voltages_voc = [], []
    for element in string.elements:
        if element.kind == "resistor":
            r = np.broadcast_to(element.series_ohm_m2, (size, 1))
            voltages_mpp.append(-r * j_mpp)
            voltages_voc.append(np.zeros((size, 1)))
        else:
            jph = np.broadcast_to(element.photocurrent_A_m2, (size, 1))
            j0 = np.broadcast_to(element.j01_A_m2(temperature_K), (size, 1))
            r = np.broadcast_to(element.series_ohm_m2, (size, 1))
            voltages_mpp.append(vt * np.log1p((jph - j_mpp) / j0) - r * j_mpp)
            voltages_voc.append(vt * np.log1p(jph / j0))
    p_mpp = j_mpp * v_mpp
    # P(J) is concave on J >= 0 (P'' = 2 V' + J V'' < 0): the root of dP/dJ is the global
    # maximum, a proof needing no cells
    finite = np.isfinite(p_mpp[:, 0])
    proof = Certificate(finite, np.where(finite, p_mpp[:, 0], np.nan),
                        np.zeros(size, dtype=int))
    return dict(voc=voc, jsc=jsc, v_mpp=v_mpp, j_mpp=j_mpp, p_mpp=p_mpp,
                voltages_mpp=voltages_mpp, voltages_voc=voltages_voc, curve=None,
                reaches_peak=np.zeros(size, dtype=bool), capped=np.zeros(size, dtype=bool),
                certificate=proof)


def _solve_simple(string, temperature_K, curve_points, reverse_fraction):
    """Vectorized solve along the pilot voltage with every tunnel junction on its tunnel branch.

    Also tells, per design, whether the trace reaches a junction's peak current (then the design
    is traced again piece by piece).
    """
    jph = string.pilot_photocurrent
    # the pilot voltages at zero current, at the forward end and, with tunnel junctions, at the
    # smallest peak current (every junction on its tunnel branch: the trace must stay below
    # it, i.e. above the pilot voltage t_peak that carries it), in one inverse
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
    # an isotype interface driven forward carries at most its flat-band current: the law has no
    # voltage beyond it, so the trace stops there (reported, never invented)
    capped = np.zeros(jph.shape[0], dtype=bool)
    capped_first = np.zeros(jph.shape[0], dtype=bool)
    caps = [np.broadcast_to(e.current_cap(temperature_K), jph.shape) for e in string.elements
            if e.kind == "isotype"]
    if caps:
        cap = np.min(np.concatenate(caps, axis=1), axis=1, keepdims=True)
        with np.errstate(invalid="ignore"):
            t_cap = string.pilot_voltage_at(cap * (1 - 1e-9))
        limited = np.isfinite(t_cap) & (t_cap > t_low)
        t_low = np.where(limited, t_cap, t_low)
        capped_first = limited[:, 0]

    if curve_points:
        return _solve_dense(string, curve_points, reverse_fraction, t_voc=t_voc,
                            t_zero=t_zero, t_forward=t_forward, t_lowest=t_lowest, t_low=t_low,
                            limited=limited if caps else None)

    at_voc = string.evaluate(t_voc)
    voc = at_voc["voltage"]
    v_floor = -np.maximum(reverse_fraction * voc, 0.3)
    low = string.evaluate(t_low)
    v_low = _finite_or(low["voltage"], -1e3)
    reaches_peak = np.zeros(jph.shape[0], dtype=bool)
    if string.tunnels:
        # (where an isotype interface's flat-band current ends the curve first, no junction
        # reaches its peak)
        reaches_peak = (v_low > v_floor)[:, 0] & (t_low > t_lowest)[:, 0] & ~capped_first

    # Jsc (V = 0) and, for a curve, its reverse end (V = v_floor) together: V rises strictly
    # with t and its slope is analytic, so safeguarded Newton takes a few evaluations. First
    # guess: the terminal voltage follows t one to one (the pilot takes up the change).
    levels = np.concatenate([np.zeros_like(voc), v_floor], axis=1) if curve_points else \
        np.zeros_like(voc)

    def shifted(t):
        e = string.evaluate(t, slopes=True)
        finite = np.isfinite(e["voltage"]) & np.isfinite(e["dvoltage"])
        return (np.where(finite, e["voltage"] - levels, -1e3),
                np.where(finite, e["dvoltage"], 1.0))

    roots = safeguarded_newton(shifted, np.broadcast_to(t_low, levels.shape),
                               np.broadcast_to(t_voc, levels.shape), start=t_voc - (voc - levels),
                               end_values=(v_low - levels, _finite_or(voc, -1e3) - levels))
    t_sc = roots[:, :1]
    if caps:
        # the curve ends at the interface's flat-band current above zero volts: no Jsc to give
        capped = (limited & (v_low > 0))[:, 0]
        t_sc = np.where(capped[:, None], t_low, t_sc)
    # where V is still positive at the pilot's lowest voltage (just above its breakdown), the
    # curve goes on at currents that t no longer resolves: the tail, sampled by current;
    # Jsc lies there
    tail_rows = ((t_low <= t_lowest) & (v_low > 0) & np.isfinite(low["current"]))[:, 0] & \
        ~capped
    tail = None
    if tail_rows.any():
        tail = _tail_samples(string, low["current"], tail_rows)
        t_sc = np.where(tail_rows[:, None], t_low, t_sc)
    if curve_points:
        t_floor = roots[:, 1:2]
        t_floor = np.where(np.isfinite(t_floor), t_floor,
                           np.where(np.isfinite(t_sc), t_sc, t_low))

    # MPP: best of a coarse grid in t from short to open circuit, then dP/dt = 0 inside the
    # grid cells around it (the grid's exact slopes are the bracket's end values)
    s = np.linspace(0.0, 1.0, MPP_GRID_POINTS)[None, :]
    grid_t = t_sc + (t_voc - t_sc) * s
    grid = string.evaluate(grid_t, slopes=True)
    jsc = grid["current"][:, :1]
    if caps:
        jsc = np.where(capped[:, None], np.nan, jsc)
    if tail is not None:
        jsc = np.where(tail_rows[:, None], _tail_short_circuit(string, tail, tail_rows), jsc)
    power = _finite_or(grid["current"] * grid["voltage"], -np.inf)
    # no value only where the current is beyond what an element can carry, at the reverse
    # end of the bracket, where P still rises towards the MPP: count it as rising (a zero
    # there would be a false root)
    grid_slope = _finite_or(grid["dcurrent"] * grid["voltage"]
                            + grid["current"] * grid["dvoltage"], 1e300)
    best = np.argmax(power, axis=1)[:, None]
    low_index = np.clip(best - 1, 0, MPP_GRID_POINTS - 1)
    high_index = np.clip(best + 1, 0, MPP_GRID_POINTS - 1)
    lo = np.take_along_axis(grid_t, low_index, axis=1)
    hi = np.take_along_axis(grid_t, high_index, axis=1)

    def power_slope(t):
        e = string.evaluate(t, slopes=True)
        return _finite_or(e["dcurrent"] * e["voltage"] + e["current"] * e["dvoltage"], 1e300)

    t_mpp = bracketed_root(power_slope, lo, hi,
                           end_values=(np.take_along_axis(grid_slope, low_index, axis=1),
                                       np.take_along_axis(grid_slope, high_index, axis=1)))
    interior = np.isfinite(t_mpp)
    t_mpp = np.where(interior, t_mpp, np.take_along_axis(grid_t, best, axis=1))
    at_mpp = string.evaluate(t_mpp, slopes=True)
    lost = ~np.isfinite(at_mpp["current"] * at_mpp["voltage"])
    if np.any(lost):
        t_mpp = np.where(lost, np.take_along_axis(grid_t, best, axis=1), t_mpp)
        at_mpp = string.evaluate(t_mpp, slopes=True)
    # the certificate (certificate.py): between t_sc and t_voc lies every point of positive
    # power (V rises with t)
    proof, t_mpp, at_mpp = _certified(string, grid_t, grid, t_mpp, at_mpp, t_voc,
                                      _open_circuit(string, at_voc), interior[:, 0],
                                      ~reaches_peak & np.isfinite(t_mpp[:, 0]), tail)
    j_mpp, v_mpp = at_mpp["current"], at_mpp["voltage"]

    curve = None
    if curve_points:
        curve_t = spread_parameter(string, t_floor, t_forward, curve_points)
        traced = string.evaluate(curve_t)
        curve = {"current_A_m2": traced["current"].copy(), "voltage_V": traced["voltage"].copy()}
        for element, v_i in zip(string.elements, traced["voltages"]):
            curve[element.name] = np.array(v_i, dtype=float)
    return dict(voc=voc.copy(), jsc=jsc.copy(), v_mpp=v_mpp.copy(), j_mpp=j_mpp.copy(),
                p_mpp=(j_mpp * v_mpp).copy(),
                voltages_mpp=[np.array(np.broadcast_to(v, j_mpp.shape), dtype=float)
                              for v in at_mpp["voltages"]],
                voltages_voc=[np.array(np.broadcast_to(v, voc.shape), dtype=float)
                              for v in at_voc["voltages"]],
                curve=curve, reaches_peak=reaches_peak, capped=capped, certificate=proof,
                t_voc=t_voc)


#: exact samples of the dense pass of a traced curve: uniform in t, and uniform in current
DENSE_T_SAMPLES = 384
DENSE_J_SAMPLES = 128
#: the terminal voltage at a reported Jsc is within this of zero [V]
SHORT_CIRCUIT_TOLERANCE_V = 1e-6


def _solve_dense(string, curve_points, reverse_fraction, *, t_voc, t_zero, t_forward, t_lowest,
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
    t_start = np.maximum(t_low, _finite_or(t_voc - 1.05 * (voc_guess - floor_guess) - 0.01,
                                           t_low))
    by_t = t_start + (t_forward - t_start) * _unit_steps(DENSE_T_SAMPLES)
    # the current at the samples' reverse end, from the pilot's forward law alone
    j_top = _finite_or(string.pilot_current_at(t_start), jph)
    fractions = _unit_steps(DENSE_J_SAMPLES + 2)[:, 1:-1]
    with np.errstate(invalid="ignore"):
        by_j = string.pilot_voltage_at(FORWARD_CURRENT_FRACTION * jph
                                       + (j_top - FORWARD_CURRENT_FRACTION * jph) * fractions)
    by_j = np.where(np.isfinite(by_j), np.clip(by_j, t_start, t_forward), t_start)
    t = np.sort(np.concatenate([by_t, by_j], axis=1), axis=1)
    points = t.shape[1]
    dense = string.evaluate(np.concatenate([t, t_voc], axis=1), slopes=True)
    voc = dense["voltage"][:, points:]
    voltages_voc = [np.array(np.broadcast_to(x, dense["voltage"].shape)[:, points:], dtype=float)
                    for x in dense["voltages"]]
    dense = {k: (x[:, :points] if k != "voltages" else
                 [np.broadcast_to(y, x_shape)[:, :points] for y in x])
             for k, x in dense.items() for x_shape in [dense["voltage"].shape]}
    v = _finite_or(dense["voltage"], -1e3)
    j = _finite_or(dense["current"], np.nan)
    dv = _finite_or(dense["dvoltage"], np.nan)
    dj = _finite_or(dense["dcurrent"], np.nan)
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
    tail = _tail_samples(string, dense["current"][:, :1], tail_rows) if tail_rows.any() \
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
    crossing, cell_lo, cell_hi = (x[:, None] for x in kernels.hermite_crossing(
        twice[0], twice[1], twice[2], np.concatenate([np.zeros_like(voc), v_floor], axis=0)[:, 0],
        twice[3]))
    t_sc, t_floor = crossing[:size], crossing[size:]
    sc_lo, floor_lo, sc_hi, floor_hi = cell_lo[:size], cell_lo[size:], cell_hi[:size], cell_hi[size:]
    # the best sample of P and, in the cell next to it where dP/dt changes sign, the maximum
    # of the cubic Hermite interpolant of P (exact P and dP/dt at both ends), with its d2P/dt2
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        t_best, t_other, turns, t_mpp, curvature = (x[:, None] for x in kernels.power_maximum(
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
        # (the search then closes in on the limit by bisection), as in _solve_simple
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

    # the curve: points evenly spaced in arc length of (V / V-span, J / J-span) along the samples
    # (with a little weight on t), from the reverse end to the forward end
    vn = np.where(np.isfinite(v), v, 0.0)
    jn = np.where(np.isfinite(j), j, 0.0)
    v_span = np.maximum(np.ptp(vn, axis=1, keepdims=True), 1e-12)
    j_span = np.maximum(np.ptp(jn, axis=1, keepdims=True), 1e-12)
    t_span = np.maximum(t_forward - t_start, 1e-12)
    arc_step = (np.hypot(np.diff(vn, axis=1) / v_span, np.diff(jn, axis=1) / j_span)
                + 0.05 * np.diff(t, axis=1) / t_span)
    arc = np.concatenate([np.zeros((size, 1)), np.cumsum(arc_step, axis=1)], axis=1)
    curve_t = np.empty((size, curve_points))
    # with a tail, its first eighth of the points lie on the tail (by current)
    in_tail = np.where(tail_rows, max(curve_points // 8, 2), 0) if tail is not None else \
        np.zeros(size, dtype=int)
    for row in range(size):
        count = curve_points - in_tail[row]
        a_floor = np.interp(t_floor[row, 0], t[row], arc[row])
        targets = a_floor + (arc[row, -1] - a_floor) * _unit_steps(count)[0]
        curve_t[row, in_tail[row]:] = np.interp(targets, arc[row], t[row])
        curve_t[row, :in_tail[row]] = t_floor[row, 0]
        curve_t[row, in_tail[row]] = t_floor[row, 0]
    curve_t[:, -1:] = t_forward
    final = string.evaluate(np.concatenate([curve_t, t_sc, t_mpp], axis=1), slopes=True)
    if tail is not None:
        final = _with_tail_curve(string, final, tail, in_tail, v_floor)
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
    proof, t_mpp, at_mpp = _certified(string, t, dense, t_mpp, at_mpp, t_voc,
                                      _open_circuit(string, {"voltages": voltages_voc}),
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
        jsc = np.where(tail_rows[:, None], _tail_short_circuit(string, tail, tail_rows), jsc)
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
