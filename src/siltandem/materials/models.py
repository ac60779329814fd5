"""Band-edge and absorption laws used by the materials library.

Small, pure, vectorized functions: the independent variable first, everything else keyword-only.
Band energies in eV, temperatures in K, densities in m^-3, absorption coefficients in m^-1.
None of these functions reads a file; the data come from the TOML files beside this module.
"""
from __future__ import annotations

import numpy as np

from siltandem.constants import (
    BOLTZMANN_EV_K,
)

__all__ = [
    "varshni_gap_eV",
    "bose_einstein_gap_eV",
    "ellipsoid_dos_mass_ratio",
    "ellipsoid_richardson_mass_ratio",
    "light_heavy_hole_masses",
    "direct_absorption_per_m",
    "phonon_assisted_absorption_per_m",
    "log_interpolate",
]


def varshni_gap_eV(temperature_K, *, gap_0K_eV, alpha_eV_K, beta_K):
    """Band gap at ``temperature_K`` from the Varshni law.

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K], >= 0.
    gap_0K_eV : float
        Gap at 0 K [eV].
    alpha_eV_K : float
        Varshni alpha [eV/K].
    beta_K : float
        Varshni beta [K]; 0 gives the linear law E0 - alpha*T.

    Returns
    -------
    ndarray
        Gap [eV], shape of ``temperature_K``.

    Notes
    -----
    E(T) = E0 - alpha T^2 / (T + beta).

    References
    ----------
    Y. P. Varshni, Physica 34 (1967) 149.
    """
    t = np.asarray(temperature_K, dtype=float)
    return gap_0K_eV - alpha_eV_K * t * t / (t + beta_K) if beta_K > 0 else gap_0K_eV - alpha_eV_K * t


def bose_einstein_gap_eV(temperature_K, *, gap_0K_eV, strength_eV, temperature_scale_K):
    """Band gap from the Bose-Einstein-type law that VMR give for the Gamma gap of GaP.

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K], >= 0.
    gap_0K_eV : float
        Gap at 0 K [eV].
    strength_eV : float
        Coefficient a [eV].
    temperature_scale_K : float
        Characteristic temperature b [K].

    Returns
    -------
    ndarray
        Gap [eV].

    Notes
    -----
    E(T) = E0 + a [1 - coth(b / T)] = E0 - 2 a / (exp(2 b / T) - 1); the second form is used, which is
    exact at T = 0.

    References
    ----------
    I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan, J. Appl. Phys. 89 (2001) 5815 (GaP Gamma gap).
    """
    t = np.asarray(temperature_K, dtype=float)
    with np.errstate(divide="ignore", over="ignore"):
        occupation = 1.0 / np.expm1(2.0 * temperature_scale_K / t)
    return gap_0K_eV - 2.0 * strength_eV * occupation


def ellipsoid_dos_mass_ratio(*, longitudinal, transverse, valley_count):
    """Density-of-states mass of ``valley_count`` equivalent ellipsoidal valleys.

    Notes
    -----
    m_dos = N^(2/3) (m_l m_t^2)^(1/3).

    References
    ----------
    S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley (2007), ch. 1.
    """
    return valley_count ** (2.0 / 3.0) * (longitudinal * transverse**2) ** (1.0 / 3.0)


_VALLEY_AXES = {
    # unit vectors of the long axes, one per full valley
    "X": np.eye(3),
    "L": np.array([[1, 1, 1], [1, 1, -1], [1, -1, 1], [-1, 1, 1]], dtype=float) / np.sqrt(3.0),
}


def ellipsoid_richardson_mass_ratio(*, longitudinal, transverse, valley_type, valleys_per_axis=1,
                                    surface_normal=(1.0, 0.0, 0.0)):
    """Richardson mass (A*/A) of a set of equivalent ellipsoidal valleys for emission along a normal.

    Parameters
    ----------
    longitudinal, transverse : float
        Longitudinal and transverse masses over m0.
    valley_type : {"X", "L"}
        Valleys on the <100> axes (X, or the Delta lines of silicon) or on the <111> axes (L).
    valleys_per_axis : int
        Full valleys per axis direction: 2 for silicon's Delta minima (six valleys), 1 for the X
        points of zinc-blende III-V (three full valleys) and for L (four full valleys).
    surface_normal : sequence of 3 floats
        Direction of emission (the interface normal); need not be normalised.

    Returns
    -------
    float
        Sum over valleys of the Richardson mass ratio.

    Notes
    -----
    Per valley with mass tensor M, m_R = sqrt(det M * n . M^-1 . n) (Crowell 1965). For Si on (100):
    2 m_t + 4 sqrt(m_l m_t); on (111): 6 sqrt((m_t^2 + 2 m_l m_t) / 3).

    References
    ----------
    C. R. Crowell, Solid-State Electron. 8 (1965) 395.
    """
    n = np.asarray(surface_normal, dtype=float)
    n = n / np.linalg.norm(n)
    total = 0.0
    for axis in _VALLEY_AXES[valley_type]:
        along = float(np.dot(n, axis)) ** 2
        inverse_mass = along / longitudinal + (1.0 - along) / transverse
        total += np.sqrt(longitudinal * transverse**2 * inverse_mass)
    return valleys_per_axis * total


def light_heavy_hole_masses(*, gamma1, gamma2):
    """Heavy- and light-hole masses along [001] from the Luttinger parameters.

    Notes
    -----
    m_hh = 1 / (gamma1 - 2 gamma2), m_lh = 1 / (gamma1 + 2 gamma2).

    References
    ----------
    I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan, J. Appl. Phys. 89 (2001) 5815, section II.
    """
    return 1.0 / (gamma1 - 2.0 * gamma2), 1.0 / (gamma1 + 2.0 * gamma2)


def direct_absorption_per_m(photon_energy_eV, *, gap_eV, strength_per_m_eV_half, urbach_energy_eV,
                            tail_depth=10.0):
    """Absorption above a direct gap (parabolic bands, allowed transitions) with an Urbach tail.

    Parameters
    ----------
    photon_energy_eV : array_like
        Photon energy [eV].
    gap_eV : array_like
        Direct gap [eV] (broadcasts with the energy).
    strength_per_m_eV_half : float
        A* [m^-1 eV^-1/2].
    urbach_energy_eV : float
        Urbach energy Eu [eV]; 0 gives a sharp edge.
    tail_depth : float
        The tail is cut to zero more than ``tail_depth`` Urbach energies below the gap.

    Returns
    -------
    ndarray
        alpha [m^-1], broadcast shape.

    Notes
    -----
    alpha = A* sqrt(E - Eg) for E >= Eg + Eu/2; below, alpha = A* sqrt(Eu/2) exp((E - Eg - Eu/2)/Eu),
    which joins the square root with equal value and slope; zero for E < Eg - tail_depth Eu.

    References
    ----------
    J. I. Pankove, Optical Processes in Semiconductors, Prentice-Hall (1971), ch. 3;
    F. Urbach, Phys. Rev. 92 (1953) 1324.
    """
    e = np.asarray(photon_energy_eV, dtype=float)
    excess = e - np.asarray(gap_eV, dtype=float)
    if urbach_energy_eV <= 0.0:
        return strength_per_m_eV_half * np.sqrt(np.clip(excess, 0.0, None))
    join = 0.5 * urbach_energy_eV
    above = strength_per_m_eV_half * np.sqrt(np.clip(excess, join, None))
    tail = strength_per_m_eV_half * np.sqrt(join) * np.exp(np.clip(excess - join, None, 0.0) / urbach_energy_eV)
    alpha = np.where(excess >= join, above, tail)
    return np.where(excess < -tail_depth * urbach_energy_eV, 0.0, alpha)


def phonon_assisted_absorption_per_m(photon_energy_eV, *, gaps_eV, strengths_per_m_eV2, phonon_energies_eV,
                                     phonon_weights, temperature_K):
    """Indirect (phonon-assisted) absorption summed over gaps and phonons.

    Parameters
    ----------
    photon_energy_eV : array_like
        Photon energy [eV].
    gaps_eV : sequence of array_like
        Indirect gaps [eV], one entry per gap (each broadcasts with the energy).
    strengths_per_m_eV2 : sequence of float
        Strength A_j of each gap [m^-1 eV^-2].
    phonon_energies_eV : sequence of float
        Phonon energies E_p,i [eV], > 0.
    phonon_weights : sequence of float
        Weight C_i of each phonon [-].
    temperature_K : array_like
        Temperature [K], > 0.

    Returns
    -------
    ndarray
        alpha [m^-1].

    Notes
    -----
    alpha = sum_i sum_j C_i A_j [ (E - Eg_j + Ep_i)^2 / (exp(Ep_i/kT) - 1)
                                  + (E - Eg_j - Ep_i)^2 / (1 - exp(-Ep_i/kT)) ],
    each square counted only where its base is positive (phonon absorption, phonon emission).
    With one gap and one phonon this is the textbook indirect-edge form.

    References
    ----------
    J. I. Pankove, Optical Processes in Semiconductors, Prentice-Hall (1971), ch. 3;
    K. Rajkanan, R. Singh, J. Shewchun, Solid-State Electron. 22 (1979) 793 (two gaps, two phonons).
    """
    e = np.asarray(photon_energy_eV, dtype=float)
    kt = BOLTZMANN_EV_K * np.asarray(temperature_K, dtype=float)
    total = np.zeros(np.broadcast_shapes(e.shape, kt.shape, *[np.shape(g) for g in gaps_eV]))
    for phonon, weight in zip(phonon_energies_eV, phonon_weights):
        x = phonon / kt
        absorb_occ = 1.0 / np.expm1(x)
        emit_occ = 1.0 / -np.expm1(-x)
        for gap, strength in zip(gaps_eV, strengths_per_m_eV2):
            excess = e - np.asarray(gap, dtype=float)
            absorb = np.clip(excess + phonon, 0.0, None) ** 2 * absorb_occ
            emit = np.clip(excess - phonon, 0.0, None) ** 2 * emit_occ
            total = total + weight * strength * (absorb + emit)
    return total


def log_interpolate(x, *, table_x, table_y):
    """Interpolate positive tabulated values linearly in log(y); ``table_x`` increasing.

    Values outside the table are clamped to its end values (callers handle the outside themselves).
    """
    return np.exp(np.interp(np.asarray(x, dtype=float), table_x, np.log(table_y)))
