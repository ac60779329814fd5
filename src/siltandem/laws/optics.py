"""Light through a stack of step absorbers: photon flux, exact trapezoid integration, filtering.

The spectrum is taken as piecewise linear in photon flux between its tabulated wavelengths (the
trapezoid rule). A step absorber of gap Eg absorbs the fraction ``a`` of every photon with
wavelength below lambda_g = hc/Eg; what it does not absorb reaches the next absorber down.

References
----------
ASTM G173-03, Standard Tables for Reference Solar Spectral Irradiances (read through pvlib).
A. De Vos, J. Phys. D 13 (1980) 839 (detailed balance of tandem cells, light filtered in series).
"""
import numpy as np

from siltandem.constants import ELEMENTARY_CHARGE_C, HC_EV_NM, PLANCK_J_S, SPEED_OF_LIGHT_M_S


def photon_flux(wavelength_nm, irradiance_W_m2_nm):
    """Spectral photon flux [photons m^-2 s^-1 nm^-1] from spectral irradiance [W m^-2 nm^-1]."""
    wavelength_nm = np.asarray(wavelength_nm, dtype=float)
    energy_J = PLANCK_J_S * SPEED_OF_LIGHT_M_S / (wavelength_nm * 1e-9)
    return np.asarray(irradiance_W_m2_nm, dtype=float) / energy_J


def cumulative_below(wavelength_limit_nm, wavelength_nm, values):
    """Exact trapezoid integral of a tabulated function from the first wavelength up to a limit.

    The tabulated function is taken as linear between its points, so the partial interval up to
    the limit is integrated exactly (not rounded to a grid point).

    Parameters
    ----------
    wavelength_limit_nm : array_like
        Upper limit(s) [nm]; below the table gives 0, above it the full integral.
    wavelength_nm : (M,) ndarray
        Increasing wavelengths [nm].
    values : (M,) ndarray
        Function values at those wavelengths (per nm).

    Returns
    -------
    ndarray
        Integral, shape of ``wavelength_limit_nm``.
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    f = np.asarray(values, dtype=float)
    limit = np.clip(np.asarray(wavelength_limit_nm, dtype=float), lam[0], lam[-1])
    step = np.diff(lam)
    cumulative = np.concatenate([[0.0], np.cumsum(0.5 * (f[1:] + f[:-1]) * step)])
    k = np.clip(np.searchsorted(lam, limit, side="right") - 1, 0, lam.size - 2)
    d = limit - lam[k]
    slope = (f[k + 1] - f[k]) / step[k]
    return cumulative[k] + f[k] * d + 0.5 * slope * d**2


def step_absorber_photocurrents(gaps_eV, absorptances, wavelength_nm, flux):
    """Photocurrent density [A/m^2] of step absorbers in optical order (sun side first).

    Parameters
    ----------
    gaps_eV : sequence of array_like
        Gap of each absorber [eV], sun side first; arrays broadcast over a batch.
    absorptances : sequence of array_like
        Step absorptance of each absorber above its gap [-], in [0, 1].
    wavelength_nm : (M,) ndarray
        Spectrum wavelengths [nm], increasing.
    flux : (M,) ndarray
        Photon flux reaching the first absorber [m^-2 s^-1 nm^-1].

    Returns
    -------
    list of ndarray
        Photocurrent density of each absorber [A/m^2].

    Notes
    -----
    Absorber i sees the flux transmitted by all above it,
    Phi_i(lambda) = Phi(lambda) prod_{j<i} (1 - a_j H(lambda_j - lambda)),
    with H the step function and lambda_j = hc/Eg_j, and collects

    J_i = q a_i integral_0^{lambda_i} Phi_i(lambda) dlambda.

    The transmitted factor is constant between neighbouring gap wavelengths, so the integral is
    a sum over those intervals of (factor) x (exact trapezoid integral of Phi over the interval);
    see :func:`filtered_photocurrents`. Exact for step absorbers on the tabulated spectrum.
    """
    limits = [HC_EV_NM / np.asarray(g, dtype=float) for g in gaps_eV]
    absorptances = [np.asarray(a, dtype=float) for a in absorptances]
    return filtered_photocurrents(limits, absorptances,
                                  lambda edge: cumulative_below(edge, wavelength_nm, flux))


def filtered_photocurrents(limits_nm, absorptances, photons_below):
    """Photocurrents of step absorbers in optical order, for any photon integral.

    Parameters
    ----------
    limits_nm : sequence of array_like
        Each absorber's gap wavelength lambda_i = hc/Eg_i [nm], sun side first; arrays broadcast
        over a batch.
    absorptances : sequence of array_like
        Each absorber's step absorptance a_i [-].
    photons_below : callable
        ``photons_below(edge_nm)``: the integral N of the incident photon flux [m^-2 s^-1] from
        the table's start up to a wavelength (one spectrum, or one row per spectrum), for an
        array of edges shaped like one absorber's limit. It must be non-decreasing in the edge.

    Returns
    -------
    list of ndarray
        q a_i integral_0^{lambda_i} Phi prod_{j<i} (1 - a_j H(lambda_j - lambda)) dlambda [A/m^2],
        all of the broadcast shape of the inputs.

    Notes
    -----
    Sort the gap wavelengths of all absorbers, e_(1) <= ... <= e_(n) (ties in optical order),
    and cut the spectrum into the intervals below each, interval m = (e_(m-1), e_(m)), holding
    dN_m = N(e_(m)) - N(e_(m-1)) photons. Inside interval m the light that absorber i receives
    is Phi times the product of (1 - a_j) over the absorbers j above it whose edge lies at or
    above e_(m) (rank(j) >= m); absorber i collects the intervals m <= rank(i). So, going down
    the stack with W_m = dN_m times the transmitted factor so far (W = dN at the top):

    J_i = q a_i sum_{m <= rank(i)} W_m,   then   W_m <- (1 - a_i) W_m for m <= rank(i).

    This is the subset expansion J_i = q a_i sum_S prod_{j in S} (-a_j) N(min(lambda_i,
    min_S lambda_j)) of the product, summed exactly (De Vos 1980), but with n evaluations of
    ``photons_below`` and n vectorised steps of O(n) arithmetic, where the expansion has 2^i
    terms for absorber i; the sums here are of non-negative terms, without its alternating
    cancellation.
    """
    count = len(limits_nm)
    if count == 0:
        return []
    limits = [np.asarray(x, dtype=float) for x in limits_nm]
    absorbed = [np.asarray(a, dtype=float) for a in absorptances]
    photons = [np.asarray(photons_below(x), dtype=float) for x in limits]
    shape = np.broadcast_shapes(*(np.shape(x) for x in limits + absorbed + photons))
    edge = np.stack([np.broadcast_to(x, shape) for x in limits])
    below = np.stack([np.broadcast_to(n, shape) for n in photons])
    order = np.argsort(edge, axis=0, kind="stable")          # ties keep the optical order
    sorted_photons = np.take_along_axis(below, order, axis=0)
    weight = np.diff(sorted_photons, axis=0, prepend=0.0)    # dN_m, the top's factor 1
    rank = np.empty_like(order)
    np.put_along_axis(rank, order, np.arange(count).reshape((count,) + (1,) * len(shape)),
                      axis=0)
    interval = np.arange(count).reshape((count,) + (1,) * len(shape))
    currents = []
    for i in range(count):
        # the intervals below lambda_i are m <= rank(i): a prefix, summed in order (cumsum is
        # sequential, so a design's numbers never depend on the batch it shares)
        collected = np.take_along_axis(np.cumsum(weight, axis=0), rank[i][np.newaxis], axis=0)[0]
        currents.append(ELEMENTARY_CHARGE_C * absorbed[i] * collected)
        weight = np.where(interval <= rank[i], weight * (1.0 - absorbed[i]), weight)
    return currents
