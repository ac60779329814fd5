"""Stack files: TOML loading and validation into typed objects, with clear errors.

A stack file has a ``[stack]`` table (name, notes), a ``[conditions]`` table (spectrum, suns,
temperature_K, terminals) and either ``[[element]]`` tables (circuit level) or ``[[layer]]``
tables (layer level, compiled by a later stage). Every problem raises :class:`StackError` naming
the file, the element (index and name) or key, what is wrong and how to fix it.
"""
from dataclasses import dataclass, field, replace
import hashlib
from pathlib import Path
import tomllib


from siltandem.constants import STANDARD_TEMPERATURE_K
from siltandem.errors import StackError
from siltandem.text import excerpt
from siltandem.stack.schema import (COMMON_ELEMENT_KEYS, CONDITION_KEYS, CONDITION_SCHEMA,
                                    ELEMENT_SCHEMA, ISOTYPE_NUMBERS, ISOTYPE_TEXTS, STACK_KEYS,
                                    TOP_LEVEL_KEYS, check_element_values, check_number,
                                    check_range, read_number, suggest)


@dataclass(frozen=True)
class Conditions:
    """Illumination, temperature and wiring.

    Attributes
    ----------
    spectrum : str
        A spectrum name or a CSV path (already resolved relative to the stack file).
    suns : float
        Concentration [-].
    temperature_K : float
    terminals : int
        2 for one series string; 4 (6, ...) for independent strings, two terminals each.
    """

    spectrum: str = "am1.5g"
    suns: float = 1.0
    temperature_K: float = STANDARD_TEMPERATURE_K
    terminals: int = 2

    @property
    def strings(self):
        return self.terminals // 2


@dataclass(frozen=True)
class ElementSpec:
    """A validated ``[[element]]`` table: kind, name, string and its parameters in file units."""

    index: int          # 1-based position in the file (sun side first)
    kind: str
    name: str
    string: int
    values: dict        # key (file units) -> float

    @property
    def label(self):
        return f"element {self.index} {self.name!r}"


@dataclass(frozen=True)
class Stack:
    """A validated stack: what the file says, nothing computed yet."""

    name: str
    notes: str
    conditions: Conditions
    elements: tuple = ()
    layers: tuple = ()
    source: str | None = None       # the file it came from
    folder: str | None = None       # for resolving relative paths
    extra: dict = field(default_factory=dict)
    coatings: tuple = ()
    rules: dict = field(default_factory=dict)
    source_sha256: str | None = None   # SHA-256 of the file's bytes as read (outputs quote it)


def _parse_element(index, table, *, file, terminals):
    where = f"element {index}"
    if not isinstance(table, dict):
        raise StackError("each [[element]] must be a table", file=file, where=where,
                         fix="write [[element]] followed by key = value lines")
    name = table.get("name", f"element{index}")
    if not isinstance(name, str) or not name.strip():
        raise StackError(f"name must be a non-empty text, got {excerpt(name)}", file=file,
                         where=where,
                         fix='write name = "top" (any unique name)')
    where = f"element {index} {name!r}"
    if "kind" not in table:
        raise StackError("missing key 'kind'", file=file, where=where,
                         fix='add kind = "subcell", "resistor", "tunnel" or "isotype"')
    kind = table["kind"]
    if not isinstance(kind, str):
        raise StackError(f"kind must be text, got {excerpt(kind)}", file=file, where=where,
                         fix='write kind = "subcell"')
    if kind == "isotype":
        string = _parse_string(table, file=file, where=where, terminals=terminals)
        return ElementSpec(index, kind, name, string, _parse_isotype(table, file=file,
                                                                     where=where))
    if kind not in ELEMENT_SCHEMA:
        raise StackError(f"unknown element kind {kind!r}", file=file, where=where,
                         fix=suggest(kind, list(ELEMENT_SCHEMA) + ["isotype"])
                         + "kind is one of " + ", ".join(repr(k) for k in
                                                        list(ELEMENT_SCHEMA) + ["isotype"]))
    schema = {p.key: p for p in ELEMENT_SCHEMA[kind]}
    extra_keys = {"material", "eqe"} if kind == "subcell" else set()
    for key in table:
        if key not in schema and key not in COMMON_ELEMENT_KEYS and key not in extra_keys:
            raise StackError(f"unknown key {key!r} for a {kind}", file=file, where=where,
                             fix=suggest(key, list(schema) + list(COMMON_ELEMENT_KEYS)
                                          + list(extra_keys)) + "allowed keys: "
                             + ", ".join(sorted(set(schema) | COMMON_ELEMENT_KEYS | extra_keys)))
    string = _parse_string(table, file=file, where=where, terminals=terminals)
    material = None
    if "material" in table:
        material = _subcell_material(table["material"], file=file, where=where)
        if "gap_eV" not in table:
            table = {**table, "gap_eV": round(float(material.gap_eV(STANDARD_TEMPERATURE_K)), 6)}
    values = {}
    for key, spec in schema.items():
        if key in table:
            value = read_number(table[key], file=file, where=where, key=key, unit=spec.unit)
            check_range(spec, value, file=file, where=where)
        elif spec.default is None:
            raise StackError(f"missing required key {key!r} ({spec.help}, {spec.unit})",
                             file=file, where=where, fix=f"add {key} = <number in {spec.unit}>")
        else:
            value = spec.default
        values[key] = value
    if material is not None:
        values["material"] = material.name
    if "eqe" in table:
        values["eqe"], values["eqe_table"] = _subcell_eqe(table["eqe"], file=file, where=where)
    check_element_values(kind, values, file=file, where=where)
    return ElementSpec(index, kind, name, string, values)


def _subcell_material(name, *, file, where):
    """A subcell's ``material``: its gap then follows the library's Varshni law with temperature."""
    from siltandem.materials import MaterialError, load_material

    if not isinstance(name, str):
        raise StackError(f"material must be text, got {excerpt(name)}", file=file, where=where,
                         fix='write material = "GaAs" (alloys with their fractions, e.g. '
                             '"Ga0.51In0.49P")')
    try:
        return load_material(name)
    except MaterialError as exc:
        raise StackError(str(exc), file=file, where=f"{where}, key material",
                         fix="see `siltandem materials`; an alloy takes its fractions in the "
                             "name, e.g. Ga0.51In0.49P") from None


def _subcell_eqe(name, *, file, where):
    """A subcell's measured ``eqe`` CSV (wavelength_nm, eqe), resolved next to the stack file:
    (its path, its table). The table is read here once and travels with the stack (compiles,
    study chunks and cluster workers never read the file again)."""
    from siltandem.materials.eqe import read_eqe_csv

    if not isinstance(name, str):
        raise StackError(f"eqe must be a file path (text), got {excerpt(name)}", file=file,
                         where=where,
                         fix='write eqe = "top_eqe.csv" (columns wavelength_nm, eqe)')
    path = Path(name)
    if file is not None and not path.is_absolute():
        path = Path(file).parent / path
    if not path.is_file():
        raise StackError(f"quantum-efficiency file not found: {path}", file=file,
                         where=f"{where}, key eqe",
                         fix="give the CSV's path relative to the stack file")
    return str(path), read_eqe_csv(path, where=f"{where}, key eqe")


def _parse_string(table, *, file, where, terminals):
    string = table.get("string", 1)
    if isinstance(string, bool) or not isinstance(string, int) or not 1 <= string <= terminals // 2:
        raise StackError(f"string = {excerpt(string)} is not a string of this stack (terminals = "
                         f"{terminals} gives strings 1..{terminals // 2})", file=file, where=where,
                         fix="give string = 1 for the sun-side pair of terminals, 2 for the next")
    return string


def _parse_isotype(table, *, file, where):
    """An isotype interface, in one of two forms.

    Explicit: ``barrier_eV``, ``built_in_V`` and ``alpha`` (or the two sides' dopings and
    permittivities), ``orientation`` forward/reverse. From materials: ``upper_material``,
    ``lower_material`` (library names), ``upper_doping_cm3``, ``lower_doping_cm3``, ``carrier``,
    ``carriers_flow`` down/up; the alignment comes from the electron-affinity rule unless
    ``offset_eV`` is given.
    """
    allowed = set(ISOTYPE_NUMBERS) | set(ISOTYPE_TEXTS) | COMMON_ELEMENT_KEYS
    for key in table:
        if key not in allowed:
            raise StackError(f"unknown key {key!r} for an isotype interface", file=file,
                             where=where, fix=suggest(key, allowed) + "allowed keys: "
                             + ", ".join(sorted(allowed)))
    values = {}
    for key, spec in ISOTYPE_NUMBERS.items():
        if key in table:
            value = read_number(table[key], file=file, where=where, key=key, unit=spec.unit)
            check_range(spec, value, file=file, where=where)
            values[key] = value
    for key, options in ISOTYPE_TEXTS.items():
        if key in table:
            value = table[key]
            if not isinstance(value, str) or (options and value not in options):
                raise StackError(f"{key} = {value!r} is not allowed", file=file, where=where,
                                 fix=f"{key} is one of " + ", ".join(repr(o) for o in options)
                                 if options else f'write {key} = "<name>"')
            values[key] = value
    from_materials = "upper_material" in values or "lower_material" in values
    if from_materials:
        needed = ["upper_material", "lower_material", "upper_doping_cm3", "lower_doping_cm3"]
        wrong = [k for k in ("barrier_eV", "built_in_V", "alpha", "orientation") if k in values]
        if wrong:
            raise StackError(f"{', '.join(wrong)} cannot go with upper_material/lower_material",
                             file=file, where=where,
                             fix="give either the law's numbers (barrier_eV, built_in_V, alpha) "
                                 "or the two materials and their dopings")
        values.setdefault("carrier", "electron")
        values.setdefault("carriers_flow", "down")
        if values.get("transport") == "thermionic" and "tunnelling_mass" in values:
            raise StackError("tunnelling_mass goes with transport = \"thermionic-field\"",
                             file=file, where=f"{where}, key tunnelling_mass",
                             fix='remove tunnelling_mass, or transport = "thermionic"')
    else:
        needed = ["barrier_eV", "built_in_V"]
        sides = ["accumulation_doping_cm3", "depletion_doping_cm3",
                 "accumulation_permittivity", "depletion_permittivity"]
        if "alpha" not in values:
            missing_sides = [k for k in sides if k not in values]
            if missing_sides:
                raise StackError("alpha is missing and cannot be computed: no "
                                 + ", ".join(missing_sides), file=file, where=where,
                                 fix="give alpha = eps1*N1/(eps2*N2), or the two dopings and "
                                     "permittivities")
        elif any(k in values for k in sides):
            raise StackError("give alpha or the dopings and permittivities, not both",
                             file=file, where=where, fix="remove one of the two")
        values.setdefault("carrier", "electron")
        values.setdefault("orientation", "forward")
        _check_numbers_transport(values, file=file, where=where)
        if values.get("sheet_charge_cm2", 0.0) != 0.0 and not all(
                k in values for k in ("depletion_doping_cm3", "depletion_permittivity")):
            raise StackError("sheet_charge_cm2 needs the depletion side's doping and permittivity "
                             "(the charge is scaled by them)", file=file,
                             where=f"{where}, key sheet_charge_cm2",
                             fix="give the two sides' dopings and permittivities instead of alpha, "
                                 "or remove sheet_charge_cm2")
        for key in ("carriers_flow", "offset_eV", "upper_composition", "lower_composition", "statistics"):
            if key in values:
                raise StackError(f"{key} goes with upper_material/lower_material", file=file,
                                 where=where, fix=f"remove {key}, or describe the interface "
                                                  "by its two materials")
    missing = [k for k in needed if k not in values]
    if missing:
        raise StackError("missing required key" + ("s " if len(missing) > 1 else " ")
                         + ", ".join(repr(k) for k in missing), file=file, where=where,
                         fix="an isotype interface needs " + ", ".join(needed))
    return values


def _check_numbers_transport(values, *, file, where):
    """The numbers form keeps "thermionic" unless asked; "thermionic-field" needs the depletion
    side's doping, permittivity and tunnelling mass (for E00); tunnelling_mass only goes with it."""
    if values.get("transport", "thermionic") == "thermionic":
        if "tunnelling_mass" in values:
            raise StackError("tunnelling_mass goes with transport = \"thermionic-field\"",
                             file=file, where=f"{where}, key tunnelling_mass",
                             fix='remove tunnelling_mass, or add transport = "thermionic-field"')
        return
    missing = [k for k in ("depletion_doping_cm3", "depletion_permittivity", "tunnelling_mass")
               if k not in values]
    if missing:
        raise StackError('transport = "thermionic-field" needs the depletion side: no '
                         + ", ".join(missing), file=file, where=f"{where}, key transport",
                         fix="give the two sides' dopings and permittivities (instead of alpha) "
                             "and tunnelling_mass = m*/m0 of the depletion side, or describe the "
                             "interface by its two materials")


def _parse_conditions(table, *, file):
    if not isinstance(table, dict):
        raise StackError("[conditions] must be a table", file=file, where="key conditions",
                         fix="write [conditions] followed by key = value lines")
    for key in table:
        if key not in CONDITION_KEYS:
            raise StackError(f"unknown key {key!r} in [conditions]", file=file,
                             where=f"key conditions.{key}",
                             fix=suggest(key, CONDITION_KEYS) + "allowed: "
                             + ", ".join(CONDITION_KEYS))
    spectrum = table.get("spectrum", CONDITION_KEYS["spectrum"])
    if not isinstance(spectrum, str):
        raise StackError(f"spectrum must be text, got {excerpt(spectrum)}", file=file,
                         where="key conditions.spectrum",
                         fix='write spectrum = "am1.5g" (or am1.5d, am0, a CSV path)')
    suns = check_number(CONDITION_SCHEMA["suns"], table.get("suns", 1.0), file=file,
                        where="key conditions.suns")
    temperature = check_number(CONDITION_SCHEMA["temperature_K"],
                               table.get("temperature_K", STANDARD_TEMPERATURE_K), file=file,
                               where="key conditions.temperature_K")
    terminals = table.get("terminals", 2)
    if isinstance(terminals, bool) or not isinstance(terminals, int) or terminals < 2 \
            or terminals % 2:
        raise StackError(f"terminals = {excerpt(terminals)} must be an even whole number >= 2",
                         file=file, where="key conditions.terminals",
                         fix="2 for one series string, 4 for two independent strings")
    return Conditions(spectrum, suns, temperature, terminals)


def _check_top_level(document, file):
    """Only the known tables and keys at the top level."""
    for key in document:
        if key not in TOP_LEVEL_KEYS:
            raise StackError(f"unknown table or key {key!r} at the top level", file=file,
                             where=f"key {key}", fix=suggest(key, TOP_LEVEL_KEYS)
                             + "a stack file has [stack], [conditions] and [[element]] tables")


def _parse_head(table, *, file):
    """The ``[stack]`` table: the stack's name (default the file's stem) and notes, as text."""
    if not isinstance(table, dict):
        raise StackError("[stack] must be a table", file=file, where="key stack",
                         fix='write [stack] then name = "..."')
    for key in table:
        if key not in STACK_KEYS:
            raise StackError(f"unknown key {key!r} in [stack]", file=file,
                             where=f"key stack.{key}",
                             fix=suggest(key, STACK_KEYS) + "allowed: name, notes")
    name = table.get("name", Path(file).stem if file else "stack")
    notes = table.get("notes", "")
    for key, value in (("name", name), ("notes", notes)):
        if not isinstance(value, str):
            raise StackError(f"{key} must be text, got {excerpt(value)}", file=file,
                             where=f"key stack.{key}", fix=f'write {key} = "..."')
    return name, notes


def _parse_layer_stack(document, name, notes, conditions, *, file, folder):
    """A layer stack: its layers, coatings, rules and optics, and placements (two-terminal)."""
    from siltandem.stack.layers import (parse_coatings, parse_device, parse_layers,
                                        parse_materials, parse_optics, parse_rules)

    if "element" in document:
        raise StackError("a stack has [[layer]] tables or [[element]] tables, not both",
                         file=file, where="key element",
                         fix="describe the stack by its layers or by its circuit elements")
    folder_materials = parse_materials(document.get("materials", {}), file=file)
    layers = parse_layers(document["layer"], file=file, folder_materials=folder_materials)
    coatings = parse_coatings(document.get("coating", []), file=file)
    rules = parse_rules(document.get("rules", {}), file=file)
    rules.update(parse_optics(document.get("optics", {}), file=file))
    rules.update(parse_device(document.get("device", {}), file=file))
    from siltandem.stack.strings import assign_strings, parse_string_devices

    layers = assign_strings(layers, document["layer"], terminals=conditions.terminals, file=file)
    string_devices = parse_string_devices(document.get("device", {}), terminals=conditions.terminals,
                                          file=file)
    if string_devices:
        rules["string_devices"] = string_devices
    from siltandem.stack.placements import parse_placements

    placements = parse_placements(document.get("placement", []), layers, file=file,
                                  folder_materials=folder_materials)
    return Stack(name, notes, conditions, (), layers, None if file is None else str(file),
                 None if folder is None else str(folder), coatings=coatings, rules=rules,
                 extra={"placements": placements} if placements else {})


def _check_element_names(elements, *, file):
    """Every element has its own name."""
    seen = {}
    for element in elements:
        if element.name in seen:
            raise StackError(f"name {element.name!r} is used twice (elements {seen[element.name]}"
                             f" and {element.index})", file=file, where=element.label,
                             fix="give every element its own name")
        seen[element.name] = element.index


def _check_strings_have_subcells(elements, conditions, *, file):
    """Every string of the stack holds at least one subcell."""
    for number in range(1, conditions.strings + 1):
        members = [e for e in elements if e.string == number]
        if not any(e.kind == "subcell" for e in members):
            raise StackError(f"string {number} has no subcell" if conditions.strings > 1
                             else "the stack has no subcell", file=file,
                             fix='add an [[element]] with kind = "subcell"'
                             + (f" and string = {number}" if conditions.strings > 1 else ""))


def _current_direction(spec):
    """Which way the conventional current crosses a materials-form isotype interface, from its
    carrier and carriers_flow: electrons move against the current, holes with it."""
    flow = spec.values["carriers_flow"]
    if spec.values["carrier"] == "hole":
        return flow
    return "up" if flow == "down" else "down"


def _check_carrier_flow(elements, *, file):
    """In one series string the current has one direction: every isotype interface given by its
    materials must say so (electrons cross against the current, holes with it). The numbers form
    (``orientation``) names no direction and is not checked."""
    first = {}
    for spec in elements:
        if spec.kind != "isotype" or "carriers_flow" not in spec.values:
            continue
        current = _current_direction(spec)
        earlier = first.setdefault(spec.string, (spec, current))
        other, other_current = earlier
        if current == other_current:
            continue
        v, w = spec.values, other.values
        flip = "up" if v["carriers_flow"] == "down" else "down"
        flip_other = "up" if w["carriers_flow"] == "down" else "down"
        raise StackError(
            f"{v['carrier']}s flowing {v['carriers_flow']} carry a current flowing {current}, but "
            f"{other.label} has {w['carrier']}s flowing {w['carriers_flow']}, a current flowing "
            f"{other_current}: one series string carries its current one way", file=file,
            where=f"{spec.label}, key carriers_flow",
            fix=f'set carriers_flow = "{flip}" here or "{flip_other}" on {other.label} '
                "(carriers_flow defaults to \"down\"): in one string electrons cross the "
                "interfaces against the current and holes with it")


def _parse_element_stack(document, name, notes, conditions, *, file, folder):
    """An element stack: its ``[[element]]`` tables, uniquely named, a subcell in every
    string; no table that belongs to layer stacks."""
    for key in ("coating", "rules", "optics", "placement", "device", "materials"):
        if key in document:
            raise StackError(f"[{key}] goes with [[layer]] stacks", file=file, where=f"key {key}",
                             fix=f"remove [{key}] or describe the stack by its layers"
                             + ("; an element stack gives a resistor element and each subcell's "
                                "shunt_ohm_cm2 instead" if key == "device" else ""))
    tables = document.get("element")
    if tables is None:
        raise StackError("no [[element]] tables: a stack needs at least one subcell", file=file,
                         fix='add [[element]] with kind = "subcell" and gap_eV = <eV>')
    if not isinstance(tables, list):
        raise StackError("element must be an array of tables", file=file, where="key element",
                         fix="write each element as [[element]] (double brackets)")
    elements = tuple(_parse_element(i + 1, t, file=file, terminals=conditions.terminals)
                     for i, t in enumerate(tables))
    _check_element_names(elements, file=file)
    _check_strings_have_subcells(elements, conditions, file=file)
    _check_carrier_flow(elements, file=file)
    return Stack(name, notes, conditions, elements, (), None if file is None else str(file),
                 None if folder is None else str(folder))


def parse_stack(document, *, file=None, folder=None):
    """Validate a parsed TOML document (a dict) into a :class:`Stack`.

    Parameters
    ----------
    document : dict
        The stack file as ``tomllib`` reads it.
    file : str or Path, optional
        The stack file, for messages and the default name.
    folder : str or Path, optional
        Where relative paths in the file are resolved from.

    Returns
    -------
    Stack
        Values in file units (see ``stack.schema``).

    Raises
    ------
    StackError
        Naming the table, element or layer and key, at the first problem found.
    """
    _check_top_level(document, file)
    name, notes = _parse_head(document.get("stack", {}), file=file)
    conditions = _parse_conditions(document.get("conditions", {}), file=file)
    if "layer" in document:
        return _parse_layer_stack(document, name, notes, conditions, file=file, folder=folder)
    return _parse_element_stack(document, name, notes, conditions, file=file, folder=folder)


def load_stack(path):
    """Read and validate a stack file.

    Raises
    ------
    StackError
        For a missing or unreadable file, a TOML syntax error or any schema problem.
    """
    path = Path(path)
    if not path.is_file():
        raise StackError("stack file not found", file=path,
                         fix="give the path of an existing .toml stack file")
    try:
        raw = path.read_bytes()
        text = raw.decode("utf-8-sig")   # a byte-order mark, as some editors write, is fine
    except UnicodeDecodeError as exc:
        raise StackError(f"not UTF-8 text (byte {exc.start})", file=path,
                         fix="save the stack file as UTF-8 TOML") from None
    except OSError as exc:
        raise StackError(f"cannot read the file ({exc.strerror})", file=path,
                         fix="check the path and its permissions") from None
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StackError(f"TOML syntax error: {exc}", file=path,
                         fix="correct the line named (strings need quotes, keys are "
                             "key = value, tables are [name] or [[element]])") from None
    except RecursionError:
        raise StackError("arrays or tables nested too deeply to read", file=path,
                         fix="a stack file needs no nesting beyond [[element]] or [[layer]] "
                             "tables and short arrays") from None
    stack = parse_stack(document, file=path, folder=path.parent)
    return replace(stack, source_sha256=hashlib.sha256(raw).hexdigest())


def provenance(stack):
    """What every JSON output quotes to say where it came from: the package version and the
    SHA-256 of the stack file as read (None for a stack built in memory)."""
    from siltandem.version import __version__

    return {"siltandem_version": __version__, "stack_sha256": stack.source_sha256}
