"""The exact Boltzmann depletion side of the isotype law (laws/thermionic.py, depletion="exact").

Sources:
- S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley (2007), ch. 1-2: the field
  of a Boltzmann space-charge layer, E^2 = (2 q N kT / eps)(exp(u) - 1 - u), the same first
  integral of Poisson's equation on both sides (u = v1 accumulating, u = -v2 depleting); so the
  charge balance is alpha (e^v1 - 1 - v1) = e^-v2 - 1 + v2, solved here independently with mpmath
  and by scipy.integrate.solve_bvp on the full two-sided problem (tests/test_thermionic.py).
- A. Chandra, L. F. Eastman, Solid-State Electron. 23 (1980) 599 and B. Van Zeghbroeck, Principles
  of Semiconductor Devices (n-n+ heterojunction): J = J0 (1 - V/Vbi)(exp(qV/kT) - 1), derived
  with the kT/q tail; at alpha = 1 the exact balance gives e^v1 (1 - e^-vb) = vb in closed form, so
  the exact law is that J divided by (1 - exp(-q(Vbi - V)/kT)).
- E. H. Rhoderick, R. H. Williams, Metal-Semiconductor Contacts, 2nd ed. (Oxford 1988): the
  Schottky limit alpha -> infinity.
"""
import math
import warnings
from pathlib import Path

import mpmath as mp
import numpy as np
import pytest
from scipy.optimize import brentq

from siltandem import load_stack, run_stack
from siltandem.circuit.isotype import isotype_from_materials
from siltandem.constants import BOLTZMANN_EV_K, thermal_voltage_V
from siltandem.laws import thermionic as th
from siltandem.stack.load import ElementSpec
from test_thermionic import REALISTIC, alignment, full_poisson_split

T = 300.0
VT = thermal_voltage_V(T)
CM3 = 1e6
ALPHAS = [1e-8, 1e-5, 0.01, 0.3, 0.9, 1 - 1e-12, 1.0, 1 + 1e-12, 1.1, 3.0, 30.0, 1e4, 1e8]
BARRIERS_KT = [1e-9, 1e-3, 0.5, 0.999, 1.0, 2.0, 3.0, 8.0, 30.0, 120.0, 300.0]


def mp_exact_root(vb, alpha):
    """v1 of alpha (e^v1 - 1 - v1) = e^-v2 - 1 + v2, v2 = vb - v1, at 50 digits (bisection)."""
    with mp.workdps(50):
        vb, alpha = mp.mpf(vb), mp.mpf(alpha)

        def f(x):
            return alpha * (mp.expm1(x) - x) - (mp.expm1(x - vb) + vb - x)
        lo, hi = mp.mpf(0), vb
        for _ in range(200):
            mid = (lo + hi) / 2
            lo, hi = (mid, hi) if f(mid) < 0 else (lo, mid)
        return (lo + hi) / 2


def split(vb, alpha, depletion="exact"):
    s = th.voltage_split(vb * VT, alpha=alpha, temperature_K=T, depletion=depletion)
    return s.accumulation_V / VT, s.depletion_V / VT


def test_split_matches_the_high_precision_root_for_every_barrier_voltage():
    # reference: mpmath 50-digit root of the full Boltzmann charge balance (Sze & Ng, the field
    # of a Boltzmann space-charge layer), including barriers below kT/q where the tail form is
    # undefined
    worst = 0.0
    for alpha in ALPHAS:
        for vb in BARRIERS_KT:
            v1, v2 = split(vb, alpha)
            ref = mp_exact_root(vb, alpha)
            worst = max(worst, abs(v1 / float(ref) - 1), abs(v2 / float(mp.mpf(vb) - ref) - 1))
    print(f"max relative deviation from the 50-digit root: {worst:.2e}")
    assert worst < 1e-13


@pytest.mark.parametrize("name", list(REALISTIC))
def test_split_against_the_full_poisson_solution(name):
    # scipy.integrate.solve_bvp on the two-sided Poisson-Boltzmann problem (tol 1e-9): the exact
    # form keeps the exp(-v2) the tail form drops, so it meets the numerical solution to its
    # tolerance, closer than the tail form does
    case = REALISTIC[name]
    al = alignment(case, T)
    side1, side2 = (case["a"], case["b"]) if al.a_accumulates else (case["b"], case["a"])
    vb = (float(al.built_in_V) - case["V"]) / VT
    v1n, v2n = full_poisson_split(vb, n1_m3=side1[4] * CM3, n2_m3=side2[4] * CM3,
                                  er1=side1[5], er2=side2[5], T=T)
    v1, v2 = split(vb, float(al.alpha))
    v1t, v2t = split(vb, float(al.alpha), "tail")
    dev = max(abs(v1 / v1n - 1), abs(v2 / v2n - 1))
    dev_tail = max(abs(v1t / v1n - 1), abs(v2t / v2n - 1))
    print(f"{name}: exact {dev:.1e}, tail {dev_tail:.1e}")
    assert dev < 2e-6
    assert dev <= dev_tail


@pytest.mark.parametrize("vb", [0.05, 0.5, 2.0])
def test_split_near_flat_band_against_the_full_poisson_solution(vb):
    # below and near kT/q (the tail form: undefined, or NaN); solve_bvp on the full problem,
    # n-Al0.3Ga0.7As 5e17 over n-GaAs 1e17 numbers of tests/test_thermionic.py
    n1, n2, er1, er2 = 1e17 * CM3, 5e17 * CM3, 12.9, 12.05
    alpha = er1 * n1 / (er2 * n2)
    v1n, v2n = full_poisson_split(vb, n1_m3=n1, n2_m3=n2, er1=er1, er2=er2, T=T)
    v1, v2 = split(vb, alpha)
    assert v1 == pytest.approx(v1n, rel=2e-6) and v2 == pytest.approx(v2n, rel=2e-6)
    if vb < 1.0:
        with pytest.warns(th.IsotypeDomainWarning):
            assert np.isnan(split(vb, alpha, "tail")[0])


def test_alpha_one_closed_form_and_the_classic_law():
    # at alpha = 1 the exact balance reads e^v1 = vb / (1 - e^-vb): J = J_classic / (1 - e^-vb)
    # (Chandra & Eastman 1980 / Van Zeghbroeck with barrier_eV = Vbi), for every Vbi > 0
    richardson = 8.16e4
    for vbi in [0.001, 0.02, 0.027, 0.1, 0.3, 0.6]:
        V = np.linspace(-1.0, vbi * (1 - 1e-6), 41)
        J = th.isotype_current_density(V, barrier_eV=vbi, built_in_V=vbi, alpha=1.0,
                                       richardson_A_m2_K2=richardson, temperature_K=T,
                                       depletion="exact")
        j0 = richardson * T * vbi / BOLTZMANN_EV_K * np.exp(-vbi / VT)      # q A T Vbi / k ...
        classic = j0 * (1 - V / vbi) * np.expm1(V / VT)
        vb = (vbi - V) / VT
        deep = vb > 1e-3         # nearer flat band the reference's own Vbi - V rounds
        np.testing.assert_allclose(J[deep], classic[deep] / -np.expm1(-vb[deep]), rtol=1e-12)
        np.testing.assert_allclose(J, classic / -np.expm1(-vb), rtol=1e-9)
        far = vb > 40.0           # there the exact and the tail laws agree to rounding
        tail = th.isotype_current_density(V[far], barrier_eV=vbi, built_in_V=vbi, alpha=1.0,
                                          richardson_A_m2_K2=richardson, temperature_K=T,
                                          depletion="tail")
        np.testing.assert_allclose(J[far], tail, rtol=1e-14)


def test_agrees_with_the_tail_law_where_that_law_is_exact():
    # the tail form drops only exp(-v2) from the depletion side's field integral: far from flat
    # band (v2 > 40) the two laws agree to rounding over the whole alpha range
    for alpha in [1e-6, 0.1, 1.0, 7.0, 1e6]:
        vbi = 1.2
        V = np.linspace(-1.0, 0.0, 11)
        kw = dict(barrier_eV=1.3, built_in_V=vbi, alpha=alpha, richardson_A_m2_K2=8.16e4,
                  temperature_K=T, with_derivative=True)
        j, d = th.isotype_current_density(V, depletion="exact", **kw)
        jt, dt = th.isotype_current_density(V, depletion="tail", **kw)
        far = split((vbi - V) / VT, alpha)[1] > 40.0
        assert np.count_nonzero(far) >= 3
        np.testing.assert_allclose(j[far], jt[far], rtol=5e-14)
        np.testing.assert_allclose(d[far], dt[far], rtol=5e-14)


@pytest.mark.parametrize("alpha", [1e-6, 0.2, 1.0, 5.0, 1e6])
def test_derivative_matches_high_precision_differentiation(alpha):
    # reference: mpmath central difference of the same law built on the 50-digit exact root
    vbi, phi, richardson = 0.05, 0.3, 8.16e4          # Vbi ~ 2 kT/q: the region of the old switch
    vt = mp.mpf(VT)

    def j_mp(V):
        v1 = mp_exact_root((mp.mpf(vbi) - V) / vt, alpha)
        return richardson * T**2 * mp.exp(-mp.mpf(phi) / vt) * mp.exp(v1) * mp.expm1(V / vt)

    V = np.array([-0.5, -0.01, 0.01, 0.04])
    j, d = th.isotype_current_density(V, barrier_eV=phi, built_in_V=vbi, alpha=alpha,
                                      richardson_A_m2_K2=richardson, temperature_K=T,
                                      depletion="exact", with_derivative=True)
    with mp.workdps(50):
        for vi, ji, di in zip(V, j, d):
            assert ji == pytest.approx(float(j_mp(mp.mpf(vi))), rel=1e-13)
            assert di == pytest.approx(float(mp.diff(j_mp, mp.mpf(vi), h=mp.mpf("1e-20"))), rel=1e-11)


@pytest.mark.parametrize("vbi", [0.001, 0.02, 0.3])
def test_inverse_round_trip_and_slope_enclosure(vbi):
    # the inverse law against the forward law; the certificate's slope range against central
    # differences of the forward law (numpy), up to flat band
    kw = dict(barrier_eV=vbi + 0.2, built_in_V=vbi, alpha=0.4, richardson_A_m2_K2=8.16e4,
              temperature_K=T, depletion="exact")
    V = np.linspace(-0.8, vbi * (1 - 1e-9), 60)
    j, d = th.isotype_current_density(V, with_derivative=True, **kw)
    back, dvdj = th.isotype_voltage(j, with_derivative=True, **kw)
    np.testing.assert_allclose(back, V, rtol=0, atol=1e-12)
    np.testing.assert_allclose(dvdj * d, 1.0, rtol=1e-9)
    lo, hi = th.current_slope_range(V[:-1], V[1:], **kw)
    inside = V[:-1, None] + (V[1:] - V[:-1])[:, None] * np.linspace(0, 1, 21)[None, :]
    step = 1e-7 * vbi
    slopes = (th.isotype_current_density(np.minimum(inside + step, vbi), **kw)
              - th.isotype_current_density(inside - step, **kw)) / (
                  np.minimum(inside + step, vbi) - (inside - step))
    assert np.all(lo[:, None] <= slopes * (1 + 1e-6)) and np.all(slopes <= hi[:, None] * (1 + 1e-6))
    assert np.all(lo > 0)


def test_large_alpha_reproduces_schottky_law():
    # Rhoderick & Williams: J -> A T^2 exp(-q phi/kT)(exp(qV/kT) - 1) as alpha -> inf; the
    # excess is e^v1 - 1 with alpha v1^2/2 ~ G(-vb) = e^-vb - 1 + vb (the exact balance, v1 -> 0)
    phi, vbi, richardson = 0.8, 0.65, 8.16e4
    V = np.linspace(-2.0, vbi - 0.05, 40)
    V = V[np.abs(V) > 1e-3]
    schottky = richardson * T**2 * np.exp(-phi / VT) * np.expm1(V / VT)
    for alpha in [1e6, 1e8]:
        j = th.isotype_current_density(V, barrier_eV=phi, built_in_V=vbi, alpha=alpha,
                                       richardson_A_m2_K2=richardson, temperature_K=T,
                                       depletion="exact")
        vb = (vbi - V) / VT
        bound = np.sqrt(2 * (np.expm1(-vb) + vb) / alpha)
        excess = j / schottky - 1
        assert np.all((excess >= bound * (1 - bound)) & (excess <= bound * (1 + bound)))
    assert excess.max() < 2e-3


# ------------------------------------------------------------------------------------------------
# the materials form: no switch, continuous in doping and temperature

def interface(lower_doping_cm3, temperature_K=T):
    # thermionic transport: the exact depletion side is its law (the thermionic-field law, the
    # materials form's default, still takes the tail or plain closed form; see circuit/isotype.py)
    values = {"upper_material": "GaP", "lower_material": "Si", "upper_doping_cm3": 1e16,
              "lower_doping_cm3": lower_doping_cm3, "carrier": "electron", "carriers_flow": "up",
              "transport": "thermionic"}
    return isotype_from_materials(ElementSpec(1, "isotype", "i", 1, values), temperature_K, None)


def current_at(element, temperature_K, depletion=None):
    """J at half the built-in potential, forward (where the old forms differed most)."""
    law = element._law(temperature_K)
    volts = 0.5 * law["built_in_V"]
    if depletion is not None:
        # the closed forms are Boltzmann laws: a side within 3 kT of its band (here Si near 1e19,
        # circuit/isotype.py FERMI_DIRAC_WITHIN_KT) is compared with its Boltzmann sides
        law["depletion"] = depletion
        for name in ("accumulation_fermi_eV", "depletion_fermi_eV", "sheet_charge"):
            law.pop(name, None)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", th.IsotypeDomainWarning)
        return float(th.isotype_current_density(volts, **law)[0, 0])


def test_materials_form_is_continuous_across_the_old_switch_in_doping_and_temperature():
    # the old law switched from the plain to the tail form at Vbi = 3 kT/q; find that doping of
    # n-Si under n-GaP 1e16 (and that temperature), step it by 1e-12 relative: the current may
    # move only by the law's own slope (relative change < 1e-9), where the two closed forms there
    # differ by percents (the jump the old law had)
    def excess(log_doping):
        return float(interface(10**log_doping).built_in_V[0, 0]) - 3 * BOLTZMANN_EV_K * T
    log_n = brentq(excess, 18.0, 19.0, xtol=1e-14)
    below, above = interface(10**log_n * (1 - 1e-12)), interface(10**log_n * (1 + 1e-12))
    j_below, j_above = current_at(below, T), current_at(above, T)
    assert abs(j_above / j_below - 1) < 1e-9
    tail, plain = current_at(above, T, depletion="tail"), current_at(above, T, depletion="plain")
    assert abs(tail / plain - 1) > 1e-2     # measured 2.5 % for this pair (alpha ~ 700)

    def excess_t(temperature):
        return float(interface(10**log_n, temperature).built_in_V[0, 0]) - 3 * BOLTZMANN_EV_K * temperature
    grid = np.linspace(200.0, 450.0, 26)
    values = [excess_t(t) for t in grid]
    crossing = [i for i in range(len(grid) - 1) if values[i] * values[i + 1] < 0]
    assert crossing, "the 3 kT/q point must lie in 200-450 K for this pair"
    t0 = brentq(excess_t, grid[crossing[0]], grid[crossing[0] + 1], xtol=1e-12)
    lo_t, hi_t = t0 * (1 - 1e-12), t0 * (1 + 1e-12)
    j_lo = current_at(interface(10**log_n, lo_t), lo_t)
    j_hi = current_at(interface(10**log_n, hi_t), hi_t)
    assert abs(j_hi / j_lo - 1) < 1e-9


# ------------------------------------------------------------------------------------------------
# the numbers form below kT/q in every command

ROOT = Path(__file__).resolve().parents[1]
LOW = """[conditions]
spectrum = "am1.5g"
temperature_K = 300
[[element]]
kind = "subcell"
name = "cell"
gap_eV = 1.4
[[element]]
kind = "isotype"
name = "window"
barrier_eV = 0.45
built_in_V = {vbi}
alpha = 0.5
"""


@pytest.mark.parametrize("vbi", [0.02, 0.001])
def test_built_in_below_kt_solves_in_run(tmp_path, vbi):
    # the old numbers form used the tail law, undefined for Vbi < kT/q ("efficiency nan %");
    # now the efficiency is finite and the interface costs a finite, bounded amount: below the
    # same cell without the interface, above zero
    path = tmp_path / "s.toml"
    path.write_text(LOW.format(vbi=vbi))
    result = run_stack(load_stack(path), curve_points=60)
    s = result.summary
    bare = tmp_path / "bare.toml"
    bare.write_text(LOW.format(vbi=vbi).split("[[element]]\nkind = \"isotype\"")[0])
    reference = run_stack(load_stack(bare), curve_points=60).summary
    assert math.isfinite(s["efficiency_pct"]) and math.isfinite(s["mpp_mA_cm2"])
    assert 0.0 < s["efficiency_pct"] <= reference["efficiency_pct"] + 1e-9
    row = s["interfaces"][0]
    assert math.isfinite(row["drop_at_mpp_V"]) and 0.0 <= row["drop_at_mpp_V"] <= vbi


def test_built_in_below_kt_solves_in_map_and_yield(tmp_path):
    from siltandem import design_map, parse_vary
    from siltandem.materials import weather as weather_files
    from siltandem.studies import yield_year
    import pvlib

    path = tmp_path / "s.toml"
    path.write_text(LOW.format(vbi=0.05))
    stack = load_stack(path)
    table = design_map(stack, parse_vary("window.built_in_V=0.001:0.04:5", stack),
                       parse_vary("window.alpha=0.1:10:2", stack))
    assert np.all(np.isfinite(table["efficiency_pct"]))
    # smooth in the built-in potential: more built-in potential, higher flat-band current, less loss
    for _, group in table.groupby("window.alpha"):
        assert np.all(np.diff(group.sort_values("window.built_in_V")["efficiency_pct"]) > 0)
    weather = weather_files.read_weather(Path(pvlib.__file__).parent / "data" / "723170TYA.CSV")
    path.write_text(LOW.format(vbi=0.02))
    year = yield_year.annual_yield(load_stack(path), weather).summary
    assert math.isfinite(year["annual_energy_kWh_m2"]) and year["annual_energy_kWh_m2"] > 0
    assert math.isfinite(year["energy_weighted_efficiency_pct"])
