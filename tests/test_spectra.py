"""Reference spectra through pvlib, user CSV spectra, exact step-absorber photocurrents."""
import numpy as np
import pytest

from siltandem import StackError
from siltandem.laws.optics import cumulative_below, step_absorber_photocurrents
from siltandem.materials.spectra import get_spectrum


@pytest.mark.parametrize("name, published", [
    ("am1.5g", 1000.4),   # ASTM G173-03: global tilt 37 deg, 1000.4 W/m2
    ("am1.5d", 900.1),    # ASTM G173-03: direct + circumsolar, 900.1 W/m2
    ("am0", 1348.0),      # ASTM G173-03 extraterrestrial column, about 1348.0 W/m2
])
def test_astm_g173_totals(name, published):
    spectrum = get_spectrum(name)
    assert spectrum.integral_W_m2 == pytest.approx(published, abs=0.1)


def test_efficiency_reference_irradiance_is_the_standard_nominal():
    # IEC 60904-3 / ASTM G173-03: AM1.5G reference irradiance 1000 W/m2
    assert get_spectrum("am1.5g").irradiance_W_m2 == 1000.0
    assert get_spectrum("am1.5g", suns=10).irradiance_W_m2 == pytest.approx(10000.0)
    # tables without a nominal value are quoted against their own integral
    am0 = get_spectrum("am0")
    assert am0.irradiance_W_m2 == am0.integral_W_m2


@pytest.mark.parametrize("name, gap, expected", [
    # ../shared/REFERENCES.md (R: independent detailed-balance calculation on ASTM G173-03)
    ("am1.5g", 1.12, 43.81), ("am1.5g", 1.34, 35.03), ("am1.5g", 1.42, 32.05),
    ("am1.5d", 1.12, 39.39), ("am1.5d", 1.42, 28.31),
])
def test_maximum_photocurrent_above_gap(name, gap, expected):
    spectrum = get_spectrum(name)
    (current,) = step_absorber_photocurrents([gap], [1.0], spectrum.wavelength_nm,
                                             spectrum.photon_flux)
    # 0.02 mA/cm2 (0.07 %): how the partial wavelength interval at the gap is treated
    assert current / 10 == pytest.approx(expected, abs=0.02)


def test_exact_partial_interval_matches_a_refined_trapezoid(am15g):
    # independent method: interpolate the piecewise-linear flux onto a very fine grid
    lam, flux = am15g.wavelength_nm, am15g.photon_flux
    for limit in (652.3, 873.1, 1107.04):
        fine = np.linspace(lam[0], limit, 2_000_001)
        reference = np.trapezoid(np.interp(fine, lam, flux), fine)
        assert cumulative_below(limit, lam, flux) == pytest.approx(reference, rel=1e-7)


def test_filtering_conserves_photons(am15g):
    # a stack of full absorbers absorbs exactly what a single absorber of the lowest gap does
    top, middle, bottom = step_absorber_photocurrents([1.9, 1.4, 1.1], [1, 1, 1],
                                                      am15g.wavelength_nm, am15g.photon_flux)
    (single,) = step_absorber_photocurrents([1.1], [1], am15g.wavelength_nm, am15g.photon_flux)
    assert top + middle + bottom == pytest.approx(single, rel=1e-12)
    # a half-transparent top passes half its band to the next cell
    half_top, rest = step_absorber_photocurrents([1.9, 1.4], [0.5, 1.0], am15g.wavelength_nm,
                                                 am15g.photon_flux)
    (full_top,) = step_absorber_photocurrents([1.9], [1.0], am15g.wavelength_nm,
                                              am15g.photon_flux)
    (down_to_14,) = step_absorber_photocurrents([1.4], [1.0], am15g.wavelength_nm,
                                                am15g.photon_flux)
    assert half_top == pytest.approx(0.5 * full_top, rel=1e-12)
    assert rest == pytest.approx(down_to_14 - half_top, rel=1e-12)


def test_batched_photocurrents_have_batch_shape(am15g):
    gaps = np.linspace(1.5, 2.0, 7).reshape(-1, 1)
    top, bottom = step_absorber_photocurrents([gaps, 1.12], [1.0, 1.0], am15g.wavelength_nm,
                                              am15g.photon_flux)
    assert top.shape == bottom.shape == (7, 1)
    assert np.all(np.diff(top[:, 0]) < 0) and np.all(np.diff(bottom[:, 0]) > 0)


def test_suns_scale_the_table():
    one, ten = get_spectrum("am1.5g"), get_spectrum("am1.5g", suns=10)
    assert ten.integral_W_m2 == pytest.approx(10 * one.integral_W_m2, rel=1e-12)


def test_user_csv_relative_to_a_folder(tmp_path):
    (tmp_path / "flat.csv").write_text("wavelength_nm,irradiance_W_m2_nm\n400,1.0\n1200,1.0\n")
    spectrum = get_spectrum("flat.csv", relative_to=tmp_path)
    assert spectrum.integral_W_m2 == pytest.approx(800.0)


@pytest.mark.parametrize("text, message", [
    ("lambda,irr\n400,1\n500,1\n", "first column is 'lambda'"),
    ("wavelength_nm,irradiance_W_m2_nm\n400,1\n", "only 1 data row"),
    ("wavelength_nm,irradiance_W_m2_nm\n400,1\n390,1\n", "not increasing"),
    ("wavelength_nm,irradiance_W_m2_nm\n-5,1\n500,1\n", "not positive"),
    ("wavelength_nm,irradiance_W_m2_nm\n400,1\n500,-1\n", "negative irradiance"),
    ("wavelength_nm,irradiance_W_m2_nm\n400,abc\n500,1\n", "not numbers"),
    ("wavelength_nm,a,b\n400,1,2\n500,1,2\n", "cannot tell the irradiance column"),
])
def test_malformed_csv_messages(tmp_path, text, message):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    with pytest.raises(StackError, match=message) as info:
        get_spectrum(str(path))
    assert info.value.file == str(path) and info.value.fix


def test_unknown_spectrum_name_suggests():
    with pytest.raises(StackError, match=r"unknown spectrum 'am1.5x'.*\n.*did you mean"):
        get_spectrum("am1.5x")


def test_missing_csv():
    with pytest.raises(StackError, match="spectrum file not found"):
        get_spectrum("nowhere/none.csv")


def test_a_spectrum_per_micrometre_read_as_per_nm_is_refused(tmp_path):
    """ASTM G173 global (pvlib's copy) written in W/m2/um on an nm grid totals about 1e6 W/m2,
    a thousand times the standard's 1000 W/m2 (ASTM G173-03): refused with the unit named, as a
    CSV and as a pandas Series; the same table in W/m2/nm is accepted."""
    import pandas as pd
    import pvlib

    table = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")["global"]
    per_um = table * 1000.0
    path = tmp_path / "per_um.csv"
    pd.DataFrame({"wavelength_nm": per_um.index, "irradiance_W_m2_nm": per_um.to_numpy()}).to_csv(
        path, index=False)
    with pytest.raises(StackError, match="per micrometre") as raised:
        get_spectrum(str(path))
    assert "1e-3" in raised.value.fix
    with pytest.raises(StackError, match="per micrometre"):
        get_spectrum(per_um)
    assert abs(get_spectrum(table).integral_W_m2 - 1000.4) < 1.0     # ASTM G173-03: 1000.4 W/m2
