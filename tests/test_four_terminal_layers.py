"""Layer stacks of several strings (``terminals = 4``): ``string`` on the layers, ``[device.N]``.

Checks against outside references:
- each string equals the same layers run as a two-terminal stack of their own, lit by the light the
  string above passes (photon conservation: the flux entering the lower string is the 4-terminal
  stack's own Beer-Lambert flux at that depth; the lone stack's front transmits 1 - R, R the
  normal-incidence Fresnel reflectance |(1 - n~)/(1 + n~)|^2, M. Born, E. Wolf, Principles of
  Optics, sec. 1.5, with n~ = n + i alpha lambda / 4 pi);
- the photon budget closes (incident = reflected + transmitted + parasitic + absorbed);
- a string's grid shading f scales that string's Jsc by exactly 1 - f (photocurrent = q x the
  collected photon flux, M. A. Green, Solar Cells (1982) ch. 4);
- series resistance per string: Ohm's law, V(J) of the string with R = V(J) without it - J R.
"""
import numpy as np
import pytest
from scipy import constants as sc

from siltandem import StackError
from siltandem.materials import load_material
from siltandem.materials.spectra import Spectrum
from siltandem.result.driver import compute_result
from test_layer_stacks import layer, stack_from

TOP = (layer("top window", "GaP", 20, "n:2e18")
       + layer("top emitter", "GaAsP", 80, "n:2e18", composition=0.23, diffusion_length_um=0.4, srv_cm_s=1e3)
       + layer("top base", "GaAsP", 1400, "p:1e17", composition=0.23, diffusion_length_um=3.0, srv_cm_s=1e3,
               luminescent_coupling=0.0))
BOTTOM = (layer("si emitter", "Si", 400, "n:5e18", diffusion_length_um=3.0, srv_cm_s=1e3)
          + layer("si base", "Si", 180000, "p:1e16", diffusion_length_um=600, srv_cm_s=10))
#: the top layers alone have no subcell below to couple to: no luminescent_coupling key there
TOP_ALONE = TOP.replace("luminescent_coupling = 0.0\n", "")
COATING = "[[coating]]\nname = \"single\"\nrefractive_index = 1.9\nthickness_nm = 80\n"


def _four(tmp_path, device="", name="four.toml"):
    text = "terminals = 4\n" + device + COATING + TOP + BOTTOM.replace('name = "si emitter"\n',
                                                                     'name = "si emitter"\nstring = 2\n', 1)
    return stack_from(tmp_path, text, name)


def _row(result, number):
    return result.summary["strings"][number - 1]


def test_strings_equal_their_layers_run_alone(tmp_path):
    device = "[device]\nseries_ohm_cm2 = 0.4\nshunt_ohm_cm2 = 5e4\nshading_fraction = 0.03\n" \
             "[device.2]\nseries_ohm_cm2 = 0.25\nshading_fraction = 0.02\n"
    four = compute_result(_four(tmp_path, device), curve_points=80)
    assert [len(s) for s in four.circuit.wiring.paths] == [3, 2]     # window interface, top, resistor
    # string 1: the top layers alone, with the front's grid and string 1's device values
    top = compute_result(stack_from(tmp_path, device.split("[device.2]")[0] + COATING + TOP_ALONE, "top.toml"),
                         curve_points=80)
    # string 2: the Si layers alone, lit by the 4-terminal stack's flux at the Si emitter's top,
    # divided by the lone stack's Fresnel transmittance (its front is air on Si)
    light = four.circuit.optics["layer_light"]
    spectrum = four.circuit.optics["spectrum"]
    wavelength = spectrum.wavelength_nm
    si = next(j for j, lay in enumerate(four.circuit.model.layers) if lay.name == "si emitter")
    arriving = light.budget.downward_at_top[si]
    silicon = load_material("Si")
    alpha = np.asarray(silicon.absorption_per_m(wavelength, temperature_K=300.0)) \
        + np.asarray(silicon.free_carrier_absorption_per_m(wavelength, electron_density_m3=5e24))
    index = np.asarray(silicon.refractive_index(wavelength)) + 1j * alpha * wavelength * 1e-9 / (4 * np.pi)
    transmittance = 1.0 - np.abs((1.0 - index) / (1.0 + index)) ** 2
    irradiance = arriving / transmittance * sc.h * sc.c / (wavelength * 1e-9)
    passed = Spectrum("passed by string 1", "test", wavelength, irradiance)
    bottom = compute_result(stack_from(tmp_path, "[device]\nseries_ohm_cm2 = 0.25\nshunt_ohm_cm2 = 5e4\n"
                                       "shading_fraction = 0.02\n" + BOTTOM, "bottom.toml"),
                            spectrum=passed, curve_points=80)
    for number, alone in ((1, top), (2, bottom)):
        row, own = _row(four, number), alone.summary["strings"][0]
        for key in ("jsc_mA_cm2", "voc_V", "mpp_V", "mpp_mA_cm2", "fill_factor_pct"):
            assert row[key] == pytest.approx(own[key], rel=1e-8), (number, key)
    # the photon budget of the 4-terminal stack closes, the lower grid's share in it
    optics = four.circuit.optics
    assert optics["budget_error_relative"] < 1e-12
    assert optics["parasitic_A_m2"]["grid shading, string 2"] > 0


def test_a_strings_shading_scales_its_jsc_exactly(tmp_path):
    plain = compute_result(_four(tmp_path), curve_points=40)
    lower = compute_result(_four(tmp_path, "[device.2]\nshading_fraction = 0.05\n", "lower.toml"), curve_points=40)
    front = compute_result(_four(tmp_path, "[device.1]\nshading_fraction = 0.04\n", "front.toml"), curve_points=40)
    both = compute_result(_four(tmp_path, "[device]\nshading_fraction = 0.04\n", "both.toml"), curve_points=40)
    jsc = [[_row(r, k)["jsc_mA_cm2"] for k in (1, 2)] for r in (plain, lower, front, both)]
    # string 2's own grid: string 2 only
    assert jsc[1][0] == pytest.approx(jsc[0][0], rel=1e-12)
    assert jsc[1][1] == pytest.approx(0.95 * jsc[0][1], rel=1e-9)
    # the front's grid (string 1's) shades everything below it
    assert jsc[2][0] == pytest.approx(0.96 * jsc[0][0], rel=1e-9)
    assert jsc[2][1] == pytest.approx(0.96 * jsc[0][1], rel=1e-9)
    # [device] for every string: the front's grid and string 2's own
    assert jsc[3][1] == pytest.approx(0.96 * 0.96 * jsc[0][1], rel=1e-9)
    for r in (lower, front, both):
        assert r.circuit.optics["budget_error_relative"] < 1e-12


def test_series_resistance_per_string_is_ohms_law(tmp_path):
    plain = compute_result(_four(tmp_path), curve_points=40)
    resisted = compute_result(_four(tmp_path, "[device.2]\nseries_ohm_cm2 = 1.5\n", "r.toml"), curve_points=40)
    assert _row(resisted, 1)["mpp_W_m2"] == pytest.approx(_row(plain, 1)["mpp_W_m2"], rel=1e-12)
    # at string 2's Jsc (V = 0 with R) the junction sits at J R without it: Voc unchanged, and the
    # resistor is in string 2 alone
    assert _row(resisted, 2)["voc_V"] == pytest.approx(_row(plain, 2)["voc_V"], abs=1e-6)
    assert _row(resisted, 2)["mpp_W_m2"] < _row(plain, 2)["mpp_W_m2"]
    names = resisted.circuit.wiring.paths[1]
    assert "device series resistance, string 2" in names
    assert not any("device series" in n for n in resisted.circuit.wiring.paths[0])


@pytest.mark.parametrize("head, edit, message", [
    ("terminals = 4\n", lambda t: t.replace('name = "si emitter"\n', 'name = "si emitter"\nstring = 3\n'),
     r"string = 3 is not a string of this stack \(terminals = 4 gives strings 1..2\)"),
    ("terminals = 4\n", lambda t: t, r"no layer is in string 2"),
    ("terminals = 4\n", lambda t: t.replace('name = "top base"\n', 'name = "top base"\nstring = 2\n')
     .replace('name = "si emitter"\n', 'name = "si emitter"\nstring = 1\n'),
     r"string = 1 comes after a layer of string 2"),
    ("terminals = 4\n[device.3]\nseries_ohm_cm2 = 1\n",
     lambda t: t.replace('name = "si emitter"\n', 'name = "si emitter"\nstring = 2\n'),
     r"\[device.3\] names no string of this stack"),
    ("terminals = 4\n[device.2]\nseries_ohms = 1\n",
     lambda t: t.replace('name = "si emitter"\n', 'name = "si emitter"\nstring = 2\n'),
     r"unknown key 'series_ohms' in \[device.2\]"),
    ("terminals = 4\n[device.2]\nshading_fraction = 1.5\n",
     lambda t: t.replace('name = "si emitter"\n', 'name = "si emitter"\nstring = 2\n'),
     r"shading_fraction = 1.5 is outside"),
    ("", lambda t: t.replace('name = "si emitter"\n', 'name = "si emitter"\nstring = 2\n'),
     r"string = 2 is not a string of this stack \(terminals = 2"),
])
def test_bad_strings_are_refused_with_the_layer_named(tmp_path, head, edit, message):
    with pytest.raises(StackError, match=message) as caught:
        stack_from(tmp_path, head + edit(TOP + BOTTOM))
    assert caught.value.fix


def test_series_and_shunt_of_a_string_show_as_its_losses_steps(tmp_path):
    # a step is the efficiency the file gains without that loss: string 2's [device] series
    # resistance and shunt, each against the main job on the file without it (Ohm's law in the
    # string; the strings are independent, their powers summed)
    from siltandem.studies.losses import loss_waterfall

    def efficiency(device, name):
        return compute_result(_four(tmp_path, device, name), curve_points=60).summary["efficiency_pct"]

    def step(device, name, label):
        waterfall = loss_waterfall(_four(tmp_path, device, name))
        assert abs(waterfall["check_pct"]) < 1e-9
        assert waterfall["efficiency_pct"] == pytest.approx(efficiency(device, name), rel=1e-12)
        return next(s["loss_pct_abs"] for s in waterfall["steps"] if s["loss"] == label)

    series = "[device.1]\nseries_ohm_cm2 = 0.3\n[device.2]\nseries_ohm_cm2 = 1.2\n"
    gained = efficiency("[device.1]\nseries_ohm_cm2 = 0.3\n", "no_r2.toml") - efficiency(series, "r2.toml")
    assert gained > 0.1
    assert step(series, "r2.toml", "series resistance, string 2") == pytest.approx(gained, rel=1e-6)
    shunt = "[device.2]\nshunt_ohm_cm2 = 100\n"
    lost = efficiency("", "plain.toml") - efficiency(shunt, "shunt.toml")
    assert lost > 0.01
    with_shunt = step(shunt, "shunt.toml", "non-radiative recombination, string 2")
    without = step("", "plain.toml", "non-radiative recombination, string 2")
    assert with_shunt - without == pytest.approx(lost, rel=1e-6)


def test_a_year_of_a_four_terminal_layer_stack(tmp_path):
    # the yield year takes the strings as the main job does: its standard-conditions efficiency is
    # the main job's (each string at its own MPP, each with its [device]); a lower string's own grid
    # shades its hourly photocurrents. The top's coupling is 0 here: with coupling across strings
    # the year's standard-conditions value differs from the main job's by about 5e-6 rel. (1.4e-4 on
    # the element demo with c = 1, before this change too), left for the yield's owner
    from pathlib import Path

    import pvlib

    from siltandem import annual_yield, read_weather
    from siltandem.materials.spectra import get_spectrum
    from siltandem.optics.layers import layer_photocurrents
    from siltandem.circuit.compile import compile_stack

    weather = read_weather(Path(pvlib.__file__).parent / "data" / "723170TYA.CSV")
    from siltandem import load_stack
    from test_layer_stacks import HEAD

    def write(body, name):
        path = tmp_path / name
        path.write_text(HEAD.replace("temperature_K = 300", "temperature_K = 298.15") + body)
        return load_stack(path)

    text = "terminals = 4\n[device]\nseries_ohm_cm2 = 0.4\n[device.2]\n" \
           "shading_fraction = 0.05\n" + COATING + TOP + BOTTOM.replace(
               'name = "si emitter"\n', 'name = "si emitter"\nstring = 2\n', 1)
    stack = write(text, "year.toml")
    year = annual_yield(stack, weather).summary
    main = compute_result(stack, curve_points=60).summary
    assert year["efficiency_at_standard_conditions_pct"] == pytest.approx(main["efficiency_pct"], rel=1e-6)
    spectrum = get_spectrum("am1.5g")
    flux = np.stack([spectrum.photon_flux, 0.3 * spectrum.photon_flux])
    plain = compile_stack(write(text.replace("shading_fraction = 0.05", "shading_fraction = 0"), "plain.toml")).model
    top, silicon = layer_photocurrents(compile_stack(stack).model, spectrum.wavelength_nm, flux)
    top0, silicon0 = layer_photocurrents(plain, spectrum.wavelength_nm, flux)
    assert np.allclose(top, top0, rtol=1e-12) and np.allclose(silicon, 0.95 * silicon0, rtol=1e-12)


def test_a_placement_joins_the_string_of_its_layer(tmp_path):
    # layers inserted before the Si emitter are in string 2: an isotype interface of string 2's
    # path, and string 1 unchanged
    from siltandem.stack.placements import with_placement
    from siltandem.circuit.compile import compile_stack

    text = "terminals = 4\n" + TOP + BOTTOM.replace('name = "si emitter"\n', 'name = "si emitter"\nstring = 2\n', 1) \
        + '[[placement]]\nname = "window"\nbefore = "si emitter"\n' \
        + layer("si window", "GaP", 20, "n:2e18").replace("[[layer]]", "[[placement.layer]]")
    stack = stack_from(tmp_path, text)
    placed = with_placement(stack, stack.extra["placements"][0])
    assert [layer.string for layer in placed.layers] == [1, 1, 1, 2, 2, 2]
    paths = compile_stack(placed).wiring.paths
    assert any("si window" in name for name in paths[1]) and not any("si window" in n for n in paths[0])
