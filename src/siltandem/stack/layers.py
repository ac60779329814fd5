"""Layer stacks: ``[[layer]]`` and ``[[coating]]`` tables, validated into typed objects.

A layer stack lists what a grower would list, sun side first:

    [[coating]]                  # optional antireflection coating, outermost first
    name = "MgF2"
    refractive_index = 1.38
    thickness_nm = 100

    [[layer]]
    name = "top emitter"
    material = "GaInP"           # a library name; alloys take composition (or "Ga0.51In0.49P")
    composition = 0.51
    thickness_nm = 100
    doping = "n:2e18"            # type and net doping in cm^-3
    diffusion_length_um = 0.5    # or lifetime_ns (minority carriers)
    srv_cm_s = 1e4               # recombination velocity at the layer's outer surface

The compiler (compile_layers.py) finds the subcells, tunnel junctions and isotype interfaces.
"""
from dataclasses import dataclass
import math
from pathlib import Path
import re

from siltandem.errors import StackError
from siltandem.stack.schema import read_number, suggest
from siltandem.text import excerpt

LAYER_KEYS = {"name", "material", "composition", "thickness_nm", "doping",
              "diffusion_length_um", "lifetime_ns", "srv_cm_s", "tunnel_peak_mA_cm2",
              "tunnel_peak_V", "tunnel_valley_mA_cm2", "tunnel_valley_V", "offset_eV", "gap_eV", "j0_fA_cm2",
              "transport", "sheet_charge_cm2", "luminescent_coupling", "srh_lifetime_ns",
              "photon_recycling_factor", "ere", "string", "gap_narrowing", "statistics"}
COATING_KEYS = {"name", "refractive_index", "extinction", "thickness_nm"}
RULE_KEYS = {"tunnel_doping_cm3": 5e18}
OPTICS_KEYS = {"back_reflectance": 0.0, "ambient_index": 1.0, "back_scattering": "specular",
               "front_scattering": "specular", "back_haze": 1.0, "front_haze": 1.0}
#: the text keys of ``[optics]`` and their allowed values: how each surface reflects or lets light in
SCATTERING_CHOICES = ("specular", "lambertian")
#: shortest minority-carrier diffusion length and lifetime a layer may give: 1 nm (a few
#: lattice spacings) and 1 fs (below carrier scattering times); with the library's
#: mobilities 1 fs gives about 1 nm
MIN_DIFFUSION_LENGTH_UM = 1e-3
MIN_LIFETIME_NS = 1e-6
#: numeric layer keys and their ranges (unit, low, high, low_open, reason): what parse_layers
#: checks in a file, and what a study's --vary of a layer key is checked against
#: (check_layer_value)
LAYER_NUMBERS = {
    "thickness_nm": dict(unit="nm", low=0.0, high=2e6, low_open=True),
    "diffusion_length_um": dict(unit="um", low=MIN_DIFFUSION_LENGTH_UM, high=1e5, low_open=False,
                                reason="a diffusion length below 1 nm, a few lattice spacings, "
                                       "has no meaning"),
    "lifetime_ns": dict(unit="ns", low=MIN_LIFETIME_NS, high=1e9, low_open=False,
                        reason="a lifetime below a femtosecond is shorter than any carrier "
                               "scattering time"),
    "srv_cm_s": dict(unit="cm/s", low=0.0, high=1e8, low_open=False),
    "srh_lifetime_ns": dict(unit="ns", low=MIN_LIFETIME_NS, high=1e9, low_open=False,
                            reason="a lifetime below a femtosecond is shorter than any carrier "
                                   "scattering time"),
    "ere": dict(unit="", low=1e-12, high=1.0, low_open=False,
                reason="an external radiative efficiency is a fraction; below 1e-12 the cell gives "
                       "no voltage"),
    "photon_recycling_factor": dict(unit="", low=1.0, high=1e4, low_open=False,
                                    reason="photon recycling can only lengthen the radiative "
                                           "lifetime (a factor of 1 is no recycling)"),
    "j0_fA_cm2": dict(unit="fA/cm2", low=0.0, high=1e9, low_open=True,
                      reason="a measured saturation current density is positive"),
    # in units of the subcell's one-sided radiative limit J0,rad: emission into a semiconductor below
    # reaches about n^2 (10 to 14) of it (circuit/layer_coupling.py)
    "luminescent_coupling": dict(unit="", low=0.0, high=50.0, low_open=False,
                                 reason="emission into a medium of index n is at most about n^2 times "
                                        "J0,rad, and no semiconductor has n above 7")}
#: ``[device]`` keys of a layer stack and their defaults: the lumped series resistance of the
#: string (grid, contacts, lateral spreading, bonds), a shunt across every subcell, and the
#: fraction of the front shaded by the grid (scales the light entering the stack)
DEVICE_KEYS = {"series_ohm_cm2": 0.0, "shunt_ohm_cm2": math.inf, "shading_fraction": 0.0}
#: their ranges (as the element stacks' series resistor and subcell shunt; a shading of 1 or more
#: leaves no light)
DEVICE_NUMBERS = {
    "series_ohm_cm2": dict(unit="ohm cm2", low=0.0, high=1e3, low_open=False),
    "shunt_ohm_cm2": dict(unit="ohm cm2", low=1e-6, high=math.inf, low_open=False,
                          reason="below 1e-6 ohm cm2 the shunt is a short circuit"),
    "shading_fraction": dict(unit="", low=0.0, high=0.99, low_open=False,
                             reason="a grid that shades the whole front leaves no light")}
#: net doping range [cm^-3] of ``doping = "n:..."``
DOPING_RANGE_CM3 = (1e10, 1e21)
_DOPING = re.compile(r"^\s*([A-Za-z]*)\s*:\s*(.*?)\s*$")


@dataclass(frozen=True)
class Layer:
    """One grown layer, validated.

    Attributes
    ----------
    index : int
        1-based position in the file (sun side first).
    name, material : str
    composition : float or None
    thickness_nm : float
    polarity : str
        "n" or "p".
    doping_cm3 : float
        Net doping [cm^-3].
    diffusion_length_um, lifetime_ns : float or None
        Minority-carrier diffusion length or lifetime (one of them, or neither: then the library's
        mobility and a default lifetime are used by the compiler).
    srv_cm_s : float or None
        Recombination velocity at the layer's outer surface [cm/s].
    """

    index: int
    name: str
    material: str
    composition: float | None
    thickness_nm: float
    polarity: str
    doping_cm3: float
    diffusion_length_um: float | None = None
    lifetime_ns: float | None = None
    srv_cm_s: float | None = None
    #: per-junction overrides on the upper layer of a tunnel junction (None: estimated)
    tunnel: dict | None = None
    #: band-offset override at this layer's interface with the layer below [eV]
    offset_eV: float | None = None
    #: the 300 K gap of an ordered alloy (GaInP), None: the library's disordered alloy [eV]
    gap_eV: float | None = None
    #: measured saturation current density of this region (emitter, or a base's passivated
    #: rear) [fA/cm^2], replacing the diffusion model's J01 part of it (None: the model)
    j0_fA_cm2: float | None = None
    #: transport over an isotype interface with the layer below (None: "thermionic")
    transport: str | None = None
    #: fixed charge at this layer's interface with the layer below [elementary charges per cm^2]
    sheet_charge_cm2: float | None = None
    #: on a subcell's emitter or base: its luminescent coupling to the subcell below, replacing the
    #: value from the layers (None: from the layers, circuit/layer_coupling.py)
    luminescent_coupling: float | None = None
    #: non-radiative (Shockley-Read-Hall) minority-carrier lifetime [ns] (None: from
    #: lifetime_ns / diffusion_length_um less the radiative part)
    srh_lifetime_ns: float | None = None
    #: photon-recycling factor of the layer's radiative lifetime (None: self-consistent)
    photon_recycling_factor: float | None = None
    #: on a III-V subcell's base: its measured external radiative efficiency, J01 = J0,rad,front / ere
    ere: float | None = None
    #: which string (pair of terminals) the layer belongs to, 1 on the sun side (stack/strings.py)
    string: int = 1
    #: on a Si layer: its band-gap narrowing model, "schenk" or "klaassen" (None: "schenk")
    gap_narrowing: str | None = None
    #: statistics of the isotype law at this layer's interface with the layer below where a side is
    #: (nearly) degenerate: "fermi-dirac" or "boltzmann" (None: "fermi-dirac"; circuit/isotype.py)
    statistics: str | None = None

    @property
    def label(self):
        return f"layer {self.index} {self.name!r}"


@dataclass(frozen=True)
class Coating:
    """One antireflection-coating layer (non-absorbing unless ``extinction`` > 0)."""

    index: int
    name: str
    refractive_index: float
    extinction: float
    thickness_nm: float


def _positive_number(table, key, *, file, where, unit, low=0.0, high=math.inf, required=True,
                     low_open=True, reason=""):
    if key not in table:
        if required:
            raise StackError(f"missing required key {key!r} ({unit})", file=file, where=where,
                             fix=f"add {key} = <number in {unit}>")
        return None
    value = table[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or (
            isinstance(value, float) and math.isnan(value)):
        raise StackError(f"key {key!r} must be a number ({unit}), got {excerpt(value)}",
                         file=file, where=where, fix=f"write {key} = <number> without quotes")
    value = read_number(value, file=file, where=where, key=key, unit=unit)
    bad_low = value <= low if low_open else value < low
    if bad_low or value > high:
        bound = "(" if low_open else "["
        span = f"{bound}{low:g}, {high:g}]" + (f" {unit}" if unit else "")
        raise StackError(f"{key} = {value:g} is outside {span}"
                         + (f" ({reason})" if reason else ""), file=file, where=where,
                         fix=f"give a {key} within {span}")
    return value


def parse_doping(text, *, file, where):
    """``"n:2e18"`` -> ("n", 2e18); clear errors for anything else."""
    fix = 'write doping = "n:2e18" or "p:1e17" (type, colon, net doping in cm^-3)'
    if not isinstance(text, str):
        raise StackError(f"doping must be text like \"n:2e18\", got {excerpt(text)}", file=file,
                         where=where, fix=fix)
    match = _DOPING.match(text)
    if not match or match.group(1) not in ("n", "p"):
        raise StackError(f"doping {excerpt(text)} is not understood (the type before the colon "
                         "must be "
                         "n or p)", file=file, where=where, fix=fix)
    try:
        value = float(match.group(2))
    except ValueError:
        raise StackError(f"doping {excerpt(text)}: {excerpt(match.group(2))} is not a number",
                         file=file,
                         where=where, fix=fix) from None
    if not DOPING_RANGE_CM3[0] <= value <= DOPING_RANGE_CM3[1]:
        raise StackError(f"doping {value:g} cm^-3 is outside 1e10..1e21 cm^-3", file=file,
                         where=where, fix="give a net doping between 1e10 and 1e21 cm^-3")
    return match.group(1), value


def _layer_name(table, i, names, file):
    """The name of the i-th layer (default ``layer<i>``) and where it is, for messages: a
    table, a non-empty name used once (``names``: name -> index, updated), known keys only."""
    where = f"layer {i}"
    if not isinstance(table, dict):
        raise StackError("each [[layer]] must be a table", file=file, where=where,
                         fix="write [[layer]] followed by key = value lines")
    name = table.get("name", f"layer{i}")
    if not isinstance(name, str) or not name.strip():
        raise StackError(f"name must be a non-empty text, got {excerpt(name)}", file=file,
                         where=where, fix='write name = "top emitter" (any unique name)')
    where = f"layer {i} {name!r}"
    if name in names:
        raise StackError(f"name {name!r} is used twice (layers {names[name]} and {i})",
                         file=file, where=where, fix="give every layer its own name")
    names[name] = i
    for key in table:
        if key not in LAYER_KEYS:
            raise StackError(f"unknown key {key!r} for a layer", file=file, where=where,
                             fix=suggest(key, LAYER_KEYS) + "allowed keys: "
                             + ", ".join(sorted(LAYER_KEYS)))
    return name, where


def resolve_material(material, *, file, where, folder_materials=None):
    """A layer's ``material`` as the compiler reads it: a library name as written; a material
    file (``"my_absorber.toml"``) as its absolute path, relative to the stack file; a name given
    by a file of the ``[materials] folder`` (``folder_materials``: lower-case name -> path) as
    that file's absolute path. StackError for a material file that is not there."""
    from siltandem.materials.userfiles import is_material_file

    if folder_materials and material.strip().lower() in folder_materials:
        return folder_materials[material.strip().lower()]
    if not is_material_file(material):
        return material
    path = Path(material.strip()).expanduser()
    if not path.is_absolute():
        path = (Path(file).parent if file is not None else Path.cwd()) / path
    if not path.is_file():
        raise StackError(f"material file {excerpt(material)} not found (looked for {path})",
                         file=file, where=f"{where}, key material",
                         fix="give the material file's path relative to the stack file, or a "
                             "library name (see `siltandem materials`)")
    return str(path.absolute())


def parse_materials(table, *, file):
    """``[materials]``: ``folder``, a folder of material files (relative to the stack file); each
    file's name and aliases become material names of this stack (before the library's).
    Returns {lower-case name: absolute path}."""
    from siltandem.materials.userfiles import material_names

    if not isinstance(table, dict):
        raise StackError("[materials] must be a table", file=file, where="key materials",
                         fix='write [materials] then folder = "my_materials"')
    for key in table:
        if key != "folder":
            raise StackError(f"unknown key {key!r} in [materials]", file=file,
                             where=f"key materials.{key}",
                             fix=suggest(key, ["folder"]) + "allowed: folder")
    if "folder" not in table:
        return {}
    folder = table["folder"]
    if not isinstance(folder, str) or not folder.strip():
        raise StackError(f"folder must be a folder path (text), got {excerpt(folder)}", file=file,
                         where="key materials.folder", fix='write folder = "my_materials"')
    path = Path(folder.strip()).expanduser()
    if not path.is_absolute():
        path = (Path(file).parent if file is not None else Path.cwd()) / path
    if not path.is_dir():
        raise StackError(f"material folder not found: {path}", file=file,
                         where="key materials.folder",
                         fix="give the folder of material files relative to the stack file")
    found = {}
    for entry in sorted(path.absolute().glob("*.toml")):
        for name in material_names(entry):
            key = name.lower()
            if key in found and found[key] != str(entry):
                raise StackError(f"material name {name!r} is given by two files: "
                                 f"{Path(found[key]).name} and {entry.name}", file=file,
                                 where="key materials.folder",
                                 fix="give every material file of the folder its own name and "
                                     "aliases")
            found[key] = str(entry)
    if not found:
        raise StackError(f"no material files (*.toml) in {path}", file=file,
                         where="key materials.folder",
                         fix="put the material files in the folder, or remove [materials]")
    return found


def _layer_material(table, *, file, where, folder_materials=None):
    """The layer's material (a library name, or a material file's absolute path) and
    composition (None if not given), checked as the library's."""
    material = table.get("material")
    if material is None:
        raise StackError("missing required key 'material'", file=file, where=where,
                         fix='add material = "GaAs" (see `siltandem materials`)')
    if not isinstance(material, str):
        raise StackError(f"material must be text, got {excerpt(material)}", file=file,
                         where=where,
                         fix='write material = "GaAs"')
    composition = table.get("composition")
    if composition is not None and (isinstance(composition, bool)
                                    or not isinstance(composition, (int, float))):
        raise StackError(f"composition must be a number in [0, 1], got "
                         f"{excerpt(composition)}", file=file, where=where,
                         fix="write composition = 0.51")
    if composition is not None:
        composition = read_number(composition, file=file, where=where, key="composition",
                                  unit="")
    material = resolve_material(material, file=file, where=where,
                                folder_materials=folder_materials)
    gap = None
    if "gap_eV" in table:
        gap = read_number(table["gap_eV"], file=file, where=where, key="gap_eV", unit="eV")
    _check_material(material, composition, file=file, where=where, gap_eV=gap)
    return material, composition, gap


def _minority_carriers(table, *, file, where):
    """Diffusion length [um] or lifetime [ns] (not both; None if not given) and the surface
    recombination velocity [cm/s]."""
    length = _positive_number(table, "diffusion_length_um", file=file, where=where,
                              required=False, **LAYER_NUMBERS["diffusion_length_um"])
    lifetime = _positive_number(table, "lifetime_ns", file=file, where=where,
                                required=False, **LAYER_NUMBERS["lifetime_ns"])
    if length is not None and lifetime is not None:
        raise StackError("give diffusion_length_um or lifetime_ns, not both", file=file,
                         where=where, fix="remove one of the two")
    if "srh_lifetime_ns" in table and (length is not None or lifetime is not None):
        raise StackError("srh_lifetime_ns (the non-radiative lifetime) is given together with the "
                         "total lifetime or diffusion length", file=file, where=where,
                         fix="give srh_lifetime_ns alone (the radiative part is added from the "
                             "material's radiative coefficient), or lifetime_ns / "
                             "diffusion_length_um alone (the measured total)")
    srv = _positive_number(table, "srv_cm_s", file=file, where=where, required=False,
                           **LAYER_NUMBERS["srv_cm_s"])
    return length, lifetime, srv


def _tunnel_settings(table, *, file, where):
    """The layer's given tunnel-junction numbers (``peak_mA_cm2``, ``peak_V``, ``valley_mA_cm2``,
    ``valley_V``), an empty dict if none."""
    tunnel = {}
    for key, unit, high in (("tunnel_peak_mA_cm2", "mA/cm2", 1e9), ("tunnel_peak_V", "V", 5),
                            ("tunnel_valley_mA_cm2", "mA/cm2", 1e9),
                            ("tunnel_valley_V", "V", 10)):
        value = _positive_number(table, key, file=file, where=where, unit=unit, high=high,
                                 required=False)
        if value is not None:
            tunnel[key.removeprefix("tunnel_")] = value
    return tunnel


def _parse_layer(i, table, names, *, file, folder_materials=None):
    """One ``[[layer]]`` table (the i-th, from 1) validated into a Layer, in the order of its
    checks: name and keys, material, thickness, doping, minority carriers, tunnel numbers,
    band offset."""
    name, where = _layer_name(table, i, names, file)
    material, composition, gap = _layer_material(table, file=file, where=where,
                                                 folder_materials=folder_materials)
    thickness = _positive_number(table, "thickness_nm", file=file, where=where,
                                 **LAYER_NUMBERS["thickness_nm"])
    if "doping" not in table:
        raise StackError("missing required key 'doping'", file=file, where=where,
                         fix='add doping = "n:2e18" (type and net doping in cm^-3)')
    polarity, doping = parse_doping(table["doping"], file=file, where=where)
    length, lifetime, srv = _minority_carriers(table, file=file, where=where)
    tunnel = _tunnel_settings(table, file=file, where=where)
    offset = None
    if "offset_eV" in table:
        offset = _positive_number(table, "offset_eV", file=file, where=where, unit="eV",
                                  low=-3.0, high=3.0, low_open=False)
    j0 = _positive_number(table, "j0_fA_cm2", file=file, where=where, required=False,
                          **LAYER_NUMBERS["j0_fA_cm2"])
    transport = table.get("transport")
    if transport is not None and transport not in ("thermionic", "thermionic-field"):
        raise StackError(f"transport = {transport!r} is not allowed", file=file,
                         where=f"{where}, key transport",
                         fix='transport is "thermionic-field" (the default: emission over the '
                             'spike and tunnelling through it) or "thermionic" (over it only)')
    statistics = table.get("statistics")
    if statistics is not None and statistics not in STATISTICS_CHOICES:
        raise StackError(f"statistics = {excerpt(statistics)} is not allowed", file=file,
                         where=f"{where}, key statistics",
                         fix='statistics is "fermi-dirac" (the default: Fermi-Dirac charge and emission '
                             'where a side of the interface below is within 3 kT of its band) or '
                             '"boltzmann" (the Boltzmann law throughout)')
    sheet = _positive_number(table, "sheet_charge_cm2", file=file, where=where, required=False,
                             unit="cm-2", low=-1e15, high=1e15, low_open=False,
                             reason="a fixed interface charge in elementary charges per cm^2; a "
                                    "full monolayer is below 1e15")
    coupling = _positive_number(table, "luminescent_coupling", file=file, where=where, required=False,
                                **LAYER_NUMBERS["luminescent_coupling"])
    srh, recycling, ere = (_positive_number(table, key, file=file, where=where, required=False,
                                            **LAYER_NUMBERS[key])
                           for key in ("srh_lifetime_ns", "photon_recycling_factor", "ere"))
    return Layer(i, name, material, None if composition is None else float(composition),
                 thickness, polarity, doping, length, lifetime, srv, tunnel or None, offset,
                 gap, j0, transport, sheet, coupling, srh, recycling, ere,
                 gap_narrowing=_gap_narrowing(table, material, file=file, where=where),
                 statistics=statistics)


#: the values of a layer's ``statistics`` key (the isotype law at its interface with the layer below)
STATISTICS_CHOICES = ("fermi-dirac", "boltzmann")
#: the values of a Si layer's ``gap_narrowing`` key (laws/silicon.py GAP_NARROWING_MODELS)
GAP_NARROWING_CHOICES = ("schenk", "klaassen")


def _gap_narrowing(table, material, *, file, where):
    """The ``gap_narrowing`` key of a layer: a model name on a Si layer, or None."""
    if "gap_narrowing" not in table:
        return None
    value = table["gap_narrowing"]
    choices = ", ".join(repr(c) for c in GAP_NARROWING_CHOICES)
    if not isinstance(value, str) or value not in GAP_NARROWING_CHOICES:
        close = suggest(value, GAP_NARROWING_CHOICES) if isinstance(value, str) else ""
        raise StackError(f"gap_narrowing = {excerpt(value)} is not a band-gap narrowing model",
                         file=file, where=f"{where}, key gap_narrowing",
                         fix=close + f"give gap_narrowing as one of {choices}, or remove it (default \"schenk\")")
    if material != "Si":
        raise StackError(f"gap_narrowing is given on a {material} layer: only Si layers have a "
                         "band-gap narrowing model", file=file, where=f"{where}, key gap_narrowing",
                         fix="remove gap_narrowing from this layer")
    return value


def parse_layers(tables, *, file, folder_materials=None):
    """Validate the ``[[layer]]`` tables into Layer objects (materials are checked here too).

    Parameters
    ----------
    tables : list of dict
        The file's ``[[layer]]`` tables, sun side first.
    file : str or Path
        The stack file, for messages.

    Returns
    -------
    tuple of Layer
        Thicknesses in nm, net dopings in cm^-3, diffusion lengths in um, lifetimes in ns,
        recombination velocities in cm/s, as the file gives them.

    Raises
    ------
    StackError
        Naming the layer and key, at the first problem found.
    """
    if not isinstance(tables, list) or not tables:
        raise StackError("layer must be a non-empty array of tables", file=file,
                         where="key layer", fix="write each layer as [[layer]] (double brackets)")
    names = {}
    return tuple(_parse_layer(i, table, names, file=file, folder_materials=folder_materials)
                 for i, table in enumerate(tables, start=1))


def parse_coatings(tables, *, file):
    """Validate the ``[[coating]]`` tables (outermost first)."""
    if not isinstance(tables, list):
        raise StackError("coating must be an array of tables", file=file, where="key coating",
                         fix="write each coating layer as [[coating]]")
    if len(tables) > 4:
        raise StackError(f"{len(tables)} coating layers; at most 4", file=file,
                         where="key coating", fix="merge or remove coating layers")
    coatings = []
    for i, table in enumerate(tables, start=1):
        where = f"coating {i}"
        if not isinstance(table, dict):
            raise StackError("each [[coating]] must be a table", file=file, where=where,
                             fix="write [[coating]] followed by key = value lines")
        name = str(table.get("name", f"coating{i}"))
        where = f"coating {i} {name!r}"
        for key in table:
            if key not in COATING_KEYS:
                raise StackError(f"unknown key {key!r} for a coating", file=file, where=where,
                                 fix=suggest(key, COATING_KEYS) + "allowed keys: "
                                 + ", ".join(sorted(COATING_KEYS)))
        index = _positive_number(table, "refractive_index", file=file, where=where, unit="",
                                 low=1.0, high=5.0, low_open=False)
        extinction = _positive_number(table, "extinction", file=file, where=where, unit="",
                                      high=5.0, required=False, low_open=False) or 0.0
        thickness = _positive_number(table, "thickness_nm", file=file, where=where, unit="nm",
                                     high=1e4)
        coatings.append(Coating(i, name, index, extinction, thickness))
    return tuple(coatings)


def _settings(table, *, file, section, defaults, ranges):
    """A small table of numeric settings (``[rules]``, ``[optics]``): known keys, each in range.

    ``ranges`` maps key -> (unit, low, high, low_open).
    """
    if not isinstance(table, dict):
        raise StackError(f"[{section}] must be a table", file=file, where=f"key {section}",
                         fix=f"write [{section}] followed by key = value lines")
    for key in table:
        if key not in defaults:
            raise StackError(f"unknown key {key!r} in [{section}]", file=file,
                             where=f"key {section}.{key}", fix=suggest(key, defaults)
                             + "allowed: " + ", ".join(defaults))
    values = dict(defaults)
    for key, (unit, low, high, low_open) in ranges.items():
        if key in table:
            values[key] = _positive_number(table, key, file=file, where=f"key {section}.{key}",
                                           unit=unit, low=low, high=high, low_open=low_open)
    return values


def parse_rules(table, *, file):
    """``[rules]``: settings of the layer compiler (thresholds), with their defaults."""
    return _settings(table, file=file, section="rules", defaults=RULE_KEYS,
                     ranges={"tunnel_doping_cm3": ("cm-3", 1e16, 1e21, True)})


def parse_optics(table, *, file):
    """``[optics]``: ``back_reflectance`` (a mirror behind the last layer, 0..1, default 0),
    ``ambient_index`` (the medium in front: 1 for air, about 1.5 under glass or encapsulant),
    ``back_scattering`` ("specular", the default: a flat mirror; "lambertian": an ideal
    scattering rear of reflectance back_reflectance) and ``front_scattering`` ("specular": a flat
    front; "lambertian": an ideally textured front, e.g. a stand-alone Si cell); ``back_haze`` and
    ``front_haze`` (0..1, default 1, only with a "lambertian" surface): the fraction of that surface
    that scatters, the rest flat (laws/haze.py)."""
    values = _settings(table, file=file, section="optics", defaults=OPTICS_KEYS,
                       ranges={"back_reflectance": ("", 0.0, 1.0, False),
                               "ambient_index": ("", 1.0, 5.0, False),
                               "back_haze": ("", 0.0, 1.0, False), "front_haze": ("", 0.0, 1.0, False)})
    for key in ("back_scattering", "front_scattering"):
        if key not in table:
            continue
        value = table[key]
        if not isinstance(value, str) or value not in SCATTERING_CHOICES:
            close = suggest(value, SCATTERING_CHOICES) if isinstance(value, str) else ""
            raise StackError(f"{key} = {excerpt(value)} is not one of "
                             + ", ".join(repr(c) for c in SCATTERING_CHOICES), file=file,
                             where=f"key optics.{key}",
                             fix=close + f'write {key} = "specular" (flat) or {key} = "lambertian" '
                                 "(ideal scattering)")
        values[key] = value
    for side in ("back", "front"):
        if f"{side}_haze" in table and values[f"{side}_scattering"] != "lambertian":
            raise StackError(f"{side}_haze is given but {side}_scattering is not \"lambertian\": the "
                             "haze is the scattering fraction of a scattering surface", file=file,
                             where=f"key optics.{side}_haze",
                             fix=f'add {side}_scattering = "lambertian" (then {side}_haze = 0..1 is the '
                                 f"fraction it scatters, the rest is reflected or let in as by a flat "
                                 f"surface), or remove {side}_haze")
    if values["back_scattering"] == "lambertian" and values["back_reflectance"] == 0:
        raise StackError('back_scattering = "lambertian" with back_reflectance = 0: a rear that '
                         "reflects nothing scatters nothing", file=file,
                         where="key optics.back_scattering",
                         fix="give back_reflectance = <0..1>, the scattering rear's reflectance "
                             "(e.g. 0.95), or remove back_scattering")
    return values

def parse_device(table, *, file):
    """``[device]`` of a layer stack: ``series_ohm_cm2`` (a series resistor in the string, default
    0), ``shunt_ohm_cm2`` (a shunt across every subcell, default none), ``shading_fraction`` (grid
    shading: every photocurrent times 1 - f, default 0); each checked against DEVICE_NUMBERS."""
    if not isinstance(table, dict):
        raise StackError("[device] must be a table", file=file, where="key device",
                         fix="write [device] followed by key = value lines, e.g. "
                             "series_ohm_cm2 = 0.5")
    for key in table:
        if isinstance(table[key], dict) and key.isdigit():
            continue        # [device.2]: one string's own values (stack/strings.py)
        if key not in DEVICE_KEYS:
            raise StackError(f"unknown key {key!r} in [device]", file=file,
                             where=f"key device.{key}", fix=suggest(key, DEVICE_KEYS)
                             + "allowed: " + ", ".join(DEVICE_KEYS))
    return {key: check_device_value(key, table[key], file=file) if key in table else default
            for key, default in DEVICE_KEYS.items()}


def check_device_value(key, value, *, file=None, where=None):
    """One ``[device]`` key set to ``value``, checked as the file's (a study's ``--vary
    device.<key>`` goes through here too). Returns it as a float."""
    return _positive_number({key: value}, key, file=file, where=where or f"key device.{key}",
                            **DEVICE_NUMBERS[key])


def _check_material(material, composition, *, file, where, gap_eV=None):
    from siltandem.materials import MaterialError, load_material

    try:
        load_material(material, None if composition is None else float(composition),
                      gap_eV=gap_eV)
    except StackError as exc:     # a material file's own problem: named in that file
        raise StackError(exc.problem, file=exc.file, where=f"{exc.where or 'material file'} "
                         f"(the material of {where} in {file})", fix=exc.fix) from None
    except MaterialError as exc:
        raise StackError(str(exc), file=file, where=f"{where}, key material",
                         fix="see `siltandem materials` for the library and how each alloy "
                             "takes its composition") from None


def check_layer_value(layer, key, value, *, file=None, where=None):
    """One numeric key of ``layer`` set to ``value``, checked as parse_layers checks the file's
    (same ranges, same messages): a study's varied layer keys go through here. Returns it."""
    if key in LAYER_NUMBERS:
        return _positive_number({key: value}, key, file=file, where=where, **LAYER_NUMBERS[key])
    if key == "doping_cm3":
        return parse_doping(f"{layer.polarity}:{float(value)!r}", file=file, where=where)[1]
    if key == "composition":
        if isinstance(value, bool) or not isinstance(value, (int, float)) or math.isnan(value):
            raise StackError(f"composition must be a number in [0, 1], got {excerpt(value)}", file=file,
                             where=where, fix="write composition = 0.51")
        _check_material(layer.material, value, file=file, where=where, gap_eV=layer.gap_eV)
        return float(value)
    if key == "gap_eV":      # an ordered alloy's gap (GaInP)
        value = read_number(value, file=file, where=where, key="gap_eV", unit="eV")
        _check_material(layer.material, layer.composition, file=file, where=where, gap_eV=value)
        return value
    raise StackError(f"layer {layer.name!r} has no numeric key {key!r}", file=file, where=where,
                     fix="vary one of " + ", ".join(list(LAYER_NUMBERS) + ["doping_cm3",
                                                                          "composition", "gap_eV"]))
