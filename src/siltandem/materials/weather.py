"""Typical-year weather: TMY2, TMY3 and EPW files read through ``pvlib.iotools`` (the format told
from the file itself) or a pandas DataFrame; checked to cover one year hour by hour, with plausible
station data and hourly values."""
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
        One row per hour, indexed by the file's time stamps (local standard time; where in the
        hour they sit: ``middle_offset_min``), with ``ghi``, ``dni``, ``dhi`` [W/m2],
        ``temp_air`` [degC], ``wind_speed`` [m/s],
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
    #: minutes from a row's time stamp to the middle of the hour its values belong to: -30 for
    #: stamps at the end of the hour (TMY3), +30 at its start (pvlib's TMY2 and EPW readers)
    middle_offset_min: float = -30.0
    #: the file's format ("TMY3", "TMY2", "EPW" or "DataFrame")
    kind: str = "TMY3"


def demo_weather_path():
    """The TMY3 file pvlib ships (Greensboro, North Carolina, USAF 723170)."""
    import pvlib

    return Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"


def _check_whole_year(index, path, where="--weather"):
    """Refuse a weather file that does not cover one year hour by hour: annual energy needs
    every hour of a typical year once (8760 hourly rows, TMY3 convention; W. Marion, K. Urban,
    NREL/TP-463-7668, 1995)."""
    repeated = int(index.duplicated().sum())
    if repeated:
        first = index[index.duplicated()][0]
        raise StackError(f"{repeated} repeated hour(s) (first {first:%d %b %H:%M}): each hour "
                         "would be counted more than once", file=path, where=where,
                         fix="give each hour of the year once (8760 hourly rows)")
    if len(index) < HOURS_PER_YEAR:
        span = (f"{index[0]:%d %b %H:%M} to {index[-1]:%d %b %H:%M}" if len(index)
                else "no hours")
        raise StackError(f"the {'file' if path else 'DataFrame'} covers {len(index)} of the "
                         f"{HOURS_PER_YEAR} hours of a year "
                         f"({span}): a partial year is not an annual energy", file=path,
                         where=where,
                         fix="give a whole typical year (8760 hourly rows), e.g. --weather demo")


    ordered = index.sort_values()
    steps = np.asarray((ordered[1:] - ordered[:-1]).total_seconds(), dtype=float) / 3600.0
    if steps.size and steps.min() < 1.0 - 1e-9:
        first = int(np.argmin(steps))
        raise StackError(f"rows only {steps.min() * 60:g} min apart (at "
                         f"{ordered[first]:%d %b %H:%M}): the year is summed hour by hour",
                         file=path, where=where,
                         fix="give hourly values (pandas: frame.resample('1h').mean())")
    span_days = (ordered[-1] - ordered[0]).total_seconds() / 86400.0
    if span_days >= 366.0:
        raise StackError(f"the rows span {span_days:.0f} days: more than one year",
                         file=path, where=where, fix="give one year of hourly values")


# ---------------------------------------------------------------------------- file formats
#: what a weather file must look like, for the messages of one that is not
_FORMAT_FIX = ("give a TMY3 CSV (station line, then column names, 8760 hourly rows; e.g. pvlib's "
               "data/723170TYA.CSV), a TMY2 file (fixed-width, e.g. pvlib's data/12839.tm2) or an "
               "EPW file (first line LOCATION,...), or --weather demo")


def weather_format(path):
    """The format of a weather file told from its first two lines: ``"EPW"`` (first line
    ``LOCATION,...``; EnergyPlus weather format), ``"TMY3"`` (a comma-separated station line,
    then a header with ``Date (MM/DD/YYYY)``; NREL/TP-581-43156, 2008) or ``"TMY2"`` (a
    fixed-width station line starting with the 5-digit WBAN number; NREL/TP-463-7668, 1995).
    StackError for anything else."""
    import re

    try:
        with open(path, encoding="latin-1") as handle:
            first, second = handle.readline(), handle.readline()
    except OSError as exc:
        raise StackError(f"cannot read it ({exc.__class__.__name__})", file=path,
                         where="--weather", fix=_FORMAT_FIX) from None
    if first.upper().startswith("LOCATION,"):
        return "EPW"
    if "," in first and "date (mm/dd/yyyy)" in second.lower():
        return "TMY3"
    if "," not in first and re.match(r"^\s*\d{5}\s+\S", first) and re.match(r"^\s*\d{8}", second):
        return "TMY2"
    raise StackError("cannot tell the weather file's format from its first lines (not TMY3, "
                     f"TMY2 or EPW): {excerpt(first.strip(), 60)}", file=path,
                     where="line 1", fix=_FORMAT_FIX)


def _positive_or(values, fill, upper):
    """``values`` where in (0, upper], else ``fill`` (files write 0, 99 or 999 for missing)."""
    values = np.asarray(values, dtype=float)
    return np.where((values > 0) & (values <= upper), values, fill)


def _read_tmy3(path):
    import pvlib

    data, meta = pvlib.iotools.read_tmy3(str(path), coerce_year=TYPICAL_YEAR, map_variables=True)
    frame = data.reindex(columns=["ghi", "dni", "dhi", "temp_air", "wind_speed", "pressure",
                                  "precipitable_water", "albedo"])
    return frame, meta, -30.0, str(meta.get("Name", ""))


def _read_tmy2(path):
    """TMY2 through pvlib (values as in the file): irradiance in Wh/m2 over the hour (its mean
    W/m2), temperature and wind speed in tenths, precipitable water in mm (Marion & Urban,
    NREL/TP-463-7668, 1995, tables 3-1 and 3-2)."""
    import pandas as pd
    import pvlib

    data, meta = pvlib.iotools.read_tmy2(str(path))
    frame = pd.DataFrame({
        "ghi": data["GHI"], "dni": data["DNI"], "dhi": data["DHI"],
        "temp_air": data["DryBulb"] / 10.0, "wind_speed": data["Wspd"] / 10.0,
        "pressure": data["Pressure"], "precipitable_water": data["Pwat"] / 10.0,
        "albedo": np.nan}, index=data.index)
    frame.index = frame.index.map(lambda t: t.replace(year=TYPICAL_YEAR))
    return frame, meta, 30.0, str(meta.get("City", ""))


def _read_epw(path):
    """EPW through pvlib: pressure in Pa, precipitable water in mm, 999 for missing (EnergyPlus
    Auxiliary Programs, weather file format)."""
    import pvlib

    data, meta = pvlib.iotools.read_epw(str(path), coerce_year=TYPICAL_YEAR)
    frame = data.reindex(columns=["ghi", "dni", "dhi", "temp_air", "wind_speed"]).copy()
    frame["pressure"] = data["atmospheric_pressure"] / 100.0
    frame["precipitable_water"] = data["precipitable_water"] / 10.0
    frame["albedo"] = data["albedo"].where(data["albedo"] <= 1.0)
    return frame, meta, 30.0, str(meta.get("city", ""))


_READERS = {"TMY3": _read_tmy3, "TMY2": _read_tmy2, "EPW": _read_epw}


# ------------------------------------------------------------------------------- data frames
#: the columns a weather DataFrame must have, and those it may have (pvlib's names and units)
FRAME_COLUMNS = {"ghi": "W/m2", "dni": "W/m2", "dhi": "W/m2", "temp_air": "degC"}
FRAME_OPTIONAL = {"wind_speed": "m/s (1 where missing)", "pressure": "mbar (the standard "
                  "pressure of the altitude where missing)", "precipitable_water": "cm (1.42 "
                  "where missing)", "albedo": "- (0.2 where missing)"}
#: wind speed where a DataFrame gives none [m/s] (common practice, no source)
WIND_SPEED_M_S = 1.0
#: where in the hour a DataFrame's stamps sit -> minutes to the middle of the hour
STAMPS = {"end": -30.0, "start": 30.0, "middle": 0.0}


def _frame_weather(frame, latitude, longitude, altitude_m, stamps):
    """A weather DataFrame checked and brought to the file readers' columns."""
    import pandas as pd

    where = "argument weather"
    if not isinstance(frame.index, pd.DatetimeIndex) or frame.index.tz is None:
        raise StackError("the DataFrame's index is not a time zone aware DatetimeIndex",
                         where=where, fix="index the rows by time with a time zone, e.g. "
                         "frame.tz_localize('Etc/GMT+5') for local standard time UTC-5")
    missing = [c for c in FRAME_COLUMNS if c not in frame.columns]
    if missing:
        raise StackError(f"no column(s) {', '.join(missing)} (has "
                         f"{excerpt(', '.join(map(str, frame.columns)), 120)})", where=where,
                         fix="give columns " + ", ".join(f"{k} [{u}]" for k, u in
                                                         FRAME_COLUMNS.items())
                         + "; optional " + ", ".join(f"{k} [{u}]" for k, u in
                                                     FRAME_OPTIONAL.items()))
    if stamps not in STAMPS:
        raise StackError(f"stamps {stamps!r} is not known", where="argument stamps",
                         fix="one of " + ", ".join(STAMPS) + " (where in its hour each row's "
                             "time stamp sits)")
    for key, value in (("latitude", latitude), ("longitude", longitude)):
        if value is None:
            raise StackError(f"no {key} for the DataFrame's station", where=where,
                             fix="give read_weather(frame, latitude=..., longitude=...) or set "
                                 "frame.attrs['latitude'] and frame.attrs['longitude'] (pvlib's "
                                 "metadata dict can be copied in: frame.attrs.update(meta))")
    out = pd.DataFrame(index=frame.index)
    for column in [*FRAME_COLUMNS, *FRAME_OPTIONAL]:
        values = frame[column] if column in frame.columns else np.nan
        out[column] = pd.to_numeric(values, errors="coerce") if column in frame.columns else values
    out["wind_speed"] = out["wind_speed"].fillna(WIND_SPEED_M_S)
    offset_h = frame.index[0].utcoffset().total_seconds() / 3600.0 if len(frame) else 0.0
    meta = {"latitude": latitude, "longitude": longitude,
            "altitude": 0.0 if altitude_m is None else altitude_m, "TZ": offset_h}
    return out, meta, STAMPS[stamps], str(frame.attrs.get("station", "DataFrame"))


# ------------------------------------------------------------------------------------ reading
def read_weather(source, *, latitude=None, longitude=None, altitude_m=None, stamps=None):
    """A year of hourly weather from a TMY3, TMY2 or EPW file or a pandas DataFrame.

    Parameters
    ----------
    source : str or Path or pandas.DataFrame
        A weather file, its format told from its first lines and read with
        ``pvlib.iotools.read_tmy3`` (``map_variables=True``), ``read_tmy2`` or ``read_epw``
        (``"demo"``: the TMY3 file pvlib ships, Greensboro, NC); or a DataFrame indexed by time
        zone aware stamps with columns ``ghi``, ``dni``, ``dhi`` [W/m2] and ``temp_air`` [degC],
        optionally ``wind_speed`` [m/s], ``pressure`` [mbar], ``precipitable_water`` [cm] and
        ``albedo`` [-] (pvlib's names), one row per hour of one year.
    latitude, longitude : float, optional
        The station [deg, north and east positive] of a DataFrame (default ``frame.attrs``).
    altitude_m : float, optional
        A DataFrame's station altitude [m] (default ``frame.attrs['altitude']``, else 0).
    stamps : {"end", "start", "middle"}, optional
        Where in its hour a DataFrame row's stamp sits (default ``frame.attrs['stamps']``, else
        "end", as TMY3; pvlib's read_tmy2 and read_epw give "start").

    Raises StackError for a missing, unknown or unreadable file, or one without the columns,
    hours or plausible values the yield needs.
    """
    import pandas as pd
    import pvlib

    if isinstance(source, pd.DataFrame):
        attrs = source.attrs
        frame, meta, offset, station = _frame_weather(
            source, latitude if latitude is not None else attrs.get("latitude"),
            longitude if longitude is not None else attrs.get("longitude"),
            altitude_m if altitude_m is not None else attrs.get("altitude"),
            stamps or attrs.get("stamps", "end"))
        path, kind = "a DataFrame", "DataFrame"
        where = "argument weather"
    else:
        if str(source).strip().lower() == "demo":
            source = demo_weather_path()
        path = Path(source)
        if not path.is_file():
            raise StackError("weather file not found", file=path, where="--weather",
                             fix=_FORMAT_FIX)
        kind = weather_format(path)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                frame, meta, offset, station = _READERS[kind](path)
        except Exception as exc:  # pvlib/pandas raise several types for malformed files
            raise StackError(f"cannot read it as a {kind} file ({exc.__class__.__name__}: "
                             f"{excerpt(str(exc), 120)})", file=path, where="--weather",
                             fix=_FORMAT_FIX) from None
        where = "--weather"
    return _checked(frame, meta, offset, station, path, kind, where, pvlib)


def _checked(data, meta, offset, station, path, kind, where, pvlib):
    """The common checks and fills of every source, then the :class:`Weather`."""
    source = path
    path = None if kind == "DataFrame" else path       # a frame is named by the argument
    station_where = where if kind == "DataFrame" else "line 1"
    _check_whole_year(data.index, path, where)
    for key in ("latitude", "longitude"):
        if not np.isfinite(float(meta.get(key, np.nan))):
            raise StackError(f"the station's {key} is missing", file=path,
                             where=station_where, fix=_FORMAT_FIX)
    for key, (low, high, unit) in STATION_RANGES.items():
        value = float(meta.get(key, 0.0))
        if not low <= value <= high:
            raise StackError(f"the station's {key} {value:g} {unit} is outside [{low:g}, "
                             f"{high:g}] {unit}", file=path, where=station_where,
                             fix="check the station of the weather (its latitude, longitude "
                                 "and altitude)")
    for column, (low, high, unit, what) in WEATHER_RANGES.items():
        values = data[column].astype(float).to_numpy()
        outside = np.flatnonzero((values < low) | (values > high))
        if outside.size:
            first = data.index[outside[0]]
            raise StackError(f"{outside.size} hour(s) with {what} outside [{low:g}, {high:g}] "
                             f"{unit} (first {first:%d %b %H:%M}: {values[outside[0]]:g} {unit})",
                             file=path, where=f"column {column}",
                             fix=f"give {what} in {unit}; fill or correct those hours")
    frame = data[["ghi", "dni", "dhi", "temp_air", "wind_speed", "pressure"]].astype(float).copy()
    frame["precipitable_water"] = _positive_or(data["precipitable_water"], PRECIPITABLE_WATER_CM,
                                               20.0)
    frame["albedo"] = _positive_or(data["albedo"], ALBEDO, 1.0)
    bad = ~np.isfinite(frame[["ghi", "dni", "dhi"]].to_numpy()).all(axis=1)
    if bad.any():
        first = frame.index[np.flatnonzero(bad)[0]]
        raise StackError(f"{int(bad.sum())} hour(s) without GHI, DNI or DHI (first {first})",
                         file=path, where=where, fix="fill the gaps in the weather")
    frame[["ghi", "dni", "dhi"]] = frame[["ghi", "dni", "dhi"]].clip(lower=0.0)
    frame["temp_air"] = frame["temp_air"].fillna(frame["temp_air"].mean())
    frame["wind_speed"] = frame["wind_speed"].fillna(0.0)
    altitude = float(meta.get("altitude", 0.0))
    standard_mbar = pvlib.atmosphere.alt2pres(altitude) / 100
    frame["pressure"] = frame["pressure"].where(frame["pressure"] > 100, standard_mbar)
    return Weather(frame, float(meta["latitude"]), float(meta["longitude"]), altitude,
                   float(meta.get("TZ", 0.0)), station.strip('" '), str(source), offset, kind)
