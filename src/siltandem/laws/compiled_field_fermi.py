"""The accumulation side of the compiled thermionic-field law with Fermi-Dirac charge (numba): the
compiled form of laws/field_emission_fermi.py.

That law is laws/field_emission.py's (exact Boltzmann depletion side, tunnelling gain G(w),
Boltzmann supply J = P e^v1 expm1(v) G(w)) with one change: the field bending w and its slope
A = dw/dv1 come from the Fermi-Dirac first integral of Poisson's equation on the accumulation
side,

    w(x) = alpha g1(x; eta1),   A(x) = alpha dg1/dx,
    g1(x; eta) = [F_3/2(eta + x) - F_3/2(eta) - x F_1/2(eta)] / F_1/2(eta)

(S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley 2007, ch. 1-2; F_j in
J. S. Blakemore's normalisation, Solid-State Electron. 25 (1982) 1067), in place of the Boltzmann
alpha (e^x - 1 - x). Everything else of laws/compiled_isotype.py holds as it is, because that
module writes the law explicitly in x = v1 (the depletion side's y from w, vb = x + y, the
current, the inverse's rtsafe on x, the slope range's corners, which need only that w and A rise
with x: dg1/dx = [F_1/2(eta + x) - F_1/2(eta)] / F_1/2(eta) rises with x). So this module gives
laws/compiled_isotype.py the pair (w, A) of a Fermi-Dirac row (:func:`fermi_field_terms`,
through the charge integral of laws/compiled_fermi.py ``side_charge_integral``) and the row's
extra columns (:func:`fill_fermi_field_columns`); a row is marked by :data:`FLAG`.

At flat band (x = 0) the depletion side's y = sqrt(alpha c1) x to first order, with
c1 = g1''(0) = F_-1/2(eta1) / F_1/2(eta1) (1 for Boltzmann): column :data:`FLAT_ROOT_SQUARED`
holds alpha c1, where the Boltzmann law has alpha.

tests/test_compiled_field_fermi.py checks the compiled law against laws/field_emission_fermi.py
and against the slow Poisson/WKB reference of tests/test_field_emission_fermi.py.
"""
from pathlib import Path

import numpy as np

from siltandem.numerics import jit as numba
from siltandem.numerics.kernel_cache import drop_stale_kernels

# before any kernel of this module is loaded from numba's cache (numerics/kernel_cache.py)
drop_stale_kernels(Path(__file__).resolve().parents[1], once=True)

from siltandem.laws import compiled_fermi  # noqa: E402
from siltandem.laws.compiled_fermi import fermi_scalar, side_charge_integral  # noqa: E402

__all__ = ["FLAG", "ETA", "HALF", "THREE", "FLAT_ROOT_SQUARED", "COLUMNS", "fermi_field_terms",
           "fill_fermi_field_columns"]

#: columns of a thermionic-field isotype row (laws/compiled_isotype.py, after its 12): 1 where the
#: accumulation side's charge is Fermi-Dirac (0: Boltzmann, the row's other columns unchanged), its
#: reduced bulk Fermi level eta1 above the band edge, F_1/2(eta1), F_3/2(eta1), and alpha c1
FLAG, ETA, HALF, THREE, FLAT_ROOT_SQUARED = 12, 13, 14, 15, 16
#: the width a row needs for these columns
COLUMNS = 17


@numba.njit(cache=True, error_model="numpy")
def fermi_field_terms(x, p):
    """(w, A) = (alpha g1(x; eta1), alpha dg1/dx) of row p at the reduced accumulation-side bending
    x (module docstring), from laws/compiled_fermi.py's charge integral."""
    g, dg = side_charge_integral(x, p[ETA], p[HALF], p[THREE])
    return p[1] * g, p[1] * dg


def fill_fermi_field_columns(rows, eta):
    """Write the Fermi-Dirac columns into isotype rows (R, >= COLUMNS) in place, before their
    zero-bias columns are computed: ``eta`` (R,) the accumulation side's reduced bulk Fermi level
    above its majority band edge (E_F - E_c over kT for electrons; > 0 degenerate). Like
    laws/compiled_fermi.py's rows, building them switches an interpreted process to numba first
    (the charge integral interpreted would overrun the interpreted kernels' budget)."""
    if rows.shape[1] < COLUMNS:
        raise ValueError(f"isotype rows need {COLUMNS} columns for a Fermi-Dirac accumulation side, "
                         f"got {rows.shape[1]}")
    compiled_fermi._load_tables()
    if numba.mode() == "interpreted":
        numba.compile_all()
    eta = np.broadcast_to(np.asarray(eta, dtype=float), rows.shape[:1])
    if not np.all(np.isfinite(eta) & (eta > -700.0)):
        raise ValueError("the accumulation side's Fermi level must be finite and above -700 kT "
                         "(F_1/2 a normal number); give it in eV above the band edge")
    rows[:, FLAG] = 1.0
    rows[:, ETA] = eta
    rows[:, HALF] = [fermi_scalar(1, e) for e in eta]
    rows[:, THREE] = [fermi_scalar(2, e) for e in eta]
    rows[:, FLAT_ROOT_SQUARED] = rows[:, 1] * np.array([fermi_scalar(0, e) for e in eta]) / rows[:, HALF]
    return rows
