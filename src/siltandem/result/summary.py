"""The summary rules: what the JSON contract (README, "Outputs") of one solved stack holds.

:func:`summarise` builds it in named steps: per string its row of headline numbers and the warnings
about its curve, its tunnel junctions, its elements at the MPP (with the isotype interfaces); then
the power balance, the subcells, the stack's headline, cautions and the model's own notes.
:func:`missing_value_warnings` adds one warning for every number without a value.
"""
import math

import numpy as np

from siltandem import units
from siltandem.result.record import first_value
from siltandem.result.spectral import spectral_bands

SIGN_CONVENTION = ("generated current positive: the power quadrant is current > 0 and "
                   "voltage > 0; an element's voltage is taken in the stack current's direction")
CAUTION = ("Results are models, not measurements. Concentrated light, high currents and module "
           "voltages are electrical and optical hazards: follow local codes and licensed practice.")
#: relative power-balance error above which a result carries a warning
POWER_BALANCE_TOLERANCE = 1e-9
#: an isotype interface dropping more than this at the MPP is flagged as blocking [V]
BLOCKING_DROP_V = 0.1
#: ... and so is one whose removal would regain more than this [% absolute]
BLOCKING_PENALTY_PCT = 1.0

#: headline numbers of a string, their words for warnings, and why one can be missing
_HEADLINE = (("voc_V", "Voc", "the curve has no zero-current point"),
             ("jsc_mA_cm2", "Jsc", "the curve does not reach 0 V"),
             ("fill_factor_pct", "fill factor", "it needs a positive Voc and Jsc"),
             ("mpp_V", "MPP voltage", "no maximum power point was found"),
             ("mpp_mA_cm2", "MPP current", "no maximum power point was found"),
             ("efficiency_pct", "efficiency", "no maximum power point was found"))


def summarise(stack, conditions, light, circuit, solutions, alone, without):
    """The summary of one solved stack (a dict, the JSON contract; trade units in the names).

    ``solutions`` holds one solution per string of ``circuit``, ``alone`` each subcell solved on its
    own (by name), ``without`` the MPP power [W/m^2] each passive element's removal would regain.
    Warnings come string by string (its curve, its tunnel junctions, its elements in current
    order), then the power balance and the model's notes.
    """
    irradiance = light.irradiance_W_m2
    temperature_K = conditions.temperature_K
    warnings_, strings, elements, tunnels, interfaces = [], [], [], [], []
    total_power = balance = 0.0
    for number, (string, solution) in enumerate(zip(circuit.strings, solutions), start=1):
        row, said = _string_row(number, string, solution, irradiance)
        tunnel_rows, tunnel_said = _tunnel_rows(number, string, solution, temperature_K)
        element_rows, interface_rows, element_said = _element_rows(
            number, string, solution, alone, without, irradiance)
        strings.append(row)
        tunnels += tunnel_rows
        elements += element_rows
        interfaces += interface_rows
        warnings_ += said + tunnel_said + element_said
        total_power += row["mpp_W_m2"]
        balance += first_value(solution.power_balance_error_W_m2)
    warnings_ += _balance_warnings(balance, total_power, irradiance)
    warnings_ += _model_warnings(circuit, temperature_K)
    limiting = {row["limiting_subcell"] for row in strings}
    photons = _photons(circuit)
    return {
        "stack": stack.name,
        "notes": stack.notes,
        "source_file": stack.source,
        "conditions": _conditions(conditions, light),
        **_headline(strings, total_power, irradiance),
        "strings": strings,
        "subcells": _subcell_rows(circuit, temperature_K, alone, limiting, irradiance,
                                  _coupled(solutions)),
        "elements": elements,
        "tunnel_junctions": tunnels,
        "interfaces": interfaces,
        "parasitic": [{"layer": name, "absorbed_mA_cm2": units.ma_cm2(value)}
                      for name, value in circuit.optics.get("parasitic_A_m2", {}).items()],
        **({"spectral_bands": spectral_bands(circuit)} if circuit.model is not None else {}),
        "photons": photons,
        **{key: value for key, value in photons.items()
           if key in ("incident_mA_cm2", "reflected_mA_cm2", "transmitted_mA_cm2")},
        "power_balance_error_W_m2": balance,
        "warnings": warnings_,
        "cautions": _cautions(conditions.suns),
        "sign_convention": SIGN_CONVENTION,
        "model": _model_text(circuit),
    }


def _conditions(conditions, light):
    """The conditions solved under, with the spectrum's description and irradiance [W/m^2]."""
    return {"spectrum": conditions.spectrum, "spectrum_description": light.description,
            "suns": conditions.suns, "temperature_K": conditions.temperature_K,
            "irradiance_W_m2": light.irradiance_W_m2,
            "spectrum_integral_W_m2": light.integral_W_m2,
            "terminals": conditions.terminals}


def _headline(strings, total_power, irradiance):
    """The stack's headline numbers: efficiency and MPP power of all strings together; Voc, Jsc,
    fill factor and MPP of a single string (None for several strings: their rows hold them);
    regime and MPP proof of the string, or one per string."""
    one = len(strings) == 1
    head = strings[0] if one else {}
    regimes = [r["regime"] for r in strings]
    return {
        "efficiency_pct": 100 * total_power / irradiance,
        "voc_V": head.get("voc_V"), "jsc_mA_cm2": head.get("jsc_mA_cm2"),
        "fill_factor_pct": head.get("fill_factor_pct"), "mpp_V": head.get("mpp_V"),
        "mpp_mA_cm2": head.get("mpp_mA_cm2"), "mpp_W_m2": total_power,
        "regime": regimes[0] if one else regimes,
        "mpp_certificate": head.get("mpp_certificate") if one else [
            r["mpp_certificate"] for r in strings],
    }


def _string_row(number, string, solution, irradiance):
    """One string's row (headline numbers, limiting subcell, regime, proof of the MPP) and the
    warnings about its curve: no operating point, capped at an interface, past a tunnel peak."""
    subcells = [e for e in string if e.kind == "subcell"]
    pilot = subcells[int(solution.pilot_index[0])]
    power = first_value(solution.mpp_W_m2)
    warnings_ = []
    if solution.failed[0]:
        warnings_.append(_no_operating_point(number, solution))
    if solution.capped is not None and solution.capped[0]:
        names = ", ".join(repr(e.name) for e in string if e.kind == "isotype")
        warnings_.append(f"string {number}: the current is capped at an isotype interface's "
                         f"flat-band current ({names}): the law has no voltage beyond it, so "
                         "the curve stops above zero volts and there is no Jsc (null); the "
                         "MPP sits at the cap and is an upper bound of this model")
    row = {
        "string": number, "elements": [e.name for e in string],
        "efficiency_pct": 100 * power / irradiance, "voc_V": first_value(solution.voc_V),
        "jsc_mA_cm2": units.ma_cm2(first_value(solution.jsc_A_m2)),
        "fill_factor_pct": 100 * first_value(solution.fill_factor), "mpp_V": first_value(solution.mpp_V),
        "mpp_mA_cm2": units.ma_cm2(first_value(solution.mpp_A_m2)), "mpp_W_m2": power,
        "limiting_subcell": pilot.name, "regime": str(solution.regime[0]),
        "mpp_certificate": _certificate(solution)}
    if str(solution.regime[0]).startswith("past peak"):
        warnings_.append(f"string {number}: a tunnel junction is driven past its peak on the "
                         f"traced curve ({solution.regime[0]}); see `--sweep up|down` for "
                         "what a voltage sweep measures")
    return row, warnings_


def _no_operating_point(number, solution):
    """The warning for a string whose solve failed: what is missing, in words. Voc is the point
    of zero current, where only the subcells have a voltage, so it stays (solve/)."""
    missing = [label for label, value in (
        ("Voc", solution.voc_V), ("Jsc", solution.jsc_A_m2),
        ("the MPP", solution.mpp_W_m2), ("the fill factor", solution.fill_factor))
        if not np.isfinite(first_value(value))]
    listed = " and ".join(filter(None, [", ".join(missing[:-1]), missing[-1]])) \
        if missing else "its numbers"
    note = ("; Voc is the point of zero current, where only the subcells have a "
            "voltage" if np.isfinite(first_value(solution.voc_V)) else "")
    return f"string {number}: no operating point found for {listed} (null){note}"


def _tunnel_rows(number, string, solution, temperature_K):
    """One row per tunnel junction of a string (peak, valley, branch at the MPP), and a warning
    for each whose peak current is below the string's largest photocurrent."""
    rows, warnings_ = [], []
    jph_max = max(first_value(e.photocurrent_A_m2) for e in string if e.kind == "subcell")
    for element in string:
        if element.kind != "tunnel":
            continue
        ext = element.extrema(temperature_K)
        peak = first_value(ext.peak_A_m2)
        rows.append({
            "name": element.name, "string": number,
            "peak_mA_cm2": units.ma_cm2(peak), "peak_V": first_value(ext.peak_V),
            "valley_mA_cm2": units.ma_cm2(first_value(ext.valley_A_m2)),
            "valley_V": first_value(ext.valley_V),
            "peak_over_largest_photocurrent": peak / jph_max if jph_max > 0 else math.nan,
            "branch_at_mpp": solution.tunnel_branch_at_mpp[element.name][0]})
        if peak < jph_max:
            warnings_.append(f"tunnel junction {element.name!r}: peak current "
                             f"{units.ma_cm2(peak):.3g} mA/cm2 is below the string's largest "
                             f"photocurrent {units.ma_cm2(jph_max):.3g} mA/cm2 (design rule, "
                             "common practice: the peak must exceed Jsc times the "
                             "concentration)")
    return rows, warnings_


def _element_rows(number, string, solution, alone, without, irradiance):
    """Every element of a string at the MPP, in current order: its row (voltage, power, loss; the
    efficiency penalty of a passive element), the rows of the isotype interfaces, and warnings
    (a tunnel junction past its peak, a reverse-biased subcell, a blocking interface)."""
    j_mpp = first_value(solution.mpp_A_m2)
    rows, interfaces, warnings_ = [], [], []
    for element in string:
        v = first_value(solution.voltage_at_mpp_V[element.name])
        delivered = v * j_mpp
        extra = {}
        if element.kind == "tunnel":
            branch = solution.tunnel_branch_at_mpp[element.name][0]
            extra["branch_at_mpp"] = branch
            if branch != "tunnel":
                warnings_.append(f"tunnel junction {element.name!r} operates past its peak at "
                                 f"the MPP ({branch} branch of its characteristic)")
        if element.kind == "subcell":
            loss = first_value(alone[element.name].mpp_W_m2) - delivered
            if v < 0:
                warnings_.append(f"subcell {element.name!r} is reverse biased at the MPP "
                                 f"({v:.3f} V): it dissipates power")
        else:
            loss = -delivered
            extra["efficiency_penalty_pct_abs"] = 100 * without[element.name] / irradiance
        if element.kind == "isotype":
            penalty = extra["efficiency_penalty_pct_abs"]
            interfaces.append(_interface_row(element, number, v, loss, penalty))
            warnings_ += _interface_warnings(element.name, v, penalty)
            warnings_ += _degenerate_side_warnings(element)
        rows.append({
            "name": element.name, "kind": element.kind, "string": number,
            "voltage_at_mpp_V": v, "voltage_at_open_circuit_V":
                first_value(solution.voltage_at_zero_current_V[element.name]),
            "power_W_m2": delivered, "loss_W_m2": loss,
            "loss_pct_abs": 100 * loss / irradiance, **extra})
    return rows, interfaces, warnings_


def _blocks(v, penalty):
    """Whether an isotype interface at ``v`` [V] across it at the MPP, and with an efficiency
    penalty of ``penalty`` [% absolute], counts as blocking."""
    return -v > BLOCKING_DROP_V or penalty > BLOCKING_PENALTY_PCT


def _interface_row(element, number, v, loss, penalty):
    """The row of an isotype interface: its barrier, bias, drop and loss at the MPP."""
    return {
        "name": element.name, "string": number, "carrier": element.carrier,
        "barrier_eV": first_value(element.barrier_eV),
        "built_in_V": first_value(element.built_in_V), "alpha": first_value(element.alpha),
        "offset_eV": first_value(element.offset_eV),
        "bias": "forward" if first_value(element.direction) > 0 else "reverse",
        "drop_at_mpp_V": -v, "loss_W_m2": loss,
        "efficiency_penalty_pct_abs": penalty,
        "blocking": bool(_blocks(v, penalty)),
        "offset_source": getattr(element, "offset_source", ""),
        "transport": element.transport,
        "sheet_charge_reduced": first_value(element.sheet_charge)}


def _interface_warnings(name, v, penalty):
    """The warning for an isotype interface that blocks: no operating point through it, or a
    large drop or penalty."""
    if not np.isfinite(v):
        return [f"isotype interface {name!r} blocks: no operating "
                "point through it (its barrier stops the current, or the "
                "current asked of it is beyond its flat-band current)"]
    if _blocks(v, penalty):
        cost = (f"costs {penalty:.2f} % absolute" if np.isfinite(penalty)
                else "the stack without it found no operating point either")
        return [f"isotype interface {name!r} blocks: it drops "
                f"{-v * 1000 + 0.0:.0f} mV at the MPP; {cost}"]
    return []


def _degenerate_side_warnings(element):
    """A warning for each side of an isotype interface (given by its materials) whose Fermi level
    lies inside its band or within circuit/isotype.py's FERMI_DIRAC_WITHIN_KT of it: which statistics
    the law takes there."""
    out = []
    for role, side in (element.sides or {}).items():
        if not (side.get("degenerate") or side.get("fermi_dirac")):
            continue
        doping_cm3 = side["doping_m3"] / units.PER_CM3_TO_PER_M3
        layer = f"layer {side['layer_name']!r}, " if side.get("layer_name") else ""
        depth = side["fermi_depth_eV"]
        where = (f"Fermi level {-1000 * depth:.0f} meV inside the band" if depth < 0
                 else f"Fermi level {1000 * depth:.0f} meV below the band edge")
        head = (f"isotype interface {element.name!r}: the {role} side ({layer}{side['material']}, "
                f"{doping_cm3:.3g} cm^-3) is {'degenerate' if depth < 0 else 'nearly degenerate'} "
                f"({where})")
        if side.get("fermi_dirac") and element.transport == "thermionic-field":
            out.append(head + ": the law takes Fermi-Dirac statistics for its Fermi level and its charge (the "
                              "band bending); the emission and the tunnelling stay Boltzmann approximations")
        elif side.get("fermi_dirac"):
            out.append(head + ": the law takes Fermi-Dirac statistics for its Fermi level, band "
                              "bending and emission")
        else:
            why = ""
            if side.get("statistics") == "boltzmann":
                why = ' (statistics = "boltzmann")'
            elif element.transport == "thermionic-field" and role == "depletion":
                why = (" (the thermionic-field law has no Fermi-Dirac form for the depletion side: its charge, "
                       "barrier and tunnelling stay Boltzmann)")
            elif element.transport == "thermionic-field":
                why = (" (the thermionic-field law's Fermi-Dirac accumulation side is switched off, "
                       "circuit/isotype.py FERMI_DIRAC_FIELD)")
            out.append(head + ": Fermi-Dirac statistics place its Fermi level, the band bending and "
                              f"the emission stay Boltzmann approximations{why}")
    return out


def _balance_warnings(balance, total_power, irradiance):
    """A warning when the power balance [W/m^2] could not be checked or is off by more than
    POWER_BALANCE_TOLERANCE of the output power."""
    if not np.isfinite(balance):
        return ["power balance could not be checked (an element's forward law has no "
                "value at its operating voltage)"]
    if balance > POWER_BALANCE_TOLERANCE * max(total_power, 1e-3 * irradiance):
        return [f"power balance error {balance:.3g} W/m2 exceeds "
                f"{POWER_BALANCE_TOLERANCE:g} of the output power"]
    return []


def _coupled(solutions):
    """Subcell name -> the photocurrent [A/m^2] it collects at the MPP from the luminescent
    coupling of the subcell above (solve.series.StringSolution.coupled_at_mpp_A_m2)."""
    return {name: value for solution in solutions
            for name, value in solution.coupled_at_mpp_A_m2.items()}


def _subcell_rows(circuit, temperature_K, alone, limiting, irradiance, coupled=None):
    """One row per subcell in optical order: gap, photocurrent, absorbed (and collected) current,
    J01, Voc and efficiency on its own, whether it limits its string's current, and the current
    it collects at the MPP from the luminescent coupling of the subcell above (0 without)."""
    coupled = coupled or {}
    rows = []
    for cell in circuit.subcells:
        own = alone[cell.name]
        row = {
            "name": cell.name, "string": cell.string, "gap_eV": first_value(cell.gap_eV),
            "photocurrent_mA_cm2": units.ma_cm2(first_value(cell.photocurrent_A_m2)),
            "absorbed_mA_cm2": units.ma_cm2(
                first_value(circuit.optics["absorbed_A_m2"][cell.name])),
            "j01_mA_cm2": units.ma_cm2(first_value(cell.j01_A_m2(temperature_K))),
            "voc_alone_V": first_value(own.voc_V),
            "efficiency_alone_pct": 100 * first_value(own.mpp_W_m2) / irradiance,
            "limiting": cell.name in limiting}
        collected = circuit.optics.get("collected_A_m2", {}).get(cell.name)
        if collected:
            row["collected_mA_cm2"] = collected
            row["collection_loss_mA_cm2"] = row["absorbed_mA_cm2"] - row["photocurrent_mA_cm2"]
        row["coupled_mA_cm2"] = units.ma_cm2(first_value(coupled.get(cell.name, 0.0)))
        row["luminescent_coupling"] = first_value(cell.luminescent_coupling)
        hetero = circuit.optics.get("layer_details", {}).get("subcells", {}).get(cell.name, {}).get("heterojunction")
        if hetero:       # a heterojunction subcell: its band diagram (circuit/hetero.py)
            row["heterojunction"] = hetero
        rows.append(row)
    return rows


def _cautions(suns):
    """The usual cautions: results are models; concentrated light burns."""
    cautions = [CAUTION]
    if suns > 1:
        cautions.append(f"{suns:g} suns: concentrated light can burn skin and eyes and "
                        "ignite material; never look into the beam, and cool the cell.")
    return cautions


def _model_warnings(circuit, temperature_K):
    """The layer model's own notes; at circuit level away from 298.15 K, that gaps given as
    numbers do not follow the temperature."""
    warnings_ = list(circuit.model.notes) if circuit.model is not None else []
    fixed = [c.name for c in circuit.subcells if c.gap_material is None]
    if temperature_K != 298.15 and circuit.model is None and fixed:
        warnings_.append("circuit level: the gaps of " + ", ".join(repr(n) for n in fixed)
                         + f" are taken as given at {temperature_K:g} K (give a "
                         "subcell material = \"...\" for its gap to follow the temperature); "
                         "the dark currents follow the temperature")
    return warnings_


def _model_text(circuit):
    """Which model made the numbers, in words."""
    layer_level = circuit.model is not None
    return (("layer level: " if layer_level else "circuit level: ")
            + ("subcells from the minority-carrier diffusion solution (J01, collection) and "
               "depletion recombination (J02), Beer-Lambert optics" if layer_level
               else "detailed-balance subcells (generalized Planck law), lumped resistors")
            + ", Esaki tunnel junctions (three-term law), isotype interfaces (thermionic "
              "emission, any alpha, with tunnelling through the spike where their transport is "
              "thermionic-field)")


def _certificate(solution):
    """The proof of the global MPP of a string (solve.py, certificate.py), for the summary:
    by the concavity of P(J) (a string of subcells without breakdown, and resistors: no cells
    to check) or by bounding the power between evaluated points."""
    certified = bool(solution.mpp_certified is not None and solution.mpp_certified[0])
    cells = int(solution.mpp_cells_checked[0]) if solution.mpp_cells_checked is not None else 0
    return {"certified": certified,
            "proof": ("cell bounds" if cells else "concavity") if certified else None,
            "upper_bound_W_m2": (first_value(solution.mpp_bound_W_m2)
                                 if solution.mpp_bound_W_m2 is not None else math.nan),
            "cells_checked": cells}


def _photons(circuit):
    optics = circuit.optics
    photons = {"incident_mA_cm2": units.ma_cm2(optics["incident_A_m2"]),
               "transmitted_mA_cm2": units.ma_cm2(first_value(optics["transmitted_A_m2"]))}
    if "reflected_A_m2" in optics:
        photons["reflected_mA_cm2"] = units.ma_cm2(optics["reflected_A_m2"])
        photons["budget_error_relative"] = optics["budget_error_relative"]
    return photons


def _missing(value):
    return value is None or (isinstance(value, (float, np.floating)) and not math.isfinite(value))


def missing_value_warnings(summary):
    """One warning for every number the summary has no value for (text: none, JSON: null),
    unless a warning already says so; every string without light says that instead."""
    out = []
    by_name = {row["name"]: row for row in summary["subcells"]}
    for row in summary["strings"]:
        number = row["string"]
        cells = [by_name[name] for name in row["elements"] if name in by_name]
        missing = [(word, why) for key, word, why in _HEADLINE if _missing(row.get(key))]
        said = any(w.startswith(f"string {number}:") and "null" in w
                   for w in summary["warnings"])
        if cells and all(c["photocurrent_mA_cm2"] == 0 for c in cells):
            out.append(f"string {number}: no subcell receives light above its gap (every "
                       "photocurrent is 0): it gives no power"
                       + (", and " + ", ".join(w for w, _ in missing)
                          + (" have" if len(missing) > 1 else " has")
                          + " no value (none in the text, null in JSON)" if missing else ""))
        elif missing and not said:
            reasons = list(dict.fromkeys(why for _, why in missing))
            out.append(f"string {number}: no value for " + ", ".join(w for w, _ in missing)
                       + " (none in the text, null in JSON): " + "; ".join(reasons))
    rows = [(f"subcell {r['name']!r}", r, ("voc_alone_V", "efficiency_alone_pct", "j01_mA_cm2"))
            for r in summary["subcells"]]
    rows += [(f"element {r['name']!r}", r, ("voltage_at_mpp_V", "voltage_at_open_circuit_V",
                                              "power_W_m2", "loss_W_m2"))
             for r in summary["elements"]]
    gaps = [f"{label} {key}" for label, row, keys in rows for key in keys
            if key in row and _missing(row[key])]
    if gaps:
        out.append("no value for " + ", ".join(gaps[:6]) + (f" and {len(gaps) - 6} more"
                                                            if len(gaps) > 6 else "")
                   + " (none in the text, null in JSON): the solve found no such point")
    return out
