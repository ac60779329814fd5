"""Minority-carrier lifetimes split by mechanism, and the radiative floor with emission to both sides.

A III-V layer's minority carriers recombine radiatively (band to band, rate B N at low injection
in a layer doped N) and non-radiatively (Shockley-Read-Hall, lifetime tau_SRH). Most of the
radiative emission is re-absorbed (photon recycling), which lengthens the effective radiative
lifetime by the photon-recycling factor phi (P. Asbeck, J. Appl. Phys. 48 (1977) 820):

    1/tau_eff = 1/tau_SRH + 1/(phi tau_rad),    tau_rad = 1/(B N)

Only the escaping radiation is a loss, and it is the generalized Planck emission of the subcell
(P. Wuerfel, J. Phys. C 15 (1982) 3967) into everything that absorbs it: the front ambient and
whatever lies behind (substrate, lower subcell), about n^2 more than the front alone
(M. A. Steiner et al., J. Appl. Phys. 113 (2013) 123109; O. D. Miller, E. Yablonovitch,
S. R. Kurtz, IEEE J. Photovolt. 2 (2012) 303). The self-consistent photon-recycling factor makes
the internal radiative recombination of the layers (q B ni^2 W) equal to that external emission.
"""
import numpy as np

from siltandem.constants import ELEMENTARY_CHARGE_C

__all__ = ["radiative_lifetime_s", "effective_lifetime_s", "nonradiative_lifetime_s",
           "surface_share", "rear_emission_factor", "self_consistent_recycling"]


def radiative_lifetime_s(doping_cm3, *, coefficient_cm3_s, recycling_factor=1.0):
    """Low-injection radiative lifetime phi / (B N) [s] of a layer doped ``doping_cm3`` [cm^-3]
    with radiative coefficient B [cm^3/s] and photon-recycling factor phi >= 1 [-].

    References
    ----------
    W. van Roosbroeck, W. Shockley, Phys. Rev. 94 (1954) 1558; P. Asbeck (1977) (recycling).
    """
    return np.asarray(recycling_factor, float) / (np.asarray(coefficient_cm3_s, float)
                                                  * np.asarray(doping_cm3, float))


def effective_lifetime_s(srh_lifetime_s, radiative_lifetime_s):
    """1 / (1/tau_SRH + 1/tau_rad) [s]; either may be inf."""
    with np.errstate(divide="ignore"):
        return 1.0 / (1.0 / np.asarray(srh_lifetime_s, float) + 1.0 / np.asarray(radiative_lifetime_s, float))


def nonradiative_lifetime_s(total_lifetime_s, radiative_lifetime_s):
    """The SRH part of a measured (total) lifetime: 1 / (1/tau - 1/tau_rad) [s]; inf where the
    radiative lifetime alone is as short as the total (the layer is radiatively limited)."""
    rate = 1.0 / np.asarray(total_lifetime_s, float) - 1.0 / np.asarray(radiative_lifetime_s, float)
    with np.errstate(divide="ignore"):
        return np.where(rate > 0, 1.0 / np.where(rate > 0, rate, 1.0), np.inf)


def surface_share(thickness_m, *, doping_m3, intrinsic_density_m3, diffusion_length_m,
                  diffusivity_m2_s, surface_srv_m_s):
    """The outer surface's part [A/m^2] of a quasi-neutral region's saturation current.

    Notes
    -----
    With the excess density Delta n(0) = ni^2/N (e^v - 1) at the depletion edge and the
    diffusion profile of laws/collection.region_saturation_current, the density at the surface
    is Delta n(0) / (cosh(W/L) + (S L / D) sinh(W/L)) and the surface current q S Delta n(W)
    (Hovel 1975, ch. 2; the region's J0 minus this is its bulk recombination, which splits by
    rate between the mechanisms).
    """
    w, length = np.asarray(thickness_m, float), np.asarray(diffusion_length_m, float)
    s, d = np.asarray(surface_srv_m_s, float), np.asarray(diffusivity_m2_s, float)
    k = np.minimum(w / length, 700.0)
    n0 = np.asarray(intrinsic_density_m3, float) ** 2 / np.asarray(doping_m3, float)
    # L sinh(W/L) written as W sinh(k)/k, finite for L = inf (k = 0)
    sinhc = np.where(k > 1e-8, np.sinh(k) / np.where(k > 1e-8, k, 1.0), 1.0)
    with np.errstate(divide="ignore"):
        return ELEMENTARY_CHARGE_C * n0 / (np.cosh(k) / s + w / d * sinhc)


def rear_emission_factor(*, cell_index, rear_index=None, back_reflectance=0.0):
    """Rear emission of a subcell over its front emission into air [-].

    Parameters
    ----------
    cell_index : float
        Refractive index of the subcell at its emission peak.
    rear_index : float or None
        Index of the first layer behind the subcell that absorbs its emission (a substrate, a
        lower subcell): emission enters it at min(n_rear, n_cell)^2 times the vacuum rate
        (generalized Planck law in a medium of index n: n^2 times; beyond the cell's own index the
        escape cone is the cell's). None: nothing behind absorbs; the emission crosses the
        transparent layers to the stack's back, which reflects ``back_reflectance`` at every angle
        (a mirror in contact; 0: an absorbing back contact, as the optics stage treats the back),
        so n_cell^2 (1 - R) of it is lost.

    References
    ----------
    P. Wuerfel (1982); M. A. Steiner et al. (2013); O. D. Miller et al. (2012).
    """
    if rear_index is not None:
        return min(float(rear_index), float(cell_index)) ** 2
    return float(cell_index) ** 2 * (1.0 - float(back_reflectance))


def front_emission_factor(*, ambient_index, cell_index):
    """Front emission of a subcell into an ambient of index ``ambient_index`` (air 1, glass or
    encapsulant about 1.5) over its front emission into air [-]: min(n_ambient, n_cell)^2 (the
    generalized Planck law in a medium of index n is n^2 times the vacuum rate; beyond the cell's
    own index the escape cone is the cell's). P. Wuerfel, J. Phys. C 15 (1982) 3967."""
    return min(float(ambient_index), float(cell_index)) ** 2


def self_consistent_recycling(*, internal_A_m2, external_A_m2):
    """Photon-recycling factor [-]: internal radiative recombination q B ni^2 W over the escaping
    (external) emission J0,rad, never below 1 (Asbeck 1977)."""
    return np.maximum(np.asarray(internal_A_m2, float) / np.asarray(external_A_m2, float), 1.0)
