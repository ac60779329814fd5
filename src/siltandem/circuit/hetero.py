"""A heterojunction subcell's band diagram: its band offsets, built-in voltage and depletion widths
(laws/heterojunction.py), and the checks that refuse a pair of layers that makes no working cell.

Model (stated in the README): R. L. Anderson, Solid-State Electron. 5 (1962) 341; S. M. Sze,
K. K. Ng, Physics of Semiconductor Devices, 3rd ed. (2007), ch. 2. The valence-band offset comes
from the measured scale of materials/offsets.py (I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan,
J. Appl. Phys. 89 (2001) 5815) where both materials are on it, else from the electron-affinity
rule; the conduction band follows with each side's gap at the temperature.

What is refused, each with its reason and fix:

* a spike in the band of the absorber's minority carriers (the narrower-gap side's; both sides
  where the gaps are equal) that thermionic emission cannot pass with 100 times a photocurrent of
  ``MAX_PHOTOCURRENT_A_M2`` x suns (laws/heterojunction.largest_crossable_spike_eV): the carriers
  the cell makes cannot leave it;
* a pair whose Fermi levels leave less than ``MIN_BUILT_IN_THERMAL`` kT/q of built-in voltage
  (gaps and offsets so different that no junction field separates the carriers; a broken-gap
  alignment among them).
"""
from types import SimpleNamespace

import numpy as np

from siltandem.constants import thermal_voltage_V
from siltandem.errors import StackError
from siltandem.laws import heterojunction as law

#: a bound on any subcell's photocurrent at one sun [A/m^2] (70 mA/cm^2, above the AM1.5G current
#: of a 0.5 eV absorber; common practice, no source)
MAX_PHOTOCURRENT_A_M2 = 700.0
#: the least built-in voltage of a working junction, in kT/q (common practice, no source)
MIN_BUILT_IN_THERMAL = 10.0


def band_edges(upper, lower, temperature_K):
    """(Ec, Ev) of the upper and the lower material on one scale [eV], and the offset's source."""
    from siltandem.circuit.isotype import band_offset

    gap_u, gap_l = float(upper.gap_eV(temperature_K)), float(lower.gap_eV(temperature_K))
    step, source = band_offset(upper, lower, "hole", temperature_K)
    if step is None:      # electron-affinity rule: Ec = -chi
        ec_u, ec_l = -upper.electron_affinity_eV, -lower.electron_affinity_eV
        return (ec_u, ec_u - gap_u), (ec_l, ec_l - gap_l), source
    return (step + gap_u, step), (gap_l, 0.0), source


def _spike(edges_from, edges_to, carrier):
    """The step [eV] a carrier meets going from one side to the other (> 0: a spike)."""
    (ec_from, ev_from), (ec_to, ev_to) = edges_from, edges_to
    return ec_to - ec_from if carrier == "electron" else ev_from - ev_to


def heterojunction(emitter, base, emitter_material, base_material, *, temperature_K, suns, file,
                   name):
    """Band diagram of a heterojunction subcell at zero bias, checked to make a working cell.

    Returns a namespace with ``built_in_V``, ``width_m``, ``n_side_width_m``, ``p_side_width_m``
    (as laws/junction.abrupt_junction), ``edges`` (emitter, base), ``source`` and ``spikes`` (the
    steps met by each side's minority carriers crossing to the other [eV]).
    """
    where = f"{emitter.label} / {base.label}"
    (e_edges, b_edges, source) = band_edges(emitter_material, base_material, temperature_K)
    n_is_emitter = emitter.polarity == "n"
    n_layer, p_layer = (emitter, base) if n_is_emitter else (base, emitter)
    n_mat, p_mat = (emitter_material, base_material) if n_is_emitter else (base_material, emitter_material)
    n_edges, p_edges = (e_edges, b_edges) if n_is_emitter else (b_edges, e_edges)
    na, nd = p_layer.doping_cm3 * 1e6, n_layer.doping_cm3 * 1e6
    vbi = float(law.built_in_voltage_V(
        acceptor_density_m3=na, donor_density_m3=nd,
        n_intrinsic_density_m3=n_mat.intrinsic_density_per_m3(temperature_K),
        p_intrinsic_density_m3=p_mat.intrinsic_density_per_m3(temperature_K),
        n_band_edges_eV=n_edges, p_band_edges_eV=p_edges,
        n_states_m3=(n_mat.conduction_dos_per_m3(temperature_K), n_mat.valence_dos_per_m3(temperature_K)),
        p_states_m3=(p_mat.conduction_dos_per_m3(temperature_K), p_mat.valence_dos_per_m3(temperature_K)),
        temperature_K=temperature_K, where=name))
    vt = float(thermal_voltage_V(temperature_K))
    gaps = {"emitter": float(emitter_material.gap_eV(temperature_K)),
            "base": float(base_material.gap_eV(temperature_K))}
    if not vbi > MIN_BUILT_IN_THERMAL * vt:
        raise StackError(
            f"{emitter.label} ({emitter_material.name}, gap {gaps['emitter']:.2f} eV) and {base.label} "
            f"({base_material.name}, gap {gaps['base']:.2f} eV) leave a built-in voltage of {vbi:.3f} V "
            f"(band offsets: {source}): their bands are so far apart that no junction field separates "
            "the carriers, and the pair makes no cell", file=file, where=where,
            fix="choose an emitter and a base of closer band edges (e.g. the same absorber, or a window "
                "alloy of the absorber), or set offset_eV on an isotype layer between them")
    # minority carriers of each side cross the interface into the other side
    minority = {"emitter": "hole" if emitter.polarity == "n" else "electron"}
    minority["base"] = "electron" if minority["emitter"] == "hole" else "hole"
    spikes = {"emitter": _spike(e_edges, b_edges, minority["emitter"]),
              "base": _spike(b_edges, e_edges, minority["base"])}
    narrow = min(gaps.values())
    for side in ("emitter", "base"):
        if gaps[side] > narrow or spikes[side] <= 0:
            continue
        other = base_material if side == "emitter" else emitter_material
        richardson = (other.electron_richardson_A_m2_K2 if minority[side] == "electron"
                      else other.hole_richardson_A_m2_K2)
        limit = float(law.largest_crossable_spike_eV(
            richardson_A_m2_K2=richardson, photocurrent_A_m2=MAX_PHOTOCURRENT_A_M2 * max(suns, 1.0),
            temperature_K=temperature_K, where=name))
        if spikes[side] > limit:
            layer = emitter if side == "emitter" else base
            band = "conduction" if minority[side] == "electron" else "valence"
            raise StackError(
                f"the heterojunction {emitter.label} / {base.label} has a {spikes[side]:.2f} eV spike in the "
                f"{band} band (offsets: {source}) that blocks the {minority[side]}s made in {layer.label}, "
                f"the absorber (gap {gaps[side]:.2f} eV): thermionic emission passes less than 100 times the "
                f"photocurrent over more than {limit:.2f} eV, so the cell would collect nothing",
                file=file, where=where,
                fix="choose a partner layer whose band edge lies at most "
                    f"{limit:.2f} eV beyond the absorber's (e.g. less aluminium in the wide-gap alloy), or "
                    "make the junction a homojunction of the absorber")
    depletion = law.depletion(0.0, built_in_V=vbi, acceptor_density_m3=na, donor_density_m3=nd,
                              n_relative_permittivity=n_mat.relative_permittivity,
                              p_relative_permittivity=p_mat.relative_permittivity, where=name)
    return SimpleNamespace(built_in_V=vbi, width_m=float(depletion.width_m),
                           n_side_width_m=float(depletion.n_side_width_m),
                           p_side_width_m=float(depletion.p_side_width_m),
                           edges=(e_edges, b_edges), source=source, spikes=spikes,
                           gaps=gaps, narrow_gap_eV=float(narrow))


def narrower(emitter_material, base_material, temperature_K):
    """"emitter" or "base": the side of the smaller gap (the emitter on a tie), whose material sets
    the subcell's gap, radiative floor and depletion-region recombination."""
    return ("emitter" if np.all(np.asarray(emitter_material.gap_eV(temperature_K))
                                <= np.asarray(base_material.gap_eV(temperature_K))) else "base")
