"""Loss waterfall: steps computed by removing one loss at a time; they add up to the total.

Sources: the detailed-balance limit (W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510;
A. De Vos, J. Phys. D 13 (1980) 839) through the R value of ../shared/REFERENCES.md for the
four-terminal dual (45.25 %); the other checks compare with the main job on modified files.
"""
from pathlib import Path

import pytest

from siltandem import run_stack, load_stack, loss_waterfall
from test_main_job import cli

ROOT = Path(__file__).resolve().parents[1]
RADIATIVE = """[conditions]
spectrum = "am1.5g"
temperature_K = 300
[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.81
[[element]]
kind = "subcell"
name = "bottom"
gap_eV = 1.12
"""


def test_radiative_dual_loses_only_to_current_mismatch(tmp_path):
    # R (../shared/REFERENCES.md): four-terminal dual on Si 45.25 % with the top near 1.81 eV
    path = tmp_path / "dual.toml"
    path.write_text(RADIATIVE)
    waterfall = loss_waterfall(load_stack(path))
    assert waterfall["limit_pct"] == pytest.approx(45.25, abs=0.05)
    steps = {s["loss"]: s["loss_pct_abs"] for s in waterfall["steps"]}
    assert steps.pop("current mismatch") > 0.5
    assert all(abs(v) < 1e-9 for v in steps.values())
    assert abs(waterfall["check_pct"]) < 1e-12


@pytest.mark.parametrize("name", ["demo_dual.toml", "demo_interfaces.toml",
                                  "demo_dual_layers.toml"])
def test_steps_add_up_to_the_total(name):
    waterfall = loss_waterfall(load_stack(ROOT / "stacks" / name))
    total = sum(s["loss_pct_abs"] for s in waterfall["steps"])
    assert total == pytest.approx(waterfall["limit_pct"] - waterfall["efficiency_pct"], abs=1e-9)
    main = run_stack(load_stack(ROOT / "stacks" / name), curve_points=40)
    assert waterfall["efficiency_pct"] == pytest.approx(main.summary["efficiency_pct"], rel=1e-9)


def test_series_resistance_step_is_a_real_removal(tmp_path):
    # not guessed: the step equals the efficiency of the same stack file without its resistors,
    # solved through the main job
    text = (ROOT / "stacks" / "demo_dual.toml").read_text()
    with_r = tmp_path / "with.toml"
    with_r.write_text(text)
    without = tmp_path / "without.toml"
    without.write_text(text.replace("series_ohm_cm2 = 0.35", "series_ohm_cm2 = 0")
                       .replace("series_ohm_cm2 = 0.05", "series_ohm_cm2 = 0")
                       .replace("series_ohm_cm2 = 0.1", "series_ohm_cm2 = 0"))
    step = next(s for s in loss_waterfall(load_stack(with_r))["steps"]
                if s["loss"] == "series resistance")
    gained = (run_stack(load_stack(without), curve_points=40).summary["efficiency_pct"]
              - run_stack(load_stack(with_r), curve_points=40).summary["efficiency_pct"])
    assert step["loss_pct_abs"] == pytest.approx(gained, rel=1e-9)


def test_losses_command(tmp_path):
    done = cli("losses", ROOT / "stacks" / "demo_interfaces.toml", "--plot", tmp_path / "w.png",
               "--csv", tmp_path / "w.csv", "--json", tmp_path / "w.json")
    assert done.returncode == 0, done.stderr
    assert "hole interface" in done.stdout and "current mismatch" in done.stdout
    assert (tmp_path / "w.png").stat().st_size > 1000
    # four terminals: the strings' powers summed, series resistance string by string
    four = cli("losses", ROOT / "stacks" / "demo_four_terminal.toml")
    assert four.returncode == 0, four.stderr
    assert "series resistance, string 2" in four.stdout
