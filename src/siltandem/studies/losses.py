"""Loss waterfall: from the detailed-balance limit of the same gaps down to the stack's efficiency.

Each step is computed by removing that one loss and solving again, cumulatively, so the steps add
up exactly to the total. Starting from the stack as it is, the losses are removed in this order
(the reverse of the waterfall read from the top):

0. luminescent coupling, where a subcell has any (circuit/coupling.py): the "coupling gain" step,
   negative (the stack gains it);
1. series resistance (resistor elements, subcells' own series resistance);
2. each tunnel junction;
3. each isotype interface;
4. non-radiative recombination: every subcell radiative (J01 = J0,rad of a full absorber, no
   J02, no shunt, no breakdown);
5. current mismatch: each subcell at its own maximum power point (independent wiring) instead of
   one series current;
6. incomplete absorption (and, in a layer stack, incomplete collection): each subcell absorbs
   every photon above its gap that reaches it (a full step absorber in its place);
7. parasitic absorption: the layers that are not a subcell's emitter or base, and the coating,
   become transparent (layer stacks);
8. front reflection removed (layer stacks);
9. grid shading removed (layer stacks with ``[device] shading_fraction``).

A stack of several strings (4 terminals, ...) sums its strings' powers, each at its own MPP (the
first value is the main job's, with luminescent coupling across strings); its series resistance and
non-radiative recombination are removed string by string, one step each, so a string's ``[device]``
series resistance and shunt show as that string's steps.

A layer stack's ``[device]`` series resistance is a resistor element of its string (step 1); its
shunt is each subcell's shunt, removed with the non-radiative recombination (step 4).

What is left is the detailed-balance limit of the same gaps with each subcell at its own MPP
(A. De Vos, J. Phys. D 13 (1980) 839; W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510).
Element stacks have no optics layers: their steps 7 and 8 are zero.
"""
from dataclasses import replace

import numpy as np

from siltandem.constants import HC_EV_NM
from siltandem.circuit.elements import Subcell, batch
from siltandem.laws.optics import step_absorber_photocurrents
from siltandem.result.driver import compute_results


def _radiative(cell, photocurrent):
    return Subcell(cell.name, cell.gap_eV, string=cell.string).with_photocurrent(photocurrent)


def _walk_photocurrents(circuit, spectrum, *, passive=True, reflection=True, shading=True):
    """Full step absorbers in the layers' optical environment, walked from the sun side down.

    The flux enters through the open part of the front (unless ``shading`` is False) after front
    reflection (unless ``reflection`` is False), is attenuated by every passive layer (unless
    ``passive`` is False), and each subcell absorbs every photon above its gap that reaches its
    emitter.
    """
    from siltandem.laws import thinfilm
    from siltandem.optics.layers import front_response

    model = circuit.model
    wavelength, flux = spectrum.wavelength_nm, spectrum.photon_flux.copy()
    if shading:
        flux = flux * (1.0 - model.shading_fraction)
    temperature = model.temperature_K
    films = 0
    if reflection:
        # the coherent front of the optics stage: the coating and the thin layers above the first
        # emitter (their absorption is in the transmittance; without ``passive`` only R is lost)
        alphas = [m.absorption_per_m(wavelength, temperature_K=temperature) for m in model.materials]
        response, films = front_response(model, wavelength, alphas)
        flux = flux * (response.transmittance if passive else 1.0 - response.reflectance)
    from siltandem.optics.layers import own_grid_shading

    own_grid = {cell.name: own_grid_shading(model, k) if shading else 0.0 for k, cell in enumerate(model.subcells)}
    emitters = {cell.emitter: cell for cell in model.subcells}
    active = {i for cell in model.subcells for i in (cell.emitter, cell.base)}
    currents = {}
    energy = HC_EV_NM / wavelength
    for j, (layer, material) in enumerate(zip(model.layers, model.materials)):
        if j in emitters:
            cell = emitters[j]
            gap = float(circuit.element(cell.name).gap_eV[0, 0])
            above = energy >= gap
            currents[cell.name] = float(thinfilm.photon_current_A_m2(wavelength, flux * above)) \
                * (1.0 - own_grid[cell.name])
            flux = flux * ~above
        elif j not in active and passive and j >= films:
            alpha = material.absorption_per_m(wavelength, temperature_K=temperature)
            flux = flux * np.exp(-alpha * layer.thickness_nm * 1e-9)
    return currents


def loss_waterfall(stack, *, spectrum=None, suns=None, temperature_K=None):
    """The waterfall as a list of steps, top (the limit) to bottom (the stack).

    Every step's strings are known before any is solved (each step removes one loss from the
    strings of the step before, and the optics steps' photocurrents come from the layers), so
    all of them are solved at once: strings of one shape (result/batched.py: the same element
    classes and settings in the same order, e.g. the radiative subcells of the last steps, each
    on its own) as one batched solve, each string's answer bit for bit its solve alone.

    Returns
    -------
    dict
        ``limit_pct`` (detailed balance of the same gaps, each subcell at its own MPP),
        ``efficiency_pct`` (the stack), ``steps``: [{``loss``, ``loss_pct_abs``,
        ``efficiency_after_pct``}] in waterfall order, and ``check_pct`` (limit minus the sum of
        the steps minus the stack: zero to rounding).
    """
    from siltandem.errors import StackError
    from siltandem.result.batched import solve_alike

    result = compute_results([stack], spectrum=spectrum, suns=suns, temperature_K=temperature_K,
                             curve_points=60)[0]
    if isinstance(result, StackError):
        raise result
    circuit = result.circuit
    conditions = result.summary["conditions"]
    temperature = conditions["temperature_K"]
    irradiance = conditions["irradiance_W_m2"]
    light = circuit.optics["spectrum"]
    # several strings (4 terminals, ...): each at its own MPP, their powers summed; the stack's
    # efficiency with luminescent coupling across strings is the main job's
    strings = [list(s) for s in circuit.strings]
    several = len(strings) > 1
    # each step: its label and the strings whose MPP powers it sums (None: the step before's)
    names, solves = [], []
    if several:
        stack_power = sum(float(np.asarray(s.mpp_W_m2).reshape(-1)[0]) for s in result.solutions)
    else:
        solves.append([strings[0]])

    def record(label, value):
        names.append(label)
        solves.append(value)

    def total():
        return [list(string) for string in strings]

    # 0. luminescent coupling (a gain: its step is negative), removed first
    if any(e.kind == "subcell" and np.any(e.luminescent_coupling > 0) for string in strings for e in string):
        strings = [[replace(e, luminescent_coupling=batch(0.0)) if e.kind == "subcell" else e for e in string]
                   for string in strings]
        record("coupling gain", total())
    # 1. series resistance (string by string where there are several)
    for k, string in enumerate(strings):
        string = [e for e in string if e.kind != "resistor"]
        strings[k] = [replace(e, series_ohm_m2=batch(0.0)) if e.kind == "subcell" else e for e in string]
        if several or k == len(strings) - 1:
            record(f"series resistance, string {k + 1}" if several else "series resistance", total())
    # 2, 3. each tunnel junction, then each isotype interface
    for kind, label in (("tunnel", "tunnel junction"), ("isotype", "isotype interface")):
        for k in range(len(strings)):
            for element in [e for e in strings[k] if e.kind == kind]:
                strings[k] = [e for e in strings[k] if e is not element]
                text = element.name if label.split()[-1] in element.name else \
                    f"{label} {element.name}"
                record(text, total())
    # 4. non-radiative recombination (with the shunts, string by string where there are several)
    for k, string in enumerate(strings):
        strings[k] = [_radiative(c, c.photocurrent_A_m2) for c in string]
        if several or k == len(strings) - 1:
            record(f"non-radiative recombination, string {k + 1}" if several
                   else "non-radiative recombination", total())
    subcells = [c for string in strings for c in string]
    # 5. current mismatch: each subcell at its own MPP
    record("current mismatch", [[c] for c in subcells])
    # 6-8. optics
    if circuit.model is not None:
        steps = (("incomplete absorption and collection", dict(passive=True, reflection=True)),
                 ("parasitic absorption", dict(passive=False, reflection=True)),
                 ("front reflection", dict(passive=False, reflection=False)))
        if circuit.model.shading_fraction > 0 or any(circuit.model.lower_shading):
            steps += (("grid shading", dict(passive=False, reflection=False, shading=False)),)
        for label, options in steps:
            currents = _walk_photocurrents(circuit, light, **options)
            subcells = [_radiative(c, currents[c.name]) for c in subcells]
            record(label, [[c] for c in subcells])
    else:
        gaps = [c.gap_eV for c in subcells]
        full = step_absorber_photocurrents(gaps, [1.0] * len(gaps), light.wavelength_nm,
                                           light.photon_flux)
        subcells = [_radiative(c, j) for c, j in zip(subcells, full)]
        record("incomplete absorption", [[c] for c in subcells])
        record("parasitic absorption", None)
        record("front reflection", None)
    efficiency = _step_efficiencies(solves, temperature, irradiance, solve_alike)
    if several:
        efficiency.insert(0, 100 * stack_power / irradiance)
    limit = efficiency[-1]
    steps = []
    for k in range(len(names) - 1, -1, -1):
        steps.append({"loss": names[k], "loss_pct_abs": efficiency[k + 1] - efficiency[k],
                      "efficiency_after_pct": efficiency[k]})
    check = limit - sum(s["loss_pct_abs"] for s in steps) - efficiency[0]
    return {"stack": stack.name, "limit_pct": limit, "efficiency_pct": efficiency[0],
            "steps": steps, "check_pct": check,
            "limit_definition": "detailed-balance limit of the same gaps, each subcell at its own "
                                "maximum power point, under the same spectrum"}


def _step_efficiencies(solves, temperature_K, irradiance, solve_many):
    """Each step's efficiency [%]: the sum of its strings' MPP powers (in their order) over the
    irradiance; a step of None repeats the power of the one before (an element stack's optics
    steps, which it has none of). ``solve_many``: result.batched.solve_alike
    (every string of every step in one call: alike strings in one batch)."""
    from siltandem.errors import StackError

    jobs = [(string, temperature_K, 0) for step in solves if step is not None for string in step]
    answers = iter(solve_many(jobs))
    efficiency = []
    for step in solves:
        if step is None:
            efficiency.append(100 * (efficiency[-1] * irradiance / 100) / irradiance)
            continue
        power = 0
        for _ in step:
            answer = next(answers)
            if isinstance(answer, StackError):
                raise answer
            power += float(answer.mpp_W_m2[0])
        efficiency.append(100 * power / irradiance)
    return efficiency


def plot_waterfall(waterfall, ax=None, *, smallest_pct=0.005):
    """Bars falling from the limit to the stack's efficiency, one per loss.

    Steps smaller than ``smallest_pct`` (% absolute) are left out of the figure and counted in a
    note under it (the text and JSON outputs list every step).
    """
    if ax is None:
        import matplotlib.pyplot as plt

        _, ax = plt.subplots(figsize=(9, 5.2))
    shown = [s for s in waterfall["steps"] if abs(s["loss_pct_abs"]) >= smallest_pct]
    hidden = len(waterfall["steps"]) - len(shown)
    labels = ["limit"] + [s["loss"] for s in shown] + ["stack"]
    level = waterfall["limit_pct"]
    ax.bar(0, level, color="0.35")
    ax.text(0, level, f"{level:.2f}", ha="center", va="bottom", fontsize=8)
    for k, step in enumerate(shown, start=1):
        loss = step["loss_pct_abs"]
        ax.bar(k, -loss, bottom=level, color="tab:red" if loss > 0 else "tab:green")
        ax.text(k, max(level, level - loss), f"{loss:.2f}", ha="center", va="bottom", fontsize=8)
        level -= loss
    ax.bar(len(labels) - 1, waterfall["efficiency_pct"], color="tab:blue")
    ax.text(len(labels) - 1, waterfall["efficiency_pct"], f"{waterfall['efficiency_pct']:.2f}",
            ha="center", va="bottom", fontsize=8)
    ax.set_ylim(0, 1.12 * max(waterfall["limit_pct"], waterfall["efficiency_pct"]))
    ax.set_xticks(range(len(labels)))
    ax.set_xticklabels(labels, rotation=30, ha="right", fontsize=8)
    ax.set_ylabel("efficiency (%)")
    ax.set_title(f"{waterfall['stack']}: {waterfall['limit_pct']:.2f} % limit to "
                 f"{waterfall['efficiency_pct']:.2f} %", fontsize=10, pad=10)
    if hidden:
        ax.text(0.99, 0.98, f"{hidden} step(s) below {smallest_pct:g} % not drawn (see the table)",
                transform=ax.transAxes, ha="right", va="top", fontsize=7, color="0.3")
    ax.grid(alpha=0.3, axis="y")
    ax.figure.tight_layout()
    return ax
