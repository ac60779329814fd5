"""An independent slow reference for the isotype interface: Poisson's equation across both sides
solved numerically, and WKB transmission through the computed barrier.

The reference (nothing from siltandem's law code): both sides in Debye lengths of side 2,
u'' = k (n(u)/N - 1) on each side (k = 1 on side 2, alpha/r^2 on side 1, r = eps1/eps2), carriers
from Boltzmann statistics or from Fermi-Dirac statistics, n/N = F_1/2(eta + u)/F_1/2(eta), F_1/2
tabulated from mpmath's polylogarithm (-Li_3/2(-e^eta)) and interpolated by a cubic spline in
log space; solved as one boundary-value problem with scipy.integrate.solve_bvp; at the interface the
potential steps by the barrier voltage and Gauss's law with a fixed sheet charge holds,
r u1' - u2' = sqrt(2) s (S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed. 2007,
ch. 2-3; Poisson's equation and Gauss's law at a charged interface). Compared: the accumulation-side
bending v1 (which sets the emission current, J = A T^2 e^(v1 - phi)(e^v - 1)) from the law and
from the numerical profile.

Thermionic-field emission: the WKB exponent theta(e) = (sqrt(2)/e00) int sqrt(Delta(x)) dx through
the computed depletion-side barrier (scipy.integrate.quad, x in Debye lengths, e00 = E00/kT,
Padovani-Stratton E00), and the gain 1 + int exp(e - theta(e)) de by quad (F. A. Padovani,
R. Stratton, Solid-State Electron. 9 (1966) 695; C. R. Crowell, V. L. Rideout, Solid-State
Electron. 12 (1969) 89); compared with laws/field_emission.py, whose depletion side is the
parabola of the depletion approximation with the kT/q tail: the tolerance there (0.5 %) is that
approximation's (measured 2e-8 to 2.3e-3).
"""
import functools

import mpmath
import numpy as np
import pytest
from scipy import integrate, interpolate

from siltandem.laws import field_emission as fe
from siltandem.laws import interface_charge as ic
from siltandem.laws import thermionic as th

@functools.cache
def _log_f_spline():
    """ln F_1/2 on eta -60..90 (step 0.05) from mpmath's polylogarithm, as a cubic spline."""
    eta = np.linspace(-60.0, 90.0, 3001)
    with mpmath.workdps(20):
        log_f = [float(mpmath.log(mpmath.re(-mpmath.polylog(1.5, -mpmath.exp(e))))) for e in eta]
    return interpolate.CubicSpline(eta, np.array(log_f))


def density_ratio(u, eta):
    """n/N - 1 on a side: Boltzmann (eta None) or Fermi-Dirac F_1/2(eta + u)/F_1/2(eta) - 1."""
    if eta is None:
        return np.expm1(u)
    spline = _log_f_spline()
    return np.expm1(spline(eta + u) - spline(eta))


def poisson_split(vb, alpha, *, eta1=None, eta2=None, s=0.0, r=1.3, guess_v1=None):
    """v1 from the numerical Poisson solution (see the module notes); also the side-2 profile."""
    k1 = alpha / r ** 2
    guess_v1 = 0.5 * vb if guess_v1 is None else guess_v1
    v2 = vb - guess_v1
    l1 = 40.0 / np.sqrt(k1 * max(1.0, np.exp(min(guess_v1, 30.0) / 2)) / 2 + 1e-300) + 40.0 / np.sqrt(k1)
    l1 = min(l1, 60.0 / np.sqrt(k1))
    l2 = 2.0 * np.sqrt(2.0 * max(abs(v2), 1.0)) + 40.0

    def rhs(t, y):
        u1, p1, u2, p2 = y
        return np.vstack([-l1 * p1, -l1 * k1 * density_ratio(u1, eta1), l2 * p2, l2 * density_ratio(u2, eta2)])

    def bc(y0, y1):
        return np.array([y0[0] - y0[2] - vb, r * y0[1] - y0[3] - np.sqrt(2.0) * s, y1[0], y1[2]])

    t = np.concatenate([np.linspace(0, 0.02, 400), np.linspace(0.02, 1, 1600)[1:]])
    depth = max(np.sqrt(2.0 * max(v2, 0.0)), 1.0) / l2
    y = np.vstack([guess_v1 * np.exp(-t * l1 * np.sqrt(k1)), np.zeros_like(t),
                   -v2 * np.clip(1 - t / depth, 0, None) ** 2, np.zeros_like(t)])
    y[1] = -np.gradient(y[0], t) / l1
    y[3] = np.gradient(y[2], t) / l2
    sol = integrate.solve_bvp(rhs, bc, t, y, tol=1e-9, max_nodes=200000)
    assert sol.status == 0, sol.message
    return sol.sol(0.0)[0], sol, l2


CASES = [  # vb (kT/q), alpha, eta1, eta2, s
    (10.0, 0.3, None, None, 0.0),          # Boltzmann both, the law's "exact" form
    (10.0, 30.0, None, None, 0.0),
    (10.0, 0.3, 5.0, None, 0.0),           # degenerate accumulation side
    (12.0, 3.0, 8.0, 1.0, 0.0),            # both degenerate
    (10.0, 0.3, None, None, 2.0),          # sheet charge attracting the carriers
    (10.0, 0.3, None, None, -1.0),         # repelling
    (8.0, 2.0, 4.0, None, 1.5),            # degenerate and charged
]


@pytest.mark.parametrize("vb, alpha, eta1, eta2, s", CASES)
def test_split_against_numerical_poisson(vb, alpha, eta1, eta2, s):
    law_v1 = float(ic.bending_split(np.array([vb]), np.array([alpha]), eta1, eta2, s)[0])
    ref_v1, _, _ = poisson_split(vb, alpha, eta1=eta1, eta2=eta2, s=s, guess_v1=law_v1)
    # J is proportional to e^v1: compare v1 absolutely (1e-6 kT/q = 1e-6 relative in J)
    # measured: 2e-13 (Boltzmann sides), 3e-11..8e-11 (Fermi-Dirac, the F_1/2 spline's accuracy)
    assert abs(law_v1 - ref_v1) < 1e-9, (law_v1, ref_v1)


def test_sheet_charge_moves_the_split_the_documented_way():
    """A charge that attracts the majority carriers deepens the accumulation (v1 up), a repelling
    one lessens it; same trend in the numerical reference."""
    base = float(ic.bending_split(np.array([10.0]), np.array([0.3]))[0])
    plus = float(ic.bending_split(np.array([10.0]), np.array([0.3]), s=2.0)[0])
    minus = float(ic.bending_split(np.array([10.0]), np.array([0.3]), s=-1.0)[0])
    assert minus < base < plus
    ref_plus = poisson_split(10.0, 0.3, s=2.0, guess_v1=plus)[0]
    assert abs(ref_plus - plus) < 1e-9


def wkb_gain(sol, l2, v2, e00):
    """1 + int_0^v2 exp(e - theta(e)) de with theta by quad through the numerical barrier."""
    def barrier(x):                       # carrier-energy band edge above the bulk, kT, x in Debye
        return -sol.sol(x / l2)[2]

    def theta(e):
        level = v2 - e
        from scipy.optimize import brentq
        turn = brentq(lambda x: barrier(x) - level, 0.0, l2 * 0.999)
        return np.sqrt(2.0) / e00 * integrate.quad(lambda x: np.sqrt(max(barrier(x) - level, 0.0)),
                                                    0.0, turn, epsabs=1e-10, limit=100)[0]
    part = integrate.quad(lambda e: np.exp(e - theta(e)), 0.0, v2 - 1e-9, limit=100, epsabs=0,
                          epsrel=1e-7)[0]
    return 1.0 + part


@pytest.mark.parametrize("vb, alpha, e00", [(20.0, 1.0, 0.3), (20.0, 1.0, 1.0), (30.0, 0.2, 0.6)])
def test_thermionic_field_gain_against_wkb_on_the_numerical_barrier(vb, alpha, e00):
    v1, sol, l2 = poisson_split(vb, alpha, r=1.0)
    v2 = vb - v1
    ref = wkb_gain(sol, l2, v2, e00)
    # the law: same reduced quantities, P = 1 and T chosen so that kT/q = 1 V (reduced units)
    tail_v1 = float(th.voltage_split(np.array(vb) * 0.025851999786435535, alpha=alpha,
                                     temperature_K=300.0, include_tail=True).accumulation_V
                    / 0.025851999786435535)
    w = alpha * (np.expm1(tail_v1) - tail_v1)
    law = float(np.exp(fe.tunnelling_gain(np.array([w]), field_energy=np.array([e00]))[0]))
    # measured: -1.6e-8 (e00 = 0.3), -2.3e-3 (e00 = 1: tunnelling reaches the vertex, where the
    # parabola with the kT/q tail departs from the full Boltzmann profile), -6.6e-8 (e00 = 0.6)
    assert abs(law / ref - 1.0) < 5e-3, (law, ref)
    assert ref > 1.0 and law > 1.0
