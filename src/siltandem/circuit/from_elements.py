"""Compile a validated Stack into a Circuit of elements (file units -> SI, graph built and checked).

At circuit level each ``[[element]]`` table becomes one element. Layer stacks (``[[layer]]``)
are compiled by the layer stage once it exists; the Circuit they produce is the same kind of
object, so everything downstream is shared.
"""
import numpy as np

from siltandem import units
from siltandem.circuit.graph import build_circuit
from siltandem.circuit.elements import Resistor, Subcell, TunnelJunction, batch
from siltandem.circuit.isotype import isotype_element


def _gap_at(spec, temperature_K):
    """The subcell's gap at the run's temperature: as written, or, with ``material``, shifted by
    the library's Varshni law from the standard temperature (``gap_eV`` is the 298.15 K gap)."""
    v = spec.values
    if "material" not in v:
        return v["gap_eV"]
    from siltandem.constants import STANDARD_TEMPERATURE_K
    from siltandem.materials import load_material

    law = load_material(v["material"])
    return v["gap_eV"] + float(law.gap_eV(temperature_K)) - float(
        law.gap_eV(STANDARD_TEMPERATURE_K))


def _subcell(spec, temperature_K=None):
    v = spec.values
    # values may be arrays (a study varies them): every expression works elementwise
    shunt = np.asarray(v["shunt_ohm_cm2"], dtype=float)
    with np.errstate(divide="ignore"):
        conductance = np.where(np.isinf(shunt), 0.0, 1.0 / (shunt * units.OHM_CM2_TO_OHM_M2))
    has_breakdown = np.isfinite(np.asarray(v["breakdown_V"], dtype=float))
    breakdown = np.where(has_breakdown, -np.asarray(v["breakdown_V"], dtype=float), -np.inf)
    factor = np.where(has_breakdown, v["breakdown_factor"], 0.0)
    gap = v["gap_eV"] if temperature_K is None else _gap_at(spec, temperature_K)
    # j02_mA_cm2 is given at 298.15 K; J02 follows n_i (Sah-Noyce-Shockley), as J01 follows n_i^2
    j02 = units.a_m2(np.asarray(v["j02_mA_cm2"], dtype=float))
    if temperature_K is not None:
        from siltandem.constants import STANDARD_TEMPERATURE_K
        from siltandem.laws.diode import intrinsic_density_ratio

        j02 = j02 * intrinsic_density_ratio(temperature_K, gap_eV=gap,
                                            reference_temperature_K=STANDARD_TEMPERATURE_K,
                                            reference_gap_eV=v["gap_eV"])
    return Subcell(
        name=spec.name, gap_eV=batch(gap), absorptance=batch(v["absorptance"]),
        ere=batch(v["ere"]), j02_A_m2=batch(j02),
        series_ohm_m2=batch(v["series_ohm_cm2"] * units.OHM_CM2_TO_OHM_M2),
        shunt_S_m2=batch(conductance), breakdown_V=batch(breakdown),
        breakdown_factor=batch(factor), breakdown_exponent=batch(v["breakdown_exponent"]),
        string=spec.string, gap_material=v.get("material"), eqe_table=v.get("eqe_table"),
        eqe_file=v.get("eqe"), luminescent_coupling=batch(v.get("luminescent_coupling", 0.0)))


def _resistor(spec):
    return Resistor(spec.name, batch(spec.values["series_ohm_cm2"] * units.OHM_CM2_TO_OHM_M2),
                    string=spec.string)


def _tunnel(spec):
    v = spec.values
    slope = np.asarray(v["excess_slope_per_V"], dtype=float)
    return TunnelJunction(
        spec.name, peak_A_m2=batch(units.a_m2(v["peak_mA_cm2"])), peak_V=batch(v["peak_V"]),
        valley_A_m2=batch(units.a_m2(v["valley_mA_cm2"])), valley_V=batch(v["valley_V"]),
        saturation_A_m2=batch(units.a_m2(v["saturation_mA_cm2"])),
        ideality=batch(v["ideality"]),
        excess_slope_per_V=batch(slope) if np.all(slope > 0) else None,
        string=spec.string)


BUILDERS = {"subcell": _subcell, "resistor": _resistor, "tunnel": _tunnel}


def compile_element_stack(stack):
    """An element stack (``[[element]]`` tables) -> Circuit (no light yet)."""
    elements = []
    for spec in stack.elements:
        if spec.kind == "isotype":
            elements.append(isotype_element(spec, stack.conditions.temperature_K, stack.source))
        elif spec.kind == "subcell":
            elements.append(_subcell(spec, stack.conditions.temperature_K))
        else:
            elements.append(BUILDERS[spec.kind](spec))
    return build_circuit(elements, stack.conditions, name=stack.name)
