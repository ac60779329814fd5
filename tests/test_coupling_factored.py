"""The layer coupling factored into the emission arriving and the lower subcell's response
(circuit/layer_coupling.py: arriving_emission, lower_response).

Sources beside each check:
- the collection law is linear in the photon fluxes it is given, entry by entry (the minority
  carrier diffusion equation is linear in the generation: H. J. Hovel, Semiconductors and
  Semimetals 11 (1975), ch. 2, from memory; laws/collection.py Notes): the pair's collected current, summed
  from the factored parts, is checked against the collection law given the whole arriving flux
  (the unfactored form, written again here with the public laws) to rounding;
- a design's numbers do not depend on the other designs of its study (issue 19): compiled with
  a study's shared ``reuse`` dict, bit for bit as compiled alone; and each part is built once
  per distinct value of what it reads (counted).
The stack is the invented demo triple (stacks/demo_triple_layers.toml, INVENTED DATA): no check
value comes from it.
"""
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack
from siltandem.circuit.compile import compile_stack
from siltandem.circuit.layer_coupling import ENERGY_POINTS, ENERGY_SPAN_EV, arriving_emission, subcell_coupling
from siltandem.constants import ELEMENTARY_CHARGE_C, HC_EV_NM
from siltandem.laws import collection
from siltandem.studies.sweep import layer_design

TRIPLE = Path(__file__).resolve().parents[1] / "stacks" / "demo_triple_layers.toml"
TOP, MIDDLE = "top base.thickness_nm", "middle base.thickness_nm"


def _couplings(circuit):
    return circuit.optics["layer_details"]["couplings"]


def test_factored_pair_equals_the_collection_law_on_the_whole_arriving_flux():
    stack = load_stack(TRIPLE)
    design = layer_design(stack, {TOP: 700.0, MIDDLE: 2500.0})
    circuit = compile_stack(design)
    model = circuit.model
    upper, lower = model.subcells[0], model.subcells[1]
    element = circuit.element(upper.name)
    # the front pass only (no back mirror): the collection law given the flux at the front
    found = subcell_coupling(model, upper, lower, element, back_reflectance=0.0)
    with_mirror = subcell_coupling(model, upper, lower, element, back_reflectance=0.9)
    gap = float(np.asarray(element.gap_eV).reshape(-1)[0])
    emission, arriving = arriving_emission(model, upper, lower, gap)
    # the lower subcell absorbing and collecting the whole arriving flux at the rays' angle
    energy = np.linspace(gap + ENERGY_SPAN_EV[0], gap + ENERGY_SPAN_EV[1], ENERGY_POINTS)
    wavelength = HC_EV_NM / energy
    emitter, base = model.layers[lower.emitter], model.layers[lower.base]
    band = np.asarray(model.materials[lower.emitter].absorption_per_m(wavelength, temperature_K=model.temperature_K))
    carriers = ({"electron_density_m3": base.doping_cm3 * 1e6} if base.polarity == "n"
                else {"hole_density_m3": base.doping_cm3 * 1e6})
    free = np.asarray(model.materials[lower.base].free_carrier_absorption_per_m(wavelength, **carriers))
    mu = emission.cosine_in(model.materials[lower.emitter].refractive_index(wavelength))
    assert emitter.material == base.material
    attenuation = (band + free)[:, None] / mu
    keep = band[:, None] / mu / attenuation
    result = collection.collected_photocurrent(
        attenuation, photon_flux_m2_s=keep * arriving, emitter_thickness_m=lower.emitter_thickness_m,
        emitter_diffusion_length_m=lower.emitter_length_m, emitter_diffusivity_m2_s=lower.emitter_diffusivity_m2_s,
        front_srv_m_s=lower.front_srv_m_s, depletion_width_m=lower.depletion_width_m,
        base_thickness_m=lower.base_thickness_m, base_diffusion_length_m=lower.base_length_m,
        base_diffusivity_m2_s=lower.base_diffusivity_m2_s, back_srv_m_s=lower.back_srv_m_s)
    front_only = float(np.sum(result.emitter_A_m2 + result.depletion_A_m2 + result.base_A_m2)) / ELEMENTARY_CHARGE_C
    assert found.collected_A_m2 == pytest.approx(front_only, rel=1e-12, abs=0)
    assert found.coupling == pytest.approx(front_only / found.reference_A_m2, rel=1e-12, abs=0)
    # a mirror only adds light (photon conservation, no source needed)
    assert with_mirror.collected_A_m2 >= found.collected_A_m2
    assert found.crossing_A_m2 == pytest.approx(float(np.sum(arriving)), rel=1e-14, abs=0)


def test_a_study_reuse_gives_each_design_its_value_alone_and_builds_each_part_once_per_value():
    stack = load_stack(TRIPLE)
    tops, middles = (400.0, 800.0, 1200.0), (1500.0, 3000.0)
    reuse = {}
    for x in tops:
        for y in middles:
            design = layer_design(stack, {TOP: x, MIDDLE: y})
            shared = _couplings(compile_stack(design, reuse))
            alone = _couplings(compile_stack(design))
            assert [c.coupling for c in shared] == [c.coupling for c in alone]
            assert [c.collected_A_m2 for c in shared] == [c.collected_A_m2 for c in alone]
            assert [c.emitted_A_m2 for c in shared] == [c.emitted_A_m2 for c in alone]
    emissions = reuse[("remembered", "coupling emission")]
    responses = reuse[("remembered", "coupling response")]
    # top -> middle: the emission reads the top thickness (3 values), the response the middle one
    # (2); middle -> silicon: the emission reads the middle thickness (2), the response nothing varied
    assert len(emissions) == len(tops) + len(middles)
    assert len(responses) == len(middles) + 1


def test_remembered_repr_is_the_objects_own_text():
    # no source needed: the memo must answer repr(value) of the very object asked about
    from dataclasses import dataclass, replace

    from siltandem.numerics.memo import remembered_repr

    @dataclass(frozen=True)
    class Thing:
        thickness_nm: float

    reuse = {}
    first = Thing(1.0)
    assert remembered_repr(reuse, first) == repr(first)
    assert remembered_repr(reuse, first) == repr(first)         # found again
    for value in range(2, 200):                                  # new objects (ids may be reused)
        other = replace(first, thickness_nm=float(value))
        assert remembered_repr(reuse, other) == repr(other)
    assert remembered_repr(None, first) == repr(first)
