"""Luminescent coupling between subcells of a series string.

An upper subcell re-emits part of its recombination as light near its gap; the next subcell
below absorbs some of it and collects it as photocurrent. The model (element stacks, key
``luminescent_coupling`` of the *upper* subcell, c in [0, 1]):

    J_L,lower(J) = J_L,lower,0 + c * J0,rad,upper * max(exp(Vj,upper(J) / Vt) - 1, 0)

with J0,rad the radiative saturation current of the upper subcell's gap at the cell temperature
(laws.radiative.radiative_saturation_current, the generalized Planck law with its step
absorptance; the radiative part of J01 = J0,rad / ERE, so neither J02 nor the non-radiative part
of J01 emits), Vj,upper its junction voltage at the string current J and Vt = kT/q. Only emission
counts: at reverse bias the term is clipped to zero (it is of order J0,rad there, below 1e-20 A/m^2
for gaps above 1 eV). Detailed-balance treatment of the coupled series tandem: S. P. Bremner,
M. Y. Levy, C. B. Honsberg, Prog. Photovolt. 16 (2008) 225; A. S. Brown, M. A. Green, Physica E 14
(2002) 96 (from memory).

The string is solved in current, so the coupling is a chain: at a string current J the top
subcell's voltage gives its emission, which shifts the next subcell's photocurrent, whose
voltage then follows, and so on. A photocurrent shift ΔJ is the law at a shifted current,
Vj(J; Jph + ΔJ) = Vj(J - ΔJ; Jph) (the photocurrent enters the junction law additively), so every
lower subcell keeps its own table and compiled inverse. The subcell that leads the trace (the
solve's pilot) solves J = J_pilot(t) + ΔJ(J) for J by safeguarded Newton steps: g(J) = J - J_base
- ΔJ(J) rises with slope 1 - dΔJ/dJ >= 1 (the upper subcell's voltage falls with J), so the root
is unique and bracketed by [J_base, J_base + ΔJ(J_base)].
"""
from dataclasses import dataclass, field, fields

import numpy as np

from siltandem.circuit.elements import Subcell, batch
from siltandem.constants import thermal_voltage_V
from siltandem.laws import diode
from siltandem.laws.radiative import radiative_saturation_current
from siltandem.numerics.roots import bracketed_root

#: Newton steps of the pilot's coupled current at most (it converges quadratically: 3-4)
PILOT_ITERATIONS = 30
#: step, relative to |J| + Jph + ΔJ, at which the pilot's coupled current has converged: the
#: source's voltage is known to its inverse's tolerance (1e-13 V), which leaves the emission
#: uncertain by more
PILOT_RTOL = 1e-14


def radiative_limit_A_m2(subcell, temperature_K):
    """J0,rad [A/m^2] of a subcell's gap at ``temperature_K``: the radiative part of its
    recombination (also where the layer physics fixed J01 itself)."""
    key = ("radiative limit", np.asarray(temperature_K, dtype=float).tobytes())
    if key not in subcell._cache:
        subcell._cache[key] = radiative_saturation_current(
            subcell.gap_eV, temperature_K=temperature_K, absorptance=subcell.absorptance)
    return subcell._cache[key]


def emission_A_m2(subcell, v_junction_V, temperature_K):
    """The radiative emission current J0,rad (exp(Vj/Vt) - 1) [A/m^2] at junction voltages
    ``v_junction_V``, clipped at zero (emission only) and zero where Vj is not finite."""
    vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
    with np.errstate(over="ignore", invalid="ignore"):
        emitted = radiative_limit_A_m2(subcell, temperature_K) * np.expm1(v_junction_V / vt)
    return np.where(np.isfinite(emitted) & (emitted > 0), emitted, 0.0)


@dataclass(frozen=True)
class CoupledSubcell(Subcell):
    """A subcell whose photocurrent gains ``source_fraction`` of the radiative emission of
    ``source`` (the subcell above it in the string) at the string's current."""

    source: Subcell | None = field(default=None, compare=False, repr=False)
    source_fraction: np.ndarray = field(default_factory=lambda: batch(0.0))

    def is_explicit(self):
        """True when this subcell and its source are ideal single diodes (solve/explicit.py: the
        source's emission is then affine in the string current, linear_emission)."""
        return Subcell.is_explicit(self) and self.source.is_explicit()

    def coupled_current(self, current_A_m2, temperature_K):
        """ΔJ [A/m^2] the subcell gains at string current ``current_A_m2`` and dΔJ/dJ (<= 0)."""
        current = np.asarray(current_A_m2, dtype=float)
        rs = self.source.series_ohm_m2
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            v, dv = self.source.voltage(current, temperature_K)
            vj, dvj = v + current * rs, dv + rs
            vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
            emitted = emission_A_m2(self.source, vj, temperature_K)
            shift = self.source_fraction * emitted
            # d/dJ of c J0,rad (exp(Vj/Vt) - 1) = c J0,rad exp(Vj/Vt) dVj/dJ / Vt
            slope = self.source_fraction * (emitted + radiative_limit_A_m2(
                self.source, temperature_K)) * dvj / vt
        slope = np.where((emitted > 0) & np.isfinite(slope), slope, 0.0)
        return shift, slope

    def emission_slope_factor(self, temperature_K):
        """c J0,rad,source / Vt [A/m^2/V]: |dΔJ/dJ| <= this * exp(Vj,source/Vt) |dVj,source/dJ|
        (certificate.py bounds the coupled slopes with it)."""
        vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
        return self.source_fraction * radiative_limit_A_m2(self.source, temperature_K) / vt

    def voltage(self, current_A_m2, temperature_K):
        current = np.asarray(current_A_m2, dtype=float)
        shift, dshift = self.coupled_current(current, temperature_K)
        v, dv = Subcell.voltage(self, current - shift, temperature_K)
        rs = self.series_ohm_m2
        coupled = dshift != 0
        return v - shift * rs, np.where(coupled, (dv + rs) * (1.0 - dshift) - rs, dv)

    def junction_voltage_at(self, current_A_m2, temperature_K, tabled=True):
        current = np.asarray(current_A_m2, dtype=float)
        shift, _ = self.coupled_current(current, temperature_K)
        return Subcell.junction_voltage_at(self, current - shift, temperature_K, tabled)

    def pilot_current(self, v_junction_V, temperature_K):
        """(J, dJ/dVj, V, dV/dVj) at junction voltage ``v_junction_V``: J = J_base + ΔJ(J)
        solved by Newton steps kept inside [J_base, J_base + ΔJ(J_base)]."""
        base, base_slope = Subcell.junction_current(self, v_junction_V, temperature_K)
        shift, dshift = self.coupled_current(base, temperature_K)
        low, high = base.copy(), base + shift
        # the first Newton step from J_base (g = -ΔJ there), inside the bracket as dΔJ/dJ <= 0
        with np.errstate(invalid="ignore", divide="ignore"):
            current = np.where(shift > 0, base + shift / (1.0 - dshift), base)
        # the scale of the currents involved (near open circuit J itself is near zero)
        scale = np.abs(self.photocurrent_A_m2) + shift
        # an entry keeps the step at which it stopped, however long the others go on: a design's
        # current does not depend on its batch (numerics.safeguarded_newton freezes its entries
        # the same way)
        stopped = np.zeros(np.shape(current), dtype=bool)
        for _ in range(PILOT_ITERATIONS):
            # (the stopped entries at NaN: their values are not used, and NaN costs nothing)
            shift, dshift = self.coupled_current(np.where(stopped, np.nan, current), temperature_K)
            g = current - base - shift
            low = np.where(g < 0, current, low)
            high = np.where(g > 0, current, high)
            with np.errstate(invalid="ignore", divide="ignore"):
                step = current - g / (1.0 - dshift)
            inside = (step >= low) & (step <= high)
            new = np.where(inside, step, 0.5 * (low + high))
            done = (new == current) | ~np.isfinite(new) | (
                np.abs(new - current) <= PILOT_RTOL * (np.abs(current) + scale))
            current = np.where(stopped, current, new)
            stopped = stopped | done
            if np.all(stopped):
                break
        shift, dshift = self.coupled_current(current, temperature_K)
        with np.errstate(invalid="ignore", divide="ignore"):
            slope = np.where(dshift != 0, base_slope / (1.0 - dshift), base_slope)
        voltage = v_junction_V - current * self.series_ohm_m2
        return current, slope, voltage, 1.0 - self.series_ohm_m2 * slope

    def current(self, voltage_V, temperature_K):
        """The forward law at terminal voltage ``voltage_V`` with the coupled photocurrent:
        J = J_sub(V; Jph + ΔJ(J)), bracketed by [J_sub(V; Jph), that + ΔJ(that)] (the subcell's
        current rises by at most ΔJ with its photocurrent). Power balance uses it."""
        voltage = np.asarray(voltage_V, dtype=float)
        junction = self._junction(temperature_K)
        photocurrent = junction.pop("photocurrent_A_m2")

        def law(current):
            shift, _ = self.coupled_current(current, temperature_K)
            return diode.subcell_current(voltage, series_ohm_m2=self.series_ohm_m2,
                                         photocurrent_A_m2=photocurrent + shift, **junction)

        lower, _ = diode.subcell_current(voltage, series_ohm_m2=self.series_ohm_m2,
                                         photocurrent_A_m2=photocurrent, **junction)
        shift, _ = self.coupled_current(lower, temperature_K)
        coupled = shift > 0
        if not np.any(coupled):
            return law(lower)
        root = bracketed_root(lambda j: j - law(j)[0], lower,
                              lower + shift * (1 + 1e-12) + 1e-300 * coupled)
        return law(np.where(coupled, root, lower))


def linear_emission(element, size):
    """(size,) True where a coupled subcell's gain is affine in the string current: its source
    is one ideal diode (no J02, shunt or breakdown) whose own photocurrent is itself affine in J
    (a chain), so J0,rad (exp(Vj/Vt) - 1) = (J0,rad/J01) (Jph,source - J) (clipped at 0 only
    within J01 of the source's largest current). Then Vj(J - ΔJ(J)) stays concave in J
    (solve.certificate.is_concave)."""
    source = element.source
    ideal = ((source.shunt_S_m2 == 0) & (source.j02_A_m2 == 0)
             & ~((source.breakdown_factor > 0) & np.isfinite(source.breakdown_V)))
    ideal = np.broadcast_to(ideal, (size, 1))[:, 0]
    if is_coupled(source):
        ideal = ideal & linear_emission(source, size)
    return ideal


def is_coupled(element):
    """True for a subcell that collects the emission of the one above it."""
    return isinstance(element, CoupledSubcell)


def couple_string(elements):
    """The string's elements with each subcell below one with ``luminescent_coupling`` > 0
    (anywhere in the batch) bound to it as a :class:`CoupledSubcell`; the same list when no
    subcell couples (so a coupling of 0 solves exactly as no key)."""
    out, above = [], None
    for element in elements:
        if element.kind != "subcell":
            out.append(element)
            continue
        if above is not None and np.any(above.luminescent_coupling > 0):
            values = {f.name: getattr(element, f.name) for f in fields(element)
                      if f.init and f.name not in ("source", "source_fraction")}
            coupled = CoupledSubcell(**values, source=above,
                                     source_fraction=above.luminescent_coupling)
            # the same law and tables as the uncoupled subcell (the photocurrent shift is a
            # shift of the current at which they are read)
            object.__setattr__(coupled, "_cache", element._cache)
            element = coupled
        out.append(element)
        above = element
    return out
