"""What a layer's ``material`` names: a library material (materials.library), or the user's own
material file (materials.userfiles, a name ending in ``.toml``); and an ordered alloy's gap.

``load_material`` and ``material_identity`` here are the ones the package exports: the library's
names go to the library unchanged; a material file is read (its CSV tables too), built exactly as
the library builds its own files, and checked like them, every problem a StackError naming the
material file.
"""
import functools
import math
from pathlib import Path

import numpy as np

from siltandem.errors import StackError
from siltandem.materials import library, userfiles
from siltandem.materials.library import MaterialError

_FIX = ("correct the file; its format is the library's own (the *.toml files of "
        "siltandem/materials, notes/materials.md)")
#: plausible ranges of what a user's file gives (quantity, attribute, low (open), high)
USER_RANGES = (("lowest gap at 300 K [eV]", "gap_300K_eV", 0.05, 10.0),
               ("relative permittivity", "relative_permittivity", 1.0, 100.0),
               ("electron mobility [m2/(V s)]", "electron_mobility_m2_V_s", 0.0, 100.0),
               ("hole mobility [m2/(V s)]", "hole_mobility_m2_V_s", 0.0, 100.0),
               ("Nc at 300 K [m^-3]", "conduction_dos_300K_per_m3", 0.0, 1e30),
               ("Nv at 300 K [m^-3]", "valence_dos_300K_per_m3", 0.0, 1e30),
               ("n_i at 300 K [m^-3]", "intrinsic_density_300K_per_m3", 0.0, 1e30))


def load_material(name, composition=None, *, gap_eV=None):
    """A material by library name (as :func:`materials.library.load_material`) or by the path of
    the user's own material file (``"my_absorber.toml"``; relative paths from the working
    folder: a stack file's are made absolute when it is loaded).

    ``gap_eV``: the 300 K gap [eV] of an ordered alloy (GaInP: CuPt ordering lowers it from the
    disordered value; the data file's ``[ordering]`` table gives the allowed range). The lowest
    valley moves to it and the absorption edge with it (GaInP's absorption is the GaAs table
    shifted by the Gamma-gap difference). MaterialError (library names) or StackError (files).
    """
    if userfiles.is_material_file(name):
        return load_material_file(name, composition, gap_eV=gap_eV)
    if gap_eV is None:
        return library.load_material(name, composition)
    material = library.load_material(name, composition)
    found = library.library_document(material.family)
    family, file_name, data = found
    gap = check_gap(family, file_name, data, gap_eV)
    return _ordered(family, material.composition, gap)


@functools.lru_cache(maxsize=64)
def _ordered(family, x, gap_eV):
    _, file_name, data = library.library_document(family)
    return library.build_document(family, file_name, data, x, gap_eV)


def check_gap(family, file_name, data, gap_eV):
    """``gap_eV`` of an ordered alloy: only for a material whose data file has an ``[ordering]``
    table, within its ``gap_range_eV``. Returns it as a float; MaterialError otherwise."""
    ordering = data.get("ordering")
    if not isinstance(ordering, dict) or "gap_range_eV" not in ordering:
        raise MaterialError(f"material '{family}': key 'gap_eV' given, but {family} has no ordered form in "
                            f"its data file ({file_name}); leave gap_eV out (it is for ordered GaInP)")
    low, high = (float(v) for v in ordering["gap_range_eV"])
    if isinstance(gap_eV, bool) or not isinstance(gap_eV, (int, float, np.integer, np.floating)) \
            or not low <= float(gap_eV) <= high:
        raise MaterialError(f"material '{family}': key 'gap_eV' = {gap_eV!r} is outside [{low:g}, {high:g}] "
                            f"eV (300 K gap, ordered to disordered {family}); give a number in that range")
    return float(gap_eV)


def load_material_file(path, composition=None, *, gap_eV=None):
    """A material from the user's own file, built exactly as a library file. StackError naming
    the material file, the key and the fix for anything it cannot use."""
    document, digest, _ = userfiles.read_material_file(path)
    path = str(Path(path).absolute())
    name = document["name"].strip()
    try:
        gap = None if gap_eV is None else check_gap(name, path, document, gap_eV)
        with np.errstate(all="ignore"):         # a bad number shows as nan, checked below
            material = _build_user(path, digest, composition, gap)
    except MaterialError as exc:
        raise StackError(str(exc), file=path, where="material file", fix=_FIX) from None
    except (TypeError, ValueError, KeyError, AttributeError, IndexError) as exc:
        raise StackError(f"a value of the wrong kind or shape ({exc.__class__.__name__}: "
                         f"{str(exc)[:200]})", file=path, where="material file",
                         fix="compare the file, table by table, with a library file of the same "
                             "kind (numbers as numbers, arrays of equal length)") from None
    with np.errstate(all="ignore"):
        values = [(label, float(getattr(material, attribute)), low, high)
                  for label, attribute, low, high in USER_RANGES]
    for label, value, low, high in values:
        if not (math.isfinite(value) and low < value <= high):
            raise StackError(f"{label} = {value:g} is outside ({low:g}, {high:g}]", file=path,
                             where="material file",
                             fix="check the file's numbers and their units against a library file")
    index = np.asarray(material.refractive_index(np.array([300.0, 3000.0])))
    if not np.all(np.isfinite(index)) or np.any(index < 1.0):
        raise StackError("refractive index below 1 or not a number", file=path,
                         where="key refractive_index", fix="give n >= 1 at every wavelength")
    return material


@functools.lru_cache(maxsize=64)
def _build_user(path, digest, composition, gap_eV):
    """Built once per content (``digest`` of the file and its tables): an edited file is built
    again."""
    document = userfiles.read_material_file(path)[0]
    name = document["name"].strip()
    if document["kind"] == "alloy":
        for key in ("end_at_x1", "end_at_x0"):
            end = document.get(key)
            if not isinstance(end, str) or library.library_document(end) is None:
                raise MaterialError(f"materials data file {path}: {key} = {end!r} is not a library material; "
                                    "an alloy's end members are library materials ("
                                    + ", ".join(library.list_materials()) + ")")
    return library.build_document(name, path, document, composition, gap_eV)


def material_identity(name, composition=None):
    """What a material is, however it is spelled: (library name, composition or None); a user's
    material file is itself (its absolute path), whatever name it gives.

    ``material_identity("Ga0.51In0.49P") == material_identity("GaInP", 0.51)``, and an alias
    or another case (``"silicon"``, ``"si"``) is the same as ``"Si"``. The composition is
    rounded to 1e-9 so that a fraction computed as 1 - x compares equal to one written out.
    """
    if userfiles.is_material_file(name):
        material = load_material_file(name, composition)
        x = material.composition
        return str(Path(name.strip()).absolute()), None if x is None else round(float(x), 9)
    return library.material_identity(name, composition)
