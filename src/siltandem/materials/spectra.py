"""Spectra a stack is solved under: the ASTM G173-03 tables through pvlib, or a user CSV.

A spectrum is spectral irradiance [W m^-2 nm^-1] on an increasing wavelength grid [nm]. The named
spectra are listed in ``data/spectra.toml``; the tables themselves are pvlib's, never copied into
this project: the file ``pvlib.spectrum.get_reference_spectra`` reads, read here with numpy so that
a run need not import pvlib (and pandas) to start.
"""
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path
import difflib
import tomllib

import numpy as np

from siltandem.errors import StackError
from siltandem.text import excerpt
from siltandem.laws.optics import photon_flux


#: a spectrum whose largest wavelength is below this [nm] was written in micrometres: no solar
#: or lamp spectrum a cell is rated under ends in the extreme ultraviolet (ASTM G173 runs
#: 280-4000 nm)
MICROMETRE_HINT_NM = 50.0


@dataclass(frozen=True)
class Spectrum:
    """Spectral irradiance on a wavelength grid.

    Attributes
    ----------
    name : str
        What the user called it (a table name or a file path).
    description : str
        One line for reports.
    wavelength_nm : ndarray
        Increasing wavelengths [nm].
    irradiance_W_m2_nm : ndarray
        Spectral irradiance [W m^-2 nm^-1], already multiplied by ``suns``.
    suns : float
        Concentration factor applied to the table.
    """

    name: str
    description: str
    wavelength_nm: np.ndarray
    irradiance_W_m2_nm: np.ndarray
    suns: float = 1.0
    nominal_W_m2: float | None = None

    @property
    def integral_W_m2(self):
        """Total irradiance [W/m^2] by the trapezoid rule over the table (times suns)."""
        return float(np.trapezoid(self.irradiance_W_m2_nm, self.wavelength_nm))

    @property
    def irradiance_W_m2(self):
        """Reference irradiance for efficiencies [W/m^2]: the standard's nominal value times suns
        where the standard gives one (AM1.5G: 1000 W/m^2, IEC 60904-3), else the integral."""
        if self.nominal_W_m2 is not None:
            return self.nominal_W_m2 * self.suns
        return self.integral_W_m2

    @property
    def photon_flux(self):
        """Spectral photon flux [m^-2 s^-1 nm^-1]."""
        return photon_flux(self.wavelength_nm, self.irradiance_W_m2_nm)

    def concentrated(self, suns):
        """The same spectrum times ``suns`` (relative to the table as given)."""
        return Spectrum(self.name, self.description, self.wavelength_nm,
                        self.irradiance_W_m2_nm * (suns / self.suns), float(suns),
                        self.nominal_W_m2)


@lru_cache(maxsize=1)
def _catalogue():
    text = resources.files("siltandem").joinpath("data/spectra.toml").read_text()
    table = tomllib.loads(text)
    names = {}
    for name, entry in table.items():
        names[name] = name
        for alias in entry.get("aliases", []):
            names[alias] = name
    return table, names


def is_standard_spectrum(name):
    """Whether ``name`` names a standard spectrum of the catalogue (or one of its aliases)."""
    return str(name).strip().lower() in _catalogue()[1]


def standard_table_path(name):
    """The file a standard spectrum's name makes a run read (pvlib's table), or None."""
    table, names = _catalogue()
    return reference_table_path(table[names[str(name).strip().lower()]]["standard"])


def spectrum_names():
    """Names a user can give for the standard spectra (without aliases)."""
    return list(_catalogue()[0])


#: the file in pvlib's data folder of each standard's table (pvlib.spectrum.get_reference_spectra)
REFERENCE_FILES = {"ASTM G173-03": "ASTMG173.csv"}


def reference_table_path(standard):
    """The path of pvlib's own file of a standard's table, found without importing pvlib (which
    loads pandas: about 0.5 s of a command's start-up); None where it is not there."""
    from importlib.util import find_spec

    spec = find_spec("pvlib")
    folders = list(spec.submodule_search_locations or []) if spec else []
    for folder in folders:
        path = Path(folder) / "data" / REFERENCE_FILES.get(standard, "")
        if path.is_file():
            return path
    return None


@lru_cache(maxsize=4)
def reference_columns(standard):
    """A standard spectrum's table as numpy columns: {"wavelength": nm, column name: W/m2/nm}.

    Read with numpy from the file ``pvlib.spectrum.get_reference_spectra`` reads (a title line,
    then the column names, then numbers); the same numbers to the bit (tests/test_spectra.py).
    Through pvlib itself where the file is not where this expects it."""
    path = reference_table_path(standard)
    if path is None:
        from pvlib.spectrum import get_reference_spectra

        frame = get_reference_spectra(standard=standard)
        return {"wavelength": frame.index.to_numpy(dtype=float),
                **{name: frame[name].to_numpy(dtype=float) for name in frame.columns}}
    with open(path, encoding="utf-8") as handle:
        handle.readline()
        names = [name.strip() for name in handle.readline().split(",")]
        values = np.loadtxt(handle, delimiter=",", dtype=float, ndmin=2)
    return dict(zip(names, values.T))


def _named(name):
    table, names = _catalogue()
    entry = table[names[name]]
    columns = reference_columns(entry["standard"])
    return Spectrum(names[name], entry["description"], columns["wavelength"].copy(),
                    columns[entry["column"]].copy(), nominal_W_m2=entry.get("nominal_W_m2"))


#: how a spectrum CSV is written, for the messages of a file that is not
_CSV_FORMAT_FIX = ("give a CSV with a header line 'wavelength_nm,irradiance_W_m2_nm' and one "
                   "row per wavelength (nm, increasing) with its spectral irradiance (W/m2/nm)")


def _read_csv_frame(path, where):
    """The CSV's table, its column names stripped; refuses a missing or unreadable file."""
    import pandas as pd

    if not path.is_file():
        raise StackError(f"spectrum file not found: {path}", file=path, where=where,
                         fix="give an existing CSV path (relative to the stack file) or one of "
                             + ", ".join(spectrum_names()))
    try:
        frame = pd.read_csv(path, comment="#")
    except Exception as exc:  # pandas raises several types for unreadable files
        raise StackError(f"cannot read spectrum CSV ({exc.__class__.__name__}: "
                         f"{excerpt(str(exc), 120)})", file=path, fix=_CSV_FORMAT_FIX) from None
    frame.columns = [str(c).strip() for c in frame.columns]
    return frame


def _irradiance_column(columns, path):
    """The irradiance column's name: ``irradiance_W_m2_nm``, or the second of exactly two;
    checks that the first is ``wavelength_nm``."""
    if not columns or columns[0] != "wavelength_nm":
        raise StackError(f"first column is {excerpt(columns[0]) if columns else 'missing'}, "
                         "expected 'wavelength_nm'", file=path, where="header",
                         fix=_CSV_FORMAT_FIX)
    if "irradiance_W_m2_nm" in columns:
        return "irradiance_W_m2_nm"
    if len(columns) == 2:
        return columns[1]
    shown = ", ".join(excerpt(c, 30) for c in columns[:6]) + (
        f" and {len(columns) - 6} more" if len(columns) > 6 else "")
    raise StackError(f"cannot tell the irradiance column among [{shown}]", file=path,
                     where="header", fix=_CSV_FORMAT_FIX)


def _numeric_columns(frame, value_column, path):
    """Wavelengths [nm] and irradiance [W m^-2 nm^-1] as float arrays; refuses a value that is
    not a finite number, naming its line."""
    import pandas as pd

    wavelength = pd.to_numeric(frame["wavelength_nm"], errors="coerce").to_numpy(dtype=float)
    irradiance = pd.to_numeric(frame[value_column], errors="coerce").to_numpy(dtype=float)
    for label, values in (("wavelength_nm", wavelength), (value_column, irradiance)):
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            raise StackError(f"column {label}: {bad.size} value(s) not numbers, first on data "
                             f"line {bad[0] + 1}", file=path, where=f"line {bad[0] + 2}",
                             fix=_CSV_FORMAT_FIX)
    return wavelength, irradiance


def _check_wavelengths(wavelength, path):
    """At least two rows, positive, strictly increasing, and in nm rather than micrometres."""
    if wavelength.size < 2:
        raise StackError(f"only {wavelength.size} data row(s)", file=path, fix=_CSV_FORMAT_FIX)
    if np.any(wavelength <= 0):
        row = int(np.flatnonzero(wavelength <= 0)[0])
        raise StackError(f"wavelength {wavelength[row]} nm is not positive", file=path,
                         where=f"line {row + 2}", fix="wavelengths are in nm and positive")
    steps = np.diff(wavelength)
    if np.any(steps <= 0):
        row = int(np.flatnonzero(steps <= 0)[0]) + 1
        raise StackError(f"wavelengths not increasing at {wavelength[row]} nm (after "
                         f"{wavelength[row - 1]} nm)", file=path, where=f"line {row + 2}",
                         fix="sort the rows by wavelength and remove repeated wavelengths")
    if wavelength[-1] < MICROMETRE_HINT_NM:
        raise StackError(f"the wavelengths run from {wavelength[0]:g} to {wavelength[-1]:g}: "
                         f"below {MICROMETRE_HINT_NM:g} they look like micrometres, not nm",
                         file=path, where="column wavelength_nm",
                         fix="give wavelengths in nm (multiply micrometres by 1000, and an "
                             "irradiance per micrometre by 1e-3 for W/m2/nm)")


#: [W/m2] the most a one-sun spectrum may total: 20 times AM1.5G's 1000 W/m2 (the AM0 table
#: totals 1348 W/m2); a spectrum in W/m2/um read as W/m2/nm totals about 1e6 (common practice,
#: no source)
ONE_SUN_LIMIT_W_M2 = 2.0e4


def _check_irradiance(wavelength, irradiance, path):
    """No negative value, and a total [W/m2] that is finite, positive and at most
    :data:`ONE_SUN_LIMIT_W_M2` (a one-sun spectrum; concentration comes from ``suns``)."""
    if np.any(irradiance < 0):
        row = int(np.flatnonzero(irradiance < 0)[0])
        raise StackError(f"negative irradiance {irradiance[row]} W/m2/nm", file=path,
                         where=f"line {row + 2}", fix="spectral irradiance cannot be negative")
    with np.errstate(over="ignore", invalid="ignore"):
        total = float(np.trapezoid(irradiance, wavelength))
    if not np.isfinite(total):
        raise StackError(f"the spectrum's total irradiance overflows (wavelengths up to "
                         f"{wavelength[-1]:g} nm)", file=path,
                         fix="give wavelengths in nm and spectral irradiance in W/m2/nm "
                             "(ASTM G173 runs from 280 to 4000 nm)")
    if total <= 0:
        raise StackError(f"the spectrum carries no light (total {total:g} W/m2)", file=path,
                         fix="give spectral irradiance in W/m2/nm, not all zero")
    if total > 1e8:
        raise StackError(f"the spectrum totals {total:g} W/m2, beyond any sun or lamp "
                         "(1e8 W/m2 is 100 000 suns)", file=path,
                         fix="give spectral irradiance in W/m2/nm (and concentration with suns)")
    if total > ONE_SUN_LIMIT_W_M2:
        raise StackError(f"the spectrum totals {total:.4g} W/m2 at one sun, {total / 1000:.3g} times "
                         "the 1000 W/m2 of AM1.5G: it looks like W/m2 per micrometre (or a "
                         "concentrated spectrum)", file=path,
                         fix="give spectral irradiance in W/m2/nm (multiply W/m2/um by 1e-3) at one "
                             "sun, and concentration with suns")


def read_spectrum_csv(path, *, where=None):
    """Read a user spectrum CSV: a header line, then wavelength_nm and irradiance (W m^-2 nm^-1).

    The first column must be named ``wavelength_nm``; the irradiance column is the one named
    ``irradiance_W_m2_nm``, or the second column when there are exactly two.

    Parameters
    ----------
    path : str or Path
        The CSV file (``#`` starts a comment).
    where : str, optional
        Where the path was given (a key or an option), for the message of a missing file.

    Returns
    -------
    Spectrum
        Wavelengths [nm] and spectral irradiance [W m^-2 nm^-1] as in the file, at one sun.

    Raises
    ------
    StackError
        Naming the file, the line or column and the fix, for a file that is missing, unreadable
        or not a spectrum.
    """
    path = Path(path)
    frame = _read_csv_frame(path, where)
    value_column = _irradiance_column(list(frame.columns), path)
    wavelength, irradiance = _numeric_columns(frame, value_column, path)
    _check_wavelengths(wavelength, path)
    _check_irradiance(wavelength, irradiance, path)
    return Spectrum(str(path), f"user spectrum {path.name}", wavelength, irradiance)


#: how a pandas spectrum is given, for the messages of one that is not
_PANDAS_FIX = ("give a pandas Series of spectral irradiance [W/m2/nm] indexed by wavelength [nm] "
               "(e.g. pvlib.spectrum.get_reference_spectra()['global']), or a DataFrame with "
               "columns wavelength_nm and irradiance_W_m2_nm")


def is_spectrum_object(value):
    """Whether ``value`` is a spectrum given as an object (a :class:`Spectrum`, a pandas Series
    or DataFrame) rather than a name or a path."""
    import sys

    pandas = sys.modules.get("pandas")
    return isinstance(value, Spectrum) or (
        pandas is not None and isinstance(value, (pandas.Series, pandas.DataFrame)))


def spectrum_from_pandas(value, *, where="argument spectrum"):
    """A :class:`Spectrum` from a pandas Series indexed by wavelength [nm] (pvlib's spectra, e.g.
    a column of ``pvlib.spectrum.get_reference_spectra()``, a row of ``spectrl2``'s output
    turned into a Series), a one-column DataFrame indexed by wavelength, or a DataFrame with
    columns ``wavelength_nm`` and ``irradiance_W_m2_nm``; checked as a spectrum CSV is (positive,
    increasing nm, not micrometres, no negative or non-finite value, a plausible total)."""
    import pandas as pd

    label = where
    if isinstance(value, pd.DataFrame):
        columns = [str(c).strip() for c in value.columns]
        if "wavelength_nm" in columns and "irradiance_W_m2_nm" in columns:
            frame = value.set_axis(columns, axis=1)
            wavelength = frame["wavelength_nm"]
            irradiance = frame["irradiance_W_m2_nm"]
            name = "DataFrame"
        elif len(columns) == 1:
            wavelength, irradiance = value.index, value.iloc[:, 0]
            name = f"DataFrame column {columns[0]!r}"
        else:
            raise StackError(f"a DataFrame with columns {excerpt(', '.join(columns), 80)}: "
                             "cannot tell which one is the spectrum", where=where,
                             fix="pass one column, e.g. frame['global'] of pvlib's "
                                 "get_reference_spectra(); " + _PANDAS_FIX)
    else:
        wavelength, irradiance = value.index, value
        name = f"Series {value.name!r}" if value.name is not None else "Series"
    wavelength = pd.to_numeric(pd.Series(np.asarray(wavelength)), errors="coerce").to_numpy(
        dtype=float)
    irradiance = pd.to_numeric(pd.Series(np.asarray(irradiance)), errors="coerce").to_numpy(
        dtype=float)
    for what, values in (("wavelengths (the index)", wavelength), ("irradiance", irradiance)):
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            raise StackError(f"{bad.size} {what} not finite numbers (first at row {bad[0]})",
                             where=where, fix=_PANDAS_FIX)
    try:
        _check_wavelengths(wavelength, label)
        _check_irradiance(wavelength, irradiance, label)
    except StackError as exc:   # the CSV checks name file lines; here rows of the object
        inner = exc.where
        if inner and inner.startswith("line "):
            inner = f"row {int(inner.split()[1]) - 2}"
        elif inner == "column wavelength_nm":
            inner = "the wavelengths"
        raise StackError(exc.problem, where=where if inner is None else f"{where}: {inner}",
                         fix=exc.fix) from None
    return Spectrum(f"pandas {name}", f"pandas {name}, {wavelength[0]:g}-{wavelength[-1]:g} nm",
                    wavelength, irradiance)


def get_spectrum(name_or_path, *, suns=1.0, relative_to=None, where=None, origin=None):
    """A spectrum by name (``am1.5g``, ``am1.5d``, ``am0``), CSV path or object, times ``suns``.

    Parameters
    ----------
    name_or_path : str or Path or Spectrum or pandas.Series or pandas.DataFrame
        A name from ``data/spectra.toml`` (case-insensitive), a CSV path, or a spectrum object
        (:func:`spectrum_from_pandas` says which pandas forms).
    suns : float
        Concentration [-], > 0.
    relative_to : Path, optional
        Folder a relative CSV path is resolved against (the stack file's folder).
    where : str, optional
        Where the name came from, for error messages.
    origin : str, optional
        The stack file that named the spectrum: errors about the name itself name that file.
    """
    if is_spectrum_object(name_or_path):
        spectrum = (name_or_path if isinstance(name_or_path, Spectrum) else
                    spectrum_from_pandas(name_or_path, where=where or "argument spectrum"))
        return spectrum.concentrated(suns) if suns != spectrum.suns else spectrum
    key = str(name_or_path).strip()
    _, names = _catalogue()
    if key.lower() in names:
        spectrum = _named(key.lower())
    elif key.lower().endswith(".csv") or "/" in key or "\\" in key:
        path = Path(key)
        if relative_to is not None and not path.is_absolute():
            path = Path(relative_to) / path
        if origin is not None and not path.is_file():
            raise StackError(f"spectrum file not found: {path}", file=origin, where=where,
                             fix="give an existing CSV path (relative to the stack file) or one "
                                 "of " + ", ".join(spectrum_names()))
        spectrum = read_spectrum_csv(path, where=where)
    else:
        close = difflib.get_close_matches(key.lower(), list(names), n=3, cutoff=0.5)
        hint = f"did you mean {', '.join(close)}? " if close else ""
        raise StackError(f"unknown spectrum {excerpt(key)}", file=origin, where=where,
                         fix=f"{hint}use one of {', '.join(spectrum_names())} or a CSV path "
                             "ending in .csv")
    return spectrum.concentrated(suns) if suns != 1.0 else spectrum
