"""The ``[device]`` table of layer stacks: series resistance, shunt and grid shading.

Checks (each against something outside the table's own code):
- grid shading: a photocurrent is q times the photon flux collected (M. A. Green, Solar Cells
  (1982), ch. 4), so shading a fraction f of the front scales every photocurrent, and the Jsc of
  a single junction (Jsc = Jph with no series resistance: the diode carries nothing at V = 0),
  by exactly (1 - f); the shaded part is f of the incident photon current of the ASTM G173
  table (read through pvlib);
- series resistance: the same Resistor element an element stack's ``kind = "resistor"`` builds,
  and Ohm's law along the I-V curve (V_R(J) = V_0(J) - J R);
- shunt: the same shunt an element subcell's ``shunt_ohm_cm2`` builds, and Ohm's law for the
  parallel resistor (J_sh(V) = J_0(V) - V / R_sh) on a single junction;
- the loss waterfall's steps are real removals (each equals a run of the file without it).
The stack below is invented (layer values made up, material data from the library).
"""
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

from siltandem import StackError, design_map, load_stack, loss_waterfall, parse_vary, run_stack
from siltandem.circuit.elements import Resistor, batch
from siltandem.circuit.compile import compile_stack
from siltandem.optics.illuminate import illuminate
from siltandem.materials.spectra import get_spectrum
from siltandem.solve.series import solve_string
from siltandem.studies.sweep import study_light
from test_main_job import cli

# INVENTED DEMO DATA: a GaAs single junction written as layers
GAAS = '''[conditions]
spectrum = "am1.5g"
temperature_K = 300

[[layer]]
name = "window"
material = "AlInP"
composition = 0.5
thickness_nm = 25
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


def write(tmp_path, device="", name="s.toml", base=GAAS):
    path = tmp_path / name
    path.write_text(base + (f"\n[device]\n{device}\n" if device else ""))
    return path


def result(path, points=200):
    return run_stack(load_stack(path), curve_points=points)


def test_shading_scales_every_photocurrent_and_jsc_exactly(tmp_path):
    f = 0.04
    bare, shaded = result(write(tmp_path, name="a.toml")), \
        result(write(tmp_path, f"shading_fraction = {f}", name="b.toml"))
    jph0 = {c.name: float(c.photocurrent_A_m2[0, 0]) for c in bare.circuit.subcells}
    jph1 = {c.name: float(c.photocurrent_A_m2[0, 0]) for c in shaded.circuit.subcells}
    assert jph1 == pytest.approx({k: (1 - f) * v for k, v in jph0.items()}, rel=1e-12)
    assert shaded.summary["jsc_mA_cm2"] == pytest.approx((1 - f) * bare.summary["jsc_mA_cm2"],
                                                         rel=1e-9)
    # the grid's share of the photon budget: f of the incident photons of the ASTM G173 table
    spectrum = get_spectrum("am1.5g")
    incident = 1.602176634e-19 * np.trapezoid(spectrum.photon_flux, spectrum.wavelength_nm)
    assert shaded.circuit.optics["parasitic_A_m2"]["grid shading"] == pytest.approx(
        f * incident, rel=1e-9)
    assert shaded.circuit.optics["budget_error_relative"] < 1e-9
    # the spectral table still closes: R + T + sum A + grid = 1
    table = shaded.spectral_table()
    parts = [c for c in table.columns if c.endswith(".absorptance")]
    total = table["reflectance"] + table["transmittance"] + table[parts].sum(axis=1) \
        + table["grid_shading"]
    assert np.allclose(total, 1.0, atol=1e-9)


def test_shading_scales_a_dual_stack_subcell_by_subcell(tmp_path):
    from pathlib import Path

    text = (Path(__file__).resolve().parents[1] / "stacks" / "demo_dual_layers.toml").read_text()
    bare = result(write(tmp_path, base=text, name="a.toml"), points=30)
    shaded = result(write(tmp_path, "shading_fraction = 0.05", base=text, name="b.toml"),
                    points=30)
    for a, b in zip(bare.circuit.subcells, shaded.circuit.subcells):
        assert float(b.photocurrent_A_m2[0, 0]) == pytest.approx(
            0.95 * float(a.photocurrent_A_m2[0, 0]), rel=1e-12)


def test_series_resistance_is_the_element_stacks_resistor(tmp_path):
    r = 0.8   # ohm cm2
    with_r = result(write(tmp_path, f"series_ohm_cm2 = {r}", name="r.toml"))
    bare = result(write(tmp_path, name="a.toml"), points=4001)   # dense: interpolated below
    # the R = 0 circuit plus the resistor element an element stack's kind = "resistor" builds
    string = list(bare.circuit.strings[0]) + [Resistor("grid", batch(r * 1e-4))]
    solved = solve_string(string, 300.0)
    assert with_r.summary["efficiency_pct"] == pytest.approx(
        100 * float(solved.mpp_W_m2[0]) / with_r.summary["conditions"]["irradiance_W_m2"],
        rel=1e-9)
    # Ohm's law along the curve: the same current at V_0(J) - J R
    assert with_r.summary["voc_V"] == pytest.approx(bare.summary["voc_V"], abs=1e-9)
    iv0, iv1 = bare.iv, with_r.iv
    current = iv1["current_mA_cm2"].to_numpy() * 10.0          # A/m2
    order = np.argsort(iv0["current_mA_cm2"].to_numpy())
    v0 = np.interp(current, iv0["current_mA_cm2"].to_numpy()[order] * 10.0,
                   iv0["voltage_V"].to_numpy()[order])
    inside = (current > 1.0) & (current < 0.98 * bare.summary["jsc_mA_cm2"] * 10.0)
    assert inside.sum() > 20
    assert np.allclose(iv1["voltage_V"].to_numpy()[inside], (v0 - current * r * 1e-4)[inside],
                       atol=2e-5)
    assert with_r.summary["fill_factor_pct"] < bare.summary["fill_factor_pct"]


def test_shunt_is_the_element_subcells_shunt(tmp_path):
    rsh = 50.0   # ohm cm2, a poor cell
    shunted = result(write(tmp_path, f"shunt_ohm_cm2 = {rsh}", name="s.toml"))
    bare = result(write(tmp_path, name="a.toml"))
    cells = [replace(e, shunt_S_m2=batch(1.0 / (rsh * 1e-4))) if e.kind == "subcell" else e
             for e in bare.circuit.strings[0]]
    solved = solve_string(cells, 300.0)
    assert shunted.summary["efficiency_pct"] == pytest.approx(
        100 * float(solved.mpp_W_m2[0]) / shunted.summary["conditions"]["irradiance_W_m2"],
        rel=1e-9)
    # Ohm's law for the parallel resistor on a single junction: J_sh(V) = J_0(V) - V / R_sh
    cell = bare.circuit.subcells[0]
    voltage = np.linspace(0.0, 0.9, 10).reshape(1, -1)
    j0, _ = cell.current(voltage, 300.0)
    j1, _ = shunted.circuit.subcells[0].current(voltage, 300.0)
    assert np.allclose(np.ravel(j1), np.ravel(j0) - voltage / (rsh * 1e-4), rtol=1e-9, atol=1e-9)
    # at short circuit the junction sits at the window interface's small drop: the shunt takes
    # that drop over R_sh (1.3e-6 of Jsc with the measured band offsets; a few parts in 1e8 with
    # the affinity rule), well inside 1e-5
    assert shunted.summary["jsc_mA_cm2"] == pytest.approx(bare.summary["jsc_mA_cm2"], rel=1e-5)
    assert shunted.summary["jsc_mA_cm2"] <= bare.summary["jsc_mA_cm2"]


def test_losses_show_the_device_steps_as_real_removals(tmp_path):
    device = "series_ohm_cm2 = 1.0\nshading_fraction = 0.05"
    waterfall = loss_waterfall(load_stack(write(tmp_path, device, name="d.toml")))
    steps = {s["loss"]: s["loss_pct_abs"] for s in waterfall["steps"]}
    assert abs(waterfall["check_pct"]) < 1e-9
    no_r = result(write(tmp_path, "shading_fraction = 0.05", name="n.toml"), points=60)
    assert steps["series resistance"] == pytest.approx(
        no_r.summary["efficiency_pct"] - waterfall["efficiency_pct"], rel=1e-6)
    # the shading step: every photocurrent of the limit times (1 - f) loses a little more than
    # f of the limit's power (the voltage falls too, by kT/q ln(1 - f))
    assert 0.05 * waterfall["limit_pct"] < steps["grid shading"] < 0.06 * waterfall["limit_pct"]
    plain = loss_waterfall(load_stack(write(tmp_path, name="p.toml")))
    assert "grid shading" not in {s["loss"] for s in plain["steps"]}
    assert {s["loss"]: s for s in plain["steps"]}["series resistance"]["loss_pct_abs"] == 0


def test_a_map_varies_the_device_keys(tmp_path):
    stack = load_stack(write(tmp_path, name="m.toml"))
    table = design_map(stack, parse_vary("device.series_ohm_cm2=0:1:3", stack),
                       parse_vary("device.shading_fraction=0:0.1:2", stack))
    assert len(table) == 6
    for _, row in table.iterrows():
        device = (f"series_ohm_cm2 = {row['device.series_ohm_cm2']!r}\n"
                  f"shading_fraction = {row['device.shading_fraction']!r}")
        one = result(write(tmp_path, device, name="one.toml"), points=60)
        assert row["efficiency_pct"] == pytest.approx(one.summary["efficiency_pct"], rel=1e-9)
    assert isinstance(table, pd.DataFrame)
    with pytest.raises(StackError, match="shading_fraction = 1.2"):
        parse_vary("device.shading_fraction=0:1.2:3", stack)
    with pytest.raises(StackError, match="no key 'series_ohm'"):
        parse_vary("device.series_ohm=0:1:3", stack)


def test_the_study_light_and_compile_carry_the_device(tmp_path):
    stack = load_stack(write(tmp_path, "series_ohm_cm2 = 0.3\nshunt_ohm_cm2 = 1e4", name="c.toml"))
    circuit = illuminate(compile_stack(stack), study_light(stack))
    kinds = [e.kind for e in circuit.strings[0]]
    assert kinds[-1] == "resistor"
    assert float(circuit.subcells[0].shunt_S_m2[0, 0]) == pytest.approx(1.0 / (1e4 * 1e-4))


@pytest.mark.parametrize("device, problem, where", [
    ("series_ohm_cm2 = -1", "outside", "device.series_ohm_cm2"),
    ('series_ohm_cm2 = "0.5"', "must be a number", "device.series_ohm_cm2"),
    ("shunt_ohm_cm2 = 0", "outside", "device.shunt_ohm_cm2"),
    ("shading_fraction = 1", "whole front", "device.shading_fraction"),
    ("shading = 0.03", "unknown key 'shading'", "device.shading"),
])
def test_bad_device_values(tmp_path, device, problem, where):
    path = write(tmp_path, device)
    with pytest.raises(StackError) as caught:
        load_stack(path)
    error = caught.value
    assert problem in error.problem and where in error.where and error.fix
    assert str(path) in str(error.file)
    done = cli("run", path)
    assert done.returncode == 2 and "Traceback" not in done.stderr and where in done.stderr


def test_an_element_stack_refuses_device(tmp_path):
    from pathlib import Path

    text = (Path(__file__).resolve().parents[1] / "stacks" / "demo_dual.toml").read_text()
    path = tmp_path / "e.toml"
    path.write_text(text + "\n[device]\nseries_ohm_cm2 = 1\n")
    with pytest.raises(StackError, match=r"\[device\] goes with \[\[layer\]\] stacks") as caught:
        load_stack(path)
    assert "resistor element" in caught.value.fix


def test_the_yield_photocurrents_carry_the_shading(tmp_path):
    # the yield year's optics (optics.layers.layer_photocurrents, many spectra at once): each
    # hour's photocurrent times (1 - f), as in the single run
    from siltandem.optics.layers import layer_photocurrents

    spectrum = get_spectrum("am1.5g")
    flux = np.stack([spectrum.photon_flux, 0.3 * spectrum.photon_flux])
    plain = compile_stack(load_stack(write(tmp_path, name="a.toml"))).model
    shaded = compile_stack(load_stack(write(tmp_path, "shading_fraction = 0.07",
                                            name="b.toml"))).model
    for a, b in zip(layer_photocurrents(plain, spectrum.wavelength_nm, flux),
                    layer_photocurrents(shaded, spectrum.wavelength_nm, flux)):
        assert np.allclose(b, 0.93 * a, rtol=1e-12)


def test_a_year_uses_the_device_table(tmp_path):
    # the yield year of the layer stack with [device]: its standard-conditions efficiency is the
    # main job's on the same file (the year solves the same circuit, resistor and shunt included)
    from pathlib import Path

    import pvlib

    from siltandem import annual_yield, read_weather

    weather = read_weather(Path(pvlib.__file__).parent / "data" / "723170TYA.CSV")
    base = GAAS.replace("temperature_K = 300", "temperature_K = 298.15")   # the year's 25 degC
    path = write(tmp_path, "series_ohm_cm2 = 2.0\nshunt_ohm_cm2 = 300\nshading_fraction = 0.05",
                 name="y.toml", base=base)
    year = annual_yield(load_stack(path), weather).summary
    plain = annual_yield(load_stack(write(tmp_path, name="p.toml", base=base)), weather).summary
    main = result(path, points=60).summary
    assert year["efficiency_at_standard_conditions_pct"] == pytest.approx(
        main["efficiency_pct"], rel=1e-6)
    assert year["annual_energy_kWh_m2"] < 0.95 * plain["annual_energy_kWh_m2"]
