"""Isotype heterointerface (n-N or p-P): thermionic emission over the band-offset barrier.

Side 1 is the accumulation side (Boltzmann carriers, full Poisson solution), side 2 the depletion
side: by default also the full Boltzmann solution ("exact"; no switch, defined for every Vbi > 0),
or the closed forms of the depletion approximation with or without the kT/q tail term. The barrier
voltage ``Vbi - V`` splits between the two sides so that the displacement field is continuous at
the interface; for the closed forms the split is found with the Lambert W function for any ratio
``alpha = eps1 N1 / (eps2 N2)``, then polished by one Halley step on the charge balance; the exact
form is bracketed by those two and found by Newton's method to rounding.

Conventions (both carrier types): energies are "carrier energies" (electron energy for n-N,
minus the electron energy for p-P), so the barrier is a spike in the relevant band either way.
``voltage_V > 0`` lowers the barrier voltage and gives ``J > 0``: majority carriers then flow from
the depletion side (2) over the spike into the accumulation side (1). For electrons the
conventional current runs from side 1 to side 2, for holes from side 2 to side 1; orienting that
against the stack current is the compiler's job.

The derivation is in ``notes/thermionic.md``.
"""
from __future__ import annotations

import warnings
from typing import NamedTuple

import numpy as np

from siltandem.constants import BOLTZMANN_EV_K, RICHARDSON_FREE_A_M2_K2, thermal_voltage_V
from siltandem.laws.carriers import fermi_degeneracy_eV
from siltandem.numerics.roots import chandrupatla_roots as _chandrupatla
from siltandem.numerics.series import EXP_TAIL, horner

__all__ = [
    "IsotypeParameterError",
    "IsotypeDomainWarning",
    "VoltageSplit",
    "IsotypeAlignment",
    "voltage_split",
    "isotype_current_density",
    "isotype_voltage",
    "current_slope_range",
    "richardson_constant_A_m2_K2",
    "isotype_band_alignment",
]


class IsotypeParameterError(ValueError):
    """A parameter of an isotype-interface law is outside its physical range."""


class IsotypeDomainWarning(RuntimeWarning):
    """Some points lie outside the law's domain (or did not converge) and were set to NaN."""


class VoltageSplit(NamedTuple):
    """Band bending on each side of the interface [V]; they add up to the barrier voltage."""

    accumulation_V: np.ndarray
    depletion_V: np.ndarray


class IsotypeAlignment(NamedTuple):
    """Oriented parameters of an isotype interface (see `isotype_band_alignment`)."""

    built_in_V: np.ndarray
    barrier_eV: np.ndarray
    offset_eV: np.ndarray
    alpha: np.ndarray
    a_accumulates: np.ndarray


# ---------------------------------------------------------------------------------------------
# small accurate helpers

# W_{-1}(z) = -1 - sum_k c_k rho^k, rho = sqrt(2 (1 + e z)), about the branch point z = -1/e
# (Corless et al. 1996, eq. 4.22, with p = -rho for the lower branch).
_BRANCH_SERIES = np.array([
    1.0, 1.0 / 3.0, 11.0 / 72.0, 43.0 / 540.0, 769.0 / 17280.0, 221.0 / 8505.0,
    680863.0 / 43545600.0, 1963.0 / 204120.0, 226287557.0 / 37623398400.0,
])
_EPS = np.finfo(float).eps
_EDGE_SLACK = 1e-12   # [kT/q] a barrier voltage this far below the domain edge counts as on it
_BRANCH_SERIES_RHO_MAX = 0.25     # truncation there ~4e-9 relative; the Halley step removes it
# the same series for the principal branch (p = +rho): W0 = -1 + rho - rho^2/3 + 11/72 rho^3 - ...
_BRANCH_SERIES_UPPER = _BRANCH_SERIES * (-1.0) ** np.arange(_BRANCH_SERIES.size)
_TINY = np.finfo(float).smallest_normal
_EXACT_ITERATIONS = 60            # Newton from a bracket end; 1-10 steps in practice


def _alpha_terms(alpha, x):
    """alpha e^x, alpha (e^x - 1) and alpha (e^x - 1 - x) on flat arrays, without overflow of
    e^x alone and without cancellation for small |x| (series below 0.5)."""
    alpha, x = np.broadcast_arrays(np.asarray(alpha, float), np.asarray(x, float))
    with np.errstate(over="ignore", invalid="ignore"):
        a_exp = alpha * np.exp(x)
        huge = x >= 700.0
        if np.any(huge):
            a_exp[huge] = np.exp(np.log(alpha[huge]) + x[huge])
        a_em1 = a_exp - alpha
        a_g = a_em1 - alpha * x
    small = np.abs(x) < 0.5
    if np.any(small):
        xs, a_s = x[small], alpha[small]
        a_em1[small] = a_s * np.expm1(xs)
        a_g[small] = a_s * xs * xs * horner(EXP_TAIL, xs)
    return a_exp, a_em1, a_g


def _x_minus_log1p(q):
    """q - log(1 + q) for q >= 0, accurate for small q (log1p(q) = 2 atanh(q/(2+q)))."""
    u = q / (2.0 + q)
    u2 = u * u
    odd = horner(1.0 / np.arange(3.0, 26.0, 2.0), u2)     # 1/3 + u^2/5 + ...
    series = q * q / (2.0 + q) - 2.0 * u * u2 * odd
    return np.where(q < 0.5, series, q - np.log1p(q))


def _branch_minus_one_excess(mu):
    """p = -W_{-1}(-exp(-1 - mu)) - 1 >= 0 for mu >= 0, never forming exp(-1 - mu) near -1/e.

    Three regions: series about the branch point (lambertw k=-1 loses digits there), lambertw
    k=-1 for mu <= 1, and Wright omega omega(-1 - mu - i pi) = W_{-1}(-exp(-1 - mu)) for mu > 1
    (on scipy 1.17 that identity fails between -2 and -1, where it returns the W_0 value).
    """
    from scipy.special import lambertw, wrightomega     # here: 0.1 s of a command's start-up

    p = np.empty_like(mu)
    rho = np.sqrt(-2.0 * np.expm1(-mu))
    near = rho < _BRANCH_SERIES_RHO_MAX
    mid = ~near & (mu <= 1.0)
    far = mu > 1.0
    p[near] = rho[near] * horner(_BRANCH_SERIES, rho[near])
    p[mid] = -lambertw(-np.exp(-1.0 - mu[mid]), -1).real - 1.0
    p[far] = -wrightomega(-1.0 - mu[far] - 1j * np.pi).real - 1.0
    return p


def _warn_nan(count, what):
    if count:
        warnings.warn(f"isotype interface: {count} point(s) {what}; set to NaN",
                      IsotypeDomainWarning, stacklevel=3)


def _check_positive(name, value):
    value = np.asarray(value, dtype=float)
    bad = ~(np.isfinite(value) & (value > 0))
    if np.any(bad):
        raise IsotypeParameterError(
            f"isotype interface: '{name}' must be finite and > 0, got {value[bad].ravel()[0]!r}; "
            f"give a positive value in the unit its name states (SI, eV for energies)")
    return value


# ---------------------------------------------------------------------------------------------
# the split of the barrier voltage (reduced units: v = V / (kT/q))

def _reduced_split(vb, alpha, tail):
    """Accumulation-side bending v1 (units of kT/q) for flat float arrays; tail is 0 or 1.

    Solves alpha*(exp(v1) - 1 - v1) = vb - v1 - tail for the root with v1 >= 0. Valid for
    vb >= tail; callers mask other points.
    """
    vb, alpha = np.asarray(vb, dtype=float), np.asarray(alpha, dtype=float)
    v1 = np.empty_like(vb)
    from scipy.special import wrightomega     # here: 0.1 s of a command's start-up

    beta = 1.0 - alpha                      # exact for alpha in [0.5, 2] (Sterbenz)
    c = vb - tail + alpha
    lo, hi, one = beta > 0, beta < 0, beta == 0
    # alpha < 1: v1 = c/beta - W0(alpha/beta exp(c/beta)) = log(beta omega(x) / alpha)
    x = np.log(alpha[lo] / beta[lo]) + c[lo] / beta[lo]
    v1[lo] = np.log(beta[lo] * wrightomega(x) / alpha[lo])
    # alpha > 1: v1 = -c/g - W_{-1}(-(alpha/g) exp(-c/g)) = log1p(p) - log1p(q), g = alpha - 1
    q = 1.0 / (alpha[hi] - 1.0)
    mu = (vb[hi] - tail) * q + _x_minus_log1p(q)
    v1[hi] = np.log1p(_branch_minus_one_excess(mu)) - np.log1p(q)
    # alpha == 1: exp(v1) = 1 + vb - tail
    v1[one] = np.log1p(vb[one] - tail)
    # one Halley step on F(v1) = alpha*(exp(v1) - 1 - v1) + v1 - (vb - tail)
    a_exp, a_em1, a_g = _alpha_terms(alpha, v1)
    with np.errstate(over="ignore", invalid="ignore"):
        f = a_g + v1 - (vb - tail)
        f1 = 1.0 + a_em1
        return v1 - 2.0 * f * f1 / (2.0 * f1 * f1 - f * a_exp)


def _exact_depletion_bending(c):
    """y >= 0 with G(-y) = e^-y - 1 + y = c >= 0 (the field integral of a Boltzmann depletion side,
    inverted): y = c + 1 + W0(-exp(-1 - c)). About the branch point (small c) the series
    W0 + 1 = rho - rho^2/3 + 11/72 rho^3 - ..., rho = sqrt(2 (1 - e^-c)) (Corless et al. 1996,
    eq. 4.22, p = +rho), elsewhere scipy's lambertw; then one Newton step on G(-y) = c."""
    from scipy.special import lambertw     # here: 0.1 s of a command's start-up

    c = np.asarray(c, dtype=float)
    y = np.empty_like(c)
    rho = np.sqrt(-2.0 * np.expm1(-c))
    near = rho < _BRANCH_SERIES_RHO_MAX
    y[near] = c[near] + rho[near] * horner(_BRANCH_SERIES_UPPER, rho[near])
    far = ~near
    with np.errstate(under="ignore"):
        y[far] = c[far] + 1.0 + lambertw(-np.exp(-1.0 - c[far]), 0).real
    y = np.maximum(y, 0.0)
    g = _alpha_terms(np.ones_like(y), -y)[2]
    slope = -np.expm1(-y)
    with np.errstate(divide="ignore", invalid="ignore"):
        step = np.where(slope > 0, (g - c) / slope, 0.0)
    return np.maximum(y - step, 0.0)


def _exact_split(vb, alpha):
    """v1 >= 0 with alpha G(v1) = G(-(vb - v1)), G(x) = e^x - 1 - x, on flat arrays with vb >= 0.

    The root lies between the tail-form root (G(-y) >= y - 1) and the plain-form root
    (G(-y) <= y), both closed forms; Newton's method from the nearer one, kept inside that bracket
    by bisection, runs to rounding (so the result is smooth in vb and alpha: no switch).
    """
    lo = np.zeros_like(vb)
    hi = np.maximum(_reduced_split(vb, alpha, 0.0), 0.0)
    big = vb > 1.0
    lo[big] = np.clip(_reduced_split(vb[big], alpha[big], 1.0), 0.0, hi[big])
    # start from the tail root where its depletion side is deep (its error e^-v2 small)
    x = np.where(vb - lo > 3.0, lo, hi)
    active = np.flatnonzero(np.isfinite(x))
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        for _ in range(_EXACT_ITERATIONS):        # Newton on the points not yet converged
            xa, va, aa, la, ha = x[active], vb[active], alpha[active], lo[active], hi[active]
            _, a_em1, a_g = _alpha_terms(aa, xa)
            v2 = va - xa
            f = a_g - _alpha_terms(np.ones_like(v2), -v2)[2]
            slope = a_em1 - np.expm1(-v2)
            la = np.where(f < 0, xa, la)
            ha = np.where(f > 0, xa, ha)
            new = xa - np.where(slope > 0, f / slope, 0.0)
            outside = ~((new >= la) & (new <= ha))
            new[outside] = 0.5 * (la[outside] + ha[outside])
            x[active], lo[active], hi[active] = new, la, ha
            done = (np.abs(new - xa) <= 4.0 * _EPS * np.abs(xa) + _TINY) | ~np.isfinite(new)
            active = active[~done]
            if active.size == 0:
                break
    return x


def _accumulation_bending(vb, alpha, tail):
    """v1 on flat arrays, NaN where vb < edge or vb non-finite; also the count of such points.
    ``tail`` is the depletion-side form: 0.0 plain, 1.0 with the kT/q tail, or "exact"."""
    edge = _domain_edge(tail)
    ok = np.isfinite(vb) & (vb >= edge - _EDGE_SLACK)      # the domain edge itself, to rounding
    v1 = np.full_like(vb, np.nan)
    if tail == "exact":
        v1[ok] = _exact_split(np.maximum(vb[ok], 0.0), alpha[ok])
    else:
        v1[ok] = np.maximum(_reduced_split(np.maximum(vb[ok], tail), alpha[ok], tail), 0.0)
    return v1, int(np.count_nonzero(~ok & np.isfinite(vb)))


def _domain_edge(tail):
    """Smallest reduced barrier voltage of a depletion-side form (kT/q with the tail, else 0)."""
    return 0.0 if tail == "exact" else tail


def _depletion_from_balance(alpha, v1, tail):
    """v2 from the charge balance given v1: alpha G(v1) + t, or G(-v2) = alpha G(v1) (exact)."""
    a_g = _alpha_terms(alpha, v1)[2]
    return _exact_depletion_bending(a_g) if tail == "exact" else a_g + tail


def _depletion_form(include_tail, depletion):
    """The depletion-side form as the internal ``tail`` value: 0.0, 1.0 or "exact"."""
    if depletion is None:
        return 1.0 if include_tail else 0.0
    forms = {"plain": 0.0, "tail": 1.0, "exact": "exact"}
    if depletion not in forms:
        raise IsotypeParameterError(
            f"isotype interface: 'depletion' must be \"exact\", \"tail\" or \"plain\" (got "
            f"{depletion!r}); use \"exact\" (the full Boltzmann depletion side) unless comparing "
            "with the closed forms")
    return forms[depletion]


def voltage_split(barrier_voltage_V, *, alpha, temperature_K, include_tail=False, depletion=None):
    """Split of the barrier voltage between the accumulation and the depletion side.

    Parameters
    ----------
    barrier_voltage_V : array_like
        Total band bending ``Vbi - V`` [V]; must be >= 0 (>= kT/q with ``include_tail``).
    alpha : array_like
        ``eps1 N1 / (eps2 N2)``, accumulation side over depletion side, > 0.
    temperature_K : array_like
        Temperature [K], > 0.
    include_tail : bool, default False
        Add the kT/q majority-carrier tail to the depletion side (closer to a full Boltzmann
        solution when the depletion-side bending is many kT/q; undefined below kT/q).
    depletion : {"exact", "tail", "plain"}, optional
        The depletion side's form; overrides ``include_tail`` when given. "exact" is the full
        Boltzmann depletion side, G(-v2) = e^-v2 - 1 + v2 in place of v2 - t (defined for every
        barrier voltage >= 0, smooth in it and in alpha); "tail" and "plain" are the closed forms
        (t = 1 and t = 0).

    Returns
    -------
    VoltageSplit
        ``accumulation_V`` (side 1) and ``depletion_V`` (side 2) [V], broadcast shape.
        Points outside the domain are NaN (one `IsotypeDomainWarning`).

    Notes
    -----
    With v = V q/kT, continuity of eps*E at the interface gives the charge balance

        alpha (exp(v1) - 1 - v1) = v2 - t,   v1 + v2 = vb,   t = 0 (or 1 with the tail),

    (the exact form: ``alpha (exp(v1) - 1 - v1) = exp(-v2) - 1 + v2``, the same first integral of
    Poisson's equation on both sides), whose physical root is ``v1 = log(beta omega(x)/alpha)``,
    ``x = ln(alpha/beta) + c/beta``
    for alpha < 1 (beta = 1 - alpha, c = vb - t + alpha, omega the Wright omega function), and
    ``v1 = -c/g - W_{-1}(-(alpha/g) exp(-c/g))`` (g = alpha - 1, log-space, branch-point
    series) for alpha > 1; ``exp(v1) = 1 + vb - t`` at alpha = 1. One Halley step on the balance
    follows. The exact form's root lies between the tail root and the plain root; Newton's method
    from the nearer one, kept in that bracket, runs to rounding.

    References
    ----------
    .. [1] S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley (2007): field of a
       Boltzmann space-charge layer; depletion width with the kT/q term.
    .. [2] R. M. Corless et al., "On the Lambert W function", Adv. Comput. Math. 5 (1996) 329.
    """
    tail = _depletion_form(include_tail, depletion)
    alpha = _check_positive("alpha", alpha)
    temperature_K = _check_positive("temperature_K", temperature_K)
    vt = thermal_voltage_V(temperature_K)
    vb, alpha_b, vt_b = np.broadcast_arrays(np.asarray(barrier_voltage_V, dtype=float) / vt, alpha, vt)
    shape = vb.shape
    vb, alpha_b, vt_b = (a.ravel().copy() for a in (vb, alpha_b, vt_b))
    v1, bad = _accumulation_bending(vb, alpha_b, tail)
    _warn_nan(bad, "below the barrier-voltage domain (Vbi - V >= 0, or >= kT/q with the tail)")
    # side 2 from whichever form does not cancel: vb - v1, or the charge balance itself
    v2 = vb - v1
    from_balance = v1 > 0.5 * vb
    v2[from_balance] = _depletion_from_balance(alpha_b[from_balance], v1[from_balance], tail)
    return VoltageSplit((v1 * vt_b).reshape(shape), (v2 * vt_b).reshape(shape))


# ---------------------------------------------------------------------------------------------
# current

def _prepare(first, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K):
    alpha = _check_positive("alpha", alpha)
    richardson_A_m2_K2 = _check_positive("richardson_A_m2_K2", richardson_A_m2_K2)
    temperature_K = _check_positive("temperature_K", temperature_K)
    built_in_V = _check_positive("built_in_V", built_in_V)
    barrier_eV = np.asarray(barrier_eV, dtype=float)
    if not np.all(np.isfinite(barrier_eV)):
        raise IsotypeParameterError(
            "isotype interface: 'barrier_eV' must be finite; give the barrier top above the "
            "accumulation side's Fermi level in eV")
    arrays = np.broadcast_arrays(np.asarray(first, dtype=float), barrier_eV, built_in_V, alpha,
                                 richardson_A_m2_K2, temperature_K)
    shape = arrays[0].shape
    first, barrier, vbi, alpha, rich, temp = (a.ravel().copy() for a in arrays)
    vt = thermal_voltage_V(temp)
    # log of the flat-band emission prefactor A T^2 exp(-q phi / kT)
    log_prefactor = np.log(rich) + 2.0 * np.log(temp) - barrier / vt
    return shape, first, vbi / vt, alpha, vt, log_prefactor


def _current_from_split(v, v1, a_em1, vt, log_prefactor, with_derivative, exact=None):
    """J = P e^v1 (e^v - 1) and dJ/dV = (P e^v1 / Vt) (1 + alpha (e^v1 - 1) e^v) / (1 + alpha (e^v1 - 1)).

    ``a_em1`` is alpha (e^v1 - 1) >= 0; the derivative is a sum of positive terms (no cancellation).
    ``exact``: (v2, alpha) for the exact depletion side, where the 1s become G'(-v2) = 1 - e^-v2
    (see `_exact_weight`).
    """
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        j = np.sign(v) * np.exp(log_prefactor + v1 + np.log(np.abs(np.expm1(v))))
        if not with_derivative:
            return j, None
        if exact is not None:
            w, rest = _exact_weight(a_em1, *exact)
            base = log_prefactor + v1 - np.log(vt)
            return j, rest * np.exp(base) + w * np.exp(base + v)
        base = log_prefactor + v1 - np.log(vt) - np.log1p(a_em1)
        djdv = np.exp(base) + a_em1 * np.exp(base + v)
    return j, djdv


def _exact_weight(a_em1, v2, alpha):
    """w = A/(A + s), A = alpha (e^v1 - 1), s = 1 - e^-v2: with the exact depletion side
    dv1/dV = -s/(A + s) (units of kT/q), so dJ/dV = (P e^v1/Vt) ((1 - w) + w e^v). At flat band
    (A = s = 0) its limit sqrt(alpha)/(1 + sqrt(alpha)) (v1 = v2/sqrt(alpha) to first order).
    Returns (w, 1 - w), the second formed as s/(A + s) (no cancellation when A >> s)."""
    s = -np.expm1(-np.maximum(v2, 0.0))
    total = a_em1 + s
    with np.errstate(divide="ignore", invalid="ignore"):
        root = np.sqrt(alpha)
        flat = total > 0
        return (np.where(flat, a_em1 / total, root / (1.0 + root)),
                np.where(flat, s / total, 1.0 / (1.0 + root)))


def isotype_current_density(voltage_V, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                            temperature_K, include_tail=False, with_derivative=False, depletion=None,
                            accumulation_fermi_eV=None, depletion_fermi_eV=None, sheet_charge=0.0):
    """Thermionic-emission current density across an isotype heterointerface.

    Parameters
    ----------
    voltage_V : array_like
        Voltage across the interface [V]; > 0 lowers the barrier. Domain ``V <= Vbi``
        (``V <= Vbi - kT/q`` with ``include_tail``); outside it the result is NaN.
    barrier_eV : array_like
        Height of the interface barrier top above the Fermi level of the accumulation side's
        bulk, with that side's bending removed: ``max(dE, 0) + (E_edge1 - E_F1)`` [eV]
        (= ``Vbi + (E_edge2 - E_F2)`` when there is a spike). See `isotype_band_alignment`.
    built_in_V : array_like
        Built-in potential [V], > 0 (side 1 accumulates).
    alpha : array_like
        ``eps1 N1 / (eps2 N2)`` [-], > 0.
    richardson_A_m2_K2 : array_like
        Effective Richardson constant [A m^-2 K^-2] (of the side with the smaller effective mass,
        see `richardson_constant_A_m2_K2`).
    temperature_K : array_like
        Temperature [K]; ``barrier_eV`` and ``built_in_V`` must be the values at it.
    include_tail : bool, default False
        kT/q tail on the depletion side (see `voltage_split`). The default is the plain
        depletion approximation, defined up to flat band.
    with_derivative : bool, default False
        Also return dJ/dV [A m^-2 V^-1].
    depletion : {"exact", "tail", "plain"}, optional
        The depletion side's form (see `voltage_split`); overrides ``include_tail``. "exact" is
        defined up to flat band for every Vbi > 0 and smooth in Vbi, alpha and T.
    accumulation_fermi_eV, depletion_fermi_eV : array_like, optional
        Fermi level above the band edge in each side's bulk, ``E_F - E_edge`` in carrier energy
        [eV] (> 0 degenerate; `siltandem.laws.carriers.fermi_degeneracy_eV`). Given, that side's
        charge follows Fermi-Dirac statistics and the emission Fermi-Dirac occupancy
        (laws/interface_charge.py); needs ``depletion="exact"``. Default None: Boltzmann, this
        module's law unchanged.
    sheet_charge : array_like, default 0.0
        Fixed interface charge, reduced: ``sigma_c / sqrt(2 eps2 kT N2)``, ``sigma_c`` > 0 when
        it attracts the majority carriers (`siltandem.laws.interface_charge.reduced_sheet_charge`);
        nonzero needs ``depletion="exact"``. 0 (the default) is this module's law unchanged.

    Returns
    -------
    ndarray or (ndarray, ndarray)
        J [A m^-2] (and dJ/dV), broadcast shape.

    Notes
    -----
    With P = A T^2 exp(-q phi / kT), v = qV/kT and v1 the accumulation-side bending,

        J = P exp(v1) (exp(v) - 1),

    the net thermionic flux over the barrier from the carriers left at the interface on both
    sides (detailed balance fixes one Richardson constant for both directions). At alpha = 1,
    with the tail and phi = Vbi, this is exactly J0 (1 - V/Vbi)(exp(qV/kT) - 1),
    J0 = q A T Vbi / k exp(-q Vbi / kT); as alpha -> inf, v1 -> 0 and it becomes the Schottky law
    A T^2 exp(-q phi / kT)(exp(qV/kT) - 1). dv1/dV = -1/(1 + alpha (exp(v1) - 1)) (the exact
    depletion side: -s/(s + alpha (exp(v1) - 1)), s = 1 - exp(-v2)).

    References
    ----------
    .. [1] A. Chandra, L. F. Eastman, Solid-State Electron. 23 (1980) 599.
    .. [2] B. Van Zeghbroeck, Principles of Semiconductor Devices (n-n+ heterojunction).
    .. [3] E. H. Rhoderick, R. H. Williams, Metal-Semiconductor Contacts, 2nd ed., Oxford (1988).
    .. [4] R. L. Anderson, Solid-State Electron. 5 (1962) 341.
    """
    tail = _depletion_form(include_tail, depletion)
    general = _general_arguments(tail, accumulation_fermi_eV, depletion_fermi_eV, sheet_charge)
    if general is not None:
        return _general_law("current", voltage_V, None, barrier_eV, built_in_V, alpha,
                            richardson_A_m2_K2, temperature_K, general, with_derivative)
    shape, volt, vbi, alpha, vt, log_p = _prepare(voltage_V, barrier_eV, built_in_V, alpha,
                                                  richardson_A_m2_K2, temperature_K)
    v = volt / vt
    v1, bad = _accumulation_bending(vbi - v, alpha, tail)
    _warn_nan(bad, "beyond flat band (V > Vbi, or V > Vbi - kT/q with the tail)")
    a_em1 = _alpha_terms(alpha, v1)[1] if with_derivative else None
    exact = (vbi - v - v1, alpha) if tail == "exact" and with_derivative else None
    j, djdv = _current_from_split(v, v1, a_em1, vt, log_p, with_derivative, exact)
    if with_derivative:
        return j.reshape(shape), djdv.reshape(shape)
    return j.reshape(shape)


def isotype_voltage(current_A_m2, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                    temperature_K, include_tail=False, with_derivative=False, depletion=None,
                    accumulation_fermi_eV=None, depletion_fermi_eV=None, sheet_charge=0.0):
    """Voltage across an isotype interface that carries a given current density (inverse law).

    Parameters are those of `isotype_current_density`, with ``current_A_m2`` [A m^-2] first.
    J(V) is strictly increasing, so V(J) is single-valued for ``J <= J(Vbi)`` (the flat-band
    current; beyond it the law has no solution and the result is NaN, warned once).

    Returns
    -------
    ndarray or (ndarray, ndarray)
        V [V] (and dV/dJ [V m^2 A^-1]), broadcast shape.

    Notes
    -----
    Solved for the accumulation-side bending x = v1, for which everything is explicit:
    vb(x) = alpha (exp(x) - 1 - x) + x + t (exact depletion side: x + y, y >= 0 the root of
    exp(-y) - 1 + y = alpha (exp(x) - 1 - x), in Lambert W) and J(x) = P exp(x) expm1(vbi - vb(x)).
    ``asinh(J(x)/P) = asinh(J/P)`` is bracketed by x = 0 (flat band) and
    x = max(ln(2|J|/P), vbi + ln 2), and solved with Chandrupatla's method, the iteration and
    stopping rule of scipy.optimize.elementwise.find_root in plain numpy (:func:`_chandrupatla`).

    References
    ----------
    .. [1] T. R. Chandrupatla, Adv. Eng. Softw. 28 (1997) 145.
    """
    tail = _depletion_form(include_tail, depletion)
    general = _general_arguments(tail, accumulation_fermi_eV, depletion_fermi_eV, sheet_charge)
    if general is not None:
        return _general_law("voltage", current_A_m2, None, barrier_eV, built_in_V, alpha,
                            richardson_A_m2_K2, temperature_K, general, with_derivative)
    shape, jt, vbi, alpha, vt, log_p = _prepare(current_A_m2, barrier_eV, built_in_V, alpha,
                                                richardson_A_m2_K2, temperature_K)
    with np.errstate(over="ignore", under="ignore"):
        ratio = jt * np.exp(-log_p)                          # J/P, may be large
        j_max = np.expm1(vbi - _domain_edge(tail))           # J(flat band)/P

    def barrier_reduced(x, alpha):                           # vb as a function of v1 = x
        return _depletion_from_balance(alpha, x, tail) + x

    def residual(x, vbi, alpha, target):                     # decreasing in x; asinh keeps scale
        with np.errstate(over="ignore", invalid="ignore"):
            return np.arcsinh(np.exp(x) * np.expm1(vbi - barrier_reduced(x, alpha))) - target

    finite = np.isfinite(jt)
    flat = finite & (np.abs(ratio - j_max) <= 64 * _EPS * j_max)   # at flat band, to rounding
    solve = finite & ~flat & (ratio < j_max)
    x_root = np.full_like(jt, np.nan)
    x_root[flat] = 0.0
    if np.any(solve):
        with np.errstate(divide="ignore", over="ignore"):
            x_hi = np.maximum(np.log(2.0 * np.abs(jt[solve])) - log_p[solve],
                              vbi[solve] + np.log(2.0))
        x, success = _chandrupatla(residual, np.zeros_like(x_hi), x_hi,
                                   (vbi[solve], alpha[solve], np.arcsinh(ratio[solve])))
        x_root[solve] = np.where(success, x, np.nan)
    with np.errstate(divide="ignore", over="ignore", under="ignore", invalid="ignore"):
        y = jt * np.exp(-log_p - x_root)                     # = expm1(v) at the root
        v = np.where(np.abs(y) < 0.5, np.log1p(np.where(np.abs(y) < 0.5, y, 0.0)),
                     vbi - barrier_reduced(x_root, alpha))
    _warn_nan(int(np.count_nonzero(finite & ~flat & ~solve)), "above the flat-band current")
    _warn_nan(int(np.count_nonzero(solve & np.isnan(v))), "did not converge")
    volt = (v * vt).reshape(shape)
    if not with_derivative:
        return volt
    exact = (_depletion_from_balance(alpha, x_root, tail), alpha) if tail == "exact" else None
    _, djdv = _current_from_split(v, x_root, _alpha_terms(alpha, x_root)[1], vt, log_p, True, exact)
    return volt, (1.0 / djdv).reshape(shape)


def current_slope_range(v_low_V, v_high_V, *, barrier_eV, built_in_V, alpha,
                        richardson_A_m2_K2, temperature_K, include_tail=False, depletion=None,
                        accumulation_fermi_eV=None, depletion_fermi_eV=None, sheet_charge=0.0):
    """The smallest and largest dJ/dV [A m^-2 V^-1] of `isotype_current_density` over every
    voltage between ``v_low_V`` and ``v_high_V`` (arrays, v_low <= v_high, inside the domain).

    dJ/dV = (P/Vt) e^v1 (1 + A e^v)/(1 + A), A = alpha (e^v1 - 1), v = V/Vt, with the
    accumulation-side bending v1 falling as V rises (dv1/dV < 0, see the Notes of
    `isotype_current_density`). e^v1 and A lie between their values at the interval's ends; the
    ratio (1 + A e^v)/(1 + A) is monotone in A for fixed e^v and rises with e^v, so its extremes
    lie at the corners. With the exact depletion side the ratio is (1 - w) + w e^v,
    w = A/(A + s), s = 1 - e^-v2 (`_exact_weight`): A and s both fall as V rises, so w lies in
    [A(high)/(A(high) + s(low)), A(low)/(A(low) + s(high))] and the same corner argument holds.
    A rigorous enclosure up to rounding (positive; NaN outside the domain),
    used to bound the string's power between two evaluated points (certificate.py).
    """
    tail = _depletion_form(include_tail, depletion)
    general = _general_arguments(tail, accumulation_fermi_eV, depletion_fermi_eV, sheet_charge)
    if general is not None:
        return _general_law("slopes", v_low_V, v_high_V, barrier_eV, built_in_V, alpha,
                            richardson_A_m2_K2, temperature_K, general, False)
    shape, both, vbi, alpha_f, vt, log_p = _prepare(
        np.stack(np.broadcast_arrays(np.asarray(v_low_V, dtype=float),
                                     np.asarray(v_high_V, dtype=float))),
        barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K)
    v = both / vt
    v1, _ = _accumulation_bending(vbi - v, alpha_f, tail)
    a_em1 = _alpha_terms(alpha_f, v1)[1]
    half = both.size // 2
    with np.errstate(over="ignore", invalid="ignore"):
        # index 0: the low end of V (largest bending), 1: the high end
        growth = np.exp(v1)
        e_v = np.exp(v)
        a_lo, a_hi = a_em1[half:], a_em1[:half]          # A at high V, A at low V
        e_lo, e_hi = e_v[:half], e_v[half:]

        if tail == "exact":
            s = -np.expm1(-np.maximum(vbi - v - v1, 0.0))
            s_lo, s_hi = s[half:], s[:half]              # s at high V, s at low V
            root = np.sqrt(alpha_f[:half])
            # (w, 1 - w) at both ends of w's range, 1 - w as s/(A + s) (no cancellation)
            ends = []
            for a, s_ in ((a_lo, s_hi), (a_hi, s_lo)):
                total = a + s_
                ends.append((np.where(total > 0, a / total, root / (1.0 + root)),
                             np.where(total > 0, s_ / total, 1.0 / (1.0 + root))))

            def ratio(end, e):
                return end[1] + end[0] * e
            w_min, w_max = ends
        else:
            w_min, w_max = a_lo, a_hi

            def ratio(a, e):
                return (1.0 + a * e) / (1.0 + a)

        r_min = np.minimum(ratio(w_min, e_lo), ratio(w_max, e_lo))
        r_max = np.maximum(ratio(w_min, e_hi), ratio(w_max, e_hi))
        scale = np.exp(log_p[:half]) / vt[:half]
        smallest = scale * growth[half:] * r_min
        largest = scale * growth[:half] * r_max
    out_shape = shape[1:]
    return ((smallest * (1.0 - 1e-12)).reshape(out_shape),
            (largest * (1.0 + 1e-12)).reshape(out_shape))


# ---------------------------------------------------------------------------------------------
# Fermi-Dirac sides and a sheet charge: the general form (laws/interface_charge.py)

def _general_arguments(tail, accumulation_fermi_eV, depletion_fermi_eV, sheet_charge):
    """None for today's law (no Fermi-Dirac side, no sheet charge), else the extra arguments."""
    sheet = np.asarray(sheet_charge, dtype=float)
    if accumulation_fermi_eV is None and depletion_fermi_eV is None and not np.any(sheet != 0):
        return None
    if not np.all(np.isfinite(sheet)):
        raise IsotypeParameterError(
            "isotype interface: 'sheet_charge' must be finite; give the reduced interface charge "
            "(see laws/interface_charge.py reduced_sheet_charge)")
    if tail != "exact":
        raise IsotypeParameterError(
            "isotype interface: Fermi-Dirac sides and a sheet charge need the full depletion side; "
            "pass depletion=\"exact\" (the closed forms have no such variant)")
    return accumulation_fermi_eV, depletion_fermi_eV, sheet


def _general_law(kind, first, second, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                 temperature_K, general, with_derivative):
    """The law through laws/interface_charge.py: ``kind`` "current", "voltage" or "slopes"."""
    from siltandem.laws.interface_charge import interface_law

    for name, value in (("alpha", alpha), ("richardson_A_m2_K2", richardson_A_m2_K2),
                        ("temperature_K", temperature_K), ("built_in_V", built_in_V)):
        _check_positive(name, value)
    start = None
    if kind == "voltage":
        # the Boltzmann law's voltage (fast) starts the general inverse's Newton search (a Fermi-Dirac
        # side or a sheet charge moves it by a fraction of kT/q; NaN: the search starts mid-bracket)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", IsotypeDomainWarning)
            start = isotype_voltage(first, barrier_eV=barrier_eV, built_in_V=built_in_V, alpha=alpha,
                                    richardson_A_m2_K2=richardson_A_m2_K2, temperature_K=temperature_K,
                                    depletion="exact")
    return interface_law(kind, first, second, barrier_eV=barrier_eV, built_in_V=built_in_V,
                         alpha=alpha, richardson_A_m2_K2=richardson_A_m2_K2,
                         temperature_K=temperature_K, accumulation_fermi_eV=general[0],
                         depletion_fermi_eV=general[1], sheet_charge=general[2],
                         with_derivative=with_derivative, start_V=start)


# ---------------------------------------------------------------------------------------------
# material numbers -> law parameters

def richardson_constant_A_m2_K2(*, mass_ratio_1, mass_ratio_2):
    """Effective Richardson constant for an interface: that of the smaller effective mass.

    Parameters
    ----------
    mass_ratio_1, mass_ratio_2 : array_like
        Density-of-states effective masses m*/m0 of the carriers on the two sides [-].

    Returns
    -------
    ndarray
        ``A = 4 pi q m0 k^2 / h^3 * min(m1, m2)`` [A m^-2 K^-2] (120.17 A cm^-2 K^-2 per m0).

    References
    ----------
    .. [1] C. R. Crowell, Solid-State Electron. 8 (1965) 395.
    .. [2] B. Van Zeghbroeck, Principles of Semiconductor Devices (Richardson constant of the
       smaller of the two effective masses for an n-n+ heterojunction).
    """
    m1 = _check_positive("mass_ratio_1", mass_ratio_1)
    m2 = _check_positive("mass_ratio_2", mass_ratio_2)
    return RICHARDSON_FREE_A_M2_K2 * np.minimum(m1, m2)


def isotype_band_alignment(*, carrier, affinity_a_eV, gap_a_eV, band_dos_a_m3, doping_a_m3,
                           relative_permittivity_a, affinity_b_eV, gap_b_eV, band_dos_b_m3,
                           doping_b_m3, relative_permittivity_b, temperature_K, offset_eV=None,
                           statistics="fermi-dirac"):
    """Built-in potential, barrier, offset and alpha of an isotype interface between layers a, b.

    Parameters
    ----------
    carrier : {"electron", "hole"}
        Majority carrier (n-N: electrons over a conduction-band spike; p-P: holes over a
        valence-band spike).
    affinity_a_eV, gap_a_eV, affinity_b_eV, gap_b_eV : array_like
        Electron affinity and band gap of each layer [eV].
    band_dos_a_m3, band_dos_b_m3 : array_like
        Effective density of states of the majority band (Nc or Nv) at ``temperature_K`` [m^-3].
    doping_a_m3, doping_b_m3 : array_like
        Net majority doping, taken as the carrier density (full ionisation) [m^-3].
    relative_permittivity_a, relative_permittivity_b : array_like
        Static relative permittivities [-].
    temperature_K : array_like
        Temperature [K].
    offset_eV : array_like, optional
        Override of the band offset: step of the carrier's band edge from a to b in carrier
        energy (electrons: Ec_b - Ec_a; holes: Ev_a - Ev_b). Default: electron-affinity rule.
    statistics : {"fermi-dirac", "boltzmann"}
        How each layer's Fermi level follows from its doping: Fermi-Dirac (default; the inverse of
        ``N = N_band F_1/2(eta)`` by `siltandem.laws.carriers.fermi_degeneracy_eV`, right for
        degenerate layers too) or Boltzmann ``delta = kT ln(N_band/N)`` (the earlier law; off by
        ``kT (N/N_band)/sqrt(8)`` to first order, 0.09 mV at N = N_band/100 and 300 K, and
        wrong by several kT in a degenerate layer).

    Returns
    -------
    IsotypeAlignment
        ``built_in_V`` (>= 0), ``barrier_eV`` (for `isotype_current_density`), ``offset_eV``
        (band step seen from the accumulation side, > 0 is a spike), ``alpha`` (accumulation over
        depletion side) and ``a_accumulates`` (True where layer a is side 1).

    Notes
    -----
    Carrier-energy band edge: electrons -chi, holes chi + Eg (Anderson rule). Fermi level depth
    delta = edge - E_F (negative in a degenerate layer), from Fermi-Dirac statistics
    (Boltzmann: kT ln(N_band/N)). With F = edge - delta on each side, the side with the larger F
    depletes (side 2) and qVbi = F2 - F1; the barrier is max(dE, 0) + delta1. Only the bulk
    Fermi levels use Fermi-Dirac statistics: the accumulation layer's charge and the emission
    over the spike stay Boltzmann (see `voltage_split`, `isotype_current_density`).

    References
    ----------
    .. [1] R. L. Anderson, Solid-State Electron. 5 (1962) 341.
    .. [2] S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley 2007, ch. 1
       (n = Nc F_1/2(eta) for a degenerate layer).
    .. [3] W. B. Joyce, R. W. Dixon, Appl. Phys. Lett. 31 (1977) 354 (its inverse).
    """
    if carrier not in ("electron", "hole"):
        raise IsotypeParameterError(
            f"isotype interface: 'carrier' must be \"electron\" or \"hole\" (got {carrier!r}); "
            "use \"electron\" for n-N and \"hole\" for p-P")
    if statistics not in ("fermi-dirac", "boltzmann"):
        raise IsotypeParameterError(
            f"isotype interface: 'statistics' must be \"fermi-dirac\" or \"boltzmann\" (got "
            f"{statistics!r}); use \"fermi-dirac\" unless comparing with the Boltzmann law")
    temperature_K = _check_positive("temperature_K", temperature_K)
    kt = BOLTZMANN_EV_K * temperature_K
    chi_a, chi_b = np.asarray(affinity_a_eV, float), np.asarray(affinity_b_eV, float)
    if carrier == "electron":
        edge_a, edge_b = -chi_a, -chi_b
    else:
        edge_a = chi_a + np.asarray(gap_a_eV, float)
        edge_b = chi_b + np.asarray(gap_b_eV, float)
    step_ab = edge_b - edge_a if offset_eV is None else np.asarray(offset_eV, float)
    doping_a = _check_positive("doping_a_m3", doping_a_m3)
    doping_b = _check_positive("doping_b_m3", doping_b_m3)
    band_a = _check_positive("band_dos_a_m3", band_dos_a_m3)
    band_b = _check_positive("band_dos_b_m3", band_dos_b_m3)
    if statistics == "boltzmann":
        delta_a, delta_b = kt * np.log(band_a / doping_a), kt * np.log(band_b / doping_b)
    else:
        delta_a = -fermi_degeneracy_eV(doping_a, band_states_m3=band_a, temperature_K=temperature_K)
        delta_b = -fermi_degeneracy_eV(doping_b, band_states_m3=band_b, temperature_K=temperature_K)
    # Fermi levels in carrier energy, relative to layer a's band edge
    fermi_a = -delta_a
    fermi_b = step_ab - delta_b
    a_acc = fermi_b >= fermi_a
    built_in = np.abs(fermi_b - fermi_a)
    offset = np.where(a_acc, step_ab, -step_ab)
    delta_1 = np.where(a_acc, delta_a, delta_b)
    eps_n_a = _check_positive("relative_permittivity_a", relative_permittivity_a) * doping_a
    eps_n_b = _check_positive("relative_permittivity_b", relative_permittivity_b) * doping_b
    alpha = np.where(a_acc, eps_n_a / eps_n_b, eps_n_b / eps_n_a)
    return IsotypeAlignment(built_in, np.maximum(offset, 0.0) + delta_1, offset, alpha, a_acc)


# ---------------------------------------------------------------------------------------------
# public names of the helpers the thermionic-field law (laws/field_emission.py) builds on

alpha_terms = _alpha_terms
accumulation_bending = _accumulation_bending
prepare_law_arguments = _prepare
current_from_split = _current_from_split
