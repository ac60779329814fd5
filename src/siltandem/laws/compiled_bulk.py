"""Compiled scalar form of a uniformly injected silicon base's recombination current and its slope
enclosure (laws/silicon.py bulk_current), read by the subcell law of laws/compiled.py from the
parameter columns BULK_OFFSET.. (F, N, ni^2, A, B_low, bmin, b1, b3, R, n0, p0, N_D + N_A, t, dEg0);
F = 0 is no base law, t = 0 no injection-dependent narrowing.

References
----------
A. Richter et al., Phys. Rev. B 86 (2012) 165202 (intrinsic recombination); P. P. Altermatt et
al., J. Appl. Phys. 97 (2005) 093710 (relative radiative coefficient); A. Schenk, J. Appl. Phys. 84
(1998) 3684 (band-gap narrowing at the carrier densities of the operating point).
"""
import math
from pathlib import Path

from siltandem.laws.silicon import (BULK_COLUMNS, NARROWING_DENSITY_CM3, NARROWING_STEPS, NARROWING_TOLERANCE,
                                    SCHENK_BOHR_RADIUS_CM, SCHENK_ELECTRON, SCHENK_HOLE, SCHENK_RYDBERG_EV,
                                    schenk_band_shift, schenk_band_slope_bounds)
from siltandem.numerics import jit as numba
from siltandem.numerics.kernel_cache import drop_stale_kernels

# before any kernel of this module is loaded from numba's cache (numerics/kernel_cache.py)
drop_stale_kernels(Path(__file__).resolve().parents[1], once=True)

#: first column of the base law in a subcell's parameter row (after Jph..m and 1/Vt)
BULK_OFFSET = 9
_C = 3.0e-29
_DELTA = 0.92
_B2 = 0.54
_B4 = 1.25
#: parameter columns of a subcell with a base law
BULK_WIDTH = BULK_COLUMNS
_SCALE = SCHENK_BOHR_RADIUS_CM ** 3
_E = SCHENK_ELECTRON
_H = SCHENK_HOLE
# the numpy source of laws/silicon.py, compiled for scalars
_band = numba.njit(cache=True, inline="always", error_model="numpy")(schenk_band_shift)
_band_bounds = numba.njit(cache=True, inline="always", error_model="numpy")(schenk_band_slope_bounds)


@numba.njit(cache=True, inline="always", error_model="numpy")
def schenk_shift(electron_cm3, hole_cm3, ions_cm3, reduced_temperature):
    """Schenk's dEg [eV] and d dEg / d dn [eV cm^3] (laws/silicon.py schenk_shift, for scalars)."""
    n, p = electron_cm3 * _SCALE, hole_cm3 * _SCALE
    n_s = n + p
    n_p = _E[0] * n + _H[0] * p
    ions = ions_cm3 * _SCALE
    value_e, slope_e = _band(n, n_s, n_p, ions, reduced_temperature, _E[0], _E[1], _E[2], _E[3], _E[4],
                             _E[5], _E[6], _E[7], _E[8], _E[9])
    value_h, slope_h = _band(p, n_s, n_p, ions, reduced_temperature, _H[0], _H[1], _H[2], _H[3], _H[4],
                             _H[5], _H[6], _H[7], _H[8], _H[9])
    return -SCHENK_RYDBERG_EV * (value_e + value_h), -SCHENK_RYDBERG_EV * _SCALE * (slope_e + slope_h)


@numba.njit(cache=True, inline="always", error_model="numpy")
def slope_bounds(excess_a, excess_b, p):
    """Proven bounds [eV cm^3] of d dEg / d dn over the excess densities between excess_a <=
    excess_b [cm^-3] (laws/silicon.py schenk_slope_bounds for scalars: each band's slope bounded by
    interval arithmetic on factors monotone in dn, schenk_band_slope_bounds; 0 where the shift is
    held, dn <= 0 and dn >= NARROWING_DENSITY_CM3; ends widened by 1e-6, bounds by 1e-10 of the
    cancelling terms for rounding)."""
    if not excess_b > 0.0:
        return 0.0, 0.0
    n0, p0, ions, t = p[BULK_OFFSET + 9], p[BULK_OFFSET + 10], p[BULK_OFFSET + 11], p[BULK_OFFSET + 12]
    x_a = min(max(excess_a * (1.0 - 1e-6), 0.0), NARROWING_DENSITY_CM3)
    x_b = min(max(excess_b * (1.0 + 1e-6), 0.0), NARROWING_DENSITY_CM3)
    n_a, p_a = (n0 + x_a) * _SCALE, (p0 + x_a) * _SCALE
    n_b, p_b = (n0 + x_b) * _SCALE, (p0 + x_b) * _SCALE
    s_a, s_b = n_a + p_a, n_b + p_b
    np_a, np_b = _E[0] * n_a + _H[0] * p_a, _E[0] * n_b + _H[0] * p_b
    i = ions * _SCALE
    lo_e, hi_e, size_e = _band_bounds(n_a, n_b, s_a, s_b, np_a, np_b, i, t, _E[0], _E[1], _E[2], _E[3], _E[4],
                                      _E[5], _E[6], _E[7], _E[8], _E[9])
    lo_h, hi_h, size_h = _band_bounds(p_a, p_b, s_a, s_b, np_a, np_b, i, t, _H[0], _H[1], _H[2], _H[3], _H[4],
                                      _H[5], _H[6], _H[7], _H[8], _H[9])
    unit = SCHENK_RYDBERG_EV * _SCALE
    allowance = 1e-10 * unit * (size_e + size_h)
    low = -unit * (hi_e + hi_h) - allowance
    high = -unit * (lo_e + lo_h) + allowance
    if not excess_a > 0.0 or not excess_b * (1.0 + 1e-6) < NARROWING_DENSITY_CM3:
        low, high = min(low, 0.0), max(high, 0.0)
    return low, high


@numba.njit(cache=True, inline="always", error_model="numpy")
def _closed(u, total, ni2, inverse):
    """(x, g, s, X'): the closed-form excess density at the split u, n p - n0 p0, n + p, dx/du."""
    g = ni2 * math.expm1(u * inverse)
    root = math.sqrt(max(total * total + 4.0 * g, 0.0))
    x = 2.0 * g / (total + root)
    s = total + 2.0 * x
    return x, g, s, ni2 * math.exp(u * inverse) * inverse / s


@numba.njit(cache=True, inline="always", error_model="numpy")
def bulk_state(v, p, inverse):
    """(x, g, s, X', dEg'): excess density, n p - n0 p0, n + p, the closed form's dx/du and
    d dEg / d dn at the split v; with the narrowing on (t > 0) and v > 0, dn = X(v + dEg(dn) - dEg0)
    by Newton steps on ln(n p / ni^2) - (v + dEg - dEg0)/kT from X(v) (laws/silicon.py
    injected_state, the same iteration)."""
    total, ni2, t = p[BULK_OFFSET + 1], p[BULK_OFFSET + 2], p[BULK_OFFSET + 12]
    x, g, s, r = _closed(v, total, ni2, inverse)
    if not (t > 0.0 and x > 0.0):
        return x, g, s, r, 0.0
    n0, p0, ions, shift0 = p[BULK_OFFSET + 9], p[BULK_OFFSET + 10], p[BULK_OFFSET + 11], p[BULK_OFFSET + 13]
    guess = x
    slope = 0.0
    final = False
    for _ in range(NARROWING_STEPS):
        capped = min(guess, NARROWING_DENSITY_CM3)
        shift, slope = schenk_shift(n0 + capped, p0 + capped, ions, t)
        if not guess < NARROWING_DENSITY_CM3:
            slope = 0.0
        u = v + (shift - shift0)
        x, g, s, r = _closed(u, total, ni2, inverse)
        if final:
            break
        product = guess * (total + guess)
        residual = math.log1p(product / ni2) - u * inverse
        rise = (total + 2.0 * guess) / (ni2 + product) - slope * inverse
        new = max(guess - residual / rise, 0.0)
        final = not abs(new - guess) > NARROWING_TOLERANCE * guess
        guess = new
    return x, g, s, r, slope


@numba.njit(cache=True, inline="always", error_model="numpy")
def _screening(s, p):
    """D = 1 + (s/b1)^0.54 + (s/b3)^1.25 and the two parts of dD/ds (falling, rising in s)."""
    b1, b3 = p[BULK_OFFSET + 6], p[BULK_OFFSET + 7]
    t1 = (s / b1) ** _B2
    t3 = (s / b3) ** _B4
    return 1.0 + t1 + t3, _B2 * t1 / s, _B4 * t3 / s


@numba.njit(cache=True, inline="always", error_model="numpy")
def bulk_law(v, p, inverse):
    """J_b and dJ_b/dv of the base law at the quasi-Fermi-level split v."""
    factor, total, a, b_low, bmin, rate = (p[BULK_OFFSET], p[BULK_OFFSET + 1], p[BULK_OFFSET + 3],
                                           p[BULK_OFFSET + 4], p[BULK_OFFSET + 5], p[BULK_OFFSET + 8])
    x, g, s, r, k = bulk_state(v, p, inverse)
    d, fall, rise = _screening(s, p)
    brel = bmin + (1.0 - bmin) / d
    brel_slope = -(1.0 - bmin) * (fall + rise) / (d * d)
    xp = max(x, 0.0)
    power = xp ** _DELTA
    value = g * (a + _C * power + b_low * brel) + rate * g / s
    dvalue = (s * (a + b_low * brel) + 2.0 * g * b_low * brel_slope
              + _C * power * ((1.0 + _DELTA) * total + (2.0 + _DELTA) * xp)
              + rate * (total * total + 2.0 * total * x + 2.0 * x * x) / (s * s))
    return factor * value, factor * dvalue * (r / (1.0 - r * k))


@numba.njit(cache=True, inline="always", error_model="numpy")
def _product(a_lo, a_hi, b_lo, b_hi):
    """Interval product [a] [b]."""
    c1, c2, c3, c4 = a_lo * b_lo, a_lo * b_hi, a_hi * b_lo, a_hi * b_hi
    return min(min(c1, c2), min(c3, c4)), max(max(c1, c2), max(c3, c4))


@numba.njit(cache=True, inline="always", error_model="numpy")
def bulk_slopes(lo, hi, p, inverse):
    """Smallest and largest dJ_b/dv over [lo, hi], a rigorous enclosure (up to rounding, widened
    by 1e-12): dJ_b/dv = F (dP/dx)(dx/dv) with x rising in v and every part monotone in x --
    s (n + p) and g rise; D rises, its slope's two parts fall and rise; the Auger injection part
    C x^0.92 (1.92 N + 2.92 x) rises; the recombination-rate part (N^2 + 2Nx + 2x^2)/s^2 falls;
    dx/dv = n p / (Vt (n + p)) rises (n and p both rise) -- combined by interval products; with
    the injection-dependent narrowing dx/dv = X' / (1 - X' dEg'), dEg' within the proven bounds of
    slope_bounds over [x(lo), x(hi)]."""
    factor, total, a, b_low, bmin, rate = (p[BULK_OFFSET], p[BULK_OFFSET + 1], p[BULK_OFFSET + 3],
                                           p[BULK_OFFSET + 4], p[BULK_OFFSET + 5], p[BULK_OFFSET + 8])
    x_lo, g_lo, s_lo, rate_lo, _ = bulk_state(lo, p, inverse)
    x_hi, g_hi, s_hi, rate_hi, _ = bulk_state(hi, p, inverse)
    d_lo, fall_lo, rise_lo = _screening(s_lo, p)
    d_hi, fall_hi, rise_hi = _screening(s_hi, p)
    brel_lo = bmin + (1.0 - bmin) / d_hi          # B_rel falls with s
    brel_hi = bmin + (1.0 - bmin) / d_lo
    # (A + B_low B_rel) s: both factors positive
    first_lo = s_lo * (a + b_low * brel_lo)
    first_hi = s_hi * (a + b_low * brel_hi)
    # 2 g B_low B_rel', B_rel' = -(1 - bmin) D'/D^2 in [-(1-bmin) q_hi, -(1-bmin) q_lo]
    q_lo = (fall_hi + rise_lo) / (d_hi * d_hi)
    q_hi = (fall_lo + rise_hi) / (d_lo * d_lo)
    second_lo, second_hi = _product(2.0 * g_lo * b_low, 2.0 * g_hi * b_low,
                                    -(1.0 - bmin) * q_hi, -(1.0 - bmin) * q_lo)
    xp_lo, xp_hi = max(x_lo, 0.0), max(x_hi, 0.0)
    third_lo = _C * xp_lo ** _DELTA * ((1.0 + _DELTA) * total + (2.0 + _DELTA) * xp_lo)
    third_hi = _C * xp_hi ** _DELTA * ((1.0 + _DELTA) * total + (2.0 + _DELTA) * xp_hi)
    fourth_hi = rate * (total * total + 2.0 * total * x_lo + 2.0 * x_lo * x_lo) / (s_lo * s_lo)
    fourth_lo = rate * (total * total + 2.0 * total * x_hi + 2.0 * x_hi * x_hi) / (s_hi * s_hi)
    p_lo = first_lo + second_lo + third_lo + fourth_lo
    p_hi = first_hi + second_hi + third_hi + fourth_hi
    spread = 1e-12 * (abs(first_hi) + abs(second_lo) + abs(second_hi) + third_hi + fourth_hi)
    # dx/dv = X' / (1 - X' dEg') rises in X' and in dEg' (X' dEg' < 1): X' within its ends' values,
    # dEg' within its proven bounds over the cell (slope_bounds; 0 without the narrowing)
    k_small, k_large = slope_bounds(x_lo, x_hi, p) if p[BULK_OFFSET + 12] > 0.0 else (0.0, 0.0)
    rate_lo = rate_lo / (1.0 - rate_lo * k_small)
    room = 1.0 - rate_hi * k_large
    rate_hi = rate_hi / room if room > 0.0 else math.inf
    low, high = _product(p_lo - spread, p_hi + spread, rate_lo, rate_hi)
    return factor * low * (1.0 - 1e-12) if low > 0.0 else factor * low * (1.0 + 1e-12), \
        factor * high * (1.0 + 1e-12)
