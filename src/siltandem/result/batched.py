"""Many solves of alike strings as one batched solve each, every answer that of its solve alone.

A study of several layer designs that differ in topology (tunnel-junction placements: the
junction's position decides which layers meet at an isotype interface) cannot join all of them
in one batch. What it can join: the strings whose elements agree position by position in class
and non-numeric settings (their *shape*, :func:`string_key`; names play no part, so the
"interface buffer / junction p" of one candidate and the "interface junction n / silicon emitter"
of another share a slot when their settings agree). Each group of one shape is joined along the
batch axis (circuit/batch.py ``join_rows``: the inverse of ``take_rows``) and solved once; its
solution is cut back into the rows of each member (:func:`solution_rows`) under the member's own
element names. The solver batches without changing a design's numbers (DEVELOPERS.md,
"Batching": every root search freezes a converged entry; tests/test_layer_batches.py), so each
member's answer is bit for bit its solve alone (tests/test_batched_results.py checks it with
``==``).
"""
from dataclasses import fields, replace

import numpy as np

from siltandem.circuit.batch import REPORT_ONLY, element_settings, join_rows
from siltandem.circuit.elements import TABLE_ROWS, take_rows
from siltandem.circuit.graph import build_circuit
from siltandem.errors import StackError
from siltandem.solve.series import solve_string, solve_strings

#: True solves every job and circuit on its own (the path before batching: benchmarks and the
#: tests that compare both paths switch it)
ONE_BY_ONE = False
#: rows at most in one joined solve: below circuit.elements.TABLE_ROWS, past which the junction
#: tables give way to root finds that differ in the last bits (as studies.runner.MAX_CHUNK_ROWS)
MAX_JOINED_ROWS = min(2_000, TABLE_ROWS)


def _decisions(element):
    """The choices the solver makes for a whole batch from an element's values (an ideal diode's
    explicit law or a table, luminescent coupling, an interface's general law): designs that
    would choose differently are never joined, so no design is solved along another's path."""
    if element.kind == "subcell":
        return (element.is_explicit(), bool(np.any(element.j02_A_m2 > 0)),
                bool(np.any(element.shunt_S_m2 > 0)),
                bool(np.any((element.breakdown_factor > 0) & np.isfinite(element.breakdown_V))),
                bool(np.any(element.luminescent_coupling > 0)))
    if element.kind == "isotype":
        return (bool(element.general_law),)
    return ()


def _shape(element):
    """An element's class, non-numeric settings and batch-wide choices, without its name."""
    return tuple(item for item in element_settings(element)
                 if not (isinstance(item, tuple) and item[0] == "name")) + _decisions(element)


def string_key(elements, temperature_K, curve_points=0):
    """What strings must share to be solved as one batch: the temperature, the curve's points
    and, position by position in current order, every element's class and non-numeric settings
    (not its name)."""
    return (repr(np.asarray(temperature_K, dtype=float).tolist()), int(curve_points),
            tuple(_shape(e) for e in elements))


def circuit_key(circuit):
    """:func:`string_key` of a whole circuit: its conditions and, in optical order, every
    element's shape (the strings follow: each element names its string)."""
    return (repr(circuit.conditions), tuple(_shape(e) for e in circuit.elements))


def _rows(elements):
    """Designs a list of elements holds (the longest batch axis of a (B, 1) field)."""
    rows = 1
    for element in elements:
        for item in fields(element):
            value = getattr(element, item.name)
            if isinstance(value, np.ndarray) and value.ndim == 2 and not item.name.startswith("_"):
                rows = max(rows, value.shape[0])
    return rows


def batches(members, sizes, limit=None):
    """``members`` cut, in order, into runs whose ``sizes`` (rows) add up to at most ``limit``
    (MAX_JOINED_ROWS; a member larger than that is a run of its own)."""
    limit = MAX_JOINED_ROWS if limit is None else limit
    runs, run, rows = [], [], 0
    for member, size in zip(members, sizes):
        if run and rows + size > limit:
            runs.append(run)
            run, rows = [], 0
        run.append(member)
        rows += size
    if run:
        runs.append(run)
    return runs


def solution_rows(solution, rows, rename=None):
    """The StringSolution of some designs of a batch (``rows``: an index array), its element
    names mapped through ``rename`` (joined name -> the design's own)."""
    rows = np.asarray(rows)
    rename = rename or {}
    name = lambda n: rename.get(n, n)  # noqa: E731
    changes = {}
    for item in fields(solution):
        value = getattr(solution, item.name)
        if item.name == "element_names":
            changes[item.name] = [name(n) for n in value]
        elif isinstance(value, dict):
            changes[item.name] = {name(k): np.asarray(v)[rows] for k, v in value.items()}
        elif isinstance(value, np.ndarray):
            changes[item.name] = value[rows]
    return replace(solution, **changes)


def _own_rows(joined, own, row):
    """Row ``row`` of a joined element, under the name and report-only fields of ``own`` (the
    design's element it was joined from)."""
    picked = take_rows(joined, np.array([row]))
    kept = {f: getattr(own, f) for f in REPORT_ONLY if hasattr(own, f)}
    return replace(picked, name=own.name, **kept)


def _join_strings(strings):
    """Strings of one shape joined position by position into one batched string (the first's
    names), and each one's rows in it."""
    sizes = [_rows(s) for s in strings]
    starts = np.concatenate([[0], np.cumsum(sizes)])
    joined = [join_rows([s[i] for s in strings], sizes) for i in range(len(strings[0]))]
    return joined, [np.arange(starts[k], starts[k + 1]) for k in range(len(strings))]


def solve_alike(jobs):
    """Solve many strings, those of one shape (:func:`string_key`) as one batch.

    ``jobs``: a list of ``(elements, temperature_K, curve_points)``; returns one StringSolution
    per job, in order, each bit for bit ``solve_string(elements, temperature_K,
    curve_points=curve_points)``, or the StackError that solve raised (a group whose joined
    solve raises is solved job by job, so the error is the job's own).
    """
    groups = {}
    for k, (elements, temperature_K, points) in enumerate(jobs):
        groups.setdefault(string_key(elements, temperature_K, points), []).append(k)
    out = [None] * len(jobs)
    runs = [run for members in groups.values()
            for run in batches(members, [_rows(jobs[k][0]) for k in members])]
    for members in runs:
        _, temperature_K, points = jobs[members[0]]
        if len(members) > 1 and not ONE_BY_ONE:
            strings = [list(jobs[k][0]) for k in members]
            joined, rows = _join_strings(strings)
            try:
                solution = solve_string(joined, temperature_K, curve_points=points)
            except StackError:
                solution = None
            if solution is not None:
                for k, string, picked in zip(members, strings, rows):
                    rename = {a.name: b.name for a, b in zip(joined, string)}
                    out[k] = solution_rows(solution, picked, rename)
                continue
        for k in members:
            try:
                out[k] = solve_string(list(jobs[k][0]), temperature_K, curve_points=points)
            except StackError as exc:
                out[k] = exc
    return out


def solve_circuits(circuits, *, curve_points=0, solve=None):
    """Solve every string of several illuminated circuits of one :func:`circuit_key` as one
    batch (solve_strings: luminescent coupling across strings included). Returns, per circuit,
    ``(strings, solutions)`` as ``solve_strings`` on that circuit alone: its strings as solved
    (each element its own row, under its own name) and one StringSolution per string."""
    temperature = circuits[0].conditions.temperature_K
    if any(_rows(c.elements) != 1 for c in circuits):
        raise ValueError("solve_circuits joins circuits of one design each")
    if ONE_BY_ONE and len(circuits) > 1:
        return [answer for circuit in circuits
                for answer in solve_circuits([circuit], curve_points=curve_points, solve=solve)]
    if len(circuits) == 1:
        circuit = circuits[0]
        return [solve_strings(circuit.strings, circuit.subcells, temperature,
                              curve_points=curve_points, solve=solve)]
    orders = [c.elements for c in circuits]
    sizes = [_rows(order) for order in orders]
    starts = np.concatenate([[0], np.cumsum(sizes)])
    joined = build_circuit([join_rows([order[i] for order in orders], sizes)
                            for i in range(len(orders[0]))], circuits[0].conditions,
                           name=circuits[0].name)
    strings, solutions = solve_strings(joined.strings, joined.subcells, temperature,
                                       curve_points=curve_points, solve=solve)
    out = []
    for k, circuit in enumerate(circuits):
        rows = np.arange(starts[k], starts[k + 1])
        own = dict(zip(joined.optical_order, circuit.elements))
        rename = {name: element.name for name, element in own.items()}
        # an element the solve left as it was is the design's own (its tables built already);
        # one it changed (a photocurrent gained across strings) is cut from the joined one
        out.append(([[own[e.name] if e is joined.element(e.name) else _own_rows(e, own[e.name], rows[0])
                      for e in string] for string in strings],
                    [solution_rows(s, rows, rename) for s in solutions]))
    return out
