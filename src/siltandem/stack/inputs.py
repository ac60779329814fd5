"""Which files solving a stack reads: the stack file, its spectrum CSV, its EQE CSVs, the user's
material files (and their CSV tables) and the package's own data.

An output must never replace one of them (files.check_outputs, called by every command before any
work), and a study's resumable chunks are keyed by their contents (studies.runner), so that an
edited file is never answered from old results.
"""
from pathlib import Path

from siltandem.materials.spectra import is_spectrum_object, is_standard_spectrum, standard_table_path


def package_inputs():
    """The files of the installed package a run reads: the materials library, the spectra
    catalogue and the demo stack (an output must not replace them either)."""
    from importlib import resources

    found = []
    root = resources.files("siltandem")
    for folder, pattern in (("materials", "*.toml"), ("data", "*.toml")):
        place = Path(str(root.joinpath(folder)))
        if place.is_dir():
            found += [("a data file of siltandem", p) for p in sorted(place.glob(pattern))]
    return found


def spectrum_input(name, relative_to=None):
    """(what, path) of the file a spectrum name or path makes the run read, or None."""
    if name is None or is_spectrum_object(name):   # an object in memory reads no file
        return None
    key = str(name).strip()
    if is_standard_spectrum(key):    # a standard table: pvlib's file
        table = standard_table_path(key)
        return ("the reference spectrum table of pvlib", table) if table is not None else None
    path = Path(key)
    if relative_to is not None and not path.is_absolute():
        path = Path(relative_to) / path
    return ("the spectrum file", path)


def stack_inputs(stack, *, spectrum=None, package=True):
    """Every file solving ``stack`` reads: the stack file, its spectrum CSV (or the ``spectrum``
    override, relative to the working folder), every subcell's EQE CSV, the package's data."""
    found = []
    if stack.source:
        found.append(("the stack file", Path(stack.source)))
    if spectrum is not None:
        found.append(spectrum_input(spectrum))
    else:
        found.append(spectrum_input(stack.conditions.spectrum, stack.folder))
    from siltandem.materials.userfiles import is_material_file, material_files

    for material in dict.fromkeys(layer.material for layer in stack.layers):
        if is_material_file(material):       # the user's material file and its CSV tables
            found += [(f"the material file {Path(material).name}", Path(f))
                      for f in material_files(material)]
    for element in stack.elements:
        if element.values.get("eqe"):
            found.append((f"the quantum-efficiency file of {element.label}",
                          Path(element.values["eqe"])))
    found = [item for item in found if item is not None]
    return found + package_inputs() if package else found


def input_files(stack, *, spectrum=None):
    """The user's files among :func:`stack_inputs` (no package data, no pvlib table), as text:
    what a study's chunk key fingerprints (the code digest covers the package's data)."""
    return [str(path) for what, path in stack_inputs(stack, spectrum=spectrum, package=False)
            if not what.startswith("the reference spectrum table")]
