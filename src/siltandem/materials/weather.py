"""Typical-year weather files: TMY3 read through pvlib, checked to cover one year hour by hour,
with plausible station data and hourly values."""
from dataclasses import dataclass
from pathlib import Path
import warnings

import numpy as np

from siltandem.errors import StackError
from siltandem.text import excerpt


#: precipitable water [cm] where the weather file gives none: the ASTM G173-03 atmosphere
#: (C. A. Gueymard, D. Myers, K. Emery, Solar Energy 73 (2002) 443; from memory)
PRECIPITABLE_WATER_CM = 1.42
#: ground albedo where the file gives none (common practice, no source)
ALBEDO = 0.2
#: TMY3 years are stitched from different years; the dates are placed in this non-leap year
TYPICAL_YEAR = 1990
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
