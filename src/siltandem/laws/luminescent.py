"""Luminescent coupling in measured subcell EQEs (pure functions, no files).

When a lower subcell's EQE is measured in a series multi-junction under the usual light-bias
method (bias light that leaves the lower subcell limiting, the string at short circuit, a chopped
monochromatic probe), the upper subcell is in current excess and forward-biased: the probe
photons it absorbs cannot leave as current, so they recombine, and the radiative part of that
extra recombination reaches the lower subcell as photocurrent. The lower subcell's measured EQE
then shows a spurious response where the upper subcell absorbs (D. J. Friedman, J. F. Geisz,
M. A. Steiner, IEEE J. Photovolt. 3 (2013) 1429, from memory).
"""
from dataclasses import dataclass
import functools

import numpy as np

from siltandem.constants import (
    BOLTZMANN_EV_K,
    ELEMENTARY_CHARGE_C,
    PLANCK_J_S,
    SPEED_OF_LIGHT_M_S,
    thermal_voltage_V,
)


def differential_coupling_efficiency(coupling, *, j0_radiative_A_m2, j01_A_m2, j02_A_m2=0.0,
                                     shunt_S_m2=0.0, v_junction_V, temperature_K):
    """eta [-]: the fraction of a small extra recombination current in the upper subcell that
    the lower subcell collects, at the upper junction voltage ``v_junction_V``.

    eta = c (J0,rad e^(Vj/Vt) / Vt) / (J01 e^(Vj/Vt) / Vt + J02 e^(Vj/2Vt) / (2 Vt) + G),
    the coupling ``c`` (key luminescent_coupling) times the radiative share of the upper
    junction's differential conductance (J01 = J0,rad / ERE; J02 and the shunt G do not emit).
    Arrays broadcast.
    """
    vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
    x = np.asarray(v_junction_V, dtype=float) / vt
    radiative = np.asarray(j0_radiative_A_m2, dtype=float) * np.exp(x) / vt
    total = (np.asarray(j01_A_m2, dtype=float) * np.exp(x) / vt
             + np.asarray(j02_A_m2, dtype=float) * np.exp(x / 2) / (2 * vt)
             + np.asarray(shunt_S_m2, dtype=float))
    return np.asarray(coupling, dtype=float) * radiative / total


def coupling_corrected_eqe(eqe_upper, eqe_lower_measured, efficiency):
    """The lower subcell's EQE with the luminescent-coupling artefact removed.

    EQE_lower = (1 + eta) EQE_lower,measured - eta EQE_upper

    Parameters
    ----------
    eqe_upper : array_like
        The upper subcell's EQE per wavelength [-] (measured with the upper subcell limiting:
        the lower subcell's own emission lies below the upper's gap and does not couple back).
    eqe_lower_measured : array_like
        The lower subcell's measured EQE per wavelength [-], under bias light that leaves it
        limiting, the string at short circuit.
    efficiency : float or array_like
        eta of :func:`differential_coupling_efficiency` at the upper subcell's operating point
        during the lower subcell's measurement.

    Notes
    -----
    Assumptions (first order in the probe): the lower subcell limits and its current does not
    change with its (reverse) voltage; the upper subcell is forward-biased, so of the probe
    current it generates, q Phi EQE_upper, all that does not leave as extra string current x
    recombines in it, and a fraction eta of that reaches the lower subcell. The string's extra
    current is then x = q Phi EQE_lower + eta (q Phi EQE_upper - x), and the measured EQE
    x / (q Phi) = (EQE_lower + eta EQE_upper) / (1 + eta), which this inverts. Coupling between
    more than two subcells, a shunted lower subcell (its current follows its voltage) and a
    non-linear probe response are outside it.
    """
    eta = np.asarray(efficiency, dtype=float)
    return (1.0 + eta) * np.asarray(eqe_lower_measured, dtype=float) - eta * np.asarray(
        eqe_upper, dtype=float)


# --------------------------------------------------------------------------------------------
# emission of an upper subcell into the layers below it (layer stacks)

#: Gauss-Legendre nodes over the cosine of the emission angle (the angular integrand is smooth:
#: 16 nodes resolve it to 1e-8 of the emission against scipy quad, tests/test_coupling_layers.py)
ANGLE_NODES = 16


@dataclass(frozen=True)
class DownwardEmission:
    """The radiative emission of an upper subcell into the layer below it, per unit of
    exp(qVj/kT), on an (energy, angle) grid (:func:`downward_emission`).

    Attributes
    ----------
    current_A_m2 : (E, K) ndarray
        q times the photon flux emitted into each cell of the grid [A/m^2] (the energy trapezoid
        weight and the angle quadrature weight included): its sum is the emission downward.
    transmitted : (E, K) ndarray
        Fraction of it that crosses the layers between the two subcells [-].
    sine_invariant : (E, K) ndarray
        n sin(theta), the same in every flat layer (Snell's law) [-].
    """

    current_A_m2: np.ndarray
    transmitted: np.ndarray
    sine_invariant: np.ndarray

    def cosine_in(self, index):
        """cos(theta) [-] in a layer of real index ``index`` (E,) or scalar (inside the cone)."""
        n = np.asarray(index, dtype=float).reshape(-1, 1)
        return np.sqrt(np.clip(1.0 - (self.sine_invariant / n) ** 2, 0.0, 1.0))


@functools.lru_cache(maxsize=8)
def _gauss_legendre(nodes):
    """numpy's Gauss-Legendre nodes and weights on [-1, 1], computed once per count (read-only)."""
    x, w = np.polynomial.legendre.leggauss(nodes)
    x.flags.writeable = False
    w.flags.writeable = False
    return x, w


def downward_emission(energy_eV, *, temperature_K, upper_index, upper_optical_depth,
                      path_indices=(), path_optical_depths=(), lower_index, nodes=ANGLE_NODES):
    """Radiative emission of an upper subcell downward, per unit of exp(qVj/kT), and the share
    of it that crosses the flat layers between it and the subcell below.

    The generalized Planck law (P. Wuerfel, J. Phys. C 15 (1982) 3967) with reciprocity: a slab
    with quasi-Fermi-level split qVj emits, into a direction inside it at cos(theta) = mu, the
    radiance 2 n_a^2 E^2 / (h^3 c^2) / (exp((E - qVj)/kT) - 1) times its absorptance for that
    direction, a = 1 - exp(-tau / mu) (tau the absorber's optical depth at normal incidence).
    For E - qVj >> kT that is exp(qVj/kT) times the radiance at Vj = 0 (the element law's
    J0,rad (exp(Vj/Vt) - 1), circuit/coupling.py), so the grid is at Vj = 0.

    Flat layers keep n sin(theta) (Snell), so only rays with n_a sin(theta) below the smallest
    index on the way down (the layers between and the lower subcell) reach the lower subcell:
    the escape cone mu >= sqrt(1 - (n_min / n_a)^2) (all of the hemisphere when n_min >= n_a).
    The rest is totally reflected back into the upper subcell (photon recycling; no frustrated
    transmission through thin low-index layers: a lower bound). Each layer between transmits
    exp(-tau_j / mu_j). Fresnel reflection at the (near index-matched) interfaces is left out.

    Parameters
    ----------
    energy_eV : (E,) array_like
        Photon energies [eV], increasing, covering the emission (about Eg - 0.25 to Eg + 0.5 eV).
    temperature_K : float
    upper_index, upper_optical_depth : (E,) array_like
        Real index [-] and band-to-band optical depth sum(alpha d) [-] of the upper absorber.
    path_indices, path_optical_depths : sequences of (E,) array_like
        Real index and optical depth (band-to-band and free carriers) of each layer between.
    lower_index : (E,) array_like
        Real index of the lower subcell's first layer [-].
    nodes : int
        Gauss-Legendre nodes in mu over the escape cone.

    Returns
    -------
    DownwardEmission
    """
    energy = np.asarray(energy_eV, dtype=float)
    n_a = np.asarray(upper_index, dtype=float) * np.ones_like(energy)
    n_min = np.asarray(lower_index, dtype=float) * np.ones_like(energy)
    for n in path_indices:
        n_min = np.minimum(n_min, np.asarray(n, dtype=float))
    mu_cone = np.sqrt(np.clip(1.0 - (n_min / n_a) ** 2, 0.0, 1.0))
    x, w = _gauss_legendre(nodes)
    half = (0.5 * (1.0 - mu_cone))[:, None]
    mu = mu_cone[:, None] + half * (x + 1.0)
    mu_weight = half * w
    kt_eV = BOLTZMANN_EV_K * float(temperature_K)
    energy_J = energy * ELEMENTARY_CHARGE_C
    # 2 pi (azimuth) x radiance 2 n^2 E^2 / (h^3 c^2) / (exp(E/kT) - 1), per J -> per eV; the
    # polar integral of cos(theta) sin(theta) dtheta is the mu dmu of the quadrature
    radiance = (2.0 * n_a**2 * energy_J**2 / (PLANCK_J_S**3 * SPEED_OF_LIGHT_M_S**2)
                / np.expm1(energy / kt_eV)) * ELEMENTARY_CHARGE_C
    spectral = ELEMENTARY_CHARGE_C * 2.0 * np.pi * radiance          # A/m^2 per eV per (mu dmu)
    tau = np.asarray(upper_optical_depth, dtype=float).reshape(-1, 1)
    absorptance = -np.expm1(-tau / mu)
    trapezoid = np.concatenate([[0.5 * (energy[1] - energy[0])], 0.5 * (energy[2:] - energy[:-2]),
                                [0.5 * (energy[-1] - energy[-2])]])
    current = spectral[:, None] * absorptance * mu * mu_weight * trapezoid[:, None]
    sine = n_a[:, None] * np.sqrt(np.clip(1.0 - mu**2, 0.0, 1.0))
    emission = DownwardEmission(current, np.ones_like(current), sine)
    transmitted = np.ones_like(current)
    for n, depth in zip(path_indices, path_optical_depths):
        mu_j = emission.cosine_in(n)
        transmitted = transmitted * np.exp(-np.asarray(depth, dtype=float).reshape(-1, 1)
                                           / np.where(mu_j > 0, mu_j, 1e-300))
    return DownwardEmission(current, transmitted, sine)
