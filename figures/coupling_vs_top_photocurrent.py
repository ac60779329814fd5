"""Efficiency of a series dual against its top subcell's photocurrent, with and without
luminescent coupling: the figure of README.md (figures/coupling_vs_top_photocurrent.png).

INVENTED DEMO DATA: a 1.65 eV top subcell (ERE 0.3, J02, a little series resistance) on a
1.12 eV bottom subcell (ERE 0.005); the top's step absorptance stands in for its thickness (a
thinner top absorbs less and passes the rest to the bottom). Photocurrents from ASTM G173-03
global through the project's step absorbers; one batched solve per coupling.
Run: PYTHONPATH=src python figures/coupling_vs_top_photocurrent.py
"""
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from siltandem.circuit.elements import Subcell, batch  # noqa: E402
from siltandem.laws.optics import step_absorber_photocurrents  # noqa: E402
from siltandem.materials.spectra import get_spectrum  # noqa: E402
from siltandem.solve.series import solve_string  # noqa: E402

TEMPERATURE_K = 298.15


def efficiency_pct(absorptance, coupling, spectrum):
    size = absorptance.size
    top_j, bottom_j = step_absorber_photocurrents(
        [np.full(size, 1.65), np.full(size, 1.12)], [absorptance, np.ones(size)],
        spectrum.wavelength_nm, spectrum.photon_flux)
    extra = {} if coupling is None else {"luminescent_coupling": batch(np.full(size, coupling))}
    top = Subcell("top", batch(np.full(size, 1.65)), absorptance=batch(absorptance),
                  ere=batch(0.3), j02_A_m2=batch(1e-10), series_ohm_m2=batch(0.2e-4), **extra)
    bottom = Subcell("bottom", batch(np.full(size, 1.12)), ere=batch(0.005))
    solution = solve_string([top.with_photocurrent(top_j), bottom.with_photocurrent(bottom_j)],
                            TEMPERATURE_K)
    return 100 * solution.mpp_W_m2 / spectrum.irradiance_W_m2, top_j / 10, bottom_j / 10


def main():
    spectrum = get_spectrum("am1.5g")
    absorptance = np.linspace(0.75, 1.0, 101)
    fig, ax = plt.subplots(figsize=(6.4, 4.2))
    for coupling, style in ((None, "k-"), (0.5, "C0--"), (1.0, "C1-.")):
        eta, top_j, _ = efficiency_pct(absorptance, coupling, spectrum)
        best = int(np.argmax(eta))
        label = ("no coupling" if coupling is None else f"luminescent_coupling = {coupling}")
        ax.plot(top_j, eta, style, label=f"{label} (best {eta[best]:.2f} % at "
                                          f"{top_j[best]:.2f} mA/cm²)")
        ax.plot(top_j[best], eta[best], style[:-1] + "o")
        print(f"{label}: best {eta[best]:.3f} % at top photocurrent {top_j[best]:.3f} mA/cm2 "
              f"(absorptance {absorptance[best]:.4f}); at full absorption {eta[-1]:.3f} %")
    ax.set_xlabel("top subcell photocurrent (mA/cm²), set by its absorptance (thickness)")
    ax.set_ylabel("efficiency (%)")
    ax.set_title("Invented 1.65 / 1.12 eV series dual, AM1.5G, 298.15 K", fontsize=10)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    out = Path(__file__).with_suffix(".png")
    fig.savefig(out, dpi=120)
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
