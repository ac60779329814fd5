"""The general isotype law compiled (numba): Fermi-Dirac sides and a fixed interface sheet charge
(laws/interface_charge.py), forward J(V) with dJ/dV, inverse V(J) and the slope range, one entry at
a time, so that the fused compiled pass of a string (laws/compiled.py ``element_voltages``, through
laws/compiled_isotype.py, which hands rows of form :data:`FERMI_FORM` here) inverts it without
Python-level array steps.

The numpy law of laws/interface_charge.py stays the reference; these are the same equations in
scalar form (tests/test_compiled_fermi.py checks them against it over random dopings,
temperatures and voltages). Reduced units: potentials in kT/q, energies in kT.

* F_j(eta) for j = -1/2, 1/2, 3/2: the same three branches and the same tables as
  laws/fermi_dirac.py ``fermi_integral`` (series below -40, Chebyshev interpolants of degree 15 on
  unit intervals, Sommerfeld expansion above 40; J. S. Blakemore, Solid-State Electron. 25 (1982)
  1067), evaluated by Clenshaw's recurrence for one point;
* each side's field integral g(x; eta) and dg/dx (laws/fermi_dirac.py ``charge_integral``: an
  8-node Gauss-Legendre rule of the Taylor remainder for |x| < 1, differences of F_j beyond), or
  e^x - 1 - x for a Boltzmann side (its eta NaN);
* the charge balance q1(v1) = q2(vb - v1) + s for the accumulation-side bending v1, rising in v1:
  Newton's method safeguarded by a bracket ('rtsafe', W. H. Press et al., Numerical Recipes, 3rd
  ed., Cambridge 2007, sec. 9.4) from a widening bracket, as the numpy law;
* the current J = A T^2 ln(1 + sigma(a) expm1(v)), a = v1 - phi (Fermi-Dirac supply function,
  R. Stratton, F. A. Padovani, Solid-State Electron. 10 (1967) 813), or A T^2 e^a expm1(v) when
  both sides are Boltzmann (sheet charge only);
* the inverse: rtsafe on asinh(J(v)/J_flat) - asinh(J/J_flat) over [lo, Vbi] (lo widened below
  zero for reverse currents), each step's split started from the last one's.
"""
import math
from pathlib import Path

import numpy as np

from siltandem.numerics import jit as numba
from siltandem.numerics.kernel_cache import drop_stale_kernels

# before any kernel of this module is loaded from numba's cache (numerics/kernel_cache.py)
drop_stale_kernels(Path(__file__).resolve().parents[1], once=True)

from siltandem.laws.field_emission import rtsafe_step  # noqa: E402
from siltandem.numerics.series import EXP_TAIL  # noqa: E402

__all__ = ["FERMI_FORM", "fermi_rows", "fermi_scalar", "side_charge_integral", "fermi_split",
           "fermi_current", "fermi_inverse", "fermi_slope_range", "fermi_currents", "fermi_voltages",
           "fermi_slope_ranges"]

#: the depletion-form code (column 4 of an isotype parameter row) of this law
FERMI_FORM = 3.0
#: columns beyond laws/compiled_isotype.py's: the barrier phi / kT, each side's reduced Fermi level
#: above its band edge (NaN: Boltzmann), the reduced sheet charge, the occupancy (1 Fermi-Dirac,
#: 0 Boltzmann), the zero-bias slope dJ/dV [A m^-2 V^-1] and the flat-band current [A m^-2]
PHI, ETA1, ETA2, SHEET, OCCUPANCY, SLOPE0, FLAT = 10, 11, 12, 13, 14, 15, 16
#: CPU time [s] this law's kernels took interpreted (numerics/jit.py) in one `run` of the layer dual
#: (1.1-1.2 s; the whole run 2.1-2.3 s, against 1.2 s with numba's cached code loaded at once), far
#: over the interpreted kernels' budget: building the rows switches the process to numba first (so
#: these kernels always run compiled, and their answers are the compiled ones)
INTERPRETED_COST_S = 1.1
#: F_1/2 and F_3/2 at each side's bulk Fermi level (constant per row: the charge integral's
#: normalisation and its x = 0 end), in columns laws/compiled_isotype.py's thermionic-field law uses
#: and this law does not (5-7), and the last
HALF1, THREE1, HALF2, THREE2 = 5, 6, 7, 17
#: the zero-bias bending's column, as in laws/compiled_isotype.py
ZERO = 9
WIDTH = 18

#: the tables of laws/fermi_dirac.py (:func:`_load_tables`): the kernels read them as globals, which
#: numba freezes when it compiles; built at import when the kernels are compiled, and only when the
#: first rows are built when they run interpreted (a plain `run` that meets no Fermi-Dirac side then
#: neither imports scipy.special nor spends 0.07 s on the tables)
_TABLES = _SOMMERFELD = _GAMMA2 = _NODES = _WEIGHTS = None
_LOW = _HIGH = 0.0
_INTERVALS = _DEGREE = 0


def _load_tables():
    global _TABLES, _SOMMERFELD, _GAMMA2, _LOW, _HIGH, _NODES, _WEIGHTS, _INTERVALS, _DEGREE
    if _TABLES is not None:
        return
    from siltandem.laws.fermi_dirac import kernel_tables

    _TABLES, _SOMMERFELD, _GAMMA2, _LOW, _HIGH, _NODES, _WEIGHTS = kernel_tables()
    _INTERVALS, _DEGREE = _TABLES.shape[2], _TABLES.shape[1]


if numba.mode() == "compiled":
    _load_tables()
else:
    # an interpreted process that switches to numba later (its budget spent, or an arithmetic
    # error) compiles every kernel, these included: the tables must exist by then
    numba.before_compile(_load_tables)
_POWERS = np.array([2.0 ** (j + 1.0) for j in (-0.5, 0.5, 1.5)])
_ORDERS = np.array([-0.5, 0.5, 1.5])
_EPS = 2.220446049250313e-16
_TINY = 2.2250738585072014e-308
_ITERATIONS = 200
#: ln of the largest double: above it e^x is inf (the compiled kernels' value; the interpreter would
#: raise, so the kernels test for it and give inf in both forms, numerics/jit.py)
_LOG_MAX = 709.782712893384


@numba.njit(cache=True, inline="always", error_model="numpy")
def _exp(x):
    return math.inf if x > _LOG_MAX else math.exp(x)


@numba.njit(cache=True, error_model="numpy")
def fermi_scalar(k, eta):
    """F_j(eta) for j = (-1/2, 1/2, 3/2)[k]: laws/fermi_dirac.py ``fermi_integral`` for one point."""
    if eta != eta:
        return math.nan
    if eta < _LOW:
        e = math.exp(eta)
        return e - e * e / _POWERS[k]
    if eta > 1e100:                     # F_3/2 overflows near 1e123: no bending comes near
        return math.inf
    if eta > _HIGH:
        inv2 = 1.0 / (eta * eta)
        series = 0.0
        for t in range(_SOMMERFELD.shape[1] - 1, -1, -1):
            series = (series + _SOMMERFELD[k, t]) * inv2
        return eta ** (_ORDERS[k] + 1.0) / _GAMMA2[k] * (1.0 + series)
    index = min(int(eta - _LOW), _INTERVALS - 1)
    u = 2.0 * (eta - (_LOW + index)) - 1.0
    b1 = 0.0
    b2 = 0.0
    two_u = 2.0 * u
    for m in range(_DEGREE - 1, 0, -1):
        b1, b2 = two_u * b1 - b2 + _TABLES[k, m, index], b1
    return u * b1 - b2 + _TABLES[k, 0, index]


@numba.njit(cache=True, error_model="numpy")
def side_charge_integral(x, eta, half, three):
    """(g, dg/dx) of one side at reduced bending x (> 0 toward accumulation): Fermi-Dirac with
    reduced Fermi level eta, ``half`` = F_1/2(eta) and ``three`` = F_3/2(eta); Boltzmann
    (e^x - 1 - x, e^x - 1) for eta NaN."""
    if eta != eta:
        if abs(x) < 0.5:
            total = 0.0
            for k in range(EXP_TAIL.size - 1, -1, -1):
                total = total * x + EXP_TAIL[k]
            return x * x * total, math.expm1(x)
        if x > _LOG_MAX:
            return math.inf, math.inf
        return math.expm1(x) - x, math.expm1(x)
    if abs(x) < 1.0:
        g = 0.0
        dg = 0.0
        for k in range(_NODES.size):
            t = 0.5 * x * (1.0 + _NODES[k])
            w = 0.5 * x * _WEIGHTS[k]
            f = fermi_scalar(0, eta + t)
            g += w * (x - t) * f
            dg += w * f
        return g / half, dg / half
    g = fermi_scalar(2, eta + x) - three - x * half
    dg = fermi_scalar(1, eta + x) - half
    return g / half, dg / half


@numba.njit(cache=True, inline="always", error_model="numpy")
def _side_charge(x, weight, eta, half, three):
    """sign(x) sqrt(weight g(x)) and its x-derivative (laws/interface_charge.py _side_charge; at
    x = 0 the slope sqrt(weight g''(0)/2), g''(0) = F_-1/2(eta)/F_1/2(eta), 1 for Boltzmann)."""
    g, dg = side_charge_integral(x, eta, half, three)
    root = math.sqrt(weight * max(g, 0.0))
    if root > 0.0:
        slope = weight * abs(dg) / (2.0 * root)
    else:
        c = 1.0 if eta != eta else fermi_scalar(0, eta) / half
        slope = math.sqrt(weight * c / 2.0)
    if x > 0.0:
        return root, slope
    if x < 0.0:
        return -root, slope
    return 0.0, slope


@numba.njit(cache=True, inline="always", error_model="numpy")
def _balance(v1, vb, p):
    """q1(v1) - q2(vb - v1) - s, its v1-derivative and the two charge slopes (L', R')."""
    q1, d1 = _side_charge(v1, p[1], p[ETA1], p[HALF1], p[THREE1])
    q2, d2 = _side_charge(-(vb - v1), 1.0, p[ETA2], p[HALF2], p[THREE2])
    return q1 + q2 - p[SHEET], d1 + d2, d1, d2


@numba.njit(cache=True, error_model="numpy")
def fermi_split(vb, p, start):
    """The accumulation-side bending v1 (reduced) at the reduced barrier voltage vb >= 0 (NaN
    otherwise): the root of the rising balance, in [0, vb] without a sheet charge, else bracketed
    from [-1, vb + 1] by doubling the ends (laws/interface_charge.py bending_split); then rtsafe
    from ``start`` (NaN: the middle)."""
    if not (vb >= 0.0) or not math.isfinite(vb):
        return math.nan
    if p[SHEET] == 0.0:
        # no sheet charge: f(0) = q2(-vb) <= 0 <= q1(vb) = f(vb), the root lies in [0, vb] (ends
        # not evaluated)
        if vb == 0.0:
            return 0.0
        lo, hi, f_lo, f_hi = 0.0, vb, -1.0, 1.0
    else:
        lo, hi, f_lo, f_hi = _widen(vb, p)
    if f_lo == 0.0:
        return lo
    if f_hi == 0.0:
        return hi
    if not (f_lo < 0.0 and f_hi > 0.0):
        return math.nan
    x = start if (start > lo and start < hi) else 0.5 * (lo + hi)
    dx_old = dx = hi - lo
    for _ in range(_ITERATIONS):
        f, df, _, _ = _balance(x, vb, p)
        if f == 0.0:
            break
        if f < 0.0:
            lo = x
        else:
            hi = x
        newton = x - f / df if df > 0.0 else math.nan
        if abs(newton - x) <= 4.0 * _EPS * abs(x) + _TINY:
            x = newton
            break
        x, dx, dx_old = rtsafe_step(x, newton, f, df, lo, hi, dx, dx_old)
        if abs(dx) <= 4.0 * _EPS * abs(x) + _TINY or hi <= lo:
            break
    return x


@numba.njit(cache=True, error_model="numpy")
def _widen(vb, p):
    """(lo, hi, f(lo), f(hi)) from [-1, vb + 1], doubling the ends until the balance changes sign
    (laws/interface_charge.py bending_split)."""
    lo, hi = -1.0, vb + 1.0
    f_lo = f_hi = math.nan
    for _ in range(60):
        f_lo = _balance(lo, vb, p)[0]
        f_hi = _balance(hi, vb, p)[0]
        grow = False
        if f_lo > 0.0:
            lo = 2.0 * lo
            grow = True
        if f_hi < 0.0:
            hi = 2.0 * hi
            grow = True
        if not grow:
            break
    return lo, hi, f_lo, f_hi


@numba.njit(cache=True, inline="always", error_model="numpy")
def _expit(a):
    if a >= 0.0:
        return 1.0 / (1.0 + math.exp(-a))
    e = math.exp(a)
    return e / (1.0 + e)


@numba.njit(cache=True, inline="always", error_model="numpy")
def _occupancy(x, v, p):
    """(J, and the weights of (1 - u) and u in dJ/dv) [A m^-2], a = x - phi: Fermi-Dirac
    A T^2 (ln(1 + sigma(a) expm1(v)), sigma(a + v), sigma(a)); Boltzmann A T^2 e^a (expm1(v),
    e^v, 1)."""
    if p[OCCUPANCY] != 0.0:
        a = x - p[PHI]
        scale = math.exp(p[2] + p[PHI])
        u = _expit(a) * math.expm1(v)
        # where u nears -1: ln(sigma(a) e^v + sigma(-a)), a sum of positive terms
        if u >= -0.5:
            j = math.log1p(u)
        else:
            t = _expit(a) * _exp(v) + _expit(-a)
            j = math.log(t) if t > 0.0 else -math.inf
        return scale * j, scale * _expit(a + v), scale * _expit(a)
    base = p[2] + x
    em1 = math.expm1(v)
    j = math.copysign(_exp(base + math.log(abs(em1))), em1) if em1 != 0.0 else 0.0
    return j, _exp(base + v), _exp(base)


@numba.njit(cache=True, inline="always", error_model="numpy")
def _current_at(v, p, start):
    """(J [A m^-2], dJ/dv per reduced volt, v1) at the reduced voltage v."""
    vb = p[0] - v
    x = fermi_split(vb, p, start)
    if x != x:
        return math.nan, math.nan, math.nan
    j, upper, lower = _occupancy(x, v, p)
    _, _, d1, d2 = _balance(x, vb, p)
    u = d2 / (d1 + d2)
    return j, upper * (1.0 - u) + lower * u, x


@numba.njit(cache=True, error_model="numpy")
def fermi_current(voltage, p):
    """J [A m^-2] and dJ/dV [A m^-2 V^-1] at the interface voltage V [V] (> 0 lowers the
    barrier); NaN beyond flat band."""
    j, slope, _ = _current_at(voltage / p[3], p, p[ZERO])
    return j, slope / p[3]


@numba.njit(cache=True, error_model="numpy")
def _prepare(rows):
    """Fill the derived columns of each row: the zero-bias bending, the zero-bias slope and the
    flat-band current. Returns the rows (an interpreted kernel that returns None counts as failed,
    numerics/jit.py)."""
    for r in range(rows.shape[0]):
        p = rows[r]
        p[ZERO] = fermi_split(p[0], p, math.nan)
        _, slope, _ = _current_at(0.0, p, p[ZERO])
        p[SLOPE0] = slope / p[3]
        p[FLAT] = _current_at(p[0], p, math.nan)[0]
    return rows


def fermi_rows(*, built_in_V, alpha, barrier_eV, richardson_A_m2_K2, temperature_K, direction,
               accumulation_fermi_eV=None, depletion_fermi_eV=None, sheet_charge=0.0, depletion="exact",
               width=WIDTH):
    """Parameter rows (B, width >= 18) of this law from the element's (B, 1) numbers (Fermi levels
    above the band edge [eV], None for a Boltzmann side; the reduced sheet charge); the depletion
    side is always the full one (``depletion`` "exact", the only form this law has)."""
    if depletion != "exact":
        raise ValueError(f"the general isotype law has the exact depletion side only, not {depletion!r}")
    if _TABLES is None:
        _load_tables()
    if numba.mode() == "interpreted":
        # this law alone would overrun the interpreted kernels' budget: switch now, not after
        numba.compile_all()
    from siltandem.constants import thermal_voltage_V

    optional = [np.nan if e is None else e for e in (accumulation_fermi_eV, depletion_fermi_eV)]
    arrays = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (
        built_in_V, alpha, barrier_eV, richardson_A_m2_K2, temperature_K, direction, *optional,
        sheet_charge)))
    vbi, alpha, barrier, rich, temp, sign, eta1, eta2, sheet = (np.ravel(a) for a in arrays)
    vt = thermal_voltage_V(temp)
    rows = np.zeros((vbi.size, width))
    rows[:, 0] = vbi / vt
    rows[:, 1] = alpha
    rows[:, 2] = np.log(rich) + 2.0 * np.log(temp) - barrier / vt
    rows[:, 3] = vt
    rows[:, 4] = FERMI_FORM
    rows[:, 7] = np.inf
    rows[:, 8] = sign
    rows[:, PHI] = barrier / vt
    rows[:, ETA1] = eta1 / vt
    rows[:, ETA2] = eta2 / vt
    rows[:, SHEET] = sheet
    for half, three, eta in ((HALF1, THREE1, rows[:, ETA1]), (HALF2, THREE2, rows[:, ETA2])):
        rows[:, half] = [fermi_scalar(1, e) for e in eta]
        rows[:, three] = [fermi_scalar(2, e) for e in eta]
    rows[:, OCCUPANCY] = 1.0 if (accumulation_fermi_eV is not None or depletion_fermi_eV is not None) else 0.0
    _prepare(rows)
    return rows


@numba.njit(cache=True, error_model="numpy")
def _joint_newton(target, scale, v, x, lo, hi, p):
    """(v, v1) with balance(v1; vbi - v) = 0 and asinh(J(v, v1)/scale) = target by Newton's method
    on the pair (the 2 x 2 Jacobian: the balance's slopes d1 + d2 in v1 and d2 in v; dJ/dv =
    A T^2 sigma(a + v), dJ/dv1 = A T^2 (sigma(a + v) - sigma(a)), the occupancy weights, for
    Boltzmann occupancy the same with e^(a + v), e^a), from a split solved at the start; (NaN, NaN)
    where a step leaves [lo, hi] or 40 steps do not settle to rounding."""
    vbi = p[0]
    for _ in range(40):
        f1, a12, _, a11 = _balance(x, vbi - v, p)
        j, upper, lower = _occupancy(x, v, p)
        r = j / scale
        f2 = math.asinh(r) - target
        if f1 == 0.0 and f2 == 0.0:
            return v, x
        factor = 1.0 / (scale * math.sqrt(1.0 + r * r))
        a21, a22 = upper * factor, (upper - lower) * factor
        det = a11 * a22 - a12 * a21
        if not (det != 0.0 and math.isfinite(det)):
            return math.nan, math.nan
        dv = (f1 * a22 - a12 * f2) / det
        dx = (a11 * f2 - a21 * f1) / det
        v_new, x_new = v - dv, x - dx
        if not (v_new >= lo and v_new <= hi and math.isfinite(x_new)):
            return math.nan, math.nan
        settled = (abs(dv) <= 4.0 * _EPS * abs(v_new) + _TINY
                   and abs(dx) <= 4.0 * _EPS * abs(x_new) + 1e-300)
        v, x = v_new, x_new
        if settled:
            return v, x
    return math.nan, math.nan


@numba.njit(cache=True, error_model="numpy")
def fermi_inverse(current, p):
    """V [V] and dJ/dV [A m^-2 V^-1] at the current density J [A m^-2]; NaN above the flat-band
    current and for a non-finite J (laws/interface_charge.py general_voltage)."""
    if not math.isfinite(current):
        return math.nan, math.nan
    vbi, vt, flat = p[0], p[3], p[FLAT]
    if current > flat:
        return math.nan, math.nan
    if current == flat:
        j, slope, _ = _current_at(vbi, p, math.nan)
        return vbi * vt, slope / vt
    if current == 0.0:
        return 0.0, p[SLOPE0]
    scale = abs(flat) if flat != 0.0 else 1.0
    target = math.asinh(current / scale)
    x = p[ZERO]
    if current > 0.0:
        lo, hi = 0.0, vbi
    else:
        lo, hi = -1.0, 0.0
        for _ in range(200):
            j, _, x_lo = _current_at(lo, p, x)
            if not (j > current):
                break
            hi = lo
            x = x_lo
            lo = 2.0 * lo - 1.0
    # first guess: J = J0 expm1(v) with J0 = the zero-bias slope (per reduced volt; the law's
    # shape for a barrier that moves little), else the middle of the bracket
    ratio = current / (p[SLOPE0] * vt)
    v = math.log1p(ratio) if ratio > -0.5 else math.nan
    if not (v > lo and v < hi):
        v = 0.5 * (lo + hi)
    # Newton's method on both unknowns (v, v1) at once; where it leaves the bracket or does not
    # settle, the nested search below (the split solved at each v) takes over from the start
    x = fermi_split(vbi - v, p, x)
    v_joint, x_joint = _joint_newton(target, scale, v, x, lo, hi, p)
    if v_joint == v_joint:
        j, slope, x = _current_at(v_joint, p, x_joint)
        return v_joint * vt, slope / vt
    dx_old = dx = hi - lo
    slope = math.nan
    for _ in range(_ITERATIONS):
        j, slope, x = _current_at(v, p, x)
        r = j / scale
        value = math.asinh(r) - target
        dvalue = slope / scale / math.sqrt(1.0 + r * r)
        if value == 0.0 or value != value:
            break
        if value < 0.0:
            lo = v
        else:
            hi = v
        newton = v - value / dvalue if dvalue > 0.0 else math.nan
        if abs(newton - v) <= 4.0 * _EPS * abs(v) + _TINY:
            v = newton
            j, slope, x = _current_at(v, p, x)
            break
        v, dx, dx_old = rtsafe_step(v, newton, value, dvalue, lo, hi, dx, dx_old)
        if abs(dx) <= 4.0 * _EPS * abs(v) + _TINY or hi <= lo:
            j, slope, x = _current_at(v, p, x)
            break
    return v * vt, slope / vt


@numba.njit(cache=True, error_model="numpy")
def fermi_slope_range(v_low, v_high, p):
    """Smallest and largest dJ/dV [A m^-2 V^-1] over [v_low, v_high] [V], an enclosure
    (laws/interface_charge.py general_slope_range: L' and R' each monotone, u = R'/(L' + R') between
    the corners of their end values, the occupancy weights monotone in V, the bound linear in u);
    NaN where an end lies outside."""
    vt = p[3]
    v_lo, v_hi = v_low / vt, v_high / vt
    x_lo = fermi_split(p[0] - v_lo, p, p[ZERO])
    x_hi = fermi_split(p[0] - v_hi, p, x_lo)
    if x_lo != x_lo or x_hi != x_hi:
        return math.nan, math.nan
    _, _, l_lo, r_lo = _balance(x_lo, p[0] - v_lo, p)
    _, _, l_hi, r_hi = _balance(x_hi, p[0] - v_hi, p)
    r_min, r_max = min(r_lo, r_hi), max(r_lo, r_hi)
    l_min, l_max = min(l_lo, l_hi), max(l_lo, l_hi)
    u_min = r_min / (r_min + l_max)
    u_max = r_max / (r_max + l_min)
    _, up_lo, low_lo = _occupancy(x_lo, v_lo, p)
    _, up_hi, low_hi = _occupancy(x_hi, v_hi, p)
    smallest = min(up_lo * (1 - u_min) + low_hi * u_min, up_lo * (1 - u_max) + low_hi * u_max)
    largest = max(up_hi * (1 - u_min) + low_lo * u_min, up_hi * (1 - u_max) + low_lo * u_max)
    return smallest * (1.0 - 1e-9) / vt, largest * (1.0 + 1e-9) / vt


@numba.njit(cache=True, error_model="numpy")
def fermi_currents(params, voltage):
    """:func:`fermi_current` at voltages (B, N), parameter rows (B, P) or (1, P)."""
    rows, n = voltage.shape
    j = np.empty((rows, n))
    slope = np.empty((rows, n))
    for b in range(rows):
        p = params[0] if params.shape[0] == 1 else params[b]
        for i in range(n):
            j[b, i], slope[b, i] = fermi_current(voltage[b, i], p)
    return j, slope


@numba.njit(cache=True, error_model="numpy")
def fermi_voltages(params, current):
    """:func:`fermi_inverse` at currents (B, N), parameter rows (B, P) or (1, P)."""
    rows, n = current.shape
    v = np.empty((rows, n))
    slope = np.empty((rows, n))
    for b in range(rows):
        p = params[0] if params.shape[0] == 1 else params[b]
        for i in range(n):
            v[b, i], slope[b, i] = fermi_inverse(current[b, i], p)
    return v, slope


@numba.njit(cache=True, error_model="numpy")
def fermi_slope_ranges(params, v_low, v_high):
    """:func:`fermi_slope_range` over (B, N) arrays, parameter rows (B, P) or (1, P)."""
    rows, n = v_low.shape
    low = np.empty((rows, n))
    high = np.empty((rows, n))
    for b in range(rows):
        p = params[0] if params.shape[0] == 1 else params[b]
        for i in range(n):
            low[b, i], high[b, i] = fermi_slope_range(v_low[b, i], v_high[b, i], p)
    return low, high
