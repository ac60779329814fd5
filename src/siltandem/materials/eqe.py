"""Measured external quantum efficiency tables (CSV: wavelength_nm, eqe as 0..1), read and
checked."""
from pathlib import Path

import numpy as np

from siltandem.errors import StackError
from siltandem.text import excerpt


def read_eqe_csv(path, *, where=None):
    """Read a measured external quantum efficiency: columns ``wavelength_nm`` and ``eqe`` (0..1).

    Returns (wavelength_nm, eqe) as float arrays; StackError for anything it cannot use.
    """
    import pandas as pd

    path = Path(path)
    fix = ("give a CSV with a header line 'wavelength_nm,eqe' and one row per wavelength (nm, "
           "increasing) with the external quantum efficiency as a fraction 0..1")
    if not path.is_file():
        raise StackError("quantum-efficiency file not found", file=path, where=where, fix=fix)
    try:
        frame = pd.read_csv(path, comment="#")
    except Exception as exc:  # pandas raises several types for unreadable files
        raise StackError(f"cannot read it as CSV ({exc.__class__.__name__}: "
                         f"{excerpt(str(exc), 120)})", file=path, where=where, fix=fix) from None
    frame.columns = [str(c).strip() for c in frame.columns]
    if "wavelength_nm" not in frame.columns or "eqe" not in frame.columns:
        shown = ", ".join(excerpt(c, 30) for c in frame.columns[:6]) + (
            f" and {len(frame.columns) - 6} more" if len(frame.columns) > 6 else "")
        raise StackError(f"columns [{shown}]: need 'wavelength_nm' and 'eqe'",
                         file=path, where="header", fix=fix)
    lam = pd.to_numeric(frame["wavelength_nm"], errors="coerce").to_numpy(dtype=float)
    eqe = pd.to_numeric(frame["eqe"], errors="coerce").to_numpy(dtype=float)
    if lam.size < 2 or not (np.isfinite(lam).all() and np.isfinite(eqe).all()):
        raise StackError("fewer than two rows, or values that are not numbers", file=path,
                         where=where, fix=fix)
    if np.any(np.diff(lam) <= 0) or lam[0] <= 0:
        raise StackError("wavelengths are not positive and increasing", file=path, where=where,
                         fix="sort the rows by wavelength and remove repeated wavelengths")
    from siltandem.materials.spectra import MICROMETRE_HINT_NM

    if lam[-1] < MICROMETRE_HINT_NM:
        raise StackError(f"the wavelengths run from {lam[0]:g} to {lam[-1]:g}: below "
                         f"{MICROMETRE_HINT_NM:g} they look like micrometres, not nm", file=path,
                         where=where, fix="give wavelengths in nm (multiply micrometres by 1000)")
    if np.any(eqe < 0) or np.any(eqe > 1):
        hint = " (it looks like percent: divide by 100)" if eqe.max() > 1.5 else ""
        raise StackError(f"eqe values outside [0, 1]{hint}", file=path, where=where,
                         fix="give the quantum efficiency as a fraction 0..1")
    return lam, eqe
