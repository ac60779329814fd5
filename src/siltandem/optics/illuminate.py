"""The optics stage: a spectrum and a circuit -> the same circuit with each subcell's photocurrent.

At circuit level every subcell is a step absorber (gap, absorptance); light meets the subcells in
optical order (sun side first, whatever their string) and each passes on what it does not
absorb above its gap. Photon currents are recorded for the report: incident (all photons in the
table, as a current), absorbed by each subcell, and transmitted out of the back.
"""
import numpy as np

from siltandem.constants import ELEMENTARY_CHARGE_C, HC_EV_NM
from siltandem.errors import StackError
from siltandem.laws.optics import cumulative_below, step_absorber_photocurrents


def illuminate(circuit, spectrum, reuse=None):
    """Return ``circuit`` with photocurrents set and ``circuit.optics`` filled.

    Parameters
    ----------
    circuit : Circuit
    spectrum : Spectrum
        Already scaled to the concentration of the run.
    reuse : dict, optional
        Kept between the designs of one layer study (optics.layers.layer_light): a layer
        material's absorption on the spectrum's grid is computed once.
    """
    if circuit.model is not None:
        from siltandem.optics.layers import illuminate_layers

        return illuminate_layers(circuit, spectrum, reuse)
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
    from siltandem.laws.spectral import quantum_efficiency_photocurrent

    currents = [quantum_efficiency_photocurrent(flux, wavelength_nm=wavelength,
                                                eqe_wavelength_nm=s.eqe_table[0],
                                                eqe=s.eqe_table[1]) * np.ones_like(j)
                if s.eqe_table is not None else j for s, j in zip(subcells, currents)]
    for s, j in zip(subcells, currents):
        if s.eqe_table is not None:
            check_eqe_current(s.name, s.eqe_file, j, s.gap_eV, wavelength, flux,
                              light=spectrum.name)
    lit = [s.with_photocurrent(j) for s, j in zip(subcells, currents)]
    return circuit.with_elements(lit, optics=optics)


#: relative margin of the photon bound below (rounding of the two trapezoid integrals)
EQE_BOUND_MARGIN = 1e-9


def check_eqe_current(name, path, current_A_m2, gap_eV, wavelength_nm, flux, *, light,
                      where=None):
    """Refuse a measured EQE that collects more current than the light has photons above the
    subcell's gap: each collected electron needs one absorbed photon of energy >= Eg.

    ``current_A_m2`` is q integral Phi EQE under ``flux`` (M,) on ``wavelength_nm``; ``light``
    names the spectrum for the message; ``path`` is the EQE file.
    """
    gap = np.asarray(gap_eV, dtype=float).reshape(-1)
    current = np.asarray(current_A_m2, dtype=float).reshape(-1)
    above = ELEMENTARY_CHARGE_C * cumulative_below(HC_EV_NM / gap, wavelength_nm, flux)
    over = current > above * (1 + EQE_BOUND_MARGIN)
    if np.any(over):
        k = int(np.flatnonzero(over)[0])
        raise StackError(
            f"the measured EQE collects {current[k] / 10:.4g} mA/cm2 under "
            f"{light}, more than the {above[k] / 10:.4g} mA/cm2 of photons above its gap "
            f"({gap[k]:.3f} eV, {HC_EV_NM / gap[k]:.0f} nm)", file=path,
            where=where or f"subcell {name!r}, key eqe",
            fix="check the EQE's wavelengths (nm) and scale (a fraction 0..1 of the photons on "
                "the stack, zero beyond the gap's wavelength), and the subcell's gap_eV")
