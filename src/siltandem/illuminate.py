"""The optics stage: a spectrum and a circuit -> the same circuit with each subcell's photocurrent.

At circuit level every subcell is a step absorber (gap, absorptance); light meets the subcells in
optical order (sun side first, whatever their string) and each passes on what it does not
absorb above its gap. Photon currents are recorded for the report: incident (all photons in the
table, as a current), absorbed by each subcell, and transmitted out of the back.
"""
import numpy as np

from .constants import ELEMENTARY_CHARGE_C
from .laws.optics import cumulative_below, step_absorber_photocurrents


def illuminate(circuit, spectrum):
    """Return ``circuit`` with photocurrents set and ``circuit.optics`` filled.

    Parameters
    ----------
    circuit : Circuit
    spectrum : Spectrum
        Already scaled to the concentration of the run.
    """
    if circuit.model is not None:
        from .layer_stage import illuminate_layers

        return illuminate_layers(circuit, spectrum)
    subcells = circuit.subcells
    wavelength, flux = spectrum.wavelength_nm, spectrum.photon_flux
    currents = step_absorber_photocurrents([s.gap_eV for s in subcells],
                                           [s.absorptance for s in subcells], wavelength, flux)
    incident = ELEMENTARY_CHARGE_C * cumulative_below(wavelength[-1], wavelength, flux)
    absorbed = {s.name: j for s, j in zip(subcells, currents)}
    optics = {
        "incident_A_m2": float(incident),
        "absorbed_A_m2": absorbed,
        "transmitted_A_m2": incident - np.sum(np.broadcast_arrays(*currents), axis=0),
        "parasitic_A_m2": {},
        "spectrum": spectrum,
    }
    # a subcell with a measured EQE (in the stack) collects q integral Phi EQE of the light on
    # the stack; its step absorptance still filters the light for the subcells below
    from .laws.spectral import quantum_efficiency_photocurrent

    currents = [quantum_efficiency_photocurrent(flux, wavelength_nm=wavelength,
                                                eqe_wavelength_nm=s.eqe_table[0],
                                                eqe=s.eqe_table[1]) * np.ones_like(j)
                if s.eqe_table is not None else j for s, j in zip(subcells, currents)]
    lit = [s.with_photocurrent(j) for s, j in zip(subcells, currents)]
    return circuit.with_elements(lit, optics=optics)
