"""Light through a layer stack: the coating and the thin layers above the first emitter (window,
contact layers) by characteristic matrices, Beer-Lambert in every thicker
layer with an optional back mirror (flat or ideally scattering, and an optionally textured front:
light trapping, laws/thinfilm.py), collection by each subcell's layers, and the photon budget.

The layer model comes from circuit.from_layers (compile_layer_stack); see its docstring.
"""
from dataclasses import dataclass, replace

import numpy as np

from siltandem import units
from siltandem.laws import collection
from siltandem.laws import haze, thinfilm


@dataclass(frozen=True)
class LayerLight:
    """One pass of light through a layer model (shared by the stage and the yield year)."""

    alphas: list
    reflectance: np.ndarray
    coating_absorbed: np.ndarray
    budget: object
    collected: list          # per subcell: CollectedPhotocurrent, per nm
    #: per layer: the share of its absorption taken by free carriers (parasitic), or None
    free_carrier_share: list = None


def free_carrier_alphas(model, wavelength):
    """Free-carrier absorption [m^-1] of every layer (its majority carriers = its doping; zero for a
    material without free-carrier data), on ``wavelength`` [nm]."""
    out = []
    for layer, material in zip(model.layers, model.materials):
        density = layer.doping_cm3 * units.PER_CM3_TO_PER_M3
        carriers = {"electron_density_m3": density} if layer.polarity == "n" else {"hole_density_m3": density}
        out.append(np.asarray(material.free_carrier_absorption_per_m(wavelength, **carriers), dtype=float))
    return out


def _share(part, total):
    """part / total where total > 0, else 0."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(total > 0, part / np.where(total > 0, total, 1.0), 0.0)


#: entries a study's ``reuse`` dict keeps (the oldest goes first)
REUSE_ENTRIES = 256


def _band_to_band(material, wavelength, temperature, reuse):
    """A material's absorption coefficient on the wavelength grid [m^-1]; with ``reuse`` (a dict
    kept between the designs of one study) computed once per material object, grid and
    temperature (the objects are held in the entry, so their ids stay theirs)."""
    if reuse is None:
        return np.asarray(material.absorption_per_m(wavelength, temperature_K=temperature), dtype=float)
    key = ("band to band", id(material), id(wavelength), float(temperature))
    found = reuse.get(key)
    if found is None or found[0] is not material or found[1] is not wavelength:
        alpha = np.array(material.absorption_per_m(wavelength, temperature_K=temperature), dtype=float)
        alpha.flags.writeable = False
        found = (material, wavelength, alpha)
        if len(reuse) >= REUSE_ENTRIES:             # a study that varies gaps: keep it bounded
            reuse.pop(next(iter(reuse)))
        reuse[key] = found
    return found[2]


def layer_light(model, wavelength, flux, reuse=None, *, collecting_only=False):
    """Coating, Beer-Lambert in every layer, collection of every subcell; flux (..., M).

    ``collecting_only``: the scattered light's absorption is worked out for the subcells' layers
    only (a study needs their collection, not the whole photon budget: the other layers' rows of
    ``budget.absorbed`` are NaN); the collected currents are the same numbers bit for bit
    (thinfilm.layer_absorption's ``layers``).

    The grid shades ``model.shading_fraction`` f of the front: the light entering the stack is
    (1 - f) of ``flux``, and the reflectance and coating absorptance, fractions of the incident
    light, are (1 - f) of the open area's."""
    temperature = model.temperature_K
    open_area = 1.0 - model.shading_fraction
    flux = flux * open_area
    band_to_band = [_band_to_band(m, wavelength, temperature, reuse) for m in model.materials]
    free = free_carrier_alphas(model, wavelength)
    alphas = [a + f for a, f in zip(band_to_band, free)]
    free_share = [_share(f, a) for f, a in zip(free, alphas)]
    thicknesses = [layer.thickness_nm * 1e-9 for layer in model.layers]
    coatings = model.coatings
    response, films = front_response(model, wavelength, alphas)
    reflectance = np.asarray(response.reflectance, dtype=float)
    transmittance = np.asarray(response.transmittance, dtype=float)
    film_absorbed = np.asarray(response.absorptance, dtype=float).reshape(len(coatings) + films, -1) \
        if coatings or films else np.zeros((0, wavelength.size))
    coating_absorbed = film_absorbed[:len(coatings)]
    # light returning from inside sees the front surface as reflecting as much as from outside
    # (a lossless coating reflects alike from both sides: H. A. Macleod, Thin-Film Optical
    # Filters, ch. 2)
    back_haze = model.back_haze if model.back_scattering == "lambertian" else 0.0
    front_haze = model.front_haze if model.front_scattering == "lambertian" else 0.0
    trapping = {}
    if back_haze > 0 or front_haze > 0:
        # scattered light: ideal Lambertian surfaces (a fraction haze of each, laws/haze.py), the
        # escape cone of the bottom layer's index (Snell through flat layers: n sin theta is kept, so
        # the cone into the ambient is set by the medium the light is scattered in), generation
        # uniform in each subcell
        trapping = dict(back_haze=back_haze, front_haze=front_haze,
                        trapping_index=model.materials[-1].refractive_index(wavelength),
                        ambient_index=model.ambient_index)
        if collecting_only:
            trapping["layers"] = sorted({j - films for cell in model.subcells for j in (cell.emitter, cell.base)})
    # the thick layers (from the first emitter down) by Beer-Lambert; the films above it are in the
    # coherent front response, their absorption its absorptance of the incident light
    budget = haze.hazy_layer_absorption(flux, alpha_per_m=alphas[films:], thicknesses_m=thicknesses[films:],
                                        front_reflectance=1.0 - transmittance,
                                        back_reflectance=model.back_reflectance,
                                        front_internal_reflectance=reflectance
                                        if model.back_reflectance > 0 else 0.0, **trapping)
    if films:
        flux_array = np.asarray(flux, dtype=float)
        front = film_absorbed[len(coatings):]
        budget = _with_front_films(budget, front.reshape((films,) + (1,) * (flux_array.ndim - 1) + (-1,))
                                   * flux_array)
    collected = [_collected(cell, band_to_band, free, free_share, budget, bool(trapping))
                 for cell in model.subcells]
    collected = [_shaded(result, own_grid_shading(model, k)) for k, result in enumerate(collected)]
    # a stacked model's shading is (B, 1): the coatings' (C, M) absorptance becomes (C, B, M)
    coating_open = coating_absorbed * open_area if np.ndim(open_area) == 0 \
        else coating_absorbed[:, None, :] * open_area
    return LayerLight(alphas, reflectance * open_area, coating_open, budget, collected, free_share)


#: the layers above the first emitter (window, contact layers) join the coherent front calculation
#: when each is at most this thick [nm]: thinner than the coherence length of sunlight, about 1 um
#: (common practice, no source); a thicker one keeps them all in the Beer-Lambert stack
COHERENT_FRONT_MAX_NM = 1000.0


def front_film_count(model):
    """How many layers from the top join the coherent front calculation: all layers above the first
    subcell's emitter when each is at most ``COHERENT_FRONT_MAX_NM`` thick, else none."""
    first = min(cell.emitter for cell in model.subcells)
    if all(model.layers[j].thickness_nm <= COHERENT_FRONT_MAX_NM for j in range(first)):
        return first
    return 0


def front_response(model, wavelength, alphas):
    """The coherent front: the coating and the thin layers above the first emitter (characteristic
    matrices, laws/thinfilm.coating_response) on the first thick layer as the semi-infinite
    substrate. ``alphas`` [1/m] per layer on ``wavelength`` [nm]. Returns the CoatingResponse
    (absorptance: the coatings', then the films') and the number of films."""
    films = front_film_count(model)

    def index(j):
        return thinfilm.complex_index(wavelength, refractive_index=model.materials[j].refractive_index(wavelength),
                                      alpha_per_m=alphas[j])

    coatings = model.coatings
    response = thinfilm.coating_response(
        wavelength, substrate_index=index(films),
        coating_indices=[c.refractive_index + 1j * c.extinction for c in coatings] + [index(j) for j in range(films)],
        coating_thicknesses_nm=[c.thickness_nm for c in coatings] + [model.layers[j].thickness_nm
                                                                     for j in range(films)],
        ambient_index=model.ambient_index)
    return response, films


def own_grid_shading(model, k):
    """The shading fraction of the own grid of subcell k's string (0 in string 1, whose grid is the
    front's, ``model.shading_fraction``): a lower string's grid lies on its own absorber and takes
    that share of the light its subcells absorb (circuit/strings.py)."""
    if not model.lower_shading or model.subcell_strings[k] == 1:
        return 0.0
    return model.lower_shading[model.subcell_strings[k] - 2]


def _shaded(result, fraction):
    """A subcell's collected photocurrent with (1 - fraction) of it left."""
    if fraction == 0.0:
        return result
    keep = 1.0 - fraction
    return result._replace(emitter_A_m2=result.emitter_A_m2 * keep, depletion_A_m2=result.depletion_A_m2 * keep,
                           base_A_m2=result.base_A_m2 * keep)


def _with_front_films(budget, absorbed_films):
    """The Beer-Lambert budget of the thick layers with the front films put back on top: their
    absorbed light (from the coherent front response; light returning from below that they would
    absorb is counted as escaping, as for the coating), no flux of their own."""
    shape = np.shape(budget.downward_at_top)[1:]
    films = absorbed_films.shape[0]
    zeros = np.zeros((films,) + shape)
    absorbed = np.broadcast_to(absorbed_films, (films,) + shape)
    return budget._replace(absorbed=np.concatenate([absorbed, budget.absorbed]),
                           downward_at_top=np.concatenate([zeros, budget.downward_at_top]),
                           upward_at_bottom=np.concatenate([zeros, budget.upward_at_bottom]),
                           scattered_absorbed=np.concatenate([zeros, budget.scattered_absorbed]))


def _collected(cell, band_to_band, free, free_share, budget, scattered):
    """One subcell's collected photocurrent per nm. The collection law takes one alpha for emitter
    and base: the emitter's band-to-band alpha plus the base's free-carrier alpha (the base is the
    thick part). Free carriers absorb but make no pair: the generation is the band-to-band part
    (the fluxes given to the collection law scaled by alpha_bb / alpha, the law being linear in
    them), and of the scattered light absorbed in each layer only the band-to-band part counts."""
    uniform = 0.0
    if scattered:
        uniform = sum(budget.scattered_absorbed[j] * (1.0 - free_share[j]) for j in (cell.emitter, cell.base))
    if cell.hetero:
        return _collected_hetero(cell, band_to_band, free, budget, uniform)
    attenuation = band_to_band[cell.emitter] + free[cell.base]
    keep = np.where(attenuation > 0, _share(band_to_band[cell.emitter], attenuation), 1.0)
    return collection.collected_photocurrent(
        attenuation, photon_flux_m2_s=keep * budget.downward_at_top[cell.emitter],
        emitter_thickness_m=cell.emitter_thickness_m,
        emitter_diffusion_length_m=cell.emitter_length_m,
        emitter_diffusivity_m2_s=cell.emitter_diffusivity_m2_s,
        front_srv_m_s=cell.front_srv_m_s, depletion_width_m=cell.depletion_width_m,
        base_thickness_m=cell.base_thickness_m, base_diffusion_length_m=cell.base_length_m,
        base_diffusivity_m2_s=cell.base_diffusivity_m2_s, back_srv_m_s=cell.back_srv_m_s,
        back_photon_flux_m2_s=keep * budget.upward_at_bottom[cell.base],
        uniform_absorbed_m2_s=uniform, where=cell.name)


def _collected_hetero(cell, band_to_band, free, budget, uniform):
    """A heterojunction's collected photocurrent per nm: emitter and base each absorb with their
    own material's alpha (band-to-band plus free carriers: Beer-Lambert layer by layer); of each
    region's current the band-to-band share makes pairs (the depletion region's share weighted by
    the optical depth of its two parts)."""
    alpha_e = band_to_band[cell.emitter] + free[cell.emitter]
    alpha_b = band_to_band[cell.base] + free[cell.base]
    result = collection.collected_photocurrent(
        alpha_e, photon_flux_m2_s=budget.downward_at_top[cell.emitter],
        emitter_thickness_m=cell.emitter_thickness_m,
        emitter_diffusion_length_m=cell.emitter_length_m,
        emitter_diffusivity_m2_s=cell.emitter_diffusivity_m2_s,
        front_srv_m_s=cell.front_srv_m_s, depletion_width_m=cell.depletion_width_m,
        base_thickness_m=cell.base_thickness_m, base_diffusion_length_m=cell.base_length_m,
        base_diffusivity_m2_s=cell.base_diffusivity_m2_s, back_srv_m_s=cell.back_srv_m_s,
        back_photon_flux_m2_s=budget.upward_at_bottom[cell.base], uniform_absorbed_m2_s=uniform,
        base_absorption_per_m=alpha_b, emitter_depletion_width_m=cell.emitter_depletion_width_m,
        where=cell.name)
    if not (np.any(free[cell.emitter]) or np.any(free[cell.base])):
        return result
    keep_e = np.where(alpha_e > 0, _share(band_to_band[cell.emitter], alpha_e), 1.0)
    keep_b = np.where(alpha_b > 0, _share(band_to_band[cell.base], alpha_b), 1.0)
    wde = cell.emitter_depletion_width_m
    wdb = cell.depletion_width_m - wde
    depth = alpha_e * wde + alpha_b * wdb
    keep_d = np.where(depth > 0, _share(band_to_band[cell.emitter] * wde + band_to_band[cell.base] * wdb,
                                        depth), 1.0)
    return result._replace(emitter_A_m2=result.emitter_A_m2 * keep_e,
                           depletion_A_m2=result.depletion_A_m2 * keep_d,
                           base_A_m2=result.base_A_m2 * keep_b)


#: the SubcellModel fields that differ between the designs of one optical group (set by the
#: layers' thicknesses: depletion and quasi-neutral widths, and lifetimes through them)
_SUBCELL_ARRAYS = ("emitter_thickness_m", "base_thickness_m", "depletion_width_m", "emitter_length_m",
                   "emitter_diffusivity_m2_s", "base_length_m", "base_diffusivity_m2_s", "front_srv_m_s",
                   "back_srv_m_s", "emitter_depletion_width_m")
#: designs lit at once by :func:`light_designs`: arrays (layers, designs, wavelengths) of 13 x 16
#: x 2002 doubles (3 MB) stay near the caches; measured on the triple map (16 x 16 designs, CPU per
#: design, loaded machine): 4: 6.5-6.9 ms, 8: 5.8-6.4, 16: 4.4-6.1, 32: 4.8-6.2, 64: 6.5-7.6,
#: 256: 14-24 ms
LIGHT_BATCH = 16


def optical_group(model, reuse=None):
    """A key equal for layer models that :func:`stacked_model` can light at once: everything of
    the model but the thicknesses of the thick layers (from the first emitter down), the
    subcells' widths and lengths and the grid's shading. ``reuse``: a study's dict, where each
    layer object's text is kept (the designs of a study share most layer objects)."""
    films = front_film_count(model)
    layers = tuple(_layer_text(layer, j < films, reuse) for j, layer in enumerate(model.layers))
    cells = tuple((c.name, c.emitter, c.base, c.hetero, c.dark_layer) for c in model.subcells)
    return (layers, films, tuple(id(m) for m in model.materials), repr(model.coatings), cells,
            float(model.temperature_K), float(model.back_reflectance), float(model.ambient_index),
            model.back_scattering, model.front_scattering, float(model.back_haze), float(model.front_haze),
            tuple(model.subcell_strings), tuple(float(f) for f in model.lower_shading))


def _layer_text(layer, film, reuse):
    """A layer's part of :func:`optical_group`: its text, with thickness 0 unless it is a front
    film; kept in ``reuse`` by the object's identity (held in the entry, checked with ``is``)."""
    if reuse is None:
        return repr(layer) if film else repr(replace(layer, thickness_nm=0.0))
    table = reuse.setdefault(("optical group", "layer text"), {})
    found = table.get((id(layer), film))
    if found is not None and found[0] is layer:
        return found[1]
    text = repr(layer) if film else repr(replace(layer, thickness_nm=0.0))
    if len(table) >= REUSE_ENTRIES:
        table.pop(next(iter(table)))
    table[(id(layer), film)] = (layer, text)
    return text


def stacked_model(models):
    """B layer models of one :func:`optical_group` as one model whose thick layers' thicknesses,
    subcell widths and lengths and shading are (B, 1) arrays (the front films stay numbers)."""
    first = models[0]
    films = front_film_count(first)

    def column(values):
        return np.array([float(v) for v in values])[:, None]

    layers = tuple(layer if j < films else replace(layer, thickness_nm=column(m.layers[j].thickness_nm
                                                                              for m in models))
                   for j, layer in enumerate(first.layers))
    cells = tuple(replace(cell, **{name: column(getattr(m.subcells[k], name) for m in models)
                                   for name in _SUBCELL_ARRAYS if getattr(cell, name) is not None})
                  for k, cell in enumerate(first.subcells))
    return replace(first, layers=layers, subcells=cells,
                   shading_fraction=column(m.shading_fraction for m in models))


def _row(values, k):
    """Design ``k`` of a stacked model's array (..., B, M)."""
    return np.asarray(values)[..., k, :]


def design_light(light, k):
    """The LayerLight of design ``k`` of a stacked model's pass (:func:`stacked_model`)."""
    return LayerLight(light.alphas, _row(light.reflectance, k), _row(light.coating_absorbed, k),
                      type(light.budget)(*(_row(f, k) for f in light.budget)),
                      [type(c)(*(_row(f, k) for f in c)) for c in light.collected], light.free_carrier_share)


def collecting_stop(model, wavelength, reuse=None):
    """One past the end of the part of the wavelength grid [nm] a subcell collects from: the last
    index where some subcell's emitter or base absorbs band to band, plus one (the trapezoid's
    last interval, to a zero). Beyond it every subcell's collected current is exactly zero (no
    band-to-band absorption: the collection law is given no pairs, :func:`_collected`), so the
    photocurrents are their integrals up to it; the grid's whole length when nothing absorbs."""
    active = np.zeros(np.shape(wavelength), dtype=bool)
    for cell in model.subcells:
        for j in (cell.emitter, cell.base):
            active |= _band_to_band(model.materials[j], wavelength, model.temperature_K, reuse) > 0
    found = np.flatnonzero(active)
    return int(np.size(wavelength)) if found.size == 0 else min(int(np.size(wavelength)), int(found[-1]) + 2)


def _collecting_grid(wavelength, flux, stop, reuse):
    """(wavelength[:stop], flux[..., :stop]), the same objects for one study's grid (``reuse``), so
    that what is remembered by the grid's identity (:func:`_band_to_band`) is found again."""
    if reuse is None:
        return wavelength[:stop], flux[..., :stop]
    key = ("collecting grid", id(wavelength), id(flux), stop)
    found = reuse.get(key)
    if found is None or found[0] is not wavelength or found[1] is not flux:
        found = (wavelength, flux, wavelength[:stop].copy(), np.array(flux[..., :stop]))
        if len(reuse) >= REUSE_ENTRIES:
            reuse.pop(next(iter(reuse)))
        reuse[key] = found
    return found[2], found[3]


def light_designs(models, wavelength, flux, reuse=None):
    """Collected photocurrent [A/m^2] of every subcell of B layer models of one optical group
    (:func:`optical_group`), lit at once (batches of ``LIGHT_BATCH``); a list (designs) of lists
    (subcells). Each design's numbers are those of :func:`illuminate_layers` on it alone, which
    goes through the same stacked pass with B = 1. Only the collecting part of the grid is lit
    (:func:`collecting_stop`: every step of the pass is elementwise in wavelength, so its values
    there are those of the whole grid's pass)."""
    out = []
    stop = collecting_stop(models[0], wavelength, reuse)
    wavelength, flux = _collecting_grid(wavelength, np.asarray(flux), stop, reuse)
    for start in range(0, len(models), LIGHT_BATCH):
        part = models[start:start + LIGHT_BATCH]
        light = layer_light(stacked_model(part), wavelength, flux, reuse, collecting_only=True)
        # each subcell's collected current per nm, summed once for the whole batch (elementwise:
        # row k is the sum of row k's parts, the same numbers as summed for design k alone)
        totals = [c.emitter_A_m2 + c.depletion_A_m2 + c.base_A_m2 for c in light.collected]
        for k in range(len(part)):
            out.append([_photocurrent(_row(total, k), wavelength) for total in totals])
    return out


def _photocurrent(total, wavelength):
    """A subcell's photocurrent [A/m^2]: its collected current per nm integrated over the table."""
    return float(np.trapezoid(total, wavelength))


def illuminate_layers(circuit, spectrum, reuse=None):
    """Light through the layers; photocurrents set, the photon budget in ``circuit.optics``. The
    pass is the stacked one (:func:`stacked_model`) with one design, the same as a study's."""
    model = circuit.model
    wavelength = spectrum.wavelength_nm
    flux = spectrum.photon_flux
    coatings = model.coatings
    light = design_light(layer_light(stacked_model([model]), wavelength, flux, reuse), 0)
    reflectance, coating_absorbed, budget = (light.reflectance, light.coating_absorbed,
                                             light.budget)

    def current(per_nm):
        """q * integral of a photon flux per nm over the table [A/m^2]."""
        return float(thinfilm.photon_current_A_m2(wavelength, per_nm))

    lit, absorbed, collected_by, parasitic = [], {}, {}, {}
    active = set()
    # the photocurrent over the collecting part of the grid, as a study's designs (light_designs)
    stop = collecting_stop(model, wavelength, reuse)
    for k, (cell, result) in enumerate(zip(model.subcells, light.collected)):
        active.update({cell.emitter, cell.base})
        photocurrent = _photocurrent((result.emitter_A_m2 + result.depletion_A_m2 + result.base_A_m2)[..., :stop],
                                     wavelength[:stop])
        share = light.free_carrier_share
        absorbed[cell.name] = current(sum(budget.absorbed[j] * (1.0 - share[j]) for j in (cell.emitter, cell.base)))
        grid = own_grid_shading(model, k)
        if grid > 0:      # a lower string's own grid takes its share of what the subcell absorbs
            label = f"grid shading, string {model.subcell_strings[k]}"
            parasitic[label] = parasitic.get(label, 0.0) + grid * absorbed[cell.name]
            absorbed[cell.name] *= 1.0 - grid
        for j in (cell.emitter, cell.base):
            if np.any(share[j] > 0):
                parasitic[f"{model.layers[j].name} free carriers"] = current(budget.absorbed[j] * share[j])
        collected_by[cell.name] = {
            "emitter_mA_cm2": units.ma_cm2(float(np.trapezoid(result.emitter_A_m2, wavelength))),
            "depletion_mA_cm2": units.ma_cm2(float(np.trapezoid(result.depletion_A_m2,
                                                                wavelength))),
            "base_mA_cm2": units.ma_cm2(float(np.trapezoid(result.base_A_m2, wavelength)))}
        lit.append(circuit.element(cell.name).with_photocurrent(photocurrent))
    incident = current(flux)
    reflected = current(reflectance * flux + budget.escaped)
    transmitted = current(budget.transmitted)
    for k, coating in enumerate(coatings):
        parasitic[f"coating {coating.name}"] = current(
            coating_absorbed[k] * flux)
    for j, layer in enumerate(model.layers):
        if j not in active:
            parasitic[layer.name] = current(budget.absorbed[j])
    if model.shading_fraction > 0:
        parasitic["grid shading"] = current(model.shading_fraction * flux)
    closure = incident - reflected - transmitted - sum(parasitic.values()) - sum(absorbed.values())
    optics = dict(circuit.optics)
    optics.update({
        "incident_A_m2": incident, "reflected_A_m2": reflected,
        "escaped_A_m2": current(budget.escaped),
        "transmitted_A_m2": transmitted, "parasitic_A_m2": parasitic,
        "absorbed_A_m2": absorbed, "collected_A_m2": collected_by,
        "budget_error_relative": abs(closure) / incident, "spectrum": spectrum,
        # the per-wavelength arrays of this pass, for the spectral table (result.spectral)
        "layer_light": light})
    return circuit.with_elements(lit, optics=optics)


def layer_photocurrents(model, wavelength_nm, flux):
    """Collected photocurrent [A/m^2] of every subcell of a layer model, for many spectra.

    ``flux`` is (..., M) on ``wavelength_nm`` (M,); returns a list (subcell order of the model)
    of arrays of shape ``flux.shape[:-1]``. Same optics as :func:`illuminate_layers`, with the
    layers' absorption at the model's temperature.
    """
    wavelength = np.asarray(wavelength_nm, dtype=float)
    light = layer_light(model, wavelength, np.asarray(flux, dtype=float))
    return [np.trapezoid(r.emitter_A_m2 + r.depletion_A_m2 + r.base_A_m2, wavelength, axis=-1)
            for r in light.collected]


def absorber_labels(model):
    """The table's label of every absorbing layer, sun side first: the coatings (``coating
    <name>``), then the layers by name; a repeated label gets `` (2)``, `` (3)``..."""
    labels = [f"coating {c.name}" for c in model.coatings] + [layer.name for layer in model.layers]
    seen, unique = {}, []
    for label in labels:
        seen[label] = seen.get(label, 0) + 1
        unique.append(label if seen[label] == 1 else f"{label} ({seen[label]})")
    return unique


def subcell_layers(model):
    """Indices of the layers that are some subcell's emitter or base (the rest is parasitic)."""
    return {index for cell in model.subcells for index in (cell.emitter, cell.base)}


#: width of the temperature bins of :func:`layer_photocurrents_by_temperature` [K]
TEMPERATURE_BIN_K = 1.0


def layer_photocurrents_by_temperature(model, wavelength_nm, flux, temperature_K, *, bin_K=TEMPERATURE_BIN_K):
    """Collected photocurrent [A/m^2] of every subcell for many spectra, each at its own temperature.

    ``flux`` is (N, M) on ``wavelength_nm`` (M,), ``temperature_K`` (N,) or (N, 1); returns a list
    (subcell order) of (N,) arrays. The layers' absorption follows each row's temperature
    (``Material.absorption_per_m``); rows are grouped in bins of ``bin_K`` kelvin and each bin is
    computed once at its mean temperature (a bin of 1 K moves the Si edge by about 0.3 meV, the
    gap's slope of about -0.27 meV/K at 300 K).
    """
    wavelength = np.asarray(wavelength_nm, dtype=float)
    flux = np.asarray(flux, dtype=float)
    temperature = np.asarray(temperature_K, dtype=float).reshape(-1)
    bins = np.floor(temperature / bin_K).astype(np.int64)
    out = [np.zeros(temperature.size) for _ in model.subcells]
    for key in np.unique(bins):
        rows = np.flatnonzero(bins == key)
        at = replace(model, temperature_K=float(np.mean(temperature[rows])))
        for k, current in enumerate(layer_photocurrents(at, wavelength, flux[rows])):
            out[k][rows] = current
    return out


def layer_collection(model, wavelength_nm):
    """Collected photocurrent of every subcell per incident photon, wavelength by wavelength.

    The layer optics and the collection laws are linear in the incident flux (Beer-Lambert, the
    Lambertian channel and the collection law all scale with it: laws/thinfilm.py,
    laws/collection.py), so one pass at unit flux gives each subcell's response
    c(lambda) [A/m^2 per (m^-2 s^-1 nm^-1)], q times its external quantum efficiency, and the
    photocurrent of any spectrum Phi is the integral of Phi(lambda) c(lambda) d lambda
    (np.trapezoid on the grid): many spectra at the price of one. Returns a list (subcell order)
    of (M,) arrays on ``wavelength_nm`` (M,), the layers at the model's temperature.
    """
    wavelength = np.asarray(wavelength_nm, dtype=float)
    light = layer_light(model, wavelength, np.ones(wavelength.shape))
    return [np.asarray(r.emitter_A_m2 + r.depletion_A_m2 + r.base_A_m2, dtype=float) for r in light.collected]


def layer_collection_by_temperature(model, wavelength_nm, temperature_K, *, bin_K=TEMPERATURE_BIN_K):
    """:func:`layer_collection` of every row at its own temperature: ``temperature_K`` (N,) or (N, 1),
    grouped in the bins of :func:`layer_photocurrents_by_temperature` (each bin at its mean
    temperature, the same numbers). Returns a list (subcell order) of (N, M) arrays; a row's
    photocurrent for its flux Phi (N, M) is ``np.trapezoid(Phi * c, wavelength_nm, axis=-1)``."""
    wavelength = np.asarray(wavelength_nm, dtype=float)
    temperature = np.asarray(temperature_K, dtype=float).reshape(-1)
    bins = np.floor(temperature / bin_K).astype(np.int64)
    out = [np.zeros((temperature.size, wavelength.size)) for _ in model.subcells]
    for key in np.unique(bins):
        rows = np.flatnonzero(bins == key)
        at = replace(model, temperature_K=float(np.mean(temperature[rows])))
        for k, response in enumerate(layer_collection(at, wavelength)):
            out[k][rows] = response
    return out
