"""Hostile input files and environments: each is answered (exit 2 with one message, or a correct
solve with a warning), never a traceback; and the sanity checks behind them.

The malformed stack files themselves are in tests/malformed (test_malformed.py); this file holds
the cases that need a spectrum, a weather file, a monkeypatched disk or a comparison. Expected
wording is our own; the physics checks name their source beside them.
"""
import errno
import math
import os
from pathlib import Path
import subprocess
import sys

import numpy as np
import pytest
import scipy.constants as sc

from siltandem.cli import main as cli
from siltandem import StackError, run_stack, load_stack
from siltandem.stack.load import parse_stack

ROOT = Path(__file__).resolve().parents[1]
STACKS = ROOT / "stacks"
TUNNEL_STACK = (STACKS / "demo_tunnel_limit.toml").read_text()
LAYER_STACK = (STACKS / "demo_dual_layers.toml").read_text()


def _write(folder, name, text):
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def _main(argv, capsys):
    status = cli.main([str(a) for a in argv])
    out, err = capsys.readouterr()
    assert "Traceback" not in err
    return status, out, err


#: the words a formatted NaN or infinity leaves in text
NOT_A_NUMBER = __import__("re").compile(r"(?<![A-Za-z_])(nan|inf|infinity)(?![A-Za-z_])",
                                        __import__("re").IGNORECASE)


def _strict_json(text):
    def refuse(constant):
        raise ValueError(f"not strict JSON: {constant}")

    import json

    return json.loads(text, parse_constant=refuse)


# --- no light above the gaps: a correct solve (no power) with a warning, not a ZeroDivisionError
INFRARED = "wavelength_nm,irradiance_W_m2_nm\n# INVENTED: light only beyond 1300 nm\n1300,1.0\n2000,1.0\n"


@pytest.mark.parametrize("case", ["tunnel junction under infrared light",
                                  "absorbing coating inside its ranges"])
def test_no_light_above_the_gaps_is_solved_with_a_warning(case, tmp_path, capsys):
    if case.startswith("tunnel"):
        _write(tmp_path, "infrared.csv", INFRARED)
        text = TUNNEL_STACK.replace('spectrum = "am1.5g"', 'spectrum = "infrared.csv"')
    else:   # extinction 5 (the top of its range) over 1000 nm: e^-60 of the light gets through
        text = LAYER_STACK.replace("refractive_index = 1.9\nthickness_nm = 80",
                                   "refractive_index = 1.9\nextinction = 5\nthickness_nm = 1000")
    stack = _write(tmp_path, "stack.toml", text)
    status, out, _ = _main(["run", stack, "--json", tmp_path / "r.json",
                            "--curve", tmp_path / "c.csv"], capsys)
    assert status == 0
    summary = _strict_json((tmp_path / "r.json").read_text())
    assert summary["efficiency_pct"] == 0.0
    assert all(c["photocurrent_mA_cm2"] == 0.0 for c in summary["subcells"])
    assert summary["fill_factor_pct"] is None
    assert all(t["peak_over_largest_photocurrent"] is None for t in summary["tunnel_junctions"])
    warning = ("string 1: no subcell receives light above its gap (every photocurrent is 0): it "
               "gives no power, and fill factor has no value")
    assert any(w.startswith(warning) for w in summary["warnings"])
    assert "warning: " + warning in out
    assert "fill factor           none\n" in out
    assert not NOT_A_NUMBER.search(out)


# --- the layer path honours the temperature range, whatever set the temperature --------------
@pytest.mark.parametrize("temperature", [5000.0, 149.0, 1e300])
def test_layer_path_refuses_a_temperature_outside_its_range(temperature):
    stack = load_stack(STACKS / "demo_dual_layers.toml")
    # the one schema of file keys and arguments (stack.CONDITION_SCHEMA) answers first
    with pytest.raises(StackError, match=r"temperature_K = .* is outside its physical range "
                                         r"\[150, 1000\] K") as info:
        run_stack(stack, temperature_K=temperature, curve_points=20)
    assert "temperature_K" in info.value.where and info.value.fix


def test_override_at_5000_K_of_a_layer_stack_exits_2(capsys):
    status, out, err = _main(["run", STACKS / "demo_dual_layers.toml", "--temperature", "5000"],
                             capsys)
    assert status == 2 and out == ""
    assert "temperature_K = 5000 is outside its physical range [150, 1000] K" in err


def test_a_layer_too_lightly_doped_for_its_temperature_is_named():
    """At 800 K silicon's n_i is about 1e17 cm^-3 (library, Green 1990 / Sze), more than a tenth
    of an emitter doped 5e17 cm^-3: the quasi-neutral emitter physics no longer holds. (The
    demo's 1e16 cm^-3 Si base is then a flooded, high-injection base and is no error.)"""
    text = LAYER_STACK.replace('spectrum = "am1.5g"', 'spectrum = "am1.5g"\ntemperature_K = 800')
    text = text.replace('thickness_nm = 400\ndoping = "n:5e18"', 'thickness_nm = 400\ndoping = "n:5e17"')
    assert 'doping = "n:5e17"' in text
    stack = parse_stack(__import__("tomllib").loads(text), file="hot.toml")
    with pytest.raises(StackError, match="intrinsic carrier density of Si") as info:
        run_stack(stack, curve_points=20)
    assert info.value.where == "layer 7 'silicon emitter'"
    assert "dope the layer above" in info.value.fix


# --- one material however it is spelled -------------------------------------------------------
def test_alloy_spellings_are_one_material():
    from siltandem.materials import material_identity

    same = [("Ga0.51In0.49P", None), ("GaInP", 0.51), ("gainp", 0.51), ("In0.49Ga0.51P", None),
            ("GaIn0.49P", None)]
    assert len({material_identity(*m) for m in same}) == 1
    assert material_identity("GaInP", 0.52) != material_identity("GaInP", 0.51)
    assert material_identity("silicon") == material_identity("Si")


GAINP_CELL = """[stack]
name = "spellings"

[[layer]]
name = "window"
material = "GaInP"
composition = 0.51
thickness_nm = 30
doping = "n:5e18"

[[layer]]
name = "top emitter"
material = "Ga0.51In0.49P"
thickness_nm = 100
doping = "n:2e18"
diffusion_length_um = 0.3

[[layer]]
name = "top base"
material = "GaInP"
composition = 0.51
thickness_nm = 800
doping = "p:1e17"
diffusion_length_um = 2
"""


def test_a_homojunction_written_in_two_spellings_is_one_subcell():
    """README: ``material = "GaInP"`` with ``composition = 0.51`` may be written as
    ``Ga0.51In0.49P``; a p-n junction of the two is a homojunction, and the window above it in
    the other spelling meets no isotype interface (a high-low junction of one material)."""
    import tomllib

    stack = parse_stack(tomllib.loads(GAINP_CELL), file="spellings.toml")
    result = run_stack(stack, curve_points=20)
    kinds = [e["kind"] for e in result.summary["elements"]]
    assert kinds == ["subcell"]
    assert result.summary["interfaces"] == []
    assert any("high-low junction of one material" in w for w in result.summary["warnings"])
    # and the stack written in one spelling throughout gives the same numbers, bit for bit
    one = GAINP_CELL.replace('material = "Ga0.51In0.49P"', 'material = "GaInP"\ncomposition = 0.51')
    again = run_stack(parse_stack(tomllib.loads(one), file="one.toml"), curve_points=20)
    assert again.summary["efficiency_pct"] == result.summary["efficiency_pct"]
    assert again.summary["voc_V"] == result.summary["voc_V"]


# --- J02 follows n_i --------------------------------------------------------------------------
def _n_i_ratio_closed_form(t, gap, t0, gap0):
    """n_i ~ T^(3/2) exp(-Eg / 2kT): S. M. Sze, K. K. Ng, Physics of Semiconductor Devices,
    3rd ed. (2007), ch. 1; k/q from scipy.constants (CODATA)."""
    kq = sc.k / sc.e
    return (t / t0) ** 1.5 * math.exp(-gap / (2 * kq * t) + gap0 / (2 * kq * t0))


@pytest.mark.parametrize("temperature", [150.0, 200.0, 350.0, 450.0])
@pytest.mark.parametrize("gap", [0.7, 1.12, 1.73, 2.2])
def test_intrinsic_density_ratio_is_the_closed_form(temperature, gap):
    from siltandem.laws.diode import intrinsic_density_ratio

    ours = float(intrinsic_density_ratio(temperature, gap_eV=gap, reference_temperature_K=298.15,
                                         reference_gap_eV=gap))
    assert ours == pytest.approx(_n_i_ratio_closed_form(temperature, gap, 298.15, gap),
                                 rel=1e-12)


def test_intrinsic_density_ratio_agrees_with_the_library_for_silicon():
    """The materials library computes n_i = sqrt(Nc Nv) exp(-Eg/2kT) from its own densities of
    states and Varshni gap; for silicon (one conduction valley type, fixed masses) the ratio
    must be ours with the same gaps."""
    from siltandem.laws.diode import intrinsic_density_ratio
    from siltandem.materials import load_material

    si = load_material("Si")
    t = np.array([150.0, 200.0, 350.0, 450.0])
    library = si.intrinsic_density_per_m3(t) / si.intrinsic_density_per_m3(298.15)
    ours = intrinsic_density_ratio(t, gap_eV=si.gap_eV(t), reference_temperature_K=298.15,
                                   reference_gap_eV=si.gap_eV(298.15))
    np.testing.assert_allclose(ours, library, rtol=1e-12)


J02_STACK = """[stack]
name = "j02"
[conditions]
temperature_K = {t}
[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.73
j02_mA_cm2 = 1e-12
[[element]]
kind = "subcell"
name = "silicon"
gap_eV = 1.12
material = "Si"
j02_mA_cm2 = 1e-9
"""


@pytest.mark.parametrize("temperature", [200.0, 298.15, 350.0])
def test_j02_of_an_element_stack_follows_n_i(temperature):
    """j02_mA_cm2 is the 298.15 K value; at T it is scaled by n_i(T)/n_i(298.15) with the
    subcell's gap (fixed, or the library's Varshni law with ``material``)."""
    import tomllib

    from siltandem.materials import load_material

    stack = parse_stack(tomllib.loads(J02_STACK.format(t=temperature)))
    circuit = run_stack(stack, curve_points=20).circuit
    top = float(circuit.element("top").j02_A_m2[0, 0])
    silicon = float(circuit.element("silicon").j02_A_m2[0, 0])
    si = load_material("Si")
    gap_t = 1.12 + float(si.gap_eV(temperature)) - float(si.gap_eV(298.15))
    assert top == pytest.approx(1e-12 * 10 * _n_i_ratio_closed_form(temperature, 1.73, 298.15,
                                                                     1.73), rel=1e-12)
    assert silicon == pytest.approx(1e-9 * 10 * _n_i_ratio_closed_form(temperature, gap_t,
                                                                        298.15, 1.12), rel=1e-12)
    if temperature == 298.15:
        assert top == 1e-12 * 10 and silicon == 1e-9 * 10   # the file value, bit for bit


def test_cooler_element_stack_gains_voltage_once_j02_follows_n_i():
    """With J02 frozen at its 298.15 K value the J02 diode capped the top cell's voltage at
    200 K and Voc fell on cooling (2.07 V at 298 K, 1.92 V at 200 K for the demo dual)."""
    stack = load_stack(STACKS / "demo_dual.toml")
    warm = run_stack(stack, curve_points=20).summary["voc_V"]
    cold = run_stack(stack, temperature_K=200.0, curve_points=20).summary["voc_V"]
    assert cold > warm


# --- sanity checks on the files a run reads ---------------------------------------------------
def _weather_lines():
    import pvlib

    path = Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"
    return path.read_text().splitlines(keepends=True)


def test_a_half_year_of_weather_is_refused_with_the_hours_it_covers(tmp_path, capsys):
    lines = _weather_lines()
    half = _write(tmp_path, "half.csv", "".join(lines[:2 + 4380]))
    status, out, err = _main(["yield", STACKS / "demo_dual.toml", "--weather", half], capsys)
    assert status == 2 and out == ""
    assert "the file covers 4380 of the 8760 hours of a year (01 Jan 01:00 to 02 Jul 12:00)" in err
    assert "half.csv" in err and "fix: give a whole typical year" in err


def test_repeated_hours_of_weather_are_refused(tmp_path):
    from siltandem import read_weather

    lines = _weather_lines()
    year = "".join(lines).rstrip("\n") + "\n"
    doubled = _write(tmp_path, "doubled.csv", year + "".join(lines[2:12]))   # ten hours again
    # pvlib moves the file's last row into the next year (coerce_year), so 9 of the ten repeat
    with pytest.raises(StackError, match=r"9 repeated hour\(s\) \(first 01 Jan 01:00\)"):
        read_weather(doubled)


def _with_field(line, index, value):
    fields = line.rstrip("\n").split(",")
    fields[index] = value
    return ",".join(fields) + "\n"


@pytest.mark.parametrize("where, change, message", [
    ("station", (4, "999"), "line 1: the station's latitude 999 deg is outside [-90, 90] deg"),
    ("station", (6, "1e9"), "line 1: the station's altitude 1e+09 m is outside [-500, 9000] m"),
    ("hours", (4, "1e30"), "column ghi: 8760 hour(s) with global horizontal irradiance outside "
                           "[-10, 2000] W/m2 (first 01 Jan 01:00: 1e+30 W/m2)"),
    ("hours", (31, "1e30"), "column temp_air: 8760 hour(s) with air temperature outside "
                            "[-100, 70] degC"),
])
def test_implausible_weather_is_refused(where, change, message, tmp_path):
    """A latitude of 999 used to surface as "--tilt 999 is outside [0, 90]" (the tilt defaults
    to the latitude); a GHI of 1e30 W/m2 or an air temperature of 1e30 degC gave an annual
    energy of 0.00 kWh/m2 without a word."""
    from siltandem import read_weather

    lines = _weather_lines()
    if where == "station":
        lines[0] = _with_field(lines[0], *change)
    else:
        lines[2:] = [_with_field(line, *change) for line in lines[2:]]
    path = _write(tmp_path, "weather.csv", "".join(lines))
    with pytest.raises(StackError) as info:
        read_weather(path)
    assert message in str(info.value)
    assert info.value.file == str(path) and info.value.fix


EQE_STACK = """[stack]
name = "eqe"
[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.73
absorptance = 0.93
[[element]]
kind = "subcell"
name = "silicon"
gap_eV = 1.12
eqe = "{eqe}"
"""


def test_an_eqe_above_the_photons_of_its_gap_is_refused_in_run_and_yield(tmp_path, capsys):
    """An EQE of 1 from 300 to 2500 nm counts photons below silicon's gap (1107 nm); AM1.5G has
    43.81 mA/cm2 of photons above 1.12 eV (README validation table)."""
    _write(tmp_path, "flat.csv", "wavelength_nm,eqe\n300,1\n2500,1\n")
    stack = _write(tmp_path, "stack.toml", EQE_STACK.format(eqe="flat.csv"))
    for argv in (["run", stack], ["yield", stack, "--weather", "demo"],
                 ["yield", STACKS / "demo_dual.toml", "--weather", "demo", "--eqe",
                  f"silicon={tmp_path / 'flat.csv'}"]):
        status, out, err = _main(argv, capsys)
        assert status == 2 and out == ""
        assert "flat.csv" in err
        assert "subcell 'silicon', key eqe" in err or "--eqe silicon" in err
        assert "more than the 43.81 mA/cm2 of photons above its gap (1.120 eV, 1107 nm)" in err


def test_an_eqe_inside_its_gap_is_accepted(tmp_path):
    _write(tmp_path, "edge.csv", "wavelength_nm,eqe\n300,0.95\n1100,0.95\n1107,0\n")
    stack = load_stack(_write(tmp_path, "stack.toml", EQE_STACK.format(eqe="edge.csv")))
    summary = run_stack(stack, curve_points=20).summary
    assert 0 < summary["subcells"][1]["photocurrent_mA_cm2"] < 43.81


# --- hygiene: error messages quote short escaped excerpts, never a file's contents ------------
def test_a_spectrum_that_is_another_file_is_quoted_not_printed(tmp_path):
    secret = "SECRET_TOKEN_" + "x" * 200
    header = "A" * 100 + secret
    _write(tmp_path, "notes.csv", header + "\n1,2\n")
    stack = _write(tmp_path, "stack.toml", (STACKS / "demo_dual.toml").read_text().replace(
        'spectrum = "am1.5g"', 'spectrum = "notes.csv"'))
    with pytest.raises(StackError) as info:
        run_stack(load_stack(stack))
    assert "SECRET_TOKEN" not in str(info.value)
    assert f"({len(header)} characters)" in info.value.problem
    assert len(info.value.problem) < 200


@pytest.mark.parametrize("change", ['kind = "{long}"', 'material = "{long}"', '{long} = 1'])
def test_a_long_value_is_cut_in_the_message(change, tmp_path, capsys):
    text = (STACKS / "demo_dual.toml").read_text().replace(
        'name = "top"\n', 'name = "top"\n' + change.format(long="Q" * 100_000) + "\n", 1)
    if change.startswith("kind"):
        text = text.replace('kind = "subcell"\nname = "top"\n', 'name = "top"\n', 1)
    status, out, err = _main(["run", _write(tmp_path, "long.toml", text)], capsys)
    assert status == 2 and out == ""
    assert "Q" * 700 not in err and "characters cut)" in err and len(err) < 2000


@pytest.mark.skipif(not Path("/proc/self/environ").exists(), reason="needs Linux /proc")
def test_proc_self_environ_as_a_spectrum_prints_no_environment(tmp_path):
    stack = _write(tmp_path, "stack.toml", (STACKS / "demo_dual.toml").read_text().replace(
        'spectrum = "am1.5g"', 'spectrum = "/proc/self/environ"'))
    env = {"AAAA_PADDING": "p" * 80, **os.environ, "ZZZZ_SIL_SECRET": "do-not-print-me"}
    done = subprocess.run([sys.executable, "-m", "siltandem.cli.main", "run", str(stack)],
                          capture_output=True, text=True, env=env, timeout=300)
    assert done.returncode == 2 and done.stdout == ""
    assert "Traceback" not in done.stderr
    assert "do-not-print-me" not in done.stderr and "ZZZZ_SIL_SECRET" not in done.stderr
    assert "/proc/self/environ" in done.stderr and "characters)" in done.stderr
    assert len(done.stderr) < 800


def test_names_with_control_characters_reach_no_terminal_or_error_raw(tmp_path, capsys):
    text = ('[stack]\nname = "evil \\u001b[2J stack"\n[[element]]\nkind = "subcell"\n'
            'name = "top\\u001b[31m\\u0007"\ngap_eV = 1.73\n[[element]]\nkind = "subcell"\n'
            'name = "si\\u202e"\ngap_eV = 1.12\n[[element]]\nkind = "resistor"\n'
            'name = "r\\r"\nseries_ohm_cm2 = -1\n')
    stack = _write(tmp_path, "names.toml", text)
    status, out, err = _main(["run", stack], capsys)
    assert status == 2
    assert "\x1b" not in err and "\r" not in err
    assert "element 3 'r\\r'" in err
    _write(tmp_path, "names.toml", text.replace("= -1", "= 0.5"))
    status, out, err = _main(["run", stack, "--curve", tmp_path / "c.csv"], capsys)
    assert status == 0
    assert not any(c in out for c in "\x1b\x07\r\u202e")
    assert "evil \\x1b[2J stack" in out and "top\\x1b[31m\\x07" in out and "si\\u202e" in out


def test_csv_cells_that_would_start_a_formula_are_quoted(tmp_path, capsys):
    """OWASP CSV injection guidance: a cell starting with = + - @ tab or CR gets a leading
    single quote; numbers (a negative voltage) stay numbers."""
    import csv

    text = ('[stack]\nname = "f"\n[[element]]\nkind = "subcell"\nname = "=HYPERLINK(1)"\n'
            'gap_eV = 1.73\n[[element]]\nkind = "subcell"\nname = "+si"\ngap_eV = 1.12\n'
            '[[element]]\nkind = "resistor"\nname = "@r"\nseries_ohm_cm2 = 0.5\n')
    stack = _write(tmp_path, "f.toml", text)
    assert _main(["run", stack, "--curve", tmp_path / "c.csv"], capsys)[0] == 0
    rows = list(csv.reader(line for line in (tmp_path / "c.csv").open() if line[0] != "#"))
    assert rows[0] == ["voltage_V", "current_mA_cm2", "'=HYPERLINK(1)_V", "'+si_V", "'@r_V"]
    assert any(float(r[0]) < 0 for r in rows[1:])            # negative numbers untouched
    assert _main(["match", stack, "--vary", "@r.series_ohm_cm2=0:1:3", "--quiet", "--csv",
                  tmp_path / "m.csv"], capsys)[0] == 0
    rows = list(csv.reader(line for line in (tmp_path / "m.csv").open() if line[0] != "#"))
    assert "'=HYPERLINK(1).photocurrent_mA_cm2" in rows[0]
    limiting = rows[0].index("limiting_subcell")
    assert {r[limiting] for r in rows[1:]} <= {"'=HYPERLINK(1)", "'+si"}


# --- a full or read-only disk -----------------------------------------------------------------
@pytest.mark.parametrize("failure, reason", [
    (OSError(errno.ENOSPC, "No space left on device"), "the disk is full"),
    (OSError(errno.EROFS, "Read-only file system"), "the file system is read-only"),
    (PermissionError(errno.EACCES, "Permission denied"), "permission denied"),
])
def test_an_output_that_cannot_be_written_exits_2_naming_it(failure, reason, tmp_path,
                                                            monkeypatch, capsys):
    def fail(*args, **kwargs):
        raise failure

    monkeypatch.setattr(os, "replace", fail)
    target = tmp_path / "result.json"
    status, out, err = _main(["run", STACKS / "demo_dual.toml", "--json", target], capsys)
    assert status == 2
    assert err.count("siltandem: error: ") == 1
    assert f"{target}: output: cannot write the output file: {reason}" in err
    assert "fix: free some space" in err
    assert list(tmp_path.iterdir()) == []        # the temporary file is gone, nothing written
