"""Energy-yield results: the summary, its text, the hourly table and the figure.

Split from yield_.py (the hourly pipeline) to keep each module small; annual_yield calls
``summarise`` here.
"""
import json

import numpy as np

from siltandem import units
from siltandem.stack.load import provenance

#: hours each row of the hourly table stands for
HOURS_PER_STEP = 1.0

CAUTION = ("Results are models, not measurements: the hourly spectra are clear-sky shapes scaled "
           "to measured irradiance. Electrical and optical work on cells and modules is "
           "hazardous: follow local codes and licensed practice.")


def _kwh(power_W_m2):
    return float(np.nansum(power_W_m2) * HOURS_PER_STEP / 1000.0)


def plot_days(hourly, latitude):
    """The summer and winter days to draw: the sunniest day of June and of December (swapped
    south of the equator). Returns {"summer": date, "winter": date} (datetime.date)."""
    months = {"summer": 6, "winter": 12} if latitude >= 0 else {"summer": 12, "winter": 6}
    sun_time = hourly["sun_time"]
    daily = hourly["poa_W_m2"].groupby(sun_time.dt.date.to_numpy()).sum()
    days = {}
    for season, month in months.items():
        candidates = daily[[d.month == month for d in daily.index]]
        if len(candidates) == 0:
            candidates = daily
        days[season] = candidates.idxmax()
    return days


def _year_warnings(hourly, light, names, laws, failed, insolation, all_insolation):
    """The year's warnings, in order: failed hours, empty SPECTRL2 components, insolation in
    hours with the sun below the horizon, gaps fixed at the file's values."""
    warnings_ = []
    if failed:
        warnings_.append(f"{failed} hour(s) found no operating point: they count as zero energy")
    fallback = int(hourly["shape_fallback"].sum())
    if fallback:
        warnings_.append(f"{fallback} hour(s): a SPECTRL2 component was empty where the measured "
                         "one was not; the summed clear-sky shape was used for it")
    lost = all_insolation - insolation
    if lost > 1e-3 * max(all_insolation, 1e-9):
        warnings_.append(f"{lost:.2f} kWh/m2 of plane-of-array insolation falls in hours whose "
                         "middle has the sun below the horizon; those hours are not solved")
    fixed = [n for n in names if n not in laws]
    if fixed:
        warnings_.append("the gaps of " + ", ".join(repr(n) for n in fixed) + " are fixed at the "
                         "file's values for every hour (give the subcell material = \"...\" or "
                         "--gap-material): only their dark currents follow the cell temperature")
    return warnings_


def _limiting(hourly, names):
    """Per subcell: the hours it limits the current, and its share of the two-terminal energy
    in those hours (None without two-terminal energy)."""
    limiting_hours = {n: int(np.sum(hourly["limiting_subcell"] == n)) for n in names}
    two_terminal = hourly["two_terminal_W_m2"].to_numpy()
    limiting_share = {n: (float(two_terminal[hourly["limiting_subcell"].to_numpy() == n].sum()
                                / two_terminal.sum()) if two_terminal.sum() > 0 else None)
                      for n in names}
    return limiting_hours, limiting_share


def _monthly_table(hourly, names):
    """One row per month: sun hours, insolation and energies [kWh/m2], efficiency [%], the
    irradiance-weighted cell temperature [degC] and each subcell's limiting hours."""
    import pandas as pd

    month = hourly["sun_time"].dt.month.to_numpy()
    rows = []
    for m in range(1, 13):
        pick = month == m
        sub = hourly[pick]
        h = _kwh(sub["poa_W_m2"])
        e = _kwh(sub["power_W_m2"])
        weights = sub["poa_W_m2"].to_numpy()
        mean_cell = (float(np.average(sub["cell_temperature_C"], weights=weights))
                     if weights.sum() > 0 else None)
        row = {"month": m, "sun_hours": int(pick.sum()), "insolation_kWh_m2": h,
               "energy_kWh_m2": e, "two_terminal_kWh_m2": _kwh(sub["two_terminal_W_m2"]),
               "four_terminal_kWh_m2": _kwh(sub["four_terminal_W_m2"]),
               "efficiency_pct": 100 * e / h if h > 0 else None,
               "cell_temperature_C": mean_cell}
        for n in names:
            row[f"{n}.limiting_hours"] = int(np.sum(sub["limiting_subcell"] == n))
        rows.append(row)
    return pd.DataFrame(rows)


def _subcell_rows(hourly, names, laws, tables, limiting_hours, limiting_share):
    """One summary row per subcell: where its photocurrent and gap come from, its annual charge
    [kAh/m2] and energy alone [kWh/m2], limiting hours and share, and its mismatch factors
    (weighted by the plane-of-array irradiance, min, max)."""
    poa = hourly["poa_W_m2"].to_numpy()
    subcell_rows = []
    for n in names:
        factor = hourly[f"{n}.mismatch_factor"].to_numpy()
        ok = np.isfinite(factor) & (poa > 0)
        subcell_rows.append({
            "name": n,
            "photocurrent_from": "measured quantum efficiency" if n in tables
            else "step absorptance above the gap",
            "gap_follows": laws[n].name if n in laws else None,
            "annual_charge_kAh_m2": float(np.sum(units.a_m2(
                hourly[f"{n}.photocurrent_mA_cm2"].to_numpy())) * HOURS_PER_STEP / 1000.0),
            "alone_kWh_m2": _kwh(hourly[f"{n}.alone_W_m2"]),
            "limiting_hours": limiting_hours[n],
            "limiting_energy_share": limiting_share[n],
            "mismatch_factor_weighted": (float(np.average(factor[ok], weights=poa[ok]))
                                         if ok.any() else None),
            "mismatch_factor_min": float(np.min(factor[ok])) if ok.any() else None,
            "mismatch_factor_max": float(np.max(factor[ok])) if ok.any() else None,
        })
    return subcell_rows


def _weather_entry(weather, light, hourly):
    """The summary's ``weather`` entry: the file, its station and the hours it holds."""
    return {"file": weather.source, "format": weather.kind, "station": weather.station,
            "latitude_deg": weather.latitude, "longitude_deg": weather.longitude,
            "altitude_m": weather.altitude_m, "timezone_h": weather.timezone_h,
            "hours": int(len(light.all_hours)), "hours_with_light": int(len(hourly)),
            "middle_of_hour_from_stamp_min": weather.middle_offset_min}


def light_entry(weather, light):
    """The summary's ``light`` entry, as every output has one (result.record.provenance): the
    spectrum (SPECTRL2 per hour, or the measured spectra), the weather file it follows and that
    file's SHA-256 (None for a DataFrame), at one sun; the cell temperature is per hour (the
    hourly table), so ``temperature_K`` is None."""
    from pathlib import Path

    from siltandem.files import file_digest

    measured = str(light.settings.get("spectrum", "")).startswith("measured")
    path = Path(str(weather.source))
    return {"spectrum": "measured hourly spectra" if measured else "SPECTRL2 per hour",
            "spectrum_sha256": None, "weather": str(weather.source),
            "weather_sha256": file_digest(path) if path.is_file() else None,
            "suns": 1.0, "temperature_K": None}


def _wiring_entry(stack, two, four):
    """The summary's ``wiring`` entry: two- and four-terminal energies [kWh/m2] and what they
    mean."""
    return {
        "terminals_in_file": stack.conditions.terminals,
        "two_terminal_kWh_m2": two,
        "four_terminal_kWh_m2": four,
        "four_terminal_gain_pct": 100 * (four - two) / two if two > 0 else None,
        "two_terminal_means": "every element of the stack in one series string, in optical "
                              "order",
        "four_terminal_means": "each subcell on its own at its own maximum power point; the "
                               "stack's other elements (resistors, tunnel junctions, "
                               "interfaces) left out; luminescent coupling from the subcell "
                               "above at that subcell's own maximum power point",
    }


def summarise(stack, weather, light, hourly, names, laws, tables, standard_efficiency,
              bare_power, passive):
    """The yield's summary (the JSON contract) and its monthly table.

    Parameters
    ----------
    stack : Stack
    weather : Weather
    light : HourlyLight
    hourly : pandas.DataFrame
        The hourly table of ``annual_yield`` (powers in W/m2, one row per hour with light).
    names : list of str
        The subcells, in optical order.
    laws : dict
        Subcell name -> the material whose gap law it follows.
    tables : dict
        Subcell name -> its measured EQE.
    standard_efficiency : float
        Efficiency at standard test conditions [%].
    bare_power : numpy.ndarray or None
        The subcells alone in series, every hour [W/m2]; None if not solved.
    passive : bool
        Whether the stack has elements other than subcells.

    Returns
    -------
    summary : dict
        Energies in kWh/m2, efficiencies in %, charges in kAh/m2 (names carry the units).
    monthly : pandas.DataFrame
        One row per month.
    """
    insolation = _kwh(hourly["poa_W_m2"].to_numpy())
    all_insolation = _kwh(light.all_hours["poa_W_m2"].to_numpy())
    energy = _kwh(hourly["power_W_m2"])
    two = _kwh(hourly["two_terminal_W_m2"])
    four = _kwh(hourly["four_terminal_W_m2"])
    bare = None if bare_power is None else _kwh(bare_power)
    failed = int(hourly["failed"].sum())
    limiting_hours, limiting_share = _limiting(hourly, names)
    monthly = _monthly_table(hourly, names)
    subcell_rows = _subcell_rows(hourly, names, laws, tables, limiting_hours, limiting_share)
    warnings_ = _year_warnings(hourly, light, names, laws, failed, insolation, all_insolation)
    days = plot_days(hourly, weather.latitude)
    efficiency = 100 * energy / insolation if insolation > 0 else None
    summary = {
        "stack": stack.name, "source_file": stack.source, **provenance(stack),
        "light": light_entry(weather, light),
        "weather": _weather_entry(weather, light, hourly),
        "plane": {k: light.settings[k] for k in ("tilt_deg", "azimuth_deg", "sky_model",
                                                 "albedo")},
        "method": {k: v for k, v in light.settings.items()
                   if k not in ("tilt_deg", "azimuth_deg", "sky_model", "albedo")},
        "annual_insolation_kWh_m2": insolation,
        "annual_energy_kWh_m2": energy,
        "energy_weighted_efficiency_pct": efficiency,
        "efficiency_at_standard_conditions_pct": standard_efficiency,
        "performance_ratio": (efficiency / standard_efficiency
                              if efficiency is not None and standard_efficiency > 0 else None),
        "wiring": _wiring_entry(stack, two, four),
        "current_mismatch_loss_kWh_m2": four - two,
        "current_mismatch_loss_pct": 100 * (four - two) / four if four > 0 else None,
        "of_which_other_elements_kWh_m2": (None if bare is None else
                                           bare - two if passive else 0.0),
        "limiting_hours": limiting_hours,
        "subcells": subcell_rows,
        "monthly": json.loads(monthly.to_json(orient="records")),
        "plot_days": {k: str(v) for k, v in days.items()},
        "failed_hours": failed,
        "warnings": warnings_,
        "cautions": [CAUTION],
        "model": "circuit level: detailed-balance subcells (generalized Planck law, J01 at each "
                 "hour's cell temperature), lumped resistors, Esaki tunnel junctions, isotype "
                 "interfaces; hours solved together in one batch",
    }
    return summary, monthly


# ---------------------------------------------------------------------------------- reporting
def text_summary(result):
    """Plain-text summary of a YieldResult for the terminal."""
    s = result.summary
    w = s["weather"]
    p = s["plane"]
    lines = [f"siltandem — energy yield of {s['stack']}"]
    if s.get("source_file"):
        lines.append(f"  file: {s['source_file']}")
    lines.append(f"  weather: {w['station']} ({w['latitude_deg']:.2f}, {w['longitude_deg']:.2f}),"
                 f" {w['hours_with_light']} of {w['hours']} hours with light")
    tracked = not str(s["method"].get("tracking", "fixed")).startswith("fixed")
    lines.append(f"  plane: {'one-axis tracker, axis ' if tracked else ''}tilt {p['tilt_deg']:g} "
                 f"deg, azimuth {p['azimuth_deg']:g} deg, {p['sky_model']} sky; cell temperature "
                 f"{s['method']['temperature_model']['parameters']} (SAPM)")
    if s["method"].get("angle_losses", "none") != "none":
        lines.append(f"  angle-of-incidence losses: {s['method']['angle_losses']} cover")
    lines.append("")
    wiring = s["wiring"]
    eff = s["energy_weighted_efficiency_pct"]
    lines += [
        f"  plane-of-array insolation     {s['annual_insolation_kWh_m2']:9.1f} kWh/m2",
        f"  annual energy                 {s['annual_energy_kWh_m2']:9.2f} kWh/m2",
        f"  energy-weighted efficiency    {eff:9.3f} %" if eff is not None else
        "  energy-weighted efficiency        -",
        f"  efficiency at AM1.5G, 25 degC {s['efficiency_at_standard_conditions_pct']:9.3f} %",
        f"  two-terminal (all in series)  {wiring['two_terminal_kWh_m2']:9.2f} kWh/m2",
        f"  four-terminal (each at MPP)   {wiring['four_terminal_kWh_m2']:9.2f} kWh/m2",
        f"  loss to current mismatch      {s['current_mismatch_loss_kWh_m2']:9.2f} kWh/m2"
        + (f" ({s['current_mismatch_loss_pct']:.2f} % of four-terminal"
           + (f"; {s['of_which_other_elements_kWh_m2']:.2f} of it from the other elements)"
              if s["of_which_other_elements_kWh_m2"] else ")")
           if s["current_mismatch_loss_pct"] is not None else ""),
        "",
        "  subcells: hours limiting the series current, spectral mismatch against AM1.5G",
    ]
    width = max(len(c["name"]) for c in s["subcells"])
    for c in s["subcells"]:
        share = c["limiting_energy_share"]
        lines.append(f"    {c['name']:<{width}}  limits {c['limiting_hours']:5d} h"
                     + (f" ({100 * share:5.1f} % of the energy)" if share is not None else "")
                     + (f"  mismatch {c['mismatch_factor_weighted']:.4f} "
                        f"[{c['mismatch_factor_min']:.3f}, {c['mismatch_factor_max']:.3f}]"
                        if c["mismatch_factor_weighted"] is not None else "")
                     + (f"  gap follows {c['gap_follows']}" if c["gap_follows"] else ""))
    lines += ["", "  month  insolation  energy  2T      4T      efficiency  cell degC"]
    for row in s["monthly"]:
        eff_m = "-" if row["efficiency_pct"] is None else f"{row['efficiency_pct']:.2f}"
        cell = "-" if row["cell_temperature_C"] is None else f"{row['cell_temperature_C']:.1f}"
        lines.append(f"  {row['month']:5d}  {row['insolation_kWh_m2']:10.1f}  "
                     f"{row['energy_kWh_m2']:6.2f}  {row['two_terminal_kWh_m2']:6.2f}  "
                     f"{row['four_terminal_kWh_m2']:6.2f}  {eff_m:>10}  {cell:>9}")
    lines.append("")
    for text in s["warnings"]:
        lines.append(f"  warning: {text}")
    for text in s["cautions"]:
        lines.append(f"  caution: {text}")
    return "\n".join(lines) + "\n"


def hourly_table(result):
    """The hourly table for CSV: the file's time stamp and the sun time as ISO text first."""
    table = result.hourly.copy()
    table.insert(0, "time", [t.isoformat() for t in table.index])
    table["sun_time"] = [t.isoformat() for t in table["sun_time"]]
    return table.reset_index(drop=True)


def plot_yield(result, axes=None):
    """(a) energy by month, two- and four-terminal; (b, c) each subcell's photocurrent through a
    summer and a winter day, the limiting one marked. Returns the three axes."""
    import datetime

    if axes is None:
        import matplotlib.pyplot as plt

        _, axes = plt.subplots(1, 3, figsize=(15, 4.6), gridspec_kw={"width_ratios": [1.3, 1, 1]})
    s = result.summary
    monthly = result.monthly
    ax = axes[0]
    x = monthly["month"].to_numpy()
    ax.bar(x, monthly["energy_kWh_m2"], color="#4a7ab0", label="stack as wired")
    ax.plot(x, monthly["four_terminal_kWh_m2"], "o", mfc="white", mec="#c0392b",
            label="four-terminal (each subcell at its MPP)")
    if s["wiring"]["terminals_in_file"] != 2:
        ax.plot(x, monthly["two_terminal_kWh_m2"], "s", mfc="white", mec="black",
                label="two-terminal")
    ax.set_xticks(range(1, 13))
    ax.set_xticklabels("JFMAMJJASOND")
    ax.set_xlabel("month")
    ax.set_ylabel("energy (kWh/m²)")
    ax.set_title(f"(a) {s['annual_energy_kWh_m2']:.1f} kWh/m² a year, "
                 f"{s['energy_weighted_efficiency_pct']:.2f} % energy-weighted", fontsize=10)
    top = np.nanmax(np.r_[monthly["four_terminal_kWh_m2"], monthly["energy_kWh_m2"], 1e-9])
    ax.set_ylim(0, 1.3 * top)
    ax.legend(fontsize=8, loc="upper center", ncol=2)
    hourly = result.hourly
    names = [c["name"] for c in s["subcells"]]
    for ax, (season, day), letter in zip(axes[1:], s["plot_days"].items(), "bc"):
        date = datetime.date.fromisoformat(day)
        pick = hourly["sun_time"].dt.date.to_numpy() == date
        sub = hourly[pick]
        clock = (sub["sun_time"].dt.hour + sub["sun_time"].dt.minute / 60).to_numpy()
        for k, name in enumerate(names):
            current = sub[f"{name}.photocurrent_mA_cm2"].to_numpy()
            ax.plot(clock, current, "-", color=f"C{k}", label=name)
            marked = sub["limiting_subcell"].to_numpy() == name
            ax.plot(clock[marked], current[marked], "o", color=f"C{k}", ms=7)
        ax.set_xlabel("hour (local standard time, middle of the hour)")
        ax.set_ylabel("photocurrent (mA/cm²)")
        ax.set_title(f"({letter}) {season} day {day}\n● marks the subcell limiting the series "
                     "current", fontsize=10)
        ax.legend(fontsize=8)
    return axes
