"""Doping-dependent mobilities of alloys (materials/recombination.py).

Sources: D. M. Caughey, R. E. Thomas, Proc. IEEE 55 (1967) 2192 (the law's form: the mean of
mu_max and mu_min at N = N_ref, written again here); the interpolation's endpoints are its end
members' own laws (M. Sotoodeh, A. H. Khalid, A. A. Rezazadeh, J. Appl. Phys. 87 (2000) 2890 give
the binaries, from memory, in the library's files).
"""
from importlib import resources

import pytest

from siltandem import StackError, load_stack, run_stack
from siltandem.materials import load_material
from siltandem.materials.recombination import material_document, minority_mobility_cm2_V_s

#: INVENTED parameters (not a check value: the checks are the law's form and its range)
BLOCK = """
[mobility.electron_doping]
mu_max_cm2_V_s = 3000
mu_min_cm2_V_s = 300
n_ref_cm3 = 2e17
lambda = 0.7
composition_range = [0.48, 0.54]
source = "invented for a test"
"""


def _without_doping_laws(text):
    """A library alloy file's text less its [mobility.*_doping] tables (they sit before
    [absorption.direct])."""
    if "[mobility.electron_doping]" not in text:
        return text
    head, _, rest = text.partition("[mobility.electron_doping]")
    _, _, tail = rest.partition("[absorption.direct]")
    assert "doping]" not in head + tail
    return head + "[absorption.direct]" + tail


def _copy(tmp_path, library_file, name, replace=None, extra=""):
    text = _without_doping_laws(resources.files("siltandem").joinpath(f"materials/{library_file}").read_text())
    text = text.replace(f'name = "{text.split(chr(34))[1]}"', f'name = "{name}"', 1)
    for old, new in (replace or {}).items():
        assert old in text
        text = text.replace(old, new)
    path = tmp_path / f"{name.lower()}.toml"
    path.write_text(text.replace('aliases = ["InGaP", "gallium indium phosphide", "indium gallium phosphide"]',
                                 "aliases = []") + extra)
    return str(path)


def _mobility(path, x, doping, carrier="electron"):
    material = load_material(path, x)
    return minority_mobility_cm2_V_s(material, material_document(path, material), doping, carrier)


def test_an_alloy_files_own_law_holds_in_its_range(tmp_path):
    path = _copy(tmp_path, "gainp.toml", "MyGaInP", extra=BLOCK)
    # at N_ref: (mu_max + mu_min) / 2 (Caughey-Thomas 1967); far below: mu_max
    assert _mobility(path, 0.51, 2e17) == pytest.approx(1650.0, rel=1e-12)
    assert _mobility(path, 0.51, 1e10) == pytest.approx(3000.0, rel=1e-5)
    # outside its composition range (and GaP indirect): no law, the library's fixed value stays
    assert _mobility(path, 0.60, 2e17) is None
    # the hole law is not given: none
    assert _mobility(path, 0.51, 2e17, "hole") is None


def test_the_interpolation_ends_at_its_binaries(tmp_path):
    # an alloy of two direct end members (GaAs and InAs, both Gamma): at x = 1 and x = 0 the
    # interpolated law is the end member's own, at every doping
    path = _copy(tmp_path, "gainp.toml", "MyInGaAs",
                 replace={'end_at_x1 = "GaP"': 'end_at_x1 = "GaAs"', 'end_at_x0 = "InP"': 'end_at_x0 = "InAs"'})
    for doping in (1e15, 1e17, 1e19):
        for x, end in ((1.0, "GaAs"), (0.0, "InAs")):
            own = minority_mobility_cm2_V_s(load_material(end), material_document(end), doping, "electron")
            assert _mobility(path, x, doping) == pytest.approx(own, rel=1e-12), (x, doping)
    # between them: between the two (1/mu linear in x)
    middle = _mobility(path, 0.5, 1e17)
    ends = [_mobility(path, x, 1e17) for x in (0.0, 1.0)]
    assert min(ends) < middle < max(ends)


# --- the library's GaInP law (issue 17) ------------------------------------------------------
#: M. Sotoodeh, A. H. Khalid, A. A. Rezazadeh, J. Appl. Phys. 87 (2000) 2890, Ga0.51In0.49P (FROM
#: MEMORY, uncertain: the paper could not be read where this was written): (mu_max, mu_min [cm^2/Vs],
#: N_ref [cm^-3], lambda), written here independently of gainp.toml
SOTOODEH_GAINP = {"electron": (4300.0, 400.0, 2e16, 0.70), "hole": (150.0, 15.0, 1.5e17, 0.8)}

# INVENTED layer values (not check values): a GaInP subcell whose base is far thicker than its
# diffusion length, so that its base J0 is the long-base q n_i^2 D / (N L) (W. Shockley, Bell Syst.
# Tech. J. 28 (1949) 435)
GAINP_CELL = '''[conditions]
spectrum = "am1.5g"
temperature_K = 300

[[layer]]
name = "cell emitter"
material = "{m}"
composition = {x}
thickness_nm = 50
doping = "n:2e18"
srh_lifetime_ns = 1
srv_cm_s = 1e3

[[layer]]
name = "cell base"
material = "{m}"
composition = {x}
thickness_nm = 20000
doping = "p:1e17"
srh_lifetime_ns = 0.1
srv_cm_s = 1e3
'''


def _caughey_thomas(doping, mu_max, mu_min, n_ref, exponent):
    # D. M. Caughey, R. E. Thomas, Proc. IEEE 55 (1967) 2192, written again here
    return mu_min + (mu_max - mu_min) / (1.0 + (doping / n_ref) ** exponent)


@pytest.mark.parametrize("carrier", ["electron", "hole"])
@pytest.mark.parametrize("doping", [1e15, 2e16, 1e17, 1.5e17, 1e18, 1e19])
@pytest.mark.parametrize("x", [0.48, 0.51, 0.54])
def test_the_library_gainp_law_is_the_sources(carrier, doping, x):
    material = load_material("GaInP", x)
    got = minority_mobility_cm2_V_s(material, material_document("GaInP", material), doping, carrier)
    assert got == pytest.approx(_caughey_thomas(doping, *SOTOODEH_GAINP[carrier]), rel=1e-12)


def test_the_library_gainp_law_at_its_reference_doping():
    # at N_ref the law is the mean of mu_max and mu_min (Caughey & Thomas 1967); values of the source
    material = load_material("GaInP", 0.51)
    document = material_document("GaInP", material)
    assert minority_mobility_cm2_V_s(material, document, 2e16, "electron") == pytest.approx(2350.0, rel=1e-12)
    assert minority_mobility_cm2_V_s(material, document, 1.5e17, "hole") == pytest.approx(82.5, rel=1e-12)
    # the name with its fractions finds the same data
    assert minority_mobility_cm2_V_s(material, material_document("Ga0.51In0.49P", material), 2e16,
                                     "electron") == pytest.approx(2350.0, rel=1e-12)


def test_the_other_library_alloys_keep_their_fixed_mobilities():
    # no published doping law found for them (issue 17): unchanged, the fixed [mobility] value stays
    for name, x in (("AlGaAs", 0.3), ("AlInP", 0.52), ("GaAsP", 0.23)):
        material = load_material(name, x)
        for carrier in ("electron", "hole"):
            assert minority_mobility_cm2_V_s(material, material_document(name, material), 1e17, carrier) is None


def _gainp_without_law(folder):
    text = _without_doping_laws(resources.files("siltandem").joinpath("materials/gainp.toml").read_text())
    path = folder / "fixed_gainp.toml"
    path.write_text(text.replace('name = "GaInP"', 'name = "FixedGaInP"')
                    .replace('aliases = ["InGaP", "gallium indium phosphide", "indium gallium phosphide"]',
                             "aliases = []"))
    return path


def test_a_gainp_subcell_uses_the_law(tmp_path):
    from siltandem.circuit.compile import compile_stack
    from siltandem.constants import BOLTZMANN_EV_K

    runs = {}
    for key, material in (("law", "GaInP"), ("fixed", str(_gainp_without_law(tmp_path)))):
        path = tmp_path / f"{key}.toml"
        path.write_text(GAINP_CELL.format(m=material, x=0.51))
        result = run_stack(load_stack(path), curve_points=40)
        runs[key] = (compile_stack(load_stack(path)).model.subcells[0],
                     result.circuit.optics["layer_details"]["subcells"]["cell"])
    (model, details), (fixed_model, fixed_details) = runs["law"], runs["fixed"]
    # Einstein relation D = mu kT/q with the source's law: base electrons at 1e17, emitter holes at 2e18
    kt = BOLTZMANN_EV_K * 300.0
    assert model.base_diffusivity_m2_s == pytest.approx(
        _caughey_thomas(1e17, *SOTOODEH_GAINP["electron"]) * 1e-4 * kt, rel=1e-9)
    assert model.emitter_diffusivity_m2_s == pytest.approx(
        _caughey_thomas(2e18, *SOTOODEH_GAINP["hole"]) * 1e-4 * kt, rel=1e-9)
    # the copy without the law keeps the fixed value (1/mu linear between the binaries)
    material = load_material("GaInP", 0.51)
    assert fixed_model.base_diffusivity_m2_s == pytest.approx(material.electron_mobility_m2_V_s * kt, rel=1e-9)
    # long base with its lifetime given: L = sqrt(D tau), so its J0 = q n_i^2 D / (N L) scales as sqrt(D)
    base = details["j01_diffusion_A_m2"] - details["j0_emitter_A_m2"]
    fixed_base = fixed_details["j01_diffusion_A_m2"] - fixed_details["j0_emitter_A_m2"]
    ratio = model.base_diffusivity_m2_s / fixed_model.base_diffusivity_m2_s
    assert ratio > 2.5                                   # the law really differs from the fixed value
    assert base / fixed_base == pytest.approx(ratio**0.5, rel=1e-6)
    assert model.base_length_m == pytest.approx(fixed_model.base_length_m * ratio**0.5, rel=1e-9)
    # nothing else moves: the radiative floor is the same
    assert details["j01_radiative_floor_A_m2"] == fixed_details["j01_radiative_floor_A_m2"]


def test_a_gainp_subcell_outside_the_laws_range_is_refused(tmp_path):
    path = tmp_path / "outside.toml"
    path.write_text(GAINP_CELL.format(m="GaInP", x=0.60))
    with pytest.raises(StackError) as caught:
        run_stack(load_stack(path), curve_points=40)
    error = caught.value
    assert error.file is not None and error.file.endswith("outside.toml")
    assert "key composition" in error.where and "cell" in error.where
    assert "0.48-0.54" in error.problem and "0.6" in error.problem
    assert "between 0.48 and 0.54" in error.fix and "[mobility." in error.fix


@pytest.mark.parametrize("edit, where, problem", [
    (("lambda = 0.7\n", ""), "key mobility.electron_doping", "missing lambda"),
    (("mu_min_cm2_V_s = 300", "mu_min_cm2_V_s = 3300"), "key mobility.electron_doping.mu_max_cm2_V_s",
     "mu_max_cm2_V_s >= mu_min_cm2_V_s"),
    (("n_ref_cm3 = 2e17", "n_ref_cm3 = -2e17"), "key mobility.electron_doping.n_ref_cm3", "> 0"),
    (("[0.48, 0.54]", "[0.54, 0.48]"), "key mobility.electron_doping.composition_range", "x_low <= x_high"),
    (("lambda = 0.7", "lambda = 0.7\nmu_maximum = 3"), "key mobility.electron_doping", "unknown key mu_maximum"),
])
def test_a_bad_mobility_law_in_a_material_file(tmp_path, edit, where, problem):
    from test_main_job import cli

    old, new = edit
    assert old in BLOCK
    path = _copy(tmp_path, "gainp.toml", "MyGaInP", extra=BLOCK.replace(old, new))
    stack = tmp_path / "s.toml"
    stack.write_text(GAINP_CELL.format(m=path, x=0.51))
    with pytest.raises(StackError) as caught:
        load_stack(stack)
    error = caught.value
    assert error.file.endswith("mygainp.toml") and error.where.startswith(where + " (") and problem in error.problem
    assert "[mobility.electron_doping]" in error.fix
    done = cli("run", stack)
    assert done.returncode == 2 and "Traceback" not in done.stderr and "mygainp.toml" in done.stderr


def test_the_materials_command_names_the_gainp_laws_source():
    from test_main_job import cli

    done = cli("materials", "Ga0.51In0.49P")
    assert done.returncode == 0
    line = next(row for row in done.stdout.splitlines() if "electron mobility at 1e17" in row)
    # Caughey-Thomas at 1e17 with the source's parameters: 400 + 3900 / (1 + 5^0.7) = 1354.7
    assert "1354.7" in line and "Ga0.51In0.49P electrons (from memory" in line


def test_a_map_over_gainp_compositions_refuses_those_outside_the_law(tmp_path):
    from test_main_job import cli

    stack = tmp_path / "s.toml"
    stack.write_text(GAINP_CELL.format(m="GaInP", x=0.51).replace("20000", "1000"))
    done = cli("map", stack, "--vary", "cell emitter.composition=0.50:0.60:3", "--vary",
               "cell base.thickness_nm=900:1000:2", "--csv", tmp_path / "m.csv", "--quiet")
    assert done.returncode == 2 and "Traceback" not in done.stderr
    assert "key composition" in done.stderr and "0.48-0.54" in done.stderr
    assert not (tmp_path / "m.csv").exists()
