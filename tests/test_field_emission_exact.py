"""The numpy thermionic-field law on the exact Boltzmann depletion side (issue 18):
laws/field_emission.py with ``depletion="exact"``.

Sources:
- The depletion side's field integral e^-v2 - 1 + v2 = alpha (e^v1 - 1 - v1) (S. M. Sze, K. K. Ng,
  Physics of Semiconductor Devices, 3rd ed., Wiley 2007, the first integral of Poisson's equation
  for a Boltzmann space-charge layer); its root is checked against 40-digit mpmath here and in
  tests/test_compiled_isotype.py.
- The compiled law (laws/compiled_isotype.py, form "exact", transport "thermionic-field"): the
  same equations in scalar form, written and tested separately; the numpy law must agree with it
  to rounding (tolerances 1e-12 on J, 1e-9 on dJ/dV, as tests/test_compiled_isotype.py uses).
- The enclosure property of the certificate's slope range (no outside value: every sampled slope
  inside; its width shrinking with the cell).
"""
import warnings

import mpmath as mp
import numpy as np
import pytest

from siltandem.constants import thermal_voltage_V
from siltandem.laws import field_emission as fe
from siltandem.laws import thermionic as te
from siltandem.laws.compiled_isotype import isotype_currents, isotype_rows, isotype_voltages


def _laws(n, seed):
    """Random laws (invented ranges: alpha 1e-4..1e4, Vbi 0.005..0.8 V, T 250..400 K, E00
    1e-3..0.1 eV, spike 0..0.5 eV or none) and voltages on both sides of zero bias."""
    rng = np.random.default_rng(seed)
    vbi = 10 ** rng.uniform(np.log10(0.005), np.log10(0.8), n)
    law = dict(barrier_eV=vbi + rng.uniform(0.02, 0.3, n), built_in_V=vbi,
               alpha=10 ** rng.uniform(-4, 4, n), richardson_A_m2_K2=8e5,
               temperature_K=rng.uniform(250, 400, n), field_energy_eV=10 ** rng.uniform(-3, -1, n),
               spike_eV=np.where(rng.random(n) < 0.7, rng.uniform(0.0, 0.5, n), np.inf))
    distance = 10 ** rng.uniform(-4, 0.3, n)
    voltage = np.where(rng.random(n) < 0.5, vbi - distance, -distance)
    return law, voltage


def _rows(law):
    return isotype_rows(form="exact", transport="thermionic-field", direction=1.0,
                        **{k: np.asarray(v)[:, None] if np.ndim(v) else v for k, v in law.items()})


def test_exact_side_equals_the_compiled_law_to_rounding():
    law, voltage = _laws(3000, seed=3)
    j, slope = fe.field_emission_current_density(voltage, depletion="exact", with_derivative=True, **law)
    jc, slope_c = (a[:, 0] for a in isotype_currents(_rows(law), voltage[:, None].copy()))
    assert np.all(np.isfinite(j)) and np.all(np.isfinite(slope))
    np.testing.assert_allclose(j, jc, rtol=1e-12, atol=0)
    np.testing.assert_allclose(slope, slope_c, rtol=1e-9, atol=0)
    # the inverse of both at the same currents: the same voltage (1e-12 V) and slope; currents up
    # to 1e10 A/m^2 (1e6 A/cm^2): far beyond, at bendings of 1e16 kT and more, the gain's
    # quadrature loses its digits and the inverse's bracket holds a second, spurious root
    current = np.where((np.abs(j) > 0) & (np.abs(j) < 1e10), j, 1.0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", te.IsotypeDomainWarning)
        v, dvdj = fe.field_emission_voltage(current, depletion="exact", with_derivative=True, **law)
    vc, djdv_c = (a[:, 0] for a in isotype_voltages(_rows(law), current[:, None].copy()))
    ok = np.isfinite(vc)
    assert ok.mean() > 0.99
    np.testing.assert_allclose(v[ok], vc[ok], rtol=0, atol=1e-12)
    np.testing.assert_allclose(1.0 / dvdj[ok], djdv_c[ok], rtol=1e-9)
    # and the inverse returns the voltage it came from (backward error, 1e-12 relative in J)
    jj = fe.field_emission_current_density(v[ok], depletion="exact",
                                           **{k: np.asarray(a)[ok] if np.ndim(a) else a for k, a in law.items()})
    np.testing.assert_allclose(jj, current[ok], rtol=1e-11)


def test_exact_side_is_continuous_across_the_old_tail_plain_switch():
    # issue 18: the materials form switched tail/plain at Vbi = 3 kT/q, a jump of the current;
    # the exact side has none. Invented law numbers (alpha 0.3, E00 20 meV, spike 0.2 eV), Vbi from
    # 0.2 to 6 kT/q in steps of 2.9e-3 kT/q, and in temperature at fixed Vbi.
    temperature = 300.0
    vt = thermal_voltage_V(temperature)
    vbi = np.linspace(0.2, 6.0, 2001) * vt
    law = dict(built_in_V=vbi, barrier_eV=vbi + 0.1, alpha=0.3, richardson_A_m2_K2=8e5,
               field_energy_eV=0.02, spike_eV=0.2)
    exact = fe.field_emission_current_density(-0.05, depletion="exact", temperature_K=temperature, **law)
    tail, plain = (fe.field_emission_current_density(-0.05, depletion=f, temperature_K=temperature, **law)
                   for f in ("tail", "plain"))
    switched = np.where(vbi > 3 * vt, tail, plain)
    assert np.all(np.isfinite(exact)) and np.all(exact < 0)          # defined below Vbi = kT/q too
    assert np.max(np.abs(np.diff(np.log(-exact)))) < 5e-3
    assert np.max(np.abs(np.diff(np.log(-switched)))) > 0.3            # the old switch's jump
    temps = np.linspace(250.0, 400.0, 1501)
    by_t = fe.field_emission_current_density(-0.05, depletion="exact", temperature_K=temps,
                                             **dict(law, built_in_V=0.08, barrier_eV=0.18))
    assert np.max(np.abs(np.diff(np.log(-by_t)))) < 5e-3


def test_exact_side_split_satisfies_the_field_integral():
    # the depletion side's bending (laws/field_emission.py exact_depletion) against mpmath's
    # 40-digit root of e^-y - 1 + y = c
    mp.mp.dps = 40
    c = np.array([1e-12, 1e-6, 1e-3, 0.3, 0.7, 2.0, 30.0, 500.0])
    for ci in c:
        yi = fe.exact_depletion(ci)[0]
        ref = mp.findroot(lambda t: mp.exp(-t) - 1 + t - mp.mpf(ci), mp.sqrt(2 * mp.mpf(ci)) + mp.mpf(ci) / 3)
        assert yi == pytest.approx(float(ref), rel=1e-14)


def test_exact_side_slope_range_holds_sampled_slopes_and_shrinks():
    rng = np.random.default_rng(11)
    law, _ = _laws(300, seed=11)
    vbi = law["built_in_V"]
    edge = vbi * (1 - 1e-3)
    low = np.minimum(rng.uniform(-1.0, 1.0, vbi.size) * vbi, edge - 1e-3 * vbi)
    high = np.minimum(low + 10 ** rng.uniform(-5, -1.5, vbi.size), edge)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", te.IsotypeDomainWarning)
        lo, hi = fe.field_emission_slope_range(low, high, depletion="exact", **law)
        inside = low[:, None] + (high - low)[:, None] * np.linspace(0, 1, 41)[None, :]
        _, slope = fe.field_emission_current_density(
            inside, depletion="exact", with_derivative=True,
            **{k: (np.asarray(v)[:, None] if np.ndim(v) else v) for k, v in law.items()})
    ok = np.isfinite(lo) & np.isfinite(hi)
    assert ok.mean() > 0.95
    assert np.all(slope[ok] >= lo[ok, None]) and np.all(slope[ok] <= hi[ok, None])
    centre = 0.5 * (low + high)
    relative = []
    for dv in (1e-2, 1e-4, 1e-6):
        a = np.minimum(centre, edge - dv)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", te.IsotypeDomainWarning)
            lo, hi = fe.field_emission_slope_range(a, a + dv, depletion="exact", **law)
        relative.append(np.nanmedian((hi - lo) / np.abs(hi)))
    assert relative[1] < relative[0] / 10 and relative[2] < relative[1] / 10 and relative[2] < 1e-3, relative


def test_closed_forms_are_unchanged_by_the_depletion_key():
    # depletion="tail"/"plain" is include_tail=True/False, bit for bit (the key only names the form)
    law, voltage = _laws(500, seed=5)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", te.IsotypeDomainWarning)
        for tail, form in ((True, "tail"), (False, "plain")):
            a = fe.field_emission_current_density(voltage, include_tail=tail, with_derivative=True, **law)
            b = fe.field_emission_current_density(voltage, depletion=form, with_derivative=True, **law)
            np.testing.assert_array_equal(a[0], b[0])
            np.testing.assert_array_equal(a[1], b[1])
    with pytest.raises(te.IsotypeParameterError, match="depletion"):
        fe.field_emission_current_density(0.0, depletion="full", **law)


def test_materials_default_is_thermionic_field_on_the_exact_side(tmp_path, monkeypatch):
    """Without a transport key a materials-given interface takes thermionic-field emission on
    the exact depletion side (no tail/plain switch); the compiled law (laws/compiled_isotype.py)
    and the numpy law give the same voltages to rounding; transport = "thermionic" keeps the
    thermionic law. p-GaP 1e18 / p-Si 1e17 (library materials; invented dopings)."""
    from siltandem import load_stack
    from siltandem.circuit import interface_element
    from siltandem.circuit.compile import compile_stack

    text = ('[conditions]\nspectrum = "am1.5g"\n[[element]]\nkind = "subcell"\nname = "cell"\n'
            'gap_eV = 1.4\n[[element]]\nkind = "isotype"\nname = "i"\nupper_material = "GaP"\n'
            'lower_material = "Si"\nupper_doping_cm3 = 1e18\nlower_doping_cm3 = 1e17\n'
            'carrier = "hole"\ncarriers_flow = "down"\n')
    (tmp_path / "a.toml").write_text(text)
    (tmp_path / "b.toml").write_text(text + 'transport = "thermionic"\n')
    default = compile_stack(load_stack(tmp_path / "a.toml")).element("i")
    plain = compile_stack(load_stack(tmp_path / "b.toml")).element("i")
    assert default.transport == "thermionic-field" and default.depletion == "exact"
    assert plain.transport == "thermionic"
    current = np.array([[-300.0, -50.0, -1.0, 1.0, 50.0, 300.0]])
    compiled = default.voltage(current, 300.0)
    assert default.compiled_rows(300.0) is not None
    monkeypatch.setattr(interface_element, "COMPILED_ISOTYPE", False)
    numpy_law = type(default)(**{f: getattr(default, f) for f in (
        "name", "barrier_eV", "built_in_V", "alpha", "richardson_A_m2_K2", "direction", "carrier",
        "offset_eV", "string", "depletion", "transport", "field_energy_eV")}).voltage(current, 300.0)
    np.testing.assert_allclose(compiled[0], numpy_law[0], rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(compiled[1], numpy_law[1], rtol=1e-9)
    # tunnelling only lowers the drop: |V| with it at most the thermionic one
    assert np.all(np.abs(compiled[0]) <= np.abs(plain.voltage(current, 300.0)[0]) + 1e-15)


def test_a_sheet_charge_takes_the_default_transport(tmp_path):
    """With sheet_charge_cm2 and no transport key the interface takes the default transport
    (circuit/isotype.py DEFAULT_TRANSPORT, thermionic-field: laws/field_emission_sheet.py carries the
    charge, tests/test_field_emission_sheet.py); transport = "thermionic" keeps the thermionic law
    with the same reduced charge."""
    from siltandem import load_stack
    from siltandem.circuit.compile import compile_stack
    from siltandem.circuit.isotype import DEFAULT_TRANSPORT

    text = ('[conditions]\nspectrum = "am1.5g"\n[[element]]\nkind = "subcell"\nname = "cell"\n'
            'gap_eV = 1.4\n[[element]]\nkind = "isotype"\nname = "i"\nupper_material = "GaP"\n'
            'lower_material = "Si"\nupper_doping_cm3 = 1e18\nlower_doping_cm3 = 1e17\n'
            'carrier = "hole"\nsheet_charge_cm2 = -2e12\n')
    (tmp_path / "a.toml").write_text(text)
    element = compile_stack(load_stack(tmp_path / "a.toml")).element("i")
    assert DEFAULT_TRANSPORT == "thermionic-field"
    assert element.transport == "thermionic-field" and float(element.sheet_charge[0, 0]) != 0.0
    assert element.field_sheet and element.compiled_rows(300.0) is None
    (tmp_path / "b.toml").write_text(text + 'transport = "thermionic"\n')
    thermionic = compile_stack(load_stack(tmp_path / "b.toml")).element("i")
    assert thermionic.transport == "thermionic" and not thermionic.field_sheet
    assert np.array_equal(thermionic.sheet_charge, element.sheet_charge)
