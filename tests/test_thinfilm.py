"""Thin-film and layer-stack optics: coherent coatings (characteristic matrix), Beer-Lambert budgets.

Checks, in the order of STYLE.md: textbook closed forms (Fresnel, quarter-wave layers), an independent
method written here (field matching at every interface, solved as one linear system; absorption from the
quadrature of |E|^2), scipy quadrature of the generation profile, a pass-by-pass ray sum, a published
table (Si, M. A. Green, Sol. Energy Mater. Sol. Cells 92 (2008) 1305) and the AM1.5G spectrum
(ASTM G173-03 through pvlib), then shapes and input errors.
"""
import warnings

import numpy as np
import pytest
from scipy import integrate

from siltandem.constants import ELEMENTARY_CHARGE_C
from siltandem.laws.optics import cumulative_below
from siltandem.laws.thinfilm import (LightTrappedWarning, ThinFilmInputError, coating_response, complex_index,
                                     extinction_coefficient, front_reflectance, generation_profile,
                                     layer_absorption, photon_current_A_m2)
from siltandem.materials import load_material
from siltandem.materials.spectra import get_spectrum
from siltandem.units import ma_cm2


# ------------------------------------------------------------------ an independent coherent solver
def field_matching(wavelength_nm, ambient, layers, substrate):
    """Amplitudes of a plane wave through a layered medium by matching E and H at every interface.

    Written independently of the characteristic matrix: forward/backward amplitudes in each layer are
    unknowns of one linear system (E and H = N E continuous; M. Born, E. Wolf, Principles of Optics,
    sec. 1.6). ``layers`` = [(N, d_nm), ...] sun side first. Returns (r, t, [(a_j, b_j)], [k_j]) where the
    field in layer j is a_j exp(i k_j z') + b_j exp(-i k_j z'), z' measured from the top of layer j.
    """
    count = len(layers)
    size = 2 * count + 2                        # r, (a_j, b_j) per layer, t
    matrix = np.zeros((size, size), dtype=complex)
    rhs = np.zeros(size, dtype=complex)
    wavenumbers = [2 * np.pi * n / wavelength_nm for n, _ in layers]
    # interface 0: ambient (incident 1, reflected r) | first medium below
    media = [(n, d) for n, d in layers] + [(substrate, 0.0)]
    row = 0
    for i in range(count + 1):
        n_below = media[i][0]
        col_below = 1 + 2 * i                    # a of the medium below (t for the substrate)
        if i == 0:
            # E: 1 + r = a + b ; H: n0 (1 - r) = N (a - b)
            rhs[row], rhs[row + 1] = -1.0, -ambient
            matrix[row, 0], matrix[row + 1, 0] = 1.0, -ambient
        else:
            n_above, d_above = layers[i - 1]
            phase = np.exp(1j * wavenumbers[i - 1] * d_above)
            col_above = 1 + 2 * (i - 1)
            matrix[row, col_above], matrix[row, col_above + 1] = phase, 1 / phase
            matrix[row + 1, col_above] = n_above * phase
            matrix[row + 1, col_above + 1] = -n_above / phase
        matrix[row, col_below] = -1.0
        matrix[row + 1, col_below] = -n_below
        if i < count:
            matrix[row, col_below + 1] = -1.0
            matrix[row + 1, col_below + 1] = n_below
        row += 2
    solution = np.linalg.solve(matrix, rhs)
    amplitudes = [(solution[1 + 2 * j], solution[2 + 2 * j]) for j in range(count)]
    return solution[0], solution[-1], amplitudes, wavenumbers


def independent_RT(wavelength_nm, ambient, layers, substrate):
    r, t, _, _ = field_matching(wavelength_nm, ambient, layers, substrate)
    return abs(r) ** 2, substrate.real * abs(t) ** 2 / ambient


# ---------------------------------------------------------------------- 1. bare surface (Fresnel)
def test_bare_silicon_at_600nm():
    si = load_material("Si")
    n = float(si.refractive_index(600.0))
    # n of Si at 600 nm: M. A. Green, Sol. Energy Mater. Sol. Cells 92 (2008) 1305 (3.940, library table)
    assert n == pytest.approx(3.94, abs=1e-3)
    # Fresnel at normal incidence, lossless: ((n - 1)/(n + 1))^2 (E. Hecht, Optics, sec. 4.6)
    assert front_reflectance(600.0, substrate_index=n) == pytest.approx(((n - 1) / (n + 1)) ** 2, rel=1e-13, abs=0)
    # bare polished Si reflects about 35 % at 600 nm (from memory: common handbook figure)
    assert front_reflectance(600.0, substrate_index=n) == pytest.approx(0.35, abs=0.01)


@pytest.mark.parametrize("wavelength_nm", [400.0, 500.0, 600.0, 800.0, 1000.0])
def test_bare_absorbing_silicon_fresnel_with_k(wavelength_nm):
    si = load_material("Si")
    index = complex_index(wavelength_nm, refractive_index=si.refractive_index(wavelength_nm),
                          alpha_per_m=si.absorption_per_m(wavelength_nm))
    n, k = index.real, index.imag
    # absorbing medium: R = ((n - 1)^2 + k^2) / ((n + 1)^2 + k^2) (M. Born, E. Wolf, sec. 14.2)
    expected = ((n - 1) ** 2 + k ** 2) / ((n + 1) ** 2 + k ** 2)
    assert front_reflectance(wavelength_nm, substrate_index=index) == pytest.approx(expected, rel=1e-13, abs=0)


def test_extinction_coefficient_of_silicon_at_400nm():
    # Green 2008 tabulates alpha = 9.30e4 /cm and k = 0.296 at 400 nm (k from memory of the table);
    # k = alpha lambda / 4 pi (Born & Wolf sec. 14.1) must reproduce it
    k = extinction_coefficient(400.0, alpha_per_m=9.30e6)
    assert k == pytest.approx(9.30e6 * 400e-9 / (4 * np.pi), rel=1e-14, abs=0)
    assert k == pytest.approx(0.296, abs=0.002)


def test_bare_glass_under_other_ambient():
    # glass in air reflects 4 % ((1.5 - 1)/(1.5 + 1))^2 (Hecht sec. 4.6); index-matched ambient reflects 0
    assert front_reflectance(550.0, substrate_index=1.5) == pytest.approx(0.04, rel=1e-13, abs=0)
    assert front_reflectance(550.0, substrate_index=1.5, ambient_index=1.5) == pytest.approx(0.0, abs=1e-30)
    # Si under glass (n0 = 1.5): ((n - n0)/(n + n0))^2
    assert front_reflectance(600.0, substrate_index=3.94, ambient_index=1.5) == pytest.approx(
        ((3.94 - 1.5) / (3.94 + 1.5)) ** 2, rel=1e-13, abs=0)


# -------------------------------------------------------------- 2. quarter-wave single coating
@pytest.mark.parametrize("n0, n1, ns", [(1.0, 1.45, 3.94), (1.0, 2.0, 3.94), (1.0, 2.3, 3.5), (1.5, 2.0, 3.94),
                                        (1.0, 1.38, 1.52)])
def test_quarter_wave_single_layer(n0, n1, ns):
    design = 600.0
    r = front_reflectance(design, substrate_index=ns, coating_indices=[n1],
                          coating_thicknesses_nm=[design / (4 * n1)], ambient_index=n0)
    # textbook closed form at the design wavelength (Hecht sec. 9.7; Macleod ch. 4)
    assert r == pytest.approx(((n0 * ns - n1 ** 2) / (n0 * ns + n1 ** 2)) ** 2, rel=1e-12, abs=0)


def test_quarter_wave_ideal_index_gives_zero_and_mgf2_on_glass():
    n1 = np.sqrt(3.94)
    r = front_reflectance(600.0, substrate_index=3.94, coating_indices=[n1], coating_thicknesses_nm=[150 / n1])
    # n1 = sqrt(n0 ns): zero reflectance at the design wavelength (Hecht sec. 9.7)
    assert r < 1e-28
    # MgF2 (1.38) quarter wave on crown glass (1.52): about 1.3 % instead of 4.3 % (Hecht sec. 9.7,
    # from memory), at the design wavelength
    r_mgf2 = front_reflectance(550.0, substrate_index=1.52, coating_indices=[1.38],
                               coating_thicknesses_nm=[550 / (4 * 1.38)])
    assert r_mgf2 == pytest.approx(0.013, abs=0.002)


def test_half_wave_layer_is_absent_and_zero_thickness_is_bare():
    # a half-wave layer leaves the reflectance of the bare substrate (Macleod ch. 2, "absentee layer")
    bare = front_reflectance(600.0, substrate_index=3.94)
    half = front_reflectance(600.0, substrate_index=3.94, coating_indices=[2.0],
                             coating_thicknesses_nm=[600 / (2 * 2.0)])
    assert half == pytest.approx(bare, rel=1e-12, abs=0)
    none = front_reflectance(600.0, substrate_index=3.94 + 0.02j, coating_indices=[2.0 + 0.1j],
                             coating_thicknesses_nm=[0.0])
    assert none == pytest.approx(front_reflectance(600.0, substrate_index=3.94 + 0.02j), rel=1e-13, abs=0)


def test_reflectance_away_from_design_rises_and_follows_field_matching():
    wavelength = np.linspace(350.0, 1200.0, 60)
    r = front_reflectance(wavelength, substrate_index=3.94, coating_indices=[2.0], coating_thicknesses_nm=[75.0])
    reference = [independent_RT(w, 1.0, [(2.0 + 0j, 75.0)], 3.94 + 0j)[0] for w in wavelength]
    assert r == pytest.approx(reference, rel=1e-11, abs=1e-15)
    assert wavelength[np.argmin(r)] == pytest.approx(600.0, abs=15.0)     # minimum at 4 n d


# -------------------------------------------------------------- 3. double quarter-quarter coating
@pytest.mark.parametrize("n1, n2, ns", [(1.38, 2.35, 3.94), (1.45, 2.0, 3.94), (1.38, 1.7, 1.52),
                                        (1.5, 1.5 * np.sqrt(3.94), 3.94)])
def test_double_quarter_quarter(n1, n2, ns):
    design, n0 = 600.0, 1.0
    r = front_reflectance(design, substrate_index=ns, coating_indices=[n1, n2],
                          coating_thicknesses_nm=[design / (4 * n1), design / (4 * n2)], ambient_index=n0)
    # quarter-quarter closed form, layer 1 next to the ambient (Macleod ch. 4; from memory)
    expected = ((n0 * n2 ** 2 - ns * n1 ** 2) / (n0 * n2 ** 2 + ns * n1 ** 2)) ** 2
    assert r == pytest.approx(expected, rel=1e-11, abs=1e-28)
    if n2 / n1 == pytest.approx(np.sqrt(ns / n0)):
        assert r < 1e-28                          # the zero condition n2/n1 = sqrt(ns/n0)


# --------------------------------------------------- 4. absorbing films against field matching
STACKS = [
    ([(2.0 + 0.0j, 70.0)], 3.94 + 0.0j),                              # lossless coating, lossless Si
    ([(2.1 + 0.05j, 60.0)], 3.94 + 0.02j),                            # lossy nitride on absorbing Si
    ([(1.38 + 0j, 100.0), (2.35 + 0.01j, 55.0)], 3.6 + 0.005j),       # double layer
    ([(2.0 + 0.6j, 20.0), (1.5 + 0j, 80.0), (2.4 + 0.2j, 40.0)], 1.52 + 0j),   # three layers, metal-like top
    ([(0.2 + 3.0j, 10.0)], 1.52 + 0j),                                # thin metal-like film on glass
]


@pytest.mark.parametrize("layers, substrate", STACKS)
@pytest.mark.parametrize("ambient", [1.0, 1.5])
def test_characteristic_matrix_against_field_matching(layers, substrate, ambient):
    wavelengths = np.array([380.0, 520.0, 777.0, 1100.0])
    response = coating_response(wavelengths, substrate_index=substrate, coating_indices=[n for n, _ in layers],
                                coating_thicknesses_nm=[d for _, d in layers], ambient_index=ambient)
    for i, w in enumerate(wavelengths):
        r_ref, t_ref = independent_RT(w, ambient, layers, substrate)
        assert response.reflectance[i] == pytest.approx(r_ref, rel=1e-11, abs=1e-15)
        assert response.transmittance[i] == pytest.approx(t_ref, rel=1e-11, abs=1e-15)
    total = response.reflectance + response.transmittance + response.absorptance.sum(axis=0)
    assert total == pytest.approx(np.ones_like(wavelengths), abs=1e-13)


@pytest.mark.parametrize("layers", [
    [(2.0 + 0.3j, 50.0)], [(4.0 + 1.0j, 30.0)], [(0.2 + 3.0j, 15.0)],              # one film on glass
    [(2.0 + 0.3j, 40.0), (1.46 + 0j, 90.0), (3.0 + 0.8j, 25.0)],                   # lossy / lossless / lossy
])
def test_absorbing_films_on_glass_conserve_energy_with_quadrature(layers):
    """A_j = (2 pi / lambda) 2 n_j k_j / n0 * integral of |E|^2 over layer j (Born & Wolf sec. 14.1)."""
    w, glass = 600.0, 1.52 + 0j
    response = coating_response(w, substrate_index=glass, coating_indices=[n for n, _ in layers],
                                coating_thicknesses_nm=[d for _, d in layers])
    _, _, amplitudes, wavenumbers = field_matching(w, 1.0, layers, glass)
    absorbed = []
    for (index, thickness), (a, b), k in zip(layers, amplitudes, wavenumbers):
        intensity = lambda z: abs(a * np.exp(1j * k * z) + b * np.exp(-1j * k * z)) ** 2
        integral, _ = integrate.quad(intensity, 0.0, thickness, epsabs=0, epsrel=1e-12)
        absorbed.append(2 * np.pi / w * 2 * index.real * index.imag * integral)
    assert response.absorptance == pytest.approx(absorbed, rel=1e-9, abs=1e-15)
    assert response.reflectance + response.transmittance + sum(absorbed) == pytest.approx(1.0, abs=1e-9)
    assert np.all(response.absorptance[[i for i, (n, _) in enumerate(layers) if n.imag > 0]] > 0)


def test_opaque_film_reflects_like_its_own_surface():
    # a film much thicker than its absorption depth acts as a semi-infinite medium: Fresnel against the film
    # (Born & Wolf sec. 14.2), no overflow, nothing through
    film = 2.5 + 1.0j
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        response = coating_response(np.array([400.0, 900.0]), substrate_index=3.94, coating_indices=[film],
                                    coating_thicknesses_nm=[1e6])
    expected = abs((1 - film) / (1 + film)) ** 2
    assert response.reflectance == pytest.approx([expected, expected], rel=1e-13, abs=0)
    assert np.all(response.transmittance == 0.0)
    assert response.absorptance[0] == pytest.approx([1 - expected] * 2, rel=1e-13, abs=0)


# ------------------------------------------------------------------------- 5. Beer-Lambert budgets
def _random_stack(rng, layers):
    alphas = [rng.choice([0.0, 1e-8, 1.0, 1e4, 1e6, 1e8]) * rng.uniform(0.5, 2.0, 7) for _ in range(layers)]
    thicknesses = [rng.choice([1e-12, 1e-9, 1e-6, 1e-4]) * rng.uniform(0.5, 2.0) for _ in range(layers)]
    return alphas, thicknesses


@pytest.mark.parametrize("seed", range(12))
def test_budget_closes(seed):
    rng = np.random.default_rng(seed)
    alphas, thicknesses = _random_stack(rng, layers=int(rng.integers(1, 6)))
    flux = rng.uniform(1e17, 5e18, 7)
    options = [dict(), dict(front_reflectance=rng.uniform(0, 1, 7)),
               dict(front_reflectance=0.3, back_reflectance=rng.uniform(0, 1, 7)),
               dict(front_reflectance=0.1, back_reflectance=1.0, front_internal_reflectance=0.92)]
    for kwargs in options:
        b = layer_absorption(flux, alpha_per_m=alphas, thicknesses_m=thicknesses, **kwargs)
        total = b.reflected + b.absorbed.sum(axis=0) + b.transmitted + b.escaped
        assert np.max(np.abs(total / flux - 1)) < 1e-12
        assert np.all(b.absorbed >= 0) and np.all(b.transmitted >= 0) and np.all(b.escaped >= 0)


@pytest.mark.parametrize("depth", [1e-14, 1e-10, 1e-6])
def test_thin_layer_keeps_full_precision(depth):
    # exact absorbed fraction 1 - exp(-tau) = tau - tau^2/2 + tau^3/6 (series); a difference of two fluxes
    # near 1 would lose it for tau << 1
    b = layer_absorption(1.0, alpha_per_m=[1e3, depth * 1e4], thicknesses_m=[1e-7, 1e-4])
    entering = np.exp(-1e-4)
    expected = entering * (depth - depth ** 2 / 2 + depth ** 3 / 6)
    assert b.absorbed[1] == pytest.approx(expected, rel=1e-13, abs=0)


def test_layer_totals_against_quadrature_of_the_generation_profile():
    alphas, thicknesses = [3.0e6, 4.2e5, 2.0e4], [50e-9, 2e-6, 150e-6]
    for back in (0.0, 0.85):
        b = layer_absorption(2.0e18, alpha_per_m=alphas, thicknesses_m=thicknesses, front_reflectance=0.05,
                             back_reflectance=back, front_internal_reflectance=0.3)
        for j, (alpha, d) in enumerate(zip(alphas, thicknesses)):
            g = lambda x: generation_profile(x, alpha_per_m=alpha, thickness_m=d,
                                             downward_flux=b.downward_at_top[j], upward_flux=b.upward_at_bottom[j])
            integral, _ = integrate.quad(g, 0.0, d, epsabs=0, epsrel=1e-12, limit=200)
            assert integral == pytest.approx(b.absorbed[j], rel=1e-10, abs=0)


def test_generation_profile_is_beer_lambert_and_zero_outside():
    x = np.array([-1e-6, 0.0, 1e-6, 5e-6, 1e-5, 2e-5])
    g = generation_profile(x, alpha_per_m=1e5, thickness_m=1e-5, downward_flux=1e21)
    assert g[1:5] == pytest.approx(1e21 * 1e5 * np.exp(-1e5 * x[1:5]), rel=1e-14, abs=0)    # Phi alpha exp(-alpha x)
    assert g[0] == 0.0 and g[5] == 0.0


def test_back_mirror_closed_form_against_pass_by_pass_sum():
    """The geometric series of round trips against an explicit bounce-by-bounce ray sum."""
    alphas, thicknesses = [np.array([2e5, 3e3, 50.0])] * 2, [1e-6, 100e-6]
    rb, ri, rf = 0.9, 0.6, 0.2
    b = layer_absorption(1.0, alpha_per_m=alphas, thicknesses_m=thicknesses, front_reflectance=rf,
                         back_reflectance=rb, front_internal_reflectance=ri)
    t = [np.exp(-a * d) for a, d in zip(alphas, thicknesses)]
    absorbed = [np.zeros(3), np.zeros(3)]
    escaped = transmitted = np.zeros(3)
    down = (1 - rf) * np.ones(3)
    for _ in range(2000):
        for j in (0, 1):
            absorbed[j] = absorbed[j] + down * (1 - t[j])
            down = down * t[j]
        transmitted = transmitted + (1 - rb) * down
        up = rb * down
        for j in (1, 0):
            absorbed[j] = absorbed[j] + up * (1 - t[j])
            up = up * t[j]
        escaped = escaped + (1 - ri) * up
        down = ri * up
    for j in (0, 1):
        assert b.absorbed[j] == pytest.approx(absorbed[j], rel=1e-12, abs=0)
    assert b.transmitted == pytest.approx(transmitted, rel=1e-12, abs=0)
    assert b.escaped == pytest.approx(escaped, rel=1e-12, abs=0)


def test_trapped_light_is_nan_and_warned():
    with pytest.warns(LightTrappedWarning, match="1 point"):
        b = layer_absorption(np.ones(3), alpha_per_m=[np.array([0.0, 1.0, 10.0])], thicknesses_m=[1e-3],
                             back_reflectance=1.0, front_internal_reflectance=1.0)
    assert np.isnan(b.absorbed[0, 0]) and np.isnan(b.escaped[0])
    # lossy points: everything that enters is absorbed eventually (no exit)
    assert b.absorbed[0, 1:] == pytest.approx([1.0, 1.0], rel=1e-12, abs=0)


# -------------------------------------------------------------- 6. silicon under AM1.5G (consistency)
def test_silicon_wafer_photocurrent_under_am15g():
    spectrum = get_spectrum("am1.5g")                        # ASTM G173-03 global tilt, through pvlib
    w, flux = spectrum.wavelength_nm, spectrum.photon_flux
    si = load_material("Si")
    alpha = si.absorption_per_m(w)
    single = layer_absorption(flux, alpha_per_m=[alpha], thicknesses_m=[180e-6])
    j_single = ma_cm2(photon_current_A_m2(w, single.absorbed[0]))
    # every photon the Si model absorbs at all (the model's edge lies a phonon energy below the gap)
    j_all = ma_cm2(photon_current_A_m2(w, np.where(alpha > 0, flux, 0.0)))
    assert j_single < j_all
    # a planar 180 um wafer with no reflection, one pass: about 39 mA/cm^2, below the 43.8 mA/cm^2 of a
    # step absorber at 1.12 eV (../shared/REFERENCES.md, standing for S. Ruehle, Solar Energy 130 (2016)
    # 139); loose bounds, from memory
    assert 37.0 < j_single < 41.5
    # bare front surface (Green 2008 n and k): about a third lost (from memory: ~35 % reflectance)
    index = complex_index(w, refractive_index=si.refractive_index(w), alpha_per_m=alpha)
    bare = layer_absorption(flux, alpha_per_m=[alpha], thicknesses_m=[180e-6],
                            front_reflectance=front_reflectance(w, substrate_index=index))
    assert 0.6 < photon_current_A_m2(w, bare.absorbed[0]) / photon_current_A_m2(w, single.absorbed[0]) < 0.7
    # a perfect back mirror adds a second pass: more, still below the all-photons bound
    mirror = layer_absorption(flux, alpha_per_m=[alpha], thicknesses_m=[180e-6], back_reflectance=1.0)
    assert j_single < ma_cm2(photon_current_A_m2(w, mirror.absorbed[0])) < j_all
    # the photon currents of the budget close
    parts = [single.reflected, single.absorbed[0], single.transmitted, single.escaped]
    assert sum(photon_current_A_m2(w, p) for p in parts) == pytest.approx(photon_current_A_m2(w, flux), rel=1e-12,
                                                                          abs=0)


def test_photon_current_matches_the_step_optics_integral():
    spectrum = get_spectrum("am1.5g")
    w, flux = spectrum.wavelength_nm, spectrum.photon_flux
    # same trapezoid rule as siltandem.laws.optics.cumulative_below over the whole table
    assert photon_current_A_m2(w, flux) == pytest.approx(
        ELEMENTARY_CHARGE_C * cumulative_below(w[-1], w, flux), rel=1e-12, abs=0)
    # independent: scipy's trapezoid
    assert photon_current_A_m2(w, flux) == pytest.approx(ELEMENTARY_CHARGE_C * integrate.trapezoid(flux, w),
                                                         rel=1e-13, abs=0)


# ---------------------------------------------------------------------------- 7. shapes, errors
def test_shapes_broadcast():
    w = np.linspace(400.0, 1100.0, 5)
    thickness = np.array([[60.0], [70.0], [80.0]])             # a batch of three coatings
    r = front_reflectance(w, substrate_index=3.9 + 0.01j, coating_indices=[2.0], coating_thicknesses_nm=[thickness])
    assert r.shape == (3, 5)
    assert r[1] == pytest.approx(front_reflectance(w, substrate_index=3.9 + 0.01j, coating_indices=[2.0],
                                                   coating_thicknesses_nm=[70.0]), rel=1e-14, abs=0)
    assert front_reflectance(600.0, substrate_index=3.9).shape == ()
    response = coating_response(w, substrate_index=3.9, coating_indices=[1.4, 2.1], coating_thicknesses_nm=[90, 60])
    assert response.absorptance.shape == (2, 5)
    assert coating_response(w, substrate_index=3.9).absorptance.shape == (0, 5)
    b = layer_absorption(np.ones(5), alpha_per_m=[np.full(5, 1e5), np.full(5, 1e4)],
                         thicknesses_m=[np.array([[1e-6], [2e-6]]), 1e-4])
    assert b.absorbed.shape == (2, 2, 5) and b.transmitted.shape == (2, 5) and b.downward_at_top.shape == (2, 2, 5)
    assert photon_current_A_m2(w, b.absorbed).shape == (2, 2)
    empty = layer_absorption(np.ones(5), alpha_per_m=[], thicknesses_m=[], front_reflectance=0.25)
    assert empty.absorbed.shape == (0, 5) and empty.transmitted == pytest.approx(np.full(5, 0.75))


@pytest.mark.parametrize("call, message", [
    (lambda: front_reflectance(600, substrate_index=3.9, coating_indices=[2.0], coating_thicknesses_nm=[]),
     "'coating_indices' has 1 entries but 'coating_thicknesses_nm' has 0"),
    (lambda: front_reflectance(600, substrate_index=3.9, coating_indices=[2.0], coating_thicknesses_nm=[-5]),
     r"'coating_thicknesses_nm\[0\]' = -5.0 must be finite and >= 0 \[nm\]"),
    (lambda: front_reflectance(600, substrate_index=3.9 - 0.1j), "'substrate_index' .* k >= 0"),
    (lambda: front_reflectance(600, substrate_index=3.9, ambient_index=1.5 + 0.1j),
     "'ambient_index' .* real and > 0"),
    (lambda: front_reflectance(0.0, substrate_index=3.9), "'wavelength_nm' = 0.0 must be finite and > 0"),
    (lambda: layer_absorption(1.0, alpha_per_m=[1.0], thicknesses_m=[1.0, 2.0]),
     "'alpha_per_m' has 1 entries but 'thicknesses_m' has 2"),
    (lambda: layer_absorption(1.0, alpha_per_m=[-1.0], thicknesses_m=[1.0]),
     r"'alpha_per_m\[0\]' = -1.0 must be finite and >= 0 \[m\^-1\]"),
    (lambda: layer_absorption(1.0, alpha_per_m=[1.0], thicknesses_m=[1.0], back_reflectance=1.2),
     "'back_reflectance' = 1.2 is not a fraction; give a value in \\[0, 1\\]"),
    (lambda: photon_current_A_m2([400.0, 500.0], np.ones(3)), "last axis must match the 2 wavelengths"),
    (lambda: photon_current_A_m2([500.0, 400.0], np.ones(2)), "1-D increasing table"),
])
def test_input_errors(call, message):
    with pytest.raises(ThinFilmInputError, match=message):
        call()
    assert issubclass(ThinFilmInputError, ValueError)
