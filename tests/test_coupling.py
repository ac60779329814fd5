"""Luminescent coupling between subcells (circuit/coupling.py, key luminescent_coupling).

Sources beside each check:
- the generalized Planck law of a junction's emission (P. Würfel, J. Phys. C 15 (1982) 3967),
  integrated here with scipy.integrate.quad, for photon conservation;
- the detailed-balance treatment of the series tandem with radiative coupling (S. P. Bremner,
  M. Y. Levy, C. B. Honsberg, Prog. Photovolt. 16 (2008) 225; A. S. Brown, M. A. Green,
  Physica E 14 (2002) 96 — from memory, no numbers quoted): coupling helps a series dual whose
  top over-produces and never lifts it above the same gaps wired with four terminals; the
  four-terminal value computed with the project's own single-junction detailed balance and
  cross-checked with scipy.optimize;
- an independent fixed-point solve of the coupled string written here with scipy.optimize.brentq
  on each element's law (the laws' numpy forms, laws/diode.py, are themselves checked against
  pvlib in tests/test_diode.py).
Every stack below is invented test data (no check value comes from it).
"""
import numpy as np
import pytest
from scipy import constants as sc
from scipy.integrate import quad
from scipy.optimize import brentq, minimize_scalar

from siltandem import StackError, load_stack
from siltandem.result.driver import compute_result
from siltandem.circuit.elements import Resistor, Subcell, batch
from siltandem.laws.radiative import radiative_saturation_current
from siltandem.solve.series import solve_string

T = 298.15
VT = sc.k * T / sc.e

DUAL = """[conditions]
spectrum = "am1.5g"
temperature_K = 298.15
terminals = {terminals}
[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.6
string = 1
{coupling}
[[element]]
kind = "subcell"
name = "bottom"
gap_eV = 1.12
string = {bottom_string}
"""


def _dual(tmp_path, coupling="", terminals=2, name="dual.toml"):
    path = tmp_path / name
    path.write_text(DUAL.format(coupling=coupling, terminals=terminals,
                                bottom_string=1 if terminals == 2 else 2))
    return compute_result(load_stack(path), curve_points=101)


def test_coupling_zero_is_bit_for_bit_no_key(tmp_path):
    # the definition of the key (common practice, no source): 0 couples nothing
    plain = _dual(tmp_path, name="a.toml")
    zero = _dual(tmp_path, "luminescent_coupling = 0", name="b.toml")
    for key in ("efficiency_pct", "voc_V", "jsc_mA_cm2", "mpp_V", "mpp_mA_cm2",
                "power_balance_error_W_m2"):
        assert zero.summary[key] == plain.summary[key]
    assert zero.iv.equals(plain.iv)
    assert [r["coupled_mA_cm2"] for r in zero.summary["subcells"]] == [0.0, 0.0]


def test_key_out_of_range_is_a_stack_error(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(DUAL.format(coupling="luminescent_coupling = 1.5", terminals=2,
                                bottom_string=1))
    with pytest.raises(StackError) as error:
        load_stack(path)
    assert "luminescent_coupling" in str(error.value)
    assert error.value.fix


def _planck_emission_A_m2(gap_eV, v_junction_V, temperature_K):
    """Net one-sided emission current q (N(V) - N(0)) of a full step absorber from the
    generalized Planck law (Würfel 1982), by quadrature (no Boltzmann approximation)."""
    kt = sc.k * temperature_K / sc.e

    def flux(energy_eV, mu):
        return energy_eV**2 / np.expm1((energy_eV - mu) / kt)

    prefactor = 2 * np.pi * sc.e**4 / (sc.h**3 * sc.c**2)      # per eV^3, energies in eV
    upper = gap_eV + 60 * kt
    lit = quad(flux, gap_eV, upper, args=(v_junction_V,), epsabs=0, epsrel=1e-12)[0]
    dark = quad(flux, gap_eV, upper, args=(0.0,), epsabs=0, epsrel=1e-12)[0]
    return sc.e * prefactor * (lit - dark) / sc.e   # A/m^2


def test_coupled_current_conserves_photons(tmp_path):
    # generalized Planck law (Würfel 1982) by scipy quad: the coupled current never exceeds the
    # upper cell's radiative emission at its junction voltage, and with c = 1 it is that
    # emission to within the Boltzmann approximation (exp((Eg - qV)/kT) small)
    result = _dual(tmp_path, "luminescent_coupling = 1")
    rows = {r["name"]: r for r in result.summary["subcells"]}
    v_top = result.solutions[0].voltage_at_mpp_V["top"][0]          # no series resistance
    emitted = _planck_emission_A_m2(1.6, v_top, T) / 10             # mA/cm2
    coupled = rows["bottom"]["coupled_mA_cm2"]
    assert 0 < coupled <= emitted
    assert coupled == pytest.approx(emitted, rel=1e-4)
    half = _dual(tmp_path, "luminescent_coupling = 0.5", name="half.toml")
    v_half = half.solutions[0].voltage_at_mpp_V["top"][0]
    coupled_half = {r["name"]: r for r in half.summary["subcells"]}["bottom"]["coupled_mA_cm2"]
    assert coupled_half <= 0.5 * _planck_emission_A_m2(1.6, v_half, T) / 10


def _single_junction_mpp_W_m2(photocurrent_A_m2, j0_A_m2):
    """Detailed-balance MPP of one ideal radiative diode by scipy.optimize (bounded)."""
    voc = VT * np.log1p(photocurrent_A_m2 / j0_A_m2)
    best = minimize_scalar(lambda v: -v * (photocurrent_A_m2 - j0_A_m2 * np.expm1(v / VT)),
                           bounds=(0, voc), method="bounded", options={"xatol": 1e-12})
    return -best.fun


def test_radiative_dual_gains_but_stays_below_four_terminals(tmp_path):
    # Bremner, Levy, Honsberg 2008; Brown, Green 2002 (from memory): coupling raises a
    # series dual with an over-producing top, and stays below the four-terminal value
    plain = _dual(tmp_path, name="plain.toml")
    rows = {r["name"]: r for r in plain.summary["subcells"]}
    assert rows["top"]["photocurrent_mA_cm2"] > rows["bottom"]["photocurrent_mA_cm2"] + 3
    four = _dual(tmp_path, terminals=4, name="four.toml")
    # the four-terminal value cross-checked with scipy on the same photocurrents and J0,rad
    scipy_four = sum(_single_junction_mpp_W_m2(
        rows[n]["photocurrent_mA_cm2"] * 10,
        float(radiative_saturation_current(gap, temperature_K=T)))
        for n, gap in (("top", 1.6), ("bottom", 1.12))) / 10     # % at 1000 W/m2
    assert four.summary["efficiency_pct"] == pytest.approx(scipy_four, rel=1e-7)
    previous = plain.summary["efficiency_pct"]
    for c in (0.25, 0.5, 1.0):
        coupled = _dual(tmp_path, f"luminescent_coupling = {c}", name=f"c{c}.toml")
        efficiency = coupled.summary["efficiency_pct"]
        assert previous < efficiency < four.summary["efficiency_pct"]
        assert coupled.summary["mpp_certificate"]["certified"]
        previous = efficiency


def _law_current(vj, jph, j01, j02, shunt):
    """A subcell's junction law (double diode and shunt), written out here."""
    return jph - j01 * np.expm1(vj / VT) - j02 * np.expm1(vj / (2 * VT)) - shunt * vj


def _independent_voltage(current, cells, resistance):
    """V(J) of the coupled string by brentq on each law, top down (the chain in current)."""
    total, shift = -current * resistance, 0.0
    for cell in cells:
        jph = cell["jph"] + shift
        vj = brentq(lambda v: _law_current(v, jph, cell["j01"], cell["j02"], cell["shunt"])
                    - current, -200.0, 3.0, xtol=1e-15, rtol=1e-15, maxiter=400)
        total += vj - current * cell["rs"]
        shift = cell["c"] * cell["j0rad"] * max(np.expm1(vj / VT), 0.0)
    return total


@pytest.mark.parametrize("ideal", [False, True])
@pytest.mark.parametrize("photocurrents", [(160.0, 150.0, 165.0),   # middle limits
                                           (200.0, 170.0, 150.0),   # bottom limits
                                           (140.0, 170.0, 175.0)])  # top limits
def test_coupled_chain_against_an_independent_fixed_point_solve(photocurrents, ideal):
    # scipy brentq on each element law, the chain top -> middle -> bottom in current; ideal
    # single diodes (the MPP then proven by concavity) and with J02 and shunts (by cells)
    gaps, eres, couplings = (1.9, 1.42, 1.12), (0.3, 0.2, 0.01), (0.6, 0.4, 0.0)
    cells, elements = [], []
    for k, (gap, ere, c, jph) in enumerate(zip(gaps, eres, couplings, photocurrents)):
        j0rad = float(radiative_saturation_current(gap, temperature_K=T))
        cell = dict(jph=jph, j0rad=j0rad, j01=j0rad / ere, j02=0.0 if ideal else 1e-9 * 10 ** -k,
                    shunt=0.0 if ideal else 1.0 / (2e3 * 1e-4), rs=0.3e-4, c=c)
        cells.append(cell)
        elements.append(Subcell(f"cell{k}", batch(gap), ere=batch(ere), j02_A_m2=batch(cell["j02"]),
                                series_ohm_m2=batch(cell["rs"]), shunt_S_m2=batch(cell["shunt"]),
                                luminescent_coupling=batch(c)).with_photocurrent(jph))
    resistance = 0.5e-4
    elements.append(Resistor("grid", batch(resistance)))
    solution = solve_string(elements, T, curve_points=81)
    curve = solution.curve
    checked = 0
    # ideal cells: only below 1 - 1e-6 of Jsc (closer to it, the limiting ideal cell's current
    # is its photocurrent to rounding over a range of voltages, and brentq in J cannot resolve
    # its voltage: the reason the solver follows that cell's junction voltage instead)
    for j, v in zip(curve["current_A_m2"][0], curve["voltage_V"][0]):
        if np.isfinite(j) and np.isfinite(v) and (
                j < (1 - 1e-6) * solution.jsc_A_m2[0] if ideal else v > -2.0):
            assert v == pytest.approx(_independent_voltage(j, cells, resistance), abs=1e-9)
            checked += 1
    assert checked > 20
    # the MPP of the independent V(J) by scipy.optimize (bounded, in current)
    best = minimize_scalar(lambda j: -j * _independent_voltage(j, cells, resistance),
                           bounds=(0.5 * min(photocurrents), (1 - 1e-6) * solution.jsc_A_m2[0]
                                   if ideal else 1.2 * min(photocurrents)),
                           method="bounded", options={"xatol": 1e-10})
    assert solution.mpp_W_m2[0] == pytest.approx(-best.fun, rel=1e-9)
    assert solution.mpp_A_m2[0] == pytest.approx(best.x, rel=1e-4)
    assert solution.mpp_certified[0]
    assert (solution.mpp_cells_checked[0] == 0) == ideal     # proven by shape / by cells
    assert solution.power_balance_error_W_m2[0] < 1e-9 * solution.mpp_W_m2[0]
    # the coupled currents at the MPP, from the independent chain at the MPP current
    shift = 0.0
    for cell, element in zip(cells, elements):
        vj = brentq(lambda v: _law_current(v, cell["jph"] + shift, cell["j01"], cell["j02"],
                                           cell["shunt"]) - solution.mpp_A_m2[0], -200, 3,
                    xtol=1e-15)
        if shift:
            assert solution.coupled_at_mpp_A_m2[element.name][0] == pytest.approx(shift,
                                                                                   rel=1e-7)
        shift = cell["c"] * cell["j0rad"] * max(np.expm1(vj / VT), 0.0)


def test_four_terminal_coupling_crosses_strings(tmp_path):
    # each string at its own MPP (common practice, no source): the lower string's subcell
    # gains c J0,rad (exp(V_top/Vt) - 1) at the top string's MPP, computed here independently
    four = _dual(tmp_path, terminals=4, name="four.toml")
    coupled = _dual(tmp_path, "luminescent_coupling = 0.8", terminals=4, name="four_c.toml")
    v_top = coupled.solutions[0].voltage_at_mpp_V["top"][0]
    expected = 0.8 * float(radiative_saturation_current(1.6, temperature_K=T)) * np.expm1(
        v_top / VT) / 10
    rows = {r["name"]: r for r in coupled.summary["subcells"]}
    assert rows["bottom"]["coupled_mA_cm2"] == pytest.approx(expected, rel=1e-12)
    assert coupled.solutions[0].mpp_W_m2[0] == four.solutions[0].mpp_W_m2[0]
    assert coupled.solutions[1].mpp_W_m2[0] > four.solutions[1].mpp_W_m2[0]


def test_eqe_artefact_correction_recovers_the_true_eqe_by_construction():
    # Friedman, Geisz, Steiner, IEEE J. Photovolt. 3 (2013) 1429 (from memory): the artefact
    # in the lower subcell's measured EQE. The "measurement" is simulated here with the coupled
    # solver itself (light bias, string at short circuit, a small probe per wavelength), so the
    # true EQEs are known by construction; the helper must recover the lower one.
    from siltandem.laws.luminescent import coupling_corrected_eqe, differential_coupling_efficiency

    wavelength = np.arange(400.0, 1101.0, 50.0)
    edge = 1239.84 / 1.6
    eqe_top = np.where(wavelength < edge, 0.9, 0.0)                  # invented spectra
    eqe_bottom = np.where(wavelength < edge, 0.05, np.where(wavelength < 1100, 0.85, 0.2))
    probe = 1e-3                                                     # q Phi [A/m^2]

    def string(top_jph, bottom_jph):
        top = Subcell("top", batch(1.6), ere=batch(0.3), j02_A_m2=batch(1e-10),
                      series_ohm_m2=batch(0.2e-4),
                      luminescent_coupling=batch(0.7)).with_photocurrent(top_jph)
        bottom = Subcell("bottom", batch(1.12), ere=batch(0.01)).with_photocurrent(bottom_jph)
        return [top, bottom]

    def measured(top_bias, bottom_bias):
        base = solve_string(string(top_bias, bottom_bias), T).jsc_A_m2[0]
        lit = solve_string(string(top_bias + probe * eqe_top, bottom_bias + probe * eqe_bottom),
                           T).jsc_A_m2
        return (lit - base) / probe, base

    bottom_measured, jsc = measured(250.0, 180.0)       # bias: the bottom limits
    top_measured, _ = measured(250.0, 320.0)            # bias: the top limits
    assert top_measured == pytest.approx(eqe_top, abs=1e-6)
    artefact = bottom_measured - eqe_bottom
    assert np.all(artefact[wavelength < edge] > 0.01)   # the spurious response is there
    top = string(250.0, 180.0)[0]
    eta = differential_coupling_efficiency(
        0.7, j0_radiative_A_m2=float(radiative_saturation_current(1.6, temperature_K=T)),
        j01_A_m2=top.j01_A_m2(T), j02_A_m2=1e-10,
        v_junction_V=top.junction_voltage_at(batch(jsc), T), temperature_K=T)
    corrected = coupling_corrected_eqe(top_measured, bottom_measured, eta[0, 0])
    assert corrected == pytest.approx(eqe_bottom, abs=1e-6)


def test_map_and_match_vary_the_coupling(tmp_path):
    # each row of a map is the main job on that design (the main job, common practice): the
    # batched study with luminescent_coupling varied agrees with run-by-run results
    from siltandem import design_map, match_currents, parse_vary

    path = tmp_path / "dual.toml"
    path.write_text(DUAL.format(coupling="ere = 0.3", terminals=2, bottom_string=1).replace(
        'gap_eV = 1.12', 'gap_eV = 1.12\nere = 0.01'))
    stack = load_stack(path)
    coupling = parse_vary("top.luminescent_coupling=0:1:3", stack)
    gap = parse_vary("top.gap_eV=1.6:1.7:2", stack)
    table = design_map(stack, coupling, gap, progress=False)
    for _, row in table.iterrows():
        text = path.read_text().replace("ere = 0.3", f"ere = 0.3\nluminescent_coupling = "
                                        f"{row['top.luminescent_coupling']!r}").replace(
            "gap_eV = 1.6\n", f"gap_eV = {row['top.gap_eV']!r}\n")
        one = tmp_path / "one.toml"
        one.write_text(text)
        alone = compute_result(load_stack(one), curve_points=21).summary["efficiency_pct"]
        assert row["efficiency_pct"] == pytest.approx(alone, rel=1e-9)
    at_16 = table[table["top.gap_eV"] == 1.6].sort_values("top.luminescent_coupling")
    assert at_16["efficiency_pct"].is_monotonic_increasing
    sweep, _ = match_currents(stack, coupling, progress=False)
    assert len(sweep) == 3


def test_waterfall_coupling_gain_is_the_uncoupled_stack(tmp_path):
    # the waterfall's rule (each step = the stack solved again without that loss): the
    # coupling-gain step is the main job on the same file without the key, a gain (negative)
    from siltandem import loss_waterfall

    coupled = _dual(tmp_path, "luminescent_coupling = 0.5", name="c.toml")
    plain = _dual(tmp_path, name="p.toml")
    waterfall = loss_waterfall(load_stack(tmp_path / "c.toml"))
    steps = {s["loss"]: s["loss_pct_abs"] for s in waterfall["steps"]}
    gain = plain.summary["efficiency_pct"] - coupled.summary["efficiency_pct"]
    assert gain < -1.0
    assert steps["coupling gain"] == pytest.approx(gain, rel=1e-9)
    assert abs(waterfall["check_pct"]) < 1e-12
    assert "coupling gain" not in {s["loss"] for s in loss_waterfall(
        load_stack(tmp_path / "p.toml"))["steps"]}


@pytest.mark.parametrize("photocurrents", [(160.0, 150.0, 165.0),   # middle limits
                                           (200.0, 170.0, 150.0),   # bottom limits
                                           (140.0, 170.0, 175.0)])  # top limits
def test_coupled_ideal_chain_summary_takes_the_explicit_path(photocurrents, monkeypatch):
    # ideal single diodes coupled top -> middle -> bottom, summary solve (no curve): the explicit
    # path in J (solve/explicit.py), against the independent brentq chain above and scipy's
    # bounded maximum; the traced solve is switched off so that only the explicit path can answer
    from siltandem.solve import series

    def no_trace(*args, **kwargs):
        raise AssertionError("the coupled ideal string was traced")

    monkeypatch.setattr(series, "solve_on_path", no_trace)
    gaps, eres, couplings = (1.9, 1.42, 1.12), (0.3, 0.2, 0.01), (0.6, 0.4, 0.0)
    cells, elements = [], []
    for k, (gap, ere, c, jph) in enumerate(zip(gaps, eres, couplings, photocurrents)):
        j0rad = float(radiative_saturation_current(gap, temperature_K=T))
        cells.append(dict(jph=jph, j0rad=j0rad, j01=j0rad / ere, j02=0.0, shunt=0.0, rs=0.3e-4, c=c))
        elements.append(Subcell(f"cell{k}", batch(gap), ere=batch(ere), series_ohm_m2=batch(0.3e-4),
                                luminescent_coupling=batch(c)).with_photocurrent(jph))
    resistance = 0.5e-4
    elements.append(Resistor("grid", batch(resistance)))
    solution = solve_string(elements, T)
    best = minimize_scalar(lambda j: -j * _independent_voltage(j, cells, resistance),
                           bounds=(0.5 * min(photocurrents), (1 - 1e-6) * solution.jsc_A_m2[0]),
                           method="bounded", options={"xatol": 1e-10})
    assert solution.mpp_W_m2[0] == pytest.approx(-best.fun, rel=1e-9)
    assert solution.mpp_A_m2[0] == pytest.approx(best.x, rel=1e-4)
    assert solution.voc_V[0] == pytest.approx(_independent_voltage(0.0, cells, resistance), abs=1e-9)
    assert solution.mpp_certified[0] and solution.mpp_cells_checked[0] == 0   # by concavity
    assert solution.power_balance_error_W_m2[0] < 1e-9 * solution.mpp_W_m2[0]
    shift = 0.0
    for cell, element in zip(cells, elements):
        vj = brentq(lambda v: _law_current(v, cell["jph"] + shift, cell["j01"], 0.0, 0.0)
                    - solution.mpp_A_m2[0], -200, 3, xtol=1e-15)
        if shift:
            assert solution.coupled_at_mpp_A_m2[element.name][0] == pytest.approx(shift, rel=1e-7)
        shift = cell["c"] * cell["j0rad"] * max(np.expm1(vj / VT), 0.0)
