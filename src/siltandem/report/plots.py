"""Figures. Every function takes ``ax=None`` and returns the axes; matplotlib is imported lazily.
No function here chooses matplotlib's backend: the command line does (cli/main.py)."""
import numpy as np

from siltandem import units
from siltandem.solve.series import solve_string


# column-name suffix -> unit shown on an axis (the data keeps its unit in the name)
_UNIT_SUFFIXES = (("_pct_abs", "% absolute"), ("_pct", "%"), ("_mA_cm2", "mA/cm²"), ("_ohm_cm2", "Ω cm²"),
                  ("_cm3", "cm⁻³"), ("_nm", "nm"), ("_um", "µm"), ("_eV", "eV"), ("_mV", "mV"), ("_V", "V"),
                  ("_ns", "ns"), ("_K", "K"), ("_suns", "suns"), ("_deg", "°"), ("_kWh_m2", "kWh/m²"))
_PLAIN_NAMES = {"efficiency": "efficiency", "voc": "Voc", "jsc": "Jsc", "mpp": "MPP voltage"}


def axis_label(column):
    """A readable axis label with its unit for a table column or varied key.

    ``"efficiency_pct"`` -> ``"efficiency (%)"``; ``"top base.thickness_nm"`` ->
    ``"top base thickness (nm)"``; a name without a known unit suffix is returned with its
    underscores as spaces.
    """
    name, unit = str(column), ""
    for suffix, shown in _UNIT_SUFFIXES:
        if name.endswith(suffix):
            name, unit = name[: -len(suffix)], shown
            break
    name = name.replace(".", " ").replace("_", " ").strip()
    name = _PLAIN_NAMES.get(name, name)
    return f"{name} ({unit})" if unit else name


def _axes(ax, figsize=(7, 4.8)):
    """``ax``, or the axes of a new figure (pyplot's backend: the command line chooses it)."""
    if ax is not None:
        return ax
    import matplotlib.pyplot as plt

    _, ax = plt.subplots(figsize=figsize)
    return ax


def plot_iv(result, ax=None, *, curve_points=301, sweeps=()):
    """Stack light I-V (each string), each subcell's own light I-V, the MPP marked.

    ``sweeps`` may name "up" and/or "down": what a terminal-voltage sweep measures is drawn on top.
    """
    ax = _axes(ax)
    summary = result.summary
    temperature = summary["conditions"]["temperature_K"]
    voc_max = 0.0
    for number, solution in enumerate(result.solutions, start=1):
        curve = solution.curve
        label = "stack" if len(result.solutions) == 1 else f"string {number}"
        v = curve["voltage_V"][0]
        j = units.ma_cm2(curve["current_A_m2"][0])
        ax.plot(v, j, lw=2.2, color="black" if number == 1 else f"C{number + 4}", label=label)
        row = summary["strings"][number - 1]
        if row["mpp_V"] is not None:
            ax.plot([row["mpp_V"]], [row["mpp_mA_cm2"]], "o", ms=8, mfc="white", mec="red",
                    mew=2, zorder=5)
            ax.annotate(f"MPP {row['mpp_V']:.3f} V, {row['mpp_mA_cm2']:.2f} mA/cm²",
                        (row["mpp_V"], row["mpp_mA_cm2"]), textcoords="offset points",
                        xytext=(-10, -18), ha="right", fontsize=8, color="red")
            voc_max = max(voc_max, row["voc_V"])
    for k, cell in enumerate(result.circuit.subcells):
        own = solve_string([cell], temperature, curve_points=curve_points).curve
        ax.plot(own["voltage_V"][0], units.ma_cm2(own["current_A_m2"][0]), "--", lw=1.2,
                color=f"C{k}", label=f"{cell.name} alone ({float(cell.gap_eV[0, 0]):.2f} eV)")
        voc_max = max(voc_max, float(np.max(own["voltage_V"][0])))
    styles = {"up": ("tab:red", "--"), "down": ("tab:green", ":")}
    for direction in sweeps:
        frame = result.sweep(direction)
        colour, style = styles[direction]
        ax.plot(frame["voltage_V"], frame["current_mA_cm2"], style, color=colour, lw=1.6,
                label=f"voltage sweep {direction}")
    jmax = max(r["photocurrent_mA_cm2"] for r in summary["subcells"])
    ax.set_xlim(-0.1 * voc_max, 1.08 * voc_max)
    ax.set_ylim(0, 1.12 * jmax)
    ax.axhline(0, color="0.6", lw=0.6)
    ax.axvline(0, color="0.6", lw=0.6)
    ax.set_xlabel("voltage (V)")
    ax.set_ylabel("current density (mA/cm²), generated positive")
    ax.set_title(f"{summary['stack']}: {summary['efficiency_pct']:.2f} % under "
                 f"{summary['conditions']['spectrum']}, {summary['conditions']['suns']:g} sun(s)",
                 fontsize=10)
    ax.legend(fontsize=8, loc="lower left")
    ax.grid(alpha=0.3)
    return ax


def plot_concentration(series, ax=None, *, title=""):
    """Efficiency against concentration (log axis); where each junction's peak is exceeded, shaded."""
    ax = _axes(ax)
    suns = series["suns"].to_numpy()
    ax.semilogx(suns, series["efficiency_pct"], "o-", color="black", ms=3, label="efficiency")
    flags = [c for c in series.columns if c.endswith(".peak_exceeded")]
    for k, column in enumerate(flags):
        exceeded = series[column].to_numpy(dtype=bool)
        if exceeded.any():
            first = suns[np.argmax(exceeded)]
            ax.axvspan(first, suns.max(), color=f"C{k + 1}", alpha=0.15,
                       label=f"{column.removesuffix('.peak_exceeded')}: peak below photocurrent")
            ax.axvline(first, color=f"C{k + 1}", lw=1)
    ax.set_xlabel("concentration (suns)")
    ax.set_ylabel("efficiency (%)")
    ax.set_title(title, fontsize=10)
    ax.grid(alpha=0.3, which="both")
    ax.legend(fontsize=8, loc="lower left")
    return ax


#: a parasitic layer whose absorptance stays below this everywhere joins the figure's
#: "other layers" band instead of a band of its own [-]
PARASITIC_BAND_MIN = 0.01


def spectral_bands_per_nm(result):
    """The areas of the spectral figure per wavelength, bottom to top (a list of (label, kind,
    array)), from :meth:`Result.spectral_table`: each subcell's EQE; what the subcells absorb
    and do not collect; each parasitic layer (those below PARASITIC_BAND_MIN everywhere
    together); transmittance; reflectance. They add up to 1 at every wavelength."""
    from siltandem.optics.layers import absorber_labels, subcell_layers

    table = result.spectral_table()
    model = result.circuit.model
    labels = absorber_labels(model)
    coatings = len(model.coatings)
    active = {coatings + j for j in subcell_layers(model)}
    eqe = [(cell.name, "collected", table[f"{cell.name}.eqe"].to_numpy())
           for cell in model.subcells]
    absorbed = sum(table[f"{labels[k]}.absorptance"].to_numpy() for k in sorted(active))
    bands = eqe + [("absorbed, not collected", "not collected",
                    absorbed - sum(values for _, _, values in eqe))]
    others = np.zeros(len(table))
    for k, label in enumerate(labels):
        if k in active:
            continue
        values = table[f"{label}.absorptance"].to_numpy()
        if np.max(values) >= PARASITIC_BAND_MIN:
            bands.append((label, "parasitic", values))
        else:
            others = others + values
    for column in table.columns:
        if column.endswith(" free carriers.absorptance"):     # parasitic part of a subcell's layer
            values = table[column].to_numpy()
            if np.max(values) >= PARASITIC_BAND_MIN:
                bands.append((column[:-len(".absorptance")], "parasitic", values))
            else:
                others = others + values
    if np.max(others) > 1e-9:
        bands.append((f"other layers (each < {PARASITIC_BAND_MIN:.0%})", "parasitic", others))
    bands += [("transmittance", "transmitted", table["transmittance"].to_numpy()),
              ("reflectance", "reflected", table["reflectance"].to_numpy())]
    return table["wavelength_nm"].to_numpy(), bands


def plot_spectral(result, ax=None):
    """Stacked areas against wavelength (layer stacks): each subcell's EQE, the light its layers
    absorb but do not collect, each parasitic layer's absorptance, transmittance and reflectance;
    the top edge is 1. The legend gives each band's photon current under the run's spectrum
    over the whole table (q times the integral of band x photon flux, as in the summary's
    ``spectral_bands``). The wavelength axis ends a little beyond the last wavelength any
    layer absorbs."""
    from siltandem.constants import ELEMENTARY_CHARGE_C

    ax = _axes(ax)
    wavelength, bands = spectral_bands_per_nm(result)
    summary = result.summary
    flux = result.circuit.optics["spectrum"].photon_flux
    greys = iter(np.linspace(0.35, 0.8, max(1, sum(k == "parasitic" for _, k, _ in bands))))
    colours = {"not collected": "#d9b38c", "transmitted": "#b3d1ff", "reflected": "#f2f2f2"}
    lower = np.zeros_like(wavelength)
    for k, (label, kind, values) in enumerate(bands):
        upper = lower + np.clip(values, 0.0, None)
        colour = (f"C{k}" if kind == "collected" else
                  str(next(greys)) if kind == "parasitic" else colours[kind])
        current = units.ma_cm2(ELEMENTARY_CHARGE_C * np.trapezoid(values * flux, wavelength))
        ax.fill_between(wavelength, lower, upper, facecolor=colour, edgecolor="0.5", lw=0.3,
                        label=f"{label}: {current:.2f} mA/cm²",
                        hatch="//" if kind == "not collected" else None)
        lower = upper
    absorbing = np.flatnonzero(sum(v for _, kind, v in bands
                                   if kind not in ("transmitted", "reflected")) > 1e-4)
    right = wavelength[-1] if absorbing.size == 0 else min(
        wavelength[-1], wavelength[absorbing[-1]] * 1.1)
    ax.set_xlim(wavelength[0], right)
    ax.set_ylim(0, 1)
    ax.set_xlabel("wavelength (nm)")
    ax.set_ylabel("fraction of the incident photons")
    ax.set_title(f"where the light goes ({summary['conditions']['spectrum']})\n"
                 f"{summary['stack']}", fontsize=9)
    handles, labels = ax.get_legend_handles_labels()
    ax.legend(handles[::-1], labels[::-1], fontsize=7, loc="center left",
              bbox_to_anchor=(1.01, 0.5))
    ax.grid(alpha=0.3)
    return ax
