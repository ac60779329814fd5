"""The user's own material files: a TOML file in the library's own format (notes/materials.md,
the ``*.toml`` files beside this module), anywhere on disk, with its tables inline or in CSV
files beside it.

A material file may give, instead of the inline arrays of the library's files,

* ``[absorption.table] file = "alpha.csv"``: columns ``wavelength_nm`` and ``alpha_per_cm``, or
  ``wavelength_nm``, ``n`` and ``k`` (then alpha = 4 pi k / lambda, the extinction coefficient's
  definition: M. Born, E. Wolf, Principles of Optics, ch. 14; rows with k = 0 are left out of
  the table, the file's parametric model covers them);
* ``[refractive_index] file = "nk.csv"``: columns ``wavelength_nm`` and ``n`` (a ``k`` column is
  ignored here).

CSV paths are relative to the material file. This module reads and checks the files (every
problem a StackError naming the material file, the key and the fix) and returns the TOML
document with the CSV tables filled in as arrays; materials.library builds the Material from it
exactly as from its own files. A read is kept while none of the files changed (size and
modification time), so a file edited between two runs of one process is read again.
"""
import hashlib
import math
from pathlib import Path
import tomllib

import numpy as np

from siltandem.errors import StackError
from siltandem.text import excerpt

#: the file suffix that makes a layer's ``material`` a material file rather than a library name
SUFFIX = ".toml"
_FORMAT = ("the library's own format (the *.toml files of siltandem/materials, notes/materials.md): "
           "name, kind, [valleys.*], [holes], [electron_affinity], [permittivity], [mobility], "
           "[refractive_index] and [absorption.*]")
_CACHE = {}
#: the keys of the format that hold text; every other value is a number or an array of numbers
TEXT_KEYS = {"name", "kind", "formula", "description", "note", "source", "aliases",
             "composition_element", "end_at_x1", "end_at_x0", "shifted_from", "rule", "file"}


def _check_numbers(table, path, prefix=""):
    """Every value outside TEXT_KEYS a number (or an array of numbers), named by its key."""
    for key, value in table.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            _check_numbers(value, path, f"{name}.")
        elif key not in TEXT_KEYS:
            items = value if isinstance(value, list) else [value]
            if not items or any(isinstance(v, bool) or not isinstance(v, (int, float))
                                or not math.isfinite(v) for v in items):
                raise StackError(f"{name} = {excerpt(value)} must be a finite number or an array "
                                 "of numbers", file=path, where=f"key {name}",
                                 fix=f"write {key} = <number> without quotes, as in the library's "
                                     "files")


#: the keys of a [mobility.<carrier>_doping] law (materials/recombination.py): required, optional
MOBILITY_LAW_KEYS = ("mu_max_cm2_V_s", "mu_min_cm2_V_s", "n_ref_cm3", "lambda")
_MOBILITY_LAW_OPTIONAL = {"theta1", "theta2", "composition_range", "source"}


def _check_mobility_laws(document, path):
    """A file's [mobility.electron_doping] / [mobility.hole_doping] (Caughey-Thomas laws): the
    four parameters positive with mu_max >= mu_min, and composition_range two fractions in order."""
    mobility = document.get("mobility")
    for carrier in ("electron", "hole"):
        law = mobility.get(f"{carrier}_doping") if isinstance(mobility, dict) else None
        if law is None:
            continue
        table = f"mobility.{carrier}_doping"
        fix = (f"give [{table}] mu_max_cm2_V_s, mu_min_cm2_V_s (mu_max >= mu_min > 0), n_ref_cm3 > 0, "
               "lambda > 0, optional theta1, theta2, composition_range = [x_low, x_high] within [0, 1] "
               "and source, as in the library's gaas.toml and gainp.toml")
        if not isinstance(law, dict):
            raise StackError(f"{table} must be a table", file=path, where=f"key {table}", fix=fix)
        unknown = sorted(set(law) - set(MOBILITY_LAW_KEYS) - _MOBILITY_LAW_OPTIONAL)
        missing = [key for key in MOBILITY_LAW_KEYS if key not in law]
        if unknown or missing:
            what = ", ".join([f"unknown key {k}" for k in unknown] + [f"missing {k}" for k in missing])
            raise StackError(f"[{table}]: {what}", file=path, where=f"key {table}", fix=fix)
        bad = [key for key in MOBILITY_LAW_KEYS if isinstance(law[key], list) or law[key] <= 0]
        if bad or law["mu_max_cm2_V_s"] < law["mu_min_cm2_V_s"]:
            key = bad[0] if bad else "mu_max_cm2_V_s"
            raise StackError(f"{table}.{key} = {excerpt(law[key])}: each parameter must be one number > 0, "
                             "with mu_max_cm2_V_s >= mu_min_cm2_V_s", file=path,
                             where=f"key {table}.{key}", fix=fix)
        span = law.get("composition_range", [0.0, 1.0])
        if not isinstance(span, list) or len(span) != 2 or not 0.0 <= span[0] <= span[1] <= 1.0:
            raise StackError(f"{table}.composition_range = {excerpt(span)} is not [x_low, x_high] with "
                             "0 <= x_low <= x_high <= 1", file=path, where=f"key {table}.composition_range",
                             fix=fix)


def is_material_file(name):
    """True when ``name`` names a material file (text ending in .toml), not a library name."""
    return isinstance(name, str) and name.strip().lower().endswith(SUFFIX)


def _stat(path):
    try:
        found = Path(path).stat()
    except OSError:
        return None
    return found.st_size, found.st_mtime_ns


def _read_toml(path):
    path = Path(path)
    if not path.is_file():
        raise StackError("material file not found", file=path,
                         fix="give the material file's path relative to the stack file (or an "
                             "absolute path)")
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise StackError(f"not UTF-8 text (byte {exc.start})", file=path,
                         fix="save the material file as UTF-8 TOML") from None
    except OSError as exc:
        raise StackError(f"cannot read the file ({exc.strerror})", file=path,
                         fix="check the path and its permissions") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StackError(f"TOML syntax error: {exc}", file=path,
                         fix="correct the line named; the format is " + _FORMAT) from None


def _read_csv(path, columns, *, material, key):
    """Columns of a CSV table beside a material file: {name: float array}, rows as given.
    ``columns`` is a list of acceptable column sets (the first one found is used)."""
    import pandas as pd

    shown = " or ".join("'" + ",".join(c) + "'" for c in columns)
    fix = (f"give a CSV with a header line {shown} and one row per wavelength (nm, increasing), "
           f"named by {key} relative to the material file")
    if not path.is_file():
        raise StackError(f"table file not found: {path}", file=material, where=f"key {key}",
                         fix=fix)
    try:
        frame = pd.read_csv(path, comment="#")
    except Exception as exc:  # pandas raises several types for unreadable files
        raise StackError(f"cannot read it as CSV ({exc.__class__.__name__}: "
                         f"{excerpt(str(exc), 120)})", file=path, where=f"{key} of {material}",
                         fix=fix) from None
    frame.columns = [str(c).strip() for c in frame.columns]
    chosen = next((c for c in columns if set(c) <= set(frame.columns)), None)
    if chosen is None:
        found = ", ".join(excerpt(c, 30) for c in frame.columns[:6])
        raise StackError(f"columns [{found}]: need {shown}", file=path, where="header", fix=fix)
    out = {}
    for name in chosen:
        values = pd.to_numeric(frame[name], errors="coerce").to_numpy(dtype=float)
        if values.size < 2 or not np.isfinite(values).all():
            raise StackError(f"column {name!r}: fewer than two rows, or values that are not "
                             "numbers", file=path, where=f"column {name}", fix=fix)
        out[name] = values
    lam = out["wavelength_nm"]
    if lam[0] <= 0 or np.any(np.diff(lam) <= 0):
        raise StackError("wavelengths are not positive and increasing", file=path,
                         where="column wavelength_nm",
                         fix="sort the rows by wavelength (nm) and remove repeated wavelengths")
    if lam[-1] < 50:
        raise StackError(f"the wavelengths run from {lam[0]:g} to {lam[-1]:g}: they look like "
                         "micrometres, not nm", file=path, where="column wavelength_nm",
                         fix="give wavelengths in nm (multiply micrometres by 1000)")
    return out


def _absorption_table(table, folder, material):
    key = "absorption.table.file"
    if set(table) - {"file", "source"}:
        raise StackError("[absorption.table] gives a file and inline arrays", file=material,
                         where=f"key {key}",
                         fix="give either file = \"x.csv\" or wavelength_nm and alpha_per_cm")
    columns = _read_csv(folder / _text(table["file"], material, key), [
        ("wavelength_nm", "alpha_per_cm"), ("wavelength_nm", "n", "k")],
        material=material, key=key)
    if "alpha_per_cm" in columns:
        lam, alpha = columns["wavelength_nm"], columns["alpha_per_cm"]
    else:
        if np.any(columns["k"] < 0):
            raise StackError("negative extinction coefficient k", file=material,
                             where=f"key {key}", fix="k >= 0 (an absorbing medium)")
        keep = columns["k"] > 0
        lam = columns["wavelength_nm"][keep]
        alpha = 4 * math.pi * columns["k"][keep] / (lam * 1e-7)    # 1/cm, lambda in cm
    if lam.size < 2 or np.any(alpha <= 0):
        raise StackError("the absorption table needs at least two rows of positive absorption",
                         file=material, where=f"key {key}",
                         fix="give alpha_per_cm > 0 (or k > 0) in at least two rows")
    # the table is read in: no 'file' key left for the library to look up beside its own files
    return {**_without_file(table), "wavelength_nm": lam.tolist(), "alpha_per_cm": alpha.tolist()}


def _without_file(table):
    return {k: v for k, v in table.items() if k != "file"}


def _index_table(table, folder, material):
    key = "refractive_index.file"
    columns = _read_csv(folder / _text(table["file"], material, key), [("wavelength_nm", "n")],
                        material=material, key=key)
    if np.any(columns["n"] < 1) or np.any(columns["n"] > 10):
        raise StackError("refractive index n outside [1, 10]", file=material, where=f"key {key}",
                         fix="give the real part n of the refractive index (about 1.3 to 5 for "
                             "solids)")
    return {**_without_file(table), "wavelength_nm": columns["wavelength_nm"].tolist(),
            "n": columns["n"].tolist()}


def _text(value, material, key):
    if not isinstance(value, str) or not value.strip():
        raise StackError(f"{key} must be a file name (text), got {excerpt(value)}", file=material,
                         where=f"key {key}", fix=f'write {key.rpartition(".")[2]} = "table.csv"')
    return value


def _tables(document, path):
    """The document with its CSV tables read in, and the CSV files read."""
    folder = path.parent
    files = []
    absorption = document.get("absorption")
    if isinstance(absorption, dict) and isinstance(absorption.get("table"), dict) \
            and "file" in absorption["table"]:
        files.append(folder / absorption["table"]["file"] if isinstance(
            absorption["table"]["file"], str) else None)
        document = {**document, "absorption": {**absorption, "table": _absorption_table(
            absorption["table"], folder, path)}}
    index = document.get("refractive_index")
    if isinstance(index, dict) and "file" in index:
        files.append(folder / index["file"] if isinstance(index["file"], str) else None)
        document = {**document, "refractive_index": _index_table(index, folder, path)}
    return document, [f for f in files if f is not None]


def read_material_file(path):
    """A material file read and its CSV tables filled in: (document, digest, files).

    ``path`` is made absolute; ``digest`` is the SHA-256 of every file it read (the TOML and its
    CSVs), ``files`` the CSV paths. Kept while no file changed. StackError for anything
    unreadable, naming the material file, the key and the fix.
    """
    path = Path(path).absolute()
    cached = _CACHE.get(str(path))
    if cached is not None and all(_stat(f) == s for f, s in cached[3]):
        return cached[0], cached[1], cached[2]
    document = _read_toml(path)
    if not isinstance(document.get("name"), str) or not document["name"].strip():
        raise StackError("key 'name' is missing or not text", file=path, where="key name",
                         fix='add name = "MyAbsorber" (the name results show); the format is '
                             + _FORMAT)
    if document.get("kind") not in ("binary", "element", "alloy"):
        raise StackError(f"kind = {excerpt(document.get('kind'))} is not 'binary', 'element' or "
                         "'alloy'", file=path, where="key kind",
                         fix='write kind = "binary" for a fixed compound (an element is written '
                             'the same way) or kind = "alloy" for an alloy of two library '
                             'materials')
    _check_numbers(document, path)
    _check_mobility_laws(document, path)
    document, files = _tables(document, path)
    digest = hashlib.sha256()
    for name in [path, *files]:
        digest.update(str(name).encode() + b"\0" + Path(name).read_bytes())
    stats = [(f, _stat(f)) for f in [path, *files]]
    _CACHE[str(path)] = (document, digest.hexdigest(), [str(f) for f in files], stats)
    return document, digest.hexdigest(), [str(f) for f in files]


def material_names(path):
    """The name and aliases of a material file (lower case), for a ``[materials] folder``."""
    document = read_material_file(path)[0]
    aliases = document.get("aliases", [])
    if not isinstance(aliases, list) or not all(isinstance(a, str) for a in aliases):
        raise StackError("aliases must be a list of names (text)", file=path, where="key aliases",
                         fix='write aliases = ["other name"] or leave it out')
    return [document["name"].strip(), *[a.strip() for a in aliases]]


def material_files(path):
    """Every file a material file makes a run read: itself and its CSV tables (absolute)."""
    return [str(Path(path).absolute()), *read_material_file(path)[2]]
