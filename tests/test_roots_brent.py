"""Brent's method written out (numerics/roots.py brent_root) against scipy.optimize.brentq, the
reference library it transcribes: the same root to the bit and the same evaluations, on smooth,
flat, steep and kinked functions, and the same refusals (no sign change, NaN)."""
import math

import numpy as np
import pytest
from scipy.optimize import brentq

from siltandem.numerics.roots import bracketed_root, brent_root

#: (function, a, b): smooth, a root at an end, very flat, very steep, kinked, a diode-like
#: exponential and the power slope of a solar-cell-like curve (numbers invented for the check)
CASES = [
    (lambda x: x**3 - 2 * x - 5, 2.0, 3.0),
    (lambda x: math.cos(x) - x, 0.0, 1.0),
    (lambda x: (x - 1.0) ** 3, 0.0, 1.7),
    (lambda x: (x - 1.0) ** 2 * (x - 1.0), 0.2, 1.3),
    (lambda x: math.exp(40 * x) - 1e5, -1.0, 1.0),
    (lambda x: abs(x - 0.3) - 0.1, 0.3, 2.0),
    (lambda x: 0.0259 * math.log1p((200.0 - x) / 1e-9) - 0.5, 0.0, 200.0 + 1e-9 * 0.99),
    (lambda x: math.tanh(50 * (x - 0.123456789)), -3.0, 5.0),
    (lambda x: x, -1.0, 2.0),
    (lambda x: x - 1.0, 1.0, 2.0),
]


@pytest.mark.parametrize("index", range(len(CASES)))
@pytest.mark.parametrize("xtol, rtol", [(2e-12, 8.881784197001252e-16), (1e-13, 4e-16 * 4), (1e-3, 1e-6)])
def test_brent_root_is_scipys_brentq_to_the_bit(index, xtol, rtol):
    function, a, b = CASES[index]
    rtol = max(rtol, 4 * np.finfo(float).eps)
    ours_calls, theirs_calls = [], []
    ours, converged = brent_root(lambda x: ours_calls.append(x) or function(x), a, b, xtol=xtol,
                                 rtol=rtol, max_iterations=100)
    theirs, report = brentq(lambda x: theirs_calls.append(x) or function(x), a, b, xtol=xtol,
                            rtol=rtol, maxiter=100, full_output=True, disp=False)
    assert converged == report.converged         # (x - 1)^3 at the tight tolerances runs out in both
    assert ours == theirs                        # bit for bit (scipy.optimize.brentq)
    assert ours_calls == theirs_calls            # the same evaluations in the same order


def test_brent_root_refuses_as_brentq_does():
    with pytest.raises(ValueError):
        brentq(lambda x: x * x + 1, -1.0, 1.0)
    assert math.isnan(brent_root(lambda x: x * x + 1, -1.0, 1.0)[0])
    assert brent_root(lambda x: x * x + 1, -1.0, 1.0)[1] is False
    assert brent_root(lambda x: math.nan if x > 0.5 else x - 0.7, 0.0, 1.0)[1] is False
    with pytest.raises(RuntimeError):            # scipy: out of iterations
        brentq(lambda x: math.cos(x) - x, 0.0, 1.0, maxiter=2)
    root, converged = brent_root(lambda x: math.cos(x) - x, 0.0, 1.0, max_iterations=2)
    assert not converged and 0.0 <= root <= 1.0


def test_a_single_bracketed_root_goes_through_brent():
    """bracketed_root on one entry: the root of x^2 = 2 (sqrt 2, to the tolerance asked)."""
    root = bracketed_root(lambda x: x * x - 2.0, np.array([[1.0]]), np.array([[2.0]]), xtol=1e-14)
    assert root.shape == (1, 1)
    assert abs(root[0, 0] - math.sqrt(2.0)) < 1e-13
