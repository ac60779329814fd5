"""Partly scattering surfaces (haze) and free-carrier absorption: two small optical laws of the
thick layers, on top of `siltandem.laws.thinfilm`.

Units: absorption coefficients in m^-1, wavelengths in nm, densities in m^-3.
"""
import numpy as np

from siltandem.laws.thinfilm import PhotonBudget, ThinFilmInputError, layer_absorption

__all__ = ["hazy_layer_absorption", "free_carrier_absorption_per_m"]


def _check_haze(name, value):
    haze = float(value)
    if not 0.0 <= haze <= 1.0:
        raise ThinFilmInputError(f"thin-film optics: '{name}' = {value!r} is outside [0, 1]; give the "
                                 f"scattering fraction of the surface, 0 (flat) to 1 (ideal scatterer)")
    return haze


def hazy_layer_absorption(photon_flux, *, back_haze=0.0, front_haze=0.0, **options):
    """Photon budget of thick layers whose back and front scatter only a fraction of the light (haze).

    Parameters
    ----------
    photon_flux : array_like
        Incident spectral photon flux, as for `siltandem.laws.thinfilm.layer_absorption`.
    back_haze, front_haze : float, optional
        Scattering fraction of the back and of the front surface [-], in [0, 1]: 0 a flat (specular)
        surface, 1 an ideal (Lambertian) scatterer. Default 0.
    **options
        The keyword arguments of `layer_absorption` except ``back_scattering`` and ``front_scattering``
        (``alpha_per_m``, ``thicknesses_m``, reflectances, ``trapping_index``, ``ambient_index``).

    Returns
    -------
    PhotonBudget
        As `layer_absorption`; each field the haze-weighted mean of the flat and scattering results.

    Notes
    -----
    An area mixture: a fraction h of the surface scatters ideally, the rest is flat, and light that
    meets one kind of surface keeps meeting the same kind (no per-bounce mixing). With two surfaces
    the budget is the mean of the four pure cases weighted (1 - h_b)(1 - h_f), h_b (1 - h_f),
    (1 - h_b) h_f and h_b h_f. Each pure budget closes to rounding and the weights add up to 1, so the
    mixture closes too; h = 0 and h = 1 return the pure budgets themselves (no arithmetic on them).
    This is an approximation of a real textured or hazy surface, where each reflection or
    transmission scatters a fraction of the light; it is exact only at h = 0 and h = 1 (M. A. Green,
    Prog. Photovolt. 10 (2002) 235 for the pure cases; the mixture is common practice, no source).
    """
    back = _check_haze("back_haze", back_haze)
    front = _check_haze("front_haze", front_haze)
    cases = [(wb * wf, sb, sf)
             for wb, sb in ((1.0 - back, "specular"), (back, "lambertian"))
             for wf, sf in ((1.0 - front, "specular"), (front, "lambertian"))
             if wb > 0.0 and wf > 0.0]
    if len(cases) == 1:
        _, sb, sf = cases[0]
        return layer_absorption(photon_flux, back_scattering=sb, front_scattering=sf, **options)
    parts = [(weight, layer_absorption(photon_flux, back_scattering=sb, front_scattering=sf, **options))
             for weight, sb, sf in cases]
    fields = {name: sum(weight * np.asarray(getattr(budget, name)) for weight, budget in parts)
              for name in PhotonBudget._fields}
    return PhotonBudget(**fields)


def free_carrier_absorption_per_m(wavelength_nm, *, electron_density_m3=0.0, hole_density_m3=0.0,
                                  electron_coefficient_cm2, electron_exponent, hole_coefficient_cm2,
                                  hole_exponent):
    """Free-carrier absorption coefficient [m^-1] of a doped layer: a power law in the wavelength.

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelength [nm], > 0.
    electron_density_m3, hole_density_m3 : float
        Free electron and hole densities [m^-3] (a doped layer: its majority density, the doping).
    electron_coefficient_cm2, hole_coefficient_cm2 : float
        Coefficients K [cm^2] of alpha [cm^-1] = K N [cm^-3] (lambda [um])^gamma.
    electron_exponent, hole_exponent : float
        Wavelength exponents gamma [-].

    Returns
    -------
    ndarray
        alpha_FCA [m^-1], shape of ``wavelength_nm``.

    Notes
    -----
    alpha_FCA = K_n n lambda^gamma_n + K_p p lambda^gamma_p, the form of D. K. Schroder, R. N. Thomas,
    J. C. Swartz, IEEE Trans. Electron Devices 25 (1978) 254 (from memory); the data file gives the
    coefficients. The absorbed photons heat the lattice: they make no electron-hole pair.
    """
    lam_um = np.asarray(wavelength_nm, dtype=float) * 1e-3
    per_cm = (electron_coefficient_cm2 * electron_density_m3 * 1e-6 * lam_um ** electron_exponent
              + hole_coefficient_cm2 * hole_density_m3 * 1e-6 * lam_um ** hole_exponent)
    return 100.0 * per_cm
