"""Checks of the tunnel-junction law and its peak-current estimate against outside sources.

Sources named beside each check. Closed forms of the empirical three-term law: S. M. Sze, K. K. Ng,
Physics of Semiconductor Devices, 3rd ed. (2007), ch. 8 (from memory), after L. Esaki, Phys. Rev. 109 (1958)
603. Fermi-Dirac statistics: direct numerical integral with scipy.integrate.quad. Tunnelling exponents:
direct numerical WKB integrals of the textbook decay constants (E. O. Kane, J. Appl. Phys. 32 (1961) 83;
Sze & Ng ch. 2). Published peak current densities of tunnel junctions used in multi-junction cells.
"""
import math

import numpy as np
import pytest
from scipy.integrate import dblquad, quad
from scipy.optimize import brentq

from siltandem.constants import (BOLTZMANN_EV_K, ELECTRON_MASS_KG, ELEMENTARY_CHARGE_C, PLANCK_J_S,
                                 VACUUM_PERMITTIVITY_F_M)
from siltandem.laws import carriers, esaki
from siltandem.units import A_CM2_TO_A_M2, PER_CM3_TO_PER_M3

HBAR = PLANCK_J_S / (2 * math.pi)
Q = ELEMENTARY_CHARGE_C

# a GaAs-like junction, invented for exercising the law (not a check value)
LAW = dict(peak_A_m2=1e7, peak_V=0.1, valley_A_m2=1e6, valley_V=0.4, saturation_A_m2=1e-17 * A_CM2_TO_A_M2,
           ideality=1.0, temperature_K=300.0)


def first_term_only(**over):
    # excess current 1e-13 of the peak with a fixed exponent, no thermal current: the first term alone
    p = dict(LAW, valley_A_m2=1e-6, excess_slope_per_V=10.0, saturation_A_m2=0.0)
    p.update(over)
    return p


# --------------------------------------------------------------------------------------------------
# the empirical three-term form
# --------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("jp, vp", [(1e7, 0.1), (2.35e6, 0.25), (1e8, 0.05)])
def test_first_term_closed_forms(jp, vp):
    # Sze & Ng ch. 8 (from memory), REFERENCES "Esaki": Jt(Vp) = Jp, dJt/dV(Vp) = 0, Jt(2Vp) = (2/e) Jp,
    # zero-bias resistance-area Vp / (e Jp)
    p = first_term_only(peak_A_m2=jp, peak_V=vp)
    j, dj = esaki.tunnel_current_density(np.array([0.0, vp, 2 * vp]), return_slope=True, **p)
    assert j[0] == pytest.approx(0.0, abs=1e-9 * jp)
    assert j[1] == pytest.approx(jp, rel=1e-9)
    assert abs(dj[1]) < 1e-9 * jp / vp
    assert j[2] == pytest.approx(2.0 / math.e * jp, rel=1e-9)
    assert 1.0 / dj[0] == pytest.approx(vp / (math.e * jp), rel=1e-9)


def test_exact_peak_option_puts_combined_maximum_at_request():
    # the combined maximum found by root finding on dJ/dV equals the requested (Vp, Jp); the raw sum does not
    jp = np.array([1e7, 5e6, 2e7])
    vp = np.array([0.1, 0.15, 0.08])
    p = dict(LAW, peak_A_m2=jp, peak_V=vp, valley_A_m2=jp / 8, valley_V=np.array([0.4, 0.6, 0.5]))
    got = esaki.attained_peak_and_valley(exact_peak=True, **p)
    np.testing.assert_allclose(got.peak_V, vp, rtol=1e-9)
    np.testing.assert_allclose(got.peak_A_m2, jp, rtol=1e-12)
    raw = esaki.attained_peak_and_valley(**p)
    assert np.all(raw.peak_V > vp) and np.all(raw.peak_A_m2 > jp)        # shifted right and up
    j, dj = esaki.tunnel_current_density(vp, exact_peak=True, return_slope=True, **p)
    np.testing.assert_allclose(j, jp, rtol=1e-12)
    assert np.all(np.abs(dj) < 1e-9 * jp / vp)


@pytest.mark.parametrize("exact", [False, True])
def test_attained_extrema_match_dense_grid(exact):
    # independent route: the maximum and minimum of J on a fine voltage grid (numpy argmax / argmin)
    got = esaki.attained_peak_and_valley(exact_peak=exact, **LAW)
    v = np.linspace(0.0, 0.9, 900_001)
    j = esaki.tunnel_current_density(v, exact_peak=exact, **LAW)
    ip = np.argmax(j[v < 0.25])
    iv = np.argmin(np.where(v > got.peak_V, j, np.inf))
    assert got.peak_V == pytest.approx(v[ip], abs=2e-6)
    assert got.peak_A_m2 == pytest.approx(j[ip], rel=1e-9)
    assert got.valley_V == pytest.approx(v[iv], abs=2e-6)
    assert got.valley_A_m2 == pytest.approx(j[iv], rel=1e-9)
    assert got.valley_A_m2 < got.peak_A_m2


def test_negative_differential_resistance_between_peak_and_valley():
    # Esaki (1958): negative differential resistance between peak and valley, positive elsewhere
    ext = esaki.attained_peak_and_valley(**LAW)
    v = np.linspace(0.0, 1.3, 2601)
    _, dj = esaki.tunnel_current_density(v, return_slope=True, **LAW)
    inside = (v > ext.peak_V + 1e-4) & (v < ext.valley_V - 1e-4)
    outside = (v < ext.peak_V - 1e-4) | (v > ext.valley_V + 1e-4)
    assert inside.sum() > 100 and np.all(dj[inside] < 0)
    assert np.all(dj[outside] > 0)


def test_default_valley_sits_near_requested_voltage():
    # default excess exponent (our choice, no source): the valley of the combined curve stays near valley_V
    ext = esaki.attained_peak_and_valley(**LAW)
    assert ext.valley_V == pytest.approx(LAW["valley_V"], rel=0.02)


@pytest.mark.parametrize("exact", [False, True])
def test_analytic_slope_matches_central_differences(exact):
    # analytic dJ/dV against numerical central differences from -5 V (reverse) to 1.3 V (thermal branch)
    v = np.linspace(-5.0, 1.3, 1261)
    v = v[np.abs(v) > 1e-3]
    h = 1e-6
    _, dj = esaki.tunnel_current_density(v, return_slope=True, exact_peak=exact, **LAW)
    num = (esaki.tunnel_current_density(v + h, exact_peak=exact, **LAW)
           - esaki.tunnel_current_density(v - h, exact_peak=exact, **LAW)) / (2 * h)
    scale = np.abs(dj) + 1e-3 * LAW["peak_A_m2"] / LAW["peak_V"]
    assert np.max(np.abs(num - dj) / scale) < 1e-6


def test_reverse_branch_monotone_finite_and_odd_at_origin():
    # Zener (reverse tunnelling) branch: current grows monotonically in magnitude, stays finite
    v = np.linspace(-50.0, 0.0, 20001)       # beyond -30 V the exponentials run along their tangents
    j, dj = esaki.tunnel_current_density(v, return_slope=True, **LAW)
    assert np.all(np.isfinite(j)) and np.all(np.isfinite(dj))
    assert np.all(np.diff(j) > 0) and np.all(dj > 0)
    assert np.all(j[:-1] < 0) and j[-1] == 0.0
    # near zero bias the law is odd to first order (no offset current at zero bias)
    small = esaki.tunnel_current_density(np.array([-1e-6, 1e-6]), **LAW)
    assert small[0] == pytest.approx(-small[1], rel=1e-4)


def test_shapes_broadcast():
    v = np.linspace(-0.5, 1.0, 5)[:, None]
    jp = np.array([1e6, 1e7, 1e8])
    j, dj = esaki.tunnel_current_density(v, return_slope=True, **dict(LAW, peak_A_m2=jp,
                                                                       valley_A_m2=jp / 10))
    assert j.shape == dj.shape == (5, 3)
    np.testing.assert_allclose(j[:, 1], esaki.tunnel_current_density(v[:, 0], **LAW), rtol=1e-14)
    ext = esaki.attained_peak_and_valley(**dict(LAW, peak_A_m2=jp[:, None] * np.ones(2),
                                                valley_A_m2=jp[:, None] / 10))
    assert ext.peak_V.shape == (3, 2)
    assert esaki.tunnel_current_density(0.05, **LAW).shape == ()


def test_curve_without_negative_resistance_is_nan_and_warned():
    p = dict(LAW, peak_A_m2=np.array([1e7, 1e7]), valley_A_m2=np.array([1e6, 0.99e7]),
             valley_V=np.array([0.4, 0.11]))
    with pytest.warns(RuntimeWarning, match="1 of 2 parameter sets"):
        ext = esaki.attained_peak_and_valley(**p)
    assert np.isfinite(ext.peak_V[0]) and np.isnan(ext.peak_V[1]) and np.isnan(ext.valley_A_m2[1])


# --------------------------------------------------------------------------------------------------
# validation messages
# --------------------------------------------------------------------------------------------------
def test_peak_voltage_above_valley_voltage_is_refused():
    with pytest.raises(esaki.TunnelParameterError, match=r"peak_V = 0\.5 V is not below valley_V = 0\.3 V.*"
                                                         r"lower peak_V or raise valley_V"):
        esaki.tunnel_current_density(0.1, **dict(LAW, peak_V=0.5, valley_V=0.3))


def test_valley_current_above_peak_current_is_refused():
    with pytest.raises(ValueError, match=r"valley_A_m2 = 2e\+07 A/m\^2 is not below peak_A_m2.*"
                                         r"lower valley_A_m2 or raise peak_A_m2"):
        esaki.attained_peak_and_valley(**dict(LAW, valley_A_m2=2e7))


@pytest.mark.parametrize("name", ["peak_A_m2", "peak_V", "valley_A_m2", "ideality", "temperature_K"])
def test_non_positive_values_are_refused(name):
    with pytest.raises(ValueError, match=rf"{name} = -1 .*must be finite and positive; give a positive {name}"):
        esaki.tunnel_current_density(0.1, **dict(LAW, **{name: -1.0}))


def test_message_names_the_array_entry_and_the_element():
    with pytest.raises(ValueError, match=r"element 3: peak_V .* \(at index \(1,\), 1 of 3 entries\)"):
        esaki.validate_tunnel_parameters(peak_A_m2=1e7, peak_V=np.array([0.1, 0.5, 0.1]), valley_A_m2=1e6,
                                         valley_V=0.4, where="element 3")


def test_exact_peak_impossible_is_refused():
    # thermal current at the peak voltage above the requested peak current: no maximum can sit at peak_V
    with pytest.raises(ValueError, match="no peak can sit there.*lower valley_A_m2 or saturation_A_m2"):
        esaki.tunnel_current_density(0.1, exact_peak=True, **dict(LAW, saturation_A_m2=1e6))
    # excess current rising too steeply at peak_V: the stationary point there would be a minimum
    with pytest.raises(ValueError, match="rise too steeply at peak_V.*lower excess_slope_per_V"):
        esaki.tunnel_current_density(0.1, exact_peak=True, **dict(LAW, valley_A_m2=9e6, valley_V=0.15,
                                                                  excess_slope_per_V=1.0))


# --------------------------------------------------------------------------------------------------
# Fermi-level degeneracy
# --------------------------------------------------------------------------------------------------
def f_half(eta):
    # F_1/2 normalised so that F -> exp(eta) for eta -> -inf, by scipy.integrate.quad
    f = lambda x: math.sqrt(x) / (1.0 + math.exp(min(x - eta, 700.0)))
    pts = [eta] if eta > 0 else None
    return 2 / math.sqrt(math.pi) * quad(f, 0, max(eta, 0) + 60, points=pts, limit=200)[0]


def test_joyce_dixon_against_numerical_fermi_dirac_inverse():
    # W. B. Joyce, R. W. Dixon, Appl. Phys. Lett. 31 (1977) 354, plus the degenerate branch, against the
    # inverse of a direct quad integral of F_1/2 (brentq)
    t = 300.0
    kt = BOLTZMANN_EV_K * t
    r = np.logspace(-2, np.log10(300), 25)
    exact = np.array([brentq(lambda e: f_half(e) - ri, -30, 100, xtol=1e-12) for ri in r])
    got = carriers.fermi_degeneracy_eV(r * 4.7e23, band_states_m3=4.7e23, temperature_K=t) / kt
    err = np.abs(got - exact)
    assert np.max(err[r <= 4]) < 2e-4          # Joyce-Dixon range
    assert np.max(err) < 5e-3                  # whole range, including the blend and degenerate branch
    assert np.all(np.diff(got) > 0)


def test_effective_density_of_states_of_gaas():
    # GaAs conduction band, m* = 0.067 m0: Nc = 4.7e17 cm^-3 in the standard tables (REFERENCES, 300 K);
    # the tables fold in a slightly different mass, so 10 %
    nc = carriers.effective_density_of_states_per_m3(300.0, mass_ratio=0.067)
    assert nc / PER_CM3_TO_PER_M3 == pytest.approx(4.7e17, rel=0.10)


# --------------------------------------------------------------------------------------------------
# peak-current estimate
# --------------------------------------------------------------------------------------------------
# Material numbers. Eg, chi, eps_r, Nc, Nv of GaAs and Al0.3Ga0.7As: REFERENCES materials table (after
# I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan, J. Appl. Phys. 89 (2001) 5815 and standard tables).
# Masses from memory: GaAs m_e 0.067, light hole 1/(gamma1 + 2 gamma2) = 1/(6.98 + 4.12) = 0.090 (VMR
# Luttinger parameters); Al0.3Ga0.7As m_lh linear between GaAs 0.090 and AlAs 0.185; its Nv taken equal to
# GaAs. In0.53Ga0.47As from memory (standard tables): Eg 0.75 eV, m_e 0.041, m_lh 0.050, eps_r 13.9,
# Nc 2.1e17, Nv 7.7e18 cm^-3.
GAAS = dict(gap=1.4225, chi=4.07, me=0.067, mlh=0.090, eps=12.9, nc=4.7e17, nv=7.0e18)
ALGAAS30 = dict(gap=1.80, chi=3.74, me=None, mlh=0.090 + 0.3 * 0.095, eps=12.05, nc=None, nv=7.0e18)  # p side only
INGAAS = dict(gap=0.75, chi=4.5, me=0.041, mlh=0.050, eps=13.9, nc=2.1e17, nv=7.7e18)


def estimate(n, p, nd_cm3, na_cm3, hetero=False, **over):
    kw = dict(n_gap_eV=n["gap"], p_gap_eV=p["gap"], n_doping_m3=nd_cm3 * PER_CM3_TO_PER_M3,
              p_doping_m3=na_cm3 * PER_CM3_TO_PER_M3, n_electron_mass=n["me"], p_light_hole_mass=p["mlh"],
              n_relative_permittivity=n["eps"], p_relative_permittivity=p["eps"],
              n_conduction_states_m3=n["nc"] * PER_CM3_TO_PER_M3,
              p_valence_states_m3=p["nv"] * PER_CM3_TO_PER_M3, temperature_K=300.0)
    if hetero:
        kw.update(n_affinity_eV=n["chi"], p_affinity_eV=p["chi"])
    kw.update(over)
    return esaki.estimate_peak_current(**kw)


# (junction, n layer, p layer, hetero, Nd, Na [cm^-3], published Jp [A/cm^2], source)
PUBLISHED = [
    # I. Garcia, I. Rey-Stolle, C. Algora, J. Phys. D 45 (2012) 045101: n++ GaAs(Te)/p++ AlGaAs(C), MOVPE,
    # Jp ~ 1e4 A/cm^2 (abstract). Dopings 2e19 / 1e20 and x = 0.3: from memory.
    ("GaAs/AlGaAs MOVPE", GAAS, ALGAAS30, True, 2e19, 1e20, 1.0e4),
    # GaAs n+/p+ MBE intercell contact, 235 A/cm^2 (REFERENCES; authors from memory). Dopings 1e19 both:
    # from memory (typical MBE Si/Be limit).
    ("GaAs MBE", GAAS, GAAS, False, 1e19, 1e19, 235.0),
    # Shen et al., Appl. Phys. A 56 (1993) 153: p+/n+ In0.53Ga0.47As, LPE, 793 A/cm^2. Dopings 1e19 both:
    # from memory (typical LPE limit).
    ("In0.53Ga0.47As LPE", INGAAS, INGAAS, False, 1e19, 1e19, 793.0),
]


@pytest.mark.parametrize("name, n, p, hetero, nd, na, published", PUBLISHED, ids=[c[0] for c in PUBLISHED])
def test_peak_current_order_of_magnitude_against_published(name, n, p, hetero, nd, na, published):
    # order of magnitude only: doping assumed from memory, and the estimate moves ~x10 per x2 of doping
    est = estimate(n, p, nd, na, hetero)
    ratio = float(est.peak_A_m2) / A_CM2_TO_A_M2 / published
    assert 1 / 30 < ratio < 30, f"{name}: estimate {ratio:.3g} x published"
    # typical GaAs-family peak voltages 0.1-0.3 V (REFERENCES, from memory): loose band
    assert 0.05 < float(est.peak_V) < 0.4


def test_peak_current_rises_with_doping_and_falls_with_gap_and_mass():
    dop = np.array([5e18, 1e19, 2e19, 5e19, 1e20])
    for barrier in ("two_band", "triangular"):
        j_n = estimate(GAAS, GAAS, dop, 5e19, barrier=barrier).peak_A_m2
        j_p = estimate(GAAS, GAAS, 5e19, dop, barrier=barrier).peak_A_m2
        assert np.all(np.diff(j_n) > 0) and np.all(np.diff(j_p) > 0)
        gap = np.array([0.75, 1.0, 1.42, 1.8])
        j_g = estimate(GAAS, GAAS, 2e19, 5e19, n_gap_eV=gap, p_gap_eV=gap, barrier=barrier).peak_A_m2
        assert np.all(np.diff(j_g) < 0)
        mass = np.array([0.04, 0.067, 0.1, 0.2])
        j_m = estimate(GAAS, GAAS, 2e19, 5e19, n_electron_mass=mass, barrier=barrier).peak_A_m2
        assert np.all(np.diff(j_m) < 0)
    assert j_n.shape == (5,)


def test_homojunction_field_is_the_textbook_depletion_field():
    # abrupt p-n junction, depletion approximation (Sze & Ng ch. 2):
    # F_max = sqrt(2 q (Vbi - V) Na Nd / (eps (Na + Nd))), q Vbi = Eg + xi_n + xi_p for degenerate sides
    est = estimate(GAAS, GAAS, 2e19, 5e19)
    nd, na, eps = 2e25, 5e25, 12.9 * VACUUM_PERMITTIVITY_F_M
    vbi = 1.4225 + est.n_degeneracy_eV + est.p_degeneracy_eV
    expect = np.sqrt(2 * Q * (vbi - est.peak_V) * na * nd / (eps * (na + nd)))
    assert float(est.field_V_m) == pytest.approx(float(expect), rel=1e-12)
    # Sze & Ng (from memory): Vp ~ (xi_n + xi_p) / 3
    assert float(est.peak_V) == pytest.approx(float(est.n_degeneracy_eV + est.p_degeneracy_eV) / 3, rel=1e-12)


@pytest.mark.parametrize("barrier", ["two_band", "triangular"])
def test_tunnelling_exponent_equals_numerical_wkb_integral(barrier):
    # lambda = 2 int kappa dx across the gap in a uniform field F, by quad, with
    # triangular barrier: kappa = sqrt(2 m (Eg - q F x)) / hbar (Sze & Ng ch. 2, WKB);
    # two-band: kappa = sqrt(m_r / (2 hbar^2 Eg)) sqrt(Eg^2 - 4 eps^2), eps from midgap (Kane 1961)
    est = estimate(GAAS, GAAS, 2e19, 5e19, barrier=barrier)
    f, eg = float(est.field_V_m), float(est.tunnelling_gap_eV) * Q
    mr = ELECTRON_MASS_KG * 0.067 * 0.090 / (0.067 + 0.090)
    if barrier == "triangular":
        kappa = lambda x: math.sqrt(2 * mr * max(eg - Q * f * x, 0.0)) / HBAR
        integral = quad(kappa, 0, eg / (Q * f))[0]
    else:
        kappa = lambda e: math.sqrt(mr / (2 * HBAR**2 * eg)) * math.sqrt(max(eg**2 - 4 * e**2, 0.0)) / (Q * f)
        integral = quad(kappa, -eg / 2, eg / 2)[0]
    assert float(est.exponent) == pytest.approx(2 * integral, rel=1e-8)


def test_peak_current_integral_matches_scipy_double_integral():
    # J = q m_r / (2 pi^2 hbar^3) exp(-lambda) int dE (f_n - f_p) int_0^{2 E_s} dE_perp exp(-E_perp / Ebar)
    # (Kane; Sze & Ng ch. 8 form), by scipy dblquad, against the module's Gauss-Legendre evaluation
    est = estimate(GAAS, GAAS, 2e19, 5e19)
    kt = BOLTZMANN_EV_K * 300.0
    xn, xp, vp = float(est.n_degeneracy_eV), float(est.p_degeneracy_eV), float(est.peak_V)
    f, eg = float(est.field_V_m), float(est.tunnelling_gap_eV) * Q
    mr = ELECTRON_MASS_KG * 0.067 * 0.090 / (0.067 + 0.090)
    ebar = Q * HBAR * f / (math.pi * math.sqrt(2 * mr * eg)) / Q        # eV
    overlap = xn + xp - vp
    fermi = lambda e, mu: 1.0 / (1.0 + math.exp((e - mu) / kt))
    inner = lambda ep, e: (fermi(e, xn) - fermi(e, xn - vp)) * math.exp(-ep / ebar)
    val = dblquad(inner, 0, overlap, 0, lambda e: 2 * min(e, overlap - e), epsabs=0, epsrel=1e-9)[0]
    j = Q * mr / (2 * math.pi**2 * HBAR**3) * math.exp(-float(est.exponent)) * val * Q * Q
    assert float(est.peak_A_m2) == pytest.approx(j, rel=1e-5)


def test_estimate_refuses_bad_layers():
    with pytest.raises(ValueError, match=r"n_doping_m3 = -1.*give a positive n_doping_m3"):
        estimate(GAAS, GAAS, -1e-6, 1e19)
    with pytest.raises(ValueError, match=r"not degenerate enough.*raise n_doping_m3 or p_doping_m3"):
        estimate(GAAS, GAAS, 1e16, 1e16)
    with pytest.raises(ValueError, match="broken-gap"):
        estimate(GAAS, GAAS, 1e19, 1e19, hetero=True, n_affinity_eV=6.0)
    with pytest.raises(ValueError, match="give both n_affinity_eV and p_affinity_eV"):
        estimate(GAAS, GAAS, 1e19, 1e19, n_affinity_eV=4.07)


@pytest.mark.parametrize("exact", [False, True])
def test_sampled_extrema_route_agrees_with_the_bracketing_route(exact):
    # the fast route (sampled slopes, Newton inside the cell) against scipy's Chandrupatla
    # bracketing from the steepest point, on 200 parameter sets spanning the junctions of
    # multi-junction cells (peaks 1e2-1e7 A/m^2, peak-to-valley 3-30, Vv/Vp 3-10)
    rng = np.random.default_rng(11)
    n = 200
    jp = 10 ** rng.uniform(2, 7, n)
    vp = rng.uniform(0.03, 0.2, n)
    p = dict(LAW, peak_A_m2=jp, peak_V=vp, valley_A_m2=jp / rng.uniform(3, 30, n),
             valley_V=vp * rng.uniform(3, 10, n))
    prepared = esaki.prepare_tunnel_law(exact_peak=exact, **p)
    args = tuple(np.ravel(x) for x in np.broadcast_arrays(*prepared))
    fast = esaki._extrema_by_table(args, vp if exact else None)
    slow = esaki._extrema_by_bracketing(args)
    both = np.isfinite(slow[0]) & np.isfinite(slow[1])
    assert both.sum() > 150
    np.testing.assert_array_equal(np.isfinite(fast[1]), both)
    # both roots to about 1e-13 V (our polish's xtol; scipy's 4 eps relative)
    np.testing.assert_allclose(fast[0][both], slow[0][both], rtol=0, atol=2e-13)
    np.testing.assert_allclose(fast[1][both], slow[1][both], rtol=0, atol=2e-13)
