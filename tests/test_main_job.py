"""The main job end to end: the command line, the JSON contract, the curve CSV and the plot.

Contract tests of our command line and JSON (our own schema; no outside check values here:
the physics is checked against published values in test_solve.py and test_spectra.py). The
efficiency reference is the AM1.5G nominal 1000 W/m2 of IEC 60904-3.
"""
import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from siltandem import run_stack, load_stack

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "stacks" / "demo_dual.toml"


def cli(*args, cwd=None):
    env = dict(os.environ, MPLBACKEND="Agg")
    return subprocess.run([sys.executable, "-m", "siltandem.cli.main", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd, env=env, timeout=300)


def test_run_without_file_runs_the_demo():
    done = cli("run")
    assert done.returncode == 0, done.stderr
    for text in ("efficiency", "Voc", "Jsc", "fill factor", "MPP voltage", "MPP current",
                 "* top", "front grid", "loss W/m2", "caution: Results are models"):
        assert text in done.stdout


def test_json_contract(tmp_path):
    out = tmp_path / "r.json"
    done = cli("run", DEMO, "--json", out)
    assert done.returncode == 0, done.stderr
    data = json.loads(out.read_text())
    for key in ("stack", "conditions", "efficiency_pct", "voc_V", "jsc_mA_cm2", "fill_factor_pct",
                "mpp_V", "mpp_mA_cm2", "subcells", "elements", "parasitic",
                "power_balance_error_W_m2", "warnings"):
        assert key in data
    assert set(data["conditions"]) >= {"spectrum", "suns", "temperature_K", "irradiance_W_m2"}
    for cell in data["subcells"]:
        assert set(cell) >= {"name", "gap_eV", "photocurrent_mA_cm2", "limiting"}
    assert sum(c["limiting"] for c in data["subcells"]) == 1
    for element in data["elements"]:
        assert set(element) >= {"name", "kind", "voltage_at_mpp_V", "loss_W_m2", "loss_pct_abs"}
    assert data["parasitic"] == []
    # internal consistency of the contract: P = V J, efficiency = P / irradiance
    power = data["mpp_V"] * data["mpp_mA_cm2"] * 10
    assert data["efficiency_pct"] == pytest.approx(100 * power / 1000.0, rel=1e-12)
    assert sum(e["voltage_at_mpp_V"] for e in data["elements"]) == pytest.approx(data["mpp_V"],
                                                                                 abs=1e-12)
    assert data["power_balance_error_W_m2"] < 1e-9 * power


def test_json_to_stdout_is_only_json():
    done = cli("run", DEMO, "--json", "-")
    assert done.returncode == 0
    assert json.loads(done.stdout)["stack"] == "Larkspur dual, trial 3"


def test_curve_and_plot_files(tmp_path):
    curve, png, svg = tmp_path / "iv.csv", tmp_path / "iv.png", tmp_path / "iv.svg"
    done = cli("run", DEMO, "--curve", curve, "--plot", png)
    assert done.returncode == 0, done.stderr
    frame = pd.read_csv(curve, comment="#")
    assert list(frame.columns[:2]) == ["voltage_V", "current_mA_cm2"]
    assert list(frame.columns[2:]) == ["front grid_V", "top_V", "silicon_V", "rear contact_V"]
    np.testing.assert_allclose(frame.iloc[:, 2:].sum(axis=1), frame["voltage_V"], atol=1e-8)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert cli("run", DEMO, "--plot", svg).returncode == 0
    assert b"<svg" in svg.read_bytes()[:400]


def test_options_override_the_file(tmp_path):
    stack = load_stack(DEMO)
    base = run_stack(stack, curve_points=50)
    hot = run_stack(stack, temperature_K=340.0, curve_points=50)
    concentrated = run_stack(stack, suns=20, curve_points=50)
    direct = run_stack(stack, spectrum="am1.5d", curve_points=50)
    assert hot.summary["voc_V"] < base.summary["voc_V"]
    assert concentrated.summary["voc_V"] > base.summary["voc_V"]
    # photocurrents scale with the light (ideality-1 and -2 diodes do not change them)
    top = lambda r: r.summary["subcells"][0]["photocurrent_mA_cm2"]  # noqa: E731
    assert top(concentrated) == pytest.approx(20 * top(base), rel=1e-12)
    assert direct.summary["conditions"]["spectrum"] == "am1.5d"
    assert any("caution" in c or "suns" in c for c in concentrated.summary["cautions"][1:])


def test_spectrum_csv_in_the_stack_resolves_next_to_it(tmp_path):
    (tmp_path / "lamp.csv").write_text("wavelength_nm,irradiance_W_m2_nm\n300,1.0\n1300,1.0\n")
    stack_text = DEMO.read_text().replace('spectrum = "am1.5g"', 'spectrum = "lamp.csv"')
    (tmp_path / "s.toml").write_text(stack_text)
    elsewhere = tmp_path / "other"
    elsewhere.mkdir()
    done = cli("run", tmp_path / "s.toml", "--json", "-", cwd=elsewhere)
    assert done.returncode == 0, done.stderr
    data = json.loads(done.stdout)
    assert data["conditions"]["irradiance_W_m2"] == pytest.approx(1000.0)


def test_four_terminal_each_string_at_its_own_mpp():
    result = run_stack(load_stack(ROOT / "stacks" / "demo_four_terminal.toml"), curve_points=50)
    s = result.summary
    assert len(s["strings"]) == 2 and s["voc_V"] is None
    assert s["efficiency_pct"] == pytest.approx(sum(r["efficiency_pct"] for r in s["strings"]),
                                                rel=1e-12)
    assert all(c["limiting"] for c in s["subcells"])


@pytest.mark.parametrize("args, message", [
    (["run", "missing.toml"], "stack file not found"),
    (["run", DEMO, "--spectrum", "am2"], "unknown spectrum 'am2'"),
    (["run", DEMO, "--spectrum", "nofile.csv"], "spectrum file not found"),
    (["run", DEMO, "--plot", "x.gif"], "unsupported file type"),
    (["run", DEMO, "--curve", "x.txt"], "unsupported file type"),
    (["run", DEMO, "--suns", "-3"], "suns = -3 is outside its physical range (0, 100000]"),
])
def test_bad_input_exits_2_without_traceback(tmp_path, args, message):
    done = cli(*args, cwd=tmp_path)
    assert done.returncode == 2
    assert message in done.stderr
    assert "Traceback" not in done.stderr
    assert list(tmp_path.iterdir()) == []   # nothing written half-way


def test_malformed_spectrum_from_stack_file_exit_2(tmp_path):
    (tmp_path / "bad.csv").write_text("wavelength_nm,irradiance_W_m2_nm\n500,1\n400,1\n")
    (tmp_path / "s.toml").write_text(DEMO.read_text().replace('"am1.5g"', '"bad.csv"'))
    done = cli("run", tmp_path / "s.toml")
    assert done.returncode == 2 and "not increasing" in done.stderr
    assert "Traceback" not in done.stderr


TUNNEL_DEMO = ROOT / "stacks" / "demo_tunnel_limit.toml"


def test_tunnel_junction_past_peak_is_reported():
    data = json.loads(cli("run", TUNNEL_DEMO, "--json", "-").stdout)
    assert data["regime"] == "past peak, hysteresis"
    (junction,) = data["tunnel_junctions"]
    assert junction["peak_mA_cm2"] == pytest.approx(15.0, rel=1e-9)   # the exact requested peak
    assert junction["peak_over_largest_photocurrent"] < 1
    assert any("below the string's largest photocurrent" in w for w in data["warnings"])
    assert data["mpp_mA_cm2"] <= 15.0 * (1 + 1e-9)


def test_sweeps_up_and_down_differ_with_hysteresis(tmp_path):
    up, down = tmp_path / "up.csv", tmp_path / "down.csv"
    assert cli("run", TUNNEL_DEMO, "--sweep", "up", "--curve", up).returncode == 0
    done = cli("run", TUNNEL_DEMO, "--sweep", "down", "--curve", down, "--plot",
               tmp_path / "s.png")
    assert done.returncode == 0 and "voltage sweep down" in done.stdout
    a = pd.read_csv(up, comment="#").sort_values("voltage_V")
    b = pd.read_csv(down, comment="#").sort_values("voltage_V")
    np.testing.assert_allclose(a["voltage_V"], b["voltage_V"], atol=1e-12)
    gap = np.nanmax(np.abs(a["current_mA_cm2"].to_numpy() - b["current_mA_cm2"].to_numpy()))
    assert gap > 1.0   # mA/cm2: the two sweeps sit on different branches somewhere


def test_concentration_series(tmp_path):
    table = tmp_path / "series.csv"
    done = cli("run", ROOT / "stacks" / "demo_concentrator.toml", "--suns-range", "1:2000:12",
               "--table", table, "--plot", tmp_path / "c.png")
    assert done.returncode == 0, done.stderr
    frame = pd.read_csv(table, comment="#")
    assert len(frame) == 12 and frame["suns"].iloc[-1] == pytest.approx(2000)
    # Jsc rises in proportion to the light while every junction is below its peak; at 1 sun the
    # reverse-biased limiting cell's shunt adds about 0.2 % (2.5 V across 1e5 ohm cm2)
    below = frame["regime"] == "below peak"
    ratio = frame["jsc_mA_cm2"][below] / frame["suns"][below]
    assert ratio.max() / ratio.min() == pytest.approx(1.0, abs=5e-3)
    assert frame["lower junction.peak_exceeded"].iloc[-1]
    assert not frame["lower junction.peak_exceeded"].iloc[0]
    assert "concentrated light" in done.stdout


@pytest.mark.parametrize("args, message", [
    (["--suns-range", "5:1:3"], "START 5 is not below STOP 1"),
    (["--suns-range", "abc"], "is not START:STOP:N"),
    (["--table", "t.csv"], "--table goes with --suns-range"),
])
def test_bad_range_options(tmp_path, args, message):
    done = cli("run", DEMO, *args, cwd=tmp_path)
    assert done.returncode == 2 and message in done.stderr


def test_materials_command():
    listing = cli("materials")
    assert listing.returncode == 0
    for name in ("Si", "GaAs", "GaP", "GaInP", "AlGaAs", "AlInP", "GaAsP"):
        assert f"  {name} " in listing.stdout
    one = cli("materials", "GaInP", "--composition", "0.51")
    assert one.returncode == 0 and "lowest gap" in one.stdout and "VMR" in one.stdout
    bad = cli("materials", "Silicn")
    assert bad.returncode == 2 and "Si" in bad.stderr and "Traceback" not in bad.stderr


def test_python_dash_m_siltandem_cli_is_the_same_command_line():
    # `python -m siltandem.cli` (cli/__main__.py) and the `siltandem` script's entry point
    # (cli.main:main) give the same help text and exit code
    env = dict(os.environ, MPLBACKEND="Agg")
    package = subprocess.run([sys.executable, "-m", "siltandem.cli", "--help"],
                             capture_output=True, text=True, env=env, timeout=300)
    entry = cli("--help")
    assert package.returncode == entry.returncode == 0, package.stderr
    assert "run" in package.stdout
    assert package.stdout == entry.stdout
