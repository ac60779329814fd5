"""The yield year's inputs (issue 20): spectra given as pandas objects, weather from TMY2, TMY3,
EPW files and DataFrames, measured hourly spectra, angle-of-incidence losses and single-axis
tracking; each checked against pvlib used directly or against the same data read another way.

Sources: pvlib's bundled data (ASTM G173-03 through ``pvlib.spectrum.get_reference_spectra``;
``data/723170TYA.CSV`` TMY3 Greensboro; ``data/12839.tm2`` TMY2 Miami), the file formats' own
manuals (TMY2: Marion & Urban, NREL/TP-463-7668, 1995; EPW: EnergyPlus Auxiliary Programs,
weather file format), and pvlib's functions as the reference implementation.
"""
from pathlib import Path
import warnings

import numpy as np
import pandas as pd
import pytest

import pvlib

from siltandem import StackError, load_stack, run_stack
from siltandem.materials.weather import read_weather

ROOT = Path(__file__).resolve().parents[1]
TRIPLE = ROOT / "stacks" / "demo_triple.toml"
PVLIB_DATA = Path(pvlib.__file__).parent / "data"


@pytest.fixture(scope="module")
def reference():
    return pvlib.spectrum.get_reference_spectra()


# ------------------------------------------------------------------------ spectra as pandas
def _quiet_run(stack, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return run_stack(stack, **kwargs)


def test_a_pvlib_series_is_the_same_light_as_its_csv(reference, tmp_path):
    """pvlib's ASTM G173-03 global column as a Series gives the same photocurrents as the same
    numbers written to a CSV; its efficiency is against its own integral (1000.4 W/m2), the named
    table's against the standard's 1000 W/m2 (IEC 60904-3)."""
    stack = load_stack(TRIPLE)
    series = reference["global"]
    path = tmp_path / "g173.csv"
    pd.DataFrame({"wavelength_nm": series.index, "irradiance_W_m2_nm": series.values}).to_csv(
        path, index=False)
    from_series = _quiet_run(stack, spectrum=series).summary
    from_csv = _quiet_run(stack, spectrum=str(path)).summary
    named = _quiet_run(stack, spectrum="am1.5g").summary
    assert from_series["jsc_mA_cm2"] == pytest.approx(from_csv["jsc_mA_cm2"], rel=1e-12)
    assert from_series["efficiency_pct"] == pytest.approx(from_csv["efficiency_pct"], rel=1e-12)
    integral = float(np.trapezoid(series.values, series.index.to_numpy(dtype=float)))
    assert from_series["efficiency_pct"] * integral == pytest.approx(
        named["efficiency_pct"] * 1000.0, rel=1e-9)
    one_column = _quiet_run(stack, spectrum=reference[["global"]]).summary
    assert one_column["efficiency_pct"] == from_series["efficiency_pct"]
    assert "Series 'global'" in from_series["conditions"]["spectrum"]


def test_a_series_spectrum_in_a_design_map_equals_its_csv(reference, tmp_path):
    from siltandem import design_map, parse_vary

    stack = load_stack(TRIPLE)
    series = reference["global"]
    path = tmp_path / "g173.csv"
    pd.DataFrame({"wavelength_nm": series.index, "irradiance_W_m2_nm": series.values}).to_csv(
        path, index=False)
    first = parse_vary("top.gap_eV=1.8:1.9:3", stack)
    second = parse_vary("middle.gap_eV=1.4:1.5:2", stack)
    by_series = design_map(stack, first, second, spectrum=series)
    by_file = design_map(stack, first, second, spectrum=str(path))
    np.testing.assert_allclose(by_series["efficiency_pct"], by_file["efficiency_pct"], rtol=1e-12)


@pytest.mark.parametrize("change, message", [
    (lambda r: r, "cannot tell which one is the spectrum"),
    (lambda r: r["global"].set_axis(r.index / 1000.0), "look like micrometres"),
    (lambda r: -r["global"], "negative irradiance"),
    (lambda r: r["global"].iloc[::-1], "wavelengths not increasing"),
    (lambda r: r["global"] * np.nan, "not finite numbers"),
])
def test_bad_pandas_spectra_are_named(reference, change, message):
    with pytest.raises(StackError, match=message) as error:
        _quiet_run(load_stack(TRIPLE), spectrum=change(reference))
    assert error.value.where.startswith("spectrum") and error.value.fix
