"""The layer-stack yield year on linear optics, and the yield ranking of layer designs.

The layer optics and collection are linear in the incident photon flux (Beer-Lambert attenuation
and the closed-form collection laws scale with it: Hovel, Semiconductors and Semimetals vol. 11,
1975, ch. 2; Green, Solar Cells, 1982, ch. 5), so a photocurrent computed from the response per
photon equals the one of the spectrum passed through the layers to rounding (rel 1e-12: a few
hundred summed terms, double precision). The response per photon is q times the external quantum
efficiency, which photon conservation bounds by q (no multiple-exciton generation in these
materials).
"""
from pathlib import Path

import numpy as np
import pvlib
import pytest
from scipy import constants

from siltandem import load_stack
from siltandem.circuit.compile import compile_stack
from siltandem.materials import weather as weather_files
from siltandem.materials.spectra import get_spectrum
from siltandem.optics.layers import (layer_collection, layer_collection_by_temperature,
                                     layer_photocurrents, layer_photocurrents_by_temperature)
from siltandem.studies import yield_year as Y

ROOT = Path(__file__).resolve().parents[1]
WEATHER = Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"
DUAL = ROOT / "stacks" / "demo_dual_layers.toml"     # invented demo data: invariants only


@pytest.fixture(scope="module")
def weather():
    return weather_files.read_weather(WEATHER)


@pytest.fixture(scope="module")
def model():
    return compile_stack(load_stack(DUAL)).model


def test_response_per_photon_is_a_quantum_efficiency(model):
    # q * EQE: between 0 and q (photon conservation); some light is collected (a working cell)
    spectrum = get_spectrum("am1.5g")
    for response in layer_collection(model, spectrum.wavelength_nm):
        assert response.shape == spectrum.wavelength_nm.shape
        assert np.all(response >= 0) and np.all(response <= constants.e * (1 + 1e-12))
        assert response.max() > 0.5 * constants.e


def test_response_times_spectrum_equals_the_spectrum_through_the_layers(model):
    # linearity in the flux: AM1.5G and three scaled, reddened copies at three temperatures
    spectrum = get_spectrum("am1.5g")
    wavelength = spectrum.wavelength_nm
    tilt = np.linspace(0.5, 1.5, wavelength.size)
    flux = np.stack([spectrum.photon_flux, 0.3 * spectrum.photon_flux, 0.7 * tilt * spectrum.photon_flux])
    temperature = np.array([290.2, 310.7, 335.0])
    direct = layer_photocurrents_by_temperature(model, wavelength, flux, temperature)
    responses = layer_collection_by_temperature(model, wavelength, temperature)
    for want, response in zip(direct, responses):
        got = np.trapezoid(flux * response, wavelength, axis=-1)
        np.testing.assert_allclose(got, want, rtol=1e-12, atol=0)
    # at the model's own temperature: the single-spectrum optics of the main job
    for want, response in zip(layer_photocurrents(model, wavelength, spectrum.photon_flux),
                              layer_collection(model, wavelength)):
        assert float(np.trapezoid(spectrum.photon_flux * response, wavelength)) == \
            pytest.approx(float(want), rel=1e-12)


def test_layer_year_photocurrents_equal_each_hours_spectrum_through_the_layers(weather):
    # the year's hourly photocurrents (response per photon per 1 K bin) against every hour's
    # spectrum passed through the layers at its own bin's temperature
    stack = load_stack(DUAL)
    year = Y.annual_yield(stack, weather)
    light, hourly = year.light, year.hourly
    model = compile_stack(stack).model
    temperature = hourly["cell_temperature_C"].to_numpy() + 273.15
    # every hour (a bin's temperature is the mean of its hours), then 40 of them compared
    direct = layer_photocurrents_by_temperature(model, light.wavelength_nm, light.photon_flux, temperature)
    rows = np.linspace(0, len(hourly) - 1, 40).astype(int)
    for cell, want in zip(model.subcells, direct):
        got = hourly[f"{cell.name}.photocurrent_mA_cm2"].to_numpy()[rows]
        np.testing.assert_allclose(got, want[rows] / 10, rtol=1e-12, atol=0)   # A/m2 -> mA/cm2


def test_energy_by_value_takes_layer_stacks(weather):
    # each value's energy equals a yield year of that layer design run on its own; a thicker top
    # base changes the year's energy (the optics move)
    from siltandem.studies.matching import energy_by_value
    from siltandem.studies.sweep import Variation, layer_design, design_table

    stack = load_stack(DUAL)
    variation = Variation("top base", "thickness_nm", np.array([400.0, 900.0]))
    table = design_table([variation])
    energies = energy_by_value(stack, variation, table, weather=weather)
    alone = Y.annual_yield(layer_design(stack, {"top base.thickness_nm": 900.0}), weather)
    assert energies[-1] == pytest.approx(alone.summary["annual_energy_kWh_m2"], rel=1e-12)
    assert energies[0] != pytest.approx(energies[1], rel=1e-6)
