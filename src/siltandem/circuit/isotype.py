"""Isotype interface elements from their file keys: the law's numbers given directly, or two
library materials aligned by the electron-affinity rule (element stacks and layer stacks alike),
each layer's Fermi level from Fermi-Dirac statistics (degenerate layers included); a side near or
past degeneracy (:data:`FERMI_DIRAC_WITHIN_KT`) also takes Fermi-Dirac charge and emission in the
thermionic law (laws/interface_charge.py, fast integrals of laws/fermi_dirac.py)."""

from siltandem import units
from siltandem.constants import BOLTZMANN_EV_K, RICHARDSON_FREE_A_M2_K2
from siltandem.circuit.elements import IsotypeInterface, batch
from siltandem.errors import StackError

#: a side of a materials-given interface takes the Fermi-Dirac law (charge and emission) when its
#: bulk Fermi level lies less than this many kT below its band edge, or inside the band. At
#: eta = (EF - Ec)/kT = -3 Boltzmann's density e^eta exceeds N F_1/2(eta) by e^eta / 2^1.5 = 1.8 %
#: (the first term of F_1/2's series, J. S. Blakemore, Solid-State Electron. 25 (1982) 1067), and
#: the difference grows tenfold for every 2.3 kT closer to the band: below it the Boltzmann law
#: (compiled, fast) stays, bit for bit
FERMI_DIRAC_WITHIN_KT = 3.0
#: the interface key ``statistics`` (layer stacks: on the upper layer): "fermi-dirac" (the default)
#: gives a side within FERMI_DIRAC_WITHIN_KT of its band the Fermi-Dirac law (compiled,
#: laws/compiled_fermi.py); "boltzmann" keeps the Boltzmann law on every side (Fermi-Dirac Fermi
#: levels only: the law before the Fermi-Dirac form, bit for bit)
STATISTICS = ("fermi-dirac", "boltzmann")
#: the transport of a materials-given interface (element and layer stacks) without a transport
#: key: tunnelling through the spike counted (laws/field_emission.py); "thermionic" restores the
#: earlier default (emission over the spike only), e.g. to compare
DEFAULT_TRANSPORT = "thermionic-field"
#: a thermionic-field interface's accumulation side within FERMI_DIRAC_WITHIN_KT of its band takes
#: Fermi-Dirac charge (the band-bending split, laws/field_emission_fermi.py, compiled through
#: laws/compiled_field_fermi.py; emission and tunnelling stay Boltzmann, the depletion side too).
#: On by default; False keeps Boltzmann charge there (for comparisons); statistics = "boltzmann"
#: keeps the Boltzmann law either way
FERMI_DIRAC_FIELD = True


def isotype_element(spec, temperature_K, file=None):
    v = spec.values
    if "upper_material" in v:
        return isotype_from_materials(spec, temperature_K, file)
    if "alpha" in v:
        alpha = v["alpha"]
    else:
        alpha = (v["accumulation_permittivity"] * v["accumulation_doping_cm3"]
                 / (v["depletion_permittivity"] * v["depletion_doping_cm3"]))
    richardson = v.get("richardson_A_cm2_K2", RICHARDSON_FREE_A_M2_K2 * 1e-4) * 1e4
    transport, field_energy = v.get("transport", "thermionic"), float("nan")
    if transport == "thermionic-field":
        from siltandem.laws.field_emission import field_energy_eV

        field_energy = float(field_energy_eV(
            doping_m3=v["depletion_doping_cm3"] * units.PER_CM3_TO_PER_M3,
            relative_permittivity=v["depletion_permittivity"], mass_ratio=v["tunnelling_mass"]))
    sheet = 0.0
    if v.get("sheet_charge_cm2", 0.0) != 0.0:
        sheet = _reduced_sheet(v["sheet_charge_cm2"], v["carrier"], v["depletion_doping_cm3"],
                               v["depletion_permittivity"], temperature_K)
    return IsotypeInterface(
        spec.name, barrier_eV=batch(v["barrier_eV"]), built_in_V=batch(v["built_in_V"]),
        transport=transport, field_energy_eV=batch(field_energy),
        alpha=batch(alpha), richardson_A_m2_K2=batch(richardson),
        direction=batch(1.0 if v["orientation"] == "forward" else -1.0), carrier=v["carrier"],
        string=spec.string, sheet_charge=batch(sheet))


def _reduced_sheet(sheet_charge_cm2, carrier, depletion_doping_cm3, permittivity, temperature_K):
    """The fixed interface charge in the laws' reduced form (laws/interface_charge.py; both
    transports carry it: laws/field_emission_sheet.py for thermionic-field emission)."""
    from siltandem.laws.interface_charge import reduced_sheet_charge

    return float(reduced_sheet_charge(
        sheet_charge_cm2, carrier=carrier,
        depletion_doping_m3=depletion_doping_cm3 * units.PER_CM3_TO_PER_M3,
        depletion_permittivity=permittivity, temperature_K=temperature_K))


def isotype_from_materials(spec, temperature_K, file, layer_names=None):
    """The interface element from two library materials (``spec.values``: materials, dopings,
    carrier, flow, optional offset, transport, sheet charge); ``layer_names`` (upper, lower) the
    layer stack's layer names, for warnings."""
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
    offset, offset_source = band_offset(upper, lower, v["carrier"], temperature_K, v.get("offset_eV"))
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
        offset_eV=offset)
    if float(alignment.built_in_V) <= 0:
        raise StackError("the two layers' Fermi levels line up: no built-in potential, no "
                         "barrier to model", file=file, where=spec.label,
                         fix="change a doping slightly, or use a resistor for this interface")
    upper_accumulates = bool(alignment.a_accumulates)
    down = v["carriers_flow"] == "down"
    # forward: majority carriers cross from the depletion side into the accumulation side
    forward = (down and not upper_accumulates) or (not down and upper_accumulates)
    from siltandem.laws.carriers import fermi_degeneracy_eV

    info = []
    names = layer_names or (None, None)
    for m, doping_key, band_dos, layer, name in zip(layers, ("upper_doping_cm3", "lower_doping_cm3"), dos,
                                                    ("upper", "lower"), names):
        doping = v[doping_key] * units.PER_CM3_TO_PER_M3
        # Fermi-Dirac, as in the alignment: band edge minus Fermi level, < 0 when degenerate
        depth = -float(fermi_degeneracy_eV(doping, band_states_m3=band_dos,
                                           temperature_K=temperature_K))
        info.append(dict(material=m.name, doping_m3=doping, permittivity=m.relative_permittivity,
                         gap_eV=float(m.gap_eV(temperature_K)), fermi_depth_eV=depth,
                         degenerate=depth < 0.0, layer=layer, layer_name=name))
    sides = {"accumulation": info[0 if upper_accumulates else 1],
             "depletion": info[1 if upper_accumulates else 0]}
    if "richardson_A_cm2_K2" in v:
        richardson = v["richardson_A_cm2_K2"] * 1e4
    else:
        attribute = "electron_richardson_A_m2_K2" if electron else "hole_richardson_A_m2_K2"
        richardson = min(getattr(m, attribute) for m in layers)
    # both transports on the exact Boltzmann depletion side (the element's default form): no
    # switch, defined for every Vbi > 0
    transport, field_energy = _transport(v, layers, upper_accumulates, temperature_K)
    kt = BOLTZMANN_EV_K * temperature_K
    fermi = {}
    statistics = v.get("statistics", "fermi-dirac")
    for role, side in sides.items():
        # the thermionic-field law: Fermi-Dirac on the accumulation side only, with FERMI_DIRAC_FIELD
        side["statistics"] = statistics
        form = transport == "thermionic" or (FERMI_DIRAC_FIELD and role == "accumulation")
        side["fermi_dirac"] = bool(statistics == "fermi-dirac" and form
                                   and side["fermi_depth_eV"] < FERMI_DIRAC_WITHIN_KT * kt)
        fermi[role] = batch(-side["fermi_depth_eV"]) if side["fermi_dirac"] else None
    sheet = 0.0
    if v.get("sheet_charge_cm2", 0.0) != 0.0:
        depleting = sides["depletion"]
        sheet = _reduced_sheet(v["sheet_charge_cm2"], v["carrier"],
                               depleting["doping_m3"] / units.PER_CM3_TO_PER_M3,
                               depleting["permittivity"], temperature_K)
    return IsotypeInterface(
        spec.name, barrier_eV=batch(alignment.barrier_eV), built_in_V=batch(alignment.built_in_V),
        alpha=batch(alignment.alpha), richardson_A_m2_K2=batch(richardson),
        direction=batch(1.0 if forward else -1.0), carrier=v["carrier"],
        offset_eV=batch(alignment.offset_eV), string=spec.string, sides=sides,
        offset_source=offset_source, transport=transport,
        field_energy_eV=batch(field_energy), sheet_charge=batch(sheet),
        accumulation_fermi_eV=fermi["accumulation"], depletion_fermi_eV=fermi["depletion"])


def band_offset(upper, lower, carrier, temperature_K, given=None):
    """The band step from the upper to the lower layer in carrier energy (electrons Ec_lower -
    Ec_upper, holes Ev_upper - Ev_lower) [eV] and where it came from: the ``offset_eV`` key when
    given; else the measured valence-band positions of materials/valence_band.csv (I. Vurgaftman,
    J. R. Meyer, L. R. Ram-Mohan, J. Appl. Phys. 89 (2001) 5815) when both layers are on that
    scale, the conduction band following with each layer's gap at the temperature; else None (the
    electron-affinity rule of the band alignment, R. L. Anderson, Solid-State Electron. 5 (1962)
    341)."""
    from siltandem.materials.offsets import valence_band_maximum_eV

    if given is not None:
        return given, "given (offset_eV)"
    (ev_upper, source_upper), (ev_lower, source_lower) = (valence_band_maximum_eV(m)
                                                          for m in (upper, lower))
    if ev_upper is None or ev_lower is None:
        return None, "electron-affinity rule (R. L. Anderson 1962)"
    if carrier == "hole":
        step = ev_upper - ev_lower
    else:
        step = ((ev_lower + float(lower.gap_eV(temperature_K)))
                - (ev_upper + float(upper.gap_eV(temperature_K))))
    memory = " (a value from memory)" if "memory" in source_upper + source_lower else ""
    return step, (f"measured valence-band offset: {upper.name} {ev_upper:+.3f} eV, {lower.name} "
                  f"{ev_lower:+.3f} eV on the scale of I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan, "
                  f"J. Appl. Phys. 89 (2001) 5815{memory}")


def _transport(v, layers, upper_accumulates, temperature_K):
    """The transport key and E00 of the depletion side from its doping, permittivity and
    tunnelling mass (laws/field_emission.py). The default, the dopings being known, is
    :data:`DEFAULT_TRANSPORT` (heavy doping, the usual cure for a blocking interface, shows), with
    or without a sheet charge (laws/field_emission_sheet.py carries one)."""
    from siltandem.laws.field_emission import field_energy_eV
    from siltandem.materials.tunnelling import tunnelling_mass_ratio

    transport = v.get("transport", DEFAULT_TRANSPORT)
    depletion = 1 if upper_accumulates else 0
    energy = field_energy_eV(
        doping_m3=v[("upper_doping_cm3", "lower_doping_cm3")[depletion]] * units.PER_CM3_TO_PER_M3,
        relative_permittivity=layers[depletion].relative_permittivity,
        mass_ratio=v.get("tunnelling_mass", tunnelling_mass_ratio(layers[depletion], v["carrier"])))
    return transport, float(energy)
