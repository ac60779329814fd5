"""Thermionic-field emission across an isotype spike with a Fermi-Dirac accumulation side (numpy).

The law of laws/field_emission.py with one change: the barrier voltage splits between the two
sides by Gauss's law with the accumulation side's charge from the Fermi-Dirac first integral of
Poisson's equation (laws/interface_charge.py, laws/fermi_dirac.charge_integral),

    alpha g1(v1; eta1) = e^-v2 - 1 + v2,   v1 + v2 = vbi - v          (reduced, units of kT),

g1(x; eta) = [F_3/2(eta + x) - F_3/2(eta) - x F_1/2(eta)] / F_1/2(eta) (-> e^x - 1 - x for
eta -> -inf), eta1 side 1's bulk Fermi level above its band edge. The depletion side stays the
exact Boltzmann side, so the field at the interface is again w = alpha g1(v1; eta1) (in kT of the
depletion side's parabola) and the tunnelling gain G(w) is that module's. The emission keeps the
Boltzmann supply functions of laws/field_emission.py (J = P e^v1 expm1(v) G(w)): only the charge,
hence the split, is Fermi-Dirac here.

The reference of the compiled form (laws/compiled_field_fermi.py, through laws/compiled_isotype.py),
which the isotype element (circuit/interface_element.py) runs where a thermionic-field interface has
a Fermi-Dirac accumulation side (circuit/isotype.py gives it one within FERMI_DIRAC_WITHIN_KT of its
band, its switch FERMI_DIRAC_FIELD on by default); this numpy form serves the element only with
interface_element.COMPILED_ISOTYPE off. Checks: tests/test_field_emission_fermi.py, against a slow
Poisson/WKB reference; tests/test_compiled_field_fermi.py, the compiled form against this one.

References
----------
.. [1] J. S. Blakemore, Solid-State Electron. 25 (1982) 1067 (F_j normalisation).
.. [2] S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley (2007), ch. 1, 3
   (n = Nc F_1/2; the first integral of Poisson's equation).
.. [3] K. Yang, J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321 (thermionic-field
   emission across an abrupt heterointerface).
"""
from __future__ import annotations

import numpy as np

from siltandem.laws import thermionic as te
from siltandem.laws.fermi_dirac import charge_integral
from siltandem.laws.field_emission import slope_range_from_split, tunnelling_gain
from siltandem.laws.interface_charge import bending_split
from siltandem.numerics.roots import safeguarded_newton

__all__ = ["fermi_field_current_density", "fermi_field_voltage", "fermi_field_slope_range"]


def _arrays(first, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K, field_energy_eV,
            spike_eV, accumulation_fermi_eV, depletion="exact"):
    """Flat reduced arrays: shape, first, vbi, alpha, vt, log P, e00, spike depth, eta1."""
    if depletion != "exact":
        raise te.IsotypeParameterError(
            f"isotype interface: the Fermi-Dirac thermionic-field law has the exact depletion side only (got "
            f"depletion={depletion!r}); use depletion = \"exact\"")
    extra = np.broadcast_arrays(np.asarray(first, float), np.asarray(field_energy_eV, float),
                                np.asarray(spike_eV, float), np.asarray(accumulation_fermi_eV, float))
    shape, first, vbi, alpha, vt, log_p = te.prepare_law_arguments(
        extra[0], barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K)
    e00, spike, eta1 = (np.broadcast_to(a, shape).ravel() / vt for a in extra[1:])
    if np.any(~(e00 > 0)):
        raise te.IsotypeParameterError(
            "isotype interface: 'field_energy_eV' must be finite and > 0; give E00 of the depletion side in eV")
    return shape, first, vbi, alpha, vt, log_p, e00, np.where(np.isnan(spike), np.inf, spike), eta1


def _current(v, vbi, alpha, vt, log_p, e00, spike, eta1, start=None):
    """J [A m^-2], dJ/dV [A m^-2 V^-1] and the split v1 on flat reduced arrays (NaN for v > vbi)."""
    v1 = bending_split(vbi - v, alpha, eta1, None, 0.0, start=start)
    g1, dg1, c1 = charge_integral(v1, eta1)
    w, a_em1 = alpha * g1, alpha * dg1             # field bending and its slope dw/dv1
    v2 = vbi - v - v1
    # at flat band v1 = v2 / sqrt(alpha c1) to first order: the exact form's limit with alpha c1
    j_te, dj_te = te.current_from_split(v, v1, a_em1, vt, log_p, True, (v2, alpha * c1))
    log_g, dlog_g = tunnelling_gain(w, field_energy=e00, spike_depth=spike, with_derivative=True)
    s = -np.expm1(-np.maximum(v2, 0.0))
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        gain = np.exp(log_g)
        j = j_te * gain
        total = a_em1 + s
        rest = np.where(total > 0, s / total, 1.0 / (1.0 + np.sqrt(alpha * c1)))
        # dG/dV = G (dlnG/dw)(dw/dv1)(dv1/dV), dv1/dV = -s/(A + s)/Vt
        djdv = gain * dj_te - j * dlog_g * a_em1 * rest / vt
    return j, djdv, v1


def fermi_field_current_density(voltage_V, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                                temperature_K, field_energy_eV, accumulation_fermi_eV, spike_eV=np.inf,
                                with_derivative=False, depletion="exact"):
    """Thermionic-field current density [A m^-2] with a Fermi-Dirac accumulation side.

    Parameters are those of `siltandem.laws.field_emission.field_emission_current_density`
    (depletion side "exact"), and

    accumulation_fermi_eV : array_like
        The accumulation side's bulk Fermi level above its majority band edge [eV] (> 0 inside
        the band: degenerate), e.g. -laws/carriers.fermi_degeneracy_eV.

    Returns J (and dJ/dV [A m^-2 V^-1]) in the broadcast shape; NaN beyond flat band (V > Vbi).
    """
    shape, volt, vbi, alpha, vt, log_p, e00, spike, eta1 = _arrays(
        voltage_V, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K, field_energy_eV,
        spike_eV, accumulation_fermi_eV, depletion)
    j, djdv, _ = _current(volt / vt, vbi, alpha, vt, log_p, e00, spike, eta1)
    return (j.reshape(shape), djdv.reshape(shape)) if with_derivative else j.reshape(shape)


def bracketed_inverse(current, law, jt, shape, with_derivative):
    """V [V] (and dV/dJ [V m^2 A^-1]) where ``current(v, *law, start=None) -> (J, dJ/dV, v1)`` of a
    thermionic-field law in reduced voltage v (law[0] = Vbi/Vt, law[2] = Vt; J rising strictly with v)
    equals the target ``jt``: safeguarded Newton (Numerical Recipes, 3rd ed. 2007, sec. 9.4, via
    numerics/roots.safeguarded_newton) on asinh(J/J0), J0 the flat-band current, bracketed by Vbi
    above and a widening lower end, each step's split started from the last step's. NaN above the
    flat-band current. Shared by this module's law and laws/field_emission_sheet.py."""
    vbi, vt = law[0], law[2]
    j_flat = current(vbi, *law)[0]
    scale = np.where(np.abs(j_flat) > 0, np.abs(j_flat), 1.0)
    last = {}

    def f(v):
        j, djdv, v1 = current(v, *law, start=last.get("v1"))
        last["v1"] = v1
        r = j / scale
        return np.arcsinh(r) - np.arcsinh(jt / scale), djdv * vt / scale / np.sqrt(1.0 + r * r)

    ok = np.isfinite(jt) & (jt <= j_flat)
    lo = np.where(ok, np.minimum(vbi, 0.0) - 1.0, np.nan)
    with np.errstate(all="ignore"):
        for _ in range(60):
            below = ok & (f(lo)[0] > 0)
            if not np.any(below):
                break
            lo = np.where(below, 2.0 * lo - 1.0, lo)
        last.clear()
        v = safeguarded_newton(f, lo, np.where(ok, vbi, np.nan))
    v = np.where(ok & (jt == j_flat), vbi, v)
    volt = (v * vt).reshape(shape)
    if not with_derivative:
        return volt
    _, djdv, _ = current(v, *law)
    with np.errstate(divide="ignore", invalid="ignore"):
        return volt, (1.0 / djdv).reshape(shape)


def fermi_field_voltage(current_A_m2, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K,
                        field_energy_eV, accumulation_fermi_eV, spike_eV=np.inf, with_derivative=False,
                        depletion="exact"):
    """Voltage [V] across the interface at a given current density (the inverse of
    `fermi_field_current_density`, same keywords): safeguarded Newton (Numerical Recipes, 3rd ed.
    2007, sec. 9.4, via numerics/roots.safeguarded_newton) on asinh(J/J0) in the reduced voltage,
    bracketed by Vbi above and a widening lower end (J rises strictly with V). NaN above the
    flat-band current. Returns V (and dV/dJ [V m^2 A^-1])."""
    shape, jt, vbi, alpha, vt, log_p, e00, spike, eta1 = _arrays(
        current_A_m2, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K, field_energy_eV,
        spike_eV, accumulation_fermi_eV, depletion)
    return bracketed_inverse(_current, (vbi, alpha, vt, log_p, e00, spike, eta1), jt, shape,
                             with_derivative)


def fermi_field_slope_range(v_low_V, v_high_V, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                            temperature_K, field_energy_eV, accumulation_fermi_eV, spike_eV=np.inf,
                            depletion="exact"):
    """Smallest and largest dJ/dV [A m^-2 V^-1] between two voltages (v_low <= v_high, inside the
    domain), for the certificate: dJ/dV = (P/Vt) e^v1 G [1 + (e^v - 1)(q - L h)] with q = A/(A + s),
    h = A s/(A + s), A = alpha dg1/dv1, s = 1 - e^-v2, the form of the exact depletion side in
    laws/field_emission.py, whose bracket (`slope_range_from_split`) needs only that A and w rise
    with v1 and v1, v2 fall as V rises: dg1/dx rises with x for a Fermi-Dirac side too
    (laws/interface_charge.py general_slope_range), and the balance is monotone."""
    lows, highs = np.broadcast_arrays(np.asarray(v_low_V, float), np.asarray(v_high_V, float))
    shape, both, vbi, alpha, vt, log_p, e00, spike, eta1 = _arrays(
        np.stack([lows, highs]), barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K,
        field_energy_eV, spike_eV, accumulation_fermi_eV, depletion)
    v = both / vt
    v1 = bending_split(vbi - v, alpha, eta1, None, 0.0)
    g1, dg1, _ = charge_integral(v1, eta1)
    return slope_range_from_split(v, v1, alpha * dg1, alpha * g1, vbi, vt, log_p, e00, spike, 2.0, shape[1:])


#: (current, inverse, slope range), as circuit/elements.py's isotype element takes them
LAW_FUNCTIONS = (fermi_field_current_density, fermi_field_voltage, fermi_field_slope_range)
