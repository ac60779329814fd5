"""The isotype law's inverse (current -> voltage) solved in plain numpy: scipy's roots, exactly.

isotype_voltage finds the accumulation-side bending with Chandrupatla's method. It used to call
scipy.optimize.elementwise.find_root, whose general array-API loop cost about 0.4 ms per
iteration in overhead (a stack of 40 isotype interfaces took minutes). thermionic._chandrupatla
is the same iteration and stopping rule written out in numpy; the reference here is scipy's
find_root itself, run through the same law (T. R. Chandrupatla, Adv. Eng. Softw. 28 (1997) 145).
No timing is asserted; the cost guard counts the law's evaluations.
"""
import warnings

import numpy as np
import pytest
from scipy.optimize import elementwise

from siltandem.laws import thermionic as th


def scipy_roots(function, lower, upper, args):
    result = elementwise.find_root(function, (lower, upper), args=args)
    return result.x, result.success


def random_interfaces(n, seed):
    """Parameters over the law's whole domain, currents from deep reverse to near flat band."""
    rng = np.random.default_rng(seed)
    kw = dict(barrier_eV=rng.uniform(0.05, 1.5, n), built_in_V=rng.uniform(0.01, 1.2, n),
              alpha=10 ** rng.uniform(-6, 8, n), richardson_A_m2_K2=10 ** rng.uniform(4, 6.5, n),
              temperature_K=rng.uniform(150, 600, n))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", th.IsotypeDomainWarning)
        flat = th.isotype_current_density(kw["built_in_V"] - 1e-4, **kw)
    sign = np.where(rng.uniform(size=n) < 0.5, -1e6, 1.0)
    current = sign * 10 ** rng.uniform(-14, 0, n) * np.abs(flat) * rng.uniform(0, 1, n)
    return current, kw


@pytest.mark.parametrize("include_tail", [False, True])
def test_voltage_equals_scipy_find_root_bit_for_bit(monkeypatch, include_tail):
    current, kw = random_interfaces(20_000, seed=3)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", th.IsotypeDomainWarning)
        ours = th.isotype_voltage(current, include_tail=include_tail, with_derivative=True, **kw)
        monkeypatch.setattr(th, "_chandrupatla", scipy_roots)
        reference = th.isotype_voltage(current, include_tail=include_tail,
                                       with_derivative=True, **kw)
    for got, expected in zip(ours, reference):
        assert np.isfinite(expected).sum() > 19_000          # the comparison covers the domain
        np.testing.assert_array_equal(got, expected)


def test_root_finder_on_closed_forms():
    # roots known in closed form (cube roots; one bracket without a sign change), against
    # scipy's find_root for the iterates' end and the status
    c = np.array([3.0, 4.0, 5.0, 1e-30, 8.0])
    lower = np.array([0.0, 0.0, 0.0, 0.0, 3.0])
    upper = np.array([3.0, 3.0, 3.0, 1.0, 4.0])                # 8: no sign change in [3, 4]

    def cubic(x, c):
        return x ** 3 - c

    x, success = th._chandrupatla(cubic, lower, upper, (c,))
    np.testing.assert_array_equal(success, [True, True, True, True, False])
    np.testing.assert_allclose(x[:4], np.cbrt(c[:4]), rtol=4e-16)
    assert np.isnan(x[4])
    expected, expected_success = scipy_roots(cubic, lower, upper, (c,))
    np.testing.assert_array_equal(success, expected_success)
    np.testing.assert_array_equal(x[:4], expected[:4])


def test_each_iteration_evaluates_only_the_points_still_running():
    # the cost guard: evaluations shrink with the active set (no whole-array passes)
    sizes = []

    def cubic(x, c):
        sizes.append(x.size)
        return x ** 3 - c

    c = np.concatenate([np.full(5, 1.0), np.linspace(2.0, 50.0, 95)])
    lower, upper = np.where(c == 1.0, 1.0, 0.0), np.full(100, 4.0)   # 5 roots on a bracket end
    th._chandrupatla(cubic, lower, upper, (c,))
    assert sizes[:2] == [100, 100]                     # the two ends
    assert sizes[2] == 95                              # the roots found at an end stop at once
    assert sizes == sorted(sizes, reverse=True) and sizes[-1] < 95
