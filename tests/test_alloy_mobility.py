"""Doping-dependent mobilities of alloys (materials/recombination.py).

Sources: D. M. Caughey, R. E. Thomas, Proc. IEEE 55 (1967) 2192 (the law's form: the mean of
mu_max and mu_min at N = N_ref, written again here); the interpolation's endpoints are its end
members' own laws (M. Sotoodeh, A. H. Khalid, A. A. Rezazadeh, J. Appl. Phys. 87 (2000) 2890 give
the binaries, from memory, in the library's files).
"""
from importlib import resources

import pytest

from siltandem.materials import load_material
from siltandem.materials.recombination import material_document, minority_mobility_cm2_V_s

#: INVENTED parameters (not a check value: the checks are the law's form and its range)
BLOCK = """
[mobility.electron_doping]
mu_max_cm2_V_s = 3000
mu_min_cm2_V_s = 300
n_ref_cm3 = 2e17
lambda = 0.7
composition_range = [0.48, 0.54]
source = "invented for a test"
"""


def _copy(tmp_path, library_file, name, replace=None, extra=""):
    text = resources.files("siltandem").joinpath(f"materials/{library_file}").read_text()
    text = text.replace(f'name = "{text.split(chr(34))[1]}"', f'name = "{name}"', 1)
    for old, new in (replace or {}).items():
        assert old in text
        text = text.replace(old, new)
    path = tmp_path / f"{name.lower()}.toml"
    path.write_text(text.replace('aliases = ["InGaP", "gallium indium phosphide", "indium gallium phosphide"]',
                                 "aliases = []") + extra)
    return str(path)


def _mobility(path, x, doping, carrier="electron"):
    material = load_material(path, x)
    return minority_mobility_cm2_V_s(material, material_document(path, material), doping, carrier)


def test_an_alloy_files_own_law_holds_in_its_range(tmp_path):
    path = _copy(tmp_path, "gainp.toml", "MyGaInP", extra=BLOCK)
    # at N_ref: (mu_max + mu_min) / 2 (Caughey-Thomas 1967); far below: mu_max
    assert _mobility(path, 0.51, 2e17) == pytest.approx(1650.0, rel=1e-12)
    assert _mobility(path, 0.51, 1e10) == pytest.approx(3000.0, rel=1e-5)
    # outside its composition range (and GaP indirect): no law, the library's fixed value stays
    assert _mobility(path, 0.60, 2e17) is None
    # the hole law is not given: none
    assert _mobility(path, 0.51, 2e17, "hole") is None


def test_the_interpolation_ends_at_its_binaries(tmp_path):
    # an alloy of two direct end members (GaAs and InAs, both Gamma): at x = 1 and x = 0 the
    # interpolated law is the end member's own, at every doping
    path = _copy(tmp_path, "gainp.toml", "MyInGaAs",
                 replace={'end_at_x1 = "GaP"': 'end_at_x1 = "GaAs"', 'end_at_x0 = "InP"': 'end_at_x0 = "InAs"'})
    for doping in (1e15, 1e17, 1e19):
        for x, end in ((1.0, "GaAs"), (0.0, "InAs")):
            own = minority_mobility_cm2_V_s(load_material(end), material_document(end), doping, "electron")
            assert _mobility(path, x, doping) == pytest.approx(own, rel=1e-12), (x, doping)
    # between them: between the two (1/mu linear in x)
    middle = _mobility(path, 0.5, 1e17)
    ends = [_mobility(path, x, 1e17) for x in (0.0, 1.0)]
    assert min(ends) < middle < max(ends)
