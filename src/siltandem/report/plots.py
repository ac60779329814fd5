"""Figures. Every function takes ``ax=None`` and returns the axes; matplotlib is imported lazily."""
import numpy as np

from siltandem import units
from siltandem.solve.series import solve_string


def _axes(ax, figsize=(7, 4.8)):
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
