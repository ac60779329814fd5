"""Thermionic-field emission across an isotype spike with a fixed interface sheet charge (numpy).

The law of laws/field_emission.py (exact Boltzmann depletion side) with one change: a fixed charge
sigma at the interface enters Gauss's law between the two sides' space charges,

    eps1 E1 - eps2 E2 = q sigma   ->   q1(v1) = q2(v2) + s,   v1 + v2 = vbi - v   (reduced, kT),

q1 = sign(v1) sqrt(alpha g1(v1)) the accumulation side's charge and q2 = sign(v2) sqrt(e^-v2 - 1 + v2)
the depletion side's, in units of sqrt(2 eps2 kT N2), s = sigma_c / sqrt(2 eps2 kT N2) the reduced
charge (laws/interface_charge.py `reduced_sheet_charge`: > 0 when it attracts the majority
carriers, i.e. a positive charge at an n-N interface). Without the charge the two sides' fields
meet (q1 = q2); with it the depletion side's interface field is no longer the accumulation side's:
it follows from the depletion side's own first integral of Poisson's equation,

    eps2 F0^2 / (2 q N2) = (kT/q) w,   w = q2^2 = e^-v2 - 1 + v2   (v2 > 0),

and that w sets the parabola the carriers tunnel through, hence the gain G(w) of
laws/field_emission.py (the WKB integral over the parabola, E00 of Padovani-Stratton). A charge
of the sign that attracts the majority carriers (s > 0) moves the barrier voltage from the
depletion side to the accumulation side: v1 grows (the top, phi - v1 above side 1's Fermi level,
falls) and w shrinks (a wider, lower parabola); one of the other sign does the opposite. Where
the charge turns the depletion side into an accumulation side too (v2 <= 0) there is no
depletion-side barrier: w = 0 and G = 1. Where it depletes side 1 (v1 < 0) the top stays at the
interface; carriers of side 1 below its own band edge there would also have to tunnel through
side 1's barrier and are not counted (the gain's energies end a spike depth below the top, as in
laws/field_emission.py), so the gain is then a lower bound.

Current and its slope, with Boltzmann supply on both sides (K. Yang, J. R. East, G. I. Haddad
1993, as in laws/field_emission.py):

    J = P e^v1 (e^v - 1) G(w),
    dJ/dV = (P e^v1 G / Vt) [u + (1 - u) L s2 + (1 - u)(1 - L s2) e^v],

u = dv1/dvb = R'/(L' + R') with L' = dq1/dv1, R' = dq2/dv2 (laws/interface_charge.py `charge_balance`),
s2 = dw/dv2 = 1 - e^-v2, L = dlnG/dw; a sum of non-negative terms, so J rises strictly with V
(from 1 + (e^v - 1)(1 - u)(1 - L s2), dw/dV = -s2 (1 - u)). With s = 0 this is the law of
laws/field_emission.py with the exact depletion side (there (1 - u) = A/(A + s2)); with E00 -> 0
(G -> 1) it is the thermionic law with a sheet charge of laws/interface_charge.py. An optional
Fermi-Dirac accumulation side (``accumulation_fermi_eV``) takes its charge from the Fermi-Dirac
first integral, as laws/field_emission_fermi.py does; emission and tunnelling stay Boltzmann.

Not compiled: circuit/interface_element.py runs this numpy law for a thermionic-field interface
with a sheet charge (its ``compiled_rows`` returns None for it). Checks:
tests/test_field_emission_sheet.py, against a slow Poisson/WKB reference.

References
----------
.. [1] S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley (2007), ch. 2-3
   (Gauss's law at an interface with a fixed charge; the first integral of Poisson's equation).
.. [2] F. A. Padovani, R. Stratton, Solid-State Electron. 9 (1966) 695 (E00).
.. [3] C. R. Crowell, V. L. Rideout, Solid-State Electron. 12 (1969) 89 (WKB through the
   parabolic depletion barrier).
.. [4] K. Yang, J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321 (thermionic-field
   emission across an abrupt heterointerface).
"""
from __future__ import annotations

import numpy as np

from siltandem.laws import thermionic as te
from siltandem.laws.fermi_dirac import charge_integral
from siltandem.laws.field_emission import gain_slope_kernel, tunnelling_gain
from siltandem.laws.interface_charge import charge_balance, bending_split
from siltandem.laws.field_emission_fermi import bracketed_inverse

__all__ = ["sheet_field_current_density", "sheet_field_voltage", "sheet_field_slope_range"]


def _arrays(first, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K, field_energy_eV,
            spike_eV, sheet_charge, accumulation_fermi_eV, depletion):
    """Flat reduced arrays: shape, first, vbi, alpha, vt, log P, e00, spike depth, s, eta1 (None:
    Boltzmann)."""
    if depletion != "exact":
        raise te.IsotypeParameterError(
            f"isotype interface: thermionic-field emission with a sheet charge has the exact depletion side "
            f"only (got depletion={depletion!r}); use depletion = \"exact\"")
    fermi = np.nan if accumulation_fermi_eV is None else accumulation_fermi_eV
    extra = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (
        first, field_energy_eV, spike_eV, sheet_charge, fermi)))
    shape, first, vbi, alpha, vt, log_p = te.prepare_law_arguments(
        extra[0], barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K)
    e00, spike, eta1 = (np.broadcast_to(a, shape).ravel() / vt for a in (extra[1], extra[2], extra[4]))
    s = np.broadcast_to(extra[3], shape).ravel()
    if np.any(~(e00 > 0)) or np.any(~np.isfinite(e00)):
        raise te.IsotypeParameterError(
            "isotype interface: 'field_energy_eV' must be finite and > 0; give E00 of the depletion side in eV")
    if not np.all(np.isfinite(s)):
        raise te.IsotypeParameterError(
            "isotype interface: 'sheet_charge' must be finite; give the reduced interface charge "
            "(laws/interface_charge.py reduced_sheet_charge)")
    return (shape, first, vbi, alpha, vt, log_p, e00, np.where(np.isnan(spike), np.inf, spike), s,
            None if accumulation_fermi_eV is None else eta1)


def _parts(v, vbi, alpha, log_p, e00, spike, s, eta1, start=None):
    """The split and everything the current and its slope need, on flat reduced arrays: v1, u =
    dv1/dvb, s2 = dw/dv2, w, log G, L = dlnG/dw, log(P e^v1 G), and the sides' charge slopes
    L' = dq1/dv1, R' = dq2/dv2."""
    vb = vbi - v
    v1 = bending_split(vb, alpha, eta1, None, s, start=start)
    _, _, d1, d2 = charge_balance(v1, vb, alpha, eta1, None, s)
    v2 = np.maximum(vb - v1, 0.0)                 # no depletion-side barrier where v2 <= 0
    w = charge_integral(-v2)[0]                   # e^-v2 - 1 + v2 without cancellation
    log_g, dlog_g = tunnelling_gain(w, field_energy=e00, spike_depth=spike, with_derivative=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        u = d2 / (d1 + d2)
    return v1, u, -np.expm1(-v2), w, log_g, dlog_g, log_p + v1 + log_g, d1, d2


def _current(v, vbi, alpha, vt, log_p, e00, spike, s, eta1, start=None):
    """J [A m^-2], dJ/dV [A m^-2 V^-1] and the split v1 (module docstring); NaN for v > vbi."""
    v1, u, s2, _, _, dlog_g, log_scale, _, _ = _parts(v, vbi, alpha, log_p, e00, spike, s, eta1, start)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        scale = np.exp(log_scale)
        j = scale * np.expm1(v)
        keep = (1.0 - u) * (1.0 - dlog_g * s2)
        djdv = scale / vt * (u + (1.0 - u) * dlog_g * s2 + keep * np.exp(v))
    return j, djdv, v1


def sheet_field_current_density(voltage_V, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                                temperature_K, field_energy_eV, sheet_charge, spike_eV=np.inf,
                                accumulation_fermi_eV=None, with_derivative=False, depletion="exact"):
    """Thermionic-field current density [A m^-2] across an isotype interface with a sheet charge.

    Parameters are those of `siltandem.laws.field_emission.field_emission_current_density`
    (depletion side "exact"), and

    sheet_charge : array_like
        The reduced interface charge s [-] (laws/interface_charge.py `reduced_sheet_charge`; > 0
        attracts the majority carriers); 0 gives laws/field_emission.py's law to rounding.
    accumulation_fermi_eV : array_like, optional
        The accumulation side's bulk Fermi level above its band edge [eV] (Fermi-Dirac charge on
        that side, laws/field_emission_fermi.py); None: Boltzmann.

    Returns J (and dJ/dV [A m^-2 V^-1]) in the broadcast shape; NaN beyond flat band (V > Vbi).
    """
    shape, volt, vbi, alpha, vt, log_p, e00, spike, s, eta1 = _arrays(
        voltage_V, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K, field_energy_eV,
        spike_eV, sheet_charge, accumulation_fermi_eV, depletion)
    j, djdv, _ = _current(volt / vt, vbi, alpha, vt, log_p, e00, spike, s, eta1)
    return (j.reshape(shape), djdv.reshape(shape)) if with_derivative else j.reshape(shape)


def sheet_field_voltage(current_A_m2, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K,
                        field_energy_eV, sheet_charge, spike_eV=np.inf, accumulation_fermi_eV=None,
                        with_derivative=False, depletion="exact"):
    """Voltage [V] at a given current density (the inverse of `sheet_field_current_density`, same
    keywords): safeguarded Newton (W. H. Press et al., Numerical Recipes, 3rd ed. 2007, sec. 9.4,
    numerics/roots.safeguarded_newton) on asinh(J/J0) in the reduced voltage, bracketed by Vbi
    above and a widening lower end (J rises strictly with V), each step's split started from the
    last step's. NaN above the flat-band current. Returns V (and dV/dJ [V m^2 A^-1])."""
    shape, jt, vbi, alpha, vt, log_p, e00, spike, s, eta1 = _arrays(
        current_A_m2, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K, field_energy_eV,
        spike_eV, sheet_charge, accumulation_fermi_eV, depletion)
    return bracketed_inverse(_current, (vbi, alpha, vt, log_p, e00, spike, s, eta1), jt, shape,
                             with_derivative)


def sheet_field_slope_range(v_low_V, v_high_V, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                            temperature_K, field_energy_eV, sheet_charge, spike_eV=np.inf,
                            accumulation_fermi_eV=None, depletion="exact"):
    """Smallest and largest dJ/dV [A m^-2 V^-1] between two voltages (v_low <= v_high, inside the
    domain), for the certificate (solve/certificate.py): an enclosure, by interval arithmetic
    (R. E. Moore, R. B. Kearfott, M. J. Cloud, Introduction to Interval Analysis, SIAM 2009, ch. 2),
    of dJ/dV = (P e^v1 G / Vt) [1 + (e^v - 1) X], X = (1 - u)(1 - L s2), from monotone pieces:

    * v1 and v2 fall as V rises (dv1/dV = -u/Vt, dv2/dV = -(1 - u)/Vt, u in [0, 1]), so
      P e^v1 G (G rises with w, w with v2) and s2 = 1 - e^-v2 lie between their ends' values;
    * each side's charge is convex in its bending toward accumulation (laws/interface_charge.py
      `general_slope_range`), so L' falls and R' rises with V and u = R'/(L' + R') lies in
      [min R'/(min R' + max L'), max R'/(max R' + min L')] over the two ends;
    * L = dlnG/dw in the range of laws/field_emission.py `gain_slope_range` over the cell's w
      (proven for the exact integral; [0, 1] where it has none, e.g. a cell that reaches w = 0);
    * 1 - u >= 0 and 1 - L s2 >= 0 (L <= 1, s2 < 1), so X lies in
      [(1 - u_max)(1 - L_max s2_max), (1 - u_min)(1 - L_min s2_min)], and the bracket, bilinear in
      (e^v - 1, X), takes its extremes at the corners.

    Padded by 1e-12 relative. The range shrinks to the point slope with the cell (linearly: the
    gain-slope bound is M dw). What is proven and what is sampled: the interval product is an
    enclosure given the monotone pieces above (each side's charge slope rising with its bending:
    proven for Boltzmann sides: with g = e^x - 1 - x, q = sign(x) sqrt(g) has
    q'' = sign(x) (2 g g'' - g'^2) / (4 g^1.5) and 2 g g'' - g'^2 = e^2x - 1 - 2x e^x = 2 e^x (sinh x - x)
    has the sign of x, so q'' >= 0; sampled for Fermi-Dirac ones
    over -60...40 kT at eta -5...20 when this law was written) and the range of L, which
    `gain_slope_range` proves for the exact integral; the computed L comes from a fixed
    quadrature, so the enclosure of the computed slopes is checked by dense sampling
    (tests/test_field_emission_sheet.py: 201-801 points per cell)."""
    lows, highs = np.broadcast_arrays(np.asarray(v_low_V, float), np.asarray(v_high_V, float))
    shape, both, vbi, alpha, vt, log_p, e00, spike, s, eta1 = _arrays(
        np.stack([lows, highs]), barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K,
        field_energy_eV, spike_eV, sheet_charge, accumulation_fermi_eV, depletion)
    v = both / vt
    _, u, s2, w, log_g, dlog_g, log_scale, d1, d2 = _parts(v, vbi, alpha, log_p, e00, spike, s, eta1)
    half = v.size // 2
    lo, hi = slice(None, half), slice(half, None)            # low V (larger v1, v2, w), high V ends
    l_min, l_max = np.empty(half), np.empty(half)
    gain_slope_kernel(*(np.ascontiguousarray(a, dtype=float) for a in (
        w[hi], w[lo], e00[lo], spike[lo], log_g[lo], dlog_g[hi], dlog_g[lo])), l_min, l_max)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        r_min, r_max = np.minimum(d2[lo], d2[hi]), np.maximum(d2[lo], d2[hi])
        c_min, c_max = np.minimum(d1[lo], d1[hi]), np.maximum(d1[lo], d1[hi])
        # u = R'/(L' + R') at the ends lies inside these; the min/max with it only guards rounding
        u_min = np.minimum(r_min / (r_min + c_max), np.minimum(u[lo], u[hi]))
        u_max = np.maximum(r_max / (r_max + c_min), np.maximum(u[lo], u[hi]))
        x_min = (1.0 - u_max) * (1.0 - l_max * s2[lo])
        x_max = (1.0 - u_min) * (1.0 - l_min * s2[hi])
        em = np.expm1(v)
        corners = np.stack([em[lo] * x_min, em[lo] * x_max, em[hi] * x_min, em[hi] * x_max])
        bracket_min = 1.0 + corners.min(axis=0)
        bracket_max = 1.0 + corners.max(axis=0)
        scale = np.exp(log_scale) / vt                       # larger at the low-V end
        smallest = np.where(bracket_min >= 0, scale[hi], scale[lo]) * bracket_min
        largest = np.where(bracket_max >= 0, scale[lo], scale[hi]) * bracket_max
    out = shape[1:]
    return ((smallest - 1e-12 * np.abs(smallest)).reshape(out),
            (largest + 1e-12 * np.abs(largest)).reshape(out))


#: (current, inverse, slope range), as circuit/interface_element.py's isotype element takes them
LAW_FUNCTIONS = (sheet_field_current_density, sheet_field_voltage, sheet_field_slope_range)
