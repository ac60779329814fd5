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
    resistance = sum(c[2] for c in cells) + sum(
        np.broadcast_to(e.series_ohm_m2, (size, 1)) for e in string.elements
        if e.kind == "resistor")
    limit = np.min(np.concatenate([jph + j0 for jph, j0, _ in cells], axis=1), axis=1,
                   keepdims=True)

    def voltage(j):
        v = -resistance * j
        dv = -resistance + 0.0 * j
        d2v = 0.0 * j
        for jph, j0, _ in cells:
            room = jph - j + j0
            with np.errstate(divide="ignore", invalid="ignore"):
                v = v + vt * np.log(room / j0)
                dv = dv - vt / room
                d2v = d2v - vt / room**2
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
    for element in string.elements:
        if element.kind == "resistor":
            r = np.broadcast_to(element.series_ohm_m2, (size, 1))
            voltages_mpp.append(-r * j_mpp)
            voltages_voc.append(np.zeros((size, 1)))
        else:
            jph = np.broadcast_to(element.photocurrent_A_m2, (size, 1))
            j0 = np.broadcast_to(element.j01_A_m2(temperature_K), (size, 1))
            r = np.broadcast_to(element.series_ohm_m2, (size, 1))
            voltages_mpp.append(vt * np.log1p((jph - j_mpp) / j0) - r * j_mpp)
            voltages_voc.append(vt * np.log1p(jph / j0))
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
