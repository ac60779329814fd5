"""Circuit elements: frozen dataclasses binding parameters to the element laws.

Every numeric field is an array with a leading batch axis and a trailing axis of length 1
(shape (B, 1)), so that a batch of B designs of one topology is solved in one pass against a
(B, N) grid of currents. A single design has B = 1. SI inside: A/m^2, ohm m^2, S/m^2, V, eV.

Each element offers, for the series solver:

* ``voltage(current_A_m2, temperature_K)`` -> (V, dV/dJ): its voltage in the stack's current
  direction (generated current positive, so a subcell's voltage is positive in the power quadrant
  and a resistor's is -J R);
* ``current(voltage_V, temperature_K)`` -> (J, dJ/dV), the forward law, used to check power balance.

Subcells can also lead the trace as the solver's *pilot*: ``pilot_current(v_junction_V, T)``
gives (J, dJ/dVj, V, dV/dVj) from the junction voltage, so that every branch of the curve,
including the reverse-biased one, is reached without inverting near Jph (see solve.py).
"""
from dataclasses import dataclass, field, replace

import numpy as np

from siltandem.laws import diode
from siltandem.laws import esaki
from siltandem.laws import silicon
from siltandem.laws.radiative import radiative_saturation_current
from siltandem.constants import thermal_voltage_V
from siltandem.numerics.tables import LawTable
from siltandem.laws import compiled as kernels
from siltandem.numerics.memo import recall
from siltandem.numerics.roots import safeguarded_newton
from siltandem.circuit.element_parts import (  # noqa: F401  (batch: public here too)
    batch, parameter_columns as _parameter_rows, reciprocal_range as _reciprocal_range,
    temperature_key as _temperature_key)
from siltandem.circuit.interface_element import IsotypeInterface

#: junction-voltage table of a subcell (inverse.py): points in reverse bias and forward of zero
TABLE_REVERSE_POINTS = 160
TABLE_FORWARD_POINTS = 512
#: largest table (designs x points) an element keeps; beyond it (batches of thousands of
#: designs) the laws' own root finds serve, at O(designs x points) memory instead
TABLE_MAX_ENTRIES = 4_000_000
#: the most designs one batch solves through junction tables (5,952); studies cut their batches
#: to at most this many, so that a design's result does not depend on its batch
TABLE_ROWS = TABLE_MAX_ENTRIES // (TABLE_FORWARD_POINTS + TABLE_REVERSE_POINTS)




@dataclass(frozen=True)
class Subcell:
    """A junction that generates current: detailed-balance diode with optional J02, Rs, Rsh, breakdown.

    Attributes
    ----------
    name : str
    gap_eV : (B, 1) ndarray
        Band gap [eV].
    absorptance : (B, 1) ndarray
        Step absorptance above the gap [-].
    ere : (B, 1) ndarray
        External radiative efficiency [-], (0, 1]; J01 = J0,rad / ERE.
    j02_A_m2 : (B, 1) ndarray
        Ideality-2 saturation current density [A/m^2].
    series_ohm_m2 : (B, 1) ndarray
        Series resistance-area [ohm m^2].
    shunt_S_m2 : (B, 1) ndarray
        Shunt conductance per area [S/m^2]; 0 is no shunt.
    breakdown_V : (B, 1) ndarray
        Reverse breakdown voltage [V] (negative); -inf for none.
    breakdown_factor, breakdown_exponent : (B, 1) ndarray
        Avalanche parameters a, m of the breakdown term (J. W. Bishop, Solar Cells 25 (1988) 73).
    luminescent_coupling : (B, 1) ndarray
        Fraction [-] of its radiative emission J0,rad (exp(Vj/Vt) - 1) that the next subcell
        below collects as photocurrent (circuit/coupling.py); 0 is none.
    photocurrent_A_m2 : (B, 1) ndarray or None
        Filled in by the optics stage.
    string : int
        Which series string (pair of terminals) it belongs to, 1-based.
    """

    name: str
    gap_eV: np.ndarray
    absorptance: np.ndarray = field(default_factory=lambda: batch(1.0))
    ere: np.ndarray = field(default_factory=lambda: batch(1.0))
    j02_A_m2: np.ndarray = field(default_factory=lambda: batch(0.0))
    series_ohm_m2: np.ndarray = field(default_factory=lambda: batch(0.0))
    shunt_S_m2: np.ndarray = field(default_factory=lambda: batch(0.0))
    breakdown_V: np.ndarray = field(default_factory=lambda: batch(-np.inf))
    breakdown_factor: np.ndarray = field(default_factory=lambda: batch(0.0))
    breakdown_exponent: np.ndarray = field(default_factory=lambda: batch(diode.BREAKDOWN_EXPONENT))
    photocurrent_A_m2: np.ndarray | None = None
    string: int = 1
    kind: str = "subcell"
    #: J01 fixed by a layer-physics model (at the stack's temperature); None: J0,rad / ERE
    j01_fixed_A_m2: np.ndarray | None = None
    #: library material whose Varshni law the gap follows with temperature (None: fixed gap)
    gap_material: str | None = None
    #: measured external quantum efficiency (wavelength_nm, eqe) within the stack: the
    #: photocurrent is then q integral Phi EQE over the light on the stack (None: step absorber)
    eqe_table: tuple | None = field(default=None, compare=False, repr=False)
    #: the file the measured EQE came from (for messages)
    eqe_file: str | None = field(default=None, compare=False, repr=False)
    #: fraction of its radiative emission the next subcell below collects (circuit/coupling.py)
    luminescent_coupling: np.ndarray = field(default_factory=lambda: batch(0.0))
    #: a silicon base's recombination law at a uniform quasi-Fermi-level split (laws/silicon.py):
    #: (F = q W, n0, p0, R = 1/tau + S/W, ni,eff [cm^-3][, 1: Schenk's narrowing follows injection]), or None
    bulk: tuple | None = field(default=None, compare=False, repr=False)
    _cache: dict = field(default_factory=dict, init=False, compare=False, repr=False)

    def j01_A_m2(self, temperature_K):
        """Ideality-1 saturation current density J0,rad/ERE [A/m^2] (generalized Planck law),
        or the layer-physics value when the compiler fixed one."""
        if self.j01_fixed_A_m2 is not None:
            return self.j01_fixed_A_m2
        key = _temperature_key(temperature_K)
        if key not in self._cache:
            self._cache[key] = radiative_saturation_current(
                self.gap_eV, temperature_K=temperature_K, absorptance=self.absorptance) / self.ere
        return self._cache[key]

    def is_explicit(self):
        """True when V(J) is explicit: one ideal diode, no shunt, no J02, no breakdown, no base law."""
        return bool(np.all(self.shunt_S_m2 == 0) and np.all(self.j02_A_m2 == 0)
                    and np.all(self.breakdown_factor == 0) and self.bulk is None)

    def bulk_columns(self, temperature_K):
        """The base law's columns at ``temperature_K`` (laws/silicon.py bulk_columns), or None."""
        if self.bulk is None:
            return None
        key = ("bulk", _temperature_key(temperature_K))
        if key not in self._cache:
            self._cache[key] = silicon.bulk_columns(self.bulk[:4], ni_eff_cm3=self.bulk[4],
                                                    injection_narrowing=self.bulk[5] if len(self.bulk) > 5 else 0.0,
                                                    temperature_K=temperature_K)
        return self._cache[key]

    def _junction(self, temperature_K):
        if self.photocurrent_A_m2 is None:
            raise RuntimeError(f"subcell {self.name!r} has no photocurrent: run the optics stage")
        return dict(photocurrent_A_m2=self.photocurrent_A_m2, j01_A_m2=self.j01_A_m2(temperature_K),
                    j02_A_m2=self.j02_A_m2, shunt_S_m2=self.shunt_S_m2,
                    temperature_K=temperature_K, breakdown_V=self.breakdown_V,
                    breakdown_factor=self.breakdown_factor,
                    breakdown_exponent=self.breakdown_exponent,
                    bulk=self.bulk_columns(temperature_K))

    def with_photocurrent(self, photocurrent_A_m2):
        return replace(self, photocurrent_A_m2=batch(photocurrent_A_m2))

    def on_string(self, number):
        """The same subcell wired in series string ``number`` (1-based), sharing this one's
        cached law parameters, tables and inverses: the string a subcell belongs to enters none
        of them, so they are the same numbers (the yield year solves each subcell on its own
        after the whole stack: one whose light no coupling from above changes reuses the
        stack's tables instead of building them again for every hour)."""
        moved = replace(self, string=number)
        object.__setattr__(moved, "_cache", self._cache)
        return moved

    def _needs_table(self, temperature_K=None):
        """True when a table serves Vj(J): with J02 or breakdown (no closed form), and with a
        shunt (the Wright-omega closed form costs more than a table lookup and two Newton
        steps). An ideal diode alone keeps its logarithm, and a batch too large for tables
        (TABLE_MAX_ENTRIES) keeps the laws' own root finds."""
        key = ("needs table", _temperature_key(temperature_K))
        if key not in self._cache:
            self._cache[key] = self._decide_table(temperature_K)
        return self._cache[key]

    def _decide_table(self, temperature_K):
        rows = max(np.shape(x)[0] for x in (self.gap_eV, self.j02_A_m2, self.shunt_S_m2,
                                               self.photocurrent_A_m2
                                               if self.photocurrent_A_m2 is not None
                                               else self.gap_eV))
        if np.ndim(temperature_K) == 2:
            rows = max(rows, np.shape(temperature_K)[0])
        if rows > TABLE_ROWS:
            return False
        return bool((self.j02_A_m2 > 0).any() or (self.shunt_S_m2 > 0).any() or (
            (self.breakdown_factor > 0) & np.isfinite(self.breakdown_V)).any()
            or self.bulk is not None)

    def _table(self, temperature_K):
        """:class:`~siltandem.inverse.LawTable` of the junction law at one temperature, built
        once (kernels.subcell_table): junction voltages from reverse bias (-1e7 V; with
        breakdown, just above the breakdown voltage or -3 V) to where the J01 diode alone would
        carry three times the photocurrent forward."""
        key = ("table", _temperature_key(temperature_K))
        if key not in self._cache:
            self._cache[key] = LawTable(*kernels.subcell_table(
                self._law_parameters(temperature_K), TABLE_FORWARD_POINTS, TABLE_REVERSE_POINTS))
        return self._cache[key]

    def _law_parameters(self, temperature_K):
        """Rows (Jph, J01, J02, G, Vt, Vbr, a, m, ...) of the compiled law
        (kernels.parameter_rows)."""
        key = ("parameters", _temperature_key(temperature_K))
        if key not in self._cache:
            if self.photocurrent_A_m2 is None:
                self._junction(temperature_K)                 # says what is missing
            self._cache[key] = kernels.parameter_rows(kernels.SUBCELL_LAW, _parameter_rows(
                self.photocurrent_A_m2, self.j01_A_m2(temperature_K), self.j02_A_m2,
                self.shunt_S_m2, thermal_voltage_V(np.asarray(temperature_K, dtype=float)),
                self.breakdown_V, self.breakdown_factor, self.breakdown_exponent),
                bulk=None if self.bulk is None else _parameter_rows(*self.bulk_columns(temperature_K)))
        return self._cache[key]

    def _junction_voltage_fast(self, current_A_m2, temperature_K, tabled=True):
        """Vj carrying the current and dJ/dVj there, through the table and the compiled
        per-entry Newton search inside its cell (kernels.py); currents beyond the table's
        range by the general root find of laws/diode.py; recent calls remembered (numerics.memo).
        ``tabled`` False with no table built yet: the same numbers without building it
        (laws/compiled_untabled.py), for a subcell asked at a few currents only."""
        store = self._cache.setdefault(("inverse memo", _temperature_key(temperature_K)), {})
        return recall(store, current_A_m2,
                      lambda j: self._junction_voltage_table(j, temperature_K, tabled))

    def _junction_voltage_table(self, current, temperature_K, tabled=True):
        """:meth:`_junction_voltage_fast` evaluated afresh."""
        params = self._law_parameters(temperature_K)
        if tabled or ("table", _temperature_key(temperature_K)) in self._cache:
            vj, slope, inside = kernels.invert(kernels.SUBCELL_LAW, params, self._table(temperature_K),
                                               current, increasing=False)
        else:
            from siltandem.laws.compiled_untabled import subcell_inverse_untabled

            targets = np.asarray(current, dtype=float)
            targets = targets.reshape(1, -1) if targets.ndim < 2 else targets
            if params.shape[0] > 1:
                targets = np.broadcast_to(targets, (params.shape[0], targets.shape[1]))
            vj, slope, inside = subcell_inverse_untabled(
                params, kernels.as_input(targets), TABLE_FORWARD_POINTS, TABLE_REVERSE_POINTS,
                kernels.XTOL, kernels.RTOL, kernels.MAX_ITERATIONS)
        if not inside.all():
            target = np.broadcast_to(current, vj.shape)
            out = ~inside
            junction = self._junction(temperature_K)
            # -inf (slope 1/-inf) beyond what the junction carries, as the search would say
            beyond = out & diode.beyond_reach(target, **junction)
            vj[beyond], slope[beyond] = -np.inf, -0.0
            out &= ~beyond
            if out.any():
                junction = {k: (np.broadcast_to(v, vj.shape)[out] if k != "bulk" else None if v is None
                                else tuple(np.broadcast_to(c, vj.shape)[out] for c in v))
                            for k, v in junction.items()}
                v_out, s_out = diode.junction_voltage(target[out], **junction)
                vj[out] = v_out
                with np.errstate(divide="ignore"):
                    slope[out] = 1.0 / s_out
        return vj, slope

    def voltage(self, current_A_m2, temperature_K):
        if not self._needs_table(temperature_K):
            return diode.subcell_voltage(current_A_m2, series_ohm_m2=self.series_ohm_m2,
                                         **self._junction(temperature_K))
        vj, slope_j = self._junction_voltage_fast(current_A_m2, temperature_K)
        with np.errstate(divide="ignore", invalid="ignore"):
            slope = np.where(np.isfinite(vj), 1.0 / slope_j, -np.inf)
        return vj - np.asarray(current_A_m2, dtype=float) * self.series_ohm_m2, \
            slope - self.series_ohm_m2

    def current(self, voltage_V, temperature_K):
        voltage = np.asarray(voltage_V, dtype=float)
        if voltage.ndim != 2:
            return diode.subcell_current(voltage, series_ohm_m2=self.series_ohm_m2,
                                         **self._junction(temperature_K))
        # the solve of laws/diode.py subcell_current, compiled (kernels.py)
        params = self._law_parameters(temperature_K)
        series = kernels.as_input(np.broadcast_to(
            self.series_ohm_m2, (params.shape[0], 1))[:, 0], dtype=float)
        if params.shape[0] > 1 and voltage.shape[0] != params.shape[0]:
            voltage = np.broadcast_to(voltage, (params.shape[0], voltage.shape[1]))
        return kernels.subcell_terminal_current(params, series, kernels.as_input(voltage),
                                                kernels.XTOL, kernels.RTOL,
                                                kernels.MAX_ITERATIONS)

    def junction_current(self, v_junction_V, temperature_K):
        """J [A/m^2] and dJ/dVj at junction voltages [V] (arrays (B, N) or (N,)): the law of
        laws/diode.py, compiled (kernels.py)."""
        v = np.asarray(v_junction_V, dtype=float)
        if v.ndim != 2:
            return diode.junction_current(v, **self._junction(temperature_K))
        params = self._law_parameters(temperature_K)
        if params.shape[0] > 1 and v.shape[0] != params.shape[0]:
            v = np.broadcast_to(v, (params.shape[0], v.shape[1]))
        return kernels.evaluate_law(kernels.SUBCELL_LAW, params, kernels.as_input(v))

    def pilot_current(self, v_junction_V, temperature_K):
        """Current, its slope and the terminal voltage from the junction voltage [V].

        Returns (J, dJ/dVj, V, dV/dVj) with V = Vj - J Rs.
        """
        current, slope = self.junction_current(v_junction_V, temperature_K)
        voltage = v_junction_V - current * self.series_ohm_m2
        return current, slope, voltage, 1.0 - self.series_ohm_m2 * slope

    def junction_voltage_at(self, current_A_m2, temperature_K, tabled=True):
        """Junction voltage Vj [V] carrying ``current_A_m2`` (``tabled`` False: without building
        the table if it is not built yet; the same numbers, see _junction_voltage_fast)."""
        if self._needs_table(temperature_K):
            return self._junction_voltage_fast(current_A_m2, temperature_K, tabled)[0]
        vj, _ = diode.junction_voltage(current_A_m2, **self._junction(temperature_K))
        return vj

    def lowest_junction_voltage(self):
        """Junction voltages must stay above this [V] (the breakdown voltage where it applies)."""
        active = (self.breakdown_factor > 0) & (self.shunt_S_m2 > 0) & np.isfinite(self.breakdown_V)
        return np.where(active, self.breakdown_V, -np.inf)


@dataclass(frozen=True)
class Resistor:
    """Lumped series resistance (contacts, grid, lateral spreading).

    Attributes
    ----------
    name : str
    series_ohm_m2 : (B, 1) ndarray
        Resistance-area [ohm m^2], >= 0.
    string : int
    """

    name: str
    series_ohm_m2: np.ndarray
    string: int = 1
    kind: str = "resistor"

    def voltage(self, current_A_m2, temperature_K):
        current = np.asarray(current_A_m2, dtype=float)
        slope = np.empty(np.broadcast_shapes(current.shape, self.series_ohm_m2.shape))
        slope[...] = -self.series_ohm_m2
        return -current * self.series_ohm_m2, slope

    def current(self, voltage_V, temperature_K):
        voltage = np.asarray(voltage_V, dtype=float)
        # with R = 0 any current flows at zero voltage: report 0 (its power V*J is 0 either way);
        # a subnormal R gives an infinite slope, as it should
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            current = np.where(self.series_ohm_m2 > 0, -voltage / self.series_ohm_m2, 0.0)
            slope = np.where(self.series_ohm_m2 > 0, -1.0 / self.series_ohm_m2, -np.inf)
        return current, np.broadcast_to(slope, voltage.shape)


#: branches of a tunnel junction's characteristic, in order of increasing junction voltage
TUNNEL_BRANCHES = ("tunnel", "negative", "thermal")
#: points of each branch's table of a tunnel junction (inverse.py)
TUNNEL_TABLE_POINTS = 256
#: the thermal branch's table runs from the valley this far forward [V] (beyond: root find)
THERMAL_TABLE_SPAN_V = 1.0
#: the branch tables' grids in units of the branch: the tunnel branch from -4 Vp to Vp (half as
#: many points in reverse), the others uniform from one end to the other
_UNIT_GRID = np.linspace(0.0, 1.0, TUNNEL_TABLE_POINTS)[None, :]
_TUNNEL_BRANCH_GRID = np.concatenate(
    [np.linspace(-4.0, 0.0, TUNNEL_TABLE_POINTS // 2 + 1)[:-1], _UNIT_GRID[0]])[None, :]


@dataclass(frozen=True)
class TunnelJunction:
    """An Esaki tunnel junction joining two subcells (three-term law, laws/esaki.py).

    The stack current drives the junction in its own forward direction (p++ side positive), so its
    voltage in the stack current's direction is -u, with u the junction's forward voltage and
    J = J_tunnel(u). J_tunnel rises to the peak, falls through negative differential resistance to
    the valley, and rises again on the thermal (diffusion) branch: V(J) has three branches.

    Attributes
    ----------
    name : str
    peak_A_m2, peak_V, valley_A_m2, valley_V : (B, 1) ndarray
        Requested peak and valley [A/m^2, V]; the combined curve peaks exactly at (peak_V, peak_A_m2).
    saturation_A_m2, ideality : (B, 1) ndarray
        Thermal diode current beyond the valley.
    excess_slope_per_V : (B, 1) ndarray or None
        Exponent of the excess current; None takes the law's default.
    string : int
    """

    name: str
    peak_A_m2: np.ndarray
    peak_V: np.ndarray
    valley_A_m2: np.ndarray
    valley_V: np.ndarray
    saturation_A_m2: np.ndarray = field(default_factory=lambda: batch(1e-13))
    ideality: np.ndarray = field(default_factory=lambda: batch(1.0))
    excess_slope_per_V: np.ndarray | None = None
    string: int = 1
    kind: str = "tunnel"
    _cache: dict = field(default_factory=dict, init=False, compare=False, repr=False)

    def _law(self, temperature_K):
        return dict(peak_A_m2=self.peak_A_m2, peak_V=self.peak_V, valley_A_m2=self.valley_A_m2,
                    valley_V=self.valley_V, excess_slope_per_V=self.excess_slope_per_V,
                    saturation_A_m2=self.saturation_A_m2, ideality=self.ideality,
                    temperature_K=temperature_K, exact_peak=True)

    def _prepared(self, temperature_K):
        key = ("law", _temperature_key(temperature_K))
        if key not in self._cache:
            self._cache[key] = esaki.prepare_tunnel_law(**self._law(temperature_K))
        return self._cache[key]

    def _law_parameters(self, temperature_K):
        """Rows (A, V1, Jv, Vv, C2, J0, n Vt, k, ...) of the compiled law
        (kernels.parameter_rows)."""
        key = ("parameters", _temperature_key(temperature_K))
        if key not in self._cache:
            self._cache[key] = esaki.compiled_parameter_rows(self._prepared(temperature_K))
        return self._cache[key]

    def junction_current(self, u, temperature_K):
        """J [A/m^2] and dJ/du at forward junction voltage u [V] (arrays (B, N): the law of
        laws/esaki.py compiled, kernels.py)."""
        u = np.asarray(u, dtype=float)
        if u.ndim == 2:
            params = self._law_parameters(temperature_K)
            if params.shape[0] > 1 and u.shape[0] != params.shape[0]:
                u = np.broadcast_to(u, (params.shape[0], u.shape[1]))
            return kernels.evaluate_law(kernels.TUNNEL_LAW, params, kernels.as_input(u))
        j, slope, _ = esaki.evaluate_prepared(u, self._prepared(temperature_K))
        return j, slope

    def extrema(self, temperature_K):
        """Attained (peak_V, peak_A_m2, valley_V, valley_A_m2) of the combined curve, (B, 1) each."""
        key = ("extrema", _temperature_key(temperature_K))
        if key not in self._cache:
            self._cache[key] = esaki.extrema_of_prepared(self._prepared(temperature_K),
                                                         exact_peak_V=self.peak_V)
        return self._cache[key]

    def peak(self, temperature_K):
        """(peak_V, peak_A_m2) of the combined curve, (B, 1) each, without the valley's search.

        The law is prepared with its exact-peak shape, so J'(Vp) = 0 in closed form and the
        curvature there is negative (laws/esaki.py checks it): Vp is the curve's first maximum
        (dJ/dV falls to a single minimum for V >= 0, Esaki notes), as :meth:`extrema` finds.
        """
        key = ("extrema", _temperature_key(temperature_K))
        if key in self._cache:
            return self._cache[key][:2]
        key = ("peak", key[1])
        if key not in self._cache:
            params = self._law_parameters(temperature_K)
            peak_v = kernels.as_input(np.broadcast_to(self.peak_V, (params.shape[0], 1)),
                                          dtype=float)
            self._cache[key] = (peak_v, kernels.evaluate_law(kernels.TUNNEL_LAW, params,
                                                             peak_v)[0])
        return self._cache[key]

    def _branch_table(self, temperature_K, branch):
        """:class:`~siltandem.inverse.LawTable` of J(u) on one branch, built once; None where
        the curve has no peak and valley to bound the branches."""
        key = ("table", branch, _temperature_key(temperature_K))
        if key not in self._cache:
            if branch == "tunnel":
                peak_v, peak_j = self.peak(temperature_K)
                valley_v = peak_v            # (unused on the tunnel branch)
            else:
                peak_v, peak_j, valley_v, valley_j = self.extrema(temperature_K)
            table = None
            small = np.shape(peak_v)[0] * 1.5 * TUNNEL_TABLE_POINTS <= TABLE_MAX_ENTRIES
            if small and np.all(np.isfinite(peak_v)) and np.all(np.isfinite(valley_v)):
                if branch == "tunnel":
                    # reverse to -4 Vp: the law carries about -600 Jp there
                    grid = peak_v * _TUNNEL_BRANCH_GRID
                elif branch == "negative":
                    grid = peak_v + (valley_v - peak_v) * _UNIT_GRID
                else:
                    grid = valley_v + THERMAL_TABLE_SPAN_V * _UNIT_GRID
                params = self._law_parameters(temperature_K)
                values, slopes = kernels.evaluate_law(kernels.TUNNEL_LAW, params,
                                                      kernels.as_input(grid))
                # curvature d2J/du2 at the peak and at the valley: the folds' quadratic models
                folds = kernels.tunnel_curvature(
                    params, kernels.as_input(np.concatenate([peak_v, valley_v], axis=1)))
                table = (LawTable(grid, values, slopes), np.abs(folds[:, :1]),
                         np.abs(folds[:, 1:]))
            self._cache[key] = table
        return self._cache[key]

    def junction_voltage(self, current_A_m2, temperature_K, branch="tunnel", extrema=None,
                         with_slope=False):
        """Forward junction voltage u [V] carrying ``current_A_m2`` on one branch; NaN off its range.

        ``extrema`` may pass in :meth:`extrema` computed once. With ``with_slope``, also dJ/du
        there. Through the branch's table (inverse.py) where it covers the current, else by a
        root find from a widened bracket.
        """
        if branch not in TUNNEL_BRANCHES:
            raise ValueError(f"unknown branch {branch!r}; one of {TUNNEL_BRANCHES}")
        if extrema is None and branch == "tunnel":
            # the tunnel branch ends at the peak: no valley needed
            peak_v, peak_j = self.peak(temperature_K)
            valley_v = valley_j = np.full_like(peak_v, np.nan)
        else:
            peak_v, peak_j, valley_v, valley_j = extrema or self.extrema(temperature_K)
        table = self._branch_table(temperature_K, branch)
        if table is not None:
            current = np.asarray(current_A_m2, dtype=float)
            if branch == "tunnel":
                inside = current <= peak_j * (1 + 1e-9)
                target = np.minimum(current, peak_j)
            elif branch == "negative":
                inside = (current >= valley_j * (1 - 1e-9)) & (current <= peak_j * (1 + 1e-9))
                target = np.minimum(np.maximum(current, valley_j), peak_j)
            else:
                inside = current >= valley_j * (1 - 1e-9)
                target = np.maximum(current, valley_j)
            table, peak_curvature, valley_curvature = table
            # in a cell ending at a fold (J' = 0) the first guess is the fold's quadratic model
            # J ~ J_fold - |J''| (u - u_fold)^2 / 2 (kernels.invert_table)
            fold_low = {"tunnel": None, "negative": peak_curvature,
                        "thermal": valley_curvature}[branch]
            fold_high = {"tunnel": peak_curvature, "negative": valley_curvature,
                         "thermal": None}[branch]
            u, slope, covered = kernels.invert(
                kernels.TUNNEL_LAW, self._law_parameters(temperature_K), table, target,
                increasing=branch != "negative", fold_low=fold_low, fold_high=fold_high)
            if not covered.all():
                # beyond the table (rare): the general search on the whole array
                searched = self._junction_voltage_search(current, temperature_K, branch,
                                                         (peak_v, peak_j, valley_v, valley_j))
                u = np.where(covered, u, searched)
                slope = np.where(covered, slope,
                                 self.junction_current(np.nan_to_num(u), temperature_K)[1])
            u = np.where(np.broadcast_to(inside, u.shape), u, np.nan)
            return (u, slope) if with_slope else u
        u = self._junction_voltage_search(current_A_m2, temperature_K, branch,
                                          (peak_v, peak_j, valley_v, valley_j))
        if with_slope:
            return u, self.junction_current(np.nan_to_num(u), temperature_K)[1]
        return u

    def _junction_voltage_search(self, current_A_m2, temperature_K, branch, extrema):
        """The general inverse on one branch: a bracket widened until it holds the root, then a
        safeguarded Newton search; NaN off the branch's range."""
        peak_v, peak_j, valley_v, valley_j = extrema
        current = np.asarray(current_A_m2, dtype=float)
        shape = np.broadcast(current, peak_v).shape
        current = np.broadcast_to(current, shape)

        def residual(u):
            return self.junction_current(u, temperature_K)[0] - current

        if branch == "tunnel":
            hi = np.broadcast_to(peak_v, shape)
            lo = np.broadcast_to(-1.0 * peak_v, shape).copy()
            for _ in range(60):  # widen into reverse bias until the current is below the target
                short = residual(lo) > 0
                if not np.any(short):
                    break
                lo = np.where(short, 2.0 * lo - 0.1, lo)
            inside = current <= peak_j * (1 + 1e-9)
        elif branch == "negative":
            lo, hi = np.broadcast_to(peak_v, shape), np.broadcast_to(valley_v, shape)
            inside = (current >= valley_j * (1 - 1e-9)) & (current <= peak_j * (1 + 1e-9))
        elif branch == "thermal":
            lo = np.broadcast_to(valley_v, shape)
            hi = lo + 0.5
            for _ in range(60):
                low = residual(hi) < 0
                if not np.any(low):
                    break
                hi = np.where(low, hi + 2.0 * (hi - lo), hi)
            inside = current >= valley_j * (1 - 1e-9)
        else:
            raise ValueError(f"unknown branch {branch!r}; one of {TUNNEL_BRANCHES}")
        # at the ends of a branch (a fold) rounding can leave no sign change: clamp to the end
        target = np.clip(current, np.where(branch == "thermal", valley_j, -np.inf),
                         np.where(branch == "tunnel", peak_j, np.inf))
        if branch == "negative":
            target = np.clip(current, valley_j, peak_j)

        def clamped(u):
            j, slope = self.junction_current(u, temperature_K)
            return j - target, slope

        # first guess on the tunnel branch: the zero-bias resistance Vp/(e Jp) of the law
        start = None
        if branch == "tunnel":
            start = target * np.broadcast_to(self.peak_V / (np.e * self.peak_A_m2), shape)
        u = safeguarded_newton(clamped, lo, hi, start=start)
        ends = np.where(np.abs(clamped(lo)[0]) <= np.abs(clamped(hi)[0]), lo, hi)
        u = np.where(np.isfinite(u), u, ends)
        return np.where(inside, u, np.nan)

    def voltage(self, current_A_m2, temperature_K, branch="tunnel", extrema=None):
        u, slope = self.junction_voltage(current_A_m2, temperature_K, branch, extrema,
                                         with_slope=True)
        with np.errstate(divide="ignore", invalid="ignore"):
            return -u, np.where(np.isfinite(u), -1.0 / slope, np.nan)

    def current(self, voltage_V, temperature_K):
        j, slope = self.junction_current(-np.asarray(voltage_V, dtype=float), temperature_K)
        return j, -slope


ELEMENT_KINDS = {"subcell": Subcell, "resistor": Resistor, "tunnel": TunnelJunction,
                 "isotype": IsotypeInterface}


def take_rows(element, rows):
    """The same element restricted to some designs of a batch (rows of every (B, 1) field, also
    inside a tuple: a subcell's silicon base columns)."""
    many = lambda v: isinstance(v, np.ndarray) and v.ndim == 2 and v.shape[0] > 1  # noqa: E731
    changes = {name: (value[rows] if many(value) else tuple(v[rows] if many(v) else v for v in value))
               for name, value in vars(element).items() if not name.startswith("_") and (
                   many(value) or (isinstance(value, tuple) and any(many(v) for v in value)))}
    return replace(element, **changes) if changes else element


def take_rows_with_tables(element, rows, temperature_K, rows_temperature_K):
    """:func:`take_rows`, and for a subcell the rows of its law parameters and junction table
    already built at ``temperature_K`` carried to the restriction, whose temperature is
    ``rows_temperature_K`` (its rows of it, or the same): each row of kernels.subcell_table and
    kernels.parameter_rows is its own design's law alone, so these are the numbers building
    them again would give (the certificate's later passes run on a string of the unproven
    designs alone, solve/string.py SeriesString.rows)."""
    taken = take_rows(element, rows)
    if taken is element or element.kind != "subcell":
        return taken
    old, new = _temperature_key(temperature_K), _temperature_key(rows_temperature_K)
    params = element._cache.get(("parameters", old))
    if params is not None:
        taken._cache.setdefault(("parameters", new), params if params.shape[0] == 1 else params[rows])
    table = element._cache.get(("table", old))
    if table is not None:
        taken._cache.setdefault(("table", new), table if table.rows == 1 else LawTable(
            table.u[rows], table.j[rows], table.slope[rows]))
    return taken

