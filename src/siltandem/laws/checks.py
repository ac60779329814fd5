"""Argument checks shared by the layer-physics laws (collection, junction): finite, positive, in SI units.

Each check names the function, the argument and its unit in the message, so that a bad layer value is
reported where it entered, not as a NaN three stages later.
"""
import warnings

import numpy as np


class CollectionParameterError(ValueError):
    """A subcell layer parameter that the law cannot represent; the message names the fix."""


class CollectionDomainWarning(RuntimeWarning):
    """Some points lie outside a law's domain and were set to NaN."""


def first_bad(mask, values):
    mask = np.asarray(mask)
    if not mask.any():
        return None
    idx = np.unravel_index(np.argmax(mask), mask.shape)
    vals = [np.broadcast_to(np.asarray(v, dtype=float), mask.shape)[idx] for v in values]
    at = "" if mask.ndim == 0 else (f" (at index {tuple(int(i) for i in idx)}, {int(mask.sum())} "
                                    f"of {mask.size} entries)")
    return at, vals


def checked(name, value, unit, *, where, zero_ok=False, inf_ok=False):
    """``value`` as a float array; CollectionParameterError unless it is positive (and finite)."""
    v = np.asarray(value, dtype=float)
    bad = np.isnan(v) | (v < 0) | ((v == 0) & (not zero_ok)) | (np.isinf(v) & (not inf_ok))
    found = first_bad(bad, [v])
    if found:
        at, (val,) = found
        need = "zero or positive" if zero_ok else "positive"
        need += "" if inf_ok else " and finite"
        extra = " (inf is allowed)" if inf_ok else ""
        raise CollectionParameterError(
            f"{where}: {name} = {val:g} {unit}{at} must be {need}{extra}; give a {need} {name}.")
    return v


def finite(name, value, unit, *, where):
    v = np.asarray(value, dtype=float)
    found = first_bad(~np.isfinite(v), [v])
    if found:
        at, (val,) = found
        raise CollectionParameterError(f"{where}: {name} = {val:g} {unit}{at} must be finite; "
                                       f"give a finite {name}.")
    return v


def warn_nan(where, count, what):
    if count:
        warnings.warn(f"{where}: {count} point(s) {what}; set to NaN", CollectionDomainWarning,
                      stacklevel=3)
