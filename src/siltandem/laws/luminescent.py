"""Luminescent coupling in measured subcell EQEs (pure functions, no files).

When a lower subcell's EQE is measured in a series multi-junction under the usual light-bias
method (bias light that leaves the lower subcell limiting, the string at short circuit, a chopped
monochromatic probe), the upper subcell is in current excess and forward-biased: the probe
photons it absorbs cannot leave as current, so they recombine, and the radiative part of that
extra recombination reaches the lower subcell as photocurrent. The lower subcell's measured EQE
then shows a spurious response where the upper subcell absorbs (D. J. Friedman, J. F. Geisz,
M. A. Steiner, IEEE J. Photovolt. 3 (2013) 1429, from memory).
"""
import numpy as np

from siltandem.constants import thermal_voltage_V


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
