"""A series string packed for the solve: its elements, the pilot subcell whose junction voltage t
parameterises the curve, and one evaluation of every element at a batch of t (or of currents),
compiled group by group.
"""
import functools

import numpy as np

from siltandem.laws import compiled as kernels
from siltandem.circuit.coupling import couple_string, is_coupled
from siltandem.circuit.elements import take_rows_with_tables
from siltandem.numerics.tables import LawTable
from siltandem.solve.kernels import string_pass


#: a junction voltage the trace never goes below [V] (the reverse end is set by the terminal voltage)
LOWEST_PILOT_VOLTAGE_V = -100.0


class LazyExtrema(dict):
    """Tunnel-junction name -> its Extrema, computed on first access."""

    def __init__(self, junctions, temperature_K):
        super().__init__()
        self._junctions, self._temperature = junctions, temperature_K

    def __missing__(self, name):
        value = self._junctions[name].extrema(self._temperature)
        self[name] = value
        return value


class CompiledGroup:
    """The string's elements that invert through tables, packed for one compiled pass
    (kernels.element_voltages, solve.kernels.string_pass) at one branch state: subcells other than
    the pilot with a table, tunnel junctions on the requested branch with one. Built once per
    branch state."""

    def __init__(self, string, state):
        temperature = string.temperature_K
        members = _group_members(string, state)
        self.members = [(m["index"], m["element"], m["branch"]) for m in members]
        self.index = {index: k for k, (index, _, _) in enumerate(self.members)}
        # with one pilot for every design, its forward law runs in the same compiled pass
        self.pilot = None
        # a pilot that collects coupled light solves its current by Newton steps (coupling.py):
        # the general route takes it
        if string.single_pilot is not None and not is_coupled(string.subcells[string.single_pilot]):
            self.pilot = string.subcells[string.single_pilot]
            self.pilot_index = next(k for k, e in enumerate(string.elements) if e is self.pilot)
            self.pilot_params = self.pilot._law_parameters(temperature)
        if not members and self.pilot is None:
            return
        self.rows = max([m["table"].rows for m in members] + [m["params"].shape[0] for m in members]
                        + ([self.pilot_params.shape[0]] if self.pilot is not None else []))
        # the arguments of kernels.element_voltages after the current, in its order
        self.packed = _padded(members, self.rows)

    def evaluate(self, t):
        """The fused compiled pass (kernels.string_pass) at pilot voltages ``t``: None where
        some current lies beyond an element's table (the caller then takes the general route)."""
        t = np.asarray(t, dtype=float)
        if self.rows > 1 and t.shape[0] != self.rows:
            t = np.broadcast_to(t, (self.rows, t.shape[1]))
        out = string_pass(self.pilot_params, kernels.as_input(t), *self.packed)
        if not out[-1].all():
            return None
        return out

    def voltages(self, string, current):
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
                v, dv = string.element_voltage(element, current, branch)
            voltage[e] = np.where(covered[e], voltage[e], v)
            slope[e] = np.where(covered[e], slope[e], dv)
        return voltage, slope


def _group_members(string, state):
    """The members of a CompiledGroup, in element order: subcells other than the pilot (with
    one pilot for every design) that invert through a table, and tunnel junctions with a table
    of their branch in ``state``. Each a dict of what the compiled pass needs of it."""
    temperature = string.temperature_K
    members = []
    subcell_number = -1
    for index, element in enumerate(string.elements):
        if element.kind == "subcell":
            subcell_number += 1
            if string.single_pilot is None or subcell_number == string.single_pilot or \
                    not element._needs_table(temperature) or is_coupled(element):
                continue
            member = _subcell_member(element, temperature)
        elif element.kind == "tunnel":
            member = _tunnel_member(string, element, state.get(element.name, "tunnel"))
            if member is None:
                continue
        elif element.kind == "isotype":
            member = _isotype_member(element, temperature)
            if member is None:
                continue
        else:
            continue
        members.append(dict(member, index=index, element=element))
    return members


def _subcell_member(element, temperature):
    """A subcell's entry in the compiled pass (its table inverts the whole law)."""
    return dict(branch=None, code=kernels.SUBCELL_LAW,
                params=element._law_parameters(temperature), table=element._table(temperature),
                sign=-1.0, fold=(0.0, 0.0), clip=(-np.inf, np.inf), range=(-np.inf, np.inf))


#: the one-sample table an isotype member carries (its law inverts without one)
_NO_TABLE = LawTable(np.zeros((1, 1)), np.zeros((1, 1)), np.zeros((1, 1)))


def _isotype_member(element, temperature):
    """An isotype interface's entry in the compiled pass (laws/compiled_isotype.py inverts it),
    None where its law has no compiled form."""
    rows = element.compiled_rows(temperature)
    if rows is None:
        return None
    return dict(branch=None, code=kernels.ISOTYPE_LAW, params=rows, table=_NO_TABLE, sign=1.0,
                fold=(0.0, 0.0), clip=(-np.inf, np.inf), range=(-np.inf, np.inf))


def _tunnel_member(string, element, branch):
    """A tunnel junction's entry in the compiled pass on one branch (None without a table)."""
    temperature = string.temperature_K
    packed = element._branch_table(temperature, branch)
    if packed is None:
        return None
    table, peak_curvature, valley_curvature = packed
    if branch == "tunnel":
        _, peak_j = element.peak(temperature)
        valley_j = np.full_like(peak_j, -np.inf)
    else:
        _, peak_j, _, valley_j = string.tunnel_extrema[element.name]
    return dict(
        branch=branch, code=kernels.TUNNEL_LAW, params=element._law_parameters(temperature),
        table=table, sign=-1.0 if branch == "negative" else 1.0,
        fold={"tunnel": (0.0, peak_curvature), "negative": (peak_curvature, valley_curvature),
              "thermal": (valley_curvature, 0.0)}[branch],
        # the current is clipped to the branch's ends; beyond them by more than 1e-9
        # relative the branch has no voltage (NaN)
        clip={"tunnel": (-np.inf, peak_j), "negative": (valley_j, peak_j),
              "thermal": (valley_j, np.inf)}[branch],
        range={"tunnel": (-np.inf, peak_j * (1 + 1e-9)),
               "negative": (valley_j * (1 - 1e-9), peak_j * (1 + 1e-9)),
               "thermal": (valley_j * (1 - 1e-9), np.inf)}[branch])


def _padded(members, rows):
    """The members packed for kernels.element_voltages: its arguments after the current, in
    its order (law codes, parameters, padded tables (E, rows, width) with the samples first,
    per-row fold, clip and range ends, signs, series resistances, the inverse's tolerances)."""
    count = len(members)
    width = max([m["table"].u.shape[1] for m in members] + [1])
    packed_params = np.empty((count, rows, kernels.PARAMETER_WIDTH))
    grid_u, grid_j, grid_slope = (np.zeros((count, rows, width)) for _ in range(3))
    per_row = {name: np.empty((count, rows)) for name in
               ("fold_low", "fold_high", "lower", "upper", "range_low", "range_high", "series")}
    for e, m in enumerate(members):
        table, element = m["table"], m["element"]
        size = table.u.shape[1]
        packed_params[e] = m["params"]
        if table is not _NO_TABLE:
            # (an isotype member's one zero sample is never read, and its padding is zero
            # already: writing it would touch every row's page of a batch of thousands)
            grid_u[e, :, :size] = table.u
            grid_j[e, :, :size] = table.j
            grid_slope[e, :, :size] = table.slope
        for name, value in (("fold_low", m["fold"][0]), ("fold_high", m["fold"][1]),
                            ("lower", m["clip"][0]), ("upper", m["clip"][1]),
                            ("range_low", m["range"][0]), ("range_high", m["range"][1]),
                            ("series", element.series_ohm_m2 if element.kind == "subcell"
                             else 0.0)):
            per_row[name][e] = np.ravel(value)
    # the element's voltage in the stack current's direction: Vj - J Rs for a subcell,
    # -u for a tunnel junction
    voltage_sign = np.array([1.0 if m["element"].kind == "subcell" else -1.0 for m in members])
    return (np.array([m["code"] for m in members], dtype=np.int64), packed_params, grid_u,
            grid_j, grid_slope,
            np.array([m["table"].u.shape[1] for m in members], dtype=np.int64),
            np.array([m["sign"] for m in members]), per_row["fold_low"], per_row["fold_high"],
            per_row["lower"], per_row["upper"], per_row["range_low"], per_row["range_high"],
            voltage_sign, per_row["series"], kernels.XTOL, kernels.RTOL, kernels.MAX_ITERATIONS)


class SeriesString:
    """Evaluates a string of elements along the pilot junction voltage t (arrays (B, N))."""

    def __init__(self, elements, temperature_K):
        # as given (rows() restricts these), and with luminescent coupling bound (coupling.py)
        self.given = list(elements)
        self.elements = couple_string(self.given)
        self.coupled = any(is_coupled(e) for e in self.elements)
        self.temperature_K = temperature_K
        self.subcells = [e for e in self.elements if e.kind == "subcell"]
        if not self.subcells:
            raise ValueError("a string needs at least one subcell")
        self.tunnels = [e for e in self.elements if e.kind == "tunnel"]
        # peak and valley of each junction, found when first asked for (the common case, every
        # junction on its tunnel branch, needs only the peaks: TunnelJunction.peak)
        self.tunnel_extrema = LazyExtrema({t.name: t for t in self.tunnels}, temperature_K)
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
            self._groups[key] = CompiledGroup(self, branches)
        return self._groups[key]

    def rows(self, rows):
        """The same string restricted to some designs of the batch."""
        temperature = self.temperature_K
        if np.ndim(temperature) == 2 and np.shape(temperature)[0] > 1:
            temperature = temperature[rows]
        # (a subcell's tables built for the whole batch serve the restriction: their rows)
        return SeriesString([take_rows_with_tables(e, rows, self.temperature_K, temperature)
                             for e in self.given], temperature)

    def _select(self, per_subcell):
        *values, index = np.broadcast_arrays(*per_subcell, self.pilot_index)
        stacked = np.stack(values, axis=0)
        index = index[None]
        return np.take_along_axis(stacked, index, axis=0)[0]

    def _forward(self, t):
        """Every subcell's pilot_current at ``t``, each on the rows it leads (the others at NaN:
        their values are never selected, and a subcell driven at another's junction voltage
        would ask its neighbours for currents far beyond their tables)."""
        return [s.pilot_current(np.where(self.pilot_index == k, t, np.nan), self.temperature_K)
                for k, s in enumerate(self.subcells)]

    def pilot_current_at(self, t):
        """The string's current at pilot junction voltage ``t`` (the pilot's forward law)."""
        if self.single_pilot is not None:
            return self.subcells[self.single_pilot].pilot_current(t, self.temperature_K)[0]
        return self._select([f[0] for f in self._forward(t)])

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
            forward = self._forward(t)
            j, slope = self._select([f[0] for f in forward]), self._select([f[1] for f in forward])
        with np.errstate(divide="ignore", invalid="ignore"):
            better = t - j / slope
        return np.where(np.isfinite(better), better, t)

    def pilot_voltage_at(self, current_A_m2):
        """Pilot junction voltage t carrying ``current_A_m2`` (safe away from Jph)."""
        if self.single_pilot is not None:
            pilot = self.subcells[self.single_pilot]
            # a string of the pilot alone is only run forward after this: no table for it
            # (the same numbers, laws/compiled_untabled.py)
            return pilot.junction_voltage_at(current_A_m2, self.temperature_K,
                                             tabled=len(self.elements) > 1)
        return self._select([s.junction_voltage_at(current_A_m2, self.temperature_K)
                             for s in self.subcells])

    def lowest_pilot_voltage(self):
        if self.single_pilot is not None:
            lowest = self.subcells[self.single_pilot].lowest_junction_voltage()
            return np.broadcast_to(np.maximum(lowest * (1 - 1e-9), LOWEST_PILOT_VOLTAGE_V),
                                   self.pilot_index.shape)
        return self._select([np.maximum(s.lowest_junction_voltage() * (1 - 1e-9),
                                        LOWEST_PILOT_VOLTAGE_V) for s in self.subcells])

    def element_voltage(self, element, current, branch="tunnel"):
        """(V, dV/dJ) of one element at ``current`` through its own law (a tunnel junction on
        ``branch``, with its extrema beyond the tunnel branch)."""
        if element.kind == "tunnel":
            return element.voltage(current, self.temperature_K, branch,
                                   None if branch == "tunnel" else
                                   self.tunnel_extrema[element.name])
        return element.voltage(current, self.temperature_K)

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
            forward = self._forward(t)
            current = self._select([f[0] for f in forward])
            dcurrent = self._select([f[1] for f in forward])
            pilot_v = self._select([f[2] for f in forward])
            pilot_dv = self._select([f[3] for f in forward])
        voltages, dvoltage = [], np.zeros(np.shape(t))
        if group.members:
            group_v, group_slope = group.voltages(self, current)
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
                v, slope = self.element_voltage(element, current,
                                                branches.get(element.name, "tunnel"))
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
                v, slope = self.element_voltage(element, current,
                                                branches.get(element.name, "tunnel"))
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
                    v, slope = self.element_voltage(element, current,
                                                    branches.get(element.name, "tunnel"))
                    dv_dt = slope * dcurrent
            voltages.append(v)
            dvoltage = dvoltage + dv_dt
        out = dict(current=current, voltage=functools.reduce(np.add, voltages),
                   voltages=voltages)
        if slopes:
            out.update(dcurrent=dcurrent, dvoltage=dvoltage)
        return out


#: forward end of a traced curve: the pilot carries this fraction of its photocurrent backwards
FORWARD_CURRENT_FRACTION = -0.3


def open_circuit_voltages(string, evaluation):
    """Every element's voltage at zero current from an evaluation at the pilot's open circuit:
    the subcells' own, zero for the rest (a resistor, a tunnel junction and an isotype
    interface carry no current at zero volts)."""
    return [np.asarray(v, dtype=float) if e.kind == "subcell" else np.zeros(np.shape(v))
            for e, v in zip(string.elements, evaluation["voltages"])]
