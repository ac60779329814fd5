"""Figures a practitioner reads without the source at hand (issue 20): axes start where bar
lengths compare honestly, failed candidates are shown as failed, labels carry units, zero steps do
not clutter a waterfall; ``Result.plot``; the first-compile notice in the API.

Contract tests of our own figures and API (no outside check values; the numbers drawn are checked
against published values elsewhere, e.g. test_solve.py and test_losses.py). Figures are drawn on
``matplotlib.figure.Figure`` objects, which need no backend (matplotlib API reference, "Figure").
"""
import warnings

import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure

import siltandem
from siltandem.errors import CompileNotice
from siltandem.report.plots import axis_label
from siltandem.solve import kernels
from siltandem.studies.losses import plot_waterfall
from siltandem.studies.placements import plot_placements

from test_notebook import STACKS


@pytest.mark.parametrize("column, label", [
    ("efficiency_pct", "efficiency (%)"),
    ("voc_V", "Voc (V)"),
    ("jsc_mA_cm2", "Jsc (mA/cm²)"),
    ("top base.thickness_nm", "top base thickness (nm)"),
    ("middle emitter.doping_cm3", "middle emitter doping (cm⁻³)"),
    ("tunnel_penalty_pct_abs", "tunnel penalty (% absolute)"),
    ("top.gap_eV", "top gap (eV)"),
    ("regime", "regime"),
])
def test_axis_labels_carry_the_unit_not_the_raw_key(column, label):
    assert axis_label(column) == label


def _placements_table():
    return pd.DataFrame({"placement": ["good", "broken", "fair"],
                         "efficiency_pct": [28.6, np.nan, 22.9],
                         "problem": [None, "the tunnel junction is upside down", None],
                         "tunnel_penalty_pct_abs": [0.01, np.nan, 0.2],
                         "interface_penalty_pct_abs": [0.03, np.nan, 5.7]})


def test_the_placement_bars_start_at_zero_and_a_failed_candidate_says_so():
    left, right = plot_placements(_placements_table(), Figure().subplots(1, 2))
    assert left.get_xlim()[0] == 0.0 and right.get_xlim()[0] == 0.0
    texts = [t.get_text() for t in left.texts]
    assert any(t.startswith("not solved: the tunnel junction is upside down") for t in texts), texts
    hatched = [p for p in left.patches if p.get_hatch()]
    assert len(hatched) == 1                                  # the failed one, and only it
    # the failed bar spans the axis, the solved ones their efficiency
    widths = sorted(round(p.get_width(), 6) for p in left.patches if not p.get_hatch())
    assert widths == [22.9, 28.6]
    assert hatched[0].get_width() == pytest.approx(left.get_xlim()[1])


def test_the_waterfall_leaves_out_zero_steps_and_counts_them():
    waterfall = {"stack": "s", "limit_pct": 40.0, "efficiency_pct": 30.0, "check_pct": 0.0,
                 "steps": [{"loss": "a", "loss_pct_abs": 6.0}, {"loss": "b", "loss_pct_abs": 0.0},
                           {"loss": "c", "loss_pct_abs": 4.0}, {"loss": "d", "loss_pct_abs": 1e-4}]}
    ax = plot_waterfall(waterfall, Figure().subplots())
    labels = [t.get_text() for t in ax.get_xticklabels()]
    assert labels == ["limit", "a", "c", "stack"]
    assert any("2 step(s) below" in t.get_text() for t in ax.texts)
    # every value label lies inside the axes (none runs into the title)
    top = ax.get_ylim()[1]
    assert all(t.get_position()[1] < top for t in ax.texts if t.get_transform() == ax.transData)


def test_result_plot_draws_the_iv_and_refuses_an_unknown_kind():
    result = siltandem.run_stack(siltandem.load_stack(STACKS / "demo_dual.toml"), curve_points=40)
    ax = result.plot(ax=Figure().subplots())
    assert len(ax.lines) >= 2                                 # the stack and at least one subcell
    with pytest.raises(ValueError, match="kind = 'band' is not a figure of a result"):
        result.plot("band")


def test_the_first_compile_is_announced_once_in_the_api(monkeypatch):
    monkeypatch.setattr(kernels, "compiled_already", lambda: False)
    monkeypatch.setattr(kernels, "_COMPILE_NOTICE_GIVEN", [])
    stack = siltandem.load_stack(STACKS / "demo_dual.toml")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        siltandem.run_stack(stack, curve_points=30)
        siltandem.run_stack(stack, curve_points=30)
    notices = [w for w in caught if issubclass(w.category, CompileNotice)]
    assert len(notices) == 1 and "compiling the solver's kernels" in str(notices[0].message)


def test_no_compile_notice_when_the_kernels_are_cached(monkeypatch):
    monkeypatch.setattr(kernels, "compiled_already", lambda: True)
    monkeypatch.setattr(kernels, "_COMPILE_NOTICE_GIVEN", [])
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        siltandem.run_stack(siltandem.load_stack(STACKS / "demo_dual.toml"), curve_points=30)
    assert not [w for w in caught if issubclass(w.category, CompileNotice)]
