"""Luminescent coupling of a layer stack's subcells, from their layers.

For each subcell with another subcell below it, the coupling ``c`` of the element law
(circuit/coupling.py: the lower subcell gains c J0,rad (exp(Vj/Vt) - 1), J0,rad the upper
subcell's one-sided radiative limit, laws/radiative.py) follows from the layers:

    c = (photocurrent the lower subcell collects of the upper one's downward emission) / J0,rad

both per unit of exp(qVj/kT). The emission is the generalized Planck law with the upper
absorber's own absorption (laws/luminescent.py, downward_emission: escape cone of the smallest
index on the way down, attenuation in every layer between); the lower subcell absorbs and
collects what arrives with its own collection law (laws/collection.py) at the rays' angle, plus
one return from the back mirror (specular, or scattered when the stack's back is Lambertian:
then generated uniformly, as the optics stage does). Light going back up out of the lower
subcell is not counted (the layers above are near index-matched: no trapping at flat internal
interfaces). Emission into a medium of index n is about n^2 times the front emission, so c
reaches n^2 (10 to 14 into III-V or Si): c is in units of J0,rad, not a fraction of it.

A layer key ``luminescent_coupling`` on the upper subcell's emitter or base replaces the value
(then exactly the element law with that c).

The upper subcell's radiative floor (J01 >= J0,rad, circuit/from_layers.py) then counts its
emission into the layers below as well: J01 >= J0,rad + (its downward emission), both per unit of
exp(qVj/kT), so the light it sends down never exceeds what it recombines (O. D. Miller,
E. Yablonovitch, S. R. Kurtz, IEEE J. Photovolt. 2 (2012) 303, from memory: a cell on an absorbing
substrate loses about n^2 times its front emission there). Light totally reflected at the escape
cone returns to the subcell (photon recycling) and is not counted as lost.
"""
from dataclasses import dataclass, replace

import numpy as np

from siltandem import units
from siltandem.circuit.elements import Subcell, batch
from siltandem.constants import ELEMENTARY_CHARGE_C, HC_EV_NM
from siltandem.errors import StackError
from siltandem.laws import collection, thinfilm
from siltandem.laws.luminescent import downward_emission
from siltandem.laws.radiative import radiative_saturation_current
from siltandem.numerics.memo import remembered, remembered_repr

#: photon energies of the emission grid, relative to the upper gap [eV], and their number: the
#: emission falls as exp(-E/kT) above the gap (e^-19 at +0.5 eV, 300 K) and with the absorption
#: edge below it
ENERGY_SPAN_EV = (-0.25, 0.5)
ENERGY_POINTS = 500


@dataclass(frozen=True)
class LayerCoupling:
    """The coupling from one subcell to the next below it (currents per unit of exp(qVj/kT))."""

    upper: str
    lower: str
    #: the element law's c [-] (in units of the upper subcell's one-sided J0,rad)
    coupling: float
    #: "layers" (from the physics) or "given" (the layer key)
    source: str
    #: the physics' value, also where the key replaces it [-]
    from_layers: float
    reference_A_m2: float
    emitted_A_m2: float
    crossing_A_m2: float
    absorbed_A_m2: float
    collected_A_m2: float


def _alpha(layer, material, wavelength, temperature_K):
    """(band-to-band, free-carrier) absorption [1/m] of a layer on ``wavelength`` [nm]."""
    band = np.asarray(material.absorption_per_m(wavelength, temperature_K=temperature_K), dtype=float)
    density = layer.doping_cm3 * units.PER_CM3_TO_PER_M3
    carriers = {"electron_density_m3": density} if layer.polarity == "n" else {"hole_density_m3": density}
    free = np.asarray(material.free_carrier_absorption_per_m(wavelength, **carriers), dtype=float)
    return band, free * np.ones_like(band)


def _span(cell):
    return range(min(cell.emitter, cell.base), max(cell.emitter, cell.base) + 1)


def _layer_key(layer):
    """The keys of a layer its optics on a grid is a pure function of (material and doping)."""
    return (layer.material, layer.composition, layer.gap_eV, layer.polarity, layer.doping_cm3)


def subcell_coupling(model, upper, lower, element, *, back_reflectance=0.0, back_haze=0.0, reuse=None):
    """:class:`LayerCoupling` from ``upper`` to ``lower`` (SubcellModel of ``model``, a
    LayerModel); ``element`` the upper Subcell (its gap and absorptance set J0,rad). ``reuse``:
    a study's dict; a layer's optics on the emission grid (set by the gap) is computed once.

    The collection law is linear in the fluxes it is given, entry by entry of the (energy, ray)
    grid (laws/collection.py, Notes), and every flux the lower subcell receives (the front one,
    the mirror's return, the scattered part) is the light arriving from above times a factor of
    the lower subcell and the layers below it. So the pair factors into the emission arriving
    (:func:`arriving_emission`: the upper subcell and the layers between) and the lower
    subcell's collection per unit of it (:func:`lower_response`), each remembered in ``reuse``
    under the inputs it reads; a design's coupling is their product summed over the grid. A map
    varying one thickness in each subcell builds each part once per distinct value, not once per
    design, and a design's value does not depend on the other designs of its study."""
    temperature = float(model.temperature_K)
    gap = float(np.asarray(element.gap_eV).reshape(-1)[0])
    layers = model.layers
    up = list(_span(upper))
    between = list(range(up[-1] + 1, min(lower.emitter, lower.base)))
    # the rays (n sin theta and the cone) are set by the indices of the upper absorber, the layers
    # between and the lower subcell's first layer: the materials, not the thicknesses
    rays = (gap, temperature, _layer_key(layers[up[0]]), tuple(_layer_key(layers[j]) for j in between),
            _layer_key(layers[lower.emitter]))
    emission_key = (rays, remembered_repr(reuse, upper), tuple(remembered_repr(reuse, layers[j]) for j in up + between))
    emission, arriving, emitted = remembered(reuse, "coupling emission", emission_key,
                                             lambda: _slim(*arriving_emission(model, upper, lower, gap, reuse=reuse)))
    response_key = (rays, remembered_repr(reuse, lower), tuple(remembered_repr(reuse, layer)
                                             for layer in layers[min(lower.emitter, lower.base):]),
                    float(back_reflectance), float(back_haze))
    collected_per, absorbed_per = remembered(
        reuse, "coupling response", response_key,
        lambda: lower_response(model, lower, emission, gap, back_reflectance=back_reflectance,
                               back_haze=back_haze, reuse=reuse))
    # the law's currents are q x (flux given); the fluxes given were already currents: divide q out
    q = ELEMENTARY_CHARGE_C
    collected = float(np.sum(arriving * collected_per)) / q
    absorbed = float(np.sum(arriving * absorbed_per)) / q
    absorptance = float(np.asarray(element.absorptance).reshape(-1)[0])
    reference = remembered(reuse, "coupling reference", (gap, temperature, absorptance),
                           lambda: float(radiative_saturation_current(gap, temperature_K=temperature,
                                                                      absorptance=absorptance)))
    value = collected / reference
    return LayerCoupling(upper.name, lower.name, value, "layers", value, reference,
                         emitted, float(np.sum(arriving)), absorbed, collected)


def _slim(emission, arriving):
    """What a study remembers of an emission: its rays (n sin theta: the lower subcell's response
    reads them), the light arriving and the total emitted downward [A/m^2] (memory: a map keeps
    one per distinct upper subcell)."""
    return replace(emission, current_A_m2=None, transmitted=None), arriving, float(np.sum(emission.current_A_m2))


def _emission_grid(gap):
    """The photon energies [eV] and wavelengths [nm] of the emission grid of an upper gap [eV]."""
    energy = np.linspace(gap + ENERGY_SPAN_EV[0], gap + ENERGY_SPAN_EV[1], ENERGY_POINTS)
    return energy, HC_EV_NM / energy


def _layer_optics(model, j, gap, reuse):
    """(band-to-band alpha, free-carrier alpha [1/m], real index) of layer ``j`` on the emission
    grid of ``gap``, remembered in ``reuse`` by the layer's material and doping."""
    energy, wavelength = _emission_grid(gap)
    layer, material = model.layers[j], model.materials[j]
    temperature = float(model.temperature_K)

    def fresh():
        band, free = _alpha(layer, material, wavelength, temperature)
        return band, free, np.asarray(material.refractive_index(wavelength), dtype=float)

    return remembered(reuse, "coupling optics", (_layer_key(layer), gap, temperature), fresh)


def arriving_emission(model, upper, lower, gap, *, reuse=None):
    """The upper subcell's downward emission (laws/luminescent.py, DownwardEmission) and the part
    of it arriving at the lower subcell's front, (E, K) [A/m^2 per unit of exp(qVj/kT)]."""
    layers = model.layers
    energy, _ = _emission_grid(gap)
    up = list(_span(upper))
    between = range(up[-1] + 1, min(lower.emitter, lower.base))

    def optics(j):
        return _layer_optics(model, j, gap, reuse)

    depth = sum(optics(j)[0] * layers[j].thickness_nm * 1e-9 for j in up)
    path = [optics(j) for j in between]
    emission = downward_emission(
        energy, temperature_K=model.temperature_K, upper_index=optics(up[0])[2], upper_optical_depth=depth,
        path_indices=[p[2] for p in path],
        path_optical_depths=[(p[0] + p[1]) * layers[j].thickness_nm * 1e-9 for p, j in zip(path, between)],
        lower_index=optics(lower.emitter)[2])
    return emission, emission.current_A_m2 * emission.transmitted


def lower_response(model, lower, emission, gap, *, back_reflectance=0.0, back_haze=0.0, reuse=None):
    """(collected, absorbed): the lower subcell's currents per unit of the light arriving at its
    front on each entry of the emission's (energy, ray) grid (E, K) [-, times q]: the front pass,
    one return from the back mirror through the layers below (specular, or scattered when the back
    is Lambertian: then generated uniformly, as the optics stage does)."""
    layers = model.layers

    def optics(j):
        return _layer_optics(model, j, gap, reuse)

    low_band, _, low_index = optics(lower.emitter)
    _, base_free, _ = optics(lower.base)
    mu = emission.cosine_in(low_index)
    mu = np.where(mu > 0, mu, 1e-300)
    attenuation = (low_band + base_free)[:, None] / mu
    keep = np.where(attenuation > 0, low_band[:, None] / mu / np.where(attenuation > 0, attenuation, 1.0), 1.0)
    # one return from the back mirror, through the layers below the lower subcell
    lower_width = lower.emitter_thickness_m + lower.depletion_width_m + lower.base_thickness_m
    below = range(max(lower.emitter, lower.base) + 1, len(layers))
    below_optics = [optics(j) for j in below]
    below_thickness = [layers[j].thickness_nm * 1e-9 for j in below]
    below_depth = sum(((b + f) * t for (b, f, _), t in zip(below_optics, below_thickness)),
                      np.zeros_like(low_band))
    below_through = _below_transmission(emission, below_optics, below_thickness)
    at_back = np.exp(-attenuation * lower_width) * below_through
    # specular: back the same way (through the layers below once more) into the base
    returned = (1.0 - back_haze) * back_reflectance * at_back * below_through
    # scattered: Lambertian up through the layers below (2 E3), absorbed in the subcell as 1 - 2 E3
    lower_depth = (low_band + base_free) * lower_width
    scattered = (back_haze * back_reflectance * at_back
                 * thinfilm.lambertian_transmittance(below_depth)[:, None]
                 * (1.0 - thinfilm.lambertian_transmittance(lower_depth))[:, None])
    scattered_keep = np.where(low_band + base_free > 0, low_band / np.maximum(low_band + base_free, 1e-300), 1.0)
    result = collection.collected_photocurrent(
        attenuation, photon_flux_m2_s=keep, emitter_thickness_m=lower.emitter_thickness_m,
        emitter_diffusion_length_m=lower.emitter_length_m,
        emitter_diffusivity_m2_s=lower.emitter_diffusivity_m2_s, front_srv_m_s=lower.front_srv_m_s,
        depletion_width_m=lower.depletion_width_m, base_thickness_m=lower.base_thickness_m,
        base_diffusion_length_m=lower.base_length_m, base_diffusivity_m2_s=lower.base_diffusivity_m2_s,
        back_srv_m_s=lower.back_srv_m_s, back_photon_flux_m2_s=keep * returned,
        uniform_absorbed_m2_s=scattered_keep[:, None] * scattered, where=lower.name)
    collected = result.emitter_A_m2 + result.depletion_A_m2 + result.base_A_m2
    for array in (collected, result.absorbed_A_m2):
        array.flags.writeable = False
    return collected, result.absorbed_A_m2


def _below_transmission(emission, optics, thicknesses):
    """Transmission of the layers below the lower subcell for each ray (0 beyond a layer's cone)."""
    out = np.ones_like(emission.current_A_m2)
    for (band, free, index), thickness in zip(optics, thicknesses):
        mu_j = emission.cosine_in(index)
        out = out * np.where(mu_j > 0, np.exp(-((band + free) * thickness)[:, None] / np.where(mu_j > 0, mu_j, 1.0)),
                             0.0)
    return out


def given_coupling(layers, cell):
    """The ``luminescent_coupling`` layer key on a subcell's emitter or base, or None."""
    values = [layers[j].luminescent_coupling for j in _span(cell) if layers[j].luminescent_coupling is not None]
    return values[0] if values else None


def check_given_coupling(layers, cells, file):
    """The key only on the emitter or base of a subcell that has another subcell below it."""
    allowed = {j for cell in cells[:-1] for j in (cell.emitter, cell.base)}
    for j, layer in enumerate(layers):
        if layer.luminescent_coupling is not None and j not in allowed:
            raise StackError("luminescent_coupling is given on a layer that is not the emitter or base of a "
                             "subcell with another subcell below it, where no coupling applies",
                             file=file, where=layer.label,
                             fix="move luminescent_coupling to the emitter or base of the upper subcell "
                                 "of the pair, or remove it")
        if layer.luminescent_coupling is not None:
            cell = next(c for c in cells if j in (c.emitter, c.base))
            other = cell.base if j == cell.emitter else cell.emitter
            if layers[other].luminescent_coupling is not None:
                raise StackError("luminescent_coupling is given on both the emitter and the base of one "
                                 "subcell", file=file, where=layer.label,
                                 fix=f"keep it on one of them (remove it from {layers[other].label})")


def couple_layers(elements, model, *, file=None, reuse=None, front_factors=None):
    """The elements with every subcell's ``luminescent_coupling`` set from its layers (or the
    layer key), and the list of :class:`LayerCoupling` (sun side first). ``reuse``: a study's
    dict; a pair's parts are remembered under every input they read (:func:`subcell_coupling`: the
    emission arriving, the lower subcell's response, J0,rad). ``front_factors``:
    each subcell's front emission into the ambient over that into air (default 1), for its floor."""
    cells = list(model.subcells)
    check_given_coupling(model.layers, cells, file)
    by_name = {e.name: e for e in elements if isinstance(e, Subcell)}
    back_haze = model.back_haze if model.back_scattering == "lambertian" else 0.0
    couplings, values = [], {}
    for upper, lower in zip(cells, cells[1:]):
        # its parts are remembered (subcell_coupling): the pair itself is their cheap product
        found = subcell_coupling(model, upper, lower, by_name[upper.name], back_reflectance=model.back_reflectance,
                                 back_haze=back_haze, reuse=reuse)
        given = given_coupling(model.layers, upper)
        if given is not None:
            found = replace(found, coupling=float(given), source="given")
        couplings.append(found)
        values[upper.name] = found.coupling
    front_factors = front_factors or {}
    floors = {c.upper: c.reference_A_m2 * front_factors.get(c.upper, 1.0) + c.emitted_A_m2 for c in couplings}
    out = []
    for e in elements:
        if isinstance(e, Subcell) and e.name in values:
            changes = {"luminescent_coupling": batch(values[e.name])}
            if e.bulk is None and e.j01_fixed_A_m2 is not None:
                # the radiative floor counts the emission into the layers below too (else the
                # coupled light could exceed what the subcell recombines)
                changes["j01_fixed_A_m2"] = np.maximum(e.j01_fixed_A_m2, floors[e.name])
            e = replace(e, **changes)
        out.append(e)
    return out, couplings
