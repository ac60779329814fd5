"""Silicon layer physics: intrinsic recombination, apparent band-gap narrowing, mobilities, and the
recombination current of a thick base at a uniform quasi-Fermi-level split.

Intrinsic recombination (Auger + radiative), A. Richter, S. W. Glunz, F. Werner, J. Schmidt,
A. Cuevas, Phys. Rev. B 86 (2012) 165202, eqs. (18)-(20) and table II (equation numbers from
memory; the coefficients agree with a published open implementation of the same paper):

    U_intr = (n p - ni,eff^2) (2.5e-31 g_eeh n0 + 8.5e-32 g_ehh p0 + 3.0e-29 dn^0.92 + B_rel B_low)
    g_eeh = 1 + 13 (1 - tanh((n0 / 3.3e17)^0.66)),  g_ehh = 1 + 7.5 (1 - tanh((p0 / 7.0e17)^0.63))

(cm^-3, cm^6/s), B_low = 4.73e-15 cm^3/s (T. Trupke et al., J. Appl. Phys. 94 (2003) 4930) and
B_rel the relative radiative coefficient of P. P. Altermatt et al., J. Appl. Phys. 97 (2005)
093710 (its temperature parameters from memory).

A thick base whose diffusion length exceeds its width has one excess density dn throughout, set
by the quasi-Fermi-level split Vj: n p = ni,eff^2 exp(Vj/Vt) with n = n0 + dn, p = p0 + dn, so

    dn(Vj) = 2 g / (N + sqrt(N^2 + 4 g)),   g = n p - ni^2 = ni^2 expm1(Vj/Vt),   N = n0 + p0,

in low and high injection alike, and the base's recombination current is

    J_b(Vj) = q W [U_intr(dn) + g / (tau (n + p))] + q S g / (n + p)

(the second term Shockley-Read-Hall recombination through mid-gap levels with equal lifetimes,
the third a rear surface of recombination velocity S with equal capture). J_b rises strictly with
Vj and is no diode: the subcell law carries it beside its J01 and J02 diodes
(laws/compiled.py, subcell_law; laws/diode.py, junction_current).

With Schenk's narrowing (the default), ni,eff itself follows the injected carriers: n p =
ni,eff0^2 exp((Vj + dEg(n, p) - dEg(n0, p0)) / kT) (A. Schenk, J. Appl. Phys. 84 (1998) 3684;
:func:`injected_state`), a few meV at the operating point of a lightly doped base.
"""
import numpy as np

from siltandem.constants import BOLTZMANN_EV_K, ELEMENTARY_CHARGE_C, thermal_voltage_V

#: Richter et al. 2012, table II: (cm^6/s, cm^6/s, cm^-3, cm^-3) and the injection term
AUGER_EEH_CM6_S = 2.5e-31
AUGER_EHH_CM6_S = 8.5e-32
AUGER_EEH_DENSITY_CM3 = 3.3e17
AUGER_EHH_DENSITY_CM3 = 7.0e17
AUGER_EEH_ENHANCEMENT = 13.0
AUGER_EHH_ENHANCEMENT = 7.5
AUGER_EEH_EXPONENT = 0.66
AUGER_EHH_EXPONENT = 0.63
AUGER_INJECTION_CM = 3.0e-29
AUGER_INJECTION_EXPONENT = 0.92
#: radiative coefficient at low injection, 300 K [cm^3/s] (Trupke et al. 2003)
RADIATIVE_LOW_CM3_S = 4.73e-15
#: Altermatt et al. 2005: B_rel = bmin + (1 - bmin) / (1 + ((n+p)/b1)^0.54 + ((n+p)/b3)^1.25),
#: bmin, b1/2, b3/2 each max + (min - max) / (1 + (T/T1)^e) (values from memory)
RADIATIVE_B2 = 0.54
RADIATIVE_B4 = 1.25
_RADIATIVE_T = {"bmin": (0.2, 0.0, 320.0, 2.5), "b1": (1.5e18, 1e7, 550.0, 3.0),
                "b3": (4.0e18, 1e9, 365.0, 3.54)}
#: number of bulk-law columns (laws/compiled.py reads them after the subcell's own): the nine of the
#: recombination law, then (n0, p0, N_D + N_A, t = kT / Ry_ex, dEg0) of the injection-dependent
#: narrowing (t = 0: none)
BULK_COLUMNS = 14
#: Newton steps at most of the excess density under injection-dependent narrowing
#: (:func:`injected_state`), and the relative step after which one more evaluation ends them (the
#: steps converge quadratically: the next error is of order its square, rounding)
NARROWING_STEPS = 30
NARROWING_TOLERANCE = 1e-8
#: excess density [cm^-3] above which the narrowing stays at its value there: beyond it the carriers
#: are degenerate (the base law's Boltzmann statistics fail) and near 2e20 cm^-3 (300 K) the split
#: would stop rising with dn (X' dEg' reaches 1); at the cap X' dEg' is 0.33 at 300 K, 0.64 at 150 K
NARROWING_DENSITY_CM3 = 1e19


def relative_radiative_parameters(temperature_K):
    """(bmin, b1, b3) of the relative radiative coefficient at ``temperature_K`` [K]
    (Altermatt et al. 2005; b1, b3 in cm^-3 of n + p)."""
    t = np.asarray(temperature_K, dtype=float)
    out = []
    for key in ("bmin", "b1", "b3"):
        high, low, t1, e = _RADIATIVE_T[key]
        value = high + (low - high) / (1.0 + (t / t1) ** e)
        out.append(value if key == "bmin" else 2.0 * value)
    return tuple(out)


def relative_radiative_coefficient(carriers_cm3, *, temperature_K):
    """B_rel [-] at n + p = ``carriers_cm3`` [cm^-3] (Altermatt et al. 2005): 1 at low densities,
    falling as screening sets in (about 0.85 at n + p = 2e16 cm^-3, 300 K)."""
    bmin, b1, b3 = relative_radiative_parameters(temperature_K)
    s = np.asarray(carriers_cm3, dtype=float)
    return bmin + (1.0 - bmin) / (1.0 + (s / b1) ** RADIATIVE_B2 + (s / b3) ** RADIATIVE_B4)


def auger_prefactor(n0_cm3, p0_cm3):
    """2.5e-31 g_eeh n0 + 8.5e-32 g_ehh p0 [cm^3/s]: the doping part of Richter's eq. (18)."""
    n0, p0 = np.asarray(n0_cm3, dtype=float), np.asarray(p0_cm3, dtype=float)
    g_eeh = 1.0 + AUGER_EEH_ENHANCEMENT * (1.0 - np.tanh((n0 / AUGER_EEH_DENSITY_CM3)
                                                         ** AUGER_EEH_EXPONENT))
    g_ehh = 1.0 + AUGER_EHH_ENHANCEMENT * (1.0 - np.tanh((p0 / AUGER_EHH_DENSITY_CM3)
                                                         ** AUGER_EHH_EXPONENT))
    return AUGER_EEH_CM6_S * g_eeh * n0 + AUGER_EHH_CM6_S * g_ehh * p0


def intrinsic_recombination_rate(excess_cm3, *, n0_cm3, p0_cm3, temperature_K=300.0):
    """Auger + radiative recombination rate U_intr [cm^-3 s^-1] (Richter et al. 2012, eq. 18).

    Parameters
    ----------
    excess_cm3 : array_like
        Excess carrier density dn = dp [cm^-3], >= 0 (the injection level).
    n0_cm3, p0_cm3 : array_like
        Equilibrium electron and hole densities [cm^-3] (n0 p0 = ni,eff^2).
    temperature_K : array_like
        Temperature [K] (of B_rel only: the Auger coefficients are those at 300 K).
    """
    dn = np.asarray(excess_cm3, dtype=float)
    n0, p0 = np.asarray(n0_cm3, dtype=float), np.asarray(p0_cm3, dtype=float)
    excess_product = dn * (n0 + p0 + dn)          # n p - n0 p0
    b = RADIATIVE_LOW_CM3_S * relative_radiative_coefficient(n0 + p0 + 2 * dn,
                                                             temperature_K=temperature_K)
    return excess_product * (auger_prefactor(n0, p0)
                             + AUGER_INJECTION_CM * np.maximum(dn, 0.0) ** AUGER_INJECTION_EXPONENT
                             + b)


def intrinsic_lifetime(excess_cm3, *, n0_cm3, p0_cm3, temperature_K=300.0):
    """Intrinsic lifetime dn / U_intr [s] (Richter et al. 2012)."""
    return np.asarray(excess_cm3, dtype=float) / intrinsic_recombination_rate(
        excess_cm3, n0_cm3=n0_cm3, p0_cm3=p0_cm3, temperature_K=temperature_K)


#: A. Schenk, J. Appl. Phys. 84 (1998) 3684, tables I-III for Si (values from memory; the equations
#: below agree with an open semiconductor-property library that implements the same paper):
#: excitonic Rydberg [eV] and Bohr radius [cm], the carrier weights alpha = m_other / (m_e + m_h)
#: (m_e = 0.321, m_h = 0.346), and per carrier (electron, hole) the fit constants b, c, d, g, p of
#: the exchange-correlation shift and h, j, k, q of the ionic (carrier-impurity) shift
SCHENK_RYDBERG_EV = 16.55e-3
SCHENK_BOHR_RADIUS_CM = 3.719e-7
SCHENK = {"alpha": (0.5187, 0.4813), "b": (8.0, 1.0), "c": (1.3346, 1.2365), "d": (0.893, 1.153),
          "g": (12.0, 4.0), "p": (7.0 / 30.0, 7.0 / 30.0), "h": (3.91, 4.20), "j": (2.8585, 2.9307),
          "k": (0.012, 0.19), "q": (0.75, 0.25)}
#: the same constants per band in the order :func:`schenk_band_shift` takes them
SCHENK_ELECTRON = tuple(SCHENK[key][0] for key in "alpha b c d g p h j k q".split())
SCHENK_HOLE = tuple(SCHENK[key][1] for key in "alpha b c d g p h j k q".split())
#: the gap-narrowing models a Si layer can take (``gap_narrowing`` layer key); the first is the default
GAP_NARROWING_MODELS = ("schenk", "klaassen")


def schenk_gap_narrowing(electron_cm3, hole_cm3, *, donor_cm3=0.0, acceptor_cm3=0.0,
                         temperature_K=300.0):
    """Band-gap narrowing [eV] of Si by A. Schenk, J. Appl. Phys. 84 (1998) 3684 (his closed-form
    fit to the quantum-mechanical calculation; parameters :data:`SCHENK`, from memory).

    The gap shrinks by the rigid exchange-correlation shift of each band edge, set by the free
    electrons and holes, plus the ionic shift, set by the ionized dopants screened by those
    carriers. With densities in units of a_ex^-3 and energies in units of Ry_ex, t = kT / Ry_ex,
    n_s = n + p, n_p = alpha_e n + alpha_h p, U = n_s^2 / t^3, and for each band a (a = e, h;
    n_a its carrier density):

        dE_xc,a = -[(4 pi)^3 n_s^2 ((48 n_a / (pi g_a))^(1/3) + c_a ln(1 + d_a n_p^p_a))
                    + (8 pi alpha_a / g_a) n_a t^2 + sqrt(8 pi n_s) t^(5/2)]
                  / [(4 pi)^3 n_s^2 + t^3 + b_a sqrt(n_s) t^2 + 40 n_s^(3/2) t]
        dE_i,a = -(N_D + N_A) (1 + U) / [sqrt(t n_s / 2 pi) (1 + h_a ln(1 + sqrt(n_s) / t))
                                        + j_a U n_p^(3/4) (1 + k_a n_p^q_a)]

    and dEg = -Ry_ex (dE_xc,e + dE_i,e + dE_xc,h + dE_i,h) > 0. It depends on the carrier densities
    (so on injection) and on temperature. Schenk's narrowing is the real shift of the band edges,
    meant for Fermi-Dirac statistics; with Boltzmann statistics (as here) it omits the
    degeneracy of a heavily doped layer's majority carriers, which would lower n_i,eff further
    above about 1e19 cm^-3.

    Parameters
    ----------
    electron_cm3, hole_cm3 : array_like
        Free electron and hole densities [cm^-3], >= 0.
    donor_cm3, acceptor_cm3 : array_like
        Ionized donor and acceptor densities [cm^-3], >= 0.
    temperature_K : array_like
        Temperature [K], > 0.
    """
    scale = SCHENK_BOHR_RADIUS_CM ** 3
    n = np.asarray(electron_cm3, dtype=float) * scale
    p = np.asarray(hole_cm3, dtype=float) * scale
    ions = (np.asarray(donor_cm3, dtype=float) + np.asarray(acceptor_cm3, dtype=float)) * scale
    t = BOLTZMANN_EV_K * np.asarray(temperature_K, dtype=float) / SCHENK_RYDBERG_EV
    n_s = np.maximum(n + p, 1e-300)
    n_p = SCHENK["alpha"][0] * n + SCHENK["alpha"][1] * p
    u = n_s ** 2 / t ** 3
    four_pi_cubed = (4.0 * np.pi) ** 3
    total = 0.0
    for a, carriers in enumerate((n, p)):
        alpha, b, c, d, g, pw, h, j, k, q = (SCHENK[key][a] for key in "alpha b c d g p h j k q".split())
        xc = -(four_pi_cubed * n_s ** 2 * ((48.0 * carriers / (np.pi * g)) ** (1.0 / 3.0)
                                           + c * np.log1p(d * n_p ** pw))
               + 8.0 * np.pi * alpha / g * carriers * t ** 2 + np.sqrt(8.0 * np.pi * n_s) * t ** 2.5) \
            / (four_pi_cubed * n_s ** 2 + t ** 3 + b * np.sqrt(n_s) * t ** 2 + 40.0 * n_s ** 1.5 * t)
        ionic = -ions * (1.0 + u) / (np.sqrt(t * n_s / (2.0 * np.pi)) * (1.0 + h * np.log1p(np.sqrt(n_s) / t))
                                     + j * u * n_p ** 0.75 * (1.0 + k * n_p ** q))
        total = total + xc + ionic
    return -SCHENK_RYDBERG_EV * total


def schenk_band_shift(c, n_s, n_p, ions, t, alpha, b, cc, d, g, pw, h, j, k, q):
    """One band edge's shift dE_xc,a + dE_i,a of :func:`schenk_gap_narrowing` and its derivative
    with respect to an equal excess of electrons and holes (dn = dp: c, n_s and n_p rise by 1, 1
    and 2 per unit, alpha_e + alpha_h = 1), all in Schenk's reduced units (densities in a_ex^-3,
    energies in Ry_ex, t = kT / Ry_ex); ``c`` the band's carrier density, ``n_s`` = n + p,
    ``n_p`` = alpha_e n + alpha_h p, ``ions`` = N_D + N_A, then the band's constants. Written
    with numpy functions only, so that laws/compiled_bulk.py compiles this same source for scalars
    (the numpy and compiled base laws then agree to rounding). Densities are floored at 1e-300."""
    c = np.maximum(c, 1e-300)
    n_s = np.maximum(n_s, 1e-300)
    n_p = np.maximum(n_p, 1e-300)
    big = (4.0 * np.pi) ** 3
    cube = (48.0 * c / (np.pi * g)) ** (1.0 / 3.0)
    pn = n_p ** pw
    a = cube + cc * np.log1p(d * pn)
    da = cube / (3.0 * c) + cc * d * pw * pn / (n_p * (1.0 + d * pn))
    rs = np.sqrt(n_s)
    num = big * n_s * n_s * a + 8.0 * np.pi * alpha / g * c * t * t + np.sqrt(8.0 * np.pi * n_s) * t ** 2.5
    dnum = big * (4.0 * n_s * a + n_s * n_s * da) + 8.0 * np.pi * alpha / g * t * t \
        + np.sqrt(8.0 * np.pi) * t ** 2.5 / rs
    den = big * n_s * n_s + t ** 3 + b * rs * t * t + 40.0 * n_s * rs * t
    dden = 4.0 * big * n_s + b * t * t / rs + 120.0 * rs * t
    u = n_s * n_s / t ** 3
    du = 4.0 * n_s / t ** 3
    r = np.sqrt(t * n_s / (2.0 * np.pi))
    ell = 1.0 + h * np.log1p(rs / t)
    kq = 1.0 + k * n_p ** q
    m = j * u * n_p ** 0.75 * kq
    dm = j * (du * n_p ** 0.75 * kq + 0.75 * u * kq / n_p ** 0.25 + u * n_p ** 0.75 * k * q * n_p ** (q - 1.0))
    big_q = r * ell + m
    dq = t / (2.0 * np.pi * r) * ell + r * h / (rs * (t + rs)) + dm
    value = -num / den - ions * (1.0 + u) / big_q
    slope = -(dnum * den - num * dden) / (den * den) - ions * (du * big_q - (1.0 + u) * dq) / (big_q * big_q)
    return value, slope


def schenk_band_slope_bounds(c_a, c_b, n_s_a, n_s_b, n_p_a, n_p_b, ions, t, alpha, b, cc, d, g, pw, h, j,
                             k, q):
    """Proven bounds (low, high, size) of one band edge's slope (the second value of
    :func:`schenk_band_shift`) over every equal excess of electrons and holes between two states
    a and b: ``c``, ``n_s``, ``n_p`` at each end (reduced units; each rises with the excess), the
    band's constants as :func:`schenk_band_shift` takes them. ``size`` bounds the magnitude of the
    terms that cancel (for a rounding allowance: the bounds are exact in real arithmetic).

    Proof. All of c, n_s = n + p, n_p rise with the excess dn (by 1, 2 and 1 per unit; c <= n_s).
    With A = 8 pi alpha t^2 / g, S = sqrt(8 pi) t^(5/2), W = t^3 + b t^2 sqrt(n_s) + 40 t n_s^(3/2),
    a = (48 c / (pi g))^(1/3) + cc ln(1 + d n_p^pw) and a' = da/d dn, Schenk's exchange-correlation
    shift -num/den has the slope -(num' den - num den') / den^2, and expanding (the big-number terms
    (4 pi)^6 4 n_s^3 a cancel exactly; the n_s a terms combine to a positive sum):

        num' den - num den' = (4 pi)^6 n_s^4 a' + (4 pi)^3 a (4 n_s t^3 + 3 b t^2 n_s^(3/2) + 40 t n_s^(5/2))
                              + (4 pi)^3 n_s^2 a' W + A ((4 pi)^3 n_s^2 + W) + S t^3 / sqrt(n_s)
                              - A c (4 (4 pi)^3 n_s + 120 t sqrt(n_s)) - A b t^2 c / sqrt(n_s)
                              - S (3 (4 pi)^3 n_s^(3/2) + 80 t n_s).

    Every term is a positive constant times a product of positive factors each monotone in dn: a,
    n_s, W, den rise; a' = (48/(pi g))^(1/3) c^(-2/3) / 3 + cc d pw n_p^(pw-1) / (1 + d n_p^pw)
    falls (pw < 1); 1/sqrt(n_s) falls; c/sqrt(n_s) rises (its derivative is (n_s - c) / n_s^(3/2)
    >= 0). The ionic shift -ions (1 + u)/Q, u = n_s^2/t^3, Q = r l + m (r = sqrt(t n_s / 2 pi),
    l = 1 + h ln(1 + sqrt(n_s)/t), m = j u P, P = n_p^(3/4) (1 + k n_p^q)), has the slope
    ions I / Q^2 with (r' = r / n_s; the u P terms cancel)

        I = l r / n_s - 3 l r n_s / t^3 + (1 + u) r l' + j u' P + j (1 + u) u P',
        r l' = sqrt(t / 2 pi) h / (t + sqrt(n_s)),  P' = (3/4) n_p^(-1/4) + (3/4 + q) k n_p^(q - 1/4),

    again products of positive monotone factors (l, r n_s, u, u', P, Q rise; r / n_s and
    1/(t + sqrt(n_s)) and n_p^(-1/4) fall; n_p^(q - 1/4) is monotone). A monotone factor's range
    over the excesses between a and b is the span of its two end values, a product of positive
    factors has the product of their ranges, and sums, differences and the quotients by den^2 and
    Q^2 (positive) follow by interval arithmetic (R. E. Moore, R. B. Kearfott, M. J. Cloud,
    Introduction to Interval Analysis, SIAM 2009, ch. 2 and 5). Written with numpy functions
    only: laws/compiled_bulk.py compiles this source for scalars."""
    c_a, c_b = np.maximum(c_a, 1e-300), np.maximum(c_b, 1e-300)
    n_s_a, n_s_b = np.maximum(n_s_a, 1e-300), np.maximum(n_s_b, 1e-300)
    n_p_a, n_p_b = np.maximum(n_p_a, 1e-300), np.maximum(n_p_b, 1e-300)
    big = (4.0 * np.pi) ** 3
    coef_a = 8.0 * np.pi * alpha / g * t * t
    coef_s = np.sqrt(8.0 * np.pi) * t ** 2.5
    rs_a, rs_b = np.sqrt(n_s_a), np.sqrt(n_s_b)
    # end values of the monotone factors (index a, b), then their ranges (low, high)
    cube_a, cube_b = (48.0 * c_a / (np.pi * g)) ** (1.0 / 3.0), (48.0 * c_b / (np.pi * g)) ** (1.0 / 3.0)
    pn_a, pn_b = n_p_a ** pw, n_p_b ** pw
    f_a = cube_a + cc * np.log1p(d * pn_a)
    f_b = cube_b + cc * np.log1p(d * pn_b)
    df_a = cube_a / (3.0 * c_a) + cc * d * pw * pn_a / (n_p_a * (1.0 + d * pn_a))
    df_b = cube_b / (3.0 * c_b) + cc * d * pw * pn_b / (n_p_b * (1.0 + d * pn_b))
    w_a = t ** 3 + b * rs_a * t * t + 40.0 * n_s_a * rs_a * t
    w_b = t ** 3 + b * rs_b * t * t + 40.0 * n_s_b * rs_b * t
    den_a, den_b = big * n_s_a * n_s_a + w_a, big * n_s_b * n_s_b + w_b
    df_lo, df_hi = np.minimum(df_a, df_b), np.maximum(df_a, df_b)
    # positive terms of num' den - num den'
    t1_a, t1_b = big * big * n_s_a ** 4, big * big * n_s_b ** 4
    t2_a = big * f_a * (4.0 * n_s_a * t ** 3 + 3.0 * b * t * t * n_s_a * rs_a + 40.0 * t * n_s_a * n_s_a * rs_a)
    t2_b = big * f_b * (4.0 * n_s_b * t ** 3 + 3.0 * b * t * t * n_s_b * rs_b + 40.0 * t * n_s_b * n_s_b * rs_b)
    t3_a, t3_b = big * n_s_a * n_s_a * w_a, big * n_s_b * n_s_b * w_b
    t4_a, t4_b = coef_a * (big * n_s_a * n_s_a + w_a), coef_a * (big * n_s_b * n_s_b + w_b)
    t5_a, t5_b = coef_s * t ** 3 / rs_a, coef_s * t ** 3 / rs_b
    plus_lo = (np.minimum(t1_a, t1_b) * df_lo + np.minimum(t2_a, t2_b) + np.minimum(t3_a, t3_b) * df_lo
               + np.minimum(t4_a, t4_b) + np.minimum(t5_a, t5_b))
    plus_hi = (np.maximum(t1_a, t1_b) * df_hi + np.maximum(t2_a, t2_b) + np.maximum(t3_a, t3_b) * df_hi
               + np.maximum(t4_a, t4_b) + np.maximum(t5_a, t5_b))
    # negative terms
    m_a = coef_a * c_a * (4.0 * big * n_s_a + 120.0 * t * rs_a) + coef_a * b * t * t * c_a / rs_a \
        + coef_s * (3.0 * big * n_s_a * rs_a + 80.0 * t * n_s_a)
    m_b = coef_a * c_b * (4.0 * big * n_s_b + 120.0 * t * rs_b) + coef_a * b * t * t * c_b / rs_b \
        + coef_s * (3.0 * big * n_s_b * rs_b + 80.0 * t * n_s_b)
    minus_lo, minus_hi = np.minimum(m_a, m_b), np.maximum(m_a, m_b)
    top_lo, top_hi = plus_lo - minus_hi, plus_hi - minus_lo
    den_lo, den_hi = np.minimum(den_a, den_b), np.maximum(den_a, den_b)
    # the exchange-correlation slope -[top] / [den]^2
    xc_lo = -np.maximum(top_hi / (den_lo * den_lo), top_hi / (den_hi * den_hi))
    xc_hi = -np.minimum(top_lo / (den_hi * den_hi), top_lo / (den_lo * den_lo))
    # ionic part
    u_a, u_b = n_s_a * n_s_a / t ** 3, n_s_b * n_s_b / t ** 3
    r_a, r_b = np.sqrt(t * n_s_a / (2.0 * np.pi)), np.sqrt(t * n_s_b / (2.0 * np.pi))
    l_a, l_b = 1.0 + h * np.log1p(rs_a / t), 1.0 + h * np.log1p(rs_b / t)
    kq_a, kq_b = 1.0 + k * n_p_a ** q, 1.0 + k * n_p_b ** q
    big_p_a, big_p_b = n_p_a ** 0.75 * kq_a, n_p_b ** 0.75 * kq_b
    big_q_a, big_q_b = r_a * l_a + j * u_a * big_p_a, r_b * l_b + j * u_b * big_p_b
    l_lo, l_hi = np.minimum(l_a, l_b), np.maximum(l_a, l_b)
    one_u_lo, one_u_hi = 1.0 + np.minimum(u_a, u_b), 1.0 + np.maximum(u_a, u_b)
    uu_lo, uu_hi = np.minimum((1.0 + u_a) * u_a, (1.0 + u_b) * u_b), np.maximum((1.0 + u_a) * u_a, (1.0 + u_b) * u_b)
    i1_lo = l_lo * np.minimum(r_a / n_s_a, r_b / n_s_b)
    i1_hi = l_hi * np.maximum(r_a / n_s_a, r_b / n_s_b)
    i2_lo = 3.0 * np.minimum(l_a * r_a * n_s_a, l_b * r_b * n_s_b) / t ** 3
    i2_hi = 3.0 * np.maximum(l_a * r_a * n_s_a, l_b * r_b * n_s_b) / t ** 3
    e_a, e_b = np.sqrt(t / (2.0 * np.pi)) * h / (t + rs_a), np.sqrt(t / (2.0 * np.pi)) * h / (t + rs_b)
    i3_lo, i3_hi = one_u_lo * np.minimum(e_a, e_b), one_u_hi * np.maximum(e_a, e_b)
    i4_a, i4_b = j * 4.0 * n_s_a / t ** 3 * big_p_a, j * 4.0 * n_s_b / t ** 3 * big_p_b
    g_a, g_b = 0.75 * n_p_a ** -0.25, 0.75 * n_p_b ** -0.25
    e2_a, e2_b = (0.75 + q) * k * n_p_a ** (q - 0.25), (0.75 + q) * k * n_p_b ** (q - 0.25)
    i5_lo = j * uu_lo * (np.minimum(g_a, g_b) + np.minimum(e2_a, e2_b))
    i5_hi = j * uu_hi * (np.maximum(g_a, g_b) + np.maximum(e2_a, e2_b))
    ion_lo = i1_lo + i3_lo + np.minimum(i4_a, i4_b) + i5_lo - i2_hi
    ion_hi = i1_hi + i3_hi + np.maximum(i4_a, i4_b) + i5_hi - i2_lo
    q_lo, q_hi = np.minimum(big_q_a, big_q_b), np.maximum(big_q_a, big_q_b)
    ionic_lo = ions * np.minimum(ion_lo / (q_hi * q_hi), ion_lo / (q_lo * q_lo))
    ionic_hi = ions * np.maximum(ion_hi / (q_lo * q_lo), ion_hi / (q_hi * q_hi))
    size = (plus_hi + minus_hi) / (den_lo * den_lo) + ions * (i1_hi + i2_hi + i3_hi + np.maximum(i4_a, i4_b)
                                                              + i5_hi) / (q_lo * q_lo)
    return xc_lo + ionic_lo, xc_hi + ionic_hi, size


def schenk_shift(electron_cm3, hole_cm3, ions_cm3, reduced_temperature):
    """Schenk's band-gap narrowing dEg [eV] (:func:`schenk_gap_narrowing`, the same equations)
    and its derivative d dEg / d dn [eV cm^3] with respect to an equal excess dn = dp of electrons
    and holes, at ``reduced_temperature`` t = kT / Ry_ex; ``ions_cm3`` = N_D + N_A [cm^-3]."""
    scale = SCHENK_BOHR_RADIUS_CM ** 3
    n, p = electron_cm3 * scale, hole_cm3 * scale
    n_s = n + p
    n_p = SCHENK_ELECTRON[0] * n + SCHENK_HOLE[0] * p
    ions = ions_cm3 * scale
    e, h = SCHENK_ELECTRON, SCHENK_HOLE
    value_e, slope_e = schenk_band_shift(n, n_s, n_p, ions, reduced_temperature, e[0], e[1], e[2], e[3], e[4],
                                         e[5], e[6], e[7], e[8], e[9])
    value_h, slope_h = schenk_band_shift(p, n_s, n_p, ions, reduced_temperature, h[0], h[1], h[2], h[3], h[4],
                                         h[5], h[6], h[7], h[8], h[9])
    return -SCHENK_RYDBERG_EV * (value_e + value_h), -SCHENK_RYDBERG_EV * scale * (slope_e + slope_h)


def schenk_slope_bounds(excess_a_cm3, excess_b_cm3, n0_cm3, p0_cm3, ions_cm3, reduced_temperature):
    """Proven bounds (low, high) [eV cm^3] of d dEg / d dn of the base law's narrowing over every
    excess density dn between ``excess_a_cm3`` <= ``excess_b_cm3`` (cm^-3, the ends of a cell as
    :func:`injected_state` solves them): Schenk's slope (:func:`schenk_shift`) bounded band by band
    by :func:`schenk_band_slope_bounds` for 0 < dn < NARROWING_DENSITY_CM3, and 0 where the law
    holds the shift (dn <= 0, dn >= NARROWING_DENSITY_CM3). The ends are widened by a relative
    1e-6 (the Newton solve of the ends stops at a relative step of NARROWING_TOLERANCE = 1e-8) and
    the bounds by 1e-10 of the cancelling terms' size (rounding). ``ions_cm3`` = N_D + N_A,
    ``reduced_temperature`` t = kT / Ry_ex > 0. laws/compiled_bulk.py ``slope_bounds`` is the
    same for scalars."""
    scale = SCHENK_BOHR_RADIUS_CM ** 3
    a = np.asarray(excess_a_cm3, dtype=float)
    b = np.asarray(excess_b_cm3, dtype=float)
    x_a = np.clip(a * (1.0 - 1e-6), 0.0, NARROWING_DENSITY_CM3)
    x_b = np.clip(b * (1.0 + 1e-6), 0.0, NARROWING_DENSITY_CM3)
    ends = []
    for x in (x_a, x_b):
        n, p = (n0_cm3 + x) * scale, (p0_cm3 + x) * scale
        ends.append((n, p, n + p, SCHENK_ELECTRON[0] * n + SCHENK_HOLE[0] * p))
    (n_a, p_a, s_a, np_a), (n_b, p_b, s_b, np_b) = ends
    ions = ions_cm3 * scale
    e, h = SCHENK_ELECTRON, SCHENK_HOLE
    lo_e, hi_e, size_e = schenk_band_slope_bounds(n_a, n_b, s_a, s_b, np_a, np_b, ions, reduced_temperature,
                                                  *e)
    lo_h, hi_h, size_h = schenk_band_slope_bounds(p_a, p_b, s_a, s_b, np_a, np_b, ions, reduced_temperature,
                                                  *h)
    unit = SCHENK_RYDBERG_EV * scale
    allowance = 1e-10 * unit * (size_e + size_h)
    low = -unit * (hi_e + hi_h) - allowance
    high = -unit * (lo_e + lo_h) + allowance
    held = (a <= 0.0) | (b * (1.0 + 1e-6) >= NARROWING_DENSITY_CM3)
    low, high = np.where(held, np.minimum(low, 0.0), low), np.where(held, np.maximum(high, 0.0), high)
    off = b <= 0.0
    return np.where(off, 0.0, low), np.where(off, 0.0, high)


def doped_gap_narrowing(doping_cm3, polarity, *, temperature_K, model="schenk"):
    """Band-gap narrowing [eV] of a Si layer doped ``doping_cm3`` [cm^-3] of type ``polarity``
    ("n" or "p") in equilibrium at ``temperature_K`` [K]: :func:`schenk_gap_narrowing` with the
    majority density equal to the (fully ionized) doping and no minority carriers (``model``
    "schenk"), or Klaassen's apparent narrowing :func:`apparent_gap_narrowing` ("klaassen",
    no temperature dependence)."""
    if model == "klaassen":
        return apparent_gap_narrowing(doping_cm3)
    if model != "schenk":
        raise ValueError(f"unknown gap-narrowing model {model!r}: one of {GAP_NARROWING_MODELS}")
    doping = np.asarray(doping_cm3, dtype=float)
    donors = doping if polarity == "n" else 0.0 * doping
    acceptors = doping if polarity == "p" else 0.0 * doping
    return schenk_gap_narrowing(donors, acceptors, donor_cm3=donors, acceptor_cm3=acceptors,
                                temperature_K=temperature_K)


def apparent_gap_narrowing(doping_cm3):
    """Apparent band-gap narrowing [eV] of n- or p-type Si doped at ``doping_cm3`` [cm^-3].

    dEg = 6.92 meV [ln(N / 1.3e17) + sqrt(ln(N / 1.3e17)^2 + 0.5)] (about 61 meV at 1e19 and 92 meV
    at 1e20 cm^-3), the unified apparent narrowing of D. B. M. Klaassen, J. W. Slotboom,
    H. C. de Graaff, Solid-State Electron. 35 (1992) 125 (for Boltzmann statistics, fitted to
    minority-carrier data of both types; coefficients from memory); no injection or temperature
    dependence. The ``gap_narrowing = "klaassen"`` choice of a Si layer (the default is
    :func:`schenk_gap_narrowing`); ni,eff = ni exp(dEg / 2kT).
    """
    x = np.log(np.asarray(doping_cm3, dtype=float) / 1.3e17)
    return 6.92e-3 * (x + np.sqrt(x * x + 0.5))


#: G. Masetti, M. Severi, S. Solmi, IEEE Trans. Electron Devices 30 (1983) 764, table I:
#: (mu_min1, mu_min2, mu_1, mu_max, C_r, C_s, alpha, beta, P_c) for electrons in
#: phosphorus-doped and holes in boron-doped Si [cm^2/Vs, cm^-3] (values from memory)
MASETTI = {"electron": (68.5, 68.5, 56.1, 1414.0, 9.20e16, 3.41e20, 0.711, 1.98, 0.0),
           "hole": (44.9, 0.0, 29.0, 470.5, 2.23e17, 6.10e20, 0.719, 2.0, 9.23e16)}


def masetti_mobility(doping_cm3, carrier):
    """Carrier mobility [cm^2/Vs] in Si at 300 K doped ``doping_cm3`` [cm^-3] (Masetti et al.
    1983): mu_min1 exp(-P_c/N) + (mu_max - mu_min2) / (1 + (N/C_r)^alpha) - mu_1 / (1 + (C_s/N)^beta).
    Measured on majority carriers; used here for minority carriers too (minority-carrier
    mobilities differ at high doping: D. B. M. Klaassen, Solid-State Electron. 35 (1992) 953)."""
    mu_min1, mu_min2, mu_1, mu_max, c_r, c_s, alpha, beta, p_c = MASETTI[carrier]
    n = np.asarray(doping_cm3, dtype=float)
    return (mu_min1 * np.exp(-p_c / n) + (mu_max - mu_min2) / (1.0 + (n / c_r) ** alpha)
            - mu_1 / (1.0 + (c_s / n) ** beta))


def bulk_base(*, thickness_m, n0_cm3, p0_cm3, srh_rate_s, surface_srv_m_s=0.0):
    """The temperature-free columns of a base's recombination law: (F, n0, p0, R) with
    F = q W [A m^-2 per cm^-3 s^-1] and R = 1/tau + S/W [1/s]."""
    thickness_cm = np.asarray(thickness_m, dtype=float) * 100.0
    factor = ELEMENTARY_CHARGE_C * thickness_cm * 1e4           # A/cm^2 -> A/m^2
    rate = np.asarray(srh_rate_s, dtype=float) + np.asarray(surface_srv_m_s, dtype=float) \
        / np.asarray(thickness_m, dtype=float)
    return (factor, np.asarray(n0_cm3, dtype=float), np.asarray(p0_cm3, dtype=float), rate)


def bulk_columns(base, *, ni_eff_cm3, temperature_K, injection_narrowing=0.0):
    """The law's columns (F, N, ni^2, A, B_low, bmin, b1, b3, R, n0, p0, N_D + N_A, t, dEg0) at
    ``temperature_K`` (laws/compiled.py reads them in this order). ``injection_narrowing`` (1 or
    0, per row) switches on Schenk's narrowing at the operating point's carrier densities
    (:func:`injected_state`; ``ni_eff_cm3`` is then the equilibrium value and dEg0 Schenk's shift at
    the equilibrium densities, t = kT / Ry_ex); t = 0 where it is off."""
    factor, n0, p0, rate = base
    ions = np.asarray(n0, dtype=float) + np.asarray(p0, dtype=float)
    ni2 = np.asarray(ni_eff_cm3, dtype=float) ** 2
    # equilibrium densities from charge neutrality with the net doping N = |n0 - p0| and
    # n0 p0 = ni,eff^2: majority N/2 + sqrt(N^2/4 + ni^2) (S. M. Sze, K. K. Ng, Physics of
    # Semiconductor Devices, 3rd ed. (2007), ch. 1), the doping itself when N >> ni and ni when
    # undoped, so a lightly doped base follows ni,eff(T)
    net = np.abs(n0 - p0)
    majority = 0.5 * net + np.sqrt(0.25 * net * net + ni2)
    minority = ni2 / majority
    n0, p0 = np.where(n0 >= p0, majority, minority), np.where(n0 >= p0, minority, majority)
    bmin, b1, b3 = relative_radiative_parameters(temperature_K)
    on = np.asarray(injection_narrowing, dtype=float) > 0
    reduced = BOLTZMANN_EV_K * np.asarray(temperature_K, dtype=float) / SCHENK_RYDBERG_EV + 0 * factor
    reduced = np.where(on, reduced, 0.0)
    shift0 = np.where(on, schenk_shift(n0, p0, ions, np.where(on, reduced, 1.0))[0], 0.0)
    return (factor, n0 + p0, ni2, auger_prefactor(n0, p0), RADIATIVE_LOW_CM3_S + 0 * factor,
            bmin + 0 * factor, b1 + 0 * factor, b3 + 0 * factor, rate, n0 + 0 * factor, p0 + 0 * factor,
            ions + 0 * factor, reduced, shift0 + 0 * factor)


def excess_density(v_junction_V, *, total_cm3, ni2_cm6, temperature_K):
    """dn [cm^-3] at quasi-Fermi-level split ``v_junction_V`` and g = n p - ni^2."""
    vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
    with np.errstate(over="ignore"):
        g = ni2_cm6 * np.expm1(np.asarray(v_junction_V, dtype=float) / vt)
    root = np.sqrt(np.maximum(total_cm3 * total_cm3 + 4.0 * g, 0.0))
    return 2.0 * g / (total_cm3 + root), g


def injected_state(v_junction_V, columns, *, temperature_K):
    """(dn, g, s, X', dEg') of a uniformly injected base at the quasi-Fermi-level split
    ``v_junction_V``: g = n p - n0 p0, s = n + p. Without injection-dependent narrowing (column
    t = 0) dn is :func:`excess_density`'s closed form. With it, n p = ni,eff(n, p)^2 exp(Vj/Vt),
    ni,eff^2 = ni,eff0^2 exp((dEg(n, p) - dEg0)/kT) with Schenk's dEg (:func:`schenk_shift`; A.
    Schenk, J. Appl. Phys. 84 (1998) 3684), so dn = X(Vj + dEg(dn) - dEg0), X the closed form: solved
    by Newton steps on h(dn) = ln(n p / ni^2) - (Vj + dEg - dEg0)/kT (rising in dn while
    X' dEg' < 1) from dn = X(Vj), left of the root (NARROWING_STEPS, NARROWING_TOLERANCE; dEg held at
    its value at dn = NARROWING_DENSITY_CM3 above it, and at equilibrium for Vj <= 0, where the
    carriers only deplete), and dn/dVj = X' / (1 - X' dEg'), X' = n p / (Vt s).
    laws/compiled_bulk.py ``bulk_state`` is the same iteration for scalars. dEg' = d dEg / d dn
    [eV cm^3] (0 without the narrowing)."""
    total, ni2 = columns[1], columns[2]
    n0, p0, ions, reduced, shift0 = columns[9:14]
    vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
    v = np.asarray(v_junction_V, dtype=float)
    x, g = excess_density(v, total_cm3=total, ni2_cm6=ni2, temperature_K=temperature_K)
    s = total + 2.0 * x
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        rate = ni2 * np.exp(v / vt) / (vt * s)
    if not np.any((np.asarray(reduced) > 0) & (x > 0)):
        return x, g, s, rate, np.zeros(np.shape(rate))
    shape = np.broadcast(x, reduced, vt).shape
    v, total, ni2, n0, p0, ions, reduced, shift0, vt, guess = (
        np.broadcast_to(np.asarray(c, dtype=float), shape)
        for c in (v, total, ni2, n0, p0, ions, reduced, shift0, vt, x))
    pending = (reduced > 0) & (guess > 0)
    final = np.zeros(shape, dtype=bool)
    t = np.where(pending, reduced, 1.0)
    guess = np.where(pending, guess, 0.0)
    out = [np.array(np.broadcast_to(c, shape), dtype=float) for c in (x, g, s, rate, np.zeros(np.shape(rate)))]
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        for _ in range(NARROWING_STEPS):
            capped = np.minimum(guess, NARROWING_DENSITY_CM3)
            shift, slope = schenk_shift(n0 + capped, p0 + capped, ions, t)
            slope = np.where(guess < NARROWING_DENSITY_CM3, slope, 0.0)
            u = v + (shift - shift0)
            gf = ni2 * np.expm1(u / vt)
            xf = 2.0 * gf / (total + np.sqrt(np.maximum(total * total + 4.0 * gf, 0.0)))
            sf = total + 2.0 * xf
            rf = ni2 * np.exp(u / vt) / (vt * sf)
            for k, c in enumerate((xf, gf, sf, rf, slope)):
                out[k] = np.where(pending, c, out[k])
            pending = pending & ~final
            if not np.any(pending):
                break
            product = guess * (total + guess)
            residual = np.log1p(product / ni2) - u / vt
            rise = (total + 2.0 * guess) / (ni2 + product) - slope / vt
            new = np.maximum(guess - residual / rise, 0.0)
            final = final | (pending & ~(np.abs(new - guess) > NARROWING_TOLERANCE * guess))
            guess = np.where(pending, new, guess)
    return tuple(out)


def bulk_current(v_junction_V, columns, *, temperature_K):
    """Recombination current J_b [A/m^2] of a uniformly injected base and dJ_b/dVj (module
    docstring); ``columns`` from :func:`bulk_columns`."""
    factor, total, ni2, a, b_low, bmin, b1, b3, rate = columns[:9]
    x, g, s, r, shift_slope = injected_state(v_junction_V, columns, temperature_K=temperature_K)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        dx_dv = r / (1.0 - r * shift_slope)
        d = 1.0 + (s / b1) ** RADIATIVE_B2 + (s / b3) ** RADIATIVE_B4
        d_slope = (RADIATIVE_B2 * (s / b1) ** RADIATIVE_B2 + RADIATIVE_B4 * (s / b3) ** RADIATIVE_B4) / s
        brel = bmin + (1.0 - bmin) / d
        brel_slope = -(1.0 - bmin) * d_slope / (d * d)
        xp = np.maximum(x, 0.0)
        power = xp ** AUGER_INJECTION_EXPONENT
        value = g * (a + AUGER_INJECTION_CM * power + b_low * brel) + rate * g / s
        dvalue = (s * (a + b_low * brel) + 2.0 * g * b_low * brel_slope
                  + AUGER_INJECTION_CM * power * ((1 + AUGER_INJECTION_EXPONENT) * total
                                                  + (2 + AUGER_INJECTION_EXPONENT) * xp)
                  + rate * (total * total + 2.0 * total * x + 2.0 * x * x) / (s * s))
    return factor * value, factor * dvalue * dx_dv


def _interval_product(a_lo, a_hi, b_lo, b_hi):
    corners = np.stack(np.broadcast_arrays(a_lo * b_lo, a_lo * b_hi, a_hi * b_lo, a_hi * b_hi))
    return corners.min(axis=0), corners.max(axis=0)


def bulk_slope_range(v_low_V, v_high_V, columns, *, temperature_K):
    """The smallest and largest dJ_b/dVj of :func:`bulk_current` over [v_low, v_high], a rigorous
    enclosure (up to rounding, widened by 1e-12) without injection-dependent narrowing: dJ_b/dv =
    F (dP/dx)(dx/dv), every part monotone in the excess density x (s = n + p and g rise; D rises,
    its slope's parts fall and rise; the Auger injection part rises; the SRH/surface part
    (N^2 + 2Nx + 2x^2)/s^2 falls; dx/dv = n p / (Vt s) rises), combined by interval products.
    With the narrowing, dx/dv = X' / (1 - X' dEg') rises in X' and in dEg' (while X' dEg' < 1),
    and dEg' is taken within its proven bounds over the cell's excess densities
    (:func:`schenk_slope_bounds`). The numpy form of laws/compiled_bulk.py ``bulk_slopes``."""
    factor, total, ni2, a, b_low, bmin, b1, b3, rate = columns[:9]
    ends = []
    for v in (np.asarray(v_low_V, dtype=float), np.asarray(v_high_V, dtype=float)):
        x, g, s, r, shift_slope = injected_state(v, columns, temperature_K=temperature_K)
        t1, t3 = (s / b1) ** RADIATIVE_B2, (s / b3) ** RADIATIVE_B4
        with np.errstate(over="ignore"):
            ends.append((x, g, s, 1.0 + t1 + t3, RADIATIVE_B2 * t1 / s, RADIATIVE_B4 * t3 / s, r, shift_slope))
    (x_lo, g_lo, s_lo, d_lo, fall_lo, rise_lo, r_lo, _), (x_hi, g_hi, s_hi, d_hi, fall_hi, rise_hi,
                                                              r_hi, _) = ends
    # dx/dv = X' / (1 - X' dEg'): X' rises with x; dEg' within its proven bounds over [x_lo, x_hi]
    n0, p0, ions, reduced = columns[9:13]
    on = np.asarray(reduced) > 0
    k_small, k_large = schenk_slope_bounds(x_lo, x_hi, n0, p0, ions, np.where(on, reduced, 1.0))
    k_small, k_large = np.where(on, k_small, 0.0), np.where(on, k_large, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        r_lo = r_lo / (1.0 - r_lo * k_small)
        room = 1.0 - r_hi * k_large
        r_hi = np.where(room > 0.0, r_hi / room, np.inf)
    first_lo = s_lo * (a + b_low * (bmin + (1.0 - bmin) / d_hi))
    first_hi = s_hi * (a + b_low * (bmin + (1.0 - bmin) / d_lo))
    q_lo = (fall_hi + rise_lo) / (d_hi * d_hi)
    q_hi = (fall_lo + rise_hi) / (d_lo * d_lo)
    second_lo, second_hi = _interval_product(2.0 * g_lo * b_low, 2.0 * g_hi * b_low,
                                             -(1.0 - bmin) * q_hi, -(1.0 - bmin) * q_lo)
    xp_lo, xp_hi = np.maximum(x_lo, 0.0), np.maximum(x_hi, 0.0)
    third_lo = AUGER_INJECTION_CM * xp_lo ** AUGER_INJECTION_EXPONENT * (
        (1.0 + AUGER_INJECTION_EXPONENT) * total + (2.0 + AUGER_INJECTION_EXPONENT) * xp_lo)
    third_hi = AUGER_INJECTION_CM * xp_hi ** AUGER_INJECTION_EXPONENT * (
        (1.0 + AUGER_INJECTION_EXPONENT) * total + (2.0 + AUGER_INJECTION_EXPONENT) * xp_hi)
    fourth_hi = rate * (total * total + 2.0 * total * x_lo + 2.0 * x_lo * x_lo) / (s_lo * s_lo)
    fourth_lo = rate * (total * total + 2.0 * total * x_hi + 2.0 * x_hi * x_hi) / (s_hi * s_hi)
    spread = 1e-12 * (np.abs(first_hi) + np.abs(second_lo) + np.abs(second_hi) + third_hi
                      + fourth_hi)
    low, high = _interval_product(first_lo + second_lo + third_lo + fourth_lo - spread,
                                  first_hi + second_hi + third_hi + fourth_hi + spread, r_lo, r_hi)
    low = np.where(low > 0.0, factor * low * (1.0 - 1e-12), factor * low * (1.0 + 1e-12))
    return low, factor * high * (1.0 + 1e-12)
