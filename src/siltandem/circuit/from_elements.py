"""Compile a validated Stack into a Circuit of elements (file units -> SI, graph built and checked).

At circuit level each ``[[element]]`` table becomes one element. Layer stacks (``[[layer]]``)
are compiled by the layer stage once it exists; the Circuit they produce is the same kind of
object, so everything downstream is shared.
"""
import numpy as np

from siltandem import units
from siltandem.circuit.graph import build_circuit
from siltandem.constants import RICHARDSON_FREE_A_M2_K2
from siltandem.circuit.elements import IsotypeInterface, Resistor, Subcell, TunnelJunction, batch
from siltandem.errors import StackError


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
        string=spec.string, gap_material=v.get("material"), eqe_table=_eqe(v.get("eqe")),
        eqe_file=v.get("eqe"))


def _eqe(path):
    if path is None:
        return None
    from siltandem.studies.yield_year import read_eqe_csv

    return read_eqe_csv(path)


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


def _isotype(spec, temperature_K, file=None):
    v = spec.values
    if "upper_material" in v:
        return _isotype_from_materials(spec, temperature_K, file)
    if "alpha" in v:
        alpha = v["alpha"]
    else:
        alpha = (v["accumulation_permittivity"] * v["accumulation_doping_cm3"]
                 / (v["depletion_permittivity"] * v["depletion_doping_cm3"]))
    richardson = v.get("richardson_A_cm2_K2", RICHARDSON_FREE_A_M2_K2 * 1e-4) * 1e4
    return IsotypeInterface(
        spec.name, barrier_eV=batch(v["barrier_eV"]), built_in_V=batch(v["built_in_V"]),
        alpha=batch(alpha), richardson_A_m2_K2=batch(richardson),
        direction=batch(1.0 if v["orientation"] == "forward" else -1.0), carrier=v["carrier"],
        string=spec.string)


def _isotype_from_materials(spec, temperature_K, file):
    from siltandem.laws.thermionic import isotype_band_alignment
    from siltandem.materials import MaterialError, load_material

    v = spec.values
    layers = []
    for side in ("upper", "lower"):
        try:
            layers.append(load_material(v[f"{side}_material"], v.get(f"{side}_composition")))
        except MaterialError as exc:
            raise StackError(str(exc), file=file, where=f"{spec.label}, key {side}_material",
                             fix="see `siltandem materials` for the library") from None
    upper, lower = layers
    electron = v["carrier"] == "electron"
    dos = [(m.conduction_dos_per_m3 if electron else m.valence_dos_per_m3)(temperature_K)
           for m in layers]
    alignment = isotype_band_alignment(
        carrier=v["carrier"], affinity_a_eV=upper.electron_affinity_eV,
        gap_a_eV=upper.gap_eV(temperature_K), band_dos_a_m3=dos[0],
        doping_a_m3=v["upper_doping_cm3"] * units.PER_CM3_TO_PER_M3,
        relative_permittivity_a=upper.relative_permittivity,
        affinity_b_eV=lower.electron_affinity_eV, gap_b_eV=lower.gap_eV(temperature_K),
        band_dos_b_m3=dos[1], doping_b_m3=v["lower_doping_cm3"] * units.PER_CM3_TO_PER_M3,
        relative_permittivity_b=lower.relative_permittivity, temperature_K=temperature_K,
        offset_eV=v.get("offset_eV"))
    if float(alignment.built_in_V) <= 0:
        raise StackError("the two layers' Fermi levels line up: no built-in potential, no "
                         "barrier to model", file=file, where=spec.label,
                         fix="change a doping slightly, or use a resistor for this interface")
    upper_accumulates = bool(alignment.a_accumulates)
    down = v["carriers_flow"] == "down"
    # forward: majority carriers cross from the depletion side into the accumulation side
    forward = (down and not upper_accumulates) or (not down and upper_accumulates)
    from siltandem.constants import BOLTZMANN_EV_K

    info = []
    for m, doping_key, band_dos in zip(layers, ("upper_doping_cm3", "lower_doping_cm3"), dos):
        doping = v[doping_key] * units.PER_CM3_TO_PER_M3
        info.append(dict(material=m.name, doping_m3=doping, permittivity=m.relative_permittivity,
                         gap_eV=float(m.gap_eV(temperature_K)),
                         fermi_depth_eV=float(BOLTZMANN_EV_K * temperature_K
                                              * np.log(band_dos / doping))))
    sides = {"accumulation": info[0 if upper_accumulates else 1],
             "depletion": info[1 if upper_accumulates else 0]}
    if "richardson_A_cm2_K2" in v:
        richardson = v["richardson_A_cm2_K2"] * 1e4
    else:
        attribute = "electron_richardson_A_m2_K2" if electron else "hole_richardson_A_m2_K2"
        richardson = min(getattr(m, attribute) for m in layers)
    # the kT/q tail form holds only a few kT/q away from flat band: a nearly flat interface
    # (built-in below 3 kT/q) takes the plain depletion form, defined up to flat band
    tail = bool(float(alignment.built_in_V) > 3 * BOLTZMANN_EV_K * temperature_K)
    return IsotypeInterface(
        spec.name, barrier_eV=batch(alignment.barrier_eV), built_in_V=batch(alignment.built_in_V),
        include_tail=tail,
        alpha=batch(alignment.alpha), richardson_A_m2_K2=batch(richardson),
        direction=batch(1.0 if forward else -1.0), carrier=v["carrier"],
        offset_eV=batch(alignment.offset_eV), string=spec.string, sides=sides)


BUILDERS = {"subcell": _subcell, "resistor": _resistor, "tunnel": _tunnel}


def compile_stack(stack):
    """Stack -> Circuit (no light yet)."""
    if stack.layers:
        from siltandem.circuit.from_layers import compile_layer_stack

        return compile_layer_stack(stack)
    elements = []
    for spec in stack.elements:
        if spec.kind == "isotype":
            elements.append(_isotype(spec, stack.conditions.temperature_K, stack.source))
        elif spec.kind == "subcell":
            elements.append(_subcell(spec, stack.conditions.temperature_K))
        else:
            elements.append(BUILDERS[spec.kind](spec))
    return build_circuit(elements, stack.conditions, name=stack.name)
