"""Isotype heterointerface (n-N or p-P) with Fermi-Dirac carriers and a fixed interface sheet charge.

The general form of the thermionic law of laws/thermionic.py (its optional parameters
``accumulation_fermi_eV``, ``depletion_fermi_eV``, ``sheet_charge`` dispatch here; with none of them
that module's own code runs, unchanged). Reduced units: potentials in kT/q, energies in kT.

Charge balance. Each side's first integral of Poisson's equation, with the majority carriers of
one parabolic band (density ``Nb F_1/2(eta)``, full ionisation, so the doping is ``Nb F_1/2(eta_b)``):

    eps E^2 / (2 kT) = N g(x; eta_b),
    g(x; eta) = [F_3/2(eta + x) - F_3/2(eta) - x F_1/2(eta)] / F_1/2(eta),

x the bending that raises the carrier density (> 0 accumulation, < 0 depletion); F_j the
Fermi-Dirac integral of order j normalised by Gamma(j + 1) (dF_j/deta = F_(j-1)), which gives
``g = e^x - 1 - x`` for Boltzmann carriers (eta -> -inf). The side charges per area, in units
of ``sqrt(2 eps2 kT N2)``, are ``q1 = sign(v1) sqrt(alpha g1(v1))`` (side 1, the accumulation side)
and ``q2 = sign(v2) sqrt(g2(-v2))`` (side 2, the depletion side), and Gauss's law with a fixed
sheet charge at the interface gives

    q1(v1) = q2(vb - v1) + s,    s = sigma_c / sqrt(2 eps2 kT N2),

``sigma_c`` the sheet charge counted positive when its sign is opposite to the majority carriers'
(positive for n-N, negative for p-P: it attracts them to the interface). q1 rises and q2(vb - v1)
falls with v1, so the root is unique for every vb and s; s = 0 with Boltzmann sides is the
"exact" balance of laws/thermionic.py.

Current. The barrier top sits at the interface; its height above side 1's Fermi level is
``phi - v1`` (phi the barrier of laws/thermionic.py), above side 2's ``phi - v1 - v``. With
Boltzmann occupancy the net flux is ``J = A T^2 exp(v1 - phi)(e^v - 1)`` (that law); with
Fermi-Dirac occupancy of both sides' states over the top (a parabolic band, transverse momentum
conserved: the supply function integrates to ``ln(1 + e^eta)``),

    J = A T^2 [ln(1 + e^(a + v)) - ln(1 + e^a)] = A T^2 ln(1 + sigma(a) expm1(v)),  a = v1 - phi,

which tends to the Boltzmann law when the top lies many kT above both Fermi levels.

References
----------
.. [1] J. S. Blakemore, "Approximations for Fermi-Dirac integrals, especially the function F_1/2",
   Solid-State Electron. 25 (1982) 1067 (the normalised F_j, dF_j/deta = F_(j-1)).
.. [2] S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley (2007), ch. 1
   (n = Nc F_1/2) and ch. 3 (thermionic emission; surface charge and the first integral).
.. [3] R. Stratton, F. A. Padovani, Solid-State Electron. 10 (1967) 813 (Fermi-Dirac supply
   function: thermionic emission from a degenerate semiconductor, ln(1 + e^eta)).
"""
from __future__ import annotations

import numpy as np
from scipy.special import expit

from siltandem.constants import (BOLTZMANN_J_K, ELEMENTARY_CHARGE_C, VACUUM_PERMITTIVITY_F_M,
                                 thermal_voltage_V)
from siltandem.laws.fermi_dirac import charge_integral, fermi_integral
from siltandem.numerics.roots import safeguarded_newton

__all__ = ["fermi_integral", "charge_integral", "reduced_sheet_charge", "bending_split",
           "general_current", "general_voltage", "general_slope_range", "interface_law"]
# fermi_integral and charge_integral: the fast forms of laws/fermi_dirac.py, re-exported here


def reduced_sheet_charge(sheet_charge_cm2, *, carrier, depletion_doping_m3, depletion_permittivity,
                         temperature_K):
    """s = sigma_c / sqrt(2 eps2 kT N2) [-] from a fixed interface charge in elementary charges per
    cm^2 (> 0 a positive charge), sigma_c = +q sigma for n-N and -q sigma for p-P (positive when it
    attracts the majority carriers to the interface)."""
    sign = 1.0 if carrier == "electron" else -1.0
    sigma = sign * np.asarray(sheet_charge_cm2, dtype=float) * 1e4 * ELEMENTARY_CHARGE_C
    scale = np.sqrt(2.0 * depletion_permittivity * VACUUM_PERMITTIVITY_F_M * BOLTZMANN_J_K
                    * np.asarray(temperature_K, float) * np.asarray(depletion_doping_m3, float))
    return sigma / scale


def _side_charge(x, weight, eta):
    """sign(x) sqrt(weight g(x)) and its derivative in x (both sides' charge in one form)."""
    g, dg, c = charge_integral(x, eta)
    root = np.sqrt(weight * np.maximum(g, 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.where(root > 0, weight * np.abs(dg) / (2.0 * root), np.sqrt(weight * c / 2.0))
    return np.sign(x) * root, slope


def charge_balance(v1, vb, alpha, eta1, eta2, s):
    """f(v1) = q1(v1) - q2(vb - v1) - s, df/dv1, and the two charge slopes (L', R')."""
    q1, d1 = _side_charge(v1, alpha, eta1)
    q2, d2 = _side_charge(-(vb - v1), np.ones_like(v1), eta2)
    # q2 as a function of v2 = vb - v1 is -(charge at -v2): side 2 depletes for v2 > 0
    return q1 + q2 - s, d1 + d2, d1, d2


def bending_split(vb, alpha, eta1=None, eta2=None, s=0.0, start=None):
    """v1 (side 1's reduced bending, > 0 accumulation) on flat arrays for reduced barrier
    voltages vb >= 0; NaN elsewhere. Safeguarded Newton on the monotone balance from an expanding
    bracket; ``start`` (optional, same size) a first guess, e.g. the split at a nearby voltage."""
    vb, alpha, s = (np.asarray(a, dtype=float).ravel() for a in np.broadcast_arrays(vb, alpha, s))
    e1 = None if eta1 is None else np.broadcast_to(np.asarray(eta1, float), vb.shape).ravel()
    e2 = None if eta2 is None else np.broadcast_to(np.asarray(eta2, float), vb.shape).ravel()
    ok = np.isfinite(vb) & (vb >= 0.0)
    out = np.full(vb.shape, np.nan)
    if not np.any(ok):
        return out
    vb_ok, al, s_ok = vb[ok], alpha[ok], s[ok]
    e1_ok = None if e1 is None else e1[ok]
    e2_ok = None if e2 is None else e2[ok]

    def f(v1):
        value, slope, _, _ = charge_balance(v1, vb_ok, al, e1_ok, e2_ok, s_ok)
        return value, slope

    def both_ends(lo, hi):
        """f at both ends in one evaluation (half the calls)."""
        twice = [None if e is None else np.concatenate([e, e]) for e in (e1_ok, e2_ok)]
        value = charge_balance(np.concatenate([lo, hi]), np.concatenate([vb_ok, vb_ok]), np.concatenate([al, al]),
                         *twice, np.concatenate([s_ok, s_ok]))[0]
        return value[:lo.size], value[lo.size:]

    lo, hi = -1.0 - np.zeros_like(vb_ok), vb_ok + 1.0
    for _ in range(40):                       # widen until the balance changes sign
        f_lo, f_hi = both_ends(lo, hi)
        grow_lo, grow_hi = f_lo > 0, f_hi < 0
        if not (np.any(grow_lo) or np.any(grow_hi)):
            break
        lo = np.where(grow_lo, 2.0 * lo, lo)
        hi = np.where(grow_hi, 2.0 * hi, hi)
    else:                                     # the last widening was not evaluated yet
        f_lo, f_hi = both_ends(lo, hi)
    guess = np.zeros_like(vb_ok)
    if start is not None:
        given = np.broadcast_to(np.asarray(start, dtype=float).ravel(), vb.shape)[ok]
        guess = np.where(np.isfinite(given), given, 0.0)
    out[ok] = safeguarded_newton(f, lo, hi, start=np.clip(guess, lo, hi), end_values=(f_lo, f_hi))
    return out


def _occupancy_terms(a, v, fermi_dirac):
    """(J / (A T^2), the weights of (1 - u) and u in dJ/dv): Boltzmann e^a expm1(v), e^(a+v),
    e^a; Fermi-Dirac ln(1 + sigma(a) expm1(v)), sigma(a + v), sigma(a)."""
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):
        if fermi_dirac:
            # ln(1 + u), u = sigma(a) expm1(v); where u nears -1 (sigma(a) ~ 1, v << 0) the same
            # ln(sigma(a) e^v + sigma(-a)) as a sum of positive terms (no cancellation to -inf)
            u = expit(a) * np.expm1(v)
            j = np.where(u < -0.5, np.log(expit(a) * np.exp(v) + expit(-a)), np.log1p(u))
            return j, expit(a + v), expit(a)
        return np.exp(a) * np.expm1(v), np.exp(a + v), np.exp(a)


def general_current(v, vbi, alpha, log_richardson_t2, phi, *, eta1=None, eta2=None, s=0.0,
                    fermi_dirac=False, with_derivative=False, start=None, split=None):
    """J [A m^-2] (and dJ/dv per reduced volt) on flat arrays: v = qV/kT, vbi = qVbi/kT,
    log_richardson_t2 = ln(A T^2 [A m^-2]), phi the barrier in kT. NaN for v > vbi. ``start``: a
    first guess of the split (bending_split); ``split``: a dict that receives it as "v1"."""
    v1 = bending_split(vbi - v, alpha, eta1, eta2, s, start=start)
    if split is not None:
        split["v1"] = v1
    a = v1 - phi
    scale = np.exp(log_richardson_t2)
    j_red, upper, lower = _occupancy_terms(a, v, fermi_dirac)
    j = scale * j_red
    if not with_derivative:
        return j, None
    _, _, d1, d2 = charge_balance(v1, vbi - v, alpha, eta1, eta2, s)
    with np.errstate(invalid="ignore", divide="ignore"):
        u = d2 / (d1 + d2)                                    # dv1/dvb, in [0, 1]
    return j, scale * (upper * (1.0 - u) + lower * u)


def general_voltage(j_target, vbi, alpha, log_richardson_t2, phi, start=None, **law):
    """Reduced voltage v with J(v) = j_target (J rises strictly with v), NaN above the flat-band
    current J(vbi): safeguarded Newton on asinh(J / J0), bracketed by vbi and a widening lower end;
    ``start`` an optional first guess (NaN or outside the bracket: mid-bracket)."""
    j_target = np.asarray(j_target, dtype=float)
    j_flat, _ = general_current(vbi, vbi, alpha, log_richardson_t2, phi, **law)
    scale = np.where(np.abs(j_flat) > 0, np.abs(j_flat), 1.0)

    last = {}

    def f(v):
        # each Newton step starts the split from the previous step's (same points, nearby v)
        previous = last.get("v1")
        start = previous if previous is not None and previous.size == np.size(v) else None
        j, dj = general_current(v, vbi, alpha, log_richardson_t2, phi, with_derivative=True, start=start,
                                split=last, **law)
        r = j / scale
        return np.arcsinh(r) - np.arcsinh(j_target / scale), dj / scale / np.sqrt(1.0 + r * r)

    ok = np.isfinite(j_target) & (j_target <= j_flat)
    lo = np.where(ok, np.minimum(vbi, 0.0) - 1.0, np.nan)
    ends = None
    for _ in range(60):
        f_lo = f(lo)[0]
        below = ok & (f_lo > 0)
        if not np.any(below):
            # f at the upper end vbi, where J is the flat-band current, from j_flat itself
            with np.errstate(invalid="ignore"):
                ends = (f_lo, np.arcsinh(j_flat / scale) - np.arcsinh(j_target / scale))
            break
        lo = np.where(below, 2.0 * lo - 1.0, lo)
    hi = np.where(ok, vbi, np.nan)
    v = safeguarded_newton(f, lo, hi, end_values=ends, start=start)
    return np.where(ok & (j_target == j_flat), vbi, v)


def general_slope_range(v_lo, v_hi, vbi, alpha, log_richardson_t2, phi, *, eta1=None, eta2=None,
                        s=0.0, fermi_dirac=False):
    """Smallest and largest dJ/dv over [v_lo, v_hi] (per reduced volt), an enclosure: dJ/dv =
    A T^2 [w_up (1 - u) + w_low u] with u = R'/(L' + R'); each side's charge is convex in its
    bending toward accumulation (dg/dx = [F_1/2(eta + x) - F_1/2(eta)]/F_1/2(eta) rises with x), so as
    v rises L' (side 1, v1 falling) falls and R' (side 2, its accumulation bending -v2 rising) rises:
    each is monotone on the interval, so u lies between min R'/(min R' + max L') and
    max R'/(max R' + min L') over the two ends; w_low (occupancy at a = v1 - phi) falls and
    w_up (at a + v, d(a + v)/dv = 1 - u >= 0) rises with v; the bound is linear in u, so its
    extremes lie at the corners."""
    v1 = [bending_split(vbi - v, alpha, eta1, eta2, s) for v in (v_lo, v_hi)]
    slopes = [charge_balance(x, vbi - v, alpha, eta1, eta2, s)[2:] for x, v in zip(v1, (v_lo, v_hi))]
    (l_lo, r_lo), (l_hi, r_hi) = slopes
    with np.errstate(invalid="ignore", divide="ignore"):
        r_min, r_max = np.minimum(r_lo, r_hi), np.maximum(r_lo, r_hi)
        l_min, l_max = np.minimum(l_lo, l_hi), np.maximum(l_lo, l_hi)
        u_min = r_min / (r_min + l_max)
        u_max = r_max / (r_max + l_min)
    _, up_lo, low_lo = _occupancy_terms(v1[0] - phi, v_lo, fermi_dirac)
    _, up_hi, low_hi = _occupancy_terms(v1[1] - phi, v_hi, fermi_dirac)
    scale = np.exp(log_richardson_t2)
    smallest = np.minimum(up_lo * (1 - u_min) + low_hi * u_min, up_lo * (1 - u_max) + low_hi * u_max)
    largest = np.maximum(up_hi * (1 - u_min) + low_lo * u_min, up_hi * (1 - u_max) + low_lo * u_max)
    return scale * smallest * (1.0 - 1e-9), scale * largest * (1.0 + 1e-9)


def interface_law(kind, first, second=None, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                  temperature_K, accumulation_fermi_eV=None, depletion_fermi_eV=None, sheet_charge=0.0,
                  with_derivative=False, start_V=None):
    """The isotype law in SI units (the general form behind laws/thermionic.py's optional
    parameters; see there for each). ``kind``: "current" (first = V [V]: J [A m^-2], and dJ/dV),
    "voltage" (first = J: V, and dV/dJ) or "slopes" (first, second = V_low, V_high: the smallest and
    largest dJ/dV between them). Broadcast shape out. ``start_V``: a first guess of the voltage
    (kind "voltage"; e.g. the Boltzmann law's), NaN where none."""
    given = [np.asarray(first, dtype=float)] + ([] if second is None else [np.asarray(second, float)])
    optional = [np.nan if e is None else e for e in (accumulation_fermi_eV, depletion_fermi_eV)]
    arrays = np.broadcast_arrays(*given, *(np.asarray(a, dtype=float) for a in (
        barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K, *optional, sheet_charge)))
    shape = arrays[0].shape
    flat = [a.ravel() for a in arrays]
    values = flat[:len(given)]
    barrier, vbi, alpha_f, rich, temp, acc, dep, s = flat[len(given):]
    vt = thermal_voltage_V(temp)
    args = (vbi / vt, alpha_f, np.log(rich) + 2.0 * np.log(temp), barrier / vt)
    law = dict(eta1=None if accumulation_fermi_eV is None else acc / vt,
               eta2=None if depletion_fermi_eV is None else dep / vt, s=s,
               fermi_dirac=accumulation_fermi_eV is not None or depletion_fermi_eV is not None)
    with np.errstate(all="ignore"):
        if kind == "current":
            j, dj = general_current(values[0] / vt, *args, with_derivative=with_derivative, **law)
            return (j.reshape(shape), (dj / vt).reshape(shape)) if with_derivative else j.reshape(shape)
        if kind == "voltage":
            guess = None if start_V is None else np.broadcast_to(start_V, shape).ravel() / vt
            v = general_voltage(values[0], *args, start=guess, **law)
            if not with_derivative:
                return (v * vt).reshape(shape)
            _, dj = general_current(v, *args, with_derivative=True, **law)
            return (v * vt).reshape(shape), (vt / dj).reshape(shape)
        lo, hi = general_slope_range(values[0] / vt, values[1] / vt, *args, **law)
        return (lo / vt).reshape(shape), (hi / vt).reshape(shape)
