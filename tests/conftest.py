"""Shared helpers for the tests: build detailed-balance strings the way the pipeline does."""
import numpy as np
import pytest

from siltandem.circuit.elements import Subcell, batch
from siltandem.laws.optics import step_absorber_photocurrents
from siltandem.materials.spectra import get_spectrum


@pytest.fixture(scope="session")
def am15g():
    return get_spectrum("am1.5g")


def radiative_cells(gaps, spectrum, absorptances=None):
    """Detailed-balance subcells (ERE 1, step absorptance) lit in optical order."""
    gaps = [np.asarray(g, dtype=float) for g in gaps]
    absorptances = absorptances or [1.0] * len(gaps)
    currents = step_absorber_photocurrents(gaps, absorptances, spectrum.wavelength_nm,
                                           spectrum.photon_flux)
    return [Subcell(f"cell{i}", batch(g), absorptance=batch(a)).with_photocurrent(j)
            for i, (g, a, j) in enumerate(zip(gaps, absorptances, currents))]


@pytest.fixture(scope="session")
def summer_days():
    """About a week of June of pvlib's bundled TMY3 file 723170TYA.CSV (hourly rows 3900-4068:
    some 100 hours with light), for tests that compare two ways of solving a year's hours."""
    from dataclasses import replace
    from pathlib import Path

    import pvlib

    from siltandem.materials import weather as weather_files

    weather = weather_files.read_weather(Path(pvlib.__file__).parent / "data" / "723170TYA.CSV")
    return replace(weather, data=weather.data.iloc[3900:4068])
