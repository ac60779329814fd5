"""Compiled scalar form of a uniformly injected silicon base's recombination current and its slope
enclosure (laws/silicon.py bulk_current), read by the subcell law of laws/compiled.py from the
parameter columns BULK_OFFSET.. (F, N, ni^2, A, B_low, bmin, b1, b3, R); F = 0 is no base law.

References
----------
A. Richter et al., Phys. Rev. B 86 (2012) 165202 (intrinsic recombination); P. P. Altermatt et
al., J. Appl. Phys. 97 (2005) 093710 (relative radiative coefficient).
"""
import math
from pathlib import Path

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


@numba.njit(cache=True, inline="always", error_model="numpy")
def _state(v, p, inverse):
    """(x, g, s): excess density, n p - ni^2 and n + p at the split v."""
    total, ni2 = p[BULK_OFFSET + 1], p[BULK_OFFSET + 2]
    g = ni2 * math.expm1(v * inverse)
    root = math.sqrt(max(total * total + 4.0 * g, 0.0))
    x = 2.0 * g / (total + root)
    return x, g, total + 2.0 * x


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
    factor, total, ni2, a, b_low, bmin, rate = (p[BULK_OFFSET], p[BULK_OFFSET + 1],
                                                p[BULK_OFFSET + 2], p[BULK_OFFSET + 3],
                                                p[BULK_OFFSET + 4], p[BULK_OFFSET + 5],
                                                p[BULK_OFFSET + 8])
    x, g, s = _state(v, p, inverse)
    d, fall, rise = _screening(s, p)
    brel = bmin + (1.0 - bmin) / d
    brel_slope = -(1.0 - bmin) * (fall + rise) / (d * d)
    xp = max(x, 0.0)
    power = xp ** _DELTA
    value = g * (a + _C * power + b_low * brel) + rate * g / s
    dvalue = (s * (a + b_low * brel) + 2.0 * g * b_low * brel_slope
              + _C * power * ((1.0 + _DELTA) * total + (2.0 + _DELTA) * xp)
              + rate * (total * total + 2.0 * total * x + 2.0 * x * x) / (s * s))
    return factor * value, factor * dvalue * (ni2 * math.exp(v * inverse)) * inverse / s


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
    dx/dv = n p / (Vt (n + p)) rises (n and p both rise) -- combined by interval products."""
    factor, total, ni2, a, b_low, bmin, rate = (p[BULK_OFFSET], p[BULK_OFFSET + 1],
                                                p[BULK_OFFSET + 2], p[BULK_OFFSET + 3],
                                                p[BULK_OFFSET + 4], p[BULK_OFFSET + 5],
                                                p[BULK_OFFSET + 8])
    x_lo, g_lo, s_lo = _state(lo, p, inverse)
    x_hi, g_hi, s_hi = _state(hi, p, inverse)
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
    rate_lo = ni2 * math.exp(lo * inverse) * inverse / s_lo
    rate_hi = ni2 * math.exp(hi * inverse) * inverse / s_hi
    low, high = _product(p_lo - spread, p_hi + spread, rate_lo, rate_hi)
    return factor * low * (1.0 - 1e-12) if low > 0.0 else factor * low * (1.0 + 1e-12), \
        factor * high * (1.0 + 1e-12)
