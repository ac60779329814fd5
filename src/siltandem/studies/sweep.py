"""Many designs of one stack: varied keys, a batched solve per chunk, tables out.

A study varies numeric keys of named elements (``--vary top.gap_eV=1.6:1.9:31``). Every design
of the study has the stack's topology, so a chunk of designs is one batched solve: the varied
values become (B, 1) arrays in the compiled elements. The chunk function is pure and picklable,
so the same chunks run in this process, on a local pool or on a Dask cluster (parallel.py).
"""
from dataclasses import dataclass, replace
import functools
import threading
import warnings

import numpy as np

from siltandem import units
from siltandem.circuit.compile import compile_stack
from siltandem.errors import StackError
from siltandem.files import file_digest
from siltandem.optics.illuminate import illuminate
from siltandem.solve.kernels import notice_compiling
from siltandem.solve.series import solve_strings
from siltandem.materials.spectra import get_spectrum, is_spectrum_object
from siltandem.stack.inputs import spectrum_input
from siltandem.stack.schema import (ELEMENT_SCHEMA, ISOTYPE_NUMBERS, check_element_values,
                                    check_number, suggest)
from siltandem.text import excerpt

#: result columns every study row carries, named as in the JSON of `siltandem run`
RESULT_COLUMNS = ["efficiency_pct", "voc_V", "jsc_mA_cm2", "fill_factor_pct", "mpp_V", "mpp_mA_cm2"]
#: isotype keys a study may vary (the explicit form of the law)
ISOTYPE_VARIABLE = ("barrier_eV", "built_in_V", "alpha")
#: layer keys a study may vary (a layer stack's designs are compiled and illuminated one by one:
#: each changes the optics and the layer physics; then solved in batches of one structure);
#: their ranges are the file's (layers.check_layer_value)
LAYER_VARIABLE = ("thickness_nm", "doping_cm3", "composition", "diffusion_length_um",
                  "lifetime_ns", "srv_cm_s", "gap_eV", "j0_fA_cm2", "luminescent_coupling",
                  "srh_lifetime_ns", "photon_recycling_factor", "ere")
#: the name a layer stack's varied [device] keys go by (``--vary device.series_ohm_cm2=0:2:5``;
#: a layer of that name takes precedence)
DEVICE_TABLE = "device"


@dataclass(frozen=True)
class Variation:
    """One varied key: ``element.key`` over ``values`` (as written: the column name)."""

    element: str
    key: str
    values: np.ndarray

    @property
    def column(self):
        return f"{self.element}.{self.key}"


def parse_vary(text, stack):
    """``NAME.KEY=START:STOP:N`` -> Variation, checked against the stack and the key's range.

    The values are checked by the file's own validators (stack.check_number with the key's
    Parameter, layers.check_layer_value): the same ranges and messages as the key in a file.
    The rules between keys (a tunnel junction's valley below its peak, ...) need every varied
    key at once: :func:`check_designs`.
    """
    from siltandem.stack.options import OPTION_SCHEMA, check_option

    fix = "write --vary NAME.KEY=START:STOP:N, e.g. --vary top.gap_eV=1.6:1.9:31"
    if not isinstance(text, str):
        raise StackError(f"{text!r} is not NAME.KEY=START:STOP:N (text)", where="--vary",
                         fix=fix)
    shown = text if len(text) <= 120 else text[:117] + "..."
    name_key, sep, span = text.partition("=")
    element, dot, key = name_key.rpartition(".")
    if not sep or not dot:
        raise StackError(f"{shown!r} is not NAME.KEY=START:STOP:N", where="--vary",
                         fix=fix)
    parts = span.split(":")
    try:
        if len(parts) != 3:
            raise ValueError
        start, stop, count = float(parts[0]), float(parts[1]), int(parts[2])
    except (ValueError, IndexError):
        raise StackError(f"{shown!r}: {span[:40]!r} is not START:STOP:N", where="--vary",
                         fix=fix) from None
    where = f"--vary {shown}"
    check_option(OPTION_SCHEMA["vary_count"], count, where=where, integer=True)
    for value in (start, stop):
        if not np.isfinite(value):
            raise StackError(f"{shown!r}: {value} is not a finite number", where="--vary",
                             fix="give START and STOP as finite numbers within the key's range")
    values = np.linspace(start, stop, count)
    _check_values(stack, element, key, values, shown=shown, where="--vary",
                  value_where=f"--vary {shown}")
    return Variation(element, key, values)


def _element_parameter(stack, element, key, *, shown, where):
    """The schema entry of an element key a study may vary; StackError naming the element's or
    the key's known names (with the closest ones) otherwise."""
    specs = {e.name: e for e in stack.elements}
    if element not in specs:
        names = ", ".join(repr(n) for n in specs)
        raise StackError(f"{shown!r}: no element named {element!r}", where=where,
                         fix=f"{suggest(element, specs)}the stack's elements are {names}")
    spec = specs[element]
    if spec.kind == "isotype":
        allowed = {k: ISOTYPE_NUMBERS[k] for k in ISOTYPE_VARIABLE if k in spec.values}
    else:
        allowed = {p.key: p for p in ELEMENT_SCHEMA[spec.kind]}
    if key not in allowed:
        raise StackError(f"{shown!r}: {spec.kind} {element!r} has no numeric key {key!r}",
                         where=where,
                         fix=f"{suggest(key, allowed)}vary one of " + ", ".join(sorted(allowed)))
    return allowed[key]


def _check_values(stack, element, key, values, *, shown, where, value_where):
    """A varied key of the stack and its values, by the file's own validators: the element (or
    layer) and key must exist, and the values lie in the key's range (an interval: the smallest
    and the largest value bound the rest)."""
    if stack.layers:
        from siltandem.stack.layers import check_layer_value

        layers = {layer.name: layer for layer in stack.layers}
        if element == DEVICE_TABLE and element not in layers:
            from siltandem.stack.layers import DEVICE_KEYS, check_device_value

            if key not in DEVICE_KEYS:
                raise StackError(f"{shown!r}: [device] has no key {key!r}", where=where,
                                 fix=f"{suggest(key, DEVICE_KEYS)}vary one of "
                                     + ", ".join(f"device.{k}" for k in DEVICE_KEYS))
            for value in (values.min(), values.max()):
                check_device_value(key, float(value), where=value_where)
            return
        if element not in layers:
            raise StackError(f"{shown!r}: no layer named {element!r}", where=where,
                             fix=f"{suggest(element, layers)}the stack's layers are "
                                 + ", ".join(repr(n) for n in layers)
                                 + " (and device.<key> varies a [device] key)")
        if key not in LAYER_VARIABLE:
            raise StackError(f"{shown!r}: layer {element!r} has no numeric key {key!r}",
                             where=where, fix=f"{suggest(key, LAYER_VARIABLE)}vary one of "
                                              + ", ".join(LAYER_VARIABLE))
        for value in (values.min(), values.max()):
            check_layer_value(layers[element], key, float(value), where=value_where)
        return
    parameter = _element_parameter(stack, element, key, shown=shown, where=where)
    for value in (values.min(), values.max()):
        check_number(parameter, float(value), where=value_where)


def check_variation(variation, stack, *, where="argument variations"):
    """A :class:`Variation` given to a study through the API, checked as :func:`parse_vary`
    checks ``--vary``: a Variation, of an element (or layer) and key the stack has, with finite
    values in the key's range. StackError otherwise, naming the variation."""
    fix = 'build it with siltandem.parse_vary("top.gap_eV=1.6:1.9:31", stack)'
    if not isinstance(variation, Variation):
        raise StackError(f"{excerpt(variation)} is not a Variation", where=where, fix=fix)
    if not isinstance(variation.element, str) or not isinstance(variation.key, str):
        raise StackError(f"a Variation of {excerpt(variation.element)}.{excerpt(variation.key)}: "
                         "the element (or layer) and the key must be names (text)", where=where,
                         fix=fix)
    shown = variation.column if len(variation.column) <= 120 else variation.column[:117] + "..."
    try:
        values = np.asarray(variation.values, dtype=float).reshape(-1)
    except (TypeError, ValueError):
        raise StackError(f"{shown!r}: the values {excerpt(variation.values)} are not numbers",
                         where=where, fix=fix) from None
    if values.size == 0:
        raise StackError(f"{shown!r}: no values", where=where, fix=fix)
    bad = values[~np.isfinite(values)]
    if bad.size:
        raise StackError(f"{shown!r}: {bad[0]} is not a finite number", where=where,
                         fix="give finite values within the key's range")
    _check_values(stack, variation.element, variation.key, values, shown=shown, where=where,
                  value_where=f"{where}: {shown!r}")


def check_designs(stack, variations, *, grid=True):
    """Every design of the study against the rules between an element's keys, before any work.

    Each element that a variation touches is checked over all its combinations of varied
    values (stack.check_element_values: a tunnel junction's peak before and above its valley
    and a law that can place its maximum there; a breakdown only with a shunt). The first bad
    design is named with its varied values and the file's message. Layer stacks: every design
    goes through the layer compiler's rules (a doping that unmakes a tunnel junction fails).
    """
    if stack.layers:
        _check_layer_designs(stack, variations, grid=grid)
        return
    specs = {e.name: e for e in stack.elements}
    for name in dict.fromkeys(v.element for v in variations):
        spec = specs[name]
        mine = [v for v in variations if v.element == name]
        if spec.kind not in ("tunnel", "subcell"):
            continue
        if grid and len(mine) > 1:
            mesh = np.meshgrid(*[v.values for v in mine], indexing="ij")
            columns = [m.reshape(-1) for m in mesh]
        else:
            columns = [v.values for v in mine]

        def values_at(index, spec=spec, mine=mine, columns=columns):
            values = dict(spec.values)
            for variation, column in zip(mine, columns):
                values[variation.key] = column[index]
            return values

        size = len(columns[0])
        try:
            check_element_values(spec.kind, values_at(slice(None)), where=spec.label)
            continue
        except StackError:
            pass
        low, high = 0, size       # the first bad design: the smallest prefix that fails
        while high - low > 1:
            middle = (low + high) // 2
            try:
                check_element_values(spec.kind, values_at(slice(low, middle)), where=spec.label)
                low = middle
            except StackError:
                high = middle
        design = ", ".join(f"{v.column} = {float(c[low]):g}" for v, c in zip(mine, columns))
        check_element_values(spec.kind, values_at(low), file=stack.source,
                             where=f"--vary: {spec.label} at {design}")
        raise AssertionError("a failing design passed on its own")  # pragma: no cover


def check_study(stack, variations, *, workers=None, cluster=None, chunk_rows=None,
                spectrum=None, suns=None, temperature_K=None, names=None):
    """Everything a study is given, checked before its table is allocated or any design solved:
    the overrides (the file's ranges), workers, cluster address and chunk size, the grid's memory,
    the spectrum, and every design against its element's rules (:func:`check_designs`)."""
    from siltandem.stack.options import (API_NAMES, check_conditions, check_study_memory,
                           check_study_options)

    where = (names or API_NAMES)["grid"]
    for variation in variations:
        check_variation(variation, stack, where=where)
    columns = [v.column for v in variations]
    for column in columns:
        if columns.count(column) > 1:
            raise StackError(f"{column!r} is varied twice", where=where,
                             fix="vary two different keys (or one key once)")
    suns, temperature_K = check_conditions(suns=suns, temperature_K=temperature_K)
    workers, chunk_rows = check_study_options(workers=workers, cluster=cluster,
                                              chunk_rows=chunk_rows)
    designs = int(np.prod([len(v.values) for v in variations], dtype=float))
    check_study_memory(designs, workers=workers, cluster=cluster, chunk_rows=chunk_rows,
                       names=names or API_NAMES)
    study_light(stack, spectrum=spectrum, suns=suns)
    check_designs(stack, variations)


def _check_layer_designs(stack, variations, *, grid=True):
    """Every layer design read by the layer compiler's rules (compile_layers.recognise) before
    any design is solved: a doping that turns a tunnel junction into a p-n junction fails here,
    named with its design, not in the middle of the study."""
    from siltandem.circuit.strings import RECOGNITION_FIELDS, recognised

    threshold = stack.rules["tunnel_doping_cm3"]
    table = design_table(variations, grid=grid)
    columns = {v.column: table[v.column].to_numpy() for v in variations}
    # keys that recognition does not read (a thickness...) leave every design's recognition key
    # (circuit/strings.py) that of the first: one design stands for all
    layers = {layer.name for layer in stack.layers}
    read = any(v.key in RECOGNITION_FIELDS for v in variations if v.element in layers)
    reuse = {}          # designs of equal recognition keys recognised once
    for index in range(len(table) if read else min(len(table), 1)):
        values = {column: array[index] for column, array in columns.items()}
        try:
            recognised(layer_design(stack, values).layers, tunnel_doping_cm3=threshold,
                       file=stack.source, reuse=reuse)
        except StackError as exc:
            design = ", ".join(f"{c} = {float(x):g}" for c, x in values.items())
            raise StackError(exc.problem, file=exc.file, where=f"--vary: design {design}"
                             + (f", {exc.where}" if exc.where else ""), fix=exc.fix) from None


def layer_design(stack, values):
    """The layer stack with some layer keys (and ``device.<key>``) replaced (one design)."""
    names = {layer.name for layer in stack.layers}
    device = {column.rpartition(".")[2]: float(value) for column, value in values.items()
              if column.rpartition(".")[0] == DEVICE_TABLE and DEVICE_TABLE not in names}
    if device:
        stack = replace(stack, rules={**stack.rules, **device})
    changed = []
    for layer in stack.layers:
        updates = {}
        for column, value in values.items():
            name, _, key = column.rpartition(".")
            if name == layer.name:
                key = "doping_cm3" if key == "doping_cm3" else key
                updates[key] = float(value)
                # one of the three lifetime keys at a time (stack/layers.py)
                lifetimes = ("diffusion_length_um", "lifetime_ns", "srh_lifetime_ns")
                if key in lifetimes:
                    updates.update({other: None for other in lifetimes if other != key})
        changed.append(replace(layer, **updates) if updates else layer)
    return replace(stack, layers=tuple(changed))


def _solve_layer_designs(stack, columns, *, spectrum=None, suns=None, temperature_K=None,
                         light=None, reuse=None):
    """Layer stacks: every design compiled and illuminated on its own (its optics and layer
    physics differ), then the designs of one recognised structure (circuit/batch.py
    structure_key: the same elements in the same order, of the same kinds and settings) joined
    into one batched circuit and solved at once. A design's row equals its solve alone."""
    from siltandem.circuit.batch import join_circuits, structure_key

    size = max(np.size(v) for v in columns.values())
    conditions = stack.conditions
    changes = {k: v for k, v in (("spectrum", spectrum), ("suns", suns),
                                 ("temperature_K", temperature_K)) if v is not None}
    conditions = replace(conditions, **changes)
    light = study_light(stack, spectrum=spectrum, suns=conditions.suns, light=light)
    flat = {c: np.asarray(v).reshape(-1) for c, v in columns.items()}
    reuse = {} if reuse is None else reuse      # parts equal between designs, built once
    compiled = [compile_stack(replace(layer_design(stack, {c: v[k] if v.size > 1 else v[0]
                                                           for c, v in flat.items()}),
                                      conditions=conditions), reuse) for k in range(size)]
    groups = {}
    for k, circuit in lit_designs(compiled, light, reuse):
        groups.setdefault(structure_key(circuit), []).append((k, circuit))
    out = {}
    for structure, members in groups.items():
        rows = np.array([k for k, _ in members])
        found = circuit_results(join_circuits([c for _, c in members], key=structure),
                                len(members), light)
        for key, values in found.items():
            if key not in out:
                values = np.asarray(values)
                out[key] = (np.full(size, None, dtype=object) if values.dtype == object
                            else np.full(size, np.nan, dtype=values.dtype))
            out[key][rows] = values
    return out


def lit_designs(compiled, light, reuse):
    """(index, circuit with photocurrents) of every compiled layer design: the designs of one
    optical group (optics.layers.optical_group: they differ in thick layers' thicknesses and
    shading only) lit at once (light_designs, batches of LIGHT_BATCH), each bit for bit as
    illuminate on it alone. The solve needs the elements only: the photon budget and the layer
    model are let go, so a chunk of thousands of designs stays small in memory. A group whose
    stacked pass fails is lit design by design, so the error names the design's own layers as
    `siltandem run` would."""
    from siltandem.optics.layers import light_designs, optical_group

    groups = {}
    for k, circuit in enumerate(compiled):
        groups.setdefault(optical_group(circuit.model, reuse), []).append(k)
    out = []
    for members in groups.values():
        try:
            currents = light_designs([compiled[k].model for k in members], light.wavelength_nm,
                                     light.photon_flux, reuse)
        except (StackError, ValueError):
            currents = None
        for i, k in enumerate(members):
            circuit = compiled[k]
            if currents is None:
                lit = illuminate(circuit, light, reuse)
            else:
                lit = circuit.with_elements([circuit.element(cell.name).with_photocurrent(j)
                                             for cell, j in zip(circuit.model.subcells, currents[i])])
            out.append((k, replace(lit, optics={}, model=None)))
    return sorted(out, key=lambda pair: pair[0])


def design_table(variations, *, grid=True):
    """One row per design: a ``design`` id and one column per variation (its full grid)."""
    import pandas as pd

    if grid:
        mesh = np.meshgrid(*[v.values for v in variations], indexing="ij")
        columns = {v.column: m.reshape(-1) for v, m in zip(variations, mesh)}
    else:
        columns = {v.column: v.values for v in variations}
    frame = pd.DataFrame(columns)
    frame.insert(0, "design", np.arange(len(frame), dtype=np.int64))
    return frame


def with_values(stack, columns):
    """The stack with some element keys replaced by arrays (one value per design)."""
    changed = []
    for spec in stack.elements:
        values = dict(spec.values)
        for column, array in columns.items():
            element, _, key = column.rpartition(".")
            if element == spec.name:
                values[key] = np.asarray(array, dtype=float)
        changed.append(replace(spec, values=values))
    return replace(stack, elements=tuple(changed))


def solve_designs(stack, columns, *, spectrum=None, suns=None, temperature_K=None, light=None, reuse=None):
    """Solve B designs at once: ``columns`` maps ``element.key`` -> (B,) values. ``light``: the
    study's spectrum at one sun, already read (:func:`resolved_light`); None reads it here.

    Returns a dict of (B,) arrays: the RESULT_COLUMNS, ``<subcell>.photocurrent_mA_cm2`` for
    every subcell, ``limiting_subcell`` and ``regime``.
    """
    notice_compiling()
    from siltandem.stack.options import check_conditions

    suns, temperature_K = check_conditions(suns=suns, temperature_K=temperature_K)
    if stack.layers and columns:
        return _solve_layer_designs(stack, columns, spectrum=spectrum, suns=suns,
                                    temperature_K=temperature_K, light=light, reuse=reuse)
    conditions = stack.conditions
    changes = {k: v for k, v in (("spectrum", spectrum), ("suns", suns),
                                 ("temperature_K", temperature_K)) if v is not None}
    conditions = replace(conditions, **changes)
    light = study_light(stack, spectrum=spectrum, suns=conditions.suns, light=light)
    circuit = illuminate(compile_stack(replace(with_values(stack, columns),
                                               conditions=conditions)), light)
    size = max([1] + [np.size(v) for v in columns.values()])
    return circuit_results(circuit, size, light)


def circuit_results(circuit, size, light):
    """The study's result columns of an illuminated circuit of ``size`` designs (one batched
    solve): a dict of (size,) arrays, as :func:`solve_designs` returns."""
    conditions = circuit.conditions
    out = {}
    total = np.zeros(size)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        # luminescent coupling across strings (4 terminals) needs the strings in turn
        _, solutions = solve_strings(circuit.strings, circuit.subcells, conditions.temperature_K)
    for solution in solutions:
        total = total + np.broadcast_to(solution.mpp_W_m2, (size,))
    out["efficiency_pct"] = 100 * total / light.irradiance_W_m2
    first = solutions[0]
    if len(solutions) == 1:
        out["voc_V"] = np.broadcast_to(first.voc_V, (size,)).copy()
        out["jsc_mA_cm2"] = units.ma_cm2(np.broadcast_to(first.jsc_A_m2, (size,)))
        out["fill_factor_pct"] = 100 * np.broadcast_to(first.fill_factor, (size,))
        out["mpp_V"] = np.broadcast_to(first.mpp_V, (size,)).copy()
        out["mpp_mA_cm2"] = units.ma_cm2(np.broadcast_to(first.mpp_A_m2, (size,)))
    else:
        for key in RESULT_COLUMNS[1:]:
            out[key] = np.full(size, np.nan)
    for cell in circuit.subcells:
        out[f"{cell.name}.photocurrent_mA_cm2"] = units.ma_cm2(
            np.broadcast_to(cell.photocurrent_A_m2[:, 0], (size,)))
    pilot = [s for s in circuit.strings[0] if s.kind == "subcell"]
    out["limiting_subcell"] = np.array([pilot[i].name for i in
                                        np.broadcast_to(first.pilot_index, (size,))],
                                       dtype=object)
    out["regime"] = np.broadcast_to(np.asarray(first.regime, dtype=object), (size,)).copy()
    return out


@functools.lru_cache(maxsize=8)
def _spectrum_cached(name, suns, folder, content):
    return get_spectrum(name, suns=suns, relative_to=folder)


def _spectrum(name, suns, folder):
    if is_spectrum_object(name):     # a Spectrum or pandas object: nothing to read or cache
        return get_spectrum(name, suns=suns)
    # keyed by the CSV's content too: a file edited between two studies of one process is read
    # again, never answered from the cache
    found = spectrum_input(name, folder)
    content = None if found is None else file_digest(found[1])
    return _spectrum_cached(name, float(suns), folder, content)


def study_light(stack, *, spectrum=None, suns=None, light=None):
    """The study's spectrum: the override (a name, or a CSV path relative to the working folder,
    as for `siltandem run`) or the stack's own (a path relative to the stack file); or ``light``,
    the one-sun spectrum already read (:func:`resolved_light`), concentrated to ``suns``."""
    if light is not None:
        suns = float(stack.conditions.suns if suns is None else suns)
        return light.concentrated(suns) if suns != 1.0 else light
    name = stack.conditions.spectrum if spectrum is None else spectrum
    folder = stack.folder if spectrum is None else None
    return _spectrum(name, stack.conditions.suns if suns is None else suns, folder)


def resolved_light(stack, *, spectrum=None):
    """The study's spectrum at one sun, read here (on the client): a study binds it into its
    chunk function, so the table travels with every task and workers on a cluster never read a
    file (whatever their working folder). Its content is part of the chunk key (fingerprint)."""
    return study_light(stack, spectrum=spectrum, suns=1.0)


#: the last study's reuse dict, per thread (a Dask worker may run chunks in threads)
_STUDY_REUSE = threading.local()


def study_reuse(stack, light, options):
    """The reuse dict of a layer study (compile and optics parts equal between designs, built once:
    numerics/memo.py), kept between the chunks of one study in one process (thread): the chunks
    of a 100 x 100 map would otherwise rebuild the parts of each distinct layer value five times.
    The same study is the same ``stack`` and ``light`` objects (held here, so their ids stay
    theirs) and ``options`` (the same objects); every remembered part is keyed by all its inputs, so a design's
    numbers do not depend on what its chunk found there. One study is kept: another drops it."""
    last = getattr(_STUDY_REUSE, "last", None)
    if last is not None and last[0] is stack and last[1] is light and len(last[2]) == len(options) \
            and all(a is b for a, b in zip(last[2], options)):
        return last[3]
    reuse = {}
    _STUDY_REUSE.last = (stack, light, options, reuse)
    return reuse


def forget_study_reuse():
    """Let this thread's kept study reuse dict go (:func:`study_reuse`; a study calls it when done)."""
    _STUDY_REUSE.last = None


def evaluate_chunk(chunk, *, stack, spectrum=None, suns=None, temperature_K=None, light=None):
    """Study function for parallel.run_chunks: the chunk's designs solved in batches of at most
    runner.MAX_CHUNK_ROWS, so that every design is solved through the same junction tables
    whatever the chunk size (bit-identical rows in-process, chunked and on a cluster)."""
    from siltandem.studies.runner import MAX_CHUNK_ROWS

    reuse = study_reuse(stack, light, (spectrum, suns, temperature_K))
    parts = []
    for start in range(0, len(chunk), MAX_CHUNK_ROWS):
        part = chunk.iloc[start:start + MAX_CHUNK_ROWS]
        columns = {c: part[c].to_numpy(dtype=float) for c in part.columns if c != "design"}
        parts.append(solve_designs(stack, columns, spectrum=spectrum, suns=suns,
                                   temperature_K=temperature_K, light=light, reuse=reuse))
    out = chunk.copy()
    for key in parts[0]:
        out[key] = np.concatenate([part[key] for part in parts])
    return out


def photocurrents_at(stack, column, value, *, spectrum=None, suns=None, temperature_K=None,
                     reuse=None):
    """Every subcell's photocurrent [mA/cm2] at one value of one varied key (optics only).
    ``reuse``: a dict kept between the calls of one root search (compile_stack, illuminate):
    what does not change with the key is built once."""
    conditions = stack.conditions
    changes = {k: v for k, v in (("spectrum", spectrum), ("suns", suns),
                                 ("temperature_K", temperature_K)) if v is not None}
    conditions = replace(conditions, **changes)
    light = study_light(stack, spectrum=spectrum, suns=conditions.suns)
    if stack.layers:
        varied = replace(layer_design(stack, {column: value}), conditions=conditions)
    else:
        varied = replace(with_values(stack, {column: np.array([value])}), conditions=conditions)
    circuit = illuminate(compile_stack(varied, reuse), light, reuse)
    return {c.name: float(units.ma_cm2(c.photocurrent_A_m2[0, 0])) for c in circuit.subcells}
