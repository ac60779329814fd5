"""Materials and other data: the materials library (``*.toml`` beside this module) and its lookup;
the readers of spectra (materials.spectra), measured EQEs (materials.eqe) and weather files
(materials.weather).

>>> from siltandem.materials import load_material
>>> gainp = load_material("GaInP", composition=0.51)     # or load_material("Ga0.51In0.49P")
>>> round(float(gainp.gap_eV(300.0)), 2)
1.92

See notes/materials.md for the data-file format, the alloy rules and the absorption models.
"""
from siltandem.materials.library import (
    Material,
    MaterialError,
    describe_library,
    list_materials,
)
from siltandem.materials.resolve import load_material, material_identity

__all__ = ["Material", "MaterialError", "describe_library", "list_materials", "load_material",
           "material_identity"]
