"""Tunnel-junction (Esaki diode) element law and its estimate from layer properties.

Sign convention: ``V > 0`` is forward bias of the tunnel diode (its p++ side positive), ``J > 0`` the
current flowing from the p++ to the n++ layer. In a monolithic multi-junction cell lit from the front the
junction's operating current is in this forward direction, so the peak current is what limits the stack.

Contents
--------
tunnel_current_density       the three-term empirical law J(V) with analytic dJ/dV
tunnel_term_for_exact_peak   prefactor and voltage scale of the tunnelling term that put the combined
                             curve's maximum exactly at (peak_V, peak_A_m2)
attained_peak_and_valley     where the combined curve really has its maximum and minimum (root finding)
validate_tunnel_parameters   clear ValueError messages for impossible parameter sets
estimate_peak_current        band-to-band tunnelling peak current and peak voltage from the two layers

All functions are pure and vectorized: array arguments broadcast, SI units (eV for band energies).
"""
from __future__ import annotations

import math
import warnings
from typing import NamedTuple

import numpy as np
from numpy.polynomial.legendre import leggauss

from siltandem.laws import compiled as kernels
from siltandem.laws.compiled import EXP_LIMIT
from siltandem.laws.carriers import fermi_degeneracy_eV
from siltandem.constants import (
    BOLTZMANN_EV_K,
    ELECTRON_MASS_KG,
    ELEMENTARY_CHARGE_C,
    PLANCK_J_S,
    VACUUM_PERMITTIVITY_F_M,
    thermal_voltage_V,
)

__all__ = [
    "TunnelParameterError",
    "TunnelShape",
    "Extrema",
    "PeakCurrentEstimate",
    "tunnel_current_density",
    "tunnel_term_for_exact_peak",
    "attained_peak_and_valley",
    "extrema_of_prepared",
    "validate_tunnel_parameters",
    "default_excess_slope_per_V",
    "estimate_peak_current",
]

_HBAR_J_S = PLANCK_J_S / (2.0 * np.pi)



class TunnelParameterError(ValueError):
    """A tunnel-junction parameter set that the law cannot represent; the message names the fix."""


class TunnelShape(NamedTuple):
    """Prefactor [A/m^2] and voltage scale [V] of the tunnelling term ``A (V/V1) exp(1 - V/V1)``."""

    prefactor_A_m2: np.ndarray
    voltage_scale_V: np.ndarray


class Extrema(NamedTuple):
    """Current maximum (peak) and following minimum (valley) of the combined curve; NaN where absent."""

    peak_V: np.ndarray
    peak_A_m2: np.ndarray
    valley_V: np.ndarray
    valley_A_m2: np.ndarray


class PeakCurrentEstimate(NamedTuple):
    """Result of :func:`estimate_peak_current` (all arrays of the broadcast input shape)."""

    peak_A_m2: np.ndarray          # estimated peak tunnelling current density [A/m^2]
    peak_V: np.ndarray             # estimated peak voltage [V]
    field_V_m: np.ndarray          # junction field used in the tunnelling exponent [V/m]
    tunnelling_gap_eV: np.ndarray  # effective gap the carriers tunnel through [eV]
    n_degeneracy_eV: np.ndarray    # Fermi level above the conduction-band edge, n++ layer [eV]
    p_degeneracy_eV: np.ndarray    # Fermi level below the valence-band edge, p++ layer [eV]
    exponent: np.ndarray           # tunnelling exponent lambda, T = exp(-lambda) at zero transverse energy


# --------------------------------------------------------------------------------------------------
# exponentials continued linearly beyond EXP_LIMIT: value, first and second derivative
# --------------------------------------------------------------------------------------------------
def _limited_exp(x):
    xc = np.minimum(x, EXP_LIMIT)
    e = np.exp(xc)
    over = x > EXP_LIMIT
    value = np.where(over, e * (1.0 + (x - EXP_LIMIT)), e)
    second = np.where(over, 0.0, e)
    return value, e, second


def _limited_expm1(x):
    value, first, second = _limited_exp(x)
    return np.where(x > EXP_LIMIT, value - 1.0, np.expm1(np.minimum(x, EXP_LIMIT))), first, second


def _as_float(*arrays):
    return [np.asarray(a, dtype=float) for a in arrays]


# --------------------------------------------------------------------------------------------------
# validation
# --------------------------------------------------------------------------------------------------
def _first_bad(mask, values):
    mask = np.asarray(mask)
    if not mask.any():
        return None
    idx = np.unravel_index(np.argmax(mask), mask.shape)
    vals = [np.broadcast_to(np.asarray(v, dtype=float), mask.shape)[idx] for v in values]
    where = "" if mask.ndim == 0 else f" (at index {tuple(int(i) for i in idx)}, {int(mask.sum())} "\
        f"of {mask.size} entries)"
    return where, vals


def _single_floats(*values):
    """The values as floats (None stays None) when each holds one number, else None."""
    out = []
    for v in values:
        if v is None:
            out.append(None)
            continue
        if np.size(v) != 1:
            return None
        out.append(float(np.ravel(v)[0]))
    return out


def validate_tunnel_parameters(*, peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V=None,
                               saturation_A_m2=None, ideality=None, temperature_K=None,
                               where="tunnel junction"):
    """Raise :class:`TunnelParameterError` (a ``ValueError``) for parameters the law cannot represent.

    Parameters
    ----------
    peak_A_m2, peak_V, valley_A_m2, valley_V : array_like
        Peak and valley of the tunnel characteristic [A/m^2, V].
    excess_slope_per_V, saturation_A_m2, ideality, temperature_K : array_like or None
        Checked for positivity (saturation current may be zero) when given.
    where : str
        Name of the element or layer pair, put at the start of every message.

    Raises
    ------
    TunnelParameterError
        Non-finite or non-positive values, peak voltage not below valley voltage, valley current not
        below peak current. The message names the parameter, the value and the fix.
    """
    # one junction (every value a single number), the common case, in plain floats: every
    # value finite and positive (the saturation current may be zero), the peak before the
    # valley and above it; otherwise, and for arrays, the checks below say what is wrong
    single = _single_floats(peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V,
                            ideality, temperature_K, saturation_A_m2)
    if single is not None:
        jp, vp, jv, vv, *rest, j0 = single
        positive = [jp, vp, jv, vv] + [x for x in rest if x is not None]
        if (all(math.isfinite(x) and x > 0 for x in positive)
                and (j0 is None or (math.isfinite(j0) and j0 >= 0)) and vp < vv and jv < jp):
            return
    checks = [("peak_A_m2", peak_A_m2, "A/m^2", False), ("peak_V", peak_V, "V", False),
              ("valley_A_m2", valley_A_m2, "A/m^2", False), ("valley_V", valley_V, "V", False),
              ("excess_slope_per_V", excess_slope_per_V, "1/V", False),
              ("saturation_A_m2", saturation_A_m2, "A/m^2", True), ("ideality", ideality, "", False),
              ("temperature_K", temperature_K, "K", False)]
    for name, value, unit, zero_ok in checks:
        if value is None:
            continue
        v = np.asarray(value, dtype=float)
        bad = ~np.isfinite(v) | ((v < 0) if zero_ok else (v <= 0))
        found = _first_bad(bad, [v])
        if found:
            at, (val,) = found
            need = "zero or positive" if zero_ok else "positive"
            raise TunnelParameterError(
                f"{where}: {name} = {val:g} {unit}{at} must be finite and {need}; "
                f"give a {need} {name}.")
    found = _first_bad(np.asarray(peak_V, dtype=float) >= np.asarray(valley_V, dtype=float),
                       [peak_V, valley_V])
    if found:
        at, (vp, vv) = found
        raise TunnelParameterError(
            f"{where}: peak_V = {vp:g} V is not below valley_V = {vv:g} V{at}; the current peak must "
            f"come before the valley: lower peak_V or raise valley_V.")
    found = _first_bad(np.asarray(valley_A_m2, dtype=float) >= np.asarray(peak_A_m2, dtype=float),
                       [valley_A_m2, peak_A_m2])
    if found:
        at, (jv, jp) = found
        raise TunnelParameterError(
            f"{where}: valley_A_m2 = {jv:g} A/m^2 is not below peak_A_m2 = {jp:g} A/m^2{at}; a tunnel "
            f"junction has negative differential resistance only if the valley current is below the peak "
            f"current: lower valley_A_m2 or raise peak_A_m2.")


def default_excess_slope_per_V(*, peak_A_m2, peak_V, valley_A_m2, valley_V):
    """Default excess-current exponent C2 [1/V]: its slope at the valley cancels the tunnelling decline.

    ``C2 = -dJ1/dV(Vv) / Jv = (Jp/Vp)(Vv/Vp - 1) exp(1 - Vv/Vp) / Jv``, with J1 the nominal tunnelling
    term. The valley of the combined curve then sits close to ``valley_V``. Our own choice (common practice,
    no source).
    """
    jp, vp, jv, vv = _as_float(peak_A_m2, peak_V, valley_A_m2, valley_V)
    x = vv / vp
    return (jp / vp) * (x - 1.0) * np.exp(1.0 - x) / jv


# --------------------------------------------------------------------------------------------------
# the three terms with their first and second derivatives
# --------------------------------------------------------------------------------------------------
def _tunnel_term(v, a, v1):
    x = v / v1
    e, e1, e2 = _limited_exp(1.0 - x)
    j = a * x * e
    dj = (a / v1) * (e - x * e1)
    d2j = (a / v1**2) * (-2.0 * e1 + x * e2)
    return j, dj, d2j


def _excess_term(v, jv, vv, c2):
    # Jx = Jv sinh(C2 V) / sinh(C2 Vv), written with exponentials that cannot overflow
    k = jv / -np.expm1(-2.0 * c2 * vv)
    ea, ea1, ea2 = _limited_exp(c2 * (v - vv))
    eb, eb1, eb2 = _limited_exp(-c2 * (v + vv))
    return k * (ea - eb), k * c2 * (ea1 + eb1), k * c2**2 * (ea2 - eb2)


def _thermal_term(v, j0, ideality, temperature_K):
    nvt = ideality * thermal_voltage_V(temperature_K)
    e, e1, e2 = _limited_expm1(v / nvt)
    return j0 * e, j0 * e1 / nvt, j0 * e2 / nvt**2


def _prepare(peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V, saturation_A_m2, ideality,
             temperature_K, exact_peak):
    jp, vp, jv, vv, j0, n, t = _as_float(peak_A_m2, peak_V, valley_A_m2, valley_V, saturation_A_m2,
                                         ideality, temperature_K)
    if excess_slope_per_V is None:
        validate_tunnel_parameters(peak_A_m2=jp, peak_V=vp, valley_A_m2=jv, valley_V=vv,
                                   saturation_A_m2=j0, ideality=n, temperature_K=t)
        c2 = default_excess_slope_per_V(peak_A_m2=jp, peak_V=vp, valley_A_m2=jv, valley_V=vv)
    else:
        c2 = np.asarray(excess_slope_per_V, dtype=float)
        validate_tunnel_parameters(peak_A_m2=jp, peak_V=vp, valley_A_m2=jv, valley_V=vv,
                                   excess_slope_per_V=c2, saturation_A_m2=j0, ideality=n,
                                   temperature_K=t)
    if exact_peak:
        a, v1 = _exact_peak_shape(jp, vp, jv, vv, c2, j0, n, t)
    else:
        a, v1 = jp, vp
    return a, v1, jv, vv, c2, j0, n, t


def _total(v, a, v1, jv, vv, c2, j0, n, t):
    x = v / v1
    z1, za, zb = 1.0 - x, c2 * (v - vv), -c2 * (v + vv)
    nvt = n * thermal_voltage_V(t)
    z3 = v / nvt
    # common case, every exponent below the limit: the same terms without the tangent continuation
    # (NaN fails the comparisons and takes the general route)
    if z1.max() <= EXP_LIMIT and za.max() <= EXP_LIMIT and zb.max() <= EXP_LIMIT \
            and z3.max() <= EXP_LIMIT:
        e1, ea, eb, e3 = np.exp(z1), np.exp(za), np.exp(zb), np.exp(z3)
        k = jv / -np.expm1(-2.0 * c2 * vv)
        j = a * x * e1 + k * (ea - eb) + j0 * np.expm1(z3)
        dj = (a / v1) * (e1 - x * e1) + k * c2 * (ea + eb) + j0 * e3 / nvt
        d2j = (a / v1**2) * (-2.0 * e1 + x * e1) + k * c2**2 * (ea - eb) + j0 * e3 / nvt**2
        return j, dj, d2j
    parts = (_tunnel_term(v, a, v1), _excess_term(v, jv, vv, c2), _thermal_term(v, j0, n, t))
    return tuple(sum(p[i] for p in parts) for i in range(3))


def tunnel_current_density(voltage_V, *, peak_A_m2, peak_V, valley_A_m2, valley_V,
                           excess_slope_per_V=None, saturation_A_m2, ideality=1.0, temperature_K,
                           exact_peak=False, return_slope=False):
    """Current density of a tunnel junction (Esaki diode), three-term empirical form.

    Parameters
    ----------
    voltage_V : array_like
        Voltage across the junction [V], positive in forward bias (p++ side positive).
    peak_A_m2, peak_V : array_like
        Peak current density [A/m^2] and peak voltage [V] of the band-to-band tunnelling term.
    valley_A_m2, valley_V : array_like
        Excess (valley) current density [A/m^2] at the valley voltage [V].
    excess_slope_per_V : array_like or None
        Exponent C2 of the excess current [1/V]; ``None`` takes :func:`default_excess_slope_per_V`.
    saturation_A_m2, ideality, temperature_K : array_like
        Saturation current density [A/m^2], ideality factor and temperature [K] of the thermal
        (diffusion) diode current that takes over beyond the valley.
    exact_peak : bool
        If True, the tunnelling term's prefactor and voltage scale are solved
        (:func:`tunnel_term_for_exact_peak`) so that the COMBINED curve has its maximum exactly at
        ``(peak_V, peak_A_m2)``; if False the three terms are added as written and the attained peak
        lies slightly higher and to the right (:func:`attained_peak_and_valley`).
    return_slope : bool
        Also return dJ/dV [A m^-2 V^-1], analytic.

    Returns
    -------
    ndarray, or (ndarray, ndarray) with ``return_slope``
        J [A/m^2] (and dJ/dV) of the broadcast shape of all arguments.

    Raises
    ------
    TunnelParameterError
        See :func:`validate_tunnel_parameters`; also when ``exact_peak`` cannot put a maximum at peak_V.

    Notes
    -----
    .. math::

        J = A \\frac{V}{V_1} e^{1 - V/V_1}
            + J_v \\frac{\\sinh(C_2 V)}{\\sinh(C_2 V_v)}
            + J_0 \\left(e^{V/\\eta V_T} - 1\\right),

    with ``A = Jp, V1 = Vp`` unless ``exact_peak``. Alone, the first term has its maximum Jp at Vp,
    J1(2Vp) = (2/e) Jp and zero-bias resistance-area Vp/(e Jp). The textbook excess term is
    ``Jv exp[C2 (V - Vv)]``; here it is made odd in V (sinh ratio), so that it vanishes at zero bias,
    equals Jv at Vv exactly and differs from the textbook form by the factor (1 - exp(-2 C2 V)) /
    (1 - exp(-2 C2 Vv)) (negligible when C2 Vv >> 1). Reverse bias (V < 0): the tunnelling term is the
    analytic continuation of the same expression, and the excess term its odd extension; both grow
    monotonically in magnitude (the Zener branch: a reverse-biased tunnel junction is nearly a short),
    which overstates the reverse current beyond a few Vp compared with band-to-band theory — add a series
    resistor where reverse-bias values matter. Every exponential is continued along its tangent beyond
    an exponent of 300 so that the law stays finite, monotone and C1 at any voltage.

    References
    ----------
    L. Esaki, Phys. Rev. 109 (1958) 603 (the tunnel diode).
    S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley 2007, ch. 8 (tunnel diode:
    empirical current form I = (V/R0) exp[-(V/V0)^m], excess current exponential in V, thermal diode
    current) — from memory.
    """
    a, v1, jv, vv, c2, j0, n, t = _prepare(peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V,
                                           saturation_A_m2, ideality, temperature_K, exact_peak)
    v = np.asarray(voltage_V, dtype=float)
    j, dj, _ = _total(v, a, v1, jv, vv, c2, j0, n, t)   # every exponential is limited: no overflow
    return (j, dj) if return_slope else j


def prepare_tunnel_law(*, peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V=None,
                       saturation_A_m2, ideality=1.0, temperature_K, exact_peak=False):
    """Validate once and return the law's internal parameters, for fast repeated evaluation.

    The tuple goes to :func:`evaluate_prepared`; a solver that evaluates one junction thousands of
    times avoids re-validating and re-solving the exact-peak shape on every call.
    """
    return _prepare(peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V, saturation_A_m2,
                    ideality, temperature_K, exact_peak)


def evaluate_prepared(voltage_V, prepared):
    """J [A/m^2], dJ/dV and d2J/dV2 of the law at ``voltage_V`` from :func:`prepare_tunnel_law`."""
    return _total(np.asarray(voltage_V, dtype=float), *prepared)


def _exact_peak_shape(jp, vp, jv, vv, c2, j0, n, t):
    # the common case compiled (siltandem.kernels.exact_peak_shape); where it finds no peak,
    # the lines below say why
    shape = np.broadcast_shapes(*(np.shape(x) for x in (jp, vp, jv, vv, c2, j0, n, t)))
    single = _single_floats(jp, vp, jv, vv, c2, j0, n, t)
    if single is not None:
        *first, n1, t1 = single
        rows = np.array(first + [n1 * float(thermal_voltage_V(t1))])[:, None]
    else:
        columns = (jp, vp, jv, vv, c2, j0, n * thermal_voltage_V(t))
        rows = np.empty((len(columns), int(np.prod(shape, dtype=int))))
        for k, column in enumerate(columns):
            rows[k] = np.ravel(column)             # size 1 or the full size: broadcasts
    a, v1, ok = kernels.exact_peak_shape(*rows)
    if ok.all():
        return a.reshape(shape), v1.reshape(shape)
    rest, rest1, rest2 = (x + y for x, y in zip(_excess_term(vp, jv, vv, c2), _thermal_term(vp, j0, n, t)))
    margin = jp - rest
    found = _first_bad(~(margin > 0), [rest, jp])
    if found:
        at, (r, p) = found
        raise TunnelParameterError(
            f"tunnel junction: the excess and thermal currents alone reach {r:g} A/m^2 at peak_V, not "
            f"below peak_A_m2 = {p:g} A/m^2{at}; no peak can sit there: lower valley_A_m2 or "
            f"saturation_A_m2, or raise valley_V.")
    u = 1.0 + rest1 * vp / margin              # u = Vp / V1 >= 1
    v1 = vp / u
    a = margin / (u * np.exp(1.0 - u))
    curvature = (a / v1**2) * np.exp(1.0 - u) * (u - 2.0) + rest2
    found = _first_bad(~(curvature < 0), [u])
    if found:
        at, (uu,) = found
        raise TunnelParameterError(
            f"tunnel junction: the excess and thermal currents rise too steeply at peak_V for the curve to "
            f"have a maximum there (required peak_V / tunnelling voltage scale = {uu:.3g}, must stay "
            f"below about 2){at}: lower excess_slope_per_V, valley_A_m2 or saturation_A_m2.")
    return a, v1


def tunnel_term_for_exact_peak(*, peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V=None,
                               saturation_A_m2, ideality=1.0, temperature_K):
    """Tunnelling-term prefactor and voltage scale that make the combined curve peak at (Vp, Jp).

    Returns
    -------
    TunnelShape
        ``prefactor_A_m2`` A and ``voltage_scale_V`` V1 of the term ``A (V/V1) exp(1 - V/V1)``.

    Notes
    -----
    With R(V) the excess plus thermal current, the two conditions J(Vp) = Jp and dJ/dV(Vp) = 0 have the
    closed-form solution

    .. math:: u = V_p/V_1 = 1 + \\frac{R'(V_p)\\,V_p}{J_p - R(V_p)}, \\qquad
              A = \\frac{J_p - R(V_p)}{u\\,e^{1-u}},

    valid when ``Jp > R(Vp)`` and the curvature at Vp stays negative (checked; otherwise
    :class:`TunnelParameterError`). When ``excess_slope_per_V`` is None the default C2 is taken from the
    nominal (Jp, Vp) term, before this correction.
    """
    a, v1, *_ = _prepare(peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V, saturation_A_m2,
                         ideality, temperature_K, True)
    return TunnelShape(np.asarray(a), np.asarray(v1))


def attained_peak_and_valley(*, peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V=None,
                             saturation_A_m2, ideality=1.0, temperature_K, exact_peak=False):
    """Peak and valley actually attained by the combined three-term curve (forward bias).

    Parameters are those of :func:`tunnel_current_density`.

    Returns
    -------
    Extrema
        ``peak_V, peak_A_m2, valley_V, valley_A_m2`` of the broadcast parameter shape. NaN (with one
        RuntimeWarning giving the count) where the curve has no negative differential resistance.

    Notes
    -----
    For V >= 0 the tunnelling term's second derivative increases up to 3 V1 and the excess and thermal
    terms are convex with increasing second derivatives, so dJ/dV falls to a single minimum (the steepest
    point of the negative-resistance region, root of d2J/dV2 in (0, 2 V1)) and rises after it. The curve
    has negative differential resistance if dJ/dV < 0 there; the peak is then the unique root of dJ/dV
    below the steepest point and the valley the unique root above it. Both are found in the cells of a
    sampled dJ/dV where it changes sign, polished by Newton steps with the analytic d2J/dV2 kept inside the
    cell (:func:`_extrema_by_table`); where the samples miss the negative-resistance region, by
    ``scipy.optimize.elementwise.find_root`` (Chandrupatla's bracketing method) from the steepest point,
    with the valley bracket from ``scipy.optimize.elementwise.bracket_root`` (:func:`_extrema_by_bracketing`).
    The two routes agree to rounding (tests/test_esaki.py).
    """
    prepared = _prepare(peak_A_m2, peak_V, valley_A_m2, valley_V, excess_slope_per_V,
                        saturation_A_m2, ideality, temperature_K, exact_peak)
    return extrema_of_prepared(prepared, exact_peak_V=peak_V if exact_peak else None,
                               stacklevel=3)


def extrema_of_prepared(prepared, *, exact_peak_V=None, stacklevel=2):
    """:func:`attained_peak_and_valley` for parameters from :func:`prepare_tunnel_law`.

    ``exact_peak_V`` is the requested peak voltage when the law was prepared with ``exact_peak``
    (its maximum sits there in closed form). Returns :class:`Extrema` of the broadcast shape.
    """
    args = np.broadcast_arrays(*prepared)
    shape = args[0].shape
    args = tuple(np.ravel(x) for x in args)
    peak_v, valley_v = _extrema_by_table(
        args, None if exact_peak_V is None else np.ravel(np.broadcast_to(exact_peak_V, shape)))
    retry = ~np.isfinite(peak_v) | ~np.isfinite(valley_v)
    if retry.any():
        p_v, v_v = _extrema_by_bracketing(tuple(x[retry] for x in args))
        peak_v[retry], valley_v[retry] = p_v, v_v
    # J at both, by the compiled form of the law (the one the solver's tables and
    # siltandem.elements.TunnelJunction.peak use: the same rounding everywhere)
    rows = compiled_parameter_rows(args)
    both = np.stack([peak_v, valley_v], axis=1)
    found = np.isfinite(both)
    values = np.where(found, kernels.evaluate_law(
        kernels.TUNNEL_LAW, rows, kernels.as_input(np.where(found, both, 0.0)))[0], np.nan)
    values = np.concatenate([values[:, 0], values[:, 1]])
    peak_j, valley_j = values[:peak_v.size], values[peak_v.size:]
    missing = int(np.count_nonzero(~np.isfinite(peak_v) | ~np.isfinite(valley_v)))
    if missing:
        warnings.warn(f"attained_peak_and_valley: {missing} of {peak_v.size} parameter sets give a curve "
                      f"without negative differential resistance (or did not converge); their peak and "
                      f"valley are NaN", RuntimeWarning, stacklevel=stacklevel)
    return Extrema(*(x.reshape(shape) for x in (peak_v, peak_j, valley_v, valley_j)))


#: samples of dJ/dV on (0, 3 max(Vv, 2 V1)] that locate the peak's and the valley's cells
_EXTREMA_SAMPLES = 192


def compiled_parameter_rows(prepared):
    """Parameter rows (R, P) of the law's compiled form (siltandem.kernels) from
    :func:`prepare_tunnel_law`'s parameters, one row per entry of their broadcast shape."""
    a, v1, jv, vv, c2, j0, n, t = prepared
    columns = (a, v1, jv, vv, c2, j0, n * thermal_voltage_V(t), jv / -np.expm1(-2.0 * c2 * vv))
    base = np.empty((max(np.size(x) for x in columns), len(columns)))
    for k, column in enumerate(columns):
        base[:, k] = np.ravel(column)              # size 1 or the full size: broadcasts
    return kernels.parameter_rows(kernels.TUNNEL_LAW, base)


def _extrema_by_table(args, exact_peak_V=None):
    """Peak and valley voltages (flat arrays; NaN where not found) from sampled slopes.

    ``exact_peak_V``: the requested peak voltages when the tunnelling term was solved to put the
    maximum there (then J'(Vp) = 0 holds in closed form and Vp is taken as it is, wherever the
    samples confirm the peak's cell).

    dJ/dV is sampled on a grid over (0, 3 max(Vv, 2 V1)]; the peak lies in the first cell where
    it turns negative and the valley in the next cell where it turns positive again. Inside each
    cell, Newton steps on dJ/dV with the analytic d2J/dV2 (safeguarded by the cell) give the
    root to rounding (compiled: siltandem.kernels.tunnel_extrema). NaN where the grid sees no
    such pair (the caller then brackets from the steepest point, :func:`_extrema_by_bracketing`).
    """
    params = compiled_parameter_rows(args)
    exact = np.full(params.shape[0], np.nan) if exact_peak_V is None else \
        kernels.as_input(np.broadcast_to(exact_peak_V, params.shape[:1]), dtype=float)
    with np.errstate(all="ignore"):
        return kernels.tunnel_extrema(params, exact, _EXTREMA_SAMPLES, 1e-13, 4e-16, 100)


def _extrema_by_bracketing(args):
    """Peak and valley voltages (flat arrays; NaN where absent) by bracketing root finds.

    The steepest point of the negative-resistance region is the root of d2J/dV2 in (0, 2 V1); the
    peak is the root of dJ/dV below it and the valley the root above it
    (``scipy.optimize.elementwise``: Chandrupatla's method, and bracket_root for the valley).
    """
    v1f = args[1]

    def slope(v, *p):
        return _total(v, *p)[1]

    def curvature(v, *p):
        return _total(v, *p)[2]

    from scipy.optimize import elementwise     # here: scipy.optimize costs a command 0.3 s to import

    nan = np.full(v1f.shape, np.nan)
    peak_v, valley_v = nan.copy(), nan.copy()
    has_inflection = curvature(np.zeros_like(v1f), *args) < 0
    steep = np.full(v1f.shape, np.nan)
    if has_inflection.any():
        sub = tuple(x[has_inflection] for x in args)
        res = elementwise.find_root(curvature, (np.zeros_like(sub[1]), 2.0 * sub[1]), args=sub)
        steep[has_inflection] = np.where(res.success, res.x, np.nan)
    ndr = np.isfinite(steep)
    ndr[ndr] = slope(steep[ndr], *(x[ndr] for x in args)) < 0
    if ndr.any():
        sub = tuple(x[ndr] for x in args)
        vm = steep[ndr]
        res = elementwise.find_root(slope, (np.zeros_like(vm), vm), args=sub)
        peak_v[ndr] = np.where(res.success, res.x, np.nan)
        span = np.maximum(sub[3], vm)   # valley_V is the natural scale of the search
        br = elementwise.bracket_root(slope, vm, vm + span, xmin=vm, args=sub)
        lo, hi = br.bracket
        res = elementwise.find_root(slope, (lo, hi), args=sub)
        valley_v[ndr] = np.where(br.success & res.success, res.x, np.nan)
    return peak_v, valley_v


# --------------------------------------------------------------------------------------------------
# peak current estimate: band-to-band tunnelling through the junction field
# --------------------------------------------------------------------------------------------------
_NODES, _WEIGHTS = leggauss(48)


def _softplus(x):
    return np.logaddexp(0.0, x)


def estimate_peak_current(*, n_gap_eV, p_gap_eV, n_doping_m3, p_doping_m3, n_electron_mass,
                          p_light_hole_mass, n_relative_permittivity, p_relative_permittivity,
                          n_conduction_states_m3, p_valence_states_m3, temperature_K,
                          n_affinity_eV=None, p_affinity_eV=None, barrier="two_band"):
    """Peak tunnelling current density and peak voltage of an n++/p++ junction from its two layers.

    Parameters
    ----------
    n_gap_eV, p_gap_eV : array_like
        Band gaps of the n++ and p++ layers [eV].
    n_doping_m3, p_doping_m3 : array_like
        Donor and acceptor densities [m^-3], fully ionised.
    n_electron_mass, p_light_hole_mass : array_like
        Conduction-band mass of the n++ layer and light-hole mass of the p++ layer [m0]; the tunnelling
        mass is their reduced mass.
    n_relative_permittivity, p_relative_permittivity : array_like
        Static relative permittivities.
    n_conduction_states_m3, p_valence_states_m3 : array_like
        Effective densities of states Nc (n++ layer) and Nv (p++ layer) [m^-3].
    temperature_K : array_like
        Temperature [K].
    n_affinity_eV, p_affinity_eV : array_like or None
        Electron affinities [eV]. If both are given the junction is treated as hetero: the tunnelling
        gap is the distance from the p-side valence-band edge to the n-side conduction-band edge,
        ``Eg_p + chi_p - chi_n`` (electron-affinity rule). If None, ``min(n_gap_eV, p_gap_eV)``.
    barrier : {"two_band", "triangular"}
        Tunnelling exponent: Kane's two-band barrier, or the WKB triangular barrier.

    Returns
    -------
    PeakCurrentEstimate

    Raises
    ------
    ValueError
        Non-positive inputs, a broken-gap alignment, or a junction not degenerate enough for band
        overlap at the peak bias.

    Notes
    -----
    Landauer current with the transverse momentum conserved (Kane; form of Sze & Ng ch. 8):

    .. math:: J = \\frac{q\\,m_r}{2\\pi^2\\hbar^3}\\, e^{-\\lambda}\\, \\bar E
              \\int (f_n - f_p)\\left[1 - e^{-2E_s/\\bar E}\\right] dE,

    over the band overlap ``Ec,n < E < Ev,p``, with ``E_s`` the smaller kinetic energy to either edge.
    Two-band (Kane): ``lambda = pi sqrt(m_r) Eg^(3/2) / (2 sqrt2 q hbar F)``,
    ``Ebar = q hbar F / (pi sqrt(2 m_r Eg))``; triangular (WKB): ``lambda = 4 sqrt(2 m_r) Eg^(3/2) /
    (3 q hbar F)``, ``Ebar = q hbar F / (2 sqrt(2 m_r Eg))``. (For a bias window much wider than Ebar the
    triangular form reduces to half the textbook reverse-tunnelling prefactor recalled from Sze & Ng;
    our derivation counts both spins once.) Approximations, each of them deliberate:

    * degeneracies from :func:`fermi_degeneracy_eV` (parabolic bands, full ionisation, no band-gap
      narrowing); peak voltage ``Vp = (xi_n + xi_p) / 3`` (Sze & Ng, from memory), current evaluated there;
    * field: the maximum field of the abrupt junction in the depletion approximation at bias Vp,
      ``D = sqrt(2 q (Vbi - Vp) Nd Na eps_n eps_p / (eps_n Nd + eps_p Na))``, ``F = D / mean(eps)``, with
      ``q Vbi = Eg,eff + xi_n + xi_p``; the field is taken uniform along the tunnelling path;
    * hetero junctions: one uniform barrier of height Eg,eff and one reduced mass across both layers;
    * no phonon-assisted (indirect-gap) or trap-assisted tunnelling, no image force, no quantisation of
      the depletion layer — measured peak currents of real junctions lie within one to two orders of
      magnitude of this estimate.

    References
    ----------
    E. O. Kane, J. Appl. Phys. 32 (1961) 83.
    S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley 2007, ch. 2 (tunnelling
    current) and ch. 8 (tunnel diode) — from memory.
    L. Esaki, Phys. Rev. 109 (1958) 603.
    """
    if barrier not in ("two_band", "triangular"):
        raise ValueError(f"estimate_peak_current: barrier = {barrier!r} is not known; "
                         f"use 'two_band' or 'triangular'.")
    names = ("n_gap_eV", "p_gap_eV", "n_doping_m3", "p_doping_m3", "n_electron_mass", "p_light_hole_mass",
             "n_relative_permittivity", "p_relative_permittivity", "n_conduction_states_m3",
             "p_valence_states_m3", "temperature_K")
    values = (n_gap_eV, p_gap_eV, n_doping_m3, p_doping_m3, n_electron_mass, p_light_hole_mass,
              n_relative_permittivity, p_relative_permittivity, n_conduction_states_m3,
              p_valence_states_m3, temperature_K)
    arrays = np.broadcast_arrays(*_as_float(*values))
    for name, v in zip(names, arrays):
        found = _first_bad(~np.isfinite(v) | (v <= 0), [v])
        if found:
            at, (val,) = found
            raise ValueError(f"estimate_peak_current: {name} = {val:g}{at} must be finite and positive; "
                             f"give a positive {name}.")
    egn, egp, nd, na, me, mlh, epsn, epsp, ncn, nvp, t = arrays
    if (n_affinity_eV is None) != (p_affinity_eV is None):
        raise ValueError("estimate_peak_current: give both n_affinity_eV and p_affinity_eV (hetero junction) "
                         "or neither (homo junction).")
    if n_affinity_eV is None:
        gap = np.minimum(egn, egp)
    else:
        gap = egp + np.asarray(p_affinity_eV, dtype=float) - np.asarray(n_affinity_eV, dtype=float)
    found = _first_bad(~(gap > 0), [gap])
    if found:
        at, (g,) = found
        raise ValueError(f"estimate_peak_current: the tunnelling gap Eg_p + chi_p - chi_n = {g:g} eV{at} is "
                         f"not positive (broken-gap alignment), where this estimate does not apply; give "
                         f"the peak current directly.")
    kt = BOLTZMANN_EV_K * t
    xi_n = fermi_degeneracy_eV(nd, band_states_m3=ncn, temperature_K=t)
    xi_p = fermi_degeneracy_eV(na, band_states_m3=nvp, temperature_K=t)
    found = _first_bad(~(xi_n + xi_p > 0), [xi_n, xi_p])
    if found:
        at, (a_, b_) = found
        raise ValueError(f"estimate_peak_current: the junction is not degenerate enough for band overlap "
                         f"(xi_n + xi_p = {a_ + b_:.3g} eV){at}; raise n_doping_m3 or p_doping_m3.")
    vp = (xi_n + xi_p) / 3.0
    q = ELEMENTARY_CHARGE_C
    e0n, e0p = epsn * VACUUM_PERMITTIVITY_F_M, epsp * VACUUM_PERMITTIVITY_F_M
    vbi = gap + xi_n + xi_p
    displacement = np.sqrt(2.0 * q * (vbi - vp) * nd * na * e0n * e0p / (e0n * nd + e0p * na))
    field = displacement / (0.5 * (e0n + e0p))
    mr = ELECTRON_MASS_KG * me * mlh / (me + mlh)
    gap_j = gap * q
    if barrier == "two_band":
        lam = np.pi * np.sqrt(mr) * gap_j**1.5 / (2.0 * np.sqrt(2.0) * q * _HBAR_J_S * field)
        ebar = q * _HBAR_J_S * field / (np.pi * np.sqrt(2.0 * mr * gap_j))
    else:
        lam = 4.0 * np.sqrt(2.0 * mr) * gap_j**1.5 / (3.0 * q * _HBAR_J_S * field)
        ebar = q * _HBAR_J_S * field / (2.0 * np.sqrt(2.0 * mr * gap_j))
    ebar_ev = ebar / q
    # band overlap at bias Vp, energies in eV from the n-side conduction-band edge
    overlap = xi_n + xi_p - vp
    half = 0.5 * overlap[..., None]
    e_lo = half * 0.5 * (_NODES + 1.0)            # nodes on [0, overlap/2]: E_s = E
    window = 0.0
    for e, es in ((e_lo, e_lo), (overlap[..., None] - e_lo, e_lo)):
        fn = np.exp(-_softplus((e - xi_n[..., None]) / kt[..., None]))
        fp = np.exp(-_softplus((e - (xi_n - vp)[..., None]) / kt[..., None]))
        transverse = -np.expm1(-2.0 * es / ebar_ev[..., None])
        window = window + np.sum(_WEIGHTS * (fn - fp) * transverse, axis=-1) * 0.5 * half[..., 0]
    jp = q * mr / (2.0 * np.pi**2 * _HBAR_J_S**3) * np.exp(-lam) * ebar * window * q
    return PeakCurrentEstimate(jp, vp, field, gap, xi_n, xi_p, lam)


def slope_range(u_low_V, u_high_V, prepared):
    """The smallest and largest dJ/du [A m^-2 V^-1] of the prepared law over every junction
    voltage between ``u_low_V`` and ``u_high_V`` (arrays, u_low <= u_high).

    dJ/du = (A/V1) (E(1 - x) - x E'(1 - x)) + k C2 (E'(C2 (u - Vv)) + E'(-C2 (u + Vv)))
    + (J0/nVt) E'(u/nVt), x = u/V1, E the exponential continued linearly beyond
    ``EXP_LIMIT`` (E' = exp(min(z, limit))). The first term falls in x up to x = 2 and rises
    beyond (its derivative is (A/V1^2)(x - 2) e^(1-x), and it is linear and falling where the
    exponential is continued); of the excess term's two exponentials one rises and one falls
    in u; the thermal term rises. So the ends of the interval (and x = 2 where the interval
    holds it) bound each term: a rigorous enclosure up to rounding, used to bound the string's
    power between two evaluated points (certificate.py).
    """
    a, v1, jv, vv, c2, j0, n, t = prepared
    lo, hi = np.asarray(u_low_V, dtype=float), np.asarray(u_high_V, dtype=float)
    nvt = n * thermal_voltage_V(t)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        x_lo, x_hi = lo / v1, hi / v1
        turn = np.clip(2.0, np.minimum(x_lo, x_hi), np.maximum(x_lo, x_hi))
        k = jv / -np.expm1(-2.0 * c2 * vv)
        exponents = (1.0 - x_lo, 1.0 - x_hi, 1.0 - turn, c2 * (lo - vv), c2 * (hi - vv),
                     -c2 * (lo + vv), -c2 * (hi + vv), lo / nvt, hi / nvt)
        if max(np.max(z) for z in exponents) <= EXP_LIMIT:
            # every exponent below the limit: the plain exponentials (as _total does)
            e_lo, e_hi, e_turn, ra_lo, ra_hi, fa_lo, fa_hi, th_lo, th_hi = (
                np.exp(z) for z in exponents)
            tunnel = [(a / v1) * (1.0 - x) * e for x, e in
                      ((x_lo, e_lo), (x_hi, e_hi), (turn, e_turn))]
        else:
            def tunnel_term(x):
                value, first, _ = _limited_exp(1.0 - x)
                return (a / v1) * (value - x * first)

            tunnel = [tunnel_term(x) for x in (x_lo, x_hi, turn)]
            ra_lo, ra_hi, fa_lo, fa_hi, th_lo, th_hi = (
                np.exp(np.minimum(z, EXP_LIMIT)) for z in exponents[3:])
        ends = np.broadcast_arrays(*tunnel)
        smallest = (np.minimum(np.minimum(ends[0], ends[1]), ends[2])
                    + k * c2 * (ra_lo + fa_hi) + (j0 / nvt) * th_lo)
        largest = (np.maximum(np.maximum(ends[0], ends[1]), ends[2])
                   + k * c2 * (ra_hi + fa_lo) + (j0 / nvt) * th_hi)
    # widened by a few roundings of the terms above
    spread = 1e-12 * (np.abs(smallest) + np.abs(largest))
    return smallest - spread, largest + spread
