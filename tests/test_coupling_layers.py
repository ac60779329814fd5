"""Luminescent coupling of layer stacks from their layers (circuit/layer_coupling.py,
laws/luminescent.downward_emission).

Sources beside each check:
- the generalized Planck law with reciprocity (P. Würfel, J. Phys. C 15 (1982) 3967; U. Rau,
  Phys. Rev. B 76 (2007) 085303): emission into a medium of index n through a flat surface, the
  absorptance 1 - exp(-tau/cos) per direction, Snell's law through flat layers, written here
  again and integrated with scipy.integrate.quad over energy and angle;
- emission into index n of a black step absorber is n^2 times its front emission J0,rad
  (E. Yablonovitch, J. Opt. Soc. Am. 72 (1982) 899, the n^2 of the density of photon states;
  J0,rad checked against S. Rühle, Solar Energy 130 (2016) 139 in tests/test_radiative.py);
- the hemispherical absorptance of a slab, 1 - 2 E3(tau) (M. A. Green, Prog. Photovolt. 10
  (2002) 235, from memory), with scipy.special.expn;
- photon conservation (no source needed: collected <= absorbed <= arriving <= emitted).
Every stack below is invented test data (no check value comes from it).
"""
from pathlib import Path

import numpy as np
import pytest
from scipy import constants as sc
from scipy.integrate import quad
from scipy.special import expn

from siltandem import StackError, load_stack
from siltandem.circuit.from_layers import compile_layer_stack
from siltandem.circuit.layer_coupling import ENERGY_POINTS, ENERGY_SPAN_EV
from siltandem.laws.luminescent import downward_emission
from siltandem.laws.radiative import radiative_saturation_current
from siltandem.result.driver import compute_result
from test_layer_stacks import HEAD, layer

T = 300.0
KT = sc.k * T / sc.e


def _stack(tmp_path, top_extra=None, name="s.toml"):
    """An invented GaInP / GaAs dual with a good top (long diffusion lengths)."""
    top_extra = top_extra or {}
    text = HEAD + "".join([
        layer("window", "AlInP", 25, "n:2e18", composition=0.52),
        layer("top emitter", "GaInP", 60, "n:2e18", composition=0.51, diffusion_length_um=2.0, srv_cm_s=100,
              **top_extra),
        layer("top base", "GaInP", 500, "p:5e16", composition=0.51, diffusion_length_um=10.0, srv_cm_s=100),
        layer("tunnel p", "AlGaAs", 20, "p:5e19", composition=0.3),
        layer("tunnel n", "AlGaAs", 20, "n:5e19", composition=0.3),
        layer("bottom window", "GaInP", 50, "n:1e18", composition=0.51),
        layer("bottom emitter", "GaAs", 100, "n:1e18", diffusion_length_um=1.0, srv_cm_s=1000),
        layer("bottom base", "GaAs", 2500, "p:1e17", diffusion_length_um=5.0, srv_cm_s=1000)])
    path = tmp_path / name
    path.write_text(text)
    return load_stack(path)


def _planck_radiance(energy_eV, n):
    """q x the radiance 2 n^2 E^2 / (h^3 c^2) / (exp(E/kT) - 1), per eV, at Vj = 0 [A/m^2/sr/eV]."""
    energy_J = energy_eV * sc.e
    return sc.e * 2 * n**2 * energy_J**2 / (sc.h**3 * sc.c**2) / np.expm1(energy_eV / KT) * sc.e


def test_black_absorber_emits_n_squared_times_its_front_emission():
    # Yablonovitch 1982: into index n_b < n_a the emission is n_b^2 J0,rad; into n_b > n_a the
    # escape cone is the whole hemisphere inside the absorber: n_a^2 J0,rad
    gap = 1.42
    energy = np.linspace(gap, gap + 1.0, 8001)
    reference = float(radiative_saturation_current(gap, temperature_K=T))
    for n_a, n_b in ((3.6, 3.0), (3.0, 3.6)):
        out = downward_emission(energy, temperature_K=T, upper_index=n_a, upper_optical_depth=1e6,
                                lower_index=n_b)
        assert out.current_A_m2.sum() == pytest.approx(min(n_a, n_b) ** 2 * reference, rel=1e-5)


def test_thin_absorber_emits_its_hemispherical_absorptance():
    # Green 2002 (from memory): a slab of optical depth tau absorbs 1 - 2 E3(tau) of a
    # Lambertian flux, so by reciprocity it emits that share of a black body's n^2 J0,rad
    gap, n = 1.9, 3.5
    energy = np.linspace(gap, gap + 1.0, 8001)
    reference = float(radiative_saturation_current(gap, temperature_K=T))
    for tau in (0.05, 0.7, 3.0):
        out = downward_emission(energy, temperature_K=T, upper_index=n, upper_optical_depth=tau,
                                lower_index=n)
        expected = n**2 * reference * (1 - 2 * expn(3, tau))
        assert out.current_A_m2.sum() == pytest.approx(expected, rel=2e-5)


def test_layer_stack_emission_against_a_direct_planck_integral(tmp_path):
    # generalized Planck law (Würfel 1982) written again with the library's absorption and index,
    # integrated with scipy quad over energy and the polar angle inside the absorber; the escape
    # cone of the smallest index on the way down, Beer-Lambert in the tunnel layers (Snell)
    stack = _stack(tmp_path)
    circuit = compile_layer_stack(stack)
    coupling = circuit.optics["layer_details"]["couplings"][0]
    model = circuit.model
    layers, materials = model.layers, model.materials
    top = [1, 2]
    between = [3, 4, 5]
    lower = 6

    def alpha(j, e):
        lam = sc.h * sc.c / (e * sc.e) * 1e9
        a = float(materials[j].absorption_per_m(lam, temperature_K=T))
        density = layers[j].doping_cm3 * 1e6
        carriers = {"electron_density_m3": density} if layers[j].polarity == "n" else {"hole_density_m3": density}
        free = float(materials[j].free_carrier_absorption_per_m(lam, **carriers)) if j in between else 0.0
        return a + free

    def index(j, e):
        return float(materials[j].refractive_index(sc.h * sc.c / (e * sc.e) * 1e9))

    def at_energy(e, through):
        n_a = index(top[0], e)
        tau = sum(alpha(j, e) * layers[j].thickness_nm * 1e-9 for j in top)
        path = [(index(j, e), alpha(j, e) * layers[j].thickness_nm * 1e-9) for j in between]
        n_min = min([n for n, _ in path] + [index(lower, e)])
        theta_c = np.arcsin(min(1.0, n_min / n_a))

        def integrand(theta):
            value = (1 - np.exp(-tau / np.cos(theta))) * np.cos(theta) * np.sin(theta)
            if through:
                s = n_a * np.sin(theta)
                for n_j, tau_j in path:
                    cos_j = np.sqrt(max(1 - (s / n_j) ** 2, 0.0))
                    value *= np.exp(-tau_j / cos_j) if cos_j > 0 else 0.0
            return value

        angular = quad(integrand, 0, theta_c, epsabs=0, epsrel=1e-9)[0]
        return 2 * np.pi * _planck_radiance(e, n_a) * angular

    gap = float(circuit.element("top").gap_eV[0, 0])
    low, high = gap + ENERGY_SPAN_EV[0], gap + ENERGY_SPAN_EV[1]
    for through, ours in ((False, coupling.emitted_A_m2), (True, coupling.crossing_A_m2)):
        direct = quad(at_energy, low, high, args=(through,), epsabs=0, epsrel=1e-7, limit=400,
                      points=[gap])[0]
        # the grid's trapezoid on ENERGY_POINTS points against adaptive quad
        assert ours == pytest.approx(direct, rel=2e-4), (through, ENERGY_POINTS)


def test_photon_conservation_along_the_way(tmp_path):
    # collected <= absorbed <= crossing <= emitted downward <= (n_min^2) J0,rad of a black body
    circuit = compile_layer_stack(_stack(tmp_path))
    (found,) = circuit.optics["layer_details"]["couplings"]
    assert found.source == "layers"
    assert 0 < found.collected_A_m2 <= found.absorbed_A_m2 <= found.crossing_A_m2 <= found.emitted_A_m2
    assert found.emitted_A_m2 < 4.0**2 * found.reference_A_m2
    assert found.coupling == pytest.approx(found.collected_A_m2 / found.reference_A_m2, rel=1e-12)
    # a thick GaAs cell under a thin GaInP one: most of what crosses is collected
    assert found.collected_A_m2 > 0.8 * found.crossing_A_m2
    assert float(circuit.element("top").luminescent_coupling[0, 0]) == found.coupling
    # the top's radiative floor counts what it emits downward too (Miller et al. 2012, from
    # memory): its J01 covers the front emission and the downward emission, so the coupled light
    # never exceeds its recombination
    j01 = float(circuit.element("top").j01_A_m2(T)[0, 0])
    assert j01 >= (found.reference_A_m2 + found.emitted_A_m2) * (1 - 1e-12)


def test_coupled_layer_stack_conserves_photons_at_the_mpp(tmp_path):
    # the collected coupled current at the MPP is c J0,rad (exp(Vj/Vt) - 1) with the top's MPP
    # junction voltage (the element law), and below the top's whole downward emission there
    result = compute_result(_stack(tmp_path), curve_points=21)
    (found,) = result.circuit.optics["layer_details"]["couplings"]
    v_top = result.solutions[0].voltage_at_mpp_V["top"][0]
    boltzmann = np.expm1(v_top / KT)
    rows = {r["name"]: r for r in result.summary["subcells"]}
    coupled = rows["bottom"]["coupled_mA_cm2"]
    assert coupled == pytest.approx(found.collected_A_m2 * boltzmann / 10, rel=1e-9)
    assert coupled <= found.emitted_A_m2 * boltzmann / 10


def test_zero_override_solves_as_no_coupling_and_a_given_value_is_the_element_law(tmp_path):
    # the key's definition (no source needed): 0 couples nothing; a value c is the element law
    zero = compute_result(_stack(tmp_path, {"luminescent_coupling": 0}, "z.toml"), curve_points=21)
    assert zero.circuit.optics["layer_details"]["couplings"][0].source == "given"
    assert {r["name"]: r for r in zero.summary["subcells"]}["bottom"]["coupled_mA_cm2"] == 0.0
    given = compute_result(_stack(tmp_path, {"luminescent_coupling": 2.5}, "g.toml"), curve_points=21)
    (found,) = given.circuit.optics["layer_details"]["couplings"]
    assert found.coupling == 2.5 and found.from_layers > 0
    v_top = given.solutions[0].voltage_at_mpp_V["top"][0]
    coupled = {r["name"]: r for r in given.summary["subcells"]}["bottom"]["coupled_mA_cm2"]
    assert coupled == pytest.approx(2.5 * found.reference_A_m2 * np.expm1(v_top / KT) / 10, rel=1e-9)


@pytest.mark.parametrize("where, value, message", [
    ("bottom emitter", 1.0, "not the emitter or base of a subcell with another subcell below"),
    ("window", 1.0, "not the emitter or base of a subcell with another subcell below"),
    ("top emitter", -1.0, "luminescent_coupling"),
    ("top emitter", 80.0, "luminescent_coupling"),
    ("top emitter", "high", "luminescent_coupling")])
def test_bad_override_is_a_stack_error(tmp_path, where, value, message):
    path = tmp_path / "bad.toml"
    text = _stack_text_with(where, value)
    path.write_text(text)
    with pytest.raises(StackError) as error:
        compile_layer_stack(load_stack(path))
    assert message in str(error.value)
    assert error.value.fix and error.value.where


def _stack_text_with(where, value):
    import json

    text = ""
    parts = [("window", "AlInP", 25, "n:2e18", {"composition": 0.52}),
             ("top emitter", "GaInP", 60, "n:2e18", {"composition": 0.51, "diffusion_length_um": 2.0}),
             ("top base", "GaInP", 500, "p:5e16", {"composition": 0.51, "diffusion_length_um": 10.0}),
             ("tunnel p", "AlGaAs", 20, "p:5e19", {"composition": 0.3}),
             ("tunnel n", "AlGaAs", 20, "n:5e19", {"composition": 0.3}),
             ("bottom emitter", "GaAs", 100, "n:1e18", {"diffusion_length_um": 1.0}),
             ("bottom base", "GaAs", 2500, "p:1e17", {"diffusion_length_um": 5.0})]
    for name, material, thickness, doping, extra in parts:
        text += layer(name, material, thickness, doping, **extra)
        if name == where:
            text += f"luminescent_coupling = {json.dumps(value)}\n"
    return HEAD + text


# --------------------------------------------------------------------------- the yield year, 4 terminals
FOUR_T = """[conditions]
temperature_K = 298.15
terminals = 4
[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.75
string = 1
luminescent_coupling = {c}
[[element]]
kind = "subcell"
name = "bottom"
gap_eV = 1.12
string = 2
"""


def _ideal_mpp(photocurrent, j0, vt):
    """(P, V) at the MPP of one ideal diode, by scipy.optimize.minimize_scalar (bounded)."""
    from scipy.optimize import minimize_scalar

    voc = vt * np.log1p(photocurrent / j0)
    best = minimize_scalar(lambda v: -v * (photocurrent - j0 * np.expm1(v / vt)), bounds=(0, voc),
                           method="bounded", options={"xatol": 1e-12})
    return -best.fun, best.x


def test_four_terminal_yield_year_couples_across_strings(tmp_path):
    # each hour: the top string at its own MPP (scipy), its emission J0,rad (exp(V/Vt) - 1) times c
    # added to the bottom string's photocurrent, that string's MPP (scipy): the model of the
    # crossing coupling (Bremner et al. 2008, from memory) written again here
    from test_yield import WEATHER
    from siltandem.materials import weather as weather_files
    from siltandem.studies import yield_year as Y

    weather = weather_files.read_weather(WEATHER)
    runs = {}
    for c in (0.0, 1.0):
        path = tmp_path / f"four_{c}.toml"
        path.write_text(FOUR_T.format(c=c))
        runs[c] = Y.annual_yield(load_stack(path), weather)
    hourly = runs[1.0].hourly
    lit = np.flatnonzero(hourly["top.photocurrent_mA_cm2"].to_numpy() > 5)
    assert lit.size > 100
    for row in lit[:: lit.size // 12][:12]:
        t = hourly["cell_temperature_C"].to_numpy()[row] + 273.15
        vt = sc.k * t / sc.e
        j_top = hourly["top.photocurrent_mA_cm2"].to_numpy()[row] * 10
        j_bottom = hourly["bottom.photocurrent_mA_cm2"].to_numpy()[row] * 10
        j0_top = float(radiative_saturation_current(1.75, temperature_K=t))
        p_top, v_top = _ideal_mpp(j_top, j0_top, vt)
        gain = j0_top * np.expm1(v_top / vt)
        p_bottom, _ = _ideal_mpp(j_bottom + gain, float(radiative_saturation_current(1.12, temperature_K=t)), vt)
        assert hourly["power_W_m2"].to_numpy()[row] == pytest.approx(p_top + p_bottom, rel=1e-7)
        # each subcell on its own terminals is the same two strings here
        assert hourly["bottom.alone_W_m2"].to_numpy()[row] == pytest.approx(p_bottom, rel=1e-7)
        assert gain > 0
    coupled, plain = (runs[c].summary["annual_energy_kWh_m2"] for c in (1.0, 0.0))
    assert coupled > plain


def test_a_map_varies_the_layer_key(tmp_path):
    # the key in a study (no source needed): each design of the map is the stack with that key,
    # solved alone; c = 0 couples nothing, and the coupled designs gain while the top over-produces
    from siltandem import design_map, parse_vary

    stack = _stack(tmp_path)
    coupling = parse_vary("top emitter.luminescent_coupling=0:8:3", stack)
    thickness = parse_vary("top base.thickness_nm=3000:3200:2", stack)
    table = design_map(stack, coupling, thickness, progress=False)
    table = table[table["top base.thickness_nm"] == 3000]
    efficiency = table.sort_values("top emitter.luminescent_coupling")["efficiency_pct"].to_numpy()
    assert efficiency[0] < efficiency[1] < efficiency[2]
    for c, eta in zip((0.0, 4.0, 8.0), efficiency):
        path = tmp_path / f"alone_{c}.toml"
        text = Path(stack.source).read_text().replace("thickness_nm = 500\n", "thickness_nm = 3000\n")
        path.write_text(text.replace("diffusion_length_um = 2.0\n",
                                     f"diffusion_length_um = 2.0\nluminescent_coupling = {c}\n", 1))
        assert compute_result(load_stack(path), curve_points=21).summary["efficiency_pct"] == pytest.approx(
            eta, rel=1e-9)
