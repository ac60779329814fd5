"""Radiative (detailed-balance) dark current of a subcell: the generalized Planck law.

A subcell with step absorptance ``a`` above its gap emits, by reciprocity, ``a`` times the
black-body photon flux above the gap into the hemisphere over its front surface (ideal back
mirror, no emission into the substrate). The radiative saturation current density is

    J0,rad = a * q * 2 pi / (h^3 c^2) * integral_{Eg}^{inf} E^2 / (exp(E/kT) - 1) dE

and a subcell whose external radiative efficiency is ERE has J0 = J0,rad / ERE.

References
----------
W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510.
P. Wuerfel, J. Phys. C 15 (1982) 3967 (generalized Planck law).
U. Rau, Phys. Rev. B 76 (2007) 085303 (reciprocity between emission and quantum efficiency).
S. Ruehle, Solar Energy 130 (2016) 139 (tabulated limits under AM1.5G).
"""
import numpy as np

from siltandem.laws import compiled as kernels
from siltandem.constants import (
    BOLTZMANN_EV_K,
    ELEMENTARY_CHARGE_C,
    PLANCK_J_S,
    SPEED_OF_LIGHT_M_S,
)

_TERMS = 12  # series terms; the k-th term is ~exp(-k Eg/kT), negligible beyond a few for Eg/kT > 5


def bose_einstein_tail(x):
    """Dimensionless integral  I(x) = integral_x^inf t^2 / (exp(t) - 1) dt  for x > 0.

    Evaluated by the convergent series  sum_k exp(-k x) (x^2/k + 2x/k^2 + 2/k^3), exact to
    double precision for x >= 3 with 12 terms (every gap >= 0.3 eV up to 1000 K); the sum runs
    compiled (siltandem.kernels.bose_einstein_tail).

    Parameters
    ----------
    x : array_like
        Reduced gap Eg / kT [-], > 0.
    """
    x = np.asarray(x, dtype=float)
    return kernels.bose_einstein_tail(kernels.as_input(x.reshape(-1)), _TERMS).reshape(x.shape)


def radiative_saturation_current(gap_eV, *, temperature_K, absorptance=1.0):
    """Radiative saturation current density J0,rad [A/m^2] of a step absorber.

    Parameters
    ----------
    gap_eV : array_like
        Band gap [eV], 0.3 to 4.
    temperature_K : array_like
        Cell temperature [K], 150 to 1000.
    absorptance : array_like, optional
        Step absorptance above the gap [-], 0 < a <= 1 (reciprocity: emission scales alike).

    Returns
    -------
    ndarray
        J0,rad [A/m^2] (multiply by 1e-4 for A/cm^2), broadcast shape of the inputs.

    Notes
    -----
    J0,rad = a q 2 pi (kT)^3 / (h^3 c^2) * I(Eg/kT), with I from :func:`bose_einstein_tail`
    and kT in joules. One-sided emission; multiply by (1 + n^2) for emission into an absorbing
    substrate of index n.
    """
    gap_eV = np.asarray(gap_eV, dtype=float)
    kt_eV = BOLTZMANN_EV_K * np.asarray(temperature_K, dtype=float)
    kt_J = kt_eV * ELEMENTARY_CHARGE_C
    prefactor = ELEMENTARY_CHARGE_C * 2.0 * np.pi * kt_J**3 / (PLANCK_J_S**3 * SPEED_OF_LIGHT_M_S**2)
    return np.asarray(absorptance, dtype=float) * prefactor * bose_einstein_tail(gap_eV / kt_eV)
