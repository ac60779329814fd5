"""The user's own material files and the ``[materials] folder``; ordered GaInP (``gap_eV``).

Checks:
- a copy of a library material (its TOML, with its absorption and index tables moved to CSV
  files beside it) used as a material file gives bit-identical results to the library name: the
  same numbers through the same code (the library's data as the reference);
- the n,k form of a table: alpha = 4 pi k / lambda (M. Born, E. Wolf, Principles of Optics,
  ch. 14) gives the library's absorption back to rounding;
- ordered GaInP: the lowest gap moves to gap_eV and the direct absorption edge moves by the same
  energy (the library's rigid-shift rule); n_i follows exp(-Eg / 2kT) (S. M. Sze, K. K. Ng,
  Physics of Semiconductor Devices, 3rd ed. (2007), ch. 1) with the density of states unchanged;
- bad files give StackError naming the material file, the key and the fix; a changed material
  file changes a study's chunk key.
The stack below is invented (layer values made up).
"""
from importlib import resources
import math
from pathlib import Path
import re

import numpy as np
import pytest

from siltandem import StackError, load_stack, run_stack
from siltandem.constants import BOLTZMANN_EV_K, HC_EV_NM
from siltandem.materials import load_material
from siltandem.stack.inputs import input_files
from siltandem.studies.fingerprint import sweep_key
from test_main_job import cli

LIBRARY = Path(str(resources.files("siltandem.materials")))

# INVENTED DEMO DATA: a single junction written as layers; {m} and {x} fill in the absorber
STACK = '''[conditions]
spectrum = "am1.5g"
temperature_K = 300
{head}
[[layer]]
name = "cell emitter"
material = "{m}"
{x}thickness_nm = 100
doping = "n:2e18"
diffusion_length_um = 1.0
srv_cm_s = 1e3

[[layer]]
name = "cell base"
material = "{m}"
{x}thickness_nm = 2500
doping = "p:1e17"
diffusion_length_um = 5.0
srv_cm_s = 1e3
'''


def stack_file(folder, material, composition=None, head="", name="s.toml"):
    x = f"composition = {composition}\n" if composition is not None else ""
    path = Path(folder) / name
    path.write_text(STACK.format(m=material, x=x, head=head))
    return path


def _array(text, key):
    return [float(v) for v in re.search(rf"^{key} = \[([^\]]*)\]", text, re.M).group(1).split(",")]


def copy_to_csv(name, folder, *, new_name):
    """The library file ``name``.toml copied to ``folder`` under another name, its absorption
    table (if any) and refractive index moved to CSV files beside it."""
    text = (LIBRARY / f"{name}.toml").read_text()
    text = re.sub(r'^name = ".*"$', f'name = "{new_name}"', text, count=1, flags=re.M)
    text = re.sub(r"^aliases = .*$", "", text, flags=re.M)
    if "\n[absorption.table]\n" in text:
        head, _, rest = text.partition("\n[absorption.table]\n")
        lam, alpha = _array(rest, "wavelength_nm"), _array(rest, "alpha_per_cm")
        rest = re.sub(r"^(wavelength_nm|alpha_per_cm) = \[.*\]$", "", rest, count=2, flags=re.M)
        text = head + '\n[absorption.table]\nfile = "alpha.csv"\n' + rest
        (Path(folder) / "alpha.csv").write_text("wavelength_nm,alpha_per_cm\n" + "".join(
            f"{a!r},{b!r}\n" for a, b in zip(lam, alpha)))
    if "\n[refractive_index]\n" in text:
        head, _, rest = text.partition("\n[refractive_index]\n")
        lam, n = _array(rest, "wavelength_nm"), _array(rest, "n")
        rest = re.sub(r"^(wavelength_nm|n) = \[.*\]$", "", rest, count=2, flags=re.M)
        text = head + '\n[refractive_index]\nfile = "index.csv"\n' + rest
        (Path(folder) / "index.csv").write_text("wavelength_nm,n\n" + "".join(
            f"{a!r},{b!r}\n" for a, b in zip(lam, n)))
    path = Path(folder) / f"{new_name.lower()}.toml"
    path.write_text(text)
    return path


@pytest.mark.parametrize("library_name, composition", [("gaas", None), ("gainp", 0.51)])
def test_a_copy_of_a_library_material_gives_identical_results(tmp_path, library_name,
                                                              composition):
    copy_to_csv(library_name, tmp_path, new_name="Mine")
    if library_name == "gaas":
        assert "file = " in (tmp_path / "mine.toml").read_text()   # the tables really are CSV
    reference = run_stack(load_stack(stack_file(tmp_path, library_name, composition,
                                                name="lib.toml")), curve_points=40)
    mine_stack = load_stack(stack_file(tmp_path, "mine.toml", composition, name="own.toml"))
    assert mine_stack.layers[0].material == str(tmp_path / "mine.toml")   # absolute at load
    mine = run_stack(mine_stack, curve_points=40)
    for key in ("efficiency_pct", "voc_V", "jsc_mA_cm2", "fill_factor_pct"):
        assert mine.summary[key] == reference.summary[key], key       # bit-identical
    # the same through a [materials] folder, by the file's name
    folder = tmp_path / "lib"
    folder.mkdir()
    copy_to_csv(library_name, folder, new_name="Mine")
    by_name = run_stack(load_stack(stack_file(tmp_path, "Mine", composition,
                                              head='[materials]\nfolder = "lib"\n',
                                              name="folder.toml")), curve_points=40)
    assert by_name.summary["efficiency_pct"] == reference.summary["efficiency_pct"]


def test_an_nk_table_gives_the_librarys_absorption(tmp_path):
    copy_to_csv("gaas", tmp_path, new_name="Mine")
    lam = np.array([400.0, 500, 600, 700, 800])
    alpha_cm = np.array(_array((LIBRARY / "gaas.toml").read_text().partition(
        "\n[absorption.table]\n")[2], "alpha_per_cm"))
    k = alpha_cm * lam * 1e-7 / (4 * math.pi)
    (tmp_path / "alpha.csv").write_text("wavelength_nm,n,k\n" + "".join(
        f"{float(a)!r},3.5,{float(b)!r}\n" for a, b in zip(lam, k)))
    mine = load_material(str(tmp_path / "mine.toml"))
    library = load_material("GaAs")
    grid = np.linspace(400, 800, 41)
    assert np.allclose(mine.absorption_per_m(grid), library.absorption_per_m(grid), rtol=1e-12)


def test_ordered_gainp_moves_its_gap_and_absorption_edge():
    disordered = load_material("GaInP", 0.51)
    ordered = load_material("GaInP", 0.51, gap_eV=1.84)
    assert float(ordered.gap_eV(300.0)) == pytest.approx(1.84, abs=1e-12)
    shift = 1.84 - float(disordered.gap_eV(300.0))
    # the direct edge (below the indirect valleys, whose absorption ordering leaves alone)
    indirect = min(float(g) for n, g in disordered.valley_gaps_eV(300.0).items() if n != "Gamma")
    energy = np.linspace(1.90, indirect - 0.06, 9)
    assert energy[-1] > 1.95
    hc = HC_EV_NM     # h c / e (CODATA 2018)
    assert np.allclose(ordered.absorption_per_m(hc / (energy + shift)),
                       disordered.absorption_per_m(hc / energy), rtol=1e-9)
    kt = BOLTZMANN_EV_K * 300.0
    nc_nv = (ordered.conduction_dos_300K_per_m3 * ordered.valence_dos_300K_per_m3) / (
        disordered.conduction_dos_300K_per_m3 * disordered.valence_dos_300K_per_m3)
    assert ordered.intrinsic_density_300K_per_m3 / disordered.intrinsic_density_300K_per_m3 == \
        pytest.approx(math.sqrt(nc_nv) * math.exp(-shift / (2 * kt)), rel=1e-9)


def test_ordered_gainp_in_a_stack(tmp_path):
    plain = run_stack(load_stack(stack_file(tmp_path, "GaInP", 0.51, name="a.toml")),
                      curve_points=40)
    text = stack_file(tmp_path, "GaInP", 0.51, name="b.toml").read_text().replace(
        "composition = 0.51\n", "composition = 0.51\ngap_eV = 1.84\n")
    (tmp_path / "b.toml").write_text(text)
    ordered = run_stack(load_stack(tmp_path / "b.toml"), curve_points=40)
    assert ordered.summary["jsc_mA_cm2"] > plain.summary["jsc_mA_cm2"] + 0.5
    assert ordered.summary["voc_V"] < plain.summary["voc_V"] - 0.04


@pytest.mark.parametrize("edit, where, problem", [
    (lambda p: p.unlink(), "key material", "not found"),
    (lambda p: p.write_text(p.read_text() + "\n[[[bad"), "material file", "TOML syntax error"),
    (lambda p: p.write_text(re.sub(r"\[permittivity\]\nrelative = 12.9\nsource = .*\n", "",
                                   p.read_text())),
     "material file", "key 'permittivity' is missing"),
    (lambda p: p.write_text(p.read_text().replace("relative = 12.9", 'relative = "12.9"')),
     "key permittivity.relative", "must be a finite number"),
    (lambda p: p.write_text(p.read_text().replace('kind = "binary"', 'kind = "compound"')),
     "key kind", "is not 'binary'"),
    (lambda p: (p.parent / "alpha.csv").write_text("lambda,a\n400,1\n500,2\n"), "header",
     "need 'wavelength_nm,alpha_per_cm'"),
    (lambda p: (p.parent / "alpha.csv").write_text("wavelength_nm,alpha_per_cm\n500,1\n400,2\n"),
     "column wavelength_nm", "increasing"),
    (lambda p: (p.parent / "alpha.csv").unlink(), "key absorption.table.file", "not found"),
    (lambda p: p.write_text(p.read_text().replace("electron_mass = 0.067",
                                                  "electron_mass = -0.067")),
     "material file", None),
])
def test_bad_material_files(tmp_path, edit, where, problem):
    path = copy_to_csv("gaas", tmp_path, new_name="Mine")
    edit(path)
    stack = stack_file(tmp_path, "mine.toml")
    with pytest.raises(StackError) as caught:
        load_stack(stack)
    error = caught.value
    assert where in (error.where or "") and error.fix
    if problem:
        assert problem in error.problem
    assert "mine.toml" in str(error.file) or "alpha.csv" in str(error.file) \
        or str(stack) in str(error.file)
    done = cli("run", stack)
    assert done.returncode == 2 and "Traceback" not in done.stderr


def test_bad_gap_and_folder_keys(tmp_path):
    text = stack_file(tmp_path, "GaAs", name="g.toml").read_text().replace(
        'material = "GaAs"\n', 'material = "GaAs"\ngap_eV = 1.4\n', 1)
    (tmp_path / "g.toml").write_text(text)
    with pytest.raises(StackError, match="no ordered form") as caught:
        load_stack(tmp_path / "g.toml")
    assert "material" in caught.value.where
    text = stack_file(tmp_path, "GaInP", 0.51, name="h.toml").read_text().replace(
        "composition = 0.51\n", "composition = 0.51\ngap_eV = 1.6\n", 1)
    (tmp_path / "h.toml").write_text(text)
    with pytest.raises(StackError, match=r"outside \[1.75, 1.95\] eV"):
        load_stack(tmp_path / "h.toml")
    with pytest.raises(StackError, match="material folder not found") as caught:
        load_stack(stack_file(tmp_path, "GaAs", head='[materials]\nfolder = "nowhere"\n'))
    assert caught.value.where == "key materials.folder"
    with pytest.raises(StackError, match="unknown key 'path' in \\[materials\\]"):
        load_stack(stack_file(tmp_path, "GaAs", head='[materials]\npath = "x"\n'))
    (tmp_path / "two").mkdir()
    copy_to_csv("gaas", tmp_path / "two", new_name="Same")
    (tmp_path / "two" / "other.toml").write_text(
        (tmp_path / "two" / "same.toml").read_text())
    with pytest.raises(StackError, match="given by two files"):
        load_stack(stack_file(tmp_path, "Same", head='[materials]\nfolder = "two"\n'))


def test_an_alloy_file_needs_library_end_members(tmp_path):
    path = copy_to_csv("gainp", tmp_path, new_name="Mine")
    path.write_text(path.read_text().replace('end_at_x1 = "GaP"', 'end_at_x1 = "GaN"'))
    with pytest.raises(StackError, match="end_at_x1 = 'GaN' is not a library material"):
        load_stack(stack_file(tmp_path, "mine.toml", 0.51))


def test_a_changed_material_file_changes_the_chunk_key(tmp_path):
    import pandas as pd

    copy_to_csv("gaas", tmp_path, new_name="Mine")
    stack = load_stack(stack_file(tmp_path, "mine.toml"))
    inputs = input_files(stack)
    assert str(tmp_path / "mine.toml") in inputs and str(tmp_path / "alpha.csv") in inputs
    table = pd.DataFrame({"design": [0], "x": [1.0]})
    before = sweep_key(table, len, inputs=inputs)
    csv = tmp_path / "alpha.csv"
    csv.write_text(csv.read_text().replace("400.0,", "401.0,"))
    assert sweep_key(table, len, inputs=input_files(stack)) != before
    # and the run reads the new table (not a cached one)
    changed = load_material(str(tmp_path / "mine.toml"))
    assert changed._optics.table_nm[0] == 401.0


def test_a_study_varies_the_ordered_gap(tmp_path):
    from siltandem import design_map, parse_vary

    path = stack_file(tmp_path, "GaInP", 0.51, name="v.toml")
    stack = load_stack(path)
    table = design_map(stack, parse_vary("cell emitter.gap_eV=1.82:1.86:2", stack),
                       parse_vary("cell base.gap_eV=1.82:1.86:2", stack))
    # the matched designs (emitter and base of one gap) equal a file with that gap, and the
    # lower gap collects more current
    for gap in (1.82, 1.86):
        row = table[(table["cell emitter.gap_eV"] == gap) & (table["cell base.gap_eV"] == gap)]
        text = path.read_text().replace("composition = 0.51\n",
                                        f"composition = 0.51\ngap_eV = {gap}\n")
        (tmp_path / "one.toml").write_text(text)
        one = run_stack(load_stack(tmp_path / "one.toml"), curve_points=40)
        assert float(row["efficiency_pct"].iloc[0]) == pytest.approx(
            one.summary["efficiency_pct"], rel=1e-9)
    with pytest.raises(StackError, match="outside"):
        parse_vary("cell base.gap_eV=1.5:1.9:3", stack)


def test_placements_read_a_folder_material(tmp_path):
    # every GaP of the invented demo (layers and the placements' inserted layers) replaced by a
    # copy of the library's GaP from a [materials] folder: the same ranking, the same numbers
    from siltandem import rank_placements

    root = Path(__file__).resolve().parents[1]
    text = (root / "stacks" / "demo_placements.toml").read_text()
    (tmp_path / "lib").mkdir()
    # the copy keeps the name GaP (a folder's name comes before the library's): the measured
    # band offsets (materials/valence_band.csv) are keyed by that name; a renamed copy takes the
    # electron-affinity rule instead
    copy_to_csv("gap", tmp_path / "lib", new_name="GaP")
    (tmp_path / "own.toml").write_text(text.replace("[conditions]", '[materials]\nfolder = "lib"\n\n'
                                                    "[conditions]", 1))
    (tmp_path / "ref.toml").write_text(text)
    own = rank_placements(load_stack(tmp_path / "own.toml"))
    ref = rank_placements(load_stack(tmp_path / "ref.toml"))
    assert list(own["placement"]) == list(ref["placement"])
    assert own["efficiency_pct"].tolist() == ref["efficiency_pct"].tolist()
