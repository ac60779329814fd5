"""Which fields of an element differ from their defaults: an element whose law has parameters a
compiled form does not read yet is left to the numpy law instead of losing them silently."""
from dataclasses import MISSING, fields

import numpy as np

#: the IsotypeInterface fields the compiled law (laws/compiled_isotype.py) reads, or that only
#: label the element
COMPILED_ISOTYPE_FIELDS = frozenset({
    "name", "barrier_eV", "built_in_V", "alpha", "richardson_A_m2_K2", "direction", "carrier",
    "offset_eV", "string", "kind", "depletion", "transport", "field_energy_eV"})

#: the fields the compiled general law (laws/compiled_fermi.py: Fermi-Dirac sides, sheet charge) reads
GENERAL_ISOTYPE_FIELDS = COMPILED_ISOTYPE_FIELDS | {"accumulation_fermi_eV", "depletion_fermi_eV", "sheet_charge"}


def only_fields_set(element, names):
    """True when every compared field of the dataclass ``element`` outside ``names`` has its
    default value (:func:`_at_default`)."""
    for f in fields(element):
        if f.name in names or not f.compare:
            continue
        if f.default is not MISSING:
            default = f.default
        elif f.default_factory is not MISSING:
            default = f.default_factory()
        else:
            return False
        if not _at_default(getattr(element, f.name), default):
            return False
    return True


def _at_default(value, default):
    """Whether a field holds its default: None is None; numbers and arrays entry by entry with
    broadcasting (a batch of designs, (B, 1), against the default's (1, 1)), NaN equal to NaN;
    anything else by ``==``."""
    if default is None or value is None:
        return value is default
    try:
        v = np.asarray(value, dtype=float)
        d = np.asarray(default, dtype=float)
        return bool(np.all((v == d) | (np.isnan(v) & np.isnan(d))))
    except (TypeError, ValueError):          # not numbers, or shapes that do not broadcast
        try:
            return bool(np.all(np.asarray(value) == np.asarray(default)))
        except (TypeError, ValueError):
            return False
