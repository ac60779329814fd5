"""Subcell current-voltage law: two diodes, shunt, series resistance, reverse breakdown.

Sign convention: generated current positive. For the junction voltage Vj = V + J Rs,

    J = Jph - J01 (exp(Vj/Vt) - 1) - J02 (exp(Vj/(2 Vt)) - 1) - G Vj [1 + a (1 - Vj/Vbr)^(-m)]

with Vt = kT/q, G the shunt conductance (G = 0 is an infinite shunt), and the last bracket the
avalanche-breakdown multiplication of the shunt current for Vj > Vbr (Vbr < 0).

The junction current decreases strictly with Vj, so every current has one junction voltage. The
inverse uses the Wright omega function in log space for the single-diode case (no overflow, no
cancellation for shunts up to 1e12 ohm cm^2) and a bracketed root find otherwise.

References
----------
W. Shockley, Bell Syst. Tech. J. 28 (1949) 435 (ideal diode); C.-T. Sah, R. N. Noyce,
W. Shockley, Proc. IRE 45 (1957) 1228 (depletion-region recombination, ideality 2).
A. Jain, A. Kapoor, Sol. Energy Mater. Sol. Cells 81 (2004) 269 (Lambert W solution of the
single-diode equation with series and shunt resistance).
J. W. Bishop, Solar Cells 25 (1988) 73 (reverse-bias breakdown term).
"""
import numpy as np

from siltandem.constants import BOLTZMANN_EV_K, thermal_voltage_V
from siltandem.numerics.tables import polish_root
from siltandem.numerics.roots import safeguarded_newton
from siltandem.laws.silicon import bulk_current, bulk_slope_range

#: default avalanche exponent m (J. W. Bishop, Solar Cells 25 (1988) 73; pvlib's default)
BREAKDOWN_EXPONENT = 3.28


def intrinsic_density_ratio(temperature_K, *, gap_eV, reference_temperature_K,
                            reference_gap_eV):
    """n_i(T) / n_i(T0): how the intrinsic carrier density changes with temperature.

    Parameters
    ----------
    temperature_K : array_like
        Temperature T [K], > 0.
    gap_eV : array_like
        Band gap at T [eV] (the same gap when it does not follow the temperature).
    reference_temperature_K : array_like
        T0 [K], > 0: the temperature the scaled quantity was given at.
    reference_gap_eV : array_like
        Band gap at T0 [eV].

    Returns
    -------
    ndarray
        (T/T0)^(3/2) exp(Eg0/(2 k T0) - Eg/(2 k T)), broadcast shape.

    Notes
    -----
    n_i = sqrt(Nc Nv) exp(-Eg / 2kT) with Nc, Nv proportional to T^(3/2) at fixed effective
    masses, so n_i is proportional to T^(3/2) exp(-Eg / 2kT). The depletion-region
    recombination current J02 is proportional to n_i (Sah-Noyce-Shockley), the diffusion
    current J01 to n_i^2.

    References
    ----------
    S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley (2007), ch. 1
    (intrinsic carrier density); C.-T. Sah, R. N. Noyce, W. Shockley, Proc. IRE 45 (1957) 1228.
    """
    t = np.asarray(temperature_K, dtype=float)
    t0 = np.asarray(reference_temperature_K, dtype=float)
    exponent = (np.asarray(reference_gap_eV, dtype=float) / (2 * BOLTZMANN_EV_K * t0)
                - np.asarray(gap_eV, dtype=float) / (2 * BOLTZMANN_EV_K * t))
    return (t / t0) ** 1.5 * np.exp(exponent)


def _breakdown_multiplier(v, breakdown_V, factor, exponent):
    """1 + a (1 - Vj/Vbr)^(-m) and its derivative in Vj; 1 where there is no breakdown."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        base = 1.0 - v / breakdown_V  # > 0 for Vj > Vbr (Vbr < 0)
        active = (factor > 0) & np.isfinite(breakdown_V)
        base = np.where(active, np.maximum(base, 1e-300), 1.0)
        power = base ** (-exponent)
        multiplier = 1.0 + np.where(active, factor * power, 0.0)
        slope = np.where(active, factor * exponent * power / base / breakdown_V, 0.0)
    return multiplier, slope


def junction_current(v_junction_V, *, photocurrent_A_m2, j01_A_m2, j02_A_m2=0.0,
                     shunt_S_m2=0.0, temperature_K, breakdown_V=-np.inf,
                     breakdown_factor=0.0, breakdown_exponent=BREAKDOWN_EXPONENT, bulk=None):
    """Current density [A/m^2] of the junction at junction voltage ``v_junction_V`` [V].

    Parameters
    ----------
    v_junction_V : array_like
        Junction voltage Vj = V + J Rs [V]; must exceed ``breakdown_V`` where breakdown is on.
    photocurrent_A_m2 : array_like
        Photogenerated current density Jph [A/m^2], >= 0.
    j01_A_m2, j02_A_m2 : array_like
        Saturation current densities of the ideality-1 and ideality-2 diodes [A/m^2], >= 0.
    shunt_S_m2 : array_like
        Shunt conductance per area [S/m^2] (1/R_sh), >= 0; 0 is no shunt.
    temperature_K : array_like
        Temperature [K].
    breakdown_V : array_like
        Breakdown voltage Vbr [V], < 0; -inf for none.
    breakdown_factor : array_like
        Fraction a of the shunt current multiplied by avalanche [-], >= 0.
    breakdown_exponent : array_like
        Avalanche exponent m [-].
    bulk : tuple of array_like or None
        The columns of a silicon base's recombination law (laws/silicon.py ``bulk_columns``),
        whose current J_b(Vj) is subtracted too; None for none.

    Returns
    -------
    current : ndarray
        J [A/m^2].
    slope : ndarray
        dJ/dVj [A m^-2 V^-1], < 0.
    """
    v = np.asarray(v_junction_V, dtype=float)
    vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
    with np.errstate(over="ignore"):
        e1 = np.expm1(v / vt)
        e2 = np.expm1(v / (2.0 * vt))
    multiplier, multiplier_slope = _breakdown_multiplier(v, breakdown_V, breakdown_factor,
                                                         breakdown_exponent)
    # a zero J02 times an overflowed exponential is 0, not NaN
    with np.errstate(invalid="ignore", over="ignore"):
        second = np.where(np.asarray(j02_A_m2) > 0, j02_A_m2 * e2, 0.0)
        second_slope = np.where(np.asarray(j02_A_m2) > 0,
                                (j02_A_m2 / (2.0 * vt)) * (e2 + 1.0), 0.0)
    current = (photocurrent_A_m2 - j01_A_m2 * e1 - second - shunt_S_m2 * v * multiplier)
    with np.errstate(over="ignore", invalid="ignore"):
        slope = (-(j01_A_m2 / vt) * (e1 + 1.0) - second_slope
                 - shunt_S_m2 * (multiplier + v * multiplier_slope))
    if bulk is not None:
        jb, djb = bulk_current(v, bulk, temperature_K=temperature_K)
        current, slope = current - jb, slope - djb
    return current, slope


def _single_diode_voltage(current, *, photocurrent_A_m2, j01_A_m2, shunt_S_m2, vt):
    """Vj(J) of one ideal diode with shunt, closed form through the Wright omega function.

    With G > 0: Vj = a - Vt w(x), a = (Jph + J0 - J)/G, x = ln(J0/(G Vt)) + a/Vt, w = omega(x).
    Since w + ln w = x, for x > 0 the same is Vj = Vt ln(w G Vt / J0), free of the cancellation
    of two large numbers; for x <= 0 (reverse branch) the first form is used. With G = 0:
    Vj = Vt ln1p((Jph - J)/J0), -inf at and beyond the saturation limit Jph + J0.
    """
    from scipy.special import wrightomega     # here: scipy.special costs a command 0.1 s to import

    drive = photocurrent_A_m2 + j01_A_m2 - current
    shunted = shunt_S_m2 > 0
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        g = np.where(shunted, shunt_S_m2, 1.0)
        a = drive / g
        x = np.log(j01_A_m2 / (g * vt)) + a / vt
        w = np.real(wrightomega(x))
        forward = vt * np.log(w * g * vt / j01_A_m2)
        reverse = a - vt * w
        with_shunt = np.where(x > 0, forward, reverse)
        ratio = (photocurrent_A_m2 - current) / j01_A_m2
        without_shunt = np.where(ratio > -1.0, vt * np.log1p(np.maximum(ratio, -1.0)), -np.inf)
    return np.where(shunted, with_shunt, without_shunt)


def junction_voltage(current_A_m2, *, photocurrent_A_m2, j01_A_m2, j02_A_m2=0.0,
                     shunt_S_m2=0.0, temperature_K, breakdown_V=-np.inf,
                     breakdown_factor=0.0, breakdown_exponent=BREAKDOWN_EXPONENT, bulk=None):
    """Junction voltage Vj [V] that carries ``current_A_m2`` [A/m^2] (inverse of junction_current).

    Parameters are those of :func:`junction_current`. Currents beyond what the junction can carry
    (no shunt and J >= Jph + J01 + J02) give -inf.

    Returns
    -------
    voltage : ndarray
        Vj [V].
    slope : ndarray
        dVj/dJ [V m^2 A^-1] (= 1 / dJ/dVj), < 0.
    """
    params = dict(photocurrent_A_m2=photocurrent_A_m2, j01_A_m2=j01_A_m2, j02_A_m2=j02_A_m2,
                  shunt_S_m2=shunt_S_m2, temperature_K=temperature_K, breakdown_V=breakdown_V,
                  breakdown_factor=breakdown_factor, breakdown_exponent=breakdown_exponent)
    bulk_arrays = () if bulk is None else tuple(np.asarray(c, dtype=float) for c in bulk)
    arrays = np.broadcast_arrays(np.asarray(current_A_m2, dtype=float),
                                 *[np.asarray(v, dtype=float) for v in params.values()],
                                 *bulk_arrays)
    current, (jph, j01, j02, g, temperature, vbr, factor, exponent) = arrays[0], arrays[1:9]
    bulk = tuple(arrays[9:]) if bulk is not None else None
    vt = thermal_voltage_V(temperature)
    simple = (j02 == 0) & ((factor == 0) | ~np.isfinite(vbr))
    if bulk is not None:
        simple &= ~(bulk[0] > 0)
    voltage = np.empty(current.shape)
    voltage[simple] = _single_diode_voltage(current[simple], photocurrent_A_m2=jph[simple],
                                            j01_A_m2=j01[simple], shunt_S_m2=g[simple],
                                            vt=vt[simple])
    hard = ~simple
    if np.any(hard):
        voltage[hard] = _bracketed_voltage(current[hard], jph[hard], j01[hard], j02[hard],
                                           g[hard], temperature[hard], vbr[hard],
                                           factor[hard], exponent[hard],
                                           None if bulk is None else tuple(c[hard] for c in bulk))
    with np.errstate(invalid="ignore"):
        _, slope_j = junction_current(voltage, photocurrent_A_m2=jph, j01_A_m2=j01, j02_A_m2=j02,
                                      shunt_S_m2=g, temperature_K=temperature,
                                      breakdown_V=vbr, breakdown_factor=factor,
                                      breakdown_exponent=exponent, bulk=bulk)
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.where(np.isfinite(voltage), 1.0 / slope_j, -np.inf)
    return voltage, slope


def beyond_reach(current_A_m2, *, photocurrent_A_m2, j01_A_m2, j02_A_m2, shunt_S_m2,
                 breakdown_V, breakdown_factor, bulk=None, **_):
    """True where :func:`junction_voltage` gives -inf by its bracketed search's own test, without
    searching, on the bracketed path (J02, breakdown or a base law): a NaN current, or, with no
    shunt and no base law, J at or beyond Jph + J01 + J02 (the same arithmetic as
    :func:`_bracketed_voltage`, so the answer is the search's bit for bit). False elsewhere
    (those entries need the search). Arguments as for :func:`junction_voltage`; broadcast together."""
    current, jph, j01, j02, g, vbr, factor = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (
        current_A_m2, photocurrent_A_m2, j01_A_m2, j02_A_m2, shunt_S_m2, breakdown_V,
        breakdown_factor)))
    hard = ~((j02 == 0) & ((factor == 0) | ~np.isfinite(vbr)))
    # a NaN current on the bracketed path: the search's lower bound is -inf or NaN and its test
    # says beyond reach (with or without shunt, breakdown or base law)
    if bulk is not None:
        hard = hard | (np.broadcast_to(np.asarray(bulk[0], dtype=float), current.shape) > 0)
        return hard & np.isnan(current)
    surplus = jph - current
    with np.errstate(invalid="ignore"):
        # no shunt: the search's lower bound is finite only where surplus >= 0
        return hard & (np.isnan(current) | ((g == 0) & ~(surplus >= 0)
                                            & ~(surplus + (j01 + j02) > 0)))


def _bracketed_voltage(current, jph, j01, j02, g, temperature, vbr, factor, exponent, bulk=None):
    """Vj(J) by a safeguarded Newton root find on the bracket (the law's own derivative)."""
    vt = thermal_voltage_V(temperature)
    surplus = jph - current
    saturation = j01 + j02
    if bulk is not None:
        # the base law's reverse saturation, -J_b(-inf)
        saturation = saturation - bulk_current(np.full(current.shape, -np.inf), bulk,
                                               temperature_K=temperature)[0]
    # upper bound: where the ideal diodes alone already carry the surplus (f < 0 there)
    with np.errstate(divide="ignore", invalid="ignore"):
        upper = np.where(surplus > 0, 2.0 * vt * np.log1p(np.maximum(surplus, 0.0) / saturation),
                         0.0) + 1e-9
        # lower bound: the shunt alone carries the deficit (f > 0 there); breakdown clips it
        lower = np.where(surplus >= 0, -1e-9,
                         np.where(g > 0, surplus / np.where(g > 0, g, 1.0) - 1e-9, -np.inf))
    has_breakdown = (factor > 0) & np.isfinite(vbr) & (g > 0)
    lower = np.where(has_breakdown, np.maximum(lower, vbr * (1.0 - 1e-12)), lower)
    reachable = np.isfinite(lower) | (surplus + saturation > 0)
    # without a shunt the deficit can reach at most -saturation: find a finite lower bound
    no_shunt = ~np.isfinite(lower) & reachable
    if np.any(no_shunt):
        ratio = np.clip(-(surplus[no_shunt]) / saturation[no_shunt], 0.0, 1.0)
        lower[no_shunt] = 2.0 * vt[no_shunt] * np.log(np.maximum(1.0 - ratio, 1e-300)) - 1.0
    out = np.full(current.shape, -np.inf)
    if np.any(reachable):
        r = reachable
        params = dict(photocurrent_A_m2=jph[r], j01_A_m2=j01[r], j02_A_m2=j02[r],
                      shunt_S_m2=g[r], temperature_K=temperature[r], breakdown_V=vbr[r],
                      breakdown_factor=factor[r], breakdown_exponent=exponent[r],
                      bulk=None if bulk is None else tuple(c[r] for c in bulk))
        target = current[r]

        def residual(v):
            value, slope = junction_current(v, **params)
            return value - target, slope

        # first guess: each diode alone in closed form (ideality 1 with J01, ideality 2 with
        # J02); the root lies just below the smaller of the two, within about kT/q ln 2
        alone_1 = _single_diode_voltage(target, photocurrent_A_m2=jph[r], j01_A_m2=j01[r],
                                        shunt_S_m2=g[r], vt=vt[r])
        with np.errstate(divide="ignore", invalid="ignore"):
            alone_2 = np.where(j02[r] > 0, _single_diode_voltage(
                target, photocurrent_A_m2=jph[r], j01_A_m2=np.where(j02[r] > 0, j02[r], 1.0),
                shunt_S_m2=g[r], vt=2.0 * vt[r]), np.inf)
        guess = np.fmin(alone_1, alone_2)
        out[r] = safeguarded_newton(residual, lower[r], upper[r], start=guess)
    return out


def subcell_voltage(current_A_m2, *, series_ohm_m2=0.0, **junction):
    """Terminal voltage [V] of a subcell carrying ``current_A_m2``: Vj(J) - J Rs.

    ``junction`` takes the keywords of :func:`junction_current`; ``series_ohm_m2`` is the series
    resistance-area [ohm m^2]. Returns (voltage, dV/dJ).
    """
    vj, slope = junction_voltage(current_A_m2, **junction)
    return vj - current_A_m2 * series_ohm_m2, slope - series_ohm_m2


def subcell_current(voltage_V, *, series_ohm_m2=0.0, forward=None, **junction):
    """Current density [A/m^2] of a subcell at terminal voltage ``voltage_V`` [V].

    Solves V = Vj - Rs J(Vj) for Vj (strictly increasing in Vj) by Newton steps inside an exact
    bracket from its end V + Rs J(V) (siltandem.inverse.polish_root, safeguarded by bisection),
    then J = J(Vj). Returns (current, dJ/dV).

    ``forward`` (optional) is the junction law as a callable ``vj -> (J, dJ/dVj)`` with its
    parameters bound (an element's cached form of :func:`junction_current`); otherwise
    ``junction`` takes the keywords of :func:`junction_current`.
    """
    voltage = np.asarray(voltage_V, dtype=float)
    rs = np.broadcast_to(np.asarray(series_ohm_m2, dtype=float), voltage.shape)
    if forward is None:
        bulk = junction.pop("bulk", None)
        junction = {k: np.broadcast_to(np.asarray(v, dtype=float), voltage.shape)
                    for k, v in junction.items()}
        if bulk is not None:
            junction["bulk"] = tuple(np.broadcast_to(np.asarray(c, dtype=float), voltage.shape)
                                     for c in bulk)

        def forward(vj):
            return junction_current(vj, **junction)
    if np.all(rs == 0):
        current, slope = forward(voltage)
        return current, slope

    def residual(vj):
        j, slope = forward(vj)
        return vj - rs * j - voltage, 1.0 - rs * slope

    # exact bracket: the root Vj* = V + Rs J(Vj*) lies between V and V + Rs J(V), because J
    # falls with Vj (if J(V) >= 0 then V <= Vj* <= V + Rs J(V), and the reverse if J(V) < 0)
    j_at_v, _ = forward(voltage)
    other = voltage + rs * j_at_v
    lo = np.minimum(voltage, other) - 1e-12
    hi = np.maximum(voltage, other) + 1e-12
    vbr = junction.get("breakdown_V")
    if vbr is not None:
        lo = np.maximum(lo, np.where(np.isfinite(vbr), vbr * (1 - 1e-12), -np.inf))
    # first guess V + Rs J(V), the bracket's own end: Newton from there converges at once when
    # Rs dJ/dVj is small, and the bracket keeps it safe when it is not
    with np.errstate(invalid="ignore"):
        start = np.clip(other, lo, hi)
    vj, _ = polish_root(residual, np.where(np.isfinite(start), start, 0.5 * (lo + hi)), lo, hi,
                        increasing=True)
    current, slope_j = forward(vj)
    slope = slope_j / (1.0 - rs * slope_j)
    return current, slope


def _breakdown_slope_shape(w, exponent):
    """q(w) = w^(-m-1) (m - (m - 1) w): (M + Vj M') - 1 = a q of the breakdown multiplier
    M = 1 + a w^-m, w = 1 - Vj/Vbr. dq/dw = m w^(-m-2) ((m - 1) w - (m + 1)): q falls up to
    w* = (m + 1)/(m - 1) (for m > 1) and rises beyond it; for m <= 1 it falls everywhere."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return w ** (-exponent - 1.0) * (exponent - (exponent - 1.0) * w)


def junction_slope_range(v_low_V, v_high_V, *, photocurrent_A_m2, j01_A_m2, j02_A_m2=0.0,
                         shunt_S_m2=0.0, temperature_K, breakdown_V=-np.inf,
                         breakdown_factor=0.0, breakdown_exponent=BREAKDOWN_EXPONENT, bulk=None):
    """The smallest and largest dJ/dVj [A m^-2 V^-1] of :func:`junction_current` over every
    junction voltage between ``v_low_V`` and ``v_high_V`` (arrays, v_low <= v_high).

    dJ/dVj = -(J01/Vt) e^(Vj/Vt) - (J02/2Vt) e^(Vj/2Vt) - G (1 + a q(w)), w = 1 - Vj/Vbr,
    q(w) = w^(-m-1) (m - (m - 1) w) (the derivative of Vj (1 + a w^-m)). Each term is
    monotone in Vj, except q, which has one minimum at w* = (m + 1)/(m - 1) for m > 1: the
    range is taken from the interval's ends and, where the interval holds w*, from q(w*). A
    rigorous enclosure (up to rounding), used to bound the string's power between two
    evaluated points (certificate.py). Both values are negative. A Si base law (``bulk``) adds
    its own enclosure (laws/silicon.py bulk_slope_range).
    """
    vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
    lo, hi = np.asarray(v_low_V, dtype=float), np.asarray(v_high_V, dtype=float)
    with np.errstate(over="ignore", invalid="ignore"):
        inverse = 1.0 / vt
        small = (j01_A_m2 * inverse) * np.exp(lo * inverse)
        large = (j01_A_m2 * inverse) * np.exp(hi * inverse)
        if np.any(np.asarray(j02_A_m2) > 0):
            half = 0.5 * inverse
            small = small + np.where(np.asarray(j02_A_m2) > 0,
                                     (j02_A_m2 * half) * np.exp(lo * half), 0.0)
            large = large + np.where(np.asarray(j02_A_m2) > 0,
                                     (j02_A_m2 * half) * np.exp(hi * half), 0.0)
        shunt_small = shunt_large = shunt_S_m2
        active = (np.asarray(breakdown_factor) > 0) & np.isfinite(breakdown_V)
        if np.any(active):
            vbr = np.where(active, breakdown_V, -1.0)
            # w rises with Vj (Vbr < 0)
            w_lo, w_hi = 1.0 - lo / vbr, 1.0 - hi / vbr
            m = np.asarray(breakdown_exponent, dtype=float)
            q_lo, q_hi = _breakdown_slope_shape(w_lo, m), _breakdown_slope_shape(w_hi, m)
            turn = np.where(m > 1.0, (m + 1.0) / np.where(m > 1.0, m - 1.0, 1.0), np.inf)
            inside = (w_lo < turn) & (turn < w_hi)
            q_min = np.where(inside, _breakdown_slope_shape(np.where(inside, turn, 1.0), m),
                             np.minimum(q_lo, q_hi))
            q_max = np.maximum(q_lo, q_hi)
            factor = np.where(active, breakdown_factor, 0.0)
            shunt_small = shunt_S_m2 * (1.0 + factor * np.where(active, q_min, 0.0))
            shunt_large = shunt_S_m2 * (1.0 + factor * np.where(active, q_max, 0.0))
        steepest = -(large + shunt_large)
        flattest = -(small + shunt_small)
    # widened by a few roundings of the terms above
    steepest, flattest = steepest * (1.0 + 1e-12), flattest * (1.0 - 1e-12)
    if bulk is not None:
        b_lo, b_hi = bulk_slope_range(lo, hi, bulk, temperature_K=temperature_K)
        steepest, flattest = steepest - b_hi, flattest - b_lo
    return steepest, flattest
