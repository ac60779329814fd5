"""The record of one solved stack: the frozen :class:`Result` and the helpers that turn the solver's
arrays into its numbers and its numbers into strict JSON.

A Result holds ``.summary`` (the JSON contract, trade units; rules in ``summary.py``), ``.iv`` (the
light I-V as a DataFrame), ``.losses`` (per-element table) and ``to_dataframe()`` (one row of
headline numbers), and for a layer stack ``spectral_table()`` (per wavelength).
"""
from dataclasses import dataclass, replace
import json
import math

import numpy as np

from siltandem import units


@dataclass(frozen=True)
class Result:
    """The answer for one stack under one set of conditions.

    Attributes
    ----------
    summary : dict
        The JSON contract (see README, "Outputs"); trade units, names carry them.
    iv : pandas.DataFrame
        Light I-V: ``voltage_V``, ``current_mA_cm2``, one ``<element>_V`` column per element
        (and ``string`` for stacks of several strings).
    circuit : Circuit
        The illuminated circuit that was solved (for plots and further study).
    solutions : list of StringSolution
    """

    summary: dict
    iv: object
    circuit: object
    solutions: list

    @property
    def losses(self):
        """Per-element voltage, power and loss at the MPP (DataFrame)."""
        import pandas as pd

        return pd.DataFrame(self.summary["elements"])

    def to_dataframe(self):
        """One row: the headline numbers with their units in the column names."""
        import pandas as pd

        keys = ["stack", "efficiency_pct", "voc_V", "jsc_mA_cm2", "fill_factor", "mpp_V",
                "mpp_mA_cm2", "power_balance_error_W_m2"]
        row = {k: self.summary[k] for k in keys}
        row.update({f"conditions.{k}": v for k, v in self.summary["conditions"].items()})
        for cell in self.summary["subcells"]:
            row[f"{cell['name']}.photocurrent_mA_cm2"] = cell["photocurrent_mA_cm2"]
        return pd.DataFrame([row])

    def sweep(self, direction, points=400):
        """What a terminal-voltage sweep measures (``direction`` "up" or "down"), as a DataFrame.

        Columns as :attr:`iv`; element voltages are interpolated between traced points. Where a
        tunnel junction makes the curve S-shaped the sweep jumps, differently up and down.
        """
        import pandas as pd

        from siltandem.solve.trace import voltage_sweep

        frames = []
        for number, solution in enumerate(self.solutions, start=1):
            curve = solution.curve
            v, j = curve["voltage_V"][0], curve["current_A_m2"][0]
            keep = np.isfinite(v) & np.isfinite(j)
            target, current, segment, weight = voltage_sweep(v, j, direction=direction,
                                                             points=points)
            data = {"voltage_V": target, "current_mA_cm2": units.ma_cm2(current)}
            ok = segment >= 0
            for name in self.circuit.optical_order:
                column = np.full(points, np.nan)
                if name in curve:
                    values = curve[name][0][keep]
                    column[ok] = (values[segment[ok]] * (1 - weight[ok])
                                  + values[segment[ok] + 1] * weight[ok])
                data[f"{name}_V"] = column
            if len(self.solutions) > 1:
                data["string"] = number
            frames.append(pd.DataFrame(data))
        return pd.concat(frames, ignore_index=True)

    def spectral_table(self):
        """Per wavelength: ``wavelength_nm``, ``reflectance``, ``transmittance``, one
        ``<layer>.absorptance`` per coating and layer, one ``<subcell>.eqe`` per subcell
        (fractions of the incident photons; a DataFrame). Layer stacks only: an element stack
        raises StackError. See ``result/spectral.py``."""
        from siltandem.result.spectral import spectral_table

        return spectral_table(self.circuit)

    def to_json(self, indent=2):
        return json_text(self.summary, indent)

    def with_summary(self, **changes):
        return replace(self, summary={**self.summary, **changes})


def _clean(value):
    """JSON-safe copy: numpy scalars and arrays to Python, non-finite floats (and pandas' missing
    values) to None, keys to text; anything else JSON cannot hold to its text."""
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, np.ndarray)):
        return [_clean(v) for v in value]
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (np.floating, float)):
        value = float(value)
        return value if math.isfinite(value) else None
    if isinstance(value, (int, np.integer)):
        return int(value)
    if value is None or isinstance(value, str):
        return value
    try:
        import pandas as pd

        if pd.isna(value):
            return None
    except (TypeError, ValueError):
        pass
    return str(value)


def json_text(value, indent=2):
    """Strict JSON of ``value`` (``null`` where a number has no value, never ``NaN``), one
    trailing newline: what every JSON output of the command line writes."""
    return json.dumps(_clean(value), indent=indent, allow_nan=False) + "\n"


def first_value(array):
    """The first entry of a solver array (one design per row) as a Python float."""
    return float(np.asarray(array, dtype=float).reshape(-1)[0])


def curve_table(circuit, solutions):
    """The traced light I-V of every string as one DataFrame (:attr:`Result.iv`)."""
    import pandas as pd

    frames = []
    names = list(circuit.optical_order)
    for number, solution in enumerate(solutions, start=1):
        curve = solution.curve
        data = {"voltage_V": curve["voltage_V"][0],
                "current_mA_cm2": units.ma_cm2(curve["current_A_m2"][0])}
        for name in names:
            data[f"{name}_V"] = curve[name][0] if name in curve else np.nan
        if len(solutions) > 1:
            data["string"] = number
        frames.append(pd.DataFrame(data))
    return pd.concat(frames, ignore_index=True)
