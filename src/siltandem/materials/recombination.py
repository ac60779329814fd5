"""Radiative coefficients and doping-dependent mobilities of the III-V materials.

The data live in the material files themselves (each value with its source): ``[radiative]
coefficient_cm3_s`` and ``[mobility.electron_doping]`` / ``[mobility.hole_doping]`` (mu_max_cm2_V_s,
mu_min_cm2_V_s, n_ref_cm3, lambda, theta1, theta2), so that a user's copy of a library file keeps
them. Two lookups for a :class:`~siltandem.materials.Material` and the name it was loaded by (a
library name or the path of a material file):

* :func:`radiative_coefficient_cm3_s` - the band-to-band coefficient B [cm^3/s] (None where the
  data have none), so that a layer doped N has the low-injection radiative lifetime 1 / (B N);
* :func:`minority_mobility_cm2_V_s` - the Caughey-Thomas mobility of electrons or holes at a
  doping and temperature (M. Sotoodeh, A. H. Khalid, A. A. Rezazadeh, J. Appl. Phys. 87 (2000)
  2890), None where the data have no parameters for the material (then the library's fixed
  mobility stays).

An alloy file may give its own ``[mobility.electron_doping]`` / ``[mobility.hole_doping]`` with a
``composition_range = [x_low, x_high]``: within that range its law is used as written (published
parameters of one composition). Elsewhere, alloys take their end members' parameters where both
end members have the alloy's lowest valley
(mu_max and mu_min with 1/mu linear in x, Matthiessen's rule as for the library's fixed alloy
mobilities; N_ref log-linear; lambda and the temperature exponents linear; common practice, no
source). Where an end member's lowest valley differs (GaInP and GaAsP with indirect GaP, AlGaAs
with indirect AlAs) interpolating its mobility would mix valleys: None, and the library's fixed
mobility stays. Sotoodeh et al. give a fuller ternary rule with alloy scattering, not reproduced.
Where an alloy's own law gives a ``composition_range`` and a composition outside it has no
interpolation either, :func:`uncovered_composition_range` says so, and the layer compiler refuses
the layer subcell with a StackError (the library's GaInP law holds for 0.48 <= x <= 0.54).
"""
from __future__ import annotations

import numpy as np

__all__ = ["caughey_thomas_mobility", "material_document", "radiative_coefficient_cm3_s",
           "minority_mobility_cm2_V_s", "mobility_source", "uncovered_composition_range"]

_CARRIERS = ("electron", "hole")


def material_document(name, material=None):
    """The parsed data file of a material: the path of a user's material file, or a library name
    (an alloy written with its fractions, "Ga0.51In0.49P", is found by ``material``'s family)."""
    from siltandem.materials import userfiles
    from siltandem.materials.library import library_document

    if userfiles.is_material_file(name):
        return userfiles.read_material_file(name)[0]
    found = library_document(name)
    if found is None and material is not None:
        found = library_document(material.family)
    return None if found is None else found[2]


def caughey_thomas_mobility(doping_cm3, *, mu_max_cm2_V_s, mu_min_cm2_V_s, n_ref_cm3, exponent,
                            temperature_K=300.0, theta1=0.0, theta2=0.0):
    """Caughey-Thomas mobility [cm^2/(V s)] at total doping ``doping_cm3`` [cm^-3].

    Notes
    -----
    mu = mu_min + (mu_max (300/T)^theta1 - mu_min) / (1 + (N / (N_ref (T/300)^theta2))^lambda);
    mu -> mu_max (lattice-limited) for N << N_ref and -> mu_min for N >> N_ref.

    References
    ----------
    D. M. Caughey, R. E. Thomas, Proc. IEEE 55 (1967) 2192; temperature form of M. Sotoodeh et
    al., J. Appl. Phys. 87 (2000) 2890.
    """
    n = np.asarray(doping_cm3, dtype=float)
    t = np.asarray(temperature_K, dtype=float) / 300.0
    lattice = mu_max_cm2_V_s * t ** (-theta1)
    return mu_min_cm2_V_s + (lattice - mu_min_cm2_V_s) / (1.0 + (n / (n_ref_cm3 * t**theta2)) ** exponent)


def _end_members(material, document):
    """(file data at x = 1, at x = 0, x) of an alloy; None for a binary."""
    from siltandem.materials.library import library_document

    if document.get("kind") != "alloy" or material.composition is None:
        return None
    ends = [library_document(document[key]) for key in ("end_at_x1", "end_at_x0")]
    if None in ends:
        return None
    return ends[0][2], ends[1][2], float(material.composition)


def radiative_coefficient_cm3_s(material, document):
    """Radiative coefficient B [cm^3/s] at 300 K from the material's data file (``document``), or
    None. An alloy's entry holds for its direct compositions only (None where it is indirect)."""
    entry = (document or {}).get("radiative")
    if entry is None or (material.composition is not None and not material.direct_300K):
        return None
    return float(entry["coefficient_cm3_s"])


def _parameters(document, carrier):
    law = document.get("mobility", {}).get(f"{carrier}_doping")
    if law is None:
        return None
    return dict(mu_max_cm2_V_s=law["mu_max_cm2_V_s"], mu_min_cm2_V_s=law["mu_min_cm2_V_s"],
                n_ref_cm3=law["n_ref_cm3"], exponent=law["lambda"], theta1=law.get("theta1", 0.0),
                theta2=law.get("theta2", 0.0))


def minority_mobility_cm2_V_s(material, document, doping_cm3, carrier, *, temperature_K=300.0):
    """Mobility [cm^2/(V s)] of ``carrier`` ("electron" or "hole") in ``material`` doped
    ``doping_cm3`` [cm^-3] (Caughey-Thomas, Sotoodeh et al. 2000), or None without data
    (``document``: the material's parsed data file).

    The law is fitted to majority-carrier mobilities; it stands in for the minority carriers'
    (common practice, no source; minority electrons in p-GaAs are measured somewhat faster).
    """
    if carrier not in _CARRIERS:
        raise ValueError(f"carrier must be one of {_CARRIERS}, not {carrier!r}")
    if document is None:
        return None
    ends = _end_members(material, document)
    own = _alloy_parameters(document, carrier, material.composition) if ends is not None else None
    if own is not None:
        parts = own
    elif ends is None:
        parts = _parameters(document, carrier)
        if parts is None:
            return None
    else:
        one, zero, x = ends
        if not all(_lowest_valley(end["name"]) == material.lowest_valley_300K for end in (one, zero)):
            return None
        p1, p0 = _parameters(one, carrier), _parameters(zero, carrier)
        if p1 is None or p0 is None:
            return None
        lin = lambda key: x * p1[key] + (1.0 - x) * p0[key]  # noqa: E731
        harmonic = lambda key: 1.0 / (x / p1[key] + (1.0 - x) / p0[key])  # noqa: E731
        parts = dict(mu_max_cm2_V_s=harmonic("mu_max_cm2_V_s"), mu_min_cm2_V_s=harmonic("mu_min_cm2_V_s"),
                     n_ref_cm3=float(np.exp(x * np.log(p1["n_ref_cm3"]) + (1 - x) * np.log(p0["n_ref_cm3"]))),
                     exponent=lin("exponent"), theta1=lin("theta1"), theta2=lin("theta2"))
    return float(caughey_thomas_mobility(doping_cm3, temperature_K=temperature_K, **parts))


def _alloy_parameters(document, carrier, composition):
    """An alloy file's own ``[mobility.<carrier>_doping]`` law where its ``composition_range``
    [x_low, x_high] (default: every composition) holds ``composition``: published parameters of
    one composition (e.g. lattice-matched Ga0.51In0.49P) replace the end members' interpolation
    there. None without such a law, or outside its range."""
    law = document.get("mobility", {}).get(f"{carrier}_doping")
    if law is None:
        return None
    low, high = law.get("composition_range", (0.0, 1.0))
    if not float(low) <= float(composition) <= float(high):
        return None
    return _parameters(document, carrier)


def mobility_source(material, document, carrier):
    """The source of the law :func:`minority_mobility_cm2_V_s` uses for ``carrier`` (text; "" where
    it uses none): the file's own law's ``source``, or the end members' interpolation."""
    if document is None or minority_mobility_cm2_V_s(material, document, 1e17, carrier) is None:
        return ""
    ends = _end_members(material, document)
    if ends is None or _alloy_parameters(document, carrier, material.composition) is not None:
        return str(document["mobility"][f"{carrier}_doping"].get("source", ""))
    one, zero, _ = ends
    return ("1/mu_max, 1/mu_min linear in x between the end members' laws (common practice, no source): "
            + "; ".join(f"{end['name']}: {end['mobility'][f'{carrier}_doping'].get('source', '')}"
                        for end in (one, zero)))


def uncovered_composition_range(material, document, carrier):
    """``(x_low, x_high, source)`` of an alloy's own ``[mobility.<carrier>_doping]`` law where
    ``material``'s composition lies outside its ``composition_range`` and the end members'
    interpolation gives nothing either; else None. The layer compiler refuses such a layer
    subcell (its minority mobility would have no source) rather than fall back silently."""
    if document is None or _end_members(material, document) is None:
        return None
    law = document.get("mobility", {}).get(f"{carrier}_doping")
    if law is None or "composition_range" not in law:
        return None
    if minority_mobility_cm2_V_s(material, document, 1e17, carrier) is not None:
        return None
    low, high = law["composition_range"]
    return float(low), float(high), str(law.get("source", ""))


def _lowest_valley(name):
    from siltandem.materials import load_material

    return load_material(name).lowest_valley_300K
