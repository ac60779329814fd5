"""Efficiency against concentration: one batched solve per string, the photocurrents scaled with
the concentration (the ``--suns-range`` of ``siltandem run``)."""
from dataclasses import replace

import numpy as np

from siltandem import units
from siltandem.circuit.compile import compile_stack
from siltandem.optics.illuminate import illuminate
from siltandem.solve.series import solve_strings
from siltandem.materials.spectra import get_spectrum
from siltandem.result.record import first_value


def concentration_series(stack, suns_values, *, spectrum=None, temperature_K=None):
    """Efficiency and the rest against concentration, one batched solve per string.

    Photocurrents scale with the concentration (the spectrum's shape is kept); every other
    parameter is that of the stack. Returns a DataFrame: ``suns``, ``efficiency_pct``, ``voc_V``,
    ``jsc_mA_cm2``, ``fill_factor_pct``, ``mpp_V``, ``mpp_mA_cm2`` (of string 1 for several strings),
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
    # in turn: luminescent coupling crosses from one string to the next (4 terminals)
    strings, solutions = solve_strings(circuit.strings, circuit.subcells, temperature)
    for number, (string, solution) in enumerate(zip(strings, solutions), start=1):
        total = total + np.nan_to_num(solution.mpp_W_m2, nan=0.0)
        if number == 1:
            table.update({
                "voc_V": solution.voc_V, "jsc_mA_cm2": units.ma_cm2(solution.jsc_A_m2),
                "fill_factor_pct": 100 * solution.fill_factor, "mpp_V": solution.mpp_V,
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
