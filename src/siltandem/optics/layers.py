"""Light through a layer stack: the coating by characteristic matrices, Beer-Lambert in every
layer with an optional back mirror (flat or ideally scattering, and an optionally textured front:
light trapping, laws/thinfilm.py), collection by each subcell's layers, and the photon budget.

The layer model comes from circuit.from_layers (compile_layer_stack); see its docstring.
"""
from dataclasses import dataclass

import numpy as np

from siltandem import units
from siltandem.laws import collection
from siltandem.laws import thinfilm


@dataclass(frozen=True)
class LayerLight:
    """One pass of light through a layer model (shared by the stage and the yield year)."""

    alphas: list
    reflectance: np.ndarray
    coating_absorbed: np.ndarray
    budget: object
    collected: list          # per subcell: CollectedPhotocurrent, per nm


def layer_light(model, wavelength, flux):
    """Coating, Beer-Lambert in every layer, collection of every subcell; flux (..., M).

    The grid shades ``model.shading_fraction`` f of the front: the light entering the stack is
    (1 - f) of ``flux``, and the reflectance and coating absorptance, fractions of the incident
    light, are (1 - f) of the open area's."""
    temperature = model.temperature_K
    open_area = 1.0 - model.shading_fraction
    flux = flux * open_area
    alphas = [np.asarray(m.absorption_per_m(wavelength, temperature_K=temperature), dtype=float)
              for m in model.materials]
    thicknesses = [layer.thickness_nm * 1e-9 for layer in model.layers]
    top = model.materials[0]
    substrate = thinfilm.complex_index(wavelength, refractive_index=top.refractive_index(wavelength),
                                       alpha_per_m=alphas[0])
    coatings = model.coatings
    response = thinfilm.coating_response(
        wavelength, substrate_index=substrate,
        coating_indices=[c.refractive_index + 1j * c.extinction for c in coatings],
        coating_thicknesses_nm=[c.thickness_nm for c in coatings],
        ambient_index=model.ambient_index)
    reflectance = np.asarray(response.reflectance, dtype=float)
    transmittance = np.asarray(response.transmittance, dtype=float)
    coating_absorbed = np.asarray(response.absorptance, dtype=float).reshape(len(coatings), -1) \
        if coatings else np.zeros((0, wavelength.size))
    # light returning from inside sees the front surface as reflecting as much as from outside
    # (a lossless coating reflects alike from both sides: H. A. Macleod, Thin-Film Optical
    # Filters, ch. 2)
    trapping = {}
    if (model.back_scattering, model.front_scattering) != ("specular", "specular"):
        # scattered light: ideal Lambertian surfaces, the escape cone of the bottom layer's index
        # (Snell through flat layers: n sin theta is kept, so the cone into the ambient is set by
        # the medium the light is scattered in), generation uniform in each subcell
        trapping = dict(back_scattering=model.back_scattering, front_scattering=model.front_scattering,
                        trapping_index=model.materials[-1].refractive_index(wavelength),
                        ambient_index=model.ambient_index)
    budget = thinfilm.layer_absorption(flux, alpha_per_m=alphas, thicknesses_m=thicknesses,
                                       front_reflectance=1.0 - transmittance,
                                       back_reflectance=model.back_reflectance,
                                       front_internal_reflectance=reflectance
                                       if model.back_reflectance > 0 else 0.0, **trapping)
    collected = [collection.collected_photocurrent(
        alphas[cell.emitter], photon_flux_m2_s=budget.downward_at_top[cell.emitter],
        emitter_thickness_m=cell.emitter_thickness_m,
        emitter_diffusion_length_m=cell.emitter_length_m,
        emitter_diffusivity_m2_s=cell.emitter_diffusivity_m2_s,
        front_srv_m_s=cell.front_srv_m_s, depletion_width_m=cell.depletion_width_m,
        base_thickness_m=cell.base_thickness_m, base_diffusion_length_m=cell.base_length_m,
        base_diffusivity_m2_s=cell.base_diffusivity_m2_s, back_srv_m_s=cell.back_srv_m_s,
        back_photon_flux_m2_s=budget.upward_at_bottom[cell.base],
        uniform_absorbed_m2_s=budget.scattered_absorbed[cell.emitter]
        + budget.scattered_absorbed[cell.base] if trapping else 0.0, where=cell.name)
        for cell in model.subcells]
    return LayerLight(alphas, reflectance * open_area, coating_absorbed * open_area, budget,
                      collected)


def illuminate_layers(circuit, spectrum):
    """Light through the layers; photocurrents set, the photon budget in ``circuit.optics``."""
    model = circuit.model
    wavelength = spectrum.wavelength_nm
    flux = spectrum.photon_flux
    coatings = model.coatings
    light = layer_light(model, wavelength, flux)
    reflectance, coating_absorbed, budget = (light.reflectance, light.coating_absorbed,
                                             light.budget)

    def current(per_nm):
        """q * integral of a photon flux per nm over the table [A/m^2]."""
        return float(thinfilm.photon_current_A_m2(wavelength, per_nm))

    lit, absorbed, collected_by = [], {}, {}
    active = set()
    for cell, result in zip(model.subcells, light.collected):
        active.update({cell.emitter, cell.base})
        total = result.emitter_A_m2 + result.depletion_A_m2 + result.base_A_m2
        photocurrent = float(np.trapezoid(total, wavelength))
        absorbed[cell.name] = current(budget.absorbed[cell.emitter]
                                                            + budget.absorbed[cell.base])
        collected_by[cell.name] = {
            "emitter_mA_cm2": units.ma_cm2(float(np.trapezoid(result.emitter_A_m2, wavelength))),
            "depletion_mA_cm2": units.ma_cm2(float(np.trapezoid(result.depletion_A_m2,
                                                                wavelength))),
            "base_mA_cm2": units.ma_cm2(float(np.trapezoid(result.base_A_m2, wavelength)))}
        lit.append(circuit.element(cell.name).with_photocurrent(photocurrent))
    incident = current(flux)
    reflected = current(reflectance * flux + budget.escaped)
    transmitted = current(budget.transmitted)
    parasitic = {}
    for k, coating in enumerate(coatings):
        parasitic[f"coating {coating.name}"] = current(
            coating_absorbed[k] * flux)
    for j, layer in enumerate(model.layers):
        if j not in active:
            parasitic[layer.name] = current(budget.absorbed[j])
    if model.shading_fraction > 0:
        parasitic["grid shading"] = current(model.shading_fraction * flux)
    closure = incident - reflected - transmitted - sum(parasitic.values()) - sum(absorbed.values())
    optics = dict(circuit.optics)
    optics.update({
        "incident_A_m2": incident, "reflected_A_m2": reflected,
        "escaped_A_m2": current(budget.escaped),
        "transmitted_A_m2": transmitted, "parasitic_A_m2": parasitic,
        "absorbed_A_m2": absorbed, "collected_A_m2": collected_by,
        "budget_error_relative": abs(closure) / incident, "spectrum": spectrum,
        # the per-wavelength arrays of this pass, for the spectral table (result.spectral)
        "layer_light": light})
    return circuit.with_elements(lit, optics=optics)


def layer_photocurrents(model, wavelength_nm, flux):
    """Collected photocurrent [A/m^2] of every subcell of a layer model, for many spectra.

    ``flux`` is (..., M) on ``wavelength_nm`` (M,); returns a list (subcell order of the model)
    of arrays of shape ``flux.shape[:-1]``. Same optics as :func:`illuminate_layers`, with the
    layers' absorption at the model's temperature.
    """
    wavelength = np.asarray(wavelength_nm, dtype=float)
    light = layer_light(model, wavelength, np.asarray(flux, dtype=float))
    return [np.trapezoid(r.emitter_A_m2 + r.depletion_A_m2 + r.base_A_m2, wavelength, axis=-1)
            for r in light.collected]
