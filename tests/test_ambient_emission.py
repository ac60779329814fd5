"""The radiative floor's front emission into the stack's ambient (``[optics] ambient_index``).

Source: the generalized Planck law (P. Wuerfel, J. Phys. C 15 (1982) 3967): emission into a medium
of index n is n^2 times the emission into vacuum, here integrated with scipy's quad.
"""
import numpy as np
import pytest
from scipy import constants as sc

from siltandem.circuit.from_layers import compile_layer_stack, dark_currents_at
from siltandem.materials import load_material
from test_layer_stacks import layer, stack_from
from test_lifetimes import _planck_j0_A_m2


def _ideal_gaas(optics, substrate=False):
    text = optics + (layer("cell emitter", "GaAs", 200, "n:1e17", diffusion_length_um=1e5, srv_cm_s=0)
                     + layer("cell base", "GaAs", 3000, "p:1e16", diffusion_length_um=1e5, srv_cm_s=0))
    return text + (layer("substrate", "GaAs", 300000, "p:1e18") if substrate else "")


@pytest.mark.parametrize("ambient", [1.0, 1.5, 2.0])
def test_front_emission_into_the_ambient_is_n_squared(tmp_path, ambient):
    # an ideal cell on a perfect mirror emits through its front only: J0 = n_amb^2 J0,rad(air)
    # (generalized Planck law, quad); encapsulant n = 1.5 emits 2.25 times air's
    stack = stack_from(tmp_path, _ideal_gaas(f"[optics]\nback_reflectance = 1.0\nambient_index = {ambient}\n"))
    circuit = compile_layer_stack(stack)
    gap = float(load_material("GaAs").gap_eV(300.0))
    j01 = float(circuit.element("cell").j01_fixed_A_m2.reshape(-1)[0])
    assert j01 == pytest.approx(ambient**2 * _planck_j0_A_m2(gap, 300.0, 0.0), rel=1e-6)
    # the hourly dark currents (yield year) keep the same factor at another temperature
    j01_hot, _, gap_hot, _ = dark_currents_at(circuit.model, circuit, np.array([330.0]))["cell"]
    assert float(j01_hot[0]) == pytest.approx(ambient**2 * _planck_j0_A_m2(float(gap_hot[0]), 330.0, 0.0),
                                              rel=1e-6)


def test_front_and_rear_emission_add_under_an_encapsulant(tmp_path):
    # on an absorbing GaAs substrate under n = 1.5: J0 = (1.5^2 + n_GaAs^2) J0,rad(air), the index at
    # the emission peak Eg + kT
    stack = stack_from(tmp_path, _ideal_gaas("[optics]\nambient_index = 1.5\n", substrate=True))
    circuit = compile_layer_stack(stack)
    gaas = load_material("GaAs")
    gap = float(gaas.gap_eV(300.0))
    n = float(gaas.refractive_index(sc.h * sc.c / sc.e * 1e9 / (gap + sc.k / sc.e * 300.0)))
    # _planck_j0_A_m2 takes (1 + index_squared): 1 + (1.5^2 - 1 + n^2)
    expected = _planck_j0_A_m2(gap, 300.0, 1.5**2 - 1.0 + n * n)
    assert float(circuit.element("cell").j01_fixed_A_m2.reshape(-1)[0]) == pytest.approx(expected, rel=1e-6)
    details = circuit.optics["layer_details"]["subcells"]["cell"]
    assert details["radiative_front_factor"] == pytest.approx(2.25, rel=1e-12)
