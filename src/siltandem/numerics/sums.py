"""Running sums over the first axis of a layer stack's arrays (L, ...), layer by layer."""
import numpy as np


def running_sum(values):
    """``np.cumsum(values, axis=0)`` for an array (L, ...): the same additions in the same order
    (an accumulation adds entry j to the sum of the entries before it, one at a time), so the
    same numbers bit for bit, computed one whole layer (a contiguous block) at a time. numpy's
    cumsum along the first axis of a C-ordered 3-d array steps through memory with the layers'
    stride and costs several times more (optics of a layer study: (13, 16, 1291) arrays).
    Anything but a floating-point array of two or more dimensions goes to np.cumsum."""
    values = np.asarray(values)
    if values.ndim < 2 or values.dtype.kind != "f" or values.shape[0] == 0:
        return np.cumsum(values, axis=0)
    out = np.empty(values.shape, dtype=values.dtype)
    out[0] = values[0]
    for j in range(1, values.shape[0]):
        np.add(out[j - 1], values[j], out=out[j])
    return out
