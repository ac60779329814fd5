"""Silicon optical data, free-carrier absorption, haze and the temperature of the layer optics.

Checks, with their sources:

* the Si table is M. A. Green, Sol. Energy Mater. Sol. Cells 92 (2008) 1305 at his 10 nm points:
  n and alpha = 4 pi k / lambda, spot values typed here from the CC0 refractiveindex.info copy
  (database/data-nk/main/Si/Green-2008.yml), and every row of the stored CSV round-trips;
* the weak tail: nonzero and falling from 1110 to 1450 nm (Green's table);
* temperature: a Si cell's dJsc/dT > 0 and dVoc/dT near -2 mV/K (from memory: M. A. Green, Prog.
  Photovolt. 11 (2003) 333 gives about -2 mV/K for Si cells and a small positive Jsc coefficient);
* free-carrier absorption against the printed form of D. K. Schroder, R. N. Thomas, J. C. Swartz,
  IEEE Trans. Electron Devices 25 (1978) 254 (from memory) at one doping and wavelength; parasitic
  in the photon budget and the spectral table;
* haze: 0 is the flat result and 1 the ideally scattering one, bit for bit; the budget closes.
"""
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack, run_stack
from siltandem.errors import StackError
from siltandem.laws.haze import free_carrier_absorption_per_m, hazy_layer_absorption
from siltandem.laws.thinfilm import ThinFilmInputError, layer_absorption
from siltandem.materials import load_material
from siltandem.optics.layers import layer_photocurrents, layer_photocurrents_by_temperature

ROOT = Path(__file__).resolve().parents[1]
CSV = ROOT / "src" / "siltandem" / "materials" / "si_green2008.csv"

# Green 2008 (CC0 refractiveindex.info copy): wavelength nm -> (n, k)
GREEN_2008 = {250: (1.665, 3.665), 600: (3.940, 1.9934e-2), 1000: (3.572, 5.0930e-4),
              1110: (3.540, 2.3849e-5), 1200: (3.520, 2.1008e-7), 1450: (3.485, 1.3846e-13)}


def test_green_2008_spot_values():
    si = load_material("Si")
    lam = np.array(list(GREEN_2008), dtype=float)
    n, k = np.array(list(GREEN_2008.values())).T
    np.testing.assert_allclose(si.absorption_per_m(lam), 4 * np.pi * k / (lam * 1e-9), rtol=1e-12)
    np.testing.assert_allclose(si.refractive_index(lam), n, rtol=1e-12)


def test_green_2008_table_round_trips():
    rows = np.loadtxt(CSV, delimiter=",", comments="#", skiprows=0, dtype=str)
    assert list(rows[0]) == ["wavelength_nm", "n", "k"]
    lam, n, k = rows[1:].astype(float).T
    assert lam[0] == 250 and lam[-1] == 1450 and np.all(np.diff(lam) == 10)   # his own 10 nm steps
    si = load_material("Si")
    np.testing.assert_allclose(si.absorption_per_m(lam), 4 * np.pi * k / (lam * 1e-9), rtol=1e-12)
    np.testing.assert_allclose(si.refractive_index(lam), n, rtol=1e-12)
    # between his points: linear in ln(alpha), so inside the two neighbours
    mid = si.absorption_per_m(lam[:-1] + 5.0)
    low = np.minimum(si.absorption_per_m(lam[:-1]), si.absorption_per_m(lam[1:]))
    high = np.maximum(si.absorption_per_m(lam[:-1]), si.absorption_per_m(lam[1:]))
    assert np.all((mid >= low * (1 - 1e-12)) & (mid <= high * (1 + 1e-12)))


def test_weak_tail_nonzero_to_1450_nm():
    # issue 16: the old library was zero from about 1175 nm; Green's table has alpha > 0 to 1450 nm
    si = load_material("Si")
    lam = np.arange(1110.0, 1451.0, 10.0)
    alpha = si.absorption_per_m(lam)
    assert np.all(alpha > 0)
    assert np.all(np.diff(alpha) < 0)
    assert alpha[lam == 1200][0] / 100 == pytest.approx(4 * np.pi * 2.1008e-7 / 1.2e-4, rel=1e-12)


def test_absorption_rises_with_temperature_near_the_edge():
    # the edge moves to lower energy as the gap shrinks (Varshni law of si.toml): alpha(T) rises,
    # most at the weak tail (Green's temperature coefficients are not used: see si.toml)
    si = load_material("Si")
    lam = np.array([600.0, 900.0, 1000.0, 1100.0, 1200.0])
    ratio = si.absorption_per_m(lam, 330.0) / si.absorption_per_m(lam, 300.0)
    assert np.all(ratio > 1)
    assert np.all(np.diff(ratio) > 0)


SILICON_CELL = """# INVENTED test cell (common practice values, no source): a 160 um Si cell
[conditions]
temperature_K = 298.15
[optics]
back_reflectance = 0.95
back_scattering = "lambertian"
{extra}
[[layer]]
name = "emitter"
material = "Si"
thickness_nm = 500
doping = "n:1e19"
diffusion_length_um = 1.0
srv_cm_s = 1e3
[[layer]]
name = "base"
material = "Si"
thickness_nm = 160000
doping = "p:1e16"
diffusion_length_um = 800
srv_cm_s = 10
"""


def _cell(tmp_path, extra="", name="si.toml"):
    path = tmp_path / name
    path.write_text(SILICON_CELL.format(extra=extra))
    return load_stack(path)


def test_silicon_cell_temperature_coefficients(tmp_path):
    stack = _cell(tmp_path)
    cold = run_stack(stack, temperature_K=298.15, curve_points=60).summary
    warm = run_stack(stack, temperature_K=323.15, curve_points=60).summary
    djsc = (warm["jsc_mA_cm2"] - cold["jsc_mA_cm2"]) / 25.0
    dvoc = (warm["voc_V"] - cold["voc_V"]) / 25.0
    # from memory (M. A. Green, Prog. Photovolt. 11 (2003) 333): Jsc rises slightly with temperature
    # (of order +0.03 %/K), Voc falls by about 2 mV/K for a Si cell
    assert djsc > 0
    assert 0.0 < djsc / cold["jsc_mA_cm2"] * 100 < 0.1
    assert -2.6e-3 < dvoc < -1.6e-3
    # the relative temperature coefficient of a Si cell's efficiency lies within about -0.30 to
    # -0.45 %/K (published range for crystalline Si cells, from memory); measured -0.39 %/K with
    # Schenk's band-gap narrowing (issue 16)
    deta = (warm["efficiency_pct"] - cold["efficiency_pct"]) / 25.0 / cold["efficiency_pct"] * 100
    assert -0.45 < deta < -0.30


def test_free_carrier_absorption_against_schroder():
    # Schroder et al. 1978 (from memory): alpha_FCA = 1e-18 n lambda^2 + 2.7e-18 p lambda^2 [cm^-1],
    # lambda in um; n = 1e19 cm^-3 at 1.2 um: 14.4 cm^-1; p = 1e19 cm^-3: 38.9 cm^-1
    si = load_material("Si")
    assert si.free_carrier_absorption_per_m(1200.0, electron_density_m3=1e25) / 100 == pytest.approx(14.4, rel=1e-12)
    assert si.free_carrier_absorption_per_m(1200.0, hole_density_m3=1e25) / 100 == pytest.approx(38.88, rel=1e-12)
    assert not load_material("GaAs").has_free_carrier_absorption
    assert np.all(load_material("GaAs").free_carrier_absorption_per_m([900.0, 1200.0], electron_density_m3=1e25) == 0)
    assert free_carrier_absorption_per_m(1000.0, electron_density_m3=0.0, electron_coefficient_cm2=1.0,
                                         electron_exponent=2.0, hole_coefficient_cm2=1.0, hole_exponent=2.0) == 0


def test_free_carriers_are_parasitic_in_budget_and_table(tmp_path):
    result = run_stack(_cell(tmp_path), curve_points=60)
    optics = result.circuit.optics
    parasitic = optics["parasitic_A_m2"]
    assert set(parasitic) == {"emitter free carriers", "base free carriers"}
    assert parasitic["emitter free carriers"] > parasitic["base free carriers"] > 0   # 1e19 against 1e16
    assert optics["budget_error_relative"] < 1e-12
    table = result.spectral_table()
    columns = [c for c in table.columns if c.endswith(".absorptance")]
    assert columns == ["emitter.absorptance", "emitter free carriers.absorptance", "base.absorptance",
                       "base free carriers.absorptance"]
    total = table["reflectance"] + table["transmittance"] + table[columns].sum(axis=1)
    assert np.max(np.abs(total - 1)) < 1e-12
    # beyond the gap (1500 nm) only free carriers absorb; the cell collects nothing there
    far = table["wavelength_nm"] == 1500.0
    assert float(table.loc[far, "emitter.absorptance"].iloc[0]) == 0.0
    assert float(table.loc[far, "emitter free carriers.absorptance"].iloc[0]) > 0
    assert float(table.loc[far, "Si cell.eqe"].iloc[0]) == 0
    bands = {row["band"]: row for row in result.summary["spectral_bands"]}
    assert bands["emitter free carriers"]["kind"] == "parasitic"


# ----------------------------------------------------------------------------------------------- haze
KWARGS = dict(alpha_per_m=[np.array([3e4, 3e3, 10.0, 0.1]), np.array([5e3, 300.0, 1.0, 1e-3])],
              thicknesses_m=[1e-6, 160e-6], front_reflectance=0.1, back_reflectance=0.95,
              front_internal_reflectance=0.1, trapping_index=3.5)


@pytest.mark.parametrize("back, front", [("specular", "specular"), ("lambertian", "specular"),
                                         ("specular", "lambertian"), ("lambertian", "lambertian")])
def test_haze_zero_and_one_are_the_pure_cases(back, front):
    pure = layer_absorption(1.0, back_scattering=back, front_scattering=front, **KWARGS)
    hazy = hazy_layer_absorption(1.0, back_haze=float(back == "lambertian"),
                                 front_haze=float(front == "lambertian"), **KWARGS)
    for a, b in zip(pure, hazy):
        assert np.array_equal(a, b)


@pytest.mark.parametrize("back, front", [(0.5, 0.0), (0.0, 0.3), (0.7, 0.4), (1e-9, 1 - 1e-9)])
def test_hazy_budget_closes_and_lies_between(back, front):
    rng = np.random.default_rng(7)
    flux = rng.uniform(0.5, 2.0, 4)
    budget = hazy_layer_absorption(flux, back_haze=back, front_haze=front, **KWARGS)
    total = budget.reflected + budget.absorbed.sum(axis=0) + budget.escaped + budget.transmitted
    assert np.max(np.abs(total - flux) / flux) < 1e-12
    cases = [layer_absorption(flux, back_scattering=b, front_scattering=f, **KWARGS).absorbed.sum(axis=0)
             for b in ("specular", "lambertian") for f in ("specular", "lambertian")]
    got = budget.absorbed.sum(axis=0)
    assert np.all(got >= np.min(cases, axis=0) - 1e-15) and np.all(got <= np.max(cases, axis=0) + 1e-15)


def test_haze_bad_values():
    with pytest.raises(ThinFilmInputError, match="'back_haze' = 1.5 is outside"):
        hazy_layer_absorption(1.0, back_haze=1.5, **KWARGS)


def test_haze_keys_on_a_stack(tmp_path):
    ideal = run_stack(_cell(tmp_path, "", "a.toml"), curve_points=60).summary["jsc_mA_cm2"]
    one = run_stack(_cell(tmp_path, "back_haze = 1.0", "b.toml"), curve_points=60).summary["jsc_mA_cm2"]
    half = run_stack(_cell(tmp_path, "back_haze = 0.5", "c.toml"), curve_points=60)
    zero = run_stack(_cell(tmp_path, "back_haze = 0.0", "d.toml"), curve_points=60).summary["jsc_mA_cm2"]
    flat = (tmp_path / "e.toml")
    flat.write_text(SILICON_CELL.format(extra="").replace('back_scattering = "lambertian"\n', ""))
    specular = run_stack(load_stack(flat), curve_points=60).summary["jsc_mA_cm2"]
    assert one == ideal and zero == specular
    assert specular < half.summary["jsc_mA_cm2"] < ideal
    assert half.circuit.optics["budget_error_relative"] < 1e-12
    bad = tmp_path / "f.toml"
    bad.write_text(SILICON_CELL.format(extra="back_haze = 0.5").replace('back_scattering = "lambertian"\n', ""))
    with pytest.raises(StackError, match="back_haze is given but back_scattering is not"):
        load_stack(bad)


# --------------------------------------------------------------------------- temperature of the year
def test_layer_optics_follow_each_rows_temperature(tmp_path):
    from dataclasses import replace

    from siltandem.circuit.compile import compile_stack
    from siltandem.materials.spectra import get_spectrum

    model = compile_stack(_cell(tmp_path)).model
    spectrum = get_spectrum("am1.5g")
    flux = np.tile(spectrum.photon_flux, (3, 1))
    temperature = np.array([280.0, 300.2, 345.0])
    binned = layer_photocurrents_by_temperature(model, spectrum.wavelength_nm, flux, temperature)[0]
    for row, t in enumerate(temperature):
        direct = layer_photocurrents(replace(model, temperature_K=t), spectrum.wavelength_nm, flux[row])[0]
        assert binned[row] == pytest.approx(float(direct), rel=1e-12)      # one row per bin: its own T
    assert binned[0] < binned[1] < binned[2]
