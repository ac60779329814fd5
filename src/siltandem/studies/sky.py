"""The light of every hour of a typical year on the plane of array: sun position, plane-of-array
irradiance, clear-sky SPECTRL2 spectra scaled to the measured irradiance, cell temperature.

How each step is made, and its sources, is in studies/yield_year.py's docstring and notes/yield.md.
"""
from dataclasses import dataclass
import warnings

import numpy as np

from siltandem.errors import StackError
from siltandem.laws.optics import photon_flux
from siltandem.laws.spectral import scaled_spectra


#: SPECTRL2's atmosphere where the weather file gives nothing: the ASTM G173-03 atmosphere
#: (C. A. Gueymard, D. Myers, K. Emery, Solar Energy 73 (2002) 443; values from memory):
#: ozone 0.3438 atm-cm, aerosol optical depth 0.084 at 500 nm, precipitable water 1.42 cm
#: (materials.weather fills missing water from it)
OZONE_ATM_CM = 0.3438
AEROSOL_TURBIDITY_500NM = 0.084
#: the cell-temperature parameter set used unless another is named
MOUNTING = "open_rack_glass_glass"
SKY_MODELS = ("perez", "haydavies", "isotropic", "klucher", "reindl", "king")
SCALINGS = ("components", "total")


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
        ``air_temperature_C``, ``wind_speed_m_s``, ``cell_temperature_C``, ``shape_fallback``,
        ``surface_tilt_deg``, ``surface_azimuth_deg`` (the tracker's in each hour),
        ``angle_factor_direct``, ``angle_factor_sky``, ``angle_factor_ground`` (the cover's
        angle-of-incidence factors, 1 without losses) and ``poa_passed_W_m2`` (the parts times
        their factors: what the spectrum integrates to).
    wavelength_nm : (M,) ndarray
        SPECTRL2's wavelengths, 300-4000 nm (or the measured spectra's).
    irradiance_W_m2_nm : (H, M) ndarray
        The scaled spectrum of each hour.
    clear_sky_W_m2_nm : (H, M) ndarray
        SPECTRL2's unscaled plane-of-array global spectrum of each hour ((H, 0) with measured
        spectra).
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


def _plane_of_array(data, sun, extra, *, tilt_deg, azimuth_deg, ground_albedo, sky_model):
    """Broadband plane-of-array irradiance of every hour [W/m2]
    (``pvlib.irradiance.get_total_irradiance``): its direct, sky-diffuse and ground-reflected
    parts (NaN as 0, negatives clipped) and their total."""
    import pvlib

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        poa = pvlib.irradiance.get_total_irradiance(
            tilt_deg, azimuth_deg, sun["zenith_deg"], sun["azimuth_deg"],
            data["dni"].to_numpy(), data["ghi"].to_numpy(), data["dhi"].to_numpy(),
            dni_extra=extra, airmass=sun["airmass"], albedo=ground_albedo, model=sky_model)
    parts = {k: np.nan_to_num(np.asarray(poa[k], dtype=float), nan=0.0).clip(min=0.0)
             for k in ("poa_direct", "poa_sky_diffuse", "poa_ground_diffuse")}
    total = parts["poa_direct"] + parts["poa_sky_diffuse"] + parts["poa_ground_diffuse"]
    return parts, total


def _scale_spectra(wavelength, shape, parts, total, rows, scaling):
    """The lit hours' SPECTRL2 shapes scaled to the measured irradiance (each component to its
    part, or the sum to the total): (irradiance [W m^-2 nm^-1], fallback flags, clear-sky sum)."""
    clear = shape["poa_direct"] + shape["poa_sky_diffuse"] + shape["poa_ground_diffuse"]
    if scaling == "components":
        keys = ("poa_direct", "poa_sky_diffuse", "poa_ground_diffuse")
        irradiance, fallback = scaled_spectra(wavelength, shapes=[shape[k] for k in keys],
                                              broadband_W_m2=[parts[k][rows] for k in keys])
    else:
        irradiance, fallback = scaled_spectra(wavelength, shapes=[clear],
                                              broadband_W_m2=[total[rows]])
    return irradiance, fallback, clear


def _light_frame(data, middle, sun, parts, total, air_C, cell_C, fallback, rows, plane, factors,
                 passed):
    """The table of the lit hours (see :class:`HourlyLight`), indexed by the file's stamps."""
    import pandas as pd

    return pd.DataFrame({
        "surface_tilt_deg": plane["surface_tilt_deg"][rows],
        "surface_azimuth_deg": plane["surface_azimuth_deg"][rows],
        "sun_time": middle[rows],
        "solar_zenith_deg": sun["zenith_deg"][rows], "solar_azimuth_deg": sun["azimuth_deg"][rows],
        "aoi_deg": sun["aoi_deg"][rows], "poa_W_m2": total[rows],
        "poa_direct_W_m2": parts["poa_direct"][rows],
        "poa_sky_diffuse_W_m2": parts["poa_sky_diffuse"][rows],
        "poa_ground_W_m2": parts["poa_ground_diffuse"][rows],
        "air_temperature_C": air_C[rows], "wind_speed_m_s": data["wind_speed"].to_numpy()[rows],
        "cell_temperature_C": np.asarray(cell_C, dtype=float), "shape_fallback": fallback,
        "angle_factor_direct": factors["direct"][rows], "angle_factor_sky": factors["sky"][rows],
        "angle_factor_ground": factors["ground"][rows], "poa_passed_W_m2": passed[rows],
    }, index=data.index[rows])


def _light_settings(*, tilt_deg, azimuth_deg, sky_model, albedo, scaling, ozone_atm_cm,
                    aerosol_turbidity_500nm, mounting, parameters, middle_offset_min=-30.0,
                    tracking=None, angle_losses="none", measured=False):
    """What the hourly light assumed, for the JSON."""
    from siltandem.studies.plane import GLASS, MARTIN_RUIZ_A_R

    tracking = tracking or {"tracking": "fixed"}
    losses = {"none": "none (every part reaches the cells as on the plane)",
              "glass": f"pvlib.iam.physical {GLASS} on the direct part, "
                       "pvlib.iam.marion_diffuse on the sky-diffuse and ground-reflected parts",
              "martin-ruiz": f"pvlib.iam.martin_ruiz a_r={MARTIN_RUIZ_A_R} on the direct part, "
                             "pvlib.iam.martin_ruiz_diffuse on the others"}[angle_losses]
    return {
        "tilt_deg": float(tilt_deg), "azimuth_deg": float(azimuth_deg), "sky_model": sky_model,
        **tracking, "angle_losses": angle_losses, "angle_losses_means": losses,
        "albedo": "from the weather file (0.2 where missing)" if albedo is None else float(albedo),
        "sun_position": "pvlib.solarposition.get_solarposition (NREL SPA) at the middle of each "
                        f"hour (time stamp {middle_offset_min:+g} min: TMY3 stamps the end of "
                        "the hour, pvlib's TMY2 and EPW readers its start), refraction from the "
                        "hour's pressure and air temperature",
        "plane_of_array": f"pvlib.irradiance.get_total_irradiance, model {sky_model!r}, "
                          "airmass kastenyoung1989",
        "spectrum": "pvlib.spectrum.spectrl2 (Bird & Riordan) on the plane, 300-4000 nm; shape "
                    "from SPECTRL2, magnitude from the measured plane-of-array irradiance ("
                    + ("each of direct, sky-diffuse and ground-reflected scaled to its own "
                       "broadband part" if scaling == "components" else
                       "the summed spectrum scaled to the total") + ")",
        **({"spectrum": "measured hourly spectra on the plane, as given (not scaled); times the "
                        "angle-loss share of the hour's plane-of-array irradiance"}
           if measured else {}),
        "scaling": None if measured else scaling, "ozone_atm_cm": ozone_atm_cm,
        "aerosol_turbidity_500nm": aerosol_turbidity_500nm,
        "precipitable_water": "from the weather file (1.42 cm where missing)",
        "temperature_model": {"function": "pvlib.temperature.sapm_cell", "parameters": mounting,
                              **parameters},
    }


def hourly_light(weather, *, tilt_deg, azimuth_deg, sky_model="perez", mounting=MOUNTING,
                 albedo=None, scaling="total", ozone_atm_cm=OZONE_ATM_CM,
                 aerosol_turbidity_500nm=AEROSOL_TURBIDITY_500NM, tracking="fixed",
                 max_rotation_deg=None, ground_coverage=None, angle_losses="none",
                 measured_spectra=None):
    """Sun, plane-of-array irradiance, spectra and cell temperature of every hour with light.

    Parameters
    ----------
    weather : Weather
    tilt_deg : float
        Plane tilt from horizontal [deg], 0-90; on a tracker, the tilt of its axis.
    azimuth_deg : float
        Plane azimuth [deg], clockwise from north (180 faces south); on a tracker, its axis's.
    sky_model : str
        Sky-diffuse model of ``pvlib.irradiance.get_total_irradiance``.
    mounting : str
        SAPM cell-temperature parameter set (``pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS``).
    albedo : float, optional
        Ground albedo; default the file's hourly values where it has them, else 0.2.
    scaling : {"total", "components"}
        Scale the summed SPECTRL2 spectrum to the measured plane-of-array total (default), or
        each SPECTRL2 component to its measured broadband part (see notes/yield.md: that gives
        overcast hours the clear sky's blue diffuse shape).
    ozone_atm_cm, aerosol_turbidity_500nm : float
        SPECTRL2's ozone column and aerosol turbidity (the file's TMY3 AOD is broadband and mostly
        missing; defaults: the ASTM G173-03 atmosphere).
    tracking : {"fixed", "one-axis"}
        A fixed plane, or a one-axis tracker with backtracking (``pvlib.tracking.singleaxis``).
    max_rotation_deg, ground_coverage : float, optional
        The tracker's largest rotation (default 60 deg) and its rows' ground coverage ratio
        (default 2/7, pvlib's).
    angle_losses : {"none", "glass", "martin-ruiz"}
        Angle-of-incidence losses of a cover (studies.plane); default none.
    measured_spectra : pandas.DataFrame, optional
        Checked measured hourly spectra (materials.hourly_spectra.measured_spectra), used as
        given instead of SPECTRL2's shapes for every hour with light.
    """
    import pandas as pd
    import pvlib

    from siltandem.materials.hourly_spectra import spectra_of_hours
    from siltandem.stack.options import check_plane
    from siltandem.studies.plane import (GROUND_COVERAGE, MAX_ROTATION_DEG, angle_factors,
                                         check_tracking, surface_orientation)

    check_plane(tilt_deg=tilt_deg, azimuth_deg=azimuth_deg, albedo=albedo)
    _check_choice(sky_model, SKY_MODELS, "--sky-model")
    _check_choice(scaling, SCALINGS, "--scaling")
    check_tracking(tracking, max_rotation_deg, ground_coverage, angle_losses)
    max_rotation_deg = MAX_ROTATION_DEG if max_rotation_deg is None else float(max_rotation_deg)
    ground_coverage = GROUND_COVERAGE if ground_coverage is None else float(ground_coverage)
    parameters = temperature_parameters(mounting)
    data = weather.data
    stamps = data.index
    middle = stamps + pd.Timedelta(minutes=weather.middle_offset_min)
    pressure_Pa = data["pressure"].to_numpy() * 100.0
    air_C = data["temp_air"].to_numpy()
    sun = sun_geometry(middle, latitude=weather.latitude, longitude=weather.longitude,
                       altitude_m=weather.altitude_m, pressure_Pa=pressure_Pa,
                       air_temperature_C=air_C, tilt_deg=tilt_deg, azimuth_deg=azimuth_deg)
    plane = surface_orientation(sun, tilt_deg=tilt_deg, azimuth_deg=azimuth_deg,
                                tracking=tracking, max_rotation_deg=max_rotation_deg,
                                ground_coverage=ground_coverage)
    sun["aoi_deg"] = plane["aoi_deg"]
    extra = np.asarray(pvlib.irradiance.get_extra_radiation(np.asarray(middle.day_of_year)),
                       dtype=float)
    ground_albedo = (data["albedo"].to_numpy() if albedo is None
                     else np.full(len(data), float(albedo)))
    parts, total = _plane_of_array(data, sun, extra, tilt_deg=plane["surface_tilt_deg"],
                                   azimuth_deg=plane["surface_azimuth_deg"],
                                   ground_albedo=ground_albedo, sky_model=sky_model)
    factors = angle_factors(plane["aoi_deg"], plane["surface_tilt_deg"], angle_losses)
    passed_parts = {k: parts[k] * factors[f] for k, f in (
        ("poa_direct", "direct"), ("poa_sky_diffuse", "sky"), ("poa_ground_diffuse", "ground"))}
    passed = sum(passed_parts.values())
    sun_up = sun["zenith_deg"] < 90.0
    lit = sun_up & (total > 0)
    rows = np.flatnonzero(lit)
    if measured_spectra is None:
        wavelength, shape = clear_sky_plane_spectra(
            {k: v[rows] for k, v in sun.items()}, tilt_deg=plane["surface_tilt_deg"][rows],
            albedo=ground_albedo[rows], pressure_Pa=pressure_Pa[rows],
            precipitable_water_cm=data["precipitable_water"].to_numpy()[rows],
            day_of_year=np.asarray(middle.day_of_year)[rows], ozone_atm_cm=ozone_atm_cm,
            aerosol_turbidity_500nm=aerosol_turbidity_500nm)
        irradiance, fallback, clear = _scale_spectra(wavelength, shape, passed_parts, passed,
                                                     rows, scaling)
    else:
        wavelength, measured = spectra_of_hours(measured_spectra, stamps[rows])
        with np.errstate(divide="ignore", invalid="ignore"):
            share = np.where(total[rows] > 0, passed[rows] / total[rows], 0.0)
        irradiance = measured * share[:, None]
        fallback = np.zeros(rows.size, dtype=bool)
        clear = np.empty((rows.size, 0))
    cell_C = pvlib.temperature.sapm_cell(total[rows], air_C[rows],
                                         data["wind_speed"].to_numpy()[rows], **parameters)
    frame = _light_frame(data, middle, sun, parts, total, air_C, cell_C, fallback, rows, plane,
                         factors, passed)
    all_hours = pd.DataFrame({"poa_W_m2": total, "sun_up": sun_up}, index=stamps)
    tracker = ({"tracking": "fixed"} if tracking == "fixed" else
               {"tracking": "one-axis (pvlib.tracking.singleaxis, backtracking; tilt_deg and "
                            "azimuth_deg are the axis's)",
                "max_rotation_deg": float(max_rotation_deg),
                "ground_coverage": float(ground_coverage)})
    settings = _light_settings(tilt_deg=tilt_deg, azimuth_deg=azimuth_deg, sky_model=sky_model,
                               albedo=albedo, scaling=scaling, ozone_atm_cm=ozone_atm_cm,
                               aerosol_turbidity_500nm=aerosol_turbidity_500nm,
                               mounting=mounting, parameters=parameters,
                               middle_offset_min=weather.middle_offset_min, tracking=tracker,
                               angle_losses=angle_losses,
                               measured=measured_spectra is not None)
    return HourlyLight(frame, wavelength, irradiance, clear, all_hours, settings)
