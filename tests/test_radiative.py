"""Radiative saturation current (generalized Planck law) against quadrature and published rows.

Sources: S. Ruehle, Solar Energy 130 (2016) 139 (J0,rad rows, through the R values of
../shared/REFERENCES.md); W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510 (the
integral); scipy.integrate.quad as the independent method.
"""
import numpy as np
import pytest
from scipy import constants, integrate

from siltandem.laws.radiative import bose_einstein_tail, radiative_saturation_current


@pytest.mark.parametrize("x", [3.0, 5.0, 12.0, 43.3, 80.0])
def test_series_matches_quadrature(x):
    # independent method: adaptive quadrature of t^2/(e^t - 1) from x to infinity
    reference, _ = integrate.quad(lambda t: t * t * np.exp(-t) / -np.expm1(-t), x, np.inf, epsabs=0,
                                  epsrel=1e-13)
    assert bose_einstein_tail(x) == pytest.approx(reference, rel=1e-12)


@pytest.mark.parametrize("gap, expected_A_cm2", [
    # ../shared/REFERENCES.md, J0,rad at 300 K (R, standing for S. Ruehle, Solar Energy 130
    # (2016) 139)
    (1.12, 8.23e-17), (1.34, 2.36e-20), (1.42, 1.20e-21), (1.70, 3.37e-26), (1.90, 1.83e-29),
])
def test_radiative_saturation_current_table(gap, expected_A_cm2):
    value = radiative_saturation_current(gap, temperature_K=300.0) * 1e-4
    assert value == pytest.approx(expected_A_cm2, rel=5e-3)


def test_formula_with_scipy_constants_directly():
    # J0 = q 2 pi / (h^3 c^2) * int_Eg^inf E^2 / (exp(E/kT) - 1) dE, integrated in joules
    q, h, c, k = constants.e, constants.h, constants.c, constants.k
    gap_J, temperature = 1.5 * q, 330.0
    integral, _ = integrate.quad(lambda e: e * e * np.exp(-e / (k * temperature)) / -np.expm1(-e / (k * temperature)),
                                 gap_J, 40 * gap_J, epsrel=1e-12)
    expected = q * 2 * np.pi / (h**3 * c**2) * integral
    assert radiative_saturation_current(1.5, temperature_K=temperature) == pytest.approx(
        expected, rel=1e-9)


def test_absorptance_scales_emission_and_shapes_broadcast():
    gaps = np.array([[1.1], [1.5]])
    both = radiative_saturation_current(gaps, temperature_K=np.array([300.0, 350.0]),
                                        absorptance=0.5)
    assert both.shape == (2, 2)
    assert both[0, 0] == pytest.approx(0.5 * radiative_saturation_current(1.1, temperature_K=300))
