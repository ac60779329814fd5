"""The isotype heterointerface element (n-N or p-P): binds an interface's parameters to its
transport laws (laws/thermionic.py, laws/field_emission.py, laws/field_emission_fermi.py) and
their compiled forms (laws/compiled_isotype.py, laws/compiled_fermi.py,
laws/compiled_field_fermi.py). Shapes and units as in circuit/elements.py."""
from dataclasses import dataclass, field
import warnings

import numpy as np

from siltandem.laws import field_emission
from siltandem.laws import thermionic
from siltandem.constants import thermal_voltage_V
from siltandem.laws import compiled as kernels
from siltandem.laws import compiled_fermi, compiled_isotype
from siltandem.circuit.defaults import COMPILED_ISOTYPE_FIELDS, GENERAL_ISOTYPE_FIELDS, only_fields_set
from siltandem.circuit.element_parts import batch, reciprocal_range, temperature_key

#: isotype interfaces invert through the compiled law (laws/compiled_isotype.py); False: the numpy
#: laws (laws/thermionic.py, laws/field_emission.py), for benchmarks and checks
COMPILED_ISOTYPE = True


@dataclass(frozen=True)
class IsotypeInterface:
    """An isotype heterointerface (n-N or p-P): thermionic emission over the band-offset barrier.

    The law (laws/thermionic.py) gives J_law(V) for any alpha = eps1 N1 / (eps2 N2), side 1 being
    the accumulation side; V > 0 lowers the barrier, and J_law > 0 carries majority carriers from
    the depletion side into the accumulation side. ``direction`` = +1 when the stack current
    flows that way (the interface is forward biased by it), -1 when against it (reverse
    biased: the blocking case). The element's voltage in the stack current's direction is
    -s V_law(s J), s = direction: a drop either way.

    Attributes
    ----------
    name : str
    barrier_eV : (B, 1) ndarray
        Barrier top above the accumulation side's bulk Fermi level [eV].
    built_in_V : (B, 1) ndarray
        Built-in potential [V], > 0.
    alpha : (B, 1) ndarray
        eps1 N1 / (eps2 N2) [-].
    richardson_A_m2_K2 : (B, 1) ndarray
    direction : (B, 1) ndarray
        +1 or -1 (see above).
    carrier : str
        "electron" (n-N) or "hole" (p-P), for reports.
    offset_eV : (B, 1) ndarray
        Band step seen from the accumulation side [eV] (> 0 a spike), for reports; NaN unknown.
    string : int
    """

    name: str
    barrier_eV: np.ndarray
    built_in_V: np.ndarray
    alpha: np.ndarray
    richardson_A_m2_K2: np.ndarray
    direction: np.ndarray = field(default_factory=lambda: batch(1.0))
    carrier: str = "electron"
    offset_eV: np.ndarray = field(default_factory=lambda: batch(np.nan))
    string: int = 1
    kind: str = "isotype"
    #: for the band diagram (known when the interface is given by its materials): per side, ("accumulation",
    #: "depletion") -> dict(doping_m3, permittivity, gap_eV, fermi_depth_eV, material)
    sides: dict | None = field(default=None, compare=False, repr=False)
    #: the depletion side's form (laws/thermionic.py voltage_split): "exact" (the full Boltzmann
    #: depletion side, defined for every Vbi > 0 and smooth in doping, temperature and alpha; the
    #: default), or the closed forms "tail" (kT/q tail, undefined below Vbi = kT/q) and "plain"
    depletion: str = "exact"
    #: where the band offset came from: "given" (offset_eV), "measured" (the valence-band table,
    #: materials/valence_band.csv), "electron-affinity rule", or "" (the numbers form); for
    #: reports only (compare=False: interfaces that differ only in it share a penalty batch)
    offset_source: str = field(default="", compare=False)
    #: "thermionic" (emission over the spike only) or "thermionic-field" (also tunnelling
    #: through the depletion side below its top, laws/field_emission.py)
    transport: str = "thermionic"
    #: E00 of the depletion side [eV] (needed by "thermionic-field"); NaN unknown
    field_energy_eV: np.ndarray = field(default_factory=lambda: batch(np.nan))
    _cache: dict = field(default_factory=dict, init=False, compare=False, repr=False)
    #: Fermi level above the band edge in each side's bulk [eV] when a side is degenerate: the
    #: law then takes Fermi-Dirac charge and occupancy (laws/interface_charge.py); None: Boltzmann
    accumulation_fermi_eV: np.ndarray | None = None
    depletion_fermi_eV: np.ndarray | None = None
    #: fixed interface charge, reduced (laws/interface_charge.py reduced_sheet_charge); 0: none
    sheet_charge: np.ndarray = field(default_factory=lambda: batch(0.0))

    @property
    def field_sheet(self):
        """True where a thermionic-field interface carries a sheet charge (the numpy law of
        laws/field_emission_sheet.py, not compiled)."""
        return self.transport == "thermionic-field" and bool(np.any(self.sheet_charge != 0))

    @property
    def general_law(self):
        """True where the law runs its general form (a Fermi-Dirac side or a sheet charge)."""
        return (self.accumulation_fermi_eV is not None or self.depletion_fermi_eV is not None
                or bool(np.any(self.sheet_charge != 0)))

    def _law(self, temperature_K):
        law = dict(barrier_eV=self.barrier_eV, built_in_V=self.built_in_V, alpha=self.alpha,
                   richardson_A_m2_K2=self.richardson_A_m2_K2, temperature_K=temperature_K)
        if self.transport == "thermionic-field":
            law.update(depletion=self.depletion, field_energy_eV=self.field_energy_eV,
                       spike_eV=self.offset_eV)
            if self.accumulation_fermi_eV is not None:        # laws/field_emission_fermi.py
                law.update(accumulation_fermi_eV=self.accumulation_fermi_eV)
            if self.field_sheet:                              # laws/field_emission_sheet.py
                law.update(sheet_charge=self.sheet_charge)
        else:
            law.update(depletion=self.depletion)
            if self.general_law:
                law.update(accumulation_fermi_eV=self.accumulation_fermi_eV,
                           depletion_fermi_eV=self.depletion_fermi_eV, sheet_charge=self.sheet_charge)
        return law

    def _functions(self):
        """(current, inverse, slope range) of this interface's transport law."""
        if self.field_sheet:
            from siltandem.laws.field_emission_sheet import LAW_FUNCTIONS     # scipy: not at start-up
            return LAW_FUNCTIONS
        if self.transport == "thermionic-field" and self.accumulation_fermi_eV is not None:
            from siltandem.laws.field_emission_fermi import LAW_FUNCTIONS     # scipy: not at start-up
            return LAW_FUNCTIONS
        if self.transport == "thermionic-field":
            return (field_emission.field_emission_current_density,
                    field_emission.field_emission_voltage, field_emission.field_emission_slope_range)
        return (thermionic.isotype_current_density, thermionic.isotype_voltage,
                thermionic.current_slope_range)

    def law_current(self, voltage_V, temperature_K):
        """J_law [A/m^2] and dJ/dV at the interface voltage V (V > 0 lowers the barrier)."""
        rows = self.compiled_rows(temperature_K)
        voltage = np.asarray(voltage_V, dtype=float)
        shape = np.broadcast_shapes(voltage.shape, self.direction.shape)
        if rows is not None and len(shape) == 2:
            return compiled_isotype.isotype_currents(rows, kernels.as_input(np.broadcast_to(voltage, shape)))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", thermionic.IsotypeDomainWarning)
            return self._functions()[0](voltage_V, with_derivative=True, **self._law(temperature_K))

    def compiled_rows(self, temperature_K):
        """Parameter rows (B, P) of the compiled law (laws/compiled_isotype.py), or None where
        this interface's law has no compiled form (the numpy law serves it)."""
        field = self.transport == "thermionic-field"
        # thermionic-field with a Fermi-Dirac accumulation side: the thermionic-field rows with that
        # side's columns (laws/compiled_field_fermi.py), exact depletion side only; with a sheet
        # charge: numpy only, for now (laws/field_emission_sheet.py)
        fermi_field = field and self.accumulation_fermi_eV is not None
        if (not COMPILED_ISOTYPE or self.transport not in field_emission.TRANSPORTS
                or (field and self.field_sheet)):
            return None
        form = self.depletion
        if form not in compiled_isotype.FORMS or (fermi_field and form != "exact"):
            return None
        key = ("rows", temperature_key(temperature_K))
        if key not in self._cache:
            # Fermi-Dirac sides or a sheet charge: the general law's kernels (laws/compiled_fermi.py)
            general = self.general_law and not field and form == "exact"
            names = (GENERAL_ISOTYPE_FIELDS if general else
                     COMPILED_ISOTYPE_FIELDS | {"accumulation_fermi_eV"} if fermi_field else COMPILED_ISOTYPE_FIELDS)
            known = only_fields_set(self, names)
            rows = (None if not known else compiled_fermi.fermi_rows(
                **self._law(temperature_K), direction=self.direction, width=kernels.PARAMETER_WIDTH) if general
                else self._compiled_rows(form, temperature_K))
            # the law near zero bias as a polynomial (the compiled element pass, slope ranges)
            self._cache[key] = None if rows is None else compiled_isotype.fill_expansion(rows)
        return self._cache[key]

    def _compiled_rows(self, form, temperature_K):
        return compiled_isotype.isotype_rows(
            built_in_V=self.built_in_V, alpha=self.alpha, barrier_eV=self.barrier_eV,
            richardson_A_m2_K2=self.richardson_A_m2_K2, temperature_K=temperature_K, form=form,
            transport=self.transport, field_energy_eV=self.field_energy_eV,
            spike_eV=self.offset_eV, direction=self.direction, width=kernels.PARAMETER_WIDTH,
            accumulation_fermi_eV=self.accumulation_fermi_eV if self.transport == "thermionic-field" else None)

    def voltage(self, current_A_m2, temperature_K):
        s = self.direction
        rows = self.compiled_rows(temperature_K)
        current = np.asarray(current_A_m2, dtype=float)
        shape = np.broadcast_shapes(current.shape, s.shape)
        if rows is not None and len(shape) == 2:
            law_current = kernels.as_input(np.broadcast_to(s * current, shape))
            v_law, djdv = compiled_isotype.isotype_voltages(rows, law_current)
            with np.errstate(divide="ignore", invalid="ignore"):
                return -s * v_law, -1.0 / djdv
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", thermionic.IsotypeDomainWarning)
            v_law, slope = self._functions()[1](s * np.asarray(current_A_m2, dtype=float),
                                                with_derivative=True, **self._law(temperature_K))
        return -s * v_law, -slope

    def current(self, voltage_V, temperature_K):
        s = self.direction
        j_law, slope = self.law_current(-s * np.asarray(voltage_V, dtype=float), temperature_K)
        return s * j_law, -slope

    def current_cap(self, temperature_K):
        """Largest stack current the law can carry [A/m^2]: the flat-band current when driven
        forward (just inside the law's domain), unbounded when driven in reverse."""

        tail = self.depletion == "tail"
        edge = self.built_in_V - (1.0 + 1e-6 if tail else 1e-6) * thermal_voltage_V(temperature_K)
        j, _ = self.law_current(edge, temperature_K)
        return np.where(self.direction > 0, j, np.inf)

    def voltage_slope_range(self, v_a, v_b, j_a, j_b, temperature_K, branch=None):
        """Smallest and largest dV/dJ = -1/(dJ_law/dV_law) between two operating points
        (V_law = -s V; laws/thermionic.py current_slope_range); (-inf, inf) where an end lies
        outside the law's domain."""
        s = self.direction
        x_a, x_b = -s * np.asarray(v_a, dtype=float), -s * np.asarray(v_b, dtype=float)
        rows = self.compiled_rows(temperature_K)
        shape = np.broadcast_shapes(x_a.shape, x_b.shape)
        if rows is not None and len(shape) == 2:
            low, high = compiled_isotype.isotype_slope_ranges(
                rows, *(kernels.as_input(np.broadcast_to(f(x_a, x_b), shape)) for f in (np.minimum, np.maximum)))
        else:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", thermionic.IsotypeDomainWarning)
                low, high = self._functions()[2](np.minimum(x_a, x_b), np.maximum(x_a, x_b),
                                                 **self._law(temperature_K))
        lo, hi = reciprocal_range(low, high, 0.0)
        return -hi, -lo
