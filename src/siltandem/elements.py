"""Circuit elements: frozen dataclasses binding parameters to the element laws.

Every numeric field is an array with a leading batch axis and a trailing axis of length 1
(shape (B, 1)), so that a batch of B designs of one topology is solved in one pass against a
(B, N) grid of currents. A single design has B = 1. SI inside: A/m^2, ohm m^2, S/m^2, V, eV.

Each element offers, for the series solver:

* ``voltage(current_A_m2, temperature_K)`` -> (V, dV/dJ): its voltage in the stack's current
  direction (generated current positive, so a subcell's voltage is positive in the power quadrant
  and a resistor's is -J R);
* ``current_limit(temperature_K)`` -> the largest current it can carry (inf if unbounded);
* ``current(voltage_V, temperature_K)`` -> (J, dJ/dV), the forward law, used to check power balance.

Subcells can also lead the trace as the solver's *pilot*: ``pilot_current(v_junction_V, T)``
gives (J, dJ/dVj, V, dV/dVj) from the junction voltage, so that every branch of the curve,
including the reverse-biased one, is reached without inverting near Jph (see solve.py).
"""
from dataclasses import dataclass, field, replace

import numpy as np

from .laws import diode
from .laws.radiative import radiative_saturation_current


def batch(value):
    """Any scalar or 1-D array -> float array of shape (B, 1)."""
    return np.asarray(value, dtype=float).reshape(-1, 1)


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

    def j01_A_m2(self, temperature_K):
        """Ideality-1 saturation current density J0,rad/ERE [A/m^2] (generalized Planck law)."""
        return radiative_saturation_current(self.gap_eV, temperature_K=temperature_K,
                                            absorptance=self.absorptance) / self.ere

    def _junction(self, temperature_K):
        if self.photocurrent_A_m2 is None:
            raise RuntimeError(f"subcell {self.name!r} has no photocurrent: run the optics stage")
        return dict(photocurrent_A_m2=self.photocurrent_A_m2, j01_A_m2=self.j01_A_m2(temperature_K),
                    j02_A_m2=self.j02_A_m2, shunt_S_m2=self.shunt_S_m2,
                    temperature_K=temperature_K, breakdown_V=self.breakdown_V,
                    breakdown_factor=self.breakdown_factor,
                    breakdown_exponent=self.breakdown_exponent)

    def with_photocurrent(self, photocurrent_A_m2):
        return replace(self, photocurrent_A_m2=batch(photocurrent_A_m2))

    def voltage(self, current_A_m2, temperature_K):
        return diode.subcell_voltage(current_A_m2, series_ohm_m2=self.series_ohm_m2,
                                     **self._junction(temperature_K))

    def current(self, voltage_V, temperature_K):
        return diode.subcell_current(voltage_V, series_ohm_m2=self.series_ohm_m2,
                                     **self._junction(temperature_K))

    def current_limit(self, temperature_K):
        """Largest current the subcell can carry [A/m^2]: unbounded with a shunt, else Jph + J0."""
        saturation = self.j01_A_m2(temperature_K) + self.j02_A_m2
        return np.where(self.shunt_S_m2 > 0, np.inf, self.photocurrent_A_m2 + saturation)

    def pilot_current(self, v_junction_V, temperature_K):
        """Current, its slope and the terminal voltage from the junction voltage [V].

        Returns (J, dJ/dVj, V, dV/dVj) with V = Vj - J Rs.
        """
        current, slope = diode.junction_current(v_junction_V, **self._junction(temperature_K))
        voltage = v_junction_V - current * self.series_ohm_m2
        return current, slope, voltage, 1.0 - self.series_ohm_m2 * slope

    def junction_voltage_at(self, current_A_m2, temperature_K):
        """Junction voltage Vj [V] carrying ``current_A_m2``."""
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
        return -current * self.series_ohm_m2, np.broadcast_to(-self.series_ohm_m2, current.shape)

    def current(self, voltage_V, temperature_K):
        voltage = np.asarray(voltage_V, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            current = np.where(self.series_ohm_m2 > 0, -voltage / self.series_ohm_m2, np.nan)
        return current, np.broadcast_to(-1.0 / self.series_ohm_m2, voltage.shape)

    def current_limit(self, temperature_K):
        return np.full_like(self.series_ohm_m2, np.inf)


ELEMENT_KINDS = {"subcell": Subcell, "resistor": Resistor}
