"""Resuming a study from its chunk files only when nothing it rests on has changed.

A study's chunk key covers the content of the files it reads (stack, spectrum CSV, EQE CSVs)
and the code (package version and a digest of its source and data files). The reference for
every check is an independent run of the same study in a fresh folder after the edit: the
resumed run must equal it exactly, and must differ from the run before the edit (so the check
can fail). Recomputation is counted by wrapping the chunk function's solve.
"""
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from pvlib.spectrum import get_reference_spectra

from siltandem.studies import fingerprint, runner as parallel
from siltandem.constants import HC_EV_NM
from siltandem import load_stack, design_map, match_currents, parse_vary
from siltandem.stack import inputs
from siltandem.studies import sweep
from test_main_job import cli

TOP_GAP_EV = 1.75
STACK = f"""# INVENTED TEST STACK
[conditions]
spectrum = "light.csv"
temperature_K = 300

[[element]]
kind = "subcell"
name = "top"
gap_eV = {TOP_GAP_EV}
absorptance = 0.9
eqe = "top_eqe.csv"

[[element]]
kind = "subcell"
name = "bottom"
gap_eV = 1.12
absorptance = 0.9

[[element]]
kind = "resistor"
name = "contacts"
series_ohm_cm2 = 0.2
"""
RESULT = ["efficiency_pct", "voc_V", "jsc_mA_cm2", "mpp_V", "top.photocurrent_mA_cm2",
          "bottom.photocurrent_mA_cm2"]


def write_spectrum(path, blue_scale=1.0):
    """ASTM G173-03 global tilt (through pvlib), 280-4000 nm; wavelengths below 600 nm times
    ``blue_scale`` (an edit that changes the top cell's light)."""
    table = get_reference_spectra(standard="ASTM G173-03")
    wavelength = table.index.to_numpy(dtype=float)
    irradiance = table["global"].to_numpy(dtype=float) * np.where(wavelength < 600, blue_scale,
                                                                   1.0)
    rows = "".join(f"{float(w)!r},{float(e)!r}\n" for w, e in zip(wavelength, irradiance))
    path.write_text("wavelength_nm,irradiance_W_m2_nm\n" + rows)


def write_eqe(path, value):
    """A flat EQE of ``value`` (at most the absorptance) up to the top cell's gap wavelength."""
    edge = HC_EV_NM / TOP_GAP_EV
    rows = [(280.0, value), (edge - 1.0, value), (edge, 0.0), (4000.0, 0.0)]
    path.write_text("wavelength_nm,eqe\n" + "".join(f"{w!r},{q!r}\n" for w, q in rows))


@pytest.fixture
def folder(tmp_path):
    write_spectrum(tmp_path / "light.csv")
    write_eqe(tmp_path / "top_eqe.csv", 0.85)
    (tmp_path / "dual.toml").write_text(STACK)
    return tmp_path


@pytest.fixture
def solves(monkeypatch):
    """Counts the designs the chunk function solves (in this process)."""
    count = {"designs": 0}
    original = sweep.solve_designs

    def counted(stack, columns, **options):
        count["designs"] += max([1] + [np.size(v) for v in columns.values()])
        return original(stack, columns, **options)

    monkeypatch.setattr(sweep, "solve_designs", counted)
    return count


def run_map(folder, out):
    """The map study of the stack file as it is now on disk (loaded afresh, as the CLI does);
    with progress on, as the CLI runs it (a starting-afresh note goes to stderr)."""
    stack = load_stack(folder / "dual.toml")
    first = parse_vary("top.absorptance=0.7:0.9:3", stack)
    second = parse_vary("bottom.absorptance=0.8:1.0:2", stack)
    return design_map(stack, first, second, progress=True, output=out)


def assert_same(a, b):
    pd.testing.assert_frame_equal(a[["design"] + RESULT], b[["design"] + RESULT],
                                  check_exact=True)


def test_an_unchanged_rerun_resumes_and_computes_nothing(folder, solves, capsys):
    first = run_map(folder, folder / "out")
    assert solves["designs"] == 6
    again = run_map(folder, folder / "out")
    assert solves["designs"] == 6                       # nothing recomputed
    assert_same(again, first)
    assert "starting afresh" not in capsys.readouterr().err


@pytest.mark.parametrize("edit", ["spectrum", "eqe", "stack"])
def test_an_edited_input_file_starts_afresh_and_equals_a_fresh_run(folder, solves, capsys,
                                                                   edit):
    before = run_map(folder, folder / "out")
    capsys.readouterr()
    if edit == "spectrum":
        write_spectrum(folder / "light.csv", blue_scale=0.7)
    elif edit == "eqe":
        write_eqe(folder / "top_eqe.csv", 0.6)
    else:
        stack_file = folder / "dual.toml"
        stack_file.write_text(stack_file.read_text().replace("series_ohm_cm2 = 0.2",
                                                             "series_ohm_cm2 = 2.0"))
    solves["designs"] = 0
    resumed = run_map(folder, folder / "out")
    assert solves["designs"] == 6                       # every design computed again
    err = capsys.readouterr().err
    assert err.count("the folder holds results of a different stack/spectrum/code; starting "
                     "afresh") == 1
    fresh = run_map(folder, folder / "fresh")
    assert_same(resumed, fresh)
    # the edit matters: the old table differs (a resumed run would have returned it)
    assert not np.allclose(before["efficiency_pct"], fresh["efficiency_pct"], rtol=1e-6)
    # results.parquet holds the new table; the old chunks stay, unused
    on_disk = pd.read_parquet(folder / "out" / parallel.RESULTS_NAME)
    assert_same(on_disk, fresh)
    assert len(list((folder / "out" / "_chunks").glob("chunk-*.parquet"))) == 2
    # going back to the first content resumes the first run's chunks again, without a message
    if edit == "spectrum":
        write_spectrum(folder / "light.csv")
        solves["designs"] = 0
        assert_same(run_map(folder, folder / "out"), before)
        assert solves["designs"] == 0
        assert "starting afresh" not in capsys.readouterr().err


def test_the_spectrum_cache_of_a_process_sees_an_edited_csv(folder):
    # the studies cache spectra per process: keyed by the file's content, never its name alone
    stack = load_stack(folder / "dual.toml")
    before = sweep.solve_designs(stack, {})["efficiency_pct"][0]
    write_spectrum(folder / "light.csv", blue_scale=0.7)
    after = sweep.solve_designs(stack, {})["efficiency_pct"][0]
    sweep._spectrum_cached.cache_clear()
    assert after == sweep.solve_designs(stack, {})["efficiency_pct"][0] != before


def test_a_spectrum_override_is_fingerprinted(folder, solves, capsys):
    stack = load_stack(folder / "dual.toml")
    variation = parse_vary("top.absorptance=0.7:0.9:3", stack)
    shutil.copy(folder / "light.csv", folder / "other.csv")
    first, _ = match_currents(stack, variation, progress=False, output=folder / "out",
                              spectrum=str(folder / "other.csv"))
    write_spectrum(folder / "other.csv", blue_scale=0.5)
    solves["designs"] = 0
    second, _ = match_currents(stack, variation, progress=False, output=folder / "out",
                               spectrum=str(folder / "other.csv"))
    assert solves["designs"] == 3
    fresh, _ = match_currents(stack, variation, progress=False, spectrum=str(folder / "other.csv"))
    assert_same(second, fresh)
    assert not np.allclose(first["efficiency_pct"], fresh["efficiency_pct"], rtol=1e-6)


def test_a_code_change_invalidates_the_chunks(folder, solves, monkeypatch, capsys):
    first = run_map(folder, folder / "out")
    capsys.readouterr()
    monkeypatch.setattr(fingerprint, "code_digest", lambda: "a later version of the solver")
    solves["designs"] = 0
    again = run_map(folder, folder / "out")
    assert solves["designs"] == 6
    assert "starting afresh" in capsys.readouterr().err
    assert_same(again, first)          # same code really: same numbers, but nothing reused


def test_the_code_digest_covers_every_source_and_data_file(tmp_path):
    package = fingerprint.package_folder()
    assert (package / "laws" / "optics.py").is_file()
    copy = tmp_path / "siltandem"
    shutil.copytree(package, copy, ignore=shutil.ignore_patterns("__pycache__"))
    reference = fingerprint._tree_digest(copy)
    assert reference == fingerprint._tree_digest(copy)              # deterministic
    assert fingerprint._tree_digest(package) == reference           # compiled caches ignored
    for name in ("laws/optics.py", "materials/gap.toml", "data/spectra.toml"):
        path = copy / name
        original = path.read_bytes()
        path.write_bytes(original + b"\n")
        assert fingerprint._tree_digest(copy) != reference, name
        path.write_bytes(original)
    assert fingerprint._tree_digest(copy) == reference
    # the digest of this process is computed once and names the package's own files
    assert fingerprint.code_digest() is fingerprint.code_digest()


def test_input_files_of_a_study(folder):
    stack = load_stack(folder / "dual.toml")
    files = {Path(f).name for f in inputs.input_files(stack)}
    assert files == {"dual.toml", "light.csv", "top_eqe.csv"}
    named = inputs.input_files(stack, spectrum="am1.5d")
    assert {Path(f).name for f in named} == {"dual.toml", "top_eqe.csv"}


def test_map_command_after_editing_the_spectrum(folder):
    # the report: a map rerun with the same --out after an edit of the spectrum CSV
    def run(out, csv):
        done = cli("map", folder / "dual.toml", "--vary", "top.absorptance=0.7:0.9:3", "--vary",
                   "bottom.absorptance=0.8:1.0:2", "--out", folder / out, "--csv",
                   folder / csv, "--quiet")
        assert done.returncode == 0, done.stderr
        return pd.read_csv(folder / csv, comment="#"), done.stderr

    before, _ = run("out", "before.csv")
    write_spectrum(folder / "light.csv", blue_scale=0.7)
    resumed, err = run("out", "resumed.csv")
    assert "starting afresh" in err
    fresh, _ = run("fresh", "fresh.csv")
    pd.testing.assert_frame_equal(resumed, fresh, check_exact=True)
    assert not np.allclose(before["efficiency_pct"], fresh["efficiency_pct"], rtol=1e-6)
