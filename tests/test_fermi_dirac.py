"""Fast Fermi-Dirac integrals and the Fermi-Dirac first integral (laws/fermi_dirac.py).

Checks and their sources:
- F_j(eta), j = -1/2, 1/2, 3/2, against mpmath's polylogarithm at 30 digits, F_j(eta) =
  -Li_(j+1)(-e^eta) (J. S. Blakemore, Solid-State Electron. 25 (1982) 1067, the normalised
  integral), over eta -60...200, including both sides of the branch points -40 and +40 and every
  interval of the table: relative error < 3e-14 (measured 8.7e-15).
- g(x; eta) = [F_3/2(eta + x) - F_3/2(eta) - x F_1/2(eta)] / F_1/2(eta) and dg/dx (Sze & Ng, Physics
  of Semiconductor Devices, 3rd ed. 2007, ch. 3, surface space-charge, with Fermi-Dirac carriers)
  computed in mpmath at 40 digits, x from -150 to 150 (down to 1e-8, where a plain difference
  would cancel): 1e-13 relative for eta <= 15, 3e-13 at 60, 2e-12 at 120 (measured 1.2e-14,
  6.6e-14, 1.6e-13, 1.3e-12: the plain difference at |x| = 1 loses digits to F_3/2(eta) there).
- The fast form against the slow quadrature the tables are built from (fermi_integral_quadrature,
  ~1e-13 against mpmath): 5e-13; orders without a table take the quadrature itself.
"""
import mpmath
import numpy as np
import pytest

from siltandem.laws import fermi_dirac as fd


def fd_mp(order, eta):
    """F_j(eta) = -Li_(j+1)(-e^eta) in mpmath (Blakemore 1982 normalisation)."""
    return mpmath.re(-mpmath.polylog(order + 1, -mpmath.exp(eta)))


@pytest.mark.parametrize("order", fd.TABLE_ORDERS)
def test_fast_fermi_integral_against_mpmath_polylog(order):
    eta = np.concatenate([np.linspace(-60.0, 200.0, 261), np.linspace(-40.5, 40.5, 163) + 0.0137,
                          [-40.0, -40.0 - 1e-9, -40.0 + 1e-9, 40.0, 40.0 - 1e-9, 40.0 + 1e-9]])
    with mpmath.workdps(30):
        ref = np.array([float(fd_mp(order, mpmath.mpf(e))) for e in eta])
    ours = fd.fermi_integral(order, eta)
    assert np.max(np.abs(ours / ref - 1.0)) < 3e-14


def test_fast_fermi_integral_keeps_shape_nan_and_limits():
    eta = np.array([[np.nan, -800.0], [0.0, 1e4]])
    out = fd.fermi_integral(0.5, eta)
    assert out.shape == (2, 2) and np.isnan(out[0, 0]) and out[0, 1] == 0.0
    # F_1/2(0) = (1 - 2^-1/2) zeta(3/2); F_1/2(eta) = eta^1.5 / Gamma(2.5) (1 + pi^2 / (8 eta^2) + O(eta^-4))
    # (Blakemore 1982)
    assert out[1, 0] == pytest.approx((1 - 2 ** -0.5) * float(mpmath.zeta(1.5)), rel=1e-14)
    assert out[1, 1] == pytest.approx(1e6 / float(mpmath.gamma(2.5)) * (1 + np.pi ** 2 / 8e8), rel=1e-14)


@pytest.mark.parametrize("eta, tolerance", [(-45.0, 1e-13), (-20.0, 1e-13), (-3.0, 1e-13), (-0.7, 1e-13),
                                            (0.5, 1e-13), (2.3, 1e-13), (15.0, 1e-13), (60.0, 3e-13),
                                            (120.0, 2e-12)])
def test_fast_charge_integral_against_mpmath(eta, tolerance):
    x = np.array([-150.0, -30.0, -5.0, -1.0, -0.999, -0.02, -1e-3, -1e-8, 1e-8, 1e-6, 1e-4, 0.005,
                  0.3, 0.9999, 1.0, 5.0, 20.0, 45.0, 150.0])
    g, dg, c = fd.charge_integral(x, eta)
    with mpmath.workdps(40):
        e = mpmath.mpf(eta)
        half = fd_mp(0.5, e)
        ref = [float((fd_mp(1.5, e + mpmath.mpf(v)) - fd_mp(1.5, e) - mpmath.mpf(v) * half) / half)
               for v in x]
        dref = [float((fd_mp(0.5, e + mpmath.mpf(v)) - half) / half) for v in x]
        cref = float(fd_mp(-0.5, e) / half)
    assert np.max(np.abs(g / ref - 1.0)) < tolerance
    assert np.max(np.abs(dg / dref - 1.0)) < 1e-13
    assert np.max(np.abs(c / cref - 1.0)) < 1e-14


def test_fast_forms_against_the_quadrature():
    """The quadrature path (fermi_integral_quadrature, the table's source) and the fast path agree
    over the law's working range; and orders without a table fall back to the quadrature."""
    eta = np.linspace(-38.0, 38.0, 777)
    for order in fd.TABLE_ORDERS:
        assert np.allclose(fd.fermi_integral(order, eta), fd.fermi_integral_quadrature(order, eta),
                           rtol=5e-13, atol=0)
    assert np.array_equal(fd.fermi_integral(2.5, eta), fd.fermi_integral_quadrature(2.5, eta))


def test_boltzmann_branch_of_the_charge_integral():
    """eta None: e^x - 1 - x and e^x - 1 (Boltzmann carriers, Sze & Ng ch. 3), checked by mpmath."""
    x = np.array([-20.0, -0.4, -1e-7, 0.0, 1e-7, 0.3, 3.0, 30.0])
    g, dg, c = fd.charge_integral(x)
    with mpmath.workdps(30):
        ref = [float(mpmath.exp(mpmath.mpf(v)) - 1 - mpmath.mpf(v)) for v in x]
    assert np.allclose(g, ref, rtol=1e-15, atol=0) and np.array_equal(dg, np.expm1(x))
    assert np.array_equal(c, np.ones_like(x))
