"""Layer stacks into circuits, and light through their layers.

``compile_layer_stack(stack)`` builds, from the recognised structure (compile_layers.py), one
element per subcell, tunnel junction and isotype interface, in the order of the layer boundaries:

* a **subcell** (a homojunction, or a heterojunction: circuit/hetero.py, each side with its own
  material) at layer-physics level: J01 is the non-radiative part of the minority-carrier
  diffusion solution of its emitter and base (laws/collection.py; lifetimes split by mechanism,
  laws/lifetimes.py) plus the radiative floor J0,rad(Eg) with emission through the front and into
  what lies behind; J02 from depletion-region recombination (Sah-Noyce-Shockley) with the SRH
  lifetimes only; its photocurrent comes later, from the optics stage;
* a **tunnel junction** whose peak current is estimated from its two layers (Kane's band-to-band
  tunnelling through the junction field, laws/esaki.py), unless its upper layer overrides it;
* an **isotype interface** from its two materials (electron-affinity rule, laws/thermionic.py),
  oriented by the stack's polarity.

``optics.layers.illuminate_layers(circuit, spectrum)``: front reflectance (the coating and the thin
layers above the first emitter, by characteristic matrices), Beer-Lambert absorption in every layer
below (laws/thinfilm.py), each subcell's collected photocurrent from the light entering its
emitter, and the photon budget.
"""
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from siltandem import units
from siltandem.circuit import hetero
from siltandem.circuit.graph import build_circuit
from siltandem.circuit.layer_coupling import couple_layers
from siltandem.circuit.recognise import carriers_flow
from siltandem.circuit.strings import device_by_string, recognised, string_shading
from siltandem.circuit.elements import Resistor, Subcell, TunnelJunction, batch
from siltandem.constants import BOLTZMANN_EV_K, ELEMENTARY_CHARGE_C, HC_EV_NM
from siltandem.errors import StackError
from siltandem.laws import checks, collection
from siltandem.laws import junction as junction_law
from siltandem.laws import esaki
from siltandem.laws import lifetimes, silicon
from siltandem.laws.radiative import radiative_saturation_current
from siltandem.materials import material_identity, recombination
from siltandem.numerics.memo import remembered, remembered_repr

#: defaults of the layer compiler (common practice, no source; each can be given per layer)
DEFAULT_SRV_CM_S = 1e4
#: a tunnel junction's valley, when not given: peak-to-valley ratio and valley voltage offset
DEFAULT_PEAK_TO_VALLEY = 10.0
DEFAULT_VALLEY_OFFSET_V = 0.3
#: an emitter or base must be doped at least this many times its intrinsic density: the
#: diffusion and depletion laws take the majority density equal to the doping, which is 1 %
#: off at a doping of 10 n_i (n = N/2 + sqrt(N^2/4 + n_i^2); S. M. Sze, K. K. Ng, Physics of
#: Semiconductor Devices, 3rd ed. (2007), ch. 1)
INTRINSIC_MARGIN = 10.0
#: the temperatures the layer physics is written for [K] (the stack files' range)
TEMPERATURE_RANGE_K = (150.0, 1000.0)


@dataclass(frozen=True)
class SubcellModel:
    """What the optics stage needs of one subcell (SI)."""

    name: str
    emitter: int
    base: int
    emitter_thickness_m: float
    base_thickness_m: float
    depletion_width_m: float
    emitter_length_m: float
    emitter_diffusivity_m2_s: float
    base_length_m: float
    base_diffusivity_m2_s: float
    front_srv_m_s: float
    back_srv_m_s: float
    #: a heterojunction: its emitter's part of the depletion width [m] (None: a homojunction,
    #: one absorber); and the layer whose material sets the gap and n_i (the narrower gap)
    emitter_depletion_width_m: float | None = None
    dark_layer: int | None = None

    @property
    def hetero(self):
        return self.emitter_depletion_width_m is not None

    @property
    def dark_index(self):
        """The layer whose material sets the subcell's gap and n_i (the emitter's for one absorber)."""
        return self.emitter if self.dark_layer is None else self.dark_layer


@dataclass(frozen=True)
class LayerModel:
    layers: tuple
    materials: tuple
    coatings: tuple
    subcells: tuple
    temperature_K: float
    notes: list = field(default_factory=list)
    back_reflectance: float = 0.0
    ambient_index: float = 1.0
    #: "specular" or "lambertian" ([optics] back_scattering, front_scattering)
    back_scattering: str = "specular"
    front_scattering: str = "specular"
    #: scattering fraction of a "lambertian" surface ([optics] back_haze, front_haze; 1 = ideal)
    back_haze: float = 1.0
    front_haze: float = 1.0
    #: [device] shading_fraction: the part of the front under the grid (light entering x (1 - f))
    shading_fraction: float = 0.0
    #: several strings: each subcell's string (model.subcells order), and the shading of each string's
    #: own grid from string 2 on (circuit/strings.py; string 1's is shading_fraction)
    subcell_strings: tuple = ()
    lower_shading: tuple = ()


def _material(layer):
    from siltandem.materials import load_material

    return load_material(layer.material, layer.composition, gap_eV=layer.gap_eV)


def _remembered_material(layer, reuse):
    """``_material``, remembered in a study's ``reuse`` dict by :func:`material_key` (a library
    material is a pure function of it; a material file is read again, as without the dict)."""
    from siltandem.materials import userfiles

    if reuse is None or userfiles.is_material_file(layer.material):
        return _material(layer)
    return remembered(reuse, "material", material_key(layer), lambda: _material(layer))


def is_silicon(layer):
    """True for a Si layer: its layer physics adds intrinsic recombination, band-gap narrowing
    and doping-dependent mobilities (laws/silicon.py)."""
    return layer.material == "Si"


def _gap_narrowing_eV(layer, temperature_K):
    """Band-gap narrowing [eV] of a Si layer in equilibrium: its ``gap_narrowing`` model (Schenk
    1998 by default, Klaassen 1992 on request; laws/silicon.py)."""
    return float(silicon.doped_gap_narrowing(layer.doping_cm3, layer.polarity, temperature_K=temperature_K,
                                             model=layer.gap_narrowing or silicon.GAP_NARROWING_MODELS[0]))


def _mobility(layer, material, temperature_K, file=None):
    """Minority-carrier mobility [m^2/(V s)] of an active layer: Masetti et al. 1983 for Si,
    Caughey-Thomas with Sotoodeh et al. 2000 where the data have the material, else the
    library's fixed (lightly doped) value. An alloy whose own law does not cover the layer's
    composition is refused (StackError), not given the fixed value silently."""
    carrier = "hole" if layer.polarity == "n" else "electron"
    if is_silicon(layer):
        return float(silicon.masetti_mobility(layer.doping_cm3, carrier)) * 1e-4
    document = recombination.material_document(layer.material, material)
    doped = recombination.minority_mobility_cm2_V_s(material, document, layer.doping_cm3, carrier,
                                                    temperature_K=temperature_K)
    if doped is not None:
        return doped * 1e-4
    uncovered = recombination.uncovered_composition_range(material, document, carrier)
    if uncovered is not None:
        low, high, source = uncovered
        raise StackError(
            f"{layer.material} at composition {layer.composition:g} is outside {low:g}-{high:g}, the range of "
            f"its doping-dependent {carrier} mobility ({source}); its minority mobility there has no source",
            file=file, where=f"{layer.label}, key composition",
            fix=f"give a composition between {low:g} and {high:g}, or copy the material file beside the stack, "
                f"give its [mobility.{carrier}_doping] law for this composition (with its source) and write "
                "the copy's file name as the layer's material")
    return material.hole_mobility_m2_V_s if layer.polarity == "n" else material.electron_mobility_m2_V_s


def _minority(layer, material, temperature_K, *, file, role, radiative_s=np.inf):
    """Minority-carrier diffusion length [m], diffusivity [m^2/s] and non-radiative (SRH)
    lifetime [s] of an active layer whose radiative lifetime (with photon recycling) is
    ``radiative_s`` [s] (inf: none). ``srh_lifetime_ns`` is the SRH part and the radiative one
    is added; ``lifetime_ns`` and ``diffusion_length_um`` are the measured total, the SRH part
    being what the radiative one leaves (laws/lifetimes.py)."""
    mobility = _mobility(layer, material, temperature_K, file)
    if not np.isfinite(mobility) or mobility <= 0:
        raise StackError(f"the library has no minority-carrier mobility for {material.name}",
                         file=file, where=layer.label,
                         fix="give diffusion_length_um for this layer")
    diffusivity = float(collection.einstein_diffusivity(mobility, temperature_K=temperature_K))
    if layer.srh_lifetime_ns is not None:
        srh = layer.srh_lifetime_ns * 1e-9
        total = float(lifetimes.effective_lifetime_s(srh, radiative_s))
        return float(collection.diffusion_length(total, diffusivity_m2_s=diffusivity)), diffusivity, srh
    if layer.diffusion_length_um is not None:
        length = layer.diffusion_length_um * units.UM_TO_M
    elif layer.lifetime_ns is not None:
        length = float(collection.diffusion_length(layer.lifetime_ns * 1e-9, diffusivity_m2_s=diffusivity))
    else:
        raise StackError(f"the {role} of a subcell needs its minority-carrier diffusion length or "
                         "lifetime", file=file, where=layer.label,
                         fix="add diffusion_length_um = <um>, lifetime_ns = <ns> or srh_lifetime_ns "
                             "= <ns>")
    return length, diffusivity, float(lifetimes.nonradiative_lifetime_s(length**2 / diffusivity, radiative_s))


def material_key(layer):
    """The layer keys its material is a pure function of (``_material``): a memo key."""
    return (layer.material, layer.composition, layer.gap_eV)


def _rear_emission(cell, layers, materials, gap_eV, temperature_K, back_reflectance, reuse=None):
    """Rear emission of a subcell over its front emission (laws/lifetimes.py): into the layer
    behind its base where the layers behind reach one absorption length at the emission peak
    (Eg + kT: a lower subcell, a substrate), else into the stack's back (reflectance R).
    ``reuse``: a study's dict; each material's absorption at the peak is computed once."""
    peak_nm = HC_EV_NM / (gap_eV + BOLTZMANN_EV_K * temperature_K)
    cell_index = float(materials[cell.base].refractive_index(peak_nm))
    depth = 0.0
    for layer, material in zip(layers[cell.base + 1:], materials[cell.base + 1:]):
        alpha = remembered(reuse, "absorption at the emission peak",
                           (material_key(layer), peak_nm, float(temperature_K)),
                           lambda material=material: float(material.absorption_per_m(
                               peak_nm, temperature_K=temperature_K)))
        depth += alpha * layer.thickness_nm * 1e-9
        if depth >= 1.0:
            return lifetimes.rear_emission_factor(
                cell_index=cell_index, rear_index=float(material.refractive_index(peak_nm)))
    return lifetimes.rear_emission_factor(cell_index=cell_index, back_reflectance=back_reflectance)


def _front_emission(cell, materials, gap_eV, temperature_K, ambient_index):
    """Front emission of a subcell into the stack's ambient over that into air (laws/lifetimes.py):
    the base's index at the emission peak (Eg + kT) bounds the escape cone."""
    if ambient_index == 1.0:
        return 1.0
    peak_nm = HC_EV_NM / (gap_eV + BOLTZMANN_EV_K * temperature_K)
    return lifetimes.front_emission_factor(ambient_index=ambient_index,
                                           cell_index=float(materials[cell.base].refractive_index(peak_nm)))


def _radiative_lifetimes(cell, layers, materials, ni, floor):
    """(emitter, base) radiative lifetimes [s] with photon recycling, and the self-consistent
    recycling factor (a layer's photon_recycling_factor replaces it for that layer)."""
    pairs = [(layers[i], recombination.radiative_coefficient_cm3_s(
        materials[i], recombination.material_document(layers[i].material, materials[i])))
        for i in (cell.emitter, cell.base)]
    internal = sum(ELEMENTARY_CHARGE_C * ni * ni * b * 1e-6 * layer.thickness_nm * 1e-9
                   for layer, b in pairs if b is not None)
    recycling = float(lifetimes.self_consistent_recycling(internal_A_m2=internal, external_A_m2=floor))
    out = tuple(np.inf if b is None else float(lifetimes.radiative_lifetime_s(
        layer.doping_cm3, coefficient_cm3_s=b,
        recycling_factor=layer.photon_recycling_factor or recycling)) for layer, b in pairs)
    return out, recycling


def _dark_side(cell, materials, temperature_K):
    """"emitter" or "base": the side whose material sets a subcell's gap and n_i."""
    material_e, material_b = materials[cell.emitter], materials[cell.base]
    return hetero.narrower(material_e, material_b, temperature_K) if cell.hetero else "emitter"


def _remembered_gap(material, temperature_K, reuse):
    """``material.gap_eV(temperature_K)`` as a float, remembered in a study's ``reuse`` dict per
    material object (held in the entry and checked with ``is``, so its id stays its own)."""
    if reuse is None:
        return float(material.gap_eV(temperature_K))
    found = remembered(reuse, "gap", (id(material), float(temperature_K)),
                       lambda: (material, float(material.gap_eV(temperature_K))))
    return found[1] if found[0] is material else float(material.gap_eV(temperature_K))


def _remembered_subcell(cell, layers, materials, temperature_K, file, name, suns, back_reflectance,
                        ambient_index, reuse, string=1):
    """``_subcell`` (its element in ``string``), remembered in a study's ``reuse`` dict under
    every input it reads: the subcell's recognised layers, its emitter and base (their keys set
    their materials), the conditions, and its rear emission (the only thing it takes from the
    layers behind it; remembered too, under the base's and the later layers' keys), so that in a
    map of other layers' keys it is built once per distinct emitter and base."""
    if reuse is None:
        element, model, extra = _subcell(cell, layers, materials, temperature_K, file, name, suns,
                                         back_reflectance, ambient_index)
        return replace(element, string=string), model, extra
    emitter, base = layers[cell.emitter], layers[cell.base]
    silicon_cell = is_silicon(emitter) and is_silicon(base)
    rear = 0.0
    if not silicon_cell:
        dark = materials[cell.emitter if _dark_side(cell, materials, temperature_K) == "emitter" else cell.base]
        gap = _remembered_gap(dark, temperature_K, reuse)
        # _rear_emission reads the base's material and the layers behind it (materials and
        # thicknesses), the gap, the temperature and the back's reflectance
        rear_key = (cell.base, material_key(base), tuple(remembered_repr(reuse, layer)
                                                         for layer in layers[cell.base + 1:]),
                    gap, float(temperature_K), float(back_reflectance))
        rear = remembered(reuse, "rear emission", rear_key, lambda: _rear_emission(
            cell, layers, materials, gap, temperature_K, back_reflectance, reuse))
    key = (remembered_repr(reuse, cell), remembered_repr(reuse, emitter), remembered_repr(reuse, base),
           float(temperature_K), str(file), name, float(suns),
           float(back_reflectance), float(ambient_index), float(rear), string)

    def build():
        element, model, extra = _subcell(cell, layers, materials, temperature_K, file, name, suns,
                                         back_reflectance, ambient_index, rear=rear)
        return replace(element, string=string), model, extra

    element, model, extra = remembered(reuse, "subcell", key, build)
    return element, model, dict(extra)       # the caller adds to the details: a copy of its own


def _subcell(cell, layers, materials, temperature_K, file, name, suns=1.0, back_reflectance=0.0,
             ambient_index=1.0, *, rear=None):
    """One subcell's element, SubcellModel and details. ``rear``: its rear emission factor when
    already known (``_rear_emission`` of the same inputs), else computed here."""
    emitter, base = layers[cell.emitter], layers[cell.base]
    material_e, material_b = materials[cell.emitter], materials[cell.base]
    dark_side = _dark_side(cell, materials, temperature_K)
    dark_index = cell.emitter if dark_side == "emitter" else cell.base
    ni_e0 = float(material_e.intrinsic_density_per_m3(temperature_K))
    ni_b0 = float(material_b.intrinsic_density_per_m3(temperature_K))
    n_side, p_side = (emitter, base) if emitter.polarity == "n" else (base, emitter)
    donor = n_side.doping_cm3 * units.PER_CM3_TO_PER_M3
    acceptor = p_side.doping_cm3 * units.PER_CM3_TO_PER_M3
    silicon_cell = is_silicon(emitter) and is_silicon(base)
    # a Si base doped below INTRINSIC_MARGIN n_i, or so lightly that the junction depletes all of
    # it at equilibrium (a p-i-n), is no diode base: the base law (laws/silicon.py) takes its
    # equilibrium densities from charge neutrality and its excess density in high injection;
    # there is then no depletion region at the operating point (the base is flooded)
    light_base = silicon_cell and ni_b0 * INTRINSIC_MARGIN > base.doping_cm3 * units.PER_CM3_TO_PER_M3
    checked = ((emitter, material_e, ni_e0),) + (() if light_base else ((base, material_b, ni_b0),))
    for layer, own, own_ni in checked:
        if own_ni * INTRINSIC_MARGIN > layer.doping_cm3 * units.PER_CM3_TO_PER_M3:
            raise StackError(
                f"at {temperature_K:g} K the intrinsic carrier density of {own.name} "
                f"({own_ni / units.PER_CM3_TO_PER_M3:.3g} cm^-3) is more than a tenth of this "
                f"layer's doping ({layer.doping_cm3:.3g} cm^-3): the layer physics takes the "
                "majority density equal to the doping, which no longer holds", file=file,
                where=layer.label,
                fix=f"lower the temperature, or dope the layer above "
                    f"{INTRINSIC_MARGIN * own_ni / units.PER_CM3_TO_PER_M3:.2g} cm^-3")
    material = materials[dark_index]      # one absorber, or the narrower gap of a heterojunction
    ni = float(material.intrinsic_density_per_m3(temperature_K))
    if light_base:
        # the junction's widths and J02 are not used for a flooded base (set to zero below): the
        # junction is evaluated at the margin's doping only to keep its law's inputs valid
        floor_m3 = INTRINSIC_MARGIN * ni
        donor, acceptor = (max(donor, floor_m3), acceptor) if base is n_side else (donor, max(acceptor, floor_m3))
    if cell.hetero:
        junction = hetero.heterojunction(emitter, base, material_e, material_b,
                                         temperature_K=temperature_K, suns=suns, file=file, name=name)
    else:
        junction = junction_law.abrupt_junction(0.0, acceptor_density_m3=acceptor,
                                              donor_density_m3=donor,
                                              relative_permittivity=material.relative_permittivity,
                                              intrinsic_density_m3=ni, temperature_K=temperature_K,
                                              where=name)
    x_emitter = float(junction.n_side_width_m if emitter.polarity == "n" else junction.p_side_width_m)
    x_base = float(junction.p_side_width_m if emitter.polarity == "n" else junction.n_side_width_m)
    light_base = light_base or (silicon_cell and x_base >= base.thickness_nm * 1e-9)
    if light_base:
        x_emitter, x_base = 0.0, 0.0
    emitter_qn = emitter.thickness_nm * 1e-9 - x_emitter
    base_qn = base.thickness_nm * 1e-9 - x_base
    for layer, left in ((emitter, emitter_qn), (base, base_qn)):
        if left <= 0:
            raise StackError(f"{layer.label} is thinner than its share of the junction's "
                             f"depletion region ({(layer.thickness_nm * 1e-9 - left) * 1e9:.0f} "
                             "nm)", file=file, where=layer.label,
                             fix="make the layer thicker or dope the other side of the junction "
                                 "less")
    # Si layers (of a homojunction, or one side of a heterojunction) keep silicon's own physics:
    # the emitter's intrinsic lifetime, band-gap narrowing and the base law
    silicon_base = is_silicon(base)
    gap = float(material.gap_eV(temperature_K))
    # the radiative floor: emission through the front (into the ambient, n_ambient^2 times that into
    # air) and into what lies behind (two-sided)
    front = float(radiative_saturation_current(gap, temperature_K=temperature_K))
    if rear is None:
        rear = 0.0 if silicon_cell else _rear_emission(cell, layers, materials, gap, temperature_K,
                                                        back_reflectance)
    ambient = 1.0 if silicon_cell else _front_emission(cell, materials, gap, temperature_K, ambient_index)
    floor = front * (ambient + rear)
    (rad_e, rad_b), recycling = ((np.inf, np.inf), 1.0) if silicon_cell else \
        _radiative_lifetimes(cell, layers, materials, ni, floor)
    # a Si side of a heterojunction: its intrinsic (Auger + radiative) recombination is silicon's own
    rad_e, rad_b = (np.inf if is_silicon(layer) else rad for layer, rad in ((emitter, rad_e), (base, rad_b)))
    l_e, d_e, srh_e = _minority(emitter, material_e, temperature_K, file=file, role="emitter",
                                radiative_s=rad_e)
    l_b, d_b, srh_b = _minority(base, material_b, temperature_K, file=file, role="base",
                                radiative_s=rad_b)
    if is_silicon(emitter) and emitter.diffusion_length_um is None:
        # the emitter's intrinsic (Auger + radiative) lifetime at low injection joins its own
        l_e = float(np.sqrt(d_e / (d_e / l_e**2 + 1.0 / _intrinsic_lifetime(emitter, ni_e0))))
    srv_e = (emitter.srv_cm_s if emitter.srv_cm_s is not None else DEFAULT_SRV_CM_S) * 1e-2
    srv_b = (base.srv_cm_s if base.srv_cm_s is not None else DEFAULT_SRV_CM_S) * 1e-2
    emitter_doping = emitter.doping_cm3 * units.PER_CM3_TO_PER_M3
    base_doping = base.doping_cm3 * units.PER_CM3_TO_PER_M3
    ni_e, ni_b = ((own * float(np.exp(_gap_narrowing_eV(layer, temperature_K)
                                      / (2 * BOLTZMANN_EV_K * temperature_K))) if is_silicon(layer) else own)
                  for layer, own in ((emitter, ni_e0), (base, ni_b0)))
    regions = ((emitter_qn, emitter_doping, ni_e, l_e, d_e, srv_e, rad_e, "emitter"),
               (base_qn, base_doping, ni_b, l_b, d_b, srv_b, rad_b, "base"))
    # each region's J0 less its bulk radiative share (the escaping part is the floor's)
    dark = collection.DiffusionSaturationCurrent(*(np.array(_nonradiative_j0(*region, name=name))
                                                   for region in regions))
    emitter_j0 = (units.a_m2(emitter.j0_fA_cm2 * 1e-12) if emitter.j0_fA_cm2 is not None
                  else float(dark.emitter_A_m2))
    base_j0 = units.a_m2(base.j0_fA_cm2 * 1e-12) if base.j0_fA_cm2 is not None else None
    tau_e, tau_b = l_e**2 / d_e, l_b**2 / d_b
    bulk = None
    if silicon_base:
        # the base at one quasi-Fermi-level split over its whole thickness (laws/silicon.py):
        # intrinsic, SRH and rear-surface recombination in one law; the rear surface's J0
        # instead of its velocity where the base gives j0_fA_cm2
        n0 = base.doping_cm3 if base.polarity == "n" else 0.0
        p0 = base.doping_cm3 if base.polarity == "p" else 0.0
        factor, n0, p0, rate = silicon.bulk_base(
            thickness_m=base.thickness_nm * 1e-9, n0_cm3=n0, p0_cm3=p0, srh_rate_s=1.0 / tau_b,
            surface_srv_m_s=0.0 if base_j0 is not None else srv_b)
        # Schenk's narrowing (the default) follows the carrier densities at the operating point
        injection = float((base.gap_narrowing or silicon.GAP_NARROWING_MODELS[0]) == "schenk")
        bulk = tuple(batch(float(x)) for x in (factor, n0, p0, rate, ni_b / units.PER_CM3_TO_PER_M3, injection))
        # the law holds the radiative recombination: no floor
        j01 = emitter_j0 + (base_j0 or 0.0)
        diffusion_total = j01
    elif base.ere is not None:
        # a measured external radiative efficiency: the front emission over all recombination
        # (M. A. Green, Prog. Photovolt. 20 (2012) 472)
        diffusion_total, j01 = 0.0, front / base.ere
    else:
        diffusion_total = emitter_j0 + (base_j0 if base_j0 is not None else float(dark.base_A_m2))
        j01 = diffusion_total + floor
    if not silicon_cell:
        # only the non-radiative (SRH) lifetimes recombine in the depletion region
        tau_e, tau_b = (min(t, _LONGEST_LIFETIME_S) for t in (srh_e, srh_b))
    tau_n, tau_p = (tau_b, tau_e) if emitter.polarity == "n" else (tau_e, tau_b)
    # J02 at a junction voltage near the operating point (about Eg - 0.4 V, common practice)
    vbi = float(junction.built_in_V)
    if cell.hetero:
        # the depletion-region recombination of the narrower-gap material, whose n_i is
        # exponentially the larger (its own homojunction's built-in voltage bounds the bias)
        vbi = min(vbi, float(junction_law.abrupt_junction(
            0.0, acceptor_density_m3=acceptor, donor_density_m3=donor,
            relative_permittivity=material.relative_permittivity, intrinsic_density_m3=ni,
            temperature_K=temperature_K, where=name).built_in_V))
    operating = float(np.clip(gap - 0.4, 0.0, 0.9 * vbi))
    recombination = junction_law.depletion_recombination_current(
        operating, intrinsic_density_m3=ni, electron_lifetime_s=tau_n, hole_lifetime_s=tau_p,
        acceptor_density_m3=acceptor, donor_density_m3=donor,
        relative_permittivity=material.relative_permittivity, temperature_K=temperature_K,
        where=name)
    # a flooded (lightly doped) base: its SRH recombination is the base law's, over its whole width
    j02 = 0.0 if light_base else float(recombination.j02_A_m2)
    element = Subcell(name, batch(gap), j02_A_m2=batch(j02), j01_fixed_A_m2=batch(j01), bulk=bulk)
    model = SubcellModel(name, cell.emitter, cell.base, emitter_qn, base_qn,
                         0.0 if light_base else float(junction.width_m), l_e, d_e, l_b, d_b, srv_e, srv_b,
                         x_emitter if cell.hetero else None, dark_index if cell.hetero else None)
    extra = {}
    if cell.hetero:
        extra = {"heterojunction": {
            "offset_source": junction.source, "built_in_V": float(junction.built_in_V),
            "gaps_eV": junction.gaps, "minority_steps_eV": junction.spikes,
            "dark_side": dark_side},
            "j01_base_A_m2": diffusion_total - emitter_j0}
    return element, model, {**extra, "j01_diffusion_A_m2": diffusion_total,
                            "j01_radiative_floor_A_m2": floor,
                            "radiative_rear_factor": rear,
                            "radiative_front_factor": ambient,
                            "photon_recycling_factor": recycling,
                            "radiative_lifetime_ns": [rad_e * 1e9, rad_b * 1e9],
                            "srh_lifetime_ns": [srh_e * 1e9, srh_b * 1e9],
                            "floor_applied": bulk is None,
                            "ere": base.ere,
                            "j0_emitter_A_m2": emitter_j0,
                            "silicon_base_law": bulk is not None,
                            "silicon_base_flooded": light_base}


#: a lifetime standing for "no SRH recombination" in the depletion-region law (which needs a
#: finite one) [s]: J02 = q ni W_eff / (2 tau) is then about 3e-19 A/cm^2 for GaAs (ni 1.8e6 cm^-3,
#: W_eff 20 nm), about 1e-9 A/cm^2 of current at 1.1 V: nothing any cell shows
_LONGEST_LIFETIME_S = 1.0


def _nonradiative_j0(thickness, doping, ni, length, diffusivity, srv, radiative_s, role, *, name):
    """A quasi-neutral region's J0 [A/m^2] without its bulk radiative recombination: the bulk part
    (J0 less the surface's) splits by rate, tau_eff / tau_rad being radiative."""
    total = float(collection.region_saturation_current(
        thickness, doping_m3=doping, intrinsic_density_m3=ni, diffusion_length_m=length,
        diffusivity_m2_s=diffusivity, surface_srv_m_s=srv, where=f"{name} {role}"))
    if not np.isfinite(radiative_s):
        return total
    surface = float(lifetimes.surface_share(thickness, doping_m3=doping, intrinsic_density_m3=ni,
                                            diffusion_length_m=length, diffusivity_m2_s=diffusivity,
                                            surface_srv_m_s=srv))
    share = min(length * length / diffusivity / radiative_s, 1.0)
    return total - share * max(total - surface, 0.0)


def _intrinsic_lifetime(layer, ni_m3):
    """Low-injection intrinsic lifetime [s] of a doped Si layer (Richter et al. 2012)."""
    ni = ni_m3 / units.PER_CM3_TO_PER_M3
    n0 = layer.doping_cm3 if layer.polarity == "n" else ni * ni / layer.doping_cm3
    p0 = layer.doping_cm3 if layer.polarity == "p" else ni * ni / layer.doping_cm3
    return float(silicon.intrinsic_lifetime(1e-3 * min(n0, p0) + 1.0, n0_cm3=n0, p0_cm3=p0))


def _tunnel_mass(material):
    """Conduction-band tunnelling mass [m0]: the density-of-states mass per valley."""
    valleys = {"Gamma": 1, "X": 6, "L": 4}.get(material.lowest_valley_300K, 1)
    return material.electron_dos_mass_ratio / valleys ** (2.0 / 3.0)


def _tunnel(index, layers, materials, temperature_K, file):
    upper, lower = layers[index], layers[index + 1]
    n_i, p_i = (index, index + 1) if upper.polarity == "n" else (index + 1, index)
    n_layer, p_layer = layers[n_i], layers[p_i]
    n_mat, p_mat = materials[n_i], materials[p_i]
    name = f"tunnel junction {upper.name} / {lower.name}"
    given = upper.tunnel or {}
    hetero = (material_identity(n_layer.material, n_layer.composition)
              != material_identity(p_layer.material, p_layer.composition))
    if "peak_mA_cm2" in given:
        peak_a_m2 = units.a_m2(given["peak_mA_cm2"])
        peak_v = given.get("peak_V", 0.1)
        source = "given"
    else:
        try:
            estimate = esaki.estimate_peak_current(
                n_gap_eV=n_mat.gap_eV(temperature_K), p_gap_eV=p_mat.gap_eV(temperature_K),
                n_doping_m3=n_layer.doping_cm3 * units.PER_CM3_TO_PER_M3,
                p_doping_m3=p_layer.doping_cm3 * units.PER_CM3_TO_PER_M3,
                n_electron_mass=_tunnel_mass(n_mat), p_light_hole_mass=p_mat.light_hole_mass_ratio,
                n_relative_permittivity=n_mat.relative_permittivity,
                p_relative_permittivity=p_mat.relative_permittivity,
                n_conduction_states_m3=n_mat.conduction_dos_per_m3(temperature_K),
                p_valence_states_m3=p_mat.valence_dos_per_m3(temperature_K),
                temperature_K=temperature_K,
                n_affinity_eV=n_mat.electron_affinity_eV if hetero else None,
                p_affinity_eV=p_mat.electron_affinity_eV if hetero else None)
        except ValueError as exc:
            raise StackError(f"cannot estimate the tunnel junction's peak current: {exc}",
                             file=file, where=f"{upper.label} / {lower.label}",
                             fix="dope both layers more heavily, or give tunnel_peak_mA_cm2 and "
                                 "tunnel_peak_V on the upper layer") from None
        peak_a_m2 = float(estimate.peak_A_m2)
        peak_v = float(given.get("peak_V", estimate.peak_V))
        source = "estimated (Kane band-to-band tunnelling)"
    valley_a_m2 = units.a_m2(given["valley_mA_cm2"]) if "valley_mA_cm2" in given \
        else peak_a_m2 / DEFAULT_PEAK_TO_VALLEY
    valley_v = given.get("valley_V", peak_v + DEFAULT_VALLEY_OFFSET_V)
    if not valley_v > peak_v or not valley_a_m2 < peak_a_m2:
        raise StackError("tunnel junction: the valley must come after the peak and below it",
                         file=file, where=upper.label,
                         fix="set tunnel_valley_V above tunnel_peak_V and tunnel_valley_mA_cm2 "
                             "below tunnel_peak_mA_cm2")
    element = TunnelJunction(name, batch(peak_a_m2), batch(peak_v), batch(valley_a_m2),
                             batch(valley_v))
    return element, {"name": name, "peak_source": source, "hetero": hetero,
                     "layers": [upper.name, lower.name]}


def _tunnel_in(string, element, extra):
    """A tunnel junction's (element, details) with the element in ``string``."""
    return replace(element, string=string), extra


def _isotype(index, layers, materials, polarity, temperature_K, file, reuse=None, string=1):
    """The isotype interface (in ``string``) below layer ``index``; ``reuse``: a study's dict, where
    it is remembered under every input it reads (its two layers, polarity, temperature, file)."""
    if reuse is None:
        return replace(_isotype_element(index, layers, polarity, temperature_K, file), string=string)
    key = ("isotype", index, remembered_repr(reuse, layers[index]), remembered_repr(reuse, layers[index + 1]),
           polarity, float(temperature_K), str(file), string)
    return remembered(reuse, "isotype", key, lambda: replace(
        _isotype_element(index, layers, polarity, temperature_K, file), string=string))


def _isotype_element(index, layers, polarity, temperature_K, file):
    from siltandem.circuit.isotype import isotype_from_materials
    from siltandem.stack.load import ElementSpec

    upper, lower = layers[index], layers[index + 1]
    values = {"upper_material": upper.material, "lower_material": lower.material,
              "upper_doping_cm3": upper.doping_cm3, "lower_doping_cm3": lower.doping_cm3,
              "carrier": "electron" if upper.polarity == "n" else "hole",
              "carriers_flow": carriers_flow(upper.polarity, polarity)}
    if upper.composition is not None:
        values["upper_composition"] = upper.composition
    if lower.composition is not None:
        values["lower_composition"] = lower.composition
    if upper.offset_eV is not None:
        values["offset_eV"] = upper.offset_eV
    if upper.transport is not None:
        values["transport"] = upper.transport
    if upper.sheet_charge_cm2 is not None:
        values["sheet_charge_cm2"] = upper.sheet_charge_cm2
    if upper.statistics is not None:
        values["statistics"] = upper.statistics
    spec = ElementSpec(upper.index, "isotype", f"interface {upper.name} / {lower.name}", 1, values)
    return isotype_from_materials(spec, temperature_K, file, (upper.name, lower.name))


def _cell_name(cell, layers, used):
    emitter, base = layers[cell.emitter].name, layers[cell.base].name
    if emitter.endswith(" emitter") and base.endswith(" base") and \
            emitter[:-8] == base[:-5] and emitter[:-8] not in used:
        return emitter[:-8]
    material = layers[cell.emitter].material
    shown = Path(material).stem if material.lower().endswith(".toml") else material  # a file
    name = f"{shown} cell"
    k = 2
    while name in used:
        name = f"{shown} cell {k}"
        k += 1
    return name


def _check_measured_j0(layers, structure, file):
    """``j0_fA_cm2`` and ``gap_narrowing`` only on a subcell's emitter or base: elsewhere they would
    be ignored; ``ere`` only on the base of a III-V subcell, with no ``j0_fA_cm2`` beside it."""
    active, bases = set(), {}
    for kind, info in structure.parts:
        if kind == "subcell":
            active.update((info["cell"].emitter, info["cell"].base))
            bases[info["cell"].base] = info["cell"].emitter
    for i, layer in enumerate(layers):
        if layer.j0_fA_cm2 is not None and i not in active:
            raise StackError("j0_fA_cm2 is given on a layer that is no subcell's emitter or base, "
                             "where no saturation current applies", file=file, where=layer.label,
                             fix="move j0_fA_cm2 to the emitter (or the base, for its passivated "
                                 "rear) of a subcell, or remove it")
        if layer.gap_narrowing is not None and i not in active:
            raise StackError("gap_narrowing is given on a layer that is no subcell's emitter or base, "
                             "where no band-gap narrowing is used", file=file,
                             where=f"{layer.label}, key gap_narrowing",
                             fix="give gap_narrowing on the Si emitter or base of a subcell, or remove it")
        if layer.ere is None:
            continue
        if i not in bases:
            raise StackError("ere is given on a layer that is no subcell's base", file=file,
                             where=f"{layer.label}, key ere",
                             fix="give ere on the base of the subcell it was measured on")
        emitter = layers[bases[i]]
        if is_silicon(layer) and is_silicon(emitter):
            raise StackError("ere is not taken for a Si subcell (its base law holds its own "
                             "radiative recombination)", file=file, where=f"{layer.label}, key ere",
                             fix="remove ere; give j0_fA_cm2 for measured saturation currents")
        if layer.j0_fA_cm2 is not None or emitter.j0_fA_cm2 is not None:
            raise StackError("ere and j0_fA_cm2 are given on one subcell: both set its J01",
                             file=file, where=f"{layer.label}, key ere",
                             fix="keep one of the two")


def compile_layer_stack(stack, reuse=None):
    """Layer stack -> Circuit with a LayerModel for the optics stage. ``reuse``: a dict kept
    between the designs of one study; an isotype interface whose layers' keys are unchanged is
    taken from it (the same element, built once)."""
    file = stack.source
    temperature = stack.conditions.temperature_K
    low, high = TEMPERATURE_RANGE_K
    if not low <= temperature <= high:
        raise StackError(f"temperature {temperature:g} K is outside [{low:g}, {high:g}] K",
                         file=file, where="temperature_K",
                         fix="give the cell temperature in kelvin, e.g. 298.15 for 25 degC")
    layers = stack.layers
    structure = recognised(layers, tunnel_doping_cm3=stack.rules["tunnel_doping_cm3"], file=file, reuse=reuse)
    materials = tuple(_remembered_material(layer, reuse) for layer in layers)
    _check_measured_j0(layers, structure, file)
    elements, cell_models, notes, used = [], [], list(structure.notes), set()
    details = {"subcells": {}, "tunnels": [], "interfaces": []}
    for kind, info in structure.parts:
        if kind == "subcell":
            name = _cell_name(info["cell"], layers, used)
            used.add(name)
            try:
                element, model, extra = _remembered_subcell(
                    info["cell"], layers, materials, temperature, file, name, stack.conditions.suns,
                    stack.rules.get("back_reflectance", 0.0), stack.rules.get("ambient_index", 1.0), reuse,
                    info["string"])
            except checks.CollectionParameterError as exc:
                cell = info["cell"]
                raise StackError(f"subcell {name!r}: {exc}", file=file,
                                 where=f"{layers[cell.emitter].label} / "
                                       f"{layers[cell.base].label}",
                                 fix="check the emitter's and base's thickness, doping, "
                                     "diffusion length or lifetime and srv_cm_s") from None
            elements.append(element)
            cell_models.append(model)
            details["subcells"][name] = extra
        elif kind == "tunnel":
            upper = info["upper"]
            # a pure function of its two layers' keys (they set their materials): built once per study
            element, extra = remembered(
                reuse, "tunnel", (upper, remembered_repr(reuse, layers[upper]),
                                  remembered_repr(reuse, layers[upper + 1]), float(temperature), str(file),
                                  info["string"]),
                lambda upper=upper, string=info["string"]: _tunnel_in(string, *_tunnel(
                    upper, layers, materials, temperature, file)))
            elements.append(element)
            details["tunnels"].append(dict(extra))
        else:
            elements.append(_isotype(info["upper"], layers, materials, info["polarity"], temperature, file,
                                     reuse, info["string"]))
            i = info["upper"]
            details["interfaces"].append({"name": elements[-1].name,
                                          "layers": [layers[i].name, layers[i + 1].name]})
    model = LayerModel(layers, materials, stack.coatings, tuple(cell_models), temperature, notes,
                       stack.rules.get("back_reflectance", 0.0),
                       stack.rules.get("ambient_index", 1.0),
                       stack.rules.get("back_scattering", "specular"),
                       stack.rules.get("front_scattering", "specular"),
                       stack.rules.get("back_haze", 1.0), stack.rules.get("front_haze", 1.0),
                       *string_shading(stack.rules, [info["string"] for kind, info in structure.parts
                                                     if kind == "subcell"]))
    elements, couplings = couple_layers(elements, model, file=file, reuse=reuse, front_factors={
        name: extra.get("radiative_front_factor", 1.0) for name, extra in details["subcells"].items()})
    details["couplings"] = couplings
    for found in couplings:      # the floor counts the emission into the layers below too
        details["subcells"][found.upper]["downward_emission_ratio"] = found.emitted_A_m2 / found.reference_A_m2
    elements = device_by_string(elements, stack.rules, device_elements)
    circuit = build_circuit(elements, stack.conditions, name=stack.name, model=model)
    return circuit.with_elements([], optics={"layer_details": details,
                                             "polarity": structure.polarity})


#: the name of the series resistor a layer stack's [device] series_ohm_cm2 adds to its string
DEVICE_RESISTOR = "device series resistance"


def device_elements(elements, *, series_ohm_cm2=0.0, shunt_ohm_cm2=np.inf):
    """A layer stack's ``[device]`` as the element stacks' own parts: a shunt of
    ``shunt_ohm_cm2`` [ohm cm2] across every subcell (a subcell's shunt_S_m2, as an element
    subcell's shunt_ohm_cm2) and, for ``series_ohm_cm2`` [ohm cm2] > 0, a resistor element at the
    end of the string (as a ``kind = "resistor"`` element)."""
    out = list(elements)
    if np.isfinite(shunt_ohm_cm2):
        conductance = batch(1.0 / (shunt_ohm_cm2 * units.OHM_CM2_TO_OHM_M2))
        out = [replace(e, shunt_S_m2=conductance) if isinstance(e, Subcell) else e for e in out]
    if series_ohm_cm2 > 0:
        out.append(Resistor(DEVICE_RESISTOR, batch(series_ohm_cm2 * units.OHM_CM2_TO_OHM_M2)))
    return out


def _narrowing_ratio(layer, temperature_K, t0):
    """exp(dEg(T) / kT - dEg(T0) / kT0) of a Si layer's gap narrowing (n_i,eff^2 at T over its
    value at the stack's T0, n_i aside), 1 for other layers; of ``temperature_K``'s shape."""
    t = np.asarray(temperature_K, dtype=float)
    if not is_silicon(layer):
        return np.ones_like(t)
    model = layer.gap_narrowing or silicon.GAP_NARROWING_MODELS[0]
    now = silicon.doped_gap_narrowing(layer.doping_cm3, layer.polarity, temperature_K=t, model=model)
    then = _gap_narrowing_eV(layer, t0)
    return np.exp(now / (BOLTZMANN_EV_K * t) - then / (BOLTZMANN_EV_K * t0))


def dark_currents_at(model, circuit, temperature_K):
    """J01, J02, the gap and n_i(T)/n_i(T0) of each layer subcell at other temperatures (arrays of
    temperature's shape; a Si base law's ni,eff scales with the last).

    The diffusion J01 scales with ni^2 and J02 with ni (the intrinsic density of the absorber,
    the library's Nc Nv T^1.5 law and Varshni gap); the two-sided radiative floor is added again
    at each temperature. A Si emitter's or base's n_i,eff^2 also follows exp(dEg(T) / kT) of its
    gap narrowing (Schenk's depends on T; Klaassen's does not, but kT does). Diffusion lengths,
    lifetimes and mobilities stay at the stack's values.
    """
    out = {}
    t0 = model.temperature_K

    def ni_ratio(material):
        return (np.asarray(material.intrinsic_density_per_m3(temperature_K), dtype=float)
                / float(material.intrinsic_density_per_m3(t0)))

    for cell_model, cell in zip(model.subcells, [circuit.element(c.name) for c in model.subcells]):
        material = model.materials[cell_model.dark_index]
        ratio = ni_ratio(material)
        details = circuit.optics["layer_details"]["subcells"][cell.name]
        diffusion = details["j01_diffusion_A_m2"] * ratio**2
        if cell_model.hetero:
            # a heterojunction: each side's diffusion J01 follows its own n_i^2
            base = details["j01_base_A_m2"]
            diffusion = ((details["j01_diffusion_A_m2"] - base) * ni_ratio(model.materials[cell_model.emitter])**2
                         + base * ni_ratio(model.materials[cell_model.base])**2)
        emitter_layer, base_layer = model.layers[cell_model.emitter], model.layers[cell_model.base]
        narrowing_e = _narrowing_ratio(emitter_layer, temperature_K, t0)
        narrowing_b = _narrowing_ratio(base_layer, temperature_K, t0)
        if is_silicon(emitter_layer) or is_silicon(base_layer):
            # Si layers: n_i,eff^2 also carries exp(dEg(T) / kT) of their gap narrowing
            emitter_j0 = details["j0_emitter_A_m2"]
            ratio_e, ratio_b = ((ni_ratio(model.materials[cell_model.emitter]),
                                 ni_ratio(model.materials[cell_model.base])) if cell_model.hetero
                                else (ratio, ratio))
            diffusion = (emitter_j0 * ratio_e**2 * narrowing_e
                         + (details["j01_diffusion_A_m2"] - emitter_j0) * ratio_b**2 * narrowing_b)
        gap = np.asarray(material.gap_eV(temperature_K), dtype=float)
        floor = radiative_saturation_current(gap, temperature_K=temperature_K) \
            * (details.get("radiative_front_factor", 1.0) + details.get("radiative_rear_factor", 0.0))
        # a Si cell's base law holds its radiative recombination: no floor; its ni,eff follows
        j01 = diffusion if details.get("silicon_base_law") else diffusion + floor
        if details.get("ere") is not None:      # the measured ERE held at every temperature
            j01 = radiative_saturation_current(gap, temperature_K=temperature_K) / details["ere"]
        elif not details.get("silicon_base_law") and "downward_emission_ratio" in details:
            # as at compile time (circuit/layer_coupling.py): at least the emission the coupling
            # to the subcell below counts
            j01 = np.maximum(j01, radiative_saturation_current(gap, temperature_K=temperature_K)
                             * (details.get("radiative_front_factor", 1.0) + details["downward_emission_ratio"]))
        j02 = float(cell.j02_A_m2.reshape(-1)[0]) * ratio
        # the last: the Si base law's n_i ratio (the base's material; the absorber's for one)
        bulk_ratio = (ni_ratio(model.materials[cell_model.base]) if cell_model.hetero else ratio) \
            * np.sqrt(narrowing_b)
        out[cell.name] = (j01, j02, gap, bulk_ratio)
    return out
