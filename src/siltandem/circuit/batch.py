"""Circuits of several designs joined into one batched circuit (the inverse of take_rows).

A layer study compiles and illuminates every design on its own (its optics and layer physics
differ), but designs whose recognised structure is the same -- the same elements, in the same
order, of the same kinds and with the same non-numeric settings -- differ only in their element
parameters. :func:`join_circuits` concatenates those parameters along the batch axis, so that
the group is solved once by the batched solve. Every row keeps its own numbers: a design's
row in the joined circuit holds exactly the values it had alone.
"""
from dataclasses import fields, replace
import functools
import operator

import numpy as np

from siltandem.circuit.graph import build_circuit

#: element fields that only reports read (compare=False, not numeric parameters): the joined
#: circuit keeps them where every design agrees, else drops them (None)
REPORT_ONLY = ("sides", "offset_source", "eqe_file", "eqe_table")


def _is_columns(value):
    """A tuple of (B, 1) arrays (a silicon base's recombination columns)."""
    return isinstance(value, tuple) and len(value) > 0 and all(
        isinstance(v, np.ndarray) and v.ndim == 2 for v in value)


@functools.cache
def _setting_names(kind):
    """The field names of an element class that :func:`element_settings` reads, in order, and a
    function returning their values as a tuple (one attribute lookup pass per element)."""
    names = tuple(item.name for item in fields(kind)
                  if not item.name.startswith("_") and item.name not in REPORT_ONLY)
    return names, _getter(names)


@functools.cache
def _public_names(kind):
    """The field names of an element class not starting with an underscore, and a function
    returning their values as a tuple."""
    names = tuple(item.name for item in fields(kind) if not item.name.startswith("_"))
    return names, _getter(names)


def _getter(names):
    """element -> the tuple of its attributes ``names``."""
    if len(names) == 1:
        return lambda element: (getattr(element, names[0]),)
    if not names:
        return lambda element: ()
    return operator.attrgetter(*names)


def element_settings(element):
    """The element's non-numeric settings (everything a joined batch must share), hashable."""
    key = [type(element).__name__]
    names, values = _setting_names(type(element))
    for name, value in zip(names, values(element)):
        if isinstance(value, np.ndarray):
            key.append((name, "array"))
        elif _is_columns(value):
            key.append((name, "columns", len(value)))
        else:
            key.append((name, repr(value)))
    return tuple(key)


def structure_key(circuit):
    """What designs must share to be solved as one batch: the conditions, the strings and every
    element's kind, name and settings, in optical order (hashable)."""
    return (repr(circuit.conditions), tuple(element_settings(e) for e in circuit.elements))


def _concatenate(values, sizes):
    """(B_i, 1) arrays (or (1, 1) ones standing for B_i rows) stacked into one (sum B_i, 1).
    Where every array already has its B_i rows (a layer study: one design each) they are
    concatenated as they are: the same values, without a broadcast view per design."""
    arrays = [np.asarray(v, dtype=float) for v in values]
    if all(a.ndim > 0 and a.shape[0] == size for a, size in zip(arrays, sizes)):
        return np.concatenate(arrays, axis=0)
    return np.concatenate([np.broadcast_to(a, (size,) + a.shape[1:])
                           for a, size in zip(arrays, sizes)], axis=0)


def _same(values):
    first = values[0]
    for value in values[1:]:
        if value is first:
            continue
        try:
            if not bool(value == first):
                return False
        except (TypeError, ValueError):
            return False
    return True


def join_rows(elements, sizes):
    """One element whose rows are those of ``elements`` (same kind and settings) in turn;
    ``sizes`` gives each one's number of designs. The inverse of elements.take_rows."""
    first = elements[0]
    changes = {}
    for item in fields(first):
        if item.name.startswith("_") or not item.init:
            continue
        values = [getattr(e, item.name) for e in elements]
        if isinstance(values[0], np.ndarray):
            changes[item.name] = _concatenate(values, sizes)
        elif _is_columns(values[0]):
            changes[item.name] = tuple(_concatenate([v[k] for v in values], sizes)
                                       for k in range(len(values[0])))
        elif item.name in REPORT_ONLY and not _same(values):
            changes[item.name] = None
    return replace(first, **changes)


def circuit_rows(circuit):
    """The number of designs a circuit holds (the longest batch axis of its elements)."""
    rows = 1
    for element in circuit.elements:
        for value in _public_names(type(element))[1](element):
            if isinstance(value, np.ndarray) and value.ndim == 2:
                rows = max(rows, value.shape[0])
    return rows


def join_circuits(circuits, *, key=None):
    """Circuits of one structure (:func:`structure_key`) as one batched circuit, their designs
    in turn. The optics record and the layer model are per design: the joined circuit has none.
    ``key``: the structure key every circuit was grouped by (then not computed again)."""
    if len(circuits) == 1:
        return circuits[0]
    keys = {key} if key is not None else {structure_key(c) for c in circuits}
    if len(keys) != 1:
        raise ValueError("circuits of different structures cannot be joined into one batch")
    sizes = [circuit_rows(c) for c in circuits]
    first = circuits[0]
    elements = [join_rows([c.element(name) for c in circuits], sizes)
                for name in first.optical_order]
    return build_circuit(elements, first.conditions, name=first.name)
