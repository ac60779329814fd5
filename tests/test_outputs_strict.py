"""Every output of every command: strict JSON (null, never NaN or Infinity), and no nan or inf in
the text or the CSV, for the demo stacks and for hostile stacks that are valid (a blocked
isotype interface, a numbers-form isotype without an offset, a tunnel junction without light
above the gaps, names with control characters and formula signs).

JSON strictness is checked with ``json.loads(..., parse_constant=...)``, which the Python
standard library calls for exactly the three non-standard constants NaN, Infinity, -Infinity
(RFC 8259 has no such values).
"""
import csv
import json
from pathlib import Path
import re

import pytest

from siltandem.cli import main as cli

ROOT = Path(__file__).resolve().parents[1]
STACKS = ROOT / "stacks"
NOT_A_NUMBER = re.compile(r"(?<![A-Za-z_])(nan|inf|infinity)(?![A-Za-z_])", re.IGNORECASE)

HOSTILE = {
    "blocked_isotype.toml": """[stack]
name = "blocked isotype"
[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.73
[[element]]
kind = "isotype"
name = "interface"
barrier_eV = 1.2
built_in_V = 1.0
alpha = 1e8
orientation = "reverse"
[[element]]
kind = "subcell"
name = "silicon"
gap_eV = 1.12
""",
    "numbers_isotype.toml": """[stack]
name = "numbers-form isotype"
[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.73
[[element]]
kind = "isotype"
name = "interface"
barrier_eV = 0.3
built_in_V = 0.2
alpha = 1.0
[[element]]
kind = "subcell"
name = "silicon"
gap_eV = 1.12
""",
    "dark_tunnel.toml": (STACKS / "demo_tunnel_limit.toml").read_text().replace(
        'spectrum = "am1.5g"', 'spectrum = "infrared.csv"'),
    "names.toml": """[stack]
name = "names \\u001b[31m"
[[element]]
kind = "subcell"
name = "=top\\u0007"
gap_eV = 1.73
[[element]]
kind = "tunnel"
name = "+junction\\u001b]0;x"
peak_mA_cm2 = 15
peak_V = 0.05
valley_mA_cm2 = 1
valley_V = 0.2
[[element]]
kind = "subcell"
name = "-silicon\\u202e"
gap_eV = 1.12
[[element]]
kind = "resistor"
name = "@contacts"
series_ohm_cm2 = 0.5
""",
}


@pytest.fixture(scope="module")
def hostile(tmp_path_factory):
    folder = tmp_path_factory.mktemp("hostile")
    (folder / "infrared.csv").write_text("wavelength_nm,irradiance_W_m2_nm\n# INVENTED\n"
                                         "1300,1.0\n2000,1.0\n")
    for name, text in HOSTILE.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def _stack(name, hostile):
    return STACKS / name if name.startswith("demo_") else hostile / name


def _strict(text):
    def refuse(constant):
        raise AssertionError(f"not strict JSON: {constant}")

    return json.loads(text, parse_constant=refuse)


def _run(argv, capsys):
    status = cli.main([str(a) for a in argv])
    out, err = capsys.readouterr()
    assert "Traceback" not in err
    return status, out, err


def _check_outputs(argv, tmp_path, capsys, *, csv_option="--csv"):
    """Run once with --json and a CSV file, once with --json -; check all three outputs."""
    json_path, csv_path = tmp_path / "out.json", tmp_path / "out.csv"
    status, out, err = _run(argv + ["--json", json_path, csv_option, csv_path], capsys)
    assert status == 0, err
    assert not NOT_A_NUMBER.search(out), [line for line in out.splitlines() if NOT_A_NUMBER.search(line)]
    assert not any(c in out for c in "\x1b\x07\u202e")
    summary = _strict(json_path.read_text())
    lines = csv_path.read_text(encoding="utf-8").splitlines(keepends=True)
    header = [line for line in lines if line.startswith("# ")]      # the provenance lines
    assert header == lines[:len(header)]
    if argv[0] != "yield":                  # the yield year's CSV has no provenance header yet
        assert "# siltandem_version: " in header[0]
    rows = list(csv.reader(lines[len(header):]))
    assert len(rows) > 1
    for row in rows:
        for cell in row:
            assert not NOT_A_NUMBER.fullmatch(cell.strip()), (row, cell)
            assert not cell.startswith(("=", "+", "@", "\t", "\r")), cell
            assert not (cell.startswith("-") and not _is_number(cell)), cell
    status, out, _ = _run(argv + ["--json", "-"], capsys)
    assert status == 0
    assert _strict(out) == summary           # stdout carries the JSON alone
    return summary, rows


def _is_number(text):
    try:
        float(text)
    except ValueError:
        return False
    return True


RUN_STACKS = sorted(p.name for p in STACKS.glob("demo_*.toml")) + sorted(HOSTILE)


@pytest.mark.parametrize("name", RUN_STACKS)
def test_run_outputs_are_strict(name, hostile, tmp_path, capsys):
    summary, rows = _check_outputs(["run", _stack(name, hostile)], tmp_path, capsys,
                                   csv_option="--curve")
    if name == "numbers_isotype.toml":
        assert summary["interfaces"][0]["offset_eV"] is None
    if name == "blocked_isotype.toml":
        assert summary["jsc_mA_cm2"] is None and summary["fill_factor_pct"] is None
        assert any("no value for" in w or "null" in w for w in summary["warnings"])
    if name == "names.toml":
        assert rows[0][2:] == ["'=top\\x07_V", "'+junction\\x1b]0;x_V", "'-silicon\\u202e_V",
                               "'@contacts_V"]


def test_run_text_says_none_and_dash_where_there_is_no_value(hostile, capsys):
    status, out, _ = _run(["run", hostile / "numbers_isotype.toml"], capsys)
    assert status == 0
    row = next(line for line in out.splitlines() if line.strip().startswith("interface ") and "electron"
               in line)
    assert row.split()[3] == "-"                       # the offset column
    assert "(offset -: an interface given by its law's numbers has no band offset" in out
    status, out, _ = _run(["run", hostile / "blocked_isotype.toml"], capsys)
    assert "  Jsc                   none\n" in out
    assert "warning: string 1: no value for Jsc" in out or "null" in out


@pytest.mark.parametrize("name", ["demo_dual.toml", "demo_interfaces.toml",
                                  "demo_dual_layers.toml", "blocked_isotype.toml",
                                  "dark_tunnel.toml", "names.toml"])
def test_losses_outputs_are_strict(name, hostile, tmp_path, capsys):
    summary, _ = _check_outputs(["losses", _stack(name, hostile)], tmp_path, capsys)
    assert summary["steps"]


@pytest.mark.parametrize("command, name, vary", [
    ("match", "demo_dual.toml", ["--vary", "top.gap_eV=1.6:1.9:5"]),
    ("match", "blocked_isotype.toml", ["--vary", "top.gap_eV=1.6:1.9:4"]),
    ("match", "names.toml", ["--vary", "@contacts.series_ohm_cm2=0:1:3"]),
    ("map", "demo_dual.toml", ["--vary", "top.gap_eV=1.6:1.9:3", "--vary",
                               "silicon.ere=0.001:0.01:3"]),
    ("map", "blocked_isotype.toml", ["--vary", "top.gap_eV=1.6:1.9:3", "--vary",
                                     "interface.alpha=1:1e8:3"]),
])
def test_study_outputs_are_strict(command, name, vary, hostile, tmp_path, capsys):
    _check_outputs([command, _stack(name, hostile), *vary, "--quiet"], tmp_path, capsys)


def test_placements_outputs_are_strict(tmp_path, capsys):
    summary, _ = _check_outputs(["placements", STACKS / "demo_placements.toml", "--quiet"],
                                tmp_path, capsys)
    assert len(summary["ranking"]) == 3


@pytest.mark.parametrize("name", ["demo_triple.toml", "blocked_isotype.toml", "names.toml"])
def test_yield_outputs_are_strict(name, hostile, tmp_path, capsys):
    summary, _ = _check_outputs(["yield", _stack(name, hostile), "--weather", "demo"], tmp_path,
                                capsys)
    assert summary["weather"]["hours"] == 8760


@pytest.mark.parametrize("name", ["demo_dual_layers.toml", "demo_triple_layers.toml",
                                  "lambertian_triple.toml"])
def test_spectral_table_is_strict(name, hostile, tmp_path, capsys):
    # the per-wavelength table of a layer stack (run --spectral): no nan or inf in any cell, also
    # at the wavelengths where AM1.5G has no photons and with a scattering rear and front
    if name == "lambertian_triple.toml":
        (hostile / name).write_text((STACKS / "demo_triple_layers.toml").read_text().replace(
            'back_reflectance = 0.9\nback_scattering = "lambertian"\n',
            'back_reflectance = 1.0\nback_scattering = "lambertian"\nfront_scattering = "lambertian"\n'))
    summary, rows = _check_outputs(["run", _stack(name, hostile)], tmp_path, capsys,
                                   csv_option="--spectral")
    assert rows[0][:3] == ["wavelength_nm", "reflectance", "transmittance"]
    assert len(rows) == 1 + 2002                     # the ASTM G173 grid
    assert all(_is_number(cell) for row in rows[1:] for cell in row)
    assert summary["spectral_bands"]


@pytest.mark.parametrize("name", ["demo_interfaces.toml", "numbers_isotype.toml",
                                  "blocked_isotype.toml"])
def test_interface_text_has_no_nan(name, hostile, capsys):
    status, out, _ = _run(["interface", _stack(name, hostile)], capsys)
    assert status == 0
    assert not NOT_A_NUMBER.search(out)


def test_concentration_series_outputs_are_strict(hostile, tmp_path, capsys):
    _check_outputs(["run", hostile / "names.toml", "--suns-range", "1:1000:4"], tmp_path, capsys,
                   csv_option="--table")
