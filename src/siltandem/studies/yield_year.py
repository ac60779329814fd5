"""Energy yield over a typical year: hourly sun, spectra, cell temperatures, one batched solve.

For a TMY3-style weather file (read with ``pvlib.iotools.read_tmy3``) and a plane of array (tilt,
azimuth), every hour with light gets:

1. **The sun.** Its position at the middle of the hour (``pvlib.solarposition.get_solarposition``,
   NREL SPA with refraction from the hour's pressure and air temperature). TMY3 irradiances are
   totals over the hour *ending* at the time stamp, so the middle of that hour is the stamp minus
   30 minutes.
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

The same subcells are also solved all in one series string (two-terminal) and each on its own at
its own maximum power point (four-terminal, no other element); the annual loss to current
mismatch is the four-terminal energy minus the two-terminal energy.
"""
from dataclasses import dataclass, replace
from pathlib import Path
import warnings

import numpy as np

from siltandem import units
from siltandem.circuit.from_elements import compile_stack
from siltandem.errors import StackError
from siltandem.optics.illuminate import check_eqe_current, illuminate
from siltandem.laws.optics import photon_flux, step_absorber_photocurrents
from siltandem.laws.spectral import (
    quantum_efficiency_photocurrent,
    scaled_spectra,
    spectral_mismatch_factor,
    step_absorber_photocurrents_rows,
)
from siltandem.solve.series import solve_string
from siltandem.materials.spectra import get_spectrum
from siltandem.text import excerpt

#: SPECTRL2's atmosphere where the weather file gives nothing: the ASTM G173-03 atmosphere
#: (C. A. Gueymard, D. Myers, K. Emery, Solar Energy 73 (2002) 443; values from memory):
#: ozone 0.3438 atm-cm, aerosol optical depth 0.084 at 500 nm, precipitable water 1.42 cm
OZONE_ATM_CM = 0.3438
AEROSOL_TURBIDITY_500NM = 0.084
PRECIPITABLE_WATER_CM = 1.42
#: ground albedo where the file gives none (common practice, no source)
ALBEDO = 0.2
#: the cell-temperature parameter set used unless another is named
MOUNTING = "open_rack_glass_glass"
SKY_MODELS = ("perez", "haydavies", "isotropic", "klucher", "reindl", "king")
SCALINGS = ("components", "total")
#: TMY3 years are stitched from different years; the dates are placed in this non-leap year
TYPICAL_YEAR = 1990
#: reference conditions of the efficiency at standard test conditions (IEC 60904-3)
STANDARD_SPECTRUM = "am1.5g"
STANDARD_TEMPERATURE_K = 298.15
HOURS_PER_STEP = 1.0
#: hourly rows of one typical year (TMY3: 365 days of 24 hours)
HOURS_PER_YEAR = 8760
#: plausible station metadata: degrees north and east, metres above sea level (the Dead Sea
#: shore is about -430 m, the highest stations below 9000 m)
STATION_RANGES = {"latitude": (-90.0, 90.0, "deg"), "longitude": (-180.0, 180.0, "deg"),
                  "altitude": (-500.0, 9000.0, "m")}
#: plausible hourly values (after pvlib's variable mapping), with room for cloud enhancement
#: above the solar constant (1361 W/m2; G. Kopp, J. L. Lean, Geophys. Res. Lett. 38 (2011)
#: L01706) and for the recorded extremes of air temperature (-89.2 and 56.7 degC, World
#: Meteorological Organization archive); missing values (NaN) are handled after this check
WEATHER_RANGES = {"ghi": (-10.0, 2000.0, "W/m2", "global horizontal irradiance"),
                  "dni": (-10.0, 2000.0, "W/m2", "direct normal irradiance"),
                  "dhi": (-10.0, 2000.0, "W/m2", "diffuse horizontal irradiance"),
                  "temp_air": (-100.0, 70.0, "degC", "air temperature"),
                  "wind_speed": (0.0, 120.0, "m/s", "wind speed")}

CAUTION = ("Results are models, not measurements: the hourly spectra are clear-sky shapes scaled "
           "to measured irradiance. Electrical and optical work on cells and modules is "
           "hazardous: follow local codes and licensed practice.")


# ------------------------------------------------------------------------------------ weather
@dataclass(frozen=True)
class Weather:
    """A typical year of hourly weather.

    Attributes
    ----------
    data : pandas.DataFrame
        One row per hour, indexed by the file's time stamps (end of each hour, local standard
        time), with ``ghi``, ``dni``, ``dhi`` [W/m2], ``temp_air`` [degC], ``wind_speed`` [m/s],
        ``pressure`` [mbar], ``precipitable_water`` [cm] and ``albedo`` [-] (pvlib names).
    latitude, longitude, altitude_m, timezone_h : float
    station : str
    source : str
        The file it came from.
    """

    data: object
    latitude: float
    longitude: float
    altitude_m: float
    timezone_h: float
    station: str
    source: str


def demo_weather_path():
    """The TMY3 file pvlib ships (Greensboro, North Carolina, USAF 723170)."""
    import pvlib

    return Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"


def _check_whole_year(index, path):
    """Refuse a weather file that does not cover one year hour by hour: annual energy needs
    every hour of a typical year once (8760 hourly rows, TMY3 convention; W. Marion, K. Urban,
    NREL/TP-463-7668, 1995)."""
    repeated = int(index.duplicated().sum())
    if repeated:
        first = index[index.duplicated()][0]
        raise StackError(f"{repeated} repeated hour(s) (first {first:%d %b %H:%M}): each hour "
                         "would be counted more than once", file=path, where="--weather",
                         fix="give each hour of the year once (8760 hourly rows)")
    if len(index) < HOURS_PER_YEAR:
        span = (f"{index[0]:%d %b %H:%M} to {index[-1]:%d %b %H:%M}" if len(index)
                else "no hours")
        raise StackError(f"the file covers {len(index)} of the {HOURS_PER_YEAR} hours of a year "
                         f"({span}): a partial year is not an annual energy", file=path,
                         where="--weather",
                         fix="give a whole typical year (8760 hourly rows), e.g. --weather demo")


def read_weather(path):
    """Read a TMY3-style weather file with ``pvlib.iotools.read_tmy3`` (map_variables=True).

    ``path`` may be ``"demo"`` for the file pvlib ships (Greensboro, NC). Raises StackError for a
    missing or unreadable file or one without the columns the yield needs.
    """
    import pvlib

    if str(path).strip().lower() == "demo":
        path = demo_weather_path()
    path = Path(path)
    fix = ("give a TMY3 CSV file (two header lines: station metadata, then the column names; "
           "8760 hourly rows), e.g. pvlib's data/723170TYA.CSV, or --weather demo")
    if not path.is_file():
        raise StackError("weather file not found", file=path, where="--weather", fix=fix)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            data, meta = pvlib.iotools.read_tmy3(str(path), coerce_year=TYPICAL_YEAR,
                                                 map_variables=True)
    except Exception as exc:  # pvlib/pandas raise several types for files that are not TMY3
        raise StackError(f"cannot read it as a TMY3 file ({exc.__class__.__name__}: "
                         f"{excerpt(str(exc), 120)})", file=path, where="--weather",
                         fix=fix) from None
    _check_whole_year(data.index, path)
    needed = ["ghi", "dni", "dhi", "temp_air", "wind_speed", "pressure"]
    missing = [c for c in needed if c not in data.columns]
    if missing:
        raise StackError(f"no column(s) {', '.join(missing)} after pvlib's variable mapping",
                         file=path, where="header", fix=fix)
    for key in ("latitude", "longitude"):
        if not np.isfinite(float(meta.get(key, np.nan))):
            raise StackError(f"the station's {key} is missing", file=path, where="line 1",
                             fix=fix)
    for key, (low, high, unit) in STATION_RANGES.items():
        value = float(meta.get(key, 0.0))
        if not low <= value <= high:
            raise StackError(f"the station's {key} {value:g} {unit} is outside [{low:g}, "
                             f"{high:g}] {unit}", file=path, where="line 1",
                             fix="check the station line of the weather file (TMY3: id, name, "
                                 "state, time zone, latitude, longitude, altitude)")
    for column, (low, high, unit, what) in WEATHER_RANGES.items():
        values = data[column].astype(float).to_numpy()
        outside = np.flatnonzero((values < low) | (values > high))
        if outside.size:
            first = data.index[outside[0]]
            raise StackError(f"{outside.size} hour(s) with {what} outside [{low:g}, {high:g}] "
                             f"{unit} (first {first:%d %b %H:%M}: {values[outside[0]]:g} {unit})",
                             file=path, where=f"column {column}",
                             fix=f"give {what} in {unit}; fill or correct those hours")
    frame = data[needed].astype(float).copy()
    for column, fill in (("precipitable_water", PRECIPITABLE_WATER_CM), ("albedo", ALBEDO)):
        values = data[column].astype(float) if column in data.columns else np.nan
        frame[column] = values
        # TMY3 writes 0 where it has no value; SPECTRL2 needs positive ones
        frame.loc[~(frame[column] > 0), column] = fill
    bad = ~np.isfinite(frame[["ghi", "dni", "dhi"]].to_numpy()).all(axis=1)
    if bad.any():
        first = frame.index[np.flatnonzero(bad)[0]]
        raise StackError(f"{int(bad.sum())} hour(s) without GHI, DNI or DHI (first {first})",
                         file=path, fix="fill the gaps in the weather file")
    frame[["ghi", "dni", "dhi"]] = frame[["ghi", "dni", "dhi"]].clip(lower=0.0)
    frame["temp_air"] = frame["temp_air"].fillna(frame["temp_air"].mean())
    frame["wind_speed"] = frame["wind_speed"].fillna(0.0)
    altitude = float(meta.get("altitude", 0.0))
    standard_mbar = pvlib.atmosphere.alt2pres(altitude) / 100
    frame["pressure"] = frame["pressure"].where(frame["pressure"] > 100, standard_mbar)
    return Weather(frame, float(meta["latitude"]), float(meta["longitude"]), altitude,
                   float(meta.get("TZ", 0.0)), str(meta.get("Name", "")).strip('" '), str(path))


# ------------------------------------------------------------------------------- hourly light
@dataclass(frozen=True)
class HourlyLight:
    """Light on the plane of array for the hours with sun.

    Attributes
    ----------
    frame : pandas.DataFrame
        One row per hour with light, indexed by the file's time stamps: ``sun_time`` (middle of
        the hour), ``solar_zenith_deg`` (apparent), ``solar_azimuth_deg``, ``aoi_deg``,
        ``poa_W_m2``, ``poa_direct_W_m2``, ``poa_sky_diffuse_W_m2``, ``poa_ground_W_m2``,
        ``air_temperature_C``, ``wind_speed_m_s``, ``cell_temperature_C``, ``shape_fallback``.
    wavelength_nm : (M,) ndarray
        SPECTRL2's wavelengths, 300-4000 nm.
    irradiance_W_m2_nm : (H, M) ndarray
        The scaled spectrum of each hour.
    clear_sky_W_m2_nm : (H, M) ndarray
        SPECTRL2's unscaled plane-of-array global spectrum of each hour.
    all_hours : pandas.DataFrame
        ``poa_W_m2`` and ``sun_up`` for every hour of the file.
    settings : dict
        What was assumed (for the JSON).
    """

    frame: object
    wavelength_nm: np.ndarray
    irradiance_W_m2_nm: np.ndarray
    clear_sky_W_m2_nm: np.ndarray
    all_hours: object
    settings: dict

    @property
    def photon_flux(self):
        """(H, M) spectral photon flux [m^-2 s^-1 nm^-1]."""
        return photon_flux(self.wavelength_nm[None, :], self.irradiance_W_m2_nm)


def _check_choice(value, options, option):
    if value not in options:
        raise StackError(f"{option} {value!r} is not known", where=option,
                         fix="one of " + ", ".join(options))


def temperature_parameters(mounting):
    """SAPM cell-temperature parameters (a, b, deltaT) of a named mounting (pvlib's table)."""
    from pvlib.temperature import TEMPERATURE_MODEL_PARAMETERS

    table = TEMPERATURE_MODEL_PARAMETERS["sapm"]
    _check_choice(mounting, list(table), "--mounting")
    return dict(table[mounting])


def sun_geometry(times, *, latitude, longitude, altitude_m, pressure_Pa, air_temperature_C,
                 tilt_deg, azimuth_deg):
    """Sun position, relative airmass and angle of incidence on a plane at some times.

    Parameters
    ----------
    times : pandas.DatetimeIndex
        Time zone aware (the instants the sun is wanted: the middle of each hour).
    latitude, longitude : float
        [deg], north and east positive.
    altitude_m : float
    pressure_Pa, air_temperature_C : array_like
        For the refraction correction.
    tilt_deg, azimuth_deg : float
        The plane (azimuth clockwise from north).

    Returns
    -------
    dict of ndarray
        ``zenith_deg`` (apparent, refraction included), ``azimuth_deg``, ``airmass`` (relative,
        Kasten & Young 1989, as SPECTRL2's reference code uses) and ``aoi_deg``.
    """
    import pvlib

    sun = pvlib.solarposition.get_solarposition(times, latitude, longitude, altitude=altitude_m,
                                                pressure=pressure_Pa,
                                                temperature=air_temperature_C)
    zenith = sun["apparent_zenith"].to_numpy(dtype=float)
    azimuth = sun["azimuth"].to_numpy(dtype=float)
    with np.errstate(invalid="ignore"):
        airmass = np.asarray(pvlib.atmosphere.get_relative_airmass(
            zenith, model="kastenyoung1989"), dtype=float)
    aoi = np.asarray(pvlib.irradiance.aoi(tilt_deg, azimuth_deg, zenith, azimuth), dtype=float)
    return {"zenith_deg": zenith, "azimuth_deg": azimuth, "airmass": airmass, "aoi_deg": aoi}


def clear_sky_plane_spectra(geometry, *, tilt_deg, albedo, pressure_Pa, precipitable_water_cm,
                            day_of_year, ozone_atm_cm=OZONE_ATM_CM,
                            aerosol_turbidity_500nm=AEROSOL_TURBIDITY_500NM):
    """SPECTRL2's clear-sky spectra on a plane (``pvlib.spectrum.spectrl2``), one row per case.

    Parameters
    ----------
    geometry : dict
        From :func:`sun_geometry` (rows with the sun up).
    tilt_deg : float
    albedo, pressure_Pa, precipitable_water_cm, day_of_year : array_like
        Per case: ground albedo [-], surface pressure [Pa], precipitable water [cm], day of year.
    ozone_atm_cm, aerosol_turbidity_500nm : float

    Returns
    -------
    wavelength_nm : (122,) ndarray
    components : dict of (H, 122) ndarray
        ``poa_direct``, ``poa_sky_diffuse``, ``poa_ground_diffuse``, ``poa_global``, ``dni``,
        ``dhi``, ``dni_extra`` [W m^-2 nm^-1], NaN replaced by 0 and negatives clipped.
    """
    import pvlib

    spectra = pvlib.spectrum.spectrl2(
        apparent_zenith=geometry["zenith_deg"], aoi=geometry["aoi_deg"], surface_tilt=tilt_deg,
        ground_albedo=albedo, surface_pressure=pressure_Pa,
        relative_airmass=geometry["airmass"], precipitable_water=precipitable_water_cm,
        ozone=ozone_atm_cm, aerosol_turbidity_500nm=aerosol_turbidity_500nm,
        dayofyear=day_of_year)
    wavelength = np.asarray(spectra["wavelength"], dtype=float)
    keys = ("poa_direct", "poa_sky_diffuse", "poa_ground_diffuse", "poa_global", "dni", "dhi",
            "dni_extra")
    rows = np.size(geometry["zenith_deg"])
    components = {k: np.nan_to_num(np.asarray(spectra[k], dtype=float).reshape(-1, rows).T,
                                   nan=0.0).clip(min=0.0) for k in keys}
    return wavelength, components


def hourly_light(weather, *, tilt_deg, azimuth_deg, sky_model="perez", mounting=MOUNTING,
                 albedo=None, scaling="total", ozone_atm_cm=OZONE_ATM_CM,
                 aerosol_turbidity_500nm=AEROSOL_TURBIDITY_500NM):
    """Sun, plane-of-array irradiance, spectra and cell temperature of every hour with light.

    Parameters
    ----------
    weather : Weather
    tilt_deg : float
        Plane tilt from horizontal [deg], 0-90.
    azimuth_deg : float
        Plane azimuth [deg], clockwise from north (180 faces south).
    sky_model : str
        Sky-diffuse model of ``pvlib.irradiance.get_total_irradiance``.
    mounting : str
        SAPM cell-temperature parameter set (``pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS``).
    albedo : float, optional
        Ground albedo; default the file's hourly values where it has them, else 0.2.
    scaling : {"components", "total"}
        Scale each SPECTRL2 component to its measured broadband part, or the summed spectrum to
        the measured total.
    ozone_atm_cm, aerosol_turbidity_500nm : float
        SPECTRL2's ozone column and aerosol turbidity (the file's TMY3 AOD is broadband and mostly
        missing; defaults: the ASTM G173-03 atmosphere).
    """
    import pandas as pd
    import pvlib

    from siltandem.stack.options import check_plane

    check_plane(tilt_deg=tilt_deg, azimuth_deg=azimuth_deg, albedo=albedo)
    _check_choice(sky_model, SKY_MODELS, "--sky-model")
    _check_choice(scaling, SCALINGS, "--scaling")
    parameters = temperature_parameters(mounting)
    data = weather.data
    stamps = data.index
    middle = stamps - pd.Timedelta(minutes=30)
    pressure_Pa = data["pressure"].to_numpy() * 100.0
    air_C = data["temp_air"].to_numpy()
    sun = sun_geometry(middle, latitude=weather.latitude, longitude=weather.longitude,
                       altitude_m=weather.altitude_m, pressure_Pa=pressure_Pa,
                       air_temperature_C=air_C, tilt_deg=tilt_deg, azimuth_deg=azimuth_deg)
    zenith, solar_azimuth, aoi = sun["zenith_deg"], sun["azimuth_deg"], sun["aoi_deg"]
    extra = np.asarray(pvlib.irradiance.get_extra_radiation(np.asarray(middle.day_of_year)),
                       dtype=float)
    ground_albedo = (data["albedo"].to_numpy() if albedo is None
                     else np.full(len(data), float(albedo)))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        poa = pvlib.irradiance.get_total_irradiance(
            tilt_deg, azimuth_deg, zenith, solar_azimuth, data["dni"].to_numpy(),
            data["ghi"].to_numpy(), data["dhi"].to_numpy(), dni_extra=extra,
            airmass=sun["airmass"], albedo=ground_albedo, model=sky_model)
    parts = {k: np.nan_to_num(np.asarray(poa[k], dtype=float), nan=0.0).clip(min=0.0)
             for k in ("poa_direct", "poa_sky_diffuse", "poa_ground_diffuse")}
    total = parts["poa_direct"] + parts["poa_sky_diffuse"] + parts["poa_ground_diffuse"]
    sun_up = zenith < 90.0
    lit = sun_up & (total > 0)
    rows = np.flatnonzero(lit)
    wavelength, shape = clear_sky_plane_spectra(
        {k: v[rows] for k, v in sun.items()}, tilt_deg=tilt_deg,
        albedo=ground_albedo[rows], pressure_Pa=pressure_Pa[rows],
        precipitable_water_cm=data["precipitable_water"].to_numpy()[rows],
        day_of_year=np.asarray(middle.day_of_year)[rows], ozone_atm_cm=ozone_atm_cm,
        aerosol_turbidity_500nm=aerosol_turbidity_500nm)
    clear = shape["poa_direct"] + shape["poa_sky_diffuse"] + shape["poa_ground_diffuse"]
    if scaling == "components":
        keys = ("poa_direct", "poa_sky_diffuse", "poa_ground_diffuse")
        irradiance, fallback = scaled_spectra(wavelength, shapes=[shape[k] for k in keys],
                                              broadband_W_m2=[parts[k][rows] for k in keys])
    else:
        irradiance, fallback = scaled_spectra(wavelength, shapes=[clear],
                                              broadband_W_m2=[total[rows]])
    cell_C = pvlib.temperature.sapm_cell(total[rows], air_C[rows],
                                         data["wind_speed"].to_numpy()[rows], **parameters)
    frame = pd.DataFrame({
        "sun_time": middle[rows],
        "solar_zenith_deg": zenith[rows], "solar_azimuth_deg": solar_azimuth[rows],
        "aoi_deg": aoi[rows], "poa_W_m2": total[rows],
        "poa_direct_W_m2": parts["poa_direct"][rows],
        "poa_sky_diffuse_W_m2": parts["poa_sky_diffuse"][rows],
        "poa_ground_W_m2": parts["poa_ground_diffuse"][rows],
        "air_temperature_C": air_C[rows], "wind_speed_m_s": data["wind_speed"].to_numpy()[rows],
        "cell_temperature_C": np.asarray(cell_C, dtype=float), "shape_fallback": fallback,
    }, index=stamps[rows])
    all_hours = pd.DataFrame({"poa_W_m2": total, "sun_up": sun_up}, index=stamps)
    settings = {
        "tilt_deg": float(tilt_deg), "azimuth_deg": float(azimuth_deg), "sky_model": sky_model,
        "albedo": "from the weather file (0.2 where missing)" if albedo is None else float(albedo),
        "sun_position": "pvlib.solarposition.get_solarposition (NREL SPA) at the middle of each "
                        "hour (time stamp - 30 min: TMY3 values are totals of the hour ending at "
                        "the stamp), refraction from the hour's pressure and air temperature",
        "plane_of_array": f"pvlib.irradiance.get_total_irradiance, model {sky_model!r}, "
                          "airmass kastenyoung1989",
        "spectrum": "pvlib.spectrum.spectrl2 (Bird & Riordan) on the plane, 300-4000 nm; shape "
                    "from SPECTRL2, magnitude from the measured plane-of-array irradiance ("
                    + ("each of direct, sky-diffuse and ground-reflected scaled to its own "
                       "broadband part" if scaling == "components" else
                       "the summed spectrum scaled to the total") + ")",
        "scaling": scaling, "ozone_atm_cm": ozone_atm_cm,
        "aerosol_turbidity_500nm": aerosol_turbidity_500nm,
        "precipitable_water": "from the weather file (1.42 cm where missing)",
        "temperature_model": {"function": "pvlib.temperature.sapm_cell", "parameters": mounting,
                              **parameters},
    }
    return HourlyLight(frame, wavelength, irradiance, clear, all_hours, settings)


# ------------------------------------------------------------------------- measured subcells
def read_eqe_csv(path, *, where=None):
    """Read a measured external quantum efficiency: columns ``wavelength_nm`` and ``eqe`` (0..1).

    Returns (wavelength_nm, eqe) as float arrays; StackError for anything it cannot use.
    """
    import pandas as pd

    path = Path(path)
    fix = ("give a CSV with a header line 'wavelength_nm,eqe' and one row per wavelength (nm, "
           "increasing) with the external quantum efficiency as a fraction 0..1")
    if not path.is_file():
        raise StackError("quantum-efficiency file not found", file=path, where=where, fix=fix)
    try:
        frame = pd.read_csv(path, comment="#")
    except Exception as exc:  # pandas raises several types for unreadable files
        raise StackError(f"cannot read it as CSV ({exc.__class__.__name__}: "
                         f"{excerpt(str(exc), 120)})", file=path, where=where, fix=fix) from None
    frame.columns = [str(c).strip() for c in frame.columns]
    if "wavelength_nm" not in frame.columns or "eqe" not in frame.columns:
        shown = ", ".join(excerpt(c, 30) for c in frame.columns[:6]) + (
            f" and {len(frame.columns) - 6} more" if len(frame.columns) > 6 else "")
        raise StackError(f"columns [{shown}]: need 'wavelength_nm' and 'eqe'",
                         file=path, where="header", fix=fix)
    lam = pd.to_numeric(frame["wavelength_nm"], errors="coerce").to_numpy(dtype=float)
    eqe = pd.to_numeric(frame["eqe"], errors="coerce").to_numpy(dtype=float)
    if lam.size < 2 or not (np.isfinite(lam).all() and np.isfinite(eqe).all()):
        raise StackError("fewer than two rows, or values that are not numbers", file=path,
                         where=where, fix=fix)
    if np.any(np.diff(lam) <= 0) or lam[0] <= 0:
        raise StackError("wavelengths are not positive and increasing", file=path, where=where,
                         fix="sort the rows by wavelength and remove repeated wavelengths")
    from siltandem.materials.spectra import MICROMETRE_HINT_NM

    if lam[-1] < MICROMETRE_HINT_NM:
        raise StackError(f"the wavelengths run from {lam[0]:g} to {lam[-1]:g}: below "
                         f"{MICROMETRE_HINT_NM:g} they look like micrometres, not nm", file=path,
                         where=where, fix="give wavelengths in nm (multiply micrometres by 1000)")
    if np.any(eqe < 0) or np.any(eqe > 1):
        hint = " (it looks like percent: divide by 100)" if eqe.max() > 1.5 else ""
        raise StackError(f"eqe values outside [0, 1]{hint}", file=path, where=where,
                         fix="give the quantum efficiency as a fraction 0..1")
    return lam, eqe


def _eqe_tables(eqe, subcell_names):
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


def _gap_laws(gap_materials, subcell_names):
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
        from siltandem.result.driver import json_text

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


def annual_yield(stack, weather, *, tilt_deg=None, azimuth_deg=None, sky_model="perez",
                 mounting=MOUNTING, albedo=None, scaling="total", gap_materials=None,
                 eqe=None, split_losses=False, ozone_atm_cm=OZONE_ATM_CM,
                 aerosol_turbidity_500nm=AEROSOL_TURBIDITY_500NM):
    """Energy of an element stack over the weather file's year: one batched solve of all hours.

    Parameters
    ----------
    stack : Stack
        An element stack (``[[element]]``); layer stacks are not yet supported.
    weather : Weather or str or Path
        A :class:`Weather` or the path of a TMY3 file (``"demo"``: the one pvlib ships).
    tilt_deg : float, optional
        Plane tilt [deg]; default the latitude's magnitude (common practice, no source).
    azimuth_deg : float, optional
        Plane azimuth clockwise from north [deg]; default facing the equator (180 north of it,
        0 south of it).
    sky_model, mounting, albedo, scaling, ozone_atm_cm, aerosol_turbidity_500nm
        See :func:`hourly_light`.
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
    if not isinstance(weather, Weather):
        weather = read_weather(weather)
    if tilt_deg is None:
        tilt_deg = abs(weather.latitude)
    if azimuth_deg is None:
        azimuth_deg = 180.0 if weather.latitude >= 0 else 0.0
    light = hourly_light(weather, tilt_deg=tilt_deg, azimuth_deg=azimuth_deg,
                         sky_model=sky_model, mounting=mounting, albedo=albedo, scaling=scaling,
                         ozone_atm_cm=ozone_atm_cm,
                         aerosol_turbidity_500nm=aerosol_turbidity_500nm)
    circuit = compile_stack(stack)
    subcells = circuit.subcells
    names = [s.name for s in subcells]
    laws = _gap_laws(gap_materials, names)
    # a subcell that names its material in the stack file follows that material's gap law
    # unless --gap-material says otherwise
    for cell in subcells:
        if cell.gap_material is not None and cell.name not in laws:
            laws[cell.name] = _gap_laws({cell.name: cell.gap_material}, names)[cell.name]
    tables = _eqe_tables(eqe, names)
    eqe_files = {name: (str(value) if isinstance(value, (str, Path)) else None, f"--eqe {name}")
                 for name, value in (eqe or {}).items()}
    # a subcell whose stack file gives its measured EQE uses it unless --eqe says otherwise
    for cell in subcells:
        if cell.eqe_table is not None and cell.name not in tables:
            tables[cell.name] = cell.eqe_table
            eqe_files[cell.name] = (cell.eqe_file, None)
    frame = light.frame
    hours = len(frame)
    if hours == 0:
        raise StackError("no hour of the year puts light on this plane", where="--tilt",
                         fix="check the weather file and the plane's tilt and azimuth")
    temperature = (frame["cell_temperature_C"].to_numpy() + 273.15).reshape(-1, 1)
    reference_K = stack.conditions.temperature_K

    # gaps of each hour, and the photocurrents they give
    file_gaps = [s.gap_eV for s in subcells]
    gaps = []
    for cell in subcells:
        if cell.name in laws:
            material = laws[cell.name]
            shift = (np.asarray(material.gap_eV(temperature), dtype=float)
                     - float(material.gap_eV(reference_K)))
            gaps.append(cell.gap_eV + shift)
        else:
            gaps.append(cell.gap_eV)
    flux = light.photon_flux
    absorptances = [s.absorptance for s in subcells]
    reference = get_spectrum(STANDARD_SPECTRUM)
    layered = circuit.model is not None
    if layered:
        # layer stacks: the layers' optics and collection for every hour's spectrum; the dark
        # currents follow each hour's temperature (layer_stage.dark_currents_at)
        from siltandem.circuit.from_layers import dark_currents_at, layer_photocurrents

        photocurrents = [np.asarray(j, dtype=float).reshape(-1, 1) for j in
                         layer_photocurrents(circuit.model, light.wavelength_nm, flux)]
        spectral_only = photocurrents
        on_grid = np.interp(light.wavelength_nm, reference.wavelength_nm, reference.photon_flux)
        reference_currents = [np.asarray(j, dtype=float) for j in layer_photocurrents(
            circuit.model, light.wavelength_nm, on_grid)]
        dark = dark_currents_at(circuit.model, circuit, temperature)
        gaps = [dark[c.name][2] for c in subcells]
        # layer subcells follow their absorber's Varshni law and intrinsic density
        laws = {c.name: circuit.model.materials[m.emitter]
                for c, m in zip(subcells, circuit.model.subcells)}
    else:
        photocurrents = step_absorber_photocurrents_rows(gaps, absorptances,
                                                         light.wavelength_nm, flux)
        spectral_only = (photocurrents if not laws else
                         step_absorber_photocurrents_rows(file_gaps, absorptances,
                                                          light.wavelength_nm, flux))
        reference_currents = step_absorber_photocurrents(file_gaps, absorptances,
                                                         reference.wavelength_nm,
                                                         reference.photon_flux)
    for k, name in enumerate(names):
        if name in tables:
            lam_q, q = tables[name]
            photocurrents[k] = quantum_efficiency_photocurrent(
                flux, wavelength_nm=light.wavelength_nm, eqe_wavelength_nm=lam_q,
                eqe=q).reshape(-1, 1)
            spectral_only[k] = photocurrents[k]
            reference_currents[k] = quantum_efficiency_photocurrent(
                reference.photon_flux, wavelength_nm=reference.wavelength_nm,
                eqe_wavelength_nm=lam_q, eqe=q)
            path, where = eqe_files[name]
            check_eqe_current(name, path, reference_currents[k], file_gaps[k],
                              reference.wavelength_nm, reference.photon_flux,
                              light=f"{STANDARD_SPECTRUM} (the yield's reference)", where=where)
    poa = frame["poa_W_m2"].to_numpy()
    field_irradiance = np.trapezoid(light.irradiance_W_m2_nm, light.wavelength_nm, axis=1)
    mismatch = {name: spectral_mismatch_factor(
        spectral_only[k][:, 0], irradiance_W_m2=field_irradiance,
        reference_photocurrent_A_m2=float(np.asarray(reference_currents[k]).reshape(-1)[0]),
        reference_irradiance_W_m2=reference.integral_W_m2) for k, name in enumerate(names)}
    hourly_cells = {cell.name: replace(cell, gap_eV=np.asarray(gap, dtype=float),
                                       photocurrent_A_m2=np.asarray(jph, dtype=float))
                    for cell, gap, jph in zip(subcells, gaps, photocurrents)}
    if layered:
        hourly_cells = {name: replace(cell, j01_fixed_A_m2=np.asarray(dark[name][0], dtype=float),
                                      j02_A_m2=np.asarray(dark[name][1], dtype=float))
                        for name, cell in hourly_cells.items()}
    else:
        # J02 follows n_i with each hour's temperature and gap, from its value at the stack's
        # temperature (J01 = J0,rad/ERE follows through the generalized Planck law)
        from siltandem.laws.diode import intrinsic_density_ratio

        hourly_cells = {cell.name: replace(hourly_cells[cell.name], j02_A_m2=cell.j02_A_m2
                                           * intrinsic_density_ratio(
                                               temperature, gap_eV=gap,
                                               reference_temperature_K=reference_K,
                                               reference_gap_eV=cell.gap_eV))
                        for cell, gap in zip(subcells, gaps)}

    def lit(element):
        return hourly_cells.get(element.name, element)

    # the stack as wired, string by string
    wired = np.zeros(hours)
    failed = np.zeros(hours, dtype=bool)
    for string in circuit.strings:
        solution = _solve([lit(e) for e in string], temperature)
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
    alone = {}
    for name in names:
        solution = _solve([hourly_cells[name]], temperature)
        alone[name] = _power(solution)
        failed |= solution.failed
    independent = np.sum([alone[n] for n in names], axis=0)
    stacked = np.concatenate([np.broadcast_to(j, (hours, 1)) for j in photocurrents], axis=1)
    limiting_index = np.argmin(stacked, axis=1)
    limiting = np.array(names, dtype=object)[limiting_index]

    # standard test conditions: the file's stack under AM1.5G at 25 degC (a measured-EQE
    # subcell with its EQE's photocurrent)
    standard = illuminate(compile_stack(stack), reference)
    standard = standard.with_elements([
        cell.with_photocurrent(float(np.asarray(reference_currents[k]).reshape(-1)[0]))
        for k, cell in enumerate(standard.subcells) if cell.name in tables])
    standard_power = sum(float(_power(_solve(s, STANDARD_TEMPERATURE_K))[0])
                         for s in standard.strings)
    standard_efficiency = 100 * standard_power / reference.irradiance_W_m2

    with np.errstate(divide="ignore", invalid="ignore"):
        efficiency = np.where(poa > 0, 100 * wired / poa, np.nan)
    hourly = frame.copy()
    for k, name in enumerate(names):
        if name in laws:
            hourly[f"{name}.gap_eV"] = np.asarray(gaps[k], dtype=float)[:, 0]
        hourly[f"{name}.photocurrent_mA_cm2"] = units.ma_cm2(
            np.broadcast_to(photocurrents[k], (hours, 1))[:, 0])
        hourly[f"{name}.mismatch_factor"] = mismatch[name]
        hourly[f"{name}.alone_W_m2"] = alone[name]
    hourly["power_W_m2"] = wired
    hourly["efficiency_pct"] = efficiency
    hourly["two_terminal_W_m2"] = series_power
    hourly["four_terminal_W_m2"] = independent
    hourly["limiting_subcell"] = limiting
    hourly["failed"] = failed

    from siltandem.studies.yield_report import _summarise

    summary, monthly = _summarise(stack, weather, light, hourly, names, laws, tables,
                                  standard_efficiency, bare_power, passive)
    return YieldResult(summary, hourly, monthly, light)


def text_summary(result):
    """Terminal text of a yield result (yield_report.py)."""
    from siltandem.studies.yield_report import text_summary as text

    return text(result)


def hourly_table(result):
    """One row per hour with light (yield_report.py)."""
    from siltandem.studies.yield_report import hourly_table as table

    return table(result)


def plot_yield(result, axes=None):
    """Energy by month; the limiting subcell through a summer and a winter day."""
    from siltandem.studies.yield_report import plot_yield as plot

    return plot(result, axes)
