"""Fermi-Dirac statistics for the Fermi levels of isotype interfaces (degenerate layers).

Independent reference: the Fermi-Dirac integral F_1/2 by direct quadrature (scipy.integrate.quad,
cross-checked against mpmath's polylogarithm, F_1/2(eta) = -Li_3/2(-e^eta)), inverted by brentq.
That gives each layer's Fermi level from n = N_band F_1/2(eta) (S. M. Sze, K. K. Ng, Physics of
Semiconductor Devices, 3rd ed., Wiley 2007, ch. 1; J. S. Blakemore, Solid-State Electron. 25 (1982)
1067 for F_1/2 and its approximations), and hence the built-in potential of an isotype interface
by the electron-affinity rule (R. L. Anderson, Solid-State Electron. 5 (1962) 341). The material
numbers (affinities, gaps, densities of states) are the library's, read here as inputs: the check
is of the statistics, not of the data.
"""
import math

import mpmath
import numpy as np
import pytest
from scipy import integrate, optimize, special

from siltandem import load_stack, run_stack
from siltandem.constants import BOLTZMANN_EV_K
from siltandem.laws import thermionic as th
from siltandem.laws.carriers import fermi_degeneracy_eV
from siltandem.materials import load_material

T = 298.15
KT = BOLTZMANN_EV_K * T
CM3 = 1e6


def fermi_half(eta):
    """F_1/2(eta) = (2/sqrt(pi)) int_0^inf sqrt(e) / (1 + exp(e - eta)) de, by quadrature."""
    f = lambda e: math.sqrt(e) * special.expit(eta - e)
    split = max(eta, 0.0)
    head = integrate.quad(f, 0.0, split, epsabs=0, epsrel=1e-13, limit=200)[0] if split else 0.0
    tail = integrate.quad(f, split, np.inf, epsabs=0, epsrel=1e-13, limit=200)[0]
    return 2.0 / math.sqrt(math.pi) * (head + tail)


def reduced_fermi_level(ratio):
    """eta = (E_F - E_c)/kT with N/N_band = F_1/2(eta), by brentq on the quadrature."""
    return optimize.brentq(lambda e: fermi_half(e) - ratio, -60.0, 400.0, xtol=1e-13)


def fermi_level_eV(material, doping_cm3, carrier):
    """Carrier-energy Fermi level (electrons: -E_F; holes: +E_F, vacuum level 0) of a layer."""
    if carrier == "electron":
        edge, band = -material.electron_affinity_eV, material.conduction_dos_per_m3(T)
    else:
        edge = material.electron_affinity_eV + float(material.gap_eV(T))
        band = material.valence_dos_per_m3(T)
    return edge + KT * reduced_fermi_level(doping_cm3 * CM3 / float(band))


def law(upper, n_upper, lower, n_lower, carrier, statistics="fermi-dirac"):
    electron = carrier == "electron"
    dos = [(m.conduction_dos_per_m3 if electron else m.valence_dos_per_m3)(T) for m in (upper, lower)]
    return th.isotype_band_alignment(
        carrier=carrier, affinity_a_eV=upper.electron_affinity_eV, gap_a_eV=upper.gap_eV(T),
        band_dos_a_m3=dos[0], doping_a_m3=n_upper * CM3,
        relative_permittivity_a=upper.relative_permittivity,
        affinity_b_eV=lower.electron_affinity_eV, gap_b_eV=lower.gap_eV(T), band_dos_b_m3=dos[1],
        doping_b_m3=n_lower * CM3, relative_permittivity_b=lower.relative_permittivity,
        temperature_K=T, statistics=statistics)


@pytest.mark.parametrize("eta", [-8.0, -2.0, 0.0, 1.5, 5.0, 20.0])
def test_reference_fermi_integral_against_the_polylogarithm(eta):
    # the quadrature reference itself, against mpmath: F_1/2(eta) = -Li_3/2(-e^eta)
    exact = float(mpmath.re(-mpmath.polylog(1.5, -mpmath.exp(eta))))
    assert fermi_half(eta) == pytest.approx(exact, rel=1e-11)


def test_degenerate_gaas_against_silicon_built_in_potential():
    # n-Si 1e19 over n-GaAs 1e19 (the case): GaAs (Nc ~ 4.3e17) is degenerate, its Fermi
    # level ~0.25 eV inside the band; Boltzmann puts it 0.08 eV in and gives Vbi 0.088 V
    si, gaas = load_material("Si"), load_material("GaAs")
    reference = fermi_level_eV(gaas, 1e19, "electron") - fermi_level_eV(si, 1e19, "electron")
    fd = law(si, 1e19, gaas, 1e19, "electron")
    boltzmann = law(si, 1e19, gaas, 1e19, "electron", statistics="boltzmann")
    # Joyce-Dixon/Sommerfeld inverse: within 2e-3 kT of the exact Fermi level (carriers.py)
    assert float(fd.built_in_V) == pytest.approx(reference, abs=2e-3 * KT)
    assert round(float(fd.built_in_V), 3) == 0.254           # the figure
    assert round(float(boltzmann.built_in_V), 3) == 0.088    # the Boltzmann figure
    assert bool(fd.a_accumulates) and bool(boltzmann.a_accumulates)   # silicon accumulates
    # seen from the accumulating silicon, GaAs's conduction band lies 0.02 eV lower (no spike):
    # the barrier is silicon's own (non-degenerate) Fermi depth
    depth_si = -material_eta(si, 1e19, "electron") * KT
    assert float(fd.offset_eV) == pytest.approx(-(4.07 - 4.05))
    assert float(fd.barrier_eV) == pytest.approx(depth_si, abs=2e-3 * KT)


def material_eta(material, doping_cm3, carrier):
    band = (material.conduction_dos_per_m3 if carrier == "electron"
            else material.valence_dos_per_m3)(T)
    return reduced_fermi_level(doping_cm3 * CM3 / float(band))


def test_fermi_dirac_swaps_the_accumulating_side_of_alinp_on_gaas():
    # n-Al0.52In0.48P 1e18 over n-GaAs 1e19: with Boltzmann AlInP's Fermi level lies higher (AlInP
    # depletes, GaAs accumulates); Fermi-Dirac lifts degenerate GaAs's Fermi level above AlInP's
    # and the roles swap
    alinp, gaas = load_material("AlInP", 0.52), load_material("GaAs")
    reference = fermi_level_eV(gaas, 1e19, "electron") - fermi_level_eV(alinp, 1e18, "electron")
    fd = law(alinp, 1e18, gaas, 1e19, "electron")
    boltzmann = law(alinp, 1e18, gaas, 1e19, "electron", statistics="boltzmann")
    assert reference > 0                                   # AlInP (a) accumulates in truth
    assert bool(fd.a_accumulates) and not bool(boltzmann.a_accumulates)
    assert float(fd.built_in_V) == pytest.approx(reference, abs=2e-3 * KT)


@pytest.mark.parametrize("carrier", ["electron", "hole"])
@pytest.mark.parametrize("ratio", [1e-4, 1e-2, 0.3, 3.0, 6.0, 30.0, 300.0])
def test_fermi_depths_over_the_whole_range(carrier, ratio):
    # the alignment's Vbi against the exact Fermi-Dirac levels, from far non-degenerate to deeply
    # degenerate (N/N_band 1e-4 .. 300); the other layer lightly doped
    gap_mat, si = load_material("GaP"), load_material("Si")
    band = (si.conduction_dos_per_m3 if carrier == "electron" else si.valence_dos_per_m3)(T)
    n_si = ratio * float(band) / CM3
    got = law(gap_mat, 1e16, si, n_si, carrier)
    reference = fermi_level_eV(si, n_si, carrier) - fermi_level_eV(gap_mat, 1e16, carrier)
    assert float(got.built_in_V) == pytest.approx(abs(reference), abs=2e-3 * KT)
    assert bool(got.a_accumulates) == (reference >= 0)


def test_non_degenerate_layers_stay_at_the_boltzmann_numbers():
    # N <= N_band/100 on both sides: Fermi-Dirac moves each Fermi level by kT r/sqrt(8) to first
    # order (Joyce-Dixon), so Vbi and the barrier move by < 0.1 mV at 298 K; alpha is unchanged
    gap_mat, si = load_material("GaP"), load_material("Si")
    for carrier, n_gap, n_si in (("electron", 1e17, 1e17), ("hole", 5e16, 1e17),
                                 ("electron", 1e15, 1e16)):
        fd = law(gap_mat, n_gap, si, n_si, carrier)
        b = law(gap_mat, n_gap, si, n_si, carrier, statistics="boltzmann")
        assert abs(float(fd.built_in_V) - float(b.built_in_V)) < 1e-4
        assert abs(float(fd.barrier_eV) - float(b.barrier_eV)) < 1e-4
        assert float(fd.alpha) == float(b.alpha) and bool(fd.a_accumulates) == bool(b.a_accumulates)


def test_statistics_must_be_named():
    si = load_material("Si")
    with pytest.raises(th.IsotypeParameterError, match="statistics"):
        law(si, 1e17, si, 1e18, "electron", statistics="maxwell")


def test_degenerate_layer_in_a_stack_file(tmp_path, monkeypatch):
    from siltandem.circuit import isotype

    # the Fermi-Dirac law is thermionic emission's (the thermionic-field default has no such form)
    monkeypatch.setattr(isotype, "DEFAULT_TRANSPORT", "thermionic")
    # the materials form in an element stack: the row's built-in potential is the Fermi-Dirac one,
    # the degenerate side is flagged and the result warns
    path = tmp_path / "s.toml"
    path.write_text('[conditions]\nspectrum = "am1.5g"\n[[element]]\nkind = "subcell"\n'
                    'name = "cell"\ngap_eV = 1.4\n[[element]]\nkind = "isotype"\nname = "window"\n'
                    'upper_material = "Si"\nlower_material = "GaAs"\nupper_doping_cm3 = 1e19\n'
                    'lower_doping_cm3 = 1e19\n')
    result = run_stack(load_stack(path), curve_points=50)
    row = result.summary["interfaces"][0]
    si, gaas = load_material("Si"), load_material("GaAs")
    reference = fermi_level_eV(gaas, 1e19, "electron") - fermi_level_eV(si, 1e19, "electron")
    assert row["built_in_V"] == pytest.approx(reference, abs=2e-3 * KT)
    sides = result.circuit.element("window").sides
    assert sides["depletion"]["degenerate"] and not sides["accumulation"]["degenerate"]
    assert sides["depletion"]["fermi_depth_eV"] == pytest.approx(
        -KT * material_eta(gaas, 1e19, "electron"), abs=2e-3 * KT)
    said = [w for w in result.summary["warnings"] if "degenerate" in w]
    # GaAs inside its band; Si at 1e19 (N/Nc ~ 0.35, eta ~ -0.9) within the 3 kT of
    # circuit/isotype.py FERMI_DIRAC_WITHIN_KT: both sides take the Fermi-Dirac law
    gaas_said = [w for w in said if "GaAs" in w and "the depletion side" in w]
    si_said = [w for w in said if "(Si," in w and "the accumulation side" in w]
    assert len(said) == 2 and len(gaas_said) == 1 and len(si_said) == 1
    assert "'window'" in gaas_said[0] and "is degenerate" in gaas_said[0] and "nearly degenerate" in si_said[0]
    assert all("the law takes Fermi-Dirac statistics" in w for w in said)


def test_layer_stack_barrier_moves_by_the_degenerate_layers_fermi_level():
    # p-GaP 1e18 over p-Si 1e20 (the demo placement "in silicon"; its data are invented, so the
    # check is the physics, not the demo): silicon accumulates; Fermi-Dirac moves its Fermi level,
    # hence the barrier, by kT (eta_exact - ln r) against Boltzmann, ~28 mV, and nothing else
    gap_mat, si = load_material("GaP"), load_material("Si")
    fd = law(gap_mat, 1e18, si, 1e20, "hole")
    b = law(gap_mat, 1e18, si, 1e20, "hole", statistics="boltzmann")
    ratio = 1e20 * CM3 / float(si.valence_dos_per_m3(T))
    shift = KT * (material_eta(si, 1e20, "hole") - math.log(ratio))
    assert not bool(fd.a_accumulates) and not bool(b.a_accumulates)
    assert float(b.barrier_eV) - float(fd.barrier_eV) == pytest.approx(shift, abs=2e-3 * KT)
    assert 0.025 < shift < 0.032
    assert float(fd.alpha) == float(b.alpha)


def test_public_inverse_is_the_one_used():
    # the alignment uses laws.carriers.fermi_degeneracy_eV (tested against a direct inverse in
    # test_esaki.py); here the same function at the GaAs point, against the quadrature
    gaas = load_material("GaAs")
    nc = float(gaas.conduction_dos_per_m3(T))
    got = fermi_degeneracy_eV(1e19 * CM3, band_states_m3=nc, temperature_K=T)
    assert float(got) == pytest.approx(KT * reduced_fermi_level(1e19 * CM3 / nc), abs=2e-3 * KT)
