"""Power series evaluated without cancellation: Horner's rule and the coefficients of
exp(x) - 1 - x, shared by the isotype laws (laws/thermionic.py, laws/fermi_dirac.py)."""
import numpy as np

#: 1/(k+2)! for k = 0..14: exp(x) - 1 - x = x^2 * sum_k x^k/(k+2)!
EXP_TAIL = np.array([1.0 / np.prod(np.arange(1.0, k + 3.0)) for k in range(15)])


def horner(coefficients, x):
    """sum_k coefficients[k] x^k by Horner's rule (coefficients in ascending order), an array
    shaped like ``x``."""
    out = np.full_like(x, coefficients[-1])
    for c in coefficients[-2::-1]:
        out = out * x + c
    return out
