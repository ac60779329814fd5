"""A lightly doped or undoped Si base at high injection (laws/silicon.py, the compiled subcell law,
the layer compiler's flooded-base path) against sources outside the project.

Sources, each named again beside its check:
- an independent scipy solve (scipy.optimize.brentq) of the same equations: charge neutrality
  n0 - p0 = N with n0 p0 = ni^2, the law of the junction n p = ni^2 exp(Vj/Vt) with n = n0 + dn,
  p = p0 + dn, A. Richter et al., Phys. Rev. B 86 (2012) 165202, eq. (18) (coefficients from
  memory, written out again here) and Shockley-Read-Hall recombination with equal lifetimes
  (W. Shockley, W. T. Read, Phys. Rev. 87 (1952) 835; R. N. Hall, Phys. Rev. 87 (1952) 387);
- S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed. (2007), ch. 2: at high
  injection n = p = ni exp(qV/2kT), so recombination linear in n grows as exp(qV/2kT)
  (ideality 2), at low injection as exp(qV/kT);
- A. Richter, M. Hermle, S. W. Glunz, IEEE J. Photovolt. 3 (2013) 1184: the intrinsic limit of a
  110 um wafer of undoped Si, 29.43 %, Voc 761 mV, Jsc 43.3 mA/cm^2, FF 89.3 % at 25 degC (that
  their optimum is the undoped wafer is from memory).
"""
import numpy as np
import pytest
from scipy.optimize import brentq

from siltandem import StackError, load_stack, run_stack
from siltandem.circuit.elements import Subcell, batch
from siltandem.circuit.from_layers import compile_layer_stack
from siltandem.constants import ELEMENTARY_CHARGE_C, thermal_voltage_V
from siltandem.laws import compiled as kernels
from siltandem.laws import diode, silicon

from test_silicon_physics import IDEAL_WAFER

T = 298.15
VT = float(thermal_voltage_V(T))
NI = 9.65e9       # cm^-3, only to make densities here (the laws take it as a parameter)


def _richter_rate(n, p, n0, p0, dn, ni2):
    """Richter et al. 2012 eq. (18) with B_rel = 1 (the test's columns set the radiative part
    apart): (np - ni^2)(2.5e-31 g_eeh n0 + 8.5e-32 g_ehh p0 + 3e-29 dn^0.92)."""
    g_eeh = 1 + 13 * (1 - np.tanh((n0 / 3.3e17) ** 0.66))
    g_ehh = 1 + 7.5 * (1 - np.tanh((p0 / 7.0e17) ** 0.63))
    return (n * p - ni2) * (2.5e-31 * g_eeh * n0 + 8.5e-32 * g_ehh * p0 + 3.0e-29 * dn ** 0.92)


def _reference_current(v, *, net_doping, thickness_cm, tau_s, srv_cm_s, radiative_cm3_s):
    """J [A/cm^2] of a uniformly injected base, solved with brentq from the equations alone."""
    ni2 = NI * NI
    n0 = brentq(lambda n: n - ni2 / n - net_doping, NI * 1e-3, net_doping + 2 * NI, xtol=1e-30,
                rtol=1e-15)
    p0 = ni2 / n0
    target = ni2 * np.exp(v / VT)
    dn = brentq(lambda x: (n0 + x) * (p0 + x) - target, 0.0, 1e20, xtol=1e-30, rtol=1e-15)
    n, p = n0 + dn, p0 + dn
    u = (_richter_rate(n, p, n0, p0, dn, ni2) + radiative_cm3_s * (n * p - ni2)
         + (n * p - ni2) / (tau_s * (n + p)))
    surface = srv_cm_s * (n * p - ni2) / (n + p)
    return ELEMENTARY_CHARGE_C * (thickness_cm * u + surface)


def _columns(net_doping, *, thickness_m=110e-6, tau_s=1e-3, srv_m_s=0.1):
    base = silicon.bulk_base(thickness_m=thickness_m, n0_cm3=net_doping, p0_cm3=0.0,
                             srh_rate_s=1.0 / tau_s, surface_srv_m_s=srv_m_s)
    columns = list(silicon.bulk_columns(base, ni_eff_cm3=NI, temperature_K=T))
    columns[5] = columns[5] * 0 + 1.0          # bmin = 1: B_rel = 1, a constant radiative coefficient
    return tuple(columns)


@pytest.mark.parametrize("net_doping", [0.0, 1e10, 1e12, 1e15])
def test_base_law_is_the_scipy_solve_of_its_equations(net_doping):
    # independent scipy solve (brentq for n0 and for dn; Richter et al. 2012 eq. 18, SRH with
    # equal lifetimes, a rear surface of velocity S): the law agrees to 1e-9, from low injection
    # through dn >> N
    columns = _columns(net_doping)
    for v in (0.2, 0.45, 0.6, 0.7, 0.76, 0.85):
        j, _ = silicon.bulk_current(v, columns, temperature_K=T)
        expected = _reference_current(v, net_doping=net_doping, thickness_cm=110e-4, tau_s=1e-3,
                                      srv_cm_s=10.0, radiative_cm3_s=silicon.RADIATIVE_LOW_CM3_S)
        assert float(j) * 1e-4 == pytest.approx(expected, rel=1e-9)


def test_undoped_base_has_ideality_two_under_srh_and_one_when_doped():
    # Sze & Ng (2007) ch. 2: at high injection n = p = ni exp(V/2Vt); recombination linear in n
    # (SRH at tau = 1 us, far above Auger and radiative here) gives d ln J / dV = 1/(2 Vt); a
    # base doped 1e16 stays in low injection at 0.5 V: 1/Vt
    for net, ideality in ((0.0, 2.0), (1e16, 1.0)):
        columns = _columns(net, tau_s=1e-6, srv_m_s=0.0)
        v = 0.5
        j, dj = silicon.bulk_current(v, columns, temperature_K=T)
        assert float(dj / j) * VT == pytest.approx(1.0 / ideality, rel=2e-3)


@pytest.mark.parametrize("net_doping", [0.0, 1e10])
def test_compiled_law_and_its_slope_enclosure_hold_for_an_undoped_base(net_doping):
    # the compiled form against the numpy law, the slope against central differences, and the
    # certificate's slope enclosure (kernels.slope_range) around both, over reverse bias to
    # strong high injection (our own code against itself and finite differences)
    columns = _columns(net_doping)
    rows = kernels.parameter_rows(kernels.SUBCELL_LAW, [[0.0, 0.0, 0.0, 0.0, VT, -np.inf, 0.0, 3.28]],
                                  bulk=np.array([[float(c) for c in columns]]))
    v = np.linspace(-0.5, 0.95, 300)
    jc, djc = kernels.evaluate_law(kernels.SUBCELL_LAW, rows, v[None, :])
    j, dj = diode.junction_current(v, photocurrent_A_m2=0.0, j01_A_m2=0.0, temperature_K=T,
                                   bulk=columns)
    np.testing.assert_allclose(jc[0], j, rtol=1e-12, atol=1e-30)
    np.testing.assert_allclose(djc[0], dj, rtol=1e-12, atol=1e-30)
    h = 1e-6
    numeric = (diode.junction_current(v + h, photocurrent_A_m2=0.0, j01_A_m2=0.0, temperature_K=T,
                                      bulk=columns)[0]
               - diode.junction_current(v - h, photocurrent_A_m2=0.0, j01_A_m2=0.0, temperature_K=T,
                                        bulk=columns)[0]) / (2 * h)
    np.testing.assert_allclose(dj, numeric, rtol=1e-5, atol=1e-9 * np.abs(dj).max())
    assert np.all(np.diff(j) < 0)             # J = Jph - J_b falls monotonically with V
    lo = v[:-1][None, :]
    hi = v[1:][None, :]
    low, high = kernels.slope_range(kernels.SUBCELL_LAW, rows, lo, hi)
    inside = lo[0][:, None] + (hi - lo)[0][:, None] * np.linspace(0.0, 1.0, 21)[None, :]
    _, slope = kernels.evaluate_law(kernels.SUBCELL_LAW, rows, inside)
    assert np.all(slope >= low[0][:, None] * (1 + 1e-12)) and np.all(slope <= high[0][:, None])


def test_inverse_of_an_undoped_si_subcell_is_brentqs_root():
    base = silicon.bulk_base(thickness_m=110e-6, n0_cm3=0.0, p0_cm3=0.0, srh_rate_s=1e-3)
    cell = Subcell("silicon", batch(1.12), j01_fixed_A_m2=batch(1e-17),
                   bulk=tuple(batch(float(x)) for x in (*base, NI))).with_photocurrent(batch(420.0))
    currents = np.array([[-50.0, 0.0, 200.0, 400.0, 419.9]])
    v, _ = cell.voltage(currents, T)
    law = cell._junction(T)
    for target, got in zip(currents[0], v[0]):
        root = brentq(lambda x: diode.junction_current(x, **law)[0][0, 0] - target, -5.0, 1.2,
                      xtol=1e-15, rtol=1e-15)
        assert got == pytest.approx(root, abs=2e-13)


UNDOPED_WAFER = IDEAL_WAFER.replace('doping = "n:1e14"', 'doping = "n:1e10"')


def test_undoped_wafer_reaches_richters_intrinsic_limit(tmp_path):
    # Richter, Hermle & Glunz 2013: the 110 um undoped wafer, 29.43 %, Voc 761 mV, Jsc
    # 43.3 mA/cm^2, FF 89.3 % at 25 degC; tolerances as the 1e14 wafer's check in
    # tests/test_silicon_physics.py (Jsc -2.0/+1.0 mA/cm^2 from the front coating's reflection,
    # Voc +-6 mV, FF +-1.0 % abs, efficiency +-1.5 % abs). The parser's lowest doping, 1e10 cm^-3,
    # lies near ni: the base is intrinsic in all but name.
    assert 'doping = "n:1e10"' in UNDOPED_WAFER
    path = tmp_path / "undoped.toml"
    path.write_text(UNDOPED_WAFER)
    result = run_stack(load_stack(path))
    summary = result.summary
    assert 41.3 <= summary["jsc_mA_cm2"] <= 44.3
    assert summary["voc_V"] == pytest.approx(0.761, abs=0.006)
    assert summary["fill_factor_pct"] == pytest.approx(89.3, abs=1.0)
    assert summary["efficiency_pct"] == pytest.approx(29.43, abs=1.5)
    assert summary["mpp_certificate"]["certified"]
    circuit = compile_layer_stack(load_stack(path))
    details = circuit.optics["layer_details"]["subcells"]
    (cell,) = details.values()
    assert cell["silicon_base_flooded"] and cell["silicon_base_law"]
    (element,) = [e for e in circuit.elements if isinstance(e, Subcell)]
    assert float(element.j02_A_m2.reshape(-1)[0]) == 0.0


def test_a_lightly_doped_emitter_is_still_refused(tmp_path):
    # only the base is solved at high injection: an emitter near ni stays an error naming the layer
    text = UNDOPED_WAFER.replace('doping = "p:1e18"', 'doping = "p:2e10"')
    path = tmp_path / "emitter.toml"
    path.write_text(text)
    with pytest.raises(StackError) as caught:
        compile_layer_stack(load_stack(path))
    assert caught.value.where == "layer 1 'wafer emitter'"
    assert "intrinsic carrier density" in caught.value.problem


def test_undoped_wafer_voc_temperature_coefficient_follows_green_2003(tmp_path):
    # M. A. Green, Prog. Photovolt. 11 (2003) 333 (from memory): dVoc/dT = -(Eg0/q - Voc +
    # gamma kT/q) / T, Eg0 the gap extrapolated linearly to 0 K. A flooded base's recombination
    # grows as n_i^m exp(m qV/2kT) (m about 2.9 for Auger at high injection, 2 for radiative),
    # with n_i^2 ~ T^3 exp(-Eg/kT): gamma = 3 whatever m. Left out: the rise of Jsc with T
    # ((2kT/mq) dlnJsc/dT, about 0.3 %) and B_rel's temperature law: 2 % tolerance.
    from siltandem.constants import BOLTZMANN_EV_K
    from siltandem.materials import load_material

    vocs = []
    for t in (293.15, 303.15):
        path = tmp_path / f"wafer_{t:.0f}.toml"
        path.write_text(UNDOPED_WAFER.replace("temperature_K = 298.15", f"temperature_K = {t}"))
        vocs.append(run_stack(load_stack(path)).summary["voc_V"])
    slope = (vocs[1] - vocs[0]) / 10.0
    t, h = 298.15, 0.01
    si = load_material("Si")
    gap0 = float(si.gap_eV(t)) - t * (float(si.gap_eV(t + h)) - float(si.gap_eV(t - h))) / (2 * h)
    green = -(gap0 - 0.5 * (vocs[0] + vocs[1]) + 3 * BOLTZMANN_EV_K * t) / t
    assert slope == pytest.approx(green, rel=0.02)


def test_a_fully_depleted_si_base_is_a_flooded_base(tmp_path):
    # a 50 um base doped 1e11 cm^-3 (above 10 ni at 25 degC) is depleted through at equilibrium
    # (the abrupt junction's width, 84 um here, Sze & Ng ch. 2): before, an error; now a flooded
    # base. At the operating point dn ~ 1e16 >> N, so by the base law's equations (n0 + p0 enters
    # only beside 2 dn) its Voc is within 0.5 mV of the same wafer doped 1e10.
    results = {}
    for doping in ("n:1e11", "n:1e10"):
        text = UNDOPED_WAFER.replace('doping = "n:1e10"', f'doping = "{doping}"').replace(
            "thickness_nm = 109900", "thickness_nm = 49900")
        assert f'doping = "{doping}"' in text and "thickness_nm = 49900" in text
        path = tmp_path / f"thin_{doping[2:]}.toml"
        path.write_text(text)
        circuit = compile_layer_stack(load_stack(path))
        (cell,) = circuit.optics["layer_details"]["subcells"].values()
        assert cell["silicon_base_flooded"]
        summary = run_stack(load_stack(path)).summary
        assert summary["mpp_certificate"]["certified"]
        results[doping] = summary["voc_V"]
    assert results["n:1e11"] == pytest.approx(results["n:1e10"], abs=5e-4)
