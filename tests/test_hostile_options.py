"""Hostile command-line options and study arguments: each refused before any work, one message.

Two promises are checked here (issue 15):

* outputs never replace inputs: an output path that is a file the command reads (the stack,
  its spectrum or EQE CSV, the weather file, a data file of the package; also through a symlink
  or a hard link), or that is no regular-file path (a folder, a device, a pipe, a path under a
  file, a missing folder), or that two outputs share, is refused with exit status 2;
* every override and study option is checked with the same ranges and messages as the file
  keys (siltandem.options, stack.CONDITION_SCHEMA, stack.ELEMENT_SCHEMA, layers.LAYER_NUMBERS),
  before any work: the stack file is unchanged byte for byte and no output file appears.

The expected wording is our own (no external source); the ranges are the README's stack-file
reference. New files get the permissions the umask allows (POSIX open(2) with mode 0666 minus
the umask, the convention of every tool that creates files); a replaced file keeps its mode.
"""
import math
import os
from pathlib import Path
import re
import shutil
import stat

import numpy as np
import pytest

from siltandem.cli import main as cli
from siltandem.stack import options
from siltandem import (StackError, concentration_series, design_map, load_stack, loss_waterfall,
                       match_currents, parse_vary, rank_placements, run_stack)
from siltandem.files import check_outputs, write_atomic
from siltandem.studies.sweep import Variation, solve_designs

STACKS = Path(__file__).resolve().parents[1] / "stacks"
DUAL = "d.toml"            # the demo dual (elements 'front grid', 'top', 'silicon', 'rear contact')
TUNNEL = "t.toml"          # a dual with a tunnel junction 'junction' (peak 15, valley 1 mA/cm2)
LAYERS = "layers.toml"     # the layer dual ('tunnel p', 'tunnel n' at 8e19 / 2e19 cm-3)
PLACES = "places.toml"     # a layer stack with [[placement]] candidates
FOUR = "four.toml"         # two strings
SPECTRUM_STACK = "ds.toml"  # the demo dual reading spec.csv
EQE_STACK = "de.toml"      # the demo dual whose top cell reads eqe.csv
MAP = ["--vary", "top.gap_eV=1.6:1.8:3", "--vary", "rear contact.series_ohm_cm2=0:1:2"]
MATCH = ["--vary", "top.gap_eV=1.6:1.8:3"]


@pytest.fixture
def folder(tmp_path, monkeypatch):
    """A working folder with the stacks, a spectrum CSV and an EQE CSV."""
    shutil.copy(STACKS / "demo_dual.toml", tmp_path / DUAL)
    shutil.copy(STACKS / "demo_tunnel_limit.toml", tmp_path / TUNNEL)
    shutil.copy(STACKS / "demo_dual_layers.toml", tmp_path / LAYERS)
    shutil.copy(STACKS / "demo_placements.toml", tmp_path / PLACES)
    shutil.copy(STACKS / "demo_four_terminal.toml", tmp_path / FOUR)
    text = (tmp_path / DUAL).read_text()
    (tmp_path / SPECTRUM_STACK).write_text(text.replace('spectrum = "am1.5g"',
                                                        'spectrum = "spec.csv"'))
    from siltandem.materials.spectra import get_spectrum

    light = get_spectrum("am1.5g")
    rows = "\n".join(f"{w:g},{e:.8g}" for w, e in zip(light.wavelength_nm,
                                                      light.irradiance_W_m2_nm))
    (tmp_path / "spec.csv").write_text("wavelength_nm,irradiance_W_m2_nm\n" + rows + "\n")
    (tmp_path / "eqe.csv").write_text("wavelength_nm,eqe\n300,0.8\n600,0.85\n700,0.5\n720,0\n")
    (tmp_path / EQE_STACK).write_text(text.replace('name = "top"\n',
                                                   'name = "top"\neqe = "eqe.csv"\n', 1))
    monkeypatch.chdir(tmp_path)
    return tmp_path


def refused(capsys, argv, pattern, *, folder, absent=()):
    """``siltandem ARGV`` exits 2 with one message matching ``pattern`` (a regex), no
    traceback; every file in ``folder`` is unchanged byte for byte, no file in ``absent``
    appears, and nothing new appears in the folder."""
    before = {p: p.read_bytes() for p in folder.rglob("*") if p.is_file() and not p.is_symlink()}
    code = cli.main(argv)
    captured = capsys.readouterr()
    assert code == 2, captured.err
    assert "Traceback" not in captured.err
    assert captured.err.count("siltandem: error:") == 1, captured.err
    assert re.search(pattern, captured.err), captured.err
    assert "fix:" in captured.err
    after = {p for p in folder.rglob("*") if p.is_file() and not p.is_symlink()}
    assert after == set(before), "nothing is written"
    for path, data in before.items():
        assert path.read_bytes() == data, f"{path} unchanged"
    for path in absent:
        assert not os.path.lexists(path)
    return captured.err


# ----------------------------------------------------------------------------------------------
# outputs never replace inputs

SAME_AS_INPUT = [
    (["run", DUAL, "--json", DUAL], r"--json: d\.toml is the stack file: writing it would "
                                    r"replace an input"),
    (["run", SPECTRUM_STACK, "--curve", "spec.csv"], r"--curve: spec\.csv is the spectrum file"),
    (["run", DUAL, "--spectrum", "spec.csv", "--curve", "./spec.csv"],
     r"--curve: spec\.csv is the spectrum file"),
    (["run", EQE_STACK, "--curve", "eqe.csv"],
     r"--curve: eqe\.csv is the quantum-efficiency file of element 2 'top'"),
    (["run", DUAL, "--suns-range", "1:10:3", "--table", "spec.csv", "--spectrum", "spec.csv"],
     r"--table: spec\.csv is the spectrum file"),
    (["run", LAYERS, "--spectrum", "spec.csv", "--spectral", "spec.csv"],
     r"--spectral: spec\.csv is the spectrum file"),
    (["run", LAYERS, "--spectral", LAYERS], r"--spectral layers\.toml: unsupported file type"),
    (["losses", DUAL, "--json", DUAL], r"--json: d\.toml is the stack file"),
    (["losses", SPECTRUM_STACK, "--csv", "spec.csv"], r"--csv: spec\.csv is the spectrum file"),
    (["match", DUAL, *MATCH, "--json", DUAL], r"--json: d\.toml is the stack file"),
    (["map", SPECTRUM_STACK, *MAP, "--csv", "spec.csv"], r"--csv: spec\.csv is the spectrum file"),
    (["placements", PLACES, "--json", PLACES], r"--json: places\.toml is the stack file"),
    (["yield", DUAL, "--weather", "demo", "--json", DUAL], r"--json: d\.toml is the stack file"),
    (["yield", DUAL, "--weather", "demo", "--eqe", "top=eqe.csv", "--csv", "eqe.csv"],
     r"--csv: eqe\.csv is the quantum-efficiency file of subcell 'top' \(--eqe\)"),
]


@pytest.mark.parametrize("argv, pattern", SAME_AS_INPUT,
                         ids=[" ".join(a[:1] + a[-2:]) for a, _ in SAME_AS_INPUT])
def test_an_output_that_is_an_input_is_refused(folder, capsys, argv, pattern):
    refused(capsys, argv, pattern, folder=folder)


def test_the_weather_file_is_an_input(folder, capsys):
    from siltandem.materials.weather import demo_weather_path

    shutil.copy(demo_weather_path(), folder / "weather.csv")
    refused(capsys, ["yield", DUAL, "--weather", "weather.csv", "--csv", "weather.csv"],
            r"--csv: weather\.csv is the weather file", folder=folder)
    refused(capsys, ["match", DUAL, *MATCH, "--by", "energy", "--weather", "weather.csv",
                     "--csv", "weather.csv"], r"--csv: weather\.csv is the weather file",
            folder=folder)


def test_a_symlink_or_a_hard_link_to_an_input_is_the_input(folder, capsys):
    os.symlink(DUAL, folder / "link.json")
    os.link(folder / DUAL, folder / "hard.json")
    refused(capsys, ["run", DUAL, "--json", "link.json"],
            r"link\.json is the stack file d\.toml \(the same file, through a symlink\)",
            folder=folder)
    refused(capsys, ["run", DUAL, "--json", "hard.json"],
            r"hard\.json is the stack file d\.toml \(the same file, through a hard link\)",
            folder=folder)
    os.symlink(folder, folder / "again")      # a folder reached through a link
    refused(capsys, ["run", DUAL, "--json", "again/d.toml"], r"is the stack file", folder=folder)


def test_a_plot_through_a_symlink_onto_the_stack_is_refused(folder, capsys):
    shutil.copy(STACKS / "demo_interfaces.toml", folder / "faces.toml")
    os.symlink("faces.toml", folder / "faces.png")
    refused(capsys, ["interface", "faces.toml", "--plot", "faces.png"],
            r"--plot: faces\.png is the stack file faces\.toml \(the same file, through a "
            r"symlink\)", folder=folder)


def test_the_package_data_is_an_input(folder, capsys):
    from importlib import resources

    data = Path(str(resources.files("siltandem").joinpath("materials", "gaas.toml")))
    before = data.read_bytes()
    refused(capsys, ["run", DUAL, "--json", str(data)], r"is a data file of siltandem",
            folder=folder)
    assert data.read_bytes() == before
    demo = Path(str(cli.demo_stack_path()))
    refused(capsys, ["run", "--json", str(demo)], r"is the stack file", folder=folder)


def test_no_regular_file_path_is_refused(folder, capsys):
    os.mkfifo(folder / "pipe")
    (folder / "sub").mkdir()
    (folder / "sub.png").mkdir()
    cases = [
        (["run", DUAL, "--json", "/dev/null"], r"--json: /dev/null is a device, not a file path"),
        (["run", DUAL, "--json", "pipe"], r"--json: pipe is a pipe, not a file path"),
        (["run", DUAL, "--json", "sub"], r"--json: sub is a folder, not a file path"),
        (["run", DUAL, "--json", "."], r"--json: \. is a folder"),
        (["run", DUAL, "--json", ""], r"--json is an empty path"),
        (["run", DUAL, "--curve", "d.toml/x.csv"],
         r"--curve: d\.toml/x\.csv lies under .*d\.toml, which is a file, not a folder"),
        (["run", DUAL, "--plot", "nowhere/x.png"],
         r"--plot: nowhere/x\.png: the folder .*nowhere does not exist"),
        (["losses", DUAL, "--plot", "d.toml/w.png"], r"lies under .*d\.toml, which is a file"),
        (["match", DUAL, *MATCH, "--out", DUAL], r"--out: d\.toml is the stack file, not a folder"),
        (["match", DUAL, *MATCH, "--out", "d.toml/chunks"],
         r"--out: d\.toml/chunks lies under .*d\.toml, which is a file"),
        (["map", DUAL, *MAP, "--out", "spec.csv"], r"--out: spec\.csv is a file, not a folder"),
        (["yield", DUAL, "--weather", "demo", "--plot", "sub.png"],
         r"--plot: sub\.png is a folder"),
        (["placements", PLACES, "--csv", "sub/deeper/x.csv"], r"the folder .*deeper does not"),
    ]
    for argv, pattern in cases:
        refused(capsys, argv, pattern, folder=folder)


def test_two_outputs_of_one_command_are_two_files(folder, capsys):
    refused(capsys, ["run", DUAL, "--json", "a.csv", "--curve", "a.csv"],
            r"--json and --curve name the same file a\.csv", folder=folder,
            absent=[folder / "a.csv"])
    refused(capsys, ["map", DUAL, *MAP, "--csv", "m.csv", "--out", "m.csv"],
            r"--csv: m\.csv is also the --out folder", folder=folder, absent=[folder / "m.csv"])
    (folder / "o").mkdir()
    refused(capsys, ["map", DUAL, *MAP, "--parquet", "o/results.parquet", "--out", "o"],
            r"--parquet and --out name the same file", folder=folder,
            absent=[folder / "o" / "results.parquet"])


@pytest.mark.skipif(os.geteuid() == 0, reason="root may write into any folder")
def test_a_folder_without_write_permission_is_refused(folder, capsys):
    (folder / "locked").mkdir()
    (folder / "locked").chmod(0o500)
    try:
        refused(capsys, ["run", DUAL, "--json", "locked/x.json"],
                r"no permission to write in .*locked", folder=folder)
    finally:
        (folder / "locked").chmod(0o700)


def test_the_spectral_table_of_a_layer_stack_is_an_output(folder, capsys):
    # --spectral joins the outputs: never the stack file (whatever its suffix), never another
    # output's path; nothing is written when it is refused
    (folder / "layers.csv").write_bytes((folder / LAYERS).read_bytes())
    refused(capsys, ["run", "layers.csv", "--spectral", "layers.csv"],
            r"--spectral: layers\.csv is the stack file: writing it would replace an input",
            folder=folder)
    refused(capsys, ["run", LAYERS, "--json", "a.csv", "--spectral", "a.csv"],
            r"--json and --spectral name the same file a\.csv", folder=folder,
            absent=[folder / "a.csv"])
    refused(capsys, ["run", DUAL, "--spectral", "s.csv"], r"--spectral needs a layer stack",
            folder=folder, absent=[folder / "s.csv"])


def test_dash_is_stdout_and_still_allowed(folder, capsys):
    assert cli.main(["run", DUAL, "--json", "-"]) == 0
    assert capsys.readouterr().out.lstrip().startswith("{")


def test_check_outputs_api():
    with pytest.raises(StackError, match=r"--json and --curve name the same file"):
        check_outputs([("--json", "x.json"), ("--curve", "./x.json")])
    with pytest.raises(StackError, match=r"is the stack file"):
        check_outputs([("--json", __file__)], [("the stack file", __file__)])
    check_outputs([("--json", "-"), ("--curve", None)])      # stdout and "not asked" pass


# ----------------------------------------------------------------------------------------------
# permissions of what is written

def _with_umask(mask, function):
    old = os.umask(mask)
    try:
        return function()
    finally:
        os.umask(old)


def test_a_new_file_follows_the_umask(tmp_path):
    _with_umask(0o022, lambda: write_atomic(tmp_path / "a.json", "{}\n"))
    assert stat.S_IMODE(os.stat(tmp_path / "a.json").st_mode) == 0o644
    _with_umask(0o077, lambda: write_atomic(tmp_path / "b.json", b"{}\n"))
    assert stat.S_IMODE(os.stat(tmp_path / "b.json").st_mode) == 0o600
    _with_umask(0o002, lambda: write_atomic(tmp_path / "c.json", "{}\n"))
    assert stat.S_IMODE(os.stat(tmp_path / "c.json").st_mode) == 0o664


def test_a_replaced_file_keeps_its_mode(tmp_path):
    target = tmp_path / "kept.csv"
    target.write_text("old\n")
    target.chmod(0o640)
    _with_umask(0o077, lambda: write_atomic(target, "new\n"))
    assert target.read_text() == "new\n"
    assert stat.S_IMODE(os.stat(target).st_mode) == 0o640
    assert [p.name for p in tmp_path.iterdir()] == ["kept.csv"]   # no temporary file left


def test_a_symlinked_output_replaces_its_target_and_keeps_the_link(tmp_path):
    (tmp_path / "real.json").write_text("old\n")
    os.symlink("real.json", tmp_path / "link.json")
    write_atomic(tmp_path / "link.json", "new\n")
    assert os.path.islink(tmp_path / "link.json")
    assert (tmp_path / "real.json").read_text() == "new\n"


def test_the_command_line_writes_with_the_umask(folder, capsys):
    code = _with_umask(0o022, lambda: cli.main(["run", DUAL, "--json", "r.json", "--curve",
                                                "r.csv"]))
    assert code == 0
    for name in ("r.json", "r.csv"):
        assert stat.S_IMODE(os.stat(folder / name).st_mode) == 0o644
    (folder / "r.json").chmod(0o600)
    assert _with_umask(0o022, lambda: cli.main(["run", DUAL, "--json", "r.json"])) == 0
    assert stat.S_IMODE(os.stat(folder / "r.json").st_mode) == 0o600


# ----------------------------------------------------------------------------------------------
# overrides: the file's ranges and messages

SUNS = r"suns = {} is outside its physical range \(0, 100000\] suns \(concentration\)"
TEMPERATURE = r"temperature_K = {} is outside its physical range \[150, 1000\] K"
OVERRIDES = [
    (["run", DUAL, "--temperature", "1"], "--temperature: " + TEMPERATURE.format(1)),
    (["run", DUAL, "--suns", "1e6"], r"--suns: " + SUNS.format(r"1e\+06")),
    (["run", DUAL, "--suns", "inf"], r"--suns: " + SUNS.format("inf")),
    (["run", DUAL, "--suns", "abc"], r"--suns 'abc' is not a number"),
    (["interface", DUAL, "--temperature", "5000"], TEMPERATURE.format(5000)),
    (["materials", "GaInP", "--composition", "nan"], r"--composition: key 'composition' is nan"),
    (["materials", "GaInP", "--composition", "2"],
     r"composition = 2 is outside its physical range \[0, 1\]"),
]
for command, stack in (("match", [DUAL, *MATCH]), ("map", [DUAL, *MAP]), ("losses", [DUAL]),
                       ("placements", [PLACES])):
    OVERRIDES += [
        ([command, *stack, "--suns", "-1"], r"--suns: " + SUNS.format("-1")),
        ([command, *stack, "--suns", "0"], r"--suns: " + SUNS.format("0")),
        ([command, *stack, "--suns", "nan"], r"--suns: key 'suns' is nan"),
        ([command, *stack, "--temperature", "0"], r"--temperature: " + TEMPERATURE.format(0)),
    ]


@pytest.mark.parametrize("argv, pattern", OVERRIDES,
                         ids=[" ".join(a[:1] + a[-2:]) for a, _ in OVERRIDES])
def test_overrides_are_checked_like_the_file_keys(folder, capsys, argv, pattern):
    refused(capsys, argv, pattern, folder=folder)


def test_the_override_message_is_the_file_message(folder, capsys):
    err = refused(capsys, ["run", DUAL, "--suns", "1e6"], "suns", folder=folder)
    (folder / "hot.toml").write_text(re.sub(r"(?m)^suns = .*$", "suns = 1e6",
                                            (folder / DUAL).read_text()))
    with pytest.raises(StackError) as file_error:
        load_stack(folder / "hot.toml")
    assert file_error.value.problem in err
    assert file_error.value.fix in err


OPTIONS = [
    (["run", DUAL, "--points", "5"],
     r"--points: points = 5 is outside its physical range \[20, 1e\+06\]"),
    (["run", DUAL, "--points", "2e6"], r"points = 2e\+06 is outside its physical range"),
    (["run", DUAL, "--points", "40.5"], r"--points '40.5' is not a whole number"),
    (["interface", DUAL, "--points", "1"],
     r"points = 1 is outside its physical range \[3, 10000\]"),
    (["run", DUAL, "--suns-range", "1:1e6:3"], r"--suns-range 1:1e6:3: " + SUNS.format(r"1e\+06")),
    (["run", DUAL, "--suns-range", "0:10:3"], SUNS.format("0")),
    (["run", DUAL, "--suns-range", "5:1:3"], r"START 5 is not below STOP 1"),
    (["run", DUAL, "--suns-range", "1:10:1"], r"N = 1 is outside its physical range \[2, 2000\]"),
    (["run", DUAL, "--suns-range", "1:10:nan"], r"is not START:STOP:N"),
    (["match", DUAL, "--vary", "top.gap_eV=nan:1.8:3"], r"'top.gap_eV=nan:1.8:3': nan is not a "
                                                        r"finite number"),
    (["match", DUAL, "--vary", "top.shunt_ohm_cm2=1:inf:3"], r"inf is not a finite number"),
    (["match", DUAL, "--vary", "top.gap_eV=1.6:9:3"],
     r"gap_eV = 9 is outside its physical range \[0.3, 4\] eV"),
    (["match", DUAL, "--vary", "top.gap_eV=1.6:1.8:0"],
     r"N = 0 is outside its physical range \[2, 1e\+06\]"),
    (["match", DUAL, *MATCH, "--workers", "0"],
     r"--workers: workers = 0 is outside its physical range \[1, 256\]"),
    (["match", DUAL, *MATCH, "--workers", "-1"], r"workers = -1 is outside"),
    (["map", DUAL, *MAP, "--workers", "100000"], r"workers = 100000 is outside"),
    (["placements", PLACES, "--workers", "2.5"], r"--workers '2.5' is not a whole number"),
    (["match", DUAL, *MATCH, "--tilt", "30"], r"--tilt goes with --by energy"),
    (["match", DUAL, *MATCH, "--by", "energy", "--weather", "demo", "--tilt", "100"],
     r"--tilt: tilt_deg = 100 is outside its physical range \[0, 90\] deg"),
    (["yield", DUAL, "--weather", "demo", "--tilt", "nan"], r"--tilt: key 'tilt_deg' is nan"),
    (["yield", DUAL, "--weather", "demo", "--azimuth", "-1"],
     r"azimuth_deg = -1 is outside its physical range \[0, 360\]"),
    (["yield", DUAL, "--weather", "demo", "--albedo", "2"],
     r"--albedo: albedo = 2 is outside its physical range \[0, 1\]"),
    (["yield", DUAL, "--weather", "demo", "--mounting", "roof"], r"--mounting 'roof' is not known"),
    (["map", DUAL, *MAP, "--column", "regime"],
     r"--column 'regime' holds text, not numbers: it cannot be mapped"),
    (["map", DUAL, *MAP, "--column", "limiting_subcell"], r"holds text, not numbers"),
    (["map", DUAL, *MAP, "--column", "nope"], r"--column 'nope' is not a result column"),
    (["map", FOUR, "--vary", "top.gap_eV=1.6:1.8:3", "--vary", "silicon.ere=0.1:1:2", "--column",
      "voc_V"], r"--column 'voc_V' is per string, and this stack has 2 strings"),
]


@pytest.mark.parametrize("argv, pattern", OPTIONS,
                         ids=[" ".join(a[:1] + a[-2:]) for a, _ in OPTIONS])
def test_options_are_checked_before_any_work(folder, capsys, argv, pattern):
    output = ["--plot", "out.png"] if argv[0] == "interface" else ["--json", "out.json"]
    refused(capsys, argv + output, pattern, folder=folder,
            absent=[folder / "out.json", folder / "out.png"])


# ----------------------------------------------------------------------------------------------
# varied values against the rules between an element's keys, for every design

VARIED = [
    (["match", TUNNEL, "--vary", "junction.peak_mA_cm2=0.5:20:5"],
     r"t\.toml: --vary: element 2 'junction' at junction\.peak_mA_cm2 = 0\.5: valley_mA_cm2 = 1 "
     r"is not below peak_mA_cm2 = 0\.5"),
    (["match", TUNNEL, "--vary", "junction.valley_V=0.01:0.3:5"],
     r"at junction\.valley_V = 0\.01: peak_V = 0\.05 V is not below valley_V = 0\.01 V"),
    (["map", TUNNEL, "--vary", "junction.peak_mA_cm2=2:20:5", "--vary",
      "junction.valley_mA_cm2=0.1:3:5"],
     r"at junction\.peak_mA_cm2 = 2, junction\.valley_mA_cm2 = 2\.275: valley_mA_cm2 = 2\.275 "
     r"is not below peak_mA_cm2 = 2"),
    (["match", TUNNEL, "--vary", "junction.saturation_mA_cm2=1e-14:10:5"],
     r"at junction\.saturation_mA_cm2 = 2\.5: the excess and thermal currents alone reach"),
    (["match", "noshunt.toml", "--vary", "top.breakdown_V=1:10:3"],
     r"at top\.breakdown_V = 1: breakdown_V needs shunt_ohm_cm2"),
    (["match", LAYERS, "--vary", "tunnel n.doping_cm3=1e18:2e19:3"],
     r"layers\.toml: --vary: design tunnel n\.doping_cm3 = 1e\+18: subcells of opposite "
     r"polarity"),
    (["match", LAYERS, "--vary", "top base.doping_cm3=1e17:1e22:3"],
     r"doping 1e\+22 cm\^-3 is outside 1e10\.\.1e21 cm\^-3"),
    (["match", LAYERS, "--vary", "top base.thickness_nm=0:100:3"],
     r"thickness_nm = 0 is outside \(0, 2e\+06\] nm"),
]


@pytest.mark.parametrize("argv, pattern", VARIED, ids=[a[-1] for a, _ in VARIED])
def test_every_design_is_checked_like_a_file(folder, capsys, argv, pattern):
    (folder / "noshunt.toml").write_text("\n".join(
        line for line in (folder / TUNNEL).read_text().splitlines() if "shunt" not in line))
    refused(capsys, argv + ["--csv", "out.csv"], pattern, folder=folder,
            absent=[folder / "out.csv"])


def test_a_grid_larger_than_memory_is_refused_before_allocation(folder, capsys):
    refused(capsys, ["map", DUAL, "--vary", "top.gap_eV=1.6:1.8:1000000", "--vary",
                     "rear contact.series_ohm_cm2=0:1:1000000"],
            r"--vary: a study of 1e\+12 designs needs about .* of memory; this machine has .* "
            r"free", folder=folder)


def test_too_many_workers_for_the_memory_are_refused(folder, capsys, monkeypatch):
    monkeypatch.setattr(options, "available_memory_bytes", lambda: 1_000_000_000)
    refused(capsys, ["map", DUAL, *MAP, "--workers", "8"],
            r"--workers: a study of 6 designs on 8 worker processes needs about 3\.2 GB of "
            r"memory; this machine has 1 GB free", folder=folder)
    refused(capsys, ["run", DUAL, "--points", "1000000"],
            r"--points: a curve of 1000000 points needs about 2 GB of memory", folder=folder)


# ----------------------------------------------------------------------------------------------
# the dask scheduler's address: its form first, then a short connect

CLUSTERS = [
    ("garbage", r"--cluster: 'garbage' is not a scheduler address \[scheme://\]HOST:PORT"),
    ("http://127.0.0.1:8786", r"unknown transport 'http'"),
    ("127.0.0.1:99999", r"port 99999 is outside 1\.\.65535"),
    ("tcp://127.0.0.1:", r"is not a scheduler address"),
    ("inproc://1.2.3.4/5/6", r"is not a scheduler address"),
    ("tcp://127.0.0.1:9", r"cannot reach the dask scheduler at 'tcp://127\.0\.0\.1:9'"),
]


@pytest.mark.parametrize("address, pattern", CLUSTERS, ids=[a for a, _ in CLUSTERS])
def test_a_bad_cluster_address_fails_at_once(folder, capsys, address, pattern):
    refused(capsys, ["map", DUAL, *MAP, "--cluster", address, "--csv", "m.csv"], pattern,
            folder=folder, absent=[folder / "m.csv"])


def test_a_port_that_is_no_scheduler_is_refused(folder, capsys):
    pytest.importorskip("distributed")
    import socket
    import threading

    server = socket.socket()
    server.bind(("127.0.0.1", 0))
    server.listen(1)
    port = server.getsockname()[1]
    accepted = []
    thread = threading.Thread(target=lambda: accepted.append(server.accept()), daemon=True)
    thread.start()        # accepts the connection and never answers the handshake
    try:
        with pytest.MonkeyPatch.context() as patch:
            patch.setattr(options, "CONNECT_TIMEOUT_S", 1.0)
            refused(capsys, ["match", DUAL, *MATCH, "--cluster", f"tcp://127.0.0.1:{port}"],
                    r"no dask scheduler answered at 'tcp://127\.0\.0\.1:\d+' within 1 s",
                    folder=folder)
    finally:
        server.close()
        for connection, _ in accepted:
            connection.close()


# ----------------------------------------------------------------------------------------------
# the API: the same validators, the same messages

@pytest.fixture
def dual(folder):
    return load_stack(folder / DUAL)


@pytest.mark.parametrize("options_, pattern", [
    ({"suns": 1e6}, SUNS.format(r"1e\+06")),
    ({"suns": math.nan}, r"key 'suns' is nan"),
    ({"suns": -1}, SUNS.format("-1")),
    ({"temperature_K": 1}, TEMPERATURE.format(1)),
    ({"temperature_K": np.float32(2000)}, TEMPERATURE.format(2000)),
    ({"suns": "10"}, r"key 'suns' must be a number \(suns\), got str '10'"),
    ({"curve_points": 5}, r"points = 5 is outside its physical range"),
    ({"curve_points": 50.5}, r"points = 50\.5 is not a whole number"),
])
def test_run_stack_checks_its_overrides(dual, options_, pattern):
    with pytest.raises(StackError, match=pattern) as info:
        run_stack(dual, **options_)
    assert info.value.where.startswith("argument ")


def test_every_study_entry_checks_its_arguments(dual, folder):
    gap = parse_vary("top.gap_eV=1.6:1.8:3", dual)
    series = parse_vary("rear contact.series_ohm_cm2=0:1:2", dual)
    with pytest.raises(StackError, match=SUNS.format("0")):
        solve_designs(dual, {}, suns=0)
    with pytest.raises(StackError, match=SUNS.format("-1")):
        match_currents(dual, gap, suns=-1, progress=False)
    with pytest.raises(StackError, match=TEMPERATURE.format(0)):
        design_map(dual, gap, series, temperature_K=0, progress=False)
    with pytest.raises(StackError, match=r"argument workers: workers = 0 is outside"):
        design_map(dual, gap, series, workers=0, progress=False)
    with pytest.raises(StackError, match=r"argument cluster: 'garbage' is not a scheduler"):
        design_map(dual, gap, series, cluster="garbage", progress=False)
    with pytest.raises(StackError, match=r"chunk_rows = 0 is outside its physical range"):
        design_map(dual, gap, series, chunk_rows=0, progress=False)
    with pytest.raises(StackError, match=r"key 'suns' is nan"):
        loss_waterfall(dual, suns=math.nan)
    with pytest.raises(StackError, match=SUNS.format(r"1e\+06")):
        concentration_series(dual, [1.0, 1e6])
    with pytest.raises(StackError, match=SUNS.format("-1")):
        rank_placements(load_stack(folder / PLACES), suns=-1, progress=False)
    from siltandem import annual_yield

    with pytest.raises(StackError, match=r"key 'tilt_deg' is nan"):
        annual_yield(dual, "demo", tilt_deg=math.nan)
    with pytest.raises(StackError, match=r"albedo = 2 is outside its physical range"):
        annual_yield(dual, "demo", albedo=2.0)


def test_the_api_checks_every_design_of_a_grid(folder):
    stack = load_stack(folder / TUNNEL)
    peak = Variation("junction", "peak_mA_cm2", np.array([20.0, 10.0, 0.8, 5.0]))
    gap = Variation("top", "gap_eV", np.array([1.7, 1.8]))
    with pytest.raises(StackError, match=r"junction\.peak_mA_cm2 = 0\.8: valley_mA_cm2 = 1 is "
                                         r"not below peak_mA_cm2 = 0\.8"):
        design_map(stack, peak, gap, progress=False)


def test_the_memory_estimate_names_what_to_change():
    with pytest.raises(StackError, match=r"argument variations: a study of 1e\+09 designs"):
        options.check_study_memory(1e9, available=10**9)
    with pytest.raises(StackError, match=r"argument chunk_rows: a study of 1e\+06 designs in "
                                         r"chunks of 1000000 designs"):
        options.check_study_memory(10**6, chunk_rows=10**6, available=10**10)
    with pytest.raises(StackError, match=r"argument workers: .* on 64 worker processes"):
        options.check_study_memory(100, workers=64, available=10**10)
    options.check_study_memory(10**6, available=10**10)   # 1e6 designs in 10 GB pass


@pytest.mark.parametrize("address, parsed", [
    ("tcp://127.0.0.1:8786", ("tcp", "127.0.0.1", 8786)),
    ("127.0.0.1:8786", ("tcp", "127.0.0.1", 8786)),
    ("tls://scheduler.example.org:8786", ("tls", "scheduler.example.org", 8786)),
    ("tcp://[::1]:8786", ("tcp", "::1", 8786)),
])
def test_good_cluster_addresses_are_read(address, parsed):
    assert options.check_cluster_address(address) == parsed


# a Variation given to a study through the API is checked as --vary is (issue 20): before, a
# misspelt key varied nothing, an unknown element ended in a KeyError and absorptance 1.5 gave
# 32.5 mA/cm2, above the photon limit (ASTM G173 above 1.73 eV: 21.67 mA/cm2)
API_VARIATIONS = [
    (Variation("top", "gapp_eV", np.array([1.6, 1.7])),
     r"'top\.gapp_eV': subcell 'top' has no numeric key 'gapp_eV'", r"did you mean 'gap_eV'\? "
     r"vary one of absorptance, .*gap_eV"),
    (Variation("topp", "gap_eV", np.array([1.6, 1.7])), r"'topp\.gap_eV': no element named 'topp'",
     r"did you mean 'top'\? the stack's elements are 'front grid', 'top', 'silicon', "
     r"'rear contact'"),
    (Variation("top", "absorptance", np.array([0.8, 1.5])),
     r"'top\.absorptance': absorptance = 1\.5 is outside its physical range \[1e-06, 1\]",
     r"give absorptance within \[1e-06, 1\]"),
    (Variation("top", "absorptance", np.array([-0.2])),
     r"absorptance = -0\.2 is outside its physical range \[1e-06, 1\]", r"within \[1e-06, 1\]"),
    (Variation("top", "gap_eV", np.array([1.6, math.nan])), r"'top\.gap_eV': nan is not a finite",
     r"finite values"),
    (Variation("top", "gap_eV", np.array([])), r"'top\.gap_eV': no values", r"parse_vary"),
    (Variation("top", "gap_eV", ["a", "b"]), r"the values .* are not numbers", r"parse_vary"),
    ("top.gap_eV=1.6:1.9:3", r"'top\.gap_eV=1\.6:1\.9:3' is not a Variation", r"parse_vary"),
]


@pytest.mark.parametrize("variation, problem, fix", API_VARIATIONS)
def test_a_bad_variation_given_to_the_api_is_refused(dual, variation, problem, fix):
    other = parse_vary("rear contact.series_ohm_cm2=0:1:2", dual)
    for call in (lambda: design_map(dual, other, variation, progress=False),
                 lambda: match_currents(dual, variation, progress=False)):
        with pytest.raises(StackError, match=problem) as info:
            call()
        assert info.value.where.startswith("argument variations")
        assert re.search(fix, info.value.fix), info.value.fix


def test_a_key_varied_twice_is_refused(dual):
    gap = parse_vary("top.gap_eV=1.6:1.8:3", dual)
    with pytest.raises(StackError, match=r"'top\.gap_eV' is varied twice"):
        design_map(dual, gap, gap, progress=False)


@pytest.mark.parametrize("stack, text, problem, fix", [
    (DUAL, "top.gapp_eV=1.6:1.9:3", r"subcell 'top' has no numeric key 'gapp_eV'",
     r"did you mean 'gap_eV'\?"),
    (DUAL, "topp.gap_eV=1.6:1.9:3", r"no element named 'topp'", r"did you mean 'top'\?"),
    (LAYERS, "top base.thicknes_nm=100:200:3", r"layer 'top base' has no numeric key",
     r"did you mean 'thickness_nm'\?"),
    (LAYERS, "tpo base.thickness_nm=100:200:3", r"no layer named 'tpo base'",
     r"did you mean 'top base'"),
])
def test_parse_vary_suggests_the_closest_names(folder, stack, text, problem, fix):
    with pytest.raises(StackError, match=problem) as info:
        parse_vary(text, load_stack(folder / stack))
    assert info.value.where == "--vary" and re.search(fix, info.value.fix), info.value.fix
