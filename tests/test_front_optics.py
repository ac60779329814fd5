"""The coherent front: the coating and the thin layers above the first emitter (window, contact
layers) in one transfer-matrix calculation, on the first emitter as the semi-infinite substrate.

Checks against an independent transfer-matrix calculation written here, in another formulation
than the project's characteristic matrices: Fresnel interface matrices and phase propagation of the
forward and backward amplitudes (M. Born, E. Wolf, Principles of Optics, 7th ed. (1999), sec. 1.5
(Fresnel coefficients at normal incidence) and sec. 1.6 (stratified media); the net flux in a
layer from the amplitudes, Re[E H*]):
- the reflectance at every wavelength and the photon-weighted front reflectance (ASTM G173 AM1.5G
  through pvlib as the weight);
- the light entering the first emitter (the transmittance into the substrate) and the window's
  absorptance (the net flux entering it minus the flux leaving it);
- the photon budget still closes (to 1e-12 of the incident photon current).
The stack below is invented (layer values and coating indices made up, material data from the
library).
"""
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack, run_stack
from siltandem.laws import thinfilm
from siltandem.materials import load_material

# INVENTED DEMO DATA: a GaAs cell under a 25 nm AlInP window and a two-layer coating
STACK = '''[conditions]
spectrum = "am1.5g"
temperature_K = 300

{coatings}
[[layer]]
name = "window"
material = "AlInP"
composition = 0.5
thickness_nm = {window}
doping = "n:2e18"

[[layer]]
name = "cell emitter"
material = "GaAs"
thickness_nm = 100
doping = "n:2e18"
diffusion_length_um = 1.0
srv_cm_s = 1e3

[[layer]]
name = "cell base"
material = "GaAs"
thickness_nm = 2500
doping = "p:1e17"
diffusion_length_um = 5.0
srv_cm_s = 1e3
'''
COATINGS = '''[[coating]]
name = "low"
refractive_index = 1.38
thickness_nm = 100

[[coating]]
name = "high"
refractive_index = 2.3
thickness_nm = 50
'''


def amplitudes_tmm(wavelength_nm, indices, thicknesses_nm, ambient=1.0):
    """Reflection and the (forward, backward) amplitudes at the top of every film and of the
    substrate, by Fresnel interface matrices and propagation (Born & Wolf sec. 1.5-1.6), for unit
    incident amplitude. ``indices``: the films' then the substrate's N = n + i k."""
    media = [np.full_like(wavelength_nm, ambient, dtype=complex)] + [np.asarray(n, dtype=complex) for n in indices]
    # from the substrate upwards: (a, b) at the top of medium j from (a, b) at the top of j + 1
    a, b = np.ones_like(wavelength_nm, dtype=complex), np.zeros_like(wavelength_nm, dtype=complex)
    tops = [(a, b)]
    for j in range(len(media) - 2, -1, -1):
        upper, lower = media[j], media[j + 1]
        r, t = (upper - lower) / (upper + lower), 2 * upper / (upper + lower)
        # the interface: (a_up, b_up) = (1 / t) [[1, r], [r, 1]] (a_low, b_low) at the interface
        a, b = (a + r * b) / t, (r * a + b) / t
        if j > 0:       # propagate from the film's bottom to its top: a e^{-i delta}, b e^{+i delta}
            delta = 2 * np.pi * upper * thicknesses_nm[j - 1] / wavelength_nm
            a, b = a * np.exp(-1j * delta), b * np.exp(1j * delta)
        tops.append((a, b))
    tops = tops[::-1]                       # ambient, films..., substrate
    scale = tops[0][0]                      # unit incident amplitude
    tops = [(a / scale, b / scale) for a, b in tops]
    fluxes = [np.real((a + b) * np.conj(n * (a - b))) / ambient for (a, b), n in zip(tops, media)]
    return np.abs(tops[0][1]) ** 2, fluxes


def stack(tmp_path, coatings=COATINGS, window=25, name="s.toml"):
    path = Path(tmp_path) / name
    path.write_text(STACK.format(coatings=coatings, window=window))
    return load_stack(path)


def reference(model_layers, wavelength, coatings):
    window, emitter = (load_material(layer.material, layer.composition) for layer in model_layers[:2])
    t = 300.0

    def index(m):
        return thinfilm.complex_index(wavelength, refractive_index=m.refractive_index(wavelength),
                                      alpha_per_m=m.absorption_per_m(wavelength, temperature_K=t))
    indices = [np.full_like(wavelength, c.refractive_index + 1j * c.extinction, dtype=complex) for c in coatings]
    return amplitudes_tmm(wavelength, indices + [index(window), index(emitter)],
                          [c.thickness_nm for c in coatings] + [model_layers[0].thickness_nm])


@pytest.mark.parametrize("coatings", [COATINGS, ""], ids=["coated", "bare"])
def test_front_reflectance_against_an_independent_transfer_matrix(tmp_path, coatings):
    s = stack(tmp_path, coatings)
    result = run_stack(s, curve_points=40)
    optics = result.circuit.optics
    light = optics["layer_light"]
    wavelength = np.asarray(optics["spectrum"].wavelength_nm, dtype=float)
    flux = np.asarray(optics["spectrum"].photon_flux, dtype=float)
    reflectance, fluxes = reference(s.layers, wavelength, s.coatings)
    assert np.allclose(light.reflectance, reflectance, rtol=1e-9, atol=1e-12)
    # photon-weighted over the light the GaAs cell can use (up to its 1.42 eV edge, 873 nm)
    usable = wavelength <= 873.0
    ours = np.trapezoid(light.reflectance[usable] * flux[usable], wavelength[usable])
    theirs = np.trapezoid(reflectance[usable] * flux[usable], wavelength[usable])
    assert ours == pytest.approx(theirs, rel=1e-9)
    # the light entering the emitter, and the window's absorptance (net flux in minus out)
    n_coat = len(s.coatings)
    entering = fluxes[-1]
    window_absorbed = fluxes[n_coat + 1] - fluxes[n_coat + 2]
    assert np.allclose(light.budget.downward_at_top[1], entering * flux, rtol=1e-9, atol=1e-12 * flux.max())
    assert np.allclose(light.budget.absorbed[0], window_absorbed * flux, rtol=1e-8, atol=1e-12 * flux.max())
    assert optics["budget_error_relative"] < 1e-12


def test_a_thick_layer_above_the_emitter_stays_incoherent(tmp_path):
    # a 2 um window is thicker than sunlight's coherence length: the front is the coating alone on
    # the window as the substrate (the layers' Beer-Lambert treatment), as before this change
    s = stack(tmp_path, window=2000)
    result = run_stack(s, curve_points=40)
    optics = result.circuit.optics
    wavelength = np.asarray(optics["spectrum"].wavelength_nm, dtype=float)
    window = load_material("AlInP", 0.5)
    substrate = thinfilm.complex_index(wavelength, refractive_index=window.refractive_index(wavelength),
                                       alpha_per_m=window.absorption_per_m(wavelength, temperature_K=300.0))
    reflectance, _ = amplitudes_tmm(wavelength, [np.full_like(wavelength, c.refractive_index + 0j, dtype=complex)
                                                 for c in s.coatings] + [substrate],
                                    [c.thickness_nm for c in s.coatings])
    assert np.allclose(optics["layer_light"].reflectance, reflectance, rtol=1e-9, atol=1e-12)
    assert optics["budget_error_relative"] < 1e-12


@pytest.mark.parametrize("name", ["demo_triple_layers.toml", "demo_dual_layers.toml", "demo_placements.toml"])
def test_the_demo_budgets_still_close(name):
    root = Path(__file__).resolve().parents[1]
    optics = run_stack(load_stack(root / "stacks" / name), curve_points=30).circuit.optics
    assert optics["budget_error_relative"] < 1e-12
