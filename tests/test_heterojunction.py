"""Heterojunction subcells: an emitter and a base of different materials.

Checks (each against something outside the heterojunction code):
- the depletion widths satisfy the two equations they come from (R. L. Anderson, Solid-State
  Electron. 5 (1962) 341; S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed. (2007),
  ch. 2): charge neutrality ND x_n = NA x_p and the potential drop
  q ND x_n^2 / (2 eps_n) + q NA x_p^2 / (2 eps_p) = Vbi - V; with one permittivity they are the
  homojunction's widths of the same book;
- the built-in voltage is the difference of the two sides' Fermi levels written from Boltzmann
  statistics (E_F,n = Ec - kT ln(Nc / ND), E_F,p = Ev + kT ln(Nv / NA); Sze & Ng ch. 1), on
  made-up band edges; for one material it is kT ln(NA ND / ni^2) (Sze & Ng ch. 2);
- the spike limit is the height at which Bethe's thermionic emission A* T^2 exp(-dE / kT) (Sze &
  Ng ch. 3) carries 100 times the photocurrent;
- a homojunction written as a heterojunction (the base a copy of the library's GaAs as a user
  material file, so the compiler takes the heterojunction path) gives the homojunction's numbers;
- a front wide-gap emitter collects less blue in its emitter than a homojunction emitter of the
  same thickness, and passes more to the junction and the base: Beer-Lambert (A. Beer, Ann. Phys.
  Chem. 86 (1852) 78) with the library's absorption of the two materials gives the direction;
- a heterojunction whose spike blocks the absorber's minority carriers, and one whose band edges
  leave no built-in voltage, are refused with the reason and a fix; an upside-down tunnel
  junction keeps its own message;
- the heterojunction stack works in run, map, match, placements and yield, each giving the
  numbers of a single run of the same file.
The stacks below are invented (layer values made up, material data from the library).
"""
import json
import re
from pathlib import Path

import numpy as np
import pytest

from siltandem import StackError, load_stack, run_stack
from siltandem.constants import ELEMENTARY_CHARGE_C, VACUUM_PERMITTIVITY_F_M, thermal_voltage_V
from siltandem.laws import heterojunction as law
from siltandem.laws import junction as junction_law
from siltandem.materials import load_material
from test_main_job import cli
from test_user_materials import copy_to_csv

ROOT = Path(__file__).resolve().parents[1]
HEAD = '[conditions]\nspectrum = "am1.5g"\ntemperature_K = 300\n'


def layer(name, material, thickness, doping, extra="", length_um=1.0):
    return (f'[[layer]]\nname = "{name}"\nmaterial = "{material}"\nthickness_nm = {thickness}\n'
            f'doping = "{doping}"\ndiffusion_length_um = {length_um}\nsrv_cm_s = 1e3\n{extra}\n')


# INVENTED DEMO DATA: a front heterojunction (n-Al0.3Ga0.7As emitter on p-GaAs) and the
# homojunction of the same layers
FRONT_HETERO = (layer("cell emitter", "AlGaAs", 100, "n:2e18", "composition = 0.3")
                + layer("cell base", "GaAs", 2500, "p:1e17", length_um=5.0))
HOMO = (layer("cell emitter", "GaAs", 100, "n:2e18")
        + layer("cell base", "GaAs", 2500, "p:1e17", length_um=5.0))


def write(folder, text, name="s.toml", head=HEAD):
    path = Path(folder) / name
    path.write_text(head + text)
    return path


def run(path, points=60):
    return run_stack(load_stack(path), curve_points=points)


# ------------------------------------------------------------------------------------- the law
@pytest.mark.parametrize("eps_n, eps_p, nd, na, v", [
    (12.9, 12.1, 2e24, 1e23, 0.0), (11.7, 12.9, 1e22, 5e23, 0.6), (12.0, 12.0, 1e23, 1e23, -1.0)])
def test_depletion_widths_solve_neutrality_and_poisson(eps_n, eps_p, nd, na, v):
    # Anderson 1962; Sze & Ng (2007) ch. 2
    vbi = 1.4
    out = law.depletion(v, built_in_V=vbi, acceptor_density_m3=na, donor_density_m3=nd,
                        n_relative_permittivity=eps_n, p_relative_permittivity=eps_p)
    q, e0 = ELEMENTARY_CHARGE_C, VACUUM_PERMITTIVITY_F_M
    xn, xp = float(out.n_side_width_m), float(out.p_side_width_m)
    assert nd * xn == pytest.approx(na * xp, rel=1e-12)
    drop = q * nd * xn**2 / (2 * eps_n * e0) + q * na * xp**2 / (2 * eps_p * e0)
    assert drop == pytest.approx(vbi - v, rel=1e-12)
    assert float(out.width_m) == pytest.approx(xn + xp, rel=1e-15)


def test_one_permittivity_gives_the_homojunction_widths():
    # Sze & Ng (2007) ch. 2: W = sqrt(2 eps (Vbi - V)(NA + ND) / (q NA ND)), xn = W NA / (NA + ND)
    ni, t = 2.1e12, 300.0
    homo = junction_law.abrupt_junction(0.2, acceptor_density_m3=1e23, donor_density_m3=2e24,
                                        relative_permittivity=12.9, intrinsic_density_m3=ni,
                                        temperature_K=t)
    het = law.depletion(0.2, built_in_V=homo.built_in_V, acceptor_density_m3=1e23,
                        donor_density_m3=2e24, n_relative_permittivity=12.9, p_relative_permittivity=12.9)
    for a, b in ((het.n_side_width_m, homo.n_side_width_m), (het.p_side_width_m, homo.p_side_width_m)):
        assert float(a) == pytest.approx(float(b), rel=1e-12)


def test_built_in_voltage_is_the_fermi_level_difference():
    # made-up band edges and densities of states; ni^2 = Nc Nv exp(-Eg / kT) (Sze & Ng ch. 1)
    t = 300.0
    vt = float(thermal_voltage_V(t))
    n_edges, p_edges = (-3.9, -5.8), (-4.07, -5.49)          # (Ec, Ev) [eV]
    n_states, p_states = (8.0e23, 1.2e25), (4.7e23, 9.0e24)   # (Nc, Nv) [m^-3]

    def ni(edges, states):
        return np.sqrt(states[0] * states[1] * np.exp(-(edges[0] - edges[1]) / vt))

    nd, na = 2e24, 1e23
    fermi_n = n_edges[0] - vt * np.log(n_states[0] / nd)
    fermi_p = p_edges[1] + vt * np.log(p_states[1] / na)
    vbi = law.built_in_voltage_V(acceptor_density_m3=na, donor_density_m3=nd,
                                 n_intrinsic_density_m3=ni(n_edges, n_states),
                                 p_intrinsic_density_m3=ni(p_edges, p_states), n_band_edges_eV=n_edges,
                                 p_band_edges_eV=p_edges, n_states_m3=n_states, p_states_m3=p_states,
                                 temperature_K=t)
    assert float(vbi) == pytest.approx(fermi_n - fermi_p, rel=1e-12)
    # one material: kT ln(NA ND / ni^2)
    same = law.built_in_voltage_V(acceptor_density_m3=na, donor_density_m3=nd,
                                  n_intrinsic_density_m3=ni(p_edges, p_states),
                                  p_intrinsic_density_m3=ni(p_edges, p_states), n_band_edges_eV=p_edges,
                                  p_band_edges_eV=p_edges, n_states_m3=p_states, p_states_m3=p_states,
                                  temperature_K=t)
    assert float(same) == pytest.approx(vt * np.log(na * nd / ni(p_edges, p_states) ** 2), rel=1e-12)


def test_spike_limit_is_where_thermionic_emission_carries_the_margin():
    # Bethe's thermionic emission J = A* T^2 exp(-dE / kT) (Sze & Ng ch. 3); A* of GaAs electrons
    # 8.0e4 A/(m^2 K^2) (0.067 m0 x 120 A/(cm^2 K^2), from memory)
    a_star, t, j = 8.0e4, 300.0, 700.0
    limit = float(law.largest_crossable_spike_eV(richardson_A_m2_K2=a_star, photocurrent_A_m2=j,
                                                 temperature_K=t))
    assert a_star * t * t * np.exp(-limit / float(thermal_voltage_V(t))) == pytest.approx(100 * j, rel=1e-12)
    assert 0.25 < limit < 0.35


# ----------------------------------------------------------------------------------- the stacks
def test_a_homojunction_written_as_a_heterojunction_gives_identical_numbers(tmp_path):
    # the base a copy of the library's GaAs as a user file: another material to the compiler
    copy_to_csv("gaas", tmp_path, new_name="Mine")
    reference = run(write(tmp_path, HOMO, name="homo.toml"))
    as_hetero = write(tmp_path, HOMO.replace('name = "cell base"\nmaterial = "GaAs"',
                                             'name = "cell base"\nmaterial = "mine.toml"'), name="het.toml")
    result = run(as_hetero)
    assert "heterojunction" in result.circuit.optics["layer_details"]["subcells"]["cell"]
    assert "heterojunction" not in reference.circuit.optics["layer_details"]["subcells"]["cell"]
    for key in ("efficiency_pct", "voc_V", "jsc_mA_cm2", "fill_factor_pct"):
        assert result.summary[key] == pytest.approx(reference.summary[key], rel=1e-12), key
    for part in ("emitter_mA_cm2", "depletion_mA_cm2", "base_mA_cm2"):
        assert result.circuit.optics["collected_A_m2"]["cell"][part] == pytest.approx(
            reference.circuit.optics["collected_A_m2"]["cell"][part], rel=1e-12)


def test_a_wide_gap_emitter_collects_less_blue_in_the_emitter(tmp_path):
    # Beer-Lambert: the light leaving a 100 nm emitter is exp(-alpha d); the library's AlGaAs
    # absorbs less than its GaAs from 370 nm to the GaAs edge (below 360 nm the two are within a
    # few per cent and cross), so its emitter absorbs (and collects) less and passes more
    wavelength = np.linspace(370.0, 850.0, 97)
    wide = load_material("AlGaAs", 0.3).absorption_per_m(wavelength, temperature_K=300.0)
    narrow = load_material("GaAs").absorption_per_m(wavelength, temperature_K=300.0)
    assert np.all(np.exp(-wide * 100e-9) > np.exp(-narrow * 100e-9))
    hetero = run(write(tmp_path, FRONT_HETERO, name="het.toml")).circuit.optics["collected_A_m2"]["cell"]
    homo = run(write(tmp_path, HOMO, name="homo.toml")).circuit.optics["collected_A_m2"]["cell"]
    assert hetero["emitter_mA_cm2"] < 0.8 * homo["emitter_mA_cm2"]
    assert hetero["depletion_mA_cm2"] + hetero["base_mA_cm2"] > homo["depletion_mA_cm2"] + homo["base_mA_cm2"]


def test_the_narrower_gap_sets_the_subcell_gap_and_j01(tmp_path):
    # the dark current of each side from its own material: the wide-gap emitter's n_i^2 is
    # exp(-(1.80 - 1.42) eV / kT) ~ 4e-7 of GaAs's, so the GaAs base sets J01 and the gap
    result = run(write(tmp_path, FRONT_HETERO, name="het.toml"))
    details = result.circuit.optics["layer_details"]["subcells"]["cell"]
    assert details["heterojunction"]["dark_side"] == "base"
    gap = float(result.circuit.element("cell").gap_eV.reshape(-1)[0])
    assert gap == pytest.approx(float(load_material("GaAs").gap_eV(300.0)), rel=1e-12)
    assert details["j0_emitter_A_m2"] < 1e-3 * details["j01_base_A_m2"]


def test_a_blocking_spike_is_refused_with_the_reason(tmp_path):
    # p-GaP on n-Si: the affinity rule (Anderson 1962; GaP 3.8 eV, Si 4.05 eV) puts the GaP
    # valence band 0.9 eV below silicon's, far above the ~0.35 eV thermionic emission passes
    path = write(tmp_path, layer("e", "GaP", 100, "p:2e18") + layer("b", "Si", 20000, "n:1e16"))
    with pytest.raises(StackError, match=r"0\.\d\d eV spike in the valence band.*blocks the holes") as info:
        run(path)
    assert info.value.fix and "layer 1 'e' / layer 2 'b'" in info.value.where
    done = cli("run", path)
    assert done.returncode == 2 and "Traceback" not in done.stderr and "spike" in done.stderr


def test_bands_too_far_apart_leave_no_built_in_voltage(tmp_path):
    # a copy of GaAs with its affinity raised by 1.6 eV: its conduction band lies below the
    # valence band of the GaAs base (broken gap), so the two Fermi levels leave no built-in voltage
    copy_to_csv("gaas", tmp_path, new_name="Deep")
    text = (tmp_path / "deep.toml").read_text()
    (tmp_path / "deep.toml").write_text(re.sub(r"(\[electron_affinity\]\nvalue_eV = )4.07", r"\g<1>5.67", text))
    path = write(tmp_path, layer("e", "deep.toml", 100, "n:2e18") + layer("b", "GaAs", 2000, "p:1e17"))
    with pytest.raises(StackError, match="built-in voltage of -?0\\.\\d+ V.*makes no cell") as info:
        run(path)
    assert "closer band edges" in info.value.fix


def test_an_upside_down_tunnel_junction_keeps_its_message(tmp_path):
    # the n++ layer under a GaInP base makes a p-n pair of two materials: still named as the
    # upside-down tunnel junction it is, not taken for a heterojunction
    text = (layer("top emitter", "GaInP", 100, "n:1e18", "composition = 0.51")
            + layer("top base", "GaInP", 1000, "p:1e17", "composition = 0.51")
            + layer("t1", "GaAs", 20, "n:1e19") + layer("t2", "GaAs", 20, "p:5e19")
            + layer("bottom emitter", "GaAs", 100, "n:1e18") + layer("bottom base", "GaAs", 2000, "p:1e17"))
    with pytest.raises(StackError, match="looks upside down"):
        run(write(tmp_path, text))


# ---------------------------------------------------------------------------- every command
def test_a_heterojunction_stack_in_run_map_and_match(tmp_path):
    from siltandem import design_map, parse_vary

    path = write(tmp_path, FRONT_HETERO, name="h.toml")
    single = run(path)
    done = cli("run", path, "--json", tmp_path / "r.json")
    assert done.returncode == 0, done.stderr
    assert json.loads((tmp_path / "r.json").read_text())["efficiency_pct"] == pytest.approx(
        single.summary["efficiency_pct"], rel=1e-6)
    stack = load_stack(path)
    table = design_map(stack, parse_vary("cell emitter.thickness_nm=50:100:2", stack),
                       parse_vary("cell base.thickness_nm=2000:2500:2", stack))
    row = table[(table["cell emitter.thickness_nm"] == 100) & (table["cell base.thickness_nm"] == 2500)]
    assert float(row["efficiency_pct"].iloc[0]) == pytest.approx(single.summary["efficiency_pct"], rel=1e-6)
    done = cli("map", path, "--vary", "cell emitter.thickness_nm=50:100:2", "--vary",
               "cell emitter.composition=0.2:0.3:2", "--csv", tmp_path / "m.csv", "--quiet")
    assert done.returncode == 0, done.stderr
    done = cli("match", path, "--vary", "cell base.thickness_nm=1000:3000:3", "--csv", tmp_path / "t.csv",
               "--quiet")
    assert done.returncode == 0, done.stderr
    assert (tmp_path / "t.csv").read_text().count("\n") >= 4


def test_a_heterojunction_top_cell_in_placements(tmp_path):
    # the invented placements demo with its top emitter of another GaAsP composition (a front
    # heterojunction): every candidate compiles and ranks, each as a run of its stack
    from siltandem import rank_placements

    text = (ROOT / "stacks" / "demo_placements.toml").read_text()
    changed = text.replace('name = "top emitter"\nmaterial = "GaAsP"\ncomposition = 0.23',
                           'name = "top emitter"\nmaterial = "GaAsP"\ncomposition = 0.35', 1)
    assert changed != text
    path = tmp_path / "p.toml"
    path.write_text(changed)
    table = rank_placements(load_stack(path))
    assert len(table) == 3 and np.all(np.isfinite(table["efficiency_pct"]))
    done = cli("placements", path, "--csv", tmp_path / "p.csv", "--quiet")
    assert done.returncode == 0, done.stderr


def test_a_year_of_a_heterojunction_stack(tmp_path):
    # the year's standard-conditions efficiency is the main job's on the same file (the year
    # scales each side's J01 with its own n_i; at the stack's temperature nothing moves)
    from siltandem import annual_yield, read_weather
    import pvlib

    weather = read_weather(Path(pvlib.__file__).parent / "data" / "723170TYA.CSV")
    path = write(tmp_path, FRONT_HETERO, name="y.toml", head=HEAD.replace("300", "298.15"))
    year = annual_yield(load_stack(path), weather).summary
    assert year["efficiency_at_standard_conditions_pct"] == pytest.approx(
        run(path).summary["efficiency_pct"], rel=1e-6)
    assert year["annual_energy_kWh_m2"] > 0


def test_each_side_keeps_its_own_intrinsic_density_at_other_temperatures(tmp_path):
    # the diffusion J01 of a side is proportional to its n_i^2 (Sze & Ng ch. 2, the ideal diode),
    # so at another temperature each side's part scales with its own material's n_i(T)^2; the
    # radiative floor of the narrower gap (generalized Planck law) bounds the sum from below
    from siltandem.circuit.compile import compile_stack
    from siltandem.circuit.from_layers import dark_currents_at
    from siltandem.laws.radiative import radiative_saturation_current

    circuit = compile_stack(load_stack(write(tmp_path, FRONT_HETERO, name="t.toml")))
    details = circuit.optics["layer_details"]["subcells"]["cell"]
    emitter, base = load_material("AlGaAs", 0.3), load_material("GaAs")
    temperatures = np.array([280.0, 300.0, 340.0])
    j01, j02, gap, _ = dark_currents_at(circuit.model, circuit, temperatures)["cell"]

    def ratio(m):
        return m.intrinsic_density_per_m3(temperatures) / m.intrinsic_density_per_m3(300.0)
    by_hand = (details["j0_emitter_A_m2"] * ratio(emitter) ** 2 + details["j01_base_A_m2"] * ratio(base) ** 2)
    floor = radiative_saturation_current(base.gap_eV(temperatures), temperature_K=temperatures)
    assert np.allclose(j01, np.maximum(by_hand, floor), rtol=1e-12)
    assert np.allclose(gap, base.gap_eV(temperatures), rtol=1e-12)
    assert np.allclose(j02, float(circuit.element("cell").j02_A_m2.reshape(-1)[0]) * ratio(base), rtol=1e-12)


def test_a_silicon_base_under_a_wide_gap_emitter_keeps_silicons_base_law(tmp_path):
    # an n-GaP emitter on a p-Si base (a GaP/Si heterojunction; the affinity rule puts a 0.25 eV
    # conduction-band spike before the silicon's electrons, which thermionic emission passes):
    # the Si base keeps the same base law (intrinsic recombination, band-gap narrowing) as under a
    # Si emitter, and the GaP emitter's diffusion J0 carries its n_i^2 ~ exp(-Eg / kT) (Sze & Ng
    # ch. 1): exp(-(2.26 - 1.12) eV / kT) ~ 1e-19 of silicon's, so the cell's Voc rises
    from siltandem.circuit.compile import compile_stack

    def cell(emitter_material):
        text = ('[optics]\nback_reflectance = 0.9\n'
                + layer("cell emitter", emitter_material, 20, "n:1e19", length_um=0.1)
                + layer("cell base", "Si", 150000, "p:1e16").replace("diffusion_length_um = 1.0", "lifetime_ns = 1e6"))
        return write(tmp_path, text, name=f"{emitter_material}.toml")

    hetero, homo = compile_stack(load_stack(cell("GaP"))), compile_stack(load_stack(cell("Si")))
    details = [c.optics["layer_details"]["subcells"]["cell"] for c in (hetero, homo)]
    assert details[0]["silicon_base_law"] and details[1]["silicon_base_law"]
    for a, b in zip(hetero.element("cell").bulk, homo.element("cell").bulk):
        assert np.array_equal(a, b)
    assert details[0]["j0_emitter_A_m2"] < 1e-12 * details[1]["j0_emitter_A_m2"]
    assert run(cell("GaP")).summary["voc_V"] > run(cell("Si")).summary["voc_V"]   # 597 against 589 mV seen


def test_a_rear_heterojunction_takes_the_absorber_emitter_for_its_dark_current(tmp_path):
    # a rear heterojunction: a thick n-GaAs emitter (the absorber) on a thin p-Al0.3Ga0.7As base.
    # The holes of the GaAs meet a valence-band step of about 0.16 eV (0.3 x the 0.53 eV GaAs/AlAs
    # offset of Vurgaftman et al. 2001, linear), below the ~0.3 eV thermionic emission passes, so
    # the cell is accepted; the GaAs side has the smaller gap and sets the gap and J01
    text = (layer("cell emitter", "GaAs", 2000, "n:1e17", length_um=3.0)
            + layer("cell base", "AlGaAs", 200, "p:1e18", "composition = 0.3"))
    result = run(write(tmp_path, text, name="rear.toml"))
    details = result.circuit.optics["layer_details"]["subcells"]["cell"]
    steps = details["heterojunction"]["minority_steps_eV"]
    assert details["heterojunction"]["dark_side"] == "emitter"
    assert 0.1 < steps["emitter"] < 0.25
    assert details["j01_base_A_m2"] < 1e-3 * details["j0_emitter_A_m2"]
    gap = float(result.circuit.element("cell").gap_eV.reshape(-1)[0])
    assert gap == pytest.approx(float(load_material("GaAs").gap_eV(300.0)), rel=1e-12)


def test_the_json_summary_shows_the_band_diagram(tmp_path):
    # the run's JSON lists a heterojunction subcell's offsets source, built-in voltage, gaps and the
    # steps its minority carriers meet; the GaAs electrons of the front heterojunction meet the
    # conduction-band step Ec(AlGaAs) - Ec(GaAs) = (Ev,AlGaAs + Eg,AlGaAs) - (Ev,GaAs + Eg,GaAs) on
    # the valence-band scale of Vurgaftman et al. 2001
    from siltandem.materials.offsets import valence_band_maximum_eV

    path = write(tmp_path, FRONT_HETERO, name="j.toml")
    done = cli("run", path, "--json", tmp_path / "r.json")
    assert done.returncode == 0, done.stderr
    (row,) = json.loads((tmp_path / "r.json").read_text())["subcells"]
    band = row["heterojunction"]
    emitter, base = load_material("AlGaAs", 0.3), load_material("GaAs")
    step = ((valence_band_maximum_eV(emitter)[0] + float(emitter.gap_eV(300.0)))
            - (valence_band_maximum_eV(base)[0] + float(base.gap_eV(300.0))))
    assert band["minority_steps_eV"]["base"] == pytest.approx(step, rel=1e-12)
    assert "Vurgaftman" in band["offset_source"] and band["dark_side"] == "base"
