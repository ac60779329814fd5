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
from siltandem import text as words


@dataclass(frozen=True)
class Result:
    """The answer for one stack under one set of conditions.

    Attributes
    ----------
    summary : dict
        The JSON contract (see README, "Outputs"); trade units, names carry them.
    iv : pandas.DataFrame
        Light I-V: ``voltage_V``, ``current_mA_cm2``, one ``<element>_V`` column per element
        (and ``string`` for stacks of several strings). Built from the solutions on first use
        (a command that prints only the summary need not import pandas).
    iv_table : pandas.DataFrame or None
        :attr:`iv` once built (None before).
    circuit : Circuit
        The illuminated circuit that was solved (for plots and further study).
    solutions : list of StringSolution
    """

    summary: dict
    iv_table: object
    circuit: object
    solutions: list

    @property
    def iv(self):
        """The light I-V as a DataFrame (see the class attributes), built once."""
        if self.iv_table is None:
            object.__setattr__(self, "iv_table", curve_table(self.circuit, self.solutions))
        return self.iv_table

    @property
    def losses(self):
        """Per-element voltage, power and loss at the MPP (DataFrame)."""
        import pandas as pd

        return pd.DataFrame(self.summary["elements"])

    def to_dataframe(self):
        """One row: the headline numbers with their units in the column names."""
        import pandas as pd

        keys = ["stack", "efficiency_pct", "voc_V", "jsc_mA_cm2", "fill_factor_pct", "mpp_V",
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

    def plot(self, kind="iv", ax=None, **options):
        """The result's figure on ``ax`` (a new figure when None); returns the axes.

        ``kind`` is "iv" (the light I-V of the stack and of each subcell, the MPP marked;
        :func:`siltandem.plot_iv`, options ``curve_points``, ``sweeps``) or "spectral" (layer
        stacks: subcell EQEs, parasitic absorption, reflectance per wavelength;
        :func:`siltandem.plot_spectral`). Never selects matplotlib's backend, so figures show
        inline in a notebook.
        """
        from siltandem.report import plots

        drawers = {"iv": plots.plot_iv, "spectral": plots.plot_spectral}
        if kind not in drawers:
            raise ValueError(f"Result.plot: kind = {kind!r} is not a figure of a result; give one of "
                             f"{', '.join(map(repr, drawers))}")
        return drawers[kind](self, ax=ax, **options)

    def to_json(self, indent=2):
        return json_text(self.summary, indent)

    def __repr__(self):
        """One line: the stack, its light, the headline numbers and how many warnings (the full
        record is :attr:`summary`; a notebook shows :meth:`_repr_html_`)."""
        s = self.summary
        conditions = s["conditions"]
        name = words.printable(words.shorten(str(s["stack"]), 80))
        strings = len(s["strings"])
        shown = [f"efficiency {words.number(s['efficiency_pct'], '.2f')} %"]
        if strings == 1:
            shown += [f"Voc {words.number(s['voc_V'], '.4f')} V",
                      f"Jsc {words.number(s['jsc_mA_cm2'], '.3f')} mA/cm2",
                      f"fill factor {words.number(s['fill_factor_pct'], '.2f')} %",
                      f"MPP {words.number(s['mpp_V'], '.4f')} V x {words.number(s['mpp_mA_cm2'], '.3f')} mA/cm2"]
        else:
            shown.append(f"{strings} strings (each at its own MPP, see .summary['strings'])")
        count = len(s["warnings"])
        shown.append(f"{count} warning{'' if count == 1 else 's'}")
        light = (f"{words.printable(words.shorten(str(conditions['spectrum']), 40))}, "
                 f"{words.number(conditions['suns'], 'g')} sun(s), "
                 f"{words.number(conditions['temperature_K'], 'g')} K")
        return f"<siltandem.Result {name!r} ({light}): " + ", ".join(shown) + ">"

    def _repr_html_(self):
        """A notebook's summary: the headline numbers, the subcells and the warnings."""
        from html import escape

        s = self.summary
        rows = [("efficiency", words.number(s["efficiency_pct"], ".2f"), "%"),
                ("Voc", words.number(s["voc_V"], ".4f"), "V"),
                ("Jsc", words.number(s["jsc_mA_cm2"], ".3f"), "mA/cm²"),
                ("fill factor", words.number(s["fill_factor_pct"], ".2f"), "%"),
                ("MPP voltage", words.number(s["mpp_V"], ".4f"), "V"),
                ("MPP current", words.number(s["mpp_mA_cm2"], ".3f"), "mA/cm²")]
        table = "".join(f"<tr><td>{escape(a)}</td><td style='text-align:right'>{escape(b)}</td>"
                        f"<td>{escape(c)}</td></tr>" for a, b, c in rows)
        cells = "".join(
            f"<tr><td>{escape(str(c['name']))}{' *' if c['limiting'] else ''}</td>"
            f"<td style='text-align:right'>{escape(words.number(c['photocurrent_mA_cm2'], '.3f'))}</td>"
            f"<td>mA/cm² ({escape(words.number(c['gap_eV'], '.3f'))} eV)</td></tr>"
            for c in s["subcells"])
        said = "".join(f"<li>{escape(str(w))}</li>" for w in s["warnings"])
        conditions = s["conditions"]
        return (f"<div><b>{escape(str(s['stack']))}</b> under "
                f"{escape(str(conditions['spectrum']))}, {escape(words.number(conditions['suns'], 'g'))}"
                f" sun(s), {escape(words.number(conditions['temperature_K'], 'g'))} K"
                f"<table>{table}</table><p>photocurrents (* limits its string)</p>"
                f"<table>{cells}</table>"
                + (f"<p>{len(s['warnings'])} warning(s)</p><ul>{said}</ul>" if said else "")
                + "</div>")

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


def provenance(stack, *, spectrum=None, suns=None, temperature_K=None):
    """Where an output came from, for every JSON, CSV header and Parquet file: the package
    version, the SHA-256 of the stack file as read and the light used (``light``: the spectrum's
    name or file, the SHA-256 of the file read for it, the concentration and the temperature),
    with the overrides a command or study was given."""
    import os

    from siltandem.files import file_digest
    from siltandem.stack.inputs import spectrum_input
    from siltandem.stack.load import provenance as stack_provenance

    conditions = stack.conditions
    name = conditions.spectrum if spectrum is None else spectrum
    if isinstance(name, (str, os.PathLike)):
        found = spectrum_input(name, stack.folder if spectrum is None else None)
        shown, digest = str(name), None if found is None else file_digest(found[1])
    else:                                        # a spectrum given as an object, not a file
        shown, digest = str(getattr(name, "label", type(name).__name__)), None
    light = {"spectrum": shown, "spectrum_sha256": digest,
             "suns": float(conditions.suns if suns is None else suns),
             "temperature_K": float(conditions.temperature_K if temperature_K is None
                                    else temperature_K)}
    return {**stack_provenance(stack), "light": light}


def provenance_lines(record):
    """``# key: value`` lines (nested keys joined by a dot) heading a CSV output; read the CSV
    with ``pandas.read_csv(path, comment="#")``."""
    lines = []
    for key, value in record.items():
        items = value.items() if isinstance(value, dict) else [(None, value)]
        for inner, item in items:
            name = key if inner is None else f"{key}.{inner}"
            text = "" if item is None else str(item)
            lines.append(f"# {name}: {' '.join(text.split())}\n")
    return "".join(lines)


def read_provenance_lines(text):
    """The ``# key: value`` header of a CSV output as a flat dict of text (the inverse of
    :func:`provenance_lines`, for checks and for tools reading our CSVs)."""
    found = {}
    for line in text.splitlines():
        if not line.startswith("# "):
            break
        key, _, value = line[2:].partition(": ")
        found[key] = value
    return found


def parquet_bytes(table, record):
    """``table`` as Parquet bytes, ``record`` (provenance) as JSON in the schema metadata under
    the key ``siltandem`` (read it back with ``pyarrow.parquet.read_schema(path).metadata``)."""
    import io

    import pyarrow
    import pyarrow.parquet

    data = pyarrow.Table.from_pandas(table, preserve_index=False)
    data = data.replace_schema_metadata({**(data.schema.metadata or {}),
                                         b"siltandem": json_text(record, indent=None).encode()})
    buffer = io.BytesIO()
    pyarrow.parquet.write_table(data, buffer)
    return buffer.getvalue()
