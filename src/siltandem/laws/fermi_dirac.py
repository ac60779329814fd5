"""Fermi-Dirac integrals F_j(eta) and the first integral of Poisson's equation of a Fermi-Dirac
side, fast (pure, vectorized numpy; reduced units: eta and x in kT).

F_j(eta) = 1/Gamma(j + 1) int_0^inf e^j / (1 + exp(e - eta)) de, the normalisation with
dF_j/deta = F_(j-1) and F_j -> exp(eta) for eta -> -inf [1].

Two ways to evaluate it:

* :func:`fermi_integral_quadrature`: a fixed Gauss-Legendre rule on panels about the Fermi level
  (relative error ~1e-13, tested against mpmath's polylogarithm); slow (hundreds of integrand
  values per point). It builds the tables below and stays as the reference.
* :func:`fermi_integral`: for the orders the isotype law needs (j = -1/2, 1/2, 3/2), three
  branches:

  - eta < -40: the series F_j = e^eta - e^(2 eta) / 2^(j+1) [1] (the next term is below
    e^-80, far under double precision relative to e^eta);
  - -40 <= eta <= 40: piecewise Chebyshev interpolants of degree 15 on 80 unit intervals, built
    once per process from the quadrature at the Chebyshev points (1280 points per order, ~0.1 s).
    F_j is analytic in the strip |Im eta| < pi (its nearest singularities are those of the
    logistic occupancy at eta = +-i pi), so on an interval of half-width 1/2 the interpolant
    converges like rho^-n with rho = 2 pi + sqrt(4 pi^2 + 1) ~ 12.6 [2]: degree 15 leaves < 1e-16
    of the interval's largest value (at most e times the smallest), so the quadrature's own
    ~1e-13 sets the error;
  - eta > 40: the Sommerfeld expansion F_j = eta^(j+1)/Gamma(j+2) [1 + sum_k 2 (1 - 2^(1-2k))
    zeta(2k) (j+1) j ... (j+2-2k) eta^-2k] (8 terms) [1]; the neglected terms, and the
    exponentially small cos(pi j) F_j(-eta), are below 1e-16 relative at eta = 40.

  Tested against mpmath's polylogarithm, F_j = -Li_(j+1)(-e^eta), over eta -60...200: relative
  error below 2e-14 (tests/test_fermi_dirac.py). Other orders fall back to the quadrature.

:func:`charge_integral` gives g(x; eta) = [F_3/2(eta + x) - F_3/2(eta) - x F_1/2(eta)] / F_1/2(eta)
(laws/interface_charge.py) and dg/dx from the fast F_j: by Taylor's remainder in integral form,
F_1/2(eta) g = int_0^x (x - t) F_-1/2(eta + t) dt and F_1/2(eta) dg/dx = int_0^x F_-1/2(eta + t) dt,
which an 8-node Gauss-Legendre rule gives to ~1e-16 for |x| < 1 (no cancellation as x -> 0; the
integrand is analytic in the same strip, so the rule's error falls like 12.6^-16); for |x| >= 1
the differences of F_j directly (no harmful cancellation there).

References
----------
.. [1] J. S. Blakemore, "Approximations for Fermi-Dirac integrals, especially the function F_1/2",
   Solid-State Electron. 25 (1982) 1067 (normalisation, series, asymptotic expansion).
.. [2] L. N. Trefethen, Approximation Theory and Approximation Practice, SIAM (2013), ch. 8
   (Chebyshev interpolants of analytic functions converge geometrically, rate from the Bernstein
   ellipse); ch. 19 for Gauss quadrature.
"""
from __future__ import annotations

import functools

import numpy as np
from scipy.special import expit, gamma, zeta

from siltandem.numerics.series import EXP_TAIL, horner

__all__ = ["fermi_integral", "fermi_integral_quadrature", "charge_integral", "TABLE_ORDERS", "kernel_tables"]

#: the orders with fast tables
TABLE_ORDERS = (-0.5, 0.5, 1.5)
_LOW, _HIGH = -40.0, 40.0                 # table range [kT]
_WIDTH = 1.0                              # interval width [kT]
_NODES_PER = 16                           # Chebyshev points per interval (degree 15)
_SOMMERFELD_TERMS = 8
_TOP = 60.0                               # [kT] states this far above max(eta, 0) hold < e^-60
_OFFSETS = np.array([-40.0, -20.0, -10.0, -5.0, -2.0, 0.0, 2.0, 5.0, 10.0, 20.0, 40.0])
_GL_NODES, _GL_WEIGHTS = np.polynomial.legendre.leggauss(32)
_SMALL_NODES, _SMALL_WEIGHTS = np.polynomial.legendre.leggauss(8)


def quad_rows(rows, knees):
    """int_0^inf of the (k, m, n) integrand ``rows(t)`` dt (t of shape (m, n): m nodes for each of
    n points), by a fixed 32-node Gauss-Legendre rule on panels whose ends, in e = t^2, lie
    0, 2, 5, 10, 20, 40 kT either side of each knee (the Fermi levels ``knees``, a list of (n,)
    arrays), from 0 to 60 kT above the highest (beyond it the carriers hold < e^-60 of the
    charge). The integrands are smooth in t; relative error ~1e-13 (tested against mpmath)."""
    top = np.maximum(np.max(knees, axis=0), 0.0) + _TOP
    ends = [np.zeros_like(top), top]
    ends += [np.clip(k + o, 0.0, top) for k in knees for o in _OFFSETS]
    t_ends = np.sqrt(np.sort(np.stack(ends), axis=0))               # (panels + 1, n)
    a, b = t_ends[:-1], t_ends[1:]
    half, mid = 0.5 * (b - a), 0.5 * (b + a)
    t = mid[:, None, :] + half[:, None, :] * _GL_NODES[None, :, None]   # (panels, nodes, n)
    t = t.reshape(-1, top.size)
    w = (half[:, None, :] * _GL_WEIGHTS[None, :, None]).reshape(-1, top.size)
    return np.sum(rows(t) * w[None], axis=1)


def fermi_integral_quadrature(order, eta):
    """F_j(eta) [-] for j = ``order`` > -1 by quadrature (e = t^2 removes the e^j singularity):
    ~1e-13 relative, slow; the reference the tables are built from."""
    eta = np.atleast_1d(np.asarray(eta, dtype=float))
    power = 2.0 * order + 1.0

    def rows(t):
        return (t ** power * expit(eta - t * t))[None]

    return (2.0 / gamma(order + 1.0)) * quad_rows(rows, [eta.ravel()])[0].reshape(eta.shape)


@functools.cache
def _table(order):
    """Chebyshev coefficients (intervals, degree + 1) of F_order on the unit intervals of
    [_LOW, _HIGH], from the quadrature at each interval's Chebyshev points of the first kind."""
    n = _NODES_PER
    theta = np.pi * (np.arange(n) + 0.5) / n
    nodes = np.cos(theta)                                               # on [-1, 1]
    lefts = np.arange(_LOW, _HIGH, _WIDTH)
    eta = lefts[:, None] + 0.5 * _WIDTH * (nodes[None, :] + 1.0)
    values = fermi_integral_quadrature(order, eta.ravel()).reshape(eta.shape)
    basis = np.cos(np.outer(np.arange(n), theta))                       # T_m(node_k)
    coefficients = (2.0 / n) * values @ basis.T
    coefficients[:, 0] *= 0.5
    return coefficients


@functools.cache
def _sommerfeld(order):
    """Coefficients a_k of F_j = eta^(j+1)/Gamma(j+2) [1 + sum_k a_k eta^-2k] (Blakemore 1982)."""
    out = []
    falling = 1.0
    for k in range(1, _SOMMERFELD_TERMS + 1):
        falling *= (order + 1.0 - (2 * k - 2)) * (order + 1.0 - (2 * k - 1))
        out.append(2.0 * (1.0 - 2.0 ** (1 - 2 * k)) * zeta(2 * k) * falling)
    return np.array(out)


@functools.cache
def _stacked():
    """The tables of all TABLE_ORDERS stacked (orders, intervals, degree + 1), transposed to
    (orders, degree + 1, intervals) for gathers; the Sommerfeld coefficients (orders, terms)."""
    tables = np.stack([_table(order) for order in TABLE_ORDERS])
    return (np.ascontiguousarray(tables.transpose(0, 2, 1)),
            np.stack([_sommerfeld(order) for order in TABLE_ORDERS]))


def kernel_tables():
    """What a compiled scalar F_j needs (laws/compiled_fermi.py), for the TABLE_ORDERS in order:
    the Chebyshev coefficients (orders, degree + 1, intervals) on unit intervals from
    :data:`_LOW`, the Sommerfeld coefficients (orders, terms), Gamma(j + 2) (orders,), the
    table's range (low, high) [kT] and the 8-node Gauss-Legendre rule of :func:`charge_integral`."""
    tables, sommerfeld = _stacked()
    return (tables, sommerfeld, np.array([gamma(j + 2.0) for j in TABLE_ORDERS]), _LOW, _HIGH,
            _SMALL_NODES, _SMALL_WEIGHTS)


def _fermi_indexed(which, eta):
    """F_j(eta) on flat arrays, j = TABLE_ORDERS[which] per entry (one pass for several orders)."""
    order = np.asarray(TABLE_ORDERS)[which]
    out = np.full(eta.shape, np.nan)
    low = eta < _LOW
    high = eta > _HIGH
    mid = ~(low | high) & ~np.isnan(eta)
    tables, sommerfeld = _stacked()
    if low.any():
        e = np.exp(eta[low])
        out[low] = e - e * e / 2.0 ** (order[low] + 1.0)
    if high.any():
        h, j, rows = eta[high], order[high], sommerfeld[which[high]]
        inv2 = 1.0 / (h * h)
        series = np.zeros_like(h)
        for k in range(rows.shape[1] - 1, -1, -1):
            series = (series + rows[:, k]) * inv2
        with np.errstate(over="ignore"):
            out[high] = h ** (j + 1.0) / gamma(j + 2.0) * (1.0 + series)
    if mid.all():
        m, w = eta, which
    else:
        m, w = eta[mid], which[mid]
    index = np.minimum(((m - _LOW) * (1.0 / _WIDTH)).astype(np.intp), int((_HIGH - _LOW) / _WIDTH) - 1)
    u = 2.0 * (m - (_LOW + index * _WIDTH)) / _WIDTH - 1.0
    flat = tables.reshape(len(TABLE_ORDERS) * _NODES_PER, -1)
    row = w * _NODES_PER
    # Clenshaw: sum_m c_m T_m(u), the coefficients gathered per entry
    b1 = np.zeros_like(u)
    b2 = np.zeros_like(u)
    two_u = 2.0 * u
    for k in range(_NODES_PER - 1, 0, -1):
        b1, b2 = two_u * b1 - b2 + flat[row + k, index], b1
    value = u * b1 - b2 + flat[row, index]
    if mid.all():
        return value
    out[mid] = value
    return out


def fermi_integral(order, eta):
    """F_j(eta) [-] (normalised, Blakemore 1982) for j = ``order``; fast for j in
    :data:`TABLE_ORDERS` (series / Chebyshev table / Sommerfeld, ~1e-14 relative, see the module
    notes), else by quadrature. NaN stays NaN; shape of ``eta`` (at least 1-D)."""
    eta = np.atleast_1d(np.asarray(eta, dtype=float))
    if order not in TABLE_ORDERS:
        return fermi_integral_quadrature(order, eta)
    which = np.full(eta.size, TABLE_ORDERS.index(order))
    return _fermi_indexed(which, eta.ravel()).reshape(eta.shape)


def charge_integral(x, eta=None):
    """g(x; eta) and dg/dx: the first integral of Poisson's equation of one side [-]
    (laws/interface_charge.py), x the reduced bending toward accumulation, eta the side's reduced
    Fermi level above its band edge in the bulk (> -700, so that F_1/2(eta) is a normal number);
    ``eta=None`` Boltzmann (``e^x - 1 - x``, ``e^x - 1``). Returns (g, dg/dx, c) with
    c = g''(0) = F_-1/2(eta) / F_1/2(eta) (1 for Boltzmann). Flat arrays of the broadcast size."""
    x = np.atleast_1d(np.asarray(x, dtype=float))
    if eta is None:
        with np.errstate(over="ignore"):
            g = np.expm1(x) - x
            small = np.abs(x) < 0.5
            g[small] = x[small] ** 2 * horner(EXP_TAIL, x[small])
            return g, np.expm1(x), np.ones_like(x)
    x, eta = np.broadcast_arrays(x, np.asarray(eta, dtype=float))
    x, eta = x.ravel(), eta.ravel()
    levels, index = np.unique(eta, return_inverse=True)    # one per interface side in the solver
    index = index.ravel()
    small = np.abs(x) < 1.0
    xs, es = x[small], eta[small]
    t = 0.5 * xs[:, None] * (1.0 + _SMALL_NODES[None, :])               # nodes on [0, x]
    xb, eb = x[~small], eta[~small]
    # every F_j this call needs, in one pass: F_1/2, F_-1/2, F_3/2 at the levels; F_-1/2 at the
    # small-x nodes; F_3/2 and F_1/2 at eta + x for the others
    parts = [(1, levels), (0, levels), (2, levels), (0, (es[:, None] + t).ravel()), (2, eb + xb), (1, eb + xb)]
    values = _fermi_indexed(np.concatenate([np.full(p.size, k) for k, p in parts]),
                            np.concatenate([p for _, p in parts]))
    ends = np.cumsum([0] + [p.size for _, p in parts])
    half_l, minus_l, three_l, f, three_x, half_x = (values[ends[i]:ends[i + 1]] for i in range(6))
    half = half_l[index]
    c = minus_l[index] / half
    g = np.empty_like(x)
    dg = np.empty_like(x)
    f = f.reshape(t.shape)
    w = 0.5 * xs[:, None] * _SMALL_WEIGHTS[None, :]
    g[small] = np.sum(w * (xs[:, None] - t) * f, axis=1)
    dg[small] = np.sum(w * f, axis=1)
    big_index = index[~small]
    with np.errstate(over="ignore", invalid="ignore"):
        g[~small] = three_x - three_l[big_index] - xb * half_l[big_index]
        dg[~small] = half_x - half_l[big_index]
    with np.errstate(over="ignore", invalid="ignore"):
        return g / half, dg / half, c
