"""Efficiency of a layer-stack series dual against its top base thickness, with the luminescent
coupling the layers give and with it switched off (layer key luminescent_coupling = 0): the
layer-stack figure of README.md (figures/coupling_vs_top_thickness_layers.png).

INVENTED DEMO DATA: a GaInP top subcell with long diffusion lengths and well-passivated surfaces
(so that much of its recombination is radiative) over a GaAs bottom subcell, joined by an AlGaAs
tunnel junction; every thickness, doping and minority-carrier value is made up. AM1.5G, 300 K.
Run: PYTHONPATH=src python figures/coupling_vs_top_thickness_layers.py
"""
import json
import tempfile
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from siltandem import load_stack  # noqa: E402
from siltandem.result.driver import compute_result  # noqa: E402

HEAD = '[conditions]\nspectrum = "am1.5g"\ntemperature_K = 300\n'
LAYERS = [("window", "AlInP", 25, "n:2e18", {"composition": 0.52}),
          ("top emitter", "GaInP", 50, "n:2e18", {"composition": 0.51, "diffusion_length_um": 3.0,
                                                   "srv_cm_s": 30}),
          ("top base", "GaInP", None, "p:1e17", {"composition": 0.51, "diffusion_length_um": 20.0,
                                                 "srv_cm_s": 30}),
          ("tunnel p", "AlGaAs", 20, "p:5e19", {"composition": 0.3}),
          ("tunnel n", "AlGaAs", 20, "n:5e19", {"composition": 0.3}),
          ("bottom window", "GaInP", 50, "n:1e18", {"composition": 0.51}),
          ("bottom emitter", "GaAs", 100, "n:1e18", {"diffusion_length_um": 1.0, "srv_cm_s": 1000}),
          ("bottom base", "GaAs", 2500, "p:1e17", {"diffusion_length_um": 5.0, "srv_cm_s": 1000})]


def stack_text(top_base_nm, coupling=None):
    text = HEAD
    for name, material, thickness, doping, extra in LAYERS:
        text += (f'[[layer]]\nname = "{name}"\nmaterial = "{material}"\n'
                 f'thickness_nm = {top_base_nm if thickness is None else thickness}\ndoping = "{doping}"\n')
        text += "".join(f"{k} = {json.dumps(v)}\n" for k, v in extra.items())
        if name == "top emitter" and coupling is not None:
            text += f"luminescent_coupling = {coupling}\n"
    return text


def efficiency(folder, top_base_nm, coupling):
    path = Path(folder) / f"dual_{top_base_nm:.0f}_{coupling}.toml"
    path.write_text(stack_text(top_base_nm, coupling))
    result = compute_result(load_stack(path), curve_points=21)
    rows = {r["name"]: r for r in result.summary["subcells"]}
    return (result.summary["efficiency_pct"], rows["bottom"]["coupled_mA_cm2"],
            rows["top"]["luminescent_coupling"], rows["top"]["photocurrent_mA_cm2"],
            rows["bottom"]["photocurrent_mA_cm2"])


def main():
    thickness = np.linspace(1000, 4000, 13)
    fig, ax = plt.subplots(figsize=(6.4, 4.2))
    with tempfile.TemporaryDirectory() as folder:
        for coupling, style, label in ((0, "k-", "coupling off (key = 0)"),
                                       (None, "C0--", "coupling from the layers")):
            values = [efficiency(folder, t, coupling) for t in thickness]
            eta = np.array([v[0] for v in values])
            best = int(np.argmax(eta))
            for t, v in zip(thickness, values):
                print(f"{label}: top base {t:.0f} nm: {v[0]:.3f} %, c = {v[2]:.3f}, coupled "
                      f"{v[1]:.4f} mA/cm2, Jph top {v[3]:.3f} bottom {v[4]:.3f} mA/cm2")
            ax.plot(thickness, eta, style, label=f"{label} (best {eta[best]:.2f} % at {thickness[best]:.0f} nm)")
            ax.plot(thickness[best], eta[best], style[:-1] + "o")
    ax.set_xlabel("top base thickness (nm)")
    ax.set_ylabel("efficiency (%)")
    ax.set_title("Invented GaInP / GaAs layer-stack dual, AM1.5G, 300 K", fontsize=10)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    fig.tight_layout()
    out = Path(__file__).with_suffix(".png")
    fig.savefig(out, dpi=120)
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
