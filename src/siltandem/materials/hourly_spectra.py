"""Measured hourly spectra for the yield year: one spectrum on the plane of array per hour, used
instead of SPECTRL2's clear-sky shapes.

A table (time x wavelength): rows indexed by the weather's time stamps (time zone aware), columns
wavelengths [nm, increasing], values spectral irradiance on the plane [W m^-2 nm^-1]. From a
pandas DataFrame in the API or a CSV (first column ``time`` with its UTC offset, e.g.
``1990-06-01 13:00:00-05:00``; then one column per wavelength, the header giving the nm).
"""
from pathlib import Path

import numpy as np

from siltandem.errors import StackError
from siltandem.text import excerpt

#: how the table is written, for the messages of one that is not
FORMAT_FIX = ("give one row per hour, indexed by the weather's time stamps with their time zone "
              "(CSV: first column 'time', e.g. 1990-06-01 13:00:00-05:00), and one column per "
              "wavelength in nm (increasing) holding the plane-of-array spectral irradiance in "
              "W/m2/nm")
#: a table whose wavelengths all lie below this [nm] was written in micrometres
MICROMETRE_HINT_NM = 50.0
#: the largest spectral irradiance of one hour on the plane [W m^-2 nm^-1]: the extraterrestrial
#: peak is about 2.1 near 450 nm (ASTM E490 / G173 AM0; from memory); room for reflections
MAX_W_M2_NM = 5.0


def _read_csv(path, where):
    import pandas as pd

    path = Path(path)
    if not path.is_file():
        raise StackError("measured-spectra file not found", file=path, where=where,
                         fix=FORMAT_FIX)
    try:
        frame = pd.read_csv(path, comment="#")
    except Exception as exc:  # pandas raises several types for unreadable files
        raise StackError(f"cannot read it as CSV ({exc.__class__.__name__}: "
                         f"{excerpt(str(exc), 120)})", file=path, where=where,
                         fix=FORMAT_FIX) from None
    if not len(frame.columns) or str(frame.columns[0]).strip() != "time":
        raise StackError("the first column is not 'time'", file=path, where="header",
                         fix=FORMAT_FIX)
    try:
        stamps = pd.to_datetime(frame.iloc[:, 0], format="ISO8601")
    except (ValueError, TypeError) as exc:
        raise StackError(f"column time: not time stamps ({excerpt(str(exc), 100)})", file=path,
                         where="column time", fix=FORMAT_FIX) from None
    return frame.iloc[:, 1:].set_axis(pd.DatetimeIndex(stamps)), str(path)


def measured_spectra(source, *, where="--measured-spectra"):
    """The checked table of measured hourly spectra.

    Parameters
    ----------
    source : pandas.DataFrame or str or Path
        The table, or a CSV of it (see the module's notes).

    Returns
    -------
    pandas.DataFrame
        Float values, float wavelength columns [nm], the time zone aware index as given.

    Raises
    ------
    StackError
        For a missing or unreadable file, an index without time zone or repeated, wavelength
        headers that are not numbers, not increasing or in micrometres, or values that are not
        finite, negative or beyond any sunlight.
    """
    import pandas as pd

    file = None
    if isinstance(source, pd.DataFrame):
        frame = source
    else:
        frame, file = _read_csv(source, where)
    index = frame.index
    if not isinstance(index, pd.DatetimeIndex) or index.tz is None:
        raise StackError("the rows are not indexed by time zone aware time stamps", file=file,
                         where=where, fix=FORMAT_FIX)
    if index.has_duplicates:
        first = index[index.duplicated()][0]
        raise StackError(f"the hour {first} appears more than once", file=file, where=where,
                         fix="give each hour once")
    wavelength = pd.to_numeric(pd.Series([str(c).strip() for c in frame.columns]),
                               errors="coerce").to_numpy(dtype=float)
    if wavelength.size < 2 or not np.isfinite(wavelength).all():
        bad = [str(c) for c, w in zip(frame.columns, wavelength) if not np.isfinite(w)]
        raise StackError("the columns are not wavelengths in nm" + (
            f" ({excerpt(', '.join(bad[:4]), 60)})" if bad else " (fewer than two)"),
            file=file, where="header", fix=FORMAT_FIX)
    if np.any(np.diff(wavelength) <= 0) or wavelength[0] <= 0:
        raise StackError("the wavelength columns are not positive and increasing", file=file,
                         where="header", fix="sort the columns by wavelength in nm")
    if wavelength[-1] < MICROMETRE_HINT_NM:
        raise StackError(f"the wavelengths end at {wavelength[-1]:g}: micrometres, not nm",
                         file=file, where="header",
                         fix="give wavelengths in nm (and W/m2/nm: per micrometre times 1e-3)")
    values = frame.apply(pd.to_numeric, errors="coerce").to_numpy(dtype=float)
    for test, problem in ((~np.isfinite(values), "not a number"), (values < 0, "negative"),
                          (values > MAX_W_M2_NM, f"above {MAX_W_M2_NM:g} W/m2/nm")):
        if test.any():
            row, column = np.argwhere(test)[0]
            raise StackError(f"{int(test.sum())} value(s) {problem} (first at {index[row]}, "
                             f"{wavelength[column]:g} nm)", file=file, where=where,
                             fix="give spectral irradiance in W/m2/nm, finite and not negative")
    return pd.DataFrame(values, index=index, columns=wavelength)


def spectra_of_hours(table, stamps, *, where="--measured-spectra"):
    """(wavelength_nm, (H, M) spectra) of the given hours; StackError naming the first hour the
    table lacks."""
    missing = ~stamps.isin(table.index)
    if missing.any():
        raise StackError(f"{int(missing.sum())} hour(s) with light have no measured spectrum "
                         f"(first {stamps[np.flatnonzero(missing)[0]]})", where=where,
                         fix="give a spectrum for every hour with light, indexed by the "
                             "weather's time stamps (read_weather(...).data.index), or leave "
                             "the option out to use SPECTRL2's clear-sky shapes")
    return table.columns.to_numpy(dtype=float), table.loc[stamps].to_numpy(dtype=float)
