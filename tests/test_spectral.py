"""The spectral view of a layer stack (issue 16): ``run --spectral PATH.csv``, the summary's
``spectral_bands`` and the stacked-area figure.

Outside checks, each named beside its test:

* photon conservation: reflectance + transmittance + the sum of the absorptances = 1 at every
  wavelength (energy conservation in a passive medium, M. Born, E. Wolf, Principles of Optics,
  7th ed., sec. 1.5);
* the EQE integrated against the ASTM G173-03 global photon flux, read independently through pvlib
  (pvlib.spectrum.get_reference_spectra) and converted with scipy.constants (E lambda / (h c)),
  gives each subcell's photocurrent of the summary;
* where no layer absorbs (alpha = 0 in every layer: Beer-Lambert, A. Beer 1852) the EQE and every
  absorptance are 0, and a bare flat slab on a mirror reflects and transmits as the incoherent
  multiple-reflection sums of a lossless slab (Born & Wolf sec. 1.6; normal-incidence Fresnel
  reflectance, sec. 1.5.3);
* a Si slab with both surfaces ideally scattering absorbs M. A. Green's closed form (Prog.
  Photovolt. 10 (2002) 235, from memory; T = 2 E3(tau) by scipy.special.expn).
"""
import csv
import json
from pathlib import Path
import re

import numpy as np
import pytest
from scipy import constants
from scipy.special import expn

from siltandem import load_stack, run_stack
from siltandem.cli import main as cli

ROOT = Path(__file__).resolve().parents[1]
STACKS = ROOT / "stacks"

#: the spectral CSV is written with 10 significant digits (float_format "%.10g"); integrating
#: its EQE on the same ASTM G173 grid as the run (the trapezoid rule on the table's own points,
#: on both sides) reproduces a photocurrent to that rounding, well inside this relative tolerance
EQE_INTEGRAL_REL = 1e-8
#: the photon budget closes to rounding (laws.thinfilm.layer_absorption; README: 1e-12)
BUDGET_ABS = 1e-12

SILICON_SLAB = """# INVENTED test stack: a bare silicon wafer (no coating), emitter and base
[stack]
name = "bare silicon slab"
[optics]
{optics}
[[layer]]
name = "emitter"
material = "Si"
thickness_nm = 500
doping = "n:1e19"
diffusion_length_um = 2.0
srv_cm_s = 1e3
[[layer]]
name = "base"
material = "Si"
thickness_nm = 100000
doping = "p:1e16"
diffusion_length_um = 500
srv_cm_s = 10
"""


#: the demo triple's [optics] lines (an invented scattering rear), replaced by the tests' own
DEMO_OPTICS = 'back_reflectance = 0.9\nback_scattering = "lambertian"\n'


def _triple(tmp_path, optics="back_reflectance = 0.9\n", name="triple.toml"):
    """The invented demo triple (GaInP/GaAs on Si, two coatings), its [optics] replaced."""
    text = (STACKS / "demo_triple_layers.toml").read_text()
    path = tmp_path / name
    assert DEMO_OPTICS in text
    path.write_text(text.replace(DEMO_OPTICS, optics))
    return path


def _slab(tmp_path, optics):
    path = tmp_path / "slab.toml"
    path.write_text(SILICON_SLAB.format(optics=optics))
    return path


def _run_cli(argv, capsys):
    code = cli.main([str(a) for a in argv])
    out, err = capsys.readouterr()
    assert "Traceback" not in err
    return code, out, err


def _read_table(path):
    with open(path, encoding="utf-8") as handle:
        rows = list(csv.reader(line for line in handle if not line.startswith("# ")))
    header, body = rows[0], np.array(rows[1:], dtype=float)
    return header, {name: body[:, k] for k, name in enumerate(header)}


def _g173_photon_flux():
    """ASTM G173-03 global photon flux [m^-2 s^-1 nm^-1] on its own grid, through pvlib."""
    from pvlib.spectrum import get_reference_spectra

    table = get_reference_spectra(standard="ASTM G173-03")
    wavelength = table.index.to_numpy(dtype=float)
    irradiance = table["global"].to_numpy(dtype=float)
    return wavelength, irradiance * wavelength * 1e-9 / (constants.h * constants.c)


TRAPPING = {"specular": "back_reflectance = 0.9\n",
            "lambertian rear": 'back_reflectance = 0.9\nback_scattering = "lambertian"\n',
            "textured front, lambertian rear": 'back_reflectance = 0.95\nback_scattering = '
                                               '"lambertian"\nfront_scattering = "lambertian"\n',
            "hazy front and rear": 'back_reflectance = 0.95\nback_scattering = "lambertian"\nback_haze = 0.6\n'
                                   'front_scattering = "lambertian"\nfront_haze = 0.3\n'}


@pytest.fixture(scope="module", params=list(TRAPPING))
def written(request, tmp_path_factory):
    """The demo triple run with --spectral and --json under each back/front treatment."""
    folder = tmp_path_factory.mktemp("spectral")
    stack = _triple(folder, TRAPPING[request.param])
    code = cli.main(["run", str(stack), "--spectral", str(folder / "s.csv"), "--json",
                     str(folder / "r.json")])
    assert code == 0
    header, table = _read_table(folder / "s.csv")
    summary = json.loads((folder / "r.json").read_text())
    return request.param, header, table, summary


def test_header_and_units(written):
    _, header, table, summary = written
    layers = ["top window", "top emitter", "top base", "upper tunnel p", "upper tunnel n",
              "middle window", "middle emitter", "middle base", "lower tunnel p",
              "lower tunnel n", "nucleation", "silicon emitter", "silicon emitter free carriers",
              "silicon base", "silicon base free carriers"]     # doped Si: its free-carrier part apart
    assert header == (["wavelength_nm", "reflectance", "transmittance",
                       "coating upper coating.absorptance", "coating lower coating.absorptance"]
                      + [f"{name}.absorptance" for name in layers]
                      + ["top.eqe", "middle.eqe", "silicon.eqe"])
    # wavelengths in nm: the ASTM G173-03 grid as pvlib gives it (280-4000 nm)
    wavelength, _ = _g173_photon_flux()
    assert np.array_equal(table["wavelength_nm"], wavelength)
    # every other column a fraction of the incident photons, in [0, 1] up to rounding
    for name in header[1:]:
        assert np.all(table[name] >= -BUDGET_ABS) and np.all(table[name] <= 1 + BUDGET_ABS), name
    assert [row["band"] for row in summary["spectral_bands"] if row["kind"] == "parasitic"] == \
        [row["layer"] for row in summary["parasitic"]]


def test_photons_add_up_at_every_wavelength(written):
    # photon conservation (Born & Wolf sec. 1.5): R + T + sum A = 1, also where the spectrum has
    # no photons (G173 global is 0 at six points 2670-2760 nm) and with scattering surfaces
    _, header, table, _ = written
    total = table["reflectance"] + table["transmittance"] + sum(
        table[name] for name in header if name.endswith(".absorptance"))
    assert np.max(np.abs(total - 1)) < 1e-9          # 10 significant digits per cell
    # a subcell's EQE is at most what its emitter and base absorb
    for cell, layers in (("top", "top"), ("middle", "middle"), ("silicon", "silicon")):
        absorbed = table[f"{layers} emitter.absorptance"] + table[f"{layers} base.absorptance"]
        assert np.all(table[f"{cell}.eqe"] <= absorbed + 1e-9)


def test_eqe_times_g173_flux_gives_the_photocurrents(written):
    # q * trapezoid(EQE x G173 photon flux) with the flux from pvlib and scipy.constants, on the
    # G173 grid, against the summary's photocurrents (tolerance EQE_INTEGRAL_REL: CSV rounding)
    _, _, table, summary = written
    wavelength, flux = _g173_photon_flux()
    for row in summary["subcells"]:
        current = constants.e * np.trapezoid(table[f"{row['name']}.eqe"] * flux, wavelength) / 10
        assert current == pytest.approx(row["photocurrent_mA_cm2"], rel=EQE_INTEGRAL_REL)
    # the same for the budget's other bands: reflectance, transmittance, each parasitic layer
    bands = {row["band"]: row for row in summary["spectral_bands"]}
    for band, column in (("reflected", "reflectance"), ("transmitted", "transmittance"),
                         ("top window", "top window.absorptance"),
                         ("upper tunnel n", "upper tunnel n.absorptance")):
        current = constants.e * np.trapezoid(table[column] * flux, wavelength) / 10
        assert current == pytest.approx(bands[band]["current_mA_cm2"], rel=EQE_INTEGRAL_REL)


def test_bands_add_up_to_the_incident_photons(written):
    _, _, _, summary = written
    bands = summary["spectral_bands"]
    assert sum(b["current_mA_cm2"] for b in bands) == pytest.approx(summary["incident_mA_cm2"],
                                                                    rel=1e-12)
    assert sum(b["share_pct"] for b in bands) == pytest.approx(100, rel=1e-12)
    by_name = {b["band"]: b for b in bands}
    for row in summary["subcells"]:
        assert by_name[row["name"]]["current_mA_cm2"] == row["photocurrent_mA_cm2"]
        assert by_name[f"{row['name']} not collected"]["current_mA_cm2"] == pytest.approx(
            row["collection_loss_mA_cm2"], abs=1e-12)
    reflected = by_name["reflected"]
    assert reflected["current_mA_cm2"] == summary["reflected_mA_cm2"]
    assert 0 <= reflected["escaped_mA_cm2"] <= reflected["current_mA_cm2"]


def test_scattering_rear_shows_in_the_silicon_eqe(tmp_path):
    # light trapping (Green 2002): near the Si band edge a scattering rear absorbs more than a
    # flat mirror, and the table's Si EQE carries it (the scattered-absorbed part of the budget)
    flat = run_stack(load_stack(_triple(tmp_path, TRAPPING["specular"], "a.toml")))
    trapped = run_stack(load_stack(_triple(tmp_path, TRAPPING["lambertian rear"], "b.toml")))
    a, b = flat.spectral_table(), trapped.spectral_table()
    edge = (a["wavelength_nm"] > 1000) & (a["wavelength_nm"] < 1150)
    assert np.all(b.loc[edge, "silicon.eqe"] > a.loc[edge, "silicon.eqe"])
    # and the top cell, which the GaAs shields from the rear, is unchanged
    assert np.allclose(a["top.eqe"], b["top.eqe"], rtol=1e-9, atol=1e-15)


def _slab_optics(result):
    model = result.circuit.model
    table = result.spectral_table()
    wavelength = table["wavelength_nm"].to_numpy()
    silicon = model.materials[-1]
    n = np.asarray(silicon.refractive_index(wavelength), dtype=float)
    tau = sum(np.asarray(m.absorption_per_m(wavelength, temperature_K=model.temperature_K))
              * layer.thickness_nm * 1e-9 for m, layer in zip(model.materials, model.layers))
    # free carriers of the doped layers (laws.haze; majority density = doping)
    free = sum(np.asarray(m.free_carrier_absorption_per_m(
        wavelength, **{("electron_density_m3" if layer.polarity == "n" else "hole_density_m3"):
                       layer.doping_cm3 * 1e6})) * layer.thickness_nm * 1e-9
        for m, layer in zip(model.materials, model.layers))
    top = model.layers[0]            # the front surface sees the top layer's alpha, its free carriers too
    k = (np.asarray(silicon.absorption_per_m(wavelength, temperature_K=model.temperature_K))
         + silicon.free_carrier_absorption_per_m(wavelength, electron_density_m3=top.doping_cm3 * 1e6)) \
        * wavelength * 1e-9 / (4 * np.pi)
    fresnel = np.abs((1 - (n + 1j * k)) / (1 + (n + 1j * k))) ** 2
    return table, wavelength, n, tau, fresnel, free


def test_transparent_range_gives_no_eqe_and_the_lossless_slab_sums(tmp_path):
    # where the band-to-band alpha = 0 in every layer (Si beyond its absorption edge in the library)
    # nothing is collected (Beer-Lambert); only the free carriers of the doped layers absorb, single
    # pass P = exp(-tau_fca): a flat slab then reflects R_f + (1 - R_f)^2 R_b P^2 / (1 - R_b R_f P^2)
    # and transmits (1 - R_f)(1 - R_b) P / (1 - R_b R_f P^2) (incoherent multiple reflections,
    # Born & Wolf sec. 1.6; R_f the normal-incidence Fresnel reflectance, 1.5.3)
    result = run_stack(load_stack(_slab(tmp_path, "back_reflectance = 0.8")))
    table, wavelength, n, tau, fresnel, free = _slab_optics(result)
    clear = tau == 0
    assert clear.sum() > 100 and wavelength[clear].min() > 1400
    for column in ("emitter.absorptance", "base.absorptance", "Si cell.eqe"):
        assert np.all(table[column].to_numpy()[clear] == 0), column
    assert np.all(table["emitter free carriers.absorptance"].to_numpy()[clear] > 0)
    r_f, r_b, p = fresnel[clear], 0.8, np.exp(-free[clear])
    assert table["reflectance"].to_numpy()[clear] == pytest.approx(
        r_f + (1 - r_f) ** 2 * r_b * p * p / (1 - r_b * r_f * p * p), rel=1e-12)
    assert table["transmittance"].to_numpy()[clear] == pytest.approx(
        (1 - r_f) * (1 - r_b) * p / (1 - r_b * r_f * p * p), rel=1e-12)
    # where Si absorbs, its EQE is not 0 (the check above is not empty by construction)
    assert np.all(table["Si cell.eqe"].to_numpy()[(wavelength > 400) & (wavelength < 1000)] > 0.1)


def test_textured_slab_absorbs_greens_closed_form(tmp_path):
    # M. A. Green, Prog. Photovolt. 10 (2002) 235 (from memory): both surfaces ideally scattering,
    # A = (1 - R_f)(1 - T)(1 + R_b T) / (1 - R_b R_fi T^2), R_fi = 1 - (1 - R_f) / n^2,
    # T = 2 E3(tau); the table's emitter + base absorptance (index-matched Si layers)
    back = 0.95
    result = run_stack(load_stack(_slab(tmp_path, f'back_reflectance = {back}\n'
                                        'back_scattering = "lambertian"\n'
                                        'front_scattering = "lambertian"')))
    table, wavelength, n, tau, r_f, free = _slab_optics(result)
    weak = (wavelength >= 900) & (wavelength <= 1180) & (tau > 0)
    t = 2 * expn(3, tau[weak] + free[weak])          # band-to-band and free carriers together
    r_fi = 1 - (1 - r_f[weak]) / n[weak] ** 2
    green = (1 - r_f[weak]) * (1 - t) * (1 + back * t) / (1 - back * r_fi * t * t)
    absorbed = sum(table[f"{layer}.absorptance"] for layer in (
        "emitter", "emitter free carriers", "base", "base free carriers")).to_numpy()[weak]
    assert absorbed == pytest.approx(green, rel=1e-9)
    assert np.all(table["Si cell.eqe"].to_numpy()[weak] <= absorbed)


def test_a_dark_wavelength_gets_the_fractions_of_a_lit_one(tmp_path):
    # the optics is linear in the flux (Beer-Lambert, incoherent sums): where a spectrum has no
    # photons the table comes from a unit-flux pass, and equals the table of a lit run there
    from siltandem.materials.spectra import get_spectrum

    light = get_spectrum("am1.5g")
    irradiance = light.irradiance_W_m2_nm.copy()
    dark = np.isin(light.wavelength_nm, [500.0, 800.0, 1050.0])
    irradiance[dark] = 0.0
    (tmp_path / "holes.csv").write_text("wavelength_nm,irradiance_W_m2_nm\n" + "\n".join(
        f"{w:.17g},{e:.17g}" for w, e in zip(light.wavelength_nm, irradiance)) + "\n")
    stack = load_stack(_triple(tmp_path, TRAPPING["lambertian rear"]))
    lit = run_stack(stack).spectral_table()
    holes = run_stack(stack, spectrum=str(tmp_path / "holes.csv")).spectral_table()
    assert np.all(np.isfinite(holes.to_numpy()))
    for column in lit.columns:
        assert holes[column].to_numpy()[dark] == pytest.approx(lit[column].to_numpy()[dark],
                                                               rel=1e-12, abs=1e-15), column


def test_an_element_stack_has_no_spectral_table(tmp_path, capsys):
    out = tmp_path / "s.csv"
    code, _, err = _run_cli(["run", STACKS / "demo_dual.toml", "--spectral", out], capsys)
    assert code == 2
    assert "--spectral needs a layer stack" in err and "fix:" in err and "[[layer]]" in err
    assert not out.exists()
    result = run_stack(load_stack(STACKS / "demo_dual.toml"))
    assert "spectral_bands" not in result.summary
    with pytest.raises(ValueError, match="needs a layer stack"):
        result.spectral_table()


def test_spectral_goes_without_suns_range(tmp_path, capsys):
    code, _, err = _run_cli(["run", STACKS / "demo_dual_layers.toml", "--suns-range", "1:10:3",
                             "--spectral", tmp_path / "s.csv"], capsys)
    assert code == 2 and re.search(r"--spectral goes with one run", err)
    assert not (tmp_path / "s.csv").exists()


def test_hostile_layer_names_are_quoted_in_the_header(tmp_path, capsys):
    text = (STACKS / "demo_dual_layers.toml").read_text().replace(
        'name = "top window"', 'name = "=top window\\u0007"')
    (tmp_path / "names.toml").write_text(text)
    code, _, _ = _run_cli(["run", tmp_path / "names.toml", "--spectral", tmp_path / "s.csv"],
                          capsys)
    assert code == 0
    header, _ = _read_table(tmp_path / "s.csv")
    assert "'=top window\\x07.absorptance" in header


def test_spectral_figure(tmp_path, capsys):
    # the stacked areas add up to 1 at every wavelength; the legend gives each subcell's
    # photocurrent; the command line draws it beside the I-V for a layer stack
    import matplotlib

    matplotlib.use("Agg")
    from siltandem.report.plots import plot_spectral, spectral_bands_per_nm

    result = run_stack(load_stack(_triple(tmp_path, TRAPPING["lambertian rear"])))
    wavelength, bands = spectral_bands_per_nm(result)
    assert np.max(np.abs(sum(values for _, _, values in bands) - 1)) < 1e-9
    assert [label for label, kind, _ in bands if kind == "collected"] == ["top", "middle", "silicon"]
    import siltandem

    assert siltandem.plot_spectral is plot_spectral           # the public API
    ax = plot_spectral(result)
    labels = ax.get_legend_handles_labels()[1]
    for row in result.summary["subcells"]:
        assert f"{row['name']}: {row['photocurrent_mA_cm2']:.2f} mA/cm²" in labels
    assert len(ax.collections) == len(bands)
    code, _, _ = _run_cli(["run", tmp_path / "triple.toml", "--plot", tmp_path / "f.png"], capsys)
    assert code == 0 and (tmp_path / "f.png").stat().st_size > 10000


def test_plots_leave_the_backend_to_the_command_line():
    source = (ROOT / "src" / "siltandem" / "report" / "plots.py").read_text()
    assert "matplotlib.use(" not in source
