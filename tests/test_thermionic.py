"""Isotype heterointerface law (siltandem.laws.thermionic) against outside references.

References used below:
- A. Chandra, L. F. Eastman, Solid-State Electron. 23 (1980) 599, and the n-n+ heterojunction of
  B. Van Zeghbroeck, Principles of Semiconductor Devices: J = J0 (1 - V/Vbi)(exp(qV/kT) - 1),
  J0 = (q A* T Vbi / k) exp(-q Vbi / kT).
- E. H. Rhoderick, R. H. Williams, Metal-Semiconductor Contacts, 2nd ed. (Oxford 1988):
  J = A** T^2 exp(-q phiB / kT)(exp(qV/kT) - 1).
- C. R. Crowell, Solid-State Electron. 8 (1965) 395: A = 4 pi q m0 k^2 / h^3 = 120.17 A cm^-2 K^-2.
- R. L. Anderson, Solid-State Electron. 5 (1962) 341: electron-affinity rule.
- General-purpose references: scipy.optimize.brentq, scipy.integrate.solve_bvp, mpmath.
"""
import warnings

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy.integrate import solve_bvp
from scipy.optimize import brentq
from scipy.special import lambertw, wrightomega

from siltandem.constants import (BOLTZMANN_J_K, ELEMENTARY_CHARGE_C, RICHARDSON_FREE_A_M2_K2,
                                 VACUUM_PERMITTIVITY_F_M, thermal_voltage_V)
from siltandem.laws import thermionic as th

A_CM2_TO_M2 = 1e4          # A cm^-2 -> A m^-2
CM3 = 1e6                  # cm^-3 -> m^-3


def reduced(barrier_voltage_V, alpha, T=300.0, include_tail=False):
    """Split in units of kT/q."""
    vt = thermal_voltage_V(T)
    s = th.voltage_split(barrier_voltage_V, alpha=alpha, temperature_K=T, include_tail=include_tail)
    return s.accumulation_V / vt, s.depletion_V / vt


def mp_balance(v1, vb, alpha, tail):
    """Charge balance alpha (e^v1 - 1 - v1) - (vb - v1 - tail), evaluated in 40-digit arithmetic."""
    with mp.workdps(40):
        v1, vb, alpha = mp.mpf(v1), mp.mpf(vb), mp.mpf(alpha)
        return float(alpha * (mp.expm1(v1) - v1) - (vb - v1 - tail))


def mp_depletion_side(v1, alpha, tail):
    """v2 = alpha (e^v1 - 1 - v1) + tail (the balance solved for v2), at 40 digits."""
    with mp.workdps(40):
        return float(mp.mpf(alpha) * (mp.expm1(mp.mpf(v1)) - mp.mpf(v1)) + tail)


def mp_root(vb, alpha, tail):
    """Physical root v1 in [0, vb - tail] at 50 digits (bisection then Newton)."""
    with mp.workdps(50):
        vb, alpha = mp.mpf(vb), mp.mpf(alpha)
        f = lambda x: alpha * (mp.expm1(x) - x) - (vb - x - tail)
        lo, hi = mp.mpf(0), vb - tail            # f(lo) <= 0 <= f(hi)
        for _ in range(80):
            mid = (lo + hi) / 2
            lo, hi = (mid, hi) if f(mid) < 0 else (lo, mid)
        x = (lo + hi) / 2
        for _ in range(4):                       # Newton, quadratically to 50 digits
            x -= f(x) / (alpha * mp.expm1(x) + 1)
        return x


# ------------------------------------------------------------------------------------------------
# split of the barrier voltage

ALPHAS = [1e-8, 1e-5, 0.01, 0.3, 0.9, 1 - 1e-6, 1 - 1e-12, 1.0, 1 + 1e-12, 1 + 1e-6, 1.1, 3.0,
          30.0, 1e4, 1e6, 1e8]
BARRIERS_KT = [1e-9, 1e-3, 0.5, 1.0, 2.0, 8.0, 30.0, 120.0, 300.0]


@pytest.mark.parametrize("include_tail", [False, True])
def test_split_matches_brentq_root_of_charge_balance(include_tail):
    # reference: scipy.optimize.brentq on the same charge balance, residual in 40-digit arithmetic
    T = 300.0
    vt = thermal_voltage_V(T)
    tail = 1.0 if include_tail else 0.0
    worst = 0.0
    for alpha in ALPHAS:
        for vb in BARRIERS_KT:
            if vb - tail <= 0:
                continue
            v1, v2 = reduced(vb * vt, alpha, T, include_tail)
            vb_exact = vb * vt / vt      # the law sees the rounded barrier voltage
            ref = brentq(mp_balance, 0.0, vb_exact - tail, args=(vb_exact, alpha, tail),
                         xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=2000)
            ref2 = vb_exact - ref if ref <= 0.5 * vb_exact else mp_depletion_side(ref, alpha, tail)
            worst = max(worst, abs(v1 / ref - 1), abs(v2 / ref2 - 1))
            assert v1 == pytest.approx(ref, rel=1e-12, abs=0), (alpha, vb)
            assert v2 == pytest.approx(ref2, rel=1e-12, abs=0), (alpha, vb)
    print(f"max relative deviation from brentq (tail={include_tail}): {worst:.2e}")


def test_split_matches_high_precision_root_and_sums_to_barrier():
    # reference: mpmath 50-digit root; closed form + one Halley step should be at rounding level
    worst = 0.0
    for alpha in ALPHAS:
        for vb in BARRIERS_KT:
            v1, v2 = reduced(vb * thermal_voltage_V(300.0), alpha)
            vbe = vb * thermal_voltage_V(300.0) / thermal_voltage_V(300.0)
            ref = mp_root(vbe, alpha, 0)
            worst = max(worst, float(abs(v1 / ref - 1)))
            assert v1 + v2 == pytest.approx(vbe, rel=1e-15, abs=0)
    assert worst < 5e-15
    print(f"max relative deviation from 50-digit root: {worst:.2e}")


# ------------------------------------------------------------------------------------------------
# numerical traps (each measured on this scipy; the law must avoid them)

def test_trap_wrightomega_lower_branch_between_minus2_and_minus1():
    # For alpha > 1 the split needs W_{-1}(-e^x). scipy's wrightomega(x - i pi) is that only for
    # x < -2; between -2 and -1 it silently returns W_0. alpha = 3, barrier 1 kT/q gives x = -1.59.
    alpha, vb = 3.0, 1.0
    g = alpha - 1.0
    mu = vb / g + (1 / g - np.log1p(1 / g))
    x = -1.0 - mu
    assert -2.0 < x < -1.0
    v1, _ = reduced(vb * thermal_voltage_V(300.0), alpha)
    ref = mp_root(vb, alpha, 0)
    assert v1 == pytest.approx(float(ref), rel=1e-14)
    exact = complex(mp.lambertw(-mp.exp(x), -1))
    naive = wrightomega(x - 1j * np.pi)
    if abs(naive - exact) < 1e-8:
        pytest.skip("this scipy's wrightomega no longer has the branch trap")
    naive_v1 = np.log(g * (-naive.real) / alpha)
    assert naive_v1 < 0 and abs(naive_v1 - float(ref)) > 0.1      # the trap gives the spurious root


@pytest.mark.parametrize("vb", [1e-6, 1e-4, 1e-2])
def test_trap_lambertw_minus1_near_branch_point(vb):
    # alpha -> infinity puts the W_{-1} argument within 1e-14..1e-10 of -1/e, where
    # lambertw(z, k=-1) (and even the rounding of z) loses the answer. Series in log space + Halley.
    alpha = 1e8
    g = alpha - 1.0
    mu = vb / g + (1 / g - np.log1p(1 / g))
    naive_v1 = np.log(g * (-lambertw(-np.exp(-1 - mu), -1).real) / alpha)
    v1, _ = reduced(vb * thermal_voltage_V(300.0), alpha)
    ref = float(mp_root(vb * thermal_voltage_V(300.0) / thermal_voltage_V(300.0), alpha, 0))
    assert v1 == pytest.approx(ref, rel=1e-13)
    assert abs(naive_v1 / ref - 1) > 1e-3                          # the trap is real here


def test_trap_spurious_root_for_alpha_above_one():
    # For alpha > 1 the balance has two real roots (W_0 and W_{-1}); the W_0 one has v1 < 0, i.e.
    # an accumulation-side field of the wrong sign. The law must return the other one.
    alpha, vb = 3.0, 5.0
    g = alpha - 1.0
    c = vb + alpha
    z = -(alpha / g) * np.exp(-c / g)
    spurious = -c / g - lambertw(z, 0).real
    physical = -c / g - lambertw(z, -1).real
    assert abs(mp_balance(spurious, vb, alpha, 0)) < 1e-12          # it does solve the balance
    assert spurious < 0 < physical
    v1, v2 = reduced(vb * thermal_voltage_V(300.0), alpha)
    ref = brentq(mp_balance, 0.0, vb, args=(vb, alpha, 0), xtol=1e-300, rtol=1e-15)
    assert v1 == pytest.approx(ref, rel=1e-13) and v1 > 0 and v2 > 0


@pytest.mark.parametrize("alpha", [0.95, 0.99, 1 - 1e-6, 1.01, 1.05, 1 + 1e-6])
def test_trap_textbook_lambert_form_near_alpha_one(alpha):
    # Textbook form v1 = c/beta - W(alpha/beta exp(c/beta)) overflows (alpha < 1) or underflows to
    # W_{-1}(0) = -inf (alpha > 1) once |c/beta| > ~709: here vb = 40 kT/q, |1 - alpha| <= 0.05.
    vb = 40.0
    beta = 1.0 - alpha
    c = vb + alpha
    with np.errstate(over="ignore"):
        z = (alpha / beta) * np.exp(c / beta)
    naive = c / beta - lambertw(z, 0 if beta > 0 else -1).real
    assert not np.isfinite(naive)
    v1, _ = reduced(vb * thermal_voltage_V(300.0), alpha)
    ref = brentq(mp_balance, 0.0, vb, args=(vb * thermal_voltage_V(300.0) / thermal_voltage_V(300.0),
                                            alpha, 0), xtol=1e-300, rtol=1e-15)
    assert v1 == pytest.approx(ref, rel=1e-13)


# ------------------------------------------------------------------------------------------------
# limits: alpha = 1 (Chandra & Eastman) and alpha -> infinity (Schottky)

def classic_isotype(V, *, built_in_V, richardson, T):
    """Chandra & Eastman (1980) / Van Zeghbroeck n-n+ form."""
    vt = thermal_voltage_V(T)
    j0 = ELEMENTARY_CHARGE_C * richardson * T * built_in_V / BOLTZMANN_J_K * np.exp(-built_in_V / vt)
    return j0 * (1 - V / built_in_V) * np.expm1(V / vt), j0


@pytest.mark.parametrize("vbi, j0_ref_A_cm2", [(0.1, 5.94e4), (0.2, 2.48e3), (0.3, 77.8)])
def test_alpha_one_reproduces_classic_isotype_law(vbi, j0_ref_A_cm2):
    # Chandra & Eastman, Solid-State Electron. 23 (1980) 599; Van Zeghbroeck n-n+ heterojunction.
    # J0 values: REFERENCES "R" figures for A* = 8.16 A cm^-2 K^-2, 300 K.
    # The classic form measures the barrier from the depleted side's band edge (its Fermi level at
    # the band edge), so barrier_eV = Vbi here. It keeps only the leading term of
    # exp(qV1/kT) = 1 + q(Vbi - V)/kT (depletion approximation at alpha = 1), i.e. it assumes
    # Vbi - V >> kT/q: the plain law is larger by exactly (1 + kT/(q(Vbi - V))). The kT/q tail
    # on the depletion side cancels that 1, so with include_tail the two agree exactly.
    T, A = 300.0, 8.16 * A_CM2_TO_M2
    vt = thermal_voltage_V(T)
    V = np.concatenate([np.linspace(-5.0, vbi - 2 * vt, 60), [1e-3, -1e-3]])
    classic, j0 = classic_isotype(V, built_in_V=vbi, richardson=A, T=T)
    assert j0 / A_CM2_TO_M2 == pytest.approx(j0_ref_A_cm2, rel=2e-3)
    kw = dict(barrier_eV=vbi, built_in_V=vbi, alpha=1.0, richardson_A_m2_K2=A, temperature_K=T)
    tailed = th.isotype_current_density(V, include_tail=True, **kw)
    np.testing.assert_allclose(tailed, classic, rtol=1e-12)
    plain = th.isotype_current_density(V, **kw)
    np.testing.assert_allclose(plain / classic, 1 + vt / (vbi - V), rtol=1e-12)
    # in the classic form's own regime (Vbi - V > 100 kT/q) the plain law is within 1 %
    regime = vbi - V > 100 * vt
    assert np.all(np.abs(plain[regime] / classic[regime] - 1) < 0.01)
    # reverse current grows about linearly with |V| (Van Zeghbroeck)
    rev = V < -1.0
    slope = np.polyfit(V[rev], tailed[rev], 1)
    assert np.allclose(tailed[rev], np.polyval(slope, V[rev]), rtol=1e-6)


@pytest.mark.parametrize("richardson_A_cm2, phi, js_ref_A_cm2",
                         [(8.16, 0.80, 2.67e-8), (252.0, 0.70, 3.95e-5), (120.17, 0.50, 4.31e-2)])
def test_large_alpha_reproduces_schottky_law(richardson_A_cm2, phi, js_ref_A_cm2):
    # Rhoderick & Williams (1988) thermionic emission, n = 1; Js are REFERENCES "R" figures (300 K).
    # As alpha -> inf the accumulation side bends by v1 ~ sqrt(2 (Vbi - V) q/kT / alpha) (from the
    # charge balance alpha v1^2/2 ~ vb): the law exceeds the Schottky law by exp(v1) - 1 = O(alpha^-1/2).
    T = 300.0
    vt = thermal_voltage_V(T)
    A = richardson_A_cm2 * A_CM2_TO_M2
    vbi = phi - 0.15          # depletion side Fermi level 0.15 eV below its band edge
    V = np.linspace(-2.0, vbi - 0.05, 40)
    V = V[np.abs(V) > 1e-3]
    js = A * T**2 * np.exp(-phi / vt)
    assert js / A_CM2_TO_M2 == pytest.approx(js_ref_A_cm2, rel=3e-3)
    schottky = js * np.expm1(V / vt)
    prev = np.inf
    for alpha in [1e6, 1e7, 1e8]:
        j = th.isotype_current_density(V, barrier_eV=phi, built_in_V=vbi, alpha=alpha,
                                       richardson_A_m2_K2=A, temperature_K=T)
        excess = j / schottky - 1
        bound = np.sqrt(2 * (vbi - V) / vt / alpha)
        # expected order: exp(v1) - 1 = b (1 + b/6 + ...), b = sqrt(2 vb / alpha)
        assert np.all((excess >= bound * (1 - 1e-9)) & (excess <= bound * (1 + bound)))
        assert excess.max() < prev
        prev = excess.max()
    assert prev < 2e-3
    j = th.isotype_current_density(V, barrier_eV=phi, built_in_V=vbi, alpha=1e8,
                                   richardson_A_m2_K2=A, temperature_K=T)
    np.testing.assert_allclose(j / np.expm1(V / vt) / A_CM2_TO_M2, js_ref_A_cm2, rtol=3e-3)


def test_temperature_dependence_matches_both_limits():
    # Rhoderick & Williams: ln(Js/T^2) vs 1/T has slope -q phiB/k (Richardson plot).
    # Chandra & Eastman: J0 = (q A T Vbi/k) exp(-q Vbi/kT), so ln(J0/T) vs 1/T has slope -q Vbi/k.
    A, phi, vbi = 8.16 * A_CM2_TO_M2, 0.8, 0.3
    T = np.linspace(200.0, 450.0, 6)
    vt = thermal_voltage_V(T)
    small_v = 1e-6
    js = th.isotype_current_density(small_v, barrier_eV=phi, built_in_V=0.65, alpha=1e8,
                                    richardson_A_m2_K2=A, temperature_K=T) / np.expm1(small_v / vt)
    slope = np.polyfit(1 / T, np.log(js / T**2), 1)[0]
    assert slope * BOLTZMANN_J_K / ELEMENTARY_CHARGE_C == pytest.approx(-phi, rel=2e-3)
    j0 = th.isotype_current_density(small_v, barrier_eV=vbi, built_in_V=vbi, alpha=1.0,
                                    include_tail=True, richardson_A_m2_K2=A,
                                    temperature_K=T) / np.expm1(small_v / vt)
    ref = classic_isotype(0.0, built_in_V=vbi, richardson=A, T=T)[1]
    np.testing.assert_allclose(j0 * (1 - small_v / vbi) ** -1, ref, rtol=1e-9)
    slope = np.polyfit(1 / T, np.log(j0 / T), 1)[0]
    assert slope * BOLTZMANN_J_K / ELEMENTARY_CHARGE_C == pytest.approx(-vbi, rel=1e-6)


# ------------------------------------------------------------------------------------------------
# continuity across alpha = 1 and derivatives

@pytest.mark.parametrize("delta", [1e-12, 1e-9, 1e-6])
def test_continuity_across_alpha_one(delta):
    # Expected order: d ln J / d alpha at alpha = 1 is dv1/dalpha = -(e^v1 - 1 - v1)/e^v1 (implicit
    # differentiation of the charge balance), so J(1 +- d)/J(1) = 1 -+ d * that, to O(d^2).
    T = 300.0
    vt = thermal_voltage_V(T)
    V = np.array([-3.0, -0.5, -0.05, 0.02, 0.2])
    kw = dict(barrier_eV=0.5, built_in_V=0.35, richardson_A_m2_K2=8.16e4, temperature_K=T,
              with_derivative=True)
    j1, d1 = th.isotype_current_density(V, alpha=1.0, **kw)
    v1 = np.log1p((0.35 - V) / vt)
    slope = -(np.expm1(v1) - v1) / np.exp(v1)
    for sign in (+1, -1):
        j, d = th.isotype_current_density(V, alpha=1.0 + sign * delta, **kw)
        np.testing.assert_allclose(j / j1 - 1, sign * delta * slope, rtol=0,
                                   atol=10 * delta**2 + 2e-15)
        assert np.all(np.abs(d / d1 - 1) < 20 * delta + 2e-14)


@pytest.mark.parametrize("alpha", [1e-8, 0.2, 1 - 1e-9, 1.0, 1 + 1e-9, 5.0, 1e8])
def test_derivative_matches_high_precision_differentiation(alpha):
    # reference: mpmath central difference (step 1e-15 V) of the same law evaluated at 40 digits
    T, vbi, phi, A = 300.0, 0.35, 0.5, 8.16e4
    vt = mp.mpf(thermal_voltage_V(T))

    def j_mp(V):
        vb = (mp.mpf(vbi) - V) / vt
        v1 = mp_root(vb, alpha, 0)
        return A * T**2 * mp.exp(-mp.mpf(phi) / vt) * mp.exp(v1) * mp.expm1(V / vt)

    V = np.array([-2.0, -0.1, 0.01, 0.3])
    j, d = th.isotype_current_density(V, barrier_eV=phi, built_in_V=vbi, alpha=alpha,
                                      richardson_A_m2_K2=A, temperature_K=T, with_derivative=True)
    with mp.workdps(40):
        for Vi, ji, di in zip(V, j, d):
            assert ji == pytest.approx(float(j_mp(mp.mpf(Vi))), rel=1e-13)
            assert di == pytest.approx(float(mp.diff(j_mp, mp.mpf(Vi), h=mp.mpf("1e-15"))), rel=1e-12)


# ------------------------------------------------------------------------------------------------
# full two-sided Poisson solution (Boltzmann carriers on both sides), scipy.integrate.solve_bvp

def full_poisson_split(vb, *, n1_m3, n2_m3, er1, er2, T):
    """Band bending (kT/q units) on each side from the exact Poisson-Boltzmann problem.

    u_i = (bulk band edge - band edge)/kT in carrier energy; side 1 on x < 0, side 2 on x > 0:
    u'' = (e^u - 1) / L_D^2, u1(0) - u2(0) = vb, eps1 u1'(0) = eps2 u2'(0), u -> 0 far away.
    Both sides are mapped onto xi in [0, 1].
    """
    q, k, eps0 = ELEMENTARY_CHARGE_C, BOLTZMANN_J_K, VACUUM_PERMITTIVITY_F_M
    ld1 = np.sqrt(er1 * eps0 * k * T / (q * q * n1_m3))
    ld2 = np.sqrt(er2 * eps0 * k * T / (q * q * n2_m3))
    L1, L2 = 40 * ld1, (np.sqrt(2 * vb) + 40) * ld2
    xi = np.linspace(0.0, 1.0, 2001) ** 2
    # crude starting profile (exponential accumulation, parabolic depletion), not the answer
    v1g = 0.4 * vb
    w = np.sqrt(2 * (vb - v1g)) * ld2
    u1 = v1g * np.exp(-xi * L1 / ld1)
    u2 = np.where(xi * L2 < w, -(vb - v1g) * (1 - xi * L2 / w) ** 2, 0.0)
    y0 = np.vstack([u1, np.gradient(u1, xi), u2, np.gradient(u2, xi)])

    def ode(s, y):
        return np.vstack([y[1], (L1 / ld1) ** 2 * np.expm1(y[0]),
                          y[3], (L2 / ld2) ** 2 * np.expm1(y[2])])

    def bc(ya, yb):     # d/dx = -(1/L1) d/dxi on side 1, +(1/L2) d/dxi on side 2
        return np.array([ya[0] - ya[2] - vb, er1 * ya[1] / L1 + er2 * ya[3] / L2, yb[0], yb[2]])

    sol = solve_bvp(ode, bc, xi, y0, tol=1e-9, bc_tol=1e-10, max_nodes=300000)
    assert sol.status in (0, 3), sol.message
    return sol.y[0, 0], -sol.y[2, 0]


# Realistic interfaces (300 K). Material numbers: affinities, gaps and permittivities from the
# standard device-physics tables as collected in the project REFERENCES (Si, GaAs, GaP, AlGaAs,
# GaInP rows; GaP and GaInP affinities "M"); effective densities of states from memory (Sze,
# Physics of Semiconductor Devices, appendix: Si Nc 2.8e19, GaAs Nc 4.7e17 / Nv 7.0e18 cm^-3;
# GaP Nc 1.8e19, Al0.3Ga0.7As Nc 7.6e17 from m* = 0.067 + 0.083x, Ga0.51In0.49P Nv 1.2e19 from
# m_h ~ 0.6: from memory). Dopings are typical of III-V/Si cell layers (common practice, no source).
REALISTIC = {
    # phosphide window on a Si-like n side: n-GaP 1e18 (depletes) / n-Si 1e17 (accumulates)
    "n-GaP on n-Si": dict(carrier="electron", a=("GaP", 3.80, 2.26, 1.8e19, 1e18, 11.1),
                          b=("Si", 4.05, 1.12, 2.8e19, 1e17, 11.7), V=0.0),
    # arsenide window: n-Al0.3Ga0.7As 5e17 / n-GaAs emitter 1e17
    "n-AlGaAs on n-GaAs": dict(carrier="electron", a=("AlGaAs", 3.74, 1.80, 7.6e17, 5e17, 12.05),
                               b=("GaAs", 4.07, 1.4225, 4.7e17, 1e17, 12.9), V=0.0),
    # p-P back-surface field: p-GaAs base 1e17 / p-Ga0.51In0.49P BSF 1e18
    "p-GaAs on p-GaInP": dict(carrier="hole", a=("GaAs", 4.07, 1.4225, 7.0e18, 1e17, 12.9),
                              b=("GaInP", 4.10, 1.90, 1.2e19, 1e18, 11.8), V=0.0),
    # alpha > 1: n-GaP 1e17 on a heavily doped n-Si 1e19, at 0.2 V reverse bias
    "n-GaP on n+Si, reverse": dict(carrier="electron", a=("GaP", 3.80, 2.26, 1.8e19, 1e17, 11.1),
                                   b=("Si", 4.05, 1.12, 2.8e19, 1e19, 11.7), V=-0.2),
}


def alignment(case, T=300.0, statistics="boltzmann"):
    # Boltzmann by default here: the checks below are written for kT ln(N_band/N) and a Boltzmann
    # Poisson solution; the Fermi-Dirac default of the law is checked in test_fermi_dirac.py
    _, chi_a, eg_a, nb_a, n_a, er_a = case["a"]
    _, chi_b, eg_b, nb_b, n_b, er_b = case["b"]
    return th.isotype_band_alignment(
        carrier=case["carrier"], affinity_a_eV=chi_a, gap_a_eV=eg_a, band_dos_a_m3=nb_a * CM3,
        doping_a_m3=n_a * CM3, relative_permittivity_a=er_a, affinity_b_eV=chi_b, gap_b_eV=eg_b,
        band_dos_b_m3=nb_b * CM3, doping_b_m3=n_b * CM3, relative_permittivity_b=er_b,
        temperature_K=T, statistics=statistics)


@pytest.mark.parametrize("name", list(REALISTIC))
def test_split_against_full_poisson_solution(name):
    # The kT/q-tailed closed form drops only exp(-qV2/kT) from the exact depletion-side field, so it
    # must meet the full solution to 1e-4; the plain depletion approximation is off by ~1-10 %.
    case, T = REALISTIC[name], 300.0
    vt = thermal_voltage_V(T)
    al = alignment(case, T)
    side1, side2 = (case["a"], case["b"]) if al.a_accumulates else (case["b"], case["a"])
    vb = (float(al.built_in_V) - case["V"]) / vt
    v1n, v2n = full_poisson_split(vb, n1_m3=side1[4] * CM3, n2_m3=side2[4] * CM3,
                                  er1=side1[5], er2=side2[5], T=T)
    assert float(al.alpha) == pytest.approx(side1[5] * side1[4] / (side2[5] * side2[4]))
    v1t, v2t = reduced(vb * vt, float(al.alpha), T, include_tail=True)
    v1p, v2p = reduced(vb * vt, float(al.alpha), T)
    dev_tail = max(abs(v1t / v1n - 1), abs(v2t / v2n - 1))
    dev_plain = max(abs(v1p / v1n - 1), abs(v2p / v2n - 1))
    print(f"{name}: Vbi {float(al.built_in_V):.4f} V, alpha {float(al.alpha):.3g}, "
          f"V1 {v1n * vt:.5f} V, V2 {v2n * vt:.5f} V, tail dev {dev_tail:.2e}, plain dev {dev_plain:.2e}")
    assert dev_tail < 1e-4
    assert 1e-3 < dev_plain < 0.1


def test_tailed_split_within_1e6_of_full_solution_for_back_surface_field():
    # issue figure: the tailed closed form within 1e-6 of the full solution in a realistic case
    case, T = REALISTIC["p-GaAs on p-GaInP"], 300.0
    vt = thermal_voltage_V(T)
    al = alignment(case, T)
    assert bool(al.a_accumulates)            # GaAs (layer a) accumulates holes
    vb = float(al.built_in_V) / vt
    v1n, v2n = full_poisson_split(vb, n1_m3=1e17 * CM3, n2_m3=1e18 * CM3, er1=12.9, er2=11.8, T=T)
    v1t, v2t = reduced(vb * vt, float(al.alpha), T, include_tail=True)
    assert v1t == pytest.approx(v1n, rel=1e-6) and v2t == pytest.approx(v2n, rel=1e-6)


# ------------------------------------------------------------------------------------------------
# band alignment, Richardson constant, both carrier types

def test_band_alignment_by_hand_electron_affinity_rule():
    # Anderson rule by hand; kT ln(Nc/N) for the Fermi depths (Boltzmann)
    T = 300.0
    kt = BOLTZMANN_J_K * T / ELEMENTARY_CHARGE_C
    al = alignment(REALISTIC["n-AlGaAs on n-GaAs"], T)
    d_algaas, d_gaas = kt * np.log(7.6e17 / 5e17), kt * np.log(4.7e17 / 1e17)
    assert not al.a_accumulates                                   # GaAs (b) accumulates
    assert float(al.offset_eV) == pytest.approx(4.07 - 3.74)      # spike seen from GaAs
    assert float(al.built_in_V) == pytest.approx(0.33 + d_gaas - d_algaas)
    assert float(al.barrier_eV) == pytest.approx(0.33 + d_gaas)
    assert float(al.alpha) == pytest.approx(12.9 * 1e17 / (12.05 * 5e17))
    # holes: carrier-energy band edge chi + Eg; GaInP valence band lies 0.5075 eV deeper
    al = alignment(REALISTIC["p-GaAs on p-GaInP"], T)
    d_gaas, d_gainp = kt * np.log(7.0e18 / 1e17), kt * np.log(1.2e19 / 1e18)
    assert al.a_accumulates
    assert float(al.offset_eV) == pytest.approx((4.10 + 1.90) - (4.07 + 1.4225))
    assert float(al.built_in_V) == pytest.approx(0.5075 + d_gaas - d_gainp)
    assert float(al.barrier_eV) == pytest.approx(0.5075 + d_gaas)


def test_band_alignment_swap_override_and_no_spike():
    T = 300.0
    kt = BOLTZMANN_J_K * T / ELEMENTARY_CHARGE_C
    case = REALISTIC["n-GaP on n-Si"]
    fwd = alignment(case, T)
    rev = alignment(dict(case, a=case["b"], b=case["a"]), T)
    assert bool(fwd.a_accumulates) != bool(rev.a_accumulates)
    for f, r in zip(fwd[:4], rev[:4]):
        assert float(f) == pytest.approx(float(r))
    # override: a measured-style conduction offset replaces the affinity rule
    _, chi_a, eg_a, nb_a, n_a, er_a = case["a"]
    _, chi_b, eg_b, nb_b, n_b, er_b = case["b"]
    common = dict(carrier="electron", affinity_a_eV=chi_a, gap_a_eV=eg_a, band_dos_a_m3=nb_a * CM3,
                  relative_permittivity_a=er_a, affinity_b_eV=chi_b, gap_b_eV=eg_b,
                  band_dos_b_m3=nb_b * CM3, relative_permittivity_b=er_b, temperature_K=T,
                  statistics="boltzmann")
    ov = th.isotype_band_alignment(doping_a_m3=n_a * CM3, doping_b_m3=n_b * CM3, offset_eV=-0.10,
                                   **common)
    assert float(ov.offset_eV) == pytest.approx(0.10) and not ov.a_accumulates
    # GaP (high band edge) lightly doped, Si (low edge) heavily doped: the GaP side accumulates and
    # meets no spike (offset < 0); its barrier is then only its own Fermi depth
    ns = th.isotype_band_alignment(doping_a_m3=1e12 * CM3, doping_b_m3=1e19 * CM3, **common)
    assert bool(ns.a_accumulates) and float(ns.offset_eV) == pytest.approx(-(4.05 - 3.80))
    assert float(ns.barrier_eV) == pytest.approx(kt * np.log(1.8e19 / 1e12))
    assert float(ns.built_in_V) == pytest.approx(
        kt * np.log(1.8e19 / 1e12) - 0.25 - kt * np.log(2.8e19 / 1e19))


def test_richardson_constant():
    # Crowell (1965): 120.17 A cm^-2 K^-2 for m0 (REFERENCES "R"); the smaller mass sets A*
    assert RICHARDSON_FREE_A_M2_K2 / A_CM2_TO_M2 == pytest.approx(120.17, abs=0.01)
    a = th.richardson_constant_A_m2_K2(mass_ratio_1=0.067, mass_ratio_2=0.092)
    assert a == pytest.approx(120.17 * 0.067 * A_CM2_TO_M2, rel=1e-4)


# ------------------------------------------------------------------------------------------------
# inverse law, domain, errors

@pytest.mark.parametrize("include_tail", [False, True])
def test_voltage_from_current_round_trip(include_tail):
    T = 300.0
    vt = thermal_voltage_V(T)
    V = np.concatenate([np.linspace(-5.0, 0.3 - 1.01 * vt, 200), [0.0, 1e-9, -1e-9]])
    alpha = np.array([1e-8, 0.1, 1.0, 7.0, 1e8])[:, None]
    kw = dict(barrier_eV=0.45, built_in_V=0.3, alpha=alpha, richardson_A_m2_K2=8.16e4,
              temperature_K=T, include_tail=include_tail)
    j, djdv = th.isotype_current_density(V, with_derivative=True, **kw)
    v_back, dvdj = th.isotype_voltage(j, with_derivative=True, **kw)
    assert np.all(np.diff(j[:, :200], axis=1) > 0)               # J(V) strictly increasing
    # compare where V is well determined by J (relative change of J over 1 uV above 1e-9)
    np.testing.assert_allclose(th.isotype_current_density(v_back, **kw), j, rtol=1e-12, atol=0)
    np.testing.assert_allclose(v_back, np.broadcast_to(V, j.shape), rtol=0, atol=1e-9)
    np.testing.assert_allclose(dvdj * djdv, 1.0, rtol=1e-9)
    assert np.all(v_back[:, 200] == 0.0)


def test_domain_and_errors():
    kw = dict(barrier_eV=0.45, built_in_V=0.3, alpha=2.0, richardson_A_m2_K2=8.16e4,
              temperature_K=300.0)
    with pytest.warns(th.IsotypeDomainWarning, match="2 point"):
        j = th.isotype_current_density(np.array([0.0, 0.31, 0.5]), **kw)
    assert j[0] == 0.0 and np.isnan(j[1:]).all()
    assert np.isfinite(th.isotype_current_density(0.3, **kw))      # flat band itself is defined
    with pytest.warns(th.IsotypeDomainWarning):
        assert np.isnan(th.isotype_current_density(0.3, include_tail=True, **kw))
    j_flat = th.isotype_current_density(0.3, **kw)
    assert th.isotype_voltage(j_flat, **kw) == pytest.approx(0.3, abs=1e-12)
    with pytest.warns(th.IsotypeDomainWarning, match="flat-band current"):
        assert np.isnan(th.isotype_voltage(2 * j_flat, **kw))
    for key, bad in [("alpha", 0.0), ("alpha", -1.0), ("temperature_K", 0.0),
                     ("richardson_A_m2_K2", np.nan), ("built_in_V", -0.1)]:
        with pytest.raises(ValueError, match=key):
            th.isotype_current_density(0.0, **dict(kw, **{key: bad}))
    with pytest.raises(th.IsotypeParameterError, match="carrier"):
        alignment(dict(REALISTIC["n-GaP on n-Si"], carrier="positron"))


# ------------------------------------------------------------------------------------------------
# property tests over the whole domain (hypothesis)

alpha_strategy = st.one_of(
    st.floats(-8.0, 8.0).map(lambda e: 10.0**e),
    st.sampled_from([1.0, 1 - 1e-12, 1 + 1e-12, 1 - 1e-6, 1 + 1e-6]),
)


@settings(max_examples=300, deadline=None)
@given(alpha=alpha_strategy, T=st.floats(200.0, 450.0), vbi=st.floats(0.01, 1.5),
       fermi_depth=st.floats(0.0, 0.4), log_gap=st.floats(-9.0, np.log10(6.5)),
       include_tail=st.booleans())
def test_finite_everywhere(alpha, T, vbi, fermi_depth, log_gap, include_tail):
    vt = thermal_voltage_V(T)
    gap = 10.0**log_gap                       # Vbi - V, from just below Vbi to V = -5 V
    if include_tail:
        gap = max(gap, vt * (1 + 1e-9))      # the tailed form starts at Vbi - V = kT/q
    gap = min(gap, vbi + 5.0)
    V = vbi - gap
    kw = dict(barrier_eV=vbi + fermi_depth, built_in_V=vbi, alpha=alpha,
              richardson_A_m2_K2=8.16e4, temperature_K=T, include_tail=include_tail)
    with warnings.catch_warnings():
        warnings.simplefilter("error")        # no warnings at all inside the domain
        j, d = th.isotype_current_density(V, with_derivative=True, **kw)
        s = th.voltage_split(gap, alpha=alpha, temperature_K=T, include_tail=include_tail)
        v_back = th.isotype_voltage(j, **kw)
    assert np.isfinite(j) and np.isfinite(d) and d > 0
    assert np.sign(j) == np.sign(V)
    v1, v2 = float(s.accumulation_V), float(s.depletion_V)
    assert np.isfinite(v1) and np.isfinite(v2) and v1 >= 0 and v2 >= 0
    assert v1 + v2 == pytest.approx(gap, rel=1e-12)
    assert np.isfinite(v_back)
    assert th.isotype_current_density(v_back, **kw) == pytest.approx(float(j), rel=1e-10, abs=0)


def test_vectorized_grid_is_nan_free():
    # 2e5 points across the whole domain in one call (same checks as above, in bulk)
    rng = np.random.default_rng(4)
    n = 200_000
    T = rng.uniform(200, 450, n)
    vbi = rng.uniform(0.01, 1.5, n)
    alpha = 10 ** rng.uniform(-8, 8, n)
    V = vbi - np.minimum(10 ** rng.uniform(-9, np.log10(6.5), n), vbi + 5)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        j, d = th.isotype_current_density(V, barrier_eV=vbi + 0.1, built_in_V=vbi, alpha=alpha,
                                          richardson_A_m2_K2=8.16e4, temperature_K=T,
                                          with_derivative=True)
    assert np.isfinite(j).all() and np.isfinite(d).all() and (d > 0).all()
    assert (np.sign(j) == np.sign(V)).all()
