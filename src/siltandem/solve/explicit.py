"""Operating points of strings of ideal single diodes and resistors, explicit in the current (the maps' fast path)."""
import numpy as np

from siltandem.constants import thermal_voltage_V
from siltandem.solve.certificate import Certificate


def solve_explicit(string, temperature_K):
    """Summary of strings whose V(J) is explicit: ideal single-diode subcells without shunt, and
    resistors. Parameterised by J directly (no inverse laws, no pilot): the fast path of studies.

    V(J) = sum_i Vt ln1p((Jph_i - J)/J0_i) - J (sum of series resistances). P = J V is concave in
    J here (each term of V is concave), so the MPP is the one root of g = V + J V' in
    (0, min Jph + J0), found by safeguarded Newton with g' = 2 V' + J V''; Jsc is the root of V.
    """
    from siltandem.numerics.roots import safeguarded_newton

    vt = thermal_voltage_V(np.asarray(temperature_K, dtype=float))
    size = string.size
    cells = [(np.broadcast_to(e.photocurrent_A_m2, (size, 1)),
              np.broadcast_to(e.j01_A_m2(temperature_K), (size, 1)),
              np.broadcast_to(e.series_ohm_m2, (size, 1))) for e in string.subcells]
    sources = _coupling_sources(string, temperature_K, size)
    resistance = sum(c[2] for c in cells) + sum(
        np.broadcast_to(e.series_ohm_m2, (size, 1)) for e in string.elements
        if e.kind == "resistor")
    limit = _saturation_limit(cells, sources)

    def rooms(j):
        """Jph,eff - J + J0 of every subcell and its slope in J (a coupled subcell's photocurrent
        gains k max(Jph,eff,source - J, 0), affine in J: circuit.coupling.linear_emission)."""
        out = []
        for (jph, j0, _), source in zip(cells, sources):
            room, slope = jph - j + j0, -1.0 + 0.0 * j
            if source is not None:
                index, k = source
                above, above_slope = out[index]
                lit = above - cells[index][1] > 0
                room = room + np.where(lit, k * (above - cells[index][1]), 0.0)
                slope = slope + np.where(lit, k * above_slope, 0.0)
            out.append((room, slope))
        return out

    def voltage(j):
        v = -resistance * j
        dv = -resistance + 0.0 * j
        d2v = 0.0 * j
        for (_, j0, _), (room, slope) in zip(cells, rooms(j)):
            with np.errstate(divide="ignore", invalid="ignore"):
                v = v + vt * np.log(room / j0)
                dv = dv + vt * slope / room
                d2v = d2v - vt * slope**2 / room**2
        return v, dv, d2v

    upper = limit * (1 - 1e-15)

    def mpp_equation(j):
        v, dv, d2v = voltage(j)
        return v + j * dv, 2 * dv + j * d2v

    def terminal(j):
        v, dv, _ = voltage(j)
        return v, dv

    zero = np.zeros((size, 1))
    j_mpp = safeguarded_newton(mpp_equation, zero, upper)
    jsc = safeguarded_newton(terminal, zero, upper)
    # no sign change at the upper end (V still > 0 at the saturation limit, in float64): Jsc
    # is the limit itself to rounding
    jsc = np.where(np.isfinite(jsc), jsc, limit)
    v_mpp = voltage(j_mpp)[0]
    voc = voltage(zero)[0]
    voltages_mpp, voltages_voc = [], []
    at_mpp, at_zero = rooms(j_mpp), rooms(zero)
    for element in string.elements:
        if element.kind == "resistor":
            r = np.broadcast_to(element.series_ohm_m2, (size, 1))
            voltages_mpp.append(-r * j_mpp)
            voltages_voc.append(np.zeros((size, 1)))
        else:
            k = next(i for i, e in enumerate(string.subcells) if e is element)
            j0 = cells[k][1]
            r = cells[k][2]
            voltages_mpp.append(vt * np.log(at_mpp[k][0] / j0) - r * j_mpp)
            voltages_voc.append(vt * np.log(at_zero[k][0] / j0))
    p_mpp = j_mpp * v_mpp
    # P(J) is concave on J >= 0 (P'' = 2 V' + J V'' < 0): the root of dP/dJ is the global
    # maximum, a proof needing no cells
    finite = np.isfinite(p_mpp[:, 0])
    proof = Certificate(finite, np.where(finite, p_mpp[:, 0], np.nan),
                        np.zeros(size, dtype=int))
    return dict(voc=voc, jsc=jsc, v_mpp=v_mpp, j_mpp=j_mpp, p_mpp=p_mpp,
                voltages_mpp=voltages_mpp, voltages_voc=voltages_voc, curve=None,
                reaches_peak=np.zeros(size, dtype=bool), capped=np.zeros(size, dtype=bool),
                certificate=proof)


def _coupling_sources(string, temperature_K, size):
    """Per subcell of the string: None, or (index of its source among the subcells, k) with
    k = c J0,rad / J01 of the source [-], (size, 1)."""
    from siltandem.circuit.coupling import is_coupled, radiative_limit_A_m2

    names = [e.name for e in string.subcells]
    out = []
    for element in string.subcells:
        if not is_coupled(element):
            out.append(None)
            continue
        source = element.source
        k = (element.source_fraction * radiative_limit_A_m2(source, temperature_K)
             / source.j01_A_m2(temperature_K))
        out.append((names.index(source.name), np.broadcast_to(k, (size, 1))))
    return out


def _saturation_limit(cells, sources):
    """The smallest current at which some subcell's Jph,eff - J + J0 reaches zero (size, 1).

    Each is affine in J, alpha - beta J, up to the clip of a source's emission, which acts only
    within J01 of the source's own limit (then that limit, the smaller, is the answer to rounding).
    """
    affine, roots = [], []
    for (jph, j0, _), source in zip(cells, sources):
        alpha, beta = jph + j0, 1.0
        if source is not None:
            index, k = source
            above_alpha, above_beta = affine[index]
            alpha = alpha + k * (above_alpha - cells[index][1])
            beta = beta + k * above_beta
        affine.append((alpha, beta))
        roots.append(alpha / beta)
    return np.min(np.concatenate(roots, axis=1), axis=1, keepdims=True)
