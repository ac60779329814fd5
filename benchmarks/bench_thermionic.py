"""Speed of the isotype-interface law: 1e6 vectorized J(V) evaluations versus a per-point
brentq solve of the same charge balance, both measured in this run (medians of a few repeats).

Run: python benchmarks/bench_thermionic.py   (prints numbers; asserts nothing about time)
"""
import math
import time

import numpy as np
from scipy.optimize import brentq

from siltandem.constants import thermal_voltage_V
from siltandem.laws.thermionic import isotype_current_density, isotype_voltage

N_VECTOR = 1_000_000
N_LOOP = 300
REPEATS = 5
T = 300.0
KW = dict(barrier_eV=0.45, built_in_V=0.30, richardson_A_m2_K2=8.16e4, temperature_K=T)


def median_time(fn, repeats=REPEATS):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def brentq_current(v_applied, alpha):
    """The same law, one point at a time: brentq on the charge balance, then J."""
    vt = thermal_voltage_V(T)
    vb = (KW["built_in_V"] - v_applied) / vt
    balance = lambda x: alpha * (math.expm1(x) - x) + x - vb
    v1 = brentq(balance, 0.0, vb, xtol=1e-300, rtol=4 * np.finfo(float).eps)
    prefactor = KW["richardson_A_m2_K2"] * T**2 * math.exp(-KW["barrier_eV"] / vt)
    return prefactor * math.exp(v1) * math.expm1(v_applied / vt)


def main():
    rng = np.random.default_rng(0)
    voltage = rng.uniform(-1.0, 0.29, N_VECTOR)
    alpha = 10.0 ** rng.uniform(-8.0, 8.0, N_VECTOR)

    t_j = median_time(lambda: isotype_current_density(voltage, alpha=alpha, **KW))
    t_jd = median_time(lambda: isotype_current_density(voltage, alpha=alpha, with_derivative=True, **KW))
    current = isotype_current_density(voltage, alpha=alpha, **KW)
    t_v = median_time(lambda: isotype_voltage(current, alpha=alpha, **KW), repeats=3)

    idx = rng.choice(N_VECTOR, N_LOOP, replace=False)
    t_loop = median_time(lambda: [brentq_current(voltage[i], alpha[i]) for i in idx])
    loop_per_point = t_loop / N_LOOP
    loop = np.array([brentq_current(voltage[i], alpha[i]) for i in idx])
    agreement = np.max(np.abs(loop / current[idx] - 1))

    print(f"vectorized J(V), {N_VECTOR:.0e} points, median of {REPEATS}: {t_j:.3f} s "
          f"({t_j / N_VECTOR * 1e9:.0f} ns/point)")
    print(f"vectorized J(V) and dJ/dV:                         {t_jd:.3f} s")
    print(f"vectorized V(J) (bracketed root find), median of 3: {t_v:.3f} s")
    print(f"per-point brentq of the same law: {loop_per_point * 1e6:.1f} us/point "
          f"({N_LOOP} points timed) -> {loop_per_point * N_VECTOR:.1f} s scaled to {N_VECTOR:.0e}")
    print(f"speed ratio, brentq loop / vectorized J(V): {loop_per_point * N_VECTOR / t_j:.0f}x")
    print(f"largest relative difference between the two on the timed points: {agreement:.1e}")
    # the form the elements use: the exact Boltzmann depletion side (Newton inside the bracket of
    # the two closed forms), against the plain closed form timed above
    t_exact = median_time(lambda: isotype_current_density(voltage, alpha=alpha, depletion="exact", **KW),
                          repeats=3)
    print(f"vectorized J(V), exact depletion side, median of 3: {t_exact:.3f} s "
          f"({t_exact / t_j:.1f}x the plain closed form)")


if __name__ == "__main__":
    main()
