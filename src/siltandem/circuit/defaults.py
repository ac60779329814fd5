"""Which fields of an element differ from their defaults: an element whose law has parameters a
compiled form does not read yet is left to the numpy law instead of losing them silently."""
from dataclasses import MISSING, fields

import numpy as np

#: the IsotypeInterface fields the compiled law (laws/compiled_isotype.py) reads, or that only
#: label the element
COMPILED_ISOTYPE_FIELDS = frozenset({
    "name", "barrier_eV", "built_in_V", "alpha", "richardson_A_m2_K2", "direction", "carrier",
    "offset_eV", "string", "kind", "depletion", "transport", "field_energy_eV", "include_tail"})


def only_fields_set(element, names):
    """True when every compared field of the dataclass ``element`` outside ``names`` has its
    default value (arrays compared entry by entry, NaN equal to NaN)."""
    for f in fields(element):
        if f.name in names or not f.compare:
            continue
        if f.default is not MISSING:
            default = f.default
        elif f.default_factory is not MISSING:
            default = f.default_factory()
        else:
            return False
        value = getattr(element, f.name)
        try:
            same = np.array_equal(np.asarray(value), np.asarray(default), equal_nan=True)
        except TypeError:
            same = bool(np.all(np.asarray(value) == np.asarray(default)))
        if not same:
            return False
    return True
