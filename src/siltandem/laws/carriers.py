"""Carrier statistics of a semiconductor band: effective densities of states and the Fermi level
of a heavily doped layer (pure, vectorized, SI units, eV for energies).
"""
from __future__ import annotations

import numpy as np

from siltandem.constants import BOLTZMANN_EV_K, BOLTZMANN_J_K, ELECTRON_MASS_KG, PLANCK_J_S

__all__ = ["effective_density_of_states_per_m3", "fermi_degeneracy_eV"]

#: Joyce-Dixon coefficients (W. B. Joyce, R. W. Dixon, Appl. Phys. Lett. 31 (1977) 354; A1 = 1/sqrt(8),
#: A2 = 3/16 - sqrt(3)/9; A3, A4 from memory, confirmed by the test against a direct Fermi-Dirac inverse)
_JOYCE_DIXON = (1.0 / np.sqrt(8.0), 3.0 / 16.0 - np.sqrt(3.0) / 9.0, 1.48386e-4, -4.42563e-6)


def effective_density_of_states_per_m3(temperature_K, *, mass_ratio):
    """Effective density of states of one parabolic band (or a set folded into one DOS mass).

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K], > 0.
    mass_ratio : array_like
        Density-of-states mass over the free-electron mass [-].

    Returns
    -------
    ndarray
        N [m^-3].

    Notes
    -----
    N = 2 (2 pi m kT / h^2)^(3/2), so N scales as T^1.5 at fixed mass.

    References
    ----------
    S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley (2007), ch. 1.
    """
    t = np.asarray(temperature_K, dtype=float)
    m = np.asarray(mass_ratio, dtype=float) * ELECTRON_MASS_KG
    return 2.0 * (2.0 * np.pi * m * BOLTZMANN_J_K * t / PLANCK_J_S**2) ** 1.5


def fermi_degeneracy_eV(carrier_density_m3, *, band_states_m3, temperature_K):
    """Fermi level measured into the band from its edge [eV] (positive = degenerate).

    For an n layer this is ``EF - Ec`` with ``band_states_m3 = Nc``; for a p layer ``Ev - EF`` with
    ``band_states_m3 = Nv``. Full ionisation (carrier density = doping), one parabolic band.

    Parameters
    ----------
    carrier_density_m3 : array_like
        Majority-carrier density [m^-3] (the doping for full ionisation).
    band_states_m3 : array_like
        Effective density of states of the band [m^-3].
    temperature_K : array_like
        Temperature [K].

    Notes
    -----
    Inverse of ``n = Nc F_1/2(eta)`` (F_1/2 normalised to exp(eta) for eta -> -inf). For ``r = n/Nc``
    up to 4 the Joyce-Dixon series ``eta = ln r + sum_i A_i r^i`` (error < 1e-4 kT); above 8 the
    degenerate (Sommerfeld) expansion ``F_1/2 = (4/3 sqrt(pi)) eta^(3/2) [1 + pi^2/(8 eta^2) +
    7 pi^4/(640 eta^4)]`` inverted by fixed-point iteration (error < 2e-3 kT); in between a smooth blend
    in ln r. Band-gap narrowing and non-parabolicity are neglected (both matter at 1e19-1e20 cm^-3).

    References
    ----------
    W. B. Joyce, R. W. Dixon, Appl. Phys. Lett. 31 (1977) 354.
    A. Sommerfeld expansion of Fermi-Dirac integrals, e.g. J. S. Blakemore, Semiconductor Statistics,
    Pergamon 1962 (from memory).
    """
    n, nc, t = np.broadcast_arrays(*(np.asarray(a, dtype=float)
                                     for a in (carrier_density_m3, band_states_m3, temperature_K)))
    for name, v in (("carrier_density_m3", n), ("band_states_m3", nc), ("temperature_K", t)):
        bad = ~np.isfinite(v) | (v <= 0)
        if bad.any():
            index = np.unravel_index(np.argmax(bad), bad.shape)
            where = "" if bad.ndim == 0 else (f" (at index {tuple(int(i) for i in index)}, "
                                              f"{int(bad.sum())} of {bad.size} entries)")
            raise ValueError(f"fermi_degeneracy_eV: {name} = {v[index]:g}{where} must be finite and "
                             f"positive; give a positive {name}.")
    r = n / nc
    jd = np.log(r) + sum(c * r ** (i + 1) for i, c in enumerate(_JOYCE_DIXON))
    rs = np.maximum(r, 4.0)
    eta0 = (3.0 * np.sqrt(np.pi) * rs / 4.0) ** (2.0 / 3.0)
    eta = eta0
    for _ in range(8):
        eta = eta0 * (1.0 + np.pi**2 / (8.0 * eta**2) + 7.0 * np.pi**4 / (640.0 * eta**4)) ** (-2.0 / 3.0)
    s = np.clip(np.log(np.maximum(r, 1e-300) / 4.0) / np.log(2.0), 0.0, 1.0)   # 0 at r = 4, 1 at r = 8
    w = s * s * (3.0 - 2.0 * s)
    reduced = np.where(r <= 4.0, jd, (1.0 - w) * np.where(r < 8.0, jd, 0.0) + w * eta)
    return reduced * BOLTZMANN_EV_K * t
