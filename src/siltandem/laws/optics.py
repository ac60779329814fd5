"""Light through a stack of step absorbers: photon flux, exact trapezoid integration, filtering.

The spectrum is taken as piecewise linear in photon flux between its tabulated wavelengths (the
trapezoid rule). A step absorber of gap Eg absorbs the fraction ``a`` of every photon with
wavelength below lambda_g = hc/Eg; what it does not absorb reaches the next absorber down.

References
----------
ASTM G173-03, Standard Tables for Reference Solar Spectral Irradiances (read through pvlib).
A. De Vos, J. Phys. D 13 (1980) 839 (detailed balance of tandem cells, light filtered in series).
"""
import itertools

import numpy as np

from ..constants import ELEMENTARY_CHARGE_C, HC_EV_NM, PLANCK_J_S, SPEED_OF_LIGHT_M_S


def photon_flux(wavelength_nm, irradiance_W_m2_nm):
    """Spectral photon flux [photons m^-2 s^-1 nm^-1] from spectral irradiance [W m^-2 nm^-1]."""
    wavelength_nm = np.asarray(wavelength_nm, dtype=float)
    energy_J = PLANCK_J_S * SPEED_OF_LIGHT_M_S / (wavelength_nm * 1e-9)
    return np.asarray(irradiance_W_m2_nm, dtype=float) / energy_J


def cumulative_below(wavelength_limit_nm, wavelength_nm, values):
    """Exact trapezoid integral of a tabulated function from the first wavelength up to a limit.

    The tabulated function is taken as linear between its points, so the partial interval up to
    the limit is integrated exactly (not rounded to a grid point).

    Parameters
    ----------
    wavelength_limit_nm : array_like
        Upper limit(s) [nm]; below the table gives 0, above it the full integral.
    wavelength_nm : (M,) ndarray
        Increasing wavelengths [nm].
    values : (M,) ndarray
        Function values at those wavelengths (per nm).

    Returns
    -------
    ndarray
        Integral, shape of ``wavelength_limit_nm``.
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    f = np.asarray(values, dtype=float)
    limit = np.clip(np.asarray(wavelength_limit_nm, dtype=float), lam[0], lam[-1])
    step = np.diff(lam)
    cumulative = np.concatenate([[0.0], np.cumsum(0.5 * (f[1:] + f[:-1]) * step)])
    k = np.clip(np.searchsorted(lam, limit, side="right") - 1, 0, lam.size - 2)
    d = limit - lam[k]
    slope = (f[k + 1] - f[k]) / step[k]
    return cumulative[k] + f[k] * d + 0.5 * slope * d**2


def step_absorber_photocurrents(gaps_eV, absorptances, wavelength_nm, flux):
    """Photocurrent density [A/m^2] of step absorbers in optical order (sun side first).

    Parameters
    ----------
    gaps_eV : sequence of array_like
        Gap of each absorber [eV], sun side first; arrays broadcast over a batch.
    absorptances : sequence of array_like
        Step absorptance of each absorber above its gap [-], in [0, 1].
    wavelength_nm : (M,) ndarray
        Spectrum wavelengths [nm], increasing.
    flux : (M,) ndarray
        Photon flux reaching the first absorber [m^-2 s^-1 nm^-1].

    Returns
    -------
    list of ndarray
        Photocurrent density of each absorber [A/m^2].

    Notes
    -----
    Absorber i sees the flux transmitted by all above it,
    Phi_i(lambda) = Phi(lambda) prod_{j<i} (1 - a_j H(lambda_j - lambda)),
    with H the step function and lambda_j = hc/Eg_j. Expanding the product over subsets S of the
    absorbers above, prod_{j in S} H(lambda_j - lambda) = H(min_S lambda_j - lambda), so

    J_i = q a_i sum_S (prod_{j in S} (-a_j)) N(min(lambda_i, min_S lambda_j)),

    where N(lambda) is the exact trapezoid integral of Phi up to lambda. Exact for step
    absorbers on the tabulated spectrum; 2^i terms for absorber i.
    """
    limits = [HC_EV_NM / np.asarray(g, dtype=float) for g in gaps_eV]
    absorptances = [np.asarray(a, dtype=float) for a in absorptances]
    return filtered_photocurrents(limits, absorptances,
                                  lambda edge: cumulative_below(edge, wavelength_nm, flux))


def filtered_photocurrents(limits_nm, absorptances, photons_below):
    """The subset expansion of :func:`step_absorber_photocurrents`, for any photon integral.

    ``photons_below(edge_nm)`` is the integral of the incident photon flux up to a wavelength
    (one spectrum, or one row per spectrum); each absorber i gets
    q a_i sum_S (prod_{j in S} (-a_j)) photons_below(min(lambda_i, min_S lambda_j)).
    """
    currents = []
    for i, (limit_i, a_i) in enumerate(zip(limits_nm, absorptances)):
        total = 0.0
        for size in range(i + 1):
            for subset in itertools.combinations(range(i), size):
                weight = 1.0
                edge = limit_i
                for j in subset:
                    weight = weight * (-absorptances[j])
                    edge = np.minimum(edge, limits_nm[j])
                total = total + weight * photons_below(edge)
        currents.append(ELEMENTARY_CHARGE_C * a_i * np.asarray(total, dtype=float))
    return currents
