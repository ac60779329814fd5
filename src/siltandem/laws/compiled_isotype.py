"""The isotype-interface law compiled (numba): forward J(V) with dJ/dV and inverse V(J), one entry
at a time, for thermionic emission (laws/thermionic.py) and thermionic-field emission
(laws/field_emission.py), with the depletion side in any of its three forms (plain, kT/q tail, or
the exact Boltzmann side).

The numpy laws stay the reference; these are the same equations in scalar form, so that the fused
compiled pass of a string (laws/compiled.py ``element_voltages``) inverts an interface without
Python-level array steps. tests/test_compiled_isotype.py checks them against the numpy laws.

Reduced units as in laws/thermionic.py (voltages in kT/q, energies in kT). With x = v1 the
accumulation-side bending, everything is explicit in x:

* field bending w(x) = alpha (e^x - 1 - x) (the first integral of Poisson's equation on side 1);
* depletion-side bending y: y = w + t (closed forms, t = 0 plain, 1 tail), or the root y >= 0 of
  e^-y - 1 + y = w (the exact Boltzmann side; Newton's method from an upper bound, which a
  convex increasing function approaches monotonically);
* barrier voltage vb(x) = x + y, so v = vbi - vb(x) and J/P = e^x expm1(v) G(w), G = 1 for
  thermionic emission, the tunnelling gain of laws/field_emission.py otherwise.

The inverse solves asinh(J(x)/P) = asinh(J/P) for x on [0, max(ln(2|J|/P), vbi + ln 2)] (the
bracket of laws/thermionic.py isotype_voltage), by Newton's method safeguarded by the bracket
('rtsafe', W. H. Press et al., Numerical Recipes, 3rd ed., Cambridge 2007, sec. 9.4); the
forward law solves the charge balance w(x) = y-form(vb - x) for x on [0, vb] the same way.

References
----------
.. [1] S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley (2007) (field of a
   Boltzmann space-charge layer).
.. [2] A. Chandra, L. F. Eastman, Solid-State Electron. 23 (1980) 599 (thermionic emission over
   an isotype heterointerface).
.. [3] K. Yang, J. R. East, G. I. Haddad, Solid-State Electron. 36 (1993) 321 (thermionic-field
   emission across the spike).
"""
import math
from pathlib import Path

import numpy as np

from siltandem.numerics import jit as numba
from siltandem.numerics.kernel_cache import drop_stale_kernels

# before any kernel of this module is loaded from numba's cache (numerics/kernel_cache.py)
drop_stale_kernels(Path(__file__).resolve().parents[1], once=True)

from siltandem.laws.field_emission import (exact_depletion, g_minus as _g_minus, gain_point,  # noqa: E402
                                           gain_slope_range, rtsafe_step)
# rows of the general law (Fermi-Dirac sides, sheet charge) go to its own kernels
from siltandem.laws.compiled_fermi import (FERMI_FORM, fermi_current, fermi_inverse,  # noqa: E402
                                           fermi_slope_range)
# thermionic-field rows with a Fermi-Dirac accumulation side: its charge integral
from siltandem.laws import compiled_field_fermi as field_fermi  # noqa: E402

__all__ = ["ISOTYPE_COLUMNS", "FORMS", "isotype_rows", "isotype_current", "isotype_inverse",
           "isotype_currents", "isotype_voltages", "EXPANSION_COLUMN", "ROW_WIDTH", "fill_expansion",
           "element_inverse"]

#: depletion-side forms, as the law's parameter row stores them
FORMS = {"plain": 0.0, "tail": 1.0, "exact": 2.0}
#: columns of an isotype parameter row: reduced Vbi, alpha, log P, kT/q, form, transport
#: (0 thermionic, 1 thermionic-field), E00/kT, spike depth/kT, direction (+1/-1), the
#: accumulation-side bending at zero bias (reduced), and log G and dlogG/dw there (the inverse's
#: first Newton step, taken from the zero-bias bending, needs no quadrature of its own); then the
#: columns of a Fermi-Dirac accumulation side (laws/compiled_field_fermi.py, zero for Boltzmann)
ISOTYPE_COLUMNS = field_fermi.COLUMNS
ZERO_BIAS_COLUMN = 9
ZERO_BIAS_GAIN_COLUMN = 10
#: the expansion about zero bias (:func:`fill_expansion`) in the columns from here on, after the 18
#: of a Fermi-Dirac row (laws/compiled_fermi.py): the current scale J_s = Vt dJ/dV(0) [A m^-2], the
#: radius in j = J/J_s (0: no expansion), the coefficients a2..a5 of v(j) = j + a2 j^2 + ... + a5 j^5
#: (v = V/Vt), the law voltages [V] -h Vt and +h Vt it was fitted over, and the law's slope range
#: dJ/dV over them
EXPANSION_COLUMN = 18
#: the width a row needs for the expansion
ROW_WIDTH = EXPANSION_COLUMN + 10
#: radii h in reduced voltage tried in turn (the first whose check passes is kept) and the check's
#: relative tolerance
EXPANSION_RADII = (1e-3, 1e-4, 1e-5)
EXPANSION_TOLERANCE = 4e-14

_EPS = 2.220446049250313e-16
_TINY = 2.2250738585072014e-308
_ITERATIONS = 200
_NODES, _WEIGHTS = np.polynomial.legendre.leggauss(16)
_LARGE = 1e8          # above this |u| asinh(u) = sign(u) (ln 2 + ln|u|) to rounding


def isotype_rows(*, built_in_V, alpha, barrier_eV, richardson_A_m2_K2, temperature_K, form,
                 transport, field_energy_eV, spike_eV, direction, width=ISOTYPE_COLUMNS,
                 accumulation_fermi_eV=None):
    """Parameter rows (B, width) of the compiled law from the element's (B, 1) numbers.

    ``form`` "plain", "tail" or "exact"; ``transport`` "thermionic" or "thermionic-field";
    the spike depth NaN means no limit (inf). The prefactor is log(A T^2) - q phi / kT, as in
    laws/thermionic.py. ``accumulation_fermi_eV`` (thermionic-field on the exact side only): the
    accumulation side's bulk Fermi level above its band edge [eV], whose charge is then Fermi-Dirac
    (laws/field_emission_fermi.py, compiled through laws/compiled_field_fermi.py); None: Boltzmann.
    """
    from siltandem.constants import thermal_voltage_V

    fermi = np.nan if accumulation_fermi_eV is None else accumulation_fermi_eV
    arrays = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (
        built_in_V, alpha, barrier_eV, richardson_A_m2_K2, temperature_K, field_energy_eV,
        spike_eV, direction, fermi)))
    vbi, alpha, barrier, rich, temp, e00, spike, sign, fermi = (np.ravel(a) for a in arrays)
    vt = thermal_voltage_V(temp)
    rows = np.zeros((vbi.size, width))
    rows[:, 0] = vbi / vt
    rows[:, 1] = alpha
    rows[:, 2] = np.log(rich) + 2.0 * np.log(temp) - barrier / vt
    rows[:, 3] = vt
    rows[:, 4] = FORMS[form]
    field = transport == "thermionic-field"
    rows[:, 5] = 1.0 if field else 0.0
    rows[:, 6] = e00 / vt if field else 0.0
    rows[:, 7] = np.where(np.isnan(spike), np.inf, spike / vt) if field else np.inf
    rows[:, 8] = sign
    if accumulation_fermi_eV is not None:
        if not (field and form == "exact"):
            raise ValueError("a Fermi-Dirac accumulation side in these rows needs transport "
                             f"\"thermionic-field\" and form \"exact\", not {transport!r}, {form!r}")
        field_fermi.fill_fermi_field_columns(rows, fermi / vt)
    rows[:, ZERO_BIAS_COLUMN] = zero_bias_bending(rows)
    _zero_bias_gain(rows)
    return rows


@numba.njit(cache=True, error_model="numpy")
def _zero_bias_gain(params):
    """Fill the zero-bias gain columns (log G, dlogG/dw at the zero-bias bending) of rows (R, P);
    returns the rows (numerics/jit.py takes an interpreted kernel returning None as failed)."""
    for r in range(params.shape[0]):
        p = params[r]
        w = _barrier(p[ZERO_BIAS_COLUMN], p)[2]
        p[ZERO_BIAS_GAIN_COLUMN], p[ZERO_BIAS_GAIN_COLUMN + 1] = _gain(w, p)
    return params


# ---------------------------------------------------------------------------------------------
# scalar pieces (reduced units)

@numba.njit(cache=True, inline="always", error_model="numpy")
def _bending_terms(alpha, x):
    """(alpha (e^x - 1 - x), alpha (e^x - 1)) without cancellation (series below 0.5) and
    without overflow of e^x alone."""
    if abs(x) < 0.5:
        term, total = x * x / 2.0, 0.0
        for k in range(3, 20):
            total += term
            term *= x / k
        return alpha * total, alpha * math.expm1(x)
    if x >= 700.0:
        a_exp = math.exp(math.log(alpha) + x)
        return a_exp - alpha - alpha * x, a_exp - alpha
    a_em1 = alpha * math.expm1(x)
    return a_em1 - alpha * x, a_em1


@numba.njit(cache=True, inline="always", error_model="numpy")
def _field_terms(x, p):
    """(w, A) of row p at bending x: :func:`_bending_terms` (Boltzmann accumulation side), or the
    Fermi-Dirac side's of laws/compiled_field_fermi.py where the row is marked so."""
    if p[field_fermi.FLAG] != 0.0:
        return field_fermi.fermi_field_terms(x, p)
    return _bending_terms(p[1], x)


@numba.njit(cache=True, inline="always", error_model="numpy")
def _flat_root(p):
    """sqrt(alpha c1): dy/dx of the exact depletion side at flat band (c1 = 1 for Boltzmann)."""
    if p[field_fermi.FLAG] != 0.0:
        return math.sqrt(p[field_fermi.FLAT_ROOT_SQUARED])
    return math.sqrt(p[1])


@numba.njit(cache=True, inline="always", error_model="numpy")
def _barrier(x, p):
    """(vb(x), dvb/dx, w(x), alpha (e^x - 1), s) of row p at accumulation bending x: s is
    1 - e^-y for the exact depletion side, 1 for the closed forms."""
    w, a_em1 = _field_terms(x, p)
    form = p[4]
    if form == 2.0:
        y, s = exact_depletion(w)
        if s > 0.0:
            return x + y, 1.0 + a_em1 / s, w, a_em1, s
        # at flat band: dy/dx = sqrt(alpha) (y = x sqrt(alpha) to first order; alpha c1 for a
        # Fermi-Dirac side)
        return x + y, 1.0 + _flat_root(p), w, a_em1, s
    return x + w + form, 1.0 + a_em1, w, a_em1, 1.0


@numba.njit(cache=True, inline="always", error_model="numpy")
def _gain(w, p):
    """log G and dlogG/dw of the tunnelling gain (0, 0 for thermionic emission)."""
    if p[5] == 0.0:
        return 0.0, 0.0
    return gain_point(w, p[6], p[7], _NODES, _WEIGHTS)


@numba.njit(cache=True, inline="always", error_model="numpy")
def _slope(v, x, a_em1, s, p, log_g, dlog):
    """dJ/dV [A m^-2 V^-1] at reduced voltage v and bending x: the thermionic slope
    (P e^x / Vt) ((1 - q) + q e^v), q = A/(A + s) (s = 1 for the closed forms: q = A/(1 + A)),
    times G, minus J (dlogG/dw) A (1 - q) / Vt for the tunnelling gain's fall with V (log G and
    dlogG/dw at this point given: the caller has them)."""
    total = a_em1 + s
    if total > 0.0:
        q, rest = a_em1 / total, s / total
    else:                                   # flat band of the exact side: v1 = v2/sqrt(alpha)
        root = _flat_root(p)
        q, rest = root / (1.0 + root), 1.0 / (1.0 + root)
    base = p[2] + x + log_g - math.log(p[3])
    slope = rest * math.exp(base) + q * math.exp(base + v)
    if dlog != 0.0:
        em1 = math.expm1(v)
        j_over = math.copysign(math.exp(base + math.log(abs(em1))), em1) if em1 != 0.0 else 0.0
        slope -= j_over * dlog * a_em1 * rest
    return slope


@numba.njit(cache=True, error_model="numpy")
def split(vb, p):
    """The accumulation-side bending x (reduced) at the reduced barrier voltage vb >= t: the
    root on [0, vb - t] of w(x) = vb - x - t (closed forms) or w(x) = e^-(vb-x) - 1 + (vb - x)
    (exact), the difference rising in x, by rtsafe from the middle of the bracket."""
    form = p[4]
    tail = form if form < 2.0 else 0.0
    lo, hi = 0.0, vb - tail
    x = 0.5 * (lo + hi)
    dx_old = dx = hi - lo
    for _ in range(_ITERATIONS):
        if hi <= lo:
            break
        w, a_em1 = _field_terms(x, p)
        if form == 2.0:
            g, s = _g_minus(vb - x)
            f, df = w - g, a_em1 + s
        else:
            f, df = w + x + tail - vb, 1.0 + a_em1
        if f == 0.0:
            break
        if f < 0.0:
            lo = x
        else:
            hi = x
        newton = x - f / df if df > 0.0 else math.nan
        if abs(newton - x) <= 4.0 * _EPS * abs(x) + _TINY:    # converged to rounding
            x = newton
            break
        x, dx, dx_old = rtsafe_step(x, newton, f, df, lo, hi, dx, dx_old)
        if abs(dx) <= 4.0 * _EPS * abs(x) + _TINY:
            break
    return x


@numba.njit(cache=True, error_model="numpy")
def isotype_current(voltage, p):
    """J [A m^-2] and dJ/dV of the law with row p at the voltage V [V] (V > 0 lowers the
    barrier); NaN beyond flat band (V > Vbi, or V > Vbi - kT/q with the tail)."""
    if p[4] == FERMI_FORM:
        return fermi_current(voltage, p)
    v = voltage / p[3]
    vb = p[0] - v
    form = p[4]
    tail = form if form < 2.0 else 0.0
    if not (vb >= tail - 1e-12) or not math.isfinite(vb):
        return math.nan, math.nan
    vb = max(vb, tail)
    x = split(vb, p)
    w, a_em1 = _field_terms(x, p)
    s = 1.0
    if form == 2.0:
        s = _g_minus(max(vb - x, 0.0))[1]
    log_g, dlog = _gain(w, p)
    em1 = math.expm1(v)
    if em1 == 0.0:
        j = 0.0
    else:
        j = math.copysign(math.exp(p[2] + x + log_g + math.log(abs(em1))), em1)
    return j, _slope(v, x, a_em1, s, p, log_g, dlog)


@numba.njit(cache=True, error_model="numpy")
def zero_bias_bending(params):
    """The accumulation-side bending at zero bias (reduced) of each parameter row (R, P): the
    inverse's starting point and the split of its bracket (forward currents below it)."""
    out = np.empty(params.shape[0])
    for r in range(params.shape[0]):
        p = params[r]
        tail = p[4] if p[4] < 2.0 else 0.0
        out[r] = split(max(p[0], tail), p) if math.isfinite(p[0]) else math.nan
    return out


@numba.njit(cache=True, inline="always", error_model="numpy")
def _asinh_of_log(sign, log_abs):
    """asinh(sign e^log_abs) without overflow."""
    if log_abs > math.log(_LARGE):
        return sign * (math.log(2.0) + log_abs)
    return math.asinh(sign * math.exp(log_abs))


@numba.njit(cache=True, inline="always", error_model="numpy")
def _residual(x, p, target, first):
    """asinh(J(x)/P) - target and its x-derivative (J(x)/P falls with x), and log G and dlnG/dw
    at x; ``first``: x is the zero-bias bending, whose gain the row holds."""
    vb, dvb, w, a_em1, s = _barrier(x, p)
    v = p[0] - vb
    if first:
        log_g, dlog = p[ZERO_BIAS_GAIN_COLUMN], p[ZERO_BIAS_GAIN_COLUMN + 1]
    else:
        log_g, dlog = _gain(w, p)
    em1 = math.expm1(v)
    if em1 == 0.0:
        # at zero bias: u = 0, du/dx = -e^x G e^v dvb (asinh' = 1)
        return -target, -math.exp(x + log_g) * dvb, log_g, dlog
    log_u = x + log_g + math.log(abs(em1))
    sign = 1.0 if em1 > 0.0 else -1.0
    value = _asinh_of_log(sign, log_u) - target
    # d log|u| / dx = 1 + dlogG/dw A - e^v dvb / expm1(v); d asinh(u)/dx = sign(u) |u| that
    # / sqrt(1 + u^2)
    dlog_u = 1.0 + dlog * a_em1 - math.exp(v) * dvb / em1
    if log_u > math.log(_LARGE):
        factor = 1.0
    else:
        u = math.exp(log_u)
        factor = u / math.sqrt(1.0 + u * u)
    return value, sign * dlog_u * factor, log_g, dlog


@numba.njit(cache=True, error_model="numpy")
def isotype_inverse(current, p):
    """V [V] and dJ/dV [A m^-2 V^-1] of the law with row p at the current density J [A m^-2];
    NaN above the flat-band current (and for a non-finite J)."""
    if p[4] == FERMI_FORM:
        return fermi_inverse(current, p)
    if not math.isfinite(current):
        return math.nan, math.nan
    vbi, log_p, vt, form = p[0], p[2], p[3], p[4]
    tail = form if form < 2.0 else 0.0
    ratio = current * math.exp(-log_p) if current != 0.0 else 0.0
    j_max = math.expm1(vbi - tail)
    # the gain at the last evaluated point, kept where the root is that point (thermionic-field
    # emission: the quadrature is the cost; thermionic emission keeps its Newton point, unchanged)
    known_x, known_log_g, known_dlog = math.nan, 0.0, 0.0
    if abs(ratio - j_max) <= 64.0 * _EPS * j_max:
        x = 0.0
    elif ratio > j_max:
        return math.nan, math.nan
    else:
        sign = 1.0 if current > 0.0 else -1.0
        if current == 0.0:
            target = 0.0
        else:
            log_ratio = math.log(abs(current)) - log_p
            target = _asinh_of_log(sign, log_ratio)
        # forward currents lie in [0, x(V=0)], reverse ones in [x(V=0), x_hi]; Newton's method
        # from the zero-bias bending (the residual is nearly linear there for |J| << P)
        x_zero = p[ZERO_BIAS_COLUMN]
        if current > 0.0:
            lo, hi = 0.0, x_zero
        else:
            lo = x_zero
            hi = max(vbi + math.log(2.0), math.log(2.0 * abs(current)) - log_p, x_zero)
        # rtsafe on the falling residual (Numerical Recipes sec. 9.4)
        x = x_zero
        dx_old = dx = hi - lo
        for step in range(_ITERATIONS):
            value, slope, log_g, dlog = _residual(x, p, target, step == 0)
            known_x, known_log_g, known_dlog = x, log_g, dlog
            if value == 0.0 or not math.isfinite(value):
                break
            if value > 0.0:
                lo = x
            else:
                hi = x
            newton = x - value / slope if slope != 0.0 else math.nan
            if abs(newton - x) <= 4.0 * _EPS * abs(x) + _TINY:    # converged to rounding
                if p[5] == 0.0:
                    x = newton
                break
            x, dx, dx_old = rtsafe_step(x, newton, value, slope, lo, hi, dx, dx_old)
            if abs(dx) <= 4.0 * _EPS * abs(x) + _TINY:
                break
    vb, _, w, a_em1, s = _barrier(x, p)
    if x == known_x:
        log_g, dlog = known_log_g, known_dlog
    else:
        log_g, dlog = _gain(w, p)
    # v from J itself where expm1(v) is small (no cancellation in vbi - vb), else vbi - vb
    y = current * math.exp(-log_p - x - log_g)
    if abs(y) < 0.5:
        v = math.log1p(y)
    else:
        v = vbi - vb
    if form < 2.0 and x == 0.0 and not (vbi - vb >= -1e-12):
        return math.nan, math.nan
    return v * vt, _slope(v, x, a_em1, s, p, log_g, dlog)


@numba.njit(cache=True, error_model="numpy")
def isotype_voltages(params, current):
    """:func:`isotype_inverse` at currents (B, N), parameter rows (B, P) or (1, P): (V, dJ/dV)."""
    rows, n = current.shape
    v = np.empty((rows, n))
    slope = np.empty((rows, n))
    for b in range(rows):
        p = params[0] if params.shape[0] == 1 else params[b]
        for i in range(n):
            v[b, i], slope[b, i] = isotype_inverse(current[b, i], p)
    return v, slope


@numba.njit(cache=True, error_model="numpy")
def isotype_currents(params, voltage):
    """:func:`isotype_current` at voltages (B, N), parameter rows (B, P) or (1, P): (J, dJ/dV)."""
    rows, n = voltage.shape
    j = np.empty((rows, n))
    slope = np.empty((rows, n))
    for b in range(rows):
        p = params[0] if params.shape[0] == 1 else params[b]
        for i in range(n):
            j[b, i], slope[b, i] = isotype_current(voltage[b, i], p)
    return j, slope


@numba.njit(cache=True, inline="always", error_model="numpy")
def _end(voltage, p):
    """(x, e^v, A = alpha (e^x - 1), s, log G, w, dlnG/dw) at a law voltage [V] (x NaN outside
    the domain)."""
    v = voltage / p[3]
    vb = p[0] - v
    form = p[4]
    tail = form if form < 2.0 else 0.0
    if not (vb >= tail - 1e-12) or not math.isfinite(vb):
        return math.nan, math.nan, math.nan, math.nan, math.nan, math.nan, math.nan
    vb = max(vb, tail)
    x = split(vb, p)
    w, a_em1 = _field_terms(x, p)
    s = _g_minus(max(vb - x, 0.0))[1] if form == 2.0 else 1.0
    log_g, dlog = _gain(w, p)
    return x, math.exp(v), a_em1, s, log_g, w, dlog


@numba.njit(cache=True, inline="always", error_model="numpy")
def _field_exact_slope_range(x_a, e_a, a_a, s_a, g_a, x_b, e_b, a_b, s_b, g_b, scale, p, w_a, w_b, l_a,
                             l_b):
    """The slope range of thermionic-field emission on the exact depletion side (ends a: low V,
    b: high V). Vt dJ/dV = P e^x G [1 + (e^v - 1)(q - L h)], q = A/(A + s), h = A s/(A + s),
    L = dlnG/dw in the range of field_emission.gain_slope_range over the cell's w (inside
    [0, 1]): e^x G, A, s and h (rising in A and in s) fall as V rises, q lies between
    A_b/(A_b + s_a) and A_a/(A_a + s_b), so q - L h lies in [q_min - L_max h_a, q_max - L_min h_b],
    and the bracket, bilinear in (e^v - 1) and (q - L h), takes its extremes at the corners."""
    l_min, l_max = gain_slope_range(w_b, w_a, p[6], p[7], g_a, l_b, l_a)
    q_min = a_b / (a_b + s_a) if a_b + s_a > 0.0 else 0.0
    q_max = a_a / (a_a + s_b) if a_a + s_b > 0.0 else 1.0
    h_max = a_a * s_a / (a_a + s_a) if a_a + s_a > 0.0 else 0.0
    h_min = a_b * s_b / (a_b + s_b) if a_b + s_b > 0.0 else 0.0
    m_lo, m_hi = q_min - l_max * h_max, q_max - l_min * h_min
    bracket_min, bracket_max = math.inf, -math.inf
    for u in (e_a - 1.0, e_b - 1.0):
        for m in (m_lo, m_hi):
            bracket_min = min(bracket_min, 1.0 + u * m)
            bracket_max = max(bracket_max, 1.0 + u * m)
    low_scale = scale * math.exp(x_b + g_b)      # e^x G at high V: the smaller
    high_scale = scale * math.exp(x_a + g_a)
    smallest = (low_scale if bracket_min >= 0.0 else high_scale) * bracket_min
    largest = (high_scale if bracket_max >= 0.0 else low_scale) * bracket_max
    return smallest - 1e-12 * abs(smallest), largest + 1e-12 * abs(largest)


@numba.njit(cache=True, inline="always", error_model="numpy")
def _field_slope_range(x_a, e_a, a_a, g_a, x_b, e_b, a_b, g_b, scale, p, w_a, w_b, l_a, l_b):
    """laws/field_emission.py field_emission_slope_range (kT/q tail and plain forms; ends a: low
    V, b: high V): Vt dJ/dV = P e^x G [1 + q (e^v - 1)(1 - L)], q = A/(1 + A), L in the range of
    field_emission.gain_slope_range over the cell's w."""
    l_min, l_max = gain_slope_range(w_b, w_a, p[6], p[7], g_a, l_b, l_a)
    q_lo, q_hi = a_b / (1.0 + a_b), a_a / (1.0 + a_a)
    qm_lo, qm_hi = q_lo * (1.0 - l_max), q_hi * (1.0 - l_min)
    bracket_min, bracket_max = math.inf, -math.inf
    for u in (e_a - 1.0, e_b - 1.0):
        for m in (qm_lo, qm_hi):
            bracket_min = min(bracket_min, 1.0 + u * m)
            bracket_max = max(bracket_max, 1.0 + u * m)
    low_scale = scale * math.exp(x_b + g_b)
    high_scale = scale * math.exp(x_a + g_a)
    smallest = (low_scale if bracket_min >= 0.0 else high_scale) * bracket_min
    largest = (high_scale if bracket_max >= 0.0 else low_scale) * bracket_max
    return smallest - 1e-12 * abs(smallest), largest + 1e-12 * abs(largest)


@numba.njit(cache=True, error_model="numpy")
def isotype_slope_range(v_low, v_high, p):
    """Smallest and largest dJ/dV [A m^-2 V^-1] of the law with row p over [v_low, v_high] [V]:
    the compiled form of laws/thermionic.py current_slope_range (thermionic emission, every
    depletion form: e^v1 and A = alpha (e^v1 - 1) fall as V rises, s = 1 - e^-v2 too, and the
    slope's bracket is monotone in each, so its extremes lie at the corners) and of
    laws/field_emission.py field_emission_slope_range (thermionic-field emission, whose bracket is
    linear in dlnG/dw in [0, 1]). NaN where an end lies outside the domain."""
    if p[4] == FERMI_FORM:
        return fermi_slope_range(v_low, v_high, p)
    return _range_from_ends(_end(v_low, p), _end(v_high, p), p)


@numba.njit(cache=True, inline="always", error_model="numpy")
def _range_from_ends(end_a, end_b, p):
    """:func:`isotype_slope_range` from the two ends' :func:`_end` tuples (a: low V, b: high V)."""
    x_a, e_a, a_a, s_a, g_a, w_a, l_a = end_a       # low V: the larger bending
    x_b, e_b, a_b, s_b, g_b, w_b, l_b = end_b
    scale = math.exp(p[2]) / p[3]
    if p[5] != 0.0 and p[4] == 2.0:
        return _field_exact_slope_range(x_a, e_a, a_a, s_a, g_a, x_b, e_b, a_b, s_b, g_b, scale, p,
                                        w_a, w_b, l_a, l_b)
    if p[5] != 0.0:
        return _field_slope_range(x_a, e_a, a_a, g_a, x_b, e_b, a_b, g_b, scale, p, w_a, w_b, l_a, l_b)
    # the weight q = A / (A + s) (s = 1 for the closed forms) lies between these two ends
    root = math.sqrt(p[1])
    total_min, total_max = a_b + s_a, a_a + s_b
    if total_min > 0.0:
        q_min, rest_min = a_b / total_min, s_a / total_min
    else:
        q_min, rest_min = root / (1.0 + root), 1.0 / (1.0 + root)
    if total_max > 0.0:
        q_max, rest_max = a_a / total_max, s_b / total_max
    else:
        q_max, rest_max = root / (1.0 + root), 1.0 / (1.0 + root)
    r_min = min(rest_min + q_min * e_a, rest_max + q_max * e_a)
    r_max = max(rest_min + q_min * e_b, rest_max + q_max * e_b)
    smallest = scale * math.exp(x_b) * r_min
    largest = scale * math.exp(x_a) * r_max
    return smallest * (1.0 - 1e-12), largest * (1.0 + 1e-12)


@numba.njit(cache=True, error_model="numpy")
def isotype_slope_ranges(params, v_low, v_high):
    """:func:`isotype_slope_range` over (B, N) arrays, parameter rows (B, P) or (1, P). Cells of
    a row that share an end with the cell before (the certificate's adjacent cells, in either
    order) reuse that end's evaluation (a split and, for thermionic-field emission, the gain's
    quadrature): the same numbers, about half the work."""
    rows, n = v_low.shape
    low = np.empty((rows, n))
    high = np.empty((rows, n))
    for b in range(rows):
        p = params[0] if params.shape[0] == 1 else params[b]
        if p[4] == FERMI_FORM:
            for i in range(n):
                inside, low[b, i], high[b, i] = neighbourhood_range(v_low[b, i], v_high[b, i], p)
                if not inside:
                    low[b, i], high[b, i] = fermi_slope_range(v_low[b, i], v_high[b, i], p)
            continue
        last_low_v, last_high_v = math.nan, math.nan
        last_low = last_high = _end(math.nan, p)
        for i in range(n):
            v_a, v_b = v_low[b, i], v_high[b, i]
            inside, low[b, i], high[b, i] = neighbourhood_range(v_a, v_b, p)
            if inside:
                continue
            if v_a == last_high_v:
                end_a = last_high
            elif v_a == last_low_v:
                end_a = last_low
            else:
                end_a = _end(v_a, p)
            if v_b == last_low_v:
                end_b = last_low
            elif v_b == last_high_v:
                end_b = last_high
            else:
                end_b = _end(v_b, p)
            low[b, i], high[b, i] = _range_from_ends(end_a, end_b, p)
            last_low_v, last_high_v, last_low, last_high = v_a, v_b, end_a, end_b
    return low, high


# ---------------------------------------------------------------------------------------------
# the law near zero bias: its inverse as a polynomial, its slope over a whole neighbourhood


@numba.njit(cache=True, error_model="numpy")
def _expansion_at(p, radius):
    """The law about zero bias through reduced voltages |v| <= h = ``radius``: (a2, a3, a4, a5,
    j_low, j_high, worst relative misfit) of v(j) = j + a2 j^2 + a3 j^3 + a4 j^4 + a5 j^5 (v = V/Vt,
    j = J/J_s, J_s = Vt dJ/dV(0)), where j(-h) = j_low < 0 < j(h) = j_high. The forward law's
    j(v) = v + b2 v^2 + ... + b5 v^5 through its exact values at v = +-h and +-h/2 (odd and even
    parts apart: two 2 x 2 systems), reverted (M. Abramowitz, I. A. Stegun, Handbook of
    Mathematical Functions, 1964, 3.6.25), then checked against the exact law at v = +-0.75 h
    (misfit NaN where an evaluation fails)."""
    vt, scale = p[3], p[EXPANSION_COLUMN]
    h = radius
    values = np.empty(4)
    for k, v in enumerate((h, -h, 0.5 * h, -0.5 * h)):
        values[k] = isotype_current(v * vt, p)[0] / scale
    if not np.all(np.isfinite(values)):
        return 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, math.nan
    # odd parts: h + b3 h^3 + b5 h^5 at h and h/2; even parts: b2 h^2 + b4 h^4
    o1 = (0.5 * (values[0] - values[1]) - h) / h ** 3
    o2 = (0.5 * (values[2] - values[3]) - 0.5 * h) / (0.125 * h ** 3)
    e1 = 0.5 * (values[0] + values[1]) / h ** 2
    e2 = 0.5 * (values[2] + values[3]) / (0.25 * h ** 2)
    b5 = (o1 - o2) / (0.75 * h * h)
    b3 = o1 - b5 * h * h
    b4 = (e1 - e2) / (0.75 * h * h)
    b2 = e1 - b4 * h * h
    a2 = -b2
    a3 = 2.0 * b2 * b2 - b3
    a4 = -5.0 * b2 ** 3 + 5.0 * b2 * b3 - b4
    a5 = 14.0 * b2 ** 4 - 21.0 * b2 * b2 * b3 + 6.0 * b2 * b4 + 3.0 * b3 * b3 - b5
    worst = 0.0
    for v in (0.75 * h, -0.75 * h):
        j = isotype_current(v * vt, p)[0] / scale
        if not math.isfinite(j):
            return 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, math.nan
        series = j * (1.0 + j * (a2 + j * (a3 + j * (a4 + j * a5))))
        worst = max(worst, abs(series - v) / abs(v))
    return a2, a3, a4, a5, values[1], values[0], worst


@numba.njit(cache=True, error_model="numpy")
def fill_expansion(params):
    """Write each row's expansion about zero bias into its columns from EXPANSION_COLUMN (rows
    (R, >= ROW_WIDTH), in place; returns them; narrower rows are returned as they are): for the
    largest of EXPANSION_RADII (in reduced voltage) whose reverted polynomial meets the exact law
    to EXPANSION_TOLERANCE (relative) at its check points, the coefficients and the current radius
    min(j(h), -j(-h)); else radius 0 (no expansion: :func:`element_inverse` then always inverts
    exactly).

    Why: an interface of two heavily doped layers carries the stack's current with a drop of
    microvolts, where the law is smooth (analytic in V about zero bias; a flat-band start, whose
    depletion side is not, fails the check); the polynomial costs a few multiplications where the
    exact inverse costs a root search with the tunnelling gain's quadrature at every step. The
    coefficients come from the exact forward law (:func:`_expansion_at`), so they carry its own
    rounding; the check at +-0.75 h guards the truncation (next term ~ h^6 against v ~ h). Also
    the law's exact slope range over the whole neighbourhood |V| <= h Vt: a range over a larger
    interval encloses every cell inside it (:func:`neighbourhood_range`)."""
    c = EXPANSION_COLUMN
    if params.shape[1] < ROW_WIDTH:
        return params
    for r in range(params.shape[0]):
        p = params[r]
        p[c:c + 10] = 0.0
        slope = isotype_current(0.0, p)[1]
        if not (math.isfinite(slope) and slope > 0.0 and math.isfinite(p[3])):
            continue
        p[c] = slope * p[3]
        for radius in EXPANSION_RADII:
            a2, a3, a4, a5, j_low, j_high, worst = _expansion_at(p, radius)
            if not worst <= EXPANSION_TOLERANCE:
                continue
            v_lo, v_hi = -radius * p[3], radius * p[3]
            s_lo, s_hi = isotype_slope_range(v_lo, v_hi, p)
            if not (math.isfinite(s_lo) and math.isfinite(s_hi) and s_lo > 0.0):
                continue
            p[c + 1] = min(j_high, -j_low)
            p[c + 2], p[c + 3], p[c + 4], p[c + 5] = a2, a3, a4, a5
            p[c + 6], p[c + 7], p[c + 8], p[c + 9] = v_lo, v_hi, s_lo, s_hi
            break
    return params


@numba.njit(cache=True, error_model="numpy")
def element_inverse(current, p):
    """:func:`isotype_inverse` (V [V], dJ/dV) for the compiled element pass: from the row's
    expansion about zero bias (:func:`fill_expansion`) where |J|/J_s is within its radius, else
    exactly. Rows narrower than ROW_WIDTH must not come here (the pass packs ROW_WIDTH or wider,
    zero beyond a row's own columns: radius 0)."""
    c = EXPANSION_COLUMN
    radius = p[c + 1]
    if radius > 0.0:
        j = current / p[c]
        if abs(j) <= radius:
            a2, a3, a4, a5 = p[c + 2], p[c + 3], p[c + 4], p[c + 5]
            v = j * (1.0 + j * (a2 + j * (a3 + j * (a4 + j * a5))))
            dv = 1.0 + j * (2.0 * a2 + j * (3.0 * a3 + j * (4.0 * a4 + j * 5.0 * a5)))
            return v * p[3], p[c] / (p[3] * dv)
    return isotype_inverse(current, p)


@numba.njit(cache=True, inline="always", error_model="numpy")
def neighbourhood_range(v_low, v_high, p):
    """(inside, low, high): where [v_low, v_high] lies in the inner half of the row's expansion
    neighbourhood (law voltages; a margin far beyond the polynomial's misfit, so a cell whose
    ends the polynomial gave is inside the exact neighbourhood too), the slope range stored for
    the whole neighbourhood (it encloses the cell's)."""
    c = EXPANSION_COLUMN
    if p.size >= ROW_WIDTH and p[c + 1] > 0.0 and v_low >= 0.5 * p[c + 6] and v_high <= 0.5 * p[c + 7]:
        return True, p[c + 8], p[c + 9]
    return False, 0.0, 0.0
