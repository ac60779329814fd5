"""Energy yield over a typical year: hourly sun, spectra, cell temperatures, one batched solve.

For a TMY3, TMY2 or EPW weather file (read with ``pvlib.iotools.read_tmy3``, ``read_tmy2`` or
``read_epw``) or a DataFrame of hourly weather, and a plane of array (tilt, azimuth), every hour
with light gets:

1. **The sun.** Its position at the middle of the hour (``pvlib.solarposition.get_solarposition``,
   NREL SPA with refraction from the hour's pressure and air temperature). TMY3 irradiances are
   totals over the hour *ending* at the time stamp, so the middle of that hour is the stamp minus
   30 minutes; pvlib stamps TMY2 and EPW rows at the hour's start (plus 30 minutes).
2. **The broadband plane-of-array irradiance** from the file's GHI, DNI and DHI
   (``pvlib.irradiance.get_total_irradiance``, Perez sky by default): direct, sky-diffuse and
   ground-reflected parts.
3. **The spectrum.** SPECTRL2 (``pvlib.spectrum.spectrl2``; Bird & Riordan) gives the clear-sky
   direct, sky-diffuse and ground-reflected spectra on the plane for the hour's geometry,
   pressure and precipitable water. *The shape comes from SPECTRL2, the magnitude from the
   measured plane-of-array irradiance*: by default (``scaling="total"``) the summed clear-sky
   plane-of-array spectrum is multiplied by G_poa,measured / integral of it, so the integral of
   the hour's spectrum over SPECTRL2's 300-4000 nm is the measured plane-of-array irradiance.
   ``scaling="components"`` scales each component's spectrum to its own measured part instead.
   That gives a cloudy hour, whose light is mostly diffuse, the very blue shape of a clear sky's
   diffuse light; light scattered by clouds is much less blue, so "components" overstates the
   blue shift of cloudy hours (on the demo weather it moves a silicon bottom cell's
   energy-weighted mismatch factor from about 0.97 to about 0.85). It is kept as the bound.
4. **The cell temperature** from ``pvlib.temperature.sapm_cell`` with a named parameter set of
   ``pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS["sapm"]`` (``open_rack_glass_glass`` by
   default): King et al., Sandia report SAND2004-3535 (2004).

Then the stack is solved for all hours at once: hours are the batch axis, each with its own
photocurrents and temperature (J01 = J0,rad(Eg, T)/ERE and J02, proportional to n_i, follow the
temperature). A subcell's gap
stays as the file gives it unless the subcell is named in ``gap_materials``: its gap then shifts
with the cell temperature as the library material's gap does (Varshni), by
Eg(T) = gap_eV + Eg_material(T) - Eg_material(T_file), T_file the stack's ``temperature_K``.

A layer stack's layer optics (absorption of every layer) follow each hour's cell temperature too,
the hours grouped in 1 K bins; the optics being linear in the light, each subcell's collection per
photon is computed once per bin (``optics.layers.layer_collection_by_temperature``) and each hour's
photocurrent is its spectrum times it, integrated. Its spectral mismatch factors use the optics at
the stack's temperature, so they stay purely spectral.

The same subcells are also solved all in one series string (two-terminal) and each on its own at
its own maximum power point (four-terminal, no other element); the annual loss to current
mismatch is the four-terminal energy minus the two-terminal energy.
"""
from dataclasses import dataclass, replace
from pathlib import Path
from typing import NamedTuple
import warnings

import numpy as np

from siltandem import units
from siltandem.circuit.compile import compile_stack
from siltandem.errors import StackError
from siltandem.optics.illuminate import check_eqe_current, illuminate
from siltandem.laws.optics import step_absorber_photocurrents
from siltandem.laws.spectral import (
    quantum_efficiency_photocurrent,
    spectral_mismatch_factor,
    step_absorber_photocurrents_rows,
)
from siltandem.solve.series import solve_string, solve_strings
from siltandem.materials.spectra import get_spectrum
from siltandem.materials.weather import Weather, read_weather
from siltandem.materials.eqe import read_eqe_csv
from siltandem.studies.yield_report import summarise
from siltandem.studies.sky import (AEROSOL_TURBIDITY_500NM, MOUNTING, OZONE_ATM_CM, HourlyLight,
                                   hourly_light)

#: reference conditions of the efficiency at standard test conditions (IEC 60904-3)
STANDARD_SPECTRUM = "am1.5g"
STANDARD_TEMPERATURE_K = 298.15


def eqe_tables(eqe, subcell_names):
    tables = {}
    for name, value in (eqe or {}).items():
        if name not in subcell_names:
            raise StackError(f"no subcell named {name!r} for a measured quantum efficiency",
                             where="--eqe", fix="the stack's subcells are "
                             + ", ".join(repr(n) for n in subcell_names))
        if isinstance(value, (str, Path)):
            tables[name] = read_eqe_csv(value, where=f"--eqe {name}")
        else:
            lam, values = (np.asarray(v, dtype=float) for v in value)
            tables[name] = (lam, values)
    return tables


def gap_laws(gap_materials, subcell_names):
    from siltandem.materials import MaterialError, load_material

    laws = {}
    for name, material in (gap_materials or {}).items():
        if name not in subcell_names:
            raise StackError(f"no subcell named {name!r} to take a gap law from a material",
                             where="--gap-material", fix="the stack's subcells are "
                             + ", ".join(repr(n) for n in subcell_names))
        try:
            laws[name] = load_material(material)
        except MaterialError as exc:
            raise StackError(str(exc), where=f"--gap-material {name}={material}",
                             fix="see `siltandem materials`; an alloy takes its fractions in "
                                 "the name, e.g. Ga0.51In0.49P") from None
    return laws


# ------------------------------------------------------------------------------------- result
@dataclass(frozen=True)
class YieldResult:
    """The energy yield of one stack over a year.

    Attributes
    ----------
    summary : dict
        The JSON contract (trade units; names carry them).
    hourly : pandas.DataFrame
        One row per hour with light (see README).
    monthly : pandas.DataFrame
        One row per month.
    light : HourlyLight
    """

    summary: dict
    hourly: object
    monthly: object
    light: HourlyLight

    def to_json(self, indent=2):
        from siltandem.result.record import json_text

        return json_text(self.summary, indent)


def _power(solution):
    """MPP power of each hour [W/m2]; an hour without an operating point counts as zero (the
    solution marks it failed)."""
    power = np.asarray(solution.mpp_W_m2, dtype=float)
    return np.where(np.isfinite(power), power, 0.0)


def _solve(elements, temperature_K):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        solution = solve_string(elements, temperature_K)
    return solution


def _solve_with(elements, temperature_K, curve_points=0):
    """:func:`_solve` in the form solve.series.solve_strings calls (no curve)."""
    return _solve(elements, temperature_K)


def weather_and_plane(weather, tilt_deg, azimuth_deg, tracking="fixed"):
    """The weather (read from a path or DataFrame if needed) and the plane's tilt and azimuth
    [deg], with their defaults: tilted at the latitude's magnitude, facing the equator; a
    tracker's axis horizontal, north-south."""
    if not isinstance(weather, Weather):
        weather = read_weather(weather)
    if tilt_deg is None:
        tilt_deg = 0.0 if tracking == "one-axis" else abs(weather.latitude)
    if azimuth_deg is None:
        azimuth_deg = 180.0 if weather.latitude >= 0 else 0.0
    return weather, tilt_deg, azimuth_deg


def _subcell_gap_laws(subcells, gap_materials, names):
    """Subcell name -> material whose gap law it follows: ``gap_materials`` first, then the
    material a subcell names in the stack file."""
    laws = gap_laws(gap_materials, names)
    # a subcell that names its material in the stack file follows that material's gap law
    # unless --gap-material says otherwise
    for cell in subcells:
        if cell.gap_material is not None and cell.name not in laws:
            laws[cell.name] = gap_laws({cell.name: cell.gap_material}, names)[cell.name]
    return laws


def _subcell_eqe_tables(subcells, eqe, names):
    """Subcell name -> measured EQE (wavelength_nm, eqe), from ``eqe`` first, then from the
    stack file; and name -> (file path or None, where) for the messages."""
    tables = eqe_tables(eqe, names)
    eqe_files = {name: (str(value) if isinstance(value, (str, Path)) else None, f"--eqe {name}")
                 for name, value in (eqe or {}).items()}
    # a subcell whose stack file gives its measured EQE uses it unless --eqe says otherwise
    for cell in subcells:
        if cell.eqe_table is not None and cell.name not in tables:
            tables[cell.name] = cell.eqe_table
            eqe_files[cell.name] = (cell.eqe_file, None)
    return tables, eqe_files


def _hourly_gaps(subcells, laws, temperature, reference_K):
    """Each subcell's gap [eV] in every hour: (hours, 1) where it follows a material's law
    (shifted by Eg_material(T) - Eg_material(T_file)), else the file's number."""
    gaps = []
    for cell in subcells:
        if cell.name in laws:
            material = laws[cell.name]
            shift = (np.asarray(material.gap_eV(temperature), dtype=float)
                     - float(material.gap_eV(reference_K)))
            gaps.append(cell.gap_eV + shift)
        else:
            gaps.append(cell.gap_eV)
    return gaps


def _layer_photocurrents(circuit, light, flux, reference, temperature):
    """A layer stack's photocurrents [A/m2] of every hour (the layers' optics and collection for
    each hour's photon flux ``flux`` at the hour's cell temperature, binned to 1 K) and under the
    reference spectrum (at the stack's temperature), and the dark currents of
    each hour's temperature (``dark_currents_at``): (photocurrents, spectral_only, reference,
    dark).

    The optics are linear in the flux: each subcell's collection per photon is computed once per
    temperature bin (``optics.layers.layer_collection_by_temperature``) and once at the stack's
    temperature, and every hour's photocurrent is its flux times that response integrated over the
    wavelengths (the same numbers as passing every hour's spectrum through the layers, to rounding).
    """
    from siltandem.circuit.from_layers import dark_currents_at
    from siltandem.optics.layers import layer_collection, layer_collection_by_temperature

    wavelength = np.asarray(light.wavelength_nm, dtype=float)

    def integrated(response, photons):
        return np.trapezoid(photons * response, wavelength, axis=-1)

    # the layers' absorption follows each hour's cell temperature (1 K bins)
    photocurrents = [integrated(c, flux).reshape(-1, 1) for c in
                     layer_collection_by_temperature(circuit.model, wavelength, temperature)]
    # the purely spectral part (for the mismatch factors): the layers at the stack's temperature
    at_file = layer_collection(circuit.model, wavelength)
    spectral_only = [integrated(c, flux).reshape(-1, 1) for c in at_file]
    on_grid = np.interp(wavelength, reference.wavelength_nm, reference.photon_flux)
    reference_currents = [np.asarray(integrated(c, on_grid), dtype=float) for c in at_file]
    dark = dark_currents_at(circuit.model, circuit, temperature)
    return photocurrents, spectral_only, reference_currents, dark


def _element_photocurrents(subcells, gaps, laws, light, flux, reference):
    """An element stack's step-absorber photocurrents [A/m2]: of every hour at its gaps, of every
    hour at the file's gaps (the purely spectral part, for the mismatch factors) and under the
    reference spectrum at the file's gaps."""
    file_gaps = [s.gap_eV for s in subcells]
    absorptances = [s.absorptance for s in subcells]
    photocurrents = step_absorber_photocurrents_rows(gaps, absorptances,
                                                     light.wavelength_nm, flux)
    spectral_only = (photocurrents if not laws else
                     step_absorber_photocurrents_rows(file_gaps, absorptances,
                                                      light.wavelength_nm, flux))
    reference_currents = step_absorber_photocurrents(file_gaps, absorptances,
                                                     reference.wavelength_nm,
                                                     reference.photon_flux)
    return photocurrents, spectral_only, reference_currents


def _measured_eqe_photocurrents(subcells, tables, eqe_files, light, flux, reference,
                                photocurrents, spectral_only, reference_currents):
    """Replace, in place, the photocurrents of each subcell with a measured EQE by q integral
    Phi EQE, hourly and under the reference; refuse an EQE that collects more than the reference
    has photons above the gap."""
    for k, cell in enumerate(subcells):
        if cell.name in tables:
            lam_q, q = tables[cell.name]
            photocurrents[k] = quantum_efficiency_photocurrent(
                flux, wavelength_nm=light.wavelength_nm, eqe_wavelength_nm=lam_q,
                eqe=q).reshape(-1, 1)
            spectral_only[k] = photocurrents[k]
            reference_currents[k] = quantum_efficiency_photocurrent(
                reference.photon_flux, wavelength_nm=reference.wavelength_nm,
                eqe_wavelength_nm=lam_q, eqe=q)
            path, where = eqe_files[cell.name]
            check_eqe_current(cell.name, path, reference_currents[k], cell.gap_eV,
                              reference.wavelength_nm, reference.photon_flux,
                              light=f"{STANDARD_SPECTRUM} (the yield's reference)", where=where)


def _mismatch_factors(names, light, reference, spectral_only, reference_currents):
    """Subcell name -> spectral mismatch factor of every hour against the reference spectrum."""
    field_irradiance = np.trapezoid(light.irradiance_W_m2_nm, light.wavelength_nm, axis=1)
    return {name: spectral_mismatch_factor(
        spectral_only[k][:, 0], irradiance_W_m2=field_irradiance,
        reference_photocurrent_A_m2=float(np.asarray(reference_currents[k]).reshape(-1)[0]),
        reference_irradiance_W_m2=reference.integral_W_m2) for k, name in enumerate(names)}


def _hourly_subcells(subcells, gaps, photocurrents, dark, temperature, reference_K):
    """Subcell name -> the subcell with every hour's gap, photocurrent and dark currents as
    (hours, 1) arrays (``dark``: a layer stack's dark currents of each hour, else None)."""
    hourly_cells = {cell.name: replace(cell, gap_eV=np.asarray(gap, dtype=float),
                                       photocurrent_A_m2=np.asarray(jph, dtype=float))
                    for cell, gap, jph in zip(subcells, gaps, photocurrents)}
    if dark is not None:
        return {name: replace(cell, j01_fixed_A_m2=np.asarray(dark[name][0], dtype=float),
                              j02_A_m2=np.asarray(dark[name][1], dtype=float),
                              bulk=None if cell.bulk is None else (
                                  *cell.bulk[:4], cell.bulk[4] * np.asarray(dark[name][3], dtype=float),
                                  *cell.bulk[5:]))
                for name, cell in hourly_cells.items()}
    # J02 follows n_i with each hour's temperature and gap, from its value at the stack's
    # temperature (J01 = J0,rad/ERE follows through the generalized Planck law)
    from siltandem.laws.diode import intrinsic_density_ratio

    return {cell.name: replace(hourly_cells[cell.name], j02_A_m2=cell.j02_A_m2
                               * intrinsic_density_ratio(
                                   temperature, gap_eV=gap,
                                   reference_temperature_K=reference_K,
                                   reference_gap_eV=cell.gap_eV))
            for cell, gap in zip(subcells, gaps)}


class _YearPowers(NamedTuple):
    """The powers [W/m2] of every hour from the year's solves."""

    wired: np.ndarray         # the stack as wired, summed over its strings
    two_terminal: np.ndarray  # every element in one series string
    bare: object              # the subcells alone in series (None if not solved)
    passive: bool             # whether the stack has elements other than subcells
    alone: dict               # subcell name -> that subcell on its own at its maximum power
    failed: np.ndarray        # hours without an operating point in some solve


def _year_solves(circuit, hourly_cells, names, temperature, split_losses):
    """The batched solves over the hours: the stack as wired, the two-terminal string, the bare
    subcells in series (``split_losses``) and each subcell on its own (four-terminal)."""
    def lit(element):
        return hourly_cells.get(element.name, element)

    hours = temperature.shape[0]
    # the stack as wired, string by string; luminescent coupling crosses strings (4 terminals) at
    # the upper string's MPP of each hour (solve.series.solve_strings)
    wired = np.zeros(hours)
    failed = np.zeros(hours, dtype=bool)
    optical = [lit(c) for c in circuit.subcells]
    _, solutions = solve_strings([[lit(e) for e in string] for string in circuit.strings], optical,
                                 temperature, solve=_solve_with)
    for solution in solutions:
        wired += _power(solution)
        failed |= solution.failed
    # the same elements all in one series string (two-terminal) and each subcell on its own
    if circuit.conditions.strings == 1:
        series_power = wired
    else:
        series = _solve([lit(e) for e in circuit.elements], temperature)
        series_power = _power(series)
        failed |= series.failed
    passive = any(e.kind != "subcell" for e in circuit.elements)
    if passive and split_losses:
        bare = _solve([hourly_cells[n] for n in names], temperature)
        bare_power = _power(bare)
        failed |= bare.failed
    elif passive:
        bare_power = None
    else:
        bare_power = series_power
    # each subcell on its own terminals, the light of the coupling crossing from the one above at
    # its own MPP (as a four-terminal stack's strings)
    # (sharing the tables the wired solve built: a subcell whose photocurrent the coupling from
    # above changes is a new subcell, with_photocurrent, and builds its own)
    apart = [hourly_cells[c.name].on_string(k + 1) for k, c in enumerate(circuit.subcells)]
    _, solutions = solve_strings([[cell] for cell in apart], apart, temperature, solve=_solve_with)
    alone = {}
    for cell, solution in zip(apart, solutions):
        alone[cell.name] = _power(solution)
        failed |= solution.failed
    return _YearPowers(wired, series_power, bare_power, passive, alone, failed)


def _standard_efficiency(stack, reference, tables, reference_currents):
    """Efficiency [%] at standard test conditions: the file's stack under AM1.5G at 25 degC (a
    measured-EQE subcell with its EQE's photocurrent)."""
    standard = illuminate(compile_stack(stack), reference)
    standard = standard.with_elements([
        cell.with_photocurrent(float(np.asarray(reference_currents[k]).reshape(-1)[0]))
        for k, cell in enumerate(standard.subcells) if cell.name in tables])
    standard_power = sum(float(_power(_solve(s, STANDARD_TEMPERATURE_K))[0])
                         for s in standard.strings)
    return 100 * standard_power / reference.irradiance_W_m2


def _hourly_table(frame, names, laws, gaps, photocurrents, mismatch, powers):
    """The hourly table: the light's columns, then each subcell's gap (if it follows a law),
    photocurrent, mismatch factor and power alone, then the stack's powers and efficiency."""
    hours = len(frame)
    poa = frame["poa_W_m2"].to_numpy()
    independent = np.sum([powers.alone[n] for n in names], axis=0)
    stacked = np.concatenate([np.broadcast_to(j, (hours, 1)) for j in photocurrents], axis=1)
    limiting_index = np.argmin(stacked, axis=1)
    limiting = np.array(names, dtype=object)[limiting_index]
    with np.errstate(divide="ignore", invalid="ignore"):
        efficiency = np.where(poa > 0, 100 * powers.wired / poa, np.nan)
    hourly = frame.copy()
    for k, name in enumerate(names):
        if name in laws:
            hourly[f"{name}.gap_eV"] = np.asarray(gaps[k], dtype=float)[:, 0]
        hourly[f"{name}.photocurrent_mA_cm2"] = units.ma_cm2(
            np.broadcast_to(photocurrents[k], (hours, 1))[:, 0])
        hourly[f"{name}.mismatch_factor"] = mismatch[name]
        hourly[f"{name}.alone_W_m2"] = powers.alone[name]
    hourly["power_W_m2"] = powers.wired
    hourly["efficiency_pct"] = efficiency
    hourly["two_terminal_W_m2"] = powers.two_terminal
    hourly["four_terminal_W_m2"] = independent
    hourly["limiting_subcell"] = limiting
    hourly["failed"] = powers.failed
    return hourly


def annual_yield(stack, weather, *, tilt_deg=None, azimuth_deg=None, sky_model="perez",
                 mounting=MOUNTING, albedo=None, scaling="total", gap_materials=None,
                 eqe=None, split_losses=False, ozone_atm_cm=OZONE_ATM_CM,
                 aerosol_turbidity_500nm=AEROSOL_TURBIDITY_500NM, tracking="fixed",
                 max_rotation_deg=None, ground_coverage=None, angle_losses="none",
                 measured_spectra=None, light=None):
    """Energy of a stack over the weather file's year: one batched solve of all hours.

    Parameters
    ----------
    stack : Stack
        An element stack (``[[element]]``) or a layer stack (``[[layer]]``, whose layer optics
        follow each hour's cell temperature in 1 K bins).
    weather : Weather or str or Path or pandas.DataFrame
        A :class:`Weather`, the path of a TMY3, TMY2 or EPW file (``"demo"``: the TMY3 file
        pvlib ships), or a DataFrame of hourly weather with columns ``ghi``, ``dni``, ``dhi``
        [W/m2], ``temp_air`` [degC] (optional ``wind_speed`` [m/s], ``pressure`` [mbar],
        ``precipitable_water`` [cm], ``albedo``), a time zone aware index, and the station in
        ``frame.attrs`` (``latitude``, ``longitude``, optional ``altitude`` [m] and ``stamps``:
        "end" (default), "start" or "middle" of the hour); see
        :func:`siltandem.materials.weather.read_weather`.
    tilt_deg : float, optional
        Plane tilt [deg]; default the latitude's magnitude (common practice, no source).
    azimuth_deg : float, optional
        Plane azimuth clockwise from north [deg]; default facing the equator (180 north of it,
        0 south of it).
    sky_model, mounting, albedo, scaling, ozone_atm_cm, aerosol_turbidity_500nm
        See :func:`hourly_light`. ``scaling="total"`` (default) scales SPECTRL2's summed
        clear-sky spectrum to the hour's plane-of-array irradiance; ``"components"`` scales its
        direct, sky-diffuse and ground-reflected spectra each to its own measured part, which
        gives overcast hours the deep blue of a clear sky's diffuse light (README: the demo
        triple's energy-weighted efficiency 32.90 % by default, 27.50 % with it).
    tracking : {"fixed", "one-axis"}
        A fixed plane (default) or a one-axis tracker with backtracking
        (``pvlib.tracking.singleaxis``); on a tracker ``tilt_deg`` and ``azimuth_deg`` are its
        axis's (default 0 and 180: horizontal, north-south).
    max_rotation_deg, ground_coverage : float, optional
        The tracker's largest rotation [deg] (default 60) and ground coverage ratio (default 2/7).
    angle_losses : {"none", "glass", "martin-ruiz"}
        Angle-of-incidence losses of a cover on the direct, sky-diffuse and ground-reflected
        light (``pvlib.iam.physical`` with ``marion_diffuse``, or ``pvlib.iam.martin_ruiz`` with
        ``martin_ruiz_diffuse``); default ``"none"`` (the stack as written, no cover). The
        efficiencies stay against the plane-of-array irradiance before the cover.
    measured_spectra : pandas.DataFrame or str or Path, optional
        Measured plane-of-array spectra, one row per hour (time zone aware stamps of the
        weather) and one column per wavelength [nm], W m^-2 nm^-1; used as given instead of
        SPECTRL2's clear-sky shapes (see materials.hourly_spectra).
    light : HourlyLight, optional
        The year's hourly light already computed by :func:`hourly_light` for this ``weather`` and
        these plane and sky options (a study of many designs computes it once and passes it on:
        matching.energy_by_value); None computes it here.
    gap_materials : dict, optional
        Subcell name -> library material (``"GaAs"``, ``"Ga0.51In0.49P"``, ``"Si"``): that
        subcell's gap follows the cell temperature like the material's (Varshni law), anchored to
        the file's gap at the stack's ``temperature_K``. Other gaps stay fixed.
    eqe : dict, optional
        Subcell name -> measured external quantum efficiency in the stack, as a CSV path
        (``wavelength_nm``, ``eqe``) or a (wavelength_nm, eqe) pair: that subcell's photocurrent
        is q integral Phi EQE (Phi the light on the stack); the light reaching the subcells below
        is still filtered by its step absorptance.
    split_losses : bool
        Also solve the subcells alone in series (without the stack's other elements), to tell how
        much of the four- minus two-terminal difference those elements cost
        (``of_which_other_elements_kWh_m2``; null without it). One more batched solve: it about
        doubles the time of a stack that needs the traced solve.

    Returns
    -------
    YieldResult
    """
    from siltandem.stack.options import check_plane

    check_plane(tilt_deg=tilt_deg, azimuth_deg=azimuth_deg, albedo=albedo)   # before any work
    from siltandem.materials.hourly_spectra import measured_spectra as checked_spectra
    from siltandem.studies.plane import check_tracking

    check_tracking(tracking, max_rotation_deg, ground_coverage, angle_losses)
    if measured_spectra is not None:
        measured_spectra = checked_spectra(measured_spectra, where="argument measured_spectra")
    weather, tilt_deg, azimuth_deg = weather_and_plane(weather, tilt_deg, azimuth_deg, tracking)
    if light is None:
        light = hourly_light(weather, tilt_deg=tilt_deg, azimuth_deg=azimuth_deg,
                             sky_model=sky_model, mounting=mounting, albedo=albedo, scaling=scaling,
                             ozone_atm_cm=ozone_atm_cm,
                             aerosol_turbidity_500nm=aerosol_turbidity_500nm, tracking=tracking,
                             max_rotation_deg=max_rotation_deg, ground_coverage=ground_coverage,
                             angle_losses=angle_losses, measured_spectra=measured_spectra)
    circuit = compile_stack(stack)
    subcells = circuit.subcells
    names = [s.name for s in subcells]
    laws = _subcell_gap_laws(subcells, gap_materials, names)
    tables, eqe_files = _subcell_eqe_tables(subcells, eqe, names)
    frame = light.frame
    if len(frame) == 0:
        raise StackError("no hour of the year puts light on this plane", where="--tilt",
                         fix="check the weather file and the plane's tilt and azimuth")
    temperature = (frame["cell_temperature_C"].to_numpy() + 273.15).reshape(-1, 1)
    reference_K = stack.conditions.temperature_K

    gaps = _hourly_gaps(subcells, laws, temperature, reference_K)
    flux = light.photon_flux
    reference = get_spectrum(STANDARD_SPECTRUM)
    dark = None
    if circuit.model is not None:
        photocurrents, spectral_only, reference_currents, dark = _layer_photocurrents(
            circuit, light, flux, reference, temperature)
        gaps = [dark[c.name][2] for c in subcells]
        # layer subcells follow their absorber's Varshni law and intrinsic density
        laws = {c.name: circuit.model.materials[m.dark_index]
                for c, m in zip(subcells, circuit.model.subcells)}
    else:
        photocurrents, spectral_only, reference_currents = _element_photocurrents(
            subcells, gaps, laws, light, flux, reference)
    _measured_eqe_photocurrents(subcells, tables, eqe_files, light, flux, reference,
                                photocurrents, spectral_only, reference_currents)
    mismatch = _mismatch_factors(names, light, reference, spectral_only, reference_currents)
    hourly_cells = _hourly_subcells(subcells, gaps, photocurrents, dark, temperature, reference_K)
    powers = _year_solves(circuit, hourly_cells, names, temperature, split_losses)
    standard_efficiency = _standard_efficiency(stack, reference, tables, reference_currents)
    hourly = _hourly_table(frame, names, laws, gaps, photocurrents, mismatch, powers)
    summary, monthly = summarise(stack, weather, light, hourly, names, laws, tables,
                                  standard_efficiency, powers.bare, powers.passive)
    return YieldResult(summary, hourly, monthly, light)
