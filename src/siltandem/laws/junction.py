"""Junction-region laws of a layer subcell: abrupt-junction depletion, depletion-region recombination, radiative floor.

The abrupt p-n junction in the depletion approximation (Sze & Ng ch. 2) gives the built-in potential
and the depletion width a subcell's collection and dark current use; the depletion region's
Shockley-Read-Hall recombination current follows Sah, Noyce and Shockley (Proc. IRE 45 (1957) 1228)
with the exact integral over the region; the radiative floor keeps J01 at or above the detailed-balance
J0,rad of the subcell's gap.

References
----------
S. M. Sze, K. K. Ng, *Physics of Semiconductor Devices*, 3rd ed. (Wiley, 2007), ch. 2 (from memory).
C.-T. Sah, R. N. Noyce, W. Shockley, Proc. IRE 45 (1957) 1228 (depletion-region recombination).
"""
from typing import NamedTuple

import numpy as np

from siltandem.constants import ELEMENTARY_CHARGE_C, VACUUM_PERMITTIVITY_F_M, thermal_voltage_V
from siltandem.laws.checks import checked, finite, warn_nan


class AbruptJunction(NamedTuple):
    """Depletion approximation of an abrupt p-n junction at one voltage (SI)."""

    built_in_V: np.ndarray
    width_m: np.ndarray          # total depletion width
    n_side_width_m: np.ndarray   # part in the n layer
    p_side_width_m: np.ndarray   # part in the p layer
    peak_field_V_m: np.ndarray   # at the metallurgical junction


class DepletionRecombination(NamedTuple):
    """Result of :func:`depletion_recombination_current` (arrays of the broadcast shape)."""

    j02_A_m2: np.ndarray             # J02 with the effective width (Sah-Noyce-Shockley)
    current_A_m2: np.ndarray         # recombination current at the given voltage
    effective_width_m: np.ndarray    # pi kT / (q E*), capped at the depletion width
    depletion_width_m: np.ndarray
    full_width_j02_A_m2: np.ndarray  # upper bound q ni W / (2 sqrt(tau_n tau_p))


class RadiativeFloor(NamedTuple):
    """J01 raised to the radiative limit where the diffusion model fell below it."""

    j01_A_m2: np.ndarray
    floored: np.ndarray  # bool: True where the radiative value was used


def _abrupt(voltage_V, acceptor_density_m3, donor_density_m3, relative_permittivity,
            intrinsic_density_m3, temperature_K, where):
    """Validated abrupt-junction arrays and the count of points at or beyond the built-in voltage."""
    v = finite("voltage_V", voltage_V, "V", where=where)
    na = checked("acceptor_density_m3", acceptor_density_m3, "m^-3", where=where)
    nd = checked("donor_density_m3", donor_density_m3, "m^-3", where=where)
    eps = checked("relative_permittivity", relative_permittivity, "", where=where) \
        * VACUUM_PERMITTIVITY_F_M
    ni = checked("intrinsic_density_m3", intrinsic_density_m3, "m^-3", where=where)
    vt = thermal_voltage_V(checked("temperature_K", temperature_K, "K", where=where))
    built_in = vt * np.log(na * nd / (ni * ni))
    drop = built_in - v
    outside = ~(drop > 0)
    drop = np.where(outside, np.nan, drop)
    q = ELEMENTARY_CHARGE_C
    width = np.sqrt(2.0 * eps * drop * (na + nd) / (q * na * nd))
    xn = width * na / (na + nd)
    xp = width * nd / (na + nd)
    field = q * nd * xn / eps
    arrays = np.broadcast_arrays(built_in, width, xn, xp, field)
    junction = AbruptJunction(*(np.array(a, dtype=float) for a in arrays))
    return junction, int(np.count_nonzero(outside)), (v, na, nd, eps, ni, vt)


def abrupt_junction(voltage_V, *, acceptor_density_m3, donor_density_m3, relative_permittivity,
                    intrinsic_density_m3, temperature_K, where="junction"):
    """Depletion approximation of an abrupt p-n homojunction.

    Parameters
    ----------
    voltage_V : array_like
        Junction voltage V [V] (forward positive), < Vbi; points at or above Vbi are NaN (warned once).
    acceptor_density_m3, donor_density_m3 : array_like
        Dopings NA of the p side and ND of the n side [m^-3], > 0.
    relative_permittivity : array_like
        Static relative permittivity [-], > 0.
    intrinsic_density_m3 : array_like
        ni [m^-3], > 0.
    temperature_K : array_like
        Temperature [K], > 0.
    where : str
        Name for messages.

    Returns
    -------
    AbruptJunction
        Built-in voltage, total width and its n-side and p-side parts, peak field.

    Notes
    -----
    Vbi = (kT/q) ln(NA ND / ni^2); W = sqrt(2 eps (Vbi - V) (NA + ND) / (q NA ND));
    xn = W NA / (NA + ND), xp = W ND / (NA + ND); E_max = q ND xn / eps. Majority-carrier tails
    (the -2kT/q correction) are neglected.

    References
    ----------
    S. M. Sze, K. K. Ng (2007), ch. 2 (abrupt junction, depletion approximation).
    """
    junction, outside, _ = _abrupt(voltage_V, acceptor_density_m3, donor_density_m3,
                                   relative_permittivity, intrinsic_density_m3, temperature_K, where)
    warn_nan(where, outside, "at or beyond the built-in voltage (no depletion region)")
    return junction


def _sech_integral(ratio):
    """G(r) = integral over the real line of dy / (cosh y + r), r >= 0 (pi at r = 0, 2 at r = 1).

    G = 4/(1 + r) * arctan(s)/s with s = sqrt((1 - r)/(1 + r)) for r < 1, and artanh(s)/s with
    s = sqrt((r - 1)/(r + 1)) for r > 1 (integral tables, e.g. Gradshteyn-Ryzhik 2.451; from memory;
    the tests check it with quad).
    """
    r = np.asarray(ratio, dtype=float)
    s = np.sqrt(np.abs(1.0 - r) / (1.0 + r))
    small = s < 1e-4
    with np.errstate(divide="ignore", invalid="ignore"):
        below = np.arctan(s) / s
        above = np.arctanh(np.minimum(s, 1.0 - 1e-16)) / s
    series_below = 1.0 - s * s / 3.0
    series_above = 1.0 + s * s / 3.0
    value = np.where(r < 1.0, np.where(small, series_below, below),
                     np.where(small, series_above, above))
    return 4.0 / (1.0 + r) * value


def depletion_recombination_current(voltage_V, *, intrinsic_density_m3, electron_lifetime_s,
                                    hole_lifetime_s, acceptor_density_m3, donor_density_m3,
                                    relative_permittivity, temperature_K, where="subcell"):
    """J02 and the depletion-region recombination current of an abrupt junction (ideality 2).

    Parameters
    ----------
    voltage_V : array_like
        Junction voltage [V], 0 <= V < Vbi (NaN outside, warned once). The effective width depends
        on the field, hence on V: give the operating voltage that matters (near the maximum power
        point). The full-width bound does not depend on the field.
    intrinsic_density_m3 : array_like
        ni [m^-3], > 0.
    electron_lifetime_s, hole_lifetime_s : array_like
        SRH lifetimes tau_n, tau_p of the midgap centres in the depletion region [s], > 0.
    acceptor_density_m3, donor_density_m3 : array_like
        NA of the p side, ND of the n side [m^-3], > 0.
    relative_permittivity : array_like
        Static relative permittivity [-], > 0.
    temperature_K : array_like
        Temperature [K], > 0.
    where : str
        Name for messages.

    Returns
    -------
    DepletionRecombination
        ``j02_A_m2`` (to use with exp(qV/2kT) - 1), ``current_A_m2`` at ``voltage_V``,
        ``effective_width_m`` (pi kT/(q E*), capped at W), ``depletion_width_m``,
        ``full_width_j02_A_m2``.

    Notes
    -----
    Shockley-Read-Hall rate with a midgap centre and flat quasi-Fermi levels (n p = ni^2 e^v,
    v = qV/kT): U = (n p - ni^2) / (tau_p (n + ni) + tau_n (p + ni)). It is largest where
    tau_p n = tau_n p, where U_max ~ ni e^(v/2) / (2 sqrt(tau_n tau_p)); hence the full-width bound
    J02 <= q ni W / (2 sqrt(tau_n tau_p)). Around the maximum the potential is nearly linear with
    the local field E*; with y = (psi - psi*)/(kT/q) the rate is
    U = ni (e^v - 1) / (A cosh y + B), A = 2 sqrt(tau_n tau_p) e^(v/2), B = tau_n + tau_p, and

        J_rec = q (kT/q) / E* * ni (e^v - 1) G(B/A) / A,    G(r) = int dy / (cosh y + r)

    which for qV >> kT (G -> pi) is J02 (e^(v/2) - e^(-v/2)) with

        J02 = q ni W_eff / (2 sqrt(tau_n tau_p)),   W_eff = pi kT / (q E*)

    (Sah, Noyce, Shockley 1957; Sze & Ng ch. 2). E* is the depletion-approximation field at the
    potential psi* = [Vbi - V + (kT/q) ln(tau_n NA / (tau_p ND))] / 2 above the p edge (clipped to
    the region). W_eff (and G kT/(q E*) in the current) is capped at W. The linear-field step is
    the only approximation beyond the depletion approximation: its relative error is of order
    (kT/q) / psi_min, psi_min the smaller of psi* and Vbi - V - psi* (about 5 % at
    Vbi - V = 0.5 V for a symmetric junction; measured against the full SRH integral in the tests).

    References
    ----------
    C.-T. Sah, R. N. Noyce, W. Shockley, Proc. IRE 45 (1957) 1228; S. M. Sze, K. K. Ng (2007),
    ch. 2 (generation-recombination current; from memory).
    """
    junction, outside, (v, na, nd, eps, ni, vt) = _abrupt(
        voltage_V, acceptor_density_m3, donor_density_m3, relative_permittivity,
        intrinsic_density_m3, temperature_K, where)
    tau_n = checked("electron_lifetime_s", electron_lifetime_s, "s", where=where)
    tau_p = checked("hole_lifetime_s", hole_lifetime_s, "s", where=where)
    warn_nan(where, outside, "at or beyond the built-in voltage (no depletion region)")
    q = ELEMENTARY_CHARGE_C
    drop = junction.built_in_V - v
    with np.errstate(invalid="ignore"):  # NaN where drop is NaN, already counted and warned
        psi = np.clip(0.5 * (drop + vt * np.log(tau_n * na / (tau_p * nd))), 0.0, drop)
        p_drop = drop * nd / (na + nd)
        field = np.where(psi <= p_drop, np.sqrt(2.0 * q * na * psi / eps),
                         np.sqrt(2.0 * q * nd * np.maximum(drop - psi, 0.0) / eps))
    tau = np.sqrt(tau_n * tau_p)
    with np.errstate(divide="ignore", over="ignore"):
        scale = vt / field                           # kT/(q E*) [m]; inf where E* = 0
        w_eff = np.minimum(np.pi * scale, junction.width_m)
        half = np.exp(-0.5 * v / vt)                 # e^(-v/2): B/A = (tau_n + tau_p) e^(-v/2) / (2 tau)
        g = _sech_integral((tau_n + tau_p) / (2.0 * tau) * half)
        width_now = np.minimum(g * scale, junction.width_m)
        current = q * ni * width_now / (2.0 * tau) * (np.exp(0.5 * v / vt) - half)
    reverse = v < 0
    warn_nan(where, int(np.count_nonzero(reverse & ~np.isnan(drop))),
              "in reverse bias (the recombination estimate is for V >= 0)")
    current = np.where(reverse, np.nan, current)
    j02 = q * ni * w_eff / (2.0 * tau)
    bound = q * ni * junction.width_m / (2.0 * tau)
    arrays = np.broadcast_arrays(j02, current, w_eff, junction.width_m, bound)
    return DepletionRecombination(*(np.array(a, dtype=float) for a in arrays))


def apply_radiative_floor(j01_A_m2, *, radiative_j0_A_m2):
    """Raise J01 to the radiative limit where it falls below it.

    Parameters
    ----------
    j01_A_m2 : array_like
        J01 from the diffusion model [A/m^2], >= 0.
    radiative_j0_A_m2 : array_like
        Radiative saturation current J0,rad [A/m^2] of the same subcell (e.g.
        :func:`siltandem.laws.radiative.radiative_saturation_current`), >= 0.

    Returns
    -------
    RadiativeFloor
        ``j01_A_m2`` = max(J01, J0,rad) and ``floored`` (bool) where J0,rad was used.

    Notes
    -----
    A cell cannot recombine less than it must radiate (detailed balance: W. Shockley,
    H. J. Queisser, J. Appl. Phys. 32 (1961) 510), so J01 >= J0,rad. The floor is a maximum, not a
    sum: a lifetime from the materials library is taken to include radiative recombination.
    """
    j01 = checked("j01_A_m2", j01_A_m2, "A/m^2", where="radiative floor", zero_ok=True)
    rad = checked("radiative_j0_A_m2", radiative_j0_A_m2, "A/m^2", where="radiative floor",
                   zero_ok=True)
    floored = rad > j01
    value = np.where(floored, rad, j01)
    value, floored = np.broadcast_arrays(value, floored)
    return RadiativeFloor(np.array(value, dtype=float), np.array(floored, dtype=bool))
