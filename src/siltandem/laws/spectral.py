"""Light that changes hour by hour: photocurrents under many spectra at once, measured quantum
efficiency, spectral mismatch, and spectra scaled to a measured broadband irradiance.

Every function here takes spectra as an (H, M) matrix: one row per hour (or any other case), one
column per wavelength of a shared, increasing grid [nm]. Gaps and absorptances broadcast against
the (H, 1) leading shape. The spectra are taken as piecewise linear in photon flux between their
tabulated wavelengths (the trapezoid rule), exactly as :mod:`siltandem.laws.optics` does for one
spectrum; with H = 1 the results are those of
:func:`siltandem.laws.optics.step_absorber_photocurrents`.

References
----------
A. De Vos, J. Phys. D 13 (1980) 839 (light filtered in series through a stack of absorbers).
IEC 60904-7, Computation of the spectral mismatch correction for measurements of photovoltaic
devices (the mismatch factor with a broadband reference device).
R. E. Bird, C. Riordan, J. Climate Appl. Meteorol. 25 (1986) 87 (SPECTRL2: the shapes of the
direct, sky-diffuse and ground-reflected spectra).
"""

import numpy as np

from siltandem.constants import ELEMENTARY_CHARGE_C, HC_EV_NM
from siltandem.laws.optics import filtered_photocurrents


def cumulative_below_rows(wavelength_limit_nm, wavelength_nm, values):
    """Exact trapezoid integral of each row of a tabulated function up to a wavelength limit.

    Parameters
    ----------
    wavelength_limit_nm : array_like, shape (H, K), (H, 1), (1, K) or scalar
        Upper limit(s) [nm] for each row; below the table gives 0, above it the row's integral.
    wavelength_nm : (M,) ndarray
        Increasing wavelengths [nm], shared by every row.
    values : (H, M) ndarray
        Function values per nm, one row per case (hour).

    Returns
    -------
    ndarray, shape broadcast of ``wavelength_limit_nm`` and (H, 1)
        Integral of row h from the first wavelength to its limit(s).

    Notes
    -----
    Row h is linear between tabulated points, so with k the interval holding the limit L and
    d = L - lambda_k the partial interval is integrated exactly:
    N_h(L) = C_h,k + f_h,k d + (f_h,k+1 - f_h,k) d^2 / (2 (lambda_k+1 - lambda_k)),
    C the cumulative trapezoid sum up to lambda_k.
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    f = np.atleast_2d(np.asarray(values, dtype=float))
    rows = f.shape[0]
    limit = np.clip(np.asarray(wavelength_limit_nm, dtype=float), lam[0], lam[-1])
    shape = np.broadcast_shapes(np.shape(limit), (rows, 1))
    limit = np.broadcast_to(limit, shape)
    step = np.diff(lam)
    cumulative = np.concatenate([np.zeros((rows, 1)),
                                 np.cumsum(0.5 * (f[:, 1:] + f[:, :-1]) * step, axis=1)], axis=1)
    k = np.clip(np.searchsorted(lam, limit, side="right") - 1, 0, lam.size - 2)
    d = limit - lam[k]
    take = lambda table, index: np.take_along_axis(table, index, axis=1)  # noqa: E731
    f_k, f_next = take(f, k), take(f, k + 1)
    return take(cumulative, k) + f_k * d + 0.5 * (f_next - f_k) / step[k] * d**2


def step_absorber_photocurrents_rows(gaps_eV, absorptances, wavelength_nm, flux):
    """Photocurrent density [A/m^2] of step absorbers in optical order under H spectra at once.

    Parameters
    ----------
    gaps_eV : sequence of array_like
        Gap of each absorber [eV], sun side first; each scalar, (1, 1) or (H, 1) (a gap that
        follows the hour's cell temperature).
    absorptances : sequence of array_like
        Step absorptance of each absorber above its gap [-], in [0, 1]; scalar, (1, 1) or (H, 1).
    wavelength_nm : (M,) ndarray
        Wavelengths [nm], increasing, shared by all spectra.
    flux : (H, M) ndarray
        Spectral photon flux reaching the first absorber [m^-2 s^-1 nm^-1], one row per hour.

    Returns
    -------
    list of (H, 1) ndarray
        Photocurrent density of each absorber [A/m^2].

    Notes
    -----
    As :func:`siltandem.laws.optics.step_absorber_photocurrents`: absorber i sees
    Phi_i = Phi prod_{j<i} (1 - a_j H(lambda_j - lambda)) and collects
    J_i = q a_i integral_0^{lambda_i} Phi_i, summed over the intervals between the gap
    wavelengths lambda_j = hc/Eg_j (:func:`siltandem.laws.optics.filtered_photocurrents`), with
    N the exact trapezoid integral of each row of Phi up to a wavelength.
    """
    flux = np.atleast_2d(np.asarray(flux, dtype=float))
    rows = (flux.shape[0], 1)
    limits = [np.broadcast_to(HC_EV_NM / np.asarray(g, dtype=float), rows) for g in gaps_eV]
    absorptances = [np.broadcast_to(np.asarray(a, dtype=float), rows) for a in absorptances]
    currents = filtered_photocurrents(
        limits, absorptances, lambda edge: cumulative_below_rows(edge, wavelength_nm, flux))
    return [np.broadcast_to(j, rows).copy() for j in currents]


def quantum_efficiency_photocurrent(flux, *, wavelength_nm, eqe_wavelength_nm, eqe):
    """Photocurrent density [A/m^2] of a device with a measured external quantum efficiency.

    Parameters
    ----------
    flux : (..., M) ndarray
        Spectral photon flux [m^-2 s^-1 nm^-1] on the wavelength grid ``wavelength_nm``; leading
        axes are cases (hours).
    wavelength_nm : (M,) ndarray
        Increasing wavelengths of the flux [nm].
    eqe_wavelength_nm : (K,) ndarray
        Increasing wavelengths of the measured table [nm].
    eqe : (K,) ndarray
        External quantum efficiency [-], electrons collected per incident photon, in [0, 1].

    Returns
    -------
    ndarray, shape ``flux.shape[:-1]``
        J = q integral Phi(lambda) EQE(lambda) dlambda [A/m^2].

    Notes
    -----
    The EQE is interpolated linearly onto the spectrum's wavelengths and is zero outside its
    table; the product is integrated by the trapezoid rule on the spectrum's grid. This is the
    same discretisation as pvlib's ``calc_spectral_mismatch_field`` (which takes a spectral
    response SR = EQE q lambda / (h c) in A/W against irradiance, the same integrand).
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    efficiency = np.interp(lam, np.asarray(eqe_wavelength_nm, dtype=float),
                           np.asarray(eqe, dtype=float), left=0.0, right=0.0)
    return ELEMENTARY_CHARGE_C * np.trapezoid(np.asarray(flux, dtype=float) * efficiency, lam,
                                              axis=-1)


def spectral_mismatch_factor(photocurrent_A_m2, *, irradiance_W_m2, reference_photocurrent_A_m2,
                             reference_irradiance_W_m2):
    """Spectral mismatch factor of a device against a reference spectrum, broadband reference.

    Parameters
    ----------
    photocurrent_A_m2 : array_like
        The device's photocurrent under the field spectrum [A/m^2].
    irradiance_W_m2 : array_like
        Broadband irradiance of the field spectrum [W/m^2] (its integral over the same range).
    reference_photocurrent_A_m2, reference_irradiance_W_m2 : array_like
        The same two under the reference spectrum (AM1.5G).

    Returns
    -------
    ndarray
        M = (J / G) / (J_ref / G_ref) [-]; > 1 where the field spectrum suits the device better
        than the reference does. NaN where G = 0.

    Notes
    -----
    IEC 60904-7 with a broadband (thermopile) reference device, whose response is flat: the
    device's current per watt under the field spectrum over the same under the reference.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        irradiance = np.asarray(irradiance_W_m2, dtype=float)
        field = np.asarray(photocurrent_A_m2, dtype=float) / irradiance
        reference = (np.asarray(reference_photocurrent_A_m2, dtype=float)
                     / np.asarray(reference_irradiance_W_m2, dtype=float))
        return np.where(irradiance > 0, field / reference, np.nan)


def scaled_spectra(wavelength_nm, *, shapes, broadband_W_m2):
    """Spectra whose shapes come from a model and whose magnitudes from measured irradiances.

    Parameters
    ----------
    wavelength_nm : (M,) ndarray
        Increasing wavelengths [nm].
    shapes : sequence of (H, M) ndarray
        Modelled spectral irradiance of each component [W m^-2 nm^-1] (for example SPECTRL2's
        direct, sky-diffuse and ground-reflected plane-of-array spectra), one row per hour.
    broadband_W_m2 : sequence of (H,) or (H, 1) array_like
        Measured broadband irradiance of each component [W/m^2], in the same order.

    Returns
    -------
    spectrum : (H, M) ndarray
        E(lambda) = sum_c G_c S_c(lambda) / integral S_c [W m^-2 nm^-1]; its trapezoid integral
        is sum_c G_c for every row.
    fallback : (H,) ndarray of bool
        Rows where some component with G_c > 0 had a modelled shape integrating to zero; that
        component then takes the shape of the sum of all modelled components.

    Notes
    -----
    Each component keeps its modelled shape and takes the measured magnitude; a component of
    zero measured irradiance contributes nothing.
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    shapes = [np.atleast_2d(np.asarray(s, dtype=float)) for s in shapes]
    total_shape = np.sum(shapes, axis=0)
    total_integral = np.trapezoid(total_shape, lam, axis=1)[:, None]
    out = np.zeros_like(total_shape)
    fallback = np.zeros(total_shape.shape[0], dtype=bool)
    for shape, level in zip(shapes, broadband_W_m2):
        level = np.asarray(level, dtype=float).reshape(-1, 1)
        integral = np.trapezoid(shape, lam, axis=1)[:, None]
        # a shape worth nothing against its measured level: use the summed shape instead
        empty = (integral <= 1e-12 * np.maximum(level, 1.0)) & (level > 0)
        fallback |= empty[:, 0]
        with np.errstate(divide="ignore", invalid="ignore"):
            own = np.where(level > 0, level * shape / integral, 0.0)
            borrowed = level * total_shape / total_integral
        out = out + np.where(empty, borrowed, own)
    return out, fallback
