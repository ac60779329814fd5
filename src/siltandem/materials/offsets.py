"""Measured valence-band offsets: each library material's valence-band maximum on one common
scale (materials/valence_band.csv), so that the band step between two layers is the difference of
their levels; the electron-affinity rule (circuit/isotype.py) is the fallback where a material is
not on the scale.

References
----------
I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan, J. Appl. Phys. 89 (2001) 5815 (the VBO scale).
"""
import csv
import functools
from importlib import resources
from types import MappingProxyType

from siltandem.materials.library import library_document, load_material


@functools.lru_cache(maxsize=1)
def _valence_band_table():
    """material -> (valence-band maximum [eV] on the common scale, source), from valence_band.csv."""
    text = resources.files("siltandem.materials").joinpath("valence_band.csv").read_text(encoding="utf-8")
    rows = csv.DictReader(line for line in text.splitlines() if line and not line.startswith("#"))
    return MappingProxyType({r["material"]: (float(r["valence_band_eV"]), r["source"]) for r in rows})


def valence_band_maximum_eV(material):
    """A material's valence-band maximum on the common scale of valence_band.csv, with its source.

    Parameters
    ----------
    material : Material
        From :func:`load_material`.

    Returns
    -------
    (float, str) or (None, None)
        The level [eV] (binaries from the table; alloys linear in composition between their two end
        binaries, both of which must be in the table) and the source text; (None, None) where the
        table has no value (silicon, or an alloy with an end not in it): the caller then uses the
        electron-affinity rule.

    References
    ----------
    I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan, J. Appl. Phys. 89 (2001) 5815 (the VBO scale).
    """
    table = _valence_band_table()
    document = library_document(material.family)
    if document is None:             # a user's material file: not on the table's scale
        return None, None
    _, file_name, data = document
    if data["kind"] != "alloy":
        return table.get(material.family, (None, None))
    ends = [load_material(data[key]).family for key in ("end_at_x1", "end_at_x0")]
    if not all(e in table for e in ends):
        return None, None
    x = float(material.composition)
    (one, one_source), (zero, zero_source) = table[ends[0]], table[ends[1]]
    level = x * one + (1.0 - x) * zero
    sources = "; ".join(dict.fromkeys(s.split(" (VBO")[0] + (" (from memory)" if "memory" in s else "")
                                      for s in (one_source, zero_source)))
    return level, f"linear between {ends[0]} ({one:+.2f} eV) and {ends[1]} ({zero:+.2f} eV): {sources}"
