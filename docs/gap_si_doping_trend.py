"""The GaP/Si isotype interface against doping: drop at 20 mA/cm^2, thermionic emission alone
against thermionic-field emission (laws/thermionic.py, laws/field_emission.py).

p-GaP/p-Si with both layers doped alike, and with the silicon at 1e16 cm^-3 while the GaP (the
depletion side, through whose spike the holes tunnel) varies; the current crosses the way the
spike blocks (holes from GaP into Si), at 300 K. (n-GaP/n-Si at equal dopings drops below 0.2 mV
at every doping either way: its 0.25 eV conduction-band step hardly blocks.) The interfaces are built exactly as a
stack file's materials form builds them (circuit/isotype.py). Prints the table the README quotes
and writes docs/figures/gap_si_doping_trend.png.

    PYTHONPATH=src python docs/gap_si_doping_trend.py
"""
from pathlib import Path
import warnings

import numpy as np

from siltandem.circuit.isotype import isotype_from_materials
from siltandem.stack.load import ElementSpec

CURRENT_A_M2 = 200.0          # 20 mA/cm^2
TEMPERATURE_K = 300.0
DOPINGS_CM3 = np.geomspace(1e16, 1e20, 33)


def drop_mV(silicon, doping_cm3, transport, carrier="hole"):
    values = {"upper_material": "GaP", "lower_material": "Si", "upper_doping_cm3": doping_cm3,
              "lower_doping_cm3": doping_cm3 if silicon == "alike" else 1e16, "carrier": carrier,
              "transport": transport,
              # the blocking way: majority carriers cross from the depletion side (GaP) into Si
              "carriers_flow": "down"}
    element = isotype_from_materials(ElementSpec(1, "isotype", "GaP/Si", 1, values), TEMPERATURE_K, None)
    if float(element.direction[0, 0]) < 0:            # GaP accumulates: flow the other way
        values["carriers_flow"] = "up"
        element = isotype_from_materials(ElementSpec(1, "isotype", "GaP/Si", 1, values), TEMPERATURE_K, None)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        v, _ = element.voltage(np.array([[CURRENT_A_M2]]), TEMPERATURE_K)
    return -1e3 * float(v[0, 0])


def main():
    rows = {(c, t): np.array([drop_mV(c, n, t) for n in DOPINGS_CM3])
            for c in ("alike", "1e16") for t in ("thermionic", "thermionic-field")}
    print("GaP doping cm^-3   both alike: TE mV   TFE mV   Si at 1e16: TE mV   TFE mV")
    for i, n in enumerate(DOPINGS_CM3):
        if i % 4 == 0:
            print(f"{n:16.1e}   {rows['alike', 'thermionic'][i]:17.1f}  {rows['alike', 'thermionic-field'][i]:7.1f}"
                  f"   {rows['1e16', 'thermionic'][i]:17.1f}  {rows['1e16', 'thermionic-field'][i]:7.1f}")
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(6.4, 4.2))
    for silicon, colour in (("alike", "tab:red"), ("1e16", "tab:blue")):
        label = "Si doped alike" if silicon == "alike" else "Si at 1e16"
        ax.plot(DOPINGS_CM3, rows[silicon, "thermionic"], "--", color=colour, label=f"{label}, thermionic")
        ax.plot(DOPINGS_CM3, rows[silicon, "thermionic-field"], "-", color=colour,
                label=f"{label}, thermionic-field")
    ax.set_xscale("log")
    ax.set_yscale("symlog", linthresh=0.1)
    ax.set_ylim(0.0, 1000.0)
    ax.set_xlabel("GaP doping [cm$^{-3}$]")
    ax.set_ylabel("drop at 20 mA/cm$^2$ [mV]")
    ax.set_title("p-GaP/p-Si interface, holes into Si, 300 K (a model)")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    out = Path(__file__).resolve().parent / "figures" / "gap_si_doping_trend.png"
    fig.savefig(out, dpi=120)
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
