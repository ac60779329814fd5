"""Photocurrents of many step absorbers: the linear sweep against independent references.

References:
- an independent per-wavelength evaluation: the light each absorber receives, Phi(lambda) times
  the product of (1 - a_j) of every absorber above it whose gap wavelength lies above lambda,
  integrated with scipy.integrate.trapezoid on the spectrum's own grid refined by every gap
  wavelength (each edge twice, once with the factor from each side: the trapezoid rule is then
  exact for the piecewise-linear flux, the same rule the spectrum is read with);
- the subset (inclusion-exclusion) expansion of the product, the closed form the module used
  before (De Vos, J. Phys. D 13 (1980) 839, light filtered in series), kept here only as a second
  reference for small stacks: it has 2^i terms for absorber i.

No timing: the cost guard counts evaluations of the photon integral instead.
"""
import itertools

import numpy as np
import pytest
from scipy.integrate import trapezoid

from siltandem.constants import ELEMENTARY_CHARGE_C, HC_EV_NM
from siltandem.laws.optics import (cumulative_below, filtered_photocurrents,
                                   step_absorber_photocurrents)
from siltandem.laws.spectral import step_absorber_photocurrents_rows


def per_wavelength(gaps, absorptances, wavelength, flux):
    """Independent reference: integrate each absorber's received and absorbed light directly."""
    edges = HC_EV_NM / np.asarray(gaps, dtype=float)
    inside = edges[(edges > wavelength[0]) & (edges < wavelength[-1])]
    grid = np.unique(np.concatenate([wavelength, inside]))
    photons = np.interp(grid, wavelength, flux)
    middle = 0.5 * (grid[1:] + grid[:-1])             # the factor is constant on each interval
    x = np.repeat(grid, 2)[1:-1]                      # g0 g1 g1 g2 g2 ... : an edge per side
    currents = []
    for i, (edge_i, a_i) in enumerate(zip(edges, absorptances)):
        factor = a_i * (middle < edge_i)
        for edge_j, a_j in zip(edges[:i], absorptances[:i]):
            factor = factor * np.where(middle < edge_j, 1.0 - a_j, 1.0)
        y = np.empty_like(x)
        y[0::2] = photons[:-1] * factor
        y[1::2] = photons[1:] * factor
        currents.append(ELEMENTARY_CHARGE_C * trapezoid(y, x))
    return np.array(currents)


def subset_expansion(gaps, absorptances, wavelength, flux):
    """The former closed form: q a_i sum_S prod_{j in S}(-a_j) N(min(lambda_i, min_S lambda_j))."""
    limits = HC_EV_NM / np.asarray(gaps, dtype=float)
    currents = []
    for i in range(len(limits)):
        total = 0.0
        for size in range(i + 1):
            for subset in itertools.combinations(range(i), size):
                weight = np.prod([-absorptances[j] for j in subset])
                edge = min([limits[i]] + [limits[j] for j in subset])
                total += weight * float(cumulative_below(edge, wavelength, flux))
        currents.append(ELEMENTARY_CHARGE_C * absorptances[i] * total)
    return np.array(currents)


def random_stack(rng, n):
    """Gaps in any order over the schema's range (0.3-4 eV: some edges beyond the table), with
    repeated gaps, and absorptances including 0 and 1."""
    gaps = rng.uniform(0.3, 4.0, n)
    absorptances = rng.uniform(0.0, 1.0, n)
    if n >= 3:
        gaps[rng.integers(n)] = gaps[rng.integers(n)]            # a tie
        absorptances[rng.integers(n)] = 1.0
        absorptances[rng.integers(n)] = 0.0
    return gaps, absorptances


def total_current(spectrum):
    return ELEMENTARY_CHARGE_C * float(cumulative_below(spectrum.wavelength_nm[-1],
                                                       spectrum.wavelength_nm,
                                                       spectrum.photon_flux))


@pytest.mark.parametrize("n", range(1, 9))
def test_small_stacks_equal_both_references(am15g, n):
    rng = np.random.default_rng(100 + n)
    lam, flux = am15g.wavelength_nm, am15g.photon_flux
    scale = total_current(am15g)
    for _ in range(12):
        gaps, absorptances = random_stack(rng, n)
        got = np.array([float(j) for j in step_absorber_photocurrents(gaps, absorptances, lam,
                                                                        flux)])
        np.testing.assert_allclose(got, per_wavelength(gaps, absorptances, lam, flux),
                                   rtol=1e-12, atol=1e-13 * scale)
        np.testing.assert_allclose(got, subset_expansion(gaps, absorptances, lam, flux),
                                   rtol=1e-12, atol=1e-13 * scale)


@pytest.mark.parametrize("n", [20, 50])
def test_many_subcells_equal_the_per_wavelength_reference(am15g, n):
    rng = np.random.default_rng(n)
    lam, flux = am15g.wavelength_nm, am15g.photon_flux
    scale = total_current(am15g)
    for ordered in (True, False):
        gaps, absorptances = random_stack(rng, n)
        if ordered:                                   # the usual stack: gaps falling downwards
            gaps = np.sort(gaps)[::-1]
        got = np.array([float(j) for j in step_absorber_photocurrents(gaps, absorptances, lam,
                                                                        flux)])
        reference = per_wavelength(gaps, absorptances, lam, flux)
        np.testing.assert_allclose(got, reference, rtol=1e-12, atol=1e-13 * scale)
        # the photon budget closes: what is absorbed plus what passes is what arrives
        assert got.sum() <= scale * (1 + 1e-12)


def test_a_batch_equals_its_designs_one_by_one_bit_for_bit(am15g):
    rng = np.random.default_rng(5)
    lam, flux = am15g.wavelength_nm, am15g.photon_flux
    n, designs = 12, 40
    gaps = rng.uniform(0.6, 3.0, (n, designs, 1))
    absorptances = rng.uniform(0.3, 1.0, (n, designs, 1))
    batched = step_absorber_photocurrents(list(gaps), list(absorptances), lam, flux)
    for b in (0, 17, 39):
        alone = step_absorber_photocurrents([g[b] for g in gaps], [a[b] for a in absorptances],
                                            lam, flux)
        for j_batch, j_alone in zip(batched, alone):
            assert j_batch[b, 0] == j_alone[0]
    # scalars and (B, 1) arrays mix (a study varies one element's key)
    mixed = step_absorber_photocurrents([gaps[0], 1.4, 1.12], [absorptances[0], 0.9, 1.0], lam,
                                        flux)
    assert all(j.shape == (designs, 1) for j in mixed)


def test_many_spectra_at_once_equal_each_spectrum_alone(am15g):
    # the hourly form (laws/spectral.py) shares the sweep: each row as a spectrum of its own
    rng = np.random.default_rng(11)
    lam = am15g.wavelength_nm
    flux = am15g.photon_flux * rng.uniform(0.2, 1.2, (6, 1)) * np.linspace(1.2, 0.8, lam.size)
    gaps, absorptances = random_stack(rng, 9)
    rows = step_absorber_photocurrents_rows(list(gaps), list(absorptances), lam, flux)
    for h in range(flux.shape[0]):
        reference = per_wavelength(gaps, absorptances, lam, flux[h])
        np.testing.assert_allclose([j[h, 0] for j in rows], reference, rtol=1e-12,
                                   atol=1e-13 * reference.max())


def test_the_cost_is_one_photon_integral_per_absorber(am15g):
    # complexity guard without a clock: the subset expansion took 2^n - 1 evaluations in all
    lam, flux = am15g.wavelength_nm, am15g.photon_flux
    calls = []

    def photons_below(edge):
        calls.append(np.shape(edge))
        return cumulative_below(edge, lam, flux)

    n = 50
    gaps = np.linspace(2.4, 0.9, n)
    currents = filtered_photocurrents(list(HC_EV_NM / gaps), [0.9] * n, photons_below)
    assert len(calls) == n and len(currents) == n
    assert all(np.isfinite(j) and j >= 0 for j in currents)
