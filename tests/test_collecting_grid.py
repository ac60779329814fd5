"""A study lights only the collecting part of the wavelength grid (optics/layers.py:
collecting_stop, light_designs).

Sources beside each check:
- a subcell makes no electron-hole pairs where neither its emitter nor its base absorbs band to
  band (free-carrier absorption heats, it makes no pairs: M. A. Green, Solar Cells (1982), ch. 3,
  from memory): the whole grid's pass collects exactly zero beyond the stop (checked on the pass
  itself, not assumed);
- the photocurrent is the trapezoid integral of the collected current (numpy.trapezoid): over
  the part up to the stop it equals the whole grid's integral to rounding;
- a design's numbers do not depend on its batch (issue 19): the photocurrents of the sliced
  stacked pass equal `illuminate` on each design alone bit for bit.
The stacks are the invented demos (stacks/demo_*_layers.toml, INVENTED DATA): no check value
comes from them.
"""
from pathlib import Path

import numpy as np
import pytest

from siltandem import load_stack
from siltandem.circuit.compile import compile_stack
from siltandem.optics.illuminate import illuminate
from siltandem.optics.layers import collecting_stop, layer_light, light_designs, stacked_model
from siltandem.studies.sweep import layer_design, study_light

STACKS = Path(__file__).resolve().parents[1] / "stacks"


@pytest.mark.parametrize("name", ["demo_triple_layers.toml", "demo_dual_layers.toml"])
def test_nothing_is_collected_beyond_the_stop_and_the_integral_is_the_whole_grids(name):
    stack = load_stack(STACKS / name)
    light = study_light(stack)
    model = compile_stack(stack).model
    wavelength, flux = light.wavelength_nm, light.photon_flux
    stop = collecting_stop(model, wavelength)
    # the silicon absorbs up to about 1.2-1.45 um (Green 2008's table ends at 1450 nm): the grid
    # (ASTM G173, to 4000 nm) has a non-collecting tail
    assert 1 < stop < wavelength.size
    whole = layer_light(stacked_model([model]), wavelength, flux)
    for result in whole.collected:
        total = (result.emitter_A_m2 + result.depletion_A_m2 + result.base_A_m2)[0]
        assert np.all(total[stop - 1:] == 0.0)
        assert np.any(total[:stop - 1] > 0)
        assert np.trapezoid(total[:stop], wavelength[:stop]) == pytest.approx(
            np.trapezoid(total, wavelength), rel=1e-13, abs=0)


def test_sliced_stacked_pass_equals_each_design_alone_bit_for_bit():
    stack = load_stack(STACKS / "demo_triple_layers.toml")
    light = study_light(stack)
    designs = [compile_stack(layer_design(stack, {"top base.thickness_nm": x, "middle base.thickness_nm": y}))
               for x, y in ((400.0, 1200.0), (400.0, 3500.0), (1300.0, 2000.0))]
    currents = light_designs([c.model for c in designs], light.wavelength_nm, light.photon_flux, {})
    for circuit, found in zip(designs, currents):
        alone = illuminate(circuit, light)
        assert found == [float(alone.element(c.name).photocurrent_A_m2.reshape(-1)[0])
                         for c in circuit.model.subcells]
