"""Compile a validated Stack into a Circuit of elements (file units -> SI, graph built and checked).

At circuit level each ``[[element]]`` table becomes one element. Layer stacks (``[[layer]]``)
are compiled by the layer stage once it exists; the Circuit they produce is the same kind of
object, so everything downstream is shared.
"""
import numpy as np

from . import units
from .circuit import build_circuit
from .elements import Resistor, Subcell, TunnelJunction, batch


def _subcell(spec):
    v = spec.values
    shunt = v["shunt_ohm_cm2"]
    conductance = 0.0 if np.isinf(shunt) else 1.0 / (shunt * units.OHM_CM2_TO_OHM_M2)
    breakdown = -v["breakdown_V"] if np.isfinite(v["breakdown_V"]) else -np.inf
    factor = v["breakdown_factor"] if np.isfinite(v["breakdown_V"]) else 0.0
    return Subcell(
        name=spec.name, gap_eV=batch(v["gap_eV"]), absorptance=batch(v["absorptance"]),
        ere=batch(v["ere"]), j02_A_m2=batch(units.a_m2(v["j02_mA_cm2"])),
        series_ohm_m2=batch(v["series_ohm_cm2"] * units.OHM_CM2_TO_OHM_M2),
        shunt_S_m2=batch(conductance), breakdown_V=batch(breakdown),
        breakdown_factor=batch(factor), breakdown_exponent=batch(v["breakdown_exponent"]),
        string=spec.string)


def _resistor(spec):
    return Resistor(spec.name, batch(spec.values["series_ohm_cm2"] * units.OHM_CM2_TO_OHM_M2),
                    string=spec.string)


def _tunnel(spec):
    v = spec.values
    slope = v["excess_slope_per_V"]
    return TunnelJunction(
        spec.name, peak_A_m2=batch(units.a_m2(v["peak_mA_cm2"])), peak_V=batch(v["peak_V"]),
        valley_A_m2=batch(units.a_m2(v["valley_mA_cm2"])), valley_V=batch(v["valley_V"]),
        saturation_A_m2=batch(units.a_m2(v["saturation_mA_cm2"])),
        ideality=batch(v["ideality"]), excess_slope_per_V=batch(slope) if slope > 0 else None,
        string=spec.string)


BUILDERS = {"subcell": _subcell, "resistor": _resistor, "tunnel": _tunnel}


def compile_stack(stack):
    """Stack -> Circuit (no light yet)."""
    elements = [BUILDERS[spec.kind](spec) for spec in stack.elements]
    return build_circuit(elements, stack.conditions, name=stack.name)
