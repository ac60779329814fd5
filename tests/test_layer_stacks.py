"""Layer stacks: recognition of the device, the photon budget, layer-physics limits, bad input.

Sources: M. Born, E. Wolf, Principles of Optics (Fresnel reflectance); A. Beer, Ann. Phys. Chem.
86 (1852) 78 (attenuation); the generalized Planck law and S. Ruehle, Solar Energy 130 (2016) 139
(radiative floor); published tunnel-junction peak currents of ../shared/REFERENCES.md
(I. Garcia et al., J. Phys. D 45 (2012) 045101).
"""
import json
from pathlib import Path

import numpy as np
import pytest

from siltandem.circuit.recognise import carriers_flow, recognise
from siltandem.constants import thermal_voltage_V
from siltandem import StackError, run_stack, load_stack
from siltandem.laws import thinfilm
from siltandem.laws.radiative import radiative_saturation_current
from siltandem.materials import load_material
from siltandem.materials.spectra import get_spectrum
from test_main_job import cli

ROOT = Path(__file__).resolve().parents[1]
HEAD = '[conditions]\nspectrum = "am1.5g"\ntemperature_K = 300\n'


def layer(name, material, thickness, doping, **extra):
    lines = [f'[[layer]]\nname = "{name}"\nmaterial = "{material}"\n'
             f'thickness_nm = {thickness}\ndoping = "{doping}"\n']
    for key, value in extra.items():
        lines.append(f"{key} = {json.dumps(value)}\n")
    return "".join(lines)


def cell(prefix, material, emitter="n:1e18", base="p:1e17", **extra):
    return (layer(f"{prefix} emitter", material, 100, emitter, diffusion_length_um=1.0, **extra)
            + layer(f"{prefix} base", material, 2000, base, diffusion_length_um=5.0, **extra))


def stack_from(tmp_path, text, name="s.toml"):
    path = tmp_path / name
    path.write_text(HEAD + text)
    return load_stack(path)


def test_recognises_a_triple():
    stack = load_stack(ROOT / "stacks" / "demo_triple_layers.toml")
    structure = recognise(stack.layers, tunnel_doping_cm3=5e18)
    kinds = [kind for kind, _ in structure.parts]
    assert kinds.count("subcell") == 3 and kinds.count("tunnel") == 2
    assert structure.polarity == "n-on-p"
    # every subcell boundary comes between tunnel junctions, in order
    order = [k for k in kinds if k in ("subcell", "tunnel")]
    assert order == ["subcell", "tunnel", "subcell", "tunnel", "subcell"]
    assert kinds.count("isotype") >= 4


def test_carriers_flow_follows_polarity():
    # n-on-p: photo-electrons leave through the front, holes through the back
    assert carriers_flow("n", "n-on-p") == "up" and carriers_flow("p", "n-on-p") == "down"
    assert carriers_flow("p", "p-on-n") == "up" and carriers_flow("n", "p-on-n") == "down"


@pytest.mark.parametrize("text, message", [
    (layer("lone", "GaAs", 1000, "p:1e17"), "no p-n junction"),
    (layer("a", "GaAs", 1000, "p:1e17") + layer("b", "GaAs", 1000, "p:1e18"), "no p-n junction"),
    (cell("top", "GaAs") + cell("bottom", "GaAs"),
     "no tunnel junction between layer 2 'top base' and layer 3 'bottom emitter'.*opposes the n-on-p"),
    # a tunnel junction written upside down (n++ over p++ under a p base, issue 20): named as such,
    # and again once the base is doped up as a generic fix would suggest
    (cell("top", "Ga0.51In0.49P") + layer("t1", "GaAs", 20, "n:1e19") + layer("t2", "GaAs", 20, "p:5e19")
     + cell("bottom", "GaAs"), "(?s)tunnel junction layer 3 't1' / layer 4 't2' looks upside down.*"
     "fix: swap the dopings"),
    (cell("top", "Ga0.51In0.49P", base="p:5e18") + layer("t1", "GaAs", 20, "n:1e19")
     + layer("t2", "GaAs", 20, "p:5e19") + cell("bottom", "GaAs"), "looks upside down"),
    (cell("top", "GaAs") + layer("t0", "GaAs", 20, "p:5e19") + layer("t1", "GaAs", 20, "n:5e19")
     + layer("t2", "GaAs", 20, "p:5e19") + cell("bottom", "GaAs"), "three degenerate layers"),
    (cell("top", "GaAs") + layer("t1", "GaAs", 20, "n:5e19") + layer("t2", "GaAs", 20, "p:5e19")
     + cell("bottom", "GaAs"), "wrong order for its neighbours"),
    # a heterojunction whose valence-band spike (0.9 eV by the affinity rule, Anderson 1962) blocks
    # the holes of the Si absorber (the limit of laws/heterojunction.py, about 0.35 eV)
    (layer("e", "GaP", 100, "p:2e18", diffusion_length_um=1.0)
     + layer("b", "Si", 20000, "n:1e16", diffusion_length_um=100.0), "spike in the valence band.*blocks the holes"),
    (layer("t1", "GaAs", 20, "p:5e19") + layer("t2", "GaAs", 20, "n:5e19") + cell("c", "GaAs"),
     "lies above the top"),
])
def test_stacks_that_make_no_device(tmp_path, text, message):
    stack = stack_from(tmp_path, text)
    with pytest.raises(StackError, match=message) as info:
        run_stack(stack, curve_points=30)
    assert info.value.fix and info.value.file


@pytest.mark.parametrize("text, message, where", [
    (layer("x", "GaInP", 100, "n:1e18", composition=1.5), "composition", "layer 1 'x'"),
    (layer("x", "Galnp", 100, "n:1e18"), "did you mean", "layer 1 'x'"),
    (layer("x", "GaAs", 0, "n:1e18"), "thickness_nm = 0 is outside", "layer 1 'x'"),
    (layer("x", "GaAs", 100, "p:abc"), "is not a number", "layer 1 'x'"),
    (layer("x", "GaAs", 100, "x:1e18"), "is not understood", "layer 1 'x'"),
    ('[[layer]]\nname = "x"\nmaterial = "GaAs"\ndoping = "n:1e18"\n', "missing required key "
     "'thickness_nm'", "layer 1 'x'"),
    (layer("x", "GaAs", 100, "n:1e18", colour=3), "unknown key 'colour'", "layer 1 'x'"),
    (layer("x", "GaAs", 100, "n:1e18") + layer("x", "GaAs", 100, "p:1e18"), "used twice",
     "layer 2 'x'"),
])
def test_bad_layer_tables(tmp_path, text, message, where):
    with pytest.raises(StackError, match=message) as info:
        stack_from(tmp_path, text)
    assert where in info.value.where and info.value.fix


def test_active_layer_needs_a_diffusion_length(tmp_path):
    stack = stack_from(tmp_path, layer("e", "GaAs", 100, "n:1e18")
                       + layer("b", "GaAs", 1000, "p:1e17", diffusion_length_um=2.0))
    with pytest.raises(StackError, match="needs its minority-carrier diffusion length"):
        run_stack(stack, curve_points=30)


@pytest.mark.parametrize("name", ["demo_triple_layers.toml", "demo_dual_layers.toml"])
def test_photon_budget_closes(name):
    # issue 3: reflected + absorbed in every layer + transmitted = incident, to 1e-6 relative
    data = json.loads(run_stack(load_stack(ROOT / "stacks" / name), curve_points=30).to_json())
    accounted = (data["reflected_mA_cm2"] + data["transmitted_mA_cm2"]
                 + sum(p["absorbed_mA_cm2"] for p in data["parasitic"])
                 + sum(c["absorbed_mA_cm2"] for c in data["subcells"]))
    assert accounted == pytest.approx(data["incident_mA_cm2"], rel=1e-6)
    for c in data["subcells"]:
        assert 0 < c["photocurrent_mA_cm2"] <= c["absorbed_mA_cm2"] * (1 + 1e-12)
    assert data["power_balance_error_W_m2"] < 1e-9 * data["mpp_W_m2"]


def test_ideal_layers_approach_the_detailed_balance_cell(tmp_path):
    # a thick GaAs cell with very long diffusion lengths and no surface recombination collects
    # every photon it absorbs, and its J01 falls to the radiative floor (the generalized Planck
    # law; S. Ruehle 2016 for the floor's values): Voc = kT/q ln(Jsc / J0,rad + 1)
    text = (layer("ideal emitter", "GaAs", 200, "n:1e17", diffusion_length_um=1e5, srv_cm_s=0)
            + layer("ideal base", "GaAs", 20000, "p:1e16", diffusion_length_um=1e5, srv_cm_s=0))
    result = run_stack(stack_from(tmp_path, text), curve_points=30)
    row = result.summary["subcells"][0]
    assert row["photocurrent_mA_cm2"] == pytest.approx(row["absorbed_mA_cm2"], rel=1e-6)
    # independent optics: bare-surface Fresnel reflectance and Beer-Lambert over 20.2 um
    spectrum = get_spectrum("am1.5g")
    gaas = load_material("GaAs")
    w = spectrum.wavelength_nm
    alpha = gaas.absorption_per_m(w, temperature_K=300.0)
    n_complex = thinfilm.complex_index(w, refractive_index=gaas.refractive_index(w),
                                       alpha_per_m=alpha)
    reflectance = np.abs((1 - n_complex) / (1 + n_complex)) ** 2     # Born & Wolf, Fresnel
    absorbed = spectrum.photon_flux * (1 - reflectance) * -np.expm1(-alpha * 20.2e-6)
    expected = thinfilm.photon_current_A_m2(w, absorbed) / 10
    assert row["photocurrent_mA_cm2"] == pytest.approx(expected, rel=1e-9)
    gap = row["gap_eV"]
    # nothing absorbs behind the base and the back reflects nothing (an absorbing back contact):
    # the cell emits through its front into air and through its back at all internal angles,
    # n^2 times more (generalized Planck law, P. Wuerfel 1982; n of GaAs at the emission peak)
    peak_nm = 1239.84198 / (gap + thermal_voltage_V(300.0))
    n2 = float(gaas.refractive_index(peak_nm)) ** 2
    floor = (1 + n2) * radiative_saturation_current(gap, temperature_K=300.0) / 10    # mA/cm2
    assert row["j01_mA_cm2"] == pytest.approx(floor, rel=1e-12)
    jsc = result.summary["jsc_mA_cm2"]
    voc = thermal_voltage_V(300.0) * np.log1p(jsc / floor)
    # J02 (depletion recombination with 1e5 um lengths) lowers Voc by well under 10 mV
    assert result.summary["voc_V"] == pytest.approx(voc, abs=0.01)


@pytest.mark.parametrize("thickness_nm", [30, 1500])
def test_window_absorbs_as_a_film_or_by_beer_lambert(tmp_path, thickness_nm):
    # a thin window (<= 1 um) is a coherent film on the emitter: its absorptance 1 - R - T from
    # Airy's single-film formulas r = (r01 + r12 e^{2i d}) / (1 + r01 r12 e^{2i d}),
    # t = t01 t12 e^{i d} / (1 + r01 r12 e^{2i d}), T = Re(N2) |t|^2 (M. Born, E. Wolf, Principles
    # of Optics, sec. 1.6.4); a thick one absorbs (1 - R) Phi (1 - exp(-alpha d)) (A. Beer 1852)
    text = (layer("window", "AlInP", thickness_nm, "n:2e18", composition=0.52)
            + cell("c", "GaAs"))
    result = run_stack(stack_from(tmp_path, text), curve_points=30)
    spectrum = get_spectrum("am1.5g")
    w = spectrum.wavelength_nm
    window = load_material("AlInP", 0.52)
    alpha = window.absorption_per_m(w, temperature_K=300.0)
    n_complex = thinfilm.complex_index(w, refractive_index=window.refractive_index(w),
                                       alpha_per_m=alpha)
    if thickness_nm <= 1000:
        gaas = load_material("GaAs")
        n_sub = thinfilm.complex_index(w, refractive_index=gaas.refractive_index(w),
                                       alpha_per_m=gaas.absorption_per_m(w, temperature_K=300.0))
        r01, r12 = (1 - n_complex) / (1 + n_complex), (n_complex - n_sub) / (n_complex + n_sub)
        t01, t12 = 2 / (1 + n_complex), 2 * n_complex / (n_complex + n_sub)
        phase = np.exp(1j * 2 * np.pi * n_complex * thickness_nm / w)
        r = (r01 + r12 * phase**2) / (1 + r01 * r12 * phase**2)
        t = t01 * t12 * phase / (1 + r01 * r12 * phase**2)
        absorptance = 1 - np.abs(r) ** 2 - n_sub.real * np.abs(t) ** 2
    else:
        reflectance = np.abs((1 - n_complex) / (1 + n_complex)) ** 2
        absorptance = (1 - reflectance) * -np.expm1(-alpha * thickness_nm * 1e-9)
    expected = thinfilm.photon_current_A_m2(w, spectrum.photon_flux * absorptance) / 10
    parasitic = {p["layer"]: p["absorbed_mA_cm2"] for p in result.summary["parasitic"]}
    assert parasitic["window"] == pytest.approx(expected, rel=1e-9)
    interfaces = result.summary["interfaces"]
    assert len(interfaces) == 1 and interfaces[0]["carrier"] == "electron"


def test_tunnel_junction_from_its_layers(tmp_path):
    text = (cell("top", "GaAs") + layer("tp", "GaAs", 20, "p:5e19")
            + layer("tn", "GaAs", 20, "n:2e19") + cell("bottom", "GaAs"))
    result = run_stack(stack_from(tmp_path, text), curve_points=30)
    (tj,) = result.summary["tunnel_junctions"]
    # order of magnitude of published GaAs junctions (1e2 - 1e4 A/cm2: REFERENCES table)
    assert 1e4 < tj["peak_mA_cm2"] < 1e8
    given = text.replace('doping = "p:5e19"\n', 'doping = "p:5e19"\ntunnel_peak_mA_cm2 = 500\n'
                         'tunnel_peak_V = 0.08\n')
    override = run_stack(stack_from(tmp_path, given, "b.toml"), curve_points=30)
    assert override.summary["tunnel_junctions"][0]["peak_mA_cm2"] == pytest.approx(500, rel=1e-9)


def test_layer_stack_command_line(tmp_path):
    done = cli("run", ROOT / "stacks" / "demo_triple_layers.toml", "--json", "-")
    assert done.returncode == 0, done.stderr
    data = json.loads(done.stdout)
    assert {"incident_mA_cm2", "reflected_mA_cm2", "transmitted_mA_cm2"} <= set(data)
    assert all("absorbed_mA_cm2" in c and "photocurrent_mA_cm2" in c for c in data["subcells"])
    assert data["model"].startswith("layer level")
    bad = tmp_path / "bad.toml"
    bad.write_text(HEAD + layer("lone", "GaAs", 1000, "p:1e17"))
    done = cli("run", bad)
    assert done.returncode == 2 and "no p-n junction" in done.stderr
    assert "Traceback" not in done.stderr
