"""The compiled kernels (siltandem.kernels) against outside references.

Outside references: pvlib (``pvlib.singlediode.bishop88`` for the junction law with shunt and
breakdown, after J. W. Bishop, Solar Cells 25 (1988) 73; ``pvlib.pvsystem.i_from_v`` for the
terminal current with series and shunt resistance), ``scipy.optimize.brentq`` (R. P. Brent,
Algorithms for Minimization without Derivatives, 1973) for every inverse, the Esaki law's closed
forms (L. Esaki, Phys. Rev. 109 (1958) 603: J(Vp) = Jp, J'(Vp) = 0, J(2Vp) = (2/e) Jp, zero-bias
resistance Vp/(e Jp)), and ``mpmath`` central differences for the curvature. Where a kernel is
the compiled form of a numpy law of ours (laws/diode.py, laws/esaki.py), the two are also
compared; that comparison is a consistency check of our own (no source).
"""
import numpy as np
import pytest
from scipy.optimize import brentq

from siltandem.laws import compiled as kernels
from siltandem.constants import thermal_voltage_V
from siltandem.circuit.elements import Subcell, TunnelJunction, batch
from siltandem.numerics.tables import LawTable
from siltandem.laws import diode
from siltandem.laws import esaki

T = 300.0
VT = float(thermal_voltage_V(T))


def subcell_params(jph=300.0, j01=1e-16, j02=1e-7, g=0.01, vbr=-np.inf, a=0.0, m=3.28):
    return kernels.parameter_rows(kernels.SUBCELL_LAW, [[jph, j01, j02, g, VT, vbr, a, m]])


def tunnel_element(peak=1000.0, peak_v=0.06, valley=1000.0 / 12, valley_v=0.35):
    return TunnelJunction("junction", batch(peak), batch(peak_v), batch(valley), batch(valley_v))


def test_subcell_law_matches_pvlib_bishop88_with_breakdown():
    # pvlib's bishop88 (Bishop 1988): I = IL - I0 (exp(Vd/nVt) - 1) - Vd/Rsh (1 + a (1 - Vd/Vbr)^-m)
    from pvlib.singlediode import bishop88

    v = np.linspace(-14.0, 0.95, 301)[None, :]
    params = subcell_params(j02=0.0, g=1.0 / 50.0, vbr=-15.0, a=0.05, m=3.28, j01=1e-14)
    j, _ = kernels.evaluate_law(kernels.SUBCELL_LAW, params, v)
    reference = bishop88(v[0], photocurrent=300.0, saturation_current=1e-14,
                         resistance_series=0.0, resistance_shunt=50.0, nNsVth=VT,
                         breakdown_factor=0.05, breakdown_voltage=-15.0,
                         breakdown_exp=3.28)[0]
    np.testing.assert_allclose(j[0], reference, rtol=1e-12, atol=1e-9)


def test_subcell_law_and_slope_match_the_numpy_law():
    # consistency of the compiled form with laws/diode.py (our own code, no source)
    v = np.linspace(-3.0, 1.2, 500)[None, :]
    params = subcell_params(vbr=-4.0, a=0.1)
    j, dj = kernels.evaluate_law(kernels.SUBCELL_LAW, params, v)
    jr, djr = diode.junction_current(v, photocurrent_A_m2=300.0, j01_A_m2=1e-16, j02_A_m2=1e-7,
                                     shunt_S_m2=0.01, temperature_K=T, breakdown_V=-4.0,
                                     breakdown_factor=0.1, breakdown_exponent=3.28)
    np.testing.assert_allclose(j, jr, rtol=1e-13, atol=1e-10)
    np.testing.assert_allclose(dj, djr, rtol=1e-13)


def test_tunnel_law_satisfies_the_esaki_closed_forms():
    # the pure tunnelling term (no excess, no thermal current): J(Vp) = Jp, J'(Vp) = 0,
    # J(2 Vp) = (2/e) Jp, dJ/dV(0) = e Jp / Vp (Esaki 1958, the standard empirical form)
    jp, vp = 1000.0, 0.06
    params = kernels.parameter_rows(kernels.TUNNEL_LAW, [[jp, vp, 0.0, 0.35, 10.0, 0.0, VT, 0.0]])
    v = np.array([[vp, 2 * vp, 0.0]])
    j, dj = kernels.evaluate_law(kernels.TUNNEL_LAW, params, v)
    assert j[0, 0] == pytest.approx(jp, rel=1e-14)
    assert abs(dj[0, 0]) <= 1e-10 * jp / vp
    assert j[0, 1] == pytest.approx(2 * jp / np.e, rel=1e-14)
    assert dj[0, 2] == pytest.approx(np.e * jp / vp, rel=1e-14)


def test_tunnel_law_and_curvature_match_the_numpy_law_and_mpmath():
    mpmath = pytest.importorskip("mpmath")
    element = tunnel_element()
    params = element._law_parameters(T)
    v = np.array([[-0.3, -0.01, 0.02, 0.06, 0.15, 0.35, 0.6, 1.1]])
    j, dj = kernels.evaluate_law(kernels.TUNNEL_LAW, params, v)
    curvature = kernels.tunnel_curvature(params, v)
    jr, djr, d2r = esaki.evaluate_prepared(v, element._prepared(T))
    np.testing.assert_allclose(j, jr, rtol=1e-13)
    np.testing.assert_allclose(dj, djr, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(curvature, d2r, rtol=1e-12, atol=1e-6)
    # the curvature against a high-precision central difference of the compiled law's slope
    mpmath.mp.dps = 30
    for x, c in zip(v[0], curvature[0]):
        def slope(u):
            return kernels.evaluate_law(kernels.TUNNEL_LAW, params, np.array([[float(u)]]))[1][0, 0]
        h = 1e-6 * max(abs(x), 0.01)
        difference = (slope(x + h) - slope(x - h)) / (2 * h)
        assert c == pytest.approx(difference, rel=1e-5, abs=1e-2)


def brentq_inverse(code, params, target, lo, hi):
    def residual(u):
        return kernels.evaluate_law(code, params, np.array([[u]]))[0][0, 0] - target
    return brentq(residual, lo, hi, xtol=1e-15, rtol=8.9e-16, maxiter=500)


@pytest.mark.parametrize("breakdown", [False, True])
def test_subcell_inverse_matches_brentq(breakdown):
    params = subcell_params(vbr=-2.0, a=0.1) if breakdown else subcell_params()
    table = LawTable(*kernels.subcell_table(params, 512, 160))
    targets = np.concatenate([np.linspace(-400.0, 299.99, 300), [300.0, 300.01, 300.5, 305.0]])
    u, slope, inside = kernels.invert(kernels.SUBCELL_LAW, params, table, targets[None, :],
                                      increasing=False)
    assert inside.all()
    for k in range(0, targets.size, 7):
        reference = brentq_inverse(kernels.SUBCELL_LAW, params, targets[k],
                                   table.u[0, 0], table.u[0, -1])
        j_ref, dj_ref = kernels.evaluate_law(kernels.SUBCELL_LAW, params,
                                             np.array([[reference]]))
        conditioning = 8 * np.finfo(float).eps * max(abs(targets[k]), 1.0) / abs(dj_ref[0, 0])
        assert abs(u[0, k] - reference) <= 2e-13 + 2e-15 * abs(reference) + conditioning
        assert slope[0, k] == pytest.approx(dj_ref[0, 0], rel=1e-6)


@pytest.mark.parametrize("branch", ["tunnel", "negative", "thermal"])
def test_tunnel_branch_inverse_matches_brentq_up_to_the_folds(branch):
    element = tunnel_element()
    peak_v, peak_j, valley_v, valley_j = (np.asarray(x).item() for x in element.extrema(T))
    targets = {"tunnel": np.linspace(-2000.0, peak_j, 200),
               "negative": np.linspace(valley_j, peak_j, 200),
               "thermal": np.linspace(valley_j, 3000.0, 200)}[branch]
    # right next to the folds too
    ends = {"tunnel": [peak_j * (1 - 1e-12), peak_j * (1 - 1e-6)],
            "negative": [peak_j * (1 - 1e-9), valley_j * (1 + 1e-9)],
            "thermal": [valley_j * (1 + 1e-12), valley_j * (1 + 1e-6)]}[branch]
    targets = np.concatenate([targets, ends])
    u, slope = element.junction_voltage(targets[None, :], T, branch, with_slope=True)
    brackets = {"tunnel": (-10.0, peak_v), "negative": (peak_v, valley_v),
                "thermal": (valley_v, 3.0)}[branch]
    params = element._law_parameters(T)
    for k in range(0, targets.size, 9):
        lo, hi = brackets
        f_lo = kernels.evaluate_law(kernels.TUNNEL_LAW, params, np.array([[lo]]))[0][0, 0]
        f_hi = kernels.evaluate_law(kernels.TUNNEL_LAW, params, np.array([[hi]]))[0][0, 0]
        if not (f_lo - targets[k]) * (f_hi - targets[k]) < 0:
            continue                       # at a fold to rounding: brentq has no sign change
        reference = brentq_inverse(kernels.TUNNEL_LAW, params, targets[k], lo, hi)
        _, dj_ref = kernels.evaluate_law(kernels.TUNNEL_LAW, params, np.array([[reference]]))
        conditioning = 8 * np.finfo(float).eps * max(abs(targets[k]), 1.0) / abs(dj_ref[0, 0])
        near_fold = np.sqrt(conditioning * 1e-3)     # J ~ fold - c u^2: u known to sqrt(dJ / c)
        assert abs(u[0, k] - reference) <= 2e-13 + conditioning + near_fold, (branch, k)


def test_targets_beyond_a_table_are_flagged_not_invented():
    params = subcell_params()
    table = LawTable(*kernels.subcell_table(params, 512, 160))
    targets = np.array([[table.j[0].max() * 2, -np.inf, np.inf, np.nan, table.j[0].min() * 2]])
    u, slope, inside = kernels.invert(kernels.SUBCELL_LAW, params, table, targets,
                                      increasing=False)
    assert not inside.any()
    assert np.isnan(u).all() and np.isnan(slope).all()


def test_each_entry_is_independent_of_its_batch():
    # the same design alone and in a batch of others: bit for bit the same answers
    rows = np.concatenate([subcell_params(jph=j, j02=k) for j, k in
                           [(300.0, 1e-7), (150.0, 1e-9), (420.0, 0.0)]])
    table = LawTable(*kernels.subcell_table(rows, 512, 160))
    targets = np.linspace(-50.0, 140.0, 97)[None, :].repeat(3, axis=0)
    together, slope_together, _ = kernels.invert(kernels.SUBCELL_LAW, rows, table, targets,
                                                 increasing=False)
    one = LawTable(*kernels.subcell_table(rows[1:2], 512, 160))
    alone, slope_alone, _ = kernels.invert(kernels.SUBCELL_LAW, rows[1:2], one, targets[1:2],
                                           increasing=False)
    np.testing.assert_array_equal(together[1:2], alone)
    np.testing.assert_array_equal(slope_together[1:2], slope_alone)
    # and in reverse order of the targets (the cell hunt starts from the previous entry)
    backwards, _, _ = kernels.invert(kernels.SUBCELL_LAW, rows[1:2], one, targets[1:2, ::-1],
                                     increasing=False)
    np.testing.assert_array_equal(backwards[:, ::-1], alone)


def test_terminal_current_matches_pvlib_i_from_v():
    from pvlib.pvsystem import i_from_v

    cell = Subcell("cell", batch(1.42), ere=batch(1e-2), series_ohm_m2=batch(2e-5),
                   shunt_S_m2=batch(1 / 30.0)).with_photocurrent(batch(300.0))
    v = np.linspace(-2.0, 1.25, 200)[None, :]
    current, slope = cell.current(v, T)
    j01 = float(cell.j01_A_m2(T)[0, 0])
    reference = i_from_v(v[0], photocurrent=300.0, saturation_current=j01,
                         resistance_series=2e-5, resistance_shunt=30.0, nNsVth=VT)
    np.testing.assert_allclose(current[0], reference, rtol=1e-9, atol=1e-8)
    h = 1e-5                                   # central difference: error about 1e-7 here
    numeric = (cell.current(v + h, T)[0] - cell.current(v - h, T)[0]) / (2 * h)
    np.testing.assert_allclose(slope, numeric, rtol=1e-5)


def test_the_compiled_kernels_are_cached_for_the_next_run(am15g):
    # numba's on-disk cache (cache=True): after one solve with tabled elements the fused pass
    # is in the cache, so the next process starts without compiling (the command line says
    # when it must compile first)
    from siltandem.solve.series import solve_string

    cells = [Subcell("cell", batch(1.42), ere=batch(1e-2), j02_A_m2=batch(1e-7),
                     shunt_S_m2=batch(0.01)).with_photocurrent(batch(300.0)),
             Subcell("other", batch(1.12), shunt_S_m2=batch(0.01)).with_photocurrent(batch(400.0))]
    solve_string(cells, T, curve_points=50)
    from siltandem.solve import kernels as solve_kernels

    assert solve_kernels.compiled_already() is True
