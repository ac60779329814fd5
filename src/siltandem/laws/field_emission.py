"""Isotype heterointerface (n-N or p-P): thermionic-field emission, i.e. thermionic emission over
the spike plus tunnelling through the depletion side's barrier below its top.

The band profile is the one of the thermionic law (laws/thermionic.py): the barrier voltage splits
between the accumulation side (side 1, full Boltzmann solution, Lambert W) and the depletion
side (side 2), and continuity of the displacement field at the interface fixes the field there,

    (eps2 F0^2) / (2 q N2) = (kT/q) w,   w = alpha (exp(v1) - 1 - v1)      (reduced: units of kT),

for both forms of the depletion side (with and without its kT/q tail). Inside the depletion side
the band edge is the parabola with that field at the interface and the curvature q N2 / eps2 of
its fixed charge; it falls by w kT from the spike top to its vertex. A carrier a depth ``e`` below
the top (reduced) tunnels through it with the WKB transmission exp(-theta(e)),

    theta(e) = (w / e00) [s - (1 - s^2) atanh(s)],   s = sqrt(e / w),
    e00 = E00 / kT,   E00 = (q hbar / 2) sqrt(N2 / (m_t eps2))                (Padovani-Stratton),

the exact integral of sqrt(2 m_t (E_c(x) - E)) over the parabola (no triangular approximation).
With Boltzmann supply functions on both sides and transverse momentum conserved, the net current
is the thermionic one times the gain

    G = 1 + int_0^{e_max} exp(e - theta(e)) de,   e_max = min(w, spike depth / kT),

(above the top T = 1 gives exactly the thermionic law; below it only energies that have states on
both sides count: above the depletion side's parabola vertex and above the accumulation side's
band edge at the interface, a spike depth below the top). So

    J = P exp(v1) (exp(v) - 1) G(w(v1)),

the thermionic law of laws/thermionic.py with the same P, v1 and v; with ``G = 1`` it is that law
to rounding. The exponent e - theta(e) is concave in e with its maximum at
``e* = w tanh^2(e00)`` (d theta/de = atanh(s)/e00): E00 << kT puts it at the top (thermionic
emission), E00 ~ kT inside (thermionic-field), E00 >> kT at the vertex (field emission,
G ~ exp(w (1 - kT/E00)) as in Padovani-Stratton).

The integral is a fixed Gauss-Legendre rule on six panels between the points where the exponent
has fallen 2, 12 and 45 below its maximum on either side (found by Newton steps, which converge
monotonically from outside on a concave function): vectorized, no adaptive loop.

References
----------
.. [1] F. A. Padovani, R. Stratton, Solid-State Electron. 9 (1966) 695 (E00; thermionic-field and
   field emission through a Schottky barrier).
.. [2] C. R. Crowell, V. L. Rideout, Solid-State Electron. 12 (1969) 89 (the WKB exponent through
   the parabolic depletion barrier; the TFE regimes by E00/kT).
.. [3] K. Yang, J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321 (thermionic-field
   emission across an abrupt heterointerface: the current as the thermionic one plus tunnelling
   through the depletion-side spike, one Richardson constant and detailed balance).
.. [4] E. H. Rhoderick, R. H. Williams, Metal-Semiconductor Contacts, 2nd ed., Oxford (1988),
   ch. 3 (the same in textbook form).
"""
from __future__ import annotations

import math
from pathlib import Path
import warnings

from siltandem.numerics import jit as numba
import numpy as np

from siltandem.constants import ELECTRON_MASS_KG, PLANCK_J_S, VACUUM_PERMITTIVITY_F_M
from siltandem.laws import thermionic as te
from siltandem.numerics.kernel_cache import drop_stale_kernels

# before any kernel of this module is loaded from numba's cache (numerics/kernel_cache.py)
drop_stale_kernels(Path(__file__).resolve().parents[1], once=True)

__all__ = [
    "TRANSPORTS",
    "field_energy_eV",
    "tunnelling_gain",
    "field_emission_current_density",
    "field_emission_voltage",
    "field_emission_slope_range",
    "slope_range_from_split",
]

#: the transport models of an isotype interface: thermionic emission only, or with tunnelling
TRANSPORTS = ("thermionic", "thermionic-field")

_HBAR_J_S = PLANCK_J_S / (2.0 * np.pi)
_NODES, _WEIGHTS = np.polynomial.legendre.leggauss(16)
_LEVELS = np.array([45.0, 12.0, 2.0])         # drops below the exponent's maximum that bound the panels
_NEWTON_STEPS = 10
_S_MAX = 1.0 - 1e-15                 # keeps atanh(s) finite at the parabola's vertex
_EPS = 2.220446049250313e-16


def field_energy_eV(*, doping_m3, relative_permittivity, mass_ratio):
    """Padovani-Stratton characteristic energy E00 = (q hbar / 2) sqrt(N / (m* eps)) [eV].

    Parameters
    ----------
    doping_m3 : array_like
        Net doping of the depletion side [m^-3].
    relative_permittivity : array_like
        Its static relative permittivity [-].
    mass_ratio : array_like
        Its tunnelling effective mass m*/m0 [-].

    References
    ----------
    .. [1] F. A. Padovani, R. Stratton, Solid-State Electron. 9 (1966) 695.
    """
    n = _positive("doping_m3", doping_m3)
    eps = _positive("relative_permittivity", relative_permittivity) * VACUUM_PERMITTIVITY_F_M
    mass = _positive("mass_ratio", mass_ratio) * ELECTRON_MASS_KG
    return 0.5 * _HBAR_J_S * np.sqrt(n / (mass * eps))


def _positive(name, value):
    value = np.asarray(value, dtype=float)
    bad = ~(np.isfinite(value) & (value > 0))
    if np.any(bad):
        raise te.IsotypeParameterError(
            f"isotype interface: '{name}' must be finite and > 0, got {value[bad].ravel()[0]!r}; "
            "give a positive value in the unit its name states (SI, eV for energies)")
    return value


# ---------------------------------------------------------------------------------------------
# the tunnelling gain (reduced units: energies in kT)

def tunnelling_gain(field_bending, *, field_energy, spike_depth=np.inf, with_derivative=False):
    """G = 1 + int_0^{e_max} exp(e - theta(e)) de: thermionic-field over thermionic current.

    Parameters
    ----------
    field_bending : array_like
        w = eps2 F0^2 / (2 q N2 kT) [-] (the depletion-side parabola's depth in kT), >= 0.
    field_energy : array_like
        e00 = E00 / kT [-], > 0.
    spike_depth : array_like, default inf
        Spike height above the accumulation side's band edge at the interface, over kT [-]; no
        states below it on that side (e_max = min(w, spike_depth); <= 0 gives G = 1).
    with_derivative : bool
        Also return dG/dw.

    Returns
    -------
    log G (and dG/dw / G), flat arrays in the broadcast shape (log form: G overflows in the
    field-emission regime).
    """
    w, e00, spike = (np.ascontiguousarray(a, dtype=float).ravel() for a in np.broadcast_arrays(
        np.asarray(field_bending, float), np.asarray(field_energy, float),
        np.asarray(spike_depth, float)))
    log_gain, dlog = np.empty_like(w), np.empty_like(w)
    _gain_kernel(w.copy(), e00.copy(), spike.copy(), _NODES, _WEIGHTS, log_gain, dlog)
    return (log_gain, dlog) if with_derivative else log_gain


@numba.njit(cache=True, inline="always", error_model="numpy")
def _exponent_point(e, w, e00):
    """f(e) = e - theta(e) and its slope 1 - atanh(s)/e00 (reduced), with
    theta = (w/e00) g(s), g(s) = s - (1 - s^2) atanh(s), s = sqrt(e/w) (s kept below 1 - 1e-15,
    where (1 - s^2) atanh(s) < 4e-14: g(1) = 1 to that)."""
    s = min(math.sqrt(max(e, 0.0) / w), _S_MAX)
    t = math.atanh(s)
    return e - (w / e00) * (s - (1.0 - s) * (1.0 + s) * t), 1.0 - t / e00


@numba.njit(cache=True, inline="always", error_model="numpy")
def _level_point(start, bound, w, e00, target):
    """Newton steps on f(e) = target from ``start`` toward ``bound`` (f concave: the iterates
    approach the root monotonically from outside and never pass it, so a point not fully
    converged still lies outside the level and the panels still cover the integrand))."""
    x, lo, hi = start, min(start, bound), max(start, bound)
    for _ in range(_NEWTON_STEPS):
        f, slope = _exponent_point(x, w, e00)
        if f >= target or slope == 0.0:
            break
        x = min(max(x - (f - target) / slope, lo), hi)
    return x


@numba.njit(cache=True, error_model="numpy")
def _gain_point(w, e00, spike, nodes, weights):
    """log G and dlogG/dw at one point: the panels and the Gauss-Legendre rule of the module
    docstring."""
    if not math.isfinite(w):
        return math.nan, math.nan
    if not (w > 0.0 and spike > 0.0 and e00 > 0.0):
        return 0.0, 0.0
    edges = np.empty(7)
    top = min(w, spike)
    peak = min(w * math.tanh(e00) ** 2, top)
    f_peak = _exponent_point(peak, w, e00)[0]
    start_hi = min(top, w * _S_MAX ** 2)
    for k in range(3):
        level = f_peak - _LEVELS[k]
        edges[k] = _level_point(0.0, peak, w, e00, level)
        edges[6 - k] = _level_point(start_hi, peak, w, e00, level)
    edges[3] = peak
    integral, d_integral = 0.0, 0.0
    for k in range(6):
        half = 0.5 * (edges[k + 1] - edges[k])
        mid = 0.5 * (edges[k + 1] + edges[k])
        if half <= 0.0:
            continue
        for j in range(nodes.size):
            e = mid + half * nodes[j]
            s = min(math.sqrt(max(e, 0.0) / w), _S_MAX)
            t = math.atanh(s)
            f = e - (w / e00) * (s - (1.0 - s) * (1.0 + s) * t)     # _exponent_point, inlined
            weight = half * weights[j] * math.exp(f - f_peak)
            integral += weight
            d_integral += weight * (t - s) / e00                  # -d theta/dw at fixed e
    if w < spike:                          # the range ends at the parabola's vertex
        d_integral += math.exp(w - w / e00 - f_peak)
    log_integral = f_peak + math.log(integral)
    log_gain = max(log_integral, 0.0) + math.log1p(math.exp(-abs(log_integral)))
    return log_gain, d_integral * math.exp(f_peak - log_gain)


# ---------------------------------------------------------------------------------------------
# the exact Boltzmann depletion side (also the compiled law's, laws/compiled_isotype.py)

@numba.njit(cache=True, inline="always", error_model="numpy")
def g_minus(y):
    """e^-y - 1 + y (series below 0.5: no cancellation) and its slope 1 - e^-y."""
    if abs(y) < 0.5:
        term, total = y * y / 2.0, 0.0
        for k in range(3, 20):
            total += term
            term *= -y / k
        return total, -math.expm1(-y)
    return math.expm1(-y) + y, -math.expm1(-y)

#: W0(z) + 1 = sum_k c_k rho^(k+1) about the branch point, rho = sqrt(2 (1 + e z)) (R. M. Corless
#: et al., Adv. Comput. Math. 5 (1996) 329, eq. 4.22, p = +rho): the exact depletion side's
#: bending is y = c + W0(-e^(-1-c)) + 1 with rho = sqrt(2 (1 - e^-c))
_BRANCH_SERIES = np.array([1.0, -1.0 / 3.0, 11.0 / 72.0, -43.0 / 540.0, 769.0 / 17280.0,
                           -221.0 / 8505.0, 680863.0 / 43545600.0, -1963.0 / 204120.0,
                           226287557.0 / 37623398400.0])
#: below this c the series start (relative error under about 3e-2 at its end, far less below)
_SERIES_LIMIT = 0.7


@numba.njit(cache=True, error_model="numpy")
def exact_depletion(c):
    """y >= 0 with e^-y - 1 + y = c >= 0 (the exact Boltzmann depletion side's bending, reduced)
    and the slope s = 1 - e^-y, by Halley's method (cubic convergence; the function is convex and
    rising). Start: the branch-point series of W0 (``_BRANCH_SERIES``) for c < 0.7, else the
    bound y <= c + 1 - e^-(c+1)."""
    if not c > 0.0:
        return 0.0, 0.0
    if c < _SERIES_LIMIT:
        rho = math.sqrt(-2.0 * math.expm1(-c))
        total = 0.0
        for k in range(_BRANCH_SERIES.size - 1, -1, -1):
            total = total * rho + _BRANCH_SERIES[k]
        y = c + rho * total
    else:
        y = c + 1.0 - math.exp(-(c + 1.0))
    for _ in range(60):
        g, slope = g_minus(y)
        if not slope > 0.0:
            break
        f = g - c
        step = 2.0 * f * slope / (2.0 * slope * slope - f * (1.0 - slope))
        y = y - step
        if abs(step) <= 4.0 * _EPS * y:
            break
    return y, -math.expm1(-y)


@numba.njit(cache=True, error_model="numpy")
def _exact_depletion_kernel(c_all, out):
    """`exact_depletion` over a flat array (the bending y only)."""
    for i in range(c_all.size):
        out[i] = exact_depletion(c_all[i])[0]


@numba.njit(cache=True, inline="always", error_model="numpy")
def rtsafe_step(x, newton, value, slope, lo, hi, dx, dx_old):
    """The next point of rtsafe (W. H. Press et al., Numerical Recipes, 3rd ed. 2007, sec. 9.4)
    once the bracket [lo, hi] is updated: Newton's point where it stays inside the bracket and the
    step is under half the last-but-one, else the bracket's middle (also for a NaN or infinite
    Newton point). Returns (x, dx, dx_old)."""
    if not (lo < newton < hi) or abs(2.0 * value) > abs(dx_old * slope):
        return lo + 0.5 * (hi - lo), 0.5 * (hi - lo), dx
    return newton, value / slope, dx


@numba.njit(cache=True, error_model="numpy")
def _gain_kernel(w_all, e00_all, spike_all, nodes, weights, log_out, dlog_out):
    """`_gain_point` over flat arrays, one compiled loop (the numpy form cost about 1 ms a call in
    array overhead, and the inverse calls it many times per solve)."""
    for i in range(w_all.size):
        log_out[i], dlog_out[i] = _gain_point(w_all[i], e00_all[i], spike_all[i], nodes, weights)


@numba.njit(cache=True, error_model="numpy")
def gain_slope_range(w_lo, w_hi, e00, spike, log_gain_hi, slope_at_lo, slope_at_hi):
    """Range [L_min, L_max] of L = dlnG/dw (reduced) over w in [w_lo, w_hi] that shrinks to the
    point with the cell: the ends' values and a bound M on |dL/dw| there give
    L in [(L_lo + L_hi - M dw)/2, (L_lo + L_hi + M dw)/2] (mean-value theorem from both ends),
    intersected with [0, 1] (the bound of `field_emission_slope_range`).

    With I = G - 1 = e^lam and sigma = I/(1 + I) (rising with w: L >= 0), L = sigma lam' and
    dL/dw = sigma (1 - sigma) lam'^2 + sigma lam''. The derivatives of lam = ln I are those of a
    log-partition function (cumulants: R. S. Ellis, Entropy, Large Deviations and Statistical
    Mechanics, Springer 1985, ch. II), the variance bounded by a quarter of the squared range
    (T. Popoviciu 1935):

    * below the spike (w <= S, the range ends at the parabola's vertex): e = w u gives
      I = w int_0^1 exp(w phi(u)) du, phi(u) = u - g(sqrt u)/e00, concave on [0, 1] with its
      maximum at u = tanh^2 e00, its minimum min(0, 1 - 1/e00) at an end; so
      lam' = 1/w + E[phi] and lam'' = -1/w^2 + Var[phi];
    * above it (w >= S): I = int_0^S exp(psi(e, w)) de, psi_w = (atanh s - s)/e00 in
      [0, (atanh s_m - s_m)/e00], psi_ww = -s^3 / (2 w e00 (1 - s^2)), s = sqrt(e/w) <= s_m =
      sqrt(S/w_lo); lam' = E[psi_w], lam'' = E[psi_ww] + Var[psi_w].

    A cell that straddles w = S (where the range's end switches from the vertex to the spike) or
    reaches w = 0 or S from above takes [0, 1]. The bound is proven for the exact integral; the
    ends' L come from the fixed quadrature, and the range is padded by 1e-9 only. The quadrature's
    own error in L is not bounded by that pad (moving its panel edges by a quarter of a level
    changes L by up to 3e-4 in places); what the certificate needs is that the computed L, a
    smooth function of w (a fixed number of Newton steps and nodes), obeys the bound, which
    dense sampling of it checks (tests/test_field_emission.py, tests/test_compiled_isotype.py)."""
    if not (w_lo >= 0.0 and w_hi >= w_lo and math.isfinite(w_hi)):
        return math.nan, math.nan
    if not (spike > 0.0 and e00 > 0.0 and w_hi > 0.0):
        return 0.0, 0.0                                      # G = 1: L = 0
    sigma = -math.expm1(-log_gain_hi)                        # sigma at w_hi, its largest
    if w_hi < spike and w_lo > 0.0:
        t = math.tanh(e00)
        phi_max = t * t - (t - (1.0 - t) * (1.0 + t) * math.atanh(min(t, _S_MAX))) / e00
        phi_min = min(0.0, 1.0 - 1.0 / e00)
        first = max(abs(1.0 / w_hi + phi_min), abs(1.0 / w_lo + phi_max))
        second = max(1.0 / (w_lo * w_lo), 0.25 * (phi_max - phi_min) ** 2)
    elif w_lo > spike:
        s_m = math.sqrt(spike / w_lo)
        psi_w = (math.atanh(s_m) - s_m) / e00
        first = psi_w
        second = max(s_m ** 3 / (2.0 * w_lo * e00 * (1.0 - s_m) * (1.0 + s_m)), 0.25 * psi_w * psi_w)
    else:
        return 0.0, 1.0
    bound = min(0.25, sigma) * first * first + sigma * second
    mid, half = 0.5 * (slope_at_lo + slope_at_hi), 0.5 * bound * (w_hi - w_lo)
    if not math.isfinite(half):
        return 0.0, 1.0
    return max(mid - half - 1e-9, 0.0), min(mid + half + 1e-9, 1.0)


@numba.njit(cache=True, error_model="numpy")
def gain_slope_kernel(w_lo, w_hi, e00, spike, log_gain_hi, slope_at_lo, slope_at_hi, low, high):
    """`gain_slope_range` over flat arrays."""
    for i in range(w_lo.size):
        low[i], high[i] = gain_slope_range(w_lo[i], w_hi[i], e00[i], spike[i], log_gain_hi[i],
                                           slope_at_lo[i], slope_at_hi[i])


@numba.njit(cache=True, inline="always", error_model="numpy")
def _field_bending(alpha, x):
    """alpha (e^x - 1 - x) without cancellation for small |x| (series below 0.5)."""
    if abs(x) < 0.5:
        term, total = x * x / 2.0, 0.0
        for k in range(3, 20):
            total += term
            term *= x / k
        return alpha * total
    return alpha * (math.expm1(x) - x)


@numba.njit(cache=True, error_model="numpy")
def _inverse_kernel(log_target, sign, vbi, alpha, form, e00, spike, x_lo, x_hi, nodes, weights, out):
    """Root x = v1 of log|J(x)/P| = log_target on [x_lo, x_hi] per entry, J(x)/P = e^x expm1(v) G,
    v = vbi - vb(x), vb(x) = alpha (e^x - 1 - x) + x + t (``form`` t = 0 plain, 1 tail) or x + y,
    y the exact depletion side's bending (``form`` 2): Newton's method safeguarded by the bracket
    (bisection when a step leaves it or shrinks it too slowly), in the log of |J| where J keeps
    one sign on the bracket (sign +1: forward, log|J| falls with x; -1: reverse, rises). NaN where
    the ends do not bracket the target."""
    tail = form if form < 2.0 else 0.0
    for i in range(log_target.size):
        lo, hi, target = x_lo[i], x_hi[i], log_target[i]
        direction = -sign[i]                    # d log|J| / dx has this sign

        def g(x):
            a_g = _field_bending(alpha[i], x)
            a_em1 = alpha[i] * math.expm1(x)
            if form == 2.0:
                y, s = exact_depletion(a_g)
                v = vbi[i] - (x + y)
                dvb = 1.0 + a_em1 / s if s > 0.0 else 1.0 + math.sqrt(alpha[i])
            else:
                v = vbi[i] - (a_g + x + tail)
                dvb = 1.0 + a_em1
            log_g, dlog = _gain_point(a_g, e00[i], spike[i], nodes, weights)
            em1 = math.expm1(v)
            value = x + math.log(abs(em1)) + log_g - target
            slope = 1.0 + dlog * a_em1 - dvb * math.exp(v) / em1
            return value, slope

        g_lo, g_hi = g(lo)[0], g(hi)[0]
        if math.isnan(g_lo) or math.isnan(g_hi):
            # an end at v = 0 gives log 0 = -inf (a valid sign); NaN only from bad inputs
            out[i] = math.nan
            continue
        # the zero-bias end (lo in reverse, hi forward) has v = 0 only to rounding: a current
        # below what that resolves has its root there (the caller takes v from J itself)
        zero_end = lo if direction > 0.0 else hi
        if (direction > 0.0 and g_lo > 0.0) or (direction < 0.0 and g_hi > 0.0):
            out[i] = zero_end
            continue
        if direction * g_lo > 0.0 or direction * g_hi < 0.0:
            out[i] = math.nan
            continue
        # rtsafe (Numerical Recipes 9.4): Newton, bisection where a step leaves the bracket or
        # would not halve the last-but-one step
        x = 0.5 * (lo + hi)
        dx_old = dx = hi - lo
        for _ in range(200):
            value, slope = g(x)
            if value == 0.0:
                break
            if direction * value < 0.0:
                lo = x
            else:
                hi = x
            newton = x - value / slope
            x, dx, dx_old = rtsafe_step(x, newton, value, slope, lo, hi, dx, dx_old)
            if abs(dx) <= 4.0 * 2.220446049250313e-16 * abs(x) + 1e-300:
                break
        out[i] = x


# ---------------------------------------------------------------------------------------------
# the current, its inverse and its slope range

def _law_arrays(first, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K,
               field_energy_eV, spike_eV):
    """Broadcast everything; flat arrays of the thermionic law's reduced quantities plus e00 and
    the spike depth (in kT)."""
    _positive("field_energy_eV", field_energy_eV)
    first, e00_ev, spike_ev = np.broadcast_arrays(np.asarray(first, float), np.asarray(field_energy_eV, float),
                                                  np.asarray(spike_eV, float))
    shape, first, vbi, alpha, vt, log_p = te.prepare_law_arguments(
        first, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K)
    e00 = np.broadcast_to(e00_ev, shape).ravel() / vt
    spike = np.broadcast_to(spike_ev, shape).ravel() / vt
    return shape, first, vbi, alpha, vt, log_p, e00, np.where(np.isnan(spike), np.inf, spike)


#: the depletion side's forms, as the kernels take them (laws/compiled_isotype.py FORMS)
_FORMS = {"plain": 0.0, "tail": 1.0, "exact": 2.0}


def _form(include_tail, depletion):
    """The depletion-side form code: 0 plain, 1 kT/q tail, 2 exact (``depletion`` overrides
    ``include_tail``, as in laws/thermionic.py)."""
    if depletion is None:
        return 1.0 if include_tail else 0.0
    if depletion not in _FORMS:
        raise te.IsotypeParameterError(
            f"isotype interface: 'depletion' must be \"exact\", \"tail\" or \"plain\" (got "
            f"{depletion!r}); use \"exact\" (the full Boltzmann depletion side) unless comparing "
            "with a closed form")
    return _FORMS[depletion]


def _bending(vb, alpha, form):
    """The accumulation-side bending v1 at the reduced barrier voltage vb (laws/thermionic.py)."""
    return te.accumulation_bending(vb, alpha, "exact" if form == 2.0 else form)


def _rest(a_em1, v2, alpha, form):
    """1 - q = s/(A + s): the share of the barrier voltage's change taken by the depletion side
    (dv1/dV = -(1 - q)/Vt), s = 1 - e^-v2 for the exact side, 1 for the closed forms; at flat
    band of the exact side 1/(1 + sqrt(alpha)) (v1 = v2/sqrt(alpha) to first order)."""
    if form != 2.0:
        return 1.0 / (1.0 + a_em1)
    s = -np.expm1(-np.maximum(v2, 0.0))
    total = a_em1 + s
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(total > 0, s / total, 1.0 / (1.0 + np.sqrt(alpha)))


def field_emission_current_density(voltage_V, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                                   temperature_K, field_energy_eV, spike_eV=np.inf,
                                   include_tail=False, with_derivative=False, depletion=None):
    """Thermionic-field emission current density across an isotype heterointerface.

    Parameters are those of `siltandem.laws.thermionic.isotype_current_density`, and

    field_energy_eV : array_like
        E00 of the depletion side [eV] (`field_energy_eV`), > 0.
    spike_eV : array_like, default inf
        Spike height, the band step seen from the accumulation side [eV] (tunnelling only into
        states of that side: energies down to the spike height below the top); NaN or inf: no
        limit but the parabola's vertex; <= 0: no spike, the thermionic law.
    depletion : {"exact", "tail", "plain"}, optional
        The depletion side's form (overrides ``include_tail``): "exact" is the full Boltzmann
        side, w = e^-v2 - 1 + v2 (laws/thermionic.py `voltage_split`), continuous in doping and
        temperature and defined for every Vbi > 0; the WKB parabola keeps the field w at the
        interface.

    Returns
    -------
    ndarray or (ndarray, ndarray)
        J [A m^-2] (and dJ/dV), broadcast shape. J = J_thermionic * G (module docstring), so
        the law's domain and its NaN points are the thermionic law's.
    """
    form = _form(include_tail, depletion)
    shape, volt, vbi, alpha, vt, log_p, e00, spike = _law_arrays(
        voltage_V, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K,
        field_energy_eV, spike_eV)
    v = volt / vt
    v1, bad = _bending(vbi - v, alpha, form)
    if bad:
        warnings.warn(f"isotype interface: {bad} point(s) beyond flat band (V > Vbi, or V > Vbi - "
                      "kT/q with the tail); set to NaN", te.IsotypeDomainWarning, stacklevel=2)
    j, djdv = _current_from_bending(v, v1, alpha, vt, log_p, e00, spike, with_derivative,
                                    form, vbi - v - v1)
    return (j.reshape(shape), djdv.reshape(shape)) if with_derivative else j.reshape(shape)


def _current_from_bending(v, v1, alpha, vt, log_p, e00, spike, with_derivative, form=0.0, v2=None):
    """J = J_thermionic G and dJ/dV from the reduced voltage v and bending v1 (flat arrays;
    ``v2`` the depletion side's bending, used by the exact form)."""
    _, a_em1, a_g = te.alpha_terms(alpha, v1)
    log_g, dlog_g = tunnelling_gain(a_g, field_energy=e00, spike_depth=spike, with_derivative=True)
    exact = (v2, alpha) if form == 2.0 else None
    j_te, dj_te = te.current_from_split(v, v1, a_em1, vt, log_p, True, exact)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        gain = np.exp(log_g)
        j = j_te * gain
        if not with_derivative:
            return j, None
        # dG/dV = G (dlogG/dw)(dw/dv1)(dv1/dV), dw/dv1 = alpha (e^v1 - 1) = A, dv1/dV = -(1 - q)/Vt
        if form == 2.0:
            djdv = gain * dj_te - j * dlog_g * a_em1 * _rest(a_em1, v2, alpha, form) / vt
        else:
            djdv = gain * dj_te - j * dlog_g * a_em1 / (vt * (1.0 + a_em1))
    return j, djdv


def _exact_bending(c):
    """y >= 0 with e^-y - 1 + y = c (the exact depletion side, flat arrays)."""
    out = np.empty(c.size)
    _exact_depletion_kernel(np.ascontiguousarray(c, dtype=float), out)
    return out


def field_emission_voltage(current_A_m2, *, barrier_eV, built_in_V, alpha, richardson_A_m2_K2,
                           temperature_K, field_energy_eV, spike_eV=np.inf, include_tail=False,
                           with_derivative=False, depletion=None):
    """Voltage across an isotype interface that carries a given current density under
    thermionic-field emission (the inverse of `field_emission_current_density`, same keywords).

    Solved, as the thermionic inverse is, for the accumulation-side bending x = v1, for which
    everything is explicit: vb(x) = alpha (e^x - 1 - x) + x + t (closed forms) or x + y(w(x)) (the
    exact side, y the root of e^-y - 1 + y = w), w(x) = alpha (e^x - 1 - x) and
    J(x) = P e^x expm1(vbi - vb(x)) G(w(x)). At flat band (x = 0) w = 0 and G = 1, so the
    flat-band current and the bracket [0, max(ln(2|J|/P), vbi + ln 2)] are the thermionic
    law's (G >= 1 only deepens the reverse end). The bending at zero bias splits it: a forward
    current lies in [0, x(V=0)], a reverse one above, and on each part log|J(x)| is monotone and
    smooth; `_inverse_kernel` solves log|J(x)/P| = log|J/P| there by Newton's method safeguarded
    by the bracket (rtsafe, W. H. Press et al., Numerical Recipes, 3rd ed. 2007, sec. 9.4),
    compiled, each Newton step with the gain's analytic slope. J(V) is strictly increasing
    (tests/test_field_emission.py checks it on a grid), so the root is unique.

    Returns
    -------
    ndarray or (ndarray, ndarray)
        V [V] (and dV/dJ [V m^2 A^-1]); NaN above the flat-band current (warned once).
    """
    form = _form(include_tail, depletion)
    tail = form if form < 2.0 else 0.0
    shape, jt, vbi, alpha, vt, log_p, e00, spike = _law_arrays(
        current_A_m2, barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K,
        field_energy_eV, spike_eV)
    with np.errstate(over="ignore", under="ignore", divide="ignore"):
        ratio = jt * np.exp(-log_p)
        j_max = np.expm1(vbi - tail)
        log_target = np.log(np.abs(jt)) - log_p

    finite = np.isfinite(jt)
    flat = finite & (np.abs(ratio - j_max) <= 64 * np.finfo(float).eps * j_max)
    solve = finite & ~flat & (ratio < j_max)
    x_root = np.full_like(jt, np.nan)
    x_root[flat] = 0.0
    if np.any(solve):
        # the bending at zero bias splits the bracket: forward currents below it, reverse above
        x_zero, _ = _bending(vbi[solve], alpha[solve], form)
        with np.errstate(divide="ignore", over="ignore"):
            x_hi = np.maximum(np.log(2.0 * np.abs(jt[solve])) - log_p[solve], vbi[solve] + np.log(2.0))
        forward = jt[solve] > 0
        sign = np.where(forward, 1.0, -1.0)
        lower = np.where(forward, 0.0, x_zero)
        upper = np.where(forward, x_zero, x_hi)
        roots = np.empty(lower.size)
        _inverse_kernel(*(np.ascontiguousarray(a, dtype=float) for a in (
            log_target[solve], sign, vbi[solve], alpha[solve])), form,
            *(np.ascontiguousarray(a, dtype=float) for a in (e00[solve], spike[solve], lower, upper)),
            _NODES, _WEIGHTS, roots)
        zero = jt[solve] == 0                                  # no current: zero bias
        roots[zero] = x_zero[zero]
        x_root[solve] = roots
    a_g = te.alpha_terms(alpha, x_root)[2]
    log_g = tunnelling_gain(a_g, field_energy=e00, spike_depth=spike)
    depletion_bending = _exact_bending(a_g) if form == 2.0 else a_g + tail
    with np.errstate(divide="ignore", over="ignore", under="ignore", invalid="ignore"):
        y = jt * np.exp(-log_p - x_root - log_g)               # = expm1(v) at the root
        small = np.abs(y) < 0.5
        v = np.where(small, np.log1p(np.where(small, y, 0.0)), vbi - (depletion_bending + x_root))
    for count, what in ((int(np.count_nonzero(finite & ~flat & ~solve)), "above the flat-band current"),
                        (int(np.count_nonzero(solve & np.isnan(v))), "did not converge")):
        if count:
            warnings.warn(f"isotype interface: {count} point(s) {what}; set to NaN",
                          te.IsotypeDomainWarning, stacklevel=2)
    volt = (v * vt).reshape(shape)
    if not with_derivative:
        return volt
    _, djdv = _current_from_bending(v, x_root, alpha, vt, log_p, e00, spike, True, form,
                                    depletion_bending)
    with np.errstate(divide="ignore", invalid="ignore"):
        return volt, (1.0 / djdv).reshape(shape)


def field_emission_slope_range(v_low_V, v_high_V, *, barrier_eV, built_in_V, alpha,
                               richardson_A_m2_K2, temperature_K, field_energy_eV, spike_eV=np.inf,
                               include_tail=False, depletion=None):
    """Smallest and largest dJ/dV [A m^-2 V^-1] of `field_emission_current_density` between two
    voltages (arrays, v_low <= v_high, inside the domain), for the certificate (solve/certificate.py).

    dJ/dV = (P/Vt) e^v1 G [1 + q (e^v - 1)(1 - L)], q = A/(1 + A), A = alpha (e^v1 - 1),
    L = dlnG/dw. e^v1 G and q rise with v1, which falls as V rises, so they lie between their
    values at the ends; e^v - 1 rises with V; L lies in the range of `gain_slope_range` over the
    cell's w (w rises with v1), which shrinks to a point with the cell (0 <= L <= 1 where that
    range is not available: tests/test_field_emission.py checks it on a grid of w and e00). The
    bracket is a product of three intervals (R. E. Moore, R. B. Kearfott, M. J. Cloud,
    Introduction to Interval Analysis, SIAM 2009, ch. 2), q and 1 - L >= 0.

    The exact depletion side: dJ/dV = (P/Vt) e^v1 G [1 + (e^v - 1)(q - L h)], q = A/(A + s),
    h = A s/(A + s), s = 1 - e^-v2; A, s and h (rising in A and in s) fall as V rises, q lies
    between A_high/(A_high + s_low) and A_low/(A_low + s_high) (ends by V), so q - L h lies in
    [q_min - L_max h_low, q_max - L_min h_high] and the bilinear bracket takes its extremes at
    the corners (the compiled law's `_field_exact_slope_range`, laws/compiled_isotype.py).
    """
    form = _form(include_tail, depletion)
    lows, highs = np.broadcast_arrays(np.asarray(v_low_V, float), np.asarray(v_high_V, float))
    shape, both, vbi, alpha_f, vt, log_p, e00, spike = _law_arrays(
        np.stack([lows, highs]), barrier_eV, built_in_V, alpha, richardson_A_m2_K2, temperature_K,
        field_energy_eV, spike_eV)
    v = both / vt
    v1, _ = _bending(vbi - v, alpha_f, form)
    _, a_em1, a_g = te.alpha_terms(alpha_f, v1)
    return slope_range_from_split(v, v1, a_em1, a_g, vbi, vt, log_p, e00, spike, form, shape[1:])


def slope_range_from_split(v, v1, a_em1, a_g, vbi, vt, log_p, e00, spike, form, out):
    """The bracket of `field_emission_slope_range` from the split at both ends (flat arrays, the
    low-V ends first, then the high-V ends): reduced v, v1, A = dw/dv1 and w at each end. It holds
    for any accumulation-side charge law with A and w rising in v1 (laws/field_emission_fermi.py's
    Fermi-Dirac side too); ``out`` the result's shape."""
    log_g, dlog_g = tunnelling_gain(a_g, field_energy=e00, spike_depth=spike, with_derivative=True)
    half = v.size // 2
    lo, hi = slice(None, half), slice(half, None)          # low V (larger w), high V ends
    l_min, l_max = np.empty(half), np.empty(half)
    gain_slope_kernel(*(np.ascontiguousarray(a, dtype=float) for a in (
        a_g[hi], a_g[lo], e00[lo], spike[lo], log_g[lo], dlog_g[hi], dlog_g[lo])), l_min, l_max)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        scale = np.exp(log_p + v1 + log_g) / vt         # P e^v1 G / Vt: larger at the low end
        u = np.expm1(v)
        if form == 2.0:
            s = -np.expm1(-np.maximum(vbi - v - v1, 0.0))
            a_a, a_b, s_a, s_b = a_em1[lo], a_em1[hi], s[lo], s[hi]
            q_min = np.where(a_b + s_a > 0, a_b / (a_b + s_a), 0.0)
            q_max = np.where(a_a + s_b > 0, a_a / (a_a + s_b), 1.0)
            h_max = np.where(a_a + s_a > 0, a_a * s_a / (a_a + s_a), 0.0)
            h_min = np.where(a_b + s_b > 0, a_b * s_b / (a_b + s_b), 0.0)
            qm_lo, qm_hi = q_min - l_max * h_max, q_max - l_min * h_min
        else:
            q = a_em1 / (1.0 + a_em1)
            qm_lo, qm_hi = q[hi] * (1.0 - l_max), q[lo] * (1.0 - l_min)
        corners = np.stack([u[lo] * qm_lo, u[lo] * qm_hi, u[hi] * qm_lo, u[hi] * qm_hi])
        bracket_min = 1.0 + corners.min(axis=0)
        bracket_max = 1.0 + corners.max(axis=0)
        smallest = np.where(bracket_min >= 0, scale[hi], scale[lo]) * bracket_min
        largest = np.where(bracket_max >= 0, scale[lo], scale[hi]) * bracket_max
    return ((smallest - 1e-12 * np.abs(smallest)).reshape(out),
            (largest + 1e-12 * np.abs(largest)).reshape(out))


#: the compiled gain at one point (log G, dlogG/dw), for the compiled law (laws/compiled_isotype.py)
gain_point = _gain_point
