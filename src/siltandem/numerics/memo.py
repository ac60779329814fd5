"""Remembered evaluations of an elementwise pure function, entry by entry.

A layer study evaluates the same optical laws for design after design whose inputs are mostly
equal bit for bit (a thickness map changes the optical depths below one layer, and only at the
wavelengths that layer absorbs). :class:`EntryMemo` keeps, per call site (a ``slot``) and array
shape, the last input and output; a new input is evaluated only at the entries whose input
changed, and an entry equal to the one a row before it (axis -2: the previous design of a stacked
pass) is taken from that row. The function must be elementwise and deterministic (a scalar kernel such as
``scipy.special.expn``), so an entry's output depends on its input alone: the answer is, bit for
bit, the function evaluated afresh. The memo only saves time.
"""
import threading

import numpy as np


class EntryMemo:
    """``memo(x, slot)`` = ``function(x)``, evaluated only where ``x`` differs from the last
    input of that slot and shape (NaN inputs are always evaluated again)."""

    def __init__(self, function, *, max_slots=64):
        self.function = function
        self.max_slots = max_slots
        self._last = {}
        self._lock = threading.Lock()

    def __call__(self, x, slot):
        x = np.asarray(x, dtype=float)
        key = (slot, x.shape)
        with self._lock:
            last = self._last.get(key)
        if last is None:
            changed = np.ones(x.shape, dtype=bool)
            y = np.empty(x.shape)
        else:
            last_x, last_y = last
            changed = x != last_x
            y = last_y.copy()
        if changed.any():
            y = self._evaluate(x, y, changed)
        with self._lock:
            if key not in self._last and len(self._last) >= self.max_slots:
                self._last.pop(next(iter(self._last)))
            self._last[key] = (x.copy(), y.copy())
        return y

    def _evaluate(self, x, y, changed):
        """``y`` with the ``changed`` entries set to ``function(x)``. An array (..., B, M) holds B
        designs of a stacked pass in its rows (axis -2): a changed entry equal to the one a row
        before takes that row's value (the rows in order, so a run of equal entries is evaluated
        once); the rest is evaluated."""
        if x.ndim < 2 or x.shape[-2] < 2:
            y[changed] = self.function(x[changed])
            return y
        same = np.zeros(x.shape, dtype=bool)
        same[..., 1:, :] = x[..., 1:, :] == x[..., :-1, :]
        copied = changed & same
        fresh = changed & ~same
        if fresh.any():
            y[fresh] = self.function(x[fresh])
        if copied.any():
            # each copied entry takes the value of the last row at or above it that is not copied:
            # every row between holds an equal input (== along the run), so an equal output
            rows = np.broadcast_to(np.arange(x.shape[-2]).reshape(-1, 1), x.shape)
            source = np.maximum.accumulate(np.where(copied, 0, rows), axis=-2)
            y = np.take_along_axis(y, source, axis=-2)
        return y

    def clear(self):
        with self._lock:
            self._last.clear()


#: entries one kind of :func:`remembered` keeps in a study's ``reuse`` dict (the oldest goes first):
#: a 100 x 100 map has 100 distinct values of a part that depends on one varied key
REMEMBERED_ENTRIES = 512


def remembered(reuse, kind, key, build, *, entries=REMEMBERED_ENTRIES):
    """``build()``, remembered in ``reuse`` (a dict kept between the designs of one study) under
    ``key`` in a table of its own per ``kind``. ``key`` must hold every input ``build`` reads (a
    pure function of them): then the answer is the fresh one bit for bit, and the memo only saves
    time. ``reuse=None``: ``build()`` every time."""
    if reuse is None:
        return build()
    table = reuse.setdefault(("remembered", kind), {})
    try:
        return table[key]
    except KeyError:
        pass
    value = build()
    keep(table, key, value, entries)
    return value


#: objects whose text :func:`remembered_repr` keeps in a study's ``reuse`` dict (the oldest goes first)
REPR_ENTRIES = 4096


def remembered_repr(reuse, value):
    """``repr(value)``, remembered in ``reuse`` by the object's identity (the object is held in the
    entry, so its id stays its own, and checked with ``is``): a study's designs share most of their
    (frozen) layer objects, whose text keys the remembered parts. ``reuse=None``: ``repr(value)``."""
    if reuse is None:
        return repr(value)
    table = reuse.setdefault(("remembered", "repr"), {})
    found = table.get(id(value))
    if found is not None and found[0] is value:
        return found[1]
    text = repr(value)
    keep(table, id(value), (value, text), REPR_ENTRIES)
    return text


class ValueMemo:
    """``memo(*args)`` = ``function(*args)`` for a pure function of arrays and numbers, remembered
    for the last ``entries`` distinct argument lists (the oldest goes first). The key is every
    argument's dtype, shape and bytes, so only bit-for-bit equal arguments answer from the memo,
    with the answer computed from them: the memo only saves time. The answers are read-only."""

    def __init__(self, function, *, entries=16):
        self.function = function
        self.entries = entries
        self._found = {}
        self._lock = threading.Lock()

    def __call__(self, *args):
        arrays = [np.asarray(a) for a in args]
        key = tuple((a.dtype.str, a.shape, a.tobytes()) for a in arrays)
        with self._lock:
            found = self._found.get(key)
        if found is not None:
            return found
        value = np.asarray(self.function(*args))
        value.flags.writeable = False
        with self._lock:
            keep(self._found, key, value, self.entries)
        return value

    def clear(self):
        with self._lock:
            self._found.clear()
#: calls a :func:`recall` store keeps, and the largest input (entries) it remembers
RECALL_CALLS = 8
RECALL_ENTRIES = 100_000


def recall(store, x, function):
    """``function(x)`` (a tuple of arrays), remembered in the dict ``store`` by the bytes of
    ``x``: the last RECALL_CALLS inputs of up to RECALL_ENTRIES entries each. The function must
    be pure; copies go in and out, so the answer is bit for bit a fresh evaluation. (The solve
    asks a subcell for the same currents again: a coupled subcell's source at the pilot's Newton
    steps; its inversions beyond the table take the numpy root find, ~1 ms a call.)"""
    x = np.asarray(x, dtype=float)
    if x.size > RECALL_ENTRIES:
        return function(x)
    key = (x.shape, x.tobytes())
    found = store.get(key)
    if found is not None:
        return tuple(a.copy() for a in found)
    out = function(x)
    keep(store, key, tuple(np.array(a, copy=True) for a in out), RECALL_CALLS)
    return out


def keep(table, key, value, entries):
    """``table[key] = value`` in a dict bounded to ``entries`` keys: a new key in a full table
    first drops the oldest one (first in, first out)."""
    if key not in table and len(table) >= entries:
        table.pop(next(iter(table)))
    table[key] = value
