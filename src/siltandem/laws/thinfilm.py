"""Light through a layer stack at normal incidence: front reflectance of coatings, Beer-Lambert absorption.

Two regimes, treated differently on purpose:

* **The front coating is coherent.** Antireflection layers are a fraction of a wavelength thick, so the
  waves reflected at their interfaces interfere. They are handled by the characteristic-matrix
  (transfer-matrix) method at normal incidence, with complex indices N = n + i k (absorbing films allowed).
* **The semiconductor layers below are incoherent.** They are many wavelengths thick (or absorbing enough
  that nothing coherent comes back), and the spectrum is sampled far more coarsely than their fringe
  spacing. For the coating they act as one semi-infinite substrate (the top semiconductor layer, with its
  own n and k = alpha lambda / 4 pi); inside the stack light is followed as a photon flux, each layer
  attenuating it by Beer-Lambert. An optional back reflector returns light for further passes, added as
  intensities (no phase), with an optional internal reflectance of the front surface. The back reflector
  (and, for a textured front, the entry) may scatter into an ideal Lambertian distribution (light
  trapping; see `layer_absorption`).

Conventions: fields vary as exp(i (2 pi N z / lambda - omega t)), so an absorbing medium has k > 0 (the
convention of M. Born, E. Wolf; H. A. Macleod writes N = n - i k with exp(+i omega t): the same physics,
complex conjugated). Wavelengths and coating thicknesses in nm, layer thicknesses in m, absorption
coefficients in m^-1. Spectral fluxes are per nm of wavelength; the wavelength is the last axis.

References
----------
M. Born, E. Wolf, Principles of Optics, 7th ed., Cambridge University Press (1999), sec. 1.5 (Fresnel
    formulae) and 1.6 (stratified media, the characteristic matrix).
H. A. Macleod, Thin-Film Optical Filters, 4th ed., CRC Press (2010), ch. 2 (the characteristic matrix,
    reflectance, transmittance and absorptance of an assembly; quarter-wave layers).
E. Hecht, Optics, 5th ed., Pearson (2017), sec. 9.7 (single- and double-layer antireflection coatings).
E. Yablonovitch, J. Opt. Soc. Am. 72 (1982) 899 (statistical ray optics: the 4 n^2 limit).
T. Tiedje, E. Yablonovitch, G. D. Cody, B. G. Brooks, IEEE Trans. Electron Devices 31 (1984) 711
    (absorption of a Lambertian slab, A = 4 n^2 alpha W / (1 + 4 n^2 alpha W) when weak).
M. A. Green, Prog. Photovolt. 10 (2002) 235 (Lambertian light trapping: closed forms with the
    transmission 2 E3(alpha W) of one Lambertian pass; from memory).
"""
from __future__ import annotations

import warnings
from typing import NamedTuple

import numpy as np

from siltandem.constants import ELEMENTARY_CHARGE_C
from siltandem.laws.lambertian import TRANSMITTANCE_MEMO, two_e3
from siltandem.numerics.sums import running_sum

__all__ = [
    "ThinFilmInputError",
    "LightTrappedWarning",
    "CoatingResponse",
    "PhotonBudget",
    "extinction_coefficient",
    "complex_index",
    "coating_response",
    "front_reflectance",
    "lambertian_transmittance",
    "lambertian_escape_fraction",
    "layer_absorption",
    "generation_profile",
    "photon_current_A_m2",
]


class ThinFilmInputError(ValueError):
    """An argument of a thin-film optics function is outside its physical range; the message says the fix."""


class LightTrappedWarning(RuntimeWarning):
    """Some points have no loss at all (lossless layers between two perfect mirrors); set to NaN."""


class CoatingResponse(NamedTuple):
    """Fractions of the normally incident power (each of the broadcast shape unless stated).

    ``reflectance`` goes back into the ambient, ``transmittance`` enters the substrate, ``absorptance``
    (shape (L, ...), sun side first) is absorbed in each coating layer. They add up to 1.
    """

    reflectance: np.ndarray
    transmittance: np.ndarray
    absorptance: np.ndarray


class PhotonBudget(NamedTuple):
    """Where the incident photons go, in the unit of the incident flux (e.g. m^-2 s^-1 nm^-1).

    reflected + absorbed.sum(axis=0) + transmitted + escaped = incident.

    Attributes
    ----------
    reflected : ndarray
        Reflected at the front surface (front_reflectance x incident).
    absorbed : ndarray, shape (L, ...)
        Absorbed in each layer, sun side first, all passes together.
    transmitted : ndarray
        Reaching the back and not returned by it (1 - back_reflectance of what arrives there): light that
        leaves through the back or is lost in the back reflector.
    escaped : ndarray
        Light returned by the back reflector that crosses the whole stack again and leaves through the
        front (zero without a back reflector).
    downward_at_top : ndarray, shape (L, ...)
        Downward flux at the top of each layer, summed over passes (the Phi_down of `generation_profile`).
    upward_at_bottom : ndarray, shape (L, ...)
        Upward flux at the bottom of each layer, summed over passes (the Phi_up of `generation_profile`).
    scattered_absorbed : ndarray, shape (L, ...)
        The part of ``absorbed`` that came from scattered (Lambertian) light; zero without scattering.
        ``downward_at_top`` and ``upward_at_bottom`` hold the normal-incidence (specular) light only.
    """

    reflected: np.ndarray
    absorbed: np.ndarray
    transmitted: np.ndarray
    escaped: np.ndarray
    downward_at_top: np.ndarray
    upward_at_bottom: np.ndarray
    scattered_absorbed: np.ndarray | None = None


# ---------------------------------------------------------------------------------------------- indices
def extinction_coefficient(wavelength_nm, *, alpha_per_m):
    """Extinction coefficient k [-] from the absorption coefficient.

    Parameters
    ----------
    wavelength_nm : array_like
        Vacuum wavelength [nm], > 0.
    alpha_per_m : array_like
        Intensity absorption coefficient alpha [m^-1], >= 0.

    Returns
    -------
    ndarray
        k [-], broadcast shape.

    Notes
    -----
    The intensity of a plane wave in a medium of index n + i k decays as exp(-4 pi k z / lambda), so
    alpha = 4 pi k / lambda and k = alpha lambda / (4 pi) (Born & Wolf, sec. 14.1).
    """
    wavelength_m = np.asarray(wavelength_nm, dtype=float) * 1e-9
    return np.asarray(alpha_per_m, dtype=float) * wavelength_m / (4.0 * np.pi)


def complex_index(wavelength_nm, *, refractive_index, alpha_per_m=0.0):
    """Complex refractive index N = n + i k [-] of a medium, with k from its absorption coefficient.

    Parameters
    ----------
    wavelength_nm : array_like
        Vacuum wavelength [nm].
    refractive_index : array_like
        Real part n [-], e.g. ``Material.refractive_index(wavelength_nm)``.
    alpha_per_m : array_like, optional
        Absorption coefficient [m^-1], e.g. ``Material.absorption_per_m(wavelength_nm)``; 0 = lossless.

    Returns
    -------
    ndarray of complex
        n + i k, broadcast shape (k = alpha lambda / 4 pi, see `extinction_coefficient`).
    """
    n = np.asarray(refractive_index, dtype=float)
    return n + 1j * extinction_coefficient(wavelength_nm, alpha_per_m=alpha_per_m)


# ------------------------------------------------------------------------------------------ validation
def _check_index(name, value, *, allow_loss=True):
    value = np.asarray(value, dtype=complex)
    bad = ~(np.isfinite(value) & (value.real > 0) & (value.imag >= 0))
    if not allow_loss:
        bad |= value.imag != 0
    if np.any(bad):
        found = value[bad].ravel()[0].item()
        need = "real and > 0 (a lossless medium)" if not allow_loss else "n > 0 and k >= 0 (N = n + i k)"
        raise ThinFilmInputError(
            f"thin-film optics: '{name}' = {found!r} is not a valid refractive index; it must be finite with "
            f"{need}; give k = alpha lambda / (4 pi) >= 0 (complex_index builds it from alpha)")
    return value


def _check_nonnegative(name, value, unit):
    value = np.asarray(value, dtype=float)
    bad = ~(np.isfinite(value) & (value >= 0))
    if np.any(bad):
        raise ThinFilmInputError(
            f"thin-film optics: '{name}' = {value[bad].ravel()[0].item()!r} must be finite and >= 0 [{unit}]; "
            f"give a non-negative value in {unit}")
    return value


def _check_nonnegative_or_inf(name, value):
    value = np.asarray(value, dtype=float)
    bad = ~(value >= 0)
    if np.any(bad):
        raise ThinFilmInputError(
            f"thin-film optics: '{name}' = {value[bad].ravel()[0].item()!r} must be >= 0 (inf allowed); "
            f"give a non-negative optical depth alpha d")
    return value


def _check_fraction(name, value):
    value = np.asarray(value, dtype=float)
    bad = ~((value >= 0) & (value <= 1))
    if np.any(bad):
        raise ThinFilmInputError(
            f"thin-film optics: '{name}' = {value[bad].ravel()[0].item()!r} is not a fraction; give a value in [0, 1]")
    return value


def _check_positive_wavelength(value):
    value = np.asarray(value, dtype=float)
    bad = ~(np.isfinite(value) & (value > 0))
    if np.any(bad):
        raise ThinFilmInputError(
            f"thin-film optics: 'wavelength_nm' = {value[bad].ravel()[0].item()!r} must be finite and > 0 [nm]; "
            f"give vacuum wavelengths in nm")
    return value


def _same_length(first_name, first, second_name, second):
    first, second = list(first), list(second)
    if len(first) != len(second):
        raise ThinFilmInputError(
            f"thin-film optics: '{first_name}' has {len(first)} entries but '{second_name}' has {len(second)}; "
            f"give one entry of each per layer, sun side first")
    return first, second


# ------------------------------------------------------------------------------------ coherent coating
def coating_response(wavelength_nm, *, substrate_index, coating_indices=(), coating_thicknesses_nm=(),
                     ambient_index=1.0):
    """Reflectance, transmittance into the substrate and absorptance of each layer of a coherent coating.

    Parameters
    ----------
    wavelength_nm : array_like
        Vacuum wavelength [nm], > 0.
    substrate_index : array_like of complex
        N = n + i k of the semi-infinite medium below the coating (the top semiconductor layer), n > 0,
        k >= 0 (`complex_index` builds it from the material's n and alpha).
    coating_indices : sequence of array_like of complex, optional
        N of each coating layer, sun side first; empty = a bare surface.
    coating_thicknesses_nm : sequence of array_like, optional
        Physical thickness of each coating layer [nm], >= 0, same length as ``coating_indices``.
    ambient_index : array_like, optional
        Real index of the incidence medium (1 = air or vacuum; 1.5 under glass or encapsulant), > 0.

    Returns
    -------
    CoatingResponse
        ``reflectance``, ``transmittance`` of the broadcast shape of all inputs, ``absorptance`` of shape
        (L, ...); R + T + sum(A) = 1 to rounding.

    Notes
    -----
    Characteristic matrix of layer j at normal incidence (Macleod, ch. 2, in the n + i k convention),
    with phase thickness delta_j = 2 pi N_j d_j / lambda and admittances in units of the free-space one:

        [B]            [ cos d_j         -i sin d_j / N_j ] [  1  ]
        [C] = prod_j   [ -i N_j sin d_j   cos d_j         ] [ N_s ],

    the product taken sun side first. Then, for a lossless ambient of index n_0,

        r = (n_0 B - C) / (n_0 B + C),   R = |r|^2,   T = 4 n_0 Re(N_s) / |n_0 B + C|^2,

    and the net power entering layer j (from the same product started at layer j) is
    4 n_0 Re(B_j C_j*) / |n_0 B + C|^2, so a layer absorbs the difference between what enters it and what
    enters the layer below. With no coating, r = (n_0 - N_s) / (n_0 + N_s) (the Fresnel formula at normal
    incidence, Born & Wolf sec. 1.5.2). Each layer matrix is evaluated multiplied by exp(i delta_j), whose
    entries stay bounded for any loss, and the factor is restored in T and the fluxes, so a thick opaque
    film gives T -> 0 without overflow.

    The substrate is semi-infinite: the power T entering it never returns coherently. That is the
    incoherent treatment of the thick absorbing semiconductor below the coating.

    References
    ----------
    H. A. Macleod, Thin-Film Optical Filters, 4th ed. (2010), ch. 2.
    M. Born, E. Wolf, Principles of Optics, 7th ed. (1999), sec. 1.6.
    """
    wavelength = _check_positive_wavelength(wavelength_nm)
    substrate = _check_index("substrate_index", substrate_index)
    ambient = _check_index("ambient_index", ambient_index, allow_loss=False).real
    indices, thicknesses = _same_length("coating_indices", coating_indices,
                                        "coating_thicknesses_nm", coating_thicknesses_nm)
    indices = [_check_index(f"coating_indices[{j}]", v) for j, v in enumerate(indices)]
    thicknesses = [_check_nonnegative(f"coating_thicknesses_nm[{j}]", v, "nm") for j, v in enumerate(thicknesses)]
    shape = np.broadcast_shapes(wavelength.shape, substrate.shape, ambient.shape,
                                *(v.shape for v in indices), *(v.shape for v in thicknesses))

    # scaled products, bottom layer first: (B'_j, C'_j) = (B_j, C_j) exp(i sum_{i>=j} delta_i)
    b = np.ones(shape, dtype=complex)
    c = np.broadcast_to(substrate, shape).astype(complex)
    scaled = [(b, c)]
    depths = []                                          # Im(delta_j) >= 0, one per layer
    for index, thickness in zip(reversed(indices), reversed(thicknesses)):
        delta = 2.0 * np.pi * index * thickness / wavelength
        decay = np.exp(2j * delta)                       # |.| = exp(-2 Im delta) <= 1
        cos_scaled = 0.5 * (decay + 1.0)                 # cos(delta) exp(i delta)
        sin_scaled = -0.5j * (decay - 1.0)               # sin(delta) exp(i delta)
        b, c = cos_scaled * b - 1j * sin_scaled * c / index, -1j * index * sin_scaled * b + cos_scaled * c
        scaled.append((b, c))
        depths.append(np.broadcast_to(delta.imag, shape))
    scaled.reverse()                                     # scaled[j] = top of layer j; scaled[L] = substrate
    depths.reverse()

    b_top, c_top = scaled[0]
    denominator = np.abs(ambient * b_top + c_top) ** 2
    reflectance = np.abs(ambient * b_top - c_top) ** 2 / denominator
    # net flux entering layer j: 4 n0 Re(B_j C_j*) |scale_j|^-2 / |n0 B + C|^2, with the attenuation of
    # the layers above restored: exp(-2 sum_{i<j} Im delta_i)
    above = np.zeros(shape)
    entering = []
    for j, (b_j, c_j) in enumerate(scaled):
        entering.append(4.0 * ambient * (b_j * np.conj(c_j)).real * np.exp(-2.0 * above) / denominator)
        if j < len(depths):
            above = above + depths[j]
    transmittance = entering[-1]
    absorptance = np.stack([entering[j] - entering[j + 1] for j in range(len(indices))]) if indices \
        else np.zeros((0,) + shape)
    return CoatingResponse(reflectance, transmittance, absorptance)


def front_reflectance(wavelength_nm, *, substrate_index, coating_indices=(), coating_thicknesses_nm=(),
                      ambient_index=1.0):
    """Normal-incidence reflectance [-] of a bare or coated surface on a semi-infinite substrate.

    Parameters
    ----------
    wavelength_nm : array_like
        Vacuum wavelength [nm], > 0.
    substrate_index : array_like of complex
        N = n + i k of the top semiconductor layer (n > 0, k = alpha lambda / 4 pi >= 0).
    coating_indices : sequence of array_like of complex, optional
        N of each coating layer, sun side first (any number; empty = bare surface).
    coating_thicknesses_nm : sequence of array_like, optional
        Thickness of each coating layer [nm], >= 0.
    ambient_index : array_like, optional
        Real index of the incidence medium [-], default 1.

    Returns
    -------
    ndarray
        R in [0, 1], broadcast shape of all inputs.

    Notes
    -----
    Bare surface: R = |(n_0 - N_s)/(n_0 + N_s)|^2 = ((n_0 - n)^2 + k^2) / ((n_0 + n)^2 + k^2). Coated: the
    characteristic-matrix result of `coating_response` (coherent coating, incoherent semi-infinite
    substrate). Special cases: a quarter-wave layer of index n_1 at its design wavelength gives
    R = ((n_0 n_s - n_1^2)/(n_0 n_s + n_1^2))^2, zero for n_1 = sqrt(n_0 n_s); a half-wave layer is absent.

    References
    ----------
    M. Born, E. Wolf, Principles of Optics, 7th ed. (1999), sec. 1.5 and 1.6.
    E. Hecht, Optics, 5th ed. (2017), sec. 9.7.
    H. A. Macleod, Thin-Film Optical Filters, 4th ed. (2010), ch. 2 and 4.
    """
    return coating_response(wavelength_nm, substrate_index=substrate_index, coating_indices=coating_indices,
                            coating_thicknesses_nm=coating_thicknesses_nm,
                            ambient_index=ambient_index).reflectance


# --------------------------------------------------------------------------------- Lambertian light
def lambertian_transmittance(optical_depth):
    """Fraction of a Lambertian (ideally scattered) photon flux that crosses a layer [-]: 2 E3(tau).

    Parameters
    ----------
    optical_depth : array_like
        tau = alpha d of the layer (or of several layers together) at normal incidence [-], >= 0
        (inf allowed: opaque).

    Returns
    -------
    ndarray
        T in [0, 1], broadcast shape; 1 at tau = 0, 0 at tau = inf.

    Notes
    -----
    A Lambertian flux has radiance independent of direction, so the flux crossing a plane at polar angle
    theta is weighted by 2 cos(theta) sin(theta) d(theta). Each ray is attenuated by exp(-tau / cos theta):

        T(tau) = integral_0^1 2 mu exp(-tau / mu) d mu = 2 E3(tau),

    E3 the exponential integral of order 3 (scipy.special.expn). For small tau, T = 1 - 2 tau + ...:
    a thin layer absorbs twice its normal-incidence fraction (mean path 2 d). Because each ray's
    attenuation is exponential in depth, a Lambertian flux entering a stack of layers crosses their
    sum: absorption in layer j is T(depth above j) - T(depth to the bottom of j), which adds up exactly.
    Beyond tau = laws.lambertian.LAMBERTIAN_ZERO_DEPTH (60) T is returned as 0: there 2 E3(tau) < 2 exp(-tau) / tau
    <= 2.9e-28 (Abramowitz and Stegun 5.1.19: E_n(x) < exp(-x) / (x + n - 1)), far below the rounding
    of any flux it multiplies, and E3 there would take a third of the Lambertian channel's time.

    References
    ----------
    M. A. Green, Prog. Photovolt. 10 (2002) 235 (from memory); E. Yablonovitch, J. Opt. Soc. Am. 72
    (1982) 899.
    """
    tau = _check_nonnegative_or_inf("optical_depth", optical_depth)
    return two_e3(tau)


def lambertian_escape_fraction(refractive_index, *, front_reflectance=0.0, ambient_index=1.0):
    """Fraction of a Lambertian flux inside a medium that leaves through a flat front surface [-].

    Parameters
    ----------
    refractive_index : array_like
        n of the medium holding the scattered light [-], > 0.
    front_reflectance : array_like, optional
        Reflectance of the front surface for light inside the escape cone [-], in [0, 1] (taken at normal
        incidence).
    ambient_index : array_like, optional
        Real index of the medium in front [-], > 0.

    Returns
    -------
    ndarray
        e = (1 - R) min(1, (n_0 / n)^2), broadcast shape.

    Notes
    -----
    Only rays inside the escape cone sin(theta) < n_0 / n can leave; a Lambertian flux has the fraction
    sin^2(theta_c) = (n_0 / n)^2 of its photons there (the integral of 2 cos sin from 0 to theta_c). The
    rest is totally internally reflected. The reflectance inside the cone is taken as the normal-incidence
    value for all its angles, as in Green's closed forms (front internal reflectance of Lambertian light
    1 - (1 - R) / n^2). A flat front reflects specularly, which keeps the distribution Lambertian.

    References
    ----------
    E. Yablonovitch, J. Opt. Soc. Am. 72 (1982) 899; M. A. Green, Prog. Photovolt. 10 (2002) 235 (from
    memory).
    """
    n = _check_index("refractive_index", refractive_index, allow_loss=False).real
    n0 = _check_index("ambient_index", ambient_index, allow_loss=False).real
    reflectance = _check_fraction("front_reflectance", front_reflectance)
    return (1.0 - reflectance) * np.minimum(1.0, (n0 / n) ** 2)


# ------------------------------------------------------------------------------ incoherent thick layers
def layer_absorption(photon_flux, *, alpha_per_m, thicknesses_m, front_reflectance=0.0, back_reflectance=0.0,
                     front_internal_reflectance=0.0, back_scattering="specular", front_scattering="specular",
                     trapping_index=None, ambient_index=1.0, layers=None):
    """Photon budget of a sequence of thick layers (sun side first), with an optional back mirror that may scatter.

    Parameters
    ----------
    photon_flux : array_like
        Incident spectral photon flux on the front surface [m^-2 s^-1 nm^-1] (any unit: the budget comes
        out in the same unit).
    alpha_per_m : sequence of array_like
        Absorption coefficient of each layer [m^-1], >= 0, sun side first; each broadcasts with the flux.
    thicknesses_m : sequence of array_like
        Thickness of each layer [m], >= 0, same length as ``alpha_per_m``.
    front_reflectance : array_like, optional
        Front-surface reflectance for light arriving from outside [-], in [0, 1] (e.g. `front_reflectance`).
    back_reflectance : array_like, optional
        Reflectance of the back surface for light arriving from inside [-], in [0, 1]; 0 = single pass.
    front_internal_reflectance : array_like, optional
        Reflectance of the front surface for light returning from inside [-], in [0, 1]; 0 = what returns
        to the front leaves (``escaped``). Only matters with a back reflector.
    back_scattering : {"specular", "lambertian"}, optional
        "specular" (default): a flat mirror; "lambertian": an ideal scattering rear, which sends what it
        reflects (``back_reflectance``) into a Lambertian distribution.
    front_scattering : {"specular", "lambertian"}, optional
        "specular" (default): a flat front; "lambertian": an ideally textured front, which scatters the
        light entering and the light it reflects back inside into a Lambertian distribution.
    trapping_index : array_like, optional
        Refractive index n of the layers for scattered light [-], > 0 (e.g. the bottom layer's n(lambda));
        sets the escape cone sin(theta_c) = n_0 / n. Required with any "lambertian" surface.
    ambient_index : array_like, optional
        Real index n_0 of the medium in front [-], > 0 (default 1); used with scattering only.
    layers : sequence of int, optional
        Indices of the layers whose absorption is wanted (default: all). With a scattering surface the
        other layers' ``absorbed`` and ``scattered_absorbed`` rows are NaN and their scattered share is
        not evaluated (a study reads only its subcells' layers); the wanted rows and every other field
        are the same numbers, bit for bit, as with all layers.

    Returns
    -------
    PhotonBudget
        reflected, absorbed (L, ...), transmitted, escaped, downward_at_top (L, ...), upward_at_bottom
        (L, ...), scattered_absorbed (L, ...), each of the broadcast shape of all inputs.

    Notes
    -----
    Each layer passes exp(-tau_j) of the flux crossing it once, tau_j = alpha_j d_j, and absorbs
    a_j = 1 - exp(-tau_j) = -expm1(-tau_j), evaluated with expm1 so that a thin or transparent layer keeps
    its absorbed fraction to full relative precision (no difference of two nearly equal fluxes). With
    P = exp(-sum tau) the single-pass transmittance of the stack, the flux entering at the top is
    (1 - R_f) Phi. Passes add as intensities (incoherent): summing the geometric series of round trips
    between the back (R_b) and the front seen from inside (R_i),

        D = (1 - R_f) Phi / (1 - R_b R_i P^2)      total downward flux at the top,
        U = R_b P D                                 total upward flux leaving the back,

    layer j absorbs D exp(-sum_{i<j} tau_i) a_j + U exp(-sum_{i>j} tau_i) a_j, the back lets (1 - R_b) P D
    through and the front lets (1 - R_i) P U escape. These add up to Phi exactly. The loss
    1 - R_b R_i P^2 is formed as -expm1(ln R_b + ln R_i - 2 sum tau); where it is zero (lossless layers
    between two perfect mirrors) the budget is NaN, counted and warned once (`LightTrappedWarning`).
    Reflection at the interfaces between the thick layers is neglected (index matched).

    **Scattering (light trapping).** A "lambertian" surface sends every ray it reflects (or, at the
    front, lets in) into a Lambertian distribution; between two such events a ray keeps its angle
    (mu = cos theta), crossing optical depth x with exp(-x / mu), and a Lambertian flux crosses it with
    T(x) = 2 E3(x) (`lambertian_transmittance`). z_j is the optical depth at the bottom of layer j
    (z_0 = 0), Z = z_L, R_b the back reflectance, R_i the front's internal reflectance (taken at normal
    incidence over the escape cone mu > mu_c = sqrt(1 - (n_0/n)^2), total reflection outside it), and
    e = (1 - R_i) (n_0/n)^2 the escape fraction of a Lambertian flux at a textured front
    (`lambertian_escape_fraction`). Sums over all passes, for the flux E = (1 - R_f) Phi entering:

    * flat front, scattering rear: the first pass is specular (as above, up to the back); U, the
      Lambertian flux leaving the back upwards, keeps its angles up to the front and back:
      U = R_b P E / (1 - R_b G(2Z)), G(x) = integral 2 mu R(mu) exp(-x/mu) d mu
      = T(x) - (1 - R_i) [T(x) - mu_c^2 T(x / mu_c)]. Layer j absorbs U [T(Z - z_j) - T(Z - z_(j-1))]
      going up and U [G(Z + z_(j-1)) - G(Z + z_j)] coming down; U [T(Z) - G(Z)] escapes.
    * textured front, specular rear: D = E / (1 - (1 - e) R_b T(2Z)) enters Lambertian; layer j absorbs
      D [T(z_(j-1)) - T(z_j)] going down and R_b D [T(2Z - z_j) - T(2Z - z_(j-1))] coming up (the
      mirror keeps the angles); e R_b T(2Z) D escapes.
    * both scattering (Green's double-sided case): D = E + (1 - e) T(Z) U and U = R_b T(Z) D, so
      D = E / (1 - R_b (1 - e) T(Z)^2); layer j absorbs D [T(z_(j-1)) - T(z_j)] + U [T(Z - z_j) -
      T(Z - z_(j-1))]; e T(Z) U escapes. For one layer, A = (1 - R_f)(1 - T)(1 + R_b T) /
      (1 - R_b (1 - e) T^2), Green's closed form, whose weak-absorption limit (R_b = 1, R = 0,
      tau -> 0) is A = 4 n^2 tau / (1 + 4 n^2 tau): the 4 n^2 path enhancement of Yablonovitch and
      Tiedje et al. The flat-front case tends to 2 n^2 (1 + mu_c) + 1 times tau (derived here from the
      same sums: the specular first pass plus the trapped passes), 48.97 for n = 3.5.

    Each layer's absorption is a difference of T (or G) at its two depths, so the budget closes to
    rounding. One index n serves all layers (they are index matched for the scattered light as for the
    specular), and the part absorbed from scattered light is ``scattered_absorbed`` (its depth profile
    is not returned: callers spread it uniformly, see `siltandem.laws.collection`). Where the trapped
    light can lose nothing (lossless layers, R_b = 1, no escape) the budget is NaN, warned once.

    References
    ----------
    A. Beer, Ann. Phys. Chem. 86 (1852) 78 (exponential attenuation).
    M. Born, E. Wolf, Principles of Optics, 7th ed. (1999), sec. 1.6 and 14.1 (absorbing media).
    M. A. Green, Prog. Photovolt. 10 (2002) 235 (Lambertian trapping, closed forms; from memory).
    E. Yablonovitch, J. Opt. Soc. Am. 72 (1982) 899; T. Tiedje et al., IEEE Trans. Electron Devices 31
    (1984) 711 (the 4 n^2 limit).
    """
    flux = np.asarray(photon_flux, dtype=float)
    alphas, thicknesses = _same_length("alpha_per_m", alpha_per_m, "thicknesses_m", thicknesses_m)
    alphas = [_check_nonnegative(f"alpha_per_m[{j}]", a, "m^-1") for j, a in enumerate(alphas)]
    thicknesses = [_check_nonnegative(f"thicknesses_m[{j}]", d, "m") for j, d in enumerate(thicknesses)]
    r_front = _check_fraction("front_reflectance", front_reflectance)
    r_back = _check_fraction("back_reflectance", back_reflectance)
    r_inside = _check_fraction("front_internal_reflectance", front_internal_reflectance)
    for name, value in (("back_scattering", back_scattering), ("front_scattering", front_scattering)):
        if value not in ("specular", "lambertian"):
            raise ThinFilmInputError(f"thin-film optics: '{name}' = {value!r} is not known; give \"specular\" "
                                     f"or \"lambertian\"")
    shape = np.broadcast_shapes(flux.shape, r_front.shape, r_back.shape, r_inside.shape,
                                *(a.shape for a in alphas), *(d.shape for d in thicknesses))
    if back_scattering == front_scattering == "specular":
        return _specular_passes((1.0 - r_front) * flux, alphas, thicknesses, r_back, r_inside, shape,
                                reflected=r_front * flux)[0]
    if trapping_index is None:
        raise ThinFilmInputError(
            "thin-film optics: a \"lambertian\" surface needs 'trapping_index', the refractive index of the "
            "layers for the scattered light; give it (e.g. the bottom layer's n(lambda))")
    n = _check_index("trapping_index", trapping_index, allow_loss=False).real
    n0 = _check_index("ambient_index", ambient_index, allow_loss=False).real
    shape = np.broadcast_shapes(shape, n.shape, n0.shape)
    entering = np.broadcast_to((1.0 - r_front) * flux, shape)
    flat_front = front_scattering == "specular"
    # the specular channel: the first pass of a flat front, down to the back (which scatters it all)
    specular, reaching_back = _specular_passes(entering if flat_front else np.zeros(shape), alphas,
                                               thicknesses, np.zeros(shape), r_inside, shape)
    if layers is not None and any(not 0 <= int(j) < len(alphas) for j in layers):
        raise ThinFilmInputError(f"thin-film optics: 'layers' = {list(layers)} names a layer outside the "
                                 f"{len(alphas)} given; give indices from 0 to {len(alphas) - 1}")
    scattered, escaped, transmitted = _scattered_passes(
        entering, reaching_back, alphas, thicknesses, r_back, r_inside, n0 / n, shape,
        flat_front=flat_front, scattering_back=back_scattering == "lambertian", layers=layers)
    return PhotonBudget(
        reflected=np.broadcast_to(r_front * flux, shape).copy(), absorbed=specular.absorbed + scattered,
        transmitted=transmitted, escaped=specular.escaped + escaped,
        downward_at_top=specular.downward_at_top, upward_at_bottom=specular.upward_at_bottom,
        scattered_absorbed=scattered)


def _specular_passes(entering, alphas, thicknesses, r_back, r_inside, shape, reflected=None):
    """The specular (normal-incidence) budget of `layer_absorption` for the flux ``entering`` the top
    layer; ``reflected`` the front reflection (None: zeros, the caller adds it). Returns the budget
    and the specular flux reaching the back, summed over passes."""

    depth = np.stack([np.broadcast_to(a * d, shape) for a, d in zip(alphas, thicknesses)]) if alphas \
        else np.zeros((0,) + shape)
    absorbed_once = -np.expm1(-depth)                                   # a_j
    total = depth.sum(axis=0)
    running = running_sum(depth)                                        # np.cumsum(axis=0)
    above = running - depth                                             # sum_{i<j} tau_i
    below = total - running                                             # sum_{i>j} tau_i
    below = np.maximum(below, 0.0)
    single_pass = np.exp(-total)

    with np.errstate(divide="ignore"):
        exponent = np.log(r_back) + np.log(r_inside) - 2.0 * total
    loss = np.broadcast_to(-np.expm1(exponent), shape)
    trapped = ~(loss > 0)
    if np.any(trapped):
        warnings.warn(f"layer_absorption: {int(np.count_nonzero(trapped))} point(s) have lossless layers between "
                      f"two perfect mirrors (no absorption, back_reflectance = front_internal_reflectance = 1); "
                      f"set to NaN", LightTrappedWarning, stacklevel=3)
    with np.errstate(divide="ignore", invalid="ignore"):
        down = np.where(trapped, np.nan, entering / np.where(trapped, 1.0, loss))
    up = r_back * single_pass * down

    downward_at_top = down * np.exp(-above)
    upward_at_bottom = up * np.exp(-below)
    absorbed = (downward_at_top + upward_at_bottom) * absorbed_once
    transmitted = (1.0 - r_back) * single_pass * down
    escaped = (1.0 - r_inside) * single_pass * up
    reflected = np.zeros(shape) if reflected is None else np.broadcast_to(reflected, shape).copy()
    budget = PhotonBudget(reflected, absorbed, transmitted, escaped, downward_at_top, upward_at_bottom,
                          np.zeros_like(absorbed))
    return budget, single_pass * down


def _cone_complement(x, mu_c, transmittance=lambertian_transmittance, t_x=None):
    """integral over mu_c < mu < 1 of 2 mu exp(-x/mu) d mu = T(x) - mu_c^2 T(x / mu_c): the part of a
    Lambertian flux inside the escape cone that crosses optical depth x. ``transmittance(x, part)``
    may be a remembered T (`_remembered_transmittance`); ``t_x`` T(x) when known."""
    with np.errstate(divide="ignore", invalid="ignore"):
        scaled = np.where(mu_c > 0, x / np.where(mu_c > 0, mu_c, 1.0), np.inf)
    if transmittance is lambertian_transmittance:
        return lambertian_transmittance(x) - mu_c ** 2 * lambertian_transmittance(scaled)
    t_x = transmittance(x, "cone x") if t_x is None else t_x
    return t_x - mu_c ** 2 * transmittance(scaled, "cone x/mu")


def _remembered_transmittance(optical_depth, part):
    """`lambertian_transmittance`, the same numbers bit for bit, remembered per ``part`` (a call
    site) so that only the entries whose depth changed since the last call are evaluated."""
    return TRANSMITTANCE_MEMO(_check_nonnegative_or_inf("optical_depth", optical_depth), part)


def _scattered_passes(entering, reaching_back, alphas, thicknesses, r_back, r_inside, ratio, shape, *,
                      flat_front, scattering_back, layers=None):
    """The Lambertian channel of `layer_absorption` (Notes): absorbed per layer (L, ...), escaped and
    transmitted (the specular first pass's share of the back included). ``layers``: the indices of
    the layers whose absorption is wanted (None: all); the others' rows are NaN, and T is evaluated
    only at the depths those layers' rows read (each row the same elementwise arithmetic as with
    all layers, so the same numbers bit for bit)."""
    depth = np.stack([np.broadcast_to(a * d, shape) for a, d in zip(alphas, thicknesses)]) if alphas \
        else np.zeros((0,) + shape)
    count = len(alphas)
    bottoms = running_sum(depth)                                             # z_j
    total = bottoms[-1] if alphas else np.zeros(shape)                       # Z
    wanted = list(range(count)) if layers is None else sorted({int(j) for j in layers})
    # the depths read: each wanted layer's bottom and the one above it (its top)
    rows = sorted(set(wanted) | {j - 1 for j in wanted if j > 0})
    where = {r: i for i, r in enumerate(rows)}
    picked = [where[j] for j in wanted]
    above = [where.get(j - 1, -1) for j in wanted]         # -1: the top layer (its top is the surface)
    slot = "" if layers is None else f" of {len(rows)}/{count}"
    at = bottoms[rows]

    def pair(values, surface):
        """(value at each wanted layer's bottom, value at its top): ``values`` at the rows read,
        ``surface`` the value at the top of the first layer."""
        tops = [surface if i < 0 else values[i] for i in above]
        return values[picked], (np.stack(tops) if tops else values[picked])

    transmittance = _remembered_transmittance
    through = transmittance(total, "total")                                  # T(Z)
    escape_share = np.minimum(1.0, ratio ** 2)
    mu_c = np.sqrt(1.0 - escape_share)
    escape = (1.0 - r_inside) * escape_share                                 # e
    t_rising = transmittance(np.maximum(total - at, 0.0), "total - bottoms" + slot)
    rising_bottom, rising_top = pair(t_rising, through)
    up_once = rising_bottom - rising_top                                     # per Lambertian U
    if flat_front:                       # source at the back; angles kept up to the front and down
        def returning(x, part, t_x=None):                # G(x)
            t_x = transmittance(x, part) if t_x is None else t_x
            return t_x - (1.0 - r_inside) * _cone_complement(x, mu_c, lambda y, what: transmittance(
                y, f"{part}: {what}"), t_x=t_x)
        g_twice = returning(2.0 * total, "2 total")
        gain = r_back * g_twice
        source = r_back * reaching_back
    else:                                # the light enters scattered: T down from the surface
        t_bottom, t_top = pair(transmittance(at, "bottoms" + slot), transmittance(np.zeros(shape), "top"))
        down_once = t_top - t_bottom                                         # per Lambertian D
        if scattering_back:              # both randomise: Green's double-sided case
            gain = r_back * (1.0 - escape) * through * through
        else:                            # textured front, mirror behind
            t_twice = transmittance(2.0 * total, "2 total")
            gain = (1.0 - escape) * r_back * t_twice
        source = entering
    loss = np.broadcast_to(1.0 - gain, shape)
    trapped = ~(loss > 0)
    if np.any(trapped):
        warnings.warn(f"layer_absorption: {int(np.count_nonzero(trapped))} point(s) trap scattered light "
                      f"without loss (lossless layers, back_reflectance = 1, no escape); set to NaN",
                      LightTrappedWarning, stacklevel=3)
    with np.errstate(divide="ignore", invalid="ignore"):
        flux = np.where(trapped, np.nan, source / np.where(trapped, 1.0, loss))
    if flat_front:                       # flux = U, leaving the back upwards
        g_total = returning(total, "total", t_x=through)
        g_bottom, g_top = pair(returning(total + at, "total + bottoms" + slot), g_total)
        down_after = g_top - g_bottom
        absorbed = flux * (up_once + down_after)
        escaped = flux * (through - g_total)
        transmitted = (1.0 - r_back) * (reaching_back + flux * g_twice)
    elif scattering_back:                # flux = D, entering the top downwards
        up = r_back * through * flux
        absorbed = flux * down_once + up * up_once
        escaped = escape * through * up
        transmitted = (1.0 - r_back) * through * flux
    else:
        later_bottom, later_top = pair(transmittance(np.maximum(2.0 * total - at, 0.0), "2 total - bottoms" + slot),
                                       t_twice)
        up_after = later_bottom - later_top
        absorbed = flux * (down_once + r_back * up_after)
        escaped = escape * r_back * t_twice * flux
        transmitted = (1.0 - r_back) * through * flux
    if layers is None:
        return absorbed, escaped, transmitted
    every = np.full((count,) + shape, np.nan)
    every[wanted] = absorbed
    return every, escaped, transmitted


def generation_profile(depth_m, *, alpha_per_m, thickness_m, downward_flux, upward_flux=0.0):
    """Photon absorption (generation) rate per volume at a depth inside one layer.

    Parameters
    ----------
    depth_m : array_like
        Depth below the top of the layer [m]; outside [0, thickness_m] the layer generates nothing (0).
    alpha_per_m : array_like
        Absorption coefficient of the layer [m^-1], >= 0.
    thickness_m : array_like
        Layer thickness [m], >= 0.
    downward_flux : array_like
        Downward photon flux at the top of the layer [m^-2 s^-1 (nm^-1)], e.g.
        ``PhotonBudget.downward_at_top[j]``.
    upward_flux : array_like, optional
        Upward photon flux at the bottom of the layer (light returned by a back reflector), e.g.
        ``PhotonBudget.upward_at_bottom[j]``; default 0.

    Returns
    -------
    ndarray
        g [m^-3 s^-1 (nm^-1)], broadcast shape. Its integral over the layer is the layer's entry of
        ``PhotonBudget.absorbed``.

    Notes
    -----
    g(x) = alpha (Phi_down exp(-alpha x) + Phi_up exp(-alpha (d - x))), 0 <= x <= d: one absorbed photon per
    generated pair (unit quantum yield), Beer-Lambert attenuation of each pass.
    """
    x = np.asarray(depth_m, dtype=float)
    alpha = _check_nonnegative("alpha_per_m", alpha_per_m, "m^-1")
    thickness = _check_nonnegative("thickness_m", thickness_m, "m")
    down = np.asarray(downward_flux, dtype=float)
    up = np.asarray(upward_flux, dtype=float)
    inside = (x >= 0) & (x <= thickness)
    xc = np.clip(x, 0.0, thickness)
    g = alpha * (down * np.exp(-alpha * xc) + up * np.exp(-alpha * (thickness - xc)))
    return np.where(inside, g, 0.0)


# ------------------------------------------------------------------------------------- photon currents
def photon_current_A_m2(wavelength_nm, photon_flux):
    """Photon current density q * integral of Phi d(lambda) [A/m^2], trapezoid rule over the last axis.

    Parameters
    ----------
    wavelength_nm : (M,) array_like
        Increasing wavelengths [nm].
    photon_flux : array_like, shape (..., M)
        Spectral photon flux [m^-2 s^-1 nm^-1] (any entry of a `PhotonBudget`), wavelength last.

    Returns
    -------
    ndarray
        Current density [A/m^2], shape (...); ``siltandem.units.ma_cm2`` converts to mA/cm^2.

    Notes
    -----
    J = q sum_m (Phi_m + Phi_{m+1}) (lambda_{m+1} - lambda_m) / 2, the same rule as
    `siltandem.laws.optics.cumulative_below` over the whole table, so that photon currents of the layer
    budget and of the step-absorber optics are comparable to rounding.
    """
    wavelength = np.asarray(wavelength_nm, dtype=float)
    if wavelength.ndim != 1 or wavelength.size < 2 or np.any(np.diff(wavelength) <= 0):
        raise ThinFilmInputError(
            "photon_current_A_m2: 'wavelength_nm' must be a 1-D increasing table of at least two wavelengths "
            "[nm]; sort the spectrum and remove repeated wavelengths")
    flux = np.asarray(photon_flux, dtype=float)
    if flux.shape[-1:] != wavelength.shape:
        raise ThinFilmInputError(
            f"photon_current_A_m2: 'photon_flux' has shape {flux.shape} but its last axis must match the "
            f"{wavelength.size} wavelengths; put the wavelength on the last axis")
    return ELEMENTARY_CHARGE_C * np.trapezoid(flux, wavelength, axis=-1)
