"""Registry and lookup of the materials library: TOML data files in, frozen :class:`Material` out.

Each ``*.toml`` beside this module describes one element, binary or alloy (format: notes/materials.md).
Alloys are built from their two end binaries: each valley gap is interpolated at the temperature asked
for with the file's bowing parameters; other quantities are linear in the composition unless the file
gives a table or a rule.
"""
from __future__ import annotations

import dataclasses
import difflib
import functools
import math
import re
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from types import MappingProxyType
from collections.abc import Mapping

import numpy as np

from siltandem.constants import BOLTZMANN_EV_K, HC_EV_NM, RICHARDSON_FREE_A_M2_K2
from siltandem.laws.carriers import effective_density_of_states_per_m3
from siltandem.laws.haze import free_carrier_absorption_per_m
from siltandem.materials import models

__all__ = ["Material", "MaterialError", "load_material", "list_materials", "describe_library"]

REFERENCE_TEMPERATURE_K = 300.0
_CM2_TO_M2 = 1e-4
_PER_CM_TO_PER_M = 100.0
_PER_CM3_TO_PER_M3 = 1e6
_GROUPS = ({"Al", "Ga", "In"}, {"P", "As"})


class MaterialError(ValueError):
    """A material name, composition or data file the library cannot use; the message says how to fix it."""


# ----------------------------------------------------------------------------------------------- records
@dataclass(frozen=True)
class _GapLaw:
    """Temperature law of one valley of one binary: Varshni, or VMR's Bose-Einstein form for GaP Gamma."""
    gap_0K_eV: float
    alpha_eV_K: float = 0.0
    beta_K: float = 0.0
    bose_strength_eV: float | None = None
    bose_temperature_K: float | None = None

    def __call__(self, temperature_K):
        if self.bose_strength_eV is not None:
            return models.bose_einstein_gap_eV(temperature_K, gap_0K_eV=self.gap_0K_eV,
                                               strength_eV=self.bose_strength_eV,
                                               temperature_scale_K=self.bose_temperature_K)
        return models.varshni_gap_eV(temperature_K, gap_0K_eV=self.gap_0K_eV, alpha_eV_K=self.alpha_eV_K,
                                     beta_K=self.beta_K)


@dataclass(frozen=True)
class _Valley:
    """One conduction-band valley: gap(T) = sum of weight * binary law + bowing offset."""
    name: str
    terms: tuple
    offset_eV: float
    dos_mass: float          # density-of-states mass of all equivalent valleys together [m0]
    richardson_ratio: float  # A*/A of all equivalent valleys, emission along [100]

    def gap_eV(self, temperature_K):
        return sum(w * law(temperature_K) for w, law in self.terms) + self.offset_eV


@dataclass(frozen=True)
class _Optics:
    table_nm: np.ndarray | None
    table_log_alpha: np.ndarray | None     # ln(alpha / m^-1)
    direct: Mapping | None
    indirect: Mapping | None
    scale_short: float = 1.0
    scale_long: float = 1.0
    index_nm: np.ndarray = None
    index_n: np.ndarray = None


# ---------------------------------------------------------------------------------------------- Material
@dataclass(frozen=True)
class Material:
    """Properties of one material at 300 K, with methods for other temperatures and for optics.

    SI units (m^-3, m^2/(V s), A m^-2 K^-2), band energies in eV, wavelengths in nm, masses over m0.
    ``sources`` maps each data group (e.g. ``"valleys.Gamma"``, ``"mobility"``) to its source string.
    """
    name: str
    family: str
    composition: float | None
    formula: str
    gap_300K_eV: float
    direct_300K: bool
    lowest_valley_300K: str
    electron_affinity_eV: float
    relative_permittivity: float
    electron_dos_mass_ratio: float
    hole_dos_mass_ratio: float
    conduction_dos_300K_per_m3: float
    valence_dos_300K_per_m3: float
    intrinsic_density_300K_per_m3: float
    electron_richardson_A_m2_K2: float
    hole_richardson_A_m2_K2: float
    electron_mobility_m2_V_s: float
    hole_mobility_m2_V_s: float
    note: str = ""
    sources: Mapping = field(default_factory=dict, compare=False, repr=False)
    _valleys: tuple = field(default=(), compare=False, repr=False)
    _hole_dos_mass: float = field(default=math.nan, compare=False, repr=False)
    _conduction_300K_override_per_m3: float | None = field(default=None, compare=False, repr=False)
    _optics: _Optics = field(default=None, compare=False, repr=False)
    #: light-hole mass along [001] [m0] (Luttinger parameters where the data give them); the
    #: tunnelling mass of a p++ layer
    light_hole_mass_ratio: float = field(default=math.nan, compare=False)
    #: free-carrier absorption coefficients ([free_carrier_absorption] of the data file) or None
    _free_carriers: Mapping | None = field(default=None, compare=False, repr=False)
    #: ni / (sqrt(Nc Nv) exp(-Eg/2kT)): 1, or the data file's measured ni at 300 K over the formula's
    _intrinsic_scale: float = field(default=1.0, compare=False, repr=False)

    # --- band edges -----------------------------------------------------------------------------------
    def valley_gaps_eV(self, temperature_K=REFERENCE_TEMPERATURE_K):
        """Gap to each conduction valley [eV] at ``temperature_K`` [K]: dict valley name -> ndarray."""
        return {v.name: np.asarray(v.gap_eV(temperature_K), dtype=float) for v in self._valleys}

    def gap_eV(self, temperature_K=REFERENCE_TEMPERATURE_K):
        """Lowest gap [eV] at ``temperature_K`` [K] (Varshni law of each valley, alloy bowing applied)."""
        return np.min(np.stack(np.broadcast_arrays(*self.valley_gaps_eV(temperature_K).values())), axis=0)

    def is_direct(self, temperature_K=REFERENCE_TEMPERATURE_K):
        """True where the Gamma valley is the lowest at ``temperature_K`` [K]."""
        gaps = self.valley_gaps_eV(temperature_K)
        if "Gamma" not in gaps:
            return np.zeros(np.shape(temperature_K), dtype=bool)
        return gaps["Gamma"] <= self.gap_eV(temperature_K)

    def conduction_dos_per_m3(self, temperature_K=REFERENCE_TEMPERATURE_K):
        """Effective conduction-band density of states Nc [m^-3] at ``temperature_K`` [K].

        Notes
        -----
        Nc = sum over valleys of 2 (2 pi m_v kT / h^2)^1.5 exp(-(E_v - E_min)/kT) (Boltzmann statistics;
        each valley scales as T^1.5, upper valleys add a little more with rising T). A density given in
        the data file replaces the sum and scales as (T/300)^1.5.
        """
        t = np.asarray(temperature_K, dtype=float)
        if self._conduction_300K_override_per_m3 is not None:
            return self._conduction_300K_override_per_m3 * (t / REFERENCE_TEMPERATURE_K) ** 1.5
        e_min = self.gap_eV(t)
        kt = BOLTZMANN_EV_K * t
        return sum(effective_density_of_states_per_m3(t, mass_ratio=v.dos_mass)
                   * np.exp(-(v.gap_eV(t) - e_min) / kt) for v in self._valleys)

    def valence_dos_per_m3(self, temperature_K=REFERENCE_TEMPERATURE_K):
        """Effective valence-band density of states Nv [m^-3] at ``temperature_K`` [K]; Nv ~ T^1.5."""
        return effective_density_of_states_per_m3(temperature_K, mass_ratio=self._hole_dos_mass)

    def intrinsic_density_per_m3(self, temperature_K=REFERENCE_TEMPERATURE_K):
        """ni = s sqrt(Nc Nv) exp(-Eg / 2kT) [m^-3], no gap narrowing; s meets a file's measured 300 K ni."""
        t = np.asarray(temperature_K, dtype=float)
        return self._intrinsic_scale * np.sqrt(self.conduction_dos_per_m3(t) * self.valence_dos_per_m3(t)) * np.exp(
            -self.gap_eV(t) / (2.0 * BOLTZMANN_EV_K * t))

    # --- optics ---------------------------------------------------------------------------------------
    def absorption_per_m(self, wavelength_nm, temperature_K=REFERENCE_TEMPERATURE_K):
        """Absorption coefficient alpha [m^-1] at ``wavelength_nm`` [nm] and ``temperature_K`` [K].

        Tabulated materials: the 300 K table, interpolated linearly in ln(alpha); outside it the parametric
        model scaled to meet the table's end value; at other temperatures the whole 300 K curve shifted in
        photon energy by the change of the lowest gap. Other materials: the parametric model at the
        temperature asked for. Zero below the edge (more than ten Urbach energies below a direct gap, or
        more than one phonon energy below an indirect gap). Arrays broadcast.
        """
        energy = HC_EV_NM / np.asarray(wavelength_nm, dtype=float)
        t = np.asarray(temperature_K, dtype=float)
        if self._optics.table_nm is None:
            return self._parametric_of_energy(energy, t)
        shift = self.gap_eV(t) - self.gap_eV(REFERENCE_TEMPERATURE_K)
        return self._absorption_300K_of_energy(energy - shift)

    def parametric_absorption_per_m(self, wavelength_nm, temperature_K=REFERENCE_TEMPERATURE_K):
        """The parametric absorption model alone [m^-1], without any table or end-point scaling."""
        energy = HC_EV_NM / np.asarray(wavelength_nm, dtype=float)
        return self._parametric_of_energy(energy, np.asarray(temperature_K, dtype=float))

    def refractive_index(self, wavelength_nm):
        """Real refractive index at ``wavelength_nm`` [nm]: linear in the table, held at its end values."""
        return np.interp(np.asarray(wavelength_nm, dtype=float), self._optics.index_nm, self._optics.index_n)

    @property
    def has_free_carrier_absorption(self):
        """True if the data file gives free-carrier absorption coefficients."""
        return self._free_carriers is not None

    def free_carrier_absorption_per_m(self, wavelength_nm, *, electron_density_m3=0.0, hole_density_m3=0.0):
        """Free-carrier absorption [m^-1] at ``wavelength_nm`` [nm] for the given free electron and hole
        densities [m^-3] (laws.haze.free_carrier_absorption_per_m with the data file's coefficients);
        zero where the data file gives none."""
        if self._free_carriers is None:
            return np.zeros(np.shape(wavelength_nm))
        return free_carrier_absorption_per_m(wavelength_nm, electron_density_m3=electron_density_m3,
                                             hole_density_m3=hole_density_m3, **self._free_carriers)

    def _absorption_300K_of_energy(self, energy_eV):
        optics = self._optics
        e = np.asarray(energy_eV, dtype=float)
        with np.errstate(divide="ignore"):
            lam = np.where(e > 0, HC_EV_NM / np.where(e > 0, e, 1.0), np.inf)
        inside = np.exp(np.interp(lam, optics.table_nm, optics.table_log_alpha))
        model = self._parametric_of_energy(np.where(e > 0, e, 0.0), np.asarray(REFERENCE_TEMPERATURE_K))
        alpha = np.where(lam < optics.table_nm[0], optics.scale_short * model,
                         np.where(lam > optics.table_nm[-1], optics.scale_long * model, inside))
        return np.where(e > 0, alpha, 0.0)

    def _parametric_of_energy(self, energy_eV, temperature_K):
        optics = self._optics
        e = np.asarray(energy_eV, dtype=float)
        total = np.zeros(np.broadcast_shapes(e.shape, np.shape(temperature_K)))
        gaps = self.valley_gaps_eV(temperature_K)
        direct = optics.direct
        if direct is not None and direct["kind"] == "shift":
            reference = direct["reference"]
            shift = gaps["Gamma"] - reference.valley_gaps_eV(REFERENCE_TEMPERATURE_K)["Gamma"]
            total = total + reference._absorption_300K_of_energy(e - shift)
        elif direct is not None:
            gap = direct["gap"](temperature_K) if direct["gap"] is not None else gaps["Gamma"]
            total = total + models.direct_absorption_per_m(
                e, gap_eV=gap, strength_per_m_eV_half=direct["strength"], urbach_energy_eV=direct["urbach"])
        indirect = optics.indirect
        if indirect is not None:
            if indirect["gaps"] is not None:
                indirect_gaps = [law(temperature_K) for law in indirect["gaps"]]
            else:
                indirect_gaps = [np.minimum(gaps.get("X", np.inf), gaps.get("L", np.inf))]
            total = total + models.phonon_assisted_absorption_per_m(
                e, gaps_eV=indirect_gaps, strengths_per_m_eV2=indirect["strengths"],
                phonon_energies_eV=indirect["phonons"], phonon_weights=indirect["weights"],
                temperature_K=temperature_K)
        return total

    # --- reporting ------------------------------------------------------------------------------------
    def source(self, key):
        """Source string of data group ``key`` (e.g. ``"valleys.Gamma"``); MaterialError if unknown."""
        if key not in self.sources:
            raise MaterialError(f"material '{self.name}': no source entry '{key}'; "
                                f"known entries: {', '.join(sorted(self.sources))}")
        return self.sources[key]

    def summary_rows(self):
        """(quantity, value, unit, source key) rows of the 300 K properties, in the trade's units."""
        valley_key = f"valleys.{self.lowest_valley_300K}"
        return [
            ("lowest gap", self.gap_300K_eV, "eV", valley_key),
            ("lowest valley", self.lowest_valley_300K + (" (direct)" if self.direct_300K else " (indirect)"),
             "", valley_key),
            ("electron affinity", self.electron_affinity_eV, "eV", "electron_affinity"),
            ("relative permittivity", self.relative_permittivity, "", "permittivity"),
            ("electron DOS mass", self.electron_dos_mass_ratio, "m0", valley_key),
            ("hole DOS mass", self.hole_dos_mass_ratio, "m0", "holes"),
            ("Nc", self.conduction_dos_300K_per_m3 / _PER_CM3_TO_PER_M3, "cm^-3", valley_key),
            ("Nv", self.valence_dos_300K_per_m3 / _PER_CM3_TO_PER_M3, "cm^-3", "holes"),
            ("ni", self.intrinsic_density_300K_per_m3 / _PER_CM3_TO_PER_M3, "cm^-3", valley_key),
            ("electron Richardson constant", self.electron_richardson_A_m2_K2 * 1e-4, "A cm^-2 K^-2",
             "richardson"),
            ("hole Richardson constant", self.hole_richardson_A_m2_K2 * 1e-4, "A cm^-2 K^-2", "richardson"),
            ("electron mobility", self.electron_mobility_m2_V_s / _CM2_TO_M2, "cm^2 V^-1 s^-1", "mobility"),
            ("hole mobility", self.hole_mobility_m2_V_s / _CM2_TO_M2, "cm^2 V^-1 s^-1", "mobility"),
        ]


# ------------------------------------------------------------------------------------------- data files
@functools.lru_cache(maxsize=1)
def _registry():
    """name -> (file name, parsed TOML); plus a lower-case lookup of names and aliases."""
    records, lookup = {}, {}
    for entry in sorted(resources.files("siltandem.materials").iterdir(), key=lambda p: p.name):
        if not entry.name.endswith(".toml"):
            continue
        try:
            data = tomllib.loads(entry.read_text(encoding="utf-8"))
        except tomllib.TOMLDecodeError as exc:
            raise MaterialError(f"materials data file {entry.name}: not valid TOML ({exc}); fix the file") from exc
        name = _require(data, "name", entry.name)
        records[name] = (entry.name, data)
        for alias in [name, *data.get("aliases", [])]:
            lookup[alias.lower()] = name
    return MappingProxyType(records), MappingProxyType(lookup)


def _require(table, key, file_name, where=""):
    if key not in table:
        place = f"[{where}] " if where else ""
        raise MaterialError(f"materials data file {file_name}: {place}key '{key}' is missing; add it")
    return table[key]


def list_materials():
    """Names of every material in the library, sorted."""
    return sorted(_registry()[0])


def describe_library():
    """One dict per material: name, kind, formula, composition element (alloys), description."""
    rows = []
    for name in list_materials():
        data = _registry()[0][name][1]
        rows.append({"name": name, "kind": data["kind"], "formula": data.get("formula", name),
                     "composition_element": data.get("composition_element"),
                     "description": data.get("description", "")})
    return rows


# ------------------------------------------------------------------------------------- name resolution
def _suggestions(name):
    records, lookup = _registry()
    close = difflib.get_close_matches(name.lower(), list(lookup), n=3, cutoff=0.5)
    names = list(dict.fromkeys(lookup[c] for c in close))
    if names:
        return "did you mean " + " or ".join(f"'{n}'" for n in names) + "?"
    return "known materials: " + ", ".join(list_materials())


def _parse_formula(name):
    """'Ga0.51In0.49P' -> ('GaInP', 0.51), or None when the name is not a formula with fractions."""
    if not re.fullmatch(r"(?:[A-Z][a-z]?(?:\d+(?:\.\d*)?|\.\d+)?)+", name):
        return None
    parts = re.findall(r"([A-Z][a-z]?)(\d+(?:\.\d*)?|\.\d+)?", name)
    if not any(frac for _, frac in parts):
        return None
    elements = [el for el, _ in parts]
    if any(not any(el in g for g in _GROUPS) for el in elements) or len(set(elements)) != len(elements):
        return None
    fractions = {}
    for group in _GROUPS:
        members = [(el, frac) for el, frac in parts if el in group]
        if len(members) == 2:
            given = [float(f) if f else None for _, f in members]
            if given[0] is None and given[1] is None:
                return None
            if given[0] is None:
                given[0] = 1.0 - given[1]
            if given[1] is None:
                given[1] = 1.0 - given[0]
            if abs(given[0] + given[1] - 1.0) > 1e-3:
                raise MaterialError(
                    f"material '{name}': fractions {members[0][0]}{given[0]:g} + {members[1][0]}{given[1]:g} "
                    f"add up to {given[0] + given[1]:g}, not 1; make the two fractions of the mixed "
                    f"sublattice add up to 1 (e.g. 'Ga0.51In0.49P')")
            fractions.update({el: g for (el, _), g in zip(members, given)})
    for family, (_, data) in _registry()[0].items():
        if data.get("kind") == "alloy" and set(_formula_elements(data)) == set(elements):
            element = data["composition_element"]
            if element not in fractions:
                return None
            return family, fractions[element]
    raise MaterialError(f"material '{name}': no alloy of {', '.join(elements)} in the library; "
                        f"alloys known: {', '.join(n for n in list_materials() if _is_alloy(n))}")


def _formula_elements(data):
    return re.findall(r"[A-Z][a-z]?", data["formula"])


def _is_alloy(name):
    return _registry()[0][name][1].get("kind") == "alloy"


def _check_composition(family, data, composition):
    if data.get("kind") != "alloy":
        if composition is not None:
            raise MaterialError(f"material '{family}': key 'composition' = {composition!r} given, but {family} "
                                f"is a fixed compound and takes no composition; leave composition out")
        return None
    formula, element = data["formula"], data["composition_element"]
    hint = (f"{family} is the alloy {formula}: give composition = x, the {element} fraction from 0 to 1, "
            f"e.g. load_material('{family}', composition={data.get('example_composition', 0.5)})")
    if composition is None:
        raise MaterialError(f"material '{family}': key 'composition' is missing; {hint}")
    if isinstance(composition, bool) or not isinstance(composition, (int, float, np.integer, np.floating)):
        raise MaterialError(f"material '{family}': key 'composition' = {composition!r} is not a number; {hint}")
    x = float(composition)
    if not (0.0 <= x <= 1.0):
        raise MaterialError(f"material '{family}': key 'composition' = {composition!r} is outside [0, 1]; {hint}")
    return x


def load_material(name, composition=None):
    """Look up a material of the library and return its :class:`Material` at the given composition.

    Parameters
    ----------
    name : str
        A library name or alias (case-insensitive), e.g. ``"GaAs"``, ``"GaInP"``; or an alloy written
        with its fractions, e.g. ``"Ga0.51In0.49P"``, ``"Al0.3Ga0.7As"``, ``"GaAs0.77P0.23"``.
    composition : float, optional
        For an alloy named without fractions: x of the alloy's formula (``list_materials`` /
        ``describe_library`` give the formula; e.g. the Ga fraction of Ga_x In_1-x P). Not allowed for a
        fixed compound or for a name that already carries fractions.

    Raises
    ------
    MaterialError
        Unknown name (the message suggests close names), composition missing, out of [0, 1], not a
        number, or given where none is allowed.
    """
    if not isinstance(name, str) or not name.strip():
        raise MaterialError(f"material name {name!r} is not a non-empty string; give a name such as 'GaAs'")
    text = name.strip()
    records, lookup = _registry()
    family = lookup.get(text.lower())
    if family is None:
        parsed = _parse_formula(text)
        if parsed is None:
            raise MaterialError(f"material '{text}' is not in the library; {_suggestions(text)}")
        if composition is not None:
            raise MaterialError(f"material '{text}': composition given twice (in the name and as key "
                                f"'composition' = {composition!r}); give it only once")
        family, composition = parsed
    x = _check_composition(family, records[family][1], composition)
    return _build(family, x)


@functools.lru_cache(maxsize=512)
def material_identity(name, composition=None):
    """What a material is, however it is spelled: (library name, composition or None).

    ``material_identity("Ga0.51In0.49P") == material_identity("GaInP", 0.51)``, and an alias
    or another case (``"silicon"``, ``"si"``) is the same as ``"Si"``. The composition is
    rounded to 1e-9 so that a fraction computed as 1 - x compares equal to one written out.
    Raises MaterialError as :func:`load_material` does.
    """
    material = load_material(name, composition)
    x = material.composition
    return material.family, None if x is None else round(float(x), 9)


# ------------------------------------------------------------------------------------------- assembly
def _binary_valleys(file_name, data):
    valleys = []
    for vname, table in _require(data, "valleys", file_name).items():
        where = f"valleys.{vname}"
        e0 = _require(table, "gap_0K_eV", file_name, where)
        if "bose_einstein_strength_eV" in table:
            law = _GapLaw(e0, bose_strength_eV=table["bose_einstein_strength_eV"],
                          bose_temperature_K=_require(table, "bose_einstein_temperature_K", file_name, where))
        else:
            law = _GapLaw(e0, _require(table, "varshni_alpha_eV_K", file_name, where),
                          _require(table, "varshni_beta_K", file_name, where))
        if vname == "Gamma":
            mass = _require(table, "electron_mass", file_name, where)
            dos, rich = mass, mass
        else:
            count = _require(table, "valley_count", file_name, where)
            if "dos_mass" in table:
                dos = table["dos_mass"]
                rich = count ** (1.0 / 3.0) * dos  # equivalent isotropic valleys
            else:
                ml = _require(table, "longitudinal_mass", file_name, where)
                mt = _require(table, "transverse_mass", file_name, where)
                dos = models.ellipsoid_dos_mass_ratio(longitudinal=ml, transverse=mt, valley_count=count)
                axes = 3 if vname == "X" else 4
                rich = models.ellipsoid_richardson_mass_ratio(longitudinal=ml, transverse=mt, valley_type=vname,
                                                              valleys_per_axis=count / axes)
        valleys.append(_Valley(vname, ((1.0, law),), 0.0, dos, rich))
    return tuple(valleys)


def _hole_masses(file_name, holes):
    if "luttinger_gamma1" in holes:
        return models.light_heavy_hole_masses(gamma1=holes["luttinger_gamma1"], gamma2=holes["luttinger_gamma2"])
    return _require(holes, "heavy_mass", file_name, "holes"), _require(holes, "light_mass", file_name, "holes")


def _optics_for(file_name, data):
    absorption = data.get("absorption", {})
    table = absorption.get("table")
    direct = absorption.get("direct")
    indirect = absorption.get("indirect")
    direct_spec = None
    if direct is not None:
        if "shifted_from" in direct:
            reference = load_material(direct["shifted_from"])
            if reference._optics.table_nm is None:
                raise MaterialError(f"materials data file {file_name}: [absorption.direct] key 'shifted_from' "
                                    f"names {reference.name}, which has no absorption table; name a "
                                    f"tabulated material")
            direct_spec = MappingProxyType({"kind": "shift", "reference": reference})
        else:
            own = None
            if "gap_0K_eV" in direct:
                own = _GapLaw(direct["gap_0K_eV"], direct["varshni_alpha_eV_K"], direct["varshni_beta_K"])
            direct_spec = MappingProxyType({
                "kind": "sqrt", "gap": own,
                "strength": _require(direct, "strength_per_cm_eV_half", file_name, "absorption.direct")
                * _PER_CM_TO_PER_M,
                "urbach": direct.get("urbach_energy_eV", 0.0)})
    indirect_spec = None
    if indirect is not None:
        if "gaps_0K_eV" in indirect:
            gaps = tuple(_GapLaw(g, indirect["varshni_alpha_eV_K"], indirect["varshni_beta_K"])
                         for g in indirect["gaps_0K_eV"])
            strengths = [s * _PER_CM_TO_PER_M for s in indirect["strengths_per_cm_eV2"]]
            phonons, weights = list(indirect["phonon_energies_eV"]), list(indirect["phonon_weights"])
        else:
            gaps = None
            strengths = [_require(indirect, "strength_per_cm_eV2", file_name, "absorption.indirect")
                         * _PER_CM_TO_PER_M]
            phonons = [_require(indirect, "phonon_energy_eV", file_name, "absorption.indirect")]
            weights = [1.0]
        indirect_spec = MappingProxyType({"gaps": gaps, "strengths": strengths, "phonons": phonons,
                                          "weights": weights})
    if direct_spec is None and indirect_spec is None:
        raise MaterialError(f"materials data file {file_name}: no [absorption.direct] or [absorption.indirect] "
                            f"model; add one (it is used outside any table)")
    index = _require(data, "refractive_index", file_name)
    if "file" in index:
        nk = _nk_file(file_name, index["file"], "refractive_index")
        index = {"wavelength_nm": nk["wavelength_nm"], "n": nk["n"]}
    optics = _Optics(None, None, direct_spec, indirect_spec,
                     index_nm=np.asarray(_require(index, "wavelength_nm", file_name, "refractive_index"), float),
                     index_n=np.asarray(_require(index, "n", file_name, "refractive_index"), float))
    if table is not None and "file" in table:
        nk = _nk_file(file_name, table["file"], "absorption.table")
        # alpha = 4 pi k / lambda [cm^-1] (M. Born, E. Wolf, Principles of Optics, 7th ed. (1999), sec. 14.1)
        table = {"wavelength_nm": nk["wavelength_nm"],
                 "alpha_per_cm": 4.0 * np.pi * nk["k"] / (nk["wavelength_nm"] * 1e-7)}
    if table is not None:
        lam = np.asarray(_require(table, "wavelength_nm", file_name, "absorption.table"), dtype=float)
        alpha = np.asarray(_require(table, "alpha_per_cm", file_name, "absorption.table"), dtype=float)
        if lam.shape != alpha.shape or np.any(np.diff(lam) <= 0) or np.any(alpha <= 0):
            raise MaterialError(f"materials data file {file_name}: [absorption.table] needs increasing "
                                f"wavelength_nm and positive alpha_per_cm of equal length; fix the table")
        optics = _Optics(lam, np.log(alpha * _PER_CM_TO_PER_M), direct_spec, indirect_spec,
                         index_nm=optics.index_nm, index_n=optics.index_n)
    return optics


@functools.lru_cache(maxsize=16)
def _nk_table(data_file):
    """The columns of an n,k data file beside the TOML files (CSV, ``#`` comment lines, a header
    ``wavelength_nm,n,k``): dict name -> float array; MaterialError if unreadable."""
    entry = resources.files("siltandem.materials").joinpath(data_file)
    try:
        text = entry.read_text(encoding="utf-8")
    except (FileNotFoundError, OSError) as exc:
        raise MaterialError(f"materials data file {data_file}: cannot be read ({exc}); "
                            f"put it beside the TOML files") from exc
    lines = [line for line in text.splitlines() if line.strip() and not line.lstrip().startswith("#")]
    header = [h.strip() for h in lines[0].split(",")] if lines else []
    try:
        values = np.array([[float(v) for v in line.split(",")] for line in lines[1:]], dtype=float)
    except ValueError as exc:
        raise MaterialError(f"materials data file {data_file}: a value is not a number ({exc}); "
                            f"fix the file") from exc
    if header != ["wavelength_nm", "n", "k"] or values.ndim != 2 or values.shape[1] != 3 or len(values) < 2:
        raise MaterialError(f"materials data file {data_file}: needs a header line 'wavelength_nm,n,k' "
                            f"and at least two rows of three numbers; fix the file")
    columns = {name: values[:, i].copy() for i, name in enumerate(header)}
    if np.any(np.diff(columns["wavelength_nm"]) <= 0) or np.any(columns["k"] <= 0) \
            or np.any(columns["n"] <= 0):
        raise MaterialError(f"materials data file {data_file}: needs increasing wavelength_nm and "
                            f"positive n and k; fix the file")
    for array in columns.values():
        array.flags.writeable = False
    return MappingProxyType(columns)


def _nk_file(file_name, data_file, where):
    if not isinstance(data_file, str) or not data_file.endswith(".csv"):
        raise MaterialError(f"materials data file {file_name}: [{where}] key 'file' = {data_file!r} "
                            f"is not the name of a .csv file beside it; fix the key")
    return _nk_table(data_file)


def _end_scales(material):
    """Scale factors that make the parametric model meet the table at its two ends (300 K)."""
    optics = material._optics
    t = np.asarray(REFERENCE_TEMPERATURE_K)
    model = material._parametric_of_energy(HC_EV_NM / optics.table_nm[[0, -1]], t)
    table = np.exp(optics.table_log_alpha[[0, -1]])
    scales = np.where(model > 0, table / np.where(model > 0, model, 1.0), 1.0)
    return float(scales[0]), float(scales[1])


def _sources(data):
    out = {}
    for key, value in data.items():
        if isinstance(value, dict):
            if "source" in value:
                out[key] = value["source"]
            for sub, inner in value.items():
                if isinstance(inner, dict) and "source" in inner:
                    out[f"{key}.{sub}"] = inner["source"]
    return out


@functools.lru_cache(maxsize=256)
def _build(family, x):
    file_name, data = _registry()[0][family]
    if data["kind"] == "alloy":
        return _build_alloy(family, file_name, data, x)
    return _build_binary(family, file_name, data)


def _finish(*, name, family, composition, formula, valleys, hole_masses, affinity, permittivity,
            richardson, mobility, optics, sources, note, conduction_override=None, hole_dos_override=None,
            ionisation_eV=None):
    """Evaluate the 300 K fields from the assembled parts and return the Material.

    ``affinity`` None with ``ionisation_eV`` given: the affinity is the ionisation energy minus the gap.
    """
    t = REFERENCE_TEMPERATURE_K
    hh, lh = hole_masses
    hole_dos = (hh**1.5 + lh**1.5) ** (2.0 / 3.0) if hole_dos_override is None else hole_dos_override
    skeleton = Material(name, family, composition, formula, math.nan, False, "",
                        math.nan if affinity is None else affinity, permittivity,
                        math.nan, hole_dos, math.nan, math.nan, math.nan, math.nan, math.nan,
                        mobility[0] * _CM2_TO_M2, mobility[1] * _CM2_TO_M2, note, MappingProxyType(sources),
                        valleys, hole_dos, conduction_override, optics)
    gaps = {k: float(v) for k, v in skeleton.valley_gaps_eV(t).items()}
    lowest = min(gaps, key=gaps.get)
    nc = float(skeleton.conduction_dos_per_m3(t))
    electron_ratio = richardson[0] if richardson[0] is not None else next(
        v.richardson_ratio for v in valleys if v.name == lowest)
    hole_ratio = richardson[1] if richardson[1] is not None else hh + lh
    unit_dos = float(effective_density_of_states_per_m3(t, mass_ratio=1.0))
    fields = dict(
        gap_300K_eV=gaps[lowest], direct_300K=lowest == "Gamma", lowest_valley_300K=lowest,
        electron_dos_mass_ratio=(nc / unit_dos) ** (2.0 / 3.0),
        conduction_dos_300K_per_m3=nc, valence_dos_300K_per_m3=float(skeleton.valence_dos_per_m3(t)),
        intrinsic_density_300K_per_m3=float(skeleton.intrinsic_density_per_m3(t)),
        electron_richardson_A_m2_K2=electron_ratio * RICHARDSON_FREE_A_M2_K2,
        hole_richardson_A_m2_K2=hole_ratio * RICHARDSON_FREE_A_M2_K2,
        light_hole_mass_ratio=lh)
    if affinity is None:
        fields["electron_affinity_eV"] = ionisation_eV - gaps[lowest]
    if richardson[0] is None or richardson[1] is None:
        computed = ("computed: A = 120.17 A cm^-2 K^-2 times m*/m0 with, for electrons, the Richardson mass of "
                    "the lowest valley at 300 K (Gamma: m_e; X or L: sum over the equivalent ellipsoids for "
                    "emission along [100], C. R. Crowell, Solid-State Electron. 8 (1965) 395) and, for holes, "
                    "m_hh + m_lh")
        given = sources.get("richardson")
        sources = {**sources, "richardson": computed if given is None or composition is not None
                   else f"{given}; missing ratios {computed}"}
        fields["sources"] = MappingProxyType(sources)
    material = _replace(skeleton, **fields)
    if optics.table_nm is not None:
        short, long_ = _end_scales(material)
        material = _replace(material, _optics=_Optics(optics.table_nm, optics.table_log_alpha, optics.direct,
                                                      optics.indirect, short, long_, optics.index_nm,
                                                      optics.index_n))
    return material


def _replace(material, **changes):
    return dataclasses.replace(material, **changes)


def _build_binary(family, file_name, data):
    valleys = _binary_valleys(file_name, data)
    holes = _require(data, "holes", file_name)
    dos = data.get("density_of_states")
    hole_masses = _hole_masses(file_name, holes)
    override, hole_dos = None, None
    if dos is not None:
        where = "density_of_states"
        override = _require(dos, "conduction_300K_per_cm3", file_name, where) * _PER_CM3_TO_PER_M3
        # the given Nv expressed as a hole density-of-states mass, so that Nv(T) = Nv(300 K) (T/300)^1.5
        unit = float(effective_density_of_states_per_m3(REFERENCE_TEMPERATURE_K, mass_ratio=1.0))
        hole_dos = (_require(dos, "valence_300K_per_cm3", file_name, where) * _PER_CM3_TO_PER_M3 / unit) ** (2 / 3)
    rich = data.get("richardson", {})
    mobility = _require(data, "mobility", file_name)
    free = data.get("free_carrier_absorption")
    if free is not None:
        keys = ("electron_coefficient_cm2", "electron_exponent", "hole_coefficient_cm2", "hole_exponent")
        free = MappingProxyType({k: float(_require(free, k, file_name, "free_carrier_absorption")) for k in keys})
    material = _replace(_finish(
        name=family, family=family, composition=None, formula=data.get("formula", family), valleys=valleys,
        hole_masses=hole_masses,
        affinity=_require(_require(data, "electron_affinity", file_name), "value_eV", file_name, "electron_affinity"),
        permittivity=_require(_require(data, "permittivity", file_name), "relative", file_name, "permittivity"),
        richardson=(rich.get("electron_ratio"), rich.get("hole_ratio")),
        mobility=(_require(mobility, "electron_cm2_V_s", file_name, "mobility"),
                  _require(mobility, "hole_cm2_V_s", file_name, "mobility")),
        optics=_optics_for(file_name, data), sources=_sources(data), note=data.get("note", ""),
        conduction_override=override, hole_dos_override=hole_dos), _free_carriers=free)
    if (dos or {}).get("intrinsic_300K_per_cm3") is None:
        return material
    measured = float(dos["intrinsic_300K_per_cm3"]) * _PER_CM3_TO_PER_M3
    return _replace(material, _intrinsic_scale=measured / material.intrinsic_density_300K_per_m3,
                    intrinsic_density_300K_per_m3=measured)


def _alloy_name(data, x):
    """'Ga0.51In0.49P' style name of an alloy at composition x."""
    formula = data["formula"]
    fmt = lambda v: f"{v:.4g}"
    out = re.sub(r"_1-x", "_" + fmt(1.0 - x), formula)
    out = re.sub(r"_x", "_" + fmt(x), out)
    return out.replace("_", "").replace(" ", "")


def build_document(name, file_name, data, composition=None, gap_eV=None):
    """A Material from a parsed data file of the library's format (``data``: the TOML document,
    ``file_name``: for messages), as the library builds its own: the composition checked, an
    alloy's end members taken from the library, ``gap_eV`` (ordered alloys) moving the lowest
    valley's 300 K gap. MaterialError for what the file lacks."""
    x = _check_composition(name, data, composition)
    if data.get("kind") != "alloy":
        return _build_binary(name, file_name, data)
    return _build_alloy(name, file_name, data, x, gap_eV)


def library_document(name):
    """(library name, data file name, parsed TOML) of a library material or alias; None if the
    library has no such name (alloys written with fractions are not looked up here)."""
    records, lookup = _registry()
    family = lookup.get(str(name).strip().lower())
    return None if family is None else (family, *records[family])


def _shift_lowest(valleys, gap_eV, file_name):
    """The valleys with the lowest one at 300 K moved to ``gap_eV`` (an ordered alloy): its
    temperature law kept, its offset changed; it must stay the lowest."""
    gaps = {v.name: float(v.gap_eV(REFERENCE_TEMPERATURE_K)) for v in valleys}
    lowest = min(gaps, key=gaps.get)
    others = [g for n, g in gaps.items() if n != lowest]
    if others and min(others) <= gap_eV:
        raise MaterialError(f"materials data file {file_name}: gap_eV = {gap_eV:g} eV lies above another "
                            f"valley; give a gap below {min(others):.3f} eV")
    shift = gap_eV - gaps[lowest]
    return [dataclasses.replace(v, offset_eV=v.offset_eV + shift) if v.name == lowest else v for v in valleys]


def _build_alloy(family, file_name, data, x, gap_eV=None):
    one = load_material(_require(data, "end_at_x1", file_name))
    zero = load_material(_require(data, "end_at_x0", file_name))
    bowing = _require(data, "bowing", file_name)
    v1 = {v.name: v for v in one._valleys}
    v0 = {v.name: v for v in zero._valleys}
    if set(v1) != set(v0):
        raise MaterialError(f"materials data file {file_name}: end members {one.name} and {zero.name} have "
                            f"different valleys; give both the same [valleys.*] tables")
    valleys = []
    for vname in v1:
        coefficients = _require(bowing, vname, file_name, "bowing")
        c = sum(ci * x**i for i, ci in enumerate(coefficients))
        terms = tuple((x * w, law) for w, law in v1[vname].terms) + tuple(((1 - x) * w, law)
                                                                           for w, law in v0[vname].terms)
        valleys.append(_Valley(vname, terms, -x * (1.0 - x) * c,
                               x * v1[vname].dos_mass + (1 - x) * v0[vname].dos_mass,
                               x * v1[vname].richardson_ratio + (1 - x) * v0[vname].richardson_ratio))
    if gap_eV is not None:
        valleys = _shift_lowest(valleys, gap_eV, file_name)
    lin = lambda a, b: x * a + (1.0 - x) * b
    h1 = _registry()[0][one.family][1]["holes"]
    h0 = _registry()[0][zero.family][1]["holes"]
    if "luttinger_gamma1" in h1 and "luttinger_gamma1" in h0:
        hole_masses = models.light_heavy_hole_masses(gamma1=lin(h1["luttinger_gamma1"], h0["luttinger_gamma1"]),
                                                     gamma2=lin(h1["luttinger_gamma2"], h0["luttinger_gamma2"]))
    else:
        m1, m0 = _hole_masses(one.family, h1), _hole_masses(zero.family, h0)
        hole_masses = (lin(m1[0], m0[0]), lin(m1[1], m0[1]))
    # electron affinity: ionisation energy (chi + lowest gap) linear in x, minus the alloy's lowest gap
    ionisation = lin(one.electron_affinity_eV + one.gap_300K_eV, zero.electron_affinity_eV + zero.gap_300K_eV)
    mobility_table = _require(data, "mobility", file_name)
    mobility = []
    for key, attr in (("electron_cm2_V_s", "electron_mobility_m2_V_s"), ("hole_cm2_V_s", "hole_mobility_m2_V_s")):
        if mobility_table.get("rule") == "reciprocal":
            mobility.append(1.0 / lin(1.0 / getattr(one, attr), 1.0 / getattr(zero, attr)) / _CM2_TO_M2)
        else:
            mobility.append(float(np.interp(x, mobility_table["composition"], mobility_table[key])))
    rule = f"alloy of {one.name} (x = 1) and {zero.name} (x = 0)"
    sources = _sources(data)
    for key in ("valleys.Gamma", "valleys.X", "valleys.L", "holes", "permittivity", "electron_affinity",
                "refractive_index"):
        if key in one.sources or key in zero.sources:
            how = {"electron_affinity": "ionisation energy (affinity + lowest gap) linear in x, minus the "
                                        "alloy gap; rough",
                   "refractive_index": "linear in x at each wavelength; rough"}.get(
                       key, "VMR bowing (see 'bowing')" if key.startswith("valleys") else "linear in x")
            sources[key] = (f"{rule}, {how}; {one.name}: {one.sources.get(key, '-')}; "
                            f"{zero.name}: {zero.sources.get(key, '-')}")
    if mobility_table.get("rule") == "reciprocal":
        sources["mobility"] = (f"{mobility_table.get('source', '')}; {one.name}: {one.sources.get('mobility')}; "
                               f"{zero.name}: {zero.sources.get('mobility')}")
    grid = np.union1d(one._optics.index_nm, zero._optics.index_nm)
    optics = _optics_for(file_name, {**data, "refractive_index": {
        "wavelength_nm": grid, "n": lin(one.refractive_index(grid), zero.refractive_index(grid))}})
    return _finish(
        name=_alloy_name(data, x), family=family, composition=x, formula=data["formula"],
        valleys=tuple(valleys), hole_masses=hole_masses, affinity=None, ionisation_eV=ionisation,
        permittivity=lin(one.relative_permittivity, zero.relative_permittivity),
        richardson=(None, None), mobility=tuple(mobility), optics=optics, sources=sources,
        note=data.get("note", ""))
