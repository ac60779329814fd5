"""Tunnelling effective masses of a library material, from the data it already carries.

Holes: the light-hole mass along [001], 1/(gamma1 + 2 gamma2) from the Luttinger parameters where
the data file gives them (I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan, J. Appl. Phys. 89 (2001)
5815), else its ``light_mass`` (silicon: S. M. Sze's property table, from memory): the band that
dominates tunnelling through a barrier, as for the Esaki peak current (circuit/from_layers.py).
Electrons: the density-of-states mass of one valley of the lowest conduction band,
(m_l m_t^2)^(1/3) for an ellipsoidal valley (m_e for Gamma), from the same data files; common
practice for an orientation-averaged tunnelling mass (no source).
"""
from __future__ import annotations

__all__ = ["tunnelling_mass_ratio"]

_VALLEY_COUNTS = {"Gamma": 1, "X": 6, "L": 4}     # equivalent valleys (L: 8 half-valleys)


def tunnelling_mass_ratio(material, carrier):
    """Tunnelling effective mass m*/m0 of ``carrier`` ("electron" or "hole") in ``material``
    (a `siltandem.materials.Material`)."""
    if carrier == "hole":
        return float(material.light_hole_mass_ratio)
    valleys = _VALLEY_COUNTS.get(material.lowest_valley_300K, 1)
    return float(material.electron_dos_mass_ratio / valleys ** (2.0 / 3.0))
