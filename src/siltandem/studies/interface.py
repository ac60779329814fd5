"""An isotype interface on its own: its J-V and its band-edge diagram from the analytical solution;
which interfaces a compiled stack has and choosing one (by name, or by the layers it joins).

The diagram follows the law's picture (laws/thermionic.py): side 1 accumulates (Boltzmann
carriers, full Poisson solution of the accumulation layer), side 2 is depleted (depletion
approximation, parabolic bands over the width W = sqrt(2 eps2 V2 / (q N2))). Energies are drawn as
electron energies relative to the accumulation side's Fermi level; under a bias V the depletion
side's quasi-Fermi level sits V above it (carrier energy), which is what drives the current.

References
----------
R. L. Anderson, Solid-State Electron. 5 (1962) 341 (band model of the heterojunction).
S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Wiley 2007, ch. 1-2 (accumulation
layer, depletion approximation) - from memory.
"""
import numpy as np
from scipy import integrate

from siltandem.constants import BOLTZMANN_EV_K, ELEMENTARY_CHARGE_C, VACUUM_PERMITTIVITY_F_M
from siltandem.errors import StackError
from siltandem.laws.thermionic import voltage_split


def isotype_interfaces(circuit):
    """The circuit's isotype interfaces in optical order: a list of (name, layers), where
    ``layers`` is the [upper, lower] pair of layer names the interface joins in a layer stack
    and None in an element stack."""
    joined = {d["name"]: d["layers"]
              for d in (circuit.optics.get("layer_details") or {}).get("interfaces", [])}
    return [(e.name, joined.get(e.name)) for e in circuit.elements if e.kind == "isotype"]


def choose_interface(circuit, wanted=None, *, file=None, placement=None):
    """The name of one isotype interface of a compiled stack.

    ``wanted`` is the interface's name; in a layer stack also the two layers it joins written
    ``"upper / lower"``, or one of them when it borders only one interface. None: the first.
    ``placement`` (the placement's name, for messages only) says which candidate was compiled.
    Raises StackError (``where`` = ``--layer``) naming the choices.
    """
    found = isotype_interfaces(circuit)
    among = f" in placement {placement!r}" if placement else ""
    if not found:
        layered = circuit.model is not None
        raise StackError(
            f"the stack has no isotype interface{among}", file=file,
            fix=("an isotype interface is two adjacent layers of one type (n/n or p/p) and "
                 "different materials; `siltandem run` lists the parts it found"
                 + ("; another --placement may have one" if placement else "")) if layered
            else 'add an [[element]] with kind = "isotype"')
    names = [name for name, _ in found]
    choices = "choose one of " + ", ".join(repr(n) for n in names)
    if wanted is None:
        return names[0]
    if wanted in names:
        return wanted
    pairs = [name for name, layers in found if layers and " / ".join(layers) == wanted]
    if pairs:
        return pairs[0]
    touching = [name for name, layers in found if layers and wanted in layers]
    if len(touching) == 1:
        return touching[0]
    if touching:
        raise StackError(f"layer {wanted!r} borders {len(touching)} isotype interfaces{among}",
                         file=file, where="--layer",
                         fix="choose one of " + ", ".join(repr(n) for n in touching))
    raise StackError(f"no isotype interface named {wanted!r}{among}", file=file, where="--layer",
                     fix=choices + (" (or the two layers it joins, 'upper / lower', or one of "
                                    "them)" if found[0][1] else ""))


def interface_iv(element, temperature_K, *, points=201, span_V=None):
    """J-V of the interface alone in the law's own sign convention (V > 0 lowers the barrier).

    Returns (voltage_V, current_A_m2) from -span to just below the built-in potential.
    """
    vbi = float(element.built_in_V[0, 0])
    span = span_V if span_V is not None else max(1.0, 2 * vbi)
    kt = BOLTZMANN_EV_K * temperature_K
    v = np.linspace(-span, vbi - 2 * kt, points)
    j, _ = element.law_current(v[None, :], temperature_K)
    return v, j[0]


def _accumulation_profile(v1, debye_m, points=200):
    """Position x <= 0 [m] against the reduced bending u in (0, v1] of an accumulation layer.

    First integral of u'' = (e^u - 1)/L_D^2: |du/dx| = sqrt(2 (e^u - 1 - u)) / L_D, so
    x(u) = -L_D * integral_u^v1 du' / sqrt(2 (e^u' - 1 - u')); integrated in s = ln u, where the
    integrand is smooth (it goes as 1/u for small u: the exponential tail into the bulk).
    """
    if v1 <= 0:
        return np.array([0.0, -5 * debye_m]), np.array([0.0, 0.0])
    s = np.linspace(np.log(v1), np.log(v1) - 12.0, points)
    u = np.exp(s)
    integrand = u / np.sqrt(2.0 * (np.expm1(u) - u))
    x = integrate.cumulative_trapezoid(integrand, s, initial=0.0) * debye_m  # s decreasing: x < 0
    return x, u


def _split(element, barrier_V, temperature_K):
    """(v1, v2) [V]: the accumulation and depletion sides' bending at the barrier voltage, from the
    element's own law: with a sheet charge or a Fermi-Dirac side the balance of
    laws/interface_charge.py (Gauss's law with the fixed charge), else laws/thermionic.py."""
    if not element.general_law:
        split = voltage_split(barrier_V, alpha=float(element.alpha[0, 0]), temperature_K=temperature_K,
                              depletion=element.depletion)
        return float(split.accumulation_V), float(split.depletion_V)
    from siltandem.laws.interface_charge import bending_split

    kt = BOLTZMANN_EV_K * temperature_K
    eta = [None if f is None else float(np.ravel(f)[0]) / kt
           for f in (element.accumulation_fermi_eV, element.depletion_fermi_eV)]
    v1 = float(bending_split(np.array([barrier_V / kt]), float(element.alpha[0, 0]), eta[0], eta[1],
                             float(element.sheet_charge[0, 0]))[0]) * kt
    return v1, barrier_V - v1


def band_diagram(element, temperature_K, bias_V=0.0):
    """Band edges and Fermi levels across the interface at a bias (law's convention).

    Returns a dict with ``x_nm`` (increasing, interface at 0; the upper, sun-side layer at x < 0,
    the lower layer at x > 0; ``accumulation_at_left`` says which side accumulates),
    ``conduction_eV``, ``valence_eV``, ``fermi_accumulation_eV`` (a constant, 0) and
    ``fermi_depletion_eV``, all electron energies [eV]; None when the element was not given by
    its materials (no dopings, gaps, permittivities to draw with).
    """
    sides = element.sides
    if not sides:
        return None
    kt = BOLTZMANN_EV_K * temperature_K
    vbi = float(element.built_in_V[0, 0])
    barrier = vbi - bias_V
    v1, v2 = _split(element, barrier, temperature_K)
    acc, dep = sides["accumulation"], sides["depletion"]
    q = ELEMENTARY_CHARGE_C
    debye = np.sqrt(acc["permittivity"] * VACUUM_PERMITTIVITY_F_M * kt / (q * acc["doping_m3"]))
    width = np.sqrt(2 * dep["permittivity"] * VACUUM_PERMITTIVITY_F_M * max(v2, 0.0)
                    / (q * dep["doping_m3"]))
    offset = float(element.offset_eV[0, 0])
    x1, u = _accumulation_profile(v1 / kt, debye)
    edge1 = acc["fermi_depth_eV"] - u * kt                 # carrier-energy band edge, side 1
    x1 = np.concatenate([[x1.min() * 1.3], x1[::-1]])
    edge1 = np.concatenate([[acc["fermi_depth_eV"]], edge1[::-1]])
    x2 = np.linspace(0.0, max(width, 1e-9), 200)
    edge2_interface = acc["fermi_depth_eV"] - v1 + offset
    edge2 = edge2_interface - v2 * (1.0 - (1.0 - x2 / max(width, 1e-12)) ** 2)
    x2 = np.concatenate([x2, [x2[-1] + max(width, 1e-9) * 0.5]])
    edge2 = np.concatenate([edge2, [edge2[-1]]])
    x = np.concatenate([x1, x2]) * 1e9
    edge = np.concatenate([edge1, edge2])
    gap = np.concatenate([np.full(x1.size, acc["gap_eV"]), np.full(x2.size, dep["gap_eV"])])
    # the sun side on the left: mirror when the lower layer is the accumulating one
    accumulation_at_left = acc.get("layer", "upper") == "upper"
    if not accumulation_at_left:
        x, edge, gap = -x[::-1], edge[::-1], gap[::-1]
    sign = 1.0 if element.carrier == "electron" else -1.0   # hole carrier energy = -electron
    majority = sign * edge
    if element.carrier == "electron":
        conduction, valence = majority, majority - gap
    else:
        valence, conduction = majority, majority + gap
    return {"x_nm": x, "conduction_eV": conduction, "valence_eV": valence,
            "fermi_accumulation_eV": 0.0, "fermi_depletion_eV": sign * bias_V,
            "accumulation_V": v1, "depletion_V": v2, "depletion_width_nm": width * 1e9,
            "debye_length_nm": debye * 1e9, "accumulation_material": acc["material"],
            "depletion_material": dep["material"], "accumulation_at_left": accumulation_at_left,
            "upper_material": (acc if accumulation_at_left else dep)["material"],
            "lower_material": (dep if accumulation_at_left else acc)["material"]}


def plot_interface(element, temperature_K, mpp_bias_V, axes=None):
    """Figure: (a) the interface's J-V, (b) its band diagram at equilibrium and at the MPP bias."""
    if axes is None:
        import matplotlib.pyplot as plt

        _, axes = plt.subplots(1, 2, figsize=(11, 4.4))
    ax_iv, ax_band = axes
    v, j = interface_iv(element, temperature_K)
    ax_iv.plot(v, j / 10, color="black")
    ax_iv.set_yscale("symlog", linthresh=1e-3)
    if np.isfinite(mpp_bias_V):
        jm, _ = element.law_current(np.array([[mpp_bias_V]]), temperature_K)
        ax_iv.plot([mpp_bias_V], [jm[0, 0] / 10], "o", mfc="white", mec="red", mew=2,
                   label=f"at the stack's MPP ({1000 * mpp_bias_V:+.1f} mV)")
        ax_iv.legend(fontsize=8)
    ax_iv.set_xlabel("interface voltage (V), > 0 lowers the barrier")
    ax_iv.set_ylabel("current density (mA/cm²)")
    ax_iv.set_title(f"(a) {element.name}: {element.transport} emission, alpha = "
                    f"{float(element.alpha[0, 0]):.3g}", fontsize=10)
    ax_iv.grid(alpha=0.3)
    for bias, style, label in ((0.0, "-", "equilibrium"), (mpp_bias_V, "--", "at the MPP")):
        if not np.isfinite(bias):
            continue
        d = band_diagram(element, temperature_K, bias)
        if d is None:
            ax_band.text(0.5, 0.5, "band diagram needs the interface given by its materials\n"
                         "(upper_material, lower_material, dopings)", ha="center", va="center",
                         transform=ax_band.transAxes, fontsize=9)
            break
        ax_band.plot(d["x_nm"], d["conduction_eV"], style, color="tab:blue",
                     label=f"Ec, {label}")
        ax_band.plot(d["x_nm"], d["valence_eV"], style, color="tab:orange",
                     label=f"Ev, {label}")
        left = d["x_nm"] <= 0
        fermi_left, fermi_right = ((d["fermi_accumulation_eV"], d["fermi_depletion_eV"])
                                   if d["accumulation_at_left"] else
                                   (d["fermi_depletion_eV"], d["fermi_accumulation_eV"]))
        ax_band.plot(d["x_nm"][left], np.full(np.sum(left), fermi_left), style, color="0.3", lw=1)
        ax_band.plot(d["x_nm"][~left], np.full(np.sum(~left), fermi_right), style,
                     color="0.3", lw=1, label=f"Fermi level, {label}")
        roles = ("accumulates", "depleted") if d["accumulation_at_left"] else ("depleted", "accumulates")
        ax_band.set_title(f"(b) upper {d['upper_material']} ({roles[0]}) | "
                          f"lower {d['lower_material']} ({roles[1]})", fontsize=10)
    ax_band.axvline(0, color="0.7", lw=0.8)
    ax_band.set_xlabel("position (nm), interface at 0: sun side (upper layer) left, lower layer right")
    ax_band.set_ylabel("electron energy (eV) from the Fermi level")
    ax_band.legend(fontsize=7, loc="best")
    ax_band.grid(alpha=0.3)
    return axes
