"""Abrupt anisotype heterojunction (an emitter and a base of different materials) in the depletion
approximation: built-in voltage from the two band diagrams, the depletion widths with two
permittivities, and the largest band spike that thermionic emission lets the photocurrent cross.

Model (R. L. Anderson, Solid-State Electron. 5 (1962) 341; S. M. Sze, K. K. Ng, Physics of
Semiconductor Devices, 3rd ed. (2007), ch. 2, heterojunctions): the bands of each side keep their
own edges up to the metallurgical interface, where they step by the band offsets; each side is
non-degenerate (Boltzmann) with its own intrinsic density. With the same material on both sides
every formula here is the homojunction's (laws/junction.py).
"""
from typing import NamedTuple

import numpy as np

from siltandem.constants import ELEMENTARY_CHARGE_C, VACUUM_PERMITTIVITY_F_M, thermal_voltage_V
from siltandem.laws.checks import checked, finite


class Heterojunction(NamedTuple):
    """Depletion approximation of an abrupt anisotype heterojunction at one voltage (SI)."""

    built_in_V: np.ndarray
    width_m: np.ndarray          # total depletion width
    n_side_width_m: np.ndarray   # part in the n layer
    p_side_width_m: np.ndarray   # part in the p layer


def built_in_voltage_V(*, acceptor_density_m3, donor_density_m3, n_intrinsic_density_m3,
                       p_intrinsic_density_m3, n_band_edges_eV, p_band_edges_eV, n_states_m3,
                       p_states_m3, temperature_K, where="heterojunction"):
    """Built-in voltage [V] of an abrupt n-p heterojunction: the difference of the two sides' Fermi
    levels on a common energy scale.

    Parameters
    ----------
    acceptor_density_m3, donor_density_m3 : array_like
        NA of the p side, ND of the n side [m^-3], > 0.
    n_intrinsic_density_m3, p_intrinsic_density_m3 : array_like
        Intrinsic density of the n side's and the p side's material [m^-3], > 0.
    n_band_edges_eV, p_band_edges_eV : (Ec, Ev)
        Conduction- and valence-band edges of each side's material on one common scale [eV]
        (measured valence-band offsets, or -affinity and -affinity - gap).
    n_states_m3, p_states_m3 : (Nc, Nv)
        Effective densities of states of each side's material [m^-3], > 0.
    temperature_K : array_like
        [K], > 0.

    Returns
    -------
    ndarray
        q Vbi = (E_F,n - E_i,n) + (E_i,n - E_i,p) + (E_i,p - E_F,p)
              = kT ln(NA ND / (ni,n ni,p)) + (E_c,n + E_v,n - E_c,p - E_v,p) / 2
                + (kT / 2) ln(Nv,n Nc,p / (Nc,n Nv,p)),
        with E_i = (E_c + E_v) / 2 + (kT / 2) ln(Nv / Nc) the intrinsic level of each side
        (Sze & Ng ch. 1 and ch. 2); for one material, kT ln(NA ND / ni^2).
    """
    na = checked("acceptor_density_m3", acceptor_density_m3, "m^-3", where=where)
    nd = checked("donor_density_m3", donor_density_m3, "m^-3", where=where)
    ni_n = checked("n_intrinsic_density_m3", n_intrinsic_density_m3, "m^-3", where=where)
    ni_p = checked("p_intrinsic_density_m3", p_intrinsic_density_m3, "m^-3", where=where)
    vt = thermal_voltage_V(checked("temperature_K", temperature_K, "K", where=where))
    ec_n, ev_n = (finite("n_band_edges_eV", e, "eV", where=where) for e in n_band_edges_eV)
    ec_p, ev_p = (finite("p_band_edges_eV", e, "eV", where=where) for e in p_band_edges_eV)
    nc_n, nv_n = (checked("n_states_m3", s, "m^-3", where=where) for s in n_states_m3)
    nc_p, nv_p = (checked("p_states_m3", s, "m^-3", where=where) for s in p_states_m3)
    return (vt * np.log(na * nd / (ni_n * ni_p)) + 0.5 * ((ec_n + ev_n) - (ec_p + ev_p))
            + 0.5 * vt * np.log(nv_n * nc_p / (nc_n * nv_p)))


def depletion(voltage_V, *, built_in_V, acceptor_density_m3, donor_density_m3,
              n_relative_permittivity, p_relative_permittivity, where="heterojunction"):
    """Depletion widths of an abrupt n-p heterojunction (two permittivities).

    Parameters
    ----------
    voltage_V : array_like
        Junction voltage [V] (forward positive), < ``built_in_V`` (NaN at or above).
    built_in_V : array_like
        From :func:`built_in_voltage_V` [V].
    acceptor_density_m3, donor_density_m3 : array_like
        NA of the p side, ND of the n side [m^-3], > 0.
    n_relative_permittivity, p_relative_permittivity : array_like
        Static relative permittivities of the two sides [-], > 0.

    Returns
    -------
    Heterojunction

    Notes
    -----
    x_n = sqrt(2 eps_n eps_p NA (Vbi - V) / (q ND (eps_n ND + eps_p NA))),
    x_p = sqrt(2 eps_n eps_p ND (Vbi - V) / (q NA (eps_n ND + eps_p NA)))
    (Anderson 1962; Sze & Ng (2007) ch. 2): charge neutrality ND x_n = NA x_p, and the potential
    drops q ND x_n^2 / (2 eps_n) + q NA x_p^2 / (2 eps_p) = Vbi - V.
    """
    v = finite("voltage_V", voltage_V, "V", where=where)
    vbi = finite("built_in_V", built_in_V, "V", where=where)
    na = checked("acceptor_density_m3", acceptor_density_m3, "m^-3", where=where)
    nd = checked("donor_density_m3", donor_density_m3, "m^-3", where=where)
    eps_n = checked("n_relative_permittivity", n_relative_permittivity, "", where=where) \
        * VACUUM_PERMITTIVITY_F_M
    eps_p = checked("p_relative_permittivity", p_relative_permittivity, "", where=where) \
        * VACUUM_PERMITTIVITY_F_M
    drop = vbi - v
    drop = np.where(drop > 0, drop, np.nan)
    q = ELEMENTARY_CHARGE_C
    common = 2.0 * eps_n * eps_p * drop / (q * (eps_n * nd + eps_p * na))
    xn = np.sqrt(common * na / nd)
    xp = np.sqrt(common * nd / na)
    arrays = np.broadcast_arrays(vbi, xn + xp, xn, xp)
    return Heterojunction(*(np.array(a, dtype=float) for a in arrays))


def largest_crossable_spike_eV(*, richardson_A_m2_K2, photocurrent_A_m2, temperature_K, margin=100.0,
                               where="heterojunction"):
    """The tallest band spike [eV] over which thermionic emission still carries ``margin`` times
    the photocurrent: kT ln(A* T^2 / (margin J)).

    A spike of height dE at the interface passes at most A* T^2 exp(-dE / kT) (thermionic
    emission, H. A. Bethe 1942; Sze & Ng (2007) ch. 3); a spike the photocurrent cannot cross
    with a margin of 100 blocks the minority carriers and the subcell collects nothing (the margin
    is common practice, no source). Tunnelling through a thin spike is not counted (the bound is
    on the safe side for refusing only what cannot work).
    """
    a = checked("richardson_A_m2_K2", richardson_A_m2_K2, "A/(m^2 K^2)", where=where)
    j = checked("photocurrent_A_m2", photocurrent_A_m2, "A/m^2", where=where)
    t = checked("temperature_K", temperature_K, "K", where=where)
    return thermal_voltage_V(t) * np.log(a * t * t / (margin * j))
