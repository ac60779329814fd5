"""The main job end to end, and the answer for one stack.

``run_stack(stack)`` = spectrum -> compile -> illuminate -> solve each string -> :class:`Result`.
A Result is frozen: ``.summary`` (the JSON contract, trade units), ``.iv`` (the light I-V as a
DataFrame), ``.losses`` (per-element table) and ``to_dataframe()`` (one row of headline numbers).
"""
from dataclasses import replace
import math

import numpy as np

from siltandem import units
from siltandem.circuit.compile import compile_stack
from siltandem.optics.illuminate import illuminate
from siltandem.solve.series import solve_string
from siltandem.materials.spectra import get_spectrum
from siltandem.result.record import Result, curve_table, first_value

SIGN_CONVENTION = ("generated current positive: the power quadrant is current > 0 and "
                   "voltage > 0; an element's voltage is taken in the stack current's direction")
CAUTION = ("Results are models, not measurements. Concentrated light, high currents and module "
           "voltages are electrical and optical hazards: follow local codes and licensed practice.")
#: relative power-balance error above which a result carries a warning
POWER_BALANCE_TOLERANCE = 1e-9


#: headline numbers of a string, their words for warnings, and why one can be missing
_HEADLINE = (("voc_V", "Voc", "the curve has no zero-current point"),
             ("jsc_mA_cm2", "Jsc", "the curve does not reach 0 V"),
             ("fill_factor", "fill factor", "it needs a positive Voc and Jsc"),
             ("mpp_V", "MPP voltage", "no maximum power point was found"),
             ("mpp_mA_cm2", "MPP current", "no maximum power point was found"),
             ("efficiency_pct", "efficiency", "no maximum power point was found"))


def _missing(value):
    return value is None or (isinstance(value, (float, np.floating)) and not math.isfinite(value))


def _missing_value_warnings(summary):
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


def run_stack(stack, *, spectrum=None, suns=None, temperature_K=None, curve_points=401):
    """Solve one stack: the main job.

    Parameters
    ----------
    stack : Stack
        From :func:`siltandem.stack.load_stack`.
    spectrum : str, optional
        Override of ``[conditions] spectrum`` (a name or a CSV path, relative to the working
        folder when given here).
    suns : float, optional
        Override of ``[conditions] suns``.
    temperature_K : float, optional
        Override of ``[conditions] temperature_K``.
    curve_points : int
        Points of the traced light I-V per string.
    """
    from siltandem.stack.options import OPTION_SCHEMA, check_conditions, check_option

    suns, temperature_K = check_conditions(suns=suns, temperature_K=temperature_K)
    check_option(OPTION_SCHEMA["points"], curve_points, where="argument curve_points",
                 integer=True)
    placement_note = None
    if stack.extra.get("placements"):
        from siltandem.stack.placements import with_placement

        first = stack.extra["placements"][0]
        stack = with_placement(stack, first)
        placement_note = (f"solved with the first declared placement, {first.name!r}; "
                          "`siltandem placements` ranks them all")
    conditions = stack.conditions
    changes = {k: v for k, v in (("spectrum", spectrum), ("suns", suns),
                                 ("temperature_K", temperature_K)) if v is not None}
    conditions = replace(conditions, **changes)
    relative_to = None if spectrum is not None else stack.folder
    light = get_spectrum(conditions.spectrum, suns=conditions.suns, relative_to=relative_to,
                         where="spectrum" if spectrum is not None else "key conditions.spectrum",
                         origin=None if spectrum is not None else stack.source)
    circuit = compile_stack(replace(stack, conditions=conditions))
    circuit = illuminate(circuit, light)
    temperature = conditions.temperature_K
    solutions = [solve_string(string, temperature, curve_points=curve_points)
                 for string in circuit.strings]
    alone = {cell.name: solve_string([cell], temperature) for cell in circuit.subcells}
    # the efficiency penalty of each passive element: the string solved again without it
    # (penalties.py: one batched solve per group of alike elements, not one solve per element)
    from siltandem.result.penalties import removal_powers

    without = {}
    for string, solution in zip(circuit.strings, solutions):
        for name, power in removal_powers(string, temperature).items():
            without[name] = power - first_value(solution.mpp_W_m2)
    summary = _summarise(stack, conditions, light, circuit, solutions, alone, without)
    if placement_note:
        summary["warnings"].insert(0, placement_note)
    summary["warnings"].extend(_missing_value_warnings(summary))
    return Result(summary, curve_table(circuit, solutions), circuit, solutions)


#: an isotype interface dropping more than this at the MPP is flagged as blocking [V]
BLOCKING_DROP_V = 0.1
#: ... and so is one whose removal would regain more than this [% absolute]
BLOCKING_PENALTY_PCT = 1.0


def _summarise(stack, conditions, light, circuit, solutions, alone, without):
    irradiance = light.irradiance_W_m2
    warnings_ = []
    string_rows, element_rows, tunnel_rows, interface_rows = [], [], [], []
    limiting = set()
    total_power = 0.0
    balance = 0.0
    for number, (string, solution) in enumerate(zip(circuit.strings, solutions), start=1):
        subcells = [e for e in string if e.kind == "subcell"]
        pilot = subcells[int(solution.pilot_index[0])]
        limiting.add(pilot.name)
        power = first_value(solution.mpp_W_m2)
        total_power += power
        balance += first_value(solution.power_balance_error_W_m2)
        if solution.failed[0]:
            # what is missing, in words; Voc is the point of zero current, where only the
            # subcells have a voltage, so it stays (solve.py)
            missing = [label for label, value in (
                ("Voc", solution.voc_V), ("Jsc", solution.jsc_A_m2),
                ("the MPP", solution.mpp_W_m2), ("the fill factor", solution.fill_factor))
                if not np.isfinite(first_value(value))]
            listed = " and ".join(filter(None, [", ".join(missing[:-1]), missing[-1]])) \
                if missing else "its numbers"
            note = ("; Voc is the point of zero current, where only the subcells have a "
                    "voltage" if np.isfinite(first_value(solution.voc_V)) else "")
            warnings_.append(f"string {number}: no operating point found for {listed} "
                             f"(null){note}")
        certificate = _certificate(solution)
        if solution.capped is not None and solution.capped[0]:
            names = ", ".join(repr(e.name) for e in string if e.kind == "isotype")
            warnings_.append(f"string {number}: the current is capped at an isotype interface's "
                             f"flat-band current ({names}): the law has no voltage beyond it, so "
                             "the curve stops above zero volts and there is no Jsc (null); the "
                             "MPP sits at the cap and is an upper bound of this model")
        j_mpp = first_value(solution.mpp_A_m2)
        string_rows.append({
            "string": number, "elements": [e.name for e in string],
            "efficiency_pct": 100 * power / irradiance, "voc_V": first_value(solution.voc_V),
            "jsc_mA_cm2": units.ma_cm2(first_value(solution.jsc_A_m2)),
            "fill_factor": first_value(solution.fill_factor), "mpp_V": first_value(solution.mpp_V),
            "mpp_mA_cm2": units.ma_cm2(j_mpp), "mpp_W_m2": power,
            "limiting_subcell": pilot.name, "regime": str(solution.regime[0]),
            "mpp_certificate": certificate})
        if str(solution.regime[0]).startswith("past peak"):
            warnings_.append(f"string {number}: a tunnel junction is driven past its peak on the "
                             f"traced curve ({solution.regime[0]}); see `--sweep up|down` for "
                             "what a voltage sweep measures")
        jph_max = max(first_value(c.photocurrent_A_m2) for c in subcells)
        for element in string:
            if element.kind != "tunnel":
                continue
            ext = element.extrema(conditions.temperature_K)
            peak = first_value(ext.peak_A_m2)
            tunnel_rows.append({
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
                interface_rows.append({
                    "name": element.name, "string": number, "carrier": element.carrier,
                    "barrier_eV": first_value(element.barrier_eV),
                    "built_in_V": first_value(element.built_in_V), "alpha": first_value(element.alpha),
                    "offset_eV": first_value(element.offset_eV),
                    "bias": "forward" if first_value(element.direction) > 0 else "reverse",
                    "drop_at_mpp_V": -v, "loss_W_m2": loss,
                    "efficiency_penalty_pct_abs": extra["efficiency_penalty_pct_abs"],
                    "blocking": bool(-v > BLOCKING_DROP_V or extra["efficiency_penalty_pct_abs"]
                                     > BLOCKING_PENALTY_PCT)})
                if not np.isfinite(v):
                    warnings_.append(f"isotype interface {element.name!r} blocks: no operating "
                                     "point through it (its barrier stops the current, or the "
                                     "current asked of it is beyond its flat-band current)")
                elif -v > BLOCKING_DROP_V or extra["efficiency_penalty_pct_abs"] > \
                        BLOCKING_PENALTY_PCT:
                    penalty = extra["efficiency_penalty_pct_abs"]
                    cost = (f"costs {penalty:.2f} % absolute" if np.isfinite(penalty)
                            else "the stack without it found no operating point either")
                    warnings_.append(f"isotype interface {element.name!r} blocks: it drops "
                                     f"{-v * 1000 + 0.0:.0f} mV at the MPP; {cost}")
            element_rows.append({
                "name": element.name, "kind": element.kind, "string": number,
                "voltage_at_mpp_V": v, "voltage_at_open_circuit_V":
                    first_value(solution.voltage_at_zero_current_V[element.name]),
                "power_W_m2": delivered, "loss_W_m2": loss,
                "loss_pct_abs": 100 * loss / irradiance, **extra})
    if not np.isfinite(balance):
        warnings_.append("power balance could not be checked (an element's forward law has no "
                         "value at its operating voltage)")
    elif balance > POWER_BALANCE_TOLERANCE * max(total_power, 1e-3 * irradiance):
        warnings_.append(f"power balance error {balance:.3g} W/m2 exceeds "
                         f"{POWER_BALANCE_TOLERANCE:g} of the output power")
    subcell_rows = []
    for cell in circuit.subcells:
        jph = first_value(cell.photocurrent_A_m2)
        own = alone[cell.name]
        subcell_rows.append({
            "name": cell.name, "string": cell.string, "gap_eV": first_value(cell.gap_eV),
            "photocurrent_mA_cm2": units.ma_cm2(jph),
            "absorbed_mA_cm2": units.ma_cm2(first_value(circuit.optics["absorbed_A_m2"][cell.name])),
            "j01_mA_cm2": units.ma_cm2(first_value(cell.j01_A_m2(conditions.temperature_K))),
            "voc_alone_V": first_value(own.voc_V),
            "efficiency_alone_pct": 100 * first_value(own.mpp_W_m2) / irradiance,
            "limiting": cell.name in limiting})
        collected = circuit.optics.get("collected_A_m2", {}).get(cell.name)
        if collected:
            subcell_rows[-1]["collected_mA_cm2"] = collected
            subcell_rows[-1]["collection_loss_mA_cm2"] = (subcell_rows[-1]["absorbed_mA_cm2"]
                                                          - subcell_rows[-1][
                                                              "photocurrent_mA_cm2"])
    one = len(solutions) == 1
    head = string_rows[0] if one else {}
    cautions = [CAUTION]
    if conditions.suns > 1:
        cautions.append(f"{conditions.suns:g} suns: concentrated light can burn skin and eyes and "
                        "ignite material; never look into the beam, and cool the cell.")
    if circuit.model is not None:
        warnings_.extend(circuit.model.notes)
    fixed = [c.name for c in circuit.subcells if c.gap_material is None]
    if conditions.temperature_K != 298.15 and circuit.model is None and fixed:
        warnings_.append("circuit level: the gaps of " + ", ".join(repr(n) for n in fixed)
                         + f" are taken as given at {conditions.temperature_K:g} K (give a "
                         "subcell material = \"...\" for its gap to follow the temperature); "
                         "the dark currents follow the temperature")
    regimes = [r["regime"] for r in string_rows]
    return {
        "stack": stack.name,
        "notes": stack.notes,
        "source_file": stack.source,
        "conditions": {"spectrum": conditions.spectrum, "spectrum_description": light.description,
                       "suns": conditions.suns, "temperature_K": conditions.temperature_K,
                       "irradiance_W_m2": irradiance,
                       "spectrum_integral_W_m2": light.integral_W_m2,
                       "terminals": conditions.terminals},
        "efficiency_pct": 100 * total_power / irradiance,
        "voc_V": head.get("voc_V"), "jsc_mA_cm2": head.get("jsc_mA_cm2"),
        "fill_factor": head.get("fill_factor"), "mpp_V": head.get("mpp_V"),
        "mpp_mA_cm2": head.get("mpp_mA_cm2"), "mpp_W_m2": total_power,
        "regime": regimes[0] if one else regimes,
        "mpp_certificate": head.get("mpp_certificate") if one else [
            r["mpp_certificate"] for r in string_rows],
        "strings": string_rows,
        "subcells": subcell_rows,
        "elements": element_rows,
        "tunnel_junctions": tunnel_rows,
        "interfaces": interface_rows,
        "parasitic": [{"layer": name, "absorbed_mA_cm2": units.ma_cm2(value)}
                      for name, value in circuit.optics.get("parasitic_A_m2", {}).items()],
        "photons": _photons(circuit),
        **{key: value for key, value in _photons(circuit).items()
           if key in ("incident_mA_cm2", "reflected_mA_cm2", "transmitted_mA_cm2")},
        "power_balance_error_W_m2": balance,
        "warnings": warnings_,
        "cautions": cautions,
        "sign_convention": SIGN_CONVENTION,
        "model": ("layer level: " if circuit.model is not None else "circuit level: ")
        + ("subcells from the minority-carrier diffusion solution (J01, collection) and "
           "depletion recombination (J02), Beer-Lambert optics" if circuit.model is not None
           else "detailed-balance subcells (generalized Planck law), lumped resistors")
        + ", Esaki tunnel junctions (three-term law), isotype interfaces (thermionic emission, "
          "any alpha)",
    }


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


def concentration_series(stack, suns_values, *, spectrum=None, temperature_K=None):
    """Efficiency and the rest against concentration, one batched solve per string.

    Photocurrents scale with the concentration (the spectrum's shape is kept); every other
    parameter is that of the stack. Returns a DataFrame: ``suns``, ``efficiency_pct``, ``voc_V``,
    ``jsc_mA_cm2``, ``fill_factor``, ``mpp_V``, ``mpp_mA_cm2`` (of string 1 for several strings),
    ``regime``, and per tunnel junction ``<name>.peak_exceeded`` (its peak current is below the
    largest photocurrent of its string) and ``<name>.branch_at_mpp``.
    """
    import pandas as pd

    from siltandem.stack.options import CONDITION_SCHEMA, check_conditions, check_option

    _, temperature_K = check_conditions(temperature_K=temperature_K)
    suns = np.asarray(suns_values, dtype=float).reshape(-1)
    for value in (suns.min(), suns.max()) if suns.size and np.all(np.isfinite(suns)) else suns:
        check_option(CONDITION_SCHEMA["suns"], value, where="argument suns_values")
    conditions = stack.conditions
    changes = {k: v for k, v in (("spectrum", spectrum), ("temperature_K", temperature_K))
               if v is not None}
    conditions = replace(conditions, suns=1.0, **changes)
    relative_to = None if spectrum is not None else stack.folder
    light = get_spectrum(conditions.spectrum, suns=1.0, relative_to=relative_to,
                         where="spectrum" if spectrum is not None else "key conditions.spectrum")
    circuit = illuminate(compile_stack(replace(stack, conditions=conditions)), light)
    scaled = [c.with_photocurrent(c.photocurrent_A_m2[:, 0] * suns) for c in circuit.subcells]
    circuit = circuit.with_elements(scaled)
    temperature = conditions.temperature_K
    table = {"suns": suns}
    total = np.zeros_like(suns)
    for number, string in enumerate(circuit.strings, start=1):
        solution = solve_string(string, temperature)
        total = total + np.nan_to_num(solution.mpp_W_m2, nan=0.0)
        if number == 1:
            table.update({
                "voc_V": solution.voc_V, "jsc_mA_cm2": units.ma_cm2(solution.jsc_A_m2),
                "fill_factor": solution.fill_factor, "mpp_V": solution.mpp_V,
                "mpp_mA_cm2": units.ma_cm2(solution.mpp_A_m2),
                "regime": np.asarray(solution.regime, dtype=object)})
        photocurrents = np.concatenate([e.photocurrent_A_m2 for e in string
                                        if e.kind == "subcell"], axis=1).max(axis=1)
        for element in string:
            if element.kind == "tunnel":
                peak = first_value(element.extrema(temperature).peak_A_m2)
                table[f"{element.name}.peak_exceeded"] = photocurrents > peak
                table[f"{element.name}.branch_at_mpp"] = solution.tunnel_branch_at_mpp[
                    element.name]
    table["efficiency_pct"] = 100 * total / (light.irradiance_W_m2 * suns)
    columns = ["suns", "efficiency_pct"] + [k for k in table if k not in ("suns",
                                                                           "efficiency_pct")]
    return pd.DataFrame({k: table[k] for k in columns})
