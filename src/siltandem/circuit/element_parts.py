"""Small helpers shared by the circuit elements (circuit/elements.py, circuit/interface_element.py):
batch shapes, cache keys of temperatures, slope-range reciprocals."""
import numpy as np


def temperature_key(temperature_K):
    """A cache key for a temperature: the float itself, or the bytes of an array of them."""
    if isinstance(temperature_K, (float, int)):
        return float(temperature_K)
    array = np.asarray(temperature_K, dtype=float)
    return float(array) if array.ndim == 0 else array.tobytes()


def parameter_columns(*columns):
    """Columns of (R, 1), (1, 1) or scalar values side by side: a C-ordered (R, k) array."""
    arrays = [np.asarray(c, dtype=float).reshape(-1) for c in columns]
    out = np.empty((max(a.size for a in arrays), len(arrays)))
    for k, a in enumerate(arrays):
        out[:, k] = a
    return out


def reciprocal_range(low, high, shift):
    """[1/high, 1/low] + shift for a slope range [low, high] of one sign: the range of dV/dJ
    from that of dJ/dV; (-inf, inf) where the range holds zero or is not finite."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ok = np.isfinite(low) & np.isfinite(high) & ((low > 0) | (high < 0))
        return (np.where(ok, 1.0 / high, -np.inf) + shift,
                np.where(ok, 1.0 / low, np.inf) + shift)


def batch(value):
    """Any scalar or 1-D array -> float array of shape (B, 1)."""
    return np.asarray(value, dtype=float).reshape(-1, 1)
